//! `rfsite portfolio DIR -o OUT [--jobs N] [--shard K/N] [--force]` and
//! `rfsite portfolio merge OUT... -o MERGED`.
//!
//! Every `site.toml` below DIR is one site; each runs exactly as `rfsite report` would, into
//! OUT/<site id>/, on a bounded pool of worker threads. A site that fails never stops the
//! others. The summary (`portfolio.json`, `portfolio.csv`, `portfolio.pdf`) is built from
//! each site's `findings.json`, so a site skipped because nothing changed contributes
//! exactly what it contributed before, and a merge of shards equals one run.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Mutex;
use std::time::{Duration, Instant};

use serde_json::Value;

use crate::check::{load_quiet, LoadError};
use crate::report::{self, Settings, SiteError, OUTPUT_MARKER};
use crate::{isolate, Outcome};

mod meta;
mod summary;
mod views;
pub use summary::*;
use views::{read_portfolio, write_summary};

/// Arguments of `portfolio`.
#[derive(clap::Args)]
#[command(args_conflicts_with_subcommands = true, subcommand_negates_reqs = true)]
pub struct Args {
    #[command(subcommand)]
    cmd: Option<Sub>,
    /// Folder searched for site projects (every `site.toml` below it).
    #[arg(required = true)]
    pub dir: Option<PathBuf>,
    /// Output folder: one folder per site, plus portfolio.json, .csv and .pdf.
    #[arg(short, long, required = true)]
    pub out: Option<PathBuf>,
    /// Sites run at once (default: the number of CPUs).
    #[arg(short, long)]
    pub jobs: Option<usize>,
    /// Run only slice K of N (1-based), chosen by a stable hash of each site's folder path.
    #[arg(long, value_name = "K/N", value_parser = parse_shard)]
    pub shard: Option<Shard>,
    /// Run every site, even those whose inputs and rfsite version are unchanged.
    #[arg(long)]
    pub force: bool,
    /// A report template folder for every site.
    #[arg(long)]
    pub template: Option<PathBuf>,
    /// A folder of `*.toml` external plugin declarations, for every site.
    #[arg(long)]
    pub plugins: Option<PathBuf>,
    /// Time limit of one site's run, seconds; a site over it fails alone.
    #[arg(long, default_value_t = 900)]
    pub site_timeout_s: u64,
    /// Memory limit (address space) of one site's run, MiB; a site over it fails alone.
    #[arg(long, default_value_t = 8192)]
    pub site_memory_mb: u64,
    /// Run the commands that site files declare (`[plugins.<id>] command`), in every site.
    /// Without it, only the commands of the `--plugins` folder run.
    #[arg(long)]
    pub allow_site_commands: bool,
}

#[derive(clap::Subcommand)]
enum Sub {
    /// Combine the outputs of shards (`--shard K/N` runs) into one portfolio output.
    Merge(MergeArgs),
}

/// Arguments of `portfolio merge`.
#[derive(clap::Args)]
struct MergeArgs {
    /// Output folders of `rfsite portfolio` runs (shards), each holding a portfolio.json.
    #[arg(required = true, num_args = 1..)]
    outs: Vec<PathBuf>,
    /// Merged output folder: the site folders are copied here beside the merged summary.
    #[arg(short, long)]
    out: PathBuf,
}

/// A slice of the portfolio: `k` of `n`, 1-based.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    /// This slice, 1..=n.
    pub k: u64,
    /// Number of slices.
    pub n: u64,
}

fn parse_shard(s: &str) -> Result<Shard, String> {
    let (k, n) = s
        .split_once('/')
        .ok_or("write the shard as K/N, e.g. 2/8")?;
    let k: u64 = k
        .trim()
        .parse()
        .map_err(|_| format!("`{k}` is not a number"))?;
    let n: u64 = n
        .trim()
        .parse()
        .map_err(|_| format!("`{n}` is not a number"))?;
    if n == 0 || k == 0 || k > n {
        return Err(format!("shard {k}/{n}: K runs from 1 to N"));
    }
    Ok(Shard { k, n })
}

/// 64-bit FNV-1a: tiny, stable across platforms and releases (unlike std's hasher).
pub fn fnv1a(bytes: &[u8]) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in bytes {
        h ^= *b as u64;
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    h
}

impl Shard {
    /// Whether the site at `rel` (folder relative to DIR, `/`-separated) is in this slice.
    /// Depends on nothing but the path, so adding a site never moves another.
    pub fn holds(&self, rel: &str) -> bool {
        fnv1a(rel.as_bytes()) % self.n == self.k - 1
    }
}

/// Every site folder below `dir`, as (path relative to `dir`, site folder), sorted. Skips
/// hidden folders, folders named `out`, output folders (holding `findings.json` or the
/// output marker) and `skip` (the portfolio's own output). Links are not followed, so a
/// symlink loop cannot trap the walk.
pub fn discover(dir: &Path, skip: Option<&Path>) -> (Vec<(String, PathBuf)>, Vec<String>) {
    let skip = skip.and_then(|p| p.canonicalize().ok());
    let mut sites = Vec::new();
    let mut notes = Vec::new();
    let walk = walkdir::WalkDir::new(dir)
        .follow_links(false)
        .sort_by_file_name()
        .into_iter()
        .filter_entry(|e| {
            if e.depth() == 0 || !e.file_type().is_dir() {
                return true;
            }
            let name = e.file_name().to_string_lossy();
            if name.starts_with('.') || name == "out" {
                return false;
            }
            let p = e.path();
            if p.join("findings.json").exists() || p.join(OUTPUT_MARKER).exists() {
                return false;
            }
            !(skip.is_some() && p.canonicalize().ok() == skip)
        });
    for e in walk {
        match e {
            Ok(e) if e.file_type().is_file() && e.file_name() == "site.toml" => {
                let folder = e.path().parent().unwrap_or(dir).to_path_buf();
                let rel = folder
                    .strip_prefix(dir)
                    .map(|r| {
                        r.components()
                            .map(|c| c.as_os_str().to_string_lossy().to_string())
                            .collect::<Vec<_>>()
                            .join("/")
                    })
                    .unwrap_or_default();
                sites.push((if rel.is_empty() { ".".into() } else { rel }, folder));
            }
            Ok(_) => {}
            Err(e) => notes.push(format!("skipped while searching: {e}")),
        }
    }
    sites.sort();
    (sites, notes)
}

/// Runs `f` on every item with at most `jobs` worker threads; results in item order.
fn pool<T: Sync, R: Send>(jobs: usize, items: &[T], f: impl Fn(&T) -> R + Sync) -> Vec<R> {
    let next = AtomicUsize::new(0);
    let results: Mutex<Vec<Option<R>>> = Mutex::new((0..items.len()).map(|_| None).collect());
    std::thread::scope(|s| {
        for _ in 0..jobs.clamp(1, items.len().max(1)) {
            s.spawn(|| loop {
                let i = next.fetch_add(1, Ordering::SeqCst);
                let Some(item) = items.get(i) else { break };
                let r = f(item);
                results.lock().unwrap_or_else(|e| e.into_inner())[i] = Some(r);
            });
        }
    });
    results
        .into_inner()
        .unwrap_or_else(|e| e.into_inner())
        .into_iter()
        .flatten()
        .collect()
}

/// What phase one learns of a site: its id, or why it cannot run.
enum Probe {
    Id(String, String),
    Bad(Box<SiteEntry>),
}

/// Runs `portfolio` (or `portfolio merge`).
pub fn run(a: Args) -> Outcome {
    if let Some(Sub::Merge(m)) = a.cmd {
        return merge(m);
    }
    let (Some(dir), Some(out)) = (a.dir.clone(), a.out.clone()) else {
        eprintln!("error: portfolio needs DIR and -o OUT");
        return Outcome::BadInput;
    };
    if !dir.is_dir() {
        eprintln!("error: {}: not a folder\n  = hint: DIR is a folder holding site projects (each a folder with a site.toml)", dir.display());
        return Outcome::BadInput;
    }
    let meta = match meta::read(&dir) {
        Ok(m) => m,
        Err(e) => {
            eprintln!("error: {e}");
            return Outcome::BadInput;
        }
    };
    // Checked here so a bad template or plugin folder stops the run before any site.
    if let Err(e) = report::load_settings(a.template.as_deref(), a.plugins.as_deref()) {
        eprintln!("error: {e}");
        return Outcome::BadInput;
    }
    if let Err(e) = std::fs::create_dir_all(&out) {
        eprintln!("error: {}: {e}", out.display());
        return Outcome::Failed;
    }
    if dir.canonicalize().ok() == out.canonicalize().ok() {
        eprintln!("error: the output folder is the portfolio folder\n  = hint: choose another, e.g. -o {}", dir.join("out").display());
        return Outcome::BadInput;
    }
    let (mut sites, notes) = discover(&dir, Some(&out));
    for n in notes {
        eprintln!("warning: {n}");
    }
    let found = sites.len();
    if let Some(sh) = a.shard {
        sites.retain(|(rel, _)| sh.holds(rel));
    }
    let jobs = a
        .jobs
        .unwrap_or_else(|| {
            std::thread::available_parallelism()
                .map(|n| n.get())
                .unwrap_or(1)
        })
        .max(1);
    let t0 = Instant::now();

    // Phase one: load every site (cheap) to learn its id, so that two sites claiming one
    // output folder are told apart deterministically, whatever order the workers finish in.
    let limits = isolate::Limits {
        time: Duration::from_secs(a.site_timeout_s.max(1)),
        memory_bytes: a.site_memory_mb.max(64).saturating_mul(1 << 20),
    };
    let probes = pool(jobs, &sites, |(rel, folder)| {
        let args = isolate::child_args("probe", rel, folder, None, None, None, (false, false));
        match isolate::in_child(args, limits) {
            Ok(v) => probe_from(rel, &v),
            Err(e) => Probe::Bad(Box::new(failed_entry(rel, None, None, "failed", vec![e]))),
        }
    });
    let mut owner: BTreeMap<String, String> = BTreeMap::new();
    let mut entries: Vec<SiteEntry> = Vec::new();
    let mut todo: Vec<(String, PathBuf, String)> = Vec::new();
    for ((rel, folder), p) in sites.iter().zip(probes) {
        match p {
            Probe::Bad(e) => entries.push(*e),
            Probe::Id(id, name) => match owner.get(&id) {
                Some(first) => entries.push(failed_entry(
                    rel,
                    Some(id.clone()),
                    Some(name),
                    "bad-input",
                    vec![format!("{}: site id `{id}` is also the id of `{first}`; each site of a portfolio needs its own `[site] id`", rfsite_engine::world::display_path(&folder.join("site.toml")))],
                )),
                None => {
                    owner.insert(id.clone(), rel.clone());
                    todo.push((rel.clone(), folder.clone(), id));
                }
            },
        }
    }

    let progress = crate::progress::Progress::new(todo.len(), t0.elapsed());
    let skipped = AtomicUsize::new(0);
    let ran: Vec<SiteEntry> = pool(jobs, &todo, |(rel, folder, id)| {
        progress.start(id);
        let args = isolate::child_args(
            "run",
            rel,
            folder,
            Some((id, &out)),
            a.template.as_deref(),
            a.plugins.as_deref(),
            (a.force, a.allow_site_commands),
        );
        let (entry, reused) = match isolate::in_child(args, limits) {
            Ok(v) => run_from(rel, id, &v),
            Err(e) => (
                failed_entry(rel, Some(id.clone()), None, "failed", vec![e]),
                false,
            ),
        };
        progress.finish(id);
        if reused {
            skipped.fetch_add(1, Ordering::SeqCst);
        }
        let line = match (entry.status.as_str(), reused) {
            ("ok", true) => format!(
                "unchanged {rel} ({id}): {} — kept the earlier outputs",
                entry.verdict.as_deref().unwrap_or("")
            ),
            ("ok", false) => format!(
                "done      {rel} ({id}): {}",
                entry.verdict.as_deref().unwrap_or("")
            ),
            (st, _) => format!(
                "{st:<9} {rel} ({id}): {}",
                entry.problems.first().map(String::as_str).unwrap_or("")
            ),
        };
        progress.say(&line);
        entry
    });
    progress.clear();
    entries.extend(ran);
    let p = Portfolio::new(entries, a.shard, meta);
    if let Err(e) = write_summary(&out, &p) {
        eprintln!("error: {e}");
        return Outcome::Failed;
    }
    report_totals(
        &p,
        &out,
        found,
        skipped.load(Ordering::SeqCst),
        t0.elapsed(),
        jobs,
    );
    p.outcome()
}

/// The child's side of one site's phase (`rfsite portfolio-site`), as one JSON answer.
pub fn child_answer(a: &isolate::Args) -> Value {
    if a.phase == "probe" {
        return match load_quiet(&a.folder) {
            Ok((_, l)) => isolate::probe_answer(&l.site.meta.id, &l.site.meta.name),
            Err(e) => {
                let status = if matches!(e, LoadError::BadInput(..)) {
                    "bad-input"
                } else {
                    "failed"
                };
                serde_json::json!({"entry": failed_entry(&a.rel, None, None, status, e.lines())})
            }
        };
    }
    let (Some(id), Some(out)) = (&a.id, &a.out) else {
        return serde_json::json!({"error": "phase run needs --id and --out"});
    };
    let mut settings = match report::load_settings(a.template.as_deref(), a.plugins.as_deref()) {
        Ok(s) => s,
        Err(e) => return serde_json::json!({"error": e}),
    };
    settings.site_commands =
        rfsite_engine::external::SiteCommands::from_flag(a.allow_site_commands);
    let (entry, reused) = run_one(&a.rel, &a.folder, id, out, &settings, a.force);
    serde_json::json!({"entry": entry, "reused": reused})
}

/// A probe's answer read back.
fn probe_from(rel: &str, v: &Value) -> Probe {
    if let (Some(id), Some(name)) = (v["id"].as_str(), v["name"].as_str()) {
        return Probe::Id(id.to_string(), name.to_string());
    }
    match serde_json::from_value::<SiteEntry>(v["entry"].clone()) {
        Ok(e) => Probe::Bad(Box::new(e)),
        Err(_) => Probe::Bad(Box::new(failed_entry(
            rel,
            None,
            None,
            "failed",
            vec![answer_error(v)],
        ))),
    }
}

/// A run's answer read back: the entry and whether the earlier outputs were kept.
fn run_from(rel: &str, id: &str, v: &Value) -> (SiteEntry, bool) {
    match serde_json::from_value::<SiteEntry>(v["entry"].clone()) {
        Ok(e) => (e, v["reused"].as_bool().unwrap_or(false)),
        Err(_) => (
            failed_entry(rel, Some(id.into()), None, "failed", vec![answer_error(v)]),
            false,
        ),
    }
}

fn answer_error(v: &Value) -> String {
    v["error"]
        .as_str()
        .map(str::to_string)
        .unwrap_or_else(|| "the site's run gave no usable answer".into())
}

/// Whether OUT/<id> holds the outputs of exactly these inputs, settings and rfsite version.
fn unchanged(
    site_out: &Path,
    inputs: &[rfsite_plugin::InputFile],
    fingerprint: &str,
) -> Option<Value> {
    let f: Value =
        serde_json::from_slice(&std::fs::read(site_out.join("findings.json")).ok()?).ok()?;
    let m: Value =
        serde_json::from_slice(&std::fs::read(site_out.join(OUTPUT_MARKER)).ok()?).ok()?;
    let old_inputs: Vec<rfsite_plugin::InputFile> =
        serde_json::from_value(f.get("inputs")?.clone()).ok()?;
    let same = f["tool"]["version"] == rfsite_engine::VERSION
        && m["tool_version"] == rfsite_engine::VERSION
        && m["settings_sha256"] == fingerprint
        && old_inputs == inputs
        && site_out.join("report.pdf").is_file();
    same.then_some(f)
}

/// Runs one site into OUT/<id>; returns its entry and whether the earlier outputs were kept.
fn run_one(
    rel: &str,
    folder: &Path,
    id: &str,
    out: &Path,
    settings: &Settings,
    force: bool,
) -> (SiteEntry, bool) {
    let (world, loaded) = match load_quiet(folder) {
        Ok(x) => x,
        Err(e) => {
            let status = if matches!(e, LoadError::BadInput(..)) {
                "bad-input"
            } else {
                "failed"
            };
            return (
                failed_entry(rel, Some(id.into()), None, status, e.lines()),
                false,
            );
        }
    };
    let name = loaded.site.meta.name.clone();
    let site_out = out.join(id);
    if site_out
        .canonicalize()
        .ok()
        .is_some_and(|c| Some(c) == world.root.canonicalize().ok())
    {
        return (
            failed_entry(
                rel,
                Some(id.into()),
                Some(name),
                "failed",
                vec![format!(
                    "{}: the output folder would be the site folder itself; choose another -o",
                    rfsite_engine::world::display_path(&site_out)
                )],
            ),
            false,
        );
    }
    if !force {
        let specs = report::registry_for(&world, &loaded, settings).map(|(_, s)| s);
        if let Ok(specs) = specs {
            if let Some(f) = unchanged(
                &site_out,
                &world.inputs(),
                &report::fingerprint(settings, &specs),
            ) {
                return (entry_from_findings(rel, id, &f), true);
            }
        }
    }
    match report::run_site(&world, &loaded, settings, &site_out) {
        Ok(done) => {
            let f: Value = serde_json::from_str(&done.findings_json).unwrap_or(Value::Null);
            (entry_from_findings(rel, id, &f), false)
        }
        Err(SiteError::BadInput(p)) => (
            failed_entry(rel, Some(id.into()), Some(name), "bad-input", p),
            false,
        ),
        Err(SiteError::Failed(m)) => (
            failed_entry(
                rel,
                Some(id.into()),
                Some(name),
                "failed",
                m.lines()
                    .map(str::to_string)
                    .filter(|l| !l.trim().is_empty())
                    .collect(),
            ),
            false,
        ),
    }
}

fn report_totals(
    p: &Portfolio,
    out: &Path,
    found: usize,
    skipped: usize,
    took: Duration,
    jobs: usize,
) {
    let t = &p.totals;
    let shard = p
        .shard
        .as_ref()
        .map(|s| format!(" (shard {s} of {found} found)"))
        .unwrap_or_default();
    let ran = t.sites - t.bad_input - t.failed;
    let rate = if took.as_secs_f64() > 0.0 {
        60.0 * t.sites as f64 / took.as_secs_f64()
    } else {
        0.0
    };
    let quiet = crate::term::quiet();
    if !quiet {
        println!(
        "portfolio: {} site(s){shard}: {} pass, {} fail, {} bad input, {} failed to run; {} unchanged and kept; {:.1} s with {jobs} job(s), {rate:.1} sites/min",
        t.sites,
        t.pass,
        t.fail,
        t.bad_input,
        t.failed,
        skipped.min(ran),
        took.as_secs_f64()
    );
    }
    for s in p.sites.iter().filter(|s| s.status != "ok") {
        eprintln!("error: site `{}` ({}) did not run:", s.path, s.status);
        for l in &s.problems {
            eprintln!("  {l}");
        }
    }
    if !quiet {
        println!(
            "portfolio: wrote {}/portfolio.pdf, portfolio.json and portfolio.csv",
            out.display()
        );
    }
}

/// `portfolio merge`: one summary over shard outputs; the site folders are copied beside it.
fn merge(m: MergeArgs) -> Outcome {
    let mut sites: Vec<SiteEntry> = Vec::new();
    let mut from: BTreeMap<String, PathBuf> = BTreeMap::new();
    let mut version: Option<String> = None;
    let mut meta: Option<meta::PortfolioMeta> = None;
    for dir in &m.outs {
        let p = match read_portfolio(dir) {
            Ok(p) => p,
            Err(e) => {
                eprintln!("error: {e}");
                return Outcome::BadInput;
            }
        };
        let v = p.tool["version"].as_str().unwrap_or_default().to_string();
        if version.get_or_insert(v.clone()) != &v {
            eprintln!(
                "warning: {} was written by rfsite {v}, another shard by {}",
                dir.display(),
                version.as_deref().unwrap_or_default()
            );
        }
        if meta.get_or_insert(p.meta.clone()) != &p.meta {
            eprintln!(
                "warning: {} has another portfolio.toml name or owner than the first shard; the summary keeps the first",
                dir.display()
            );
        }
        for s in p.sites {
            if let Some(first) = from.get(&s.path) {
                eprintln!("error: site `{}` is in both {} and {}\n  = hint: merge the outputs of one run's shards (1/N .. N/N), each once", s.path, first.display(), dir.display());
                return Outcome::BadInput;
            }
            from.insert(s.path.clone(), dir.clone());
            sites.push(s);
        }
    }
    let mut ids: BTreeMap<&str, &str> = BTreeMap::new();
    for s in sites.iter().filter(|s| s.output.is_some()) {
        let id = s.id.as_deref().unwrap_or_default();
        if let Some(other) = ids.insert(id, &s.path) {
            eprintln!(
                "error: sites `{other}` and `{}` share the id `{id}`; their outputs would collide",
                s.path
            );
            return Outcome::BadInput;
        }
    }
    if let Err(e) = std::fs::create_dir_all(&m.out) {
        eprintln!("error: {}: {e}", m.out.display());
        return Outcome::Failed;
    }
    let dest = m.out.canonicalize().ok();
    for s in &sites {
        let (Some(o), Some(src)) = (&s.output, from.get(&s.path)) else {
            continue;
        };
        if src.canonicalize().ok() == dest {
            continue;
        }
        let files = match rfsite_engine::world::read_dir_files(&src.join(o)) {
            Ok(f) => f.into_iter().collect::<Vec<_>>(),
            Err(e) => {
                eprintln!("error: {e}");
                return Outcome::Failed;
            }
        };
        if let Err(e) = rfsite_engine::world::write_atomic(&m.out.join(o), &files) {
            eprintln!("error: {e}");
            return Outcome::Failed;
        }
    }
    let p = Portfolio::new(sites, None, meta.unwrap_or_default());
    if let Err(e) = write_summary(&m.out, &p) {
        eprintln!("error: {e}");
        return Outcome::Failed;
    }
    let t = &p.totals;
    println!(
        "portfolio merge: {} output(s), {} site(s): {} pass, {} fail, {} bad input, {} failed to run; wrote {}/portfolio.pdf, portfolio.json and portfolio.csv",
        m.outs.len(),
        t.sites,
        t.pass,
        t.fail,
        t.bad_input,
        t.failed,
        m.out.display()
    );
    p.outcome()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shards_are_parsed_and_checked() {
        assert_eq!(parse_shard("2/3"), Ok(Shard { k: 2, n: 3 }));
        assert!(parse_shard("0/3").is_err());
        assert!(parse_shard("4/3").is_err());
        assert!(parse_shard("3").is_err());
    }

    #[test]
    fn every_site_lands_in_exactly_one_shard() {
        for rel in ["a", "office/small", "tower", "x/y/z", "."] {
            let n = (1..=5).filter(|k| Shard { k: *k, n: 5 }.holds(rel)).count();
            assert_eq!(n, 1, "{rel}");
        }
    }

    #[test]
    fn fnv1a_matches_the_published_test_vector() {
        // FNV-1a 64 of "a" (Fowler/Noll/Vo reference test suite).
        assert_eq!(fnv1a(b"a"), 0xaf63dc4c8601ec8c);
        assert_eq!(fnv1a(b""), 0xcbf29ce484222325);
    }
}
