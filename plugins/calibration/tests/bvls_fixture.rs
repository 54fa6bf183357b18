//! The bounded solver against scipy.optimize.lsq_linear(method="bvls") (scipy 1.17.1,
//! numpy 2.4.6 from PyPI; the versions are also in the fixture's `source` field): fixture
//! written by tests/reference/scipy/gen_bvls_fixture.py. For the "constructed" cases the
//! optimum is also known by construction (the KKT conditions hold there exactly; Lawson &
//! Hanson 1974 ch. 23, Stark & Parker 1995), and the script checked scipy against it.

use rfsite_plugin_calibration::{bvls, VarState};
use serde_json::Value;

const FIXTURE: &str = include_str!("../../../tests/reference/scipy/bvls_fixture.json");

fn nums(v: &Value, missing: f64) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().unwrap_or(missing))
        .collect()
}

struct Case {
    name: String,
    a: Vec<Vec<f64>>,
    b: Vec<f64>,
    lo: Vec<f64>,
    hi: Vec<f64>,
    x: Vec<f64>,
    rss: f64,
    active: Vec<i64>,
    nit: u64,
    constructed: Option<Vec<f64>>,
}

fn cases() -> (String, Vec<Case>) {
    let doc: Value = serde_json::from_str(FIXTURE).expect("fixture is JSON");
    let source = doc["source"].as_str().expect("source").to_string();
    let cases = doc["cases"]
        .as_array()
        .expect("cases")
        .iter()
        .map(|c| Case {
            name: c["name"].as_str().unwrap().to_string(),
            a: c["a"]
                .as_array()
                .unwrap()
                .iter()
                .map(|r| nums(r, f64::NAN))
                .collect(),
            b: nums(&c["b"], f64::NAN),
            lo: nums(&c["lb"], f64::NEG_INFINITY),
            hi: nums(&c["ub"], f64::INFINITY),
            x: nums(&c["x"], f64::NAN),
            rss: c["rss"].as_f64().unwrap(),
            active: c["active_mask"]
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_i64().unwrap())
                .collect(),
            nit: c["nit"].as_u64().unwrap(),
            constructed: c["x_constructed"]
                .as_array()
                .map(|_| nums(&c["x_constructed"], f64::NAN)),
        })
        .collect();
    (source, cases)
}

/// scipy's active_mask for one of our states (a zero column is free to scipy).
fn mask(st: VarState) -> i64 {
    match st {
        VarState::AtLower => -1,
        VarState::AtUpper => 1,
        _ => 0,
    }
}

fn max_dev(a: &[f64], b: &[f64]) -> f64 {
    a.iter()
        .zip(b)
        .map(|(u, v)| (u - v).abs())
        .fold(0.0, f64::max)
}

#[test]
fn agrees_with_scipy_lsq_linear_bvls() {
    let (source, cases) = cases();
    assert!(source.starts_with("scipy "), "{source}");
    assert!(cases.len() >= 15, "fixture has {} cases", cases.len());
    let mut worst = 0.0_f64;
    for c in &cases {
        let s = bvls(&c.a, &c.b, &c.lo, &c.hi).unwrap_or_else(|e| panic!("{}: {e}", c.name));
        let dev = max_dev(&s.x, &c.x);
        worst = worst.max(dev);
        // Source: scipy.optimize.lsq_linear(method="bvls"), fixture above.
        assert!(dev < 1e-6, "{}: x {:?} vs scipy {:?}", c.name, s.x, c.x);
        assert!(
            (s.rss - c.rss).abs() <= 1e-9 * c.rss.max(1.0),
            "{}: rss {} vs scipy {}",
            c.name,
            s.rss,
            c.rss
        );
        let ours: Vec<i64> = s.state.iter().map(|st| mask(*st)).collect();
        assert_eq!(ours, c.active, "{}: active bounds vs scipy", c.name);
        // Source: the optimum known by construction (KKT conditions), same fixture.
        if let Some(xc) = &c.constructed {
            assert!(
                max_dev(&s.x, xc) < 1e-6,
                "{}: vs constructed {xc:?}",
                c.name
            );
        }
        eprintln!(
            "{:28} max |x - scipy| {dev:.2e}  steps {} (scipy nit {})",
            c.name, s.steps, c.nit
        );
    }
    eprintln!("worst deviation from scipy over the fixture: {worst:.2e}");
}

#[test]
fn fixture_covers_the_bound_patterns_asked_for() {
    // The fixture must hold 0, 1, 2 and 3 active bounds, lower and upper active together,
    // and the issue's pattern (two bounds bind, the third parameter ends inside).
    let (_, cases) = cases();
    let count = |c: &Case| c.active.iter().filter(|a| **a != 0).count();
    for k in 0..=3 {
        assert!(
            cases.iter().any(|c| count(c) == k),
            "no case with {k} active"
        );
    }
    assert!(cases
        .iter()
        .any(|c| c.active.contains(&-1) && c.active.contains(&1)));
    let issue = cases.iter().find(|c| c.name == "issue-pattern").unwrap();
    assert_eq!(issue.active, vec![-1, 1, 0]);
}

#[test]
fn zero_column_is_reported_uninformed() {
    // Source: the fixture's "uninformed-column" case (scipy leaves it at 0).
    let (_, cases) = cases();
    let c = cases
        .iter()
        .find(|c| c.name == "uninformed-column")
        .unwrap();
    let s = bvls(&c.a, &c.b, &c.lo, &c.hi).unwrap();
    assert_eq!(s.state[2], VarState::Uninformed);
    assert_eq!((s.x[2], c.x[2]), (0.0, 0.0));
}
