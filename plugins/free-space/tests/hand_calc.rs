//! Free-space prediction against a hand calculation from ITU-R P.525-4 eq. (1),
//! L = 20 log10(4 pi d / lambda), written out here independently of rfsite-physics.

use rfsite_model::{load, MaterialLibrary, SourceFile};
use rfsite_plugin_free_space::{predict, NoExtra};

const SITE: &str = r#"
[site]
id = "fs"
name = "free-space hand check"
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
[[services]]
id = "s"
freq_mhz = 900.0
threshold_dbm = -90.0
[[transmitters]]
id = "T"
service = "s"
floor = "L0"
position = [2.0, 5.0]
height = 2.5
power_dbm = 20.0
cable_loss_db = 2.0
connector_loss_db = 1.0
antenna_gain_dbi = 0.0
pattern = "isotropic"
"#;

#[test]
fn level_at_a_grid_point_is_eirp_minus_p525() {
    let l = load(
        &SourceFile::new("fs.toml", SITE),
        &MaterialLibrary::builtin(),
    );
    let site = l.site.expect("valid");
    let layers = predict(&site, "free-space", &NoExtra);
    let layer = &layers[0];
    // Grid cell centres at 0.5, 1.5, ...; take (7.5, 5.5): index iy = 5, ix = 7.
    let i = 5 * layer.grid.nx + 7;
    let (dx, dy, dz) = (7.5 - 2.0, 5.5 - 5.0, 1.5 - 2.5);
    let d: f64 = dx * dx + dy * dy + dz * dz;
    let d = d.sqrt();
    let lambda = 299_792_458.0 / 900e6;
    let fspl = 20.0 * (4.0 * std::f64::consts::PI * d / lambda).log10();
    let expected = 20.0 - 2.0 - 1.0 - fspl;
    assert!(
        (layer.level_dbm[i] as f64 - expected).abs() < 1e-3,
        "{} vs {expected}",
        layer.level_dbm[i]
    );
}
