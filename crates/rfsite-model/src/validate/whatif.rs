//! `[[what_if]]`: options as changes to the site, every reference checked against what the
//! site declares (walls and openings, materials, transmitters, services, floors).

use std::collections::BTreeSet;

use super::refs::{service_ref, transmitter, Names};
use super::{check_material, V};
use crate::diag::unknown_name_hint;
use crate::limits::{MAX_WHAT_IFS, MAX_WHAT_IF_TRANSMITTERS};
use crate::material::MaterialLibrary;
use crate::raw::*;
use crate::site::*;
use crate::whatif::{SiteChange, WhatIf};

/// What a what-if may refer to.
pub(super) struct Known<'a> {
    pub names: Names<'a>,
    pub floors: &'a [Floor],
    pub transmitters: &'a [Transmitter],
    pub library: &'a MaterialLibrary,
}

/// Every `[[what_if]]` entry, validated.
pub(super) fn what_ifs(v: &mut V<'_>, raw: &[S<RawWhatIf>], k: &Known<'_>) -> Vec<WhatIf> {
    if let Some(extra) = raw.get(MAX_WHAT_IFS) {
        v.error(
            extra.span(),
            format!(
                "the site has {} `[[what_if]]` options; at most {MAX_WHAT_IFS} are taken",
                raw.len()
            ),
            Some("each option re-runs the prediction: keep the ones worth comparing".into()),
        );
        return Vec::new();
    }
    let mut ids = BTreeSet::new();
    let mut tx_ids: BTreeSet<String> = k.transmitters.iter().map(|t| t.id.clone()).collect();
    raw.iter()
        .filter_map(|w| what_if(v, w, k, &mut ids, &mut tx_ids))
        .collect()
}

fn what_if(
    v: &mut V<'_>,
    rw: &S<RawWhatIf>,
    k: &Known<'_>,
    ids: &mut BTreeSet<String>,
    tx_ids: &mut BTreeSet<String>,
) -> Option<WhatIf> {
    let w = rw.get_ref();
    let Some(idv) = &w.id else {
        let hint = "add `id = \"glazing-L1-south\"` (a short name for the option)";
        v.error(
            rw.span(),
            "`[[what_if]]` option is missing `id`",
            Some(hint.into()),
        );
        return None;
    };
    v.unique(ids, idv, "what-if");
    let what = format!("what-if `{}`", idv.get_ref());
    let errors_before = v.diags.error_count();
    let mut changes = Vec::new();
    for sm in &w.set_material {
        changes.extend(set_material(v, sm, k, &what));
    }
    if let Some(rm) = &w.remove_walls {
        let walls = wall_list(v, rm, k, &what, "remove_walls");
        changes.push(SiteChange::RemoveWalls { walls });
    }
    for sp in &w.set_power {
        changes.extend(set_power(v, sp, k, &what));
    }
    changes.extend(added(v, w, k, tx_ids, &what));
    let services = service_list(v, w, k, &what);
    if changes.is_empty() && v.diags.error_count() == errors_before {
        let hint =
            "add `set_material`, `remove_walls`, `set_power` or `[[what_if.add_transmitters]]`";
        v.error(
            rw.span(),
            format!("{what} changes nothing"),
            Some(hint.into()),
        );
    }
    Some(WhatIf {
        id: idv.get_ref().clone(),
        title: w
            .title
            .as_ref()
            .map(|t| t.get_ref().clone())
            .unwrap_or_else(|| idv.get_ref().clone()),
        note: v.text(&w.note),
        services,
        changes,
    })
}

/// The wall or opening ids of a list, each checked against the site's wall parts.
fn wall_list(
    v: &mut V<'_>,
    list: &S<Vec<S<String>>>,
    k: &Known<'_>,
    what: &str,
    key: &str,
) -> Vec<String> {
    let known: BTreeSet<&str> = k
        .floors
        .iter()
        .flat_map(|f| f.parts.iter().map(|p| p.id.as_str()))
        .collect();
    if list.get_ref().is_empty() {
        let hint =
            "name the walls or openings by their `id`, e.g. `walls = [\"L1-south-glazing\"]`";
        v.error(
            list.span(),
            format!("{what}: `{key}` names no wall"),
            Some(hint.into()),
        );
    }
    let mut out = Vec::new();
    for id in list.get_ref() {
        if known.contains(id.get_ref().as_str()) {
            out.push(id.get_ref().clone());
            continue;
        }
        let hint = unknown_name_hint("wall or opening", id.get_ref(), known.iter().copied());
        v.error(
            id.span(),
            format!(
                "{what}: `{key}` names wall `{}`, which does not exist",
                id.get_ref()
            ),
            Some(hint),
        );
    }
    out
}

fn set_material(
    v: &mut V<'_>,
    sm: &S<RawSetMaterial>,
    k: &Known<'_>,
    what: &str,
) -> Option<SiteChange> {
    let s = sm.get_ref();
    let hint = "write `{ walls = [\"W3\"], material = \"rf-clear-glazing\" }`";
    let walls = v.req(&s.walls, sm.span(), what, "walls", hint).is_some();
    let material = v
        .req(&s.material, sm.span(), what, "material", hint)
        .is_some();
    let walls = wall_list(
        v,
        s.walls.as_ref().filter(|_| walls)?,
        k,
        what,
        "set_material.walls",
    );
    let m = s.material.as_ref().filter(|_| material)?;
    let known = check_material(v, k.library, m);
    let thickness_m = match &s.thickness {
        Some(t) => Some(v.length(t, "thickness", false)?),
        None => None,
    };
    known.then(|| SiteChange::SetMaterial {
        walls,
        material: m.get_ref().clone(),
        thickness_m,
    })
}

fn set_power(v: &mut V<'_>, sp: &S<RawSetPower>, k: &Known<'_>, what: &str) -> Option<SiteChange> {
    let s = sp.get_ref();
    let hint = "write `{ transmitter = \"T1\", power_dbm = 20.0 }`";
    let p = v
        .req(&s.power_dbm, sp.span(), what, "power_dbm", hint)
        .copied();
    let t = v.req(&s.transmitter, sp.span(), what, "transmitter", hint)?;
    if !k.transmitters.iter().any(|x| &x.id == t) {
        let names = k.transmitters.iter().map(|x| x.id.as_str());
        let hint = unknown_name_hint("transmitter", t, names);
        let span = s
            .transmitter
            .as_ref()
            .map(|x| x.span())
            .unwrap_or(sp.span());
        v.error(
            span,
            format!("{what}: `set_power` names transmitter `{t}`, which does not exist"),
            Some(hint),
        );
        return None;
    }
    if let Some(x) = p.filter(|x| !x.is_finite()) {
        v.error(
            sp.span(),
            format!("{what}: `power_dbm` must be a finite number (got {x})"),
            None,
        );
        return None;
    }
    Some(SiteChange::SetPower {
        transmitter: t.clone(),
        power_dbm: p?,
    })
}

fn added(
    v: &mut V<'_>,
    w: &RawWhatIf,
    k: &Known<'_>,
    tx_ids: &mut BTreeSet<String>,
    what: &str,
) -> Vec<SiteChange> {
    if let Some(extra) = w.add_transmitters.get(MAX_WHAT_IF_TRANSMITTERS) {
        let msg = format!(
            "{what} adds {} transmitters; at most {MAX_WHAT_IF_TRANSMITTERS} are taken",
            w.add_transmitters.len()
        );
        v.error(extra.span(), msg, Some("split the option in two".into()));
        return Vec::new();
    }
    let mut out = Vec::new();
    for rt in &w.add_transmitters {
        if let Some(idv) = &rt.get_ref().id {
            v.unique(tx_ids, idv, "transmitter");
        }
        if let Some(t) = transmitter(v, rt, k.floors, &k.names) {
            out.push(SiteChange::AddTransmitter(t));
        }
    }
    out
}

fn service_list(v: &mut V<'_>, w: &RawWhatIf, k: &Known<'_>, what: &str) -> Vec<String> {
    let Some(list) = &w.services else {
        return Vec::new();
    };
    list.get_ref()
        .iter()
        .filter_map(|s| service_ref(v, k.names.services, &Some(s.clone()), s.span(), what))
        .collect()
}
