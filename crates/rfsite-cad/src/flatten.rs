//! DXF entities to straight strokes: polylines with bulges, arcs and circles flattened to a
//! chord tolerance, block inserts expanded (nested, scaled, rotated, mirrored, arrayed).

use crate::affine::Affine;
use crate::CadError;
use dxf::entities::{Entity, EntityType, Insert};
use dxf::Drawing;
use rfsite_geometry::Point2;
use std::collections::{BTreeMap, HashMap};

/// Deepest block nesting followed (a block that inserts itself stops here with an error).
pub const MAX_NESTING: usize = 16;
/// Most straight pieces one drawing may expand to (inserts multiply their blocks).
pub const MAX_PIECES: usize = 4_000_000;
/// Most entities visited, inserts counted once per instance (an array of empty blocks
/// draws nothing but would otherwise loop without bound).
pub const MAX_VISITS: usize = 5_000_000;
/// Most chords one arc is cut into.
const MAX_ARC_CHORDS: usize = 1024;

/// A polyline on one layer, in output coordinates.
#[derive(Debug, Clone)]
pub struct Stroke {
    /// Index into [`Flat::layers`].
    pub layer: usize,
    /// Vertices (a closed stroke repeats its first point at the end).
    pub points: Vec<Point2>,
}

/// A block insert on an opening layer: where it sits and what it draws.
#[derive(Debug, Clone)]
pub struct OpeningInsert {
    /// Index into [`Flat::layers`].
    pub layer: usize,
    /// The insertion point (a door block's hinge: common practice in drafting).
    pub at: Point2,
    /// Every vertex the block draws, in output coordinates.
    pub points: Vec<Point2>,
}

/// The flattened drawing.
#[derive(Debug, Default)]
pub struct Flat {
    /// Layer names, in order of first use.
    pub layers: Vec<String>,
    /// Every stroke.
    pub strokes: Vec<Stroke>,
    /// Inserts on opening layers.
    pub openings: Vec<OpeningInsert>,
    /// Entities not drawn, by kind ("TEXT", "paper space", ...).
    pub ignored: BTreeMap<String, usize>,
    /// Straight pieces so far (bounded by [`MAX_PIECES`]).
    pub pieces: usize,
    /// Entities visited so far (bounded by [`MAX_VISITS`]).
    pub visits: usize,
}

/// What the walk needs to know about layers and tolerances.
pub struct FlattenSpec<'a> {
    /// Drawing coordinates to output coordinates.
    pub placement: Affine,
    /// Largest distance between an arc and its chords, in output units.
    pub chord_tolerance: f64,
    /// Is this layer's insert an opening (door or window block)?
    pub is_opening: &'a dyn Fn(&str) -> bool,
}

struct Walk<'a> {
    spec: &'a FlattenSpec<'a>,
    blocks: HashMap<&'a str, &'a dxf::Block>,
    layer_index: HashMap<String, usize>,
    out: Flat,
}

/// Flattens the model-space entities of `drawing`.
pub fn flatten(drawing: &Drawing, spec: &FlattenSpec<'_>) -> Result<Flat, CadError> {
    let mut w = Walk {
        spec,
        blocks: drawing.blocks().map(|b| (b.name.as_str(), b)).collect(),
        layer_index: HashMap::new(),
        out: Flat::default(),
    };
    for e in drawing.entities() {
        if e.common.is_in_paper_space {
            *w.out.ignored.entry("paper space".into()).or_default() += 1;
            continue;
        }
        w.entity(e, &spec.placement, "0", 0, None)?;
    }
    Ok(w.out)
}

impl<'a> Walk<'a> {
    fn layer(&mut self, name: &str) -> usize {
        if let Some(i) = self.layer_index.get(name) {
            return *i;
        }
        let i = self.out.layers.len();
        self.out.layers.push(name.to_string());
        self.layer_index.insert(name.to_string(), i);
        i
    }

    /// One entity under transform `m`; `parent` is the layer that layer "0" inherits inside
    /// a block; `sink` collects the points of an opening block being expanded.
    fn entity(
        &mut self,
        e: &'a Entity,
        m: &Affine,
        parent: &str,
        depth: usize,
        sink: Option<&mut Vec<Point2>>,
    ) -> Result<(), CadError> {
        self.out.visits += 1;
        if self.out.visits > MAX_VISITS {
            return Err(CadError::too_many_visits(MAX_VISITS));
        }
        let own = e.common.layer.as_str();
        let layer = if own == "0" || own.is_empty() {
            parent
        } else {
            own
        };
        let m = extrusion(m, &e.specific);
        let Some(m) = m else {
            *self
                .out
                .ignored
                .entry("not in the plan plane".into())
                .or_default() += 1;
            return Ok(());
        };
        let pts: Vec<Point2> = match &e.specific {
            EntityType::Line(l) => vec![m.apply(l.p1.x, l.p1.y), m.apply(l.p2.x, l.p2.y)],
            EntityType::LwPolyline(p) => {
                let v: Vec<(f64, f64, f64)> =
                    p.vertices.iter().map(|v| (v.x, v.y, v.bulge)).collect();
                self.bulged(&v, p.is_closed(), &m)
            }
            EntityType::Polyline(p) => {
                let v: Vec<(f64, f64, f64)> = p
                    .vertices()
                    .map(|v| (v.location.x, v.location.y, v.bulge))
                    .collect();
                self.bulged(&v, p.is_closed(), &m)
            }
            EntityType::Arc(a) => {
                let sweep = (a.end_angle - a.start_angle).rem_euclid(360.0);
                let sweep = if sweep == 0.0 { 360.0 } else { sweep };
                self.arc(a.center.x, a.center.y, a.radius, a.start_angle, sweep, &m)
            }
            EntityType::Circle(c) => self.arc(c.center.x, c.center.y, c.radius, 0.0, 360.0, &m),
            EntityType::Insert(i) => return self.insert(i, &m, layer, depth, sink),
            other => {
                *self.out.ignored.entry(kind_name(other)).or_default() += 1;
                return Ok(());
            }
        };
        if pts.len() < 2 || pts.iter().any(|p| !p.x.is_finite() || !p.y.is_finite()) {
            *self
                .out
                .ignored
                .entry("degenerate or non-finite".into())
                .or_default() += 1;
            return Ok(());
        }
        self.out.pieces += pts.len() - 1;
        if self.out.pieces > MAX_PIECES {
            return Err(CadError::too_big(MAX_PIECES));
        }
        if let Some(s) = sink {
            s.extend_from_slice(&pts);
        }
        let layer = self.layer(layer);
        self.out.strokes.push(Stroke { layer, points: pts });
        Ok(())
    }

    /// A block insert: each array instance expanded under its own transform.
    fn insert(
        &mut self,
        i: &'a Insert,
        m: &Affine,
        layer: &str,
        depth: usize,
        sink: Option<&mut Vec<Point2>>,
    ) -> Result<(), CadError> {
        if depth >= MAX_NESTING {
            return Err(CadError::nesting(&i.name, MAX_NESTING));
        }
        let Some(block) = self.blocks.get(i.name.as_str()).copied() else {
            *self
                .out
                .ignored
                .entry("insert of a missing block".into())
                .or_default() += 1;
            return Ok(());
        };
        let opening = sink.is_none() && (self.spec.is_opening)(layer);
        let mut own = Vec::new();
        let mut sink = if opening { Some(&mut own) } else { sink };
        let (cols, rows) = (i.column_count.max(1) as usize, i.row_count.max(1) as usize);
        for r in 0..rows {
            for c in 0..cols {
                let t = insert_transform(
                    i,
                    block,
                    c as f64 * i.column_spacing,
                    r as f64 * i.row_spacing,
                );
                let mm = m.then_after(&t);
                for e in &block.entities {
                    self.entity(e, &mm, layer, depth + 1, sink.as_deref_mut())?;
                }
            }
        }
        if opening {
            let at = m.apply(i.location.x, i.location.y);
            let layer = self.layer(layer);
            self.out.openings.push(OpeningInsert {
                layer,
                at,
                points: own,
            });
        }
        Ok(())
    }

    /// A polyline whose vertices carry bulges (`tan(θ/4)` of the arc to the next vertex).
    fn bulged(&self, v: &[(f64, f64, f64)], closed: bool, m: &Affine) -> Vec<Point2> {
        let mut out = Vec::with_capacity(v.len() + 1);
        let n = v.len();
        let spans = if closed { n } else { n.saturating_sub(1) };
        if let Some(&(x, y, _)) = v.first() {
            out.push(m.apply(x, y));
        }
        for k in 0..spans {
            let (x0, y0, b) = v[k];
            let (x1, y1, _) = v[(k + 1) % n];
            if b.abs() > 1e-12 && b.is_finite() {
                let arc = bulge_arc(x0, y0, x1, y1, b);
                let pts = self.arc(arc.0, arc.1, arc.2, arc.3, arc.4, m);
                out.extend(pts.into_iter().skip(1));
            } else {
                out.push(m.apply(x1, y1));
            }
        }
        out
    }

    /// Points along an arc from `start_deg`, sweeping `sweep_deg` (signed), chords within
    /// the tolerance measured after the transform.
    fn arc(
        &self,
        cx: f64,
        cy: f64,
        r: f64,
        start_deg: f64,
        sweep_deg: f64,
        m: &Affine,
    ) -> Vec<Point2> {
        let n = chords(
            r * m.max_stretch(),
            sweep_deg.abs().to_radians(),
            self.spec.chord_tolerance,
        );
        (0..=n)
            .map(|k| {
                let a = (start_deg + sweep_deg * k as f64 / n as f64).to_radians();
                m.apply(cx + r * a.cos(), cy + r * a.sin())
            })
            .collect()
    }
}

/// Chords needed so that an arc of radius `r` sweeping `sweep` radians stays within `tol`
/// of them: each chord subtends at most `2·acos(1 − tol/r)` (the sagitta formula).
pub fn chords(r: f64, sweep: f64, tol: f64) -> usize {
    let usable = r > tol && tol > 0.0 && sweep.is_finite();
    if !usable {
        return 1;
    }
    let per = 2.0 * (1.0 - tol / r).acos();
    ((sweep / per).ceil() as usize).clamp(1, MAX_ARC_CHORDS)
}

/// The arc from `(x0, y0)` to `(x1, y1)` with bulge `b`: centre, radius, start angle and
/// signed sweep in degrees (included angle `4·atan(b)`, positive counter-clockwise).
fn bulge_arc(x0: f64, y0: f64, x1: f64, y1: f64, b: f64) -> (f64, f64, f64, f64, f64) {
    let theta = 4.0 * b.atan();
    let (dx, dy) = (x1 - x0, y1 - y0);
    let chord = (dx * dx + dy * dy).sqrt();
    let r = chord / (2.0 * (theta / 2.0).sin().abs());
    // Distance from the chord's midpoint to the centre, signed to the left of the chord.
    let h = r * (theta / 2.0).cos() * theta.signum();
    let (mx, my) = ((x0 + x1) / 2.0, (y0 + y1) / 2.0);
    let (cx, cy) = (mx - h * dy / chord, my + h * dx / chord);
    let start = (y0 - cy).atan2(x0 - cx).to_degrees();
    (cx, cy, r, start, theta.to_degrees())
}

/// The insert's own transform for one array instance: block base point to the origin,
/// scale, array offset, rotation, then to the insertion point.
fn insert_transform(i: &Insert, block: &dxf::Block, col_dx: f64, row_dy: f64) -> Affine {
    let sx = if i.x_scale_factor == 0.0 {
        1.0
    } else {
        i.x_scale_factor
    };
    let sy = if i.y_scale_factor == 0.0 {
        1.0
    } else {
        i.y_scale_factor
    };
    Affine::translate(i.location.x, i.location.y)
        .then_after(&Affine::rotate_deg(i.rotation))
        .then_after(&Affine::translate(col_dx, row_dy))
        .then_after(&Affine::scale(sx, sy))
        .then_after(&Affine::translate(-block.base_point.x, -block.base_point.y))
}

/// The entity's object coordinate system in the plan: an extrusion of (0, 0, −1) mirrors x
/// (the DXF arbitrary-axis rule); one that is not vertical leaves the plan plane (`None`).
fn extrusion(m: &Affine, e: &EntityType) -> Option<Affine> {
    let z = match e {
        EntityType::LwPolyline(p) => p.extrusion_direction.z,
        EntityType::Polyline(p) => p.normal.z,
        EntityType::Arc(a) => a.normal.z,
        EntityType::Circle(c) => c.normal.z,
        EntityType::Insert(i) => i.extrusion_direction.z,
        _ => return Some(*m),
    };
    if z > 0.999_999 {
        Some(*m)
    } else if z < -0.999_999 {
        Some(m.then_after(&Affine::scale(-1.0, 1.0)))
    } else {
        None
    }
}

/// The DXF name of an entity kind that the importer does not draw.
fn kind_name(e: &EntityType) -> String {
    let dbg = format!("{e:?}");
    let name: String = dbg.chars().take_while(|c| c.is_alphanumeric()).collect();
    name.to_uppercase()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_array_of_empty_blocks_stops_at_the_visit_bound() {
        // 30 000 x 30 000 instances of a block holding only text: nothing is drawn, and
        // without a bound on visits the walk would take 9e8 steps per nesting level.
        let mut d = Drawing::new();
        let mut b = dxf::Block {
            name: "EMPTY".into(),
            ..Default::default()
        };
        b.entities
            .push(Entity::new(EntityType::Text(Default::default())));
        d.add_block(b);
        let mut i = Insert {
            name: "EMPTY".into(),
            ..Default::default()
        };
        (i.column_count, i.row_count) = (30_000, 30_000);
        d.add_entity(Entity::new(EntityType::Insert(i)));
        let never = |_: &str| false;
        let spec = FlattenSpec {
            placement: Affine::IDENTITY,
            chord_tolerance: 0.01,
            is_opening: &never,
        };
        assert!(flatten(&d, &spec).is_err());
    }

    #[test]
    fn sagitta_rule_counts_chords() {
        // r = 1, tol = 1 − cos(π/8) ≈ 0.0761: each chord spans π/4, so a half turn needs 4.
        let tol = 1.0 - (std::f64::consts::PI / 8.0).cos();
        assert_eq!(chords(1.0, std::f64::consts::PI, tol * 1.000_001), 4);
    }

    #[test]
    fn bulge_one_is_a_half_circle() {
        // Bulge 1 = tan(180°/4): (0,0) to (2,0) counter-clockwise about (1,0), radius 1,
        // passing below the chord (DXF convention: positive bulge turns left from p0).
        let (cx, cy, r, start, sweep) = bulge_arc(0.0, 0.0, 2.0, 0.0, 1.0);
        assert!((cx - 1.0).abs() < 1e-12 && cy.abs() < 1e-12 && (r - 1.0).abs() < 1e-12);
        assert!((start.abs() - 180.0).abs() < 1e-9 && (sweep - 180.0).abs() < 1e-9);
    }
}
