//! `rfsite plan layers FILE.dxf` and `rfsite plan import FILE.dxf --map MAP.toml`: the
//! layers of a drawing (to write a mapping), and its walls as site TOML.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use rfsite_engine::plans::{import_spec, roles};
use rfsite_model::cadmap::{parse_layer_map, LayerMap, LayerRule};
use rfsite_model::{CadRef, MaterialLibrary, SourceFile};

use crate::Outcome;

/// Largest drawing read (as `[floors.cad]` in a site).
const MAX_DXF_BYTES: u64 = 256 << 20;

/// Arguments of `plan`.
#[derive(clap::Args)]
pub struct Args {
    #[command(subcommand)]
    cmd: PlanCmd,
}

#[derive(clap::Subcommand)]
enum PlanCmd {
    /// Every layer with its stroke count and total length, to write a layer mapping.
    Layers {
        /// The DXF drawing.
        file: PathBuf,
    },
    /// The drawing's walls and openings as `[[walls]]` and `[[openings]]` TOML.
    Import {
        /// The DXF drawing.
        file: PathBuf,
        /// The layer mapping (TOML).
        #[arg(long)]
        map: PathBuf,
        /// The floor id the walls go on.
        #[arg(long, default_value = "L0")]
        floor: String,
    },
}

/// Runs `plan`.
pub fn run(a: Args) -> Outcome {
    let result = match a.cmd {
        PlanCmd::Layers { file } => layers(&file),
        PlanCmd::Import { file, map, floor } => import(&file, &map, &floor),
    };
    match result {
        Ok(text) => {
            print!("{text}");
            Outcome::Ok
        }
        Err(msg) => {
            eprint!("{msg}");
            Outcome::BadInput
        }
    }
}

fn read(path: &Path) -> Result<Vec<u8>, String> {
    let meta = std::fs::metadata(path).map_err(|e| format!("error: {}: {e}\n", path.display()))?;
    if meta.len() > MAX_DXF_BYTES {
        return Err(format!(
            "error: {}: larger than {} MiB\n",
            path.display(),
            MAX_DXF_BYTES >> 20
        ));
    }
    std::fs::read(path).map_err(|e| format!("error: {}: {e}\n", path.display()))
}

fn drawing(path: &Path) -> Result<dxf::Drawing, String> {
    let bytes = read(path)?;
    rfsite_cad::parse(&bytes).map_err(|e| match e.line {
        Some(l) => format!("{}:{l}: error: malformed DXF: {}\n  hint: re-export the drawing from the CAD program (ASCII DXF, R2000 or later)\n", path.display(), e.message),
        None => format!("{}: error: {}\n", path.display(), e.message),
    })
}

fn layers(path: &Path) -> Result<String, String> {
    let d = drawing(path)?;
    let list = rfsite_cad::layers(&d)
        .map_err(|e| format!("{}: error: {}\n", path.display(), e.message))?;
    let units = match rfsite_cad::header_unit_m(&d) {
        Some(u) => format!("{u} m per drawing unit ($INSUNITS)"),
        None => "not stated ($INSUNITS unitless): give `units` in the mapping".into(),
    };
    let mut out = format!(
        "{}: units {units}\n{:<32} {:>8} {:>8} {:>14}\n",
        path.display(),
        "layer",
        "strokes",
        "inserts",
        "length (units)"
    );
    for l in list {
        let _ = writeln!(
            out,
            "{:<32} {:>8} {:>8} {:>14.1}",
            l.name, l.strokes, l.inserts, l.length
        );
    }
    Ok(out)
}

fn mapping(path: &Path) -> Result<LayerMap, String> {
    let bytes = std::fs::read(path).map_err(|e| format!("error: {}: {e}\n", path.display()))?;
    let text = String::from_utf8(bytes)
        .map_err(|_| format!("error: {}: not UTF-8 text\n", path.display()))?;
    let src = SourceFile::new(path.display().to_string(), text);
    parse_layer_map(&src, &MaterialLibrary::builtin())
        .map_err(|d| d.items.iter().map(|x| x.to_string()).collect())
}

fn import(path: &Path, map_path: &Path, floor: &str) -> Result<String, String> {
    if !rfsite_model::validate::id_is_valid(floor) {
        return Err(format!(
            "error: `--floor {floor}` is not a valid id (letters, digits, `-`, `_`)\n"
        ));
    }
    let map = mapping(map_path)?;
    let d = drawing(path)?;
    let cad = CadRef {
        file: path.display().to_string(),
        map: map_path.display().to_string(),
        units: None,
        scale: None,
        rotation_deg: None,
        offset_m: None,
    };
    let spec = import_spec(&cad, &map);
    debug_assert_eq!(spec.layers, roles(&map));
    let imported = rfsite_cad::import(&d, &spec)
        .map_err(|e| format!("{}: error: {}\n", path.display(), e.message))?;
    Ok(walls_toml(&imported, &map, floor, path))
}

/// The walls as site TOML (metres: the site needs `units = "m"`).
fn walls_toml(imported: &rfsite_cad::Imported, map: &LayerMap, floor: &str, path: &Path) -> String {
    let mut out = format!(
        "# Walls of floor `{floor}` imported from {} by `rfsite plan import`; lengths in metres.\n",
        path.display()
    );
    for (n, w) in imported.walls.iter().enumerate() {
        let Some(LayerRule::Wall { material, .. }) = map.layers.get(&w.layer) else {
            continue;
        };
        let id = format!("{floor}-cad-{}", n + 1);
        let how = if w.measured {
            "measured between face lines"
        } else {
            "single line, mapped thickness"
        };
        let _ = write!(
            out,
            "\n[[walls]] # layer {}, {how}\nid = \"{id}\"\nfloor = \"{floor}\"\nmaterial = \"{material}\"\nthickness = {}\npoints = [[{}, {}], [{}, {}]]\n",
            w.layer, r4(w.thickness_m), r4(w.seg.a.x), r4(w.seg.a.y), r4(w.seg.b.x), r4(w.seg.b.y)
        );
        for (k, o) in w.openings.iter().enumerate() {
            let Some(LayerRule::Opening {
                kind,
                material,
                thickness_m,
            }) = map.layers.get(&o.layer)
            else {
                continue;
            };
            let kind = if *kind == rfsite_model::PartKind::Window {
                "window"
            } else {
                "door"
            };
            let _ = write!(out, "\n[[openings]]\nid = \"{id}-o{}\"\nwall = \"{id}\"\nkind = \"{kind}\"\nmaterial = \"{material}\"\noffset = {}\nwidth = {}\n", k + 1, r4(o.offset_m), r4(o.width_m));
            if let Some(t) = thickness_m {
                let _ = writeln!(out, "thickness = {}", r4(*t));
            }
        }
    }
    out
}

/// Rounded to 0.1 mm for printing.
fn r4(x: f64) -> f64 {
    (x * 10_000.0).round() / 10_000.0
}
