//! Property: the grid index returns exactly what the brute-force reference
//! returns, on random plans full of shared corners and collinear pieces.

use crate::util::{assert_index_matches_brute, p, seg};
use proptest::prelude::*;
use rfsite_geometry::{Point2, Segment};

/// Coordinates mixing exact lattice values (shared corners, collinear
/// walls), decimals that are inexact in binary, and arbitrary values.
pub fn coord() -> impl Strategy<Value = f64> {
    prop_oneof![
        (0i32..=20).prop_map(f64::from),
        (0i32..=40).prop_map(|v| f64::from(v) * 0.5),
        (0i32..=200).prop_map(|v| f64::from(v) * 0.1),
        0.0f64..20.0,
    ]
}

pub fn random_wall() -> impl Strategy<Value = Segment> {
    (coord(), coord(), coord(), coord()).prop_map(|(a, b, c, d)| seg(a, b, c, d))
}

/// Axis-aligned rectangles on an integer lattice, optionally split into
/// unit-length collinear pieces, plus stray lattice walls.
pub fn room_plan() -> impl Strategy<Value = Vec<Segment>> {
    let rect = (0i32..10, 0i32..10, 1i32..6, 1i32..6, any::<bool>());
    let stray = (0i32..=12, 0i32..=12, any::<bool>(), 1i32..5);
    (
        prop::collection::vec(rect, 0..6),
        prop::collection::vec(stray, 0..8),
    )
        .prop_map(|(rects, strays)| {
            let mut walls = Vec::new();
            for (x, y, w, h, split) in rects {
                let corners = [(x, y), (x + w, y), (x + w, y + h), (x, y + h), (x, y)];
                for c in corners.windows(2) {
                    let ((x0, y0), (x1, y1)) = (c[0], c[1]);
                    let n = if split {
                        (x1 - x0).abs().max((y1 - y0).abs())
                    } else {
                        1
                    };
                    for k in 0..n {
                        let f = |a: i32, b: i32, k: i32| {
                            f64::from(a) + f64::from(b - a) * f64::from(k) / f64::from(n)
                        };
                        walls.push(seg(
                            f(x0, x1, k),
                            f(y0, y1, k),
                            f(x0, x1, k + 1),
                            f(y0, y1, k + 1),
                        ));
                    }
                }
            }
            for (x, y, horizontal, len) in strays {
                let (x, y) = (f64::from(x), f64::from(y));
                let l = f64::from(len);
                walls.push(if horizontal {
                    seg(x, y, x + l, y)
                } else {
                    seg(x, y, x, y + l)
                });
            }
            walls
        })
}

/// A path end point: free, lattice, on a wall end, or on a wall.
#[derive(Debug, Clone)]
struct End {
    kind: u8,
    wall: usize,
    x: f64,
    y: f64,
    f: u8,
}

fn end() -> impl Strategy<Value = End> {
    (
        0u8..6,
        any::<usize>(),
        -3.0f64..23.0,
        -3.0f64..23.0,
        0u8..=10,
    )
        .prop_map(|(kind, wall, x, y, f)| End {
            kind,
            wall,
            x,
            y,
            f,
        })
}

fn resolve(e: &End, walls: &[Segment], other: Option<Point2>) -> Point2 {
    if walls.is_empty() || e.kind == 0 {
        return p(e.x, e.y);
    }
    let w = walls[e.wall % walls.len()];
    match (e.kind, other) {
        (1, _) => w.a,
        (2, _) => w.b,
        (3, _) => w.point_at(f64::from(e.f) / 10.0),
        // Aim through a wall end point and beyond it.
        (4, Some(a)) => a + (w.a - a) * (1.0 + f64::from(e.f) / 4.0),
        _ => p(e.x.round(), e.y.round()),
    }
}

fn rays(walls: &[Segment], ends: &[(End, End)]) -> Vec<(Point2, Point2)> {
    ends.iter()
        .map(|(a, b)| {
            let pa = resolve(a, walls, None);
            (pa, resolve(b, walls, Some(pa)))
        })
        .collect()
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn index_equals_brute_force_on_random_segments(
        walls in prop::collection::vec(random_wall(), 0..40),
        ends in prop::collection::vec((end(), end()), 1..24),
    ) {
        assert_index_matches_brute(&walls, &rays(&walls, &ends));
    }

    #[test]
    fn index_equals_brute_force_on_room_like_plans(
        walls in room_plan(),
        ends in prop::collection::vec((end(), end()), 1..24),
    ) {
        assert_index_matches_brute(&walls, &rays(&walls, &ends));
    }

    #[test]
    fn crossings_are_sorted_and_in_range(
        walls in room_plan(),
        ends in prop::collection::vec((end(), end()), 1..24),
    ) {
        for (a, b) in rays(&walls, &ends) {
            let c = crate::util::brute(&walls, a, b);
            for w in c.windows(2) {
                prop_assert!((w[0].t, w[0].wall) < (w[1].t, w[1].wall));
            }
            for x in &c {
                prop_assert!(x.t > 0.0 && x.t < 1.0);
                prop_assert!((0.0..=1.0).contains(&x.cos_incidence));
            }
            // Reversing the path finds the same walls, mirrored in t.
            let mut back = crate::util::brute(&walls, b, a);
            back.reverse();
            let fw: Vec<_> = c.iter().map(|x| x.wall).collect();
            let bw: Vec<_> = back.iter().map(|x| x.wall).collect();
            if c.windows(2).all(|w| w[1].t - w[0].t > 1e-6) {
                prop_assert_eq!(fw, bw);
            }
        }
    }
}
