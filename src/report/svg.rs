//! A printable figure of V(t) as SVG (plotters' SVG backend, no system fonts): the trace, each
//! species' reversal potential as a labelled dashed line, the GHK potential, and the protocol's
//! events marked on the time axis.

use plotters::prelude::*;

use crate::analysis::rest_report;
use crate::engine::EngineError;
use crate::palette::{potential_rgb, species_rgb};
use crate::scenario::{Event, Scenario, Valid};

/// Everything the figure shows.
#[derive(Debug, Clone)]
pub struct Figure<'a> {
    pub title: String,
    pub t_ms: &'a [f64],
    pub v_mv: &'a [f64],
    /// Species name, its palette index and its reversal potential (None if undefined).
    pub reversals: Vec<(String, usize, Option<f64>)>,
    pub ghk_mv: Option<f64>,
    /// Label, start and end of each event, ms.
    pub events: Vec<(String, f64, f64)>,
    pub duration_ms: f64,
}

/// The figure of a run of `s`: its title, the trace `t_ms`/`v_mv`, each species' reversal
/// potential and the GHK potential at the scenario's starting conditions, and its events. The
/// command line's `run --svg` and the window's export both draw this, so they match.
pub fn figure_for<'a>(s: &Valid, t_ms: &'a [f64], v_mv: &'a [f64]) -> Result<Figure<'a>, EngineError> {
    let report = rest_report(s)?;
    Ok(Figure {
        title: s.title.clone(),
        t_ms,
        v_mv,
        reversals: report
            .species
            .iter()
            .enumerate()
            .map(|(i, r)| (r.name.clone(), i, r.reversal_mv))
            .collect(),
        ghk_mv: report.ghk_mv.ok(),
        events: event_spans(s),
        duration_ms: s.run.duration_ms,
    })
}

/// Events of a scenario as labelled time spans (an instantaneous bath change gets a thin band).
pub fn event_spans(s: &Scenario) -> Vec<(String, f64, f64)> {
    s.protocol
        .iter()
        .map(|e| {
            let (from, until) = e.span_ms();
            let end = until.unwrap_or(s.run.duration_ms).min(s.run.duration_ms);
            let label = match e {
                Event::PermeabilityScale { species, factor, .. } => format!("P({species}) ×{factor}"),
                Event::BathChange {
                    species, outside_mm, ..
                } => format!("bath {species} → {outside_mm} mM"),
                Event::Agent { label, dose_um, .. } => format!("{label} {dose_um} µM"),
                Event::Inject {
                    amplitude_ua_per_cm2, ..
                } => format!("inject {amplitude_ua_per_cm2} µA/cm²"),
                Event::InjectTrain {
                    amplitude_ua_per_cm2,
                    count,
                    ..
                } => {
                    format!("{count} × {amplitude_ua_per_cm2} µA/cm²")
                }
            };
            (
                label,
                from,
                if matches!(e, Event::BathChange { .. }) {
                    from
                } else {
                    end
                },
            )
        })
        .collect()
}

/// At most about `2·buckets` points that keep each bucket's minimum and maximum, so that a
/// long trace draws the same envelope with a small file.
fn thin(t: &[f64], v: &[f64], buckets: usize) -> Vec<(f64, f64)> {
    if t.len() <= 2 * buckets {
        return t.iter().copied().zip(v.iter().copied()).collect();
    }
    let per = t.len().div_ceil(buckets);
    let mut out = Vec::with_capacity(2 * buckets + 1);
    for (tc, vc) in t.chunks(per).zip(v.chunks(per)) {
        let (mut lo, mut hi) = (0, 0);
        for (i, x) in vc.iter().enumerate() {
            if *x < vc[lo] {
                lo = i;
            }
            if *x > vc[hi] {
                hi = i;
            }
        }
        let (a, b) = if lo <= hi { (lo, hi) } else { (hi, lo) };
        out.push((tc[a], vc[a]));
        if b != a {
            out.push((tc[b], vc[b]));
        }
    }
    out
}

fn rgb((r, g, b): (u8, u8, u8)) -> RGBColor {
    RGBColor(r, g, b)
}

/// Renders the figure as SVG text.
pub fn render(fig: &Figure) -> Result<String, String> {
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, (1000, 620)).into_drawing_area();
        draw(&root, fig).map_err(|e| format!("could not draw the figure: {e}"))?;
        root.present()
            .map_err(|e| format!("could not write the figure: {e}"))?;
    }
    Ok(out)
}

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, plotters::coord::Shift>,
    fig: &Figure,
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    root.fill(&WHITE)?;
    let t_end = fig
        .duration_ms
        .max(fig.t_ms.last().copied().unwrap_or(0.0))
        .max(1e-9);
    let mut lo = fig.v_mv.iter().copied().fold(f64::INFINITY, f64::min);
    let mut hi = fig.v_mv.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    // Reversal lines within a plausible window widen the axis; far-off ones are labelled at the edge.
    for v in fig.reversals.iter().filter_map(|r| r.2).chain(fig.ghk_mv) {
        if v.abs() <= 200.0 {
            lo = lo.min(v);
            hi = hi.max(v);
        }
    }
    if !lo.is_finite() || !hi.is_finite() {
        (lo, hi) = (-100.0, 50.0);
    }
    let pad = ((hi - lo) * 0.08).max(2.0);
    let (lo, hi) = (lo - pad, hi + pad);
    let mut chart = ChartBuilder::on(root)
        .caption(&fig.title, ("sans-serif", 24))
        .margin(16)
        .x_label_area_size(52)
        .y_label_area_size(72)
        .margin_right(150)
        .build_cartesian_2d(0.0..t_end, lo..hi)?;
    chart
        .configure_mesh()
        .x_desc("time (ms)")
        .y_desc("membrane potential (mV)")
        .axis_desc_style(("sans-serif", 18))
        .label_style(("sans-serif", 15))
        .light_line_style(RGBColor(235, 235, 235))
        .draw()?;
    // Events: shaded bands from their start to their end, with the label above.
    for (i, (label, from, until)) in fig.events.iter().enumerate() {
        let until = if until > from {
            *until
        } else {
            from + t_end * 0.003
        };
        let shade = RGBColor(120, 120, 120).mix(0.12);
        chart.draw_series(std::iter::once(Rectangle::new(
            [(*from, lo), (until, hi)],
            shade.filled(),
        )))?;
        let y = hi - (hi - lo) * (0.04 + 0.05 * (i % 4) as f64);
        chart.draw_series(std::iter::once(Text::new(
            label.clone(),
            (*from, y),
            ("sans-serif", 14).into_font(),
        )))?;
    }
    // Horizontal reference lines, labelled at the right end; labels closer than a line of text
    // are pushed apart so that none hides another.
    let mut lines: Vec<(f64, f64, String, RGBColor, bool)> = Vec::new();
    for (name, idx, e) in &fig.reversals {
        let Some(e) = *e else { continue };
        let shown = e.clamp(lo, hi);
        let note = if (shown - e).abs() > 1e-9 {
            format!("E {name} {e:.1} mV (off scale)")
        } else {
            format!("E {name} {e:.1} mV")
        };
        lines.push((shown, shown, note, rgb(species_rgb(*idx)), true));
    }
    if let Some(g) = fig.ghk_mv.filter(|g| *g > lo && *g < hi) {
        lines.push((g, g, format!("GHK {g:.1} mV"), RGBColor(110, 110, 110), false));
    }
    lines.sort_by(|a, b| a.0.total_cmp(&b.0));
    let gap = (hi - lo) * 0.04;
    for i in 1..lines.len() {
        if lines[i].1 - lines[i - 1].1 < gap {
            lines[i].1 = lines[i - 1].1 + gap;
        }
    }
    for (y, label_y, note, c, dashed_long) in &lines {
        let (dash, space, width) = if *dashed_long { (8, 5, 2) } else { (3, 4, 1) };
        chart.draw_series(DashedLineSeries::new(
            [(0.0, *y), (t_end, *y)],
            dash,
            space,
            c.stroke_width(width),
        ))?;
        let pos = (t_end + t_end * 0.01, *label_y + (hi - lo) * 0.012);
        chart.draw_series(std::iter::once(Text::new(
            note.clone(),
            pos,
            ("sans-serif", 14).into_font().color(c),
        )))?;
    }
    let pts = thin(fig.t_ms, fig.v_mv, 3000);
    chart.draw_series(LineSeries::new(pts, rgb(potential_rgb()).stroke_width(2)))?;
    Ok(())
}
