//! Envelope screening: how many dB each face of the building envelope puts between an
//! outdoor signal and the rooms behind it, per service and floor.
//!
//! A face is one exterior wall (a wall part on the floor outline), one window or door set
//! in it (openings are wall parts of their own material), or the roof over the top floor.
//! Its screening is the material's crossing loss at the service frequency at normal
//! incidence, by the same [`rfsite_model::Material::crossing_loss`] call the facade
//! estimate of the donors uses, so the two tables agree. Parts of one wall or opening id
//! with one material and thickness are one face (an unnamed opening takes the id
//! `<wall>-opening`, so the unnamed openings of a wall share one face).
//!
//! From the faces: the weakest entry paths (a finding when the weakest face is
//! [`WEAK_PATH_BELOW_MEDIAN_DB`] or more below the median face, the length-weighted median
//! of the floor's walls, windows and doors) and the shielded-enclosure
//! test (every face, roof included, above `shielded_above_db`).

use std::collections::{BTreeMap, BTreeSet};

use rfsite_model::{Floor, PartKind, Service, Site, WallPart};
use rfsite_physics::p2040::Polarization;
use rfsite_plugin::*;
use serde::Serialize;

use crate::exterior_parts;

/// Default of the option `shielded_above_db`: a building whose every face screens more
/// than this behaves like a shielded enclosure. 30 dB is common practice: coated glazing on
/// a metal frame, metal cladding and a concrete or metal roof behave like this.
pub const DEFAULT_SHIELDED_ABOVE_DB: f64 = 30.0;

/// A face at least this much below the floor's median face is named as the weakest entry
/// path: an rfsite choice (10 dB is ten times the power per metre of face).
pub const WEAK_PATH_BELOW_MEDIAN_DB: f64 = 10.0;

/// Faces within this of the weakest are named with it (the same material, usually).
const SAME_AS_WEAKEST_DB: f64 = 0.05;

/// One face of the envelope.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Face {
    /// Wall or opening id, or `roof`.
    pub id: String,
    /// Floor id.
    pub floor: String,
    /// `wall`, `window`, `door` or `roof`.
    pub kind: String,
    /// Material id.
    pub material: String,
    /// Material class label.
    pub class: String,
    /// Thickness, m.
    pub thickness_m: f64,
    /// Wall parts it is made of (0 for the roof).
    pub parts: usize,
    /// Length along the outline, m (`None` for the roof).
    pub length_m: Option<f64>,
    /// Roof area, m² (`None` for a wall, window or door).
    pub area_m2: Option<f64>,
    /// Crossing loss at normal incidence at the service frequency, dB.
    pub screening_db: f64,
    /// Plan segments, m: `[[ax, ay], [bx, by]]` each (empty for the roof).
    pub segments_m: Vec<[[f64; 2]; 2]>,
}

/// The faces of one floor for one service, weakest first.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct FloorScreening {
    /// Floor id.
    pub floor: String,
    /// Floor name.
    pub floor_name: String,
    /// Faces sorted by screening, the lowest first (then by id).
    pub faces: Vec<Face>,
    /// The median face: length-weighted median screening of the walls, windows and doors
    /// (roof left out), dB; `None` without them.
    pub median_db: Option<f64>,
}

/// The envelope of the building for one service.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ServiceScreening {
    /// Service id.
    pub service: String,
    /// Service name.
    pub name: String,
    /// Frequency, MHz.
    pub freq_mhz: f64,
    /// Life-safety service.
    pub life_safety: bool,
    /// Per floor, in ascending elevation.
    pub floors: Vec<FloorScreening>,
    /// Every floor has exterior walls and every face, roof included, screens more than
    /// the `shielded_above_db` threshold.
    pub shielded: bool,
}

/// The option `shielded_above_db`, checked: a positive number of dB.
pub fn shielded_above(ctx: &Context<'_>) -> Result<f64, PluginError> {
    let t = ctx.option_f64("shielded_above_db", DEFAULT_SHIELDED_ABOVE_DB)?;
    if t > 0.0 {
        Ok(t)
    } else {
        Err(PluginError::BadOption {
            key: "shielded_above_db".into(),
            message: format!("must be a positive number of dB (default {DEFAULT_SHIELDED_ABOVE_DB}: every face of the envelope screening more than that makes a shielded enclosure)"),
        })
    }
}

/// The roof over the top floor as (material id, thickness m): until the site model has a
/// roof key, the top floor's `slab_material` / `slab_thickness_m` stand in for it. This is
/// the one place to switch to a site key later. `None` for a site without floors.
pub fn roof(site: &Site) -> Option<(&str, f64)> {
    site.floors
        .last()
        .map(|f| (f.slab_material.as_str(), f.slab_thickness_m))
}

/// The crossing loss of `material` at normal incidence, dB, as the facade estimate takes
/// it; a range note goes to `notes`. `None` when the material is not in the library.
pub fn normal_loss(
    site: &Site,
    material: &str,
    thickness_m: f64,
    freq_mhz: f64,
    pol: Polarization,
    notes: &mut BTreeSet<String>,
) -> Option<f64> {
    let m = site.materials.get(material)?;
    let l = m.crossing_loss(freq_mhz, thickness_m, 1.0, pol);
    if let Some(note) = l.note {
        notes.insert(format!(
            "material `{}` at {freq_mhz} MHz: {}",
            m.id,
            note.message()
        ));
    }
    Some(l.loss_db)
}

fn kind_label(k: PartKind) -> &'static str {
    match k {
        PartKind::Wall => "wall",
        PartKind::Window => "window",
        PartKind::Door => "door",
    }
}

fn class_of(site: &Site, material: &str) -> String {
    site.materials
        .get(material)
        .map(|m| m.class.label().to_string())
        .unwrap_or_default()
}

fn segment_of(p: &WallPart) -> [[f64; 2]; 2] {
    [
        [p.segment.a.x, p.segment.a.y],
        [p.segment.b.x, p.segment.b.y],
    ]
}

/// A new face for a part, without its screening or length yet.
fn empty_face(site: &Site, floor: &Floor, p: &WallPart) -> Face {
    Face {
        id: p.id.clone(),
        floor: floor.id.clone(),
        kind: kind_label(p.kind).into(),
        material: p.material.clone(),
        class: class_of(site, &p.material),
        thickness_m: p.thickness_m,
        parts: 0,
        length_m: Some(0.0),
        area_m2: None,
        screening_db: f64::NAN,
        segments_m: Vec::new(),
    }
}

/// The wall, window and door faces of a floor at `freq_mhz`, in no particular order.
fn wall_faces(
    site: &Site,
    floor: &Floor,
    freq_mhz: f64,
    notes: &mut BTreeSet<String>,
) -> Vec<Face> {
    let mut by: BTreeMap<(String, &'static str, String, u64), Face> = BTreeMap::new();
    for p in exterior_parts(floor) {
        let len = p.segment.length();
        if len.is_nan() || len <= 0.0 {
            continue;
        }
        let Some(db) = normal_loss(
            site,
            &p.material,
            p.thickness_m,
            freq_mhz,
            Polarization::Te,
            notes,
        ) else {
            continue;
        };
        let key = (
            p.id.clone(),
            kind_label(p.kind),
            p.material.clone(),
            p.thickness_m.to_bits(),
        );
        let f = by.entry(key).or_insert_with(|| empty_face(site, floor, p));
        f.parts += 1;
        f.length_m = Some(f.length_m.unwrap_or(0.0) + len);
        f.screening_db = db;
        f.segments_m.push(segment_of(p));
    }
    by.into_values().collect()
}

/// The roof face over `floor` (the top floor) at `freq_mhz`. A roof is crossed like a
/// floor slab (TM; at normal incidence TE and TM are equal).
fn roof_face(
    site: &Site,
    floor: &Floor,
    freq_mhz: f64,
    notes: &mut BTreeSet<String>,
) -> Option<Face> {
    let (material, thickness_m) = roof(site)?;
    let db = normal_loss(
        site,
        material,
        thickness_m,
        freq_mhz,
        Polarization::Tm,
        notes,
    )?;
    Some(Face {
        id: "roof".into(),
        floor: floor.id.clone(),
        kind: "roof".into(),
        material: material.into(),
        class: class_of(site, material),
        thickness_m,
        parts: 0,
        length_m: None,
        area_m2: Some(floor.area_m2()),
        screening_db: db,
        segments_m: Vec::new(),
    })
}

/// The length-weighted median of `(value, weight)` pairs sorted by value: the value at
/// which the cumulative weight passes half the total (the mean of the two values either
/// side when it lands on half exactly). `None` without positive weight.
pub fn weighted_median(sorted: &[(f64, f64)]) -> Option<f64> {
    let total: f64 = sorted.iter().map(|p| p.1).sum();
    if total.is_nan() || total <= 0.0 {
        return None;
    }
    let half = 0.5 * total;
    let mut cum = 0.0;
    for (i, (v, w)) in sorted.iter().enumerate() {
        cum += w;
        if (cum - half).abs() <= 1e-9 * total {
            let next = sorted.get(i + 1).map_or(*v, |p| p.0);
            return Some(0.5 * (v + next));
        }
        if cum > half {
            return Some(*v);
        }
    }
    sorted.last().map(|p| p.0)
}

/// The floor's median face: the length-weighted median screening of its walls, windows
/// and doors (half the exterior length screens at least this). The roof is left out: it
/// is an area, not a length, and a low outdoor signal meets the facade first.
fn median_face(faces: &[Face]) -> Option<f64> {
    let pairs: Vec<(f64, f64)> = faces
        .iter()
        .filter_map(|f| f.length_m.map(|l| (f.screening_db, l)))
        .collect();
    weighted_median(&pairs)
}

/// Faces weakest first, then by id and kind.
fn sort_faces(faces: &mut [Face]) {
    faces.sort_by(|a, b| {
        a.screening_db
            .total_cmp(&b.screening_db)
            .then(a.id.cmp(&b.id))
            .then(a.kind.cmp(&b.kind))
    });
}

/// One floor's faces for one service; the roof when `top`.
fn screen_floor(
    site: &Site,
    floor: &Floor,
    freq_mhz: f64,
    top: bool,
    notes: &mut BTreeSet<String>,
) -> FloorScreening {
    let mut faces = wall_faces(site, floor, freq_mhz, notes);
    if top {
        faces.extend(roof_face(site, floor, freq_mhz, notes));
    }
    sort_faces(&mut faces);
    FloorScreening {
        floor: floor.id.clone(),
        floor_name: floor.name.clone(),
        median_db: median_face(&faces),
        faces,
    }
}

/// Every floor has a wall face, the top floor its roof, and every face is above `t`.
fn is_shielded(floors: &[FloorScreening], t: f64) -> bool {
    let walls_everywhere = floors
        .iter()
        .all(|f| f.faces.iter().any(|x| x.kind != "roof"));
    let has_roof = floors
        .iter()
        .any(|f| f.faces.iter().any(|x| x.kind == "roof"));
    let all_above = floors
        .iter()
        .flat_map(|f| &f.faces)
        .all(|x| x.screening_db > t);
    !floors.is_empty() && walls_everywhere && has_roof && all_above
}

/// The envelope of the building for one service.
pub fn screen_service(
    site: &Site,
    svc: &Service,
    shielded_above_db: f64,
    notes: &mut BTreeSet<String>,
) -> ServiceScreening {
    let n = site.floors.len();
    let floors: Vec<FloorScreening> = site
        .floors
        .iter()
        .enumerate()
        .map(|(i, f)| screen_floor(site, f, svc.freq_mhz, i + 1 == n, notes))
        .collect();
    ServiceScreening {
        service: svc.id.clone(),
        name: svc.name.clone(),
        freq_mhz: svc.freq_mhz,
        life_safety: svc.life_safety,
        shielded: is_shielded(&floors, shielded_above_db),
        floors,
    }
}

/// Every service of the site, in output order (life-safety first, then by id); notes
/// for floors without exterior walls.
pub fn screen(
    site: &Site,
    shielded_above_db: f64,
    notes: &mut BTreeSet<String>,
) -> Vec<ServiceScreening> {
    let mut services: Vec<&Service> = site.services.iter().collect();
    services.sort_by(|a, b| b.life_safety.cmp(&a.life_safety).then(a.id.cmp(&b.id)));
    for f in &site.floors {
        if exterior_parts(f).is_empty() {
            notes.insert(format!("floor `{}`: no wall, window or door lies on the floor outline, so its envelope screening is not assessed and no shielded-enclosure finding can be raised", f.id));
        }
    }
    services
        .into_iter()
        .map(|s| screen_service(site, s, shielded_above_db, notes))
        .collect()
}

fn fmt1(x: f64) -> String {
    format!("{x:.1}")
}

/// "window east-w1 (clear-glazing, 2.0 m)" or "roof (concrete-floor-slab, 0.25 m thick)".
pub fn face_words(f: &Face) -> String {
    match f.length_m {
        Some(len) => format!("{} {} ({}, {:.1} m)", f.kind, f.id, f.material, len),
        None => format!("roof ({}, {:.2} m thick)", f.material, f.thickness_m),
    }
}

/// The weakest face of a floor with its gap below the median, when the gap is at least
/// [`WEAK_PATH_BELOW_MEDIAN_DB`].
fn weak_path(fl: &FloorScreening) -> Option<(&Face, f64)> {
    let weakest = fl.faces.first()?;
    let gap = fl.median_db? - weakest.screening_db;
    (gap >= WEAK_PATH_BELOW_MEDIAN_DB).then_some((weakest, gap))
}

/// One floor's weak path in words, with the faces that screen the same and the next
/// weakest face that does not.
fn weak_path_sentence(fl: &FloorScreening, weakest: &Face, gap: f64) -> String {
    let (same, rest): (Vec<&Face>, Vec<&Face>) = fl
        .faces
        .iter()
        .skip(1)
        .partition(|f| f.screening_db - weakest.screening_db <= SAME_AS_WEAKEST_DB);
    let ids: Vec<String> = same.iter().map(|f| f.id.clone()).collect();
    let also = match ids.len() {
        0 => String::new(),
        1 => format!(" (as does {})", ids.join("")),
        _ => format!(" (as do {})", ids.join(", ")),
    };
    let next = rest
        .first()
        .map(|f| format!("; next {} at {} dB", face_words(f), fmt1(f.screening_db)))
        .unwrap_or_default();
    format!(
        "{}: {} screens {} dB{also}, {} dB less than the median face ({} dB, length-weighted over {} faces){next}",
        fl.floor_name,
        face_words(weakest),
        fmt1(weakest.screening_db),
        fmt1(gap),
        fmt1(fl.median_db.unwrap_or(f64::NAN)),
        fl.faces.iter().filter(|f| f.length_m.is_some()).count()
    )
}

/// The weakest-entry-path finding of a service: the floor with the largest gap below
/// its median leads, every floor with a weak path is listed. `None` when no floor has one.
pub fn weak_path_finding(s: &ServiceScreening, plugin: &str) -> Option<Finding> {
    let weak: Vec<(&FloorScreening, &Face, f64)> = s
        .floors
        .iter()
        .filter_map(|fl| weak_path(fl).map(|(f, g)| (fl, f, g)))
        .collect();
    let (lead_floor, lead, lead_gap) = weak
        .iter()
        .copied()
        .max_by(|a, b| a.2.total_cmp(&b.2).then(b.0.floor.cmp(&a.0.floor)))?;
    let more = if weak.len() > 1 {
        format!(
            " (the largest gap of {} floors; the table lists each)",
            weak.len()
        )
    } else {
        String::new()
    };
    let lines: Vec<String> = weak
        .iter()
        .map(|(fl, f, g)| weak_path_sentence(fl, f, *g))
        .collect();
    Some(Finding {
        id: format!("envelope-weakest-{}", s.service),
        severity: Severity::Info,
        floor: Some(lead_floor.floor.clone()),
        service: Some(s.service.clone()),
        title: format!(
            "Weakest entry path for {}: {} on {} screens {} dB, {} dB less than the median face{more}",
            s.name,
            face_words(lead),
            lead_floor.floor_name,
            fmt1(lead.screening_db),
            fmt1(lead_gap)
        ),
        detail: format!(
            "Screening of each envelope face (exterior walls, their windows and doors, the roof over the top floor) at {} MHz, normal incidence. {}. An outdoor signal enters mainly through these faces, and the rooms behind them get most of it: a donor or an outdoor interferer is strongest there, and a survey or a material probe there checks the model.",
            s.freq_mhz,
            lines.join(". ")
        ),
        plugin: plugin.into(),
        shortfall_db: None,
        location_m: None,
        causes: vec![format!(
            "{} ({}) screens {} dB against a median face of {} dB",
            lead.material,
            lead.class,
            fmt1(lead.screening_db),
            fmt1(lead.screening_db + lead_gap)
        )],
        remedies: vec![],
    })
}

/// The weakest face of the whole envelope, with its floor's name.
fn weakest_overall(s: &ServiceScreening) -> Option<(&FloorScreening, &Face)> {
    s.floors
        .iter()
        .filter_map(|fl| fl.faces.first().map(|f| (fl, f)))
        .min_by(|a, b| a.1.screening_db.total_cmp(&b.1.screening_db))
}

/// The envelope's materials with their screening range, for the causes.
fn material_ranges(s: &ServiceScreening) -> Vec<String> {
    let mut by: BTreeMap<&str, (&str, f64, f64, usize)> = BTreeMap::new();
    for f in s.floors.iter().flat_map(|fl| &fl.faces) {
        let e = by.entry(f.material.as_str()).or_insert((
            f.class.as_str(),
            f64::INFINITY,
            f64::NEG_INFINITY,
            0,
        ));
        e.1 = e.1.min(f.screening_db);
        e.2 = e.2.max(f.screening_db);
        e.3 += 1;
    }
    by.into_iter()
        .map(|(m, (class, lo, hi, n))| {
            let range = rfsite_plugin::words::span(&fmt1(lo), &fmt1(hi), "dB");
            format!(
                "{m} ({class}) screens {range} on {n} face{}",
                if n == 1 { "" } else { "s" }
            )
        })
        .collect()
}

/// The shielded-enclosure finding of a service: critical for a life-safety service,
/// major otherwise. `None` unless the service's envelope is shielded.
pub fn shielded_finding(s: &ServiceScreening, threshold_db: f64, plugin: &str) -> Option<Finding> {
    if !s.shielded {
        return None;
    }
    let (fl, weakest) = weakest_overall(s)?;
    let life = if s.life_safety {
        " For a life-safety service this in-building system is required: responders' radios will not work inside on the outdoor signal."
    } else {
        ""
    };
    Some(Finding {
        id: format!("envelope-shielded-{}", s.service),
        severity: if s.life_safety { Severity::Critical } else { Severity::Major },
        floor: None,
        service: Some(s.service.clone()),
        title: format!(
            "The building behaves like a shielded enclosure for {}: every face of its envelope screens more than {} dB",
            s.name,
            fmt1(threshold_db)
        ),
        detail: format!(
            "At {} MHz, normal incidence, every exterior wall, window and door of every floor and the roof over the top floor screen more than {} dB; the weakest is {} on {} at {} dB. No outdoor signal will serve the building: a donor antenna must sit outside the envelope (on the roof) and feed an in-building system (an off-air repeater with indoor antennas, or a distributed antenna system).{life}",
            s.freq_mhz,
            fmt1(threshold_db),
            face_words(weakest),
            fl.floor_name,
            fmt1(weakest.screening_db)
        ),
        plugin: plugin.into(),
        shortfall_db: None,
        location_m: None,
        causes: material_ranges(s),
        remedies: vec![],
    })
}

/// A table cell for a face: "`id` (kind, material) dB".
fn face_cell(f: Option<&Face>) -> String {
    match f {
        Some(f) => format!(
            "{} ({}, {}) {}",
            f.id,
            f.kind,
            f.material,
            fmt1(f.screening_db)
        ),
        None => "–".into(),
    }
}

/// One table row: a service on a floor.
fn table_row(s: &ServiceScreening, fl: &FloorScreening) -> Vec<String> {
    let n = fl.faces.len();
    let strongest = if n > 3 { fl.faces.last() } else { None };
    vec![
        s.service.clone(),
        fl.floor.clone(),
        n.to_string(),
        face_cell(fl.faces.first()),
        face_cell(fl.faces.get(1)),
        face_cell(fl.faces.get(2)),
        face_cell(strongest),
        fl.median_db.map(fmt1).unwrap_or_else(|| "–".into()),
    ]
}

/// The report table: per service and floor, the weakest three faces and the strongest.
pub fn table(screens: &[ServiceScreening]) -> Table {
    Table {
        id: "envelope-screening".into(),
        title: "Envelope screening at normal incidence: per service and floor the three weakest faces and the strongest (roof over the top floor), dB".into(),
        columns: vec![
            "Service".into(),
            "Floor".into(),
            "Faces".into(),
            "Weakest (dB)".into(),
            "Second (dB)".into(),
            "Third (dB)".into(),
            "Strongest (dB)".into(),
            "Median (dB)".into(),
        ],
        rows: screens
            .iter()
            .flat_map(|s| s.floors.iter().map(move |fl| table_row(s, fl)))
            .collect(),
    }
}

/// The service the envelope maps show: the first in output order (life-safety first,
/// then by id), so the maps are of the service where a weak envelope matters most.
pub fn map_service(screens: &[ServiceScreening]) -> Option<&ServiceScreening> {
    screens.first()
}

/// One figure per floor of the map service (drawn by the report from `extra`).
pub fn figures(screens: &[ServiceScreening]) -> Vec<Figure> {
    let Some(s) = map_service(screens) else {
        return Vec::new();
    };
    s.floors
        .iter()
        .filter(|fl| !fl.faces.is_empty())
        .map(|fl| Figure {
            id: rfsite_model::names::figure_stem("envelope", &[&fl.floor, &s.service]),
            title: format!(
                "Envelope screening, {} at {} MHz on {}: each exterior wall, window and door by its crossing loss at normal incidence; line style by band as well as colour",
                s.name, s.freq_mhz, fl.floor_name
            ),
            kind: "envelope-map".into(),
            x_label: String::new(),
            y_label: String::new(),
            series: vec![],
        })
        .collect()
}

/// Adds the envelope screening to the plugin output: findings, table, figures and
/// `extra.envelope` (the faces, for the report's maps).
pub fn add_to(
    out: &mut PluginOutput,
    site: &Site,
    shielded_above_db: f64,
    plugin: &str,
    notes: &mut BTreeSet<String>,
) -> Result<(), PluginError> {
    let screens = screen(site, shielded_above_db, notes);
    for s in &screens {
        out.findings
            .extend(shielded_finding(s, shielded_above_db, plugin));
        out.findings.extend(weak_path_finding(s, plugin));
    }
    let t = table(&screens);
    if !t.rows.is_empty() {
        out.tables.push(t);
    }
    out.figures.extend(figures(&screens));
    out.extra.insert(
        "envelope_map_service".into(),
        serde_json::json!(map_service(&screens).map(|s| s.service.clone())),
    );
    out.extra.insert(
        "shielded_above_db".into(),
        serde_json::json!(shielded_above_db),
    );
    out.extra.insert(
        "envelope".into(),
        serde_json::to_value(&screens).map_err(|e| PluginError::Failed(e.to_string()))?,
    );
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::weighted_median;

    #[test]
    fn weighted_median_by_hand() {
        // Hand arithmetic: 7 m at 2.2 dB, 53 m at 5.7 dB, 92 m at 27.5 dB (152 m): half is
        // 76 m, passed inside the 27.5 dB faces.
        assert_eq!(
            weighted_median(&[(2.2, 7.0), (5.7, 53.0), (27.5, 92.0)]),
            Some(27.5)
        );
        // Equal weights: half lands between the middle two, their mean (the usual median).
        assert_eq!(
            weighted_median(&[(1.0, 1.0), (2.0, 1.0), (4.0, 1.0), (8.0, 1.0)]),
            Some(3.0)
        );
        assert_eq!(weighted_median(&[(5.0, 1.0)]), Some(5.0));
        assert_eq!(weighted_median(&[]), None);
        assert_eq!(weighted_median(&[(5.0, 0.0)]), None);
    }
}
