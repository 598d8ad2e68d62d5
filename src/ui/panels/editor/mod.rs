//! The editor side panel: a tab for the cell (ions and permeabilities with their reversal
//! potentials, the resting readouts, temperature and size), one for the pump and gated channels
//! (in `channels.rs`) and one for the protocol and run settings (in `protocol.rs`).

use egui::{Grid, RichText, ScrollArea, Ui};

pub mod channels;
pub mod protocol;
pub mod solutions;

use crate::analysis::RestReport;
use crate::scenario::Edit;
use crate::scenario::fields::Part;
use crate::ui::theme::species_color;
use crate::ui::widgets::{Editing, color_swatch};

/// Which tab of the editor is open.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum EditorTab {
    #[default]
    Cell,
    Channels,
    Protocol,
    Solutions,
}

/// What the editor shows besides the scenario.
pub struct EditorInfo<'a> {
    /// The resting report of the scenario, or why it could not be computed.
    pub rest: &'a Result<RestReport, String>,
    /// Present simulated time, for the protocol's time strip.
    pub now_ms: f64,
}

pub fn show(ui: &mut Ui, tab: &mut EditorTab, info: &EditorInfo, ed: &mut Editing) {
    ui.horizontal(|ui| {
        for (t, label) in [
            (EditorTab::Cell, "Cell"),
            (EditorTab::Channels, "Pump & channels"),
            (EditorTab::Protocol, "Protocol"),
            (EditorTab::Solutions, "Solutions"),
        ] {
            if ui
                .selectable_label(*tab == t, RichText::new(label).strong())
                .clicked()
            {
                *tab = t;
            }
        }
    });
    ui.separator();
    ScrollArea::vertical()
        .auto_shrink([false, false])
        .show(ui, |ui| match tab {
            EditorTab::Cell => cell_tab(ui, info, ed),
            EditorTab::Channels => channels::show(ui, ed),
            EditorTab::Protocol => protocol::show(ui, info, ed),
            EditorTab::Solutions => solutions::show(ui, ed),
        });
}

fn cell_tab(ui: &mut Ui, info: &EditorInfo, ed: &mut Editing) {
    ui.heading("Ions and permeabilities");
    species_table(ui, info, ed);
    ui.horizontal(|ui| {
        ed.button(ui, "+ Add ion", "Add an ion species", Edit::AddSpecies);
    });
    ui.add_space(6.0);
    readouts(ui, info);
    ui.add_space(8.0);
    ui.heading("Temperature and size");
    Grid::new("cell grid")
        .num_columns(2)
        .spacing([12.0, 6.0])
        .show(ui, |ui| {
            ed.rows(
                ui,
                &[
                    ("Temperature", "temperature_c"),
                    ("Diameter", "cell.diameter_um"),
                    ("Membrane capacitance", "cell.capacitance_uf_per_cm2"),
                ],
            );
        });
    ed.others(ui, "scenario", Part::Scenario, &[]);
    ed.others(ui, "cell", Part::Cell, &[]);
    let mut track = ed.scenario.cell.track_concentrations;
    if ui
        .checkbox(&mut track, "Inside concentrations change with the currents")
        .on_hover_text("Track each ion's inside concentration over time (the bath is taken as infinite)")
        .changed()
    {
        ed.push(Edit::TrackConcentrations(track));
    }
    volume_choice(ui, ed);
}

/// Whether the volume is fixed or follows water, instantly or at a water permeability. A
/// given impermeant solute is kept across the choice.
fn volume_choice(ui: &mut Ui, ed: &mut Editing) {
    use crate::scenario::{Volume, Water};
    let now = &ed.scenario.cell.volume;
    let kept = match now {
        Volume::Tracked { impermeant, .. } => impermeant.clone(),
        Volume::Fixed => None,
    };
    let choices = [
        ("fixed", Volume::Fixed),
        (
            "follows water instantly",
            Volume::Tracked {
                water: Water::Instant,
                impermeant: kept.clone(),
            },
        ),
        (
            "follows water (osmotic permeability)",
            Volume::Tracked {
                water: Water::Permeability { pf_um_per_s: 20.0 },
                impermeant: kept,
            },
        ),
    ];
    let same_kind = |a: &Volume, b: &Volume| match (a, b) {
        (Volume::Fixed, Volume::Fixed) => true,
        (Volume::Tracked { water: x, .. }, Volume::Tracked { water: y, .. }) => {
            std::mem::discriminant(x) == std::mem::discriminant(y)
        }
        _ => false,
    };
    let shown = choices
        .iter()
        .find(|c| same_kind(&c.1, now))
        .map_or("fixed", |c| c.0);
    ui.horizontal(|ui| {
        let label = ui.label("Cell volume");
        egui::ComboBox::from_id_salt("cell volume")
            .selected_text(shown)
            .show_ui(ui, |ui| {
                for (text, v) in &choices {
                    if ui.selectable_label(same_kind(v, now), *text).clicked() && !same_kind(v, now) {
                        ed.push(Edit::Volume(v.clone()));
                    }
                }
            })
            .response
            .labelled_by(label.id)
            .on_hover_text(
                "A volume that follows water tracks the inside concentrations too; the impermeant inside solute is derived at the start unless the file gives it",
            );
    });
}

fn species_table(ui: &mut Ui, info: &EditorInfo, ed: &mut Editing) {
    species_grid(ui, info, ed);
    for i in 0..ed.scenario.species.len() {
        ed.others(ui, ("species", i), Part::Species, &[i]);
    }
}

fn species_grid(ui: &mut Ui, info: &EditorInfo, ed: &mut Editing) {
    let rows = ed.scenario.species.len();
    let report = info.rest.as_ref().ok();
    Grid::new("species table")
        .num_columns(9)
        .spacing([6.0, 4.0])
        .striped(true)
        .show(ui, |ui| {
            for h in [
                "",
                "Name",
                "z",
                "Inside",
                "Outside",
                "Permeability",
                "Rel.",
                "Reversal",
                "",
            ] {
                ui.label(RichText::new(h).small().strong());
            }
            ui.end_row();
            for i in 0..rows {
                let Some(sp) = ed.scenario.species.get(i).cloned() else {
                    break;
                };
                color_swatch(ui, species_color(i))
                    .on_hover_text(format!("{}: its colour in every plot", sp.name));
                ed.text(
                    ui,
                    ("species name", i),
                    &sp.name,
                    &format!("name of ion {}", i + 1),
                    44.0,
                    move |name| Edit::SpeciesName { index: i, name },
                );
                ed.number(ui, "species[].charge", &[i], 22.0);
                for (path, from) in [
                    ("species[].inside_mm", ed.scenario.inside.clone()),
                    ("species[].outside_mm", ed.scenario.outside.clone()),
                ] {
                    match from {
                        Some(solution) => solutions::derived_number(ui, ed, path, i, &solution),
                        None => {
                            ed.number(ui, path, &[i], 56.0);
                        }
                    }
                }
                ed.number(ui, "species[].permeability_cm_per_s", &[i], 70.0);
                let row = report.and_then(|r| r.species.get(i));
                let rel = row.and_then(|r| r.relative_permeability);
                ui.label(rel.map_or_else(|| "—".into(), relative_text))
                    .on_hover_text("Resting permeability relative to the most permeant ion");
                match row.and_then(|r| r.reversal_mv) {
                    Some(e) => {
                        ui.label(
                            RichText::new(format!("{e:+.1} mV"))
                                .color(species_color(i))
                                .strong(),
                        )
                        .on_hover_text(format!("Reversal (Nernst) potential of {}", sp.name));
                    }
                    None => {
                        ui.label("—").on_hover_text("Undefined: a concentration is 0");
                    }
                }
                ed.button(ui, "×", &format!("Remove {}", sp.name), Edit::RemoveSpecies(i));
                ui.end_row();
            }
        });
}

fn relative_text(r: f64) -> String {
    if r == 0.0 {
        "0".into()
    } else if r >= 0.01 {
        format!("{r:.2}")
            .trim_end_matches('0')
            .trim_end_matches('.')
            .to_string()
    } else {
        format!("{r:.0e}")
    }
}

fn readouts(ui: &mut Ui, info: &EditorInfo) {
    let report = match info.rest {
        Ok(r) => r,
        Err(e) => {
            ui.colored_label(ui.visuals().warn_fg_color, format!("No readouts: {e}"));
            return;
        }
    };
    Grid::new("readouts")
        .num_columns(2)
        .spacing([12.0, 4.0])
        .show(ui, |ui| {
            ui.label("GHK potential").on_hover_text(
                "Zero-current potential of the resting permeabilities alone (no pump, channels or protocol)",
            );
            match &report.ghk_mv {
                Ok(v) => ui.label(RichText::new(format!("{v:+.1} mV")).strong()),
                Err(e) => ui.label("—").on_hover_text(e.to_string()),
            };
            ui.end_row();
            ui.label("Resting potential").on_hover_text(
                "Steady state at t = 0: pump, channels and the commands in force at t = 0 included",
            );
            match &report.steady.resting_mv {
                Ok(v) => ui.label(RichText::new(format!("{v:+.1} mV")).strong()),
                Err(e) => ui.colored_label(ui.visuals().warn_fg_color, format!("undefined: {e}")),
            };
            ui.end_row();
            if report.steady.crossings.len() > 1 {
                ui.label("Zero-current points");
                let text = report
                    .steady
                    .crossings
                    .iter()
                    .map(|c| {
                        format!(
                            "{:+.1} mV ({})",
                            c.v_mv,
                            if c.increasing { "stable" } else { "unstable" }
                        )
                    })
                    .collect::<Vec<_>>()
                    .join(", ");
                ui.label(text);
                ui.end_row();
            }
        });
}
