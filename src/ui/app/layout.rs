//! The window's layout: which panel goes where, and what each is shown. Panels only draw and
//! return commands; nothing here changes the document.

use egui::{Panel, Ui};

use super::App;
use crate::ui::command::Command;
use crate::ui::dialogs::{self, restore};
use crate::ui::panels::editor::{self, EditorInfo};
use crate::ui::panels::family as family_view;
use crate::ui::panels::iv;
use crate::ui::panels::notes::{self, SideTab};
use crate::ui::panels::plot_labels::PlotLook;
use crate::ui::panels::plots::PlotInput;
use crate::ui::panels::presentation::{self, PresentInfo};
use crate::ui::panels::status::{self, StatusInfo};
use crate::ui::panels::toolbar::{self, ToolbarInfo};
use crate::ui::shortcuts;
use crate::ui::widgets::Editing;

impl App {
    /// Draws every panel and returns what they asked for.
    pub(super) fn draw(&mut self, ui: &mut Ui) -> Vec<Command> {
        let mut commands = Vec::new();
        let can_undo = self.undo.has_undo(self.doc.version());
        let can_redo = self.undo.has_redo(self.doc.version());
        let App {
            doc,
            checked,
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
            offer,
            analysis,
            family,
            ..
        } = self;
        let scenario = doc.scenario();
        let notice = notice.as_ref().map(|n| n.text.as_str());
        let resting_mv = readouts.resting_mv();
        // Side panels never take more than their share of the width, so the plots keep room
        // when the window is small or the text is large.
        let width = ui.available_width();
        // In a window under 1000 points wide (1280×720 with large text is 853) the side panels
        // keep to smaller shares, so the plots keep about half the width.
        let (editor_share, side_share) = if width < 1000.0 { (0.38, 0.2) } else { (0.4, 0.3) };

        if presentation.on {
            let info = PresentInfo {
                running: runtime.running,
                can_run: runtime.run().is_some() || runtime.error.is_none(),
                speed: prefs.speed,
                shown_ms: runtime.shown_ms(),
                v_mv: runtime.shown_v_mv().or(resting_mv),
                notice,
            };
            let mut ed = Editing::new(doc, checked, &mut commands, &prefs.pins);
            presentation::panels(ui, presentation, &info, &mut ed);
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
                    &mut Editing::new(doc, checked, &mut commands, &prefs.pins),
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
                    v_mv: runtime.shown_v_mv().or(resting_mv),
                    steps_per_second: runtime.steps_per_second(),
                    frame_ms: timing.last_frame_ms,
                    running: runtime.running,
                    finished: runtime.is_finished(),
                    warnings: &warnings,
                    notice,
                };
                status::show(ui, &info);
            });

            Panel::left("editor")
                .default_size(440.0_f32.min(width * editor_share))
                .size_range(240.0..=(width * editor_share).max(240.0))
                .resizable(true)
                .show(ui, |ui| {
                    let cursor = plots.cursor_ms();
                    let info = EditorInfo {
                        rest: &readouts.rest,
                        now_ms: runtime.shown_ms(),
                        at_start: runtime.at_start(),
                        now: runtime
                            .snapshot_at(cursor.unwrap_or_else(|| runtime.shown_ms()))
                            .or_else(|| runtime.at_start()),
                        at_cursor: cursor.is_some(),
                    };
                    editor::show(
                        ui,
                        editor_tab,
                        &info,
                        &mut Editing::new(doc, checked, &mut commands, &prefs.pins),
                    );
                });
        }

        if prefs.show_iv {
            Panel::right("iv view")
                .default_size(270.0_f32.min(width * side_share))
                .size_range(170.0..=(width * side_share).max(170.0))
                .resizable(true)
                .show(ui, |ui| {
                    notes::tabs(ui, side, scenario.run.family.is_some());
                    match side.tab {
                        SideTab::Iv => iv::show(ui, runtime, readouts.rest.as_ref().ok()),
                        SideTab::Notes => notes::show(ui, side, scenario, &mut commands),
                        SideTab::Family => family_view::show(ui, family, scenario, &mut commands),
                    }
                });
        }

        egui::CentralPanel::default().show(ui, |ui| {
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
                family: family.result.as_ref(),
                start: runtime.start_readout(),
            };
            plots.set_pinned(if presentation.on { &prefs.pins } else { &[] });
            plots.set_look(if presentation.on {
                PlotLook::PRESENTATION
            } else {
                PlotLook::DESK
            });
            plots.show(ui, &input, Some(&mut commands));
        });
        if analysis.open {
            analysis.show(
                ui,
                scenario,
                runtime.shown_len() > 0,
                family.result.as_ref(),
                &mut commands,
            );
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
