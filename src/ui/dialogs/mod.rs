//! Dialogs: a file that could not be opened (with the place and the reason), unsaved changes,
//! a typed path when no file dialog can be shown, and the About window.

pub mod export;
pub mod figure;
pub mod files;
pub mod restore;

use std::path::PathBuf;

use egui::{Id, Key, Modal, RichText, TextEdit, Ui};

use crate::constants::{FARADAY_C_PER_MOL, GAS_J_PER_MOL_K};
use crate::scenario::{Location, ScenarioError};
use crate::ui::command::{Command, FilePurpose};

/// What was asked for before "unsaved changes" interrupted it.
#[derive(Debug, Clone, PartialEq)]
pub enum Pending {
    New,
    Open,
    OpenPath(PathBuf),
    OpenExample(String),
    Quit,
}

/// The dialog on screen, if any. Only one at a time.
#[derive(Debug, Clone, PartialEq)]
pub enum Dialog {
    OpenFailed {
        file: String,
        place: Option<String>,
        reasons: Vec<String>,
    },
    SaveFailed {
        file: String,
        reason: String,
    },
    Unsaved {
        title: String,
        then: Pending,
    },
    TypePath {
        purpose: FilePurpose,
        text: String,
    },
}

impl Dialog {
    /// The dialog for a file that could not be read: where, and why.
    pub fn open_failed(e: &ScenarioError) -> Dialog {
        let place = e.location().map(|l| match l {
            Location::Text { line, column } => format!("line {line}, column {column}"),
            Location::Field(path) => format!("the field {path}"),
        });
        let (file, reasons) = match e {
            ScenarioError::Syntax { file, message, .. } => (file.clone(), vec![message.clone()]),
            ScenarioError::Io { file, .. } | ScenarioError::NewerFormat { file, .. } => {
                let text = e.to_string();
                let reason = text
                    .strip_prefix(&format!("{file}: "))
                    .unwrap_or(&text)
                    .to_string();
                (file.clone(), vec![reason])
            }
            ScenarioError::Invalid { file, problems } => {
                (file.clone(), problems.iter().map(ToString::to_string).collect())
            }
        };
        Dialog::OpenFailed { file, place, reasons }
    }
}

/// Shows `dialog`; pushes the user's answer.
pub fn show(ui: &Ui, dialog: &mut Dialog, commands: &mut Vec<Command>) {
    let modal = Modal::new(Id::unique("permeant dialog")).show(ui.ctx(), |ui| {
        ui.set_max_width(520.0);
        match dialog {
            Dialog::OpenFailed { file, place, reasons } => {
                ui.heading("Could not open the scenario");
                ui.label(RichText::new(file.as_str()).monospace());
                if let Some(p) = place {
                    ui.label(format!("Where: {p}"));
                }
                for r in reasons.iter() {
                    ui.label(RichText::new(r.as_str()).color(ui.visuals().error_fg_color));
                }
                ui.label("The scenario you were working on is unchanged.");
                if ui.button("Close").clicked() {
                    commands.push(Command::Dismiss);
                }
            }
            Dialog::SaveFailed { file, reason } => {
                ui.heading("Could not save");
                ui.label(RichText::new(file.as_str()).monospace());
                ui.label(RichText::new(reason.as_str()).color(ui.visuals().error_fg_color));
                ui.label("Nothing was written; the scenario is still open and unsaved.");
                if ui.button("Close").clicked() {
                    commands.push(Command::Dismiss);
                }
            }
            Dialog::Unsaved { title, .. } => {
                ui.heading("Unsaved changes");
                ui.label(format!("\"{title}\" has changes that are not saved."));
                ui.horizontal(|ui| {
                    if ui.button("Save first").clicked() {
                        commands.push(Command::Proceed { save_first: true });
                    }
                    if ui.button("Discard the changes").clicked() {
                        commands.push(Command::Proceed { save_first: false });
                    }
                    if ui.button("Cancel").clicked() {
                        commands.push(Command::Dismiss);
                    }
                });
            }
            Dialog::TypePath { purpose, text } => {
                let (heading, action, ext) = match purpose {
                    FilePurpose::Open => ("Open a scenario file", "Open", "ron"),
                    FilePurpose::Save => ("Save the scenario as", "Save", "ron"),
                    FilePurpose::Export(kind) => (kind.title(), "Export", kind.extension()),
                    FilePurpose::FitData => ("Load measured points", "Load", "csv"),
                };
                ui.heading(heading);
                ui.label(format!(
                    "Type the path of a .{ext} file (no file dialog is available here)."
                ));
                let label = ui.label("File path");
                let edit = ui.add(
                    TextEdit::singleline(text)
                        .desired_width(460.0)
                        .hint_text(format!("/home/me/cells/axon.{ext}")),
                );
                let edit = edit.labelled_by(label.id);
                let submitted = edit.lost_focus() && ui.input(|i| i.key_pressed(Key::Enter));
                ui.horizontal(|ui| {
                    let go = ui.add_enabled(!text.trim().is_empty(), egui::Button::new(action));
                    if (go.clicked() || submitted) && !text.trim().is_empty() {
                        let path = PathBuf::from(text.trim());
                        commands.push(match purpose {
                            FilePurpose::Open => Command::OpenChosen(path),
                            FilePurpose::Save => Command::SaveTo(path),
                            FilePurpose::Export(kind) => Command::ExportTo(*kind, path),
                            FilePurpose::FitData => {
                                Command::Analysis(crate::ui::analysis::AnalysisCommand::LoadFitData(path))
                            }
                        });
                    }
                    if ui.button("Cancel").clicked() {
                        commands.push(Command::Dismiss);
                    }
                });
            }
        }
    });
    if modal.should_close() && !matches!(dialog, Dialog::Unsaved { .. }) {
        commands.push(Command::Dismiss);
    }
}

/// The About window.
pub fn about(ui: &Ui, commands: &mut Vec<Command>) {
    let mut open = true;
    egui::Window::new("About permeant")
        .open(&mut open)
        .collapsible(false)
        .resizable(false)
        .pivot(egui::Align2::CENTER_CENTER)
        .default_pos(ui.ctx().content_rect().center())
        .show(ui.ctx(), |ui| {
        ui.set_max_width(460.0);
        ui.heading(format!("permeant {}", env!("CARGO_PKG_VERSION")));
        ui.label(env!("CARGO_PKG_DESCRIPTION"));
        ui.add_space(6.0);
        ui.label(format!("License: {}", env!("CARGO_PKG_LICENSE")));
        ui.label(format!(
            "Physical constants: CODATA 2018, exact in the 2019 SI (F = {FARADAY_C_PER_MOL} C/mol, R = {GAS_J_PER_MOL_K} J/(mol·K))."
        ));
        ui.label("Gate kinetics: Hodgkin & Huxley (1952), J. Physiol. 117:500–544.");
        ui.label("Colours: the colour-blind-safe palette of Okabe & Ito (2008).");
        ui.add_space(6.0);
        ui.label(
            RichText::new(
                "For research and teaching, not for diagnosing or treating anyone; defer to licensed clinical practice.",
            )
            .strong()
            .color(ui.visuals().warn_fg_color),
        );
    });
    if !open {
        commands.push(Command::ShowAbout(false));
    }
}
