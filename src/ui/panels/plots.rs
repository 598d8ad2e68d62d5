//! The central plots: membrane potential against time with every reversal potential, the GHK
//! potential and the protocol's events, and under it (sharing the time axis) the currents, the
//! permeabilities or the gates. Long traces are thinned to min/max per pixel column of the
//! visible range, so a frame costs the same for a thousand samples or a million.

use egui::{Color32, Id, RichText, Ui};
use egui_plot::{HLine, HoverPosition, Line, LineStyle, Plot, PlotPoint, PlotUi, Points, Span, Text, VLine};

use crate::analysis::RestReport;
use crate::analysis::decimate::Decimator;
use crate::analysis::family::Member;
use crate::engine::{Readout, Trace};
use crate::scenario::{Event, Interval, Scenario, Wording};
use crate::ui::analysis::kept::KeptTrace;
use crate::ui::command::Command;
use crate::ui::panels::editor::protocol::{MAX_PULSES_DRAWN, event_color};
use crate::ui::panels::family::MARKERS;
use crate::ui::panels::plot_labels::{self, LegendEntry, LineLabel, Placed, Placer, PlotLook};
use crate::ui::state::family::FamilyResult;
use crate::ui::state::prefs::LowerPlot;
use crate::ui::state::runtime::Derived;
use crate::ui::theme::{band_fill, neutral_color, potential_color, species_color};
use crate::ui::time::TimeUnit;
use std::collections::HashMap;

/// Reversal lines further than this from 0 mV are left out of the automatic range (they are
/// still drawn when the view reaches them), so that e.g. calcium's +130 mV does not squash V.
const AUTO_RANGE_LIMIT_MV: f64 = 150.0;

/// What the plots draw.
pub struct PlotInput<'a> {
    pub scenario: &'a Scenario,
    pub rest: Option<&'a RestReport>,
    pub trace: Option<&'a Trace>,
    /// Samples shown (a prefix of the trace).
    pub shown_len: usize,
    pub shown_ms: f64,
    pub derived: &'a Derived,
    /// Names of the gates in trace columns `1..=gates.len()`.
    pub gate_names: &'a [String],
    pub lower: LowerPlot,
    /// Changes with each new run, to reset the cached range.
    pub generation: u64,
    /// Kept traces, drawn under the live one when visible.
    pub kept: &'a [KeptTrace],
    /// The family of runs, each drawn under the live run.
    pub family: Option<&'a FamilyResult>,
    /// The state at the start of the run, for axes before the run has a sample.
    pub start: Option<&'a Readout>,
}

/// Dash patterns of successive runs of a family, so that runs differ without colour.
fn family_style(k: usize) -> LineStyle {
    match k % 4 {
        0 => LineStyle::Solid,
        1 => LineStyle::dashed_loose(),
        2 => LineStyle::dotted_loose(),
        _ => LineStyle::dashed_dense(),
    }
}

/// Every run of the family as lines of `pick`ed samples, named by their value, under the
/// live run; a marker every so often on each line tells runs apart without colour.
fn family_lines(
    lines: &mut HashMap<String, Decimator>,
    pui: &mut PlotUi,
    input: &PlotInput,
    what: &str,
    pick: fn(&Member) -> &[f64],
) -> Vec<LegendEntry> {
    let mut named = Vec::new();
    let Some(f) = input.family else { return named };
    let range = visible_t(pui);
    let cols = columns(pui);
    let unit = f.runs.field.field().unit;
    for (k, m) in f.runs.members.iter().enumerate() {
        let y = pick(m);
        let points = decimated(lines, &format!("family/{what}/{k}"), &m.t_ms, y, range, cols);
        // Only the first and last runs are named, so the legend says which way the family
        // goes without listing every run over the plot.
        let last = f.runs.members.len() - 1;
        let name = if k == 0 || k == last {
            format!("{} {unit}", crate::report::csv::number(m.value))
        } else {
            String::new()
        };
        let color = species_color(k);
        if !name.is_empty() {
            named.push(LegendEntry {
                name: name.clone(),
                color,
                width: 1.3,
                style: family_style(k),
            });
        }
        let n = m.t_ms.len().min(y.len());
        let step = (n / 6).max(1);
        let marks: Vec<[f64; 2]> = (step / 2..n).step_by(step).map(|i| [m.t_ms[i], y[i]]).collect();
        pui.line(
            Line::new(name.clone(), points)
                .color(color)
                .width(1.3)
                .style(family_style(k)),
        );
        pui.points(
            Points::new(String::new(), marks)
                .shape(MARKERS[k % MARKERS.len()])
                .radius(3.0)
                .color(color),
        );
    }
    named
}

/// What the plots keep between frames: the running V range and one [`Decimator`] per line,
/// all updated with new samples only, and dropped when a new run starts.
#[derive(Debug, Default)]
pub struct Plots {
    generation: u64,
    done: usize,
    v_min: f64,
    v_max: f64,
    lines: HashMap<String, Decimator>,
    /// Widths of the two plots' potential and lower y axes as last drawn, points. Each plot's
    /// axis is made as wide as the wider of the two, so their time axes start at the same pixel
    /// (their tick labels differ: "-100" against "0.5" or "1e-7").
    axis_w: [f32; 2],
    /// What the widths were measured for; a different lower plot or text size starts over.
    axis_for: Option<(LowerPlot, u32)>,
    /// The two plot areas as last drawn (upper, lower), in points.
    frames: Option<[egui::Rect; 2]>,
    /// Whether the user zoomed or moved a plot, so the view no longer follows the run (egui_plot
    /// keeps its default bounds only as where a double-click goes back to, so following the
    /// run's duration and potential range is done here, frame by frame).
    zoomed: bool,
    /// "Fit view" was asked for: both plots show the whole run again on the next frame.
    fit: bool,
    /// The time range the plots showed last, ms.
    shown_t_ms: Option<(f64, f64)>,
    /// Each reversal line as last drawn: its name and the time span (ms) it covers.
    reversal_spans: Vec<(String, f64, f64)>,
    /// Where the user last clicked a plot, ms: the readouts "now" are read there.
    cursor_ms: Option<f64>,
    /// Each plot's y range as last drawn (upper, lower).
    y_shown: Option<[(f64, f64); 2]>,
    /// The unit the time axis was last written in.
    time_unit: TimeUnit,
    /// The lower plot's data range so far, updated with new samples only.
    lower_range: LowerRange,
    /// Text sizes and line widths (the desk's, or presentation's).
    look: Option<PlotLook>,
    /// The labels of lines and bands as last drawn over the potential plot.
    placed: Vec<Placed>,
    /// The lower plot's legend as last drawn, and where.
    legend: Vec<LegendEntry>,
    legend_rect: Option<egui::Rect>,
    /// The time range (ms) the lower plot showed last, and its y axis title.
    lower_t_ms: Option<(f64, f64)>,
    lower_title: String,
    /// Where the plots' panel begins (its left edge, points), as last drawn.
    area_left: Option<f32>,
    /// Numbers shown as big sliders in presentation: each one's value is written on the line
    /// it moves.
    pinned: Vec<crate::scenario::Address>,
}

/// The range of the lower plot's values over the samples shown so far.
#[derive(Debug, Default)]
struct LowerRange {
    /// The run generation and view it was taken for.
    key: Option<(u64, LowerPlot)>,
    done: usize,
    lo: f64,
    hi: f64,
}

impl LowerRange {
    fn take(&mut self, v: f64) {
        if v.is_finite() {
            self.lo = self.lo.min(v);
            self.hi = self.hi.max(v);
        }
    }
}

/// Every column the lower plot draws in `view`, each a value per sample.
fn lower_columns(d: &Derived, view: LowerPlot) -> Vec<&[f64]> {
    match view {
        LowerPlot::Currents => d
            .currents_ua_per_cm2
            .iter()
            .map(Vec::as_slice)
            .chain([
                d.pump_ua_per_cm2.as_slice(),
                d.net_ua_per_cm2.as_slice(),
                d.inject_ua_per_cm2.as_slice(),
                d.clamp_ua_per_cm2.as_slice(),
            ])
            .collect(),
        LowerPlot::Permeabilities => d.log10_p.iter().map(Vec::as_slice).collect(),
        LowerPlot::Gates => Vec::new(),
        LowerPlot::Volume => vec![d.volume_rel.as_slice()],
        LowerPlot::Osmolarity => vec![d.osm_in_mosm.as_slice(), d.osm_out_mosm.as_slice()],
        LowerPlot::Concentrations => d.inside_mm.iter().map(Vec::as_slice).collect(),
    }
}

/// The same values at the start of a run that has no sample yet (the steady state, or the
/// file's state), so the axis before a run is sized from them and not left to guess.
fn start_values(r: &Readout, view: LowerPlot) -> Vec<f64> {
    let c = &r.currents;
    match view {
        LowerPlot::Currents => c
            .species_ua_per_cm2
            .iter()
            .copied()
            .chain([
                c.pump_ua_per_cm2,
                c.net_ua_per_cm2,
                c.inject_ua_per_cm2,
                c.clamp_ua_per_cm2,
            ])
            .collect(),
        LowerPlot::Permeabilities | LowerPlot::Gates => Vec::new(),
        LowerPlot::Volume => vec![r.volume_rel],
        LowerPlot::Osmolarity => vec![r.osm_in_mosm, r.osm_out_mosm],
        LowerPlot::Concentrations => r.conditions.inside_mm.clone(),
    }
}

/// Whether the lower plot can show `choice` for this scenario: the volume views need a
/// tracked volume, the inside concentrations concentrations that change.
pub fn lower_offered(choice: LowerPlot, s: &Scenario) -> bool {
    let volume = !s.cell.volume.is_fixed();
    match choice {
        LowerPlot::Volume | LowerPlot::Osmolarity => volume,
        LowerPlot::Concentrations => volume || s.cell.track_concentrations,
        _ => true,
    }
}

/// The decimated points of one line, reusing its decimator while the view is unchanged.
fn decimated(
    lines: &mut HashMap<String, Decimator>,
    key: &str,
    t: &[f64],
    y: &[f64],
    range: (f64, f64),
    columns: usize,
) -> Vec<[f64; 2]> {
    let d = lines
        .entry(key.to_string())
        .or_insert_with(|| Decimator::new(range, columns));
    if !d.matches(range, columns) || d.done() > t.len().min(y.len()) {
        *d = Decimator::new(range, columns);
    }
    d.update(t, y);
    d.points(t, y)
}

impl Plots {
    fn v_range(&mut self, input: &PlotInput) -> Option<(f64, f64)> {
        let trace = input.trace?;
        if self.generation != input.generation || input.shown_len < self.done {
            self.generation = input.generation;
            self.done = 0;
            self.v_min = f64::INFINITY;
            self.v_max = f64::NEG_INFINITY;
            self.lines.clear();
        }
        for &v in &trace.v_mv()[self.done..input.shown_len.min(trace.len())] {
            if v.is_finite() {
                self.v_min = self.v_min.min(v);
                self.v_max = self.v_max.max(v);
            }
        }
        self.done = input.shown_len.min(trace.len());
        (self.v_min <= self.v_max).then_some((self.v_min, self.v_max))
    }

    /// Sets the text sizes and line widths: the desk's, or presentation's.
    pub fn set_look(&mut self, look: PlotLook) {
        self.look = Some(look);
    }

    /// The numbers shown as big sliders, whose values are written on the lines they move (a
    /// bath concentration on its reversal line, a permeability or the temperature on the GHK
    /// line; an event's numbers are in its band's label already).
    pub fn set_pinned(&mut self, pinned: &[crate::scenario::Address]) {
        if self.pinned != pinned {
            self.pinned = pinned.to_vec();
        }
    }

    /// Draws both plots; with `controls`, the choice of the lower plot between them (a figure
    /// for export has none).
    pub fn show(&mut self, ui: &mut Ui, input: &PlotInput, controls: Option<&mut Vec<Command>>) {
        let look = self.look.unwrap_or(PlotLook::DESK);
        ui.scope(|ui| {
            look.apply(ui);
            self.show_plots(ui, input, controls, look);
        });
    }

    fn show_plots(
        &mut self,
        ui: &mut Ui,
        input: &PlotInput,
        controls: Option<&mut Vec<Command>>,
        look: PlotLook,
    ) {
        let link = Id::unique("permeant time axis");
        let duration = input.scenario.run.duration_ms.max(1e-6);
        let unit = TimeUnit::for_duration(duration);
        let total = ui.available_height();
        let selector_h = ui.spacing().interact_size.y + 6.0;
        // The lower plot's legend row (as tall as last frame's) comes out of the shared height
        // before the split: a legend of three rows at large text otherwise took it all from
        // the lower plot, whose time axis then ran under the status line.
        let legend_h = self
            .legend_rect
            .map_or(0.0, |r| r.height() + ui.spacing().item_spacing.y);
        let upper_h = ((total - selector_h - legend_h) * 0.58).max(120.0);

        let (y_lo, y_hi) = self.potential_range(input);
        let text_size = ui
            .style()
            .text_styles
            .get(&egui::TextStyle::Body)
            .map_or(0, |f| (f.size * 8.0) as u32);
        if self.axis_for != Some((input.lower, text_size)) {
            self.axis_for = Some((input.lower, text_size));
            self.axis_w = [0.0; 2];
        }
        let axis_w = self.axis_w[0].max(self.axis_w[1]).max(40.0);
        let follow = !self.zoomed || std::mem::take(&mut self.fit);
        let left = ui.cursor().left();
        self.area_left = Some(ui.max_rect().left());
        let upper = Plot::new("potential plot")
            .height(upper_h)
            .default_x_bounds(0.0, duration)
            .default_y_bounds(y_lo, y_hi)
            .link_axis(link, [true, false])
            .link_cursor(link, [true, false])
            .y_axis_label(fit_title(ui, "Membrane potential (mV)", "V (mV)", upper_h))
            .y_axis_min_width(axis_w)
            .x_grid_spacer(unit.grid_spacer())
            .y_grid_spacer(egui_plot::uniform_grid_spacer(nice_steps))
            .x_axis_formatter(move |mark, _| unit.tick_label(mark))
            .y_axis_formatter(nice_label)
            .label_formatter(move |h| unit.hover_label(h, "mV"))
            .show(ui, |pui| {
                if follow {
                    pui.set_plot_bounds_x(0.0..=duration);
                    pui.set_plot_bounds_y(y_lo..=y_hi);
                }
                let notes = line_notes(&self.pinned, input.scenario);
                let drawn = potential_items(&mut self.lines, pui, input, look.line_scale, &notes);
                cursor_line(pui, self.cursor_ms);
                drawn
            });
        self.axis_w[0] = upper.response.rect.left() - left;
        self.place_labels(ui, &upper);
        kept_legend(ui, upper.response.rect, input.kept);
        let upper_bounds = *upper.transform.bounds();
        self.shown_t_ms = Some((upper_bounds.min()[0], upper_bounds.max()[0]));
        let near = |a: f64, b: f64| (a - b).abs() <= 1e-9 * (a.abs() + b.abs()).max(1e-9);
        let upper_home = near(upper_bounds.min()[0], 0.0)
            && near(upper_bounds.max()[0], duration)
            && near(upper_bounds.min()[1], y_lo)
            && near(upper_bounds.max()[1], y_hi);

        if let Some(commands) = controls {
            let (fit, clear) = lower_choice(ui, input, self.zoomed, self.cursor_ms, commands);
            if fit {
                self.fit = true;
                ui.ctx().request_repaint();
            }
            if clear {
                self.cursor_ms = None;
            }
        }

        // A volume view chosen for another cell shows currents while this cell's volume is fixed.
        let view = match input.lower {
            v if !lower_offered(v, input.scenario) => LowerPlot::Currents,
            v => v,
        };
        let (y_label, fixed_y) = match view {
            LowerPlot::Currents => ("Current (µA/cm²)", None),
            // The ticks read as powers of ten ("10⁻⁷"), so the title names the quantity, not
            // its logarithm.
            LowerPlot::Permeabilities => ("Permeability (cm/s, log scale)", None),
            LowerPlot::Gates => ("Open fraction", Some((-0.02, 1.02))),
            LowerPlot::Volume => ("Volume (relative to start)", None),
            LowerPlot::Osmolarity => ("Osmolarity (mOsm/L)", None),
            LowerPlot::Concentrations => ("Inside concentration (mM)", None),
        };
        let y_unit = match view {
            LowerPlot::Currents => "µA/cm²",
            LowerPlot::Permeabilities => "(log₁₀ cm/s)",
            LowerPlot::Gates | LowerPlot::Volume => "",
            LowerPlot::Osmolarity => "mOsm/L",
            LowerPlot::Concentrations => "mM",
        };
        let lower_y = fixed_y.or_else(|| self.lower_y_range(input, view));
        let short_label = match view {
            LowerPlot::Currents => "I (µA/cm²)",
            LowerPlot::Permeabilities => "P (cm/s)",
            LowerPlot::Gates => "Open",
            LowerPlot::Volume => "Volume",
            LowerPlot::Osmolarity => "mOsm/L",
            LowerPlot::Concentrations => "c (mM)",
        };
        // The legend is a row above the plot, never over its data (the first spike, the
        // opening current level); it lists what the plot drew last frame.
        self.legend_rect = (!self.legend.is_empty()).then(|| plot_labels::legend_row(ui, &self.legend, look));
        // After the legend row, so the plot with its time axis ends at the panel's bottom.
        let lower_h = ui.available_height().max(80.0);
        let mut lower = Plot::new(("lower plot", view as u8))
            .height(lower_h)
            .default_x_bounds(0.0, duration)
            .link_axis(link, [true, false])
            .link_cursor(link, [true, false])
            .x_axis_label(unit.axis_title())
            .y_axis_label(fit_title(ui, y_label, short_label, lower_h))
            .y_axis_min_width(axis_w)
            .x_grid_spacer(unit.grid_spacer())
            .y_grid_spacer(egui_plot::uniform_grid_spacer(few_steps))
            .x_axis_formatter(move |mark, _| unit.tick_label(mark))
            .y_axis_formatter(nice_label)
            .label_formatter(move |h| unit.hover_label(h, y_unit));
        self.lower_title = y_label.to_string();
        if let Some((lo, hi)) = fixed_y {
            lower = lower.default_y_bounds(lo, hi);
        }
        if view == LowerPlot::Permeabilities {
            lower = lower
                .y_grid_spacer(plot_labels::log_steps)
                .y_axis_formatter(plot_labels::power_of_ten_label)
                .label_formatter(move |h| unit.hover_text(h, |y| format!("{:.3e} cm/s", 10f64.powf(y))));
        }
        let left = ui.cursor().left();
        let shown = lower.show(ui, |pui| {
            // Not when the upper plot was just moved: the lower one takes its time range.
            if follow && upper_home {
                pui.set_plot_bounds_x(0.0..=duration);
                if let Some((lo, hi)) = lower_y {
                    pui.set_plot_bounds_y(lo..=hi);
                }
            }
            cursor_line(pui, self.cursor_ms);
            let mut pen = Pen {
                scale: look.line_scale,
                legend: Vec::new(),
            };
            match view {
                LowerPlot::Currents => current_items(&mut self.lines, pui, input, &mut pen),
                LowerPlot::Permeabilities => permeability_items(&mut self.lines, pui, input, &mut pen),
                LowerPlot::Gates => gate_items(&mut self.lines, pui, input, &mut pen),
                LowerPlot::Volume => volume_items(&mut self.lines, pui, input, &mut pen),
                LowerPlot::Osmolarity => osmolarity_items(&mut self.lines, pui, input, &mut pen),
                LowerPlot::Concentrations => concentration_items(&mut self.lines, pui, input, &mut pen),
            }
            pen.legend
        });
        if shown.inner != self.legend {
            self.legend = shown.inner.clone();
            ui.ctx().request_repaint();
        }
        // A view away from the whole run was zoomed or moved by the pointer: it stays until
        // "Fit view" (or a double-click) brings it home.
        let lower_bounds = shown.transform.bounds();
        let lower_y_home =
            lower_y.is_none_or(|(lo, hi)| near(lower_bounds.min()[1], lo) && near(lower_bounds.max()[1], hi));
        self.zoomed = !(upper_home
            && lower_y_home
            && near(lower_bounds.min()[0], 0.0)
            && near(lower_bounds.max()[0], duration));
        // A click (not a drag) on either plot puts the cursor there.
        for (response, transform) in [
            (&upper.response, &upper.transform),
            (&shown.response, &shown.transform),
        ] {
            if response.clicked()
                && let Some(pos) = response.interact_pointer_pos()
            {
                let t = transform.value_from_position(pos).x;
                self.cursor_ms = Some(t.clamp(0.0, duration));
            }
        }
        self.lower_t_ms = Some((lower_bounds.min()[0], lower_bounds.max()[0]));
        self.axis_w[1] = shown.response.rect.left() - left;
        self.frames = Some([upper.response.rect, shown.response.rect]);
        self.y_shown = Some([
            (upper_bounds.min()[1], upper_bounds.max()[1]),
            (lower_bounds.min()[1], lower_bounds.max()[1]),
        ]);
        self.time_unit = unit;
        if self.axis_w[0] != self.axis_w[1] {
            // Widened next frame: draw it then.
            ui.ctx().request_repaint();
        }
    }

    /// Each plot's y range as last drawn (upper, lower), in its own unit.
    pub fn y_shown(&self) -> Option<[(f64, f64); 2]> {
        self.y_shown
    }

    /// The unit the time axis was last written in.
    pub fn time_unit(&self) -> TimeUnit {
        self.time_unit
    }

    /// The cursor a click on a plot placed, ms.
    pub fn cursor_ms(&self) -> Option<f64> {
        self.cursor_ms
    }

    /// Takes the cursor away: the readouts "now" go back to the end of what is shown.
    pub fn clear_cursor(&mut self) {
        self.cursor_ms = None;
    }

    /// The lower plot's automatic range: every value drawn so far (before a run, the values at
    /// its start), with a margin; a flat line gets a span of its own size.
    fn lower_y_range(&mut self, input: &PlotInput, view: LowerPlot) -> Option<(f64, f64)> {
        let r = &mut self.lower_range;
        let key = (input.generation, view);
        let cols = lower_columns(input.derived, view);
        let n = cols
            .iter()
            .map(|c| c.len())
            .min()
            .unwrap_or(0)
            .min(input.shown_len);
        if r.key != Some(key) || n < r.done {
            *r = LowerRange {
                key: Some(key),
                done: 0,
                lo: f64::INFINITY,
                hi: f64::NEG_INFINITY,
            };
        }
        for c in &cols {
            for &v in &c[r.done..n] {
                r.take(v);
            }
        }
        r.done = n;
        let (mut lo, mut hi) = (r.lo, r.hi);
        if n == 0 {
            // Nothing shown yet: the start alone, not what a previous run left.
            (lo, hi) = (f64::INFINITY, f64::NEG_INFINITY);
            for v in input.start.map(|s| start_values(s, view)).unwrap_or_default() {
                if v.is_finite() {
                    lo = lo.min(v);
                    hi = hi.max(v);
                }
            }
        }
        if view == LowerPlot::Currents
            && let Some(f) = input.family
        {
            // A family's runs are drawn with the live one: the axis holds them all. Sized from
            // the live run alone, a held cell's near-zero current gave a range 1e5 times
            // smaller than the steps' currents, and their dashed lines ran to millions of
            // dashes (memory ran out).
            for v in f.runs.members.iter().flat_map(|m| m.i_ua_per_cm2.iter()) {
                if v.is_finite() {
                    lo = lo.min(*v);
                    hi = hi.max(*v);
                }
            }
        }
        if view == LowerPlot::Currents && lo <= hi {
            // The zero line is part of a current plot.
            lo = lo.min(0.0);
            hi = hi.max(0.0);
        }
        if lo > hi {
            // Nothing finite to size the axis from.
            return None;
        }
        let span = hi - lo;
        let floor = match view {
            LowerPlot::Permeabilities => 0.5,
            _ => (0.05 * lo.abs().max(hi.abs())).max(1e-3),
        };
        let pad = (0.08 * span).max(if span < floor { (floor - span) / 2.0 } else { 0.0 });
        Some((lo - pad, hi + pad))
    }

    /// Each reversal line as last drawn: its name ("E K+") and the time span (ms) it covers.
    pub fn reversal_spans(&self) -> &[(String, f64, f64)] {
        &self.reversal_spans
    }

    /// The time range (ms) the plots showed last.
    pub fn shown_t_ms(&self) -> Option<(f64, f64)> {
        self.shown_t_ms
    }

    /// The time range (ms) the lower plot showed last.
    pub fn lower_t_ms(&self) -> Option<(f64, f64)> {
        self.lower_t_ms
    }

    /// The labels of lines and protocol bands as last drawn over the potential plot.
    pub fn placed_labels(&self) -> &[Placed] {
        &self.placed
    }

    /// The lower plot's legend as last drawn, and the rectangle it took.
    pub fn legend(&self) -> (&[LegendEntry], Option<egui::Rect>) {
        (&self.legend, self.legend_rect)
    }

    /// Where the plots' panel begins (its left edge, points), as last drawn.
    pub fn area_left(&self) -> Option<f32> {
        self.area_left
    }

    /// The lower plot's y axis title as last drawn.
    pub fn lower_title(&self) -> &str {
        &self.lower_title
    }

    /// Places and paints the labels of the potential plot (protocol bands first, then
    /// reversal lines and the GHK potential) where they cover no trace and no other label.
    fn place_labels(&mut self, ui: &Ui, upper: &egui_plot::PlotResponse<Upper>) {
        let t = &upper.transform;
        let screen = |p: &[f64; 2]| t.position_from_point(&PlotPoint::new(p[0], p[1]));
        let drawn = &upper.inner;
        let mut obstacles: Vec<Vec<egui::Pos2>> = drawn
            .traces
            .iter()
            .map(|l| l.iter().map(screen).collect())
            .collect();
        obstacles.extend(drawn.labels.iter().map(|l| l.1.iter().map(screen).collect()));
        let size = self.look.unwrap_or(PlotLook::DESK).label_pt;
        let mut placer = Placer::new(*t.frame(), obstacles, size);
        for (t_ms, text, color) in &drawn.bands {
            let x = t.position_from_point_x(*t_ms);
            placer.band_label(ui, x, text, *color);
        }
        for (text, line, color, from_left) in &drawn.labels {
            placer.line_label(
                ui,
                &LineLabel {
                    text: text.clone(),
                    color: *color,
                    line: line.iter().map(screen).collect(),
                    from_left: *from_left,
                },
            );
        }
        self.reversal_spans = drawn.spans.clone();
        self.placed = placer.placed;
    }

    /// The plot areas (upper, lower) as last drawn, in points.
    pub fn frames(&self) -> Option<[egui::Rect; 2]> {
        self.frames
    }

    /// The automatic V range: the trace so far, the GHK potential, the resting potential and
    /// the reversal potentials within ±150 mV, with a margin.
    fn potential_range(&mut self, input: &PlotInput) -> (f64, f64) {
        let mut lo = f64::INFINITY;
        let mut hi = f64::NEG_INFINITY;
        let mut take = |v: f64| {
            if v.is_finite() && v.abs() <= AUTO_RANGE_LIMIT_MV {
                lo = lo.min(v);
                hi = hi.max(v);
            }
        };
        if let Some((a, b)) = self.v_range(input) {
            take(a);
            take(b);
            // The recorded potential is V shifted by each offset in force.
            if let Some(o) = crate::solutions::recording_offsets(input.scenario) {
                for off in std::iter::once(o.start_mv).chain(o.changes.iter().map(|c| c.1)) {
                    take(a + off);
                    take(b + off);
                }
            }
        }
        // A clamped cell goes where its commands take it: the view holds them from the start.
        if let crate::scenario::RunMode::VoltageClamp { holding_mv, .. } = input.scenario.run.mode {
            take(holding_mv);
            for e in &input.scenario.protocol {
                match *e {
                    Event::Step { to_mv, .. } => take(to_mv),
                    Event::Ramp { from_mv, to_mv, .. } => {
                        take(from_mv);
                        take(to_mv);
                    }
                    _ => {}
                }
            }
        }
        if let Some(f) = input.family {
            for m in &f.runs.members {
                m.v_mv.iter().step_by(16).for_each(|v| take(*v));
            }
        }
        for m in input.kept.iter().filter(|k| k.visible).filter_map(|k| k.metrics) {
            take(m.peak_mv);
            take(m.trough_mv);
        }
        if let Some(r) = input.rest {
            r.species.iter().filter_map(|s| s.reversal_mv).for_each(&mut take);
            if let Ok(v) = r.ghk_mv {
                take(v);
            }
            if let Some(v) = r.resting_mv() {
                take(v);
            }
        }
        if lo > hi || lo.is_nan() {
            return (-100.0, 50.0);
        }
        let pad = ((hi - lo) * 0.08).max(5.0);
        (lo - pad, hi + pad)
    }
}

/// The choice of what the lower plot shows, between the two plots, and "Fit view" (whether
/// it was clicked is returned): marked while a zoom or move keeps the view from following the run.
/// Beside it, the cursor's time with a button that takes the cursor away (whether it was
/// clicked is returned second).
fn lower_choice(
    ui: &mut Ui,
    input: &PlotInput,
    zoomed: bool,
    cursor_ms: Option<f64>,
    commands: &mut Vec<Command>,
) -> (bool, bool) {
    let mut fit = false;
    let mut clear = false;
    // Wrapped, never wider than the plots: a row wider than the panel would widen the lower
    // plot past the upper one (and past the window's edge with large text).
    ui.horizontal_wrapped(|ui| {
        // Clear of the lower plot's rotated axis label, which can be taller than its plot.
        ui.add_space(ui.spacing().interact_size.y * 1.5);
        ui.label(RichText::new("Below:").small());
        for choice in LowerPlot::ALL
            .into_iter()
            .filter(|c| lower_offered(*c, input.scenario))
        {
            if ui
                .selectable_label(input.lower == choice, choice.label())
                .clicked()
                && input.lower != choice
            {
                commands.push(Command::SetLowerPlot(choice));
            }
        }
        if input.lower == LowerPlot::Currents {
            let note = match input.scenario.run.mode {
                crate::scenario::RunMode::VoltageClamp {
                    series_resistance_mohm,
                    ..
                } if series_resistance_mohm <= 0.0 => {
                    "outward current positive; ideal clamp: the capacitive current of a step is not shown"
                }
                _ => "outward current positive",
            };
            ui.label(RichText::new(note).small().weak());
        }
        let label = if zoomed {
            RichText::new("Fit view (zoomed)").strong().color(ui.visuals().warn_fg_color)
        } else {
            RichText::new("Fit view")
        };
        let hover = if zoomed {
            "The plots were zoomed or moved, so their time axis no longer follows the run. Show the whole run again (or double-click a plot)."
        } else {
            "Show the whole run (the plots follow it until you zoom or drag them)."
        };
        fit = ui.button(label).on_hover_text(hover).clicked();
        if let Some(t) = cursor_ms {
            let unit = TimeUnit::for_duration(input.scenario.run.duration_ms);
            clear = ui
                .button(format!("Cursor {} ×", unit.format(t)))
                .on_hover_text("The readouts \"now\" are read at this time; click to take the cursor away and read them at the end of what is shown. Click a plot to move it.")
                .clicked();
        }
    });
    (fit, clear)
}

/// A y axis title that fits along a plot `height` points high: `long`, or else `short` (large
/// text or presentation on a low window would cut the long one at both ends).
fn fit_title(ui: &Ui, long: &str, short: &str, height: f32) -> String {
    let font = egui::TextStyle::Body.resolve(ui.style());
    let w = ui
        .painter()
        .layout_no_wrap(long.to_string(), font, Color32::WHITE)
        .size()
        .x;
    if w <= height - 8.0 { long } else { short }.to_string()
}

/// The hover text of a plot: the nearest item's name, then both coordinates with units.
pub fn hover_label(h: &HoverPosition, x_unit: &str, y_unit: &str) -> Option<String> {
    let (head, p) = crate::ui::time::hover_parts(h);
    Some(format!("{head}{:.2} {x_unit}\n{:.3} {y_unit}", p.x, p.y))
}

/// The cursor a click placed, as a line across the plot.
fn cursor_line(pui: &mut PlotUi, cursor_ms: Option<f64>) {
    if let Some(t) = cursor_ms {
        let dark = pui.ctx().global_style().visuals.dark_mode;
        pui.vline(
            VLine::new("cursor", t)
                .color(neutral_color(dark))
                .width(1.2)
                .style(LineStyle::dashed_dense()),
        );
    }
}

/// How many pixel columns the plot has, for decimation.
fn columns(pui: &PlotUi) -> usize {
    let ppp = pui.ctx().pixels_per_point();
    (pui.response().rect.width() * ppp).max(1.0) as usize
}

fn visible_t(pui: &PlotUi) -> (f64, f64) {
    let b = pui.plot_bounds();
    (b.min()[0], b.max()[0])
}

/// A decimated line of `y` against the shown part of the trace's time, to be coloured.
fn series<'a>(
    lines: &mut HashMap<String, Decimator>,
    pui: &PlotUi,
    input: &PlotInput,
    y: &[f64],
    name: String,
) -> Option<Line<'a>> {
    let points = series_points(lines, pui, input, y, &name)?;
    Some(Line::new(name, points))
}

/// The decimated points of `y` against the shown part of the trace's time.
fn series_points(
    lines: &mut HashMap<String, Decimator>,
    pui: &PlotUi,
    input: &PlotInput,
    y: &[f64],
    name: &str,
) -> Option<Vec<[f64; 2]>> {
    let trace = input.trace?;
    let n = input.shown_len.min(trace.len()).min(y.len());
    let key = format!("{:?}/{name}", input.lower);
    Some(decimated(
        lines,
        &key,
        &trace.t_ms[..n],
        &y[..n],
        visible_t(pui),
        columns(pui),
    ))
}

/// One shaded band of the protocol and its label ("" for no label).
#[derive(Debug, Clone, PartialEq)]
struct Band {
    from_ms: f64,
    until_ms: f64,
    event: usize,
    /// The event's first band (the one that may carry a label).
    first: bool,
    label: String,
}

/// The bands of a protocol. A bath exchange is marked over its exchange time only (the new
/// bath then stays); events starting together share one label, so labels never pile up; a
/// lone event is labelled with its summary, a group with its event numbers.
fn bands(s: &Scenario) -> Vec<Band> {
    let d = s.run.duration_ms;
    let mut out: Vec<Band> = Vec::new();
    for (k, e) in s.protocol.iter().enumerate() {
        let intervals = match e {
            Event::BathChange { at_ms, lag_ms, .. } | Event::BathExchange { at_ms, lag_ms, .. } => {
                vec![Interval {
                    from_ms: at_ms.min(d),
                    until_ms: (at_ms + (3.0 * lag_ms).max(d / 200.0)).min(d),
                }]
            }
            _ => e.intervals(d, MAX_PULSES_DRAWN),
        };
        for (j, span) in intervals.into_iter().enumerate() {
            out.push(Band {
                from_ms: span.from_ms,
                until_ms: span.until_ms.max(span.from_ms),
                event: k,
                first: j == 0,
                label: String::new(),
            });
        }
    }
    // Label the first band of each event, grouping events that start at the same time.
    let firsts: Vec<usize> = (0..out.len()).filter(|&i| out[i].first).collect();
    let mut done = vec![false; out.len()];
    for &i in &firsts {
        if done[i] {
            continue;
        }
        let group: Vec<usize> = firsts
            .iter()
            .copied()
            .filter(|&j| (out[j].from_ms - out[i].from_ms).abs() <= 1e-9 * d.max(1.0))
            .collect();
        for &j in &group {
            done[j] = true;
        }
        out[i].label = if group.len() == 1 {
            let e = &s.protocol[out[i].event];
            format!("{}. {}", out[i].event + 1, e.summary(Wording::Brief))
        } else {
            group
                .iter()
                .map(|&j| (out[j].event + 1).to_string())
                .collect::<Vec<_>>()
                .join(" + ")
        };
    }
    out
}

/// Shades each protocol band; returns each labelled band's start (ms), label and colour, for
/// labels placed over the plot afterwards (egui_plot cuts a span's own label to its width).
fn protocol_bands(pui: &mut PlotUi, input: &PlotInput, dark: bool) -> Vec<(f64, String, Color32)> {
    let s = input.scenario;
    let mut labels = Vec::new();
    for band in bands(s) {
        let Some(e) = s.protocol.get(band.event) else {
            continue;
        };
        let color = event_color(s, e, dark);
        pui.span(
            Span::new(String::new(), band.from_ms..=band.until_ms)
                .fill(band_fill(color, dark))
                .border_width(0.0),
        );
        if !band.label.is_empty() {
            labels.push((band.from_ms, band.label, color));
        }
    }
    labels
}

/// What the potential plot drew, for the labels placed over it.
struct Upper {
    /// Each reversal line's name and the time span (ms) it covers.
    spans: Vec<(String, f64, f64)>,
    /// The traces labels keep clear of, in plot coordinates.
    traces: Vec<Vec<[f64; 2]>>,
    /// Each labelled protocol band: its start (ms), label and colour.
    bands: Vec<(f64, String, Color32)>,
    /// Each labelled line: its label, the line in plot coordinates, its colour, and whether
    /// its label is tried from the left end first.
    labels: Vec<(String, Vec<[f64; 2]>, Color32, bool)>,
}

/// What is written after the labels of the reversal lines (by species) and the GHK line: the
/// values of the pinned numbers that move them.
#[derive(Default)]
struct LineNotes {
    species: HashMap<usize, Vec<String>>,
    ghk: Vec<String>,
}

fn line_notes(pinned: &[crate::scenario::Address], s: &Scenario) -> LineNotes {
    use crate::scenario::fields::Part;
    let mut notes = LineNotes::default();
    for a in pinned {
        let Some(v) = a.get(s) else { continue };
        let row = a.field();
        let value = format!("{} {}", row.style.format(v), row.unit);
        let name = crate::scenario::control_name(*a, s);
        let text = format!("{name} {value}");
        match row.holder.part() {
            Part::Species if row.path.ends_with("_mm") => {
                if let Some(&i) = a.indices().first() {
                    notes.species.entry(i).or_default().push(text);
                }
            }
            Part::Species | Part::Scenario => notes.ghk.push(text),
            _ => {}
        }
    }
    notes
}

/// `label`, then each note after a separator.
fn with_notes(label: String, notes: Option<&Vec<String>>) -> String {
    match notes {
        Some(n) if !n.is_empty() => format!("{label} · {}", n.join(" · ")),
        _ => label,
    }
}

/// Draws the potential plot's items, with line widths times `k`.
fn potential_items(
    lines: &mut HashMap<String, Decimator>,
    pui: &mut PlotUi,
    input: &PlotInput,
    k: f32,
    notes: &LineNotes,
) -> Upper {
    let mut spans = Vec::new();
    let mut traces = Vec::new();
    let mut labels = Vec::new();
    let dark = pui.ctx().global_style().visuals.dark_mode;
    let bands = protocol_bands(pui, input, dark);
    let bounds = pui.plot_bounds();
    let (x_left, x_right) = (bounds.min()[0], bounds.max()[0]);
    if let Some(r) = input.rest {
        for (i, row) in r.species.iter().enumerate() {
            let c = species_color(i);
            // A species whose concentrations change in the run gets its reversal potential
            // drawn along time; the others keep the file's value as a horizontal line.
            // Before a run (nothing shown yet) it starts as the file's value across the axis;
            // after the shown part it goes on at its last value, so it spans the whole axis.
            let name = format!("E {}", row.name);
            let shown = input.trace.map_or(0, |t| input.shown_len.min(t.len()));
            let along =
                input.derived.reversal_mv.get(i).filter(|col| {
                    input.derived.varying.get(i) == Some(&true) && shown > 0 && col.len() >= shown
                });
            let line_at = match (along, input.trace) {
                (Some(col), Some(trace)) => {
                    let mut points = series_points(lines, pui, input, col, &name).unwrap_or_default();
                    let last = col[..shown].iter().rev().find(|e| e.is_finite()).copied();
                    pui.line(
                        Line::new(name.clone(), points.clone())
                            .color(c)
                            .width(1.5 * k)
                            .style(LineStyle::dashed_loose()),
                    );
                    let t_last = trace.t_ms[shown - 1];
                    let end = x_right.max(input.scenario.run.duration_ms);
                    if let Some(e) = last
                        && end > t_last
                    {
                        pui.line(
                            Line::new(name.clone(), vec![[t_last, e], [end, e]])
                                .color(c)
                                .width(1.5 * k)
                                .style(LineStyle::dashed_loose()),
                        );
                        points.push([t_last, e]);
                        points.push([end, e]);
                    }
                    spans.push((name.clone(), trace.t_ms[0], end));
                    if let Some(e) = last {
                        let text = with_notes(format!("E {} {e:+.1} mV", row.name), notes.species.get(&i));
                        labels.push((text, points, c, false));
                    }
                    None
                }
                _ => row.reversal_mv,
            };
            if let Some(e) = line_at {
                spans.push((name.clone(), f64::NEG_INFINITY, f64::INFINITY));
                pui.hline(
                    HLine::new(format!("E {}", row.name), e)
                        .color(c)
                        .width(1.5 * k)
                        .style(LineStyle::dashed_loose()),
                );
                labels.push((
                    with_notes(format!("E {} {e:+.1} mV", row.name), notes.species.get(&i)),
                    vec![[x_left, e], [x_right, e]],
                    c,
                    false,
                ));
            }
        }
        let shown = input.trace.map_or(0, |t| input.shown_len.min(t.len()));
        let ghk_along = (shown > 0 && input.derived.ghk_mv.len() >= shown)
            .then_some(&input.derived.ghk_mv)
            .zip(input.trace);
        if let Some((col, trace)) = ghk_along {
            // The concentrations change in this run: the GHK potential follows them, and
            // after the shown part stays at its last value to the end of the axis.
            let c = neutral_color(dark);
            let mut points = series_points(lines, pui, input, col, "GHK potential").unwrap_or_default();
            let t_last = trace.t_ms[shown - 1];
            let end = x_right.max(input.scenario.run.duration_ms);
            let last = col[..shown].iter().rev().find(|e| e.is_finite()).copied();
            if let Some(e) = last
                && end > t_last
            {
                points.extend([[t_last, e], [end, e]]);
            }
            if let Some(v) = last
                && !points.is_empty()
            {
                pui.line(
                    Line::new("GHK potential", points.clone())
                        .color(c)
                        .width(1.2 * k)
                        .style(LineStyle::dotted_loose()),
                );
                // Its value at the end, so tried from the right end first, where the line has it.
                let text = with_notes(format!("GHK {v:+.1} mV"), Some(&notes.ghk));
                labels.push((text, points, c, false));
            }
        } else if let Ok(v) = r.ghk_mv {
            let c = neutral_color(dark);
            pui.hline(
                HLine::new("GHK potential", v)
                    .color(c)
                    .width(1.2 * k)
                    .style(LineStyle::dotted_loose()),
            );
            let text = with_notes(format!("GHK {v:+.1} mV"), Some(&notes.ghk));
            labels.push((text, vec![[x_left, v], [x_right, v]], c, true));
        }
    }
    kept_lines(lines, pui, input.kept);
    family_lines(lines, pui, input, "v", |m| &m.v_mv);
    let clamped = !input.scenario.run.mode.is_current_clamp();
    if clamped && let Some(points) = series_points(lines, pui, input, &input.derived.command_mv, "command") {
        pui.line(
            Line::new("command", points.clone())
                .color(neutral_color(dark))
                .width(1.4 * k)
                .style(LineStyle::dashed_dense()),
        );
        traces.push(points);
    }
    if let Some(trace) = input.trace
        && let Some(points) = series_points(lines, pui, input, trace.v_mv(), "V")
    {
        pui.line(
            Line::new("V", points.clone())
                .color(potential_color(dark))
                .width(2.0 * k),
        );
        traces.push(points);
    }
    // What an amplifier would show (V plus the junction and reference offset in force), when
    // the cell and bath are solutions.
    if let Some(trace) = input.trace
        && let Some(offsets) = crate::solutions::recording_offsets(input.scenario)
    {
        let n = input.shown_len.min(trace.len());
        let recorded: Vec<f64> = trace.t_ms[..n]
            .iter()
            .zip(trace.v_mv())
            .map(|(t, v)| v + offsets.at(*t))
            .collect();
        if let Some(points) = series_points(lines, pui, input, &recorded, "V recorded") {
            pui.line(
                Line::new("V recorded", points.clone())
                    .color(potential_color(dark).gamma_multiply(0.6))
                    .width(1.5 * k)
                    .style(egui_plot::LineStyle::dashed_loose()),
            );
            traces.push(points);
        }
    }
    if input.shown_ms > 0.0 {
        pui.vline(
            VLine::new("now", input.shown_ms)
                .color(neutral_color(dark).gamma_multiply(0.5))
                .width(1.0 * k),
        );
    }
    Upper {
        spans,
        traces,
        bands,
        labels,
    }
}

/// The names of the visible kept traces (and of the run they are drawn over) in a box at the
/// upper plot's top left, under the event labels, in the window and in the exported picture alike.
fn kept_legend(ui: &mut Ui, plot: egui::Rect, kept: &[KeptTrace]) {
    if !kept.iter().any(|k| k.visible) {
        return;
    }
    let dark = ui.visuals().dark_mode;
    // Below the first row of event labels, which sit at the plot's top.
    let mut area = plot.shrink(6.0);
    area.min.y += 1.6 * ui.text_style_height(&egui::TextStyle::Body);
    let mut child = ui.new_child(
        egui::UiBuilder::new()
            .id_salt("kept legend")
            .max_rect(area)
            .layout(egui::Layout::top_down(egui::Align::Min)),
    );
    egui::Frame::popup(child.style())
        .multiply_with_opacity(0.85)
        .show(&mut child, |ui| {
            let entries = std::iter::once(("this run", potential_color(dark))).chain(
                kept.iter()
                    .filter(|k| k.visible)
                    .map(|k| (k.name.as_str(), k.color)),
            );
            // A narrow plot (large text at 1280×720) keeps most of its width for the traces.
            let style = if plot.width() < 480.0 {
                egui::TextStyle::Small
            } else {
                egui::TextStyle::Body
            };
            for (name, color) in entries {
                ui.horizontal(|ui| {
                    let h = ui.text_style_height(&style);
                    let (r, _) = ui.allocate_exact_size(egui::vec2(1.5 * h, h), egui::Sense::hover());
                    ui.painter()
                        .hline(r.x_range(), r.center().y, egui::Stroke::new(2.0, color));
                    ui.label(RichText::new(name).text_style(style.clone()));
                });
            }
        });
}

/// The visible kept traces, each thinned to the visible range like the live trace.
fn kept_lines(lines: &mut HashMap<String, Decimator>, pui: &mut PlotUi, kept: &[KeptTrace]) {
    let range = visible_t(pui);
    let cols = columns(pui);
    for k in kept.iter().filter(|k| k.visible) {
        let points = decimated(lines, &format!("kept/{}", k.id), &k.t_ms, &k.v_mv, range, cols);
        pui.line(Line::new(k.name.clone(), points).color(k.color).width(1.6));
    }
}

/// Draws the lower plot's lines with widths times `scale`, and lists them for its legend.
struct Pen {
    scale: f32,
    legend: Vec<LegendEntry>,
}

impl Pen {
    /// Draws `line` (when there is one) and adds it to the legend under `name`.
    fn draw<'a>(
        &mut self,
        pui: &mut PlotUi<'a>,
        line: Option<Line<'a>>,
        name: &str,
        color: Color32,
        width: f32,
        style: LineStyle,
    ) {
        let Some(line) = line else { return };
        let width = width * self.scale;
        pui.line(line.color(color).width(width).style(style));
        self.legend.push(LegendEntry {
            name: name.to_string(),
            color,
            width,
            style,
        });
    }
}

/// The relative volume, with the starting volume marked.
fn volume_items(lines: &mut HashMap<String, Decimator>, pui: &mut PlotUi, input: &PlotInput, pen: &mut Pen) {
    let dark = pui.ctx().global_style().visuals.dark_mode;
    pui.hline(
        HLine::new("start", 1.0)
            .color(neutral_color(dark))
            .width(1.0 * pen.scale)
            .style(LineStyle::dotted_loose()),
    );
    let line = series(lines, pui, input, &input.derived.volume_rel, "volume".into());
    pen.draw(pui, line, "volume", potential_color(dark), 2.0, LineStyle::Solid);
}

/// Each species' inside concentration, mM, in its colour.
fn concentration_items(
    lines: &mut HashMap<String, Decimator>,
    pui: &mut PlotUi,
    input: &PlotInput,
    pen: &mut Pen,
) {
    let d = input.derived;
    for (i, (name, col)) in d.species.iter().zip(&d.inside_mm).enumerate() {
        let line = series(lines, pui, input, col, format!("{name} inside"));
        pen.draw(
            pui,
            line,
            &format!("{name} inside"),
            species_color(i),
            1.8,
            LineStyle::Solid,
        );
    }
}

/// Inside osmolarity against the bath's: water moves while they differ.
fn osmolarity_items(
    lines: &mut HashMap<String, Decimator>,
    pui: &mut PlotUi,
    input: &PlotInput,
    pen: &mut Pen,
) {
    let dark = pui.ctx().global_style().visuals.dark_mode;
    let d = input.derived;
    let line = series(lines, pui, input, &d.osm_out_mosm, "bath".into());
    // Dashed as well as grey: in the dark theme both lines are light.
    pen.draw(
        pui,
        line,
        "bath",
        neutral_color(dark),
        3.0,
        LineStyle::dashed_loose(),
    );
    let line = series(lines, pui, input, &d.osm_in_mosm, "inside".into());
    pen.draw(pui, line, "inside", potential_color(dark), 2.0, LineStyle::Solid);
}

fn current_items(lines: &mut HashMap<String, Decimator>, pui: &mut PlotUi, input: &PlotInput, pen: &mut Pen) {
    let dark = pui.ctx().global_style().visuals.dark_mode;
    let d = input.derived;
    let runs = family_lines(lines, pui, input, "i", |m| &m.i_ua_per_cm2);
    pen.legend.extend(runs);
    if let crate::scenario::RunMode::VoltageClamp {
        series_resistance_mohm,
        ..
    } = input.scenario.run.mode
        && series_resistance_mohm > 0.0
    {
        let line = series(lines, pui, input, &d.clamp_ua_per_cm2, "I pipette".into());
        pen.draw(pui, line, "I pipette", neutral_color(dark), 2.0, LineStyle::Solid);
    }
    for (i, (name, col)) in d.species.iter().zip(&d.currents_ua_per_cm2).enumerate() {
        let label = format!("I {name}");
        let line = series(lines, pui, input, col, label.clone());
        pen.draw(pui, line, &label, species_color(i), 1.6, LineStyle::Solid);
    }
    if input.scenario.pump.is_some() {
        let line = series(lines, pui, input, &d.pump_ua_per_cm2, "I pump".into());
        pen.draw(
            pui,
            line,
            "I pump",
            neutral_color(dark),
            1.4,
            LineStyle::dashed_dense(),
        );
    }
    if input
        .scenario
        .protocol
        .iter()
        .any(|e| e.clamp_only() == Some(false))
    {
        let line = series(lines, pui, input, &d.inject_ua_per_cm2, "injected".into());
        pen.draw(
            pui,
            line,
            "injected",
            neutral_color(dark),
            1.4,
            LineStyle::dotted_dense(),
        );
    }
    let line = series(lines, pui, input, &d.net_ua_per_cm2, "I net".into());
    pen.draw(pui, line, "I net", potential_color(dark), 2.0, LineStyle::Solid);
    pui.hline(
        HLine::new("", 0.0)
            .color(neutral_color(dark).gamma_multiply(0.4))
            .width(0.8 * pen.scale),
    );
}

fn permeability_items(
    lines: &mut HashMap<String, Decimator>,
    pui: &mut PlotUi,
    input: &PlotInput,
    pen: &mut Pen,
) {
    let d = input.derived;
    for (i, (name, col)) in d.species.iter().zip(&d.log10_p).enumerate() {
        let label = format!("P {name}");
        let line = series(lines, pui, input, col, label.clone());
        pen.draw(pui, line, &label, species_color(i), 1.6, LineStyle::Solid);
    }
}

/// Every gate's open fraction, named by channel and letter ("fast sodium: h (inactivation)");
/// the gates of one channel share its species' hue in different shades and dash patterns.
fn gate_items(lines: &mut HashMap<String, Decimator>, pui: &mut PlotUi, input: &PlotInput, pen: &mut Pen) {
    if input.scenario.channels.is_empty() {
        let b = pui.plot_bounds();
        let centre = PlotPoint::new((b.min()[0] + b.max()[0]) / 2.0, 0.5);
        pui.text(Text::new(
            "",
            centre,
            RichText::new("No gated channels in this scenario").italics(),
        ));
        return;
    }
    let Some(trace) = input.trace else { return };
    let text = pui.ctx().global_style().visuals.text_color();
    let styles = [
        LineStyle::Solid,
        LineStyle::dashed_loose(),
        LineStyle::dotted_loose(),
    ];
    let mut k = 0;
    for ch in &input.scenario.channels {
        let base = input
            .scenario
            .species_index(&ch.species)
            .map_or(Color32::GRAY, species_color);
        for (j, gate) in ch.gates.iter().enumerate() {
            if input.gate_names.get(k).is_none() {
                return;
            }
            let Some(col) = trace.columns.get(1 + k) else {
                return;
            };
            let name = plot_labels::gate_name(&ch.label, &gate.kinetics, j);
            let color = plot_labels::gate_color(base, j, text);
            let line = series(lines, pui, input, col, name.clone());
            pen.draw(pui, line, &name, color, 1.6, styles[j % styles.len()]);
            k += 1;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn simultaneous_events_share_one_label_and_bath_exchanges_stay_short() {
        let mut s = Scenario::new_default();
        s.run.duration_ms = 400.0;
        s.protocol = vec![
            Event::BathChange {
                species: "Na+".into(),
                outside_mm: 100.0,
                at_ms: 100.0,
                lag_ms: 10.0,
            },
            Event::BathChange {
                species: "K+".into(),
                outside_mm: 45.0,
                at_ms: 100.0,
                lag_ms: 10.0,
            },
            Event::Inject {
                amplitude_ua_per_cm2: 1.0,
                from_ms: 200.0,
                until_ms: 210.0,
            },
        ];
        let b = bands(&s);
        assert_eq!(b.len(), 3);
        assert_eq!(
            (b[0].from_ms, b[0].until_ms, b[0].label.as_str()),
            (100.0, 130.0, "1 + 2")
        );
        assert_eq!(b[1].label, "");
        assert_eq!(b[2].label, "3. 1 µA/cm²");
    }
}

/// Grid steps of 1, 2 or 5 × 10ⁿ giving about five labelled lines over the visible range, with
/// finer unlabelled lines between. The default base-10 spacer jumps from 10 to 100 mV, which left
/// a potential axis of −100..+60 mV with a single label.
pub fn nice_steps(input: egui_plot::GridInput) -> [f64; 3] {
    steps_for_labels(input, 5.0)
}

/// As [`nice_steps`] with two or three labels: for the low lower plot, whose five labels would
/// stand closer than their text is high in large text or presentation, and egui_plot then
/// leaves the axis without a number.
pub fn few_steps(input: egui_plot::GridInput) -> [f64; 3] {
    steps_for_labels(input, 2.0)
}

fn steps_for_labels(input: egui_plot::GridInput, labels: f64) -> [f64; 3] {
    let span = (input.bounds.1 - input.bounds.0).abs().max(f64::MIN_POSITIVE);
    let raw = span / labels;
    let decade = 10f64.powf(raw.log10().floor());
    let mantissa = [1.0, 2.0, 5.0, 10.0]
        .into_iter()
        .find(|&m| m * decade >= raw)
        .unwrap_or(10.0);
    // Finer steps stay on the 1-2-5 ladder (never 2.5) so every label is short and exact.
    let (mid, fine) = match mantissa as u32 {
        2 => (1.0, 0.2),
        5 => (1.0, 0.5),
        10 => (5.0, 1.0),
        _ => (0.5, 0.1),
    };
    [fine * decade, mid * decade, mantissa * decade]
}

/// Axis labels with as many decimals as the step of their grid line needs (0.5 → one decimal),
/// where egui_plot's default rounds the logarithm and prints a 0.5 step as "0" and "1".
pub fn nice_label(mark: egui_plot::GridMark, _range: &std::ops::RangeInclusive<f64>) -> String {
    let decimals = (-(mark.step_size.log10() + 1e-9).floor()).max(0.0) as usize;
    format!("{:.*}", decimals, mark.value)
}

#[cfg(test)]
mod nice_steps_tests {
    use super::nice_steps;

    #[test]
    fn steps_are_one_two_five_and_give_about_five_labels() {
        let steps = |lo, hi| {
            nice_steps(egui_plot::GridInput {
                bounds: (lo, hi),
                base_step_size: 0.1,
            })
        };
        assert_eq!(steps(-100.0, 60.0)[2], 50.0);
        assert_eq!(steps(0.0, 250.0)[2], 50.0);
        assert_eq!(steps(0.0, 1000.0)[2], 200.0);
        assert_eq!(steps(-0.02, 1.02)[2], 0.5);
        assert_eq!(steps(-0.9, 0.9), [0.05, 0.1, 0.5]);
        assert_eq!(steps(0.0, 9.0), [0.2, 1.0, 2.0]);
        assert_eq!(steps(0.0, 0.4), [0.01, 0.05, 0.1]);
    }

    #[test]
    fn labels_keep_the_decimals_their_step_needs() {
        let label =
            |value, step_size| super::nice_label(egui_plot::GridMark { value, step_size }, &(0.0..=1.0));
        assert_eq!(label(0.5, 0.5), "0.5");
        assert_eq!(label(-50.0, 50.0), "-50");
        assert_eq!(label(0.05, 0.05), "0.05");
        assert_eq!(label(1.0, 1.0), "1");
    }
}
