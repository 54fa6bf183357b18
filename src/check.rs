//! `rfsite check SITE [--plugins DIR] [--allow-site-commands]`

use std::path::PathBuf;

use rfsite_engine::external::{ExternalSpec, SiteCommands};
use rfsite_engine::{EngineError, LoadedSite, World};
use rfsite_model::{Diagnostic, MaterialLibrary};

use crate::Outcome;

/// Arguments of `check`.
#[derive(clap::Args)]
pub struct Args {
    /// A site.toml, or a folder holding one.
    pub site: PathBuf,
    /// A folder of `*.toml` external plugin declarations, as given to `report`.
    #[arg(long)]
    pub plugins: Option<PathBuf>,
    /// Check as `report --allow-site-commands` would run: the site file's commands allowed
    /// (check itself never runs any).
    #[arg(long)]
    pub allow_site_commands: bool,
}

/// Why a site could not be loaded.
pub enum LoadError {
    /// The input has problems: every one, errors first.
    BadInput(Vec<Diagnostic>, String),
    /// Anything else (the message).
    Failed(String),
}

impl LoadError {
    /// The problems as `file:line:column: message` lines (a located problem per line).
    pub fn lines(&self) -> Vec<String> {
        match self {
            LoadError::BadInput(d, text) if d.is_empty() => text
                .lines()
                .next()
                .map(|l| vec![l.to_string()])
                .unwrap_or_default(),
            LoadError::BadInput(d, _) => d
                .iter()
                .filter(|x| x.severity == rfsite_model::Severity::Error)
                .map(crate::report::located_line)
                .collect(),
            LoadError::Failed(m) => m
                .lines()
                .next()
                .map(|l| vec![l.to_string()])
                .unwrap_or_default(),
        }
    }
}

/// Loads a site without printing anything (for `portfolio`, where many run at once).
pub fn load_quiet(site: &std::path::Path) -> Result<(World, LoadedSite), LoadError> {
    let mut world = World::open(site).map_err(|e| LoadError::BadInput(Vec::new(), e))?;
    match rfsite_engine::load(&mut world, &MaterialLibrary::builtin()) {
        Ok(l) => Ok((world, l)),
        Err(EngineError::BadInput(d)) => {
            let mut items = d.items.clone();
            items.sort_by_key(|x| x.severity);
            let text = format!(
                "{}{} error(s), {} warning(s)",
                d.items
                    .iter()
                    .map(|x| x.render(crate::term::color_stderr()))
                    .collect::<String>(),
                d.error_count(),
                d.warning_count()
            );
            Err(LoadError::BadInput(
                items
                    .into_iter()
                    .filter(|x| x.severity == rfsite_model::Severity::Error)
                    .collect(),
                text,
            ))
        }
        Err(e) => Err(LoadError::Failed(e.to_string())),
    }
}

/// Loads a site or prints every problem; shared by `check`, `report` and `plugins`.
pub fn load(site: &std::path::Path) -> Result<(World, LoadedSite), Outcome> {
    match load_quiet(site) {
        Ok((w, l)) => {
            for x in &l.warnings.items {
                eprint!("{}", x.render(crate::term::color_stderr()));
            }
            Ok((w, l))
        }
        Err(LoadError::BadInput(d, text)) => {
            if d.is_empty() {
                eprintln!("error: {text}");
            } else {
                eprint!("{text}");
                eprintln!(": nothing was written");
            }
            Err(Outcome::BadInput)
        }
        Err(LoadError::Failed(m)) => {
            eprintln!("error: {m}");
            Err(Outcome::Failed)
        }
    }
}

/// Runs `check`: loads the site, then runs every plugin's own input check, as `report`
/// does before it runs anything, and lists the external commands a report would run.
/// It runs no plugin and no command.
pub fn run(a: Args) -> Outcome {
    let (world, l) = match load(&a.site) {
        Ok(x) => x,
        Err(o) => return o,
    };
    let consent = SiteCommands::from_flag(a.allow_site_commands);
    let (problems, specs) = match plugin_problems(&world, &l, a.plugins.as_deref(), consent) {
        Ok(p) => p,
        Err(e) => {
            eprintln!("error: {e}");
            return Outcome::BadInput;
        }
    };
    for x in &problems.items {
        eprint!("{}", x.render(crate::term::color_stderr()));
    }
    for line in command_lines(&specs, &l.site) {
        println!("{line}");
    }
    if problems.has_errors() {
        eprintln!(
            "{} error(s), {} warning(s): `report` would stop here",
            problems.error_count(),
            problems.warning_count()
        );
        return Outcome::BadInput;
    }
    if !crate::term::quiet() {
        print_summary(&world, &l, l.warnings.items.len() + problems.items.len());
    }
    Outcome::Ok
}

/// The plugins' input problems; builds the registry (external plugins included) but runs
/// nothing: `check_plugins` calls each plugin's `check`, never its `run`.
fn plugin_problems(
    world: &World,
    l: &LoadedSite,
    plugins: Option<&std::path::Path>,
    consent: SiteCommands,
) -> Result<(rfsite_model::Diagnostics, Vec<ExternalSpec>), String> {
    let mut settings = crate::report::load_settings(None, plugins)?;
    settings.site_commands = consent;
    let (registry, specs) = crate::report::registry_for(world, l, &settings)?;
    Ok((rfsite_engine::check_plugins(l, &registry), specs))
}

/// One line per external command: what would run, where it was declared, whether it may.
fn command_lines(specs: &[ExternalSpec], site: &rfsite_model::Site) -> Vec<String> {
    let enabled = |id: &str| {
        site.plugin_options
            .get(id)
            .and_then(|t| t.get("enabled"))
            .and_then(|v| v.as_bool())
            .unwrap_or(true)
    };
    let mut out = Vec::new();
    if !specs.is_empty() {
        out.push("external commands a report would run:".to_string());
    }
    for s in specs {
        let note = if enabled(&s.id) {
            s.consent_note()
        } else {
            "disabled by the site (`enabled = false`): does not run".into()
        };
        out.push(format!(
            "  {}: {} (in {}; declared at {}) — {note}",
            s.id,
            s.command_line(),
            rfsite_engine::world::display_path(&s.dir),
            s.declared_at
        ));
    }
    out
}

fn print_summary(world: &World, l: &LoadedSite, warnings: usize) {
    let s = &l.site;
    let parts: usize = s.floors.iter().map(|f| f.parts.len()).sum();
    println!(
        "{}: ok — {} floor(s), {} wall part(s), {} service(s), {} transmitter(s), {} survey point(s) ({} rejected), {} warning(s)",
        world.display_site_path(),
        s.floors.len(),
        parts,
        s.services.len(),
        s.transmitters.len(),
        l.surveys.points.len(),
        l.surveys.rejected.len(),
        warnings
    );
    println!("{}", sigma_line(s));
    for (floor, plan) in &l.plans {
        println!("{}", plan.summary(floor));
    }
}

/// The shadowing standard deviation in force and where it comes from.
fn sigma_line(s: &rfsite_model::Site) -> String {
    let (sigma, from) = s.shadowing_sigma();
    format!("shadowing sigma in force: {sigma:.1} dB ({})", from.key())
}
