//! A streaming run: advance in bounded chunks, read the samples so far, change the scenario
//! mid-run and continue from the present state, or cancel. The window calls this every frame;
//! the command line runs it to the end.

use super::EngineError;
use super::model::{Model, StateId, Workspace};
use super::stepper::{Method, Settings, Stats, StepFailure, Stepper};
use crate::scenario::Valid;

/// Tolerances of a run. The defaults meet model.md's accuracy (0.01 mV against a reference).
#[derive(Debug, Clone, PartialEq)]
pub struct SolverSettings {
    pub rtol: f64,
    /// Absolute tolerance on V, mV.
    pub atol_v_mv: f64,
    /// Absolute tolerance on gates (0..1).
    pub atol_gate: f64,
    /// Absolute tolerance relative to each lagged input's and concentration's own scale.
    pub atol_relative: f64,
    /// Largest step, ms.
    pub h_max_ms: f64,
    /// Which stepper; `Auto` switches to the linearly implicit one while the cell is stiff.
    pub method: Method,
}

impl Default for SolverSettings {
    fn default() -> Self {
        Self {
            rtol: 1e-6,
            atol_v_mv: 1e-5,
            atol_gate: 1e-7,
            atol_relative: 1e-7,
            h_max_ms: f64::INFINITY,
            method: Method::Auto,
        }
    }
}

/// How much one call to [`Run::advance`] may do.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Budget {
    /// Stop once simulated time reaches this (ms).
    pub until_ms: f64,
    /// Stop after this many accepted steps.
    pub max_steps: u64,
}

impl Budget {
    pub fn to_end() -> Self {
        Self {
            until_ms: f64::INFINITY,
            max_steps: u64::MAX,
        }
    }
    pub fn steps(n: u64) -> Self {
        Self {
            until_ms: f64::INFINITY,
            max_steps: n,
        }
    }
}

/// Accepted steps a chunk of [`Run::next_chunk`] may take at most, however few samples it
/// passes (a stiff stretch with a coarse grid).
const CHUNK_STEPS: u64 = 20_000;

/// Steps any run may take, however short; see [`STEP_BUDGET_PER_MS`].
pub const STEP_BUDGET_BASE: u64 = 200_000;
/// Further steps per simulated millisecond. An action potential at 6 °C takes a few hundred
/// steps, a resting stretch a handful; a run that needs far more than this is following
/// something faster than any cell (a near-zero time constant, a stiff loop) and would not end
/// in a useful time, so it stops with the quantity responsible.
pub const STEP_BUDGET_PER_MS: u64 = 20_000;
/// Further steps per command edge crossed (a pulse's start or end restarts the step size).
const STEP_BUDGET_PER_EDGE: u64 = 64;
/// The potential beyond which the model is not defined, mV (gate kinetics are kept finite to
/// ±2000 mV around a channel's shift of at most ±1000 mV; no membrane survives either).
pub const V_LIMIT_MV: f64 = 1000.0;

/// Where a run stands after [`Run::advance`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Progress {
    /// The budget ran out; call again.
    Running,
    /// The run reached its duration.
    Finished,
}

/// Samples of the state at the output times, stored by column so that one quantity can be
/// borrowed as a slice.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Trace {
    pub names: Vec<String>,
    pub t_ms: Vec<f64>,
    /// `columns[i][k]` is state component `i` at `t_ms[k]`.
    pub columns: Vec<Vec<f64>>,
    /// Samples dropped from the front by [`Trace::discard_front`] (the command line writes and
    /// drops them as it goes, so a long run needs no memory for the whole trace).
    pub discarded: usize,
}

impl Trace {
    fn new(names: Vec<String>) -> Self {
        let n = names.len();
        Self {
            names,
            t_ms: Vec::new(),
            columns: vec![Vec::new(); n],
            discarded: 0,
        }
    }
    pub fn len(&self) -> usize {
        self.t_ms.len()
    }
    pub fn is_empty(&self) -> bool {
        self.t_ms.is_empty()
    }
    pub fn v_mv(&self) -> &[f64] {
        &self.columns[0]
    }
    /// The state vector of sample `k` into `out`.
    pub fn state(&self, k: usize, out: &mut [f64]) {
        for (o, c) in out.iter_mut().zip(&self.columns) {
            *o = c[k];
        }
    }
    fn push(&mut self, t: f64, y: &[f64]) {
        self.t_ms.push(t);
        for (c, v) in self.columns.iter_mut().zip(y) {
            c.push(*v);
        }
    }
    /// Drops every stored sample but keeps counting them.
    pub fn discard_front(&mut self) {
        self.discarded += self.t_ms.len();
        self.t_ms.clear();
        for c in &mut self.columns {
            c.clear();
        }
    }
}

/// One run in progress.
pub struct Run {
    model: Model,
    /// The present segment's commands and the derivative's scratch.
    ws: Workspace,
    settings: SolverSettings,
    stepper: Stepper,
    y: Vec<f64>,
    t_ms: f64,
    /// End of the present command segment (next edge or the duration).
    seg_end: f64,
    segment_open: bool,
    /// Output grid: sample k is at `grid_origin + (k − grid_first)·sample`; see `sample_time`.
    next_sample: u64,
    last_sample_written: bool,
    trace: Trace,
    finished: bool,
    scratch: Vec<f64>,
    /// Work of steppers replaced by [`Run::update_scenario`].
    earlier_stats: Stats,
    /// Steps accepted and command edges crossed so far, for the step budget.
    steps_taken: u64,
    edges_crossed: u64,
    /// Most samples the trace holds before [`Run::advance`] returns (one long step of a quiet
    /// cell can pass millions of output times).
    trace_cap: usize,
    /// Samples of the last step not yet emitted because the trace reached its cap.
    dense_pending: bool,
}

impl Run {
    /// Starts a run of a validated scenario at t = 0.
    pub fn new(s: &Valid, settings: SolverSettings) -> Result<Run, EngineError> {
        let model = Model::new(s);
        let y = model.initial_state()?;
        let stepper = new_stepper(&model, &settings, &y);
        let trace = Trace::new(model.state_names());
        let n = y.len();
        Ok(Run {
            ws: model.workspace(),
            model,
            settings,
            stepper,
            y,
            t_ms: 0.0,
            seg_end: 0.0,
            segment_open: false,
            next_sample: 0,
            last_sample_written: false,
            trace,
            finished: false,
            scratch: vec![0.0; n],
            earlier_stats: Stats::default(),
            steps_taken: 0,
            edges_crossed: 0,
            trace_cap: usize::MAX,
            dense_pending: false,
        })
    }

    /// Makes [`Run::advance`] return once the trace holds `samples` samples, so that a caller
    /// that drains the trace after each call (the command line's CSV) holds at most that many,
    /// however long a step is. Without it the trace grows as the caller lets it (the window).
    pub fn cap_trace(&mut self, samples: usize) {
        self.trace_cap = samples.max(1);
    }

    pub fn model(&self) -> &Model {
        &self.model
    }
    pub fn trace(&self) -> &Trace {
        &self.trace
    }
    pub fn trace_mut(&mut self) -> &mut Trace {
        &mut self.trace
    }
    pub fn t_ms(&self) -> f64 {
        self.t_ms
    }
    pub fn state(&self) -> &[f64] {
        &self.y
    }
    pub fn v_mv(&self) -> f64 {
        self.y[0]
    }
    /// Work done so far, over every stepper the run has used.
    pub fn stats(&self) -> Stats {
        self.earlier_stats + self.stepper.stats()
    }
    pub fn is_finished(&self) -> bool {
        self.finished
    }
    pub fn duration_ms(&self) -> f64 {
        self.model.duration_ms
    }

    /// Output time of sample `k`: a product, never a running sum (model.md). The slack of
    /// [`Run::grid_len`] can put the last sample a hair past the duration (`--sample-ms
    /// 200.0000001` on a 200 ms run); it is taken at the duration, so no row lies after the end.
    fn sample_time(&self, k: u64) -> f64 {
        (k as f64 * self.model.sample_ms).min(self.model.duration_ms)
    }

    /// Number of grid samples `N + 1` with `N = floor(duration/sample + 1e-9)`.
    fn grid_len(&self) -> u64 {
        (self.model.duration_ms / self.model.sample_ms + 1e-9).floor() as u64 + 1
    }

    /// Whether the duration lies off the grid and is written as one more row.
    fn needs_last_row(&self) -> bool {
        let last = self.sample_time(self.grid_len() - 1);
        self.model.duration_ms - last > 1e-9 * self.model.duration_ms.max(1.0)
    }

    /// Emit grid samples with time `< t_limit` (or `≤` when `inclusive`) from the last step's
    /// dense output, or from the present state when they fall exactly on it.
    /// With a trace cap ([`Run::cap_trace`]), samples from the dense output stop at the cap
    /// and the rest of them are emitted by the next call to [`Run::advance`].
    fn emit_samples(&mut self, t_limit: f64, inclusive: bool, from_dense: bool) {
        let n = self.grid_len();
        self.dense_pending = false;
        while self.next_sample < n {
            let ts = self.sample_time(self.next_sample);
            let due = if inclusive {
                ts <= t_limit + 1e-12 * t_limit.abs().max(1.0)
            } else {
                ts < t_limit
            };
            if !due {
                break;
            }
            if from_dense && self.trace.len() >= self.trace_cap {
                self.dense_pending = true;
                break;
            }
            if from_dense && ts < self.t_ms {
                self.stepper.dense_all(ts, &mut self.scratch);
                self.trace.push(ts, &self.scratch);
            } else {
                self.trace.push(ts, &self.y);
            }
            self.next_sample += 1;
        }
    }

    /// Advances within `budget`. Samples are appended to [`Run::trace`] as they are passed.
    pub fn advance(&mut self, budget: Budget) -> Result<Progress, EngineError> {
        if self.finished {
            return Ok(Progress::Finished);
        }
        let duration = self.model.duration_ms;
        let mut steps = 0u64;
        loop {
            if self.dense_pending {
                // Samples of the last step held back by the trace cap; its dense output is
                // still the stepper's, since no step has been taken since.
                self.emit_samples(self.t_ms, false, true);
                if self.dense_pending {
                    return Ok(Progress::Running);
                }
            }
            if !self.segment_open {
                self.model.begin_segment(&mut self.ws, self.t_ms, &mut self.y);
                self.stepper.invalidate();
                // Samples exactly at a segment start take the new segment's instant inputs.
                self.emit_samples(self.t_ms, true, false);
                self.seg_end = self
                    .model
                    .next_edge_after(self.t_ms)
                    .map_or(duration, |e| e.min(duration));
                self.segment_open = true;
            }
            if self.t_ms >= duration {
                // Every grid sample left is due: N = floor(duration/sample + 1e-9) may put the
                // last one a hair past the duration, and it still belongs to the run.
                self.emit_samples(f64::INFINITY, true, false);
                // Only a run that landed on the duration writes it as a last row; one whose
                // duration was shortened below the present time by an edit simply stops.
                if self.needs_last_row() && !self.last_sample_written && self.t_ms == duration {
                    self.trace.push(duration, &self.y);
                    self.last_sample_written = true;
                }
                self.finished = true;
                return Ok(Progress::Finished);
            }
            if steps >= budget.max_steps || self.t_ms >= budget.until_ms {
                return Ok(Progress::Running);
            }
            let span = self.seg_end - self.t_ms;
            if span <= 1e-12 * self.t_ms.abs().max(1.0) {
                // Two command edges closer than a step can resolve (a pulse's end and the next
                // one's start rounded one ulp apart): cross the sliver with one Euler step.
                self.model.derivatives(&mut self.ws, &self.y, &mut self.scratch);
                if let Some(c) = self.scratch.iter().position(|d| !d.is_finite()) {
                    return Err(EngineError::NotFinite {
                        t_ms: self.t_ms,
                        quantity: self.trace.names[c].clone(),
                    });
                }
                for (y, d) in self.y.iter_mut().zip(&self.scratch) {
                    *y += span * d;
                }
                self.t_ms = self.seg_end;
                self.segment_open = false;
                continue;
            }
            let t_before = self.t_ms;
            match self.stepper.step(
                &self.model,
                &mut self.ws,
                &mut self.t_ms,
                &mut self.y,
                self.seg_end,
            ) {
                Ok(()) => {}
                Err(StepFailure::Underflow { component }) => {
                    return Err(EngineError::StepUnderflow {
                        t_ms: t_before,
                        quantity: self.trace.names[component].clone(),
                    });
                }
                Err(StepFailure::NotFinite { component }) => {
                    return Err(EngineError::NotFinite {
                        t_ms: t_before,
                        quantity: self.trace.names[component].clone(),
                    });
                }
            }
            steps += 1;
            self.steps_taken += 1;
            self.check_range()?;
            self.check_budget()?;
            self.emit_samples(self.t_ms, false, true);
            if self.t_ms >= self.seg_end {
                self.segment_open = false;
                self.edges_crossed += 1;
            }
            if self.dense_pending {
                return Ok(Progress::Running);
            }
        }
    }

    /// Stops a run whose state left the range where the model is defined.
    fn check_range(&self) -> Result<(), EngineError> {
        let v = self.y[0];
        if v.abs() > V_LIMIT_MV {
            return Err(EngineError::OutOfRange {
                t_ms: self.t_ms,
                quantity: "the membrane potential v_mv".into(),
                value: v,
                reason: "beyond ±1000 mV, where no membrane holds and the model is not defined",
            });
        }
        if self.model.track_concentrations {
            let from = self.model.conc_offset();
            for (i, &c) in self.y.iter().enumerate().skip(from) {
                if c < -1e-6 {
                    return Err(EngineError::OutOfRange {
                        t_ms: self.t_ms,
                        quantity: self.trace.names[i].clone(),
                        value: c,
                        reason: "below 0: the cell has run out of this ion, which the currents of the model do not allow for",
                    });
                }
            }
        }
        Ok(())
    }

    /// Stops a run that takes far more steps per simulated time than any cell needs, naming
    /// the state component that changes fastest (the largest diagonal entry of the Jacobian,
    /// by a finite difference).
    fn check_budget(&mut self) -> Result<(), EngineError> {
        let allowed = STEP_BUDGET_BASE
            .saturating_add((self.t_ms.max(0.0) * STEP_BUDGET_PER_MS as f64) as u64)
            .saturating_add(self.edges_crossed.saturating_mul(STEP_BUDGET_PER_EDGE));
        if self.steps_taken <= allowed {
            return Ok(());
        }
        let n = self.y.len();
        let mut f0 = vec![0.0; n];
        let mut f1 = vec![0.0; n];
        let mut y = self.y.clone();
        self.model.derivatives(&mut self.ws, &y, &mut f0);
        let (mut fastest, mut rate) = (0, 0.0);
        for i in 0..n {
            let h = 1e-7 * y[i].abs().max(1e-3);
            let keep = y[i];
            y[i] = keep + h;
            self.model.derivatives(&mut self.ws, &y, &mut f1);
            y[i] = keep;
            let r = ((f1[i] - f0[i]) / h).abs();
            if r.is_finite() && r > rate {
                (fastest, rate) = (i, r);
            }
        }
        Err(EngineError::StepBudget {
            t_ms: self.t_ms,
            steps: self.steps_taken,
            quantity: self.trace.names[fastest].clone(),
            timescale_ms: if rate > 0.0 { 1.0 / rate } else { f64::INFINITY },
        })
    }

    /// A budget that passes about `samples` output samples (or [`CHUNK_STEPS`] steps): a writer
    /// that drains the trace after each chunk keeps it, and its own buffers, that small.
    pub fn next_chunk(&self, samples: u32) -> Budget {
        Budget {
            until_ms: self.t_ms + f64::from(samples) * self.model.sample_ms,
            max_steps: CHUNK_STEPS,
        }
    }

    /// Runs to the end.
    pub fn run_to_end(&mut self) -> Result<(), EngineError> {
        self.advance(Budget::to_end()).map(|_| ())
    }

    /// Replaces the scenario mid-run: the edit takes effect now and the run continues from the
    /// present state. Every state component carries over by its identity ([`StateId`]): V,
    /// tracked concentrations of species still there, gates of a channel still labelled the
    /// same, lagged inputs of the same scale, bath or agent even when their events moved in the
    /// protocol or changed their values. New gates start at their steady state at the present
    /// V, new lagged inputs at their present command, new concentrations at the file's value.
    pub fn update_scenario(&mut self, s: &Valid) {
        let model = Model::new(s);
        let mut y = vec![0.0; model.dim()];
        y[0] = self.y[0];
        let ng = model.membrane.gate_count();
        model.membrane.steady_gates(y[0], &mut y[1..1 + ng]);
        let (old_ids, new_ids) = (self.model.state_ids(), model.state_ids());
        let old_of = |id: &StateId| old_ids.iter().position(|o| o == id);
        // A volume switched on mid-run starts from the present one; amounts and
        // concentrations convert through it.
        let old_volume = self.model.volume_rel(&self.y);
        for (i, id) in new_ids.iter().enumerate().skip(1) {
            if let Some(j) = old_of(id) {
                y[i] = self.y[j];
            } else if let StateId::Lag(_) = id {
                y[i] = model.lags()[i - model.lag_offset()].command(self.t_ms);
            } else if let StateId::Inside { species } | StateId::Amount { species } = id {
                let other = match id {
                    StateId::Inside { .. } => StateId::Amount {
                        species: species.clone(),
                    },
                    _ => StateId::Inside {
                        species: species.clone(),
                    },
                };
                y[i] = match (old_of(&other), id) {
                    (Some(j), StateId::Inside { .. }) => self.y[j] / old_volume,
                    (Some(j), _) => self.y[j],
                    (None, _) => model.membrane.ions[i - model.conc_offset()].inside_mm,
                };
            } else if let StateId::Volume = id {
                y[i] = old_volume;
            }
        }
        let new_names = model.state_names();
        if new_ids != old_ids || new_names != self.trace.names {
            // The trace's columns describe the old layout: each follows its component.
            let mut columns = vec![Vec::new(); new_ids.len()];
            for (i, id) in new_ids.iter().enumerate() {
                columns[i] = match old_of(id) {
                    Some(j) => std::mem::take(&mut self.trace.columns[j]),
                    None => vec![f64::NAN; self.trace.t_ms.len()],
                };
            }
            self.trace.columns = columns;
            self.trace.names = new_names;
        }
        let old_sample = self.model.sample_ms;
        if self.model.duration_ms != model.duration_ms {
            // The old off-grid last row, if written, stays as history; the new duration gets its own.
            self.last_sample_written = false;
        }
        self.earlier_stats = self.stats();
        self.stepper = new_stepper(&model, &self.settings, &y);
        self.scratch = vec![0.0; y.len()];
        self.ws = model.workspace();
        self.model = model;
        self.y = y;
        if old_sample != self.model.sample_ms {
            // Continue the new grid from the present time.
            self.next_sample = (self.t_ms / self.model.sample_ms).ceil() as u64;
        }
        self.segment_open = false;
        self.finished = self.t_ms >= self.model.duration_ms && self.finished;
    }
}

fn new_stepper(model: &Model, s: &SolverSettings, y: &[f64]) -> Stepper {
    let settings = Settings {
        rtol: s.rtol,
        atol: atol_for(model, s, y),
        h_max: s.h_max_ms,
    };
    Stepper::new(s.method, y.len(), settings)
}

/// Absolute tolerances per component, from each one's natural scale.
fn atol_for(model: &Model, s: &SolverSettings, y: &[f64]) -> Vec<f64> {
    let mut a = vec![s.atol_gate; y.len()];
    a[0] = s.atol_v_mv;
    let lo = model.lag_offset();
    for (i, l) in model.lags().iter().enumerate() {
        a[lo + i] = s.atol_relative * l.scale();
    }
    if model.track_concentrations {
        let co = model.conc_offset();
        for sp in 0..model.species_count() {
            a[co + sp] = s.atol_relative * model.membrane.ions[sp].inside_mm.max(1e-3);
        }
    }
    if let Some(w) = model.volume_index() {
        a[w] = s.atol_relative;
    }
    a
}
