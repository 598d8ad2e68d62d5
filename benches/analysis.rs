//! Speed of the analyses against issue 5's targets: a 1000-point steady-state sweep (under
//! 50 ms) and a fit of 3 free permeability ratios to 20 points (under 100 ms). The sweep is
//! timed on a passive cell and on an excitable one, whose gated channels make every steady
//! state scan the whole voltage range.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use permeant::analysis::fit::{DataPoint, FitSpace, fit};
use permeant::analysis::rest_report;
use permeant::analysis::sweep::{SweepControl, SweepRange, Vary, apply, sweep};
use permeant::physics::Kinetics;
use permeant::scenario::{Channel, Gate, Scenario, Species};

fn species(name: &str, charge: i32, inside_mm: f64, outside_mm: f64, p_cm_per_s: f64) -> Species {
    Species {
        name: name.into(),
        charge,
        inside_mm,
        outside_mm,
        permeability_cm_per_s: p_cm_per_s,
    }
}

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
    let channel = |label: &str, sp: &str, p: f64, gates: Vec<Gate>| Channel {
        label: label.into(),
        species: sp.into(),
        max_permeability_cm_per_s: p,
        shift_mv: 0.0,
        q10: 3.0,
        reference_temperature_c: 6.3,
        gates,
    };
    s.channels = vec![
        channel(
            "fast sodium",
            "Na+",
            8.0e-5,
            vec![
                Gate {
                    kinetics: Kinetics::HhSodiumActivation,
                    power: 3,
                },
                Gate {
                    kinetics: Kinetics::HhSodiumInactivation,
                    power: 1,
                },
            ],
        ),
        channel(
            "delayed potassium",
            "K+",
            2.5e-5,
            vec![Gate {
                kinetics: Kinetics::HhPotassiumActivation,
                power: 4,
            }],
        ),
    ];
    s
}

fn bench_sweep(c: &mut Criterion) {
    let range = SweepRange {
        from: 1.0,
        to: 150.0,
        points: 1000,
        log: true,
    };
    let vary = Vary::OutsideMm("K+".into());
    for (name, s) in [("passive", passive()), ("excitable", excitable())] {
        c.bench_function(&format!("sweep 1000 points, {name} cell"), |b| {
            b.iter(|| sweep(black_box(&s), &vary, &range, &SweepControl::default()).expect("sweep"))
        });
    }
}

fn bench_fit(c: &mut Criterion) {
    let truth = passive();
    let vary = Vary::OutsideMm("K+".into());
    let values = SweepRange {
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
            let v = rest_report(&apply(&truth, &vary, x).expect("applies"))
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

criterion_group!(benches, bench_sweep, bench_fit);
criterion_main!(benches);
