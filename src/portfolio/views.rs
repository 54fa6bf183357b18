//! The portfolio summary's files: portfolio.json (the [`Portfolio`] itself), portfolio.csv
//! (one row per site and service) and portfolio.pdf (its view model here, every number
//! formatted; the layout in `templates/portfolio/portfolio.typ`).

use std::path::Path;

use serde_json::Value;

use super::summary::{Counts, Portfolio, ServiceEntry, SiteEntry, PORTFOLIO_SCHEMA};

/// portfolio.csv's columns. `critical`, `major`, `minor` count the findings about the
/// row's service; a row with no service counts the site's findings about no one service.
const CSV_COLUMNS: [&str; 21] = [
    "path",
    "site_id",
    "site_name",
    "client",
    "report_date",
    "status",
    "site_verdict",
    "service",
    "service_name",
    "life_safety",
    "service_verdict",
    "target_general",
    "target_critical",
    "worst_floor",
    "worst_floor_name",
    "worst_area_fraction",
    "margin_needed_db",
    "critical",
    "major",
    "minor",
    "problem",
];

fn opt(x: Option<f64>, digits: usize) -> String {
    x.filter(|v| v.is_finite())
        .map(|v| format!("{v:.digits$}"))
        .unwrap_or_default()
}

/// One CSV row: the site's columns, then the service's (or none), then the counts.
fn csv_row(s: &SiteEntry, sv: Option<&ServiceEntry>, counts: &Counts) -> Vec<String> {
    let o = |x: &Option<String>| x.clone().unwrap_or_default();
    let mut row = vec![
        s.path.clone(),
        o(&s.id),
        o(&s.name),
        o(&s.client),
        o(&s.report_date),
        s.status.clone(),
        o(&s.verdict),
    ];
    row.extend(match sv {
        Some(sv) => vec![
            sv.id.clone(),
            sv.name.clone(),
            sv.life_safety.to_string(),
            if sv.pass { "pass" } else { "fail" }.to_string(),
            opt(sv.target_general, 2),
            opt(sv.target_critical, 2),
            o(&sv.worst_floor),
            o(&sv.worst_floor_name),
            opt(sv.worst_area_fraction, 4),
            format!("{:.1}", sv.margin_needed_db),
        ],
        None => vec![String::new(); 10],
    });
    row.extend([
        counts.critical.to_string(),
        counts.major.to_string(),
        counts.minor.to_string(),
        s.problems
            .first()
            .map(|p| {
                p.replace("\n  = hint: ", " (hint: ")
                    + if p.contains("\n  = hint: ") { ")" } else { "" }
            })
            .unwrap_or_default(),
    ]);
    row
}

pub(super) fn csv_bytes(p: &Portfolio) -> Result<Vec<u8>, String> {
    let mut w = csv::Writer::from_writer(Vec::new());
    let e = |e: csv::Error| e.to_string();
    w.write_record(CSV_COLUMNS).map_err(e)?;
    for s in &p.sites {
        for sv in &s.services {
            w.write_record(csv_row(s, Some(sv), &sv.findings))
                .map_err(e)?;
        }
        let wide = &s.site_wide;
        if s.services.is_empty() || wide.critical + wide.major + wide.minor > 0 {
            w.write_record(csv_row(s, None, wide)).map_err(e)?;
        }
    }
    w.into_inner().map_err(|e| e.to_string())
}

fn pct(x: Option<f64>) -> String {
    x.filter(|v| v.is_finite())
        .map(|v| format!("{:.1} %", 100.0 * v))
        .unwrap_or_else(|| "n/a".into())
}

/// "95 % general, 99 % critical".
fn target(sv: &ServiceEntry) -> String {
    let part = |x: Option<f64>, what: &str| {
        x.filter(|v| v.is_finite()).map(|v| {
            let t = format!("{:.1}", 100.0 * v);
            format!("{} % {what}", t.trim_end_matches(".0"))
        })
    };
    [
        part(sv.target_general, "general"),
        part(sv.target_critical, "critical"),
    ]
    .into_iter()
    .flatten()
    .collect::<Vec<_>>()
    .join(", ")
}

fn verdict(pass: bool) -> String {
    if pass { "PASS" } else { "FAIL" }.to_string()
}

fn life(b: bool) -> String {
    if b { "yes" } else { "" }.to_string()
}

fn verdict_rows(p: &Portfolio) -> Vec<Vec<String>> {
    let mut rows = Vec::new();
    for s in p.sites.iter().filter(|s| s.status == "ok") {
        for sv in &s.services {
            rows.push(vec![
                s.label(),
                sv.name.clone(),
                life(sv.life_safety),
                verdict(sv.pass),
                target(sv),
                sv.worst_floor_name.clone().unwrap_or_default(),
                pct(sv.worst_area_fraction),
                format!("{:.1} dB", sv.margin_needed_db),
                sv.findings.critical.to_string(),
                sv.findings.major.to_string(),
            ]);
        }
    }
    rows
}

fn ranking_rows(p: &Portfolio) -> Vec<Vec<String>> {
    p.shortfall_ranking
        .iter()
        .enumerate()
        .map(|(i, r)| {
            vec![
                (i + 1).to_string(),
                r.site_name.clone(),
                r.service_name.clone(),
                life(r.life_safety),
                r.floor_name.clone(),
                r.reason.clone(),
                format!("{:.1} dB", r.margin_needed_db),
                pct(Some(r.predicted_area_fraction)),
            ]
        })
        .collect()
}

fn site_rows(p: &Portfolio) -> Vec<Vec<String>> {
    p.sites
        .iter()
        .filter(|s| s.status == "ok")
        .map(|s| {
            vec![
                s.label(),
                s.path.clone(),
                s.client.clone().unwrap_or_default(),
                s.report_date.clone().unwrap_or_default(),
                verdict(s.verdict.as_deref() == Some("pass")),
                s.findings.critical.to_string(),
                s.findings.major.to_string(),
                s.findings.minor.to_string(),
                s.warnings.to_string(),
            ]
        })
        .collect()
}

fn failed_rows(p: &Portfolio) -> Vec<Vec<String>> {
    p.sites
        .iter()
        .filter(|s| s.status != "ok")
        .map(|s| {
            let outcome = if s.status == "bad-input" {
                "bad input"
            } else {
                "failed"
            };
            vec![s.path.clone(), outcome.to_string(), s.problems.join("\n")]
        })
        .collect()
}

fn sites(n: usize) -> String {
    rfsite_plugin::words::count(n, "site", "sites")
}

/// The line under the title: owner, count, shard, date.
fn subtitle(p: &Portfolio) -> String {
    let mut parts = Vec::new();
    if let Some(o) = &p.meta.owner {
        parts.push(format!("For {o}"));
    }
    parts.push(match &p.shard {
        Some(s) => format!("{}, shard {s}", sites(p.totals.sites)),
        None => sites(p.totals.sites),
    });
    match (&p.earliest_date, &p.date) {
        (Some(a), Some(b)) if a != b => {
            parts.push(format!("dated {b} (site reports dated {a} to {b})"))
        }
        (_, Some(b)) => parts.push(format!("dated {b}, the sites' report date")),
        _ => {}
    }
    parts.join(" · ")
}

/// The summary PDF's view model: every number formatted here, none in the template.
fn pdf_view(p: &Portfolio) -> Value {
    let t = &p.totals;
    let tile = |value: usize, label: &str, bad: bool| serde_json::json!({"value": value.to_string(), "label": label, "bad": bad && value > 0});
    serde_json::json!({
        "title": p.meta.name.clone().unwrap_or_else(|| "Portfolio coverage summary".into()),
        "subtitle": subtitle(p),
        "tool": format!("rfsite {}", rfsite_engine::VERSION),
        "totals": [tile(t.sites, "sites", false), tile(t.pass, "all services pass", false), tile(t.fail, "some service fails", true), tile(t.bad_input, "bad input", true), tile(t.failed, "failed to run", true)],
        "verdict_rows": verdict_rows(p),
        "ranking_rows": ranking_rows(p),
        "failed_rows": failed_rows(p),
        "site_rows": site_rows(p),
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
    let p: Portfolio = serde_json::from_slice(&bytes).map_err(|e| {
        format!(
            "{}: not a portfolio summary of this rfsite version: {e}\n  = hint: run the shards again with this version",
            f.display()
        )
    })?;
    if p.schema != PORTFOLIO_SCHEMA {
        return Err(format!(
            "{}: schema `{}`, expected `{PORTFOLIO_SCHEMA}`\n  = hint: run the shards again with this version",
            f.display(),
            p.schema
        ));
    }
    Ok(p)
}
