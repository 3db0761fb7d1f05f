//! Typed quantities for the input files: a text such as `"4.7 mH"` parsed
//! into SI with its dimension checked at deserialisation, so a bare number or
//! a wrong unit is refused with a message naming the expected unit.

use std::fmt;
use std::marker::PhantomData;

use serde::Deserialize;
use serde::de::{self, Deserializer, MapAccess, Visitor};

use crate::input::units::{Dimension, UnitError, parse_any, parse_quantity};

/// A dimension known at compile time.
pub trait Dim: Copy + Clone + fmt::Debug + PartialEq + 'static {
    const DIM: Dimension;
}

macro_rules! dims {
    ($($name:ident => $dim:ident),* $(,)?) => {
        $(
            #[doc = concat!("Marker for ", stringify!($dim), ".")]
            #[derive(Debug, Clone, Copy, PartialEq)]
            pub struct $name;
            impl Dim for $name {
                const DIM: Dimension = Dimension::$dim;
            }
        )*
    };
}

dims! {
    Volt => Voltage,
    Ampere => Current,
    Ohm => Resistance,
    Farad => Capacitance,
    Coulomb => Charge,
    Henry => Inductance,
    Second => Time,
    Hertz => Frequency,
    Celsius => Temperature,
    Kelvin => TemperatureDifference,
    KelvinPerWatt => ThermalResistance,
    Siemens => Conductance,
    Joule => Energy,
    Watt => Power,
    Ratio => Ratio,
    PerKelvin => TemperatureCoefficient,
    VoltSecondPerRad => BackEmfConstant,
    RadPerSecond => AngularSpeed,
    AmperePerSecond => CurrentSlewRate,
}

/// A value in SI base units whose dimension is `D` (temperatures in °C).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Q<D: Dim> {
    pub si: f64,
    _dim: PhantomData<D>,
}

impl<D: Dim> Q<D> {
    pub fn new(si: f64) -> Q<D> {
        Q {
            si,
            _dim: PhantomData,
        }
    }
}

struct QuantityVisitor<D>(PhantomData<D>);

fn bare_number<E: de::Error>(dim: Dimension, shown: String) -> E {
    E::custom(UnitError::BareNumber {
        number: shown,
        expected: dim,
    })
}

/// A bare number where either of two dimensions goes: both forms are named,
/// since the user may have meant either.
fn bare_number_either<E: de::Error>(a: Dimension, b: Dimension, shown: &str) -> E {
    E::custom(format!(
        "expected {}, found a bare number {shown} (write the unit)",
        either_expected(a, b)
    ))
}

/// `a current such as "0.5 A" or a ratio such as "15 %"`.
fn either_expected(a: Dimension, b: Dimension) -> String {
    format!(
        "{} such as {} or {} such as {}",
        a.with_article(),
        a.example(),
        b.with_article(),
        b.example()
    )
}

impl<'de, D: Dim> Visitor<'de> for QuantityVisitor<D> {
    type Value = Q<D>;

    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        write!(f, "{} such as {}", D::DIM.with_article(), D::DIM.example())
    }

    fn visit_str<E: de::Error>(self, v: &str) -> Result<Q<D>, E> {
        parse_quantity(v, D::DIM).map(Q::new).map_err(E::custom)
    }

    fn visit_i64<E: de::Error>(self, v: i64) -> Result<Q<D>, E> {
        Err(bare_number(D::DIM, v.to_string()))
    }

    fn visit_u64<E: de::Error>(self, v: u64) -> Result<Q<D>, E> {
        Err(bare_number(D::DIM, v.to_string()))
    }

    fn visit_f64<E: de::Error>(self, v: f64) -> Result<Q<D>, E> {
        Err(bare_number(D::DIM, v.to_string()))
    }
}

impl<'de, D: Dim> Deserialize<'de> for Q<D> {
    fn deserialize<De: Deserializer<'de>>(d: De) -> Result<Q<D>, De::Error> {
        d.deserialize_any(QuantityVisitor(PhantomData))
    }
}

/// A datasheet value given as typical only (`"52 nC"`) or with its limits
/// (`{ min: ..., typ: ..., max: ... }`); the limits feed the worst case.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spread<D: Dim> {
    pub min: Option<Q<D>>,
    pub typ: Q<D>,
    pub max: Option<Q<D>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields, bound = "")]
struct SpreadMap<D: Dim> {
    min: Option<Q<D>>,
    typ: Q<D>,
    max: Option<Q<D>>,
}

struct SpreadVisitor<D>(PhantomData<D>);

impl<'de, D: Dim> Visitor<'de> for SpreadVisitor<D> {
    type Value = Spread<D>;

    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        write!(
            f,
            "{} such as {}, or {{ typ: ..., max: ... }}",
            D::DIM.with_article(),
            D::DIM.example()
        )
    }

    fn visit_str<E: de::Error>(self, v: &str) -> Result<Spread<D>, E> {
        let typ = QuantityVisitor::<D>(PhantomData).visit_str(v)?;
        Ok(Spread {
            min: None,
            typ,
            max: None,
        })
    }

    fn visit_i64<E: de::Error>(self, v: i64) -> Result<Spread<D>, E> {
        Err(bare_number(D::DIM, v.to_string()))
    }

    fn visit_u64<E: de::Error>(self, v: u64) -> Result<Spread<D>, E> {
        Err(bare_number(D::DIM, v.to_string()))
    }

    fn visit_f64<E: de::Error>(self, v: f64) -> Result<Spread<D>, E> {
        Err(bare_number(D::DIM, v.to_string()))
    }

    fn visit_map<A: MapAccess<'de>>(self, map: A) -> Result<Spread<D>, A::Error> {
        let m = SpreadMap::<D>::deserialize(de::value::MapAccessDeserializer::new(map))?;
        Ok(Spread {
            min: m.min,
            typ: m.typ,
            max: m.max,
        })
    }
}

impl<'de, D: Dim> Deserialize<'de> for Spread<D> {
    fn deserialize<De: Deserializer<'de>>(d: De) -> Result<Spread<D>, De::Error> {
        d.deserialize_any(SpreadVisitor(PhantomData))
    }
}

/// A value that may be written in either of two dimensions, such as a ripple
/// limit in amperes or in percent of the rated current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Either2<A: Dim, B: Dim> {
    pub si: f64,
    pub dim: Dimension,
    _dims: PhantomData<(A, B)>,
}

impl<A: Dim, B: Dim> Either2<A, B> {
    /// Whether the value was written in the first dimension.
    pub fn is_first(&self) -> bool {
        self.dim == A::DIM
    }
}

struct EitherVisitor<A, B>(PhantomData<(A, B)>);

impl<'de, A: Dim, B: Dim> Visitor<'de> for EitherVisitor<A, B> {
    type Value = Either2<A, B>;

    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        f.write_str(&either_expected(A::DIM, B::DIM))
    }

    fn visit_str<E: de::Error>(self, v: &str) -> Result<Either2<A, B>, E> {
        match parse_any(v) {
            Ok((si, dim)) if dim == A::DIM || dim == B::DIM => Ok(Either2 {
                si,
                dim,
                _dims: PhantomData,
            }),
            Ok((_, dim)) => Err(E::custom(format!(
                "\"{}\" is {}, expected {}",
                v.trim(),
                dim.with_article(),
                either_expected(A::DIM, B::DIM)
            ))),
            Err(UnitError::BareNumberAny { number }) => {
                Err(bare_number_either(A::DIM, B::DIM, &number))
            }
            // Report against the first dimension: its message names a unit.
            Err(_) => parse_quantity(v, A::DIM)
                .map(|si| Either2 {
                    si,
                    dim: A::DIM,
                    _dims: PhantomData,
                })
                .map_err(E::custom),
        }
    }

    fn visit_i64<E: de::Error>(self, v: i64) -> Result<Either2<A, B>, E> {
        Err(bare_number_either(A::DIM, B::DIM, &v.to_string()))
    }

    fn visit_u64<E: de::Error>(self, v: u64) -> Result<Either2<A, B>, E> {
        Err(bare_number_either(A::DIM, B::DIM, &v.to_string()))
    }

    fn visit_f64<E: de::Error>(self, v: f64) -> Result<Either2<A, B>, E> {
        Err(bare_number_either(A::DIM, B::DIM, &v.to_string()))
    }
}

impl<'de, A: Dim, B: Dim> Deserialize<'de> for Either2<A, B> {
    fn deserialize<De: Deserializer<'de>>(d: De) -> Result<Either2<A, B>, De::Error> {
        d.deserialize_any(EitherVisitor(PhantomData))
    }
}

/// A text field (a name, a file reference): a YAML string. A plain number or
/// `true`/`false` is refused rather than silently turned into text, so the
/// parser and the JSON Schema (`type: string`) agree; quoted, it is text.
pub fn text<'de, D: Deserializer<'de>>(d: D) -> Result<String, D::Error> {
    struct TextVisitor;
    impl<'de> Visitor<'de> for TextVisitor {
        type Value = String;

        fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
            f.write_str("a text (a number or true/false counts as text only in quotes)")
        }

        fn visit_str<E: de::Error>(self, v: &str) -> Result<String, E> {
            Ok(v.to_string())
        }
    }
    d.deserialize_any(TextVisitor)
}
