//! The remediation part of the view model: the options that change the site side by side
//! (before → after per floor), the advice-only options apart, each option's changes and
//! finding changes in words, and the recommendation of the executive summary.
//!
//! Nothing here predicts, grades or recommends: the verdicts are the ones the engine put in
//! each option's `after`, the recommendation is its `recommended` flag. Numbers are
//! rounded as in the rest of the report (dB and dBm to 0.1, fractions as percentages to
//! 0.1). Every user string goes out as a JSON string, never as markup.

use rfsite_model::Site;
use rfsite_plugin::{Assessment, Change, FindingChange, Remediation, ServiceResult};
use serde_json::{json, Value};

use crate::{f1, installer, pct, ReportError};

/// The mark of an empty cell.
pub const DASH: &str = "—";

/// A floor's name, or its id when the site has no such floor.
pub fn floor_name(site: &Site, id: &str) -> String {
    site.floor(id)
        .map(|f| f.name.clone())
        .unwrap_or_else(|| id.to_string())
}

/// A service's name, or its id when the site has no such service.
pub fn service_name(site: &Site, id: &str) -> String {
    site.service(id)
        .map(|s| s.name.clone())
        .unwrap_or_else(|| id.to_string())
}

/// The services an option is for, as graded after it: its own, else every service graded.
pub fn option_services(r: &Remediation) -> Vec<&ServiceResult> {
    let Some(after) = &r.after else {
        return Vec::new();
    };
    after
        .services
        .iter()
        .filter(|s| r.service.as_ref().is_none_or(|id| id == &s.id))
        .collect()
}

/// Per failing service (in the assessment's order: life safety first), the option the
/// engine recommends for it, if any.
pub fn recommendations<'a>(
    services: &'a [ServiceResult],
    options: &'a [Remediation],
) -> Vec<(&'a ServiceResult, Option<&'a Remediation>)> {
    services
        .iter()
        .filter(|s| !s.pass)
        .map(|s| {
            let r = options
                .iter()
                .find(|r| r.recommended && r.service.as_deref() == Some(s.id.as_str()));
            (s, r)
        })
        .collect()
}

/// How a service fares after an option, in words: "the service is predicted to pass every
/// floor", or how many pass and which still fail.
pub fn after_words(site: &Site, s: &ServiceResult) -> String {
    let failing: Vec<String> = s
        .floors
        .iter()
        .filter(|f| !f.pass)
        .map(|f| floor_name(site, &f.id))
        .collect();
    if failing.is_empty() {
        return "the service is predicted to pass every floor".into();
    }
    format!(
        "the service is predicted to pass {} of {} floors and still to fail on {}",
        s.floors.len() - failing.len(),
        s.floors.len(),
        failing.join(", ")
    )
}

/// The handlebars context of one failing service's recommendation sentence.
fn recommendation_context(
    site: &Site,
    options: &[Remediation],
    s: &ServiceResult,
    r: Option<&Remediation>,
) -> Value {
    let predicted = options
        .iter()
        .filter(|o| o.service.as_deref() == Some(s.id.as_str()) && o.after.is_some())
        .count();
    let after = r
        .and_then(|r| option_services(r).into_iter().find(|x| x.id == s.id))
        .map(|x| after_words(site, x))
        .unwrap_or_default();
    json!({
        "service": s.name, "life_safety": s.life_safety, "has_option": r.is_some(),
        "title": r.map(|r| r.title.clone()).unwrap_or_default(),
        "detail": r.map(|r| r.detail.clone()).unwrap_or_default(),
        "expected": r.map(|r| r.expected.clone()).unwrap_or_default(),
        "margin_db": r.map(|r| f1(r.margin_needed_db)).unwrap_or_default(),
        "after": after, "predicted": predicted,
    })
}

/// The summary's recommendation: one sentence per failing service (the `recommendation`
/// snippet), and a row per failing service for the summary's table.
pub struct SummaryRecommendation {
    /// Sentences, life-safety services first.
    pub sentences: Vec<String>,
    /// Service, recommended option (or why none), predicted verdict with it.
    pub rows: Vec<[String; 3]>,
}

/// Builds the summary's recommendation from the recommended options.
pub fn summary_recommendation(
    site: &Site,
    a: &Assessment,
    hb: &handlebars::Handlebars<'_>,
) -> Result<SummaryRecommendation, ReportError> {
    let mut out = SummaryRecommendation {
        sentences: Vec::new(),
        rows: Vec::new(),
    };
    for (s, r) in recommendations(&a.services, &a.remediation) {
        let ctx = recommendation_context(site, &a.remediation, s, r);
        out.sentences
            .push(crate::snippet(hb, "recommendation", &ctx)?);
        out.rows.push([
            format!(
                "{}{}",
                s.name,
                if s.life_safety { " (life safety)" } else { "" }
            ),
            r.map(|r| r.title.clone())
                .unwrap_or_else(|| "none recommended".into()),
            ctx["after"]
                .as_str()
                .filter(|t| !t.is_empty())
                .unwrap_or(DASH)
                .to_string(),
        ]);
    }
    Ok(out)
}

/// One floor's before → after cell for one service: "FAIL → PASS" and the after area,
/// after the service's name when `named` (an option for several services).
fn floor_cell(
    before: &[ServiceResult],
    s: &ServiceResult,
    floor: &str,
    named: bool,
) -> Option<String> {
    let after = s.floors.iter().find(|f| f.id == floor)?;
    let before = before
        .iter()
        .find(|x| x.id == s.id)
        .and_then(|x| x.floors.iter().find(|f| f.id == floor))
        .map(|f| verdict(f.pass))
        .unwrap_or("n/a");
    let who = if named {
        format!("{}: ", s.name)
    } else {
        String::new()
    };
    Some(format!(
        "{who}{before} → {}, {}",
        verdict(after.pass),
        pct(Some(after.predicted_area_fraction))
    ))
}

fn verdict(pass: bool) -> &'static str {
    if pass {
        "PASS"
    } else {
        "FAIL"
    }
}

/// The BoQ's cable lines summed per unit ("23 m"), or "—" when there are none.
pub fn cable_total(r: &Remediation) -> String {
    let mut per_unit: Vec<(String, f64)> = Vec::new();
    for q in r.quantities.iter().filter(|q| q.item.starts_with("cable")) {
        match per_unit.iter_mut().find(|(u, _)| u == &q.unit) {
            Some((_, n)) => *n += q.quantity,
            None => per_unit.push((q.unit.clone(), q.quantity)),
        }
    }
    if per_unit.is_empty() {
        return DASH.into();
    }
    per_unit
        .iter()
        .map(|(u, n)| format!("{} {u}", quantity(*n)))
        .collect::<Vec<_>>()
        .join(" + ")
}

/// A quantity: whole numbers without decimals, others to 0.1.
pub fn quantity(x: f64) -> String {
    if x.is_finite() && (x - x.round()).abs() < 1e-9 {
        format!("{x:.0}")
    } else {
        f1(x)
    }
}

/// The head end's power, "per channel / composite" dBm, or "—".
fn head_end(r: &Remediation) -> String {
    r.distribution
        .as_ref()
        .map(|d| format!("{} / {}", f1(d.per_channel_dbm), f1(d.composite_dbm)))
        .unwrap_or_else(|| DASH.into())
}

/// One row of the comparison table.
fn compare_row(site: &Site, before: &[ServiceResult], r: &Remediation) -> Value {
    let svcs = option_services(r);
    let floors: Vec<Vec<String>> = site
        .floors
        .iter()
        .map(|f| {
            let cells: Vec<String> = svcs
                .iter()
                .filter_map(|s| floor_cell(before, s, &f.id, svcs.len() > 1))
                .collect();
            if cells.is_empty() {
                vec![DASH.to_string()]
            } else {
                cells
            }
        })
        .collect();
    json!({
        "title": r.title, "recommended": r.recommended,
        "service": option_service_label(site, r),
        "antennas": r.antennas.len().to_string(), "cable": cable_total(r), "head_end": head_end(r),
        "floors": floors,
    })
}

/// The option's service by name, or "all services".
fn option_service_label(site: &Site, r: &Remediation) -> String {
    r.service
        .as_deref()
        .map(|s| service_name(site, s))
        .unwrap_or_else(|| "all services".into())
}

/// The comparison of the options that change the site (those with a prediction), against
/// the site's own verdicts `before`.
pub fn comparison(site: &Site, before: &[ServiceResult], options: &[Remediation]) -> Value {
    json!({
        "floors": site.floors.iter().map(|f| f.name.clone()).collect::<Vec<_>>(),
        "rows": options.iter().filter(|r| r.after.is_some()).map(|r| compare_row(site, before, r)).collect::<Vec<_>>(),
    })
}

/// A change in words, e.g. "walls L1-south → clear-glazing".
pub fn change_words(site: &Site, c: &Change) -> String {
    let u = site.units;
    match c {
        Change::SetMaterial {
            walls,
            material,
            thickness_m,
        } => {
            let t = thickness_m
                .map(|t| format!(", {} {} thick", f1(u.from_m(t)), u.label()))
                .unwrap_or_default();
            format!("walls {} → {material}{t}", walls.join(", "))
        }
        Change::RemoveWalls { walls } => format!("walls {} removed", walls.join(", ")),
        Change::SetPower {
            transmitter,
            power_dbm,
        } => format!(
            "transmitter {transmitter}: conducted power → {} dBm",
            f1(*power_dbm)
        ),
    }
}

/// Every change of an option in words: wall and power changes, then the added antennas.
fn changes_words(site: &Site, r: &Remediation) -> Vec<String> {
    let ul = site.units.label();
    let mut out: Vec<String> = r.changes.iter().map(|c| change_words(site, c)).collect();
    out.extend(r.antennas.iter().map(|x| {
        format!(
            "antenna {} added on {} at ({}, {}) {ul}",
            x.id,
            floor_name(site, &x.floor),
            installer::f2(x.position[0]),
            installer::f2(x.position[1])
        )
    }));
    out
}

/// A finding change as a row: id, before, after ("resolved" when gone), note.
pub fn finding_change_row(c: &FindingChange) -> [String; 4] {
    [
        c.id.clone(),
        c.before
            .map(|s| s.label().to_string())
            .unwrap_or_else(|| "new".into()),
        c.after
            .map(|s| s.label().to_string())
            .unwrap_or_else(|| "resolved".into()),
        c.note.clone(),
    ]
}

/// One option's detail: what it changes, caveats, finding changes, and for a recommended
/// option its installer pages (`design`).
fn option_view(
    site: &Site,
    r: &Remediation,
    figure_names: &std::collections::BTreeMap<String, String>,
) -> Value {
    json!({
        "id": r.id, "title": r.title, "recommended": r.recommended, "predicted": r.after.is_some(),
        "service": option_service_label(site, r), "detail": r.detail, "expected": r.expected,
        "margin": f1(r.margin_needed_db), "caveats": r.caveats, "changes": changes_words(site, r),
        "floors": r.floors.iter().map(|f| floor_name(site, f)).collect::<Vec<_>>().join(", "),
        "verdict": option_services(r).iter().map(|s| format!("{}: {}", s.name, after_words(site, s))).collect::<Vec<_>>(),
        "finding_changes": r.after.iter().flat_map(|a| a.findings.iter()).map(finding_change_row).collect::<Vec<_>>(),
        "design": if r.recommended { installer::design_view(site, r, figure_names) } else { Value::Null },
    })
}

/// The remediation section: comparison, advice-only options, and every option's detail.
pub fn options_view(
    site: &Site,
    a: &Assessment,
    figure_names: &std::collections::BTreeMap<String, String>,
) -> Value {
    json!({
        "compare": comparison(site, &a.services, &a.remediation),
        "advice": a.remediation.iter().filter(|r| r.after.is_none()).map(|r| json!({
            "title": r.title, "service": option_service_label(site, r), "margin": f1(r.margin_needed_db),
            "floors": r.floors.iter().map(|f| floor_name(site, f)).collect::<Vec<_>>().join(", "),
        })).collect::<Vec<_>>(),
        "options": a.remediation.iter().map(|r| option_view(site, r, figure_names)).collect::<Vec<_>>(),
    })
}
