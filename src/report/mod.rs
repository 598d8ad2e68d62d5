//! Writing results: CSV tables of a run's samples and SVG figures of V(t).

pub mod csv;
pub mod svg;
