//! Integration tests for rfsite-geometry, built as one binary.

mod geo_crosscheck;
mod grid_polygon;
mod hand_plan;
mod index_vs_brute;
mod junction;
mod shadow;
mod synth;
mod util;
