//! Prediction-at-scale benchmark (issue 6).
//!
//! ```text
//! cargo run --release -p rfsite-bench            # full run, about a minute on 2 cores
//! cargo run --release -p rfsite-bench -- --quick # one repetition, smaller samples
//! cargo run --release -p rfsite-bench -- --tower # only the 20-storey estimate
//! cargo run --release -p rfsite-bench -- --profile-shadow # per-call shadow cost and counters
//! cargo run --release -p rfsite-bench -- --slabs   # only the P.2040 slab-loss timings
//! cargo run --release -p rfsite-bench -- --plugins # only the plugin-level prediction
//! cargo run --release -p rfsite-bench -- --plugins-floor # only its 4 000-wall floor timings
//! ```
//!
//! A synthetic office floor (`synth::office_floor`, fixed seeds) with one
//! strongest-server prediction per grid point: level = EIRP − free-space
//! loss over the 3D distance − the summed loss of the walls the direct path
//! crosses. Three ways of finding the walls are timed on the same input:
//!
//! * brute force (`crossings_brute_force`, every wall per path), on a sample
//!   of point–transmitter pairs and extrapolated to the full case;
//! * the DDA wall index (`WallIndex::crossings_with`), every pair, rayon
//!   over grid rows;
//! * the whole-grid shadows (`shadow::accumulate_wall_loss`), rayon over
//!   transmitters, one level/loss buffer per thread, merged at the end.
//!
//! Nothing holds a point × transmitter × wall array; the peak resident set
//! (VmHWM) is printed at the end.

use rayon::prelude::*;
use rfsite_geometry::shadow::{
    accumulate_path_part, accumulate_wall_loss, ShadowScratch, ShadowStats, WallLosses,
};
use rfsite_geometry::synth::{office_floor, SplitMix64};
use rfsite_geometry::{crossings_brute_force, Grid, Point2, Scratch, Segment, WallIndex};
use std::ops::AddAssign;
use std::time::Instant;

mod plugins;
mod slabs;

const WIDTH_M: f64 = 120.0;
const DEPTH_M: f64 = 80.0;
const PLAN_SEED: u64 = 6;
const TX_SEED: u64 = 66;
const FREQ_MHZ: f64 = 2442.0;
const EIRP_DBM: f64 = 20.0;
const TX_HEIGHT_M: f64 = 2.8;
const RX_HEIGHT_M: f64 = 1.5;

/// Wall losses of the target case, dB: partition, glazing, door, block, concrete.
const PALETTE: [f32; 5] = [3.0, 4.5, 2.5, 8.0, 12.0];

/// Position of a wall loss in [`PALETTE`].
fn palette_index(loss_db: f32) -> usize {
    PALETTE.iter().position(|p| *p == loss_db).unwrap_or(0)
}

struct Case {
    walls: Vec<Segment>,
    loss_db: Vec<f32>,
    grid: Grid,
    txs: Vec<Point2>,
}

impl Case {
    fn new(n_walls: usize, step_m: f64, n_tx: usize) -> Case {
        let mut walls = office_floor(PLAN_SEED, WIDTH_M, DEPTH_M, n_walls);
        if walls.len() > n_walls {
            // The floor's structure alone has more walls than asked for (about
            // 1 000 on 120 m x 80 m): keep a deterministic random subset.
            let mut rng = SplitMix64::new(PLAN_SEED ^ 0x5A);
            for i in (1..walls.len()).rev() {
                walls.swap(i, rng.below(i + 1));
            }
            walls.truncate(n_walls);
        }
        // Materials: a deterministic mix of partition, glazing, door, block
        // and concrete losses.
        let mut rng = SplitMix64::new(PLAN_SEED ^ 0xA5);
        let loss_db = walls
            .iter()
            .map(|_| PALETTE[rng.below(PALETTE.len())])
            .collect();
        let grid = Grid::covering(Point2::new(0.0, 0.0), Point2::new(WIDTH_M, DEPTH_M), step_m);
        let mut rng = SplitMix64::new(TX_SEED);
        let txs = (0..n_tx)
            .map(|_| Point2::new(rng.range(2.0, WIDTH_M - 2.0), rng.range(2.0, DEPTH_M - 2.0)))
            .collect();
        Case {
            walls,
            loss_db,
            grid,
            txs,
        }
    }

    fn pairs(&self) -> usize {
        self.grid.len() * self.txs.len()
    }
}

/// ITU-R P.525 free-space loss from the squared plan distance (3D, at least
/// 1 m).
fn fspl_db(d2_m: f64) -> f64 {
    let d2 = (d2_m + (TX_HEIGHT_M - RX_HEIGHT_M).powi(2)).max(1.0);
    10.0 * d2.log10() + 20.0 * FREQ_MHZ.log10() - 27.55
}

/// Strongest-server level and server per grid point.
struct Prediction {
    level: Vec<f32>,
    server: Vec<u16>,
}

/// Brute force on `sample` random pairs; returns seconds per pair and the
/// mean number of crossings per pair.
fn brute_per_pair(case: &Case, sample: usize) -> (f64, f64) {
    let mut rng = SplitMix64::new(99);
    let pairs: Vec<(usize, usize)> = (0..sample)
        .map(|_| (rng.below(case.grid.len()), rng.below(case.txs.len())))
        .collect();
    let t = Instant::now();
    let (crossings, _sum) = pairs
        .par_iter()
        .map_init(Vec::new, |out, &(i, k)| {
            crossings_brute_force(&case.walls, case.txs[k], case.grid.point(i), out);
            let l: f64 = out.iter().map(|c| case.loss_db[c.wall] as f64).sum();
            (out.len(), l)
        })
        .reduce(|| (0, 0.0), |a, b| (a.0 + b.0, a.1 + b.1));
    (
        t.elapsed().as_secs_f64() / sample as f64,
        crossings as f64 / sample as f64,
    )
}

/// Every pair through the DDA index, rayon over rows. Returns the prediction
/// and the total number of wall crossings.
fn predict_index(case: &Case) -> (Prediction, u64) {
    let index = WallIndex::new(&case.walls);
    let g = &case.grid;
    let rows: Vec<(Vec<f32>, Vec<u16>, u64)> = (0..g.ny)
        .into_par_iter()
        .map_init(
            || (Scratch::new(), Vec::new()),
            |(scratch, out), iy| {
                let mut lv = vec![f32::NEG_INFINITY; g.nx];
                let mut sv = vec![u16::MAX; g.nx];
                let mut n = 0u64;
                for ix in 0..g.nx {
                    let p = g.point(iy * g.nx + ix);
                    for (k, &tx) in case.txs.iter().enumerate() {
                        index.crossings_with(scratch, tx, p, out);
                        n += out.len() as u64;
                        let walls: f64 = out.iter().map(|c| case.loss_db[c.wall] as f64).sum();
                        let l = (EIRP_DBM - fspl_db((p - tx).dot(p - tx)) - walls) as f32;
                        if l > lv[ix] {
                            lv[ix] = l;
                            sv[ix] = k as u16;
                        }
                    }
                }
                (lv, sv, n)
            },
        )
        .collect();
    let mut pred = Prediction {
        level: Vec::with_capacity(g.len()),
        server: Vec::with_capacity(g.len()),
    };
    let mut n = 0;
    for (l, s, c) in rows {
        pred.level.extend(l);
        pred.server.extend(s);
        n += c;
    }
    (pred, n)
}

/// Whole-grid shadows, rayon over transmitters, one buffer set per thread.
fn predict_shadow(case: &Case) -> Prediction {
    predict_shadow_with(case, &|tx, loss, scratch| {
        accumulate_wall_loss(tx, &case.grid, &case.walls, &case.loss_db, loss, scratch)
    })
}

type WallPass<'a> = dyn Fn(Point2, &mut [f32], &mut ShadowScratch) + Sync + 'a;

fn predict_shadow_with(case: &Case, pass: &WallPass<'_>) -> Prediction {
    let g = &case.grid;
    let n = g.len();
    // Point positions relative to nothing: precompute the x and y of columns
    // and rows once.
    let xs: Vec<f64> = (0..g.nx).map(|ix| g.point(ix).x).collect();
    let ys: Vec<f64> = (0..g.ny).map(|iy| g.point(iy * g.nx).y).collect();
    let empty = || Prediction {
        level: vec![f32::NEG_INFINITY; n],
        server: vec![u16::MAX; n],
    };
    case.txs
        .par_iter()
        .enumerate()
        .fold(
            || (empty(), vec![0f32; n], ShadowScratch::new()),
            |(mut best, mut loss, mut scratch), (k, &tx)| {
                loss.iter_mut().for_each(|v| *v = 0.0);
                pass(tx, &mut loss, &mut scratch);
                for (iy, &y) in ys.iter().enumerate() {
                    let dy2 = (y - tx.y) * (y - tx.y);
                    let row = iy * g.nx;
                    for (ix, &x) in xs.iter().enumerate() {
                        let i = row + ix;
                        let d2 = (x - tx.x) * (x - tx.x) + dy2;
                        let l = (EIRP_DBM - fspl_db(d2) - loss[i] as f64) as f32;
                        if l > best.level[i] {
                            best.level[i] = l;
                            best.server[i] = k as u16;
                        }
                    }
                }
                (best, loss, scratch)
            },
        )
        .map(|(best, _, _)| best)
        .reduce(empty, |mut a, b| {
            for i in 0..n {
                // Ties go to the lower transmitter index, as in the index run.
                if b.level[i] > a.level[i]
                    || (b.level[i] == a.level[i] && b.server[i] < a.server[i])
                {
                    a.level[i] = b.level[i];
                    a.server[i] = b.server[i];
                }
            }
            a
        })
}

/// The wall part of a 20-storey prediction with the shadows, inter-floor
/// paths included: every floor's grid against every transmitter of a
/// service, each path cut into its storeys (t-range per storey, constant over
/// the receiving floor), one `accumulate_path_part` per storey.
fn tower_estimate(reps: usize) {
    const FLOORS: usize = 20;
    const STOREY: f64 = 3.6;
    let walls = office_floor(PLAN_SEED, 60.0, 40.0, 300);
    let loss_db: Vec<f32> = (0..walls.len()).map(|i| [3.0, 5.0, 12.0][i % 3]).collect();
    let grid = Grid::covering(Point2::new(0.0, 0.0), Point2::new(60.0, 40.0), 0.5);
    let mut rng = SplitMix64::new(TX_SEED);
    // Two services: 2 and 1.5 transmitters per floor on average.
    let services: Vec<Vec<(usize, Point2)>> = [2.0f64, 1.5]
        .iter()
        .map(|per_floor| {
            (0..(per_floor * FLOORS as f64) as usize)
                .map(|k| {
                    (
                        (k as f64 / per_floor) as usize,
                        Point2::new(rng.range(2.0, 58.0), rng.range(2.0, 38.0)),
                    )
                })
                .collect()
        })
        .collect();
    let mut passes = 0usize;
    let stats = std::sync::Mutex::new(ShadowStats::default());
    let t = best_of(reps, || {
        *stats.lock().unwrap() = ShadowStats::default();
        passes = services
            .iter()
            .map(|txs| {
                (0..FLOORS)
                    .into_par_iter()
                    .map_init(
                        || (vec![0f32; grid.len()], ShadowScratch::new()),
                        |(loss, scratch), rf| {
                            let mut n = 0;
                            let rz = rf as f64 * STOREY + RX_HEIGHT_M;
                            for &(tf, tp) in txs {
                                loss.iter_mut().for_each(|v| *v = 0.0);
                                let tz = tf as f64 * STOREY + TX_HEIGHT_M;
                                let (lo, hi) = (tf.min(rf), tf.max(rf));
                                for k in lo..=hi {
                                    let range = if lo == hi {
                                        (0.0, 1.0)
                                    } else {
                                        let dz = rz - tz;
                                        let (a, b) = (
                                            (k as f64 * STOREY - tz) / dz,
                                            ((k + 1) as f64 * STOREY - tz) / dz,
                                        );
                                        (a.min(b).max(0.0), a.max(b).min(1.0))
                                    };
                                    if range.1 <= range.0 {
                                        continue;
                                    }
                                    let l = WallLosses {
                                        constant_db: &loss_db,
                                        by_angle: None,
                                    };
                                    accumulate_path_part(
                                        tp, &grid, &walls, &l, range, loss, scratch,
                                    );
                                    n += 1;
                                    stats.lock().unwrap().add_assign(scratch.stats());
                                }
                            }
                            n
                        },
                    )
                    .sum::<usize>()
            })
            .sum();
    });
    let n_tx: usize = services.iter().map(|s| s.len()).sum();
    println!(
        "20-storey estimate ({} walls per floor, 60 x 40 m at 0.5 m = {} points per floor, {} transmitters in 2 services):",
        walls.len(),
        grid.len(),
        n_tx
    );
    println!(
        "  wall losses of all {} floor-transmitter pairs, inter-floor paths cut per storey: {:.3} s, cpu {:.2} s ({} storey parts, {:.1} us each)\n",
        FLOORS * n_tx,
        t,
        last_cpu(),
        passes,
        last_cpu() * 1e6 / passes as f64
    );
    println!(
        "  shadow counters over the run: {:?}",
        stats.lock().unwrap()
    );
}

/// Process CPU time (user + system), seconds, from /proc/self/stat.
fn cpu_s() -> f64 {
    let Ok(stat) = std::fs::read_to_string("/proc/self/stat") else {
        return f64::NAN;
    };
    // Fields after the parenthesised command name; utime and stime are the
    // 14th and 15th fields overall, in clock ticks (100 per second on Linux).
    let rest = stat.rsplit_once(')').map(|(_, r)| r).unwrap_or("");
    let f: Vec<f64> = rest
        .split_whitespace()
        .skip(11)
        .take(2)
        .filter_map(|v| v.parse().ok())
        .collect();
    if f.len() == 2 {
        (f[0] + f[1]) / 100.0
    } else {
        f64::NAN
    }
}

static LAST_CPU: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);

/// CPU seconds of the fastest run of the last [`best_of`].
fn last_cpu() -> f64 {
    f64::from_bits(LAST_CPU.load(std::sync::atomic::Ordering::Relaxed))
}

/// Wall-clock seconds of the fastest of `reps` runs (its CPU time is kept
/// for [`last_cpu`]).
fn best_of(reps: usize, mut f: impl FnMut()) -> f64 {
    let mut best = (f64::INFINITY, f64::NAN);
    for _ in 0..reps {
        let (c, t) = (cpu_s(), Instant::now());
        f();
        let wall = t.elapsed().as_secs_f64();
        if wall < best.0 {
            best = (wall, cpu_s() - c);
        }
    }
    LAST_CPU.store(best.1.to_bits(), std::sync::atomic::Ordering::Relaxed);
    best.0
}

/// Least-squares slope of ln(y) against ln(x).
fn loglog_slope(pts: &[(f64, f64)]) -> f64 {
    let n = pts.len() as f64;
    let (lx, ly): (Vec<f64>, Vec<f64>) = pts.iter().map(|&(x, y)| (x.ln(), y.ln())).unzip();
    let mx = lx.iter().sum::<f64>() / n;
    let my = ly.iter().sum::<f64>() / n;
    let sxy: f64 = lx.iter().zip(&ly).map(|(x, y)| (x - mx) * (y - my)).sum();
    let sxx: f64 = lx.iter().map(|x| (x - mx) * (x - mx)).sum();
    sxy / sxx
}

fn vm_hwm_mb() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = s.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

fn load_avg() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .map(|s| s.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
        .unwrap_or_else(|_| "n/a".into())
}

fn cpu_model() -> String {
    std::fs::read_to_string("/proc/cpuinfo")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("model name"))
                .and_then(|l| l.split(':').nth(1))
                .map(|m| m.trim().to_string())
        })
        .unwrap_or_else(|| "unknown CPU".into())
}

fn main() {
    let quick = std::env::args().any(|a| a == "--quick");
    if std::env::args().any(|a| a == "--tower") {
        tower_estimate(if quick { 1 } else { 3 });
        return;
    }
    if std::env::args().any(|a| a == "--plugins-floor") {
        plugins::floor_only(&Case::new(4000, 0.25, 30), if quick { 1 } else { 3 });
        return;
    }
    if std::env::args().any(|a| a == "--plugins") {
        plugins::report(&Case::new(4000, 0.25, 30), if quick { 1 } else { 3 }, 3_000);
        return;
    }
    if std::env::args().any(|a| a == "--slabs") {
        slabs::report(&Case::new(4000, 0.25, 30), if quick { 1 } else { 3 });
        return;
    }
    if std::env::args().any(|a| a == "--profile-shadow") {
        let case = Case::new(4000, 0.25, 30);
        let mut scratch = ShadowScratch::new();
        let mut loss = vec![0f32; case.grid.len()];
        for (k, &tx) in case.txs.iter().enumerate().take(5) {
            let t = best_of(20, || {
                accumulate_wall_loss(
                    tx,
                    &case.grid,
                    &case.walls,
                    &case.loss_db,
                    &mut loss,
                    &mut scratch,
                )
            });
            println!("tx {k}: {:.2} ms/call, {:?}", t * 1e3, scratch.stats());
        }
        return;
    }
    let reps = if quick { 1 } else { 3 };
    let brute_sample = if quick { 5_000 } else { 30_000 };
    println!("rfsite-bench{}", if quick { " --quick" } else { "" });
    println!(
        "machine: {}, rayon threads {}, load average at start {}",
        cpu_model(),
        rayon::current_num_threads(),
        load_avg()
    );
    println!(
        "plan: synth::office_floor(seed {PLAN_SEED}, {WIDTH_M} x {DEPTH_M} m); transmitters seed {TX_SEED}; \
         timings are the best of {reps} run(s), release build\n"
    );

    // Target case.
    let case = Case::new(4000, 0.25, 30);
    println!(
        "target case: {} walls, {} transmitters, {} x {} grid at 0.25 m = {} points, {} point-transmitter pairs",
        case.walls.len(),
        case.txs.len(),
        case.grid.nx,
        case.grid.ny,
        case.grid.len(),
        case.pairs()
    );
    let (brute_pair_s, brute_mean) = brute_per_pair(&case, brute_sample);
    let brute_s = brute_pair_s * case.pairs() as f64;
    let mut index_pred = None;
    let index_s = best_of(reps.min(2), || index_pred = Some(predict_index(&case)));
    let index_cpu = last_cpu();
    let (index_pred, crossings) = index_pred.expect("ran");
    let mut shadow_pred = None;
    let shadow_s = best_of(reps, || shadow_pred = Some(predict_shadow(&case)));
    let shadow_cpu = last_cpu();
    let shadow_pred = shadow_pred.expect("ran");

    // Same answer?
    let mut max_diff = 0f64;
    let mut server_diff = 0usize;
    for i in 0..case.grid.len() {
        max_diff = max_diff.max((index_pred.level[i] as f64 - shadow_pred.level[i] as f64).abs());
        if index_pred.server[i] != shadow_pred.server[i] {
            server_diff += 1;
        }
    }
    let pairs = case.pairs() as f64;
    println!(
        "  brute force : {brute_s:8.3} s  (extrapolated from {brute_sample} random pairs at {:.2} us/pair, {:.1} crossings/pair)",
        brute_pair_s * 1e6,
        brute_mean
    );
    println!(
        "  DDA index   : {index_s:8.3} s  (cpu {index_cpu:.2} s; {:.2e} pairs/s, {:.2e} wall crossings/s; {} crossings, {:.1}/pair)",
        pairs / index_s,
        crossings as f64 / index_s,
        crossings,
        crossings as f64 / pairs
    );
    println!(
        "  shadows     : {shadow_s:8.3} s  (cpu {shadow_cpu:.2} s; {:.2e} pairs/s, {:.2e} wall crossings/s)",
        pairs / shadow_s,
        crossings as f64 / shadow_s
    );
    println!(
        "  speed-up of shadows: {:.0}x vs brute force, {:.1}x vs DDA index",
        brute_s / shadow_s,
        index_s / shadow_s
    );
    println!(
        "  shadows vs index: max level difference {max_diff:.2e} dB, best server differs at {server_diff} points (ties)"
    );
    // Angle-dependent losses on every fifth wall (glazing, concrete):
    // evaluated at each crossed point of their runs.
    let mask: Vec<bool> = (0..case.walls.len()).map(|i| i % 5 == 0).collect();
    let by_angle = |w: usize, cos: f64| case.loss_db[w] * (1.0 + 0.5 * (1.0 - cos as f32));
    let angle_s = best_of(reps, || {
        predict_shadow_with(&case, &|tx, loss, scratch| {
            let l = WallLosses {
                constant_db: &case.loss_db,
                by_angle: Some((&mask, &by_angle)),
            };
            accumulate_path_part(tx, &case.grid, &case.walls, &l, (0.0, 1.0), loss, scratch)
        });
    });
    println!(
        "  shadows, 1 wall in 5 angle-dependent: {angle_s:.3} s; one storey's part of each path (0.3 < t < 0.8, two passes): {:.3} s",
        best_of(reps, || {
            predict_shadow_with(&case, &|tx, loss, scratch| {
                let l = WallLosses {
                    constant_db: &case.loss_db,
                    by_angle: None,
                };
                accumulate_path_part(tx, &case.grid, &case.walls, &l, (0.3, 0.8), loss, scratch)
            });
        })
    );
    slabs::report(&case, reps);
    plugins::report(&case, reps, brute_sample / 10);
    // Boundary statistics for one transmitter.
    let mut scratch = ShadowScratch::new();
    let mut loss = vec![0f32; case.grid.len()];
    accumulate_wall_loss(
        case.txs[0],
        &case.grid,
        &case.walls,
        &case.loss_db,
        &mut loss,
        &mut scratch,
    );
    let s = scratch.stats();
    println!(
        "  shadow work for transmitter 0: {} row runs, {} points resolved exactly ({} boundary pairs), {} in-line walls\n",
        s.runs, s.resolved_points, s.boundary_pairs, s.inline_walls
    );

    // Scaling.
    let wall_counts: &[usize] = &[100, 300, 1000, 3000, 10_000, 20_000];
    println!("scaling with walls (0.25 m grid, 30 transmitters; brute force sampled):");
    println!(
        "  {:>7} {:>12} {:>12} {:>12}",
        "walls", "brute s", "index s", "shadow s"
    );
    let (mut wb, mut wi, mut ws) = (Vec::new(), Vec::new(), Vec::new());
    for &n in wall_counts {
        let c = Case::new(n, 0.25, 30);
        let nw = c.walls.len() as f64;
        let b = brute_per_pair(&c, brute_sample / 5).0 * c.pairs() as f64;
        // The index run is long; three transmitters, scaled to 30.
        let c3 = Case {
            txs: c.txs[..3].to_vec(),
            ..Case::new(n, 0.25, 0)
        };
        let i = best_of(1, || {
            predict_index(&c3);
        }) * 10.0;
        let s = best_of(reps, || {
            predict_shadow(&c);
        });
        println!("  {:>7} {b:>12.3} {i:>12.3} {s:>12.3}", c.walls.len());
        wb.push((nw, b));
        wi.push((nw, i));
        ws.push((nw, s));
    }
    println!(
        "  fitted exponent (time ~ walls^k): brute {:.2}, index {:.2}, shadows {:.2}",
        loglog_slope(&wb),
        loglog_slope(&wi),
        loglog_slope(&ws)
    );
    println!("  (index: 3 transmitters timed, x10)\n");

    println!("scaling with points (4000 walls, 30 transmitters):");
    println!(
        "  {:>7} {:>8} {:>12} {:>12}",
        "step m", "points", "index s", "shadow s"
    );
    let (mut pi, mut ps) = (Vec::new(), Vec::new());
    for step in [1.0, 0.5, 0.25] {
        let c = Case::new(4000, step, 30);
        let c3 = Case {
            txs: c.txs[..3].to_vec(),
            ..Case::new(4000, step, 0)
        };
        let i = best_of(1, || {
            predict_index(&c3);
        }) * 10.0;
        let s = best_of(reps, || {
            predict_shadow(&c);
        });
        println!("  {step:>7} {:>8} {i:>12.3} {s:>12.3}", c.grid.len());
        pi.push((c.grid.len() as f64, i));
        ps.push((c.grid.len() as f64, s));
    }
    println!(
        "  fitted exponent (time ~ points^k): index {:.2}, shadows {:.2}\n",
        loglog_slope(&pi),
        loglog_slope(&ps)
    );

    println!("scaling with transmitters (4000 walls, 0.25 m grid):");
    println!("  {:>7} {:>12}", "tx", "shadow s");
    let mut pt = Vec::new();
    for n_tx in [1, 3, 10, 30] {
        let c = Case::new(4000, 0.25, n_tx);
        let s = best_of(reps, || {
            predict_shadow(&c);
        });
        println!("  {n_tx:>7} {s:>12.3}");
        pt.push((n_tx as f64, s));
    }
    println!(
        "  fitted exponent (time ~ transmitters^k): shadows {:.2} (1 transmitter keeps one of the 2 cores idle)\n",
        loglog_slope(&pt)
    );

    tower_estimate(reps);

    println!(
        "load average at end: {} (other work on the machine inflates the times)",
        load_avg()
    );
    match vm_hwm_mb() {
        Some(mb) => {
            println!("peak memory (VmHWM): {mb:.1} MB for the whole run, 20 000-wall case included")
        }
        None => println!("peak memory: /proc/self/status not available"),
    }
}
