//! # grading plugin
//!
//! Grades each service on each floor against an acceptance rule set (see [`rules`]): the
//! floor's bounding box is divided into about the rule's number of equal test cells (cell
//! sides kept within the rule's limits, cells clipped to the outline), and each cell is
//! judged on the prediction — the fraction of its grid points at or above threshold +
//! design margin + shadowing margin, the margin being `sigma Phi^-1(p)` for the rule's
//! location probability — and on the mean measured level in the cell where there are
//! measurements. Passing cells are counted by zone kind (a cell is critical when most of
//! its area is critical zone), area-weighted, then the rule's tolerated failed cells and
//! adjacency rule give the floor verdict.
//!
//! The engine keeps the last grading of a service: this plugin runs after link-budget and
//! its [`ServiceResult`]s replace link-budget's; `predicted_area_fraction` stays the area
//! fraction of grid points meeting threshold + margins.

use std::collections::BTreeMap;

use rfsite_geometry::Point2;
use rfsite_model::{Floor, ZoneKind};
use rfsite_physics::stats;
use rfsite_plugin::*;
use serde::Serialize;

pub mod rules;
pub use rules::{builtin_rules, parse_rule, Judge, Rule};

/// The grading plugin.
pub struct Grading;

/// Samples per cell side used to measure a cell's area inside the outline and by zone.
pub const CELL_SAMPLES: usize = 10;

/// A test cell's rectangle, m.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CellRect {
    /// Column.
    pub ix: usize,
    /// Row.
    pub iy: usize,
    /// Lower-left corner, m.
    pub min: [f64; 2],
    /// Upper-right corner, m.
    pub max: [f64; 2],
}

impl CellRect {
    fn contains(&self, p: Point2) -> bool {
        p.x >= self.min[0] && p.x < self.max[0] && p.y >= self.min[1] && p.y < self.max[1]
    }
}

/// The layout of test cells over a floor.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CellLayout {
    /// Columns.
    pub nx: usize,
    /// Rows.
    pub ny: usize,
    /// Cell width and height, m.
    pub side_m: [f64; 2],
    /// Cells with some area inside the outline.
    pub cells: Vec<CellRect>,
}

fn inside_fraction(outline: &[Point2], c: &CellRect) -> f64 {
    let n = CELL_SAMPLES;
    let mut k = 0;
    for i in 0..n {
        for j in 0..n {
            let p = Point2::new(
                c.min[0] + (i as f64 + 0.5) / n as f64 * (c.max[0] - c.min[0]),
                c.min[1] + (j as f64 + 0.5) / n as f64 * (c.max[1] - c.min[1]),
            );
            if rfsite_geometry::point_in_polygon(p, outline) {
                k += 1;
            }
        }
    }
    k as f64 / (n * n) as f64
}

fn grid_for(w: f64, h: f64, k: usize, min_side: f64, max_side: f64) -> (usize, usize) {
    // The column and row counts whose product is nearest `k`, cells as square as possible.
    let (mut nx, mut ny) = (1, k.max(1));
    let mut best = f64::INFINITY;
    for cx in 1..=k.max(1) {
        let cy = ((k as f64 / cx as f64).round() as usize).max(1);
        let score =
            (cx * cy).abs_diff(k) as f64 * 10.0 + ((w / cx as f64) / (h / cy as f64)).ln().abs();
        if score < best - 1e-12 {
            best = score;
            (nx, ny) = (cx, cy);
        }
    }
    let fix = |n: &mut usize, span: f64| {
        if span / (*n as f64) < min_side * (1.0 - 1e-9) {
            *n = ((span / min_side + 1e-9).floor() as usize).max(1);
        }
        if span / (*n as f64) > max_side * (1.0 + 1e-9) {
            *n = (span / max_side - 1e-9).ceil() as usize;
        }
    };
    fix(&mut nx, w);
    fix(&mut ny, h);
    (nx, ny)
}

/// Divides the outline's bounding box into about `n` equal cells whose sides stay within
/// `min_side_m..=max_side_m` (the minimum wins on a floor too small for `n` cells), then
/// keeps the cells with area inside the outline. On an irregular outline the box gets more
/// cells until at least `n` of them touch the floor (or the sides reach the minimum).
pub fn cell_layout(outline: &[Point2], n: usize, min_side_m: f64, max_side_m: f64) -> CellLayout {
    let (min, max) = rfsite_geometry::polygon_bbox(outline);
    let (w, h) = ((max.x - min.x).max(1e-9), (max.y - min.y).max(1e-9));
    let build = |nx: usize, ny: usize| -> Vec<CellRect> {
        let (sx, sy) = (w / nx as f64, h / ny as f64);
        let mut cells = Vec::new();
        for iy in 0..ny {
            for ix in 0..nx {
                let c = CellRect {
                    ix,
                    iy,
                    min: [min.x + ix as f64 * sx, min.y + iy as f64 * sy],
                    max: [min.x + (ix + 1) as f64 * sx, min.y + (iy + 1) as f64 * sy],
                };
                if inside_fraction(outline, &c) > 0.0 {
                    cells.push(c);
                }
            }
        }
        cells
    };
    let mut best = None;
    for k in n..=(4 * n) {
        let (nx, ny) = grid_for(w, h, k, min_side_m, max_side_m);
        let cells = build(nx, ny);
        let enough = cells.len() >= n;
        let at_min = w / nx as f64 <= min_side_m * 1.0001 || h / ny as f64 <= min_side_m * 1.0001;
        best = Some(CellLayout {
            nx,
            ny,
            side_m: [w / nx as f64, h / ny as f64],
            cells,
        });
        if enough || at_min {
            break;
        }
    }
    best.unwrap_or(CellLayout {
        nx: 0,
        ny: 0,
        side_m: [0.0, 0.0],
        cells: vec![],
    })
}

/// A graded test cell.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GradedCell {
    /// Column.
    pub ix: usize,
    /// Row.
    pub iy: usize,
    /// Bounds `[[xmin, ymin], [xmax, ymax]]`, m.
    pub bounds_m: [[f64; 2]; 2],
    /// "general", "critical" or "excluded".
    pub kind: String,
    /// Fraction of the cell rectangle inside the outline.
    pub inside_fraction: f64,
    /// Prediction points in the cell.
    pub predicted_points: usize,
    /// Fraction of them at or above threshold + margins.
    pub predicted_fraction: Option<f64>,
    /// Verdict on the prediction.
    pub predicted_pass: Option<bool>,
    /// Measured points in the cell.
    pub measured_points: usize,
    /// Mean measured level (mean of the dBm readings), dBm.
    pub measured_mean_dbm: Option<f64>,
    /// Verdict on the measurements.
    pub measured_pass: Option<bool>,
    /// "measured", "predicted" or "not judged".
    pub judged_by: String,
    /// Final verdict (None: not judged).
    pub pass: Option<bool>,
}

/// Cell counts and verdict of one way of judging.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    /// Judged general cells.
    pub general_cells: usize,
    /// Judged critical cells.
    pub critical_cells: usize,
    /// Area-weighted fraction of judged general cells passing.
    pub general_fraction: Option<f64>,
    /// Area-weighted fraction of judged critical cells passing.
    pub critical_fraction: Option<f64>,
    /// Failed cells.
    pub failed_cells: usize,
    /// Pairs of failed cells sharing an edge.
    pub adjacent_failed_pairs: usize,
    /// Verdict (None when no cell was judged this way).
    pub pass: Option<bool>,
    /// Why it fails, in words.
    pub reasons: Vec<String>,
}

/// The grading of one floor.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FloorGrade {
    /// Floor id.
    pub floor: String,
    /// Cell columns and rows, cell size (m).
    pub nx: usize,
    /// Rows.
    pub ny: usize,
    /// Cell width, height, m.
    pub cell_side_m: [f64; 2],
    /// Cells.
    pub cells: Vec<GradedCell>,
    /// Every cell judged on the prediction.
    pub on_predictions: Verdict,
    /// Only cells with measurements, judged on them.
    pub on_measurements: Verdict,
    /// As the rule judges (the floor verdict).
    pub verdict: Verdict,
    /// Critical-zone area fraction meeting threshold + margins on the prediction (points).
    pub critical_zone_fraction: Option<f64>,
}

fn verdict_of(
    cells: &[GradedCell],
    pick: impl Fn(&GradedCell) -> Option<bool>,
    rule: &Rule,
    critical_zone: Option<f64>,
) -> Verdict {
    let mut area = BTreeMap::<&str, (f64, f64, usize)>::new();
    let mut failed = Vec::new();
    for c in cells {
        let Some(p) = pick(c) else { continue };
        if c.kind == "excluded" {
            continue;
        }
        let e = area
            .entry(if c.kind == "critical" {
                "critical"
            } else {
                "general"
            })
            .or_default();
        e.0 += c.inside_fraction;
        if p {
            e.1 += c.inside_fraction;
        } else {
            failed.push((c.ix, c.iy));
        }
        e.2 += 1;
    }
    let frac = |k: &str| area.get(k).filter(|e| e.0 > 0.0).map(|e| e.1 / e.0);
    let count = |k: &str| area.get(k).map(|e| e.2).unwrap_or(0);
    let mut adjacent = 0;
    for (i, a) in failed.iter().enumerate() {
        for b in &failed[i + 1..] {
            if a.0.abs_diff(b.0) + a.1.abs_diff(b.1) == 1 {
                adjacent += 1;
            }
        }
    }
    let (gf, cf) = (frac("general"), frac("critical"));
    let mut reasons = Vec::new();
    if let Some(g) = gf.filter(|g| *g < rule.target_general) {
        reasons.push(format!(
            "{:.1} % of general cells pass, target {:.0} %",
            100.0 * g,
            100.0 * rule.target_general
        ));
    }
    match cf {
        Some(c) if c < rule.target_critical => reasons.push(format!(
            "{:.1} % of critical cells pass, target {:.0} %",
            100.0 * c,
            100.0 * rule.target_critical
        )),
        None => {
            if let Some(z) = critical_zone.filter(|z| *z < rule.target_critical) {
                reasons.push(format!(
                    "{:.1} % of the critical zones' predicted area meets the level, target {:.0} %",
                    100.0 * z,
                    100.0 * rule.target_critical
                ));
            }
        }
        _ => {}
    }
    if let Some(m) = rule.max_failed_cells.filter(|m| failed.len() > *m) {
        reasons.push(format!(
            "{} failed cells, at most {m} tolerated",
            failed.len()
        ));
    }
    if !rule.failed_cells_may_be_adjacent && adjacent > 0 {
        reasons.push(format!(
            "{adjacent} pair(s) of failed cells are adjacent, which the rule does not allow"
        ));
    }
    let judged = count("general") + count("critical");
    Verdict {
        general_cells: count("general"),
        critical_cells: count("critical"),
        general_fraction: gf,
        critical_fraction: cf,
        failed_cells: failed.len(),
        adjacent_failed_pairs: adjacent,
        pass: (judged > 0).then_some(reasons.is_empty()),
        reasons,
    }
}

/// Grades one floor. `levels` are the prediction grid points on the floor as
/// (point, level dBm) (NaN outside the outline; empty when nothing serves the floor, which
/// fails every cell on the prediction); `measured` the survey points on it; `pred_thr_dbm`
/// the level a predicted point must reach (threshold + design and shadowing margins).
pub fn grade_floor(
    floor: &Floor,
    levels: &[(Point2, f64)],
    measured: &[(Point2, f64)],
    rule: &Rule,
    pred_thr_dbm: f64,
) -> FloorGrade {
    let to_m = rule.side_to_m();
    let layout = cell_layout(
        &floor.outline,
        rule.cells_per_floor,
        rule.min_cell_side * to_m,
        rule.max_cell_side * to_m,
    );
    let mut cells = Vec::new();
    let mut crit_pts = (0usize, 0usize);
    for (p, v) in levels {
        if v.is_nan() || floor.zone_kind_at(*p) != ZoneKind::Critical {
            continue;
        }
        crit_pts.0 += 1;
        if *v >= pred_thr_dbm {
            crit_pts.1 += 1;
        }
    }
    for c in &layout.cells {
        let n = CELL_SAMPLES;
        let (mut inside, mut crit, mut excl) = (0usize, 0usize, 0usize);
        for i in 0..n {
            for j in 0..n {
                let p = Point2::new(
                    c.min[0] + (i as f64 + 0.5) / n as f64 * (c.max[0] - c.min[0]),
                    c.min[1] + (j as f64 + 0.5) / n as f64 * (c.max[1] - c.min[1]),
                );
                if !rfsite_geometry::point_in_polygon(p, &floor.outline) {
                    continue;
                }
                inside += 1;
                match floor.zone_kind_at(p) {
                    ZoneKind::Critical => crit += 1,
                    ZoneKind::Excluded => excl += 1,
                    ZoneKind::General => {}
                }
            }
        }
        let kind = if 2 * excl > inside {
            ZoneKind::Excluded
        } else if 2 * crit > inside {
            ZoneKind::Critical
        } else {
            ZoneKind::General
        };
        // Prediction.
        let (mut np, mut ok) = (0usize, 0usize);
        let mut any_layer = false;
        for (p, v) in levels {
            if !c.contains(*p) || v.is_nan() || floor.zone_kind_at(*p) == ZoneKind::Excluded {
                continue;
            }
            any_layer = true;
            np += 1;
            if *v >= pred_thr_dbm {
                ok += 1;
            }
        }
        let pf = (np > 0).then(|| ok as f64 / np as f64);
        let pred_pass = match pf {
            Some(f) => Some(f >= rule.predicted_cell_point_fraction),
            // No prediction at all on the floor: nothing reaches it.
            None if levels.is_empty() => Some(false),
            None => None,
        };
        let _ = any_layer;
        // Measurements: mean of the dBm readings in the cell.
        let ms: Vec<f64> = measured
            .iter()
            .filter(|(p, _)| c.contains(*p))
            .map(|(_, l)| *l)
            .collect();
        let mm = (!ms.is_empty()).then(|| ms.iter().sum::<f64>() / ms.len() as f64);
        let meas_pass = mm.map(|m| m >= rule.threshold_dbm);
        let (judged_by, pass) = match (rule.judge, meas_pass, pred_pass) {
            (Judge::Predicted, _, p) => ("predicted", p),
            (Judge::Measured, m, _) => ("measured", m),
            (Judge::MeasuredElsePredicted, Some(m), _) => ("measured", Some(m)),
            (Judge::MeasuredElsePredicted, None, p) => ("predicted", p),
        };
        let judged_by = if pass.is_none() || kind == ZoneKind::Excluded {
            "not judged"
        } else {
            judged_by
        };
        cells.push(GradedCell {
            ix: c.ix,
            iy: c.iy,
            bounds_m: [c.min, c.max],
            kind: kind.label().into(),
            inside_fraction: inside as f64 / (n * n) as f64,
            predicted_points: np,
            predicted_fraction: pf,
            predicted_pass: pred_pass,
            measured_points: ms.len(),
            measured_mean_dbm: mm,
            measured_pass: meas_pass,
            judged_by: judged_by.into(),
            pass: if kind == ZoneKind::Excluded {
                None
            } else {
                pass
            },
        });
    }
    let cz = (crit_pts.0 > 0).then(|| crit_pts.1 as f64 / crit_pts.0 as f64);
    let on_predictions = verdict_of(&cells, |c| c.predicted_pass, rule, cz);
    let on_measurements = verdict_of(&cells, |c| c.measured_pass, rule, None);
    let verdict = verdict_of(
        &cells,
        |c| c.pass,
        rule,
        if rule.judge == Judge::Measured {
            None
        } else {
            cz
        },
    );
    FloorGrade {
        floor: floor.id.clone(),
        nx: layout.nx,
        ny: layout.ny,
        cell_side_m: layout.side_m,
        cells,
        on_predictions,
        on_measurements,
        verdict,
        critical_zone_fraction: cz,
    }
}

fn f1(x: f64) -> String {
    if x.is_finite() {
        format!("{x:.1}")
    } else {
        "n/a".into()
    }
}

fn pct(x: Option<f64>) -> String {
    x.map(|v| format!("{:.0} %", 100.0 * v))
        .unwrap_or_else(|| "n/a".into())
}

fn yes_no(x: Option<bool>) -> String {
    match x {
        Some(true) => "pass".into(),
        Some(false) => "FAIL".into(),
        None => "—".into(),
    }
}

/// The rule a service is graded by: its `rules`, else (life-safety) `public-safety-95-99`,
/// else one built from the service's own threshold and targets on the 20-cell grid.
pub fn rule_for(svc: &rfsite_model::Service, all: &BTreeMap<String, Rule>) -> Result<Rule, String> {
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
    for k in ["threshold_dbm", "target_general", "target_critical"] {
        r.sources.insert(k.into(), "site.toml service".into());
    }
    Ok(r)
}

impl Plugin for Grading {
    fn id(&self) -> &str {
        "grading"
    }
    fn version(&self) -> &str {
        env!("CARGO_PKG_VERSION")
    }
    fn method(&self) -> Method {
        Method {
            summary: "Grid-cell acceptance test per floor after the selected rule set: about N equal cells over the floor's bounding box (sides within the rule's limits, clipped to the outline); a cell passes on the prediction when the rule's fraction of its points reach threshold + design margin + shadowing margin sigma Phi^-1(p), and on measurements when the mean measured level in it reaches the threshold; passing cells area-weighted by zone kind, with the rule's tolerated failures and adjacency rule".into(),
            citations: vec![
                "Rule sets in plugins/data/rules/*.toml, each number with its source (model fire-code grid test: consistent across secondary sources; tolerances from memory)".into(),
                "Log-normal shadowing margin: sigma Phi^-1(p) (common practice)".into(),
            ],
            validity: "the authority having jurisdiction decides the acceptance test; predicted grading is as good as the prediction and the shadowing sigma".into(),
        }
    }
    fn after(&self) -> Vec<String> {
        vec![
            "free-space".into(),
            "multi-wall".into(),
            "link-budget".into(),
            "survey-compare".into(),
            "calibration".into(),
        ]
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        let site = ctx.site;
        let mut out = PluginOutput::default();
        // Rule sets: built in, then the site's `[plugins.grading.rule_sets.<id>]`.
        let mut all = builtin_rules();
        if let Some(v) = ctx.options.get("rule_sets") {
            let t = v.as_table().ok_or(PluginError::BadOption {
                key: "rule_sets".into(),
                message: "must be a table of rule sets".into(),
            })?;
            for (id, rt) in t {
                let rt = rt.as_table().ok_or(PluginError::BadOption {
                    key: format!("rule_sets.{id}"),
                    message: "must be a table".into(),
                })?;
                let mut rt = rt.clone();
                rt.entry("id").or_insert(toml::Value::String(id.clone()));
                let (r, notes) = rule_from_table_opt(&rt).map_err(|m| PluginError::BadOption {
                    key: format!("rule_sets.{id}"),
                    message: m,
                })?;
                for n in notes {
                    out.warnings.push(Warning {
                        plugin: self.id().into(),
                        message: format!("site rule set `{id}`: {n}"),
                    });
                }
                all.insert(id.clone(), r);
            }
        }
        // Model: option, else calibrated when present, else the site's.
        let default_model = if !ctx.layers_of("calibrated").is_empty() {
            "calibrated".to_string()
        } else {
            site.prediction.model.clone()
        };
        let want = ctx.option_str("model", &default_model)?;
        let mut model = want.clone();
        let mut layers = ctx.layers_of(&want);
        if layers.is_empty() && !site.transmitters.is_empty() {
            out.warnings.push(Warning {
                plugin: self.id().into(),
                message: format!("no `{want}` layers; grading the free-space prediction instead"),
            });
            model = "free-space".into();
            layers = ctx.layers_of("free-space");
        }
        let sigma = ctx.option_f64("shadowing_sigma_db", site.prediction.shadowing_sigma_db)?;
        let compared_model = ctx
            .output_of("survey-compare")
            .and_then(|o| o.extra.get("model"))
            .cloned()
            .unwrap_or_default();
        let compare: Vec<serde_json::Value> = ctx
            .output_of("survey-compare")
            .and_then(|o| o.extra.get("comparison"))
            .and_then(|v| v.as_array().cloned())
            .unwrap_or_default();
        // Rejected rows per floor: by the floor the survey file is for.
        let mut rejected_by_floor: BTreeMap<String, BTreeMap<String, usize>> = BTreeMap::new();
        // A file's floor: the one its `[[surveys]]` entry names, else the one all its
        // accepted points are on.
        let file_floor = |file: &str| -> Option<String> {
            if let Some(f) = site
                .surveys
                .iter()
                .find(|s| s.file == file)
                .and_then(|s| s.floor.clone())
            {
                return Some(f);
            }
            let mut fl = ctx
                .surveys
                .points
                .iter()
                .filter(|m| m.file == file)
                .map(|m| m.floor.as_str());
            let first = fl.next()?;
            fl.all(|f| f == first).then(|| first.to_string())
        };
        for r in &ctx.surveys.rejected {
            let floor =
                file_floor(&r.file).unwrap_or_else(|| "(file covers several floors)".into());
            *rejected_by_floor
                .entry(floor)
                .or_default()
                .entry(r.reason.clone())
                .or_default() += 1;
        }
        let mut extra_services = Vec::new();
        for svc in &site.services {
            let rule = rule_for(svc, &all).map_err(|m| PluginError::BadOption {
                key: "rules".into(),
                message: m,
            })?;
            if (rule.threshold_dbm - svc.threshold_dbm).abs() > 1e-9 {
                out.warnings.push(Warning {
                    plugin: self.id().into(),
                    message: format!("service `{}`: rule set `{}` grades at {} dBm; the service's own threshold is {} dBm", svc.id, rule.id, f1(rule.threshold_dbm), f1(svc.threshold_dbm)),
                });
            }
            if rule.metric != svc.metric {
                out.warnings.push(Warning {
                    plugin: self.id().into(),
                    message: format!(
                        "service `{}` is `{}`, rule set `{}` grades `{}`",
                        svc.id, svc.metric, rule.id, rule.metric
                    ),
                });
            }
            let lp = ctx.option_f64("location_probability", rule.location_probability)?;
            let shadow = stats::margin_for_probability_db(sigma, lp).map_err(|e| {
                PluginError::BadOption {
                    key: "location_probability".into(),
                    message: e.to_string(),
                }
            })?;
            let pred_thr = rule.threshold_dbm + svc.design_margin_db + shadow;
            let mut floors = Vec::new();
            let mut grades = Vec::new();
            for floor in &site.floors {
                let layer = layers
                    .iter()
                    .find(|l| l.floor == floor.id && l.service == svc.id);
                let levels: Vec<(Point2, f64)> = match layer {
                    Some(l) => {
                        let g = l.grid.to_grid();
                        l.level_dbm
                            .iter()
                            .enumerate()
                            .map(|(i, v)| (g.point(i), *v as f64))
                            .collect()
                    }
                    None => Vec::new(),
                };
                let measured: Vec<(Point2, f64)> = ctx
                    .surveys
                    .points
                    .iter()
                    .filter(|m| m.floor == floor.id && m.service == svc.id)
                    .map(|m| (Point2::new(m.x_m, m.y_m), m.level_dbm))
                    .collect();
                let fg = grade_floor(floor, &levels, &measured, &rule, pred_thr);
                // Area fractions on the points, as link-budget computes them.
                let mut general = Vec::new();
                let mut critical = Vec::new();
                for (p, v) in &levels {
                    if v.is_nan() {
                        continue;
                    }
                    match floor.zone_kind_at(*p) {
                        ZoneKind::General => general.push(*v),
                        ZoneKind::Critical => critical.push(*v),
                        ZoneKind::Excluded => {}
                    }
                }
                if layer.is_none() {
                    let g = rfsite_geometry::Grid::covering(
                        rfsite_geometry::polygon_bbox(&floor.outline).0,
                        rfsite_geometry::polygon_bbox(&floor.outline).1,
                        site.prediction.grid_step_m,
                    );
                    for p in g
                        .points()
                        .filter(|p| rfsite_geometry::point_in_polygon(*p, &floor.outline))
                    {
                        match floor.zone_kind_at(p) {
                            ZoneKind::General => general.push(f64::NEG_INFINITY),
                            ZoneKind::Critical => critical.push(f64::NEG_INFINITY),
                            ZoneKind::Excluded => {}
                        }
                    }
                }
                let fr = |v: &[f64]| {
                    (!v.is_empty()).then(|| {
                        v.iter().filter(|x| **x >= pred_thr).count() as f64 / v.len() as f64
                    })
                };
                let mut all_pts: Vec<f64> =
                    general.iter().chain(critical.iter()).copied().collect();
                let af = fr(&all_pts).unwrap_or(0.0);
                let dg = rfsite_plugin_link_budget::uplift_needed_db(
                    &mut general.clone(),
                    pred_thr,
                    rule.target_general,
                );
                let dc = rfsite_plugin_link_budget::uplift_needed_db(
                    &mut critical.clone(),
                    pred_thr,
                    rule.target_critical,
                );
                all_pts.sort_by(f64::total_cmp);
                let min = all_pts.first().copied().unwrap_or(f64::NAN);
                let median = all_pts.get(all_pts.len() / 2).copied().unwrap_or(f64::NAN);
                let pass = fg.verdict.pass.unwrap_or(false);
                let needed = if pass { 0.0 } else { dg.max(dc) };
                floors.push(FloorResult {
                    id: floor.id.clone(),
                    predicted_area_fraction: af,
                    general_fraction: fr(&general),
                    critical_fraction: fr(&critical),
                    pass,
                    min_level_dbm: if min.is_finite() { min } else { -200.0 },
                    median_level_dbm: if median.is_finite() { median } else { -200.0 },
                    margin_needed_db: if needed.is_finite() { needed } else { 999.0 },
                    points: all_pts.len(),
                });
                // Finding.
                let v = &fg.verdict;
                let sev = if pass {
                    Severity::Info
                } else if svc.life_safety
                    || v.critical_fraction
                        .is_some_and(|c| c < rule.target_critical)
                {
                    Severity::Critical
                } else {
                    Severity::Major
                };
                out.findings.push(Finding {
                    id: format!("grading-{}-{}", svc.id, floor.id),
                    severity: sev,
                    floor: Some(floor.id.clone()),
                    service: Some(svc.id.clone()),
                    title: format!("{} {} the {} cell test on {}", svc.name, if pass { "passes" } else { "fails" }, rule.id, floor.name),
                    detail: format!(
                        "{} general and {} critical cells judged ({} on measurements); {} of general and {} of critical cells pass (targets {:.0} % / {:.0} %); {} failed cell(s). Predicted cells need {} dBm = threshold {} dBm + design margin {} dB + shadowing margin {} dB (sigma {} dB, location probability {:.0} %).{}",
                        v.general_cells, v.critical_cells, fg.cells.iter().filter(|c| c.judged_by == "measured").count(),
                        pct(v.general_fraction), pct(v.critical_fraction), 100.0 * rule.target_general, 100.0 * rule.target_critical, v.failed_cells,
                        f1(pred_thr), f1(rule.threshold_dbm), f1(svc.design_margin_db), f1(shadow), f1(sigma), 100.0 * lp,
                        if v.reasons.is_empty() { String::new() } else { format!(" Fails because: {}.", v.reasons.join("; ")) }
                    ),
                    plugin: self.id().into(),
                    shortfall_db: None,
                    location_m: None,
                    causes: vec![],
                    remedies: vec![],
                });
                grades.push((fg, layer.is_some()));
            }
            floors.sort_by(|a, b| a.id.cmp(&b.id));
            let spass = floors.iter().all(|f| f.pass);
            // Table.
            let fname = |fid: &str| {
                site.floor(fid)
                    .map(|s| s.name.clone())
                    .unwrap_or_else(|| fid.to_string())
            };
            let u = site.units;
            out.tables.push(Table {
                id: format!("grading-{}", svc.id),
                title: format!(
                    "Cell grading: {} against {} ({} dBm; predicted cells at {} dBm incl. {} dB shadowing margin for {:.0} % at sigma {} dB)",
                    svc.name, rule.name, f1(rule.threshold_dbm), f1(pred_thr), f1(shadow), 100.0 * lp, f1(sigma)
                ),
                columns: vec!["Floor".into(), "Cells (gen/crit)".into(), format!("Cell size {}", u.label()), "General pass".into(), "Critical pass".into(), "Failed (adjacent pairs)".into(), "On predictions".into(), "On measurements".into(), "Verdict".into()],
                rows: grades
                    .iter()
                    .map(|(g, _)| {
                        let v = &g.verdict;
                        vec![
                            fname(&g.floor),
                            format!("{}/{}", v.general_cells, v.critical_cells),
                            format!("{} x {}", f1(u.from_m(g.cell_side_m[0])), f1(u.from_m(g.cell_side_m[1]))),
                            pct(v.general_fraction),
                            match v.critical_fraction {
                                Some(c) => pct(Some(c)),
                                None => g.critical_zone_fraction.map(|z| format!("{} (zones)", pct(Some(z)))).unwrap_or_else(|| "n/a".into()),
                            },
                            format!("{} ({})", v.failed_cells, v.adjacent_failed_pairs),
                            yes_no(g.on_predictions.pass),
                            if g.on_measurements.pass.is_some() { format!("{} ({} cells)", yes_no(g.on_measurements.pass), g.on_measurements.general_cells + g.on_measurements.critical_cells) } else { "no survey".into() },
                            yes_no(v.pass),
                        ]
                    })
                    .collect(),
            });
            for (g, _) in &grades {
                out.figures.push(Figure {
                    id: format!("grading-{}-{}", clean(&g.floor), clean(&svc.id)),
                    title: format!("Test cells, {} on {}: pass/fail per cell ({}); failed cells hatched and marked F, m = judged on measurements", svc.name, fname(&g.floor), rule.id),
                    kind: "grading-map".into(),
                    x_label: String::new(),
                    y_label: String::new(),
                    series: vec![],
                });
            }
            let floors_json: Vec<serde_json::Value> = grades
                .iter()
                .map(|(g, _)| {
                    let cmp = compare.iter().find(|c| c["service"] == svc.id.as_str() && c["floor"] == g.floor.as_str()).map(|c| {
                        serde_json::json!({"count": c["count"], "mean_db": c["mean_db"], "std_db": c["std_db"], "rmse_db": c["rmse_db"], "error_convention": "predicted - measured", "model": compared_model})
                    });
                    let fr = floors.iter().find(|f| f.id == g.floor);
                    serde_json::json!({
                        "floor": g.floor,
                        "verdict": if g.verdict.pass.unwrap_or(false) { "pass" } else { "fail" },
                        "pass": g.verdict.pass.unwrap_or(false),
                        "general_cell_fraction": g.verdict.general_fraction,
                        "critical_cell_fraction": g.verdict.critical_fraction,
                        "general_area_fraction": fr.and_then(|f| f.general_fraction),
                        "critical_area_fraction": fr.and_then(|f| f.critical_fraction),
                        "predicted_area_fraction": fr.map(|f| f.predicted_area_fraction),
                        "critical_zone_fraction": g.critical_zone_fraction,
                        "on_predictions": g.on_predictions,
                        "on_measurements": g.on_measurements,
                        "result": g.verdict,
                        "nx": g.nx, "ny": g.ny, "cell_side_m": g.cell_side_m,
                        "cells": g.cells,
                        "measured_comparison": cmp,
                        "measured_points": ctx.surveys.points.iter().filter(|m| m.floor == g.floor && m.service == svc.id).count(),
                        "rejected_rows": rejected_by_floor.get(&g.floor).cloned().unwrap_or_default(),
                    })
                })
                .collect();
            extra_services.push(serde_json::json!({
                "service": svc.id,
                "rule": rule.id, "rule_name": rule.name, "authority": rule.authority,
                "threshold_dbm": rule.threshold_dbm, "threshold_source": rule.source("threshold_dbm"),
                "target_general": rule.target_general, "target_critical": rule.target_critical,
                "design_margin_db": svc.design_margin_db, "shadowing_sigma_db": sigma, "location_probability": lp,
                "shadowing_margin_db": shadow, "predicted_threshold_dbm": pred_thr,
                "judge": rule.judge.label(), "max_failed_cells": rule.max_failed_cells, "failed_cells_may_be_adjacent": rule.failed_cells_may_be_adjacent,
                "model": model, "pass": spass,
                "floors": floors_json,
            }));
            out.services.push(ServiceResult {
                id: svc.id.clone(),
                name: svc.name.clone(),
                freq_mhz: svc.freq_mhz,
                threshold_dbm: rule.threshold_dbm,
                design_margin_db: svc.design_margin_db + shadow,
                target_general: rule.target_general,
                target_critical: rule.target_critical,
                model: model.clone(),
                floors,
                pass: spass,
            });
        }
        out.extra
            .insert("services".into(), serde_json::Value::Array(extra_services));
        out.extra.insert(
            "rejected_rows_by_floor".into(),
            serde_json::to_value(&rejected_by_floor).unwrap_or_default(),
        );
        out.cautions.push(Caution {
            id: "acceptance-rules".into(),
            topic: "Acceptance rule sets".into(),
            text: "The cell grading follows rule sets whose numbers are the common model-code defaults or common practice, each with its source in the rule file. The authority having jurisdiction, the adopted code edition and its local amendments decide the actual acceptance test; a predicted pass is not an acceptance test result.".into(),
        });
        Ok(out)
    }
}

fn rule_from_table_opt(t: &toml::Table) -> Result<(Rule, Vec<String>), String> {
    rules::rule_from_table(t, false)
}

/// File-name-safe id part (as the report names figures).
pub fn clean(s: &str) -> String {
    s.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rect(w: f64, h: f64) -> Vec<Point2> {
        vec![
            Point2::new(0.0, 0.0),
            Point2::new(w, 0.0),
            Point2::new(w, h),
            Point2::new(0.0, h),
        ]
    }

    fn floor(outline: Vec<Point2>, zones: Vec<rfsite_model::Zone>) -> Floor {
        Floor {
            id: "L1".into(),
            name: "L1".into(),
            elevation_m: 0.0,
            height_m: 3.0,
            slab_material: "concrete".into(),
            slab_thickness_m: 0.2,
            outline,
            parts: vec![],
            zones,
            plan_image: None,
            plan_m_per_px: 0.05,
            plan_offset: Default::default(),
        }
    }

    /// A hand-made floor, hand-counted: 100 ft x 80 ft (30.48 m x 24.384 m) into 20 cells
    /// of the public-safety rule (REFERENCES.md grid test: 20 cells, sides 20-80 ft) gives
    /// 5 x 4 cells of 20 ft x 20 ft. One grid point per cell at its centre; the level is
    /// -80 dBm everywhere except cells (0,0) and (1,0), which are -100 dBm. With a -95 dBm
    /// threshold and no margins both fail: 18 of 20 general cells pass (90 % < 95 %), two
    /// failed cells (one tolerated) and they are adjacent: the floor fails on all three
    /// counts. Only cell (0,0) failing gives 19/20 = 95 %: pass.
    #[test]
    fn hand_made_floor_cells_and_verdict() {
        let ft = 0.3048;
        let f = floor(rect(100.0 * ft, 80.0 * ft), vec![]);
        let rule = builtin_rules()["public-safety-95-99"].clone();
        let side = 20.0 * ft;
        let levels = |bad: &[(usize, usize)]| -> Vec<(Point2, f64)> {
            let mut v = Vec::new();
            for iy in 0..4 {
                for ix in 0..5 {
                    let p = Point2::new((ix as f64 + 0.5) * side, (iy as f64 + 0.5) * side);
                    v.push((
                        p,
                        if bad.contains(&(ix, iy)) {
                            -100.0
                        } else {
                            -80.0
                        },
                    ));
                }
            }
            v
        };
        let g = grade_floor(&f, &levels(&[(0, 0), (1, 0)]), &[], &rule, -95.0);
        assert_eq!((g.nx, g.ny, g.cells.len()), (5, 4, 20));
        assert!((g.cell_side_m[0] - side).abs() < 1e-9 && (g.cell_side_m[1] - side).abs() < 1e-9);
        let v = &g.verdict;
        assert_eq!(
            (
                v.general_cells,
                v.critical_cells,
                v.failed_cells,
                v.adjacent_failed_pairs
            ),
            (20, 0, 2, 1)
        );
        assert!((v.general_fraction.unwrap() - 0.9).abs() < 1e-12);
        assert_eq!(v.pass, Some(false));
        assert_eq!(v.reasons.len(), 3, "{:?}", v.reasons);
        assert!(g.cells.iter().all(|c| c.judged_by == "predicted"));

        let g = grade_floor(&f, &levels(&[(0, 0)]), &[], &rule, -95.0);
        assert!((g.verdict.general_fraction.unwrap() - 0.95).abs() < 1e-12);
        assert_eq!(g.verdict.pass, Some(true));

        // A measurement walk in cell (1, 0) averaging -90 dBm (>= -95) overrides its
        // failing prediction: judged on measurements, it passes; the floor passes.
        let walk = vec![
            (Point2::new(1.2 * side, 0.3 * side), -88.0),
            (Point2::new(1.8 * side, 0.7 * side), -92.0),
        ];
        let g = grade_floor(&f, &levels(&[(0, 0), (1, 0)]), &walk, &rule, -95.0);
        let c = g.cells.iter().find(|c| (c.ix, c.iy) == (1, 0)).unwrap();
        assert_eq!(
            (c.judged_by.as_str(), c.measured_mean_dbm, c.pass),
            ("measured", Some(-90.0), Some(true))
        );
        assert_eq!(g.verdict.failed_cells, 1);
        assert_eq!(g.verdict.pass, Some(true));
        assert_eq!(g.on_predictions.pass, Some(false));
        assert_eq!(g.on_measurements.pass, Some(true));
    }

    /// Hand count: a critical zone covering the whole left column (x < 20 ft) makes the
    /// four cells of column 0 critical; one of them failing gives 3/4 = 75 % < 99 %.
    #[test]
    fn critical_cells_by_majority_area() {
        let ft = 0.3048;
        let side = 20.0 * ft;
        let z = rfsite_model::Zone {
            id: "stair".into(),
            name: "Stair".into(),
            kind: ZoneKind::Critical,
            polygon: rect(side, 80.0 * ft),
        };
        let f = floor(rect(100.0 * ft, 80.0 * ft), vec![z]);
        let rule = builtin_rules()["public-safety-95-99"].clone();
        let mut levels = Vec::new();
        for iy in 0..4 {
            for ix in 0..5 {
                let p = Point2::new((ix as f64 + 0.5) * side, (iy as f64 + 0.5) * side);
                levels.push((p, if (ix, iy) == (0, 2) { -100.0 } else { -80.0 }));
            }
        }
        let g = grade_floor(&f, &levels, &[], &rule, -95.0);
        assert_eq!((g.verdict.general_cells, g.verdict.critical_cells), (16, 4));
        assert!((g.verdict.critical_fraction.unwrap() - 0.75).abs() < 1e-12);
        assert_eq!(g.verdict.pass, Some(false));
    }

    /// Cell sides respect the rule's limits: a 10 m x 10 m floor cannot hold 20 cells of at
    /// least 20 ft (6.096 m): one cell per axis (10 / 6.096 = 1.6, floor 1).
    #[test]
    fn small_floor_respects_min_side() {
        let l = cell_layout(&rect(10.0, 10.0), 20, 6.096, 24.384);
        assert_eq!((l.nx, l.ny, l.cells.len()), (1, 1, 1));
        // A 200 m square with max 80 ft sides needs ceil(200 / 24.384) = 9 per axis.
        let l = cell_layout(&rect(200.0, 200.0), 20, 6.096, 24.384);
        assert_eq!((l.nx, l.ny), (9, 9));
    }
}
