//! Angle-dependent walls with real slab losses: what charging each crossing at its
//! incidence angle costs in the whole-grid shadows.
//!
//! The target case's five loss classes become ITU-R P.2040-3 slabs at the benchmark
//! frequency, TE (plasterboard 12.5 mm, glass 6 mm, wood 45 mm, brick 120 mm, concrete
//! 200 mm). Three ways of getting a crossing's loss are timed on the same shadows:
//!
//! * the former 33-point table, linear in cos θ and clamped at 89° (kept here only as
//!   the baseline it was);
//! * `rfsite_physics::angle_table::AngleTable`, as the prediction now uses it;
//! * the exact slab (`p2040::slab`) at every crossed point (one run, it is slow).
//!
//! Each is also compared with the exact slab over 0–89.9°.

use rfsite_geometry::shadow::{accumulate_path_part, AngleLoss, WallLosses};
use rfsite_physics::angle_table::AngleTable;
use rfsite_physics::p2040::{self, Polarization};
use rfsite_physics::Complex64;

use crate::{best_of, last_cpu, palette_index, predict_shadow_with, Case, FREQ_MHZ};

/// The palette's classes as P.2040-3 Table 3 slabs (id, thickness m), in palette order.
const SLABS: [(&str, f64); 5] = [
    ("plasterboard", 0.0125),
    ("glass", 0.006),
    ("wood", 0.045),
    ("brick", 0.12),
    ("concrete", 0.2),
];

/// The prediction's cap on one crossing, dB (multi-wall default).
const CAP_DB: f64 = 60.0;
/// The table tolerance of rfsite-model, dB.
const TOL_DB: f64 = 0.002;

/// Complex permittivity of each slab at the benchmark frequency.
fn etas() -> Vec<Complex64> {
    SLABS
        .iter()
        .map(|(id, _)| {
            p2040::material(id)
                .expect("Table 3 id")
                .complex_permittivity(FREQ_MHZ / 1000.0)
        })
        .collect()
}

/// The exact slab loss of kind `kind` (ITU-R P.2040-3 §3) at `|cos θ| = cos`.
fn slab_db(etas: &[Complex64], kind: usize, cos: f64) -> f64 {
    let theta = cos.clamp(0.0, 1.0).acos();
    let f_ghz = FREQ_MHZ / 1000.0;
    p2040::slab(etas[kind], SLABS[kind].1, f_ghz, theta, Polarization::Te).transmission_loss_db()
}

/// What a crossing should cost: the exact slab loss, angles beyond 89.9° charged at
/// 89.9° (the grazing rule), at most the cap.
fn exact_db(etas: &[Complex64], kind: usize, cos: f64) -> f64 {
    slab_db(etas, kind, cos.max(89.9_f64.to_radians().cos())).min(CAP_DB)
}

/// The former table: 33 values at cos = i/32 (at least 1e-3), angle clamped at 89°, f32.
struct FormerTable([f32; 33]);

impl FormerTable {
    fn new(etas: &[Complex64], kind: usize) -> FormerTable {
        let mut t = [0f32; 33];
        for (i, v) in t.iter_mut().enumerate() {
            let cos = (i as f64 / 32.0).max(1e-3).max(89f64.to_radians().cos());
            *v = exact_db(etas, kind, cos) as f32;
        }
        FormerTable(t)
    }

    fn eval(&self, cos: f64) -> f64 {
        let x = cos.clamp(0.0, 1.0) * 32.0;
        let i = (x as usize).min(31);
        let f = x - i as f64;
        self.0[i] as f64 * (1.0 - f) + self.0[i + 1] as f64 * f
    }
}

/// Largest miss against the exact slab over `from..=to` degrees (0.001° steps).
fn max_miss(etas: &[Complex64], f: &dyn Fn(usize, f64) -> f64, from: f64, to: f64) -> f64 {
    let mut worst: f64 = 0.0;
    for kind in 0..SLABS.len() {
        for i in (from * 1e3).round() as usize..=(to * 1e3).round() as usize {
            let cos = (i as f64 * 1e-3).to_radians().cos();
            worst = worst.max((f(kind, cos) - exact_db(etas, kind, cos)).abs());
        }
    }
    worst
}

/// Times one shadow prediction with the walls flagged in `mask` charged by `loss`.
fn time_with(case: &Case, reps: usize, mask: &[bool], loss: AngleLoss<'_>) -> (f64, f64) {
    let s = best_of(reps, || {
        predict_shadow_with(case, &|tx, out, scratch| {
            let l = WallLosses {
                constant_db: &case.loss_db,
                by_angle: Some((mask, loss)),
            };
            accumulate_path_part(tx, &case.grid, &case.walls, &l, (0.0, 1.0), out, scratch)
        });
    });
    (s, last_cpu())
}

/// Prints the timings and errors of the three ways.
pub fn report(case: &Case, reps: usize) {
    let etas = etas();
    let kind: Vec<usize> = case.loss_db.iter().map(|l| palette_index(*l)).collect();
    let former: Vec<FormerTable> = (0..SLABS.len())
        .map(|k| FormerTable::new(&etas, k))
        .collect();
    let min_cos = 89.9_f64.to_radians().cos();
    let tables: Vec<AngleTable> = (0..SLABS.len())
        .map(|k| {
            AngleTable::build(|c| slab_db(&etas, k, c), min_cos, CAP_DB, TOL_DB)
                .expect("P.2040 slabs tabulate")
        })
        .collect();
    let nodes: Vec<usize> = tables.iter().map(AngleTable::nodes).collect();
    println!(
        "angle-dependent walls as P.2040-3 slabs at {FREQ_MHZ} MHz, TE (table nodes per slab: {nodes:?}):"
    );
    let former_fn = |k: usize, c: f64| former[k].eval(c);
    let table_fn = |k: usize, c: f64| tables[k].eval(c);
    println!(
        "  max miss vs the exact slab, 0-88 deg / 88-89.9 deg: former 33-point table {:.3} / {:.3} dB, verified table {:.4} / {:.4} dB",
        max_miss(&etas, &former_fn, 0.0, 88.0),
        max_miss(&etas, &former_fn, 88.0, 89.9),
        max_miss(&etas, &table_fn, 0.0, 88.0),
        max_miss(&etas, &table_fn, 88.0, 89.9),
    );
    let ways: [(&str, AngleLoss<'_>); 3] = [
        ("former 33-point table", &|w, c| {
            former[kind[w]].eval(c) as f32
        }),
        ("verified table       ", &|w, c| {
            tables[kind[w]].eval(c) as f32
        }),
        ("exact slab per point ", &|w, c| {
            exact_db(&etas, kind[w], c) as f32
        }),
    ];
    let fifth: Vec<bool> = (0..case.walls.len()).map(|i| i % 5 == 0).collect();
    let all = vec![true; case.walls.len()];
    for (i, (name, f)) in ways.into_iter().enumerate() {
        // The exact slab is slow: one run of it is enough to see the difference.
        let reps = if i == 2 { 1 } else { reps };
        let (a, ac) = time_with(case, reps, &fifth, f);
        let (b, bc) = time_with(case, reps, &all, f);
        println!(
            "  {name}: 1 wall in 5 angle-dependent {a:.3} s (cpu {ac:.2} s), every wall {b:.3} s (cpu {bc:.2} s)"
        );
    }
    println!();
}
