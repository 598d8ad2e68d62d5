//! The command line as a user meets it: the real `permeant` binary run in a fresh temporary
//! directory, checked against command-line.md (exit status 0 / 2, messages on stderr naming the
//! file, the place and the reason, `rest --json`'s shape).
//!
//! The scenarios here are invented for these tests.

use std::path::{Path, PathBuf};

use serde_json::Value;

mod common;
use common::cli::{Sandbox, assert_bad_input, stderr, stdout};
use common::reference::{ghk_current_ua_per_cm2, nernst_mv};

/// Relative agreement with a value the test computes itself: CODATA's published ten-digit R
/// and F (model.md) differ from the exact products used here by about 2e-11, f64 rounding adds
/// about 1e-16 a step, and the program writes every digit (JSON, CSV) or exact labels.
const RELATIVE: f64 = 1e-9;
/// A potential the program solves for (GHK, rest) against its closed form: the root finder
/// stops far inside the 0.01 mV accuracy of model.md.
const SOLVED_MV: f64 = 1e-6;
/// Half the last digit of a label printed to 0.1 mV.
const LABEL_MV: f64 = 0.05;

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
    let e_k = nernst_mv(1, 120.0, 6.0, 25.0);
    let e_cl = nernst_mv(-1, 9.0, 115.0, 25.0);
    let got_k = species[0]["reversal_mv"]
        .as_f64()
        .expect("K+ has a reversal potential");
    let got_cl = species[2]["reversal_mv"]
        .as_f64()
        .expect("Cl- has a reversal potential");
    assert!((got_k - e_k).abs() < RELATIVE * e_k.abs(), "E_K {got_k} vs {e_k}");
    assert!(
        (got_cl - e_cl).abs() < RELATIVE * e_cl.abs(),
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
    assert!((ghk - e_k).abs() < SOLVED_MV, "GHK {ghk} vs E_K {e_k}");
    assert!((rest - e_k).abs() < SOLVED_MV, "rest {rest} vs E_K {e_k}");
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
    let e_k = nernst_mv(1, 120.0, 6.0, 25.0);
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
    // 0 to 10 ms inclusive every 0.5 ms, each time a product k·0.5 (model.md, "Output
    // samples"), never a running sum.
    assert_eq!(times.len(), 21, "{csv}");
    for (k, t) in times.iter().enumerate() {
        assert_eq!(*t, k as f64 * 0.5, "row {}", k + 2);
    }
    // --sample-ms overrides the file's interval.
    let o = sb.run(&["run", "good.ron", "--csv", "fine.csv", "--sample-ms", "0.25"]);
    assert_eq!(o.status.code(), Some(0), "stderr:\n{}", stderr(&o));
    let rows = std::fs::read_to_string(sb.path("fine.csv"))
        .expect("written")
        .lines()
        .count();
    assert_eq!(rows, 1 + 41);
}

/// An excitable cell invented for these tests, with every kind of column the current
/// depends on moving during the run: pulses drive V through 0 mV and back, the bath's K+ rises
/// through a lag, Na+ permeability is scaled down and back through a lag, four ions of three
/// charges, gated channels on two of them.
const SPIKES: &str = r#"(
    format: 1,
    title: "Spikes in a changing bath",
    temperature_c: 10.0,
    species: [
        (name: "K+", charge: 1, inside_mm: 135.0, outside_mm: 4.0, permeability_cm_per_s: 4.0e-7),
        (name: "Na+", charge: 1, inside_mm: 14.0, outside_mm: 150.0, permeability_cm_per_s: 1.5e-8),
        (name: "Cl-", charge: -1, inside_mm: 8.0, outside_mm: 125.0, permeability_cm_per_s: 6.0e-8),
        (name: "Ca2+", charge: 2, inside_mm: 0.0002, outside_mm: 1.8, permeability_cm_per_s: 2.0e-8),
    ],
    channels: [
        (label: "fast sodium", species: "Na+", max_permeability_cm_per_s: 9.0e-5, shift_mv: 0.0,
         q10: 3.0, reference_temperature_c: 6.3,
         gates: [(kinetics: HhSodiumActivation, power: 3), (kinetics: HhSodiumInactivation, power: 1)]),
        (label: "delayed potassium", species: "K+", max_permeability_cm_per_s: 2.5e-5, shift_mv: 0.0,
         q10: 3.0, reference_temperature_c: 6.3,
         gates: [(kinetics: HhPotassiumActivation, power: 4)]),
    ],
    protocol: [
        BathChange(species: "K+", outside_mm: 12.0, at_ms: 5.0, lag_ms: 8.0),
        PermeabilityScale(species: "Na+", factor: 0.6, from_ms: 25.0, until_ms: Some(45.0), lag_ms: 3.0),
        InjectTrain(amplitude_ua_per_cm2: 30.0, width_ms: 1.0, period_ms: 20.0, count: 3, from_ms: 10.0),
    ],
    run: (duration_ms: 60.0, sample_ms: 0.1),
)
"#;

/// SPIKES' species as the test knows them: name, charge, inside and outside mM, resting
/// permeability cm/s (the file's values, written again here rather than read through the crate).
const SPIKES_SPECIES: [(&str, i32, f64, f64, f64); 4] = [
    ("K+", 1, 135.0, 4.0, 4.0e-7),
    ("Na+", 1, 14.0, 150.0, 1.5e-8),
    ("Cl-", -1, 8.0, 125.0, 6.0e-8),
    ("Ca2+", 2, 0.0002, 1.8, 2.0e-8),
];
const SPIKES_TEMPERATURE_C: f64 = 10.0;

/// A CSV of numbers with a header, as columns by name.
struct Table {
    names: Vec<String>,
    rows: Vec<Vec<f64>>,
}

impl Table {
    fn parse(text: &str) -> Table {
        let mut lines = text.lines();
        let names = lines
            .next()
            .expect("a header")
            .split(',')
            .map(str::to_string)
            .collect();
        let rows = lines
            .map(|l| {
                l.split(',')
                    .map(|c| {
                        c.parse()
                            .unwrap_or_else(|_| panic!("`{c}` is not a number in {l}"))
                    })
                    .collect()
            })
            .collect();
        Table { names, rows }
    }

    fn column(&self, name: &str) -> Vec<f64> {
        let k = self
            .names
            .iter()
            .position(|n| n == name)
            .unwrap_or_else(|| panic!("no column {name} in {:?}", self.names));
        self.rows.iter().map(|r| r[k]).collect()
    }
}

/// Each `i_ua_per_cm2:NAME` column is the GHK current of that species at that sample's V, with
/// the permeability the sample's own state gives it (resting plus gated, P_max·m³h and
/// P_max·n⁴, times the lagged scale) and the lagged bath concentration: the published equation
/// (Goldman 1943; Hodgkin & Katz 1949, as model.md writes it) with CODATA 2018 constants,
/// evaluated here, not by the crate.
#[test]
fn run_current_columns_are_the_ghk_current_of_each_sample() {
    let sb = Sandbox::with("spikes.ron", SPIKES);
    sb.ok(&["run", "spikes.ron", "--csv", "out.csv"]);
    let table = Table::parse(&sb.read("out.csv"));
    let v = table.column("v_mv");
    let (m, h) = (
        table.column("gate:fast sodium:m"),
        table.column("gate:fast sodium:h"),
    );
    let n = table.column("gate:delayed potassium:n");
    let k_out = table.column("bath_mm:K+");
    let na_scale = table.column("factor:Na+:event1");
    // The run does what the test needs: V crosses 0 mV, the bath and the scale move.
    assert!(
        v.iter().any(|&x| x > 10.0) && v.iter().any(|&x| x < -60.0),
        "{v:?}"
    );
    assert!(k_out.iter().any(|&c| c > 11.0) && na_scale.iter().any(|&f| f < 0.61));
    let mut near_zero = 0;
    for (s, &(name, charge, inside, outside, p_rest)) in SPIKES_SPECIES.iter().enumerate() {
        let got = table.column(&format!("i_ua_per_cm2:{name}"));
        assert_eq!(got.len(), v.len());
        for k in 0..v.len() {
            let (p, c_out) = match s {
                0 => (p_rest + 2.5e-5 * n[k].powi(4), k_out[k]),
                1 => ((p_rest + 9.0e-5 * m[k].powi(3) * h[k]) * na_scale[k], outside),
                _ => (p_rest, outside),
            };
            let (want, scale) = ghk_current_ua_per_cm2(p, charge, inside, c_out, v[k], SPIKES_TEMPERATURE_C);
            assert!(
                (got[k] - want).abs() <= RELATIVE * scale,
                "{name} at row {}: {} vs {want} µA/cm² (V {} mV)",
                k + 2,
                got[k],
                v[k]
            );
            if v[k].abs() < 1.0 {
                near_zero += 1;
            }
        }
    }
    assert!(
        near_zero > 0,
        "some samples lie near 0 mV, where u/(1 − e^(−u)) needs care"
    );
}

/// One pixel of the figure, in the units of an axis: the tolerance of reading a value back
/// from a picture whose coordinates are whole pixels.
const ONE_PIXEL: f64 = 1.0;

/// A tick label: its value and its position along the axis, in pixels.
#[derive(Debug, Clone, Copy)]
struct Tick {
    value: f64,
    px: f64,
}

/// The straight line through an axis' tick labels (least squares): pixels → value.
#[derive(Debug, Clone, Copy)]
struct Axis {
    value_at_0: f64,
    per_px: f64,
}

impl Axis {
    fn through(ticks: &[Tick]) -> Axis {
        let n = ticks.len() as f64;
        let (mp, mv) = (
            ticks.iter().map(|t| t.px).sum::<f64>() / n,
            ticks.iter().map(|t| t.value).sum::<f64>() / n,
        );
        let sxy: f64 = ticks.iter().map(|t| (t.px - mp) * (t.value - mv)).sum();
        let sxx: f64 = ticks.iter().map(|t| (t.px - mp).powi(2)).sum();
        let per_px = sxy / sxx;
        Axis {
            value_at_0: mv - per_px * mp,
            per_px,
        }
    }
    fn value(&self, px: f64) -> f64 {
        self.value_at_0 + self.per_px * px
    }
    fn px(&self, value: f64) -> f64 {
        (value - self.value_at_0) / self.per_px
    }
}

fn attr(n: roxmltree::Node, name: &str) -> f64 {
    n.attribute(name)
        .and_then(|a| a.parse().ok())
        .unwrap_or_else(|| panic!("{name} of {n:?}"))
}

/// The points of a polyline, in pixels.
fn points(n: roxmltree::Node) -> Vec<(f64, f64)> {
    n.attribute("points")
        .unwrap_or_default()
        .split_whitespace()
        .map(|p| {
            let (x, y) = p.split_once(',').expect("x,y");
            (x.parse().expect("x"), y.parse().expect("y"))
        })
        .collect()
}

/// Checks one axis' tick labels (evenly spaced values at evenly spaced pixels, at least three)
/// and returns the axis they define.
fn checked_axis(mut ticks: Vec<Tick>, which: &str) -> Axis {
    assert!(ticks.len() >= 3, "{which}: {ticks:?}");
    ticks.sort_by(|a, b| a.value.total_cmp(&b.value));
    let step = ticks[1].value - ticks[0].value;
    let axis = Axis::through(&ticks);
    for (w, t) in ticks.windows(2).zip(&ticks) {
        assert!(
            ((w[1].value - w[0].value) - step).abs() < RELATIVE * step.abs(),
            "{which}: uneven {ticks:?}"
        );
        assert!(
            (axis.px(t.value) - t.px).abs() <= ONE_PIXEL,
            "{which}: {t:?} off its line"
        );
    }
    // Round steps (common practice for axis labels): 1, 2 or 5 times a power of ten.
    let mantissa = step / 10f64.powf(step.log10().floor());
    assert!(
        [1.0, 2.0, 5.0].iter().any(|m| (mantissa - m).abs() < RELATIVE),
        "{which}: step {step}"
    );
    axis
}

/// `run --svg` read back as a figure: the tick labels make two straight axes, the V trace's
/// points map back through them to the CSV's times and potentials within a pixel, and each
/// reversal potential's dashed line sits at its Nernst value (CODATA 2018 constants, the
/// file's concentrations) within a pixel, labelled with that value.
#[test]
fn run_svg_is_a_figure_of_the_csv_with_nernst_lines() {
    let sb = Sandbox::with("spikes.ron", SPIKES);
    sb.ok(&["run", "spikes.ron", "--csv", "out.csv", "--svg", "out.svg"]);
    let table = Table::parse(&sb.read("out.csv"));
    let (t_ms, v_mv) = (table.column("time_ms"), table.column("v_mv"));
    let text = sb.read("out.svg");
    let doc = roxmltree::Document::parse(&text).expect("the figure is well-formed XML");
    let svg = doc.root_element();
    assert_eq!(svg.tag_name().name(), "svg");
    let texts: Vec<(roxmltree::Node, &str)> = svg
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .map(|n| (n, n.text().unwrap_or_default().trim()))
        .collect();
    for label in [
        "Spikes in a changing bath",
        "time (ms)",
        "membrane potential (mV)",
    ] {
        assert!(texts.iter().any(|(_, s)| *s == label), "`{label}` is missing");
    }
    // Tick labels: numbers, right-aligned left of the plot (V) or centred below it (time).
    let ticks = |anchor: &str, along: &str| -> Vec<Tick> {
        texts
            .iter()
            .filter(|(n, _)| n.attribute("text-anchor") == Some(anchor))
            .filter_map(|(n, s)| {
                Some(Tick {
                    value: s.parse().ok()?,
                    px: attr(*n, along),
                })
            })
            .collect()
    };
    let time = checked_axis(ticks("middle", "x"), "time axis");
    let volts = checked_axis(ticks("end", "y"), "potential axis");
    assert!(
        time.per_px > 0.0 && volts.per_px < 0.0,
        "time grows rightwards, V upwards"
    );
    // The time axis starts at 0 at its first label and reaches the end of the run.
    assert!(ticks("middle", "x").iter().any(|t| t.value == 0.0));
    let px_ms = time.per_px.abs();
    let px_mv = volts.per_px.abs();

    // The trace: the longest polyline, and the only one of its colour with more than two
    // points (a moving reversal potential's dashes have several points too). The figure keeps every sample of a run this
    // short (it thins only beyond 6000), so its points are the CSV's rows in order.
    let polylines: Vec<roxmltree::Node> = svg.descendants().filter(|n| n.has_tag_name("polyline")).collect();
    let longest = polylines
        .iter()
        .max_by_key(|n| points(**n).len())
        .expect("a trace");
    let traces: Vec<Vec<(f64, f64)>> = polylines
        .iter()
        .filter(|n| n.attribute("stroke") == longest.attribute("stroke"))
        .map(|n| points(*n))
        .filter(|p| p.len() > 2)
        .collect();
    assert_eq!(traces.len(), 1, "one trace");
    let trace = &traces[0];
    assert_eq!(trace.len(), t_ms.len(), "one point per sample");
    for (k, &(x, y)) in trace.iter().enumerate() {
        let (t, v) = (time.value(x), volts.value(y));
        assert!(
            (t - t_ms[k]).abs() <= ONE_PIXEL * px_ms,
            "row {}: t {t} vs {}",
            k + 2,
            t_ms[k]
        );
        assert!(
            (v - v_mv[k]).abs() <= ONE_PIXEL * px_mv,
            "row {}: V {v} vs {}",
            k + 2,
            v_mv[k]
        );
    }

    // Reversal lines: each species' label names its Nernst value to 0.1 mV and has the colour
    // of a dashed horizontal line drawn at that value. K+'s bath changes, so its line moves
    // (`run_svg_draws_a_moving_reversal_potential_where_the_bath_changes` checks it).
    for &(name, charge, inside, outside, _) in SPIKES_SPECIES.iter().filter(|s| s.0 != "K+") {
        let e_mv = nernst_mv(charge, inside, outside, SPIKES_TEMPERATURE_C);
        let prefix = format!("E {name} ");
        let (label, words) = texts
            .iter()
            .find(|(_, s)| s.starts_with(&prefix))
            .unwrap_or_else(|| panic!("no label for {name}"));
        let shown: f64 = words[prefix.len()..]
            .trim_end_matches(" mV")
            .parse()
            .unwrap_or_else(|_| panic!("{words}"));
        assert!(
            (shown - e_mv).abs() <= LABEL_MV * (1.0 + RELATIVE),
            "{words} vs {e_mv:.3} mV"
        );
        let colour = label.attribute("fill").expect("a coloured label");
        let ys: Vec<f64> = svg
            .descendants()
            .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(colour))
            .flat_map(points)
            .map(|(_, y)| y)
            .collect();
        assert!(ys.len() >= 10, "{name}: a dashed line, {} points", ys.len());
        for y in ys {
            let at = volts.value(y);
            assert!(
                (at - e_mv).abs() <= ONE_PIXEL * px_mv,
                "{name}: line at {at} mV vs {e_mv} mV"
            );
        }
    }
}

/// An invented bath exchange: potassium raised from 5 to 25 mM at 100 ms (a 2 ms exchange) in
/// a cell at 37 °C, K+ 140 mM inside.
const RAISED_K: &str = r#"(
    format: 1,
    title: "Raised bath potassium",
    temperature_c: 37.0,
    species: [
        (name: "K+", charge: 1, inside_mm: 140.0, outside_mm: 5.0, permeability_cm_per_s: 5.0e-7),
        (name: "Na+", charge: 1, inside_mm: 12.0, outside_mm: 145.0, permeability_cm_per_s: 2.0e-8),
        (name: "Cl-", charge: -1, inside_mm: 10.0, outside_mm: 120.0, permeability_cm_per_s: 0.0),
    ],
    protocol: [
        BathChange(species: "K+", outside_mm: 25.0, at_ms: 100.0, lag_ms: 2.0),
    ],
    run: (duration_ms: 300.0, sample_ms: 0.5),
)
"#;

/// Issue 13: `run --svg` drew a moving reversal potential flat at its starting value. E K+ is
/// read back from the figure through its tick labels: before the change its dashed line sits
/// at the Nernst potential of 140/5 mM, once the exchange is over (30 lag constants later) at
/// that of 140/25 mM (Nernst 1889 with CODATA 2018 R and F, computed here), each within a
/// pixel; the line spans the whole time axis, and its label reads the value at the end.
#[test]
fn run_svg_draws_a_moving_reversal_potential_where_the_bath_changes() {
    let sb = Sandbox::with("raised.ron", RAISED_K);
    sb.ok(&["run", "raised.ron", "--csv", "out.csv", "--svg", "out.svg"]);
    let text = sb.read("out.svg");
    let doc = roxmltree::Document::parse(&text).expect("the figure is well-formed XML");
    let svg = doc.root_element();
    let texts: Vec<(roxmltree::Node, &str)> = svg
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .map(|n| (n, n.text().unwrap_or_default().trim()))
        .collect();
    let ticks = |anchor: &str, along: &str| -> Vec<Tick> {
        texts
            .iter()
            .filter(|(n, _)| n.attribute("text-anchor") == Some(anchor))
            .filter_map(|(n, s)| {
                Some(Tick {
                    value: s.parse().ok()?,
                    px: attr(*n, along),
                })
            })
            .collect()
    };
    let time = checked_axis(ticks("middle", "x"), "time axis");
    let volts = checked_axis(ticks("end", "y"), "potential axis");
    let (px_ms, px_mv) = (time.per_px.abs(), volts.per_px.abs());

    let before_mv = nernst_mv(1, 140.0, 5.0, 37.0);
    let after_mv = nernst_mv(1, 140.0, 25.0, 37.0);
    let (label, words) = texts
        .iter()
        .find(|(_, s)| s.starts_with("E K+ "))
        .expect("a label for E K+");
    let shown: f64 = words["E K+ ".len()..]
        .trim_end_matches(" mV")
        .parse()
        .unwrap_or_else(|_| panic!("{words}"));
    assert!(
        (shown - after_mv).abs() <= LABEL_MV * (1.0 + RELATIVE),
        "{words} vs {after_mv:.3} mV at the end"
    );
    let colour = label.attribute("fill").expect("a coloured label");
    let line: Vec<(f64, f64)> = svg
        .descendants()
        .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(colour))
        .flat_map(points)
        .map(|(x, y)| (time.value(x), volts.value(y)))
        .collect();
    let early: Vec<f64> = line.iter().filter(|p| p.0 < 99.0).map(|p| p.1).collect();
    let late: Vec<f64> = line.iter().filter(|p| p.0 > 160.0).map(|p| p.1).collect();
    assert!(
        early.len() >= 10 && late.len() >= 10,
        "{} and {} points",
        early.len(),
        late.len()
    );
    let mean = |x: &[f64]| x.iter().sum::<f64>() / x.len() as f64;
    println!(
        "E K+ drawn at {:.3} mV before (Nernst {before_mv:.3}) and {:.3} mV after (Nernst {after_mv:.3}); one pixel is {px_mv:.3} mV",
        mean(&early),
        mean(&late)
    );
    for e in early {
        assert!(
            (e - before_mv).abs() <= ONE_PIXEL * px_mv,
            "before the change: {e} mV vs {before_mv} mV"
        );
    }
    for e in late {
        assert!(
            (e - after_mv).abs() <= ONE_PIXEL * px_mv,
            "after the change: {e} mV vs {after_mv} mV"
        );
    }
    // A dashed line ends in a dash or a gap: within one dash and gap (8 + 5 pixels) of each
    // end of the axis.
    let first = line.iter().map(|p| p.0).fold(f64::INFINITY, f64::min);
    let last = line.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
    let period_ms = (8.0 + 5.0 + ONE_PIXEL) * px_ms;
    assert!(
        first <= ONE_PIXEL * px_ms && last >= 300.0 - period_ms,
        "the line spans {first}..{last} ms of 0..300 ms"
    );
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
