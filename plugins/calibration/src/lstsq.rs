//! Linear least squares by the normal equations (Cholesky), with box bounds by clamping
//! and refitting, and parameter standard errors from sigma^2 (X^T X)^-1.

/// The result of a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct Fit {
    /// Parameters.
    pub beta: Vec<f64>,
    /// Standard errors (NaN for a parameter held at a bound).
    pub se: Vec<f64>,
    /// Whether each parameter ended at a bound (held there, not fitted).
    pub at_bound: Vec<bool>,
    /// Residual sum of squares.
    pub rss: f64,
    /// Degrees of freedom: observations - free parameters.
    pub dof: usize,
    /// Residual standard deviation estimate, sqrt(rss / dof).
    pub sigma: f64,
}

/// Cholesky factor L (lower) of a symmetric positive definite matrix, or None.
fn cholesky(a: &[Vec<f64>]) -> Option<Vec<Vec<f64>>> {
    let n = a.len();
    let mut l = vec![vec![0.0; n]; n];
    let scale = (0..n)
        .map(|i| a[i][i].abs())
        .fold(0.0, f64::max)
        .max(1e-300);
    for i in 0..n {
        for j in 0..=i {
            let s: f64 = (0..j).map(|k| l[i][k] * l[j][k]).sum();
            if i == j {
                let d = a[i][i] - s;
                if d <= 1e-12 * scale {
                    return None;
                }
                l[i][i] = d.sqrt();
            } else {
                l[i][j] = (a[i][j] - s) / l[j][j];
            }
        }
    }
    Some(l)
}

fn chol_solve(l: &[Vec<f64>], b: &[f64]) -> Vec<f64> {
    let n = l.len();
    let mut y = vec![0.0; n];
    for i in 0..n {
        y[i] = (b[i] - (0..i).map(|k| l[i][k] * y[k]).sum::<f64>()) / l[i][i];
    }
    let mut x = vec![0.0; n];
    for i in (0..n).rev() {
        x[i] = (y[i] - ((i + 1)..n).map(|k| l[k][i] * x[k]).sum::<f64>()) / l[i][i];
    }
    x
}

/// Unbounded least squares of `y ~ X beta` (rows of `x`). Err when X^T X is singular.
pub fn lstsq(x: &[Vec<f64>], y: &[f64]) -> Result<Fit, String> {
    let p = x.first().map(|r| r.len()).unwrap_or(0);
    bounded_lstsq(x, y, &vec![f64::NEG_INFINITY; p], &vec![f64::INFINITY; p])
}

/// Least squares with `lo <= beta <= hi`: fit, hold the worst violator at its bound,
/// refit the rest, until every free parameter lies inside its bounds.
pub fn bounded_lstsq(x: &[Vec<f64>], y: &[f64], lo: &[f64], hi: &[f64]) -> Result<Fit, String> {
    let n = x.len();
    let p = lo.len();
    if n != y.len() || x.iter().any(|r| r.len() != p) || hi.len() != p {
        return Err("design matrix, observations and bounds disagree in size".into());
    }
    let mut fixed: Vec<Option<f64>> = vec![None; p];
    loop {
        let free: Vec<usize> = (0..p).filter(|j| fixed[*j].is_none()).collect();
        let q = free.len();
        // Observations less the contribution of held parameters.
        let yr: Vec<f64> = (0..n)
            .map(|i| {
                y[i] - (0..p)
                    .filter_map(|j| fixed[j].map(|v| v * x[i][j]))
                    .sum::<f64>()
            })
            .collect();
        let mut a = vec![vec![0.0; q]; q];
        let mut b = vec![0.0; q];
        for i in 0..n {
            for (r, &jr) in free.iter().enumerate() {
                b[r] += x[i][jr] * yr[i];
                for (c, &jc) in free.iter().enumerate() {
                    a[r][c] += x[i][jr] * x[i][jc];
                }
            }
        }
        if n <= q {
            return Err(format!("{n} observations cannot fit {q} parameters"));
        }
        let (bf, l) = if q > 0 {
            let l = cholesky(&a).ok_or(
                "the parameters cannot be told apart by these measurements (X^T X is singular)",
            )?;
            (chol_solve(&l, &b), Some(l))
        } else {
            (vec![], None)
        };
        // Worst violation.
        let mut worst: Option<(usize, f64, f64)> = None;
        for (r, &j) in free.iter().enumerate() {
            let v = bf[r];
            let (viol, bound) = if v < lo[j] {
                (lo[j] - v, lo[j])
            } else if v > hi[j] {
                (v - hi[j], hi[j])
            } else {
                (0.0, 0.0)
            };
            if viol > 0.0 && worst.is_none_or(|w| viol > w.1) {
                worst = Some((j, viol, bound));
            }
        }
        if let Some((j, _, bound)) = worst {
            fixed[j] = Some(bound);
            continue;
        }
        let mut beta = vec![0.0; p];
        for j in 0..p {
            if let Some(v) = fixed[j] {
                beta[j] = v;
            }
        }
        for (r, &j) in free.iter().enumerate() {
            beta[j] = bf[r];
        }
        let rss: f64 = (0..n)
            .map(|i| (y[i] - (0..p).map(|j| x[i][j] * beta[j]).sum::<f64>()).powi(2))
            .sum();
        let dof = n - q;
        let sigma2 = rss / dof as f64;
        let mut se = vec![f64::NAN; p];
        if let Some(l) = l {
            for (r, &j) in free.iter().enumerate() {
                let mut e = vec![0.0; q];
                e[r] = 1.0;
                let col = chol_solve(&l, &e);
                se[j] = (sigma2 * col[r]).sqrt();
            }
        }
        return Ok(Fit {
            beta,
            se,
            at_bound: fixed.iter().map(|f| f.is_some()).collect(),
            rss,
            dof,
            sigma: sigma2.sqrt(),
        });
    }
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
    fn singular_design_is_refused() {
        let x = vec![vec![1.0, 2.0], vec![2.0, 4.0], vec![3.0, 6.0]];
        assert!(lstsq(&x, &[1.0, 2.0, 3.0]).is_err());
    }
}
