//! Householder QR with column pivoting for small dense least-squares problems
//! (Golub & Van Loan, "Matrix Computations", 4th ed., sections 5.2 and 5.4.2).
//!
//! Columns are chosen in order of the largest remaining norm *relative to the column's own
//! norm*, which is pivoted QR of the column-scaled matrix: the rank decision does not depend
//! on the units of a parameter (1 for an offset, about 15 for 10 log10 d). A column whose
//! remaining relative norm falls below the tolerance is a combination of the chosen ones
//! (dependent): it gets no share of the solution (a basic solution), and is reported.
//! Ties go to the earlier column, so of two inseparable columns the first one listed is
//! the one solved for.

/// A column is dependent when less than this fraction of its norm lies outside the span of
/// the columns chosen before it (an rfsite choice: about 1e7 times the float64 epsilon).
pub const DEPENDENT_REL: f64 = 1e-9;

/// The factorisation of a column set together with Q^T times a right-hand side.
#[derive(Debug, Clone)]
pub struct Qr {
    /// Number of columns.
    n: usize,
    /// Chosen (independent) columns in pivot order.
    order: Vec<usize>,
    /// R, rank x rank, upper triangular: `r[i][c]` is row i of chosen column c.
    r: Vec<Vec<f64>>,
    /// First `rank` entries of Q^T rhs.
    qtb: Vec<f64>,
}

fn norm(v: &[f64]) -> f64 {
    // Scaled to avoid overflow/underflow of the squares.
    let s = v.iter().fold(0.0_f64, |a, x| a.max(x.abs()));
    if s == 0.0 || !s.is_finite() {
        return s;
    }
    s * v.iter().map(|x| (x / s).powi(2)).sum::<f64>().sqrt()
}

/// Applies the reflector `I - 2 v v^T / (v^T v)` to `x[k..]`.
fn reflect(v: &[f64], vtv: f64, x: &mut [f64], k: usize) {
    let dot: f64 = v.iter().zip(&x[k..]).map(|(a, b)| a * b).sum();
    let f = 2.0 * dot / vtv;
    for (xi, vi) in x[k..].iter_mut().zip(v) {
        *xi -= f * vi;
    }
}

/// The reflector that maps `x[k..]` to `(alpha, 0, ..., 0)`; None when `x[k..]` is zero.
fn householder(x: &[f64], k: usize) -> Option<(Vec<f64>, f64)> {
    let alpha = norm(&x[k..]);
    if alpha == 0.0 {
        return None;
    }
    let mut v = x[k..].to_vec();
    // Add the sign of x_k to avoid cancellation.
    v[0] += if v[0] >= 0.0 { alpha } else { -alpha };
    let vtv: f64 = v.iter().map(|a| a * a).sum();
    Some((v, vtv))
}

impl Qr {
    /// Factorises `cols` (each of length m) and transforms `rhs` (length m) alongside.
    pub fn new(mut cols: Vec<Vec<f64>>, mut rhs: Vec<f64>) -> Qr {
        let n = cols.len();
        let m = rhs.len();
        let full: Vec<f64> = cols.iter().map(|c| norm(c)).collect();
        let mut left: Vec<usize> = (0..n).filter(|&j| full[j] > 0.0).collect();
        let mut order = Vec::new();
        for k in 0..m.min(n) {
            let best = left
                .iter()
                .enumerate()
                .map(|(i, &j)| (i, norm(&cols[j][k..]) / full[j]))
                .max_by(|a, b| a.1.total_cmp(&b.1).then(b.0.cmp(&a.0)));
            let Some((i, _)) = best.filter(|b| b.1 > DEPENDENT_REL) else {
                break;
            };
            let j = left.remove(i);
            let Some((v, vtv)) = householder(&cols[j], k) else {
                break;
            };
            for &o in left.iter().chain(std::iter::once(&j)) {
                reflect(&v, vtv, &mut cols[o], k);
            }
            reflect(&v, vtv, &mut rhs, k);
            order.push(j);
        }
        let rank = order.len();
        let r = (0..rank)
            .map(|i| order.iter().map(|&j| cols[j][i]).collect())
            .collect();
        Qr {
            n,
            order,
            r,
            qtb: rhs[..rank].to_vec(),
        }
    }

    /// Number of independent columns.
    pub fn rank(&self) -> usize {
        self.order.len()
    }

    /// Whether each column was independent (false: zero or dependent).
    pub fn independent(&self) -> Vec<bool> {
        let mut v = vec![false; self.n];
        for &j in &self.order {
            v[j] = true;
        }
        v
    }

    /// Solves R y = c by back substitution.
    fn back(&self, c: &[f64]) -> Vec<f64> {
        let k = self.rank();
        let mut y = vec![0.0; k];
        for i in (0..k).rev() {
            let s: f64 = ((i + 1)..k).map(|c2| self.r[i][c2] * y[c2]).sum();
            y[i] = (c[i] - s) / self.r[i][i];
        }
        y
    }

    /// The basic least-squares solution: dependent and zero columns get 0.
    pub fn solution(&self) -> Vec<f64> {
        let y = self.back(&self.qtb);
        let mut x = vec![0.0; self.n];
        for (c, &j) in self.order.iter().enumerate() {
            x[j] = y[c];
        }
        x
    }

    /// The diagonal of (A_I^T A_I)^-1 over the independent columns I (NaN elsewhere):
    /// the row norms squared of R^-1, since A^T A = R^T R.
    pub fn inverse_gram_diag(&self) -> Vec<f64> {
        let k = self.rank();
        let mut d = vec![f64::NAN; self.n];
        let mut acc = vec![0.0; k];
        for col in 0..k {
            let mut e = vec![0.0; k];
            e[col] = 1.0;
            let y = self.back(&e); // column `col` of R^-1
            for (a, v) in acc.iter_mut().zip(&y) {
                *a += v * v;
            }
        }
        for (c, &j) in self.order.iter().enumerate() {
            d[j] = acc[c];
        }
        d
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn solves_a_square_system_by_hand() {
        // [[2, 1], [1, 3]] x = [3, 5] -> x = (0.8, 1.4) (hand arithmetic, Cramer's rule).
        let q = Qr::new(vec![vec![2.0, 1.0], vec![1.0, 3.0]], vec![3.0, 5.0]);
        let x = q.solution();
        assert!((x[0] - 0.8).abs() < 1e-14 && (x[1] - 1.4).abs() < 1e-14);
        // (A^T A)^-1 = [[10, -5], [-5, 5]] / 25 (hand arithmetic): diagonal 0.4, 0.2.
        let d = q.inverse_gram_diag();
        assert!((d[0] - 0.4).abs() < 1e-14 && (d[1] - 0.2).abs() < 1e-14);
    }

    #[test]
    fn dependent_and_zero_columns_get_no_share() {
        // Column 1 = 2 x column 0, column 2 is zero: rank 1. Both have relative norm 1, the
        // tie goes to column 0, so y = 3 c0 gives x = (3, 0, 0) (hand arithmetic).
        let c0 = vec![1.0, 2.0, 3.0];
        let c1: Vec<f64> = c0.iter().map(|v| 2.0 * v).collect();
        let y: Vec<f64> = c0.iter().map(|v| 3.0 * v).collect();
        let q = Qr::new(vec![c0.clone(), c1.clone(), vec![0.0; 3]], y.clone());
        assert_eq!(q.rank(), 1);
        let x = q.solution();
        assert!((x[0] - 3.0).abs() < 1e-14, "{x:?}");
        assert_eq!((x[1], x[2]), (0.0, 0.0));
        assert_eq!(q.independent(), vec![true, false, false]);
        assert!(q.inverse_gram_diag()[2].is_nan());
    }
}
