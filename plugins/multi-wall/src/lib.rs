//! # multi-wall plugin
//!
//! COST 231 multi-wall prediction: free-space loss (ITU-R P.525) over the 3D distance, plus
//! the loss of every wall, door and window the straight transmitter-receiver line crosses
//! (each at its own incidence angle for slab materials, within 0.01 dB of the exact
//! ITU-R P.2040-3 slab up to the grazing limit of 89.9°, beyond which the 89.9° loss is
//! charged; see `rfsite_model::CrossingLossFn`), plus the non-linear floor term
//! n^((n+2)/(n+1) - b) L_f for paths through n floor slabs.
//!
//! For a path between storeys, the 3D line is cut where it passes each slab; the part of it
//! inside each storey is tested against that storey's walls only.

use rayon::prelude::*;
use rfsite_geometry::shadow::{
    accumulate_path_part, accumulate_path_part_f64, ShadowScratch, WallLosses,
};
use rfsite_geometry::{split_at_junctions, Crossing, Grid, Point2, Scratch, Segment, WallIndex};
use rfsite_model::{Combine, CrossingLossFn};
use rfsite_model::{MaterialClass, Site, Transmitter, ZoneKind};
use rfsite_physics::cost231;
use rfsite_physics::p2040::Polarization;
use rfsite_plugin::*;
use rfsite_plugin_free_space::{floor_grid, pair_terms, PathLoss, P3};
use serde::Serialize;

mod incremental;
pub use incremental::with_added;

/// How far past a slab cut a storey's part of a path is traced (fraction of the path).
const CUT_PAD: f64 = 1e-6;

/// Tolerance on the path parameter when deciding which part a crossing belongs to.
const CUT_TOL: f64 = 1e-9;

/// One kind of crossing for one service (material, thickness, polarisation): the
/// material's loss over the angle (exact to 0.01 dB up to the grazing limit, see
/// [`rfsite_model::CrossingLossFn`]), a calibration offset and the crossing cap.
#[derive(Debug, Clone)]
struct CrossingKind {
    material: String,
    /// Wall kinds take calibration offsets; floor slabs do not.
    wall: bool,
    shape: CrossingLossFn,
    offset_db: f64,
    cap_db: f64,
}

impl CrossingKind {
    /// `min(loss, cap) + offset`, kept between 0 dB and the cap.
    fn eval(&self, cos: f64) -> f64 {
        (self.shape.eval(cos) + self.offset_db).clamp(0.0, self.cap_db)
    }

    fn constant_db(&self) -> Option<f64> {
        self.shape
            .constant_db()
            .map(|l| (l + self.offset_db).clamp(0.0, self.cap_db))
    }
}

/// The distinct crossing kinds of one service, and which kind each wall part and each
/// floor slab is.
#[derive(Debug, Clone, Default)]
struct ServiceLosses {
    kinds: Vec<CrossingKind>,
    /// [floor][part] -> index into `kinds`.
    parts: Vec<Vec<usize>>,
    /// [floor]: the slab under the floor -> index into `kinds`.
    slabs: Vec<usize>,
}

impl ServiceLosses {
    fn part(&self, floor: usize, part: usize) -> &CrossingKind {
        &self.kinds[self.parts[floor][part]]
    }

    /// The kind of piece `piece` of floor `floor` of `scene`.
    fn piece(&self, scene: &Scene, floor: usize, piece: usize) -> &CrossingKind {
        let part = scene.floors[floor].origin[piece];
        self.part(floor, part)
    }

    fn slab(&self, floor: usize) -> &CrossingKind {
        &self.kinds[self.slabs[floor]]
    }
}

struct FloorScene {
    /// The floor's wall parts in junction form (rfsite-geometry `split_at_junctions`):
    /// every point where parts meet is an end of each, so a path through it is charged
    /// the same however the parts are ordered, directed or split into collinear pieces.
    index: WallIndex,
    /// `origin[piece]`: the wall part (index into the floor's `parts`) a piece is cut from.
    origin: Vec<usize>,
    bottom_m: f64,
    top_m: f64,
}

/// Precomputed geometry and losses of a site for the multi-wall model.
pub struct Scene {
    floors: Vec<FloorScene>,
    /// [service]: crossing kinds of walls and slabs.
    losses: Vec<ServiceLosses>,
    b: f64,
    /// Cap on a path's total wall and floor loss (its excess over free space), dB.
    max_excess_db: f64,
    /// Notes on materials used outside their ranges.
    pub notes: Vec<String>,
}

/// Key of a crossing kind: wall or slab, material, thickness bits, polarisation.
type KindKey = (bool, String, u64, bool);

/// Builder of one service's crossing kinds, each computed once.
struct KindBuilder<'a> {
    site: &'a Site,
    freq_mhz: f64,
    cap: f64,
    out: ServiceLosses,
    index: std::collections::BTreeMap<KindKey, usize>,
}

impl KindBuilder<'_> {
    /// The kind of a crossing of `material`, `thickness_m` thick, built on first use;
    /// range notes of the material go to `notes`.
    fn kind(
        &mut self,
        wall: bool,
        material: &str,
        thickness_m: f64,
        pol: Polarization,
        notes: &mut Vec<String>,
    ) -> usize {
        let key = (
            wall,
            material.to_string(),
            thickness_m.to_bits(),
            pol == Polarization::Te,
        );
        if let Some(&k) = self.index.get(&key) {
            return k;
        }
        let shape = match self.site.materials.get(material) {
            None => CrossingLossFn::Const(0.0),
            Some(m) => {
                let first = m.crossing_loss(self.freq_mhz, thickness_m, 1.0, pol);
                if let Some(n) = first.note {
                    notes.push(format!("material `{}`: {}", m.id, n.message()));
                }
                m.crossing_loss_fn(self.freq_mhz, thickness_m, pol, self.cap)
            }
        };
        self.out.kinds.push(CrossingKind {
            material: material.to_string(),
            wall,
            shape,
            offset_db: 0.0,
            cap_db: self.cap,
        });
        self.index.insert(key, self.out.kinds.len() - 1);
        self.out.kinds.len() - 1
    }
}

/// The crossing kinds of one service: walls TE (vertical walls, vertical polarisation,
/// horizontal paths), slabs TM.
fn service_losses(site: &Site, freq_mhz: f64, cap: f64, notes: &mut Vec<String>) -> ServiceLosses {
    let mut b = KindBuilder {
        site,
        freq_mhz,
        cap,
        out: ServiceLosses::default(),
        index: Default::default(),
    };
    for f in &site.floors {
        let parts = f
            .parts
            .iter()
            .map(|p| b.kind(true, &p.material, p.thickness_m, Polarization::Te, notes))
            .collect();
        b.out.parts.push(parts);
        let slab = b.kind(
            false,
            &f.slab_material,
            f.slab_thickness_m,
            Polarization::Tm,
            notes,
        );
        b.out.slabs.push(slab);
    }
    b.out
}

impl Scene {
    /// Builds the scene: one wall index per floor, loss tables per service.
    pub fn new(site: &Site, b: f64, max_crossing_db: f64) -> Scene {
        let n = site.floors.len();
        let floors = (0..n)
            .map(|i| {
                let f = &site.floors[i];
                let segs: Vec<Segment> = f.parts.iter().map(|p| p.segment).collect();
                let jf = split_at_junctions(&segs);
                let top = if i + 1 < n {
                    site.floors[i + 1].elevation_m
                } else {
                    f.elevation_m + f.height_m
                };
                FloorScene {
                    index: WallIndex::new(&jf.pieces),
                    origin: jf.origin,
                    bottom_m: f.elevation_m,
                    top_m: top,
                }
            })
            .collect();
        let mut notes = Vec::new();
        let losses = site
            .services
            .iter()
            .map(|svc| service_losses(site, svc.freq_mhz, max_crossing_db, &mut notes))
            .collect();
        notes.sort();
        notes.dedup();
        Scene {
            floors,
            losses,
            b,
            max_excess_db: DEFAULT_MAX_EXCESS_LOSS_DB,
            notes,
        }
    }

    /// The same scene with another cap on a path's total wall and floor loss, dB.
    pub fn with_max_excess_db(mut self, cap: f64) -> Scene {
        self.max_excess_db = cap;
        self
    }

    /// A path's wall and floor loss, at most the excess-loss cap.
    pub fn capped_excess_db(&self, walls_and_floors_db: f64) -> f64 {
        walls_and_floors_db.min(self.max_excess_db)
    }

    /// Calls `f(floor, crossing)` for every wall crossing of the path (`crossing.wall` a
    /// piece of the floor's junction form), a corner charged to the walls of largest loss
    /// for service index `service`.
    #[allow(clippy::too_many_arguments)]
    fn for_each_crossing(
        &self,
        scratch: &mut (Scratch, Vec<Crossing>),
        service: usize,
        tx: P3,
        tx_floor: usize,
        rx: P3,
        rx_floor: usize,
        mut f: impl FnMut(usize, &Crossing),
    ) {
        let (sc, out) = scratch;
        let losses = &self.losses[service];
        if tx_floor == rx_floor {
            out.clear();
            let rank = |w: usize, cos: f64| losses.piece(self, rx_floor, w).eval(cos);
            self.floors[rx_floor]
                .index
                .crossings_ranked(sc, tx.p, rx.p, &rank, out);
            for c in out.iter() {
                f(rx_floor, c);
            }
            return;
        }
        let (lo, hi) = (tx_floor.min(rx_floor), tx_floor.max(rx_floor));
        let dz = rx.z - tx.z;
        for k in lo..=hi {
            let fs = &self.floors[k];
            let Some((t0, t1)) = storey_range(fs, tx.z, dz) else {
                continue;
            };
            let at = |t: f64| {
                Point2::new(
                    tx.p.x + t * (rx.p.x - tx.p.x),
                    tx.p.y + t * (rx.p.y - tx.p.y),
                )
            };
            // Trace a little beyond both cuts and keep the crossings in [t0, t1): a wall
            // lying exactly where the path passes a slab then counts once (in the upper
            // part), not zero times (path endpoints never count as crossings).
            let (a0, a1) = ((t0 - CUT_PAD).max(0.0), (t1 + CUT_PAD).min(1.0));
            out.clear();
            let rank = |w: usize, cos: f64| losses.piece(self, k, w).eval(cos);
            fs.index.crossings_ranked(sc, at(a0), at(a1), &rank, out);
            for c in out.iter() {
                let t = a0 + c.t * (a1 - a0);
                // Half-open [t0, t1) with one tolerance, so a crossing on a cut lands in
                // exactly one part (the one that starts there), as in rfsite-geometry's
                // shadow path parts.
                if t >= t0 - CUT_TOL && t < t1 - CUT_TOL {
                    f(k, c);
                }
            }
        }
    }

    fn floor_db(
        &self,
        service: usize,
        tx: P3,
        tx_floor: usize,
        rx: P3,
        rx_floor: usize,
    ) -> (u32, f64) {
        if tx_floor == rx_floor {
            return (0, 0.0);
        }
        let (lo, hi) = (tx_floor.min(rx_floor), tx_floor.max(rx_floor));
        let d =
            ((rx.p.x - tx.p.x).powi(2) + (rx.p.y - tx.p.y).powi(2) + (rx.z - tx.z).powi(2)).sqrt();
        let cos = if d > 0.0 {
            (rx.z - tx.z).abs() / d
        } else {
            1.0
        };
        let n = (hi - lo) as u32;
        let mean: f64 = ((lo + 1)..=hi)
            .map(|j| self.losses[service].slab(j).eval(cos))
            .sum::<f64>()
            / n as f64;
        (n, cost231::floor_term_db(n, mean, self.b))
    }
}

impl Scene {
    /// Wall crossings of the direct path from transmitter `tx_id` to point `p` on floor
    /// `rx_floor`, counted per material id, and the 3D path length (m). Used to fit
    /// per-material losses to measurements.
    pub fn crossings_by_material(
        &self,
        site: &Site,
        tx_id: &str,
        rx_floor: usize,
        p: Point2,
    ) -> Option<(std::collections::BTreeMap<String, usize>, f64)> {
        let t = site.transmitters.iter().find(|t| t.id == tx_id)?;
        let tf = site.floor_index(&t.floor)?;
        let tx = P3 {
            p: t.position,
            z: site.floors[tf].elevation_m + t.height_m,
        };
        let rx = P3 {
            p,
            z: site.floors.get(rx_floor)?.elevation_m + site.prediction.receiver_height_m,
        };
        let service = site.services.iter().position(|s| s.id == t.service)?;
        let mut counts: std::collections::BTreeMap<String, usize> = Default::default();
        let mut scratch = self.scratch();
        self.for_each_crossing(&mut scratch, service, tx, tf, rx, rx_floor, |k, c| {
            let part = &site.floors[k].parts[self.floors[k].origin[c.wall]];
            *counts.entry(part.material.clone()).or_default() += 1;
        });
        let d = (p.distance(tx.p).powi(2) + (rx.z - tx.z).powi(2))
            .sqrt()
            .max(rfsite_plugin_free_space::MIN_DISTANCE_M);
        Some((counts, d))
    }

    /// Adds `delta_db` to the loss of every wall crossing of `material` for service index
    /// `service`, keeping each crossing between 0 dB and the crossing cap. Used by
    /// calibration. Offsets of repeated calls add up.
    pub fn adjust_material(&mut self, service: usize, material: &str, delta_db: f64) {
        if let Some(svc) = self.losses.get_mut(service) {
            svc.kinds
                .iter_mut()
                .filter(|k| k.wall && k.material == material)
                .for_each(|k| k.offset_db += delta_db);
        }
    }
}

impl Scene {
    /// Wall losses (no floor term) of one path, dB.
    pub fn walls_db(
        &self,
        scratch: &mut (Scratch, Vec<Crossing>),
        service: usize,
        tx: P3,
        tx_floor: usize,
        rx: P3,
        rx_floor: usize,
    ) -> f64 {
        let mut walls = 0.0;
        let losses = &self.losses[service];
        self.for_each_crossing(scratch, service, tx, tx_floor, rx, rx_floor, |k, c| {
            walls += losses.piece(self, k, c.wall).eval(c.cos_incidence);
        });
        walls
    }
}

impl PathLoss for Scene {
    type Scratch = (Scratch, Vec<Crossing>);
    fn scratch(&self) -> Self::Scratch {
        (Scratch::new(), Vec::new())
    }
    fn extra_db(
        &self,
        scratch: &mut Self::Scratch,
        service: usize,
        tx: P3,
        tx_floor: usize,
        rx: P3,
        rx_floor: usize,
    ) -> f64 {
        self.capped_excess_db(
            self.walls_db(scratch, service, tx, tx_floor, rx, rx_floor)
                + self.floor_db(service, tx, tx_floor, rx, rx_floor).1,
        )
    }
}

/// What one path's loss is made of, for the findings ("why").
#[derive(Debug, Clone, Serialize)]
pub struct Breakdown {
    /// Floor of the receiver point.
    pub floor: String,
    /// Zone kind of the point ("general" or "critical").
    pub zone: String,
    /// Service.
    pub service: String,
    /// Point, m.
    pub point_m: [f64; 2],
    /// Predicted level there, dBm.
    pub level_dbm: f64,
    /// Best server.
    pub server: String,
    /// Free-space loss, dB.
    pub fspl_db: f64,
    /// Walls crossed, grouped by material.
    pub walls: Vec<WallGroup>,
    /// Floor slabs crossed.
    pub floors_crossed: u32,
    /// Floor term, dB.
    pub floor_loss_db: f64,
    /// Total path loss, dB (free space + walls + floors, the last two at most the
    /// excess-loss cap).
    pub total_loss_db: f64,
    /// The walls and floors exceed the excess-loss cap: the total charges the cap.
    pub excess_capped: bool,
}

/// Crossings of one material on a path.
#[derive(Debug, Clone, Serialize)]
pub struct WallGroup {
    /// Material id.
    pub material: String,
    /// Material name.
    pub name: String,
    /// Class label.
    pub class: String,
    /// Number of crossings.
    pub count: usize,
    /// Their loss, dB.
    pub loss_db: f64,
}

/// Breaks down the path from transmitter `tx_id` to point `p` on floor `rx_floor`.
pub fn breakdown(
    site: &Site,
    scene: &Scene,
    service: usize,
    tx_id: &str,
    rx_floor: usize,
    p: Point2,
    level_dbm: f64,
) -> Option<Breakdown> {
    let t = site.transmitters.iter().find(|t| t.id == tx_id)?;
    let tf = site.floor_index(&t.floor)?;
    let tx = P3 {
        p: t.position,
        z: site.floors[tf].elevation_m + t.height_m,
    };
    let rx = P3 {
        p,
        z: site.floors[rx_floor].elevation_m + site.prediction.receiver_height_m,
    };
    let mut groups: std::collections::BTreeMap<String, (usize, f64)> = Default::default();
    let mut scratch = scene.scratch();
    scene.for_each_crossing(&mut scratch, service, tx, tf, rx, rx_floor, |k, c| {
        let part = &site.floors[k].parts[scene.floors[k].origin[c.wall]];
        let e = groups.entry(part.material.clone()).or_default();
        e.0 += 1;
        e.1 += scene.losses[service]
            .piece(scene, k, c.wall)
            .eval(c.cos_incidence);
    });
    let (n, fl) = scene.floor_db(service, tx, tf, rx, rx_floor);
    let d = (p.distance(tx.p).powi(2) + (rx.z - tx.z).powi(2))
        .sqrt()
        .max(rfsite_plugin_free_space::MIN_DISTANCE_M);
    let fspl_db = rfsite_physics::fspl::fspl_db(site.services[service].freq_mhz, d);
    let mut walls: Vec<WallGroup> = groups
        .into_iter()
        .map(|(m, (count, loss_db))| {
            let mat = site.materials.get(&m);
            WallGroup {
                name: mat.map(|x| x.name.clone()).unwrap_or_else(|| m.clone()),
                class: mat
                    .map(|x| x.class)
                    .unwrap_or(MaterialClass::Other)
                    .label()
                    .to_string(),
                material: m,
                count,
                loss_db,
            }
        })
        .collect();
    walls.sort_by(|a, b| {
        b.loss_db
            .total_cmp(&a.loss_db)
            .then(a.material.cmp(&b.material))
    });
    let wl: f64 = walls.iter().map(|w| w.loss_db).sum();
    Some(Breakdown {
        zone: site.floors[rx_floor].zone_kind_at(p).label().to_string(),
        floor: site.floors[rx_floor].id.clone(),
        service: site.services[service].id.clone(),
        point_m: [p.x, p.y],
        level_dbm,
        server: tx_id.to_string(),
        fspl_db,
        walls,
        floors_crossed: n,
        floor_loss_db: fl,
        total_loss_db: fspl_db + scene.capped_excess_db(wl + fl),
        excess_capped: wl + fl > scene.max_excess_db,
    })
}

/// The multi-wall plugin.
pub struct MultiWall;

/// The default cap on one wall crossing, dB: leakage and diffraction around real walls
/// bound what one crossing costs (common practice).
pub const DEFAULT_MAX_CROSSING_LOSS_DB: f64 = 60.0;

/// The default cap on a path's total wall and floor loss (its excess over free space),
/// dB. Beyond it, energy through doors, stairs, shafts and around the outside carries more
/// than the straight path; 80 dB is rfsite's choice (common practice that multi-wall sums
/// over-predict deep inside large buildings; the number itself is from memory), far below
/// any level a service could pass on, so the cap never turns a failing point into a
/// passing one.
pub const DEFAULT_MAX_EXCESS_LOSS_DB: f64 = 80.0;

/// The checked options.
#[derive(Debug, Clone, Copy)]
struct Options {
    floor_b: f64,
    max_crossing_db: f64,
    max_excess_db: f64,
}

/// The options `floor_b`, `max_crossing_loss_db` and `max_excess_loss_db`, checked.
fn options(ctx: &Context<'_>) -> Result<Options, PluginError> {
    let b = ctx.option_f64("floor_b", cost231::COST231_DEFAULT_B)?;
    if !(0.0..=2.0).contains(&b) {
        return Err(PluginError::BadOption {
            key: "floor_b".into(),
            message: "must be between 0 and 2 (COST 231 fitted 0.46)".into(),
        });
    }
    let cap = ctx.option_f64("max_crossing_loss_db", DEFAULT_MAX_CROSSING_LOSS_DB)?;
    if cap <= 0.0 {
        return Err(PluginError::BadOption {
            key: "max_crossing_loss_db".into(),
            message: "must be positive".into(),
        });
    }
    let excess = ctx.option_f64("max_excess_loss_db", DEFAULT_MAX_EXCESS_LOSS_DB)?;
    if excess < cap {
        return Err(PluginError::BadOption {
            key: "max_excess_loss_db".into(),
            message: format!(
                "must be at least the cap on one crossing ({cap:.0} dB): a path's total cannot be capped below one wall"
            ),
        });
    }
    Ok(Options {
        floor_b: b,
        max_crossing_db: cap,
        max_excess_db: excess,
    })
}

impl Plugin for MultiWall {
    fn reruns_for_options(&self, _site: &Site) -> bool {
        true
    }
    fn id(&self) -> &str {
        "multi-wall"
    }
    fn version(&self) -> &str {
        env!("CARGO_PKG_VERSION")
    }
    fn method(&self) -> Method {
        Method {
            summary: "COST 231 multi-wall: free-space loss plus the loss of each wall, door and window crossed by the direct path, plus the non-linear floor term. ITU-R P.2040 slab materials are charged at each crossing's own incidence angle (walls TE, floor slabs TM) from a table of the exact slab loss checked to 0.002 dB at every table midpoint (within 0.01 dB of the exact slab up to 89.9°); a crossing nearer grazing than 89.9° is charged the 89.9° loss; materials given as measured loss tables cost the same at every angle. One crossing costs at most `max_crossing_loss_db` (default 60 dB) and a path's walls and floors together at most `max_excess_loss_db` over free space (default 80 dB; common practice, the number from memory)".into(),
            citations: vec![
                "COST 231 Final Report (1999), section 4.7, multi-wall model".into(),
                "ITU-R P.525-4 (08/2019) free-space loss".into(),
                "ITU-R P.2040-3 (08/2023) section 3 and Table 3: slab transmission".into(),
            ],
            validity: "indoor paths of a few to about 100 m; the floor term was fitted near 1.8 GHz; reflections and diffraction around walls are not modelled".into(),
        }
    }
    fn after(&self) -> Vec<String> {
        vec!["free-space".into()]
    }
    /// Only when some plugin reads the multi-wall layers
    /// ([`rfsite_plugin_free_space::model_wanted`]): not for a site graded on free space
    /// alone.
    fn applies(&self, site: &Site) -> bool {
        !site.transmitters.is_empty() && rfsite_plugin_free_space::model_wanted(site, "multi-wall")
    }
    fn option_keys(&self) -> Option<Vec<&'static str>> {
        Some(vec![
            "floor_b",
            "max_crossing_loss_db",
            "max_excess_loss_db",
        ])
    }
    fn check(&self, ctx: &Context<'_>) -> Vec<rfsite_plugin::InputProblem> {
        rfsite_plugin::check::problems_of(options(ctx))
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        let o = options(ctx)?;
        let cap = o.max_crossing_db;
        let site = ctx.site;
        let scene = Scene::new(site, o.floor_b, cap).with_max_excess_db(o.max_excess_db);
        if let Some(base) = &ctx.base {
            // An option's re-run: the layers are all it needs.
            let layers = with_added(site, self.id(), &scene, &|_, _| 0.0, base)
                .unwrap_or_else(|| predict_grid(site, self.id(), &scene));
            return Ok(PluginOutput {
                layers,
                ..Default::default()
            });
        }
        let layers = predict_grid(site, self.id(), &scene);
        let mut out = PluginOutput {
            warnings: scene
                .notes
                .iter()
                .map(|n| Warning {
                    plugin: self.id().into(),
                    message: n.clone(),
                })
                .collect(),
            ..Default::default()
        };
        out.warnings.push(Warning {
            plugin: self.id().into(),
            message: format!("a single crossing is capped at {cap:.0} dB: leakage and diffraction around real walls bound what one crossing costs (common practice)"),
        });
        out.warnings.push(Warning {
            plugin: self.id().into(),
            message: format!("a path's walls and floors together are charged at most {:.0} dB over free space (`max_excess_loss_db`): beyond that, doors, stairs and paths around the outside carry more than the straight line (common practice; the number is from memory)", o.max_excess_db),
        });
        // Worst point of every layer in each graded zone kind, explained.
        let mut bds = Vec::new();
        for l in &layers {
            let (Some(si), Some(fi)) = (
                site.services.iter().position(|s| s.id == l.service),
                site.floor_index(&l.floor),
            ) else {
                continue;
            };
            let g = l.grid.to_grid();
            let floor = &site.floors[fi];
            for kind in [ZoneKind::General, ZoneKind::Critical] {
                let worst = l
                    .level_dbm
                    .iter()
                    .enumerate()
                    .filter(|(i, v)| v.is_finite() && floor.zone_kind_at(g.point(*i)) == kind)
                    .min_by(|a, b| a.1.total_cmp(b.1).then(a.0.cmp(&b.0)));
                let Some((i, v)) = worst else { continue };
                let server = l
                    .best_server
                    .get(i)
                    .and_then(|&s| l.servers.get(s as usize));
                if let Some(server) = server {
                    if let Some(mut bd) =
                        breakdown(site, &scene, si, server, fi, g.point(i), *v as f64)
                    {
                        bd.zone = kind.label().to_string();
                        bds.push(bd);
                    }
                }
            }
        }
        out.extra.insert(
            "worst_points".into(),
            serde_json::to_value(&bds).map_err(|e| PluginError::Failed(e.to_string()))?,
        );
        out.layers = layers;
        Ok(out)
    }
}

/// Whole-grid multi-wall prediction: per transmitter, every wall's shadow over the grid adds
/// its loss through per-row difference arrays (rfsite-geometry `shadow`), so a floor costs
/// about walls x rows + points per transmitter instead of points x walls. The wall sets are
/// exactly those of the per-ray `PathLoss` implementation (tested in rfsite-geometry);
/// transmitters are evaluated in parallel and combined in a fixed order, so the result is
/// deterministic.
pub fn predict_grid(site: &Site, model: &str, scene: &Scene) -> Vec<CoverageLayer> {
    predict_grid_adjusted(site, model, scene, &|_, _| 0.0)
}

/// As [`predict_grid`], with an extra loss `adjust(service, distance_m)` in dB on every path
/// (a calibrated offset and distance term, say).
pub fn predict_grid_adjusted(
    site: &Site,
    model: &str,
    scene: &Scene,
    adjust: &(dyn Fn(usize, f64) -> f64 + Sync),
) -> Vec<CoverageLayer> {
    predict_grid_traced(site, model, scene, adjust, StoreyTrace::Auto)
}

/// As [`predict_grid_adjusted`], the walls of paths between storeys found by `trace` (for
/// benchmarks and tests: every choice gives the same layers).
pub fn predict_grid_traced(
    site: &Site,
    model: &str,
    scene: &Scene,
    adjust: &(dyn Fn(usize, f64) -> f64 + Sync),
    trace: StoreyTrace,
) -> Vec<CoverageLayer> {
    let mut layers = Vec::new();
    for (si, svc) in site.services.iter().enumerate() {
        // The service's transmitters on a known floor, in site order: the server order.
        let txs: Vec<&Transmitter> = site
            .transmitters
            .iter()
            .filter(|t| t.service == svc.id && site.floor_index(&t.floor).is_some())
            .collect();
        for (fi, floor) in site.floors.iter().enumerate() {
            let fp = FloorPredictor::new(site, scene, si, fi, adjust).with_storey_trace(trace);
            let (level_dbm, best_server) = floor_levels(&fp, &txs);
            layers.push(CoverageLayer {
                floor: floor.id.clone(),
                service: svc.id.clone(),
                model: model.to_string(),
                grid: GridSpec::from_grid(fp.grid()),
                level_dbm,
                best_server,
                servers: txs.iter().map(|t| t.id.clone()).collect(),
            });
        }
    }
    layers
}

/// Combined level and best server (index into `txs`) at every point of the predictor's
/// floor; NaN and no server outside the outline and where there is no transmitter.
fn floor_levels(fp: &FloorPredictor<'_>, txs: &[&Transmitter]) -> (Vec<f32>, Vec<u16>) {
    let n = fp.grid().len();
    if txs.is_empty() {
        return (vec![f32::NAN; n], vec![u16::MAX; n]);
    }
    let combine = fp.site.prediction.combine;
    if combine == Combine::Strongest {
        return strongest_of_all(fp, txs);
    }
    let per_tx = levels_of_all(fp, txs, false);
    let mut level_dbm = vec![f32::NAN; n];
    let mut best_server = vec![u16::MAX; n];
    let points = level_dbm.iter_mut().zip(best_server.iter_mut());
    for (i, (level, server)) in points.enumerate() {
        if fp.inside().get(i) == Some(&true) {
            (*level, *server) = combine_at(combine, &per_tx, i);
        }
    }
    (level_dbm, best_server)
}

/// The strongest level and server at every point, as [`combine_at`] picks them from
/// [`levels_of_all`] (the same-floor transmitters first, the others bounded by their best),
/// each transmitter's levels folded into the best so far as soon as they are computed
/// instead of being kept. The fold keeps the larger level and, of equal finite levels,
/// the lower server index, so the result does not depend on the order of the folds.
fn strongest_of_all(fp: &FloorPredictor<'_>, txs: &[&Transmitter]) -> (Vec<f32>, Vec<u16>) {
    let (same, other): (Vec<usize>, Vec<usize>) = (0..txs.len())
        .partition(|&k| txs.get(k).and_then(|t| fp.site.floor_index(&t.floor)) == Some(fp.floor));
    let (mut level, mut server) = fold_best(fp, txs, &same, None);
    let (l2, s2) = fold_best(fp, txs, &other, Some(&level));
    merge_best((&mut level, &mut server), (&l2, &s2));
    for ((l, s), &inside) in level.iter_mut().zip(server.iter_mut()).zip(fp.inside()) {
        if !inside {
            (*l, *s) = (f32::NAN, u16::MAX);
        }
    }
    (level, server)
}

/// The best level and server (index into `txs`) over the transmitters `txs[k]`, `k` in
/// `ks`: -inf and no server where none gives a finite level.
fn fold_best(
    fp: &FloorPredictor<'_>,
    txs: &[&Transmitter],
    ks: &[usize],
    bound: Option<&[f32]>,
) -> (Vec<f32>, Vec<u16>) {
    let n = fp.grid().len();
    let empty = || (vec![f32::NEG_INFINITY; n], vec![u16::MAX; n]);
    ks.par_iter()
        .fold(
            || (FloorScratch::new(), empty()),
            |(mut sc, (mut bl, mut bs)), &k| {
                if let Some(t) = txs.get(k) {
                    let lv = fp.levels_with(t, bound, &mut sc);
                    for ((b, s), &l) in bl.iter_mut().zip(bs.iter_mut()).zip(&lv) {
                        if better(l, k as u16, *b, *s) {
                            (*b, *s) = (l, k as u16);
                        }
                    }
                }
                (sc, (bl, bs))
            },
        )
        .map(|(_, best)| best)
        .reduce(empty, |(mut l1, mut s1), (l2, s2)| {
            merge_best((&mut l1, &mut s1), (&l2, &s2));
            (l1, s1)
        })
}

/// Whether level `l` of server `k` beats the best `b` of server `s`: larger, or equal,
/// finite and of a lower index (the first of equals, as [`combine_at`] picks it).
#[inline]
fn better(l: f32, k: u16, b: f32, s: u16) -> bool {
    l > b || (l == b && l > f32::NEG_INFINITY && k < s)
}

/// Folds the best levels and servers `other` into `best`.
fn merge_best(best: (&mut [f32], &mut [u16]), other: (&[f32], &[u16])) {
    let pairs = best.0.iter_mut().zip(best.1.iter_mut());
    for ((b, s), (&l, &k)) in pairs.zip(other.0.iter().zip(other.1)) {
        if better(l, k, *b, *s) {
            (*b, *s) = (l, k);
        }
    }
}

/// The level of point `i` from the levels of each transmitter: the strongest server's, or
/// the non-coherent power sum of all (10 log10 of the sum of the levels in mW); and the
/// strongest server (the first of equals).
fn combine_at(combine: Combine, per_tx: &[Vec<f32>], i: usize) -> (f32, u16) {
    let mut best = f64::NEG_INFINITY;
    let mut bi = u16::MAX;
    let mut sum_mw = 0.0;
    for (k, lv) in per_tx.iter().enumerate() {
        let l = lv.get(i).map_or(f64::NEG_INFINITY, |&x| x as f64);
        if l > best {
            best = l;
            bi = k as u16;
        }
        if combine == Combine::PowerSum {
            sum_mw += 10f64.powf(l / 10.0);
        }
    }
    let level = match combine {
        Combine::Strongest => best as f32,
        Combine::PowerSum => (10.0 * sum_mw.log10()) as f32,
    };
    (level, bi)
}

/// The levels of every transmitter of `txs` on the predictor's floor, in the order of
/// `txs`: the same-floor ones first, then the others, with the strongest-server rule
/// (`strongest`) bounded by the best same-floor level, which is exact for the combined
/// level and server. Each transmitter's levels depend on it and on the bound only, so the
/// result does not depend on how the threads are scheduled.
fn levels_of_all(fp: &FloorPredictor<'_>, txs: &[&Transmitter], strongest: bool) -> Vec<Vec<f32>> {
    let (same, other): (Vec<usize>, Vec<usize>) = (0..txs.len())
        .partition(|&k| txs.get(k).and_then(|t| fp.site.floor_index(&t.floor)) == Some(fp.floor));
    let mut per_tx = vec![Vec::new(); txs.len()];
    let mut best = vec![f32::NEG_INFINITY; fp.grid().len()];
    for (&k, lv) in same.iter().zip(par_levels(fp, txs, &same, None)) {
        for (b, l) in best.iter_mut().zip(&lv) {
            if *l > *b {
                *b = *l;
            }
        }
        per_tx[k] = lv;
    }
    let bound = strongest.then_some(&best[..]);
    for (&k, lv) in other.iter().zip(par_levels(fp, txs, &other, bound)) {
        per_tx[k] = lv;
    }
    per_tx
}

/// The levels of the transmitters `txs[k]` for each `k` of `ks`, in the order of `ks`,
/// computed in parallel.
fn par_levels(
    fp: &FloorPredictor<'_>,
    txs: &[&Transmitter],
    ks: &[usize],
    bound: Option<&[f32]>,
) -> Vec<Vec<f32>> {
    ks.par_iter()
        .map_init(FloorScratch::new, |sc, &k| match txs.get(k) {
            Some(t) => fp.levels_with(t, bound, sc),
            None => Vec::new(),
        })
        .collect()
}

/// How [`FloorPredictor::levels_traced`] finds the walls of paths between storeys. All
/// three give the same walls (tested on the demo and the tower).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StoreyTrace {
    /// Storey shadows when at least one point in 16 of the grid is left to trace (the
    /// strongest-server bound prunes the rest), else ray by ray.
    Auto,
    /// Ray by ray through each storey's wall index: the reference.
    PerRay,
    /// Each storey's wall shadows over the part of the paths inside it, for the whole grid.
    Shadows,
}

/// [`StoreyTrace::Auto`] uses storey shadows when at least one grid point in this many is
/// left to trace:
/// a shadow pass over a storey costs about as much as tracing a few per cent of the grid
/// ray by ray (measured on `examples/tower-20-floors`).
const STOREY_SHADOW_MIN_SHARE: usize = 16;

/// The range `[t0, t1]` of the path parameter (0 at the transmitter at height `tz`, 1 at
/// the receiver `dz` higher) inside storey `fs`, clipped to the path; None if the path
/// does not pass through it.
fn storey_range(fs: &FloorScene, tz: f64, dz: f64) -> Option<(f64, f64)> {
    let (mut t0, mut t1) = if dz.abs() < 1e-12 {
        (0.0, 1.0)
    } else {
        ((fs.bottom_m - tz) / dz, (fs.top_m - tz) / dz)
    };
    if t0 > t1 {
        std::mem::swap(&mut t0, &mut t1);
    }
    let (t0, t1) = (t0.max(0.0), t1.min(1.0));
    (t1 > t0).then_some((t0, t1))
}

/// Reusable buffers for [`FloorPredictor::levels_with`]. Their contents never change the
/// levels.
pub struct FloorScratch {
    shadow: ShadowScratch,
    loss: Vec<f32>,
    /// Wall losses of paths between storeys, summed over the storeys, dB.
    storey_loss: Vec<f64>,
    rays: (Scratch, Vec<Crossing>),
}

impl FloorScratch {
    /// Empty buffers; they grow on first use.
    pub fn new() -> FloorScratch {
        FloorScratch {
            shadow: ShadowScratch::default(),
            loss: Vec::new(),
            storey_loss: Vec::new(),
            rays: (Scratch::new(), Vec::new()),
        }
    }
}

impl Default for FloorScratch {
    fn default() -> Self {
        Self::new()
    }
}

/// What a [`FloorPredictor`] needs of a known service and floor.
struct FloorLosses<'a> {
    /// The crossing kind of each piece of the floor's junction form, for the service.
    parts: Vec<&'a CrossingKind>,
    /// The pieces of the floor's wall parts in junction form, as indexed in the scene.
    walls: &'a [Segment],
    /// The service's frequency, MHz.
    freq_mhz: f64,
}

impl<'a> FloorLosses<'a> {
    /// The losses of `service` on `floor`; None if either is unknown or the scene was not
    /// built from this site (one crossing kind per wall part).
    fn of(site: &Site, scene: &'a Scene, service: usize, floor: usize) -> Option<Self> {
        let losses = scene.losses.get(service)?;
        let kinds = losses.parts.get(floor)?;
        let fs = scene.floors.get(floor)?;
        let parts: Vec<&CrossingKind> = fs
            .origin
            .iter()
            .map(|&part| kinds.get(part).and_then(|&k| losses.kinds.get(k)))
            .collect::<Option<_>>()?;
        let walls = fs.index.walls();
        let freq_mhz = site.services.get(service)?.freq_mhz;
        (parts.len() == walls.len()).then_some(FloorLosses {
            parts,
            walls,
            freq_mhz,
        })
    }
}

/// The walls of one storey for a service, as the shadow functions take them.
struct StoreyWalls<'a> {
    losses: FloorLosses<'a>,
    /// Loss of each piece that costs the same at every angle (0 for the others), dB, in
    /// double precision as the per-ray trace charges it.
    constant_db: Vec<f64>,
    /// Which pieces' loss depends on the angle.
    by_angle: Vec<bool>,
}

impl<'a> StoreyWalls<'a> {
    fn of(site: &Site, scene: &'a Scene, service: usize, floor: usize) -> Option<Self> {
        let losses = FloorLosses::of(site, scene, service, floor)?;
        let constant_db = (losses.parts.iter())
            .map(|k| k.constant_db().unwrap_or(0.0))
            .collect();
        let by_angle = (losses.parts.iter())
            .map(|k| k.constant_db().is_none())
            .collect();
        Some(StoreyWalls {
            losses,
            constant_db,
            by_angle,
        })
    }

    /// Adds the losses of the storey's walls crossed by the part `part` of every path from
    /// `tx` to the points of `grid`.
    fn add_part(
        &self,
        tx: Point2,
        grid: &Grid,
        part: (f64, f64),
        out: &mut [f64],
        shadow: &mut ShadowScratch,
    ) {
        let parts = &self.losses.parts;
        let f = |w: usize, c: f64| parts.get(w).map_or(0.0, |k| k.eval(c));
        let wl = WallLosses {
            constant_db: &self.constant_db[..],
            by_angle: if self.by_angle.iter().any(|m| *m) {
                Some((&self.by_angle[..], &f))
            } else {
                None
            },
        };
        accumulate_path_part_f64(tx, grid, self.losses.walls, &wl, part, out, shadow);
    }
}

/// A transmitter placed in the building: its floor index and antenna position.
#[derive(Clone, Copy)]
struct Source<'t> {
    t: &'t Transmitter,
    floor: usize,
    p3: P3,
}

/// Everything constant for one service on one floor: grid, inside mask, constant wall
/// losses, angle masks, receiver height. Gives the level any transmitter produces over the
/// floor's grid with exactly the numbers of [`predict_grid_adjusted`].
pub struct FloorPredictor<'a> {
    site: &'a Site,
    scene: &'a Scene,
    service: usize,
    floor: usize,
    adjust: &'a (dyn Fn(usize, f64) -> f64 + Sync),
    /// None if the service or the floor is unknown.
    losses: Option<FloorLosses<'a>>,
    grid: Grid,
    inside: Vec<bool>,
    /// Loss of each wall that costs the same at every angle (0 for the others), dB.
    constant_db: Vec<f32>,
    /// Which walls' loss depends on the angle.
    by_angle: Vec<bool>,
    /// Receiver height above the datum, m.
    rz: f64,
    /// The walls of each storey for the service, built on first use by a path between
    /// storeys (None if the scene was not built from the site).
    storeys: Vec<std::sync::OnceLock<Option<StoreyWalls<'a>>>>,
    /// How paths between storeys are traced.
    trace: StoreyTrace,
}

impl<'a> FloorPredictor<'a> {
    /// The predictor of service index `service` on floor index `floor` of `site`, with the
    /// extra loss `adjust(service, distance_m)` in dB on every path (`&|_, _| 0.0` for
    /// none). `scene` must be built from `site`. An unknown floor gives an empty grid; an
    /// unknown service, no signal anywhere.
    pub fn new(
        site: &'a Site,
        scene: &'a Scene,
        service: usize,
        floor: usize,
        adjust: &'a (dyn Fn(usize, f64) -> f64 + Sync),
    ) -> FloorPredictor<'a> {
        let losses = FloorLosses::of(site, scene, service, floor);
        let (grid, inside, rz) = floor_points(site, floor);
        let kinds = losses.as_ref().map_or(&[][..], |l| &l.parts[..]);
        FloorPredictor {
            site,
            scene,
            service,
            floor,
            adjust,
            constant_db: kinds
                .iter()
                .map(|k| k.constant_db().unwrap_or(0.0) as f32)
                .collect(),
            by_angle: kinds.iter().map(|k| k.constant_db().is_none()).collect(),
            losses,
            grid,
            inside,
            rz,
            storeys: (0..scene.floors.len())
                .map(|_| Default::default())
                .collect(),
            trace: StoreyTrace::Auto,
        }
    }

    /// The same predictor, paths between storeys traced by `trace` (default
    /// [`StoreyTrace::Auto`]).
    pub fn with_storey_trace(mut self, trace: StoreyTrace) -> Self {
        self.trace = trace;
        self
    }

    /// The floor's prediction grid.
    pub fn grid(&self) -> &Grid {
        &self.grid
    }

    /// Whether each grid point lies inside the floor's outline.
    pub fn inside(&self) -> &[bool] {
        &self.inside
    }

    /// Level in dBm of transmitter `t` at every grid point of the floor (NaN outside the
    /// outline), for this predictor's service whatever `t.service` says. `bound`: with the
    /// strongest-server rule, points where the wall-free level cannot beat `bound[i]` may
    /// return -inf without tracing (pass None for exact levels everywhere). A transmitter
    /// on an unknown floor gives -inf inside the outline.
    pub fn levels(&self, t: &Transmitter, bound: Option<&[f32]>) -> Vec<f32> {
        self.levels_with(t, bound, &mut FloorScratch::new())
    }

    /// As [`FloorPredictor::levels`], reusing the buffers of `scratch`.
    pub fn levels_with(
        &self,
        t: &Transmitter,
        bound: Option<&[f32]>,
        scratch: &mut FloorScratch,
    ) -> Vec<f32> {
        let (Some(losses), Some(src)) = (&self.losses, self.source(t)) else {
            let none = |&inside: &bool| if inside { f32::NEG_INFINITY } else { f32::NAN };
            return self.inside.iter().map(none).collect();
        };
        if src.floor == self.floor {
            self.same_floor_levels(losses, src, scratch)
        } else {
            self.other_floor_levels(losses, src, bound, scratch, self.trace)
        }
    }

    /// As [`FloorPredictor::levels`], the walls of paths between storeys found by `trace`
    /// (to compare the methods; [`StoreyTrace::PerRay`] is the reference).
    pub fn levels_traced(
        &self,
        t: &Transmitter,
        bound: Option<&[f32]>,
        trace: StoreyTrace,
    ) -> Vec<f32> {
        let scratch = &mut FloorScratch::new();
        match (&self.losses, self.source(t)) {
            (Some(losses), Some(src)) if src.floor != self.floor => {
                self.other_floor_levels(losses, src, bound, scratch, trace)
            }
            _ => self.levels_with(t, bound, scratch),
        }
    }

    /// `t` with its floor index and antenna position; None on an unknown floor.
    fn source<'t>(&self, t: &'t Transmitter) -> Option<Source<'t>> {
        let floor = self.site.floor_index(&t.floor)?;
        let z = self.site.floors.get(floor)?.elevation_m + t.height_m;
        Some(Source {
            t,
            floor,
            p3: P3 { p: t.position, z },
        })
    }

    /// Same-floor transmitter: every wall's shadow over the whole grid (exact,
    /// rfsite-geometry tests).
    fn same_floor_levels(
        &self,
        losses: &FloorLosses<'_>,
        src: Source<'_>,
        sc: &mut FloorScratch,
    ) -> Vec<f32> {
        sc.loss.clear();
        sc.loss.resize(self.grid.len(), 0.0);
        let f = |w: usize, c: f64| losses.parts.get(w).map_or(0.0, |k| k.eval(c) as f32);
        let wl = WallLosses {
            constant_db: &self.constant_db,
            by_angle: if self.by_angle.iter().any(|m| *m) {
                Some((&self.by_angle[..], &f))
            } else {
                None
            },
        };
        let part = (0.0, 1.0);
        let (grid, walls) = (&self.grid, losses.walls);
        accumulate_path_part(
            src.p3.p,
            grid,
            walls,
            &wl,
            part,
            &mut sc.loss,
            &mut sc.shadow,
        );
        let points = self.inside.iter().zip(&sc.loss).enumerate();
        points
            .map(|(i, (&inside, &loss))| match inside {
                true => self.level(self.base(losses, src, i), loss as f64) as f32,
                false => f32::NAN,
            })
            .collect()
    }

    /// Transmitter on another floor. With a `bound`, a point where the wall-free level
    /// cannot beat it gets -inf, its walls not traced (exact for the strongest server). The
    /// other points' walls come from the storey shadows ([`FloorPredictor::storey_walls`])
    /// when enough of them are left, else ray by ray: the same walls either way (tested on
    /// the examples).
    fn other_floor_levels(
        &self,
        losses: &FloorLosses<'_>,
        src: Source<'_>,
        bound: Option<&[f32]>,
        sc: &mut FloorScratch,
        trace: StoreyTrace,
    ) -> Vec<f32> {
        let n = self.grid.len();
        // Free-space level and floor loss of each point left to trace; None outside the
        // outline and where the bound already wins.
        let bases: Vec<Option<(f64, f64)>> = (0..n)
            .map(|i| {
                if !self.inside.get(i).copied().unwrap_or(false) {
                    return None;
                }
                let b = self.base(losses, src, i);
                match bound.and_then(|bd| bd.get(i)) {
                    Some(&best) if (self.level(b, 0.0) as f32) <= best => None,
                    _ => Some(b),
                }
            })
            .collect();
        let traced = bases.iter().filter(|b| b.is_some()).count();
        let outside = |i: usize| match self.inside.get(i).copied().unwrap_or(false) {
            true => f32::NEG_INFINITY,
            false => f32::NAN,
        };
        let shadows = match trace {
            StoreyTrace::PerRay => false,
            StoreyTrace::Shadows => traced > 0 && self.storey_walls(src, sc),
            StoreyTrace::Auto => {
                traced > 0 && traced * STOREY_SHADOW_MIN_SHARE >= n && self.storey_walls(src, sc)
            }
        };
        if shadows {
            return (bases.iter().zip(&sc.storey_loss).enumerate())
                .map(|(i, (b, &walls))| {
                    b.map_or_else(|| outside(i), |b| self.level(b, walls) as f32)
                })
                .collect();
        }
        let rays = &mut sc.rays;
        (bases.iter().enumerate())
            .map(|(i, b)| match b {
                None => outside(i),
                Some(b) => {
                    let rx = P3 {
                        p: self.grid.point(i),
                        z: self.rz,
                    };
                    let walls = (self.scene).walls_db(
                        rays,
                        self.service,
                        src.p3,
                        src.floor,
                        rx,
                        self.floor,
                    );
                    self.level(*b, walls) as f32
                }
            })
            .collect()
    }

    /// The wall losses of the paths from `src` (on another floor) to every grid point, into
    /// `sc.storey_loss`: each storey between them adds its walls' shadows over the part of
    /// the paths inside it. The receiver height is the same at every point, so each part
    /// is one range of the path parameter for the whole grid, and the crossings kept are
    /// exactly those of the per-ray trace (`Scene::for_each_crossing`): the half-open range
    /// `[t0 - CUT_TOL, t1 - CUT_TOL)` of each storey. False if a storey's walls are
    /// unknown (a scene not built from the site).
    fn storey_walls(&self, src: Source<'_>, sc: &mut FloorScratch) -> bool {
        let (lo, hi) = (src.floor.min(self.floor), src.floor.max(self.floor));
        sc.storey_loss.clear();
        sc.storey_loss.resize(self.grid.len(), 0.0);
        let (tz, dz) = (src.p3.z, self.rz - src.p3.z);
        for k in lo..=hi {
            let Some(fs) = self.scene.floors.get(k) else {
                return false;
            };
            let cell = self
                .storeys
                .get(k)
                .map(|c| c.get_or_init(|| StoreyWalls::of(self.site, self.scene, self.service, k)));
            let Some(Some(walls)) = cell else {
                return false;
            };
            let Some((t0, t1)) = storey_range(fs, tz, dz) else {
                continue;
            };
            // The per-ray trace keeps t in [t0 - CUT_TOL, t1 - CUT_TOL); the shadows count
            // the open range (p0, p1), and no crossing lies exactly on p0 or p1 but where
            // a wall meets the path within a tolerance of a cut, which both place alike.
            let p0 = if t0 <= 0.0 {
                0.0
            } else {
                (t0 - CUT_TOL).max(0.0)
            };
            let p1 = t1 - CUT_TOL;
            let (grid, out) = (&self.grid, &mut sc.storey_loss[..]);
            walls.add_part(src.p3.p, grid, (p0, p1), out, &mut sc.shadow);
        }
        true
    }

    /// Free-space level (with the antenna gain and the adjustment) and floor loss of the
    /// path from `src` to point `i`, dBm and dB: walls only take away.
    fn base(&self, losses: &FloorLosses<'_>, src: Source<'_>, i: usize) -> (f64, f64) {
        let (t, t3) = (src.t, src.p3);
        let p = self.grid.point(i);
        let rx = P3 { p, z: self.rz };
        let (d, free) = pair_terms(t, t3, rx, losses.freq_mhz);
        let free = free - (self.adjust)(self.service, d);
        let floor_db = self
            .scene
            .floor_db(self.service, t3, src.floor, rx, self.floor);
        (free, floor_db.1)
    }

    /// The level given the path's free-space level, floor and wall losses: its walls and
    /// floors at most the excess-loss cap.
    fn level(&self, (free, floor): (f64, f64), walls: f64) -> f64 {
        free - self.scene.capped_excess_db(floor + walls)
    }
}

/// The grid of floor index `floor`, which of its points lie inside the outline, and the
/// receiver height above the datum (m); an empty grid for an unknown floor.
fn floor_points(site: &Site, floor: usize) -> (Grid, Vec<bool>, f64) {
    let Some(f) = site.floors.get(floor) else {
        let origin = Point2::new(0.0, 0.0);
        let empty = Grid {
            origin,
            step_m: site.prediction.grid_step_m,
            nx: 0,
            ny: 0,
        };
        return (empty, Vec::new(), site.prediction.receiver_height_m);
    };
    let grid = floor_grid(site, floor);
    let inside = (0..grid.len())
        .into_par_iter()
        .map(|i| rfsite_geometry::point_in_polygon(grid.point(i), &f.outline))
        .collect();
    let rz = f.elevation_m + site.prediction.receiver_height_m;
    (grid, inside, rz)
}
