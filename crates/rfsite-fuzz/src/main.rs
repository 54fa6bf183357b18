//! `cargo run --release -p rfsite-fuzz -- --cases N [--target site|survey|all] [--seed S]`
//!
//! Seeded, structure-aware mutation of rfsite's inputs on stable Rust. Each case goes
//! through the same loading path as `rfsite check` (the world's file reading, the site
//! loader, the survey reader and every built-in plugin's input check). A case passes when
//! it loads or is rejected with every error located (file, line ≥ 1, column ≥ 1). The run
//! counts panics (caught), hangs (a watchdog stops the run when one case takes longer
//! than `--case-timeout-ms` and saves it) and runs under an address-space limit
//! (`--memory-mb`), so an allocation failure aborts the run instead of going unseen; it
//! prints the peak resident memory. Failing cases are saved under `--save DIR`.

mod answer;
mod mutate;

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Arc, Mutex};
use std::time::Instant;

use mutate::Rng;
use rfsite_engine::{EngineError, Registry, World};
use rfsite_model::MaterialLibrary;

pub(crate) struct Opts {
    pub(crate) cases: u64,
    seed: u64,
    targets: Vec<String>,
    case_timeout_ms: u64,
    memory_mb: u64,
    pub(crate) save: PathBuf,
}

fn opts() -> Result<Opts, String> {
    let mut o = Opts {
        cases: 10_000,
        seed: 1,
        targets: vec!["site".into(), "survey".into(), "answer".into()],
        case_timeout_ms: 10_000,
        memory_mb: 4096,
        save: PathBuf::from("target/fuzz-cases"),
    };
    let args: Vec<String> = std::env::args().skip(1).collect();
    let mut it = args.iter();
    while let Some(a) = it.next() {
        let mut val = || it.next().cloned().ok_or(format!("{a} needs a value"));
        let num = |v: String| v.parse::<u64>().map_err(|e| format!("{a}: {e}"));
        match a.as_str() {
            "--cases" => o.cases = num(val()?)?,
            "--seed" => o.seed = num(val()?)?,
            "--case-timeout-ms" => o.case_timeout_ms = num(val()?)?,
            "--memory-mb" => o.memory_mb = num(val()?)?,
            "--save" => o.save = PathBuf::from(val()?),
            "--target" => {
                o.targets = match val()?.as_str() {
                    "all" => vec!["site".into(), "survey".into(), "answer".into()],
                    t @ ("site" | "survey" | "answer") => vec![t.into()],
                    t => return Err(format!("unknown target `{t}` (site, survey, answer, all)")),
                }
            }
            _ => return Err(format!("unknown argument `{a}`")),
        }
    }
    Ok(o)
}

/// What one case came to.
#[derive(Default, Debug)]
pub(crate) struct Tally {
    cases: u64,
    pub(crate) loaded: u64,
    pub(crate) rejected: u64,
    pub(crate) unlocated: u64,
    pub(crate) panics: u64,
}

fn main() {
    let o = match opts() {
        Ok(o) => o,
        Err(e) => {
            eprintln!("error: {e}");
            std::process::exit(2);
        }
    };
    limit_memory(o.memory_mb);
    std::panic::set_hook(Box::new(|_| {}));
    let _ = std::fs::create_dir_all(&o.save);
    let mut failed = false;
    for t in &o.targets {
        let tally = run_target(t, &o);
        println!(
            "{t}: {} cases, {} loaded, {} rejected with a location, {} rejected without one, {} panics, 0 hangs; peak memory {} MiB",
            tally.cases,
            tally.loaded,
            tally.rejected,
            tally.unlocated,
            tally.panics,
            peak_rss_mib()
        );
        failed |= tally.panics > 0 || tally.unlocated > 0;
    }
    std::process::exit(if failed { 1 } else { 0 });
}

/// A scratch copy of the demo clinic, where each case rewrites one input.
pub(crate) fn scratch() -> tempdir::Scratch {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../examples/kestrel-quay-clinic");
    tempdir::Scratch::copy_of(&root)
}

fn run_target(target: &str, o: &Opts) -> Tally {
    if target == "answer" {
        return answer::run(o);
    }
    let dir = scratch();
    let (file, seeds): (PathBuf, Vec<String>) = match target {
        "site" => (
            dir.path().join("site.toml"),
            vec![
                std::fs::read_to_string(dir.path().join("site.toml")).unwrap_or_default(),
                include_str!("../../../templates/starter/site.toml").to_string(),
            ],
        ),
        _ => {
            // The starter site with one survey: the survey reader is the work of each case.
            let starter = include_str!("../../../templates/starter/site.toml");
            let _ = std::fs::write(
                dir.path().join("site.toml"),
                format!("{starter}\n[[surveys]]\nfile = \"walk.csv\"\n"),
            );
            let f = dir.path().join("walk.csv");
            (f, vec![survey_seed()])
        }
    };
    println!(
        "{target}: cases are written to {} (kept there if the run aborts)",
        file.display()
    );
    let current: Arc<Mutex<Vec<u8>>> = Arc::default();
    let started = Arc::new(AtomicU64::new(u64::MAX));
    watchdog(target, o, current.clone(), started.clone());
    let lib = MaterialLibrary::builtin();
    let registry = Registry::builtin();
    let t0 = Instant::now();
    let mut tally = Tally::default();
    for i in 0..o.cases {
        let mut rng = Rng::new(o.seed.wrapping_mul(0x1000_0000_01B3) ^ i);
        let seed = rng.pick(&seeds).clone();
        let bytes = if target == "site" {
            mutate::toml_case(&mut rng, &seed)
        } else {
            mutate::csv_case(&mut rng, &seed)
        };
        if std::fs::write(&file, &bytes).is_err() {
            continue;
        }
        *current.lock().unwrap_or_else(|e| e.into_inner()) = bytes.clone();
        started.store(t0.elapsed().as_millis() as u64, Ordering::SeqCst);
        let r = catch_unwind(AssertUnwindSafe(|| one_case(dir.path(), &lib, &registry)));
        started.store(u64::MAX, Ordering::SeqCst);
        tally.cases += 1;
        match r {
            Ok(Outcome::Loaded) => tally.loaded += 1,
            Ok(Outcome::Located) => tally.rejected += 1,
            Ok(Outcome::Unlocated(msg)) => {
                tally.unlocated += 1;
                save(o, target, "unlocated", i, &bytes, &msg);
            }
            Err(_) => {
                tally.panics += 1;
                save(o, target, "panic", i, &bytes, "");
            }
        }
        if (i + 1) % 100_000 == 0 {
            println!("{target}: {} cases, {:?} so far", i + 1, tally);
        }
    }
    tally
}

/// A walk over the starter site's floor in the demo's survey format (invented, as all
/// demo data).
fn survey_seed() -> String {
    let mut s = String::from(
        "# invented walk for the fuzz harness\ntimestamp,x,y,floor,service,level_dbm,channel\n",
    );
    for i in 0..120 {
        let (x, y) = (1.0 + (i % 28) as f64, 1.0 + (i / 28) as f64 * 3.5);
        s.push_str(&format!(
            "2026-11-20T10:{:02}:{:02},{x:.2},{y:.2},L1,lte1800,{:.1},1300\n",
            i / 60,
            i % 60,
            -60.0 - (i % 40) as f64
        ));
    }
    s
}

enum Outcome {
    Loaded,
    Located,
    Unlocated(String),
}

/// One case through `check`'s path: load, then every plugin's input check.
fn one_case(dir: &Path, lib: &MaterialLibrary, registry: &Registry) -> Outcome {
    let mut world = match World::open(dir) {
        Ok(w) => w,
        Err(e) => return Outcome::Unlocated(e),
    };
    match rfsite_engine::load(&mut world, lib) {
        Ok(l) => {
            let d = rfsite_engine::check_plugins(&l, registry);
            if !d.has_errors() {
                Outcome::Loaded
            } else if d.items.iter().all(located) {
                Outcome::Located
            } else {
                Outcome::Unlocated("a plugin check without a location".into())
            }
        }
        Err(EngineError::BadInput(d)) if !d.items.is_empty() && d.items.iter().all(located) => {
            Outcome::Located
        }
        Err(e) => Outcome::Unlocated(e.to_string()),
    }
}

fn located(d: &rfsite_model::Diagnostic) -> bool {
    !d.file.is_empty() && d.line >= 1 && d.column >= 1
}

pub(crate) fn save(o: &Opts, target: &str, kind: &str, i: u64, bytes: &[u8], why: &str) {
    let base = o.save.join(format!("{target}-{kind}-{i}"));
    let _ = std::fs::write(base.with_extension("case"), bytes);
    let _ = std::fs::write(base.with_extension("why"), why);
}

/// Stops the run, saving the case, when one case runs longer than the case time limit.
fn watchdog(target: &str, o: &Opts, current: Arc<Mutex<Vec<u8>>>, started: Arc<AtomicU64>) {
    let limit = o.case_timeout_ms;
    let path = o.save.join(format!("{target}-hang.case"));
    let t0 = Instant::now();
    std::thread::spawn(move || loop {
        std::thread::sleep(std::time::Duration::from_millis(200));
        let s = started.load(Ordering::SeqCst);
        let now = t0.elapsed().as_millis() as u64;
        if s != u64::MAX && now.saturating_sub(s) > limit {
            let bytes = current.lock().map(|b| b.clone()).unwrap_or_default();
            let _ = std::fs::write(&path, bytes);
            println!(
                "HANG: a case ran over {limit} ms; saved as {}",
                path.display()
            );
            std::process::exit(3);
        }
    });
}

/// Caps the address space so an allocation failure aborts the run.
fn limit_memory(mb: u64) {
    let bytes = mb.saturating_mul(1 << 20) as libc::rlim_t;
    let lim = libc::rlimit {
        rlim_cur: bytes,
        rlim_max: bytes,
    };
    // SAFETY: setrlimit with a valid struct.
    unsafe {
        libc::setrlimit(libc::RLIMIT_AS, &lim);
    }
}

fn peak_rss_mib() -> u64 {
    // SAFETY: getrusage fills the struct it is given.
    let mut u: libc::rusage = unsafe { std::mem::zeroed() };
    unsafe {
        libc::getrusage(libc::RUSAGE_SELF, &mut u);
    }
    (u.ru_maxrss as u64) / 1024
}

/// A scratch folder removed on drop.
mod tempdir {
    use std::path::{Path, PathBuf};

    pub struct Scratch(PathBuf);

    impl Scratch {
        /// A copy of `src` in a fresh folder under the system's temporary folder.
        pub fn copy_of(src: &Path) -> Scratch {
            let dir = std::env::temp_dir().join(format!("rfsite-fuzz-{}", std::process::id()));
            let _ = std::fs::remove_dir_all(&dir);
            copy(src, &dir);
            Scratch(dir)
        }
        pub fn path(&self) -> &Path {
            &self.0
        }
    }

    fn copy(src: &Path, dst: &Path) {
        let _ = std::fs::create_dir_all(dst);
        for e in std::fs::read_dir(src).into_iter().flatten().flatten() {
            let to = dst.join(e.file_name());
            if e.path().is_dir() {
                copy(&e.path(), &to);
            } else {
                let _ = std::fs::copy(e.path(), &to);
            }
        }
    }

    impl Drop for Scratch {
        fn drop(&mut self) {
            let _ = std::fs::remove_dir_all(&self.0);
        }
    }
}
