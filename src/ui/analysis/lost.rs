//! The Analysis window's "Lost current" tab: a family kept as the control compared level by
//! level with the present family (the fraction of current blocked at each level), and, when
//! the present family varies an agent's dose, the dose–response of its current with the Hill
//! fit (IC50 with its standard error, Hill coefficient). The numbers come from
//! `analysis::block`; this file only lays them out.

use egui::{RichText, ScrollArea, Ui};
use egui_plot::{HoverPosition, Legend, Line, LineStyle, MarkerShape, Plot, Points, VLine};

use crate::analysis::block::{DoseBlock, SMALL_CONTROL, compare_families, dose_block};
use crate::analysis::family::{FamilyTable, Measure};
use crate::scenario::{Event, Scenario};
use crate::ui::analysis::{AnalysisCommand, short};
use crate::ui::command::Command;
use crate::ui::state::family::FamilyResult;
use crate::ui::theme::{neutral_color, potential_color, species_color};

/// A family kept as the control of a comparison: its measurements only, not its traces.
#[derive(Debug, Clone)]
pub struct ControlFamily {
    /// The scenario's title when it was kept, to say which family it was.
    pub title: String,
    pub table: FamilyTable,
}

/// The unit of what a measurement reads.
fn measure_unit(m: &Measure, clamped: bool) -> &'static str {
    match m {
        Measure::Spikes { .. } => "",
        Measure::Latency { .. } => "ms",
        _ if clamped => "µA/cm²",
        _ => "mV",
    }
}

/// A measurement in words, with its window of time.
pub fn measure_words(m: &Measure) -> String {
    match *m {
        Measure::Peak { from_ms, until_ms } => {
            format!("peak current from {} to {} ms", short(from_ms), short(until_ms))
        }
        Measure::Late { from_ms, until_ms } => {
            format!("mean current from {} to {} ms", short(from_ms), short(until_ms))
        }
        Measure::Tail { at_ms } => format!("current at {} ms", short(at_ms)),
        Measure::Spikes { from_ms, until_ms } => {
            format!("spikes from {} to {} ms", short(from_ms), short(until_ms))
        }
        Measure::Latency { from_ms, until_ms } => {
            format!(
                "first spike latency from {} to {} ms",
                short(from_ms),
                short(until_ms)
            )
        }
    }
}

fn cell(x: Option<f64>) -> String {
    x.map_or_else(|| "—".into(), short)
}

fn percent(x: Option<f64>) -> String {
    x.map_or_else(|| "—".into(), |b| format!("{:.1} %", 100.0 * b))
}

/// The tab.
pub fn show(
    ui: &mut Ui,
    control: Option<&ControlFamily>,
    present: Option<&FamilyResult>,
    s: &Scenario,
    commands: &mut Vec<Command>,
) {
    ScrollArea::vertical().auto_shrink([false, false]).show(ui, |ui| {
        // A dose family carries its own control (its run at 0 µM): its IC50 comes first, where a
        // small window or large text still shows it without scrolling.
        if let Some(r) = present
            && r.table.clamped
            && r.table.field.field().path == "protocol[].dose_um"
        {
            dose_section(ui, &r.table, s);
            ui.separator();
        }
        compare_section(ui, control, present, s, commands);
    });
}

fn compare_section(
    ui: &mut Ui,
    control: Option<&ControlFamily>,
    present: Option<&FamilyResult>,
    s: &Scenario,
    commands: &mut Vec<Command>,
) {
    ui.label(RichText::new("Control against this family").strong());
    let Some(present) = present else {
        ui.label(
            RichText::new(if s.run.family.is_some() {
                "The family of runs is not ready yet."
            } else {
                "This scenario runs once. Block is read from a family of runs (run.family): open one, for example an example with \"family\" in its name."
            })
            .weak(),
        );
        if let Some(c) = control {
            control_line(ui, c, commands);
        }
        return;
    };
    let Some(c) = control else {
        if present.table.field.field().path == "protocol[].dose_um" {
            ui.label(
                RichText::new("This family varies a dose: its own run at 0 µM is the control (above).")
                    .weak(),
            );
        }
        ui.label(
            "No control kept. Keep this family as the control, then change the scenario (add a blocker, raise its dose) and come back: each level is compared with the control.",
        );
        if ui
            .button("Keep this family as control")
            .on_hover_text("Its measurements are kept for this session; the scenario is not changed")
            .clicked()
        {
            commands.push(Command::Analysis(AnalysisCommand::KeepControlFamily));
        }
        return;
    };
    control_line(ui, c, commands);
    let treated = &present.table;
    match compare_families(&c.table, treated, 0) {
        Err(e) => {
            ui.colored_label(ui.visuals().warn_fg_color, format!("Cannot compare: {e}."));
        }
        Ok(cmp) => {
            let label = cmp.field.label(s);
            let unit = cmp.field.field().unit;
            let y = measure_unit(&cmp.measure, true);
            ui.label(format!("Measured on each run: {}.", measure_words(&cmp.measure)));
            egui::Grid::new("lost current by level")
                .striped(true)
                .num_columns(4)
                .show(ui, |ui| {
                    ui.label(RichText::new(with_unit(&label, unit)).strong());
                    ui.label(RichText::new(format!("Control ({y})")).strong());
                    ui.label(RichText::new(format!("This family ({y})")).strong());
                    ui.label(RichText::new("Blocked").strong())
                        .on_hover_text("1 − this family's current / the control's current");
                    ui.end_row();
                    for r in &cmp.rows {
                        ui.label(short(r.level));
                        ui.label(cell(r.control));
                        ui.label(cell(r.treated));
                        let b = ui.label(percent(r.blocked));
                        if r.blocked.is_none() {
                            b.on_hover_text(format!(
                                "Not divided: the control current here is under {} % of its largest (near the reversal potential), or missing",
                                SMALL_CONTROL * 100.0
                            ));
                        }
                        ui.end_row();
                    }
                });
            if cmp.rows.iter().any(|r| r.blocked.is_none()) {
                ui.label(
                    RichText::new(format!(
                        "— : not computed where the control current is under {} % of its largest.",
                        SMALL_CONTROL * 100.0
                    ))
                    .small()
                    .weak(),
                );
            }
        }
    }
}

fn with_unit(label: &str, unit: &str) -> String {
    if unit.is_empty() {
        label.to_string()
    } else {
        format!("{label} ({unit})")
    }
}

fn control_line(ui: &mut Ui, c: &ControlFamily, commands: &mut Vec<Command>) {
    ui.horizontal_wrapped(|ui| {
        ui.label(format!(
            "Control: \"{}\", {} runs.",
            c.title,
            c.table.values.len()
        ));
        if ui
            .button("Forget control")
            .on_hover_text("Drop the kept control family")
            .clicked()
        {
            commands.push(Command::Analysis(AnalysisCommand::ForgetControlFamily));
        }
    });
}

/// The agent whose dose the family varies, as the file sets it: (label, IC50 µM, Hill, max block).
fn varied_agent(t: &FamilyTable, s: &Scenario) -> Option<(String, f64, f64, f64)> {
    let i = *t.field.indices().first()?;
    match s.protocol.get(i)? {
        Event::Agent {
            label,
            ic50_um,
            hill,
            max_block,
            max_increase: None,
            ..
        } => Some((label.clone(), *ic50_um, *hill, *max_block)),
        _ => None,
    }
}

fn dose_section(ui: &mut Ui, t: &FamilyTable, s: &Scenario) {
    let agent = varied_agent(t, s);
    let name = agent.as_ref().map_or("the agent".to_string(), |a| a.0.clone());
    ui.label(RichText::new(format!("Dose–response of the current to {name}")).strong());
    let d = match dose_block(t, 0) {
        Ok(d) => d,
        Err(e) => {
            ui.colored_label(ui.visuals().warn_fg_color, format!("No dose–response: {e}."));
            return;
        }
    };
    ui.label(format!(
        "Measured on each run: {}; the run at 0 µM is the control.",
        measure_words(&d.measure)
    ));
    let unit = measure_unit(&d.measure, t.clamped);
    match &d.fit {
        Ok(f) => {
            ui.label(
                RichText::new(format!(
                    "Hill fit: IC50 = {} ± {} µM, Hill coefficient = {} ± {}",
                    short(f.ic50_um),
                    short(f.se_ic50_um),
                    short(f.hill),
                    short(f.se_hill)
                ))
                .strong(),
            )
            .on_hover_text(
                "± one standard error; the fit takes the block to be complete at a saturating dose",
            );
        }
        Err(e) => {
            ui.colored_label(ui.visuals().warn_fg_color, format!("No Hill fit: {e}."));
        }
    }
    if let Some((_, ic50, hill, max_block)) = agent {
        let mut set = format!(
            "Set in the scenario: IC50 {} µM, Hill coefficient {}",
            short(ic50),
            short(hill)
        );
        if max_block < 1.0 {
            set.push_str(&format!(
                ", at most {} % block (the fit assumes complete block)",
                short(100.0 * max_block)
            ));
        }
        ui.label(RichText::new(set).weak());
    }
    ui.horizontal_top(|ui| {
        egui::Grid::new("lost current by dose")
            .striped(true)
            .num_columns(3)
            .show(ui, |ui| {
                ui.label(RichText::new("Dose (µM)").strong());
                ui.label(RichText::new(with_unit("Current", unit)).strong());
                ui.label(RichText::new("Blocked").strong());
                ui.end_row();
                for x in &d.doses {
                    ui.label(short(x.dose_um));
                    ui.label(cell(x.current));
                    ui.label(percent(x.blocked));
                    ui.end_row();
                }
            });
        dose_plot(ui, &d);
    });
}

fn dose_plot(ui: &mut Ui, d: &DoseBlock) {
    let dark = ui.visuals().dark_mode;
    let points: Vec<[f64; 2]> = d
        .doses
        .iter()
        .filter(|x| x.dose_um > 0.0)
        .filter_map(|x| Some([x.dose_um.log10(), x.blocked?]))
        .collect();
    let (lo, hi) = points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
            (a.min(p[0]), b.max(p[0]))
        });
    let fit = d.fit.as_ref().ok().copied();
    Plot::new("lost current dose plot")
        .height(200.0)
        .width(ui.available_width().max(220.0))
        .x_axis_label("dose (µM), log scale")
        .y_axis_label("Fraction blocked")
        .y_axis_min_width(40.0)
        .default_y_bounds(-0.05, 1.05)
        // A rising block curve leaves the lower right empty: the legend covers no point there.
        .legend(
            Legend::default()
                .position(egui_plot::Corner::RightBottom)
                .background_alpha(0.6),
        )
        .x_axis_formatter(|mark, _| short(10f64.powf(mark.value)))
        .label_formatter(|h: &HoverPosition<'_>| {
            let (head, p) = crate::ui::time::hover_parts(h);
            Some(format!(
                "{head}dose {} µM\nblocked {:.1} %",
                short(10f64.powf(p.x)),
                100.0 * p.y
            ))
        })
        .show(ui, |pui| {
            pui.points(
                Points::new("measured", points.clone())
                    .shape(MarkerShape::Circle)
                    .radius(3.5)
                    .color(potential_color(dark)),
            );
            if let Some(f) = fit
                && lo.is_finite()
                && hi > lo
            {
                let (a, b) = (lo - 0.5, hi + 0.5);
                let curve: Vec<[f64; 2]> = (0..=200)
                    .map(|k| {
                        let x = a + (b - a) * f64::from(k) / 200.0;
                        [x, f.blocked(10f64.powf(x))]
                    })
                    .collect();
                pui.line(
                    Line::new("Hill fit", curve)
                        .color(species_color(0))
                        .style(LineStyle::dashed_dense())
                        .width(1.5),
                );
                pui.vline(
                    VLine::new(format!("IC50 {} µM", short(f.ic50_um)), f.ic50_um.log10())
                        .color(neutral_color(dark))
                        .style(LineStyle::dotted_loose()),
                );
            }
        });
}
