//! A uniform-grid index of segments by bounding box, for "which segments are near here".

use rfsite_geometry::{Point2, Segment};
use std::collections::HashMap;

/// Most cells one segment is entered in (longer ones go to the list checked every time).
const MAX_CELLS_PER_SEGMENT: i64 = 4096;

/// Segments bucketed by grid cell.
pub struct SegIndex {
    cell: f64,
    cells: HashMap<(i64, i64), Vec<usize>>,
    everywhere: Vec<usize>,
}

impl SegIndex {
    /// Indexes `segs` on cells of side `cell`.
    pub fn new(segs: impl Iterator<Item = Segment>, cell: f64) -> SegIndex {
        let mut ix = SegIndex {
            cell,
            cells: HashMap::new(),
            everywhere: Vec::new(),
        };
        for (i, s) in segs.enumerate() {
            let (x0, y0) = ix.key(Point2::new(s.a.x.min(s.b.x), s.a.y.min(s.b.y)));
            let (x1, y1) = ix.key(Point2::new(s.a.x.max(s.b.x), s.a.y.max(s.b.y)));
            if (x1 - x0 + 1).saturating_mul(y1 - y0 + 1) > MAX_CELLS_PER_SEGMENT {
                ix.everywhere.push(i);
                continue;
            }
            for cx in x0..=x1 {
                for cy in y0..=y1 {
                    ix.cells.entry((cx, cy)).or_default().push(i);
                }
            }
        }
        ix
    }

    fn key(&self, p: Point2) -> (i64, i64) {
        (
            (p.x / self.cell).floor() as i64,
            (p.y / self.cell).floor() as i64,
        )
    }

    /// Segments whose box is within `r` of `p` (a superset, sorted, without repeats).
    pub fn near(&self, p: Point2, r: f64) -> Vec<usize> {
        let (x0, y0) = self.key(Point2::new(p.x - r, p.y - r));
        let (x1, y1) = self.key(Point2::new(p.x + r, p.y + r));
        let mut out = self.everywhere.clone();
        for cx in x0..=x1 {
            for cy in y0..=y1 {
                if let Some(v) = self.cells.get(&(cx, cy)) {
                    out.extend_from_slice(v);
                }
            }
        }
        out.sort_unstable();
        out.dedup();
        out
    }
}
