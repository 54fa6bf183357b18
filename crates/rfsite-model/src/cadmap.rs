//! The layer mapping of a DXF drawing (`layers.toml`): which CAD layer holds which wall
//! material and thickness, which holds door and window blocks, which is background only,
//! and how the drawing sits on the site plan. Lengths in a mapping are in metres.
//!
//! ```toml
//! [drawing]
//! units = "mm"              # when the DXF header does not say ($INSUNITS)
//! rotation_deg = 0
//! offset = [0, 0]           # where the drawing's origin lands on the site plan, m
//! max_wall_thickness = 0.5  # face lines further apart are not one wall, m
//!
//! [layers.A-WALL-EXT]
//! material = "concrete"
//! thickness = 0.3           # for a wall drawn as one line, m
//!
//! [layers.A-DOOR]
//! opening = "door"
//! material = "wooden-door"
//!
//! [layers.A-FURN]
//! ignore = true
//! ```

use std::collections::BTreeMap;
use std::ops::Range;

use serde::Deserialize;

use crate::diag::{unknown_name_hint, Diagnostic, Diagnostics, Severity, SourceFile};
use crate::material::MaterialLibrary;
use crate::raw::S;
use crate::site::{PartKind, WallPart};
use rfsite_geometry::{Point2, Segment};

/// Drawing units a mapping or a floor may name.
pub const CAD_UNITS: [&str; 5] = ["mm", "cm", "m", "in", "ft"];

/// An opening of an imported wall.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanOpening {
    /// Id.
    pub id: String,
    /// Door or window.
    pub kind: PartKind,
    /// Material id.
    pub material: String,
    /// Thickness, m.
    pub thickness_m: f64,
    /// From the wall's first point to the near edge, m.
    pub offset_m: f64,
    /// Width, m.
    pub width_m: f64,
}

/// The parts of an imported straight wall with its openings split out, exactly as a
/// `[[walls]]` entry with `[[openings]]` would give them.
pub fn wall_parts(
    id: &str,
    seg: Segment,
    material: &str,
    thickness_m: f64,
    openings: &[PlanOpening],
) -> Vec<WallPart> {
    let wall = WallPart {
        id: id.to_string(),
        segment: seg,
        material: material.to_string(),
        thickness_m,
        kind: PartKind::Wall,
    };
    let blank = Segment {
        a: Point2::default(),
        b: Point2::default(),
    };
    let intervals: Vec<(f64, f64, WallPart)> = openings
        .iter()
        .map(|o| {
            let part = WallPart {
                id: o.id.clone(),
                segment: blank,
                material: o.material.clone(),
                thickness_m: o.thickness_m,
                kind: o.kind,
            };
            (o.offset_m, o.offset_m + o.width_m, part)
        })
        .collect();
    crate::validate::split_polyline(&[seg.a, seg.b], &intervals, &wall)
}

/// How the drawing sits on the plan and how walls are recognised (all lengths m).
#[derive(Debug, Clone, PartialEq)]
pub struct DrawingRules {
    /// Drawing units, when stated.
    pub units: Option<String>,
    /// Extra scale.
    pub scale: f64,
    /// Rotation onto the site plan, degrees counter-clockwise.
    pub rotation_deg: f64,
    /// Where the drawing's origin lands, m.
    pub offset_m: (f64, f64),
    /// Largest distance between an arc and its chords.
    pub chord_tolerance_m: f64,
    /// Thinnest face separation paired into a wall.
    pub min_wall_thickness_m: f64,
    /// Thickest face separation paired into a wall.
    pub max_wall_thickness_m: f64,
    /// Gaps up to this are closed.
    pub gap_tolerance_m: f64,
}

/// What one layer is.
#[derive(Debug, Clone, PartialEq)]
pub enum LayerRule {
    /// Wall faces of a material; a single line is a wall `thickness_m` thick.
    Wall {
        /// Material id.
        material: String,
        /// Thickness of a single-line wall, m.
        thickness_m: f64,
    },
    /// Door or window blocks.
    Opening {
        /// Door or window.
        kind: PartKind,
        /// Material id.
        material: String,
        /// Thickness, m (the wall's when absent).
        thickness_m: Option<f64>,
    },
    /// Background only.
    Ignore,
}

/// A parsed mapping.
#[derive(Debug, Clone, PartialEq)]
pub struct LayerMap {
    /// `[drawing]`.
    pub drawing: DrawingRules,
    /// `[layers.<name>]`.
    pub layers: BTreeMap<String, LayerRule>,
}

#[derive(Debug, Deserialize, Default)]
#[serde(deny_unknown_fields)]
struct RawMap {
    drawing: Option<S<RawDrawing>>,
    #[serde(default)]
    layers: BTreeMap<String, S<RawRule>>,
}

#[derive(Debug, Deserialize, Default)]
#[serde(deny_unknown_fields)]
struct RawDrawing {
    units: Option<S<String>>,
    scale: Option<S<f64>>,
    rotation_deg: Option<S<f64>>,
    offset: Option<S<Vec<f64>>>,
    chord_tolerance: Option<S<f64>>,
    min_wall_thickness: Option<S<f64>>,
    max_wall_thickness: Option<S<f64>>,
    gap_tolerance: Option<S<f64>>,
}

#[derive(Debug, Deserialize, Default)]
#[serde(deny_unknown_fields)]
struct RawRule {
    material: Option<S<String>>,
    thickness: Option<S<f64>>,
    opening: Option<S<String>>,
    ignore: Option<S<bool>>,
}

struct M<'a> {
    file: &'a SourceFile,
    diags: Diagnostics,
}

impl M<'_> {
    fn error(&mut self, span: Range<usize>, msg: impl Into<String>, hint: Option<String>) {
        self.diags
            .push(Diagnostic::at(Severity::Error, self.file, span, msg, hint));
    }

    /// A length in `lo..=hi` metres, or `default`.
    fn len(&mut self, x: &Option<S<f64>>, key: &str, (lo, hi): (f64, f64), default: f64) -> f64 {
        let Some(s) = x else { return default };
        let val = *s.get_ref();
        if !(val >= lo && val <= hi) {
            self.error(
                s.span(),
                format!("`{key}` must be between {lo} and {hi} m"),
                Some(format!(
                    "lengths in a layer mapping are metres; the default is {default}"
                )),
            );
            return default;
        }
        val
    }
}

/// Parses a layer mapping; materials are checked against `lib`. Every problem is located in
/// the mapping file.
pub fn parse_layer_map(file: &SourceFile, lib: &MaterialLibrary) -> Result<LayerMap, Diagnostics> {
    let mut m = M {
        file,
        diags: Diagnostics::default(),
    };
    let raw: RawMap = match toml::from_str(&file.text) {
        Ok(r) => r,
        Err(e) => {
            let span = e.span().unwrap_or(0..0);
            let msg = e.message().to_string();
            m.error(span, format!("layer mapping: {msg}"), Some("keys are `[drawing]` (units, scale, rotation_deg, offset, chord_tolerance, min_wall_thickness, max_wall_thickness, gap_tolerance) and `[layers.<name>]` (material, thickness, opening, ignore)".into()));
            return Err(m.diags);
        }
    };
    let drawing = drawing_rules(&mut m, raw.drawing.as_ref());
    let mut layers = BTreeMap::new();
    for (name, rule) in &raw.layers {
        if let Some(r) = layer_rule(&mut m, lib, name, rule) {
            layers.insert(name.clone(), r);
        }
    }
    if m.diags.has_errors() {
        return Err(m.diags.sorted());
    }
    Ok(LayerMap { drawing, layers })
}

fn drawing_rules(m: &mut M<'_>, d: Option<&S<RawDrawing>>) -> DrawingRules {
    let empty = RawDrawing::default();
    let r = d.map(|d| d.get_ref()).unwrap_or(&empty);
    let units = match &r.units {
        Some(u) if !CAD_UNITS.contains(&u.get_ref().as_str()) => {
            m.error(
                u.span(),
                format!("unknown drawing units `{}`", u.get_ref().escape_debug()),
                Some(format!("write one of {}", CAD_UNITS.join(", "))),
            );
            None
        }
        u => u.as_ref().map(|u| u.get_ref().clone()),
    };
    let offset_m = match &r.offset {
        Some(p) if p.get_ref().len() == 2 => (p.get_ref()[0], p.get_ref()[1]),
        Some(p) => {
            m.error(p.span(), "`offset` is `[x, y]` in metres", None);
            (0.0, 0.0)
        }
        None => (0.0, 0.0),
    };
    let scale = m.len(&r.scale, "scale", (1e-6, 1e6), 1.0);
    let rotation_deg = r.rotation_deg.as_ref().map(|x| *x.get_ref()).unwrap_or(0.0);
    DrawingRules {
        units,
        scale,
        rotation_deg,
        offset_m,
        chord_tolerance_m: m.len(&r.chord_tolerance, "chord_tolerance", (1e-4, 1.0), 0.01),
        min_wall_thickness_m: m.len(
            &r.min_wall_thickness,
            "min_wall_thickness",
            (1e-3, 1.0),
            0.01,
        ),
        max_wall_thickness_m: m.len(
            &r.max_wall_thickness,
            "max_wall_thickness",
            (0.01, 3.0),
            0.5,
        ),
        gap_tolerance_m: m.len(&r.gap_tolerance, "gap_tolerance", (0.0, 0.5), 0.01),
    }
}

fn layer_rule(
    m: &mut M<'_>,
    lib: &MaterialLibrary,
    name: &str,
    rule: &S<RawRule>,
) -> Option<LayerRule> {
    let r = rule.get_ref();
    if r.ignore.as_ref().is_some_and(|i| *i.get_ref()) {
        return Some(LayerRule::Ignore);
    }
    let Some(material) = &r.material else {
        m.error(
            rule.span(),
            format!(
                "layer `{}` needs `material` (or `ignore = true`)",
                name.escape_debug()
            ),
            Some("e.g. `material = \"concrete\"`; `rfsite materials` lists the ids".into()),
        );
        return None;
    };
    if lib.get(material.get_ref()).is_none() {
        let hint = Some(unknown_name_hint("material", material.get_ref(), lib.ids()));
        m.error(
            material.span(),
            format!("unknown material `{}`", material.get_ref().escape_debug()),
            hint,
        );
        return None;
    }
    let material = material.get_ref().clone();
    let thickness = r
        .thickness
        .as_ref()
        .map(|t| m.len(&Some(t.clone()), "thickness", (1e-3, 3.0), 0.1));
    match &r.opening {
        None => {
            match thickness {
                Some(thickness_m) => Some(LayerRule::Wall {
                    material,
                    thickness_m,
                }),
                None => {
                    m.error(rule.span(), format!("wall layer `{}` needs `thickness` (m), used for walls drawn as one line", name.escape_debug()), Some("e.g. `thickness = 0.1`".into()));
                    None
                }
            }
        }
        Some(k) => {
            let kind = match k.get_ref().as_str() {
                "door" => PartKind::Door,
                "window" => PartKind::Window,
                other => {
                    m.error(
                        k.span(),
                        format!("unknown opening kind `{}`", other.escape_debug()),
                        Some("write `door` or `window`".into()),
                    );
                    return None;
                }
            };
            Some(LayerRule::Opening {
                kind,
                material,
                thickness_m: thickness,
            })
        }
    }
}
