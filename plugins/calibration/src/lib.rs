//! # calibration plugin (opt-in)
//!
//! Fits chosen parameters of the multi-wall prediction to the survey, per service, by
//! linear least squares on the residual r = measured - predicted:
//!
//! `r = o - sum_m k_m d_m - dn 10 log10(d)`
//!
//! with `o` a constant offset (dB), `d_m` the change of the per-crossing loss of material
//! `m` (dB) times `k_m`, the number of crossings of that material on the path from the
//! point's best server (counted with the multi-wall scene's crossing machinery), and `dn`
//! a change of the distance exponent over the 3D path length `d` (m). Bounds are honoured
//! by holding a parameter that leaves them at its bound and refitting the others.
//! Standard errors come from sigma^2 (X^T X)^-1 with sigma^2 = RSS / (n - p).
//!
//! With `apply = true` it re-predicts every layer with the fitted values as model
//! `calibrated`, which the grading plugin then grades.
//!
//! ```toml
//! [plugins.calibration]
//! enabled = true
//! fit = ["offset", "material:coated-glazing", "distance-exponent"]
//! min_points = 20
//! bounds = { offset = [-15, 15], "material:coated-glazing" = [-20, 20] }
//! apply = true
//! ```

use std::collections::BTreeMap;

use rfsite_geometry::Point2;
use rfsite_model::Site;
use rfsite_physics::p2040::Polarization;
use rfsite_plugin::*;
use rfsite_plugin_free_space::{PathLoss, P3};
use rfsite_plugin_multi_wall::Scene;
use rfsite_plugin_survey_compare::Interp;
use serde::Serialize;

pub mod lstsq;
pub use lstsq::{bounded_lstsq, lstsq, Fit};

/// The calibration plugin.
pub struct Calibration;

/// A fitted term.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub enum Term {
    /// Constant offset, dB.
    Offset,
    /// Change of the per-crossing loss of a material, dB.
    Material(String),
    /// Change of the distance exponent (multiplies 10 log10 d).
    DistanceExponent,
}

impl Term {
    /// Parses `offset`, `material:<id>`, `distance-exponent`.
    pub fn parse(s: &str) -> Option<Term> {
        match s {
            "offset" => Some(Term::Offset),
            "distance-exponent" => Some(Term::DistanceExponent),
            _ => s
                .strip_prefix("material:")
                .filter(|m| !m.is_empty())
                .map(|m| Term::Material(m.to_string())),
        }
    }
    /// The option name.
    pub fn key(&self) -> String {
        match self {
            Term::Offset => "offset".into(),
            Term::Material(m) => format!("material:{m}"),
            Term::DistanceExponent => "distance-exponent".into(),
        }
    }
    /// Default bounds (an rfsite choice, stated in the report).
    pub fn default_bounds(&self) -> (f64, f64) {
        match self {
            Term::Offset => (-20.0, 20.0),
            Term::Material(_) => (-20.0, 30.0),
            Term::DistanceExponent => (-1.5, 2.0),
        }
    }
    /// Unit.
    pub fn unit(&self) -> &'static str {
        match self {
            Term::DistanceExponent => "",
            _ => "dB",
        }
    }
}

/// What enters the fit at one measured point.
#[derive(Debug, Clone, PartialEq)]
pub struct PathInfo {
    /// Wall crossings per material on the best-server path.
    pub crossings: BTreeMap<String, usize>,
    /// 3D path length, m.
    pub distance_m: f64,
}

/// One row of the design matrix for `terms`.
pub fn design_row(terms: &[Term], info: &PathInfo) -> Vec<f64> {
    terms
        .iter()
        .map(|t| match t {
            Term::Offset => 1.0,
            Term::Material(m) => -(info.crossings.get(m).copied().unwrap_or(0) as f64),
            Term::DistanceExponent => -10.0 * info.distance_m.log10(),
        })
        .collect()
}

/// Mean, sample std and RMS of values.
pub fn moments(v: &[f64]) -> (f64, f64, f64) {
    let n = v.len().max(1) as f64;
    let mean = v.iter().sum::<f64>() / n;
    let std = if v.len() > 1 {
        (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt()
    } else {
        0.0
    };
    let rms = (v.iter().map(|x| x * x).sum::<f64>() / n).sqrt();
    (mean, std, rms)
}

/// Builds the scene the multi-wall plugin builds, from its options in the site.
pub fn scene_for(site: &Site) -> Scene {
    let mw = site.plugin_options.get("multi-wall");
    let num = |k: &str, d: f64| {
        mw.and_then(|t| t.get(k))
            .and_then(|v| v.as_float().or(v.as_integer().map(|i| i as f64)))
            .unwrap_or(d)
    };
    Scene::new(
        site,
        num("floor_b", rfsite_physics::cost231::COST231_DEFAULT_B),
        num("max_crossing_loss_db", 60.0),
    )
}

/// The observations of one service: (design row inputs, residual measured - predicted),
/// and how many points had no prediction or server.
pub fn observations(
    site: &Site,
    scene: &Scene,
    layers: &[&CoverageLayer],
    points: &[&Measurement],
) -> (Vec<(PathInfo, f64)>, usize) {
    let mut out = Vec::new();
    let mut skipped = 0;
    let interps: BTreeMap<&str, (Interp, &CoverageLayer)> = layers
        .iter()
        .map(|l| (l.floor.as_str(), (Interp::new(l), *l)))
        .collect();
    for m in points {
        let p = Point2::new(m.x_m, m.y_m);
        let Some((ip, l)) = interps.get(m.floor.as_str()) else {
            skipped += 1;
            continue;
        };
        let g = l.grid.to_grid();
        let server = g
            .cell_of(p)
            .and_then(|(ix, iy)| l.best_server.get(iy * g.nx + ix))
            .and_then(|s| l.servers.get(*s as usize));
        let (Some(pred), Some(server), Some(fi)) = (ip.at(p), server, site.floor_index(&m.floor))
        else {
            skipped += 1;
            continue;
        };
        let Some((crossings, distance_m)) = scene.crossings_by_material(site, server, fi, p) else {
            skipped += 1;
            continue;
        };
        out.push((
            PathInfo {
                crossings,
                distance_m,
            },
            m.level_dbm - pred,
        ));
    }
    (out, skipped)
}

/// The fit of one service.
#[derive(Debug, Clone, Serialize)]
pub struct ServiceFit {
    /// Service id.
    pub service: String,
    /// Points used.
    pub points: usize,
    /// Points without a prediction or best server.
    pub skipped: usize,
    /// Terms fitted (after dropping unidentifiable ones).
    pub terms: Vec<Term>,
    /// Fitted values.
    pub values: Vec<f64>,
    /// Standard errors (NaN at a bound).
    pub std_errors: Vec<f64>,
    /// Bounds.
    pub bounds: Vec<(f64, f64)>,
    /// Held at a bound.
    pub at_bound: Vec<bool>,
    /// Residual mean, std, RMS before, dB.
    pub before: (f64, f64, f64),
    /// After.
    pub after: (f64, f64, f64),
    /// sqrt(RSS / dof), dB.
    pub sigma_db: f64,
    /// Notes (dropped terms).
    pub notes: Vec<String>,
}

/// Fits `terms` to observations, dropping terms no observation informs.
pub fn fit_terms(
    service: &str,
    obs: &[(PathInfo, f64)],
    skipped: usize,
    terms: &[Term],
    bounds: &[(f64, f64)],
) -> Result<ServiceFit, String> {
    let mut notes = Vec::new();
    let mut keep = Vec::new();
    for (t, b) in terms.iter().zip(bounds) {
        let used = obs
            .iter()
            .any(|(i, _)| design_row(std::slice::from_ref(t), i)[0] != 0.0);
        if used {
            keep.push((t.clone(), *b));
        } else {
            notes.push(format!(
                "`{}` not fitted: no measured path crosses it",
                t.key()
            ));
        }
    }
    let ts: Vec<Term> = keep.iter().map(|k| k.0.clone()).collect();
    let x: Vec<Vec<f64>> = obs.iter().map(|(i, _)| design_row(&ts, i)).collect();
    let y: Vec<f64> = obs.iter().map(|o| o.1).collect();
    let lo: Vec<f64> = keep.iter().map(|k| k.1 .0).collect();
    let hi: Vec<f64> = keep.iter().map(|k| k.1 .1).collect();
    let f = bounded_lstsq(&x, &y, &lo, &hi)?;
    let after: Vec<f64> = x
        .iter()
        .zip(&y)
        .map(|(r, yy)| yy - r.iter().zip(&f.beta).map(|(a, b)| a * b).sum::<f64>())
        .collect();
    Ok(ServiceFit {
        service: service.into(),
        points: obs.len(),
        skipped,
        terms: ts,
        values: f.beta.clone(),
        std_errors: f.se.clone(),
        bounds: keep.iter().map(|k| k.1).collect(),
        at_bound: f.at_bound.clone(),
        before: moments(&y),
        after: moments(&after),
        sigma_db: f.sigma,
        notes,
    })
}

/// Multi-wall plus the fitted offset and distance-exponent change per service (the
/// material changes are applied to the scene itself).
pub struct Calibrated<'a> {
    /// Scene with adjusted material losses.
    pub scene: &'a Scene,
    /// Per service index: (offset dB, distance-exponent change).
    pub terms: Vec<(f64, f64)>,
}

impl PathLoss for Calibrated<'_> {
    type Scratch = <Scene as PathLoss>::Scratch;
    fn scratch(&self) -> Self::Scratch {
        self.scene.scratch()
    }
    fn extra_db(
        &self,
        scratch: &mut Self::Scratch,
        service: usize,
        tx: P3,
        tx_floor: usize,
        rx: P3,
        rx_floor: usize,
    ) -> f64 {
        let (o, dn) = self.terms.get(service).copied().unwrap_or((0.0, 0.0));
        let d = ((rx.p.x - tx.p.x).powi(2) + (rx.p.y - tx.p.y).powi(2) + (rx.z - tx.z).powi(2))
            .sqrt()
            .max(rfsite_plugin_free_space::MIN_DISTANCE_M);
        self.scene
            .extra_db(scratch, service, tx, tx_floor, rx, rx_floor)
            - o
            + dn * 10.0 * d.log10()
    }
}

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

fn f1(x: f64) -> String {
    fixed(x, 1).unwrap_or_else(|| "n/a".into())
}

fn f2(x: f64) -> String {
    fixed(x, 2).unwrap_or_else(|| "—".into())
}

fn opt_enabled(site: &Site) -> bool {
    site.plugin_options
        .get("calibration")
        .and_then(|t| t.get("enabled"))
        .and_then(|v| v.as_bool())
        .unwrap_or(false)
}

impl Plugin for Calibration {
    fn id(&self) -> &str {
        "calibration"
    }
    fn version(&self) -> &str {
        env!("CARGO_PKG_VERSION")
    }
    fn method(&self) -> Method {
        Method {
            summary: "Per service, linear least squares of measured - predicted on a constant offset, per-material changes of the per-crossing loss (times the crossings of that material on the best-server path) and a distance-exponent change (times 10 log10 d), with bounds (held at the bound and refitted); standard errors from sigma^2 (X^T X)^-1".into(),
            citations: vec![
                "Linear least squares and its covariance sigma^2 (X^T X)^-1 (textbook); checked against numpy.linalg.lstsq".into(),
                "COST 231 Final Report (1999), section 4.7: wall losses as fitted parameters of the multi-wall model".into(),
            ],
            validity: "meaningful with many points spread over paths that cross each fitted material differently; the fit absorbs survey bias (antenna, body loss) into the offset".into(),
        }
    }
    fn after(&self) -> Vec<String> {
        vec![
            "free-space".into(),
            "multi-wall".into(),
            "survey-compare".into(),
        ]
    }
    fn applies(&self, site: &Site) -> bool {
        opt_enabled(site) && !site.transmitters.is_empty()
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        let site = ctx.site;
        let mut out = PluginOutput::default();
        let bad = |key: &str, message: String| PluginError::BadOption {
            key: key.into(),
            message,
        };
        let terms: Vec<Term> = match ctx.options.get("fit") {
            None => vec![Term::Offset],
            Some(toml::Value::Array(a)) => a
                .iter()
                .map(|v| {
                    v.as_str().and_then(Term::parse).ok_or_else(|| {
                        bad(
                            "fit",
                            format!(
                                "`{v}` is not `offset`, `material:<id>` or `distance-exponent`"
                            ),
                        )
                    })
                })
                .collect::<Result<_, _>>()?,
            Some(v) => {
                return Err(bad(
                    "fit",
                    format!("expected a list, found {}", v.type_str()),
                ))
            }
        };
        for t in &terms {
            if let Term::Material(m) = t {
                if !site.materials_used.contains(m) {
                    return Err(bad(
                        "fit",
                        format!(
                            "material `{m}` is not used on this site (used: {})",
                            site.materials_used.join(", ")
                        ),
                    ));
                }
            }
        }
        let min_points = ctx.option_f64("min_points", 20.0)?.max(1.0) as usize;
        let apply = ctx.option_bool("apply", false)?;
        let bt = ctx.options.get("bounds").and_then(|v| v.as_table());
        let mut bounds = Vec::new();
        for t in &terms {
            let b = match bt.and_then(|b| b.get(&t.key())) {
                None => t.default_bounds(),
                Some(toml::Value::Array(a)) if a.len() == 2 => {
                    let n = |v: &toml::Value| v.as_float().or(v.as_integer().map(|i| i as f64));
                    match (n(&a[0]), n(&a[1])) {
                        (Some(lo), Some(hi)) if lo <= hi => (lo, hi),
                        _ => {
                            return Err(bad(
                                "bounds",
                                format!("`{}` needs [low, high] numbers, low <= high", t.key()),
                            ))
                        }
                    }
                }
                Some(_) => return Err(bad("bounds", format!("`{}` needs [low, high]", t.key()))),
            };
            bounds.push(b);
        }
        let base = ctx.option_str("model", "multi-wall")?;
        let layers = ctx.layers_of(&base);
        if layers.is_empty() {
            out.warnings.push(Warning {
                plugin: self.id().into(),
                message: format!("no `{base}` layers to calibrate"),
            });
            return Ok(out);
        }
        let scene = scene_for(site);
        let mut fits = Vec::new();
        for svc in &site.services {
            let pts: Vec<&Measurement> = ctx
                .surveys
                .points
                .iter()
                .filter(|m| m.service == svc.id)
                .collect();
            let ls: Vec<&CoverageLayer> = layers
                .iter()
                .copied()
                .filter(|l| l.service == svc.id)
                .collect();
            if pts.is_empty() || ls.is_empty() {
                continue;
            }
            let (obs, skipped) = observations(site, &scene, &ls, &pts);
            if obs.len() < min_points {
                out.warnings.push(Warning { plugin: self.id().into(), message: format!("service `{}`: {} usable survey points, fewer than min_points = {min_points}: not calibrated", svc.id, obs.len()) });
                continue;
            }
            match fit_terms(&svc.id, &obs, skipped, &terms, &bounds) {
                Ok(f) => {
                    for n in &f.notes {
                        out.warnings.push(Warning {
                            plugin: self.id().into(),
                            message: format!("service `{}`: {n}", svc.id),
                        });
                    }
                    fits.push(f);
                }
                Err(e) => out.warnings.push(Warning {
                    plugin: self.id().into(),
                    message: format!("service `{}`: not calibrated: {e}", svc.id),
                }),
            }
        }
        // Tables.
        let name = |sid: &str| {
            site.service(sid)
                .map(|s| s.name.clone())
                .unwrap_or_else(|| sid.to_string())
        };
        let base_loss = |svc: &str, m: &str| -> Option<f64> {
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
        };
        let mut rows = Vec::new();
        for f in &fits {
            for (i, t) in f.terms.iter().enumerate() {
                let (desc, base_v, new_v) = match t {
                    Term::Offset => ("constant offset".to_string(), String::new(), String::new()),
                    Term::Material(m) => {
                        let b = base_loss(&f.service, m);
                        (
                            format!("loss per crossing of {m}"),
                            b.map(f1).unwrap_or_default(),
                            b.map(|b| f1((b + f.values[i]).max(0.0)))
                                .unwrap_or_default(),
                        )
                    }
                    Term::DistanceExponent => (
                        "distance exponent change".into(),
                        "2.0 (free space)".into(),
                        f2(2.0 + f.values[i]),
                    ),
                };
                rows.push(vec![
                    name(&f.service),
                    desc,
                    format!("{} {}", f2(f.values[i]), t.unit()),
                    if f.at_bound[i] {
                        "at bound".into()
                    } else {
                        format!("± {}", f2(f.std_errors[i]))
                    },
                    format!("[{}, {}]", f1(f.bounds[i].0), f1(f.bounds[i].1)),
                    base_v,
                    new_v,
                ]);
            }
        }
        if !fits.is_empty() {
            out.tables.push(Table {
                id: "calibration-parameters".into(),
                title:
                    "Calibration: fitted parameters (change from the model, standard error 1 sigma)"
                        .into(),
                columns: vec![
                    "Service".into(),
                    "Parameter".into(),
                    "Fitted change".into(),
                    "Std error".into(),
                    "Bounds".into(),
                    "Model dB".into(),
                    "Calibrated dB".into(),
                ],
                rows,
            });
            out.tables.push(Table {
                id: "calibration-residuals".into(),
                title: "Calibration: residual measured - predicted before and after (dB)".into(),
                columns: vec![
                    "Service".into(),
                    "Points".into(),
                    "Mean before".into(),
                    "Std before".into(),
                    "RMS before".into(),
                    "Mean after".into(),
                    "Std after".into(),
                    "RMS after".into(),
                    "Fit sigma".into(),
                ],
                rows: fits
                    .iter()
                    .map(|f| {
                        vec![
                            name(&f.service),
                            f.points.to_string(),
                            f1(f.before.0),
                            f1(f.before.1),
                            f1(f.before.2),
                            f1(f.after.0),
                            f1(f.after.1),
                            f1(f.after.2),
                            f1(f.sigma_db),
                        ]
                    })
                    .collect(),
            });
        }
        let extra: Vec<serde_json::Value> = fits
            .iter()
            .map(|f| {
                serde_json::json!({
                    "service": f.service, "points": f.points, "skipped": f.skipped,
                    "parameters": f.terms.iter().enumerate().map(|(i, t)| serde_json::json!({
                        "name": t.key(), "value": f.values[i], "std_error": if f.std_errors[i].is_finite() { Some(f.std_errors[i]) } else { None },
                        "bounds": [f.bounds[i].0, f.bounds[i].1], "at_bound": f.at_bound[i],
                    })).collect::<Vec<_>>(),
                    "residual_before": {"mean_db": f.before.0, "std_db": f.before.1, "rms_db": f.before.2},
                    "residual_after": {"mean_db": f.after.0, "std_db": f.after.1, "rms_db": f.after.2},
                    "sigma_db": f.sigma_db,
                    "convention": "residual = measured - predicted; level += offset - sum(crossings * material change) - change * 10 log10(d)",
                })
            })
            .collect();
        out.extra
            .insert("services".into(), serde_json::Value::Array(extra));
        out.extra
            .insert("applied".into(), (apply && !fits.is_empty()).into());
        if apply && !fits.is_empty() {
            let mut scene = scene_for(site);
            let mut st = vec![(0.0, 0.0); site.services.len()];
            for f in &fits {
                let Some(si) = site.services.iter().position(|s| s.id == f.service) else {
                    continue;
                };
                for (i, t) in f.terms.iter().enumerate() {
                    match t {
                        Term::Offset => st[si].0 = f.values[i],
                        Term::DistanceExponent => st[si].1 = f.values[i],
                        Term::Material(m) => scene.adjust_material(si, m, f.values[i]),
                    }
                }
            }
            out.layers = rfsite_plugin_multi_wall::predict_grid_adjusted(
                site,
                "calibrated",
                &scene,
                &|si, d| {
                    let (o, dn) = st.get(si).copied().unwrap_or((0.0, 0.0));
                    -o + dn * 10.0 * d.log10()
                },
            );
            out.warnings.push(Warning { plugin: self.id().into(), message: "maps and grading use the calibrated model (`calibrated`): the multi-wall prediction with the fitted parameters".into() });
        }
        Ok(out)
    }
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
