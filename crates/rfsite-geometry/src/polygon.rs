//! Simple-polygon helpers (rooms, floor outlines, zones).

use crate::crossing::EPS_M;
use crate::point::{distance_point_segment, Point2, Segment};

/// Edges of a polygon given as a vertex ring (closing edge implied).
fn edges(poly: &[Point2]) -> impl Iterator<Item = Segment> + '_ {
    let n = poly.len();
    (0..n).map(move |i| Segment::new(poly[i], poly[(i + 1) % n]))
}

/// Whether `p` lies inside `poly` by the even-odd rule. The vertex ring is
/// implicitly closed. Points on the boundary (within [`EPS_M`](crate::EPS_M)
/// of an edge) count as inside. Fewer than three vertices contain only their
/// boundary.
pub fn point_in_polygon(p: Point2, poly: &[Point2]) -> bool {
    if poly.is_empty() {
        return false;
    }
    if edges(poly).any(|e| distance_point_segment(p, &e) <= EPS_M) {
        return true;
    }
    let mut inside = false;
    for e in edges(poly) {
        let (a, b) = (e.a, e.b);
        // Half-open in y so a ray through a vertex is counted once.
        if (a.y > p.y) != (b.y > p.y) {
            let x = a.x + (p.y - a.y) * (b.x - a.x) / (b.y - a.y);
            if p.x < x {
                inside = !inside;
            }
        }
    }
    inside
}

/// Absolute area of `poly` (shoelace formula), square metres. Zero for fewer
/// than three vertices. Self-intersecting rings give the absolute signed sum.
pub fn polygon_area(poly: &[Point2]) -> f64 {
    if poly.len() < 3 {
        return 0.0;
    }
    // Relative to the first vertex to keep precision far from the origin.
    let o = poly[0];
    let twice: f64 = edges(poly).map(|e| (e.a - o).cross(e.b - o)).sum();
    (0.5 * twice).abs()
}

/// Axis-aligned bounding box `(min, max)` of `poly`; both corners are the
/// origin for an empty slice.
pub fn polygon_bbox(poly: &[Point2]) -> (Point2, Point2) {
    if poly.is_empty() {
        return (Point2::default(), Point2::default());
    }
    poly.iter().fold((poly[0], poly[0]), |(lo, hi), p| {
        (
            Point2::new(lo.x.min(p.x), lo.y.min(p.y)),
            Point2::new(hi.x.max(p.x), hi.y.max(p.y)),
        )
    })
}
