//! Level contours of a sampled grid (marching squares) and the outlines of a set of grid
//! cells, for exporting coverage to drawings and maps.
//!
//! Samples sit at the cell centres of a [`Grid`]. A contour vertex lies on the straight
//! line between two neighbouring samples, one at or above the level and one below, at the
//! linear interpolation of the level between them; saddle squares are resolved by the mean
//! of their four samples (the usual marching-squares rule, Lorensen & Cline 1987 in 2-D).
//! A square with a missing (non-finite) sample is skipped, so contours stop at the floor
//! outline. Cell outlines run along cell edges, outer rings counter-clockwise and holes
//! clockwise (the right-hand rule of RFC 7946 §3.1.6).

use std::collections::HashMap;

use crate::grid::Grid;
use crate::point::Point2;
use crate::polygon::point_in_polygon;

/// A grid edge between two neighbouring samples: `(ix, iy, vertical)`, from sample
/// `(ix, iy)` to `(ix + 1, iy)` (horizontal) or to `(ix, iy + 1)` (vertical).
type EdgeKey = (usize, usize, bool);
/// A lattice corner (column, row) of the cell edges.
type Corner = (usize, usize);
/// A directed cell edge, from corner to corner.
type LatticeEdge = (Corner, Corner);

/// One contour piece inside a square, from one crossed edge to another, the side at or
/// above the level on its left.
#[derive(Debug, Clone, Copy)]
struct Piece {
    from: EdgeKey,
    to: EdgeKey,
}

/// The contours of `values` (row-major over `grid`, one per cell) at `level`: polylines in
/// metres, the side at or above the level on the left; a closed loop repeats its first
/// point at the end. Values of the wrong length give no contours.
pub fn level_contours(grid: &Grid, values: &[f32], level: f64) -> Vec<Vec<Point2>> {
    if values.len() != grid.len() || grid.nx < 2 || grid.ny < 2 || !level.is_finite() {
        return Vec::new();
    }
    let at = |ix: usize, iy: usize| f64::from(values[iy * grid.nx + ix]);
    let mut pieces = Vec::new();
    for iy in 0..grid.ny - 1 {
        for ix in 0..grid.nx - 1 {
            square_pieces(&at, ix, iy, level, &mut pieces);
        }
    }
    chain(&pieces)
        .into_iter()
        .map(|keys| {
            keys.iter()
                .map(|&k| crossing(grid, &at, k, level))
                .collect()
        })
        .collect()
}

/// The pieces of square `(ix, iy)` (samples `(ix, iy)` to `(ix + 1, iy + 1)`).
fn square_pieces(
    at: &impl Fn(usize, usize) -> f64,
    ix: usize,
    iy: usize,
    level: f64,
    out: &mut Vec<Piece>,
) {
    let v = [
        at(ix, iy),
        at(ix + 1, iy),
        at(ix + 1, iy + 1),
        at(ix, iy + 1),
    ];
    if v.iter().any(|x| !x.is_finite()) {
        return;
    }
    let above: [bool; 4] = v.map(|x| x >= level);
    // Edges anticlockwise from the lower left sample: bottom, right, top, left; edge k runs
    // from corner k to corner k + 1.
    let edges: [EdgeKey; 4] = [
        (ix, iy, false),
        (ix + 1, iy, true),
        (ix, iy + 1, false),
        (ix, iy, true),
    ];
    let crossed: Vec<usize> = (0..4).filter(|&k| above[k] != above[(k + 1) % 4]).collect();
    let mut link = |a: usize, b: usize| {
        // Of two crossed edges, walked anticlockwise, one goes from above to below (its
        // first corner is above) and one back. A piece from the first to the second has
        // the corners above on its left.
        let (from, to) = if above[a] { (a, b) } else { (b, a) };
        out.push(Piece {
            from: edges[from],
            to: edges[to],
        });
    };
    match crossed.as_slice() {
        [a, b] => link(*a, *b),
        [_, _, _, _] => {
            let centre_above = v.iter().sum::<f64>() / 4.0 >= level;
            // Corner 0 and 2 alike. Cut off each corner of the kind the centre is not.
            let cut_odd = centre_above == above[0];
            if cut_odd {
                link(0, 1);
                link(2, 3);
            } else {
                link(3, 0);
                link(1, 2);
            }
        }
        _ => {}
    }
}

/// The point where the level crosses grid edge `k`.
fn crossing(grid: &Grid, at: &impl Fn(usize, usize) -> f64, k: EdgeKey, level: f64) -> Point2 {
    let (ix, iy, vertical) = k;
    let (jx, jy) = if vertical { (ix, iy + 1) } else { (ix + 1, iy) };
    let (va, vb) = (at(ix, iy), at(jx, jy));
    let t = if vb == va {
        0.0
    } else {
        ((level - va) / (vb - va)).clamp(0.0, 1.0)
    };
    let c = |i: usize, o: f64| o + (i as f64 + 0.5) * grid.step_m;
    let a = Point2::new(c(ix, grid.origin.x), c(iy, grid.origin.y));
    let b = Point2::new(c(jx, grid.origin.x), c(jy, grid.origin.y));
    Point2::new(a.x + t * (b.x - a.x), a.y + t * (b.y - a.y))
}

/// Joins pieces head to tail into chains of edge keys; open chains first start where no
/// piece ends, then closed loops (first key repeated at the end). Order follows the pieces.
fn chain(pieces: &[Piece]) -> Vec<Vec<EdgeKey>> {
    let mut by_from: HashMap<EdgeKey, usize> = HashMap::with_capacity(pieces.len());
    let mut ends = std::collections::HashSet::with_capacity(pieces.len());
    for (i, p) in pieces.iter().enumerate() {
        by_from.insert(p.from, i);
        ends.insert(p.to);
    }
    let mut used = vec![false; pieces.len()];
    let mut out = Vec::new();
    let starts = (0..pieces.len()).filter(|&i| !ends.contains(&pieces[i].from));
    let open: Vec<usize> = starts.collect();
    for start in open.into_iter().chain(0..pieces.len()) {
        if used[start] {
            continue;
        }
        let mut keys = vec![pieces[start].from];
        let mut i = start;
        loop {
            used[i] = true;
            keys.push(pieces[i].to);
            match by_from.get(&pieces[i].to) {
                Some(&n) if !used[n] => i = n,
                _ => break,
            }
        }
        out.push(keys);
    }
    out
}

/// One outlined region of cells: an outer ring and its holes, each closed (first point
/// repeated), outer anticlockwise, holes clockwise.
#[derive(Debug, Clone, PartialEq)]
pub struct CellRegion {
    /// The outer boundary.
    pub outer: Vec<Point2>,
    /// Boundaries of the holes.
    pub holes: Vec<Vec<Point2>>,
}

/// The regions covered by the cells of `grid` where `mask` is true (row-major), along cell
/// edges; cells that touch only at a corner are separate regions. A mask of the wrong
/// length gives none.
pub fn cell_regions(grid: &Grid, mask: &[bool]) -> Vec<CellRegion> {
    if mask.len() != grid.len() {
        return Vec::new();
    }
    let rings = trace_rings(grid, mask);
    let to_m = |(i, j): (usize, usize)| {
        Point2::new(
            grid.origin.x + i as f64 * grid.step_m,
            grid.origin.y + j as f64 * grid.step_m,
        )
    };
    let mut regions = Vec::new();
    let mut holes = Vec::new();
    for ring in rings {
        let pts: Vec<Point2> = ring.corners.iter().map(|&c| to_m(c)).collect();
        if ring.area2 > 0 {
            regions.push(CellRegion {
                outer: pts,
                holes: Vec::new(),
            });
        } else {
            holes.push((pts, ring.inside_probe));
        }
    }
    for (hole, probe) in holes {
        let p = Point2::new(
            grid.origin.x + probe.0 * grid.step_m,
            grid.origin.y + probe.1 * grid.step_m,
        );
        let host = regions
            .iter()
            .enumerate()
            .filter(|(_, r)| point_in_polygon(p, &r.outer))
            .min_by(|a, b| ring_area(&a.1.outer).total_cmp(&ring_area(&b.1.outer)))
            .map(|(i, _)| i);
        if let Some(i) = host {
            regions[i].holes.push(hole);
        }
    }
    regions
}

/// Absolute area of a closed ring.
fn ring_area(r: &[Point2]) -> f64 {
    let s: f64 = r
        .windows(2)
        .map(|w| w[0].x * w[1].y - w[1].x * w[0].y)
        .sum();
    (s / 2.0).abs()
}

/// A traced ring on the lattice of cell corners.
struct LatticeRing {
    /// Corners (lattice indices), closed, collinear corners removed.
    corners: Vec<(usize, usize)>,
    /// Twice the signed area in cells (positive: anticlockwise).
    area2: i64,
    /// A point just right of the first edge (lattice units): inside a hole.
    inside_probe: (f64, f64),
}

/// The boundary edges of the masked cells, each directed with its cell on the left:
/// start corner -> end corner.
fn boundary_edges(grid: &Grid, mask: &[bool]) -> Vec<LatticeEdge> {
    let (nx, ny) = (grid.nx, grid.ny);
    let on = |ix: isize, iy: isize| -> bool {
        ix >= 0
            && iy >= 0
            && (ix as usize) < nx
            && (iy as usize) < ny
            && mask[iy as usize * nx + ix as usize]
    };
    let mut out = Vec::new();
    for iy in 0..ny {
        for ix in 0..nx {
            if !mask[iy * nx + ix] {
                continue;
            }
            let (x, y) = (ix as isize, iy as isize);
            if !on(x, y - 1) {
                out.push(((ix, iy), (ix + 1, iy)));
            }
            if !on(x + 1, y) {
                out.push(((ix + 1, iy), (ix + 1, iy + 1)));
            }
            if !on(x, y + 1) {
                out.push(((ix + 1, iy + 1), (ix, iy + 1)));
            }
            if !on(x - 1, y) {
                out.push(((ix, iy + 1), (ix, iy)));
            }
        }
    }
    out
}

/// Follows the boundary edges into closed rings; at a corner where two cells touch
/// diagonally the walk turns left, which keeps such cells apart.
fn trace_rings(grid: &Grid, mask: &[bool]) -> Vec<LatticeRing> {
    let edges = boundary_edges(grid, mask);
    let mut from: HashMap<(usize, usize), Vec<usize>> = HashMap::with_capacity(edges.len());
    for (i, e) in edges.iter().enumerate() {
        from.entry(e.0).or_default().push(i);
    }
    let mut used = vec![false; edges.len()];
    let mut rings = Vec::new();
    for start in 0..edges.len() {
        if used[start] {
            continue;
        }
        let mut path = vec![edges[start].0];
        let mut i = start;
        while !used[i] {
            used[i] = true;
            path.push(edges[i].1);
            let next = from
                .get(&edges[i].1)
                .and_then(|c| leftmost(&edges, i, c, &used));
            match next {
                Some(n) => i = n,
                None => break,
            }
        }
        rings.push(lattice_ring(path));
    }
    rings
}

/// Of the unused edges `candidates` leaving the end of edge `i`, the one turning most to
/// the left.
fn leftmost(edges: &[LatticeEdge], i: usize, candidates: &[usize], used: &[bool]) -> Option<usize> {
    let dir = |e: &LatticeEdge| (e.1 .0 as i64 - e.0 .0 as i64, e.1 .1 as i64 - e.0 .1 as i64);
    let (dx, dy) = dir(&edges[i]);
    let turn = |c: usize| {
        let (ex, ey) = dir(&edges[c]);
        let cross = dx * ey - dy * ex;
        let dot = dx * ex + dy * ey;
        // Left (cross > 0) first, then straight, then right.
        if cross > 0 {
            0
        } else if dot > 0 {
            1
        } else {
            2
        }
    };
    candidates
        .iter()
        .copied()
        .filter(|&c| !used[c])
        .min_by_key(|&c| turn(c))
}

/// Drops collinear corners from a closed lattice path and measures it.
fn lattice_ring(path: Vec<(usize, usize)>) -> LatticeRing {
    let n = path.len().saturating_sub(1);
    let p = |k: usize| {
        let (x, y) = path[k % n.max(1)];
        (x as i64, y as i64)
    };
    let mut corners = Vec::with_capacity(n + 1);
    for (k, &corner) in path.iter().enumerate().take(n) {
        let (a, b, c) = (p(k + n - 1), p(k), p(k + 1));
        let cross = (b.0 - a.0) * (c.1 - b.1) - (b.1 - a.1) * (c.0 - b.0);
        if cross != 0 {
            corners.push(corner);
        }
    }
    if let Some(&first) = corners.first() {
        corners.push(first);
    }
    let area2: i64 = corners
        .windows(2)
        .map(|w| w[0].0 as i64 * w[1].1 as i64 - w[1].0 as i64 * w[0].1 as i64)
        .sum();
    let (a, b) = (p(0), p(1));
    let mid = ((a.0 + b.0) as f64 / 2.0, (a.1 + b.1) as f64 / 2.0);
    // Right of the edge direction (dx, dy) is (dy, -dx).
    let right = ((b.1 - a.1) as f64 * 0.5, -(b.0 - a.0) as f64 * 0.5);
    LatticeRing {
        corners,
        area2,
        inside_probe: (mid.0 + right.0, mid.1 + right.1),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn grid(nx: usize, ny: usize) -> Grid {
        Grid {
            origin: Point2::new(0.0, 0.0),
            step_m: 1.0,
            nx,
            ny,
        }
    }

    /// Hand calculation: samples 0, 10 along x at centres 0.5 and 1.5; the level 2.5 lies a
    /// quarter of the way, at x = 0.75.
    #[test]
    fn crossing_is_linear_interpolation() {
        let g = grid(2, 2);
        let v = [0.0, 10.0, 0.0, 10.0];
        let c = level_contours(&g, &v, 2.5);
        assert_eq!(c.len(), 1);
        for p in &c[0] {
            assert!((p.x - 0.75).abs() < 1e-12, "{p:?}");
        }
        // Higher values lie east: walking south keeps them on the left.
        assert!(c[0][0].y > c[0][1].y, "{:?}", c[0]);
    }

    /// A single high sample in a 3×3 field is ringed by a closed loop of 4 crossings.
    #[test]
    fn peak_gives_closed_loop() {
        let g = grid(3, 3);
        let mut v = [0.0f32; 9];
        v[4] = 10.0;
        let c = level_contours(&g, &v, 5.0);
        assert_eq!(c.len(), 1);
        assert_eq!(c[0].len(), 5);
        assert_eq!(c[0].first(), c[0].last());
        // Anticlockwise round the peak (high side on the left): positive area.
        let area: f64 = c[0]
            .windows(2)
            .map(|w| w[0].x * w[1].y - w[1].x * w[0].y)
            .sum();
        assert!(area > 0.0);
    }

    /// Squares with a missing sample are skipped: the contour stops there.
    #[test]
    fn missing_samples_stop_contours() {
        let g = grid(3, 2);
        let v = [0.0, 10.0, f32::NAN, 0.0, 10.0, f32::NAN];
        let c = level_contours(&g, &v, 5.0);
        assert_eq!(c.len(), 1);
        assert!(c[0].iter().all(|p| (p.x - 1.0).abs() < 1e-12));
    }

    /// A ring of cells with a hole: one region, one hole, areas 8 and 1 cells.
    #[test]
    fn ring_of_cells_has_a_hole() {
        let g = grid(3, 3);
        let mut m = [true; 9];
        m[4] = false;
        let r = cell_regions(&g, &m);
        assert_eq!(r.len(), 1);
        assert_eq!(r[0].holes.len(), 1);
        assert!((ring_area(&r[0].outer) - 9.0).abs() < 1e-12);
        assert!((ring_area(&r[0].holes[0]) - 1.0).abs() < 1e-12);
        assert_eq!(r[0].outer.len(), 5, "{:?}", r[0].outer);
    }

    /// Two cells touching at a corner are two regions of one cell each.
    #[test]
    fn diagonal_cells_stay_apart() {
        let g = grid(2, 2);
        let r = cell_regions(&g, &[true, false, false, true]);
        assert_eq!(r.len(), 2);
        for x in &r {
            assert!((ring_area(&x.outer) - 1.0).abs() < 1e-12);
            assert!(x.holes.is_empty());
        }
    }
}
