//! Physical quantities written as text with SI units and prefixes.
//!
//! This module owns the grammar of dimensioned values in the input files
//! ("4.7 mH", "20 kHz", "-40 °C", "4.2 V/krpm", "15 %"), the table of accepted
//! unit spellings, their conversion to SI values, the error messages for
//! missing, unknown or wrong units, and the formatting of SI values back into
//! text with engineering prefixes. It does no I/O.
//!
//! Grammar: `[sign] digits [. digits] [e|E [sign] digits] [spaces] [prefix] unit`.
//! The sign may be `+`, `-` or U+2212; the spaces may be any Unicode white
//! space (so U+00A0 and U+202F too). Prefixes and units are case-sensitive:
//! `mS` is millisiemens, `ms` milliseconds, `M` mega, `m` milli.
//!
//! Sources of the conversions (each table row names the one it uses):
//! - SI prefixes p n µ m k M G = 10^-12 … 10^9: BIPM, *The International System
//!   of Units (SI Brochure)*, 9th ed., 2019, Table 7.
//! - Coherent derived units (V, Ω, F, C, H, Hz, S = A/V, J, W, °C): the same
//!   brochure, Table 4.
//! - A temperature difference of 1 °C equals 1 K, so K/W = °C/W and
//!   %/K = %/°C: the same brochure, §2.3.1 (from memory).
//! - 1 % = 0.01: the same brochure, §5.4.7 (from memory); 1 ppm = 10^-6: common
//!   practice (the brochure discourages the symbol).
//! - 1 revolution = 2π rad, so 1 rpm (r/min) = 2π/60 rad/s: ISO 80000-3:2019,
//!   rotational frequency (from memory).

use std::f64::consts::PI;
use std::fmt;

/// The kind of quantity a field holds; it fixes the accepted units and the SI
/// unit of the parsed value.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Dimension {
    /// Volt.
    Voltage,
    /// Ampere.
    Current,
    /// Ohm.
    Resistance,
    /// Farad.
    Capacitance,
    /// Coulomb (gate charge).
    Charge,
    /// Henry.
    Inductance,
    /// Second.
    Time,
    /// Hertz.
    Frequency,
    /// Absolute temperature, stored in °C (not kelvin).
    Temperature,
    /// Temperature difference, kelvin; written only as "K".
    TemperatureDifference,
    /// Kelvin per watt.
    ThermalResistance,
    /// Siemens (also transconductance, A/V).
    Conductance,
    /// Joule.
    Energy,
    /// Watt.
    Power,
    /// Dimensionless fraction, written with "%" ("15 %" → 0.15).
    Ratio,
    /// Fractional change per kelvin ("0.45 %/K" → 0.0045 /K).
    TemperatureCoefficient,
    /// Back-EMF constant, stored as V·s/rad.
    BackEmfConstant,
    /// Angular speed, stored in rad/s.
    AngularSpeed,
    /// Rate of change of current, stored in A/s (written "100 A/µs").
    CurrentSlewRate,
}

impl Dimension {
    /// Every dimension, for tables and tests.
    pub const ALL: [Dimension; 19] = [
        Dimension::Voltage,
        Dimension::Current,
        Dimension::Resistance,
        Dimension::Capacitance,
        Dimension::Charge,
        Dimension::Inductance,
        Dimension::Time,
        Dimension::Frequency,
        Dimension::Temperature,
        Dimension::TemperatureDifference,
        Dimension::ThermalResistance,
        Dimension::Conductance,
        Dimension::Energy,
        Dimension::Power,
        Dimension::Ratio,
        Dimension::TemperatureCoefficient,
        Dimension::BackEmfConstant,
        Dimension::AngularSpeed,
        Dimension::CurrentSlewRate,
    ];

    /// Lower-case name for messages, e.g. "thermal resistance".
    pub fn name(self) -> &'static str {
        match self {
            Dimension::Voltage => "voltage",
            Dimension::Current => "current",
            Dimension::Resistance => "resistance",
            Dimension::Capacitance => "capacitance",
            Dimension::Charge => "charge",
            Dimension::Inductance => "inductance",
            Dimension::Time => "time",
            Dimension::Frequency => "frequency",
            Dimension::Temperature => "temperature",
            Dimension::TemperatureDifference => "temperature difference",
            Dimension::ThermalResistance => "thermal resistance",
            Dimension::Conductance => "conductance",
            Dimension::Energy => "energy",
            Dimension::Power => "power",
            Dimension::Ratio => "ratio",
            Dimension::TemperatureCoefficient => "temperature coefficient",
            Dimension::BackEmfConstant => "back-EMF constant",
            Dimension::AngularSpeed => "angular speed",
            Dimension::CurrentSlewRate => "rate of change of current",
        }
    }

    /// A valid example, quoted, for messages, e.g. `"2.5 K/W"` with the quotes.
    pub fn example(self) -> &'static str {
        match self {
            Dimension::Voltage => "\"12 V\"",
            Dimension::Current => "\"0.5 A\"",
            Dimension::Resistance => "\"8 mΩ\"",
            Dimension::Capacitance => "\"1.2 nF\"",
            Dimension::Charge => "\"63 nC\"",
            Dimension::Inductance => "\"4.7 mH\"",
            Dimension::Time => "\"100 ns\"",
            Dimension::Frequency => "\"20 kHz\"",
            Dimension::Temperature => "\"25 °C\"",
            Dimension::TemperatureDifference => "\"10 K\"",
            Dimension::ThermalResistance => "\"2.5 K/W\"",
            Dimension::Conductance => "\"60 S\"",
            Dimension::Energy => "\"2 µJ\"",
            Dimension::Power => "\"1.5 W\"",
            Dimension::Ratio => "\"15 %\"",
            Dimension::TemperatureCoefficient => "\"0.45 %/K\"",
            Dimension::BackEmfConstant => "\"4.2 V/krpm\"",
            Dimension::AngularSpeed => "\"3000 rpm\"",
            Dimension::CurrentSlewRate => "\"100 A/µs\"",
        }
    }

    /// The unit of the value `parse_quantity` returns ("1" for a plain fraction).
    pub fn si_unit(self) -> &'static str {
        match self {
            Dimension::Voltage => "V",
            Dimension::Current => "A",
            Dimension::Resistance => "Ω",
            Dimension::Capacitance => "F",
            Dimension::Charge => "C",
            Dimension::Inductance => "H",
            Dimension::Time => "s",
            Dimension::Frequency => "Hz",
            Dimension::Temperature => "°C",
            Dimension::TemperatureDifference => "K",
            Dimension::ThermalResistance => "K/W",
            Dimension::Conductance => "S",
            Dimension::Energy => "J",
            Dimension::Power => "W",
            Dimension::Ratio => "1",
            Dimension::TemperatureCoefficient => "1/K",
            Dimension::BackEmfConstant => "V·s/rad",
            Dimension::AngularSpeed => "rad/s",
            Dimension::CurrentSlewRate => "A/s",
        }
    }

    /// The name with its indefinite article, e.g. "an inductance".
    pub fn with_article(self) -> String {
        let name = self.name();
        let vowel = name.starts_with(['a', 'e', 'i', 'o', 'u']);
        format!("{} {name}", if vowel { "an" } else { "a" })
    }
}

/// Why a text is not a valid quantity. `Display` gives one line naming what
/// was expected.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum UnitError {
    /// The text is empty or white space only.
    Empty,
    /// A number with no unit, for a dimensioned field. `number` is as written.
    BareNumber { number: String, expected: Dimension },
    /// A number with no unit, given to `parse_any` (no expected dimension).
    BareNumberAny { number: String },
    /// The text does not start with a number, or the number is malformed.
    NotANumber { text: String },
    /// The unit is in no table row.
    UnknownUnit { unit: String, expected: Dimension },
    /// The unit is in no table row (from `parse_any`).
    UnknownUnitAny { unit: String },
    /// A valid unit of another dimension; `text` is the whole trimmed input.
    WrongDimension {
        text: String,
        unit: String,
        found: Dimension,
        expected: Dimension,
    },
    /// NaN, infinity, or a value that overflows `f64`.
    NotFinite,
    /// A back-EMF constant written as an rms value ("6 V rms/krpm"): the
    /// files take the peak. `peak` is the line-to-line peak if the rms
    /// figure is line-to-line, `peak_from_phase` if it is line-to-neutral,
    /// both formatted with the unit.
    RmsBackEmf {
        text: String,
        peak: String,
        peak_from_phase: String,
    },
}

impl fmt::Display for UnitError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            UnitError::Empty => {
                write!(
                    f,
                    "empty value (write a number and its unit, such as \"12 V\")"
                )
            }
            UnitError::BareNumber { number, expected } => write!(
                f,
                "expected {} such as {}, found a bare number {number} (write the unit)",
                expected.with_article(),
                expected.example()
            ),
            UnitError::BareNumberAny { number } => write!(
                f,
                "found a bare number {number} (write the unit, such as \"12 V\", \"0.5 A\" or \"15 %\")"
            ),
            UnitError::NotANumber { text } => {
                write!(f, "expected a number followed by a unit, found \"{text}\"")?;
                if text.contains(',') {
                    write!(f, " (write decimals with a point, not a comma)")?;
                }
                Ok(())
            }
            UnitError::UnknownUnit { unit, expected } => {
                write!(
                    f,
                    "unknown unit \"{unit}\" (expected {} such as {})",
                    expected.with_article(),
                    expected.example()
                )?;
                write_hint(f, &suggestions(unit, Some(*expected), true))
            }
            UnitError::UnknownUnitAny { unit } => {
                write!(f, "unknown unit \"{unit}\"")?;
                write_hint(f, &suggestions(unit, None, true))
            }
            UnitError::WrongDimension {
                text,
                unit,
                found,
                expected,
            } => {
                write!(
                    f,
                    "\"{text}\" is {}, expected {} such as {}",
                    found.with_article(),
                    expected.with_article(),
                    expected.example()
                )?;
                // Only a case or symbol slip is worth a hint here: the unit is
                // valid, so an edit-distance guess would mostly mislead.
                write_hint(f, &suggestions(unit, Some(*expected), false))
            }
            UnitError::NotFinite => {
                write!(f, "not a finite number (NaN and infinity are not accepted)")
            }
            UnitError::RmsBackEmf {
                text,
                peak,
                peak_from_phase,
            } => write!(
                f,
                "\"{text}\" is an rms back-EMF constant; pwmplan expects the line-to-line PEAK back-EMF per speed (for a sinusoidal back-EMF the peak is √2 × the rms): write \"{peak}\" if the rms figure is line-to-line, or \"{peak_from_phase}\" (√2·√3 = √6 ×) if it is line-to-neutral"
            ),
        }
    }
}

impl std::error::Error for UnitError {}

/// A unit prefix: its symbol and power of ten.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Prefix {
    symbol: &'static str,
    exp: i32,
}

/// SI prefixes, BIPM SI Brochure, 9th ed., 2019, Table 7. Micro has three
/// spellings: ASCII "u" (common practice), U+00B5 and U+03BC.
const PICO: Prefix = Prefix {
    symbol: "p",
    exp: -12,
};
const NANO: Prefix = Prefix {
    symbol: "n",
    exp: -9,
};
const MICRO_U: Prefix = Prefix {
    symbol: "u",
    exp: -6,
};
const MICRO_SIGN: Prefix = Prefix {
    symbol: "\u{00B5}",
    exp: -6,
};
const MICRO_GREEK: Prefix = Prefix {
    symbol: "\u{03BC}",
    exp: -6,
};
const MILLI: Prefix = Prefix {
    symbol: "m",
    exp: -3,
};
const NONE: Prefix = Prefix { symbol: "", exp: 0 };
const KILO: Prefix = Prefix {
    symbol: "k",
    exp: 3,
};
const MEGA: Prefix = Prefix {
    symbol: "M",
    exp: 6,
};
const GIGA: Prefix = Prefix {
    symbol: "G",
    exp: 9,
};

/// Accepted prefix sets. Large prefixes are left out where they make no sense
/// for this tool, so that "MF" is reported as a slip for "mF", not read as megafarad.
const ALL: &[Prefix] = &[
    PICO,
    NANO,
    MICRO_U,
    MICRO_SIGN,
    MICRO_GREEK,
    MILLI,
    KILO,
    MEGA,
    GIGA,
];
const SMALL: &[Prefix] = &[PICO, NANO, MICRO_U, MICRO_SIGN, MICRO_GREEK, MILLI];
const MICRO_MILLI: &[Prefix] = &[MICRO_U, MICRO_SIGN, MICRO_GREEK, MILLI];
const UNPREFIXED: &[Prefix] = &[];

/// Prefixes `format_quantity` writes, ascending (µ as U+00B5).
const SHOW_ALL: &[Prefix] = &[PICO, NANO, MICRO_SIGN, MILLI, NONE, KILO, MEGA, GIGA];
const SHOW_SMALL: &[Prefix] = &[PICO, NANO, MICRO_SIGN, MILLI, NONE];
const SHOW_MICRO_MILLI: &[Prefix] = &[MICRO_SIGN, MILLI, NONE];
const SHOW_NONE: &[Prefix] = &[NONE];

/// 1 rpm in rad/s: 2π/60 (ISO 80000-3:2019, from memory).
const RAD_S_PER_RPM: f64 = PI / 30.0;
/// 1 V/rpm in V·s/rad: 1/(2π/60) = 30/π (follows from `RAD_S_PER_RPM`).
const VS_PER_RAD_PER_V_PER_RPM: f64 = 30.0 / PI;

/// One accepted unit spelling.
struct UnitDef {
    spelling: &'static str,
    dim: Dimension,
    /// SI value of one unprefixed unit (°C for temperatures).
    si_per_unit: f64,
    prefixes: &'static [Prefix],
    /// Offered in "did you mean" hints (alternate code points are not).
    hint: bool,
}

const fn unit(
    spelling: &'static str,
    dim: Dimension,
    si_per_unit: f64,
    prefixes: &'static [Prefix],
    hint: bool,
) -> UnitDef {
    UnitDef {
        spelling,
        dim,
        si_per_unit,
        prefixes,
        hint,
    }
}

use Dimension as D;

/// Every accepted spelling. The test `no_spelling_is_ambiguous` checks that no
/// prefix+unit string matches two rows.
const UNITS: &[UnitDef] = &[
    // Coherent SI units, factor 1 (SI Brochure 9th ed., 2019, Tables 2 and 4).
    unit("V", D::Voltage, 1.0, ALL, true),
    unit("A", D::Current, 1.0, ALL, true),
    unit("\u{03A9}", D::Resistance, 1.0, ALL, true), // Greek capital omega
    unit("\u{2126}", D::Resistance, 1.0, ALL, false), // ohm sign
    unit("ohm", D::Resistance, 1.0, ALL, true),
    unit("ohms", D::Resistance, 1.0, ALL, false),
    unit("Ohm", D::Resistance, 1.0, ALL, false),
    unit("Ohms", D::Resistance, 1.0, ALL, false),
    unit("F", D::Capacitance, 1.0, SMALL, true),
    unit("C", D::Charge, 1.0, SMALL, true),
    unit("H", D::Inductance, 1.0, SMALL, true),
    unit("s", D::Time, 1.0, SMALL, true),
    unit("Hz", D::Frequency, 1.0, ALL, true),
    unit("S", D::Conductance, 1.0, ALL, true),
    unit("A/V", D::Conductance, 1.0, SMALL, true), // S = A/V, Table 4
    unit("J", D::Energy, 1.0, ALL, true),
    unit("W", D::Power, 1.0, ALL, true),
    // Temperatures are kept in °C; only differences are in kelvin.
    unit("°C", D::Temperature, 1.0, UNPREFIXED, true),
    unit("degC", D::Temperature, 1.0, UNPREFIXED, true),
    unit("\u{2103}", D::Temperature, 1.0, UNPREFIXED, false), // ℃
    unit("K", D::TemperatureDifference, 1.0, UNPREFIXED, true),
    // 1 °C difference = 1 K (SI Brochure §2.3.1, from memory).
    unit("K/W", D::ThermalResistance, 1.0, UNPREFIXED, true),
    unit("°C/W", D::ThermalResistance, 1.0, UNPREFIXED, true),
    unit("degC/W", D::ThermalResistance, 1.0, UNPREFIXED, true),
    unit("\u{2103}/W", D::ThermalResistance, 1.0, UNPREFIXED, false),
    // 1 % = 0.01 (SI Brochure §5.4.7, from memory).
    unit("%", D::Ratio, 0.01, UNPREFIXED, true),
    unit("%/K", D::TemperatureCoefficient, 0.01, UNPREFIXED, true),
    unit("%/°C", D::TemperatureCoefficient, 0.01, UNPREFIXED, true),
    unit("%/degC", D::TemperatureCoefficient, 0.01, UNPREFIXED, true),
    unit(
        "%/\u{2103}",
        D::TemperatureCoefficient,
        0.01,
        UNPREFIXED,
        false,
    ),
    // 1 ppm = 1e-6: common practice.
    unit("ppm/K", D::TemperatureCoefficient, 1e-6, UNPREFIXED, true),
    unit("ppm/°C", D::TemperatureCoefficient, 1e-6, UNPREFIXED, true),
    unit(
        "ppm/degC",
        D::TemperatureCoefficient,
        1e-6,
        UNPREFIXED,
        true,
    ),
    unit("1/K", D::TemperatureCoefficient, 1.0, UNPREFIXED, true),
    // Back-EMF: V/(rad/s) = V·s/rad; V/rpm = 30/π V·s/rad; V/krpm = 0.03/π.
    unit("V/(rad/s)", D::BackEmfConstant, 1.0, MICRO_MILLI, true),
    unit("V·s/rad", D::BackEmfConstant, 1.0, MICRO_MILLI, true), // U+00B7
    unit(
        "V\u{22C5}s/rad",
        D::BackEmfConstant,
        1.0,
        MICRO_MILLI,
        false,
    ), // dot operator
    unit("Vs/rad", D::BackEmfConstant, 1.0, MICRO_MILLI, true),
    unit(
        "V/rpm",
        D::BackEmfConstant,
        VS_PER_RAD_PER_V_PER_RPM,
        MICRO_MILLI,
        true,
    ),
    unit(
        "V/krpm",
        D::BackEmfConstant,
        VS_PER_RAD_PER_V_PER_RPM / 1000.0,
        MICRO_MILLI,
        true,
    ),
    // Angular speed: 1 rpm = 2π/60 rad/s (ISO 80000-3:2019, from memory).
    unit("rad/s", D::AngularSpeed, 1.0, UNPREFIXED, true),
    unit("rpm", D::AngularSpeed, RAD_S_PER_RPM, UNPREFIXED, true),
    // Rate of change of current, as datasheets state a recovery test:
    // 1 A/µs = 1e6 A/s (SI prefixes, SI Brochure Table 7).
    unit("A/s", D::CurrentSlewRate, 1.0, UNPREFIXED, true),
    unit("A/µs", D::CurrentSlewRate, 1e6, UNPREFIXED, true),
    unit("A/us", D::CurrentSlewRate, 1e6, UNPREFIXED, false),
    unit("A/ns", D::CurrentSlewRate, 1e9, UNPREFIXED, true),
    unit(
        "krpm",
        D::AngularSpeed,
        RAD_S_PER_RPM * 1000.0,
        UNPREFIXED,
        true,
    ),
];

/// A unit text resolved to a table row and a prefix.
#[derive(Clone, Copy)]
struct Match {
    def: &'static UnitDef,
    prefix: Prefix,
}

/// Every (row, prefix) whose spelling equals `unit` exactly (case-sensitive).
fn matches(unit: &str) -> impl Iterator<Item = Match> + '_ {
    UNITS.iter().flat_map(move |def| {
        let bare = (unit == def.spelling).then_some(Match { def, prefix: NONE });
        let prefixed = def
            .prefixes
            .iter()
            .filter(move |p| unit.strip_prefix(p.symbol) == Some(def.spelling))
            .map(move |&prefix| Match { def, prefix });
        bare.into_iter().chain(prefixed)
    })
}

fn lookup(unit: &str) -> Option<Match> {
    matches(unit).next()
}

/// `value · 10^exp`, dividing for negative powers so that e.g. 4.7 m gives the
/// correctly rounded 0.0047 (10^n is exact in f64 for n ≤ 22).
fn scale_pow10(value: f64, exp: i32) -> f64 {
    let power = 10f64.powi(exp.abs());
    if exp < 0 {
        value / power
    } else {
        value * power
    }
}

/// Converts a written value in a matched unit to SI.
fn to_si(value: f64, m: Match) -> Result<f64, UnitError> {
    let si = scale_pow10(value, m.prefix.exp) * m.def.si_per_unit;
    if si.is_finite() {
        Ok(si)
    } else {
        Err(UnitError::NotFinite)
    }
}

/// A text split into its number and its unit.
struct Split<'a> {
    trimmed: &'a str,
    number: &'a str,
    value: f64,
    unit: &'a str,
}

/// Strips a leading sign; U+2212 (minus sign) counts as '-'.
fn strip_sign(text: &str) -> (bool, &str) {
    if let Some(rest) = text.strip_prefix('-').or(text.strip_prefix('\u{2212}')) {
        (true, rest)
    } else {
        (false, text.strip_prefix('+').unwrap_or(text))
    }
}

/// Byte length of the unsigned number at the start of `s` (0 if none):
/// `digits [. digits] [e [sign] digits]`, at least one mantissa digit.
fn number_len(s: &str) -> usize {
    let b = s.as_bytes();
    let digits_from = |i: usize| b[i..].iter().take_while(|c| c.is_ascii_digit()).count();
    let int_digits = digits_from(0);
    let mut i = int_digits;
    let mut frac_digits = 0;
    if b.get(i) == Some(&b'.') {
        frac_digits = digits_from(i + 1);
        i += 1 + frac_digits;
    }
    if int_digits + frac_digits == 0 {
        return 0;
    }
    // An exponent counts only when digits follow, so "1e" leaves "e" as unit.
    if matches!(b.get(i), Some(b'e' | b'E')) {
        let sign = usize::from(matches!(b.get(i + 1), Some(b'+' | b'-')));
        let exp_digits = digits_from(i + 1 + sign);
        if exp_digits > 0 {
            i += 1 + sign + exp_digits;
        }
    }
    i
}

/// True when the leading word is a spelling of NaN or infinity.
fn is_non_finite_word(s: &str) -> bool {
    let word: String = s
        .chars()
        .take_while(char::is_ascii_alphabetic)
        .map(|c| c.to_ascii_lowercase())
        .collect();
    matches!(word.as_str(), "nan" | "inf" | "infinity")
}

fn split(text: &str) -> Result<Split<'_>, UnitError> {
    let trimmed = text.trim();
    if trimmed.is_empty() {
        return Err(UnitError::Empty);
    }
    let (negative, body) = strip_sign(trimmed);
    if is_non_finite_word(body) {
        return Err(UnitError::NotFinite);
    }
    let len = number_len(body);
    let not_a_number = || UnitError::NotANumber {
        text: trimmed.to_string(),
    };
    if len == 0 {
        return Err(not_a_number());
    }
    let magnitude: f64 = body[..len].parse().map_err(|_| not_a_number())?;
    let value = if negative { -magnitude } else { magnitude };
    if !value.is_finite() {
        return Err(UnitError::NotFinite);
    }
    let sign_len = trimmed.len() - body.len();
    Ok(Split {
        trimmed,
        number: &trimmed[..sign_len + len],
        value,
        unit: body[len..].trim_start(),
    })
}

/// A leftover that starts like a number ("1.2.3 V", "1,5 V") means a
/// malformed number, not an unknown unit.
fn starts_numeric(unit: &str) -> bool {
    unit.starts_with(|c: char| c.is_ascii_digit() || c == '.' || c == ',')
}

/// The text `parse_quantity` accepts for `dim`, as a regular expression
/// (the ECMA-262 subset JSON Schema's `pattern` uses): an optional sign, the
/// number `number_len` reads, optional spaces, one spelling of a unit of that
/// dimension with any prefix its row allows. Built from `UNITS`, so the
/// schema follows the parser; `tests/schema.rs` checks the bundled files'
/// spellings, probes of prefixes, signs and exponents, and refusals against both.
pub fn schema_pattern(dim: Dimension) -> String {
    let mut spellings: Vec<String> = UNITS
        .iter()
        .filter(|d| d.dim == dim)
        .flat_map(|d| {
            std::iter::once(d.spelling.to_string()).chain(
                d.prefixes
                    .iter()
                    .map(move |p| format!("{}{}", p.symbol, d.spelling)),
            )
        })
        .collect();
    // Longest first, so an alternation never stops at a shorter spelling.
    spellings.sort_by(|a, b| b.len().cmp(&a.len()).then(a.cmp(b)));
    spellings.dedup();
    let units: Vec<String> = spellings.iter().map(|u| regex_escape(u)).collect();
    format!(
        "^\\s*[-+\u{2212}]?(?:[0-9]+\\.?[0-9]*|\\.[0-9]+)(?:[eE][-+]?[0-9]+)?\\s*(?:{})\\s*$",
        units.join("|")
    )
}

/// `text` with the regular-expression metacharacters escaped.
fn regex_escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        if "\\^$.|?*+()[]{}".contains(c) {
            out.push('\\');
        }
        out.push(c);
    }
    out
}

/// Parses `text` as a quantity of dimension `dim`; returns the SI value
/// (°C for `Temperature`, K for `TemperatureDifference`, a fraction for `Ratio`).
pub fn parse_quantity(text: &str, dim: Dimension) -> Result<f64, UnitError> {
    let s = split(text)?;
    if s.unit.is_empty() {
        return Err(UnitError::BareNumber {
            number: s.number.to_string(),
            expected: dim,
        });
    }
    match lookup(s.unit) {
        Some(m) if m.def.dim == dim => to_si(s.value, m),
        Some(m) => Err(UnitError::WrongDimension {
            text: s.trimmed.to_string(),
            unit: s.unit.to_string(),
            found: m.def.dim,
            expected: dim,
        }),
        None if starts_numeric(s.unit) => Err(UnitError::NotANumber {
            text: s.trimmed.to_string(),
        }),
        None => Err(
            rms_back_emf(&s, dim).unwrap_or_else(|| UnitError::UnknownUnit {
                unit: s.unit.to_string(),
                expected: dim,
            }),
        ),
    }
}

/// A back-EMF constant marked rms ("V rms/krpm", "Vrms/krpm", "V_rms/krpm",
/// "V(rms)/krpm", "V/krpm rms"): the error that gives the peak to write.
/// Peak = √2 × rms for a sinusoid; a line-to-neutral rms figure is
/// √3 × smaller again than the line-to-line one for a balanced star (Mohan,
/// Undeland, Robbins, *Power Electronics*, 2003, from memory).
fn rms_back_emf(s: &Split<'_>, dim: Dimension) -> Option<UnitError> {
    if dim != Dimension::BackEmfConstant {
        return None;
    }
    let lower = s.unit.to_lowercase();
    if lower.len() != s.unit.len() {
        return None;
    }
    let mut bare = None;
    for mark in ["(rms)", "_rms", " rms", "-rms", "rms"] {
        if let Some(at) = lower.find(mark) {
            // `to_lowercase` keeps these ASCII byte offsets.
            let mut u = String::new();
            u.push_str(&s.unit[..at]);
            u.push_str(&s.unit[at + mark.len()..]);
            bare = Some(u.trim().replace(" /", "/"));
            break;
        }
    }
    let bare = bare?;
    let m = lookup(&bare).filter(|m| m.def.dim == Dimension::BackEmfConstant)?;
    let rms_si = to_si(s.value, m).ok()?;
    let peak = format_quantity(rms_si * 2f64.sqrt(), dim, 3);
    let peak_from_phase = format_quantity(rms_si * 6f64.sqrt(), dim, 3);
    Some(UnitError::RmsBackEmf {
        text: s.trimmed.to_string(),
        peak,
        peak_from_phase,
    })
}

/// Parses `text` with whatever unit it has; returns the SI value and the
/// dimension the unit belongs to. No spelling belongs to two dimensions.
pub fn parse_any(text: &str) -> Result<(f64, Dimension), UnitError> {
    let s = split(text)?;
    if s.unit.is_empty() {
        return Err(UnitError::BareNumberAny {
            number: s.number.to_string(),
        });
    }
    match lookup(s.unit) {
        Some(m) => Ok((to_si(s.value, m)?, m.def.dim)),
        None if starts_numeric(s.unit) => Err(UnitError::NotANumber {
            text: s.trimmed.to_string(),
        }),
        None => Err(UnitError::UnknownUnitAny {
            unit: s.unit.to_string(),
        }),
    }
}

// ---------------------------------------------------------------- hints

/// Folds case and symbol variants so that slips compare equal:
/// lower case, µ/μ → u, ℃ → c, degree sign dropped.
fn fold(s: &str) -> String {
    s.chars()
        .filter(|&c| c != '°')
        .map(|c| match c {
            '\u{00B5}' | '\u{03BC}' => 'u',
            '\u{2103}' => 'c',
            _ => c,
        })
        .flat_map(char::to_lowercase)
        .collect()
}

/// Levenshtein distance over chars.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut diag = row[0];
        row[0] = i + 1;
        for (j, &cb) in b.iter().enumerate() {
            let next = (diag + usize::from(ca != cb))
                .min(row[j] + 1)
                .min(row[j + 1] + 1);
            diag = row[j + 1];
            row[j + 1] = next;
        }
    }
    row[b.len()]
}

/// Spellings offered in hints, in table order (ASCII micro only).
fn hint_spellings(dim: Option<Dimension>) -> Vec<String> {
    UNITS
        .iter()
        .filter(|d| d.hint && dim.is_none_or(|dim| d.dim == dim))
        .flat_map(|d| {
            let prefixed = d
                .prefixes
                .iter()
                .filter(|p| p.symbol.is_ascii())
                .map(move |p| format!("{}{}", p.symbol, d.spelling));
            std::iter::once(d.spelling.to_string()).chain(prefixed)
        })
        .collect()
}

/// At most this many suggestions; more would be a guess, not a hint.
const MAX_HINTS: usize = 3;

/// Valid spellings the user probably meant. First those equal after folding
/// case and symbols (closest first); failing that, and if `typos`, the
/// spellings at the smallest edit distance (at most 2, and less than the
/// unit's length) when there are few of them.
fn suggestions(unit: &str, dim: Option<Dimension>, typos: bool) -> Vec<String> {
    let spellings = hint_spellings(dim);
    let folded = fold(unit);
    let mut slips: Vec<&String> = spellings.iter().filter(|s| fold(s) == folded).collect();
    // Stable sort keeps table order among equal distances.
    slips.sort_by_key(|s| edit_distance(unit, s));
    if !slips.is_empty() {
        return slips.into_iter().take(MAX_HINTS).cloned().collect();
    }
    if !typos {
        return Vec::new();
    }
    let limit = 2.min(unit.chars().count().saturating_sub(1));
    let scored: Vec<(usize, &String)> = spellings
        .iter()
        .map(|s| (edit_distance(unit, s), s))
        .filter(|&(d, _)| d <= limit)
        .collect();
    let Some(best) = scored.iter().map(|&(d, _)| d).min() else {
        return Vec::new();
    };
    let closest: Vec<String> = scored
        .into_iter()
        .filter(|&(d, _)| d == best)
        .map(|(_, s)| s.clone())
        .collect();
    if closest.len() > MAX_HINTS {
        Vec::new()
    } else {
        closest
    }
}

/// Writes `; did you mean "a", "b" or "c"?` (nothing for no hints).
fn write_hint(f: &mut fmt::Formatter<'_>, hints: &[String]) -> fmt::Result {
    let Some((last, rest)) = hints.split_last() else {
        return Ok(());
    };
    write!(f, "; did you mean ")?;
    for (i, h) in rest.iter().enumerate() {
        let sep = if i + 1 == rest.len() { " or " } else { ", " };
        write!(f, "\"{h}\"{sep}")?;
    }
    write!(f, "\"{last}\"?")
}

// ----------------------------------------------------------- formatting

/// How a dimension is written back: unit text, its SI value, the prefixes to use.
struct Style {
    unit: &'static str,
    si_per_unit: f64,
    prefixes: &'static [Prefix],
}

const fn style(unit: &'static str, si_per_unit: f64, prefixes: &'static [Prefix]) -> Style {
    Style {
        unit,
        si_per_unit,
        prefixes,
    }
}

/// Display unit for `dim`. Temperature coefficients below 0.1 %/K are shown
/// in ppm/K so that small ones keep readable digits.
fn display_style(dim: Dimension, value_si: f64) -> Style {
    match dim {
        D::Voltage => style("V", 1.0, SHOW_ALL),
        D::Current => style("A", 1.0, SHOW_ALL),
        D::Resistance => style("\u{03A9}", 1.0, SHOW_ALL),
        D::Capacitance => style("F", 1.0, SHOW_SMALL),
        D::Charge => style("C", 1.0, SHOW_SMALL),
        D::Inductance => style("H", 1.0, SHOW_SMALL),
        D::Time => style("s", 1.0, SHOW_SMALL),
        D::Frequency => style("Hz", 1.0, SHOW_ALL),
        D::Temperature => style("°C", 1.0, SHOW_NONE),
        D::TemperatureDifference => style("K", 1.0, SHOW_NONE),
        D::ThermalResistance => style("K/W", 1.0, SHOW_NONE),
        D::Conductance => style("S", 1.0, SHOW_ALL),
        D::Energy => style("J", 1.0, SHOW_ALL),
        D::Power => style("W", 1.0, SHOW_ALL),
        D::Ratio => style("%", 0.01, SHOW_NONE),
        D::TemperatureCoefficient if value_si != 0.0 && value_si.abs() < 1e-3 => {
            style("ppm/K", 1e-6, SHOW_NONE)
        }
        D::TemperatureCoefficient => style("%/K", 0.01, SHOW_NONE),
        D::BackEmfConstant => style(
            "V/krpm",
            VS_PER_RAD_PER_V_PER_RPM / 1000.0,
            SHOW_MICRO_MILLI,
        ),
        D::AngularSpeed => style("rpm", RAD_S_PER_RPM, SHOW_NONE),
        D::CurrentSlewRate => style("A/µs", 1e6, SHOW_NONE),
    }
}

/// Rounds |value| to `sig` significant digits: (negative, digit string, decimal
/// exponent of the first digit). Zero gives exponent 0 and is never negative.
fn round_significant(value: f64, sig: usize) -> Option<(bool, String, i32)> {
    let sci = format!("{:.*e}", sig - 1, value.abs());
    let (mantissa, exp) = sci.split_once('e')?;
    let digits: String = mantissa.chars().filter(char::is_ascii_digit).collect();
    if digits.bytes().all(|c| c == b'0') {
        return Some((false, digits, 0));
    }
    Some((value < 0.0, digits, exp.parse().ok()?))
}

/// The largest prefix not above 10^exp10, or the smallest one.
fn choose_prefix(prefixes: &[Prefix], exp10: i32) -> Prefix {
    let below = prefixes.iter().rev().find(|p| p.exp <= exp10);
    below.or(prefixes.first()).copied().unwrap_or(NONE)
}

/// Writes `digits` (first digit worth 10^shift) as a plain decimal.
fn place_point(digits: &str, shift: i32) -> String {
    if shift < 0 {
        let zeros = "0".repeat(shift.unsigned_abs() as usize - 1);
        return format!("0.{zeros}{digits}");
    }
    let int_len = shift as usize + 1;
    if int_len >= digits.len() {
        format!("{digits}{}", "0".repeat(int_len - digits.len()))
    } else {
        format!("{}.{}", &digits[..int_len], &digits[int_len..])
    }
}

/// Formats an SI value with `significant` digits (clamped to 1..=17) and an
/// engineering prefix, e.g. 0.0047 H → "4.70 mH", 20000 Hz → "20.0 kHz",
/// 0.15 → "15.0 %". The output parses back with `parse_quantity`. Never
/// writes "-0"; non-finite input is written as "NaN V", "inf V", "-inf V".
pub fn format_quantity(value_si: f64, dim: Dimension, significant: usize) -> String {
    let st = display_style(dim, value_si);
    let value = value_si / st.si_per_unit;
    let sig = significant.clamp(1, 17);
    let Some((negative, digits, exp10)) =
        round_significant(value, sig).filter(|_| value.is_finite())
    else {
        return format!("{value_si} {}", st.unit);
    };
    let prefix = choose_prefix(st.prefixes, exp10);
    let sign = if negative { "-" } else { "" };
    // Far outside the prefixes (a value such as 4.9e-324 in an absurd
    // input) the digits go into an exponent rather than hundreds of zeros
    // (beyond 15 places, a bound of our own choice).
    if (exp10 - prefix.exp).abs() > 15 {
        let mantissa = place_point(&digits, 0);
        return format!("{sign}{mantissa}e{exp10} {}", st.unit);
    }
    let body = place_point(&digits, exp10 - prefix.exp);
    format!("{sign}{body} {}{}", prefix.symbol, st.unit)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Relative comparison; exact zero must match exactly.
    fn close(got: f64, want: f64, rel: f64) -> bool {
        if want == 0.0 {
            got == 0.0
        } else {
            ((got - want) / want).abs() <= rel
        }
    }

    /// Good inputs with SI values worked out by hand from the SI prefix table
    /// (BIPM SI Brochure, 9th ed., 2019, Table 7), 1 % = 0.01, 1 ppm = 1e-6,
    /// and 1 rpm = 2π/60 rad/s (ISO 80000-3:2019): e.g. 3000 rpm = 100π rad/s;
    /// 4.2 V/krpm = 4.2 V / (1000·2π/60 rad/s) = 0.126/π V·s/rad.
    const GOOD: &[(&str, Dimension, f64)] = &[
        // Voltage
        ("12 V", D::Voltage, 12.0),
        ("3.3V", D::Voltage, 3.3),
        ("600 mV", D::Voltage, 0.6),
        ("1.2 kV", D::Voltage, 1200.0),
        ("-5 V", D::Voltage, -5.0),
        ("+24 V", D::Voltage, 24.0),
        ("48\u{00A0}V", D::Voltage, 48.0),
        ("0.5\u{202F}V", D::Voltage, 0.5),
        ("\u{2212}12 V", D::Voltage, -12.0),
        ("2.5 µV", D::Voltage, 2.5e-6),
        ("  7 V  ", D::Voltage, 7.0),
        // Current
        ("360 mA", D::Current, 0.36),
        ("0.5 A", D::Current, 0.5),
        ("25 nA", D::Current, 25e-9),
        ("1.5 kA", D::Current, 1500.0),
        ("2e-3 A", D::Current, 0.002),
        // Resistance
        ("8 m\u{03A9}", D::Resistance, 0.008),
        ("8 mohm", D::Resistance, 0.008),
        ("1.5 k\u{03A9}", D::Resistance, 1500.0),
        ("4.7 k\u{2126}", D::Resistance, 4700.0),
        ("10 ohms", D::Resistance, 10.0),
        ("2 Ohm", D::Resistance, 2.0),
        ("1 M\u{03A9}", D::Resistance, 1e6),
        ("5 mOhm", D::Resistance, 0.005),
        ("4.7E3 ohm", D::Resistance, 4700.0),
        ("100 Mohm", D::Resistance, 1e8),
        // Capacitance
        ("1.2e-9 F", D::Capacitance, 1.2e-9),
        ("1.2 nF", D::Capacitance, 1.2e-9),
        ("100 pF", D::Capacitance, 1e-10),
        ("4.7 uF", D::Capacitance, 4.7e-6),
        ("4.7 \u{03BC}F", D::Capacitance, 4.7e-6),
        ("2200 \u{00B5}F", D::Capacitance, 2.2e-3),
        ("1 mF", D::Capacitance, 1e-3),
        // Charge
        ("63 nC", D::Charge, 63e-9),
        ("1.25 nC", D::Charge, 1.25e-9),
        ("120 pC", D::Charge, 1.2e-10),
        ("2 µC", D::Charge, 2e-6),
        ("0.5 C", D::Charge, 0.5),
        // Inductance
        ("4.7 mH", D::Inductance, 4.7e-3),
        ("7.5 mH", D::Inductance, 7.5e-3),
        ("220 uH", D::Inductance, 2.2e-4),
        ("10 nH", D::Inductance, 1e-8),
        ("1 H", D::Inductance, 1.0),
        // Time
        ("100 µs", D::Time, 1e-4),
        ("100 us", D::Time, 1e-4),
        ("50 ns", D::Time, 5e-8),
        ("1.5 ms", D::Time, 1.5e-3),
        ("2 s", D::Time, 2.0),
        ("250 ps", D::Time, 2.5e-10),
        (".5 s", D::Time, 0.5),
        ("3. ms", D::Time, 3e-3),
        // Frequency
        ("20 kHz", D::Frequency, 2e4),
        ("20kHz", D::Frequency, 2e4),
        ("170 MHz", D::Frequency, 1.7e8),
        ("1 GHz", D::Frequency, 1e9),
        ("50 Hz", D::Frequency, 50.0),
        ("16e3 Hz", D::Frequency, 16000.0),
        ("1 mHz", D::Frequency, 1e-3),
        // Temperature (°C, not converted)
        ("55 °C", D::Temperature, 55.0),
        ("55 degC", D::Temperature, 55.0),
        ("-40 °C", D::Temperature, -40.0),
        ("25 \u{2103}", D::Temperature, 25.0),
        ("175°C", D::Temperature, 175.0),
        ("0 °C", D::Temperature, 0.0),
        // Temperature difference
        ("10 K", D::TemperatureDifference, 10.0),
        ("-5 K", D::TemperatureDifference, -5.0),
        ("0.5 K", D::TemperatureDifference, 0.5),
        // Thermal resistance
        ("2.5 K/W", D::ThermalResistance, 2.5),
        ("40 °C/W", D::ThermalResistance, 40.0),
        ("0.8 degC/W", D::ThermalResistance, 0.8),
        ("62 \u{2103}/W", D::ThermalResistance, 62.0),
        // Conductance
        ("60 S", D::Conductance, 60.0),
        ("100 mS", D::Conductance, 0.1),
        ("5 A/V", D::Conductance, 5.0),
        ("250 mA/V", D::Conductance, 0.25),
        ("2 kS", D::Conductance, 2000.0),
        // Energy
        ("2 µJ", D::Energy, 2e-6),
        ("1.468 uJ", D::Energy, 1.468e-6),
        ("3 mJ", D::Energy, 3e-3),
        ("1 J", D::Energy, 1.0),
        ("5 nJ", D::Energy, 5e-9),
        // Power
        ("1.5 W", D::Power, 1.5),
        ("74.78 mW", D::Power, 0.07478),
        ("2 kW", D::Power, 2000.0),
        // Ratio
        ("15 %", D::Ratio, 0.15),
        ("15%", D::Ratio, 0.15),
        ("0.5 %", D::Ratio, 0.005),
        ("100 %", D::Ratio, 1.0),
        // Temperature coefficient
        ("0.45 %/K", D::TemperatureCoefficient, 0.0045),
        ("0.5 %/°C", D::TemperatureCoefficient, 0.005),
        ("0.39 %/degC", D::TemperatureCoefficient, 0.0039),
        ("3900 ppm/K", D::TemperatureCoefficient, 0.0039),
        ("100 ppm/°C", D::TemperatureCoefficient, 1e-4),
        ("0.004 1/K", D::TemperatureCoefficient, 0.004),
        // Back-EMF constant (V·s/rad)
        ("4.2 V/krpm", D::BackEmfConstant, 0.126 / PI),
        ("4.2 mV/rpm", D::BackEmfConstant, 0.126 / PI),
        ("0.01 V/rpm", D::BackEmfConstant, 0.3 / PI),
        ("0.04 V/(rad/s)", D::BackEmfConstant, 0.04),
        ("0.04 V·s/rad", D::BackEmfConstant, 0.04),
        ("40 mV\u{22C5}s/rad", D::BackEmfConstant, 0.04),
        ("0.04 Vs/rad", D::BackEmfConstant, 0.04),
        // Angular speed (rad/s)
        ("3000 rpm", D::AngularSpeed, 100.0 * PI),
        ("3 krpm", D::AngularSpeed, 100.0 * PI),
        ("1.5 krpm", D::AngularSpeed, 50.0 * PI),
        ("60 rpm", D::AngularSpeed, 2.0 * PI),
        ("314 rad/s", D::AngularSpeed, 314.0),
        ("100 A/µs", D::CurrentSlewRate, 1e8),
        ("100 A/us", D::CurrentSlewRate, 1e8),
        ("2 A/ns", D::CurrentSlewRate, 2e9),
    ];

    #[test]
    fn good_inputs_parse_to_si() {
        assert!(GOOD.len() >= 60);
        for &(text, dim, want) in GOOD {
            let got = parse_quantity(text, dim);
            assert!(
                got.as_ref().is_ok_and(|&g| close(g, want, 1e-12)),
                "{text:?}: got {got:?}, want {want}"
            );
        }
    }

    #[test]
    fn every_dimension_has_good_inputs() {
        for dim in Dimension::ALL {
            assert!(GOOD.iter().any(|g| g.1 == dim), "{dim:?} untested");
        }
    }

    #[test]
    fn parse_any_finds_the_dimension() {
        for &(text, dim, want) in GOOD {
            let got = parse_any(text);
            assert!(
                got.as_ref()
                    .is_ok_and(|&(g, d)| d == dim && close(g, want, 1e-12)),
                "{text:?}: got {got:?}, want ({want}, {dim:?})"
            );
        }
    }

    /// Every spelling the table can produce (all rows, every allowed prefix).
    fn all_spellings() -> Vec<(String, Dimension)> {
        UNITS
            .iter()
            .flat_map(|d| {
                std::iter::once(d.spelling.to_string())
                    .chain(
                        d.prefixes
                            .iter()
                            .map(|p| format!("{}{}", p.symbol, d.spelling)),
                    )
                    .map(move |s| (s, d.dim))
            })
            .collect()
    }

    #[test]
    fn no_spelling_is_ambiguous() {
        let spellings = all_spellings();
        assert!(spellings.len() > 150);
        for (s, dim) in &spellings {
            let found: Vec<Dimension> = matches(s).map(|m| m.def.dim).collect();
            assert_eq!(found, vec![*dim], "{s:?} matches {found:?}");
        }
    }

    #[test]
    fn every_spelling_parses_after_a_number() {
        for (s, dim) in all_spellings() {
            assert_eq!(parse_any(&format!("2 {s}")).map(|r| r.1), Ok(dim), "{s}");
            // Without the space the number must stop before the unit; "1/K"
            // is the one spelling that starts with a digit.
            if s != "1/K" {
                assert_eq!(parse_any(&format!("2{s}")).map(|r| r.1), Ok(dim), "{s}");
            }
        }
    }

    #[test]
    fn case_decides_prefix_and_unit() {
        assert_eq!(parse_any("1 mS"), Ok((1e-3, D::Conductance)));
        assert_eq!(parse_any("1 ms"), Ok((1e-3, D::Time)));
        assert_eq!(parse_any("1 MHz"), Ok((1e6, D::Frequency)));
        assert_eq!(parse_any("1 mHz"), Ok((1e-3, D::Frequency)));
        assert_eq!(parse_any("1 K/W"), Ok((1.0, D::ThermalResistance)));
        assert_eq!(parse_any("1 kW"), Ok((1000.0, D::Power)));
        assert_eq!(parse_any("1 C"), Ok((1.0, D::Charge)));
        assert_eq!(parse_any("1 °C"), Ok((1.0, D::Temperature)));
    }

    #[test]
    fn examples_parse_as_their_dimension() {
        for dim in Dimension::ALL {
            let text = dim.example().trim_matches('"');
            assert_eq!(parse_any(text).map(|r| r.1), Ok(dim), "{text}");
        }
    }

    #[test]
    fn names_are_unique() {
        for (i, a) in Dimension::ALL.iter().enumerate() {
            for b in &Dimension::ALL[i + 1..] {
                assert_ne!(a.name(), b.name());
            }
        }
    }

    const E: D = D::Voltage;

    /// Bad inputs with the whole expected message.
    const BAD: &[(&str, Dimension, &str)] = &[
        (
            "",
            E,
            "empty value (write a number and its unit, such as \"12 V\")",
        ),
        (
            " \u{00A0} ",
            E,
            "empty value (write a number and its unit, such as \"12 V\")",
        ),
        (
            "1.2",
            D::Capacitance,
            "expected a capacitance such as \"1.2 nF\", found a bare number 1.2 (write the unit)",
        ),
        (
            "1e-9",
            D::Capacitance,
            "expected a capacitance such as \"1.2 nF\", found a bare number 1e-9 (write the unit)",
        ),
        (
            "0.15",
            D::Ratio,
            "expected a ratio such as \"15 %\", found a bare number 0.15 (write the unit)",
        ),
        (
            "4.7",
            D::Inductance,
            "expected an inductance such as \"4.7 mH\", found a bare number 4.7 (write the unit)",
        ),
        (
            "12 A",
            E,
            "\"12 A\" is a current, expected a voltage such as \"12 V\"",
        ),
        (
            "15 %",
            D::Current,
            "\"15 %\" is a ratio, expected a current such as \"0.5 A\"",
        ),
        (
            "1 mf",
            D::Capacitance,
            "unknown unit \"mf\" (expected a capacitance such as \"1.2 nF\"); did you mean \"mF\"?",
        ),
        (
            "10 MF",
            D::Capacitance,
            "unknown unit \"MF\" (expected a capacitance such as \"1.2 nF\"); did you mean \"mF\"?",
        ),
        (
            "1 kv",
            E,
            "unknown unit \"kv\" (expected a voltage such as \"12 V\"); did you mean \"kV\"?",
        ),
        (
            "12 v",
            E,
            "unknown unit \"v\" (expected a voltage such as \"12 V\"); did you mean \"V\"?",
        ),
        (
            "10 mhz",
            D::Frequency,
            "unknown unit \"mhz\" (expected a frequency such as \"20 kHz\"); did you mean \"mHz\" or \"MHz\"?",
        ),
        (
            "1 kF",
            D::Capacitance,
            "unknown unit \"kF\" (expected a capacitance such as \"1.2 nF\")",
        ),
        (
            "12 volts",
            E,
            "unknown unit \"volts\" (expected a voltage such as \"12 V\")",
        ),
        (
            "12 V x",
            E,
            "unknown unit \"V x\" (expected a voltage such as \"12 V\"); did you mean \"V\"?",
        ),
        (
            "2.5 K/w",
            D::ThermalResistance,
            "unknown unit \"K/w\" (expected a thermal resistance such as \"2.5 K/W\"); did you mean \"K/W\"?",
        ),
        (
            "3000 RPM",
            D::AngularSpeed,
            "unknown unit \"RPM\" (expected an angular speed such as \"3000 rpm\"); did you mean \"rpm\"?",
        ),
        // An rms back-EMF constant: the peak is √2 × (6 → 8.49), from
        // line-to-neutral √6 × (6 → 14.7).
        (
            "6 V rms/krpm",
            D::BackEmfConstant,
            "\"6 V rms/krpm\" is an rms back-EMF constant; pwmplan expects the line-to-line PEAK back-EMF per speed (for a sinusoidal back-EMF the peak is √2 × the rms): write \"8.49 V/krpm\" if the rms figure is line-to-line, or \"14.7 V/krpm\" (√2·√3 = √6 ×) if it is line-to-neutral",
        ),
        (
            "6 Vrms/krpm",
            D::BackEmfConstant,
            "\"6 Vrms/krpm\" is an rms back-EMF constant; pwmplan expects the line-to-line PEAK back-EMF per speed (for a sinusoidal back-EMF the peak is √2 × the rms): write \"8.49 V/krpm\" if the rms figure is line-to-line, or \"14.7 V/krpm\" (√2·√3 = √6 ×) if it is line-to-neutral",
        ),
        (
            "4.2 V/kRPM",
            D::BackEmfConstant,
            "unknown unit \"V/kRPM\" (expected a back-EMF constant such as \"4.2 V/krpm\"); did you mean \"V/krpm\"?",
        ),
        (
            "5 mK",
            D::TemperatureDifference,
            "unknown unit \"mK\" (expected a temperature difference such as \"10 K\"); did you mean \"K\"?",
        ),
        (
            "25 oC",
            D::Temperature,
            "unknown unit \"oC\" (expected a temperature such as \"25 °C\"); did you mean \"°C\"?",
        ),
        (
            "100 mS",
            D::Time,
            "\"100 mS\" is a conductance, expected a time such as \"100 ns\"; did you mean \"ms\"?",
        ),
        (
            "100 ms",
            D::Conductance,
            "\"100 ms\" is a time, expected a conductance such as \"60 S\"; did you mean \"mS\" or \"MS\"?",
        ),
        (
            "55 C",
            D::Temperature,
            "\"55 C\" is a charge, expected a temperature such as \"25 °C\"; did you mean \"°C\"?",
        ),
        (
            "300 K",
            D::Temperature,
            "\"300 K\" is a temperature difference, expected a temperature such as \"25 °C\"",
        ),
        (
            "10 °C",
            D::TemperatureDifference,
            "\"10 °C\" is a temperature, expected a temperature difference such as \"10 K\"",
        ),
        (
            "4.2 V/krpm",
            D::AngularSpeed,
            "\"4.2 V/krpm\" is a back-EMF constant, expected an angular speed such as \"3000 rpm\"",
        ),
        (
            "abc",
            E,
            "expected a number followed by a unit, found \"abc\"",
        ),
        ("V", E, "expected a number followed by a unit, found \"V\""),
        (
            "- 5 V",
            E,
            "expected a number followed by a unit, found \"- 5 V\"",
        ),
        (
            "1.2.3 V",
            E,
            "expected a number followed by a unit, found \"1.2.3 V\"",
        ),
        (
            "1,5 V",
            E,
            "expected a number followed by a unit, found \"1,5 V\" (write decimals with a point, not a comma)",
        ),
        (
            "NaN V",
            E,
            "not a finite number (NaN and infinity are not accepted)",
        ),
        (
            "-inf A",
            D::Current,
            "not a finite number (NaN and infinity are not accepted)",
        ),
        (
            "Infinity",
            E,
            "not a finite number (NaN and infinity are not accepted)",
        ),
        (
            "1e999 V",
            E,
            "not a finite number (NaN and infinity are not accepted)",
        ),
        (
            "1e300 GV",
            E,
            "not a finite number (NaN and infinity are not accepted)",
        ),
    ];

    #[test]
    fn bad_inputs_give_clear_messages() {
        assert!(BAD.len() >= 30);
        for &(text, dim, want) in BAD {
            match parse_quantity(text, dim) {
                Ok(v) => panic!("{text:?} parsed as {v}"),
                Err(e) => assert_eq!(e.to_string(), want, "{text:?}"),
            }
        }
    }

    #[test]
    fn bad_inputs_carry_the_right_variant() {
        assert_eq!(
            parse_quantity("12 A", D::Voltage),
            Err(UnitError::WrongDimension {
                text: "12 A".into(),
                unit: "A".into(),
                found: D::Current,
                expected: D::Voltage,
            })
        );
        assert_eq!(
            parse_quantity("1 mf", D::Capacitance),
            Err(UnitError::UnknownUnit {
                unit: "mf".into(),
                expected: D::Capacitance
            })
        );
        assert_eq!(parse_quantity("nan", D::Voltage), Err(UnitError::NotFinite));
    }

    #[test]
    fn parse_any_errors() {
        let msg = |t: &str| parse_any(t).map_err(|e| e.to_string());
        assert_eq!(
            msg("1.2"),
            Err(
                "found a bare number 1.2 (write the unit, such as \"12 V\", \"0.5 A\" or \"15 %\")"
                    .into()
            )
        );
        assert_eq!(msg("5 xyz"), Err("unknown unit \"xyz\"".into()));
        assert_eq!(
            msg("5 khz"),
            Err("unknown unit \"khz\"; did you mean \"kHz\"?".into())
        );
        assert_eq!(parse_any(""), Err(UnitError::Empty));
    }

    #[test]
    fn edit_distance_known_values() {
        // Classic textbook pair: kitten → sitting needs 3 edits.
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("µF", "uF"), 1);
        assert_eq!(edit_distance("same", "same"), 0);
    }

    #[test]
    fn format_examples() {
        let cases: &[(f64, Dimension, usize, &str)] = &[
            (0.0047, D::Inductance, 3, "4.70 mH"),
            (20000.0, D::Frequency, 3, "20.0 kHz"),
            (57.017, D::Temperature, 3, "57.0 °C"),
            (0.15, D::Ratio, 3, "15.0 %"),
            (-0.0, D::Voltage, 3, "0.00 V"),
            (0.0, D::Current, 3, "0.00 A"),
            (-1e-13, D::Temperature, 2, "-0.00000000000010 °C"),
            (999.96, D::Voltage, 3, "1.00 kV"),
            (1500.0, D::Resistance, 2, "1.5 k\u{03A9}"),
            (5000.0, D::Time, 3, "5000 s"),
            (12345.0, D::Time, 3, "12300 s"),
            (63e-9, D::Charge, 2, "63 nC"),
            (1e-15, D::Capacitance, 3, "0.00100 pF"),
            (-40.0, D::Temperature, 3, "-40.0 °C"),
            (0.0045, D::TemperatureCoefficient, 2, "0.45 %/K"),
            (1e-4, D::TemperatureCoefficient, 3, "100 ppm/K"),
            (100.0 * PI, D::AngularSpeed, 4, "3000 rpm"),
            (0.126 / PI, D::BackEmfConstant, 2, "4.2 V/krpm"),
            (0.126e-3 / PI, D::BackEmfConstant, 2, "4.2 mV/krpm"),
            (2.5, D::ThermalResistance, 2, "2.5 K/W"),
            (0.07478, D::Power, 4, "74.78 mW"),
            (1e-4, D::Time, 1, "100 µs"),
            (4.7e-3, D::Inductance, 0, "5 mH"),
            (2e12, D::Frequency, 3, "2000 GHz"),
            (-0.36, D::Current, 2, "-360 mA"),
            (f64::NAN, D::Voltage, 3, "NaN V"),
            (f64::NEG_INFINITY, D::Power, 3, "-inf W"),
            (4.9e-324, D::Resistance, 3, "4.94e-324 \u{03A9}"),
            (1e300, D::Temperature, 3, "1.00e300 °C"),
        ];
        for &(v, dim, sig, want) in cases {
            assert_eq!(format_quantity(v, dim, sig), want, "{v} {dim:?} {sig}");
        }
    }

    /// Rounding to n significant digits moves a value by at most half a unit
    /// in the last digit: relative error ≤ 5·10^-n (closed form).
    fn round_trip_ok(v: f64, dim: Dimension, sig: usize) -> bool {
        let text = format_quantity(v, dim, sig);
        let bound = 5.0 * 10f64.powi(-(sig as i32)) * (1.0 + 1e-9) + 1e-15;
        parse_quantity(&text, dim).is_ok_and(|back| {
            if v == 0.0 {
                back == 0.0
            } else {
                ((back - v) / v).abs() <= bound
            }
        })
    }

    #[test]
    fn format_round_trips_good_table() {
        for &(_, dim, v) in GOOD {
            for sig in 1..=8 {
                assert!(round_trip_ok(v, dim, sig), "{v} {dim:?} {sig}");
            }
        }
    }

    #[test]
    fn format_round_trips_pseudo_random_sweep() {
        // Deterministic 64-bit LCG (Knuth's MMIX constants) over 1e-15 .. 1e13.
        let mut state: u64 = 0x2545_F491_4F6C_DD1D;
        let mut next = || {
            state = state
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            (state >> 11) as f64 / (1u64 << 53) as f64
        };
        for _ in 0..3000 {
            let dim = Dimension::ALL[(next() * 18.0) as usize % 18];
            let magnitude = 10f64.powf(-15.0 + 28.0 * next());
            let v = if next() < 0.3 { -magnitude } else { magnitude };
            let sig = 1 + (next() * 6.0) as usize;
            assert!(round_trip_ok(v, dim, sig), "{v} {dim:?} {sig}");
            assert!(!format_quantity(v, dim, sig).starts_with("-0 "));
        }
    }

    #[test]
    fn format_is_deterministic_and_never_negative_zero() {
        for dim in Dimension::ALL {
            for v in [0.0, -0.0] {
                let s = format_quantity(v, dim, 3);
                assert!(!s.starts_with('-'), "{s}");
                assert_eq!(s, format_quantity(v, dim, 3));
            }
        }
    }
}
