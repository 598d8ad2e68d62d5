//! What the two steppers share: the system trait, tolerances, work counts, failures, the
//! starting step-size heuristic, and the choice between them behind one type the run drives.

use super::dopri5::Dopri5;
use super::rosenbrock::Rosenbrock;

/// Anything with a state vector and a derivative.
pub trait System {
    fn derivatives(&mut self, t: f64, y: &[f64], dy: &mut [f64]);
}

/// Tolerances and limits of a stepper.
#[derive(Debug, Clone, PartialEq)]
pub struct Settings {
    /// Relative tolerance on every component.
    pub rtol: f64,
    /// Absolute tolerance per component (the run sets these from each component's scale).
    pub atol: Vec<f64>,
    /// Largest step, ms.
    pub h_max: f64,
}

impl Settings {
    /// Error scale of component `i` between two values of it.
    pub fn scale(&self, i: usize, a: f64, b: f64) -> f64 {
        self.atol[i] + self.rtol * a.abs().max(b.abs())
    }
}

/// Counts of the work done.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Stats {
    pub accepted: u64,
    pub rejected: u64,
    /// Derivative evaluations, including those spent on Jacobians.
    pub evaluations: u64,
    /// Jacobians formed (0 for the explicit method).
    pub jacobians: u64,
}

impl std::ops::Add for Stats {
    type Output = Stats;
    fn add(self, o: Stats) -> Stats {
        Stats {
            accepted: self.accepted + o.accepted,
            rejected: self.rejected + o.rejected,
            evaluations: self.evaluations + o.evaluations,
            jacobians: self.jacobians + o.jacobians,
        }
    }
}

/// Why a step could not be taken.
#[derive(Debug, Clone, PartialEq)]
pub enum StepFailure {
    /// The step size fell below what the time's floating point can resolve; `component` had
    /// the largest error.
    Underflow { component: usize },
    /// A derivative or new state was not finite.
    NotFinite { component: usize },
}

pub(crate) fn first_non_finite(v: &[f64]) -> Option<usize> {
    v.iter().position(|x| !x.is_finite())
}

/// The step to try from `t`: `h`, or the whole `span` to `t_end` when `h` would reach it or
/// leave only a sliver of a step before it.
pub(crate) fn land_on_end(t: f64, h: f64, t_end: f64, span: f64) -> f64 {
    if t + h >= t_end || t_end - (t + h) < 1e-10 * h {
        span
    } else {
        h
    }
}

/// The step-size underflow failure, naming the component with the largest scaled error.
pub(crate) fn underflow(err: &[f64]) -> StepFailure {
    let worst = (0..err.len())
        .max_by(|&a, &b| err[a].abs().total_cmp(&err[b].abs()))
        .unwrap_or(0);
    StepFailure::Underflow { component: worst }
}

/// Whether a step of `h` at `t` is too small to change `t` meaningfully in floating point.
pub(crate) fn too_small(h: f64, t: f64) -> bool {
    h.abs() <= 1e-14 * t.abs().max(1.0)
}

/// A starting step size (Hairer, Nørsett & Wanner 1993, II.4, "starting step size"), bounded
/// by `h_limit`. `f0` is the derivative at `(t, y)`; `y1` and `f1` are scratch; one
/// derivative evaluation is spent.
///
/// For an explicit method, `stable_h_lambda` bounds the step by its stability boundary too,
/// with |λ| estimated from the same two evaluations. Hairer's heuristic looks at the size of
/// f only, and at rest f is rounding noise: it then proposes a step far past the boundary,
/// whose amplified noise moves a resting cell before any error test can notice.
#[allow(clippy::too_many_arguments)]
pub(crate) fn initial_step(
    sys: &mut impl System,
    settings: &Settings,
    order: i32,
    stable_h_lambda: Option<f64>,
    t: f64,
    y: &[f64],
    f0: &[f64],
    y1: &mut [f64],
    f1: &mut [f64],
    h_limit: f64,
) -> f64 {
    let n = y.len() as f64;
    let (mut d0, mut d1) = (0.0, 0.0);
    for i in 0..y.len() {
        let sk = settings.scale(i, y[i], y[i]);
        d0 += (y[i] / sk).powi(2);
        d1 += (f0[i] / sk).powi(2);
    }
    let (d0, d1) = ((d0 / n).sqrt(), (d1 / n).sqrt());
    let mut h0 = if d0 < 1e-10 || d1 < 1e-10 {
        1e-6
    } else {
        0.01 * d0 / d1
    };
    h0 = h0.min(h_limit);
    for i in 0..y.len() {
        y1[i] = y[i] + h0 * f0[i];
    }
    sys.derivatives(t + h0, y1, f1);
    let mut d2 = 0.0;
    for i in 0..y.len() {
        let sk = settings.scale(i, y[i], y[i]);
        d2 += ((f1[i] - f0[i]) / sk).powi(2);
    }
    let d2 = (d2 / n).sqrt() / h0;
    let h1 = if d1.max(d2) <= 1e-15 {
        (h0 * 1e-3).max(1e-6)
    } else {
        (0.01 / d1.max(d2)).powf(1.0 / f64::from(order))
    };
    let mut h = (100.0 * h0).min(h1).min(h_limit);
    if let Some(limit) = stable_h_lambda {
        let (mut num, mut den) = (0.0, 0.0);
        for i in 0..y.len() {
            num += (f1[i] - f0[i]).powi(2);
            den += (y1[i] - y[i]).powi(2);
        }
        let lambda = (num / den).sqrt();
        if den > 0.0 && lambda.is_finite() && lambda > 0.0 {
            h = h.min(limit / lambda);
        }
    }
    if h.is_finite() && h > 0.0 {
        h
    } else {
        h_limit.min(1e-6)
    }
}

/// Which stepper a run uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Method {
    /// Dormand–Prince while the cell is not stiff, switching to Rosenbrock when the explicit
    /// steps are held by stability (HH gates at body temperature, a membrane following slow
    /// concentrations), and back to Dormand–Prince at the next command edge.
    #[default]
    Auto,
    /// Dormand–Prince 5(4), explicit, throughout.
    Explicit,
    /// Rosenbrock 4(3), linearly implicit, throughout.
    Rosenbrock,
}

/// The stepper a run drives: one method throughout, or both with automatic switching.
#[derive(Debug, Clone)]
pub struct Stepper {
    method: Method,
    explicit: Dopri5,
    implicit: Rosenbrock,
    /// The method in use is Rosenbrock.
    stiff: bool,
    /// The last accepted step was Rosenbrock's (its dense output is the one to read).
    last_implicit: bool,
}

impl Stepper {
    pub fn new(method: Method, dim: usize, settings: Settings) -> Self {
        Self {
            method,
            explicit: Dopri5::new(dim, settings.clone()),
            implicit: Rosenbrock::new(dim, settings),
            stiff: method == Method::Rosenbrock,
            last_implicit: method == Method::Rosenbrock,
        }
    }

    /// Forget the derivative at the present point: the system changed (a command edge or an
    /// edit). In `Auto` the explicit method takes over again, because after an edge the cell
    /// may well be fast and non-stiff for a while (an injected pulse, the upstroke).
    pub fn invalidate(&mut self) {
        self.explicit.invalidate();
        self.implicit.invalidate();
        if self.method == Method::Auto && self.stiff {
            self.stiff = false;
            self.explicit.reset_stiffness();
            // Carry the step size over: Rosenbrock's may be far longer than stability allows
            // the explicit method, which then shrinks it in a few rejected trials.
            self.explicit.h = self.implicit.h;
        }
    }

    /// One accepted step from `(t, y)` that does not pass `t_end`; lands exactly on `t_end`
    /// when the step reaches it.
    pub fn step(
        &mut self,
        sys: &mut impl System,
        t: &mut f64,
        y: &mut [f64],
        t_end: f64,
    ) -> Result<(), StepFailure> {
        if self.stiff {
            self.implicit.step(sys, t, y, t_end)?;
            self.last_implicit = true;
            return Ok(());
        }
        self.explicit.step(sys, t, y, t_end)?;
        self.last_implicit = false;
        if self.method == Method::Auto && self.explicit.stiffness_detected() {
            self.stiff = true;
            self.implicit.invalidate();
            self.implicit.h = self.explicit.last_step();
        }
        Ok(())
    }

    /// The dense-output state at `t` inside the last accepted step.
    pub fn dense_all(&self, t: f64, out: &mut [f64]) {
        if self.last_implicit {
            self.implicit.dense_all(t, out);
        } else {
            self.explicit.dense_all(t, out);
        }
    }

    /// Work of both methods together.
    pub fn stats(&self) -> Stats {
        self.explicit.stats + self.implicit.stats
    }
}
