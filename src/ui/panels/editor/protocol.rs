//! The "Protocol" tab of the editor: the run's length and start, a time strip showing when each
//! event is in force, and the list of events with their settings.

use egui::{Color32, Grid, Rect, RichText, Sense, Stroke, Ui, pos2, vec2};

use crate::scenario::{Event, Scenario, Start};
use crate::ui::command::{Edit, EventKind};
use crate::ui::fields::{EventNum, NumField};
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

/// The time intervals `[from, until)` in which an event is in force, clipped to the run.
/// Trains longer than [`MAX_PULSES_DRAWN`] pulses give one interval.
pub fn event_intervals(e: &Event, duration_ms: f64) -> Vec<(f64, f64)> {
    let clip = |a: f64, b: f64| (a.min(duration_ms), b.min(duration_ms));
    match *e {
        Event::InjectTrain {
            from_ms,
            width_ms,
            period_ms,
            count,
            ..
        } if count <= MAX_PULSES_DRAWN => (0..count)
            .map(|k| {
                let s = from_ms + f64::from(k) * period_ms;
                clip(s, s + width_ms)
            })
            .filter(|(a, b)| b > a)
            .collect(),
        _ => {
            let (from, until) = e.span_ms();
            let (a, b) = clip(from, until.unwrap_or(duration_ms));
            if b > a { vec![(a, b)] } else { vec![(a, a)] }
        }
    }
}

/// A one-line description of an event, for band labels and the strip's tooltips.
pub fn event_summary(e: &Event) -> String {
    match e {
        Event::PermeabilityScale { species, factor, .. } => format!("P({species}) ×{factor}"),
        Event::BathChange {
            species, outside_mm, ..
        } => format!("{species} out → {outside_mm} mM"),
        Event::Agent {
            label,
            species,
            dose_um,
            ..
        } => format!("{label} {dose_um} µM on {species}"),
        Event::Inject {
            amplitude_ua_per_cm2, ..
        } => format!("{amplitude_ua_per_cm2} µA/cm²"),
        Event::InjectTrain {
            amplitude_ua_per_cm2,
            count,
            ..
        } => format!("{count} × {amplitude_ua_per_cm2} µA/cm²"),
    }
}

pub fn show(ui: &mut Ui, now_ms: f64, ed: &mut Editing) {
    ui.heading("Run");
    Grid::new("run grid")
        .num_columns(2)
        .spacing([12.0, 6.0])
        .show(ui, |ui| {
            ui.label("Duration");
            ed.number(ui, NumField::DurationMs, 80.0);
            ui.end_row();
            ui.label("Sample every");
            ed.number(ui, NumField::SampleMs, 80.0);
            ui.end_row();
            ui.label("Start");
            ui.horizontal(|ui| {
                let at_rest = ed.scenario.run.start == Start::Rest;
                if ui
                    .radio(at_rest, "at rest")
                    .on_hover_text("Begin at the steady state of everything")
                    .clicked()
                    && !at_rest
                {
                    ed.push(Edit::StartAtRest(true));
                }
                if ui
                    .radio(!at_rest, "held at")
                    .on_hover_text("Begin at a chosen potential, gates at their steady state there")
                    .clicked()
                    && at_rest
                {
                    ed.push(Edit::StartAtRest(false));
                }
                if !at_rest {
                    ed.number(ui, NumField::StartMv, 64.0);
                }
            });
            ui.end_row();
        });
    ui.add_space(8.0);
    ui.heading("Protocol");
    time_strip(ui, ed.scenario, now_ms);
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
        for k in EventKind::ALL {
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
            let num = |what| NumField::Event(i, what);
            Grid::new(("event grid", i))
                .num_columns(4)
                .spacing([8.0, 6.0])
                .show(ui, |ui| {
                    let pair = |ui: &mut Ui, ed: &mut Editing, label: &str, what: EventNum| {
                        ui.label(label);
                        ed.number(ui, num(what), 70.0);
                    };
                    match e {
                        Event::PermeabilityScale { until_ms, .. } => {
                            pair(ui, ed, "Factor", EventNum::Factor);
                            pair(ui, ed, "Lag τ", EventNum::Lag);
                            ui.end_row();
                            pair(ui, ed, "From", EventNum::From);
                            until(ui, ed, i, until_ms.is_some());
                            ui.end_row();
                        }
                        Event::BathChange { .. } => {
                            pair(ui, ed, "New outside", EventNum::OutsideMm);
                            pair(ui, ed, "At", EventNum::At);
                            ui.end_row();
                            pair(ui, ed, "Exchange τ", EventNum::Lag);
                            ui.end_row();
                        }
                        Event::Agent { until_ms, .. } => {
                            pair(ui, ed, "Dose", EventNum::Dose);
                            pair(ui, ed, "IC50", EventNum::Ic50);
                            ui.end_row();
                            pair(ui, ed, "Hill", EventNum::Hill);
                            pair(ui, ed, "Largest block", EventNum::MaxBlock);
                            ui.end_row();
                            pair(ui, ed, "From", EventNum::From);
                            until(ui, ed, i, until_ms.is_some());
                            ui.end_row();
                            pair(ui, ed, "Onset τ", EventNum::Onset);
                            pair(ui, ed, "Washout τ", EventNum::Washout);
                            ui.end_row();
                        }
                        Event::Inject { .. } => {
                            pair(ui, ed, "Amplitude", EventNum::Amplitude);
                            ui.end_row();
                            pair(ui, ed, "From", EventNum::From);
                            pair(ui, ed, "Until", EventNum::Until);
                            ui.end_row();
                        }
                        Event::InjectTrain { .. } => {
                            pair(ui, ed, "Amplitude", EventNum::Amplitude);
                            pair(ui, ed, "Pulses", EventNum::Count);
                            ui.end_row();
                            pair(ui, ed, "Width", EventNum::Width);
                            pair(ui, ed, "Period", EventNum::Period);
                            ui.end_row();
                            pair(ui, ed, "First at", EventNum::From);
                            ui.end_row();
                        }
                    }
                });
        });
}

/// "Until" of a step or agent: a time, or to the end of the run.
fn until(ui: &mut Ui, ed: &mut Editing, i: usize, has_end: bool) {
    ui.label("Until");
    ui.horizontal(|ui| {
        if has_end {
            ed.number(ui, NumField::Event(i, EventNum::Until), 70.0);
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
        for (a, b) in event_intervals(e, d) {
            let x0 = x_of(a);
            let x1 = x_of(b).max(x0 + 2.0);
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
                    event_summary(e)
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn intervals_follow_the_event_kinds() {
        let train = Event::InjectTrain {
            amplitude_ua_per_cm2: 1.0,
            width_ms: 1.0,
            period_ms: 10.0,
            count: 3,
            from_ms: 5.0,
        };
        assert_eq!(
            event_intervals(&train, 100.0),
            vec![(5.0, 6.0), (15.0, 16.0), (25.0, 26.0)]
        );
        let long = Event::InjectTrain {
            amplitude_ua_per_cm2: 1.0,
            width_ms: 1.0,
            period_ms: 2.0,
            count: 1000,
            from_ms: 0.0,
        };
        // Too many pulses to draw: one band, clipped to the run.
        assert_eq!(event_intervals(&long, 100.0), vec![(0.0, 100.0)]);
        let bath = Event::BathChange {
            species: "K+".into(),
            outside_mm: 20.0,
            at_ms: 40.0,
            lag_ms: 0.0,
        };
        assert_eq!(event_intervals(&bath, 100.0), vec![(40.0, 100.0)]);
        let late = Event::Inject {
            amplitude_ua_per_cm2: 1.0,
            from_ms: 150.0,
            until_ms: 160.0,
        };
        assert_eq!(event_intervals(&late, 100.0), vec![(100.0, 100.0)]);
    }
}
