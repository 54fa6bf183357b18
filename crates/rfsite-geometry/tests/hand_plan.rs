//! A 10 m × 10 m room counted by hand ("hand count" below).

use crate::util::{assert_index_matches_brute, brute, p, seg};
use rfsite_geometry::{Crossing, Point2, Segment, WallIndex};

/// Outline W0..W3, interior L-shaped wall W4 (T-junction on W0 at (5, 0))
/// and W5, meeting at the corner (5, 5).
fn plan() -> Vec<Segment> {
    vec![
        seg(0.0, 0.0, 10.0, 0.0),   // W0 south
        seg(10.0, 0.0, 10.0, 10.0), // W1 east
        seg(10.0, 10.0, 0.0, 10.0), // W2 north
        seg(0.0, 10.0, 0.0, 0.0),   // W3 west
        seg(5.0, 0.0, 5.0, 5.0),    // W4 interior, vertical
        seg(5.0, 5.0, 8.0, 5.0),    // W5 interior, horizontal
    ]
}

/// Both implementations, with the hand count as `(wall, t)`.
fn check(a: Point2, b: Point2, expected: &[(usize, f64)]) -> Vec<Crossing> {
    let walls = plan();
    let got = brute(&walls, a, b);
    let pairs: Vec<usize> = got.iter().map(|c| c.wall).collect();
    let want: Vec<usize> = expected.iter().map(|e| e.0).collect();
    assert_eq!(pairs, want, "hand count for {a:?} -> {b:?}: {got:?}");
    for (c, e) in got.iter().zip(expected) {
        assert!((c.t - e.1).abs() < 1e-12, "t for {a:?} -> {b:?}: {c:?}");
        assert!(c.t > 0.0 && c.t < 1.0);
        assert!((0.0..=1.0).contains(&c.cos_incidence));
    }
    let mut out = Vec::new();
    WallIndex::new(&walls).crossings(a, b, &mut out);
    assert_eq!(out, got, "index vs brute force for {a:?} -> {b:?}");
    assert_index_matches_brute(&walls, &[(a, b)]);
    got
}

#[test]
fn straight_through_one_wall_at_normal_incidence() {
    let c = check(p(2.0, 2.0), p(8.0, 2.0), &[(4, 0.5)]);
    assert_eq!(c[0].cos_incidence, 1.0);
}

#[test]
fn outside_to_outside_crosses_outline_twice_and_interior_once() {
    check(
        p(-1.0, 3.0),
        p(11.0, 3.0),
        &[(3, 1.0 / 12.0), (4, 0.5), (1, 11.0 / 12.0)],
    );
}

#[test]
fn oblique_incidence_cosine() {
    // Direction (3, 4)/5 against the vertical wall W4 (normal ±x): cos = 0.6.
    let c = check(p(2.0, 0.5), p(8.0, 8.5), &[(4, 0.5), (5, 0.5625)]);
    assert!((c[0].cos_incidence - 0.6).abs() < 1e-12);
    // W5 is horizontal (normal ±y): cos = 0.8.
    assert!((c[1].cos_incidence - 0.8).abs() < 1e-12);
}

#[test]
fn through_shared_corner_counts_once_lowest_index() {
    // x + y = 10 passes (5, 5) and enters the L's inner quadrant.
    check(p(2.0, 8.0), p(8.0, 2.0), &[(4, 0.5)]);
    check(p(8.0, 2.0), p(2.0, 8.0), &[(4, 0.5)]);
}

#[test]
fn touching_corner_from_outside_counts_zero() {
    // y = x passes (5, 5) with both W4 and W5 on its right.
    check(p(1.0, 1.0), p(9.0, 9.0), &[]);
    check(p(9.0, 9.0), p(1.0, 1.0), &[]);
}

#[test]
fn outline_corner_entering_counts_once_touching_counts_zero() {
    // Into the room through (0, 0): W0 and W3 meet there.
    check(p(-1.0, -1.0), p(3.0, 3.0), &[(0, 0.25)]);
    // Skimming the outside of the corner.
    check(p(-1.0, 1.0), p(1.0, -1.0), &[]);
}

#[test]
fn along_a_wall_counts_zero() {
    // Along W5 (collinear) and through W4's top end (touch only): just the
    // outline walls W3 and W1 count.
    check(
        p(-1.0, 5.0),
        p(11.0, 5.0),
        &[(3, 1.0 / 12.0), (1, 11.0 / 12.0)],
    );
    // Along W4 inside, partly overlapping.
    check(p(5.0, 1.0), p(5.0, 4.0), &[]);
    // Along the outline from outside to outside: W0 collinear, W3 and W1
    // only touched at their ends, W4 touched at its end.
    check(p(-1.0, 0.0), p(11.0, 0.0), &[]);
}

#[test]
fn ending_or_starting_on_a_wall_counts_zero() {
    check(p(2.0, 2.0), p(5.0, 3.0), &[]);
    check(p(5.0, 3.0), p(8.0, 3.0), &[]);
    // Transmitter exactly at the corner.
    check(p(5.0, 5.0), p(8.0, 8.0), &[]);
    check(p(5.0, 5.0), p(8.0, 2.0), &[]);
    // Ending on the outline from outside.
    check(p(-3.0, 4.0), p(0.0, 4.0), &[]);
}

#[test]
fn t_junction_counts_the_through_wall_once() {
    // Through (5, 0) where W4 ends on the interior of W0.
    check(p(3.0, -2.0), p(7.0, 2.0), &[(0, 0.5)]);
}

#[test]
fn corner_rounding_noise_never_gives_zero_or_two() {
    let walls = plan();
    let index = WallIndex::new(&walls);
    let mut out = Vec::new();
    let noise = [0.0, 1e-15, -1e-15, 3e-13, -7e-12, 1e-11];
    for &ex in &noise {
        for &ey in &noise {
            // Crossing at the L corner: always exactly one, always W4.
            let (a, b) = (p(2.0 + ex, 8.0 - ey), p(8.0 - ey, 2.0 + ex));
            index.crossings(a, b, &mut out);
            assert_eq!(out.len(), 1, "{a:?} -> {b:?}: {out:?}");
            assert_eq!(out[0].wall, 4);
            assert_eq!(brute(&walls, a, b), out);
            // Touching the L corner: always zero.
            let (a, b) = (p(1.0 + ex, 1.0 - ey), p(9.0 - ex, 9.0 + ey));
            index.crossings(a, b, &mut out);
            assert!(out.is_empty(), "{a:?} -> {b:?}: {out:?}");
        }
    }
    // Coordinates that are not exact in binary: 0.1 steps through (5, 5).
    let a = p(0.1 * 23.0, 0.1 * 77.0);
    let b = p(10.0 - a.x, 10.0 - a.y);
    index.crossings(a, b, &mut out);
    assert_eq!(out.len(), 1, "{out:?}");
}

#[test]
fn three_walls_at_a_corner_count_once_with_lowest_index() {
    // A T made of three walls ending at (5, 5), listed out of order.
    let walls = vec![
        seg(5.0, 5.0, 5.0, 9.0), // 0 up
        seg(9.0, 5.0, 5.0, 5.0), // 1 right (ends at the corner)
        seg(5.0, 5.0, 1.0, 5.0), // 2 left
    ];
    // Diagonal up-right: left ray on one side, right on the other.
    let c = brute(&walls, p(2.0, 2.0), p(8.0, 8.0));
    assert_eq!(c.len(), 1, "{c:?}");
    assert_eq!(c[0].wall, 0);
    // Straight up along wall 0 (collinear, left out of the side test): the
    // bar's two halves lie on opposite sides, so one crossing, wall 1.
    let c = brute(&walls, p(5.0, 1.0), p(5.0, 8.0));
    assert_eq!(c.len(), 1, "{c:?}");
    assert_eq!(c[0].wall, 1);
    // Diagonal across the bar from above-left: one crossing.
    let c = brute(&walls, p(2.0, 8.0), p(8.0, 2.0));
    assert_eq!(c.len(), 1, "{c:?}");
    assert_eq!(c[0].wall, 0);
    // Along the bar: both halves collinear, the stem only touched.
    assert!(brute(&walls, p(0.0, 5.0), p(10.0, 5.0)).is_empty());
    assert_index_matches_brute(
        &walls,
        &[
            (p(2.0, 2.0), p(8.0, 8.0)),
            (p(5.0, 1.0), p(5.0, 8.0)),
            (p(2.0, 8.0), p(8.0, 2.0)),
        ],
    );
}

#[test]
fn degenerate_inputs_give_nothing() {
    let walls = plan();
    assert!(brute(&walls, p(3.0, 3.0), p(3.0, 3.0)).is_empty());
    assert!(brute(&walls, p(f64::NAN, 3.0), p(3.0, 3.0)).is_empty());
    let mut with_bad = walls.clone();
    with_bad.push(seg(f64::NEG_INFINITY, 2.0, f64::INFINITY, 2.0));
    with_bad.push(seg(4.0, 4.0, 4.0, 4.0)); // zero length
    let c = brute(&with_bad, p(2.0, 1.0), p(2.0, 4.0));
    assert!(c.is_empty(), "{c:?}");
    assert_index_matches_brute(
        &with_bad,
        &[(p(2.0, 1.0), p(2.0, 4.0)), (p(-2.0, 4.0), p(6.0, 4.0))],
    );
    let empty = WallIndex::new(&[]);
    assert!(empty.is_empty());
    let mut out = vec![];
    empty.crossings(p(0.0, 0.0), p(1.0, 1.0), &mut out);
    assert!(out.is_empty());
}
