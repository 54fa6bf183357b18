//! Times `WallIndex` against the brute-force reference on a synthetic
//! office floor, for several cell sizes. Run with
//! `cargo run --release -p rfsite-geometry --example index_bench`.

use rfsite_geometry::synth::{office_floor, SplitMix64};
use rfsite_geometry::{crossings_brute_force, Point2, Scratch, WallIndex};
use std::time::Instant;

fn main() {
    let (w, d, n) = (120.0, 80.0, 4000);
    let walls = office_floor(1, w, d, n);
    let mut rng = SplitMix64::new(2);
    // Transmitters inside, receivers on a grid-like spread: full-floor rays.
    let rays: Vec<(Point2, Point2)> = (0..200_000)
        .map(|_| {
            (
                Point2::new(rng.range(0.0, w), rng.range(0.0, d)),
                Point2::new(rng.range(0.0, w), rng.range(0.0, d)),
            )
        })
        .collect();
    let mut out = Vec::new();
    let base = (w * d / n as f64).sqrt();
    println!(
        "{} walls, {} rays, sqrt(area/walls) = {base:.2} m",
        walls.len(),
        rays.len()
    );

    let t = Instant::now();
    let mut total = 0usize;
    for &(a, b) in rays.iter().take(2000) {
        crossings_brute_force(&walls, a, b, &mut out);
        total += out.len();
    }
    let per = t.elapsed().as_secs_f64() / 2000.0;
    println!(
        "brute force: {:.2} us/ray ({total} crossings on 2000 rays)",
        per * 1e6
    );

    for k in [0.35, 0.5, 0.7, 1.0, 1.4, 2.0, 3.0] {
        let index = WallIndex::with_cell_size(&walls, k * base);
        let mut scratch = Scratch::new();
        let t = Instant::now();
        let mut total = 0usize;
        for &(a, b) in &rays {
            index.crossings_with(&mut scratch, a, b, &mut out);
            total += out.len();
        }
        let per = t.elapsed().as_secs_f64() / rays.len() as f64;
        println!(
            "k = {k:4.2}: cell {:.2} m, grid {:?}: {:.3} us/ray ({:.1} crossings/ray)",
            index.cell_size_m(),
            index.grid_dims(),
            per * 1e6,
            total as f64 / rays.len() as f64
        );
    }
    let t = Instant::now();
    let index = WallIndex::new(&walls);
    println!(
        "auto: cell {:.2} m, build {:.2} ms",
        index.cell_size_m(),
        t.elapsed().as_secs_f64() * 1e3
    );
}
