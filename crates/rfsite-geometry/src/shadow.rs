//! Whole-grid wall shadows: the walls crossed by the paths from one
//! transmitter to *every* point of a [`Grid`] at once.
//!
//! Seen from a transmitter `T`, a wall `a–b` casts a shadow: the points `p`
//! whose open path `T → p` crosses the wall under the crate's crossing rules.
//! Away from its edges the shadow is the convex region behind the wall
//! between the rays from `T` through `a` and through `b`, so each grid row
//! meets it in one run of columns. The loss of the wall is added at the
//! run's first column and subtracted after its last in a per-row difference
//! array, and one prefix sum per row turns the difference arrays into the
//! summed loss of all crossed walls at every point. A transmitter costs about
//! `walls × rows + points` instead of `walls × points`.
//!
//! # Exactness
//!
//! The answer is the same as [`crossings_brute_force`](crate::crossings_brute_force)
//! for every grid point, including end points, grazing, touching and shared
//! corners. Each wall–row pair is split by three linear tests (left of the
//! ray through one end, right of the ray through the other, beyond the wall's
//! line), each with a margin of [`MARGIN_EPS`] times [`EPS_M`] (scaled
//! to the plan size) on either side:
//!
//! * points beyond the margin of all three tests are *inside*: the brute
//!   force necessarily reports a crossing there (a difference-array run);
//! * points beyond the margin of one test on the wrong side are *outside*:
//!   the brute force cannot report that wall, not even as a corner touch;
//! * the rest, within the margin of a shadow edge, are *boundary* points.
//!   Every wall that is a boundary wall at a point is run through the very
//!   same per-wall classifier and corner resolution as the brute force, for
//!   that point only. A corner touch can only come from a boundary wall, so
//!   a shared corner sees all of its walls together and counts once, or
//!   zero times, exactly as in the reference.
//!
//! A wall whose line passes within the margin of the transmitter (a
//! transmitter on or in line with a wall) has no well-conditioned shadow; it
//! is resolved at every grid point with the classifier. This is the one case
//! that costs `points` per wall; it is rare and [`ShadowStats`] counts it.
//!
//! # Parts of a path
//!
//! [`accumulate_path_part`] counts only the crossings at a position
//! `t0 < t < t1` along each path `T → p` (with `t` as in
//! [`Crossing::t`](crate::Crossing)), for paths between storeys: the
//! crossings of `T → T + t1 (p − T)` are the crossings of `T → p` with the
//! walls scaled by `1 / t1` about `T`, and those before `t0` are subtracted
//! the same way. The results equal the brute force on the scaled walls;
//! against the brute force on the cut path itself they can differ only for
//! a crossing within about [`EPS_M`] of a cut.

use crate::crossing::{no_rank, Collector, CornerRank, Crossing, Ray, EPS_M};
use crate::grid::Grid;
use crate::point::{Point2, Segment};

/// Width of the boundary band around each shadow edge, as a multiple of
/// [`EPS_M`] (plus a rounding term that grows with the coordinates). It only
/// has to exceed the tolerance of the crossing rules plus rounding; 100 is
/// ample, and it makes boundary points as rare as grid points lying within
/// about 0.1 µm of a shadow edge.
pub const MARGIN_EPS: f64 = 100.0;

/// Counters of the last call, for benchmarks and tests.
#[derive(Debug, Default, Clone, Copy, PartialEq, Eq)]
pub struct ShadowStats {
    /// Wall–row pairs examined.
    pub rows_visited: u64,
    /// Wall–row runs added to the difference arrays.
    pub runs: u64,
    /// Grid points covered by those runs (= clean crossings).
    pub run_points: u64,
    /// (point, wall) pairs resolved with the exact classifier.
    pub boundary_pairs: u64,
    /// Grid points resolved with the exact classifier.
    pub resolved_points: u64,
    /// Walls in line with the transmitter, resolved at every point.
    pub inline_walls: u64,
}

impl std::ops::AddAssign for ShadowStats {
    fn add_assign(&mut self, o: ShadowStats) {
        self.rows_visited += o.rows_visited;
        self.runs += o.runs;
        self.run_points += o.run_points;
        self.boundary_pairs += o.boundary_pairs;
        self.resolved_points += o.resolved_points;
        self.inline_walls += o.inline_walls;
    }
}

/// Reusable buffers for the shadow functions (one per thread). Holds two
/// `f64` arrays the size of the grid; nothing grows with the number of walls
/// beyond a list of boundary pairs.
#[derive(Debug, Default, Clone)]
pub struct ShadowScratch {
    diff: Vec<f64>,
    acc: Vec<f64>,
    boundary: Vec<(u32, u32)>,
    inline: Vec<u32>,
    collector: Collector,
    crossings: Vec<Crossing>,
    scaled: Vec<Segment>,
    stats: ShadowStats,
}

impl ShadowScratch {
    /// Empty buffers; they grow on first use.
    pub fn new() -> Self {
        Self::default()
    }

    /// Counters of the last call.
    pub fn stats(&self) -> ShadowStats {
        self.stats
    }
}

/// Loss of an angle-dependent wall, `f(wall, cos_incidence)` in dB.
pub type AngleLoss<'a, L = f32> = &'a (dyn Fn(usize, f64) -> L + Sync);

/// A wall loss in dB: `f32`, or `f64` where the sums must match a per-ray sum
/// of the same `f64` losses to rounding.
pub trait Loss: Copy + Into<f64> + Send + Sync {}

impl Loss for f32 {}
impl Loss for f64 {}

/// Losses of the walls for [`accumulate_path_part`].
#[derive(Clone, Copy)]
pub struct WallLosses<'a, L: Loss = f32> {
    /// Loss of each wall, dB, used at every incidence for walls that are not
    /// angle dependent. One entry per wall.
    pub constant_db: &'a [L],
    /// For angle-dependent walls: which walls (one flag per wall) and their
    /// loss `f(wall, cos_incidence)` in dB, `cos_incidence` as in
    /// [`Crossing::cos_incidence`](crate::Crossing). These walls cost one
    /// call per crossed grid point instead of one per row.
    pub by_angle: Option<(&'a [bool], AngleLoss<'a, L>)>,
}

impl<L: Loss> std::fmt::Debug for WallLosses<'_, L> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("WallLosses")
            .field("constant_db", &self.constant_db.len())
            .field("by_angle", &self.by_angle.map(|(m, _)| m.len()))
            .finish()
    }
}

impl<L: Loss> WallLosses<'_, L> {
    fn angle_dependent(&self, wall: usize) -> bool {
        matches!(self.by_angle, Some((m, _)) if m[wall])
    }

    fn eval(&self, wall: usize, cos: f64) -> f64 {
        match self.by_angle {
            Some((m, f)) if m[wall] => f(wall, cos).into(),
            _ => self.constant_db[wall].into(),
        }
    }
}

/// Adds, at every point of `grid`, the summed `loss_db` of the walls that the
/// path from `tx` to the point crosses (the same walls as
/// [`crossings_brute_force`](crate::crossings_brute_force)`(walls, tx, point)`).
/// `out` has one value per grid point, row-major, and is added to, not
/// overwritten.
///
/// # Panics
/// If `loss_db.len() != walls.len()`, `out.len() != grid.len()`, or there
/// are more than `u32::MAX` walls or grid points.
pub fn accumulate_wall_loss(
    tx: Point2,
    grid: &Grid,
    walls: &[Segment],
    loss_db: &[f32],
    out: &mut [f32],
    scratch: &mut ShadowScratch,
) {
    let losses = WallLosses {
        constant_db: loss_db,
        by_angle: None,
    };
    accumulate_path_part(tx, grid, walls, &losses, (0.0, 1.0), out, scratch);
}

/// As [`accumulate_wall_loss`], for the part `t0 < t < t1` of each path
/// `tx → point` (`0 <= t0 < t1 <= 1`; `(0.0, 1.0)` is the whole path), and
/// with optionally angle-dependent losses. See the [module
/// documentation](self) for how the cuts are handled. A range outside
/// `0..=1` or with `t0 >= t1` adds nothing.
///
/// # Panics
/// As [`accumulate_wall_loss`]; also if an angle-dependence mask does not
/// have one flag per wall.
pub fn accumulate_path_part(
    tx: Point2,
    grid: &Grid,
    walls: &[Segment],
    losses: &WallLosses<'_>,
    part: (f64, f64),
    out: &mut [f32],
    scratch: &mut ShadowScratch,
) {
    assert_eq!(out.len(), grid.len(), "one output value per grid point");
    if path_part(tx, grid, walls, losses, part, scratch) {
        for (o, a) in out.iter_mut().zip(&scratch.acc) {
            *o += *a as f32;
        }
    }
}

/// As [`accumulate_path_part`], adding to `f64` values and with `f32` or
/// `f64` losses: with `f64` losses the sums of several parts (the storeys of a
/// path between floors) equal a per-ray sum of the same crossings to
/// rounding.
///
/// # Panics
/// As [`accumulate_path_part`].
pub fn accumulate_path_part_f64<L: Loss>(
    tx: Point2,
    grid: &Grid,
    walls: &[Segment],
    losses: &WallLosses<'_, L>,
    part: (f64, f64),
    out: &mut [f64],
    scratch: &mut ShadowScratch,
) {
    assert_eq!(out.len(), grid.len(), "one output value per grid point");
    if path_part(tx, grid, walls, losses, part, scratch) {
        for (o, a) in out.iter_mut().zip(&scratch.acc) {
            *o += *a;
        }
    }
}

/// The losses of the part `t0 < t < t1` of every path into `scratch.acc`;
/// false if nothing was added (an empty part, grid or transmitter).
fn path_part<L: Loss>(
    tx: Point2,
    grid: &Grid,
    walls: &[Segment],
    losses: &WallLosses<'_, L>,
    (t0, t1): (f64, f64),
    scratch: &mut ShadowScratch,
) -> bool {
    assert_eq!(losses.constant_db.len(), walls.len(), "one loss per wall");
    if let Some((m, _)) = losses.by_angle {
        assert_eq!(m.len(), walls.len(), "one angle flag per wall");
    }
    scratch.stats = ShadowStats::default();
    let ok = t0.is_finite() && t1.is_finite() && t0 >= 0.0 && t1 <= 1.0 && t0 < t1;
    if !ok || grid.is_empty() || !tx.is_finite() {
        return false;
    }
    let n = grid.len();
    let mut acc = std::mem::take(&mut scratch.acc);
    acc.clear();
    acc.resize(n, 0.0);
    let mut scaled = std::mem::take(&mut scratch.scaled);
    for (t, sign) in [(t1, 1.0), (t0, -1.0)] {
        if t <= 0.0 {
            continue;
        }
        let ws: &[Segment] = if t == 1.0 {
            walls
        } else {
            let k = 1.0 / t;
            scaled.clear();
            scaled.extend(
                walls
                    .iter()
                    .map(|w| Segment::new(tx + (w.a - tx) * k, tx + (w.b - tx) * k)),
            );
            &scaled
        };
        loss_pass(tx, grid, ws, losses, sign, &mut acc, scratch);
    }
    scratch.acc = acc;
    scratch.scaled = scaled;
    true
}

/// One shadow pass adding `sign ×` the losses of the crossed walls to `acc`.
fn loss_pass<L: Loss>(
    tx: Point2,
    grid: &Grid,
    walls: &[Segment],
    losses: &WallLosses<'_, L>,
    sign: f64,
    acc: &mut [f64],
    scratch: &mut ShadowScratch,
) {
    let (nx, ny) = (grid.nx, grid.ny);
    let stride = nx + 1;
    let mut diff = std::mem::take(&mut scratch.diff);
    diff.clear();
    diff.resize(ny * stride, 0.0);
    let step = grid.step_m;
    let angle_fn = losses.by_angle.map(|(_, f)| f);
    cast(tx, grid, walls, scratch, |wall, iy, ix0, ix1| {
        if losses.angle_dependent(wall) {
            let f = angle_fn.expect("angle flag without a function");
            // |cos| = |d × e| / (|d| |e|) with d = point - tx, as the
            // classifier computes it up to rounding. A clean crossing has
            // |d| well above zero.
            let w = &walls[wall];
            let e = w.b - w.a;
            let inv_e = 1.0 / e.x.hypot(e.y);
            let dy = grid.origin.y + (iy as f64 + 0.5) * step - tx.y;
            let row = &mut acc[iy * nx..(iy + 1) * nx];
            for (ix, v) in row.iter_mut().enumerate().take(ix1 + 1).skip(ix0) {
                let dx = grid.origin.x + (ix as f64 + 0.5) * step - tx.x;
                let cos =
                    ((dx * e.y - dy * e.x).abs() * inv_e / (dx * dx + dy * dy).sqrt()).min(1.0);
                *v += sign * f(wall, cos).into();
            }
        } else {
            let l = sign * losses.constant_db[wall].into();
            diff[iy * stride + ix0] += l;
            diff[iy * stride + ix1 + 1] -= l;
        }
    });
    for iy in 0..ny {
        let mut run = 0.0;
        let row = &diff[iy * stride..iy * stride + nx];
        for (a, d) in acc[iy * nx..(iy + 1) * nx].iter_mut().zip(row) {
            run += d;
            *a += run;
        }
    }
    let rank = |w: usize, cos: f64| losses.eval(w, cos);
    resolve(tx, grid, walls, &rank, scratch, |i, crossings| {
        for c in crossings {
            acc[i] += sign * losses.eval(c.wall, c.cos_incidence);
        }
    });
    scratch.diff = diff;
}

/// Writes, at every point of `grid`, the number of walls the path from `tx`
/// to the point crosses (a counted corner is one), overwriting `out`. For
/// tests and statistics.
///
/// # Panics
/// If `out.len() != grid.len()`, or there are more than `u32::MAX` walls or
/// grid points.
pub fn count_crossings_grid(
    tx: Point2,
    grid: &Grid,
    walls: &[Segment],
    out: &mut [u32],
    scratch: &mut ShadowScratch,
) {
    assert_eq!(out.len(), grid.len(), "one output value per grid point");
    scratch.stats = ShadowStats::default();
    out.iter_mut().for_each(|o| *o = 0);
    if grid.is_empty() || !tx.is_finite() {
        return;
    }
    let (nx, ny) = (grid.nx, grid.ny);
    let stride = nx + 1;
    let mut diff: Vec<i32> = vec![0; ny * stride];
    cast(tx, grid, walls, scratch, |_, iy, ix0, ix1| {
        diff[iy * stride + ix0] += 1;
        diff[iy * stride + ix1 + 1] -= 1;
    });
    for iy in 0..ny {
        let mut run = 0i32;
        for ix in 0..nx {
            run += diff[iy * stride + ix];
            out[iy * nx + ix] = run as u32;
        }
    }
    resolve(tx, grid, walls, &no_rank, scratch, |i, crossings| {
        out[i] += crossings.len() as u32;
    });
}

/// Calls `f(i, crossings)` for every grid point `i` with the crossings of the
/// path `tx → point` in the order of
/// [`crossings_brute_force`](crate::crossings_brute_force) (same walls, `t`
/// and incidence up to rounding). Points without crossings are skipped. This
/// is the shadow method turned back into per-point lists, for callers that
/// need the individual crossings; it costs about `walls × rows` plus the
/// number of crossings, plus sorting each point's list.
///
/// # Panics
/// If there are more than `u32::MAX` walls or grid points.
pub fn for_each_point_crossings(
    tx: Point2,
    grid: &Grid,
    walls: &[Segment],
    scratch: &mut ShadowScratch,
    mut f: impl FnMut(usize, &[Crossing]),
) {
    scratch.stats = ShadowStats::default();
    if grid.is_empty() || !tx.is_finite() {
        return;
    }
    // Gather (point, crossing) pairs row by row to keep memory per row.
    let nx = grid.nx;
    let mut runs: Vec<Vec<(u32, u32, u32)>> = vec![Vec::new(); grid.ny];
    cast(tx, grid, walls, scratch, |wall, iy, ix0, ix1| {
        runs[iy].push((wall as u32, ix0 as u32, ix1 as u32));
    });
    let mut exact: Vec<Vec<Crossing>> = Vec::new();
    let mut exact_at: Vec<u32> = Vec::new();
    resolve(tx, grid, walls, &no_rank, scratch, |i, c| {
        if !c.is_empty() {
            exact_at.push(i as u32);
            exact.push(c.to_vec());
        }
    });
    let mut next_exact = 0;
    let mut list: Vec<Crossing> = Vec::new();
    let step = grid.step_m;
    for (iy, row_runs) in runs.iter().enumerate() {
        let y = grid.origin.y + (iy as f64 + 0.5) * step;
        let mut per_col: Vec<Vec<Crossing>> = vec![Vec::new(); nx];
        for &(wall, ix0, ix1) in row_runs {
            let w = &walls[wall as usize];
            for (ix, col) in per_col
                .iter_mut()
                .enumerate()
                .take(ix1 as usize + 1)
                .skip(ix0 as usize)
            {
                let q = Point2::new(grid.origin.x + (ix as f64 + 0.5) * step, y);
                if let Some(c) = crossing_of(tx, q, wall as usize, w) {
                    col.push(c);
                }
            }
        }
        for (ix, col) in per_col.into_iter().enumerate() {
            let i = iy * nx + ix;
            list.clear();
            list.extend(col);
            while next_exact < exact_at.len() && exact_at[next_exact] as usize == i {
                list.extend_from_slice(&exact[next_exact]);
                next_exact += 1;
            }
            if !list.is_empty() {
                list.sort_unstable_by(|a, b| a.t.total_cmp(&b.t).then(a.wall.cmp(&b.wall)));
                f(i, &list);
            }
        }
    }
}

/// The crossing of `tx → q` with a wall known to be crossed cleanly.
fn crossing_of(tx: Point2, q: Point2, wall: usize, w: &Segment) -> Option<Crossing> {
    Ray::new(tx, q)?.crossing(wall, w)
}

/// One of the three tests of a wall, `f(X) = s X + c0 + c1 Y` with `X, Y`
/// relative to the transmitter, and its margin `m`: inside needs `f > m` for
/// all three tests, outside `f < -m` for one. The column where `f = ±m` on
/// a row is linear in `Y`; it is kept as `k± + l Y` when that is finite.
#[derive(Clone, Copy)]
struct RowTest {
    s: f64,
    c0: f64,
    c1: f64,
    m: f64,
    k_lo: f64,
    k_hi: f64,
    l: f64,
    linear: bool,
}

impl RowTest {
    fn new(s: f64, c0: f64, c1: f64, m: f64, ox: f64, step: f64) -> Self {
        let k_lo = (ox + (-m - c0) / s) / step - 0.5;
        let k_hi = (ox + (m - c0) / s) / step - 0.5;
        let l = -c1 / (s * step);
        let linear = s != 0.0 && k_lo.is_finite() && k_hi.is_finite() && l.is_finite();
        RowTest {
            s,
            c0,
            c1,
            m,
            k_lo,
            k_hi,
            l,
            linear,
        }
    }

    /// Columns on the row at `yy`: `[n0, n1]` not outside, `[i0, i1]` inside
    /// (unclamped; empty when the first bound exceeds the second).
    #[inline]
    fn columns(&self, yy: f64, ox: f64, step: f64, nx: i64) -> (i64, i64, i64, i64) {
        const ALL: (i64, i64) = (i64::MIN / 4, i64::MAX / 4);
        const NONE: (i64, i64) = (1, 0);
        if self.s == 0.0 {
            let c = self.c0 + self.c1 * yy;
            let n = if c >= -self.m { ALL } else { NONE };
            let i = if c > self.m { ALL } else { NONE };
            return (n.0, n.1, i.0, i.1);
        }
        let (lo, hi) = if self.linear {
            (self.k_lo + self.l * yy, self.k_hi + self.l * yy)
        } else {
            let c = self.c0 + self.c1 * yy;
            let col = |x: f64| (ox + x) / step - 0.5;
            (col((-self.m - c) / self.s), col((self.m - c) / self.s))
        };
        // `lo` is where f = -m, `hi` where f = +m. Clamped to a few columns
        // beyond the grid, floor and ceil are truncations of shifted values
        // (`f64::floor` is a library call on baseline x86-64). The shift can
        // round a value within about 1e-15 columns of an integer the wrong
        // way; such a column has |f| ≈ m, far outside the tolerance of the
        // crossing rules, so it is classified correctly either way.
        let nxf = nx as f64;
        let off = nxf + 8.0;
        let offi = nx + 8;
        let clamp = |v: f64| v.max(-2.0).min(nxf + 2.0);
        let floor = |v: f64| (clamp(v) + off) as i64 - offi;
        let ceil = |v: f64| offi - (off - clamp(v)) as i64;
        if self.s > 0.0 {
            (ceil(lo), ALL.1, floor(hi) + 1, ALL.1)
        } else {
            (ALL.0, floor(lo), ALL.0, ceil(hi) - 1)
        }
    }
}

/// The `Y` range of the box `bx × by` clipped by the half-planes
/// `α X + β Y + γ >= 0`, or `None` if nothing is left.
fn clip_box_y(bx: (f64, f64), by: (f64, f64), planes: &[(f64, f64, f64); 3]) -> Option<(f64, f64)> {
    let mut poly = [Point2::default(); 8];
    let mut next = [Point2::default(); 8];
    poly[..4].copy_from_slice(&[
        Point2::new(bx.0, by.0),
        Point2::new(bx.1, by.0),
        Point2::new(bx.1, by.1),
        Point2::new(bx.0, by.1),
    ]);
    let mut n = 4;
    for &(al, be, ga) in planes {
        let g = |p: Point2| al * p.x + be * p.y + ga;
        let mut k = 0;
        for i in 0..n {
            let (p, q) = (poly[i], poly[(i + 1) % n]);
            let (gp, gq) = (g(p), g(q));
            if gp >= 0.0 {
                next[k] = p;
                k += 1;
            }
            if (gp >= 0.0) != (gq >= 0.0) {
                next[k] = p + (q - p) * (gp / (gp - gq));
                k += 1;
            }
        }
        if k == 0 {
            return None;
        }
        n = k.min(8);
        poly[..n].copy_from_slice(&next[..n]);
    }
    let ys = poly[..n].iter().map(|p| p.y);
    let ymin = ys.clone().fold(f64::INFINITY, f64::min);
    let ymax = ys.fold(f64::NEG_INFINITY, f64::max);
    // Guard against rounding at the ends: a hair of slack.
    let slack = 1e-9 * (1.0 + ymin.abs().max(ymax.abs()));
    Some((ymin - slack, ymax + slack))
}

/// Walk every wall's shadow: `run(wall, iy, ix0, ix1)` for each clean run of
/// columns, and boundary pairs and in-line walls stored in `scratch` for
/// [`resolve`].
fn cast(
    tx: Point2,
    grid: &Grid,
    walls: &[Segment],
    scratch: &mut ShadowScratch,
    mut run: impl FnMut(usize, usize, usize, usize),
) {
    assert!(u32::try_from(walls.len()).is_ok(), "at most u32::MAX walls");
    assert!(
        u32::try_from(grid.len()).is_ok(),
        "at most u32::MAX grid points"
    );
    scratch.boundary.clear();
    scratch.inline.clear();
    let (nx, ny) = (grid.nx, grid.ny);
    let step = grid.step_m;
    let lo = grid.origin;
    let hi = grid.max_corner();
    // Largest distance from the transmitter to a grid point, and a size for
    // the rounding term of the margin.
    let r = [lo, hi, Point2::new(lo.x, hi.y), Point2::new(hi.x, lo.y)]
        .iter()
        .map(|c| c.distance(tx))
        .fold(0.0f64, f64::max);
    let size = [tx.x, tx.y, lo.x, lo.y, hi.x, hi.y]
        .iter()
        .map(|v| v.abs())
        .fold(0.0f64, f64::max);
    let m = MARGIN_EPS * EPS_M + 1e-13 * size;
    let ox = tx.x - lo.x;
    // Box of the grid centres relative to the transmitter, padded a little.
    let pad = 1e-6 * (1.0 + size);
    let bx = (
        lo.x + 0.5 * step - tx.x - pad,
        lo.x + (nx as f64 - 0.5) * step - tx.x + pad,
    );
    let by = (
        lo.y + 0.5 * step - tx.y - pad,
        lo.y + (ny as f64 - 0.5) * step - tx.y + pad,
    );
    let row_of = |y: f64| (tx.y + y - lo.y) / step - 0.5;
    let nxi = nx as i64;
    let mut stats = ShadowStats::default();

    for (wi, w) in walls.iter().enumerate() {
        if !w.is_finite() {
            continue;
        }
        let mut a = w.a - tx;
        let mut b = w.b - tx;
        let e = b - a;
        let len_e = e.length();
        if len_e == 0.0 {
            // Both ends are the same point: never a crossing nor a touch.
            continue;
        }
        let cr = a.cross(e); // = a × b, twice the signed area of (tx, a, b)
        if cr.abs() <= m * len_e {
            // The transmitter lies (nearly) on the wall's line.
            scratch.inline.push(wi as u32);
            stats.inline_walls += 1;
            continue;
        }
        if cr < 0.0 {
            std::mem::swap(&mut a, &mut b);
        }
        let e = b - a;
        let (m12, m3) = (m * r, m * len_e);

        // Rows that the grown shadow can reach inside the box of grid
        // centres: clip the box by the three grown half-planes.
        let axe = a.cross(e);
        let planes = [(-a.y, a.x, m12), (b.y, -b.x, m12), (e.y, -e.x, m3 - axe)];
        let Some((ymin, ymax)) = clip_box_y(bx, by, &planes) else {
            continue;
        };
        let iy0 = (row_of(ymin).clamp(-2.0, ny as f64 + 2.0) - 1e-6).ceil() as i64;
        let iy1 = (row_of(ymax).clamp(-2.0, ny as f64 + 2.0) + 1e-6).floor() as i64;
        let tests = [
            // a × P: left of the ray through a.
            RowTest::new(-a.y, 0.0, a.x, m12, ox, step),
            // P × b: right of the ray through b.
            RowTest::new(b.y, 0.0, -b.x, m12, ox, step),
            // (P - a) × e: beyond the wall's line.
            RowTest::new(e.y, a.y * e.x - a.x * e.y, -e.x, m3, ox, step),
        ];
        for iy in iy0.max(0)..=iy1.min(ny as i64 - 1) {
            stats.rows_visited += 1;
            let iy = iy as usize;
            let yy = lo.y + (iy as f64 + 0.5) * step - tx.y;
            let (mut n0, mut n1, mut i0, mut i1) = (0i64, nxi - 1, 0i64, nxi - 1);
            for t in &tests {
                let (a0, a1, b0, b1) = t.columns(yy, ox, step, nxi);
                n0 = n0.max(a0);
                n1 = n1.min(a1);
                i0 = i0.max(b0);
                i1 = i1.min(b1);
            }
            if n0 > n1 {
                continue;
            }
            let row_base = (iy * nx) as u32;
            let mut boundary = |from: i64, to: i64| {
                for ix in from..=to {
                    scratch.boundary.push((row_base + ix as u32, wi as u32));
                }
            };
            if i0 > i1 {
                boundary(n0, n1);
            } else {
                debug_assert!(n0 <= i0 && i1 <= n1);
                boundary(n0, i0 - 1);
                boundary(i1 + 1, n1);
                run(wi, iy, i0 as usize, i1 as usize);
                stats.runs += 1;
                stats.run_points += (i1 - i0 + 1) as u64;
            }
        }
    }
    stats.boundary_pairs = scratch.boundary.len() as u64;
    scratch.stats += stats;
}

/// Resolve the boundary pairs and in-line walls left by [`cast`] with the
/// exact classifier, corners charged by `rank`: `f(i, crossings)` per
/// resolved point.
fn resolve(
    tx: Point2,
    grid: &Grid,
    walls: &[Segment],
    rank: CornerRank<'_>,
    scratch: &mut ShadowScratch,
    mut f: impl FnMut(usize, &[Crossing]),
) {
    let ShadowScratch {
        boundary,
        inline,
        collector,
        crossings,
        stats,
        ..
    } = scratch;
    boundary.sort_unstable();
    boundary.dedup();
    let mut at = |i: usize, ws: &mut dyn Iterator<Item = u32>| {
        stats.resolved_points += 1;
        let Some(ray) = Ray::new(tx, grid.point(i)) else {
            return;
        };
        collector.clear();
        for w in ws {
            ray.classify(w as usize, &walls[w as usize], collector);
        }
        collector.finish(&ray, walls, rank, crossings);
        if !crossings.is_empty() {
            f(i, crossings);
        }
    };
    let mut k = 0;
    if inline.is_empty() {
        while k < boundary.len() {
            let i = boundary[k].0;
            let mut j = k;
            while j < boundary.len() && boundary[j].0 == i {
                j += 1;
            }
            at(i as usize, &mut boundary[k..j].iter().map(|b| b.1));
            k = j;
        }
    } else {
        for i in 0..grid.len() {
            let j0 = k;
            while k < boundary.len() && boundary[k].0 as usize == i {
                k += 1;
            }
            at(
                i,
                &mut boundary[j0..k]
                    .iter()
                    .map(|b| b.1)
                    .chain(inline.iter().copied()),
            );
        }
    }
}
