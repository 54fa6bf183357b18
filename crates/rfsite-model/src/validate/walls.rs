//! `[[walls]]` and their `[[openings]]`: each wall split into straight wall parts, doors
//! and windows, added to its floor.

use std::collections::{BTreeMap, BTreeSet};
use std::ops::Range;

use rfsite_geometry::{Point2, Segment};

use super::{check_material, floor_ref, split_polyline, thousands, V};
use crate::diag::unknown_name_hint;
use crate::limits::*;
use crate::material::MaterialLibrary;
use crate::raw::*;
use crate::site::*;

/// What the walls are checked against.
pub(super) struct Known<'a> {
    /// The material library with the site's own.
    pub lib: &'a MaterialLibrary,
    /// Site units (for messages).
    pub units: Units,
    /// Floor ids, in file order.
    pub floor_names: &'a [String],
}

/// Every wall's parts onto its floor; the materials named are added to `used_materials`.
pub(super) fn walls(
    v: &mut V<'_>,
    raw: &RawProject,
    c: &Known<'_>,
    floors: &mut [Floor],
    used_materials: &mut BTreeSet<String>,
) {
    let mut openings: BTreeMap<String, Vec<&S<RawOpening>>> = BTreeMap::new();
    for o in &raw.openings {
        match &o.get_ref().wall {
            Some(w) => openings.entry(w.get_ref().clone()).or_default().push(o),
            None => v.error(
                o.span(),
                "`[[openings]]` entry is missing `wall`",
                Some("name the wall it sits in: `wall = \"W3\"` (the wall needs an `id`)".into()),
            ),
        }
    }
    let mut wall_ids = BTreeSet::new();
    let mut wall_parts = 0usize;
    for (wi, rw) in raw.walls.iter().enumerate() {
        let Some((fi, parts, span, what)) =
            wall(v, wi, rw, c, &mut openings, &mut wall_ids, used_materials)
        else {
            continue;
        };
        wall_parts += parts.len();
        if wall_parts > MAX_WALL_PARTS {
            // Reported once, at the wall that goes beyond; later walls are not split.
            if wall_parts - parts.len() <= MAX_WALL_PARTS {
                v.error(
                    span,
                    format!("{what} brings the site beyond {} wall parts (straight pieces of wall, doors and windows)", thousands(MAX_WALL_PARTS as u64)),
                    Some("simplify the walls (fewer points) or split the site into several site projects".into()),
                );
            }
            continue;
        }
        floors[fi].parts.extend(parts);
    }
    for (wid, ops) in openings {
        for o in ops {
            let span = o
                .get_ref()
                .wall
                .as_ref()
                .map(|w| w.span())
                .unwrap_or(o.span());
            let known: Vec<String> = raw
                .walls
                .iter()
                .filter_map(|w| w.get_ref().id.as_ref().map(|i| i.get_ref().clone()))
                .collect();
            let hint = unknown_name_hint("wall id", &wid, known.iter().map(String::as_str));
            v.error(
                span,
                format!("opening refers to wall `{wid}`, which does not exist"),
                Some(hint),
            );
        }
    }
}

/// Openings by the wall id they name.
type ByWall<'r> = BTreeMap<String, Vec<&'r S<RawOpening>>>;

/// One wall: its floor index, its parts, its span and how messages name it; None when it
/// has an error (reported).
fn wall(
    v: &mut V<'_>,
    wi: usize,
    rw: &S<RawWall>,
    c: &Known<'_>,
    openings: &mut ByWall<'_>,
    wall_ids: &mut BTreeSet<String>,
    used_materials: &mut BTreeSet<String>,
) -> Option<(usize, Vec<WallPart>, Range<usize>, String)> {
    let span = rw.span();
    let w = rw.get_ref();
    let wid =
        w.id.as_ref()
            .map(|i| i.get_ref().clone())
            .unwrap_or_else(|| format!("wall-{}", wi + 1));
    if let Some(i) = &w.id {
        v.unique(wall_ids, i, "wall");
    }
    let what = format!("wall `{wid}`");
    let fi = floor_ref(v, c.floor_names, &w.floor, span.clone(), &what);
    let material = match &w.material {
        Some(m) => check_material(v, c.lib, m).then(|| m.get_ref().clone()),
        None => {
            v.error(
                span.clone(),
                format!("{what} is missing `material`"),
                Some(
                    "add `material = \"plasterboard-partition\"`; `rfsite materials` lists them"
                        .into(),
                ),
            );
            None
        }
    };
    let thickness_m = match &w.thickness {
        Some(t) => v.length(t, "thickness", false),
        None => {
            v.error(
                span.clone(),
                format!("{what} is missing `thickness`"),
                Some(
                    "add `thickness` in site units (e.g. 0.1 for a 100 mm partition in metres)"
                        .into(),
                ),
            );
            None
        }
    };
    let pts = match &w.points {
        Some(p) => {
            let pts = v.points(p);
            if let Some(q) = &pts {
                if q.len() < 2 {
                    v.error(p.span(), format!("{what} needs at least 2 points"), None);
                }
            }
            pts
        }
        None => {
            v.error(
                span.clone(),
                format!("{what} is missing `points`"),
                Some("add `points = [[x1, y1], [x2, y2]]`".into()),
            );
            None
        }
    };
    let closed = w.closed.as_ref().map(|c| *c.get_ref()).unwrap_or(false);
    let ops =
        w.id.as_ref()
            .and_then(|i| openings.remove(i.get_ref()))
            .unwrap_or_default();
    let (Some(fi), Some(material), Some(thickness_m), Some(mut pts)) =
        (fi, material, thickness_m, pts)
    else {
        return None;
    };
    if pts.len() < 2 {
        return None;
    }
    used_materials.insert(material.clone());
    if closed {
        pts.push(pts[0]);
    }
    let polyline_len: f64 = pts.windows(2).map(|p| p[0].distance(p[1])).sum();
    // Openings as arc-length intervals along the polyline.
    let mut intervals: Vec<(f64, f64, WallPart)> = Vec::new();
    for o in ops {
        if let Some(i) = opening(v, o, &wid, thickness_m, polyline_len, c, used_materials) {
            intervals.push(i);
        }
    }
    intervals.sort_by(|a, b| a.0.total_cmp(&b.0));
    for w2 in intervals.windows(2) {
        if w2[1].0 < w2[0].1 - 1e-9 {
            v.error(
                span.clone(),
                format!(
                    "openings `{}` and `{}` overlap on wall `{wid}`",
                    w2[0].2.id, w2[1].2.id
                ),
                None,
            );
        }
    }
    let wall_part = WallPart {
        id: wid.clone(),
        segment: Segment {
            a: pts[0],
            b: pts[1],
        },
        material,
        thickness_m,
        kind: PartKind::Wall,
    };
    let parts = split_polyline(&pts, &intervals, &wall_part);
    Some((fi, parts, span, what))
}

/// One opening of wall `wid` as its interval along the wall and its part; None when it has
/// an error (reported).
fn opening(
    v: &mut V<'_>,
    o: &S<RawOpening>,
    wid: &str,
    thickness_m: f64,
    polyline_len: f64,
    c: &Known<'_>,
    used_materials: &mut BTreeSet<String>,
) -> Option<(f64, f64, WallPart)> {
    let or = o.get_ref();
    let oid = or
        .id
        .as_ref()
        .map(|i| i.get_ref().clone())
        .unwrap_or_else(|| format!("{wid}-opening"));
    let kind = match &or.kind {
        Some(k) => match k.get_ref().as_str() {
            "door" => PartKind::Door,
            "window" => PartKind::Window,
            other => {
                v.error(
                    k.span(),
                    format!("unknown opening kind `{other}`"),
                    Some("write `door` or `window`".into()),
                );
                return None;
            }
        },
        None => PartKind::Door,
    };
    let om = match &or.material {
        Some(m) => {
            if !check_material(v, c.lib, m) {
                return None;
            }
            m.get_ref().clone()
        }
        None => {
            v.error(
                o.span(),
                format!("opening `{oid}` is missing `material`"),
                Some("e.g. `material = \"wooden-door\"`".into()),
            );
            return None;
        }
    };
    used_materials.insert(om.clone());
    let (Some(off), Some(wd)) = (&or.offset, &or.width) else {
        v.error(
            o.span(),
            format!("opening `{oid}` needs `offset` (from the wall's first point) and `width`"),
            None,
        );
        return None;
    };
    let (Some(off_m), Some(w_m)) = (v.length(off, "offset", true), v.length(wd, "width", false))
    else {
        return None;
    };
    if off_m + w_m > polyline_len + 1e-9 {
        v.error(
            wd.span(),
            format!(
                "opening `{oid}` ends {:.2} {} along wall `{wid}`, which is only {:.2} {} long",
                c.units.from_m(off_m + w_m),
                c.units.label(),
                c.units.from_m(polyline_len),
                c.units.label()
            ),
            Some("reduce `offset` or `width`".into()),
        );
        return None;
    }
    let th = match &or.thickness {
        Some(t) => v.length(t, "thickness", false).unwrap_or(thickness_m),
        None => thickness_m,
    };
    Some((
        off_m,
        off_m + w_m,
        WallPart {
            id: oid,
            segment: Segment {
                a: Point2::default(),
                b: Point2::default(),
            },
            material: om,
            thickness_m: th,
            kind,
        },
    ))
}
