//! Paths between storeys: the whole-grid storey shadows (`StoreyTrace::Shadows`) against
//! the per-ray trace through each storey's wall index (`StoreyTrace::PerRay`, the
//! reference, itself checked against rfsite-geometry's brute force), at every grid point of
//! the demo clinic and of the 20-storey tower, for every transmitter on another floor.
//!
//! Both sum the same crossings in double precision and round the level to f32 once; only
//! the order of the additions differs, so the levels may differ by rounding (far below
//! 1e-3 dB) but never by a wall.

use rayon::prelude::*;
use rfsite_model::{load, MaterialLibrary, Site, SourceFile};
use rfsite_plugin_multi_wall::{FloorPredictor, Scene, StoreyTrace};

fn example(name: &str) -> Site {
    let path = format!(
        "{}/../../examples/{name}/site.toml",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(&path).expect("example present");
    load(&SourceFile::new(&path, &text), &MaterialLibrary::builtin())
        .site
        .expect("valid example")
}

/// Largest level difference (dB) between the two traces, the number of finite levels
/// compared, and the first point where the finite/infinite/NaN pattern or a level differs
/// by more than `tol`.
fn compare(a: &[f32], b: &[f32], tol: f64) -> (f64, usize, Option<usize>) {
    let mut worst = 0.0f64;
    let mut n = 0;
    for (i, (x, y)) in a.iter().zip(b).enumerate() {
        let same_kind = x.is_nan() == y.is_nan() && x.is_finite() == y.is_finite();
        if !same_kind || (x.is_infinite() && x != y) {
            return (worst, n, Some(i));
        }
        if x.is_finite() {
            let d = (*x as f64 - *y as f64).abs();
            if d > tol {
                return (d, n, Some(i));
            }
            worst = worst.max(d);
            n += 1;
        }
    }
    (worst, n, None)
}

/// Every (service, receiving floor, transmitter on another floor) of `site` within
/// `max_storeys` storeys, unbounded (every point traced): shadows against per ray.
fn storeys_agree(site: &Site, max_storeys: usize) -> usize {
    let scene = Scene::new(site, 0.46, 60.0);
    let zero = |_: usize, _: f64| 0.0;
    let mut jobs = Vec::new();
    for (si, svc) in site.services.iter().enumerate() {
        for fi in 0..site.floors.len() {
            for t in site.transmitters.iter().filter(|t| t.service == svc.id) {
                let tf = site.floor_index(&t.floor).expect("known floor");
                if tf != fi && tf.abs_diff(fi) <= max_storeys {
                    jobs.push((si, fi, t));
                }
            }
        }
    }
    jobs.par_iter()
        .map(|&(si, fi, t)| {
            let fp = FloorPredictor::new(site, &scene, si, fi, &zero);
            let ray = fp.levels_traced(t, None, StoreyTrace::PerRay);
            let shadow = fp.levels_traced(t, None, StoreyTrace::Shadows);
            let (worst, n, bad) = compare(&shadow, &ray, 1e-3);
            if let Some(i) = bad {
                panic!(
                    "{} -> floor {} point {:?}: shadows {} vs per ray {} ({worst} dB)",
                    t.id,
                    site.floors[fi].id,
                    fp.grid().point(i),
                    shadow[i],
                    ray[i]
                );
            }
            assert!(worst < 1e-3);
            n
        })
        .sum()
}

#[test]
fn storey_shadows_equal_the_per_ray_trace_on_the_demo() {
    let site = example("kestrel-quay-clinic");
    assert!(site.floors.len() >= 2);
    let n = storeys_agree(&site, usize::MAX);
    assert!(n > 10_000, "{n} levels compared");
}

#[test]
fn storey_shadows_equal_the_per_ray_trace_on_the_tower() {
    // Every transmitter up to three storeys away at every point; beyond that the floor
    // term alone (about 20 dB a slab) leaves the same-floor servers stronger everywhere,
    // and the prediction bounds those paths (the next test).
    let site = example("tower-20-floors");
    assert_eq!(site.floors.len(), 20);
    let n = storeys_agree(&site, 3);
    assert!(n > 1_000_000, "{n} levels compared");
}

#[test]
fn storey_shadows_equal_the_per_ray_trace_under_the_prediction_bound() {
    // As the prediction runs them: every transmitter on every other floor of the tower,
    // bounded by the best same-floor level (points that cannot win are -inf on both).
    let site = example("tower-20-floors");
    let scene = Scene::new(&site, 0.46, 60.0);
    let zero = |_: usize, _: f64| 0.0;
    let mut compared = 0;
    for (si, svc) in site.services.iter().enumerate() {
        let txs: Vec<_> = site
            .transmitters
            .iter()
            .filter(|t| t.service == svc.id)
            .collect();
        compared += (0..site.floors.len())
            .into_par_iter()
            .map(|fi| {
                let fp = FloorPredictor::new(&site, &scene, si, fi, &zero);
                let on = |t: &&&rfsite_model::Transmitter| site.floor_index(&t.floor) == Some(fi);
                let mut best = vec![f32::NEG_INFINITY; fp.grid().len()];
                for t in txs.iter().filter(on) {
                    for (b, l) in best.iter_mut().zip(fp.levels(t, None)) {
                        *b = b.max(l);
                    }
                }
                let mut n = 0;
                for t in txs.iter().filter(|t| !on(t)) {
                    let ray = fp.levels_traced(t, Some(&best), StoreyTrace::PerRay);
                    let shadow = fp.levels_traced(t, Some(&best), StoreyTrace::Shadows);
                    let auto = fp.levels(t, Some(&best));
                    let (worst, k, bad) = compare(&shadow, &ray, 1e-3);
                    assert!(
                        bad.is_none(),
                        "{} -> {}: {worst} dB",
                        t.id,
                        site.floors[fi].id
                    );
                    assert!(compare(&auto, &ray, 1e-3).2.is_none());
                    n += k;
                }
                n
            })
            .sum::<usize>();
    }
    assert!(compared > 0);
}
