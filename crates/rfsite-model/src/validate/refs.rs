//! References by name (floor, service) and the `[[transmitters]]` entry, shared by the
//! site's own transmitters and those a `[[what_if]]` adds.

use std::ops::Range;

use rfsite_geometry::Point2;

use super::V;
use crate::diag::unknown_name_hint;
use crate::raw::*;
use crate::site::*;

/// The names other tables may refer to.
pub(super) struct Names<'a> {
    /// Floor ids, in file order.
    pub floors: &'a [String],
    /// Service ids.
    pub services: &'a [String],
}

/// The index of the floor `fid` names, or an error naming the floors there are.
pub(super) fn floor_ref(
    v: &mut V<'_>,
    names: &[String],
    fid: &Option<S<String>>,
    span: Range<usize>,
    what: &str,
) -> Option<usize> {
    let Some(f) = fid else {
        let first = names.first().map(String::as_str).unwrap_or("L1");
        v.error(
            span,
            format!("{what} is missing `floor`"),
            Some(format!("add `floor = \"{first}\"`")),
        );
        return None;
    };
    let found = names.iter().position(|x| x == f.get_ref());
    if found.is_none() {
        let hint = unknown_name_hint("floor", f.get_ref(), names.iter().map(String::as_str));
        v.error(
            f.span(),
            format!("{what} is on floor `{}`, which does not exist", f.get_ref()),
            Some(hint),
        );
    }
    found
}

/// The service `sid` names, or an error naming the services there are.
pub(super) fn service_ref(
    v: &mut V<'_>,
    names: &[String],
    sid: &Option<S<String>>,
    span: Range<usize>,
    what: &str,
) -> Option<String> {
    let Some(s) = sid else {
        v.error(span, format!("{what} is missing `service`"), None);
        return None;
    };
    if names.contains(s.get_ref()) {
        return Some(s.get_ref().clone());
    }
    let hint = unknown_name_hint("service", s.get_ref(), names.iter().map(String::as_str));
    v.error(
        s.span(),
        format!(
            "{what} names service `{}`, which does not exist",
            s.get_ref()
        ),
        Some(hint),
    );
    None
}

/// A loss in dB: positive, 0 when absent.
fn loss(v: &mut V<'_>, x: &Option<S<f64>>, name: &str) -> f64 {
    match x {
        Some(l) if *l.get_ref() < 0.0 => {
            v.error(
                l.span(),
                format!("`{name}` is a loss and cannot be negative"),
                Some("write the loss as a positive number of dB".into()),
            );
            0.0
        }
        Some(l) => *l.get_ref(),
        None => 0.0,
    }
}

fn pattern(v: &mut V<'_>, t: &RawTransmitter) -> Pattern {
    let angle = |a: &Option<S<f64>>| a.as_ref().map(|a| *a.get_ref()).unwrap_or(0.0);
    match t.pattern.as_ref().map(|p| (p.get_ref().as_str(), p.span())) {
        None | Some(("omni-ceiling", _)) => Pattern::OmniCeiling,
        Some(("isotropic", _)) => Pattern::Isotropic,
        Some(("sector", _)) => Pattern::Sector {
            azimuth_deg: angle(&t.azimuth_deg),
            downtilt_deg: angle(&t.downtilt_deg),
        },
        Some((other, sp)) => {
            v.error(
                sp,
                format!("unknown antenna pattern `{other}`"),
                Some("write `omni-ceiling`, `sector` or `isotropic`".into()),
            );
            Pattern::Isotropic
        }
    }
}

fn position(v: &mut V<'_>, t: &RawTransmitter, span: Range<usize>, what: &str) -> Option<Point2> {
    match &t.position {
        Some(p) => v.point(p),
        None => {
            v.error(
                span,
                format!("{what} is missing `position`"),
                Some("add `position = [x, y]` in site units".into()),
            );
            None
        }
    }
}

fn outside_warning(v: &mut V<'_>, t: &RawTransmitter, floor: &Floor, p: Point2, what: &str) {
    if floor.outline.is_empty() || rfsite_geometry::point_in_polygon(p, &floor.outline) {
        return;
    }
    if let Some(ps) = &t.position {
        v.warn(
            ps.span(),
            format!("{what} lies outside the outline of floor `{}`", floor.id),
            Some("check the coordinates and the floor".into()),
        );
    }
}

/// One `[[transmitters]]` entry (or a what-if's added one), every problem reported.
pub(super) fn transmitter(
    v: &mut V<'_>,
    rt: &S<RawTransmitter>,
    floors: &[Floor],
    names: &Names<'_>,
) -> Option<Transmitter> {
    let span = rt.span();
    let t = rt.get_ref();
    let Some(idv) = &t.id else {
        v.error(span, "`[[transmitters]]` entry is missing `id`", None);
        return None;
    };
    let what = format!("transmitter `{}`", idv.get_ref());
    let svc = service_ref(v, names.services, &t.service, span.clone(), &what);
    let fi = floor_ref(v, names.floors, &t.floor, span.clone(), &what);
    let pos = position(v, t, span.clone(), &what);
    let height_m = match &t.height {
        Some(h) => v.length(h, "height", true),
        None => Some(2.7),
    };
    let hint = "add the conducted power, e.g. `power_dbm = 15.0`";
    let power = v.req(&t.power_dbm, span, &what, "power_dbm", hint).copied();
    let cable_loss_db = loss(v, &t.cable_loss_db, "cable_loss_db");
    let connector_loss_db = loss(v, &t.connector_loss_db, "connector_loss_db");
    let antenna_gain_dbi = t
        .antenna_gain_dbi
        .as_ref()
        .map(|g| *g.get_ref())
        .unwrap_or(0.0);
    let pattern = pattern(v, t);
    let floor = floors.get(fi?)?;
    outside_warning(v, t, floor, pos?, &what);
    Some(Transmitter {
        id: idv.get_ref().clone(),
        service: svc?,
        floor: floor.id.clone(),
        position: pos?,
        height_m: height_m?,
        power_dbm: power?,
        cable_loss_db,
        connector_loss_db,
        antenna_gain_dbi,
        pattern,
    })
}
