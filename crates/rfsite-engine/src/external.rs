//! External plugins: the adapter that runs a command as a [`Plugin`].
//!
//! A `[plugins.<id>]` table with a `command` declares an external plugin, in `site.toml` or
//! in a `*.toml` file of a plugin folder (`--plugins DIR`). The host reads only its own keys
//! ([`HOST_KEYS`]); every other key is the plugin's option and is passed on untouched.
//!
//! Consent: a plugin folder is chosen by the user, so its commands run. A command declared
//! in a site file runs only when the user allows it ([`SiteCommands::Allowed`], the
//! [`CONSENT_FLAG`] of the command line): opening a site folder received from someone else
//! must not run their program. Without consent, [`ExternalPlugin::check`] reports the
//! `command` key (an error, or a warning for an `optional` plugin, which is then skipped)
//! and [`ExternalPlugin::run`] never starts it.
//!
//! [`ExternalPlugin::run`] writes a [`wire::Request`] on the command's stdin and reads a
//! [`wire::Response`] from its stdout (the process handling is in `child.rs`: its own
//! process group, killed when it ends or overruns its time limit; a size limit on the
//! answer; stderr logged up to a cap), checks the exit status, the protocol version and
//! every layer of the answer. Every failure is an error naming the plugin and its command;
//! for an `optional = true` plugin it becomes a [`Warning`] in the report instead and the
//! run goes on.
//!
//! The engine sees only `Box<dyn Plugin>`: nothing else in rfsite knows a plugin is external.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Duration;

use rfsite_model::locate::{locate, Seg};
use rfsite_model::{Site, SourceFile};
use rfsite_plugin::wire::{self, WireError, PROTOCOL};
use rfsite_plugin::*;

mod answer;
mod child;

pub use answer::MAX_LAYER_POINTS;

/// An external plugin's answer read as `run` reads it: the protocol, the wire types and
/// every layer checked against the site (for the fuzz harness and tests).
pub fn read_answer(site: &Site, id: &str, bytes: &[u8]) -> Result<PluginOutput, String> {
    let resp = wire::Response::parse(bytes).map_err(|e| e.to_string())?;
    answer::check(site, id, resp.output)
}
pub use child::STDERR_LOG_BYTES;
pub use wire::MAX_EXTRA_VALUES;

/// Keys of a `[plugins.<id>]` table that rfsite itself reads; the rest are the plugin's.
pub const HOST_KEYS: &[&str] = &[
    "command",
    "args",
    "after",
    "optional",
    "timeout_s",
    "description",
    "version",
    "citations",
    "validity",
    "enabled",
];

/// Largest answer accepted on stdout, bytes (64 MiB).
pub const MAX_OUTPUT_BYTES: usize = 64 << 20;

/// Default time limit, seconds.
pub const DEFAULT_TIMEOUT_S: f64 = 30.0;

/// Largest time limit a declaration may set, seconds (one day).
pub const MAX_TIMEOUT_S: f64 = 86_400.0;

/// The command-line flag by which the user allows the commands of site files to run.
pub const CONSENT_FLAG: &str = "--allow-site-commands";

/// Who declared an external plugin.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Origin {
    /// A `*.toml` file of a `--plugins DIR` folder, which the user chose: its command runs.
    Folder,
    /// The site file: its command runs only with the user's consent.
    Site,
}

impl Origin {
    /// `"folder"` or `"site"`.
    pub fn label(self) -> &'static str {
        match self {
            Origin::Folder => "folder",
            Origin::Site => "site",
        }
    }
}

/// Whether the commands declared in site files may run in this run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SiteCommands {
    /// They do not (the default).
    #[default]
    Refused,
    /// The user allowed them ([`CONSENT_FLAG`]).
    Allowed,
}

impl SiteCommands {
    /// From the flag.
    pub fn from_flag(allowed: bool) -> Self {
        if allowed {
            SiteCommands::Allowed
        } else {
            SiteCommands::Refused
        }
    }
}

/// An external plugin as declared.
#[derive(Debug, Clone, PartialEq)]
pub struct ExternalSpec {
    /// Plugin id (the table name).
    pub id: String,
    /// Program: a name looked up on PATH, or a path (relative to `dir`).
    pub command: String,
    /// Arguments.
    pub args: Vec<String>,
    /// Plugins it runs after; their outputs are sent in the request.
    pub after: Vec<String>,
    /// A failure becomes a warning instead of an error.
    pub optional: bool,
    /// Time limit, seconds: finite, more than 0, at most [`MAX_TIMEOUT_S`].
    pub timeout_s: f64,
    /// One-line description (its method summary).
    pub description: String,
    /// Declared version.
    pub version: String,
    /// Declared sources.
    pub citations: Vec<String>,
    /// Declared validity range.
    pub validity: String,
    /// The plugin's own options (every non-host key).
    pub options: toml::Table,
    /// Working folder of the command: the folder of the file that declared it.
    pub dir: PathBuf,
    /// The declaring file, as shown to the user.
    pub declared_in: String,
    /// Where its `command` key is: `file:line:column`.
    pub declared_at: String,
    /// Who declared it.
    pub origin: Origin,
    /// Whether its command may run: a folder's always, a site's only with consent.
    pub allowed: bool,
}

/// `file:line:column` of `[plugins.<id>]` key `key` (or of the table) in a declaring file.
fn place(file: &SourceFile, id: &str, key: Option<&str>) -> String {
    let mut path = vec![Seg::Key("plugins"), Seg::Key(id)];
    path.extend(key.map(Seg::Key));
    let at = locate(&file.text, &path).map(|f| f.span.start).unwrap_or(0);
    let (line, col) = file.line_col(at);
    format!("{}:{line}:{col}", file.display_path)
}

fn strings(
    id: &str,
    key: &str,
    v: Option<&toml::Value>,
    file: &SourceFile,
) -> Result<Vec<String>, String> {
    let bad = |found: &str| {
        format!(
            "{}: [plugins.{id}] `{key}` must be a list of strings, found a {found}",
            place(file, id, Some(key))
        )
    };
    match v {
        None => Ok(Vec::new()),
        Some(toml::Value::Array(a)) => a
            .iter()
            .map(|x| {
                x.as_str()
                    .map(str::to_string)
                    .ok_or_else(|| bad(x.type_str()))
            })
            .collect(),
        Some(other) => Err(bad(other.type_str())),
    }
}

/// The time limit: a number of seconds, finite, more than 0, at most [`MAX_TIMEOUT_S`]
/// (`Duration::from_secs_f64` panics on what this refuses).
fn timeout_s(v: Option<&toml::Value>) -> Result<f64, String> {
    let x = match v {
        None => return Ok(DEFAULT_TIMEOUT_S),
        Some(toml::Value::Integer(i)) => *i as f64,
        Some(toml::Value::Float(f)) => *f,
        Some(o) => return Err(format!("a {}", o.type_str())),
    };
    if x.is_finite() && x > 0.0 && x <= MAX_TIMEOUT_S {
        Ok(x)
    } else {
        Err(x.to_string())
    }
}

impl ExternalSpec {
    /// Reads a `[plugins.<id>]` table of `file`; `None` when it has no `command` (a
    /// built-in plugin's options). `dir` is the command's working folder. Errors are
    /// `file:line:column: message`. The spec is allowed to run when it comes from a
    /// plugin folder; [`site_plugins`] decides for a site's.
    pub fn from_table(
        id: &str,
        t: &toml::Table,
        dir: &Path,
        file: &SourceFile,
        origin: Origin,
    ) -> Result<Option<ExternalSpec>, String> {
        let Some(cmd) = t.get("command") else {
            return Ok(None);
        };
        let at = |key: &str| place(file, id, Some(key));
        let command = cmd
            .as_str()
            .ok_or_else(|| {
                format!(
                    "{}: [plugins.{id}] `command` must be a string, found a {}",
                    at("command"),
                    cmd.type_str()
                )
            })?
            .trim()
            .to_string();
        if command.is_empty() {
            return Err(format!(
                "{}: [plugins.{id}] `command` is empty",
                at("command")
            ));
        }
        let text = |key: &str, default: &str| -> Result<String, String> {
            match t.get(key) {
                None => Ok(default.to_string()),
                Some(toml::Value::String(s)) => Ok(s.clone()),
                Some(o) => Err(format!(
                    "{}: [plugins.{id}] `{key}` must be a string, found a {}",
                    at(key),
                    o.type_str()
                )),
            }
        };
        let optional = match t.get("optional") {
            None => false,
            Some(toml::Value::Boolean(b)) => *b,
            Some(o) => {
                return Err(format!(
                    "{}: [plugins.{id}] `optional` must be true or false, found a {}",
                    at("optional"),
                    o.type_str()
                ))
            }
        };
        let timeout_s = timeout_s(t.get("timeout_s")).map_err(|found| {
            format!(
                "{}: [plugins.{id}] `timeout_s` must be a number of seconds, more than 0 and at most {MAX_TIMEOUT_S} (one day); found {found}\n  = hint: e.g. `timeout_s = 60`",
                at("timeout_s")
            )
        })?;
        let options: toml::Table = t
            .iter()
            .filter(|(k, _)| !HOST_KEYS.contains(&k.as_str()))
            .map(|(k, v)| (k.clone(), v.clone()))
            .collect();
        Ok(Some(ExternalSpec {
            id: id.to_string(),
            args: strings(id, "args", t.get("args"), file)?,
            after: strings(id, "after", t.get("after"), file)?,
            citations: strings(id, "citations", t.get("citations"), file)?,
            description: text("description", &format!("external command `{command}`"))?,
            version: text("version", "unversioned")?,
            validity: text("validity", "as declared by the plugin's author")?,
            command,
            optional,
            timeout_s,
            options,
            dir: dir.to_path_buf(),
            declared_in: file.display_path.clone(),
            declared_at: at("command"),
            origin,
            allowed: origin == Origin::Folder,
        }))
    }

    /// The command line as shown in messages.
    pub fn command_line(&self) -> String {
        std::iter::once(self.command.as_str())
            .chain(self.args.iter().map(String::as_str))
            .collect::<Vec<_>>()
            .join(" ")
    }

    /// Whether a report runs its command, and why, in one phrase.
    pub fn consent_note(&self) -> String {
        match (self.origin, self.allowed) {
            (Origin::Folder, _) => "allowed: declared in a --plugins folder".into(),
            (Origin::Site, true) => format!("allowed by {CONSENT_FLAG}"),
            (Origin::Site, false) if self.optional => format!(
                "not allowed: a command declared in a site file runs only with {CONSENT_FLAG}; this optional plugin is skipped with a warning"
            ),
            (Origin::Site, false) => format!(
                "not allowed: a command declared in a site file runs only with {CONSENT_FLAG}; `report` stops"
            ),
        }
    }

    fn program(&self) -> PathBuf {
        let p = Path::new(&self.command);
        if p.components().count() > 1 && p.is_relative() {
            self.dir.join(p)
        } else {
            p.to_path_buf()
        }
    }

    /// A fingerprint of the declaration, of whether it may run and of the files its command
    /// and arguments name (the script), for deciding whether an earlier result is current.
    pub fn fingerprint(&self) -> String {
        let mut s = format!(
            "{}\0{}\0{:?}\0{:?}\0{}\0{}\0{}\0{}\0{}\n",
            self.id,
            self.command,
            self.args,
            self.after,
            self.optional,
            self.timeout_s,
            self.version,
            self.allowed,
            toml::to_string(&self.options).unwrap_or_default()
        );
        for a in std::iter::once(&self.command).chain(self.args.iter()) {
            if let Some(h) = crate::world::hash_file_if_exists(&self.dir.join(a)) {
                s.push_str(&format!("{a}={h}\n"));
            }
        }
        crate::world::sha256_hex(s.as_bytes())
    }
}

/// Parses a plugin declaration file (`[plugins.<id>]` tables with a `command`). Tables
/// without a command are refused: a plugin folder declares plugins, it does not set options.
pub fn parse_declarations(file: &str, text: &str, dir: &Path) -> Result<Vec<ExternalSpec>, String> {
    let src = SourceFile::new(file, text);
    let doc: toml::Table = toml::from_str(text).map_err(|e| {
        let (line, col) = e.span().map(|s| src.line_col(s.start)).unwrap_or((1, 1));
        format!("{file}:{line}:{col}: {}", e.message())
    })?;
    let mut out = Vec::new();
    for (k, v) in &doc {
        if k != "plugins" {
            return Err(format!("{file}: unknown table `{k}`; a plugin declaration file holds `[plugins.<id>]` tables"));
        }
        let Some(t) = v.as_table() else {
            return Err(format!("{file}: `plugins` must be a table"));
        };
        for (id, v) in t {
            let Some(pt) = v.as_table() else {
                return Err(format!(
                    "{}: `plugins.{id}` must be a table",
                    place(&src, id, None)
                ));
            };
            match ExternalSpec::from_table(id, pt, dir, &src, Origin::Folder)? {
                Some(s) => out.push(s),
                None => return Err(format!("{}: [plugins.{id}] has no `command`\n  = hint: a plugin folder declares external plugins: add `command = \"...\"`", place(&src, id, None))),
            }
        }
    }
    Ok(out)
}

/// The external plugins of a site: those of the plugin folders (`folder`, later
/// declarations of an id replace earlier ones), then the site's own `[plugins.<id>]` tables
/// (`source` is the site file as read). A site table with a `command` replaces a folder's
/// declaration of that id, and runs only if `consent` allows; one without a command adds
/// its keys to the declared plugin's options (the site's value wins).
pub fn site_plugins(
    site: &Site,
    site_dir: &Path,
    source: &SourceFile,
    folder: &[ExternalSpec],
    consent: SiteCommands,
) -> Result<Vec<ExternalSpec>, String> {
    let mut by_id: BTreeMap<String, ExternalSpec> = BTreeMap::new();
    for s in folder {
        by_id.insert(s.id.clone(), s.clone());
    }
    for (id, t) in &site.plugin_options {
        if let Some(mut s) = ExternalSpec::from_table(id, t, site_dir, source, Origin::Site)? {
            s.allowed = consent == SiteCommands::Allowed;
            by_id.insert(id.clone(), s);
        } else if let Some(s) = by_id.get_mut(id) {
            for (k, v) in t {
                if !HOST_KEYS.contains(&k.as_str()) {
                    s.options.insert(k.clone(), v.clone());
                }
            }
        }
    }
    Ok(by_id.into_values().collect())
}

/// Runs a command as a plugin.
#[derive(Debug, Clone)]
pub struct ExternalPlugin {
    /// Its declaration.
    pub spec: ExternalSpec,
}

impl ExternalPlugin {
    /// Wraps a declaration.
    pub fn new(spec: ExternalSpec) -> Self {
        ExternalPlugin { spec }
    }

    fn request(&self, ctx: &Context<'_>) -> Result<Vec<u8>, String> {
        let site = serde_json::to_value(ctx.site)
            .map_err(|e| format!("could not serialise the site: {e}"))?;
        let options = match serde_json::to_value(&self.spec.options) {
            Ok(serde_json::Value::Object(m)) => m,
            Ok(_) => serde_json::Map::new(),
            Err(e) => return Err(format!("could not serialise its options: {e}")),
        };
        let earlier = self
            .spec
            .after
            .iter()
            .filter_map(|a| ctx.output_of(a).map(|o| (a.clone(), o.clone())))
            .collect();
        let req = wire::Request {
            protocol: PROTOCOL.into(),
            plugin: self.spec.id.clone(),
            rfsite_version: crate::VERSION.into(),
            site,
            options,
            earlier,
        };
        serde_json::to_vec(&req).map_err(|e| format!("could not serialise the request: {e}"))
    }

    /// Why its command may not run, for the site file: `None` when it may.
    fn refusal(&self) -> Option<String> {
        (!self.spec.allowed).then(|| {
            format!(
                "this site file declares a command, `{}`, that runs on your machine; a command declared in a site file runs only with {CONSENT_FLAG}",
                self.spec.command_line()
            )
        })
    }

    /// Runs the command once; `Err` is a message naming what went wrong.
    fn call(&self, ctx: &Context<'_>) -> Result<PluginOutput, String> {
        let spec = &self.spec;
        if let Some(m) = self.refusal() {
            return Err(m);
        }
        let cmdline = spec.command_line();
        let request = self.request(ctx)?;
        let mut cmd = Command::new(spec.program());
        cmd.args(&spec.args).current_dir(&spec.dir);
        let limits = child::Limits {
            time: Duration::from_secs_f64(spec.timeout_s),
            stdout_bytes: MAX_OUTPUT_BYTES,
        };
        let log = format!("{} [{}]", spec.id, ctx.site.meta.id);
        let ran = child::run(cmd, request, &limits, &log).map_err(|e| format!("could not start `{cmdline}` (in {}): {e}\n  = hint: check `command` in [plugins.{}] of {}", crate::world::display_path(&spec.dir), spec.id, spec.declared_in))?;
        let stdout = match ran.end {
            child::End::Exited(status) if !status.success() => {
                let code = status
                    .code()
                    .map(|c| format!("exit status {c}"))
                    .unwrap_or_else(|| "a signal".into());
                return Err(format!("`{cmdline}` failed with {code}; {}", ran.stderr.quoted()));
            }
            child::End::Exited(_) => ran.stdout,
            child::End::TimedOut => return Err(format!(
                "`{cmdline}` did not answer within its time limit of {} s and was killed\n  = hint: raise `timeout_s` in [plugins.{}] of {} if it needs longer",
                spec.timeout_s, spec.id, spec.declared_in
            )),
            child::End::Oversize => return Err(format!(
                "`{cmdline}` wrote more than {} MiB on stdout; it was stopped",
                MAX_OUTPUT_BYTES >> 20
            )),
        };
        let resp = wire::Response::parse(&stdout).map_err(|e| match e {
            WireError::Malformed(_) => {
                let head: String = String::from_utf8_lossy(&stdout[..stdout.len().min(160)]).chars().filter(|c| !c.is_control()).collect();
                format!("`{cmdline}`: {e}; its stdout began with `{head}`")
            }
            WireError::Protocol { .. } => format!("`{cmdline}` {e}\n  = hint: update the plugin, or use an rfsite release that speaks its protocol"),
            WireError::TooBig(_) => format!("`{cmdline}`: {e}"),
        })?;
        drop(stdout);
        answer::check(ctx.site, &spec.id, resp.output).map_err(|m| format!("`{cmdline}`: {m}"))
    }
}

impl Plugin for ExternalPlugin {
    fn id(&self) -> &str {
        &self.spec.id
    }
    fn version(&self) -> &str {
        &self.spec.version
    }
    fn method(&self) -> Method {
        Method {
            summary: self.spec.description.clone(),
            citations: self.spec.citations.clone(),
            validity: self.spec.validity.clone(),
        }
    }
    fn after(&self) -> Vec<String> {
        self.spec.after.clone()
    }
    /// A site file's command without consent: an error at its `command` key, or a warning
    /// for an optional plugin (skipped). Never runs anything.
    fn check(&self, _ctx: &Context<'_>) -> Vec<InputProblem> {
        let Some(m) = self.refusal() else {
            return Vec::new();
        };
        let hint = Some(format!(
            "if you trust this site folder, run `rfsite report` with {CONSENT_FLAG}; or declare the plugin in a folder given with --plugins DIR; or set `enabled = false`"
        ));
        let place = Place::Option("command".into());
        if self.spec.optional {
            vec![InputProblem::warning(
                place,
                format!("{m}: this optional plugin is skipped"),
                hint,
            )]
        } else {
            vec![InputProblem::error(place, m, hint)]
        }
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        match self.call(ctx) {
            Ok(o) => Ok(o),
            Err(m) if self.spec.optional => {
                eprintln!(
                    "warning: optional plugin `{}` did not run: {m}",
                    self.spec.id
                );
                Ok(PluginOutput {
                    warnings: vec![Warning {
                        plugin: self.spec.id.clone(),
                        message: format!("optional external plugin did not run: {m}"),
                    }],
                    ..Default::default()
                })
            }
            Err(m) => Err(PluginError::Failed(m)),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn site_file(text: &str) -> SourceFile {
        SourceFile::new("site.toml", text)
    }

    /// The starter site with `extra` appended, validated.
    fn starter_with(extra: &str) -> (Site, SourceFile) {
        let text = format!(
            "{}\n{extra}",
            include_str!("../../../templates/starter/site.toml")
        );
        let file = site_file(&text);
        let site = rfsite_model::load(&file, &rfsite_model::MaterialLibrary::builtin())
            .site
            .expect("the starter site loads");
        (site, file)
    }

    /// The `[plugins.<id>]` table of a TOML text, read as a site file declares it.
    fn spec(id: &str, text: &str) -> Result<Option<ExternalSpec>, String> {
        let doc: toml::Table = toml::from_str(text).unwrap();
        let t = doc["plugins"][id].as_table().unwrap();
        ExternalSpec::from_table(id, t, Path::new("/tmp"), &site_file(text), Origin::Site)
    }

    #[test]
    fn host_keys_are_read_and_the_rest_are_options() {
        let s = spec("sir", "[plugins.sir]\ncommand = \"python3\"\nargs = [\"x.py\"]\nafter = [\"multi-wall\"]\noptional = true\ntimeout_s = 5\nsir_target_db = 9.0\n")
            .unwrap()
            .unwrap();
        assert_eq!(s.args, vec!["x.py"]);
        assert_eq!(s.after, vec!["multi-wall"]);
        assert!(s.optional);
        assert_eq!(s.timeout_s, 5.0);
        assert_eq!(s.options.len(), 1);
        assert_eq!(s.options["sir_target_db"].as_float(), Some(9.0));
        assert_eq!(s.declared_at, "site.toml:2:1");
    }

    #[test]
    fn a_table_without_command_is_not_external() {
        assert_eq!(
            spec("multi-wall", "[plugins.multi-wall]\nfloor_b = 0.46").unwrap(),
            None
        );
    }

    #[test]
    fn wrong_types_name_the_table_and_key_where_they_are() {
        let e = spec("sir", "[plugins.sir]\ncommand = \"x\"\nargs = \"y\"").unwrap_err();
        assert!(e.starts_with("site.toml:3:1: [plugins.sir] `args`"), "{e}");
    }

    #[test]
    fn a_time_limit_is_finite_positive_and_at_most_a_day() {
        for bad in [
            "-1", "0", "0.0", "1e300", "inf", "-inf", "nan", "86400.5", "\"30\"",
        ] {
            let e = spec(
                "sir",
                &format!("[plugins.sir]\ncommand = \"x\"\ntimeout_s = {bad}"),
            )
            .unwrap_err();
            assert!(
                e.starts_with("site.toml:3:1: [plugins.sir] `timeout_s`")
                    && e.contains("at most 86400"),
                "{bad}: {e}"
            );
        }
        for (ok, s) in [("86400", 86400.0), ("0.5", 0.5), ("1", 1.0)] {
            let t = spec(
                "sir",
                &format!("[plugins.sir]\ncommand = \"x\"\ntimeout_s = {ok}"),
            )
            .unwrap()
            .unwrap();
            assert_eq!(t.timeout_s, s);
            // What the run does with it must not panic.
            let _ = Duration::from_secs_f64(t.timeout_s);
        }
    }

    #[test]
    fn declaration_files_need_commands() {
        let e = parse_declarations("p.toml", "[plugins.x]\nfoo = 1\n", Path::new(".")).unwrap_err();
        assert!(e.contains("no `command`"), "{e}");
        let ok = parse_declarations(
            "p.toml",
            "[plugins.x]\ncommand = \"true\"\n",
            Path::new("."),
        )
        .unwrap();
        assert_eq!(ok[0].id, "x");
        assert_eq!(ok[0].origin, Origin::Folder);
        assert!(ok[0].allowed, "a plugin folder is the user's choice");
        let e =
            parse_declarations("p.toml", "[plugins.x]\ncommand = \n", Path::new(".")).unwrap_err();
        assert!(e.starts_with("p.toml:2:"), "{e}");
    }

    #[test]
    fn a_site_command_is_allowed_only_with_consent_and_a_folder_one_always() {
        let (site, file) = starter_with("[plugins.x]\ncommand = \"true\"\n[plugins.y]\nnote = 1\n");
        let x_line = file
            .text
            .lines()
            .position(|l| l == "command = \"true\"")
            .unwrap()
            + 1;
        let folder = parse_declarations(
            "p.toml",
            "[plugins.y]\ncommand = \"true\"\n",
            Path::new("."),
        )
        .unwrap();
        for (consent, x_allowed) in [
            (SiteCommands::Refused, false),
            (SiteCommands::Allowed, true),
        ] {
            let specs = site_plugins(&site, Path::new("."), &file, &folder, consent).unwrap();
            let x = specs.iter().find(|s| s.id == "x").unwrap();
            assert_eq!((x.origin, x.allowed), (Origin::Site, x_allowed));
            assert_eq!(x.declared_at, format!("site.toml:{x_line}:1"));
            let y = specs.iter().find(|s| s.id == "y").unwrap();
            assert_eq!((y.origin, y.allowed), (Origin::Folder, true));
            assert_eq!(y.options["note"].as_integer(), Some(1));
        }
    }

    #[test]
    fn a_refused_command_is_a_check_error_at_its_key_or_a_warning_when_optional() {
        let (site, _) = starter_with("");
        let mut s = spec("x", "[plugins.x]\ncommand = \"true\"\n")
            .unwrap()
            .unwrap();
        let surveys = SurveyData::default();
        let empty = toml::Table::new();
        let ctx = Context {
            site: &site,
            options: &empty,
            earlier: &[],
            surveys: &surveys,
            base: None,
        };
        let p = ExternalPlugin::new(s.clone()).check(&ctx);
        assert_eq!(p.len(), 1);
        assert_eq!(p[0].place, Place::Option("command".into()));
        assert!(!p[0].warning);
        assert!(p[0].message.contains(CONSENT_FLAG), "{}", p[0].message);
        s.optional = true;
        assert!(ExternalPlugin::new(s.clone()).check(&ctx)[0].warning);
        s.allowed = true;
        assert!(ExternalPlugin::new(s).check(&ctx).is_empty());
    }
}
