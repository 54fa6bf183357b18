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
//! exactly: the fit is the bounded optimum by bounded-variable least squares ([`bvls`](mod@bvls),
//! Stark & Parker 1995), which frees a parameter again when holding it no longer pays
//! (clamping or holding the worst violator misses the optimum when two bounds bind).
//! A term no measured path informs, or one the paths cannot separate from the others, is
//! held (at 0, or the bound nearest it) and named in a warning. Standard errors come from
//! sigma^2 (X_F^T X_F)^-1 over the fitted terms F, sigma^2 = RSS / (n - |F|).
//! A service without usable survey points is named in a warning, never silently skipped.
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
use rfsite_plugin::*;
use rfsite_plugin_free_space::{PathLoss, P3};
use rfsite_plugin_multi_wall::Scene;
use rfsite_plugin_survey_compare::Interp;
use serde::Serialize;

pub mod bvls;
pub mod lstsq;
mod options;
pub mod qr;
mod tables;
pub use bvls::{bvls, BvlsError, VarState};
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
    use rfsite_plugin_multi_wall::{DEFAULT_MAX_CROSSING_LOSS_DB, DEFAULT_MAX_EXCESS_LOSS_DB};
    Scene::new(
        site,
        num("floor_b", rfsite_physics::cost231::COST231_DEFAULT_B),
        num("max_crossing_loss_db", DEFAULT_MAX_CROSSING_LOSS_DB),
    )
    .with_max_excess_db(num("max_excess_loss_db", DEFAULT_MAX_EXCESS_LOSS_DB))
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
    /// Terms asked for.
    pub terms: Vec<Term>,
    /// Fitted values (a term not fitted keeps the point of its bounds nearest 0).
    pub values: Vec<f64>,
    /// Standard errors (NaN when not fitted).
    pub std_errors: Vec<f64>,
    /// Bounds.
    pub bounds: Vec<(f64, f64)>,
    /// Where each term ended: fitted, at a bound, not informed, not separable.
    pub state: Vec<VarState>,
    /// Held at a bound.
    pub at_bound: Vec<bool>,
    /// Residual mean, std, RMS before, dB.
    pub before: (f64, f64, f64),
    /// After.
    pub after: (f64, f64, f64),
    /// sqrt(RSS / dof), dB.
    pub sigma_db: f64,
    /// Free subproblems the bounded solver solved.
    pub steps: usize,
    /// Notes for the user (terms not fitted, and why).
    pub notes: Vec<String>,
}

/// What the user is told about a term the data cannot fit.
fn state_note(t: &Term, st: VarState, v: f64) -> Option<String> {
    let why = match st {
        VarState::Uninformed => "no measured path crosses it",
        VarState::Dependent => {
            "the measured paths cannot tell it apart from the other fitted terms (e.g. every path crosses it the same number of times)"
        }
        _ => return None,
    };
    Some(format!(
        "`{}` not fitted: {why}; held at {} {} (no change from the model, or the bound nearest it)",
        t.key(),
        tables::f2(v),
        t.unit()
    ))
}

/// Fits `terms` to observations by bounded-variable least squares; a term no observation
/// informs, or one the observations cannot separate from the others, is held and noted.
pub fn fit_terms(
    service: &str,
    obs: &[(PathInfo, f64)],
    skipped: usize,
    terms: &[Term],
    bounds: &[(f64, f64)],
) -> Result<ServiceFit, String> {
    let x: Vec<Vec<f64>> = obs.iter().map(|(i, _)| design_row(terms, i)).collect();
    let y: Vec<f64> = obs.iter().map(|o| o.1).collect();
    let lo: Vec<f64> = bounds.iter().map(|b| b.0).collect();
    let hi: Vec<f64> = bounds.iter().map(|b| b.1).collect();
    let f = bounded_lstsq(&x, &y, &lo, &hi).map_err(|e| e.to_string())?;
    let after: Vec<f64> = x
        .iter()
        .zip(&y)
        .map(|(r, yy)| yy - r.iter().zip(&f.beta).map(|(a, b)| a * b).sum::<f64>())
        .collect();
    let notes = terms
        .iter()
        .zip(f.state.iter().zip(&f.beta))
        .filter_map(|(t, (st, v))| state_note(t, *st, *v))
        .collect();
    Ok(ServiceFit {
        service: service.into(),
        points: obs.len(),
        skipped,
        terms: terms.to_vec(),
        values: f.beta.clone(),
        std_errors: f.se.clone(),
        bounds: bounds.to_vec(),
        state: f.state.clone(),
        at_bound: f.at_bound.clone(),
        before: moments(&y),
        after: moments(&after),
        sigma_db: f.sigma,
        steps: f.steps,
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

fn opt_enabled(site: &Site) -> bool {
    site.plugin_options
        .get("calibration")
        .and_then(|t| t.get("enabled"))
        .and_then(|v| v.as_bool())
        .unwrap_or(false)
}

/// Observations and fit of one service; Err says why it was not calibrated.
fn fit_service(
    ctx: &Context<'_>,
    scene: &Scene,
    layers: &[&CoverageLayer],
    service: &str,
    terms: &[Term],
    bounds: &[(f64, f64)],
    min_points: usize,
) -> Result<ServiceFit, String> {
    let pts: Vec<&Measurement> = ctx
        .surveys
        .points
        .iter()
        .filter(|m| m.service == service)
        .collect();
    if pts.is_empty() {
        return Err("no survey point was measured for this service".into());
    }
    let ls: Vec<&CoverageLayer> = layers
        .iter()
        .copied()
        .filter(|l| l.service == service)
        .collect();
    if ls.is_empty() {
        return Err("no prediction to compare the survey with".into());
    }
    let (obs, skipped) = observations(ctx.site, scene, &ls, &pts);
    if obs.len() < min_points {
        return Err(format!(
            "{} usable survey points of {} ({skipped} without a prediction or best server), fewer than min_points = {min_points}",
            obs.len(),
            pts.len()
        ));
    }
    fit_terms(service, &obs, skipped, terms, bounds)
}

impl Plugin for Calibration {
    fn reruns_for_options(&self, _site: &Site) -> bool {
        true
    }
    fn id(&self) -> &str {
        "calibration"
    }
    fn version(&self) -> &str {
        env!("CARGO_PKG_VERSION")
    }
    fn method(&self) -> Method {
        Method {
            summary: "Per service, linear least squares of measured - predicted on a constant offset, per-material changes of the per-crossing loss (times the crossings of that material on the best-server path) and a distance-exponent change (times 10 log10 d), within bounds by bounded-variable least squares (the bounded optimum; a term no path informs, or one the paths cannot separate, is held and reported); standard errors from sigma^2 (X_F^T X_F)^-1 over the fitted terms".into(),
            citations: vec![
                "Linear least squares and its covariance sigma^2 (X^T X)^-1 (textbook); checked against numpy.linalg.lstsq".into(),
                "Stark & Parker, Bounded-variable least-squares: an algorithm and applications, Computational Statistics 10 (1995) 129-141; checked against scipy.optimize.lsq_linear(method=\"bvls\")".into(),
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
    fn option_keys(&self) -> Option<Vec<&'static str>> {
        Some(vec!["fit", "bounds", "min_points", "apply", "model"])
    }
    fn check(&self, ctx: &Context<'_>) -> Vec<rfsite_plugin::InputProblem> {
        rfsite_plugin::check::problems_of(options::read_options(ctx))
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        let site = ctx.site;
        if let Some(base) = &ctx.base {
            return Ok(frozen(site, base));
        }
        let mut out = PluginOutput::default();
        let options::CalOptions {
            terms,
            bounds,
            min_points,
            apply,
            base,
        } = options::read_options(ctx)?;
        let warn = |message: String| Warning {
            plugin: "calibration".into(),
            message,
        };
        let layers = ctx.layers_of(&base);
        if layers.is_empty() {
            out.warnings
                .push(warn(format!("no `{base}` layers to calibrate")));
            return Ok(out);
        }
        let scene = scene_for(site);
        let mut fits = Vec::new();
        let mut not_calibrated = Vec::new();
        for svc in &site.services {
            match fit_service(ctx, &scene, &layers, &svc.id, &terms, &bounds, min_points) {
                Ok(f) => {
                    let notes = f.notes.iter();
                    out.warnings
                        .extend(notes.map(|n| warn(format!("service `{}`: {n}", svc.id))));
                    fits.push(f);
                }
                Err(why) => {
                    out.warnings
                        .push(warn(format!("service `{}`: not calibrated: {why}", svc.id)));
                    not_calibrated.push(serde_json::json!({"service": svc.id, "reason": why}));
                }
            }
        }
        if fits.is_empty() {
            out.warnings.push(warn(format!(
                "calibration is enabled but no service was calibrated ({} survey points in all; the reason per service is listed): the `{base}` prediction stands uncalibrated",
                ctx.surveys.points.len()
            )));
        } else {
            out.tables = tables::tables(site, &fits);
        }
        out.extra.insert(
            "not_calibrated".into(),
            serde_json::Value::Array(not_calibrated),
        );
        out.extra.insert(
            "services".into(),
            fits.iter().map(tables::extra_json).collect(),
        );
        out.extra
            .insert("applied".into(), (apply && !fits.is_empty()).into());
        if apply && !fits.is_empty() {
            out.layers = apply_fits(site, &fits);
            out.warnings.push(warn("maps and grading use the calibrated model (`calibrated`): the multi-wall prediction with the fitted parameters (a service not calibrated keeps the multi-wall values)".into()));
        }
        Ok(out)
    }
}

/// The fitted values per service: (service id, [(term, value)]).
pub type Fitted = Vec<(String, Vec<(Term, f64)>)>;

/// The values a calibration run fitted, read back from its output (`extra.services`);
/// empty when it did not apply them.
pub fn fitted_values(out: &PluginOutput) -> Fitted {
    if out.extra.get("applied") != Some(&serde_json::Value::Bool(true)) {
        return Vec::new();
    }
    let Some(services) = out.extra.get("services").and_then(|v| v.as_array()) else {
        return Vec::new();
    };
    services.iter().filter_map(service_values).collect()
}

fn service_values(v: &serde_json::Value) -> Option<(String, Vec<(Term, f64)>)> {
    let service = v.get("service")?.as_str()?.to_string();
    let terms = v
        .get("parameters")?
        .as_array()?
        .iter()
        .filter_map(|p| {
            let t = Term::parse(p.get("name")?.as_str()?)?;
            Some((t, p.get("value")?.as_f64()?))
        })
        .collect();
    Some((service, terms))
}

/// The calibrated model: the multi-wall scene with the fitted material changes, and per
/// service index the fitted (offset, distance-exponent change).
pub fn calibrated_model(site: &Site, fitted: &Fitted) -> (Scene, Vec<(f64, f64)>) {
    let mut scene = scene_for(site);
    let mut st = vec![(0.0, 0.0); site.services.len()];
    for (service, terms) in fitted {
        let Some(si) = site.services.iter().position(|s| &s.id == service) else {
            continue;
        };
        for (t, v) in terms {
            match t {
                Term::Offset => st[si].0 = *v,
                Term::DistanceExponent => st[si].1 = *v,
                Term::Material(m) => scene.adjust_material(si, m, *v),
            }
        }
    }
    (scene, st)
}

/// The extra loss of the calibrated model on a path of service `si` and length `d` m.
pub fn calibrated_adjust(st: &[(f64, f64)], si: usize, d: f64) -> f64 {
    let (o, dn) = st.get(si).copied().unwrap_or((0.0, 0.0));
    -o + dn * 10.0 * d.log10()
}

/// Re-predicts every layer with fitted values, as model `calibrated`.
fn apply_values(site: &Site, fitted: &Fitted) -> Vec<CoverageLayer> {
    let (scene, st) = calibrated_model(site, fitted);
    rfsite_plugin_multi_wall::predict_grid_adjusted(site, "calibrated", &scene, &|si, d| {
        calibrated_adjust(&st, si, d)
    })
}

/// In an option's re-run: the values fitted on the site as it is, applied to the changed
/// site (nothing when the site's own run did not apply a calibration).
fn frozen(site: &Site, base: &BaseRun<'_>) -> PluginOutput {
    let fitted = base
        .outputs
        .iter()
        .find(|(id, _)| id == "calibration")
        .map(|(_, o)| fitted_values(o))
        .unwrap_or_default();
    let mut out = PluginOutput::default();
    if fitted.is_empty() {
        return out;
    }
    let (scene, st) = calibrated_model(site, &fitted);
    let adjust = |si: usize, d: f64| calibrated_adjust(&st, si, d);
    out.layers = rfsite_plugin_multi_wall::with_added(site, "calibrated", &scene, &adjust, base)
        .unwrap_or_else(|| apply_values(site, &fitted));
    out
}

/// Re-predicts every layer with the fitted values, as model `calibrated`.
fn apply_fits(site: &Site, fits: &[ServiceFit]) -> Vec<CoverageLayer> {
    let fitted: Fitted = fits
        .iter()
        .map(|f| {
            (
                f.service.clone(),
                f.terms
                    .iter()
                    .cloned()
                    .zip(f.values.iter().copied())
                    .collect(),
            )
        })
        .collect();
    apply_values(site, &fitted)
}
