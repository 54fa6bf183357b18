//! # rfsite-engine
//!
//! The pipeline. The [`world::World`] is the only place that reads input files (and it
//! hashes each one); [`load`] turns a site folder into a validated site; [`Registry`]
//! holds the plugins and orders them by their `after` lists; [`run`] runs them and
//! collects an [`Assessment`], which [`findings_json`] serialises. [`external`] is the
//! adapter that runs an external program as a plugin.
#![deny(missing_docs)]

use std::collections::{BTreeMap, BTreeSet};
use std::fmt;

use rfsite_model::locate::{locate, Seg};
use rfsite_model::{Diagnostics, MaterialLibrary, Site, SourceFile};
use rfsite_physics::p2040::Polarization;
use rfsite_plugin::*;

pub mod external;
pub mod options;
pub mod outputs;
pub mod plans;
mod precheck;
pub use precheck::check_plugins;
pub mod survey;
pub mod world;

pub use world::World;

/// rfsite's version, written into every output.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");

/// findings.json schema id.
pub const FINDINGS_SCHEMA: &str = "rfsite-findings/1";

/// An engine failure.
#[derive(Debug)]
pub enum EngineError {
    /// The input has problems (every one listed).
    BadInput(Diagnostics),
    /// A file could not be read.
    Io(String),
    /// The plugins' `after` lists form a cycle.
    Cycle(Vec<String>),
    /// A plugin failed.
    Plugin {
        /// Plugin id.
        id: String,
        /// Error.
        error: PluginError,
    },
}

impl fmt::Display for EngineError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            EngineError::BadInput(d) => {
                for x in &d.items {
                    write!(f, "{x}")?;
                }
                Ok(())
            }
            EngineError::Io(s) => write!(f, "{s}"),
            EngineError::Cycle(ids) => write!(
                f,
                "plugins order themselves in a cycle: {}",
                ids.join(" -> ")
            ),
            EngineError::Plugin { id, error } => write!(f, "plugin `{id}` failed: {error}"),
        }
    }
}

impl std::error::Error for EngineError {}

/// A loaded site with its world and the non-fatal diagnostics.
pub struct LoadedSite {
    /// The site.
    pub site: Site,
    /// Warnings found while loading.
    pub warnings: Diagnostics,
    /// Survey data read.
    pub surveys: SurveyData,
    /// Background plan images by floor id (PNG or JPEG bytes).
    pub plan_images: BTreeMap<String, Vec<u8>>,
    /// site.toml as read, for locating problems found after loading.
    pub source: SourceFile,
    /// Floors whose walls came from a DXF drawing, by floor id.
    pub plans: BTreeMap<String, plans::FloorPlan>,
}

/// Reads and validates the site in `world`. Errors come back all at once. Every file the
/// site names is read through the world (inside the site folder, a regular file, within its
/// size limit); a problem with one is located at the key that names it.
pub fn load(world: &mut World, library: &MaterialLibrary) -> Result<LoadedSite, EngineError> {
    let text = world.read_site_text()?;
    let file = SourceFile::new(world.display_site_path(), text);
    let loaded = rfsite_model::load(&file, library);
    let Some(mut site) = loaded.site else {
        return Err(EngineError::BadInput(loaded.diagnostics));
    };
    let mut all = loaded.diagnostics;
    let plans = plans::import_plans(world, &mut site, &file, &mut all);
    let (surveys, mut survey_diags) = survey::read_all(world, &site, &file);
    all.items.append(&mut survey_diags.items);
    let plan_images = read_plan_images(world, &site, &file, &mut all);
    if all.has_errors() {
        return Err(EngineError::BadInput(all));
    }
    Ok(LoadedSite {
        site,
        warnings: all,
        surveys,
        plan_images,
        source: file,
        plans,
    })
}

/// Each floor's `plan_image`, by floor id; problems go to `diags`, located at the key.
fn read_plan_images(
    world: &mut World,
    site: &Site,
    file: &SourceFile,
    diags: &mut Diagnostics,
) -> BTreeMap<String, Vec<u8>> {
    let mut out = BTreeMap::new();
    for f in &site.floors {
        let Some(img) = &f.plan_image else { continue };
        match world.read_named(img, world::PLAN_IMAGE) {
            Ok(b) => {
                out.insert(f.id.clone(), b);
            }
            Err(p) => diags.push(at_key(
                file,
                &[Seg::Key("floors"), Seg::Id(&f.id), Seg::Key("plan_image")],
                format!("floor `{}`: {}", f.id, p.message),
                p.hint.or(Some(
                    "`plan_image` is a PNG or JPEG path relative to the site folder".into(),
                )),
            )),
        }
    }
    out
}

/// An error at a key path of the site file (the deepest step found), or at its start when
/// the path cannot be found.
pub(crate) fn at_key(
    file: &SourceFile,
    path: &[Seg<'_>],
    message: String,
    hint: Option<String>,
) -> rfsite_model::Diagnostic {
    let span = locate(&file.text, path).map(|f| f.span).unwrap_or(0..1);
    rfsite_model::Diagnostic::at(rfsite_model::Severity::Error, file, span, message, hint)
}

/// The plugins known to a run.
pub struct Registry {
    plugins: Vec<(Box<dyn Plugin>, String)>,
}

impl Registry {
    /// The built-in plugins.
    pub fn builtin() -> Self {
        Registry {
            plugins: vec![
                (
                    Box::new(rfsite_plugin_free_space::FreeSpace),
                    "built-in".into(),
                ),
                (
                    Box::new(rfsite_plugin_multi_wall::MultiWall),
                    "built-in".into(),
                ),
                (
                    Box::new(rfsite_plugin_link_budget::LinkBudgetPlugin),
                    "built-in".into(),
                ),
                (
                    Box::new(rfsite_plugin_reflection_nulls::ReflectionNulls),
                    "built-in".into(),
                ),
                (
                    Box::new(rfsite_plugin_building_entry::BuildingEntry),
                    "built-in".into(),
                ),
                (
                    Box::new(rfsite_plugin_survey_compare::SurveyCompare),
                    "built-in".into(),
                ),
                (
                    Box::new(rfsite_plugin_calibration::Calibration),
                    "built-in".into(),
                ),
                (Box::new(rfsite_plugin_grading::Grading), "built-in".into()),
                (
                    Box::new(rfsite_plugin_antenna_design::AntennaDesign),
                    "built-in".into(),
                ),
            ],
        }
    }

    /// The built-in plugins plus external ones. An external plugin may not take the id of
    /// a built-in one.
    pub fn with_external(specs: Vec<external::ExternalSpec>) -> Result<Self, String> {
        let mut r = Registry::builtin();
        for s in specs {
            if r.plugins.iter().any(|(p, _)| p.id() == s.id) {
                return Err(format!(
                    "{}: [plugins.{}] declares a `command`, but `{}` is a built-in plugin\n  = hint: give the external plugin another id",
                    s.declared_in, s.id, s.id
                ));
            }
            r.add(Box::new(external::ExternalPlugin::new(s)), "external");
        }
        Ok(r)
    }

    /// Adds a plugin (e.g. an external one).
    pub fn add(&mut self, p: Box<dyn Plugin>, kind: &str) {
        self.plugins.push((p, kind.into()));
    }

    /// Plugins in run order: a topological sort of the `after` lists, ties by id.
    /// An `after` naming a plugin that is not registered is ignored.
    pub fn ordered(&self) -> Result<Vec<&dyn Plugin>, EngineError> {
        let ids: BTreeSet<&str> = self.plugins.iter().map(|(p, _)| p.id()).collect();
        let by_id: BTreeMap<&str, &dyn Plugin> = self
            .plugins
            .iter()
            .map(|(p, _)| (p.id(), p.as_ref()))
            .collect();
        let mut deps: BTreeMap<&str, BTreeSet<String>> = BTreeMap::new();
        for (p, _) in &self.plugins {
            deps.insert(
                p.id(),
                p.after()
                    .into_iter()
                    .filter(|a| ids.contains(a.as_str()))
                    .collect(),
            );
        }
        let mut done: Vec<&str> = Vec::new();
        let mut left: BTreeSet<&str> = ids.clone();
        while !left.is_empty() {
            let ready = left
                .iter()
                .copied()
                .find(|id| deps[id].iter().all(|d| done.contains(&d.as_str())));
            match ready {
                Some(id) => {
                    done.push(id);
                    left.remove(id);
                }
                None => {
                    return Err(EngineError::Cycle(
                        left.iter().map(|s| s.to_string()).collect(),
                    ))
                }
            }
        }
        Ok(done.into_iter().map(|id| by_id[id]).collect())
    }

    /// The ids of every registered plugin, in registration order.
    pub fn ids(&self) -> Vec<&str> {
        self.plugins.iter().map(|(p, _)| p.id()).collect()
    }

    /// Every registered plugin, in registration order.
    pub fn all(&self) -> impl Iterator<Item = &dyn Plugin> {
        self.plugins.iter().map(|(p, _)| p.as_ref())
    }

    /// "built-in" or "external" for a plugin id.
    pub fn kind_of(&self, id: &str) -> &str {
        self.plugins
            .iter()
            .find(|(p, _)| p.id() == id)
            .map(|(_, k)| k.as_str())
            .unwrap_or("built-in")
    }
}

pub(crate) fn enabled(site: &Site, id: &str) -> bool {
    site.plugin_options
        .get(id)
        .and_then(|t| t.get("enabled"))
        .and_then(|v| v.as_bool())
        .unwrap_or(true)
}

/// Runs the plugins on a loaded site and collects the assessment.
pub fn run(
    loaded: &LoadedSite,
    registry: &Registry,
    inputs: Vec<InputFile>,
) -> Result<Assessment, EngineError> {
    let site = &loaded.site;
    let empty = toml::Table::new();
    let mut outputs: Vec<(String, PluginOutput)> = Vec::new();
    let mut runs = Vec::new();
    for p in registry.ordered()? {
        if !enabled(site, p.id()) || !p.applies(site) {
            continue;
        }
        let ctx = Context {
            site,
            options: site.plugin_options.get(p.id()).unwrap_or(&empty),
            earlier: &outputs,
            surveys: &loaded.surveys,
            base: None,
        };
        let started = std::time::Instant::now();
        let out = p.run(&ctx).map_err(|error| EngineError::Plugin {
            id: p.id().into(),
            error,
        })?;
        timing(p.id(), started);
        runs.push(PluginRun {
            id: p.id().into(),
            version: p.version().into(),
            method: p.method(),
            kind: registry.kind_of(p.id()).into(),
        });
        outputs.push((p.id().to_string(), out));
    }
    let options = prove_options(loaded, registry, &mut outputs);
    Ok(collect(site, loaded, runs, outputs, inputs, options))
}

/// Every option of the run (the plugins' and the site's `[[what_if]]`), those that change
/// the site predicted and graded on the changed copy; the recommended ones marked.
fn prove_options(
    loaded: &LoadedSite,
    registry: &Registry,
    outputs: &mut [(String, PluginOutput)],
) -> Vec<Remediation> {
    let site = &loaded.site;
    let mut all: Vec<Remediation> = outputs
        .iter_mut()
        .flat_map(|(_, o)| std::mem::take(&mut o.remediation))
        .collect();
    all.extend(options::user_options(site));
    for r in all.iter_mut().filter(|r| options::changes_site(r)) {
        let started = std::time::Instant::now();
        options::prove(site, registry, outputs, &loaded.surveys, r);
        timing(&format!("option {}", r.id), started);
    }
    options::recommend(&mut all);
    all
}

/// With `RFSITE_TIMING` set, prints how long a step took to stderr (never into an output).
fn timing(what: &str, started: std::time::Instant) {
    if std::env::var_os("RFSITE_TIMING").is_some() {
        eprintln!("timing: {what}: {:.3} s", started.elapsed().as_secs_f64());
    }
}

fn collect(
    site: &Site,
    loaded: &LoadedSite,
    plugins: Vec<PluginRun>,
    outputs: Vec<(String, PluginOutput)>,
    mut inputs: Vec<InputFile>,
    options: Vec<Remediation>,
) -> Assessment {
    let mut a = Assessment {
        tool: Tool {
            name: "rfsite".into(),
            version: VERSION.into(),
        },
        site: site_ref(site),
        inputs: Vec::new(),
        plugins,
        services: Vec::new(),
        findings: Vec::new(),
        remediation: Vec::new(),
        cautions: Vec::new(),
        warnings: Vec::new(),
        tables: Vec::new(),
        figures: Vec::new(),
        link_budgets: Vec::new(),
        materials: materials_table(site),
        layers: Vec::new(),
        surveys: SurveySummary::default(),
        extra: Default::default(),
    };
    for (id, o) in outputs {
        a.layers.extend(o.layers);
        a.findings.extend(o.findings);
        // The last plugin to grade a service wins (grading after link budget).
        for s in o.services {
            a.services.retain(|x| x.id != s.id);
            a.services.push(s);
        }
        a.cautions.extend(o.cautions);
        a.warnings.extend(o.warnings);
        a.tables.extend(o.tables);
        a.figures.extend(o.figures);
        a.link_budgets.extend(o.link_budgets);
        if !o.extra.is_empty() {
            a.extra.insert(id, serde_json::Value::Object(o.extra));
        }
    }
    for w in &loaded.warnings.items {
        a.warnings.push(Warning {
            plugin: "check".into(),
            message: format!("{}:{}:{}: {}", w.file, w.line, w.column, w.message),
        });
    }
    for m in &a.materials {
        for l in &m.losses {
            if l.extrapolated {
                let (lo, hi) = site
                    .materials
                    .get(&m.id)
                    .and_then(|x| x.range_mhz())
                    .unwrap_or((0.0, 0.0));
                a.warnings.push(Warning {
                    plugin: "materials".into(),
                    message: format!(
                        "material `{}` at {} MHz ({}) is outside its range {}–{} MHz: extrapolated",
                        m.id, l.freq_mhz, l.service, lo, hi
                    ),
                });
            }
        }
    }
    // Survey summary.
    let s = &loaded.surveys;
    let mut by_reason: BTreeMap<String, usize> = BTreeMap::new();
    for r in &s.rejected {
        *by_reason.entry(r.reason.clone()).or_default() += 1;
    }
    a.surveys = SurveySummary {
        accepted: s.points.len(),
        rejected: s.rejected.len(),
        rejected_by_reason: by_reason.into_iter().collect(),
        rows_per_file: s.rows_per_file.clone(),
        rejected_rows: s.rejected.iter().take(50).cloned().collect(),
    };
    a.remediation = options;
    options::fill_remedies(&mut a.findings, &a.remediation);
    // Life safety first everywhere: services, findings, remediation.
    let life_id = |sid: Option<&String>| {
        sid.and_then(|s| site.service(s))
            .is_some_and(|s| s.life_safety)
    };
    a.services
        .sort_by(|x, y| y.life_safety.cmp(&x.life_safety).then(x.id.cmp(&y.id)));
    a.findings.sort_by(|x, y| {
        life_id(y.service.as_ref())
            .cmp(&life_id(x.service.as_ref()))
            .then(x.severity.cmp(&y.severity))
            .then(x.id.cmp(&y.id))
    });
    // Then the largest shortfall.
    let life = |r: &Remediation| life_id(r.service.as_ref());
    a.remediation.sort_by(|x, y| {
        life(y)
            .cmp(&life(x))
            .then(y.margin_needed_db.total_cmp(&x.margin_needed_db))
            .then(x.id.cmp(&y.id))
    });
    a.warnings.sort();
    a.warnings.dedup();
    inputs.sort();
    inputs.dedup();
    a.inputs = inputs;
    a
}

/// The losses the prediction charges for every material the site uses, at every service
/// frequency, at normal incidence and the thickness the site gives it (first use): the
/// probe value where a site probe applies, the crossing cap where the material exceeds it.
pub fn materials_table(site: &Site) -> Vec<MaterialRow> {
    let thickness = first_thickness(site);
    let cap = crossing_cap_db(site);
    site.materials_used
        .iter()
        .filter_map(|id| site.materials.get(id))
        .map(|used| {
            let lib = site.materials.before_probes.get(&used.id);
            let t = thickness.get(used.id.as_str()).copied().unwrap_or(0.1);
            let losses = site
                .services
                .iter()
                .map(|s| material_loss(site, used, lib, s, t, cap))
                .collect::<Vec<_>>();
            let probe_loss_db = losses.iter().find(|l| l.probed).map(|l| l.loss_db);
            let shown = lib.unwrap_or(used);
            MaterialRow {
                id: used.id.clone(),
                name: used.name.clone(),
                class: used.class.label().into(),
                model: shown.model_label().into(),
                source: used.source.clone(),
                confidence: confidence_with_probes(&losses, &shown.confidence_words()),
                thickness_rule: shown.thickness_rule(t),
                losses,
                probe_loss_db,
            }
        })
        .collect()
}

/// "measured on site" where probes set every value, else the library's words with the
/// probed frequencies named.
fn confidence_with_probes(losses: &[MaterialLoss], library: &str) -> String {
    let probed: Vec<String> = losses
        .iter()
        .filter(|l| l.probed)
        .map(|l| format!("{} MHz", l.freq_mhz))
        .collect();
    if probed.is_empty() {
        library.to_string()
    } else if probed.len() == losses.len() {
        "measured on site".into()
    } else {
        format!(
            "measured on site at {}; {library} elsewhere",
            probed.join(", ")
        )
    }
}

/// The thickness each material has where the site first uses it, m.
fn first_thickness(site: &Site) -> BTreeMap<&str, f64> {
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
    thickness
}

/// The multi-wall plugin's cap on one crossing, dB (its option or its default).
pub fn crossing_cap_db(site: &Site) -> f64 {
    site.plugin_options
        .get("multi-wall")
        .and_then(|t| t.get("max_crossing_loss_db"))
        .and_then(|v| v.as_float().or(v.as_integer().map(|i| i as f64)))
        .unwrap_or(rfsite_plugin_multi_wall::DEFAULT_MAX_CROSSING_LOSS_DB)
}

/// One material at one service: the value used (the probed material where a probe of it
/// lies within the probe tolerance of the service frequency, else the library one).
fn material_loss(
    site: &Site,
    used: &rfsite_model::Material,
    lib: Option<&rfsite_model::Material>,
    s: &rfsite_model::Service,
    t: f64,
    cap: f64,
) -> MaterialLoss {
    let probed = lib.is_some() && probe_applies(site, &used.id, s.freq_mhz);
    let m = if probed { used } else { lib.unwrap_or(used) };
    let l = m.crossing_loss(s.freq_mhz, t, 1.0, Polarization::Te);
    MaterialLoss {
        service: s.id.clone(),
        freq_mhz: s.freq_mhz,
        thickness_m: m.model.angle_dependent().then_some(t),
        loss_db: l.loss_db.min(cap),
        extrapolated: l.note.is_some() && !probed,
        probed,
        beyond_cap: l.loss_db > cap,
    }
}

/// Whether the site's probes of a material set its loss at `freq_mhz`: the frequency lies
/// within the probed span or within the probe tolerance of its ends (as `apply_probes`).
fn probe_applies(site: &Site, material: &str, freq_mhz: f64) -> bool {
    let fs: Vec<f64> = site
        .probes
        .iter()
        .filter(|p| p.material == material)
        .map(|p| p.freq_mhz)
        .collect();
    let (Some(lo), Some(hi)) = (
        fs.iter().copied().reduce(f64::min),
        fs.iter().copied().reduce(f64::max),
    ) else {
        return false;
    };
    let tol = rfsite_model::material::PROBE_FREQ_TOLERANCE * freq_mhz;
    freq_mhz >= lo - tol && freq_mhz <= hi + tol
}

/// The site's identification in findings.json: meta, report date and floors by elevation.
fn site_ref(site: &Site) -> SiteRef {
    let mut floors: Vec<rfsite_plugin::FloorRef> = site
        .floors
        .iter()
        .map(|f| rfsite_plugin::FloorRef {
            id: f.id.clone(),
            name: f.name.clone(),
            elevation_m: f.elevation_m,
        })
        .collect();
    floors.sort_by(|a, b| {
        a.elevation_m
            .total_cmp(&b.elevation_m)
            .then_with(|| a.id.cmp(&b.id))
    });
    SiteRef {
        id: site.meta.id.clone(),
        name: site.meta.name.clone(),
        client: site.meta.client.clone(),
        report_date: site.meta.report_date.clone(),
        revision: site.meta.revision.clone(),
        floors,
    }
}

/// findings.json: the contract fields first, then the rest of the assessment.
pub fn findings_json(a: &Assessment) -> String {
    #[derive(serde::Serialize)]
    struct Doc<'a> {
        schema: &'static str,
        #[serde(flatten)]
        a: &'a Assessment,
    }
    let mut s = serde_json::to_string_pretty(&Doc {
        schema: FINDINGS_SCHEMA,
        a,
    })
    .unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    s.push('\n');
    s
}
