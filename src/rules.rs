//! `rfsite rules [--json] [SITE]`: the acceptance rule sets with every number and its source.

use std::collections::BTreeMap;
use std::path::PathBuf;

use rfsite_plugin_grading::Rule;

use crate::Outcome;

/// Arguments of `rules`.
#[derive(clap::Args)]
pub struct Args {
    /// Print JSON.
    #[arg(long)]
    pub json: bool,
    /// Also list the rule sets a site defines under `[plugins.grading.rule_sets]`.
    pub site: Option<PathBuf>,
}

/// Runs `rules`.
pub fn run(a: Args) -> Outcome {
    let all = match &a.site {
        None => rfsite_plugin_grading::builtin_rules(),
        Some(p) => match site_rules(p) {
            Ok(r) => r,
            Err(o) => return o,
        },
    };
    if a.json {
        let v: Vec<_> = all.values().collect();
        println!("{}", serde_json::to_string_pretty(&v).unwrap_or_default());
    } else {
        for r in all.values() {
            print!("{}", describe(r));
        }
    }
    Outcome::Ok
}

fn site_rules(p: &std::path::Path) -> Result<BTreeMap<String, Rule>, Outcome> {
    let (_, l) = crate::check::load(p)?;
    let empty = toml::Table::new();
    let options = l.site.plugin_options.get("grading").unwrap_or(&empty);
    rfsite_plugin_grading::rule_sets(options, &mut Vec::new()).map_err(|e| {
        eprintln!("error: [plugins.grading] {e}\n  = hint: `rfsite check` locates it");
        Outcome::BadInput
    })
}

/// One rule set as text: a heading, then each number with its source.
fn describe(r: &Rule) -> String {
    let mut s = format!("{} — {}\n  {}\n", r.id, r.name, r.authority);
    let v = serde_json::to_value(r).unwrap_or_default();
    let Some(fields) = v.as_object() else {
        return s;
    };
    for (k, val) in fields {
        if ["id", "name", "authority", "sources"].contains(&k.as_str()) {
            continue;
        }
        let shown = match val {
            serde_json::Value::Null => "none".to_string(),
            serde_json::Value::String(x) => x.clone(),
            other => other.to_string(),
        };
        s.push_str(&format!("  {k} = {shown}\n"));
        let src = r.source(k);
        if !src.is_empty() {
            s.push_str(&format!("      source: {src}\n"));
        }
    }
    s.push('\n');
    s
}
