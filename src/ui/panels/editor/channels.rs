//! The "Pump & channels" tab of the editor: the electrogenic pump and the gated channels, each
//! gate with its kinetics and power.

use egui::{Grid, RichText, Ui};

use crate::scenario::fields::Part;
use crate::scenario::{ChannelPreset, Edit, GateKind};
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
                ed.number(ui, "pump.exported_per_cycle", &[], 28.0);
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
                ed.number(ui, "pump.imported_per_cycle", &[], 28.0);
                ed.species_choice(
                    ui,
                    "pump imports",
                    &p.imports,
                    "pump: ion moved in",
                    Edit::PumpImports,
                );
            });
            ui.end_row();
            ed.rows(
                ui,
                &[
                    ("Largest current", "pump.max_current_ua_per_cm2"),
                    ("Half-activation inside", "pump.half_saturation_inside_mm"),
                    ("Hill coefficient inside", "pump.hill_inside"),
                    ("Half-activation outside", "pump.half_saturation_outside_mm"),
                    ("Hill coefficient outside", "pump.hill_outside"),
                ],
            );
        });
    ed.others(ui, "pump", Part::Pump, &[]);
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
                    ed.number(ui, "channels[].max_permeability_cm_per_s", &[i], 80.0);
                    ui.label("Shift");
                    ed.number(ui, "channels[].shift_mv", &[i], 60.0);
                    ui.end_row();
                    ui.label("q10");
                    ed.number(ui, "channels[].q10", &[i], 60.0);
                    ui.label("at");
                    ed.number(ui, "channels[].reference_temperature_c", &[i], 60.0);
                    ui.end_row();
                });
            ed.others(ui, ("channel", i), Part::Channel, &[i]);
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
                    ed.number(ui, "channels[].gates[].power", &[i, g], 26.0);
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
                        ed.number(ui, "channels[].gates[].kinetics.v_half_mv", &[i, g], 60.0);
                        ui.label("slope");
                        ed.number(ui, "channels[].gates[].kinetics.slope_mv", &[i, g], 56.0);
                        ui.label("τ");
                        ed.number(ui, "channels[].gates[].kinetics.tau_ms", &[i, g], 56.0);
                    });
                }
                ed.others(ui, ("gate", i, g), Part::Gate, &[i, g]);
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
