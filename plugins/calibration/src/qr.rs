//! Small dense least-squares problems by Householder QR from `nalgebra` (`DMatrix::qr`,
//! Golub & Van Loan, "Matrix Computations", 4th ed., section 5.2), never by the normal
//! equations, with the columns taken in the order of column-pivoted QR (section 5.4.2).
//!
//! Columns are chosen in order of the largest part outside the span of the columns chosen
//! before, *relative to the column's own norm*, which is pivoted QR of the column-scaled
//! matrix: the rank decision does not depend on the units of a parameter (1 for an offset,
//! about 15 for 10 log10 d). A column whose remaining relative norm falls below the
//! tolerance is a combination of the chosen ones (dependent): it gets no share of the
//! solution (a basic solution), and is reported. Ties go to the earlier column, so of two
//! inseparable columns the first one listed is the one solved for.
//!
//! `nalgebra`'s own `ColPivQR` pivots on the largest single entry rather than the largest
//! column norm, which does not reveal the rank, so the order is chosen here (each
//! candidate's remaining part measured against an orthonormal basis of the chosen columns,
//! itself from `nalgebra`'s QR) and the chosen columns are then factorised by `nalgebra`.

use nalgebra::{DMatrix, DVector};

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
    /// R, rank x rank, upper triangular, of the chosen columns in pivot order.
    r: DMatrix<f64>,
    /// First `rank` entries of Q^T rhs.
    qtb: DVector<f64>,
}

/// Each column scaled to unit norm; None for a zero (or non-finite) column.
fn unit_columns(cols: &[Vec<f64>]) -> Vec<Option<DVector<f64>>> {
    cols.iter()
        .map(|c| {
            let v = DVector::from_column_slice(c);
            let norm = v.norm();
            (norm > 0.0 && norm.is_finite()).then(|| v / norm)
        })
        .collect()
}

/// The pivot order: repeatedly the column with the largest relative part outside the span
/// of those chosen (ties to the earlier column), until none exceeds [`DEPENDENT_REL`] or
/// the rows are used up.
fn pivot_order(cols: &[Vec<f64>], m: usize) -> Vec<usize> {
    let unit = unit_columns(cols);
    let mut order: Vec<usize> = Vec::new();
    let mut basis: Option<DMatrix<f64>> = None;
    while order.len() < m.min(cols.len()) {
        let best = unit
            .iter()
            .enumerate()
            .filter(|(j, _)| !order.contains(j))
            .filter_map(|(j, u)| u.as_ref().map(|u| (j, u)))
            .map(|(j, u)| {
                let rest = match &basis {
                    Some(q) => u - q * q.tr_mul(u),
                    None => u.clone(),
                };
                (j, rest.norm())
            })
            .max_by(|a, b| a.1.total_cmp(&b.1).then(b.0.cmp(&a.0)));
        let Some((j, _)) = best.filter(|b| b.1 > DEPENDENT_REL) else {
            break;
        };
        order.push(j);
        let chosen = DMatrix::from_fn(m, order.len(), |i, c| {
            unit[order[c]].as_ref().map_or(0.0, |u| u[i])
        });
        basis = Some(chosen.qr().q());
    }
    order
}

impl Qr {
    /// Factorises `cols` (each of length m) and transforms `rhs` (length m) alongside.
    pub fn new(cols: Vec<Vec<f64>>, rhs: Vec<f64>) -> Qr {
        let n = cols.len();
        let m = rhs.len();
        let order = pivot_order(&cols, m);
        let k = order.len();
        if k == 0 {
            return Qr {
                n,
                order,
                r: DMatrix::zeros(0, 0),
                qtb: DVector::zeros(0),
            };
        }
        let a = DMatrix::from_fn(m, k, |i, c| cols[order[c]][i]);
        let qr = a.qr();
        let qtb = qr.q().tr_mul(&DVector::from_vec(rhs));
        Qr {
            n,
            order,
            r: qr.r(),
            qtb,
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

    /// Solves R Y = C by back substitution (`nalgebra`); every diagonal entry of R is
    /// nonzero, since each chosen column has more than [`DEPENDENT_REL`] of its norm
    /// outside the span of the earlier ones.
    fn back(&self, c: &DMatrix<f64>) -> DMatrix<f64> {
        self.r
            .solve_upper_triangular(c)
            .unwrap_or_else(|| DMatrix::from_element(c.nrows(), c.ncols(), f64::NAN))
    }

    /// The basic least-squares solution: dependent and zero columns get 0.
    pub fn solution(&self) -> Vec<f64> {
        let mut x = vec![0.0; self.n];
        if self.rank() == 0 {
            return x;
        }
        let y = self.back(&DMatrix::from_column_slice(
            self.rank(),
            1,
            self.qtb.as_slice(),
        ));
        for (c, &j) in self.order.iter().enumerate() {
            x[j] = y[(c, 0)];
        }
        x
    }

    /// The diagonal of (A_I^T A_I)^-1 over the independent columns I (NaN elsewhere):
    /// the row norms squared of R^-1, since A^T A = R^T R.
    pub fn inverse_gram_diag(&self) -> Vec<f64> {
        let mut d = vec![f64::NAN; self.n];
        if self.rank() == 0 {
            return d;
        }
        let inv = self.back(&DMatrix::identity(self.rank(), self.rank()));
        for (c, &j) in self.order.iter().enumerate() {
            d[j] = inv.row(c).norm_squared();
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
