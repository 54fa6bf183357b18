//! Prediction grid and polygon helpers against hand-computed values.

use crate::util::p;
use rfsite_geometry::{point_in_polygon, polygon_area, polygon_bbox, Grid};

#[test]
fn grid_covering_counts_cells_by_hand() {
    let g = Grid::covering(p(0.0, 0.0), p(10.0, 5.0), 1.0);
    assert_eq!((g.nx, g.ny, g.len()), (10, 5, 50));
    // Exact multiples do not gain a cell from rounding; 10 / 0.1 in binary.
    let g = Grid::covering(p(0.0, 0.0), p(10.0, 1.0), 0.1);
    assert_eq!((g.nx, g.ny), (100, 10));
    let g = Grid::covering(p(-1.0, 2.0), p(9.0, 2.0), 0.3);
    assert_eq!((g.nx, g.ny), (34, 1));
    assert_eq!(g.origin, p(-1.0, 2.0));
    for bad in [0.0, -1.0, f64::NAN, f64::INFINITY] {
        assert!(Grid::covering(p(0.0, 0.0), p(1.0, 1.0), bad).is_empty());
    }
    assert!(Grid::covering(p(1.0, 0.0), p(0.0, 1.0), 0.5).is_empty());
}

#[test]
fn grid_points_are_row_major_cell_centres() {
    let g = Grid::covering(p(0.0, 0.0), p(10.0, 5.0), 1.0);
    assert_eq!(g.point(0), p(0.5, 0.5));
    assert_eq!(g.point(9), p(9.5, 0.5));
    assert_eq!(g.point(12), p(2.5, 1.5));
    assert_eq!(g.point(49), p(9.5, 4.5));
    assert_eq!(g.points().count(), 50);
    for i in 0..g.len() {
        let (ix, iy) = g.cell_of(g.point(i)).unwrap();
        assert_eq!(iy * g.nx + ix, i);
    }
}

#[test]
fn grid_cell_of_edges() {
    let g = Grid::covering(p(0.0, 0.0), p(10.0, 5.0), 1.0);
    assert_eq!(g.cell_of(p(0.0, 0.0)), Some((0, 0)));
    assert_eq!(g.cell_of(p(1.0, 1.0)), Some((1, 1)));
    assert_eq!(g.cell_of(p(10.0, 5.0)), Some((9, 4)));
    assert_eq!(g.cell_of(p(10.0 + 1e-9, 2.0)), None);
    assert_eq!(g.cell_of(p(-1e-9, 2.0)), None);
    assert_eq!(g.cell_of(p(f64::NAN, 2.0)), None);
}

#[test]
fn bilinear_reproduces_a_linear_field() {
    let g = Grid::covering(p(0.0, 0.0), p(4.0, 3.0), 0.5);
    let f = |q: rfsite_geometry::Point2| 2.0 * q.x - 3.0 * q.y + 1.0;
    let values: Vec<f64> = g.points().map(f).collect();
    for q in [p(0.25, 0.25), p(1.3, 2.1), p(3.75, 2.75), p(2.0, 1.0)] {
        let v = g.bilinear(&values, q).unwrap();
        assert!((v - f(q)).abs() < 1e-12, "{q:?}: {v} vs {}", f(q));
    }
    // Between the outermost centres and the edge the value is held.
    let v = g.bilinear(&values, p(0.0, 0.25)).unwrap();
    assert!((v - f(p(0.25, 0.25))).abs() < 1e-12);
    assert_eq!(g.bilinear(&values, p(5.0, 1.0)), None);
    assert_eq!(g.bilinear(&values[1..], p(1.0, 1.0)), None);
}

#[test]
fn bilinear_skips_nan_neighbours() {
    let g = Grid::covering(p(0.0, 0.0), p(2.0, 2.0), 1.0);
    // Centres (0.5,0.5)=10, (1.5,0.5)=NaN, (0.5,1.5)=30, (1.5,1.5)=40.
    let values = [10.0, f64::NAN, 30.0, 40.0];
    // At the middle all four weigh 1/4; NaN dropped, the rest renormalised.
    let v = g.bilinear(&values, p(1.0, 1.0)).unwrap();
    assert!((v - (10.0 + 30.0 + 40.0) / 3.0).abs() < 1e-12);
    // Exactly on a valid centre.
    assert_eq!(g.bilinear(&values, p(0.5, 0.5)), Some(10.0));
    // Exactly on the NaN centre: no valid neighbour carries weight.
    assert_eq!(g.bilinear(&values, p(1.5, 0.5)), None);
    assert_eq!(g.bilinear(&[f64::NAN; 4], p(1.0, 1.0)), None);
}

#[test]
fn polygon_area_and_bbox_by_hand() {
    let square = [p(0.0, 0.0), p(4.0, 0.0), p(4.0, 4.0), p(0.0, 4.0)];
    assert_eq!(polygon_area(&square), 16.0);
    let mut clockwise = square;
    clockwise.reverse();
    assert_eq!(polygon_area(&clockwise), 16.0);
    // L-shape: 4x4 minus the 2x2 upper-right quadrant.
    let l = l_shape();
    assert_eq!(polygon_area(&l), 12.0);
    assert_eq!(polygon_bbox(&l), (p(0.0, 0.0), p(4.0, 4.0)));
    assert_eq!(polygon_area(&[p(0.0, 0.0), p(1.0, 1.0)]), 0.0);
    assert_eq!(polygon_bbox(&[]), (p(0.0, 0.0), p(0.0, 0.0)));
    // Far from the origin the area keeps its precision.
    let far: Vec<_> = square.iter().map(|q| p(q.x + 1e7, q.y - 3e6)).collect();
    assert_eq!(polygon_area(&far), 16.0);
}

fn l_shape() -> [rfsite_geometry::Point2; 6] {
    [
        p(0.0, 0.0),
        p(4.0, 0.0),
        p(4.0, 2.0),
        p(2.0, 2.0),
        p(2.0, 4.0),
        p(0.0, 4.0),
    ]
}

#[test]
fn point_in_polygon_even_odd_with_boundary_inside() {
    let l = l_shape();
    assert!(point_in_polygon(p(1.0, 1.0), &l));
    assert!(point_in_polygon(p(1.0, 3.0), &l));
    assert!(point_in_polygon(p(3.0, 1.0), &l));
    assert!(!point_in_polygon(p(3.0, 3.0), &l), "in the notch");
    assert!(!point_in_polygon(p(-1.0, 2.0), &l));
    // Ray through the reflex vertex (2, 2) height.
    assert!(point_in_polygon(p(1.0, 2.0), &l));
    assert!(!point_in_polygon(p(5.0, 2.0), &l));
    // Boundary and vertices count as inside.
    assert!(point_in_polygon(p(2.0, 3.0), &l));
    assert!(point_in_polygon(p(3.0, 2.0), &l));
    assert!(point_in_polygon(p(4.0, 0.0), &l));
    assert!(point_in_polygon(p(2.0, 2.0), &l));
    assert!(!point_in_polygon(p(1.0, 1.0), &[]));
}
