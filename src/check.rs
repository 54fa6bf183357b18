//! `rfsite check SITE`

use std::path::PathBuf;

use rfsite_engine::{EngineError, World};
use rfsite_model::MaterialLibrary;

use crate::Outcome;

/// Arguments of `check`.
#[derive(clap::Args)]
pub struct Args {
    /// A site.toml, or a folder holding one.
    pub site: PathBuf,
}

/// Loads a site or prints every problem; shared by `check` and `report`.
pub fn load(site: &std::path::Path) -> Result<(World, rfsite_engine::LoadedSite), Outcome> {
    let mut world = match World::open(site) {
        Ok(w) => w,
        Err(e) => {
            eprintln!("error: {e}");
            return Err(Outcome::BadInput);
        }
    };
    match rfsite_engine::load(&mut world, &MaterialLibrary::builtin()) {
        Ok(l) => {
            for w in &l.warnings.items {
                eprint!("{w}");
            }
            Ok((world, l))
        }
        Err(EngineError::BadInput(d)) => {
            for x in &d.items {
                eprint!("{x}");
            }
            eprintln!("{} error(s), {} warning(s): nothing was written", d.error_count(), d.warning_count());
            Err(Outcome::BadInput)
        }
        Err(e) => {
            eprintln!("error: {e}");
            Err(Outcome::Failed)
        }
    }
}

/// Runs `check`.
pub fn run(a: Args) -> Outcome {
    match load(&a.site) {
        Ok((world, l)) => {
            let s = &l.site;
            let parts: usize = s.floors.iter().map(|f| f.parts.len()).sum();
            println!(
                "{}: ok — {} floor(s), {} wall part(s), {} service(s), {} transmitter(s), {} survey point(s) ({} rejected), {} warning(s)",
                world.display_site_path(),
                s.floors.len(),
                parts,
                s.services.len(),
                s.transmitters.len(),
                l.surveys.points.len(),
                l.surveys.rejected.len(),
                l.warnings.items.len()
            );
            Outcome::Ok
        }
        Err(o) => o,
    }
}
