//! Helpers shared by the integration tests (each test file that needs them says `mod common;`).

#![allow(dead_code)]

pub mod cells;
pub mod cli;
pub mod ode;
pub mod reference;
pub mod rng;

use permeant::engine::{Run, SolverSettings};
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

/// Each species' whole current at every sample of a run, µA/cm²: its GHK current and its share
/// of the pump flux (model.md), what moves its inside amount.
pub fn species_currents(r: &Run) -> Vec<Vec<f64>> {
    let (model, tr) = (r.model(), r.trace());
    let mut y = vec![0.0; model.dim()];
    let mut readout = model.readout();
    let mut currents = vec![Vec::with_capacity(tr.len()); model.species_count()];
    for k in 0..tr.len() {
        tr.state(k, &mut y);
        model.read(tr.t_ms[k], &y, &mut readout);
        let shares = model.membrane.pump_shares(readout.currents.pump_ua_per_cm2);
        for (sp, c) in currents.iter_mut().enumerate() {
            let mut i = readout.currents.species_ua_per_cm2[sp];
            if let Some((e, ie, m, im)) = shares {
                i += if sp == e { ie } else { 0.0 } + if sp == m { im } else { 0.0 };
            }
            c.push(i);
        }
    }
    currents
}
