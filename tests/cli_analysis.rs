//! `permeant scan` and `permeant fit` through the real binary in a fresh temporary directory:
//! the JSON and CSV shapes of command-line.md, agreement with `permeant rest` and with the
//! library, and exit status 2 with a message naming the place for bad input.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use permeant::analysis::sweep::{SweepControl, SweepRange, Vary, sweep};
use serde_json::Value;

/// A passive cell invented for these tests: P_K : P_Na : P_Cl = 1 : 0.04 : 0.45, and an agent
/// that blocks potassium.
const CELL: &str = r#"(
    format: 1,
    title: "Test cell for sweeps and fits",
    temperature_c: 22.0,
    species: [
        (name: "K+",  charge: 1,  inside_mm: 150.0, outside_mm: 4.0,   permeability_cm_per_s: 1.0e-6),
        (name: "Na+", charge: 1,  inside_mm: 15.0,  outside_mm: 140.0, permeability_cm_per_s: 4.0e-8),
        (name: "Cl-", charge: -1, inside_mm: 12.0,  outside_mm: 110.0, permeability_cm_per_s: 4.5e-7),
    ],
    protocol: [Agent(label: "k blocker", species: "K+", max_block: 0.8, ic50_um: 2.0, dose_um: 1.0, from_ms: 10.0)],
    run: (duration_ms: 50.0),
)"#;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_permeant"))
}

fn run_in(dir: &Path, args: &[&str]) -> Output {
    bin()
        .current_dir(dir)
        .args(args)
        .output()
        .expect("runs the binary")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}
fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn setup() -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().expect("temp dir");
    let file = dir.path().join("cell.ron");
    std::fs::write(&file, CELL).expect("writes");
    (dir, file)
}

#[test]
fn the_old_name_sweep_still_scans_but_is_not_listed() {
    let (dir, _) = setup();
    let args = |cmd: &'static str| {
        [
            cmd,
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
        ]
    };
    let new = run_in(dir.path(), &args("scan"));
    let old = run_in(dir.path(), &args("sweep"));
    assert!(
        new.status.success() && old.status.success(),
        "{}{}",
        stderr(&new),
        stderr(&old)
    );
    assert_eq!(stdout(&old), stdout(&new));
    let help = run_in(dir.path(), &["--help"]);
    assert!(
        stdout(&help).contains("scan") && !stdout(&help).contains("sweep"),
        "{}",
        stdout(&help)
    );
}

#[test]
fn sweep_json_has_the_documented_shape_and_matches_rest() {
    let (dir, _) = setup();
    let o = run_in(
        dir.path(),
        &[
            "scan",
            "cell.ron",
            "--vary",
            "outside_mm:K+",
            "--from",
            "2",
            "--to",
            "100",
            "--points",
            "5",
            "--log",
            "--json",
        ],
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
        assert!(p["ghk_mv"].is_f64() && p["resting_mv"].is_f64());
    }
    // The same numbers as the library computes. serde_json's default reader may round the
    // last bit differently from Rust's, so compare to a few units in the last place here; the
    // CSV test below checks exact round trips with Rust's own parser.
    let s = permeant::scenario::from_str(CELL, "cell.ron").expect("valid");
    let lib = sweep(
        &s,
        &Vary::OutsideMm("K+".into()),
        &SweepRange {
            from: 2.0,
            to: 100.0,
            points: 5,
            log: true,
        },
        &SweepControl::default(),
    )
    .expect("sweep");
    let close = |a: Option<f64>, b: Option<f64>| match (a, b) {
        (Some(a), Some(b)) => (a - b).abs() <= 4.0 * f64::EPSILON * b.abs(),
        _ => false,
    };
    for (p, q) in pts.iter().zip(&lib) {
        assert!(close(p["value"].as_f64(), Some(q.value)));
        assert!(close(p["resting_mv"].as_f64(), q.resting_mv), "{p} vs {q:?}");
        assert!(close(p["ghk_mv"].as_f64(), q.ghk_mv), "{p} vs {q:?}");
    }
    // And as `permeant rest` on a file with the last value written in.
    std::fs::write(
        dir.path().join("k100.ron"),
        CELL.replace("outside_mm: 4.0", "outside_mm: 100.0"),
    )
    .expect("writes");
    let r = run_in(dir.path(), &["rest", "k100.ron", "--json"]);
    assert!(r.status.success(), "{}", stderr(&r));
    let rj: Value = serde_json::from_str(&stdout(&r)).expect("json");
    assert_eq!(rj["resting_mv"], pts[4]["resting_mv"]);
    assert_eq!(rj["ghk_mv"], pts[4]["ghk_mv"]);
}

#[test]
fn sweep_csv_and_table() {
    let (dir, _) = setup();
    let o = run_in(
        dir.path(),
        &[
            "scan",
            "cell.ron",
            "--vary",
            "dose_um:k blocker",
            "--from",
            "0.01",
            "--to",
            "100",
            "--points",
            "3",
            "--log",
            "--csv",
            "out.csv",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = std::fs::read_to_string(dir.path().join("out.csv")).expect("csv written");
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "value,ghk_mv,resting_mv");
    assert_eq!(lines.len(), 4);
    let row: Vec<f64> = lines[2].split(',').map(|c| c.parse().expect("number")).collect();
    assert_eq!(row[0], 1.0, "a log range through a decade hits it exactly");
    // The numbers read back to exactly the library's.
    let s = permeant::scenario::from_str(CELL, "cell.ron").expect("valid");
    let lib =
        permeant::analysis::sweep::sweep_point(&s, &Vary::DoseUm("k blocker".into()), 1.0).expect("point");
    assert_eq!((Some(row[1]), Some(row[2])), (lib.ghk_mv, lib.resting_mv));
    // A potassium blocker depolarizes: the steady state rises with dose, while the GHK
    // potential (file values, model.md) does not move.
    let last: Vec<f64> = lines[3].split(',').map(|c| c.parse().expect("number")).collect();
    assert!(last[2] > row[2] && row[1] == last[1], "{text}");
    // The table names the quantity with its unit.
    let table = stdout(&o);
    assert!(
        table.contains("dose_um (µM)") && table.contains("resting (mV)"),
        "{table}"
    );

    // An undefined potential is an empty cell, with the reason on stderr and exit status 0.
    let o = run_in(
        dir.path(),
        &[
            "scan",
            "cell.ron",
            "--vary",
            "outside_mm:K+",
            "--from",
            "0",
            "--to",
            "5",
            "--points",
            "2",
            "--csv",
            "k.csv",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    std::fs::write(
        dir.path().join("only_k.ron"),
        CELL.replace("4.0e-8", "0.0").replace("4.5e-7", "0.0"),
    )
    .expect("writes");
    let o = run_in(
        dir.path(),
        &[
            "scan",
            "only_k.ron",
            "--vary",
            "outside_mm:K+",
            "--from",
            "0",
            "--to",
            "5",
            "--points",
            "2",
            "--csv",
            "k.csv",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = std::fs::read_to_string(dir.path().join("k.csv")).expect("csv written");
    assert!(text.lines().nth(1) == Some("0,,"), "{text}");
    assert!(
        stderr(&o).contains("undefined") && stderr(&o).contains("outside_mm:K+ = 0"),
        "{}",
        stderr(&o)
    );
    assert!(stdout(&o).contains("—"), "{}", stdout(&o));

    // A range whose end leaves no permeant species is refused before any point is computed.
    let o = run_in(
        dir.path(),
        &[
            "scan",
            "only_k.ron",
            "--vary",
            "permeability:K+",
            "--from",
            "0",
            "--to",
            "1e-6",
            "--points",
            "2",
            "--csv",
            "u.csv",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(!dir.path().join("u.csv").exists());
    assert!(stderr(&o).contains("permeability:K+ = 0"), "{}", stderr(&o));
}

#[test]
fn sweep_bad_input_exits_2_naming_the_problem() {
    let (dir, _) = setup();
    let cases: [(&[&str], &[&str]); 5] = [
        (
            &[
                "--vary",
                "outside_mm:Ca2+",
                "--from",
                "1",
                "--to",
                "2",
                "--points",
                "3",
            ],
            &["\"Ca2+\"", "\"K+\", \"Na+\", \"Cl-\""],
        ),
        (
            &[
                "--vary",
                "dose_um:nothing",
                "--from",
                "1",
                "--to",
                "2",
                "--points",
                "3",
            ],
            &["\"nothing\"", "\"k blocker\""],
        ),
        (
            &["--vary", "pressure", "--from", "1", "--to", "2", "--points", "3"],
            &["\"pressure\"", "temperature_c"],
        ),
        (
            &[
                "--vary",
                "outside_mm:K+",
                "--from",
                "-1",
                "--to",
                "2",
                "--points",
                "3",
                "--log",
            ],
            &["log range"],
        ),
        (
            &[
                "--vary",
                "temperature_c",
                "--from",
                "10",
                "--to",
                "80",
                "--points",
                "3",
            ],
            &["temperature_c = 80"],
        ),
    ];
    for (args, needles) in cases {
        let mut all = vec!["scan", "cell.ron"];
        all.extend_from_slice(args);
        let o = run_in(dir.path(), &all);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
        assert!(o.stdout.is_empty());
        for n in needles {
            assert!(stderr(&o).contains(n), "{args:?}: {} lacks {n}", stderr(&o));
        }
    }
    let o = run_in(
        dir.path(),
        &[
            "scan",
            "missing.ron",
            "--vary",
            "temperature_c",
            "--from",
            "1",
            "--to",
            "2",
            "--points",
            "3",
        ],
    );
    assert_eq!(o.status.code(), Some(2));
}

/// Writes measured-looking points: `permeant sweep`'s own resting potentials over bath K+.
fn write_data(dir: &Path, name: &str, values: &[(f64, f64)]) {
    let mut text = String::from("value,v_mv\n");
    for (x, v) in values {
        text += &format!("{x},{v}\n");
    }
    std::fs::write(dir.join(name), text).expect("writes");
}

fn sweep_points(dir: &Path) -> Vec<(f64, f64)> {
    let o = run_in(
        dir,
        &[
            "scan",
            "cell.ron",
            "--vary",
            "outside_mm:K+",
            "--from",
            "2",
            "--to",
            "100",
            "--points",
            "8",
            "--log",
            "--json",
        ],
    );
    let j: Value = serde_json::from_str(&stdout(&o)).expect("json");
    j["points"]
        .as_array()
        .expect("points")
        .iter()
        .map(|p| {
            (
                p["value"].as_f64().expect("x"),
                p["resting_mv"].as_f64().expect("v"),
            )
        })
        .collect()
}

#[test]
fn fit_json_recovers_the_ratios_the_data_were_made_with() {
    let (dir, _) = setup();
    write_data(dir.path(), "data.csv", &sweep_points(dir.path()));
    // Start the fit from other ratios.
    std::fs::write(
        dir.path().join("start.ron"),
        CELL.replace("4.0e-8", "2.0e-7").replace("4.5e-7", "5.0e-8"),
    )
    .expect("writes");
    let o = run_in(
        dir.path(),
        &[
            "fit",
            "start.ron",
            "--data",
            "data.csv",
            "--vary",
            "outside_mm:K+",
            "--free",
            "Na+,Cl-",
            "--json",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let j: Value = serde_json::from_str(&stdout(&o)).expect("json");
    assert!(
        (j["ratios"]["Na+"].as_f64().expect("Na+") - 0.04).abs() < 1e-8,
        "{j}"
    );
    assert!(
        (j["ratios"]["Cl-"].as_f64().expect("Cl-") - 0.45).abs() < 1e-8,
        "{j}"
    );
    assert!(j["standard_errors"]["Na+"].as_f64().expect("se") < 1e-8);
    assert!(j["rms_residual_mv"].as_f64().expect("rms") < 1e-9);
    assert_eq!(j["residuals"].as_array().expect("residuals").len(), 8);
    // The readable table carries the same ratio.
    let o = run_in(
        dir.path(),
        &[
            "fit",
            "start.ron",
            "--data",
            "data.csv",
            "--vary",
            "outside_mm:K+",
            "--free",
            "Na+,Cl-",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stdout(&o).contains("0.040000") && stdout(&o).contains("rms residual"),
        "{}",
        stdout(&o)
    );
}

#[test]
fn fit_bad_input_exits_2_naming_the_row_or_parameter() {
    let (dir, _) = setup();
    let pts = sweep_points(dir.path());
    write_data(dir.path(), "good.csv", &pts);
    std::fs::write(
        dir.path().join("bad.csv"),
        "value,v_mv\n2,-80\n5,-70\n10,minus sixty\n",
    )
    .expect("writes");
    std::fs::write(dir.path().join("few.csv"), "value,v_mv\n2,-80\n").expect("writes");
    let fit = |data: &str, free: &str| {
        run_in(
            dir.path(),
            &[
                "fit",
                "cell.ron",
                "--data",
                data,
                "--vary",
                "outside_mm:K+",
                "--free",
                free,
            ],
        )
    };
    let o = fit("bad.csv", "Na+");
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("row 4") && stderr(&o).contains("\"minus sixty\""),
        "{}",
        stderr(&o)
    );
    let o = fit("few.csv", "Na+,Cl-");
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("at least 3"), "{}", stderr(&o));
    let o = fit("good.csv", "Na+,Ca2+");
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("\"Ca2+\""), "{}", stderr(&o));
    let o = fit("good.csv", "K+");
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("reference"), "{}", stderr(&o));
    let o = fit("missing.csv", "Na+");
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("missing.csv"), "{}", stderr(&o));
    // A species twinned with Na+ cannot be told apart from it.
    let twin = CELL.replace(
        "    ],\n    protocol",
        "        (name: \"Li+\", charge: 1, inside_mm: 15.0, outside_mm: 140.0, permeability_cm_per_s: 1.0e-8),\n    ],\n    protocol",
    );
    std::fs::write(dir.path().join("twin.ron"), twin).expect("writes");
    let o = run_in(
        dir.path(),
        &[
            "fit",
            "twin.ron",
            "--data",
            "good.csv",
            "--vary",
            "outside_mm:K+",
            "--free",
            "Na+,Li+",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("cannot determine") && stderr(&o).contains("\"Li+\""),
        "{}",
        stderr(&o)
    );
}

/// The bundled example data (`assets/bath-potassium-series.csv`, invented by us from
/// P_Na/P_K = 0.05 and P_Cl/P_K = 0.3 with 0.3 mV of seeded noise) fits back to those ratios
/// within three standard errors through the command a user would type.
#[test]
fn the_bundled_fit_example_recovers_its_ratios() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let out = run_in(
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
