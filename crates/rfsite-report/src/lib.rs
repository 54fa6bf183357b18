//! # rfsite-report
//!
//! Assessment -> charts (plotters SVG) -> narrative snippets (handlebars) -> Typst -> PDF.
//!
//! What it never does: compute physics (every number comes from the [`Assessment`]), read
//! files (the caller hands it a [`Template`] and the assessment), or splice user text into
//! Typst markup. All data reaches Typst as one JSON document and SVG bytes in
//! `sys.inputs`; Typst prints JSON strings literally, so names full of `#`, `$`, `*` or `_`
//! stay text. Handlebars renders snippets with escaping off for the same reason: its output
//! is a JSON string, never markup.
#![deny(missing_docs)]

use std::collections::BTreeMap;

use rfsite_model::names::{figure_file, figure_stem};
use rfsite_model::Site;
use rfsite_plugin::{Assessment, Measurement, Severity};
use serde::{Deserialize, Serialize};
use serde_json::{json, Value};
use typst::foundations::{Bytes, Dict, IntoValue};
use typst_as_lib::TypstEngine;

pub mod booster;
pub mod charts;
pub mod envelope_map;
pub mod exports;
pub mod grading_map;
pub mod installer;
pub mod labels;
pub mod line_figure;
pub mod options;
pub mod portfolio;
pub mod uplink;
pub mod verdicts;

/// Fonts shipped with the templates (Lato, SIL OFL 1.1; licence beside the files).
pub const FONTS: &[&[u8]] = &[
    include_bytes!("../../../templates/fonts/Lato-Regular.ttf"),
    include_bytes!("../../../templates/fonts/Lato-Bold.ttf"),
    include_bytes!("../../../templates/fonts/Lato-Italic.ttf"),
    include_bytes!("../../../templates/fonts/Lato-BoldItalic.ttf"),
];

/// Branding and wording settings of a template (`template.toml`).
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TemplateConfig {
    /// Template name.
    pub name: String,
    /// Firm name on the cover and in footers.
    pub firm: String,
    /// A line under the firm name.
    #[serde(default)]
    pub tagline: String,
    /// Report title.
    pub title: String,
    /// Main colour, `#rrggbb`.
    pub primary: String,
    /// Accent colour, `#rrggbb`.
    pub accent: String,
    /// Body font family.
    pub font: String,
    /// Disclaimer on the cover page's foot and in the cautions.
    pub disclaimer: String,
    /// Logo file in the template folder (PNG, JPEG or SVG), if any.
    #[serde(default)]
    pub logo: Option<String>,
    /// Show the reviewer sign-off block.
    #[serde(default = "yes")]
    pub signoff: bool,
}

fn yes() -> bool {
    true
}

/// A report template: Typst source, snippets and assets, held in memory.
#[derive(Debug, Clone)]
pub struct Template {
    /// Branding.
    pub config: TemplateConfig,
    /// `report.typ`.
    pub typst_main: String,
    /// Handlebars snippets by name (file stem).
    pub snippets: BTreeMap<String, String>,
    /// Other files (logo) by name.
    pub assets: BTreeMap<String, Vec<u8>>,
}

/// Errors of the report step.
#[derive(Debug, Clone)]
pub struct ReportError(pub String);

impl std::fmt::Display for ReportError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}
impl std::error::Error for ReportError {}

macro_rules! builtin_file {
    ($dir:literal, $name:literal) => {
        include_str!(concat!("../../../templates/", $dir, "/", $name))
    };
}

impl Template {
    /// The built-in default template.
    pub fn builtin() -> Template {
        let mut snippets = BTreeMap::new();
        for (k, v) in [
            (
                "executive_summary",
                builtin_file!("default", "snippets/executive_summary.hbs"),
            ),
            (
                "service_verdict",
                builtin_file!("default", "snippets/service_verdict.hbs"),
            ),
            (
                "floor_summary",
                builtin_file!("default", "snippets/floor_summary.hbs"),
            ),
            ("method", builtin_file!("default", "snippets/method.hbs")),
            (
                "recommendation",
                builtin_file!("default", "snippets/recommendation.hbs"),
            ),
        ] {
            snippets.insert(k.to_string(), v.to_string());
        }
        Template::from_parts(
            builtin_file!("default", "template.toml"),
            builtin_file!("default", "report.typ"),
            snippets,
            BTreeMap::new(),
        )
        .expect("the built-in template is valid (tested)")
    }

    /// A template from its files' contents.
    pub fn from_parts(
        config_toml: &str,
        typst_main: &str,
        snippets: BTreeMap<String, String>,
        assets: BTreeMap<String, Vec<u8>>,
    ) -> Result<Template, ReportError> {
        let config: TemplateConfig = toml::from_str(config_toml)
            .map_err(|e| ReportError(format!("template.toml: {}", e.message())))?;
        Ok(Template {
            config,
            typst_main: typst_main.to_string(),
            snippets,
            assets,
        })
    }

    /// Fills missing snippets from the built-in template, so a custom template may override
    /// only the wording it cares about.
    pub fn with_default_snippets(mut self) -> Template {
        let b = Template::builtin();
        for (k, v) in b.snippets {
            self.snippets.entry(k).or_insert(v);
        }
        self
    }
}

/// What a floor's maps draw under the coverage: the plan image and the drawing's linework.
#[derive(Debug, Clone, Copy, Default)]
pub struct Backdrop<'a> {
    /// The plan image (PNG or JPEG bytes), if the floor names one.
    pub image: Option<&'a [u8]>,
    /// Every line of the floor's DXF drawing, site metres (empty without one).
    pub linework: &'a [rfsite_geometry::Segment],
}

/// Every floor's backdrop, by floor id.
#[derive(Debug, Clone, Default)]
pub struct Backdrops<'a> {
    images: BTreeMap<&'a str, &'a [u8]>,
    linework: BTreeMap<&'a str, &'a [rfsite_geometry::Segment]>,
}

impl<'a> Backdrops<'a> {
    /// Adds a floor's plan image.
    pub fn image(mut self, floor: &'a str, bytes: &'a [u8]) -> Self {
        self.images.insert(floor, bytes);
        self
    }

    /// Adds a floor's drawing linework.
    pub fn linework(mut self, floor: &'a str, lines: &'a [rfsite_geometry::Segment]) -> Self {
        self.linework.insert(floor, lines);
        self
    }

    /// The backdrop of `floor` (empty when it has none).
    pub fn floor(&self, floor: &str) -> Backdrop<'a> {
        Backdrop {
            image: self.images.get(floor).copied(),
            linework: self.linework.get(floor).copied().unwrap_or(&[]),
        }
    }
}

/// The rendered outputs.
pub struct Rendered {
    /// The PDF.
    pub pdf: Vec<u8>,
    /// Figures: file name -> SVG text.
    pub figures: BTreeMap<String, String>,
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

/// The model a layer comes from, for captions.
fn model_name(model: &str) -> String {
    match model {
        "multi-wall" => "COST 231 multi-wall".into(),
        "free-space" => "Free-space (ITU-R P.525)".into(),
        "calibrated" => "Calibrated multi-wall (fitted to the survey)".into(),
        other => format!("External plugin `{other}`"),
    }
}

/// The coverage map of a floor and service: `map-<floor>.<service>.svg`, one file per
/// pair (`rfsite_model::names`).
fn figure_name(floor: &str, service: &str) -> String {
    figure_file(&figure_stem("map", &[floor, service]))
}

/// Adds a figure, refusing a second one of the same name (it would overwrite the first).
fn add_figure(
    out: &mut BTreeMap<String, String>,
    name: String,
    svg: String,
) -> Result<(), ReportError> {
    if out.contains_key(&name) {
        return Err(ReportError(format!(
            "two figures are named `{name}`: a plugin's figure id repeats another figure's"
        )));
    }
    out.insert(name, svg);
    Ok(())
}

/// Builds the figures: one coverage map per graded layer, plus the plugins' figures.
pub fn figures(
    site: &Site,
    a: &Assessment,
    measured: &[Measurement],
    backdrops: &Backdrops<'_>,
) -> Result<BTreeMap<String, String>, ReportError> {
    use rayon::prelude::*;
    // Each chart is independent: draw them in parallel, collect into a sorted map.
    // Maps split pass/fail at the level the verdict uses.
    let mut jobs: Vec<(&rfsite_plugin::CoverageLayer, f64, f64)> = Vec::new();
    for s in &a.services {
        for l in a
            .layers
            .iter()
            .filter(|l| l.service == s.id && l.model == s.model)
        {
            jobs.push((l, s.required.predicted_dbm, s.required.measured_dbm));
        }
    }
    let maps: Vec<Result<(String, String), ReportError>> = jobs
        .par_iter()
        .map(|(l, required, measured_required)| {
            let pts: Vec<&Measurement> = measured
                .iter()
                .filter(|m| m.floor == l.floor && m.service == l.service)
                .collect();
            let svg = charts::coverage_map(
                site,
                l,
                *required,
                *measured_required,
                &pts,
                backdrops.floor(&l.floor),
                &[],
            )
            .map_err(ReportError)?;
            Ok((figure_name(&l.floor, &l.service), svg))
        })
        .collect();
    let others: Vec<Result<(String, String), ReportError>> = a
        .figures
        .par_iter()
        .filter(|f| f.kind != "grading-map" && f.kind != "envelope-map")
        .map(|f| Ok((figure_file(&f.id), charts::figure(f).map_err(ReportError)?)))
        .collect();
    let mut out = BTreeMap::new();
    for r in maps.into_iter().chain(others) {
        let (k, v) = r?;
        add_figure(&mut out, k, v)?;
    }
    for (k, v) in grading_map::grading_maps(site, a).map_err(ReportError)? {
        add_figure(&mut out, k, v)?;
    }
    for (k, v) in envelope_map::envelope_maps(site, a).map_err(ReportError)? {
        add_figure(&mut out, k, v)?;
    }
    for (k, v) in installer::after_maps(site, a, backdrops).map_err(ReportError)? {
        add_figure(&mut out, k, v)?;
    }
    Ok(out)
}

fn snippet(
    hb: &handlebars::Handlebars<'_>,
    name: &str,
    data: &Value,
) -> Result<String, ReportError> {
    hb.render(name, data)
        .map(|s| s.trim().to_string())
        .map_err(|e| ReportError(format!("snippet `{name}`: {e}")))
}

/// The view model handed to Typst: every number already formatted.
pub fn view_model(
    site: &Site,
    a: &Assessment,
    template: &Template,
    figure_names: &BTreeMap<String, String>,
) -> Result<Value, ReportError> {
    let mut hb = handlebars::Handlebars::new();
    hb.register_escape_fn(handlebars::no_escape);
    hb.set_strict_mode(false);
    for (k, v) in &template.snippets {
        hb.register_template_string(k, v)
            .map_err(|e| ReportError(format!("snippet `{k}`: {e}")))?;
    }
    let u = site.units;
    let ul = u.label();
    let overall_pass = verdicts::overall_pass(site, a);
    let mut verdict_lines = verdicts::service_lines(site, a);
    for (v, s) in verdict_lines.iter_mut().zip(&a.services) {
        v["text"] = snippet(&hb, "service_verdict", &verdicts::service_context(site, s))?.into();
        v["model"] = s.model.clone().into();
    }
    let key: Vec<&rfsite_plugin::Finding> = a
        .findings
        .iter()
        .filter(|f| f.severity <= Severity::Major)
        .take(6)
        .collect();
    let rec = options::summary_recommendation(site, a, &hb)?;
    let summary_ctx = json!({
        "site": site.meta.name, "client": site.meta.client, "overall_pass": overall_pass,
        "service_count": site.services.len(), "failing_services": verdict_lines.iter().filter(|v| v["pass"] != true).filter_map(|v| v["service"].as_str().map(str::to_string)).collect::<Vec<_>>().join(", "),
        "critical_count": a.findings.iter().filter(|f| f.severity == Severity::Critical).count(),
        "major_count": a.findings.iter().filter(|f| f.severity == Severity::Major).count(),
        "floor_count": site.floors.len(),
        "has_recommendation": !rec.sentences.is_empty(),
        "recommendation": rec.sentences.join(" "),
    });
    let finding_view = |f: &rfsite_plugin::Finding| {
        json!({
            "id": f.id, "severity": f.severity.label(), "title": f.title, "detail": f.detail,
            "floor": f.floor.as_ref().and_then(|x| site.floor(x)).map(|x| x.name.clone()).unwrap_or_default(),
            "service": f.service.as_ref().and_then(|x| site.service(x)).map(|x| x.name.clone()).unwrap_or_default(),
            "causes": f.causes,
            "remedies": f.remedies.iter().map(|id| {
                let option = a.remediation.iter().find(|r| &r.id == id);
                json!({"label": format!("option-{id}"), "title": option.map(|r| r.title.clone()).unwrap_or_else(|| id.clone()), "known": option.is_some()})
            }).collect::<Vec<_>>(),
            "shortfall": f.shortfall_db.map(f1).unwrap_or_default(),
            "location": f.location_m.map(|p| format!("({}, {}) {ul}", f1(u.from_m(p[0])), f1(u.from_m(p[1])))).unwrap_or_default(),
        })
    };
    // Floor pages.
    let mut pages = Vec::new();
    for s in &a.services {
        for fr in &s.floors {
            let Some(floor) = site.floor(&fr.id) else {
                continue;
            };
            let fig = figure_name(&fr.id, &s.id);
            let ctx = verdicts::floor_context(site, s, fr);
            pages.push(json!({
                "floor": floor.name, "floor_id": floor.id, "service": s.name, "service_id": s.id,
                "figure": if figure_names.contains_key(&fig) { fig } else { String::new() },
                "caption": format!("{} prediction, {} on {}: colours relative to the required {} dBm on prediction (black contour); markers judged against {} dBm", model_name(&s.model), s.name, floor.name, f1(s.required.predicted_dbm), f1(s.required.measured_dbm)),
                "pass": fr.pass, "verdict": if fr.pass { "PASS" } else { "FAIL" },
                "text": snippet(&hb, "floor_summary", &ctx)?,
                "reasons": fr.reasons.iter().map(|r| r.text.clone()).collect::<Vec<_>>(),
                "rows": verdicts::floor_rows(s, fr),
                "findings": a.findings.iter().filter(|f| f.floor.as_deref() == Some(&fr.id) && f.service.as_deref() == Some(&s.id) && f.severity != Severity::Info).map(finding_view).collect::<Vec<_>>(),
            }));
        }
    }
    let svc_ids: Vec<String> = site
        .services
        .iter()
        .map(|s| format!("{} ({} MHz)", s.name, f1(s.freq_mhz)))
        .collect();
    let mat_rows: Vec<Vec<String>> = a
        .materials
        .iter()
        .map(|m| {
            let mut r = vec![
                m.name.clone(),
                m.class.clone(),
                format!("{}; {}", m.model, m.thickness_rule),
            ];
            r.extend(m.losses.iter().map(material_cell));
            r.push(m.confidence.clone());
            r
        })
        .collect();
    let mut mat_cols = vec![
        "Material".to_string(),
        "Class".into(),
        "Model and thickness".into(),
    ];
    mat_cols.extend(svc_ids.iter().map(|s| format!("{s} dB")));
    mat_cols.push("Confidence".into());
    let floors: Vec<Vec<String>> = site
        .floors
        .iter()
        .map(|f| {
            vec![
                f.id.clone(),
                f.name.clone(),
                format!("{} {ul}", f1(u.from_m(f.elevation_m))),
                format!("{} {ul}", f1(u.from_m(f.height_m))),
                format!("{:.0} {ul}²", u.from_m(u.from_m(f.area_m2()))),
                f.parts.len().to_string(),
                f.zones
                    .iter()
                    .filter(|z| z.kind == rfsite_model::ZoneKind::Critical)
                    .count()
                    .to_string(),
            ]
        })
        .collect();
    let txs: Vec<Vec<String>> = a
        .link_budgets
        .iter()
        .map(|l| {
            let t = site.transmitters.iter().find(|t| t.id == l.transmitter);
            vec![
                l.transmitter.clone(),
                options::service_name(site, &l.service),
                site.floor(&l.floor)
                    .map(|s| s.name.clone())
                    .unwrap_or_default(),
                t.map(|t| {
                    format!(
                        "({}, {}) {ul}",
                        f1(u.from_m(t.position.x)),
                        f1(u.from_m(t.position.y))
                    )
                })
                .unwrap_or_default(),
                f1(l.power_dbm),
                f1(l.cable_loss_db + l.connector_loss_db),
                f1(l.antenna_gain_dbi),
                f1(l.eirp_dbm),
            ]
        })
        .collect();
    // For the appendix: an owner reads nothing from a range beyond the building.
    let tx_ranges: Vec<Vec<String>> = a
        .link_budgets
        .iter()
        .map(|l| {
            vec![
                l.transmitter.clone(),
                options::service_name(site, &l.service),
                f1(l.fspl_10m_db),
                if l.free_space_range_m > 1000.0 {
                    "> 1 km".to_string()
                } else {
                    format!("{} {ul}", f1(u.from_m(l.free_space_range_m)))
                },
            ]
        })
        .collect();
    let donors: Vec<Vec<String>> = site
        .donors
        .iter()
        .map(|d| {
            vec![
                d.id.clone(),
                options::service_name(site, &d.service),
                f1(d.level_dbm),
                d.floors.join(", "),
                f1(d.elevation_deg),
            ]
        })
        .collect();
    let method_text = snippet(
        &hb,
        "method",
        &json!({"model": site.prediction.model, "step": f1(u.from_m(site.prediction.grid_step_m)), "units": ul,
        "rx_height": f1(u.from_m(site.prediction.receiver_height_m)), "sigma": f1(a.services.first().map(|s| s.required.shadowing_sigma_db).unwrap_or(site.prediction.shadowing_sigma_db)), "sigma_source": site.shadowing_sigma().1.words(), "combine": match site.prediction.combine { rfsite_model::Combine::Strongest => "the strongest server", rfsite_model::Combine::PowerSum => "the power sum" }}),
    )?;
    let tables: Vec<Value> = a
        .tables
        .iter()
        .map(|t| json!({"title": t.title, "columns": t.columns, "rows": t.rows}))
        .collect();
    let figs: Vec<Value> = a
        .figures
        .iter()
        .map(|f| json!({"title": f.title, "file": figure_file(&f.id)}))
        .collect();
    Ok(json!({
        "meta": {
            "title": template.config.title, "site_name": site.meta.name, "site_id": site.meta.id, "client": site.meta.client,
            "address": site.meta.address, "author": site.meta.author, "reviewer": site.meta.reviewer,
            "date": site.meta.report_date, "revision": site.meta.revision, "units": ul,
        },
        "brand": {
            "firm": template.config.firm, "tagline": template.config.tagline, "primary": template.config.primary,
            "accent": template.config.accent, "font": template.config.font, "disclaimer": template.config.disclaimer,
            "has_logo": template.config.logo.is_some(), "signoff": template.config.signoff,
            "logo_format": template.config.logo.as_deref().and_then(|l| l.rsplit('.').next()).unwrap_or("png").to_lowercase(),
        },
        "summary": {
            "pass": overall_pass,
            "verdict": if overall_pass { "MEETS ALL CRITERIA" } else { "DOES NOT MEET ALL CRITERIA" },
            "lines": verdict_lines.iter().map(|v| json!({"text": v["line"], "pass": v["pass"], "life_safety": v["life_safety"]})).collect::<Vec<_>>(),
            "text": snippet(&hb, "executive_summary", &summary_ctx)?,
            "services": verdict_lines,
            "key_findings": key.iter().map(|f| finding_view(f)).collect::<Vec<_>>(),
            "recommendation": rec.sentences.join(" "),
            "recommendations": rec.rows,
        },
        "method": {
            "text": method_text,
            "plugins": a.plugins.iter().map(|p| json!({"id": p.id, "version": p.version, "kind": p.kind, "summary": p.method.summary, "citations": p.method.citations, "validity": p.method.validity})).collect::<Vec<_>>(),
        },
        "site": {
            "floors": floors, "materials": {"columns": mat_cols, "rows": mat_rows}, "transmitters": txs, "donors": donors,
        },
        "pages": pages,
        "findings": a.findings.iter().filter(|f| !(f.severity == Severity::Info && f.id.starts_with("coverage-"))).map(finding_view).collect::<Vec<_>>(),
        "passing": a.findings.iter().filter(|f| f.severity == Severity::Info && f.id.starts_with("coverage-")).map(finding_view).collect::<Vec<_>>(),
        "remediation": a.remediation.iter().map(|r| json!({"title": r.title, "detail": r.detail, "expected": r.expected, "caveats": r.caveats,
            "margin": f1(r.margin_needed_db), "floors": r.floors.iter().map(|f| site.floor(f).map(|x| x.name.clone()).unwrap_or(f.clone())).collect::<Vec<_>>().join(", "),
            "service": r.service.as_ref().and_then(|s| site.service(s)).map(|s| s.name.clone()).unwrap_or_default()})).collect::<Vec<_>>(),
        "options": options::options_view(site, a, figure_names),
        "uplink": uplink::uplink_view(site, a),
        "cautions": a.cautions.iter().map(|c| json!({"topic": c.topic, "text": c.text})).collect::<Vec<_>>(),
        "tables": tables,
        "figures": figs,
        "appendix": {
            "warnings": a.warnings.iter().map(|w| json!({"plugin": w.plugin, "message": w.message})).collect::<Vec<_>>(),
            "survey": {
                "accepted": a.surveys.accepted, "rejected": a.surveys.rejected,
                "by_reason": a.surveys.rejected_by_reason.iter().map(|(r, n)| vec![r.clone(), n.to_string()]).collect::<Vec<_>>(),
                "files": a.surveys.rows_per_file.iter().map(|(r, n)| vec![r.clone(), n.to_string()]).collect::<Vec<_>>(),
                "rows": a.surveys.rejected_rows.iter().take(20).map(|r| vec![r.file.clone(), r.line.to_string(), r.reason.clone(), r.detail.clone()]).collect::<Vec<_>>(),
            },
            "tx_ranges": tx_ranges,
            "revisions": site.revisions.iter().map(|r| vec![r.revision.clone(), r.date.clone(), r.note.clone()]).collect::<Vec<_>>(),
            "version": a.tool.version,
            "inputs": a.inputs.iter().map(|i| vec![i.path.clone(), i.sha256.clone()]).collect::<Vec<_>>(),
            "plugins": a.plugins.iter().map(|p| vec![p.id.clone(), p.version.clone(), p.kind.clone()]).collect::<Vec<_>>(),
        },
    }))
}

/// Renders the PDF and figures.
pub fn render(
    site: &Site,
    a: &Assessment,
    template: &Template,
    measured: &[Measurement],
    backdrops: &Backdrops<'_>,
) -> Result<Rendered, ReportError> {
    let timing = std::env::var_os("RFSITE_TIMING").is_some();
    let t0 = std::time::Instant::now();
    let figs = figures(site, a, measured, backdrops)?;
    if timing {
        eprintln!("timing: charts {:.3} s", t0.elapsed().as_secs_f64());
    }
    let vm = view_model(site, a, template, &figs)?;
    let data = serde_json::to_vec(&vm).map_err(|e| ReportError(e.to_string()))?;
    let mut fig_dict = Dict::new();
    for (k, v) in &figs {
        fig_dict.insert(
            k.as_str().into(),
            Bytes::new(v.clone().into_bytes()).into_value(),
        );
    }
    let mut inputs = Dict::new();
    inputs.insert("data".into(), Bytes::new(data).into_value());
    inputs.insert("figures".into(), fig_dict.into_value());
    if let Some(logo) = template
        .config
        .logo
        .as_ref()
        .and_then(|l| template.assets.get(l))
    {
        inputs.insert("logo".into(), Bytes::new(logo.clone()).into_value());
    }
    let engine = TypstEngine::builder()
        .main_file(template.typst_main.as_str())
        .fonts(FONTS.iter().copied())
        .search_fonts_with(
            typst_as_lib::typst_kit_options::TypstKitFontOptions::default()
                .include_system_fonts(false)
                .include_embedded_fonts(true),
        )
        .build();
    let t1 = std::time::Instant::now();
    let compiled = engine.compile_with_input::<_, typst_layout::PagedDocument>(inputs);
    if timing {
        eprintln!("timing: typst layout {:.3} s", t1.elapsed().as_secs_f64());
    }
    let doc = compiled
        .output
        .map_err(|e| ReportError(format!("typesetting failed: {e:?}")))?;
    let (y, m, d) = parse_date(&site.meta.report_date);
    let opts = typst_pdf::PdfOptions {
        ident: typst::foundations::Smart::Custom(format!(
            "rfsite/{}/{}",
            site.meta.id, site.meta.revision
        )),
        timestamp: typst::foundations::Datetime::from_ymd(y, m, d)
            .map(typst_pdf::Timestamp::new_utc),
        ..Default::default()
    };
    let t2 = std::time::Instant::now();
    let pdf = typst_pdf::pdf(&doc, &opts)
        .map(without_default_suspects)
        .map_err(|e| ReportError(format!("PDF export failed: {e:?}")))?;
    if timing {
        eprintln!("timing: pdf export {:.3} s", t2.elapsed().as_secs_f64());
    }
    Ok(Rendered { pdf, figures: figs })
}

/// The catalog's `/MarkInfo <</Marked true /Suspects false>>`, as Typst writes it, is valid
/// (ISO 32000-1 section 14.7.1, Table 321: `Suspects` is a boolean, default false), but
/// poppler (pdftotext, pdfinfo, the viewers built on it) prints "Syntax Error: Suspects
/// object is wrong type (boolean)" for it: its catalog reader accepts only `true`. The entry
/// says nothing the default does not, so it is blanked with spaces of the same length,
/// which leaves every byte offset (the cross-reference table) as it was.
pub fn without_default_suspects(mut pdf: Vec<u8>) -> Vec<u8> {
    const ENTRY: &[u8] = b"/MarkInfo<</Marked true/Suspects false>>";
    if let Some(at) = pdf.windows(ENTRY.len()).position(|w| w == ENTRY) {
        let suspects = at + b"/MarkInfo<</Marked true".len();
        pdf[suspects..suspects + b"/Suspects false".len()].fill(b' ');
    }
    pdf
}

fn parse_date(s: &str) -> (i32, u8, u8) {
    let y = s.get(0..4).and_then(|x| x.parse().ok()).unwrap_or(2000);
    let m = s.get(5..7).and_then(|x| x.parse().ok()).unwrap_or(1);
    let d = s.get(8..10).and_then(|x| x.parse().ok()).unwrap_or(1);
    (y, m, d)
}

/// One material loss as the table prints it: the value charged, "> cap" for a material
/// beyond the crossing cap, "(probe)" where a site probe sets it, "*" where extrapolated.
fn material_cell(l: &rfsite_plugin::MaterialLoss) -> String {
    if l.beyond_cap {
        return format!("> {:.0} (cap)", l.loss_db);
    }
    let mark = if l.probed {
        " (probe)"
    } else if l.extrapolated {
        " *"
    } else {
        ""
    };
    format!("{}{mark}", f1(l.loss_db))
}
