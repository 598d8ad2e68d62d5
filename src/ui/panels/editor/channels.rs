//! The "Pump & channels" tab of the editor: the electrogenic pump and the gated channels, each
//! gate with its kinetics and power.

use egui::{Grid, RichText, Ui};

use crate::ui::command::{ChannelPreset, Edit, GateKind};
use crate::ui::fields::{ChannelNum, GateNum, NumField, PumpNum};
use crate::ui::widgets::Editing;

pub fn show(ui: &mut Ui, ed: &mut Editing) {
    pump(ui, ed);
    ui.add_space(10.0);
    channels(ui, ed);
}

fn pump(ui: &mut Ui, ed: &mut Editing) {
    ui.heading("Pump");
    let Some(p) = ed.scenario.pump.clone() else {
        ui.label("No electrogenic pump.");
        ed.button(
            ui,
            "+ Add a pump",
            "Add a 3:2 sodium–potassium exchanger",
            Edit::Pump(true),
        );
        return;
    };
    Grid::new("pump grid")
        .num_columns(2)
        .spacing([12.0, 6.0])
        .show(ui, |ui| {
            ui.label("Moves out");
            ui.horizontal(|ui| {
                ed.number(ui, NumField::Pump(PumpNum::ExportedPerCycle), 28.0);
                ed.species_choice(
                    ui,
                    "pump exports",
                    &p.exports,
                    "pump: ion moved out",
                    Edit::PumpExports,
                );
            });
            ui.end_row();
            ui.label("Moves in");
            ui.horizontal(|ui| {
                ed.number(ui, NumField::Pump(PumpNum::ImportedPerCycle), 28.0);
                ed.species_choice(
                    ui,
                    "pump imports",
                    &p.imports,
                    "pump: ion moved in",
                    Edit::PumpImports,
                );
            });
            ui.end_row();
            for (label, field) in [
                ("Largest current", PumpNum::MaxCurrent),
                ("Half-activation inside", PumpNum::HalfInside),
                ("Hill coefficient inside", PumpNum::HillInside),
                ("Half-activation outside", PumpNum::HalfOutside),
                ("Hill coefficient outside", PumpNum::HillOutside),
            ] {
                ui.label(label);
                ed.number(ui, NumField::Pump(field), 80.0);
                ui.end_row();
            }
        });
    ed.button(ui, "Remove the pump", "Remove the pump", Edit::Pump(false));
}

fn channels(ui: &mut Ui, ed: &mut Editing) {
    ui.heading("Gated channels");
    if ed.scenario.channels.is_empty() {
        ui.label("No gated channels: the membrane is passive.");
    }
    for i in 0..ed.scenario.channels.len() {
        let Some(ch) = ed.scenario.channels.get(i).cloned() else {
            break;
        };
        egui::Frame::group(ui.style()).show(ui, |ui| {
            ui.set_width(ui.available_width());
            ui.horizontal(|ui| {
                ed.text(
                    ui,
                    ("channel label", i),
                    &ch.label,
                    &format!("label of channel {}", i + 1),
                    130.0,
                    move |label| Edit::ChannelLabel { index: i, label },
                );
                ui.label("carries");
                ed.species_choice(
                    ui,
                    ("channel species", i),
                    &ch.species,
                    &format!("{}: ion carried", ch.label),
                    move |species| Edit::ChannelSpecies { index: i, species },
                );
                ui.with_layout(egui::Layout::right_to_left(egui::Align::Center), |ui| {
                    ed.button(
                        ui,
                        "×",
                        &format!("Remove the channel {}", ch.label),
                        Edit::RemoveChannel(i),
                    );
                });
            });
            Grid::new(("channel grid", i))
                .num_columns(4)
                .spacing([10.0, 6.0])
                .show(ui, |ui| {
                    ui.label("Largest permeability");
                    ed.number(ui, NumField::Channel(i, ChannelNum::MaxPermeability), 80.0);
                    ui.label("Shift");
                    ed.number(ui, NumField::Channel(i, ChannelNum::Shift), 60.0);
                    ui.end_row();
                    ui.label("q10");
                    ed.number(ui, NumField::Channel(i, ChannelNum::Q10), 60.0);
                    ui.label("at");
                    ed.number(ui, NumField::Channel(i, ChannelNum::ReferenceTemperature), 60.0);
                    ui.end_row();
                });
            ui.label(RichText::new("Gates (open fraction = product of gate^power)").small());
            for (g, gate) in ch.gates.iter().enumerate() {
                let current = GateKind::of(&gate.kinetics);
                ui.horizontal(|ui| {
                    let mut chosen = None;
                    egui::ComboBox::from_id_salt(("gate kind", i, g))
                        .selected_text(current.label())
                        .width(200.0)
                        .show_ui(ui, |ui| {
                            for k in GateKind::ALL {
                                if ui.selectable_label(k == current, k.label()).clicked() && k != current {
                                    chosen = Some(k);
                                }
                            }
                        })
                        .response
                        .on_hover_text(format!("{} gate {}: kinetics", ch.label, g + 1));
                    if let Some(kind) = chosen {
                        ed.push(Edit::GateKinetics {
                            channel: i,
                            gate: g,
                            kind,
                        });
                    }
                    ui.label("power");
                    ed.number(
                        ui,
                        NumField::Gate {
                            channel: i,
                            gate: g,
                            what: GateNum::Power,
                        },
                        26.0,
                    );
                    ed.button(
                        ui,
                        "×",
                        &format!("Remove gate {} of {}", g + 1, ch.label),
                        Edit::RemoveGate { channel: i, gate: g },
                    );
                });
                if current == GateKind::Boltzmann {
                    ui.horizontal(|ui| {
                        ui.add_space(16.0);
                        ui.label("V½");
                        ed.number(
                            ui,
                            NumField::Gate {
                                channel: i,
                                gate: g,
                                what: GateNum::VHalf,
                            },
                            60.0,
                        );
                        ui.label("slope");
                        ed.number(
                            ui,
                            NumField::Gate {
                                channel: i,
                                gate: g,
                                what: GateNum::Slope,
                            },
                            56.0,
                        );
                        ui.label("τ");
                        ed.number(
                            ui,
                            NumField::Gate {
                                channel: i,
                                gate: g,
                                what: GateNum::Tau,
                            },
                            56.0,
                        );
                    });
                }
            }
            ui.menu_button("+ Add gate", |ui| {
                for k in GateKind::ALL {
                    if ui.button(k.label()).clicked() {
                        ed.push(Edit::AddGate { channel: i, kind: k });
                    }
                }
            });
        });
    }
    ui.menu_button("+ Add channel", |ui| {
        for (preset, label) in [
            (ChannelPreset::HhSodium, "Fast sodium (HH 1952, m³h)"),
            (ChannelPreset::HhPotassium, "Delayed potassium (HH 1952, n⁴)"),
            (ChannelPreset::Boltzmann, "Voltage-gated, one Boltzmann gate"),
        ] {
            if ui.button(label).clicked() {
                ed.push(Edit::AddChannel(preset));
            }
        }
    });
}
