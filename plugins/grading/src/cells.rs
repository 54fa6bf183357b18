//! Test cells: the floor's bounding box divided into about the rule's number of equal
//! cells (sides within the rule's limits, clipped to the outline), each judged on the
//! prediction and on the measurements in it, and the floor's cell verdict.

use std::collections::BTreeMap;

use rfsite_geometry::Point2;
use rfsite_model::{Floor, ZoneKind};
use rfsite_plugin::{Reason, RequiredLevel};
use serde::Serialize;

use crate::rules::{Judge, Rule};

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
    /// Whether `p` lies in the cell (half-open on the upper edges).
    pub fn contains(&self, p: Point2) -> bool {
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
    /// Mean predicted level (mean of the dBm values at its graded points), dBm; `None`
    /// without points or when a point has no signal.
    pub predicted_mean_dbm: Option<f64>,
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
    /// Each failed criterion.
    pub reasons: Vec<Reason>,
}

fn reason(criterion: &str, value: f64, target: f64, text: String) -> Reason {
    Reason {
        criterion: criterion.into(),
        zone: None,
        value,
        target,
        text,
    }
}

/// Area-weighted pass fractions by zone kind: (judged area, passing area, cells) and the
/// failed cells' (column, row).
type Tally<'a> = (BTreeMap<&'a str, (f64, f64, usize)>, Vec<(usize, usize)>);

fn tally(cells: &[GradedCell], pick: impl Fn(&GradedCell) -> Option<bool>) -> Tally<'_> {
    let mut area = BTreeMap::<&str, (f64, f64, usize)>::new();
    let mut failed = Vec::new();
    for c in cells.iter().filter(|c| c.kind != "excluded") {
        let Some(p) = pick(c) else { continue };
        let key = if c.kind == "critical" {
            "critical"
        } else {
            "general"
        };
        let e = area.entry(key).or_default();
        e.0 += c.inside_fraction;
        e.2 += 1;
        if p {
            e.1 += c.inside_fraction;
        } else {
            failed.push((c.ix, c.iy));
        }
    }
    (area, failed)
}

fn adjacent_pairs(failed: &[(usize, usize)]) -> usize {
    let mut n = 0;
    for (i, a) in failed.iter().enumerate() {
        n += failed[i + 1..]
            .iter()
            .filter(|b| a.0.abs_diff(b.0) + a.1.abs_diff(b.1) == 1)
            .count();
    }
    n
}

fn verdict_of(
    cells: &[GradedCell],
    pick: impl Fn(&GradedCell) -> Option<bool>,
    rule: &Rule,
) -> Verdict {
    let (area, failed) = tally(cells, pick);
    let frac = |k: &str| area.get(k).filter(|e| e.0 > 0.0).map(|e| e.1 / e.0);
    let count = |k: &str| area.get(k).map(|e| e.2).unwrap_or(0);
    let adjacent = adjacent_pairs(&failed);
    let (gf, cf) = (frac("general"), frac("critical"));
    let mut reasons = Vec::new();
    if let Some(g) = gf.filter(|g| *g < rule.target_general) {
        reasons.push(reason(
            "general-cells",
            g,
            rule.target_general,
            format!(
                "{:.1} % of the general test cells pass, target {:.0} %",
                100.0 * g,
                100.0 * rule.target_general
            ),
        ));
    }
    if let Some(c) = cf.filter(|c| *c < rule.target_critical) {
        reasons.push(reason(
            "critical-cells",
            c,
            rule.target_critical,
            format!(
                "{:.1} % of the critical test cells pass, target {:.0} %",
                100.0 * c,
                100.0 * rule.target_critical
            ),
        ));
    }
    if let Some(m) = rule.max_failed_cells.filter(|m| failed.len() > *m) {
        reasons.push(reason(
            "failed-cells",
            failed.len() as f64,
            m as f64,
            format!("{} failed test cells, at most {m} tolerated", failed.len()),
        ));
    }
    if !rule.failed_cells_may_be_adjacent && adjacent > 0 {
        reasons.push(reason(
            "adjacent-failed-cells",
            adjacent as f64,
            0.0,
            format!(
                "{} of failed test cells {} adjacent, which the rule does not allow",
                rfsite_plugin::words::count(adjacent, "pair", "pairs"),
                rfsite_plugin::words::noun(adjacent, "is", "are")
            ),
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

/// The grading of one floor's test cells.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FloorGrade {
    /// Floor id.
    pub floor: String,
    /// Cell columns.
    pub nx: usize,
    /// Cell rows.
    pub ny: usize,
    /// Cell width, height, m.
    pub cell_side_m: [f64; 2],
    /// Cells.
    pub cells: Vec<GradedCell>,
    /// Every cell judged on the prediction.
    pub on_predictions: Verdict,
    /// Only cells with measurements, judged on them.
    pub on_measurements: Verdict,
    /// As the rule judges (the cell test's verdict).
    pub verdict: Verdict,
}

/// How one region (a test cell, or a cell clipped to a critical zone) is judged.
#[derive(Debug, Clone, PartialEq)]
pub struct Judged {
    /// Prediction points in the region.
    pub predicted_points: usize,
    /// Fraction of them at or above the predicted required level.
    pub predicted_fraction: Option<f64>,
    /// Verdict on the prediction.
    pub predicted_pass: Option<bool>,
    /// Mean of the predicted dBm values (`None`: no points, or one without signal).
    pub predicted_mean_dbm: Option<f64>,
    /// Measured points in the region.
    pub measured_points: usize,
    /// Mean of the measured dBm readings.
    pub measured_mean_dbm: Option<f64>,
    /// Verdict on the measurements (mean against the measured required level).
    pub measured_pass: Option<bool>,
    /// "measured", "predicted" or "not judged".
    pub judged_by: &'static str,
    /// The rule's verdict (None: not judged).
    pub pass: Option<bool>,
}

/// Judges the points of `levels` and `measured` that lie in a region. `levels` holds only
/// graded points (inside the outline, outside excluded zones); `nothing_reaches` is true
/// when no prediction serves the floor at all, which fails the region on the prediction.
pub fn judge_region(
    levels: &[(Point2, f64)],
    measured: &[(Point2, f64)],
    in_region: impl Fn(Point2) -> bool,
    rule: &Rule,
    req: &RequiredLevel,
    nothing_reaches: bool,
) -> Judged {
    let (mut np, mut ok, mut sum) = (0usize, 0usize, 0.0);
    for (_, v) in levels.iter().filter(|(p, _)| in_region(*p)) {
        np += 1;
        sum += v;
        if *v >= req.predicted_dbm {
            ok += 1;
        }
    }
    let pf = (np > 0).then(|| ok as f64 / np as f64);
    let pm = (np > 0).then(|| sum / np as f64).filter(|m| m.is_finite());
    let predicted_pass = match pf {
        Some(f) => Some(f >= rule.predicted_cell_point_fraction),
        None if nothing_reaches => Some(false),
        None => None,
    };
    let ms: Vec<f64> = measured
        .iter()
        .filter(|(p, _)| in_region(*p))
        .map(|(_, l)| *l)
        .collect();
    let mm = (!ms.is_empty()).then(|| ms.iter().sum::<f64>() / ms.len() as f64);
    let measured_pass = mm.map(|m| m >= req.measured_dbm);
    let (judged_by, pass) = match (rule.judge, measured_pass, predicted_pass) {
        (Judge::Predicted, _, p) => ("predicted", p),
        (Judge::Measured, m, _) => ("measured", m),
        (Judge::MeasuredElsePredicted, Some(m), _) => ("measured", Some(m)),
        (Judge::MeasuredElsePredicted, None, p) => ("predicted", p),
    };
    Judged {
        predicted_points: np,
        predicted_fraction: pf,
        predicted_pass,
        predicted_mean_dbm: pm,
        measured_points: ms.len(),
        measured_mean_dbm: mm,
        measured_pass,
        judged_by: if pass.is_none() {
            "not judged"
        } else {
            judged_by
        },
        pass,
    }
}

/// The sample points of a cell (CELL_SAMPLES per side, at sub-cell centres).
pub fn cell_samples(c: &CellRect) -> impl Iterator<Item = Point2> + '_ {
    let n = CELL_SAMPLES;
    (0..n * n).map(move |k| {
        let (i, j) = (k / n, k % n);
        Point2::new(
            c.min[0] + (i as f64 + 0.5) / n as f64 * (c.max[0] - c.min[0]),
            c.min[1] + (j as f64 + 0.5) / n as f64 * (c.max[1] - c.min[1]),
        )
    })
}

/// A cell's kind by majority of its area inside the outline, and that inside fraction.
fn cell_kind(floor: &Floor, c: &CellRect) -> (ZoneKind, f64) {
    let (mut inside, mut crit, mut excl) = (0usize, 0usize, 0usize);
    for p in cell_samples(c) {
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
    let kind = if 2 * excl > inside {
        ZoneKind::Excluded
    } else if 2 * crit > inside {
        ZoneKind::Critical
    } else {
        ZoneKind::General
    };
    (kind, inside as f64 / (CELL_SAMPLES * CELL_SAMPLES) as f64)
}

/// The graded points of a layer: inside the outline (not NaN) and outside excluded zones.
pub fn graded_points(floor: &Floor, levels: &[(Point2, f64)]) -> Vec<(Point2, f64)> {
    levels
        .iter()
        .filter(|(p, v)| !v.is_nan() && floor.zone_kind_at(*p) != ZoneKind::Excluded)
        .copied()
        .collect()
}

/// Grades one floor's test cells. `levels` are the graded prediction points (see
/// [`graded_points`]; empty when nothing serves the floor, which fails every cell on the
/// prediction); `measured` the survey points on it; `req` the required levels.
pub fn grade_floor(
    floor: &Floor,
    levels: &[(Point2, f64)],
    measured: &[(Point2, f64)],
    rule: &Rule,
    req: &RequiredLevel,
) -> FloorGrade {
    let layout = floor_layout(floor, rule);
    let nothing = levels.is_empty();
    let cells: Vec<GradedCell> = layout
        .cells
        .iter()
        .map(|c| {
            let (kind, inside) = cell_kind(floor, c);
            let j = judge_region(levels, measured, |p| c.contains(p), rule, req, nothing);
            let excluded = kind == ZoneKind::Excluded;
            GradedCell {
                ix: c.ix,
                iy: c.iy,
                bounds_m: [c.min, c.max],
                kind: kind.label().into(),
                inside_fraction: inside,
                predicted_points: j.predicted_points,
                predicted_fraction: j.predicted_fraction,
                predicted_pass: j.predicted_pass,
                predicted_mean_dbm: j.predicted_mean_dbm,
                measured_points: j.measured_points,
                measured_mean_dbm: j.measured_mean_dbm,
                measured_pass: j.measured_pass,
                judged_by: if excluded { "not judged" } else { j.judged_by }.into(),
                pass: if excluded { None } else { j.pass },
            }
        })
        .collect();
    FloorGrade {
        floor: floor.id.clone(),
        nx: layout.nx,
        ny: layout.ny,
        cell_side_m: layout.side_m,
        on_predictions: verdict_of(&cells, |c| c.predicted_pass, rule),
        on_measurements: verdict_of(&cells, |c| c.measured_pass, rule),
        verdict: verdict_of(&cells, |c| c.pass, rule),
        cells,
    }
}

/// The rule's test-cell layout over a floor.
pub fn floor_layout(floor: &Floor, rule: &Rule) -> CellLayout {
    let to_m = rule.side_to_m();
    cell_layout(
        &floor.outline,
        rule.cells_per_floor,
        rule.min_cell_side * to_m,
        rule.max_cell_side * to_m,
    )
}
