//! An independent solver for the engine's checks: ode_solvers' DOP853 (Hairer, Nørsett &
//! Wanner's 8th-order Dormand–Prince) over the model's own derivative, so that only the
//! stepping is compared.

use std::cell::RefCell;

use ode_solvers::{DVector, Dop853, OutputType};
use permeant::engine::{Model, Workspace};

/// The model's derivative as ode_solvers' system. The crate's trait takes `&self`, so the
/// workspace (the segment's commands and scratch) is shared through a RefCell.
struct Reference<'a>(&'a Model, &'a RefCell<Workspace>);

impl ode_solvers::System<f64, DVector<f64>> for Reference<'_> {
    fn system(&self, _t: f64, y: &DVector<f64>, dy: &mut DVector<f64>) {
        self.0
            .derivatives(&mut self.1.borrow_mut(), y.as_slice(), dy.as_mut_slice());
    }
}

/// The whole state at `times` from DOP853 at tolerance `tol`, restarted at every command edge
/// (with the model's commands set for the segment, as the engine does) and at every output
/// time, so that no interpolation enters.
pub fn reference_states(model: &Model, times: &[f64], tol: f64) -> Vec<Vec<f64>> {
    let mut y = model.initial_state().unwrap();
    let ws = RefCell::new(model.workspace());
    let mut t = 0.0;
    let mut out = Vec::with_capacity(times.len());
    for &target in times {
        loop {
            let edge = model.next_edge_after(t).unwrap_or(f64::INFINITY);
            model.begin_segment(&mut ws.borrow_mut(), t, &mut y);
            let until = target.min(edge);
            if until > t {
                let mut solver = Dop853::new(
                    Reference(model, &ws),
                    t,
                    until,
                    until - t,
                    DVector::from_vec(y.clone()),
                    tol,
                    tol,
                );
                solver.set_output(OutputType::Sparse);
                solver
                    .integrate()
                    .unwrap_or_else(|e| panic!("reference failed at {t} ms: {e}"));
                y.copy_from_slice(solver.y_out().last().unwrap().as_slice());
                t = until;
            }
            if t >= target {
                break;
            }
        }
        // A sample on an edge takes the new segment's instant inputs, as the engine's does
        // (under an ideal voltage clamp V itself steps to the new command).
        model.begin_segment(&mut ws.borrow_mut(), t, &mut y);
        out.push(y.clone());
    }
    out
}
