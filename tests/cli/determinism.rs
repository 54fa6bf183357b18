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
    // Every other output too (figures, exports): the same files, byte for byte.
    let files = |d: &std::path::Path| -> Vec<(std::path::PathBuf, Vec<u8>)> {
        let mut v: Vec<_> = walkdir::WalkDir::new(d)
            .sort_by_file_name()
            .into_iter()
            .filter_map(Result::ok)
            .filter(|e| e.file_type().is_file())
            .map(|e| {
                let rel = e.path().strip_prefix(d).unwrap().to_path_buf();
                (rel, std::fs::read(e.path()).unwrap())
            })
            .collect();
        v.sort();
        v
    };
    let (fa, fb) = (files(a.path()), files(b.path()));
    assert!(fa.len() > 2, "{} files", fa.len());
    assert_eq!(
        fa.iter().map(|f| &f.0).collect::<Vec<_>>(),
        fb.iter().map(|f| &f.0).collect::<Vec<_>>()
    );
    for ((name, x), (_, y)) in fa.iter().zip(&fb) {
        assert!(x == y, "{} differs between two runs", name.display());
    }
}

/// Issue 11 item 6: `report SITE -o SITE` is refused before any work (exit 2), and a
/// folder that rfsite did not write is never replaced.
#[test]
fn the_output_folder_is_never_the_site_or_a_stranger() {
    let tmp = tempfile::tempdir().unwrap();
    let site = tmp.path().join("site");
    std::fs::create_dir_all(&site).unwrap();
    crate::cli::util::starter_site_with(&site, "");
    let o = crate::cli::util::run(&[
        "report",
        &site.display().to_string(),
        "-o",
        &site.display().to_string(),
    ]);
    let (_, err) = crate::cli::util::texts(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("would hold the input"), "{err}");
    let docs = tmp.path().join("docs");
    std::fs::create_dir_all(&docs).unwrap();
    std::fs::write(docs.join("letter.txt"), b"mine").unwrap();
    let o = crate::cli::util::run(&[
        "report",
        &site.display().to_string(),
        "-o",
        &docs.display().to_string(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert_eq!(std::fs::read(docs.join("letter.txt")).unwrap(), b"mine");
}
