//! The importer against drawings written by the PyPI package ezdxf (1.4.5):
//! `tests/reference/cad/make_fixtures.py` draws an invented plan in millimetres, metres and
//! inches and writes the centrelines, thicknesses and doors it drew from to `expected.json`.

use rfsite_cad::{import, parse, ImportSpec, ImportedWall, LayerRole};
use rfsite_geometry::Point2;
use std::collections::BTreeMap;

const DIR: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/../../tests/reference/cad");
/// The acceptance tolerance of issue 14: 1 mm.
const MM: f64 = 1e-3;

fn expected() -> serde_json::Value {
    let text = std::fs::read_to_string(format!("{DIR}/expected.json")).expect("fixture");
    serde_json::from_str(&text).expect("json")
}

fn spec() -> ImportSpec {
    let mut layers = BTreeMap::new();
    layers.insert("A-WALL-EXT".into(), LayerRole::Wall { thickness_m: 0.3 });
    layers.insert("A-WALL-INT".into(), LayerRole::Wall { thickness_m: 0.1 });
    layers.insert("A-WALL-SINGLE".into(), LayerRole::Wall { thickness_m: 0.1 });
    layers.insert("A-DOOR".into(), LayerRole::Opening);
    layers.insert("A-FURN".into(), LayerRole::Ignore);
    ImportSpec {
        unit_m: None,
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

fn pt(v: &serde_json::Value) -> Point2 {
    Point2::new(
        v[0].as_f64().unwrap_or(f64::NAN),
        v[1].as_f64().unwrap_or(f64::NAN),
    )
}

/// The imported wall whose centreline matches `a`–`b` (either way) within 1 mm.
fn find(walls: &[ImportedWall], a: Point2, b: Point2) -> Option<&ImportedWall> {
    walls.iter().find(|w| {
        let same = w.seg.a.distance(a) < MM && w.seg.b.distance(b) < MM;
        let flipped = w.seg.a.distance(b) < MM && w.seg.b.distance(a) < MM;
        same || flipped
    })
}

fn check_drawing(file: &str) {
    let bytes = std::fs::read(format!("{DIR}/{file}")).expect("fixture");
    let drawing = parse(&bytes).expect("parses");
    let got = import(&drawing, &spec()).expect("imports");
    let exp = expected();
    let walls = exp["walls"].as_array().expect("walls");
    assert_eq!(
        got.walls.len(),
        walls.len(),
        "{file}: walls {:#?}",
        got.walls
    );
    let mut matched = Vec::new();
    for e in walls {
        let (a, b) = (pt(&e["a"]), pt(&e["b"]));
        let w = find(&got.walls, a, b)
            .unwrap_or_else(|| panic!("{file}: no wall {a:?}-{b:?}: {:#?}", got.walls));
        let th = e["thickness"].as_f64().unwrap_or(f64::NAN);
        assert!(
            (w.thickness_m - th).abs() < MM,
            "{file}: thickness {} vs {th}",
            w.thickness_m
        );
        assert_eq!(w.layer, e["layer"].as_str().unwrap_or(""));
        matched.push(w);
    }
    let doors = exp["doors"].as_array().expect("doors");
    let placed: usize = got.walls.iter().map(|w| w.openings.len()).sum();
    assert_eq!(placed, doors.len(), "{file}: openings");
    for d in doors {
        let w = matched[d["wall"].as_u64().unwrap_or(99) as usize];
        let from = pt(&d["from"]);
        let width = d["width"].as_f64().unwrap_or(f64::NAN);
        let len = w.seg.a.distance(w.seg.b);
        let hit = w.openings.iter().any(|o| {
            let t = o.offset_m / len;
            let near = Point2::new(
                w.seg.a.x + t * (w.seg.b.x - w.seg.a.x),
                w.seg.a.y + t * (w.seg.b.y - w.seg.a.y),
            );
            near.distance(from) < MM && (o.width_m - width).abs() < MM
        });
        assert!(
            hit,
            "{file}: door at {from:?} width {width}: {:?}",
            w.openings
        );
    }
    assert_eq!(
        got.stats.unmapped_layers.get("S-GRID"),
        Some(&3),
        "{file}: unmapped grid lines"
    );
    assert_eq!(
        got.stats.ignored_kinds.get("TEXT"),
        Some(&1),
        "{file}: text counted"
    );
}

#[test]
fn millimetre_drawing_recovers_walls_and_doors() {
    check_drawing("plan-mm.dxf");
}

#[test]
fn metre_drawing_recovers_walls_and_doors() {
    check_drawing("plan-m.dxf");
}

#[test]
fn inch_drawing_recovers_walls_and_doors() {
    check_drawing("plan-in.dxf");
}

#[test]
fn malformed_drawing_names_its_line() {
    let bytes = std::fs::read(format!("{DIR}/plan-malformed.dxf")).expect("fixture");
    let err = parse(&bytes).expect_err("malformed");
    let line = expected()["malformed_line"].as_u64().map(|l| l as usize);
    assert_eq!(err.line, line, "{}", err.message);
}
