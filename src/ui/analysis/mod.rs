//! The "Analysis" window: comparing kept traces (`kept`), scans of one input, the
//! dose–response of an agent, permeability-ratio fits (`fit_view`) and a control family
//! against the present one (`lost`). Scans, dose–responses and fits run on a background
//! thread (rayon inside, through `analysis::scan`), with a progress bar and Cancel, so the
//! window keeps drawing and the live run keeps running. Each plot ([`PlotView`]) reads its
//! curves at the pointer's x and has a "Fit view" button; a scan's values are listed in a
//! table and exported with the command line's own CSV writer.

pub mod fit;
pub mod kept;
pub mod lost;
pub mod replace;

use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::mpsc::{Receiver, TryRecvError, channel};
use std::time::Instant;

use egui::{Color32, RichText, Ui};
use egui_plot::{
    HoverPosition, Legend, Line, LineStyle, MarkerShape, Plot, PlotPoints, PlotUi, Points, VLine,
};

use crate::analysis::metrics::{DoseResponse, SpikeSettings, dose_response};
use crate::analysis::scan::{NernstLine, ScanControl, ScanPoint, ScanRange, Vary, nernst_line, scan};
use crate::scenario::Scenario;
use crate::ui::command::Command;
use crate::ui::dialogs::export::ExportKind;
use crate::ui::state::family::FamilyResult;
use crate::ui::theme::{neutral_color, potential_color, species_color};
use fit::{FitForm, FitOutput};
use kept::Kept;
use replace::{ReplaceForm, ReplaceOutput};

/// What the analysis window asks for (inside [`Command::Analysis`]).
#[derive(Debug, Clone, PartialEq)]
pub enum AnalysisCommand {
    /// Open or close the window.
    Show(bool),
    /// Keep the shown run as a reference trace.
    Keep,
    SetKeptVisible(usize, bool),
    RenameKept(usize, String),
    DeleteKept(usize),
    /// The kept trace the others are compared with, or none.
    SetBaseline(Option<usize>),
    /// Start the scan in the scan form.
    StartScan,
    /// Start the replacement in the bath of the replacement form.
    StartReplace,
    /// Start the dose–response in its form.
    StartDose,
    /// Start the fit of the loaded points.
    StartFit,
    /// Stop the computation under way.
    Cancel,
    /// Choose a CSV of measured points with a file dialog (or a typed path).
    ChooseFitData,
    /// Load measured points from this file.
    LoadFitData(PathBuf),
    /// Keep the present family's measurements as the control of the "Lost current" tab.
    KeepControlFamily,
    /// Drop the kept control family.
    ForgetControlFamily,
}

/// The window's tabs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum AnalysisTab {
    #[default]
    Compare,
    Scan,
    DoseResponse,
    Fit,
    /// A control family against the present one, and IC50 on current.
    LostCurrent,
}

impl AnalysisTab {
    const ALL: [AnalysisTab; 5] = [
        AnalysisTab::Compare,
        AnalysisTab::Scan,
        AnalysisTab::DoseResponse,
        AnalysisTab::Fit,
        AnalysisTab::LostCurrent,
    ];

    fn label(self) -> &'static str {
        match self {
            AnalysisTab::Compare => "Compare",
            AnalysisTab::Scan => "Scan",
            AnalysisTab::DoseResponse => "Dose–response",
            AnalysisTab::Fit => "Fit",
            AnalysisTab::LostCurrent => "Lost current",
        }
    }
}

/// Every input a scan or a fit can vary in `s` (not a concentration a solution sets: its
/// recipe is what changes).
pub fn vary_choices(s: &Scenario) -> Vec<Vary> {
    let mut out = vec![Vary::TemperatureC];
    for sp in &s.species {
        out.push(Vary::OutsideMm(sp.name.clone()));
        out.push(Vary::InsideMm(sp.name.clone()));
        out.push(Vary::Permeability(sp.name.clone()));
    }
    out.extend(s.agent_labels().map(|l| Vary::DoseUm(l.to_string())));
    out.retain(|v| v.check(s).is_ok());
    out
}

/// A sensible range for `vary` around its value in `s`: linear from a tenth to twice the value
/// for concentrations (a bath series or a substitution stays near the physiological value),
/// two decades each way on a log scale for permeabilities and doses (they act over decades),
/// 0–40 °C for temperature.
pub fn default_range(s: &Scenario, vary: &Vary) -> ScanRange {
    let v = vary.value_in(s).unwrap_or(0.0);
    let around = |decades: f64, fallback: (f64, f64)| {
        let (from, to) = if v > 0.0 {
            (v / 10f64.powf(decades), v * 10f64.powf(decades))
        } else {
            fallback
        };
        ScanRange {
            from,
            to,
            points: 50,
            log: true,
        }
    };
    match vary {
        Vary::TemperatureC => ScanRange {
            from: 0.0,
            to: 40.0,
            points: 41,
            log: false,
        },
        Vary::OutsideMm(_) | Vary::InsideMm(_) => {
            let (from, to) = if v > 0.0 { (0.1 * v, 2.0 * v) } else { (0.0, 10.0) };
            ScanRange {
                from,
                to,
                points: 39,
                log: false,
            }
        }
        Vary::Permeability(_) => around(2.0, (1e-9, 1e-5)),
        Vary::DoseUm(_) => around(2.0, (0.01, 100.0)),
    }
}

/// The first choice to offer: bath potassium when there is a K+, else the first species' bath,
/// else the first input that can be varied.
fn default_vary(s: &Scenario) -> Vary {
    let name = s
        .species
        .iter()
        .find(|x| x.name == "K+")
        .or(s.species.first())
        .map(|x| x.name.clone());
    let choices = vary_choices(s);
    name.map(Vary::OutsideMm)
        .filter(|v| choices.contains(v))
        .or(choices.into_iter().find(|v| *v != Vary::TemperatureC))
        .unwrap_or(Vary::TemperatureC)
}

/// A picker of the varied input; returns whether the choice changed.
pub fn vary_picker(ui: &mut Ui, id: &str, s: &Scenario, vary: &mut Vary) -> bool {
    let mut changed = false;
    let label = ui.label("Vary");
    egui::ComboBox::from_id_salt(id)
        .selected_text(vary.label())
        .width(220.0)
        .show_ui(ui, |ui| {
            for c in vary_choices(s) {
                if ui.selectable_label(*vary == c, c.label()).clicked() && *vary != c {
                    *vary = c;
                    changed = true;
                }
            }
        })
        .response
        .labelled_by(label.id);
    changed
}

/// The form of a scan.
#[derive(Debug, Clone, PartialEq)]
pub struct ScanForm {
    pub vary: Vary,
    pub range: ScanRange,
}

/// A finished scan.
#[derive(Debug, Clone, PartialEq)]
pub struct ScanOutput {
    pub vary: Vary,
    pub range: ScanRange,
    pub points: Vec<ScanPoint>,
    pub nernst: Option<NernstLine>,
    pub elapsed_ms: f64,
}

/// The form of a dose–response.
#[derive(Debug, Clone, PartialEq)]
pub struct DoseForm {
    pub label: String,
    pub from_um: f64,
    pub to_um: f64,
    pub points: usize,
    pub count_spikes: bool,
}

/// What the Scan tab varies: one input of the scenario, or one compound of the bath solution
/// replaced by another.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ScanKind {
    #[default]
    Input,
    Replace,
}

/// What a background computation sends back.
enum Outcome {
    Scan(Result<ScanOutput, String>),
    Replace(Result<ReplaceOutput, String>),
    Dose(Result<DoseResponse, String>),
    Fit(Result<FitOutput, String>),
}

/// What a background computation computes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum JobKind {
    Scan,
    Replace,
    Dose,
    Fit,
}

impl JobKind {
    /// Its name in the progress bar and messages.
    fn name(self) -> &'static str {
        match self {
            JobKind::Scan => "scan",
            JobKind::Replace => "replacement",
            JobKind::Dose => "dose–response",
            JobKind::Fit => "fit",
        }
    }
}

/// A computation under way.
struct Job {
    what: JobKind,
    /// Points to compute, for the progress bar (0: unknown).
    total: usize,
    progress: Arc<AtomicUsize>,
    cancel: Arc<AtomicBool>,
    rx: Receiver<Outcome>,
}

/// The analysis window's state: runtime only, never saved.
#[derive(Default)]
pub struct Analysis {
    pub open: bool,
    pub tab: AnalysisTab,
    pub kept: Kept,
    pub scan_form: Option<ScanForm>,
    pub scan: Option<Result<ScanOutput, String>>,
    /// Which of the Scan tab's two forms is shown and computed.
    pub scan_kind: ScanKind,
    /// The replacement form; `None` when the bath is not a solution.
    pub replace_form: Option<ReplaceForm>,
    pub replace: Option<Result<ReplaceOutput, String>>,
    pub dose_form: Option<DoseForm>,
    pub dose: Option<Result<DoseResponse, String>>,
    pub fit: FitForm,
    /// The views of the scan, dose–response and fit plots.
    pub scan_view: PlotView,
    pub replace_view: PlotView,
    pub dose_view: PlotView,
    pub fit_view: PlotView,
    /// The family kept as control for the "Lost current" tab.
    pub control_family: Option<lost::ControlFamily>,
    job: Option<Job>,
}

impl Analysis {
    /// Whether a computation is under way.
    pub fn busy(&self) -> bool {
        self.job.is_some()
    }

    /// Brings the forms in line with the scenario (a renamed species, a removed agent).
    fn follow(&mut self, s: &Scenario) {
        let stale = self.scan_form.as_ref().is_none_or(|f| f.vary.check(s).is_err());
        if stale {
            let vary = default_vary(s);
            self.scan_form = Some(ScanForm {
                range: default_range(s, &vary),
                vary,
            });
        }
        let agents: Vec<String> = s.agent_labels().map(str::to_string).collect();
        let stale = self.dose_form.as_ref().is_none_or(|f| !agents.contains(&f.label));
        if stale {
            self.dose_form = agents.first().map(|label| {
                let r = default_range(s, &Vary::DoseUm(label.clone()));
                let ic50 = s.agent_ic50_um(label);
                let (from_um, to_um) = match ic50 {
                    Some(c) if c > 0.0 => (c / 100.0, c * 100.0),
                    _ => (r.from, r.to),
                };
                DoseForm {
                    label: label.clone(),
                    from_um,
                    to_um,
                    points: 25,
                    count_spikes: !s.channels.is_empty(),
                }
            });
        }
        if self
            .replace_form
            .as_ref()
            .is_none_or(|f| !replace::still_fits(f, s))
        {
            let first = self.replace_form.is_none();
            self.replace_form = replace::default_form(s);
            // Where the bath is a recipe, its concentrations cannot be scanned one by one, so
            // the replacement is what the tab first offers.
            if first && self.replace_form.is_some() {
                self.scan_kind = ScanKind::Replace;
            }
        }
        if self.replace_form.is_none() {
            self.scan_kind = ScanKind::Input;
        }
        self.fit.follow(s);
    }

    /// The values of the scan shown in the Scan tab as CSV, the columns `permeant scan --csv`
    /// writes for it; `None` before one is computed.
    pub fn scan_csv(&self) -> Option<String> {
        match self.scan_kind {
            ScanKind::Input => match &self.scan {
                Some(Ok(out)) => Some(crate::analysis::scan::scan_csv(&out.points)),
                _ => None,
            },
            ScanKind::Replace => match &self.replace {
                Some(Ok(out)) => Some(crate::solutions::replace::replace_csv(&out.points)),
                _ => None,
            },
        }
    }

    /// Applies a command that needs only the analysis state and the scenario.
    pub fn apply(&mut self, c: AnalysisCommand, s: &Scenario, ctx: &egui::Context) {
        self.follow(s);
        match c {
            AnalysisCommand::Show(on) => self.open = on,
            AnalysisCommand::SetKeptVisible(i, on) => self.kept.set_visible(i, on),
            AnalysisCommand::RenameKept(i, name) => self.kept.rename(i, name),
            AnalysisCommand::DeleteKept(i) => self.kept.delete(i),
            AnalysisCommand::SetBaseline(b) => self.kept.set_baseline(b),
            AnalysisCommand::StartScan => self.start_scan(s, ctx),
            AnalysisCommand::StartReplace => self.start_replace(s, ctx),
            AnalysisCommand::StartDose => self.start_dose(s, ctx),
            AnalysisCommand::StartFit => self.start_fit(s, ctx),
            AnalysisCommand::Cancel => {
                if let Some(job) = self.job.take() {
                    job.cancel.store(true, Ordering::Relaxed);
                }
            }
            AnalysisCommand::LoadFitData(path) => self.fit.load(&path),
            AnalysisCommand::ForgetControlFamily => self.control_family = None,
            // Keeping needs the run or the family, and choosing a file the app's file chooser:
            // the app does those.
            AnalysisCommand::Keep | AnalysisCommand::ChooseFitData | AnalysisCommand::KeepControlFamily => {}
        }
    }

    fn spawn(
        &mut self,
        what: JobKind,
        total: usize,
        ctx: &egui::Context,
        work: impl FnOnce(ScanControl) -> Outcome + Send + 'static,
    ) {
        if self.job.is_some() {
            return;
        }
        let progress = Arc::new(AtomicUsize::new(0));
        let cancel = Arc::new(AtomicBool::new(false));
        let control = ScanControl {
            progress: Some(progress.clone()),
            cancel: Some(cancel.clone()),
        };
        let (tx, rx) = channel();
        let ctx = ctx.clone();
        let spawned = std::thread::Builder::new()
            .name(format!("permeant {}", what.name()))
            .spawn(move || {
                let _ = tx.send(work(control));
                ctx.request_repaint();
            });
        if spawned.is_ok() {
            self.job = Some(Job {
                what,
                total,
                progress,
                cancel,
                rx,
            });
        }
    }

    fn start_scan(&mut self, s: &Scenario, ctx: &egui::Context) {
        let Some(form) = self.scan_form.clone() else {
            return;
        };
        let s = s.clone();
        self.spawn(JobKind::Scan, form.range.points, ctx, move |control| {
            let started = Instant::now();
            let out = scan(&s, &form.vary, &form.range, &control).map(|points| {
                let values: Vec<f64> = points.iter().map(|p| p.value).collect();
                ScanOutput {
                    nernst: nernst_line(&s, &form.vary, &values),
                    vary: form.vary.clone(),
                    range: form.range,
                    points,
                    elapsed_ms: started.elapsed().as_secs_f64() * 1e3,
                }
            });
            Outcome::Scan(out.map_err(|e| e.to_string()))
        });
    }

    fn start_replace(&mut self, s: &Scenario, ctx: &egui::Context) {
        let Some(form) = self.replace_form.clone() else {
            return;
        };
        let s = s.clone();
        self.spawn(JobKind::Replace, form.points, ctx, move |control| {
            Outcome::Replace(replace::compute(&s, &form, &control))
        });
    }

    fn start_dose(&mut self, s: &Scenario, ctx: &egui::Context) {
        let Some(form) = self.dose_form.clone() else {
            return;
        };
        let s = s.clone();
        let total = form.points * if form.count_spikes { 2 } else { 1 };
        self.spawn(JobKind::Dose, total, ctx, move |control| {
            let spikes = form.count_spikes.then(SpikeSettings::default);
            let out = dose_response(
                &s,
                &form.label,
                form.from_um,
                form.to_um,
                form.points,
                spikes,
                &control,
            );
            Outcome::Dose(out.map_err(|e| e.to_string()))
        });
    }

    fn start_fit(&mut self, s: &Scenario, ctx: &egui::Context) {
        let Some(task) = self.fit.task(s) else {
            return;
        };
        self.fit.result = None;
        self.spawn(JobKind::Fit, 0, ctx, move |control| {
            Outcome::Fit(task.run(&control))
        });
    }

    /// Takes in a finished computation. Call once per frame.
    pub fn poll(&mut self, ctx: &egui::Context) {
        let Some(job) = &self.job else { return };
        let outcome = match job.rx.try_recv() {
            Ok(o) => o,
            Err(TryRecvError::Empty) => {
                ctx.request_repaint();
                return;
            }
            Err(TryRecvError::Disconnected) => {
                let what = job.what;
                self.job = None;
                let lost = format!("the {} stopped without a result", what.name());
                match what {
                    JobKind::Scan => self.scan = Some(Err(lost)),
                    JobKind::Replace => self.replace = Some(Err(lost)),
                    JobKind::Fit => self.fit.result = Some(Err(lost)),
                    JobKind::Dose => self.dose = Some(Err(lost)),
                }
                return;
            }
        };
        self.job = None;
        match outcome {
            Outcome::Scan(r) => self.scan = Some(r),
            Outcome::Replace(r) => self.replace = Some(r),
            Outcome::Dose(r) => self.dose = Some(r),
            Outcome::Fit(r) => self.fit.result = Some(r),
        }
    }

    /// The window.
    pub fn show(
        &mut self,
        ui: &Ui,
        s: &Scenario,
        can_keep: bool,
        family: Option<&FamilyResult>,
        commands: &mut Vec<Command>,
    ) {
        self.follow(s);
        let mut open = self.open;
        let ctx = ui.ctx().clone();
        let area = ctx.content_rect();
        egui::Window::new("Analysis")
            .open(&mut open)
            .default_size([600.0, 420.0_f32.min(area.height() * 0.6)])
            .default_pos(area.right_top() + egui::vec2(-650.0, 80.0))
            .max_height(area.height() - 60.0)
            .show(&ctx, |ui| {
                ui.horizontal(|ui| {
                    for tab in AnalysisTab::ALL {
                        if ui.selectable_label(self.tab == tab, tab.label()).clicked() {
                            self.tab = tab;
                        }
                    }
                });
                ui.separator();
                self.job_bar(ui, commands);
                match self.tab {
                    AnalysisTab::Compare => kept::show(ui, &self.kept, can_keep, commands),
                    AnalysisTab::Scan => self.scan_tab(ui, s, commands),
                    AnalysisTab::DoseResponse => self.dose_tab(ui, commands),
                    AnalysisTab::Fit => {
                        let busy = self.job.is_some();
                        fit::show(ui, &mut self.fit, s, busy, &mut self.fit_view, commands);
                    }
                    AnalysisTab::LostCurrent => {
                        lost::show(ui, self.control_family.as_ref(), family, s, commands);
                    }
                }
            });
        if !open {
            commands.push(Command::Analysis(AnalysisCommand::Show(false)));
        }
    }

    fn job_bar(&self, ui: &mut Ui, commands: &mut Vec<Command>) {
        let Some(job) = &self.job else { return };
        ui.horizontal(|ui| {
            let done = job.progress.load(Ordering::Relaxed);
            if job.total > 0 {
                let f = (done as f32 / job.total as f32).clamp(0.0, 1.0);
                ui.add(egui::ProgressBar::new(f).desired_width(260.0).text(format!(
                    "{}: {done} of {} points",
                    job.what.name(),
                    job.total
                )));
            } else {
                ui.spinner();
                ui.label(format!("{} under way…", job.what.name()));
            }
            if ui.button("Cancel").clicked() {
                commands.push(Command::Analysis(AnalysisCommand::Cancel));
            }
        });
    }

    fn scan_tab(&mut self, ui: &mut Ui, s: &Scenario, commands: &mut Vec<Command>) {
        if self.replace_form.is_some() {
            ui.horizontal(|ui| {
                ui.radio_value(&mut self.scan_kind, ScanKind::Input, "Vary one input")
                    .on_hover_text("Temperature, a permeability, a dose, or a concentration no solution sets");
                ui.radio_value(&mut self.scan_kind, ScanKind::Replace, "Replace a bath compound")
                    .on_hover_text(
                        "An ion substitution: one compound of the bath solution replaced by another, mM for mM",
                    );
            });
        }
        match self.scan_kind {
            ScanKind::Input => self.input_scan(ui, s, commands),
            ScanKind::Replace => self.replace_scan(ui, s, commands),
        }
    }

    fn replace_scan(&mut self, ui: &mut Ui, s: &Scenario, commands: &mut Vec<Command>) {
        let busy = self.job.is_some();
        let Some(form) = &mut self.replace_form else {
            return;
        };
        replace::form_ui(ui, s, form);
        let labels = ScanLabels {
            compute: "Compute replacement",
            compute_hover: "GHK and steady-state potential and the junction potential at each mix, on every core",
            start: AnalysisCommand::StartReplace,
            columns: "value,ghk_mv,resting_mv,ljp_mv",
            noun: "mixes",
            id: "replace values",
        };
        let view = &mut self.replace_view;
        scan_results(
            ui,
            busy,
            &labels,
            &self.replace,
            replace::table,
            |ui, out| replace::plot(ui, out, view),
            commands,
        );
    }

    fn input_scan(&mut self, ui: &mut Ui, s: &Scenario, commands: &mut Vec<Command>) {
        let can_replace = self.replace_form.is_some();
        let busy = self.job.is_some();
        let Some(form) = &mut self.scan_form else {
            return;
        };
        ui.horizontal(|ui| {
            if vary_picker(ui, "scan vary", s, &mut form.vary) {
                form.range = default_range(s, &form.vary);
            }
        });
        let from_solutions: Vec<&str> = [s.outside.as_deref(), s.inside.as_deref()]
            .into_iter()
            .flatten()
            .collect();
        if !from_solutions.is_empty() {
            let replacing = if can_replace {
                " or by \"Replace a bath compound\""
            } else {
                ""
            };
            ui.label(
                RichText::new(format!(
                    "Concentrations set by the solution {} are changed through its recipe (Solutions tab){replacing}, not scanned here.",
                    from_solutions
                        .iter()
                        .map(|n| format!("\"{n}\""))
                        .collect::<Vec<_>>()
                        .join(" and ")
                ))
                .small()
                .weak(),
            );
        }
        range_fields(ui, &mut form.range, form.vary.unit(), true);
        let labels = ScanLabels {
            compute: "Compute scan",
            compute_hover: "GHK and steady-state potential at each point, on every core",
            start: AnalysisCommand::StartScan,
            columns: "value,ghk_mv,resting_mv",
            noun: "points",
            id: "scan values",
        };
        let view = &mut self.scan_view;
        scan_results(
            ui,
            busy,
            &labels,
            &self.scan,
            scan_table,
            |ui, out| scan_plot(ui, out, view),
            commands,
        );
    }

    fn dose_tab(&mut self, ui: &mut Ui, commands: &mut Vec<Command>) {
        let busy = self.job.is_some();
        let Some(form) = &mut self.dose_form else {
            ui.label(
                RichText::new("The scenario has no agent. Add a blocking agent to the protocol first.")
                    .weak(),
            );
            return;
        };
        ui.horizontal(|ui| {
            ui.label(format!("Agent: {}", form.label));
        });
        ui.horizontal(|ui| {
            ui.label("Doses from");
            log_value(ui, &mut form.from_um, " µM");
            ui.label("to");
            log_value(ui, &mut form.to_um, " µM");
            ui.label("points");
            ui.add(egui::DragValue::new(&mut form.points).range(2..=500));
        });
        ui.checkbox(
            &mut form.count_spikes,
            "Count spikes over a full run at each dose",
        )
        .on_hover_text("For excitable cells; one simulated run per dose");
        ui.horizontal(|ui| {
            if ui
                .add_enabled(!busy, egui::Button::new("Compute dose–response"))
                .clicked()
            {
                commands.push(Command::Analysis(AnalysisCommand::StartDose));
            }
        });
        match &self.dose {
            None => {}
            Some(Err(e)) => {
                ui.label(RichText::new(e).color(ui.visuals().error_fg_color));
            }
            Some(Ok(d)) => dose_plot(ui, d, &mut self.dose_view),
        }
    }
}

/// What the Scan tab's two scans (one input, a replacement in the bath) write alike.
struct ScanLabels {
    compute: &'static str,
    compute_hover: &'static str,
    start: AnalysisCommand,
    /// The CSV's columns, as the export's hover names them.
    columns: &'static str,
    /// What one row is ("points", "mixes").
    noun: &'static str,
    id: &'static str,
}

/// A computed scan's size and the time it took.
trait Computed {
    fn rows(&self) -> usize;
    fn elapsed_ms(&self) -> f64;
}

impl Computed for ScanOutput {
    fn rows(&self) -> usize {
        self.points.len()
    }
    fn elapsed_ms(&self) -> f64 {
        self.elapsed_ms
    }
}

impl Computed for ReplaceOutput {
    fn rows(&self) -> usize {
        self.points.len()
    }
    fn elapsed_ms(&self) -> f64 {
        self.elapsed_ms
    }
}

/// The part of the Scan tab both scans share: the compute button, then once computed the
/// export of its values and the time it took, and the error or the table of values (folded)
/// and the plot.
fn scan_results<T: Computed>(
    ui: &mut Ui,
    busy: bool,
    labels: &ScanLabels,
    result: &Option<Result<T, String>>,
    table: impl FnOnce(&mut Ui, &T),
    plot: impl FnOnce(&mut Ui, &T),
    commands: &mut Vec<Command>,
) {
    ui.horizontal(|ui| {
        if ui
            .add_enabled(!busy, egui::Button::new(labels.compute))
            .on_hover_text(labels.compute_hover)
            .clicked()
        {
            commands.push(Command::Analysis(labels.start.clone()));
        }
        if let Some(Ok(out)) = result {
            if ui
                .button("Export values as CSV…")
                .on_hover_text(format!(
                    "{}: the table `permeant scan --csv` writes",
                    labels.columns
                ))
                .clicked()
            {
                commands.push(Command::Export(ExportKind::ScanCsv));
            }
            ui.label(
                RichText::new(format!(
                    "{} {} in {:.1} ms",
                    out.rows(),
                    labels.noun,
                    out.elapsed_ms()
                ))
                .weak(),
            );
        }
    });
    match result {
        None => {}
        Some(Err(e)) => {
            ui.label(RichText::new(e).color(ui.visuals().error_fg_color));
        }
        Some(Ok(out)) => {
            egui::CollapsingHeader::new(format!("Values ({} {})", out.rows(), labels.noun))
                .id_salt(labels.id)
                .show(ui, |ui| table(ui, out));
            plot(ui, out);
        }
    }
}

/// A positive value that may span decades: dragging moves it by a percentage.
fn log_value(ui: &mut Ui, v: &mut f64, unit: &str) {
    let speed = (v.abs() * 0.01).max(1e-12);
    ui.add(
        egui::DragValue::new(v)
            .speed(speed)
            .range(0.0..=f64::MAX)
            .suffix(unit)
            // Permeabilities are 1e-9 to 1e-5 cm/s: four decimals read them all as 0.0000.
            .custom_formatter(|x, _| short(x))
            .min_decimals(1),
    );
}

fn range_fields(ui: &mut Ui, r: &mut ScanRange, unit: &str, allow_linear: bool) {
    ui.horizontal(|ui| {
        let u = format!(" {unit}");
        ui.label("From");
        if r.log {
            log_value(ui, &mut r.from, &u);
        } else {
            ui.add(egui::DragValue::new(&mut r.from).speed(0.1).suffix(&u));
        }
        ui.label("to");
        if r.log {
            log_value(ui, &mut r.to, &u);
        } else {
            ui.add(egui::DragValue::new(&mut r.to).speed(0.1).suffix(&u));
        }
        ui.label("points");
        ui.add(egui::DragValue::new(&mut r.points).range(1..=10_000));
        if allow_linear {
            ui.radio_value(&mut r.log, false, "linear");
            ui.radio_value(&mut r.log, true, "log");
        }
    });
}

/// A short number for an axis tick or a label.
pub fn short(v: f64) -> String {
    let a = v.abs();
    if a == 0.0 {
        "0".into()
    } else if !(1e-3..1e5).contains(&a) {
        format!("{v:.2e}")
    } else if a >= 100.0 {
        format!("{v:.0}")
    } else if a >= 1.0 {
        format!("{v:.2}")
    } else {
        format!("{v:.3}")
    }
}

/// The plot's x for a value: log10 on a log axis.
pub fn plot_x(v: f64, log: bool) -> f64 {
    if log { v.log10() } else { v }
}

/// The value of the curve `points` (sorted by x) at `x`, linearly interpolated; `None` outside it.
pub fn curve_at(points: &[[f64; 2]], x: f64) -> Option<f64> {
    let k = points.partition_point(|p| p[0] < x);
    match (k.checked_sub(1).and_then(|j| points.get(j)), points.get(k)) {
        (_, Some(b)) if b[0] == x => Some(b[1]),
        (Some(a), Some(b)) if b[0] > a[0] => Some(a[1] + (x - a[0]) / (b[0] - a[0]) * (b[1] - a[1])),
        _ => None,
    }
}

/// What the curves read at plot x `x`: the input with its unit, then each curve's potential.
pub fn readout(x_label: &str, log: bool, x: f64, curves: &[(String, Vec<[f64; 2]>)]) -> String {
    let value = if log { 10f64.powf(x) } else { x };
    let mut out = format!("{x_label}: {}", short(value));
    for (name, points) in curves {
        if let Some(v) = curve_at(points, x) {
            out += &format!("\n{name}: {v:.2} mV");
        }
    }
    out
}

/// A plot of potentials against an input, with a log axis when `log`. Its hover text reads
/// each of `curves` (name, points in plot coordinates, sorted by x) at the pointer's x, not
/// the pointer's own height.
pub fn potential_plot(
    id: &str,
    x_label: String,
    log: bool,
    height: f32,
    curves: Vec<(String, Vec<[f64; 2]>)>,
) -> Plot<'static> {
    // The hover text names the input with its unit, as the axis does.
    let hover_x = x_label.clone();
    // The legend goes in the top corner the first curve leaves free: a falling curve starts
    // at the top left (a substitution that hyperpolarizes), a rising one ends at the top right.
    let falling = curves
        .first()
        .and_then(|(_, p)| Some(p.first()?[1] > p.last()?[1]))
        .unwrap_or(false);
    let corner = if falling {
        egui_plot::Corner::RightTop
    } else {
        egui_plot::Corner::LeftTop
    };
    Plot::new(id.to_string())
        .height(height)
        .x_axis_label(if log {
            format!("{x_label}, log scale")
        } else {
            x_label
        })
        .y_axis_label("Potential (mV)")
        .y_axis_min_width(40.0)
        .legend(Legend::default().position(corner).background_alpha(0.6))
        .x_axis_formatter(move |mark, _| short(if log { 10f64.powf(mark.value) } else { mark.value }))
        .label_formatter(move |h: &HoverPosition<'_>| {
            let (near, p) = match h {
                HoverPosition::NearDataPoint {
                    plot_name, position, ..
                } => (Some((*plot_name, position.y)), *position),
                HoverPosition::Elsewhere { position } => (None, *position),
            };
            let mut text = readout(&hover_x, log, p.x, &curves);
            // A point that is no curve (a measured one) is read as it is.
            if let Some((name, y)) = near
                && !name.is_empty()
                && !curves.iter().any(|c| c.0 == name)
            {
                text += &format!("\n{name}: {y:.2} mV");
            }
            Some(text)
        })
}

/// An analysis plot as the user moves it: "Fit view" brings all the data back after a zoom or
/// a drag, and the curves' values at the pointer's x are written above the plot.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct PlotView {
    fit: bool,
    /// The bounds last drawn, in plot coordinates (log10 of the input on a log axis):
    /// `[x_min, x_max, y_min, y_max]`.
    pub bounds: Option<[f64; 4]>,
    /// Where the plot's frame was last drawn, in points.
    pub rect: Option<egui::Rect>,
    /// The curves read at the pointer's x, while the pointer is over the plot.
    pub reading: Option<String>,
}

impl PlotView {
    /// Draws the plot of `curves` (read at the pointer) with the items `add` draws.
    pub fn show(
        &mut self,
        ui: &mut Ui,
        id: &str,
        x_label: String,
        log: bool,
        curves: Vec<(String, Vec<[f64; 2]>)>,
        add: impl FnOnce(&mut PlotUi<'_>),
    ) {
        self.show_with_height(ui, id, x_label, log, curves, None, add);
    }

    /// [`PlotView::show`] at a given height (the rest of the space when `None`).
    #[allow(clippy::too_many_arguments)]
    pub fn show_with_height(
        &mut self,
        ui: &mut Ui,
        id: &str,
        x_label: String,
        log: bool,
        mut curves: Vec<(String, Vec<[f64; 2]>)>,
        height: Option<f32>,
        add: impl FnOnce(&mut PlotUi<'_>),
    ) {
        // Read by x, whichever way the scan ran.
        for (_, points) in &mut curves {
            points.sort_by(|a, b| a[0].total_cmp(&b[0]));
        }
        ui.horizontal_wrapped(|ui| {
            if ui
                .button("Fit view")
                .on_hover_text("Show all the data again after zooming or dragging")
                .clicked()
            {
                self.fit = true;
            }
            let text = self.reading.as_deref().map_or_else(
                || RichText::new("Point at the plot to read the curves").weak(),
                |r| RichText::new(r.replace('\n', "  ·  ")),
            );
            ui.label(text);
        });
        let height = height.unwrap_or_else(|| ui.available_height()).max(160.0);
        let mut plot = potential_plot(id, x_label.clone(), log, height, curves.clone());
        if std::mem::take(&mut self.fit) {
            plot = plot.reset();
        }
        let shown = plot.show(ui, add);
        let b = shown.transform.bounds();
        self.bounds = Some([b.min()[0], b.max()[0], b.min()[1], b.max()[1]]);
        self.rect = Some(*shown.transform.frame());
        let reading = shown.response.hover_pos().map(|pos| {
            let x = shown.transform.value_from_position(pos).x;
            readout(&x_label, log, x, &curves)
        });
        if reading != self.reading {
            self.reading = reading;
            ui.ctx().request_repaint();
        }
    }
}

fn line_of(points: impl Iterator<Item = (f64, Option<f64>)>, log: bool) -> Vec<[f64; 2]> {
    points
        .filter_map(|(x, y)| Some([plot_x(x, log), y?]))
        .filter(|p| p[0].is_finite() && p[1].is_finite())
        .collect()
}

/// The scan's values, as `permeant scan` prints them.
fn scan_table(ui: &mut Ui, out: &ScanOutput) {
    egui::ScrollArea::vertical()
        .id_salt("scan table")
        .max_height(160.0)
        .show(ui, |ui| {
            egui::Grid::new("scan values grid")
                .striped(true)
                .spacing([16.0, 2.0])
                .show(ui, |ui| {
                    ui.label(
                        RichText::new(format!("{} ({})", out.vary.quantity(), out.vary.unit())).strong(),
                    );
                    ui.label(RichText::new("GHK potential (mV)").strong());
                    ui.label(RichText::new("Steady state (mV)").strong());
                    if let Some(n) = &out.nernst {
                        ui.label(RichText::new(format!("E {} (mV)", n.species)).strong());
                    }
                    ui.end_row();
                    let mv = |x: Option<f64>| x.map_or("—".to_string(), |v| format!("{v:.2}"));
                    for (k, p) in out.points.iter().enumerate() {
                        ui.label(short(p.value));
                        let ghk = ui.label(mv(p.ghk_mv));
                        if let Some(why) = &p.ghk_undefined {
                            ghk.on_hover_text(why.to_string());
                        }
                        let rest = ui.label(mv(p.resting_mv));
                        if let Some(why) = &p.resting_undefined {
                            rest.on_hover_text(why.to_string());
                        }
                        if let Some(n) = &out.nernst {
                            ui.label(mv(n.e_mv.get(k).copied().flatten()));
                        }
                        ui.end_row();
                    }
                });
        });
}

fn scan_plot(ui: &mut Ui, out: &ScanOutput, view: &mut PlotView) {
    let dark = ui.visuals().dark_mode;
    let log = out.range.log;
    let ghk = line_of(out.points.iter().map(|p| (p.value, p.ghk_mv)), log);
    let rest = line_of(out.points.iter().map(|p| (p.value, p.resting_mv)), log);
    let nernst = out.nernst.as_ref().map(|n| {
        let name = format!("Nernst {} ({:+.1} mV/decade)", n.species, n.slope_mv_per_decade);
        let e = line_of(
            out.points.iter().map(|p| p.value).zip(n.e_mv.iter().copied()),
            log,
        );
        (name.clone(), name, e)
    });
    let mut curves = vec![
        ("Steady state".to_string(), rest.clone()),
        ("GHK potential".to_string(), ghk.clone()),
    ];
    curves.extend(
        nernst
            .iter()
            .map(|(_, short_name, e)| (short_name.clone(), e.clone())),
    );
    view.show(ui, "scan plot", out.vary.label(), log, curves, |pui| {
        if let Some((name, _, e)) = nernst {
            pui.line(
                Line::new(name, PlotPoints::new(e))
                    .color(species_color(0).gamma_multiply(0.9))
                    .style(LineStyle::dashed_loose())
                    .width(1.5),
            );
        }
        potential_lines(pui, dark, ghk, rest);
    });
}

/// A scan's GHK potential (dotted) and steady state (solid, its points marked when there are
/// few enough to tell apart), in the same look on every scan plot.
pub fn potential_lines(pui: &mut PlotUi<'_>, dark: bool, ghk: Vec<[f64; 2]>, rest: Vec<[f64; 2]>) {
    pui.line(
        Line::new("GHK potential", PlotPoints::new(ghk))
            .color(neutral_color(dark))
            .style(LineStyle::dotted_dense())
            .width(2.0),
    );
    pui.line(
        Line::new("Steady state", PlotPoints::new(rest.clone()))
            .color(potential_color(dark))
            .width(2.0),
    );
    if rest.len() <= 60 {
        pui.points(
            Points::new("Steady state", PlotPoints::new(rest))
                .color(potential_color(dark))
                .radius(2.0),
        );
    }
}

fn dose_plot(ui: &mut Ui, d: &DoseResponse, view: &mut PlotView) {
    let dark = ui.visuals().dark_mode;
    let v = line_of(d.points.iter().map(|p| (p.dose_um, p.resting_mv)), true);
    let counts: Vec<[f64; 2]> = d
        .points
        .iter()
        .filter_map(|p| Some([p.dose_um.log10(), p.spike_count? as f64]))
        .collect();
    let marker = Color32::from_rgb(204, 121, 167);
    ui.horizontal_wrapped(|ui| {
        ui.label(RichText::new(format!("IC50 for block: {} µM", short(d.ic50_um))).color(marker));
        if let Some(h) = d.half_effect_dose_um {
            ui.label(format!("·  half of the potential change at {} µM", short(h)));
        }
    });
    let total = ui.available_height().max(200.0);
    let upper = if counts.is_empty() { total } else { total * 0.6 };
    let x_label = format!("dose of {} (µM)", d.label);
    let curves = vec![("Steady state".to_string(), v.clone())];
    view.show_with_height(
        ui,
        "dose plot",
        x_label.clone(),
        true,
        curves,
        Some(upper),
        |pui| {
            pui.line(
                Line::new("Steady state", PlotPoints::new(v.clone()))
                    .color(potential_color(dark))
                    .width(2.0),
            );
            pui.points(
                Points::new("Doses", PlotPoints::new(v))
                    .color(potential_color(dark))
                    .radius(2.5),
            );
            if d.ic50_um > 0.0 {
                pui.vline(
                    VLine::new(format!("IC50 {} µM", short(d.ic50_um)), d.ic50_um.log10())
                        .color(marker)
                        .width(1.5)
                        .style(LineStyle::dashed_loose()),
                );
            }
            if let Some(h) = d.half_effect_dose_um {
                pui.vline(
                    VLine::new(format!("half effect {} µM", short(h)), h.log10())
                        .color(neutral_color(dark))
                        .style(LineStyle::dotted_loose()),
                );
            }
        },
    );
    if !counts.is_empty() {
        Plot::new("dose spikes")
            .height(ui.available_height().max(80.0))
            .x_axis_label(format!("{x_label}, log scale"))
            .y_axis_label("Spikes per run")
            .y_axis_min_width(40.0)
            .x_axis_formatter(|mark, _| short(10f64.powf(mark.value)))
            // A count is read at a dose that was run, never at the pointer's height.
            .label_formatter(|h: &HoverPosition<'_>| match h {
                HoverPosition::NearDataPoint { position, .. } => Some(format!(
                    "{} µM\n{:.0} spikes",
                    short(10f64.powf(position.x)),
                    position.y
                )),
                HoverPosition::Elsewhere { .. } => None,
            })
            .show(ui, |pui| {
                pui.points(
                    Points::new("Spikes", PlotPoints::new(counts))
                        .shape(MarkerShape::Square)
                        .color(species_color(1))
                        .radius(3.0),
                );
                if d.ic50_um > 0.0 {
                    pui.vline(VLine::new("IC50", d.ic50_um.log10()).color(marker));
                }
            });
    }
}
