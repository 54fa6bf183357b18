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

/// A site of one rectangular floor `w` × `h` (site units) at `step`, `k` transmitters.
fn floor_site(w: f64, h: f64, step: Option<f64>, k: usize) -> String {
    let mut t = String::from(
        "[site]\nid = \"big\"\nname = \"Big\"\nunits = \"metres\"\nreport_date = \"2026-01-15\"\n",
    );
    if let Some(s) = step {
        t += &format!("[prediction]\ngrid_step = {s:?}\n");
    }
    t += &format!(
        "[[floors]]\nid = \"L1\"\nelevation = 0.0\nheight = 3.0\noutline = [[0, 0], [{w:?}, 0], [{w:?}, {h:?}], [0, {h:?}]]\n"
    );
    t += "[[services]]\nid = \"lte\"\nfreq_mhz = 1800.0\nthreshold_dbm = -100.0\n";
    for i in 0..k {
        t += &format!("[[transmitters]]\nid = \"T{i}\"\nservice = \"lte\"\nfloor = \"L1\"\nposition = [1, 1]\npower_dbm = 10.0\n");
    }
    t
}

#[test]
fn an_outline_of_1e300_is_refused_not_allocated() {
    // Used to pass `check`; `report` then died of a capacity overflow.
    let text = floor_site(1e300, 10.0, None, 1);
    let l = load_text(&text);
    // Each of the two far points, located at its `[x, y]`.
    let far: Vec<&Diagnostic> = errors(&l);
    assert_eq!(far.len(), 2, "{far:#?}");
    let line = line_of(&text, "outline = ");
    let cols: Vec<usize> = far.iter().map(|d| d.column).collect();
    assert_eq!(cols, [20, 32], "{far:#?}");
    for d in far {
        assert_eq!(d.line, line);
        assert!(d
            .message
            .contains("(1e300) lies beyond 100 km of the origin"));
        assert!(d.hint.is_some());
    }
    // Feet count too: 400 000 ft is 121.92 km.
    let text = floor_site(10.0, 10.0, None, 1).replace("[[transmitters]]", "[[zones]]\nid = \"Z\"\nfloor = \"L1\"\npolygon = [[0, 0], [400000, 0], [0, 5]]\n[[transmitters]]").replace("\"metres\"", "\"feet\"");
    error_with(&load_text(&text), "beyond 100 km");
    // Lengths and elevations as well.
    let text = floor_site(10.0, 10.0, None, 1).replace("height = 3.0", "height = 1e9");
    error_with(&load_text(&text), "`height` (1e9) lies beyond 100 km");
}

#[test]
fn a_1_km_floor_at_5_cm_is_refused_with_the_step_that_fits() {
    // 1000 m / 0.05 m = 20 000 cells per axis: 400 000 000 points. Used to pass `check`
    // and then run `report` for minutes at over 1 GB. The step that fits 4 000 000
    // points: ceil(1000 / s)^2 <= 4 000 000 from s = 0.5 m (hand calculation).
    let text = floor_site(1000.0, 1000.0, Some(0.05), 1);
    let l = load_text(&text);
    let d = error_with(&l, "prediction points");
    assert_eq!(d.line, line_of(&text, "outline = "), "{d:#?}");
    assert!(d.message.contains("400 000 000"), "{}", d.message);
    assert!(
        d.message.contains("at most 4 000 000 per floor"),
        "{}",
        d.message
    );
    assert!(
        d.message.contains("grid_step` of at least 0.5 m"),
        "{}",
        d.message
    );
    // At that step it loads.
    let l = load_text(&floor_site(1000.0, 1000.0, Some(0.5), 1));
    assert!(errors(&l).is_empty(), "{:#?}", l.diagnostics.items);
}

#[test]
fn points_over_all_floors_are_limited() {
    // Six floors of 1000 m x 1000 m at 0.5 m: 6 x 4 000 000 = 24 000 000 > 20 000 000.
    // Fitting 20 000 000: 6 ceil(1000/s)^2 <= 2e7, ceil(1000/s) <= 1825 (1825^2 * 6 =
    // 19 983 750), so s >= 1000/1825 = 0.54795 m, printed rounded up: 0.55 m.
    let mut text = floor_site(1000.0, 1000.0, Some(0.5), 1);
    for i in 2..=6 {
        text += &format!("[[floors]]\nid = \"L{i}\"\nelevation = {}.0\nheight = 3.0\noutline = [[0, 0], [1000, 0], [1000, 1000], [0, 1000]]\n", 3 * (i - 1));
    }
    let l = load_text(&text);
    let d = error_with(&l, "in all");
    assert_eq!(d.line, line_of(&text, "grid_step = "));
    assert!(d.message.contains("24 000 000"), "{}", d.message);
    assert!(d.message.contains("at least 0.55 m"), "{}", d.message);
}

#[test]
fn point_transmitter_pairs_are_limited() {
    // 400 m x 250 m at 0.5 m: 800 x 500 = 400 000 points; 251 transmitters make
    // 100 400 000 pairs on the floor, beyond 100 000 000. 250 transmitters fit.
    let text = floor_site(400.0, 250.0, Some(0.5), 251);
    let l = load_text(&text);
    let d = error_with(&l, "on one floor");
    assert_eq!(d.line, line_of(&text, "outline = "));
    assert!(d.message.contains("100 400 000"), "{}", d.message);
    let l = load_text(&floor_site(400.0, 250.0, Some(0.5), 250));
    assert!(errors(&l).is_empty(), "{:#?}", l.diagnostics.items);
    // Over all floors: 11 such floors x 250 transmitters = 1 100 000 000 > 1e9.
    let mut text = floor_site(400.0, 250.0, Some(0.5), 250);
    for i in 2..=11 {
        text += &format!("[[floors]]\nid = \"L{i}\"\nelevation = {}.0\nheight = 3.0\noutline = [[0, 0], [400, 0], [400, 250], [0, 250]]\n", 3 * (i - 1));
    }
    let l = load_text(&text);
    let d = error_with(&l, "point–transmitter pairs;");
    assert_eq!(d.line, line_of(&text, "id = \"lte\""));
    assert!(d.message.contains("1 100 000 000"), "{}", d.message);
}

#[test]
fn a_grid_step_too_large_for_the_floor_is_refused() {
    // grid_step = 1e6 m used to give 0 points and contradictory findings with no
    // warning; it is beyond the 100 km of any length now.
    let l = load_text(&floor_site(20.0, 10.0, Some(1e6), 1));
    error_with(&l, "`grid_step` (1000000) lies beyond 100 km");
    // 1000 m: one cell, its centre (500, 500) outside the 20 m x 10 m outline.
    let text = floor_site(20.0, 10.0, Some(1000.0), 1);
    let l = load_text(&text);
    let d = error_with(&l, "gets 0 prediction points");
    assert_eq!(d.line, line_of(&text, "grid_step = "));
    // 20 x 10 m needs 2 x 2 centres inside at least: any step below 10 m gives
    // ceil(10 / s) >= 2 rows and ceil(20 / s) >= 2 columns (hand calculation); the hint
    // names a step that does.
    let hint = d.hint.as_deref().unwrap();
    let shown: f64 = hint
        .split_whitespace()
        .find_map(|w| w.parse().ok())
        .unwrap_or_else(|| panic!("no step in {hint}"));
    assert!(shown < 10.0, "{hint}");
    let l = load_text(&floor_site(20.0, 10.0, Some(shown), 1));
    assert!(errors(&l).is_empty(), "{hint}: {:#?}", l.diagnostics.items);
    // Without a `grid_step` (default 1 m) a tiny floor is shown at its outline.
    let text = floor_site(0.5, 0.5, None, 0);
    let l = load_text(&text);
    let d = error_with(&l, "gets 1 prediction point");
    assert_eq!(d.line, line_of(&text, "outline = "));
}

#[test]
fn entry_counts_are_limited_at_the_first_entry_beyond() {
    // 201 floors: the 201st is named. (MAX_FLOORS = 200, README "Limits".)
    let mut text = floor_site(10.0, 10.0, None, 1);
    for i in 2..=201 {
        text += &format!("[[floors]]\nid = \"F{i}\"\nelevation = {}.0\nheight = 3.0\noutline = [[0, 0], [10, 0], [10, 10], [0, 10]]\n", 3 * (i - 1));
    }
    let l = load_text(&text);
    let d = error_with(&l, "`[[floors]]` entries");
    assert!(
        d.message.contains("201") && d.message.contains("at most 200"),
        "{}",
        d.message
    );
    assert_eq!(d.line, line_of(&text, "id = \"F201\"") - 1);
    // A polyline of 10 001 points.
    let pts: Vec<String> = (0..10_001)
        .map(|i| format!("[{}, 1]", i as f64 * 0.001))
        .collect();
    let text = in_table(
        "[[walls]]\nfloor = \"L1\"\nmaterial = \"concrete\"\nthickness = 0.2",
        &format!("points = [{}]", pts.join(", ")),
    );
    let l = load_text(&text);
    let d = error_with(&l, "10 001 points");
    assert_eq!(d.line, line_of(&text, "points = "));
}

#[test]
fn point_in_polygon_work_per_floor_is_limited() {
    // 1000 m x 1000 m at 1 m: 1 000 000 points; outline 4 vertices + a zone of 2001:
    // 2 005 000 000 tests > 2 000 000 000. Fitting: ceil(1000 / s)^2 * 2005 <= 2e9 gives
    // ceil(1000 / s) <= 998 (998^2 * 2005 = 1 996 988 020), s >= 1000 / 998 = 1.002 m,
    // printed rounded up: 1.01 m (hand calculation).
    let site = |n: usize| {
        let ring: Vec<String> = (0..n)
            .map(|i| {
                let a = i as f64 * std::f64::consts::TAU / n as f64;
                format!(
                    "[{:.6}, {:.6}]",
                    500.0 + 100.0 * a.cos(),
                    500.0 + 100.0 * a.sin()
                )
            })
            .collect();
        floor_site(1000.0, 1000.0, Some(1.0), 1).replace(
            "[[services]]",
            &format!(
                "[[zones]]\nid = \"Z\"\nfloor = \"L1\"\npolygon = [{}]\n[[services]]",
                ring.join(", ")
            ),
        )
    };
    let text = site(2001);
    let l = load_text(&text);
    let d = error_with(&l, "point-in-polygon tests");
    assert_eq!(d.line, line_of(&text, "outline = "));
    assert!(d.message.contains("2 005 000 000"), "{}", d.message);
    assert!(d.message.contains("at least 1.01 m"), "{}", d.message);
    // 4 + 1996 vertices: exactly 2 000 000 000 tests, which fits.
    let l = load_text(&site(1996));
    assert!(errors(&l).is_empty(), "{:#?}", l.diagnostics.items);
}
