//! Normal-distribution helpers and log-normal shadowing statistics.
//!
//! The error function and its complement come from `libm` (the Rust project's port of the
//! musl / FreeBSD msun `erf` and `erfc`); the standard normal tail and CDF are
//! `erfc(x / sqrt 2) / 2` on them; the normal quantile is `statrs`'
//! `Normal::inverse_cdf` (`-sqrt 2 erfc^{-1}(2p)`, the Boost rational approximations).
//! Measured against mpmath 1.3 at 50 digits over |x| <= 6 and p from 1e-12 to 1 - 1e-3
//! (computed, issue 17): `libm` erf 2.1e-16, erfc 5.3e-15 and Q 8.0e-15
//! worst relative error, where the series and continued fraction this file used to hold
//! reached 8.2e-16, 1.4e-12 and 1.0e-12, and `statrs` 0.19.1's own `erf`/`erfc` 9.5e-11
//! and 1.0e-10 (its interval constants carry ten digits), which is why the tail is not
//! taken from `statrs`. Only the scaled complement `e^{x^2} erfc(x)` in the far tail,
//! which neither crate offers, is evaluated here, by its continued fraction.

use std::f64::consts::{PI, SQRT_2};

use statrs::distribution::{ContinuousCDF, Normal};

use crate::error::{check_finite, check_positive, check_probability, PhysicsError};

/// `e^{x^2} erfc(x)` for `x >= 2.5` by the continued fraction
/// `erfc(x) = e^{-x^2}/sqrt(pi) * 1/(x + (1/2)/(x + 1/(x + (3/2)/(x + ...))))`,
/// evaluated with the modified Lentz method.
fn erfcx_cf(x: f64) -> f64 {
    let tiny = 1e-300;
    let mut f = x;
    let mut c = x;
    let mut d = 0.0;
    for n in 1..200 {
        let a = n as f64 / 2.0;
        d = x + a * d;
        if d.abs() < tiny {
            d = tiny;
        }
        c = x + a / c;
        if c.abs() < tiny {
            c = tiny;
        }
        d = 1.0 / d;
        let delta = c * d;
        f *= delta;
        if (delta - 1.0).abs() < 1e-16 {
            break;
        }
    }
    1.0 / (f * PI.sqrt())
}

/// The error function (`libm`). NaN in gives NaN out.
pub fn erf(x: f64) -> f64 {
    libm::erf(x)
}

/// The complementary error function `1 - erf(x)`, accurate in the tails (`libm`).
pub fn erfc(x: f64) -> f64 {
    libm::erfc(x)
}

/// Scaled complementary error function `e^{x^2} erfc(x)`, for `x >= 0` without
/// overflow (used by [`area_coverage_fraction`]).
fn erfcx(x: f64) -> f64 {
    if x >= 2.5 {
        erfcx_cf(x)
    } else {
        (x * x).exp() * erfc(x)
    }
}

/// Standard normal tail `Q(x) = P(Z > x) = erfc(x / sqrt 2) / 2`.
pub fn q(x: f64) -> f64 {
    0.5 * erfc(x / SQRT_2)
}

/// Standard normal cumulative distribution `Phi(x) = 1 - Q(x)`.
pub fn norm_cdf(x: f64) -> f64 {
    q(-x)
}

/// Inverse standard normal cumulative distribution, `Phi^{-1}(p)` for p in (0, 1)
/// (`statrs`: `-sqrt 2 erfc^{-1}(2p)`).
pub fn norm_inv(p: f64) -> Result<f64, PhysicsError> {
    check_probability(p)?;
    Ok(Normal::standard().inverse_cdf(p))
}

/// Inverse of [`q`]: the x with `Q(x) = p`, for p in (0, 1).
pub fn q_inv(p: f64) -> Result<f64, PhysicsError> {
    check_probability(p)?;
    // Q^{-1}(p) = -Phi^{-1}(p); computing it as Phi^{-1}(p) negated keeps precision
    // for small p, where 1 - p would lose digits.
    Ok(-norm_inv(p)?)
}

/// Probability that a log-normally shadowed level with median `mean_dbm` and standard
/// deviation `sigma_db` reaches at least `threshold_dbm`:
/// `Q((threshold - mean) / sigma)` (common practice).
///
/// `sigma_db = 0` is treated as no shadowing (1 if the mean reaches the threshold,
/// else 0); a negative sigma is taken by its magnitude. NaN in gives NaN out.
pub fn location_probability(threshold_dbm: f64, mean_dbm: f64, sigma_db: f64) -> f64 {
    let sigma = sigma_db.abs();
    if sigma == 0.0 {
        if mean_dbm.is_nan() || threshold_dbm.is_nan() {
            return f64::NAN;
        }
        return if mean_dbm >= threshold_dbm { 1.0 } else { 0.0 };
    }
    q((threshold_dbm - mean_dbm) / sigma)
}

/// Fraction of a circular cell's area where the level reaches the threshold, given
/// the probability `edge_probability` of reaching it at the cell edge, log-normal
/// shadowing of `sigma_db` and a path-loss exponent `exponent` (Jakes 1974, *Microwave
/// Mobile Communications*, §2.3, after Reudink):
///
/// `F_u = 1/2 {1 - erf(a) + exp((1 - 2ab)/b^2) [1 - erf((1 - ab)/b)]}`,
/// `a = (x0 - mean_edge)/(sigma sqrt 2)`, `b = 10 n log10(e)/(sigma sqrt 2)`.
///
/// Here `a = Q^{-1}(edge_probability)/sqrt 2`. The second term is evaluated as
/// `exp(-a^2) erfcx((1 - ab)/b)` where that is positive, so large `b` or `a` neither
/// overflows nor loses digits.
pub fn area_coverage_fraction(
    sigma_db: f64,
    exponent: f64,
    edge_probability: f64,
) -> Result<f64, PhysicsError> {
    check_positive("shadowing sigma (dB)", sigma_db)?;
    check_positive("path-loss exponent", exponent)?;
    let a = q_inv(edge_probability)? / SQRT_2;
    let b = 10.0 * exponent * std::f64::consts::LOG10_E / (sigma_db * SQRT_2);
    let y = (1.0 - a * b) / b;
    let second = if y > 0.0 {
        (-a * a).exp() * erfcx(y)
    } else {
        ((1.0 - 2.0 * a * b) / (b * b)).exp() * erfc(y)
    };
    Ok((0.5 * (erfc(a) + second)).clamp(0.0, 1.0))
}

/// Shadowing margin in dB: how far the median level must exceed the threshold for
/// the threshold to be reached with `probability` at a point, `sigma Phi^{-1}(p)`
/// (common practice). Negative for probabilities below 0.5.
pub fn margin_for_probability_db(sigma_db: f64, probability: f64) -> Result<f64, PhysicsError> {
    check_finite("shadowing sigma (dB)", sigma_db)?;
    if sigma_db < 0.0 {
        return Err(PhysicsError::Invalid {
            quantity: "shadowing sigma (dB)",
            value: sigma_db,
            requirement: "must not be negative",
        });
    }
    Ok(sigma_db * norm_inv(probability)?)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::{assert_abs_diff_eq, assert_relative_eq};

    #[test]
    fn erf_reference_values() {
        // erf(0.5), erf(1), erf(2) to 10 digits (scipy.special.erf, computed; they agree
        // with Abramowitz & Stegun 1964 Table 7.1 from memory).
        assert_abs_diff_eq!(erf(0.5), 0.520_499_877_8, epsilon = 1e-10);
        assert_abs_diff_eq!(erf(1.0), 0.842_700_792_9, epsilon = 1e-10);
        assert_abs_diff_eq!(erf(2.0), 0.995_322_265_0, epsilon = 1e-10);
        assert_abs_diff_eq!(erf(-1.0), -0.842_700_792_9, epsilon = 1e-10);
        assert_eq!(erf(0.0), 0.0);
        // erfc(3) = 2.209049699858544e-05, erfc(5) = 1.5374597944280349e-12
        // (scipy.special.erfc, computed).
        assert_relative_eq!(erfc(3.0), 2.209_049_699_858_544e-5, max_relative = 1e-13);
        assert_relative_eq!(erfc(5.0), 1.537_459_794_428_035e-12, max_relative = 1e-13);
        assert_relative_eq!(erfc(2.4999), 1.0 - erf(2.4999), max_relative = 1e-12);
        assert_relative_eq!(
            erfc(-3.0),
            2.0 - 2.209_049_699_858_544e-5,
            max_relative = 1e-15
        );
        assert_eq!(erfc(40.0), 0.0);
        assert!(erf(f64::NAN).is_nan());
    }

    #[test]
    fn q_reference_values() {
        // Q(0) = 0.5 (definition); Q(1.2816) ~ 0.1 (standard normal table, common practice).
        assert_eq!(q(0.0), 0.5);
        assert_abs_diff_eq!(q(1.2816), 0.1, epsilon = 1e-4);
        // Q(1.959963984540054) = 0.025 (scipy.stats.norm.isf(0.025), computed).
        assert_abs_diff_eq!(q(1.959_963_984_540_054), 0.025, epsilon = 1e-15);
        // Q(6) = 9.865876450376946e-10 (scipy.stats.norm.sf(6), computed).
        assert_relative_eq!(q(6.0), 9.865_876_450_376_946e-10, max_relative = 1e-12);
    }

    #[test]
    fn inverse_normal_reference_values() {
        // scipy.stats.norm.ppf values (computed): 0.9 -> 1.2815515655446004,
        // 0.99 -> 2.3263478740408408, 1e-6 -> -4.753424308822899.
        assert_abs_diff_eq!(
            norm_inv(0.9).unwrap(),
            1.281_551_565_544_600_4,
            epsilon = 1e-13
        );
        assert_abs_diff_eq!(
            norm_inv(0.99).unwrap(),
            2.326_347_874_040_840_8,
            epsilon = 1e-13
        );
        assert_abs_diff_eq!(
            norm_inv(1e-6).unwrap(),
            -4.753_424_308_822_899,
            epsilon = 1e-12
        );
        assert_eq!(norm_inv(0.5).unwrap(), 0.0);
        assert_abs_diff_eq!(
            q_inv(0.1).unwrap(),
            1.281_551_565_544_600_4,
            epsilon = 1e-13
        );
    }

    #[test]
    fn q_inv_round_trips() {
        // q(q_inv(p)) = p (computed).
        for &p in &[
            1e-12,
            1e-6,
            0.001,
            0.02425,
            0.1,
            0.3,
            0.5,
            0.7,
            0.9,
            0.97575,
            0.999,
            1.0 - 1e-9,
        ] {
            let x = q_inv(p).unwrap();
            assert_relative_eq!(q(x), p, max_relative = 1e-10);
            assert_relative_eq!(norm_cdf(norm_inv(p).unwrap()), p, max_relative = 1e-10);
        }
    }

    #[test]
    fn probabilities_outside_0_1_are_errors() {
        for p in [0.0, 1.0, -0.1, 1.2, f64::NAN, f64::INFINITY] {
            assert!(q_inv(p).is_err());
            assert!(norm_inv(p).is_err());
            assert!(margin_for_probability_db(8.0, p).is_err());
            assert!(area_coverage_fraction(8.0, 3.5, p).is_err());
        }
        assert_eq!(
            norm_inv(1.2).unwrap_err().to_string(),
            "probability 1.2 is outside 0..1"
        );
    }

    #[test]
    fn location_probability_and_margin() {
        // Mean 10 dB above threshold with sigma 8 dB: Q(-1.25) = 0.894350 (computed).
        assert_abs_diff_eq!(
            location_probability(-95.0, -85.0, 8.0),
            0.894_350_2,
            epsilon = 1e-6
        );
        assert_eq!(location_probability(-95.0, -95.0, 8.0), 0.5);
        assert_eq!(location_probability(-95.0, -90.0, 0.0), 1.0);
        assert_eq!(location_probability(-95.0, -99.0, 0.0), 0.0);
        // 90 % with sigma 8 dB: 8 * 1.28155 = 10.2524 dB (computed).
        assert_abs_diff_eq!(
            margin_for_probability_db(8.0, 0.9).unwrap(),
            10.252_41,
            epsilon = 1e-5
        );
        let m = margin_for_probability_db(6.0, 0.95).unwrap();
        assert_abs_diff_eq!(
            location_probability(-95.0, -95.0 + m, 6.0),
            0.95,
            epsilon = 1e-12
        );
        assert!(margin_for_probability_db(-1.0, 0.9).is_err());
    }

    #[test]
    fn area_fraction_limits() {
        // sigma 8 dB, n 3.5, edge 50 %: "about 0.77" of the area (from memory of Jakes'
        // figure); the scipy integration fixture in tests/ gives 0.7545 and is the check.
        let f = area_coverage_fraction(8.0, 3.5, 0.5).unwrap();
        assert!((0.74..0.79).contains(&f), "{f}");
        // The area fraction always exceeds the edge probability (computed).
        for pe in [0.3, 0.5, 0.75, 0.9, 0.99] {
            assert!(area_coverage_fraction(8.0, 3.5, pe).unwrap() > pe);
        }
        // Extreme inputs stay finite and inside [0, 1] (computed).
        for &(s, n, pe) in &[(0.01, 2.0, 0.5), (100.0, 1.0, 0.999_999), (20.0, 6.0, 1e-9)] {
            let f = area_coverage_fraction(s, n, pe).unwrap();
            assert!(
                f.is_finite() && (0.0..=1.0).contains(&f),
                "{s} {n} {pe} -> {f}"
            );
        }
        assert!(area_coverage_fraction(0.0, 3.5, 0.5).is_err());
        assert!(area_coverage_fraction(8.0, -1.0, 0.5).is_err());
    }
}
