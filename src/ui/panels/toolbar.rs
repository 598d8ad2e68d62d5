//! The toolbar across the top: files, examples, run controls, history, view settings and the
//! scenario's title.

use std::path::PathBuf;

use egui::{RichText, Ui};

use crate::scenario::Edit;
use crate::ui::analysis::AnalysisCommand;
use crate::ui::app::Example;
use crate::ui::command::Command;
use crate::ui::dialogs::export::ExportKind;
use crate::ui::state::prefs::{Prefs, ThemeChoice};
use crate::ui::widgets::Editing;

/// What the toolbar shows besides the scenario.
pub struct ToolbarInfo<'a> {
    pub running: bool,
    pub can_run: bool,
    pub can_undo: bool,
    pub can_redo: bool,
    pub dirty: bool,
    pub prefs: &'a Prefs,
    pub recent: &'a [PathBuf],
    pub examples: &'a [Example],
    /// A run has samples to keep.
    pub can_keep: bool,
    pub analysis_open: bool,
}

pub fn show(ui: &mut Ui, info: &ToolbarInfo, ed: &mut Editing) {
    // Wrapped: with large text, or in a narrow window, the rest goes on a second row instead of
    // past the window's edge.
    egui::MenuBar::new().ui(ui, |ui| ui.horizontal_wrapped(|ui| bar(ui, info, ed)));
}

fn bar(ui: &mut Ui, info: &ToolbarInfo, ed: &mut Editing) {
    {
        ui.menu_button("File", |ui| {
            if ui
                .button("New")
                .on_hover_text("Start from a plain passive cell")
                .clicked()
            {
                ed.commands.push(Command::New);
            }
            if ui.button("Open…").clicked() {
                ed.commands.push(Command::Open);
            }
            ui.menu_button("Open recent", |ui| {
                if info.recent.is_empty() {
                    ui.label("No recent files");
                }
                for p in info.recent {
                    if ui.button(p.display().to_string()).clicked() {
                        ed.commands.push(Command::OpenPath(p.clone()));
                    }
                }
            });
            if ui.button("Type a path to open…").clicked() {
                ed.commands
                    .push(Command::TypePath(crate::ui::command::FilePurpose::Open));
            }
            ui.separator();
            if ui.button("Save").clicked() {
                ed.commands.push(Command::Save);
            }
            if ui.button("Save as…").clicked() {
                ed.commands.push(Command::SaveAs);
            }
            ui.menu_button("Export", |ui| {
                png_size(ui, info.prefs.png_size_px, ed.commands);
                for kind in ExportKind::ALL {
                    if ui.button(kind.menu_label()).clicked() {
                        ed.commands.push(Command::Export(kind));
                    }
                }
            });
            ui.separator();
            if ui.button("Quit").clicked() {
                ed.commands.push(Command::Quit);
            }
        });
        ui.menu_button("Examples", |ui| {
            for Example { file, title } in info.examples {
                let label = if title.is_empty() {
                    file.clone()
                } else {
                    format!("{title}  ({file})")
                };
                if ui.button(label).clicked() {
                    ed.commands.push(Command::OpenExample(file.clone()));
                }
            }
        });
        ui.menu_button("View", |ui| {
            if ui
                .button("Presentation  (F11)")
                .on_hover_text("Large text and plots, the run controls and big sliders; no editor")
                .clicked()
            {
                ed.commands.push(Command::SetPresentation(true));
            }
            let mut large = info.prefs.large_text;
            if ui.checkbox(&mut large, "Large text (projector)").changed() {
                ed.commands.push(Command::SetLargeText(large));
            }
            let mut iv = info.prefs.show_iv;
            if ui
                .checkbox(&mut iv, "Side panel: current–voltage and notes")
                .changed()
            {
                ed.commands.push(Command::SetShowIv(iv));
            }
            ui.separator();
            ui.label("Theme");
            for (choice, label) in [
                (ThemeChoice::System, "Follow the desktop"),
                (ThemeChoice::Light, "Light"),
                (ThemeChoice::Dark, "Dark"),
            ] {
                if ui.radio(info.prefs.theme == choice, label).clicked() {
                    ed.commands.push(Command::SetTheme(choice));
                }
            }
        });
        ui.menu_button("Help", |ui| {
            if ui.button("Keyboard shortcuts  (F1)").clicked() {
                ed.commands.push(Command::ShowShortcuts(true));
            }
            if ui.button("About permeant").clicked() {
                ed.commands.push(Command::ShowAbout(true));
            }
        });

        ui.separator();
        if ui.button("Open…").on_hover_text("Open a scenario file").clicked() {
            ed.commands.push(Command::Open);
        }
        let save = ui
            .add_enabled(info.dirty, egui::Button::new("Save"))
            .on_hover_text("Save the scenario");
        if save.clicked() {
            ed.commands.push(Command::Save);
        }
        ui.separator();

        let (run_label, run_hover) = if info.running {
            ("‖ Pause", "Pause the run")
        } else {
            ("▶ Run", "Run the protocol from the present time")
        };
        let run = ui.add_enabled(
            info.can_run,
            egui::Button::new(RichText::new(run_label).strong()).min_size(egui::vec2(76.0, 0.0)),
        );
        if run.on_hover_text(run_hover).clicked() {
            ed.commands.push(Command::RunPause);
        }
        if ui
            .button("↺ Restart")
            .on_hover_text("Start again at t = 0 ms")
            .clicked()
        {
            ed.commands.push(Command::Restart);
        }
        let speed_label = ui.label("Speed");
        crate::ui::time::speed_box(
            ui,
            "speed",
            info.prefs.speed,
            ed.scenario.run.duration_ms,
            ed.commands,
        )
        .labelled_by(speed_label.id);
        ui.separator();
        if ui
            .add_enabled(info.can_undo, egui::Button::new("↶ Undo"))
            .on_hover_text("Undo the last change")
            .clicked()
        {
            ed.commands.push(Command::Undo);
        }
        if ui
            .add_enabled(info.can_redo, egui::Button::new("↷ Redo"))
            .on_hover_text("Redo what was undone")
            .clicked()
        {
            ed.commands.push(Command::Redo);
        }
        ui.separator();
        if ui
            .add_enabled(info.can_keep, egui::Button::new("Keep trace"))
            .on_hover_text("Keep the run shown now as a reference to compare with (Ctrl+K)")
            .clicked()
        {
            ed.commands.push(Command::Analysis(AnalysisCommand::Keep));
        }
        if ui
            .selectable_label(info.analysis_open, "Analysis")
            .on_hover_text("Compare kept traces, scan an input, dose–response, fit ratios (Ctrl+L)")
            .clicked()
        {
            ed.commands
                .push(Command::Analysis(AnalysisCommand::Show(!info.analysis_open)));
        }
        ui.separator();
        // The rest of the row, up to 360 points; with less than 160 left it starts a new row.
        let left = ui.available_width() - 8.0;
        let width = if left >= 160.0 { left.min(360.0) } else { 240.0 };
        let title = ed.scenario.title.clone();
        ed.text(ui, "title", &title, "Scenario title", width, Edit::Title);
    }
}

/// The PNG export's size in pixels, picked where the export is chosen.
fn png_size(ui: &mut Ui, size: [u32; 2], commands: &mut Vec<Command>) {
    ui.horizontal(|ui| {
        ui.label("PNG size");
        let mut next = size;
        let w = ui.add(egui::DragValue::new(&mut next[0]).range(200..=8000).suffix(" px"));
        w.widget_info(|| egui::WidgetInfo::labeled(egui::Role::SpinButton, true, "PNG width (px)"));
        ui.label("×");
        let h = ui.add(egui::DragValue::new(&mut next[1]).range(200..=8000).suffix(" px"));
        h.widget_info(|| egui::WidgetInfo::labeled(egui::Role::SpinButton, true, "PNG height (px)"));
        if next != size {
            commands.push(Command::SetPngSize(next));
        }
    });
}
