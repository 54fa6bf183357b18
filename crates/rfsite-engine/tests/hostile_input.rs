//! Hostile and broken input files: links that leave the site folder, FIFOs, folders,
//! oversized files, too many survey rows, a site file that is not UTF-8. Each one is a
//! located error (site.toml line and column of the key that names the file), found before
//! anything is read that should not be. Hand-made fixtures in temporary folders; the
//! expected lines are found in the fixture text itself.
//!
//! Nothing here can hang: a FIFO is given a writer thread, so code that wrongly opens it
//! reads the writer's rows and the test fails on the result instead of blocking, and the
//! test itself unblocks the writer afterwards.

use std::io::Write;
use std::path::Path;

use rfsite_engine::{load, EngineError, World};
use rfsite_model::{Diagnostic, MaterialLibrary};

/// The limits README states ("Limits"): site.toml 16 MiB, a survey file 256 MiB, a plan
/// image 64 MiB, 200 000 survey rows per site.
const SITE_LIMIT: u64 = 16 << 20;
const SURVEY_LIMIT: u64 = 256 << 20;
const PLAN_LIMIT: u64 = 64 << 20;
const ROW_LIMIT: usize = 200_000;

const HEAD: &str = r#"[site]
id = "hostile"
name = "Hostile input fixture"
units = "metres"
report_date = "2026-01-15"
[[floors]]
id = "L1"
elevation = 0.0
height = 3.0
outline = [[0, 0], [20, 0], [20, 10], [0, 10]]
"#;

const PLAN: &str = "plan_image = \"plan.png\"\nplan_scale = 0.05\n";

const SERVICE: &str = r#"[[services]]
id = "ps700"
freq_mhz = 770.0
threshold_dbm = -95.0
"#;

const HEADER: &str = "x,y,floor,service,level_dbm\n";

/// A site naming the survey files `surveys` and, when `plan`, the plan image `plan.png`.
fn site_text(surveys: &[&str], plan: bool) -> String {
    let mut s = HEAD.to_string();
    if plan {
        s.push_str(PLAN);
    }
    s.push_str(SERVICE);
    for f in surveys {
        s.push_str(&format!("[[surveys]]\nfile = \"{f}\"\n"));
    }
    s
}

/// 1-based line of the first line of `text` containing `needle`.
fn line_of(text: &str, needle: &str) -> usize {
    text.lines()
        .position(|l| l.contains(needle))
        .map(|i| i + 1)
        .unwrap_or_else(|| panic!("`{needle}` not in the fixture"))
}

/// `n` data rows, all on the plan, all valid.
fn rows(n: usize) -> String {
    let mut s = String::with_capacity(n * 24);
    for i in 0..n {
        s.push_str(&format!(
            "{}.5,{}.5,L1,ps700,-{}.0\n",
            i % 19,
            i % 9,
            60 + i % 30
        ));
    }
    s
}

fn write_site(dir: &Path, text: &str) {
    std::fs::write(dir.join("site.toml"), text).unwrap();
}

fn try_load(dir: &Path) -> (World, Result<rfsite_engine::LoadedSite, EngineError>) {
    let mut world = World::open(dir).unwrap();
    let r = load(&mut world, &MaterialLibrary::builtin());
    (world, r)
}

/// The errors of a load that must fail as bad input.
fn errors(dir: &Path) -> Vec<Diagnostic> {
    match try_load(dir).1 {
        Err(EngineError::BadInput(d)) => d.items.into_iter().filter(|x| x.is_error()).collect(),
        Err(e) => panic!("expected bad input (exit 2), got another failure: {e}"),
        Ok(l) => panic!(
            "expected bad input, the site loaded with {} survey point(s)",
            l.surveys.points.len()
        ),
    }
}

/// The single error, checked to be at `line`, column 1 of the site file.
fn one_error_at(dir: &Path, line: usize) -> Diagnostic {
    let errs = errors(dir);
    assert_eq!(errs.len(), 1, "{errs:#?}");
    let e = errs.into_iter().next().unwrap();
    assert!(e.file.ends_with("site.toml"), "{e}");
    assert_eq!((e.line, e.column), (line, 1), "{e}");
    e
}

fn symlink(target: impl AsRef<Path>, link: &Path) {
    std::os::unix::fs::symlink(target, link).unwrap();
}

fn mkfifo(p: &Path) {
    let c = std::ffi::CString::new(p.as_os_str().as_encoded_bytes()).unwrap();
    // SAFETY: a valid NUL-terminated path and a mode.
    assert_eq!(unsafe { libc::mkfifo(c.as_ptr(), 0o600) }, 0);
}

/// Runs `f` while a thread waits to write `content` into the FIFO `p`. If `f` opens the
/// FIFO it reads `content` (and the caller's assertions fail); if not, the writer is
/// released afterwards by a non-blocking open for reading.
fn with_fifo_writer<T>(p: &Path, content: &str, f: impl FnOnce() -> T) -> T {
    let path = p.to_path_buf();
    let content = content.to_string();
    let writer = std::thread::spawn(move || {
        let mut w = std::fs::OpenOptions::new().write(true).open(&path).unwrap();
        let _ = w.write_all(content.as_bytes());
    });
    let out = f();
    use std::os::unix::fs::OpenOptionsExt;
    let release = std::fs::OpenOptions::new()
        .read(true)
        .custom_flags(libc::O_NONBLOCK)
        .open(p)
        .unwrap();
    writer.join().unwrap();
    drop(release);
    out
}

fn passwd_first_line() -> String {
    std::fs::read_to_string("/etc/passwd")
        .unwrap_or_default()
        .lines()
        .next()
        .unwrap_or("root:x:0:0")
        .to_string()
}

fn all_text(errs: &[Diagnostic]) -> String {
    errs.iter().map(|e| format!("{e}{:?}", e.hint)).collect()
}

// ---- confinement -------------------------------------------------------------------

#[test]
fn survey_link_to_a_system_file_is_refused_unread() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&["walk.csv"], false);
    write_site(dir.path(), &text);
    symlink("/etc/passwd", &dir.path().join("walk.csv"));
    let errs = errors(dir.path());
    let shown = all_text(&errs);
    assert!(!shown.contains(&passwd_first_line()), "{shown}");
    assert!(!shown.contains("root:"), "{shown}");
    let e = one_error_at(dir.path(), line_of(&text, "file = \"walk.csv\""));
    assert!(e.message.contains("outside the site folder"), "{e}");
}

#[test]
fn survey_link_through_a_linked_folder_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&["etc/passwd"], false);
    write_site(dir.path(), &text);
    symlink("/etc", &dir.path().join("etc"));
    let e = one_error_at(dir.path(), line_of(&text, "file = \"etc/passwd\""));
    assert!(e.message.contains("outside the site folder"), "{e}");
}

#[test]
fn a_link_that_stays_inside_the_folder_is_read() {
    let dir = tempfile::tempdir().unwrap();
    write_site(dir.path(), &site_text(&["walk.csv"], false));
    std::fs::create_dir(dir.path().join("data")).unwrap();
    std::fs::write(
        dir.path().join("data/real.csv"),
        format!("{HEADER}{}", rows(3)),
    )
    .unwrap();
    symlink("data/real.csv", &dir.path().join("walk.csv"));
    let (world, l) = try_load(dir.path());
    let l = l.map_err(|e| e.to_string()).unwrap();
    assert_eq!(l.surveys.points.len(), 3);
    assert!(world.inputs().iter().any(|i| i.path == "walk.csv"));
}

#[test]
fn a_missing_survey_is_located_at_its_key() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&["walk.csv", "gone.csv"], false);
    write_site(dir.path(), &text);
    std::fs::write(dir.path().join("walk.csv"), format!("{HEADER}{}", rows(2))).unwrap();
    symlink("nowhere.csv", &dir.path().join("gone.csv"));
    let e = one_error_at(dir.path(), line_of(&text, "file = \"gone.csv\""));
    assert!(e.message.contains("gone.csv"), "{e}");
}

#[test]
fn absolute_and_parent_paths_are_located_at_their_keys() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&["/etc/passwd", "../walk.csv"], false);
    write_site(dir.path(), &text);
    let errs = errors(dir.path());
    let at: Vec<(usize, usize)> = errs.iter().map(|e| (e.line, e.column)).collect();
    assert_eq!(
        at,
        vec![
            (line_of(&text, "file = \"/etc/passwd\""), 1),
            (line_of(&text, "file = \"../walk.csv\""), 1)
        ],
        "{errs:#?}"
    );
    assert!(!all_text(&errs).contains(&passwd_first_line()));
}

#[test]
fn survey_fifo_is_refused_without_being_opened() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&["walk.csv"], false);
    write_site(dir.path(), &text);
    let fifo = dir.path().join("walk.csv");
    mkfifo(&fifo);
    let content = format!("{HEADER}{}", rows(2));
    let errs = with_fifo_writer(&fifo, &content, || errors(dir.path()));
    assert_eq!(errs.len(), 1, "{errs:#?}");
    let e = &errs[0];
    assert_eq!(e.line, line_of(&text, "file = \"walk.csv\""), "{e}");
    assert!(e.message.contains("not a regular file"), "{e}");
    assert!(e.message.contains("FIFO"), "{e}");
}

#[test]
fn survey_that_is_a_folder_is_located_at_its_key() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&["walk.csv"], false);
    write_site(dir.path(), &text);
    std::fs::create_dir(dir.path().join("walk.csv")).unwrap();
    let e = one_error_at(dir.path(), line_of(&text, "file = \"walk.csv\""));
    assert!(e.message.contains("not a regular file"), "{e}");
}

#[test]
fn plan_image_link_to_a_system_file_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&[], true);
    write_site(dir.path(), &text);
    symlink("/etc/passwd", &dir.path().join("plan.png"));
    let e = one_error_at(dir.path(), line_of(&text, "plan_image"));
    assert!(e.message.contains("outside the site folder"), "{e}");
}

#[test]
fn plan_image_fifo_is_refused_without_being_opened() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&[], true);
    write_site(dir.path(), &text);
    let fifo = dir.path().join("plan.png");
    mkfifo(&fifo);
    let errs = with_fifo_writer(&fifo, "not an image", || errors(dir.path()));
    assert_eq!(errs.len(), 1, "{errs:#?}");
    assert_eq!(errs[0].line, line_of(&text, "plan_image"), "{}", errs[0]);
    assert!(errs[0].message.contains("FIFO"), "{}", errs[0]);
}

#[test]
fn site_file_fifo_is_refused_without_being_opened() {
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("site.toml");
    mkfifo(&fifo);
    let text = site_text(&[], false);
    let r = with_fifo_writer(&fifo, &text, || {
        World::open(dir.path()).and_then(|mut w| {
            load(&mut w, &MaterialLibrary::builtin())
                .map(|_| ())
                .map_err(|e| e.to_string())
        })
    });
    let e = r.expect_err("a FIFO site file must be refused");
    assert!(e.contains("not a regular file"), "{e}");
}

#[test]
fn site_file_link_out_of_the_folder_is_refused_unread() {
    let dir = tempfile::tempdir().unwrap();
    symlink("/etc/passwd", &dir.path().join("site.toml"));
    let e = match World::open(dir.path()) {
        Err(e) => e,
        Ok(mut w) => load(&mut w, &MaterialLibrary::builtin())
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default(),
    };
    assert!(e.contains("outside the site folder"), "{e}");
    assert!(!e.contains(&passwd_first_line()), "{e}");
}

// ---- size limits -------------------------------------------------------------------

/// A sparse file of `len` bytes starting with `head`.
fn sparse(p: &Path, head: &str, len: u64) {
    let f = std::fs::File::create(p).unwrap();
    (&f).write_all(head.as_bytes()).unwrap();
    f.set_len(len).unwrap();
}

#[test]
fn oversized_survey_is_refused_before_reading() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&["walk.csv"], false);
    write_site(dir.path(), &text);
    sparse(&dir.path().join("walk.csv"), HEADER, SURVEY_LIMIT + 1);
    let e = one_error_at(dir.path(), line_of(&text, "file = \"walk.csv\""));
    assert!(e.message.contains(&(SURVEY_LIMIT + 1).to_string()), "{e}");
    assert!(e.message.contains("256 MiB"), "{e}");
}

#[test]
fn oversized_plan_image_is_refused_before_reading() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&[], true);
    write_site(dir.path(), &text);
    sparse(&dir.path().join("plan.png"), "\u{89}PNG", PLAN_LIMIT + 1);
    let e = one_error_at(dir.path(), line_of(&text, "plan_image"));
    assert!(e.message.contains(&(PLAN_LIMIT + 1).to_string()), "{e}");
    assert!(e.message.contains("64 MiB"), "{e}");
}

#[test]
fn a_plan_image_at_the_limit_is_read() {
    let dir = tempfile::tempdir().unwrap();
    write_site(dir.path(), &site_text(&[], true));
    sparse(&dir.path().join("plan.png"), "\u{89}PNG", PLAN_LIMIT);
    let (_, l) = try_load(dir.path());
    let l = l.map_err(|e| e.to_string()).unwrap();
    assert_eq!(l.plan_images["L1"].len() as u64, PLAN_LIMIT);
}

#[test]
fn oversized_site_file_is_bad_input_with_the_size() {
    let dir = tempfile::tempdir().unwrap();
    sparse(
        &dir.path().join("site.toml"),
        &site_text(&[], false),
        SITE_LIMIT + 1,
    );
    let e = errors(dir.path());
    assert_eq!(e.len(), 1, "{e:#?}");
    assert!(
        e[0].message.contains(&(SITE_LIMIT + 1).to_string()),
        "{}",
        e[0]
    );
    assert!(e[0].message.contains("16 MiB"), "{}", e[0]);
}

#[test]
fn oversized_plugin_declaration_is_refused_with_the_size() {
    let dir = tempfile::tempdir().unwrap();
    sparse(
        &dir.path().join("big.toml"),
        "[plugins.x]\n",
        (16 << 20) + 1,
    );
    let Err(e) = rfsite_engine::world::read_plugin_folder(dir.path()) else {
        panic!("a 16 MiB + 1 declaration must be refused");
    };
    assert!(e.contains(&((16u64 << 20) + 1).to_string()), "{e}");
    assert!(e.contains("16 MiB"), "{e}");
}

// ---- survey rows per site ----------------------------------------------------------

#[test]
fn too_many_survey_rows_is_an_error_with_the_count() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&["a.csv", "b.csv"], false);
    write_site(dir.path(), &text);
    let half = ROW_LIMIT / 2;
    std::fs::write(dir.path().join("a.csv"), format!("{HEADER}{}", rows(half))).unwrap();
    std::fs::write(
        dir.path().join("b.csv"),
        format!("{HEADER}{}", rows(ROW_LIMIT - half + 1)),
    )
    .unwrap();
    // The site as a whole is over the limit; the file that crosses it is named.
    let e = one_error_at(dir.path(), line_of(&text, "file = \"b.csv\""));
    assert!(e.message.contains(&(ROW_LIMIT + 1).to_string()), "{e}");
    assert!(e.message.contains("200000"), "{e}");
}

#[test]
fn survey_rows_up_to_the_limit_are_read() {
    let dir = tempfile::tempdir().unwrap();
    write_site(dir.path(), &site_text(&["a.csv"], false));
    std::fs::write(
        dir.path().join("a.csv"),
        format!("{HEADER}{}", rows(ROW_LIMIT)),
    )
    .unwrap();
    let (_, l) = try_load(dir.path());
    let l = l.map_err(|e| e.to_string()).unwrap();
    assert_eq!(l.surveys.points.len(), ROW_LIMIT);
}

// ---- the site file's encoding ------------------------------------------------------

#[test]
fn site_file_not_utf8_is_bad_input_at_the_first_invalid_byte() {
    let dir = tempfile::tempdir().unwrap();
    // `name = "Caf` then the Latin-1 byte 0xE9 where UTF-8 needs a multi-byte sequence.
    let text = site_text(&[], false).replace("Hostile input fixture", "Caf~");
    let mut bytes = text.clone().into_bytes();
    let at = bytes.iter().position(|&b| b == b'~').unwrap();
    bytes[at] = 0xE9;
    std::fs::write(dir.path().join("site.toml"), &bytes).unwrap();
    let e = errors(dir.path());
    assert_eq!(e.len(), 1, "{e:#?}");
    let line = line_of(&text, "name = \"Caf~");
    let column = "name = \"Caf".chars().count() + 1;
    assert_eq!((e[0].line, e[0].column), (line, column), "{}", e[0]);
    assert!(e[0].message.contains("UTF-8"), "{}", e[0]);
    assert!(e[0].message.contains("0xE9"), "{}", e[0]);
}

// ---- survey rows: nothing lost silently --------------------------------------------

fn load_survey(csv: &str) -> rfsite_engine::LoadedSite {
    let dir = tempfile::tempdir().unwrap();
    write_site(dir.path(), &site_text(&["walk.csv"], false));
    std::fs::write(dir.path().join("walk.csv"), csv).unwrap();
    let (_, l) = try_load(dir.path());
    l.map_err(|e| e.to_string()).unwrap()
}

#[test]
fn an_unterminated_quote_rejects_one_row_not_the_rest_of_the_file() {
    // Header on line 1, rows 2..=11, the bad row on line 12, 20 more rows after it.
    let csv = format!("{HEADER}{}5.0,\"1.0,L1,ps700,-70.0\n{}", rows(10), rows(20));
    let l = load_survey(&csv);
    let s = &l.surveys;
    assert_eq!(s.rows_per_file, vec![("walk.csv".to_string(), 31)]);
    assert_eq!(s.points.len(), 30);
    let rej: Vec<(usize, &str)> = s
        .rejected
        .iter()
        .map(|r| (r.line, r.reason.as_str()))
        .collect();
    assert_eq!(rej, vec![(12, "malformed")]);
    assert!(
        s.rejected[0].detail.contains("quote"),
        "{:?}",
        s.rejected[0]
    );
    assert_eq!(s.points.last().unwrap().line, 32);
}

#[test]
fn quoted_fields_are_read() {
    let l = load_survey(&format!(
        "{HEADER}\"1.5\",2.5,\"L1\",\"ps700\",-70.0\n\"1.5\",\"2,5\",L1,ps700,-70.0\n"
    ));
    assert_eq!(l.surveys.points.len(), 1);
    assert_eq!(l.surveys.points[0].y_m, 2.5);
    // `"2,5"` is one field holding a comma: not a number.
    assert_eq!(l.surveys.rejected[0].reason, "not-a-number");
    assert_eq!(l.surveys.rejected[0].line, 3);
}

#[test]
fn comment_lines_among_the_rows_are_counted_as_rejected() {
    let csv = format!("# leading comment\n{HEADER}1.5,1.5,L1,ps700,-70\n# 2.5,1.5,L1,ps700,-71\n3.5,1.5,L1,ps700,-72\n");
    let l = load_survey(&csv);
    let s = &l.surveys;
    assert_eq!(s.rows_per_file, vec![("walk.csv".to_string(), 3)]);
    let lines: Vec<usize> = s.points.iter().map(|p| p.line).collect();
    assert_eq!(lines, vec![3, 5]);
    assert_eq!(s.rejected.len(), 1);
    assert_eq!(
        (s.rejected[0].line, s.rejected[0].reason.as_str()),
        (4, "comment")
    );
}

#[test]
fn a_header_problem_is_located_at_the_header_line() {
    let dir = tempfile::tempdir().unwrap();
    write_site(dir.path(), &site_text(&["walk.csv"], false));
    std::fs::write(
        dir.path().join("walk.csv"),
        "# walk test\n\n# receiver at 1.5 m\nx,y,floor,service,rsrp\n1,1,L1,ps700,-70\n",
    )
    .unwrap();
    let errs = errors(dir.path());
    assert_eq!(errs.len(), 1, "{errs:#?}");
    assert!(errs[0].file.ends_with("walk.csv"), "{}", errs[0]);
    assert_eq!((errs[0].line, errs[0].column), (4, 1), "{}", errs[0]);
    assert!(errs[0].message.contains("level_dbm"), "{}", errs[0]);
}

#[test]
fn a_survey_with_no_header_at_all_is_located() {
    let dir = tempfile::tempdir().unwrap();
    let text = site_text(&["walk.csv"], false);
    write_site(dir.path(), &text);
    std::fs::write(dir.path().join("walk.csv"), "# only a comment\n\n").unwrap();
    let errs = errors(dir.path());
    assert_eq!(errs.len(), 1, "{errs:#?}");
    assert!(errs[0].message.contains("header"), "{}", errs[0]);
}
