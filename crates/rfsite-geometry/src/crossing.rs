//! The crossing rules, shared by the reference implementation and the index.
//!
//! Both [`crossings_brute_force`] and [`WallIndex`](crate::WallIndex) run
//! every candidate wall through the same [`Ray::classify`] and the same
//! [`Collector::finish`], so they agree bit for bit whenever the index offers
//! every wall that lies within [`EPS_M`] of the path.

use crate::point::{Point2, Segment};

/// Geometric tolerance, metres: points closer than this to a line count as
/// lying on it, and crossings closer than this (along the path) to a path end
/// point count as touching that end point.
pub const EPS_M: f64 = 1e-9;

/// One crossing of a path by a wall.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Crossing {
    /// Index of the wall in the slice given to the index (or to
    /// [`crossings_brute_force`]). At a shared corner, the wall of largest
    /// [`CornerRank`] among the walls ending there (the lowest index among
    /// equals).
    pub wall: usize,
    /// Position along the path, strictly between 0 (at `p`) and 1 (at `q`).
    pub t: f64,
    /// `|cos|` of the angle between the path direction and the wall normal,
    /// in `0..=1`; 1 is normal incidence.
    pub cos_incidence: f64,
}

/// How a counted corner chooses the wall it charges: `rank(wall,
/// cos_incidence)`, typically the loss in dB of that wall at that incidence.
/// The corner charges the wall of largest rank, once; among equal ranks the
/// lowest index (so equal ranks give the same charge whatever the order).
pub type CornerRank<'a> = &'a dyn Fn(usize, f64) -> f64;

/// The rank that makes every wall equal: a corner charges its lowest index.
pub fn no_rank(_wall: usize, _cos: f64) -> f64 {
    0.0
}

/// A wall end point lying on the open path; resolved per corner later.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Touch {
    wall: usize,
    t: f64,
    /// Whether the wall's other end lies left of the path.
    left: bool,
    /// Unit direction from the touching end along the wall (its arm).
    arm: Point2,
}

/// The outcome of one wall for one path.
enum Event {
    None,
    Cross(Crossing),
    Touch(Touch),
}

/// Per-query event buffers, reused across queries.
#[derive(Debug, Default, Clone)]
pub(crate) struct Collector {
    crosses: Vec<Crossing>,
    touches: Vec<Touch>,
}

/// A query path with the quantities every wall test needs.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Ray {
    pub(crate) p: Point2,
    pub(crate) q: Point2,
    /// `q - p`.
    pub(crate) d: Point2,
    /// Unit direction.
    u: Point2,
    inv_len: f64,
    /// [`EPS_M`] as a fraction of the path length.
    t_eps: f64,
}

impl Ray {
    /// `None` for a path that cannot cross anything: non-finite end points or
    /// shorter than twice the tolerance.
    pub(crate) fn new(p: Point2, q: Point2) -> Option<Ray> {
        if !p.is_finite() || !q.is_finite() {
            return None;
        }
        let d = q - p;
        let len = d.length();
        if len <= 2.0 * EPS_M || !len.is_finite() {
            return None;
        }
        let inv_len = 1.0 / len;
        Some(Ray {
            p,
            q,
            d,
            u: d * inv_len,
            inv_len,
            t_eps: EPS_M * inv_len,
        })
    }

    /// Apply the crossing rules to one wall, recording a crossing or a
    /// corner touch in `c`. `w` must be finite.
    #[inline]
    pub(crate) fn classify(&self, wall: usize, w: &Segment, c: &mut Collector) {
        match self.event(wall, w) {
            Event::None => {}
            Event::Cross(x) => c.crosses.push(x),
            Event::Touch(t) => c.touches.push(t),
        }
    }

    /// The crossing of a wall that is not a corner touch, if any (used where
    /// the wall is known to cross cleanly).
    #[inline]
    pub(crate) fn crossing(&self, wall: usize, w: &Segment) -> Option<Crossing> {
        match self.event(wall, w) {
            Event::Cross(x) => Some(x),
            _ => None,
        }
    }

    /// What one wall does to the path under the crossing rules.
    #[inline]
    fn event(&self, wall: usize, w: &Segment) -> Event {
        // Signed perpendicular distances of the wall ends from the path line;
        // positive = left of p → q.
        let da = self.u.cross(w.a - self.p);
        let db = self.u.cross(w.b - self.p);
        let a_on = da.abs() <= EPS_M;
        let b_on = db.abs() <= EPS_M;
        if a_on || b_on {
            if a_on && b_on {
                // Collinear with the path (or degenerate): grazing, never a crossing.
                return Event::None;
            }
            let (v, other, far) = if a_on { (w.a, db, w.b) } else { (w.b, da, w.a) };
            let t = self.u.dot(v - self.p) * self.inv_len;
            if t > self.t_eps && t < 1.0 - self.t_eps {
                return Event::Touch(Touch {
                    wall,
                    t,
                    left: other > 0.0,
                    arm: Segment::new(v, far).direction(),
                });
            }
            return Event::None;
        }
        if (da > 0.0) == (db > 0.0) {
            return Event::None;
        }
        // The wall strictly straddles the path line; find where along the path.
        let e = w.b - w.a;
        let dp = e.cross(self.p - w.a);
        let dq = e.cross(self.q - w.a);
        let t = dp / (dp - dq);
        if t > self.t_eps && t < 1.0 - self.t_eps {
            return Event::Cross(Crossing {
                wall,
                t,
                cos_incidence: self.cos_incidence(w),
            });
        }
        Event::None
    }

    pub(crate) fn cos_incidence(&self, w: &Segment) -> f64 {
        let e = w.b - w.a;
        let len = e.length();
        if len > 0.0 {
            (self.u.cross(e) / len).abs().min(1.0)
        } else {
            0.0
        }
    }
}

impl Collector {
    pub(crate) fn clear(&mut self) {
        self.crosses.clear();
        self.touches.clear();
    }

    /// Resolve corner touches and write the sorted result to `out` (cleared
    /// first).
    pub(crate) fn finish(
        &mut self,
        ray: &Ray,
        walls: &[Segment],
        rank: CornerRank<'_>,
        out: &mut Vec<Crossing>,
    ) {
        out.clear();
        out.extend_from_slice(&self.crosses);
        let touches = &mut self.touches;
        touches.sort_unstable_by(|a, b| a.t.total_cmp(&b.t).then(a.wall.cmp(&b.wall)));
        let mut i = 0;
        while i < touches.len() {
            // A corner: a run of touches whose positions chain within the tolerance.
            let mut j = i + 1;
            while j < touches.len() && touches[j].t - touches[j - 1].t <= ray.t_eps {
                j += 1;
            }
            let corner = &touches[i..j];
            let any_left = corner.iter().any(|t| t.left);
            let any_right = corner.iter().any(|t| !t.left);
            if any_left && any_right {
                // The path passes from one side of the wall chain to the other:
                // one crossing, charged to the wall of largest rank.
                corner_crossings(ray, walls, rank, corner, out);
            }
            i = j;
        }
        out.sort_unstable_by(|a, b| a.t.total_cmp(&b.t).then(a.wall.cmp(&b.wall)));
    }
}

/// Whether two arms of a corner point the same way (walls drawn on top of
/// each other).
fn same_arm(a: Point2, b: Point2) -> bool {
    a.cross(b).abs() <= EPS_M && a.dot(b) > 0.0
}

/// The crossings of a counted corner (touches sorted by `t`, non-empty), all
/// at the corner's first `t`. Walls whose arms coincide (drawn on top of each
/// other) form one stack ranked by the sum of their ranks, as they would be
/// crossed together away from the corner; the corner is charged the stack of
/// largest rank: each of its walls, at its own incidence. Among equal ranks,
/// the stack holding the lowest index.
fn corner_crossings(
    ray: &Ray,
    walls: &[Segment],
    rank: CornerRank<'_>,
    corner: &[Touch],
    out: &mut Vec<Crossing>,
) {
    let t = corner.first().map_or(0.5, |c| c.t);
    let cos = |w: usize| ray.cos_incidence(&walls[w]);
    // (rank sum, lowest wall, index of the first touch of the stack)
    let mut best: Option<(f64, usize, usize)> = None;
    for (k, c) in corner.iter().enumerate() {
        if corner[..k].iter().any(|o| same_arm(o.arm, c.arm)) {
            continue;
        }
        let stack = corner[k..].iter().filter(|o| same_arm(o.arm, c.arm));
        let (r, low) = stack.fold((0.0, usize::MAX), |(r, low), o| {
            (r + rank(o.wall, cos(o.wall)), low.min(o.wall))
        });
        let better = match best {
            None => true,
            Some((br, bl, _)) => r > br || (r == br && low < bl),
        };
        if better {
            best = Some((r, low, k));
        }
    }
    let Some((_, _, k)) = best else { return };
    let arm = corner[k].arm;
    for o in corner[k..].iter().filter(|o| same_arm(o.arm, arm)) {
        out.push(Crossing {
            wall: o.wall,
            t,
            cos_incidence: cos(o.wall),
        });
    }
}

/// Reference implementation: tests every wall against the path `p → q` and
/// writes the crossings to `out` (cleared first), sorted by `t`, then by wall
/// index. Walls with non-finite coordinates are ignored. See the crate
/// documentation for the crossing rules.
pub fn crossings_brute_force(walls: &[Segment], p: Point2, q: Point2, out: &mut Vec<Crossing>) {
    crossings_brute_force_ranked(walls, p, q, &no_rank, out);
}

/// As [`crossings_brute_force`], a counted corner charging the wall of
/// largest `rank` (see [`CornerRank`]).
pub fn crossings_brute_force_ranked(
    walls: &[Segment],
    p: Point2,
    q: Point2,
    rank: CornerRank<'_>,
    out: &mut Vec<Crossing>,
) {
    out.clear();
    let Some(ray) = Ray::new(p, q) else {
        return;
    };
    let mut c = Collector::default();
    for (i, w) in walls.iter().enumerate() {
        if w.is_finite() {
            ray.classify(i, w, &mut c);
        }
    }
    c.finish(&ray, walls, rank, out);
}
