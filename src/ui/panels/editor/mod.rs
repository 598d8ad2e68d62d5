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
use crate::ui::state::runtime::Snapshot;
use crate::ui::theme::species_color;
use crate::ui::time::TimeUnit;
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
    /// The cell at t = 0 and at the time the readouts "now" are read (the plot cursor, or the
    /// end of what is shown), and whether that time is the cursor's.
    pub at_start: Option<Snapshot>,
    pub now: Option<Snapshot>,
    pub at_cursor: bool,
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
    ui.heading("Ions and permeabilities")
        .on_hover_text("The file's values: what the cell starts from at t = 0");
    ui.label(
        RichText::new("Values at the start of the run; the readouts below show them now too.")
            .small()
            .weak(),
    );
    species_table(ui, info, ed);
    ui.horizontal(|ui| {
        ed.button(ui, "+ Add ion", "Add an ion species", Edit::AddSpecies);
    });
    ui.add_space(6.0);
    readouts(ui, info, ed.scenario);
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

/// One readout value, in bold (and its species' colour), read out by a screen reader with its
/// row and time ("GHK potential now: −46.9 mV").
fn value_cell(ui: &mut Ui, what: &str, text: String, color: Option<egui::Color32>) {
    let mut rich = RichText::new(text.as_str()).strong();
    if let Some(c) = color {
        rich = rich.color(c);
    }
    let response = ui.label(rich);
    let name = format!("{what}: {text}");
    response.widget_info(|| egui::WidgetInfo::labeled(egui::Role::Label, true, name.as_str()));
}

/// A concentration with the digits a change of a few hundredths of a mM needs.
fn concentration_text(c: f64) -> String {
    if c == 0.0 {
        "0".into()
    } else if c.abs() >= 1.0 {
        format!("{c:.2}")
    } else if c.abs() >= 0.01 {
        format!("{c:.4}")
    } else {
        format!("{c:.3e}")
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

fn readouts(ui: &mut Ui, info: &EditorInfo, scenario: &crate::scenario::Scenario) {
    let report = match info.rest {
        Ok(r) => r,
        Err(e) => {
            ui.colored_label(ui.visuals().warn_fg_color, format!("No readouts: {e}"));
            return;
        }
    };
    let unit = TimeUnit::for_duration(scenario.run.duration_ms);
    let mv = |v: Option<f64>| v.map_or_else(|| "—".to_string(), |v| format!("{v:+.1} mV"));
    let mm = |v: Option<f64>| v.map_or_else(|| "—".to_string(), |v| format!("{} mM", concentration_text(v)));
    let start = info.at_start.as_ref();
    let now = info.now.as_ref();
    let when_now = if info.at_cursor { "at cursor" } else { "now" };
    Grid::new("readouts")
        .num_columns(3)
        .spacing([12.0, 4.0])
        .striped(true)
        .show(ui, |ui| {
            ui.label("");
            ui.label(RichText::new("At start").small().strong())
                .on_hover_text("At t = 0 ms, from the file's values");
            let now_head = match now {
                Some(n) if info.at_cursor => format!("At cursor, {}", unit.format(n.t_ms)),
                Some(n) => format!("Now, {}", unit.format(n.t_ms)),
                None => "Now".to_string(),
            };
            ui.label(RichText::new(now_head).small().strong()).on_hover_text(
                "At the plot cursor when one is placed (click a plot), otherwise at the end of what the plots show",
            );
            ui.end_row();

            ui.label("Membrane potential")
                .on_hover_text("V at that time; at the start, the potential the run starts from");
            value_cell(ui, "Membrane potential at start", mv(start.map(|s| s.v_mv)), None);
            value_cell(ui, &format!("Membrane potential {when_now}"), mv(now.map(|n| n.v_mv)), None);
            ui.end_row();

            ui.label("GHK potential").on_hover_text(
                "Zero-current potential of the resting permeabilities alone (no pump, channels or agents), with the concentrations in force at that time",
            );
            match &report.ghk_mv {
                Ok(v) => value_cell(ui, "GHK potential at start", mv(Some(*v)), None),
                Err(e) => {
                    ui.label("—").on_hover_text(e.to_string());
                }
            }
            value_cell(ui, &format!("GHK potential {when_now}"), mv(now.and_then(|n| n.ghk_mv)), None);
            ui.end_row();

            ui.label("Resting potential").on_hover_text(
                "Steady state at t = 0: pump, channels and the commands in force at t = 0 included",
            );
            match &report.steady.resting_mv {
                Ok(v) => value_cell(ui, "Resting potential at start", mv(Some(*v)), None),
                Err(e) => {
                    ui.colored_label(ui.visuals().warn_fg_color, format!("undefined: {e}"));
                }
            }
            ui.label("");
            ui.end_row();

            // Species whose concentrations change in the run: their concentrations and
            // reversal potential then and now.
            let tracks_inside = scenario.cell.track_concentrations || !scenario.cell.volume.is_fixed();
            if let (Some(s0), Some(n)) = (start, now) {
                for (i, name) in n.species.iter().enumerate() {
                    if n.varying.get(i) != Some(&true) {
                        continue;
                    }
                    let c = species_color(i);
                    let (out0, out1) = (s0.outside_mm.get(i).copied(), n.outside_mm.get(i).copied());
                    if !tracks_inside || out0 != out1 {
                        ui.label(format!("Bath {name}"));
                        value_cell(ui, &format!("Bath {name} at start"), mm(out0), None);
                        value_cell(ui, &format!("Bath {name} {when_now}"), mm(out1), None);
                        ui.end_row();
                    }
                    if tracks_inside {
                        ui.label(format!("Inside {name}"));
                        value_cell(ui, &format!("Inside {name} at start"), mm(s0.inside_mm.get(i).copied()), None);
                        value_cell(ui, &format!("Inside {name} {when_now}"), mm(n.inside_mm.get(i).copied()), None);
                        ui.end_row();
                    }
                    ui.label(format!("E {name}"))
                        .on_hover_text(format!("Reversal (Nernst) potential of {name} with the concentrations in force"));
                    let e0 = mv(s0.reversal_mv.get(i).copied().flatten());
                    let e1 = mv(n.reversal_mv.get(i).copied().flatten());
                    value_cell(ui, &format!("E {name} at start"), e0, Some(c));
                    value_cell(ui, &format!("E {name} {when_now}"), e1, Some(c));
                    ui.end_row();
                }
            }
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
                ui.label(text).on_hover_text("At the start");
                ui.end_row();
            }
        });
}
