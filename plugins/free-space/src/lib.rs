//! # free-space plugin
//!
//! Predicts the received level on every floor for every service from each transmitter's
//! EIRP, its antenna pattern and the free-space loss of ITU-R P.525 over the 3D distance,
//! and combines the transmitters of a service by the strongest server (or power sum).
//!
//! The prediction core ([`predict`]) is shared with the multi-wall plugin, which adds the
//! loss of the walls and floors each path crosses through a [`PathLoss`] implementation.

use rayon::prelude::*;
use rfsite_geometry::{Grid, Point2};
use rfsite_model::{Combine, Pattern, Site, Transmitter};
use rfsite_physics::{antenna, fspl};
use rfsite_plugin::*;

/// Shortest distance the models are evaluated at, m: P.525 describes the far field, and a
/// ceiling antenna is rarely closer than this to a standing user (common practice).
pub const MIN_DISTANCE_M: f64 = 1.0;

/// A point in 3D (plan position + height above datum), m.
#[derive(Debug, Clone, Copy)]
pub struct P3 {
    /// Plan position.
    pub p: Point2,
    /// Height above the site datum, m.
    pub z: f64,
}

/// Extra loss on top of free space for one transmitter-receiver path.
pub trait PathLoss: Sync {
    /// Per-thread scratch space.
    type Scratch: Send;
    /// A new scratch.
    fn scratch(&self) -> Self::Scratch;
    /// Extra loss in dB for a path from `tx` (on floor `tx_floor`) to `rx` (on floor
    /// `rx_floor`), indices into `site.floors`.
    fn extra_db(
        &self,
        scratch: &mut Self::Scratch,
        service: usize,
        tx: P3,
        tx_floor: usize,
        rx: P3,
        rx_floor: usize,
    ) -> f64;
}

/// No extra loss: free space.
pub struct NoExtra;

impl PathLoss for NoExtra {
    type Scratch = ();
    fn scratch(&self) {}
    fn extra_db(&self, _: &mut (), _: usize, _: P3, _: usize, _: P3, _: usize) -> f64 {
        0.0
    }
}

/// Whether a plugin table of the site is enabled (`enabled`, default `default`).
fn table_enabled(site: &Site, id: &str, default: bool) -> bool {
    site.plugin_options
        .get(id)
        .and_then(|t| t.get("enabled"))
        .and_then(|v| v.as_bool())
        .unwrap_or(default)
}

/// The prediction models the site's run reads: the site's graded model, every enabled
/// plugin's `model` option, and the calibration's base model (`multi-wall` unless its
/// `model` says otherwise) when the calibration is enabled (it is opt-in).
pub fn models_read(site: &Site) -> std::collections::BTreeSet<String> {
    let mut out = std::collections::BTreeSet::from([site.prediction.model.clone()]);
    for (id, t) in &site.plugin_options {
        let calibration = id == "calibration";
        if !table_enabled(site, id, !calibration) {
            continue;
        }
        match t.get("model").and_then(|v| v.as_str()) {
            Some(m) => out.insert(m.to_string()),
            None if calibration => out.insert("multi-wall".to_string()),
            None => false,
        };
    }
    out
}

/// Whether the run needs the layers of `model` (`"free-space"` or `"multi-wall"`), so that
/// a model nobody reads is not computed. Free space is also needed wherever a plugin falls
/// back to it: when a model other than multi-wall is read (a calibrated model that may
/// not be produced, say), when the multi-wall plugin is disabled, and when the site
/// declares an external plugin (which may read any layer).
pub fn model_wanted(site: &Site, model: &str) -> bool {
    let read = models_read(site);
    if read.contains(model) {
        return true;
    }
    if model != "free-space" {
        return false;
    }
    let external = site
        .plugin_options
        .values()
        .any(|t| t.contains_key("command"));
    let fallback = read.iter().any(|m| m != "multi-wall");
    external || fallback || !table_enabled(site, "multi-wall", true)
}

/// The grid of a floor: covering its outline's bounding box at the site's step.
pub fn floor_grid(site: &Site, floor: usize) -> Grid {
    site.floor_grid(floor)
}

/// Antenna gain towards a point, dBi.
pub fn gain_towards(tx: &Transmitter, tx3: P3, rx: P3) -> f64 {
    if tx.pattern == Pattern::Isotropic {
        // The same in every direction: no angle to compute.
        return tx.antenna_gain_dbi;
    }
    let dx = rx.p.x - tx3.p.x;
    let dy = rx.p.y - tx3.p.y;
    let dz = rx.z - tx3.z;
    let horiz = (dx * dx + dy * dy).sqrt();
    // Zenith angle from the antenna: 0 straight up, 90 on the horizon, 180 straight down.
    let theta_deg = 90.0 - dz.atan2(horiz).to_degrees();
    match tx.pattern {
        Pattern::Isotropic => tx.antenna_gain_dbi,
        Pattern::OmniCeiling => antenna::omni_ceiling_gain_dbi(tx.antenna_gain_dbi, theta_deg),
        Pattern::Sector {
            azimuth_deg,
            downtilt_deg,
        } => {
            let az = dy.atan2(dx).to_degrees();
            let mut phi = az - azimuth_deg;
            while phi > 180.0 {
                phi -= 360.0;
            }
            while phi < -180.0 {
                phi += 360.0;
            }
            let el = antenna::ElementPattern {
                g_max_dbi: tx.antenna_gain_dbi,
                ..Default::default()
            };
            el.gain_dbi((theta_deg - downtilt_deg).clamp(0.0, 180.0), phi)
        }
    }
}

/// The pair terms of one transmitter-receiver path, shared by every model that needs them
/// (free space, multi-wall): the 3D distance (m, at least [`MIN_DISTANCE_M`]) and the
/// free-space level in dBm, EIRP with the pattern's gain towards the receiver less the
/// P.525 loss over that distance at `freq_mhz`.
#[inline]
pub fn pair_terms(t: &Transmitter, tx3: P3, rx: P3, freq_mhz: f64) -> (f64, f64) {
    let d = (rx.p.distance(tx3.p).powi(2) + (rx.z - tx3.z).powi(2))
        .sqrt()
        .max(MIN_DISTANCE_M);
    let level =
        t.eirp_dbm() - t.antenna_gain_dbi + gain_towards(t, tx3, rx) - fspl::fspl_db(freq_mhz, d);
    (d, level)
}

/// Predicts one layer per floor and service with free space plus `extra`.
pub fn predict<L: PathLoss>(site: &Site, model: &str, extra: &L) -> Vec<CoverageLayer> {
    let mut layers = Vec::new();
    for (si, svc) in site.services.iter().enumerate() {
        let txs: Vec<(&Transmitter, usize, P3)> = site
            .transmitters
            .iter()
            .filter(|t| t.service == svc.id)
            .filter_map(|t| {
                let fi = site.floor_index(&t.floor)?;
                let z = site.floors[fi].elevation_m + t.height_m;
                Some((t, fi, P3 { p: t.position, z }))
            })
            .collect();
        let power_sum = site.prediction.combine == Combine::PowerSum;
        for (fi, floor) in site.floors.iter().enumerate() {
            let grid = floor_grid(site, fi);
            let rz = floor.elevation_m + site.prediction.receiver_height_m;
            let rows: Vec<(Vec<f32>, Vec<u16>)> = (0..grid.ny)
                .into_par_iter()
                .map_init(
                    || extra.scratch(),
                    |scratch, iy| {
                        let mut lv = vec![f32::NAN; grid.nx];
                        let mut bs = vec![u16::MAX; grid.nx];
                        for ix in 0..grid.nx {
                            let p = grid.point(iy * grid.nx + ix);
                            if !rfsite_geometry::point_in_polygon(p, &floor.outline) {
                                continue;
                            }
                            let rx = P3 { p, z: rz };
                            let mut best = f64::NEG_INFINITY;
                            let mut best_i = u16::MAX;
                            let mut sum_mw = 0.0;
                            for (k, (t, tfi, t3)) in txs.iter().enumerate() {
                                let (_, free) = pair_terms(t, *t3, rx, svc.freq_mhz);
                                let level = free - extra.extra_db(scratch, si, *t3, *tfi, rx, fi);
                                if level > best {
                                    best = level;
                                    best_i = k as u16;
                                }
                                if power_sum {
                                    sum_mw += 10f64.powf(level / 10.0);
                                }
                            }
                            if txs.is_empty() {
                                continue;
                            }
                            lv[ix] = match site.prediction.combine {
                                Combine::Strongest => best as f32,
                                Combine::PowerSum => (10.0 * sum_mw.log10()) as f32,
                            };
                            bs[ix] = best_i;
                        }
                        (lv, bs)
                    },
                )
                .collect();
            let mut level_dbm = Vec::with_capacity(grid.len());
            let mut best_server = Vec::with_capacity(grid.len());
            for (l, b) in rows {
                level_dbm.extend(l);
                best_server.extend(b);
            }
            layers.push(CoverageLayer {
                floor: floor.id.clone(),
                service: svc.id.clone(),
                model: model.to_string(),
                grid: GridSpec::from_grid(&grid),
                level_dbm,
                best_server,
                servers: txs.iter().map(|(t, _, _)| t.id.clone()).collect(),
            });
        }
    }
    layers
}

/// The free-space plugin.
pub struct FreeSpace;

impl Plugin for FreeSpace {
    /// Only when free space is the graded model: the option's verdicts need nothing else.
    fn reruns_for_options(&self, site: &Site) -> bool {
        site.prediction.model == "free-space"
            || site
                .plugin_options
                .get("grading")
                .and_then(|t| t.get("model"))
                .and_then(|v| v.as_str())
                == Some("free-space")
    }
    fn id(&self) -> &str {
        "free-space"
    }
    fn version(&self) -> &str {
        env!("CARGO_PKG_VERSION")
    }
    fn method(&self) -> Method {
        Method {
            summary: "Free-space loss over the 3D transmitter-receiver distance, with each antenna's pattern; an optimistic bound that ignores walls and floors".into(),
            citations: vec![
                "ITU-R P.525-4 (08/2019), equation (1): L = 20 log10(4 pi d / lambda)".into(),
                "3GPP TR 38.901 V17.0.0 Table 7.3-1 (sector element pattern)".into(),
            ],
            validity: format!("far field; distances below {MIN_DISTANCE_M} m are evaluated at {MIN_DISTANCE_M} m"),
        }
    }
    /// Only when some plugin reads the free-space layers ([`model_wanted`]).
    fn applies(&self, site: &Site) -> bool {
        !site.transmitters.is_empty() && model_wanted(site, "free-space")
    }
    fn option_keys(&self) -> Option<Vec<&'static str>> {
        Some(Vec::new())
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        Ok(PluginOutput {
            layers: predict(ctx.site, self.id(), &NoExtra),
            ..Default::default()
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rfsite_model::{load, MaterialLibrary, SourceFile};

    /// A one-floor site with one transmitter, `extra` appended (prediction model and
    /// plugin tables).
    fn site(prediction: &str, extra: &str) -> Site {
        let text = format!(
            r#"
[site]
id = "m"
name = "model selection"
units = "metres"
report_date = "2026-01-15"
[prediction]
grid_step = 1.0
{prediction}
[[floors]]
id = "L0"
elevation = 0.0
height = 3.0
outline = [[0, 0], [10, 0], [10, 10], [0, 10]]
[[services]]
id = "s"
freq_mhz = 900.0
threshold_dbm = -90.0
[[transmitters]]
id = "T"
service = "s"
floor = "L0"
position = [2.0, 5.0]
height = 1.5
power_dbm = 20.0
{extra}
"#
        );
        load(
            &SourceFile::new("m.toml", &text),
            &MaterialLibrary::builtin(),
        )
        .site
        .expect("valid site")
    }

    /// The rule of `model_wanted`, case by case: a model runs when the graded model, a
    /// plugin's `model` option or the enabled calibration's base reads it; free space also
    /// where a plugin may fall back to it.
    #[test]
    fn only_the_models_a_run_reads_are_wanted() {
        let mw = site("", "");
        assert!(model_wanted(&mw, "multi-wall"));
        assert!(
            !model_wanted(&mw, "free-space"),
            "multi-wall graded, nothing reads free space"
        );
        let fs = site(r#"model = "free-space""#, "");
        assert!(model_wanted(&fs, "free-space"));
        assert!(!model_wanted(&fs, "multi-wall"), "free space graded alone");
        let calibrated = site(
            r#"model = "free-space""#,
            "[plugins.calibration]\nenabled = true\n",
        );
        assert!(
            model_wanted(&calibrated, "multi-wall"),
            "the calibration's default base"
        );
        let compared = site("", "[plugins.survey-compare]\nmodel = \"free-space\"\n");
        assert!(model_wanted(&compared, "free-space"));
        let off = site("", "[plugins.multi-wall]\nenabled = false\n");
        assert!(
            model_wanted(&off, "free-space"),
            "grading falls back to free space"
        );
    }
}
