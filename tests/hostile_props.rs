//! Property test over scenario text (issue 14): a rich invented scenario with its numbers
//! swapped for extremes (zero, tiny, huge, negative, a hair off a limit) and its flags flipped.
//! Whatever `check` makes of the text, it exits 0 or 2 with no panic; and for what it accepts,
//! a bounded `run` (a few milliseconds of simulated time, a few rows) exits 0 or 2, never 1
//! or a panic, and finishes. Both through the real binary, as a user meets them.

use proptest::prelude::*;

mod common;
use common::cli::{Sandbox, stderr};

/// Every kind of part a scenario holds, so that each kind of number gets its extremes.
const RICH: &str = r#"(
    format: 1,
    title: "Everything at once",
    temperature_c: 20.0,
    cell: (diameter_um: 20.0, capacitance_uf_per_cm2: 1.0, track_concentrations: false),
    species: [
        (name: "K+", charge: 1, inside_mm: 140.0, outside_mm: 5.0, permeability_cm_per_s: 5.0e-7),
        (name: "Na+", charge: 1, inside_mm: 12.0, outside_mm: 145.0, permeability_cm_per_s: 1.0e-8),
        (name: "Cl-", charge: -1, inside_mm: 10.0, outside_mm: 120.0, permeability_cm_per_s: 5.0e-8),
    ],
    pump: Some((exports: "Na+", imports: "K+", exported_per_cycle: 3, imported_per_cycle: 2,
        max_current_ua_per_cm2: 1.2, half_saturation_inside_mm: 10.0, hill_inside: 1.0,
        half_saturation_outside_mm: 1.5, hill_outside: 1.0)),
    channels: [
        (label: "fast sodium", species: "Na+", max_permeability_cm_per_s: 1.0e-4, shift_mv: 0.0,
         q10: 3.0, reference_temperature_c: 6.3,
         gates: [(kinetics: HhSodiumActivation, power: 3), (kinetics: HhSodiumInactivation, power: 1)]),
        (label: "slow", species: "K+", max_permeability_cm_per_s: 3.0e-5, shift_mv: 0.0,
         q10: 3.0, reference_temperature_c: 6.3,
         gates: [(kinetics: Boltzmann(v_half_mv: -40.0, slope_mv: 5.0, tau_ms: 4.0), power: 4)]),
    ],
    protocol: [
        InjectTrain(amplitude_ua_per_cm2: 20.0, width_ms: 1.0, period_ms: 2.5, count: 3, from_ms: 0.5),
        BathChange(species: "K+", outside_mm: 25.0, at_ms: 1.0, lag_ms: 1.5),
        PermeabilityScale(species: "Cl-", factor: 3.0, from_ms: 1.0, until_ms: Some(3.0), lag_ms: 0.5),
        Agent(label: "blocker", species: "K+", max_block: 0.9, ic50_um: 2.0, hill: 1.0,
              dose_um: 10.0, from_ms: 0.2, until_ms: Some(4.0), onset_ms: 1.0, washout_ms: 2.0),
        Inject(amplitude_ua_per_cm2: -5.0, from_ms: 4.0, until_ms: 4.5),
    ],
    run: (duration_ms: 5.0, sample_ms: 0.25, start: Rest),
)
"#;

/// Values a hostile file puts in a number's place: limits and a hair beyond them, zero of
/// both signs, the tiny and the huge.
const EXTREMES: [&str; 22] = [
    "0.0", "-0.0", "1e-20", "1e-12", "0.001", "0.000999", "1.0", "-1.0", "-1000.0", "1000.0", "1000.1",
    "-440.0", "1e4", "10001.0", "1e6", "1e9", "1e12", "1e15", "1e300", "-1e300", "1e-320", "7",
];

/// Byte ranges of the number literals in `text` (after `:` and within lists).
fn numbers(text: &str) -> Vec<(usize, usize)> {
    let b = text.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        let starts =
            (b[i].is_ascii_digit() || b[i] == b'-') && i > 0 && matches!(b[i - 1], b' ' | b'(' | b'[');
        if starts {
            let from = i;
            i += 1;
            while i < b.len() && (b[i].is_ascii_alphanumeric() || matches!(b[i], b'.' | b'-' | b'+')) {
                i += 1;
            }
            if text[from..i].parse::<f64>().is_ok() {
                out.push((from, i));
            }
        } else {
            i += 1;
        }
    }
    out
}

/// `RICH` with the chosen numbers replaced and concentration tracking as given.
fn hostile(picks: &[(prop::sample::Index, usize)], track: bool) -> String {
    let spans = numbers(RICH);
    let mut chosen: Vec<(usize, usize, &str)> = picks
        .iter()
        .map(|(at, v)| {
            let (a, b) = spans[at.index(spans.len())];
            (a, b, EXTREMES[*v % EXTREMES.len()])
        })
        .collect();
    chosen.sort_by_key(|c| std::cmp::Reverse(c.0));
    chosen.dedup_by_key(|c| c.0);
    let mut text = RICH.to_string();
    for (a, b, v) in chosen {
        text.replace_range(a..b, v);
    }
    if track {
        text = text.replace("track_concentrations: false", "track_concentrations: true");
    }
    text
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 120, failure_persistence: None, ..ProptestConfig::default() })]

    #[test]
    fn check_and_a_bounded_run_exit_0_or_2_and_finish(
        picks in prop::collection::vec((any::<prop::sample::Index>(), 0usize..EXTREMES.len()), 1..4),
        track in any::<bool>(),
    ) {
        let text = hostile(&picks, track);
        let sb = Sandbox::with("hostile.ron", &text);
        let o = sb.run(&["check", "hostile.ron"]);
        let err = stderr(&o);
        prop_assert!(!err.contains("panicked"), "{}\n{}", err, text);
        match o.status.code() {
            Some(0) => {}
            Some(2) => return Ok(()),
            other => prop_assert!(false, "check exited {:?}: {}\n{}", other, err, text),
        }
        // Accepted: a bounded run, whatever duration and sample interval the text holds.
        let bounded = permeant::scenario::from_str(&text, "hostile.ron").map(|v| {
            let mut s = v.into_inner();
            s.run.duration_ms = s.run.duration_ms.min(5.0);
            s.run.sample_ms = s.run.duration_ms / 20.0;
            s
        });
        let Ok(s) = bounded else {
            return Err(TestCaseError::fail(format!("check accepted what the reader refuses:\n{text}")));
        };
        sb.write("bounded.ron", permeant::scenario::to_ron(&s).expect("written as RON"));
        let o = sb.run(&["run", "bounded.ron", "--csv", "-", "--columns", "v"]);
        let err = stderr(&o);
        prop_assert!(!err.contains("panicked"), "{}\n{}", err, text);
        prop_assert!(
            matches!(o.status.code(), Some(0 | 2)),
            "run exited {:?}: {}\n{}",
            o.status.code(),
            err,
            text
        );
        if o.status.code() == Some(0) {
            // Every row holds a finite time and potential.
            for line in String::from_utf8_lossy(&o.stdout).lines().skip(1) {
                let ok = line
                    .split(',')
                    .all(|x| x.parse::<f64>().is_ok_and(f64::is_finite));
                prop_assert!(ok, "{}\n{}", line, text);
            }
        }
    }
}

#[test]
fn the_rich_scenario_itself_checks_and_runs() {
    let sb = Sandbox::with("rich.ron", RICH);
    sb.ok(&["check", "rich.ron"]);
    let out = sb.ok(&["run", "rich.ron", "--csv", "-", "--columns", "v"]);
    assert_eq!(out.lines().count(), 1 + 21);
    assert!(numbers(RICH).len() > 40, "the numbers are found");
}
