//! `[[floors]]`: each floor's storey, slab, outline and plan image (walls, openings and
//! zones are added to it later).

use std::collections::BTreeSet;
use std::ops::Range;

use rfsite_geometry::Point2;

use super::{cad, check_material, floor_ref, V};
use crate::material::MaterialLibrary;
use crate::raw::*;
use crate::site::*;

/// Every floor entry that has an id; the slab materials named are added to `used`.
pub(super) fn floors(
    v: &mut V<'_>,
    raw: &RawProject,
    lib: &MaterialLibrary,
    used: &mut BTreeSet<String>,
) -> Vec<Floor> {
    let whole = 0..1;
    let mut floors: Vec<Floor> = Vec::new();
    let mut floor_ids = BTreeSet::new();
    if raw.floors.is_empty() {
        v.error(
            whole,
            "the site has no `[[floors]]`",
            Some(
                "add at least one `[[floors]]` with `id`, `elevation`, `height` and `outline`"
                    .into(),
            ),
        );
    }
    for rf in &raw.floors {
        if let Some(f) = floor(v, rf, lib, used, &mut floor_ids) {
            floors.push(f);
        }
    }
    floors
}

/// One `[[floors]]` entry, or None without an id (reported).
fn floor(
    v: &mut V<'_>,
    rf: &S<RawFloor>,
    lib: &MaterialLibrary,
    used_materials: &mut BTreeSet<String>,
    floor_ids: &mut BTreeSet<String>,
) -> Option<Floor> {
    let span = rf.span();
    let f = rf.get_ref();
    let Some(idv) = &f.id else {
        v.error(
            span,
            "`[[floors]]` entry is missing `id`",
            Some("add `id = \"L1\"`".into()),
        );
        return None;
    };
    v.unique(floor_ids, idv, "floor");
    let what = format!("floor `{}`", idv.get_ref());
    let elevation_m = f.elevation.as_ref().and_then(|e| v.coord(e));
    if f.elevation.is_none() {
        v.error(
            span.clone(),
            format!("{what} is missing `elevation`"),
            Some("add `elevation = 0.0` (site units, finished floor level)".into()),
        );
    }
    let height_m = match &f.height {
        Some(h) => v.length(h, "height", false),
        None => {
            v.error(
                span.clone(),
                format!("{what} is missing `height`"),
                Some("add the floor-to-floor `height` in site units".into()),
            );
            None
        }
    };
    let slab_material = match &f.slab_material {
        Some(sm) => {
            check_material(v, lib, sm);
            used_materials.insert(sm.get_ref().clone());
            sm.get_ref().clone()
        }
        None => {
            used_materials.insert("concrete-floor-slab".into());
            "concrete-floor-slab".into()
        }
    };
    let slab_thickness_m = match &f.slab_thickness {
        Some(t) => v.length(t, "slab_thickness", false).unwrap_or(0.2),
        None => 0.2,
    };
    let outline = outline(v, f, span.clone(), &what);
    let plan_m_per_px = f
        .plan_scale
        .as_ref()
        .and_then(|s| v.length(s, "plan_scale", false));
    let plan_offset = f.plan_offset.as_ref().and_then(|p| v.point(p));
    if f.plan_image.is_some() && f.plan_scale.is_none() {
        v.error(span.clone(), format!("{what} names a `plan_image` but no `plan_scale`"), Some("add `plan_scale` (site units per image pixel) and `plan_offset = [x, y]` (the image's lower-left corner)".into()));
    }
    Some(Floor {
        id: idv.get_ref().clone(),
        name: f
            .name
            .as_ref()
            .map(|n| n.get_ref().clone())
            .unwrap_or_else(|| idv.get_ref().clone()),
        elevation_m: elevation_m.unwrap_or(0.0),
        height_m: height_m.unwrap_or(3.0),
        slab_material,
        slab_thickness_m,
        outline,
        parts: Vec::new(),
        zones: Vec::new(),
        plan_image: f.plan_image.as_ref().map(|p| p.get_ref().clone()),
        plan_m_per_px: plan_m_per_px.unwrap_or(0.05),
        plan_offset: plan_offset.unwrap_or_default(),
        cad: f.cad.as_ref().and_then(|c| cad::cad_ref(v, c, &what)),
    })
}

/// The floor's outline polygon: at least 3 points enclosing an area.
fn outline(v: &mut V<'_>, f: &RawFloor, span: Range<usize>, what: &str) -> Vec<Point2> {
    match &f.outline {
        Some(o) => {
            let pts = v.points(o);
            if let Some(p) = &pts {
                if p.len() < 3 || rfsite_geometry::polygon_area(p) <= 0.0 {
                    v.error(
                        o.span(),
                        format!("{what}: the outline needs at least 3 points enclosing an area"),
                        None,
                    );
                }
            }
            pts.unwrap_or_default()
        }
        None => {
            v.error(
                span.clone(),
                format!("{what} is missing `outline`"),
                Some("add `outline = [[0, 0], [40, 0], [40, 25], [0, 25]]`".into()),
            );
            Vec::new()
        }
    }
}

/// Every `[[zones]]` entry onto its floor.
pub(super) fn zones(v: &mut V<'_>, raw: &RawProject, floor_names: &[String], floors: &mut [Floor]) {
    let mut zone_ids = BTreeSet::new();
    for rz in &raw.zones {
        if let Some((fi, z)) = zone(v, rz, floor_names, &mut zone_ids) {
            floors[fi].zones.push(z);
        }
    }
}

/// One zone and the index of its floor; None when it has an error (reported).
fn zone(
    v: &mut V<'_>,
    rz: &S<RawZone>,
    floor_names: &[String],
    zone_ids: &mut BTreeSet<String>,
) -> Option<(usize, Zone)> {
    let span = rz.span();
    let z = rz.get_ref();
    let zid =
        z.id.as_ref()
            .map(|i| i.get_ref().clone())
            .unwrap_or_default();
    if let Some(i) = &z.id {
        v.unique(zone_ids, i, "zone");
    } else {
        v.error(span.clone(), "`[[zones]]` entry is missing `id`", None);
    }
    let what = format!("zone `{zid}`");
    let fi = floor_ref(v, floor_names, &z.floor, span.clone(), &what);
    let kind = match &z.kind {
        Some(k) => match k.get_ref().as_str() {
            "general" => Some(ZoneKind::General),
            "critical" => Some(ZoneKind::Critical),
            "excluded" => Some(ZoneKind::Excluded),
            other => {
                v.error(
                    k.span(),
                    format!("unknown zone kind `{other}`"),
                    Some("write `general`, `critical` or `excluded`".into()),
                );
                None
            }
        },
        None => Some(ZoneKind::General),
    };
    let poly = match &z.polygon {
        Some(p) => {
            let pts = v.points(p);
            if let Some(q) = &pts {
                if q.len() < 3 {
                    v.error(
                        p.span(),
                        format!("{what}: a polygon needs at least 3 points"),
                        None,
                    );
                    None
                } else {
                    pts
                }
            } else {
                None
            }
        }
        None => {
            v.error(span.clone(), format!("{what} is missing `polygon`"), None);
            None
        }
    };
    let (Some(fi), Some(kind), Some(polygon)) = (fi, kind, poly) else {
        return None;
    };
    Some((
        fi,
        Zone {
            id: zid,
            name: z
                .name
                .as_ref()
                .map(|n| n.get_ref().clone())
                .unwrap_or_default(),
            kind,
            polygon,
        },
    ))
}
