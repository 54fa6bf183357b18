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

/// The grid of a floor: covering its outline's bounding box at the site's step.
pub fn floor_grid(site: &Site, floor: usize) -> Grid {
    site.floor_grid(floor)
}

/// Antenna gain towards a point, dBi.
pub fn gain_towards(tx: &Transmitter, tx3: P3, rx: P3) -> f64 {
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
                                let d = (p.distance(t3.p).powi(2) + (rz - t3.z).powi(2))
                                    .sqrt()
                                    .max(MIN_DISTANCE_M);
                                let level = t.eirp_dbm() - t.antenna_gain_dbi
                                    + gain_towards(t, *t3, rx)
                                    - fspl::fspl_db(svc.freq_mhz, d)
                                    - extra.extra_db(scratch, si, *t3, *tfi, rx, fi);
                                if level > best {
                                    best = level;
                                    best_i = k as u16;
                                }
                                sum_mw += 10f64.powf(level / 10.0);
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
    fn applies(&self, site: &Site) -> bool {
        !site.transmitters.is_empty()
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
