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
    // Wrapped: a narrow panel (large text) puts the last tabs on a second row.
    ui.horizontal_wrapped(|ui| {
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

/// The species table: one row per ion when the panel is wide enough for it; otherwise (large
/// text, a narrow panel) two tables, concentrations first, then permeabilities and reversal
/// potentials, so that no column is cut off at the panel's edge.
fn species_grid(ui: &mut Ui, info: &EditorInfo, ed: &mut Editing) {
    let full_w_id = egui::Id::unique("species table full width");
    let full_w: Option<f32> = ui.data(|d| d.get_temp(full_w_id));
    // Every name in full ("NMDG+", "Ca2+"), in a field as wide as the longest.
    let font = egui::TextStyle::Body.resolve(ui.style());
    let name_w = ed
        .scenario
        .species
        .iter()
        .map(|s| {
            ui.painter()
                .layout_no_wrap(s.name.clone(), font.clone(), egui::Color32::WHITE)
                .size()
                .x
        })
        .fold(0.0_f32, f32::max)
        .max(30.0)
        + 14.0;
    let split = full_w.is_some_and(|w| w > ui.available_width() + 0.5);
    if split {
        species_rows(ui, info, ed, name_w, Columns::Concentrations);
        ui.add_space(4.0);
        species_rows(ui, info, ed, name_w, Columns::Permeabilities);
    } else {
        let w = species_rows(ui, info, ed, name_w, Columns::All);
        ui.data_mut(|d| d.insert_temp(full_w_id, w));
    }
}

/// Which columns of the species table a grid shows.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Columns {
    All,
    Concentrations,
    Permeabilities,
}

/// One grid of the species table; returns its width.
fn species_rows(ui: &mut Ui, info: &EditorInfo, ed: &mut Editing, name_w: f32, columns: Columns) -> f32 {
    let rows = ed.scenario.species.len();
    let report = info.rest.as_ref().ok();
    let concentrations = columns != Columns::Permeabilities;
    let permeabilities = columns != Columns::Concentrations;
    let headers: &[&str] = match columns {
        Columns::All => &[
            "",
            "Name",
            "z",
            "Inside",
            "Outside",
            "Permeability",
            "Rel.",
            "Reversal",
            "",
        ],
        Columns::Concentrations => &["", "Name", "z", "Inside", "Outside", ""],
        Columns::Permeabilities => &["", "Ion", "Permeability", "Rel.", "Reversal"],
    };
    Grid::new(("species table", columns as u8))
        .num_columns(headers.len())
        .spacing([6.0, 4.0])
        .striped(true)
        .show(ui, |ui| {
            for h in headers {
                ui.label(RichText::new(*h).small().strong());
            }
            ui.end_row();
            for i in 0..rows {
                let Some(sp) = ed.scenario.species.get(i).cloned() else {
                    break;
                };
                color_swatch(ui, species_color(i))
                    .on_hover_text(format!("{}: its colour in every plot", sp.name));
                if !concentrations {
                    // The second table names each row; the name is edited in the first.
                    ui.label(RichText::new(&sp.name).color(species_color(i)).strong());
                    species_permeability(ui, ed, report, i, &sp.name);
                    ui.end_row();
                    continue;
                }
                ed.text(
                    ui,
                    ("species name", i),
                    &sp.name,
                    &format!("name of ion {}", i + 1),
                    name_w,
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
                if permeabilities {
                    species_permeability(ui, ed, report, i, &sp.name);
                }
                ed.button(ui, "×", &format!("Remove {}", sp.name), Edit::RemoveSpecies(i));
                ui.end_row();
            }
        })
        .response
        .rect
        .width()
}

/// A species' permeability field, its relative permeability and its reversal potential.
fn species_permeability(ui: &mut Ui, ed: &mut Editing, report: Option<&RestReport>, i: usize, name: &str) {
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
            .on_hover_text(format!("Reversal (Nernst) potential of {name}"));
        }
        None => {
            ui.label("—").on_hover_text("Undefined: a concentration is 0");
        }
    }
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
