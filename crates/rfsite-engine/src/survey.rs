//! Survey CSV import, streamed: every row is either accepted or rejected with its file,
//! line and reason — none is dropped silently.

use std::io::Read;

use rfsite_geometry::Point2;
use rfsite_model::{Diagnostic, Diagnostics, Severity, Site};
use rfsite_plugin::{Measurement, RejectedRow, SurveyData};
use sha2::{Digest, Sha256};

use crate::world::{display_path, World};

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

struct HashingReader<R> {
    inner: R,
    hasher: Sha256,
}

impl<R: Read> Read for HashingReader<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.hasher.update(&buf[..n]);
        Ok(n)
    }
}

/// Reads every survey file the site names.
pub fn read_all(world: &mut World, site: &Site) -> (SurveyData, Diagnostics) {
    let mut data = SurveyData::default();
    let mut diags = Diagnostics::default();
    for s in &site.surveys {
        let path = match world.resolve(&s.file) {
            Ok(p) => p,
            Err(e) => {
                diags.push(Diagnostic::whole_file(
                    Severity::Error,
                    &world.display_site_path(),
                    e,
                    None,
                ));
                continue;
            }
        };
        let file = match std::fs::File::open(&path) {
            Ok(f) => f,
            Err(e) => {
                diags.push(Diagnostic::whole_file(
                    Severity::Error,
                    &display_path(&path),
                    format!("survey file cannot be read: {e}"),
                    Some(format!(
                        "check `file = \"{}\"` in the `[[surveys]]` entry of {}",
                        s.file,
                        world.display_site_path()
                    )),
                ));
                continue;
            }
        };
        let mut hr = HashingReader {
            inner: std::io::BufReader::new(file),
            hasher: Sha256::new(),
        };
        let rows = read_one(
            &mut hr,
            &s.file,
            s,
            site,
            &mut data,
            &mut diags,
            &display_path(&path),
        );
        // Drain whatever the CSV reader did not consume, so the hash covers the file.
        let _ = std::io::copy(&mut hr, &mut std::io::sink());
        let h = hr.hasher.finalize();
        world.record(&s.file, h.iter().map(|b| format!("{b:02x}")).collect());
        data.rows_per_file.push((s.file.clone(), rows));
    }
    (data, diags)
}

#[allow(clippy::too_many_arguments)]
fn read_one<R: Read>(
    r: R,
    name: &str,
    s: &rfsite_model::Survey,
    site: &Site,
    data: &mut SurveyData,
    diags: &mut Diagnostics,
    shown: &str,
) -> usize {
    let mut rdr = csv::ReaderBuilder::new()
        .flexible(true)
        .trim(csv::Trim::All)
        .comment(Some(b'#'))
        .from_reader(r);
    let headers = match rdr.headers() {
        Ok(h) => h.clone(),
        Err(e) => {
            diags.push(Diagnostic::whole_file(
                Severity::Error,
                shown,
                format!("survey file has no readable header: {e}"),
                None,
            ));
            return 0;
        }
    };
    let col = |role: &str, default: &str| -> Option<usize> {
        let want = s.columns.get(role).map(String::as_str).unwrap_or(default);
        headers.iter().position(|h| h.eq_ignore_ascii_case(want))
    };
    let mut idx = std::collections::BTreeMap::new();
    for (role, default) in ROLES {
        idx.insert(*role, col(role, default));
    }
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
    if !missing.is_empty() {
        diags.push(Diagnostic::whole_file(
            Severity::Error,
            shown,
            format!("survey header lacks column(s) {}; it has: {}", missing.join(", "), headers.iter().collect::<Vec<_>>().join(", ")),
            Some("name the columns in the `[[surveys]]` entry, e.g. `columns = { x = \"east_m\", level_dbm = \"rsrp\" }`, or set `floor`/`service` for the whole file".into()),
        ));
        return 0;
    }
    let to_m = s.position_units.to_m();
    let mut rows = 0;
    let mut rec = csv::StringRecord::new();
    loop {
        let line = rdr.position().line() as usize;
        match rdr.read_record(&mut rec) {
            Ok(false) => break,
            Ok(true) => {}
            Err(e) => {
                rows += 1;
                data.rejected.push(RejectedRow {
                    file: name.into(),
                    line,
                    reason: "malformed".into(),
                    detail: e.to_string(),
                });
                continue;
            }
        }
        rows += 1;
        let line = rec.position().map(|p| p.line() as usize).unwrap_or(line);
        let reject = |data: &mut SurveyData, reason: &str, detail: String| {
            data.rejected.push(RejectedRow {
                file: name.into(),
                line,
                reason: reason.into(),
                detail,
            });
        };
        let get = |role: &str| idx[role].and_then(|i| rec.get(i)).filter(|v| !v.is_empty());
        let num = |role: &str| -> Result<f64, (String, String)> {
            match get(role) {
                None => Err(("missing-value".into(), format!("no value for `{role}`"))),
                Some(v) => v.parse::<f64>().ok().filter(|x| x.is_finite()).ok_or((
                    "not-a-number".into(),
                    format!("`{role}` = `{v}` is not a number"),
                )),
            }
        };
        let (x, y, level) = match (num("x"), num("y"), num("level_dbm")) {
            (Ok(x), Ok(y), Ok(l)) => (x * to_m, y * to_m, l),
            (a, b, c) => {
                let (reason, detail) = [a, b, c]
                    .into_iter()
                    .find_map(|r| r.err())
                    .unwrap_or_default();
                reject(data, &reason, detail);
                continue;
            }
        };
        let floor = match get("floor").map(str::to_string).or_else(|| s.floor.clone()) {
            Some(f) => f,
            None => {
                reject(data, "missing-value", "no floor".into());
                continue;
            }
        };
        let Some(fl) = site.floor(&floor) else {
            reject(
                data,
                "unknown-floor",
                format!("floor `{floor}` is not in the site"),
            );
            continue;
        };
        let service = if let Some(sv) = get("service") {
            sv.to_string()
        } else if let Some(sv) = &s.service {
            sv.clone()
        } else {
            match num("freq_mhz") {
                Ok(f) => match site.services.iter().find(|x| (x.freq_mhz - f).abs() <= 0.5) {
                    Some(x) => x.id.clone(),
                    None => {
                        reject(data, "unknown-service", format!("no service at {f} MHz"));
                        continue;
                    }
                },
                Err((reason, detail)) => {
                    reject(data, &reason, detail);
                    continue;
                }
            }
        };
        if site.service(&service).is_none() {
            reject(
                data,
                "unknown-service",
                format!("service `{service}` is not in the site"),
            );
            continue;
        }
        if !(PLAUSIBLE_DBM.0..=PLAUSIBLE_DBM.1).contains(&level) {
            reject(
                data,
                "suspicious-level",
                format!(
                    "{level} dBm is outside the plausible instrument range {} to {} dBm (a no-signal code, a unit mix-up or a logging error)",
                    PLAUSIBLE_DBM.0, PLAUSIBLE_DBM.1
                ),
            );
            continue;
        }
        if !rfsite_geometry::point_in_polygon(Point2::new(x, y), &fl.outline) {
            reject(
                data,
                "off-plan",
                format!("({:.2}, {:.2}) m lies outside floor `{floor}`", x, y),
            );
            continue;
        }
        data.points.push(Measurement {
            floor,
            service,
            x_m: x,
            y_m: y,
            level_dbm: level,
            file: name.into(),
            line,
        });
    }
    rows
}
