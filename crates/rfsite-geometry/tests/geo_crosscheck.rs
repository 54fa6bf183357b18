//! Cross-checks against an independent implementation, the `geo` crate
//! (geo 0.30 `line_intersection`, `Area`, `Contains`).

use crate::util::{p, seg};
use geo::algorithm::line_intersection::{line_intersection, LineIntersection};
use geo::{coord, Area, Contains, Line, LineString, Polygon};
use proptest::prelude::*;
use rfsite_geometry::{
    distance_point_segment, point_in_polygon, polygon_area, Point2, Segment, WallIndex,
};

fn line(s: &Segment) -> Line<f64> {
    Line::new(coord! { x: s.a.x, y: s.a.y }, coord! { x: s.b.x, y: s.b.y })
}

/// Within this distance the two implementations may legitimately disagree
/// (tolerance vs. exact predicates); such walls are left out of the check.
const NEAR_M: f64 = 1e-6;

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn crossed_walls_agree_with_geo_line_intersection(
        raw_walls in prop::collection::vec((0.0f64..20.0, 0.0f64..20.0, 0.0f64..20.0, 0.0f64..20.0), 1..60),
        raw_rays in prop::collection::vec((-5.0f64..25.0, -5.0f64..25.0, -5.0f64..25.0, -5.0f64..25.0), 1..20),
    ) {
        let walls: Vec<Segment> = raw_walls.iter().map(|&(a, b, c, d)| seg(a, b, c, d)).collect();
        let index = WallIndex::new(&walls);
        let mut out = Vec::new();
        for &(x0, y0, x1, y1) in &raw_rays {
            let path = seg(x0, y0, x1, y1);
            index.crossings(path.a, path.b, &mut out);
            for (i, w) in walls.iter().enumerate() {
                let near = [w.a, w.b].iter().any(|&v| distance_point_segment(v, &path) < NEAR_M)
                    || [path.a, path.b].iter().any(|&v| distance_point_segment(v, w) < NEAR_M);
                if near {
                    continue;
                }
                let geo_hit = match line_intersection(line(&path), line(w)) {
                    Some(LineIntersection::SinglePoint { intersection, is_proper }) => {
                        is_proper.then_some(p(intersection.x, intersection.y))
                    }
                    _ => None,
                };
                let ours = out.iter().find(|c| c.wall == i);
                prop_assert_eq!(ours.is_some(), geo_hit.is_some(), "wall {} {:?} path {:?}", i, w, path);
                if let (Some(c), Some(g)) = (ours, geo_hit) {
                    let at = path.point_at(c.t);
                    prop_assert!(at.distance(g) < 1e-6, "point {:?} vs geo {:?}", at, g);
                }
            }
        }
    }

    #[test]
    fn polygon_area_and_containment_agree_with_geo(
        radii in prop::collection::vec(1.0f64..10.0, 3..12),
        probes in prop::collection::vec((-12.0f64..12.0, -12.0f64..12.0), 1..30),
    ) {
        // A star-shaped (simple) polygon around the origin.
        let n = radii.len();
        let ring: Vec<Point2> = radii.iter().enumerate().map(|(i, r)| {
            let a = std::f64::consts::TAU * i as f64 / n as f64;
            p(r * a.cos(), r * a.sin())
        }).collect();
        let poly = Polygon::new(LineString::from(ring.iter().map(|q| (q.x, q.y)).collect::<Vec<_>>()), vec![]);
        prop_assert!((polygon_area(&ring) - poly.unsigned_area()).abs() < 1e-9);
        for (x, y) in probes {
            let q = p(x, y);
            let on_edge = (0..n).any(|i| distance_point_segment(q, &Segment::new(ring[i], ring[(i + 1) % n])) < NEAR_M);
            if !on_edge {
                prop_assert_eq!(point_in_polygon(q, &ring), poly.contains(&geo::Point::new(x, y)));
            }
        }
    }
}
