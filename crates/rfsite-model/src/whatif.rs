//! What-if options: changes to the site that the engine predicts and grades exactly like
//! the site itself. Users declare them in `[[what_if]]`; the antenna designer makes others.

use serde::Serialize;

use crate::site::{PartKind, Site, Transmitter};

/// One change to the site. Lengths in metres.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum SiteChange {
    /// The wall parts (walls or openings) with these ids get another material, and a new
    /// thickness when given.
    SetMaterial {
        /// Wall or opening ids.
        walls: Vec<String>,
        /// Material id (in the site's library).
        material: String,
        /// New thickness, m (the part keeps its own when absent).
        thickness_m: Option<f64>,
    },
    /// The wall parts with these ids are taken out (opened up).
    RemoveWalls {
        /// Wall or opening ids.
        walls: Vec<String>,
    },
    /// A transmitter's conducted power changes.
    SetPower {
        /// Transmitter id.
        transmitter: String,
        /// New conducted power, dBm.
        power_dbm: f64,
    },
    /// A transmitter is added.
    AddTransmitter(Transmitter),
}

/// An option declared in `[[what_if]]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WhatIf {
    /// Id.
    pub id: String,
    /// Title.
    pub title: String,
    /// Why, in the user's words.
    pub note: String,
    /// Services it is meant for (empty: all).
    pub services: Vec<String>,
    /// The changes.
    pub changes: Vec<SiteChange>,
}

impl Site {
    /// A copy of the site with `changes` applied in order. Survey files and what-if options
    /// are not carried over: the copy describes the changed building only.
    pub fn with_changes(&self, changes: &[SiteChange]) -> Site {
        let mut s = self.clone();
        s.what_ifs.clear();
        s.surveys.clear();
        for c in changes {
            s.apply(c);
        }
        s.materials_used.sort();
        s.materials_used.dedup();
        s
    }

    fn apply(&mut self, c: &SiteChange) {
        match c {
            SiteChange::SetMaterial {
                walls,
                material,
                thickness_m,
            } => {
                for p in self.floors.iter_mut().flat_map(|f| f.parts.iter_mut()) {
                    if walls.contains(&p.id) {
                        p.material = material.clone();
                        p.thickness_m = thickness_m.unwrap_or(p.thickness_m);
                    }
                }
                self.materials_used.push(material.clone());
            }
            SiteChange::RemoveWalls { walls } => {
                for f in &mut self.floors {
                    f.parts.retain(|p| !walls.contains(&p.id));
                }
            }
            SiteChange::SetPower {
                transmitter,
                power_dbm,
            } => {
                for t in self
                    .transmitters
                    .iter_mut()
                    .filter(|t| &t.id == transmitter)
                {
                    t.power_dbm = *power_dbm;
                }
            }
            SiteChange::AddTransmitter(t) => self.transmitters.push(t.clone()),
        }
    }
}

/// Ids of the wall parts a change touches (for "changes exactly the walls it names").
pub fn parts_named(site: &Site, walls: &[String]) -> Vec<(String, PartKind)> {
    site.floors
        .iter()
        .flat_map(|f| f.parts.iter())
        .filter(|p| walls.contains(&p.id))
        .map(|p| (p.id.clone(), p.kind))
        .collect()
}
