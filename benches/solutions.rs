//! Speed of solutions against issue 10's targets: everything `permeant solutions` computes for
//! a file of 10 solutions (reading and validating it, mixing every recipe, the checks, the
//! junctions and the JSON; the whole process under 10 ms), and a 1000-point equimolar
//! replacement scan (under 50 ms). The recipes are invented.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use permeant::analysis::scan::{ScanControl, ScanRange};
use permeant::scenario::from_str;
use permeant::solutions::plan;
use permeant::solutions::replace::Replace;

/// A scenario of 10 solutions: a bath, a pipette, and eight baths a protocol exchanges to.
fn ten_solutions() -> String {
    let mut solutions = String::new();
    let mut events = String::new();
    for k in 0..8 {
        let nmdg = 15.0 * f64::from(k + 1);
        solutions += &format!(
            "(name: \"bath {k}\", parts: [(\"NaCl\", {}), (\"NMDG-Cl\", {nmdg}), (\"KCl\", 5.0), (\"CaCl2\", 2.0), (\"MgCl2\", 1.0), (\"HEPES\", 10.0), (\"glucose\", 10.0)], ph: Some(7.4), titrant: Some(\"NaOH\")),\n",
            140.0 - nmdg
        );
        events += &format!(
            "BathExchange(solution: \"bath {k}\", at_ms: {}.0, lag_ms: 5.0),\n",
            10 * (k + 1)
        );
    }
    format!(
        r#"(
    format: 1,
    temperature_c: 22.0,
    solutions: [
        (name: "bath", parts: [("NaCl", 140.0), ("KCl", 5.0), ("CaCl2", 2.0), ("MgCl2", 1.0), ("HEPES", 10.0), ("glucose", 10.0)], ph: Some(7.4), titrant: Some("NaOH")),
        (name: "pipette", parts: [("K-gluconate", 130.0), ("KCl", 10.0), ("MgCl2", 2.0), ("HEPES", 10.0)], ph: Some(7.3), titrant: Some("KOH")),
        {solutions}
    ],
    inside: Some("pipette"),
    outside: Some("bath"),
    species: [
        (name: "K+", charge: 1, permeability_cm_per_s: 5.0e-7),
        (name: "Na+", charge: 1, permeability_cm_per_s: 2.5e-8),
        (name: "Cl-", charge: -1, permeability_cm_per_s: 1.0e-7),
    ],
    protocol: [{events}],
    run: (duration_ms: 100.0),
)"#
    )
}

fn bench_solutions(c: &mut Criterion) {
    let text = ten_solutions();
    c.bench_function(
        "solutions of a 10-solution file (read, mix, check, junctions, JSON)",
        |b| {
            b.iter(|| {
                let s = from_str(black_box(&text), "ten.ron").expect("valid");
                let p = plan(&s);
                let checks: Vec<_> = p.mixtures.iter().map(|m| m.checks()).collect();
                let junctions = p.junctions(&s);
                let json = serde_json::to_string(&(
                    checks.iter().map(|c| c.osmolarity_mosm).collect::<Vec<_>>(),
                    junctions.iter().map(|j| j.offset_mv).collect::<Vec<_>>(),
                ))
                .expect("json");
                black_box((json, p.mixtures.len()))
            })
        },
    );
    let s = from_str(&text, "ten.ron").expect("valid").into_inner();
    let r = Replace::parse("NaCl:NMDG-Cl", &s).expect("replacement");
    let range = ScanRange {
        from: 0.0,
        to: 140.0,
        points: 1000,
        log: false,
    };
    c.bench_function("replacement scan, 1000 points", |b| {
        b.iter(|| {
            r.scan(black_box(&s), &range, &ScanControl::default())
                .expect("scan")
        })
    });
}

criterion_group!(benches, bench_solutions);
criterion_main!(benches);
