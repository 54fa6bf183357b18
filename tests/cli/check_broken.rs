//! `rfsite check` on a folder of broken sites: each gives its file:line:column message and
//! exit 2, never a panic.

use crate::cli::util::run;

fn check(case: &str) -> (i32, String) {
    let dir = format!("tests/fixtures/broken/{case}");
    let out = run(&["check", &dir]);
    let err = String::from_utf8_lossy(&out.stderr).to_string();
    assert!(!err.contains("panicked"), "{case} panicked: {err}");
    (out.status.code().unwrap_or(-1), err)
}

#[test]
fn syntax_error_names_line_and_column() {
    let (code, err) = check("syntax-error");
    assert_eq!(code, 2);
    assert!(
        err.contains("tests/fixtures/broken/syntax-error/site.toml:22:26: error:"),
        "{err}"
    );
    assert!(err.contains("hint:"), "{err}");
}

#[test]
fn unknown_material_suggests_the_closest_names() {
    let (code, err) = check("unknown-material");
    assert_eq!(code, 2);
    assert!(
        err.contains("site.toml:20:12: error: unknown material `plasterbord-partition`"),
        "{err}"
    );
    assert!(
        err.contains("did you mean `plasterboard-partition`"),
        "{err}"
    );
}

#[test]
fn wall_on_missing_floor_lists_the_floors() {
    let (code, err) = check("missing-floor");
    assert_eq!(code, 2);
    assert!(err.contains("site.toml:19:9: error:"), "{err}");
    assert!(err.contains("floor `L2`, which does not exist"), "{err}");
    assert!(err.contains("known floors: L1"), "{err}");
}

#[test]
fn negative_thickness_is_refused() {
    let (code, err) = check("negative-thickness");
    assert_eq!(code, 2);
    assert!(
        err.contains("site.toml:21:13: error: `thickness` must be more than zero (got -0.1)"),
        "{err}"
    );
}

#[test]
fn wrong_units_word_is_refused() {
    let (code, err) = check("wrong-units");
    assert_eq!(code, 2);
    assert!(
        err.contains("site.toml:4:9: error: unknown units `yards`"),
        "{err}"
    );
    assert!(
        err.contains("`units = \"metres\"` or `units = \"feet\"`"),
        "{err}"
    );
}

#[test]
fn empty_file_is_an_error_not_a_panic() {
    let (code, err) = check("empty-file");
    assert_eq!(code, 2);
    assert!(
        err.contains("empty-file/site.toml:1:1: error: the site file is empty"),
        "{err}"
    );
}

#[test]
fn unknown_key_is_a_warning_with_location() {
    let out = run(&["check", "tests/fixtures/warn-unknown-key"]);
    assert_eq!(out.status.code(), Some(0));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("site.toml:11:1: warning: unknown key"),
        "{err}"
    );
    assert!(err.contains("heigth"), "{err}");
}

#[test]
fn several_problems_are_reported_at_once() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(
        crate::cli::util::root().join("tests/fixtures/broken/unknown-material/site.toml"),
    )
    .unwrap()
    .replace("thickness = 0.1", "thickness = -1.0")
    .replace("floor = \"L1\"\nmaterial", "floor = \"L9\"\nmaterial");
    std::fs::write(dir.path().join("site.toml"), text).unwrap();
    let out = crate::cli::util::rfsite()
        .arg("check")
        .arg(dir.path())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("3 error(s)"), "{err}");
}

#[test]
fn init_writes_a_site_that_passes_check() {
    let dir = tempfile::tempdir().unwrap();
    let site = dir.path().join("new-site");
    let out = crate::cli::util::rfsite()
        .arg("init")
        .arg(&site)
        .output()
        .unwrap();
    assert!(out.status.success());
    let out = crate::cli::util::rfsite()
        .arg("check")
        .arg(&site)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    // init never overwrites.
    let out = crate::cli::util::rfsite()
        .arg("init")
        .arg(&site)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
}
