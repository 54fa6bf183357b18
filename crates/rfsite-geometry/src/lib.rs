//! Floor geometry for rfsite: points, wall segments, polygons, regular
//! prediction grids, and fast exact counting of the walls a straight radio
//! path crosses.
//!
//! This crate is pure computation on coordinates in metres. It never reads
//! or writes files, never parses project formats, and knows nothing about
//! radio physics: it says *which* walls a path crosses and at what angle;
//! what a wall does to the signal is decided elsewhere.
//!
//! # Crossing rules
//!
//! A path from `p` to `q` is crossed by a wall when the *open* path and the
//! *closed* wall segment meet in a single point, with these decisions, all
//! taken with the tolerance [`EPS_M`] (1 nm):
//!
//! * **Path end points do not cross.** A transmitter or grid point lying on a
//!   wall (a crossing within `EPS_M` of `p` or `q` along the path) does not
//!   count that wall; every reported `t` lies strictly inside `(0, 1)`.
//! * **Grazing does not cross.** A wall collinear with the path (both of its
//!   ends within `EPS_M` of the path line), including overlapping it, is
//!   never counted: nothing goes through the slab.
//! * **Touching the end of a wall does not cross.** A wall end lying on the
//!   path is not a crossing by itself.
//! * **Corners count once or not at all.** Wall ends lying on the path at the
//!   same place (within `EPS_M`) form a corner. If the other ends of those
//!   walls lie on both sides of the path, the path passes from one side of
//!   the wall chain to the other and the corner counts as **one** crossing;
//!   if they all lie on one side, the path only touches the corner and it
//!   counts **zero**. Walls collinear with the path are left out of this
//!   side test. Small rounding noise cannot turn a corner into 0 or 2,
//!   because the decision is made once per corner, not per wall.
//! * **Which wall a corner charges.** A counted corner is charged **once**,
//!   to the wall of **largest rank** among the walls ending there (those
//!   collinear with the path left out), each ranked at its own incidence by
//!   the caller's [`CornerRank`], typically the wall's loss in dB: the path
//!   passes between those walls and is charged the larger of their losses,
//!   once. Walls drawn on top of each other (their arms from the corner
//!   coincide) are one stack, ranked by the sum of their ranks and charged
//!   together, as they are crossed together away from the corner. Among
//!   equal ranks the stack holding the lowest index is reported, which
//!   changes no loss. Without a rank ([`crossings_brute_force`],
//!   [`WallIndex::crossings_with`]) every wall ranks equal.
//! * A wall passing *through* a point in its interior (a T-junction seen from
//!   the through wall) is an ordinary crossing, separate from any corner of
//!   walls that end at that point.
//! * Incidence: `cos_incidence = |u · n|` with `u` the unit path direction
//!   and `n` the wall's unit normal; 1 means the path meets the wall head on.
//! * **Junctions.** Where walls meet away from the ends of some of them (a
//!   T or a "+" drawn with a through wall, two walls crossing, a wall drawn
//!   as collinear pieces), [`split_at_junctions`] cuts them so that every
//!   meeting point is an end of each wall there ("junction form"). On a plan
//!   in junction form every point where walls meet is a corner, so a path
//!   through it is charged once, by the largest rank, or not at all when all
//!   the walls lie on one side of it; the answer does not depend on the
//!   order of the walls, their direction, or how a straight wall is split
//!   into collinear pieces (property tests). The prediction always works on
//!   the junction form; the functions here take the walls as given.
//! * Results are sorted by `t`, then by wall index. Walls with non-finite
//!   coordinates, and paths with non-finite or (near) coincident end points,
//!   give no crossings.
//!
//! [`crossings_brute_force`] applies these rules to every wall and is the
//! reference; [`WallIndex`] gives the same answers (same walls, same order,
//! same `t`) by walking a uniform cell grid, so its cost grows with the cells
//! a path visits rather than with the number of walls.
//!
//! [`shadow`] answers the same question for one transmitter and *every*
//! point of a [`Grid`] at once: each wall's shadow is added to per-row
//! difference arrays, so a transmitter costs about `walls × rows + points`.
//! Its results equal the brute force at every grid point (shadow edges,
//! corners and in-line transmitters are resolved with the same classifier).
//!
//! # Example
//!
//! ```
//! use rfsite_geometry::{Point2, Segment, WallIndex, Scratch};
//!
//! let p = |x, y| Point2::new(x, y);
//! // An L-shaped wall pair meeting at (5, 5).
//! let walls = [
//!     Segment::new(p(5.0, 0.0), p(5.0, 5.0)),
//!     Segment::new(p(5.0, 5.0), p(8.0, 5.0)),
//! ];
//! let index = WallIndex::new(&walls);
//! let mut scratch = Scratch::new();
//! let mut out = Vec::new();
//!
//! // Straight through the wall: one crossing at normal incidence.
//! index.crossings_with(&mut scratch, p(2.0, 2.0), p(8.0, 2.0), &mut out);
//! assert_eq!(out.len(), 1);
//! assert_eq!(out[0].wall, 0);
//! assert!((out[0].cos_incidence - 1.0).abs() < 1e-12);
//!
//! // Through the shared corner into the L: one crossing, charged to wall 0.
//! index.crossings_with(&mut scratch, p(2.0, 8.0), p(8.0, 2.0), &mut out);
//! assert_eq!(out.len(), 1);
//! assert_eq!(out[0].wall, 0);
//!
//! // Touching the corner from outside the L: no crossing.
//! index.crossings_with(&mut scratch, p(2.0, 2.0), p(8.0, 8.0), &mut out);
//! assert!(out.is_empty());
//! ```
#![deny(missing_docs)]

mod contour;
mod crossing;
mod grid;
mod index;
mod junction;
mod point;
mod polygon;
pub mod shadow;
pub mod synth;

pub use contour::{cell_regions, level_contours, CellRegion};
pub use crossing::{
    crossings_brute_force, crossings_brute_force_ranked, no_rank, CornerRank, Crossing, EPS_M,
};
pub use grid::Grid;
pub use index::{Scratch, WallIndex};
pub use junction::{split_at_junctions, JunctionPlan};
pub use point::{distance_point_segment, segments_intersect_properly, Point2, Segment};
pub use polygon::{point_in_polygon, polygon_area, polygon_bbox};
