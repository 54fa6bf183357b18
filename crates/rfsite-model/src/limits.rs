//! The limits rfsite states and enforces at load, before any work starts (README
//! "Limits"): a site beyond one is refused with its location and what would fit, never
//! run into an allocation failure or an hours-long prediction.
//!
//! The grid counts here are those of the prediction grid itself
//! ([`crate::Site::floor_grid`] calls [`grid_of`]): the outline's bounding box at the grid
//! step, cell centres row-major.

use rfsite_geometry::{Grid, Point2};

/// Largest coordinate, elevation or length, in metres, either sign: 100 km. A building
/// is drawn from a local origin; a larger number is a unit or typing error (or map
/// coordinates), and `1e300` would overflow the grid size.
pub const MAX_COORD_M: f64 = 100_000.0;

/// Most prediction points on one floor: 4 000 000 (a 1 km × 1 km floor at a 0.5 m
/// step). Each model keeps a level and a best server per point and service, and the map
/// of the floor is drawn from them.
pub const MAX_POINTS_PER_FLOOR: u64 = 4_000_000;

/// Most prediction points over all floors: 20 000 000.
pub const MAX_POINTS: u64 = 20_000_000;

/// Fewest prediction points inside a floor's outline: 4. With fewer, the area fractions
/// that grade the floor are made of one or two points (or none).
pub const MIN_POINTS_PER_FLOOR: u64 = 4;

/// Most point–transmitter pairs of one service over all floors (its transmitters times
/// the points of every floor): 1 000 000 000, about 130 times the 20-floor tower example.
/// The prediction's time grows with it.
pub const MAX_PAIRS_PER_SERVICE: u64 = 1_000_000_000;

/// Most point–transmitter pairs of one service on one floor (the floor's points times the
/// service's transmitters): 100 000 000. The multi-wall prediction holds one 4-byte level
/// per transmitter of the service at every point of the floor while it combines them:
/// at most 400 MB.
pub const MAX_PAIRS_PER_FLOOR: u64 = 100_000_000;

/// Most point-in-polygon vertex tests on one floor: its points times the vertices of its
/// outline and of its zones, 2 000 000 000. Every point is tested against the outline
/// (is it on the floor?) and against each zone (which kind of area?).
pub const MAX_POLYGON_TESTS_PER_FLOOR: u64 = 2_000_000_000;

/// Most `[[floors]]`: 200 (the tallest buildings have about 160 storeys, from memory).
pub const MAX_FLOORS: usize = 200;
/// Most `[[walls]]` entries: 100 000.
pub const MAX_WALLS: usize = 100_000;
/// Most wall parts (straight pieces of wall, doors and windows) over the site: 200 000.
pub const MAX_WALL_PARTS: usize = 200_000;
/// Most `[[openings]]`: 100 000.
pub const MAX_OPENINGS: usize = 100_000;
/// Most `[[zones]]`: 5 000 (each is tested at every point of its floor).
pub const MAX_ZONES: usize = 5_000;
/// Most `[[services]]`: 32.
pub const MAX_SERVICES: usize = 32;
/// Most `[[transmitters]]`: 10 000; a best server is stored in 16 bits, with one value
/// kept for "none".
pub const MAX_TRANSMITTERS: usize = 10_000;
/// Most `[[donors]]`: 1 000.
pub const MAX_DONORS: usize = 1_000;
/// Most `[[materials]]`: 10 000.
pub const MAX_MATERIALS: usize = 10_000;
/// Most `[[surveys]]`: 10 000.
pub const MAX_SURVEYS: usize = 10_000;
/// Most `[[probes]]`: 10 000.
pub const MAX_PROBES: usize = 10_000;
/// Most `[[revisions]]`: 1 000.
pub const MAX_REVISIONS: usize = 1_000;
/// `[[what_if]]` options: each re-runs the prediction and the grading.
pub const MAX_WHAT_IFS: usize = 20;
/// Transmitters one what-if may add.
pub const MAX_WHAT_IF_TRANSMITTERS: usize = 200;
/// Most points in one outline, wall polyline or zone polygon: 10 000.
pub const MAX_POLYLINE_POINTS: usize = 10_000;

/// The prediction grid of an outline at `step_m`: its bounding box, covered.
pub fn grid_of(outline: &[Point2], step_m: f64) -> Grid {
    let (min, max) = rfsite_geometry::polygon_bbox(outline);
    Grid::covering(min, max, step_m)
}

/// Points of the prediction grid of an outline at `step_m`, without overflow.
pub fn grid_points(outline: &[Point2], step_m: f64) -> u64 {
    let g = grid_of(outline, step_m);
    (g.nx as u64).saturating_mul(g.ny as u64)
}

/// Grid points inside the outline at `step_m`, counted up to `enough` (the count stops
/// there). Points are tested as the prediction tests them.
pub fn points_inside(outline: &[Point2], step_m: f64, enough: u64) -> u64 {
    let g = grid_of(outline, step_m);
    let mut n = 0;
    for p in g.points() {
        if rfsite_geometry::point_in_polygon(p, outline) {
            n += 1;
            if n >= enough {
                break;
            }
        }
    }
    n
}

/// The smallest step (m), not below `from`, at which `count(step) <= limit`; `count`
/// must not grow as the step grows (true of every grid count: each axis has
/// `ceil(span / step)` cells, at least one). `None` if not even a 1 000 km step fits.
pub fn smallest_step(limit: u64, from: f64, count: impl Fn(f64) -> u64) -> Option<f64> {
    let mut lo = from.max(1e-6);
    if count(lo) <= limit {
        return Some(lo);
    }
    let mut hi = lo;
    while count(hi) > limit {
        lo = hi;
        hi *= 2.0;
        if hi > 1e6 {
            return None;
        }
    }
    for _ in 0..64 {
        let mid = 0.5 * (lo + hi);
        if count(mid) <= limit {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Some(hi)
}

/// `x` rounded up to a multiple of 0.01 (a step to print: never below the one needed).
pub fn round_up_cm(x: f64) -> f64 {
    let r = (x * 100.0).ceil() / 100.0;
    if r < x {
        r + 0.01
    } else {
        r
    }
}

/// `x` rounded down to a multiple of 0.01, or to three significant digits below 0.1.
pub fn round_down_cm(x: f64) -> f64 {
    if x >= 0.1 {
        (x * 100.0).floor() / 100.0
    } else {
        let scale = 10f64.powi(2 - x.log10().floor() as i32);
        (x * scale).floor() / scale
    }
}

/// A count with spaces between thousands: `4 000 000`.
pub fn thousands(n: u64) -> String {
    let s = n.to_string();
    let mut out = String::new();
    for (i, c) in s.chars().enumerate() {
        if i > 0 && (s.len() - i).is_multiple_of(3) {
            out.push(' ');
        }
        out.push(c);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rect(w: f64, h: f64) -> Vec<Point2> {
        vec![
            Point2::new(0.0, 0.0),
            Point2::new(w, 0.0),
            Point2::new(w, h),
            Point2::new(0.0, h),
        ]
    }

    #[test]
    fn grid_points_are_the_prediction_grid() {
        // Hand count: 1000 m / 0.5 m = 2000 cells per axis.
        assert_eq!(grid_points(&rect(1000.0, 1000.0), 0.5), 4_000_000);
        // 1000 m / 0.3 m = 3333.3: 3334 cells (the last one partly outside).
        assert_eq!(grid_points(&rect(1000.0, 1.0), 0.3), 3334 * 4);
        // Non-finite corners give an empty grid, never an overflow.
        let huge = rect(1e300, 1e300);
        assert!(grid_points(&huge, 0.05) > 0);
    }

    #[test]
    fn smallest_step_meets_the_limit_and_no_smaller_does() {
        // 1000 m x 1000 m at most 4 000 000 points: ceil(1000 / s)^2 <= 4e6 holds from
        // s = 0.5 m exactly (hand calculation).
        let o = rect(1000.0, 1000.0);
        let s = smallest_step(4_000_000, 0.05, |s| grid_points(&o, s)).unwrap();
        assert!((s - 0.5).abs() < 1e-9, "{s}");
        assert_eq!(round_up_cm(s), 0.5);
        assert!(grid_points(&o, s) <= 4_000_000);
        assert!(grid_points(&o, s * (1.0 - 1e-6)) > 4_000_000);
        // Already within: the step given.
        assert_eq!(
            smallest_step(4_000_000, 1.0, |s| grid_points(&o, s)),
            Some(1.0)
        );
    }

    #[test]
    fn points_inside_stops_at_enough() {
        let o = rect(10.0, 10.0);
        assert_eq!(points_inside(&o, 1.0, 4), 4);
        assert_eq!(points_inside(&o, 1.0, u64::MAX), 100);
        // A 1e6 m step: one cell, its centre outside the 10 m square.
        assert_eq!(points_inside(&o, 1e6, 4), 0);
    }

    #[test]
    fn rounding_and_separators() {
        assert_eq!(round_up_cm(0.4112), 0.42);
        assert_eq!(round_up_cm(0.42), 0.42);
        assert_eq!(round_down_cm(3.338), 3.33);
        assert_eq!(round_down_cm(0.01234), 0.0123);
        assert_eq!(thousands(4_000_000), "4 000 000");
        assert_eq!(thousands(999), "999");
        assert_eq!(thousands(1000), "1 000");
    }
}
