//! Published radio-propagation and building-material models, as pure functions.
//!
//! `rfsite-physics` is the part of rfsite that knows the numbers: free-space loss
//! (ITU-R P.525), material permittivity and slab/layered-wall reflection and
//! transmission (ITU-R P.2040), building entry loss (ITU-R P.2109), indoor path loss
//! (ITU-R P.1238), the COST 231 multi-wall and Motley–Keenan models, standing waves in
//! front of a reflector, the two-ray ground model, the 3GPP TR 38.901 antenna element,
//! RF exposure limits (FCC 47 CFR 1.1310, ICNIRP 2020) and the shadowing statistics
//! used for location and area coverage probability; and `angle_table`, a loss tabulated
//! over the incidence angle with a checked interpolation error, for predictions.
//!
//! What it never does: it never reads or writes a file, never parses configuration,
//! never loads plugins, never prints, and never panics on input. It does not know what
//! a building, a floor plan or a project is; callers pass plain numbers with their
//! units in the parameter names (`freq_mhz`, `distance_m`, `loss_db`).
//!
//! Every empirical model states the range it was fitted over. When a caller goes
//! outside it, the model still computes (extrapolates) and hands back a
//! [`validity::RangeNote`] so the report can say so. Functions that can receive
//! nonsense (a probability of 1.2, a negative distance, NaN) return
//! `Result<_, PhysicsError>`; the few that return bare `f64` for speed say in their
//! documentation what the caller must validate.
//!
//! # Example
//!
//! ```
//! use rfsite_physics::{fspl, p2040};
//!
//! // Free-space loss at 2.4 GHz over 10 m.
//! let loss_db = fspl::fspl_db(2400.0, 10.0);
//! assert!((loss_db - 60.05).abs() < 0.01);
//!
//! // 200 mm of concrete at 2.4 GHz, normal incidence.
//! let concrete = p2040::material("concrete").unwrap();
//! let eta = concrete.complex_permittivity(2.4);
//! let wall = p2040::slab(eta, 0.2, 2.4, 0.0, p2040::Polarization::Te);
//! assert!((wall.transmission_loss_db() - 14.575).abs() < 0.01);
//! assert!(concrete.range_note(2.4).is_none());
//! assert!(concrete.range_note(0.8).is_some()); // below the fitted 1–100 GHz
//! ```
#![deny(missing_docs)]

pub mod angle_table;
pub mod antenna;
pub mod booster;
pub mod cost231;
pub mod exposure;
pub mod fspl;
pub mod noise;
pub mod p1238;
pub mod p2040;
pub mod p2109;
pub mod standing_wave;
pub mod stats;
pub mod two_ray;
pub mod validity;

mod error;

pub use error::PhysicsError;
pub use num_complex::Complex64;
