//! Analyses built on the physics and the engine: the resting report, sweeps, fits and run
//! metrics. Every front end (window, command line) computes through these.

pub mod decimate;
pub mod family;
pub mod fit;
pub mod metrics;
pub mod rest;
pub mod sweep;

pub use rest::{RestReport, SpeciesRow, rest_report};
