//! `rfsite report SITE [-o OUT] [--template DIR] [--plugins DIR] [--allow-site-commands]`,
//! and the per-site run that `portfolio` shares.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use rfsite_engine::external::{self, ExternalSpec, SiteCommands};
use rfsite_engine::{findings_json, LoadedSite, Registry, World};
use rfsite_plugin::Assessment;
use rfsite_report::Template;

use crate::Outcome;

/// Arguments of `report`.
#[derive(clap::Args)]
pub struct Args {
    /// A site.toml, or a folder holding one.
    pub site: PathBuf,
    /// Output folder (default: `out/<site id>`).
    #[arg(short, long)]
    pub out: Option<PathBuf>,
    /// A template folder (template.toml, report.typ, snippets/*.hbs, logo).
    #[arg(long)]
    pub template: Option<PathBuf>,
    /// A folder of `*.toml` external plugin declarations (`[plugins.<id>]` with `command`).
    #[arg(long)]
    pub plugins: Option<PathBuf>,
    /// Run the commands that the site file declares (`[plugins.<id>] command`). Without it,
    /// only the commands of a `--plugins` folder run: a site folder from someone else runs
    /// none of their programs.
    #[arg(long)]
    pub allow_site_commands: bool,
}

/// The marker file written into every site output folder; `portfolio` never looks for
/// sites below a folder holding one.
pub const OUTPUT_MARKER: &str = ".rfsite-output";

/// Loads a template folder (missing snippets fall back to the built-in wording).
pub fn load_template(dir: &Path) -> Result<Template, String> {
    let files = rfsite_engine::world::read_dir_files(dir)?;
    let text = |name: &str| -> Result<String, String> {
        let b = files
            .get(name)
            .ok_or_else(|| format!("{}: template folder has no {name}", dir.display()))?;
        String::from_utf8(b.clone()).map_err(|_| format!("{}/{name} is not UTF-8", dir.display()))
    };
    let mut snippets = std::collections::BTreeMap::new();
    for (k, v) in &files {
        if let Some(stem) = k
            .strip_prefix("snippets/")
            .and_then(|s| s.strip_suffix(".hbs"))
        {
            snippets.insert(stem.to_string(), String::from_utf8_lossy(v).to_string());
        }
    }
    let t = Template::from_parts(
        &text("template.toml")?,
        &text("report.typ")?,
        snippets,
        files.clone(),
    )
    .map_err(|e| format!("{}: {e}", dir.display()))?;
    Ok(t.with_default_snippets())
}

/// What every site of a run shares: the template and the plugin folder's declarations.
pub struct Settings {
    /// Report template.
    pub template: Template,
    /// External plugins declared in the `--plugins` folder.
    pub plugin_folder: Vec<ExternalSpec>,
    /// SHA-256 over the template and the plugin declarations (not the site).
    pub fingerprint: String,
    /// Whether the commands declared in site files may run.
    pub site_commands: SiteCommands,
}

/// Reads `--template` and `--plugins`; an error here is bad input.
pub fn load_settings(template: Option<&Path>, plugins: Option<&Path>) -> Result<Settings, String> {
    let mut fp = String::new();
    let template = match template {
        Some(d) => {
            for (k, v) in rfsite_engine::world::read_dir_files(d)? {
                fp.push_str(&format!(
                    "template/{k}={}\n",
                    rfsite_engine::world::sha256_hex(&v)
                ));
            }
            load_template(d)?
        }
        None => Template::builtin(),
    };
    let mut plugin_folder = Vec::new();
    if let Some(d) = plugins {
        for (path, text) in rfsite_engine::world::read_plugin_folder(d)? {
            let shown = rfsite_engine::world::display_path(&path);
            let specs = external::parse_declarations(&shown, &text, d)?;
            for s in specs {
                plugin_folder.retain(|x: &ExternalSpec| x.id != s.id);
                plugin_folder.push(s);
            }
        }
    }
    Ok(Settings {
        template,
        plugin_folder,
        fingerprint: rfsite_engine::world::sha256_hex(fp.as_bytes()),
        site_commands: SiteCommands::from_flag(false),
    })
}

/// The registry for one site: the built-ins, the folder's plugins and the site's own (whose
/// commands may run only as `settings.site_commands` says). Builds it; runs nothing.
pub fn registry_for(
    world: &World,
    loaded: &LoadedSite,
    settings: &Settings,
) -> Result<(Registry, Vec<ExternalSpec>), String> {
    let specs = external::site_plugins(
        &loaded.site,
        &world.root,
        &loaded.source,
        &settings.plugin_folder,
        settings.site_commands,
    )?;
    Ok((Registry::with_external(specs.clone())?, specs))
}

/// The fingerprint of what, besides the site's input files, shapes a site's outputs.
pub fn fingerprint(settings: &Settings, specs: &[ExternalSpec]) -> String {
    let mut s = format!(
        "rfsite {}\nsettings {}\n",
        rfsite_engine::VERSION,
        settings.fingerprint
    );
    for x in specs {
        s.push_str(&format!("plugin {} {}\n", x.id, x.fingerprint()));
    }
    rfsite_engine::world::sha256_hex(s.as_bytes())
}

/// A site run that could not finish.
pub enum SiteError {
    /// The site's input (or its plugin declarations) is wrong: `file:line:column` lines.
    BadInput(Vec<String>),
    /// A plugin, the report or the write failed.
    Failed(String),
}

/// A finished site run.
pub struct SiteDone {
    /// The assessment.
    pub assessment: Assessment,
    /// findings.json text as written.
    pub findings_json: String,
    /// Figures written.
    pub figures: usize,
    /// Time in the plugins.
    pub predict: Duration,
    /// Time rendering the report.
    pub render: Duration,
    /// The plugins' input warnings (as `check` prints them).
    pub warnings: Vec<rfsite_model::Diagnostic>,
}

/// Runs the pipeline on a loaded site and writes OUT/report.pdf, findings.json, figures/ and
/// the output marker, atomically.
pub fn run_site(
    world: &World,
    loaded: &LoadedSite,
    settings: &Settings,
    out: &Path,
) -> Result<SiteDone, SiteError> {
    rfsite_engine::world::check_output_folder(out, world)
        .map_err(|e| SiteError::BadInput(vec![e]))?;
    let (registry, specs) =
        registry_for(world, loaded, settings).map_err(|e| SiteError::BadInput(vec![e]))?;
    let problems = rfsite_engine::check_plugins(loaded, &registry);
    if problems.has_errors() {
        return Err(SiteError::BadInput(located_errors(&problems)));
    }
    let t0 = Instant::now();
    let assessment = rfsite_engine::run(loaded, &registry, world.inputs())
        .map_err(|e| SiteError::Failed(e.to_string()))?;
    let predict = t0.elapsed();
    let rendered = rfsite_report::render(
        &loaded.site,
        &assessment,
        &settings.template,
        &loaded.surveys.points,
        &backdrops(loaded),
    )
    .map_err(|e| SiteError::Failed(e.to_string()))?;
    let findings = findings_json(&assessment);
    let marker = serde_json::json!({
        "schema": "rfsite-output/1",
        "site": loaded.site.meta.id,
        "tool_version": rfsite_engine::VERSION,
        "settings_sha256": fingerprint(settings, &specs),
    });
    let mut files: Vec<(String, Vec<u8>)> = vec![
        ("report.pdf".into(), rendered.pdf),
        ("findings.json".into(), findings.clone().into_bytes()),
        (
            OUTPUT_MARKER.into(),
            format!(
                "{}\n",
                serde_json::to_string_pretty(&marker).unwrap_or_default()
            )
            .into_bytes(),
        ),
    ];
    for (name, bytes) in
        rfsite_report::exports::exports(&loaded.site, &assessment).map_err(SiteError::Failed)?
    {
        files.push((name, bytes));
    }
    let figures = rendered.figures.len();
    for (name, svg) in rendered.figures {
        files.push((format!("figures/{name}"), svg.into_bytes()));
    }
    rfsite_engine::world::write_outputs(out, &files, world).map_err(SiteError::Failed)?;
    Ok(SiteDone {
        warnings: problems.items,
        assessment,
        findings_json: findings,
        figures,
        predict,
        render: t0.elapsed() - predict,
    })
}

/// The maps' backdrops: each floor's plan image and DXF linework.
fn backdrops(loaded: &LoadedSite) -> rfsite_report::Backdrops<'_> {
    let mut b = rfsite_report::Backdrops::default();
    for (floor, bytes) in &loaded.plan_images {
        b = b.image(floor, bytes);
    }
    for (floor, plan) in &loaded.plans {
        b = b.linework(floor, &plan.linework);
    }
    b
}

/// The errors of a set of diagnostics as `file:line:column: message` lines, each followed
/// by its hint as `check` prints it.
pub fn located_errors(d: &rfsite_model::Diagnostics) -> Vec<String> {
    d.items
        .iter()
        .filter(|x| x.severity == rfsite_model::Severity::Error)
        .map(located_line)
        .collect()
}

/// One diagnostic as `file:line:column: message`, then `  = hint: ...` on its own line.
pub fn located_line(x: &rfsite_model::Diagnostic) -> String {
    let hint = x
        .hint
        .as_deref()
        .map(|h| format!("\n  = hint: {h}"))
        .unwrap_or_default();
    format!("{}:{}:{}: {}{hint}", x.file, x.line, x.column, x.message)
}

/// Runs `report`.
pub fn run(a: Args) -> Outcome {
    let mut settings = match load_settings(a.template.as_deref(), a.plugins.as_deref()) {
        Ok(s) => s,
        Err(e) => {
            eprintln!("error: {e}");
            return Outcome::BadInput;
        }
    };
    settings.site_commands = SiteCommands::from_flag(a.allow_site_commands);
    let (world, loaded) = match crate::check::load(&a.site) {
        Ok(x) => x,
        Err(o) => return o,
    };
    let out = a
        .out
        .clone()
        .unwrap_or_else(|| PathBuf::from("out").join(&loaded.site.meta.id));
    match run_site(&world, &loaded, &settings, &out) {
        Ok(d) => {
            for w in &d.warnings {
                eprint!("{}", w.render(crate::term::color_stderr()));
            }
            if crate::term::quiet() {
                return Outcome::Ok;
            }
            let fails = d.assessment.services.iter().filter(|s| !s.pass).count();
            println!(
                "{}: wrote {}/report.pdf, findings.json and {} figure(s) — {} service(s), {} failing; prediction {:.2} s, report {:.2} s",
                loaded.site.meta.id,
                out.display(),
                d.figures,
                d.assessment.services.len(),
                fails,
                d.predict.as_secs_f64(),
                d.render.as_secs_f64()
            );
            Outcome::Ok
        }
        Err(SiteError::BadInput(lines)) => {
            for l in lines {
                eprintln!("error: {l}");
            }
            Outcome::BadInput
        }
        Err(SiteError::Failed(m)) => {
            eprintln!("error: {m}");
            Outcome::Failed
        }
    }
}
