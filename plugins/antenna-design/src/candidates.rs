//! Candidate ceiling positions on a floor: a square grid inside the outline, outside
//! excluded and forbidden zones, clear of walls, plus the mounts the site allows; those
//! within λ/16 of a standing-wave null in front of a strongly reflecting surface are left
//! out, and a chosen antenna near such a surface is moved onto a peak (a quarter-wave
//! from a conductor).

use rfsite_geometry::{
    distance_point_segment, point_in_polygon, polygon_bbox, Grid, Point2, Segment,
};
use rfsite_model::{Floor, ZoneKind};

use crate::options::DesignOptions;

/// The standing wave in front of one strongly reflecting surface, for one service (read
/// from the reflection-nulls plugin's output).
#[derive(Debug, Clone, PartialEq)]
pub struct Standing {
    /// Wall part ids of the reflecting material.
    pub walls: Vec<String>,
    /// Material id.
    pub material: String,
    /// Null distances from the surface, m.
    pub nulls_m: Vec<f64>,
    /// Peak distances from the surface, m.
    pub peaks_m: Vec<f64>,
    /// Wavelength, m.
    pub wavelength_m: f64,
}

/// The reflectors of a service in the reflection-nulls output (`extra.reflectors`).
pub fn standing_waves(extra: Option<&serde_json::Value>, service: &str) -> Vec<Standing> {
    let Some(list) = extra.and_then(|v| v.as_array()) else {
        return Vec::new();
    };
    list.iter()
        .filter(|r| r.get("service").and_then(|s| s.as_str()) == Some(service))
        .filter_map(standing)
        .collect()
}

fn standing(r: &serde_json::Value) -> Option<Standing> {
    let nums = |k: &str| -> Vec<f64> {
        r.get(k)
            .and_then(|v| v.as_array())
            .map(|a| a.iter().filter_map(|x| x.as_f64()).collect())
            .unwrap_or_default()
    };
    let walls = r.get("walls")?.as_array()?;
    Some(Standing {
        walls: walls
            .iter()
            .filter_map(|w| w.as_str().map(String::from))
            .collect(),
        material: r.get("material")?.as_str()?.to_string(),
        nulls_m: nums("nulls_m"),
        peaks_m: nums("peaks_m"),
        wavelength_m: r.get("wavelength_m")?.as_f64()?,
    })
}

/// The segments of `floor` that belong to a reflector.
fn surfaces<'a>(floor: &'a Floor, s: &'a Standing) -> impl Iterator<Item = (&'a Segment, &'a str)> {
    floor
        .parts
        .iter()
        .filter(|p| s.walls.contains(&p.id))
        .map(|p| (&p.segment, p.id.as_str()))
}

/// Whether `p` lies within λ/16 of a null of any reflector on the floor.
pub fn near_null(floor: &Floor, waves: &[Standing], p: Point2) -> bool {
    waves.iter().any(|s| {
        let tol = s.wavelength_m / 16.0;
        surfaces(floor, s).any(|(seg, _)| {
            let d = distance_point_segment(p, seg);
            s.nulls_m.iter().any(|n| (d - n).abs() < tol)
        })
    })
}

/// Where to mount an antenna designed at `p`: moved along the surface normal onto the
/// nearest standing-wave peak of the closest reflector within its listed range, with a
/// note for the installer; unchanged (and no note) when no reflector is that close.
pub fn mounting(floor: &Floor, waves: &[Standing], p: Point2) -> (Point2, String) {
    let mut best: Option<(f64, &Segment, &str, &Standing)> = None;
    for s in waves {
        let reach = s.peaks_m.iter().copied().fold(0.0, f64::max);
        for (seg, id) in surfaces(floor, s) {
            let d = distance_point_segment(p, seg);
            if d <= reach && best.is_none_or(|b| d < b.0) {
                best = Some((d, seg, id, s));
            }
        }
    }
    let Some((d, seg, id, s)) = best else {
        return (p, String::new());
    };
    let Some(peak) = s
        .peaks_m
        .iter()
        .copied()
        .min_by(|a, b| (a - d).abs().total_cmp(&(b - d).abs()))
    else {
        return (p, String::new());
    };
    let away = away_from(seg, p);
    let moved = Point2::new(p.x + away.x * (peak - d), p.y + away.y * (peak - d));
    let note = format!(
        "{:.2} m from wall {id} ({}): on a standing-wave peak in front of it, not in a null (λ = {:.3} m)",
        peak, s.material, s.wavelength_m
    );
    (moved, note)
}

/// The unit normal of `seg` pointing to the side `p` is on.
fn away_from(seg: &Segment, p: Point2) -> Point2 {
    let n = seg.normal();
    let side = (p.x - seg.a.x) * n.x + (p.y - seg.a.y) * n.y;
    if side < 0.0 {
        Point2::new(-n.x, -n.y)
    } else {
        n
    }
}

/// Whether an antenna may go at `p` on `floor`.
fn allowed(floor: &Floor, o: &DesignOptions, waves: &[Standing], p: Point2) -> bool {
    point_in_polygon(p, &floor.outline)
        && floor.zone_kind_at(p) != ZoneKind::Excluded
        && !o
            .forbid
            .iter()
            .any(|z| z.floor == floor.id && point_in_polygon(p, &z.polygon))
        && floor
            .parts
            .iter()
            .all(|w| distance_point_segment(p, &w.segment) >= o.clearance_m)
        && !near_null(floor, waves, p)
}

/// The candidate positions of one floor, in a fixed order (grid rows, then mounts).
pub fn candidates(floor: &Floor, o: &DesignOptions, waves: &[Standing]) -> Vec<Point2> {
    let (lo, hi) = polygon_bbox(&floor.outline);
    let grid = Grid::covering(lo, hi, o.spacing_m);
    let mut out: Vec<Point2> = grid
        .points()
        .filter(|p| allowed(floor, o, waves, *p))
        .collect();
    out.extend(
        o.mounts
            .iter()
            .filter(|m| m.floor == floor.id)
            .map(|m| m.at)
            .filter(|p| point_in_polygon(*p, &floor.outline) && !near_null(floor, waves, *p)),
    );
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use rfsite_model::{PartKind, WallPart};

    /// A floor with one steel wall along y = 0 from x = 0 to 10.
    fn floor() -> Floor {
        Floor {
            id: "L1".into(),
            name: "L1".into(),
            elevation_m: 0.0,
            height_m: 3.0,
            slab_material: "concrete-floor-slab".into(),
            slab_thickness_m: 0.2,
            outline: vec![
                Point2::new(0.0, 0.0),
                Point2::new(10.0, 0.0),
                Point2::new(10.0, 10.0),
                Point2::new(0.0, 10.0),
            ],
            parts: vec![WallPart {
                id: "steel".into(),
                segment: Segment {
                    a: Point2::new(0.0, 0.0),
                    b: Point2::new(10.0, 0.0),
                },
                material: "metal".into(),
                thickness_m: 0.002,
                kind: PartKind::Wall,
            }],
            zones: Vec::new(),
            plan_image: None,
            plan_m_per_px: 0.05,
            plan_offset: Point2::default(),
            cad: None,
        }
    }

    /// In front of a perfect conductor the field has nulls at n·λ/2 and peaks at
    /// (2n + 1)·λ/4 from the surface (standing wave of a normally incident plane wave,
    /// textbook); λ = 0.4 m here.
    fn steel_wave() -> Standing {
        let lambda = 0.4;
        Standing {
            walls: vec!["steel".into()],
            material: "metal".into(),
            nulls_m: (0..10).map(|n| n as f64 * lambda / 2.0).collect(),
            peaks_m: (0..10).map(|n| (2 * n + 1) as f64 * lambda / 4.0).collect(),
            wavelength_m: lambda,
        }
    }

    #[test]
    fn a_point_within_lambda_over_16_of_a_null_is_skipped() {
        let (f, w) = (floor(), vec![steel_wave()]);
        // λ/16 = 0.025 m: 1.21 m is 0.01 m from the null at 1.2 m, 1.25 m is 0.05 m away.
        assert!(near_null(&f, &w, Point2::new(5.0, 1.21)));
        assert!(!near_null(&f, &w, Point2::new(5.0, 1.25)));
        assert!(!near_null(&f, &[], Point2::new(5.0, 1.2)));
    }

    #[test]
    fn an_antenna_near_the_conductor_moves_onto_the_nearest_peak() {
        let (f, w) = (floor(), vec![steel_wave()]);
        // 1.25 m from the steel: the nearest peak is 1.3 m (= 13 λ/4).
        let (p, note) = mounting(&f, &w, Point2::new(5.0, 1.25));
        assert!(
            (p.y - 1.3).abs() < 1e-9 && (p.x - 5.0).abs() < 1e-9,
            "{p:?}"
        );
        assert!(note.contains("steel"));
        // Beyond the listed peaks (the last is 3.8 m): left where it is.
        let (q, none) = mounting(&f, &w, Point2::new(5.0, 6.0));
        assert_eq!((q, none.as_str()), (Point2::new(5.0, 6.0), ""));
    }
}
