//! Prints every level of a site's multi-wall prediction, one line per grid point:
//! `floor service index level_dbm` (NaN outside the outline). For comparing the
//! prediction of two versions point by point:
//!
//! ```text
//! cargo run -p rfsite-plugin-multi-wall --example levels -- examples/tower-20-floors/site.toml
//! ```
//!
//! Built-in material library, default options (`floor_b` 0.46, crossing cap 60 dB).

use rfsite_model::{load, MaterialLibrary, SourceFile};
use rfsite_plugin_multi_wall::{predict_grid, Scene, DEFAULT_MAX_CROSSING_LOSS_DB};
use std::io::Write;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let path = std::env::args().nth(1).ok_or("usage: levels SITE.toml")?;
    let text = std::fs::read_to_string(&path)?;
    let loaded = load(&SourceFile::new(&path, &text), &MaterialLibrary::builtin());
    let site = loaded.site.ok_or("the site does not load")?;
    let scene = Scene::new(&site, 0.46, DEFAULT_MAX_CROSSING_LOSS_DB);
    let out = std::io::stdout();
    let mut out = std::io::BufWriter::new(out.lock());
    for l in predict_grid(&site, "multi-wall", &scene) {
        for (i, v) in l.level_dbm.iter().enumerate() {
            writeln!(out, "{} {} {i} {v}", l.floor, l.service)?;
        }
    }
    Ok(())
}
