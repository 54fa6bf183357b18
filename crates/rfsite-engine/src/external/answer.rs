//! What an external plugin's answer must be for this site, beyond its shape: every layer a
//! usable grid on a floor and service the site has. A problem is a protocol error naming
//! the field (`output.layers[2].grid.step_m`); what the answer raises is attributed to the
//! plugin.

use rfsite_model::Site;
use rfsite_plugin::{CoverageLayer, PluginOutput};

/// A `best_server` entry meaning no server reaches the point.
const NO_SERVER: u16 = u16::MAX;

/// Most points a layer's grid may have (`nx * ny`): 2^24 = 16 777 216, a 1 km x 1 km floor
/// at 25 cm (the 64 MiB answer limit holds about twice as many short numbers).
pub const MAX_LAYER_POINTS: usize = 1 << 24;

/// Checks every layer, then attributes the findings, warnings, remediation and layers to
/// plugin `id`.
pub(super) fn check(site: &Site, id: &str, mut o: PluginOutput) -> Result<PluginOutput, String> {
    for (i, l) in o.layers.iter().enumerate() {
        layer(site, l).map_err(|m| {
            format!(
                "answer breaks `{}`: output.layers[{i}]{m}",
                rfsite_plugin::wire::PROTOCOL
            )
        })?;
    }
    for l in &mut o.layers {
        l.model = id.to_string();
    }
    for f in &mut o.findings {
        f.plugin = id.to_string();
    }
    for w in &mut o.warnings {
        w.plugin = id.to_string();
    }
    for r in &mut o.remediation {
        r.plugin = id.to_string();
    }
    Ok(o)
}

/// One layer; the message starts with the field below `output.layers[i]`.
fn layer(site: &Site, l: &CoverageLayer) -> Result<(), String> {
    let g = &l.grid;
    if g.nx == 0 || g.ny == 0 {
        let k = if g.nx == 0 { "nx" } else { "ny" };
        return Err(format!(
            ".grid.{k} is 0; a layer has at least one column and one row"
        ));
    }
    let n =
        g.nx.checked_mul(g.ny)
            .filter(|n| *n <= MAX_LAYER_POINTS)
            .ok_or_else(|| {
                format!(
                    ".grid: {} x {} points, more than the {MAX_LAYER_POINTS} a layer may have",
                    g.nx, g.ny
                )
            })?;
    if !(g.step_m.is_finite() && g.step_m > 0.0) {
        return Err(format!(
            ".grid.step_m is {}; it must be a length in metres above 0",
            g.step_m
        ));
    }
    for (k, v) in [("origin_x_m", g.origin_x_m), ("origin_y_m", g.origin_y_m)] {
        if !v.is_finite() {
            return Err(format!(
                ".grid.{k} is {v}; it must be a finite number of metres"
            ));
        }
    }
    if l.level_dbm.len() != n {
        return Err(format!(
            ".level_dbm has {} values for a {} x {} grid; it needs nx * ny = {n}",
            l.level_dbm.len(),
            g.nx,
            g.ny
        ));
    }
    if let Some(v) = l.level_dbm.iter().find(|v| v.is_infinite()) {
        return Err(format!(
            ".level_dbm holds {v}; a level is a number of dBm, or null outside the floor"
        ));
    }
    servers(l, n)?;
    if site.floor(&l.floor).is_none() {
        return Err(format!(
            ".floor is `{}`, which the site does not have",
            l.floor
        ));
    }
    if site.service(&l.service).is_none() {
        return Err(format!(
            ".service is `{}`, which the site does not have",
            l.service
        ));
    }
    Ok(())
}

/// `best_server`: empty, or one index per point into `servers` (65535 for none).
fn servers(l: &CoverageLayer, n: usize) -> Result<(), String> {
    if l.best_server.is_empty() {
        return Ok(());
    }
    if l.best_server.len() != n {
        return Err(format!(
            ".best_server has {} values for a {} x {} grid; it needs none or nx * ny = {n}",
            l.best_server.len(),
            l.grid.nx,
            l.grid.ny
        ));
    }
    let ok = |s: u16| s == NO_SERVER || (s as usize) < l.servers.len();
    match l.best_server.iter().position(|s| !ok(*s)) {
        None => Ok(()),
        Some(i) => Err(format!(
            ".best_server[{i}] is {}, but `servers` has {} entries (65535: no server)",
            l.best_server[i],
            l.servers.len()
        )),
    }
}
