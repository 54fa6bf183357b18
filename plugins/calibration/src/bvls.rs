//! Bounded-variable least squares: minimise ||A x - b||^2 subject to lo <= x <= hi, by the
//! active-set method of Stark & Parker, "Bounded-variable least-squares: an algorithm and
//! applications", Computational Statistics 10 (1995) 129-141 (which generalises the NNLS
//! method of Lawson & Hanson, "Solving Least Squares Problems", 1974, ch. 23).
//!
//! Every parameter is free (F), held at its lower bound (L) or held at its upper bound (U).
//! Start: x = the point of the box nearest 0 (no change from the model), F = the parameters
//! strictly inside their bounds. Then, as in the paper:
//!
//! 1. Solve the unbounded least squares on F, the others held (pivoted Householder QR,
//!    [`crate::qr`]). If the solution z stays inside the bounds, x_F = z. Otherwise move
//!    from x towards z as far as the bounds allow, hold the parameter that stops the move
//!    at that bound, and solve again.
//! 2. With w = A^T (b - A x), the Karush-Kuhn-Tucker conditions hold when w_j <= 0 for
//!    every j in L and w_j >= 0 for every j in U. If they do, stop. Otherwise free the j of
//!    largest s_j w_j (s = +1 in L, -1 in U) and go to 1. If round-off makes the freed
//!    parameter leave towards its own bound at once, it is put back and the next one is
//!    tried (the paper's safeguard).
//!
//! Each completed round lowers ||A x - b|| strictly, so the method ends in finitely many
//! steps; a step cap turns any numerical cycling into an error instead of a hang.
//!
//! A parameter whose column is zero (no row informs it) is never freed: it stays at the
//! start value and is reported [`VarState::Uninformed`]. A free column that is a
//! combination of other free columns gets no share of the subproblem solution (a basic
//! solution), keeps its value and is reported [`VarState::Dependent`].

use std::fmt;

use crate::qr::Qr;

/// A bound parameter is freed only when s_j w_j exceeds this fraction of
/// ||a_j|| ||b - A x|| (an rfsite choice; below it the gain is round-off).
pub const KKT_REL: f64 = 1e-10;

/// Where a parameter ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum VarState {
    /// Fitted, inside its bounds (or touching one with zero gradient).
    Free,
    /// Held at its lower bound.
    AtLower,
    /// Held at its upper bound.
    AtUpper,
    /// No row informs it (zero column): held at the start value.
    Uninformed,
    /// Its column is a combination of other fitted columns: held at its value.
    Dependent,
}

/// A solution.
#[derive(Debug, Clone, PartialEq)]
pub struct Bvls {
    /// Parameters, inside their bounds.
    pub x: Vec<f64>,
    /// Where each ended.
    pub state: Vec<VarState>,
    /// Residual sum of squares ||A x - b||^2.
    pub rss: f64,
    /// Free subproblems solved.
    pub steps: usize,
}

/// Why there is no solution.
#[derive(Debug, Clone, PartialEq)]
pub enum BvlsError {
    /// Sizes disagree.
    Shape(String),
    /// A NaN or infinite entry in A or b.
    NotFinite(String),
    /// Bounds not lo <= hi, NaN, or lo = +inf / hi = -inf.
    BadBounds {
        /// Parameter index.
        index: usize,
        /// Lower bound.
        lo: f64,
        /// Upper bound.
        hi: f64,
    },
    /// The step cap was reached.
    NoConvergence {
        /// Subproblems solved.
        steps: usize,
    },
}

impl fmt::Display for BvlsError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            BvlsError::Shape(s) => write!(f, "bounded least squares: {s}"),
            BvlsError::NotFinite(s) => write!(f, "bounded least squares: {s} is not a finite number"),
            BvlsError::BadBounds { index, lo, hi } => write!(
                f,
                "bounded least squares: parameter {index} has bounds [{lo}, {hi}]; they must be numbers with low <= high"
            ),
            BvlsError::NoConvergence { steps } => write!(
                f,
                "bounded least squares did not settle within {steps} steps (numerical cycling); the parameters are too strongly correlated to fit together: fit fewer of them"
            ),
        }
    }
}

impl std::error::Error for BvlsError {}

/// The default step cap for `p` parameters (an rfsite choice; the method usually needs
/// about p steps).
pub fn default_max_steps(p: usize) -> usize {
    50 + 10 * p
}

/// Solves `min ||A x - b||^2, lo <= x <= hi` with rows of A in `a`.
pub fn bvls(a: &[Vec<f64>], b: &[f64], lo: &[f64], hi: &[f64]) -> Result<Bvls, BvlsError> {
    bvls_capped(a, b, lo, hi, default_max_steps(lo.len()))
}

/// As [`bvls`], with a cap on the free subproblems solved.
pub fn bvls_capped(
    a: &[Vec<f64>],
    b: &[f64],
    lo: &[f64],
    hi: &[f64],
    max_steps: usize,
) -> Result<Bvls, BvlsError> {
    check(a, b, lo, hi)?;
    Work::new(a, b, lo, hi, max_steps).run()
}

fn check(a: &[Vec<f64>], b: &[f64], lo: &[f64], hi: &[f64]) -> Result<(), BvlsError> {
    let p = lo.len();
    if hi.len() != p || b.len() != a.len() {
        return Err(BvlsError::Shape(format!(
            "{} rows but {} observations, {p} lower and {} upper bounds",
            a.len(),
            b.len(),
            hi.len()
        )));
    }
    if let Some(i) = a.iter().position(|r| r.len() != p) {
        return Err(BvlsError::Shape(format!(
            "row {i} has {} entries, expected {p}",
            a[i].len()
        )));
    }
    if let Some(i) = a.iter().position(|r| r.iter().any(|v| !v.is_finite())) {
        return Err(BvlsError::NotFinite(format!("an entry of row {i}")));
    }
    if let Some(i) = b.iter().position(|v| !v.is_finite()) {
        return Err(BvlsError::NotFinite(format!("observation {i}")));
    }
    let ok = |l: f64, h: f64| l <= h && l < f64::INFINITY && h > f64::NEG_INFINITY;
    match (0..p).find(|&j| !ok(lo[j], hi[j])) {
        Some(index) => Err(BvlsError::BadBounds {
            index,
            lo: lo[index],
            hi: hi[index],
        }),
        None => Ok(()),
    }
}

fn dot(u: &[f64], v: &[f64]) -> f64 {
    u.iter().zip(v).map(|(a, b)| a * b).sum()
}

/// The outcome of one free subproblem.
enum Step {
    /// x_F reached the subproblem solution.
    Reached,
    /// A bound stopped the move; that parameter is now held.
    Blocked,
    /// The parameter just freed wanted back through its own bound: nothing moved.
    Rejected,
}

struct Work<'a> {
    cols: Vec<Vec<f64>>,
    b: &'a [f64],
    lo: &'a [f64],
    hi: &'a [f64],
    x: Vec<f64>,
    state: Vec<VarState>,
    norms: Vec<f64>,
    steps: usize,
    max_steps: usize,
}

impl<'a> Work<'a> {
    fn new(a: &[Vec<f64>], b: &'a [f64], lo: &'a [f64], hi: &'a [f64], max_steps: usize) -> Self {
        let p = lo.len();
        let cols: Vec<Vec<f64>> = (0..p).map(|j| a.iter().map(|r| r[j]).collect()).collect();
        let norms: Vec<f64> = cols.iter().map(|c| dot(c, c).sqrt()).collect();
        let x: Vec<f64> = (0..p).map(|j| 0.0_f64.clamp(lo[j], hi[j])).collect();
        let state = (0..p)
            .map(|j| match x[j] {
                _ if norms[j] == 0.0 => VarState::Uninformed,
                v if v == lo[j] => VarState::AtLower,
                v if v == hi[j] => VarState::AtUpper,
                _ => VarState::Free,
            })
            .collect();
        Work {
            cols,
            b,
            lo,
            hi,
            x,
            state,
            norms,
            steps: 0,
            max_steps,
        }
    }

    /// b - A x.
    fn residual(&self) -> Vec<f64> {
        let mut r = self.b.to_vec();
        for (c, xj) in self.cols.iter().zip(&self.x) {
            for (ri, ci) in r.iter_mut().zip(c) {
                *ri -= ci * xj;
            }
        }
        r
    }

    fn free(&self) -> Vec<usize> {
        (0..self.x.len())
            .filter(|&j| matches!(self.state[j], VarState::Free | VarState::Dependent))
            .collect()
    }

    /// The bound a subproblem value z_j crosses, if any.
    fn crossed(&self, j: usize, z: f64) -> Option<f64> {
        if z < self.lo[j] {
            Some(self.lo[j])
        } else if z > self.hi[j] {
            Some(self.hi[j])
        } else {
            None
        }
    }

    /// Solves the free subproblem and moves towards its solution (step 1 of the method).
    fn step(&mut self, freed: Option<usize>) -> Result<Step, BvlsError> {
        self.steps += 1;
        if self.steps > self.max_steps {
            return Err(BvlsError::NoConvergence {
                steps: self.max_steps,
            });
        }
        let free = self.free();
        if free.is_empty() {
            return Ok(Step::Reached);
        }
        let qr = Qr::new(
            free.iter().map(|&j| self.cols[j].clone()).collect(),
            self.residual(),
        );
        let d = qr.solution();
        for (&j, ind) in free.iter().zip(qr.independent()) {
            self.state[j] = if ind {
                VarState::Free
            } else {
                VarState::Dependent
            };
        }
        if let Some(t) = freed {
            let k = free.iter().position(|&j| j == t).unwrap_or(0);
            if self.crossed(t, self.x[t] + d[k]) == Some(self.x[t]) {
                return Ok(Step::Rejected);
            }
        }
        Ok(self.advance(&free, &d))
    }

    /// Moves x_F by the largest fraction of `d` the bounds allow.
    fn advance(&mut self, free: &[usize], d: &[f64]) -> Step {
        let mut alpha = 1.0;
        let mut block = None;
        for (&j, &dj) in free.iter().zip(d) {
            if let Some(bound) = self.crossed(j, self.x[j] + dj) {
                let f = ((bound - self.x[j]) / dj).clamp(0.0, 1.0);
                if f < alpha {
                    alpha = f;
                    block = Some((j, bound));
                }
            }
        }
        for (&j, &dj) in free.iter().zip(d) {
            self.x[j] = (self.x[j] + alpha * dj).clamp(self.lo[j], self.hi[j]);
        }
        let Some((j, bound)) = block else {
            return Step::Reached;
        };
        self.x[j] = bound;
        self.state[j] = if bound == self.lo[j] {
            VarState::AtLower
        } else {
            VarState::AtUpper
        };
        Step::Blocked
    }

    /// Solves free subproblems until one is reached; false if `freed` was rejected.
    fn settle(&mut self, mut freed: Option<usize>) -> Result<bool, BvlsError> {
        loop {
            match self.step(freed.take())? {
                Step::Reached => return Ok(true),
                Step::Rejected => return Ok(false),
                Step::Blocked => {}
            }
        }
    }

    /// The held parameter that most violates the KKT conditions (step 2), if any.
    fn candidate(&self, skip: &[usize]) -> Option<usize> {
        let r = self.residual();
        let rn = dot(&r, &r).sqrt();
        let mut best: Option<(usize, f64)> = None;
        for j in 0..self.x.len() {
            let s = match self.state[j] {
                VarState::AtLower => 1.0,
                VarState::AtUpper => -1.0,
                _ => continue,
            };
            if self.lo[j] == self.hi[j] || skip.contains(&j) {
                continue;
            }
            let v = s * dot(&self.cols[j], &r);
            if v > KKT_REL * self.norms[j] * rn && best.is_none_or(|b| v > b.1) {
                best = Some((j, v));
            }
        }
        best.map(|b| b.0)
    }

    fn run(mut self) -> Result<Bvls, BvlsError> {
        self.settle(None)?;
        let mut skip = Vec::new();
        while let Some(t) = self.candidate(&skip) {
            let held = self.state[t];
            self.state[t] = VarState::Free;
            if self.settle(Some(t))? {
                skip.clear();
            } else {
                self.state[t] = held;
                skip.push(t);
            }
        }
        let r = self.residual();
        Ok(Bvls {
            rss: dot(&r, &r),
            x: self.x,
            state: self.state,
            steps: self.steps,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_bounds_bind() {
        // Rows x0 = 5, x1 = -5, x2 = 0, x0 + x1 + x2 = 0: the unbounded optimum (5, -5, 0)
        // fits exactly. With x0 <= 1 and x1 >= -1 both bind and x2 = 0 (hand arithmetic):
        // r = b - A x = (4, -4, 0, 0), w = A^T r = (4, -4, 0): w0 >= 0 at an upper bound,
        // w1 <= 0 at a lower one (the KKT conditions); rss = 16 + 16 = 32.
        let a = vec![
            vec![1.0, 0.0, 0.0],
            vec![0.0, 1.0, 0.0],
            vec![0.0, 0.0, 1.0],
            vec![1.0, 1.0, 1.0],
        ];
        let s = bvls(
            &a,
            &[5.0, -5.0, 0.0, 0.0],
            &[-10.0, -1.0, -10.0],
            &[1.0, 10.0, 10.0],
        )
        .unwrap();
        assert_eq!(s.x[0], 1.0);
        assert_eq!(s.x[1], -1.0);
        assert!(s.x[2].abs() < 1e-14);
        assert_eq!(
            s.state,
            vec![VarState::AtUpper, VarState::AtLower, VarState::Free]
        );
        assert!((s.rss - 32.0).abs() < 1e-12);
    }

    #[test]
    fn a_bound_held_first_is_released() {
        // Rows x0 + x1 = -5, x0 + x1 = 6, -2 x0 - x1 = 3, bounds [-1, 1] on both. Hand
        // arithmetic: A^T A = [[6, 4], [4, 3]], A^T b = (-5, -2), unbounded optimum
        // (-3.5, 4). Holding the worst violator (x1, by 3) at 1 and then x0 at -1 gives
        // (-1, 1) with rss 25 + 36 + 4 = 65. The bounded optimum frees x1 again: with
        // x0 = -1, x1 minimises (x1 + 4)^2 + (x1 - 7)^2 + (x1 + 1)^2, so x1 = 2/3; there
        // r = (-14/3, 19/3, 5/3), w0 = -5/3 <= 0 at the lower bound (KKT), rss = 582/9.
        let a = vec![vec![1.0, 1.0], vec![1.0, 1.0], vec![-2.0, -1.0]];
        let s = bvls(&a, &[-5.0, 6.0, 3.0], &[-1.0, -1.0], &[1.0, 1.0]).unwrap();
        assert_eq!(s.x[0], -1.0);
        assert!((s.x[1] - 2.0 / 3.0).abs() < 1e-14, "{s:?}");
        assert_eq!(s.state, vec![VarState::AtLower, VarState::Free]);
        assert!((s.rss - 582.0 / 9.0).abs() < 1e-12);
    }

    #[test]
    fn uninformed_and_dependent_parameters_are_held_and_named() {
        // Column 1 is zero; column 2 = -column 0 (every row crosses the material once).
        let a: Vec<Vec<f64>> = (0..5).map(|i| vec![1.0, 0.0, -1.0, i as f64]).collect();
        let b: Vec<f64> = (0..5).map(|i| 2.0 + 0.5 * i as f64).collect();
        let s = bvls(&a, &b, &[-5.0, 1.0, -5.0, -5.0], &[5.0, 3.0, 5.0, 5.0]).unwrap();
        assert_eq!(s.state[1], VarState::Uninformed);
        assert_eq!(s.x[1], 1.0, "held at the box point nearest 0");
        // Column 2 cannot be told from column 0; the earlier one is fitted, column 2 keeps
        // its start value 0. The fit is exact: x0 = 2, x3 = 0.5 (hand arithmetic).
        assert_eq!(s.state[2], VarState::Dependent);
        assert_eq!(s.x[2], 0.0);
        assert!((s.x[0] - 2.0).abs() < 1e-12 && (s.x[3] - 0.5).abs() < 1e-12);
        assert!(s.rss < 1e-20);
    }

    #[test]
    fn fixed_and_one_sided_bounds() {
        // x0 fixed at 2 (lo = hi); x1 >= 0 only; rows x0 = 1, x1 = -3, x0 + x1 = 0.
        // x1 minimises (x1+3)^2 + (2+x1)^2 -> -2.5, below 0, so x1 = 0 (hand arithmetic).
        let a = vec![vec![1.0, 0.0], vec![0.0, 1.0], vec![1.0, 1.0]];
        let s = bvls(&a, &[1.0, -3.0, 0.0], &[2.0, 0.0], &[2.0, f64::INFINITY]).unwrap();
        assert_eq!(s.x, vec![2.0, 0.0]);
        assert_eq!(s.state[1], VarState::AtLower);
    }

    #[test]
    fn bad_input_is_an_error_not_a_panic() {
        let a = vec![vec![1.0, 0.0]];
        assert!(matches!(
            bvls(&a, &[1.0], &[0.0], &[1.0]),
            Err(BvlsError::Shape(_))
        ));
        assert!(matches!(
            bvls(&a, &[f64::NAN], &[0.0, 0.0], &[1.0, 1.0]),
            Err(BvlsError::NotFinite(_))
        ));
        assert!(matches!(
            bvls(&a, &[1.0], &[0.0, 2.0], &[1.0, 1.0]),
            Err(BvlsError::BadBounds { index: 1, .. })
        ));
        assert!(matches!(
            bvls(&a, &[1.0], &[0.0, f64::NAN], &[1.0, 1.0]),
            Err(BvlsError::BadBounds { index: 1, .. })
        ));
        // No rows at all: nothing informs anything.
        let s = bvls(&[], &[], &[-1.0], &[1.0]).unwrap();
        assert_eq!(s.state, vec![VarState::Uninformed]);
    }

    #[test]
    fn the_step_cap_is_an_error() {
        let a = vec![vec![1.0, 0.0], vec![0.0, 1.0], vec![1.0, -1.0]];
        assert_eq!(
            bvls_capped(&a, &[3.0, 3.0, 4.0], &[-10.0, -10.0], &[4.0, 2.0], 1),
            Err(BvlsError::NoConvergence { steps: 1 })
        );
    }
}
