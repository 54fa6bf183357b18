//! Free-space loss (ITU-R P.525-4) and conversions between power, field strength and
//! power density.
//!
//! The constants are derived from c = 299 792 458 m/s exactly, not the rounded
//! 32.4 dB printed in P.525 (the two differ by 0.048 dB).

use crate::error::{check_positive, PhysicsError};
use crate::validity::{check_range, RangeNote};

/// Speed of light in vacuum, exact by the SI definition of the metre.
pub const SPEED_OF_LIGHT_M_PER_S: f64 = 299_792_458.0;

/// Impedance of free space in ohm, mu0 * c with the CODATA 2018 mu0
/// (376.730 313 668 ohm; the commonly quoted 376.73 ohm differs by 4e-6 dB here).
pub const FREE_SPACE_IMPEDANCE_OHM: f64 = 376.730_313_668;

/// Wavelength in metres for a frequency in MHz. The caller guarantees `freq_mhz > 0`
/// (0 gives infinity, a negative frequency a negative wavelength).
pub fn wavelength_m(freq_mhz: f64) -> f64 {
    SPEED_OF_LIGHT_M_PER_S / (freq_mhz * 1e6)
}

/// Free-space basic transmission loss between isotropic antennas,
/// L = 20 log10(4 pi d / lambda) (ITU-R P.525-4, eq. for a point-to-point link).
///
/// The caller guarantees `freq_mhz > 0` and `distance_m > 0`. The formula is the
/// far-field one: for distances under about a wavelength it gives small or negative
/// losses that mean nothing, and 0 m gives negative infinity. It is not clamped here
/// so that callers see the problem; use [`fspl_checked_db`] to get an error instead.
pub fn fspl_db(freq_mhz: f64, distance_m: f64) -> f64 {
    20.0 * (4.0 * std::f64::consts::PI * distance_m / wavelength_m(freq_mhz)).log10()
}

/// [`fspl_db`] with its inputs checked: both must be finite and strictly positive.
pub fn fspl_checked_db(freq_mhz: f64, distance_m: f64) -> Result<f64, PhysicsError> {
    check_positive("frequency (MHz)", freq_mhz)?;
    check_positive("distance (m)", distance_m)?;
    Ok(fspl_db(freq_mhz, distance_m))
}

/// `Some` when `distance_m` is under one wavelength, where the far-field formula of
/// [`fspl_db`] no longer describes the coupling between antennas (common practice:
/// the far field starts at a few wavelengths for small antennas).
pub fn fspl_range_note(freq_mhz: f64, distance_m: f64) -> Option<RangeNote> {
    check_range(
        "ITU-R P.525-4 free space (far field)",
        "distance",
        distance_m,
        wavelength_m(freq_mhz),
        f64::INFINITY,
        "m",
    )
}

/// The constant K in E(dBuV/m) = P(dBm) + 20 log10 f(MHz) + K for an isotropic
/// receiving antenna: K = 10 log10(4 pi eta0) + 210 - 20 log10(c) = 77.2159... dB
/// (derived from P = S lambda^2 / (4 pi), S = E^2 / eta0).
pub fn isotropic_field_constant_db() -> f64 {
    10.0 * (4.0 * std::f64::consts::PI * FREE_SPACE_IMPEDANCE_OHM).log10() + 210.0
        - 20.0 * SPEED_OF_LIGHT_M_PER_S.log10()
}

/// Field strength in dBuV/m that delivers `p_dbm` into an isotropic receiving antenna
/// at `freq_mhz`. The caller guarantees `freq_mhz > 0`.
pub fn dbm_to_dbuv_per_m(p_dbm: f64, freq_mhz: f64) -> f64 {
    p_dbm + 20.0 * freq_mhz.log10() + isotropic_field_constant_db()
}

/// Power in dBm received by an isotropic antenna in a field of `e_dbuv_per_m` at
/// `freq_mhz`; the inverse of [`dbm_to_dbuv_per_m`]. The caller guarantees `freq_mhz > 0`.
pub fn dbuv_per_m_to_dbm(e_dbuv_per_m: f64, freq_mhz: f64) -> f64 {
    e_dbuv_per_m - 20.0 * freq_mhz.log10() - isotropic_field_constant_db()
}

/// Far-field power density S = EIRP / (4 pi r^2) in W/m^2.
/// The caller guarantees `distance_m > 0` (0 gives infinity).
pub fn power_density_w_per_m2(eirp_w: f64, distance_m: f64) -> f64 {
    eirp_w / (4.0 * std::f64::consts::PI * distance_m * distance_m)
}

/// Power density in W/m^2 of a plane wave of RMS field strength `e_v_per_m`,
/// S = E^2 / eta0.
pub fn field_to_power_density_w_per_m2(e_v_per_m: f64) -> f64 {
    e_v_per_m * e_v_per_m / FREE_SPACE_IMPEDANCE_OHM
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn p525_check_values() {
        // 915 MHz, 10 m: 51.676 dB (computed from ITU-R P.525-4 with exact c).
        assert_abs_diff_eq!(fspl_db(915.0, 10.0), 51.676, epsilon = 5e-4);
        // 2.4 GHz, 1 m: 40.052 dB (computed from ITU-R P.525-4 with exact c).
        assert_abs_diff_eq!(fspl_db(2400.0, 1.0), 40.052, epsilon = 5e-4);
        // 1 GHz, 1 km: 92.4478 dB (computed; the same value appears in the test suite of
        // a general-purpose radio-astronomy spectrum library).
        assert_abs_diff_eq!(fspl_db(1000.0, 1000.0), 92.4478, epsilon = 5e-5);
    }

    #[test]
    fn p525_exact_constant_is_32_4478() {
        // L = 32.4478 + 20 log f(MHz) + 20 log d(km): exact constant (computed from
        // ITU-R P.525-4 eq. with c = 299 792 458 m/s; P.525 prints the rounded 32.4).
        for &(f, d_km) in &[(100.0, 0.01), (900.0, 0.3), (5800.0, 2.0), (28_000.0, 0.05)] {
            let expected = 32.4478 + 20.0 * f64::log10(f) + 20.0 * f64::log10(d_km);
            assert_abs_diff_eq!(fspl_db(f, d_km * 1000.0), expected, epsilon = 1e-4);
        }
    }

    #[test]
    fn loss_grows_6_db_per_doubling() {
        // 20 log10(2) = 6.0206 dB per doubling of distance or frequency (computed).
        let d = fspl_db(2400.0, 20.0) - fspl_db(2400.0, 10.0);
        assert_abs_diff_eq!(d, 6.0206, epsilon = 1e-4);
        let f = fspl_db(1800.0, 10.0) - fspl_db(900.0, 10.0);
        assert_abs_diff_eq!(f, 6.0206, epsilon = 1e-4);
    }

    #[test]
    fn wavelength_values() {
        // lambda = c / f (computed): 900 MHz -> 0.333103 m, 2.4 GHz -> 0.124914 m.
        assert_abs_diff_eq!(wavelength_m(900.0), 0.333_102_731, epsilon = 1e-9);
        assert_abs_diff_eq!(wavelength_m(2400.0), 0.124_913_524, epsilon = 1e-9);
    }

    #[test]
    fn field_strength_conversion() {
        // 0 dBm at 100 MHz -> 117.216 dBuV/m (computed from eta0 = 376.73 ohm; the
        // rounded textbook constant is 77.2).
        assert_abs_diff_eq!(isotropic_field_constant_db(), 77.2159, epsilon = 1e-4);
        assert_abs_diff_eq!(dbm_to_dbuv_per_m(0.0, 100.0), 117.216, epsilon = 5e-4);
        assert_abs_diff_eq!(dbuv_per_m_to_dbm(117.216, 100.0), 0.0, epsilon = 5e-4);
        for &(p, f) in &[(-95.0, 800.0), (10.0, 2400.0), (-30.0, 150.0)] {
            assert_abs_diff_eq!(
                dbuv_per_m_to_dbm(dbm_to_dbuv_per_m(p, f), f),
                p,
                epsilon = 1e-12
            );
        }
    }

    #[test]
    fn field_strength_is_consistent_with_power_density() {
        // S = EIRP/(4 pi r^2), E = sqrt(S eta0), P = S lambda^2/(4 pi) must agree with
        // the dBuV/m conversion (computed, derivation consistency).
        let (eirp_w, r_m, f_mhz) = (1.0, 10.0, 900.0);
        let s = power_density_w_per_m2(eirp_w, r_m);
        let e_v_per_m = (s * FREE_SPACE_IMPEDANCE_OHM).sqrt();
        let e_dbuv = 20.0 * (e_v_per_m * 1e6).log10();
        let lambda = wavelength_m(f_mhz);
        let p_w = s * lambda * lambda / (4.0 * std::f64::consts::PI);
        let p_dbm = 10.0 * (p_w * 1000.0).log10();
        assert_abs_diff_eq!(dbm_to_dbuv_per_m(p_dbm, f_mhz), e_dbuv, epsilon = 1e-9);
        assert_abs_diff_eq!(
            field_to_power_density_w_per_m2(e_v_per_m),
            s,
            epsilon = 1e-15
        );
        // And the received power equals EIRP - FSPL (computed).
        assert_abs_diff_eq!(p_dbm, 30.0 - fspl_db(f_mhz, r_m), epsilon = 1e-9);
    }

    #[test]
    fn checked_variant_rejects_nonsense() {
        assert!(fspl_checked_db(900.0, 0.0).is_err());
        assert!(fspl_checked_db(-1.0, 10.0).is_err());
        assert!(fspl_checked_db(f64::NAN, 10.0).is_err());
        assert!(fspl_checked_db(900.0, 10.0).is_ok());
        assert!(fspl_range_note(900.0, 0.1).is_some());
        assert!(fspl_range_note(900.0, 1.0).is_none());
    }
}
