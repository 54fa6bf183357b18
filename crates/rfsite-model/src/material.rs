//! Materials: the ITU-R P.2040 slab materials, the empirical library compiled in from
//! `plugins/data/materials/*.toml`, and materials a site defines or overrides.
//!
//! A material answers one question for the rest of rfsite: how many dB does one crossing
//! of it cost at a frequency, thickness and incidence angle, and was that inside the range
//! where its data hold.

use std::collections::BTreeMap;

use rfsite_physics::p2040::{self, ItuMaterial, Layer, Polarization};
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
}

/// Loss of one crossing.
#[derive(Debug, Clone, PartialEq)]
pub struct CrossingLoss {
    /// Transmission loss, dB (>= 0).
    pub loss_db: f64,
    /// Set when the data were used outside their range.
    pub note: Option<RangeNote>,
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
}

impl Material {
    /// Transmission loss of one crossing, dB. `cos_incidence` is 1 at normal incidence.
    /// Walls are vertical and the antennas vertically polarised, so a horizontal path
    /// meets a wall with the field parallel to it: TE (perpendicular) polarisation.
    pub fn crossing_loss(
        &self,
        freq_mhz: f64,
        thickness_m: f64,
        cos_incidence: f64,
        pol: Polarization,
    ) -> CrossingLoss {
        let f_ghz = freq_mhz / 1000.0;
        let theta = cos_incidence.clamp(0.0, 1.0).acos().min(89.0_f64.to_radians());
        match &self.model {
            MaterialModel::Empirical { loss_db, .. } => {
                let (l, extrapolated) = interp_log_f(loss_db, freq_mhz);
                let note = if extrapolated {
                    Some(RangeNote {
                        model: "empirical material table",
                        quantity: "frequency",
                        value: freq_mhz,
                        min: loss_db.first().map(|p| p.0).unwrap_or(0.0),
                        max: loss_db.last().map(|p| p.0).unwrap_or(0.0),
                        unit: "MHz",
                    })
                } else {
                    None
                };
                CrossingLoss {
                    loss_db: l.max(0.0),
                    note,
                }
            }
            MaterialModel::Layered(layers) => {
                let ls: Vec<Layer> = layers
                    .iter()
                    .filter_map(|(m, t)| {
                        m.eta(f_ghz).map(|eta| Layer {
                            eta,
                            thickness_m: *t,
                        })
                    })
                    .collect();
                let r = p2040::layered(&ls, f_ghz, theta, pol);
                CrossingLoss {
                    loss_db: r.transmission_loss_db().max(0.0),
                    note: self.model.range_note(f_ghz),
                }
            }
            m => {
                let eta = m.eta(f_ghz).unwrap_or(Complex64::new(1.0, 0.0));
                let r = p2040::slab(eta, thickness_m, f_ghz, theta, pol);
                CrossingLoss {
                    loss_db: r.transmission_loss_db().max(0.0),
                    note: m.range_note(f_ghz),
                }
            }
        }
    }

    /// Complex reflection coefficient at normal incidence (for standing waves).
    /// Empirical entries give a magnitude only; their phase is taken as pi (a
    /// conductor-like reflector), which places the first null on the surface.
    pub fn reflection_coefficient(&self, freq_mhz: f64, thickness_m: f64) -> Complex64 {
        let f_ghz = freq_mhz / 1000.0;
        match &self.model {
            MaterialModel::Empirical {
                reflection_loss_db, ..
            } => {
                if reflection_loss_db.is_empty() {
                    return Complex64::new(0.0, 0.0);
                }
                let (rl, _) = interp_log_f(reflection_loss_db, freq_mhz);
                Complex64::new(-(10f64.powf(-rl / 20.0)), 0.0)
            }
            MaterialModel::Layered(layers) => {
                let ls: Vec<Layer> = layers
                    .iter()
                    .filter_map(|(m, t)| {
                        m.eta(f_ghz).map(|eta| Layer {
                            eta,
                            thickness_m: *t,
                        })
                    })
                    .collect();
                p2040::layered(&ls, f_ghz, 0.0, Polarization::Te).reflection
            }
            m => {
                let eta = m.eta(f_ghz).unwrap_or(Complex64::new(1.0, 0.0));
                p2040::slab(eta, thickness_m, f_ghz, 0.0, Polarization::Te).reflection
            }
        }
    }

    /// The material's fitted or tabulated frequency range in MHz, if it has one.
    pub fn range_mhz(&self) -> Option<(f64, f64)> {
        match &self.model {
            MaterialModel::Itu(m) => Some((m.f_min_ghz * 1000.0, m.f_max_ghz * 1000.0)),
            MaterialModel::Empirical { loss_db, .. } => Some((loss_db.first()?.0, loss_db.last()?.0)),
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
                },
            );
        }
        Ok(n)
    }

    /// Looks a material up.
    pub fn get(&self, id: &str) -> Option<&Material> {
        self.materials.get(id)
    }

    /// All ids, sorted.
    pub fn ids(&self) -> impl Iterator<Item = &str> + Clone {
        self.materials.keys().map(String::as_str)
    }
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
