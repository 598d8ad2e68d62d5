//! The resting report: every species' reversal potential, the passive GHK potential and the
//! full steady state at t = 0 — what `permeant rest` prints and the window's readouts show.

use serde::Serialize;

use crate::engine::{EngineError, Model};
use crate::physics::{SteadyState, Undefined, ghk_potential_mv, nernst_mv};
use crate::scenario::Valid;
use crate::scenario::volume::Solute;

/// One species' line of the report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SpeciesRow {
    pub name: String,
    pub charge: i32,
    pub reversal_mv: Option<f64>,
    pub inside_mm: f64,
    pub outside_mm: f64,
    pub permeability_cm_per_s: f64,
    /// Resting permeability relative to the most permeant species (None if all are 0).
    pub relative_permeability: Option<f64>,
}

/// The whole report.
#[derive(Debug, Clone, PartialEq)]
pub struct RestReport {
    pub temperature_c: f64,
    pub species: Vec<SpeciesRow>,
    pub ghk_mv: Result<f64, Undefined>,
    pub steady: SteadyState,
    /// The impermeant inside solute of a cell with tracked volume, given or derived at t = 0.
    pub impermeant: Option<Solute>,
}

impl RestReport {
    pub fn resting_mv(&self) -> Option<f64> {
        self.steady.resting_mv.as_ref().ok().copied()
    }
}

/// Computes the resting report of a valid scenario.
pub fn rest_report(s: &Valid) -> Result<RestReport, EngineError> {
    Ok(rest_report_with(s, &Model::new(s)))
}

/// The report for a scenario whose model is already built.
pub fn rest_report_with(s: &Valid, model: &Model) -> RestReport {
    let p_max = s
        .species
        .iter()
        .map(|x| x.permeability_cm_per_s)
        .fold(0.0, f64::max);
    let species = s
        .species
        .iter()
        .map(|x| SpeciesRow {
            name: x.name.clone(),
            charge: x.charge,
            reversal_mv: nernst_mv(x.charge, x.inside_mm, x.outside_mm, s.temperature_c),
            inside_mm: x.inside_mm,
            outside_mm: x.outside_mm,
            permeability_cm_per_s: x.permeability_cm_per_s,
            relative_permeability: (p_max > 0.0).then(|| x.permeability_cm_per_s / p_max),
        })
        .collect();
    RestReport {
        temperature_c: s.temperature_c,
        species,
        ghk_mv: ghk_potential_mv(&s.ions(), s.temperature_c),
        steady: model.steady_state_at_start(),
        impermeant: model.volume.as_ref().map(|v| v.solute),
    }
}
