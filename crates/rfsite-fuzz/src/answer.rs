//! The `answer` target: external-plugin answers, mutated, read as the engine reads them
//! (`rfsite_engine::external::read_answer`: protocol, wire types, every layer checked).

use std::panic::{catch_unwind, AssertUnwindSafe};

use rfsite_engine::World;
use rfsite_model::{MaterialLibrary, Site};
use rfsite_plugin::wire::{Response, PROTOCOL};
use rfsite_plugin::{CoverageLayer, Finding, GridSpec, PluginOutput, Severity};

use crate::mutate::{self, Rng};
use crate::{save, Opts, Tally};

/// A valid answer for the demo site: one finding and one full layer of its first floor.
fn seed(site: &Site) -> String {
    let grid = GridSpec::from_grid(&site.floor_grid(0));
    let n = grid.nx * grid.ny;
    let layer = CoverageLayer {
        floor: site.floors[0].id.clone(),
        service: site.services[0].id.clone(),
        model: "fuzz".into(),
        grid,
        level_dbm: (0..n).map(|i| -60.0 - (i % 50) as f32).collect(),
        best_server: vec![0; n],
        servers: vec!["T".into()],
    };
    let out = PluginOutput {
        findings: vec![Finding {
            id: "fuzz-note".into(),
            severity: Severity::Info,
            floor: None,
            service: None,
            title: "note".into(),
            detail: "detail".into(),
            plugin: "fuzz".into(),
            shortfall_db: None,
            location_m: None,
            causes: Vec::new(),
            remedies: Vec::new(),
        }],
        layers: vec![layer],
        ..Default::default()
    };
    serde_json::to_string(&Response {
        protocol: PROTOCOL.into(),
        output: out,
    })
    .unwrap_or_default()
}

/// JSON-aware mutation: a number, string or structure token replaced, or bytes.
fn case(rng: &mut Rng, seed: &str) -> Vec<u8> {
    if rng.below(3) == 0 {
        return mutate::bytes_case(rng, seed.as_bytes());
    }
    let mut s = seed.to_string();
    for _ in 0..=rng.below(3) {
        let keys: Vec<usize> = s.match_indices("\":").map(|(i, _)| i + 2).collect();
        let Some(&at) = keys.get(rng.below(keys.len().max(1))) else {
            break;
        };
        let end = s[at..]
            .find([',', '}', ']'])
            .map(|e| at + e)
            .unwrap_or(s.len());
        let hostile = rng.pick(&[
            "0",
            "-1",
            "1e400",
            "null",
            "\"\"",
            "[]",
            "{}",
            "65535",
            "4294967296",
            "-0",
            "\"\\u0000\"",
            "[[[[[[[[]]]]]]]]",
            "1e-400",
            "true",
            "\"rfsite-plugin/0\"",
        ]);
        s.replace_range(at..end, hostile);
    }
    s.into_bytes()
}

/// Runs the target.
pub fn run(o: &Opts) -> Tally {
    let dir = crate::scratch();
    let mut world = World::open(dir.path()).expect("the demo opens");
    let site = rfsite_engine::load(&mut world, &MaterialLibrary::builtin())
        .expect("the demo loads")
        .site;
    let seed = seed(&site);
    let mut tally = Tally::default();
    for i in 0..o.cases {
        let mut rng = Rng::new(o.seed.wrapping_mul(0x1000_0000_01B3) ^ i ^ 0xA5A5);
        let bytes = case(&mut rng, &seed);
        let r = catch_unwind(AssertUnwindSafe(|| {
            rfsite_engine::external::read_answer(&site, "fuzz", &bytes)
        }));
        tally.cases += 1;
        match r {
            Ok(Ok(_)) => tally.loaded += 1,
            Ok(Err(m)) if !m.trim().is_empty() => tally.rejected += 1,
            Ok(Err(_)) => {
                tally.unlocated += 1;
                save(o, "answer", "unexplained", i, &bytes, "");
            }
            Err(_) => {
                tally.panics += 1;
                save(o, "answer", "panic", i, &bytes, "");
            }
        }
    }
    tally
}
