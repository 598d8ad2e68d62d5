//! `permeant run` on voltage-clamp scenarios and `permeant family`, as a user meets them: the
//! real binary, the CSV columns and JSON keys of clamp-and-volume.md, and bad input refused
//! with exit status 2. The scenarios are invented for these tests.

use serde_json::Value;

mod common;
use common::cli::{Sandbox, assert_bad_input, stderr};
use common::reference::ghk_current_ua_per_cm2;

/// A passive potassium–sodium cell held at −80 mV and stepped to −100 mV from 2 ms.
const CLAMPED: &str = r#"(
    format: 1,
    title: "Held cell",
    temperature_c: 22.0,
    species: [
        (name: "K+", charge: 1, inside_mm: 140.0, outside_mm: 5.0, permeability_cm_per_s: 5.0e-7),
        (name: "Na+", charge: 1, inside_mm: 12.0, outside_mm: 145.0, permeability_cm_per_s: 2.5e-8),
    ],
    protocol: [Step(to_mv: -100.0, from_ms: 2.0)],
    run: (duration_ms: 6.0, sample_ms: 1.0, mode: VoltageClamp(holding_mv: -80.0)),
)
"#;

#[test]
fn run_writes_the_clamp_columns_of_the_contract() {
    let sb = Sandbox::with("held.ron", CLAMPED);
    sb.ok(&["run", "held.ron", "--csv", "out.csv"]);
    let text = sb.read("out.csv");
    let mut lines = text.lines();
    let header = lines.next().expect("a header");
    assert_eq!(
        header,
        "time_ms,v_mv,i_total_ua_per_cm2,i_ua_per_cm2:K+,i_ua_per_cm2:Na+,v_command_mv"
    );
    let rows: Vec<Vec<f64>> = lines
        .map(|l| l.split(',').map(|x| x.parse().expect("a number")).collect())
        .collect();
    assert_eq!(rows.len(), 7);
    for r in &rows {
        let v = if r[0] < 2.0 { -80.0 } else { -100.0 };
        assert_eq!(r[1], v, "the ideal clamp holds V on the command");
        assert_eq!(r[5], v);
        // The recorded current is the sum of the two GHK currents (Goldman 1943; Hodgkin &
        // Katz 1949), the species columns each one of them.
        let k = ghk_current_ua_per_cm2(5e-7, 1, 140.0, 5.0, v, 22.0).0;
        let na = ghk_current_ua_per_cm2(2.5e-8, 1, 12.0, 145.0, v, 22.0).0;
        assert!((r[3] - k).abs() < 1e-9 * k.abs());
        assert!((r[4] - na).abs() < 1e-9 * na.abs());
        assert!((r[2] - (k + na)).abs() < 1e-9 * k.abs());
    }
}

#[test]
fn family_json_has_exactly_the_contracts_keys() {
    let sb = Sandbox::with("held.ron", CLAMPED);
    let out = sb.ok(&[
        "family",
        "held.ron",
        "--vary",
        "protocol[0].to_mv",
        "--from",
        "-120",
        "--to",
        "0",
        "--step",
        "20",
        "--measure",
        "peak:2:6,late:4:6,tail:5",
        "--json",
    ]);
    let j: Value = serde_json::from_str(&out).expect("one JSON object");
    let keys: Vec<&str> = j
        .as_object()
        .expect("an object")
        .keys()
        .map(String::as_str)
        .collect();
    let mut want = vec!["boltzmann", "reversal_mv", "runs", "vary"];
    want.sort();
    let mut got = keys.clone();
    got.sort();
    assert_eq!(got, want);
    assert_eq!(j["vary"], "protocol[0].to_mv");
    let runs = j["runs"].as_array().expect("runs");
    assert_eq!(runs.len(), 7);
    assert_eq!(runs[0]["value"], -120.0);
    for r in runs {
        let m = r["measures"].as_object().expect("measures");
        let mut names: Vec<&str> = m.keys().map(String::as_str).collect();
        names.sort();
        assert_eq!(names, vec!["late:4:6", "peak:2:6", "tail:5"]);
        assert!(m["peak:2:6"]["value"].is_f64() && m["peak:2:6"]["at_ms"].is_f64());
    }
    // A K+/Na+ membrane reverses between −120 and 0 mV; a passive one has no activation curve
    // worth a fit, but it is reported as a number or null, never missing.
    let e = j["reversal_mv"].as_f64().expect("a reversal potential");
    assert!(e > -120.0 && e < 0.0, "{e}");
    assert!(j["boltzmann"].is_null() || j["boltzmann"]["v_half_mv"].is_f64());
}

#[test]
fn family_csv_has_one_row_per_run_and_one_column_per_measurement() {
    let sb = Sandbox::with("held.ron", CLAMPED);
    sb.ok(&[
        "family",
        "held.ron",
        "--vary",
        "protocol[0].to_mv",
        "--from",
        "-100",
        "--to",
        "-60",
        "--step",
        "20",
        "--measure",
        "late:4:6,tail:5",
        "--csv",
        "iv.csv",
    ]);
    let text = sb.read("iv.csv");
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "value,late:4:6,tail:5");
    assert_eq!(lines.len(), 4);
    assert!(lines[1].starts_with("-100,"));
}

#[test]
fn the_files_own_family_runs_without_vary() {
    let text = CLAMPED.replace(
        "mode: VoltageClamp(holding_mv: -80.0)",
        "mode: VoltageClamp(holding_mv: -80.0), family: Some((field: \"protocol[0].to_mv\", values: [-90.0, -70.0]))",
    );
    let sb = Sandbox::with("fam.ron", text);
    let out = sb.ok(&["family", "fam.ron", "--measure", "late:4:6", "--json"]);
    let j: Value = serde_json::from_str(&out).expect("JSON");
    assert_eq!(j["runs"].as_array().map(Vec::len), Some(2));
}

#[test]
fn a_dose_family_prints_the_hill_fit_of_the_current_lost() {
    // Only K+ is permeant and its whole permeability is blocked, so the fraction of the current
    // lost at each dose is the Hill equation itself (Hill 1910; the GHK current is linear in P):
    // the fit gives back the file's IC50 of 2 µM and Hill coefficient of 1.5.
    let text = CLAMPED
        .replace("permeability_cm_per_s: 2.5e-8", "permeability_cm_per_s: 0.0")
        .replace(
            "protocol: [Step(to_mv: -100.0, from_ms: 2.0)]",
            "protocol: [Step(to_mv: 0.0, from_ms: 2.0), Agent(label: \"k blocker\", species: \"K+\", ic50_um: 2.0, hill: 1.5, dose_um: 1.0, from_ms: 0.0)]",
        )
        .replace(
            "mode: VoltageClamp(holding_mv: -80.0)",
            "mode: VoltageClamp(holding_mv: -80.0), family: Some((field: \"protocol[1].dose_um\", values: [0.0, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 50.0]))",
        );
    let sb = Sandbox::with("dose.ron", text);
    let out = sb.ok(&["family", "dose.ron", "--measure", "late:4:6"]);
    let line = out
        .lines()
        .find(|l| l.starts_with("Hill fit of the fraction blocked (late:4:6): IC50 = "))
        .unwrap_or_else(|| panic!("no Hill fit line in\n{out}"));
    assert!(
        line.contains("IC50 = 2.000 ± ") && line.contains("µM, Hill coefficient = 1.500 ± "),
        "{line}"
    );
}

#[test]
fn bad_family_requests_are_refused_with_the_reason() {
    let sb = Sandbox::with("held.ron", CLAMPED);
    let family = |extra: &[&str]| {
        let mut args = vec!["family", "held.ron"];
        args.extend_from_slice(extra);
        sb.run(&args)
    };
    let range = ["--from", "-100", "--to", "0", "--step", "10"];
    let with = |vary: &str, more: &[&str]| {
        let mut a = vec!["--vary", vary];
        a.extend_from_slice(&range);
        a.extend_from_slice(more);
        family(&a)
    };
    assert_bad_input(
        &with("protocol[0].to_mvv", &[]),
        &["protocol[0].to_mvv", "did you mean"],
    );
    assert_bad_input(
        &with("protocol[3].to_mv", &[]),
        &["run.family.field", "protocol[3].to_mv"],
    );
    assert_bad_input(
        &with("protocol[0].to_mv", &["--measure", "peak:5"]),
        &["--measure", "peak:FROM:UNTIL"],
    );
    assert_bad_input(
        &with("protocol[0].to_mv", &["--measure", "late:6:4"]),
        &["ends before it starts"],
    );
    assert_bad_input(
        &family(&[
            "--vary",
            "protocol[0].to_mv",
            "--from",
            "0",
            "--to",
            "1e6",
            "--step",
            "1",
        ]),
        &["10000"],
    );
    assert_bad_input(
        &family(&[
            "--vary",
            "protocol[0].to_mv",
            "--from",
            "0",
            "--to",
            "10",
            "--step",
            "0",
        ]),
        &["step"],
    );
    // A value that makes the scenario invalid names the value and the rule.
    assert_bad_input(
        &with(
            "species[0].outside_mm",
            &["--from", "-5", "--to", "5", "--step", "5"][..0],
        ),
        &["species[0].outside_mm = -100", "negative"],
    );
    // No family in the file and nothing to vary.
    let o = family(&[]);
    assert_bad_input(&o, &["--vary"]);
    assert!(!stderr(&o).contains("panicked"));
}
