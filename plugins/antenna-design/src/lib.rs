//! # rfsite-plugin-antenna-design
//!
//! Designs indoor antennas for every service with a failing floor and proposes the design
//! as a remediation option, which the engine then predicts and grades on the changed site
//! like the site itself. Per failing floor: candidate ceiling positions ([`candidates`]),
//! each one's level over the floor with the graded model (the multi-wall engine, with the
//! calibration's fitted values when the grading used them), antennas chosen by the area
//! they bring to the required level with critical zones weighted, pruned and swapped, and
//! proven minimal by an exact search where that is affordable ([`rfsite_design::search`]);
//! the floor's verdict is the grading plugin's own rule-set test. Then the passive network
//! from the head end ([`feed`]) sets each antenna's power and losses.
//!
//! ```toml
//! [plugins.antenna-design]
//! head_end = { floor = "L0", position = [12.0, 8.0] }
//! spacing = 3.0          # candidate grid, site units
//! port_power_dbm = 5.0   # per channel at each antenna port
//! channels = 4
//! max_composite_dbm = 33.0
//! back_off_db = 3.0
//! forbid = [{ floor = "L1", polygon = [[0, 0], [4, 0], [4, 3], [0, 3]] }]
//! mounts = [{ floor = "L2", position = [20.0, 5.5] }]
//! ```
#![deny(missing_docs)]

use rfsite_model::{Service, Site};
use rfsite_plugin::*;

pub mod booster;
pub mod candidates;
pub mod feed;
pub mod floors;
pub mod options;
mod output;

/// The antenna designer.
pub struct AntennaDesign;

impl Plugin for AntennaDesign {
    fn id(&self) -> &str {
        "antenna-design"
    }
    fn version(&self) -> &str {
        env!("CARGO_PKG_VERSION")
    }
    fn method(&self) -> Method {
        Method {
            summary: "Indoor antennas placed per failing floor: candidate ceiling positions on a grid inside the outline (outside excluded and forbidden zones, clear of walls, not within λ/16 of a standing-wave null of a strongly reflecting surface), each predicted with the graded model; chosen greedily by the weighted area they bring to the required level, pruned, improved by swaps and, where affordable, proven minimal by trying every smaller subset; each floor's verdict is the grading's own rule-set test. Chosen antennas count on every floor. A passive coax network from the head end sets each antenna's power: the head end delivers at least the design's port power to every antenna".into(),
            citations: vec![
                "ITU-R P.525-4 and COST 231 Final Report (1999) §4.7, through the multi-wall engine".into(),
                "Ideal N-way split 10 log10 N plus excess loss; per-channel power P_ch = P_comp − 10 log10 N_ch (common practice)".into(),
                "Cable attenuation: plugins/data/cables.toml, each entry with its source (from memory)".into(),
            ],
            validity: "as good as the prediction: the design is predicted, not measured; an acceptance survey after installation decides".into(),
        }
    }
    fn after(&self) -> Vec<String> {
        [
            "free-space",
            "multi-wall",
            "calibration",
            "grading",
            "reflection-nulls",
        ]
        .map(String::from)
        .to_vec()
    }
    fn applies(&self, site: &Site) -> bool {
        !site.floors.is_empty()
    }
    fn option_keys(&self) -> Option<Vec<&'static str>> {
        Some(options::KEYS.to_vec())
    }
    fn check(&self, ctx: &Context<'_>) -> Vec<InputProblem> {
        check::problems_of(options::read(ctx))
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        let o = options::read(ctx)?;
        let mut out = PluginOutput::default();
        let Some(grading) = ctx.output_of("grading") else {
            out.warnings
                .push(warn("no grading ran: nothing to design against".into()));
            return Ok(out);
        };
        for r in &grading.services {
            let Some(svc) = ctx.site.service(&r.id) else {
                continue;
            };
            if r.floors.iter().all(|f| f.pass)
                || !(o.services.is_empty() || o.services.contains(&svc.id))
            {
                continue;
            }
            match output::design_service(ctx, &o, svc, r) {
                Ok(rem) => out.remediation.push(rem),
                Err(why) => out
                    .warnings
                    .push(warn(format!("{}: no design: {why}", svc.id))),
            }
        }
        Ok(out)
    }
}

fn warn(message: String) -> Warning {
    Warning {
        plugin: "antenna-design".into(),
        message,
    }
}

/// The service's index in the site.
fn service_index(site: &Site, svc: &Service) -> usize {
    site.services
        .iter()
        .position(|s| s.id == svc.id)
        .unwrap_or(0)
}
