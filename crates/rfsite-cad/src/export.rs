//! Drawings out: polylines and filled rectangles on named layers, as an ASCII DXF that CAD
//! programs overlay on the architect's plans. The file is release 12 (AC1009): POLYLINE and
//! SOLID entities, no object handles, the structure every DXF reader accepts (written here
//! rather than through the `dxf` crate, whose R12 output carries R13 subclass markers that
//! other readers reject). R12 has no units variable: coordinates are metres by the caller's
//! statement (the README says so). Nothing depends on the clock: same input, same bytes.

use std::fmt::Write as _;

use rfsite_geometry::Point2;

/// One layer of an exported drawing.
#[derive(Debug, Clone, Default)]
pub struct ExportLayer {
    /// Layer name (CAD programs show it in their layer list).
    pub name: String,
    /// AutoCAD Color Index of the layer (1 red, 3 green, 5 blue, ...).
    pub colour: u8,
    /// Polylines (a closed one repeats its first point at the end; it is written closed).
    pub polylines: Vec<Vec<Point2>>,
    /// Filled axis-aligned rectangles: lower-left and upper-right corners.
    pub rectangles: Vec<(Point2, Point2)>,
}

/// Writes `layers` as an ASCII DXF (R12): header, a layer table, the entities.
pub fn write_dxf(layers: &[ExportLayer]) -> Vec<u8> {
    let mut w = Groups::default();
    header(&mut w, layers);
    tables(&mut w, layers);
    w.pair(0, "SECTION");
    w.pair(2, "ENTITIES");
    for l in layers {
        for p in l.polylines.iter().filter(|p| p.len() >= 2) {
            polyline(&mut w, &l.name, p);
        }
        for &(lo, hi) in &l.rectangles {
            rectangle(&mut w, &l.name, lo, hi);
        }
    }
    w.pair(0, "ENDSEC");
    w.pair(0, "EOF");
    w.0.into_bytes()
}

/// DXF text: group code and value lines.
#[derive(Default)]
struct Groups(String);

impl Groups {
    /// One group: the code right-aligned in three columns, then the value.
    fn pair(&mut self, code: u16, value: impl std::fmt::Display) {
        let _ = write!(self.0, "{code:>3}\n{value}\n");
    }

    /// A point's x, y (and z = 0) under codes `10 + k`, `20 + k`, `30 + k`.
    fn point(&mut self, k: u16, p: Point2) {
        self.pair(10 + k, num(p.x));
        self.pair(20 + k, num(p.y));
        self.pair(30 + k, "0.0");
    }
}

/// A coordinate as DXF text: shortest round-trip form, always with a decimal point.
fn num(x: f64) -> String {
    let s = format!("{x:?}");
    if s.contains('.') || s.contains('e') {
        s
    } else {
        format!("{s}.0")
    }
}

/// The header: release 12 and the drawing's extents.
fn header(w: &mut Groups, layers: &[ExportLayer]) {
    let pts = layers.iter().flat_map(|l| {
        let rects = l.rectangles.iter().flat_map(|&(a, b)| [a, b]);
        l.polylines.iter().flatten().copied().chain(rects)
    });
    let (mut lo, mut hi) = (Point2::new(0.0, 0.0), Point2::new(0.0, 0.0));
    for (i, p) in pts.enumerate() {
        if i == 0 {
            (lo, hi) = (p, p);
        }
        lo = Point2::new(lo.x.min(p.x), lo.y.min(p.y));
        hi = Point2::new(hi.x.max(p.x), hi.y.max(p.y));
    }
    w.pair(0, "SECTION");
    w.pair(2, "HEADER");
    w.pair(9, "$ACADVER");
    w.pair(1, "AC1009");
    w.pair(9, "$EXTMIN");
    w.point(0, lo);
    w.pair(9, "$EXTMAX");
    w.point(0, hi);
    w.pair(0, "ENDSEC");
}

/// The line type and layer tables.
fn tables(w: &mut Groups, layers: &[ExportLayer]) {
    w.pair(0, "SECTION");
    w.pair(2, "TABLES");
    w.pair(0, "TABLE");
    w.pair(2, "LTYPE");
    w.pair(70, 1);
    w.pair(0, "LTYPE");
    w.pair(2, "CONTINUOUS");
    w.pair(70, 0);
    w.pair(3, "Solid line");
    w.pair(72, 65);
    w.pair(73, 0);
    w.pair(40, "0.0");
    w.pair(0, "ENDTAB");
    w.pair(0, "TABLE");
    w.pair(2, "LAYER");
    w.pair(70, layers.len() + 1);
    for (name, colour) in
        std::iter::once(("0", 7)).chain(layers.iter().map(|l| (l.name.as_str(), l.colour)))
    {
        w.pair(0, "LAYER");
        w.pair(2, name);
        w.pair(70, 0);
        w.pair(62, colour);
        w.pair(6, "CONTINUOUS");
    }
    w.pair(0, "ENDTAB");
    w.pair(0, "ENDSEC");
}

/// A 2-D POLYLINE through `pts` with its VERTEX entities and SEQEND, closed (flag 1)
/// when its ends coincide.
fn polyline(w: &mut Groups, layer: &str, pts: &[Point2]) {
    let closed = pts.len() > 2 && pts.first() == pts.last();
    let keep = if closed { &pts[..pts.len() - 1] } else { pts };
    w.pair(0, "POLYLINE");
    w.pair(8, layer);
    w.pair(66, 1);
    w.point(0, Point2::new(0.0, 0.0));
    w.pair(70, u8::from(closed));
    for &q in keep {
        w.pair(0, "VERTEX");
        w.pair(8, layer);
        w.point(0, q);
    }
    w.pair(0, "SEQEND");
    w.pair(8, layer);
}

/// A filled rectangle. SOLID corners go in "Z" order: the third corner sits under the
/// first and the fourth under the second (the DXF reference's SOLID definition).
fn rectangle(w: &mut Groups, layer: &str, lo: Point2, hi: Point2) {
    w.pair(0, "SOLID");
    w.pair(8, layer);
    w.point(0, Point2::new(lo.x, hi.y));
    w.point(1, Point2::new(hi.x, hi.y));
    w.point(2, Point2::new(lo.x, lo.y));
    w.point(3, Point2::new(hi.x, lo.y));
}

#[cfg(test)]
mod tests {
    use super::*;
    use dxf::entities::EntityType;
    use dxf::Drawing;

    /// Written, then read back with the `dxf` crate: layers, a closed polyline, a rectangle.
    #[test]
    fn round_trips_through_the_dxf_crate() {
        let l = ExportLayer {
            name: "coverage-L1.ps".into(),
            colour: 1,
            polylines: vec![vec![
                Point2::new(0.0, 0.0),
                Point2::new(1.5, 0.0),
                Point2::new(1.0, 1.0),
                Point2::new(0.0, 0.0),
            ]],
            rectangles: vec![(Point2::new(2.0, 2.0), Point2::new(3.0, 4.0))],
        };
        let bytes = write_dxf(&[l]);
        let d = Drawing::load(&mut bytes.as_slice()).unwrap();
        let ents: Vec<_> = d.entities().collect();
        assert_eq!(ents.len(), 2);
        assert!(ents.iter().all(|e| e.common.layer == "coverage-L1.ps"));
        match &ents[0].specific {
            EntityType::Polyline(p) => {
                assert!(p.is_closed());
                let xs: Vec<f64> = p.vertices().map(|v| v.location.x).collect();
                assert_eq!(xs, [0.0, 1.5, 1.0]);
            }
            other => panic!("{other:?}"),
        }
        match &ents[1].specific {
            EntityType::Solid(s) => {
                assert_eq!((s.first_corner.x, s.first_corner.y), (2.0, 4.0));
                assert_eq!((s.fourth_corner.x, s.fourth_corner.y), (3.0, 2.0));
            }
            other => panic!("{other:?}"),
        }
        assert!(d
            .layers()
            .any(|l| l.name == "coverage-L1.ps" && l.color.index() == Some(1)));
    }

    #[test]
    fn numbers_keep_a_decimal_point_and_round_trip() {
        assert_eq!(num(2.0), "2.0");
        assert_eq!(num(-0.125), "-0.125");
        let x = 12.345_678_901_234_5;
        assert_eq!(num(x).parse::<f64>().unwrap(), x);
    }
}
