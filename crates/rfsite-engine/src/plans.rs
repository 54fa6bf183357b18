//! Floors drawn in DXF: each floor's `[floors.cad]` drawing and layer mapping read through
//! the world (hashed into the audit trail), imported by `rfsite-cad`, and the walls added to
//! the floor as wall parts, with every importer decision kept for `check` and the report.

use std::collections::BTreeMap;

use rfsite_cad::{ImportSpec, ImportStats, Imported, LayerRole};
use rfsite_geometry::{Point2, Segment};
use rfsite_model::cadmap::{parse_layer_map, wall_parts, LayerMap, LayerRule, PlanOpening};
use rfsite_model::limits::{MAX_COORD_M, MAX_WALL_PARTS};
use rfsite_model::locate::Seg;
use rfsite_model::{CadRef, Diagnostic, Diagnostics, Floor, Severity, Site, SourceFile, WallPart};

use crate::world::{self, World};

/// What a floor's drawing gave.
#[derive(Debug, Clone)]
pub struct FloorPlan {
    /// The DXF file, as the site names it.
    pub file: String,
    /// The importer's counts.
    pub stats: ImportStats,
    /// Walls added to the floor.
    pub walls: usize,
    /// Openings added.
    pub openings: usize,
    /// Every line of the drawing (all layers), site metres: the maps' background.
    pub linework: Vec<Segment>,
}

/// Imports every floor's drawing into `site`; problems go to `diags`.
pub fn import_plans(
    world: &mut World,
    site: &mut Site,
    file: &SourceFile,
    diags: &mut Diagnostics,
) -> BTreeMap<String, FloorPlan> {
    let mut maps: BTreeMap<String, Option<LayerMap>> = BTreeMap::new();
    let mut out = BTreeMap::new();
    let mut parts_total: usize = site.floors.iter().map(|f| f.parts.len()).sum();
    for k in 0..site.floors.len() {
        let Some(cad) = site.floors[k].cad.clone() else {
            continue;
        };
        let fid = site.floors[k].id.clone();
        let at = |key: &'static str| {
            let fid = fid.clone();
            move |msg: String, hint: Option<String>| cad_key(file, &fid, key, msg, hint)
        };
        let map = maps
            .entry(cad.map.clone())
            .or_insert_with(|| read_map(world, site, &cad, diags, at("map")))
            .clone();
        let Some(map) = map else { continue };
        let Some(imported) = read_drawing(world, &cad, &map, diags, at("file")) else {
            continue;
        };
        let parts = floor_parts(&site.floors[k], &imported, &map);
        parts_total += parts.len();
        if parts_total > MAX_WALL_PARTS {
            diags.push(at("file")(
                format!(
                    "`{}` brings the site beyond {MAX_WALL_PARTS} wall parts",
                    cad.file
                ),
                Some("map fewer layers to walls, or split the site".into()),
            ));
            continue;
        }
        if let Some(far) = parts.iter().find(|p| {
            [p.segment.a, p.segment.b]
                .iter()
                .any(|q| q.x.abs() > MAX_COORD_M || q.y.abs() > MAX_COORD_M)
        }) {
            diags.push(at("file")(
                format!(
                    "`{}` places a wall at ({:.0}, {:.0}) m, beyond the {MAX_COORD_M} m extent",
                    cad.file, far.segment.a.x, far.segment.a.y
                ),
                Some("check the drawing's units, `scale` and `offset`".into()),
            ));
            continue;
        }
        plan_warnings(
            &site.floors[k],
            &cad,
            &imported,
            diags,
            &at("map"),
            &at("offset"),
        );
        let openings = parts
            .iter()
            .filter(|p| p.kind != rfsite_model::PartKind::Wall)
            .count();
        site.floors[k].parts.extend(parts);
        out.insert(
            fid.clone(),
            FloorPlan {
                file: cad.file.clone(),
                walls: imported.walls.len(),
                openings,
                stats: imported.stats,
                linework: imported.linework,
            },
        );
    }
    out
}

/// A diagnostic at `[floors.cad] key` of floor `fid` (at the table when the key is absent).
fn cad_key(
    file: &SourceFile,
    fid: &str,
    key: &str,
    msg: String,
    hint: Option<String>,
) -> Diagnostic {
    let path = [
        Seg::Key("floors"),
        Seg::Id(fid),
        Seg::Key("cad"),
        Seg::Key(key),
    ];
    let found = (2..=4)
        .rev()
        .find(|n| rfsite_model::locate::locate(&file.text, &path[..*n]).is_some());
    crate::at_key(file, &path[..found.unwrap_or(4)], msg, hint)
}

type At<'a> = dyn Fn(String, Option<String>) -> Diagnostic + 'a;

/// Reads and parses a layer mapping once; its problems are located in the mapping file.
fn read_map(
    world: &mut World,
    site: &Site,
    cad: &CadRef,
    diags: &mut Diagnostics,
    at: impl Fn(String, Option<String>) -> Diagnostic,
) -> Option<LayerMap> {
    let bytes = match world.read_named(&cad.map, world::CAD_MAP) {
        Ok(b) => b,
        Err(p) => {
            diags.push(at(p.message, p.hint));
            return None;
        }
    };
    let Ok(text) = String::from_utf8(bytes) else {
        diags.push(at(
            format!("layer mapping `{}` is not UTF-8 text", cad.map),
            Some("save it as UTF-8 TOML".into()),
        ));
        return None;
    };
    let src = SourceFile::new(world.display_named(&cad.map), text);
    match parse_layer_map(&src, &site.materials) {
        Ok(m) => Some(m),
        Err(d) => {
            diags.items.extend(d.items);
            None
        }
    }
}

/// Reads and imports a floor's drawing; a malformed file is an error at its DXF line.
fn read_drawing(
    world: &mut World,
    cad: &CadRef,
    map: &LayerMap,
    diags: &mut Diagnostics,
    at: impl Fn(String, Option<String>) -> Diagnostic,
) -> Option<Imported> {
    let bytes = match world.read_named(&cad.file, world::CAD_DRAWING) {
        Ok(b) => b,
        Err(p) => {
            diags.push(at(p.message, p.hint));
            return None;
        }
    };
    let spec = import_spec(cad, map);
    let result = rfsite_cad::parse(&bytes).and_then(|d| rfsite_cad::import(&d, &spec));
    match result {
        Ok(i) => Some(i),
        Err(e) => {
            diags.push(dxf_error(&world.display_named(&cad.file), &bytes, &e));
            None
        }
    }
}

/// The importer's settings: the floor's placement keys over the mapping's `[drawing]`.
pub fn import_spec(cad: &CadRef, map: &LayerMap) -> ImportSpec {
    let d = &map.drawing;
    let units = cad.units.as_deref().or(d.units.as_deref());
    let offset = cad.offset_m.unwrap_or(d.offset_m);
    ImportSpec {
        unit_m: units.and_then(rfsite_cad::unit_by_name),
        scale: cad.scale.unwrap_or(d.scale),
        rotation_deg: cad.rotation_deg.unwrap_or(d.rotation_deg),
        offset_m: Point2::new(offset.0, offset.1),
        chord_tolerance_m: d.chord_tolerance_m,
        min_thickness_m: d.min_wall_thickness_m,
        max_thickness_m: d.max_wall_thickness_m,
        gap_m: d.gap_tolerance_m,
        layers: roles(map),
    }
}

/// The importer's view of the mapping's layers.
pub fn roles(map: &LayerMap) -> BTreeMap<String, LayerRole> {
    map.layers
        .iter()
        .map(|(name, r)| {
            let role = match r {
                LayerRule::Wall { thickness_m, .. } => LayerRole::Wall {
                    thickness_m: *thickness_m,
                },
                LayerRule::Opening { .. } => LayerRole::Opening,
                LayerRule::Ignore => LayerRole::Ignore,
            };
            (name.clone(), role)
        })
        .collect()
}

/// A DXF error located at its line of the DXF file (line 1 when the reader gives none).
fn dxf_error(display: &str, bytes: &[u8], e: &rfsite_cad::CadError) -> Diagnostic {
    let line = e.line.unwrap_or(1).max(1);
    let text = String::from_utf8_lossy(bytes);
    let start: usize = text
        .split_inclusive('\n')
        .take(line - 1)
        .map(str::len)
        .sum();
    let end = text[start.min(text.len())..]
        .find('\n')
        .map_or(text.len(), |n| start + n);
    let shown = text.get(start..end).unwrap_or("").to_string();
    let file = SourceFile::new(display, shown.clone());
    let mut d = Diagnostic::at(
        Severity::Error,
        &file,
        0..shown.len().min(1),
        format!("malformed DXF: {}", e.message),
        Some("re-export the drawing from the CAD program (ASCII DXF, R2000 or later)".into()),
    );
    d.line = line;
    d
}

/// The floor's wall parts from the imported walls, ids `<floor>-cad-<n>`.
pub fn floor_parts(floor: &Floor, imported: &Imported, map: &LayerMap) -> Vec<WallPart> {
    let mut out = Vec::new();
    for (n, w) in imported.walls.iter().enumerate() {
        let Some(LayerRule::Wall { material, .. }) = map.layers.get(&w.layer) else {
            continue;
        };
        let id = format!("{}-cad-{}", floor.id, n + 1);
        let openings: Vec<PlanOpening> = w
            .openings
            .iter()
            .enumerate()
            .filter_map(|(k, o)| match map.layers.get(&o.layer) {
                Some(LayerRule::Opening {
                    kind,
                    material,
                    thickness_m,
                }) => Some(PlanOpening {
                    id: format!("{id}-o{}", k + 1),
                    kind: *kind,
                    material: material.clone(),
                    thickness_m: thickness_m.unwrap_or(w.thickness_m),
                    offset_m: o.offset_m,
                    width_m: o.width_m,
                }),
                _ => None,
            })
            .collect();
        out.extend(wall_parts(&id, w.seg, material, w.thickness_m, &openings));
    }
    out
}

/// Warnings: layers with geometry but no mapping, blocks that found no wall, and walls
/// that mostly lie outside the floor's outline (wrong units or offset).
fn plan_warnings(
    floor: &Floor,
    cad: &CadRef,
    imported: &Imported,
    diags: &mut Diagnostics,
    at_map: &At<'_>,
    at_offset: &At<'_>,
) {
    let s = &imported.stats;
    if !s.unmapped_layers.is_empty() {
        let list: Vec<String> = s
            .unmapped_layers
            .iter()
            .map(|(l, n)| format!("`{}` ({n})", l.escape_debug()))
            .collect();
        diags.push(warning(at_map(format!("floor `{}`: layers with lines but no mapping in `{}`, drawn in the background only: {}", floor.id, cad.map, list.join(", ")), Some("map each to a wall material, an opening, or `ignore = true`".into()))));
    }
    if !s.openings_unplaced.is_empty() {
        let list: Vec<String> = s
            .openings_unplaced
            .iter()
            .take(5)
            .map(|p| format!("({:.2}, {:.2})", p.x, p.y))
            .collect();
        diags.push(warning(at_map(
            format!(
                "floor `{}`: {} door or window block(s) found no wall within reach, first at {} m",
                floor.id,
                s.openings_unplaced.len(),
                list.join(", ")
            ),
            Some("check the opening layer's blocks sit in a mapped wall".into()),
        )));
    }
    let outside = imported.walls.iter().filter(|w| {
        let mid = Point2::new((w.seg.a.x + w.seg.b.x) / 2.0, (w.seg.a.y + w.seg.b.y) / 2.0);
        !near_outline(mid, &floor.outline, 1.0)
    });
    let n_out = outside.count();
    if n_out * 2 > imported.walls.len() && !imported.walls.is_empty() {
        diags.push(warning(at_offset(
            format!(
                "floor `{}`: {n_out} of {} walls from `{}` lie outside the floor outline",
                floor.id,
                imported.walls.len(),
                cad.file
            ),
            Some(
                "check the drawing's units, `rotation_deg` and `offset` against the outline".into(),
            ),
        )));
    }
}

fn warning(mut d: Diagnostic) -> Diagnostic {
    d.severity = Severity::Warning;
    d
}

/// Inside the outline, or within `tol` m of its edge.
fn near_outline(p: Point2, outline: &[Point2], tol: f64) -> bool {
    if rfsite_geometry::point_in_polygon(p, outline) {
        return true;
    }
    let n = outline.len();
    (0..n).any(|i| {
        rfsite_geometry::distance_point_segment(p, &Segment::new(outline[i], outline[(i + 1) % n]))
            <= tol
    })
}

impl FloorPlan {
    /// Every importer decision in one line, for `check` and the report's appendix.
    pub fn summary(&self, floor: &str) -> String {
        let s = &self.stats;
        let mut out = format!(
            "floor `{floor}` from {}: {} straight pieces ({} on wall layers); {} wall pieces from face pairs and {} from single lines, made into {} walls; {} openings placed ({} wall pieces joined across an opening); {} duplicates removed, {} collinear pieces joined, {} short remnants dropped, {} wall ends extended",
            self.file, s.pieces, s.wall_pieces, s.paired, s.single, self.walls, s.openings_placed, s.bridged,
            s.duplicates, s.joined, s.remnants, s.ends_extended
        );
        let listed = |m: &BTreeMap<String, usize>| {
            m.iter()
                .map(|(k, n)| format!("{k} {n}"))
                .collect::<Vec<_>>()
                .join(", ")
        };
        if !s.ignored_layers.is_empty() {
            out += &format!("; ignored by layer: {}", listed(&s.ignored_layers));
        }
        if !s.unmapped_layers.is_empty() {
            out += &format!("; unmapped: {}", listed(&s.unmapped_layers));
        }
        if !s.ignored_kinds.is_empty() {
            out += &format!("; not drawn: {}", listed(&s.ignored_kinds));
        }
        if !s.openings_unplaced.is_empty() || s.openings_overlapping > 0 {
            out += &format!(
                "; openings without a wall {}, overlapping {}",
                s.openings_unplaced.len(),
                s.openings_overlapping
            );
        }
        out
    }
}
