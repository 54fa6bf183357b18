//! # grading plugin: the verdict of record
//!
//! Grades each service on each floor against an acceptance rule set (see [`rules`]) at one
//! required level ([`RequiredLevel`]): a measured point or cell must reach threshold +
//! design margin; a predicted point must also clear the shadowing margin `sigma Phi^-1(p)`
//! for the rule's location probability. A floor passes only when every test holds (the
//! stricter one wins wherever two disagree):
//!
//! - the rule set's cell test ([`cells`]): about N equal test cells over the floor, each
//!   judged on the prediction or on the mean measured level in it, area-weighted by zone
//!   kind against the general and critical targets, with the tolerated failed cells and
//!   the adjacency rule;
//! - the area fractions of the predicted points at the required level, general and
//!   critical, against the same targets (unless the rule judges on measurements only);
//! - each critical zone by itself ([`zones`]): its area fraction and its own cells (the
//!   test cells clipped to it) against the critical target, and its measured points below
//!   the required level against the rule's tolerance (none for a life-safety service).
//!
//! This plugin runs before link-budget, which explains the shortfalls and proposes
//! remediation from these results; nothing after it grades again.

use std::collections::BTreeMap;

use rfsite_geometry::Point2;
use rfsite_model::{Floor, Service, Site, ZoneKind};
use rfsite_physics::stats;
use rfsite_plugin::*;

pub mod cdf;
pub mod cells;
pub mod findings;
pub mod rules;
pub mod uplink;
pub mod zones;
pub use cells::{cell_layout, grade_floor, CellLayout, CellRect, FloorGrade, GradedCell, Verdict};
pub use rules::{builtin_rules, parse_rule, Judge, Rule};

/// The grading plugin.
pub struct Grading;

/// Smallest uniform uplift (dB) that puts `target` of `levels` at or above `thr`.
pub fn uplift_needed_db(levels: &mut [f64], thr: f64, target: f64) -> f64 {
    if levels.is_empty() || target <= 0.0 {
        return 0.0;
    }
    levels.sort_by(f64::total_cmp);
    // How many points may stay below (the epsilon absorbs 1 - 0.9 = 0.0999...).
    let k = (((1.0 - target) * levels.len() as f64 + 1e-9).floor() as usize).min(levels.len() - 1);
    (thr - levels[k]).max(0.0)
}

fn fraction_at_or_above(levels: &[f64], thr: f64) -> Option<f64> {
    (!levels.is_empty())
        .then(|| levels.iter().filter(|l| **l >= thr).count() as f64 / levels.len() as f64)
}

/// The rule a service is graded by: its `rules`, else (life-safety) `public-safety-95-99`,
/// else one built from the service's own threshold and targets on the 20-cell grid.
pub fn rule_for(svc: &Service, all: &BTreeMap<String, Rule>) -> Result<Rule, String> {
    if let Some(id) = &svc.rules {
        return all.get(id).cloned().ok_or_else(|| {
            format!(
                "service `{}` names rule set `{id}`, which does not exist (known: {})",
                svc.id,
                all.keys().cloned().collect::<Vec<_>>().join(", ")
            )
        });
    }
    let base = all
        .get("public-safety-95-99")
        .cloned()
        .ok_or("built-in rule set public-safety-95-99 is missing")?;
    if svc.life_safety {
        return Ok(base);
    }
    let mut r = base;
    r.id = format!("service-{}", svc.id);
    r.name = format!("{} targets on the 20-cell grid", svc.name);
    r.authority = "The site's own service targets.".into();
    r.threshold_dbm = svc.threshold_dbm;
    r.target_general = svc.target_general;
    r.target_critical = svc.target_critical;
    r.max_failed_cells = None;
    r.failed_cells_may_be_adjacent = true;
    r.max_measured_failures_critical = None;
    for k in ["threshold_dbm", "target_general", "target_critical"] {
        r.sources.insert(k.into(), "site.toml service".into());
    }
    Ok(r)
}

/// Measured failures tolerated per critical zone before the floor fails: the rule's
/// value; a life-safety service tolerates none where the rule sets no number.
pub fn tolerated_critical_failures(svc: &Service, rule: &Rule) -> Option<usize> {
    match (rule.max_measured_failures_critical, svc.life_safety) {
        (Some(n), _) => Some(n),
        (None, true) => Some(0),
        (None, false) => None,
    }
}

/// The required level of a service under a rule, with the shadowing spread in force.
pub fn required_level(
    svc: &Service,
    rule: &Rule,
    sigma_db: f64,
    location_probability: f64,
) -> Result<RequiredLevel, String> {
    let shadow = stats::margin_for_probability_db(sigma_db, location_probability)
        .map_err(|e| e.to_string())?;
    let mut r = RequiredLevel::new(
        rule.threshold_dbm,
        svc.design_margin_db,
        sigma_db,
        location_probability,
        shadow,
    );
    r.threshold_source = rule.source("threshold_dbm").to_string();
    Ok(r)
}

/// What one floor's grading produced.
pub struct FloorOutcome {
    /// The verdict of record for the floor.
    pub result: FloorResult,
    /// The cell test in detail.
    pub grade: FloorGrade,
    /// Measured points below the required level.
    pub failures: Vec<MeasuredFailure>,
    /// The weakest graded point of each critical zone: (zone id, point, level).
    pub zone_weakest: Vec<(String, Point2, f64)>,
}

/// The graded points of a floor for a service: the layer's points, or (no layer: nothing
/// reaches the floor) every grid point inside the outline at minus infinity.
fn floor_levels(site: &Site, fi: usize, layer: Option<&CoverageLayer>) -> Vec<(Point2, f64)> {
    let floor = &site.floors[fi];
    match layer {
        Some(l) => {
            let g = l.grid.to_grid();
            let pts: Vec<(Point2, f64)> = l
                .level_dbm
                .iter()
                .enumerate()
                .map(|(i, v)| (g.point(i), *v as f64))
                .collect();
            cells::graded_points(floor, &pts)
        }
        None => Vec::new(),
    }
}

fn unreached_points(site: &Site, fi: usize) -> Vec<(Point2, f64)> {
    let floor = &site.floors[fi];
    site.floor_grid(fi)
        .points()
        .filter(|p| rfsite_geometry::point_in_polygon(*p, &floor.outline))
        .filter(|p| floor.zone_kind_at(*p) != ZoneKind::Excluded)
        .map(|p| (p, f64::NEG_INFINITY))
        .collect()
}

/// Everything one service needs to grade one floor.
pub struct FloorInput<'a> {
    /// The site.
    pub site: &'a Site,
    /// Floor index.
    pub fi: usize,
    /// The service.
    pub svc: &'a Service,
    /// Its rule.
    pub rule: &'a Rule,
    /// Its required level.
    pub req: &'a RequiredLevel,
    /// The graded layer, if any transmitter reaches the floor.
    pub layer: Option<&'a CoverageLayer>,
    /// The floor's survey points for the service.
    pub measured: Vec<&'a Measurement>,
}

/// Grades one floor: the cell test, the area fractions, each critical zone and the
/// measured points, and the reasons it fails.
pub fn grade_one_floor(inp: &FloorInput<'_>) -> FloorOutcome {
    let floor: &Floor = &inp.site.floors[inp.fi];
    let (rule, req) = (inp.rule, inp.req);
    let levels = floor_levels(inp.site, inp.fi, inp.layer);
    let mpts: Vec<(Point2, f64)> = inp
        .measured
        .iter()
        .map(|m| (Point2::new(m.x_m, m.y_m), m.level_dbm))
        .collect();
    let grade = grade_floor(floor, &levels, &mpts, rule, req);
    let layout = cells::floor_layout(floor, rule);
    let tolerated = tolerated_critical_failures(inp.svc, rule);
    let zones = zones::grade_zones(floor, &layout, &levels, &mpts, rule, req, tolerated);
    let predicted_at = |p: Point2| -> Option<f64> {
        let l = inp.layer?;
        let g = l.grid.to_grid();
        let (ix, iy) = g.cell_of(p)?;
        let v = *l.level_dbm.get(iy * g.nx + ix)? as f64;
        v.is_finite().then_some(v)
    };
    let failures = zones::measured_failures(floor, &inp.measured, predicted_at, req);
    let pts = if inp.layer.is_none() {
        unreached_points(inp.site, inp.fi)
    } else {
        levels.clone()
    };
    let (mut general, mut critical) = (Vec::new(), Vec::new());
    for (p, v) in &pts {
        if floor.zone_kind_at(*p) == ZoneKind::Critical {
            critical.push(*v);
        } else {
            general.push(*v);
        }
    }
    let zone_weakest = zone_weakest(floor, &pts);
    let result = floor_result(inp, &grade, zones, &general, &critical, &failures);
    FloorOutcome {
        result,
        grade,
        failures,
        zone_weakest,
    }
}

fn zone_weakest(floor: &Floor, pts: &[(Point2, f64)]) -> Vec<(String, Point2, f64)> {
    floor
        .zones
        .iter()
        .filter(|z| z.kind == ZoneKind::Critical)
        .filter_map(|z| {
            pts.iter()
                .filter(|(p, _)| rfsite_geometry::point_in_polygon(*p, &z.polygon))
                .min_by(|a, b| a.1.total_cmp(&b.1))
                .map(|(p, v)| (z.id.clone(), *p, *v))
        })
        .collect()
}

fn floor_result(
    inp: &FloorInput<'_>,
    grade: &FloorGrade,
    zones: Vec<ZoneResult>,
    general: &[f64],
    critical: &[f64],
    failures: &[MeasuredFailure],
) -> FloorResult {
    let (rule, req) = (inp.rule, inp.req);
    let thr = req.predicted_dbm;
    let all: Vec<f64> = general.iter().chain(critical).copied().collect();
    let (gf, cf) = (
        fraction_at_or_above(general, thr),
        fraction_at_or_above(critical, thr),
    );
    let reasons = findings::reasons(inp, grade, gf, cf, &zones, inp.layer.is_none());
    let pass = reasons.is_empty();
    let mut needed = uplift_needed_db(&mut general.to_vec(), thr, rule.target_general).max(
        uplift_needed_db(&mut critical.to_vec(), thr, rule.target_critical),
    );
    for z in &inp.site.floors[inp.fi].zones {
        if z.kind != ZoneKind::Critical {
            continue;
        }
        let mut zp: Vec<f64> = all_in_zone(inp, z);
        needed = needed.max(uplift_needed_db(&mut zp, thr, rule.target_critical));
    }
    let mut sorted = all.clone();
    sorted.sort_by(f64::total_cmp);
    let min = sorted.first().copied().unwrap_or(f64::NAN);
    let median = sorted.get(sorted.len() / 2).copied().unwrap_or(f64::NAN);
    FloorResult {
        id: inp.site.floors[inp.fi].id.clone(),
        predicted_area_fraction: fraction_at_or_above(&all, thr).unwrap_or(0.0),
        general_fraction: gf,
        critical_fraction: cf,
        pass,
        min_level_dbm: if min.is_finite() { min } else { -200.0 },
        median_level_dbm: if median.is_finite() { median } else { -200.0 },
        margin_needed_db: match (pass, needed.is_finite()) {
            (true, _) => 0.0,
            (false, true) => needed,
            (false, false) => 999.0,
        },
        points: all.len(),
        general_cell_fraction: grade.verdict.general_fraction,
        critical_cell_fraction: grade.verdict.critical_fraction,
        critical_zones: zones,
        measured_points: inp.measured.len(),
        measured_failures: failures.len(),
        reasons,
        downlink_pass: Some(pass),
        uplink: None,
    }
}

fn all_in_zone(inp: &FloorInput<'_>, z: &rfsite_model::Zone) -> Vec<f64> {
    match inp.layer {
        None => vec![f64::NEG_INFINITY],
        Some(_) => floor_levels(inp.site, inp.fi, inp.layer)
            .into_iter()
            .filter(|(p, _)| rfsite_geometry::point_in_polygon(*p, &z.polygon))
            .map(|(_, v)| v)
            .collect(),
    }
}

mod plugin;
pub use plugin::rule_sets;

#[cfg(test)]
mod tests;
