//! `rfsite report SITE [-o OUT] [--template DIR]`

use std::path::PathBuf;

use rfsite_engine::{findings_json, Registry};
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
}

/// Loads a template folder (missing snippets fall back to the built-in wording).
pub fn load_template(dir: &std::path::Path) -> Result<Template, String> {
    let files = rfsite_engine::world::read_dir_files(dir)?;
    let text = |name: &str| -> Result<String, String> {
        let b = files.get(name).ok_or_else(|| format!("{}: template folder has no {name}", dir.display()))?;
        String::from_utf8(b.clone()).map_err(|_| format!("{}/{name} is not UTF-8", dir.display()))
    };
    let mut snippets = std::collections::BTreeMap::new();
    for (k, v) in &files {
        if let Some(stem) = k.strip_prefix("snippets/").and_then(|s| s.strip_suffix(".hbs")) {
            snippets.insert(stem.to_string(), String::from_utf8_lossy(v).to_string());
        }
    }
    let t = Template::from_parts(&text("template.toml")?, &text("report.typ")?, snippets, files.clone()).map_err(|e| format!("{}: {e}", dir.display()))?;
    Ok(t.with_default_snippets())
}

/// Runs `report`.
pub fn run(a: Args) -> Outcome {
    let (world, loaded) = match crate::check::load(&a.site) {
        Ok(x) => x,
        Err(o) => return o,
    };
    let template = match &a.template {
        Some(d) => match load_template(d) {
            Ok(t) => t,
            Err(e) => {
                eprintln!("error: {e}");
                return Outcome::BadInput;
            }
        },
        None => Template::builtin(),
    };
    let out = a.out.clone().unwrap_or_else(|| PathBuf::from("out").join(&loaded.site.meta.id));
    let t0 = std::time::Instant::now();
    let assessment = match rfsite_engine::run(&loaded, &Registry::builtin(), world.inputs()) {
        Ok(x) => x,
        Err(e) => {
            eprintln!("error: {e}");
            return Outcome::Failed;
        }
    };
    let t1 = t0.elapsed();
    let rendered = match rfsite_report::render(&loaded.site, &assessment, &template, &loaded.surveys.points) {
        Ok(r) => r,
        Err(e) => {
            eprintln!("error: {e}");
            return Outcome::Failed;
        }
    };
    let mut files: Vec<(String, Vec<u8>)> = vec![("report.pdf".into(), rendered.pdf), ("findings.json".into(), findings_json(&assessment).into_bytes())];
    for (name, svg) in rendered.figures {
        files.push((format!("figures/{name}"), svg.into_bytes()));
    }
    if let Err(e) = rfsite_engine::world::write_outputs(&out, &files, &world) {
        eprintln!("error: {e}");
        return Outcome::Failed;
    }
    let fails = assessment.services.iter().filter(|s| !s.pass).count();
    println!(
        "{}: wrote {}/report.pdf, findings.json and {} figure(s) — {} service(s), {} failing; prediction {:.2} s, report {:.2} s",
        loaded.site.meta.id,
        out.display(),
        files.len() - 2,
        assessment.services.len(),
        fails,
        t1.as_secs_f64(),
        (t0.elapsed() - t1).as_secs_f64()
    );
    Outcome::Ok
}
