//! Time as a user reads it. The engine and the plots keep time in ms; what is shown (axis
//! ticks, hover text, the status line, readouts) uses the unit that suits the run's length, so
//! a quarter-second run reads in ms, a minute in s and ten minutes in min, never "60 000 ms".

use egui_plot::{GridInput, GridMark, HoverPosition};

use crate::ui::command::Command;
use crate::ui::state::prefs::{AUTO_RUN_S, Speed};

/// The unit a run's times are shown in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum TimeUnit {
    #[default]
    Ms,
    S,
    Min,
}

/// Runs up to this long read in ms; a two-second axis of 0–2000 ms is still easy to read.
const MS_UP_TO_MS: f64 = 2_000.0;
/// Runs up to this long read in s (180 s), longer ones in min.
const S_UP_TO_MS: f64 = 180_000.0;

impl TimeUnit {
    /// The unit for a run lasting `duration_ms`.
    pub fn for_duration(duration_ms: f64) -> TimeUnit {
        if duration_ms.is_nan() || duration_ms <= MS_UP_TO_MS {
            TimeUnit::Ms
        } else if duration_ms <= S_UP_TO_MS {
            TimeUnit::S
        } else {
            TimeUnit::Min
        }
    }

    /// Milliseconds in one of this unit.
    pub fn ms(self) -> f64 {
        match self {
            TimeUnit::Ms => 1.0,
            TimeUnit::S => 1_000.0,
            TimeUnit::Min => 60_000.0,
        }
    }

    pub fn symbol(self) -> &'static str {
        match self {
            TimeUnit::Ms => "ms",
            TimeUnit::S => "s",
            TimeUnit::Min => "min",
        }
    }

    /// `t_ms` in this unit.
    pub fn value(self, t_ms: f64) -> f64 {
        t_ms / self.ms()
    }

    /// `t_ms` with its unit and the decimals this unit needs for a readout ("12.3 ms",
    /// "41.25 s", "3.50 min").
    pub fn format(self, t_ms: f64) -> String {
        let v = self.value(t_ms);
        match self {
            TimeUnit::Ms => format!("{v:.1} ms"),
            TimeUnit::S => format!("{v:.2} s"),
            TimeUnit::Min => format!("{v:.2} min"),
        }
    }

    /// A length of time written as briefly as it allows ("250 ms", "60 s", "10 min").
    pub fn format_short(self, t_ms: f64) -> String {
        format!(
            "{} {}",
            crate::report::csv::number(self.value(t_ms)),
            self.symbol()
        )
    }

    /// The time axis' title.
    pub fn axis_title(self) -> String {
        format!("Time ({})", self.symbol())
    }

    /// The hover text of a time plot: the nearest item's name, the time in this unit and the
    /// value with its unit.
    pub fn hover_label(self, h: &HoverPosition, y_unit: &str) -> Option<String> {
        self.hover_text(h, |y| format!("{y:.3} {y_unit}"))
    }

    /// As [`TimeUnit::hover_label`] with the value written by `y_text` (a log axis writes the
    /// value its logarithm stands for).
    pub fn hover_text(self, h: &HoverPosition, y_text: impl Fn(f64) -> String) -> Option<String> {
        let (head, p) = hover_parts(h);
        let digits = match self {
            TimeUnit::Ms => 2,
            TimeUnit::S | TimeUnit::Min => 3,
        };
        Some(format!(
            "{head}{:.*} {}\n{}",
            digits,
            self.value(p.x),
            self.symbol(),
            y_text(p.y)
        ))
    }

    /// Grid lines for a time axis in ms whose labels read in this unit: the 1-2-5 steps are
    /// chosen in the unit, so a ten-minute axis has lines every 2 min, not every 100 000 ms.
    pub fn grid_spacer(self) -> impl Fn(GridInput) -> Vec<GridMark> + 'static {
        let k = self.ms();
        egui_plot::uniform_grid_spacer(move |input: GridInput| {
            let scaled = GridInput {
                bounds: (input.bounds.0 / k, input.bounds.1 / k),
                base_step_size: input.base_step_size / k,
            };
            crate::ui::panels::plots::nice_steps(scaled).map(|s| s * k)
        })
    }

    /// A tick label of a time axis in ms, written in this unit.
    pub fn tick_label(self, mark: GridMark) -> String {
        let k = self.ms();
        crate::ui::panels::plots::nice_label(
            GridMark {
                value: mark.value / k,
                step_size: mark.step_size / k,
            },
            &(0.0..=1.0),
        )
    }
}

/// The speed box: "auto (20 s/s)" and the fixed speeds, as wide as its text needs (a fixed
/// width clipped "auto (2 min/s)" and large text).
pub fn speed_box(
    ui: &mut egui::Ui,
    id_salt: &str,
    speed: Speed,
    duration_ms: f64,
    commands: &mut Vec<Command>,
) -> egui::Response {
    let shown = speed.label_for(duration_ms);
    let widest = Speed::CHOICES
        .iter()
        .map(|s| s.label_for(duration_ms))
        .chain(std::iter::once(shown.clone()))
        .map(|t| {
            egui::WidgetText::from(t)
                .into_galley(
                    ui,
                    Some(egui::TextWrapMode::Extend),
                    f32::INFINITY,
                    egui::TextStyle::Button,
                )
                .size()
                .x
        })
        .fold(0.0, f32::max);
    let width =
        widest + ui.spacing().icon_width + ui.spacing().item_spacing.x + 2.0 * ui.spacing().button_padding.x;
    egui::ComboBox::from_id_salt(id_salt)
        .selected_text(shown)
        .width(width)
        // Every choice in view, with no scrolling to reach the last.
        .height(f32::INFINITY)
        .show_ui(ui, |ui| {
            for s in Speed::CHOICES {
                if ui
                    .selectable_label(s == speed, s.label_for(duration_ms))
                    .clicked()
                    && s != speed
                {
                    commands.push(Command::SetSpeed(s));
                }
            }
        })
        .response
        .on_hover_text(format!(
            "Simulated time per second of wall time. Auto shows the whole run ({}) in about {} s.",
            TimeUnit::for_duration(duration_ms).format_short(duration_ms),
            AUTO_RUN_S
        ))
}

/// What every plot's hover text starts from: the nearest item's name on a line of its own (empty
/// away from any item) and the pointer's position.
pub fn hover_parts(h: &HoverPosition) -> (String, egui_plot::PlotPoint) {
    let (name, p) = match h {
        HoverPosition::NearDataPoint {
            plot_name, position, ..
        } => (*plot_name, *position),
        HoverPosition::Elsewhere { position } => ("", *position),
    };
    let head = if name.is_empty() {
        String::new()
    } else {
        format!("{name}\n")
    };
    (head, p)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_unit_follows_the_run_length() {
        assert_eq!(TimeUnit::for_duration(250.0), TimeUnit::Ms);
        assert_eq!(TimeUnit::for_duration(2_000.0), TimeUnit::Ms);
        assert_eq!(TimeUnit::for_duration(60_000.0), TimeUnit::S);
        assert_eq!(TimeUnit::for_duration(600_000.0), TimeUnit::Min);
        assert_eq!(TimeUnit::S.format(41_250.0), "41.25 s");
        assert_eq!(TimeUnit::Min.format_short(600_000.0), "10 min");
    }

    #[test]
    fn hover_text_reads_time_in_the_axis_unit() {
        let h = HoverPosition::Elsewhere {
            position: egui_plot::PlotPoint::new(90_000.0, -61.25),
        };
        assert_eq!(
            TimeUnit::Min.hover_label(&h, "mV").as_deref(),
            Some("1.500 min\n-61.250 mV")
        );
        assert_eq!(
            TimeUnit::Ms.hover_label(&h, "mV").as_deref(),
            Some("90000.00 ms\n-61.250 mV")
        );
    }

    #[test]
    fn a_log_axis_hover_writes_its_value_and_the_time_in_the_axis_unit() {
        // The permeability plot of a minute-long run: the time reads in s like its axis, the
        // value as the permeability its logarithm stands for.
        let h = HoverPosition::Elsewhere {
            position: egui_plot::PlotPoint::new(1500.0, -7.0),
        };
        assert_eq!(
            TimeUnit::S
                .hover_text(&h, |y| format!("{:.3e} cm/s", 10f64.powf(y)))
                .as_deref(),
            Some("1.500 s\n1.000e-7 cm/s")
        );
    }

    #[test]
    fn ten_minutes_get_grid_lines_on_whole_minutes() {
        let spacer = TimeUnit::Min.grid_spacer();
        let marks = spacer(GridInput {
            bounds: (0.0, 600_000.0),
            base_step_size: 1.0,
        });
        let labelled: Vec<String> = marks
            .iter()
            .filter(|m| m.step_size >= 120_000.0 - 1e-6)
            .map(|m| TimeUnit::Min.tick_label(*m))
            .collect();
        // egui_plot leaves out a line on the upper bound itself.
        assert_eq!(labelled, ["0", "2", "4", "6", "8"]);
    }
}
