//! What was measured on and around the site: `[[donors]]` (outdoor signals, their serving
//! site, roof antenna and booster), `[[surveys]]` (the CSV files of measured points) and
//! `[[probes]]` (a material measured in place).

use std::collections::BTreeMap;
use std::ops::Range;

use super::{check_material, donor_angles, floor_ref, service_ref, twoway, Names, V};
use crate::material::MaterialLibrary;
use crate::raw::*;
use crate::site::*;

/// Every donor whose service and level are known.
pub(super) fn donors(v: &mut V<'_>, raw: &RawProject, names: &Names<'_>) -> Vec<Donor> {
    raw.donors
        .iter()
        .filter_map(|rd| donor(v, rd, names))
        .collect()
}

/// One `[[donors]]` entry; None when it has an error (reported).
fn donor(v: &mut V<'_>, rd: &S<RawDonor>, names: &Names<'_>) -> Option<Donor> {
    let span = rd.span();
    let d = rd.get_ref();
    let id =
        d.id.as_ref()
            .map(|i| i.get_ref().clone())
            .unwrap_or_default();
    let what = format!("donor `{id}`");
    let svc = service_ref(v, names.services, &d.service, span.clone(), &what);
    let level = v
        .req(
            &d.level_dbm,
            span.clone(),
            &what,
            "level_dbm",
            "add the level measured outside the facade, e.g. `level_dbm = -70.0`",
        )
        .copied();
    let mut dfloors = Vec::new();
    match &d.floors {
        Some(fs) => {
            for f in fs.get_ref() {
                if let Some(i) = floor_ref(v, names.floors, &Some(f.clone()), f.span(), &what) {
                    dfloors.push(names.floors[i].clone());
                }
            }
        }
        None => dfloors = names.floors.to_vec(),
    }
    let facade = d
        .facade
        .as_ref()
        .map(|f| f.get_ref().iter().map(|x| x.get_ref().clone()).collect())
        .unwrap_or_default();
    donor_angles(v, d, &what);
    let serving_site = twoway::serving_site(v, d, &what);
    let antenna = twoway::donor_antenna(v, d, names.floors, &what);
    let booster = twoway::booster(v, d, &what);
    let (Some(service), Some(level_dbm)) = (svc, level) else {
        return None;
    };
    Some(Donor {
        id,
        service,
        level_dbm,
        floors: dfloors,
        facade,
        elevation_deg: d
            .elevation_deg
            .as_ref()
            .map(|e| *e.get_ref())
            .unwrap_or(0.0),
        direction_deg: d.direction_deg.as_ref().map(|e| *e.get_ref()),
        serving_site,
        antenna,
        booster,
    })
}

/// Every survey entry that names its file.
pub(super) fn surveys(
    v: &mut V<'_>,
    raw: &RawProject,
    names: &Names<'_>,
    units: Units,
) -> Vec<Survey> {
    raw.surveys
        .iter()
        .filter_map(|rs| survey(v, rs, names, units))
        .collect()
}

/// One `[[surveys]]` entry; None without a file (reported).
fn survey(v: &mut V<'_>, rs: &S<RawSurvey>, names: &Names<'_>, units: Units) -> Option<Survey> {
    let s = rs.get_ref();
    let Some(file) = &s.file else {
        v.error(
            rs.span(),
            "`[[surveys]]` entry is missing `file`",
            Some("add `file = \"survey/L1.csv\"` (relative to the site folder)".into()),
        );
        return None;
    };
    let floor = match &s.floor {
        Some(_) => floor_ref(v, names.floors, &s.floor, rs.span(), "survey")
            .map(|i| names.floors[i].clone()),
        None => None,
    };
    let service = match &s.service {
        Some(_) => service_ref(v, names.services, &s.service, rs.span(), "survey"),
        None => None,
    };
    let mut columns = BTreeMap::new();
    if let Some(c) = &s.columns {
        for (k, val) in c.get_ref() {
            match val.as_str() {
                Some(x) => {
                    columns.insert(k.clone(), x.to_string());
                }
                None => v.error(
                    c.span(),
                    format!("survey column `{k}` must name a CSV header as a string"),
                    None,
                ),
            }
        }
    }
    let position_units = match &s.position_units {
        Some(u) => Units::parse(u.get_ref()).unwrap_or_else(|| {
            v.error(
                u.span(),
                format!("unknown units `{}`", u.get_ref()),
                Some("write `metres` or `feet`".into()),
            );
            units
        }),
        None => units,
    };
    Some(Survey {
        file: file.get_ref().clone(),
        floor,
        service,
        columns,
        position_units,
    })
}

/// Probe spans by material, to place the notes of the library's probe overrides.
type ProbeSpans = Vec<(String, Range<usize>)>;

/// Every `[[probes]]` entry that is complete, and the span of each entry by material.
pub(super) fn probes(
    v: &mut V<'_>,
    raw: &RawProject,
    lib: &MaterialLibrary,
) -> (Vec<Probe>, ProbeSpans) {
    let mut spans = Vec::new();
    let probes = raw
        .probes
        .iter()
        .filter_map(|rp| probe(v, rp, lib, &mut spans))
        .collect();
    (probes, spans)
}

/// One probe; None when it has an error (reported).
fn probe(
    v: &mut V<'_>,
    rp: &S<RawProbe>,
    lib: &MaterialLibrary,
    spans: &mut ProbeSpans,
) -> Option<Probe> {
    let p = rp.get_ref();
    let span = rp.span();
    if let Some(m) = &p.material {
        spans.push((m.get_ref().clone(), span.clone()));
    }
    let Some(m) = &p.material else {
        v.error(span, "`[[probes]]` entry is missing `material`", None);
        return None;
    };
    if !check_material(v, lib, m) {
        return None;
    }
    let f = v
        .req(
            &p.freq_mhz,
            span.clone(),
            "probe",
            "freq_mhz",
            "add the probe frequency in MHz",
        )
        .copied();
    let c = v
        .req(
            &p.clear_dbm,
            span.clone(),
            "probe",
            "clear_dbm",
            "add the level with a clear path",
        )
        .copied();
    let t = v
        .req(
            &p.through_dbm,
            span.clone(),
            "probe",
            "through_dbm",
            "add the level through the material",
        )
        .copied();
    let (Some(freq_mhz), Some(clear_dbm), Some(through_dbm)) = (f, c, t) else {
        return None;
    };
    Some(Probe {
        material: m.get_ref().clone(),
        freq_mhz,
        clear_dbm,
        through_dbm,
        distance_m: p
            .distance
            .as_ref()
            .and_then(|d| v.length(d, "distance", false)),
        angle_deg: p.angle_deg.as_ref().map(|a| *a.get_ref()),
        note: v.text(&p.note),
    })
}

/// A probed material becomes a site measured-loss table at the probe frequencies (the
/// library entry is kept for display); each note is a warning at its probe.
pub(super) fn apply_probes(
    v: &mut V<'_>,
    lib: &mut MaterialLibrary,
    probes: &[Probe],
    spans: &ProbeSpans,
    floors: &[Floor],
    services: &[Service],
) {
    if probes.is_empty() {
        return;
    }
    let mut thickness: BTreeMap<String, f64> = BTreeMap::new();
    for f in floors {
        thickness
            .entry(f.slab_material.clone())
            .or_insert(f.slab_thickness_m);
        for p in &f.parts {
            thickness.entry(p.material.clone()).or_insert(p.thickness_m);
        }
    }
    let pts: Vec<crate::material::ProbePoint> = probes
        .iter()
        .map(|p| crate::material::ProbePoint {
            material: p.material.clone(),
            freq_mhz: p.freq_mhz,
            loss_db: crate::material::probe_loss_db(p.clear_dbm, p.through_dbm),
        })
        .collect();
    let freqs: Vec<f64> = services.iter().map(|s| s.freq_mhz).collect();
    for note in lib.apply_probes(&pts, &freqs, &thickness) {
        let span = spans
            .iter()
            .find(|(m, _)| note.contains(&format!("`{m}`")))
            .map(|(_, s)| s.clone())
            .unwrap_or(0..1);
        v.warn(
            span,
            note,
            Some("add a probe at that frequency to override the library there too".into()),
        );
    }
}
