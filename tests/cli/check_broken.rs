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

#[test]
fn site_file_not_utf8_is_bad_input_at_the_first_invalid_byte() {
    // The fixture is Latin-1: `name = "Caf` then the byte 0xE9 on line 4.
    let (code, err) = check("not-utf8");
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("not-utf8/site.toml:4:12: error: the site file is not UTF-8 text"),
        "{err}"
    );
    assert!(err.contains("0xE9"), "{err}");
}

// ---- hostile files named by a site -------------------------------------------------
//
// Each case runs `rfsite check` with at most 2 GiB of address space (`ulimit -v`) and a
// watchdog that kills it after 20 s, so a regression that opens a FIFO or reads
// /dev/zero fails the test instead of hanging it or exhausting the machine's memory.

use std::path::Path;

const WATCHDOG_S: u64 = 20;

/// `rfsite check DIR` under the memory limit and the watchdog: (exit code, stderr).
fn check_guarded(dir: &Path) -> (i32, String) {
    let child = std::process::Command::new("sh")
        .arg("-c")
        .arg("ulimit -v 2097152; exec \"$0\" check \"$1\"")
        .arg(env!("CARGO_BIN_EXE_rfsite"))
        .arg(dir)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    let pid = child.id();
    let (done, wait) = std::sync::mpsc::channel::<()>();
    let watchdog = std::thread::spawn(move || {
        let late = wait
            .recv_timeout(std::time::Duration::from_secs(WATCHDOG_S))
            .is_err();
        if late {
            let _ = std::process::Command::new("kill")
                .arg("-9")
                .arg(pid.to_string())
                .status();
        }
        late
    });
    let out = child.wait_with_output().unwrap();
    let _ = done.send(());
    let killed = watchdog.join().unwrap();
    let err = String::from_utf8_lossy(&out.stderr).to_string();
    assert!(
        !killed,
        "rfsite check hung: killed after {WATCHDOG_S} s\n{err}"
    );
    assert!(!err.contains("panicked"), "{err}");
    (out.status.code().unwrap_or(-1), err)
}

/// The starter site with a survey `walk.csv` and a plan image `plan.png` on floor L1, and
/// the lines of their keys.
fn hostile_site(dir: &Path) -> (usize, usize) {
    let starter =
        std::fs::read_to_string(crate::cli::util::root().join("templates/starter/site.toml"))
            .unwrap();
    let outline = "outline = [[0, 0], [30, 0], [30, 18], [0, 18]]\n";
    assert!(starter.contains(outline));
    let text = starter.replacen(
        outline,
        &format!("{outline}plan_image = \"plan.png\"\nplan_scale = 0.05\n"),
        1,
    ) + "\n[[surveys]]\nfile = \"walk.csv\"\n";
    std::fs::write(dir.join("site.toml"), &text).unwrap();
    let line = |needle: &str| text.lines().position(|l| l.starts_with(needle)).unwrap() + 1;
    (line("file = \"walk.csv\""), line("plan_image"))
}

fn good_survey(dir: &Path) {
    std::fs::write(
        dir.join("walk.csv"),
        "x,y,floor,service,level_dbm\n5,5,L1,lte1800,-60\n",
    )
    .unwrap();
}

fn mkfifo(p: &Path) {
    let ok = std::process::Command::new("mkfifo")
        .arg(p)
        .status()
        .unwrap();
    assert!(ok.success());
}

fn assert_located(err: &str, line: usize, what: &str) {
    let at = format!("site.toml:{line}:1: error: {what}");
    assert!(err.contains(&at), "expected `{at}` in:\n{err}");
}

#[test]
fn survey_fifo_is_a_located_error_not_a_hang() {
    let dir = tempfile::tempdir().unwrap();
    let (survey, _) = hostile_site(dir.path());
    std::fs::write(dir.path().join("plan.png"), b"\x89PNG").unwrap();
    mkfifo(&dir.path().join("walk.csv"));
    let (code, err) = check_guarded(dir.path());
    assert_eq!(code, 2, "{err}");
    assert_located(&err, survey, "survey file `walk.csv` is a FIFO");
}

#[test]
fn survey_link_to_dev_zero_is_a_located_error_not_exhausted_memory() {
    let dir = tempfile::tempdir().unwrap();
    let (survey, _) = hostile_site(dir.path());
    std::fs::write(dir.path().join("plan.png"), b"\x89PNG").unwrap();
    std::os::unix::fs::symlink("/dev/zero", dir.path().join("walk.csv")).unwrap();
    let (code, err) = check_guarded(dir.path());
    assert_eq!(code, 2, "{err}");
    assert_located(
        &err,
        survey,
        "survey file `walk.csv` leads outside the site folder",
    );
}

#[test]
fn plan_image_fifo_is_a_located_error_not_a_hang() {
    let dir = tempfile::tempdir().unwrap();
    let (_, plan) = hostile_site(dir.path());
    good_survey(dir.path());
    mkfifo(&dir.path().join("plan.png"));
    let (code, err) = check_guarded(dir.path());
    assert_eq!(code, 2, "{err}");
    assert_located(&err, plan, "floor `L1`: plan image `plan.png` is a FIFO");
}

#[test]
fn plan_image_link_to_dev_zero_is_a_located_error_not_exhausted_memory() {
    let dir = tempfile::tempdir().unwrap();
    let (_, plan) = hostile_site(dir.path());
    good_survey(dir.path());
    std::os::unix::fs::symlink("/dev/zero", dir.path().join("plan.png")).unwrap();
    let (code, err) = check_guarded(dir.path());
    assert_eq!(code, 2, "{err}");
    assert_located(
        &err,
        plan,
        "floor `L1`: plan image `plan.png` leads outside the site folder",
    );
}

#[test]
fn survey_link_to_the_password_file_prints_none_of_it() {
    let dir = tempfile::tempdir().unwrap();
    let (survey, _) = hostile_site(dir.path());
    std::fs::write(dir.path().join("plan.png"), b"\x89PNG").unwrap();
    std::os::unix::fs::symlink("/etc/passwd", dir.path().join("walk.csv")).unwrap();
    let (code, err) = check_guarded(dir.path());
    assert_eq!(code, 2, "{err}");
    assert_located(
        &err,
        survey,
        "survey file `walk.csv` leads outside the site folder",
    );
    let passwd = std::fs::read_to_string("/etc/passwd").unwrap_or_default();
    for l in passwd.lines().filter(|l| !l.trim().is_empty()) {
        assert!(
            !err.contains(l),
            "stderr shows a line of /etc/passwd:\n{err}"
        );
    }
    assert!(!err.contains("root:"), "{err}");
}
