//! Metrics of a potential trace (resting level, final level, extremes, fastest rise, half time,
//! spikes) for comparing kept runs against a baseline, their CSV table, and the dose–response
//! of an agent (steady-state potential and, for excitable cells, spikes over the run).

use std::fmt::Write as _;

use rayon::prelude::*;

use super::scan::{ScanControl, ScanError, ScanRange, Vary, check_value, scan};
use crate::engine::{EngineError, Run, SolverSettings};
use crate::scenario::Scenario;

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
    /// `before_first_event_mv` to `final_mv`, linearly interpolated; `None` without a change
    /// or if V never gets there.
    pub half_change_ms: Option<f64>,
    pub spike_count: usize,
    /// From the first event (or t = 0) to the first spike at or after it.
    pub first_spike_latency_ms: Option<f64>,
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
    let half_change_ms = if change.abs() > 1e-9 {
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
    })
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
    let m = trace_metrics(
        &t_ms[..n],
        &volume_rel[..n],
        first_event_ms,
        SpikeSettings::default(),
    )
    .ok()?;
    Some(VolumeMetrics {
        final_rel: m.final_mv,
        half_change_ms: m.half_change_ms,
    })
}

/// Each metric minus the baseline's, in [`METRIC_COLUMNS`] order (`None` where either is
/// undefined).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MetricsDelta([Option<f64>; 10]);

impl TraceMetrics {
    /// This trace's metrics minus `baseline`'s.
    pub fn minus(&self, baseline: &TraceMetrics) -> MetricsDelta {
        let (mine, base) = (self.cells(), baseline.cells());
        MetricsDelta(std::array::from_fn(|k| Some(mine[k]? - base[k]?)))
    }

    /// Values in [`METRIC_COLUMNS`] order.
    pub fn cells(&self) -> [Option<f64>; 10] {
        [
            Some(self.before_first_event_mv),
            Some(self.final_mv),
            Some(self.peak_mv),
            Some(self.peak_t_ms),
            Some(self.trough_mv),
            Some(self.trough_t_ms),
            self.max_dvdt_mv_per_ms,
            self.half_change_ms,
            Some(self.spike_count as f64),
            self.first_spike_latency_ms,
        ]
    }
}

impl MetricsDelta {
    /// Differences in [`METRIC_COLUMNS`] order.
    pub fn cells(&self) -> [Option<f64>; 10] {
        self.0
    }
}

/// Column names of the metrics, with units, in table order.
pub const METRIC_COLUMNS: [&str; 10] = [
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
];

/// A CSV cell for free text: quoted when it holds a comma, quote or line break.
fn text_cell(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

fn push_number(out: &mut String, x: Option<f64>) {
    out.push(',');
    if let Some(x) = x {
        let _ = write!(out, "{x}");
    }
}

/// The metrics table as CSV: one row per named trace, every metric, and with a baseline (an
/// index into `rows`) one `delta_` column per metric holding the difference against it.
/// Undefined values are empty cells; numbers are the shortest form that reads back exactly.
pub fn metrics_csv(rows: &[(String, TraceMetrics)], baseline: Option<usize>) -> String {
    let base = baseline.and_then(|b| rows.get(b)).map(|r| r.1);
    let mut out = String::from("trace");
    for c in METRIC_COLUMNS {
        out.push(',');
        out.push_str(c);
    }
    if base.is_some() {
        for c in METRIC_COLUMNS {
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
            for x in m.minus(b).cells() {
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
            cells.iter().for_each(|x| push_number(&mut out, *x));
            if baseline.is_some() {
                let base_cells = base.map_or([None; 2], |b| b.cells());
                for (a, b) in cells.iter().zip(base_cells) {
                    push_number(&mut out, (*a).zip(b).map(|(a, b)| a - b));
                }
            }
        }
        out.push('\n');
    }
    out
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
        assert_eq!(d[column("spike_count")], Some(3.0));
        assert_eq!(d[column("final_mv")], Some(0.0));
        assert_eq!(d[column("peak_mv")], Some(85.0));
        assert_eq!(d[column("first_spike_latency_ms")], None);
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
        assert!(lines[1].starts_with("\"drug, 10 µM\",-70,-65,-60,1,-70,0,10,"));
        // The flat control has no half time: an empty cell, and an empty delta.
        assert_eq!(lines[2].split(',').count(), 21);
        assert_eq!(csv.lines().nth(1).map(|l| l.ends_with(",0,")), Some(true));
        assert!(matches!(
            trace_metrics(&[], &[], None, SpikeSettings::default()),
            Err(MetricsError::Empty)
        ));
    }
}
