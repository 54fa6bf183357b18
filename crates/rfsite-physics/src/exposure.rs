//! RF exposure limits for the whole body, as power density, and the far-field
//! compliance distance.
//!
//! FCC 47 CFR 1.1310 Table 1 (limits for maximum permissible exposure), given there in
//! mW/cm² and returned here in W/m² (1 mW/cm² = 10 W/m²). The 300 MHz–100 GHz rows are
//! confirmed; the 0.3–300 MHz rows are from memory.
//! ICNIRP 2020 guidelines, whole-body reference levels averaged over 30 minutes
//! (Table 5; the table number is from memory), 30 MHz–300 GHz (consistent).

use crate::error::{check_positive, PhysicsError};

/// A set of exposure limits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ExposureLimit {
    /// FCC general population / uncontrolled exposure.
    FccGeneral,
    /// FCC occupational / controlled exposure.
    FccOccupational,
    /// ICNIRP 2020 general public.
    IcnirpGeneral,
    /// ICNIRP 2020 occupational.
    IcnirpOccupational,
}

/// All limit sets, in a fixed order.
pub const ALL_EXPOSURE_LIMITS: [ExposureLimit; 4] = [
    ExposureLimit::FccGeneral,
    ExposureLimit::FccOccupational,
    ExposureLimit::IcnirpGeneral,
    ExposureLimit::IcnirpOccupational,
];

impl ExposureLimit {
    /// Kebab-case id used in project files: `"fcc-general"`, `"fcc-occupational"`,
    /// `"icnirp-general"`, `"icnirp-occupational"`.
    pub fn id(&self) -> &'static str {
        match self {
            ExposureLimit::FccGeneral => "fcc-general",
            ExposureLimit::FccOccupational => "fcc-occupational",
            ExposureLimit::IcnirpGeneral => "icnirp-general",
            ExposureLimit::IcnirpOccupational => "icnirp-occupational",
        }
    }

    /// Inverse of [`ExposureLimit::id`].
    pub fn from_id(s: &str) -> Option<Self> {
        ALL_EXPOSURE_LIMITS.into_iter().find(|l| l.id() == s)
    }

    /// The document the limits come from, for the report.
    pub fn source(&self) -> &'static str {
        match self {
            ExposureLimit::FccGeneral => {
                "FCC 47 CFR 1.1310 Table 1, limits for general population/uncontrolled exposure"
            }
            ExposureLimit::FccOccupational => {
                "FCC 47 CFR 1.1310 Table 1, limits for occupational/controlled exposure"
            }
            ExposureLimit::IcnirpGeneral => {
                "ICNIRP Guidelines for limiting exposure to electromagnetic fields (100 kHz to 300 GHz), 2020: general public, whole body"
            }
            ExposureLimit::IcnirpOccupational => {
                "ICNIRP Guidelines for limiting exposure to electromagnetic fields (100 kHz to 300 GHz), 2020: occupational, whole body"
            }
        }
    }

    /// Frequency span (MHz) over which [`limit_w_per_m2`] has a power-density value.
    pub fn span_mhz(&self) -> (f64, f64) {
        match self {
            ExposureLimit::FccGeneral | ExposureLimit::FccOccupational => (0.3, 100_000.0),
            ExposureLimit::IcnirpGeneral | ExposureLimit::IcnirpOccupational => (30.0, 300_000.0),
        }
    }
}

/// FCC general population, mW/cm².
fn fcc_general_mw_per_cm2(f: f64) -> f64 {
    if f < 1.34 {
        100.0
    } else if f < 30.0 {
        180.0 / (f * f)
    } else if f < 300.0 {
        0.2
    } else if f < 1500.0 {
        f / 1500.0
    } else {
        1.0
    }
}

/// FCC occupational, mW/cm².
fn fcc_occupational_mw_per_cm2(f: f64) -> f64 {
    if f < 3.0 {
        100.0
    } else if f < 30.0 {
        900.0 / (f * f)
    } else if f < 300.0 {
        1.0
    } else if f < 1500.0 {
        f / 300.0
    } else {
        5.0
    }
}

/// ICNIRP 2020 general public, W/m².
fn icnirp_general_w_per_m2(f: f64) -> f64 {
    if f < 400.0 {
        2.0
    } else if f < 2000.0 {
        f / 200.0
    } else {
        10.0
    }
}

/// Whole-body power-density limit in W/m² at `freq_mhz`.
///
/// Errors: a frequency that is not finite and positive, or outside the table's span
/// ([`ExposureLimit::span_mhz`]: FCC 0.3 MHz–100 GHz, ICNIRP 30 MHz–300 GHz; below 30 MHz
/// ICNIRP gives field-strength limits only).
pub fn limit_w_per_m2(limit: ExposureLimit, freq_mhz: f64) -> Result<f64, PhysicsError> {
    check_positive("frequency (MHz)", freq_mhz)?;
    let (min, max) = limit.span_mhz();
    if freq_mhz < min || freq_mhz > max {
        return Err(PhysicsError::OutsideTable {
            table: limit.source(),
            quantity: "frequency",
            value: freq_mhz,
            min,
            max,
            unit: "MHz",
        });
    }
    Ok(match limit {
        ExposureLimit::FccGeneral => 10.0 * fcc_general_mw_per_cm2(freq_mhz),
        ExposureLimit::FccOccupational => 10.0 * fcc_occupational_mw_per_cm2(freq_mhz),
        ExposureLimit::IcnirpGeneral => icnirp_general_w_per_m2(freq_mhz),
        ExposureLimit::IcnirpOccupational => 5.0 * icnirp_general_w_per_m2(freq_mhz),
    })
}

/// Far-field distance at which the power density of `eirp_w` falls to
/// `limit_w_per_m2`: `sqrt(EIRP / (4 pi S))` in metres.
///
/// The caller guarantees `eirp_w >= 0` and `limit_w_per_m2 > 0` (a negative EIRP gives
/// NaN, a zero limit infinity). Near-field effects are not modelled; multiply the EIRP
/// by [`GROUND_REFLECTION_FACTOR`] for a worst-case in-phase ground reflection.
pub fn compliance_distance_m(eirp_w: f64, limit_w_per_m2: f64) -> f64 {
    (eirp_w / (4.0 * std::f64::consts::PI * limit_w_per_m2)).sqrt()
}

/// Wavelengths within which the far-field power-density formula is not used: 3 λ
/// (common practice; the reactive and radiating near field of a small antenna lies well
/// inside this).
pub const NEAR_FIELD_WAVELENGTHS: f64 = 3.0;

/// The distance below which the far-field formula of [`compliance_distance_m`] does not
/// hold: the larger of the Fraunhofer distance 2 D²/λ for an antenna whose largest
/// dimension is `largest_dimension_m` (IEEE Std 145, far-field region; from memory) and
/// [`NEAR_FIELD_WAVELENGTHS`] wavelengths. `None` for the dimension takes only the
/// wavelength rule, as for the small indoor antennas a site describes.
pub fn far_field_min_distance_m(freq_mhz: f64, largest_dimension_m: Option<f64>) -> f64 {
    let lambda = crate::fspl::SPEED_OF_LIGHT_M_PER_S / (freq_mhz * 1e6);
    let fraunhofer = largest_dimension_m.map_or(0.0, |d| 2.0 * d * d / lambda);
    fraunhofer.max(NEAR_FIELD_WAVELENGTHS * lambda)
}

/// Power-density factor 2.56 = 1.6² for a reflection adding 60 % to the field, as the
/// FCC OET Bulletin 65 applies for ground reflections (from memory).
pub const GROUND_REFLECTION_FACTOR: f64 = 2.56;

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn far_field_limit_is_three_wavelengths_or_fraunhofer() {
        // λ at 700 MHz = 299 792 458 / 7e8 = 0.428 m; 3 λ = 1.285 m.
        assert_abs_diff_eq!(
            far_field_min_distance_m(700.0, None),
            1.2848,
            epsilon = 1e-4
        );
        // A 1 m donor antenna at 700 MHz: 2 D²/λ = 2 / 0.42827 = 4.670 m (IEEE Std 145).
        assert_abs_diff_eq!(
            far_field_min_distance_m(700.0, Some(1.0)),
            4.6699,
            epsilon = 1e-4
        );
    }

    #[test]
    fn fcc_values() {
        // FCC 47 CFR 1.1310 Table 1: general population f/1500 mW/cm² at 300–1500 MHz,
        // 1.0 mW/cm² at 1.5–100 GHz; occupational f/300 and 5.
        assert_abs_diff_eq!(
            limit_w_per_m2(ExposureLimit::FccGeneral, 900.0).unwrap(),
            6.0,
            epsilon = 1e-12
        );
        assert_abs_diff_eq!(
            limit_w_per_m2(ExposureLimit::FccGeneral, 2000.0).unwrap(),
            10.0,
            epsilon = 1e-12
        );
        assert_abs_diff_eq!(
            limit_w_per_m2(ExposureLimit::FccOccupational, 900.0).unwrap(),
            30.0,
            epsilon = 1e-12
        );
        assert_abs_diff_eq!(
            limit_w_per_m2(ExposureLimit::FccOccupational, 2000.0).unwrap(),
            50.0,
            epsilon = 1e-12
        );
        // Continuity at the 1500 MHz row boundary (computed from Table 1).
        assert_abs_diff_eq!(
            limit_w_per_m2(ExposureLimit::FccGeneral, 1499.999).unwrap(),
            10.0,
            epsilon = 1e-4
        );
        // 30–300 MHz rows: 0.2 and 1.0 mW/cm² (47 CFR 1.1310 Table 1, from memory).
        assert_abs_diff_eq!(
            limit_w_per_m2(ExposureLimit::FccGeneral, 150.0).unwrap(),
            2.0,
            epsilon = 1e-12
        );
        assert_abs_diff_eq!(
            limit_w_per_m2(ExposureLimit::FccOccupational, 150.0).unwrap(),
            10.0,
            epsilon = 1e-12
        );
    }

    #[test]
    fn icnirp_values() {
        // ICNIRP 2020 general public: 400–2000 MHz f/200 W/m² -> 4.5 W/m² at 900 MHz;
        // 2 W/m² at 30–400 MHz; 10 W/m² at 2–300 GHz; occupational five times these.
        assert_abs_diff_eq!(
            limit_w_per_m2(ExposureLimit::IcnirpGeneral, 900.0).unwrap(),
            4.5,
            epsilon = 1e-12
        );
        assert_abs_diff_eq!(
            limit_w_per_m2(ExposureLimit::IcnirpGeneral, 150.0).unwrap(),
            2.0,
            epsilon = 1e-12
        );
        assert_abs_diff_eq!(
            limit_w_per_m2(ExposureLimit::IcnirpGeneral, 5000.0).unwrap(),
            10.0,
            epsilon = 1e-12
        );
        for f in [100.0, 900.0, 2400.0, 28_000.0] {
            let g = limit_w_per_m2(ExposureLimit::IcnirpGeneral, f).unwrap();
            let o = limit_w_per_m2(ExposureLimit::IcnirpOccupational, f).unwrap();
            assert_abs_diff_eq!(o, 5.0 * g, epsilon = 1e-12);
        }
    }

    #[test]
    fn outside_the_tables_is_an_error() {
        assert!(limit_w_per_m2(ExposureLimit::IcnirpGeneral, 10.0).is_err());
        assert!(limit_w_per_m2(ExposureLimit::FccGeneral, 200_000.0).is_err());
        assert!(limit_w_per_m2(ExposureLimit::FccGeneral, -5.0).is_err());
        assert!(limit_w_per_m2(ExposureLimit::FccGeneral, f64::NAN).is_err());
    }

    #[test]
    fn ids_round_trip() {
        for l in ALL_EXPOSURE_LIMITS {
            assert_eq!(ExposureLimit::from_id(l.id()), Some(l));
            assert!(!l.source().is_empty());
        }
        assert_eq!(
            ExposureLimit::from_id("fcc-general"),
            Some(ExposureLimit::FccGeneral)
        );
        assert_eq!(ExposureLimit::from_id("FCC"), None);
    }

    #[test]
    fn compliance_distance_example() {
        // 100 W EIRP at 900 MHz, FCC general 6 W/m²: sqrt(100/(4 pi 6)) = 1.1516 m
        // (computed).
        let s = limit_w_per_m2(ExposureLimit::FccGeneral, 900.0).unwrap();
        let r = compliance_distance_m(100.0, s);
        assert_abs_diff_eq!(r, 1.151_647, epsilon = 1e-6);
        assert_abs_diff_eq!(
            crate::fspl::power_density_w_per_m2(100.0, r),
            s,
            epsilon = 1e-12
        );
        // With the ground-reflection factor the distance grows by 1.6 (computed).
        let rg = compliance_distance_m(100.0 * GROUND_REFLECTION_FACTOR, s);
        assert_abs_diff_eq!(rg / r, 1.6, epsilon = 1e-12);
    }
}
