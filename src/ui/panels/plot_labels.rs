//! What the plots say and how large: the text sizes and line widths at the desk and in
//! presentation, the labels of reversal lines and protocol bands (placed where they cover no
//! trace and no other label, and never cut), the legend of the lower plot (a row outside the
//! plot area, so it never covers the data), user-facing names of gates, and the tick labels of
//! the logarithmic permeability axis.

use egui::{Color32, FontId, Pos2, Rect, Stroke, Ui, pos2, vec2};
use egui_plot::{GridInput, GridMark, LineStyle};

use crate::scenario::Kinetics;

/// Text sizes (points) and line widths of the plots.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlotLook {
    /// Tick labels and axis titles.
    pub tick_pt: f32,
    /// Labels of lines and protocol bands.
    pub label_pt: f32,
    /// The lower plot's legend.
    pub legend_pt: f32,
    /// Every line width is multiplied by this.
    pub line_scale: f32,
}

impl PlotLook {
    /// At the desk: the window's body text for axes, labels a little smaller.
    pub const DESK: PlotLook = PlotLook {
        tick_pt: 14.0,
        label_pt: 13.0,
        legend_pt: 13.0,
        line_scale: 1.0,
    };
    /// Presentation lays the window out as if it were 1000×540 points and scales that to the
    /// screen (×1.3 at 1280×720, ×1.9 at 1920×1080). Axis text and legends of 20 points and
    /// line labels of 22 points are 1/27 and 1/25 of that height (26–29 px on a 720-line
    /// projector): text on a projected slide is kept above about 1/30 of the image height to be
    /// read from the back of a room (common practice). Lines are drawn twice as wide (the
    /// membrane potential 4 points, currents 3.2, reversal lines 3).
    pub const PRESENTATION: PlotLook = PlotLook {
        tick_pt: 20.0,
        label_pt: 22.0,
        legend_pt: 20.0,
        line_scale: 2.0,
    };

    /// Sets the text styles egui_plot draws tick labels and axis titles with (`Body`) for the
    /// plots drawn in `ui`.
    pub fn apply(&self, ui: &mut Ui) {
        let style = ui.style_mut();
        style
            .text_styles
            .insert(egui::TextStyle::Body, FontId::proportional(self.tick_pt));
        style
            .text_styles
            .insert(egui::TextStyle::Small, FontId::proportional(self.label_pt));
    }
}

/// A label tied to a line of the plot: placed just above or below the line, as far right as
/// it can be without covering a trace or another label.
pub struct LineLabel {
    pub text: String,
    pub color: Color32,
    /// The line in screen points, left to right (two points for a horizontal line).
    pub line: Vec<Pos2>,
    /// Try from the left end first instead of the right.
    pub from_left: bool,
}

/// A label as drawn: its text and where, in points.
#[derive(Debug, Clone, PartialEq)]
pub struct Placed {
    pub text: String,
    pub rect: Rect,
    pub size_pt: f32,
    /// Whether it found a place that covers no trace and no other label.
    pub clear: bool,
}

/// Whether the segment `a`–`b` crosses or touches `r` (Liang–Barsky clipping).
fn segment_hits(a: Pos2, b: Pos2, r: Rect) -> bool {
    let d = b - a;
    let (mut t0, mut t1) = (0.0_f32, 1.0_f32);
    for (p, q) in [
        (-d.x, a.x - r.min.x),
        (d.x, r.max.x - a.x),
        (-d.y, a.y - r.min.y),
        (d.y, r.max.y - a.y),
    ] {
        if p == 0.0 {
            if q < 0.0 {
                return false;
            }
        } else {
            let t = q / p;
            if p < 0.0 {
                t0 = t0.max(t);
            } else {
                t1 = t1.min(t);
            }
            if t0 > t1 {
                return false;
            }
        }
    }
    true
}

/// Whether any of the polylines passes through `r`.
pub fn covers(lines: &[Vec<Pos2>], r: Rect) -> bool {
    lines
        .iter()
        .any(|l| l.windows(2).any(|w| segment_hits(w[0], w[1], r)) || l.iter().any(|p| r.contains(*p)))
}

/// The screen y of a polyline at `x` (its nearest end outside it).
fn y_at(line: &[Pos2], x: f32) -> Option<f32> {
    let first = line.first()?;
    if x <= first.x {
        return Some(first.y);
    }
    for w in line.windows(2) {
        if x <= w[1].x {
            let f = if w[1].x > w[0].x {
                (x - w[0].x) / (w[1].x - w[0].x)
            } else {
                1.0
            };
            return Some(w[0].y + f * (w[1].y - w[0].y));
        }
    }
    line.last().map(|p| p.y)
}

/// Where labels go: each label at the first of its candidate places that lies in the frame and
/// covers no trace and no label placed before it.
pub struct Placer {
    frame: Rect,
    obstacles: Vec<Vec<Pos2>>,
    pub placed: Vec<Placed>,
    font: FontId,
}

impl Placer {
    pub fn new(frame: Rect, obstacles: Vec<Vec<Pos2>>, size_pt: f32) -> Self {
        Placer {
            frame,
            obstacles,
            placed: Vec::new(),
            font: FontId::proportional(size_pt),
        }
    }

    fn free(&self, r: Rect) -> bool {
        self.frame.contains_rect(r)
            && !covers(&self.obstacles, r.expand(1.0))
            && !self.placed.iter().any(|p| p.rect.intersects(r))
    }

    fn take(&mut self, text: String, candidates: impl Iterator<Item = Rect>) -> Rect {
        let candidates: Vec<Rect> = candidates.collect();
        if let Some(&r) = candidates.iter().find(|r| self.free(**r)) {
            self.placed.push(Placed {
                text,
                rect: r,
                size_pt: self.font.size,
                clear: true,
            });
            return r;
        }
        // Nowhere clear (spikes across the whole plot): inside the plot, apart from the other
        // labels, over as few trace segments as can be; the first few dozen places are enough.
        let cost = |r: Rect| {
            self.obstacles
                .iter()
                .flat_map(|l| l.windows(2))
                .filter(|w| segment_hits(w[0], w[1], r))
                .count()
        };
        let r = candidates
            .iter()
            .filter(|r| self.frame.contains_rect(**r) && !self.placed.iter().any(|p| p.rect.intersects(**r)))
            .take(48)
            .min_by_key(|r| cost(**r))
            .or(candidates.first())
            .copied()
            .unwrap_or(Rect::NOTHING);
        self.placed.push(Placed {
            text,
            rect: r,
            size_pt: self.font.size,
            clear: false,
        });
        r
    }

    fn size(&self, ui: &Ui, text: &str) -> egui::Vec2 {
        let g = ui
            .painter()
            .layout_no_wrap(text.to_string(), self.font.clone(), Color32::WHITE);
        g.size() + vec2(6.0, 2.0)
    }

    /// Places and paints the label of a line.
    pub fn line_label(&mut self, ui: &Ui, label: &LineLabel) {
        let size = self.size(ui, &label.text);
        let frame = self.frame;
        let room = (frame.width() - size.x - 8.0).max(0.0);
        const STEPS: usize = 16;
        let line = &label.line;
        // Just above or below the line first, anywhere along it; where traces crowd the line
        // (a membrane sitting on E K+), further from it, joined to it by a leader.
        let mut candidates = Vec::new();
        for gap in [3.0, 0.5, 1.0, 2.0, 3.0, 4.0, 6.0] {
            let gap = if candidates.is_empty() {
                gap
            } else {
                3.0 + gap * size.y
            };
            for k in 0..STEPS {
                let f = k as f32 / (STEPS - 1) as f32;
                let left = if label.from_left {
                    frame.left() + 4.0 + f * room
                } else {
                    frame.right() - 4.0 - size.x - f * room
                };
                let y = y_at(line, left + size.x / 2.0).unwrap_or(frame.center().y);
                candidates.push((Rect::from_min_size(pos2(left, y - gap - size.y), size), y));
                candidates.push((Rect::from_min_size(pos2(left, y + gap), size), y));
            }
        }
        let r = self.take(label.text.clone(), candidates.iter().map(|c| c.0));
        if let Some(&(_, y)) = candidates.iter().find(|c| c.0 == r) {
            let x = r.center().x;
            let (near, far) = if r.bottom() <= y {
                (r.bottom(), y)
            } else {
                (r.top(), y)
            };
            if (far - near).abs() > 4.0 {
                ui.painter()
                    .with_clip_rect(frame)
                    .line_segment([pos2(x, near), pos2(x, far)], Stroke::new(1.0, label.color));
            }
        }
        self.paint(ui, r, &label.text, label.color);
    }

    /// Places and paints the label of a protocol band starting at screen `x`: at the top of
    /// the plot, or in a lower row, or at the bottom, whichever covers nothing.
    pub fn band_label(&mut self, ui: &Ui, x: f32, text: &str, color: Color32) {
        let size = self.size(ui, text);
        let frame = self.frame;
        let left = (x + 2.0)
            .min(frame.right() - size.x - 2.0)
            .max(frame.left() + 2.0);
        let rows = (0..3)
            .map(|r| frame.top() + 2.0 + r as f32 * (size.y + 2.0))
            .chain((0..2).map(|r| frame.bottom() - 2.0 - (r + 1) as f32 * (size.y + 2.0)));
        let candidates: Vec<Rect> = rows
            .map(|top| Rect::from_min_size(pos2(left, top), size))
            .collect();
        let r = self.take(text.to_string(), candidates.into_iter());
        self.paint(ui, r, text, color);
    }

    fn paint(&self, ui: &Ui, r: Rect, text: &str, color: Color32) {
        let painter = ui.painter().with_clip_rect(self.frame);
        // Nearly opaque: where no clear place exists (a train of spikes), a trace under the
        // label showed through a lighter plate and crossed its text.
        let bg = ui.visuals().extreme_bg_color.gamma_multiply(0.94);
        painter.rect_filled(r, 3.0, bg);
        painter.text(
            r.left_center() + vec2(3.0, 0.0),
            egui::Align2::LEFT_CENTER,
            text,
            self.font.clone(),
            color,
        );
    }
}

/// One entry of the lower plot's legend.
#[derive(Debug, Clone, PartialEq)]
pub struct LegendEntry {
    pub name: String,
    pub color: Color32,
    pub width: f32,
    pub style: LineStyle,
}

/// The legend as a wrapped row of line samples and names, drawn outside the plot area.
/// Returns the rectangle it took.
pub fn legend_row(ui: &mut Ui, entries: &[LegendEntry], look: PlotLook) -> Rect {
    let font = FontId::proportional(look.legend_pt);
    ui.horizontal_wrapped(|ui| {
        for e in entries {
            // The sample and the name are one item, so a wrap never parts them (or the name).
            let galley = ui.painter().layout_no_wrap(e.name.clone(), font.clone(), e.color);
            let sample_w = look.legend_pt * 1.6;
            let gap = look.legend_pt * 0.3;
            let size = vec2(sample_w + gap + galley.size().x, galley.size().y);
            let (rect, _) = ui.allocate_exact_size(size, egui::Sense::hover());
            let y = rect.center().y;
            let stroke = Stroke::new(e.width.min(4.0), e.color);
            let painter = ui.painter();
            match e.style {
                LineStyle::Solid => {
                    painter.line_segment([pos2(rect.left(), y), pos2(rect.left() + sample_w, y)], stroke);
                }
                _ => {
                    let dash = sample_w / 5.0;
                    for k in [0.0, 2.0, 4.0] {
                        let a = rect.left() + k * dash;
                        painter.line_segment([pos2(a, y), pos2(a + dash, y)], stroke);
                    }
                }
            }
            painter.galley(pos2(rect.left() + sample_w + gap, rect.top()), galley, e.color);
            ui.add_space(look.legend_pt * 0.5);
        }
    })
    .response
    .rect
}

/// A gate as a user reads it: its channel, its letter and what it does ("fast sodium: h
/// (inactivation)"), never the CSV's column id.
pub fn gate_name(channel: &str, kinetics: &Kinetics, position: usize) -> String {
    match kinetics {
        Kinetics::HhSodiumActivation => format!("{channel}: m (activation)"),
        Kinetics::HhSodiumInactivation => format!("{channel}: h (inactivation)"),
        Kinetics::HhPotassiumActivation => format!("{channel}: n (activation)"),
        Kinetics::Boltzmann { slope_mv, .. } => {
            let what = if *slope_mv < 0.0 {
                "inactivation"
            } else {
                "activation"
            };
            format!("{channel}: gate {} ({what})", position + 1)
        }
    }
}

/// The colour of a channel's gate at `position`: the channel's colour for its first gate, then
/// shades of it toward the text colour, so that m and h of one channel differ without losing
/// which channel they belong to (their dash patterns differ as well).
pub fn gate_color(base: Color32, position: usize, text: Color32) -> Color32 {
    if position == 0 {
        return base;
    }
    let f = match position {
        1 => 0.5,
        _ => 0.75,
    };
    let mix = |a: u8, b: u8| (f32::from(a) * (1.0 - f) + f32::from(b) * f).round() as u8;
    Color32::from_rgb(
        mix(base.r(), text.r()),
        mix(base.g(), text.g()),
        mix(base.b(), text.b()),
    )
}

/// Grid lines of a log₁₀ axis: labelled at whole decades, with lines at 2× and 5× between
/// them; over less than a decade, the 1-2-5 steps of the linear axis.
pub fn log_steps(input: GridInput) -> Vec<GridMark> {
    let (lo, hi) = input.bounds;
    if !(lo.is_finite() && hi.is_finite()) || hi - lo < 1.0 {
        return egui_plot::uniform_grid_spacer(super::plots::nice_steps)(input);
    }
    let mut marks = Vec::new();
    let decade_step = ((hi - lo) / 6.0).ceil().max(1.0);
    let mut d = lo.floor();
    while d <= hi.ceil() {
        let whole = (d / decade_step).round() * decade_step == d;
        if d >= lo && d <= hi {
            marks.push(GridMark {
                value: d,
                step_size: if whole { decade_step } else { decade_step / 10.0 },
            });
        }
        if decade_step == 1.0 {
            for m in [2.0_f64, 5.0] {
                let v = d + m.log10();
                if v >= lo && v <= hi {
                    marks.push(GridMark {
                        value: v,
                        step_size: BETWEEN_DECADES,
                    });
                }
            }
        }
        d += 1.0;
    }
    marks
}

/// The step size that marks the 2× and 5× lines of a wide log axis (not on the 1-2-5 ladder of
/// the linear steps, so the labeller can tell them apart).
const BETWEEN_DECADES: f64 = 0.25;

/// A tick label of a log₁₀ axis as the power of ten it stands for: "10⁻⁷" at whole decades,
/// "3×10⁻⁸" between; lines between decades on a wide axis are left unlabelled.
pub fn power_of_ten_label(mark: GridMark, _range: &std::ops::RangeInclusive<f64>) -> String {
    let v = mark.value;
    let whole = (v - v.round()).abs() < 1e-9;
    if whole {
        return format!("10{}", superscript(v.round() as i64));
    }
    if mark.step_size == BETWEEN_DECADES {
        // A 2× or 5× line of a wide axis: the decades carry the labels.
        return String::new();
    }
    let exp = v.floor();
    let mantissa = 10f64.powf(v - exp);
    format!(
        "{}×10{}",
        crate::report::csv::number((mantissa * 10.0).round() / 10.0),
        superscript(exp as i64)
    )
}

fn superscript(n: i64) -> String {
    let digits = ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'];
    let mut s = String::new();
    if n < 0 {
        s.push('⁻');
    }
    for c in n.unsigned_abs().to_string().chars() {
        s.push(digits[c.to_digit(10).unwrap_or(0) as usize]);
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn segments_through_a_rectangle_are_found() {
        let r = Rect::from_min_max(pos2(10.0, 10.0), pos2(20.0, 20.0));
        // A spike's upstroke: both ends outside, the segment through it.
        assert!(segment_hits(pos2(15.0, 0.0), pos2(15.0, 30.0), r));
        assert!(!segment_hits(pos2(0.0, 0.0), pos2(30.0, 5.0), r));
        assert!(segment_hits(pos2(0.0, 0.0), pos2(30.0, 30.0), r));
        assert!(!segment_hits(pos2(25.0, 0.0), pos2(25.0, 30.0), r));
    }

    #[test]
    fn log_axis_ticks_read_as_powers_of_ten() {
        let mark = |value, step_size| power_of_ten_label(GridMark { value, step_size }, &(0.0..=1.0));
        assert_eq!(mark(-7.0, 1.0), "10⁻⁷");
        assert_eq!(mark(0.0, 1.0), "10⁰");
        assert_eq!(mark(-6.0 - 0.5, 0.5), "3.2×10⁻⁷");
        // A 2× line of a wide axis is left to the decades.
        assert_eq!(mark(-7.0 + 2f64.log10(), BETWEEN_DECADES), "");
        let steps = log_steps(GridInput {
            bounds: (-8.2, -5.8),
            base_step_size: 0.01,
        });
        let decades: Vec<f64> = steps
            .iter()
            .filter(|m| m.step_size == 1.0)
            .map(|m| m.value)
            .collect();
        assert_eq!(decades, [-8.0, -7.0, -6.0]);
    }

    #[test]
    fn gates_are_named_and_coloured_apart() {
        assert_eq!(
            gate_name("fast sodium", &Kinetics::HhSodiumInactivation, 1),
            "fast sodium: h (inactivation)"
        );
        let base = Color32::from_rgb(0, 114, 178);
        assert_ne!(
            gate_color(base, 0, Color32::BLACK),
            gate_color(base, 1, Color32::BLACK)
        );
    }
}
