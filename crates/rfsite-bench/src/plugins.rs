//! The prediction as rfsite runs it, through the plugins' own functions.
//!
//! The target case becomes a site (its walls as `[[walls]]` of empirical materials at the
//! palette's losses order of magnitude, its transmitters isotropic at 0 dBi) and is
//! predicted three ways on the same point–transmitter pairs:
//!
//! * free space only (`rfsite_plugin_free_space::predict` with no extra loss): distance,
//!   P.525 loss and antenna gain per pair, no walls — the floor of any method that
//!   evaluates every pair;
//! * the multi-wall plugin's whole-grid prediction (`predict_grid`, scene built inside the
//!   timing: junction form, loss kinds, shadows, pair terms);
//! * rfsite's own brute force: every wall piece tested on every path
//!   (`crossings_brute_force_ranked` on the junction form), on a sample of pairs,
//!   extrapolated, and compared with the per-transmitter levels of the prediction.
//!
//! The 20-storey example (`examples/tower-20-floors`) is timed the same way (multi-wall
//! against free space only).

use rayon::prelude::*;
use rfsite_geometry::synth::SplitMix64;
use rfsite_geometry::{crossings_brute_force_ranked, split_at_junctions, Point2, Segment};
use rfsite_model::{load, MaterialLibrary, Site, SourceFile};
use rfsite_physics::p2040::Polarization;
use rfsite_plugin_free_space::{predict, NoExtra};
use rfsite_plugin_multi_wall::{
    predict_grid, predict_grid_traced, FloorPredictor, Scene, StoreyTrace,
    DEFAULT_MAX_CROSSING_LOSS_DB,
};
use std::fmt::Write;
use std::time::Instant;

use crate::{best_of, last_cpu, palette_index, Case, EIRP_DBM, FREQ_MHZ, RX_HEIGHT_M};

/// The palette's classes as empirical library materials (measured tables, the same at
/// every angle), in palette order: partition, glazing, door, block, concrete.
const MATERIALS: [&str; 5] = [
    "plasterboard-partition",
    "clear-glazing",
    "wooden-door",
    "concrete-block",
    "concrete-wall",
];

/// The COST 231 floor exponent the plugin defaults to.
const FLOOR_B: f64 = 0.46;

/// The target case as site TOML.
fn site_text(case: &Case) -> String {
    let (w, h) = (
        case.grid.nx as f64 * case.grid.step_m,
        case.grid.ny as f64 * case.grid.step_m,
    );
    let mut s = format!(
        "[site]\nid = \"bench\"\nname = \"benchmark floor\"\nunits = \"metres\"\nreport_date = \"2026-01-15\"\n\
         [prediction]\ngrid_step = {}\nreceiver_height = {RX_HEIGHT_M}\ncombine = \"strongest\"\n\
         [[floors]]\nid = \"L0\"\nelevation = 0.0\nheight = 3.0\noutline = [[0, 0], [{w}, 0], [{w}, {h}], [0, {h}]]\n\
         [[services]]\nid = \"s\"\nfreq_mhz = {FREQ_MHZ}\nthreshold_dbm = -95.0\n",
        case.grid.step_m
    );
    for (k, t) in case.txs.iter().enumerate() {
        let _ = write!(
            s,
            "[[transmitters]]\nid = \"T{k:02}\"\nservice = \"s\"\nfloor = \"L0\"\nposition = [{}, {}]\n\
             height = {}\npower_dbm = {EIRP_DBM}\nantenna_gain_dbi = 0.0\npattern = \"isotropic\"\n",
            t.x,
            t.y,
            crate::TX_HEIGHT_M
        );
    }
    for (wall, loss) in case.walls.iter().zip(&case.loss_db) {
        let m = MATERIALS[palette_index(*loss)];
        let _ = write!(
            s,
            "[[walls]]\nfloor = \"L0\"\nmaterial = \"{m}\"\nthickness = 0.1\npoints = [[{}, {}], [{}, {}]]\n",
            wall.a.x, wall.a.y, wall.b.x, wall.b.y
        );
    }
    s
}

/// A site from TOML text; panics on an invalid site (the benchmark's own input).
fn site_of(name: &str, text: &str) -> Site {
    let loaded = load(&SourceFile::new(name, text), &MaterialLibrary::builtin());
    loaded.site.expect("the benchmark site loads")
}

/// Seconds of the free-space-only and the multi-wall prediction of `site`, best of `reps`.
fn time_both(site: &Site, reps: usize) -> ((f64, f64), (f64, f64)) {
    let fs = best_of(reps, || {
        predict(site, "free-space", &NoExtra);
    });
    let fs_cpu = last_cpu();
    let mw = best_of(reps, || {
        let scene = Scene::new(site, FLOOR_B, DEFAULT_MAX_CROSSING_LOSS_DB);
        predict_grid(site, "multi-wall", &scene);
    });
    ((fs, fs_cpu), (mw, last_cpu()))
}

/// The brute force of one pair: free space (isotropic, 0 dBi) minus every crossed piece's
/// loss, corners charged the largest; and the per-pair seconds.
struct Brute<'a> {
    site: &'a Site,
    pieces: Vec<Segment>,
    loss_db: Vec<f64>,
}

impl<'a> Brute<'a> {
    fn new(site: &'a Site) -> Brute<'a> {
        let floor = &site.floors[0];
        let segs: Vec<Segment> = floor.parts.iter().map(|p| p.segment).collect();
        let jf = split_at_junctions(&segs);
        let loss_db = jf
            .origin
            .iter()
            .map(|&o| {
                let part = &floor.parts[o];
                site.materials.get(&part.material).map_or(0.0, |m| {
                    let f = m.crossing_loss_fn(
                        FREQ_MHZ,
                        part.thickness_m,
                        Polarization::Te,
                        DEFAULT_MAX_CROSSING_LOSS_DB,
                    );
                    f.eval(1.0).min(DEFAULT_MAX_CROSSING_LOSS_DB)
                })
            })
            .collect();
        Brute {
            site,
            pieces: jf.pieces,
            loss_db,
        }
    }

    fn level(
        &self,
        tx: Point2,
        tz: f64,
        q: Point2,
        out: &mut Vec<rfsite_geometry::Crossing>,
    ) -> f64 {
        let rank = |w: usize, _: f64| self.loss_db[w];
        crossings_brute_force_ranked(&self.pieces, tx, q, &rank, out);
        let walls: f64 = out.iter().map(|c| self.loss_db[c.wall]).sum();
        let rz = self.site.prediction.receiver_height_m;
        let d = (q.distance(tx).powi(2) + (tz - rz).powi(2)).sqrt().max(1.0);
        EIRP_DBM - rfsite_physics::fspl::fspl_db(FREQ_MHZ, d) - walls.min(80.0)
    }
}

/// Prints the plugin-level comparison for the target case and the 20-storey example.
pub fn report(case: &Case, reps: usize, brute_sample: usize) {
    let t = Instant::now();
    let site = site_of("bench.toml", &site_text(case));
    let load_s = t.elapsed().as_secs_f64();
    let pieces = {
        let segs: Vec<Segment> = site.floors[0].parts.iter().map(|p| p.segment).collect();
        split_at_junctions(&segs).pieces.len()
    };
    println!(
        "prediction through the plugins: the target case as a site ({} walls = {} pieces in junction form, {} transmitters, {} points; loading {load_s:.2} s):",
        case.walls.len(),
        pieces,
        case.txs.len(),
        case.grid.len()
    );
    let ((fs, fs_cpu), (mw, mw_cpu)) = time_both(&site, reps);
    let scene_s = best_of(reps, || {
        Scene::new(&site, FLOOR_B, DEFAULT_MAX_CROSSING_LOSS_DB);
    });
    let brute = Brute::new(&site);
    let mut rng = SplitMix64::new(7);
    let pairs: Vec<(usize, usize)> = (0..brute_sample)
        .map(|_| (rng.below(case.grid.len()), rng.below(case.txs.len())))
        .collect();
    let tb = Instant::now();
    let want: Vec<f64> = pairs
        .par_iter()
        .map_init(Vec::new, |out, &(i, k)| {
            let tz = site.transmitters[k].height_m;
            brute.level(case.txs[k], tz, case.grid.point(i), out)
        })
        .collect();
    let brute_s = tb.elapsed().as_secs_f64() / brute_sample as f64 * case.pairs() as f64;
    let scene = Scene::new(&site, FLOOR_B, DEFAULT_MAX_CROSSING_LOSS_DB);
    let zero = |_: usize, _: f64| 0.0;
    let fp = FloorPredictor::new(&site, &scene, 0, 0, &zero);
    let per_tx: Vec<Vec<f32>> = site
        .transmitters
        .par_iter()
        .map(|t| fp.levels(t, None))
        .collect();
    let max_diff = pairs
        .iter()
        .zip(&want)
        .map(|(&(i, k), w)| (per_tx[k][i] as f64 - w).abs())
        .fold(0.0f64, f64::max);
    println!("  free space only (same pairs, no walls): {fs:8.3} s (cpu {fs_cpu:.2} s)");
    println!(
        "  multi-wall, whole grid              : {mw:8.3} s (cpu {mw_cpu:.2} s) = {:.2}x free space only (of which the scene, junction form and wall index: {scene_s:.3} s)",
        mw / fs
    );
    println!(
        "  brute force (every piece per pair)  : {brute_s:8.3} s extrapolated from {brute_sample} pairs = {:.0}x the multi-wall prediction; max level difference {max_diff:.1e} dB",
        brute_s / mw
    );
    tower(reps);
}

/// Only the free-space and multi-wall timings of the target case (for profiling).
pub fn floor_only(case: &Case, reps: usize) {
    let site = site_of("bench.toml", &site_text(case));
    let ((fs, fs_cpu), (mw, mw_cpu)) = time_both(&site, reps);
    println!(
        "free space only {fs:.3} s (cpu {fs_cpu:.2} s), multi-wall {mw:.3} s (cpu {mw_cpu:.2} s) = {:.2}x (cpu {:.2}x)",
        mw / fs,
        mw_cpu / fs_cpu
    );
}

/// The 20-storey example: multi-wall (storey shadows) against free space only and against
/// the same prediction with every path between storeys traced ray by ray (rfsite's own
/// reference for those paths), whose layers it must equal.
fn tower(reps: usize) {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../examples/tower-20-floors/site.toml"
    );
    let Ok(text) = std::fs::read_to_string(path) else {
        println!("  20-storey example: {path} not found\n");
        return;
    };
    let site = site_of("tower-20-floors/site.toml", &text);
    let ((fs, fs_cpu), (mw, mw_cpu)) = time_both(&site, reps);
    let zero = |_: usize, _: f64| 0.0;
    let mut per_ray = Vec::new();
    let ray_s = best_of(reps.min(2), || {
        let scene = Scene::new(&site, FLOOR_B, DEFAULT_MAX_CROSSING_LOSS_DB);
        per_ray = predict_grid_traced(&site, "multi-wall", &scene, &zero, StoreyTrace::PerRay);
    });
    let ray_cpu = last_cpu();
    let scene = Scene::new(&site, FLOOR_B, DEFAULT_MAX_CROSSING_LOSS_DB);
    let layers = predict_grid(&site, "multi-wall", &scene);
    let (mut max_diff, mut server_diff) = (0.0f64, 0usize);
    for (a, b) in layers.iter().zip(&per_ray) {
        for (x, y) in a.level_dbm.iter().zip(&b.level_dbm) {
            if x.is_finite() || y.is_finite() {
                max_diff = max_diff.max((*x as f64 - *y as f64).abs());
            }
        }
        let servers = a.best_server.iter().zip(&b.best_server);
        server_diff += servers.filter(|(x, y)| x != y).count();
    }
    println!(
        "  20-storey example: free space only {fs:.3} s (cpu {fs_cpu:.2} s), multi-wall {mw:.3} s (cpu {mw_cpu:.2} s) = {:.2}x free space only",
        mw / fs
    );
    println!(
        "  20-storey example, paths between storeys ray by ray: {ray_s:.3} s (cpu {ray_cpu:.2} s) = {:.2}x the storey shadows; max level difference {max_diff:.1e} dB, best server differs at {server_diff} points\n",
        ray_s / mw
    );
}
