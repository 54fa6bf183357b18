//! Door and window blocks placed in the wall they sit in. A wall drawn with a gap for the
//! door is bridged: the collinear walls either side and the opening become one wall.

use crate::flatten::OpeningInsert;
use crate::index::SegIndex;
use rfsite_geometry::{Point2, Segment};

/// A wall with its openings, in output coordinates (before materials are attached).
#[derive(Debug, Clone)]
pub struct PlacedWall {
    /// Layer index of the wall.
    pub layer: usize,
    /// Centreline.
    pub seg: Segment,
    /// Thickness.
    pub thickness: f64,
    /// Thickness measured from two face lines.
    pub measured: bool,
    /// Openings: (layer index of the block, offset from `seg.a`, width).
    pub openings: Vec<(usize, f64, f64)>,
}

/// What placing did.
#[derive(Debug, Default, Clone)]
pub struct PlaceCounts {
    /// Openings placed in a wall.
    pub placed: usize,
    /// Walls joined across a door or window gap.
    pub bridged: usize,
    /// Blocks not within reach of any wall (listed by insertion point).
    pub unplaced: Vec<Point2>,
    /// Blocks overlapping an opening already placed (dropped).
    pub overlapping: usize,
}

/// Places every opening block; `reach` is how far from a wall's face a block's insertion
/// point may lie, `gap` the collinearity tolerance.
pub fn place(
    mut walls: Vec<PlacedWall>,
    blocks: &[OpeningInsert],
    reach: f64,
    gap: f64,
) -> (Vec<PlacedWall>, PlaceCounts) {
    let mut counts = PlaceCounts::default();
    let mut alive = vec![true; walls.len()];
    let index = SegIndex::new(walls.iter().map(|w| w.seg), 2.0);
    // Walls stretched by a merge: their indexed boxes are stale, so they are always tried.
    let mut grown: Vec<usize> = Vec::new();
    for b in blocks {
        let near = index
            .near(b.at, reach + 1.0)
            .into_iter()
            .chain(grown.iter().copied());
        let Some(host) = host_wall(&walls, &alive, near, b.at, reach) else {
            counts.unplaced.push(b.at);
            continue;
        };
        let (d, n, a) = frame(&walls[host].seg);
        let (p0, p1) = span(b, d, a);
        if p1 - p0 <= 0.0 {
            counts.unplaced.push(b.at);
            continue;
        }
        let line_o = n.dot(a);
        let mut near: Vec<usize> = index.near(b.at, (p1 - p0).abs() + reach + 1.0);
        near.extend(grown.iter().copied());
        near.sort_unstable();
        near.dedup();
        let mates: Vec<usize> = near
            .into_iter()
            .filter(|&k| alive[k] && k != host && collinear(&walls[k].seg, d, n, line_o, gap))
            .filter(|&k| overlaps(&walls[k].seg, d, a, p0 - gap, p1 + gap))
            .collect();
        counts.bridged += mates.len();
        let merged = merge(&walls, host, &mates, d, a, (p0, p1));
        for k in mates {
            alive[k] = false;
        }
        walls[host] = merged;
        if !grown.contains(&host) {
            grown.push(host);
        }
        let w = &mut walls[host];
        let off = (p0 - d.dot(w.seg.a - a)).max(0.0);
        let width = (p1 - p0).min(w.seg.a.distance(w.seg.b) - off);
        if w.openings
            .iter()
            .any(|o| off < o.1 + o.2 && o.1 < off + width)
        {
            counts.overlapping += 1;
            continue;
        }
        w.openings.push((b.layer, off, width));
        counts.placed += 1;
    }
    let out = walls
        .into_iter()
        .zip(alive)
        .filter(|(_, a)| *a)
        .map(|(w, _)| w)
        .collect();
    (out, counts)
}

/// The wall whose face band holds `at` (perpendicular distance within half its thickness
/// plus `reach`, along-wall position within `reach` of its extent), nearest first.
fn host_wall(
    walls: &[PlacedWall],
    alive: &[bool],
    near: impl Iterator<Item = usize>,
    at: Point2,
    reach: f64,
) -> Option<usize> {
    let mut best: Option<(f64, f64, usize)> = None;
    for k in near {
        if !alive.get(k).copied().unwrap_or(false) {
            continue;
        }
        let w = &walls[k];
        let (d, n, a) = frame(&w.seg);
        let len = w.seg.a.distance(w.seg.b);
        let (t, o) = (d.dot(at - a), n.dot(at - a).abs());
        let outside = (-t).max(t - len).max(0.0);
        if o <= w.thickness / 2.0 + reach && outside <= reach {
            let key = (o, outside, k);
            if best.is_none_or(|b| (key.0, key.1) < (b.0, b.1)) {
                best = Some(key);
            }
        }
    }
    best.map(|b| b.2)
}

/// Unit direction, left normal and origin of a centreline.
fn frame(s: &Segment) -> (Point2, Point2, Point2) {
    let len = s.a.distance(s.b).max(1e-12);
    let d = Point2::new((s.b.x - s.a.x) / len, (s.b.y - s.a.y) / len);
    (d, Point2::new(-d.y, d.x), s.a)
}

/// The block's extent along the wall direction (the door leaf's swing spans its width).
fn span(b: &OpeningInsert, d: Point2, a: Point2) -> (f64, f64) {
    let ts = b.points.iter().map(|p| d.dot(*p - a));
    let lo = ts.clone().fold(f64::INFINITY, f64::min);
    let hi = ts.fold(f64::NEG_INFINITY, f64::max);
    (lo, hi)
}

fn collinear(s: &Segment, d: Point2, n: Point2, line_o: f64, gap: f64) -> bool {
    let (dk, _, _) = frame(s);
    (dk.x * d.y - dk.y * d.x).abs() < 1e-3
        && (n.dot(s.a) - line_o).abs() <= gap
        && (n.dot(s.b) - line_o).abs() <= gap
}

fn overlaps(s: &Segment, d: Point2, a: Point2, lo: f64, hi: f64) -> bool {
    let (ta, tb) = (d.dot(s.a - a), d.dot(s.b - a));
    ta.min(tb) <= hi && ta.max(tb) >= lo
}

/// The host wall stretched over its mates and the opening, openings carried over.
fn merge(
    walls: &[PlacedWall],
    host: usize,
    mates: &[usize],
    d: Point2,
    a: Point2,
    open: (f64, f64),
) -> PlacedWall {
    let mut lo = open.0;
    let mut hi = open.1;
    let mut ends = Vec::new();
    for &k in std::iter::once(&host).chain(mates) {
        let s = &walls[k].seg;
        let (ta, tb) = (d.dot(s.a - a), d.dot(s.b - a));
        lo = lo.min(ta.min(tb));
        hi = hi.max(ta.max(tb));
        ends.push((k, ta, tb));
    }
    let at = |t: f64| Point2::new(a.x + d.x * t, a.y + d.y * t);
    let mut out = walls[host].clone();
    out.seg = Segment::new(at(lo), at(hi));
    out.openings.clear();
    for (k, ta, tb) in ends {
        for &(layer, off, width) in &walls[k].openings {
            let start = if tb >= ta { ta + off } else { ta - off - width };
            out.openings.push((layer, start - lo, width));
        }
    }
    out.openings.sort_by(|x, y| x.1.total_cmp(&y.1));
    out
}
