//! # survey-compare plugin
//!
//! Compares the prediction with the survey: the predicted level at each measured point,
//! by bilinear interpolation between the prediction grid's cell centres, and the error
//! statistics per service and floor (count, mean, standard deviation, RMSE, the worst
//! points) and a scatter of predicted against measured (the cumulative distribution of
//! measured levels is the grading plugin's figure, beside the required level). It also lists the site's material probes beside the library values
//! they override.
//!
//! Error convention: error = predicted - measured (dB); a positive mean says the model
//! is optimistic.

use std::collections::BTreeMap;

use rfsite_geometry::Point2;
use rfsite_model::Site;
use rfsite_physics::p2040::Polarization;
use rfsite_plugin::*;
use serde::Serialize;

/// The survey-compare plugin.
pub struct SurveyCompare;

/// How many worst points are listed per service and floor.
pub const WORST_POINTS: usize = 5;

/// Predicted level at a plan point, by bilinear interpolation on the layer's grid
/// (NaN cells outside the outline are skipped). `None` off the grid.
pub fn predicted_at(layer: &CoverageLayer, p: Point2) -> Option<f64> {
    let g = layer.grid.to_grid();
    let vals: Vec<f64> = layer.level_dbm.iter().map(|v| *v as f64).collect();
    g.bilinear(&vals, p).filter(|v| v.is_finite())
}

/// A layer's values as f64, for repeated interpolation.
pub struct Interp {
    grid: rfsite_geometry::Grid,
    vals: Vec<f64>,
}

impl Interp {
    /// From a layer.
    pub fn new(layer: &CoverageLayer) -> Self {
        Interp {
            grid: layer.grid.to_grid(),
            vals: layer.level_dbm.iter().map(|v| *v as f64).collect(),
        }
    }
    /// Level at a point.
    pub fn at(&self, p: Point2) -> Option<f64> {
        self.grid.bilinear(&self.vals, p).filter(|v| v.is_finite())
    }
}

/// Error statistics of a set of (predicted - measured) errors.
#[derive(Debug, Clone, Copy, Serialize, PartialEq)]
pub struct ErrorStats {
    /// Points.
    pub count: usize,
    /// Mean error, dB.
    pub mean_db: f64,
    /// Sample standard deviation (n - 1), dB; 0 for one point.
    pub std_db: f64,
    /// Root mean square error, dB.
    pub rmse_db: f64,
}

/// Statistics of `errors` (None when empty).
pub fn error_stats(errors: &[f64]) -> Option<ErrorStats> {
    let n = errors.len();
    if n == 0 {
        return None;
    }
    let mean = errors.iter().sum::<f64>() / n as f64;
    let ss: f64 = errors.iter().map(|e| (e - mean).powi(2)).sum();
    let std = if n > 1 {
        (ss / (n - 1) as f64).sqrt()
    } else {
        0.0
    };
    let rmse = (errors.iter().map(|e| e * e).sum::<f64>() / n as f64).sqrt();
    Some(ErrorStats {
        count: n,
        mean_db: mean,
        std_db: std,
        rmse_db: rmse,
    })
}

/// One compared point.
#[derive(Debug, Clone, Serialize)]
pub struct ComparedPoint {
    /// File.
    pub file: String,
    /// Line.
    pub line: usize,
    /// Plan position, m.
    pub point_m: [f64; 2],
    /// Measured, dBm.
    pub measured_dbm: f64,
    /// Predicted, dBm.
    pub predicted_dbm: f64,
    /// Predicted - measured, dB.
    pub error_db: f64,
}

/// Comparison for one service on one floor.
#[derive(Debug, Clone, Serialize)]
pub struct FloorComparison {
    /// Service id.
    pub service: String,
    /// Floor id.
    pub floor: String,
    /// Points compared.
    pub count: usize,
    /// Mean error, dB.
    pub mean_db: f64,
    /// Standard deviation, dB.
    pub std_db: f64,
    /// RMSE, dB.
    pub rmse_db: f64,
    /// Measured points with no prediction there (off the grid).
    pub not_compared: usize,
    /// The worst points by |error|.
    pub worst: Vec<ComparedPoint>,
}

/// Compares `points` with the layers of `model`; groups sorted by service then floor.
pub fn compare(
    layers: &[&CoverageLayer],
    points: &[Measurement],
) -> (Vec<FloorComparison>, Vec<(String, ComparedPoint)>) {
    let mut groups: BTreeMap<(String, String), (Vec<ComparedPoint>, usize)> = BTreeMap::new();
    let mut interps: BTreeMap<(String, String), Interp> = BTreeMap::new();
    for l in layers {
        interps.insert((l.service.clone(), l.floor.clone()), Interp::new(l));
    }
    let mut all = Vec::new();
    for m in points {
        let key = (m.service.clone(), m.floor.clone());
        let e = groups.entry(key.clone()).or_default();
        match interps
            .get(&key)
            .and_then(|i| i.at(Point2::new(m.x_m, m.y_m)))
        {
            Some(p) => {
                let cp = ComparedPoint {
                    file: m.file.clone(),
                    line: m.line,
                    point_m: [m.x_m, m.y_m],
                    measured_dbm: m.level_dbm,
                    predicted_dbm: p,
                    error_db: p - m.level_dbm,
                };
                all.push((m.service.clone(), cp.clone()));
                e.0.push(cp);
            }
            None => e.1 += 1,
        }
    }
    let out = groups
        .into_iter()
        .map(|((service, floor), (mut pts, nc))| {
            let errs: Vec<f64> = pts.iter().map(|p| p.error_db).collect();
            let s = error_stats(&errs).unwrap_or(ErrorStats {
                count: 0,
                mean_db: f64::NAN,
                std_db: f64::NAN,
                rmse_db: f64::NAN,
            });
            pts.sort_by(|a, b| {
                b.error_db
                    .abs()
                    .total_cmp(&a.error_db.abs())
                    .then(a.file.cmp(&b.file))
                    .then(a.line.cmp(&b.line))
            });
            pts.truncate(WORST_POINTS);
            FloorComparison {
                service,
                floor,
                count: s.count,
                mean_db: s.mean_db,
                std_db: s.std_db,
                rmse_db: s.rmse_db,
                not_compared: nc,
                worst: pts,
            }
        })
        .collect();
    (out, all)
}

fn f1(x: f64) -> String {
    if x.is_finite() {
        format!("{x:.1}")
    } else {
        "n/a".into()
    }
}

/// The model a plugin compares or grades: its `model` option, else the site's.
pub fn model_layers<'a>(ctx: &Context<'a>, model: &str) -> (String, Vec<&'a CoverageLayer>) {
    let l = ctx.layers_of(model);
    if l.is_empty() {
        ("free-space".into(), ctx.layers_of("free-space"))
    } else {
        (model.to_string(), l)
    }
}

/// Library versus probe values of every probed material.
pub fn probe_table(site: &Site) -> Option<Table> {
    if site.probes.is_empty() {
        return None;
    }
    let mut thickness: BTreeMap<&str, f64> = BTreeMap::new();
    for f in &site.floors {
        thickness
            .entry(f.slab_material.as_str())
            .or_insert(f.slab_thickness_m);
        for p in &f.parts {
            thickness
                .entry(p.material.as_str())
                .or_insert(p.thickness_m);
        }
    }
    let rows = site
        .probes
        .iter()
        .map(|p| {
            let lib = site
                .materials
                .before_probes
                .get(&p.material)
                .or_else(|| site.materials.get(&p.material));
            let t = thickness.get(p.material.as_str()).copied().unwrap_or(0.1);
            let lib_db = lib.map(|m| {
                m.crossing_loss(p.freq_mhz, t, 1.0, Polarization::Te)
                    .loss_db
            });
            let used = site.materials.get(&p.material).map(|m| {
                m.crossing_loss(p.freq_mhz, t, 1.0, Polarization::Te)
                    .loss_db
            });
            let probe = rfsite_model::material::probe_loss_db(p.clear_dbm, p.through_dbm);
            vec![
                lib.map(|m| m.name.clone())
                    .unwrap_or_else(|| p.material.clone()),
                f1(p.freq_mhz),
                f1(p.clear_dbm),
                f1(p.through_dbm),
                f1(probe),
                lib_db.map(f1).unwrap_or_default(),
                used.map(f1).unwrap_or_default(),
                p.note.clone(),
            ]
        })
        .collect();
    Some(Table {
        id: "material-probes".into(),
        title: "Material probes: site measurement against the library".into(),
        columns: vec![
            "Material".into(),
            "MHz".into(),
            "Clear dBm".into(),
            "Through dBm".into(),
            "Probe loss dB".into(),
            "Library dB".into(),
            "Used dB".into(),
            "Note".into(),
        ],
        rows,
    })
}

impl Plugin for SurveyCompare {
    fn id(&self) -> &str {
        "survey-compare"
    }
    fn version(&self) -> &str {
        env!("CARGO_PKG_VERSION")
    }
    fn method(&self) -> Method {
        Method {
            summary: "Predicted level at each survey point by bilinear interpolation between prediction grid cell centres; error = predicted - measured, per service and floor: count, mean, standard deviation (n - 1), RMSE and the worst points".into(),
            citations: vec!["Descriptive statistics and bilinear interpolation (textbook)".into()],
            validity: "as good as the survey's position accuracy and the grid step; points within half a grid step of the outline use the nearest predicted cells".into(),
        }
    }
    fn after(&self) -> Vec<String> {
        vec!["free-space".into(), "multi-wall".into()]
    }
    fn applies(&self, site: &Site) -> bool {
        !site.surveys.is_empty() || !site.probes.is_empty()
    }
    fn option_keys(&self) -> Option<Vec<&'static str>> {
        Some(vec!["model"])
    }
    fn check(&self, ctx: &Context<'_>) -> Vec<rfsite_plugin::InputProblem> {
        rfsite_plugin::check::problems_of(ctx.option_str("model", &ctx.site.prediction.model))
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        let site = ctx.site;
        let want = ctx.option_str("model", &site.prediction.model)?;
        let (model, layers) = model_layers(ctx, &want);
        let mut out = PluginOutput::default();
        if let Some(t) = probe_table(site) {
            out.tables.push(t);
        }
        if ctx.surveys.points.is_empty() {
            return Ok(out);
        }
        if model != want {
            out.warnings.push(Warning {
                plugin: self.id().into(),
                message: format!("no `{want}` layers: the survey is compared with `{model}`"),
            });
        }
        let (groups, all) = compare(&layers, &ctx.surveys.points);
        let name = |sid: &str| {
            site.service(sid)
                .map(|s| s.name.clone())
                .unwrap_or_else(|| sid.to_string())
        };
        let fname = |fid: &str| {
            site.floor(fid)
                .map(|s| s.name.clone())
                .unwrap_or_else(|| fid.to_string())
        };
        let u = site.units;
        out.tables.push(Table {
            id: "survey-compare".into(),
            title: format!("Survey against prediction ({model}): error = predicted - measured"),
            columns: vec![
                "Service".into(),
                "Floor".into(),
                "Points".into(),
                "Mean dB".into(),
                "Std dB".into(),
                "RMSE dB".into(),
                "Not compared".into(),
            ],
            rows: groups
                .iter()
                .map(|g| {
                    vec![
                        name(&g.service),
                        fname(&g.floor),
                        g.count.to_string(),
                        f1(g.mean_db),
                        f1(g.std_db),
                        f1(g.rmse_db),
                        g.not_compared.to_string(),
                    ]
                })
                .collect(),
        });
        let rfloor = |sid: &str| site.service(sid).map(|s| s.receiver_floor_dbm);
        out.tables.push(Table {
            id: "survey-worst".into(),
            title: format!("Survey points farthest from the prediction (worst {WORST_POINTS} per service and floor)"),
            columns: vec!["Service".into(), "Floor".into(), "File:line".into(), format!("Position {}", u.label()), "Measured dBm".into(), "Predicted dBm".into(), "Error dB".into()],
            rows: groups
                .iter()
                .flat_map(|g| {
                    g.worst.iter().map(|w| {
                        vec![
                            name(&g.service),
                            fname(&g.floor),
                            format!("{}:{}", w.file, w.line),
                            format!("({}, {})", f1(u.from_m(w.point_m[0])), f1(u.from_m(w.point_m[1]))),
                            level_cell(w.measured_dbm, rfloor(&g.service)),
                            level_cell(w.predicted_dbm, rfloor(&g.service)),
                            format!("{:+.1}", w.error_db),
                        ]
                    })
                })
                .collect(),
        });
        // Scatter: predicted vs measured per service, with a 1:1 reference.
        let mut series: Vec<Series> = Vec::new();
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for svc in &site.services {
            let pts: Vec<[f64; 2]> = all
                .iter()
                .filter(|(s, _)| *s == svc.id)
                .map(|(_, p)| [p.measured_dbm, p.predicted_dbm])
                .collect();
            for p in &pts {
                lo = lo.min(p[0].min(p[1]));
                hi = hi.max(p[0].max(p[1]));
            }
            if !pts.is_empty() {
                series.push(Series {
                    name: svc.name.clone(),
                    points: pts,
                });
            }
        }
        if !series.is_empty() {
            let n = 60;
            series.push(Series {
                name: "predicted = measured".into(),
                points: (0..=n)
                    .map(|i| lo + (hi - lo) * i as f64 / n as f64)
                    .map(|v| [v, v])
                    .collect(),
            });
            out.figures.push(Figure {
                id: "survey-scatter".into(),
                title: format!("Predicted ({model}) against measured level at the survey points"),
                kind: "scatter".into(),
                x_label: "measured level (dBm)".into(),
                y_label: "predicted level (dBm)".into(),
                series,
            });
        }
        // The cumulative distribution of measured levels is the grading's figure
        // (`survey-cdf-<service>`): it draws the required level, which is the grading's.
        let v = serde_json::to_value(&groups).map_err(|e| PluginError::Failed(e.to_string()))?;
        out.extra
            .insert("error_convention".into(), "predicted - measured, dB".into());
        out.extra.insert("model".into(), model.into());
        out.extra.insert("comparison".into(), v);
        Ok(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stats_by_hand() {
        // Hand count: errors 1, 2, 3, 6: mean 3, sample variance (4+1+0+9)/3 = 14/3,
        // RMSE sqrt((1+4+9+36)/4) = sqrt(12.5).
        let s = error_stats(&[1.0, 2.0, 3.0, 6.0]).unwrap();
        assert_eq!(s.count, 4);
        assert!((s.mean_db - 3.0).abs() < 1e-12);
        assert!((s.std_db - (14.0f64 / 3.0).sqrt()).abs() < 1e-12);
        assert!((s.rmse_db - 12.5f64.sqrt()).abs() < 1e-12);
    }

    #[test]
    fn bilinear_between_centres() {
        // 2 x 1 grid of 1 m cells: centres at x = 0.5 and 1.5 with -60 and -70 dBm;
        // x = 1.0 lies halfway: -65 dBm (linear interpolation, hand arithmetic).
        let l = CoverageLayer {
            floor: "L1".into(),
            service: "s".into(),
            model: "m".into(),
            grid: GridSpec {
                origin_x_m: 0.0,
                origin_y_m: 0.0,
                step_m: 1.0,
                nx: 2,
                ny: 1,
            },
            level_dbm: vec![-60.0, -70.0],
            best_server: vec![],
            servers: vec![],
        };
        assert!((predicted_at(&l, Point2::new(1.0, 0.5)).unwrap() + 65.0).abs() < 1e-9);
        let m = Measurement {
            floor: "L1".into(),
            service: "s".into(),
            x_m: 1.0,
            y_m: 0.5,
            level_dbm: -61.0,
            file: "a.csv".into(),
            line: 2,
        };
        let (g, _) = compare(&[&l], &[m]);
        assert_eq!(g[0].count, 1);
        assert!((g[0].mean_db + 4.0).abs() < 1e-9);
    }
}
