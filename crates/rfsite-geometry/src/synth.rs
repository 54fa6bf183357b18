//! Synthetic floor plans for benchmarks and tests.
//!
//! The plans look like an office floor — rooms on both sides of corridors,
//! a lift/stair core in the middle, short free-standing partitions — and are
//! fully determined by the seed. Walls share corner coordinates exactly and
//! long walls are split into collinear pieces, as in real drawings.

use crate::point::{Point2, Segment};

/// SplitMix64: a tiny, fast, deterministic PRNG (no external dependency).
#[derive(Debug, Clone)]
pub struct SplitMix64 {
    state: u64,
}

impl SplitMix64 {
    /// A generator started from `seed`.
    pub fn new(seed: u64) -> Self {
        Self { state: seed }
    }

    /// Next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in `[0, 1)`.
    pub fn next_f64(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// Uniform in `[lo, hi)`.
    pub fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.next_f64()
    }

    /// Uniform integer in `0..n` (`n > 0`).
    pub fn below(&mut self, n: usize) -> usize {
        (self.next_u64() % n as u64) as usize
    }
}

const CORRIDOR_M: f64 = 1.8;
const DOOR_M: f64 = 0.9;

/// A rectangle of floor that can receive free-standing partitions.
#[derive(Debug, Clone, Copy)]
struct Room {
    lo: Point2,
    hi: Point2,
}

/// A synthetic office floor of `width_m × depth_m` metres with about
/// `target_walls` walls, deterministic in `seed`.
///
/// The structure (outline, corridors, rooms, core) is sized so that it uses
/// roughly half the target, and short partitions inside rooms make up the
/// rest, so the result has exactly `target_walls` walls unless the structure
/// alone needs more (small targets), in which case it has the structure only.
/// Non-finite or non-positive dimensions give an empty plan.
pub fn office_floor(seed: u64, width_m: f64, depth_m: f64, target_walls: usize) -> Vec<Segment> {
    if !(width_m.is_finite() && depth_m.is_finite() && width_m > 0.0 && depth_m > 0.0) {
        return Vec::new();
    }
    let (w, d) = (width_m, depth_m);
    let mut rng = SplitMix64::new(seed);
    let mut walls = Vec::new();
    let seg =
        |x0: f64, y0: f64, x1: f64, y1: f64| Segment::new(Point2::new(x0, y0), Point2::new(x1, y1));

    // Horizontal bands: per unit, rooms | corridor | rooms.
    let corridor = CORRIDOR_M.min(d / 4.0);
    let units = ((d / 14.0).round() as usize).max(1);
    let unit_d = d / units as f64;
    let band_d = (unit_d - corridor) / 2.0;
    let rooms_per_band_wanted = (target_walls as f64 * 0.12 / (2 * units) as f64).max(1.0);
    let mean_room = (w / rooms_per_band_wanted).clamp(2.0, 6.0).min(w);

    // Core: the middle of the upper band of the middle unit.
    let core_unit = units / 2;
    let core_w = (0.15 * w).min(12.0);
    let (core_x0, core_x1) = (0.5 * (w - core_w), 0.5 * (w + core_w));

    // Partition x positions (including 0 and w) for each band, bottom to top.
    let mut band_y = Vec::new(); // (y_lo, y_hi, corridor above?)
    let mut band_xs: Vec<Vec<f64>> = Vec::new();
    for u in 0..units {
        let y0 = u as f64 * unit_d;
        for (lo, hi, corridor_above, has_core) in [
            (y0, y0 + band_d, true, false),
            (y0 + band_d + corridor, y0 + unit_d, false, u == core_unit),
        ] {
            let mut xs = vec![0.0];
            let mut x = 0.0;
            let mut core_placed = !has_core;
            loop {
                let next = x + mean_room * rng.range(0.7, 1.3);
                if next > w - 0.5 * mean_room {
                    break;
                }
                if !core_placed && next > core_x0 - 1.0 {
                    // Rooms stop at the core and resume after it.
                    core_placed = true;
                    if x < core_x0 {
                        xs.push(core_x0);
                    }
                    xs.push(core_x1);
                    x = core_x1;
                    continue;
                }
                xs.push(next);
                x = next;
            }
            xs.push(w);
            band_y.push((lo, hi, corridor_above, has_core));
            band_xs.push(xs);
        }
    }

    let mut rooms = Vec::new();
    for ((lo, hi, corridor_above, has_core), xs) in band_y.iter().zip(&band_xs) {
        let (lo, hi) = (*lo, *hi);
        let door_y = if *corridor_above { hi } else { lo };
        for pair in xs.windows(2) {
            let (x0, x1) = (pair[0], pair[1]);
            if x0 > 0.0 {
                walls.push(seg(x0, lo, x0, hi));
            }
            let is_core = *has_core && x0 >= core_x0 && x1 <= core_x1;
            // Corridor-side wall, with a door where the room is wide enough.
            if x1 - x0 >= 2.0 * DOOR_M {
                let dx = rng.range(x0 + 0.2, x1 - DOOR_M - 0.2);
                walls.push(seg(x0, door_y, dx, door_y));
                walls.push(seg(dx + DOOR_M, door_y, x1, door_y));
            } else {
                walls.push(seg(x0, door_y, x1, door_y));
            }
            if is_core {
                // Three shafts over a lobby.
                let mid = 0.5 * (lo + hi);
                for i in 1..3 {
                    let x = x0 + (x1 - x0) * i as f64 / 3.0;
                    walls.push(seg(x, mid, x, hi));
                }
                walls.push(seg(x0, mid, x1, mid));
            } else {
                rooms.push(Room {
                    lo: Point2::new(x0, lo),
                    hi: Point2::new(x1, hi),
                });
            }
        }
    }

    // Back walls: the floor's bottom and top edges and the walls between
    // units, split wherever a partition of either neighbouring band meets them.
    let n_bands = band_y.len();
    let mut back_lines: Vec<(f64, Vec<f64>)> = vec![(0.0, band_xs[0].clone())];
    for u in 1..units {
        let mut xs = band_xs[2 * u - 1].clone();
        xs.extend_from_slice(&band_xs[2 * u]);
        back_lines.push((u as f64 * unit_d, xs));
    }
    back_lines.push((d, band_xs[n_bands - 1].clone()));
    for (y, mut xs) in back_lines {
        xs.sort_by(f64::total_cmp);
        // Partitions of the two bands closer than 0.3 m share one split;
        // the other one then meets the back wall as a T-junction.
        let mut splits = vec![0.0];
        for &x in &xs {
            if x - splits[splits.len() - 1] >= 0.3 && w - x >= 0.3 {
                splits.push(x);
            }
        }
        splits.push(w);
        for pair in splits.windows(2) {
            walls.push(seg(pair[0], y, pair[1], y));
        }
    }

    // Side walls, split at every band and corridor boundary.
    let mut ys: Vec<f64> = band_y.iter().flat_map(|b| [b.0, b.1]).collect();
    ys.sort_by(f64::total_cmp);
    ys.dedup();
    for x in [0.0, w] {
        for pair in ys.windows(2) {
            walls.push(seg(x, pair[0], x, pair[1]));
        }
    }

    // Free-standing partitions (desk screens, cupboards), some L-shaped.
    let mut attempts = 0;
    while walls.len() < target_walls && !rooms.is_empty() && attempts < 16 * target_walls {
        attempts += 1;
        let r = rooms[rng.below(rooms.len())];
        let (rw, rd) = (r.hi.x - r.lo.x - 0.4, r.hi.y - r.lo.y - 0.4);
        if rw < 0.6 || rd < 0.6 {
            continue;
        }
        let horizontal = rng.next_f64() < 0.5;
        let span = if horizontal { rw } else { rd };
        let len = rng.range(0.6, span.min(1.6));
        let x = rng.range(
            r.lo.x + 0.2,
            r.hi.x - 0.2 - if horizontal { len } else { 0.0 },
        );
        let y = rng.range(
            r.lo.y + 0.2,
            r.hi.y - 0.2 - if horizontal { 0.0 } else { len },
        );
        let (x1, y1) = if horizontal {
            (x + len, y)
        } else {
            (x, y + len)
        };
        walls.push(seg(x, y, x1, y1));
        if walls.len() < target_walls && rng.next_f64() < 0.3 {
            // An L: a short return sharing the end corner, inside the room.
            let ret = rng.range(0.3, 0.8);
            let (x2, y2) = if horizontal {
                let up = y1 + ret <= r.hi.y - 0.2;
                (x1, if up { y1 + ret } else { y1 - ret })
            } else {
                let right = x1 + ret <= r.hi.x - 0.2;
                (if right { x1 + ret } else { x1 - ret }, y1)
            };
            walls.push(seg(x1, y1, x2, y2));
        }
    }
    walls
}
