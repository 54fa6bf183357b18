//! Antenna gain patterns.
//!
//! [`ElementPattern`] is the sector antenna element of 3GPP TR 38.901 v17, Table 7.3-1
//! (confirmed). [`omni_ceiling_gain_dbi`] is a simple omnidirectional shape for
//! ceiling-mounted indoor antennas, documented as our choice.
//!
//! Angles: `theta_deg` is the zenith angle (0 = straight up, 90 = horizon,
//! 180 = straight down), `phi_deg` the azimuth measured from boresight.

/// The 3GPP TR 38.901 v17 Table 7.3-1 antenna element.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ElementPattern {
    /// Vertical half-power beamwidth, degrees.
    pub theta_3db_deg: f64,
    /// Horizontal half-power beamwidth, degrees.
    pub phi_3db_deg: f64,
    /// Side-lobe level limit of the vertical cut, dB (positive number).
    pub sla_v_db: f64,
    /// Front-to-back ratio / overall attenuation limit, dB (positive number).
    pub a_max_db: f64,
    /// Maximum directional gain, dBi.
    pub g_max_dbi: f64,
}

impl Default for ElementPattern {
    /// The Table 7.3-1 values: 65°, 65°, SLA_V 30 dB, A_max 30 dB, 8 dBi.
    fn default() -> Self {
        ElementPattern {
            theta_3db_deg: 65.0,
            phi_3db_deg: 65.0,
            sla_v_db: 30.0,
            a_max_db: 30.0,
            g_max_dbi: 8.0,
        }
    }
}

/// Wraps an azimuth into (-180, 180].
fn wrap_deg(phi_deg: f64) -> f64 {
    let w = (phi_deg + 180.0).rem_euclid(360.0) - 180.0;
    if w == -180.0 {
        180.0
    } else {
        w
    }
}

impl ElementPattern {
    /// Gain in dBi towards zenith angle `theta_deg` and azimuth `phi_deg` (TR 38.901
    /// Table 7.3-1): `A_V = -min(12 ((theta-90)/theta_3dB)^2, SLA_V)`,
    /// `A_H = -min(12 (phi/phi_3dB)^2, A_max)`, `A = -min(-(A_V + A_H), A_max)`,
    /// `G = G_max + A`. Azimuths are wrapped into ±180°. A NaN angle gives the
    /// clipped (worst) attenuation.
    pub fn gain_dbi(&self, theta_deg: f64, phi_deg: f64) -> f64 {
        let phi = wrap_deg(phi_deg);
        let a_v = -(12.0 * ((theta_deg - 90.0) / self.theta_3db_deg).powi(2)).min(self.sla_v_db);
        let a_h = -(12.0 * (phi / self.phi_3db_deg).powi(2)).min(self.a_max_db);
        let a = -(-(a_v + a_h)).min(self.a_max_db);
        self.g_max_dbi + a
    }
}

/// How far below the peak the nulls of [`omni_ceiling_gain_dbi`] are filled, dB
/// (our choice, not from a source).
pub const OMNI_NULL_FILL_DB: f64 = 20.0;

/// Gain in dBi of an omnidirectional (azimuth-independent) antenna of peak gain
/// `peak_gain_dbi`, towards zenith angle `theta_deg`.
///
/// The elevation shape is that of a half-wave dipole with its axis vertical,
/// `|cos(pi/2 cos theta) / sin theta|`, peak at the horizon (common practice for an
/// omnidirectional antenna). Real ceiling antennas fill the dipole's nulls above and
/// below; we floor the pattern at [`OMNI_NULL_FILL_DB`] below the peak (our choice).
/// Use [`omni_gain_with_fill_dbi`] to choose the fill.
pub fn omni_ceiling_gain_dbi(peak_gain_dbi: f64, theta_deg: f64) -> f64 {
    omni_gain_with_fill_dbi(peak_gain_dbi, theta_deg, OMNI_NULL_FILL_DB)
}

/// [`omni_ceiling_gain_dbi`] with the null fill `fill_below_peak_db` (a positive
/// number of dB below the peak) chosen by the caller.
pub fn omni_gain_with_fill_dbi(peak_gain_dbi: f64, theta_deg: f64, fill_below_peak_db: f64) -> f64 {
    let t = theta_deg.to_radians();
    let s = t.sin().abs();
    let shape_db = if s < 1e-9 {
        f64::NEG_INFINITY
    } else {
        20.0 * ((std::f64::consts::FRAC_PI_2 * t.cos()).cos() / s)
            .abs()
            .log10()
    };
    peak_gain_dbi + shape_db.max(-fill_below_peak_db.abs())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn tr38901_element() {
        // 3GPP TR 38.901 v17 Table 7.3-1: G = 8 dBi at boresight.
        let p = ElementPattern::default();
        assert_abs_diff_eq!(p.gain_dbi(90.0, 0.0), 8.0, epsilon = 1e-12);
        // phi = 32.5 deg = phi_3dB / 2: 12 * 0.25 = 3 dB down -> 5 dBi (computed).
        assert_abs_diff_eq!(p.gain_dbi(90.0, 32.5), 5.0, epsilon = 1e-12);
        assert_abs_diff_eq!(p.gain_dbi(90.0 + 32.5, 0.0), 5.0, epsilon = 1e-12);
        // Large angles clip at G_max - A_max = 8 - 30 = -22 dBi (Table 7.3-1).
        assert_abs_diff_eq!(p.gain_dbi(90.0, 180.0), -22.0, epsilon = 1e-12);
        assert_abs_diff_eq!(p.gain_dbi(0.0, 120.0), -22.0, epsilon = 1e-12);
        assert_abs_diff_eq!(p.gain_dbi(90.0, 360.0), 8.0, epsilon = 1e-12);
        assert_abs_diff_eq!(p.gain_dbi(90.0, -32.5), 5.0, epsilon = 1e-12);
        assert!(p.gain_dbi(f64::NAN, 0.0).is_finite());
    }

    #[test]
    fn omni_shape() {
        // Dipole-like: peak at the horizon, about 3 dB down near 51 deg from the axis
        // (half-wave dipole HPBW 78 deg, textbook; common practice), floor 20 dB down.
        assert_abs_diff_eq!(omni_ceiling_gain_dbi(2.0, 90.0), 2.0, epsilon = 1e-12);
        let g = omni_ceiling_gain_dbi(2.0, 90.0 + 39.0);
        assert_abs_diff_eq!(g, -1.0, epsilon = 0.1);
        assert_abs_diff_eq!(omni_ceiling_gain_dbi(2.0, 180.0), -18.0, epsilon = 1e-12);
        assert_abs_diff_eq!(omni_ceiling_gain_dbi(2.0, 0.0), -18.0, epsilon = 1e-12);
        assert_abs_diff_eq!(
            omni_gain_with_fill_dbi(2.0, 180.0, 10.0),
            -8.0,
            epsilon = 1e-12
        );
    }
}
