//! A material's reflection and crossing loss follow the incidence angle and polarisation.
//!
//! Reference: tests/reference/tmm/oblique_slabs.csv, generated with the PyPI package tmm
//! (tmm.coh_tmm, semi-infinite air on both sides) by tests/reference/tmm/gen_oblique_slabs.py:
//! single slabs of six ITU-R P.2040-3 Table 3 materials, 0.7-5.5 GHz, 0-89.9 deg, TE and
//! TM. An independent transfer-matrix computation, not a published value.

use rfsite_model::MaterialLibrary;
use rfsite_physics::p2040::Polarization;

const OBLIQUE_CSV: &str = include_str!("../../../tests/reference/tmm/oblique_slabs.csv");

/// One fixture row.
struct Row {
    material: String,
    thickness_m: f64,
    freq_mhz: f64,
    theta_deg: f64,
    pol: Polarization,
    reflection_loss_db: f64,
    transmission_loss_db: f64,
}

fn num(s: &str) -> f64 {
    s.parse().unwrap_or_else(|_| panic!("fixture number {s:?}"))
}

fn rows() -> Vec<Row> {
    OBLIQUE_CSV
        .lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .skip(1)
        .map(|l| {
            let c: Vec<&str> = l.split(',').collect();
            Row {
                material: c[0].to_string(),
                thickness_m: num(c[1]),
                freq_mhz: num(c[2]) * 1000.0,
                theta_deg: num(c[3]),
                pol: match c[4] {
                    "te" => Polarization::Te,
                    "tm" => Polarization::Tm,
                    p => panic!("polarisation {p}"),
                },
                reflection_loss_db: num(c[5]),
                transmission_loss_db: num(c[6]),
            }
        })
        .collect()
}

fn cos_of(deg: f64) -> f64 {
    deg.to_radians().cos()
}

#[test]
fn reflection_follows_angle_and_polarisation() {
    // Reference: oblique_slabs.csv (tmm), every row; tolerance 0.01 dB.
    let lib = MaterialLibrary::builtin();
    let all = rows();
    assert_eq!(all.len(), (13 * 4 + 1) * 35 * 2, "fixture rows");
    for r in &all {
        let m = lib.get(&r.material).expect("P.2040 row in the library");
        let g = m.reflection_coefficient(r.freq_mhz, r.thickness_m, cos_of(r.theta_deg), r.pol);
        let got = -20.0 * g.norm().log10();
        assert!(
            (got - r.reflection_loss_db).abs() < 0.01,
            "{} {} m {} MHz {} deg {:?}: reflection {got} dB vs tmm {}",
            r.material,
            r.thickness_m,
            r.freq_mhz,
            r.theta_deg,
            r.pol,
            r.reflection_loss_db
        );
    }
}

#[test]
fn crossing_loss_follows_angle_and_polarisation() {
    // Reference: oblique_slabs.csv (tmm), every row up to the grazing limit the crossing
    // loss applies; tolerance 0.01 dB.
    let lib = MaterialLibrary::builtin();
    let mut checked = 0;
    for r in rows().iter().filter(|r| r.theta_deg <= 89.0) {
        let m = lib.get(&r.material).expect("P.2040 row in the library");
        let got = m
            .crossing_loss(r.freq_mhz, r.thickness_m, cos_of(r.theta_deg), r.pol)
            .loss_db;
        assert!(
            (got - r.transmission_loss_db).abs() < 0.01,
            "{} {} m {} MHz {} deg {:?}: transmission {got} dB vs tmm {}",
            r.material,
            r.thickness_m,
            r.freq_mhz,
            r.theta_deg,
            r.pol,
            r.transmission_loss_db
        );
        checked += 1;
    }
    assert_eq!(checked, (13 * 4 + 1) * 26 * 2, "fixture rows up to 89 deg");
}

#[test]
fn the_issue_example_reflects_at_4_76_db() {
    // Reference: oblique_slabs.csv (tmm): brick, 2156.9 MHz, 33.4 mm, TE at 62.4 deg:
    // reflection loss 4.764795 dB; at normal incidence 18.644605 dB.
    let lib = MaterialLibrary::builtin();
    let brick = lib.get("brick").unwrap();
    let at = |deg: f64| {
        let g = brick.reflection_coefficient(2156.9, 0.0334, cos_of(deg), Polarization::Te);
        -20.0 * g.norm().log10()
    };
    assert!((at(62.4) - 4.764_795).abs() < 0.01, "{}", at(62.4));
    assert!((at(0.0) - 18.644_605).abs() < 0.01, "{}", at(0.0));
}

#[test]
fn empirical_reflection_has_a_conductor_phase_in_each_polarisation() {
    // ITU-R P.2040-3 §2 sign convention: at normal incidence R_TM = -R_TE, and a good
    // conductor (Table 3 metal) gives R_TE -> -1. A measured magnitude takes that phase.
    let lib = MaterialLibrary::builtin();
    let metal = lib.get("metal").unwrap();
    let te = metal.reflection_coefficient(900.0, 0.002, 1.0, Polarization::Te);
    let tm = metal.reflection_coefficient(900.0, 0.002, 1.0, Polarization::Tm);
    assert!(
        (te.re + 1.0).abs() < 1e-3 && (tm.re - 1.0).abs() < 1e-3,
        "{te} {tm}"
    );
    let door = lib.get("metal-door").unwrap();
    let te = door.reflection_coefficient(900.0, 0.05, 1.0, Polarization::Te);
    let tm = door.reflection_coefficient(900.0, 0.05, 0.3, Polarization::Tm);
    assert!(te.re < 0.0 && te.im == 0.0);
    assert!(
        (te + tm).norm() < 1e-12,
        "measured magnitude at every angle"
    );
}
