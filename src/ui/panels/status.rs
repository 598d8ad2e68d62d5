//! The status line along the bottom: present time and potential, solver speed, frame time, and
//! any warning or notice.

use egui::{RichText, Ui};

/// What the status line reports.
pub struct StatusInfo<'a> {
    pub shown_ms: f64,
    pub duration_ms: f64,
    pub v_mv: Option<f64>,
    pub steps_per_second: f64,
    pub frame_ms: f64,
    pub running: bool,
    pub finished: bool,
    /// Scenario warnings, the run's error, a refused edit: most important first.
    pub warnings: &'a [String],
    pub notice: Option<&'a str>,
}

pub fn show(ui: &mut Ui, info: &StatusInfo) {
    // Wrapped, so a long warning goes on a second line instead of past the window's edge.
    ui.horizontal_wrapped(|ui| {
        let state = if info.running {
            "running"
        } else if info.finished {
            "finished"
        } else if info.shown_ms > 0.0 {
            "paused"
        } else {
            "ready"
        };
        ui.label(RichText::new(state).strong());
        ui.separator();
        let unit = crate::ui::time::TimeUnit::for_duration(info.duration_ms);
        ui.monospace(format!(
            "t = {} of {}",
            unit.format(info.shown_ms),
            unit.format_short(info.duration_ms)
        ));
        ui.separator();
        let v = info
            .v_mv
            .map_or_else(|| "—".to_string(), |v| format!("{v:+.2} mV"));
        ui.monospace(format!("V = {v}"));
        ui.separator();
        ui.monospace(format!("{} steps/s", group_thousands(info.steps_per_second)));
        ui.separator();
        ui.monospace(format!("frame {:.1} ms", info.frame_ms))
            .on_hover_text("Time spent on the last frame");
        if let Some(n) = info.notice {
            ui.separator();
            ui.label(RichText::new(n).color(ui.visuals().warn_fg_color));
        }
        for w in info.warnings {
            ui.separator();
            ui.label(RichText::new(w.as_str()).color(ui.visuals().warn_fg_color));
        }
    });
}

/// `12345.6` → `"12 346"`: thin groups are easier to read at a glance than bare digits.
pub fn group_thousands(x: f64) -> String {
    let n = x.max(0.0).round() as u64;
    let digits = n.to_string();
    let mut out = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(' ');
        }
        out.push(c);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thousands_are_grouped() {
        assert_eq!(group_thousands(0.0), "0");
        assert_eq!(group_thousands(999.4), "999");
        assert_eq!(group_thousands(12345.6), "12 346");
        assert_eq!(group_thousands(1_000_000.0), "1 000 000");
    }
}
