//! `rfsite plugins [SITE] [--plugins DIR] [--allow-site-commands] [--json]`

use std::path::PathBuf;

use rfsite_engine::external::SiteCommands;
use rfsite_engine::Registry;

use crate::Outcome;

/// Arguments of `plugins`.
#[derive(clap::Args)]
pub struct Args {
    /// A site.toml (or a folder holding one): adds the external plugins it declares.
    pub site: Option<PathBuf>,
    /// A folder of `*.toml` external plugin declarations.
    #[arg(long)]
    pub plugins: Option<PathBuf>,
    /// Say what `report --allow-site-commands` would run: the site file's commands allowed.
    #[arg(long)]
    pub allow_site_commands: bool,
    /// Print JSON.
    #[arg(long)]
    pub json: bool,
}

/// Runs `plugins`.
pub fn run(a: Args) -> Outcome {
    let mut settings = match crate::report::load_settings(None, a.plugins.as_deref()) {
        Ok(s) => s,
        Err(e) => {
            eprintln!("error: {e}");
            return Outcome::BadInput;
        }
    };
    settings.site_commands = SiteCommands::from_flag(a.allow_site_commands);
    let built = match &a.site {
        Some(site) => {
            let (world, loaded) = match crate::check::load(site) {
                Ok(x) => x,
                Err(o) => return o,
            };
            crate::report::registry_for(&world, &loaded, &settings)
                .map(|(r, s)| (r, s, Some(loaded.site)))
        }
        None => Registry::with_external(settings.plugin_folder.clone())
            .map(|r| (r, settings.plugin_folder.clone(), None)),
    };
    let (reg, specs, site) = match built {
        Ok(x) => x,
        Err(e) => {
            eprintln!("error: {e}");
            return Outcome::BadInput;
        }
    };
    let ordered = match reg.ordered() {
        Ok(o) => o,
        Err(e) => {
            eprintln!("error: {e}");
            return Outcome::Failed;
        }
    };
    let spec_of = |id: &str| specs.iter().find(|s| s.id == id);
    let enabled = |id: &str| {
        site.as_ref().is_none_or(|s| {
            s.plugin_options
                .get(id)
                .and_then(|t| t.get("enabled"))
                .and_then(|v| v.as_bool())
                .unwrap_or(true)
        })
    };
    if a.json {
        let v: Vec<_> = ordered
            .iter()
            .map(|p| {
                let mut o = serde_json::json!({"id": p.id(), "version": p.version(), "kind": reg.kind_of(p.id()), "after": p.after(), "method": p.method(), "enabled": enabled(p.id())});
                if let Some(s) = spec_of(p.id()) {
                    o["command"] = serde_json::json!(s.command_line());
                    o["optional"] = serde_json::json!(s.optional);
                    o["timeout_s"] = serde_json::json!(s.timeout_s);
                    o["declared_in"] = serde_json::json!(s.declared_in);
                    o["declared_at"] = serde_json::json!(s.declared_at);
                    o["origin"] = serde_json::json!(s.origin.label());
                    o["allowed"] = serde_json::json!(s.allowed);
                }
                o
            })
            .collect();
        println!("{}", serde_json::to_string_pretty(&v).unwrap_or_default());
        return Outcome::Ok;
    }
    for (i, p) in ordered.iter().enumerate() {
        let m = p.method();
        let off = if enabled(p.id()) {
            ""
        } else {
            ", disabled by the site"
        };
        println!(
            "{}. {} {} ({}{off})",
            i + 1,
            p.id(),
            p.version(),
            reg.kind_of(p.id())
        );
        println!("   {}", m.summary);
        for c in m.citations {
            println!("   source: {c}");
        }
        println!("   validity: {}", m.validity);
        if !p.after().is_empty() {
            println!("   runs after: {}", p.after().join(", "));
        }
        if let Some(s) = spec_of(p.id()) {
            println!(
                "   command: {} (in {}; time limit {} s{}; declared at {})",
                s.command_line(),
                rfsite_engine::world::display_path(&s.dir),
                s.timeout_s,
                if s.optional { ", optional" } else { "" },
                s.declared_at
            );
            println!("   {}", s.consent_note());
        }
    }
    Outcome::Ok
}
