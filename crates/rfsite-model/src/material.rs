//! Materials: the ITU-R P.2040 slab materials, the empirical library compiled in from
//! `plugins/data/materials/*.toml`, and materials a site defines or overrides.
//!
//! A material answers one question for the rest of rfsite: how many dB does one crossing
//! of it cost at a frequency, thickness and incidence angle, and was that inside the range
//! where its data hold.

use std::collections::BTreeMap;

use rfsite_physics::angle_table::AngleTable;
use rfsite_physics::p2040::{self, ItuMaterial, Layer, Polarization, SlabResponse};
use rfsite_physics::validity::RangeNote;
use rfsite_physics::Complex64;
use serde::{Deserialize, Serialize};

/// Broad kind of a material: drives map colours, finding causes and the remediation rules.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum MaterialClass {
    /// Plasterboard, partitions, light timber.
    Light,
    /// Wood, doors.
    Wood,
    /// Brick, block, concrete walls.
    Masonry,
    /// Reinforced concrete cores, slabs.
    Concrete,
    /// Clear glass.
    Glass,
    /// Glazing with metallic coatings.
    CoatedGlass,
    /// Metal doors, cladding, shafts.
    Metal,
    /// Ground (P.2040 ground rows).
    Ground,
    /// Anything else.
    Other,
}

impl MaterialClass {
    /// Parses the kebab-case name.
    pub fn from_id(s: &str) -> Option<Self> {
        Some(match s {
            "light" => Self::Light,
            "wood" => Self::Wood,
            "masonry" => Self::Masonry,
            "concrete" => Self::Concrete,
            "glass" => Self::Glass,
            "coated-glass" => Self::CoatedGlass,
            "metal" => Self::Metal,
            "ground" => Self::Ground,
            "other" => Self::Other,
            _ => return None,
        })
    }
    /// All names, for hints.
    pub const IDS: &'static [&'static str] = &[
        "light",
        "wood",
        "masonry",
        "concrete",
        "glass",
        "coated-glass",
        "metal",
        "ground",
        "other",
    ];
    /// The kebab-case name (the one [`MaterialClass::from_id`] reads).
    pub fn id(&self) -> &'static str {
        Self::IDS[*self as usize]
    }
    /// Human label.
    pub fn label(&self) -> &'static str {
        match self {
            Self::Light => "light partition",
            Self::Wood => "wood",
            Self::Masonry => "masonry",
            Self::Concrete => "concrete",
            Self::Glass => "clear glass",
            Self::CoatedGlass => "coated glazing",
            Self::Metal => "metal",
            Self::Ground => "ground",
            Self::Other => "other",
        }
    }
}

/// How a material's loss is computed.
#[derive(Debug, Clone, PartialEq)]
pub enum MaterialModel {
    /// ITU-R P.2040 Table 3 slab: loss follows from thickness, frequency and angle.
    Itu(&'static ItuMaterial),
    /// A slab with site-given permittivity and conductivity (assumed frequency-flat).
    CustomSlab {
        /// Real relative permittivity.
        eps_real: f64,
        /// Conductivity, S/m.
        sigma_s_per_m: f64,
    },
    /// Layers of other slab materials, each with its own thickness; the wall's own
    /// thickness is ignored (the layers define it).
    Layered(Vec<(MaterialModel, f64)>),
    /// Measured loss of the as-built element at frequency points (MHz, dB),
    /// interpolated in log-frequency; thickness and angle do not enter.
    Empirical {
        /// (freq_mhz, loss_db), ascending in frequency.
        loss_db: Vec<(f64, f64)>,
        /// (freq_mhz, reflection loss dB), if known.
        reflection_loss_db: Vec<(f64, f64)>,
    },
}

/// One material as rfsite uses it.
#[derive(Debug, Clone, PartialEq)]
pub struct Material {
    /// Kebab-case id.
    pub id: String,
    /// Human name.
    pub name: String,
    /// Broad class.
    pub class: MaterialClass,
    /// Where the numbers come from.
    pub source: String,
    /// "confirmed", "consistent", "common practice", "from memory", "site probe" ...
    pub confidence: String,
    /// The loss model.
    pub model: MaterialModel,
    /// Where it came from: "itu", "library", "site", "probe".
    pub origin: String,
    /// For an empirical entry: the element its numbers describe, with its usual thickness.
    pub reference: Option<String>,
}

/// Loss of one crossing.
#[derive(Debug, Clone, PartialEq)]
pub struct CrossingLoss {
    /// Transmission loss, dB (>= 0).
    pub loss_db: f64,
    /// Set when the data were used outside their range.
    pub note: Option<RangeNote>,
}

/// The grazing rule: the largest incidence angle from a wall's normal at which a
/// crossing's loss is computed, degrees. A path meeting a wall at a larger angle runs
/// along it within 0.1°; such a crossing is charged the loss at this angle (a prediction
/// then caps every crossing at its largest crossing loss, multi-wall's
/// `max_crossing_loss_db`). An rfsite choice: the slab's transmission tends to zero at
/// grazing, and the geometry of a path that close to a wall's line says little.
pub const GRAZING_LIMIT_DEG: f64 = 89.9;

/// Largest miss, dB, of a tabulated crossing loss ([`CrossingLossFn::Table`]) against
/// the exact slab at the midpoint of any table interval (see
/// [`rfsite_physics::angle_table`]); a tenth of the 0.01 dB the predictions promise, with
/// room for the interpolation error between midpoints.
pub const TABLE_TOLERANCE_DB: f64 = 0.002;

/// The loss of one kind of crossing (material, thickness, frequency, polarisation) as a
/// function of `|cos θ|`, for evaluation at every grid point; at most a ceiling (the
/// largest crossing loss), and at [`GRAZING_LIMIT_DEG`] for larger angles.
#[derive(Debug, Clone, PartialEq)]
pub enum CrossingLossFn {
    /// A measured table: the same loss at every angle, dB.
    Const(f64),
    /// A slab or layered material: the exact loss tabulated over the angle, within
    /// [`TABLE_TOLERANCE_DB`] at every interval midpoint.
    Table(AngleTable),
    /// A slab the table could not meet (a thick, nearly lossless slab resonating faster
    /// than the finest table): the exact loss at every call.
    Exact(Box<ExactCrossing>),
}

/// What [`CrossingLossFn::Exact`] evaluates.
#[derive(Debug, Clone, PartialEq)]
pub struct ExactCrossing {
    material: Material,
    freq_mhz: f64,
    thickness_m: f64,
    pol: Polarization,
    ceiling_db: f64,
}

impl CrossingLossFn {
    /// Loss of a crossing at `|cos θ| = cos_incidence`, dB, at most the ceiling.
    pub fn eval(&self, cos_incidence: f64) -> f64 {
        match self {
            CrossingLossFn::Const(l) => *l,
            CrossingLossFn::Table(t) => t.eval(cos_incidence),
            CrossingLossFn::Exact(e) => e.eval(cos_incidence),
        }
    }

    /// The loss when it does not depend on the angle.
    pub fn constant_db(&self) -> Option<f64> {
        match self {
            CrossingLossFn::Const(l) => Some(*l),
            _ => None,
        }
    }
}

impl ExactCrossing {
    fn eval(&self, cos_incidence: f64) -> f64 {
        self.material
            .crossing_loss(self.freq_mhz, self.thickness_m, cos_incidence, self.pol)
            .loss_db
            .min(self.ceiling_db)
    }
}

fn interp_log_f(points: &[(f64, f64)], freq_mhz: f64) -> (f64, bool) {
    if points.is_empty() {
        return (0.0, true);
    }
    if points.len() == 1 {
        return (points[0].1, (freq_mhz - points[0].0).abs() > 1e-9);
    }
    let first = points[0];
    let last = points[points.len() - 1];
    if freq_mhz <= first.0 {
        return (first.1, freq_mhz < first.0 * (1.0 - 1e-9));
    }
    if freq_mhz >= last.0 {
        return (last.1, freq_mhz > last.0 * (1.0 + 1e-9));
    }
    for w in points.windows(2) {
        let (f0, l0) = w[0];
        let (f1, l1) = w[1];
        if freq_mhz >= f0 && freq_mhz <= f1 {
            let t = (freq_mhz.ln() - f0.ln()) / (f1.ln() - f0.ln());
            return (l0 + t * (l1 - l0), false);
        }
    }
    (last.1, true)
}

/// Loss of a measured table at `freq_mhz`, with a note when it was extrapolated.
fn empirical_loss(loss_db: &[(f64, f64)], freq_mhz: f64) -> CrossingLoss {
    let (l, extrapolated) = interp_log_f(loss_db, freq_mhz);
    let note = extrapolated.then(|| RangeNote {
        model: "empirical material table",
        quantity: "frequency",
        value: freq_mhz,
        min: loss_db.first().map(|p| p.0).unwrap_or(0.0),
        max: loss_db.last().map(|p| p.0).unwrap_or(0.0),
        unit: "MHz",
    });
    CrossingLoss {
        loss_db: l.max(0.0),
        note,
    }
}

/// Reflection coefficient of a measured reflection-loss table: magnitude from the table,
/// phase of a conductor in P.2040's sign convention (TE: pi, TM: 0); 0 with no table.
fn empirical_reflection(
    reflection_loss_db: &[(f64, f64)],
    freq_mhz: f64,
    pol: Polarization,
) -> Complex64 {
    if reflection_loss_db.is_empty() {
        return Complex64::new(0.0, 0.0);
    }
    let (rl, _) = interp_log_f(reflection_loss_db, freq_mhz);
    let g = 10f64.powf(-rl / 20.0);
    match pol {
        Polarization::Te => Complex64::new(-g, 0.0),
        Polarization::Tm => Complex64::new(g, 0.0),
    }
}

impl MaterialModel {
    fn eta(&self, freq_ghz: f64) -> Option<Complex64> {
        match self {
            MaterialModel::Itu(m) => Some(m.complex_permittivity(freq_ghz)),
            MaterialModel::CustomSlab {
                eps_real,
                sigma_s_per_m,
            } => Some(p2040::complex_permittivity(
                *eps_real,
                *sigma_s_per_m,
                freq_ghz,
            )),
            _ => None,
        }
    }

    fn range_note(&self, freq_ghz: f64) -> Option<RangeNote> {
        match self {
            MaterialModel::Itu(m) => m.range_note(freq_ghz),
            MaterialModel::Layered(layers) => {
                layers.iter().find_map(|(m, _)| m.range_note(freq_ghz))
            }
            _ => None,
        }
    }

    /// Is this a model whose loss depends on the incidence angle?
    pub fn angle_dependent(&self) -> bool {
        !matches!(self, MaterialModel::Empirical { .. })
    }

    /// The P.2040 layers of a layered model at `freq_ghz` (empirical sub-entries, which
    /// have no permittivity, are left out).
    fn layers(&self, freq_ghz: f64) -> Vec<Layer> {
        let MaterialModel::Layered(layers) = self else {
            return Vec::new();
        };
        layers
            .iter()
            .filter_map(|(m, t)| {
                m.eta(freq_ghz).map(|eta| Layer {
                    eta,
                    thickness_m: *t,
                })
            })
            .collect()
    }

    /// Reflection and transmission of a slab or layered model, ITU-R P.2040-3 §3 (single
    /// slab, eqs. for R and T with the phase term q) or the transfer-matrix product of
    /// the layers; `None` for a measured table.
    fn slab_response(
        &self,
        freq_ghz: f64,
        thickness_m: f64,
        theta_rad: f64,
        pol: Polarization,
    ) -> Option<SlabResponse> {
        match self {
            MaterialModel::Empirical { .. } => None,
            MaterialModel::Layered(_) => Some(p2040::layered(
                &self.layers(freq_ghz),
                freq_ghz,
                theta_rad,
                pol,
            )),
            m => {
                let eta = m.eta(freq_ghz)?;
                Some(p2040::slab(eta, thickness_m, freq_ghz, theta_rad, pol))
            }
        }
    }
}

/// Incidence angle from the normal, radians, of a crossing with `|cos| = cos_incidence`.
fn incidence_rad(cos_incidence: f64) -> f64 {
    cos_incidence.clamp(0.0, 1.0).acos()
}

impl Material {
    /// Transmission loss of one crossing, dB. `cos_incidence` is `|cos|` of the incidence
    /// angle from the wall's normal (1 at normal incidence); angles beyond
    /// [`GRAZING_LIMIT_DEG`] are charged at it. Walls are vertical and the antennas
    /// vertically polarised, so a horizontal path meets a wall with the field parallel to
    /// it: TE (perpendicular) polarisation; a floor slab crossed by a steep path is closer
    /// to TM.
    pub fn crossing_loss(
        &self,
        freq_mhz: f64,
        thickness_m: f64,
        cos_incidence: f64,
        pol: Polarization,
    ) -> CrossingLoss {
        let theta = incidence_rad(cos_incidence).min(GRAZING_LIMIT_DEG.to_radians());
        self.crossing_loss_at(freq_mhz, thickness_m, theta, pol)
    }

    /// [`Material::crossing_loss`] at `theta_rad` from the normal, without the grazing rule.
    fn crossing_loss_at(
        &self,
        freq_mhz: f64,
        thickness_m: f64,
        theta_rad: f64,
        pol: Polarization,
    ) -> CrossingLoss {
        let f_ghz = freq_mhz / 1000.0;
        match &self.model {
            MaterialModel::Empirical { loss_db, .. } => empirical_loss(loss_db, freq_mhz),
            m => {
                let r = m.slab_response(f_ghz, thickness_m, theta_rad, pol);
                CrossingLoss {
                    loss_db: r.map_or(0.0, |r| r.transmission_loss_db().max(0.0)),
                    note: m.range_note(f_ghz),
                }
            }
        }
    }

    /// How far to trust the numbers, in words a reader of the report understands.
    pub fn confidence_words(&self) -> String {
        let kind = match (&self.model, self.origin.as_str()) {
            (_, "probe") => return "measured on site".into(),
            (MaterialModel::Empirical { .. }, "site") => {
                return "empirical, given in site.toml".into()
            }
            (_, "site") => "published formula (P.2040 slab) with values given in site.toml",
            (MaterialModel::Empirical { .. }, _) => "",
            _ => return "published formula (ITU-R P.2040 slab)".into(),
        };
        if !kind.is_empty() {
            return kind.into();
        }
        match self.confidence.as_str() {
            "from memory" => "empirical, from memory".into(),
            "common practice" => "empirical, common practice".into(),
            _ => "empirical, from a published source".into(),
        }
    }

    /// How the site's thickness enters the loss, in words.
    pub fn thickness_rule(&self, thickness_m: f64) -> String {
        match (&self.model, &self.reference) {
            (MaterialModel::Empirical { .. }, Some(r)) => {
                format!("per crossing of {r}; the site's thickness does not change it")
            }
            (MaterialModel::Empirical { .. }, None) => {
                "per crossing as given; the site's thickness does not change it".into()
            }
            (MaterialModel::Layered(_), _) => "layers as defined".into(),
            _ => format!("slab {:.0} mm as on site", thickness_m * 1000.0),
        }
    }

    /// The crossing loss of this material at one frequency, thickness and polarisation as
    /// a function of the angle, at most `ceiling_db`: [`CrossingLossFn::Const`] for a
    /// measured table, else the exact [`Material::crossing_loss`] tabulated (or, if no
    /// table meets [`TABLE_TOLERANCE_DB`], evaluated at every call).
    pub fn crossing_loss_fn(
        &self,
        freq_mhz: f64,
        thickness_m: f64,
        pol: Polarization,
        ceiling_db: f64,
    ) -> CrossingLossFn {
        if !self.model.angle_dependent() {
            let l = self.crossing_loss(freq_mhz, thickness_m, 1.0, pol).loss_db;
            return CrossingLossFn::Const(l.min(ceiling_db));
        }
        let exact = ExactCrossing {
            material: self.clone(),
            freq_mhz,
            thickness_m,
            pol,
            ceiling_db,
        };
        let min_cos = GRAZING_LIMIT_DEG.to_radians().cos();
        // Nodes below min_cos (the table's first octave) take the exact value there, not
        // the grazing rule's, so that the interval holding min_cos interpolates a smooth
        // function; the table applies the rule itself when evaluated.
        let loss = |c: f64| {
            self.crossing_loss_at(freq_mhz, thickness_m, incidence_rad(c), pol)
                .loss_db
        };
        match AngleTable::build(loss, min_cos, ceiling_db, TABLE_TOLERANCE_DB) {
            Ok(t) => CrossingLossFn::Table(t),
            Err(_) => CrossingLossFn::Exact(Box::new(exact)),
        }
    }

    /// Complex reflection coefficient of the wall seen from the incidence side, at the
    /// incidence angle with `|cos| = cos_incidence` (1 at normal incidence) and the given
    /// polarisation: ITU-R P.2040-3 §3 (single slab, all internal reflections, the phase
    /// term included) for slab materials, the transfer-matrix product for layered ones.
    /// `R_TE` is the electric-field ratio, `R_TM` the magnetic-field one (P.2040's
    /// convention: `R_TM = -R_TE` at normal incidence).
    ///
    /// Empirical entries give a magnitude only, measured near normal incidence, and are
    /// used at every angle; their phase is taken as a conductor's: `R_TE = -|G|`,
    /// `R_TM = +|G|` (which places the first electric-field null on the surface).
    pub fn reflection_coefficient(
        &self,
        freq_mhz: f64,
        thickness_m: f64,
        cos_incidence: f64,
        pol: Polarization,
    ) -> Complex64 {
        let f_ghz = freq_mhz / 1000.0;
        match &self.model {
            MaterialModel::Empirical {
                reflection_loss_db, ..
            } => empirical_reflection(reflection_loss_db, freq_mhz, pol),
            m => m
                .slab_response(f_ghz, thickness_m, incidence_rad(cos_incidence), pol)
                .map_or(Complex64::new(0.0, 0.0), |r| r.reflection),
        }
    }

    /// The material's fitted or tabulated frequency range in MHz, if it has one.
    pub fn range_mhz(&self) -> Option<(f64, f64)> {
        match &self.model {
            MaterialModel::Itu(m) => Some((m.f_min_ghz * 1000.0, m.f_max_ghz * 1000.0)),
            MaterialModel::Empirical { loss_db, .. } => {
                Some((loss_db.first()?.0, loss_db.last()?.0))
            }
            MaterialModel::Layered(l) => l.iter().find_map(|(m, _)| match m {
                MaterialModel::Itu(i) => Some((i.f_min_ghz * 1000.0, i.f_max_ghz * 1000.0)),
                _ => None,
            }),
            MaterialModel::CustomSlab { .. } => None,
        }
    }

    /// Short description of the model kind.
    pub fn model_label(&self) -> &'static str {
        match self.model {
            MaterialModel::Itu(_) => "ITU-R P.2040 slab",
            MaterialModel::CustomSlab { .. } => "slab (site permittivity)",
            MaterialModel::Layered(_) => "layered slab (transfer matrix)",
            MaterialModel::Empirical { .. } => "measured loss table",
        }
    }
}

/// The set of materials a site can use: ITU rows, then the library, then the site's own.
#[derive(Debug, Clone, Default)]
pub struct MaterialLibrary {
    /// By id, sorted.
    pub materials: BTreeMap<String, Material>,
    /// Materials as they were before a site's `[[probes]]` overrode them (library values,
    /// kept for display beside the probe values), by id.
    pub before_probes: BTreeMap<String, Material>,
}

/// Relative frequency tolerance within which a probe measurement stands for a service
/// frequency (an rfsite choice: 10 %; beyond it the library value is kept).
pub const PROBE_FREQ_TOLERANCE: f64 = 0.10;

/// Loss of a material from a probe measurement: level with a clear path minus level
/// through the material, dB (same antennas, same separation).
pub fn probe_loss_db(clear_dbm: f64, through_dbm: f64) -> f64 {
    clear_dbm - through_dbm
}

/// One probe-derived loss point.
#[derive(Debug, Clone, PartialEq)]
pub struct ProbePoint {
    /// Material id.
    pub material: String,
    /// Frequency, MHz.
    pub freq_mhz: f64,
    /// Measured loss, dB.
    pub loss_db: f64,
}

/// One entry of a library TOML file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct LibEntry {
    id: String,
    name: String,
    class: String,
    source: String,
    confidence: String,
    reference: String,
    loss_db: Vec<(f64, f64)>,
    #[serde(default)]
    reflection_loss_db: Vec<(f64, f64)>,
    #[serde(default)]
    note: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct LibFile {
    #[allow(dead_code)]
    library: Option<toml::Table>,
    material: Vec<LibEntry>,
}

/// The empirical library compiled into the binary.
pub const BUILTIN_LIBRARY_TOML: &str =
    include_str!("../../../plugins/data/materials/empirical.toml");

impl MaterialLibrary {
    /// The ITU-R P.2040 rows plus the compiled-in empirical library.
    pub fn builtin() -> Self {
        let mut lib = MaterialLibrary::default();
        for m in p2040::ITU_MATERIALS {
            lib.materials.insert(
                m.id.to_string(),
                Material {
                    id: m.id.to_string(),
                    name: format!("{} (ITU-R P.2040)", m.name),
                    class: itu_class(m.id),
                    source: "ITU-R P.2040-3 (08/2023) Table 3".into(),
                    confidence: "confirmed".into(),
                    model: MaterialModel::Itu(m),
                    origin: "itu".into(),
                    reference: None,
                },
            );
        }
        // The compiled-in file is tested; a failure here is a build defect.
        if let Err(e) = lib.add_toml(BUILTIN_LIBRARY_TOML, "library") {
            panic!("built-in material library is invalid: {e}");
        }
        lib
    }

    /// Adds (or overrides) entries from a library TOML text.
    pub fn add_toml(&mut self, text: &str, origin: &str) -> Result<usize, String> {
        let f: LibFile = toml::from_str(text).map_err(|e| e.to_string())?;
        let n = f.material.len();
        for e in f.material {
            let class = MaterialClass::from_id(&e.class)
                .ok_or_else(|| format!("material `{}`: unknown class `{}`", e.id, e.class))?;
            if e.loss_db.is_empty() {
                return Err(format!("material `{}` has no loss_db points", e.id));
            }
            if e.loss_db.windows(2).any(|w| w[1].0 <= w[0].0) {
                return Err(format!(
                    "material `{}`: loss_db frequencies must ascend",
                    e.id
                ));
            }
            let _ = e.note;
            self.materials.insert(
                e.id.clone(),
                Material {
                    id: e.id,
                    name: e.name,
                    class,
                    source: e.source,
                    confidence: e.confidence,
                    model: MaterialModel::Empirical {
                        loss_db: e.loss_db,
                        reflection_loss_db: e.reflection_loss_db,
                    },
                    origin: origin.into(),
                    reference: Some(e.reference),
                },
            );
        }
        Ok(n)
    }

    /// Looks a material up.
    pub fn get(&self, id: &str) -> Option<&Material> {
        self.materials.get(id)
    }

    /// Applies a site's probe measurements: each probed material becomes a measured-loss
    /// table (origin "probe") built from its probe points (several probes at one frequency
    /// are averaged; several frequencies make a table, interpolated in log-frequency). At a
    /// service frequency farther than [`PROBE_FREQ_TOLERANCE`] from every probe and outside
    /// the probed span, the library's normal-incidence value at `thickness_m` is kept in the
    /// table, so a probe overrides the material only at the frequencies it was made at.
    /// The library entry is kept in `before_probes`. Returns notes for the report.
    pub fn apply_probes(
        &mut self,
        probes: &[ProbePoint],
        service_freqs_mhz: &[f64],
        thickness_m: &BTreeMap<String, f64>,
    ) -> Vec<String> {
        let mut notes = Vec::new();
        let mut by_mat: BTreeMap<&str, Vec<(f64, f64)>> = BTreeMap::new();
        for p in probes {
            if !(p.freq_mhz.is_finite() && p.freq_mhz > 0.0 && p.loss_db.is_finite()) {
                notes.push(format!(
                    "probe of `{}` ({} MHz, {} dB) is not a measurement and is not used",
                    p.material, p.freq_mhz, p.loss_db
                ));
                continue;
            }
            by_mat
                .entry(p.material.as_str())
                .or_default()
                .push((p.freq_mhz, p.loss_db));
        }
        for (id, pts) in by_mat {
            let Some(orig) = self.materials.get(id).cloned() else {
                continue;
            };
            let mut table = average_by_frequency(id, pts, &mut notes);
            let (lo, hi) = (table[0].0, table[table.len() - 1].0);
            let t = thickness_m.get(id).copied().unwrap_or(0.1);
            let mut extra = Vec::new();
            for &fs in service_freqs_mhz
                .iter()
                .filter(|f| f.is_finite() && **f > 0.0)
            {
                if fs >= lo && fs <= hi {
                    continue;
                }
                let (fn_, ln) = if fs < lo {
                    table[0]
                } else {
                    table[table.len() - 1]
                };
                if (fs - fn_).abs() <= PROBE_FREQ_TOLERANCE * fs {
                    extra.push((fs, ln));
                } else {
                    let l = orig.crossing_loss(fs, t, 1.0, Polarization::Te).loss_db;
                    extra.push((fs, l));
                    notes.push(format!("probe of `{id}` ({} MHz) is not used at {fs} MHz (more than {:.0} % away): the library value {l:.1} dB is kept there", table.iter().map(|p| format!("{}", p.0)).collect::<Vec<_>>().join(", "), 100.0 * PROBE_FREQ_TOLERANCE));
                }
            }
            table.extend(extra);
            table.sort_by(|a, b| a.0.total_cmp(&b.0));
            table.dedup_by(|a, b| (a.0 - b.0).abs() < 1e-9);
            let reflection_loss_db = match &orig.model {
                MaterialModel::Empirical {
                    reflection_loss_db, ..
                } => reflection_loss_db.clone(),
                _ => Vec::new(),
            };
            let probed = Material {
                id: orig.id.clone(),
                name: orig.name.clone(),
                class: orig.class,
                source: format!(
                    "site probe measurement (clear-path minus through level); library: {}",
                    orig.source
                ),
                confidence: "site probe".into(),
                model: MaterialModel::Empirical {
                    loss_db: table,
                    reflection_loss_db,
                },
                origin: "probe".into(),
                reference: orig.reference.clone(),
            };
            self.before_probes.insert(id.to_string(), orig);
            self.materials.insert(id.to_string(), probed);
        }
        notes
    }

    /// All ids, sorted.
    pub fn ids(&self) -> impl Iterator<Item = &str> + Clone {
        self.materials.keys().map(String::as_str)
    }
}

/// Probe points of one material (finite, at least one) as a table ascending in frequency:
/// probes at the same frequency (within 1e-9 MHz of the first of a run) are averaged; a
/// mean below 0 dB is taken as 0 dB, with a note. Each step consumes at least one point.
fn average_by_frequency(
    id: &str,
    mut pts: Vec<(f64, f64)>,
    notes: &mut Vec<String>,
) -> Vec<(f64, f64)> {
    pts.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut table: Vec<(f64, f64)> = Vec::new();
    let mut rest = pts.as_slice();
    while let Some(&(f, _)) = rest.first() {
        let n = rest
            .iter()
            .take_while(|p| (p.0 - f).abs() < 1e-9)
            .count()
            .max(1);
        let mean = rest[..n].iter().map(|p| p.1).sum::<f64>() / n as f64;
        if mean < 0.0 {
            notes.push(format!("probe of `{id}` at {f} MHz measured more through the material than with a clear path ({mean:.1} dB): taken as 0 dB"));
        }
        table.push((f, mean.max(0.0)));
        rest = &rest[n..];
    }
    table
}

/// The class of each ITU row.
pub fn itu_class(id: &str) -> MaterialClass {
    match id {
        "concrete" => MaterialClass::Concrete,
        "brick" | "marble" => MaterialClass::Masonry,
        "plasterboard" | "ceiling-board" => MaterialClass::Light,
        "wood" | "chipboard" | "plywood" | "floorboard" => MaterialClass::Wood,
        "glass" => MaterialClass::Glass,
        "metal" => MaterialClass::Metal,
        id if id.ends_with("ground") => MaterialClass::Ground,
        _ => MaterialClass::Other,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn probe_overrides_only_at_its_frequency() {
        // Hand numbers: clear -40 dBm, through -66 dBm gives 26 dB (issue 4 item 2:
        // loss = clear - through). A 2400 MHz service keeps the library value.
        let mut lib = MaterialLibrary::builtin();
        let lib_2400 = lib
            .get("concrete")
            .unwrap()
            .crossing_loss(2400.0, 0.2, 1.0, Polarization::Te)
            .loss_db;
        let probes = vec![
            ProbePoint {
                material: "concrete".into(),
                freq_mhz: 900.0,
                loss_db: probe_loss_db(-40.0, -66.0),
            },
            ProbePoint {
                material: "concrete".into(),
                freq_mhz: 900.0,
                loss_db: probe_loss_db(-40.0, -68.0),
            },
        ];
        let th: BTreeMap<String, f64> = [("concrete".to_string(), 0.2)].into();
        let notes = lib.apply_probes(&probes, &[900.0, 2400.0], &th);
        let m = lib.get("concrete").unwrap();
        assert_eq!(m.origin, "probe");
        assert!((m.crossing_loss(900.0, 0.2, 0.3, Polarization::Te).loss_db - 27.0).abs() < 1e-12);
        assert!(
            (m.crossing_loss(2400.0, 0.2, 1.0, Polarization::Te).loss_db - lib_2400).abs() < 1e-9
        );
        assert!(lib.before_probes.contains_key("concrete"));
        assert_eq!(notes.len(), 1);
        // 850 MHz lies within 10 % of the 900 MHz probe: the probe value holds there.
        let mut lib2 = MaterialLibrary::builtin();
        lib2.apply_probes(&probes[..1], &[850.0], &th);
        let l = lib2
            .get("concrete")
            .unwrap()
            .crossing_loss(850.0, 0.2, 1.0, Polarization::Te);
        assert!((l.loss_db - 26.0).abs() < 1e-12 && l.note.is_none());
    }

    #[test]
    fn non_finite_probes_are_set_aside_not_looped_on() {
        // A NaN frequency used to stall the averaging loop (no progress, the table grew
        // until memory ran out). Non-finite points are now noted and left out; the finite
        // probe of the same material still makes the table.
        let mut lib = MaterialLibrary::builtin();
        let probe = |freq_mhz: f64, loss_db: f64| ProbePoint {
            material: "concrete".into(),
            freq_mhz,
            loss_db,
        };
        let probes = vec![
            probe(f64::NAN, 20.0),
            probe(f64::INFINITY, 20.0),
            probe(900.0, f64::NAN),
            probe(900.0, 26.0),
        ];
        let th: BTreeMap<String, f64> = [("concrete".to_string(), 0.2)].into();
        let notes = lib.apply_probes(&probes, &[900.0, f64::NAN], &th);
        assert_eq!(
            notes
                .iter()
                .filter(|n| n.contains("not a measurement"))
                .count(),
            3,
            "{notes:?}"
        );
        let m = lib.get("concrete").unwrap();
        assert_eq!(m.origin, "probe");
        let MaterialModel::Empirical { loss_db, .. } = &m.model else {
            panic!("a probed material is a measured table");
        };
        assert_eq!(loss_db, &vec![(900.0, 26.0)]);
        // Only non-finite probes: the library entry stays as it was.
        let mut lib2 = MaterialLibrary::builtin();
        lib2.apply_probes(&probes[..2], &[900.0], &th);
        assert_eq!(lib2.get("concrete").unwrap().origin, "itu");
    }

    #[test]
    fn log_frequency_interpolation_midpoint() {
        // Geometric mean of 900 and 3600 MHz is 1800 MHz: halfway in log-frequency.
        let (l, ex) = interp_log_f(&[(900.0, 4.0), (3600.0, 8.0)], 1800.0);
        assert!((l - 6.0).abs() < 1e-12);
        assert!(!ex);
        let (l, ex) = interp_log_f(&[(900.0, 4.0), (3600.0, 8.0)], 5000.0);
        assert_eq!(l, 8.0);
        assert!(ex);
    }
}
