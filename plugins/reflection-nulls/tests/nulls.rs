//! Tests of the reflection-nulls plugin on small hand-made sites.

use rfsite_model::{load, MaterialLibrary, Site, SourceFile};
use rfsite_physics::fspl::wavelength_m;
use rfsite_plugin::*;
use rfsite_plugin_reflection_nulls::*;

/// A 10 m x 10 m floor with one wall of `material` along y = 5 from x = 0 to 10, one
/// service at `freq_mhz`, and transmitters at the given distances in front of the wall
/// (at x = 5).
fn site(material: &str, freq_mhz: f64, tx_distances_m: &[f64]) -> Site {
    site_with(material, freq_mhz, tx_distances_m, "")
}

/// As [`site`], with `extra` TOML (more walls, say) appended.
fn site_with(material: &str, freq_mhz: f64, tx_distances_m: &[f64], extra: &str) -> Site {
    let mut text = format!(
        r#"
[site]
id = "t"
name = "Test"
units = "metres"
report_date = "2026-01-15"
[[floors]]
id = "L1"
elevation = 0.0
height = 3.0
outline = [[0, 0], [10, 0], [10, 10], [0, 10]]
[[walls]]
id = "reflector"
floor = "L1"
material = "{material}"
thickness = 0.002
points = [[0, 5], [10, 5]]
[[services]]
id = "svc"
freq_mhz = {freq_mhz}
threshold_dbm = -95.0
"#
    );
    for (i, d) in tx_distances_m.iter().enumerate() {
        text.push_str(&format!(
            "[[transmitters]]\nid = \"T{i}\"\nservice = \"svc\"\nfloor = \"L1\"\nposition = [5.0, {:.15}]\nheight = 2.5\npower_dbm = 10.0\nantenna_gain_dbi = 2.0\n",
            5.0 + d
        ));
    }
    text.push_str(extra);
    let loaded = load(
        &SourceFile::new("t.toml", text),
        &MaterialLibrary::builtin(),
    );
    let diags: Vec<String> = loaded
        .diagnostics
        .items
        .iter()
        .map(|d| d.to_string())
        .collect();
    loaded
        .site
        .unwrap_or_else(|| panic!("test site does not load: {diags:?}"))
}

fn run_with(
    site: &Site,
    options: &toml::Table,
    surveys: &SurveyData,
) -> Result<PluginOutput, PluginError> {
    let ctx = Context {
        site,
        options,
        earlier: &[],
        surveys,
        base: None,
    };
    ReflectionNulls.run(&ctx)
}

fn run(site: &Site) -> PluginOutput {
    run_with(site, &toml::Table::new(), &SurveyData::default()).expect("plugin runs")
}

fn flagged(out: &PluginOutput) -> Vec<&Finding> {
    out.findings
        .iter()
        .filter(|f| f.id.starts_with("reflection-null-T"))
        .collect()
}

#[test]
fn metal_cladding_half_wave_is_flagged_quarter_wave_is_not() {
    let lambda = wavelength_m(900.0);
    // T0 at lambda/2 (a null of Gamma ~ -1), T1 at lambda/4 (a peak).
    let s = site("metal-cladding", 900.0, &[lambda / 2.0, lambda / 4.0]);
    let out = run(&s);
    let f = flagged(&out);
    assert_eq!(f.len(), 1, "{:#?}", out.findings);
    assert_eq!(f[0].id, "reflection-null-T0-reflector");
    // |Gamma| = 10^(-0.1/20) = 0.9886 -> ideal null 38.8 dB deep, capped at 30 dB: major.
    assert_eq!(f[0].severity, Severity::Major);
    assert!(f[0].detail.contains("metal-cladding"));
    assert!(f[0].detail.contains("lambda/4"));
    let tx = out.extra["transmitters_near_nulls"].as_array().unwrap();
    assert_eq!(tx.len(), 1);
    assert!((tx[0]["fade_db"].as_f64().unwrap() - DEFAULT_MAX_FADE_DB).abs() < 1e-9);
    // The peaks on either side of lambda/2 are lambda/4 and 3 lambda/4.
    assert!((tx[0]["peak_below_m"].as_f64().unwrap() - lambda / 4.0).abs() < 1e-9);
    assert!((tx[0]["peak_above_m"].as_f64().unwrap() - 3.0 * lambda / 4.0).abs() < 1e-9);
    // Empirical reflection: a warning says the phase was assumed.
    assert!(out
        .warnings
        .iter()
        .any(|w| w.message.contains("phase is assumed to be pi")));
}

#[test]
fn null_positions_follow_the_textbook_formula() {
    // Standing-wave textbook formula, common practice: for Gamma = -1 the nulls are at
    // x = n lambda/2 and the peaks at lambda/4 + n lambda/2 (REFERENCES.md).
    let lambda = wavelength_m(900.0);
    let s = site("metal-cladding", 900.0, &[]);
    let out = run(&s);
    let r = &out.extra["reflectors"].as_array().unwrap()[0];
    let nulls: Vec<f64> = r["nulls_m"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    let peaks: Vec<f64> = r["peaks_m"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    assert_eq!(nulls.len(), (2.0 / (lambda / 2.0)).floor() as usize + 1);
    for (n, x) in nulls.iter().enumerate() {
        assert!(
            (x - n as f64 * lambda / 2.0).abs() < 1e-12,
            "null {n} at {x}"
        );
    }
    for (n, x) in peaks.iter().enumerate() {
        assert!(
            (x - (lambda / 4.0 + n as f64 * lambda / 2.0)).abs() < 1e-12,
            "peak {n} at {x}"
        );
    }
    assert!(peaks.iter().all(|x| *x <= 2.0) && nulls.iter().all(|x| *x <= 2.0));
}

#[test]
fn itu_metal_slab_nulls_match_the_formula() {
    // ITU-R P.2040-3 Table 3 metal (sigma = 1e7 S/m) is nearly a perfect conductor: Gamma
    // within 1e-3 of -1, so the nulls sit at n lambda/2 to a few micrometres (standing-wave
    // textbook formula, common practice).
    let lambda = wavelength_m(2400.0);
    let s = site("metal", 2400.0, &[3.0 * lambda / 2.0]);
    let out = run(&s);
    let r = &out.extra["reflectors"].as_array().unwrap()[0];
    assert!((r["gamma_abs"].as_f64().unwrap() - 1.0).abs() < 1e-3);
    assert!(!r["empirical"].as_bool().unwrap());
    for (n, x) in r["nulls_m"].as_array().unwrap().iter().enumerate() {
        assert!((x.as_f64().unwrap() - n as f64 * lambda / 2.0).abs() < 1e-5);
    }
    assert_eq!(flagged(&out).len(), 1);
    assert!(!out
        .warnings
        .iter()
        .any(|w| w.message.contains("phase is assumed")));
}

#[test]
fn tolerance_is_lambda_over_16_and_shallow_fades_are_minor() {
    let lambda = wavelength_m(900.0);
    let tol = lambda / 16.0;
    // T0 just inside the tolerance of the null at lambda/2, T1 just outside it.
    let s = site(
        "metal-cladding",
        900.0,
        &[lambda / 2.0 + 0.95 * tol, lambda / 2.0 + 1.05 * tol],
    );
    let out = run(&s);
    let f = flagged(&out);
    assert_eq!(f.len(), 1);
    assert_eq!(f[0].id, "reflection-null-T0-reflector");
    // Near the edge of the tolerance the fade is a few dB (computed: |1 + Gamma e^{-j2kx}|).
    let g = rfsite_physics::Complex64::new(-(10f64.powf(-0.1 / 20.0)), 0.0);
    let expect = fade_db(g, 900.0, lambda / 2.0 + 0.95 * tol, 30.0);
    assert!(expect > 0.0 && expect < MAJOR_FADE_DB);
    assert_eq!(f[0].severity, Severity::Minor);
    assert!((out.extra["tolerance_m"]["svc"].as_f64().unwrap() - tol).abs() < 1e-15);
    // A wider tolerance option catches T1 too.
    let mut opts = toml::Table::new();
    opts.insert("tolerance_m".into(), toml::Value::Float(1.2 * tol));
    let out = run_with(&s, &opts, &SurveyData::default()).unwrap();
    assert_eq!(flagged(&out).len(), 2);
}

#[test]
fn weak_reflectors_are_ignored_and_min_gamma_is_an_option() {
    // Plasterboard partition: reflection loss about 10 dB -> |Gamma| about 0.32 < 0.7.
    let s = site(
        "plasterboard-partition",
        900.0,
        &[wavelength_m(900.0) / 2.0],
    );
    let out = run(&s);
    assert!(out.findings.is_empty());
    assert!(out.figures.is_empty());
    let mut opts = toml::Table::new();
    opts.insert("min_gamma".into(), toml::Value::Float(0.3));
    let out = run_with(&s, &opts, &SurveyData::default()).unwrap();
    assert_eq!(out.figures.len(), 1);
    opts.insert("min_gamma".into(), toml::Value::Float(1.5));
    assert!(matches!(
        run_with(&s, &opts, &SurveyData::default()),
        Err(PluginError::BadOption { .. })
    ));
    opts.insert("min_gamma".into(), toml::Value::String("high".into()));
    assert!(matches!(
        run_with(&s, &opts, &SurveyData::default()),
        Err(PluginError::BadOption { .. })
    ));
}

#[test]
fn figure_and_summary_table() {
    let s = site("metal-cladding", 900.0, &[]);
    let out = run(&s);
    assert_eq!(out.figures.len(), 1);
    let fig = &out.figures[0];
    // One figure per service and material class (`rfsite_model::names`).
    assert_eq!(fig.id, "nulls-svc.metal");
    assert_eq!(fig.kind, "line");
    let pts = &fig.series[0].points;
    assert_eq!(pts[0][0], 0.0);
    assert!((pts.last().unwrap()[0] - 2.0).abs() < 1e-12);
    let lo = pts.iter().map(|p| p[1]).fold(f64::INFINITY, f64::min);
    let hi = pts.iter().map(|p| p[1]).fold(f64::NEG_INFINITY, f64::max);
    // Null drawn at the cap; peak 20 log10(1 + |Gamma|) = 5.97 dB (computed).
    assert!((lo + DEFAULT_MAX_FADE_DB).abs() < 1e-9);
    assert!((hi - 20.0 * (1.0 + 10f64.powf(-0.1 / 20.0)).log10()).abs() < 1e-9);
    let t = out
        .tables
        .iter()
        .find(|t| t.id == "reflection-nulls-materials")
        .unwrap();
    assert_eq!(t.rows.len(), 1);
    assert_eq!(t.rows[0][1], "metal-cladding");
    assert_eq!(t.rows[0][6], "0.000");
    assert_eq!(t.rows[0][7], format!("{:.3}", wavelength_m(900.0) / 4.0));
}

#[test]
fn survey_points_are_counted_per_floor() {
    let lambda = wavelength_m(900.0);
    let s = site("metal-cladding", 900.0, &[]);
    let m = |y: f64, line: usize| Measurement {
        floor: "L1".into(),
        service: "svc".into(),
        x_m: 3.0,
        y_m: y,
        level_dbm: -80.0,
        file: "s.csv".into(),
        line,
    };
    let surveys = SurveyData {
        points: vec![
            m(5.0 + lambda, 2),
            m(5.0 - lambda / 2.0, 3),
            m(5.0 + lambda / 4.0, 4),
            m(9.0, 5),
        ],
        ..Default::default()
    };
    let out = run_with(&s, &toml::Table::new(), &surveys).unwrap();
    let t = out
        .tables
        .iter()
        .find(|t| t.id == "reflection-nulls-survey")
        .unwrap();
    assert_eq!(
        t.rows,
        vec![vec!["L1", "svc", "4", "3", "2", "30.0", "reflector"]]
    );
    // One summary finding for the floor, not one per point.
    let survey_findings: Vec<_> = out
        .findings
        .iter()
        .filter(|f| f.id.starts_with("reflection-null-survey"))
        .collect();
    assert_eq!(survey_findings.len(), 1);
    assert_eq!(survey_findings[0].severity, Severity::Info);
}

#[test]
fn depth_helpers() {
    // Peak-to-null 20 log10((1+|G|)/(1-|G|)) (textbook; common practice): |G| = 0.5 -> 9.54 dB,
    // below the cap so the physics value is returned unchanged.
    assert!(
        (capped_peak_to_null_db(0.5, 30.0) - rfsite_physics::standing_wave::peak_to_null_db(0.5))
            .abs()
            < 1e-12
    );
    // |G| = 1: capped null depth plus the 6.02 dB peak.
    assert!((capped_peak_to_null_db(1.0, 30.0) - (30.0 + 20.0 * 2f64.log10())).abs() < 1e-12);
    assert!((null_fade_db(0.5, 30.0) - 20.0 * 2f64.log10()).abs() < 1e-12);
}

#[test]
fn one_figure_per_material_class_with_a_curve_per_material() {
    // Two metal materials and one coated glazing, on one floor: the metal ones share the
    // figure `nulls-svc.metal` (material library `class = "metal"`), the glazing has
    // `nulls-svc.coated-glass`; each curve is named with its material and |Gamma|.
    let extra = r#"
[[walls]]
id = "door"
floor = "L1"
material = "metal-door"
thickness = 0.002
points = [[0, 2], [10, 2]]
[[walls]]
id = "glazing"
floor = "L1"
material = "coated-glazing"
thickness = 0.006
points = [[0, 8], [10, 8]]
"#;
    let s = site_with("metal-cladding", 900.0, &[], extra);
    let out = run(&s);
    let ids: Vec<&str> = out.figures.iter().map(|f| f.id.as_str()).collect();
    assert_eq!(ids, vec!["nulls-svc.coated-glass", "nulls-svc.metal"]);
    let reflectors = out.extra["reflectors"].as_array().unwrap();
    for fig in &out.figures {
        let mine: Vec<_> = reflectors
            .iter()
            .filter(|r| r["figure"] == fig.id.as_str())
            .collect();
        // A curve per reflector of the class, then free space.
        assert_eq!(fig.series.len(), mine.len() + 1, "{}", fig.id);
        for (series, r) in fig.series.iter().zip(&mine) {
            let name = format!(
                "{} (|Gamma| = {:.2})",
                r["material_name"].as_str().unwrap(),
                r["gamma_abs"].as_f64().unwrap()
            );
            assert_eq!(series.name, name);
            // Its nulls (the plugin's own list) are at the drawn minimum, -max_fade_db at
            // most: the curve is the reflector's, not a neighbour's.
            let low = series
                .points
                .iter()
                .map(|p| p[1])
                .fold(f64::INFINITY, f64::min);
            assert!(low >= -DEFAULT_MAX_FADE_DB - 1e-9);
        }
        let last = fig.series.last().unwrap();
        assert_eq!(last.name, "free space (no reflection)");
        assert!(last.points.iter().all(|p| p[1] == 0.0));
    }
    let metal = out
        .figures
        .iter()
        .find(|f| f.id == "nulls-svc.metal")
        .unwrap();
    assert_eq!(
        metal.series.len(),
        3,
        "metal-cladding and metal-door, free space"
    );
}
