//! The portfolio summary: what portfolio.json keeps of each site (read from its
//! findings.json) and the shortfall ranking. Its CSV and PDF views are in `views.rs`.

use serde::{Deserialize, Serialize};
use serde_json::Value;

use super::meta::PortfolioMeta;
use super::Shard;
use crate::Outcome;

/// portfolio.json schema id. 2: names, targets, life safety, per-service finding counts,
/// the sites' report dates and the optional portfolio.toml.
pub const PORTFOLIO_SCHEMA: &str = "rfsite-portfolio/2";

/// Problems kept per failed site in the summary.
const PROBLEMS_KEPT: usize = 5;

/// One floor of one service, as the summary keeps it.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct FloorEntry {
    /// Floor id.
    pub id: String,
    /// Floor name.
    pub name: String,
    /// Elevation of the finished floor, m.
    pub elevation_m: f64,
    /// Graded area at or above threshold + margin, 0..1.
    pub predicted_area_fraction: f64,
    /// Meets the targets.
    pub pass: bool,
    /// Extra margin needed, dB (0 when passing or when no uplift would do).
    pub margin_needed_db: f64,
    /// Why it fails, one sentence per failed criterion (empty when it passes).
    pub reasons: Vec<String>,
}

/// One service of one site.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct ServiceEntry {
    /// Service id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Public-safety (life-safety) radio: ranked first, judged two-way.
    pub life_safety: bool,
    /// Centre frequency, MHz.
    pub freq_mhz: f64,
    /// Threshold, dBm.
    pub threshold_dbm: f64,
    /// Target fraction of the general area, 0..1.
    pub target_general: Option<f64>,
    /// Target fraction of the critical areas, 0..1.
    pub target_critical: Option<f64>,
    /// Whole-service verdict.
    pub pass: bool,
    /// The worst floor: a failing one before any passing one, then the smallest area
    /// fraction, then the largest margin needed.
    pub worst_floor: Option<String>,
    /// Its name.
    pub worst_floor_name: Option<String>,
    /// Its area fraction.
    pub worst_area_fraction: Option<f64>,
    /// Largest margin needed over the floors, dB.
    pub margin_needed_db: f64,
    /// Findings about this service, by severity.
    pub findings: Counts,
    /// Per floor, lowest first.
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

impl Counts {
    fn add(&mut self, severity: Option<&str>) {
        match severity {
            Some("critical") => self.critical += 1,
            Some("major") => self.major += 1,
            Some("minor") => self.minor += 1,
            _ => self.info += 1,
        }
    }
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
    /// Client, when the site ran.
    pub client: Option<String>,
    /// The site report's date (`[site] report_date`), when the site ran.
    pub report_date: Option<String>,
    /// `ok`, `bad-input` or `failed`.
    pub status: String,
    /// Output folder relative to the portfolio output, when the site ran.
    pub output: Option<String>,
    /// `pass` or `fail` (every service passes), when the site ran.
    pub verdict: Option<String>,
    /// Per service, life-safety services first.
    pub services: Vec<ServiceEntry>,
    /// All the site's findings by severity.
    pub findings: Counts,
    /// Of those, the findings about no one service.
    pub site_wide: Counts,
    /// Warnings in the site's findings.json.
    pub warnings: usize,
    /// Why it did not run: the first problems, `file:line:column: message` where located,
    /// each with its hint line as `check` prints it.
    pub problems: Vec<String>,
}

impl SiteEntry {
    /// The name to print: the site's name, else its id, else its folder.
    pub fn label(&self) -> String {
        self.name
            .clone()
            .filter(|n| !n.is_empty())
            .or_else(|| self.id.clone())
            .unwrap_or_else(|| self.path.clone())
    }
}

/// A floor falling short, for the ranking.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Shortfall {
    /// Site id.
    pub site: String,
    /// Site name.
    pub site_name: String,
    /// Service id.
    pub service: String,
    /// Service name.
    pub service_name: String,
    /// Life-safety service (ranked before every other).
    pub life_safety: bool,
    /// Floor id.
    pub floor: String,
    /// Floor name.
    pub floor_name: String,
    /// Extra margin needed, dB.
    pub margin_needed_db: f64,
    /// Area fraction, 0..1.
    pub predicted_area_fraction: f64,
    /// Why it fails (the floor's first reason; the site report has them all).
    pub reason: String,
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
    /// From DIR/portfolio.toml, when there is one.
    pub meta: PortfolioMeta,
    /// The latest of the sites' report dates (the summary's date; never the clock).
    pub date: Option<String>,
    /// The earliest of them.
    pub earliest_date: Option<String>,
    /// Totals.
    pub totals: Totals,
    /// Sites, sorted by path.
    pub sites: Vec<SiteEntry>,
    /// Failing floors: life-safety services first, then the largest margin needed.
    pub shortfall_ranking: Vec<Shortfall>,
}

impl Portfolio {
    pub(super) fn new(
        mut sites: Vec<SiteEntry>,
        shard: Option<Shard>,
        meta: PortfolioMeta,
    ) -> Portfolio {
        sites.sort_by(|a, b| a.path.cmp(&b.path));
        let mut t = Totals {
            sites: sites.len(),
            ..Default::default()
        };
        for s in &sites {
            match (s.status.as_str(), s.verdict.as_deref()) {
                ("ok", Some("pass")) => t.pass += 1,
                ("ok", _) => t.fail += 1,
                ("bad-input", _) => t.bad_input += 1,
                _ => t.failed += 1,
            }
        }
        let dates = sites
            .iter()
            .filter_map(|s| s.report_date.clone())
            .filter(|d| !d.is_empty());
        let (earliest_date, date) = (dates.clone().min(), dates.max());
        Portfolio {
            schema: PORTFOLIO_SCHEMA.into(),
            tool: serde_json::json!({"name": "rfsite", "version": rfsite_engine::VERSION}),
            shard: shard.map(|s| format!("{}/{}", s.k, s.n)),
            meta,
            date,
            earliest_date,
            totals: t,
            shortfall_ranking: ranking(&sites),
            sites,
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

/// Every failing floor: life-safety services first (a responder's radio before a phone),
/// then the largest extra margin needed, the smallest area at level, and the ids.
fn ranking(sites: &[SiteEntry]) -> Vec<Shortfall> {
    let mut ranking = Vec::new();
    for s in sites {
        for sv in &s.services {
            for f in sv.floors.iter().filter(|f| !f.pass) {
                ranking.push(Shortfall {
                    site: s.id.clone().unwrap_or_default(),
                    site_name: s.label(),
                    service: sv.id.clone(),
                    service_name: sv.name.clone(),
                    life_safety: sv.life_safety,
                    floor: f.id.clone(),
                    floor_name: f.name.clone(),
                    margin_needed_db: f.margin_needed_db,
                    predicted_area_fraction: f.predicted_area_fraction,
                    reason: f.reasons.first().cloned().unwrap_or_default(),
                });
            }
        }
    }
    ranking.sort_by(|a, b| {
        b.life_safety
            .cmp(&a.life_safety)
            .then(b.margin_needed_db.total_cmp(&a.margin_needed_db))
            .then(
                a.predicted_area_fraction
                    .total_cmp(&b.predicted_area_fraction),
            )
            .then_with(|| (&a.site, &a.service, &a.floor).cmp(&(&b.site, &b.service, &b.floor)))
    });
    ranking
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

fn items(v: &Value) -> &[Value] {
    v.as_array().map(Vec::as_slice).unwrap_or_default()
}

/// A failed criterion as one sentence for the summary.
fn reason_text(r: &Value) -> String {
    if r["criterion"] == "uplink-not-assessed" {
        return "the uplink (handset to network) was not assessed, so the floor is not passed"
            .into();
    }
    text(r, "text")
}

/// A service's floors from its findings.json entry, in the order of `order` (floor ids
/// lowest first), names and elevations from it.
fn floors_of(s: &Value, order: &[Value]) -> Vec<FloorEntry> {
    let rank = |id: &str| {
        order
            .iter()
            .position(|f| f["id"] == id)
            .unwrap_or(usize::MAX)
    };
    let mut floors: Vec<FloorEntry> = items(&s["floors"])
        .iter()
        .map(|fl| {
            let id = text(fl, "id");
            let known = order.iter().find(|f| f["id"] == id.as_str());
            FloorEntry {
                name: known.map(|f| text(f, "name")).unwrap_or_else(|| id.clone()),
                elevation_m: known.map(|f| num(f, "elevation_m")).unwrap_or(0.0),
                predicted_area_fraction: num(fl, "predicted_area_fraction"),
                pass: fl["pass"].as_bool().unwrap_or(false),
                margin_needed_db: fl
                    .get("margin_needed_db")
                    .and_then(Value::as_f64)
                    .unwrap_or(0.0),
                reasons: items(&fl["reasons"]).iter().map(reason_text).collect(),
                id,
            }
        })
        .collect();
    floors.sort_by_key(|f| rank(&f.id));
    floors
}

/// One service's entry; `findings` are the site's findings.
fn service_entry(s: &Value, order: &[Value], findings: &[Value]) -> ServiceEntry {
    let floors = floors_of(s, order);
    let worst = floors.iter().min_by(|a, b| {
        a.pass
            .cmp(&b.pass)
            .then(
                a.predicted_area_fraction
                    .total_cmp(&b.predicted_area_fraction),
            )
            .then(b.margin_needed_db.total_cmp(&a.margin_needed_db))
            .then_with(|| a.id.cmp(&b.id))
    });
    let id = text(s, "id");
    let mut counts = Counts::default();
    for f in findings.iter().filter(|f| f["service"] == id.as_str()) {
        counts.add(f["severity"].as_str());
    }
    ServiceEntry {
        name: text(s, "name"),
        life_safety: s["life_safety"].as_bool().unwrap_or(false),
        freq_mhz: num(s, "freq_mhz"),
        threshold_dbm: num(s, "threshold_dbm"),
        target_general: s["target_general"].as_f64(),
        target_critical: s["target_critical"].as_f64(),
        pass: s["pass"].as_bool().unwrap_or(false),
        worst_floor: worst.map(|w| w.id.clone()),
        worst_floor_name: worst.map(|w| w.name.clone()),
        worst_area_fraction: worst.map(|w| w.predicted_area_fraction),
        margin_needed_db: floors
            .iter()
            .map(|f| f.margin_needed_db)
            .fold(0.0, f64::max),
        findings: counts,
        floors,
        id,
    }
}

/// The summary entry of a site that ran, from its findings.json.
pub fn entry_from_findings(path: &str, output: &str, f: &Value) -> SiteEntry {
    let findings = items(&f["findings"]);
    let order = items(&f["site"]["floors"]);
    let mut services: Vec<ServiceEntry> = items(&f["services"])
        .iter()
        .map(|s| service_entry(s, order, findings))
        .collect();
    services.sort_by_key(|s| !s.life_safety);
    let mut counts = Counts::default();
    let mut site_wide = Counts::default();
    let ids: Vec<&str> = services.iter().map(|s| s.id.as_str()).collect();
    for x in findings {
        counts.add(x["severity"].as_str());
        if !x["service"].as_str().is_some_and(|s| ids.contains(&s)) {
            site_wide.add(x["severity"].as_str());
        }
    }
    let site = &f["site"];
    SiteEntry {
        path: path.to_string(),
        id: Some(text(site, "id")),
        name: Some(text(site, "name")),
        client: Some(text(site, "client")).filter(|c| !c.is_empty()),
        report_date: Some(text(site, "report_date")).filter(|d| !d.is_empty()),
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
        site_wide,
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
        client: None,
        report_date: None,
        status: status.into(),
        output: None,
        verdict: None,
        services: Vec::new(),
        findings: Counts::default(),
        site_wide: Counts::default(),
        warnings: 0,
        problems: problems.into_iter().take(PROBLEMS_KEPT).collect(),
    }
}
