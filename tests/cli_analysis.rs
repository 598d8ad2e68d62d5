//! `permeant scan` and `permeant fit` through the real binary in a fresh temporary directory:
//! the JSON and CSV shapes of command-line.md, agreement with `permeant rest` and with the
//! library, and exit status 2 with a message naming the place for bad input.

use std::path::Path;

use serde_json::Value;

mod common;
use common::cli::{Sandbox, permeant, stderr, stdout};
use common::reference::{Ion, fraction_blocked, ghk_voltage_mv};

/// A passive cell invented for these tests: P_K : P_Na : P_Cl = 1 : 0.04 : 0.45, and an agent
/// that blocks potassium.
const CELL: &str = r#"(
    format: 1,
    title: "Test cell for scans and fits",
    temperature_c: 22.0,
    species: [
        (name: "K+",  charge: 1,  inside_mm: 150.0, outside_mm: 4.0,   permeability_cm_per_s: 1.0e-6),
        (name: "Na+", charge: 1,  inside_mm: 15.0,  outside_mm: 140.0, permeability_cm_per_s: 4.0e-8),
        (name: "Cl-", charge: -1, inside_mm: 12.0,  outside_mm: 110.0, permeability_cm_per_s: 4.5e-7),
    ],
    protocol: [Agent(label: "k blocker", species: "K+", max_block: 0.8, ic50_um: 2.0, dose_um: 1.0, from_ms: 10.0)],
    run: (duration_ms: 50.0),
)"#;

const CELL_TEMPERATURE_C: f64 = 22.0;

/// CELL's ions as the test knows them, with the bath's K+ at `k_out_mm` and potassium's
/// permeability times `k_scale`.
fn cell_ions(k_out_mm: f64, k_scale: f64) -> [Ion; 3] {
    let ion = |charge, inside_mm, outside_mm, p_cm_per_s| Ion {
        charge,
        inside_mm,
        outside_mm,
        p_cm_per_s,
    };
    [
        ion(1, 150.0, k_out_mm, 1.0e-6 * k_scale),
        ion(1, 15.0, 140.0, 4.0e-8),
        ion(-1, 12.0, 110.0, 4.5e-7),
    ]
}

/// The GHK voltage equation (Goldman 1943; Hodgkin & Katz 1949) for CELL at bath K+ `k_out_mm`.
fn cell_ghk_mv(k_out_mm: f64) -> f64 {
    ghk_voltage_mv(&cell_ions(k_out_mm, 1.0), CELL_TEMPERATURE_C)
}

/// A potential the program solves for against its closed form: its root finder stops far
/// inside the 0.01 mV accuracy of model.md.
const SOLVED_MV: f64 = 1e-6;
/// Fitted ratios against the ones exact data were made with: the data carry the closed form to
/// every digit, so only the solver's and the minimiser's tolerances (1e-12) remain.
const RATIO_ABS: f64 = 1e-8;

fn setup() -> Sandbox {
    Sandbox::with("cell.ron", CELL)
}

/// A scan's `--from`, `--to` and `--points`, as typed.
type Span<'a> = (&'a str, &'a str, &'a str);

/// `permeant scan FILE --vary WHAT --from A --to B --points N`, then any further arguments.
fn scan(
    sb: &Sandbox,
    file: &str,
    vary: &str,
    (from, to, points): Span,
    more: &[&str],
) -> std::process::Output {
    let mut args = vec![
        "scan", file, "--vary", vary, "--from", from, "--to", to, "--points", points,
    ];
    args.extend_from_slice(more);
    sb.run(&args)
}

/// A CSV row of numbers (an empty cell is `None`).
fn numbers(line: &str) -> Vec<Option<f64>> {
    line.split(',')
        .map(|c| (!c.is_empty()).then(|| c.parse().expect("a number")))
        .collect()
}

#[test]
fn the_old_name_sweep_still_scans_but_is_not_listed() {
    let sb = setup();
    let args = [
        "cell.ron",
        "--vary",
        "outside_mm:K+",
        "--from",
        "2",
        "--to",
        "100",
        "--points",
        "3",
        "--json",
    ];
    let new = sb.ok(&[&["scan"][..], &args].concat());
    let old = sb.ok(&[&["sweep"][..], &args].concat());
    assert_eq!(old, new);
    let help = sb.ok(&["--help"]);
    assert!(help.contains("scan") && !help.contains("sweep"), "{help}");
}

#[test]
fn scan_json_has_the_documented_shape_and_matches_rest() {
    let sb = setup();
    let o = scan(
        &sb,
        "cell.ron",
        "outside_mm:K+",
        ("2", "100", "5"),
        &["--log", "--json"],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let j: Value = serde_json::from_str(&stdout(&o)).expect("one JSON object");
    assert_eq!(j["vary"], "outside_mm:K+");
    let pts = j["points"].as_array().expect("points");
    assert_eq!(pts.len(), 5);
    assert_eq!(pts[0]["value"], 2.0);
    assert_eq!(pts[4]["value"], 100.0);
    for p in pts {
        let keys: Vec<&str> = p
            .as_object()
            .expect("object")
            .keys()
            .map(String::as_str)
            .collect();
        assert_eq!(keys.len(), 3, "{keys:?}");
        // A passive cell with the agent not yet in force at t = 0: the GHK potential and the
        // steady state are both the GHK voltage equation at that bath K+.
        let x = p["value"].as_f64().expect("a value");
        let want = cell_ghk_mv(x);
        for key in ["ghk_mv", "resting_mv"] {
            let got = p[key].as_f64().expect("a potential");
            assert!((got - want).abs() < SOLVED_MV, "{key} at {x} mM: {got} vs {want}");
        }
    }
    // And as `permeant rest` on a file with the last value written in.
    sb.write("k100.ron", CELL.replace("outside_mm: 4.0", "outside_mm: 100.0"));
    let rj: Value = serde_json::from_str(&sb.ok(&["rest", "k100.ron", "--json"])).expect("json");
    assert_eq!(rj["resting_mv"], pts[4]["resting_mv"]);
    assert_eq!(rj["ghk_mv"], pts[4]["ghk_mv"]);
}

#[test]
fn scan_csv_and_table() {
    let sb = setup();
    let o = scan(
        &sb,
        "cell.ron",
        "dose_um:k blocker",
        ("0.01", "100", "3"),
        &["--log", "--csv", "out.csv"],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = sb.read("out.csv");
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "value,ghk_mv,resting_mv");
    assert_eq!(lines.len(), 4);
    let row = numbers(lines[2]);
    assert_eq!(row[0], Some(1.0), "a log range through a decade hits it exactly");
    // At 1 µM the agent blocks 0.8·1/(1 + 2) of the potassium permeability (Hill 1910, as
    // model.md writes it) and is in force from t = 0: the steady state is the GHK voltage
    // equation with that much less P_K, while the GHK potential keeps the file's values.
    let k_left = 1.0 - fraction_blocked(0.8, 2.0, 1.0, 1.0);
    let blocked = ghk_voltage_mv(&cell_ions(4.0, k_left), CELL_TEMPERATURE_C);
    let (ghk, rest) = (row[1].expect("ghk"), row[2].expect("rest"));
    assert!((ghk - cell_ghk_mv(4.0)).abs() < SOLVED_MV, "{ghk}");
    assert!((rest - blocked).abs() < SOLVED_MV, "{rest} vs {blocked}");
    // A potassium blocker depolarizes: the steady state rises with dose, while the GHK
    // potential (file values, model.md) does not move.
    let last = numbers(lines[3]);
    assert!(last[2] > row[2] && row[1] == last[1], "{text}");
    // The table names the quantity with its unit.
    let table = stdout(&o);
    assert!(
        table.contains("dose_um (µM)") && table.contains("resting (mV)"),
        "{table}"
    );

    // An undefined potential is an empty cell, with the reason on stderr and exit status 0.
    sb.write(
        "only_k.ron",
        CELL.replace("4.0e-8", "0.0").replace("4.5e-7", "0.0"),
    );
    let o = scan(
        &sb,
        "only_k.ron",
        "outside_mm:K+",
        ("0", "5", "2"),
        &["--csv", "k.csv"],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = sb.read("k.csv");
    assert!(text.lines().nth(1) == Some("0,,"), "{text}");
    assert!(
        stderr(&o).contains("undefined") && stderr(&o).contains("outside_mm:K+ = 0"),
        "{}",
        stderr(&o)
    );
    assert!(stdout(&o).contains("—"), "{}", stdout(&o));

    // A range whose end leaves no permeant species is refused before any point is computed.
    let o = scan(
        &sb,
        "only_k.ron",
        "permeability:K+",
        ("0", "1e-6", "2"),
        &["--csv", "u.csv"],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(!sb.path("u.csv").exists());
    assert!(stderr(&o).contains("permeability:K+ = 0"), "{}", stderr(&o));
}

#[test]
fn scan_bad_input_exits_2_naming_the_problem() {
    let sb = setup();
    let cases: [(&str, Span, &[&str], &[&str]); 5] = [
        (
            "outside_mm:Ca2+",
            ("1", "2", "3"),
            &[],
            &["\"Ca2+\"", "\"K+\", \"Na+\", \"Cl-\""],
        ),
        (
            "dose_um:nothing",
            ("1", "2", "3"),
            &[],
            &["\"nothing\"", "\"k blocker\""],
        ),
        (
            "pressure",
            ("1", "2", "3"),
            &[],
            &["\"pressure\"", "temperature_c"],
        ),
        ("outside_mm:K+", ("-1", "2", "3"), &["--log"], &["log range"]),
        ("temperature_c", ("10", "80", "3"), &[], &["temperature_c = 80"]),
    ];
    for (vary, range, more, needles) in cases {
        let o = scan(&sb, "cell.ron", vary, range, more);
        assert_eq!(o.status.code(), Some(2), "{vary}: {}", stderr(&o));
        assert!(o.stdout.is_empty());
        for n in needles {
            assert!(stderr(&o).contains(n), "{vary}: {} lacks {n}", stderr(&o));
        }
    }
    let o = scan(&sb, "missing.ron", "temperature_c", ("1", "2", "3"), &[]);
    assert_eq!(o.status.code(), Some(2));
}

/// Writes `value,v_mv` rows, every digit of each number.
fn write_data(sb: &Sandbox, name: &str, values: &[(f64, f64)]) {
    let mut text = String::from("value,v_mv\n");
    for (x, v) in values {
        text += &format!("{x},{v}\n");
    }
    sb.write(name, text);
}

/// Measured-looking points without noise: CELL's GHK voltage equation over bath K+.
fn ghk_points() -> Vec<(f64, f64)> {
    [2.0, 3.5, 6.0, 10.0, 18.0, 30.0, 55.0, 100.0]
        .iter()
        .map(|&k| (k, cell_ghk_mv(k)))
        .collect()
}

/// `permeant fit FILE --data DATA --vary outside_mm:K+ --free FREE`, then any further arguments.
fn fit(sb: &Sandbox, file: &str, data: &str, free: &str, more: &[&str]) -> std::process::Output {
    let mut args = vec![
        "fit",
        file,
        "--data",
        data,
        "--vary",
        "outside_mm:K+",
        "--free",
        free,
    ];
    args.extend_from_slice(more);
    sb.run(&args)
}

/// Data from the GHK voltage equation at P_Na/P_K = 0.04 and P_Cl/P_K = 0.45 fit back to
/// those ratios from a file that starts elsewhere.
#[test]
fn fit_json_recovers_the_ratios_the_data_were_made_with() {
    let sb = setup();
    write_data(&sb, "data.csv", &ghk_points());
    sb.write(
        "start.ron",
        CELL.replace("4.0e-8", "2.0e-7").replace("4.5e-7", "5.0e-8"),
    );
    let o = fit(&sb, "start.ron", "data.csv", "Na+,Cl-", &["--json"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let j: Value = serde_json::from_str(&stdout(&o)).expect("json");
    for (name, want) in [("Na+", 0.04), ("Cl-", 0.45)] {
        let got = j["ratios"][name].as_f64().expect("a ratio");
        assert!((got - want).abs() < RATIO_ABS, "{name}: {got} vs {want}\n{j}");
        assert!(
            j["standard_errors"][name].as_f64().expect("se") < RATIO_ABS,
            "{j}"
        );
    }
    assert!(j["rms_residual_mv"].as_f64().expect("rms") < SOLVED_MV, "{j}");
    assert_eq!(j["residuals"].as_array().expect("residuals").len(), 8);
    // The readable table carries the same ratio.
    let table = sb.ok(&[
        "fit",
        "start.ron",
        "--data",
        "data.csv",
        "--vary",
        "outside_mm:K+",
        "--free",
        "Na+,Cl-",
    ]);
    assert!(
        table.contains("0.040000") && table.contains("rms residual"),
        "{table}"
    );
}

#[test]
fn fit_bad_input_exits_2_naming_the_row_or_parameter() {
    let sb = setup();
    write_data(&sb, "good.csv", &ghk_points());
    sb.write("bad.csv", "value,v_mv\n2,-80\n5,-70\n10,minus sixty\n");
    sb.write("few.csv", "value,v_mv\n2,-80\n");
    let o = fit(&sb, "cell.ron", "bad.csv", "Na+", &[]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("row 4") && stderr(&o).contains("\"minus sixty\""),
        "{}",
        stderr(&o)
    );
    let o = fit(&sb, "cell.ron", "few.csv", "Na+,Cl-", &[]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("at least 3"), "{}", stderr(&o));
    let o = fit(&sb, "cell.ron", "good.csv", "Na+,Ca2+", &[]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("\"Ca2+\""), "{}", stderr(&o));
    let o = fit(&sb, "cell.ron", "good.csv", "K+", &[]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("reference"), "{}", stderr(&o));
    let o = fit(&sb, "cell.ron", "missing.csv", "Na+", &[]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("missing.csv"), "{}", stderr(&o));
    // A species twinned with Na+ cannot be told apart from it.
    let twin = CELL.replace(
        "    ],\n    protocol",
        "        (name: \"Li+\", charge: 1, inside_mm: 15.0, outside_mm: 140.0, permeability_cm_per_s: 1.0e-8),\n    ],\n    protocol",
    );
    sb.write("twin.ron", twin);
    let o = fit(&sb, "twin.ron", "good.csv", "Na+,Li+", &[]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("cannot determine") && stderr(&o).contains("\"Li+\""),
        "{}",
        stderr(&o)
    );
}

/// A data row at which the cell has no potential (no bath K+, no Na+ and no Cl- inside: every
/// current is outward, model.md) is bad data named by its row, not a fit that did not converge.
#[test]
fn fit_names_the_row_where_the_cell_has_no_potential() {
    let sb = setup();
    sb.write(
        "no_na.ron",
        CELL.replace("inside_mm: 12.0", "inside_mm: 0.0")
            .replace("permeability_cm_per_s: 4.0e-8", "permeability_cm_per_s: 0.0"),
    );
    sb.write(
        "zero.csv",
        "value,v_mv\n# a row without bath K+\n0,-95\n5,-80\n20,-50\n",
    );
    let o = fit(&sb, "no_na.ron", "zero.csv", "Cl-", &[]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("zero.csv (--data): row 3 (0)") && err.contains("no resting potential"),
        "{err}"
    );
    assert!(!err.contains("converge"), "{err}");
}

/// The bundled example data (`assets/bath-potassium-series.csv`, invented by us from
/// P_Na/P_K = 0.05 and P_Cl/P_K = 0.3 with 0.3 mV of seeded noise) fits back to those ratios
/// within three standard errors through the command a user would type.
#[test]
fn the_bundled_fit_example_recovers_its_ratios() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let out = permeant(
        root,
        &[
            "fit",
            "scenarios/resting-cell-normal-bath.ron",
            "--data",
            "assets/bath-potassium-series.csv",
            "--vary",
            "outside_mm:K+",
            "--free",
            "Na+,Cl-",
            "--json",
        ],
    );
    assert!(out.status.success(), "{}", stderr(&out));
    let j: Value = serde_json::from_str(&stdout(&out)).expect("one JSON object");
    for (name, truth) in [("Na+", 0.05), ("Cl-", 0.3)] {
        let r = j["ratios"][name].as_f64().expect("a ratio");
        let se = j["standard_errors"][name].as_f64().expect("a standard error");
        assert!((r - truth).abs() <= 3.0 * se, "{name}: {r} ± {se}, truth {truth}");
    }
    let rms = j["rms_residual_mv"].as_f64().expect("rms");
    assert!(rms > 0.1 && rms < 0.5, "rms residual {rms} mV for 0.3 mV noise");
}
