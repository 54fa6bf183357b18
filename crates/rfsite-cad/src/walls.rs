//! Walls as drawn: parallel face lines on one layer paired into one wall along their
//! overlap (thickness = the measured separation); single lines kept with the mapped
//! thickness; short remnants (end caps, junction pieces) dropped; wall ends extended to
//! the wall they stop against.

use crate::lines::{Frame, Line};
use rfsite_geometry::{Point2, Segment};

/// A wall centreline found in the drawing, in output coordinates.
#[derive(Debug, Clone)]
pub struct FoundWall {
    /// Layer index.
    pub layer: usize,
    /// Centreline.
    pub seg: Segment,
    /// Thickness: the measured face separation (paired), or `None` (a single line).
    pub measured: Option<f64>,
}

/// Pairing tolerances.
#[derive(Debug, Clone, Copy)]
pub struct PairSpec {
    /// Thinnest face separation that is a wall.
    pub min_thickness: f64,
    /// Thickest face separation that is a wall.
    pub max_thickness: f64,
    /// Gaps up to this are closed.
    pub gap: f64,
}

/// What pairing did.
#[derive(Debug, Default, Clone, Copy)]
pub struct PairCounts {
    /// Walls made from two face lines.
    pub paired: usize,
    /// Walls made from one line.
    pub single: usize,
    /// Line pieces no longer than the thickest wall left over after pairing (dropped).
    pub remnants: usize,
    /// Wall ends extended to the wall they stop against.
    pub ends_extended: usize,
}

/// Pairs the lines of every class and layer.
pub fn pair(frames: &[Frame], lines: &[Line], spec: &PairSpec) -> (Vec<FoundWall>, PairCounts) {
    let mut covered: Vec<Vec<(f64, f64)>> = vec![Vec::new(); lines.len()];
    let mut counts = PairCounts::default();
    let mut walls = Vec::new();
    for (sep, i, j) in candidates(lines, spec) {
        let (a, b) = (&lines[i], &lines[j]);
        let over = (a.t0.max(b.t0), a.t1.min(b.t1));
        for (s0, s1) in subtract(subtract(vec![over], &covered[i]), &covered[j]) {
            if s1 - s0 <= sep.max(spec.gap) {
                continue;
            }
            let o = 0.5 * (a.o + b.o);
            let f = frames[a.class];
            walls.push(FoundWall {
                layer: a.layer,
                seg: Segment::new(f.at(s0, o), f.at(s1, o)),
                measured: Some(sep),
            });
            counts.paired += 1;
            covered[i].push((s0, s1));
            covered[j].push((s0, s1));
        }
    }
    for (l, cov) in lines.iter().zip(&covered) {
        for (s0, s1) in subtract(vec![(l.t0, l.t1)], cov) {
            if s1 - s0 <= spec.max_thickness {
                counts.remnants += 1;
                continue;
            }
            let f = frames[l.class];
            walls.push(FoundWall {
                layer: l.layer,
                seg: Segment::new(f.at(s0, l.o), f.at(s1, l.o)),
                measured: None,
            });
            counts.single += 1;
        }
    }
    (walls, counts)
}

/// Face pairs of one layer and class, nearest separation first: `(separation, i, j)`.
fn candidates(lines: &[Line], spec: &PairSpec) -> Vec<(f64, usize, usize)> {
    let mut order: Vec<usize> = (0..lines.len()).collect();
    order.sort_by(|&x, &y| {
        let (a, b) = (&lines[x], &lines[y]);
        (a.class, a.layer)
            .cmp(&(b.class, b.layer))
            .then(a.o.total_cmp(&b.o))
    });
    let mut out = Vec::new();
    for (k, &i) in order.iter().enumerate() {
        let a = &lines[i];
        for &j in &order[k + 1..] {
            let b = &lines[j];
            if b.class != a.class || b.layer != a.layer || b.o - a.o > spec.max_thickness {
                break;
            }
            let sep = b.o - a.o;
            if sep >= spec.min_thickness && a.t0.max(b.t0) < a.t1.min(b.t1) {
                out.push((sep, i.min(j), i.max(j)));
            }
        }
    }
    out.sort_by(|x, y| x.0.total_cmp(&y.0).then((x.1, x.2).cmp(&(y.1, y.2))));
    out
}

/// `iv` minus every interval of `cut`.
fn subtract(iv: Vec<(f64, f64)>, cut: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let mut cur = iv;
    for &(c0, c1) in cut {
        let mut next = Vec::with_capacity(cur.len() + 1);
        for (s0, s1) in cur {
            if c1 <= s0 || c0 >= s1 {
                next.push((s0, s1));
                continue;
            }
            if c0 > s0 {
                next.push((s0, c0));
            }
            if c1 < s1 {
                next.push((c1, s1));
            }
        }
        cur = next;
    }
    cur
}

/// Extends each wall end, along its own direction, to the centreline of a wall it stops
/// against: within that wall's half thickness plus the gap tolerance (the face line of a
/// T or the inner corner of an L). `thickness[i]` is wall `i`'s thickness.
pub fn extend_ends(walls: &mut [FoundWall], thickness: &[f64], gap: f64) -> usize {
    let index = crate::index::SegIndex::new(walls.iter().map(|w| w.seg), 2.0);
    let mut moves = Vec::new();
    for (i, w) in walls.iter().enumerate() {
        for end in [0, 1] {
            if let Some(p) = stop_point(walls, thickness, &index, i, w, end, gap) {
                moves.push((i, end, p));
            }
        }
    }
    let n = moves.len();
    for (i, end, p) in moves {
        if end == 0 {
            walls[i].seg.a = p;
        } else {
            walls[i].seg.b = p;
        }
    }
    n
}

/// Where end `end` of wall `i` meets the nearest centreline ahead of it within reach.
fn stop_point(
    walls: &[FoundWall],
    thickness: &[f64],
    index: &crate::index::SegIndex,
    i: usize,
    w: &FoundWall,
    end: usize,
    gap: f64,
) -> Option<Point2> {
    let (p, q) = if end == 0 {
        (w.seg.a, w.seg.b)
    } else {
        (w.seg.b, w.seg.a)
    };
    let len = p.distance(q);
    if len <= 0.0 {
        return None;
    }
    let u = Point2::new((p.x - q.x) / len, (p.y - q.y) / len);
    let mut best: Option<(f64, Point2)> = None;
    for j in index.near(p, 1.0) {
        if j == i {
            continue;
        }
        let reach = thickness[j] / 2.0 + gap;
        if let Some(s) = ray_hits(p, u, &walls[j].seg, reach) {
            if s > 1e-9 && s <= reach && best.is_none_or(|b| s < b.0) {
                best = Some((s, Point2::new(p.x + u.x * s, p.y + u.y * s)));
            }
        }
    }
    best.map(|b| b.1)
}

/// Distance along the ray `p + s·u` to the line of `seg` extended by `ext` at both ends,
/// if the ray meets it there and is not parallel to it.
fn ray_hits(p: Point2, u: Point2, seg: &Segment, ext: f64) -> Option<f64> {
    let w = Point2::new(seg.b.x - seg.a.x, seg.b.y - seg.a.y);
    let wl = (w.x * w.x + w.y * w.y).sqrt();
    let den = u.x * w.y - u.y * w.x;
    if wl <= 0.0 || den.abs() < 1e-6 * wl {
        return None;
    }
    let (dx, dy) = (seg.a.x - p.x, seg.a.y - p.y);
    let s = (dx * w.y - dy * w.x) / den;
    let r = (dx * u.y - dy * u.x) / den;
    let slack = ext / wl;
    (r >= -slack && r <= 1.0 + slack).then_some(s)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::lines::classify;

    fn p(x: f64, y: f64) -> Point2 {
        Point2::new(x, y)
    }

    #[test]
    fn t_junction_pairs_three_walls_and_closes_the_partition_to_the_centreline() {
        // Hand-drawn T: a 0.2 m wall along y = 0..0.2 (x 0..10), the upper face broken at
        // x 4.9..5.1 by a 0.2 m partition running up to y = 5.
        let segs = vec![
            (0, p(0.0, 0.0), p(10.0, 0.0)),
            (0, p(0.0, 0.2), p(4.9, 0.2)),
            (0, p(5.1, 0.2), p(10.0, 0.2)),
            (0, p(4.9, 0.2), p(4.9, 5.0)),
            (0, p(5.1, 0.2), p(5.1, 5.0)),
        ];
        let (frames, lines, _) = classify(&segs, 1e-3, 5e-4, 0.005);
        let spec = PairSpec {
            min_thickness: 0.01,
            max_thickness: 0.5,
            gap: 0.005,
        };
        let (mut walls, c) = pair(&frames, &lines, &spec);
        assert_eq!((c.paired, c.single, c.remnants), (3, 0, 1));
        let th: Vec<f64> = walls.iter().map(|w| w.measured.unwrap_or(0.1)).collect();
        // The partition's foot and both main-wall ends at the gap reach a centreline.
        assert_eq!(extend_ends(&mut walls, &th, 0.005), 3);
        let part = walls
            .iter()
            .find(|w| (w.seg.a.x - 5.0).abs() < 1e-9)
            .map(|w| w.seg);
        let part = part.expect("partition");
        let low = part.a.y.min(part.b.y);
        assert!(
            (low - 0.1).abs() < 1e-9,
            "partition ends on the main centreline: {low}"
        );
        let mains: Vec<f64> = walls
            .iter()
            .filter(|w| (w.seg.a.y - 0.1).abs() < 1e-9 && (w.seg.b.y - 0.1).abs() < 1e-9)
            .flat_map(|w| [w.seg.a.x, w.seg.b.x])
            .filter(|x| (x - 5.0).abs() < 0.2)
            .collect();
        assert!(
            mains.len() == 2 && mains.iter().all(|x| (x - 5.0).abs() < 1e-9),
            "{mains:?}"
        );
    }
}
