//! The cumulative distribution of one service's measured levels (all floors pooled), with
//! the two levels a reader compares it with drawn as vertical lines: the rule set's
//! threshold and the required level of a measured point (threshold + design margin).
//! It lives here, not in survey-compare, because the required level is the grading's.

use rfsite_plugin::{Figure, Measurement, RequiredLevel, Series};

/// Most steps drawn per curve: evenly spaced ranks beyond this.
const MAX_STEPS: usize = 400;

fn f1(x: f64) -> String {
    format!("{x:.1}")
}

/// The empirical distribution of `v` (sorted ascending): at most [`MAX_STEPS`] points
/// `[level, percent of points at or below it]`, the last one at 100 %.
pub fn cdf_points(v: &[f64]) -> Vec<[f64; 2]> {
    let n = v.len();
    let k = n.min(MAX_STEPS);
    (0..k)
        .map(|j| {
            let i = if k == n {
                j
            } else {
                j * (n - 1) / (k - 1).max(1)
            };
            [v[i], 100.0 * (i + 1) as f64 / n as f64]
        })
        .collect()
}

/// A vertical line at `x_dbm` over the percentage axis (a two-point series, which the
/// report draws dashed as a reference line).
fn vertical(name: String, x_dbm: f64) -> Series {
    Series {
        name,
        points: vec![[x_dbm, 0.0], [x_dbm, 100.0]],
    }
}

/// The figure for the service `id` (named `name`), or `None` without survey points of it.
pub fn figure(id: &str, name: &str, req: &RequiredLevel, points: &[Measurement]) -> Option<Figure> {
    let mut v: Vec<f64> = points
        .iter()
        .filter(|m| m.service == id && m.level_dbm.is_finite())
        .map(|m| m.level_dbm)
        .collect();
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let below = v.iter().filter(|l| **l < req.measured_dbm).count();
    Some(Figure {
        id: rfsite_model::names::figure_stem("survey-cdf", &[id]),
        title: format!(
            "Cumulative distribution of measured levels, {} (all floors, {} points, {} below the required level)",
            name,
            v.len(),
            below
        ),
        kind: "line".into(),
        x_label: "measured level (dBm)".into(),
        y_label: "points at or below (%)".into(),
        series: vec![
            Series {
                name: format!("{name}, measured"),
                points: cdf_points(&v),
            },
            vertical(
                format!("threshold {} dBm", f1(req.threshold_dbm)),
                req.threshold_dbm,
            ),
            vertical(
                format!(
                    "required level {} dBm (threshold + {} dB margin)",
                    f1(req.measured_dbm),
                    f1(req.design_margin_db)
                ),
                req.measured_dbm,
            ),
        ],
    })
}
