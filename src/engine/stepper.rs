//! What the two steppers share: the system trait, tolerances, work counts, failures, the
//! starting step-size heuristic, one adaptive driver over a [`Scheme`] (first evaluation,
//! starting step, landing on the end of a segment, retry after rejection, bookkeeping), and the
//! choice between the two methods behind one type the run drives.

use super::dopri5::Dopri5;
use super::rosenbrock::Rosenbrock;

/// Anything with a state vector and a derivative. The system itself is read-only; whatever it
/// changes while evaluating (segment commands, scratch) lives in its workspace.
pub trait System {
    type Workspace;
    fn derivatives(&self, ws: &mut Self::Workspace, t: f64, y: &[f64], dy: &mut [f64]);
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
pub(crate) fn initial_step<S: System>(
    sys: &S,
    ws: &mut S::Workspace,
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
    sys.derivatives(ws, t + h0, y1, f1);
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

/// The outcome of one trial step of a [`Scheme`].
pub enum Trial {
    /// The trial is accepted; the scheme holds the new state for [`Scheme::commit`] and
    /// proposes `h_new` for the next step (before the largest-step limit).
    Accept { h_new: f64 },
    /// The trial is rejected; try again with `h`.
    Reject { h: f64 },
    /// The trial state or its derivative was not finite in `component`.
    NotFinite { component: usize },
}

/// What a trial step starts from, and where it reports.
pub struct Attempt<'a> {
    pub settings: &'a Settings,
    pub stats: &'a mut Stats,
    pub t: f64,
    pub y: &'a [f64],
    /// f(t, y).
    pub f0: &'a [f64],
    pub h: f64,
    /// The previous trial of this step was rejected (no growth straight after a rejection).
    pub last_rejected: bool,
    /// The scaled error of each component, written by the trial.
    pub err: &'a mut [f64],
}

/// One step method: what differs between the explicit and the linearly implicit stepper. The
/// [`Adaptive`] driver does everything around it.
pub trait Scheme {
    /// Order of the method, for the starting step heuristic.
    const ORDER: i32;
    /// Largest h·|λ| the starting step may take, for an explicit method.
    const STABLE_H_LAMBDA: Option<f64>;

    /// Storage for a system of `dim` components, allocated once.
    fn new(dim: usize) -> Self;

    /// Work at a new point before any trial, with `f0 = f(t, y)` known (Rosenbrock's Jacobian).
    fn prepare<S: System>(
        &mut self,
        _sys: &S,
        _ws: &mut S::Workspace,
        _t: f64,
        _y: &[f64],
        _f0: &[f64],
        _stats: &mut Stats,
    ) -> Result<(), StepFailure> {
        Ok(())
    }

    /// One trial step of size `a.h` from `(a.t, a.y)`.
    fn attempt<S: System>(&mut self, sys: &S, ws: &mut S::Workspace, a: Attempt<'_>) -> Trial;

    /// Takes the accepted trial of size `h` from `y`: `y` becomes the new state and `f0` its
    /// derivative; the scheme keeps what its dense output needs.
    fn commit(&mut self, h: f64, y: &mut [f64], f0: &mut Vec<f64>);

    /// The dense-output state at `t` inside the last accepted step `[t_old, t_old + h_old]`.
    fn dense(&self, t_old: f64, h_old: f64, t: f64, out: &mut [f64]);

    /// The system changed at the present point (a command edge or an edit).
    fn invalidate(&mut self) {}
}

/// An adaptive stepper: a [`Scheme`] with the bookkeeping every method needs.
#[derive(Debug, Clone)]
pub struct Adaptive<M> {
    pub settings: Settings,
    pub stats: Stats,
    /// Proposed next step size, ms (0 until the first step chooses one).
    pub h: f64,
    /// f(t, y) at the present point, valid when `f0_valid` (first same as last).
    f0: Vec<f64>,
    f0_valid: bool,
    /// Scaled error of each component in the last trial.
    err: Vec<f64>,
    /// Scratch of the starting step heuristic.
    y1: Vec<f64>,
    f1: Vec<f64>,
    /// Start and size of the last accepted step.
    t_old: f64,
    h_old: f64,
    pub(crate) scheme: M,
}

impl<M: Scheme> Adaptive<M> {
    pub fn new(dim: usize, settings: Settings) -> Self {
        Self {
            settings,
            stats: Stats::default(),
            h: 0.0,
            f0: vec![0.0; dim],
            f0_valid: false,
            err: vec![0.0; dim],
            y1: vec![0.0; dim],
            f1: vec![0.0; dim],
            t_old: 0.0,
            h_old: 0.0,
            scheme: M::new(dim),
        }
    }

    /// Forget the derivative at the present point: the system changed (a command edge or an edit).
    pub fn invalidate(&mut self) {
        self.f0_valid = false;
        self.scheme.invalidate();
    }

    /// Size of the last accepted step.
    pub fn last_step(&self) -> f64 {
        self.h_old
    }

    /// Takes one accepted step from `(t, y)` that does not pass `t_end`; updates both.
    /// Lands exactly on `t_end` when the step reaches it.
    pub fn step<S: System>(
        &mut self,
        sys: &S,
        ws: &mut S::Workspace,
        t: &mut f64,
        y: &mut [f64],
        t_end: f64,
    ) -> Result<(), StepFailure> {
        if !self.f0_valid {
            sys.derivatives(ws, *t, y, &mut self.f0);
            self.stats.evaluations += 1;
            if let Some(c) = first_non_finite(&self.f0) {
                return Err(StepFailure::NotFinite { component: c });
            }
            self.f0_valid = true;
            self.scheme.invalidate();
        }
        self.scheme.prepare(sys, ws, *t, y, &self.f0, &mut self.stats)?;
        let span = t_end - *t;
        let h_limit = span.min(self.settings.h_max);
        if self.h <= 0.0 {
            self.h = initial_step(
                sys,
                ws,
                &self.settings,
                M::ORDER,
                M::STABLE_H_LAMBDA,
                *t,
                y,
                &self.f0,
                &mut self.y1,
                &mut self.f1,
                h_limit,
            );
            self.stats.evaluations += 1;
        }
        let mut h = self.h.min(h_limit);
        let mut last_rejected = false;
        loop {
            h = land_on_end(*t, h, t_end, span);
            if too_small(h, *t) {
                return Err(underflow(&self.err));
            }
            let attempt = Attempt {
                settings: &self.settings,
                stats: &mut self.stats,
                t: *t,
                y,
                f0: &self.f0,
                h,
                last_rejected,
                err: &mut self.err,
            };
            let trial = self.scheme.attempt(sys, ws, attempt);
            match trial {
                Trial::Accept { h_new } => {
                    self.stats.accepted += 1;
                    self.scheme.commit(h, y, &mut self.f0);
                    self.t_old = *t;
                    self.h_old = h;
                    *t = if h == span { t_end } else { *t + h };
                    self.h = h_new.min(self.settings.h_max);
                    return Ok(());
                }
                Trial::Reject { h: next } => {
                    self.stats.rejected += 1;
                    h = next;
                    last_rejected = true;
                }
                // A non-finite trial is treated as a large error: shrink and try again, and
                // only report it when the step cannot shrink further.
                Trial::NotFinite { component } => {
                    self.stats.rejected += 1;
                    h *= 0.1;
                    if too_small(h, *t) {
                        return Err(StepFailure::NotFinite { component });
                    }
                    last_rejected = true;
                }
            }
        }
    }

    /// The dense-output state at `t` inside the last accepted step into `out`.
    pub fn dense_all(&self, t: f64, out: &mut [f64]) {
        self.scheme.dense(self.t_old, self.h_old, t, out);
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
            self.explicit.scheme.reset_stiffness();
            // Carry the step size over: Rosenbrock's may be far longer than stability allows
            // the explicit method, which then shrinks it in a few rejected trials.
            self.explicit.h = self.implicit.h;
        }
    }

    /// One accepted step from `(t, y)` that does not pass `t_end`; lands exactly on `t_end`
    /// when the step reaches it.
    pub fn step<S: System>(
        &mut self,
        sys: &S,
        ws: &mut S::Workspace,
        t: &mut f64,
        y: &mut [f64],
        t_end: f64,
    ) -> Result<(), StepFailure> {
        if self.stiff {
            self.implicit.step(sys, ws, t, y, t_end)?;
            self.last_implicit = true;
            return Ok(());
        }
        self.explicit.step(sys, ws, t, y, t_end)?;
        self.last_implicit = false;
        if self.method == Method::Auto && self.explicit.scheme.stiffness_detected() {
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
