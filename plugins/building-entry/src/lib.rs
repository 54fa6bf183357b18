//! # building-entry plugin
//!
//! Carries each outdoor donor signal (`[[donors]]`: the level measured or predicted outside
//! the facade) to a point just inside the facade, two ways, side by side:
//!
//! - the statistical building entry loss of ITU-R P.2109-2 for the site's building type
//!   (`[site] building`), at the donor's elevation angle, for probabilities 0.5 and 0.9
//!   (the option `probability` picks the one the verdict uses);
//! - the facade's own materials: the normal-incidence crossing loss of every exterior
//!   wall part (parts on the floor outline, or the walls the donor lists in `facade`, with
//!   their doors and windows) at the service frequency, as minimum, length-weighted mean
//!   and maximum.
//!
//! Each indoor level is compared with the service threshold plus its design margin.
//!
//! For every service, donors or not, [`envelope`] screens the building envelope face by
//! face (exterior walls, their windows and doors, the roof): the weakest entry paths and
//! whether the building behaves like a shielded enclosure (option `shielded_above_db`).

pub mod envelope;

use std::collections::{BTreeMap, BTreeSet};

use rfsite_geometry::{distance_point_segment, Point2, Segment};
use rfsite_model::{Donor, Floor, MaterialClass, PartKind, Site, WallPart};
use rfsite_physics::p2040::Polarization;
use rfsite_physics::p2109::{self, BuildingType};
use rfsite_plugin::*;
use serde::Serialize;

/// Default probability of the P.2109 loss used for the verdict (the median).
pub const DEFAULT_PROBABILITY: f64 = 0.5;
/// The probabilities always tabulated.
pub const TABULATED_PROBABILITIES: [f64; 2] = [0.5, 0.9];

/// Share of the facade of one material.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct MaterialShare {
    /// Material id.
    pub material: String,
    /// Material name.
    pub name: String,
    /// Class label.
    pub class: String,
    /// Facade length of it on this floor, m.
    pub length_m: f64,
    /// Crossing loss at normal incidence, dB (first part of it met).
    pub loss_db: f64,
}

/// The loss of a facade's own materials at one frequency.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct FacadeLoss {
    /// Number of wall parts.
    pub parts: usize,
    /// Their total length, m.
    pub length_m: f64,
    /// Smallest crossing loss, dB.
    pub min_db: f64,
    /// Length-weighted mean of the crossing losses, dB.
    pub mean_db: f64,
    /// Largest crossing loss, dB.
    pub max_db: f64,
    /// Length-weighted power mean, `-10 log10(sum w_i 10^(-L_i/10))`, dB: what an
    /// evenly lit facade lets through, dominated by its most transparent parts.
    pub power_mean_db: f64,
    /// Fraction of the length that is metal or coated glazing, 0..1.
    pub metallised_fraction: f64,
    /// By material, longest first.
    pub materials: Vec<MaterialShare>,
}

/// One donor on one floor.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct DonorEntry {
    /// Donor id.
    pub donor: String,
    /// Service id.
    pub service: String,
    /// Floor id.
    pub floor: String,
    /// Service frequency, MHz.
    pub freq_mhz: f64,
    /// Level outside the facade, dBm.
    pub outdoor_dbm: f64,
    /// Elevation angle at the facade, degrees.
    pub elevation_deg: f64,
    /// P.2109 building type used.
    pub building: String,
    /// Probability the verdict uses.
    pub probability: f64,
    /// P.2109 loss not exceeded with probability 0.5, dB.
    pub bel_p50_db: f64,
    /// P.2109 loss not exceeded with probability 0.9, dB.
    pub bel_p90_db: f64,
    /// P.2109 loss at `probability`, dB.
    pub bel_db: f64,
    /// Indoor level by P.2109 at `probability`, dBm.
    pub indoor_p2109_dbm: f64,
    /// The facade's materials, if the floor has exterior wall parts.
    pub facade: Option<FacadeLoss>,
    /// Indoor level through the facade's length-weighted mean loss, dBm.
    pub indoor_facade_dbm: Option<f64>,
    /// Indoor level through the facade's worst and best parts, dBm: [min, max].
    pub indoor_facade_range_dbm: Option<[f64; 2]>,
    /// Threshold + design margin, dBm.
    pub needed_dbm: f64,
    /// Indoor P.2109 level minus the need, dB.
    pub margin_p2109_db: f64,
    /// Indoor facade level minus the need, dB.
    pub margin_facade_db: Option<f64>,
    /// "sufficient", "marginal", "insufficient".
    pub verdict: String,
}

/// The P.2109 building class of a site's `building` value.
pub fn building_type(s: &str) -> BuildingType {
    if s == "thermally-efficient" {
        BuildingType::ThermallyEfficient
    } else {
        BuildingType::Traditional
    }
}

fn on_outline(seg: &Segment, outline: &[Point2], tol: f64) -> bool {
    let n = outline.len();
    if n < 2 {
        return false;
    }
    let near = |p: Point2| {
        (0..n).any(|i| {
            distance_point_segment(
                p,
                &Segment {
                    a: outline[i],
                    b: outline[(i + 1) % n],
                },
            ) <= tol
        })
    };
    near(seg.a) && near(seg.b) && near(seg.point_at(0.5))
}

fn shares_end_collinear(o: &Segment, w: &Segment) -> bool {
    let close = |p: Point2, q: Point2| p.distance(q) <= 1e-6;
    let touch = close(o.a, w.a) || close(o.a, w.b) || close(o.b, w.a) || close(o.b, w.b);
    let (d1, d2) = (o.b - o.a, w.b - w.a);
    let (l1, l2) = (d1.length(), d2.length());
    touch && l1 > 0.0 && l2 > 0.0 && (d1.cross(d2) / (l1 * l2)).abs() < 1e-6
}

/// The wall parts, doors and windows of a floor that lie on its outline (within half the
/// part's thickness plus 5 cm, at least 10 cm): the floor's exterior walls.
pub fn exterior_parts(floor: &Floor) -> Vec<&WallPart> {
    floor
        .parts
        .iter()
        .filter(|p| {
            on_outline(
                &p.segment,
                &floor.outline,
                (0.5 * p.thickness_m + 0.05).max(0.1),
            )
        })
        .collect()
}

/// The exterior wall parts of a floor a donor arrives through: the parts with an id the
/// donor lists in `facade` (with the doors and windows set in those walls), or, when it
/// lists none, every part that lies on the floor outline.
pub fn facade_parts<'a>(floor: &'a Floor, donor: &Donor) -> Vec<&'a WallPart> {
    if donor.facade.is_empty() {
        return exterior_parts(floor);
    }
    let listed: Vec<&WallPart> = floor
        .parts
        .iter()
        .filter(|p| donor.facade.contains(&p.id))
        .collect();
    let mut out: Vec<&WallPart> = Vec::new();
    for p in &floor.parts {
        let take = donor.facade.contains(&p.id)
            || (p.kind != PartKind::Wall
                && listed.iter().any(|w| {
                    w.kind == PartKind::Wall && shares_end_collinear(&p.segment, &w.segment)
                }));
        if take {
            out.push(p);
        }
    }
    out
}

/// The loss of the given facade parts at `freq_mhz`, normal incidence, TE; `None` when
/// there are none. Range notes of the materials are added to `notes`.
pub fn facade_loss(
    site: &Site,
    parts: &[&WallPart],
    freq_mhz: f64,
    notes: &mut BTreeSet<String>,
) -> Option<FacadeLoss> {
    let mut total = 0.0;
    let mut sum_db = 0.0;
    let mut sum_pow = 0.0;
    let mut metallised = 0.0;
    let (mut min, mut max) = (f64::INFINITY, f64::NEG_INFINITY);
    let mut by: BTreeMap<String, MaterialShare> = BTreeMap::new();
    let mut n = 0;
    for p in parts {
        let Some(m) = site.materials.get(&p.material) else {
            continue;
        };
        let len = p.segment.length();
        if len.is_nan() || len <= 0.0 {
            continue;
        }
        let l = m.crossing_loss(freq_mhz, p.thickness_m, 1.0, Polarization::Te);
        if let Some(note) = l.note {
            notes.insert(format!(
                "material `{}` at {freq_mhz} MHz: {}",
                m.id,
                note.message()
            ));
        }
        n += 1;
        total += len;
        sum_db += len * l.loss_db;
        sum_pow += len * 10f64.powf(-l.loss_db / 10.0);
        min = min.min(l.loss_db);
        max = max.max(l.loss_db);
        if matches!(m.class, MaterialClass::Metal | MaterialClass::CoatedGlass) {
            metallised += len;
        }
        by.entry(m.id.clone())
            .or_insert_with(|| MaterialShare {
                material: m.id.clone(),
                name: m.name.clone(),
                class: m.class.label().into(),
                length_m: 0.0,
                loss_db: l.loss_db,
            })
            .length_m += len;
    }
    if n == 0 {
        return None;
    }
    let mut materials: Vec<MaterialShare> = by.into_values().collect();
    materials.sort_by(|a, b| {
        b.length_m
            .total_cmp(&a.length_m)
            .then(a.material.cmp(&b.material))
    });
    Some(FacadeLoss {
        parts: n,
        length_m: total,
        min_db: min,
        mean_db: sum_db / total,
        max_db: max,
        power_mean_db: -10.0 * (sum_pow / total).log10(),
        metallised_fraction: metallised / total,
        materials,
    })
}

fn fmt1(x: f64) -> String {
    format!("{x:.1}")
}

fn prob_label(p: f64) -> String {
    if (p - 0.5).abs() < 1e-12 {
        "P.2109 median".into()
    } else {
        format!("P.2109, not exceeded at {:.0} %", 100.0 * p)
    }
}

/// The building-entry plugin.
pub struct BuildingEntry;

/// The keys of `[plugins.building-entry]` (besides `enabled`).
pub const KEYS: &[&str] = &["probability", "shielded_above_db"];

/// The option `probability`, checked.
fn probability(ctx: &Context<'_>) -> Result<f64, PluginError> {
    let probability = ctx.option_f64("probability", DEFAULT_PROBABILITY)?;
    if !(probability > 0.0 && probability < 1.0) {
        return Err(PluginError::BadOption {
            key: "probability".into(),
            message: "must be strictly between 0 and 1 (0.5 is the median building entry loss)"
                .into(),
        });
    }
    Ok(probability)
}

impl Plugin for BuildingEntry {
    fn id(&self) -> &str {
        "building-entry"
    }
    fn version(&self) -> &str {
        env!("CARGO_PKG_VERSION")
    }
    fn method(&self) -> Method {
        Method {
            summary: "Outdoor donor level carried just inside the facade two ways: ITU-R P.2109-2 building entry loss for the site's building type and the donor's elevation (probabilities 0.5 and 0.9), and the normal-incidence loss of the facade's own wall, window and door materials (min / length-weighted mean / max); each compared with threshold + design margin; per service, the envelope screened face by face (exterior walls, windows, doors, the roof) at normal incidence: the weakest entry paths, and a shielded-enclosure finding when every face screens more than `shielded_above_db` (30 dB)".into(),
            citations: vec![
                "ITU-R P.2109-2 (08/2023) section 3 and Table 1: building entry loss, traditional and thermally efficient buildings".into(),
                "ITU-R P.2040-3 (08/2023) section 3 and Table 3: slab transmission of the facade materials; empirical library entries as sourced in the material table".into(),
                "Link budget arithmetic (common practice)".into(),
            ],
            validity: "P.2109-2: 0.08–100 GHz, a point just inside the facade, statistical over buildings of the class; the facade estimate ignores incidence angle, frames, leakage through openings and the loss deeper inside".into(),
        }
    }
    fn applies(&self, site: &Site) -> bool {
        !site.donors.is_empty() || !site.services.is_empty()
    }
    fn option_keys(&self) -> Option<Vec<&'static str>> {
        Some(KEYS.to_vec())
    }
    fn check(&self, ctx: &Context<'_>) -> Vec<rfsite_plugin::InputProblem> {
        let mut p = rfsite_plugin::check::problems_of(probability(ctx));
        p.extend(rfsite_plugin::check::problems_of(envelope::shielded_above(
            ctx,
        )));
        p
    }
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError> {
        let probability = probability(ctx)?;
        let shielded_above_db = envelope::shielded_above(ctx)?;
        let site = ctx.site;
        let id = self.id().to_string();
        let building = building_type(&site.meta.building);
        let mut notes: BTreeSet<String> = BTreeSet::new();
        let mut out = PluginOutput::default();
        let mut entries: Vec<DonorEntry> = Vec::new();
        let all_part_ids: BTreeSet<&str> = site
            .floors
            .iter()
            .flat_map(|f| f.parts.iter().map(|p| p.id.as_str()))
            .collect();

        for d in &site.donors {
            let Some(svc) = site.service(&d.service) else {
                continue;
            };
            for fid in &d.facade {
                if !all_part_ids.contains(fid.as_str()) {
                    notes.insert(format!("donor `{}` lists facade wall `{fid}`, which is not a wall, door or window of the site: it was ignored", d.id));
                }
            }
            let f_ghz = svc.freq_mhz / 1000.0;
            if let Some(n) = p2109::bel_range_note(f_ghz) {
                notes.insert(format!("donor `{}` ({}): {}", d.id, svc.id, n.message()));
            }
            let bel = |p: f64| {
                p2109::building_entry_loss_db(f_ghz, p, d.elevation_deg, building).map_err(|e| {
                    PluginError::Failed(format!("donor `{}`: building entry loss: {e}", d.id))
                })
            };
            let (b50, b90, bel_db) = (
                bel(TABULATED_PROBABILITIES[0])?,
                bel(TABULATED_PROBABILITIES[1])?,
                bel(probability)?,
            );
            let need = svc.threshold_dbm + svc.design_margin_db;
            let has_indoor_system = site.transmitters.iter().any(|t| t.service == d.service);
            let first_finding = out.findings.len();
            for floor_id in &d.floors {
                let Some(floor) = site.floor(floor_id) else {
                    continue;
                };
                let parts = facade_parts(floor, d);
                let facade = facade_loss(site, &parts, svc.freq_mhz, &mut notes);
                if facade.is_none() {
                    notes.insert(format!(
                        "donor `{}` on floor `{}`: no exterior wall parts found ({}); only the P.2109 estimate is given",
                        d.id,
                        floor.id,
                        if d.facade.is_empty() { "none lies on the floor outline" } else { "none of the listed facade walls is on this floor" }
                    ));
                }
                if let Some(fl) = &facade {
                    if building == BuildingType::Traditional && fl.metallised_fraction > 0.5 {
                        notes.insert(format!(
                            "floor `{}`: {:.0} % of the facade is metal or coated glazing, but the site's building type is `traditional`; ITU-R P.2109 treats such buildings as `thermally-efficient` (set `[site] building`)",
                            floor.id,
                            100.0 * fl.metallised_fraction
                        ));
                    }
                    if building == BuildingType::ThermallyEfficient && fl.metallised_fraction == 0.0
                    {
                        notes.insert(format!(
                            "floor `{}`: the site's building type is `thermally-efficient`, but its facade has no metal or coated glazing in the model; check the materials or `[site] building`",
                            floor.id
                        ));
                    }
                }
                let indoor_p = d.level_dbm - bel_db;
                let indoor_f = facade.as_ref().map(|f| d.level_dbm - f.mean_db);
                let range = facade
                    .as_ref()
                    .map(|f| [d.level_dbm - f.max_db, d.level_dbm - f.min_db]);
                let p_ok = indoor_p >= need;
                let f_ok = indoor_f.map(|x| x >= need);
                let (verdict, severity) = match (p_ok, f_ok) {
                    (true, Some(true)) | (true, None) => ("sufficient", Severity::Info),
                    (false, Some(false)) | (false, None) => (
                        "insufficient",
                        if has_indoor_system {
                            Severity::Minor
                        } else {
                            Severity::Major
                        },
                    ),
                    _ => ("marginal", Severity::Minor),
                };
                let e = DonorEntry {
                    donor: d.id.clone(),
                    service: svc.id.clone(),
                    floor: floor.id.clone(),
                    freq_mhz: svc.freq_mhz,
                    outdoor_dbm: d.level_dbm,
                    elevation_deg: d.elevation_deg,
                    building: site.meta.building.clone(),
                    probability,
                    bel_p50_db: b50,
                    bel_p90_db: b90,
                    bel_db,
                    indoor_p2109_dbm: indoor_p,
                    facade: facade.clone(),
                    indoor_facade_dbm: indoor_f,
                    indoor_facade_range_dbm: range,
                    needed_dbm: need,
                    margin_p2109_db: indoor_p - need,
                    margin_facade_db: indoor_f.map(|x| x - need),
                    verdict: verdict.into(),
                };
                // The finding: the lower of the two estimates leads.
                let facade_desc = match facade.as_ref().and_then(|f| f.materials.first()) {
                    Some(m) => format!("the {} facade", m.class),
                    None => "the facade".into(),
                };
                let (lead, lead_label) = match indoor_f {
                    Some(x) if x < indoor_p => {
                        (x, "facade materials, length-weighted mean".to_string())
                    }
                    _ => (indoor_p, prob_label(probability)),
                };
                let relation = if lead >= need { "at or above" } else { "below" };
                let title = format!(
                    "Outdoor donor {} at {} dBm arrives at about {:.0} dBm inside {} on {} ({}) — {} the {} dBm needed",
                    d.id,
                    fmt1(d.level_dbm),
                    lead,
                    facade_desc,
                    floor.name,
                    lead_label,
                    relation,
                    fmt1(need)
                );
                let facade_text = match &facade {
                    Some(f) if fmt1(f.min_db) == fmt1(f.max_db) => format!(
                        "The facade's own materials ({} part{}, {:.1} m: {}) cost {} dB at normal incidence: about {} dBm inside.",
                        f.parts,
                        if f.parts == 1 { "" } else { "s" },
                        f.length_m,
                        f.materials.iter().take(4).map(|m| format!("{} {:.1} m at {} dB", m.material, m.length_m, fmt1(m.loss_db))).collect::<Vec<_>>().join(", "),
                        fmt1(f.min_db),
                        fmt1(d.level_dbm - f.mean_db),
                    ),
                    Some(f) => format!(
                        "The facade's own materials ({} part{}, {:.1} m: {}) cost {} at normal incidence, {} dB length-weighted mean (power mean {} dB, which the most transparent parts dominate): about {} dBm inside (range {}).",
                        f.parts,
                        if f.parts == 1 { "" } else { "s" },
                        f.length_m,
                        f.materials.iter().take(4).map(|m| format!("{} {:.1} m at {} dB", m.material, m.length_m, fmt1(m.loss_db))).collect::<Vec<_>>().join(", "),
                        rfsite_plugin::words::span(&fmt1(f.min_db), &fmt1(f.max_db), "dB"),
                        fmt1(f.mean_db),
                        fmt1(f.power_mean_db),
                        fmt1(d.level_dbm - f.mean_db),
                        rfsite_plugin::words::span(&fmt1(d.level_dbm - f.max_db), &fmt1(d.level_dbm - f.min_db), "dBm"),
                    ),
                    None => "No exterior wall parts were found for the facade estimate.".into(),
                };
                let advice = match verdict {
                    "sufficient" => "The macro signal is expected to suffice just inside the facade; walls and floors deeper inside add further loss (see the coverage prediction).".to_string(),
                    "insufficient" => "An off-air repeater (bi-directional amplifier) with a rooftop donor antenna, or a distributed antenna system, is needed rather than relying on the macro signal.".to_string(),
                    _ => "The two estimates disagree: measure the level just inside the facade (a site probe of the facade material) before deciding on an off-air repeater or DAS.".to_string(),
                };
                out.findings.push(Finding {
                    id: format!("entry-{}-{}", d.id, floor.id),
                    severity,
                    floor: Some(floor.id.clone()),
                    service: Some(svc.id.clone()),
                    title,
                    detail: format!(
                        "{} at {} MHz, elevation {}°, {} building: ITU-R P.2109-2 gives {} dB (P = 0.5) and {} dB (P = 0.9); at P = {} ({}) that is about {} dBm inside. {} Needed: threshold {} dBm + design margin {} dB = {} dBm. {}",
                        svc.name,
                        svc.freq_mhz,
                        fmt1(d.elevation_deg),
                        site.meta.building,
                        fmt1(b50),
                        fmt1(b90),
                        probability,
                        prob_label(probability),
                        fmt1(indoor_p),
                        facade_text,
                        fmt1(svc.threshold_dbm),
                        fmt1(svc.design_margin_db),
                        fmt1(need),
                        advice
                    ),
                    plugin: id.clone(),
                    shortfall_db: (lead < need).then_some(need - lead),
                    location_m: None,
                    causes: match verdict {
                        "sufficient" => vec![],
                        _ => {
                            let mut c = vec![format!("building entry loss of {} dB (P.2109, P = {probability})", fmt1(bel_db))];
                            if let Some(f) = &facade {
                                if f.metallised_fraction > 0.0 {
                                    c.push(format!("{:.0} % of the facade is metal or coated glazing, which reflects most of the signal", 100.0 * f.metallised_fraction));
                                }
                            }
                            c
                        }
                    },
                    remedies: vec![],
                });
                entries.push(e);
            }
            // One finding per donor: the floor with the largest shortfall speaks for all
            // (the table keeps every floor).
            let mut mine: Vec<Finding> = out.findings.drain(first_finding..).collect();
            let n = mine.len();
            mine.sort_by(|a, b| {
                b.shortfall_db
                    .unwrap_or(f64::NEG_INFINITY)
                    .total_cmp(&a.shortfall_db.unwrap_or(f64::NEG_INFINITY))
                    .then(a.id.cmp(&b.id))
            });
            if let Some(mut f) = mine.into_iter().next() {
                if n > 1 {
                    f.title
                        .push_str(&format!(" (worst of {n} floors; the table lists each)"));
                }
                f.id = format!("entry-{}", d.id);
                out.findings.push(f);
            }
        }

        if !entries.is_empty() {
            out.tables.push(donor_table(site, probability, &entries));
        }
        envelope::add_to(&mut out, site, shielded_above_db, &id, &mut notes)?;
        for n in notes {
            out.warnings.push(Warning {
                plugin: id.clone(),
                message: n,
            });
        }
        out.extra
            .insert("building".into(), serde_json::json!(site.meta.building));
        out.extra
            .insert("probability".into(), serde_json::json!(probability));
        out.extra.insert(
            "donors".into(),
            serde_json::to_value(&entries).map_err(|e| PluginError::Failed(e.to_string()))?,
        );
        Ok(out)
    }
}

/// The donors table: both methods side by side, one row per donor and floor.
fn donor_table(site: &Site, probability: f64, entries: &[DonorEntry]) -> Table {
    Table {
            id: "building-entry".into(),
            title: format!(
                "Donor signals just inside the facade: ITU-R P.2109-2 ({}, verdict at P = {}) beside the facade materials",
                site.meta.building, probability
            ),
            columns: vec![
                "Donor".into(),
                "Service".into(),
                "Floor".into(),
                "Outdoor (dBm)".into(),
                "P.2109 P=0.5 (dB)".into(),
                "P.2109 P=0.9 (dB)".into(),
                "Facade min/mean/max (dB)".into(),
                format!("Inside by P.2109 P={probability} (dBm)"),
                "Inside by facade mean (dBm)".into(),
                "Needed (dBm)".into(),
                "Verdict".into(),
            ],
            rows: entries
                .iter()
                .map(|e| {
                    vec![
                        e.donor.clone(),
                        e.service.clone(),
                        e.floor.clone(),
                        fmt1(e.outdoor_dbm),
                        fmt1(e.bel_p50_db),
                        fmt1(e.bel_p90_db),
                        e.facade.as_ref().map(|f| format!("{} / {} / {}", fmt1(f.min_db), fmt1(f.mean_db), fmt1(f.max_db))).unwrap_or_else(|| "–".into()),
                        fmt1(e.indoor_p2109_dbm),
                        e.indoor_facade_dbm.map(fmt1).unwrap_or_else(|| "–".into()),
                        fmt1(e.needed_dbm),
                        e.verdict.clone(),
                    ]
                })
                .collect(),
        }
}
