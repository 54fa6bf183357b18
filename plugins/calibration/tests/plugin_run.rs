//! The plugin's run on a small site loaded from TOML: calibration enabled without a usable
//! survey point must tell the user (a warning per service and one overall), never return a
//! silently empty result; a known offset is recovered from points made from the
//! prediction itself; a term the paths cannot separate is named.

use rfsite_model::{MaterialLibrary, SourceFile};
use rfsite_plugin::{Context, Measurement, Plugin, PluginOutput, SurveyData};
use rfsite_plugin_calibration::{scene_for, Calibration};
use rfsite_plugin_free_space::predict;

const SITE: &str = r#"
[site]
id = "no-survey"
name = "Calibration without survey"
report_date = "2026-01-15"
units = "metres"

[prediction]
grid_step = 1.0
receiver_height = 1.5

[[floors]]
id = "L1"
elevation = 0.0
height = 3.5
slab_material = "concrete-floor-slab"
slab_thickness = 0.25
outline = [[0, 0], [20, 0], [20, 10], [0, 10]]

[[walls]]
id = "w1"
floor = "L1"
material = "plasterboard-partition"
thickness = 0.1
points = [[10, 0], [10, 10]]

[[services]]
id = "s900"
freq_mhz = 900.0
threshold_dbm = -95.0

[[transmitters]]
id = "T1"
service = "s900"
floor = "L1"
position = [4, 5]
height = 2.8
power_dbm = 20.0
antenna_gain_dbi = 2.0
pattern = "isotropic"

[plugins.calibration]
enabled = true
fit = ["offset", "material:plasterboard-partition"]
min_points = 2
"#;

fn run(surveys: &SurveyData) -> PluginOutput {
    let file = SourceFile::new("no-survey/site.toml".to_string(), SITE.to_string());
    let loaded = rfsite_model::load(&file, &MaterialLibrary::builtin());
    let site = loaded
        .site
        .unwrap_or_else(|| panic!("{:?}", loaded.diagnostics));
    let layers = predict(&site, "multi-wall", &scene_for(&site));
    let earlier = vec![(
        "multi-wall".to_string(),
        PluginOutput {
            layers,
            ..Default::default()
        },
    )];
    assert!(Calibration.applies(&site));
    let ctx = Context {
        site: &site,
        options: &site.plugin_options["calibration"],
        earlier: &earlier,
        surveys,
        base: None,
    };
    Calibration.run(&ctx).expect("runs")
}

/// Survey points at grid nodes of the prediction, `offset` dB above it, where `keep` says.
fn points_from_prediction(offset: f64, keep: impl Fn(f64) -> bool) -> SurveyData {
    let file = SourceFile::new("no-survey/site.toml".to_string(), SITE.to_string());
    let site = rfsite_model::load(&file, &MaterialLibrary::builtin())
        .site
        .unwrap();
    let layer = predict(&site, "multi-wall", &scene_for(&site)).remove(0);
    let g = layer.grid.to_grid();
    let points = (0..g.len())
        .filter(|&i| {
            let p = g.point(i);
            layer.level_dbm[i].is_finite() && (p.x - 10.0).abs() > 0.6 && keep(p.x)
        })
        .map(|i| Measurement {
            floor: "L1".into(),
            service: "s900".into(),
            x_m: g.point(i).x,
            y_m: g.point(i).y,
            level_dbm: layer.level_dbm[i] as f64 + offset,
            file: "walk.csv".into(),
            line: i + 2,
        })
        .collect();
    SurveyData {
        points,
        ..Default::default()
    }
}

fn messages(o: &PluginOutput) -> Vec<&str> {
    o.warnings.iter().map(|w| w.message.as_str()).collect()
}

#[test]
fn no_survey_at_all_is_a_warning() {
    let o = run(&SurveyData::default());
    let m = messages(&o);
    assert!(
        m.iter()
            .any(|w| w.starts_with("service `s900`: not calibrated: no survey point")),
        "{m:?}"
    );
    assert!(
        m.iter().any(|w| w.contains("no service was calibrated")),
        "{m:?}"
    );
    assert!(o.tables.is_empty() && o.layers.is_empty());
    assert_eq!(o.extra["not_calibrated"][0]["service"], "s900");
}

#[test]
fn survey_points_off_every_floor_are_a_warning() {
    // Points on a floor the plan does not have: nothing to compare, so nothing usable.
    let points = (0..3)
        .map(|i| Measurement {
            floor: "L9".into(),
            service: "s900".into(),
            x_m: 2.0 + i as f64,
            y_m: 5.0,
            level_dbm: -60.0,
            file: "walk.csv".into(),
            line: i + 2,
        })
        .collect();
    let o = run(&SurveyData {
        points,
        ..Default::default()
    });
    let m = messages(&o);
    assert!(
        m.iter()
            .any(|w| w.contains("0 usable survey points of 3 (3 without a prediction")),
        "{m:?}"
    );
    assert!(m.iter().any(|w| w.contains("no service was calibrated")));
}

#[test]
fn a_known_offset_is_recovered() {
    // Measured = predicted + 3 dB on both sides of the partition (synthetic, exact): the
    // fit must find offset 3 and no change of the partition (construction).
    let o = run(&points_from_prediction(3.0, |_| true));
    let p = &o.extra["services"][0]["parameters"];
    assert!((p[0]["value"].as_f64().unwrap() - 3.0).abs() < 1e-6, "{p}");
    assert!(p[1]["value"].as_f64().unwrap().abs() < 1e-6, "{p}");
    assert_eq!(
        (p[0]["state"].as_str(), p[1]["state"].as_str()),
        (Some("fitted"), Some("fitted"))
    );
    assert!(o.tables.iter().any(|t| t.id == "calibration-parameters"));
    assert!(!messages(&o).iter().any(|w| w.contains("not calibrated")));
}

#[test]
fn an_inseparable_term_is_named() {
    // Every point beyond the partition: each path crosses it exactly once, so its change
    // cannot be told from the offset; the offset (listed first) takes the 3 dB.
    let o = run(&points_from_prediction(3.0, |x| x > 10.0));
    let m = messages(&o);
    assert!(
        m.iter().any(|w| w.contains(
            "`material:plasterboard-partition` not fitted: the measured paths cannot tell it apart"
        )),
        "{m:?}"
    );
    let p = &o.extra["services"][0]["parameters"];
    assert_eq!(p[1]["state"], "not_separable");
    assert!((p[0]["value"].as_f64().unwrap() - 3.0).abs() < 1e-6, "{p}");
}
