//! # rfsite-design
//!
//! The pure algorithms behind the antenna designer: [`search`] chooses antennas from the
//! predicted coverage of candidate positions (greedy by area brought to the required level,
//! pruning, swaps, and an exact search for small instances), and [`distribution`] works out
//! the passive distribution network that feeds them (cable runs, splitters, connectors, the
//! head-end power per channel and composite) and its bill of quantities.
//!
//! This crate knows nothing of files, sites or plugins: it works on slices of levels and on
//! plain numbers, so every rule in it can be checked by hand.
#![deny(missing_docs)]

pub mod distribution;
pub mod search;
