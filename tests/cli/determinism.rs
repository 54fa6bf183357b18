//! The same inputs give byte-identical outputs (the report date comes from the site file).

use crate::cli::util::{rfsite, root};

#[test]
fn two_runs_give_byte_identical_pdf_and_findings() {
    let a = tempfile::tempdir().unwrap();
    let b = tempfile::tempdir().unwrap();
    let site = root().join("examples/kestrel-quay-clinic");
    for d in [&a, &b] {
        let out = rfsite()
            .arg("report")
            .arg(&site)
            .arg("-o")
            .arg(d.path())
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    for f in ["report.pdf", "findings.json"] {
        let x = std::fs::read(a.path().join(f)).unwrap();
        let y = std::fs::read(b.path().join(f)).unwrap();
        assert!(x == y, "{f} differs between two runs");
    }
}
