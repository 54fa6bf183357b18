//! The antenna design against the prediction (issue 12): on each site given (default the
//! demo and the 20-storey example), the plugins run as `rfsite report` runs them, each
//! timed; then each option that changes the site is predicted and graded on its changed
//! copy, timed. Prints the design time as a multiple of the prediction time.
//!
//!     cargo run --release -p rfsite-bench --bin design [-- SITE...]

use std::path::PathBuf;
use std::time::Instant;

use rfsite_engine::{load, options, world::World, LoadedSite, Registry};
use rfsite_model::MaterialLibrary;
use rfsite_plugin::{Context, PluginOutput};

/// The plugins whose time is the prediction's.
const PREDICTION: [&str; 3] = ["free-space", "multi-wall", "calibration"];

/// Each plugin's output, and each plugin's time in seconds, in run order.
type Outputs = Vec<(String, PluginOutput)>;
type Seconds = Vec<(String, f64)>;

struct Times {
    plugins: Vec<(String, f64)>,
    options: Vec<(String, f64)>,
}

fn run_plugins(l: &LoadedSite, reg: &Registry) -> (Outputs, Seconds) {
    let empty = toml::Table::new();
    let (mut outs, mut times) = (Vec::new(), Vec::new());
    for p in reg.ordered().expect("plugin order") {
        let site = &l.site;
        let on = site
            .plugin_options
            .get(p.id())
            .and_then(|t| t.get("enabled"))
            .and_then(|v| v.as_bool())
            .unwrap_or(true);
        if !on || !p.applies(site) {
            continue;
        }
        let ctx = Context {
            site,
            options: site.plugin_options.get(p.id()).unwrap_or(&empty),
            earlier: &outs,
            surveys: &l.surveys,
            base: None,
        };
        let t = Instant::now();
        let out = p.run(&ctx).expect("plugin runs");
        times.push((p.id().to_string(), t.elapsed().as_secs_f64()));
        outs.push((p.id().to_string(), out));
    }
    (outs, times)
}

fn measure(l: &LoadedSite, reg: &Registry) -> Times {
    let (mut outs, plugins) = run_plugins(l, reg);
    let mut all: Vec<_> = outs
        .iter_mut()
        .flat_map(|(_, o)| std::mem::take(&mut o.remediation))
        .collect();
    all.retain(options::changes_site);
    let mut times = Vec::new();
    for r in &all {
        let t = Instant::now();
        let changes = options::site_changes(&l.site, r);
        let changed = l.site.with_changes(&changes);
        let _ = options::rerun(&changed, reg, &l.site, &outs, &l.surveys, &changes)
            .expect("option re-run");
        times.push((r.id.clone(), t.elapsed().as_secs_f64()));
    }
    Times {
        plugins,
        options: times,
    }
}

fn secs(t: &Times, ids: &[&str]) -> f64 {
    t.plugins
        .iter()
        .filter(|(i, _)| ids.contains(&i.as_str()))
        .map(|(_, s)| s)
        .sum()
}

fn report(name: &str, t: &Times, floors: usize) {
    let predict = secs(t, &PREDICTION);
    let grade = secs(t, &["grading"]);
    let design = secs(t, &["antenna-design"]);
    let proof: f64 = t.options.iter().map(|(_, s)| s).sum();
    println!("{name} ({floors} floors)");
    println!("  prediction {predict:.3} s, grading {grade:.3} s, design {design:.3} s = {:.2} x prediction", design / predict.max(1e-9));
    for (id, s) in &t.options {
        println!("  option {id}: predicted and graded in {s:.3} s");
    }
    println!(
        "  all options proven in {proof:.3} s = {:.2} x prediction",
        proof / predict.max(1e-9)
    );
}

fn main() {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..");
    let mut sites: Vec<PathBuf> = std::env::args().skip(1).map(PathBuf::from).collect();
    if sites.is_empty() {
        sites = ["examples/kestrel-quay-clinic", "examples/tower-20-floors"]
            .iter()
            .map(|s| root.join(s))
            .collect();
    }
    let reg = Registry::builtin();
    for s in &sites {
        let mut world = World::open(s).expect("site folder");
        let l = load(&mut world, &MaterialLibrary::builtin())
            .unwrap_or_else(|e| panic!("{}: {e}", s.display()));
        let best = (0..3)
            .map(|_| measure(&l, &reg))
            .min_by(|a, b| secs(a, &["antenna-design"]).total_cmp(&secs(b, &["antenna-design"])))
            .expect("three runs");
        report(
            &s.file_name().unwrap_or_default().to_string_lossy(),
            &best,
            l.site.floors.len(),
        );
    }
}
