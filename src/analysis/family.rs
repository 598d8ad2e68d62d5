//! Families of runs (clamp-and-volume.md, "Families"): one number of a scenario varied over
//! values, one full run per value on every core, and what is measured on them — per run the
//! peak with its time, the late mean, the tail and (in current clamp) the spike count and first
//! latency; across a voltage-clamp step family the I–V table, the reversal potential, the chord
//! conductance and a Boltzmann fit of G/G_max; and between a control and a treated family the
//! fraction of current blocked at each level.

use std::fmt;
use std::str::FromStr;

use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt, TerminationReason};
use nalgebra::storage::Owned;
use nalgebra::{DMatrix, DVector, Dyn};
use rayon::prelude::*;

use super::metrics::{SpikeSettings, spike_times_ms};
use super::scan::ScanControl;
use crate::engine::{Budget, EngineError, Progress, Run, SolverSettings};
use crate::scenario::{Address, FamilyError, Invalid, Scenario, member, validate};

/// Samples a run advances between looks at the cancel flag.
const CANCEL_CHECK_SAMPLES: u32 = 2_000;

/// Why a family could not be run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FamilyRunError {
    #[error("{path}: {source}", path = .source.path())]
    Family {
        #[from]
        source: FamilyError,
    },
    #[error("at {field} = {value} the scenario is not valid: {}", .problem.first().map(ToString::to_string).unwrap_or_default())]
    InvalidAt {
        field: String,
        value: f64,
        problem: Invalid,
    },
    #[error("the run at {field} = {value} failed: {source}")]
    Run {
        field: String,
        value: f64,
        source: EngineError,
    },
    #[error("the family was cancelled")]
    Cancelled,
}

impl FamilyRunError {
    /// Whether the request is at fault rather than the computation (or a cancel).
    pub fn is_bad_input(&self) -> bool {
        matches!(
            self,
            FamilyRunError::Family { .. } | FamilyRunError::InvalidAt { .. }
        )
    }
}

/// One run of a family, sampled on the scenario's output grid.
#[derive(Debug, Clone, PartialEq)]
pub struct Member {
    /// The value of the varied number.
    pub value: f64,
    pub t_ms: Vec<f64>,
    /// Membrane potential.
    pub v_mv: Vec<f64>,
    /// In voltage clamp the recorded current (outward positive); in current clamp the injected
    /// current (depolarizing positive). µA/cm².
    pub i_ua_per_cm2: Vec<f64>,
    /// The command potential in voltage clamp, the membrane potential in current clamp.
    pub command_mv: Vec<f64>,
}

/// Every run of a family, in the order of its values.
#[derive(Debug, Clone, PartialEq)]
pub struct FamilyRuns {
    pub field: Address,
    /// Whether the runs are in voltage clamp.
    pub clamped: bool,
    pub members: Vec<Member>,
}

/// One member's scenario, validated.
fn member_scenario(
    s: &Scenario,
    field: Address,
    value: f64,
) -> Result<crate::scenario::Valid, FamilyRunError> {
    let m = member(s, field, value).ok_or_else(|| FamilyError::Missing(field.to_string()))?;
    validate(m).map_err(|problem| FamilyRunError::InvalidAt {
        field: field.to_string(),
        value,
        problem,
    })
}

/// Runs `s` once for each of `values` of the number at `field`, in parallel on the current
/// rayon pool; `control` counts finished runs and can cancel. Every value is checked before
/// any run starts, so a bad value is told at once.
pub fn run_family(
    s: &Scenario,
    field: Address,
    values: &[f64],
    settings: &SolverSettings,
    control: &ScanControl,
) -> Result<FamilyRuns, FamilyRunError> {
    if values.is_empty() {
        return Err(FamilyError::Empty.into());
    }
    if values.len() > crate::scenario::MAX_FAMILY_RUNS {
        return Err(FamilyError::TooMany(values.len() as f64).into());
    }
    crate::scenario::Family::Values {
        field,
        values: values.to_vec(),
    }
    .check_field(s)?;
    let scenarios = values
        .iter()
        .map(|&v| member_scenario(s, field, v))
        .collect::<Result<Vec<_>, _>>()?;
    let clamped = !s.run.mode.is_current_clamp();
    let members = scenarios
        .par_iter()
        .zip(values.par_iter())
        .map(|(sc, &value)| {
            let failed = |source| FamilyRunError::Run {
                field: field.to_string(),
                value,
                source,
            };
            let mut run = Run::new(sc, settings.clone()).map_err(failed)?;
            loop {
                if control.is_cancelled() {
                    return Err(FamilyRunError::Cancelled);
                }
                let budget: Budget = run.next_chunk(CANCEL_CHECK_SAMPLES);
                if run.advance(budget).map_err(failed)? == Progress::Finished {
                    break;
                }
            }
            let m = record(&run, value);
            control.tick();
            Ok(m)
        })
        .collect::<Result<Vec<_>, _>>()?;
    Ok(FamilyRuns {
        field,
        clamped,
        members,
    })
}

/// The potential, current and command of every sample of a finished run.
fn record(run: &Run, value: f64) -> Member {
    let model = run.model();
    let trace = run.trace();
    let mut readout = model.readout();
    let mut y = vec![0.0; trace.columns.len()];
    let n = trace.len();
    let mut m = Member {
        value,
        t_ms: trace.t_ms.clone(),
        v_mv: trace.v_mv().to_vec(),
        i_ua_per_cm2: Vec::with_capacity(n),
        command_mv: Vec::with_capacity(n),
    };
    for k in 0..n {
        trace.state(k, &mut y);
        model.read(trace.t_ms[k], &y, &mut readout);
        let c = &readout.currents;
        m.i_ua_per_cm2.push(if model.clamp.is_some() {
            c.clamp_ua_per_cm2
        } else {
            c.inject_ua_per_cm2
        });
        m.command_mv.push(c.command_mv);
    }
    m
}

/// What is measured on each run, each over its own window of time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Measure {
    /// The extreme in `[from, until]` with its time: in voltage clamp the current of largest
    /// magnitude, inward or outward; in current clamp the highest potential.
    Peak { from_ms: f64, until_ms: f64 },
    /// The mean over `[from, until]` (time-weighted) of the current (voltage clamp) or the
    /// potential (current clamp).
    Late { from_ms: f64, until_ms: f64 },
    /// The current (or potential) at one time, interpolated between samples.
    Tail { at_ms: f64 },
    /// The number of spikes in `[from, until]`.
    Spikes { from_ms: f64, until_ms: f64 },
    /// The time from `from` to the first spike in `[from, until]`.
    Latency { from_ms: f64, until_ms: f64 },
}

/// Why a `--measure` item was refused.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum MeasureError {
    #[error(
        "\"{0}\" is not a measurement: write peak:FROM:UNTIL, late:FROM:UNTIL, tail:AT, spikes:FROM:UNTIL or latency:FROM:UNTIL (times in ms)"
    )]
    Syntax(String),
    #[error("\"{0}\": the window ends before it starts")]
    Backwards(String),
}

impl FromStr for Measure {
    type Err = MeasureError;
    fn from_str(text: &str) -> Result<Measure, MeasureError> {
        let bad = || MeasureError::Syntax(text.to_string());
        let mut parts = text.split(':');
        let kind = parts.next().ok_or_else(bad)?;
        let times = parts
            .map(|p| {
                p.trim()
                    .parse::<f64>()
                    .ok()
                    .filter(|x| x.is_finite() && *x >= 0.0)
            })
            .collect::<Option<Vec<f64>>>()
            .ok_or_else(bad)?;
        let window = |make: fn(f64, f64) -> Measure| match times[..] {
            [from, until] if until >= from => Ok(make(from, until)),
            [_, _] => Err(MeasureError::Backwards(text.to_string())),
            _ => Err(bad()),
        };
        match kind.trim() {
            "peak" => window(|from_ms, until_ms| Measure::Peak { from_ms, until_ms }),
            "late" => window(|from_ms, until_ms| Measure::Late { from_ms, until_ms }),
            "spikes" => window(|from_ms, until_ms| Measure::Spikes { from_ms, until_ms }),
            "latency" => window(|from_ms, until_ms| Measure::Latency { from_ms, until_ms }),
            "tail" => match times[..] {
                [at_ms] => Ok(Measure::Tail { at_ms }),
                _ => Err(bad()),
            },
            _ => Err(bad()),
        }
    }
}

impl Measure {
    /// The measurement in words with its window, for people rather than the command line
    /// (`Display` gives the `--measure` spelling).
    pub fn describe(&self) -> String {
        let n = |x: f64| crate::report::csv::number(x);
        match *self {
            Measure::Peak { from_ms, until_ms } => format!("Peak from {} to {} ms", n(from_ms), n(until_ms)),
            Measure::Late { from_ms, until_ms } => format!("Mean from {} to {} ms", n(from_ms), n(until_ms)),
            Measure::Tail { at_ms } => format!("Tail at {} ms", n(at_ms)),
            Measure::Spikes { from_ms, until_ms } => {
                format!("Spikes from {} to {} ms", n(from_ms), n(until_ms))
            }
            Measure::Latency { from_ms, until_ms } => {
                format!("First-spike latency from {} to {} ms", n(from_ms), n(until_ms))
            }
        }
    }
}

impl fmt::Display for Measure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Measure::Peak { from_ms, until_ms } => write!(f, "peak:{from_ms}:{until_ms}"),
            Measure::Late { from_ms, until_ms } => write!(f, "late:{from_ms}:{until_ms}"),
            Measure::Tail { at_ms } => write!(f, "tail:{at_ms}"),
            Measure::Spikes { from_ms, until_ms } => write!(f, "spikes:{from_ms}:{until_ms}"),
            Measure::Latency { from_ms, until_ms } => write!(f, "latency:{from_ms}:{until_ms}"),
        }
    }
}

/// One measurement of one run: its value (a current, a potential, a count or a time) and,
/// for a peak, when it happened. `value` is `None` where nothing is there to measure (a window
/// outside the run, no spike for a latency).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Measured {
    pub value: Option<f64>,
    pub at_ms: Option<f64>,
}

/// The signal a measurement reads: the current in voltage clamp, the potential otherwise.
fn signal(m: &Member, clamped: bool) -> &[f64] {
    if clamped { &m.i_ua_per_cm2 } else { &m.v_mv }
}

/// `y` at `t` by linear interpolation between samples; `None` outside the samples.
fn at_time(t_ms: &[f64], y: &[f64], t: f64) -> Option<f64> {
    let k = t_ms.partition_point(|&x| x < t);
    if k == t_ms.len() {
        return None;
    }
    if t_ms[k] == t {
        return y.get(k).copied();
    }
    if k == 0 {
        return None;
    }
    let (t0, t1) = (t_ms[k - 1], t_ms[k]);
    Some(y[k - 1] + (y[k] - y[k - 1]) * (t - t0) / (t1 - t0))
}

/// Measures `m` on one run.
pub fn measure(what: &Measure, run: &Member, clamped: bool, spikes: SpikeSettings) -> Measured {
    let (t, y) = (&run.t_ms[..], signal(run, clamped));
    let none = Measured {
        value: None,
        at_ms: None,
    };
    let window = |from: f64, until: f64| {
        let lo = t.partition_point(|&x| x < from);
        let hi = t.partition_point(|&x| x <= until);
        lo..hi.max(lo)
    };
    match *what {
        Measure::Peak { from_ms, until_ms } => {
            let w = window(from_ms, until_ms);
            let key = |v: f64| if clamped { v.abs() } else { v };
            w.clone()
                .max_by(|&a, &b| key(y[a]).total_cmp(&key(y[b])))
                .map_or(none, |k| Measured {
                    value: Some(y[k]),
                    at_ms: Some(t[k]),
                })
        }
        Measure::Late { from_ms, until_ms } => Measured {
            value: window_mean(t, y, from_ms, until_ms),
            at_ms: None,
        },
        Measure::Tail { at_ms } => Measured {
            value: at_time(t, y, at_ms),
            at_ms: Some(at_ms),
        },
        Measure::Spikes { from_ms, until_ms } | Measure::Latency { from_ms, until_ms } => {
            let times: Vec<f64> = spike_times_ms(t, &run.v_mv, spikes)
                .into_iter()
                .filter(|&s| s >= from_ms && s <= until_ms)
                .collect();
            if matches!(what, Measure::Spikes { .. }) {
                Measured {
                    value: Some(times.len() as f64),
                    at_ms: None,
                }
            } else {
                Measured {
                    value: times.first().map(|s| s - from_ms),
                    at_ms: times.first().copied(),
                }
            }
        }
    }
}

/// Time-weighted mean of `y` over `[from, until]` (trapezoids, the ends interpolated); the value
/// at `from` for a window of no width; `None` when the window leaves the samples.
fn window_mean(t: &[f64], y: &[f64], from: f64, until: f64) -> Option<f64> {
    let y0 = at_time(t, y, from)?;
    let y1 = at_time(t, y, until)?;
    if until <= from {
        return Some(y0);
    }
    let mut pts = vec![(from, y0)];
    pts.extend(
        t.iter()
            .zip(y)
            .filter(|(x, _)| **x > from && **x < until)
            .map(|(x, v)| (*x, *v)),
    );
    pts.push((until, y1));
    let area: f64 = pts
        .windows(2)
        .map(|w| 0.5 * (w[0].1 + w[1].1) * (w[1].0 - w[0].0))
        .sum();
    Some(area / (until - from))
}

/// The fitted Boltzmann `G/G_max = 1/(1 + e^(−(V − V½)/k))` with standard errors.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Boltzmann {
    pub v_half_mv: f64,
    pub slope_mv: f64,
    pub se_v_half_mv: f64,
    pub se_slope_mv: f64,
}

/// Why a Boltzmann fit gave no answer.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum BoltzmannError {
    #[error("a Boltzmann fit needs at least 3 levels with a conductance, got {0}")]
    TooFew(usize),
    #[error("the Boltzmann fit did not converge ({0})")]
    NotConverged(String),
}

/// The Boltzmann's value and its derivatives in V½ and k at `v`.
fn boltzmann(v: f64, v_half: f64, k: f64) -> (f64, f64, f64) {
    let e = (-(v - v_half) / k).exp();
    let f = 1.0 / (1.0 + e);
    // df/dV½ = −f(1−f)/k, df/dk = −f(1−f)(V − V½)/k².
    let d = f * (1.0 - f);
    (f, -d / k, -d * (v - v_half) / (k * k))
}

struct BoltzmannProblem<'a> {
    v: &'a [f64],
    g: &'a [f64],
    p: DVector<f64>,
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for BoltzmannProblem<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;
    fn set_params(&mut self, x: &DVector<f64>) {
        self.p = x.clone();
    }
    fn params(&self) -> DVector<f64> {
        self.p.clone()
    }
    fn residuals(&self) -> Option<DVector<f64>> {
        let (vh, k) = (self.p[0], self.p[1]);
        Some(DVector::from_iterator(
            self.v.len(),
            self.v
                .iter()
                .zip(self.g)
                .map(|(&v, &g)| boltzmann(v, vh, k).0 - g),
        ))
    }
    fn jacobian(&self) -> Option<DMatrix<f64>> {
        let (vh, k) = (self.p[0], self.p[1]);
        let mut j = DMatrix::zeros(self.v.len(), 2);
        for (r, &v) in self.v.iter().enumerate() {
            let (_, dvh, dk) = boltzmann(v, vh, k);
            j[(r, 0)] = dvh;
            j[(r, 1)] = dk;
        }
        Some(j)
    }
}

/// Fits `G/G_max` against `V` with a Boltzmann by Levenberg–Marquardt. Standard errors from
/// `cov = s²(JᵀJ)⁻¹`, `s² = SSR/(n − 2)` (with exactly 3 points s² has one degree of freedom).
pub fn fit_boltzmann(v_mv: &[f64], g_rel: &[f64]) -> Result<Boltzmann, BoltzmannError> {
    let pts: Vec<(f64, f64)> = v_mv
        .iter()
        .zip(g_rel)
        .filter(|(v, g)| v.is_finite() && g.is_finite())
        .map(|(v, g)| (*v, *g))
        .collect();
    if pts.len() < 3 {
        return Err(BoltzmannError::TooFew(pts.len()));
    }
    let v: Vec<f64> = pts.iter().map(|p| p.0).collect();
    let g: Vec<f64> = pts.iter().map(|p| p.1).collect();
    // Start at the level nearest half activation, with a slope from the span of the levels.
    let start_vh = pts
        .iter()
        .min_by(|a, b| (a.1 - 0.5).abs().total_cmp(&(b.1 - 0.5).abs()))
        .map_or(0.0, |p| p.0);
    let span =
        v.iter().cloned().fold(f64::NEG_INFINITY, f64::max) - v.iter().cloned().fold(f64::INFINITY, f64::min);
    let rising = {
        let lo = pts.iter().min_by(|a, b| a.0.total_cmp(&b.0)).map_or(0.0, |p| p.1);
        let hi = pts.iter().max_by(|a, b| a.0.total_cmp(&b.0)).map_or(0.0, |p| p.1);
        hi >= lo
    };
    let k0 = (span / 10.0).max(1.0) * if rising { 1.0 } else { -1.0 };
    let problem = BoltzmannProblem {
        v: &v,
        g: &g,
        p: DVector::from_vec(vec![start_vh, k0]),
    };
    let (problem, report) = LevenbergMarquardt::new()
        .with_ftol(1e-14)
        .with_xtol(1e-14)
        .minimize(problem);
    match report.termination {
        TerminationReason::ResidualsZero
        | TerminationReason::Orthogonal
        | TerminationReason::Converged { .. }
        | TerminationReason::NoImprovementPossible(_) => {}
        other => return Err(BoltzmannError::NotConverged(format!("{other:?}"))),
    }
    let (vh, k) = (problem.p[0], problem.p[1]);
    if !(vh.is_finite() && k.is_finite() && k != 0.0) {
        return Err(BoltzmannError::NotConverged("no finite parameters".into()));
    }
    let r = problem.residuals().unwrap_or_else(|| DVector::zeros(v.len()));
    let j = problem.jacobian().unwrap_or_else(|| DMatrix::zeros(v.len(), 2));
    let dof = (v.len() - 2) as f64;
    let s2 = r.norm_squared() / dof;
    let cov = (j.transpose() * &j)
        .try_inverse()
        .ok_or_else(|| BoltzmannError::NotConverged("the levels do not fix both V½ and k".into()))?
        * s2;
    Ok(Boltzmann {
        v_half_mv: vh,
        slope_mv: k,
        se_v_half_mv: cov[(0, 0)].max(0.0).sqrt(),
        se_slope_mv: cov[(1, 1)].max(0.0).sqrt(),
    })
}

/// The first zero crossing of `i` against `v` (levels sorted by potential), linearly
/// interpolated; `None` when the current keeps one sign. A level exactly at 0 is its own
/// crossing.
pub fn reversal_mv(v_mv: &[f64], i: &[Option<f64>]) -> Option<f64> {
    let mut pts: Vec<(f64, f64)> = v_mv
        .iter()
        .zip(i)
        .filter_map(|(v, i)| i.filter(|x| x.is_finite()).map(|x| (*v, x)))
        .collect();
    pts.sort_by(|a, b| a.0.total_cmp(&b.0));
    if let Some(p) = pts.iter().find(|p| p.1 == 0.0) {
        return Some(p.0);
    }
    pts.windows(2).find_map(|w| {
        let ((v0, i0), (v1, i1)) = (w[0], w[1]);
        (i0.signum() != i1.signum()).then(|| v0 - i0 * (v1 - v0) / (i1 - i0))
    })
}

/// Chord conductance `G = I/(V − E_rev)`, mS/cm² (µA/cm² per mV); `None` at the reversal
/// potential itself, where it is undefined.
pub fn chord_conductance(v_mv: f64, i: f64, e_rev_mv: f64) -> Option<f64> {
    let d = v_mv - e_rev_mv;
    (d != 0.0 && i.is_finite()).then(|| i / d)
}

/// The fraction of the control's current the treated family lost at each level:
/// `1 − I_treated/I_control`; `None` where the control has no current.
pub fn fraction_blocked(control: &[Option<f64>], treated: &[Option<f64>]) -> Vec<Option<f64>> {
    control
        .iter()
        .zip(treated)
        .map(|(c, t)| match (c, t) {
            (Some(c), Some(t)) if *c != 0.0 => Some(1.0 - t / c),
            _ => None,
        })
        .collect()
}

/// Levels closer to the reversal potential than this are left out of the conductance fit:
/// there `I/(V − E_rev)` divides two small numbers.
const NEAR_REVERSAL_MV: f64 = 2.0;

/// The largest G/G_max a family must reach down to for a Boltzmann fit.
const FOOT_OF_CURVE: f64 = 0.2;

/// Everything measured on a family.
#[derive(Debug, Clone, PartialEq)]
pub struct FamilyTable {
    /// The varied number.
    pub field: Address,
    /// Whether the runs are in voltage clamp (the measures read the current) or current clamp.
    pub clamped: bool,
    pub measures: Vec<Measure>,
    /// The varied values, one per run.
    pub values: Vec<f64>,
    /// `cells[run][measure]`.
    pub cells: Vec<Vec<Measured>>,
    /// Zero crossing of the first measure against the level (voltage-clamp families that vary
    /// a potential only).
    pub reversal_mv: Option<f64>,
    /// Chord conductance of the first measure at each level, mS/cm².
    pub chord_ms_per_cm2: Vec<Option<f64>>,
    /// `G/G_max` at each level.
    pub g_rel: Vec<Option<f64>>,
    pub boltzmann: Option<Boltzmann>,
    /// For a family over an agent's dose that includes dose 0 (the control): the fraction of
    /// the first measure's control value lost at each dose; empty otherwise.
    pub blocked: Vec<Option<f64>>,
}

impl FamilyTable {
    /// The first measure's value at each level: the I–V curve.
    pub fn first(&self) -> Vec<Option<f64>> {
        self.cells
            .iter()
            .map(|r| r.first().and_then(|m| m.value))
            .collect()
    }
}

/// Measures every run of `runs`. When the family is a voltage-clamp family over a potential
/// (its field's unit is mV), the first measure gives the I–V curve, the reversal potential,
/// the chord conductance and the Boltzmann fit of G/G_max.
pub fn analyse(runs: &FamilyRuns, measures: &[Measure], spikes: SpikeSettings) -> FamilyTable {
    let cells: Vec<Vec<Measured>> = runs
        .members
        .iter()
        .map(|m| {
            measures
                .iter()
                .map(|x| measure(x, m, runs.clamped, spikes))
                .collect()
        })
        .collect();
    let values: Vec<f64> = runs.members.iter().map(|m| m.value).collect();
    let mut table = FamilyTable {
        field: runs.field,
        clamped: runs.clamped,
        measures: measures.to_vec(),
        values: values.clone(),
        cells,
        reversal_mv: None,
        chord_ms_per_cm2: vec![None; values.len()],
        g_rel: vec![None; values.len()],
        boltzmann: None,
        blocked: Vec::new(),
    };
    if runs.field.field().path == "protocol[].dose_um"
        && let Some(control) = values.iter().position(|&d| d == 0.0)
    {
        let first = table.first();
        table.blocked = fraction_blocked(&vec![first[control]; first.len()], &first);
    }
    let over_potential = runs.clamped && runs.field.field().unit == "mV";
    let iv_kind = measures.first().is_some_and(|m| {
        matches!(
            m,
            Measure::Peak { .. } | Measure::Late { .. } | Measure::Tail { .. }
        )
    });
    if !(over_potential && iv_kind) {
        return table;
    }
    let iv = table.first();
    table.reversal_mv = reversal_mv(&values, &iv);
    let Some(e) = table.reversal_mv else {
        return table;
    };
    table.chord_ms_per_cm2 = values
        .iter()
        .zip(&iv)
        .map(|(&v, i)| {
            i.and_then(|i| chord_conductance(v, i, e))
                .filter(|_| (v - e).abs() >= NEAR_REVERSAL_MV)
        })
        .collect();
    let g_max = table
        .chord_ms_per_cm2
        .iter()
        .flatten()
        .cloned()
        .fold(f64::NEG_INFINITY, f64::max);
    if g_max > 0.0 {
        table.g_rel = table
            .chord_ms_per_cm2
            .iter()
            .map(|g| g.map(|g| g / g_max))
            .collect();
        let (v, g): (Vec<f64>, Vec<f64>) = values
            .iter()
            .zip(&table.g_rel)
            .filter_map(|(v, g)| g.map(|g| (*v, g)))
            .unzip();
        // A sigmoid is only fixed by levels that reach from its foot to its top: a conductance
        // that never falls far below its largest value (a passive membrane) is not fitted.
        if g.iter().any(|&x| x <= FOOT_OF_CURVE) {
            table.boltzmann = fit_boltzmann(&v, &g).ok();
        }
    }
    table
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn measurement_items_parse_as_written_and_print_back() {
        for text in [
            "peak:1:10",
            "late:20:25",
            "tail:30",
            "spikes:0:500",
            "latency:5:100.5",
        ] {
            let m: Measure = text.parse().unwrap_or_else(|e| panic!("{e}"));
            assert_eq!(m.to_string(), text);
        }
        assert!(matches!(
            "peak:10:1".parse::<Measure>(),
            Err(MeasureError::Backwards(_))
        ));
        for bad in [
            "peak",
            "peak:1",
            "tail:1:2",
            "mean:1:2",
            "peak:a:2",
            "late:-1:2",
            "late:1:inf",
        ] {
            assert!(bad.parse::<Measure>().is_err(), "{bad}");
        }
    }

    fn member(t: Vec<f64>, i: Vec<f64>) -> Member {
        Member {
            value: 0.0,
            v_mv: vec![0.0; t.len()],
            command_mv: vec![0.0; t.len()],
            t_ms: t,
            i_ua_per_cm2: i,
        }
    }

    #[test]
    fn peak_late_and_tail_read_the_current_as_stated() {
        // A triangle: inward peak −4 at t = 2, then back to 0 at 4 and flat.
        let t: Vec<f64> = (0..=8).map(f64::from).collect();
        let i = vec![0.0, -2.0, -4.0, -2.0, 0.0, 0.0, 1.0, 1.0, 1.0];
        let m = member(t, i);
        let s = SpikeSettings::default();
        let peak = measure(
            &Measure::Peak {
                from_ms: 0.0,
                until_ms: 5.0,
            },
            &m,
            true,
            s,
        );
        assert_eq!((peak.value, peak.at_ms), (Some(-4.0), Some(2.0)));
        // The mean of a triangle of height −4 over its base of 4 ms is −2 (common practice).
        let late = measure(
            &Measure::Late {
                from_ms: 0.0,
                until_ms: 4.0,
            },
            &m,
            true,
            s,
        );
        assert_eq!(late.value, Some(-2.0));
        let tail = measure(&Measure::Tail { at_ms: 1.5 }, &m, true, s);
        assert_eq!(tail.value, Some(-3.0));
        let outside = measure(&Measure::Tail { at_ms: 9.0 }, &m, true, s);
        assert_eq!(outside.value, None);
    }

    #[test]
    fn reversal_is_the_interpolated_zero_crossing_or_none() {
        let v = [-40.0, -20.0, 0.0];
        assert_eq!(reversal_mv(&v, &[Some(-2.0), Some(2.0), Some(6.0)]), Some(-30.0));
        assert_eq!(reversal_mv(&v, &[Some(1.0), Some(2.0), Some(6.0)]), None);
        assert_eq!(chord_conductance(0.0, 6.0, -30.0), Some(0.2));
        assert_eq!(chord_conductance(-30.0, 0.0, -30.0), None);
        assert_eq!(
            fraction_blocked(&[Some(4.0), Some(0.0)], &[Some(1.0), Some(0.0)]),
            vec![Some(0.75), None]
        );
    }
}
