//! # link-budget plugin
//!
//! Turns predicted levels into a verdict: EIRP per transmitter, the margin against each
//! service's threshold (plus its design margin) at every grid point, the fraction of the
//! general and critical area that meets it on each floor, findings that explain the
//! shortfalls, first rule-based remediation options, and the safety and compliance
//! cautions that go with them.

use rfsite_model::{Site, ZoneKind};
use rfsite_physics::{exposure, fspl};
use rfsite_plugin::*;

/// The link-budget plugin.
pub struct LinkBudgetPlugin;

fn fmt1(x: f64) -> String {
    format!("{x:.1}")
}

/// Smallest uniform uplift (dB) that puts `target` of `levels` at or above `thr`.
pub fn uplift_needed_db(levels: &mut [f64], thr: f64, target: f64) -> f64 {
    if levels.is_empty() || target <= 0.0 {
        return 0.0;
    }
    levels.sort_by(f64::total_cmp);
    // The level that `target` of the points are at or above.
    // How many points may stay below (the epsilon absorbs 1 - 0.9 = 0.0999...).
    let k = (((1.0 - target) * levels.len() as f64 + 1e-9).floor() as usize).min(levels.len() - 1);
    (thr - levels[k]).max(0.0)
}

fn fraction_at_or_above(levels: &[f64], thr: f64) -> Option<f64> {
    if levels.is_empty() {
        None
    } else {
        Some(levels.iter().filter(|l| **l >= thr).count() as f64 / levels.len() as f64)
    }
}

/// One worst-point explanation as the multi-wall plugin writes it.
#[derive(Debug, Clone, serde::Deserialize)]
struct WorstPoint {
    floor: String,
    #[serde(default)]
    zone: String,
    service: String,
    point_m: [f64; 2],
    server: String,
    fspl_db: f64,
    walls: Vec<WallGroupIn>,
    floors_crossed: u32,
    floor_loss_db: f64,
    total_loss_db: f64,
}

#[derive(Debug, Clone, serde::Deserialize)]
struct WallGroupIn {
    name: String,
    class: String,
    count: usize,
    loss_db: f64,
}

impl Plugin for LinkBudgetPlugin {
    fn id(&self) -> &str {
        "link-budget"
    }
    fn version(&self) -> &str {
        env!("CARGO_PKG_VERSION")
    }
    fn method(&self) -> Method {
        Method {
            summary: "EIRP = conducted power - cable - connector losses + antenna gain; margin = predicted level - (threshold + design margin); area fraction meeting it per floor and zone kind, graded against the service targets".into(),
            citations: vec![
                "Link budget arithmetic (common practice)".into(),
                "FCC 47 CFR 1.1310 Table 1 and ICNIRP Guidelines (2020) for the exposure distances in the cautions".into(),
            ],
            validity: "as valid as the prediction model it grades; grid points represent equal areas".into(),
        }
    }
    fn after(&self) -> Vec<String> {
        vec![
            "free-space".into(),
            "multi-wall".into(),
            "calibration".into(),
        ]
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        let site = ctx.site;
        // Grade the calibrated prediction when the calibration plugin made one, unless the
        // site names a model for this plugin.
        let default_model = if ctx.layers_of("calibrated").is_empty() {
            site.prediction.model.clone()
        } else {
            "calibrated".to_string()
        };
        let model = ctx.option_str("model", &default_model)?;
        let mut layers = ctx.layers_of(&model);
        let mut out = PluginOutput::default();
        if layers.is_empty() && !site.transmitters.is_empty() {
            out.warnings.push(Warning {
                plugin: self.id().into(),
                message: format!("no `{model}` layers; grading the free-space prediction instead"),
            });
            layers = ctx.layers_of("free-space");
        }
        let worst: Vec<WorstPoint> = ctx
            .output_of("multi-wall")
            .and_then(|o| o.extra.get("worst_points"))
            .and_then(|v| serde_json::from_value(v.clone()).ok())
            .unwrap_or_default();

        for t in &site.transmitters {
            let Some(svc) = site.service(&t.service) else {
                continue;
            };
            let need = svc.threshold_dbm + svc.design_margin_db;
            let budget = t.eirp_dbm() - need; // allowed free-space loss
                                              // Free-space range: invert P.525 for the allowed loss.
            let range_m = 10f64.powf((budget - fspl::fspl_db(svc.freq_mhz, 1.0)) / 20.0);
            out.link_budgets.push(LinkBudget {
                transmitter: t.id.clone(),
                service: t.service.clone(),
                floor: t.floor.clone(),
                power_dbm: t.power_dbm,
                cable_loss_db: t.cable_loss_db,
                connector_loss_db: t.connector_loss_db,
                antenna_gain_dbi: t.antenna_gain_dbi,
                eirp_dbm: t.eirp_dbm(),
                fspl_10m_db: fspl::fspl_db(svc.freq_mhz, 10.0),
                free_space_range_m: range_m,
            });
        }

        for svc in &site.services {
            let thr = svc.threshold_dbm + svc.design_margin_db;
            let mut floors = Vec::new();
            for (fi, floor) in site.floors.iter().enumerate() {
                let layer = layers
                    .iter()
                    .find(|l| l.floor == floor.id && l.service == svc.id);
                let mut general = Vec::new();
                let mut critical = Vec::new();
                if let Some(l) = layer {
                    let g = l.grid.to_grid();
                    for (i, v) in l.level_dbm.iter().enumerate() {
                        if !v.is_finite() {
                            continue;
                        }
                        match floor.zone_kind_at(g.point(i)) {
                            ZoneKind::General => general.push(*v as f64),
                            ZoneKind::Critical => critical.push(*v as f64),
                            ZoneKind::Excluded => {}
                        }
                    }
                } else {
                    // No transmitter for the service: nothing reaches the floor.
                    let g = site.floor_grid(fi);
                    for p in g.points() {
                        if rfsite_geometry::point_in_polygon(p, &floor.outline) {
                            match floor.zone_kind_at(p) {
                                ZoneKind::General => general.push(f64::NEG_INFINITY),
                                ZoneKind::Critical => critical.push(f64::NEG_INFINITY),
                                ZoneKind::Excluded => {}
                            }
                        }
                    }
                }
                let mut all: Vec<f64> = general.iter().chain(critical.iter()).copied().collect();
                let gf = fraction_at_or_above(&general, thr);
                let cf = fraction_at_or_above(&critical, thr);
                let af = fraction_at_or_above(&all, thr).unwrap_or(0.0);
                let pass = gf.is_none_or(|f| f >= svc.target_general)
                    && cf.is_none_or(|f| f >= svc.target_critical);
                let dg = uplift_needed_db(&mut general.clone(), thr, svc.target_general);
                let dc = uplift_needed_db(&mut critical.clone(), thr, svc.target_critical);
                all.sort_by(f64::total_cmp);
                let min = all.first().copied().unwrap_or(f64::NAN);
                let median = all.get(all.len() / 2).copied().unwrap_or(f64::NAN);
                let margin_needed = if pass { 0.0 } else { dg.max(dc) };
                floors.push(FloorResult {
                    id: floor.id.clone(),
                    predicted_area_fraction: af,
                    general_fraction: gf,
                    critical_fraction: cf,
                    pass,
                    min_level_dbm: if min.is_finite() { min } else { -200.0 },
                    median_level_dbm: if median.is_finite() { median } else { -200.0 },
                    margin_needed_db: if margin_needed.is_finite() {
                        margin_needed
                    } else {
                        999.0
                    },
                    points: all.len(),
                });
                // Findings.
                let fr = floors.last().expect("just pushed");
                let pct = |f: Option<f64>| {
                    f.map(|x| format!("{:.1} %", 100.0 * x))
                        .unwrap_or_else(|| "n/a".into())
                };
                if fr.pass {
                    out.findings.push(Finding {
                        id: format!("coverage-{}-{}", svc.id, floor.id),
                        severity: Severity::Info,
                        floor: Some(floor.id.clone()),
                        service: Some(svc.id.clone()),
                        title: format!("{} meets its targets on {}", svc.name, floor.name),
                        detail: format!(
                            "{} of general and {} of critical area at or above {} dBm (threshold {} dBm + design margin {} dB); targets {:.0} % and {:.0} %. Weakest point {} dBm.",
                            pct(fr.general_fraction), pct(fr.critical_fraction), fmt1(thr), fmt1(svc.threshold_dbm), fmt1(svc.design_margin_db),
                            100.0 * svc.target_general, 100.0 * svc.target_critical, fmt1(fr.min_level_dbm)
                        ),
                        plugin: self.id().into(),
                        shortfall_db: None,
                        location_m: None,
                        causes: vec![],
                        remedies: vec![],
                    });
                    continue;
                }
                let critical_fail = fr
                    .critical_fraction
                    .is_some_and(|f| f < svc.target_critical);
                let severity = if svc.life_safety || critical_fail {
                    Severity::Critical
                } else {
                    Severity::Major
                };
                // Explain the weakest point of the zone kind that fails (critical first).
                let general_fail = fr.general_fraction.is_some_and(|f| f < svc.target_general);
                let want = if critical_fail || !general_fail {
                    "critical"
                } else {
                    "general"
                };
                let wp = worst
                    .iter()
                    .find(|w| w.floor == floor.id && w.service == svc.id && w.zone == want)
                    .or_else(|| {
                        worst
                            .iter()
                            .find(|w| w.floor == floor.id && w.service == svc.id)
                    });
                let mut causes = Vec::new();
                let mut location = None;
                if let Some(w) = wp {
                    location = Some(w.point_m);
                    let walls_db: f64 = w.walls.iter().map(|g| g.loss_db).sum();
                    let mut parts: Vec<String> = w
                        .walls
                        .iter()
                        .take(4)
                        .map(|g| format!("{} x {} ({} dB)", g.count, g.name, fmt1(g.loss_db)))
                        .collect();
                    if w.floors_crossed > 0 {
                        parts.push(format!(
                            "{} floor slab(s) ({} dB)",
                            w.floors_crossed,
                            fmt1(w.floor_loss_db)
                        ));
                    }
                    if parts.is_empty() {
                        causes.push(format!(
                            "the weakest point is in free space from {}: {} dB of distance loss alone",
                            w.server, fmt1(w.fspl_db)
                        ));
                    } else {
                        causes.push(format!(
                            "the path from {} to the weakest {} point crosses {}: {} dB of the {} dB path loss (free space {} dB)",
                            w.server,
                            if w.zone.is_empty() { "graded" } else { w.zone.as_str() },
                            parts.join(", "),
                            fmt1(walls_db + w.floor_loss_db),
                            fmt1(w.total_loss_db),
                            fmt1(w.fspl_db)
                        ));
                    }
                    for g in &w.walls {
                        if g.class == "coated glazing" && g.loss_db > 10.0 {
                            causes.push("coated energy-efficient glazing reflects most of the signal that reaches it".into());
                        }
                        if g.class == "metal" && g.loss_db > 10.0 {
                            causes.push(
                                "metal (doors, cladding or shafts) blocks the direct path".into(),
                            );
                        }
                    }
                } else if layer.is_none() {
                    causes.push(format!(
                        "no transmitter of {} serves this floor or reaches it",
                        svc.name
                    ));
                }
                causes.dedup();
                let rid = format!("indoor-antennas-{}-{}", svc.id, floor.id);
                out.findings.push(Finding {
                    id: format!("coverage-{}-{}", svc.id, floor.id),
                    severity,
                    floor: Some(floor.id.clone()),
                    service: Some(svc.id.clone()),
                    title: format!("{} falls short on {}", svc.name, floor.name),
                    detail: format!(
                        "{} of general area (target {:.0} %) and {} of critical area (target {:.0} %) reach {} dBm (threshold {} dBm + design margin {} dB). Weakest point {} dBm, {} dB short. About {} dB more margin across the floor would meet the targets.",
                        pct(fr.general_fraction), 100.0 * svc.target_general, pct(fr.critical_fraction), 100.0 * svc.target_critical,
                        fmt1(thr), fmt1(svc.threshold_dbm), fmt1(svc.design_margin_db), fmt1(fr.min_level_dbm), fmt1(thr - fr.min_level_dbm), fmt1(fr.margin_needed_db)
                    ),
                    plugin: self.id().into(),
                    shortfall_db: Some(thr - fr.min_level_dbm),
                    location_m: location,
                    causes: causes.clone(),
                    remedies: vec![rid.clone()],
                });
                // Remediation, rule-based.
                let on_floor = site
                    .transmitters
                    .iter()
                    .filter(|t| t.service == svc.id && t.floor == floor.id)
                    .count();
                let area = floor.area_m2();
                // Coverage radius of a typical indoor antenna (15 dBm EIRP) with 15 dB of
                // clutter loss beyond free space (common practice planning figure).
                let allowed = 15.0 - thr - 15.0;
                let r = 10f64
                    .powf((allowed - fspl::fspl_db(svc.freq_mhz, 1.0)) / 20.0)
                    .clamp(3.0, 60.0);
                let failing = (1.0 - fr.predicted_area_fraction).max(0.0) * area;
                let n_new =
                    ((failing / (std::f64::consts::PI * r * r * 0.6)).ceil() as usize).max(1);
                let (title, detail) = if fr.margin_needed_db <= 6.0 && on_floor > 0 {
                    (
                        format!("Raise the EIRP or add one antenna on {} for {}", floor.name, svc.name),
                        format!("The floor needs about {} dB more. Raising the feed power of the {} antenna(s) on this floor by that much, or adding one antenna near the weakest area, is expected to close the gap.", fmt1(fr.margin_needed_db), on_floor),
                    )
                } else {
                    (
                        format!("Add about {n_new} indoor antenna(s) on {} for {}", floor.name, svc.name),
                        format!(
                            "About {:.0} m² of the floor falls short by up to {} dB. With a typical 15 dBm EIRP ceiling antenna reaching about {:.0} m through partitions, roughly {n_new} more antenna(s) on a distributed antenna system, placed in the failing areas and on the far side of cores and coated glazing, are needed.",
                            failing, fmt1(fr.margin_needed_db), r
                        ),
                    )
                };
                out.remediation.push(Remediation {
                    id: rid,
                    title,
                    service: Some(svc.id.clone()),
                    floors: vec![floor.id.clone()],
                    detail,
                    margin_needed_db: fr.margin_needed_db,
                    expected: format!("general and critical areas to their targets ({:.0} % / {:.0} %) at {} dBm", 100.0 * svc.target_general, 100.0 * svc.target_critical, fmt1(thr)),
                    caveats: vec!["rule-based estimate: confirm with a revised prediction and an acceptance survey".into()],
                    plugin: self.id().into(),
                });
            }
            let pass = floors.iter().all(|f| f.pass);
            let failing: Vec<String> = floors
                .iter()
                .filter(|f| !f.pass)
                .map(|f| f.id.clone())
                .collect();
            if !failing.is_empty() && site.donors.iter().any(|d| d.service == svc.id) {
                let best = site
                    .donors
                    .iter()
                    .filter(|d| d.service == svc.id)
                    .map(|d| d.level_dbm)
                    .fold(f64::NEG_INFINITY, f64::max);
                out.remediation.push(Remediation {
                    id: format!("repeater-{}", svc.id),
                    title: format!("Off-air repeater for {} fed by a rooftop donor antenna", svc.name),
                    service: Some(svc.id.clone()),
                    floors: failing.clone(),
                    detail: format!(
                        "The outdoor signal measured at the facade is {} dBm. A repeater (bi-directional amplifier) fed by a directional donor antenna on the roof, distributing to indoor antennas on floors {}, brings that signal inside without relying on the facade.",
                        fmt1(best), failing.join(", ")
                    ),
                    margin_needed_db: floors.iter().map(|f| f.margin_needed_db).fold(0.0, f64::max),
                    expected: "indoor levels set by the repeater's output and the antenna layout, independent of facade loss".into(),
                    caveats: vec![
                        "donor-to-server antenna isolation must exceed the repeater gain by a safe margin (commonly 15 dB or more, common practice) to avoid oscillation".into(),
                        "retransmitting a licensee's signal needs the licensee's consent and the regulator's rules for signal boosters".into(),
                    ],
                    plugin: self.id().into(),
                });
            }
            floors.sort_by(|a, b| a.id.cmp(&b.id));
            out.services.push(ServiceResult {
                id: svc.id.clone(),
                name: svc.name.clone(),
                freq_mhz: svc.freq_mhz,
                threshold_dbm: svc.threshold_dbm,
                design_margin_db: svc.design_margin_db,
                target_general: svc.target_general,
                target_critical: svc.target_critical,
                model: layers
                    .first()
                    .map(|l| l.model.clone())
                    .unwrap_or_else(|| model.clone()),
                floors,
                pass,
            });
        }
        out.cautions = cautions(site);
        if site.prediction.combine == rfsite_model::Combine::Strongest {
            out.warnings.push(Warning { plugin: self.id().into(), message: "transmitters of one service combine by the strongest server (no power summing): conservative for a DAS carrying one signal".into() });
        }
        Ok(out)
    }
}

/// The safety and compliance cautions for a site.
pub fn cautions(site: &Site) -> Vec<Caution> {
    let mut c = Vec::new();
    // Exposure: the largest EIRP per service, with both general-public limits.
    let mut lines = Vec::new();
    for svc in &site.services {
        let Some(t) = site
            .transmitters
            .iter()
            .filter(|t| t.service == svc.id)
            .max_by(|a, b| a.eirp_dbm().total_cmp(&b.eirp_dbm()))
        else {
            continue;
        };
        let eirp_w = 10f64.powf((t.eirp_dbm() - 30.0) / 10.0);
        let mut parts = Vec::new();
        for lim in [
            exposure::ExposureLimit::FccGeneral,
            exposure::ExposureLimit::IcnirpGeneral,
        ] {
            if let Ok(s) = exposure::limit_w_per_m2(lim, svc.freq_mhz) {
                let d = exposure::compliance_distance_m(eirp_w, s);
                parts.push(format!(
                    "{} {} {}",
                    lim.id(),
                    format_args!("{:.2}", site.units.from_m(d)),
                    site.units.label()
                ));
            }
        }
        if !parts.is_empty() {
            lines.push(format!(
                "{} ({} at {} dBm EIRP): {}",
                svc.name,
                t.id,
                fmt1(t.eirp_dbm()),
                parts.join(", ")
            ));
        }
    }
    c.push(Caution {
        id: "rf-exposure".into(),
        topic: "RF exposure near antennas".into(),
        text: format!(
            "Far-field compliance distances for the strongest antenna of each service, general-public limits: {}. Keep people outside these distances; roof-mounted donor antennas and any antenna near occupied space need an exposure evaluation under the applicable rules (FCC 47 CFR 1.1310, ICNIRP 2020 or local law) before energising. Post signage where required.",
            if lines.is_empty() { "no transmitters defined".to_string() } else { lines.join("; ") }
        ),
    });
    c.push(Caution {
        id: "work-at-height".into(),
        topic: "Work at height and on roofs".into(),
        text: "Installing ceiling antennas, cable trays and rooftop donor antennas is work at height: it needs a competent person, fall protection and the building owner's permit-to-work; roof work also needs weather limits and an exclusion zone below.".into(),
    });
    c.push(Caution {
        id: "electrical-fire-stopping".into(),
        topic: "Electrical work and fire-stopping".into(),
        text: "Power for amplifiers and head-end equipment is electrical work for a licensed electrician. Every cable penetration of a fire-rated wall or floor must be re-sealed with a listed fire-stopping system, and cable types must suit the space they run in (plenum, riser).".into(),
    });
    if site.services.iter().any(|s| s.life_safety) {
        c.push(Caution {
            id: "life-safety-radio".into(),
            topic: "Life-safety radio systems".into(),
            text: "Public-safety in-building radio coverage is regulated by the fire code adopted where the building stands and by the authority having jurisdiction (AHJ), which sets the signal levels, the critical areas, acceptance testing, survivability (pathway rating, battery back-up) and monitoring. The figures in this report are predictions for design and do not replace the AHJ's acceptance test. Amplifiers on public-safety frequencies need the licensee's authorisation and must be installed by appropriately licensed or certified personnel.".into(),
        });
    }
    c.push(Caution {
        id: "local-codes".into(),
        topic: "Codes and licensed practice".into(),
        text: "This assessment defers to local codes, the authority having jurisdiction and licensed professional practice wherever they differ from or go beyond it.".into(),
    });
    c
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn uplift_for_a_quantile() {
        // Hand count: 10 levels -100..-91; 90 % at or above -95 dBm needs the 2nd lowest
        // (-99) to rise to -95: 4 dB.
        let mut v: Vec<f64> = (0..10).map(|i| -100.0 + i as f64).collect();
        assert!((uplift_needed_db(&mut v, -95.0, 0.9) - 4.0).abs() < 1e-12);
        let mut v: Vec<f64> = (0..10).map(|i| -100.0 + i as f64).collect();
        assert_eq!(uplift_needed_db(&mut v, -120.0, 0.9), 0.0);
    }
}
