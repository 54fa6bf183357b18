//! The pages of a recommended option: its service's coverage after the option on every
//! floor (drawn by [`crate::charts::coverage_map`] from the option's graded layers, the new
//! antennas marked apart from the site's own), the installer schedule, the head end's
//! power and the bill of quantities. Every number is the assessment's; positions and
//! lengths are in site units to 0.01, powers and losses in dB(m) to 0.1.

use std::collections::BTreeMap;

use rfsite_model::names::{figure_file, figure_stem};
use rfsite_model::{Site, SiteChange};
use rfsite_plugin::{Assessment, Change, CoverageLayer, Distribution, FeedLine, Remediation};
use serde_json::{json, Value};

use crate::charts::{self, AddedAntenna};
use crate::options::{after_words, floor_name, option_services, quantity, DASH};
use crate::{f1, model_name, pct};

/// A length or coordinate to 0.01.
pub fn f2(x: f64) -> String {
    if x.is_finite() {
        format!("{x:.2}")
    } else {
        "n/a".into()
    }
}

/// The after-map of an option's floor and service: `option-map-<option>.<floor>.<service>.svg`.
pub fn after_figure_name(option: &str, floor: &str, service: &str) -> String {
    figure_file(&figure_stem("option-map", &[option, floor, service]))
}

/// The site as the option leaves its walls (materials changed, walls removed), for drawing.
/// Power changes and added antennas do not show on the plan: the antennas are marked apart.
fn drawn_site(site: &Site, r: &Remediation) -> Site {
    let walls: Vec<SiteChange> = r
        .changes
        .iter()
        .filter_map(|c| match c {
            Change::SetMaterial {
                walls,
                material,
                thickness_m,
            } => Some(SiteChange::SetMaterial {
                walls: walls.clone(),
                material: material.clone(),
                thickness_m: *thickness_m,
            }),
            Change::RemoveWalls { walls } => Some(SiteChange::RemoveWalls {
                walls: walls.clone(),
            }),
            Change::SetPower { .. } => None,
        })
        .collect();
    site.with_changes(&walls)
}

/// The option's added antennas on one floor, for the map.
fn added_on(r: &Remediation, floor: &str, service: &str) -> Vec<AddedAntenna> {
    r.antennas
        .iter()
        .filter(|x| x.floor == floor && x.service == service)
        .map(|x| AddedAntenna {
            id: x.id.clone(),
            x: x.position[0],
            y: x.position[1],
        })
        .collect()
}

/// The graded after-layers of an option's services: (layer, required predicted level).
fn after_layers(r: &Remediation) -> Vec<(&CoverageLayer, f64, f64)> {
    let mut out = Vec::new();
    for s in option_services(r) {
        for l in r
            .after_layers
            .iter()
            .filter(|l| l.service == s.id && l.model == s.model)
        {
            out.push((l, s.required.predicted_dbm, s.required.measured_dbm));
        }
    }
    out
}

/// Draws the after-maps of every recommended option: file name -> SVG. Survey markers are
/// left off: they describe the building as it is.
pub fn after_maps(
    site: &Site,
    a: &Assessment,
    backdrops: &crate::Backdrops<'_>,
) -> Result<Vec<(String, String)>, String> {
    let mut out = Vec::new();
    for r in a.remediation.iter().filter(|r| r.recommended) {
        let drawn = drawn_site(site, r);
        for (l, req, req_m) in after_layers(r) {
            let added = added_on(r, &l.floor, &l.service);
            let backdrop = backdrops.floor(&l.floor);
            let svg = charts::coverage_map(&drawn, l, req, req_m, &[], backdrop, &added)?;
            out.push((after_figure_name(&r.id, &l.floor, &l.service), svg));
        }
    }
    Ok(out)
}

/// The after-map entries of a recommended option (figure file and caption), per floor of
/// its service; a floor whose map was not drawn is left out.
fn map_entries(
    site: &Site,
    r: &Remediation,
    figure_names: &BTreeMap<String, String>,
) -> Vec<Value> {
    let mut out = Vec::new();
    for s in option_services(r) {
        for fr in &s.floors {
            let fig = after_figure_name(&r.id, &fr.id, &s.id);
            if !figure_names.contains_key(&fig) {
                continue;
            }
            let caption = format!(
                "After the option: {} prediction of {} on {}, {} ({} of the floor at or above the required {} dBm). Squares labelled \"new\" are the antennas the option adds, triangles the site's own; survey markers are left off, as they describe the building as it is.",
                model_name(&s.model), s.name, floor_name(site, &fr.id),
                if fr.pass { "PASS" } else { "FAIL" }, pct(Some(fr.predicted_area_fraction)), f1(s.required.predicted_dbm)
            );
            out.push(json!({"figure": fig, "caption": caption, "floor": floor_name(site, &fr.id)}));
        }
    }
    out
}

/// The feed of an antenna, if the option worked one out.
fn feed_of<'a>(r: &'a Remediation, antenna: &str) -> Option<&'a FeedLine> {
    r.distribution
        .as_ref()
        .and_then(|d| d.feeds.iter().find(|f| f.antenna == antenna))
}

/// The installer schedule: one row per added antenna.
pub fn installer_rows(site: &Site, r: &Remediation) -> Vec<Vec<String>> {
    r.antennas
        .iter()
        .map(|x| {
            let feed = feed_of(r, &x.id);
            let or_dash = |v: Option<f64>| v.map(f1).unwrap_or_else(|| DASH.into());
            vec![
                x.id.clone(),
                floor_name(site, &x.floor),
                f2(x.position[0]),
                f2(x.position[1]),
                f2(x.height),
                or_dash(feed.map(|f| f.port_dbm)),
                or_dash(feed.map(|f| f.eirp_dbm)),
                f1(feed.map_or(x.cable_loss_db + x.connector_loss_db, |f| f.total_db)),
                feed.map(|f| format!("{} + {}", f2(f.horizontal_m), f2(f.riser_m)))
                    .unwrap_or_else(|| DASH.into()),
                feed.map(|f| f.mounting.clone())
                    .filter(|m| !m.is_empty())
                    .unwrap_or_else(|| DASH.into()),
            ]
        })
        .collect()
}

/// 10·log10 of a channel count, dB.
pub fn channels_db(n: u32) -> f64 {
    10.0 * f64::from(n.max(1)).log10()
}

/// The relation of per-channel and composite power, with the option's numbers; a note when
/// the numbers do not satisfy it (more than 0.05 dB apart).
pub fn power_relation(d: &Distribution) -> String {
    let n_db = channels_db(d.channels);
    let mut s = format!(
        "P_ch = P_comp − 10·log10 N = {} dBm − 10·log10 {} = {} dBm − {} dB = {} dBm (each value rounded to 0.1 dB)",
        f1(d.composite_dbm), d.channels, f1(d.composite_dbm), f1(n_db), f1(d.per_channel_dbm)
    );
    let off = d.per_channel_dbm - (d.composite_dbm - n_db);
    if off.abs() > 0.05 {
        s.push_str(&format!(
            "; the option's figures differ from the relation by {} dB",
            f1(off)
        ));
    }
    s
}

/// The head end's summary as measure/value rows.
pub fn distribution_rows(site: &Site, d: &Distribution) -> Vec<[String; 2]> {
    let ul = site.units.label();
    let margin = if d.exceeded {
        format!("EXCEEDED: {} dB", f1(d.margin_db))
    } else {
        format!("{} dB", f1(d.margin_db))
    };
    vec![
        [
            "Head end".into(),
            format!(
                "{} at ({}, {}) {ul}",
                floor_name(site, &d.head_end_floor),
                f2(d.head_end_position[0]),
                f2(d.head_end_position[1])
            ),
        ],
        ["Feeder cable".into(), d.cable.clone()],
        ["Losses taken at".into(), format!("{} MHz", f1(d.freq_mhz))],
        ["Channels carried (N)".into(), d.channels.to_string()],
        [
            "Output per channel (P_ch)".into(),
            format!("{} dBm", f1(d.per_channel_dbm)),
        ],
        [
            "Composite output (P_comp)".into(),
            format!("{} dBm", f1(d.composite_dbm)),
        ],
        ["Per channel from composite".into(), power_relation(d)],
        [
            "Back-off from the rating".into(),
            format!("{} dB", f1(d.back_off_db)),
        ],
        [
            "Rated composite output".into(),
            format!("{} dBm", f1(d.max_composite_dbm)),
        ],
        ["Margin (rated − back-off − composite)".into(), margin],
    ]
}

/// The pages of a recommended option: maps, installer schedule, head end, quantities.
pub fn design_view(site: &Site, r: &Remediation, figure_names: &BTreeMap<String, String>) -> Value {
    json!({
        "maps": map_entries(site, r, figure_names),
        "verdict": option_services(r).iter().map(|s| format!("{}: {}", s.name, after_words(site, s))).collect::<Vec<_>>(),
        "installer": installer_rows(site, r),
        "distribution": r.distribution.as_ref().map(|d| json!({"rows": distribution_rows(site, d), "exceeded": d.exceeded})),
        "booster": r.booster.as_ref().map(|b| crate::booster::booster_view(site, b)),
        "quantities": r.quantities.iter().map(|q| vec![q.item.clone(), quantity(q.quantity), q.unit.clone(), q.note.clone()]).collect::<Vec<_>>(),
        "units": site.units.label(),
    })
}
