//! A printable figure of V(t) as SVG (plotters' SVG backend, no system fonts): the trace, each
//! species' reversal potential as a labelled dashed line (following the run where the species'
//! concentrations change, as the window draws it), the GHK potential, and the protocol's events
//! marked on the time axis.

use plotters::prelude::*;

use crate::analysis::decimate::{Envelope, decimate_min_max};
use crate::analysis::rest_report;
use crate::engine::{EngineError, Model, Readout, Trace};
use crate::palette::{potential_rgb, species_rgb};
use crate::scenario::{Event, Scenario, Valid, Wording};

/// Everything the figure shows.
#[derive(Debug, Clone)]
pub struct Figure<'a> {
    pub title: String,
    pub t_ms: &'a [f64],
    pub v_mv: &'a [f64],
    pub reversals: Vec<Reversal>,
    pub ghk_mv: Option<f64>,
    pub events: Vec<EventBand>,
    pub duration_ms: f64,
}

/// A species' reversal potential line.
#[derive(Debug, Clone, PartialEq)]
pub struct Reversal {
    pub name: String,
    /// Its colour's index in the palette (the species' index in the scenario).
    pub palette: usize,
    /// `None` where it is undefined (a concentration of 0).
    pub e_mv: Option<f64>,
    /// `[t ms, E mV]` along the run, thinned, when the species' concentrations change in it
    /// (a bath change, tracked inside concentrations); empty for a line that stays at `e_mv`.
    pub along: Vec<[f64; 2]>,
}

/// An event as a labelled time span.
#[derive(Debug, Clone, PartialEq)]
pub struct EventBand {
    pub label: String,
    pub from_ms: f64,
    pub until_ms: f64,
}

/// Why the figure could not be made.
#[derive(Debug, thiserror::Error)]
pub enum FigureError {
    #[error("could not draw the figure: {0}")]
    Draw(String),
    #[error("could not write the figure: {0}")]
    Write(String),
}

/// Columns the trace is thinned to: at most about 6000 points, a fine line at the figure's
/// 1000 pixels.
pub const TRACE_COLUMNS: usize = 3000;

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
            .map(|(i, r)| Reversal {
                name: r.name.clone(),
                palette: i,
                e_mv: r.reversal_mv,
                along: Vec::new(),
            })
            .collect(),
        ghk_mv: report.ghk_mv.ok(),
        events: event_spans(s),
        duration_ms: s.run.duration_ms,
    })
}

/// The moving reversal potentials of a run, gathered sample by sample as the run streams (the
/// command line) or from values already computed (the window), each thinned like the trace.
/// Every value comes from [`Model::reversal_mv`], the computation the window's plots draw.
#[derive(Debug, Clone)]
pub struct Tracks {
    /// Per species: the thinned line, for a species whose concentrations change in the run.
    lines: Vec<Option<Envelope>>,
    readout: Readout,
    y: Vec<f64>,
    t: Vec<f64>,
    e: Vec<Vec<f64>>,
}

impl Tracks {
    /// Empty lines for each species of `model` whose concentrations change during a run of
    /// `duration_ms`.
    pub fn new(model: &Model, duration_ms: f64) -> Tracks {
        let mut tracks = Tracks::of(&model.concentrations_vary(), duration_ms);
        tracks.readout = model.readout();
        tracks
    }

    /// Empty lines for the species marked in `varying` (in scenario order).
    pub fn of(varying: &[bool], duration_ms: f64) -> Tracks {
        Tracks {
            lines: varying
                .iter()
                .map(|v| v.then(|| Envelope::new((0.0, duration_ms), TRACE_COLUMNS)))
                .collect(),
            readout: Readout::default(),
            y: Vec::new(),
            t: Vec::new(),
            e: vec![Vec::new(); varying.len()],
        }
    }

    /// Takes in every sample `trace` now holds (read once each: call it after each chunk of a
    /// run, before the chunk is discarded).
    pub fn extend(&mut self, model: &Model, trace: &Trace) {
        if self.lines.iter().all(Option::is_none) {
            return;
        }
        self.t.clear();
        self.e.iter_mut().for_each(Vec::clear);
        self.y.resize(trace.columns.len(), 0.0);
        for k in 0..trace.len() {
            trace.state(k, &mut self.y);
            model.read(trace.t_ms[k], &self.y, &mut self.readout);
            self.t.push(trace.t_ms[k]);
            for (s, col) in self.e.iter_mut().enumerate() {
                let e = match self.lines.get(s) {
                    Some(Some(_)) => model.reversal_mv(s, &self.readout.conditions),
                    _ => None,
                };
                col.push(e.unwrap_or(f64::NAN));
            }
        }
        for (line, e) in self.lines.iter_mut().zip(&self.e) {
            if let Some(line) = line {
                line.extend(&self.t, e);
            }
        }
    }

    /// Takes in the reversal potential of species `s` at the times `t_ms` (not a number where
    /// it is undefined), as the window keeps it.
    pub fn extend_species(&mut self, s: usize, t_ms: &[f64], e_mv: &[f64]) {
        if let Some(Some(line)) = self.lines.get_mut(s) {
            line.extend(t_ms, e_mv);
        }
    }

    /// Puts the lines into the figure: each moving species' line follows its values, and its
    /// label reads the last one.
    pub fn apply(&self, fig: &mut Figure) {
        for (r, line) in fig.reversals.iter_mut().zip(&self.lines) {
            let Some(line) = line else { continue };
            let (t, e) = line.points();
            if t.is_empty() {
                continue;
            }
            r.along = t.into_iter().zip(e).map(|(t, e)| [t, e]).collect();
            r.e_mv = r.along.last().map(|p| p[1]);
        }
    }
}

/// Events of a scenario as labelled time spans, clipped to the run (a bath change marks only
/// its moment: the figure gives it a thin band).
pub fn event_spans(s: &Scenario) -> Vec<EventBand> {
    s.protocol
        .iter()
        .map(|e| {
            let (from_ms, until) = e.span_ms();
            let end = until.unwrap_or(s.run.duration_ms).min(s.run.duration_ms);
            EventBand {
                label: e.summary(Wording::Standalone),
                from_ms,
                until_ms: if matches!(e, Event::BathChange { .. } | Event::BathExchange { .. }) {
                    from_ms
                } else {
                    end
                },
            }
        })
        .collect()
}

fn rgb((r, g, b): (u8, u8, u8)) -> RGBColor {
    RGBColor(r, g, b)
}

/// `text` with each control character (a tab, a line break, an escape) as a space: XML 1.0
/// cannot hold most of them, and a one-line caption shows none. Names and labels are refused
/// with control characters by validation; a title may hold line breaks.
fn printable(text: &str) -> String {
    text.chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .collect()
}

/// Renders the figure as SVG text.
pub fn render(fig: &Figure) -> Result<String, FigureError> {
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, (1000, 620)).into_drawing_area();
        draw(&root, fig).map_err(|e| FigureError::Draw(e.to_string()))?;
        root.present().map_err(|e| FigureError::Write(e.to_string()))?;
    }
    Ok(out)
}

/// A labelled horizontal line: a reversal potential or the GHK potential.
struct Level {
    /// Where the line is drawn (clamped into the axis) and where its label goes (moved clear
    /// of its neighbours).
    y: f64,
    label_y: f64,
    note: String,
    color: RGBColor,
    /// Long dashes for a species, short ones for the GHK potential.
    long_dashes: bool,
    /// Where a moving line goes, `(t ms, mV)` in time order; it stays at its last value (`y`)
    /// to the end of the axis. Empty for a line at `y` throughout.
    along: Vec<(f64, f64)>,
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
    let moving = fig.reversals.iter().flat_map(|r| r.along.iter().map(|p| p[1]));
    for v in fig
        .reversals
        .iter()
        .filter_map(|r| r.e_mv)
        .chain(fig.ghk_mv)
        .chain(moving)
    {
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
        .caption(printable(&fig.title), ("sans-serif", 24))
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
    for (i, band) in fig.events.iter().enumerate() {
        let from = band.from_ms;
        let until = if band.until_ms > from {
            band.until_ms
        } else {
            from + t_end * 0.003
        };
        let shade = RGBColor(120, 120, 120).mix(0.12);
        chart.draw_series(std::iter::once(Rectangle::new(
            [(from, lo), (until, hi)],
            shade.filled(),
        )))?;
        let y = hi - (hi - lo) * (0.04 + 0.05 * (i % 4) as f64);
        chart.draw_series(std::iter::once(Text::new(
            band.label.clone(),
            (from, y),
            ("sans-serif", 14).into_font(),
        )))?;
    }
    // Horizontal reference lines, labelled at the right end; labels closer than a line of text
    // are pushed apart so that none hides another.
    let mut lines: Vec<Level> = Vec::new();
    for r in &fig.reversals {
        let Some(e) = r.e_mv else { continue };
        let shown = e.clamp(lo, hi);
        let name = &r.name;
        let note = if (shown - e).abs() > 1e-9 {
            format!("E {name} {e:.1} mV (off scale)")
        } else {
            format!("E {name} {e:.1} mV")
        };
        lines.push(Level {
            y: shown,
            label_y: shown,
            note,
            color: rgb(species_rgb(r.palette)),
            long_dashes: true,
            along: r
                .along
                .iter()
                .map(|p| (p[0].clamp(0.0, t_end), p[1].clamp(lo, hi)))
                .collect(),
        });
    }
    if let Some(g) = fig.ghk_mv.filter(|g| *g > lo && *g < hi) {
        lines.push(Level {
            y: g,
            label_y: g,
            note: format!("GHK {g:.1} mV"),
            color: RGBColor(110, 110, 110),
            long_dashes: false,
            along: Vec::new(),
        });
    }
    lines.sort_by(|a, b| a.y.total_cmp(&b.y));
    let gap = (hi - lo) * 0.04;
    for i in 1..lines.len() {
        if lines[i].label_y - lines[i - 1].label_y < gap {
            lines[i].label_y = lines[i - 1].label_y + gap;
        }
    }
    for line in &lines {
        let (dash, space, width) = if line.long_dashes { (8, 5, 2) } else { (3, 4, 1) };
        // A moving line starts at its first sample and, past its last, goes on at its last
        // value, so that it spans the whole time axis as the window draws it.
        let mut path = line.along.clone();
        match path.last() {
            Some(&(t, e)) if t < t_end => path.push((t_end, e)),
            Some(_) => {}
            None => path = vec![(0.0, line.y), (t_end, line.y)],
        }
        chart.draw_series(DashedLineSeries::new(
            path,
            dash,
            space,
            line.color.stroke_width(width),
        ))?;
        let pos = (t_end + t_end * 0.01, line.label_y + (hi - lo) * 0.012);
        chart.draw_series(std::iter::once(Text::new(
            line.note.clone(),
            pos,
            ("sans-serif", 14).into_font().color(&line.color),
        )))?;
    }
    // The smallest and largest sample per column, so that a long trace draws the same
    // envelope with a small file.
    let span = (
        fig.t_ms.first().copied().unwrap_or(0.0),
        fig.t_ms.last().copied().unwrap_or(0.0),
    );
    let pts = decimate_min_max(fig.t_ms, fig.v_mv, span, TRACE_COLUMNS)
        .into_iter()
        .map(|[t, v]| (t, v));
    chart.draw_series(LineSeries::new(pts, rgb(potential_rgb()).stroke_width(2)))?;
    Ok(())
}
