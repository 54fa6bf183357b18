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

/// The number under `key` of a `calc --json` answer.
fn num(v: &serde_json::Value, key: &str) -> f64 {
    v[key].as_f64().unwrap_or(f64::NAN)
}

#[test]
fn noise_rise_from_delta_and_from_levels() {
    // Power sum R = 10 log10(1 + 10^(dN/10)) (hand calculation): dN = -10 dB -> 10 log10 1.1
    // = 0.4139 dB.
    let v = calc_json(&["noise-rise", "--delta-db", "-10"]);
    assert!((num(&v, "noise_rise_db") - 0.4139).abs() < 1e-4);
    // Hand calculation: N_out -90 dBm, loss 20 dB, floor -110 dBm -> dN = -90 - 20 + 110 =
    // 0 dB -> 10 log10 2 = 3.0103 dB, above the ~1 dB planning limit (from memory).
    let v = calc_json(&[
        "noise-rise",
        "--noise-out-dbm",
        "-90",
        "--link-loss-db",
        "20",
        "--noise-floor-dbm",
        "-110",
    ]);
    assert!(num(&v, "delta_db").abs() < 1e-12);
    assert!((num(&v, "noise_rise_db") - 3.0103).abs() < 1e-4);
    assert_eq!(v["above_planning_limit"], true);
}

#[test]
fn booster_downlink_chain_by_hand() {
    // Hand calculation (link budget, common practice): roof -60 dBm + donor 10 dBi - cable
    // 3.5 dB = input -53.5 dBm; wanted output 6.5 dBm -> gain 60 dB; distribution 12.3 dB ->
    // port -5.8 dBm; server 2 dBi -> EIRP -3.8 dBm; 4 channels -> composite 6.5 + 10 log10 4
    // = 12.5206 dBm; rated 12 dBm, no back-off -> margin -0.5206 dB, exceeded.
    let chain = [
        "booster",
        "--roof-dbm",
        "-60",
        "--donor-gain-dbi",
        "10",
        "--donor-cable-db",
        "3.5",
        "--output-dbm",
        "6.5",
        "--channels",
        "4",
        "--distribution-db",
        "12.3",
        "--server-gain-dbi",
        "2",
    ];
    let mut args = chain.to_vec();
    args.extend_from_slice(&["--rated-composite-dbm", "12"]);
    let v = calc_json(&args);
    for (key, want) in [
        ("gain_db", 60.0),
        ("input_dbm", -53.5),
        ("output_per_channel_dbm", 6.5),
        ("composite_dbm", 12.5206),
        ("port_dbm", -5.8),
        ("eirp_dbm", -3.8),
        ("margin_db", -0.5206),
    ] {
        assert!((num(&v, key) - want).abs() < 1e-3, "{key}: {v}");
    }
    assert_eq!(v["exceeded"], true);
    // Rated 20 dBm less 6 dB back-off = 14 dBm: margin 14 - 12.5206 = 1.4794 dB, within.
    let mut args = chain.to_vec();
    args.extend_from_slice(&["--rated-composite-dbm", "20", "--back-off-db", "6"]);
    let v = calc_json(&args);
    assert!((num(&v, "margin_db") - 1.4794).abs() < 1e-3);
    assert_eq!(v["exceeded"], false);
}

#[test]
fn isolation_across_a_slab_by_hand() {
    // ITU-R P.525-4 with exact c: 32.4478 + 20 log10 770 + 20 log10 0.020 = 32.4478 +
    // 57.7298 - 33.9794 = 56.1982 dB; + slab 20 dB + donor back lobe 15 dB (-15 dBi) - server
    // 0 dBi + cables 5 dB = 96.1982 dB; margin 15 dB (common practice) -> 81.1982 dB; a
    // gain of 85 dB is 3.8018 dB short (hand calculation).
    let v = calc_json(&[
        "isolation",
        "--distance-m",
        "20",
        "--freq-mhz",
        "770",
        "--obstruction-db",
        "20",
        "--donor-gain-dbi",
        "-15",
        "--cables-db",
        "5",
        "--gain-db",
        "85",
    ]);
    assert!((num(&v, "free_space_db") - 56.1982).abs() < 1e-3);
    assert!((num(&v, "isolation_db") - 96.1982).abs() < 1e-3);
    assert!((num(&v, "max_stable_gain_db") - 81.1982).abs() < 1e-3);
    assert!((num(&v, "short_by_db") - 3.8018).abs() < 1e-3);
    assert_eq!(v["stable"], false);
}

#[test]
fn booster_calcs_refuse_nonsense_with_exit_2() {
    // A distance of 0 m has no free-space loss (ITU-R P.525 needs d > 0); zero channels
    // have no composite power; a negative cable loss is a gain.
    for (args, says) in [
        (
            vec![
                "calc",
                "isolation",
                "--distance-m",
                "0",
                "--freq-mhz",
                "770",
            ],
            "--distance-m",
        ),
        (
            vec![
                "calc",
                "booster",
                "--roof-dbm",
                "-60",
                "--donor-gain-dbi",
                "10",
                "--donor-cable-db",
                "3.5",
                "--output-dbm",
                "6.5",
                "--channels",
                "0",
            ],
            "--channels",
        ),
        (
            vec![
                "calc",
                "isolation",
                "--distance-m",
                "20",
                "--freq-mhz",
                "770",
                "--cables-db",
                "-3",
            ],
            "--cables-db",
        ),
        (
            vec!["calc", "noise-rise", "--delta-db", "NaN"],
            "--delta-db",
        ),
    ] {
        let out = run(&args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains(says) && !err.contains("panicked"), "{err}");
    }
}
