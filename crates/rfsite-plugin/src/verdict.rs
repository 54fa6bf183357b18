//! The verdict of record: one required level per service, named by its parts, and per
//! floor the fractions, critical zones, measured failures and machine-readable reasons
//! that decide it. The grading plugin fills these; every later plugin and the report
//! read them and never grade again.

use serde::{Deserialize, Serialize};

/// The level a service is graded at, with each part under its own name.
///
/// A measured point or cell must reach `measured_dbm` = threshold + design margin; a
/// predicted point must reach `predicted_dbm` = `measured_dbm` + shadowing margin, the
/// shadowing margin being `sigma Phi^-1(p)` for the location probability `p`.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq, Default)]
pub struct RequiredLevel {
    /// The acceptance threshold, dBm (from the rule set).
    pub threshold_dbm: f64,
    /// Where the threshold comes from.
    #[serde(default)]
    pub threshold_source: String,
    /// The design margin, dB: the site's own value for the service.
    pub design_margin_db: f64,
    /// Log-normal shadowing spread in force, dB.
    pub shadowing_sigma_db: f64,
    /// Location probability the shadowing margin is taken for, 0..1.
    pub location_probability: f64,
    /// Shadowing margin `sigma Phi^-1(p)`, dB.
    pub shadowing_margin_db: f64,
    /// Required level of a measured point or cell: threshold + design margin, dBm.
    pub measured_dbm: f64,
    /// Required level of a predicted point: threshold + design margin + shadowing margin, dBm.
    pub predicted_dbm: f64,
}

impl RequiredLevel {
    /// Builds the level from its parts.
    pub fn new(
        threshold_dbm: f64,
        design_margin_db: f64,
        shadowing_sigma_db: f64,
        location_probability: f64,
        shadowing_margin_db: f64,
    ) -> Self {
        let measured_dbm = threshold_dbm + design_margin_db;
        RequiredLevel {
            threshold_dbm,
            threshold_source: String::new(),
            design_margin_db,
            shadowing_sigma_db,
            location_probability,
            shadowing_margin_db,
            measured_dbm,
            predicted_dbm: measured_dbm + shadowing_margin_db,
        }
    }
}

/// One failed acceptance criterion, machine-readable.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Reason {
    /// `general-cells`, `critical-cells`, `general-area`, `critical-area`,
    /// `critical-zone-area`, `critical-zone-cells`, `failed-cells`, `adjacent-failed-cells`,
    /// `measured-critical`, `no-coverage`.
    pub criterion: String,
    /// Critical zone id, when the criterion is about one zone.
    #[serde(default)]
    pub zone: Option<String>,
    /// The value found (a fraction 0..1, or a count).
    pub value: f64,
    /// The value required (a fraction, or the count tolerated).
    pub target: f64,
    /// The same in words, for the report.
    pub text: String,
}

/// One critical zone graded by itself.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct ZoneResult {
    /// Zone id.
    pub id: String,
    /// Zone name.
    pub name: String,
    /// Fraction of the zone's predicted points at or above the predicted required level.
    pub area_fraction: Option<f64>,
    /// Area-weighted fraction of the zone's own cells (the floor's test cells clipped to
    /// the zone) that pass, judged as the rule judges cells.
    pub cell_fraction: Option<f64>,
    /// The zone's own cells.
    pub cells: usize,
    /// Measured points in the zone.
    pub measured_points: usize,
    /// Measured points in the zone below the measured required level.
    pub measured_failures: usize,
    /// Whether the zone meets the critical target on every test.
    pub pass: bool,
}

/// A measured point below the required level.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct MeasuredFailure {
    /// Survey file, as the site names it.
    pub file: String,
    /// 1-based line in it.
    pub line: usize,
    /// Plan position, m.
    pub position_m: [f64; 2],
    /// Zone id (empty: general area outside every zone).
    pub zone: String,
    /// `general` or `critical`.
    pub zone_kind: String,
    /// Measured level, dBm.
    pub measured_dbm: f64,
    /// Predicted level of the graded model at the nearest grid point, dBm.
    pub predicted_dbm: Option<f64>,
    /// Required level it misses, dBm.
    pub required_dbm: f64,
}

/// A level for print: one decimal, or "below -N dBm (no service)" when it lies below the
/// receiver's noise floor (a number there could not be seen by any receiver).
pub fn level_text(dbm: f64, receiver_floor_dbm: Option<f64>) -> String {
    match receiver_floor_dbm {
        Some(f) if dbm.is_nan() || dbm < f => format!("below {f:.1} dBm (no service)"),
        _ if !dbm.is_finite() => "no signal".into(),
        _ => format!("{dbm:.1} dBm"),
    }
}

impl RequiredLevel {
    /// The predicted required level with its parts, in words, e.g. "-82.3 dBm (threshold
    /// -95.0 dBm + design margin 5.0 dB + shadowing margin 7.7 dB for 90 % at sigma 6.0 dB)".
    pub fn predicted_text(&self) -> String {
        format!(
            "{:.1} dBm (threshold {:.1} dBm + design margin {:.1} dB + shadowing margin {:.1} dB for {:.0} % location probability at sigma {:.1} dB)",
            self.predicted_dbm,
            self.threshold_dbm,
            self.design_margin_db,
            self.shadowing_margin_db,
            100.0 * self.location_probability,
            self.shadowing_sigma_db
        )
    }
    /// The measured required level with its parts, in words.
    pub fn measured_text(&self) -> String {
        format!(
            "{:.1} dBm (threshold {:.1} dBm + design margin {:.1} dB)",
            self.measured_dbm, self.threshold_dbm, self.design_margin_db
        )
    }
}

/// A level for a table column already headed "dBm": the number with one decimal, or
/// "below -N (no service)" under the receiver floor.
pub fn level_cell(dbm: f64, receiver_floor_dbm: Option<f64>) -> String {
    match receiver_floor_dbm {
        Some(f) if dbm.is_nan() || dbm < f => format!("below {f:.1} (no service)"),
        _ if !dbm.is_finite() => "no signal".into(),
        _ => format!("{dbm:.1}"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn levels_below_the_receiver_floor_are_not_numbers() {
        assert_eq!(
            level_text(-170.9, Some(-126.0)),
            "below -126.0 dBm (no service)"
        );
        assert_eq!(
            level_text(f64::NEG_INFINITY, Some(-126.0)),
            "below -126.0 dBm (no service)"
        );
        assert_eq!(level_text(-90.04, Some(-126.0)), "-90.0 dBm");
        assert_eq!(level_text(f64::NAN, None), "no signal");
    }

    /// The required level is threshold + design margin (+ shadowing margin on a
    /// prediction): sigma 6 dB at p = 0.9 gives 6 x 1.281552 = 7.689 dB (inverse normal,
    /// Abramowitz & Stegun table 26.5: z(0.90) = 1.281552).
    #[test]
    fn required_level_adds_its_parts() {
        let r = RequiredLevel::new(-95.0, 5.0, 6.0, 0.9, 6.0 * 1.281_551_565_5);
        assert!((r.measured_dbm - -90.0).abs() < 1e-12);
        assert!((r.predicted_dbm - -82.310_690_6).abs() < 1e-6);
        assert!(r.predicted_text().starts_with(
            "-82.3 dBm (threshold -95.0 dBm + design margin 5.0 dB + shadowing margin 7.7 dB"
        ));
    }
}

/// One line of an uplink budget: a gain (+) or a loss (−) on the way from the handset to
/// the network receiver, or a level.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct BudgetLine {
    /// What it is.
    pub label: String,
    /// dB (a gain or a loss) or dBm (a level), as `unit` says.
    pub value: f64,
    /// `dB` or `dBm`.
    pub unit: String,
    /// Where the figure comes from.
    #[serde(default)]
    pub source: String,
}

/// How a service's uplink was judged: the handset's path to the network, the noise a
/// booster adds there, and the shift from the downlink margin to the uplink margin.
///
/// At a point served by in-building antennas, the uplink reaching the head end is
/// DL − P_ant + P_hs + G_hs − Δf (reciprocity: the same path at the uplink frequency, Δf
/// from ITU-R P.525), so the uplink margin is the downlink level plus `shift_db` against
/// the downlink's own required level: the same cells, zones and targets grade both.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq, Default)]
pub struct UplinkBudget {
    /// Whether the uplink could be assessed.
    pub assessed: bool,
    /// The path: `off-air booster`, `head end fed by a base station`, `direct to the
    /// serving site`, or empty when not assessed.
    pub path: String,
    /// Why it was not assessed (what data are missing), when not.
    #[serde(default)]
    pub why_not: String,
    /// The budget, handset to network receiver.
    pub lines: Vec<BudgetLine>,
    /// Uplink margin minus downlink margin at every point, dB.
    pub shift_db: f64,
    /// Rise of the serving site's noise floor from the booster, dB, when one is used.
    pub noise_rise_db: Option<f64>,
}

/// The uplink verdict of one floor.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct UplinkFloor {
    /// Whether it was assessed.
    pub assessed: bool,
    /// Pass on the uplink (false when not assessed).
    pub pass: bool,
    /// Fraction of general area whose uplink meets the required margin.
    pub general_fraction: Option<f64>,
    /// Fraction of critical area meeting it.
    pub critical_fraction: Option<f64>,
    /// Extra uplink needed so the targets would be met, dB (0 when passing).
    pub margin_needed_db: f64,
    /// The uplink's own failed criteria.
    #[serde(default)]
    pub reasons: Vec<Reason>,
}
