//! Scenario files as users meet them: every rule of scenario-format.md's "What a bad file
//! gets" and "Saving", checked through the public reader and writer. Each bad-file test asserts
//! the place it is reported at (line:column or field path) and a key word of the reason.
//!
//! The scenario below is invented for these tests; its values are ordinary mammalian-cell
//! magnitudes (common practice), not taken from any published problem.

use std::path::Path;

mod common;
use common::valid;
use permeant::scenario::{
    self, Event, Location, Problem, Scenario, ScenarioError, Start, from_str, read_file, save_atomic,
    to_ron_string,
};
use proptest::prelude::*;

const FILE: &str = "cell.ron";

/// A valid scenario using every part of format 1: pump, three kinds of channel gate, every
/// kind of protocol event and a voltage start.
const GOOD: &str = r#"// a test cell
(
    format: 1,
    title: "Test cell",
    notes: "invented for the reader's tests",
    temperature_c: 30.0,
    cell: (diameter_um: 15.0, capacitance_uf_per_cm2: 1.0, track_concentrations: false),
    species: [
        (name: "K+", charge: 1, inside_mm: 130.0, outside_mm: 4.0, permeability_cm_per_s: 4.0e-7),
        (name: "Na+", charge: 1, inside_mm: 15.0, outside_mm: 140.0, permeability_cm_per_s: 3.0e-8),
        (name: "Cl-", charge: -1, inside_mm: 8.0, outside_mm: 110.0, permeability_cm_per_s: 1.0e-7),
        (name: "Ca2+", charge: 2, inside_mm: 0.0001, outside_mm: 1.8, permeability_cm_per_s: 0.0),
    ],
    pump: Some((
        exports: "Na+", imports: "K+",
        exported_per_cycle: 3, imported_per_cycle: 2,
        max_current_ua_per_cm2: 0.8,
        half_saturation_inside_mm: 12.0, hill_inside: 1.0,
        half_saturation_outside_mm: 1.2, hill_outside: 1.0,
    )),
    channels: [
        (
            label: "quick sodium",
            species: "Na+",
            max_permeability_cm_per_s: 8.0e-6,
            q10: 3.0,
            gates: [
                (kinetics: HhSodiumActivation, power: 3),
                (kinetics: HhSodiumInactivation, power: 1),
            ],
        ),
        (
            label: "late potassium",
            species: "K+",
            max_permeability_cm_per_s: 2.0e-6,
            gates: [(kinetics: HhPotassiumActivation, power: 4)],
        ),
        (
            label: "slow potassium",
            species: "K+",
            max_permeability_cm_per_s: 5.0e-8,
            shift_mv: -5.0,
            q10: 1.0,
            reference_temperature_c: 22.0,
            gates: [(kinetics: Boltzmann(v_half_mv: -35.0, slope_mv: 7.0, tau_ms: 40.0), power: 1)],
        ),
    ],
    protocol: [
        PermeabilityScale(species: "Na+", factor: 10.0, from_ms: 40.0, until_ms: Some(45.0), lag_ms: 0.5),
        BathChange(species: "K+", outside_mm: 20.0, at_ms: 80.0, lag_ms: 5.0),
        Agent(label: "drug X", species: "K+", max_block: 0.8, ic50_um: 3.0, hill: 1.0,
              dose_um: 6.0, from_ms: 120.0, until_ms: None, onset_ms: 20.0, washout_ms: 40.0),
        Inject(amplitude_ua_per_cm2: 8.0, from_ms: 10.0, until_ms: 11.0),
        InjectTrain(amplitude_ua_per_cm2: 8.0, width_ms: 1.0, period_ms: 25.0, count: 4, from_ms: 150.0),
    ],
    run: (
        duration_ms: 250.0,
        sample_ms: 0.1,
        start: Voltage(-75.0),
    ),
)
"#;

/// A second agent, for the duplicate-label check.
const SECOND_AGENT: &str =
    r#"Agent(label: "drug X", species: "Na+", ic50_um: 1.0, dose_um: 1.0, from_ms: 0.0),"#;

/// `GOOD` with `old` (which must occur exactly once) replaced by `new`.
fn with(old: &str, new: &str) -> String {
    with_in(GOOD, old, new)
}

fn with_in(text: &str, old: &str, new: &str) -> String {
    assert_eq!(
        text.matches(old).count(),
        1,
        "test setup: `{old}` must occur exactly once"
    );
    text.replacen(old, new, 1)
}

/// 1-based line and character column where `needle` (unique) starts in `text`.
fn place_of(text: &str, needle: &str) -> (usize, usize) {
    assert_eq!(
        text.matches(needle).count(),
        1,
        "test setup: `{needle}` must occur exactly once"
    );
    let at = text.find(needle).unwrap_or(0);
    let before = &text[..at];
    let line = 1 + before.matches('\n').count();
    let col = 1 + before[before.rfind('\n').map_or(0, |i| i + 1)..].chars().count();
    (line, col)
}

fn read(text: &str) -> Result<Scenario, ScenarioError> {
    from_str(text, FILE).map(permeant::scenario::Valid::into_inner)
}

fn error_of(text: &str) -> ScenarioError {
    match read(text) {
        Ok(_) => panic!("expected the scenario to be refused:\n{text}"),
        Err(e) => e,
    }
}

/// Asserts a syntax-level error at the line:column where `at` starts, with `words` in the message.
fn assert_syntax(text: &str, at: &str, words: &[&str]) -> String {
    let (line, column) = place_of(text, at);
    assert_syntax_at(text, line, column, words)
}

fn assert_syntax_at(text: &str, line: usize, column: usize, words: &[&str]) -> String {
    let e = error_of(text);
    let shown = e.to_string();
    match &e {
        ScenarioError::Syntax {
            file,
            line: l,
            column: c,
            message,
        } => {
            assert_eq!(file, FILE);
            assert_eq!((*l, *c), (line, column), "wrong place for: {shown}");
            assert!(shown.starts_with(&format!("{FILE}:{line}:{column}: ")), "{shown}");
            for w in words {
                assert!(message.contains(w), "`{w}` missing from: {shown}");
            }
            assert_plain(message);
        }
        other => panic!("expected a syntax error at {line}:{column}, got {other:?}"),
    }
    assert_eq!(e.location(), Some(Location::Text { line, column }));
    shown
}

/// The problems of a file refused for its meaning.
fn problems_of(text: &str) -> Vec<Problem> {
    match error_of(text) {
        ScenarioError::Invalid { file, problems } => {
            assert_eq!(file, FILE);
            problems
        }
        other => panic!("expected a meaning error, got {other}"),
    }
}

/// Asserts that one of the problems is at `path` and mentions every word of `words`.
fn assert_problem(text: &str, path: &str, words: &[&str]) {
    let problems = problems_of(text);
    let found = problems.iter().find(|p| p.path == path);
    let Some(p) = found else {
        panic!("no problem at `{path}`; got {problems:?}");
    };
    for w in words {
        assert!(
            p.message.contains(w),
            "`{w}` missing from `{path}: {}`",
            p.message
        );
    }
    assert_plain(&p.message);
    let shown = error_of(text).to_string();
    assert!(shown.contains(&format!("{FILE}: {path}: ")), "{shown}");
}

/// Messages speak the file's language, not Rust's.
fn assert_plain(message: &str) {
    for rust in [
        "f64",
        "u32",
        "u64",
        "i32",
        "struct ",
        "RunSettings",
        "Option<",
        "Vec<",
        "variant",
    ] {
        assert!(!message.contains(rust), "Rust term `{rust}` in: {message}");
    }
}

#[test]
fn the_test_scenario_is_valid_and_has_no_warnings() {
    let s = read(GOOD).expect("GOOD is a valid scenario");
    assert_eq!(s.species.len(), 4);
    assert_eq!(s.protocol.len(), 5);
    assert_eq!(s.run.start, Start::Voltage(-75.0));
    assert!(scenario::warnings(&s).is_empty());
}

// ---------------------------------------------------------------- syntax and structure

#[test]
fn syntax_error_gives_line_and_column() {
    let text = with("outside_mm: 4.0, permeability", "outside_mm: 4.0 permeability");
    // The parser stops at the word after the missing comma.
    let (line, col) = place_of(&text, "permeability_cm_per_s: 4.0e-7");
    assert_syntax_at(&text, line, col, &["comma", "`outside_mm`"]);
}

#[test]
fn unclosed_bracket_reports_the_end_of_the_file() {
    let text = GOOD.trim_end().trim_end_matches(')');
    // The end of the text: the line after its final newline, column 1.
    assert!(text.ends_with('\n'));
    let shown = assert_syntax_at(text, text.matches('\n').count() + 1, 1, &[]);
    assert!(
        shown.contains("end of the file") || shown.contains("ends too early"),
        "{shown}"
    );
}

#[test]
fn text_after_the_scenario_is_refused() {
    let text = format!("{GOOD}extra");
    assert_syntax(&text, "extra", &["goes on", "`extra`"]);
}

#[test]
fn unknown_field_suggests_the_nearest_known_name() {
    assert_syntax(
        &with("inside_mm: 130.0", "insde_mm: 130.0"),
        "insde_mm",
        &["unknown field `insde_mm`", "did you mean `inside_mm`"],
    );
    assert_syntax(
        &with("temperature_c: 30.0", "temprature_c: 30.0"),
        "temprature_c",
        &["did you mean `temperature_c`"],
    );
    assert_syntax(
        &with("sample_ms: 0.1", "sampel_ms: 0.1"),
        "sampel_ms",
        &["in run", "did you mean `sample_ms`"],
    );
    // Inside an enum variant too.
    assert_syntax(
        &with("onset_ms: 20.0", "onset: 20.0"),
        "onset:",
        &["an Agent event", "did you mean `onset_ms`"],
    );
    assert_syntax(
        &with("tau_ms: 40.0", "tau: 40.0"),
        "tau:",
        &["Boltzmann", "did you mean `tau_ms`"],
    );
}

#[test]
fn unknown_field_far_from_every_name_lists_the_known_ones() {
    let text = with("notes:", "colour: \"red\", notes:");
    assert_syntax(
        &text,
        "colour",
        &["unknown field `colour`", "known fields are format, title"],
    );
}

#[test]
fn unknown_choice_suggests_the_nearest() {
    assert_syntax(
        &with("Inject(amplitude", "Injekt(amplitude"),
        "Injekt",
        &["`Injekt`", "did you mean `Inject`"],
    );
    assert_syntax(
        &with(
            "kinetics: HhPotassiumActivation",
            "kinetics: HhPotasiumActivation",
        ),
        "HhPotasium",
        &["did you mean `HhPotassiumActivation`"],
    );
    assert_syntax(
        &with("start: Voltage(-75.0)", "start: Voltag(-75.0)"),
        "Voltag",
        &["did you mean `Voltage`"],
    );
}

#[test]
fn missing_required_fields_are_named() {
    // Top level: reported at the closing bracket of the scenario.
    let text = with("    format: 1,\n", "");
    let shown = assert_syntax_at(
        &text,
        text.lines().count(),
        1,
        &["`format`", "missing", "format: 1"],
    );
    assert!(shown.contains("the scenario"));
    let end = GOOD.find("    run: (").unwrap_or(0);
    let text = format!("{}\n)\n", &GOOD[..end]);
    assert_syntax_at(&text, text.lines().count(), 1, &["`run`", "missing"]);
    // Inside a list element, a nested group and an enum variant.
    let text = with("(name: \"Cl-\", charge: -1, ", "(name: \"Cl-\", ");
    assert_syntax(
        &text,
        "),\n        (name: \"Ca2+\"",
        &["`charge`", "missing", "a species"],
    );
    let text = with("run: (\n        duration_ms: 250.0,", "run: (");
    assert_syntax_at(
        &text,
        place_of(&text, "    ),\n)").0,
        5,
        &["`duration_ms`", "missing", "run"],
    );
    let text = with("ic50_um: 3.0, ", "");
    assert_syntax(
        &text,
        "),\n        Inject(",
        &["`ic50_um`", "missing", "an Agent event"],
    );
    let text = with("from_ms: 10.0, until_ms: 11.0", "from_ms: 10.0");
    assert_syntax(
        &text,
        "),\n        InjectTrain",
        &["`until_ms`", "missing", "an Inject event"],
    );
    let text = with("slope_mv: 7.0, ", "");
    assert_syntax(&text, "), power: 1)]", &["`slope_mv`", "missing", "Boltzmann"]);
}

#[test]
fn a_field_given_twice_is_refused() {
    assert_syntax(
        &with("title: \"Test cell\",", "title: \"Test cell\", title: \"again\","),
        "title: \"again\"",
        &["`title`", "twice"],
    );
}

#[test]
fn wrong_kind_of_value_names_the_field_and_what_it_takes() {
    let text = with("inside_mm: 130.0", "inside_mm: \"lots\"");
    assert_syntax(&text, "\"lots\"", &["`inside_mm`", "a number", "\"lots\""]);
    let text = with("title: \"Test cell\"", "title: 3");
    assert_syntax(&text, "3,\n    notes", &["`title`", "text in double quotes"]);
    let text = with("track_concentrations: false", "track_concentrations: 1");
    assert_syntax(
        &text,
        "1),\n    species",
        &["`track_concentrations`", "`true` or `false`"],
    );
    let text = with("until_ms: Some(45.0)", "until_ms: 45.0");
    assert_syntax(&text, "45.0, lag_ms", &["`until_ms`", "Some(", "None"]);
    let text = with("pump: Some((", "pump: (").replacen(")),\n    channels", "),\n    channels", 1);
    assert_syntax(&text, "(\n        exports", &["`pump`", "Some("]);
    let text = with("species: [\n", "species: \"K+\", x: [\n");
    assert_syntax(&text, "\"K+\", x", &["`species`", "a list in square brackets"]);
    let text = with(
        "gates: [(kinetics: HhPotassiumActivation, power: 4)]",
        "gates: [HhPotassiumActivation]",
    );
    assert_syntax(
        &text,
        "HhPotassiumActivation]",
        &["`gates`", "`(`", "HhPotassiumActivation"],
    );
}

#[test]
fn a_fraction_where_a_whole_number_belongs() {
    // RON reads `1.5` as a whole number that stops at the `.`; the message quotes all of it.
    let text = with("(name: \"Ca2+\", charge: 2,", "(name: \"Ca2+\", charge: 1.5,");
    assert_syntax(&text, ".5,", &["`charge`", "whole number", "`1.5`"]);
    let text = with("count: 4", "count: 4.0");
    assert_syntax(&text, ".0, from_ms: 150.0", &["`count`", "whole number", "`4.0`"]);
    let text = with("count: 4", "count: 1e3");
    assert_syntax(&text, "1e3", &["`count`", "whole number"]);
}

#[test]
fn negative_counts_are_refused_with_the_sign_shown() {
    let text = with("count: 4", "count: -4");
    assert_syntax(&text, "-4", &["`count`", "0 or more", "`-4`"]);
    let text = with(
        "(kinetics: HhPotassiumActivation, power: 4)",
        "(kinetics: HhPotassiumActivation, power: -4)",
    );
    assert_syntax(&text, "-4)", &["`power`", "0 or more"]);
    let text = with("exported_per_cycle: 3", "exported_per_cycle: -3");
    assert_syntax(&text, "-3,", &["`exported_per_cycle`", "0 or more"]);
    let text = with(
        "(name: \"Ca2+\", charge: 2,",
        "(name: \"Ca2+\", charge: 99999999999,",
    );
    assert_syntax(&text, "99999999999", &["`charge`", "whole number"]);
}

#[test]
fn empty_blank_and_comment_only_files_are_refused() {
    for text in ["", "   \n\t\n", "\u{feff}"] {
        assert_syntax_at(text, 1, 1, &["empty"]);
    }
    let shown = assert_syntax_at("// nothing here\n", 2, 1, &["round brackets"]);
    assert!(shown.contains("end of the file"), "{shown}");
}

#[test]
fn a_byte_order_mark_is_accepted() {
    let text = format!("\u{feff}{GOOD}");
    assert_eq!(
        read(&text).expect("read with a byte order mark"),
        read(GOOD).expect("valid")
    );
}

#[test]
fn binary_garbage_is_refused_without_panic() {
    let garbage: String = (0u8..=255).cycle().take(4096).map(char::from).collect();
    let shown = assert_syntax_at(&garbage, 1, 1, &["round brackets"]);
    assert!(
        shown.contains("\\0"),
        "the first character is shown escaped: {shown}"
    );
}

#[test]
fn deep_nesting_is_refused_without_overflowing_the_stack() {
    // A 320 KiB stack, a sixth of a test thread's usual 2 MiB: if RON's recursion limit
    // (128 levels by default) did not hold, a million brackets would overflow it.
    let texts = [
        "[".repeat(1_000_000),
        "(".repeat(1_000_000),
        format!("(format: 1, title: {}", "[".repeat(1_000_000)),
        format!("(format: 1, pump: {}", "Some(".repeat(200_000)),
        // The format probe skips unknown fields, parsing them as any value.
        format!("(format: 2, future: {}", "[".repeat(1_000_000)),
        format!(
            "(format: 2, future: {}{})",
            "(a: ".repeat(200_000),
            ")".repeat(200_000)
        ),
        format!("(format: 1, x: {}{}, run: ())", "[".repeat(300), "]".repeat(300)),
    ];
    let outcome = std::thread::Builder::new()
        .stack_size(320 * 1024)
        .spawn(move || {
            texts
                .iter()
                .map(|t| read(t).map(|_| ()).map_err(|e| e.to_string()))
                .collect::<Vec<_>>()
        })
        .expect("spawn a thread")
        .join()
        .expect("reading deeply nested text must not panic");
    for r in outcome {
        let message = r.expect_err("deeply nested text is not a scenario");
        assert!(message.starts_with(FILE), "{message}");
    }
}

// ---------------------------------------------------------------- format

#[test]
fn format_zero_is_refused_at_the_format_field() {
    assert_problem(
        &with("format: 1,", "format: 0,"),
        "format",
        &["no format 0", "reads format 1"],
    );
}

#[test]
fn a_newer_format_says_so_before_anything_else() {
    // Format 2 may have fields format 1 does not know; the newer format is the message.
    for text in [
        with("format: 1,", "format: 2,"),
        with(
            "format: 1,",
            "format: 2, membrane_noise: Some((amplitude_mv: 0.1)),",
        ),
        with("format: 1,", "format: 7,").replace("run:", "run_settings:"),
        format!(
            "Scenario{}",
            with("format: 1,", "format: 2,").trim_start_matches("// a test cell\n")
        ),
    ] {
        let e = error_of(&text);
        assert!(matches!(e, ScenarioError::NewerFormat { .. }), "{e:?}");
        let shown = e.to_string();
        assert!(shown.starts_with(&format!("{FILE}: format: ")), "{shown}");
        assert!(shown.contains("newer than this program reads"), "{shown}");
        assert_eq!(e.location(), Some(Location::Field("format".into())));
    }
}

#[test]
fn validating_a_newer_format_in_memory_says_newer() {
    let mut s = read(GOOD).expect("valid");
    s.format = 2;
    let problems = scenario::problems(&s);
    assert_eq!(problems.len(), 1, "{problems:?}");
    assert_eq!(problems[0].path, "format");
    assert!(problems[0].message.contains("newer"), "{}", problems[0].message);
}

#[test]
fn format_that_is_not_a_count_is_refused() {
    assert_syntax(
        &with("format: 1,", "format: -1,"),
        "-1,\n",
        &["`format`", "0 or more"],
    );
    assert_syntax(
        &with("format: 1,", "format: \"1\","),
        "\"1\"",
        &["`format`", "whole number"],
    );
}

// ---------------------------------------------------------------- numbers

#[test]
fn non_finite_numbers_are_refused_with_their_path() {
    // RON reads `inf`, `-inf` and `NaN` as floats, and 1e400 overflows to infinity.
    let cases = [
        ("temperature_c: 30.0", "temperature_c: NaN", "temperature_c"),
        ("inside_mm: 130.0", "inside_mm: inf", "species[0].inside_mm"),
        ("outside_mm: 140.0", "outside_mm: 1e400", "species[1].outside_mm"),
        (
            "max_current_ua_per_cm2: 0.8",
            "max_current_ua_per_cm2: inf",
            "pump.max_current_ua_per_cm2",
        ),
        ("shift_mv: -5.0", "shift_mv: -inf", "channels[2].shift_mv"),
        (
            "v_half_mv: -35.0",
            "v_half_mv: NaN",
            "channels[2].gates[0].kinetics.v_half_mv",
        ),
        ("factor: 10.0", "factor: inf", "protocol[0].factor"),
        (
            "until_ms: Some(45.0)",
            "until_ms: Some(inf)",
            "protocol[0].until_ms",
        ),
        (
            "amplitude_ua_per_cm2: 8.0, from_ms",
            "amplitude_ua_per_cm2: NaN, from_ms",
            "protocol[3].amplitude_ua_per_cm2",
        ),
        ("duration_ms: 250.0", "duration_ms: inf", "run.duration_ms"),
        ("start: Voltage(-75.0)", "start: Voltage(NaN)", "run.start"),
    ];
    for (old, new, path) in cases {
        assert_problem(&with(old, new), path, &["finite"]);
    }
}

#[test]
fn negative_concentrations_permeabilities_sizes_durations_and_doses_are_refused() {
    let cases = [
        (
            "inside_mm: 130.0",
            "inside_mm: -130.0",
            "species[0].inside_mm",
            "concentration",
        ),
        (
            "outside_mm: 110.0",
            "outside_mm: -1.0",
            "species[2].outside_mm",
            "concentration",
        ),
        (
            "outside_mm: 20.0",
            "outside_mm: -20.0",
            "protocol[1].outside_mm",
            "concentration",
        ),
        (
            "permeability_cm_per_s: 1.0e-7",
            "permeability_cm_per_s: -1.0e-7",
            "species[2].permeability_cm_per_s",
            "permeability",
        ),
        (
            "max_permeability_cm_per_s: 2.0e-6",
            "max_permeability_cm_per_s: -2.0e-6",
            "channels[1].max_permeability_cm_per_s",
            "permeability",
        ),
        (
            "diameter_um: 15.0",
            "diameter_um: -15.0",
            "cell.diameter_um",
            "diameter",
        ),
        (
            "diameter_um: 15.0",
            "diameter_um: 0.0",
            "cell.diameter_um",
            "diameter",
        ),
        (
            "capacitance_uf_per_cm2: 1.0",
            "capacitance_uf_per_cm2: -1.0",
            "cell.capacitance_uf_per_cm2",
            "capacitance",
        ),
        (
            "duration_ms: 250.0",
            "duration_ms: -250.0",
            "run.duration_ms",
            "duration",
        ),
        (
            "duration_ms: 250.0",
            "duration_ms: 0.0",
            "run.duration_ms",
            "duration",
        ),
        ("lag_ms: 0.5", "lag_ms: -0.5", "protocol[0].lag_ms", "lag"),
        ("lag_ms: 5.0", "lag_ms: -5.0", "protocol[1].lag_ms", "lag"),
        (
            "onset_ms: 20.0",
            "onset_ms: -20.0",
            "protocol[2].onset_ms",
            "negative",
        ),
        (
            "washout_ms: 40.0",
            "washout_ms: -40.0",
            "protocol[2].washout_ms",
            "negative",
        ),
        ("dose_um: 6.0", "dose_um: -6.0", "protocol[2].dose_um", "dose"),
    ];
    for (old, new, path, word) in cases {
        assert_problem(&with(old, new), path, &[word]);
    }
}

#[test]
fn zero_dose_lag_and_factor_are_allowed() {
    for (old, new) in [
        ("dose_um: 6.0", "dose_um: 0.0"),
        ("lag_ms: 0.5", "lag_ms: 0.0"),
        ("factor: 10.0", "factor: 0.0"),
    ] {
        assert!(read(&with(old, new)).is_ok(), "{new} should be accepted");
    }
}

// ---------------------------------------------------------------- species

#[test]
fn charge_zero_or_outside_three_is_refused() {
    for bad in ["0", "4", "-4", "100"] {
        let text = with(
            "(name: \"Ca2+\", charge: 2,",
            &format!("(name: \"Ca2+\", charge: {bad},"),
        );
        assert_problem(&text, "species[3].charge", &["charge", "−3 to 3"]);
    }
    for fine in ["3", "-3"] {
        let text = with(
            "(name: \"Ca2+\", charge: 2,",
            &format!("(name: \"Ca2+\", charge: {fine},"),
        );
        assert!(read(&text).is_ok(), "charge {fine} is allowed");
    }
}

#[test]
fn duplicate_species_names_are_refused() {
    let text = with("(name: \"Cl-\"", "(name: \"K+\"");
    assert_problem(&text, "species[2].name", &["\"K+\"", "unique"]);
}

#[test]
fn an_empty_species_list_is_refused() {
    let start = GOOD.find("    species: [").unwrap_or(0);
    let end = GOOD.find("    run: (").unwrap_or(0);
    let text = format!("{}    species: [],\n{}", &GOOD[..start], &GOOD[end..]);
    assert_problem(&text, "species", &["at least one"]);
}

#[test]
fn a_name_no_species_has_is_refused_in_pump_channel_and_events() {
    let cases = [
        ("exports: \"Na+\"", "exports: \"Na\"", "pump.exports"),
        ("imports: \"K+\"", "imports: \"Kalium\"", "pump.imports"),
        (
            "species: \"Na+\",\n            max_perm",
            "species: \"NA+\",\n            max_perm",
            "channels[0].species",
        ),
        (
            "PermeabilityScale(species: \"Na+\"",
            "PermeabilityScale(species: \"Lithium\"",
            "protocol[0].species",
        ),
        (
            "BathChange(species: \"K+\"",
            "BathChange(species: \"Rb+\"",
            "protocol[1].species",
        ),
        (
            "species: \"K+\", max_block",
            "species: \"k\", max_block",
            "protocol[2].species",
        ),
    ];
    for (old, new, path) in cases {
        assert_problem(&with(old, new), path, &["no species is named"]);
    }
    // A near miss gets the nearest name, a far one the list.
    assert_problem(
        &with(cases[0].0, cases[0].1),
        "pump.exports",
        &["did you mean \"Na+\""],
    );
    assert_problem(
        &with(cases[3].0, cases[3].1),
        "protocol[0].species",
        &["\"K+\", \"Na+\", \"Cl-\", \"Ca2+\""],
    );
}

#[test]
fn every_permeability_zero_is_refused() {
    let mut text = GOOD.to_string();
    for p in ["4.0e-7", "3.0e-8", "1.0e-7", "8.0e-6", "2.0e-6", "5.0e-8"] {
        text = with_in(&text, &format!("cm_per_s: {p}"), "cm_per_s: 0.0");
    }
    assert_problem(&text, "species", &["every permeability is 0"]);
    // One channel maximum above 0 is enough for a potential to exist.
    let text = with_in(
        &text,
        "max_permeability_cm_per_s: 0.0,\n            gates: [(kinetics: HhPot",
        "max_permeability_cm_per_s: 1.0e-9,\n            gates: [(kinetics: HhPot",
    );
    assert!(read(&text).is_ok());
}

#[test]
fn zero_concentration_is_allowed_and_leaves_only_that_reversal_undefined() {
    let text = with(
        "(name: \"Ca2+\", charge: 2, inside_mm: 0.0001,",
        "(name: \"Ca2+\", charge: 2, inside_mm: 0.0,",
    );
    let s = read(&text).expect("a zero concentration is a real experiment (ion substitution)");
    let report = permeant::analysis::rest_report(&valid(&s)).expect("the rest report of a valid scenario");
    let reversals: Vec<Option<f64>> = report.species.iter().map(|r| r.reversal_mv).collect();
    assert_eq!(
        reversals[3], None,
        "Ca2+ has no Nernst potential with none inside"
    );
    for (i, r) in reversals[..3].iter().enumerate() {
        let e = r.unwrap_or_else(|| panic!("species {i} keeps its reversal potential"));
        assert!(e.is_finite());
    }
    // The other potentials are those of the unchanged file.
    let original = permeant::analysis::rest_report(&valid(&read(GOOD).expect("valid"))).expect("report");
    for i in 0..3 {
        assert_eq!(report.species[i].reversal_mv, original.species[i].reversal_mv);
    }
    assert!(original.species[3].reversal_mv.is_some());
    // Zero outside as well.
    let text = with("outside_mm: 110.0", "outside_mm: 0.0");
    let s = read(&text).expect("zero outside is allowed too");
    let report = permeant::analysis::rest_report(&valid(&s)).expect("report");
    assert_eq!(report.species[2].reversal_mv, None);
    assert!(report.species[0].reversal_mv.is_some());
}

// ---------------------------------------------------------------- times and sampling

#[test]
fn until_before_from_is_refused() {
    let cases = [
        (
            "until_ms: Some(45.0)",
            "until_ms: Some(39.0)",
            "protocol[0].until_ms",
        ),
        (
            "from_ms: 120.0, until_ms: None",
            "from_ms: 120.0, until_ms: Some(100.0)",
            "protocol[2].until_ms",
        ),
        (
            "from_ms: 10.0, until_ms: 11.0",
            "from_ms: 10.0, until_ms: 9.0",
            "protocol[3].until_ms",
        ),
    ];
    for (old, new, path) in cases {
        assert_problem(&with(old, new), path, &["before it starts"]);
    }
    // Equal times are an empty interval, not an error.
    assert!(
        read(&with(
            "from_ms: 10.0, until_ms: 11.0",
            "from_ms: 10.0, until_ms: 10.0"
        ))
        .is_ok()
    );
}

#[test]
fn negative_event_times_are_refused() {
    let cases = [
        ("from_ms: 40.0", "from_ms: -40.0", "protocol[0].from_ms"),
        ("at_ms: 80.0", "at_ms: -1.0", "protocol[1].at_ms"),
        ("from_ms: 120.0", "from_ms: -0.5", "protocol[2].from_ms"),
        ("from_ms: 10.0", "from_ms: -10.0", "protocol[3].from_ms"),
        ("from_ms: 150.0", "from_ms: -150.0", "protocol[4].from_ms"),
    ];
    for (old, new, path) in cases {
        assert_problem(&with(old, new), path, &["event time", "negative"]);
    }
}

#[test]
fn sample_interval_must_be_positive() {
    for bad in ["0.0", "-0.1"] {
        assert_problem(
            &with("sample_ms: 0.1", &format!("sample_ms: {bad}")),
            "run.sample_ms",
            &["greater than 0"],
        );
    }
}

#[test]
fn a_sample_interval_longer_than_the_run_is_refused() {
    // Issue 13: 300 ms samples of a 250 ms run record only t = 0 and plot nothing.
    let text = with("sample_ms: 0.1", "sample_ms: 300.0");
    assert_problem(&text, "run.sample_ms", &["longer than the run", "250 ms"]);
    // One sample interval as long as the run records its two ends: allowed.
    assert!(read(&with("sample_ms: 0.1", "sample_ms: 250.0")).is_ok());
}

#[test]
fn more_than_ten_million_samples_is_refused() {
    // 10 000 000 ms every 1 ms is 10 000 001 samples, counting both ends.
    let text = with(
        "duration_ms: 250.0,\n        sample_ms: 0.1",
        "duration_ms: 10000000.0,\n        sample_ms: 1.0",
    );
    assert_problem(&text, "run.sample_ms", &["10 million"]);
    // One millisecond less is exactly 10 million samples: allowed.
    let text = with(
        "duration_ms: 250.0,\n        sample_ms: 0.1",
        "duration_ms: 9999999.0,\n        sample_ms: 1.0",
    );
    assert!(read(&text).is_ok());
}

// ---------------------------------------------------------------- protocol events

#[test]
fn agent_constants_are_checked() {
    let cases = [
        ("ic50_um: 3.0", "ic50_um: 0.0", "protocol[2].ic50_um", "IC50"),
        ("ic50_um: 3.0", "ic50_um: -3.0", "protocol[2].ic50_um", "IC50"),
        ("hill: 1.0,\n", "hill: 0.0,\n", "protocol[2].hill", "Hill"),
        ("hill: 1.0,\n", "hill: -1.0,\n", "protocol[2].hill", "Hill"),
        (
            "max_block: 0.8",
            "max_block: 1.5",
            "protocol[2].max_block",
            "0 to 1",
        ),
        (
            "max_block: 0.8",
            "max_block: -0.1",
            "protocol[2].max_block",
            "0 to 1",
        ),
        ("dose_um: 6.0", "dose_um: -0.001", "protocol[2].dose_um", "dose"),
    ];
    for (old, new, path, word) in cases {
        assert_problem(&with(old, new), path, &[word]);
    }
    for edge in ["max_block: 0.0", "max_block: 1.0"] {
        assert!(read(&with("max_block: 0.8", edge)).is_ok(), "{edge} is allowed");
    }
}

#[test]
fn an_opener_is_refused_with_a_negative_increase_or_a_block_beside_it() {
    let opener = |block: &str, increase: &str| {
        with(
            "max_block: 0.8",
            &format!("{block}max_increase: Some({increase})"),
        )
    };
    assert_problem(
        &opener("", "-0.5"),
        "protocol[2].max_increase",
        &["cannot be negative"],
    );
    assert_problem(&opener("", "inf"), "protocol[2].max_increase", &["finite"]);
    assert_problem(
        &opener("max_block: 0.8, ", "2.0"),
        "protocol[2].max_increase",
        &["either blocks", "or opens", "not both"],
    );
    // An opener alone, or beside the default max_block written out, is a valid agent.
    let valid = read(&opener("", "2.0")).expect("an opener");
    assert!(matches!(
        valid.protocol[2],
        permeant::scenario::Event::Agent { max_increase: Some(x), .. } if x == 2.0
    ));
    assert!(read(&opener("max_block: 1.0, ", "0.0")).is_ok());
}

#[test]
fn two_agents_with_one_label_are_refused() {
    let text = with(
        "        Inject(amplitude",
        &format!("        {SECOND_AGENT}\n        Inject(amplitude"),
    );
    assert_problem(&text, "protocol[3].label", &["\"drug X\"", "unique"]);
    let text = text.replacen(
        "label: \"drug X\", species: \"Na+\"",
        "label: \"drug Y\", species: \"Na+\"",
        1,
    );
    assert!(read(&text).is_ok());
}

#[test]
fn negative_scale_factor_is_refused() {
    assert_problem(
        &with("factor: 10.0", "factor: -2.0"),
        "protocol[0].factor",
        &["factor", "negative"],
    );
}

#[test]
fn train_settings_are_checked() {
    let cases = [
        ("count: 4", "count: 0", "protocol[4].count", "at least one pulse"),
        (
            "period_ms: 25.0",
            "period_ms: 0.0",
            "protocol[4].period_ms",
            "period",
        ),
        (
            "period_ms: 25.0",
            "period_ms: -25.0",
            "protocol[4].period_ms",
            "period",
        ),
        ("width_ms: 1.0", "width_ms: 0.0", "protocol[4].width_ms", "width"),
        ("width_ms: 1.0", "width_ms: -1.0", "protocol[4].width_ms", "width"),
        (
            "width_ms: 1.0",
            "width_ms: 25.5",
            "protocol[4].width_ms",
            "longer than the period",
        ),
    ];
    for (old, new, path, word) in cases {
        assert_problem(&with(old, new), path, &[word]);
    }
    assert!(
        read(&with("width_ms: 1.0", "width_ms: 25.0")).is_ok(),
        "a pulse as long as the period is allowed"
    );
}

// ---------------------------------------------------------------- pump

#[test]
fn pump_must_exchange_two_different_species() {
    assert_problem(
        &with("imports: \"K+\"", "imports: \"Na+\""),
        "pump.imports",
        &["different species"],
    );
}

#[test]
fn pump_must_export_at_least_one_ion() {
    assert_problem(
        &with("exported_per_cycle: 3", "exported_per_cycle: 0"),
        "pump.exported_per_cycle",
        &["at least 1"],
    );
}

#[test]
fn pump_must_move_net_positive_charge_out() {
    // 2 Na+ out, 3 K+ in: one charge inward per cycle.
    let text = with(
        "exported_per_cycle: 3, imported_per_cycle: 2",
        "exported_per_cycle: 2, imported_per_cycle: 3",
    );
    assert_problem(&text, "pump", &["net positive charge", "-1"]);
    // Equal numbers: no net charge.
    let text = with(
        "exported_per_cycle: 3, imported_per_cycle: 2",
        "exported_per_cycle: 2, imported_per_cycle: 2",
    );
    assert_problem(&text, "pump", &["net positive charge", "+0"]);
    // Exporting an anion moves negative charge out.
    let text = with("exports: \"Na+\"", "exports: \"Cl-\"");
    assert_problem(&text, "pump", &["net positive charge"]);
}

#[test]
fn pump_half_saturation_and_hill_must_be_positive() {
    let cases = [
        (
            "half_saturation_inside_mm: 12.0",
            "half_saturation_inside_mm: 0.0",
            "pump.half_saturation_inside_mm",
            "half-saturation",
        ),
        (
            "half_saturation_outside_mm: 1.2",
            "half_saturation_outside_mm: -1.2",
            "pump.half_saturation_outside_mm",
            "half-saturation",
        ),
        ("hill_inside: 1.0", "hill_inside: 0.0", "pump.hill_inside", "Hill"),
        (
            "hill_outside: 1.0",
            "hill_outside: -2.0",
            "pump.hill_outside",
            "Hill",
        ),
    ];
    for (old, new, path, word) in cases {
        assert_problem(&with(old, new), path, &[word, "greater than 0"]);
    }
}

// ---------------------------------------------------------------- channels

#[test]
fn two_channels_with_one_label_are_refused() {
    assert_problem(
        &with("label: \"slow potassium\"", "label: \"late potassium\""),
        "channels[2].label",
        &["\"late potassium\"", "unique"],
    );
}

#[test]
fn gate_power_zero_is_refused() {
    assert_problem(
        &with("power: 4", "power: 0"),
        "channels[1].gates[0].power",
        &["from 1 to 16"],
    );
}

#[test]
fn gate_power_too_large_is_refused() {
    // A power past i32's range once wrapped to a negative exponent (x⁻¹): refused outright.
    assert_problem(
        &with("power: 4", "power: 4294967295"),
        "channels[1].gates[0].power",
        &["from 1 to 16", "4294967295"],
    );
}

#[test]
fn a_train_with_too_many_pulses_in_the_run_is_refused() {
    let text = with(
        "protocol: [",
        "protocol: [InjectTrain(amplitude_ua_per_cm2: 1.0, width_ms: 1e-6, period_ms: 2e-6, count: 4000000000, from_ms: 0.0),",
    );
    let problems = problems_of(&text);
    assert!(
        problems
            .iter()
            .any(|p| p.path.ends_with(".count") && p.message.contains("limit")),
        "{problems:?}"
    );
}

#[test]
fn a_run_longer_than_the_limit_is_refused() {
    let text = with("duration_ms: 250.0,", "duration_ms: 1e20,");
    let problems = problems_of(&text);
    assert!(
        problems
            .iter()
            .any(|p| p.path == "run.duration_ms" && p.message.contains("longest run")),
        "{problems:?}"
    );
}

#[test]
fn boltzmann_slope_zero_and_tau_not_positive_are_refused() {
    assert_problem(
        &with("slope_mv: 7.0", "slope_mv: 0.0"),
        "channels[2].gates[0].kinetics.slope_mv",
        &["cannot be 0"],
    );
    assert!(
        read(&with("slope_mv: 7.0", "slope_mv: -7.0")).is_ok(),
        "a negative slope is an inactivating gate"
    );
    for bad in ["0.0", "-40.0"] {
        assert_problem(
            &with("tau_ms: 40.0", &format!("tau_ms: {bad}")),
            "channels[2].gates[0].kinetics.tau_ms",
            &["greater than 0"],
        );
    }
}

#[test]
fn q10_must_be_positive() {
    for bad in ["0.0", "-3.0"] {
        assert_problem(
            &with("q10: 3.0", &format!("q10: {bad}")),
            "channels[0].q10",
            &["q10", "greater than 0"],
        );
    }
}

#[test]
fn a_channel_without_gates_is_refused() {
    let text = with(
        "gates: [(kinetics: HhPotassiumActivation, power: 4)]",
        "gates: []",
    );
    assert_problem(&text, "channels[1].gates", &["at least one gate"]);
}

// ---------------------------------------------------------------- temperature

#[test]
fn temperatures_outside_minus_five_to_sixty_are_refused() {
    for bad in ["-5.1", "60.1", "-273.15", "1000.0"] {
        assert_problem(
            &with("temperature_c: 30.0", &format!("temperature_c: {bad}")),
            "temperature_c",
            &["−5 to 60 °C"],
        );
    }
    assert_problem(
        &with("reference_temperature_c: 22.0", "reference_temperature_c: 1.0e6"),
        "channels[2].reference_temperature_c",
        &["−5 to 60 °C"],
    );
}

#[test]
fn temperatures_outside_zero_to_forty_five_warn() {
    let warned = |t: &str| {
        let s = read(&with("temperature_c: 30.0", &format!("temperature_c: {t}"))).expect("accepted");
        scenario::warnings(&s)
    };
    for t in ["-5.0", "-0.5", "45.5", "60.0"] {
        let w = warned(t);
        assert_eq!(w.len(), 1, "{t} °C should warn once: {w:?}");
        assert_eq!(w[0].path, "temperature_c");
        assert!(w[0].message.contains("0–45 °C"), "{}", w[0].message);
    }
    for t in ["0.0", "37.0", "45.0"] {
        assert!(warned(t).is_empty(), "{t} °C needs no warning");
    }
}

// ---------------------------------------------------------------- reporting

#[test]
fn every_meaning_problem_is_reported_not_only_the_first() {
    let text = with("inside_mm: 130.0", "inside_mm: -1.0").replacen("tau_ms: 40.0", "tau_ms: 0.0", 1);
    let problems = problems_of(&text);
    let paths: Vec<&str> = problems.iter().map(|p| p.path.as_str()).collect();
    assert_eq!(
        paths,
        ["species[0].inside_mm", "channels[2].gates[0].kinetics.tau_ms"]
    );
    let shown = error_of(&text).to_string();
    assert_eq!(shown.lines().count(), 2, "one line per problem: {shown}");
    assert!(
        shown.lines().all(|l| l.starts_with(&format!("{FILE}: "))),
        "{shown}"
    );
    assert_eq!(
        error_of(&text).location(),
        Some(Location::Field("species[0].inside_mm".into()))
    );
}

// ---------------------------------------------------------------- files, saving, round trip

#[test]
fn saved_text_reads_back_equal_with_fields_in_documented_order() {
    let original = read(GOOD).expect("valid");
    let text = to_ron_string(&original);
    let again = read(&text).unwrap_or_else(|e| panic!("saved text must read back: {e}\n{text}"));
    assert_eq!(again, original);
    // Top-level fields, one indentation level deep, in scenario-format.md's order.
    let order = [
        "format",
        "title",
        "notes",
        "temperature_c",
        "cell",
        "species",
        "pump",
        "channels",
        "protocol",
        "run",
    ];
    let positions: Vec<usize> = order
        .iter()
        .map(|f| {
            text.find(&format!("\n    {f}: "))
                .unwrap_or_else(|| panic!("`{f}` missing from:\n{text}"))
        })
        .collect();
    assert!(
        positions.windows(2).all(|w| w[0] < w[1]),
        "fields out of order:\n{text}"
    );
    assert!(
        text.starts_with("(\n    format: 1,"),
        "format comes first:\n{text}"
    );
    assert!(text.trim_end().ends_with(")"));
    // Species fields in order too.
    let species = [
        "name",
        "charge",
        "inside_mm",
        "outside_mm",
        "permeability_cm_per_s",
    ];
    let positions: Vec<usize> = species
        .iter()
        .map(|f| text.find(&format!("{f}: ")).unwrap_or(usize::MAX))
        .collect();
    assert!(
        positions.windows(2).all(|w| w[0] < w[1]),
        "species fields out of order:\n{text}"
    );
    // Saving is stable: a second round gives the same text.
    assert_eq!(to_ron_string(&again), text);
}

#[test]
fn default_scenario_round_trips() {
    let s = Scenario::new_default();
    assert!(scenario::problems(&s).is_empty());
    assert_eq!(read(&to_ron_string(&s)).ok(), Some(s));
}

#[test]
fn an_opener_round_trips_and_a_blocker_saves_without_the_new_field() {
    let blocker = read(GOOD).expect("valid");
    assert!(!to_ron_string(&blocker).contains("max_increase"));
    let text = with("max_block: 0.8", "max_increase: Some(2.5)");
    let opener = read(&text).expect("valid");
    let saved = to_ron_string(&opener);
    assert!(saved.contains("max_increase: Some(2.5)"), "{saved}");
    assert_eq!(read(&saved).ok(), Some(opener));
}

#[test]
fn awkward_text_and_numbers_round_trip_exactly() {
    let mut s = read(GOOD).expect("valid");
    s.title = "quotes \" backslash \\ newline\n tab\t unicode µ±°—".into();
    s.notes = "// not a comment\n/* nor this */ r#\"raw\"#".into();
    s.species[0].permeability_cm_per_s = 1.0 / 3.0 * 1e-7;
    s.species[1].inside_mm = 0.1 + 0.2;
    s.species[2].outside_mm = f64::MIN_POSITIVE;
    s.run.start = Start::Rest;
    if let Event::PermeabilityScale { until_ms, .. } = &mut s.protocol[0] {
        *until_ms = None;
    }
    let again = read(&to_ron_string(&s)).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(again, s);
}

#[test]
fn save_atomic_writes_the_file_and_leaves_no_temporary_behind() {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("saved.ron");
    let s = read(GOOD).expect("valid");
    save_atomic(&s, &path).expect("save");
    assert_eq!(names_in(dir.path()), ["saved.ron"]);
    assert_eq!(
        read_file(&path).ok().map(permeant::scenario::Valid::into_inner),
        Some(s.clone())
    );
    // Overwriting an existing file replaces it whole.
    let mut changed = s.clone();
    changed.title = "changed".into();
    save_atomic(&changed, &path).expect("save over");
    assert_eq!(names_in(dir.path()), ["saved.ron"]);
    assert_eq!(
        read_file(&path).ok().map(permeant::scenario::Valid::into_inner),
        Some(changed)
    );
}

#[test]
fn a_failed_save_leaves_the_target_as_it_was() {
    let dir = tempfile::tempdir().expect("temp dir");
    let s = read(GOOD).expect("valid");
    // Into a directory that does not exist: an error, and nothing is created.
    let missing = dir.path().join("no such dir").join("x.ron");
    assert!(save_atomic(&s, &missing).is_err());
    assert!(names_in(dir.path()).is_empty());
    // Over a directory (the rename fails): the directory keeps its contents, no temporary
    // file is left beside it.
    let target = dir.path().join("taken.ron");
    std::fs::create_dir(&target).expect("mkdir");
    std::fs::write(target.join("inside.txt"), "keep").expect("write");
    assert!(save_atomic(&s, &target).is_err());
    assert_eq!(names_in(dir.path()), ["taken.ron"]);
    assert_eq!(
        std::fs::read_to_string(target.join("inside.txt")).ok().as_deref(),
        Some("keep")
    );
}

#[test]
fn reading_never_changes_the_file() {
    let dir = tempfile::tempdir().expect("temp dir");
    let good = dir.path().join("good.ron");
    let bad = dir.path().join("bad.ron");
    let bad_text = with("inside_mm: 130.0", "inside_mm: -1.0");
    std::fs::write(&good, GOOD).expect("write");
    std::fs::write(&bad, &bad_text).expect("write");
    let before = |p: &Path| {
        let m = std::fs::metadata(p).expect("metadata");
        (std::fs::read(p).expect("read"), m.modified().ok(), m.len())
    };
    let (good_before, bad_before) = (before(&good), before(&bad));
    assert!(read_file(&good).is_ok());
    assert!(read_file(&bad).is_err());
    assert_eq!(before(&good), good_before);
    assert_eq!(before(&bad), bad_before);
    assert_eq!(names_in(dir.path()), ["bad.ron", "good.ron"]);
}

#[test]
fn file_errors_name_the_file() {
    let dir = tempfile::tempdir().expect("temp dir");
    let missing = dir.path().join("absent.ron");
    let e = read_file(&missing).expect_err("no such file");
    assert!(matches!(e, ScenarioError::Io { .. }));
    assert!(e.to_string().starts_with(&missing.display().to_string()), "{e}");
    // A file that is not UTF-8: the place of the first bad byte.
    let binary = dir.path().join("binary.ron");
    std::fs::write(&binary, b"(\n  title: \"ok\xff\xfe\"").expect("write");
    let e = read_file(&binary).expect_err("not text");
    let shown = e.to_string();
    assert!(
        shown.starts_with(&format!("{}:2:13: ", binary.display())),
        "{shown}"
    );
    assert!(shown.contains("UTF-8"), "{shown}");
    // A directory.
    assert!(read_file(dir.path()).is_err());
    // Errors from a real file carry its path in every line.
    let bad = dir.path().join("bad.ron");
    std::fs::write(&bad, with("inside_mm: 130.0", "insde_mm: 130.0")).expect("write");
    let shown = read_file(&bad).expect_err("bad").to_string();
    let (line, column) = place_of(GOOD, "inside_mm: 130.0");
    assert!(
        shown.starts_with(&format!("{}:{line}:{column}: ", bad.display())),
        "{shown}"
    );
}

fn names_in(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .map(|rd| {
            rd.filter_map(|e| e.ok())
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .collect()
        })
        .unwrap_or_default();
    names.sort();
    names
}

// ---------------------------------------------------------------- no input makes the reader panic

/// Characters that matter to RON, so that mutations often stay near-valid.
const RON_CHARS: &[char] = &[
    '(', ')', '[', ']', '{', '}', ':', ',', '"', '\'', '\\', '/', '*', '#', '-', '+', '.', 'e', 'E', '0',
    '1', '9', '_', ' ', '\n', 'r', 'S', 'N', 'i', 'n', 'f', 'a',
];

fn mutate(base: &str, edits: &[(u8, prop::sample::Index, char, bool)]) -> String {
    let mut chars: Vec<char> = base.chars().collect();
    for (op, at, c, ron_char) in edits {
        let c = if *ron_char {
            RON_CHARS[(*c as usize) % RON_CHARS.len()]
        } else {
            *c
        };
        match op % 3 {
            0 if !chars.is_empty() => {
                chars.remove(at.index(chars.len()));
            }
            1 => chars.insert(at.index(chars.len() + 1), c),
            _ if !chars.is_empty() => {
                let i = at.index(chars.len());
                chars[i] = c;
            }
            _ => chars.push(c),
        }
    }
    chars.into_iter().collect()
}

/// What must hold for any input: no panic; an error names the file and a place inside it; a
/// text that is accepted survives a save and a read.
fn check_any_text(text: &str) -> Result<(), TestCaseError> {
    match read(text) {
        Ok(s) => {
            let again = read(&to_ron_string(&s));
            prop_assert_eq!(again.ok(), Some(s));
        }
        Err(e) => {
            let shown = e.to_string();
            prop_assert!(shown.starts_with(FILE), "{}", shown);
            if let Some(Location::Text { line, column }) = e.location() {
                // A lone carriage return ends a line too, as the reader counts lines.
                let text = text.replace("\r\n", "\n").replace('\r', "\n");
                let lines = text.split('\n').count();
                prop_assert!(line >= 1 && line <= lines, "line {} of {}", line, lines);
                let width = text.split('\n').nth(line - 1).map_or(0, |l| l.chars().count());
                prop_assert!(
                    column >= 1 && column <= width + 1,
                    "column {} of {}",
                    column,
                    width
                );
            }
        }
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, failure_persistence: None, ..ProptestConfig::default() })]

    #[test]
    fn arbitrary_text_never_panics(text in any::<String>()) {
        check_any_text(&text)?;
    }

    #[test]
    fn ron_like_text_never_panics(text in "[(){}\\[\\]:,\"'\\\\/*#a-z_0-9.+\\- \n]{0,300}") {
        check_any_text(&text)?;
    }

    #[test]
    fn mutated_scenarios_never_panic(
        edits in prop::collection::vec((any::<u8>(), any::<prop::sample::Index>(), any::<char>(), any::<bool>()), 1..6)
    ) {
        check_any_text(&mutate(GOOD, &edits))?;
    }
}
