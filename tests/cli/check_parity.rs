//! `check` finds before `report` does: each value below made `report` stop with a bare
//! "plugin failed" (exit 1) or pass silently; now `check` exits 2 with file:line:column,
//! and `report` stops on the same error with exit 2 before running anything.

use std::path::Path;

use crate::cli::util::{run, starter_site_with, texts};

/// The starter site with `extra` appended, as checked and as reported.
fn both(extra: &str) -> (i32, String, i32, String) {
    let dir = tempfile::tempdir().unwrap();
    starter_site_with(dir.path(), extra);
    let site = dir.path().display().to_string();
    let c = run(&["check", &site]);
    let out = dir.path().join("out");
    let r = run(&["report", &site, "-o", &out.display().to_string()]);
    let (_, cerr) = texts(&c);
    let (_, rerr) = texts(&r);
    assert!(
        !cerr.contains("panicked") && !rerr.contains("panicked"),
        "{cerr}{rerr}"
    );
    assert!(!Path::new(&out).join("report.pdf").exists() || r.status.code() == Some(0));
    (
        c.status.code().unwrap_or(-1),
        cerr,
        r.status.code().unwrap_or(-1),
        rerr,
    )
}

/// Line of `needle` in the starter site with `extra` appended (1-based).
fn line_of(extra: &str, needle: &str) -> usize {
    let starter =
        std::fs::read_to_string(crate::cli::util::root().join("templates/starter/site.toml"))
            .unwrap();
    let text = format!("{starter}\n{extra}\n");
    text.lines()
        .position(|l| l.contains(needle))
        .map(|i| i + 1)
        .unwrap_or_else(|| panic!("{needle} not in the site"))
}

fn assert_located(extra: &str, needle: &str, message: &str) {
    let (c, cerr, r, rerr) = both(extra);
    let line = line_of(extra, needle);
    assert_eq!(c, 2, "check should exit 2:\n{cerr}");
    assert!(
        cerr.contains(&format!("site.toml:{line}:")) && cerr.contains(message),
        "check should name site.toml:{line} and say {message:?}:\n{cerr}"
    );
    assert_eq!(r, 2, "report should stop with exit 2:\n{rerr}");
    assert!(
        rerr.contains(&format!("site.toml:{line}:")) && rerr.contains(message),
        "report should give the same location:\n{rerr}"
    );
}

#[test]
fn unknown_rule_set_is_located_and_the_known_ones_listed() {
    // The starter's service, pointed at a misspelt built-in rule set.
    let dir = tempfile::tempdir().unwrap();
    starter_site_with(dir.path(), "");
    let p = dir.path().join("site.toml");
    let text = std::fs::read_to_string(&p).unwrap();
    let text = text.replacen(
        "id = \"lte1800\"\n",
        "id = \"lte1800\"\nrules = \"celular-rsrp\"\n",
        1,
    );
    std::fs::write(&p, &text).unwrap();
    let line = text.lines().position(|l| l.starts_with("rules =")).unwrap() + 1;
    let site = dir.path().display().to_string();
    let (_, err) = texts(&run(&["check", &site]));
    assert!(
        err.contains(&format!("site.toml:{line}:1: error: service `lte1800`: `rules`: rule set `celular-rsrp` does not exist")),
        "{err}"
    );
    assert!(err.contains("did you mean `cellular-rsrp`"), "{err}");
    assert!(err.contains("`rfsite rules` lists them"), "{err}");
    let r = run(&[
        "report",
        &site,
        "-o",
        &dir.path().join("o").display().to_string(),
    ]);
    assert_eq!(r.status.code(), Some(2));
}

#[test]
fn multi_wall_floor_exponent_out_of_range() {
    assert_located(
        "[plugins.multi-wall]\nfloor_b = 3.0\n",
        "floor_b = 3.0",
        "must be between 0 and 2",
    );
}

#[test]
fn grading_sigma_and_probability_out_of_range() {
    assert_located(
        "[plugins.grading]\nshadowing_sigma_db = 35.0\n",
        "shadowing_sigma_db = 35.0",
        "must be between 0 and 20 dB",
    );
    assert_located(
        "[plugins.grading]\nlocation_probability = 1.5\n",
        "location_probability = 1.5",
        "location_probability",
    );
}

#[test]
fn calibration_fit_entry_and_bounds() {
    assert_located(
        "[plugins.calibration]\nenabled = true\nfit = [\"offset\", \"material:unobtainium\"]\n",
        "fit = [",
        "material `unobtainium` is not used on this site",
    );
    assert_located(
        "[plugins.calibration]\nenabled = true\nfit = [\"offset\"]\n[plugins.calibration.bounds]\noffset = [5, -5]\n",
        "offset = [5, -5]",
        "low <= high",
    );
}

#[test]
fn reflection_null_option_and_nan() {
    assert_located(
        "[plugins.reflection-nulls]\nmin_gamma = 0.0\n",
        "min_gamma = 0.0",
        "reflection coefficient magnitude",
    );
    assert_located(
        "[plugins.multi-wall]\nmax_crossing_loss_db = nan\n",
        "max_crossing_loss_db = nan",
        "finite number",
    );
}

#[test]
fn donor_elevation_beyond_ninety_degrees() {
    assert_located(
        "[[donors]]\nid = \"roof\"\nservice = \"lte1800\"\nlevel_dbm = -80.0\nelevation_deg = 120.0\n",
        "elevation_deg = 120.0",
        "is not an elevation angle",
    );
}

#[test]
fn building_entry_probability() {
    assert_located(
        "[plugins.building-entry]\nprobability = 1.0\n\n[[donors]]\nid = \"roof\"\nservice = \"lte1800\"\nlevel_dbm = -80.0\n",
        "probability = 1.0",
        "strictly between 0 and 1",
    );
}

#[test]
fn enabled_must_be_a_boolean() {
    assert_located(
        "[plugins.multi-wall]\nenabled = \"no\"\n",
        "enabled = \"no\"",
        "must be true or false",
    );
}

#[test]
fn unknown_option_and_site_key_get_did_you_mean() {
    let dir = tempfile::tempdir().unwrap();
    starter_site_with(dir.path(), "[plugins.multi-wall]\nflor_b = 0.5\n");
    let p = dir.path().join("site.toml");
    let text = std::fs::read_to_string(&p).unwrap().replacen(
        "id = \"lte1800\"\n",
        "id = \"lte1800\"\ndesign_margn_db = 4.0\n",
        1,
    );
    std::fs::write(&p, &text).unwrap();
    let out = run(&["check", &dir.path().display().to_string()]);
    let (stdout, err) = texts(&out);
    assert_eq!(out.status.code(), Some(0), "warnings only:\n{err}");
    assert!(
        err.contains("unknown option `flor_b` of plugin `multi-wall`"),
        "{err}"
    );
    assert!(err.contains("did you mean `floor_b`"), "{err}");
    assert!(
        err.contains("unknown key `services.0.design_margn_db`"),
        "{err}"
    );
    assert!(err.contains("did you mean `design_margin_db`"), "{err}");
    // The σ in force is printed, with where it comes from.
    assert!(stdout.contains("shadowing sigma in force:"), "{stdout}");
}

#[test]
fn storey_gap_and_default_slab_are_warned_with_the_default_named() {
    let extra = "[[floors]]\nid = \"L2\"\nelevation = 5.0\nheight = 3.0\noutline = [[0, 0], [30, 0], [30, 20], [0, 20]]\n";
    let dir = tempfile::tempdir().unwrap();
    starter_site_with(dir.path(), extra);
    let out = run(&["check", &dir.path().display().to_string()]);
    let (_, err) = texts(&out);
    assert_eq!(out.status.code(), Some(0), "{err}");
    assert!(err.contains("a gap between storeys"), "{err}");
    assert!(
        err.contains(
            "floor `L2` has no `slab_material`: the default `concrete-floor-slab`, 200 mm"
        ),
        "{err}"
    );
}
