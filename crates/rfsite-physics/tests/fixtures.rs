//! Checks against generated reference tables in `tests/reference/physics/`.
//!
//! Each table was produced by a committed Python script that names its package
//! versions in the CSV header. None of them is a published value: they are
//! independent computations (a general-purpose transfer-matrix package, a
//! re-implementation with scipy's inverse normal, a direct numerical integration).

use rfsite_physics::p2040::{self, layered, slab, Layer, Polarization, AIR};
use rfsite_physics::p2109::{building_entry_loss_db, BuildingType};
use rfsite_physics::stats::area_coverage_fraction;

const TMM_CSV: &str = include_str!("../../../tests/reference/physics/tmm_fixtures.csv");
const P2109_CSV: &str = include_str!("../../../tests/reference/physics/p2109_fixtures.csv");
const AREA_CSV: &str = include_str!("../../../tests/reference/physics/area_fixtures.csv");
const OBLIQUE_CSV: &str = include_str!("../../../tests/reference/tmm/oblique_slabs.csv");

/// Data rows of a CSV fixture: comment lines (`#`) and the header skipped.
fn rows(csv: &str) -> impl Iterator<Item = Vec<&str>> {
    csv.lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .skip(1)
        .map(|l| l.split(',').collect())
}

fn num(s: &str) -> f64 {
    s.parse().unwrap_or_else(|_| panic!("fixture number {s:?}"))
}

fn layers_from_spec(spec: &str, freq_ghz: f64) -> Vec<Layer> {
    spec.split(';')
        .map(|part| {
            let (id, t) = part.split_once(':').expect("material:thickness");
            let eta = if id == "air" {
                AIR
            } else {
                p2040::material(id)
                    .expect("P.2040 id")
                    .complex_permittivity(freq_ghz)
            };
            Layer {
                eta,
                thickness_m: num(t),
            }
        })
        .collect()
}

#[test]
fn walls_match_tmm_within_0_01_db() {
    // Reference: tmm_fixtures.csv, generated with the PyPI package tmm (transfer-matrix
    // method) by gen_tmm_fixtures.py; independent computation, tolerance 0.01 dB.
    let mut checked = 0;
    for row in rows(TMM_CSV) {
        let (name, spec) = (row[0], row[1]);
        let freq_ghz = num(row[2]);
        let theta_rad = num(row[3]).to_radians();
        let pol = match row[4] {
            "te" => Polarization::Te,
            "tm" => Polarization::Tm,
            other => panic!("polarisation {other}"),
        };
        let (r_db, t_db) = (num(row[5]), num(row[6]));
        let layers = layers_from_spec(spec, freq_ghz);
        let got = layered(&layers, freq_ghz, theta_rad, pol);
        assert!(
            (got.reflection_loss_db() - r_db).abs() < 0.01,
            "{name} {freq_ghz} GHz {} {:?}: reflection {} vs tmm {r_db}",
            row[3],
            pol,
            got.reflection_loss_db()
        );
        assert!(
            (got.transmission_loss_db() - t_db).abs() < 0.01,
            "{name} {freq_ghz} GHz {} {:?}: transmission {} vs tmm {t_db}",
            row[3],
            pol,
            got.transmission_loss_db()
        );
        if layers.len() == 1 {
            // One layer: the P.2040 §3 closed form must agree with tmm too.
            let s = slab(
                layers[0].eta,
                layers[0].thickness_m,
                freq_ghz,
                theta_rad,
                pol,
            );
            assert!(
                (s.reflection_loss_db() - r_db).abs() < 0.01,
                "{name} slab R"
            );
            assert!(
                (s.transmission_loss_db() - t_db).abs() < 0.01,
                "{name} slab T"
            );
        }
        checked += 1;
    }
    assert_eq!(checked, 108, "fixture rows");
}

fn pol_of(s: &str) -> Polarization {
    match s {
        "te" => Polarization::Te,
        "tm" => Polarization::Tm,
        other => panic!("polarisation {other}"),
    }
}

#[test]
fn oblique_single_slabs_match_tmm_within_0_01_db() {
    // Reference: tests/reference/tmm/oblique_slabs.csv, generated with the PyPI package
    // tmm (tmm.coh_tmm, air semi-infinite on both sides) by gen_oblique_slabs.py: six
    // ITU-R P.2040-3 Table 3 materials, 0.7-5.5 GHz, 0-89.9 deg, TE and TM. Checks the
    // P.2040-3 §3 single-slab R and T (with the phase term q) and the layered form at
    // the actual angle; independent computation, tolerance 0.01 dB.
    let mut checked = 0;
    let mut worst: f64 = 0.0;
    for row in rows(OBLIQUE_CSV) {
        let m = p2040::material(row[0]).expect("P.2040 id");
        let (d, f, theta_deg) = (num(row[1]), num(row[2]), num(row[3]));
        let pol = pol_of(row[4]);
        let (r_db, t_db) = (num(row[5]), num(row[6]));
        let eta = m.complex_permittivity(f);
        let th = theta_deg.to_radians();
        let one = slab(eta, d, f, th, pol);
        let stack = layered(
            &[Layer {
                eta,
                thickness_m: d,
            }],
            f,
            th,
            pol,
        );
        for got in [one, stack] {
            let dr = (got.reflection_loss_db() - r_db).abs();
            let dt = (got.transmission_loss_db() - t_db).abs();
            assert!(
                dr < 0.01 && dt < 0.01,
                "{} {d} m {f} GHz {theta_deg} deg {pol:?}: R {} vs tmm {r_db}, T {} vs tmm {t_db}",
                row[0],
                got.reflection_loss_db(),
                got.transmission_loss_db()
            );
            worst = worst.max(dr).max(dt);
        }
        checked += 1;
    }
    assert_eq!(checked, (13 * 4 + 1) * 35 * 2, "fixture rows");
    assert!(worst < 1e-5, "closed form and tmm differ by {worst} dB");
}

#[test]
fn oblique_brick_reflection_is_not_the_normal_value() {
    // Reference: oblique_slabs.csv (tmm, see above): brick, 2156.9 MHz, 33.4 mm, TE at
    // 62.4 deg reflects at 4.76 dB; at normal incidence 18.64 dB.
    let eta = p2040::material("brick")
        .unwrap()
        .complex_permittivity(2.1569);
    let at = |deg: f64| slab(eta, 0.0334, 2.1569, deg.to_radians(), Polarization::Te);
    assert!((at(62.4).reflection_loss_db() - 4.764_795).abs() < 0.01);
    assert!((at(0.0).reflection_loss_db() - 18.644_605).abs() < 0.01);
}

#[test]
fn p2109_matches_scipy_reimplementation() {
    // Reference: p2109_fixtures.csv, an independent Python re-implementation of
    // ITU-R P.2109-2 with scipy.stats.norm.ppf (gen_p2109_fixtures.py); computed, not
    // published. Tolerance 1e-6 dB.
    let mut checked = 0;
    for row in rows(P2109_CSV) {
        let building = match row[0] {
            "traditional" => BuildingType::Traditional,
            "thermally-efficient" => BuildingType::ThermallyEfficient,
            other => panic!("building {other}"),
        };
        let (f, p, elev, expected) = (num(row[1]), num(row[2]), num(row[3]), num(row[4]));
        let got = building_entry_loss_db(f, p, elev, building).expect("valid inputs");
        assert!(
            (got - expected).abs() < 1e-6,
            "{:?} {f} GHz P={p} elev={elev}: {got} vs {expected}",
            building
        );
        checked += 1;
    }
    assert_eq!(checked, 2 * 7 * 7 * 3, "fixture rows");
}

#[test]
fn jakes_area_fraction_matches_numerical_integration() {
    // Reference: area_fixtures.csv, direct numerical integration over the cell with
    // scipy.integrate.quad (gen_area_fixtures.py); checks the closed form of Jakes
    // (1974) §2.3. Computed, not published. Tolerance 1e-9.
    let mut checked = 0;
    for row in rows(AREA_CSV) {
        let (sigma, n, pe, expected) = (num(row[0]), num(row[1]), num(row[2]), num(row[3]));
        let got = area_coverage_fraction(sigma, n, pe).expect("valid inputs");
        assert!(
            (got - expected).abs() < 1e-9,
            "sigma={sigma} n={n} Pe={pe}: {got} vs {expected}"
        );
        checked += 1;
    }
    assert_eq!(checked, 6 * 4 * 6, "fixture rows");
}
