//! `FloorPredictor`, the level of one transmitter over one floor, against the layers of
//! `predict_grid_adjusted`: combining the per-transmitter levels by the definitions of the
//! strongest-server rule (the maximum of the levels) and of the non-coherent power sum
//! (10 log10 of the sum of the levels in mW) must give the layers.

use rfsite_model::{load, Combine, MaterialLibrary, Site, SourceFile, Transmitter};
use rfsite_plugin_multi_wall::{predict_grid_adjusted, FloorPredictor, Scene};

/// Two storeys, L1 L-shaped (so some grid points lie outside it), brick walls (charged at
/// each crossing's angle) and plasterboard partitions, three transmitters of one service:
/// two on L0, one on L1.
const SITE: &str = r#"
[site]
id = "fp"
name = "floor predictor check"
units = "metres"
report_date = "2026-01-15"
[prediction]
grid_step = 1.0
receiver_height = 1.5
combine = "strongest"
[[floors]]
id = "L0"
elevation = 0.0
height = 3.0
outline = [[0, 0], [16, 0], [16, 12], [0, 12]]
[[floors]]
id = "L1"
elevation = 3.0
height = 3.0
slab_material = "concrete-floor-slab"
outline = [[0, 0], [16, 0], [16, 6], [8, 6], [8, 12], [0, 12]]
[[walls]]
floor = "L0"
material = "brick"
thickness = 0.12
points = [[5, 0], [5, 12]]
[[walls]]
floor = "L0"
material = "plasterboard-partition"
thickness = 0.1
points = [[10, 0], [10, 8]]
[[walls]]
floor = "L1"
material = "brick"
thickness = 0.12
points = [[0, 4], [12, 4]]
[[walls]]
floor = "L1"
material = "plasterboard-partition"
thickness = 0.1
points = [[4, 4], [4, 12]]
[[services]]
id = "s"
freq_mhz = 2400.0
threshold_dbm = -90.0
[[transmitters]]
id = "A"
service = "s"
floor = "L0"
position = [2.0, 3.0]
height = 2.5
power_dbm = 18.0
antenna_gain_dbi = 2.0
pattern = "omni-ceiling"
[[transmitters]]
id = "B"
service = "s"
floor = "L0"
position = [13.0, 9.0]
height = 1.5
power_dbm = 15.0
pattern = "isotropic"
[[transmitters]]
id = "C"
service = "s"
floor = "L1"
position = [3.0, 9.0]
height = 2.5
power_dbm = 20.0
antenna_gain_dbi = 5.0
pattern = "sector"
azimuth_deg = 30.0
downtilt_deg = 10.0
"#;

fn site() -> Site {
    load(
        &SourceFile::new("fp.toml", SITE),
        &MaterialLibrary::builtin(),
    )
    .site
    .expect("valid")
}

/// An arbitrary calibration-like extra loss, dB (its value does not matter: both sides
/// must charge the same).
fn adjust(service: usize, d: f64) -> f64 {
    1.0 + service as f64 + 3.0 * d.log10()
}

/// The strongest-server or power-sum combination of the levels (dBm) at one point, by
/// their definitions; NaN (no prediction) if a level is NaN.
fn combine(rule: Combine, levels: &[f32]) -> f64 {
    if levels.iter().any(|l| l.is_nan()) {
        return f64::NAN;
    }
    match rule {
        Combine::Strongest => levels
            .iter()
            .map(|&l| l as f64)
            .fold(f64::NEG_INFINITY, f64::max),
        Combine::PowerSum => {
            let mw: f64 = levels.iter().map(|&l| 10f64.powf(l as f64 / 10.0)).sum();
            10.0 * mw.log10()
        }
    }
}

#[test]
fn combined_per_transmitter_levels_are_the_layers() {
    let mut site = site();
    assert_eq!((site.floors.len(), site.transmitters.len()), (2, 3));
    let scene = Scene::new(&site, 0.46, 60.0);
    let mut gain_of_sum = 0.0f64;
    for rule in [Combine::Strongest, Combine::PowerSum] {
        site.prediction.combine = rule;
        let layers = predict_grid_adjusted(&site, "m", &scene, &adjust);
        let mut compared = 0;
        for (fi, layer) in layers.iter().enumerate() {
            let fp = FloorPredictor::new(&site, &scene, 0, fi, &adjust);
            assert_eq!((fp.grid().nx, fp.grid().ny), (layer.grid.nx, layer.grid.ny));
            let per_tx: Vec<Vec<f32>> = site
                .transmitters
                .iter()
                .map(|t| fp.levels(t, None))
                .collect();
            for (i, &got) in layer.level_dbm.iter().enumerate() {
                let here: Vec<f32> = per_tx.iter().map(|lv| lv[i]).collect();
                let want = combine(rule, &here);
                assert_eq!(got.is_nan(), want.is_nan(), "point {i} of {}", layer.floor);
                assert_eq!(fp.inside()[i], !got.is_nan());
                if got.is_finite() {
                    assert!((got as f64 - want).abs() < 1e-4, "{got} vs {want}");
                    compared += 1;
                    let strongest = combine(Combine::Strongest, &here);
                    gain_of_sum = gain_of_sum.max(combine(Combine::PowerSum, &here) - strongest);
                }
            }
        }
        // 16 x 12 points on L0, 16 x 12 less the 8 x 6 cut away on L1 (up to edge points).
        assert!(compared > 250, "{compared} points compared");
    }
    // Two equal servers sum to 3 dB more than one: somewhere the sum must differ clearly.
    assert!(gain_of_sum > 1.0, "{gain_of_sum}");
}

/// A transmitter that is not one of the site's: on L1 at another place and height.
fn candidate(site: &Site) -> Transmitter {
    let mut t = site.transmitters[0].clone();
    t.id = "candidate".into();
    t.floor = "L1".into();
    t.position = rfsite_geometry::Point2::new(11.0, 2.5);
    t.height_m = 2.0;
    t
}

#[test]
fn a_transmitter_outside_the_site_is_predicted_as_in_a_site_of_its_own() {
    let site = site();
    let scene = Scene::new(&site, 0.46, 60.0);
    let t = candidate(&site);
    assert!(site.transmitters.iter().all(|s| s.id != t.id));
    let mut alone = site.clone();
    alone.transmitters = vec![t.clone()];
    let scene_alone = Scene::new(&alone, 0.46, 60.0);
    let layers = predict_grid_adjusted(&alone, "m", &scene_alone, &adjust);
    assert_eq!(layers.len(), 2);
    for (fi, layer) in layers.iter().enumerate() {
        let fp = FloorPredictor::new(&site, &scene, 0, fi, &adjust);
        let lv = fp.levels(&t, None);
        assert_eq!(lv.len(), layer.level_dbm.len());
        for (a, b) in lv.iter().zip(&layer.level_dbm) {
            assert_eq!(a.to_bits(), b.to_bits(), "{a} vs {b} on {}", layer.floor);
        }
        assert!(lv.iter().any(|v| v.is_finite()));
    }
}

#[test]
fn a_transmitter_on_an_unknown_floor_gives_no_signal() {
    let site = site();
    let scene = Scene::new(&site, 0.46, 60.0);
    let mut t = candidate(&site);
    t.floor = "nowhere".into();
    let fp = FloorPredictor::new(&site, &scene, 0, 1, &adjust);
    let lv = fp.levels(&t, None);
    assert_eq!(lv.len(), fp.grid().len());
    assert!(fp.inside().iter().any(|m| !m), "L1 is L-shaped");
    for (v, &inside) in lv.iter().zip(fp.inside()) {
        assert!(if inside {
            *v == f32::NEG_INFINITY
        } else {
            v.is_nan()
        });
    }
}
