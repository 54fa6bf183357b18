//! Coverage handed back to the architect: per floor and service, the graded grid as CSV,
//! and the required-level contours and failing areas as DXF and GeoJSON, all in the
//! site's plan coordinates (metres).
//!
//! The layers exported are the ones the coverage maps draw (each service's graded model),
//! split at the level its verdict uses (`required.predicted_dbm`), so the files, the maps
//! and findings.json agree.

use std::fmt::Write as _;

use rfsite_cad::export::{write_dxf, ExportLayer};
use rfsite_geometry::{cell_regions, level_contours, CellRegion, Grid, Point2};
use rfsite_model::names::figure_stem;
use rfsite_model::Site;
use rfsite_plugin::{Assessment, CoverageLayer, ServiceResult};
use serde_json::{json, Value};

use crate::options::{floor_name, service_name};

/// AutoCAD Color Index per service, in service order: red, blue, green, magenta, orange,
/// cyan (common practice: distinct on white and black model space).
const ACI: [u8; 6] = [1, 5, 3, 6, 30, 4];

/// One graded layer and what is exported of it.
struct Graded<'a> {
    layer: &'a CoverageLayer,
    service: &'a ServiceResult,
    grid: Grid,
    contours: Vec<Vec<Point2>>,
    failing: Vec<bool>,
}

/// The export files: `exports/coverage-<floor>.<service>.csv` per graded layer, plus
/// `exports/coverage.dxf` and `exports/coverage.geojson`; none when nothing is graded.
pub fn exports(site: &Site, a: &Assessment) -> Result<Vec<(String, Vec<u8>)>, String> {
    let graded = graded_layers(a);
    if graded.is_empty() {
        return Ok(Vec::new());
    }
    let mut out = Vec::new();
    for g in &graded {
        let name = figure_stem("coverage", &[&g.layer.floor, &g.layer.service]);
        out.push((format!("exports/{name}.csv"), grid_csv(g).into_bytes()));
    }
    let layers: Vec<ExportLayer> = graded.iter().map(|g| dxf_layer(a, g)).collect();
    out.push(("exports/coverage.dxf".into(), write_dxf(&layers)));
    let geo = geojson(site, &graded);
    let text = serde_json::to_string_pretty(&geo).map_err(|e| e.to_string())?;
    out.push((
        "exports/coverage.geojson".into(),
        format!("{text}\n").into_bytes(),
    ));
    Ok(out)
}

/// The layers the maps draw, with their contours and failing cells.
fn graded_layers(a: &Assessment) -> Vec<Graded<'_>> {
    let mut out = Vec::new();
    for s in &a.services {
        let required = s.required.predicted_dbm;
        for l in a
            .layers
            .iter()
            .filter(|l| l.service == s.id && l.model == s.model)
        {
            let grid = l.grid.to_grid();
            if l.level_dbm.len() != grid.len() || !required.is_finite() {
                continue;
            }
            let failing = l
                .level_dbm
                .iter()
                .map(|v| v.is_finite() && f64::from(*v) < required)
                .collect();
            out.push(Graded {
                contours: level_contours(&grid, &l.level_dbm, required),
                layer: l,
                service: s,
                grid,
                failing,
            });
        }
    }
    out
}

/// Millimetre-rounded coordinate for the text outputs.
fn mm(x: f64) -> f64 {
    (x * 1000.0).round() / 1000.0
}

/// The grid as CSV: one row per point inside the floor (x, y in metres to 1 mm, the level
/// in dBm exactly as computed (shortest text that reads back to the same value), the best
/// server's id or empty).
fn grid_csv(g: &Graded<'_>) -> String {
    let mut s = String::from("x_m,y_m,level_dbm,best_server\n");
    for (i, v) in g.layer.level_dbm.iter().enumerate() {
        if !v.is_finite() {
            continue;
        }
        let p = g.grid.point(i);
        let server = g
            .layer
            .best_server
            .get(i)
            .and_then(|&k| g.layer.servers.get(usize::from(k)))
            .map(String::as_str)
            .unwrap_or("");
        let _ = writeln!(s, "{:.3},{:.3},{v},{server}", p.x, p.y);
    }
    s
}

/// The DXF layer of a graded layer: contours as polylines, failing cells as filled
/// rectangles (runs along rows).
fn dxf_layer(a: &Assessment, g: &Graded<'_>) -> ExportLayer {
    let k = a
        .services
        .iter()
        .position(|s| s.id == g.service.id)
        .unwrap_or(0);
    ExportLayer {
        name: figure_stem("coverage", &[&g.layer.floor, &g.layer.service]),
        colour: ACI[k % ACI.len()],
        polylines: g.contours.clone(),
        rectangles: row_runs(&g.grid, &g.failing),
    }
}

/// The masked cells merged along rows into rectangles (lower-left, upper-right).
fn row_runs(grid: &Grid, mask: &[bool]) -> Vec<(Point2, Point2)> {
    let mut out = Vec::new();
    let (o, s) = (grid.origin, grid.step_m);
    for iy in 0..grid.ny {
        let row = &mask[iy * grid.nx..(iy + 1) * grid.nx];
        let mut ix = 0;
        while ix < grid.nx {
            if !row[ix] {
                ix += 1;
                continue;
            }
            let start = ix;
            while ix < grid.nx && row[ix] {
                ix += 1;
            }
            out.push((
                Point2::new(o.x + start as f64 * s, o.y + iy as f64 * s),
                Point2::new(o.x + ix as f64 * s, o.y + (iy + 1) as f64 * s),
            ));
        }
    }
    out
}

/// The GeoJSON FeatureCollection: per graded layer a MultiLineString of contours and a
/// MultiPolygon of failing areas. Coordinates are plan metres, not longitude and latitude
/// (RFC 7946 §4 allows another reference system by prior arrangement; the README says so).
fn geojson(site: &Site, graded: &[Graded<'_>]) -> Value {
    let mut features = Vec::new();
    for g in graded {
        let props = |kind: &str| {
            json!({
                "kind": kind,
                "floor": g.layer.floor,
                "floor_name": floor_name(site, &g.layer.floor),
                "service": g.service.id,
                "service_name": service_name(site, &g.service.id),
                "model": g.layer.model,
                "required_dbm": g.service.required.predicted_dbm,
            })
        };
        let lines: Vec<Value> = g.contours.iter().map(|c| ring_json(c)).collect();
        features.push(json!({
            "type": "Feature",
            "properties": props("required-level contour"),
            "geometry": {"type": "MultiLineString", "coordinates": lines},
        }));
        let polys: Vec<Value> = cell_regions(&g.grid, &g.failing)
            .iter()
            .map(region_json)
            .collect();
        features.push(json!({
            "type": "Feature",
            "properties": props("failing area"),
            "geometry": {"type": "MultiPolygon", "coordinates": polys},
        }));
    }
    json!({
        "type": "FeatureCollection",
        "rfsite": {"coordinates": "site plan, metres", "site": site.meta.id, "revision": site.meta.revision},
        "features": features,
    })
}

/// A point list as GeoJSON positions.
fn ring_json(pts: &[Point2]) -> Value {
    Value::Array(pts.iter().map(|p| json!([mm(p.x), mm(p.y)])).collect())
}

/// A region as GeoJSON polygon rings: outer first, then holes.
fn region_json(r: &CellRegion) -> Value {
    let mut rings = vec![ring_json(&r.outer)];
    rings.extend(r.holes.iter().map(|h| ring_json(h)));
    Value::Array(rings)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Hand count: a 4×2 mask with runs of 2 and 1 in row 0 and 3 in row 1 gives three
    /// rectangles covering 6 cells.
    #[test]
    fn row_runs_cover_the_mask() {
        let g = Grid {
            origin: Point2::new(10.0, 20.0),
            step_m: 0.5,
            nx: 4,
            ny: 2,
        };
        let m = [true, true, false, true, false, true, true, true];
        let r = row_runs(&g, &m);
        assert_eq!(r.len(), 3);
        let area: f64 = r.iter().map(|(a, b)| (b.x - a.x) * (b.y - a.y)).sum();
        assert!((area - 6.0 * 0.25).abs() < 1e-12);
        assert_eq!(r[0].0, Point2::new(10.0, 20.0));
        assert_eq!(r[2].1, Point2::new(12.0, 21.0));
    }
}
