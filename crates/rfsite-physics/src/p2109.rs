//! Building entry loss — ITU-R P.2109-2.
//!
//! The statistical model of the loss from outside a building to a point just inside
//! it, for traditional and thermally efficient (metallised-glass, foil-backed
//! insulation) buildings. f in GHz (fitted 0.08–100 GHz), P the probability that the
//! loss is not exceeded, theta the elevation angle of the path at the facade.
//! Editions -0 to -2 share the coefficients (confirmed).

use crate::error::{check_finite, check_positive, check_probability, PhysicsError};
use crate::stats::norm_inv;
use crate::validity::{check_range, RangeNote};

/// Building class of ITU-R P.2109-2.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BuildingType {
    /// Traditional construction, no metallised glass or foil-backed panels.
    Traditional,
    /// Thermally efficient: metallised glazing, foil-backed insulation.
    ThermallyEfficient,
}

/// The nine coefficients r, s, t, u, v, w, x, y, z of one building class.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BelCoefficients {
    /// r in `L_h = r + s log f + t (log f)^2`.
    pub r: f64,
    /// s.
    pub s: f64,
    /// t.
    pub t: f64,
    /// u in `sigma1 = u + v log f`.
    pub u: f64,
    /// v.
    pub v: f64,
    /// w in `mu2 = w + x log f`.
    pub w: f64,
    /// x.
    pub x: f64,
    /// y in `sigma2 = y + z log f`.
    pub y: f64,
    /// z.
    pub z: f64,
}

/// Lowest frequency of the P.2109 fit, GHz.
pub const BEL_F_MIN_GHZ: f64 = 0.08;
/// Highest frequency of the P.2109 fit, GHz.
pub const BEL_F_MAX_GHZ: f64 = 100.0;

impl BuildingType {
    /// Coefficients from ITU-R P.2109-2 Table 1 (confirmed).
    pub fn coefficients(&self) -> BelCoefficients {
        match self {
            BuildingType::Traditional => BelCoefficients {
                r: 12.64,
                s: 3.72,
                t: 0.96,
                u: 9.6,
                v: 2.0,
                w: 9.1,
                x: -3.0,
                y: 4.5,
                z: -2.0,
            },
            BuildingType::ThermallyEfficient => BelCoefficients {
                r: 28.19,
                s: -3.00,
                t: 8.48,
                u: 13.5,
                v: 3.8,
                w: 27.8,
                x: -2.9,
                y: 9.4,
                z: -2.1,
            },
        }
    }
}

/// `Some` when `freq_ghz` is outside the 0.08–100 GHz range P.2109-2 was fitted over.
pub fn bel_range_note(freq_ghz: f64) -> Option<RangeNote> {
    check_range(
        "ITU-R P.2109-2 building entry loss",
        "frequency",
        freq_ghz,
        BEL_F_MIN_GHZ,
        BEL_F_MAX_GHZ,
        "GHz",
    )
}

/// Building entry loss in dB not exceeded with `probability` (ITU-R P.2109-2 §3):
///
/// `L_h = r + s log f + t (log f)^2`, `L_e = 0.212 |theta|`, `mu1 = L_h + L_e`,
/// `mu2 = w + x log f`, `sigma1 = u + v log f`, `sigma2 = y + z log f`,
/// `A = F^-1(P) sigma1 + mu1`, `B = F^-1(P) sigma2 + mu2`, `C = -3`,
/// `L = 10 log10(10^(0.1A) + 10^(0.1B) + 10^(0.1C))`.
///
/// Errors: `probability` not strictly inside (0, 1); `freq_ghz` not a positive finite
/// number; `elevation_deg` not finite or beyond ±90°. A frequency outside 0.08–100 GHz
/// is still computed (extrapolated); ask [`bel_range_note`] for the note.
pub fn building_entry_loss_db(
    freq_ghz: f64,
    probability: f64,
    elevation_deg: f64,
    building: BuildingType,
) -> Result<f64, PhysicsError> {
    check_positive("frequency (GHz)", freq_ghz)?;
    check_probability(probability)?;
    check_finite("elevation angle (deg)", elevation_deg)?;
    if elevation_deg.abs() > 90.0 {
        return Err(PhysicsError::Invalid {
            quantity: "elevation angle (deg)",
            value: elevation_deg,
            requirement: "must be between -90 and 90",
        });
    }
    let k = building.coefficients();
    let lf = freq_ghz.log10();
    let l_h = k.r + k.s * lf + k.t * lf * lf;
    let l_e = 0.212 * elevation_deg.abs();
    let mu1 = l_h + l_e;
    let mu2 = k.w + k.x * lf;
    let sigma1 = k.u + k.v * lf;
    let sigma2 = k.y + k.z * lf;
    let f_inv = norm_inv(probability)?;
    let a = f_inv * sigma1 + mu1;
    let b = f_inv * sigma2 + mu2;
    let c = -3.0_f64;
    Ok(10.0 * (10f64.powf(0.1 * a) + 10f64.powf(0.1 * b) + 10f64.powf(0.1 * c)).log10())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn medians_horizontal() {
        // Median (P = 0.5), horizontal path (computed from ITU-R P.2109-2 Table 1;
        // values in REFERENCES.md): traditional / thermally efficient.
        let cases = [
            (0.9, 14.24, 31.16),
            (2.4, 15.19, 30.57),
            (5.0, 16.31, 31.57),
        ];
        for (f, trad, therm) in cases {
            let t = building_entry_loss_db(f, 0.5, 0.0, BuildingType::Traditional).unwrap();
            let e = building_entry_loss_db(f, 0.5, 0.0, BuildingType::ThermallyEfficient).unwrap();
            assert_abs_diff_eq!(t, trad, epsilon = 0.005);
            assert_abs_diff_eq!(e, therm, epsilon = 0.005);
        }
    }

    #[test]
    fn elevation_adds_loss_and_probability_orders() {
        // L_e = 0.212 |theta| raises mu1 (ITU-R P.2109-2); the loss grows with P (computed).
        let flat = building_entry_loss_db(2.4, 0.5, 0.0, BuildingType::Traditional).unwrap();
        let up = building_entry_loss_db(2.4, 0.5, 30.0, BuildingType::Traditional).unwrap();
        let down = building_entry_loss_db(2.4, 0.5, -30.0, BuildingType::Traditional).unwrap();
        assert!(up > flat);
        assert_eq!(up, down);
        let mut last = f64::NEG_INFINITY;
        for p in [0.01, 0.1, 0.5, 0.9, 0.99] {
            let l = building_entry_loss_db(2.4, p, 0.0, BuildingType::ThermallyEfficient).unwrap();
            assert!(l > last);
            last = l;
        }
    }

    #[test]
    fn nonsense_is_rejected_and_range_is_noted() {
        for p in [0.0, 1.0, 1.2, f64::NAN] {
            assert!(building_entry_loss_db(2.4, p, 0.0, BuildingType::Traditional).is_err());
        }
        assert!(building_entry_loss_db(0.0, 0.5, 0.0, BuildingType::Traditional).is_err());
        assert!(building_entry_loss_db(2.4, 0.5, 95.0, BuildingType::Traditional).is_err());
        assert!(bel_range_note(0.05).is_some());
        assert!(bel_range_note(0.08).is_none());
        assert!(bel_range_note(150.0).is_some());
        // Outside the range it still computes.
        assert!(building_entry_loss_db(0.05, 0.5, 0.0, BuildingType::Traditional).is_ok());
    }
}
