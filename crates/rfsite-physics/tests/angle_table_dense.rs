//! The error of a tabulated slab loss, sampled densely against the exact function.
//!
//! Exact function: the ITU-R P.2040-3 §3 single slab (`p2040::slab`), itself checked
//! against the PyPI transfer-matrix package tmm in `fixtures.rs`. The tables are built
//! with a 0.002 dB midpoint tolerance; here every interval in use is sampled at 32
//! points and the miss must stay within 0.0025 dB (the midpoint check plus the
//! higher-order term), far inside the 0.01 dB the predictions promise.

use rfsite_physics::angle_table::{AngleTable, OCTAVES};
use rfsite_physics::p2040::{self, slab, Polarization};
use rfsite_physics::Complex64;

const TOL_DB: f64 = 0.002;
const BOUND_DB: f64 = 0.0025;
const CEILING_DB: f64 = 60.0;

/// cos(89.9 deg), the grazing limit of the predictions.
fn min_cos() -> f64 {
    89.9_f64.to_radians().cos()
}

/// Largest miss of `table` against `min(exact, CEILING_DB)` at `per + 1` points of
/// every table interval in use.
fn dense_miss(table: &AngleTable, exact: &dyn Fn(f64) -> f64, per: usize) -> f64 {
    // Walk the octaves of the table's layout: nodes (1 + m / n) 2^e.
    let n = (table.nodes() - 1) / OCTAVES as usize;
    let mut worst: f64 = 0.0;
    for e in -(OCTAVES as i32)..0 {
        for m in 0..n {
            let a = (1.0 + m as f64 / n as f64) * 2f64.powi(e);
            let b = (1.0 + (m + 1) as f64 / n as f64) * 2f64.powi(e);
            for i in 0..=per {
                let c = a + (b - a) * i as f64 / per as f64;
                if c < min_cos() {
                    continue;
                }
                let miss = (table.eval(c) - exact(c).min(CEILING_DB)).abs();
                worst = worst.max(miss);
            }
        }
    }
    worst
}

fn slab_loss(eta: Complex64, d: f64, f: f64, pol: Polarization) -> impl Fn(f64) -> f64 {
    move |c: f64| slab(eta, d, f, c.clamp(0.0, 1.0).acos(), pol).transmission_loss_db()
}

fn check(name: &str, eta: Complex64, d: f64, f: f64, pol: Polarization) -> (f64, usize) {
    let exact = slab_loss(eta, d, f, pol);
    let table = AngleTable::build(&exact, min_cos(), CEILING_DB, TOL_DB)
        .unwrap_or_else(|miss| panic!("{name} {d} m {f} GHz {pol:?}: no table ({miss} dB)"));
    let miss = dense_miss(&table, &exact, 32);
    assert!(
        miss <= BOUND_DB,
        "{name} {d} m {f} GHz {pol:?}: {miss} dB with {} nodes",
        table.nodes()
    );
    (miss, table.nodes())
}

#[test]
fn itu_slabs_are_tabulated_within_the_bound() {
    // ITU-R P.2040-3 Table 3 building materials (not the ground rows), 4 mm to 0.5 m,
    // 0.4 to 10 GHz, both polarisations.
    let ids = [
        "concrete",
        "brick",
        "plasterboard",
        "wood",
        "glass",
        "ceiling-board",
        "chipboard",
        "plywood",
        "marble",
        "floorboard",
    ];
    let mut worst: f64 = 0.0;
    let mut largest = 0;
    for id in ids {
        let m = p2040::material(id).unwrap();
        for d in [0.004, 0.0125, 0.045, 0.12, 0.3, 0.5] {
            for f in [0.4, 0.9, 2.4, 5.5, 10.0] {
                for pol in [Polarization::Te, Polarization::Tm] {
                    let (miss, nodes) = check(id, m.complex_permittivity(f), d, f, pol);
                    worst = worst.max(miss);
                    largest = largest.max(nodes);
                }
            }
        }
    }
    println!("P.2040 slabs: largest dense miss {worst:.5} dB, largest table {largest} nodes");
    assert!(worst > 0.0 && worst <= BOUND_DB, "{worst}");
    assert!(largest <= 10 * 4096 + 1, "{largest} nodes");
}

#[test]
fn nearly_lossless_thick_slabs_refine_and_stay_within_the_bound() {
    // Resonant slabs (lossless eps 4, 0.5 m at 5.5 and 10 GHz; a foam-like eps 1.05)
    // vary fastest over the angle: the midpoint check must refine until they are met.
    for (eta, d, f) in [
        (Complex64::new(4.0, 0.0), 0.5, 5.5),
        (Complex64::new(4.0, 0.0), 0.5, 10.0),
        (Complex64::new(1.05, -1e-4), 0.5, 5.5),
    ] {
        for pol in [Polarization::Te, Polarization::Tm] {
            let (miss, nodes) = check("custom", eta, d, f, pol);
            println!("{eta} {d} m {f} GHz {pol:?}: dense miss {miss:.5} dB, {nodes} nodes");
            assert!(nodes > 10 * 32 + 1, "no refinement for {eta} {d} m {f} GHz");
        }
    }
}

#[test]
fn metal_is_at_the_ceiling() {
    // ITU-R P.2040-3 Table 3 metal (1e7 S/m), 2 mm: opaque at every angle.
    let eta = p2040::material("metal").unwrap().complex_permittivity(2.4);
    let t = AngleTable::build(
        slab_loss(eta, 0.002, 2.4, Polarization::Te),
        min_cos(),
        60.0,
        TOL_DB,
    )
    .unwrap();
    for c in [min_cos(), 0.1, 0.7, 1.0] {
        assert_eq!(t.eval(c), 60.0);
    }
}
