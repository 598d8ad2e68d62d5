//! Analyses built on the physics and the engine: the resting report, scans, fits and run
//! metrics. Every front end (window, command line) computes through these.

pub mod decimate;
pub mod family;
pub mod fit;
pub mod metrics;
pub mod rest;
pub mod scan;

pub use rest::{RestReport, SpeciesRow, rest_report};
