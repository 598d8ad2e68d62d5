//! Presentation: the window for a class. The editor gives way to a bar with the run controls
//! and, along the bottom, big sliders for the inputs the user pinned (right-click any number in
//! the editor); text and lines are drawn larger for a projector.
//!
//! Pins are kept as field paths of the scenario file (`species[0].outside_mm`), read through
//! [`crate::scenario::paths`], and matched to the editor's [`NumField`] for the label, the unit
//! and the check of each new value.

use std::collections::HashMap;

use egui::{Button, Panel, RichText, Slider, Ui, vec2};

use crate::scenario::{Scenario, paths};
use crate::ui::command::{Command, Edit, check_edit};
use crate::ui::fields::{ChannelNum, Drag, EventNum, GateNum, NumField, PumpNum, Style, format_value};
use crate::ui::state::prefs::Speed;

/// The presentation state of the window (not saved: a new session starts at the desk).
#[derive(Debug, Default)]
pub struct Presentation {
    pub on: bool,
    /// The range of each pinned slider, fixed when it is first shown so that it does not move
    /// under the pointer while the value changes.
    ranges: HashMap<String, SliderRange>,
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

/// Every number field of `s`, in the editor's order.
pub fn fields_of(s: &Scenario) -> Vec<NumField> {
    let mut out = vec![
        NumField::TemperatureC,
        NumField::DiameterUm,
        NumField::CapacitanceUfPerCm2,
        NumField::DurationMs,
        NumField::SampleMs,
        NumField::StartMv,
    ];
    for i in 0..s.species.len() {
        out.extend([
            NumField::Charge(i),
            NumField::InsideMm(i),
            NumField::OutsideMm(i),
            NumField::PermeabilityCmPerS(i),
        ]);
    }
    out.extend(
        [
            PumpNum::ExportedPerCycle,
            PumpNum::ImportedPerCycle,
            PumpNum::MaxCurrent,
            PumpNum::HalfInside,
            PumpNum::HillInside,
            PumpNum::HalfOutside,
            PumpNum::HillOutside,
        ]
        .map(NumField::Pump),
    );
    for (c, ch) in s.channels.iter().enumerate() {
        out.extend(
            [
                ChannelNum::MaxPermeability,
                ChannelNum::Shift,
                ChannelNum::Q10,
                ChannelNum::ReferenceTemperature,
            ]
            .map(|w| NumField::Channel(c, w)),
        );
        for g in 0..ch.gates.len() {
            out.extend(
                [GateNum::Power, GateNum::VHalf, GateNum::Slope, GateNum::Tau].map(|what| NumField::Gate {
                    channel: c,
                    gate: g,
                    what,
                }),
            );
        }
    }
    use EventNum as E;
    let event_nums = [
        E::Factor,
        E::From,
        E::Until,
        E::Lag,
        E::OutsideMm,
        E::At,
        E::MaxBlock,
        E::Ic50,
        E::Hill,
        E::Dose,
        E::Onset,
        E::Washout,
        E::Amplitude,
        E::Width,
        E::Period,
        E::Count,
    ];
    for i in 0..s.protocol.len() {
        out.extend(event_nums.map(|w| NumField::Event(i, w)));
    }
    out.retain(|f| f.get(s).is_some());
    out
}

/// The editor's field at `path` in `s`, if `s` has it.
pub fn field_at(s: &Scenario, path: &str) -> Option<NumField> {
    fields_of(s).into_iter().find(|f| f.path() == path)
}

/// The range a big slider for `field` covers, around the present `value`. Quantities that span
/// decades get four decades centred on the value; the others a span that suits their kind.
pub fn slider_range(field: NumField, value: f64, s: &Scenario) -> SliderRange {
    let linear = |lo: f64, hi: f64| SliderRange {
        lo: lo.min(value),
        hi: hi.max(value),
        log: false,
    };
    if let Drag::Log { floor, .. } = field.drag() {
        let centre = if value > 0.0 { value } else { floor * 100.0 };
        return SliderRange {
            lo: centre / 100.0,
            hi: centre * 100.0,
            log: true,
        };
    }
    let duration = s.run.duration_ms;
    let spread = |v: f64| (v.abs() * 4.0).max(10.0);
    match field {
        NumField::TemperatureC | NumField::Channel(_, ChannelNum::ReferenceTemperature) => linear(0.0, 45.0),
        NumField::StartMv
        | NumField::Channel(_, ChannelNum::Shift)
        | NumField::Gate {
            what: GateNum::VHalf, ..
        } => linear(-150.0, 100.0),
        NumField::Charge(_) => linear(-3.0, 3.0),
        NumField::Event(_, EventNum::MaxBlock) => linear(0.0, 1.0),
        NumField::Event(_, EventNum::From | EventNum::Until | EventNum::At) => linear(0.0, duration),
        NumField::Event(_, EventNum::Amplitude) => linear(-spread(value), spread(value)),
        NumField::Pump(PumpNum::HillInside | PumpNum::HillOutside)
        | NumField::Event(_, EventNum::Hill)
        | NumField::Channel(_, ChannelNum::Q10) => linear(0.5, 5.0),
        _ if field.style() == Style::Whole => linear(0.0, (value * 2.0).max(6.0)),
        _ if value < 0.0 => linear(value * 4.0, 0.0),
        _ => linear(0.0, spread(value)),
    }
}

/// Rounds a slider value to what a person would type: whole numbers where the field wants them,
/// three significant digits on a log scale, and about a thousandth of the span otherwise.
pub fn round_for(field: NumField, v: f64, range: SliderRange) -> f64 {
    if field.style() == Style::Whole {
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

/// What the presentation panels show besides the scenario.
pub struct PresentInfo<'a> {
    pub scenario: &'a Scenario,
    pub pins: &'a [String],
    pub running: bool,
    pub can_run: bool,
    pub speed: Speed,
    pub shown_ms: f64,
    pub v_mv: Option<f64>,
    pub notice: Option<&'a str>,
}

/// The bar across the top and the big sliders along the bottom.
pub fn panels(ui: &mut Ui, state: &mut Presentation, info: &PresentInfo, commands: &mut Vec<Command>) {
    Panel::top("presentation bar").show(ui, |ui| bar(ui, info, commands));
    Panel::bottom("presentation sliders").show(ui, |ui| sliders(ui, state, info, commands));
}

fn bar(ui: &mut Ui, info: &PresentInfo, commands: &mut Vec<Command>) {
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
        egui::ComboBox::from_id_salt("presentation speed")
            .selected_text(info.speed.label())
            .width(90.0)
            .show_ui(ui, |ui| {
                for s in Speed::CHOICES {
                    if ui.selectable_label(s == info.speed, s.label()).clicked() {
                        commands.push(Command::SetSpeed(s));
                    }
                }
            })
            .response
            .on_hover_text("Simulated milliseconds per second");
        ui.separator();
        let v = info
            .v_mv
            .map_or_else(|| "—".to_string(), |v| format!("{v:+.1} mV"));
        ui.label(
            RichText::new(format!("t = {:.0} ms    V = {v}", info.shown_ms))
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
                let title = info.scenario.title.trim();
                ui.add(egui::Label::new(RichText::new(title).size(18.0).strong()).truncate());
            }
        });
    });
    ui.add_space(4.0);
}

fn sliders(ui: &mut Ui, state: &mut Presentation, info: &PresentInfo, commands: &mut Vec<Command>) {
    ui.add_space(6.0);
    let s = info.scenario;
    if info.pins.is_empty() {
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
    let label_w = 190.0;
    let value_w = 130.0;
    for path in info.pins {
        ui.horizontal(|ui| {
            let unpin = |ui: &mut Ui, commands: &mut Vec<Command>| {
                if ui.small_button("×").on_hover_text("Remove this slider").clicked() {
                    commands.push(Command::Pin {
                        path: path.clone(),
                        pinned: false,
                    });
                }
            };
            let (Some(field), Ok(value)) = (field_at(s, path), paths::number_at(s, path)) else {
                ui.label(RichText::new(format!("{path}: not in this scenario")).weak());
                unpin(ui, commands);
                return;
            };
            let name = field.describe(s);
            ui.spacing_mut().interact_size.y = 30.0;
            fixed_width(ui, label_w, egui::Align::Min, |ui| {
                ui.add(egui::Label::new(RichText::new(&name).size(18.0).strong()).truncate())
                    .on_hover_text(path.as_str());
            });
            let range = *state
                .ranges
                .entry(path.clone())
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
            let unit = field.unit();
            ui.ctx()
                .accesskit_node_builder(response.id, |n| n.set_label(format!("{name}, big slider")));
            if response.changed() {
                let v = round_for(field, v, range);
                if v != value && check_edit(s, &Edit::Number(field, v)).is_ok() {
                    commands.push(Command::Edit(Edit::Number(field, v)));
                }
            }
            let shown = format!("{} {unit}", format_value(value, field.style()));
            fixed_width(ui, value_w, egui::Align::Max, |ui| {
                ui.label(RichText::new(shown).size(18.0).monospace());
            });
            unpin(ui, commands);
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
    use crate::scenario::{Event, Kinetics};

    fn example(name: &str) -> Scenario {
        let text = crate::examples::example_text(name).unwrap_or_else(|| panic!("no example {name}"));
        crate::scenario::from_str(text, name)
            .unwrap_or_else(|e| panic!("{e}"))
            .into_inner()
    }

    /// The editor's addresses and the file paths agree on every field of every bundled example,
    /// so a pin made from the editor reads back the value the editor shows.
    #[test]
    fn every_editor_field_is_the_number_at_its_path() {
        for (file, _) in crate::examples::EXAMPLES {
            let s = example(file);
            let fields = fields_of(&s);
            for f in &fields {
                assert_eq!(paths::number_at(&s, &f.path()).ok(), f.get(&s), "{file}: {f:?}");
                assert_eq!(field_at(&s, &f.path()), Some(*f), "{file}: {f:?}");
            }
            // Every number of the file is reachable from the editor (and nothing twice).
            let mut from_fields: Vec<String> = fields.iter().map(NumField::path).collect();
            from_fields.sort();
            let mut from_paths = paths::number_paths(&s);
            from_paths.sort();
            assert_eq!(from_fields, from_paths, "{file}");
        }
    }

    #[test]
    fn slider_ranges_hold_the_present_value_and_suit_the_quantity() {
        let mut s = Scenario::new_default();
        s.protocol.push(Event::Agent {
            label: "a".into(),
            species: "K+".into(),
            max_block: 0.8,
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
        for f in fields_of(&s) {
            let v = f.get(&s).unwrap_or(f64::NAN);
            let r = slider_range(f, v, &s);
            assert!(r.lo < r.hi && r.lo <= v && v <= r.hi, "{f:?}: {v} in {r:?}");
            assert!(!r.log || r.lo > 0.0, "{f:?}");
        }
        // Bath potassium: four decades around 5 mM, on a log scale.
        let r = slider_range(NumField::OutsideMm(0), 5.0, &s);
        assert!(r.log && (r.lo - 0.05).abs() < 1e-12 && (r.hi - 500.0).abs() < 1e-9);
        assert_eq!(
            slider_range(NumField::TemperatureC, 37.0, &s),
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
        assert_eq!(round_for(NumField::OutsideMm(0), 12.3456, log), 12.3);
        let lin = SliderRange {
            lo: 0.0,
            hi: 45.0,
            log: false,
        };
        assert!((round_for(NumField::TemperatureC, 21.23456, lin) - 21.23).abs() < 1e-9);
        assert_eq!(round_for(NumField::Charge(0), 1.6, lin), 2.0);
    }
}
