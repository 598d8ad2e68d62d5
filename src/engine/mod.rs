//! Time courses: the cell as an ODE ([`model`]) with its compiled protocol ([`protocol`]), two
//! adaptive steppers — explicit ([`dopri5`]) and, for stiff cells, linearly implicit
//! ([`rosenbrock`]) — on one shared driver ([`stepper`]), and a streaming run that advances in
//! bounded chunks ([`run`]).

pub mod clamp;
pub mod dopri5;
pub mod model;
pub mod protocol;
pub mod rosenbrock;
pub mod run;
pub mod stepper;
pub mod volume;

pub use clamp::Clamp;
pub use model::{GateKind, Model, Readout, SampleCurrents, StateId, Workspace};
pub use protocol::{Lag, LagId, LagKind};
pub use run::{Budget, Progress, Run, SolverSettings, Trace};
pub use stepper::{Method, Stats};
pub use volume::VolumeModel;

use crate::physics::Undefined;
use crate::scenario::fields::shown;

/// Why a run could not start or continue. Every variant that happens in time carries the time.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EngineError {
    #[error("cannot start at rest: {reason}")]
    NoRestingState { reason: Undefined },
    #[error(
        "at t = {} ms the step size became too small to resolve {quantity}; the model is too stiff or changes too abruptly there",
        shown(*t_ms)
    )]
    StepUnderflow { t_ms: f64, quantity: String },
    #[error("at t = {} ms {quantity} became infinite or not a number", shown(*t_ms))]
    NotFinite { t_ms: f64, quantity: String },
    #[error("at t = {} ms {quantity} reached {}, {reason}; the run stops there", shown(*t_ms), shown(*value))]
    OutOfRange {
        t_ms: f64,
        quantity: String,
        value: f64,
        reason: &'static str,
    },
    #[error(
        "at t = {} ms the run had taken {steps} steps, more than its budget ({} plus {} per simulated ms); {quantity} changes on a time scale of about {timescale_ms:.1e} ms, too fast to follow over this run",
        shown(*t_ms),
        run::STEP_BUDGET_BASE,
        run::STEP_BUDGET_PER_MS
    )]
    StepBudget {
        t_ms: f64,
        steps: u64,
        quantity: String,
        timescale_ms: f64,
    },
}
