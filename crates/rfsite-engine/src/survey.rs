//! Survey CSV import, streamed: every row is either accepted or rejected with its file,
//! line and reason — none is dropped silently.

use std::io::{BufRead, Read};

use rfsite_geometry::Point2;
use rfsite_model::locate::Seg;
use rfsite_model::{Diagnostic, Diagnostics, Severity, Site, SourceFile};
use rfsite_plugin::{Measurement, RejectedRow, SurveyData};
use sha2::{Digest, Sha256};

use crate::world::{display_path, FileProblem, World, SURVEY_FILE};

/// Levels a survey receiver can plausibly report, dBm: below about -150 dBm no field
/// instrument has a usable noise floor, above +30 dBm (1 W into the receiver) it would be
/// damaged or in saturation next to a transmitting antenna (common practice). Readings
/// outside are counted as `suspicious-level` rows, never graded.
pub const PLAUSIBLE_DBM: (f64, f64) = (-150.0, 30.0);

/// Column roles and their default header names.
pub const ROLES: &[(&str, &str)] = &[
    ("x", "x"),
    ("y", "y"),
    ("floor", "floor"),
    ("service", "service"),
    ("freq_mhz", "freq_mhz"),
    ("level_dbm", "level_dbm"),
];

/// Survey rows read per site at most (all files together): 200 000. The report draws every
/// point, and a site beyond this is better split (README, "Limits").
pub const MAX_ROWS_PER_SITE: usize = 200_000;

/// Longest survey line read, bytes; a longer line is one `malformed` row.
pub const MAX_LINE_BYTES: usize = 64 << 10;

struct HashingReader<R> {
    inner: R,
    hasher: Sha256,
    bytes: u64,
}

impl<R: Read> Read for HashingReader<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.hasher.update(&buf[..n]);
        self.bytes += n as u64;
        Ok(n)
    }
}

/// The rows counted so far in a site, and the survey entry whose file crossed the limit.
#[derive(Default)]
struct RowCount {
    total: usize,
    crossed: Option<usize>,
}

/// Reads every survey file the site names. A file that cannot be read is an error at its
/// `file` key in `source`; so is a site whose files hold more than [`MAX_ROWS_PER_SITE`] rows.
pub fn read_all(world: &mut World, site: &Site, source: &SourceFile) -> (SurveyData, Diagnostics) {
    let mut data = SurveyData::default();
    let mut diags = Diagnostics::default();
    let mut count = RowCount::default();
    // Validation succeeded, so `site.surveys` holds every `[[surveys]]` entry, in order.
    for (i, s) in site.surveys.iter().enumerate() {
        let key = [Seg::Key("surveys"), Seg::Index(i), Seg::Key("file")];
        let before = count.total;
        if let Err(p) = read_file(world, s, site, &mut data, &mut diags, &mut count) {
            diags.push(crate::at_key(source, &key, p.message, p.hint));
        }
        if before <= MAX_ROWS_PER_SITE && count.total > MAX_ROWS_PER_SITE {
            count.crossed = Some(i);
        }
    }
    if let Some(i) = count.crossed {
        diags.push(crate::at_key(
            source,
            &[Seg::Key("surveys"), Seg::Index(i), Seg::Key("file")],
            format!(
                "the site's survey files hold {} data rows; a site may have at most {MAX_ROWS_PER_SITE} (`{}` crosses the limit)",
                count.total, site.surveys[i].file
            ),
            Some("split the building into several sites (see `rfsite portfolio`), or thin the walk test to fewer readings".into()),
        ));
    }
    (data, diags)
}

/// Streams one survey file through the reader, hashing it.
fn read_file(
    world: &mut World,
    s: &rfsite_model::Survey,
    site: &Site,
    data: &mut SurveyData,
    diags: &mut Diagnostics,
    count: &mut RowCount,
) -> Result<(), FileProblem> {
    let (file, _) = world.open_named(&s.file, SURVEY_FILE)?;
    let shown = world
        .resolve(&s.file)
        .map(|p| display_path(&p))
        .unwrap_or_else(|_| s.file.clone());
    let mut hr = HashingReader {
        inner: file.take(SURVEY_FILE.bytes + 1),
        hasher: Sha256::new(),
        bytes: 0,
    };
    let r = Rows {
        name: &s.file,
        shown: &shown,
        s,
        site,
    };
    let read = r.read(std::io::BufReader::new(&mut hr), data, diags, count);
    // Drain whatever the reader did not consume, so the hash covers the file.
    let drained = std::io::copy(&mut hr, &mut std::io::sink());
    if hr.bytes > SURVEY_FILE.bytes {
        return Err(FileProblem::too_big(&s.file, hr.bytes, SURVEY_FILE));
    }
    let rows = drained.and(read).map_err(|e| FileProblem {
        message: format!("survey file `{}` could not be read to its end: {e}", s.file),
        hint: None,
        io: true,
    })?;
    let h = hr.hasher.finalize();
    world.record(&s.file, h.iter().map(|b| format!("{b:02x}")).collect());
    data.rows_per_file.push((s.file.clone(), rows));
    Ok(())
}

/// Reads one line into `buf` without its line ending, at most `max` bytes: a longer line is
/// consumed to its end and reported as `Some(false)`. `None` at the end of the input.
fn read_line<R: BufRead>(
    r: &mut R,
    buf: &mut Vec<u8>,
    max: usize,
) -> std::io::Result<Option<bool>> {
    buf.clear();
    let n = r.by_ref().take(max as u64 + 1).read_until(b'\n', buf)?;
    if n == 0 {
        return Ok(None);
    }
    if buf.last() == Some(&b'\n') {
        buf.pop();
    } else if buf.len() > max {
        r.skip_until(b'\n')?;
        return Ok(Some(false));
    }
    if buf.last() == Some(&b'\r') {
        buf.pop();
    }
    Ok(Some(true))
}

/// Splits one CSV line into trimmed fields: separated by commas, a field may be quoted with
/// `"` (a doubled `""` inside stands for one quote mark). A quoted field cannot span lines:
/// an unclosed quote is an error naming its column.
pub fn split_line(line: &str) -> Result<Vec<String>, String> {
    let mut fields = Vec::new();
    let mut cur = String::new();
    let mut open: Option<usize> = None;
    let mut chars = line.char_indices().peekable();
    while let Some((i, c)) = chars.next() {
        match (open.is_some(), c) {
            (true, '"') if chars.peek().map(|x| x.1) == Some('"') => {
                cur.push('"');
                chars.next();
            }
            (true, '"') => open = None,
            (true, _) => cur.push(c),
            (false, '"') if cur.trim().is_empty() => {
                cur.clear();
                open = Some(i);
            }
            (false, ',') => fields.push(std::mem::take(&mut cur).trim().to_string()),
            (false, _) => cur.push(c),
        }
    }
    if let Some(i) = open {
        return Err(format!(
            "the quote mark at column {} is not closed on this line",
            line[..i].chars().count() + 1
        ));
    }
    fields.push(cur.trim().to_string());
    Ok(fields)
}

/// Why a row is rejected: the reason class and the detail.
type Rejection = (&'static str, String);

/// Column index of each role in a header.
type Columns = std::collections::BTreeMap<&'static str, Option<usize>>;

/// The reader of one survey file.
struct Rows<'a> {
    name: &'a str,
    shown: &'a str,
    s: &'a rfsite_model::Survey,
    site: &'a Site,
}

/// A line of a survey file: its text, or why it is not text.
enum Line {
    Text(String),
    TooLong,
    NotUtf8(usize),
}

impl Rows<'_> {
    /// Reads the header, then every data row: each is accepted or rejected with its line.
    /// Lines before the header that are blank or start with `#` are comments; after the
    /// header a blank line is skipped, a `#` line is a row rejected as `comment`. Rows
    /// beyond the site's limit are only counted. Returns the rows of this file.
    fn read<R: BufRead>(
        &self,
        mut r: R,
        data: &mut SurveyData,
        diags: &mut Diagnostics,
        count: &mut RowCount,
    ) -> std::io::Result<usize> {
        let mut buf = Vec::new();
        let mut no = 0;
        let mut next = |r: &mut R| -> std::io::Result<Option<(usize, Line)>> {
            let fits = read_line(r, &mut buf, MAX_LINE_BYTES)?;
            no += 1;
            Ok(fits.map(|fits| (no, line_of(&buf, fits, no == 1))))
        };
        let header = loop {
            match next(&mut r)? {
                None => {
                    diags.push(self.at_line(0, "survey file has no header line (it holds only comments or blank lines)".into(), None));
                    return Ok(0);
                }
                Some((_, Line::Text(t)))
                    if t.trim().is_empty() || t.trim_start().starts_with('#') => {}
                Some(h) => break h,
            }
        };
        let Some(idx) = self.header(header, diags) else {
            return Ok(0);
        };
        let mut rows = 0;
        while let Some((no, line)) = next(&mut r)? {
            if matches!(&line, Line::Text(t) if t.trim().is_empty()) {
                continue;
            }
            rows += 1;
            count.total += 1;
            if count.total <= MAX_ROWS_PER_SITE {
                self.row(no, line, &idx, data);
            }
        }
        Ok(rows)
    }

    /// The header's columns, or `None` after reporting what is wrong at the header's line.
    fn header(&self, (no, line): (usize, Line), diags: &mut Diagnostics) -> Option<Columns> {
        let text = match line {
            Line::Text(t) => t,
            Line::TooLong => {
                diags.push(self.at_line(
                    no,
                    format!("survey header is longer than {MAX_LINE_BYTES} bytes"),
                    None,
                ));
                return None;
            }
            Line::NotUtf8(col) => {
                diags.push(self.at_line(
                    no,
                    format!("survey header is not UTF-8 text (byte {col})"),
                    Some("save the file as UTF-8".into()),
                ));
                return None;
            }
        };
        let headers = match split_line(&text) {
            Ok(h) => h,
            Err(e) => {
                diags.push(self.at_text(
                    no,
                    &text,
                    format!("survey header cannot be read: {e}"),
                    None,
                ));
                return None;
            }
        };
        let s = self.s;
        let col = |role: &str, default: &str| -> Option<usize> {
            let want = s.columns.get(role).map(String::as_str).unwrap_or(default);
            headers.iter().position(|h| h.eq_ignore_ascii_case(want))
        };
        let idx: Columns = ROLES
            .iter()
            .map(|(role, default)| (*role, col(role, default)))
            .collect();
        let missing = missing_columns(s, &idx);
        if missing.is_empty() {
            return Some(idx);
        }
        diags.push(self.at_text(
            no,
            &text,
            format!("survey header lacks column(s) {}; it has: {}", missing.join(", "), shorten(&headers.join(", "))),
            Some("name the columns in the `[[surveys]]` entry, e.g. `columns = { x = \"east_m\", level_dbm = \"rsrp\" }`, or set `floor`/`service` for the whole file".into()),
        ));
        None
    }

    /// An error at a line of the survey file (0: the whole file).
    fn at_line(&self, no: usize, message: String, hint: Option<String>) -> Diagnostic {
        let mut d = Diagnostic::whole_file(Severity::Error, self.shown, message, hint);
        d.line = no.max(1);
        d
    }

    /// An error at a line of the survey file, showing the line.
    fn at_text(&self, no: usize, text: &str, message: String, hint: Option<String>) -> Diagnostic {
        let mut d = self.at_line(no, message, hint);
        d.source_line = text.chars().take(200).collect();
        d.width = d.source_line.chars().count().max(1);
        d
    }

    /// Accepts or rejects one data row.
    fn row(&self, line: usize, text: Line, idx: &Columns, data: &mut SurveyData) {
        match self.judge(text, idx) {
            Ok(m) => data.points.push(Measurement {
                file: self.name.into(),
                line,
                ..m
            }),
            Err((reason, detail)) => data.rejected.push(RejectedRow {
                file: self.name.into(),
                line,
                reason: reason.into(),
                detail,
            }),
        }
    }

    /// A measurement from one data row, or the reason class and detail of its rejection.
    fn judge(&self, text: Line, idx: &Columns) -> Result<Measurement, Rejection> {
        let text = match text {
            Line::Text(t) => t,
            Line::TooLong => {
                return Err((
                    "malformed",
                    format!("the line is longer than {MAX_LINE_BYTES} bytes"),
                ))
            }
            Line::NotUtf8(col) => {
                return Err((
                    "malformed",
                    format!("not UTF-8 text (byte {col} of the line)"),
                ))
            }
        };
        if text.trim_start().starts_with('#') {
            return Err((
                "comment",
                "a `#` line among the data rows is not read; move comments above the header".into(),
            ));
        }
        let rec = split_line(&text).map_err(|e| ("malformed", e))?;
        let get = |role: &str| {
            idx[role]
                .and_then(|i| rec.get(i))
                .map(String::as_str)
                .filter(|v| !v.is_empty())
        };
        let num = |role: &str| -> Result<f64, Rejection> {
            match get(role) {
                None => Err(("missing-value", format!("no value for `{role}`"))),
                Some(v) => v
                    .parse::<f64>()
                    .ok()
                    .filter(|x| x.is_finite())
                    .ok_or(("not-a-number", format!("`{role}` = `{v}` is not a number"))),
            }
        };
        let to_m = self.s.position_units.to_m();
        let (x, y, level) = (num("x")? * to_m, num("y")? * to_m, num("level_dbm")?);
        let floor = get("floor")
            .map(str::to_string)
            .or_else(|| self.s.floor.clone())
            .ok_or(("missing-value", "no floor".to_string()))?;
        let fl = self.site.floor(&floor).ok_or((
            "unknown-floor",
            format!("floor `{floor}` is not in the site"),
        ))?;
        let service = self.service(get("service"), &num)?;
        if !(PLAUSIBLE_DBM.0..=PLAUSIBLE_DBM.1).contains(&level) {
            return Err((
                "suspicious-level",
                format!(
                    "{level} dBm is outside the plausible instrument range {} to {} dBm (a no-signal code, a unit mix-up or a logging error)",
                    PLAUSIBLE_DBM.0, PLAUSIBLE_DBM.1
                ),
            ));
        }
        if !rfsite_geometry::point_in_polygon(Point2::new(x, y), &fl.outline) {
            return Err((
                "off-plan",
                format!("({:.2}, {:.2}) m lies outside floor `{floor}`", x, y),
            ));
        }
        Ok(Measurement {
            floor,
            service,
            x_m: x,
            y_m: y,
            level_dbm: level,
            file: String::new(),
            line: 0,
        })
    }

    /// The row's service: its own column, the entry's `service`, or the one at its
    /// `freq_mhz` (within 0.5 MHz).
    fn service(
        &self,
        given: Option<&str>,
        num: &dyn Fn(&str) -> Result<f64, Rejection>,
    ) -> Result<String, Rejection> {
        let service = match (given, &self.s.service) {
            (Some(sv), _) => sv.to_string(),
            (None, Some(sv)) => sv.clone(),
            (None, None) => {
                let f = num("freq_mhz")?;
                self.site
                    .services
                    .iter()
                    .find(|x| (x.freq_mhz - f).abs() <= 0.5)
                    .map(|x| x.id.clone())
                    .ok_or(("unknown-service", format!("no service at {f} MHz")))?
            }
        };
        if self.site.service(&service).is_none() {
            return Err((
                "unknown-service",
                format!("service `{service}` is not in the site"),
            ));
        }
        Ok(service)
    }
}

/// At most 200 characters of `s`, with `...` when cut.
fn shorten(s: &str) -> String {
    match s.char_indices().nth(200) {
        Some((i, _)) => format!("{}...", &s[..i]),
        None => s.to_string(),
    }
}

/// A line's text, with a UTF-8 byte-order mark removed from the first line.
fn line_of(buf: &[u8], fits: bool, first: bool) -> Line {
    if !fits {
        return Line::TooLong;
    }
    match std::str::from_utf8(buf) {
        Ok(t) if first => Line::Text(t.strip_prefix('\u{feff}').unwrap_or(t).to_string()),
        Ok(t) => Line::Text(t.to_string()),
        Err(e) => Line::NotUtf8(e.valid_up_to() + 1),
    }
}

/// The columns a survey's header must have but lacks, by the names the entry expects.
fn missing_columns(s: &rfsite_model::Survey, idx: &Columns) -> Vec<String> {
    let mut missing = Vec::new();
    for role in ["x", "y", "level_dbm"] {
        if idx[role].is_none() {
            missing.push(
                s.columns
                    .get(role)
                    .cloned()
                    .unwrap_or_else(|| role.to_string()),
            );
        }
    }
    if s.floor.is_none() && idx["floor"].is_none() {
        missing.push("floor".into());
    }
    if s.service.is_none() && idx["service"].is_none() && idx["freq_mhz"].is_none() {
        missing.push("service (or freq_mhz)".into());
    }
    missing
}
