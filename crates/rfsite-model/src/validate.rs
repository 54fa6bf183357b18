//! Raw project -> validated [`Site`], reporting every problem at once.

use std::collections::{BTreeMap, BTreeSet};
use std::ops::Range;

use rfsite_geometry::{Point2, Segment};

use crate::diag::{unknown_name_hint, Diagnostic, Diagnostics, Severity, SourceFile};
use crate::limits::*;
use crate::material::MaterialLibrary;
use crate::raw::*;
use crate::site::*;

pub(crate) mod cad;
mod floors;
mod materials;
mod meta;
mod refs;
mod services;
mod signals;
mod twoway;
mod walls;
mod whatif;
use refs::{floor_ref, service_ref, transmitter, Names};

/// Result of loading: the site when there were no errors, and every diagnostic.
#[derive(Debug)]
pub struct Loaded {
    /// The validated site (None when any error was found).
    pub site: Option<Site>,
    /// Errors and warnings, sorted by location.
    pub diagnostics: Diagnostics,
}

struct V<'a> {
    file: &'a SourceFile,
    diags: Diagnostics,
    to_m: f64,
    /// Byte offsets of values [`scan_values`] refused: later checks of the same value
    /// would only repeat the problem, so their errors are dropped.
    refused: BTreeSet<usize>,
}

impl<'a> V<'a> {
    fn error(&mut self, span: Range<usize>, msg: impl Into<String>, hint: Option<String>) {
        if self.refused.contains(&span.start) {
            return;
        }
        self.diags
            .push(Diagnostic::at(Severity::Error, self.file, span, msg, hint));
    }
    fn warn(&mut self, span: Range<usize>, msg: impl Into<String>, hint: Option<String>) {
        self.diags.push(Diagnostic::at(
            Severity::Warning,
            self.file,
            span,
            msg,
            hint,
        ));
    }
    fn req<'b, T>(
        &mut self,
        v: &'b Option<S<T>>,
        table: Range<usize>,
        what: &str,
        field: &str,
        hint: &str,
    ) -> Option<&'b T> {
        match v {
            Some(s) => Some(s.get_ref()),
            None => {
                self.error(
                    table,
                    format!("{what} is missing `{field}`"),
                    Some(hint.to_string()),
                );
                None
            }
        }
    }
    fn text(&mut self, v: &Option<S<String>>) -> String {
        v.as_ref().map(|s| s.get_ref().clone()).unwrap_or_default()
    }
    /// A length in site units, converted to metres; must be > 0 (or >= 0 when `allow_zero`).
    fn length(&mut self, v: &S<f64>, field: &str, allow_zero: bool) -> Option<f64> {
        let x = *v.get_ref();
        if !x.is_finite() || x < 0.0 || (!allow_zero && x == 0.0) {
            self.error(
                v.span(),
                format!(
                    "`{field}` must be {} (got {x})",
                    if allow_zero {
                        "zero or more"
                    } else {
                        "more than zero"
                    }
                ),
                Some(
                    "lengths are in the units set by `site.units`; write a positive number".into(),
                ),
            );
            return None;
        }
        self.within_extent(v.span(), x, &format!("`{field}`"))
    }
    fn coord(&mut self, v: &S<f64>) -> Option<f64> {
        let x = *v.get_ref();
        if !x.is_finite() {
            self.error(v.span(), "coordinate is not a finite number", None);
            return None;
        }
        self.within_extent(v.span(), x, "this coordinate")
    }
    /// `x` site units in metres, if within [`MAX_COORD_M`] either side of 0.
    fn within_extent(&mut self, span: Range<usize>, x: f64, what: &str) -> Option<f64> {
        let m = x * self.to_m;
        if m.abs() <= MAX_COORD_M {
            return Some(m);
        }
        self.error(
            span,
            format!(
                "{what} ({}) lies beyond {} km of the origin",
                number(x),
                MAX_COORD_M / 1000.0
            ),
            Some("draw the building from a local origin, in the units set by `site.units`: coordinates, elevations and lengths are at most 100 km either side of 0".into()),
        );
        None
    }
    fn point(&mut self, p: &S<RawPoint>) -> Option<Point2> {
        let v = p.get_ref();
        if v.iter().any(|x| !x.is_finite()) {
            // Refused by `scan_values`, located at the number itself.
            return None;
        }
        if v.len() != 2 {
            self.error(
                p.span(),
                format!("a point is `[x, y]`; this one has {} numbers", v.len()),
                Some("write each point as `[x, y]` in site units".into()),
            );
            return None;
        }
        if let Some(far) = v
            .iter()
            .copied()
            .find(|x| (x * self.to_m).abs() > MAX_COORD_M)
        {
            return self
                .within_extent(p.span(), far, "a coordinate of this point")
                .and(None);
        }
        Some(Point2::new(v[0] * self.to_m, v[1] * self.to_m))
    }
    fn points(&mut self, ps: &S<Vec<S<RawPoint>>>) -> Option<Vec<Point2>> {
        if ps.get_ref().len() > MAX_POLYLINE_POINTS {
            self.error(
                ps.span(),
                format!(
                    "this list has {} points; at most {} are taken",
                    thousands(ps.get_ref().len() as u64),
                    thousands(MAX_POLYLINE_POINTS as u64)
                ),
                Some("split the wall or zone into several, or simplify the outline".into()),
            );
            return None;
        }
        let mut out = Vec::new();
        let mut ok = true;
        for p in ps.get_ref() {
            match self.point(p) {
                Some(q) => out.push(q),
                None => ok = false,
            }
        }
        ok.then_some(out)
    }
    fn fraction(&mut self, v: &S<f64>, field: &str) -> Option<f64> {
        let x = *v.get_ref();
        if !(0.0..=1.0).contains(&x) {
            self.error(
                v.span(),
                format!("`{field}` is a fraction from 0 to 1 (got {x})"),
                Some(format!(
                    "write 95 % as 0.95: `{field} = {}`",
                    if x > 1.0 && x <= 100.0 {
                        x / 100.0
                    } else {
                        0.95
                    }
                )),
            );
            return None;
        }
        Some(x)
    }
    /// An id of the `what` kind: [`id_is_valid`], and not used before by another of its
    /// kind, letter case aside (ids name figure files, and file systems may ignore case).
    fn unique(&mut self, seen: &mut BTreeSet<String>, id: &S<String>, what: &str) {
        self.id_chars(
            id,
            what,
            "ids name figures and findings; e.g. `id = \"L2-east\"`",
        );
        let exact = id.get_ref();
        if !seen.insert(exact.clone()) {
            self.error(
                id.span(),
                format!("{what} id `{}` is used twice", shown(exact)),
                Some("give each one its own id".into()),
            );
        } else if !seen.insert(format!("\0{}", exact.to_ascii_lowercase())) {
            self.error(
                id.span(),
                format!("{what} id `{}` differs from another {what} id only in letter case", shown(exact)),
                Some("give each one its own id: ids name figure files, and some file systems ignore case".into()),
            );
        }
    }
    fn id_chars(&mut self, id: &S<String>, what: &str, hint: &str) {
        if !id_is_valid(id.get_ref()) {
            self.error(
                id.span(),
                format!(
                    "{what} id `{}` must be 1 to {MAX_ID_CHARS} letters, digits, `-` or `_`",
                    shown(id.get_ref())
                ),
                Some(hint.to_string()),
            );
        }
    }
}

/// Longest id, in characters.
pub const MAX_ID_CHARS: usize = 64;

/// Whether `id` is a valid id: 1 to [`MAX_ID_CHARS`] ASCII letters, digits, `-` or `_`.
pub fn id_is_valid(id: &str) -> bool {
    !id.is_empty()
        && id.len() <= MAX_ID_CHARS
        && id
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
}

/// A number for a message: in exponent form when very large or small.
fn number(x: f64) -> String {
    if x != 0.0 && (x.abs() >= 1e9 || x.abs() < 1e-6) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// A user's text for a message: escaped, and cut after 40 characters.
fn shown(s: &str) -> String {
    let t: String = s.chars().take(40).collect();
    let more = if s.chars().count() > 40 { "..." } else { "" };
    format!("{}{more}", t.escape_debug())
}

/// Parses and validates a site file. `library` holds the materials known before the site's
/// own (ITU + built-in + any folders given on the command line).
pub fn load(file: &SourceFile, library: &MaterialLibrary) -> Loaded {
    let mut v = V {
        file,
        diags: Diagnostics::default(),
        to_m: 1.0,
        refused: BTreeSet::new(),
    };
    let site = load_inner(&mut v, library);
    let diagnostics = v.diags.sorted();
    Loaded {
        site: if diagnostics.has_errors() { None } else { site },
        diagnostics,
    }
}

fn parse_raw(v: &mut V<'_>) -> Option<RawProject> {
    let text = &v.file.text;
    if text
        .lines()
        .all(|l| l.trim().is_empty() || l.trim_start().starts_with('#'))
    {
        v.diags.push(Diagnostic::whole_file(
            Severity::Error,
            &v.file.display_path,
            "the site file is empty",
            Some("start from `rfsite init DIR`, which writes a commented site.toml, or copy one from examples/".into()),
        ));
        return None;
    }
    let de = match toml::Deserializer::parse(text) {
        Ok(d) => d,
        Err(e) => {
            toml_error(v, &e);
            return None;
        }
    };
    let mut unknown: Vec<Vec<String>> = Vec::new();
    let raw: Result<RawProject, _> = serde_ignored::deserialize(de, |path| {
        unknown.push(path_segments(&path));
    });
    match raw {
        Ok(r) => {
            scan_values(v);
            report_unknown_keys(v, &unknown);
            Some(r)
        }
        Err(e) => {
            toml_error(v, &e);
            None
        }
    }
}

/// Whether a character may not stand in the site file's text: the Unicode control
/// characters (general category Cc, line breaks and tabs included) and U+FFFE, U+FFFF,
/// which XML 1.0 §2.2 `Char` excludes, so an SVG figure cannot carry them.
fn forbidden_char(c: char) -> bool {
    c.is_control() || c == '\u{FFFE}' || c == '\u{FFFF}'
}

/// Every value of the file, before any is interpreted: a number must be finite (TOML
/// allows `nan` and `inf`; no coordinate, length, level or option of rfsite can be one)
/// and no key or string may hold a [`forbidden_char`]. Plugin tables included.
fn scan_values(v: &mut V<'_>) {
    let Ok(doc) = toml::de::DeTable::parse(&v.file.text) else {
        return;
    };
    let mut path = Vec::new();
    scan_table(v, doc.get_ref(), &mut path);
}

fn scan_table(v: &mut V<'_>, t: &toml::de::DeTable<'_>, path: &mut Vec<String>) {
    for (k, val) in t.iter() {
        let key = k.get_ref().as_ref();
        path.push(key.to_string());
        if let Some(c) = key.chars().find(|c| forbidden_char(*c)) {
            refuse_char(v, k.span(), &format!("the key `{}`", key.escape_debug()), c);
        }
        scan_value(v, val, path);
        path.pop();
    }
}

fn scan_value(v: &mut V<'_>, val: &toml::Spanned<toml::de::DeValue<'_>>, path: &mut Vec<String>) {
    use toml::de::DeValue;
    let name = || format!("`{}`", path.join("."));
    match val.get_ref() {
        DeValue::Float(f) => {
            let text = f.as_str();
            let finite = !text.contains("nan")
                && !text.contains("inf")
                && text
                    .replace('_', "")
                    .parse::<f64>()
                    .is_ok_and(f64::is_finite);
            if !finite {
                let span = val.span();
                v.error(
                    span.clone(),
                    format!("{} is not a finite number (`{text}`)", name()),
                    Some("write a number: `nan` and `inf` are TOML floats, but no coordinate, length, level or option can be one".into()),
                );
                v.refused.insert(span.start);
            }
        }
        DeValue::String(s) => {
            if let Some(c) = s.chars().find(|c| forbidden_char(*c)) {
                refuse_char(v, val.span(), &name(), c);
            }
        }
        DeValue::Array(a) => {
            for x in a.iter() {
                scan_value(v, x, path);
            }
        }
        DeValue::Table(t) => scan_table(v, t, path),
        DeValue::Integer(_) | DeValue::Boolean(_) | DeValue::Datetime(_) => {}
    }
}

fn refuse_char(v: &mut V<'_>, span: Range<usize>, what: &str, c: char) {
    v.error(
        span.clone(),
        format!("{what} contains the control character U+{:04X}", c as u32),
        Some("remove it (write a line break or a tab as a space): names and text are printed in the PDF and its SVG figures, which cannot carry control characters".into()),
    );
    v.refused.insert(span.start);
}

/// Storeys that leave a gap or overlap (elevation + height against the next elevation)
/// and floors without a slab material, as warnings that name what is assumed.
fn storey_warnings(v: &mut V<'_>, raw: &[S<RawFloor>], floors: &[Floor]) {
    let span_of = |id: &str, key: fn(&RawFloor) -> Option<Range<usize>>| {
        raw.iter()
            .find(|r| r.get_ref().id.as_ref().map(|i| i.get_ref().as_str()) == Some(id))
            .map(|r| key(r.get_ref()).unwrap_or(r.span()))
            .unwrap_or(0..1)
    };
    let mut order: Vec<&Floor> = floors.iter().collect();
    order.sort_by(|a, b| a.elevation_m.total_cmp(&b.elevation_m));
    for w in order.windows(2) {
        let (low, high) = (w[0], w[1]);
        let gap = high.elevation_m - (low.elevation_m + low.height_m);
        if gap.abs() > 0.05 {
            let kind = if gap > 0.0 { "gap" } else { "overlap" };
            v.warn(
                span_of(&high.id, |r| r.elevation.as_ref().map(|e| e.span())),
                format!(
                    "floor `{}` starts {:.2} m {} the top of floor `{}` (its elevation + height): a {kind} between storeys",
                    high.id,
                    gap.abs(),
                    if gap > 0.0 { "above" } else { "below" },
                    low.id
                ),
                Some(format!("set `{}` height to the floor-to-floor distance, {:.2} m; paths between the floors cross one slab either way", low.id, high.elevation_m - low.elevation_m)),
            );
        }
    }
    if floors.len() < 2 {
        return;
    }
    for f in floors {
        let r = raw
            .iter()
            .find(|r| r.get_ref().id.as_ref().map(|i| i.get_ref().as_str()) == Some(f.id.as_str()));
        if r.is_some_and(|r| r.get_ref().slab_material.is_none()) {
            v.warn(
                span_of(&f.id, |r| r.id.as_ref().map(|i| i.span())),
                format!(
                    "floor `{}` has no `slab_material`: the default `{}`, {:.0} mm, is used for paths between floors",
                    f.id,
                    f.slab_material,
                    f.slab_thickness_m * 1000.0
                ),
                Some("add `slab_material = \"concrete-floor-slab\"` (or the slab's material) and `slab_thickness`".into()),
            );
        }
    }
}

/// Levels in dBm outside this span are no radio level (+100 dBm is 10 MW); kept well
/// inside the range where a power sum in milliwatts stays finite.
pub const LEVEL_RANGE_DBM: (f64, f64) = (-300.0, 100.0);
/// Gains, losses and margins in dB outside this span are a typing error.
pub const GAIN_RANGE_DB: (f64, f64) = (-100.0, 100.0);

/// The numbers the loader otherwise takes as written, each within a plausible range: a
/// level, gain or angle beyond it is a typing or unit error, and some would stall a
/// calculation (an azimuth of 1e300 degrees never normalises to ±180).
fn plausible_numbers(v: &mut V<'_>, raw: &RawProject) {
    let angle = |hint: &'static str| (hint, "degrees");
    let within = |v: &mut V<'_>,
                  x: &Option<S<f64>>,
                  field: &str,
                  (lo, hi): (f64, f64),
                  (hint, unit): (&str, &str)| {
        let Some(x) = x else { return };
        let val = *x.get_ref();
        if val.is_finite() && !(lo..=hi).contains(&val) {
            v.error(
                x.span(),
                format!("`{field}` {val} is outside {lo} to {hi} {unit}"),
                Some(hint.to_string()),
            );
        }
    };
    let level = |hint: &'static str| (hint, "dBm");
    let db = |hint: &'static str| (hint, "dB");
    if let Some(m) = &raw.site {
        let m = m.get_ref();
        within(
            v,
            &m.north_deg,
            "north_deg",
            (-360.0, 360.0),
            angle("the plan direction of true north, degrees counter-clockwise from +x"),
        );
    }
    for s in &raw.services {
        let s = s.get_ref();
        within(
            v,
            &s.threshold_dbm,
            "threshold_dbm",
            LEVEL_RANGE_DBM,
            level("the required level in dBm, e.g. `threshold_dbm = -95.0`"),
        );
        within(
            v,
            &s.design_margin_db,
            "design_margin_db",
            GAIN_RANGE_DB,
            db("the margin above the threshold in dB, e.g. `design_margin_db = 5.0`"),
        );
    }
    for t in &raw.transmitters {
        let t = t.get_ref();
        within(
            v,
            &t.power_dbm,
            "power_dbm",
            LEVEL_RANGE_DBM,
            level("the conducted power in dBm: 1 W is 30 dBm"),
        );
        within(
            v,
            &t.antenna_gain_dbi,
            "antenna_gain_dbi",
            GAIN_RANGE_DB,
            db("the antenna gain in dBi from its data sheet"),
        );
        for (x, f) in [
            (&t.cable_loss_db, "cable_loss_db"),
            (&t.connector_loss_db, "connector_loss_db"),
        ] {
            within(
                v,
                x,
                f,
                (f64::NEG_INFINITY, GAIN_RANGE_DB.1),
                db("the loss in dB"),
            );
        }
        within(
            v,
            &t.azimuth_deg,
            "azimuth_deg",
            (-360.0, 360.0),
            angle("the plan direction of boresight, degrees counter-clockwise from +x"),
        );
        within(
            v,
            &t.downtilt_deg,
            "downtilt_deg",
            (-90.0, 90.0),
            angle("the tilt below the horizon in degrees"),
        );
    }
    for d in &raw.donors {
        within(
            v,
            &d.get_ref().level_dbm,
            "level_dbm",
            LEVEL_RANGE_DBM,
            level("the level outside the facade in dBm, e.g. `level_dbm = -70.0`"),
        );
    }
    for p in &raw.probes {
        let p = p.get_ref();
        within(
            v,
            &p.freq_mhz,
            "freq_mhz",
            (1.0, 100_000.0),
            ("`freq_mhz` is in MHz: 2.4 GHz is 2400", "MHz"),
        );
        within(
            v,
            &p.clear_dbm,
            "clear_dbm",
            LEVEL_RANGE_DBM,
            level("the level with a clear path, dBm"),
        );
        within(
            v,
            &p.through_dbm,
            "through_dbm",
            LEVEL_RANGE_DBM,
            level("the level through the material, dBm"),
        );
        within(
            v,
            &p.angle_deg,
            "angle_deg",
            (0.0, 90.0),
            angle("the incidence angle from the wall's normal, 0 to 90 degrees"),
        );
    }
}

/// Each table's number of entries within its documented maximum
/// ([`crate::limits`]); the first entry beyond it is named.
fn count_limits(v: &mut V<'_>, raw: &RawProject) {
    fn over<T>(v: &mut V<'_>, items: &[S<T>], max: usize, table: &str) {
        if let Some(first) = items.get(max) {
            v.error(
                first.span(),
                format!(
                    "the site has {} `[[{table}]]` entries; at most {} are taken",
                    thousands(items.len() as u64),
                    thousands(max as u64)
                ),
                Some(
                    "split the site into several site projects (`rfsite portfolio` runs them all)"
                        .into(),
                ),
            );
        }
    }
    over(v, &raw.floors, MAX_FLOORS, "floors");
    over(v, &raw.walls, MAX_WALLS, "walls");
    over(v, &raw.openings, MAX_OPENINGS, "openings");
    over(v, &raw.zones, MAX_ZONES, "zones");
    over(v, &raw.services, MAX_SERVICES, "services");
    over(v, &raw.transmitters, MAX_TRANSMITTERS, "transmitters");
    over(v, &raw.donors, MAX_DONORS, "donors");
    over(v, &raw.materials, MAX_MATERIALS, "materials");
    over(v, &raw.surveys, MAX_SURVEYS, "surveys");
    over(v, &raw.probes, MAX_PROBES, "probes");
    over(v, &raw.revisions, MAX_REVISIONS, "revisions");
}

/// Where a grid problem is shown: the `grid_step` key, else `[prediction]`, else `at`.
fn step_span(raw: &RawProject, at: Range<usize>) -> Range<usize> {
    let p = raw.prediction.as_ref();
    p.and_then(|p| p.get_ref().grid_step.as_ref().map(|g| g.span()))
        .or(p.map(|p| p.span()))
        .unwrap_or(at)
}

/// The prediction grid's size, counted as [`Site::floor_grid`] builds it, within
/// [`crate::limits`]: points per floor (at most and at least), in all, and
/// point–transmitter pairs per floor and per service. Each problem names the step that
/// would fit; a limit whose step is no larger than one already named is not repeated
/// (that step fits it too).
fn grid_limits(
    v: &mut V<'_>,
    raw: &RawProject,
    p: &Prediction,
    units: Units,
    floors: &[Floor],
    transmitters: &[Transmitter],
) {
    let floors: Vec<(&Floor, Range<usize>)> = floors
        .iter()
        .filter(|f| f.outline.len() >= 3 && rfsite_geometry::polygon_area(&f.outline) > 0.0)
        .filter_map(|f| Some((f, outline_span(raw, &f.id)?)))
        .collect();
    let Some(first) = floors.first().map(|(_, s)| s.clone()) else {
        return;
    };
    let mut g = GridCheck {
        step: p.grid_step_m,
        units,
        named: 0.0,
    };
    for (f, span) in &floors {
        let n = grid_points(&f.outline, g.step);
        if n > MAX_POINTS_PER_FLOOR {
            let (lo, hi) = rfsite_geometry::polygon_bbox(&f.outline);
            let what = format!(
                "floor `{}` would have {} prediction points at {} (its outline's bounding box is {} × {}); at most {} per floor",
                f.id,
                thousands(n),
                g.step_text(),
                g.m(hi.x - lo.x),
                g.m(hi.y - lo.y),
                thousands(MAX_POINTS_PER_FLOOR)
            );
            let fit = |s: f64| grid_points(&f.outline, s);
            g.over(
                v,
                span.clone(),
                what,
                MAX_POINTS_PER_FLOOR,
                fit,
                "raise `[prediction] grid_step`, or split the floor into several site projects",
            );
        } else {
            let at = if raw_step_given(raw) {
                step_span(raw, first.clone())
            } else {
                span.clone()
            };
            // Beyond the polygon-test limit, counting is the work refused below.
            let tests = n.saturating_mul(f.outline.len() as u64);
            if tests <= MAX_POLYGON_TESTS_PER_FLOOR {
                too_few_points(v, f, g.step, units, at);
            }
        }
        polygon_tests(v, &mut g, f, span.clone());
    }
    let total = |s: f64| -> u64 {
        floors
            .iter()
            .map(|(f, _)| grid_points(&f.outline, s))
            .fold(0u64, u64::saturating_add)
    };
    let n = total(g.step);
    if n > MAX_POINTS {
        let what = format!(
            "the {} floors would have {} prediction points at {}; at most {} in all",
            floors.len(),
            thousands(n),
            g.step_text(),
            thousands(MAX_POINTS)
        );
        g.over(
            v,
            step_span(raw, first),
            what,
            MAX_POINTS,
            total,
            "raise `[prediction] grid_step`, or split the site into several site projects",
        );
    }
    service_pairs(v, raw, &mut g, &floors, transmitters);
}

/// The grid step checked, and the largest step an error has named so far.
struct GridCheck {
    step: f64,
    units: Units,
    named: f64,
}

impl GridCheck {
    fn m(&self, x: f64) -> String {
        format!(
            "{} {}",
            round_up_cm(self.units.from_m(x)),
            self.units.label()
        )
    }
    fn step_text(&self) -> String {
        format!(
            "grid_step {} {}",
            number(self.units.from_m(self.step)),
            self.units.label()
        )
    }
    /// Reports `what` (a count beyond `limit`) with the step at which `count` fits,
    /// unless a step already named fits it.
    fn over(
        &mut self,
        v: &mut V<'_>,
        span: Range<usize>,
        what: String,
        limit: u64,
        count: impl Fn(f64) -> u64,
        hint: &str,
    ) {
        let needed = smallest_step(limit, self.step, &count);
        // The count falls as the step grows: a step already named, if larger, fits.
        if needed.is_some_and(|s| self.named >= s) {
            return;
        }
        let needs = match needed {
            Some(s) => format!("needs `grid_step` of at least {}", self.m(s)),
            None => "no grid step fits".into(),
        };
        self.named = self.named.max(needed.unwrap_or(f64::INFINITY));
        v.error(span, format!("{what}: {needs}"), Some(hint.to_string()));
    }
}

/// Point-in-polygon work on a floor: its points × the vertices of its outline and zones.
fn polygon_tests(v: &mut V<'_>, g: &mut GridCheck, f: &Floor, span: Range<usize>) {
    let vertices = f.outline.len() + f.zones.iter().map(|z| z.polygon.len()).sum::<usize>();
    let vertices = vertices as u64;
    let tests = |s: f64| grid_points(&f.outline, s).saturating_mul(vertices);
    let n = tests(g.step);
    if n > MAX_POLYGON_TESTS_PER_FLOOR {
        let what = format!(
            "floor `{}`: {} prediction points at {} × {vertices} vertices of its outline and zones make {} point-in-polygon tests; at most {}",
            f.id,
            thousands(n / vertices),
            g.step_text(),
            thousands(n),
            thousands(MAX_POLYGON_TESTS_PER_FLOOR)
        );
        let hint =
            "raise `[prediction] grid_step`, or draw the outline and zones with fewer points";
        g.over(v, span, what, MAX_POLYGON_TESTS_PER_FLOOR, tests, hint);
    }
}

fn raw_step_given(raw: &RawProject) -> bool {
    raw.prediction
        .as_ref()
        .is_some_and(|p| p.get_ref().grid_step.is_some())
}

/// The span of a floor's `outline` (by floor id).
fn outline_span(raw: &RawProject, id: &str) -> Option<Range<usize>> {
    raw.floors
        .iter()
        .find(|r| r.get_ref().id.as_ref().map(|i| i.get_ref().as_str()) == Some(id))
        .and_then(|r| r.get_ref().outline.as_ref().map(|o| o.span()))
}

/// A floor with fewer than [`MIN_POINTS_PER_FLOOR`] grid points inside its outline, with
/// the step (rounded down) that gives it enough.
fn too_few_points(v: &mut V<'_>, f: &Floor, step: f64, units: Units, span: Range<usize>) {
    let enough = MIN_POINTS_PER_FLOOR;
    let n = points_inside(&f.outline, step, enough);
    if n >= enough {
        return;
    }
    let works = |s: f64| points_inside(&f.outline, s, enough) >= enough;
    // The search for a step that works tests at most 10^8 vertices per try.
    let affordable =
        |s: f64| grid_points(&f.outline, s).saturating_mul(f.outline.len() as u64) <= 100_000_000;
    // Halve until it works (or a try would cost too much) ...
    let mut ok = step;
    let found = loop {
        ok /= 2.0;
        if !affordable(ok) {
            break false;
        }
        if works(ok) {
            break true;
        }
    };
    let hint = if found {
        // ... then close in between a step that works and one that does not.
        let mut bad = ok * 2.0;
        for _ in 0..20 {
            let mid = 0.5 * (ok + bad);
            if works(mid) {
                ok = mid;
            } else {
                bad = mid;
            }
        }
        let shown = round_down_cm(units.from_m(ok));
        let shown = if works(shown * units.to_m()) {
            shown
        } else {
            units.from_m(ok)
        };
        format!(
            "set `[prediction] grid_step` to {shown} {} or less",
            units.label()
        )
    } else {
        "the outline is too small or too thin for a prediction grid: check its points and units"
            .into()
    };
    v.error(
        span,
        format!(
            "floor `{}` gets {n} prediction point{} inside its outline at grid_step {} {}; at least {enough} are needed to grade it",
            f.id,
            if n == 1 { "" } else { "s" },
            number(units.from_m(step)),
            units.label()
        ),
        Some(hint),
    );
}

/// Point–transmitter pairs of each service, per floor and in all.
fn service_pairs(
    v: &mut V<'_>,
    raw: &RawProject,
    g: &mut GridCheck,
    floors: &[(&Floor, Range<usize>)],
    transmitters: &[Transmitter],
) {
    let mut per_service: BTreeMap<&str, u64> = BTreeMap::new();
    for t in transmitters {
        *per_service.entry(t.service.as_str()).or_default() += 1;
    }
    for (sid, k) in per_service {
        for (f, span) in floors {
            let on_floor = |s: f64| grid_points(&f.outline, s).saturating_mul(k);
            let n = on_floor(g.step);
            if n > MAX_PAIRS_PER_FLOOR {
                let what = format!(
                    "floor `{}`: {} prediction points at {} × {k} transmitters of service `{sid}` make {} point–transmitter pairs on one floor; at most {}",
                    f.id,
                    thousands(n / k),
                    g.step_text(),
                    thousands(n),
                    thousands(MAX_PAIRS_PER_FLOOR)
                );
                g.over(v, span.clone(), what, MAX_PAIRS_PER_FLOOR, on_floor, "the prediction holds a level per transmitter at every point of a floor: raise `[prediction] grid_step`, use fewer transmitters, or split the site");
            }
        }
        let pairs = |s: f64| -> u64 {
            floors
                .iter()
                .map(|(f, _)| grid_points(&f.outline, s).saturating_mul(k))
                .fold(0u64, u64::saturating_add)
        };
        let n = pairs(g.step);
        if n > MAX_PAIRS_PER_SERVICE {
            let span = raw
                .services
                .iter()
                .find_map(|s| s.get_ref().id.as_ref().filter(|i| i.get_ref() == sid))
                .map(|i| i.span())
                .unwrap_or(0..1);
            let what = format!(
                "service `{sid}`: {k} transmitters × {} prediction points at {} make {} point–transmitter pairs; at most {}",
                thousands(n / k),
                g.step_text(),
                thousands(n),
                thousands(MAX_PAIRS_PER_SERVICE)
            );
            g.over(v, span, what, MAX_PAIRS_PER_SERVICE, pairs, "the prediction's time grows with the pairs: raise `[prediction] grid_step`, use fewer transmitters, or split the site");
        }
    }
}

/// A donor's elevation must lie in −90…90° (ITU-R P.2109 takes no other) and its plan
/// direction in 0…360°.
fn donor_angles(v: &mut V<'_>, d: &RawDonor, what: &str) {
    if let Some(e) = &d.elevation_deg {
        if !(-90.0..=90.0).contains(e.get_ref()) {
            v.error(
                e.span(),
                format!("{what}: `elevation_deg` {} is not an elevation angle", e.get_ref()),
                Some("give the angle above the horizon at the facade, between -90 and 90 degrees (0 for a level path)".into()),
            );
        }
    }
    if let Some(a) = &d.direction_deg {
        if !(0.0..=360.0).contains(a.get_ref()) {
            v.error(
                a.span(),
                format!("{what}: `direction_deg` {} is outside 0 to 360", a.get_ref()),
                Some("give the plan direction the signal comes from, 0 to 360 degrees counter-clockwise from +x".into()),
            );
        }
    }
}

fn toml_error(v: &mut V<'_>, e: &toml::de::Error) {
    let msg = e.message().trim().to_string();
    let hint = if msg.contains("invalid type: string") && msg.contains("expected f64") {
        Some("write the number without quotes".to_string())
    } else if msg.contains("invalid type") {
        Some("check the value's type against the site format in README.md".to_string())
    } else if msg.contains("duplicate key") {
        Some("each key appears once per table".to_string())
    } else {
        Some("check quotes, brackets and `=` on this line; strings need double quotes".to_string())
    };
    let span = e.span().unwrap_or(0..1);
    v.error(span, msg, hint);
}

fn path_segments(p: &serde_ignored::Path<'_>) -> Vec<String> {
    use serde_ignored::Path;
    let mut out = Vec::new();
    let mut cur = p;
    loop {
        match cur {
            Path::Root => break,
            Path::Seq { parent, index } => {
                out.push(index.to_string());
                cur = parent;
            }
            Path::Map { parent, key } => {
                out.push(key.clone());
                cur = parent;
            }
            Path::Some { parent }
            | Path::NewtypeStruct { parent }
            | Path::NewtypeVariant { parent } => cur = parent,
        }
    }
    out.reverse();
    out
}

fn report_unknown_keys(v: &mut V<'_>, unknown: &[Vec<String>]) {
    if unknown.is_empty() {
        return;
    }
    let Ok(doc) = toml::de::DeTable::parse(&v.file.text) else {
        return;
    };
    for path in unknown {
        // Spanned<T> wrappers show up as synthetic keys; skip them.
        let path: Vec<&String> = path.iter().filter(|s| !s.starts_with("$__")).collect();
        if path.is_empty() {
            continue;
        }
        let mut table = doc.get_ref();
        let mut span = 0..1;
        let mut value: Option<&toml::Spanned<toml::de::DeValue<'_>>> = None;
        for seg in &path {
            let next = if let Some(val) = value {
                match val.get_ref() {
                    toml::de::DeValue::Array(a) => seg.parse::<usize>().ok().and_then(|i| a.get(i)),
                    toml::de::DeValue::Table(t) => {
                        table = t;
                        find_key(table, seg, &mut span)
                    }
                    _ => None,
                }
            } else {
                find_key(table, seg, &mut span)
            };
            match next {
                Some(n) => {
                    if let toml::de::DeValue::Table(t) = n.get_ref() {
                        table = t;
                    }
                    value = Some(n);
                }
                None => break,
            }
        }
        let last = path.last().map(|s| s.as_str()).unwrap_or("");
        let parent: Vec<&str> = path[..path.len() - 1].iter().map(|s| s.as_str()).collect();
        let hint = match crate::keys::known_keys(&parent) {
            Some(known) => unknown_name_hint("key", last, known.iter().copied()),
            None => format!("check the spelling of `{last}`; README.md lists every key"),
        };
        v.warn(
            span,
            format!(
                "unknown key `{}` is ignored",
                path.iter().map(|s| shown(s)).collect::<Vec<_>>().join(".")
            ),
            Some(hint),
        );
    }
}

fn find_key<'t, 'i>(
    table: &'t toml::de::DeTable<'i>,
    key: &str,
    span: &mut Range<usize>,
) -> Option<&'t toml::Spanned<toml::de::DeValue<'i>>> {
    for (k, val) in table.iter() {
        if k.get_ref().as_ref() == key {
            *span = k.span();
            return Some(val);
        }
    }
    None
}

fn load_inner(v: &mut V<'_>, library: &MaterialLibrary) -> Option<Site> {
    let raw = parse_raw(v)?;
    plausible_numbers(v, &raw);
    count_limits(v, &raw);

    // ---- [site] and units first: every length depends on them.
    let (meta, units, north_deg) = meta::site_meta(v, &raw);

    // ---- [prediction]
    let prediction = meta::prediction(v, &raw);

    let revisions = raw
        .revisions
        .iter()
        .map(|r| {
            let r = r.get_ref();
            Revision {
                revision: v.text(&r.revision),
                date: v.text(&r.date),
                note: v.text(&r.note),
            }
        })
        .collect();

    // ---- materials: library, then the site's own.
    let mut lib = materials::site_materials(v, &raw, library);

    // ---- floors
    let mut used_materials: BTreeSet<String> = BTreeSet::new();
    let mut floors = floors::floors(v, &raw, &lib, &mut used_materials);
    storey_warnings(v, &raw.floors, &floors);
    let floor_names: Vec<String> = floors.iter().map(|f| f.id.clone()).collect();

    // ---- openings grouped by wall id (opening and donor ids are optional)
    let mut seen = BTreeSet::new();
    for i in raw.openings.iter().filter_map(|o| o.get_ref().id.as_ref()) {
        v.unique(&mut seen, i, "opening");
    }
    let mut seen = BTreeSet::new();
    for i in raw.donors.iter().filter_map(|d| d.get_ref().id.as_ref()) {
        v.unique(&mut seen, i, "donor");
    }
    let known_walls = walls::Known {
        lib: &lib,
        units,
        floor_names: &floor_names,
    };
    walls::walls(v, &raw, &known_walls, &mut floors, &mut used_materials);

    // ---- zones
    floors::zones(v, &raw, &floor_names, &mut floors);

    // ---- services
    let services = services::services(v, &raw);
    let svc_names: Vec<String> = services.iter().map(|s| s.id.clone()).collect();

    let names = Names {
        floors: &floor_names,
        services: &svc_names,
    };

    // ---- transmitters
    let mut transmitters = Vec::new();
    let mut tx_ids = BTreeSet::new();
    for rt in &raw.transmitters {
        if let Some(idv) = &rt.get_ref().id {
            v.unique(&mut tx_ids, idv, "transmitter");
        }
        transmitters.extend(transmitter(v, rt, &floors, &names));
    }

    // ---- donors
    let donors = signals::donors(v, &raw, &names);

    // ---- surveys
    let surveys = signals::surveys(v, &raw, &names, units);

    grid_limits(v, &raw, &prediction, units, &floors, &transmitters);

    // ---- probes, and their overrides of the library
    let (probes, probe_spans) = signals::probes(v, &raw, &lib);
    signals::apply_probes(v, &mut lib, &probes, &probe_spans, &floors, &services);

    // ---- what-if options
    let known = whatif::Known {
        names: Names {
            floors: &floor_names,
            services: &svc_names,
        },
        floors: &floors,
        transmitters: &transmitters,
        library: &lib,
    };
    let what_ifs = whatif::what_ifs(v, &raw.what_if, &known);

    // ---- plugin tables
    let plugin_options = plugin_tables(v, &raw);

    floors.sort_by(|a, b| {
        a.elevation_m
            .total_cmp(&b.elevation_m)
            .then(a.id.cmp(&b.id))
    });
    let load_warnings = v
        .diags
        .items
        .iter()
        .filter(|d| !d.is_error())
        .map(|d| format!("{}:{}:{}: {}", d.file, d.line, d.column, d.message))
        .collect();
    Some(Site {
        meta,
        units,
        north_deg,
        prediction,
        revisions,
        floors,
        services,
        transmitters,
        donors,
        surveys,
        probes,
        materials: lib,
        materials_used: used_materials.into_iter().collect(),
        plugin_options,
        load_warnings,
        what_ifs,
    })
}

/// `[plugins.<id>]` tables, kept as TOML for each plugin's own check.
fn plugin_tables(v: &mut V<'_>, raw: &RawProject) -> BTreeMap<String, toml::Table> {
    let mut plugin_options = BTreeMap::new();
    if let Some(p) = &raw.plugins {
        for (k, val) in p.get_ref() {
            match val.as_table() {
                Some(t) => {
                    plugin_options.insert(k.clone(), t.clone());
                }
                None => v.error(
                    p.span(),
                    format!("`plugins.{k}` must be a table"),
                    Some(format!("write `[plugins.{k}]` with its options below")),
                ),
            }
        }
    }
    plugin_options
}

fn check_material(v: &mut V<'_>, lib: &MaterialLibrary, m: &S<String>) -> bool {
    if lib.get(m.get_ref()).is_some() {
        return true;
    }
    let hint = unknown_name_hint("material", m.get_ref(), lib.ids());
    v.error(
        m.span(),
        format!("unknown material `{}`", m.get_ref()),
        Some(hint),
    );
    false
}

fn table_points(v: &mut V<'_>, t: &S<Vec<Vec<f64>>>, field: &str) -> Option<Vec<(f64, f64)>> {
    let mut pts = Vec::new();
    for p in t.get_ref() {
        if p.len() != 2 || p[0] <= 0.0 || p[1] < 0.0 {
            v.error(
                t.span(),
                format!("`{field}` is a list of `[freq_mhz, dB]` pairs with positive frequency and loss"),
                Some(format!("e.g. `{field} = [[900, 4.0], [2400, 5.0]]`")),
            );
            return None;
        }
        pts.push((p[0], p[1]));
    }
    if pts.is_empty() || pts.windows(2).any(|w| w[1].0 <= w[0].0) {
        v.error(
            t.span(),
            format!("`{field}` needs at least one point, frequencies ascending"),
            None,
        );
        return None;
    }
    Some(pts)
}

fn is_iso_date(s: &str) -> bool {
    let b = s.as_bytes();
    if b.len() != 10 || b[4] != b'-' || b[7] != b'-' {
        return false;
    }
    let num = |r: Range<usize>| s.get(r).and_then(|x| x.parse::<u32>().ok());
    matches!((num(0..4), num(5..7), num(8..10)), (Some(_), Some(m), Some(d)) if (1..=12).contains(&m) && (1..=31).contains(&d))
}

/// Splits a polyline into wall parts, with opening intervals (arc length from the first
/// point) cut out and given their own material.
pub(crate) fn split_polyline(
    pts: &[Point2],
    intervals: &[(f64, f64, WallPart)],
    wall: &WallPart,
) -> Vec<WallPart> {
    let mut out = Vec::new();
    let mut s0 = 0.0;
    for w in pts.windows(2) {
        let (a, b) = (w[0], w[1]);
        let len = a.distance(b);
        if len <= 0.0 {
            continue;
        }
        let s1 = s0 + len;
        let mut cuts = vec![s0, s1];
        for (o0, o1, _) in intervals {
            for c in [*o0, *o1] {
                if c > s0 && c < s1 {
                    cuts.push(c);
                }
            }
        }
        cuts.sort_by(f64::total_cmp);
        cuts.dedup_by(|x, y| (*x - *y).abs() < 1e-9);
        for c in cuts.windows(2) {
            let (c0, c1) = (c[0], c[1]);
            let mid = 0.5 * (c0 + c1);
            let at = |s: f64| {
                let t = (s - s0) / len;
                Point2::new(a.x + t * (b.x - a.x), a.y + t * (b.y - a.y))
            };
            let template = intervals
                .iter()
                .find(|(o0, o1, _)| mid > *o0 && mid < *o1)
                .map(|(_, _, p)| p)
                .unwrap_or(wall);
            let mut part = template.clone();
            part.segment = Segment {
                a: at(c0),
                b: at(c1),
            };
            out.push(part);
        }
        s0 = s1;
    }
    out
}

/// A service's receiver bandwidth, noise figure and noise floor (given, or thermal noise
/// over the bandwidth plus the noise figure: `rfsite_physics::noise`).
fn receiver_floor(v: &mut V<'_>, s: &RawService, life_safety: bool) -> (f64, f64, f64) {
    let mut bw = default_bandwidth_khz(life_safety);
    if let Some(b) = &s.bandwidth_khz {
        let x = *b.get_ref();
        if x.is_finite() && x > 0.0 && x <= 1e6 {
            bw = x;
        } else {
            v.error(
                b.span(),
                format!("`bandwidth_khz` must lie between 0 and 1 000 000 kHz (got {x})"),
                Some("the receiver bandwidth in kHz, e.g. `bandwidth_khz = 12.5` for a narrowband channel".into()),
            );
        }
    }
    let mut nf = DEFAULT_NOISE_FIGURE_DB;
    if let Some(n) = &s.noise_figure_db {
        let x = *n.get_ref();
        if (0.0..=30.0).contains(&x) {
            nf = x;
        } else {
            v.error(
                n.span(),
                format!("`noise_figure_db` must lie between 0 and 30 dB (got {x})"),
                Some(
                    "the receiver noise figure from its data sheet, e.g. `noise_figure_db = 7.0`"
                        .into(),
                ),
            );
        }
    }
    let thermal = rfsite_physics::noise::noise_floor_dbm(bw * 1e3, nf).unwrap_or(-174.0);
    let mut floor = thermal;
    if let Some(f) = &s.receiver_floor_dbm {
        let x = *f.get_ref();
        if (-200.0..=0.0).contains(&x) {
            floor = x;
        } else {
            v.error(
                f.span(),
                format!("`receiver_floor_dbm` must lie between -200 and 0 dBm (got {x})"),
                Some(format!("the level below which the receiver has no service; leave it out for thermal noise + noise figure ({thermal:.1} dBm here)")),
            );
        }
    }
    (bw, nf, floor)
}
