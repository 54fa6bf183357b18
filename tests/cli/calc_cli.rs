//! `rfsite calc` against published values (source beside each check).

use crate::cli::util::run;

fn calc_json(args: &[&str]) -> serde_json::Value {
    let mut a = vec!["calc"];
    a.extend_from_slice(args);
    a.push("--json");
    let out = run(&a);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("one JSON object")
}

#[test]
fn fspl_matches_p525() {
    // ITU-R P.525-4 eq. (1) with c = 299 792 458 m/s: 915 MHz, 10 m -> 51.676 dB (computed,
    // REFERENCES.md).
    let v = calc_json(&["fspl", "--freq-mhz", "915", "--distance-m", "10"]);
    assert!((v["loss_db"].as_f64().unwrap() - 51.676).abs() < 5e-4);
}

#[test]
fn concrete_below_its_fitted_range_is_flagged() {
    // ITU-R P.2040-3 Table 3: concrete fitted over 1–100 GHz, so 800 MHz is extrapolated.
    let v = calc_json(&[
        "material",
        "--material",
        "concrete",
        "--freq-mhz",
        "800",
        "--thickness-mm",
        "200",
    ]);
    assert_eq!(v["extrapolated"], serde_json::Value::Bool(true));
    let v = calc_json(&[
        "material",
        "--material",
        "concrete",
        "--freq-mhz",
        "2400",
        "--thickness-mm",
        "200",
    ]);
    assert_eq!(v["extrapolated"], serde_json::Value::Bool(false));
    // 200 mm concrete at 2.4 GHz, normal incidence: 14.575 dB (computed from P.2040-3 §3).
    assert!((v["transmission_loss_db"].as_f64().unwrap() - 14.575).abs() < 5e-3);
}

#[test]
fn material_reflection_follows_angle_and_polarisation() {
    // Reference: tests/reference/tmm/oblique_slabs.csv (PyPI tmm, tmm.coh_tmm; script
    // gen_oblique_slabs.py): brick, 2156.9 MHz, 33.4 mm, TE at 62.4 deg: reflection loss
    // 4.764795 dB, transmission loss 3.097335 dB; TM at 62.4 deg (near Brewster):
    // 37.175454 dB and 0.830371 dB; normal incidence 18.644605 dB.
    let at = |deg: &str, pol: &str| {
        calc_json(&[
            "material",
            "--material",
            "brick",
            "--freq-mhz",
            "2156.9",
            "--thickness-mm",
            "33.4",
            "--incidence-deg",
            deg,
            "--polarization",
            pol,
        ])
    };
    let v = at("62.4", "te");
    assert!((v["reflection_loss_db"].as_f64().unwrap() - 4.764_795).abs() < 0.01);
    assert!((v["transmission_loss_db"].as_f64().unwrap() - 3.097_335).abs() < 0.01);
    let v = at("62.4", "tm");
    assert!((v["reflection_loss_db"].as_f64().unwrap() - 37.175_454).abs() < 0.01);
    assert!((v["transmission_loss_db"].as_f64().unwrap() - 0.830_371).abs() < 0.01);
    let v = at("0", "te");
    assert!((v["reflection_loss_db"].as_f64().unwrap() - 18.644_605).abs() < 0.01);
}

#[test]
fn bel_median_matches_p2109() {
    // ITU-R P.2109-2, thermally efficient, 0.9 GHz, P = 0.5, horizontal: 31.16 dB (computed).
    let v = calc_json(&[
        "bel",
        "--freq-mhz",
        "900",
        "--building",
        "thermally-efficient",
        "--probability",
        "0.5",
    ]);
    assert!((v["loss_db"].as_f64().unwrap() - 31.16).abs() < 0.01);
}

#[test]
fn exposure_distance_follows_the_fcc_limit() {
    // FCC 47 CFR 1.1310 Table 1: general population 300–1500 MHz f/1500 mW/cm² -> 6 W/m² at
    // 900 MHz; r = sqrt(EIRP / (4 pi S)) far field.
    let v = calc_json(&[
        "exposure",
        "--eirp-w",
        "100",
        "--freq-mhz",
        "900",
        "--limit",
        "fcc-general",
    ]);
    assert!((v["limit_w_per_m2"].as_f64().unwrap() - 6.0).abs() < 1e-9);
    let r = (100.0 / (4.0 * std::f64::consts::PI * 6.0)).sqrt();
    assert!((v["distance_m"].as_f64().unwrap() - r).abs() < 1e-9);
}

#[test]
fn nonsense_is_refused_with_exit_2() {
    for args in [
        vec!["calc", "fspl", "--freq-mhz", "900", "--distance-m", "-3"],
        vec![
            "calc",
            "bel",
            "--freq-mhz",
            "900",
            "--building",
            "traditional",
            "--probability",
            "1.2",
        ],
        vec![
            "calc",
            "material",
            "--material",
            "unobtainium",
            "--freq-mhz",
            "900",
        ],
    ] {
        let out = run(&args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        assert!(!String::from_utf8_lossy(&out.stderr).contains("panicked"));
    }
    // Beyond the grazing limit (89.9 deg, rfsite-model GRAZING_LIMIT_DEG) the angle is
    // refused with the rule, not silently computed at another angle.
    for deg in ["89.95", "90", "-1"] {
        let out = run(&[
            "calc",
            "material",
            "--material",
            "brick",
            "--freq-mhz",
            "2400",
            "--incidence-deg",
            deg,
        ]);
        assert_eq!(out.status.code(), Some(2), "{deg}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains("89.9") && err.contains("grazing"), "{err}");
    }
    let v = calc_json(&[
        "material",
        "--material",
        "brick",
        "--freq-mhz",
        "2400",
        "--thickness-mm",
        "120",
        "--incidence-deg",
        "89.9",
    ]);
    // tmm, oblique_slabs.csv: brick 120 mm, 2.4 GHz, TE, 89.9 deg: 52.433450 dB.
    assert!((v["transmission_loss_db"].as_f64().unwrap() - 52.433_45).abs() < 0.01);
    let out = run(&[
        "calc",
        "material",
        "--material",
        "plasterbord",
        "--freq-mhz",
        "900",
    ]);
    assert!(String::from_utf8_lossy(&out.stderr).contains("plasterboard"));
}

#[test]
fn field_strength_and_area_coverage() {
    // E = P + 20 log f + 77.216 (eta0 = 376.73 ohm; REFERENCES.md, derived): 0 dBm, 100 MHz.
    let v = calc_json(&["field-strength", "--dbm", "0", "--freq-mhz", "100"]);
    assert!((v["dbuv_per_m"].as_f64().unwrap() - 117.216).abs() < 1e-3);
    // Jakes area fraction at sigma 8, n 3.5, edge 0.5: 0.7545 by direct numerical
    // integration (scipy quad fixture, tests/reference/physics/area_fixtures.csv).
    let v = calc_json(&[
        "area-coverage",
        "--sigma-db",
        "8",
        "--exponent",
        "3.5",
        "--edge-probability",
        "0.5",
    ]);
    assert!((v["area_fraction"].as_f64().unwrap() - 0.7545).abs() < 1e-3);
}

#[test]
fn exposure_takes_dbm_and_says_when_the_distance_is_in_the_near_field() {
    // 30 dBm = 1 W (definition of dBm). FCC 47 CFR 1.1310 Table 1: general population
    // 1.0 mW/cm² = 10 W/m² above 1500 MHz; r = sqrt(1 / (4 pi 10)) = 0.0892 m, which is
    // inside 3 wavelengths at 1842.5 MHz (3 × 0.1627 m = 0.488 m; common practice).
    let v = calc_json(&[
        "exposure",
        "--eirp-dbm",
        "30",
        "--freq-mhz",
        "1842.5",
        "--limit",
        "fcc-general",
    ]);
    assert!((v["eirp_w"].as_f64().unwrap() - 1.0).abs() < 1e-12);
    assert!((v["distance_m"].as_f64().unwrap() - 0.08921).abs() < 1e-4);
    assert!((v["far_field_min_m"].as_f64().unwrap() - 0.4881).abs() < 1e-3);
    assert_eq!(v["within_near_field"], true);
    assert!(v["note"].as_str().unwrap().contains("near field"));
    // 100 W at 900 MHz: 2.30 m against 3 λ = 1.00 m, a far-field distance.
    let far = calc_json(&[
        "exposure",
        "--eirp-w",
        "100",
        "--freq-mhz",
        "900",
        "--limit",
        "fcc-general",
    ]);
    assert_eq!(far["within_near_field"], false);
}

#[test]
fn materials_print_a_conductor_beyond_the_cap_never_as_zero() {
    // ITU-R P.2040-3 Table 3 metal (sigma = 1e7 S/m): a 100 mm slab transmits nothing
    // a receiver could see; the listing must not print 0.0 dB.
    let out = run(&["materials"]);
    let text = String::from_utf8_lossy(&out.stdout);
    let metal = text.lines().find(|l| l.starts_with("metal ")).unwrap();
    assert!(metal.contains("> 60") && !metal.contains(" 0.0"), "{metal}");
    let json = run(&["materials", "--json"]);
    let v: serde_json::Value = serde_json::from_slice(&json.stdout).unwrap();
    let m = v
        .as_array()
        .unwrap()
        .iter()
        .find(|m| m["id"] == "metal")
        .unwrap();
    for l in m["losses"].as_array().unwrap() {
        assert_eq!(l["beyond_cap"], true);
        assert!(l["loss_db"].is_null());
    }
    assert_eq!(m["confidence"], "published formula (ITU-R P.2040 slab)");
    // Empirical entries name the element they describe and how thickness is treated.
    let b = v
        .as_array()
        .unwrap()
        .iter()
        .find(|m| m["id"] == "brick-wall")
        .unwrap();
    assert_eq!(b["confidence"], "empirical, from memory");
    assert!(b["thickness"]
        .as_str()
        .unwrap()
        .contains("does not change it"));
}
