//! The demo's figures show what they say, checked from findings.json and the SVG files:
//! the cumulative distributions draw the threshold and the required level, the
//! standing-wave figures hold one curve per material of a class, and the grading maps
//! print each judged cell's mean level.

use std::collections::BTreeMap;

use serde_json::Value;

use crate::cli::maps::text_boxes;
use crate::cli::util::demo_report;

fn figures(f: &Value) -> BTreeMap<String, &Value> {
    f["figures"]
        .as_array()
        .unwrap()
        .iter()
        .map(|g| (g["id"].as_str().unwrap().to_string(), g))
        .collect()
}

fn svg(dir: &std::path::Path, id: &str) -> String {
    std::fs::read_to_string(dir.join("figures").join(format!("{id}.svg")))
        .unwrap_or_else(|e| panic!("{id}.svg: {e}"))
}

/// The texts of an SVG, in order.
fn texts(svg: &str) -> Vec<String> {
    text_boxes(svg).into_iter().map(|(t, _)| t).collect()
}

/// The x of a vertical two-point series.
fn vertical_x(s: &Value) -> f64 {
    let p = s["points"].as_array().unwrap();
    assert_eq!(p.len(), 2, "{}", s["name"]);
    assert_eq!(p[0][0], p[1][0], "{} is not vertical", s["name"]);
    p[0][0].as_f64().unwrap()
}

#[test]
fn demo_cdf_draws_the_threshold_and_the_required_level() {
    let (dir, f) = demo_report();
    let figs = figures(&f);
    let mut seen = 0;
    for svc in f["services"].as_array().unwrap() {
        let id = svc["id"].as_str().unwrap();
        let Some(fig) = figs.get(&format!("survey-cdf-{id}")) else {
            continue;
        };
        seen += 1;
        // Expected values: the grading's required level in findings.json, which is the
        // site file's threshold + design margin (site.toml: ps700 -95 + 5 = -90 dBm,
        // lte1800 -105 + 3 = -102 dBm).
        let req = &svc["required"];
        let (thr, meas) = (
            req["threshold_dbm"].as_f64().unwrap(),
            req["measured_dbm"].as_f64().unwrap(),
        );
        let series = fig["series"].as_array().unwrap();
        assert_eq!(series.len(), 3, "{id}: curve, threshold, required level");
        assert_eq!(vertical_x(&series[1]), thr);
        assert_eq!(vertical_x(&series[2]), meas);
        let names: Vec<&str> = series.iter().map(|s| s["name"].as_str().unwrap()).collect();
        assert!(names[1].contains(&format!("{thr:.1} dBm")), "{names:?}");
        assert!(names[2].contains(&format!("{meas:.1} dBm")), "{names:?}");
        // The key of the drawn figure names both lines with their values.
        let t = texts(&svg(dir.path(), &format!("survey-cdf-{id}")));
        for n in &names {
            assert!(t.iter().any(|x| x == n), "{id}: key lacks '{n}': {t:?}");
        }
        // The curve ends at 100 % and rises.
        let pts = series[0]["points"].as_array().unwrap();
        assert_eq!(pts.last().unwrap()[1].as_f64().unwrap(), 100.0);
        assert!(pts.windows(2).all(|w| w[0][0].as_f64() <= w[1][0].as_f64()));
    }
    assert_eq!(seen, 2, "the demo surveys both services");
    assert!(
        !figs.contains_key("survey-cdf"),
        "the pooled figure is gone"
    );
    assert_eq!(
        f["site"]["id"].as_str().unwrap(),
        "kestrel-quay-clinic",
        "values above are the demo's"
    );
    let ps = f["services"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["id"] == "ps700")
        .unwrap();
    assert_eq!(ps["required"]["measured_dbm"].as_f64().unwrap(), -90.0);
}

#[test]
fn demo_standing_waves_share_a_figure_per_service_and_material_class() {
    let (dir, f) = demo_report();
    let figs = figures(&f);
    let reflectors = f["extra"]["reflection-nulls"]["reflectors"]
        .as_array()
        .unwrap();
    assert!(!reflectors.is_empty());
    // Expected ids: `nulls-<service>.<class>` for each (service, material class) among the
    // reflectors (findings.json `extra.reflection-nulls.reflectors`, their `class` from
    // the material library).
    let mut want: BTreeMap<String, Vec<&Value>> = BTreeMap::new();
    for r in reflectors {
        let id = format!(
            "nulls-{}.{}",
            r["service"].as_str().unwrap(),
            r["class"].as_str().unwrap()
        );
        assert_eq!(r["figure"].as_str().unwrap(), id);
        want.entry(id).or_default().push(r);
    }
    let got: Vec<&String> = figs.keys().filter(|k| k.starts_with("nulls-")).collect();
    assert_eq!(got, want.keys().collect::<Vec<_>>());
    assert!(
        want.len() < reflectors.len(),
        "some class holds two materials in the demo"
    );
    for (id, rs) in &want {
        let series = figs[id]["series"].as_array().unwrap();
        assert_eq!(
            series.len(),
            rs.len() + 1,
            "{id}: a curve per material + free space"
        );
        let t = texts(&svg(dir.path(), id));
        for (s, r) in series.iter().zip(rs) {
            let name = s["name"].as_str().unwrap();
            assert!(
                name.starts_with(r["material_name"].as_str().unwrap()),
                "{name}"
            );
            let gamma = format!("(|Gamma| = {:.2})", r["gamma_abs"].as_f64().unwrap());
            assert!(name.ends_with(&gamma), "{name} vs {gamma}");
            assert!(t.iter().any(|x| x == name), "{id}: key lacks '{name}'");
        }
        assert_eq!(series.last().unwrap()["name"], "free space (no reflection)");
    }
}

/// The value a grading cell prints: the measured mean when judged on measurements, else
/// the predicted mean (findings.json `extra.grading.services[].floors[].cells`).
fn cell_value(c: &Value) -> Option<f64> {
    match c["judged_by"].as_str()? {
        "measured" => c["measured_mean_dbm"].as_f64(),
        "predicted" => c["predicted_mean_dbm"].as_f64(),
        _ => None,
    }
}

#[test]
fn demo_grading_cells_print_their_mean_level() {
    let (dir, f) = demo_report();
    let mut maps = 0;
    for s in f["extra"]["grading"]["services"].as_array().unwrap() {
        let sid = s["service"].as_str().unwrap();
        // A mean below the receiver floor prints as "no service" (findings.json
        // `services[].receiver_floor_dbm`), never as a number.
        let rx = f["services"]
            .as_array()
            .unwrap()
            .iter()
            .find(|x| x["id"] == sid)
            .and_then(|x| x["receiver_floor_dbm"].as_f64())
            .unwrap_or(f64::NEG_INFINITY);
        for fl in s["floors"].as_array().unwrap() {
            let id = format!("grading-{}.{sid}", fl["floor"].as_str().unwrap());
            let t = texts(&svg(dir.path(), &id));
            let mut want: Vec<f64> = fl["cells"]
                .as_array()
                .unwrap()
                .iter()
                .filter_map(cell_value)
                .filter(|v| *v >= rx)
                .collect();
            assert!(!want.is_empty(), "{id}: no cell values");
            let mut printed: Vec<f64> = t
                .iter()
                .filter(|x| x.starts_with('-') && x.contains('.'))
                .filter_map(|x| x.parse().ok())
                .collect();
            want.sort_by(f64::total_cmp);
            printed.sort_by(f64::total_cmp);
            // The demo's cells are large enough for every value at 0.1 dB; otherwise the
            // note would count the shortened ones.
            assert!(!t.iter().any(|x| x.starts_with("Cells too small")), "{id}");
            assert_eq!(printed.len(), want.len(), "{id}: {printed:?} vs {want:?}");
            // Each printed to 0.1 dB: within half a step of the findings.json value (which
            // serde_json may read back one ulp off at a rounding tie).
            for (p, w) in printed.iter().zip(&want) {
                assert!(
                    (p - w).abs() <= 0.05 + 1e-9,
                    "{id}: printed {p}, findings {w}"
                );
            }
            maps += 1;
        }
    }
    assert!(maps >= 4, "expected the demo's grading maps, found {maps}");
}
