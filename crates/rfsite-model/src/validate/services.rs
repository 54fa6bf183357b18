//! `[[services]]`: frequency, threshold, targets, receiver floor and the uplink.

use std::collections::BTreeSet;

use super::{receiver_floor, twoway, V};
use crate::raw::*;
use crate::site::*;

/// Every service entry that has an id.
pub(super) fn services(v: &mut V<'_>, raw: &RawProject) -> Vec<Service> {
    let mut services = Vec::new();
    let mut service_ids = BTreeSet::new();
    if raw.services.is_empty() {
        v.error(
            0..1,
            "the site has no `[[services]]`",
            Some("add a `[[services]]` with `id`, `freq_mhz` and `threshold_dbm`".into()),
        );
    }
    for rs in &raw.services {
        if let Some(sv) = service(v, rs, &mut service_ids) {
            services.push(sv);
        }
    }
    services
}

/// One `[[services]]` entry, or None without an id (reported).
fn service(
    v: &mut V<'_>,
    rs: &S<RawService>,
    service_ids: &mut BTreeSet<String>,
) -> Option<Service> {
    let span = rs.span();
    let s = rs.get_ref();
    let Some(idv) = &s.id else {
        v.error(span, "`[[services]]` entry is missing `id`", None);
        return None;
    };
    v.unique(service_ids, idv, "service");
    let what = format!("service `{}`", idv.get_ref());
    let freq = v
        .req(
            &s.freq_mhz,
            span.clone(),
            &what,
            "freq_mhz",
            "add the centre frequency, e.g. `freq_mhz = 770.0`",
        )
        .copied();
    if let (Some(f), Some(fs)) = (freq, &s.freq_mhz) {
        if !(1.0..=100_000.0).contains(&f) {
            v.error(
                fs.span(),
                format!("frequency {f} MHz is outside 1 MHz to 100 GHz"),
                Some("`freq_mhz` is in MHz: 2.4 GHz is 2400".into()),
            );
        }
    }
    let thr = v
        .req(
            &s.threshold_dbm,
            span.clone(),
            &what,
            "threshold_dbm",
            "add e.g. `threshold_dbm = -95.0`",
        )
        .copied();
    let tg = s
        .target_general
        .as_ref()
        .and_then(|t| v.fraction(t, "target_general"))
        .unwrap_or(0.95);
    let tc = s
        .target_critical
        .as_ref()
        .and_then(|t| v.fraction(t, "target_critical"))
        .unwrap_or(0.99);
    let metric = s
        .metric
        .as_ref()
        .map(|m| m.get_ref().clone())
        .unwrap_or_else(|| "rssi-dbm".into());
    if metric != "rssi-dbm" {
        if let Some(ms) = &s.metric {
            v.error(
                ms.span(),
                format!("unknown metric `{metric}`"),
                Some(
                    "this version grades `rssi-dbm` (received power at an isotropic antenna)"
                        .into(),
                ),
            );
        }
    }
    let life_safety = s
        .life_safety
        .as_ref()
        .map(|d| *d.get_ref())
        .unwrap_or(false);
    let (bandwidth_khz, noise_figure_db, receiver_floor_dbm) = receiver_floor(v, s, life_safety);
    Some(Service {
        id: idv.get_ref().clone(),
        name: s
            .name
            .as_ref()
            .map(|n| n.get_ref().clone())
            .unwrap_or_else(|| idv.get_ref().clone()),
        freq_mhz: freq.unwrap_or(1000.0),
        metric,
        threshold_dbm: thr.unwrap_or(-95.0),
        target_general: tg,
        target_critical: tc,
        design_margin_db: s
            .design_margin_db
            .as_ref()
            .map(|d| *d.get_ref())
            .unwrap_or(0.0),
        life_safety,
        rules: s.rules.as_ref().map(|r| r.get_ref().clone()),
        bandwidth_khz,
        noise_figure_db,
        receiver_floor_dbm,
        uplink: twoway::uplink(v, &s.uplink, life_safety, idv.get_ref()),
    })
}
