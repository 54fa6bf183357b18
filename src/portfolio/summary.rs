//! The portfolio summary: what portfolio.json keeps of each site (read from its
//! findings.json), the shortfall ranking, and the summary's CSV and PDF views.

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};
use serde_json::Value;

use super::Shard;
use crate::Outcome;

/// portfolio.json schema id.
pub const PORTFOLIO_SCHEMA: &str = "rfsite-portfolio/1";

/// Problems kept per failed site in the summary.
const PROBLEMS_KEPT: usize = 5;

/// One floor of one service, as the summary keeps it.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct FloorEntry {
    /// Floor id.
    pub id: String,
    /// Graded area at or above threshold + margin, 0..1.
    pub predicted_area_fraction: f64,
    /// Meets the targets.
    pub pass: bool,
    /// Extra margin needed, dB (0 when passing).
    pub margin_needed_db: f64,
}

/// One service of one site.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct ServiceEntry {
    /// Service id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Centre frequency, MHz.
    pub freq_mhz: f64,
    /// Threshold, dBm.
    pub threshold_dbm: f64,
    /// Whole-service verdict.
    pub pass: bool,
    /// The floor with the smallest area fraction (then the largest margin needed).
    pub worst_floor: Option<String>,
    /// Its area fraction.
    pub worst_area_fraction: Option<f64>,
    /// Largest margin needed over the floors, dB.
    pub margin_needed_db: f64,
    /// Per floor.
    pub floors: Vec<FloorEntry>,
}

/// Findings counted by severity.
#[derive(Debug, Clone, Default, Serialize, Deserialize, PartialEq, Eq)]
pub struct Counts {
    /// Critical.
    pub critical: usize,
    /// Major.
    pub major: usize,
    /// Minor.
    pub minor: usize,
    /// Info.
    pub info: usize,
}

/// One site of the portfolio.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SiteEntry {
    /// Site folder relative to DIR (`/`-separated; `.` for DIR itself).
    pub path: String,
    /// Site id, once known.
    pub id: Option<String>,
    /// Site name, once known.
    pub name: Option<String>,
    /// `ok`, `bad-input` or `failed`.
    pub status: String,
    /// Output folder relative to the portfolio output, when the site ran.
    pub output: Option<String>,
    /// `pass` or `fail` (every service passes), when the site ran.
    pub verdict: Option<String>,
    /// Per service.
    pub services: Vec<ServiceEntry>,
    /// Findings by severity.
    pub findings: Counts,
    /// Warnings in the site's findings.json.
    pub warnings: usize,
    /// Why it did not run: the first problems, `file:line:column: message` where located.
    pub problems: Vec<String>,
}

/// A floor falling short, for the ranking.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Shortfall {
    /// Site id.
    pub site: String,
    /// Service id.
    pub service: String,
    /// Floor id.
    pub floor: String,
    /// Extra margin needed, dB.
    pub margin_needed_db: f64,
    /// Area fraction, 0..1.
    pub predicted_area_fraction: f64,
}

/// Counts over the portfolio.
#[derive(Debug, Clone, Default, Serialize, Deserialize, PartialEq, Eq)]
pub struct Totals {
    /// Sites found (in this shard).
    pub sites: usize,
    /// Ran, every service passing.
    pub pass: usize,
    /// Ran, some service failing.
    pub fail: usize,
    /// Did not run: bad input.
    pub bad_input: usize,
    /// Did not run: another failure.
    pub failed: usize,
}

/// portfolio.json.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Portfolio {
    /// [`PORTFOLIO_SCHEMA`].
    pub schema: String,
    /// rfsite's name and version.
    pub tool: Value,
    /// `K/N` for a shard's summary; absent for a whole portfolio or a merge.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shard: Option<String>,
    /// Totals.
    pub totals: Totals,
    /// Sites, sorted by path.
    pub sites: Vec<SiteEntry>,
    /// Failing floors, largest margin needed first.
    pub shortfall_ranking: Vec<Shortfall>,
}

impl Portfolio {
    pub(super) fn new(mut sites: Vec<SiteEntry>, shard: Option<Shard>) -> Portfolio {
        sites.sort_by(|a, b| a.path.cmp(&b.path));
        let mut t = Totals {
            sites: sites.len(),
            ..Default::default()
        };
        let mut ranking = Vec::new();
        for s in &sites {
            match (s.status.as_str(), s.verdict.as_deref()) {
                ("ok", Some("pass")) => t.pass += 1,
                ("ok", _) => t.fail += 1,
                ("bad-input", _) => t.bad_input += 1,
                _ => t.failed += 1,
            }
            for sv in &s.services {
                for f in sv.floors.iter().filter(|f| !f.pass) {
                    ranking.push(Shortfall {
                        site: s.id.clone().unwrap_or_default(),
                        service: sv.id.clone(),
                        floor: f.id.clone(),
                        margin_needed_db: f.margin_needed_db,
                        predicted_area_fraction: f.predicted_area_fraction,
                    });
                }
            }
        }
        ranking.sort_by(|a, b| {
            b.margin_needed_db
                .total_cmp(&a.margin_needed_db)
                .then(
                    a.predicted_area_fraction
                        .total_cmp(&b.predicted_area_fraction),
                )
                .then_with(|| (&a.site, &a.service, &a.floor).cmp(&(&b.site, &b.service, &b.floor)))
        });
        Portfolio {
            schema: PORTFOLIO_SCHEMA.into(),
            tool: serde_json::json!({"name": "rfsite", "version": rfsite_engine::VERSION}),
            shard: shard.map(|s| format!("{}/{}", s.k, s.n)),
            totals: t,
            sites,
            shortfall_ranking: ranking,
        }
    }

    pub(super) fn outcome(&self) -> Outcome {
        if self.totals.bad_input > 0 {
            Outcome::BadInput
        } else if self.totals.failed > 0 {
            Outcome::Failed
        } else {
            Outcome::Ok
        }
    }
}

fn num(v: &Value, k: &str) -> f64 {
    v.get(k).and_then(Value::as_f64).unwrap_or(f64::NAN)
}

fn text(v: &Value, k: &str) -> String {
    v.get(k)
        .and_then(Value::as_str)
        .unwrap_or_default()
        .to_string()
}

/// The summary entry of a site that ran, from its findings.json.
pub fn entry_from_findings(path: &str, output: &str, f: &Value) -> SiteEntry {
    let services: Vec<ServiceEntry> = f["services"]
        .as_array()
        .map(|a| a.as_slice())
        .unwrap_or_default()
        .iter()
        .map(|s| {
            let floors: Vec<FloorEntry> = s["floors"]
                .as_array()
                .map(|a| a.as_slice())
                .unwrap_or_default()
                .iter()
                .map(|fl| FloorEntry {
                    id: text(fl, "id"),
                    predicted_area_fraction: num(fl, "predicted_area_fraction"),
                    pass: fl["pass"].as_bool().unwrap_or(false),
                    margin_needed_db: fl
                        .get("margin_needed_db")
                        .and_then(Value::as_f64)
                        .unwrap_or(0.0),
                })
                .collect();
            let worst = floors.iter().min_by(|a, b| {
                a.predicted_area_fraction
                    .total_cmp(&b.predicted_area_fraction)
                    .then(b.margin_needed_db.total_cmp(&a.margin_needed_db))
                    .then_with(|| a.id.cmp(&b.id))
            });
            ServiceEntry {
                id: text(s, "id"),
                name: text(s, "name"),
                freq_mhz: num(s, "freq_mhz"),
                threshold_dbm: num(s, "threshold_dbm"),
                pass: s["pass"].as_bool().unwrap_or(false),
                worst_floor: worst.map(|w| w.id.clone()),
                worst_area_fraction: worst.map(|w| w.predicted_area_fraction),
                margin_needed_db: floors
                    .iter()
                    .map(|f| f.margin_needed_db)
                    .fold(0.0, f64::max),
                floors,
            }
        })
        .collect();
    let mut counts = Counts::default();
    for x in f["findings"]
        .as_array()
        .map(|a| a.as_slice())
        .unwrap_or_default()
    {
        match x["severity"].as_str() {
            Some("critical") => counts.critical += 1,
            Some("major") => counts.major += 1,
            Some("minor") => counts.minor += 1,
            _ => counts.info += 1,
        }
    }
    SiteEntry {
        path: path.to_string(),
        id: Some(text(&f["site"], "id")),
        name: Some(text(&f["site"], "name")),
        status: "ok".into(),
        output: Some(output.to_string()),
        verdict: Some(
            if services.iter().all(|s| s.pass) {
                "pass"
            } else {
                "fail"
            }
            .into(),
        ),
        services,
        findings: counts,
        warnings: f["warnings"].as_array().map(Vec::len).unwrap_or(0),
        problems: Vec::new(),
    }
}

pub(super) fn failed_entry(
    path: &str,
    id: Option<String>,
    name: Option<String>,
    status: &str,
    problems: Vec<String>,
) -> SiteEntry {
    SiteEntry {
        path: path.to_string(),
        id,
        name,
        status: status.into(),
        output: None,
        verdict: None,
        services: Vec::new(),
        findings: Counts::default(),
        warnings: 0,
        problems: problems.into_iter().take(PROBLEMS_KEPT).collect(),
    }
}

fn csv_bytes(p: &Portfolio) -> Result<Vec<u8>, String> {
    let mut w = csv::Writer::from_writer(Vec::new());
    let e = |e: csv::Error| e.to_string();
    w.write_record([
        "path",
        "site_id",
        "site_name",
        "status",
        "site_verdict",
        "service",
        "service_verdict",
        "worst_floor",
        "worst_area_fraction",
        "margin_needed_db",
        "critical",
        "major",
        "minor",
        "problem",
    ])
    .map_err(e)?;
    for s in &p.sites {
        let base = |service: &str, sv: &str, wf: &str, wa: String, m: String| -> Vec<String> {
            vec![
                s.path.clone(),
                s.id.clone().unwrap_or_default(),
                s.name.clone().unwrap_or_default(),
                s.status.clone(),
                s.verdict.clone().unwrap_or_default(),
                service.to_string(),
                sv.to_string(),
                wf.to_string(),
                wa,
                m,
                s.findings.critical.to_string(),
                s.findings.major.to_string(),
                s.findings.minor.to_string(),
                s.problems.first().cloned().unwrap_or_default(),
            ]
        };
        if s.services.is_empty() {
            w.write_record(base("", "", "", String::new(), String::new()))
                .map_err(e)?;
        }
        for sv in &s.services {
            let rec = base(
                &sv.id,
                if sv.pass { "pass" } else { "fail" },
                sv.worst_floor.as_deref().unwrap_or(""),
                sv.worst_area_fraction
                    .map(|x| format!("{x:.4}"))
                    .unwrap_or_default(),
                format!("{:.1}", sv.margin_needed_db),
            );
            w.write_record(rec).map_err(e)?;
        }
    }
    w.into_inner().map_err(|e| e.to_string())
}

fn pct(x: Option<f64>) -> String {
    x.filter(|v| v.is_finite())
        .map(|v| format!("{:.1} %", 100.0 * v))
        .unwrap_or_else(|| "n/a".into())
}

/// The summary PDF's view model: every number formatted here, none in the template.
fn pdf_view(p: &Portfolio) -> Value {
    let t = &p.totals;
    let label = |s: &SiteEntry| {
        s.name
            .clone()
            .filter(|n| !n.is_empty())
            .or_else(|| s.id.clone())
            .unwrap_or_else(|| s.path.clone())
    };
    let mut verdict_rows = Vec::new();
    let mut site_rows = Vec::new();
    let mut failed_rows = Vec::new();
    for s in &p.sites {
        if s.status == "ok" {
            for sv in &s.services {
                verdict_rows.push(vec![
                    label(s),
                    s.path.clone(),
                    sv.name.clone(),
                    if sv.pass { "PASS" } else { "FAIL" }.to_string(),
                    sv.worst_floor.clone().unwrap_or_default(),
                    pct(sv.worst_area_fraction),
                    format!("{:.1} dB", sv.margin_needed_db),
                ]);
            }
            site_rows.push(vec![
                label(s),
                s.path.clone(),
                if s.verdict.as_deref() == Some("pass") {
                    "PASS"
                } else {
                    "FAIL"
                }
                .to_string(),
                s.findings.critical.to_string(),
                s.findings.major.to_string(),
                s.findings.minor.to_string(),
                s.warnings.to_string(),
            ]);
        } else {
            failed_rows.push(vec![
                s.path.clone(),
                if s.status == "bad-input" {
                    "bad input"
                } else {
                    "failed"
                }
                .to_string(),
                s.problems.join("\n"),
            ]);
        }
    }
    let names: BTreeMap<&str, String> = p
        .sites
        .iter()
        .filter_map(|s| s.id.as_deref().map(|i| (i, label(s))))
        .collect();
    let ranking_rows: Vec<Vec<String>> = p
        .shortfall_ranking
        .iter()
        .enumerate()
        .map(|(i, r)| {
            vec![
                (i + 1).to_string(),
                names
                    .get(r.site.as_str())
                    .cloned()
                    .unwrap_or_else(|| r.site.clone()),
                r.service.clone(),
                r.floor.clone(),
                format!("{:.1} dB", r.margin_needed_db),
                pct(Some(r.predicted_area_fraction)),
            ]
        })
        .collect();
    let tile = |value: usize, label: &str, bad: bool| serde_json::json!({"value": value.to_string(), "label": label, "bad": bad && value > 0});
    serde_json::json!({
        "title": "Portfolio coverage summary",
        "subtitle": match &p.shard {
            Some(s) => format!("{} site(s), shard {s}", t.sites),
            None => format!("{} site(s)", t.sites),
        },
        "tool": format!("rfsite {}", rfsite_engine::VERSION),
        "totals": [tile(t.sites, "sites", false), tile(t.pass, "all services pass", false), tile(t.fail, "some service fails", true), tile(t.bad_input, "bad input", true), tile(t.failed, "failed to run", true)],
        "verdict_rows": verdict_rows,
        "ranking_rows": ranking_rows,
        "failed_rows": failed_rows,
        "site_rows": site_rows,
    })
}

/// Writes portfolio.json, portfolio.csv and portfolio.pdf into `out`, atomically.
pub(super) fn write_summary(out: &Path, p: &Portfolio) -> Result<(), String> {
    let json = format!(
        "{}\n",
        serde_json::to_string_pretty(p).map_err(|e| e.to_string())?
    );
    let csv = csv_bytes(p)?;
    let pdf =
        rfsite_report::portfolio::render_portfolio(&pdf_view(p)).map_err(|e| e.to_string())?;
    rfsite_engine::world::write_atomic(
        out,
        &[
            ("portfolio.json".into(), json.into_bytes()),
            ("portfolio.csv".into(), csv),
            ("portfolio.pdf".into(), pdf),
        ],
    )
}

/// Reads a portfolio output's summary.
pub(super) fn read_portfolio(dir: &Path) -> Result<Portfolio, String> {
    let f = dir.join("portfolio.json");
    let bytes = std::fs::read(&f).map_err(|e| {
        format!(
            "{}: {e}\n  = hint: merge takes the -o folders of `rfsite portfolio` runs",
            f.display()
        )
    })?;
    let p: Portfolio = serde_json::from_slice(&bytes)
        .map_err(|e| format!("{}: not a portfolio summary: {e}", f.display()))?;
    if p.schema != PORTFOLIO_SCHEMA {
        return Err(format!(
            "{}: schema `{}`, expected `{PORTFOLIO_SCHEMA}`",
            f.display(),
            p.schema
        ));
    }
    Ok(p)
}

