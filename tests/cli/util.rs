//! Shared helpers for the CLI tests.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The rfsite binary built for these tests.
pub fn rfsite() -> Command {
    Command::new(env!("CARGO_BIN_EXE_rfsite"))
}

/// The repository root.
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Runs rfsite with args from the repository root.
pub fn run(args: &[&str]) -> Output {
    rfsite()
        .current_dir(root())
        .args(args)
        .output()
        .expect("rfsite runs")
}

/// Text of a PDF, through poppler's pdftotext (a real PDF text extractor).
pub fn pdf_text(pdf: &Path) -> String {
    let out = Command::new("pdftotext").arg("-layout").arg(pdf).arg("-").output().expect(
        "pdftotext (poppler-utils) is needed by the report tests: apt-get install -y poppler-utils",
    );
    assert!(
        out.status.success(),
        "pdftotext failed on {}",
        pdf.display()
    );
    // poppler reports any structure it cannot read on stderr; rfsite's PDFs give none.
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.trim().is_empty(), "poppler on {}: {err}", pdf.display());
    String::from_utf8_lossy(&out.stdout).to_string()
}

/// The text of a PDF in content order (`pdftotext -raw`): a table's cells come one after
/// the other, row by row, however they wrap.
pub fn pdf_text_raw(pdf: &Path) -> String {
    let out = Command::new("pdftotext").arg("-raw").arg(pdf).arg("-").output().expect(
        "pdftotext (poppler-utils) is needed by the report tests: apt-get install -y poppler-utils",
    );
    assert!(
        out.status.success(),
        "pdftotext failed on {}",
        pdf.display()
    );
    String::from_utf8_lossy(&out.stdout).to_string()
}

/// Page count of a PDF through poppler's pdfinfo.
pub fn pdf_pages(pdf: &Path) -> usize {
    let out = Command::new("pdfinfo")
        .arg(pdf)
        .output()
        .expect("pdfinfo (poppler-utils) is needed");
    let text = String::from_utf8_lossy(&out.stdout).to_string();
    text.lines()
        .find_map(|l| {
            l.strip_prefix("Pages:")
                .map(|n| n.trim().parse().unwrap_or(0))
        })
        .unwrap_or(0)
}

/// Copies a folder tree (files and folders only).
pub fn copy_dir(src: &Path, dst: &Path) {
    std::fs::create_dir_all(dst).unwrap();
    for e in std::fs::read_dir(src).unwrap() {
        let e = e.unwrap();
        let to = dst.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            copy_dir(&e.path(), &to);
        } else {
            std::fs::copy(e.path(), &to).unwrap();
        }
    }
}

/// Writes the starter site into `dir` with `extra` TOML appended (e.g. a plugin table).
pub fn starter_site_with(dir: &Path, extra: &str) {
    let starter = std::fs::read_to_string(root().join("templates/starter/site.toml")).unwrap();
    std::fs::write(dir.join("site.toml"), format!("{starter}\n{extra}\n")).unwrap();
}

/// A fixture of `tests/fixtures/external/`, as an absolute path for a plugin's `args`.
pub fn external_fixture(name: &str) -> String {
    root()
        .join("tests/fixtures/external")
        .join(name)
        .display()
        .to_string()
}

/// stdout and stderr of a run, as text.
pub fn texts(out: &Output) -> (String, String) {
    (
        String::from_utf8_lossy(&out.stdout).to_string(),
        String::from_utf8_lossy(&out.stderr).to_string(),
    )
}

/// Runs `rfsite report` on the demo site into a new temporary folder (kept while the
/// returned value lives) and returns it with the parsed findings.json; fails the test with
/// rfsite's stderr when the command fails.
pub fn demo_report() -> (tempfile::TempDir, serde_json::Value) {
    let out_dir = tempfile::tempdir().unwrap();
    let out = rfsite()
        .arg("report")
        .arg(root().join("examples/kestrel-quay-clinic"))
        .arg("-o")
        .arg(out_dir.path())
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let f = serde_json::from_slice(&std::fs::read(out_dir.path().join("findings.json")).unwrap())
        .unwrap();
    (out_dir, f)
}
