//! The survey CSV reader against a file with every kind of bad row: each one is counted with
//! its file, line and reason (hand-made fixture; expected lines counted by hand).

use rfsite_engine::{load, World};
use rfsite_model::MaterialLibrary;

const SITE: &str = r#"
[site]
id = "survey-fixture"
name = "Survey reader fixture"
units = "metres"
report_date = "2026-01-15"
[[floors]]
id = "L1"
elevation = 0.0
height = 3.0
outline = [[0, 0], [20, 0], [20, 10], [0, 10]]
[[services]]
id = "ps700"
freq_mhz = 770.0
threshold_dbm = -95.0
[[services]]
id = "lte"
freq_mhz = 1842.5
threshold_dbm = -105.0
[[surveys]]
file = "walk.csv"
"#;

// Line numbers are 1-based and count the comment and header lines.
const CSV: &str = "# hand-made fixture
x,y,floor,service,level_dbm
1.0,1.0,L1,ps700,-70.5
2.0,1.0,L1,ps700,
3.0,1.0,L1,ps700,n/a
200.0,1.0,L1,ps700,-80.0
4.0,1.0,L1,tetra400,-80.0
5.0,1.0,L9,ps700,-80.0
6.0,1.0,L1,lte,-90.0
7.0,oops,L1,lte,-90.0
8.0,2.0,L1,lte,-91.0,extra
9.0,2.0,L1,lte,-999.0
9.5,2.0,L1,lte,47.0
";

#[test]
fn every_bad_row_is_counted_with_file_line_and_reason() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("site.toml"), SITE).unwrap();
    std::fs::write(dir.path().join("walk.csv"), CSV).unwrap();
    let mut world = World::open(dir.path()).unwrap();
    let loaded = load(&mut world, &MaterialLibrary::builtin())
        .map_err(|e| e.to_string())
        .unwrap();
    let s = &loaded.surveys;
    // Accepted: lines 3 (ps700), 9 (lte) and 11 (an extra trailing field is tolerated).
    let accepted: Vec<usize> = s.points.iter().map(|p| p.line).collect();
    assert_eq!(accepted, vec![3, 9, 11]);
    let got: Vec<(usize, &str)> = s
        .rejected
        .iter()
        .map(|r| (r.line, r.reason.as_str()))
        .collect();
    assert_eq!(
        got,
        vec![
            (4, "missing-value"),
            (5, "not-a-number"),
            (6, "off-plan"),
            (7, "unknown-service"),
            (8, "unknown-floor"),
            (10, "not-a-number"),
            // Outside the plausible instrument range -150..+30 dBm (common practice):
            // a -999 no-signal code and a +47 dBm reading are counted, never graded.
            (12, "suspicious-level"),
            (13, "suspicious-level")
        ]
    );
    assert!(s.rejected.iter().all(|r| r.file == "walk.csv"));
    // Nothing silently lost: every data row is accepted or rejected.
    assert_eq!(s.rows_per_file, vec![("walk.csv".to_string(), 11)]);
    assert_eq!(s.points.len() + s.rejected.len(), 11);
    // The file is hashed into the audit trail.
    assert!(world
        .inputs()
        .iter()
        .any(|i| i.path == "walk.csv" && i.sha256.len() == 64));
}

#[test]
fn a_line_splits_into_fields_as_rfc_4180_quotes_them() {
    // RFC 4180 section 2, rules 5-7: a field may be enclosed in double quotes, a field
    // holding a comma must be, and a quote inside one is written twice. Fields are trimmed.
    use rfsite_engine::survey::split_line;
    assert_eq!(
        split_line(r#"a, "b,c" ,"say ""hi""",,  d "#).unwrap(),
        vec!["a", "b,c", "say \"hi\"", "", "d"]
    );
    // One row per line: a quote left open is an error naming its column.
    let e = split_line(r#"1.0,"2.0,L1"#).unwrap_err();
    assert!(e.contains("column 5"), "{e}");
}
