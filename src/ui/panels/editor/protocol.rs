//! The "Protocol" tab of the editor: the run's length and start, a time strip showing when each
//! event is in force, and the list of events with their settings.

use egui::{Color32, Grid, Rect, RichText, Sense, Stroke, Ui, pos2, vec2};

use super::EditorInfo;
use crate::scenario::fields::Part;
use crate::scenario::{Edit, Event, EventKind, RunMode, Scenario, Start, Wording, held_start};
use crate::ui::theme::{neutral_color, species_color};
use crate::ui::widgets::Editing;

/// Largest number of pulses of one train drawn one by one; more are drawn as one band.
pub const MAX_PULSES_DRAWN: u32 = 200;

/// The colour of an event: its species' colour, or neutral for injected current.
pub fn event_color(s: &Scenario, e: &Event, dark: bool) -> Color32 {
    e.species()
        .and_then(|n| s.species_index(n))
        .map_or_else(|| neutral_color(dark), species_color)
}

pub fn show(ui: &mut Ui, info: &EditorInfo, ed: &mut Editing) {
    ui.heading("Run");
    Grid::new("run grid")
        .num_columns(2)
        .spacing([12.0, 6.0])
        .show(ui, |ui| {
            ed.rows(
                ui,
                &[("Duration", "run.duration_ms"), ("Sample every", "run.sample_ms")],
            );
            ui.label("Mode");
            ui.horizontal(|ui| {
                let clamped = !ed.scenario.run.mode.is_current_clamp();
                if ui
                    .radio(!clamped, "current clamp")
                    .on_hover_text("The cell sets its own potential; current can be injected")
                    .clicked()
                    && clamped
                {
                    ed.push(Edit::Mode(RunMode::CurrentClamp));
                }
                if ui
                    .radio(clamped, "voltage clamp")
                    .on_hover_text(
                        "An amplifier holds the potential at a command; the plots show the current it passes. \
                         Injected-current events are removed (undo brings them back).",
                    )
                    .clicked()
                    && !clamped
                {
                    ed.push(Edit::Mode(RunMode::VoltageClamp {
                        holding_mv: -80.0,
                        series_resistance_mohm: 0.0,
                        compensation: 0.0,
                    }));
                }
            });
            ui.end_row();
            if !ed.scenario.run.mode.is_current_clamp() {
                ed.rows(
                    ui,
                    &[
                        ("Holding", "run.mode.holding_mv"),
                        ("Series resistance", "run.mode.series_resistance_mohm"),
                        ("Compensation", "run.mode.compensation"),
                    ],
                );
            }
            ui.label("Start");
            ui.horizontal(|ui| {
                let at_rest = ed.scenario.run.start == Start::Rest;
                if ui
                    .radio(at_rest, "at rest")
                    .on_hover_text("Begin at the steady state of everything")
                    .clicked()
                    && !at_rest
                {
                    ed.push(Edit::Start(Start::Rest));
                }
                if ui
                    .radio(!at_rest, "held at")
                    .on_hover_text("Begin at a chosen potential, gates at their steady state there")
                    .clicked()
                    && at_rest
                {
                    let resting_mv = info.rest.as_ref().ok().and_then(|r| r.resting_mv());
                    ed.push(Edit::Start(held_start(resting_mv)));
                }
                if !at_rest {
                    ed.number(ui, "run.start", &[], 64.0);
                }
            });
            ui.end_row();
        });
    ed.others(ui, "run", Part::Run, &[]);
    ui.add_space(8.0);
    ui.heading("Protocol");
    time_strip(ui, ed.scenario, info.now_ms);
    ui.add_space(4.0);
    if ed.scenario.protocol.is_empty() {
        ui.label("No events: the cell is left alone.");
    }
    for i in 0..ed.scenario.protocol.len() {
        let Some(e) = ed.scenario.protocol.get(i).cloned() else {
            break;
        };
        event_card(ui, i, &e, ed);
    }
    ui.menu_button("+ Add event", |ui| {
        for &k in EventKind::for_mode(&ed.scenario.run.mode) {
            if ui.button(k.label()).clicked() {
                ed.push(Edit::AddEvent(k));
            }
        }
    });
}

fn event_card(ui: &mut Ui, i: usize, e: &Event, ed: &mut Editing) {
    let dark = ui.visuals().dark_mode;
    let color = event_color(ed.scenario, e, dark);
    egui::Frame::group(ui.style())
        .stroke(Stroke::new(1.0, color.gamma_multiply(0.6)))
        .show(ui, |ui| {
            ui.set_width(ui.available_width());
            ui.horizontal(|ui| {
                ui.label(
                    RichText::new(format!("{}. {}", i + 1, EventKind::of(e).label()))
                        .strong()
                        .color(color),
                );
                if let Event::Agent { label, .. } = e {
                    ed.text(
                        ui,
                        ("agent label", i),
                        label,
                        &format!("event {} label", i + 1),
                        90.0,
                        move |label| Edit::EventLabel { index: i, label },
                    );
                }
                if let Some(sp) = e.species() {
                    ui.label("on");
                    ed.species_choice(
                        ui,
                        ("event species", i),
                        sp,
                        &format!("event {} ion", i + 1),
                        move |species| Edit::EventSpecies { index: i, species },
                    );
                }
                ui.with_layout(egui::Layout::right_to_left(egui::Align::Center), |ui| {
                    ed.button(ui, "×", &format!("Remove event {}", i + 1), Edit::RemoveEvent(i));
                    if i > 0 {
                        ed.button(ui, "↑", &format!("Move event {} up", i + 1), Edit::MoveEventUp(i));
                    }
                });
            });
            Grid::new(("event grid", i))
                .num_columns(4)
                .spacing([8.0, 6.0])
                .show(ui, |ui| {
                    let pair = |ui: &mut Ui, ed: &mut Editing, label: &str, path: &str| {
                        ui.label(label);
                        ed.number(ui, path, &[i], 70.0);
                    };
                    match e {
                        Event::PermeabilityScale { until_ms, .. } => {
                            pair(ui, ed, "Factor", "protocol[].factor");
                            pair(ui, ed, "Lag τ", "protocol[].lag_ms");
                            ui.end_row();
                            pair(ui, ed, "From", "protocol[].from_ms");
                            until(ui, ed, i, until_ms.is_some());
                            ui.end_row();
                        }
                        Event::BathChange { .. } => {
                            pair(ui, ed, "New outside", "protocol[].outside_mm");
                            pair(ui, ed, "At", "protocol[].at_ms");
                            ui.end_row();
                            pair(ui, ed, "Exchange τ", "protocol[].lag_ms");
                            ui.end_row();
                        }
                        Event::BathExchange { solution, .. } => {
                            ui.label("New bath");
                            ui.label(RichText::new(solution).strong()).on_hover_text(
                                "The solution the whole bath is exchanged for (Solutions tab)",
                            );
                            pair(ui, ed, "At", "protocol[].at_ms");
                            ui.end_row();
                            pair(ui, ed, "Exchange τ", "protocol[].lag_ms");
                            ui.end_row();
                        }
                        Event::Agent {
                            until_ms,
                            max_increase,
                            ..
                        } => {
                            pair(ui, ed, "Dose", "protocol[].dose_um");
                            pair(ui, ed, "IC50", "protocol[].ic50_um");
                            ui.end_row();
                            pair(ui, ed, "Hill", "protocol[].hill");
                            let opens = max_increase.is_some();
                            if opens {
                                pair(ui, ed, "Largest increase", "protocol[].max_increase");
                                ed.leave_out("protocol[].max_block", &[i]);
                            } else {
                                pair(ui, ed, "Largest block", "protocol[].max_block");
                            }
                            ui.end_row();
                            action_choice(ui, ed, i, opens);
                            ui.end_row();
                            pair(ui, ed, "From", "protocol[].from_ms");
                            until(ui, ed, i, until_ms.is_some());
                            ui.end_row();
                            pair(ui, ed, "Onset τ", "protocol[].onset_ms");
                            pair(ui, ed, "Washout τ", "protocol[].washout_ms");
                            ui.end_row();
                        }
                        Event::Inject { .. } => {
                            pair(ui, ed, "Amplitude", "protocol[].amplitude_ua_per_cm2");
                            ui.end_row();
                            pair(ui, ed, "From", "protocol[].from_ms");
                            pair(ui, ed, "Until", "protocol[].until_ms");
                            ui.end_row();
                        }
                        Event::InjectTrain { .. } => {
                            pair(ui, ed, "Amplitude", "protocol[].amplitude_ua_per_cm2");
                            pair(ui, ed, "Pulses", "protocol[].count");
                            ui.end_row();
                            pair(ui, ed, "Width", "protocol[].width_ms");
                            pair(ui, ed, "Period", "protocol[].period_ms");
                            ui.end_row();
                            pair(ui, ed, "First at", "protocol[].from_ms");
                            ui.end_row();
                        }
                        Event::Step { until_ms, .. } => {
                            pair(ui, ed, "Command", "protocol[].to_mv");
                            ui.end_row();
                            pair(ui, ed, "From", "protocol[].from_ms");
                            until(ui, ed, i, until_ms.is_some());
                            ui.end_row();
                        }
                        Event::Ramp { .. } => {
                            pair(ui, ed, "Start at", "protocol[].from_mv");
                            pair(ui, ed, "End at", "protocol[].to_mv");
                            ui.end_row();
                            pair(ui, ed, "From", "protocol[].from_ms");
                            pair(ui, ed, "Until", "protocol[].until_ms");
                            ui.end_row();
                        }
                    }
                });
            ed.others(ui, ("event", i), Part::Event, &[i]);
        });
}

/// "Until" of a step or agent: a time, or to the end of the run.
/// Whether the agent at `i` blocks its species' permeability or opens (increases) it.
fn action_choice(ui: &mut Ui, ed: &mut Editing, i: usize, opens: bool) {
    ui.label("Acts as");
    ui.horizontal(|ui| {
        for (choice, label, hover) in [
            (
                false,
                "blocker",
                "Multiplies the permeability by 1 − largest block × occupancy",
            ),
            (
                true,
                "opener",
                "Multiplies the permeability by 1 + largest increase × occupancy",
            ),
        ] {
            if ui
                .selectable_label(opens == choice, label)
                .on_hover_text(hover)
                .clicked()
                && opens != choice
            {
                ed.push(Edit::AgentOpens {
                    index: i,
                    opens: choice,
                });
            }
        }
    });
}

fn until(ui: &mut Ui, ed: &mut Editing, i: usize, has_end: bool) {
    ui.label("Until");
    ui.horizontal(|ui| {
        if has_end {
            ed.number(ui, "protocol[].until_ms", &[i], 70.0);
        }
        let mut to_end = !has_end;
        if ui
            .checkbox(&mut to_end, "end")
            .on_hover_text("Lasts to the end of the run")
            .changed()
        {
            ed.push(Edit::EventOpenEnded {
                index: i,
                open_ended: to_end,
            });
        }
    });
}

/// One row per event across the run's duration, bars where the event is in force, and a line
/// at the present time.
fn time_strip(ui: &mut Ui, s: &Scenario, now_ms: f64) {
    let dark = ui.visuals().dark_mode;
    let rows = s.protocol.len().max(1);
    let row_h = 9.0;
    let width = ui.available_width();
    let (rect, response) = ui.allocate_exact_size(vec2(width, rows as f32 * row_h + 18.0), Sense::hover());
    let painter = ui.painter_at(rect);
    let plot = Rect::from_min_max(rect.min + vec2(0.0, 2.0), pos2(rect.max.x, rect.max.y - 14.0));
    painter.rect_filled(plot, 2.0, ui.visuals().extreme_bg_color);
    let d = s.run.duration_ms.max(f64::MIN_POSITIVE);
    let x_of = |t: f64| plot.min.x + (t / d).clamp(0.0, 1.0) as f32 * plot.width();
    for (k, e) in s.protocol.iter().enumerate() {
        let y0 = plot.min.y + k as f32 * row_h + 1.5;
        let color = event_color(s, e, dark);
        for span in e.intervals(d, MAX_PULSES_DRAWN) {
            let x0 = x_of(span.from_ms);
            let x1 = x_of(span.until_ms).max(x0 + 2.0);
            painter.rect_filled(
                Rect::from_min_max(pos2(x0, y0), pos2(x1, y0 + row_h - 3.0)),
                1.0,
                color,
            );
        }
    }
    let xn = x_of(now_ms);
    painter.line_segment(
        [pos2(xn, plot.min.y), pos2(xn, plot.max.y)],
        Stroke::new(1.5, ui.visuals().text_color()),
    );
    let small = egui::TextStyle::Small.resolve(ui.style());
    let weak = ui.visuals().weak_text_color();
    painter.text(
        pos2(plot.min.x, plot.max.y + 1.0),
        egui::Align2::LEFT_TOP,
        "0 ms",
        small.clone(),
        weak,
    );
    painter.text(
        pos2(plot.max.x, plot.max.y + 1.0),
        egui::Align2::RIGHT_TOP,
        format!("{} ms", d),
        small,
        weak,
    );
    if let Some(p) = response.hover_pos() {
        let t = (f64::from((p.x - plot.min.x) / plot.width()) * d).clamp(0.0, d);
        let k = ((p.y - plot.min.y) / row_h).floor();
        let text = if k >= 0.0 {
            s.protocol.get(k as usize).map(|e| {
                format!(
                    "{}. {}: {}",
                    k as usize + 1,
                    EventKind::of(e).label(),
                    e.summary(Wording::Brief)
                )
            })
        } else {
            None
        };
        response.on_hover_text(format!(
            "t = {t:.1} ms{}",
            text.map(|x| format!("\n{x}")).unwrap_or_default()
        ));
    }
}
