//! The current–voltage view: each species' GHK current and the total membrane current against
//! voltage, with every gate, lagged input and concentration frozen at the run's present state,
//! and the potentials where the total current is zero marked.

use egui::{RichText, Ui};
use egui_plot::{Corner, HLine, Legend, Line, LineStyle, MarkerShape, Plot, PlotPoint, Points, Text, VLine};

use crate::physics::iv::{IvCurves, SpeciesCurve};
use crate::ui::state::runtime::Runtime;
use crate::ui::theme::{neutral_color, potential_color, species_color};

/// Points per curve.
const STEPS: usize = 360;

/// The core's curves at the run's present state, with what the view adds to them.
#[derive(Debug, Clone, PartialEq)]
pub struct Present {
    pub curves: IvCurves,
    /// The name of each species, by its index in the membrane.
    pub names: Vec<String>,
    /// The present membrane potential.
    pub present_mv: f64,
}

impl Present {
    /// The name of the species of `curve`.
    fn name(&self, curve: &SpeciesCurve) -> &str {
        self.names.get(curve.species).map_or("", String::as_str)
    }
}

/// The curves at the run's present state over `[lo, hi]` mV (the numbers come from the core,
/// [`crate::engine::Model::iv_curves`]; this view only names and draws them).
pub fn curves(rt: &Runtime, lo: f64, hi: f64) -> Option<Present> {
    let run = rt.run()?;
    let model = run.model();
    Some(Present {
        curves: model.iv_curves(run.state(), lo, hi, STEPS),
        names: model.species_names.clone(),
        present_mv: run.v_mv(),
    })
}

/// The voltage window: −120…+60 mV widened to the reversal potentials within ±150 mV.
fn window(rt: &Runtime, rest: Option<&crate::analysis::RestReport>) -> (f64, f64) {
    let (mut lo, mut hi) = (-120.0f64, 60.0f64);
    if let Some(r) = rest {
        for e in r
            .species
            .iter()
            .filter_map(|s| s.reversal_mv)
            .filter(|e| e.abs() <= 150.0)
        {
            lo = lo.min(e - 10.0);
            hi = hi.max(e + 10.0);
        }
    }
    if let Some(v) = rt
        .run()
        .map(|r| r.v_mv())
        .filter(|v| v.is_finite() && v.abs() <= 200.0)
    {
        lo = lo.min(v - 10.0);
        hi = hi.max(v + 10.0);
    }
    (lo, hi)
}

pub fn show(ui: &mut Ui, rt: &Runtime, rest: Option<&crate::analysis::RestReport>) {
    ui.label(RichText::new("Current–voltage now").strong())
        .on_hover_text(
            "GHK currents against voltage with gates, concentrations and agents frozen at the present state",
        );
    let (lo, hi) = window(rt, rest);
    let Some(present) = curves(rt, lo, hi) else {
        ui.label(rt.error.clone().unwrap_or_else(|| "No present state.".into()));
        return;
    };
    let c = &present.curves;
    let dark = ui.visuals().dark_mode;
    let zeros_text = if c.zeros_mv.is_empty() {
        "Total current: no zero crossing here".to_string()
    } else {
        format!(
            "Total current is zero at {}",
            c.zeros_mv
                .iter()
                .map(|v| format!("{v:+.1} mV"))
                .collect::<Vec<_>>()
                .join(", ")
        )
    };
    ui.label(RichText::new(zeros_text).small());
    Plot::new("iv plot")
        .default_x_bounds(lo, hi)
        .x_axis_label("Membrane potential (mV)")
        .y_axis_label("Current (µA/cm², outward +)")
        .y_axis_min_width(40.0)
        .legend(Legend::default().position(Corner::LeftTop).background_alpha(0.6))
        .label_formatter(|h| crate::ui::panels::plots::hover_label(h, "mV", "µA/cm²"))
        .show(ui, |pui| {
            pui.hline(
                HLine::new("", 0.0)
                    .color(neutral_color(dark).gamma_multiply(0.5))
                    .width(0.8),
            );
            pui.vline(
                VLine::new("present V", present.present_mv)
                    .color(neutral_color(dark))
                    .style(LineStyle::dashed_dense()),
            );
            for sc in &c.species {
                let (i, name) = (sc.species, present.name(sc));
                let pts: Vec<[f64; 2]> = c
                    .v_mv
                    .iter()
                    .zip(&sc.i_ua_per_cm2)
                    .map(|(v, y)| [*v, *y])
                    .collect();
                pui.line(
                    Line::new(format!("I {name}"), pts)
                        .color(species_color(i))
                        .width(1.6),
                );
                if let Some(e) = sc.reversal_mv.filter(|e| *e >= lo && *e <= hi) {
                    pui.points(
                        Points::new(format!("I {name}"), vec![[e, 0.0]])
                            .color(species_color(i))
                            .shape(MarkerShape::Diamond)
                            .radius(4.0),
                    );
                }
            }
            let pts: Vec<[f64; 2]> = c
                .v_mv
                .iter()
                .zip(&c.total_ua_per_cm2)
                .map(|(v, y)| [*v, *y])
                .collect();
            let total_color = potential_color(dark);
            pui.line(Line::new("I total", pts).color(total_color).width(2.4));
            if !c.zeros_mv.is_empty() {
                let z: Vec<[f64; 2]> = c.zeros_mv.iter().map(|v| [*v, 0.0]).collect();
                pui.points(
                    Points::new("I total", z)
                        .color(total_color)
                        .shape(MarkerShape::Circle)
                        .radius(5.0)
                        .filled(true),
                );
                for v in &c.zeros_mv {
                    pui.text(
                        Text::new(
                            "",
                            PlotPoint::new(*v, 0.0),
                            RichText::new(format!("{v:+.1}")).color(total_color).strong(),
                        )
                        .anchor(egui::Align2::CENTER_BOTTOM),
                    );
                }
            }
        });
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn at_rest_the_total_current_is_zero_at_the_resting_potential() {
        let s = crate::scenario::Valid::new_default();
        let rt = Runtime::new(&s);
        let rest = crate::analysis::rest_report(&s).ok().and_then(|r| r.resting_mv());
        let present = curves(&rt, -120.0, 100.0).expect("a present state");
        let c = &present.curves;
        assert_eq!(c.zeros_mv.len(), 1);
        let (zero, rest) = (c.zeros_mv[0], rest.expect("a resting potential"));
        // Without pump or channels the instantaneous and steady curves coincide.
        assert!((zero - rest).abs() < 1e-6, "{zero} vs {rest}");
        assert!((present.present_mv - rest).abs() < 1e-6);
        // Each species' curve crosses zero at its Nernst potential (model.md, GHK current).
        for sc in &c.species {
            let e = sc.reversal_mv.expect("every default species is permeant");
            let i = c.v_mv.iter().position(|v| *v > e).expect("inside the window");
            let curve = &sc.i_ua_per_cm2;
            assert!(curve[i - 1] <= 0.0 && curve[i] >= 0.0, "{}", present.name(sc));
        }
    }
}
