//! Multi-wall prediction against hand calculations from the published formulas:
//! COST 231 Final Report (1999) §4.7, L = L_FS + sum L_wi + n^((n+2)/(n+1) - b) L_f, with
//! L_FS from ITU-R P.525-4 eq. (1) — written out here, not taken from rfsite-physics.

use rfsite_model::{load, MaterialLibrary, SourceFile};
use rfsite_plugin_free_space::predict;
use rfsite_plugin_multi_wall::Scene;

fn fspl(freq_mhz: f64, d: f64) -> f64 {
    20.0 * (4.0 * std::f64::consts::PI * d * freq_mhz * 1e6 / 299_792_458.0).log10()
}

const SITE: &str = r#"
[site]
id = "mw"
name = "multi-wall hand check"
units = "metres"
report_date = "2026-01-15"
[prediction]
grid_step = 1.0
receiver_height = 1.5
[[floors]]
id = "L0"
elevation = 0.0
height = 3.0
outline = [[0, 0], [10, 0], [10, 10], [0, 10]]
[[floors]]
id = "L1"
elevation = 3.0
height = 3.0
slab_material = "concrete-floor-slab"
outline = [[0, 0], [10, 0], [10, 10], [0, 10]]
[[walls]]
floor = "L0"
material = "plasterboard-partition"
thickness = 0.1
points = [[5, 0], [5, 10]]
[[walls]]
floor = "L0"
material = "coated-glazing"
thickness = 0.03
points = [[6, 0], [6, 10]]
[[services]]
id = "s"
freq_mhz = 900.0
threshold_dbm = -90.0
[[transmitters]]
id = "T"
service = "s"
floor = "L0"
position = [2.0, 5.0]
height = 1.5
power_dbm = 20.0
antenna_gain_dbi = 0.0
pattern = "isotropic"
"#;

#[test]
fn same_floor_path_adds_each_crossed_wall() {
    let site = load(
        &SourceFile::new("mw.toml", SITE),
        &MaterialLibrary::builtin(),
    )
    .site
    .expect("valid");
    let scene = Scene::new(&site, 0.46, 60.0);
    let layers = predict(&site, "multi-wall", &scene);
    let l0 = layers.iter().find(|l| l.floor == "L0").unwrap();
    // (7.5, 5.5) on L0: path from (2, 5) crosses x = 5 (plasterboard partition, library
    // 4.0 dB at 900 MHz) and x = 6 (coated glazing, library 23.27 dB at 900 MHz); same
    // height, so d = sqrt(5.5² + 0.5²).
    let i = 5 * l0.grid.nx + 7;
    let d = (5.5f64 * 5.5 + 0.5 * 0.5).sqrt();
    let expected = 20.0 - fspl(900.0, d) - 4.0 - 23.27;
    assert!(
        (l0.level_dbm[i] as f64 - expected).abs() < 1e-3,
        "{} vs {expected}",
        l0.level_dbm[i]
    );
    // (3.5, 5.5) is on the transmitter's side of both walls: free space only.
    let j = 5 * l0.grid.nx + 3;
    let d = (1.5f64 * 1.5 + 0.5 * 0.5).sqrt();
    assert!((l0.level_dbm[j] as f64 - (20.0 - fspl(900.0, d))).abs() < 1e-3);
}

#[test]
fn inter_floor_path_adds_the_cost231_floor_term() {
    let site = load(
        &SourceFile::new("mw.toml", SITE),
        &MaterialLibrary::builtin(),
    )
    .site
    .expect("valid");
    let scene = Scene::new(&site, 0.46, 60.0);
    let layers = predict(&site, "multi-wall", &scene);
    let l1 = layers.iter().find(|l| l.floor == "L1").unwrap();
    // (2.5, 5.5) on L1, receiver at 3.0 + 1.5 m, transmitter at 1.5 m: one slab, no wall
    // crossed. Slab: concrete-floor-slab, library 15.0 dB at 700 and 18.3 dB at 1800 MHz,
    // log-frequency interpolation at 900 MHz. n = 1: 1^(...) L_f = L_f.
    let lf = 15.0 + (900f64.ln() - 700f64.ln()) / (1800f64.ln() - 700f64.ln()) * 3.3;
    let i = 5 * l1.grid.nx + 2;
    let d = (0.5f64 * 0.5 + 0.5 * 0.5 + 3.0 * 3.0).sqrt();
    let expected = 20.0 - fspl(900.0, d) - lf;
    assert!(
        (l1.level_dbm[i] as f64 - expected).abs() < 1e-3,
        "{} vs {expected}",
        l1.level_dbm[i]
    );
}

#[test]
fn whole_grid_prediction_equals_per_ray_prediction() {
    // The shadow method (rfsite-geometry::shadow) must give the per-ray result (the
    // reference) at every point, on the hand plan and on the demo clinic.
    let demo = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../examples/kestrel-quay-clinic/site.toml"
    ))
    .unwrap();
    for text in [SITE.to_string(), demo] {
        let site = load(
            &SourceFile::new("x.toml", &text),
            &MaterialLibrary::builtin(),
        )
        .site
        .expect("valid");
        let scene = Scene::new(&site, 0.46, 60.0);
        let a = predict(&site, "multi-wall", &scene);
        let b = rfsite_plugin_multi_wall::predict_grid(&site, "multi-wall", &scene);
        assert_eq!(a.len(), b.len());
        let mut worst = 0.0f64;
        for (x, y) in a.iter().zip(&b) {
            assert_eq!(x.level_dbm.len(), y.level_dbm.len());
            for (p, q) in x.level_dbm.iter().zip(&y.level_dbm) {
                assert_eq!(p.is_nan(), q.is_nan());
                if p.is_finite() {
                    if (p - q).abs() as f64 > 1e-3 && worst <= 1e-3 {
                        eprintln!(
                            "first mismatch: floor {} service {} {} vs {}",
                            x.floor, x.service, p, q
                        );
                    }
                    worst = worst.max((p - q).abs() as f64);
                }
            }
        }
        assert!(worst < 1e-3, "largest difference {worst} dB");
    }
}

#[test]
#[allow(clippy::needless_range_loop)]
fn inter_floor_walls_agree_with_the_shadow_cut_paths() {
    // Per-storey ray tracing against rfsite-geometry's whole-grid shadows of each storey's
    // part of the path (exact against brute force, property-tested there), on the demo clinic,
    // whose 0.25 m lattice puts walls exactly on slab cuts at many points.
    use rfsite_geometry::shadow::{accumulate_path_part, ShadowScratch, WallLosses};
    use rfsite_physics::p2040::Polarization;
    let demo = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../examples/kestrel-quay-clinic/site.toml"
    ))
    .unwrap();
    let site = load(
        &SourceFile::new("x.toml", &demo),
        &MaterialLibrary::builtin(),
    )
    .site
    .expect("valid");
    let scene = Scene::new(&site, 0.46, 60.0);
    let mut scratch = rfsite_plugin_free_space::PathLoss::scratch(&scene);
    let mut sc = ShadowScratch::default();
    let mut compared = 0;
    for (si, svc) in site.services.iter().enumerate() {
        let losses: Vec<Vec<f32>> = site
            .floors
            .iter()
            .map(|f| {
                f.parts
                    .iter()
                    .map(|p| {
                        site.materials
                            .get(&p.material)
                            .unwrap()
                            .crossing_loss(svc.freq_mhz, p.thickness_m, 1.0, Polarization::Te)
                            .loss_db
                            .min(60.0) as f32
                    })
                    .collect()
            })
            .collect();
        for t in site.transmitters.iter().filter(|t| t.service == svc.id) {
            let tfi = site.floor_index(&t.floor).unwrap();
            let tz = site.floors[tfi].elevation_m + t.height_m;
            for fi in 0..site.floors.len() {
                if fi == tfi {
                    continue;
                }
                let grid = rfsite_plugin_free_space::floor_grid(&site, fi);
                let rz = site.floors[fi].elevation_m + site.prediction.receiver_height_m;
                let mut shadow = vec![0f32; grid.len()];
                let (lo, hi) = (tfi.min(fi), tfi.max(fi));
                for k in lo..=hi {
                    let f = &site.floors[k];
                    let top = if k + 1 < site.floors.len() {
                        site.floors[k + 1].elevation_m
                    } else {
                        f.elevation_m + f.height_m
                    };
                    let (a, b) = ((f.elevation_m - tz) / (rz - tz), (top - tz) / (rz - tz));
                    let (t0, t1) = (a.min(b).max(0.0), a.max(b).min(1.0));
                    if t1 <= t0 {
                        continue;
                    }
                    let walls: Vec<_> = f.parts.iter().map(|p| p.segment).collect();
                    let wl = WallLosses {
                        constant_db: &losses[k],
                        by_angle: None,
                    };
                    accumulate_path_part(
                        t.position,
                        &grid,
                        &walls,
                        &wl,
                        (t0, t1),
                        &mut shadow,
                        &mut sc,
                    );
                }
                for (i, s) in shadow.iter().enumerate() {
                    let p = grid.point(i);
                    let tx = rfsite_plugin_free_space::P3 {
                        p: t.position,
                        z: tz,
                    };
                    let rx = rfsite_plugin_free_space::P3 { p, z: rz };
                    let ray = scene.walls_db(&mut scratch, si, tx, tfi, rx, fi);
                    assert!(
                        (ray - *s as f64).abs() < 1e-3,
                        "{} -> {:?} on {}: ray {ray} vs shadow {s}",
                        t.id,
                        p,
                        site.floors[fi].id
                    );
                    compared += 1;
                }
            }
        }
    }
    assert!(compared > 10_000);
}

#[test]
fn a_path_is_charged_at_most_the_excess_loss_cap() {
    // The hand plan with the cap lowered to 25 dB: (7.5, 5.5) crosses 4.0 + 23.27 =
    // 27.27 dB of walls (library values at 900 MHz), so it is charged the cap; (5.5, 5.5)
    // crosses only the 4.0 dB partition and is charged that. Both on the whole-grid and
    // on the per-ray path, which must agree.
    let site = load(
        &SourceFile::new("mw.toml", SITE),
        &MaterialLibrary::builtin(),
    )
    .site
    .expect("valid");
    let scene = Scene::new(&site, 0.46, 60.0).with_max_excess_db(25.0);
    for layers in [
        predict(&site, "multi-wall", &scene),
        rfsite_plugin_multi_wall::predict_grid(&site, "multi-wall", &scene),
    ] {
        let l0 = layers.iter().find(|l| l.floor == "L0").unwrap();
        let i = 5 * l0.grid.nx + 7;
        let d = (5.5f64 * 5.5 + 0.5 * 0.5).sqrt();
        assert!((l0.level_dbm[i] as f64 - (20.0 - fspl(900.0, d) - 25.0)).abs() < 1e-3);
        let j = 5 * l0.grid.nx + 5;
        let d = (3.5f64 * 3.5 + 0.5 * 0.5).sqrt();
        assert!((l0.level_dbm[j] as f64 - (20.0 - fspl(900.0, d) - 4.0)).abs() < 1e-3);
    }
}
