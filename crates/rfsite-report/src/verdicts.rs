//! The verdict parts of the view model: one line per service for the cover and the
//! summary (life-safety services first, as the assessment orders them), and one page per
//! floor and service, every percentage labelled with the level it is measured against.
//! Nothing here grades: every verdict and fraction is the grading plugin's.

use rfsite_model::Site;
use rfsite_plugin::{level_text, Assessment, FloorResult, ServiceResult};
use serde_json::{json, Value};

use crate::{f1, pct};

/// A site service's verdict line, or "NOT ASSESSED" when no plugin graded it.
pub fn service_lines(site: &Site, a: &Assessment) -> Vec<Value> {
    let mut v: Vec<Value> = a
        .services
        .iter()
        .map(|s| {
            let fp = s.floors.iter().filter(|f| f.pass).count();
            json!({
                "id": s.id, "service": s.name, "freq": f1(s.freq_mhz), "threshold": f1(s.threshold_dbm),
                "life_safety": s.life_safety, "pass": s.pass, "assessed": true,
                "verdict": if s.pass { "PASS" } else { "FAIL" },
                "required": f1(s.required.predicted_dbm), "required_measured": f1(s.required.measured_dbm),
                "floors_pass": fp, "floors": s.floors.len(),
                "line": format!(
                    "{}{}: {} — {} of {} floors pass at the required {} dBm ({})",
                    s.name, if s.life_safety { " (life safety)" } else { "" },
                    if s.pass { "PASS" } else { "FAIL" }, fp, s.floors.len(), f1(s.required.predicted_dbm), s.rule
                ),
            })
        })
        .collect();
    for svc in site
        .services
        .iter()
        .filter(|x| !a.services.iter().any(|s| s.id == x.id))
    {
        v.push(json!({
            "id": svc.id, "service": svc.name, "freq": f1(svc.freq_mhz), "threshold": f1(svc.threshold_dbm),
            "life_safety": svc.life_safety, "pass": false, "assessed": false, "verdict": "NOT ASSESSED",
            "required": "n/a", "required_measured": "n/a", "floors_pass": 0, "floors": site.floors.len(),
            "line": format!("{}: NOT ASSESSED — no verdict was produced, so none is claimed", svc.name),
            "text": format!("{} was not assessed: no grading ran for it, so this report claims no pass.", svc.name),
            "model": "",
        }));
    }
    v
}

/// Whether every service of the site was graded and passes.
pub fn overall_pass(site: &Site, a: &Assessment) -> bool {
    site.services
        .iter()
        .all(|svc| a.services.iter().any(|s| s.id == svc.id && s.pass))
}

/// The measure/value rows of a floor page.
pub fn floor_rows(s: &ServiceResult, fr: &FloorResult) -> Vec<[String; 2]> {
    let req = &s.required;
    let lvl = format!("{} dBm", f1(req.predicted_dbm));
    let rf = s.receiver_floor_dbm;
    let mut rows = vec![
        [
            "Verdict of record".to_string(),
            format!("{} ({})", if fr.pass { "PASS" } else { "FAIL" }, s.rule),
        ],
        [
            "Downlink (network to handset)".into(),
            direction_word(fr.downlink_pass),
        ],
        ["Uplink (handset to network)".into(), uplink_word(fr)],
        [
            "Required level, predicted points".into(),
            req.predicted_text(),
        ],
        [
            "Required level, measured points and cells".into(),
            req.measured_text(),
        ],
        [
            format!(
                "General area at or above {lvl} (target {:.0} %)",
                100.0 * s.target_general
            ),
            pct(fr.general_fraction),
        ],
        [
            format!(
                "Critical area at or above {lvl} (target {:.0} %)",
                100.0 * s.target_critical
            ),
            pct(fr.critical_fraction),
        ],
        [
            format!(
                "General test cells passing (target {:.0} %)",
                100.0 * s.target_general
            ),
            pct(fr.general_cell_fraction),
        ],
        [
            format!(
                "Critical test cells passing (target {:.0} %)",
                100.0 * s.target_critical
            ),
            pct(fr.critical_cell_fraction),
        ],
    ];
    for z in &fr.critical_zones {
        rows.push([
            format!(
                "Critical zone {}: area at or above {lvl} / own cells passing",
                z.name
            ),
            format!(
                "{} / {}{}",
                pct(z.area_fraction),
                pct(z.cell_fraction),
                if z.pass { "" } else { " — FAIL" }
            ),
        ]);
    }
    rows.push([
        format!("Measured points below {} dBm", f1(req.measured_dbm)),
        format!("{} of {}", fr.measured_failures, fr.measured_points),
    ]);
    rows.push([
        "Weakest / median predicted level".into(),
        format!(
            "{} / {}",
            level_text(fr.min_level_dbm, rf),
            level_text(fr.median_level_dbm, rf)
        ),
    ]);
    rows.push([
        "Uniform uplift that would meet the area targets".into(),
        if fr.margin_needed_db >= 999.0 {
            "no signal to raise".into()
        } else {
            format!("{} dB", f1(fr.margin_needed_db))
        },
    ]);
    rows.push(["Grid points graded".into(), fr.points.to_string()]);
    rows
}

/// The handlebars context of a floor page's summary sentence.
pub fn floor_context(site: &Site, s: &ServiceResult, fr: &FloorResult) -> Value {
    let name = site
        .floor(&fr.id)
        .map(|f| f.name.clone())
        .unwrap_or(fr.id.clone());
    json!({
        "floor": name, "service": s.name, "pass": fr.pass,
        "general": pct(fr.general_fraction), "critical": pct(fr.critical_fraction),
        "area": pct(Some(fr.predicted_area_fraction)),
        "min": level_text(fr.min_level_dbm, s.receiver_floor_dbm),
        "needed": f1(fr.margin_needed_db), "required": f1(s.required.predicted_dbm),
        "has_critical": fr.critical_fraction.is_some(),
        "reasons": fr.reasons.iter().map(|r| r.text.clone()).collect::<Vec<_>>().join("; "),
    })
}

/// The handlebars context of a service's verdict sentence.
pub fn service_context(site: &Site, s: &ServiceResult) -> Value {
    let ff: Vec<String> = s
        .floors
        .iter()
        .filter(|f| !f.pass)
        .map(|f| {
            site.floor(&f.id)
                .map(|x| x.name.clone())
                .unwrap_or(f.id.clone())
        })
        .collect();
    json!({
        "service": s.name, "freq_mhz": f1(s.freq_mhz), "threshold_dbm": f1(s.threshold_dbm),
        "design_margin_db": f1(s.design_margin_db), "shadowing_margin_db": f1(s.required.shadowing_margin_db),
        "required_predicted": f1(s.required.predicted_dbm), "required_measured": f1(s.required.measured_dbm),
        "pass": s.pass, "failing_floors": ff.join(", "), "failing_count": ff.len(), "floor_count": s.floors.len(),
        "target_general": format!("{:.0} %", 100.0 * s.target_general), "target_critical": format!("{:.0} %", 100.0 * s.target_critical),
        "rule": s.rule, "life_safety": s.life_safety,
    })
}

fn direction_word(pass: Option<bool>) -> String {
    match pass {
        Some(true) => "PASS".into(),
        Some(false) => "FAIL".into(),
        None => "NOT ASSESSED".into(),
    }
}

/// The uplink's verdict in words, with its area fractions when assessed.
pub fn uplink_word(fr: &FloorResult) -> String {
    match &fr.uplink {
        Some(u) if u.assessed => format!(
            "{} (general {}, critical {})",
            if u.pass { "PASS" } else { "FAIL" },
            pct(u.general_fraction),
            pct(u.critical_fraction)
        ),
        _ => "NOT ASSESSED".into(),
    }
}
