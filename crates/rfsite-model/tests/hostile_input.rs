//! Hostile and broken site files: every one is refused at load with a located error and a
//! hint, never a hang, a panic or an allocation failure.
//!
//! Outside references: TOML 1.0.0 ("Float": `inf` and `nan` are valid float values, so a
//! parser hands them on and the loader must refuse them); Unicode 15.0 general category
//! Cc (the control characters, `char::is_control`); XML 1.0 (Fifth Edition) §2.2 `Char`,
//! which excludes U+FFFE and U+FFFF, so an SVG cannot carry them.

use rfsite_model::{load, Diagnostic, Loaded, MaterialLibrary, SourceFile};

/// A small valid site; `{extra}` is appended.
const BASE: &str = r#"[site]
id = "hostile"
name = "Hostile input"
units = "metres"
report_date = "2026-01-15"

[[floors]]
id = "L1"
elevation = 0.0
height = 3.0
outline = [[0, 0], [20, 0], [20, 10], [0, 10]]

[[services]]
id = "lte"
freq_mhz = 1800.0
threshold_dbm = -100.0

[[transmitters]]
id = "T1"
service = "lte"
floor = "L1"
position = [5, 5]
power_dbm = 10.0
"#;

fn load_text(text: &str) -> Loaded {
    load(
        &SourceFile::new("site.toml", text),
        &MaterialLibrary::builtin(),
    )
}

fn with(extra: &str) -> Loaded {
    load_text(&format!("{BASE}\n{extra}\n"))
}

/// 1-based line of the first line of `text` containing `needle`.
fn line_of(text: &str, needle: &str) -> usize {
    text.lines()
        .position(|l| l.contains(needle))
        .unwrap_or_else(|| panic!("`{needle}` not in the text"))
        + 1
}

/// The base site with `line` added to `table`: below its header when the base has that
/// table, else as a new table at the end.
fn in_table(table: &str, line: &str) -> String {
    let header = format!("{table}\n");
    if BASE.starts_with(&header) || BASE.contains(&format!("\n{header}")) {
        BASE.replacen(&header, &format!("{header}{line}\n"), 1)
    } else {
        format!("{BASE}\n{table}\n{line}\n")
    }
}

/// The errors, as text.
fn errors(l: &Loaded) -> Vec<&Diagnostic> {
    l.diagnostics
        .items
        .iter()
        .filter(|d| d.is_error())
        .collect()
}

/// The one error whose message contains `what`, with a hint.
fn error_with<'a>(l: &'a Loaded, what: &str) -> &'a Diagnostic {
    let found: Vec<&Diagnostic> = errors(l)
        .into_iter()
        .filter(|d| d.message.contains(what))
        .collect();
    assert!(
        found.len() == 1,
        "expected one error containing `{what}`, got {:#?}",
        l.diagnostics.items
    );
    assert!(found[0].hint.is_some(), "no hint: {:#?}", found[0]);
    assert!(l.site.is_none());
    found[0]
}

#[test]
fn base_site_loads() {
    let l = with("");
    assert!(errors(&l).is_empty(), "{:#?}", l.diagnostics.items);
    assert!(l.site.is_some());
}

#[test]
fn nan_probe_frequency_is_refused_at_its_place() {
    // Used to loop in `MaterialLibrary::apply_probes` until memory ran out.
    for bad in ["nan", "+nan", "-nan", "inf", "-inf"] {
        let extra = format!(
            "[[probes]]\nmaterial = \"concrete\"\nfreq_mhz = {bad}\nclear_dbm = -40.0\nthrough_dbm = -60.0\n"
        );
        let text = format!("{BASE}\n{extra}");
        let l = load_text(&text);
        let d = error_with(&l, "not a finite number");
        assert_eq!(
            d.line,
            line_of(&text, &format!("freq_mhz = {bad}")),
            "{bad}: {d:#?}"
        );
        assert_eq!(d.column, "freq_mhz = ".len() + 1, "{bad}");
        assert!(d.message.contains("freq_mhz"), "{}", d.message);
        assert_eq!(errors(&l).len(), 1, "{bad}: {:#?}", l.diagnostics.items);
    }
}

#[test]
fn every_number_of_the_site_file_must_be_finite() {
    // One key of each kind: coordinates, lengths, levels, angles, fractions, tables,
    // plugin options.
    let cases: &[(&str, &str)] = &[
        ("[site]", "north_deg = nan"),
        ("[prediction]", "grid_step = inf"),
        ("[prediction]", "shadowing_sigma_db = nan"),
        ("[[floors]]\nid = \"L2\"\nheight = 3.0\nelevation = 3.0\noutline = [[0, 0], [20, 0], [20, 10], [0, 10]]", "slab_thickness = nan"),
        ("[[floors]]\nid = \"L2\"\nheight = 3.0\noutline = [[0, 0], [20, 0], [20, 10], [0, 10]]", "elevation = -inf"),
        ("[[walls]]\nfloor = \"L1\"\nmaterial = \"concrete\"\nthickness = 0.2", "points = [[0, 1], [nan, 1]]"),
        ("[[services]]\nid = \"wifi\"\nfreq_mhz = 2400.0", "threshold_dbm = nan"),
        ("[[services]]\nid = \"wifi\"\nfreq_mhz = 2400.0\nthreshold_dbm = -80.0", "target_general = nan"),
        ("[[transmitters]]\nid = \"T2\"\nservice = \"lte\"\nfloor = \"L1\"\nposition = [6, 6]", "power_dbm = inf"),
        ("[[transmitters]]\nid = \"T2\"\nservice = \"lte\"\nfloor = \"L1\"\nposition = [6, 6]\npower_dbm = 10.0\npattern = \"sector\"", "azimuth_deg = nan"),
        ("[[donors]]\nid = \"D1\"\nservice = \"lte\"", "level_dbm = nan"),
        ("[[materials]]\nid = \"m1\"", "loss_db = [[900, nan]]"),
        ("[[materials]]\nid = \"m1\"", "permittivity = nan"),
        ("[plugins.multi-wall]", "floor_b = nan"),
    ];
    for (table, line) in cases {
        let text = in_table(table, line);
        let l = load_text(&text);
        let d = error_with(&l, "not a finite number");
        assert_eq!(d.line, line_of(&text, line), "{line}: {d:#?}");
        let key = line.split(' ').next().unwrap();
        assert!(d.message.contains(key), "{line}: {}", d.message);
    }
}

#[test]
fn numbers_taken_as_written_must_be_plausible() {
    // An azimuth of 1e300 degrees never normalises to +-180 (1e300 + 360 == 1e300), so
    // the prediction stalled; the others are unit or typing errors. The ranges are the
    // loader's own (README "Limits"), not a published table.
    let cases: &[(&str, &str, &str)] = &[
        ("[[transmitters]]\nid = \"T2\"\nservice = \"lte\"\nfloor = \"L1\"\nposition = [6, 6]\npower_dbm = 10.0\npattern = \"sector\"", "azimuth_deg = 1e300", "azimuth_deg"),
        ("[[transmitters]]\nid = \"T2\"\nservice = \"lte\"\nfloor = \"L1\"\nposition = [6, 6]\npower_dbm = 10.0\npattern = \"sector\"", "downtilt_deg = 95", "downtilt_deg"),
        ("[[transmitters]]\nid = \"T2\"\nservice = \"lte\"\nfloor = \"L1\"\nposition = [6, 6]", "power_dbm = 1e300", "power_dbm"),
        ("[site]", "north_deg = 1e9", "north_deg"),
        ("[[services]]\nid = \"wifi\"\nfreq_mhz = 2400.0", "threshold_dbm = -1e6", "threshold_dbm"),
        ("[[probes]]\nmaterial = \"concrete\"\nclear_dbm = -40.0\nthrough_dbm = -60.0", "freq_mhz = 0.0", "freq_mhz"),
        ("[[probes]]\nmaterial = \"concrete\"\nfreq_mhz = 900.0\nclear_dbm = -40.0\nthrough_dbm = -60.0", "angle_deg = 120", "angle_deg"),
    ];
    for (table, line, key) in cases {
        let text = in_table(table, line);
        let l = load_text(&text);
        let d = error_with(&l, "is outside");
        assert_eq!(d.line, line_of(&text, line), "{line}: {d:#?}");
        assert!(d.message.contains(key), "{line}: {}", d.message);
    }
}

#[test]
fn control_characters_are_refused_in_every_string_and_key() {
    // Unicode Cc (BEL, ESC, NUL escaped in TOML, DEL, a C1 control, and line breaks and
    // tabs too) and the XML 1.0 non-characters U+FFFE / U+FFFF: each used to pass
    // `check` and then break the SVG figures.
    let cases: &[(&str, &str)] = &[
        ("[site]", r#"client = "Bell\u0007 & Co""#),
        ("[site]", "address = \"Two\\nlines\""),
        ("[site]", "author = \"tab\\there\""),
        ("[site]", r#"reviewer = "nul\u0000""#),
        ("[site]", r#"revision = "del\u007F""#),
        ("[[floors]]\nid = \"L2\"\nelevation = 3.0\nheight = 3.0\noutline = [[0, 0], [20, 0], [20, 10], [0, 10]]", r#"name = "Level\u001B[31m 2""#),
        ("[[zones]]\nid = \"Z1\"\nfloor = \"L1\"\npolygon = [[1, 1], [4, 1], [4, 4]]", r#"name = "stair\u0085""#),
        ("[[services]]\nid = \"wifi\"\nfreq_mhz = 2400.0\nthreshold_dbm = -80.0", r#"name = "Wi\uFFFFFi""#),
        ("[[revisions]]\nrevision = \"A\"", r#"note = "first\rissue""#),
        ("[plugins.interference-demo]", r#"label = "x\u0008""#),
        ("[[surveys]]\nfloor = \"L1\"", r#"file = "survey\u0000.csv""#),
    ];
    for (table, line) in cases {
        let text = in_table(table, line);
        let l = load_text(&text);
        let d = error_with(&l, "control character");
        assert_eq!(d.line, line_of(&text, line), "{line}: {d:#?}");
        let key = line.split(' ').next().unwrap();
        assert!(d.message.contains(key), "{line}: {}", d.message);
    }
    // The site name itself, and a key.
    let text = BASE.replace(r#"name = "Hostile input""#, r#"name = "Hostile\u0007""#);
    let l = load_text(&text);
    assert_eq!(error_with(&l, "control character").line, 3);
    let text = in_table("[site]", "\"odd\\u0007key\" = 1");
    let l = load_text(&text);
    assert!(error_with(&l, "control character").message.contains("key"));
}

#[test]
fn every_id_is_letters_digits_dash_or_underscore() {
    let cases: &[(&str, &str, &str)] = &[
        ("[[floors]]\nelevation = 3.0\nheight = 3.0\noutline = [[0, 0], [20, 0], [20, 10], [0, 10]]", r#"id = "a/b""#, "floor id"),
        ("[[walls]]\nfloor = \"L1\"\nmaterial = \"concrete\"\nthickness = 0.2\npoints = [[0, 1], [5, 1]]", r#"id = "W 1""#, "wall id"),
        ("[[zones]]\nfloor = \"L1\"\npolygon = [[1, 1], [4, 1], [4, 4]]", r#"id = "zone.1""#, "zone id"),
        ("[[services]]\nfreq_mhz = 2400.0\nthreshold_dbm = -80.0", r#"id = "wi-fi:5""#, "service id"),
        ("[[transmitters]]\nservice = \"lte\"\nfloor = \"L1\"\nposition = [6, 6]\npower_dbm = 10.0", r#"id = "T#2""#, "transmitter id"),
        ("[[donors]]\nservice = \"lte\"\nlevel_dbm = -70.0", r#"id = "D1/north""#, "donor id"),
        ("[[materials]]\nitu = \"concrete\"", r#"id = "my concrete""#, "material id"),
        ("[[materials]]\nitu = \"concrete\"", r#"id = """#, "material id"),
        ("[[services]]\nfreq_mhz = 2400.0\nthreshold_dbm = -80.0", &format!("id = \"{}\"", "s".repeat(65)), "service id"),
        ("[[zones]]\nfloor = \"L1\"\npolygon = [[1, 1], [4, 1], [4, 4]]", r#"id = "zone-ü""#, "zone id"),
    ];
    for (table, line, what) in cases {
        let text = in_table(table, line);
        let l = load_text(&text);
        let d = error_with(&l, "letters, digits");
        assert_eq!(d.line, line_of(&text, line), "{line}: {d:#?}");
        assert!(d.message.contains(what), "{line}: {}", d.message);
    }
    // Hyphens, underscores and both letter cases stay valid.
    let l = with(
        "[[zones]]\nid = \"Stair_1-north\"\nfloor = \"L1\"\npolygon = [[1, 1], [4, 1], [4, 4]]",
    );
    assert!(errors(&l).is_empty(), "{:#?}", l.diagnostics.items);
}

#[test]
fn ids_differing_only_in_case_are_refused() {
    let text = in_table(
        "[[floors]]\nelevation = 3.0\nheight = 3.0\noutline = [[0, 0], [20, 0], [20, 10], [0, 10]]",
        r#"id = "l1""#,
    );
    let l = load_text(&text);
    let d = error_with(&l, "only in letter case");
    assert_eq!(d.line, line_of(&text, r#"id = "l1""#));
    let l = with("[[openings]]\nid = \"O1\"\nwall = \"W1\"\nmaterial = \"wooden-door\"\noffset = 1.0\nwidth = 1.0\n[[openings]]\nid = \"O1\"\nwall = \"W1\"\nmaterial = \"wooden-door\"\noffset = 3.0\nwidth = 1.0\n[[walls]]\nid = \"W1\"\nfloor = \"L1\"\nmaterial = \"concrete\"\nthickness = 0.2\npoints = [[0, 1], [8, 1]]");
    error_with(&l, "opening id `O1` is used twice");
}
