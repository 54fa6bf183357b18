//! # reflection-nulls plugin
//!
//! A strongly reflecting wall (metal cladding, metal doors, coated glazing) sets up a
//! standing wave in front of it: at normal incidence the field at distance x from the
//! surface goes as `|1 + Gamma e^{-j 2 k x}|` (textbook physics; common practice). For a
//! conductor (`Gamma = -1`) the nulls are at `x = n lambda/2` and the peaks at
//! `lambda/4 + n lambda/2`.
//!
//! For each service and each wall part whose normal-incidence reflection coefficient
//! reaches `min_gamma`, this plugin computes the null and peak positions up to
//! `max_distance_m`, flags every transmitter of that service on the same floor that sits
//! within `tolerance_m` of a null (default lambda/16), counts the survey points that do
//! (per floor, in a table), and draws the standing-wave pattern of each reflective
//! material.
//!
//! `Gamma` comes from [`rfsite_model::Material::reflection_coefficient`] at normal
//! incidence, TE (the electric-field ratio): the ITU-R P.2040-3 slab formulas for slab materials (magnitude and phase), or the empirical
//! reflection loss of a library entry (magnitude only, phase taken as pi).

use std::collections::{BTreeMap, BTreeSet};

use rfsite_geometry::{distance_point_segment, Point2};
use rfsite_model::names::figure_stem;
use rfsite_model::{Material, MaterialModel, Site, WallPart};
use rfsite_physics::fspl::wavelength_m;
use rfsite_physics::p2040::Polarization;
use rfsite_physics::standing_wave;
use rfsite_physics::Complex64;
use rfsite_plugin::*;
use serde::Serialize;

/// Default smallest |Gamma| that counts as a strong reflector.
pub const DEFAULT_MIN_GAMMA: f64 = 0.7;
/// Default distance from the wall up to which nulls are listed and checked, m.
pub const DEFAULT_MAX_DISTANCE_M: f64 = 2.0;
/// Default cap on the depth of a null, dB. The ideal null in front of a near-perfect
/// conductor is tens of dB deep; in a room other paths, the finite wall and the size of
/// the antenna fill it in, so deeper numbers would be false precision (common practice).
pub const DEFAULT_MAX_FADE_DB: f64 = 30.0;
/// A fade deeper than this makes a flagged transmitter a major finding, dB.
pub const MAJOR_FADE_DB: f64 = 10.0;

/// The plugin's options (`[plugins.reflection-nulls]`).
#[derive(Debug, Clone, PartialEq)]
pub struct Options {
    /// Smallest |Gamma| treated as a strong reflector.
    pub min_gamma: f64,
    /// Distance to a null that counts as "in" it, m; `None`: lambda/16 of each service.
    pub tolerance_m: Option<f64>,
    /// Largest distance from the wall considered, m.
    pub max_distance_m: f64,
    /// Cap on the depth of a null, dB.
    pub max_fade_db: f64,
}

impl Options {
    /// Reads and checks the options.
    pub fn from_context(ctx: &Context<'_>) -> Result<Options, PluginError> {
        let min_gamma = ctx.option_f64("min_gamma", DEFAULT_MIN_GAMMA)?;
        if !(min_gamma > 0.0 && min_gamma <= 1.0) {
            return Err(PluginError::BadOption {
                key: "min_gamma".into(),
                message: "must be a reflection coefficient magnitude above 0 and at most 1".into(),
            });
        }
        let tolerance_m = match ctx.options.get("tolerance_m") {
            None => None,
            Some(_) => {
                let t = ctx.option_f64("tolerance_m", 0.0)?;
                if !(t > 0.0 && t.is_finite()) {
                    return Err(PluginError::BadOption {
                        key: "tolerance_m".into(),
                        message: "must be a positive distance in metres (the default is lambda/16)"
                            .into(),
                    });
                }
                Some(t)
            }
        };
        let max_distance_m = ctx.option_f64("max_distance_m", DEFAULT_MAX_DISTANCE_M)?;
        if !(max_distance_m > 0.0 && max_distance_m <= 50.0) {
            return Err(PluginError::BadOption {
                key: "max_distance_m".into(),
                message: "must be a distance above 0 and at most 50 m".into(),
            });
        }
        let max_fade_db = ctx.option_f64("max_fade_db", DEFAULT_MAX_FADE_DB)?;
        if !(max_fade_db > 0.0 && max_fade_db <= 200.0) {
            return Err(PluginError::BadOption {
                key: "max_fade_db".into(),
                message: "must be between 0 and 200 dB".into(),
            });
        }
        Ok(Options {
            min_gamma,
            tolerance_m,
            max_distance_m,
            max_fade_db,
        })
    }

    /// The tolerance at a frequency.
    pub fn tolerance_at(&self, freq_mhz: f64) -> f64 {
        self.tolerance_m.unwrap_or(wavelength_m(freq_mhz) / 16.0)
    }
}

/// Fade against the free (incident) field at `x_m` from the surface, dB, positive when the
/// field is weaker than free space: `-20 log10 |1 + Gamma e^{-j 2 k x}|`, at most `cap_db`.
pub fn fade_db(gamma: Complex64, freq_mhz: f64, x_m: f64, cap_db: f64) -> f64 {
    let f = standing_wave::relative_field(gamma, freq_mhz, x_m);
    if f <= 0.0 {
        return cap_db;
    }
    (-20.0 * f.log10()).min(cap_db)
}

/// Depth of a null against the free field, dB: `-20 log10(1 - |Gamma|)`, at most `cap_db`.
pub fn null_fade_db(gamma_abs: f64, cap_db: f64) -> f64 {
    let g = gamma_abs.abs();
    if g >= 1.0 {
        return cap_db;
    }
    (-20.0 * (1.0 - g).log10()).min(cap_db)
}

/// Peak-to-null ratio, dB: the physics crate's `20 log10((1+|G|)/(1-|G|))` when the null
/// is shallower than `cap_db`, else the capped null depth plus the peak gain
/// `20 log10(1+|G|)`.
pub fn capped_peak_to_null_db(gamma_abs: f64, cap_db: f64) -> f64 {
    let exact = standing_wave::peak_to_null_db(gamma_abs);
    let capped = null_fade_db(gamma_abs, cap_db) + 20.0 * (1.0 + gamma_abs.abs().min(1.0)).log10();
    if exact.is_finite() {
        exact.min(capped)
    } else {
        capped
    }
}

/// The standing wave in front of one reflective material at one service frequency.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Reflector {
    /// Service id.
    pub service: String,
    /// Frequency, MHz.
    pub freq_mhz: f64,
    /// Material id.
    pub material: String,
    /// Material name.
    pub material_name: String,
    /// The material's class (the library's `class`): reflectors of one class and service
    /// share a figure.
    pub class: rfsite_model::MaterialClass,
    /// Thickness used for slab materials, m (`None` for empirical entries).
    pub thickness_m: Option<f64>,
    /// |Gamma| at normal incidence.
    pub gamma_abs: f64,
    /// Phase of Gamma, degrees.
    pub gamma_phase_deg: f64,
    /// True when Gamma comes from an empirical table (magnitude only, phase pi assumed).
    pub empirical: bool,
    /// Wavelength, m.
    pub wavelength_m: f64,
    /// Null positions from the surface, m.
    pub nulls_m: Vec<f64>,
    /// Peak positions from the surface, m.
    pub peaks_m: Vec<f64>,
    /// Depth of a null against the free field, dB (capped).
    pub null_fade_db: f64,
    /// Peak-to-null ratio, dB (capped).
    pub peak_to_null_db: f64,
    /// Whether the cap was applied.
    pub capped: bool,
    /// Wall part ids of this material (on any floor).
    pub walls: Vec<String>,
    /// Figure id.
    pub figure: String,
    /// Range note of the reflection data, if used outside it.
    pub range_note: Option<String>,
    #[serde(skip)]
    gamma: Complex64,
}

impl Reflector {
    /// The complex reflection coefficient.
    pub fn gamma(&self) -> Complex64 {
        self.gamma
    }
}

/// A transmitter or point that sits near a null.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct NearNull {
    /// Transmitter id (or survey file:line).
    pub what: String,
    /// Floor id.
    pub floor: String,
    /// Service id.
    pub service: String,
    /// Wall part id.
    pub wall: String,
    /// Material id.
    pub material: String,
    /// Distance from the wall, m.
    pub distance_m: f64,
    /// The nearest null, m from the wall.
    pub null_m: f64,
    /// Expected fade at this position against the free field, dB (capped).
    pub fade_db: f64,
    /// Nearest peak closer to the wall, m (if any).
    pub peak_below_m: Option<f64>,
    /// Nearest peak further from the wall, m.
    pub peak_above_m: Option<f64>,
    /// Plan position, m.
    pub position_m: [f64; 2],
}

/// Per floor and service: how many survey points sit near a null.
#[derive(Debug, Clone, Serialize, PartialEq, Default)]
pub struct SurveyCount {
    /// Floor id.
    pub floor: String,
    /// Service id.
    pub service: String,
    /// Points measured.
    pub points: usize,
    /// Points within `max_distance_m` of a reflective wall.
    pub near_reflector: usize,
    /// Points within the tolerance of a null.
    pub near_null: usize,
    /// Deepest expected fade among them, dB.
    pub worst_fade_db: Option<f64>,
    /// Walls involved.
    pub walls: Vec<String>,
}

type Key = (usize, String, i64);

/// All reflectors of a site: one per (service, material, thickness for slab materials).
struct Reflectors {
    map: BTreeMap<Key, Option<Reflector>>,
    warnings: BTreeSet<String>,
}

fn key_of(si: usize, part: &WallPart, m: &Material) -> Key {
    let t = if matches!(m.model, MaterialModel::Empirical { .. }) {
        0
    } else {
        (part.thickness_m * 1e6).round() as i64
    };
    (si, part.material.clone(), t)
}

fn build_reflector(
    site: &Site,
    si: usize,
    part: &WallPart,
    m: &Material,
    opts: &Options,
    warnings: &mut BTreeSet<String>,
) -> Option<Reflector> {
    let svc = &site.services[si];
    let f = svc.freq_mhz;
    let empirical_refl = match &m.model {
        MaterialModel::Empirical {
            reflection_loss_db, ..
        } => Some(reflection_loss_db),
        _ => None,
    };
    if let Some(rl) = empirical_refl {
        if rl.is_empty() {
            if matches!(
                m.class,
                rfsite_model::MaterialClass::Metal | rfsite_model::MaterialClass::CoatedGlass
            ) {
                warnings.insert(format!("material `{}` has no reflection data: its standing-wave nulls were not checked although it is {}", m.id, m.class.label()));
            }
            return None;
        }
    }
    // The standing wave of this plugin is the normal-incidence one; TE gives the ratio of
    // the electric fields, whose nulls are the ones a receiver sees.
    let gamma = m.reflection_coefficient(f, part.thickness_m, 1.0, Polarization::Te);
    let g = gamma.norm();
    if !g.is_finite() || g < opts.min_gamma {
        return None;
    }
    let lambda = wavelength_m(f);
    let tol = opts.tolerance_at(f);
    let reach = opts.max_distance_m + tol;
    let nulls = nulls_from_surface(gamma, f, reach);
    let peaks = standing_wave::peaks_m(gamma, f, reach + lambda / 2.0);
    let range_note = match empirical_refl {
        Some(rl) => {
            let (lo, hi) = (
                rl.first().map(|p| p.0).unwrap_or(f),
                rl.last().map(|p| p.0).unwrap_or(f),
            );
            (f < lo * (1.0 - 1e-9) || f > hi * (1.0 + 1e-9)).then(|| format!("empirical reflection table of `{}`: frequency {f} MHz is outside its range {lo}–{hi} MHz (extrapolated)", m.id))
        }
        None => m
            .crossing_loss(f, part.thickness_m, 1.0, Polarization::Te)
            .note
            .map(|n| n.message()),
    };
    if let Some(n) = &range_note {
        warnings.insert(format!(
            "reflection of `{}` at {f} MHz ({}): {n}",
            m.id, svc.id
        ));
    }
    if empirical_refl.is_some() {
        warnings.insert(format!(
            "material `{}`: its reflection comes from an empirical table (magnitude only); the phase is assumed to be pi (conductor-like), which puts the first null on the surface",
            m.id
        ));
    }
    let exact_depth = if g >= 1.0 {
        f64::INFINITY
    } else {
        -20.0 * (1.0 - g).log10()
    };
    Some(Reflector {
        service: svc.id.clone(),
        freq_mhz: f,
        material: m.id.clone(),
        material_name: m.name.clone(),
        class: m.class,
        thickness_m: empirical_refl.is_none().then_some(part.thickness_m),
        gamma_abs: g,
        gamma_phase_deg: gamma.arg().to_degrees(),
        empirical: empirical_refl.is_some(),
        wavelength_m: lambda,
        nulls_m: nulls
            .into_iter()
            .filter(|x| *x <= opts.max_distance_m * (1.0 + 1e-12))
            .collect(),
        peaks_m: peaks
            .iter()
            .copied()
            .filter(|x| *x <= opts.max_distance_m * (1.0 + 1e-12))
            .collect(),
        null_fade_db: null_fade_db(g, opts.max_fade_db),
        peak_to_null_db: capped_peak_to_null_db(g, opts.max_fade_db),
        capped: exact_depth > opts.max_fade_db,
        walls: Vec::new(),
        figure: String::new(),
        range_note,
        gamma,
    })
}

impl Reflectors {
    fn new(site: &Site, opts: &Options) -> Reflectors {
        let mut map: BTreeMap<Key, Option<Reflector>> = BTreeMap::new();
        let mut warnings = BTreeSet::new();
        for si in 0..site.services.len() {
            for floor in &site.floors {
                for part in &floor.parts {
                    let Some(m) = site.materials.get(&part.material) else {
                        continue;
                    };
                    let k = key_of(si, part, m);
                    let entry = map
                        .entry(k)
                        .or_insert_with(|| build_reflector(site, si, part, m, opts, &mut warnings));
                    if let Some(r) = entry {
                        if !r.walls.contains(&part.id) {
                            r.walls.push(part.id.clone());
                        }
                    }
                }
            }
        }
        // Figure ids: one per (service, material class), each material a series in it.
        for r in map.values_mut().flatten() {
            r.walls.sort();
            r.figure = figure_stem("nulls", &[&r.service, r.class.id()]);
        }
        Reflectors { map, warnings }
    }

    fn get(&self, site: &Site, si: usize, part: &WallPart) -> Option<&Reflector> {
        let m = site.materials.get(&part.material)?;
        self.map.get(&key_of(si, part, m))?.as_ref()
    }

    fn all(&self) -> impl Iterator<Item = &Reflector> {
        self.map.values().flatten()
    }
}

/// Null positions from the surface up to `max_m`, as [`standing_wave::nulls_m`], except
/// that a null less than lambda/1000 behind the surface (a good conductor, whose Gamma has
/// a phase a hair below pi) is listed on the surface, at 0.
pub fn nulls_from_surface(gamma: Complex64, freq_mhz: f64, max_m: f64) -> Vec<f64> {
    let mut n = standing_wave::nulls_m(gamma, freq_mhz, max_m);
    let lambda = wavelength_m(freq_mhz);
    if let Some(first) = n.first().copied() {
        if first - lambda / 2.0 > -lambda / 1000.0 && first > lambda / 4.0 {
            n.insert(0, 0.0);
        }
    }
    n
}

/// The check of one position against one reflective wall part.
fn check_point(
    r: &Reflector,
    part: &WallPart,
    p: Point2,
    tol: f64,
    max_distance_m: f64,
    cap: f64,
) -> Option<(f64, Option<(f64, f64)>)> {
    let d = distance_point_segment(p, &part.segment);
    if d > max_distance_m + tol {
        return None;
    }
    let mut cands = standing_wave::nulls_m(r.gamma, r.freq_mhz, d + tol);
    // A null just behind the surface (phase of Gamma a hair below pi) still reaches in front.
    if let Some(first) = cands.first().copied() {
        cands.push(first - r.wavelength_m / 2.0);
    }
    let null = cands
        .into_iter()
        .min_by(|a, b| (a - d).abs().total_cmp(&(b - d).abs()));
    let near = null
        .filter(|n| (n - d).abs() <= tol + 1e-12)
        .map(|n| (n, fade_db(r.gamma, r.freq_mhz, d, cap)));
    Some((d, near))
}

fn peaks_around(r: &Reflector, d: f64) -> (Option<f64>, Option<f64>) {
    let all = standing_wave::peaks_m(r.gamma, r.freq_mhz, d + r.wavelength_m);
    let below = all.iter().copied().rfind(|x| *x < d);
    let above = all.iter().copied().find(|x| *x >= d);
    (below, above)
}

fn fmt_list(xs: &[f64], n: usize) -> String {
    let mut s: Vec<String> = xs.iter().take(n).map(|x| format!("{x:.3}")).collect();
    if xs.len() > n {
        s.push("...".into());
    }
    s.join(", ")
}

fn fmt_walls(w: &[String]) -> String {
    if w.len() <= 4 {
        w.join(", ")
    } else {
        format!("{}, +{} more", w[..4].join(", "), w.len() - 4)
    }
}

/// Relative field in dB, `20 log10 |1 + Gamma e^{-j2kx}|`, from 0 to `max_distance_m`;
/// the null is drawn at `-cap_db` at most.
pub fn pattern_points(
    gamma: Complex64,
    freq_mhz: f64,
    max_distance_m: f64,
    cap_db: f64,
) -> Vec<[f64; 2]> {
    let lambda = wavelength_m(freq_mhz);
    let n = ((max_distance_m / (lambda / 64.0)).ceil() as usize).clamp(200, 20_000);
    let mut xs: Vec<f64> = (0..=n)
        .map(|i| max_distance_m * i as f64 / n as f64)
        .collect();
    xs.extend(standing_wave::nulls_m(gamma, freq_mhz, max_distance_m));
    xs.extend(standing_wave::peaks_m(gamma, freq_mhz, max_distance_m));
    xs.sort_by(f64::total_cmp);
    xs.dedup_by(|a, b| (*a - *b).abs() < 1e-9);
    xs.into_iter()
        .map(|x| [x, -fade_db(gamma, freq_mhz, x, cap_db)])
        .collect()
}

/// The reflection-nulls plugin.
pub struct ReflectionNulls;

impl Plugin for ReflectionNulls {
    fn id(&self) -> &str {
        "reflection-nulls"
    }
    fn version(&self) -> &str {
        env!("CARGO_PKG_VERSION")
    }
    fn method(&self) -> Method {
        Method {
            summary: "Standing waves in front of strongly reflecting walls: |Gamma| at normal incidence per service, nulls and peaks of |1 + Gamma e^{-j2kx}| up to 2 m, antennas and survey points within lambda/16 of a null".into(),
            citations: vec![
                "ITU-R P.2040-3 (08/2023) section 3 and Table 3: reflection coefficient of slab materials at normal incidence".into(),
                "Standing-wave field |1 + Gamma e^{-j2kx}| in front of a plane reflector at normal incidence: nulls at n lambda/2 for Gamma = -1 (textbook physics; common practice)".into(),
                "Quarter-wave reflector spacing: an element about lambda/4 in front of a conductor sits on a peak (common practice)".into(),
            ],
            validity: "normal incidence on a large flat reflector, one reflection; in a real room other paths fill the nulls in, so null depths are capped (30 dB by default); empirical materials give |Gamma| only and their phase is assumed to be pi".into(),
        }
    }
    fn after(&self) -> Vec<String> {
        vec!["multi-wall".into()]
    }
    fn applies(&self, site: &Site) -> bool {
        !site.services.is_empty() && site.floors.iter().any(|f| !f.parts.is_empty())
    }
    fn option_keys(&self) -> Option<Vec<&'static str>> {
        Some(vec![
            "min_gamma",
            "tolerance_m",
            "max_distance_m",
            "max_fade_db",
        ])
    }
    fn check(&self, ctx: &Context<'_>) -> Vec<rfsite_plugin::InputProblem> {
        rfsite_plugin::check::problems_of(Options::from_context(ctx))
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        let opts = Options::from_context(ctx)?;
        let site = ctx.site;
        let refl = Reflectors::new(site, &opts);
        let mut out = PluginOutput::default();
        let id = self.id().to_string();
        let cap = opts.max_fade_db;

        // Transmitters near a null.
        let mut flagged: Vec<NearNull> = Vec::new();
        for t in &site.transmitters {
            let (Some(si), Some(fi)) = (
                site.services.iter().position(|s| s.id == t.service),
                site.floor_index(&t.floor),
            ) else {
                continue;
            };
            let f = site.services[si].freq_mhz;
            let tol = opts.tolerance_at(f);
            // Per wall id, the deepest fade (then the closest part).
            let mut best: BTreeMap<&str, NearNull> = BTreeMap::new();
            for part in &site.floors[fi].parts {
                let Some(r) = refl.get(site, si, part) else {
                    continue;
                };
                let Some((d, Some((null, fade)))) =
                    check_point(r, part, t.position, tol, opts.max_distance_m, cap)
                else {
                    continue;
                };
                let (pb, pa) = peaks_around(r, d);
                let nn = NearNull {
                    what: t.id.clone(),
                    floor: t.floor.clone(),
                    service: t.service.clone(),
                    wall: part.id.clone(),
                    material: part.material.clone(),
                    distance_m: d,
                    null_m: null,
                    fade_db: fade,
                    peak_below_m: pb,
                    peak_above_m: pa,
                    position_m: [t.position.x, t.position.y],
                };
                let better = match best.get(part.id.as_str()) {
                    None => true,
                    Some(o) => {
                        nn.fade_db > o.fade_db + 1e-9
                            || ((nn.fade_db - o.fade_db).abs() <= 1e-9
                                && nn.distance_m < o.distance_m)
                    }
                };
                if better {
                    best.insert(&part.id, nn);
                }
            }
            flagged.extend(best.into_values());
        }
        for n in &flagged {
            let si = site
                .services
                .iter()
                .position(|s| s.id == n.service)
                .unwrap_or(0);
            let svc = &site.services[si];
            let Some(part) = site.floor(&n.floor).and_then(|f| {
                f.parts
                    .iter()
                    .find(|p| p.id == n.wall && p.material == n.material)
            }) else {
                continue;
            };
            let Some(r) = refl.get(site, si, part) else {
                continue;
            };
            let lambda = r.wavelength_m;
            let q = standing_wave::quarter_wave_spacing_m(svc.freq_mhz);
            let tol = opts.tolerance_at(svc.freq_mhz);
            let severity = if n.fade_db > MAJOR_FADE_DB {
                Severity::Major
            } else {
                Severity::Minor
            };
            let peaks: Vec<String> = [n.peak_below_m, n.peak_above_m]
                .iter()
                .flatten()
                .map(|p| format!("{p:.3} m"))
                .collect();
            let cap_note = if n.fade_db >= cap - 1e-9 {
                format!(" (capped at {cap:.0} dB; the ideal null is deeper)")
            } else {
                String::new()
            };
            out.findings.push(Finding {
                id: format!("reflection-null-{}-{}", n.what, n.wall),
                severity,
                floor: Some(n.floor.clone()),
                service: Some(n.service.clone()),
                title: format!("Antenna {} sits in a standing-wave null {:.2} m in front of {} (`{}`)", n.what, n.distance_m, r.material_name, n.wall),
                detail: format!(
                    "At {} MHz (wavelength {:.3} m) `{}` reflects |Gamma| = {:.2} at normal incidence{}, so the field in front of wall `{}` has nulls at {} m from it. Antenna {} is {:.3} m from the wall, {:.0} mm from the null at {:.3} m (tolerance {:.0} mm = {}): expect a fade of about {:.1} dB against free space{} in directions normal to the wall. Mount it on a peak instead: {} from the wall; the quarter-wave rule puts the first peak in front of a conductor at lambda/4 = {:.3} m, then every lambda/2 = {:.3} m (for this Gamma the peaks are at {} m).",
                    svc.freq_mhz,
                    lambda,
                    r.material,
                    r.gamma_abs,
                    if r.empirical { " (empirical magnitude, phase assumed pi)" } else { "" },
                    n.wall,
                    fmt_list(&r.nulls_m, 6),
                    n.what,
                    n.distance_m,
                    1000.0 * (n.distance_m - n.null_m).abs(),
                    n.null_m,
                    1000.0 * tol,
                    if opts.tolerance_m.is_some() { "option tolerance_m".to_string() } else { "lambda/16".to_string() },
                    n.fade_db,
                    cap_note,
                    if peaks.is_empty() { "see the figure".into() } else { peaks.join(" or ") },
                    q,
                    lambda / 2.0,
                    fmt_list(&r.peaks_m, 4),
                ),
                plugin: id.clone(),
                shortfall_db: None,
                location_m: Some(n.position_m),
                causes: vec![format!("standing wave in front of strongly reflecting {} (`{}`)", r.material_name, r.material)],
                remedies: vec![],
            });
        }

        // Survey points near a null: counted per floor and service.
        let mut counts: BTreeMap<(usize, usize), (SurveyCount, BTreeSet<String>)> = BTreeMap::new();
        for m in &ctx.surveys.points {
            let (Some(si), Some(fi)) = (
                site.services.iter().position(|s| s.id == m.service),
                site.floor_index(&m.floor),
            ) else {
                continue;
            };
            let f = site.services[si].freq_mhz;
            let tol = opts.tolerance_at(f);
            let p = Point2::new(m.x_m, m.y_m);
            let e = counts.entry((fi, si)).or_insert_with(|| {
                (
                    SurveyCount {
                        floor: site.floors[fi].id.clone(),
                        service: site.services[si].id.clone(),
                        ..Default::default()
                    },
                    BTreeSet::new(),
                )
            });
            e.0.points += 1;
            let mut near_reflector = false;
            let mut worst: Option<f64> = None;
            for part in &site.floors[fi].parts {
                let Some(r) = refl.get(site, si, part) else {
                    continue;
                };
                let Some((_, near)) = check_point(r, part, p, tol, opts.max_distance_m, cap) else {
                    continue;
                };
                near_reflector = true;
                if let Some((_, fade)) = near {
                    worst = Some(worst.map_or(fade, |w: f64| w.max(fade)));
                    e.1.insert(part.id.clone());
                }
            }
            if near_reflector {
                e.0.near_reflector += 1;
            }
            if let Some(w) = worst {
                e.0.near_null += 1;
                e.0.worst_fade_db = Some(e.0.worst_fade_db.map_or(w, |x| x.max(w)));
            }
        }
        let survey: Vec<SurveyCount> = counts
            .into_values()
            .map(|(mut c, w)| {
                c.walls = w.into_iter().collect();
                c
            })
            .collect();
        if !survey.is_empty() {
            out.tables.push(Table {
                id: "reflection-nulls-survey".into(),
                title: "Survey points within the tolerance of a standing-wave null".into(),
                columns: vec![
                    "Floor".into(),
                    "Service".into(),
                    "Points".into(),
                    "Near a reflective wall".into(),
                    "Near a null".into(),
                    "Deepest expected fade (dB)".into(),
                    "Walls".into(),
                ],
                rows: survey
                    .iter()
                    .map(|c| {
                        vec![
                            c.floor.clone(),
                            c.service.clone(),
                            c.points.to_string(),
                            c.near_reflector.to_string(),
                            c.near_null.to_string(),
                            c.worst_fade_db
                                .map(|x| format!("{x:.1}"))
                                .unwrap_or_else(|| "–".into()),
                            if c.walls.is_empty() {
                                "–".into()
                            } else {
                                fmt_walls(&c.walls)
                            },
                        ]
                    })
                    .collect(),
            });
            for c in survey.iter().filter(|c| c.near_null > 0) {
                let fname = site
                    .floor(&c.floor)
                    .map(|f| f.name.clone())
                    .unwrap_or_else(|| c.floor.clone());
                out.findings.push(Finding {
                    id: format!("reflection-null-survey-{}-{}", c.service, c.floor),
                    severity: Severity::Info,
                    floor: Some(c.floor.clone()),
                    service: Some(c.service.clone()),
                    title: format!("{} of {} survey points on {} lie in a standing-wave null", c.near_null, c.points, fname),
                    detail: format!(
                        "These points are within the null tolerance of the strongly reflecting {} {}; their readings may be up to {:.1} dB below the level a few centimetres away. Treat them as local fades rather than coverage holes, or re-measure them a quarter wavelength further from the wall.",
                        rfsite_plugin::words::noun(c.walls.len(), "wall", "walls"),
                        fmt_walls(&c.walls),
                        c.worst_fade_db.unwrap_or(0.0)
                    ),
                    plugin: id.clone(),
                    shortfall_db: None,
                    location_m: None,
                    causes: vec!["standing wave in front of a strongly reflecting wall".into()],
                    remedies: vec![],
                });
            }
        }

        // Summary table and figures, per (service, reflective material).
        let reflectors: Vec<&Reflector> = refl.all().collect();
        if !reflectors.is_empty() {
            out.tables.push(Table {
                id: "reflection-nulls-materials".into(),
                title: format!(
                    "Strongly reflecting materials (|Gamma| >= {:.2}) and their standing waves",
                    opts.min_gamma
                ),
                columns: vec![
                    "Service".into(),
                    "Material".into(),
                    "Walls".into(),
                    "|Gamma|".into(),
                    "Phase (deg)".into(),
                    "Gamma from".into(),
                    "First null (m)".into(),
                    "First peak (m)".into(),
                    "Null fade (dB)".into(),
                    "Peak-to-null (dB)".into(),
                ],
                rows: reflectors
                    .iter()
                    .map(|r| {
                        let cap_mark = if r.capped { " (capped)" } else { "" };
                        vec![
                            format!("{} ({} MHz)", r.service, r.freq_mhz),
                            match r.thickness_m {
                                Some(t) => format!("{} ({:.0} mm)", r.material, 1000.0 * t),
                                None => r.material.clone(),
                            },
                            fmt_walls(&r.walls),
                            format!("{:.3}", r.gamma_abs),
                            format!("{:.0}", r.gamma_phase_deg),
                            if r.empirical {
                                "empirical |Gamma|, phase pi assumed".into()
                            } else {
                                "ITU-R P.2040-3 slab".into()
                            },
                            r.nulls_m
                                .first()
                                .map(|x| format!("{x:.3}"))
                                .unwrap_or_else(|| "–".into()),
                            r.peaks_m
                                .first()
                                .map(|x| format!("{x:.3}"))
                                .unwrap_or_else(|| "–".into()),
                            format!("{:.1}{cap_mark}", r.null_fade_db),
                            format!("{:.1}{cap_mark}", r.peak_to_null_db),
                        ]
                    })
                    .collect(),
            });
            out.figures
                .extend(class_figures(&reflectors, opts.max_distance_m, cap));
            if reflectors.iter().any(|r| r.capped) {
                out.warnings.push(Warning {
                    plugin: id.clone(),
                    message: format!("standing-wave null depths are capped at {cap:.0} dB (option max_fade_db): other paths, the finite wall and the antenna's size fill in the ideal null of a near-perfect reflector (common practice)"),
                });
            }
        }
        for w in &refl.warnings {
            out.warnings.push(Warning {
                plugin: id.clone(),
                message: w.clone(),
            });
        }

        out.extra.insert("reflectors".into(), to_json(&reflectors)?);
        out.extra
            .insert("transmitters_near_nulls".into(), to_json(&flagged)?);
        out.extra.insert("survey".into(), to_json(&survey)?);
        let tol: BTreeMap<String, f64> = site
            .services
            .iter()
            .map(|s| (s.id.clone(), opts.tolerance_at(s.freq_mhz)))
            .collect();
        out.extra.insert("tolerance_m".into(), to_json(&tol)?);
        out.extra
            .insert("min_gamma".into(), serde_json::json!(opts.min_gamma));
        Ok(out)
    }
}

/// The legend name of a reflector's curve: material name, the thickness when the same
/// material appears at another thickness in the figure, and |Gamma|.
fn series_name(r: &Reflector, same_material: usize) -> String {
    let thick = match r.thickness_m {
        Some(t) if same_material > 1 => format!(", {:.0} mm", 1000.0 * t),
        _ => String::new(),
    };
    format!("{}{thick} (|Gamma| = {:.2})", r.material_name, r.gamma_abs)
}

/// One figure per (service, material class): a curve per reflector in it, in the order
/// of the reflectors (material id, thickness), then the free-space line.
pub fn class_figures(reflectors: &[&Reflector], max_distance_m: f64, cap: f64) -> Vec<Figure> {
    let mut groups: BTreeMap<&str, Vec<&Reflector>> = BTreeMap::new();
    for r in reflectors {
        groups.entry(r.figure.as_str()).or_default().push(r);
    }
    groups
        .into_iter()
        .map(|(id, rs)| {
            let first = rs[0];
            let mut series: Vec<Series> = rs
                .iter()
                .map(|r| Series {
                    name: series_name(r, rs.iter().filter(|o| o.material == r.material).count()),
                    points: pattern_points(r.gamma, r.freq_mhz, max_distance_m, cap),
                })
                .collect();
            series.push(Series {
                name: "free space (no reflection)".into(),
                points: vec![[0.0, 0.0], [max_distance_m, 0.0]],
            });
            // Empirical tables give |Gamma| only, the phase taken as pi: such curves share
            // their nulls and differ in depth alone, which the title says.
            let same_phase = if rs.len() > 1 && rs.iter().all(|r| r.empirical) {
                "; each |Gamma| is empirical with phase pi assumed, so the nulls coincide and only their depths differ"
            } else {
                ""
            };
            Figure {
                id: id.to_string(),
                title: format!(
                    "Standing waves in front of {} walls at {} MHz ({}): 20 log10 |1 + Gamma e^(-j2kx)| per material, nulls drawn at -{cap:.0} dB at most{same_phase}",
                    first.class.label(),
                    first.freq_mhz,
                    first.service
                ),
                kind: "line".into(),
                x_label: "distance from the wall (m)".into(),
                y_label: "field relative to free space (dB)".into(),
                series,
            }
        })
        .collect()
}

fn to_json<T: Serialize>(v: &T) -> Result<serde_json::Value, PluginError> {
    serde_json::to_value(v).map_err(|e| PluginError::Failed(e.to_string()))
}
