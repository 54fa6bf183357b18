//! Floor plans from DXF drawings, pure: the bytes of a drawing and a layer mapping in,
//! walls with their openings and the drawing's linework out, in site metres.
//!
//! The steps, each counted in [`ImportStats`]:
//! 1. [`flatten`]: LINE, LWPOLYLINE and POLYLINE (bulges as arcs), ARC and CIRCLE on any
//!    layer become straight strokes, arcs cut into chords within the chord tolerance
//!    (sagitta rule); INSERTs expand their blocks (nested up to [`flatten::MAX_NESTING`],
//!    scaled, rotated, mirrored by a negative scale or a (0, 0, −1) extrusion, arrayed).
//!    Entities on layer "0" inside a block take the insert's layer (the DXF convention).
//!    Every other entity kind is counted and not drawn.
//! 2. [`lines`]: the pieces on wall layers grouped by direction; collinear pieces of one
//!    layer joined across gaps up to the gap tolerance, duplicates removed.
//! 3. [`walls`]: parallel lines of one layer whose separation lies between the thinnest and
//!    thickest wall are paired, nearest separation first, into one wall along their overlap
//!    with the measured separation as its thickness; the rest of a line longer than the
//!    thickest wall is a single-line wall with the layer's mapped thickness; shorter rests
//!    (end caps, junction pieces) are dropped; each wall end is extended to a centreline it
//!    stops against within that wall's half thickness plus the gap tolerance.
//! 4. [`openings`]: a block inserted on an opening layer belongs to the wall whose face band
//!    holds its insertion point; its width is the block's extent along that wall; walls
//!    drawn with a gap for it are joined across the gap.
//!
//! The result does not depend on the order of entities: walls come out sorted.

#![deny(missing_docs)]

pub mod affine;
pub mod export;
pub mod flatten;
mod index;
pub mod lines;
pub mod openings;
mod scan;
pub mod walls;

use affine::Affine;
use rfsite_geometry::{Point2, Segment};
use std::collections::BTreeMap;

/// A drawing that could not be read, with the line of the DXF file where known.
#[derive(Debug, Clone, PartialEq)]
pub struct CadError {
    /// 1-based line of the DXF file.
    pub line: Option<usize>,
    /// What went wrong, for a person.
    pub message: String,
}

impl CadError {
    fn too_big(max: usize) -> CadError {
        CadError {
            line: None,
            message: format!("the drawing expands to more than {max} straight pieces (block inserts multiply their blocks)"),
        }
    }
    fn too_many_visits(max: usize) -> CadError {
        CadError {
            line: None,
            message: format!("the drawing's block inserts expand to more than {max} entities (an array insert of a large count?)"),
        }
    }
    fn nesting(block: &str, max: usize) -> CadError {
        CadError {
            line: None,
            message: format!(
                "block `{}` nests deeper than {max} levels (does a block insert itself?)",
                block.escape_debug()
            ),
        }
    }
}

/// What a layer is for.
#[derive(Debug, Clone, PartialEq)]
pub enum LayerRole {
    /// Wall faces; a single line is a wall of `thickness_m`.
    Wall {
        /// Thickness of a wall drawn as one line, m.
        thickness_m: f64,
    },
    /// Door or window blocks.
    Opening,
    /// Drawn in the background only.
    Ignore,
}

/// How to read one drawing.
#[derive(Debug, Clone)]
pub struct ImportSpec {
    /// Metres per drawing unit; `None` reads the header's `$INSUNITS`.
    pub unit_m: Option<f64>,
    /// Extra scale applied to the drawing.
    pub scale: f64,
    /// Rotation onto the site plan, degrees counter-clockwise.
    pub rotation_deg: f64,
    /// Where the drawing's origin lands on the site plan, m.
    pub offset_m: Point2,
    /// Largest distance between an arc and its chords, m.
    pub chord_tolerance_m: f64,
    /// Thinnest face separation paired into a wall, m.
    pub min_thickness_m: f64,
    /// Thickest face separation paired into a wall, m.
    pub max_thickness_m: f64,
    /// Gaps up to this are closed, m.
    pub gap_m: f64,
    /// Role of each mapped layer.
    pub layers: BTreeMap<String, LayerRole>,
}

/// An opening found in a wall.
#[derive(Debug, Clone, PartialEq)]
pub struct ImportedOpening {
    /// Layer of the block.
    pub layer: String,
    /// From the wall's first point to the opening's near edge, m.
    pub offset_m: f64,
    /// Width, m.
    pub width_m: f64,
}

/// A wall found in the drawing, in site metres.
#[derive(Debug, Clone, PartialEq)]
pub struct ImportedWall {
    /// Layer.
    pub layer: String,
    /// Centreline.
    pub seg: Segment,
    /// Thickness, m.
    pub thickness_m: f64,
    /// Measured from two face lines (else the layer's mapped thickness).
    pub measured: bool,
    /// Openings, by offset.
    pub openings: Vec<ImportedOpening>,
}

/// Every decision the importer made.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ImportStats {
    /// Straight pieces drawn (all layers).
    pub pieces: usize,
    /// Pieces on wall layers.
    pub wall_pieces: usize,
    /// Duplicates removed.
    pub duplicates: usize,
    /// Collinear pieces joined.
    pub joined: usize,
    /// Walls from face pairs.
    pub paired: usize,
    /// Walls from single lines.
    pub single: usize,
    /// Short rests dropped (end caps, junction pieces).
    pub remnants: usize,
    /// Wall ends extended to the wall they stop against.
    pub ends_extended: usize,
    /// Openings placed.
    pub openings_placed: usize,
    /// Walls joined across an opening's gap.
    pub bridged: usize,
    /// Opening blocks with no wall within reach, by insertion point (site metres).
    pub openings_unplaced: Vec<Point2>,
    /// Opening blocks overlapping another opening (dropped).
    pub openings_overlapping: usize,
    /// Entities not drawn, by kind.
    pub ignored_kinds: BTreeMap<String, usize>,
    /// Strokes on layers mapped `ignore`, by layer.
    pub ignored_layers: BTreeMap<String, usize>,
    /// Strokes on layers with no mapping, by layer (drawn in the background only).
    pub unmapped_layers: BTreeMap<String, usize>,
}

/// The imported plan.
#[derive(Debug, Clone, Default)]
pub struct Imported {
    /// Walls, sorted by layer then position.
    pub walls: Vec<ImportedWall>,
    /// Every stroke of every layer as straight pieces, site metres (the background).
    pub linework: Vec<Segment>,
    /// Counts.
    pub stats: ImportStats,
}

/// One layer of a drawing, for writing a mapping.
#[derive(Debug, Clone, PartialEq)]
pub struct LayerSummary {
    /// Layer name.
    pub name: String,
    /// Strokes drawn on it (inserts expanded).
    pub strokes: usize,
    /// Total length, drawing units.
    pub length: f64,
    /// Opening-style inserts: blocks inserted directly on this layer.
    pub inserts: usize,
}

/// Reads a DXF (ASCII or binary) from its bytes.
pub fn parse(bytes: &[u8]) -> Result<dxf::Drawing, CadError> {
    scan::check_groups(bytes)?;
    let mut r = std::io::Cursor::new(bytes);
    let res = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| dxf::Drawing::load(&mut r)));
    match res {
        Ok(Ok(d)) => Ok(d),
        Ok(Err(e)) => Err(CadError {
            line: error_line(&e),
            message: error_text(&e),
        }),
        Err(_) => Err(CadError {
            line: None,
            message: "the DXF reader stopped at a structure it cannot read".into(),
        }),
    }
}

/// The DXF reader's position ("line/offset"), where it gives one.
fn error_line(e: &dxf::DxfError) -> Option<usize> {
    use dxf::DxfError as E;
    match e {
        E::ParseFloatError(_, o)
        | E::ParseIntError(_, o)
        | E::ParseError(o)
        | E::UnexpectedCode(_, o)
        | E::UnexpectedByte(_, o)
        | E::UnexpectedEnumValue(o)
        | E::ExpectedTableType(o)
        | E::WrongValueType(o) => Some(*o),
        E::UnexpectedCodePair(cp, _) => Some(cp.offset),
        _ => None,
    }
}

/// The reader's message without its own position suffix.
fn error_text(e: &dxf::DxfError) -> String {
    let s = e.to_string();
    match s.find(" at line/offset") {
        Some(k) => s[..k].to_string(),
        None => s,
    }
}

/// Metres per drawing unit from the header's `$INSUNITS`, if it names a length.
pub fn header_unit_m(d: &dxf::Drawing) -> Option<f64> {
    unit_m(d.header.default_drawing_units)
}

/// Metres per unit.
pub fn unit_m(u: dxf::enums::Units) -> Option<f64> {
    use dxf::enums::Units as U;
    Some(match u {
        U::Inches => 0.0254,
        U::Feet => 0.3048,
        U::USSurveyFeet => 1200.0 / 3937.0,
        U::Yards => 0.9144,
        U::Millimeters => 0.001,
        U::Centimeters => 0.01,
        U::Decimeters => 0.1,
        U::Meters => 1.0,
        _ => return None,
    })
}

/// Metres per unit for a unit name as written in a mapping (`mm`, `cm`, `m`, `in`, `ft`).
pub fn unit_by_name(name: &str) -> Option<f64> {
    Some(match name {
        "mm" => 0.001,
        "cm" => 0.01,
        "m" => 1.0,
        "in" => 0.0254,
        "ft" => 0.3048,
        _ => return None,
    })
}

/// Layers with their stroke counts and lengths (drawing units), sorted by name.
pub fn layers(d: &dxf::Drawing) -> Result<Vec<LayerSummary>, CadError> {
    let never = |_: &str| false;
    let spec = flatten::FlattenSpec {
        placement: Affine::IDENTITY,
        chord_tolerance: 1e-3,
        is_opening: &never,
    };
    let flat = flatten::flatten(d, &spec)?;
    let mut out: BTreeMap<String, LayerSummary> = BTreeMap::new();
    for s in &flat.strokes {
        let name = &flat.layers[s.layer];
        let e = out.entry(name.clone()).or_insert_with(|| summary(name));
        e.strokes += 1;
        e.length += s
            .points
            .windows(2)
            .map(|w| w[0].distance(w[1]))
            .sum::<f64>();
    }
    for e in d.entities() {
        if matches!(e.specific, dxf::entities::EntityType::Insert(_)) {
            let name = &e.common.layer;
            out.entry(name.clone())
                .or_insert_with(|| summary(name))
                .inserts += 1;
        }
    }
    Ok(out.into_values().collect())
}

fn summary(name: &str) -> LayerSummary {
    LayerSummary {
        name: name.to_string(),
        strokes: 0,
        length: 0.0,
        inserts: 0,
    }
}

/// Imports the walls, openings and linework of `d` under `spec`.
pub fn import(d: &dxf::Drawing, spec: &ImportSpec) -> Result<Imported, CadError> {
    let unit = match spec.unit_m.or_else(|| header_unit_m(d)) {
        Some(u) => u,
        None => {
            return Err(CadError {
                line: None,
                message: "the drawing does not say its units ($INSUNITS is unitless or missing)"
                    .into(),
            })
        }
    };
    let placement = Affine::translate(spec.offset_m.x, spec.offset_m.y)
        .then_after(&Affine::rotate_deg(spec.rotation_deg))
        .then_after(&Affine::scale(unit * spec.scale, unit * spec.scale));
    let is_opening = |l: &str| matches!(spec.layers.get(l), Some(LayerRole::Opening));
    let fspec = flatten::FlattenSpec {
        placement,
        chord_tolerance: spec.chord_tolerance_m,
        is_opening: &is_opening,
    };
    let flat = flatten::flatten(d, &fspec)?;
    Ok(build(flat, spec))
}

/// Walls, openings and stats from the flattened drawing.
fn build(flat: flatten::Flat, spec: &ImportSpec) -> Imported {
    let mut stats = ImportStats {
        pieces: flat.pieces,
        ignored_kinds: flat.ignored.clone(),
        ..Default::default()
    };
    let role = |layer: usize| spec.layers.get(&flat.layers[layer]);
    let mut segs = Vec::new();
    let mut linework = Vec::with_capacity(flat.pieces);
    for s in &flat.strokes {
        let name = &flat.layers[s.layer];
        for w in s.points.windows(2) {
            linework.push(Segment::new(w[0], w[1]));
        }
        match role(s.layer) {
            Some(LayerRole::Wall { .. }) => {
                segs.extend(s.points.windows(2).map(|w| (s.layer, w[0], w[1])));
            }
            Some(LayerRole::Ignore) => *stats.ignored_layers.entry(name.clone()).or_default() += 1,
            Some(LayerRole::Opening) => {}
            None => *stats.unmapped_layers.entry(name.clone()).or_default() += 1,
        }
    }
    stats.wall_pieces = segs.len();
    let (frames, lines, jc) = lines::classify(&segs, 1e-3, 5e-4, spec.gap_m);
    (stats.duplicates, stats.joined) = (jc.duplicates, jc.joined);
    let pspec = walls::PairSpec {
        min_thickness: spec.min_thickness_m,
        max_thickness: spec.max_thickness_m,
        gap: spec.gap_m,
    };
    let (mut found, pc) = walls::pair(&frames, &lines, &pspec);
    let mapped = |layer: usize| match role(layer) {
        Some(LayerRole::Wall { thickness_m }) => *thickness_m,
        _ => 0.0,
    };
    let th: Vec<f64> = found
        .iter()
        .map(|w| w.measured.unwrap_or_else(|| mapped(w.layer)))
        .collect();
    stats.ends_extended = walls::extend_ends(&mut found, &th, spec.gap_m);
    (stats.paired, stats.single, stats.remnants) = (pc.paired, pc.single, pc.remnants);
    let placed: Vec<openings::PlacedWall> = found
        .iter()
        .zip(&th)
        .map(|(w, t)| openings::PlacedWall {
            layer: w.layer,
            seg: w.seg,
            thickness: *t,
            measured: w.measured.is_some(),
            openings: Vec::new(),
        })
        .collect();
    let (placed, oc) = openings::place(placed, &flat.openings, spec.gap_m.max(0.05), spec.gap_m);
    stats.openings_placed = oc.placed;
    stats.bridged = oc.bridged;
    stats.openings_unplaced = oc.unplaced;
    stats.openings_overlapping = oc.overlapping;
    let walls = finish(placed, &flat.layers);
    Imported {
        walls,
        linework,
        stats,
    }
}

/// Named, canonically oriented (first point the lower-left end) and sorted walls.
fn finish(placed: Vec<openings::PlacedWall>, names: &[String]) -> Vec<ImportedWall> {
    let mut out: Vec<ImportedWall> = placed
        .into_iter()
        .map(|w| {
            let len = w.seg.a.distance(w.seg.b);
            let flip = (w.seg.b.x, w.seg.b.y) < (w.seg.a.x, w.seg.a.y);
            let seg = if flip {
                Segment::new(w.seg.b, w.seg.a)
            } else {
                w.seg
            };
            let mut openings: Vec<ImportedOpening> = w
                .openings
                .iter()
                .map(|&(l, off, width)| ImportedOpening {
                    layer: names[l].clone(),
                    offset_m: if flip { len - off - width } else { off },
                    width_m: width,
                })
                .collect();
            openings.sort_by(|a, b| a.offset_m.total_cmp(&b.offset_m));
            ImportedWall {
                layer: names[w.layer].clone(),
                measured: w.measured,
                seg,
                thickness_m: w.thickness,
                openings,
            }
        })
        .collect();
    out.sort_by(|a, b| {
        a.layer
            .cmp(&b.layer)
            .then(a.seg.a.x.total_cmp(&b.seg.a.x))
            .then(a.seg.a.y.total_cmp(&b.seg.a.y))
            .then(a.seg.b.x.total_cmp(&b.seg.b.x))
            .then(a.seg.b.y.total_cmp(&b.seg.b.y))
    });
    out
}
