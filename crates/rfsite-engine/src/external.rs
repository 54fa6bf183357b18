//! External plugins: the adapter that runs a command as a [`Plugin`].
//!
//! A `[plugins.<id>]` table with a `command` declares an external plugin, in `site.toml` or
//! in a `*.toml` file of a plugin folder (`--plugins DIR`). The host reads only its own keys
//! ([`HOST_KEYS`]); every other key is the plugin's option and is passed on untouched.
//!
//! [`ExternalPlugin::run`] writes a [`wire::Request`] on the command's stdin and reads a
//! [`wire::Response`] from its stdout, with a time limit (the child is killed), a size
//! limit on the answer, the exit status checked and the protocol version checked. Each
//! line the command writes on stderr goes to rfsite's log, prefixed with the plugin id.
//! Every failure is an error naming the plugin and its command; for an `optional = true`
//! plugin it becomes a [`Warning`] in the report instead and the run goes on.
//!
//! The engine sees only `Box<dyn Plugin>`: nothing else in rfsite knows a plugin is external.

use std::collections::{BTreeMap, VecDeque};
use std::io::{BufRead, Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{mpsc, Arc};
use std::time::{Duration, Instant};

use rfsite_model::Site;
use rfsite_plugin::wire::{self, WireError, PROTOCOL};
use rfsite_plugin::*;

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
    /// Time limit, seconds.
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
}

fn strings(
    id: &str,
    key: &str,
    v: Option<&toml::Value>,
    file: &str,
) -> Result<Vec<String>, String> {
    match v {
        None => Ok(Vec::new()),
        Some(toml::Value::Array(a)) => a
            .iter()
            .map(|x| {
                x.as_str().map(str::to_string).ok_or_else(|| {
                    format!(
                        "{file}: [plugins.{id}] `{key}` must be a list of strings, found a {}",
                        x.type_str()
                    )
                })
            })
            .collect(),
        Some(other) => Err(format!(
            "{file}: [plugins.{id}] `{key}` must be a list of strings, found a {}",
            other.type_str()
        )),
    }
}

impl ExternalSpec {
    /// Reads a `[plugins.<id>]` table; `None` when it has no `command` (a built-in
    /// plugin's options). `dir` is the command's working folder, `file` the declaring file
    /// as shown in messages.
    pub fn from_table(
        id: &str,
        t: &toml::Table,
        dir: &Path,
        file: &str,
    ) -> Result<Option<ExternalSpec>, String> {
        let Some(cmd) = t.get("command") else {
            return Ok(None);
        };
        let command = cmd
            .as_str()
            .ok_or_else(|| {
                format!(
                    "{file}: [plugins.{id}] `command` must be a string, found a {}",
                    cmd.type_str()
                )
            })?
            .trim()
            .to_string();
        if command.is_empty() {
            return Err(format!("{file}: [plugins.{id}] `command` is empty"));
        }
        let text = |key: &str, default: &str| -> Result<String, String> {
            match t.get(key) {
                None => Ok(default.to_string()),
                Some(toml::Value::String(s)) => Ok(s.clone()),
                Some(o) => Err(format!(
                    "{file}: [plugins.{id}] `{key}` must be a string, found a {}",
                    o.type_str()
                )),
            }
        };
        let optional = match t.get("optional") {
            None => false,
            Some(toml::Value::Boolean(b)) => *b,
            Some(o) => {
                return Err(format!(
                    "{file}: [plugins.{id}] `optional` must be true or false, found a {}",
                    o.type_str()
                ))
            }
        };
        let timeout_s = match t.get("timeout_s") {
            None => DEFAULT_TIMEOUT_S,
            Some(toml::Value::Integer(i)) if *i > 0 => *i as f64,
            Some(toml::Value::Float(f)) if *f > 0.0 && f.is_finite() => *f,
            Some(o) => return Err(format!("{file}: [plugins.{id}] `timeout_s` must be a positive number of seconds, found {o}")),
        };
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
            declared_in: file.to_string(),
        }))
    }

    /// The command line as shown in messages.
    pub fn command_line(&self) -> String {
        std::iter::once(self.command.as_str())
            .chain(self.args.iter().map(String::as_str))
            .collect::<Vec<_>>()
            .join(" ")
    }

    fn program(&self) -> PathBuf {
        let p = Path::new(&self.command);
        if p.components().count() > 1 && p.is_relative() {
            self.dir.join(p)
        } else {
            p.to_path_buf()
        }
    }

    /// A fingerprint of the declaration and of the files its command and arguments name
    /// (the script), for deciding whether an earlier result is still current.
    pub fn fingerprint(&self) -> String {
        let mut s = format!(
            "{}\0{}\0{:?}\0{:?}\0{}\0{}\0{}\0{}\n",
            self.id,
            self.command,
            self.args,
            self.after,
            self.optional,
            self.timeout_s,
            self.version,
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
    let doc: toml::Table = toml::from_str(text).map_err(|e| {
        let (line, col) = e.span().map(|s| line_col(text, s.start)).unwrap_or((1, 1));
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
                return Err(format!("{file}: `plugins.{id}` must be a table"));
            };
            match ExternalSpec::from_table(id, pt, dir, file)? {
                Some(s) => out.push(s),
                None => return Err(format!("{file}: [plugins.{id}] has no `command`\n  = hint: a plugin folder declares external plugins: add `command = \"...\"`")),
            }
        }
    }
    Ok(out)
}

fn line_col(text: &str, offset: usize) -> (usize, usize) {
    let before = &text[..offset.min(text.len())];
    let line = before.matches('\n').count() + 1;
    let col = before
        .rsplit('\n')
        .next()
        .map(|s| s.chars().count())
        .unwrap_or(0)
        + 1;
    (line, col)
}

/// The external plugins of a site: those of the plugin folders (`folder`, later
/// declarations of an id replace earlier ones), then the site's own `[plugins.<id>]` tables.
/// A site table with a `command` replaces a folder's declaration of that id; one without
/// adds its keys to the declared plugin's options (the site's value wins).
pub fn site_plugins(
    site: &Site,
    site_dir: &Path,
    site_file: &str,
    folder: &[ExternalSpec],
) -> Result<Vec<ExternalSpec>, String> {
    let mut by_id: BTreeMap<String, ExternalSpec> = BTreeMap::new();
    for s in folder {
        by_id.insert(s.id.clone(), s.clone());
    }
    for (id, t) in &site.plugin_options {
        if let Some(s) = ExternalSpec::from_table(id, t, site_dir, site_file)? {
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

    /// Runs the command once; `Err` is a message naming what went wrong.
    fn call(&self, ctx: &Context<'_>) -> Result<PluginOutput, String> {
        let spec = &self.spec;
        let cmdline = spec.command_line();
        let request = self.request(ctx)?;
        let mut child = Command::new(spec.program())
            .args(&spec.args)
            .current_dir(&spec.dir)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .map_err(|e| format!("could not start `{cmdline}` (in {}): {e}\n  = hint: check `command` in [plugins.{}] of {}", crate::world::display_path(&spec.dir), spec.id, spec.declared_in))?;

        // The request is written from its own thread so that a plugin that answers before
        // reading all of it cannot deadlock us; a plugin that never reads stdin is fine.
        let mut stdin = child.stdin.take();
        std::thread::spawn(move || {
            if let Some(s) = stdin.as_mut() {
                let _ = s.write_all(&request);
            }
            drop(stdin);
        });

        let oversize = Arc::new(AtomicBool::new(false));
        let (out_tx, out_rx) = mpsc::channel();
        let mut stdout = child.stdout.take();
        let flag = oversize.clone();
        std::thread::spawn(move || {
            let mut buf = Vec::new();
            if let Some(s) = stdout.as_mut() {
                let _ = s.take(MAX_OUTPUT_BYTES as u64 + 1).read_to_end(&mut buf);
            }
            if buf.len() > MAX_OUTPUT_BYTES {
                flag.store(true, Ordering::SeqCst);
            }
            let _ = out_tx.send(buf);
        });

        let (err_tx, err_rx) = mpsc::channel();
        let mut stderr = child.stderr.take();
        let prefix = format!("{} [{}]", spec.id, ctx.site.meta.id);
        std::thread::spawn(move || {
            let mut tail: VecDeque<String> = VecDeque::new();
            if let Some(s) = stderr.as_mut() {
                for line in std::io::BufReader::new(s).lines() {
                    let Ok(line) = line else { break };
                    eprintln!("{prefix}: {line}");
                    tail.push_back(line);
                    if tail.len() > 12 {
                        tail.pop_front();
                    }
                }
            }
            let _ = err_tx.send(tail.into_iter().collect::<Vec<_>>());
        });

        let limit = Duration::from_secs_f64(spec.timeout_s);
        let t0 = Instant::now();
        let status = loop {
            match child.try_wait() {
                Ok(Some(s)) => break s,
                Ok(None) => {}
                Err(e) => return Err(format!("`{cmdline}`: could not wait for it: {e}")),
            }
            if oversize.load(Ordering::SeqCst) {
                let _ = child.kill();
                let _ = child.wait();
                return Err(format!(
                    "`{cmdline}` wrote more than {} MiB on stdout; it was stopped",
                    MAX_OUTPUT_BYTES >> 20
                ));
            }
            if t0.elapsed() >= limit {
                let _ = child.kill();
                let _ = child.wait();
                return Err(format!(
                    "`{cmdline}` did not answer within its time limit of {} s and was killed\n  = hint: raise `timeout_s` in [plugins.{}] of {} if it needs longer",
                    spec.timeout_s, spec.id, spec.declared_in
                ));
            }
            std::thread::sleep(Duration::from_millis(5));
        };
        // A grandchild may hold the pipes open after the command exits: wait a little, not forever.
        let grace = Duration::from_secs(2);
        let stdout = out_rx.recv_timeout(grace).unwrap_or_default();
        let tail = err_rx.recv_timeout(grace).unwrap_or_default();
        if !status.success() {
            let code = status
                .code()
                .map(|c| format!("exit status {c}"))
                .unwrap_or_else(|| "a signal".into());
            let tail = if tail.is_empty() {
                "(its stderr was empty)".to_string()
            } else {
                format!("last lines of its stderr:\n    {}", tail.join("\n    "))
            };
            return Err(format!("`{cmdline}` failed with {code}; {tail}"));
        }
        if stdout.len() > MAX_OUTPUT_BYTES {
            return Err(format!(
                "`{cmdline}` wrote more than {} MiB on stdout",
                MAX_OUTPUT_BYTES >> 20
            ));
        }
        let resp = wire::Response::parse(&stdout).map_err(|e| match e {
            WireError::Malformed(_) => {
                let head: String = String::from_utf8_lossy(&stdout[..stdout.len().min(160)]).chars().filter(|c| !c.is_control()).collect();
                format!("`{cmdline}`: {e}; its stdout began with `{head}`")
            }
            WireError::Protocol { .. } => format!("`{cmdline}` {e}\n  = hint: update the plugin, or use an rfsite release that speaks its protocol"),
        })?;
        self.check_output(ctx.site, resp.output)
            .map_err(|m| format!("`{cmdline}`: {m}"))
    }

    /// The answer must make sense for this site: layers sized to their grids on floors and
    /// services that exist; what it raises is attributed to this plugin.
    fn check_output(&self, site: &Site, mut o: PluginOutput) -> Result<PluginOutput, String> {
        let id = &self.spec.id;
        for l in &mut o.layers {
            let n = l.grid.nx.saturating_mul(l.grid.ny);
            if l.level_dbm.len() != n {
                return Err(format!(
                    "layer {}/{} has {} levels for a {}x{} grid",
                    l.floor,
                    l.service,
                    l.level_dbm.len(),
                    l.grid.nx,
                    l.grid.ny
                ));
            }
            if !l.best_server.is_empty() && l.best_server.len() != n {
                return Err(format!(
                    "layer {}/{} has {} best-server entries for a {}x{} grid",
                    l.floor,
                    l.service,
                    l.best_server.len(),
                    l.grid.nx,
                    l.grid.ny
                ));
            }
            if site.floor(&l.floor).is_none() || site.service(&l.service).is_none() {
                return Err(format!(
                    "layer for floor `{}` and service `{}`, which the site does not have",
                    l.floor, l.service
                ));
            }
            l.model = id.clone();
        }
        for f in &mut o.findings {
            f.plugin = id.clone();
        }
        for w in &mut o.warnings {
            w.plugin = id.clone();
        }
        for r in &mut o.remediation {
            r.plugin = id.clone();
        }
        Ok(o)
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

    #[test]
    fn host_keys_are_read_and_the_rest_are_options() {
        let t: toml::Table = toml::from_str("command = \"python3\"\nargs = [\"x.py\"]\nafter = [\"multi-wall\"]\noptional = true\ntimeout_s = 5\nsir_target_db = 9.0\n").unwrap();
        let s = ExternalSpec::from_table("sir", &t, Path::new("/tmp"), "site.toml")
            .unwrap()
            .unwrap();
        assert_eq!(s.args, vec!["x.py"]);
        assert_eq!(s.after, vec!["multi-wall"]);
        assert!(s.optional);
        assert_eq!(s.timeout_s, 5.0);
        assert_eq!(s.options.len(), 1);
        assert_eq!(s.options["sir_target_db"].as_float(), Some(9.0));
    }

    #[test]
    fn a_table_without_command_is_not_external() {
        let t: toml::Table = toml::from_str("floor_b = 0.46").unwrap();
        assert_eq!(
            ExternalSpec::from_table("multi-wall", &t, Path::new("."), "site.toml").unwrap(),
            None
        );
    }

    #[test]
    fn wrong_types_name_the_table_and_key() {
        let t: toml::Table = toml::from_str("command = \"x\"\nargs = \"y\"").unwrap();
        let e = ExternalSpec::from_table("sir", &t, Path::new("."), "site.toml").unwrap_err();
        assert!(e.contains("[plugins.sir] `args`"), "{e}");
        let t: toml::Table = toml::from_str("command = \"x\"\ntimeout_s = -1").unwrap();
        assert!(
            ExternalSpec::from_table("sir", &t, Path::new("."), "site.toml")
                .unwrap_err()
                .contains("timeout_s")
        );
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
        let e =
            parse_declarations("p.toml", "[plugins.x]\ncommand = \n", Path::new(".")).unwrap_err();
        assert!(e.starts_with("p.toml:2:"), "{e}");
    }
}
