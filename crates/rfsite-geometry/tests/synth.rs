//! The synthetic office floor generator.

use crate::util::{assert_index_matches_brute, p};
use rfsite_geometry::synth::{office_floor, SplitMix64};

#[test]
fn office_floor_is_deterministic() {
    let a = office_floor(7, 80.0, 40.0, 1200);
    let b = office_floor(7, 80.0, 40.0, 1200);
    assert_eq!(a, b);
    assert_ne!(a, office_floor(8, 80.0, 40.0, 1200));
}

#[test]
fn office_floor_hits_the_target_count() {
    for (w, d, target) in [
        (100.0, 60.0, 4000),
        (60.0, 40.0, 500),
        (120.0, 80.0, 4000),
        (30.0, 20.0, 150),
    ] {
        let walls = office_floor(1, w, d, target);
        assert_eq!(walls.len(), target, "{w} x {d}");
        for s in &walls {
            for v in [s.a, s.b] {
                assert!(v.x >= 0.0 && v.x <= w && v.y >= 0.0 && v.y <= d, "{s:?}");
            }
            assert!(s.length() > 0.1, "{s:?}");
        }
    }
}

#[test]
fn office_floor_small_target_keeps_the_structure() {
    let walls = office_floor(3, 40.0, 30.0, 10);
    assert!(walls.len() > 10 && walls.len() < 200, "{}", walls.len());
    assert!(office_floor(3, 0.0, 30.0, 10).is_empty());
    assert!(office_floor(3, f64::NAN, 30.0, 10).is_empty());
}

#[test]
fn index_matches_brute_force_on_an_office_floor() {
    let walls = office_floor(11, 60.0, 40.0, 800);
    let mut rng = SplitMix64::new(5);
    let mut rays = Vec::new();
    for _ in 0..200 {
        let a = p(rng.range(-5.0, 65.0), rng.range(-5.0, 45.0));
        let b = p(rng.range(-5.0, 65.0), rng.range(-5.0, 45.0));
        rays.push((a, b));
        // Through a wall corner, as grid points and antennas often are.
        let v = walls[rng.below(walls.len())].b;
        rays.push((a, a + (v - a) * 1.7));
    }
    assert_index_matches_brute(&walls, &rays);
}

#[test]
fn splitmix64_known_first_output() {
    // SplitMix64 reference sequence for seed 0.
    let mut r = SplitMix64::new(0);
    assert_eq!(r.next_u64(), 0xE220_A839_7B1D_CDAF);
    let x = r.next_f64();
    assert!((0.0..1.0).contains(&x));
}
