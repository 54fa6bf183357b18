//! Regular prediction grids.

use crate::point::Point2;

/// Regular prediction grid of `nx × ny` square cells of `step_m` metres; the
/// prediction points are the cell centres, numbered row-major
/// (`i = iy * nx + ix`, `ix` along x).
#[derive(Debug, Clone, PartialEq)]
pub struct Grid {
    /// Lower-left corner of the grid (not a prediction point).
    pub origin: Point2,
    /// Cell edge length, metres.
    pub step_m: f64,
    /// Cells along x.
    pub nx: usize,
    /// Cells along y.
    pub ny: usize,
}

impl Grid {
    /// The smallest grid with its origin at `min` whose cells cover the box
    /// `min..=max`. A box of zero width or height still gets one cell along
    /// that axis. A non-finite or non-positive `step_m`, a non-finite corner
    /// or `max < min` gives an empty grid.
    pub fn covering(min: Point2, max: Point2, step_m: f64) -> Grid {
        let ok = step_m.is_finite()
            && step_m > 0.0
            && min.is_finite()
            && max.is_finite()
            && max.x >= min.x
            && max.y >= min.y;
        if !ok {
            return Grid {
                origin: min,
                step_m,
                nx: 0,
                ny: 0,
            };
        }
        // A hair of slack so that an exact multiple of the step does not
        // gain a cell from rounding.
        let n = |span: f64| ((span / step_m - 1e-9).ceil().max(1.0)) as usize;
        Grid {
            origin: min,
            step_m,
            nx: n(max.x - min.x),
            ny: n(max.y - min.y),
        }
    }

    /// Number of prediction points.
    pub fn len(&self) -> usize {
        self.nx * self.ny
    }

    /// Whether the grid has no points.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Upper-right corner of the grid.
    pub fn max_corner(&self) -> Point2 {
        Point2::new(
            self.origin.x + self.nx as f64 * self.step_m,
            self.origin.y + self.ny as f64 * self.step_m,
        )
    }

    /// Centre of cell `i` (row-major).
    ///
    /// # Panics
    /// If `i >= self.len()`.
    pub fn point(&self, i: usize) -> Point2 {
        assert!(i < self.len(), "grid point {i} out of range {}", self.len());
        let (ix, iy) = (i % self.nx, i / self.nx);
        Point2::new(
            self.origin.x + (ix as f64 + 0.5) * self.step_m,
            self.origin.y + (iy as f64 + 0.5) * self.step_m,
        )
    }

    /// Iterator over all prediction points in index order.
    pub fn points(&self) -> impl Iterator<Item = Point2> + '_ {
        (0..self.len()).map(|i| self.point(i))
    }

    /// The cell `(ix, iy)` containing `p`. Cells are half-open
    /// (`[lo, lo + step)`), except that the grid's upper edges belong to the
    /// last column and row; points outside give `None`.
    pub fn cell_of(&self, p: Point2) -> Option<(usize, usize)> {
        if self.is_empty() || !p.is_finite() {
            return None;
        }
        let axis = |v: f64, o: f64, n: usize| -> Option<usize> {
            let f = ((v - o) / self.step_m).floor();
            if f < 0.0 || f > n as f64 {
                None
            } else if f as usize == n {
                // Exactly on the upper edge.
                (v <= o + n as f64 * self.step_m).then_some(n - 1)
            } else {
                Some(f as usize)
            }
        };
        Some((
            axis(p.x, self.origin.x, self.nx)?,
            axis(p.y, self.origin.y, self.ny)?,
        ))
    }

    /// Bilinear interpolation of cell-centre `values` (one per point,
    /// row-major) at `p`. Between the outermost centres and the grid edge the
    /// value is held constant. NaN neighbours are skipped and the remaining
    /// weights renormalised. `None` if `p` is outside the grid, `values` has
    /// the wrong length, or no non-NaN neighbour carries weight.
    pub fn bilinear(&self, values: &[f64], p: Point2) -> Option<f64> {
        if values.len() != self.len() {
            return None;
        }
        self.cell_of(p)?;
        let frac = |v: f64, o: f64, n: usize| -> (usize, usize, f64) {
            let f = (v - o) / self.step_m - 0.5;
            let i0 = f.floor();
            let w = f - i0;
            let clamp = |i: f64| (i.max(0.0) as usize).min(n - 1);
            (clamp(i0), clamp(i0 + 1.0), w)
        };
        let (x0, x1, wx) = frac(p.x, self.origin.x, self.nx);
        let (y0, y1, wy) = frac(p.y, self.origin.y, self.ny);
        let mut sum = 0.0;
        let mut weight = 0.0;
        for (ix, iy, w) in [
            (x0, y0, (1.0 - wx) * (1.0 - wy)),
            (x1, y0, wx * (1.0 - wy)),
            (x0, y1, (1.0 - wx) * wy),
            (x1, y1, wx * wy),
        ] {
            let v = values[iy * self.nx + ix];
            if w > 0.0 && !v.is_nan() {
                sum += w * v;
                weight += w;
            }
        }
        (weight > 0.0).then(|| sum / weight)
    }
}
