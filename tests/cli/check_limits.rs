//! Hostile input at the command line: `rfsite check` refuses each with
//! `file:line:column`, a hint and exit 2, and `report` refuses the same before any work
//! (README "Limits"). The values and their locations are counted by hand in the
//! fixtures under `tests/fixtures/broken/`.

use crate::cli::util::{run, texts};

/// `check` and `report` on a broken fixture: both exit 2, neither panics; `report` writes
/// nothing. Returns check's stderr.
fn refused(case: &str) -> String {
    let dir = format!("tests/fixtures/broken/{case}");
    let out = run(&["check", &dir]);
    let (_, err) = texts(&out);
    assert!(!err.contains("panicked"), "{case}: {err}");
    assert_eq!(out.status.code(), Some(2), "{case}: {err}");
    assert!(err.contains("= hint:"), "{case}: {err}");
    let o = tempfile::tempdir().unwrap();
    let out_dir = o.path().join("out");
    let rep = run(&["report", &dir, "-o", out_dir.to_str().unwrap()]);
    let (_, rerr) = texts(&rep);
    assert_eq!(rep.status.code(), Some(2), "{case}: report: {rerr}");
    assert!(
        !out_dir.join("report.pdf").exists(),
        "{case}: report wrote a PDF"
    );
    err
}

fn at(case: &str, line_col: &str) -> String {
    format!("tests/fixtures/broken/{case}/site.toml:{line_col}: error: ")
}

#[test]
fn nan_probe_frequency_is_refused_not_looped_on() {
    // Used to loop in the probe averaging until memory ran out (abort at 4 GiB).
    let err = refused("nan-probe");
    let want = format!(
        "{}`probes.freq_mhz` is not a finite number (`nan`)",
        at("nan-probe", "27:12")
    );
    assert!(err.contains(&want), "{err}");
}

#[test]
fn outline_of_1e300_is_refused_not_allocated() {
    // Used to pass `check`; `report` then panicked with a capacity overflow.
    let err = refused("huge-outline");
    for col in ["11:20", "11:32"] {
        let want = format!(
            "{}a coordinate of this point (1e300) lies beyond 100 km of the origin",
            at("huge-outline", col)
        );
        assert!(err.contains(&want), "{err}");
    }
}

#[test]
fn a_1_km_floor_at_5_cm_names_the_step_that_fits() {
    // 20 000 x 20 000 cells; at most 4 000 000 per floor from a 0.5 m step (1000 / 0.5 =
    // 2000 per axis).
    let err = refused("fine-grid");
    let want = format!(
        "{}floor `L1` would have 400 000 000 prediction points at grid_step 0.05 m",
        at("fine-grid", "14:11")
    );
    assert!(err.contains(&want), "{err}");
    assert!(err.contains("needs `grid_step` of at least 0.5 m"), "{err}");
}

#[test]
fn a_grid_step_leaving_no_point_inside_is_refused() {
    // One 1000 m cell whose centre (500, 500) lies outside the 10 m x 8 m floor.
    let err = refused("coarse-grid");
    let want = format!(
        "{}floor `L1` gets 0 prediction points inside its outline at grid_step 1000 m",
        at("coarse-grid", "8:13")
    );
    assert!(err.contains(&want), "{err}");
}

#[test]
fn control_character_in_a_name_is_refused() {
    // ESC (U+001B, Unicode Cc) in a service name used to pass `check` and then break
    // the SVG maps (exit 1).
    let err = refused("control-character");
    let want = format!(
        "{}`services.name` contains the control character U+001B",
        at("control-character", "15:8")
    );
    assert!(err.contains(&want), "{err}");
    assert!(
        !err.contains('\u{1b}'),
        "the terminal got the raw character: {err:?}"
    );
}

#[test]
fn floors_and_services_whose_names_used_to_collide_get_their_own_figures() {
    // Formerly `map-<floor>-<service>.svg` after replacing all but letters, digits and
    // `-` by `_`: floor `a-b` with service `c` and floor `a` with service `b-c` were both
    // `map-a-b-c.svg`, and one map overwrote the other.
    let dir = tempfile::tempdir().unwrap();
    let site = r#"[site]
id = "collide"
name = "Colliding names"
units = "metres"
report_date = "2026-01-15"

[[floors]]
id = "a-b"
elevation = 0.0
height = 3.0
outline = [[0, 0], [10, 0], [10, 8], [0, 8]]

[[floors]]
id = "a"
elevation = 3.0
height = 3.0
outline = [[0, 0], [10, 0], [10, 8], [0, 8]]

[[services]]
id = "c"
freq_mhz = 1800.0
threshold_dbm = -100.0

[[services]]
id = "b-c"
freq_mhz = 2400.0
threshold_dbm = -100.0

[[transmitters]]
id = "T1"
service = "c"
floor = "a-b"
position = [5, 4]
power_dbm = 10.0

[[transmitters]]
id = "T2"
service = "b-c"
floor = "a"
position = [5, 4]
power_dbm = 10.0
"#;
    std::fs::write(dir.path().join("site.toml"), site).unwrap();
    let out_dir = dir.path().join("out");
    let out = run(&[
        "report",
        dir.path().to_str().unwrap(),
        "-o",
        out_dir.to_str().unwrap(),
    ]);
    let (_, err) = texts(&out);
    assert!(out.status.success(), "{err}");
    let mut names: Vec<String> = std::fs::read_dir(out_dir.join("figures"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .filter(|n| n.starts_with("map-") || n.starts_with("grading-"))
        .collect();
    names.sort();
    let mut want = Vec::new();
    for kind in ["grading", "map"] {
        for (f, s) in [("a", "b-c"), ("a", "c"), ("a-b", "b-c"), ("a-b", "c")] {
            want.push(format!("{kind}-{f}.{s}.svg"));
        }
    }
    want.sort();
    assert_eq!(names, want);
}
