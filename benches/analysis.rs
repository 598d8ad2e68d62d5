//! Speed of the analyses against issue 5's targets: a 1000-point steady-state scan (under
//! 50 ms) and a fit of 3 free permeability ratios to 20 points (under 100 ms). The scan is
//! timed on a passive cell and on an excitable one, whose gated channels make every steady
//! state scan the whole voltage range. Also the drawing path of five kept traces of 200,000
//! samples each while panning (under 16 ms a frame).

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use permeant::analysis::decimate::decimate_min_max;
use permeant::analysis::fit::{DataPoint, FitSpace, fit};
use permeant::analysis::rest_report;
use permeant::analysis::scan::{ScanControl, ScanRange, Vary, apply, scan};
use permeant::scenario::Scenario;
use permeant::scenario::validate;

#[path = "../tests/common/cells.rs"]
mod cells;
use cells::{hh_channels, species};

/// A passive cell with four permeant species, one of them divalent (invented numbers).
fn passive() -> Scenario {
    let mut s = Scenario::new_default();
    s.species = vec![
        species("K+", 1, 140.0, 5.0, 1.0e-6),
        species("Na+", 1, 12.0, 145.0, 4.0e-8),
        species("Cl-", -1, 10.0, 120.0, 3.0e-7),
        species("Ca2+", 2, 1.0e-4, 2.0, 4.0e-7),
    ];
    s
}

/// The passive cell with Hodgkin–Huxley 1952 sodium and potassium channels added.
fn excitable() -> Scenario {
    let mut s = passive();
    s.temperature_c = 6.3;
    s.channels = hh_channels(8.0e-5, 2.5e-5);
    s
}

fn bench_scan(c: &mut Criterion) {
    let range = ScanRange {
        from: 1.0,
        to: 150.0,
        points: 1000,
        log: true,
    };
    let vary = Vary::OutsideMm("K+".into());
    for (name, s) in [("passive", passive()), ("excitable", excitable())] {
        c.bench_function(&format!("scan 1000 points, {name} cell"), |b| {
            b.iter(|| scan(black_box(&s), &vary, &range, &ScanControl::default()).expect("scan"))
        });
    }
}

fn bench_fit(c: &mut Criterion) {
    let truth = passive();
    let vary = Vary::OutsideMm("K+".into());
    let values = ScanRange {
        from: 1.0,
        to: 150.0,
        points: 20,
        log: true,
    }
    .values()
    .expect("range");
    // Exact model points with a fixed ±0.1 mV pattern, so the fit has real residuals.
    let data: Vec<DataPoint> = values
        .iter()
        .enumerate()
        .map(|(k, &x)| {
            let v = rest_report(&validate(apply(&truth, &vary, x).expect("applies")).expect("valid"))
                .expect("report")
                .resting_mv()
                .expect("rest");
            DataPoint {
                value: x,
                v_mv: v + if k % 2 == 0 { 0.1 } else { -0.1 },
                row: k + 2,
            }
        })
        .collect();
    let mut start = truth.clone();
    start.species[1].permeability_cm_per_s = 2.0e-7;
    start.species[2].permeability_cm_per_s = 5.0e-8;
    start.species[3].permeability_cm_per_s = 1.0e-7;
    let free: Vec<String> = ["Na+", "Cl-", "Ca2+"].iter().map(|s| s.to_string()).collect();
    c.bench_function("fit 3 free ratios to 20 points", |b| {
        b.iter(|| fit(black_box(&start), &vary, &free, &data, FitSpace::LogRatio).expect("fits"))
    });
}

/// Five kept traces of 200,000 samples each (spiking, invented shape) over 1000 ms.
fn kept_traces() -> Vec<(Vec<f64>, Vec<f64>)> {
    (0..5)
        .map(|k| {
            let t: Vec<f64> = (0..200_000).map(|i| i as f64 * 0.005).collect();
            let v = t
                .iter()
                .map(|&x| -65.0 + 3.0 * f64::from(k) + 100.0 * ((x * 0.05).sin().max(0.0)).powi(8))
                .collect();
            (t, v)
        })
        .collect()
}

/// What the potential plot does per frame while the user pans or zooms with five kept traces
/// visible: thin each to min/max per column of a 1000-pixel-wide visible range (the range
/// moves every frame, so no cached decimation can be reused). Target: under 16 ms a frame.
/// The second measurement adds egui_plot's layout of the five lines and egui's tessellation
/// into triangles, i.e. everything but the GPU.
fn bench_kept_traces(c: &mut Criterion) {
    let traces = kept_traces();
    let columns = 1000;
    let mut frame = 0u64;
    let mut next_range = move || {
        frame += 1;
        // Pan across the trace, zooming between 200 ms and the whole run.
        let width = 200.0 + (frame % 5) as f64 * 200.0;
        let lo = (frame % 37) as f64 * (1000.0 - width) / 36.0;
        (lo, lo + width)
    };
    c.bench_function(
        "pan frame: decimate 5 kept traces of 200k samples to 1000 px",
        |b| {
            b.iter(|| {
                let range = next_range();
                let n: usize = traces
                    .iter()
                    .map(|(t, v)| decimate_min_max(t, v, range, columns).len())
                    .sum();
                black_box(n)
            })
        },
    );
    #[cfg(feature = "gui")]
    bench_kept_traces_drawn(c, &traces, columns, next_range);
}

/// The drawing half of [`bench_kept_traces`]: only with the window's crates.
#[cfg(feature = "gui")]
fn bench_kept_traces_drawn(
    c: &mut Criterion,
    traces: &[(Vec<f64>, Vec<f64>)],
    columns: usize,
    mut next_range: impl FnMut() -> (f64, f64),
) {
    let ctx = egui::Context::default();
    let input = || egui::RawInput {
        screen_rect: Some(egui::Rect::from_min_size(
            egui::Pos2::ZERO,
            egui::vec2(1100.0, 600.0),
        )),
        ..Default::default()
    };
    c.bench_function(
        "pan frame: 5 kept traces decimated, laid out and tessellated",
        |b| {
            b.iter(|| {
                let range = next_range();
                let out = ctx.run_ui(input(), |ui| {
                    egui_plot::Plot::new("kept")
                        .reset()
                        .default_x_bounds(range.0, range.1)
                        .show(ui, |pui| {
                            for (k, (t, v)) in traces.iter().enumerate() {
                                let points = decimate_min_max(t, v, range, columns);
                                pui.line(egui_plot::Line::new(format!("kept {k}"), points));
                            }
                        });
                });
                black_box(ctx.tessellate(out.shapes, out.pixels_per_point).len())
            })
        },
    );
}

criterion_group!(benches, bench_scan, bench_fit, bench_kept_traces);
criterion_main!(benches);
