//! Input widgets that check values as they are typed. A number shows as a small button with its
//! unit: drag it (on a log scale for quantities that span decades) or click it to type. Every
//! keystroke is checked against the whole scenario; an invalid entry is outlined in red with the
//! reason in a tooltip. A typed entry is applied only when complete (Enter or the field left),
//! as one undo step; a refused one leaves the previous value, with the reason in the status line.

use egui::{Color32, Id, Response, Role, Sense, Stroke, StrokeKind, TextEdit, Ui, WidgetInfo, vec2};

use crate::scenario::fields::{Part, numbers_of};
use crate::scenario::{Address, Drag, Edit, Problem, Scenario};
use crate::ui::command::Command;
use crate::ui::state::checks::Checked;
use crate::ui::state::document::Document;

/// Width of a number in a grid row, points.
const ROW_WIDTH: f32 = 80.0;

/// Points of pointer movement that multiply a log-dragged value by ten.
const POINTS_PER_DECADE: f64 = 150.0;

/// What an editor panel works with: the document to read, the edits already checked against
/// it, and the list to push commands to.
pub struct Editing<'a> {
    pub scenario: &'a Scenario,
    doc: &'a Document,
    checked: &'a mut Checked,
    pub commands: &'a mut Vec<Command>,
    /// Numbers shown as big sliders in presentation (offered in each number's menu).
    pub pinned: &'a [Address],
    /// The numbers drawn so far, so that [`Editing::others`] draws the rest.
    drawn: Vec<Address>,
}

/// Text being typed into a field, and why it is not accepted (if it is not).
#[derive(Clone, Default)]
struct Typing {
    text: String,
    error: Option<String>,
}

/// The entry being typed, kept where the app finds it after the frame: a click that hides its
/// field (another editor tab) takes the keyboard away in a frame that no longer draws the field,
/// which then cannot complete the entry itself.
#[derive(Clone)]
struct OpenEntry {
    id: Id,
    /// What completing it does (apply it or say why not), if anything.
    then: Option<Command>,
}

impl OpenEntry {
    fn slot() -> Id {
        Id::unique("permeant open entry")
    }

    fn keep(ctx: &egui::Context, id: Id, then: Option<Command>) {
        ctx.data_mut(|d| d.insert_temp(Self::slot(), OpenEntry { id, then }));
    }

    fn close(ctx: &egui::Context) {
        ctx.data_mut(|d| d.remove::<OpenEntry>(Self::slot()));
    }
}

/// Completes the entry whose field lost the keyboard without being drawn this frame (call after
/// the panels): what it does, unless Esc abandoned it.
pub fn finish_unseen_entry(ctx: &egui::Context) -> Option<Command> {
    let open: OpenEntry = ctx.data_mut(|d| d.get_temp(OpenEntry::slot()))?;
    if ctx.memory(|m| m.has_focus(open.id)) {
        return None;
    }
    OpenEntry::close(ctx);
    ctx.data_mut(|d| d.remove_temp::<Typing>(open.id));
    if ctx.input(|i| i.key_pressed(egui::Key::Escape)) {
        return None;
    }
    open.then
}

/// Draws the red outline and attaches the reason.
fn mark_invalid(ui: &Ui, response: Response, error: &Option<String>) -> Response {
    match error {
        Some(reason) => {
            let color = ui.visuals().error_fg_color;
            ui.painter().rect_stroke(
                response.rect.expand(1.0),
                3.0,
                Stroke::new(2.0, color),
                StrokeKind::Outside,
            );
            let text = egui::RichText::new(reason).color(color);
            // While typing, the reason is shown at once rather than waiting for a hover.
            if response.has_focus() {
                response.show_tooltip_text(text);
                response
            } else {
                response.on_hover_text(text)
            }
        }
        None => response,
    }
}

fn set_accessible_name(ui: &Ui, id: Id, name: &str) {
    ui.ctx()
        .accesskit_node_builder(id, |node| node.set_label(name.to_string()));
}

/// Selects the whole text of the text field `id`, so that typing replaces it.
fn select_all(ui: &Ui, id: Id, text: &str) {
    let mut state = TextEdit::load_state(ui.ctx(), id).unwrap_or_default();
    state
        .cursor
        .set_char_range(Some(egui::text::CCursorRange::select_all_str(text)));
    state.store(ui.ctx(), id);
}

/// Rounds a dragged value to three significant digits (log drags) or to the drag step.
pub fn round_dragged(v: f64, drag: Drag) -> f64 {
    match drag {
        Drag::Log { .. } => {
            if v == 0.0 {
                return 0.0;
            }
            let mag = 10f64.powf(v.abs().log10().floor() - 2.0);
            (v / mag).round() * mag
        }
        Drag::Linear { per_point } => {
            let step = 10f64.powf(per_point.log10().floor());
            (v / step).round() * step
        }
    }
}

impl<'a> Editing<'a> {
    pub fn new(
        doc: &'a Document,
        checked: &'a mut Checked,
        commands: &'a mut Vec<Command>,
        pinned: &'a [Address],
    ) -> Self {
        Editing {
            scenario: doc.scenario(),
            doc,
            checked,
            commands,
            pinned,
            drawn: Vec::new(),
        }
    }
}

impl Editing<'_> {
    pub fn push(&mut self, edit: Edit) {
        self.commands.push(Command::Edit(edit));
    }

    /// Counts `field` as drawn (shown some other way), so [`Editing::others`] leaves it out.
    pub fn mark_drawn(&mut self, field: Address) {
        self.drawn.push(field);
    }

    /// Whether `edit` would leave the scenario valid, or the first reason it would not.
    pub fn check(&mut self, edit: &Edit) -> Result<(), Problem> {
        self.checked.check(self.doc, edit)
    }

    /// Pushes `edit` when it would leave the scenario valid.
    pub fn push_checked(&mut self, edit: Edit) {
        if self.check(&edit).is_ok() {
            self.push(edit);
        }
    }

    /// The accessible and tooltip name of a number field, with its unit.
    pub fn field_name(&self, field: Address) -> String {
        let unit = field.field().unit;
        if unit.is_empty() {
            field.label(self.scenario)
        } else {
            format!("{} ({unit})", field.label(self.scenario))
        }
    }

    /// The number field of the table row at `path` (e.g. `species[].outside_mm`) and list
    /// indices `at`, at least `width` points wide. Shows "—" when the scenario lacks it.
    pub fn number(&mut self, ui: &mut Ui, path: &str, at: &[usize], width: f32) -> Response {
        let address = Address::of(path, at);
        debug_assert!(address.is_some(), "no row of the field table is at {path}");
        match address {
            Some(a) => self.number_at(ui, a, width),
            None => ui.label("—"),
        }
    }

    /// Leaves the number of the table row at `path` out of [`Editing::others`]: it means
    /// nothing here (an opener's `max_block`, which stays at its default).
    pub fn leave_out(&mut self, path: &str, at: &[usize]) {
        if let Some(a) = Address::of(path, at) {
            self.drawn.push(a);
        }
    }

    /// Rows of a two-column grid: each label beside the number of the table row at its path
    /// (list indices left out; these are numbers of the scenario's top level, cell, pump or run).
    pub fn rows(&mut self, ui: &mut Ui, rows: &[(&str, &str)]) {
        for (label, path) in rows {
            ui.label(*label);
            self.number(ui, path, &[], ROW_WIDTH);
            ui.end_row();
        }
    }

    /// The numbers of `part` at list indices `at` that no hand-made layout has drawn yet, each
    /// under its table label: a number added to the field table is editable at once, in the
    /// card or grid of what holds it.
    pub fn others(
        &mut self,
        ui: &mut Ui,
        id_salt: impl std::hash::Hash + std::fmt::Debug,
        part: Part,
        at: &[usize],
    ) {
        let rest: Vec<Address> = numbers_of(self.scenario, part, at)
            .filter(|a| !self.drawn.contains(a))
            .collect();
        if rest.is_empty() {
            return;
        }
        egui::Grid::new(("other numbers", id_salt))
            .num_columns(2)
            .spacing([12.0, 6.0])
            .show(ui, |ui| {
                for a in rest {
                    ui.label(capitalized(a.field().label));
                    self.number_at(ui, a, ROW_WIDTH);
                    ui.end_row();
                }
            });
    }

    /// A number field of at least `width` points. Shows "—" when the scenario lacks the field.
    pub fn number_at(&mut self, ui: &mut Ui, field: Address, width: f32) -> Response {
        self.drawn.push(field);
        let Some(value) = field.get(self.scenario) else {
            return ui.label("—");
        };
        let name = self.field_name(field);
        let style = field.field().style;
        let unit = field.field().unit;
        let id = ui.scope_id().with(("number", field));
        ui.memory_mut(|m| m.interested_in_focus(id, ui.layer_id()));
        let typing_now = ui.memory(|m| m.has_focus(id));

        if typing_now {
            let stored: Option<Typing> = ui.data_mut(|d| d.get_temp(id));
            // The first frame of typing selects the whole value, so typing replaces it.
            let fresh = stored.is_none();
            let mut typing = stored.unwrap_or_else(|| Typing {
                text: style.format(value),
                error: None,
            });
            let edit = TextEdit::singleline(&mut typing.text)
                .id(id)
                .desired_width(width - 8.0)
                .suffix(unit)
                .min_size(vec2(width, ui.spacing().interact_size.y));
            let response = ui.add(edit);
            if fresh {
                select_all(ui, id, &typing.text);
            }
            // Each keystroke is only checked, so the reason shows while typing; the entry is
            // applied once, when it is complete (Enter or the field left), so a refused entry
            // never leaves its last valid prefix in force.
            if response.changed() {
                typing.error = self.check_typed(field, &typing.text).err();
            }
            let error = typing.error.clone();
            if response.lost_focus() {
                ui.data_mut(|d| d.remove_temp::<Typing>(id));
                OpenEntry::close(ui.ctx());
                if !ui.input(|i| i.key_pressed(egui::Key::Escape)) {
                    self.finish_entry(field, value, &typing.text);
                }
            } else {
                let then = self.entry_outcome(field, value, &typing.text);
                OpenEntry::keep(ui.ctx(), id, then);
                ui.data_mut(|d| d.insert_temp(id, typing));
            }
            set_accessible_name(ui, id, &name);
            mark_invalid(ui, response, &error)
        } else {
            // Focus taken elsewhere since the last frame (a click on another widget): the entry
            // is complete, unless it was Esc.
            if let Some(left) = ui.data_mut(|d| d.remove_temp::<Typing>(id)) {
                OpenEntry::close(ui.ctx());
                if !ui.input(|i| i.key_pressed(egui::Key::Escape)) {
                    self.finish_entry(field, value, &left.text);
                }
            }
            let shown = if unit.is_empty() {
                style.format(value)
            } else {
                format!("{} {unit}", style.format(value))
            };
            let font = egui::TextStyle::Button.resolve(ui.style());
            let galley = ui
                .painter()
                .layout_no_wrap(shown.clone(), font, ui.visuals().text_color());
            let size = vec2((galley.size().x + 10.0).max(width), ui.spacing().interact_size.y);
            let (_, rect) = ui.allocate_space(size);
            let response = ui.interact(rect, id, Sense::click_and_drag());
            let visuals = ui.style().interact(&response);
            ui.painter().rect(
                rect,
                visuals.corner_radius,
                visuals.weak_bg_fill,
                visuals.bg_stroke,
                StrokeKind::Inside,
            );
            let text_pos = rect.left_center() + vec2(5.0, -galley.size().y / 2.0);
            ui.painter().galley(text_pos, galley, visuals.text_color());
            let response = response.on_hover_cursor(egui::CursorIcon::ResizeHorizontal);
            if response.clicked() {
                ui.memory_mut(|m| m.request_focus(id));
                ui.ctx().request_repaint();
            } else if response.dragged() {
                let d = response.drag_delta();
                let points = f64::from(d.x - d.y);
                if points != 0.0 {
                    let precise_id = id.with("precise");
                    let precise: f64 = ui.data_mut(|m| m.get_temp(precise_id)).unwrap_or(value);
                    let drag = field.field().drag;
                    let next = match drag {
                        Drag::Linear { per_point } => precise + points * per_point,
                        Drag::Log { floor } => {
                            let base = if precise > 0.0 {
                                precise
                            } else if points > 0.0 {
                                floor
                            } else {
                                0.0
                            };
                            base * 10f64.powf(points / POINTS_PER_DECADE)
                        }
                    };
                    ui.data_mut(|m| m.insert_temp(precise_id, next));
                    let rounded = round_dragged(next, drag);
                    if rounded != value {
                        self.push_checked(Edit::Number(field, rounded));
                    }
                }
            }
            if response.drag_stopped() || response.drag_started() {
                ui.data_mut(|m| m.remove_temp::<f64>(id.with("precise")));
            }
            response.widget_info(|| WidgetInfo::labeled(Role::SpinButton, ui.is_enabled(), &name));
            ui.ctx().accesskit_node_builder(id, |node| {
                node.set_value(shown.clone());
                node.set_numeric_value(value);
            });
            let response = response.on_hover_text(format!(
                "{name}: {shown}\nDrag to change, click to type a value.\nRight-click to show it as a big slider in presentation."
            ));
            self.pin_menu(&response, field);
            response
        }
    }

    /// The value `text` would set at `field`, or why it cannot.
    fn check_typed(&mut self, field: Address, text: &str) -> Result<f64, String> {
        let v = field.field().style.parse(text).map_err(|e| e.to_string())?;
        self.check(&Edit::Number(field, v))
            .map(|()| v)
            .map_err(|p| p.message)
    }

    /// A completed entry at `field` (which held `value`): applied as one undo step when it is
    /// valid; otherwise the field keeps `value` and the status line says why.
    fn finish_entry(&mut self, field: Address, value: f64, text: &str) {
        if let Some(cmd) = self.entry_outcome(field, value, text) {
            self.commands.push(cmd);
        }
    }

    /// What completing the entry `text` at `field` (which held `value`) does: apply it, say why
    /// not, or nothing (the value it had).
    fn entry_outcome(&mut self, field: Address, value: f64, text: &str) -> Option<Command> {
        match self.check_typed(field, text) {
            Ok(v) if v != value => Some(Command::Entry(Edit::Number(field, v))),
            Ok(_) => None,
            Err(reason) => {
                let style = field.field().style;
                let unit = field.field().unit;
                let kept = if unit.is_empty() {
                    style.format(value)
                } else {
                    format!("{} {unit}", style.format(value))
                };
                Some(Command::Notice(format!(
                    "{}: “{}” not taken, because {reason}; it stays {kept}.",
                    capitalized(&field.label(self.scenario)),
                    text.trim()
                )))
            }
        }
    }

    /// A number's right-click menu: show it as a big slider in presentation, or stop.
    fn pin_menu(&mut self, response: &Response, address: Address) {
        let pinned = self.pinned.contains(&address);
        response.context_menu(|ui| {
            let label = if pinned {
                "Remove its big slider from presentation"
            } else {
                "Big slider in presentation"
            };
            if ui.button(label).clicked() {
                self.commands.push(Command::Pin {
                    address,
                    pinned: !pinned,
                });
                ui.close();
            }
            let varied = self.scenario.run.family.as_ref().map(|f| f.field()) == Some(address);
            if varied {
                if ui.button("Run once again (no family)").clicked() {
                    self.push_checked(Edit::Family(None));
                    ui.close();
                }
            } else if !address.field().path.starts_with("run.family")
                && let Some(value) = address.get(self.scenario)
                && ui
                    .button("Run a family over this number")
                    .on_hover_text("One run per value, overlaid, measured in the side panel's Family tab")
                    .clicked()
            {
                self.push_checked(Edit::Family(Some(family_over(address, value))));
                ui.close();
            }
        });
    }

    /// A text field for a name or title: `make` turns the typed text into the edit.
    pub fn text(
        &mut self,
        ui: &mut Ui,
        id_salt: impl std::hash::Hash + std::fmt::Debug,
        current: &str,
        name: &str,
        width: f32,
        make: impl Fn(String) -> Edit,
    ) -> Response {
        let id = ui.scope_id().with(("text", id_salt));
        let focused = ui.memory(|m| m.has_focus(id));
        let escaped = ui.input(|i| i.key_pressed(egui::Key::Escape));
        let stored: Option<Typing> = ui.data_mut(|d| d.get_temp(id));
        // Applied once, when complete (Enter, or focus taken elsewhere), as one undo step; Esc
        // leaves the text as it was.
        let outcome = |ed: &mut Self, text: &str| {
            if text == current {
                return None;
            }
            let edit = make(text.to_string());
            Some(match ed.check(&edit) {
                Ok(()) => Command::Entry(edit),
                Err(reason) => Command::Notice(format!(
                    "{name}: “{text}” not taken, because {}; it stays “{current}”.",
                    reason.message
                )),
            })
        };
        let ctx = ui.ctx().clone();
        let finish = |ed: &mut Self, text: &str| {
            OpenEntry::close(&ctx);
            if !escaped && let Some(cmd) = outcome(ed, text) {
                ed.commands.push(cmd);
            }
        };
        let mut typing = match stored {
            Some(t) if focused => t,
            Some(left) => {
                finish(self, &left.text);
                ui.data_mut(|d| d.remove_temp::<Typing>(id));
                Typing {
                    text: current.to_string(),
                    error: None,
                }
            }
            None => Typing {
                text: current.to_string(),
                error: None,
            },
        };
        // At least `width`: in a grid the space left is last frame's column width, which would
        // otherwise keep a longer name cut ("NMDG+" shown as "NMI").
        let response = ui.add(
            TextEdit::singleline(&mut typing.text)
                .id(id)
                .desired_width(width)
                .min_size(vec2(width, 0.0)),
        );
        if response.changed() {
            typing.error = self.check(&make(typing.text.clone())).err().map(|p| p.message);
        }
        let error = typing.error.clone();
        if response.lost_focus() {
            finish(self, &typing.text);
        }
        if response.has_focus() {
            let then = outcome(self, &typing.text);
            OpenEntry::keep(ui.ctx(), id, then);
            ui.data_mut(|d| d.insert_temp(id, typing));
        } else {
            ui.data_mut(|d| d.remove_temp::<Typing>(id));
        }
        set_accessible_name(ui, id, name);
        mark_invalid(ui, response, &error).on_hover_text(name.to_string())
    }

    /// A button that pushes `edit`; disabled, with the reason on hover, when the edit would
    /// leave the scenario invalid.
    pub fn button(
        &mut self,
        ui: &mut Ui,
        label: impl Into<egui::WidgetText>,
        hover: &str,
        edit: Edit,
    ) -> Response {
        match self.check(&edit) {
            Ok(()) => {
                let r = ui.button(label).on_hover_text(hover.to_string());
                if r.clicked() {
                    self.push(edit);
                }
                r
            }
            Err(reason) => ui
                .add_enabled(false, egui::Button::new(label))
                .on_disabled_hover_text(format!("{hover}: not possible, because {}", reason.message)),
        }
    }

    /// A choice among the species names (for the pump, a channel or an event).
    pub fn species_choice(
        &mut self,
        ui: &mut Ui,
        id_salt: impl std::hash::Hash + std::fmt::Debug,
        current: &str,
        name: &str,
        make: impl Fn(String) -> Edit,
    ) -> Response {
        let names: Vec<String> = self.scenario.species.iter().map(|s| s.name.clone()).collect();
        let color = self
            .scenario
            .species_index(current)
            .map(crate::ui::theme::species_color);
        let mut chosen = None;
        let shown = match color {
            Some(c) => egui::RichText::new(current).color(c).strong(),
            None => egui::RichText::new(current),
        };
        let r = egui::ComboBox::from_id_salt(ui.scope_id().with(("species", id_salt)))
            .selected_text(shown)
            .width(72.0)
            .show_ui(ui, |ui| {
                for (i, n) in names.iter().enumerate() {
                    let text = egui::RichText::new(n).color(crate::ui::theme::species_color(i));
                    if ui.selectable_label(n == current, text).clicked() && n != current {
                        chosen = Some(n.clone());
                    }
                }
            });
        if let Some(n) = chosen {
            let edit = make(n);
            match self.check(&edit) {
                Ok(()) => self.push(edit),
                Err(reason) => self.commands.push(Command::Notice(format!(
                    "{name}: not changed, because {}",
                    reason.message
                ))),
            }
        }
        let response = r.response;
        set_accessible_name(ui, response.id, name);
        response.on_hover_text(name.to_string())
    }
}

/// `text` with its first letter in upper case, as a row label.
fn capitalized(text: &str) -> String {
    let mut chars = text.chars();
    match chars.next() {
        Some(first) => first.to_uppercase().chain(chars).collect(),
        None => String::new(),
    }
}

/// A small square in a species' colour, used as a row marker and legend key.
pub fn color_swatch(ui: &mut Ui, color: Color32) -> Response {
    let (rect, response) = ui.allocate_exact_size(vec2(12.0, 12.0), Sense::hover());
    ui.painter().rect_filled(rect, 2.0, color);
    response
}

/// A first family over the number at `address`, around its present `value`: the usual step
/// levels for a potential, else eleven values from 0 to twice the value (0 to 10 from 0).
fn family_over(address: Address, value: f64) -> crate::scenario::Family {
    let (from, to, step) = if address.field().unit == "mV" {
        (-100.0, 40.0, 10.0)
    } else if value > 0.0 {
        (0.0, 2.0 * value, value / 5.0)
    } else if value < 0.0 {
        (2.0 * value, 0.0, -value / 5.0)
    } else {
        (0.0, 10.0, 1.0)
    };
    crate::scenario::Family::Range {
        field: address,
        from,
        to,
        step,
    }
}
