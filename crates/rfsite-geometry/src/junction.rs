//! Walls in junction form: every point where walls meet is an end point of
//! each of them.
//!
//! A plan drawn by hand or imported from a drawing shows the same building
//! in many ways: a long wall as one segment or as collinear pieces, a "+"
//! junction as one wall and two stubs or as four stubs, walls in any order
//! and either direction. [`split_at_junctions`] turns all of them into the
//! same set of pieces: each wall is cut wherever another wall's end point
//! lies on it (within [`EPS_M`]) and wherever two walls cross, every piece
//! is oriented from its lexicographically smaller end, and the pieces are
//! sorted by their coordinates. The crossing rules then meet every junction
//! as a corner, which counts once with the rank of the walls there (see the
//! crate documentation), so a prediction on the pieces depends only on the
//! geometry and the walls' losses.

use crate::crossing::EPS_M;
use crate::point::{distance_point_segment, segments_intersect_properly, Point2, Segment};
use std::cmp::Ordering;

/// A plan in junction form: the pieces and, for each, the index of the wall
/// (in the slice given to [`split_at_junctions`]) it was cut from.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct JunctionPlan {
    /// The pieces, sorted by coordinates (`a.x`, `a.y`, `b.x`, `b.y`), then
    /// by origin; each oriented so that `a` is the smaller end.
    pub pieces: Vec<Segment>,
    /// `origin[k]`: the wall piece `k` was cut from.
    pub origin: Vec<usize>,
}

/// Total order of points: by `x`, then `y`.
fn cmp_point(p: Point2, q: Point2) -> Ordering {
    p.x.total_cmp(&q.x).then(p.y.total_cmp(&q.y))
}

/// Total order of segments by their coordinates.
fn cmp_segment(s: &Segment, t: &Segment) -> Ordering {
    cmp_point(s.a, t.a).then(cmp_point(s.b, t.b))
}

/// `s` oriented from its smaller end point.
fn oriented(s: Segment) -> Segment {
    if cmp_point(s.b, s.a) == Ordering::Less {
        Segment::new(s.b, s.a)
    } else {
        s
    }
}

/// Whether `v` lies on `w` (within [`EPS_M`]) away from both of its ends.
fn on_interior(v: Point2, w: &Segment) -> bool {
    distance_point_segment(v, w) <= EPS_M && v.distance(w.a) > EPS_M && v.distance(w.b) > EPS_M
}

/// The crossing point of two properly intersecting segments, computed from
/// the smaller of the two (by [`cmp_segment`]) so that it does not depend on
/// which is given first.
fn crossing_point(s: &Segment, t: &Segment) -> Option<Point2> {
    let (s, t) = if cmp_segment(t, s) == Ordering::Less {
        (t, s)
    } else {
        (s, t)
    };
    let (es, et) = (s.b - s.a, t.b - t.a);
    let den = es.cross(et);
    let k = (t.a - s.a).cross(et) / den;
    let p = s.point_at(k);
    p.is_finite().then_some(p)
}

/// Records the cuts one pair of walls makes in each other.
fn cut_pair(walls: &[Segment], i: usize, j: usize, cuts: &mut [Vec<Point2>]) {
    let (wi, wj) = (&walls[i], &walls[j]);
    for (w, other, k) in [(wi, wj, i), (wj, wi, j)] {
        for v in [other.a, other.b] {
            if on_interior(v, w) {
                cuts[k].push(v);
            }
        }
    }
    if segments_intersect_properly(wi, wj) {
        if let Some(p) = crossing_point(wi, wj) {
            for (w, k) in [(wi, i), (wj, j)] {
                if on_interior(p, w) {
                    cuts[k].push(p);
                }
            }
        }
    }
}

/// Visits every pair of finite walls whose boxes overlap (grown by
/// [`EPS_M`]), by a sweep along `x`.
fn for_each_close_pair(walls: &[Segment], mut f: impl FnMut(usize, usize)) {
    let boxes: Vec<(Point2, Point2)> = walls.iter().map(|w| w.bbox()).collect();
    let mut order: Vec<usize> = (0..walls.len()).filter(|&i| walls[i].is_finite()).collect();
    order.sort_by(|&a, &b| boxes[a].0.x.total_cmp(&boxes[b].0.x).then(a.cmp(&b)));
    for (n, &i) in order.iter().enumerate() {
        let (lo, hi) = boxes[i];
        for &j in &order[n + 1..] {
            let (lo2, hi2) = boxes[j];
            if lo2.x > hi.x + EPS_M {
                break;
            }
            if lo2.y <= hi.y + EPS_M && lo.y <= hi2.y + EPS_M {
                f(i, j);
            }
        }
    }
}

/// The pieces of wall `w` cut at `cuts` (points on it), in order along it.
fn pieces_of(w: Segment, cuts: &mut [Point2]) -> Vec<Segment> {
    let e = w.b - w.a;
    let along = |p: &Point2| (*p - w.a).dot(e);
    cuts.sort_by(|p, q| along(p).total_cmp(&along(q)).then(cmp_point(*p, *q)));
    let mut out = Vec::with_capacity(cuts.len() + 1);
    let mut from = w.a;
    for &c in cuts.iter() {
        if c.distance(from) > EPS_M && c.distance(w.b) > EPS_M {
            out.push(Segment::new(from, c));
            from = c;
        }
    }
    out.push(Segment::new(from, w.b));
    out
}

/// The plan in junction form: each wall cut at every end point of another
/// wall lying on it and at every proper crossing with another wall, the
/// pieces oriented and sorted (see [`JunctionPlan`]). Walls with non-finite
/// coordinates are kept whole (the crossing rules ignore them). Cost: a
/// sweep over the walls' boxes, about `walls × walls overlapping in x`.
pub fn split_at_junctions(walls: &[Segment]) -> JunctionPlan {
    let oriented_walls: Vec<Segment> = walls.iter().map(|w| oriented(*w)).collect();
    let mut cuts: Vec<Vec<Point2>> = vec![Vec::new(); walls.len()];
    for_each_close_pair(&oriented_walls, |i, j| {
        cut_pair(&oriented_walls, i, j, &mut cuts)
    });
    let mut all: Vec<(Segment, usize)> = Vec::with_capacity(walls.len());
    for (k, (w, c)) in oriented_walls.iter().zip(cuts.iter_mut()).enumerate() {
        all.extend(pieces_of(*w, c).into_iter().map(|s| (oriented(s), k)));
    }
    all.sort_by(|x, y| cmp_segment(&x.0, &y.0).then(x.1.cmp(&y.1)));
    JunctionPlan {
        pieces: all.iter().map(|x| x.0).collect(),
        origin: all.iter().map(|x| x.1).collect(),
    }
}
