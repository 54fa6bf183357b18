//! Why a floor fails (machine-readable [`Reason`]s) and the findings the grading raises:
//! one per critical zone short of its target, one per group of measured points below the
//! required level.

use rfsite_plugin::*;

use crate::{FloorGrade, FloorInput, FloorOutcome, Judge};

fn reason(criterion: &str, zone: Option<&str>, value: f64, target: f64, text: String) -> Reason {
    Reason {
        criterion: criterion.into(),
        zone: zone.map(str::to_string),
        value,
        target,
        text,
    }
}

fn pct(x: f64) -> String {
    format!("{:.1} %", 100.0 * x)
}

/// Every failed criterion of a floor. `gf`/`cf` are the general and critical area
/// fractions of the predicted points at the predicted required level.
pub fn reasons(
    inp: &FloorInput<'_>,
    grade: &FloorGrade,
    gf: Option<f64>,
    cf: Option<f64>,
    zones: &[ZoneResult],
    no_layer: bool,
) -> Vec<Reason> {
    let (rule, req) = (inp.rule, inp.req);
    let mut out = Vec::new();
    if no_layer {
        out.push(reason(
            "no-coverage",
            None,
            0.0,
            1.0,
            format!("no transmitter of {} reaches this floor", inp.svc.name),
        ));
    }
    if grade.verdict.pass.is_none() {
        out.push(reason(
            "not-judged",
            None,
            0.0,
            1.0,
            format!(
                "no test cell could be judged ({} judges on {})",
                rule.id,
                rule.judge.label()
            ),
        ));
    }
    out.extend(grade.verdict.reasons.iter().cloned());
    if rule.judge != Judge::Measured {
        let lvl = format!("{:.1} dBm", req.predicted_dbm);
        if let Some(g) = gf.filter(|g| *g < rule.target_general) {
            out.push(reason(
                "general-area",
                None,
                g,
                rule.target_general,
                format!(
                    "{} of the general area is predicted at or above {lvl}, target {:.0} %",
                    pct(g),
                    100.0 * rule.target_general
                ),
            ));
        }
        if let Some(c) = cf.filter(|c| *c < rule.target_critical) {
            out.push(reason(
                "critical-area",
                None,
                c,
                rule.target_critical,
                format!(
                    "{} of the critical area is predicted at or above {lvl}, target {:.0} %",
                    pct(c),
                    100.0 * rule.target_critical
                ),
            ));
        }
    }
    for z in zones {
        zone_reasons(inp, z, &mut out);
    }
    out
}

fn zone_reasons(inp: &FloorInput<'_>, z: &ZoneResult, out: &mut Vec<Reason>) {
    let (rule, req) = (inp.rule, inp.req);
    let t = rule.target_critical;
    if rule.judge != Judge::Measured {
        if let Some(a) = z.area_fraction.filter(|a| *a < t) {
            out.push(reason("critical-zone-area", Some(&z.id), a, t, format!("critical zone {}: {} of its area is predicted at or above {:.1} dBm, target {:.0} %", z.name, pct(a), req.predicted_dbm, 100.0 * t)));
        }
    }
    if let Some(c) = z.cell_fraction.filter(|c| *c < t) {
        out.push(reason(
            "critical-zone-cells",
            Some(&z.id),
            c,
            t,
            format!(
                "critical zone {}: {} of its own test cells pass, target {:.0} %",
                z.name,
                pct(c),
                100.0 * t
            ),
        ));
    }
    if let Some(tol) = crate::tolerated_critical_failures(inp.svc, rule) {
        if z.measured_failures > tol {
            out.push(reason("measured-critical", Some(&z.id), z.measured_failures as f64, tol as f64, format!("critical zone {}: {} of {} measured points are below {:.1} dBm, {tol} tolerated", z.name, z.measured_failures, z.measured_points, req.measured_dbm)));
        }
    }
}

fn severity_for(inp: &FloorInput<'_>) -> Severity {
    if inp.svc.life_safety {
        Severity::Critical
    } else {
        Severity::Major
    }
}

/// The findings of one graded floor.
pub fn floor_findings(inp: &FloorInput<'_>, o: &FloorOutcome) -> Vec<Finding> {
    let mut out = Vec::new();
    let floor = &inp.site.floors[inp.fi];
    for z in o.result.critical_zones.iter().filter(|z| !z.pass) {
        out.push(zone_finding(inp, o, z));
    }
    for kind in ["critical", "general"] {
        let f: Vec<&MeasuredFailure> = o.failures.iter().filter(|m| m.zone_kind == kind).collect();
        if f.is_empty() {
            continue;
        }
        let severity = match (kind, inp.svc.life_safety) {
            ("critical", true) => Severity::Critical,
            ("critical", false) => Severity::Major,
            _ if o.result.pass => Severity::Minor,
            _ => Severity::Major,
        };
        out.push(measured_finding(
            inp,
            &f,
            kind,
            severity,
            &floor.id,
            &floor.name,
        ));
    }
    out
}

fn zone_finding(inp: &FloorInput<'_>, o: &FloorOutcome, z: &ZoneResult) -> Finding {
    let floor = &inp.site.floors[inp.fi];
    let (rule, req) = (inp.rule, inp.req);
    let rf = Some(inp.svc.receiver_floor_dbm);
    let weakest = o.zone_weakest.iter().find(|w| w.0 == z.id);
    let mut parts = Vec::new();
    if let Some(a) = z.area_fraction {
        parts.push(format!(
            "{} of its area is predicted at or above the required {}",
            pct(a),
            req.predicted_text()
        ));
    }
    if let Some(c) = z.cell_fraction {
        parts.push(format!(
            "{} of its {} pass",
            pct(c),
            rfsite_plugin::words::count(z.cells, "own test cell", "own test cells")
        ));
    }
    if z.measured_points > 0 {
        parts.push(format!(
            "{} of {} measured points are below {:.1} dBm",
            z.measured_failures, z.measured_points, req.measured_dbm
        ));
    }
    if let Some(w) = weakest {
        parts.push(format!("weakest predicted point {}", level_text(w.2, rf)));
    }
    Finding {
        id: format!("critical-zone-{}-{}-{}", inp.svc.id, floor.id, z.id),
        severity: severity_for(inp),
        floor: Some(floor.id.clone()),
        service: Some(inp.svc.id.clone()),
        title: format!("{} falls short in critical zone {} on {}", inp.svc.name, z.name, floor.name),
        detail: format!(
            "{}; the target for critical areas is {:.0} % ({}). A critical zone is graded by itself, whatever the floor's test cells show{}.",
            parts.join("; "),
            100.0 * rule.target_critical,
            rule.id,
            if inp.svc.life_safety { ", and for a life-safety service its shortfall fails the floor" } else { "" }
        ),
        plugin: "grading".into(),
        shortfall_db: weakest.map(|w| req.predicted_dbm - w.2).filter(|d| d.is_finite()),
        location_m: weakest.map(|w| [w.1.x, w.1.y]),
        causes: vec![],
        remedies: vec![],
    }
}

fn measured_finding(
    inp: &FloorInput<'_>,
    f: &[&MeasuredFailure],
    kind: &str,
    severity: Severity,
    floor_id: &str,
    floor_name: &str,
) -> Finding {
    let u = inp.site.units;
    let rf = Some(inp.svc.receiver_floor_dbm);
    let list: Vec<String> = f
        .iter()
        .take(8)
        .map(|m| {
            format!(
                "{}:{} at ({:.1}, {:.1}) {}{}: measured {}, predicted {}",
                m.file,
                m.line,
                u.from_m(m.position_m[0]),
                u.from_m(m.position_m[1]),
                u.label(),
                zone_name(inp, &m.zone)
                    .map(|z| format!(" in {z}"))
                    .unwrap_or_default(),
                level_text(m.measured_dbm, rf),
                m.predicted_dbm
                    .map(|p| level_text(p, rf))
                    .unwrap_or_else(|| "n/a".into())
            )
        })
        .collect();
    let worst = f
        .iter()
        .min_by(|a, b| a.measured_dbm.total_cmp(&b.measured_dbm));
    Finding {
        id: format!("measured-{}-{}-{}", inp.svc.id, floor_id, kind),
        severity,
        floor: Some(floor_id.to_string()),
        service: Some(inp.svc.id.clone()),
        title: format!(
            "{} below the required level in {} areas of {} ({})",
            rfsite_plugin::words::count(f.len(), "measured point", "measured points"),
            kind,
            floor_name,
            inp.svc.name
        ),
        detail: format!(
            "Survey readings below {}: {}{}.",
            inp.req.measured_text(),
            list.join("; "),
            if f.len() > 8 {
                format!("; and {} more (all in findings.json)", f.len() - 8)
            } else {
                String::new()
            }
        ),
        plugin: "grading".into(),
        shortfall_db: worst.map(|w| inp.req.measured_dbm - w.measured_dbm),
        location_m: worst.map(|w| w.position_m),
        causes: vec![],
        remedies: vec![],
    }
}

fn zone_name(inp: &FloorInput<'_>, id: &str) -> Option<String> {
    inp.site.floors[inp.fi]
        .zones
        .iter()
        .find(|z| z.id == id)
        .map(|z| z.name.clone())
}
