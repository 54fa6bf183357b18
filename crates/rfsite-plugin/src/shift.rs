//! Survey points carried over to a changed site: the level measured today plus what the
//! change is predicted to add there. With the strongest-server rule a point whose
//! predicted level rises gets `max(measured, predicted after)`; with the power sum, the
//! measured power plus the predicted increase (after minus before, in milliwatts). A point
//! where the prediction does not rise keeps its measured level, so a change that does not
//! reach a weak measured point leaves it failing.

use rfsite_model::Combine;

use crate::{CoverageLayer, Measurement, SurveyData};

/// The level a measured point is expected to have after a change, dBm.
pub fn shifted_level(measured: f64, before: f64, after: f64, combine: Combine) -> f64 {
    if after.is_nan() || before.is_nan() || after <= before {
        return measured;
    }
    match combine {
        Combine::Strongest => measured.max(after),
        Combine::PowerSum => {
            let added = 10f64.powf(after / 10.0) - 10f64.powf(before / 10.0);
            10.0 * (10f64.powf(measured / 10.0) + added).log10()
        }
    }
}

/// The predicted level of `layers` at a measured point (nearest grid point), if any.
fn level_at(layers: &[&CoverageLayer], m: &Measurement) -> Option<f64> {
    let l = layers
        .iter()
        .find(|l| l.floor == m.floor && l.service == m.service)?;
    let g = l.grid.to_grid();
    let (ix, iy) = g.cell_of(rfsite_geometry::Point2::new(m.x_m, m.y_m))?;
    let v = *l.level_dbm.get(iy * g.nx + ix)?;
    Some(v as f64)
}

/// Every survey point shifted by the change from `before` to `after` layers.
pub fn shift_surveys(
    surveys: &SurveyData,
    before: &[&CoverageLayer],
    after: &[&CoverageLayer],
    combine: Combine,
) -> SurveyData {
    let mut out = surveys.clone();
    for m in &mut out.points {
        let b = level_at(before, m).unwrap_or(f64::NAN);
        let a = level_at(after, m).unwrap_or(f64::NAN);
        let b = if b == f64::NEG_INFINITY { -400.0 } else { b };
        m.level_dbm = shifted_level(m.level_dbm, b, a, combine);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Hand calculation: −90 dBm before and −80 dBm after add 1e-8 − 1e-9 = 9e-9 mW;
    /// measured −95 dBm is 3.162e-10 mW; the sum 9.316e-9 mW is −80.308 dBm.
    #[test]
    fn power_sum_adds_the_predicted_increase() {
        let x = shifted_level(-95.0, -90.0, -80.0, Combine::PowerSum);
        assert!((x - (-80.308)).abs() < 0.01, "{x}");
    }

    /// Definition of the strongest-server rule: the better of today's server and the new.
    #[test]
    fn strongest_takes_the_better_and_nothing_falls() {
        assert_eq!(
            shifted_level(-95.0, -90.0, -80.0, Combine::Strongest),
            -80.0
        );
        assert_eq!(
            shifted_level(-70.0, -90.0, -80.0, Combine::Strongest),
            -70.0
        );
        assert_eq!(
            shifted_level(-95.0, -90.0, -92.0, Combine::Strongest),
            -95.0
        );
        assert_eq!(
            shifted_level(-95.0, f64::NAN, -80.0, Combine::PowerSum),
            -95.0
        );
    }
}
