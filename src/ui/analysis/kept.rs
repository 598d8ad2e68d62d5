//! Kept traces for comparing runs: a copy of a run (finished or not) under a name and a
//! colour, drawn over the live trace and named in its legend, and the table of its metrics
//! against a baseline: the first kept run without an acting agent (the control), else the
//! first kept run, until the user picks another. Kept traces are runtime state of the window:
//! not part of the scenario, not undone, not saved.

use egui::{Color32, RichText, Ui};

use crate::analysis::metrics::{
    Blank, COMPARED, Cell, METRIC_COLUMNS, METRIC_COUNT, SpikeSettings, TraceMetrics, VolumeMetrics,
    acting_agent, first_event_ms, run_metrics, volume_metrics,
};
use crate::scenario::Scenario;
use crate::ui::analysis::AnalysisCommand;
use crate::ui::command::Command;
use crate::ui::dialogs::export::ExportKind;

/// Colours of kept traces, in the order they are handed out: Okabe–Ito colours that the
/// first species (K+ blue, Na+ vermilion, Cl− green) do not use, then the rest.
const KEPT_RGB: [(u8, u8, u8); 6] = [
    (204, 121, 167),
    (230, 159, 0),
    (86, 180, 233),
    (120, 120, 120),
    (0, 114, 178),
    (213, 94, 0),
];

/// One kept trace.
#[derive(Debug, Clone)]
pub struct KeptTrace {
    /// Never reused, so a plot cache keyed by it cannot mix two traces.
    pub id: u64,
    pub name: String,
    pub color: Color32,
    pub visible: bool,
    pub t_ms: Vec<f64>,
    pub v_mv: Vec<f64>,
    /// `None` when the trace is empty.
    pub metrics: Option<TraceMetrics>,
    /// Final volume and time to half its change, for a cell whose volume is tracked.
    pub volume: Option<VolumeMetrics>,
    /// The agent acting in the run and its dose ("K blocker 10 µM"), or `None` for a run
    /// without one (a control).
    pub agent: Option<String>,
}

/// The kept traces and the baseline of the comparison.
#[derive(Debug, Default)]
pub struct Kept {
    pub traces: Vec<KeptTrace>,
    /// Index of the trace the others are compared with.
    pub baseline: Option<usize>,
    /// Whether the user picked the baseline; until then it follows [`Kept::automatic_baseline`].
    baseline_chosen: bool,
    next_id: u64,
}

impl Kept {
    /// Keeps a copy of `t_ms`, `v_mv` (the shown part of a run of `s`), named by its run
    /// number and its agent ("run 2 · no agent", "run 1 · K blocker 10 µM").
    pub fn keep(&mut self, s: &Scenario, t_ms: &[f64], v_mv: &[f64]) -> &KeptTrace {
        self.next_id += 1;
        let n = self.next_id;
        let agent = acting_agent(s).map(|(label, dose_um, _)| format!("{label} {} µM", short(dose_um)));
        let name = format!("run {n} · {}", agent.as_deref().unwrap_or("no agent"));
        let rgb = KEPT_RGB[(n as usize - 1) % KEPT_RGB.len()];
        let metrics = run_metrics(s, t_ms, v_mv, SpikeSettings::default()).ok();
        self.traces.push(KeptTrace {
            id: n,
            name,
            color: Color32::from_rgb(rgb.0, rgb.1, rgb.2),
            visible: true,
            t_ms: t_ms.to_vec(),
            v_mv: v_mv.to_vec(),
            metrics,
            volume: None,
            agent,
        });
        self.follow_baseline();
        &self.traces[self.traces.len() - 1]
    }

    /// The baseline when the user has not picked one: the first kept run without an acting
    /// agent (the control), else the first kept run.
    pub fn automatic_baseline(&self) -> Option<usize> {
        self.traces
            .iter()
            .position(|t| t.agent.is_none())
            .or((!self.traces.is_empty()).then_some(0))
    }

    fn follow_baseline(&mut self) {
        if !self.baseline_chosen {
            self.baseline = self.automatic_baseline();
        }
    }

    /// Adds the volume metrics of the relative volume `volume_rel` at `t_ms` to the trace kept
    /// last (a run of `s`).
    pub fn attach_volume(&mut self, s: &Scenario, t_ms: &[f64], volume_rel: &[f64]) {
        if let Some(t) = self.traces.last_mut() {
            t.volume = volume_metrics(t_ms, volume_rel, first_event_ms(s));
        }
    }

    pub fn set_visible(&mut self, i: usize, on: bool) {
        if let Some(t) = self.traces.get_mut(i) {
            t.visible = on;
        }
    }

    pub fn rename(&mut self, i: usize, name: String) {
        if let Some(t) = self.traces.get_mut(i) {
            t.name = name;
        }
    }

    pub fn delete(&mut self, i: usize) {
        if i >= self.traces.len() {
            return;
        }
        self.traces.remove(i);
        self.baseline = match self.baseline {
            Some(b) if b == i => None,
            Some(b) if b > i => Some(b - 1),
            other => other,
        };
        self.follow_baseline();
    }

    /// The user's pick of the baseline (or of none), kept from now on.
    pub fn set_baseline(&mut self, b: Option<usize>) {
        self.baseline = b.filter(|&i| i < self.traces.len());
        self.baseline_chosen = true;
    }

    /// The metrics table as CSV (`analysis::metrics::metrics_csv`), traces without samples left out.
    pub fn metrics_csv(&self) -> String {
        let mut rows = Vec::new();
        let mut volumes = Vec::new();
        let mut baseline = None;
        for (i, t) in self.traces.iter().enumerate() {
            if let Some(m) = t.metrics {
                if self.baseline == Some(i) {
                    baseline = Some(rows.len());
                }
                rows.push((t.name.clone(), m));
                volumes.push(t.volume);
            }
        }
        let csv = crate::analysis::metrics::metrics_csv(&rows, baseline);
        crate::analysis::metrics::with_volume_columns(&csv, &volumes, baseline)
    }
}

/// Row labels in plain words with their units, in the order of [`METRIC_COLUMNS`], and what
/// each means.
const ROWS: [(&str, &str); METRIC_COUNT] = [
    (
        "Before first event (mV)",
        "The potential just before the protocol's first event",
    ),
    ("Final potential (mV)", "The potential at the last sample"),
    (
        "Peak (mV)",
        "The highest potential, when it rose above its level before the first event",
    ),
    (
        "Peak at (ms)",
        "When the highest potential was reached, from the start of the run",
    ),
    (
        "Trough (mV)",
        "The lowest potential, when it fell below its level before the first event",
    ),
    (
        "Trough at (ms)",
        "When the lowest potential was reached, from the start of the run",
    ),
    (
        "Fastest rise (mV/ms)",
        "The largest rate of rise between two samples",
    ),
    (
        "Half of final change (ms)",
        "From the first event until the potential is halfway to its final level",
    ),
    (
        "Spikes (count)",
        "Upward crossings of 0 mV, counted once per spike",
    ),
    (
        "First-spike latency (ms)",
        "From the first event to the first spike",
    ),
    (
        "Agent: potential at onset (mV)",
        "The potential when the agent is applied",
    ),
    (
        "Agent: steady potential (mV)",
        "The potential at the end of the application (at the washout, or at the end of the run)",
    ),
    (
        "Agent: effect at steady state (mV)",
        "Steady potential with the agent minus the potential at its onset",
    ),
    (
        "Agent: half effect after onset (ms)",
        "From the agent's onset until the potential has made half of its effect",
    ),
    (
        "Agent: half recovery after washout (ms)",
        "From the washout until the potential has come back by half of the effect",
    ),
];

/// Index of the spike count, shown as a whole number.
const COUNT_ROW: usize = 8;

fn number(v: f64, count: bool) -> String {
    if count || v.abs() >= 1000.0 {
        format!("{v:.0}")
    } else {
        format!("{v:.2}")
    }
}

/// A number for a name: no trailing zeros.
fn short(v: f64) -> String {
    let s = format!("{v:.3}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// The text of a cell, and why it is blank when it is.
fn cell_text(value: Cell, delta: Option<Cell>, count: bool) -> (String, Option<String>) {
    let mut why = Vec::new();
    let mut text = match value {
        Ok(v) => number(v, count),
        Err(b) => {
            why.push(b.reason());
            "—".to_string()
        }
    };
    match delta {
        None => {}
        Some(Ok(d)) if count => text += &format!("  (Δ {d:+.0})"),
        Some(Ok(d)) => text += &format!("  (Δ {d:+.2})"),
        // A blank value already says why; a blank difference of a value says its own reason.
        Some(Err(b)) if value.is_ok() => {
            text += "  (Δ —)";
            why.push(format!("Δ: {}", b.reason()));
        }
        Some(Err(_)) => {}
    }
    let why = (!why.is_empty()).then(|| {
        let mut s = why.join("; ");
        if let Some(c) = s.get_mut(0..1) {
            c.make_ascii_uppercase();
        }
        s
    });
    (text, why)
}

/// The "Compare" tab: the kept traces, the baseline, and the metrics table.
pub fn show(ui: &mut Ui, kept: &Kept, can_keep: bool, commands: &mut Vec<Command>) {
    debug_assert_eq!(ROWS.len(), METRIC_COLUMNS.len());
    let cmd = |c: AnalysisCommand| Command::Analysis(c);
    ui.horizontal(|ui| {
        if ui
            .add_enabled(can_keep, egui::Button::new("Keep trace  (Ctrl+K)"))
            .on_hover_text("Keep the run shown now as a reference drawn over the plot")
            .clicked()
        {
            commands.push(cmd(AnalysisCommand::Keep));
        }
        let any = kept.traces.iter().any(|t| t.metrics.is_some());
        if ui
            .add_enabled(any, egui::Button::new("Export table as CSV…"))
            .clicked()
        {
            commands.push(Command::Export(ExportKind::MetricsCsv));
        }
    });
    if kept.traces.is_empty() {
        ui.label(
            RichText::new(
                "No kept traces yet. Run a scenario, press \"Keep trace\", change something \
                 (an agent's dose, a bath) and run again to compare.",
            )
            .weak(),
        );
        return;
    }
    ui.add_space(4.0);
    for (i, t) in kept.traces.iter().enumerate() {
        ui.horizontal(|ui| {
            let mut visible = t.visible;
            if ui
                .checkbox(&mut visible, "")
                .on_hover_text("Show on the potential plot")
                .changed()
            {
                commands.push(cmd(AnalysisCommand::SetKeptVisible(i, visible)));
            }
            let (rect, _) = ui.allocate_exact_size(egui::vec2(18.0, 4.0), egui::Sense::hover());
            ui.painter().rect_filled(rect, 1.0, t.color);
            let mut name = t.name.clone();
            let edit = ui
                .add(
                    egui::TextEdit::singleline(&mut name)
                        .desired_width(220.0)
                        .id_salt(("kept name", t.id)),
                )
                .on_hover_text("Name of the kept trace (type to rename)");
            if edit.changed() && !name.trim().is_empty() {
                commands.push(cmd(AnalysisCommand::RenameKept(i, name)));
            }
            let samples = t.t_ms.len();
            let until = t.t_ms.last().copied().unwrap_or(0.0);
            ui.label(RichText::new(format!("{samples} samples to {until:.0} ms")).weak());
            if ui
                .small_button("Delete")
                .on_hover_text(format!("Forget \"{}\"", t.name))
                .clicked()
            {
                commands.push(cmd(AnalysisCommand::DeleteKept(i)));
            }
        });
    }
    ui.add_space(4.0);
    ui.horizontal(|ui| {
        let label = ui
            .label("Baseline")
            .on_hover_text("The trace the others are compared with: the first kept run without an agent (the control), unless you pick another");
        let shown = kept
            .baseline
            .and_then(|b| kept.traces.get(b))
            .map_or("none", |t| t.name.as_str());
        egui::ComboBox::from_id_salt("baseline")
            .selected_text(shown)
            .show_ui(ui, |ui| {
                if ui.selectable_label(kept.baseline.is_none(), "none").clicked() {
                    commands.push(cmd(AnalysisCommand::SetBaseline(None)));
                }
                for (i, t) in kept.traces.iter().enumerate() {
                    if ui.selectable_label(kept.baseline == Some(i), &t.name).clicked() {
                        commands.push(cmd(AnalysisCommand::SetBaseline(Some(i))));
                    }
                }
            })
            .response
            .labelled_by(label.id);
    });
    ui.add_space(4.0);
    let base = kept
        .baseline
        .and_then(|b| kept.traces.get(b))
        .and_then(|t| t.metrics);
    // Rows blank in every trace (no agent anywhere, no spike anywhere) say so once, below.
    let any_agent = kept.traces.iter().any(|t| t.agent.is_some());
    let mut notes = Vec::new();
    if base.is_some() && kept.traces.len() > 1 {
        notes.push("Δ: this trace minus the baseline.".to_string());
    }
    notes.push("—: no meaningful value (point at it for the reason).".into());
    if !any_agent {
        notes.push(format!("Agent rows are left out: {}.", Blank::NoAgent.reason()));
    }
    ui.label(RichText::new(notes.join("  ")).small().weak());
    egui::ScrollArea::both().id_salt("metrics table").show(ui, |ui| {
        egui::Grid::new("metrics grid")
            .striped(true)
            .spacing([14.0, 4.0])
            .show(ui, |ui| {
                ui.label(RichText::new("Metric").strong());
                for (i, t) in kept.traces.iter().enumerate() {
                    let head = if kept.baseline == Some(i) {
                        format!("{} (baseline)", t.name)
                    } else {
                        t.name.clone()
                    };
                    ui.label(RichText::new(head).strong().color(t.color));
                }
                ui.end_row();
                for (r, (row_label, meaning)) in ROWS.iter().enumerate() {
                    if r >= 10 && !any_agent {
                        continue;
                    }
                    ui.label(*row_label).on_hover_text(*meaning);
                    for (i, t) in kept.traces.iter().enumerate() {
                        let Some(m) = &t.metrics else {
                            ui.label("—").on_hover_text("The trace has no samples");
                            continue;
                        };
                        let delta = base
                            .as_ref()
                            .filter(|_| kept.baseline != Some(i))
                            .map(|b| m.minus(b).cells()[r])
                            .filter(|_| COMPARED[r]);
                        let (text, why) = cell_text(m.cells()[r], delta, r == COUNT_ROW);
                        let shown = ui.label(text);
                        if let Some(why) = why {
                            shown.on_hover_text(why);
                        }
                    }
                    ui.end_row();
                }
                volume_rows(ui, kept);
            });
    });
}

/// One volume row of the metrics table: its label, its value, and the digits it is shown with.
type VolumeRow = (&'static str, fn(&VolumeMetrics) -> Option<f64>, usize);

/// The volume rows of the metrics table, when any kept trace tracked its volume.
fn volume_rows(ui: &mut Ui, kept: &Kept) {
    if kept.traces.iter().all(|t| t.volume.is_none()) {
        return;
    }
    let base = kept
        .baseline
        .and_then(|b| kept.traces.get(b))
        .and_then(|t| t.volume);
    let rows: [VolumeRow; 2] = [
        ("Final volume (relative)", |m| Some(m.final_rel), 4),
        ("Half of volume change (ms)", |m| m.half_change_ms, 2),
    ];
    for (label, value, digits) in rows {
        ui.label(label);
        for (i, t) in kept.traces.iter().enumerate() {
            let Some(m) = &t.volume else {
                ui.label("—");
                continue;
            };
            let v = value(m);
            let mut text = v.map_or("—".to_string(), |v| format!("{v:.digits$}"));
            if let Some(b) = &base
                && kept.baseline != Some(i)
            {
                text += &match (v, value(b)) {
                    (Some(v), Some(b)) => format!("  (Δ {:+.digits$})", v - b),
                    _ => "  (Δ —)".into(),
                };
            }
            ui.label(text);
        }
        ui.end_row();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn deleting_moves_the_baseline_with_its_trace() {
        let s = Scenario::new_default();
        let mut k = Kept::default();
        for v in [-70.0, -60.0, -50.0] {
            k.keep(&s, &[0.0, 1.0], &[v, v]);
        }
        k.set_baseline(Some(2));
        k.delete(0);
        assert_eq!(k.baseline, Some(1));
        assert_eq!(k.traces[1].metrics.map(|m| m.final_mv), Some(-50.0));
        k.delete(1);
        assert_eq!(k.baseline, None, "a picked baseline is not replaced");
        // Ids are never reused, so a plot cache cannot confuse a new trace with a deleted one.
        let id = k.keep(&s, &[0.0], &[-65.0]).id;
        assert_eq!(id, 4);
        let csv = k.metrics_csv();
        assert_eq!(csv.lines().count(), 3, "{csv}");
    }
}
