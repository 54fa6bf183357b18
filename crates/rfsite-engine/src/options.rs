//! Remediation options proven: each option's changes are applied to a copy of the site, the
//! plugins that predict and grade re-run on the copy exactly as on the site, and the
//! option keeps the copy's verdicts (`after`) and graded maps.
//!
//! The measurements describe the building as it is: each survey point is carried over as
//! its measured level plus what the option is predicted to add there
//! ([`rfsite_plugin::shift`]), so a weak measured point the option does not reach still
//! fails. A calibration keeps the values it fitted on the site as it is (re-fitting would
//! fit the old measurements to the new building), so pasting an option's antennas into a
//! site without survey files reproduces its verdicts exactly.

use std::collections::BTreeSet;

use rfsite_geometry::Point2;
use rfsite_model::{Pattern, Site, SiteChange, Transmitter, WhatIf};
use rfsite_plugin::*;

use crate::{enabled, Registry};

/// The site's `[[what_if]]` options as remediation options (proven later like the rest).
pub(crate) fn user_options(site: &Site) -> Vec<Remediation> {
    site.what_ifs.iter().map(|w| user_option(site, w)).collect()
}

fn user_option(site: &Site, w: &WhatIf) -> Remediation {
    let mut r = Remediation {
        id: w.id.clone(),
        title: w.title.clone(),
        service: (w.services.len() == 1).then(|| w.services[0].clone()),
        detail: w.note.clone(),
        plugin: "what-if".into(),
        caveats: vec!["declared in site.toml; predicted and graded like the site itself".into()],
        ..Default::default()
    };
    let mut floors = BTreeSet::new();
    for c in &w.changes {
        floors.extend(floors_touched(site, c));
        match c {
            SiteChange::AddTransmitter(t) => r.antennas.push(antenna_of(site, t)),
            other => r.changes.extend(wire_change(other)),
        }
    }
    r.floors = site
        .floors
        .iter()
        .filter(|f| floors.contains(&f.id))
        .map(|f| f.id.clone())
        .collect();
    r
}

fn floors_touched(site: &Site, c: &SiteChange) -> Vec<String> {
    let on = |walls: &[String]| -> Vec<String> {
        site.floors
            .iter()
            .filter(|f| f.parts.iter().any(|p| walls.contains(&p.id)))
            .map(|f| f.id.clone())
            .collect()
    };
    match c {
        SiteChange::SetMaterial { walls, .. } | SiteChange::RemoveWalls { walls } => on(walls),
        SiteChange::SetPower { transmitter, .. } => site
            .transmitters
            .iter()
            .filter(|t| &t.id == transmitter)
            .map(|t| t.floor.clone())
            .collect(),
        SiteChange::AddTransmitter(t) => vec![t.floor.clone()],
    }
}

fn wire_change(c: &SiteChange) -> Option<Change> {
    Some(match c {
        SiteChange::SetMaterial {
            walls,
            material,
            thickness_m,
        } => Change::SetMaterial {
            walls: walls.clone(),
            material: material.clone(),
            thickness_m: *thickness_m,
        },
        SiteChange::RemoveWalls { walls } => Change::RemoveWalls {
            walls: walls.clone(),
        },
        SiteChange::SetPower {
            transmitter,
            power_dbm,
        } => Change::SetPower {
            transmitter: transmitter.clone(),
            power_dbm: *power_dbm,
        },
        SiteChange::AddTransmitter(_) => return None,
    })
}

/// A transmitter in the wire's antenna form (site units).
pub fn antenna_of(site: &Site, t: &Transmitter) -> DesignedAntenna {
    let u = site.units;
    let (pattern, azimuth_deg, downtilt_deg) = match t.pattern {
        Pattern::Isotropic => ("isotropic", None, None),
        Pattern::OmniCeiling => ("omni-ceiling", None, None),
        Pattern::Sector {
            azimuth_deg,
            downtilt_deg,
        } => ("sector", Some(azimuth_deg), Some(downtilt_deg)),
    };
    DesignedAntenna {
        id: t.id.clone(),
        service: t.service.clone(),
        floor: t.floor.clone(),
        position: [u.from_m(t.position.x), u.from_m(t.position.y)],
        height: u.from_m(t.height_m),
        power_dbm: t.power_dbm,
        cable_loss_db: t.cable_loss_db,
        connector_loss_db: t.connector_loss_db,
        antenna_gain_dbi: t.antenna_gain_dbi,
        pattern: pattern.into(),
        azimuth_deg,
        downtilt_deg,
    }
}

/// The transmitter an antenna of the wire describes (site units to metres).
pub fn transmitter_of(site: &Site, a: &DesignedAntenna) -> Transmitter {
    let m = site.units.to_m();
    let pattern = match a.pattern.as_str() {
        "isotropic" => Pattern::Isotropic,
        "sector" => Pattern::Sector {
            azimuth_deg: a.azimuth_deg.unwrap_or(0.0),
            downtilt_deg: a.downtilt_deg.unwrap_or(0.0),
        },
        _ => Pattern::OmniCeiling,
    };
    Transmitter {
        id: a.id.clone(),
        service: a.service.clone(),
        floor: a.floor.clone(),
        position: Point2::new(a.position[0] * m, a.position[1] * m),
        height_m: a.height * m,
        power_dbm: a.power_dbm,
        cable_loss_db: a.cable_loss_db,
        connector_loss_db: a.connector_loss_db,
        antenna_gain_dbi: a.antenna_gain_dbi,
        pattern,
    }
}

/// The site changes an option makes, in order: wall and power changes, then antennas.
pub fn site_changes(site: &Site, r: &Remediation) -> Vec<SiteChange> {
    let mut out: Vec<SiteChange> = r.changes.iter().map(site_change).collect();
    out.extend(
        r.antennas
            .iter()
            .map(|a| SiteChange::AddTransmitter(transmitter_of(site, a))),
    );
    out
}

fn site_change(c: &Change) -> SiteChange {
    match c {
        Change::SetMaterial {
            walls,
            material,
            thickness_m,
        } => SiteChange::SetMaterial {
            walls: walls.clone(),
            material: material.clone(),
            thickness_m: *thickness_m,
        },
        Change::RemoveWalls { walls } => SiteChange::RemoveWalls {
            walls: walls.clone(),
        },
        Change::SetPower {
            transmitter,
            power_dbm,
        } => SiteChange::SetPower {
            transmitter: transmitter.clone(),
            power_dbm: *power_dbm,
        },
    }
}

/// Whether an option changes the site at all (else it is advice only).
pub fn changes_site(r: &Remediation) -> bool {
    !r.changes.is_empty() || !r.antennas.is_empty()
}

/// Runs the predicting and grading plugins on `site` (`base_site` with `changes`), with
/// `base` the outputs of the run on `base_site`, and returns their outputs in run order.
/// A plugin's failure on the changed site is returned as text.
pub fn rerun(
    site: &Site,
    registry: &Registry,
    base_site: &Site,
    base: &[(String, PluginOutput)],
    measured: &SurveyData,
    changes: &[SiteChange],
) -> Result<Vec<(String, PluginOutput)>, String> {
    let empty = toml::Table::new();
    let mut outs: Vec<(String, PluginOutput)> = Vec::new();
    let plugins = registry.ordered().map_err(|e| e.to_string())?;
    for p in plugins.into_iter().filter(|p| p.reruns_for_options(site)) {
        if !enabled(site, p.id()) || !p.applies(site) {
            continue;
        }
        let surveys = carried_over(site, base, &outs, measured);
        let ctx = Context {
            site,
            options: site.plugin_options.get(p.id()).unwrap_or(&empty),
            earlier: &outs,
            surveys: &surveys,
            base: Some(BaseRun {
                site: base_site,
                outputs: base,
                changes,
            }),
        };
        let out = p.run(&ctx).map_err(|e| format!("{}: {e}", p.id()))?;
        outs.push((p.id().to_string(), out));
    }
    Ok(outs)
}

/// The survey points as the changed site would see them: shifted by the change of the
/// graded model between the site's run and the re-run so far.
fn carried_over(
    site: &Site,
    base: &[(String, PluginOutput)],
    outs: &[(String, PluginOutput)],
    measured: &SurveyData,
) -> SurveyData {
    let graded = graded_services(base);
    let pick = |o: &[(String, PluginOutput)]| -> Vec<CoverageLayer> { graded_layers(o, &graded) };
    let (before, after) = (pick(base), pick(outs));
    let before: Vec<&CoverageLayer> = before.iter().collect();
    let after: Vec<&CoverageLayer> = after.iter().collect();
    rfsite_plugin::shift::shift_surveys(measured, &before, &after, site.prediction.combine)
}

/// Predicts and grades one option, filling `after` and `after_layers` (or a caveat saying
/// why it could not be predicted).
pub(crate) fn prove(
    site: &Site,
    registry: &Registry,
    base: &[(String, PluginOutput)],
    measured: &SurveyData,
    r: &mut Remediation,
) {
    let changes = site_changes(site, r);
    let changed = site.with_changes(&changes);
    let outs = match rerun(&changed, registry, site, base, measured, &changes) {
        Ok(o) => o,
        Err(why) => {
            r.caveats.push(format!("could not be predicted: {why}"));
            return;
        }
    };
    let services = graded_services(&outs);
    let wanted = option_services(site, r);
    let passes = wanted.iter().all(|s| {
        services
            .iter()
            .find(|x| &x.id == s)
            .is_some_and(|x| x.floors.iter().all(|f| f.pass))
    });
    r.after_layers = graded_layers(&outs, &services);
    r.after = Some(After {
        findings: finding_changes(base, &outs, &services, &wanted),
        services,
        passes,
    });
}

/// The services an option is for: its own, else every service of the site.
fn option_services(site: &Site, r: &Remediation) -> Vec<String> {
    match &r.service {
        Some(s) => vec![s.clone()],
        None => site.services.iter().map(|s| s.id.clone()).collect(),
    }
}

/// The per-service verdicts of a run: the last plugin to grade a service wins, as in the
/// site's own run.
pub fn graded_services(outs: &[(String, PluginOutput)]) -> Vec<ServiceResult> {
    let mut all: Vec<ServiceResult> = Vec::new();
    for s in outs.iter().flat_map(|(_, o)| o.services.iter()) {
        all.retain(|x| x.id != s.id);
        all.push(s.clone());
    }
    all.sort_by(|a, b| b.life_safety.cmp(&a.life_safety).then(a.id.cmp(&b.id)));
    all
}

fn graded_layers(
    outs: &[(String, PluginOutput)],
    services: &[ServiceResult],
) -> Vec<CoverageLayer> {
    outs.iter()
        .flat_map(|(_, o)| o.layers.iter())
        .filter(|l| {
            services
                .iter()
                .any(|s| s.id == l.service && s.model == l.model)
        })
        .cloned()
        .collect()
}

/// What becomes of each warning or failure finding of the services the option is for.
/// Findings of other services are left out (the option is not judged on them). Coverage
/// findings follow the option's floor verdicts; any other finding whose plugin did not
/// re-run for the option keeps its severity, as nothing re-assessed it.
fn finding_changes(
    base: &[(String, PluginOutput)],
    after: &[(String, PluginOutput)],
    services: &[ServiceResult],
    wanted: &[String],
) -> Vec<FindingChange> {
    let after_findings: Vec<&Finding> = after.iter().flat_map(|(_, o)| &o.findings).collect();
    let mut out = Vec::new();
    for (plugin, o) in base {
        let reran = after.iter().any(|(p, _)| p == plugin);
        for f in &o.findings {
            let about_wanted = f.service.as_ref().is_some_and(|s| wanted.contains(s));
            if f.severity == Severity::Info || !about_wanted {
                continue;
            }
            let judged_by_verdict = f.id.starts_with("coverage-") || f.id.starts_with("measured-");
            out.push(if reran || judged_by_verdict {
                finding_change(f, &after_findings, services)
            } else {
                unchanged(
                    f,
                    "not re-assessed for the option: its plugin does not re-run",
                )
            });
        }
    }
    out.sort_by(|a, b| a.id.cmp(&b.id));
    out
}

fn unchanged(f: &Finding, note: &str) -> FindingChange {
    FindingChange {
        id: f.id.clone(),
        before: Some(f.severity),
        after: Some(f.severity),
        note: note.into(),
    }
}

fn finding_change(f: &Finding, after: &[&Finding], services: &[ServiceResult]) -> FindingChange {
    let floor_passes = || {
        let s = services
            .iter()
            .find(|s| Some(&s.id) == f.service.as_ref())?;
        let fl = s.floors.iter().find(|x| Some(&x.id) == f.floor.as_ref())?;
        Some(fl.pass)
    };
    if f.id.starts_with("measured-") {
        return unchanged(
            f,
            "measured in the building as it is: confirm with an acceptance survey after the works",
        );
    }
    let (after_sev, note) = if f.id.starts_with("coverage-") {
        match floor_passes() {
            Some(true) => (None, "the floor passes with the option (predicted)"),
            _ => (Some(f.severity), "the floor still fails with the option"),
        }
    } else {
        match after.iter().find(|a| a.id == f.id) {
            Some(a) => (Some(a.severity), "still raised with the option"),
            None => (None, "not raised with the option (predicted)"),
        }
    };
    FindingChange {
        id: f.id.clone(),
        before: Some(f.severity),
        after: after_sev,
        note: note.into(),
    }
}

/// Per finding, the ids of the options whose prediction resolves it.
pub(crate) fn fill_remedies(findings: &mut [Finding], options: &[Remediation]) {
    for f in findings.iter_mut() {
        for r in options {
            let resolves = r
                .after
                .as_ref()
                .is_some_and(|a| a.findings.iter().any(|c| c.id == f.id && c.after.is_none()));
            if resolves && !f.remedies.contains(&r.id) {
                f.remedies.push(r.id.clone());
            }
        }
    }
}

/// The order of preference among passing options (smallest first).
fn rank(r: &Remediation) -> (usize, bool, usize, String) {
    (
        r.antennas.len(),
        r.distribution.is_none(),
        r.changes.len(),
        r.id.clone(),
    )
}

/// Marks, per service, the option rfsite recommends: one whose prediction passes every
/// floor of the service, with the fewest added antennas, then one whose feed network is
/// worked out (it can be priced and built), then the fewest other changes, then by id.
pub(crate) fn recommend(options: &mut [Remediation]) {
    let services: BTreeSet<String> = options.iter().filter_map(|r| r.service.clone()).collect();
    for s in services {
        let best = options
            .iter()
            .enumerate()
            .filter(|(_, r)| r.service.as_ref() == Some(&s))
            .filter(|(_, r)| r.after.as_ref().is_some_and(|a| a.passes))
            .min_by_key(|(_, r)| rank(r))
            .map(|(i, _)| i);
        if let Some(i) = best {
            options[i].recommended = true;
        }
    }
}
