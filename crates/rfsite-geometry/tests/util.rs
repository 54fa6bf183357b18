//! Shared helpers for the integration tests.

use rfsite_geometry::{
    crossings_brute_force, crossings_brute_force_ranked, Crossing, Point2, Scratch, Segment,
    WallIndex,
};

pub fn p(x: f64, y: f64) -> Point2 {
    Point2::new(x, y)
}

pub fn seg(x0: f64, y0: f64, x1: f64, y1: f64) -> Segment {
    Segment::new(p(x0, y0), p(x1, y1))
}

pub fn brute(walls: &[Segment], a: Point2, b: Point2) -> Vec<Crossing> {
    let mut out = Vec::new();
    crossings_brute_force(walls, a, b, &mut out);
    out
}

/// The brute force with corners charged by `rank` (the loss in dB of a wall
/// at an incidence).
pub fn brute_ranked(
    walls: &[Segment],
    a: Point2,
    b: Point2,
    rank: &dyn Fn(usize, f64) -> f64,
) -> Vec<Crossing> {
    let mut out = Vec::new();
    crossings_brute_force_ranked(walls, a, b, rank, &mut out);
    out
}

/// The summed constant loss of the walls on `a → b`, corners charged to the
/// largest of `loss`.
pub fn brute_loss(walls: &[Segment], a: Point2, b: Point2, loss: &[f32]) -> f64 {
    let rank = |w: usize, _: f64| loss[w] as f64;
    brute_ranked(walls, a, b, &rank)
        .iter()
        .map(|c| loss[c.wall] as f64)
        .sum()
}

/// Cell sizes that stress the index differently: automatic, finer than the
/// walls, about wall-sized, and one cell for the whole plan.
pub const CELL_SIZES_M: [f64; 5] = [f64::NAN, 0.23, 0.7, 3.1, 1e3];

/// Assert that the index reproduces the reference exactly: same walls in the
/// same order, `t` and `cos_incidence` within 1e-9.
pub fn assert_index_matches_brute(walls: &[Segment], rays: &[(Point2, Point2)]) {
    let mut scratch = Scratch::new();
    let mut got = Vec::new();
    for cell in CELL_SIZES_M {
        let index = WallIndex::with_cell_size(walls, cell);
        for &(a, b) in rays {
            let want = brute(walls, a, b);
            index.crossings_with(&mut scratch, a, b, &mut got);
            let ws: Vec<usize> = want.iter().map(|c| c.wall).collect();
            let gs: Vec<usize> = got.iter().map(|c| c.wall).collect();
            assert_eq!(
                gs, ws,
                "index (cell {cell} m) vs brute force: walls differ for {a:?} -> {b:?}"
            );
            for (g, w) in got.iter().zip(&want) {
                assert!((g.t - w.t).abs() <= 1e-9, "t differs: {g:?} vs {w:?}");
                assert!(
                    (g.cos_incidence - w.cos_incidence).abs() <= 1e-9,
                    "cos differs: {g:?} vs {w:?}"
                );
            }
        }
    }
}
