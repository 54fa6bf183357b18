//! Linear least squares for calibration: the bounded optimum by bounded-variable least
//! squares ([`crate::bvls`], Stark & Parker 1995), and parameter standard errors from
//! sigma^2 (X_F^T X_F)^-1 over the fitted (free) parameters, from a pivoted QR of their
//! columns ([`crate::qr`]).

use crate::bvls::{bvls, BvlsError, VarState};
use crate::qr::Qr;

/// The result of a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct Fit {
    /// Parameters.
    pub beta: Vec<f64>,
    /// Standard errors (NaN for a parameter that is not fitted: at a bound, uninformed or
    /// dependent).
    pub se: Vec<f64>,
    /// Where each parameter ended.
    pub state: Vec<VarState>,
    /// Whether each parameter ended held at a bound.
    pub at_bound: Vec<bool>,
    /// Residual sum of squares.
    pub rss: f64,
    /// Degrees of freedom: observations - fitted parameters.
    pub dof: usize,
    /// Residual standard deviation estimate, sqrt(rss / dof) (NaN when dof = 0).
    pub sigma: f64,
    /// Free subproblems the bounded solver solved.
    pub steps: usize,
}

/// Unbounded least squares of `y ~ X beta` (rows of `x`).
pub fn lstsq(x: &[Vec<f64>], y: &[f64]) -> Result<Fit, BvlsError> {
    let p = x.first().map(|r| r.len()).unwrap_or(0);
    bounded_lstsq(x, y, &vec![f64::NEG_INFINITY; p], &vec![f64::INFINITY; p])
}

/// Least squares with `lo <= beta <= hi` (the bounded optimum), with standard errors of
/// the fitted parameters.
pub fn bounded_lstsq(x: &[Vec<f64>], y: &[f64], lo: &[f64], hi: &[f64]) -> Result<Fit, BvlsError> {
    let s = bvls(x, y, lo, hi)?;
    let fitted: Vec<usize> = (0..lo.len())
        .filter(|&j| s.state[j] == VarState::Free)
        .collect();
    let dof = y.len().saturating_sub(fitted.len());
    let sigma2 = if dof > 0 {
        s.rss / dof as f64
    } else {
        f64::NAN
    };
    let cols = fitted
        .iter()
        .map(|&j| x.iter().map(|r| r[j]).collect())
        .collect();
    let qr = Qr::new(cols, vec![0.0; y.len()]);
    let mut se = vec![f64::NAN; lo.len()];
    for (&j, g) in fitted.iter().zip(qr.inverse_gram_diag()) {
        se[j] = (sigma2 * g).sqrt();
    }
    Ok(Fit {
        at_bound: s
            .state
            .iter()
            .map(|st| matches!(st, VarState::AtLower | VarState::AtUpper))
            .collect(),
        beta: s.x,
        se,
        state: s.state,
        rss: s.rss,
        dof,
        sigma: sigma2.sqrt(),
        steps: s.steps,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn line_through_points_by_hand() {
        // y = 1 + 2x exactly at x = 0, 1, 2, 3 (hand arithmetic): beta = (1, 2), rss = 0.
        let x: Vec<Vec<f64>> = (0..4).map(|i| vec![1.0, i as f64]).collect();
        let y: Vec<f64> = (0..4).map(|i| 1.0 + 2.0 * i as f64).collect();
        let f = lstsq(&x, &y).unwrap();
        assert!((f.beta[0] - 1.0).abs() < 1e-12 && (f.beta[1] - 2.0).abs() < 1e-12);
        assert!(f.rss < 1e-20);
        // Bounded slope <= 1.5: held at 1.5, intercept refitted to mean(y - 1.5 x) = 1.75.
        let f = bounded_lstsq(&x, &y, &[-10.0, -10.0], &[10.0, 1.5]).unwrap();
        assert_eq!(f.beta[1], 1.5);
        assert!(f.at_bound[1] && !f.at_bound[0]);
        assert!((f.beta[0] - 1.75).abs() < 1e-12);
        assert!(f.se[1].is_nan());
    }

    #[test]
    fn collinear_design_fits_one_and_names_the_other() {
        // Column 1 = 2 x column 0: only their combination is known. The first is fitted,
        // the second reported dependent with no standard error; the fit is exact (y = x0).
        let x = vec![vec![1.0, 2.0], vec![2.0, 4.0], vec![3.0, 6.0]];
        let f = lstsq(&x, &[1.0, 2.0, 3.0]).unwrap();
        assert_eq!(f.state, vec![VarState::Free, VarState::Dependent]);
        assert!(f.se[0].is_finite() && f.se[1].is_nan());
        assert!((f.beta[0] - 1.0).abs() < 1e-12 && f.beta[1] == 0.0 && f.rss < 1e-20);
        assert_eq!(f.dof, 2);
    }
}
