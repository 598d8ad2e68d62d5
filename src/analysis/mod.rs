//! Analyses built on the physics and the engine: the resting report, scans, fits, run
//! metrics, families and block read as lost current. Every front end (window, command line)
//! computes through these.

pub mod block;
pub mod decimate;
pub mod family;
pub mod fit;
pub mod metrics;
pub mod rest;
pub mod scan;

pub use rest::{RestReport, SpeciesRow, rest_report};
