//! An option that only adds transmitters, predicted from the site's own layers: under the
//! strongest-server rule each point keeps the better of its level and the new
//! transmitters' levels, which is what predicting the whole changed site gives (every
//! transmitter's level is computed the same way, and the maximum does not depend on the
//! order; a pruned path only ever lost to a better one). The power sum is recomputed.

use rayon::prelude::*;
use rfsite_model::{Combine, Site, Transmitter};
use rfsite_plugin::{BaseRun, CoverageLayer};

use crate::{FloorPredictor, Scene};

/// The layers of `site` = the base run's site plus the transmitters the option adds, or
/// `None` when that shortcut does not apply (other changes, power sum, a missing layer).
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
    let added = base.only_added()?;
    let layers = base.layers_of(model);
    let mut out = Vec::new();
    for (si, svc) in site.services.iter().enumerate() {
        let new: Vec<&Transmitter> = added
            .iter()
            .copied()
            .filter(|t| t.service == svc.id)
            .collect();
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
                Some(combined(l, &new, &p))
            })
            .collect();
        out.extend(floors?);
    }
    Some(out)
}

/// `base` with the transmitters `new` added by the strongest-server rule.
fn combined(base: &CoverageLayer, new: &[&Transmitter], p: &FloorPredictor<'_>) -> CoverageLayer {
    let mut l = base.clone();
    if l.best_server.len() != l.level_dbm.len() {
        l.best_server = vec![u16::MAX; l.level_dbm.len()];
    }
    for t in new {
        let k = l.servers.len() as u16;
        l.servers.push(t.id.clone());
        let lv = p.levels(t, None);
        for (i, v) in lv.iter().enumerate().take(l.level_dbm.len()) {
            if l.level_dbm[i].is_nan() {
                continue;
            }
            if *v > l.level_dbm[i] {
                l.level_dbm[i] = *v;
                l.best_server[i] = k;
            }
        }
    }
    l
}
