//! Speed of families of runs against issue 11's targets: a 13-level voltage-clamp step family
//! of a Hodgkin–Huxley cell, 50 ms each (under 20 ms), and a 40-level current-injection family
//! of 500 ms each (under 200 ms), each run, measured and analysed on every core.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use permeant::analysis::family::{Measure, analyse, run_family};
use permeant::analysis::metrics::SpikeSettings;
use permeant::analysis::scan::ScanControl;
use permeant::engine::SolverSettings;
use permeant::scenario::{Address, Event, RunMode, Scenario, range_values};

#[path = "../tests/common/cells.rs"]
mod cells;
use cells::{hh_channels, species};

/// A Hodgkin–Huxley cell at 6.3 °C (invented numbers).
fn hh_cell() -> Scenario {
    let mut s = Scenario::new_default();
    s.temperature_c = 6.3;
    s.species = vec![
        species("K+", 1, 140.0, 5.0, 3.0e-6),
        species("Na+", 1, 12.0, 145.0, 1.0e-8),
        species("Cl-", -1, 10.0, 120.0, 5.0e-8),
    ];
    s.channels = hh_channels(1.0e-4, 3.0e-5);
    s
}

fn bench_step_family(c: &mut Criterion) {
    let mut s = hh_cell();
    s.run.mode = RunMode::VoltageClamp {
        holding_mv: -90.0,
        series_resistance_mohm: 0.0,
        compensation: 0.0,
    };
    s.protocol = vec![Event::Step {
        to_mv: 0.0,
        from_ms: 5.0,
        until_ms: Some(45.0),
    }];
    s.run.duration_ms = 50.0;
    let field: Address = "protocol[0].to_mv".parse().expect("an address");
    let levels = range_values(-80.0, 40.0, 10.0).expect("13 levels");
    let measures = [Measure::Peak {
        from_ms: 5.0,
        until_ms: 45.0,
    }];
    bench_family(
        c,
        "step family, 13 levels of 50 ms, HH cell",
        &s,
        field,
        &levels,
        &measures,
    );
}

fn bench_injection_family(c: &mut Criterion) {
    let mut s = hh_cell();
    s.protocol = vec![Event::Inject {
        amplitude_ua_per_cm2: 0.0,
        from_ms: 10.0,
        until_ms: 490.0,
    }];
    s.run.duration_ms = 500.0;
    let field: Address = "protocol[0].amplitude_ua_per_cm2".parse().expect("an address");
    let levels = range_values(0.25, 10.0, 0.25).expect("40 levels");
    let measures = [
        Measure::Spikes {
            from_ms: 10.0,
            until_ms: 490.0,
        },
        Measure::Latency {
            from_ms: 10.0,
            until_ms: 490.0,
        },
    ];
    bench_family(
        c,
        "injection family, 40 levels of 500 ms, HH cell",
        &s,
        field,
        &levels,
        &measures,
    );
}

/// Times running and measuring the family of `s` over `levels` of the number at `field`.
fn bench_family(
    c: &mut Criterion,
    name: &str,
    s: &Scenario,
    field: Address,
    levels: &[f64],
    measures: &[Measure],
) {
    c.bench_function(name, |b| {
        b.iter(|| {
            let runs = run_family(
                black_box(s),
                field,
                levels,
                &SolverSettings::default(),
                &ScanControl::default(),
            )
            .expect("runs");
            analyse(&runs, measures, SpikeSettings::default())
        })
    });
}

criterion_group!(benches, bench_step_family, bench_injection_family);
criterion_main!(benches);
