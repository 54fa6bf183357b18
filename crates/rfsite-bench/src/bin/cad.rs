//! DXF import benchmark: a synthetic office floor drawn as an architect would (double-line
//! walls on a grid of rooms, broken at doors, a door block in each gap, furniture circles),
//! written as ASCII DXF text in memory, then parsed and imported by `rfsite-cad`, best of
//! three. Run: `cargo run --release -p rfsite-bench --bin cad [ROOMS_PER_SIDE]`.

use rfsite_cad::{import, parse, ImportSpec, LayerRole};
use rfsite_geometry::Point2;
use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::time::Instant;

/// Room pitch and wall thickness, mm.
const ROOM: f64 = 4000.0;
const WALL: f64 = 100.0;
const DOOR: f64 = 900.0;

fn line(out: &mut String, layer: &str, a: (f64, f64), b: (f64, f64)) {
    let _ = write!(
        out,
        "0\nLINE\n8\n{layer}\n10\n{}\n20\n{}\n11\n{}\n21\n{}\n",
        a.0, a.1, b.0, b.1
    );
}

/// One wall run along x at `y` (faces y ± 50 mm) from `x0` to `x1`, a door gap in each room.
fn run_x(out: &mut String, y: f64, x0: f64, x1: f64, rooms: usize) -> usize {
    let mut n = 0;
    for r in 0..rooms {
        let (a, b) = (x0 + r as f64 * ROOM, (x0 + (r + 1) as f64 * ROOM).min(x1));
        let g = a + ROOM / 2.0;
        for face in [y - WALL / 2.0, y + WALL / 2.0] {
            line(out, "A-WALL", (a, face), (g, face));
            line(out, "A-WALL", (g + DOOR, face), (b, face));
            n += 2;
        }
        let _ = write!(
            out,
            "0\nINSERT\n8\nA-DOOR\n2\nDOOR\n10\n{g}\n20\n{}\n",
            y + WALL / 2.0
        );
        n += 1;
    }
    n
}

fn drawing(rooms: usize) -> (String, usize) {
    let mut out = String::from("0\nSECTION\n2\nBLOCKS\n0\nBLOCK\n2\nDOOR\n10\n0\n20\n0\n");
    line(&mut out, "0", (0.0, 0.0), (0.0, DOOR));
    let _ = write!(out, "0\nARC\n8\n0\n10\n0\n20\n0\n40\n{DOOR}\n50\n0\n51\n90\n0\nENDBLK\n0\nENDSEC\n0\nSECTION\n2\nENTITIES\n");
    let side = rooms as f64 * ROOM;
    let mut n = 0;
    for k in 0..=rooms {
        n += run_x(&mut out, k as f64 * ROOM, 0.0, side, rooms);
        // The same run along y, written with x and y swapped (a vertical wall line).
        let mut col = String::new();
        n += run_x(&mut col, k as f64 * ROOM, 0.0, side, rooms);
        out += &swap_xy(&col);
    }
    for i in 0..rooms * rooms {
        let (cx, cy) = (
            (i % rooms) as f64 * ROOM + 1000.0,
            (i / rooms) as f64 * ROOM + 1000.0,
        );
        let _ = write!(out, "0\nCIRCLE\n8\nA-FURN\n10\n{cx}\n20\n{cy}\n40\n400\n");
        n += 1;
    }
    out += "0\nENDSEC\n0\nEOF\n";
    (out, n)
}

/// Swaps the x (10, 11) and y (20, 21) groups of every entity.
fn swap_xy(s: &str) -> String {
    let lines: Vec<&str> = s.lines().collect();
    let mut out = String::with_capacity(s.len());
    let mut i = 0;
    while i + 1 < lines.len() {
        let code = match lines[i] {
            "10" => "20",
            "20" => "10",
            "11" => "21",
            "21" => "11",
            c => c,
        };
        let _ = write!(out, "{code}\n{}\n", lines[i + 1]);
        i += 2;
    }
    out
}

fn spec() -> ImportSpec {
    let mut layers = BTreeMap::new();
    layers.insert("A-WALL".into(), LayerRole::Wall { thickness_m: 0.1 });
    layers.insert("A-DOOR".into(), LayerRole::Opening);
    layers.insert("A-FURN".into(), LayerRole::Ignore);
    ImportSpec {
        unit_m: Some(0.001),
        scale: 1.0,
        rotation_deg: 0.0,
        offset_m: Point2::new(0.0, 0.0),
        chord_tolerance_m: 0.01,
        min_thickness_m: 0.01,
        max_thickness_m: 0.5,
        gap_m: 0.01,
        layers,
    }
}

/// Peak resident memory of this process, KiB (Linux `VmHWM`).
fn peak_kib() -> Option<u64> {
    let s = std::fs::read_to_string("/proc/self/status").ok()?;
    let l = s.lines().find(|l| l.starts_with("VmHWM:"))?;
    l.split_whitespace().nth(1)?.parse().ok()
}

fn main() {
    let rooms: usize = std::env::args()
        .nth(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(50);
    let (text, entities) = drawing(rooms);
    println!(
        "synthetic floor: {rooms}x{rooms} rooms, {entities} entities, {:.1} MiB of DXF",
        text.len() as f64 / (1 << 20) as f64
    );
    let before = peak_kib().unwrap_or(0);
    let mut best = (f64::INFINITY, f64::INFINITY);
    let mut walls = 0;
    let mut openings = 0;
    for _ in 0..3 {
        let t0 = Instant::now();
        let Ok(d) = parse(text.as_bytes()) else {
            eprintln!("the synthetic drawing did not parse");
            std::process::exit(1);
        };
        let t1 = Instant::now();
        let Ok(imp) = import(&d, &spec()) else {
            eprintln!("the synthetic drawing did not import");
            std::process::exit(1);
        };
        let t2 = Instant::now();
        best.0 = best.0.min((t1 - t0).as_secs_f64());
        best.1 = best.1.min((t2 - t1).as_secs_f64());
        walls = imp.walls.len();
        openings = imp.stats.openings_placed;
    }
    let peak = peak_kib().unwrap_or(0);
    println!("parse (dxf crate) {:.3} s, import (flatten, pair, place) {:.3} s, total {:.3} s (best of 3)", best.0, best.1, best.0 + best.1);
    println!("walls {walls}, openings placed {openings}; peak memory {:.0} MiB ({:.0} MiB above the drawing text), {:.0} bytes per entity", peak as f64 / 1024.0, (peak - before.min(peak)) as f64 / 1024.0, (peak - before.min(peak)) as f64 * 1024.0 / entities as f64);
}
