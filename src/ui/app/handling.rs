//! Where commands are applied: each [`Command`] a panel, a key or a script asked for, once, at
//! the end of the frame; and what they lead to (opening and saving files, exports, keeping a
//! trace, autosave and the answer to a restore offer).

use std::path::{Path, PathBuf};

use egui::ViewportCommand;
use egui::util::undoer::Undoer;

use super::App;
use crate::scenario;
use crate::ui::analysis::lost::ControlFamily;
use crate::ui::analysis::{AnalysisCommand, AnalysisTab};
use crate::ui::command::{Command, FilePurpose};
use crate::ui::dialogs::export::{self, ExportKind, Shown};
use crate::ui::dialogs::figure;
use crate::ui::dialogs::files::Chosen;
use crate::ui::dialogs::{Dialog, Pending};
use crate::ui::panels::plots::{PlotInput, Plots};
use crate::ui::panels::presentation;
use crate::ui::state::document::{Document, Origin};
use crate::ui::state::prefs::{self, Prefs, Speed};
use crate::ui::theme;

impl App {
    /// Applies one command now, as the end of a frame does.
    pub fn apply(&mut self, cmd: Command, ctx: &egui::Context) {
        match cmd {
            Command::Edit(edit) => self.edit(edit, false),
            Command::Entry(edit) => self.edit(edit, true),
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
                if let Some(v) = self.undo.undo(self.doc.version()) {
                    self.doc.restore(v.clone());
                }
            }
            Command::Redo => {
                if let Some(v) = self.undo.redo(self.doc.version()) {
                    self.doc.restore(v.clone());
                }
            }
            Command::RunPause => self.runtime.toggle(),
            Command::Restart => self.runtime.restart(self.doc.scenario()),
            Command::SetSpeed(s) => self.set_prefs(|p| p.speed = s),
            Command::SetLowerPlot(l) => self.set_prefs(|p| p.lower_plot = l),
            Command::SetPngSize(size) => self.set_prefs(|p| p.png_size_px = size),
            Command::SetTheme(t) => self.set_prefs(|p| p.theme = t),
            Command::SetLargeText(on) => self.set_prefs(|p| p.large_text = on),
            Command::SetShowIv(on) => self.set_prefs(|p| p.show_iv = on),
            Command::ShowAbout(on) => self.about_open = on,
            Command::Notice(text) => self.set_notice(text),
            Command::SetPresentation(on) => self.presentation.on = on,
            Command::Pin { address, pinned } => self.set_prefs(|p| {
                p.pins.retain(|x| *x != address);
                if pinned {
                    p.pins.push(address);
                }
            }),
            Command::ShowShortcuts(on) => self.shortcuts_open = on,
            Command::Export(kind) => self.choose_file(FilePurpose::Export(kind), ctx),
            Command::ExportTo(kind, path) => {
                self.dialog = None;
                self.export_to(kind, &path, ctx);
            }
            Command::Recover(restore) => self.recover(restore),
            Command::CancelFamily => self.family.cancel(),
            Command::Analysis(AnalysisCommand::Keep) => self.keep_trace(),
            Command::Analysis(AnalysisCommand::KeepControlFamily) => self.keep_control_family(),
            Command::Analysis(AnalysisCommand::ChooseFitData) => self.choose_file(FilePurpose::FitData, ctx),
            Command::Analysis(AnalysisCommand::LoadFitData(path)) => {
                // The typed-path dialog that asked for the file has done its job.
                if matches!(
                    self.dialog,
                    Some(Dialog::TypePath {
                        purpose: FilePurpose::FitData,
                        ..
                    })
                ) {
                    self.dialog = None;
                }
                self.analysis
                    .apply(AnalysisCommand::LoadFitData(path), self.doc.scenario(), ctx);
            }
            Command::Analysis(c) => self.analysis.apply(c, self.doc.scenario(), ctx),
        }
        // The run follows every change of the scenario, whatever caused it.
        self.runtime.follow(self.doc.revision(), self.doc.scenario());
        self.apply_theme(ctx);
    }

    /// Applies `edit` when it leaves the scenario valid; a discrete edit or a completed `entry`
    /// is its own undo step (a drag's stream of edits becomes one once it settles).
    fn edit(&mut self, edit: scenario::Edit, entry: bool) {
        match self.checked.take(&self.doc, &edit) {
            Ok(next) => {
                if entry || edit.is_discrete() {
                    self.undo.add_undo(self.doc.version());
                }
                self.doc.change(next);
            }
            Err(reason) => self.set_notice(format!("Not changed: {}", reason.message)),
        }
    }

    fn set_prefs(&mut self, change: impl FnOnce(&mut Prefs)) {
        change(&mut self.prefs);
        if let Err(e) = self.store.save_prefs(&self.prefs) {
            self.set_notice(format!("Could not keep the view settings: {e}"));
        }
    }

    /// Does `p` now, or first asks about unsaved changes.
    pub(super) fn guarded(&mut self, p: Pending, ctx: &egui::Context) {
        if self.doc.is_dirty() {
            let title = if self.doc.scenario().title.is_empty() {
                "untitled".into()
            } else {
                self.doc.scenario().title.clone()
            };
            self.dialog = Some(Dialog::Unsaved { title, then: p });
        } else {
            self.perform(p, ctx);
        }
    }

    pub(super) fn perform(&mut self, p: Pending, ctx: &egui::Context) {
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
        self.runtime.open(self.doc.revision(), self.doc.scenario());
        self.readouts.refresh(&self.doc);
        self.side.document_loaded(self.doc.scenario());
        self.presentation.document_loaded();
        // A speed chosen for the last scenario may suit this one badly (a quarter-second
        // demo's 50 ms/s makes a minute-long run last twenty minutes).
        self.prefs.speed = Speed::Auto;
        self.plots.clear_cursor();
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

    pub(super) fn chosen(&mut self, answer: Chosen, ctx: &egui::Context) {
        match answer {
            // The unsaved-changes question was asked before the dialog opened.
            Chosen::File(FilePurpose::Open, p) => self.perform(Pending::OpenPath(p), ctx),
            Chosen::File(FilePurpose::Save, p) => self.save_to(p, true, ctx),
            Chosen::File(FilePurpose::Export(kind), p) => self.export_to(kind, &p, ctx),
            Chosen::File(FilePurpose::FitData, p) => {
                self.analysis
                    .apply(AnalysisCommand::LoadFitData(p), self.doc.scenario(), ctx)
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
        match scenario::save_atomic(self.doc.scenario(), &path) {
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

    /// Presentation scales the interface to the window; otherwise the preferences decide.
    pub(super) fn apply_theme(&self, ctx: &egui::Context) {
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
        // The plots are worth a picture before a run too (the reversal lines, the protocol).
        let needs_trace = !matches!(
            kind,
            ExportKind::MetricsCsv | ExportKind::Png | ExportKind::ScanCsv
        );
        if n == 0 && needs_trace && self.analysis.kept.traces.is_empty() {
            self.set_notice("Nothing to export: the run could not start");
            return;
        }
        let shown = Shown {
            scenario: self.doc.scenario(),
            t_ms,
            v_mv,
            reversal_mv: &self.runtime.derived.reversal_mv,
            varying: &self.runtime.derived.varying,
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
            scan_csv: self.analysis.scan_csv(),
        };
        let done = export::export(kind, path, &shown, || self.plots_png(ctx));
        self.export_done(done);
    }

    /// The two plots alone, drawn apart from the window at the chosen size in its present look,
    /// with the whole run in view, as PNG bytes.
    fn plots_png(&self, ctx: &egui::Context) -> Result<Vec<u8>, String> {
        let gate_names = self
            .runtime
            .run()
            .map(|r| r.model().gate_names.clone())
            .unwrap_or_default();
        let input = PlotInput {
            scenario: self.doc.scenario(),
            rest: self.readouts.rest.as_ref().ok(),
            trace: self.runtime.trace(),
            shown_len: self.runtime.shown_len(),
            shown_ms: self.runtime.shown_ms(),
            derived: &self.runtime.derived,
            gate_names: &gate_names,
            lower: self.prefs.lower_plot,
            generation: self.runtime.generation,
            kept: &self.analysis.kept.traces,
            family: self.family.result.as_ref(),
            start: self.runtime.start_readout(),
        };
        let mut plots = Plots::default();
        let style = ctx.global_style();
        let picture = figure::draw(self.prefs.png_size_px, style.visuals.dark_mode, style, |ui| {
            plots.show(ui, &input, None);
        });
        export::encode_png(picture.width, picture.height, &picture.to_rgba8())
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
            .keep(self.doc.scenario(), &trace.t_ms[..n], &trace.v_mv()[..n])
            .name
            .clone();
        if !self.doc.scenario().cell.volume.is_fixed() {
            let w = &self.runtime.derived.volume_rel;
            let m = n.min(w.len());
            self.analysis
                .kept
                .attach_volume(self.doc.scenario(), &trace.t_ms[..m], &w[..m]);
        }
        self.analysis.open = true;
        self.analysis.tab = AnalysisTab::Compare;
        self.set_notice(format!("Kept \"{name}\""));
    }

    /// Keeps the present family's measurements as the control of the "Lost current" tab and
    /// shows that tab.
    fn keep_control_family(&mut self) {
        if self.family.progress().is_some() {
            self.set_notice("The family is still running: keep it as the control when it is done");
            return;
        }
        let Some(r) = &self.family.result else {
            self.set_notice("No family to keep: this scenario has no finished family of runs");
            return;
        };
        let title = self.doc.scenario().title.clone();
        self.analysis.control_family = Some(ControlFamily {
            title: title.clone(),
            table: r.table.clone(),
        });
        self.analysis.open = true;
        self.analysis.tab = AnalysisTab::LostCurrent;
        self.set_notice(format!("Kept the family of \"{title}\" as the control"));
    }

    pub(super) fn export_done(&mut self, done: Result<String, String>) {
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

    pub(super) fn autosave_tick(&mut self, ctx: &egui::Context) {
        // Until the offer is answered, the kept scenario must not be written over.
        if self.offer.is_some() {
            return;
        }
        let Some(saver) = &mut self.autosaver else {
            return;
        };
        let (wait, written) = saver.tick(&self.doc, std::time::Instant::now());
        if let Some(w) = wait {
            ctx.request_repaint_after(w);
        }
        if let Err(e) = written {
            self.set_notice(e);
        }
    }
}
