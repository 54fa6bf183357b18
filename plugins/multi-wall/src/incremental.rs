//! An option that only adds transmitters or raises the power of existing ones, predicted
//! from the site's own layers: under the strongest-server rule each point keeps the better
//! of its level and the new or raised transmitters' levels, which is what predicting the
//! whole changed site gives (every transmitter's level is computed the same way, a raised
//! transmitter's new level is at least its old one everywhere, and the maximum does not
//! depend on the order; a pruned path only ever lost to a better one). Under the power
//! sum the whole site is predicted again.

use rayon::prelude::*;
use rfsite_model::{Combine, Site, Transmitter};
use rfsite_plugin::{BaseRun, CoverageLayer};

use crate::{FloorPredictor, Scene};

/// The layers of `site` = the base run's site plus the transmitters the option adds or
/// raises, or `None` when that shortcut does not apply (other changes, a lowered power,
/// power sum, a missing layer).
pub fn with_added(
    site: &Site,
    model: &str,
    scene: &Scene,
    adjust: &(dyn Fn(usize, f64) -> f64 + Sync),
    base: &BaseRun<'_>,
) -> Option<Vec<CoverageLayer>> {
    if site.prediction.combine != Combine::Strongest {
        return None;
    }
    let added = base.only_raised_or_added()?;
    let layers = base.layers_of(model);
    let mut out = Vec::new();
    for (si, svc) in site.services.iter().enumerate() {
        let new: Vec<&(Transmitter, bool)> =
            added.iter().filter(|(t, _)| t.service == svc.id).collect();
        let floors: Option<Vec<CoverageLayer>> = (0..site.floors.len())
            .into_par_iter()
            .map(|fi| {
                let id = &site.floors[fi].id;
                let l = layers
                    .iter()
                    .find(|l| &l.floor == id && l.service == svc.id)?;
                if l.servers.is_empty() && !new.is_empty() {
                    return None;
                }
                let p = FloorPredictor::new(site, scene, si, fi, adjust);
                combined(l, &new, &p)
            })
            .collect();
        out.extend(floors?);
    }
    Some(out)
}

/// `base` with the transmitters `new` added, or raised when flagged as the site's own, by
/// the strongest-server rule (the first of equals, as in a full run); `None` when a raised
/// transmitter is not among the layer's servers.
fn combined(
    base: &CoverageLayer,
    new: &[&(Transmitter, bool)],
    p: &FloorPredictor<'_>,
) -> Option<CoverageLayer> {
    let mut l = base.clone();
    if l.best_server.len() != l.level_dbm.len() {
        l.best_server = vec![u16::MAX; l.level_dbm.len()];
    }
    for (t, existing) in new {
        let k = if *existing {
            l.servers.iter().position(|s| s == &t.id)? as u16
        } else {
            l.servers.push(t.id.clone());
            (l.servers.len() - 1) as u16
        };
        let lv = p.levels(t, None);
        let points = l.level_dbm.iter_mut().zip(l.best_server.iter_mut());
        for ((level, server), v) in points.zip(&lv) {
            if level.is_nan() {
                continue;
            }
            if *v > *level || (*v == *level && k < *server) {
                *level = *v;
                *server = k;
            }
        }
    }
    Some(l)
}
