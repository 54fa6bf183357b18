//! Receiver noise floor: thermal noise kTB at the standard reference temperature plus
//! the receiver's noise figure.
//!
//! N = 10 log10(k T0 B / 1 mW) + NF, with k = 1.380 649e-23 J/K (SI, exact) and
//! T0 = 290 K (the reference temperature of noise figure, IEEE Std 100 / ITU-R P.372);
//! 10 log10(k T0 / 1 mW per Hz) = -173.98 dBm/Hz, the textbook -174 dBm/Hz.

use crate::error::{check_non_negative, check_positive, PhysicsError};

/// Boltzmann constant, J/K (exact in the 2019 SI).
pub const BOLTZMANN_J_PER_K: f64 = 1.380_649e-23;

/// Reference temperature for noise figures, K.
pub const T0_K: f64 = 290.0;

/// Thermal noise density kT0, dBm/Hz (-173.975...).
pub fn thermal_noise_density_dbm_per_hz() -> f64 {
    10.0 * (BOLTZMANN_J_PER_K * T0_K / 1e-3).log10()
}

/// Noise floor over `bandwidth_hz` of a receiver with noise figure `noise_figure_db`, dBm.
pub fn noise_floor_dbm(bandwidth_hz: f64, noise_figure_db: f64) -> Result<f64, PhysicsError> {
    check_positive("bandwidth_hz", bandwidth_hz)?;
    check_non_negative("noise figure (dB)", noise_figure_db)?;
    Ok(thermal_noise_density_dbm_per_hz() + 10.0 * bandwidth_hz.log10() + noise_figure_db)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Textbook value: kT at 290 K is -174 dBm/Hz (REFERENCES.md, distribution and
    /// boosters: N = -174 dBm/Hz + 10 log10 B); the exact SI constants give -173.975.
    #[test]
    fn kt_is_minus_174_dbm_per_hz() {
        let n = thermal_noise_density_dbm_per_hz();
        assert!((n - -173.975).abs() < 5e-4, "{n}");
        assert!((n - -174.0).abs() < 0.03);
    }

    /// Hand calculation from the formula: 1 MHz, NF 0 dB: -173.975 + 60 = -113.975 dBm;
    /// 12.5 kHz, NF 7 dB: -173.975 + 40.969 + 7 = -126.006 dBm.
    #[test]
    fn noise_floor_over_a_bandwidth() {
        assert!((noise_floor_dbm(1e6, 0.0).unwrap() - -113.975).abs() < 5e-4);
        assert!((noise_floor_dbm(12.5e3, 7.0).unwrap() - -126.006).abs() < 5e-4);
        assert!(noise_floor_dbm(0.0, 7.0).is_err());
        assert!(noise_floor_dbm(1e3, f64::NAN).is_err());
    }
}
