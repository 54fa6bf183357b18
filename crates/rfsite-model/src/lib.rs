//! # rfsite-model
//!
//! The site project as rfsite understands it: the TOML schema (stage one, [`raw`], every
//! value with its span), the validated [`Site`] (stage two, all lengths in metres), the
//! material library, and the diagnostics that point at `file:line:column` with a hint.
//!
//! This crate never reads files: the caller hands it a [`SourceFile`] (path + text).
//!
//! ```
//! use rfsite_model::{load, MaterialLibrary, SourceFile};
//! let text = r#"
//! [site]
//! id = "demo"
//! name = "Demo"
//! units = "metres"
//! report_date = "2026-01-15"
//! [[floors]]
//! id = "L1"
//! elevation = 0.0
//! height = 3.0
//! outline = [[0, 0], [10, 0], [10, 8], [0, 8]]
//! [[services]]
//! id = "lte"
//! freq_mhz = 1800.0
//! threshold_dbm = -100.0
//! "#;
//! let loaded = load(&SourceFile::new("site.toml", text), &MaterialLibrary::builtin());
//! assert!(loaded.site.is_some());
//! ```
#![deny(missing_docs)]

pub mod cadmap;
pub mod diag;
pub mod keys;
pub mod limits;
pub mod locate;
pub mod material;
pub mod names;
#[allow(missing_docs)]
pub mod raw;
pub mod site;
pub mod twoway;
pub mod validate;
pub mod whatif;

pub use diag::{Diagnostic, Diagnostics, Severity, SourceFile};
pub use material::{
    CrossingLossFn, Material, MaterialClass, MaterialLibrary, MaterialModel, GRAZING_LIMIT_DEG,
};
pub use site::*;
pub use twoway::{Booster, DonorAntenna, ServingSite, Uplink};
pub use validate::{load, Loaded};
pub use whatif::{SiteChange, WhatIf};
