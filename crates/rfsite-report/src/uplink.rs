//! The uplink section: per service, the budget from the handset to the network receiver
//! and each floor's verdict in both directions, as the grading left them.

use rfsite_model::Site;
use rfsite_plugin::{Assessment, BudgetLine, ServiceResult};
use serde_json::{json, Value};

use crate::f1;
use crate::verdicts::uplink_word;

fn value(l: &BudgetLine) -> String {
    if l.unit == "dBm" {
        format!("{} dBm", f1(l.value))
    } else {
        format!("{:+.1} dB", l.value)
    }
}

fn floor_rows(site: &Site, s: &ServiceResult) -> Vec<[String; 4]> {
    s.floors
        .iter()
        .map(|f| {
            let name = site.floor(&f.id).map_or(f.id.clone(), |x| x.name.clone());
            let dl = match f.downlink_pass {
                Some(true) => "PASS",
                Some(false) => "FAIL",
                None => "NOT ASSESSED",
            };
            let record = if f.pass { "PASS" } else { "FAIL" };
            [name, dl.to_string(), uplink_word(f), record.to_string()]
        })
        .collect()
}

/// One entry per graded service: `assessed`, `path`, `why_not`, the budget `lines`
/// (label, value, source), the `shift`, the noise rise and the per-floor `floors` rows
/// (floor, downlink, uplink, verdict of record).
pub fn uplink_view(site: &Site, a: &Assessment) -> Vec<Value> {
    a.services
        .iter()
        .map(|s| {
            let b = s.uplink.clone().unwrap_or_default();
            let rule = if s.life_safety {
                "life safety: a floor passes only when both directions pass"
            } else {
                "a floor whose uplink was assessed passes only when both directions pass; otherwise on the downlink alone"
            };
            json!({
                "service": s.name,
                "assessed": b.assessed,
                "path": b.path,
                "why_not": b.why_not,
                "rule": rule,
                "lines": b.lines.iter().map(|l| [l.label.clone(), value(l), l.source.clone()]).collect::<Vec<_>>(),
                "shift": format!("{:+.1}", b.shift_db),
                "noise_rise": b.noise_rise_db.map(|r| format!("{r:.2}")).unwrap_or_default(),
                "floors": floor_rows(site, s),
            })
        })
        .collect()
}
