//! Indoor path loss — ITU-R P.1238, site-general model (older form).
//!
//! `L = 20 log10 f(MHz) + N log10 d(m) + L_f(n) - 28` dB, with the distance power-loss
//! coefficient N and the floor penetration loss factor L_f(n) tabulated per frequency
//! band and environment. The form is confirmed; the table rows below are marked with
//! how well they are sourced (see [`BandRow::sourcing`]). Newer editions of P.1238 use a
//! different parametrisation that rfsite does not implement yet.
//!
//! The tables only cover a few bands; [`indoor_loss_db`] picks the tabulated band
//! nearest in log-frequency that has a row for the environment, and says so.

use crate::error::{check_positive, PhysicsError};
use crate::validity::{check_range, RangeNote};

/// Environment categories of the P.1238 tables.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum IndoorEnvironment {
    /// Residential (apartments, houses).
    Residential,
    /// Office.
    Office,
    /// Commercial (shops, open halls).
    Commercial,
}

impl IndoorEnvironment {
    /// Lower-case name for messages.
    pub fn name(&self) -> &'static str {
        match self {
            IndoorEnvironment::Residential => "residential",
            IndoorEnvironment::Office => "office",
            IndoorEnvironment::Commercial => "commercial",
        }
    }
}

/// How a floor penetration loss L_f(n) is tabulated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FloorLoss {
    /// Explicit values for 1, 2, 3, ... floors; beyond the last, the last value is used.
    Values(&'static [f64]),
    /// `first + per_extra (n - 1)` for n >= 1 floors.
    Linear {
        /// Loss for one floor, dB.
        first_db: f64,
        /// Loss added per further floor, dB.
        per_extra_db: f64,
    },
    /// The table has no floor loss for this band and environment.
    NotTabulated,
}

/// How well a table row is sourced.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sourcing {
    /// Several secondary sources agree.
    Consistent,
    /// Only one source was at hand.
    SingleSource,
}

/// One tabulated (band, environment) row.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BandRow {
    /// Band label for messages, e.g. `"1.8–2 GHz"`.
    pub band: &'static str,
    /// Lower edge of the band, MHz.
    pub f_low_mhz: f64,
    /// Upper edge of the band, MHz (equal to the lower for a single frequency).
    pub f_high_mhz: f64,
    /// Environment.
    pub environment: IndoorEnvironment,
    /// Distance power-loss coefficient N.
    pub n_coefficient: f64,
    /// Floor penetration loss factor.
    pub floor_loss: FloorLoss,
    /// How well the row is sourced.
    pub sourcing: Sourcing,
}

const fn band_row(
    band: &'static str,
    f_low_mhz: f64,
    f_high_mhz: f64,
    environment: IndoorEnvironment,
    n_coefficient: f64,
    floor_loss: FloorLoss,
    sourcing: Sourcing,
) -> BandRow {
    BandRow {
        band,
        f_low_mhz,
        f_high_mhz,
        environment,
        n_coefficient,
        floor_loss,
        sourcing,
    }
}

use IndoorEnvironment::{Commercial, Office, Residential};

/// The P.1238 (older site-general form) table rows rfsite uses.
pub const P1238_ROWS: &[BandRow] = &[
    band_row(
        "900 MHz",
        900.0,
        900.0,
        Office,
        33.0,
        FloorLoss::Values(&[9.0, 19.0, 24.0]),
        Sourcing::Consistent,
    ),
    band_row(
        "900 MHz",
        900.0,
        900.0,
        Commercial,
        20.0,
        FloorLoss::NotTabulated,
        Sourcing::Consistent,
    ),
    band_row(
        "1.8–2 GHz",
        1800.0,
        2000.0,
        Residential,
        28.0,
        FloorLoss::Linear {
            first_db: 4.0,
            per_extra_db: 4.0,
        },
        Sourcing::Consistent,
    ),
    band_row(
        "1.8–2 GHz",
        1800.0,
        2000.0,
        Office,
        30.0,
        FloorLoss::Linear {
            first_db: 15.0,
            per_extra_db: 4.0,
        },
        Sourcing::Consistent,
    ),
    band_row(
        "1.8–2 GHz",
        1800.0,
        2000.0,
        Commercial,
        22.0,
        FloorLoss::Linear {
            first_db: 6.0,
            per_extra_db: 3.0,
        },
        Sourcing::Consistent,
    ),
    band_row(
        "2.4 GHz",
        2400.0,
        2400.0,
        Office,
        30.0,
        FloorLoss::NotTabulated,
        Sourcing::SingleSource,
    ),
    band_row(
        "5.2 GHz",
        5200.0,
        5200.0,
        Office,
        31.0,
        FloorLoss::NotTabulated,
        Sourcing::SingleSource,
    ),
];

/// Lowest tabulated frequency, MHz.
pub const P1238_TABLE_F_MIN_MHZ: f64 = 900.0;
/// Highest tabulated frequency, MHz.
pub const P1238_TABLE_F_MAX_MHZ: f64 = 5200.0;

/// Result of [`indoor_loss_db`].
#[derive(Debug, Clone, PartialEq)]
pub struct IndoorLoss {
    /// Path loss, dB.
    pub loss_db: f64,
    /// Every remark on how the number was obtained (band chosen, single-source rows,
    /// floor loss borrowed or clamped, range notes), as sentences for the report.
    pub notes: Vec<String>,
    /// The same range remarks in structured form.
    pub range_notes: Vec<RangeNote>,
}

/// Log-frequency distance of `freq_mhz` from a band (0 inside it).
fn band_distance(freq_mhz: f64, row: &BandRow) -> f64 {
    let lf = freq_mhz.ln();
    if freq_mhz < row.f_low_mhz {
        row.f_low_mhz.ln() - lf
    } else if freq_mhz > row.f_high_mhz {
        lf - row.f_high_mhz.ln()
    } else {
        0.0
    }
}

/// The row for `env` nearest to `freq_mhz` (ties go to the lower band), optionally
/// restricted to rows with a tabulated floor loss.
fn nearest_row(
    freq_mhz: f64,
    env: IndoorEnvironment,
    need_floor: bool,
) -> Option<&'static BandRow> {
    let mut best: Option<&'static BandRow> = None;
    for row in P1238_ROWS.iter().filter(|r| r.environment == env) {
        if need_floor && matches!(row.floor_loss, FloorLoss::NotTabulated) {
            continue;
        }
        match best {
            Some(b) if band_distance(freq_mhz, b) <= band_distance(freq_mhz, row) => {}
            _ => best = Some(row),
        }
    }
    best
}

/// Floor loss of `row` for `n` floors, plus a note when the table had to be clamped.
fn floor_loss_db(row: &BandRow, n: u32) -> (f64, Option<String>) {
    if n == 0 {
        return (0.0, None);
    }
    match row.floor_loss {
        FloorLoss::Values(values) => {
            let idx = (n as usize).min(values.len()) - 1;
            let note = (n as usize > values.len()).then(|| {
                format!(
                    "ITU-R P.1238 {} {}: floor loss is tabulated up to {} floors; the {}-floor value is used for {} floors (likely an underestimate)",
                    row.band,
                    row.environment.name(),
                    values.len(),
                    values.len(),
                    n
                )
            });
            (values[idx], note)
        }
        FloorLoss::Linear {
            first_db,
            per_extra_db,
        } => (first_db + per_extra_db * f64::from(n - 1), None),
        FloorLoss::NotTabulated => (0.0, None),
    }
}

/// Indoor path loss in dB by the P.1238 site-general model (older form),
/// `L = 20 log10 f + N log10 d + L_f(n) - 28`, f in MHz, d in metres, n floors between
/// the terminals (0 for the same floor, where `L_f = 0`).
///
/// N comes from the tabulated band nearest in log-frequency that has a row for `env`;
/// L_f from the nearest band that tabulates a floor loss for `env`. Every such choice
/// is written into [`IndoorLoss::notes`]. Frequencies outside 900–5200 MHz and
/// distances under 1 m produce range notes (the model is referenced at 1 m).
///
/// Errors: `freq_mhz` or `distance_m` not finite and positive, or `n_floors > 0` for an
/// environment with no floor loss in any band (commercial 900 MHz has none, but
/// 1.8–2 GHz does, so in practice every environment has one).
pub fn indoor_loss_db(
    freq_mhz: f64,
    distance_m: f64,
    n_floors: u32,
    env: IndoorEnvironment,
) -> Result<IndoorLoss, PhysicsError> {
    check_positive("frequency (MHz)", freq_mhz)?;
    check_positive("distance (m)", distance_m)?;
    let mut notes = Vec::new();
    let mut range_notes = Vec::new();
    if let Some(note) = check_range(
        "ITU-R P.1238 site-general tables",
        "frequency",
        freq_mhz,
        P1238_TABLE_F_MIN_MHZ,
        P1238_TABLE_F_MAX_MHZ,
        "MHz",
    ) {
        range_notes.push(note);
    }
    if let Some(note) = check_range(
        "ITU-R P.1238 site-general model",
        "distance",
        distance_m,
        1.0,
        f64::INFINITY,
        "m",
    ) {
        range_notes.push(note);
    }
    let row = nearest_row(freq_mhz, env, false).ok_or(PhysicsError::Invalid {
        quantity: "frequency (MHz)",
        value: freq_mhz,
        requirement: "has no P.1238 table row for this environment",
    })?;
    notes.push(format!(
        "ITU-R P.1238: used the {} {} row (N = {}) for {} MHz",
        row.band,
        env.name(),
        row.n_coefficient,
        crate::validity::fmt_number(freq_mhz)
    ));
    if row.sourcing == Sourcing::SingleSource {
        notes.push(format!(
            "ITU-R P.1238 {} {}: N = {} rests on a single source",
            row.band,
            env.name(),
            row.n_coefficient
        ));
    }
    let mut lf_db = 0.0;
    if n_floors > 0 {
        let floor_row = nearest_row(freq_mhz, env, true).ok_or(PhysicsError::Invalid {
            quantity: "number of floors",
            value: f64::from(n_floors),
            requirement: "needs a floor loss, which P.1238 does not tabulate for this environment",
        })?;
        if floor_row.band != row.band {
            notes.push(format!(
                "ITU-R P.1238: no floor loss for {} at {}; used the {} floor loss",
                env.name(),
                row.band,
                floor_row.band
            ));
        }
        let (value, clamp_note) = floor_loss_db(floor_row, n_floors);
        lf_db = value;
        notes.extend(clamp_note);
    }
    notes.extend(range_notes.iter().map(RangeNote::message));
    let loss_db = 20.0 * freq_mhz.log10() + row.n_coefficient * distance_m.log10() + lf_db - 28.0;
    Ok(IndoorLoss {
        loss_db,
        notes,
        range_notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn office_900_mhz() {
        // 900 MHz office, N = 33, L_f = 9/19/24 dB (ITU-R P.1238 older site-general
        // tables, consistent). 20 m, 1 floor: 20 log 900 + 33 log 20 + 9 - 28 (computed).
        let l = indoor_loss_db(900.0, 20.0, 1, Office).unwrap();
        let expected = 20.0 * 900f64.log10() + 33.0 * 20f64.log10() + 9.0 - 28.0;
        assert_abs_diff_eq!(l.loss_db, expected, epsilon = 1e-9);
        assert_abs_diff_eq!(l.loss_db, 83.019, epsilon = 1e-3);
        assert!(l.range_notes.is_empty());
        let three = indoor_loss_db(900.0, 20.0, 3, Office).unwrap();
        assert_abs_diff_eq!(three.loss_db - l.loss_db, 15.0, epsilon = 1e-9);
        let five = indoor_loss_db(900.0, 20.0, 5, Office).unwrap();
        assert_abs_diff_eq!(five.loss_db, three.loss_db, epsilon = 1e-9);
        assert!(five.notes.iter().any(|n| n.contains("up to 3 floors")));
    }

    #[test]
    fn band_1800_2000() {
        // 1.8–2 GHz: residential N 28, L_f 4n; office N 30, L_f 15 + 4(n-1); commercial
        // N 22, L_f 6 + 3(n-1) (ITU-R P.1238 older tables, consistent).
        let base = 20.0 * 1900f64.log10() - 28.0;
        let r = indoor_loss_db(1900.0, 10.0, 2, Residential).unwrap();
        assert_abs_diff_eq!(r.loss_db, base + 28.0 + 8.0, epsilon = 1e-9);
        let o = indoor_loss_db(1900.0, 10.0, 2, Office).unwrap();
        assert_abs_diff_eq!(o.loss_db, base + 30.0 + 19.0, epsilon = 1e-9);
        let c = indoor_loss_db(1900.0, 10.0, 3, Commercial).unwrap();
        assert_abs_diff_eq!(c.loss_db, base + 22.0 + 12.0, epsilon = 1e-9);
        let same_floor = indoor_loss_db(1900.0, 1.0, 0, Office).unwrap();
        assert_abs_diff_eq!(same_floor.loss_db, base, epsilon = 1e-9);
    }

    #[test]
    fn nearest_band_is_chosen_and_named() {
        // 2.4 GHz office uses its own single-source row (N = 30, ITU-R P.1238, single
        // source); the floor loss is borrowed from 1.8–2 GHz and the notes say so.
        let l = indoor_loss_db(2450.0, 10.0, 1, Office).unwrap();
        assert_abs_diff_eq!(
            l.loss_db,
            20.0 * 2450f64.log10() + 30.0 + 15.0 - 28.0,
            epsilon = 1e-9
        );
        assert!(l.notes.iter().any(|n| n.contains("2.4 GHz office")));
        assert!(l.notes.iter().any(|n| n.contains("single source")));
        assert!(l
            .notes
            .iter()
            .any(|n| n.contains("used the 1.8–2 GHz floor loss")));
        // 5.8 GHz office -> 5.2 GHz row, outside the tabulated span -> range note.
        let l = indoor_loss_db(5800.0, 10.0, 0, Office).unwrap();
        assert!(l.notes.iter().any(|n| n.contains("5.2 GHz office")));
        assert_eq!(l.range_notes.len(), 1);
        // Residential at 900 MHz has no row: the 1.8–2 GHz one is used.
        let l = indoor_loss_db(900.0, 10.0, 0, Residential).unwrap();
        assert!(l.notes.iter().any(|n| n.contains("1.8–2 GHz residential")));
        // Commercial at 900 MHz with floors borrows the 1.8–2 GHz floor loss.
        let l = indoor_loss_db(900.0, 10.0, 1, Commercial).unwrap();
        assert_abs_diff_eq!(
            l.loss_db,
            20.0 * 900f64.log10() + 20.0 + 6.0 - 28.0,
            epsilon = 1e-9
        );
    }

    #[test]
    fn nonsense_is_rejected() {
        assert!(indoor_loss_db(0.0, 10.0, 0, Office).is_err());
        assert!(indoor_loss_db(900.0, -1.0, 0, Office).is_err());
        assert!(indoor_loss_db(f64::NAN, 10.0, 0, Office).is_err());
        let close = indoor_loss_db(900.0, 0.5, 0, Office).unwrap();
        assert_eq!(close.range_notes.len(), 1);
    }
}
