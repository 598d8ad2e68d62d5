//! The command line as a user meets it: the real `permeant` binary run in a fresh temporary
//! directory, checked against command-line.md (exit status 0 / 2, messages on stderr naming the
//! file, the place and the reason, `rest --json`'s shape).
//!
//! The scenarios here are invented for these tests.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use serde_json::Value;

/// A small passive cell: potassium alone is permeant, so its GHK potential is its Nernst
/// potential; calcium has none inside, so its reversal potential is undefined.
const GOOD: &str = r#"(
    format: 1,
    title: "Two ions",
    temperature_c: 25.0,
    species: [
        (name: "K+", charge: 1, inside_mm: 120.0, outside_mm: 6.0, permeability_cm_per_s: 3.0e-7),
        (name: "Ca2+", charge: 2, inside_mm: 0.0, outside_mm: 2.5, permeability_cm_per_s: 0.0),
        (name: "Cl-", charge: -1, inside_mm: 9.0, outside_mm: 115.0, permeability_cm_per_s: 0.0),
    ],
    run: (duration_ms: 10.0, sample_ms: 0.5),
)
"#;

/// A fresh directory holding the files of one test; commands run inside it.
struct Sandbox {
    dir: tempfile::TempDir,
}

impl Sandbox {
    fn new() -> Self {
        Sandbox {
            dir: tempfile::tempdir().expect("a temporary directory"),
        }
    }

    fn write(&self, name: &str, contents: impl AsRef<[u8]>) -> PathBuf {
        let path = self.dir.path().join(name);
        std::fs::write(&path, contents).expect("write a test file");
        path
    }

    fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    fn run(&self, args: &[&str]) -> Output {
        Command::new(env!("CARGO_BIN_EXE_permeant"))
            .args(args)
            .current_dir(self.dir.path())
            .output()
            .expect("run the permeant binary")
    }
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// Exit status 2 (bad input), a message on stderr containing every word, nothing on stdout,
/// and no panic.
fn assert_bad_input(o: &Output, words: &[&str]) {
    let err = stderr(o);
    assert_eq!(o.status.code(), Some(2), "exit status; stderr:\n{err}");
    assert!(!err.contains("panicked"), "{err}");
    assert!(o.stdout.is_empty(), "nothing on stdout, got:\n{}", stdout(o));
    for w in words {
        assert!(err.contains(w), "`{w}` missing from stderr:\n{err}");
    }
}

fn good_with(old: &str, new: &str) -> String {
    assert_eq!(
        GOOD.matches(old).count(),
        1,
        "test setup: `{old}` must occur once"
    );
    GOOD.replacen(old, new, 1)
}

// ------------------------------------------------------------------------- check

#[test]
fn check_prints_ok_for_a_good_file() {
    let sb = Sandbox::new();
    sb.write("good.ron", GOOD);
    let o = sb.run(&["check", "good.ron"]);
    assert_eq!(o.status.code(), Some(0), "stderr:\n{}", stderr(&o));
    assert_eq!(stdout(&o).trim(), "ok");
    assert!(stderr(&o).is_empty(), "no warnings expected:\n{}", stderr(&o));
}

#[test]
fn check_accepts_every_shipped_scenario() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("scenarios");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("the scenarios directory")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "ron"))
        .collect();
    files.sort();
    assert!(!files.is_empty(), "scenarios/ holds the shipped examples");
    let sb = Sandbox::new();
    for f in files {
        let name = f.to_string_lossy().into_owned();
        let o = sb.run(&["check", &name]);
        assert_eq!(o.status.code(), Some(0), "{name}:\n{}", stderr(&o));
        assert_eq!(stdout(&o).trim(), "ok", "{name}");
    }
}

#[test]
fn check_warns_about_an_unusual_temperature_but_passes() {
    let sb = Sandbox::new();
    sb.write(
        "warm.ron",
        good_with("temperature_c: 25.0", "temperature_c: 50.0"),
    );
    let o = sb.run(&["check", "warm.ron"]);
    assert_eq!(o.status.code(), Some(0));
    assert_eq!(stdout(&o).trim(), "ok");
    let err = stderr(&o);
    assert!(
        err.contains("warning") && err.contains("temperature_c") && err.contains("warm.ron"),
        "{err}"
    );
}

#[test]
fn check_refuses_a_syntax_error_with_line_and_column() {
    let sb = Sandbox::new();
    sb.write(
        "bad.ron",
        good_with("outside_mm: 6.0, permeability", "outside_mm: 6.0 permeability"),
    );
    // Line 6, at the word after the missing comma.
    assert_bad_input(&sb.run(&["check", "bad.ron"]), &["bad.ron:6:67:", "comma"]);
}

#[test]
fn check_refuses_an_unknown_field_and_suggests_the_known_one() {
    let sb = Sandbox::new();
    sb.write("bad.ron", good_with("sample_ms: 0.5", "sampel_ms: 0.5"));
    assert_bad_input(
        &sb.run(&["check", "bad.ron"]),
        &["bad.ron:10:30:", "`sampel_ms`", "did you mean `sample_ms`"],
    );
}

#[test]
fn check_refuses_a_missing_required_field_and_names_it() {
    let sb = Sandbox::new();
    sb.write(
        "bad.ron",
        good_with("    run: (duration_ms: 10.0, sample_ms: 0.5),\n", ""),
    );
    assert_bad_input(
        &sb.run(&["check", "bad.ron"]),
        &["bad.ron:10:1:", "`run`", "missing"],
    );
}

#[test]
fn check_refuses_a_wrong_kind_of_value_in_the_files_words() {
    let sb = Sandbox::new();
    sb.write("bad.ron", good_with("charge: 2,", "charge: 2.5,"));
    let o = sb.run(&["check", "bad.ron"]);
    assert_bad_input(&o, &["bad.ron:7:33:", "`charge`", "whole number", "`2.5`"]);
    assert!(!stderr(&o).contains("i32"), "{}", stderr(&o));
}

#[test]
fn check_refuses_a_newer_format_plainly() {
    let sb = Sandbox::new();
    sb.write(
        "new.ron",
        good_with("format: 1,", "format: 2, colour_scheme: \"dark\","),
    );
    assert_bad_input(
        &sb.run(&["check", "new.ron"]),
        &["new.ron", "format 2", "newer than this program reads"],
    );
}

#[test]
fn check_refuses_meaning_errors_with_their_field_paths() {
    let sb = Sandbox::new();
    let text = good_with("charge: -1,", "charge: 0,").replacen("sample_ms: 0.5", "sample_ms: 0.0", 1);
    sb.write("bad.ron", text);
    let o = sb.run(&["check", "bad.ron"]);
    assert_bad_input(
        &o,
        &["bad.ron", "species[2].charge", "run.sample_ms", "greater than 0"],
    );
}

#[test]
fn check_refuses_an_unknown_species_name_in_an_event() {
    let sb = Sandbox::new();
    let text = good_with(
        "    run:",
        "    protocol: [BathChange(species: \"K\", outside_mm: 20.0, at_ms: 1.0)],\n    run:",
    );
    sb.write("bad.ron", text);
    assert_bad_input(
        &sb.run(&["check", "bad.ron"]),
        &["bad.ron", "protocol[0].species", "\"K\"", "\"K+\""],
    );
}

#[test]
fn check_refuses_empty_garbage_and_deeply_nested_files_without_panic() {
    let sb = Sandbox::new();
    sb.write("empty.ron", "");
    assert_bad_input(&sb.run(&["check", "empty.ron"]), &["empty.ron:1:1:", "empty"]);
    let garbage: Vec<u8> = (0..4096u32)
        .map(|i| (i.wrapping_mul(2_654_435_761) >> 24) as u8)
        .collect();
    sb.write("garbage.ron", &garbage);
    assert_bad_input(&sb.run(&["check", "garbage.ron"]), &["garbage.ron:"]);
    sb.write("latin1.ron", b"(format: 1, title: \"caf\xe9\")");
    assert_bad_input(&sb.run(&["check", "latin1.ron"]), &["latin1.ron:1:24:", "UTF-8"]);
    sb.write("deep.ron", format!("(format: 2, x: {}", "[".repeat(200_000)));
    assert_bad_input(&sb.run(&["check", "deep.ron"]), &["deep.ron:"]);
    sb.write("deep2.ron", "(".repeat(200_000));
    assert_bad_input(&sb.run(&["check", "deep2.ron"]), &["deep2.ron:1:2:"]);
}

#[test]
fn check_refuses_a_missing_file_or_a_folder() {
    let sb = Sandbox::new();
    assert_bad_input(
        &sb.run(&["check", "nowhere.ron"]),
        &["nowhere.ron", "cannot read"],
    );
    std::fs::create_dir(sb.path("folder.ron")).expect("mkdir");
    assert_bad_input(&sb.run(&["check", "folder.ron"]), &["folder.ron", "cannot read"]);
}

#[test]
fn check_does_not_change_the_file() {
    let sb = Sandbox::new();
    let bad = sb.write("bad.ron", good_with("inside_mm: 120.0", "inside_mm: -1.0"));
    let good = sb.write("good.ron", GOOD);
    let before = (std::fs::read(&bad).ok(), std::fs::read(&good).ok());
    assert_eq!(sb.run(&["check", "bad.ron"]).status.code(), Some(2));
    assert_eq!(sb.run(&["check", "good.ron"]).status.code(), Some(0));
    assert_eq!((std::fs::read(&bad).ok(), std::fs::read(&good).ok()), before);
}

// ------------------------------------------------------------------------- rest

/// RT/F in mV at `t_c` from CODATA 2018 exact values of R = N_A·k and F = N_A·e.
fn rt_over_f_mv(t_c: f64) -> f64 {
    let r = 8.314_462_618_153_24; // J/(mol·K), CODATA 2018 (exact)
    let f = 96_485.332_123_310_02; // C/mol, CODATA 2018 (exact)
    1000.0 * r * (t_c + 273.15) / f
}

#[test]
fn rest_json_has_the_documented_shape_and_values() {
    let sb = Sandbox::new();
    sb.write("good.ron", GOOD);
    let o = sb.run(&["rest", "good.ron", "--json"]);
    assert_eq!(o.status.code(), Some(0), "stderr:\n{}", stderr(&o));
    let out = stdout(&o);
    assert_eq!(
        out.trim().lines().count(),
        1,
        "one JSON object on one line:\n{out}"
    );
    let j: Value = serde_json::from_str(out.trim()).unwrap_or_else(|e| panic!("not JSON ({e}):\n{out}"));
    assert!(j.is_object());
    assert_eq!(j["temperature_c"].as_f64(), Some(25.0));

    let species = j["species"].as_array().expect("species is a list");
    let names: Vec<&str> = species.iter().filter_map(|s| s["name"].as_str()).collect();
    assert_eq!(names, ["K+", "Ca2+", "Cl-"]);
    let charges: Vec<i64> = species.iter().filter_map(|s| s["charge"].as_i64()).collect();
    assert_eq!(charges, [1, 2, -1]);

    // Nernst: E = (RT/zF) ln(c_out/c_in) (Nernst 1889; common practice).
    let e_k = rt_over_f_mv(25.0) * (6.0_f64 / 120.0).ln();
    let e_cl = -rt_over_f_mv(25.0) * (115.0_f64 / 9.0).ln();
    let got_k = species[0]["reversal_mv"]
        .as_f64()
        .expect("K+ has a reversal potential");
    let got_cl = species[2]["reversal_mv"]
        .as_f64()
        .expect("Cl- has a reversal potential");
    // Relative 1e-9: CODATA's published ten-digit R and F differ from the exact products
    // by about 2e-11, and the JSON carries every digit.
    assert!((got_k - e_k).abs() < 1e-9 * e_k.abs(), "E_K {got_k} vs {e_k}");
    assert!(
        (got_cl - e_cl).abs() < 1e-9 * e_cl.abs(),
        "E_Cl {got_cl} vs {e_cl}"
    );
    // No calcium inside: no Nernst potential, `null` (command-line.md).
    assert!(
        species[1].get("reversal_mv").is_some_and(Value::is_null),
        "{}",
        species[1]
    );

    // With potassium the only permeant ion, the GHK potential is its Nernst potential
    // (Goldman 1943; Hodgkin & Katz 1949), and with no pump or channels so is rest.
    let ghk = j["ghk_mv"].as_f64().expect("ghk_mv is a number");
    let rest = j["resting_mv"].as_f64().expect("resting_mv is a number");
    assert!((ghk - e_k).abs() < 1e-6, "GHK {ghk} vs E_K {e_k}");
    assert!((rest - e_k).abs() < 1e-6, "rest {rest} vs E_K {e_k}");
}

#[test]
fn rest_table_names_every_species_in_millivolts() {
    let sb = Sandbox::new();
    sb.write("good.ron", GOOD);
    let o = sb.run(&["rest", "good.ron"]);
    assert_eq!(o.status.code(), Some(0), "stderr:\n{}", stderr(&o));
    let out = stdout(&o);
    for name in ["K+", "Ca2+", "Cl-"] {
        assert!(out.contains(name), "`{name}` missing from:\n{out}");
    }
    assert!(out.contains("mV"), "{out}");
    // E_K at 25 °C, to two decimals, and the undefined calcium potential as a dash.
    let e_k = rt_over_f_mv(25.0) * (6.0_f64 / 120.0).ln();
    assert!(
        out.contains(&format!("{e_k:.2}")),
        "E_K {e_k:.2} missing from:\n{out}"
    );
    let ca_line = out
        .lines()
        .find(|l| l.trim_start().starts_with("Ca2+"))
        .expect("a Ca2+ line");
    assert!(ca_line.contains('—'), "{ca_line}");
}

#[test]
fn rest_refuses_a_bad_file_with_exit_status_2() {
    let sb = Sandbox::new();
    sb.write("bad.ron", good_with("inside_mm: 120.0", "inside_mm: NaN"));
    assert_bad_input(
        &sb.run(&["rest", "bad.ron", "--json"]),
        &["bad.ron", "species[0].inside_mm", "finite"],
    );
    assert_bad_input(&sb.run(&["rest", "missing.ron"]), &["missing.ron"]);
}

// ------------------------------------------------------------------------- run

#[test]
fn run_writes_one_csv_row_per_sample() {
    let sb = Sandbox::new();
    sb.write("good.ron", GOOD);
    let o = sb.run(&["run", "good.ron", "--csv", "out.csv"]);
    assert_eq!(o.status.code(), Some(0), "stderr:\n{}", stderr(&o));
    let csv = std::fs::read_to_string(sb.path("out.csv")).expect("the CSV was written");
    let mut lines = csv.lines();
    let header = lines.next().expect("a header");
    assert!(header.starts_with("time_ms,v_mv"), "{header}");
    let times: Vec<f64> = lines
        .map(|l| {
            l.split(',')
                .next()
                .and_then(|t| t.parse().ok())
                .expect("a time in the first column")
        })
        .collect();
    // 0 to 10 ms inclusive every 0.5 ms.
    assert_eq!(times.len(), 21, "{csv}");
    assert_eq!(times.first(), Some(&0.0));
    assert_eq!(times.last(), Some(&10.0));
    // --sample-ms overrides the file's interval.
    let o = sb.run(&["run", "good.ron", "--csv", "fine.csv", "--sample-ms", "0.25"]);
    assert_eq!(o.status.code(), Some(0), "stderr:\n{}", stderr(&o));
    let rows = std::fs::read_to_string(sb.path("fine.csv"))
        .expect("written")
        .lines()
        .count();
    assert_eq!(rows, 1 + 41);
}

#[test]
fn run_refuses_a_bad_file_and_writes_nothing() {
    let sb = Sandbox::new();
    sb.write("bad.ron", good_with("duration_ms: 10.0", "duration_ms: -10.0"));
    assert_bad_input(
        &sb.run(&["run", "bad.ron", "--csv", "out.csv"]),
        &["bad.ron", "run.duration_ms"],
    );
    assert!(!sb.path("out.csv").exists());
}

// ------------------------------------------------------------------------- usage

#[test]
fn usage_errors_exit_with_status_2() {
    let sb = Sandbox::new();
    sb.write("good.ron", GOOD);
    for args in [
        &["check"][..],
        &["check", "good.ron", "extra"],
        &["rest"],
        &["rest", "good.ron", "--jsn"],
        &["run", "good.ron"],
        &["run", "good.ron", "--csv"],
        &["run", "good.ron", "--csv", "out.csv", "--sample-ms", "often"],
        &["frobnicate", "good.ron"],
    ] {
        let o = sb.run(args);
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(2), "{args:?}: stderr:\n{err}");
        assert!(!err.is_empty(), "{args:?}: a usage message is expected");
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
}
