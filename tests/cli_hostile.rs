//! The command line against hostile targets and inputs (issue 14): output targets that are
//! devices, FIFOs, standard output, read-only files or the inputs themselves; a full or closed
//! standard error; interruption; oversized requests. Each test runs the real binary in a fresh
//! temporary directory. The scenarios are invented for these tests.

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

mod common;
use common::cli::{Sandbox, assert_bad_input, stderr};

/// A small passive cell: fast to run, a few columns.
const CELL: &str = r#"(
    format: 1,
    title: "Hostile targets",
    temperature_c: 25.0,
    species: [
        (name: "K+", charge: 1, inside_mm: 120.0, outside_mm: 6.0, permeability_cm_per_s: 3.0e-7),
        (name: "Na+", charge: 1, inside_mm: 10.0, outside_mm: 140.0, permeability_cm_per_s: 1.0e-8),
    ],
    run: (duration_ms: 10.0, sample_ms: 0.5),
)
"#;

/// `CELL` with another duration and sample interval.
fn cell_running(duration_ms: &str, sample_ms: &str) -> String {
    CELL.replace(
        "run: (duration_ms: 10.0, sample_ms: 0.5)",
        &format!("run: (duration_ms: {duration_ms}, sample_ms: {sample_ms})"),
    )
}

fn names_in(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .expect("lists")
        .filter_map(|e| e.ok().map(|e| e.file_name().to_string_lossy().into_owned()))
        .collect();
    v.sort();
    v
}

// ------------------------------------------------------- class 1: what a target is

#[cfg(unix)]
#[test]
fn a_fifo_target_is_written_straight_and_stays_a_fifo() {
    use std::os::unix::fs::FileTypeExt;
    let sb = Sandbox::with("cell.ron", CELL);
    let fifo = sb.path("pipe");
    let made = Command::new("mkfifo").arg(&fifo).status().expect("mkfifo runs");
    assert!(made.success());
    let reader = {
        let fifo = fifo.clone();
        std::thread::spawn(move || std::fs::read_to_string(fifo).expect("the FIFO reads"))
    };
    let o = sb.run(&["run", "cell.ron", "--csv", "pipe"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let text = reader.join().expect("the reader ends");
    assert!(text.starts_with("time_ms,v_mv,"), "{text}");
    assert_eq!(
        text.lines().count(),
        1 + 21,
        "a header and 21 rows (0 to 10 ms by 0.5)"
    );
    let kind = std::fs::symlink_metadata(&fifo).expect("still there").file_type();
    assert!(kind.is_fifo(), "the FIFO was replaced by {kind:?}");
    assert_eq!(names_in(sb.path(".").as_path()), ["cell.ron", "pipe"]);
}

#[test]
fn a_dash_is_standard_output() {
    let sb = Sandbox::with("cell.ron", CELL);
    let out = sb.ok(&["run", "cell.ron", "--csv", "-"]);
    assert!(out.starts_with("time_ms,v_mv,"), "{out}");
    assert_eq!(out.lines().count(), 22);
    assert_eq!(
        names_in(sb.path(".").as_path()),
        ["cell.ron"],
        "no file named `-`"
    );
}

#[cfg(unix)]
#[test]
fn a_read_only_target_is_refused_with_the_reason_and_kept() {
    use std::os::unix::fs::PermissionsExt;
    let sb = Sandbox::with("cell.ron", CELL);
    let target = sb.write("kept.csv", "earlier results\n");
    std::fs::set_permissions(&target, std::fs::Permissions::from_mode(0o444)).expect("chmod");
    let o = sb.run(&["run", "cell.ron", "--csv", "kept.csv"]);
    assert_bad_input(&o, &["--csv kept.csv", "read-only"]);
    assert_eq!(sb.read("kept.csv"), "earlier results\n");
}

#[test]
fn a_folder_target_is_refused() {
    let sb = Sandbox::with("cell.ron", CELL);
    std::fs::create_dir(sb.path("out")).expect("a folder");
    let o = sb.run(&["run", "cell.ron", "--csv", "out"]);
    assert_bad_input(&o, &["--csv out", "folder"]);
}

// ------------------------------------------------- class 2: outputs over inputs

#[test]
fn an_output_that_is_the_scenario_is_refused() {
    let sb = Sandbox::with("cell.ron", CELL);
    for args in [
        vec!["run", "cell.ron", "--csv", "cell.ron"],
        vec!["run", "cell.ron", "--csv", "x.csv", "--svg", "./cell.ron"],
        vec![
            "scan",
            "cell.ron",
            "--vary",
            "temperature_c",
            "--from",
            "20",
            "--to",
            "30",
            "--points",
            "3",
            "--csv",
            "cell.ron",
        ],
    ] {
        let o = sb.run(&args);
        assert_bad_input(&o, &["same file", "cell.ron"]);
        assert_eq!(sb.read("cell.ron"), CELL, "{args:?}");
    }
    assert_eq!(names_in(sb.path(".").as_path()), ["cell.ron"]);
}

#[cfg(unix)]
#[test]
fn an_output_that_reaches_the_scenario_through_a_link_is_refused() {
    let sb = Sandbox::with("cell.ron", CELL);
    std::os::unix::fs::symlink("cell.ron", sb.path("soft.csv")).expect("a link");
    std::fs::hard_link(sb.path("cell.ron"), sb.path("hard.csv")).expect("a hard link");
    for name in ["soft.csv", "hard.csv"] {
        let o = sb.run(&["run", "cell.ron", "--csv", name]);
        assert_bad_input(&o, &["same file", name]);
        assert_eq!(sb.read("cell.ron"), CELL);
    }
}

#[test]
fn two_outputs_in_one_file_are_refused() {
    let sb = Sandbox::with("cell.ron", CELL);
    sb.write("old.csv", "earlier\n");
    for args in [
        vec!["run", "cell.ron", "--csv", "old.csv", "--svg", "old.csv"],
        vec!["run", "cell.ron", "--csv", "new.csv", "--svg", "./new.csv"],
        vec!["run", "cell.ron", "--csv", "-", "--svg", "-"],
    ] {
        let o = sb.run(&args);
        assert_bad_input(&o, &["same file as --csv"]);
    }
    assert_eq!(sb.read("old.csv"), "earlier\n");
    assert_eq!(names_in(sb.path(".").as_path()), ["cell.ron", "old.csv"]);
}

#[test]
fn fit_data_that_is_the_scenario_is_only_read() {
    // Inputs may be the same file as each other; only outputs are refused.
    let sb = Sandbox::with("cell.ron", CELL);
    let o = sb.run(&[
        "fit",
        "cell.ron",
        "--data",
        "cell.ron",
        "--vary",
        "temperature_c",
        "--free",
        "Na+",
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert_eq!(sb.read("cell.ron"), CELL);
}

// --------------------------------------------- class 9: a closed or full stderr

#[cfg(target_os = "linux")]
#[test]
fn a_full_stderr_does_not_panic() {
    let sb = Sandbox::new();
    let full = std::fs::OpenOptions::new()
        .write(true)
        .open("/dev/full")
        .expect("/dev/full");
    let status = Command::new(env!("CARGO_BIN_EXE_permeant"))
        .args(["check", "missing.ron"])
        .current_dir(sb.path("."))
        .stdout(Stdio::null())
        .stderr(full)
        .status()
        .expect("runs");
    assert_eq!(status.code(), Some(2), "bad input, not a panic (101)");
}

#[cfg(target_os = "linux")]
#[test]
fn a_full_stdout_is_an_error_not_a_panic() {
    let sb = Sandbox::with("cell.ron", CELL);
    let full = std::fs::OpenOptions::new()
        .write(true)
        .open("/dev/full")
        .expect("/dev/full");
    let o = Command::new(env!("CARGO_BIN_EXE_permeant"))
        .args(["run", "cell.ron", "--csv", "-"])
        .current_dir(sb.path("."))
        .stdout(full)
        .output()
        .expect("runs");
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("cannot write"), "{err}");
}

#[test]
fn a_closed_stderr_does_not_panic() {
    let sb = Sandbox::new();
    let mut child = Command::new(env!("CARGO_BIN_EXE_permeant"))
        .args(["check", "missing.ron"])
        .current_dir(sb.path("."))
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("runs");
    // The reading end goes away before the program writes its message.
    drop(child.stderr.take());
    let status = child.wait().expect("ends");
    assert_eq!(status.code(), Some(2));
}

// ------------------------------------------ class 10: interruption cleans up

#[cfg(unix)]
fn interrupted_run_leaves_no_temporary_file(signal: &str) {
    let sb = Sandbox::with("long.ron", cell_running("9.0e6", "1.0"));
    sb.write("out.csv", "earlier results\n");
    let mut child = Command::new(env!("CARGO_BIN_EXE_permeant"))
        .args(["run", "long.ron", "--csv", "out.csv", "--columns", "v"])
        .current_dir(sb.path("."))
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("runs");
    let started = Instant::now();
    let tmp = loop {
        if let Some(n) = names_in(sb.path(".").as_path())
            .into_iter()
            .find(|n| n.ends_with(".tmp"))
        {
            break n;
        }
        assert!(
            started.elapsed() < Duration::from_secs(30),
            "no temporary file appeared"
        );
        if let Ok(Some(status)) = child.try_wait() {
            panic!("the run ended before it could be interrupted: {status}");
        }
        std::thread::sleep(Duration::from_millis(5));
    };
    assert!(tmp.starts_with(".out.csv."), "{tmp}");
    let killed = Command::new("kill")
        .args([signal, &child.id().to_string()])
        .status()
        .expect("kill runs");
    assert!(killed.success());
    let status = child.wait().expect("ends");
    assert!(!status.success(), "{status}");
    assert_eq!(names_in(sb.path(".").as_path()), ["long.ron", "out.csv"]);
    assert_eq!(sb.read("out.csv"), "earlier results\n");
}

#[cfg(unix)]
#[test]
fn sigterm_removes_the_temporary_file() {
    interrupted_run_leaves_no_temporary_file("-TERM");
}

#[cfg(unix)]
#[test]
fn sigint_removes_the_temporary_file() {
    interrupted_run_leaves_no_temporary_file("-INT");
}

// ------------------------------------------------- class 3: big runs

#[test]
fn a_run_whose_csv_would_be_huge_is_refused_before_it_starts() {
    // 1e7 rows of 4 columns (time, V, two currents) at about 20 bytes a number: 0.8 GB is
    // allowed; 1e7 rows of a cell with many tracked species are not.
    let mut species = String::new();
    for k in 0..30 {
        species += &format!(
            "(name: \"X{k}\", charge: 1, inside_mm: 10.0, outside_mm: 10.0, permeability_cm_per_s: 1.0e-9),\n"
        );
    }
    let big = cell_running("9.0e5", "0.1").replace(
        "species: [\n",
        &format!("cell: (track_concentrations: true),\n    species: [\n{species}"),
    );
    let sb = Sandbox::with("big.ron", big);
    let o = sb.run(&["run", "big.ron", "--csv", "out.csv"]);
    assert_bad_input(&o, &["big.ron", "GB", "--sample-ms", "--columns v"]);
    assert_eq!(names_in(sb.path(".").as_path()), ["big.ron"]);
}

#[test]
fn columns_v_writes_time_and_potential_only() {
    let sb = Sandbox::with("cell.ron", CELL);
    let all = sb.ok(&["run", "cell.ron", "--csv", "-"]);
    let v = sb.ok(&["run", "cell.ron", "--csv", "-", "--columns", "v"]);
    assert_eq!(v.lines().next(), Some("time_ms,v_mv"));
    // The same potentials as the full CSV, row by row.
    for (a, b) in all.lines().zip(v.lines()).skip(1) {
        let first_two: Vec<&str> = a.split(',').take(2).collect();
        assert_eq!(first_two.join(","), b);
    }
    let currents = sb.ok(&["run", "cell.ron", "--csv", "-", "--columns", "currents"]);
    assert_eq!(
        currents.lines().next(),
        Some("time_ms,v_mv,i_ua_per_cm2:K+,i_ua_per_cm2:Na+")
    );
    let o = sb.run(&["run", "cell.ron", "--csv", "-", "--columns", "volts"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("choose one of all, currents, v"),
        "{}",
        stderr(&o)
    );
}

// ------------------------------------------------- class 7: scan --points

#[test]
fn scan_points_are_bounded_and_told_in_plain_words() {
    let sb = Sandbox::with("cell.ron", CELL);
    for n in ["18446744073709551615", "1000000000", "-3", "2.5", "many"] {
        let o = sb.run(&[
            "scan",
            "cell.ron",
            "--vary",
            "temperature_c",
            "--from",
            "20",
            "--to",
            "30",
            "--points",
            n,
        ]);
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(2), "{n}: {err}");
        assert!(err.contains("whole number from 1 to 100000"), "{n}: {err}");
        assert!(!err.contains("panicked"), "{err}");
    }
    // Negative ends are numbers, and an infinite one is named as such.
    let o = sb.run(&[
        "scan",
        "cell.ron",
        "--vary",
        "temperature_c",
        "--from",
        "-inf",
        "--to",
        "30",
        "--points",
        "3",
    ]);
    assert_bad_input(&o, &["finite", "-inf"]);
    let out = sb.ok(&[
        "scan",
        "cell.ron",
        "--vary",
        "temperature_c",
        "--from",
        "-5",
        "--to",
        "5",
        "--points",
        "3",
        "--json",
    ]);
    assert!(out.contains("\"value\":-5.0"), "{out}");
}

// ------------------------------------------------------------- class 8: fit

#[test]
fn fit_refuses_a_measured_potential_no_cell_reaches() {
    let sb = Sandbox::with("cell.ron", CELL);
    sb.write("data.csv", "value,v_mv\n4,-80\n10,1e308\n20,-50\n");
    let o = sb.run(&[
        "fit",
        "cell.ron",
        "--data",
        "data.csv",
        "--vary",
        "outside_mm:K+",
        "--free",
        "Na+",
    ]);
    assert_bad_input(&o, &["data.csv", "row 3", "1000 mV"]);
}

#[cfg(target_os = "linux")]
#[test]
fn fit_data_is_read_with_a_size_cap() {
    let sb = Sandbox::with("cell.ron", CELL);
    let o = sb.run(&[
        "fit",
        "cell.ron",
        "--data",
        "/dev/zero",
        "--vary",
        "outside_mm:K+",
        "--free",
        "Na+",
    ]);
    assert_bad_input(&o, &["/dev/zero", "larger than"]);
}
