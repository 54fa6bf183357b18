//! The plugin's report tables and its machine-readable extra, from the fits.

use rfsite_model::Site;
use rfsite_physics::p2040::Polarization;
use rfsite_plugin::Table;

use crate::{ServiceFit, Term, VarState};

/// `x` with `decimals` decimals (`None` if not finite); a value that rounds to zero
/// prints as 0, never as -0.
fn fixed(x: f64, decimals: usize) -> Option<String> {
    if !x.is_finite() {
        return None;
    }
    let s = format!("{x:.decimals$}");
    let negative_zero = s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.');
    Some(if negative_zero { s[1..].to_string() } else { s })
}

pub(crate) fn f1(x: f64) -> String {
    fixed(x, 1).unwrap_or_else(|| "n/a".into())
}

pub(crate) fn f2(x: f64) -> String {
    fixed(x, 2).unwrap_or_else(|| "—".into())
}

/// The standard-error cell of the parameter table.
fn se_cell(st: VarState, se: f64) -> String {
    match st {
        VarState::Free => format!("± {}", f2(se)),
        VarState::AtLower | VarState::AtUpper => "at bound".into(),
        VarState::Uninformed => "not informed".into(),
        VarState::Dependent => "not separable".into(),
    }
}

fn state_key(st: VarState) -> &'static str {
    match st {
        VarState::Free => "fitted",
        VarState::AtLower => "at_lower_bound",
        VarState::AtUpper => "at_upper_bound",
        VarState::Uninformed => "not_informed",
        VarState::Dependent => "not_separable",
    }
}

fn service_name(site: &Site, sid: &str) -> String {
    site.service(sid)
        .map(|s| s.name.clone())
        .unwrap_or_else(|| sid.to_string())
}

/// The model's loss per crossing of material `m` for service `svc`, dB.
fn base_loss(site: &Site, svc: &str, m: &str) -> Option<f64> {
    let s = site.service(svc)?;
    let mat = site.materials.get(m)?;
    let t = site
        .floors
        .iter()
        .flat_map(|f| f.parts.iter())
        .find(|p| p.material == m)
        .map(|p| p.thickness_m)
        .unwrap_or(0.1);
    Some(
        mat.crossing_loss(s.freq_mhz, t, 1.0, Polarization::Te)
            .loss_db,
    )
}

/// One row of the parameter table.
fn parameter_row(site: &Site, f: &ServiceFit, i: usize) -> Vec<String> {
    let t = &f.terms[i];
    let v = f.values[i];
    let (desc, base_v, new_v) = match t {
        Term::Offset => ("constant offset".to_string(), String::new(), String::new()),
        Term::Material(m) => {
            let b = base_loss(site, &f.service, m);
            (
                format!("loss per crossing of {m}"),
                b.map(f1).unwrap_or_default(),
                b.map(|b| f1((b + v).max(0.0))).unwrap_or_default(),
            )
        }
        Term::DistanceExponent => (
            "distance exponent change".into(),
            "2.0 (free space)".into(),
            f2(2.0 + v),
        ),
    };
    vec![
        service_name(site, &f.service),
        desc,
        format!("{} {}", f2(v), t.unit()),
        se_cell(f.state[i], f.std_errors[i]),
        format!("[{}, {}]", f1(f.bounds[i].0), f1(f.bounds[i].1)),
        base_v,
        new_v,
    ]
}

fn residual_row(site: &Site, f: &ServiceFit) -> Vec<String> {
    vec![
        service_name(site, &f.service),
        f.points.to_string(),
        f1(f.before.0),
        f1(f.before.1),
        f1(f.before.2),
        f1(f.after.0),
        f1(f.after.1),
        f1(f.after.2),
        f1(f.sigma_db),
    ]
}

fn columns(names: &[&str]) -> Vec<String> {
    names.iter().map(|s| s.to_string()).collect()
}

/// The parameter and residual tables.
pub fn tables(site: &Site, fits: &[ServiceFit]) -> Vec<Table> {
    let rows = fits
        .iter()
        .flat_map(|f| (0..f.terms.len()).map(move |i| parameter_row(site, f, i)))
        .collect();
    vec![
        Table {
            id: "calibration-parameters".into(),
            title: "Calibration: fitted parameters (change from the model, standard error 1 sigma)"
                .into(),
            columns: columns(&[
                "Service",
                "Parameter",
                "Fitted change",
                "Std error",
                "Bounds",
                "Model dB",
                "Calibrated dB",
            ]),
            rows,
        },
        Table {
            id: "calibration-residuals".into(),
            title: "Calibration: residual measured - predicted before and after (dB)".into(),
            columns: columns(&[
                "Service",
                "Points",
                "Mean before",
                "Std before",
                "RMS before",
                "Mean after",
                "Std after",
                "RMS after",
                "Fit sigma",
            ]),
            rows: fits.iter().map(|f| residual_row(site, f)).collect(),
        },
    ]
}

/// One service's entry in `extra.calibration.services`.
pub fn extra_json(f: &ServiceFit) -> serde_json::Value {
    let parameters: Vec<serde_json::Value> = f
        .terms
        .iter()
        .enumerate()
        .map(|(i, t)| {
            let se = f.std_errors[i];
            serde_json::json!({
                "name": t.key(), "value": f.values[i],
                "std_error": if se.is_finite() { Some(se) } else { None },
                "bounds": [f.bounds[i].0, f.bounds[i].1], "at_bound": f.at_bound[i],
                "state": state_key(f.state[i]),
            })
        })
        .collect();
    serde_json::json!({
        "service": f.service, "points": f.points, "skipped": f.skipped,
        "parameters": parameters,
        "residual_before": {"mean_db": f.before.0, "std_db": f.before.1, "rms_db": f.before.2},
        "residual_after": {"mean_db": f.after.0, "std_db": f.after.1, "rms_db": f.after.2},
        "sigma_db": f.sigma_db,
        "solver_steps": f.steps,
        "convention": "residual = measured - predicted; level += offset - sum(crossings * material change) - change * 10 log10(d)",
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_that_round_to_zero_print_without_a_sign() {
        // A fitted mean residual of -1e-6 dB is zero at the printed precision.
        assert_eq!(f1(-1e-6), "0.0");
        assert_eq!(f2(-0.004), "0.00");
        assert_eq!(f1(-0.06), "-0.1");
        assert_eq!(f2(0.004), "0.00");
        assert_eq!(f1(f64::NAN), "n/a");
        assert_eq!(f2(f64::INFINITY), "—");
    }
}
