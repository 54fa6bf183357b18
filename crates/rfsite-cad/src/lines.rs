//! Straight pieces grouped by direction: collinear pieces joined, duplicates removed.
//!
//! Every piece is described in the frame of its direction class: `o` is its offset along
//! the class normal, `[t0, t1]` its extent along the class direction.

use rfsite_geometry::Point2;

/// One straight line in its direction class's frame.
#[derive(Debug, Clone, Copy)]
pub struct Line {
    /// Layer index.
    pub layer: usize,
    /// Direction class index.
    pub class: usize,
    /// Offset along the class normal.
    pub o: f64,
    /// Start along the class direction.
    pub t0: f64,
    /// End along the class direction (`t1 > t0`).
    pub t1: f64,
}

/// A direction class: a unit direction (angle in `[−tol, π − tol)`) and its left normal.
#[derive(Debug, Clone, Copy)]
pub struct Frame {
    /// Unit direction.
    pub d: Point2,
    /// Unit normal (the direction turned left).
    pub n: Point2,
}

impl Frame {
    /// The point at `t` along the direction and `o` along the normal.
    pub fn at(&self, t: f64, o: f64) -> Point2 {
        Point2::new(self.d.x * t + self.n.x * o, self.d.y * t + self.n.y * o)
    }
}

/// What joining did.
#[derive(Debug, Default, Clone, Copy)]
pub struct JoinCounts {
    /// Pieces lying wholly on another piece of the same layer.
    pub duplicates: usize,
    /// Pieces joined to a collinear neighbour (overlapping or within the gap tolerance).
    pub joined: usize,
}

/// Groups `segs` (layer, a, b) into direction classes within `angle_tol` radians and joins
/// collinear pieces of one layer whose offsets differ by at most `offset_tol` and whose
/// gap is at most `gap_tol`.
pub fn classify(
    segs: &[(usize, Point2, Point2)],
    angle_tol: f64,
    offset_tol: f64,
    gap_tol: f64,
) -> (Vec<Frame>, Vec<Line>, JoinCounts) {
    let mut by_angle: Vec<(f64, usize)> = segs
        .iter()
        .enumerate()
        .filter(|(_, s)| s.1.distance(s.2) > 1e-9)
        .map(|(i, s)| (canonical_angle(s.1, s.2, angle_tol), i))
        .collect();
    by_angle.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
    let mut frames = Vec::new();
    let mut lines = Vec::with_capacity(by_angle.len());
    let mut start = f64::NEG_INFINITY;
    for (ang, i) in by_angle {
        if ang - start > angle_tol || frames.is_empty() {
            start = ang;
            let d = Point2::new(ang.cos(), ang.sin());
            frames.push(Frame {
                d,
                n: Point2::new(-d.y, d.x),
            });
        }
        let class = frames.len() - 1;
        let f = frames[class];
        let (layer, a, b) = segs[i];
        let (ta, tb) = (f.d.dot(a), f.d.dot(b));
        let o = 0.5 * (f.n.dot(a) + f.n.dot(b));
        lines.push(Line {
            layer,
            class,
            o,
            t0: ta.min(tb),
            t1: ta.max(tb),
        });
    }
    let (lines, counts) = join(lines, offset_tol, gap_tol);
    (frames, lines, counts)
}

/// The segment's angle in `[−tol/2, π − tol/2)`, so that nearly horizontal lines drawn
/// either way land in one class.
fn canonical_angle(a: Point2, b: Point2, tol: f64) -> f64 {
    let mut ang = (b.y - a.y)
        .atan2(b.x - a.x)
        .rem_euclid(std::f64::consts::PI);
    if ang >= std::f64::consts::PI - tol / 2.0 {
        ang -= std::f64::consts::PI;
    }
    ang
}

/// Joins collinear pieces of one layer and class.
fn join(mut lines: Vec<Line>, offset_tol: f64, gap_tol: f64) -> (Vec<Line>, JoinCounts) {
    lines.sort_by(|a, b| {
        (a.class, a.layer)
            .cmp(&(b.class, b.layer))
            .then(a.o.total_cmp(&b.o))
            .then(a.t0.total_cmp(&b.t0))
    });
    let mut counts = JoinCounts::default();
    let mut out: Vec<Line> = Vec::with_capacity(lines.len());
    let mut group_start = 0;
    for l in lines {
        let same_line = out.get(group_start).is_some_and(|g: &Line| {
            g.class == l.class && g.layer == l.layer && (l.o - g.o).abs() <= offset_tol
        });
        if !same_line {
            group_start = out.len();
            out.push(l);
            continue;
        }
        if let Some(k) = out[group_start..]
            .iter()
            .rposition(|g| l.t0 <= g.t1 + gap_tol)
            .map(|k| k + group_start)
        {
            let g = &mut out[k];
            if l.t1 <= g.t1 {
                counts.duplicates += 1;
            } else {
                counts.joined += 1;
                g.t1 = l.t1;
            }
            continue;
        }
        out.push(l);
    }
    (out, counts)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn split_reversed_and_repeated_pieces_become_one_line() {
        let p = Point2::new;
        let segs = vec![
            (0, p(0.0, 0.0), p(2.0, 0.0)),
            (0, p(5.0, 0.0), p(2.0, 0.0)),  // reversed, touching
            (0, p(1.0, 0.0), p(1.5, 0.0)),  // duplicate
            (0, p(5.01, 0.0), p(6.0, 0.0)), // 10 mm gap
        ];
        let (_, lines, c) = classify(&segs, 1e-3, 5e-4, 0.02);
        assert_eq!(lines.len(), 1);
        assert!((lines[0].t0 - 0.0).abs() < 1e-12 && (lines[0].t1 - 6.0).abs() < 1e-12);
        assert_eq!((c.duplicates, c.joined), (1, 2));
    }
}
