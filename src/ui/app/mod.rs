//! The application: the document, the live run, undo history and view state, and the frame
//! loop (step the engine in `logic`, draw the panels in `ui`). The panels' layout is in
//! `layout`, and `handling` is the one place where commands are applied.

mod handling;
mod layout;

use std::path::PathBuf;
use std::time::{Duration, Instant};

use egui::util::undoer::Undoer;
use egui::{Ui, ViewportCommand};

use crate::analysis::RestReport;
use crate::autosave::Autosave;
use crate::scenario::{self, Scenario};
use crate::ui::analysis::Analysis;
use crate::ui::command::Command;
use crate::ui::dialogs::files::FileChooser;
use crate::ui::dialogs::restore::{Autosaver, Offer};
use crate::ui::dialogs::{Dialog, Pending};
use crate::ui::panels::editor::EditorTab;
use crate::ui::panels::notes::Side;
use crate::ui::panels::plots::Plots;
use crate::ui::panels::presentation::Presentation;
use crate::ui::shortcuts::{self, KeyContext};
use crate::ui::state::checks::Checked;
use crate::ui::state::document::{Document, Version};
use crate::ui::state::family::FamilyState;
use crate::ui::state::prefs::{LowerPlot, Prefs, Store};
use crate::ui::state::readouts::Readouts;
use crate::ui::state::runtime::Runtime;
use crate::ui::theme;

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

/// A bundled example as the Examples menu lists it.
pub struct Example {
    pub file: String,
    pub title: String,
}

/// A short message in the status line, shown for [`NOTICE_TIME`].
struct Notice {
    text: String,
    since: Instant,
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
    /// Edits checked against the document's present revision.
    checked: Checked,
    runtime: Runtime,
    /// Scenario edits only; traces and view settings are not undone.
    undo: Undoer<Version>,
    prefs: Prefs,
    store: Store,
    recent: Vec<PathBuf>,
    readouts: Readouts,
    examples: Vec<Example>,
    plots: Plots,
    files: FileChooser,
    dialog: Option<Dialog>,
    /// What to do once a "Save first" has saved.
    after_save: Option<Pending>,
    about_open: bool,
    editor_tab: EditorTab,
    notice: Option<Notice>,
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
    autosaver: Option<Autosaver>,
    /// What a crashed session left, until the user restores or discards it.
    offer: Option<Offer>,
    /// Kept traces, scans, dose–response and fits: runtime state, never saved or undone.
    analysis: Analysis,
    /// The family of runs of the scenario's `run.family`, recomputed for each revision.
    family: FamilyState,
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
            .map(|(file, text)| Example {
                file: file.to_string(),
                title: scenario::from_str(text, file)
                    .map(|s| s.title.clone())
                    .unwrap_or_default(),
            })
            .collect();
        let mut app = App {
            runtime: Runtime::for_revision(doc.revision(), doc.scenario()),
            doc,
            checked: Checked::default(),
            undo: Undoer::default(),
            prefs,
            store: options.store,
            recent,
            readouts: Readouts::default(),
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
            autosaver: None,
            offer: None,
            analysis: Analysis::default(),
            family: FamilyState::default(),
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
        app.readouts.refresh(&app.doc);
        app
    }

    /// The scenario being edited.
    pub fn scenario(&self) -> &Scenario {
        self.doc.scenario()
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
    /// The family of runs of the present scenario.
    pub fn family(&self) -> &FamilyState {
        &self.family
    }

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
        self.notice.as_ref().map(|n| n.text.as_str())
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
        self.notice = Some(Notice {
            text: text.into(),
            since: Instant::now(),
        });
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
        let family_running = self.family.refresh(&self.doc);
        // With the frame log on, frames are drawn continuously so that idle frames are measured too.
        if self.runtime.running || behind || family_running || self.files.is_open() || self.timing.log {
            ctx.request_repaint();
        }
        if let Some(notice) = &self.notice {
            if notice.since.elapsed() > NOTICE_TIME {
                self.notice = None;
            } else {
                ctx.request_repaint_after(NOTICE_TIME);
            }
        }
    }

    fn ui(&mut self, ui: &mut Ui, _frame: &mut eframe::Frame) {
        let ctx = ui.ctx().clone();
        self.readouts.refresh(&self.doc);
        self.analysis.poll(&ctx);
        // Keys first, so that no focused widget also takes a shortcut's key.
        let keys = KeyContext {
            presenting: self.presentation.on,
            overlay_open: self.shortcuts_open,
            dialog_open: self.dialog.is_some(),
            offer_open: self.offer.is_some(),
            about_open: self.about_open,
            analysis_open: self.analysis.open,
        };
        let mut commands = shortcuts::read(&ctx, keys);
        commands.append(&mut self.draw(ui));
        commands.extend(crate::ui::widgets::finish_unseen_entry(&ctx));
        commands.append(&mut self.queued);
        for cmd in commands {
            self.apply(cmd, &ctx);
        }
        self.undo.feed_state(ui.input(|i| i.time), self.doc.version());
        self.readouts.refresh(&self.doc);
        // Also here, not only before drawing: an edit or an opened file applied in this frame
        // starts its family now, so no frame (and no test) sees the old family as the new one's.
        if self.family.refresh(&self.doc) {
            ctx.request_repaint();
        }
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
    /// The two plot areas (potential above, the lower plot below) as last drawn, in points.
    pub fn plot_frames(&self) -> Option<[egui::Rect; 2]> {
        self.plots.frames()
    }

    /// Each reversal line of the potential plot as last drawn: name and time span (ms).
    pub fn reversal_spans(&self) -> &[(String, f64, f64)] {
        self.plots.reversal_spans()
    }

    /// The lower plot's axis title as last drawn: the quantity shown and its unit.
    pub fn lower_plot_title(&self) -> &str {
        self.plots.lower_title()
    }

    /// The time range (ms) the plots showed in the last frame.
    pub fn plot_t_ms(&self) -> Option<(f64, f64)> {
        self.plots.shown_t_ms()
    }

    /// The plots as last drawn: their labels, legend and time ranges.
    pub fn plots(&self) -> &Plots {
        &self.plots
    }

    /// Whether the window is in presentation.
    /// Where a click on a plot placed the cursor, ms.
    pub fn plot_cursor_ms(&self) -> Option<f64> {
        self.plots.cursor_ms()
    }

    /// Each plot's y range as last drawn (upper in mV, lower in its view's unit).
    pub fn plot_y_ranges(&self) -> Option<[(f64, f64); 2]> {
        self.plots.y_shown()
    }

    /// The unit the plots' time axis was last written in.
    pub fn plot_time_unit(&self) -> crate::ui::time::TimeUnit {
        self.plots.time_unit()
    }

    pub fn presenting(&self) -> bool {
        self.presentation.on
    }

    /// Whether the start offers a scenario left by a crashed session.
    pub fn restore_offered(&self) -> bool {
        self.offer.is_some()
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
