//! Presentation: the window for a class. The editor gives way to a bar with the run controls
//! and, along the bottom, big sliders for the inputs the user pinned (right-click any number in
//! the editor); text and lines are drawn larger for a projector.
//!
//! Pins are [`Address`]es of the field table (kept as field paths like
//! `species[0].outside_mm`), which give each slider its label, unit and span.

use std::collections::HashMap;

use egui::{Button, Panel, RichText, Slider, Ui, vec2};

use crate::scenario::{Address, Drag, Edit, Scenario, Span, Style};
use crate::ui::command::Command;
use crate::ui::state::prefs::Speed;
use crate::ui::widgets::Editing;

/// The presentation state of the window (not saved: a new session starts at the desk).
#[derive(Debug, Default)]
pub struct Presentation {
    pub on: bool,
    /// The range of each pinned slider, fixed when it is first shown so that it does not move
    /// under the pointer while the value changes.
    ranges: HashMap<Address, SliderRange>,
}

impl Presentation {
    /// A new document: ranges follow its values afresh.
    pub fn document_loaded(&mut self) {
        self.ranges.clear();
    }
}

/// The window is laid out as if it were about this many points wide and high, whatever its
/// size: a projector at 1280×720 and one at 1920×1080 show the same picture, only sharper.
const PRESENTATION_POINTS: egui::Vec2 = egui::Vec2::new(1000.0, 540.0);

/// The interface scale for presentation on a window of `size` points at scale 1: large enough
/// that the room can read it, never smaller than the large-text setting's scale a little.
pub fn zoom_for(size: egui::Vec2) -> f32 {
    let z = (size.x / PRESENTATION_POINTS.x).min(size.y / PRESENTATION_POINTS.y);
    // Steps of 1/20, so that a window being resized does not re-lay out every frame.
    ((z * 20.0).round() / 20.0).clamp(1.25, 3.0)
}

/// [`zoom_for`] the present window.
pub fn zoom(ctx: &egui::Context) -> f32 {
    let unzoomed = ctx.content_rect().size() * ctx.zoom_factor();
    zoom_for(unzoomed)
}

/// What a big slider covers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SliderRange {
    pub lo: f64,
    pub hi: f64,
    pub log: bool,
}

/// The range a big slider for `field` covers, around the present `value`. Quantities that span
/// decades get four decades centred on the value; the others the span their row names.
pub fn slider_range(field: Address, value: f64, s: &Scenario) -> SliderRange {
    let row = field.field();
    let linear = |lo: f64, hi: f64| SliderRange {
        lo: lo.min(value),
        hi: hi.max(value),
        log: false,
    };
    if let Drag::Log { floor } = row.drag {
        let centre = if value > 0.0 { value } else { floor * 100.0 };
        return SliderRange {
            lo: centre / 100.0,
            hi: centre * 100.0,
            log: true,
        };
    }
    let spread = |v: f64| (v.abs() * 4.0).max(10.0);
    match row.span {
        Span::Fixed { lo, hi } => linear(lo, hi),
        Span::RunTime => linear(0.0, s.run.duration_ms),
        Span::Symmetric => linear(-spread(value), spread(value)),
        Span::Auto if row.style == Style::Whole => linear(0.0, (value * 2.0).max(6.0)),
        Span::Auto if value < 0.0 => linear(value * 4.0, 0.0),
        Span::Auto => linear(0.0, spread(value)),
    }
}

/// Rounds a slider value to what a person would type: whole numbers where the field wants them,
/// three significant digits on a log scale, and about a thousandth of the span otherwise.
pub fn round_for(field: Address, v: f64, range: SliderRange) -> f64 {
    if field.field().style == Style::Whole {
        return v.round();
    }
    if range.log {
        if v <= 0.0 {
            return v;
        }
        let mag = 10f64.powf(v.log10().floor() - 2.0);
        return (v / mag).round() * mag;
    }
    let step = 10f64.powf(((range.hi - range.lo) / 1000.0).log10().floor());
    (v / step).round() * step
}

/// What the presentation panels show besides the scenario and its pinned numbers.
pub struct PresentInfo<'a> {
    pub running: bool,
    pub can_run: bool,
    pub speed: Speed,
    pub shown_ms: f64,
    pub v_mv: Option<f64>,
    pub notice: Option<&'a str>,
}

/// Text size of the big sliders' names and values, points (before presentation's own scale).
const SLIDER_TEXT_PT: f32 = 18.0;

/// The bar across the top and the big sliders along the bottom.
pub fn panels(ui: &mut Ui, state: &mut Presentation, info: &PresentInfo, ed: &mut Editing) {
    Panel::top("presentation bar").show(ui, |ui| bar(ui, info, ed.scenario, ed.commands));
    Panel::bottom("presentation sliders").show(ui, |ui| sliders(ui, state, ed));
}

fn bar(ui: &mut Ui, info: &PresentInfo, s: &Scenario, commands: &mut Vec<Command>) {
    ui.add_space(4.0);
    ui.horizontal(|ui| {
        let big = |t: &str| RichText::new(t).size(20.0).strong();
        let (run_label, hover) = if info.running {
            ("‖ Pause", "Pause the run (Space)")
        } else {
            ("▶ Run", "Run the protocol from the present time (Space)")
        };
        let run = ui.add_enabled(
            info.can_run,
            Button::new(big(run_label)).min_size(vec2(110.0, 34.0)),
        );
        if run.on_hover_text(hover).clicked() {
            commands.push(Command::RunPause);
        }
        if ui
            .add(Button::new(big("↺ Restart")).min_size(vec2(0.0, 34.0)))
            .on_hover_text("Start again at t = 0 ms (Ctrl+R)")
            .clicked()
        {
            commands.push(Command::Restart);
        }
        crate::ui::time::speed_box(ui, "presentation speed", info.speed, s.run.duration_ms, commands);
        ui.separator();
        let v = info
            .v_mv
            .map_or_else(|| "—".to_string(), |v| format!("{v:+.1} mV"));
        ui.label(
            RichText::new(format!(
                "t = {}    V = {v}",
                crate::ui::time::TimeUnit::for_duration(s.run.duration_ms).format(info.shown_ms)
            ))
            .size(18.0)
            .strong(),
        );
        ui.with_layout(egui::Layout::right_to_left(egui::Align::Center), |ui| {
            if ui
                .button("Leave presentation")
                .on_hover_text("Back to the editor (Esc or F11)")
                .clicked()
            {
                commands.push(Command::SetPresentation(false));
            }
            if ui.button("?").on_hover_text("Keyboard shortcuts (F1)").clicked() {
                commands.push(Command::ShowShortcuts(true));
            }
            ui.separator();
            if let Some(n) = info.notice {
                ui.add(egui::Label::new(RichText::new(n).color(ui.visuals().warn_fg_color)).truncate());
            } else {
                let title = s.title.trim();
                ui.add(egui::Label::new(RichText::new(title).size(18.0).strong()).truncate());
            }
        });
    });
    ui.add_space(4.0);
}

fn sliders(ui: &mut Ui, state: &mut Presentation, ed: &mut Editing) {
    ui.add_space(6.0);
    let s = ed.scenario;
    if ed.pinned.is_empty() {
        ui.label(
            RichText::new(
                "No big sliders yet: leave presentation, right-click a number in the editor and choose \
                 \"Big slider in presentation\".",
            )
            .weak(),
        );
        ui.add_space(6.0);
        return;
    }
    // The name column is as wide as the longest name needs (up to a third of the width), and
    // a longer name wraps: a control's name is never cut.
    let name_font = egui::FontId::proportional(SLIDER_TEXT_PT);
    let label_w = ed
        .pinned
        .iter()
        .map(|&a| {
            let name = crate::scenario::control_name(a, s);
            ui.painter()
                .layout_no_wrap(name, name_font.clone(), egui::Color32::WHITE)
                .size()
                .x
        })
        .fold(120.0_f32, f32::max)
        .min(ui.available_width() / 3.0)
        + 8.0;
    let value_w = 130.0;
    for &field in ed.pinned {
        ui.horizontal(|ui| {
            let unpin = |ui: &mut Ui, commands: &mut Vec<Command>| {
                if ui.small_button("×").on_hover_text("Remove this slider").clicked() {
                    commands.push(Command::Pin {
                        address: field,
                        pinned: false,
                    });
                }
            };
            let Some(value) = field.get(s) else {
                ui.label(
                    RichText::new(format!(
                        "A big slider for a {} that this scenario does not have",
                        field.field().label
                    ))
                    .weak(),
                );
                unpin(ui, ed.commands);
                return;
            };
            // Named as the experiment's control ("Bath K+ after the change"), never by its
            // place in the file.
            let name = crate::scenario::control_name(field, s);
            ui.spacing_mut().interact_size.y = 30.0;
            fixed_width(ui, label_w, egui::Align::Min, |ui| {
                ui.add(egui::Label::new(RichText::new(&name).size(SLIDER_TEXT_PT).strong()).wrap());
            });
            let range = *state
                .ranges
                .entry(field)
                .or_insert_with(|| slider_range(field, value, s));
            let slider_w = (ui.available_width() - value_w - 40.0).max(120.0);
            ui.spacing_mut().slider_width = slider_w;
            ui.spacing_mut().slider_rail_height = 10.0;
            let mut v = value;
            let mut slider = Slider::new(&mut v, range.lo..=range.hi)
                .logarithmic(range.log)
                .show_value(false)
                .trailing_fill(true);
            if range.log {
                slider = slider.smallest_positive(range.lo);
            }
            let response = ui.add(slider);
            let unit = field.field().unit;
            ui.ctx()
                .accesskit_node_builder(response.id, |n| n.set_label(format!("{name}, big slider")));
            if response.changed() {
                let v = round_for(field, v, range);
                if v != value {
                    ed.push_checked(Edit::Number(field, v));
                }
            }
            let shown = format!("{} {unit}", field.field().style.format(value));
            fixed_width(ui, value_w, egui::Align::Max, |ui| {
                ui.label(RichText::new(shown).size(SLIDER_TEXT_PT).monospace());
            });
            unpin(ui, ed.commands);
        });
    }
    ui.add_space(6.0);
}

/// A cell of `width` points in a row, its content aligned to the left (`Min`) or right (`Max`).
fn fixed_width(ui: &mut Ui, width: f32, align: egui::Align, add: impl FnOnce(&mut Ui)) {
    let layout = match align {
        egui::Align::Max => egui::Layout::right_to_left(egui::Align::Center),
        _ => egui::Layout::left_to_right(egui::Align::Center),
    };
    ui.allocate_ui_with_layout(vec2(width, ui.spacing().interact_size.y), layout, |ui| {
        ui.set_width(width);
        add(ui);
    });
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::fields::addresses;
    use crate::scenario::{Event, Kinetics};

    fn at(path: &str, ix: &[usize]) -> Address {
        Address::of(path, ix).unwrap_or_else(|| panic!("no row {path}"))
    }

    #[test]
    fn slider_ranges_hold_the_present_value_and_suit_the_quantity() {
        let mut s = Scenario::new_default();
        s.protocol.push(Event::Agent {
            label: "a".into(),
            species: "K+".into(),
            target: Default::default(),
            max_block: 0.8,
            max_increase: None,
            ic50_um: 3.0,
            hill: 1.0,
            dose_um: 10.0,
            from_ms: 20.0,
            until_ms: None,
            onset_ms: 1.0,
            washout_ms: 1.0,
        });
        s.channels.push(crate::scenario::Channel {
            label: "c".into(),
            species: "K+".into(),
            max_permeability_cm_per_s: 1e-6,
            shift_mv: 0.0,
            q10: 3.0,
            reference_temperature_c: 6.3,
            gates: vec![crate::scenario::Gate {
                kinetics: Kinetics::Boltzmann {
                    v_half_mv: -30.0,
                    slope_mv: 8.0,
                    tau_ms: 5.0,
                },
                power: 1,
            }],
        });
        for f in addresses(&s) {
            let v = f.get(&s).unwrap_or(f64::NAN);
            let r = slider_range(f, v, &s);
            assert!(r.lo < r.hi && r.lo <= v && v <= r.hi, "{f:?}: {v} in {r:?}");
            assert!(!r.log || r.lo > 0.0, "{f:?}");
        }
        // Bath potassium: four decades around 5 mM, on a log scale.
        let r = slider_range(at("species[].outside_mm", &[0]), 5.0, &s);
        assert!(r.log && (r.lo - 0.05).abs() < 1e-12 && (r.hi - 500.0).abs() < 1e-9);
        assert_eq!(
            slider_range(at("temperature_c", &[]), 37.0, &s),
            SliderRange {
                lo: 0.0,
                hi: 45.0,
                log: false
            }
        );
    }

    #[test]
    fn the_presentation_scale_follows_the_window() {
        assert_eq!(zoom_for(vec2(1280.0, 720.0)), 1.3);
        assert_eq!(zoom_for(vec2(1920.0, 1080.0)), 1.9);
        // A wide but low window is limited by its height; a small one keeps a readable size.
        assert_eq!(zoom_for(vec2(2560.0, 720.0)), 1.35);
        assert_eq!(zoom_for(vec2(800.0, 500.0)), 1.25);
    }

    #[test]
    fn slider_values_are_rounded_like_typed_ones() {
        let log = SliderRange {
            lo: 0.05,
            hi: 500.0,
            log: true,
        };
        assert_eq!(round_for(at("species[].outside_mm", &[0]), 12.3456, log), 12.3);
        let lin = SliderRange {
            lo: 0.0,
            hi: 45.0,
            log: false,
        };
        assert!((round_for(at("temperature_c", &[]), 21.23456, lin) - 21.23).abs() < 1e-9);
        assert_eq!(round_for(at("species[].charge", &[0]), 1.6, lin), 2.0);
    }
}
