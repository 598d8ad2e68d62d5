//! Time courses: the cell as an ODE ([`model`]) with its compiled protocol ([`protocol`]), two
//! adaptive steppers — explicit ([`dopri5`]) and, for stiff cells, linearly implicit
//! ([`rosenbrock`]) — on one shared driver ([`stepper`]), and a streaming run that advances in
//! bounded chunks ([`run`]).

pub mod dopri5;
pub mod model;
pub mod protocol;
pub mod rosenbrock;
pub mod run;
pub mod stepper;

pub use model::{GateKind, Model, Readout, SampleCurrents, StateId, Workspace};
pub use protocol::{Lag, LagId, LagKind};
pub use run::{Budget, Progress, Run, SolverSettings, Trace};
pub use stepper::{Method, Stats};

use crate::physics::Undefined;

/// Why a run could not start or continue. Every variant that happens in time carries the time.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EngineError {
    #[error("cannot start at rest: {reason}")]
    NoRestingState { reason: Undefined },
    #[error(
        "at t = {t_ms} ms the step size became too small to resolve {quantity}; the model is too stiff or changes too abruptly there"
    )]
    StepUnderflow { t_ms: f64, quantity: String },
    #[error("at t = {t_ms} ms {quantity} became infinite or not a number")]
    NotFinite { t_ms: f64, quantity: String },
    #[error("at t = {t_ms} ms {quantity} reached {value}, {reason}; the run stops there")]
    OutOfRange {
        t_ms: f64,
        quantity: String,
        value: f64,
        reason: &'static str,
    },
    #[error(
        "at t = {t_ms} ms the run had taken {steps} steps, more than its budget ({} plus {} per simulated ms); {quantity} changes on a time scale of about {timescale_ms:.1e} ms, too fast to follow over this run",
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
