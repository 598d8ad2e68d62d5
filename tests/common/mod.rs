//! Helpers shared by the integration tests (each test file that needs them says `mod common;`).

#![allow(dead_code)]

pub mod cells;
pub mod cli;
pub mod ode;
pub mod reference;

use permeant::engine::SolverSettings;
use permeant::scenario::{Scenario, Valid, validate};
use reference::Ion;

/// `s` as a validated scenario; a test that builds an invalid one has a bug, so this panics
/// with every problem.
pub fn valid(s: &Scenario) -> Valid {
    validate(s.clone()).unwrap_or_else(|e| panic!("the test's scenario is not valid: {e}"))
}

/// A scenario's species as the outside references' ions (its inputs, read as given).
pub fn reference_ions(s: &Scenario) -> Vec<Ion> {
    s.species
        .iter()
        .map(|x| Ion {
            charge: x.charge,
            inside_mm: x.inside_mm,
            outside_mm: x.outside_mm,
            p_cm_per_s: x.permeability_cm_per_s,
        })
        .collect()
}

/// Tight tolerances, so that the solver's own error is far below what the checks resolve.
pub fn tight() -> SolverSettings {
    SolverSettings {
        rtol: 1e-10,
        atol_v_mv: 1e-9,
        atol_gate: 1e-11,
        atol_relative: 1e-12,
        ..Default::default()
    }
}
