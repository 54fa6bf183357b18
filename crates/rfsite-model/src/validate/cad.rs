//! `[floors.cad]`: the drawing and mapping a floor's walls come from, checked before any
//! file is read (the engine reads them through its world).

use super::V;
use crate::raw::*;
use crate::site::CadRef;

use crate::cadmap::CAD_UNITS;

/// The validated reference, or `None` after reporting what is wrong.
pub(super) fn cad_ref(v: &mut V<'_>, c: &S<RawCadRef>, what: &str) -> Option<CadRef> {
    let r = c.get_ref();
    let file = path(v, &r.file, c, what, "file", "cad/ground.dxf");
    let map = path(v, &r.map, c, what, "map", "cad/layers.toml");
    let units = match &r.units {
        Some(u) if !CAD_UNITS.contains(&u.get_ref().as_str()) => {
            v.error(
                u.span(),
                format!(
                    "{what}: unknown drawing units `{}`",
                    u.get_ref().escape_debug()
                ),
                Some(format!("write one of {}", CAD_UNITS.join(", "))),
            );
            return None;
        }
        u => u.as_ref().map(|u| u.get_ref().clone()),
    };
    let scale = match &r.scale {
        Some(s) if !(*s.get_ref() > 0.0 && *s.get_ref() <= 1e6) => {
            v.error(
                s.span(),
                format!("{what}: `scale` must be above 0 (and at most 1e6)"),
                Some("`scale = 1` keeps the drawing's own size".into()),
            );
            return None;
        }
        s => s.as_ref().map(|s| *s.get_ref()),
    };
    let rotation_deg = r.rotation_deg.as_ref().map(|d| *d.get_ref());
    let offset_m = match &r.offset {
        Some(p) => Some(v.point(p)?).map(|p| (p.x, p.y)),
        None => None,
    };
    Some(CadRef {
        file: file?,
        map: map?,
        units,
        scale,
        rotation_deg,
        offset_m,
    })
}

fn path(
    v: &mut V<'_>,
    x: &Option<S<String>>,
    table: &S<RawCadRef>,
    what: &str,
    key: &str,
    example: &str,
) -> Option<String> {
    match x {
        Some(p) if !p.get_ref().trim().is_empty() => Some(p.get_ref().clone()),
        Some(p) => {
            v.error(
                p.span(),
                format!("{what}: `cad.{key}` is empty"),
                Some(format!(
                    "e.g. `{key} = \"{example}\"` (relative to the site folder)"
                )),
            );
            None
        }
        None => {
            v.error(
                table.span(),
                format!("{what}: `[floors.cad]` is missing `{key}`"),
                Some(format!(
                    "add `{key} = \"{example}\"` (relative to the site folder)"
                )),
            );
            None
        }
    }
}
