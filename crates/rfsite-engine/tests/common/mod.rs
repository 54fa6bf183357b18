//! Shared by the engine's integration tests: a site from TOML text, run through every
//! built-in plugin.

use std::collections::BTreeMap;

use rfsite_engine::{run, LoadedSite, Registry};
use rfsite_model::{Diagnostics, MaterialLibrary, SourceFile};
use rfsite_plugin::Assessment;

/// The site `text` as `site.toml`, loaded with the built-in materials and no survey files.
pub fn loaded(text: &str) -> LoadedSite {
    let file = SourceFile::new("site.toml", text);
    let l = rfsite_model::load(&file, &MaterialLibrary::builtin());
    let site = l
        .site
        .unwrap_or_else(|| panic!("site loads: {:?}", l.diagnostics));
    LoadedSite {
        site,
        warnings: Diagnostics::default(),
        surveys: Default::default(),
        plan_images: BTreeMap::new(),
        source: file,
        plans: BTreeMap::new(),
    }
}

/// The assessment of the site `text`.
pub fn assess(text: &str) -> Assessment {
    run(&loaded(text), &Registry::builtin(), Vec::new()).expect("runs")
}
