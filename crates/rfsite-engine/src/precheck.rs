//! The plugins' own input checks, located in site.toml. `check` prints them and `report`
//! stops on their errors before any plugin runs: one code path, so the two cannot differ.

use rfsite_model::diag::unknown_name_hint;
use rfsite_model::locate::{dotted, locate, Seg};
use rfsite_model::{Diagnostic, Diagnostics, Severity, SourceFile};
use rfsite_plugin::{Context, InputProblem, Place, Plugin};

use crate::{LoadedSite, Registry};

/// Every problem the registered plugins find in the site, errors and warnings.
pub fn check_plugins(loaded: &LoadedSite, registry: &Registry) -> Diagnostics {
    let site = &loaded.site;
    let file = &loaded.source;
    let empty = toml::Table::new();
    let mut out = Diagnostics::default();
    let ids: Vec<&str> = registry.ids();
    for (id, table) in &site.plugin_options {
        if !ids.contains(&id.as_str()) {
            out.push(at(
                file,
                &[Seg::Key("plugins"), Seg::Key(id)],
                Severity::Warning,
                format!("`[plugins.{id}]` names no plugin known to this run: it is ignored"),
                Some(unknown_name_hint("plugin", id, ids.iter().copied())),
            ));
        }
        if let Some(v) = table.get("enabled").filter(|v| !v.is_bool()) {
            out.push(at(
                file,
                &[Seg::Key("plugins"), Seg::Key(id), Seg::Key("enabled")],
                Severity::Error,
                format!("`enabled` must be true or false, found {}", v.type_str()),
                Some("write `enabled = false` (no quotes) to switch the plugin off".into()),
            ));
        }
    }
    for p in registry.all() {
        if !crate::enabled(site, p.id()) || !p.applies(site) {
            continue;
        }
        let options = site.plugin_options.get(p.id()).unwrap_or(&empty);
        unknown_options(p, options, file, &mut out);
        let ctx = Context {
            site,
            options,
            earlier: &[],
            surveys: &loaded.surveys,
            base: None,
        };
        for problem in p.check(&ctx) {
            out.push(located(file, p.id(), problem));
        }
    }
    out
}

fn unknown_options(
    p: &dyn Plugin,
    options: &toml::Table,
    file: &SourceFile,
    out: &mut Diagnostics,
) {
    let Some(mut known) = p.option_keys() else {
        return;
    };
    known.push("enabled");
    for key in options.keys().filter(|k| !known.contains(&k.as_str())) {
        out.push(at(
            file,
            &[Seg::Key("plugins"), Seg::Key(p.id()), Seg::Key(key)],
            Severity::Warning,
            format!("unknown option `{key}` of plugin `{}` is ignored", p.id()),
            Some(unknown_name_hint("option", key, known.iter().copied())),
        ));
    }
}

fn located(file: &SourceFile, plugin: &str, p: InputProblem) -> Diagnostic {
    let severity = if p.warning {
        Severity::Warning
    } else {
        Severity::Error
    };
    let (path, message): (Vec<Seg<'_>>, String) = match &p.place {
        Place::Option(k) if k.is_empty() => (
            vec![Seg::Key("plugins"), Seg::Key(plugin)],
            format!("plugin `{plugin}`: {}", p.message),
        ),
        Place::Option(k) => {
            let mut path = vec![Seg::Key("plugins"), Seg::Key(plugin)];
            path.extend(dotted(k));
            (
                path,
                format!("`[plugins.{plugin}]` option `{k}`: {}", p.message),
            )
        }
        Place::Service { id, key } => (
            vec![Seg::Key("services"), Seg::Id(id), Seg::Key(key)],
            format!("service `{id}`: `{key}`: {}", p.message),
        ),
        Place::Donor { id, key } => (
            vec![Seg::Key("donors"), Seg::Id(id), Seg::Key(key)],
            format!("donor `{id}`: `{key}`: {}", p.message),
        ),
    };
    at(file, &path, severity, message, p.hint)
}

fn at(
    file: &SourceFile,
    path: &[Seg<'_>],
    severity: Severity,
    message: String,
    hint: Option<String>,
) -> Diagnostic {
    let span = locate(&file.text, path).map(|f| f.span).unwrap_or(0..1);
    Diagnostic::at(severity, file, span, message, hint)
}
