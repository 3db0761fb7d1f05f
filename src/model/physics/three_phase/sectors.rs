//! Six-step commutation table: per 60° sector of the electrical angle and per direction,
//! which phase is driven to the positive rail, which to the negative rail and which floats,
//! and which switch chops.
//!
//! Angle convention (ours, stated in the emitted code): θ is the electrical angle of phase
//! A's back-EMF, `e_a = E·f(θ)` with f the sine or the 120°-flat trapezoid that rises through
//! zero at θ = 0; B and C lag A by 120° and 240°. Sector k (0 … 5) covers θ from 30° + 60°·k
//! to 90° + 60°·k: the six intervals between the back-EMF crossings of the line-to-line
//! voltages, where block commutation switches (Krishnan, *Permanent Magnet Synchronous and
//! Brushless DC Motor Drives*, 2010, ch. 9, from memory; Hendershot and Miller, *Design of
//! Brushless Permanent-Magnet Motors*, 1994, from memory).

/// Phase indices: 0 = A, 1 = B, 2 = C.
pub const PHASES: [&str; 3] = ["A", "B", "C"];

/// The sectors of one electrical period.
pub const SECTORS: usize = 6;

/// One sector's drive.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SectorDrive {
    /// Phase driven to the positive rail (its high side conducts).
    pub positive: usize,
    /// Phase driven to the negative rail (its low side conducts).
    pub negative: usize,
    /// Phase left open: both its switches off.
    pub floating: usize,
}

/// Start of sector `k`, electrical degrees.
pub fn sector_start_deg(k: usize) -> f64 {
    30.0 + 60.0 * (k % SECTORS) as f64
}

/// The drive of sector `k`: forward (motoring in the positive sequence A → B → C), the phase
/// whose back-EMF is highest through the sector is driven positive and the lowest negative,
/// so the current flows against the two EMFs in series and the torque `(e₊ − e₋)·i/ω` is
/// positive; reverse swaps the two (common practice). Read off the sine at the sector's
/// middle, where the highest and lowest are unambiguous.
pub fn sector_drive(k: usize, forward: bool) -> SectorDrive {
    let mid = (sector_start_deg(k) + 30.0).to_radians();
    let e = |j: usize| (mid - 2.0 * std::f64::consts::PI * j as f64 / 3.0).sin();
    let by_emf = |a: &usize, b: &usize| e(*a).total_cmp(&e(*b));
    let high = (0..3).max_by(by_emf).unwrap_or(0);
    let low = (0..3).min_by(by_emf).unwrap_or(1);
    let floating = 3 - high - low;
    let (positive, negative) = if forward { (high, low) } else { (low, high) };
    SectorDrive {
        positive,
        negative,
        floating,
    }
}

/// The table of one direction, sector 0 first (worked out once per
/// direction: the simulation reads it at every step).
pub fn sector_table(forward: bool) -> [SectorDrive; SECTORS] {
    static TABLES: std::sync::OnceLock<[[SectorDrive; SECTORS]; 2]> = std::sync::OnceLock::new();
    let t =
        TABLES.get_or_init(|| [true, false].map(|fw| std::array::from_fn(|k| sector_drive(k, fw))));
    t[usize::from(!forward)]
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Hand-read from e_a = sin θ, e_b = sin(θ − 120°), e_c = sin(θ − 240°) at θ = 60°:
    /// e_a = 0.866, e_b = −0.866, e_c = 0, so A positive, B negative, C floating.
    #[test]
    fn first_sector_by_hand() {
        assert_eq!(
            sector_drive(0, true),
            SectorDrive {
                positive: 0,
                negative: 1,
                floating: 2
            }
        );
        assert_eq!(sector_drive(0, false).positive, 1);
        assert_eq!(sector_start_deg(5), 330.0);
    }
}
