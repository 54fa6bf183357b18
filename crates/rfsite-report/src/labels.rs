//! Label placement on the maps, in pixels: every label gets a box that overlaps no other
//! label, no marker and stays inside the plotting area. Candidates are tried in order; the
//! first free one wins, so placement is deterministic.

/// Estimated advance width of one character, in ems (Lato averages about 0.5 em; 0.6 em
/// leaves room for capitals and bold, so the estimate errs on the wide side).
pub const CHAR_EM: f64 = 0.6;

/// The scale plotters' SVG backend applies to a font size: it writes `size / 1.24`.
pub const SVG_FONT_SCALE: f64 = 1.0 / 1.24;

/// A rectangle in pixels, `x0 <= x1`, `y0 <= y1` (y grows downwards).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PxBox {
    /// Left edge.
    pub x0: f64,
    /// Top edge.
    pub y0: f64,
    /// Right edge.
    pub x1: f64,
    /// Bottom edge.
    pub y1: f64,
}

impl PxBox {
    /// The box of half side `r` around a point.
    pub fn around(p: (f64, f64), r: f64) -> Self {
        PxBox {
            x0: p.0 - r,
            y0: p.1 - r,
            x1: p.0 + r,
            y1: p.1 + r,
        }
    }

    /// Whether the two boxes share interior area.
    pub fn overlaps(&self, o: &PxBox) -> bool {
        self.x0 < o.x1 && o.x0 < self.x1 && self.y0 < o.y1 && o.y0 < self.y1
    }

    /// Whether `self` lies wholly inside `o`.
    pub fn inside(&self, o: &PxBox) -> bool {
        self.x0 >= o.x0 && self.x1 <= o.x1 && self.y0 >= o.y0 && self.y1 <= o.y1
    }

    /// Centre of the box.
    pub fn centre(&self) -> (f64, f64) {
        (0.5 * (self.x0 + self.x1), 0.5 * (self.y0 + self.y1))
    }
}

/// Width and height in pixels of `text` at the chart font `size` (before the SVG scale).
pub fn text_size(text: &str, size: f64) -> (f64, f64) {
    let em = size * SVG_FONT_SCALE;
    (text.chars().count() as f64 * CHAR_EM * em, em)
}

/// The places taken so far inside a plotting area.
#[derive(Debug, Clone)]
pub struct Placer {
    bounds: PxBox,
    taken: Vec<PxBox>,
}

impl Placer {
    /// An empty placer over `bounds`.
    pub fn new(bounds: PxBox) -> Self {
        Placer {
            bounds,
            taken: Vec::new(),
        }
    }

    /// Marks `b` as taken (a marker or a label drawn elsewhere).
    pub fn block(&mut self, b: PxBox) {
        self.taken.push(b);
    }

    /// Whether a `w` × `h` box with its top left at `p` is free, inside the bounds and
    /// inside `within` when given.
    fn free(&self, b: &PxBox, within: Option<&PxBox>) -> bool {
        b.inside(&self.bounds)
            && within.is_none_or(|z| b.inside(z))
            && !self.taken.iter().any(|t| t.overlaps(b))
    }

    /// Places a `w` × `h` box at the first free top-left candidate, takes it and returns it.
    pub fn place(
        &mut self,
        (w, h): (f64, f64),
        candidates: impl IntoIterator<Item = (f64, f64)>,
        within: Option<&PxBox>,
    ) -> Option<PxBox> {
        let b = candidates
            .into_iter()
            .map(|(x, y)| PxBox {
                x0: x,
                y0: y,
                x1: x + w,
                y1: y + h,
            })
            .find(|b| self.free(b, within))?;
        self.taken.push(b);
        Some(b)
    }

    /// Top-left candidates for a `w` × `h` box whose centre lies on a grid of `step`
    /// pixels over the bounds, nearest `target` first (ties in grid order).
    pub fn grid_near(&self, (w, h): (f64, f64), target: (f64, f64), step: f64) -> Vec<(f64, f64)> {
        let mut c = Vec::new();
        let mut y = self.bounds.y0;
        while y <= self.bounds.y1 {
            let mut x = self.bounds.x0;
            while x <= self.bounds.x1 {
                c.push((x - w / 2.0, y - h / 2.0));
                x += step;
            }
            y += step;
        }
        sort_near(&mut c, (target.0 - w / 2.0, target.1 - h / 2.0));
        c
    }
}

/// Sorts points by distance to `t`, stable (ties keep their order).
pub fn sort_near(c: &mut [(f64, f64)], t: (f64, f64)) {
    c.sort_by(|a, b| {
        let da = (a.0 - t.0).powi(2) + (a.1 - t.1).powi(2);
        let db = (b.0 - t.0).powi(2) + (b.1 - t.1).powi(2);
        da.total_cmp(&db)
    });
}

/// Top-left candidates for a `w` × `h` label beside a marker at `p` with half size `r`:
/// up right, down right, up left, down left, above, below, right, left.
pub fn beside(p: (f64, f64), r: f64, (w, h): (f64, f64)) -> [(f64, f64); 8] {
    let g = r + 2.0;
    [
        (p.0 + g, p.1 - g - h),
        (p.0 + g, p.1 + g),
        (p.0 - g - w, p.1 - g - h),
        (p.0 - g - w, p.1 + g),
        (p.0 - w / 2.0, p.1 - g - h),
        (p.0 - w / 2.0, p.1 + g),
        (p.0 + g, p.1 - h / 2.0),
        (p.0 - g - w, p.1 - h / 2.0),
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_taken_place_is_not_given_twice() {
        // Hand check: two 10 x 10 labels wanting the same top-left corner; the second must
        // move to its next candidate, 20 px to the right.
        let mut p = Placer::new(PxBox {
            x0: 0.0,
            y0: 0.0,
            x1: 100.0,
            y1: 100.0,
        });
        let a = p.place((10.0, 10.0), [(5.0, 5.0)], None);
        let b = p.place((10.0, 10.0), [(5.0, 5.0), (25.0, 5.0)], None);
        assert_eq!(a.map(|b| b.x0), Some(5.0));
        assert_eq!(b.map(|b| b.x0), Some(25.0));
        // Outside the bounds is never free.
        assert!(p.place((10.0, 10.0), [(95.0, 5.0)], None).is_none());
    }
}
