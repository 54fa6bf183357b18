//! # link-budget plugin
//!
//! EIRP per transmitter, and for every floor the verdict of record (from the grading
//! plugin, which runs first) explained: what it reached at the required level, why it
//! falls short (the weakest point's path, wall by wall), first rule-based remediation
//! options, and the safety and compliance cautions that go with them. This plugin never
//! grades: where grading did not run, every service is reported as not assessed.

use rfsite_model::{Service, Site};
use rfsite_physics::{exposure, fspl};
use rfsite_plugin::*;

/// The link-budget plugin.
pub struct LinkBudgetPlugin;

fn fmt1(x: f64) -> String {
    format!("{x:.1}")
}

fn pct(f: Option<f64>) -> String {
    f.map(|x| format!("{:.1} %", 100.0 * x))
        .unwrap_or_else(|| "n/a".into())
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
            summary: "EIRP = conducted power - cable - connector losses + antenna gain; each floor's verdict of record (grading) explained by the weakest point's path loss, wall by wall, with rule-based remediation sized on the margin the floor needs at the required level".into(),
            citations: vec![
                "Link budget arithmetic (common practice)".into(),
                "FCC 47 CFR 1.1310 Table 1 and ICNIRP Guidelines (2020) for the exposure distances in the cautions".into(),
            ],
            validity: "as valid as the prediction model graded; grid points represent equal areas".into(),
        }
    }
    fn after(&self) -> Vec<String> {
        vec![
            "free-space".into(),
            "multi-wall".into(),
            "calibration".into(),
            "grading".into(),
        ]
    }
    fn option_keys(&self) -> Option<Vec<&'static str>> {
        Some(Vec::new())
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        let site = ctx.site;
        let mut out = PluginOutput::default();
        let graded: Vec<ServiceResult> = ctx
            .output_of("grading")
            .map(|o| o.services.clone())
            .unwrap_or_default();
        let worst: Vec<WorstPoint> = ctx
            .output_of("multi-wall")
            .and_then(|o| o.extra.get("worst_points"))
            .and_then(|v| serde_json::from_value(v.clone()).ok())
            .unwrap_or_default();
        out.link_budgets = link_budgets(site, &graded);
        for svc in &site.services {
            let Some(r) = graded.iter().find(|r| r.id == svc.id) else {
                out.findings.push(not_assessed(svc));
                continue;
            };
            for fr in &r.floors {
                let Some(floor) = site.floor(&fr.id) else {
                    continue;
                };
                let e = Explain {
                    site,
                    svc,
                    r,
                    fr,
                    floor_name: &floor.name,
                };
                if fr.pass {
                    out.findings.push(e.passing());
                    continue;
                }
                // The engine lists, per finding, the options whose prediction resolves it.
                out.findings.push(e.failing(&worst));
                out.remediation
                    .extend(e.remediation(format!("raise-power-{}-{}", svc.id, floor.id)));
            }
            if let Some(rep) = repeater_option(site, svc, r) {
                out.remediation.push(rep);
            }
        }
        out.cautions = cautions(site);
        if site.prediction.combine == rfsite_model::Combine::Strongest {
            out.warnings.push(Warning { plugin: self.id().into(), message: "transmitters of one service combine by the strongest server (no power summing): conservative for a DAS carrying one signal".into() });
        }
        Ok(out)
    }
}

/// A service the grading did not judge: never a silent pass.
fn not_assessed(svc: &Service) -> Finding {
    Finding {
        id: format!("not-assessed-{}", svc.id),
        severity: if svc.life_safety { Severity::Critical } else { Severity::Major },
        floor: None,
        service: Some(svc.id.clone()),
        title: format!("{} was not assessed", svc.name),
        detail: "The grading plugin did not run (it is disabled or failed), so no verdict exists for this service; the report states no pass for it.".into(),
        plugin: "link-budget".into(),
        shortfall_db: None,
        location_m: None,
        causes: vec![],
        remedies: vec![],
    }
}

/// EIRP and free-space range per transmitter, at its service's predicted required level.
fn link_budgets(site: &Site, graded: &[ServiceResult]) -> Vec<LinkBudget> {
    let mut v = Vec::new();
    for t in &site.transmitters {
        let Some(svc) = site.service(&t.service) else {
            continue;
        };
        let need = graded
            .iter()
            .find(|r| r.id == svc.id)
            .map(|r| r.required.predicted_dbm)
            .unwrap_or(svc.threshold_dbm + svc.design_margin_db);
        // Free-space range: invert P.525 for the allowed loss.
        let budget = t.eirp_dbm() - need;
        let range_m = 10f64.powf((budget - fspl::fspl_db(svc.freq_mhz, 1.0)) / 20.0);
        v.push(LinkBudget {
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
    v
}

/// One floor's verdict, explained.
struct Explain<'a> {
    site: &'a Site,
    svc: &'a Service,
    r: &'a ServiceResult,
    fr: &'a FloorResult,
    floor_name: &'a str,
}

impl Explain<'_> {
    fn rf(&self) -> Option<f64> {
        self.r.receiver_floor_dbm
    }

    fn reached(&self) -> String {
        let (r, fr) = (self.r, self.fr);
        format!(
            "{} of general area (target {:.0} %) and {} of critical area (target {:.0} %) are predicted at or above the required {}",
            pct(fr.general_fraction), 100.0 * r.target_general, pct(fr.critical_fraction), 100.0 * r.target_critical,
            r.required.predicted_text()
        )
    }

    fn passing(&self) -> Finding {
        let fr = self.fr;
        Finding {
            id: format!("coverage-{}-{}", self.svc.id, fr.id),
            severity: Severity::Info,
            floor: Some(fr.id.clone()),
            service: Some(self.svc.id.clone()),
            title: format!("{} passes its acceptance test on {}", self.svc.name, self.floor_name),
            detail: format!(
                "{}; every critical zone meets its target and the {} cell test passes. Weakest point {}.",
                self.reached(), self.r.rule, level_text(fr.min_level_dbm, self.rf())
            ),
            plugin: "link-budget".into(),
            shortfall_db: None,
            location_m: None,
            causes: vec![],
            remedies: vec![],
        }
    }

    fn critical_fails(&self) -> bool {
        self.fr
            .reasons
            .iter()
            .any(|r| r.criterion.starts_with("critical") || r.criterion == "measured-critical")
    }

    fn failing(&self, worst: &[WorstPoint]) -> Finding {
        let fr = self.fr;
        let severity = if self.svc.life_safety || self.critical_fails() {
            Severity::Critical
        } else {
            Severity::Major
        };
        let want = if self.critical_fails() {
            "critical"
        } else {
            "general"
        };
        let wp = worst
            .iter()
            .find(|w| w.floor == fr.id && w.service == self.svc.id && w.zone == want)
            .or_else(|| {
                worst
                    .iter()
                    .find(|w| w.floor == fr.id && w.service == self.svc.id)
            });
        let mut causes = wp.map(causes_of).unwrap_or_default();
        if fr.reasons.iter().any(|r| r.criterion == "no-coverage") {
            causes.push(format!(
                "no transmitter of {} serves this floor or reaches it",
                self.svc.name
            ));
        }
        causes.dedup();
        let why: Vec<&str> = fr.reasons.iter().map(|r| r.text.as_str()).collect();
        let short = self.r.required.predicted_dbm - fr.min_level_dbm;
        Finding {
            id: format!("coverage-{}-{}", self.svc.id, fr.id),
            severity,
            floor: Some(fr.id.clone()),
            service: Some(self.svc.id.clone()),
            title: format!(
                "{} fails its acceptance test on {}",
                self.svc.name, self.floor_name
            ),
            detail: format!(
                "Fails because: {}. {}. Weakest point {}. {}",
                why.join("; "),
                self.reached(),
                level_text(fr.min_level_dbm, self.rf()),
                if fr.margin_needed_db > 0.0 && fr.margin_needed_db < 999.0 {
                    format!(
                        "About {} dB more at every point would meet the area targets.",
                        fmt1(fr.margin_needed_db)
                    )
                } else {
                    String::new()
                }
            ),
            plugin: "link-budget".into(),
            shortfall_db: short.is_finite().then_some(short),
            location_m: wp.map(|w| w.point_m),
            causes,
            remedies: Vec::new(),
        }
    }

    /// Where a small shortfall meets antennas already on the floor: their power raised by
    /// the margin the floor needs (rounded up to 0.5 dB, plus 0.5 dB), as an option the
    /// engine predicts and grades like any other. `None` otherwise: the antenna designer
    /// and the user's what-if options cover the rest.
    fn remediation(&self, rid: String) -> Option<Remediation> {
        let (site, svc, fr) = (self.site, self.svc, self.fr);
        let on_floor: Vec<&rfsite_model::Transmitter> = site
            .transmitters
            .iter()
            .filter(|t| t.service == svc.id && t.floor == fr.id)
            .collect();
        if fr.margin_needed_db > 6.0 || on_floor.is_empty() {
            return None;
        }
        let raise = (fr.margin_needed_db * 2.0).ceil() / 2.0 + 0.5;
        let changes = on_floor
            .iter()
            .map(|t| Change::SetPower {
                transmitter: t.id.clone(),
                power_dbm: t.power_dbm + raise,
            })
            .collect();
        Some(Remediation {
            id: rid,
            title: format!("Raise the power of the {} on {} for {} by {} dB", rfsite_plugin::words::count(on_floor.len(), "antenna", "antennas"), self.floor_name, svc.name, fmt1(raise)),
            service: Some(svc.id.clone()),
            floors: vec![fr.id.clone()],
            detail: format!("The floor needs about {} dB more at the required level; the antennas already on it are raised by {} dB.", fmt1(fr.margin_needed_db), fmt1(raise)),
            margin_needed_db: fr.margin_needed_db,
            expected: String::new(),
            caveats: vec!["the raised power must stay within the head end's rating and the licence; check the uplink balance as well".into()],
            plugin: "link-budget".into(),
            changes,
            ..Default::default()
        })
    }
}

/// The weakest point's path, in words.
fn causes_of(w: &WorstPoint) -> Vec<String> {
    let mut causes = Vec::new();
    let walls_db: f64 = w.walls.iter().map(|g| g.loss_db).sum();
    let mut parts: Vec<String> = w
        .walls
        .iter()
        .take(4)
        .map(|g| format!("{} x {} ({} dB)", g.count, g.name, fmt1(g.loss_db)))
        .collect();
    if w.floors_crossed > 0 {
        parts.push(format!(
            "{} ({} dB)",
            rfsite_plugin::words::count(w.floors_crossed as usize, "floor slab", "floor slabs"),
            fmt1(w.floor_loss_db)
        ));
    }
    if parts.is_empty() {
        causes.push(format!(
            "the weakest point is in free space from {}: {} dB of distance loss alone",
            w.server,
            fmt1(w.fspl_db)
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
            causes.push(
                "coated energy-efficient glazing reflects most of the signal that reaches it"
                    .into(),
            );
        }
        if g.class == "metal" && g.loss_db > 10.0 {
            causes.push("metal (doors, cladding or shafts) blocks the direct path".into());
        }
    }
    causes
}

/// An off-air repeater fed by a roof donor, where a donor signal exists and floors fail.
fn repeater_option(site: &Site, svc: &Service, r: &ServiceResult) -> Option<Remediation> {
    let failing: Vec<String> = r
        .floors
        .iter()
        .filter(|f| !f.pass)
        .map(|f| f.id.clone())
        .collect();
    if failing.is_empty() || !site.donors.iter().any(|d| d.service == svc.id) {
        return None;
    }
    // With a described donor antenna and booster, the designer's option works the booster
    // out in full; this advice is only for sites without those data.
    let described = |d: &rfsite_model::Donor| d.antenna.is_some() && d.booster.is_some();
    if site
        .donors
        .iter()
        .any(|d| d.service == svc.id && described(d))
    {
        return None;
    }
    let best = site
        .donors
        .iter()
        .filter(|d| d.service == svc.id)
        .map(|d| d.level_dbm)
        .fold(f64::NEG_INFINITY, f64::max);
    Some(Remediation {
        id: format!("repeater-{}", svc.id),
        title: format!("Off-air repeater for {} fed by a rooftop donor antenna", svc.name),
        service: Some(svc.id.clone()),
        floors: failing.clone(),
        detail: format!(
            "The outdoor signal measured at the facade is {} dBm. A repeater (bi-directional amplifier) fed by a directional donor antenna on the roof, distributing to indoor antennas on floors {}, brings that signal inside without relying on the facade.",
            fmt1(best), failing.join(", ")
        ),
        margin_needed_db: r.floors.iter().map(|f| f.margin_needed_db).fold(0.0, f64::max),
        expected: "indoor levels set by the repeater's output and the antenna layout, independent of facade loss".into(),
        caveats: vec![
            "donor-to-server antenna isolation must exceed the repeater gain by a safe margin (commonly 15 dB or more, common practice) to avoid oscillation".into(),
            "retransmitting a licensee's signal needs the licensee's consent and the regulator's rules for signal boosters".into(),
        ],
        plugin: "link-budget".into(),
        ..Default::default()
    })
}

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
                let far = exposure::far_field_min_distance_m(svc.freq_mhz, None);
                let shown = |m: f64| format!("{:.2} {}", site.units.from_m(m), site.units.label());
                parts.push(if d < far {
                    format!(
                        "{} {} (inside the near field, where the far-field formula does not hold: it holds from {})",
                        lim.id(),
                        shown(d),
                        shown(far)
                    )
                } else {
                    format!("{} {}", lim.id(), shown(d))
                });
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
            "Far-field compliance distances for the strongest antenna of each service, general-public limits: {}. Keep people outside these distances. A distance inside the near field is not a compliance distance: the far-field formula holds only from about three wavelengths (or 2 D²/λ for an antenna of size D) and an evaluation by measurement or a near-field method is needed there. Roof-mounted donor antennas and any antenna near occupied space need an exposure evaluation under the applicable rules (FCC 47 CFR 1.1310, ICNIRP 2020 or local law) before energising. Post signage where required.",
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
