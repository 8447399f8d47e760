//! runcal: a run-expectation calibrator.
//!
//! Turns team-season (or game-by-game) scoring records into calibrated expected win percentages:
//! fits the Pythagorean exponent and its run-environment relatives, says how sure the fit is and which
//! model predicts best out of sample, and ranks teams whose record runs ahead of or behind their
//! scoring. The binary `runcal` is a thin driver over this library.

pub mod applied;
pub mod balance;
pub mod data;
pub mod digest;
pub mod eras;
pub mod error;
pub mod fit;
pub mod gate;
pub mod luck;
pub mod model;
pub mod outlook;
pub mod output;
pub mod profile;
pub mod report;
pub mod simulate;

pub use error::{Error, Result};

/// The caution every output that shows luck or projections carries.
pub const CAUTION: &str = "runcal reports descriptive statistics. It is not wagering or financial advice, \
and luck estimates are uncertain: a team far ahead of its scoring may simply have been lucky, or not.";
