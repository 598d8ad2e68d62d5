//! Metrics of a potential trace (resting level, final level, extremes, fastest rise, half time,
//! spikes, and an agent's effect at steady state with its onset and washout half times) for
//! comparing kept runs against a baseline, their CSV table, and the dose–response of an agent
//! (steady-state potential and, for excitable cells, spikes over the run). A metric that has
//! no meaning for a trace is a [`Blank`] with its reason, never a number that would mislead.

use std::fmt::Write as _;

use rayon::prelude::*;

use super::scan::{ScanControl, ScanError, ScanRange, Vary, check_value, scan};
use crate::engine::{EngineError, Run, SolverSettings};
use crate::scenario::{Event, Scenario};

/// A change of potential smaller than this is no change: ten times the accuracy model.md asks
/// of every potential (0.01 mV), so a half time is never read off numerical noise.
pub const MIN_CHANGE_MV: f64 = 0.1;

/// Why a metric has no value for a trace: an empty cell in the CSV, a blank with this reason
/// in the window.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Blank {
    /// One sample has no slope.
    OneSample,
    /// The potential never rose [`MIN_CHANGE_MV`] above its level before the first event.
    NoRise,
    /// The potential never fell [`MIN_CHANGE_MV`] below its level before the first event.
    NoFall,
    /// The final level differs from the level before the first event by less than
    /// [`MIN_CHANGE_MV`].
    NoChange,
    /// The potential went further than its final change and came back, so half of the final
    /// change is passed on the way out, not as the cell settles.
    Transient,
    /// The potential never got halfway.
    NeverHalfway,
    NoSpike,
    /// No agent acts in this run (none in the protocol, or a dose or effect of zero).
    NoAgent,
    /// The trace ends before the agent is applied.
    AgentAfterEnd,
    /// The agent's effect is smaller than [`MIN_CHANGE_MV`].
    NoEffect,
    /// The agent stays until the end of the run.
    NoWashout,
    /// The trace ends before the agent is washed out.
    WashoutAfterEnd,
    /// The potential did not come halfway back by the end of the trace.
    NotRecovered,
    /// A time of an extreme is not compared between traces: the extremes may be different
    /// events.
    NotCompared,
    /// The baseline has no value here (its own reason is in its column).
    BaselineBlank,
}

impl Blank {
    /// The reason in plain words, for the window.
    pub fn reason(self) -> String {
        let min = MIN_CHANGE_MV;
        match self {
            Blank::OneSample => "one sample has no slope".into(),
            Blank::NoRise => {
                format!("the potential never rose {min} mV above its level before the first event")
            }
            Blank::NoFall => {
                format!("the potential never fell {min} mV below its level before the first event")
            }
            Blank::NoChange => {
                format!("the final potential is within {min} mV of its level before the first event")
            }
            Blank::Transient => "the potential went further than its final change and came back: \
                                 see the agent's rows for its onset and washout"
                .into(),
            Blank::NeverHalfway => "the potential never got halfway".into(),
            Blank::NoSpike => "no spike".into(),
            Blank::NoAgent => "no agent acts in this run".into(),
            Blank::AgentAfterEnd => "the trace ends before the agent is applied".into(),
            Blank::NoEffect => format!("the agent changes the potential by less than {min} mV"),
            Blank::NoWashout => "the agent stays until the end of the run".into(),
            Blank::WashoutAfterEnd => "the trace ends before the agent is washed out".into(),
            Blank::NotRecovered => "the potential did not come halfway back by the end of the trace".into(),
            Blank::NotCompared => "times of extremes are not compared: they may be different events".into(),
            Blank::BaselineBlank => "the baseline has no value here".into(),
        }
    }
}

/// A metric's value, or why it has none.
pub type Cell = Result<f64, Blank>;

/// When an agent acts in a run: applied at `from_ms`, washed out at `until_ms` (never, when
/// `None`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AgentSpan {
    pub from_ms: f64,
    pub until_ms: Option<f64>,
}

/// The first agent of the protocol that acts (a dose above zero and a block or an increase
/// above zero), with its label.
pub fn acting_agent(s: &Scenario) -> Option<(String, f64, AgentSpan)> {
    s.protocol.iter().find_map(|e| match e {
        Event::Agent {
            label,
            max_block,
            max_increase,
            dose_um,
            from_ms,
            until_ms,
            ..
        } if *dose_um > 0.0 && max_increase.unwrap_or(*max_block) > 0.0 => Some((
            label.clone(),
            *dose_um,
            AgentSpan {
                from_ms: *from_ms,
                until_ms: *until_ms,
            },
        )),
        _ => None,
    })
}

/// What an agent does to the potential of one trace. The effect at steady state is the
/// potential at the end of the application (the washout, or the end of the trace) minus the
/// potential at the onset; the half times run from the onset (and from the washout) until the
/// potential has made half of that change (and half of the way back).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AgentMetrics {
    /// Potential at the last sample at or before the agent's onset.
    pub before_mv: Cell,
    /// Potential at the last sample at or before the washout (or the trace's last sample).
    pub with_agent_mv: Cell,
    pub effect_mv: Cell,
    pub onset_half_ms: Cell,
    pub washout_half_ms: Cell,
}

impl AgentMetrics {
    /// Every cell blank for the same reason.
    fn blank(why: Blank) -> Self {
        Self {
            before_mv: Err(why),
            with_agent_mv: Err(why),
            effect_mv: Err(why),
            onset_half_ms: Err(why),
            washout_half_ms: Err(why),
        }
    }
}

/// Time (interpolated) at which `v_mv` first reaches `target` going away from `from_mv`,
/// searching samples `range` (each compared with the one before it).
fn first_passage(
    t_ms: &[f64],
    v_mv: &[f64],
    range: std::ops::Range<usize>,
    from_mv: f64,
    target: f64,
) -> Option<f64> {
    let up = target > from_mv;
    let beyond = |v: f64| if up { v >= target } else { v <= target };
    range.filter(|&k| k >= 1).find(|&k| beyond(v_mv[k])).map(|k| {
        let (va, vb) = (v_mv[k - 1], v_mv[k]);
        let f = if vb != va {
            ((target - va) / (vb - va)).clamp(0.0, 1.0)
        } else {
            1.0
        };
        t_ms[k - 1] + f * (t_ms[k] - t_ms[k - 1])
    })
}

/// The agent metrics of samples `v_mv` at `t_ms` for an agent acting over `span`.
pub fn agent_metrics(t_ms: &[f64], v_mv: &[f64], span: AgentSpan) -> AgentMetrics {
    let n = t_ms.len().min(v_mv.len());
    let (t_ms, v_mv) = (&t_ms[..n], &v_mv[..n]);
    let Some(&t_last) = t_ms.last() else {
        return AgentMetrics::blank(Blank::OneSample);
    };
    if t_last <= span.from_ms {
        return AgentMetrics::blank(Blank::AgentAfterEnd);
    }
    let k_on = t_ms.partition_point(|&t| t <= span.from_ms).saturating_sub(1);
    let washed = span.until_ms.filter(|&u| u <= t_last);
    let k_end = match washed {
        Some(u) => t_ms.partition_point(|&t| t <= u).saturating_sub(1),
        None => n - 1,
    };
    let before = v_mv[k_on];
    let with_agent = v_mv[k_end];
    let effect = with_agent - before;
    let mut m = AgentMetrics {
        before_mv: Ok(before),
        with_agent_mv: Ok(with_agent),
        effect_mv: Ok(effect),
        onset_half_ms: Err(Blank::NoEffect),
        washout_half_ms: match (span.until_ms, washed) {
            (None, _) => Err(Blank::NoWashout),
            (Some(_), None) => Err(Blank::WashoutAfterEnd),
            (Some(_), Some(_)) => Err(Blank::NoEffect),
        },
    };
    if effect.abs() < MIN_CHANGE_MV {
        return m;
    }
    let half = before + 0.5 * effect;
    m.onset_half_ms = first_passage(t_ms, v_mv, k_on + 1..k_end + 1, before, half)
        .map(|t| (t - span.from_ms).max(0.0))
        .ok_or(Blank::NeverHalfway);
    if let Some(u) = washed {
        m.washout_half_ms = first_passage(t_ms, v_mv, k_end + 1..n, with_agent, half)
            .map(|t| (t - u).max(0.0))
            .ok_or(Blank::NotRecovered);
    }
    m
}

/// How spikes are counted: an upward crossing of `threshold_mv` counts once, and the counter
/// re-arms only after V has fallen below `threshold_mv − hysteresis_mv`, so noise or a notch
/// on the crest is not counted twice.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpikeSettings {
    pub threshold_mv: f64,
    pub hysteresis_mv: f64,
}

impl Default for SpikeSettings {
    fn default() -> Self {
        Self {
            threshold_mv: 0.0,
            hysteresis_mv: 10.0,
        }
    }
}

/// Why metrics could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum MetricsError {
    #[error("the trace has no samples")]
    Empty,
    #[error("the trace has {t} times but {v} potentials")]
    LengthMismatch { t: usize, v: usize },
}

/// The metrics of one trace. Times are in ms from the start of the run unless said otherwise.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TraceMetrics {
    /// Potential at the last sample at or before the first event; the first sample's potential
    /// when the protocol has no event.
    pub before_first_event_mv: f64,
    pub final_mv: f64,
    pub peak_mv: f64,
    pub peak_t_ms: f64,
    pub trough_mv: f64,
    pub trough_t_ms: f64,
    /// Largest rise rate between consecutive samples (mV/ms); `None` with a single sample.
    pub max_dvdt_mv_per_ms: Option<f64>,
    /// From the first event (or t = 0) until V first passes halfway from
    /// `before_first_event_mv` to `final_mv`, linearly interpolated; `None` with a change
    /// under [`MIN_CHANGE_MV`], when V went beyond its final level by more than half the change
    /// and came back (a transient, whose half time of the final change would mislead), or if
    /// V never gets there.
    pub half_change_ms: Option<f64>,
    pub spike_count: usize,
    /// From the first event (or t = 0) to the first spike at or after it.
    pub first_spike_latency_ms: Option<f64>,
    /// What the acting agent did (`None`: no agent acts in the run).
    pub agent: Option<AgentMetrics>,
}

/// Time of the first event of a protocol, when it has one.
pub fn first_event_ms(s: &Scenario) -> Option<f64> {
    s.protocol.iter().map(|e| e.span_ms().0).min_by(f64::total_cmp)
}

/// Upward threshold crossings (interpolated times) with hysteresis.
pub fn spike_times_ms(t_ms: &[f64], v_mv: &[f64], spikes: SpikeSettings) -> Vec<f64> {
    let mut out = Vec::new();
    let rearm_mv = spikes.threshold_mv - spikes.hysteresis_mv.abs();
    // A trace that starts above threshold is mid-spike (or depolarised), not a new spike.
    let mut armed = v_mv.first().is_some_and(|&v| v < spikes.threshold_mv);
    for k in 1..v_mv.len().min(t_ms.len()) {
        let (v0, v1) = (v_mv[k - 1], v_mv[k]);
        if armed && v0 < spikes.threshold_mv && v1 >= spikes.threshold_mv {
            let f = (spikes.threshold_mv - v0) / (v1 - v0);
            out.push(t_ms[k - 1] + f * (t_ms[k] - t_ms[k - 1]));
            armed = false;
        } else if !armed && v1 < rearm_mv {
            armed = true;
        }
    }
    out
}

/// Computes the metrics of a trace. `first_event_ms` is the protocol's first event time
/// ([`first_event_ms`]).
pub fn trace_metrics(
    t_ms: &[f64],
    v_mv: &[f64],
    first_event_ms: Option<f64>,
    spikes: SpikeSettings,
) -> Result<TraceMetrics, MetricsError> {
    metrics_with(t_ms, v_mv, first_event_ms, spikes, Some(MIN_CHANGE_MV))
}

/// [`trace_metrics`] with the smallest change that has a half time, and whether a transient's
/// half time is left out (`Some`: a potential, in mV), or any change above rounding counts and
/// a transient keeps its half time (`None`: another quantity, such as the relative volume).
fn metrics_with(
    t_ms: &[f64],
    v_mv: &[f64],
    first_event_ms: Option<f64>,
    spikes: SpikeSettings,
    min_change: Option<f64>,
) -> Result<TraceMetrics, MetricsError> {
    if t_ms.len() != v_mv.len() {
        return Err(MetricsError::LengthMismatch {
            t: t_ms.len(),
            v: v_mv.len(),
        });
    }
    let (Some(&t_first), Some(&v_first), Some(&final_mv)) = (t_ms.first(), v_mv.first(), v_mv.last()) else {
        return Err(MetricsError::Empty);
    };
    let t0 = first_event_ms.unwrap_or(t_first);
    // Index of the last sample at or before the event (the first sample if the event precedes it).
    let k0 = t_ms.partition_point(|&t| t <= t0).saturating_sub(1);
    let before_first_event_mv = if first_event_ms.is_some() {
        v_mv[k0]
    } else {
        v_first
    };

    let (mut peak_k, mut trough_k) = (0, 0);
    for (k, &v) in v_mv.iter().enumerate() {
        if v > v_mv[peak_k] {
            peak_k = k;
        }
        if v < v_mv[trough_k] {
            trough_k = k;
        }
    }
    let max_dvdt_mv_per_ms = t_ms
        .windows(2)
        .zip(v_mv.windows(2))
        .filter(|(t, _)| t[1] > t[0])
        .map(|(t, v)| (v[1] - v[0]) / (t[1] - t[0]))
        .max_by(f64::total_cmp);

    let change = final_mv - before_first_event_mv;
    let overshoot = if change > 0.0 {
        v_mv[peak_k] - final_mv
    } else {
        final_mv - v_mv[trough_k]
    };
    let settled = match min_change {
        Some(least) => change.abs() >= least && overshoot <= 0.5 * change.abs(),
        None => change.abs() > 1e-9,
    };
    let half_change_ms = if settled {
        let target = before_first_event_mv + 0.5 * change;
        let beyond = |v: f64| if change > 0.0 { v >= target } else { v <= target };
        (k0 + 1..v_mv.len()).find(|&k| beyond(v_mv[k])).map(|k| {
            let (va, vb) = (v_mv[k - 1], v_mv[k]);
            let f = if vb != va {
                ((target - va) / (vb - va)).clamp(0.0, 1.0)
            } else {
                1.0
            };
            (t_ms[k - 1] + f * (t_ms[k] - t_ms[k - 1]) - t0).max(0.0)
        })
    } else {
        None
    };

    let times = spike_times_ms(t_ms, v_mv, spikes);
    let first_spike_latency_ms = times.iter().find(|&&t| t >= t0).map(|t| t - t0);
    Ok(TraceMetrics {
        before_first_event_mv,
        final_mv,
        peak_mv: v_mv[peak_k],
        peak_t_ms: t_ms[peak_k],
        trough_mv: v_mv[trough_k],
        trough_t_ms: t_ms[trough_k],
        max_dvdt_mv_per_ms,
        half_change_ms,
        spike_count: times.len(),
        first_spike_latency_ms,
        agent: None,
    })
}

/// The metrics of a run of `s`: [`trace_metrics`] from its first event, with the effect of
/// its acting agent ([`acting_agent`]), if any.
pub fn run_metrics(
    s: &Scenario,
    t_ms: &[f64],
    v_mv: &[f64],
    spikes: SpikeSettings,
) -> Result<TraceMetrics, MetricsError> {
    let mut m = trace_metrics(t_ms, v_mv, first_event_ms(s), spikes)?;
    m.agent = acting_agent(s).map(|(_, _, span)| agent_metrics(t_ms, v_mv, span));
    Ok(m)
}

/// What a kept trace of a cell with tracked volume adds to the comparison.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VolumeMetrics {
    /// Relative volume at the last sample.
    pub final_rel: f64,
    /// From the first event (or t = 0) until the volume first passes halfway from its value
    /// before the first event to its final value; `None` without a change.
    pub half_change_ms: Option<f64>,
}

/// The volume metrics of samples `volume_rel` at `t_ms`: the same final value and half-change
/// time as [`trace_metrics`] finds for a potential, read from the volume.
pub fn volume_metrics(
    t_ms: &[f64],
    volume_rel: &[f64],
    first_event_ms: Option<f64>,
) -> Option<VolumeMetrics> {
    let n = t_ms.len().min(volume_rel.len());
    let m = metrics_with(
        &t_ms[..n],
        &volume_rel[..n],
        first_event_ms,
        SpikeSettings::default(),
        None,
    )
    .ok()?;
    Some(VolumeMetrics {
        final_rel: m.final_mv,
        half_change_ms: m.half_change_ms,
    })
}

/// The number of metrics in a table row.
pub const METRIC_COUNT: usize = 15;

/// Each metric minus the baseline's, in [`METRIC_COLUMNS`] order.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MetricsDelta([Cell; METRIC_COUNT]);

impl TraceMetrics {
    /// This trace's metrics minus `baseline`'s: blank where either is, and for the times of
    /// extremes ([`COMPARED`]).
    pub fn minus(&self, baseline: &TraceMetrics) -> MetricsDelta {
        let (mine, base) = (self.cells(), baseline.cells());
        MetricsDelta(std::array::from_fn(|k| {
            if !COMPARED[k] {
                return Err(Blank::NotCompared);
            }
            let m = mine[k]?;
            Ok(m - base[k].map_err(|_| Blank::BaselineBlank)?)
        }))
    }

    /// Values in [`METRIC_COLUMNS`] order, each with the reason when it is blank.
    pub fn cells(&self) -> [Cell; METRIC_COUNT] {
        let before = self.before_first_event_mv;
        let change = self.final_mv - before;
        let rose = self.peak_mv - before >= MIN_CHANGE_MV;
        let fell = before - self.trough_mv >= MIN_CHANGE_MV;
        let half = self.half_change_ms.ok_or(if change.abs() < MIN_CHANGE_MV {
            Blank::NoChange
        } else if (change > 0.0 && self.peak_mv - self.final_mv > 0.5 * change)
            || (change < 0.0 && self.final_mv - self.trough_mv > -0.5 * change)
        {
            Blank::Transient
        } else {
            Blank::NeverHalfway
        });
        let agent = self.agent.unwrap_or(AgentMetrics::blank(Blank::NoAgent));
        [
            Ok(before),
            Ok(self.final_mv),
            if rose {
                Ok(self.peak_mv)
            } else {
                Err(Blank::NoRise)
            },
            if rose {
                Ok(self.peak_t_ms)
            } else {
                Err(Blank::NoRise)
            },
            if fell {
                Ok(self.trough_mv)
            } else {
                Err(Blank::NoFall)
            },
            if fell {
                Ok(self.trough_t_ms)
            } else {
                Err(Blank::NoFall)
            },
            self.max_dvdt_mv_per_ms.ok_or(Blank::OneSample),
            half,
            Ok(self.spike_count as f64),
            self.first_spike_latency_ms.ok_or(Blank::NoSpike),
            agent.before_mv,
            agent.with_agent_mv,
            agent.effect_mv,
            agent.onset_half_ms,
            agent.washout_half_ms,
        ]
    }
}

impl MetricsDelta {
    /// Differences in [`METRIC_COLUMNS`] order.
    pub fn cells(&self) -> [Cell; METRIC_COUNT] {
        self.0
    }
}

/// Column names of the metrics, with units, in table order.
pub const METRIC_COLUMNS: [&str; METRIC_COUNT] = [
    "before_first_event_mv",
    "final_mv",
    "peak_mv",
    "peak_t_ms",
    "trough_mv",
    "trough_t_ms",
    "max_dvdt_mv_per_ms",
    "half_change_ms",
    "spike_count",
    "first_spike_latency_ms",
    "agent_before_mv",
    "agent_steady_mv",
    "agent_effect_mv",
    "agent_onset_half_ms",
    "agent_washout_half_ms",
];

/// Whether a metric is compared with the baseline's: not the times of the extremes, which may
/// belong to different events in two traces.
pub const COMPARED: [bool; METRIC_COUNT] = [
    true, true, true, false, true, false, true, true, true, true, true, true, true, true, true,
];

/// A CSV cell for free text: quoted when it holds a comma, quote or line break.
fn text_cell(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

fn push_number(out: &mut String, x: Cell) {
    out.push(',');
    if let Ok(x) = x {
        let _ = write!(out, "{x}");
    }
}

/// The metrics table as CSV: one row per named trace, every metric, and with a baseline (an
/// index into `rows`) one `delta_` column per compared metric ([`COMPARED`]) holding the
/// difference against it. Blank values are empty cells; numbers are the shortest form that
/// reads back exactly.
pub fn metrics_csv(rows: &[(String, TraceMetrics)], baseline: Option<usize>) -> String {
    let base = baseline.and_then(|b| rows.get(b)).map(|r| r.1);
    let mut out = String::from("trace");
    for c in METRIC_COLUMNS {
        out.push(',');
        out.push_str(c);
    }
    if base.is_some() {
        for (c, _) in METRIC_COLUMNS.iter().zip(COMPARED).filter(|x| x.1) {
            let _ = write!(out, ",delta_{c}");
        }
    }
    out.push('\n');
    for (name, m) in rows {
        out.push_str(&text_cell(name));
        for x in m.cells() {
            push_number(&mut out, x);
        }
        if let Some(b) = &base {
            for (x, _) in m.minus(b).cells().into_iter().zip(COMPARED).filter(|x| x.1) {
                push_number(&mut out, x);
            }
        }
        out.push('\n');
    }
    out
}

/// Column names of the volume metrics in the metrics CSV, after the potential's.
pub const VOLUME_COLUMNS: [&str; 2] = ["final_volume_rel", "volume_half_change_ms"];

impl VolumeMetrics {
    fn cells(&self) -> [Option<f64>; 2] {
        [Some(self.final_rel), self.half_change_ms]
    }
}

/// `csv` (one record per trace after its header, as [`metrics_csv`] writes it) with the volume
/// metrics appended to each record: [`VOLUME_COLUMNS`], and with a baseline their `delta_`
/// columns. `volumes` holds one entry per record (`None`, empty cells, for a trace whose volume
/// was fixed). Unchanged when no trace tracked its volume.
pub fn with_volume_columns(csv: &str, volumes: &[Option<VolumeMetrics>], baseline: Option<usize>) -> String {
    if volumes.iter().all(Option::is_none) {
        return csv.to_string();
    }
    let base = baseline.and_then(|b| volumes.get(b).copied().flatten());
    let mut out = String::with_capacity(csv.len() + 64 * (volumes.len() + 1));
    for (k, record) in records(csv).into_iter().enumerate() {
        out.push_str(record);
        if k == 0 {
            for c in VOLUME_COLUMNS {
                out.push(',');
                out.push_str(c);
            }
            if baseline.is_some() {
                for c in VOLUME_COLUMNS {
                    let _ = write!(out, ",delta_{c}");
                }
            }
        } else {
            let mine = volumes.get(k - 1).copied().flatten();
            let cells = mine.map_or([None; 2], |m| m.cells());
            cells.iter().for_each(|x| push_optional(&mut out, *x));
            if baseline.is_some() {
                let base_cells = base.map_or([None; 2], |b| b.cells());
                for (a, b) in cells.iter().zip(base_cells) {
                    push_optional(&mut out, (*a).zip(b).map(|(a, b)| a - b));
                }
            }
        }
        out.push('\n');
    }
    out
}

/// A volume cell: a number, or an empty cell where the volume did not change.
fn push_optional(out: &mut String, x: Option<f64>) {
    out.push(',');
    if let Some(x) = x {
        let _ = write!(out, "{x}");
    }
}

/// The records of a CSV text without their line ends (a quoted name may hold a line break).
fn records(csv: &str) -> Vec<&str> {
    let mut out = Vec::new();
    let (mut start, mut quoted) = (0, false);
    for (i, c) in csv.char_indices() {
        match c {
            '"' => quoted = !quoted,
            '\n' if !quoted => {
                out.push(&csv[start..i]);
                start = i + 1;
            }
            _ => {}
        }
    }
    if start < csv.len() {
        out.push(&csv[start..]);
    }
    out
}

/// One dose of a dose–response.
#[derive(Debug, Clone, PartialEq)]
pub struct DosePoint {
    pub dose_um: f64,
    /// Steady state at t = 0 with the agent in force at this dose.
    pub resting_mv: Option<f64>,
    /// Spikes over the whole run with the agent in force from t = 0, when asked for.
    pub spike_count: Option<usize>,
}

/// A dose–response of one agent.
#[derive(Debug, Clone, PartialEq)]
pub struct DoseResponse {
    pub label: String,
    pub points: Vec<DosePoint>,
    /// The agent's IC50 for block (from the scenario), for marking on the dose axis.
    pub ic50_um: f64,
    /// The dose at which the steady-state potential is halfway between its values at the
    /// lowest and highest dose, interpolated in log dose; `None` without a change or a crossing.
    /// It differs from the block IC50 because the potential depends nonlinearly on the block.
    pub half_effect_dose_um: Option<f64>,
}

/// Why a dose–response failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DoseResponseError {
    #[error(transparent)]
    Scan(#[from] ScanError),
    #[error("at dose {dose_um} µM the run failed: {source}")]
    Run { dose_um: f64, source: EngineError },
}

/// The steady-state potential across a log range of doses of the agent `label` (on the current
/// rayon pool) and, with `count_spikes`, the spike count of a full run at each dose. Each dose
/// is in force from t = 0 to the end (see [`super::scan::apply`]). Progress counts steady states first,
/// then runs.
pub fn dose_response(
    s: &Scenario,
    label: &str,
    from_um: f64,
    to_um: f64,
    points: usize,
    count_spikes: Option<SpikeSettings>,
    control: &ScanControl,
) -> Result<DoseResponse, DoseResponseError> {
    let vary = Vary::DoseUm(label.to_string());
    let range = ScanRange {
        from: from_um,
        to: to_um,
        points,
        log: true,
    };
    let steady = scan(s, &vary, &range, control)?;
    let spikes: Vec<Option<usize>> = match count_spikes {
        None => vec![None; steady.len()],
        Some(settings) => steady
            .par_iter()
            .map(|p| {
                if control.is_cancelled() {
                    return Err(DoseResponseError::Scan(ScanError::Cancelled));
                }
                let sc = check_value(s, &vary, p.value)?;
                let run_err = |source| DoseResponseError::Run {
                    dose_um: p.value,
                    source,
                };
                let mut run = Run::new(&sc, SolverSettings::default()).map_err(run_err)?;
                run.run_to_end().map_err(run_err)?;
                let tr = run.trace();
                control.tick();
                Ok(Some(spike_times_ms(&tr.t_ms, tr.v_mv(), settings).len()))
            })
            .collect::<Result<_, _>>()?,
    };
    let ic50_um = s.agent_ic50_um(label).unwrap_or(f64::NAN);
    let points: Vec<DosePoint> = steady
        .iter()
        .zip(spikes)
        .map(|(p, n)| DosePoint {
            dose_um: p.value,
            resting_mv: p.resting_mv,
            spike_count: n,
        })
        .collect();
    let half_effect_dose_um = half_effect_dose(&points);
    Ok(DoseResponse {
        label: label.to_string(),
        points,
        ic50_um,
        half_effect_dose_um,
    })
}

/// Where the potential first passes halfway between its ends, interpolated in log dose.
fn half_effect_dose(points: &[DosePoint]) -> Option<f64> {
    let first = points.first()?.resting_mv?;
    let last = points.last()?.resting_mv?;
    if (last - first).abs() < 1e-9 {
        return None;
    }
    let target = 0.5 * (first + last);
    points.windows(2).find_map(|w| {
        let (va, vb) = (w[0].resting_mv?, w[1].resting_mv?);
        if (va - target) * (vb - target) > 0.0 || va == vb {
            return None;
        }
        let f = (target - va) / (vb - va);
        let (la, lb) = (w[0].dose_um.ln(), w[1].dose_um.ln());
        Some((la + f * (lb - la)).exp())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The volume columns go after every metric of each record, with a baseline their
    /// differences; a name holding a comma and a line break stays one quoted cell.
    #[test]
    fn volume_columns_follow_each_record() {
        let csv = "trace,a,delta_a\n\"cell, 1\nagain\",1,0\nfixed,2,1\nother,3,2\n";
        let v = |w: f64, h: Option<f64>| {
            Some(VolumeMetrics {
                final_rel: w,
                half_change_ms: h,
            })
        };
        let out = with_volume_columns(csv, &[v(1.25, Some(40.0)), None, v(1.5, None)], Some(0));
        assert_eq!(
            out,
            "trace,a,delta_a,final_volume_rel,volume_half_change_ms,delta_final_volume_rel,delta_volume_half_change_ms\n\
             \"cell, 1\nagain\",1,0,1.25,40,0,0\n\
             fixed,2,1,,,,\n\
             other,3,2,1.5,,0.25,\n"
        );
        assert_eq!(with_volume_columns(csv, &[None, None, None], Some(0)), csv);
    }

    fn grid(n: usize, dt: f64) -> Vec<f64> {
        (0..n).map(|k| k as f64 * dt).collect()
    }

    /// An exponential relaxation from −70 to −50 mV starting at an event at 10 ms, with time
    /// constant 5 ms: half the change is reached after τ·ln 2 (exact, common practice).
    #[test]
    fn relaxation_half_time_and_levels() {
        let t = grid(10_001, 0.01);
        let v: Vec<f64> = t
            .iter()
            .map(|&t| {
                if t < 10.0 {
                    -70.0
                } else {
                    -50.0 - 20.0 * (-(t - 10.0) / 5.0).exp()
                }
            })
            .collect();
        let m = trace_metrics(&t, &v, Some(10.0), SpikeSettings::default()).expect("metrics");
        assert_eq!(m.before_first_event_mv, -70.0);
        assert!((m.final_mv - (-50.0 - 20.0 * (-18.0f64).exp())).abs() < 1e-12);
        let expected = 5.0 * std::f64::consts::LN_2;
        assert!(
            (m.half_change_ms.expect("half time") - expected).abs() < 1e-3,
            "{:?}",
            m.half_change_ms
        );
        assert_eq!(m.trough_mv, -70.0);
        assert_eq!(m.trough_t_ms, 0.0);
        // dV/dt is largest right after the event: 20/5 = 4 mV/ms, less a sample's decay.
        let dvdt = m.max_dvdt_mv_per_ms.expect("slope");
        assert!(dvdt < 4.0 && dvdt > 3.99, "{dvdt}");
        assert_eq!(m.spike_count, 0);
        assert_eq!(m.first_spike_latency_ms, None);
    }

    /// Three sine-shaped spikes with a small notch on each crest: the notch crosses the
    /// threshold again but not the re-arm level, so each spike counts once.
    #[test]
    fn spikes_counted_once_with_hysteresis() {
        let t = grid(3001, 0.1);
        let v: Vec<f64> = t
            .iter()
            .map(|&t| {
                let spike = (0..3).any(|k| {
                    let s = 50.0 + 100.0 * f64::from(k);
                    (s..s + 10.0).contains(&t)
                });
                if spike {
                    let notch = if (t % 100.0 - 55.0).abs() < 0.5 {
                        -25.0
                    } else {
                        0.0
                    };
                    20.0 + notch
                } else {
                    -65.0
                }
            })
            .collect();
        let m = trace_metrics(&t, &v, Some(40.0), SpikeSettings::default()).expect("metrics");
        assert_eq!(m.spike_count, 3);
        let lat = m.first_spike_latency_ms.expect("latency");
        assert!((lat - 10.0).abs() < 0.11, "{lat}");
        // Against a silent baseline at the same potential: three more spikes, the same final
        // potential, and no latency difference where the baseline has no spike.
        let flat =
            trace_metrics(&t, &vec![-65.0; t.len()], Some(40.0), SpikeSettings::default()).expect("metrics");
        let d = m.minus(&flat).cells();
        let column = |name: &str| METRIC_COLUMNS.iter().position(|c| *c == name).expect("a column");
        assert_eq!(d[column("spike_count")], Ok(3.0));
        assert_eq!(d[column("final_mv")], Ok(0.0));
        // The flat trace never rose, so its peak is blank with that reason, and so is the
        // difference; a time of an extreme is never compared.
        assert_eq!(flat.cells()[column("peak_mv")], Err(Blank::NoRise));
        assert_eq!(d[column("peak_mv")], Err(Blank::BaselineBlank));
        assert_eq!(d[column("peak_t_ms")], Err(Blank::NotCompared));
        assert_eq!(d[column("first_spike_latency_ms")], Err(Blank::BaselineBlank));
        // The spikes end where they started: no final change, so no half time of it.
        assert_eq!(m.cells()[column("half_change_ms")], Err(Blank::NoChange));
        assert_eq!(m.cells()[column("agent_effect_mv")], Err(Blank::NoAgent));
    }

    /// Potential of a K+/Na+/Cl- membrane by the GHK voltage equation (Goldman 1943; Hodgkin &
    /// Katz 1949) with the K+ permeability scaled by `k_factor`; concentrations in mM.
    fn ghk_mv(k_factor: f64) -> f64 {
        let rt_f = crate::constants::rt_over_f_mv(37.0);
        let (pk, pna, pcl) = (5.0e-7 * k_factor, 2.0e-8, 1.0e-7);
        rt_f * ((pk * 5.0 + pna * 145.0 + pcl * 10.0) / (pk * 140.0 + pna * 12.0 + pcl * 120.0)).ln()
    }

    /// The K+ factor that gives potential `v_mv`: the GHK voltage equation solved for P_K by
    /// hand, `P_K = (B − xA)/(x K_i − K_o)` with `x = e^{V F/RT}`, A and B the Na+ and Cl- terms.
    fn k_factor_at(v_mv: f64) -> f64 {
        let x = (v_mv / crate::constants::rt_over_f_mv(37.0)).exp();
        let a = 2.0e-8 * 12.0 + 1.0e-7 * 120.0;
        let b = 2.0e-8 * 145.0 + 1.0e-7 * 10.0;
        (b - x * a) / (x * 140.0 - 5.0) / 5.0e-7
    }

    /// A blocker (IC50 2 µM, Hill 1, 90 % at most, 10 µM) applied at 100 ms with a first-order
    /// lag of 40 ms and washed out at 500 ms with one of 120 ms, on a membrane whose potential
    /// is its GHK potential at every moment (model.md's agent: the lagged dose sets the fraction
    /// blocked, the Hill equation). The effect at steady state is the GHK potential with the
    /// blocked permeability minus the control's, and the half times follow by hand: the
    /// potential halfway, the K+ factor that gives it, the dose that blocks that much, and the
    /// time the lag takes to reach that dose.
    #[test]
    fn a_lagged_blocker_has_its_closed_form_effect_and_half_times() {
        let (dose, ic50, max_block, tau_on, tau_off) = (10.0, 2.0, 0.9, 40.0, 120.0);
        let blocked = |d: f64| max_block * d / (d + ic50);
        let dose_at = |t: f64| {
            let on = |t: f64| dose * (1.0 - (-(t - 100.0) / tau_on).exp());
            if t < 100.0 {
                0.0
            } else if t < 500.0 {
                on(t)
            } else {
                on(500.0) * (-(t - 500.0) / tau_off).exp()
            }
        };
        let t = grid(100_001, 0.01);
        let v: Vec<f64> = t.iter().map(|&t| ghk_mv(1.0 - blocked(dose_at(t)))).collect();
        let span = AgentSpan {
            from_ms: 100.0,
            until_ms: Some(500.0),
        };
        let m = agent_metrics(&t, &v, span);
        let control = ghk_mv(1.0);
        // After ten onset time constants the lag is at its dose to 5e-5 of it.
        let steady = ghk_mv(1.0 - blocked(dose));
        let effect = m.effect_mv.expect("an effect");
        assert!(
            (effect - (steady - control)).abs() < 1e-3,
            "{effect} vs {}",
            steady - control
        );
        assert!(effect > 10.0, "the blocker depolarizes: {effect} mV");
        let v_half = control + 0.5 * effect;
        let b_half = 1.0 - k_factor_at(v_half);
        let d_half = ic50 * b_half / (max_block - b_half);
        let onset = -tau_on * (1.0 - d_half / dose).ln();
        let washout = tau_off * (dose_at(500.0) / d_half).ln();
        let got = m.onset_half_ms.expect("onset half time");
        assert!((got - onset).abs() < 0.01, "{got} vs {onset} ms");
        let got = m.washout_half_ms.expect("washout half time");
        assert!((got - washout).abs() < 0.01, "{got} vs {washout} ms");
        // The potential is not linear in the dose, so neither is τ·ln 2 (common practice for a
        // first-order lag of the dose alone).
        assert!((onset - tau_on * std::f64::consts::LN_2).abs() > 1.0);
        // The washout is not complete at 1000 ms (0.83 mV are left), after an excursion of 18 mV:
        // the half time of that final change would be read on the way out, so it is blank.
        let whole = trace_metrics(&t, &v, Some(100.0), SpikeSettings::default()).expect("metrics");
        assert_eq!(whole.half_change_ms, None);
        assert_eq!(whole.cells()[7], Err(Blank::Transient));
    }

    /// A response that follows a first-order lag of the agent itself (linear in the dose):
    /// half the effect after τ·ln 2 from the onset and from the washout (exact, common
    /// practice); a trace that stops before the washout leaves that cell blank.
    #[test]
    fn a_linear_response_reaches_half_effect_at_tau_ln_2() {
        let t = grid(60_001, 0.01);
        let v: Vec<f64> = t
            .iter()
            .map(|&t| {
                let on = |t: f64| 12.0 * (1.0 - (-(t - 50.0) / 20.0).exp());
                -70.0
                    + if t < 50.0 {
                        0.0
                    } else if t < 400.0 {
                        on(t)
                    } else {
                        on(400.0) * (-(t - 400.0) / 30.0).exp()
                    }
            })
            .collect();
        let span = AgentSpan {
            from_ms: 50.0,
            until_ms: Some(400.0),
        };
        let m = agent_metrics(&t, &v, span);
        let ln2 = std::f64::consts::LN_2;
        assert!((m.effect_mv.expect("effect") - 12.0).abs() < 1e-6);
        assert!((m.onset_half_ms.expect("onset") - 20.0 * ln2).abs() < 1e-3);
        assert!((m.washout_half_ms.expect("washout") - 30.0 * ln2).abs() < 1e-3);
        let cut = agent_metrics(&t[..30_000], &v[..30_000], span);
        assert_eq!(cut.washout_half_ms, Err(Blank::WashoutAfterEnd));
        assert!(cut.onset_half_ms.is_ok());
        let late = agent_metrics(&t[..4_000], &v[..4_000], span);
        assert_eq!(late.effect_mv, Err(Blank::AgentAfterEnd));
        let staying = agent_metrics(
            &t,
            &v,
            AgentSpan {
                until_ms: None,
                ..span
            },
        );
        assert_eq!(staying.washout_half_ms, Err(Blank::NoWashout));
    }

    /// A relative volume relaxing from 1 to 1.05 after an event at 10 ms with τ = 50 ms: half
    /// its change after τ·ln 2 (exact, common practice), though the change is far below the
    /// 0.1 of a potential's threshold, which is in mV and does not apply to a volume.
    #[test]
    fn a_small_volume_change_has_its_half_time() {
        let t = grid(100_001, 0.01);
        let w: Vec<f64> = t
            .iter()
            .map(|&t| {
                if t < 10.0 {
                    1.0
                } else {
                    1.05 - 0.05 * (-(t - 10.0) / 50.0).exp()
                }
            })
            .collect();
        let m = volume_metrics(&t, &w, Some(10.0)).expect("volume metrics");
        let half = m.half_change_ms.expect("a half time");
        assert!((half - 50.0 * std::f64::consts::LN_2).abs() < 1e-3, "{half}");
    }

    #[test]
    fn csv_table_with_baseline() {
        let t = [0.0, 1.0, 2.0];
        let a = trace_metrics(&t, &[-70.0, -60.0, -65.0], Some(0.5), SpikeSettings::default()).expect("a");
        let b = trace_metrics(&t, &[-70.0, -70.0, -70.0], Some(0.5), SpikeSettings::default()).expect("b");
        let csv = metrics_csv(&[("drug, 10 µM".into(), a), ("control".into(), b)], Some(1));
        let lines: Vec<&str> = csv.lines().collect();
        assert_eq!(lines.len(), 3);
        assert!(lines[0].starts_with("trace,before_first_event_mv,final_mv,"));
        assert!(lines[0].contains(",delta_final_mv,"));
        assert!(lines[0].contains(",agent_effect_mv,agent_onset_half_ms,agent_washout_half_ms,"));
        assert!(!lines[0].contains("delta_peak_t_ms"));
        // The rise to −60 mV overshoots the final −65 mV by more than half the change: a
        // transient, so its half time is blank; the trough never fell below −70 mV.
        assert!(
            lines[1].starts_with("\"drug, 10 µM\",-70,-65,-60,1,,,10,,0,"),
            "{}",
            lines[1]
        );
        // 1 + 15 metrics + 13 compared differences.
        assert_eq!(lines[2].split(',').count(), 29);
        assert!(lines[2].starts_with("control,-70,-70,,,,,0,,0,,"), "{}", lines[2]);
        assert!(matches!(
            trace_metrics(&[], &[], None, SpikeSettings::default()),
            Err(MetricsError::Empty)
        ));
    }
}
