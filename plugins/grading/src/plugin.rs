//! The grading plugin's run: rule sets, the graded model, one verdict per service and
//! floor, the cell-grading table and figures, and the machine-readable extras.

use std::collections::BTreeMap;

use rfsite_model::{Service, Site};
use rfsite_plugin::*;

use crate::rules::{self, builtin_rules, Rule};
use crate::{
    findings, grade_one_floor, required_level, rule_for, FloorInput, FloorOutcome, Grading,
};

/// The rule sets in force: built in, then the site's `[plugins.grading.rule_sets.<id>]`.
pub fn rule_sets(
    options: &toml::Table,
    warnings: &mut Vec<Warning>,
) -> Result<BTreeMap<String, Rule>, PluginError> {
    let mut all = builtin_rules();
    let Some(v) = options.get("rule_sets") else {
        return Ok(all);
    };
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
        let (r, notes) =
            rules::rule_from_table(&rt, false).map_err(|m| PluginError::BadOption {
                key: format!("rule_sets.{id}"),
                message: m,
            })?;
        for n in notes {
            warnings.push(Warning {
                plugin: "grading".into(),
                message: format!("site rule set `{id}`: {n}"),
            });
        }
        all.insert(id.clone(), r);
    }
    Ok(all)
}

/// The shadowing standard deviation in force: `[plugins.grading] shadowing_sigma_db`, else
/// the site's `[prediction]` value (whose range the site loader checks).
fn sigma_option(ctx: &Context<'_>) -> Result<f64, PluginError> {
    let sigma = ctx.option_f64("shadowing_sigma_db", ctx.site.prediction.shadowing_sigma_db)?;
    if !(0.0..=20.0).contains(&sigma) {
        return Err(PluginError::BadOption {
            key: "shadowing_sigma_db".into(),
            message: "must be between 0 and 20 dB (indoor shadowing is typically 3 to 10 dB, common practice)".into(),
        });
    }
    Ok(sigma)
}

/// Everything `run` would reject, found without running: the site's rule sets, each
/// service's rule set by name, σ and the location probability.
fn check_inputs(ctx: &Context<'_>) -> Vec<InputProblem> {
    let mut notes = Vec::new();
    let all = match rule_sets(ctx.options, &mut notes) {
        Ok(a) => a,
        Err(e) => return vec![e.into()],
    };
    let mut out: Vec<InputProblem> = notes
        .into_iter()
        .map(|w| InputProblem::warning(Place::Option("rule_sets".into()), w.message, None))
        .collect();
    let sigma = match sigma_option(ctx) {
        Ok(s) => s,
        Err(e) => {
            out.push(e.into());
            return out;
        }
    };
    for svc in &ctx.site.services {
        let Ok(rule) = rule_for(svc, &all) else {
            out.push(unknown_rule_set(svc, &all));
            continue;
        };
        let checked = ctx
            .option_f64("location_probability", rule.location_probability)
            .and_then(|lp| {
                required_level(svc, &rule, sigma, lp).map_err(|m| PluginError::BadOption {
                    key: "location_probability".into(),
                    message: m,
                })
            });
        if let Err(e) = checked {
            out.push(e.into());
        }
    }
    out
}

fn unknown_rule_set(svc: &Service, all: &BTreeMap<String, Rule>) -> InputProblem {
    let wanted = svc.rules.as_deref().unwrap_or("");
    InputProblem::error(
        Place::Service {
            id: svc.id.clone(),
            key: "rules".into(),
        },
        format!("rule set `{wanted}` does not exist"),
        Some(format!(
            "{}; `rfsite rules` lists them with their numbers and sources",
            rfsite_model::diag::unknown_name_hint(
                "rule set",
                wanted,
                all.keys().map(|k| k.as_str())
            )
        )),
    )
}

/// The model graded: the `model` option, else calibrated when present, else the site's.
fn graded_layers<'a>(
    ctx: &Context<'a>,
    warnings: &mut Vec<Warning>,
) -> Result<(String, Vec<&'a CoverageLayer>), PluginError> {
    let default_model = if !ctx.layers_of("calibrated").is_empty() {
        "calibrated".to_string()
    } else {
        ctx.site.prediction.model.clone()
    };
    let want = ctx.option_str("model", &default_model)?;
    let layers = ctx.layers_of(&want);
    if layers.is_empty() && !ctx.site.transmitters.is_empty() {
        warnings.push(Warning {
            plugin: "grading".into(),
            message: format!("no `{want}` layers; grading the free-space prediction instead"),
        });
        return Ok(("free-space".into(), ctx.layers_of("free-space")));
    }
    Ok((want, layers))
}

/// Rejected survey rows per floor (the floor the file's `[[surveys]]` entry names, else
/// the one all its accepted points are on), by reason.
fn rejected_by_floor(ctx: &Context<'_>) -> BTreeMap<String, BTreeMap<String, usize>> {
    let file_floor = |file: &str| -> Option<String> {
        if let Some(f) = ctx
            .site
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
    let mut out: BTreeMap<String, BTreeMap<String, usize>> = BTreeMap::new();
    for r in &ctx.surveys.rejected {
        let floor = file_floor(&r.file).unwrap_or_else(|| "(file covers several floors)".into());
        *out.entry(floor)
            .or_default()
            .entry(r.reason.clone())
            .or_default() += 1;
    }
    out
}

fn f1(x: f64) -> String {
    if x.is_finite() {
        format!("{x:.1}")
    } else {
        "n/a".into()
    }
}

fn pct(x: Option<f64>) -> String {
    x.map(|v| format!("{:.1} %", 100.0 * v))
        .unwrap_or_else(|| "n/a".into())
}

fn yes_no(x: Option<bool>) -> String {
    match x {
        Some(true) => "pass".into(),
        Some(false) => "FAIL".into(),
        None => "—".into(),
    }
}

impl Plugin for Grading {
    fn reruns_for_options(&self, _site: &Site) -> bool {
        true
    }
    fn id(&self) -> &str {
        "grading"
    }
    fn version(&self) -> &str {
        env!("CARGO_PKG_VERSION")
    }
    fn method(&self) -> Method {
        Method {
            summary: "The verdict of record. One required level per service: a measured point or cell must reach threshold + design margin, a predicted point also the shadowing margin sigma Phi^-1(p). A floor passes only when all of these hold: the rule set's grid-cell test (about N equal cells, sides within the rule's limits, each judged on the prediction or on the mean measured level in it, area-weighted by zone kind, with the tolerated failed cells and adjacency rule); the general and critical area fractions of the predicted points at the required level; each critical zone by itself (its area fraction and its own cells, the test cells clipped to it); and, in critical zones, the rule's tolerance of measured points below the required level (none for a life-safety service). Where two tests disagree the stricter holds. Figures: the test cells with each cell's mean level and mark, and the cumulative distribution of the measured levels against the threshold and the required level".into(),
            citations: vec![
                "Rule sets in plugins/data/rules/*.toml, each number with its source (model fire-code grid test and 95 %/99 % targets: consistent across secondary sources; tolerances from memory)".into(),
                "Log-normal shadowing margin: sigma Phi^-1(p) (common practice)".into(),
            ],
            validity: "the authority having jurisdiction decides the acceptance test; predicted grading is as good as the prediction and the shadowing sigma".into(),
        }
    }
    fn after(&self) -> Vec<String> {
        vec![
            "free-space".into(),
            "multi-wall".into(),
            "survey-compare".into(),
            "calibration".into(),
        ]
    }
    fn option_keys(&self) -> Option<Vec<&'static str>> {
        Some(vec![
            "rule_sets",
            "model",
            "shadowing_sigma_db",
            "location_probability",
        ])
    }
    fn check(&self, ctx: &Context<'_>) -> Vec<InputProblem> {
        check_inputs(ctx)
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        let mut out = PluginOutput::default();
        let all = rule_sets(ctx.options, &mut out.warnings)?;
        let (model, layers) = graded_layers(ctx, &mut out.warnings)?;
        let sigma = sigma_option(ctx)?;
        let rejected = rejected_by_floor(ctx);
        let mut extra_services = Vec::new();
        for svc in &ctx.site.services {
            let rule = rule_for(svc, &all).map_err(|m| PluginError::BadOption {
                key: "rules".into(),
                message: m,
            })?;
            rule_warnings(svc, &rule, &mut out.warnings);
            let lp = ctx.option_f64("location_probability", rule.location_probability)?;
            let req =
                required_level(svc, &rule, sigma, lp).map_err(|m| PluginError::BadOption {
                    key: "location_probability".into(),
                    message: m,
                })?;
            let up = crate::uplink::budget(ctx.site, svc, req.threshold_dbm);
            let g = ServiceGrading {
                ctx,
                svc,
                rule: &rule,
                req: &req,
                layers: &layers,
                uplink: &up,
            };
            let outcomes = g.floors(&mut out);
            out.tables.push(g.table(&outcomes));
            out.figures.extend(crate::cdf::figure(
                &svc.id,
                &svc.name,
                &req,
                &ctx.surveys.points,
            ));
            out.figures.extend(g.figures(&outcomes));
            extra_services.push(g.extra(&outcomes, &model, &rejected));
            out.services
                .push(g.result(outcomes.into_iter().map(|o| o.result).collect(), &model));
        }
        out.extra
            .insert("services".into(), serde_json::Value::Array(extra_services));
        out.extra.insert(
            "rejected_rows_by_floor".into(),
            serde_json::to_value(&rejected).unwrap_or_default(),
        );
        out.cautions.push(Caution {
            id: "acceptance-rules".into(),
            topic: "Acceptance rule sets".into(),
            text: "The grading follows rule sets whose numbers are the common model-code defaults or common practice, each with its source in the rule file (`rfsite rules` lists them). The authority having jurisdiction, the adopted code edition and its local amendments decide the actual acceptance test; a predicted pass is not an acceptance test result.".into(),
        });
        Ok(out)
    }
}

fn rule_warnings(svc: &Service, rule: &Rule, w: &mut Vec<Warning>) {
    if (rule.threshold_dbm - svc.threshold_dbm).abs() > 1e-9 {
        w.push(Warning {
            plugin: "grading".into(),
            message: format!("service `{}`: rule set `{}` grades at {} dBm; the service's own threshold is {} dBm", svc.id, rule.id, f1(rule.threshold_dbm), f1(svc.threshold_dbm)),
        });
    }
    if rule.metric != svc.metric {
        w.push(Warning {
            plugin: "grading".into(),
            message: format!(
                "service `{}` is `{}`, rule set `{}` grades `{}`",
                svc.id, svc.metric, rule.id, rule.metric
            ),
        });
    }
}

/// One service being graded.
struct ServiceGrading<'c, 'a> {
    ctx: &'c Context<'a>,
    svc: &'c Service,
    rule: &'c Rule,
    req: &'c RequiredLevel,
    layers: &'c [&'a CoverageLayer],
    uplink: &'c UplinkBudget,
}

impl ServiceGrading<'_, '_> {
    fn site(&self) -> &Site {
        self.ctx.site
    }

    fn floors(&self, out: &mut PluginOutput) -> Vec<FloorOutcome> {
        let site = self.site();
        let mut v = Vec::new();
        for (fi, floor) in site.floors.iter().enumerate() {
            let inp = FloorInput {
                site,
                fi,
                svc: self.svc,
                rule: self.rule,
                req: self.req,
                layer: self
                    .layers
                    .iter()
                    .copied()
                    .find(|l| l.floor == floor.id && l.service == self.svc.id),
                measured: self
                    .ctx
                    .surveys
                    .points
                    .iter()
                    .filter(|m| m.floor == floor.id && m.service == self.svc.id)
                    .collect(),
            };
            let mut o = grade_one_floor(&inp);
            out.findings.extend(findings::floor_findings(&inp, &o));
            let ul = crate::uplink::grade(&inp, self.uplink);
            out.findings
                .extend(crate::uplink::finding(&inp, self.uplink, &ul));
            crate::uplink::combine(&mut o.result, ul, self.svc, self.uplink);
            v.push(o);
        }
        v.sort_by(|a, b| a.result.id.cmp(&b.result.id));
        v
    }

    fn fname(&self, fid: &str) -> String {
        self.site()
            .floor(fid)
            .map(|s| s.name.clone())
            .unwrap_or_else(|| fid.to_string())
    }

    fn table(&self, outcomes: &[FloorOutcome]) -> Table {
        let u = self.site().units;
        Table {
            id: format!("grading-{}", self.svc.id),
            title: format!(
                "Cell grading: {} against {}; predicted points and cells at the required {}, measured cells at {}",
                self.svc.name, self.rule.name, self.req.predicted_text(), self.req.measured_text()
            ),
            columns: vec!["Floor".into(), "Cells (gen/crit)".into(), format!("Cell size {}", u.label()), "General cells pass".into(), "Critical cells pass".into(), "Failed (adjacent pairs)".into(), "On predictions".into(), "On measurements".into(), "Cell test".into(), "Verdict of record".into()],
            rows: outcomes
                .iter()
                .map(|o| {
                    let (g, v) = (&o.grade, &o.grade.verdict);
                    vec![
                        self.fname(&g.floor),
                        format!("{}/{}", v.general_cells, v.critical_cells),
                        format!("{} x {}", f1(u.from_m(g.cell_side_m[0])), f1(u.from_m(g.cell_side_m[1]))),
                        pct(v.general_fraction),
                        pct(v.critical_fraction),
                        format!("{} ({})", v.failed_cells, v.adjacent_failed_pairs),
                        yes_no(g.on_predictions.pass),
                        if g.on_measurements.pass.is_some() { format!("{} ({} cells)", yes_no(g.on_measurements.pass), g.on_measurements.general_cells + g.on_measurements.critical_cells) } else { "no survey".into() },
                        yes_no(v.pass),
                        yes_no(Some(o.result.pass)),
                    ]
                })
                .collect(),
        }
    }

    fn figures(&self, outcomes: &[FloorOutcome]) -> Vec<Figure> {
        outcomes
            .iter()
            .map(|o| Figure {
                id: rfsite_model::names::figure_stem("grading", &[&o.grade.floor, &self.svc.id]),
                title: format!("Test cells, {} on {} ({}): each cell's mean level (dBm) and verdict; a cell judged on its measurements (m) passes when their mean reaches {:.1} dBm, one judged on the prediction when {:.0} % of its points reach {:.1} dBm; failed cells hatched and marked F; a value too long for its cell is shortened or left out, as the note under the map counts", self.svc.name, self.fname(&o.grade.floor), self.rule.id, self.req.measured_dbm, 100.0 * self.rule.predicted_cell_point_fraction, self.req.predicted_dbm),
                kind: "grading-map".into(),
                x_label: String::new(),
                y_label: String::new(),
                series: vec![],
            })
            .collect()
    }

    fn extra(
        &self,
        outcomes: &[FloorOutcome],
        model: &str,
        rejected: &BTreeMap<String, BTreeMap<String, usize>>,
    ) -> serde_json::Value {
        let (svc, rule, req) = (self.svc, self.rule, self.req);
        let floors: Vec<serde_json::Value> = outcomes
            .iter()
            .map(|o| {
                let g = &o.grade;
                serde_json::json!({
                    "floor": g.floor,
                    "pass": o.result.pass,
                    "cell_test": g.verdict,
                    "on_predictions": g.on_predictions,
                    "on_measurements": g.on_measurements,
                    "nx": g.nx, "ny": g.ny, "cell_side_m": g.cell_side_m,
                    "cells": g.cells,
                    "measured_points": o.result.measured_points,
                    "measured_failures": o.failures,
                    "rejected_rows": rejected.get(&g.floor).cloned().unwrap_or_default(),
                })
            })
            .collect();
        serde_json::json!({
            "service": svc.id,
            "rule": rule.id, "rule_name": rule.name, "authority": rule.authority,
            "threshold_dbm": rule.threshold_dbm, "threshold_source": rule.source("threshold_dbm"),
            "target_general": rule.target_general, "target_critical": rule.target_critical,
            "required": req,
            "judge": rule.judge.label(), "max_failed_cells": rule.max_failed_cells, "failed_cells_may_be_adjacent": rule.failed_cells_may_be_adjacent,
            "max_measured_failures_critical": crate::tolerated_critical_failures(svc, rule),
            "model": model,
            "floors": floors,
        })
    }

    fn result(&self, floors: Vec<FloorResult>, model: &str) -> ServiceResult {
        let (svc, rule) = (self.svc, self.rule);
        ServiceResult {
            id: svc.id.clone(),
            name: svc.name.clone(),
            freq_mhz: svc.freq_mhz,
            threshold_dbm: rule.threshold_dbm,
            design_margin_db: svc.design_margin_db,
            required: self.req.clone(),
            receiver_floor_dbm: Some(svc.receiver_floor_dbm),
            life_safety: svc.life_safety,
            rule: rule.id.clone(),
            target_general: rule.target_general,
            target_critical: rule.target_critical,
            model: model.to_string(),
            uplink: Some(self.uplink.clone()),
            pass: floors.iter().all(|f| f.pass),
            floors,
        }
    }
}
