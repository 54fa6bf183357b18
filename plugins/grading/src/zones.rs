//! Critical zones graded by themselves, and measured points below the required level.
//!
//! Each critical zone of a floor is judged on its own: the fraction of its predicted
//! points at the predicted required level, and its own cells (the floor's test cells
//! clipped to the zone, each judged as the rule judges cells, area-weighted), both
//! against the critical target. Measured points below the measured required level are
//! listed with file and line; in a critical zone they fail the floor when the rule set
//! (or the service's life-safety status) says so.

use rfsite_geometry::{point_in_polygon, Point2};
use rfsite_model::{Floor, Zone, ZoneKind};
use rfsite_plugin::{MeasuredFailure, Measurement, RequiredLevel, ZoneResult};

use crate::cells::{cell_samples, judge_region, CellLayout, CELL_SAMPLES};
use crate::rules::Rule;

/// A zone's own cells: area-weighted fraction passing, and how many cells touch it.
fn zone_cells(
    floor: &Floor,
    zone: &Zone,
    layout: &CellLayout,
    levels: &[(Point2, f64)],
    measured: &[(Point2, f64)],
    rule: &Rule,
    req: &RequiredLevel,
) -> (Option<f64>, usize) {
    let in_zone = |p: Point2| {
        point_in_polygon(p, &zone.polygon)
            && point_in_polygon(p, &floor.outline)
            && floor.zone_kind_at(p) != ZoneKind::Excluded
    };
    let (mut area, mut ok, mut n) = (0.0, 0.0, 0usize);
    for c in &layout.cells {
        let w = cell_samples(c).filter(|p| in_zone(*p)).count() as f64
            / (CELL_SAMPLES * CELL_SAMPLES) as f64;
        // A zone smaller than a sub-cell sample still gets judged through its points.
        let j = judge_region(
            levels,
            measured,
            |p| c.contains(p) && in_zone(p),
            rule,
            req,
            levels.is_empty(),
        );
        let Some(pass) = j.pass else { continue };
        let w = if w > 0.0 { w } else { 1e-6 };
        area += w;
        n += 1;
        if pass {
            ok += w;
        }
    }
    ((area > 0.0).then(|| ok / area), n)
}

/// Grades every critical zone of a floor. `levels` are the graded prediction points,
/// `measured` the floor's survey points for the service; `tolerated` the measured
/// failures tolerated per zone before it fails (None: measured failures do not fail it).
pub fn grade_zones(
    floor: &Floor,
    layout: &CellLayout,
    levels: &[(Point2, f64)],
    measured: &[(Point2, f64)],
    rule: &Rule,
    req: &RequiredLevel,
    tolerated: Option<usize>,
) -> Vec<ZoneResult> {
    floor
        .zones
        .iter()
        .filter(|z| z.kind == ZoneKind::Critical)
        .map(|z| {
            let inside = |p: &Point2| point_in_polygon(*p, &z.polygon);
            let pts: Vec<f64> = levels
                .iter()
                .filter(|(p, _)| inside(p))
                .map(|(_, v)| *v)
                .collect();
            let area_fraction = if pts.is_empty() {
                levels.is_empty().then_some(0.0)
            } else {
                Some(
                    pts.iter().filter(|v| **v >= req.predicted_dbm).count() as f64
                        / pts.len() as f64,
                )
            };
            let (cell_fraction, cells) = zone_cells(floor, z, layout, levels, measured, rule, req);
            let zm: Vec<f64> = measured
                .iter()
                .filter(|(p, _)| inside(p))
                .map(|(_, v)| *v)
                .collect();
            let measured_failures = zm.iter().filter(|v| **v < req.measured_dbm).count();
            let on_prediction = rule.judge != crate::rules::Judge::Measured;
            let area_ok = !on_prediction || area_fraction.is_none_or(|f| f >= rule.target_critical);
            let cells_ok = cell_fraction.is_none_or(|f| f >= rule.target_critical);
            let measured_ok = tolerated.is_none_or(|t| measured_failures <= t);
            ZoneResult {
                id: z.id.clone(),
                name: z.name.clone(),
                area_fraction,
                cell_fraction,
                cells,
                measured_points: zm.len(),
                measured_failures,
                pass: area_ok && cells_ok && measured_ok,
            }
        })
        .collect()
}

/// The critical zone, else any zone, containing `p`: (zone id, kind label).
fn zone_of(floor: &Floor, p: Point2) -> (String, &'static str) {
    let crit = floor
        .zones
        .iter()
        .find(|z| z.kind == ZoneKind::Critical && point_in_polygon(p, &z.polygon));
    match crit {
        Some(z) => (z.id.clone(), "critical"),
        None => {
            let any = floor
                .zones
                .iter()
                .find(|z| z.kind == ZoneKind::General && point_in_polygon(p, &z.polygon));
            (any.map(|z| z.id.clone()).unwrap_or_default(), "general")
        }
    }
}

/// Measured points on a floor below the measured required level, in file and line
/// order, each with the graded model's level at the nearest grid point.
pub fn measured_failures(
    floor: &Floor,
    points: &[&Measurement],
    predicted_at: impl Fn(Point2) -> Option<f64>,
    req: &RequiredLevel,
) -> Vec<MeasuredFailure> {
    let mut out: Vec<MeasuredFailure> = points
        .iter()
        .filter(|m| m.level_dbm < req.measured_dbm)
        .filter_map(|m| {
            let p = Point2::new(m.x_m, m.y_m);
            let (zone, kind) = zone_of(floor, p);
            if floor.zone_kind_at(p) == ZoneKind::Excluded {
                return None;
            }
            Some(MeasuredFailure {
                file: m.file.clone(),
                line: m.line,
                position_m: [m.x_m, m.y_m],
                zone,
                zone_kind: kind.into(),
                measured_dbm: m.level_dbm,
                predicted_dbm: predicted_at(p),
                required_dbm: req.measured_dbm,
            })
        })
        .collect();
    out.sort_by(|a, b| a.file.cmp(&b.file).then(a.line.cmp(&b.line)));
    out
}
