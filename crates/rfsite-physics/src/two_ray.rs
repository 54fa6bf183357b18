//! Two-ray (direct plus ground-reflected) propagation (textbook physics; common
//! practice).
//!
//! The exact two-path sum
//! `L = -20 log10( lambda/(4 pi) |e^{-jk d1}/d1 + Gamma e^{-jk d2}/d2| )`,
//! with `d1 = sqrt(d^2 + (ht - hr)^2)`, `d2 = sqrt(d^2 + (ht + hr)^2)`. Beyond the
//! breakpoint `4 ht hr / lambda` the loss grows as 40 log d.

use num_complex::Complex64;

use crate::error::{check_non_negative, check_positive, PhysicsError};
use crate::fspl::wavelength_m;
use crate::p2040::{interface_reflection, material, Polarization};
use crate::validity::RangeNote;

/// Breakpoint distance `4 ht hr / lambda` in metres. The caller guarantees positive
/// inputs.
pub fn breakpoint_distance_m(tx_height_m: f64, rx_height_m: f64, freq_mhz: f64) -> f64 {
    4.0 * tx_height_m * rx_height_m / wavelength_m(freq_mhz)
}

/// Exact two-path loss in dB between isotropic antennas over a flat reflecting ground
/// of reflection coefficient `ground_reflection` (horizontal distance `distance_m`).
///
/// The caller guarantees `freq_mhz > 0`, `distance_m > 0` and heights `>= 0`. The loss
/// is infinite where the two paths cancel exactly; use [`two_ray_checked_loss_db`] to
/// have the inputs validated.
pub fn two_ray_loss_db(
    freq_mhz: f64,
    distance_m: f64,
    tx_height_m: f64,
    rx_height_m: f64,
    ground_reflection: Complex64,
) -> f64 {
    let lambda = wavelength_m(freq_mhz);
    let k = 2.0 * std::f64::consts::PI / lambda;
    let d1 = distance_m.hypot(tx_height_m - rx_height_m);
    let d2 = distance_m.hypot(tx_height_m + rx_height_m);
    let direct = Complex64::new(0.0, -k * d1).exp() / d1;
    let reflected = ground_reflection * Complex64::new(0.0, -k * d2).exp() / d2;
    -20.0 * (lambda / (4.0 * std::f64::consts::PI) * (direct + reflected).norm()).log10()
}

/// [`two_ray_loss_db`] with its inputs checked.
pub fn two_ray_checked_loss_db(
    freq_mhz: f64,
    distance_m: f64,
    tx_height_m: f64,
    rx_height_m: f64,
    ground_reflection: Complex64,
) -> Result<f64, PhysicsError> {
    check_positive("frequency (MHz)", freq_mhz)?;
    check_positive("distance (m)", distance_m)?;
    check_non_negative("transmitter height (m)", tx_height_m)?;
    check_non_negative("receiver height (m)", rx_height_m)?;
    Ok(two_ray_loss_db(
        freq_mhz,
        distance_m,
        tx_height_m,
        rx_height_m,
        ground_reflection,
    ))
}

/// Result of [`two_ray_over_ground`].
#[derive(Debug, Clone, PartialEq)]
pub struct GroundTwoRay {
    /// Two-path loss in dB.
    pub loss_db: f64,
    /// Ground reflection coefficient used.
    pub ground_reflection: Complex64,
    /// Set when the frequency is outside the ground fit's hard 1–10 GHz limit.
    pub note: Option<RangeNote>,
}

/// Two-ray loss over ITU-R P.2040-3 medium dry ground, with the reflection coefficient
/// computed for the actual grazing angle `atan((ht + hr)/d)`. Polarisation `Te` is
/// horizontal, `Tm` vertical for a horizontal path.
pub fn two_ray_over_ground(
    freq_mhz: f64,
    distance_m: f64,
    tx_height_m: f64,
    rx_height_m: f64,
    pol: Polarization,
) -> Result<GroundTwoRay, PhysicsError> {
    check_positive("frequency (MHz)", freq_mhz)?;
    check_positive("distance (m)", distance_m)?;
    check_non_negative("transmitter height (m)", tx_height_m)?;
    check_non_negative("receiver height (m)", rx_height_m)?;
    let ground = material("medium-dry-ground").ok_or(PhysicsError::Invalid {
        quantity: "ground material",
        value: f64::NAN,
        requirement: "is missing from the P.2040 table",
    })?;
    let freq_ghz = freq_mhz / 1000.0;
    let grazing_rad = (tx_height_m + rx_height_m).atan2(distance_m);
    let theta_rad = std::f64::consts::FRAC_PI_2 - grazing_rad;
    let gamma = interface_reflection(ground.complex_permittivity(freq_ghz), theta_rad, pol);
    Ok(GroundTwoRay {
        loss_db: two_ray_loss_db(freq_mhz, distance_m, tx_height_m, rx_height_m, gamma),
        ground_reflection: gamma,
        note: ground.range_note(freq_ghz),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fspl::fspl_db;
    use approx::assert_abs_diff_eq;

    #[test]
    fn breakpoint() {
        // 4 ht hr / lambda: 2 m and 1.5 m at 2.4 GHz -> 96.066 m (computed).
        assert_abs_diff_eq!(
            breakpoint_distance_m(2.0, 1.5, 2400.0),
            96.0665,
            epsilon = 1e-3
        );
    }

    #[test]
    fn no_reflection_is_free_space() {
        // Gamma = 0 leaves the direct path only: FSPL over d1 (computed).
        let l = two_ray_loss_db(2400.0, 30.0, 3.0, 1.0, Complex64::new(0.0, 0.0));
        assert_abs_diff_eq!(l, fspl_db(2400.0, 30.0f64.hypot(2.0)), epsilon = 1e-9);
    }

    #[test]
    fn far_beyond_breakpoint_is_40_log_d() {
        // With Gamma = -1 and d >> breakpoint, L -> 40 log d - 20 log(ht hr)
        // (textbook plane-earth loss; common practice).
        let (ht, hr) = (10.0, 2.0);
        let d = 50.0 * breakpoint_distance_m(ht, hr, 900.0);
        let l = two_ray_loss_db(900.0, d, ht, hr, Complex64::new(-1.0, 0.0));
        let plane_earth = 40.0 * d.log10() - 20.0 * (ht * hr).log10();
        assert_abs_diff_eq!(l, plane_earth, epsilon = 0.01);
    }

    #[test]
    fn ground_convenience() {
        // Near grazing the ground reflects almost fully with a sign flip (P.2040-3 §2
        // formulas, computed); 900 MHz is outside the ground's hard 1–10 GHz limit.
        let r = two_ray_over_ground(2400.0, 500.0, 10.0, 1.5, Polarization::Te).unwrap();
        assert!(r.note.is_none());
        assert!(r.ground_reflection.re < -0.9);
        let r = two_ray_over_ground(900.0, 50.0, 10.0, 1.5, Polarization::Tm).unwrap();
        assert!(r.note.is_some());
        assert!(two_ray_over_ground(900.0, -5.0, 10.0, 1.5, Polarization::Tm).is_err());
        assert!(two_ray_checked_loss_db(900.0, 5.0, -1.0, 1.5, Complex64::new(-1.0, 0.0)).is_err());
    }
}
