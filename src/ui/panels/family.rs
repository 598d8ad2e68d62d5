//! The side panel's family view: the progress of the family of runs (with its cancel), what
//! is measured on each run against the varied value (the I–V of a voltage-clamp step family,
//! spikes against current in current clamp), the reversal potential, the activation curve
//! G/G_max with its Boltzmann fit, and the fraction blocked of a dose family.

use egui::{RichText, ScrollArea, Ui};
use egui_plot::{HLine, Line, LineStyle, MarkerShape, Plot, Points, VLine};

use crate::scenario::Scenario;
use crate::ui::analysis::AnalysisCommand;
use crate::ui::command::Command;
use crate::ui::panels::plots::{hover_label, nice_label, nice_steps};
use crate::ui::state::family::FamilyState;
use crate::ui::theme::{neutral_color, potential_color, species_color};

/// Marker shapes of successive runs, so runs differ without colour.
pub const MARKERS: [MarkerShape; 5] = [
    MarkerShape::Circle,
    MarkerShape::Square,
    MarkerShape::Diamond,
    MarkerShape::Up,
    MarkerShape::Cross,
];

/// A short readable number.
fn short(x: f64) -> String {
    crate::report::csv::number((x * 1e4).round() / 1e4)
}

pub fn show(ui: &mut Ui, f: &FamilyState, s: &Scenario, commands: &mut Vec<Command>) {
    let dark = ui.visuals().dark_mode;
    let Some(family) = &s.run.family else {
        ui.label(
            "This scenario runs once. Give it a family of runs (run.family) to vary one number over values.",
        );
        return;
    };
    let field = family.field();
    // The experiment's name for the varied number, not its field path.
    let label = crate::scenario::control_name(field, s);
    let unit = field.field().unit;
    ui.label(RichText::new(format!("One run per value of: {label}")).strong());
    if let Some((done, total)) = f.progress() {
        ui.horizontal(|ui| {
            ui.add(
                egui::ProgressBar::new(done as f32 / total.max(1) as f32)
                    .text(format!("{done} of {total} runs"))
                    .desired_width(ui.available_width() - 70.0),
            );
            if ui.button("Cancel").on_hover_text("Stop the family now").clicked() {
                commands.push(Command::CancelFamily);
            }
        });
    }
    if let Some(e) = &f.error {
        ui.colored_label(ui.visuals().warn_fg_color, e);
    }
    let Some(r) = &f.result else { return };
    // Block is read from the clamp current, so only a voltage-clamp family is a control.
    if r.runs.clamped
        && ui
        .add_enabled(f.progress().is_none(), egui::Button::new("Keep as control"))
        .on_hover_text(
            "Keep these measurements, change the scenario (add a blocker, raise its dose), and read the current lost at each level in Analysis → Lost current",
        )
        .clicked()
    {
        commands.push(Command::Analysis(AnalysisCommand::KeepControlFamily));
    }
    let t = &r.table;
    let Some(measure) = t.measures.first() else { return };
    let clamped = r.runs.clamped;
    let y_unit = if clamped { "µA/cm²" } else { "" };
    ui.label(
        RichText::new(if clamped {
            format!(
                "{} of the recorded current (ideal clamp: no capacitive current)",
                measure.describe()
            )
        } else {
            measure.describe()
        })
        .small(),
    );
    let points: Vec<[f64; 2]> = t
        .values
        .iter()
        .zip(t.first())
        .filter_map(|(v, i)| i.map(|i| [*v, i]))
        .collect();
    let half = (ui.available_height() * 0.4).clamp(120.0, 260.0);
    let x_label = if unit.is_empty() {
        label.clone()
    } else {
        format!("{label} ({unit})")
    };
    Plot::new("family measure")
        .height(half)
        .x_axis_label(x_label.clone())
        .y_axis_label(if clamped { "Current (µA/cm²)" } else { "Spikes" })
        .x_grid_spacer(egui_plot::uniform_grid_spacer(nice_steps))
        .y_grid_spacer(egui_plot::uniform_grid_spacer(nice_steps))
        .x_axis_formatter(nice_label)
        .y_axis_formatter(nice_label)
        .label_formatter(move |h| hover_label(h, unit, y_unit))
        .show(ui, |pui| {
            pui.hline(
                HLine::new("", 0.0)
                    .color(neutral_color(dark).gamma_multiply(0.4))
                    .width(0.8),
            );
            pui.line(
                Line::new("measured", points.clone())
                    .color(potential_color(dark))
                    .width(1.5),
            );
            pui.points(
                Points::new("runs", points.clone())
                    .shape(MarkerShape::Circle)
                    .radius(3.0)
                    .color(potential_color(dark)),
            );
            if let Some(e) = t.reversal_mv {
                pui.vline(
                    VLine::new(format!("E_rev {e:+.1} mV"), e)
                        .color(species_color(1))
                        .style(LineStyle::dashed_loose()),
                );
            }
        });
    match t.reversal_mv {
        Some(e) => {
            ui.label(format!("Reversal potential (interpolated): {e:+.2} mV"));
        }
        None if clamped && unit == "mV" => {
            ui.label("No reversal: the current keeps one sign over these levels.");
        }
        None => {}
    }
    let g: Vec<[f64; 2]> = t
        .values
        .iter()
        .zip(&t.g_rel)
        .filter_map(|(v, g)| g.map(|g| [*v, g]))
        .collect();
    if !g.is_empty() {
        let fit = t.boltzmann;
        let (lo, hi) = g.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
            (a.min(p[0]), b.max(p[0]))
        });
        Plot::new("family activation")
            .height(half)
            .x_axis_label(x_label)
            .y_axis_label("G / Gmax")
            .default_y_bounds(-0.05, 1.05)
            .x_grid_spacer(egui_plot::uniform_grid_spacer(nice_steps))
            .x_axis_formatter(nice_label)
            .y_axis_formatter(nice_label)
            .label_formatter(move |h| hover_label(h, "mV", ""))
            .show(ui, |pui| {
                pui.points(
                    Points::new("G/Gmax", g.clone())
                        .shape(MarkerShape::Square)
                        .radius(3.0)
                        .color(species_color(0)),
                );
                if let Some(b) = fit {
                    let curve: Vec<[f64; 2]> = (0..=200)
                        .map(|k| {
                            let v = lo + (hi - lo) * f64::from(k) / 200.0;
                            [v, 1.0 / (1.0 + (-(v - b.v_half_mv) / b.slope_mv).exp())]
                        })
                        .collect();
                    pui.line(
                        Line::new("Boltzmann fit", curve)
                            .color(potential_color(dark))
                            .style(LineStyle::dashed_dense()),
                    );
                }
            });
        match fit {
            Some(b) => ui.label(format!(
                "Boltzmann fit: V½ = {:+.2} ± {:.2} mV, k = {:.2} ± {:.2} mV",
                b.v_half_mv, b.se_v_half_mv, b.slope_mv, b.se_slope_mv
            )),
            None => ui.label(
                "No Boltzmann fit: the conductance does not run from closed to open over these levels.",
            ),
        };
    }
    ScrollArea::vertical().auto_shrink([false, true]).show(ui, |ui| {
        egui::Grid::new("family table").striped(true).show(ui, |ui| {
            ui.label(RichText::new(&label).strong());
            ui.label(RichText::new(measure.describe()).strong());
            if !t.blocked.is_empty() {
                ui.label(RichText::new("blocked").strong());
            }
            ui.end_row();
            for (k, (v, row)) in t.values.iter().zip(&t.cells).enumerate() {
                ui.label(short(*v));
                ui.label(row.first().and_then(|m| m.value).map_or("—".into(), short));
                if let Some(b) = t.blocked.get(k) {
                    ui.label(b.map_or("—".into(), |b| format!("{:.1} %", 100.0 * b)));
                }
                ui.end_row();
            }
        });
    });
}
