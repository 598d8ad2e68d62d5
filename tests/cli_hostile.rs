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

// --------------------------------------------- classes 4 and 5: size and stiffness

#[test]
fn a_model_beyond_the_size_limits_is_refused_by_check() {
    let mut species = String::new();
    for k in 0..48 {
        species += &format!(
            "(name: \"X{k}\", charge: 1, inside_mm: 10.0, outside_mm: 10.0, permeability_cm_per_s: 1.0e-9),\n"
        );
    }
    let fifty = CELL.replace("species: [\n", &format!("species: [\n{species}"));
    let sb = Sandbox::with("fifty.ron", &fifty);
    sb.ok(&["check", "fifty.ron"]);
    let fifty_one = fifty.replace("species: [\n", "species: [\n(name: \"Y\", charge: 1, inside_mm: 1.0, outside_mm: 1.0, permeability_cm_per_s: 0.0),\n");
    sb.write("more.ron", fifty_one);
    let o = sb.run(&["check", "more.ron"]);
    assert_bad_input(&o, &["more.ron", "species: 51 species, more than the 50"]);
}

#[test]
fn a_time_constant_too_short_to_integrate_is_refused() {
    let gated = CELL.replace(
        "    run:",
        "    cell: (track_concentrations: true),\n    channels: [(label: \"fast\", species: \"K+\", max_permeability_cm_per_s: 1.0e-6,\n        gates: [(kinetics: Boltzmann(v_half_mv: -40.0, slope_mv: 5.0, tau_ms: 1.0e-20), power: 1)])],\n    run:",
    );
    let sb = Sandbox::with("stiff.ron", gated);
    let o = sb.run(&["check", "stiff.ron"]);
    assert_bad_input(
        &o,
        &[
            "channels[0].gates[0].kinetics.tau_ms",
            "from 0.001 to 1000000000 ms (got 1e-20)",
        ],
    );
}

// --------------------------------------------- class 6: check and run agree

#[test]
fn check_warns_when_run_cannot_start_and_run_says_why() {
    // Only K+ is permeant and none is inside: its current is inward at every potential, so
    // there is no resting potential to start from.
    let no_rest = CELL
        .replace("inside_mm: 120.0", "inside_mm: 0.0")
        .replace("permeability_cm_per_s: 1.0e-8", "permeability_cm_per_s: 0.0");
    let sb = Sandbox::with("norest.ron", no_rest);
    let o = sb.run(&["check", "norest.ron"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("`permeant run` cannot start this scenario"),
        "{}",
        stderr(&o)
    );
    let o = sb.run(&["run", "norest.ron", "--csv", "out.csv"]);
    assert_bad_input(&o, &["norest.ron", "cannot start at rest"]);
}

#[test]
fn a_run_that_leaves_the_models_range_exits_2_with_quantity_time_and_reason() {
    let pushed = CELL.replace(
        "    run:",
        "    protocol: [Inject(amplitude_ua_per_cm2: -10000.0, from_ms: 1.0, until_ms: 6.0)],\n    run:",
    );
    let sb = Sandbox::with("pushed.ron", pushed);
    sb.ok(&["check", "pushed.ron"]);
    let o = sb.run(&["run", "pushed.ron", "--csv", "out.csv"]);
    assert_bad_input(&o, &["pushed.ron", "at t = ", "v_mv", "±1000 mV"]);
    assert_eq!(names_in(sb.path(".").as_path()), ["pushed.ron"], "no partial CSV");
}

// ------------------------------------------------------------ class 11: smaller

#[test]
fn names_that_read_as_one_ion_are_refused() {
    let sb = Sandbox::new();
    for (other, name) in [("k+", "k+"), ("K+ ", "K+ ")] {
        sb.write(
            "alike.ron",
            CELL.replace("name: \"Na+\"", &format!("name: \"{other}\"")),
        );
        let o = sb.run(&["check", "alike.ron"]);
        assert_bad_input(&o, &["species[1].name", name, "only in capitals or spaces"]);
    }
}

#[test]
fn control_characters_in_names_are_refused() {
    let sb = Sandbox::with("ctl.ron", CELL.replace("name: \"Na+\"", "name: \"Na\\u{1b}+\""));
    let o = sb.run(&["check", "ctl.ron"]);
    assert_bad_input(&o, &["species[1].name", "control characters"]);
}

#[test]
fn the_pulse_limit_counts_every_train_of_the_run() {
    // Ten trains of 600,000 pulses: each under the limit of 5 million, together over it.
    let train = "InjectTrain(amplitude_ua_per_cm2: 1.0, from_ms: 0.0, width_ms: 0.0001, period_ms: 0.0002, count: 600000)";
    let trains = [train; 10].join(", ");
    let s = cell_running("200.0", "1.0").replace("    run:", &format!("    protocol: [{trains}],\n    run:"));
    let sb = Sandbox::with("trains.ron", s);
    let o = sb.run(&["check", "trains.ron"]);
    assert_bad_input(&o, &["protocol[8].count", "this train and those before it"]);
}

#[test]
fn a_single_pulse_late_in_a_long_period_is_accepted() {
    let s = cell_running("10.0", "0.5").replace(
        "    run:",
        "    protocol: [InjectTrain(amplitude_ua_per_cm2: 1.0, from_ms: 2.0, width_ms: 1.0, period_ms: 1.0e12, count: 1)],\n    run:",
    );
    let sb = Sandbox::with("one.ron", s);
    sb.ok(&["check", "one.ron"]);
}

#[test]
fn huge_numbers_in_messages_are_written_readably() {
    let sb = Sandbox::with("big.ron", CELL.replace("outside_mm: 6.0", "outside_mm: 1e300"));
    let o = sb.run(&["check", "big.ron"]);
    assert_bad_input(&o, &["species[0].outside_mm", "(got 1e300)"]);
    assert!(!stderr(&o).contains("000000000000000000000"), "{}", stderr(&o));
}

#[test]
fn a_sample_interval_a_hair_longer_than_the_run_writes_no_row_after_the_end() {
    let sb = Sandbox::with("cell.ron", cell_running("200.0", "1.0"));
    let out = sb.ok(&[
        "run",
        "cell.ron",
        "--csv",
        "-",
        "--sample-ms",
        "200.0000001",
        "--columns",
        "v",
    ]);
    let times: Vec<f64> = out
        .lines()
        .skip(1)
        .map(|l| l.split(',').next().and_then(|t| t.parse().ok()).expect("a time"))
        .collect();
    assert_eq!(times, [0.0, 200.0]);
}

#[test]
fn carriage_return_line_ends_give_the_real_line() {
    // Line 9 (the run) has a bad value; the comment on line 1 must not swallow the file.
    let text = format!(
        "// old line ends\n{}",
        CELL.replace("duration_ms: 10.0", "duration_ms: \"ten\"")
    );
    let sb = Sandbox::with("cr.ron", text.replace('\n', "\r"));
    let o = sb.run(&["check", "cr.ron"]);
    assert_bad_input(&o, &["cr.ron:10:"]);
}

#[test]
fn a_mistyped_command_is_named_with_the_nearest_one() {
    let sb = Sandbox::new();
    let o = sb.run(&["chek"]);
    assert_bad_input(&o, &["`chek` is not a command", "permeant check"]);
}

#[cfg(unix)]
#[test]
fn a_fifo_as_the_scenario_is_refused_at_once() {
    let sb = Sandbox::new();
    let made = Command::new("mkfifo")
        .arg(sb.path("pipe.ron"))
        .status()
        .expect("mkfifo runs");
    assert!(made.success());
    let o = sb.run(&["check", "pipe.ron"]);
    assert_bad_input(&o, &["pipe.ron", "named pipe"]);
}

#[cfg(all(feature = "gui", target_os = "linux"))]
#[test]
fn without_a_display_the_window_says_so_in_plain_words() {
    let sb = Sandbox::with("cell.ron", CELL);
    let o = Command::new(env!("CARGO_BIN_EXE_permeant"))
        .arg("cell.ron")
        .current_dir(sb.path("."))
        .env_remove("DISPLAY")
        .env_remove("WAYLAND_DISPLAY")
        .output()
        .expect("runs");
    assert_bad_input(&o, &["no display is available", "permeant run FILE --csv OUT"]);
    assert!(!stderr(&o).contains(".rs"), "{}", stderr(&o));
}

#[test]
fn a_title_with_control_characters_still_gives_an_xml_figure() {
    let sb = Sandbox::with(
        "ctl.ron",
        CELL.replace(
            "title: \"Hostile targets\"",
            "title: \"tab\\there, bell\\u{7}, line\\nbreak\"",
        ),
    );
    sb.ok(&["run", "ctl.ron", "--csv", "out.csv", "--svg", "out.svg"]);
    let svg = sb.read("out.svg");
    roxmltree::Document::parse(&svg).unwrap_or_else(|e| panic!("not XML: {e}"));
}

#[test]
fn absent_ions_are_not_blamed_on_the_permeabilities() {
    let empty = CELL
        .replace(
            "inside_mm: 120.0, outside_mm: 6.0",
            "inside_mm: 0.0, outside_mm: 0.0",
        )
        .replace(
            "inside_mm: 10.0, outside_mm: 140.0",
            "inside_mm: 0.0, outside_mm: 0.0",
        );
    let sb = Sandbox::with("empty.ron", empty);
    let o = sb.run(&["rest", "empty.ron"]);
    let err = stderr(&o);
    assert!(err.contains("0 mM on both sides"), "{err}");
    assert!(!err.contains("no species has a resting permeability"), "{err}");
}

/// Peak resident memory (VmHWM) of a finished `permeant` run, MB, read from /proc while it runs.
#[cfg(target_os = "linux")]
fn peak_mb(sb: &Sandbox, args: &[&str]) -> f64 {
    let mut child = Command::new(env!("CARGO_BIN_EXE_permeant"))
        .args(args)
        .current_dir(sb.path("."))
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("runs");
    let status = format!("/proc/{}/status", child.id());
    let mut peak_kb = 0.0f64;
    loop {
        if let Ok(text) = std::fs::read_to_string(&status)
            && let Some(kb) = text
                .lines()
                .find_map(|l| l.strip_prefix("VmHWM:"))
                .and_then(|v| v.trim().trim_end_matches("kB").trim().parse::<f64>().ok())
        {
            peak_kb = peak_kb.max(kb);
        }
        if let Ok(Some(s)) = child.try_wait() {
            assert!(s.success(), "{args:?}: {s}");
            return peak_kb / 1024.0;
        }
        std::thread::sleep(Duration::from_millis(2));
    }
}

/// Memory does not grow with the length of a run, figure included: twenty times the samples
/// take no more than a few MB more at their peak.
#[cfg(target_os = "linux")]
#[test]
fn memory_stays_flat_as_a_run_grows() {
    let sb = Sandbox::new();
    sb.write("short.ron", cell_running("10000.0", "0.1"));
    sb.write("long.ron", cell_running("200000.0", "0.1"));
    let short = peak_mb(&sb, &["run", "short.ron", "--csv", "a.csv", "--svg", "a.svg"]);
    let long = peak_mb(&sb, &["run", "long.ron", "--csv", "b.csv", "--svg", "b.svg"]);
    assert!(
        long < short + 8.0,
        "peak {short:.1} MB for 1e5 samples, {long:.1} MB for 2e6"
    );
}

#[test]
fn a_mistyped_command_before_a_file_is_named_too() {
    let sb = Sandbox::with("cell.ron", CELL);
    let o = sb.run(&["chek", "cell.ron"]);
    assert_bad_input(&o, &["`chek` is not a command", "permeant check"]);
    // A scenario file and the real commands still work as before.
    sb.ok(&["check", "cell.ron"]);
    let o = sb.run(&[
        "sweep",
        "cell.ron",
        "--vary",
        "temperature_c",
        "--from",
        "20",
        "--to",
        "30",
        "--points",
        "2",
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
}

#[test]
fn a_negative_sample_interval_gets_the_reason_not_a_parser_error() {
    let sb = Sandbox::with("cell.ron", CELL);
    let o = sb.run(&["run", "cell.ron", "--csv", "out.csv", "--sample-ms", "-3"]);
    assert_bad_input(&o, &["--sample-ms -3", "greater than 0"]);
    let o = sb.run(&["run", "cell.ron", "--csv", "out.csv", "--sample-ms", "fast"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("\"fast\" is not a number"), "{}", stderr(&o));
}
