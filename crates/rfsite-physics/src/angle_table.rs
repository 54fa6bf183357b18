//! A crossing loss in dB as a function of `|cos θ|`, tabulated for fast evaluation
//! with a checked error.
//!
//! A prediction evaluates a wall's loss at every grid point its shadow covers, so the
//! exact slab (ITU-R P.2040-3 §3: a complex square root, a complex exponential and two
//! divisions) is tabulated once per wall kind and interpolated.
//!
//! # Where the nodes are
//!
//! Near grazing incidence the transmission of a slab goes as `cos θ` (the interface
//! reflection tends to -1), so the loss grows as `-20 log10 cos θ`: smooth in `log cos θ`,
//! not in `cos θ`. The nodes are therefore spaced by octaves of `c = |cos θ|`: each octave
//! `[2^e, 2^(e+1))`, `e = -10 .. -1`, is cut into `2^k` equal intervals, so an interval is
//! never wider than `c / 2^k`, and the last node is `c = 1`. Finding the interval costs a
//! few integer operations on the bits of `c` (exponent and leading `k` mantissa bits), and
//! the value is interpolated linearly in `c`. The table covers `c >= 2^-10` (89.94°).
//!
//! # Error
//!
//! Linear interpolation on an interval of width `h` misses by
//! `f''(ξ)/2 · (c - c_j)(c_{j+1} - c)`: the largest miss sits at the midpoint, up to a
//! correction of order `h^3 f'''`. [`AngleTable::build`] starts with `k = 5` and compares
//! the interpolated value with the exact function at the midpoint of every interval in
//! use; while any miss exceeds the tolerance it halves the intervals (the midpoints just
//! computed become the new nodes). The tests compare tables with the exact slab at 64
//! points per interval for the ITU-R P.2040-3 materials, thicknesses from 4 mm to 0.5 m,
//! 0.4 to 10 GHz, both polarisations, and for nearly lossless thick slabs: the largest
//! miss found is the build tolerance. When even `k = MAX_BITS` does not meet the
//! tolerance the build fails and the caller evaluates the exact function instead.

/// Octaves of `|cos θ|` covered: from `2^-OCTAVES` (89.944°) to 1.
pub const OCTAVES: u32 = 10;
/// Smallest `|cos θ|` the table covers.
pub const MIN_COS: f64 = 1.0 / (1u64 << OCTAVES) as f64;
/// First refinement tried: `2^MIN_BITS` intervals per octave.
pub const MIN_BITS: u32 = 5;
/// Last refinement tried: `2^MAX_BITS` intervals per octave (40 961 nodes).
pub const MAX_BITS: u32 = 12;

/// Values above `ceiling + HEADROOM_DB` are stored as that (an opaque wall's infinite loss
/// included), so that interpolation never meets an infinity; see [`AngleTable::build`].
const HEADROOM_DB: f64 = 20.0;

/// Mantissa bits of an `f64`.
const MANTISSA_BITS: u32 = 52;

/// A loss in dB, tabulated over `|cos θ|` (see the module documentation).
#[derive(Debug, Clone, PartialEq)]
pub struct AngleTable {
    bits: u32,
    min_cos: f64,
    ceiling_db: f64,
    values: Vec<f64>,
    max_midpoint_miss_db: f64,
}

/// `|cos θ|` at node `j` of a table with `2^bits` intervals per octave.
fn node_cos(j: usize, bits: u32) -> f64 {
    let octave = (j >> bits) as i32 - OCTAVES as i32;
    let step = (j & ((1 << bits) - 1)) as f64 / (1u64 << bits) as f64;
    (1.0 + step) * 2f64.powi(octave)
}

/// Interval index and position in it (0..1) of `c` in `[MIN_COS, 1)`. The bits of `c`
/// above the lowest `52 - bits` are its biased exponent followed by its leading `bits`
/// mantissa bits: the interval counted from the first octave's. The rest, scaled by the
/// exact power of two `2^-(52 - bits)`, is the position in the interval.
fn locate(c: f64, bits: u32) -> (usize, f64) {
    let raw = c.to_bits();
    let shift = MANTISSA_BITS - bits;
    let first = (1023 - OCTAVES as u64) << bits;
    let j = (raw >> shift) - first;
    let scale = f64::from_bits((1023 - shift as u64) << MANTISSA_BITS);
    let t = (raw & ((1u64 << shift) - 1)) as f64 * scale;
    (j as usize, t)
}

impl AngleTable {
    /// Tabulates `loss_db(|cos θ|)` for `|cos θ|` from `min_cos` (raised to [`MIN_COS`]
    /// if lower; smaller values are evaluated at `min_cos`) to 1, such that
    /// `min(table, ceiling_db)` misses `min(loss_db, ceiling_db)` by at most `tol_db` at
    /// every interval midpoint. `Err` carries the largest miss at the finest refinement
    /// (or NaN when `loss_db` returned NaN). Costs about `2 × nodes` calls of `loss_db`.
    pub fn build(
        loss_db: impl Fn(f64) -> f64,
        min_cos: f64,
        ceiling_db: f64,
        tol_db: f64,
    ) -> Result<AngleTable, f64> {
        let min_cos = min_cos.clamp(MIN_COS, 1.0);
        // NaN stays NaN (f64::min would drop it) and fails the build below.
        let stored = |c: f64| {
            let v = loss_db(c);
            if v.is_nan() {
                v
            } else {
                v.min(ceiling_db + HEADROOM_DB)
            }
        };
        let mut table = AngleTable {
            bits: MIN_BITS,
            min_cos,
            ceiling_db,
            values: (0..=(OCTAVES << MIN_BITS) as usize)
                .map(|j| stored(node_cos(j, MIN_BITS)))
                .collect(),
            max_midpoint_miss_db: 0.0,
        };
        loop {
            let mids: Vec<f64> = (0..table.values.len() - 1)
                .map(|j| stored(node_cos(2 * j + 1, table.bits + 1)))
                .collect();
            if mids.iter().chain(&table.values).any(|v| v.is_nan()) {
                return Err(f64::NAN);
            }
            let miss = table.midpoint_miss(&mids);
            if miss <= tol_db {
                table.max_midpoint_miss_db = miss;
                return Ok(table);
            }
            if table.bits == MAX_BITS {
                return Err(miss);
            }
            table.refine(&mids);
        }
    }

    /// Largest `|min(interpolated, ceiling) - min(exact, ceiling)|` at the midpoints of
    /// the intervals in use; `mids[j]` is the exact value at the midpoint of interval j.
    fn midpoint_miss(&self, mids: &[f64]) -> f64 {
        let cap = |v: f64| v.min(self.ceiling_db);
        let mut worst: f64 = 0.0;
        for (j, m) in mids.iter().enumerate() {
            if node_cos(j + 1, self.bits) <= self.min_cos {
                continue;
            }
            let lerp = 0.5 * (self.values[j] + self.values[j + 1]);
            worst = worst.max((cap(lerp) - cap(*m)).abs());
        }
        worst
    }

    /// Halves every interval: the midpoints become nodes.
    fn refine(&mut self, mids: &[f64]) {
        let mut values = Vec::with_capacity(2 * self.values.len() - 1);
        for (j, m) in mids.iter().enumerate() {
            values.push(self.values[j]);
            values.push(*m);
        }
        values.push(self.values[self.values.len() - 1]);
        self.values = values;
        self.bits += 1;
    }

    /// `min(loss, ceiling)` at `|cos θ| = cos` (clamped to `[min_cos, 1]`), dB.
    /// NaN in gives NaN out.
    pub fn eval(&self, cos: f64) -> f64 {
        let c = cos.clamp(self.min_cos, 1.0);
        if c >= 1.0 || c.is_nan() {
            // Normal incidence, or NaN.
            return c * self.values[self.values.len() - 1].min(self.ceiling_db);
        }
        let (j, t) = locate(c, self.bits);
        let (a, b) = (self.values[j], self.values[j + 1]);
        (a + t * (b - a)).min(self.ceiling_db)
    }

    /// Number of nodes.
    pub fn nodes(&self) -> usize {
        self.values.len()
    }

    /// Largest miss found at the interval midpoints when the table was built, dB.
    pub fn max_midpoint_miss_db(&self) -> f64 {
        self.max_midpoint_miss_db
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nodes_and_lookup_agree() {
        // The bit lookup finds, for every node, that node with position 0, and for every
        // midpoint the interval below it with position 1/2 (exact binary fractions).
        for bits in [MIN_BITS, 7, MAX_BITS] {
            let n = (OCTAVES << bits) as usize;
            assert_eq!(node_cos(0, bits), MIN_COS);
            assert_eq!(node_cos(n, bits), 1.0);
            for j in (0..n).step_by(37) {
                assert_eq!(locate(node_cos(j, bits), bits), (j, 0.0));
                let mid = 0.5 * (node_cos(j, bits) + node_cos(j + 1, bits));
                assert_eq!(locate(mid, bits), (j, 0.5));
            }
        }
    }

    #[test]
    fn interval_widths_scale_with_cos() {
        // Every interval is at most c / 2^bits wide (the octave layout).
        let bits = MIN_BITS;
        for j in 0..(OCTAVES << bits) as usize {
            let (a, b) = (node_cos(j, bits), node_cos(j + 1, bits));
            assert!(b > a && b - a <= a / (1u64 << bits) as f64 * (1.0 + 1e-12));
        }
    }

    #[test]
    fn a_linear_function_in_each_octave_is_exact() {
        // f(c) = 3 c + 1 is linear: interpolation is exact, no refinement needed.
        let t = AngleTable::build(|c| 3.0 * c + 1.0, 0.0, 100.0, 1e-12).unwrap();
        assert_eq!(t.nodes(), (OCTAVES << MIN_BITS) as usize + 1);
        for c in [MIN_COS, 0.0123, 0.5, 0.777, 1.0] {
            assert!((t.eval(c) - (3.0 * c + 1.0)).abs() < 1e-12);
        }
        // Below min_cos the value at min_cos; NaN gives NaN.
        assert_eq!(t.eval(0.0), t.eval(MIN_COS));
        assert!(t.eval(f64::NAN).is_nan());
    }

    #[test]
    fn grazing_log_term_is_met_and_refinement_happens() {
        // -20 log10 c, the grazing behaviour of a slab: its curvature in c is
        // 8.69 / c^2, so an interval of relative width 2^-k misses by about
        // 8.69 / 8 * 4^-k dB at its midpoint (computed): 1.1e-3 dB at k = 5.
        let f = |c: f64| -20.0 * c.log10();
        let coarse = AngleTable::build(f, 0.001, 1e3, 2e-3).unwrap();
        assert_eq!(coarse.nodes(), (OCTAVES << 5) as usize + 1);
        let fine = AngleTable::build(f, 0.001, 1e3, 2e-4).unwrap();
        assert_eq!(fine.nodes(), (OCTAVES << 7) as usize + 1);
        for i in 0..10_000 {
            let c = 0.001 + (1.0 - 0.001) * i as f64 / 9999.0;
            assert!((coarse.eval(c) - f(c)).abs() <= 2e-3);
            assert!((fine.eval(c) - f(c)).abs() <= 2e-4);
        }
    }

    #[test]
    fn ceiling_and_infinity() {
        // An opaque wall (infinite loss) reads as the ceiling; the kink where a loss
        // passes the ceiling needs no refinement (min(.) is compared on both sides).
        let t = AngleTable::build(|_| f64::INFINITY, 0.0, 60.0, 1e-3).unwrap();
        assert_eq!(t.eval(0.3), 60.0);
        let t = AngleTable::build(|c| 100.0 * (1.0 - c), 0.0, 60.0, 1e-9).unwrap();
        assert_eq!(t.nodes(), (OCTAVES << MIN_BITS) as usize + 1);
        assert_eq!(t.eval(0.01), 60.0);
        assert!((t.eval(0.9) - 10.0).abs() < 1e-9);
    }

    #[test]
    fn an_unresolvable_function_fails_and_nan_fails() {
        // A step inside [0.5, 1) cannot be met to 1e-3 by linear interpolation.
        let step = |c: f64| if c < 0.7 { 0.0 } else { 10.0 };
        let miss = AngleTable::build(step, 0.0, 60.0, 1e-3).unwrap_err();
        assert!(miss > 1.0);
        assert!(AngleTable::build(|_| f64::NAN, 0.0, 60.0, 1e-3)
            .unwrap_err()
            .is_nan());
    }
}
