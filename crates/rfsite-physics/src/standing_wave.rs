//! Standing waves in front of a reflector at normal incidence (textbook physics;
//! common practice).
//!
//! With a reflection coefficient `Gamma = |G| e^{j phi}` the total field at distance x
//! from the surface goes as `|1 + Gamma e^{-j 2 k x}|`. For metal (`Gamma = -1`) the
//! nulls are at `x = n lambda/2` (one on the surface) and the peaks at
//! `lambda/4 + n lambda/2`, where the field is doubled. A partial reflector gives
//! shallower nulls.

use std::f64::consts::PI;

use num_complex::Complex64;

use crate::fspl::wavelength_m;

/// Most positions [`nulls_m`] and [`peaks_m`] return; a request for more is cut
/// short (a million half-wavelengths is far beyond any room).
pub const MAX_POSITIONS: usize = 1_000_000;

/// Field relative to the incident one, `|1 + Gamma e^{-j 2 k x}|`, at `distance_m`
/// from the reflecting surface. The caller guarantees `freq_mhz > 0`.
pub fn relative_field(gamma: Complex64, freq_mhz: f64, distance_m: f64) -> f64 {
    let k = 2.0 * PI / wavelength_m(freq_mhz);
    let phase = Complex64::new(0.0, -2.0 * k * distance_m).exp();
    (1.0 + gamma * phase).norm()
}

/// Positions `x` in `[0, max_distance_m]` where `phase(Gamma) - 2kx` equals
/// `target_phase` modulo 2 pi.
fn positions(gamma: Complex64, freq_mhz: f64, max_distance_m: f64, target_phase: f64) -> Vec<f64> {
    let lambda = wavelength_m(freq_mhz);
    let usable = gamma.norm() > 0.0
        && gamma.is_finite()
        && lambda.is_finite()
        && lambda > 0.0
        && max_distance_m >= 0.0;
    if !usable {
        return Vec::new();
    }
    let two_pi = 2.0 * PI;
    let mut phase0 = (gamma.arg() - target_phase).rem_euclid(two_pi);
    if two_pi - phase0 < 1e-12 {
        phase0 = 0.0;
    }
    // 2kx = phase0 + 2 pi m  =>  x = phase0 lambda / (4 pi) + m lambda / 2.
    let x0 = phase0 * lambda / (4.0 * PI);
    let step = lambda / 2.0;
    let mut out = Vec::new();
    let mut m = 0usize;
    loop {
        let x = x0 + m as f64 * step;
        if x > max_distance_m * (1.0 + 1e-12) || out.len() >= MAX_POSITIONS {
            break;
        }
        out.push(x);
        m += 1;
    }
    out
}

/// Distances from the surface (0 up to `max_distance_m`) of the field minima, in
/// increasing order. Empty when `Gamma = 0` (no standing wave) or the inputs are not
/// usable (non-positive frequency, negative or NaN distance).
pub fn nulls_m(gamma: Complex64, freq_mhz: f64, max_distance_m: f64) -> Vec<f64> {
    positions(gamma, freq_mhz, max_distance_m, PI)
}

/// Distances from the surface of the field maxima, in increasing order (see [`nulls_m`]).
pub fn peaks_m(gamma: Complex64, freq_mhz: f64, max_distance_m: f64) -> Vec<f64> {
    positions(gamma, freq_mhz, max_distance_m, 0.0)
}

/// Peak-to-null ratio of the standing wave, `20 log10((1+|G|)/(1-|G|))` dB;
/// `f64::INFINITY` for `|G| >= 1`. A negative argument is taken by its magnitude.
pub fn peak_to_null_db(gamma_abs: f64) -> f64 {
    let g = gamma_abs.abs();
    if g >= 1.0 {
        f64::INFINITY
    } else {
        20.0 * ((1.0 + g) / (1.0 - g)).log10()
    }
}

/// A quarter wavelength in metres: the reflector-to-element spacing of a
/// reflector-backed antenna and the distance from a metal wall to the first peak
/// (common practice). The caller guarantees `freq_mhz > 0`.
pub fn quarter_wave_spacing_m(freq_mhz: f64) -> f64 {
    wavelength_m(freq_mhz) / 4.0
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn metal_wall_at_900_mhz() {
        // Gamma = -1: nulls at n lambda/2, peaks at lambda/4 + n lambda/2, field 2 at a
        // peak (textbook standing-wave physics; common practice).
        let lambda = wavelength_m(900.0);
        let g = Complex64::new(-1.0, 0.0);
        let nulls = nulls_m(g, 900.0, 2.0);
        let peaks = peaks_m(g, 900.0, 2.0);
        assert_eq!(nulls.len(), (2.0 / (lambda / 2.0)).floor() as usize + 1);
        for (n, x) in nulls.iter().enumerate() {
            assert_abs_diff_eq!(*x, n as f64 * lambda / 2.0, epsilon = 1e-12);
            assert_abs_diff_eq!(relative_field(g, 900.0, *x), 0.0, epsilon = 1e-9);
        }
        for (n, x) in peaks.iter().enumerate() {
            assert_abs_diff_eq!(*x, lambda / 4.0 + n as f64 * lambda / 2.0, epsilon = 1e-12);
            assert_abs_diff_eq!(relative_field(g, 900.0, *x), 2.0, epsilon = 1e-9);
        }
        assert_abs_diff_eq!(peaks[0], quarter_wave_spacing_m(900.0), epsilon = 1e-15);
        // Negative zero imaginary part must not shift the nulls by half a wavelength.
        assert_abs_diff_eq!(
            nulls_m(Complex64::new(-1.0, -0.0), 900.0, 1.0)[0],
            0.0,
            epsilon = 1e-12
        );
    }

    #[test]
    fn partial_reflector_depth() {
        // Peak-to-null ratio 20 log10((1+|G|)/(1-|G|)) (textbook; common practice):
        // |G| = 0.5 -> 9.5424 dB (computed).
        assert_abs_diff_eq!(peak_to_null_db(0.5), 9.542_425, epsilon = 1e-6);
        assert_eq!(peak_to_null_db(1.0), f64::INFINITY);
        assert_eq!(peak_to_null_db(0.0), 0.0);
        // The field pattern agrees with the formula for a complex Gamma (computed).
        let g = Complex64::from_polar(0.404, 2.0);
        let hi = relative_field(g, 2400.0, peaks_m(g, 2400.0, 1.0)[0]);
        let lo = relative_field(g, 2400.0, nulls_m(g, 2400.0, 1.0)[0]);
        assert_abs_diff_eq!(hi, 1.404, epsilon = 1e-9);
        assert_abs_diff_eq!(lo, 0.596, epsilon = 1e-9);
        assert_abs_diff_eq!(
            20.0 * (hi / lo).log10(),
            peak_to_null_db(0.404),
            epsilon = 1e-9
        );
    }

    #[test]
    fn degenerate_inputs_give_empty_lists() {
        assert!(nulls_m(Complex64::new(0.0, 0.0), 900.0, 1.0).is_empty());
        assert!(peaks_m(Complex64::new(-1.0, 0.0), 0.0, 1.0).is_empty());
        assert!(peaks_m(Complex64::new(-1.0, 0.0), 900.0, -1.0).is_empty());
        assert!(peaks_m(Complex64::new(-1.0, 0.0), 900.0, f64::NAN).is_empty());
        assert_eq!(
            nulls_m(Complex64::new(-1.0, 0.0), 900.0, 1e12).len(),
            MAX_POSITIONS
        );
    }
}
