//! Junction form: the summed wall loss of every path depends only on the
//! geometry and the walls' losses, not on the order of the walls, their
//! direction, or how a straight wall is split into collinear pieces.
//!
//! References outside the project: hand calculations written out beside the
//! hand cases, and the brute force (every wall tested) on the same pieces.

use crate::index_vs_brute::room_plan;
use crate::util::{brute_ranked, p, seg};
use proptest::prelude::*;
use rfsite_geometry::shadow::{accumulate_path_part, ShadowScratch, WallLosses};
use rfsite_geometry::synth::SplitMix64;
use rfsite_geometry::{
    distance_point_segment, segments_intersect_properly, split_at_junctions, Grid, Point2, Scratch,
    Segment, WallIndex,
};

/// Losses of the test walls, dB (a partition-to-concrete spread).
const PALETTE: [f64; 5] = [3.0, 4.5, 2.5, 8.0, 12.0];

/// A plan with a loss per wall and, for some walls, an angle-dependent loss.
#[derive(Debug, Clone)]
struct Plan {
    walls: Vec<Segment>,
    loss_db: Vec<f64>,
    by_angle: Vec<bool>,
}

impl Plan {
    /// The loss of wall `w` at `|cos θ| = cos`: constant, or growing towards
    /// grazing (an arbitrary smooth shape; the property holds for any).
    fn eval(&self, w: usize, cos: f64) -> f64 {
        let l = self.loss_db[w];
        if self.by_angle[w] {
            l * (1.0 + 0.5 * (1.0 - cos))
        } else {
            l
        }
    }

    fn permuted(&self, order: &[usize]) -> Plan {
        Plan {
            walls: order.iter().map(|&i| self.walls[i]).collect(),
            loss_db: order.iter().map(|&i| self.loss_db[i]).collect(),
            by_angle: order.iter().map(|&i| self.by_angle[i]).collect(),
        }
    }
}

/// The summed loss of `tx → q` on the junction form of `plan`, by the brute
/// force, corners charged the largest loss (in `f64`).
fn reference_loss(plan: &Plan, tx: Point2, q: Point2) -> f64 {
    let jf = split_at_junctions(&plan.walls);
    let eval = |k: usize, cos: f64| plan.eval(jf.origin[k], cos);
    brute_ranked(&jf.pieces, tx, q, &eval)
        .iter()
        .map(|c| eval(c.wall, c.cos_incidence))
        .sum()
}

/// The summed loss at every grid point by the whole-grid shadows on the
/// junction form (what the prediction computes), in `f32`.
fn shadow_loss(plan: &Plan, tx: Point2, grid: &Grid) -> Vec<f32> {
    let jf = split_at_junctions(&plan.walls);
    let constant: Vec<f32> = jf.origin.iter().map(|&o| plan.loss_db[o] as f32).collect();
    let mask: Vec<bool> = jf.origin.iter().map(|&o| plan.by_angle[o]).collect();
    let f = |k: usize, cos: f64| plan.eval(jf.origin[k], cos) as f32;
    let losses = WallLosses {
        constant_db: &constant,
        by_angle: Some((&mask, &f)),
    };
    let mut out = vec![0f32; grid.len()];
    let mut scratch = ShadowScratch::new();
    accumulate_path_part(
        tx,
        grid,
        &jf.pieces,
        &losses,
        (0.0, 1.0),
        &mut out,
        &mut scratch,
    );
    out
}

/// Each wall cut into `n` collinear pieces of equal length (exact on the
/// lattice for `n` a power of two).
fn split_collinear(plan: &Plan, n_of: impl Fn(usize) -> usize) -> Plan {
    let mut out = Plan {
        walls: Vec::new(),
        loss_db: Vec::new(),
        by_angle: Vec::new(),
    };
    for (i, w) in plan.walls.iter().enumerate() {
        let n = n_of(i).max(1);
        for k in 0..n {
            let (s, e) = (k as f64 / n as f64, (k + 1) as f64 / n as f64);
            out.walls.push(Segment::new(w.point_at(s), w.point_at(e)));
            out.loss_db.push(plan.loss_db[i]);
            out.by_angle.push(plan.by_angle[i]);
        }
    }
    out
}

/// Lattice plans: rooms (some split into unit pieces), "+" and T junctions,
/// diagonal walls crossing others, each wall with a palette loss.
fn plan() -> impl Strategy<Value = Plan> {
    let diag = (0i32..=12, 0i32..=12, 1i32..6, any::<bool>());
    let plus = (1i32..11, 1i32..11, 1i32..3, any::<bool>());
    (
        room_plan(),
        prop::collection::vec(diag, 0..4),
        prop::collection::vec(plus, 0..3),
        any::<u64>(),
    )
        .prop_map(|(mut walls, diags, pluses, seed)| {
            for (x, y, l, up) in diags {
                let (x, y, l) = (f64::from(x), f64::from(y), f64::from(l));
                let dy = if up { l } else { -l };
                walls.push(seg(x, y, x + l, y + dy));
            }
            for (x, y, r, stubs) in pluses {
                let (x, y, r) = (f64::from(x), f64::from(y), f64::from(r));
                if stubs {
                    for (dx, dy) in [(r, 0.0), (-r, 0.0), (0.0, r), (0.0, -r)] {
                        walls.push(seg(x, y, x + dx, y + dy));
                    }
                } else {
                    walls.push(seg(x - r, y, x + r, y));
                    walls.push(seg(x, y - r, x, y + r));
                }
            }
            let mut rng = SplitMix64::new(seed);
            let loss_db = walls.iter().map(|_| PALETTE[rng.below(5)]).collect();
            let by_angle = walls.iter().map(|_| rng.below(3) == 0).collect();
            Plan {
                walls,
                loss_db,
                by_angle,
            }
        })
}

/// A 0.25 m grid over the lattice: its points lie on the diagonals through
/// lattice points, so many paths pass exactly through junctions.
fn grid() -> Grid {
    Grid {
        origin: p(-0.5, -0.5),
        step_m: 0.25,
        nx: 54,
        ny: 54,
    }
}

/// Transmitters on lattice points and half points (on walls, at junctions,
/// in line with walls) and at a grid point.
fn transmitters() -> impl Strategy<Value = Vec<Point2>> {
    prop::collection::vec((0i32..=24, 0i32..=24), 1..3).prop_map(|v| {
        v.into_iter()
            .map(|(x, y)| p(f64::from(x) * 0.5, f64::from(y) * 0.5))
            .chain([p(3.125, 8.875)])
            .collect()
    })
}

/// A permutation of `0..n` from `seed`.
fn shuffled(n: usize, seed: u64) -> Vec<usize> {
    let mut order: Vec<usize> = (0..n).collect();
    let mut rng = SplitMix64::new(seed);
    for i in (1..n).rev() {
        order.swap(i, rng.below(i + 1));
    }
    order
}

/// The plan with the walls named by `flip` reversed.
fn reversed(plan: &Plan, flip: impl Fn(usize) -> bool) -> Plan {
    let mut out = plan.clone();
    for (i, w) in out.walls.iter_mut().enumerate() {
        if flip(i) {
            *w = Segment::new(w.b, w.a);
        }
    }
    out
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 48, ..ProptestConfig::default() })]

    /// Shuffling and reversing give the same pieces in the same order, so the
    /// shadows are bit for bit the same.
    #[test]
    fn shuffling_and_reversing_leave_every_level_unchanged(
        plan in plan(),
        txs in transmitters(),
        seed in any::<u64>(),
    ) {
        let g = grid();
        let other = reversed(&plan.permuted(&shuffled(plan.walls.len(), seed)), |i| i % 2 == 0);
        for &tx in &txs {
            let (a, b) = (shadow_loss(&plan, tx, &g), shadow_loss(&other, tx, &g));
            for i in 0..g.len() {
                prop_assert_eq!(a[i].to_bits(), b[i].to_bits(), "point {} {:?} from {:?}", i, g.point(i), tx);
            }
        }
    }

    /// Splitting walls into collinear pieces: the same loss to 1e-9 dB at
    /// every point (in f64; the shadows' f32 sums to a few f32 rounding steps).
    #[test]
    fn collinear_splitting_leaves_every_level_unchanged(
        plan in plan(),
        txs in transmitters(),
        seed in any::<u64>(),
    ) {
        let g = grid();
        let split = split_collinear(&plan, |i| [1, 2, 4][(seed as usize + i) % 3]);
        for &tx in &txs {
            let (a, b) = (shadow_loss(&plan, tx, &g), shadow_loss(&split, tx, &g));
            for (i, q) in g.points().enumerate() {
                let (ra, rb) = (reference_loss(&plan, tx, q), reference_loss(&split, tx, q));
                prop_assert!((ra - rb).abs() <= 1e-9, "point {} {:?} from {:?}: {} vs {}", i, q, tx, ra, rb);
                prop_assert!((a[i] as f64 - ra).abs() <= 1e-5 * (1.0 + ra), "shadow vs brute at {}: {} vs {}", i, a[i], ra);
                prop_assert!((a[i] - b[i]).abs() <= 1e-5 * (1.0 + a[i]), "point {} {:?}: {} vs {}", i, q, a[i], b[i]);
            }
        }
    }

    /// The junction form has no junctions left inside a piece: no piece end
    /// lies on another piece away from its ends, no two pieces cross, and each
    /// wall's pieces add up to its length.
    #[test]
    fn junction_form_has_junctions_only_at_piece_ends(plan in plan()) {
        let jf = split_at_junctions(&plan.walls);
        for (k, s) in jf.pieces.iter().enumerate() {
            for (j, t) in jf.pieces.iter().enumerate() {
                if j == k {
                    continue;
                }
                prop_assert!(!segments_intersect_properly(s, t), "{:?} crosses {:?}", s, t);
                for v in [t.a, t.b] {
                    let inside = distance_point_segment(v, s) <= 1e-9
                        && v.distance(s.a) > 1e-9
                        && v.distance(s.b) > 1e-9;
                    prop_assert!(!inside, "end {:?} of {:?} inside {:?}", v, t, s);
                }
            }
        }
        for (i, w) in plan.walls.iter().enumerate() {
            let total: f64 = jf.pieces.iter().zip(&jf.origin).filter(|(_, &o)| o == i).map(|(s, _)| s.length()).sum();
            prop_assert!((total - w.length()).abs() <= 1e-9, "wall {}: {} vs {}", i, total, w.length());
        }
    }

    /// On the junction form, the index with ranked corners gives the brute
    /// force's crossings.
    #[test]
    fn ranked_index_matches_ranked_brute_force(plan in plan(), txs in transmitters()) {
        let jf = split_at_junctions(&plan.walls);
        let eval = |k: usize, cos: f64| plan.eval(jf.origin[k], cos);
        let index = WallIndex::new(&jf.pieces);
        let (mut scratch, mut got) = (Scratch::new(), Vec::new());
        let g = grid();
        for &tx in &txs {
            for q in g.points().step_by(7) {
                index.crossings_ranked(&mut scratch, tx, q, &eval, &mut got);
                let want = brute_ranked(&jf.pieces, tx, q, &eval);
                let gw: Vec<usize> = got.iter().map(|c| c.wall).collect();
                let ww: Vec<usize> = want.iter().map(|c| c.wall).collect();
                prop_assert_eq!(gw, ww, "{:?} -> {:?}", tx, q);
            }
        }
    }
}

fn two_wall_plan(walls: Vec<Segment>, loss_db: Vec<f64>) -> Plan {
    let by_angle = vec![false; walls.len()];
    Plan {
        walls,
        loss_db,
        by_angle,
    }
}

/// The case of the issue: walls (6,0)–(6,6) at 12 dB and (6,6)–(12,6) at
/// 3 dB, transmitter (9,3), point (3.125, 8.875). Hand calculation: the path
/// runs along (−1, 1) from (9,3) and passes (6,6) at t = 3/5.875; the other
/// ends (6,0) and (12,6) lie on opposite sides of it (cross products
/// (−1,1)×(−3,−3) = 6 > 0 and (−1,1)×(3,3) = −6 < 0), so the corner counts
/// once, charged the larger loss, 12 dB, in either order.
#[test]
fn corner_of_the_issue_is_charged_the_larger_loss_in_either_order() {
    let a = seg(6.0, 0.0, 6.0, 6.0);
    let b = seg(6.0, 6.0, 12.0, 6.0);
    let (tx, q) = (p(9.0, 3.0), p(3.125, 8.875));
    let one = two_wall_plan(vec![a, b], vec![12.0, 3.0]);
    let other = two_wall_plan(vec![b, a], vec![3.0, 12.0]);
    assert_eq!(reference_loss(&one, tx, q), 12.0);
    assert_eq!(reference_loss(&other, tx, q), 12.0);
    let g = Grid {
        origin: p(0.0, 0.0),
        step_m: 0.25,
        nx: 48,
        ny: 48,
    };
    let i = g
        .cell_of(q)
        .map(|(ix, iy)| iy * g.nx + ix)
        .expect("on the grid");
    assert_eq!(shadow_loss(&one, tx, &g)[i], 12.0);
    assert_eq!(shadow_loss(&other, tx, &g)[i], 12.0);
}

/// A "+" junction at (5,5), walls of 3 dB (horizontal) and 8 dB (vertical),
/// drawn three ways: four stubs, one wall and two stubs, two through walls.
/// A diagonal path through the centre crosses once, 8 dB; a path along the
/// horizontal wall grazes it and crosses only the vertical one, once, 8 dB;
/// a path through the horizontal arm away from the centre, 3 dB (hand
/// reasoning from the crate's rules).
#[test]
fn plus_junction_counts_once_however_it_is_drawn() {
    let h = |x0, x1| seg(x0, 5.0, x1, 5.0);
    let v = |y0, y1| seg(5.0, y0, 5.0, y1);
    let drawings = [
        (
            vec![h(5.0, 7.0), h(3.0, 5.0), v(5.0, 7.0), v(3.0, 5.0)],
            vec![3.0, 3.0, 8.0, 8.0],
        ),
        (
            vec![h(3.0, 7.0), v(5.0, 7.0), v(3.0, 5.0)],
            vec![3.0, 8.0, 8.0],
        ),
        (vec![v(3.0, 7.0), h(3.0, 7.0)], vec![8.0, 3.0]),
    ];
    for (walls, loss) in drawings {
        let plan = two_wall_plan(walls, loss);
        assert_eq!(reference_loss(&plan, p(2.0, 2.0), p(8.0, 8.0)), 8.0);
        assert_eq!(reference_loss(&plan, p(1.0, 5.0), p(9.0, 5.0)), 8.0);
        assert_eq!(reference_loss(&plan, p(4.0, 1.0), p(4.0, 9.0)), 3.0);
    }
}
