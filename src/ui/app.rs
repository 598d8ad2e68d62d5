//! The application: the document, the live run, undo history and view state, the frame loop
//! (step the engine in `logic`, draw the panels in `ui`), and the one place where commands are
//! applied.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use egui::util::undoer::Undoer;
use egui::{Panel, Ui, ViewportCommand};

use crate::analysis::{RestReport, rest_report};
use crate::autosave::Autosave;
use crate::scenario::{self, Scenario, Valid};
use crate::ui::analysis::{Analysis, AnalysisCommand};
use crate::ui::command::{Command, FilePurpose, check_edit};
use crate::ui::dialogs::export::{ExportKind, Exporter, Shown};
use crate::ui::dialogs::files::{Chosen, FileChooser};
use crate::ui::dialogs::restore::{self, Autosaver, Offer};
use crate::ui::dialogs::{self, Dialog, Pending};
use crate::ui::panels::editor::{self, EditorInfo, EditorTab};
use crate::ui::panels::iv;
use crate::ui::panels::notes::{self, Side, SideTab};
use crate::ui::panels::plots::{PlotInput, Plots};
use crate::ui::panels::presentation::{self, PresentInfo, Presentation};
use crate::ui::panels::status::{self, StatusInfo};
use crate::ui::panels::toolbar::{self, ToolbarInfo};
use crate::ui::shortcuts::{self, KeyContext};
use crate::ui::state::document::{Document, Origin};
use crate::ui::state::prefs::{self, LowerPlot, Prefs, Store};
use crate::ui::state::runtime::Runtime;
use crate::ui::theme;
use crate::ui::widgets::Editing;

/// Wall time the engine may use per frame, leaving the rest of a 60 Hz frame for drawing.
const ENGINE_BUDGET: Duration = Duration::from_millis(8);
/// How long a notice stays in the status line.
const NOTICE_TIME: Duration = Duration::from_secs(6);

/// How the app is started.
#[derive(Debug, Clone, Default)]
pub struct AppOptions {
    /// A scenario file to open first.
    pub initial: Option<PathBuf>,
    /// Where preferences and recent files are kept ([`Store::default`] keeps them in memory).
    pub store: Store,
    /// When the process started, to report the time to the first frame.
    pub started: Option<Instant>,
    /// Print each frame's time to stderr, drawing frames continuously (`PERMEANT_FRAME_LOG=1`).
    pub frame_log: bool,
    /// Where the working scenario is autosaved; `None` autosaves nothing (tests pass a
    /// temporary directory here rather than through the environment, which tests share).
    pub autosave: Option<Autosave>,
}

/// Readouts that depend only on the scenario, recomputed when it changes.
struct Readouts {
    for_scenario: Option<Valid>,
    rest: Result<RestReport, String>,
    warnings: Vec<String>,
}

impl Readouts {
    fn refresh(&mut self, s: &Valid) {
        if self.for_scenario.as_ref() == Some(s) {
            return;
        }
        self.rest = rest_report(s).map_err(|e| e.to_string());
        self.warnings = scenario::warnings(s).iter().map(|w| w.message.clone()).collect();
        self.for_scenario = Some(s.clone());
    }
}

/// Frame timing, for the status line and `PERMEANT_FRAME_LOG`.
struct Timing {
    started: Option<Instant>,
    log: bool,
    frames: u64,
    frame_start: Instant,
    last_frame_ms: f64,
    /// Wall time between the starts of the last two frames (includes painting), ms.
    interval_ms: f64,
    /// Time from process start to the end of the first frame's layout.
    first_frame: Option<Duration>,
    /// Time from process start to the start of the second frame, i.e. once the first frame
    /// has been painted and presented.
    first_shown: Option<Duration>,
}

/// The window's whole state.
pub struct App {
    doc: Document,
    runtime: Runtime,
    /// Scenario edits only; traces and view settings are not undone.
    undo: Undoer<Valid>,
    prefs: Prefs,
    store: Store,
    recent: Vec<PathBuf>,
    readouts: Readouts,
    /// Bundled examples: file name and title.
    examples: Vec<(String, String)>,
    plots: Plots,
    files: FileChooser,
    dialog: Option<Dialog>,
    /// What to do once a "Save first" has saved.
    after_save: Option<Pending>,
    about_open: bool,
    editor_tab: EditorTab,
    notice: Option<(String, Instant)>,
    title_sent: String,
    /// Set when closing was confirmed, so the close request goes through.
    allow_close: bool,
    timing: Timing,
    /// Commands queued from outside the panels, applied at the end of the next frame.
    queued: Vec<Command>,
    presentation: Presentation,
    shortcuts_open: bool,
    /// The side panel: current–voltage view or notes.
    side: Side,
    exporter: Exporter,
    /// The central plot area as last drawn, in points (what a PNG export shows).
    plot_rect: egui::Rect,
    autosaver: Option<Autosaver>,
    /// What a crashed session left, until the user restores or discards it.
    offer: Option<Offer>,
    /// Kept traces, sweeps, dose–response and fits: runtime state, never saved or undone.
    analysis: Analysis,
}

impl App {
    pub fn new(cc: &eframe::CreationContext<'_>, options: AppOptions) -> Self {
        Self::with_context(&cc.egui_ctx, options)
    }

    /// Builds the app on an egui context (tests use this through `eframe`'s kittest harness).
    pub fn with_context(ctx: &egui::Context, options: AppOptions) -> Self {
        theme::install_text_styles(ctx);
        let prefs = options.store.load_prefs();
        let recent = options.store.load_recent();
        let doc = Document::fresh();
        let examples = crate::examples::EXAMPLES
            .iter()
            .map(|(file, text)| {
                let title = scenario::from_str(text, file)
                    .map(|s| s.title.clone())
                    .unwrap_or_default();
                (file.to_string(), title)
            })
            .collect();
        let mut app = App {
            runtime: Runtime::new(&doc.scenario),
            doc,
            undo: Undoer::default(),
            prefs,
            store: options.store,
            recent,
            readouts: Readouts {
                for_scenario: None,
                rest: Err(String::new()),
                warnings: Vec::new(),
            },
            examples,
            plots: Plots::default(),
            files: FileChooser::default(),
            dialog: None,
            after_save: None,
            about_open: false,
            editor_tab: EditorTab::default(),
            notice: None,
            title_sent: String::new(),
            allow_close: false,
            queued: Vec::new(),
            presentation: Presentation::default(),
            shortcuts_open: false,
            side: Side::default(),
            exporter: Exporter::default(),
            plot_rect: egui::Rect::NOTHING,
            autosaver: None,
            offer: None,
            analysis: Analysis::default(),
            timing: Timing {
                started: options.started,
                log: options.frame_log,
                frames: 0,
                frame_start: Instant::now(),
                last_frame_ms: 0.0,
                interval_ms: 0.0,
                first_frame: None,
                first_shown: None,
            },
        };
        theme::apply(ctx, &app.prefs);
        if let Some(store) = options.autosave {
            match Autosaver::begin(store) {
                Ok((saver, offer)) => {
                    app.autosaver = Some(saver);
                    app.offer = offer;
                }
                Err(e) => app.set_notice(format!("Autosave is off: {e}")),
            }
        }
        if let Some(path) = options.initial {
            app.perform(Pending::OpenPath(path), ctx);
        }
        app.readouts.refresh(&app.doc.scenario);
        app
    }

    /// The scenario being edited.
    pub fn scenario(&self) -> &Scenario {
        &self.doc.scenario
    }

    pub fn document(&self) -> &Document {
        &self.doc
    }

    pub fn runtime(&self) -> &Runtime {
        &self.runtime
    }

    pub fn prefs(&self) -> &Prefs {
        &self.prefs
    }

    /// The resting report shown in the editor, or why there is none.
    pub fn rest(&self) -> &Result<RestReport, String> {
        &self.readouts.rest
    }

    /// Kept traces and the analysis window's forms and results.
    pub fn analysis(&self) -> &Analysis {
        &self.analysis
    }

    /// The analysis window's forms, for scripts and tests (results come from commands).
    pub fn analysis_mut(&mut self) -> &mut Analysis {
        &mut self.analysis
    }

    /// The open dialog, if any.
    pub fn dialog(&self) -> Option<&Dialog> {
        self.dialog.as_ref()
    }

    /// The notice in the status line, if any.
    pub fn notice(&self) -> Option<&str> {
        self.notice.as_ref().map(|(n, _)| n.as_str())
    }

    /// Time from process start to the end of the first frame, once drawn.
    pub fn first_frame(&self) -> Option<Duration> {
        self.timing.first_frame
    }

    /// Time from process start until the first frame was on screen, once known.
    pub fn first_shown(&self) -> Option<Duration> {
        self.timing.first_shown
    }

    /// CPU time of the last frame (engine and drawing), ms.
    pub fn last_frame_ms(&self) -> f64 {
        self.timing.last_frame_ms
    }

    /// Queues a command to be applied at the end of the next frame, exactly as if a panel had
    /// returned it (tests and scripts drive the app this way).
    pub fn queue(&mut self, cmd: Command) {
        self.queued.push(cmd);
    }

    fn set_notice(&mut self, text: impl Into<String>) {
        self.notice = Some((text.into(), Instant::now()));
    }

    /// Applies one command now, as the end of a frame does.
    pub fn apply(&mut self, cmd: Command, ctx: &egui::Context) {
        match cmd {
            Command::Edit(edit) => match check_edit(&self.doc.scenario, &edit) {
                Ok(next) => {
                    if edit.is_discrete() {
                        self.undo.add_undo(&self.doc.scenario);
                    }
                    self.doc.scenario = next;
                }
                Err(reason) => self.set_notice(format!("Not changed: {reason}")),
            },
            Command::New => self.guarded(Pending::New, ctx),
            Command::Open => self.guarded(Pending::Open, ctx),
            Command::OpenPath(p) => self.guarded(Pending::OpenPath(p), ctx),
            Command::OpenChosen(p) => {
                self.dialog = None;
                self.perform(Pending::OpenPath(p), ctx);
            }
            Command::OpenExample(name) => self.guarded(Pending::OpenExample(name), ctx),
            Command::Quit => self.guarded(Pending::Quit, ctx),
            Command::Save => match self.doc.path().map(PathBuf::from) {
                // The document's own file is written back as it is named, extension or not.
                Some(p) => self.save_to(p, false, ctx),
                None => self.choose_file(FilePurpose::Save, ctx),
            },
            Command::SaveAs => self.choose_file(FilePurpose::Save, ctx),
            Command::SaveTo(p) => {
                self.dialog = None;
                self.save_to(p, true, ctx);
            }
            Command::TypePath(purpose) => {
                self.dialog = Some(Dialog::TypePath {
                    purpose,
                    text: String::new(),
                })
            }
            Command::Proceed { save_first } => {
                let Some(Dialog::Unsaved { then, .. }) = self.dialog.take() else {
                    return;
                };
                if save_first {
                    self.after_save = Some(then);
                    self.apply(Command::Save, ctx);
                } else {
                    self.perform(then, ctx);
                }
            }
            Command::Dismiss => {
                self.dialog = None;
                self.after_save = None;
            }
            Command::Undo => {
                if let Some(s) = self.undo.undo(&self.doc.scenario) {
                    self.doc.scenario = s.clone();
                }
            }
            Command::Redo => {
                if let Some(s) = self.undo.redo(&self.doc.scenario) {
                    self.doc.scenario = s.clone();
                }
            }
            Command::RunPause => self.runtime.toggle(),
            Command::Restart => self.runtime.restart(&self.doc.scenario),
            Command::SetSpeed(s) => self.set_prefs(|p| p.speed = s),
            Command::SetLowerPlot(l) => self.set_prefs(|p| p.lower_plot = l),
            Command::SetTheme(t) => self.set_prefs(|p| p.theme = t),
            Command::SetLargeText(on) => self.set_prefs(|p| p.large_text = on),
            Command::SetShowIv(on) => self.set_prefs(|p| p.show_iv = on),
            Command::ShowAbout(on) => self.about_open = on,
            Command::Notice(text) => self.set_notice(text),
            Command::SetPresentation(on) => self.presentation.on = on,
            Command::Pin { path, pinned } => self.set_prefs(|p| {
                p.pins.retain(|x| *x != path);
                if pinned {
                    p.pins.push(path);
                }
            }),
            Command::ShowShortcuts(on) => self.shortcuts_open = on,
            Command::Export(kind) => self.choose_file(FilePurpose::Export(kind), ctx),
            Command::ExportTo(kind, path) => {
                self.dialog = None;
                self.export_to(kind, &path, ctx);
            }
            Command::Recover(restore) => self.recover(restore),
            Command::Analysis(AnalysisCommand::Keep) => self.keep_trace(),
            Command::Analysis(AnalysisCommand::ChooseFitData) => self.choose_file(FilePurpose::FitData, ctx),
            Command::Analysis(c) => self.analysis.apply(c, &self.doc.scenario, ctx),
        }
        // The run follows every change of the scenario, whatever caused it.
        self.runtime.scenario_changed(&self.doc.scenario);
        self.apply_theme(ctx);
    }

    fn set_prefs(&mut self, change: impl FnOnce(&mut Prefs)) {
        change(&mut self.prefs);
        if let Err(e) = self.store.save_prefs(&self.prefs) {
            self.set_notice(format!("Could not keep the view settings: {e}"));
        }
    }

    /// Does `p` now, or first asks about unsaved changes.
    fn guarded(&mut self, p: Pending, ctx: &egui::Context) {
        if self.doc.is_dirty() {
            let title = if self.doc.scenario.title.is_empty() {
                "untitled".into()
            } else {
                self.doc.scenario.title.clone()
            };
            self.dialog = Some(Dialog::Unsaved { title, then: p });
        } else {
            self.perform(p, ctx);
        }
    }

    fn perform(&mut self, p: Pending, ctx: &egui::Context) {
        match p {
            Pending::New => self.load(Document::fresh()),
            Pending::Open => self.choose_file(FilePurpose::Open, ctx),
            Pending::OpenPath(path) => match scenario::read_file(&path) {
                Ok(s) => {
                    prefs::remember(&mut self.recent, &path);
                    self.keep_recent();
                    self.load(Document::new(s, Origin::File(path)));
                    self.dialog = None;
                }
                Err(e) => self.dialog = Some(Dialog::open_failed(&e)),
            },
            Pending::OpenExample(name) => {
                let read = crate::examples::example_text(&name)
                    .ok_or_else(|| format!("there is no bundled example called {name}"))
                    .and_then(|text| scenario::from_str(text, &name).map_err(|e| e.to_string()));
                match read {
                    Ok(s) => self.load(Document::new(s, Origin::Example(name))),
                    Err(e) => {
                        self.dialog = Some(Dialog::OpenFailed {
                            file: name,
                            place: None,
                            reasons: vec![e],
                        });
                    }
                }
            }
            Pending::Quit => {
                self.allow_close = true;
                ctx.send_viewport_cmd(ViewportCommand::Close);
            }
        }
    }

    /// Replaces the document; history starts afresh and the run is reset, paused.
    fn load(&mut self, doc: Document) {
        self.doc = doc;
        self.undo = Undoer::default();
        self.runtime.running = false;
        self.runtime.restart(&self.doc.scenario);
        self.readouts.refresh(&self.doc.scenario);
        self.side.document_loaded(&self.doc.scenario);
        self.presentation.document_loaded();
    }

    fn keep_recent(&mut self) {
        if let Err(e) = self.store.save_recent(&self.recent) {
            self.set_notice(format!("Could not keep the recent-files list: {e}"));
        }
    }

    fn choose_file(&mut self, purpose: FilePurpose, ctx: &egui::Context) {
        let dir = self.doc.path().and_then(|p| p.parent()).map(PathBuf::from);
        if let Some(answer) = self.files.start(purpose, dir, ctx) {
            self.chosen(answer, ctx);
        }
    }

    fn chosen(&mut self, answer: Chosen, ctx: &egui::Context) {
        match answer {
            // The unsaved-changes question was asked before the dialog opened.
            Chosen::File(FilePurpose::Open, p) => self.perform(Pending::OpenPath(p), ctx),
            Chosen::File(FilePurpose::Save, p) => self.save_to(p, true, ctx),
            Chosen::File(FilePurpose::Export(kind), p) => self.export_to(kind, &p, ctx),
            Chosen::File(FilePurpose::FitData, p) => {
                self.analysis
                    .apply(AnalysisCommand::LoadFitData(p), &self.doc.scenario, ctx)
            }
            Chosen::Cancelled => self.after_save = None,
            Chosen::Unavailable(purpose) => {
                self.dialog = Some(Dialog::TypePath {
                    purpose,
                    text: String::new(),
                })
            }
        }
    }

    /// Saves the scenario; a newly chosen name without an extension gets `.ron`.
    fn save_to(&mut self, mut path: PathBuf, new_name: bool, ctx: &egui::Context) {
        if new_name && path.extension().is_none() {
            path.set_extension("ron");
        }
        match scenario::save_atomic(&self.doc.scenario, &path) {
            Ok(()) => {
                prefs::remember(&mut self.recent, &path);
                self.keep_recent();
                self.set_notice(format!("Saved {}", path.display()));
                self.doc.saved_to(path);
                if let Some(then) = self.after_save.take() {
                    self.perform(then, ctx);
                }
            }
            Err(e) => {
                self.after_save = None;
                self.dialog = Some(Dialog::SaveFailed {
                    file: path.display().to_string(),
                    reason: e.to_string(),
                });
            }
        }
    }

    /// Draws every panel and returns what they asked for.
    fn draw(&mut self, ui: &mut Ui) -> Vec<Command> {
        let mut commands = Vec::new();
        let can_undo = self.undo.has_undo(&self.doc.scenario);
        let can_redo = self.undo.has_redo(&self.doc.scenario);
        let App {
            doc,
            runtime,
            prefs,
            recent,
            readouts,
            examples,
            plots,
            dialog,
            about_open,
            editor_tab,
            notice,
            timing,
            presentation,
            shortcuts_open,
            side,
            plot_rect,
            offer,
            analysis,
            ..
        } = self;
        let scenario = &doc.scenario;
        // Side panels never take more than their share of the width, so the plots keep room
        // when the window is small or the text is large.
        let width = ui.available_width();

        if presentation.on {
            let info = PresentInfo {
                scenario,
                pins: &prefs.pins,
                running: runtime.running,
                can_run: runtime.run().is_some() || runtime.error.is_none(),
                speed: prefs.speed,
                shown_ms: runtime.shown_ms(),
                v_mv: runtime
                    .shown_v_mv()
                    .or_else(|| readouts.rest.as_ref().ok().and_then(RestReport::resting_mv)),
                notice: notice.as_ref().map(|(n, _)| n.as_str()),
            };
            presentation::panels(ui, presentation, &info, &mut commands);
        } else {
            Panel::top("toolbar").show(ui, |ui| {
                let info = ToolbarInfo {
                    running: runtime.running,
                    can_run: runtime.run().is_some() || runtime.error.is_none(),
                    can_undo,
                    can_redo,
                    dirty: doc.is_dirty(),
                    prefs,
                    recent,
                    examples,
                    can_keep: runtime.shown_len() > 0,
                    analysis_open: analysis.open,
                };
                toolbar::show(
                    ui,
                    &info,
                    &mut Editing {
                        scenario,
                        commands: &mut commands,
                        pinned: &prefs.pins,
                    },
                );
            });

            Panel::bottom("status").show(ui, |ui| {
                let mut warnings: Vec<String> = Vec::new();
                if let Some(e) = &runtime.error {
                    warnings.push(e.clone());
                }
                warnings.extend(readouts.warnings.iter().cloned());
                let info = StatusInfo {
                    shown_ms: runtime.shown_ms(),
                    duration_ms: scenario.run.duration_ms,
                    v_mv: runtime
                        .shown_v_mv()
                        .or_else(|| readouts.rest.as_ref().ok().and_then(RestReport::resting_mv)),
                    steps_per_second: runtime.steps_per_second(),
                    frame_ms: timing.last_frame_ms,
                    running: runtime.running,
                    finished: runtime.is_finished(),
                    warnings: &warnings,
                    notice: notice.as_ref().map(|(n, _)| n.as_str()),
                };
                status::show(ui, &info);
            });

            Panel::left("editor")
                .default_size(440.0_f32.min(width * 0.4))
                .size_range(240.0..=(width * 0.4).max(240.0))
                .resizable(true)
                .show(ui, |ui| {
                    let info = EditorInfo {
                        rest: &readouts.rest,
                        now_ms: runtime.shown_ms(),
                    };
                    editor::show(
                        ui,
                        editor_tab,
                        &info,
                        &mut Editing {
                            scenario,
                            commands: &mut commands,
                            pinned: &prefs.pins,
                        },
                    );
                });
        }

        if prefs.show_iv {
            Panel::right("iv view")
                .default_size(270.0_f32.min(width * 0.25))
                .size_range(180.0..=(width * 0.3).max(180.0))
                .resizable(true)
                .show(ui, |ui| {
                    notes::tabs(ui, side);
                    match side.tab {
                        SideTab::Iv => iv::show(ui, runtime, readouts.rest.as_ref().ok()),
                        SideTab::Notes => notes::show(ui, side, scenario, &mut commands),
                    }
                });
        }

        let central = egui::CentralPanel::default().show(ui, |ui| {
            let gate_names = runtime
                .run()
                .map(|r| r.model().gate_names.clone())
                .unwrap_or_default();
            let input = PlotInput {
                scenario,
                rest: readouts.rest.as_ref().ok(),
                trace: runtime.trace(),
                shown_len: runtime.shown_len(),
                shown_ms: runtime.shown_ms(),
                derived: &runtime.derived,
                gate_names: &gate_names,
                lower: prefs.lower_plot,
                generation: runtime.generation,
                kept: &analysis.kept.traces,
            };
            plots.show(ui, &input, &mut commands);
        });
        *plot_rect = central.response.rect;
        if analysis.open {
            analysis.show(ui, scenario, runtime.shown_len() > 0, &mut commands);
        }

        if let Some(d) = dialog {
            dialogs::show(ui, d, &mut commands);
        }
        if *about_open {
            dialogs::about(ui, &mut commands);
        }
        if *shortcuts_open {
            shortcuts::overlay(ui, &mut commands);
        }
        if let Some(o) = offer {
            restore::offer_modal(ui, o, &mut commands);
        }
        commands
    }
}

impl eframe::App for App {
    fn logic(&mut self, ctx: &egui::Context, _frame: &mut eframe::Frame) {
        let now = Instant::now();
        let t = &mut self.timing;
        t.interval_ms = now.duration_since(t.frame_start).as_secs_f64() * 1e3;
        t.frame_start = now;
        if t.frames == 1
            && let Some(started) = t.started
        {
            t.first_shown = Some(started.elapsed());
            if t.log {
                eprintln!(
                    "permeant: first frame on screen {:.1} ms after start",
                    started.elapsed().as_secs_f64() * 1e3
                );
            }
        }
        if ctx.input(|i| i.viewport().close_requested()) && !self.allow_close && self.doc.is_dirty() {
            ctx.send_viewport_cmd(ViewportCommand::CancelClose);
            self.guarded(Pending::Quit, ctx);
        }
        if let Some(answer) = self.files.poll() {
            self.chosen(answer, ctx);
        }
        if let Some(done) = self.exporter.poll(self.plot_rect, ctx.pixels_per_point()) {
            self.export_done(done);
        }
        self.autosave_tick(ctx);
        if self.presentation.on {
            // The window may have been resized or moved to the projector.
            self.apply_theme(ctx);
        }
        let dt = f64::from(ctx.input(|i| i.stable_dt));
        self.runtime.advance_frame(dt, self.prefs.speed, ENGINE_BUDGET);
        let behind = self
            .runtime
            .update_derived(self.prefs.lower_plot == LowerPlot::Permeabilities);
        // With the frame log on, frames are drawn continuously so that idle frames are measured too.
        if self.runtime.running || behind || self.files.is_open() || self.timing.log {
            ctx.request_repaint();
        }
        if let Some((_, since)) = &self.notice {
            if since.elapsed() > NOTICE_TIME {
                self.notice = None;
            } else {
                ctx.request_repaint_after(NOTICE_TIME);
            }
        }
    }

    fn ui(&mut self, ui: &mut Ui, _frame: &mut eframe::Frame) {
        let ctx = ui.ctx().clone();
        self.readouts.refresh(&self.doc.scenario);
        self.analysis.poll(&ctx);
        // Keys first, so that no focused widget also takes a shortcut's key.
        let keys = KeyContext {
            presenting: self.presentation.on,
            overlay_open: self.shortcuts_open,
            dialog_open: self.dialog.is_some() || self.offer.is_some(),
            analysis_open: self.analysis.open,
        };
        let mut commands = shortcuts::read(&ctx, keys);
        commands.append(&mut self.draw(ui));
        commands.append(&mut self.queued);
        for cmd in commands {
            self.apply(cmd, &ctx);
        }
        self.undo.feed_state(ui.input(|i| i.time), &self.doc.scenario);
        self.readouts.refresh(&self.doc.scenario);
        let title = self.doc.window_title();
        if title != self.title_sent {
            ctx.send_viewport_cmd(ViewportCommand::Title(title.clone()));
            self.title_sent = title;
        }
        self.end_frame();
    }

    fn on_exit(&mut self, _gl: Option<&eframe::glow::Context>) {
        // An offer not yet answered stays for the next start: nothing is written over it.
        if self.offer.is_none()
            && let Some(saver) = &mut self.autosaver
            && let Err(e) = saver.end(&self.doc)
        {
            eprintln!("permeant: {e}");
        }
    }
}

/// Presentation, exports and autosave.
impl App {
    /// Whether the window is in presentation.
    pub fn presenting(&self) -> bool {
        self.presentation.on
    }

    /// Whether the start offers a scenario left by a crashed session.
    pub fn restore_offered(&self) -> bool {
        self.offer.is_some()
    }

    /// Presentation scales the interface to the window; otherwise the preferences decide.
    fn apply_theme(&self, ctx: &egui::Context) {
        if self.presentation.on {
            theme::apply_with_zoom(ctx, &self.prefs, presentation::zoom(ctx));
        } else {
            theme::apply(ctx, &self.prefs);
        }
    }

    fn export_to(&mut self, kind: ExportKind, path: &Path, ctx: &egui::Context) {
        if kind == ExportKind::MetricsCsv && self.analysis.kept.traces.is_empty() {
            self.set_notice("Nothing to export: keep a trace first (Ctrl+K)");
            return;
        }
        let (t_ms, v_mv, n) = match self.runtime.trace() {
            Some(trace) => {
                let n = self.runtime.shown_len().min(trace.len());
                (&trace.t_ms[..n], &trace.v_mv()[..n], n)
            }
            None => (&[][..], &[][..], 0),
        };
        if n == 0 && kind != ExportKind::MetricsCsv && self.analysis.kept.traces.is_empty() {
            self.set_notice("Nothing to export: the run could not start");
            return;
        }
        let shown = Shown {
            scenario: &self.doc.scenario,
            t_ms,
            v_mv,
            kept: self
                .analysis
                .kept
                .traces
                .iter()
                .map(|k| crate::report::csv::NamedTrace {
                    name: &k.name,
                    t_ms: &k.t_ms,
                    v_mv: &k.v_mv,
                })
                .collect(),
            metrics_csv: self.analysis.kept.metrics_csv(),
        };
        if let Some(done) = self.exporter.start(kind, path, &shown, ctx) {
            self.export_done(done);
        }
    }

    /// Keeps the shown part of the run as a reference trace and shows it in the comparison.
    fn keep_trace(&mut self) {
        let Some(trace) = self.runtime.trace() else {
            self.set_notice("Nothing to keep: the run could not start");
            return;
        };
        let n = self.runtime.shown_len().min(trace.len());
        if n == 0 {
            self.set_notice("Nothing to keep yet: run the scenario first");
            return;
        }
        let name = self
            .analysis
            .kept
            .keep(&self.doc.scenario, &trace.t_ms[..n], &trace.v_mv()[..n])
            .name
            .clone();
        self.analysis.open = true;
        self.analysis.tab = crate::ui::analysis::AnalysisTab::Compare;
        self.set_notice(format!("Kept \"{name}\""));
    }

    fn export_done(&mut self, done: Result<String, String>) {
        match done {
            Ok(note) | Err(note) => self.set_notice(note),
        }
    }

    fn recover(&mut self, restore: bool) {
        let Some(offer) = self.offer.take() else {
            return;
        };
        if restore {
            match offer.into_document() {
                Some(doc) => {
                    self.load(doc);
                    self.set_notice("Restored the scenario kept before the crash");
                }
                None => self.set_notice("The kept scenario could not be read"),
            }
        }
        // The kept copy is answered for: from now on it holds this session's work, so a crash
        // before the next autosave cannot offer the discarded scenario again.
        if let Some(saver) = &mut self.autosaver
            && let Err(e) = saver.save_now(&self.doc)
        {
            self.set_notice(e);
        }
    }

    fn autosave_tick(&mut self, ctx: &egui::Context) {
        // Until the offer is answered, the kept scenario must not be written over.
        if self.offer.is_some() {
            return;
        }
        let Some(saver) = &mut self.autosaver else {
            return;
        };
        let (wait, written) = saver.tick(&self.doc);
        if let Some(w) = wait {
            ctx.request_repaint_after(w);
        }
        if let Err(e) = written {
            self.set_notice(e);
        }
    }
}

impl App {
    fn end_frame(&mut self) {
        let t = &mut self.timing;
        t.frames += 1;
        t.last_frame_ms = t.frame_start.elapsed().as_secs_f64() * 1e3;
        if t.first_frame.is_none()
            && let Some(started) = t.started
        {
            let d = started.elapsed();
            t.first_frame = Some(d);
            if t.log {
                eprintln!(
                    "permeant: first frame done {:.1} ms after start",
                    d.as_secs_f64() * 1e3
                );
            }
        }
        if t.log {
            let samples = self.runtime.trace().map_or(0, |x| x.len());
            eprintln!(
                "permeant: frame {} took {:.2} ms (engine and layout), {:.2} ms since the previous one, t = {:.1} ms, {} samples, {} steps/s",
                t.frames,
                t.last_frame_ms,
                t.interval_ms,
                self.runtime.shown_ms(),
                samples,
                self.runtime.steps_per_second().round()
            );
        }
    }
}
