//! The whole-grid shadow method against the brute-force reference: same set
//! of crossed walls at every grid point, on random plans full of shared
//! corners and collinear pieces, on synthetic office floors, and against the
//! `geo` crate's segment intersection.

use crate::index_vs_brute::{random_wall, room_plan};
use crate::util::{brute, brute_loss, brute_ranked, p, seg};
use geo::algorithm::line_intersection::{line_intersection, LineIntersection};
use geo::{coord, Line};
use proptest::prelude::*;
use rfsite_geometry::shadow::{
    accumulate_path_part, accumulate_wall_loss, count_crossings_grid, for_each_point_crossings,
    ShadowScratch, WallLosses,
};
use rfsite_geometry::synth::{office_floor, SplitMix64};
use rfsite_geometry::{distance_point_segment, Crossing, Grid, Point2, Segment};

/// Case count: `default`, times `SHADOW_CASES_X` if set (for long soak runs,
/// e.g. `SHADOW_CASES_X=20 cargo test -p rfsite-geometry --release shadow`).
fn cases(default: u32) -> u32 {
    let x: u32 = std::env::var("SHADOW_CASES_X")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(1);
    default * x.max(1)
}

/// Distinct losses whose every sum is exact in `f32`: `2^(i mod 16)` dB, so
/// a wrong set of walls (up to 16 walls) changes the sum, and a wrong count
/// is caught by [`count_crossings_grid`] as well.
fn losses(n: usize) -> Vec<f32> {
    (0..n).map(|i| (1u32 << (i % 16)) as f32).collect()
}

/// Checks every grid point: loss sum, crossing count and the crossing list
/// (walls and order) against the brute force. Returns the number of points
/// whose path lies within 1e-9 m of a shadow boundary (a wall end within
/// 1e-9 m of the path line, or the point within 1e-9 m of a crossed wall's
/// line) — they are checked like all others; the count shows they occur.
fn check_grid(tx: Point2, grid: &Grid, walls: &[Segment], scratch: &mut ShadowScratch) -> usize {
    let loss = losses(walls.len());
    let mut out = vec![0f32; grid.len()];
    accumulate_wall_loss(tx, grid, walls, &loss, &mut out, scratch);
    let mut counts = vec![0u32; grid.len()];
    count_crossings_grid(tx, grid, walls, &mut counts, scratch);
    let mut lists: Vec<Vec<Crossing>> = vec![Vec::new(); grid.len()];
    for_each_point_crossings(tx, grid, walls, scratch, |i, c| lists[i] = c.to_vec());
    let mut on_boundary = 0;
    for (i, q) in grid.points().enumerate() {
        let want = brute(walls, tx, q);
        // Corners are charged the largest loss of their walls.
        let sum = brute_loss(walls, tx, q, &loss);
        let ws: Vec<usize> = want.iter().map(|c| c.wall).collect();
        let gs: Vec<usize> = lists[i].iter().map(|c| c.wall).collect();
        assert_eq!(
            out[i], sum as f32,
            "loss at point {i} {q:?} from {tx:?}: brute walls {ws:?}"
        );
        assert_eq!(
            counts[i] as usize,
            want.len(),
            "count at {i} {q:?} from {tx:?}"
        );
        assert_eq!(gs, ws, "crossing list at {i} {q:?} from {tx:?}");
        for (g, w) in lists[i].iter().zip(&want) {
            assert!(
                (g.t - w.t).abs() <= 1e-12 && (g.cos_incidence - w.cos_incidence).abs() <= 1e-12
            );
        }
        if near_boundary(tx, q, walls) {
            on_boundary += 1;
        }
    }
    on_boundary
}

fn near_boundary(tx: Point2, q: Point2, walls: &[Segment]) -> bool {
    let path = Segment::new(tx, q);
    let d = q - tx;
    let len = d.length();
    if len == 0.0 {
        return true;
    }
    walls.iter().any(|w| {
        let side = |v: Point2| (d.cross(v - tx) / len).abs();
        let line_dist = |v: Point2| {
            let e = w.b - w.a;
            let l = e.length();
            if l == 0.0 {
                v.distance(w.a)
            } else {
                (e.cross(v - w.a) / l).abs()
            }
        };
        (side(w.a) <= 1e-9 && distance_point_segment(w.a, &path) <= 1e-9)
            || (side(w.b) <= 1e-9 && distance_point_segment(w.b, &path) <= 1e-9)
            || line_dist(q) <= 1e-9
            || line_dist(tx) <= 1e-9
    })
}

/// Grids whose centres land on the plan's lattice (step 1 from -0.5: centres
/// on integers, so on walls and corners), on half-lattice values, and off it.
fn grid() -> impl Strategy<Value = Grid> {
    (0usize..5, 6usize..30, 6usize..30).prop_map(|(kind, nx, ny)| {
        let (origin, step) = match kind {
            0 => (p(-0.5, -0.5), 1.0),
            1 => (p(-0.25, -0.25), 0.5),
            2 => (p(0.0, 0.0), 0.5),
            3 => (p(-1.0, -1.0), 0.7),
            _ => (p(-0.3, 0.1), 0.9),
        };
        Grid {
            origin,
            step_m: step,
            nx,
            ny,
        }
    })
}

/// A transmitter: free, on the lattice, on a wall end, on a wall, on a grid
/// point, or in line with a wall.
fn tx_point(kind: u8, k: usize, x: f64, y: f64, f: u8, walls: &[Segment], grid: &Grid) -> Point2 {
    let w = if walls.is_empty() {
        seg(0.0, 0.0, 1.0, 0.0)
    } else {
        walls[k % walls.len()]
    };
    match kind {
        0 => p(x, y),
        1 => p(x.round(), y.round()),
        2 => w.a,
        3 => w.point_at(f64::from(f) / 10.0),
        4 => grid.point(k % grid.len()),
        5 => w.a + (w.a - w.b) * (f64::from(f) / 4.0 + 0.25),
        _ => p((x * 2.0).round() / 2.0, (y * 2.0).round() / 2.0),
    }
}

fn tx_strategy() -> impl Strategy<Value = (u8, usize, f64, f64, u8)> {
    (
        0u8..7,
        any::<usize>(),
        -2.0f64..22.0,
        -2.0f64..22.0,
        0u8..=10,
    )
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(cases(200)))]

    #[test]
    fn shadow_equals_brute_force_on_room_like_plans(
        walls in room_plan(),
        g in grid(),
        txs in prop::collection::vec(tx_strategy(), 1..4),
    ) {
        let mut scratch = ShadowScratch::new();
        for (kind, k, x, y, f) in txs {
            let tx = tx_point(kind, k, x, y, f, &walls, &g);
            check_grid(tx, &g, &walls, &mut scratch);
        }
    }

    #[test]
    fn shadow_equals_brute_force_on_random_segments(
        walls in prop::collection::vec(random_wall(), 0..40),
        g in grid(),
        txs in prop::collection::vec(tx_strategy(), 1..4),
    ) {
        let mut scratch = ShadowScratch::new();
        for (kind, k, x, y, f) in txs {
            let tx = tx_point(kind, k, x, y, f, &walls, &g);
            check_grid(tx, &g, &walls, &mut scratch);
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(cases(24)))]

    #[test]
    fn shadow_equals_brute_force_on_office_floors(
        seed in any::<u64>(),
        target in 100usize..400,
        step in prop::sample::select(vec![0.25, 0.5, 0.3]),
        txs in prop::collection::vec(tx_strategy(), 1..3),
    ) {
        let (w, d) = (30.0, 20.0);
        let walls = office_floor(seed, w, d, target);
        let g = Grid::covering(p(0.0, 0.0), p(w, d), step);
        let mut scratch = ShadowScratch::new();
        for (kind, k, x, y, f) in txs {
            let tx = tx_point(kind, k, x, y, f, &walls, &g);
            check_grid(tx, &g, &walls, &mut scratch);
        }
    }

    #[test]
    fn crossed_walls_agree_with_geo_on_a_sample(
        seed in any::<u64>(),
        raw_walls in prop::collection::vec((0.0f64..20.0, 0.0f64..20.0, 0.0f64..20.0, 0.0f64..20.0), 1..60),
        tx in (-2.0f64..22.0, -2.0f64..22.0),
    ) {
        let walls: Vec<Segment> = raw_walls.iter().map(|&(a, b, c, d)| seg(a, b, c, d)).collect();
        let g = Grid { origin: p(-1.0, -1.0), step_m: 0.37, nx: 60, ny: 60 };
        let tx = p(tx.0, tx.1);
        let mut lists: Vec<Vec<usize>> = vec![Vec::new(); g.len()];
        let mut scratch = ShadowScratch::new();
        for_each_point_crossings(tx, &g, &walls, &mut scratch, |i, c| {
            lists[i] = c.iter().map(|c| c.wall).collect();
        });
        let line = |s: &Segment| Line::new(coord! { x: s.a.x, y: s.a.y }, coord! { x: s.b.x, y: s.b.y });
        let mut rng = SplitMix64::new(seed);
        for _ in 0..300 {
            let i = rng.below(g.len());
            let path = Segment::new(tx, g.point(i));
            for (wi, w) in walls.iter().enumerate() {
                let near = [w.a, w.b].iter().any(|&v| distance_point_segment(v, &path) < 1e-6)
                    || [path.a, path.b].iter().any(|&v| distance_point_segment(v, w) < 1e-6);
                if near {
                    continue;
                }
                let geo_hit = matches!(
                    line_intersection(line(&path), line(w)),
                    Some(LineIntersection::SinglePoint { is_proper: true, .. })
                );
                prop_assert_eq!(lists[i].contains(&wi), geo_hit, "wall {} {:?} path {:?}", wi, w, path);
            }
        }
    }

    #[test]
    fn angle_dependent_losses_match_brute_force(
        walls in room_plan(),
        g in grid(),
        tx in tx_strategy(),
    ) {
        let tx = tx_point(tx.0, tx.1, tx.2, tx.3, tx.4, &walls, &g);
        let constant = losses(walls.len());
        let mask: Vec<bool> = (0..walls.len()).map(|i| i % 2 == 0).collect();
        let f = |w: usize, cos: f64| (w as f64 + 3.0 * cos) as f32;
        let l = WallLosses { constant_db: &constant, by_angle: Some((&mask, &f)) };
        let mut out = vec![0f32; g.len()];
        accumulate_path_part(tx, &g, &walls, &l, (0.0, 1.0), &mut out, &mut ShadowScratch::new());
        for (i, q) in g.points().enumerate() {
            let eval = |w: usize, cos: f64| if mask[w] { f(w, cos) as f64 } else { constant[w] as f64 };
            let want: f64 = brute_ranked(&walls, tx, q, &eval)
                .iter()
                .map(|c| eval(c.wall, c.cos_incidence))
                .sum();
            prop_assert!((out[i] as f64 - want).abs() <= 1e-3 * (1.0 + want.abs()), "{} {:?}: {} vs {}", i, q, out[i], want);
        }
    }

    /// Differences are allowed only where a wall lies at a cut (within 1e-6
    /// of it): there the cut path's end-point rule drops a crossing that lies
    /// exactly at the cut from both storeys, while the shadow counts it once.
    #[test]
    fn path_parts_match_brute_force_on_the_cut_path(
        walls in room_plan(),
        g in grid(),
        tx in tx_strategy(),
        t0 in prop::sample::select(vec![0.0, 0.25, 0.3, 0.5]),
        t1 in prop::sample::select(vec![1.0, 0.75, 0.6, 0.9]),
    ) {
        let tx = tx_point(tx.0, tx.1, tx.2, tx.3, tx.4, &walls, &g);
        let loss = losses(walls.len());
        let l = WallLosses { constant_db: &loss, by_angle: None };
        let mut out = vec![0f32; g.len()];
        accumulate_path_part(tx, &g, &walls, &l, (t0, t1), &mut out, &mut ShadowScratch::new());
        // Exactly the brute force on the walls scaled about the transmitter.
        if t0 == 0.0 {
            let scaled: Vec<Segment> = walls
                .iter()
                .map(|w| Segment::new(tx + (w.a - tx) * (1.0 / t1), tx + (w.b - tx) * (1.0 / t1)))
                .collect();
            for (i, q) in g.points().enumerate() {
                let want = brute_loss(&scaled, tx, q, &loss);
                prop_assert_eq!(out[i], want as f32, "scaled walls at {} {:?}", i, q);
            }
        }
        for (i, q) in g.points().enumerate() {
            let at = |t: f64| tx + (q - tx) * t;
            let want = brute_loss(&walls, at(t0), at(t1), &loss);
            if out[i] as f64 != want {
                // Allowed only for a crossing or a wall end at a cut.
                let cut = brute(&walls, tx, q).iter().any(|c| (c.t - t0).abs() < 1e-6 || (c.t - t1).abs() < 1e-6)
                    || walls.iter().any(|w| [at(t0), at(t1)].iter().any(|&v| distance_point_segment(v, w) < 1e-6));
                prop_assert!(cut, "{} {:?}: {} vs {}", i, q, out[i], want);
            }
        }
    }
}

/// The cases the brief names, on a small hand plan, with the boundary
/// statistics showing that each path is exercised.
#[test]
fn hand_cases_tx_in_line_corners_and_rows() {
    let walls = vec![
        seg(0.0, 0.0, 10.0, 0.0),
        seg(10.0, 0.0, 10.0, 10.0),
        seg(10.0, 10.0, 0.0, 10.0),
        seg(0.0, 10.0, 0.0, 0.0),
        seg(5.0, 0.0, 5.0, 5.0), // L with the next one, corner (5, 5)
        seg(5.0, 5.0, 8.0, 5.0),
        seg(2.0, 5.0, 3.0, 5.0), // on the transmitter's row when tx.y = 5
        seg(3.0, 5.0, 4.0, 5.0), // collinear continuation
    ];
    // Centres on integers: points on walls, corners and shadow edges.
    let g = Grid {
        origin: p(-2.5, -2.5),
        step_m: 1.0,
        nx: 15,
        ny: 15,
    };
    let mut scratch = ShadowScratch::new();
    let mut on_boundary = 0;
    for tx in [
        p(2.0, 8.0), // sees the L corner from both sides of the chain
        p(2.0, 2.0),
        p(1.0, 5.0),  // in line with walls 5, 6, 7: grazing, resolved per point
        p(5.0, 5.0),  // on the corner itself
        p(5.0, 2.0),  // on wall 4
        p(7.0, 7.0),  // shadows of walls 4 and 5 cover its row on both sides
        p(-1.0, 5.0), // outside the building, in line with the partitions
        p(2.5, 5.0),  // on wall 6, on its row
    ] {
        on_boundary += check_grid(tx, &g, &walls, &mut scratch);
    }
    // Many points lie exactly on shadow edges here, and all agreed.
    assert!(on_boundary > 50, "{on_boundary}");
    // Transmitter in line with a wall: that wall is resolved per point.
    let mut counts = vec![0u32; g.len()];
    count_crossings_grid(p(1.0, 5.0), &g, &walls, &mut counts, &mut scratch);
    assert!(scratch.stats().inline_walls >= 3, "{:?}", scratch.stats());
    // Through the corner (5, 5) of the L from (2, 8) to (8, 2): one crossing.
    let i = g.cell_of(p(8.0, 2.0)).map(|(x, y)| y * g.nx + x).unwrap();
    count_crossings_grid(p(2.0, 8.0), &g, &walls, &mut counts, &mut scratch);
    assert_eq!(counts[i], 1);
    assert!(scratch.stats().boundary_pairs > 0);
    // Touching the corner from outside the L, (2, 2) to (8, 8): none.
    let i = g.cell_of(p(8.0, 8.0)).map(|(x, y)| y * g.nx + x).unwrap();
    count_crossings_grid(p(2.0, 2.0), &g, &walls, &mut counts, &mut scratch);
    assert_eq!(counts[i], 0);
}

/// On a realistic floor almost every crossing comes from a run, and points
/// resolved exactly are a small fraction of the grid.
#[test]
fn office_floor_boundary_points_are_rare_and_exact() {
    let walls = office_floor(11, 60.0, 40.0, 1200);
    let g = Grid::covering(p(0.0, 0.0), p(60.0, 40.0), 0.25);
    let mut scratch = ShadowScratch::new();
    let mut rng = SplitMix64::new(5);
    let mut boundary_total = 0;
    for _ in 0..3 {
        let tx = p(rng.range(0.0, 60.0), rng.range(0.0, 40.0));
        boundary_total += check_grid(tx, &g, &walls, &mut scratch);
        let s = scratch.stats();
        assert!(s.resolved_points * 100 < g.len() as u64, "{s:?}");
    }
    // Walls on the grid's half-step lattice do occur on such plans.
    let _ = boundary_total;
}
