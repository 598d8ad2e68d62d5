//! Solutions as recipes (solutions.md) against outside sources: Henderson junction potentials
//! against the closed forms they reduce to (Lewis–Sargent, a single salt with transference
//! numbers), the Davies equation against Robinson & Stokes' measured activity coefficients,
//! osmolarity and ionic strength worked by hand, Henderson–Hasselbalch; then equivalence of a
//! scenario with solutions to the same scenario with the derived numbers typed in, the file
//! rules with their field paths, and the round trip. The recipes are invented for these tests.

use permeant::analysis::rest_report;
use permeant::analysis::scan::{ScanControl, ScanRange, Vary, scan};
use permeant::constants::rt_over_f_mv;
use permeant::engine::{Budget, Run, SolverSettings};
use permeant::scenario::{Scenario, ScenarioError, Solution, from_str, to_ron};
use permeant::solutions::replace::Replace;
use permeant::solutions::{Catalog, Mixture, davies_a, davies_gamma, junction_mv, mix};

/// CRC Handbook of Chemistry and Physics, "Ionic conductivity and diffusion at infinite
/// dilution", λ at 25 °C in S·cm²/mol per unit charge, written here independently of the
/// program's table.
const CRC_NA: f64 = 50.08;
const CRC_K: f64 = 73.48;
const CRC_CL: f64 = 76.31;
const CRC_CA: f64 = 59.47;

fn solution(parts: &[(&str, f64)]) -> Solution {
    Solution {
        name: "x".into(),
        parts: parts.iter().map(|(n, c)| (n.to_string(), *c)).collect(),
        ph: None,
        titrant: None,
    }
}

fn mixed(parts: &[(&str, f64)]) -> Mixture {
    mix(&Catalog::builtin(), &solution(parts))
}

/// The junction of β relative to α at 25 °C, concentrations (activities off).
fn ljp(alpha: &[(&str, f64)], beta: &[(&str, f64)]) -> f64 {
    junction_mv(&mixed(alpha), &mixed(beta), false, 25.0)
}

#[test]
fn a_bi_ionic_junction_with_a_common_anion_is_the_lewis_sargent_relation() {
    // Lewis & Sargent: V = (RT/F) ln(Λ_NaCl/Λ_KCl) for NaCl | KCl at equal concentration.
    let expected = rt_over_f_mv(25.0) * ((CRC_NA + CRC_CL) / (CRC_K + CRC_CL)).ln();
    let v = ljp(&[("NaCl", 150.0)], &[("KCl", 150.0)]);
    assert!((v - expected).abs() < 1e-9, "{v} vs {expected}");
    // About −4.4 mV (issue 10, with the CRC conductivities).
    assert!((v + 4.4).abs() < 0.05, "{v}");
}

#[test]
fn a_single_salt_junction_is_the_transference_number_form() {
    // V = (t+/z+ + t−/z−)(RT/F) ln(c_α/c_β), with t± from the same conductivities.
    let rt = rt_over_f_mv(25.0);
    let (tp, tm) = (CRC_NA / (CRC_NA + CRC_CL), CRC_CL / (CRC_NA + CRC_CL));
    let expected = (tp / 1.0 + tm / -1.0) * rt * (150.0f64 / 15.0).ln();
    let v = ljp(&[("NaCl", 150.0)], &[("NaCl", 15.0)]);
    assert!((v - expected).abs() < 1e-9, "NaCl: {v} vs {expected}");
    let (tp, tm) = (CRC_CA / (CRC_CA + CRC_CL), CRC_CL / (CRC_CA + CRC_CL));
    let expected = (tp / 2.0 + tm / -1.0) * rt * (10.0f64 / 1.0).ln();
    let v = ljp(&[("CaCl2", 10.0)], &[("CaCl2", 1.0)]);
    assert!((v - expected).abs() < 1e-9, "CaCl2: {v} vs {expected}");
}

#[test]
fn hydrochloric_acid_against_potassium_chloride_gives_the_classic_value() {
    // 0.1 M HCl | 0.1 M KCl: about +26.8 mV computed (a classic textbook example; measured
    // values about 27–28 mV, from memory).
    let v = ljp(&[("HCl", 100.0)], &[("KCl", 100.0)]);
    assert!((v - 26.8).abs() < 0.1, "{v}");
}

#[test]
fn a_potassium_gluconate_pipette_against_a_saline_bath_is_in_the_range_labs_correct_for() {
    // Common practice: +10 to +18 mV for a K-gluconate-based pipette against a NaCl bath.
    let pipette = [("K-gluconate", 130.0), ("KCl", 10.0), ("MgCl2", 2.0)];
    let bath = [("NaCl", 140.0), ("KCl", 5.0), ("CaCl2", 2.0), ("MgCl2", 1.0)];
    let v = ljp(&pipette, &bath);
    assert!((10.0..=18.0).contains(&v), "{v}");
    // Reversing the sides flips the sign; equal sides give exactly 0.
    let back = ljp(&bath, &pipette);
    assert!((v + back).abs() < 1e-12, "{v} {back}");
    assert_eq!(ljp(&bath, &bath), 0.0);
}

#[test]
fn the_removable_singularity_has_its_limit_and_no_jump() {
    // Equal conductance sums: the factor's limit is −(RT/F) Σ sgn(z) λ Δc / Σ |z| λ c_β
    // (solutions.md). NaCl 100 | KCl x with (λK+λCl)x = (λNa+λCl)·100 makes them equal.
    let x = 100.0 * (CRC_NA + CRC_CL) / (CRC_K + CRC_CL);
    // Σ sgn(z) λ Δc: K+ and Na+ count +, Cl- (the same on both sides but for x − 100) −.
    let s = CRC_K * x - CRC_NA * 100.0 - CRC_CL * (x - 100.0);
    let expected = -rt_over_f_mv(25.0) * s / ((CRC_K + CRC_CL) * x);
    let at = ljp(&[("NaCl", 100.0)], &[("KCl", x)]);
    assert!(
        (at - expected).abs() < 1e-9 * expected.abs().max(1.0),
        "{at} vs {expected}"
    );
    // Either side of it, the general form agrees with the limit to first order.
    for dx in [1e-7, -1e-7, 1e-3] {
        let near = ljp(&[("NaCl", 100.0)], &[("KCl", x + dx)]);
        assert!(
            (near - at).abs() < 0.1 * dx.abs().max(1e-6),
            "{dx}: {near} vs {at}"
        );
    }
}

#[test]
fn davies_parameter_and_coefficients_match_robinson_and_stokes() {
    // A(25 °C) = 0.509 (Robinson & Stokes, Electrolyte Solutions), within 1 %.
    assert!((davies_a(25.0) / 0.509 - 1.0).abs() < 0.01, "{}", davies_a(25.0));
    // NaCl at 0.1 mol/L: measured mean activity coefficient 0.778 (Robinson & Stokes), 2 %.
    let g = davies_gamma(1, 100.0, 25.0);
    assert!((g / 0.778 - 1.0).abs() < 0.02, "{g}");
    // CaCl2 at 0.1 mol/kg (I = 0.3): measured 0.518 (Robinson & Stokes); the mean coefficient
    // (γ_Ca γ_Cl²)^(1/3), within the 5 % the Davies equation reaches there.
    let ca = mixed(&[("CaCl2", 100.0)]);
    let i = ca.checks().ionic_strength_mm;
    assert!((i - 300.0).abs() < 1e-9, "{i}");
    let mean = (davies_gamma(2, i, 25.0) * davies_gamma(-1, i, 25.0).powi(2)).cbrt();
    assert!((mean / 0.518 - 1.0).abs() < 0.05, "{mean}");
    // A grows with temperature (water's permittivity falls faster than T rises).
    assert!(davies_a(37.0) > davies_a(25.0));
}

#[test]
fn a_physiological_saline_checks_out_by_hand() {
    // NaCl 140, KCl 5, CaCl2 2, MgCl2 1, glucose 10 (mM). By hand:
    // Na 140, K 5, Ca 2, Mg 1, Cl 140 + 5 + 2·2 + 2·1 = 151, glucose 10.
    // Osmolarity (ideal) 140 + 5 + 2 + 1 + 151 + 10 = 309 mOsm/L.
    // Cations 140 + 5 + 2·2 + 2·1 = 151 mEq/L; anions 151 mEq/L.
    // Ionic strength ½(140 + 5 + 4·2 + 4·1 + 151) = 154 mM.
    let m = mixed(&[
        ("NaCl", 140.0),
        ("KCl", 5.0),
        ("CaCl2", 2.0),
        ("MgCl2", 1.0),
        ("glucose", 10.0),
    ]);
    let c = m.checks();
    assert_eq!(m.mm_of("Cl-"), 151.0);
    assert_eq!(c.osmolarity_mosm, 309.0);
    assert_eq!(c.cation_meq, 151.0);
    assert_eq!(c.anion_meq, 151.0);
    assert_eq!(c.imbalance_meq, 0.0);
    assert_eq!(c.ionic_strength_mm, 154.0);
    assert_eq!(c.titrant_mm, None);
}

#[test]
fn hepes_at_ph_7_4_takes_44_3_percent_of_its_amount_in_base() {
    // Henderson–Hasselbalch: 1/(1 + 10^(7.5 − 7.4)) = 0.4427.
    let s = Solution {
        ph: Some(7.4),
        titrant: Some("NaOH".into()),
        ..solution(&[("NaCl", 140.0), ("HEPES", 10.0)])
    };
    let m = mix(&Catalog::builtin(), &s);
    let t = m.titrant_mm.unwrap_or(f64::NAN);
    assert!((t / 10.0 - 0.443).abs() < 0.0005, "{t}");
    // The titrant's Na+ joins the salt's, and HEPES- balances it.
    assert!((m.mm_of("Na+") - 140.0 - t).abs() < 1e-12);
    assert!((m.mm_of("HEPES-") - t).abs() < 1e-12);
    assert!(m.checks().imbalance_meq.abs() < 1e-12);
    // Osmolarity: every HEPES particle once, charged or not, plus the titrant's cation.
    assert!((m.checks().osmolarity_mosm - (280.0 + 10.0 + t)).abs() < 1e-9);
}

/// A passive cell with a pump, its inside and bath from solutions.
const WITH_SOLUTIONS: &str = r#"(
    format: 1,
    title: "Solutions test cell",
    temperature_c: 22.0,
    solutions: [
        (name: "bath", parts: [("NaCl", 140.0), ("KCl", 5.0), ("CaCl2", 2.0), ("MgCl2", 1.0),
                               ("HEPES", 10.0), ("glucose", 10.0)], ph: Some(7.4), titrant: Some("NaOH")),
        (name: "pipette", parts: [("K-gluconate", 130.0), ("KCl", 10.0), ("MgCl2", 2.0), ("HEPES", 10.0)],
                          ph: Some(7.3), titrant: Some("KOH")),
        (name: "low sodium", parts: [("NMDG-Cl", 140.0), ("KCl", 5.0), ("CaCl2", 2.0), ("MgCl2", 1.0)]),
    ],
    inside: Some("pipette"),
    outside: Some("bath"),
    species: [
        (name: "K+", charge: 1, permeability_cm_per_s: 5.0e-7),
        (name: "Na+", charge: 1, permeability_cm_per_s: 2.5e-8),
        (name: "Cl-", charge: -1, permeability_cm_per_s: 1.0e-7),
    ],
    pump: Some((exports: "Na+", imports: "K+", exported_per_cycle: 3, imported_per_cycle: 2,
        max_current_ua_per_cm2: 0.5, half_saturation_inside_mm: 10.0, hill_inside: 1.0,
        half_saturation_outside_mm: 1.5, hill_outside: 1.0)),
    protocol: [
        BathExchange(solution: "low sodium", at_ms: 50.0, lag_ms: 5.0),
    ],
    run: (duration_ms: 100.0, sample_ms: 0.5),
)
"#;

fn read(text: &str) -> Result<Scenario, ScenarioError> {
    from_str(text, "test.ron").map(|v| v.into_inner())
}

/// The same cell with the derived concentrations typed in and the exchange as bath changes.
fn typed_in(s: &Scenario) -> Scenario {
    let p = permeant::solutions::plan(s);
    let low = p
        .mixture(s, "low sodium")
        .cloned()
        .unwrap_or_else(|| panic!("low sodium"));
    let mut t = s.clone();
    t.solutions.clear();
    t.inside = None;
    t.outside = None;
    t.protocol = t
        .species
        .iter()
        .map(|sp| permeant::scenario::Event::BathChange {
            species: sp.name.clone(),
            outside_mm: low.mm_of(&sp.name),
            at_ms: 50.0,
            lag_ms: 5.0,
        })
        .collect();
    t
}

#[test]
fn solutions_give_exactly_the_results_of_the_same_numbers_typed_in() {
    let s = read(WITH_SOLUTIONS).unwrap_or_else(|e| panic!("{e}"));
    // The numbers filled in are the solutions' own (by hand: 10 + 130 K+ and the titrant's K+).
    assert_eq!(s.species[1].outside_mm, 140.0 + s.species[1].outside_mm - 140.0);
    assert_eq!(s.species[2].inside_mm, 10.0 + 2.0 * 2.0);
    assert_eq!(s.species[1].inside_mm, 0.0);
    let t = typed_in(&s);
    let (vs, vt) = (
        permeant::scenario::validate(s.clone()).unwrap_or_else(|e| panic!("{e}")),
        permeant::scenario::validate(t.clone()).unwrap_or_else(|e| panic!("{e}")),
    );
    let (rs, rt) = (rest_report(&vs), rest_report(&vt));
    let (rs, rt) = (
        rs.unwrap_or_else(|e| panic!("{e}")),
        rt.unwrap_or_else(|e| panic!("{e}")),
    );
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * a.abs().max(1.0);
    assert!(close(
        rs.ghk_mv.clone().unwrap_or(f64::NAN),
        rt.ghk_mv.clone().unwrap_or(f64::NAN)
    ));
    assert!(close(
        rs.resting_mv().unwrap_or(f64::NAN),
        rt.resting_mv().unwrap_or(f64::NAN)
    ));
    // Runs, sample by sample.
    let trace = |v: &permeant::scenario::Valid| {
        let mut run = Run::new(v, SolverSettings::default()).unwrap_or_else(|e| panic!("{e}"));
        run.advance(Budget::to_end()).unwrap_or_else(|e| panic!("{e}"));
        run.trace().v_mv().to_vec()
    };
    let (a, b) = (trace(&vs), trace(&vt));
    assert_eq!(a.len(), b.len());
    assert!(a.iter().zip(&b).all(|(x, y)| close(*x, *y)), "runs differ");
    // The exchange did something: the potential moved.
    assert!((a[a.len() - 1] - a[0]).abs() > 1.0);
    // Scans.
    let range = ScanRange {
        from: 1e-8,
        to: 5e-7,
        points: 5,
        log: true,
    };
    let vary = Vary::Permeability("Cl-".into());
    let (ps, pt) = (
        scan(&s, &vary, &range, &ScanControl::default()).unwrap_or_else(|e| panic!("{e}")),
        scan(&t, &vary, &range, &ScanControl::default()).unwrap_or_else(|e| panic!("{e}")),
    );
    for (x, y) in ps.iter().zip(&pt) {
        assert!(close(
            x.resting_mv.unwrap_or(f64::NAN),
            y.resting_mv.unwrap_or(f64::NAN)
        ));
        assert!(close(x.ghk_mv.unwrap_or(f64::NAN), y.ghk_mv.unwrap_or(f64::NAN)));
    }
}

#[test]
fn the_recorded_potential_is_the_membrane_potential_plus_the_offset_in_force() {
    let s = read(WITH_SOLUTIONS).unwrap_or_else(|e| panic!("{e}"));
    let p = permeant::solutions::plan(&s);
    let js = p.junctions(&s);
    assert_eq!(js.len(), 2);
    assert_eq!((js[0].pipette.as_str(), js[0].bath.as_str()), ("pipette", "bath"));
    assert_eq!(js[1].bath, "low sodium");
    // Common practice: a K-gluconate pipette against saline is positive, about +10 to +18 mV.
    assert!((10.0..=18.0).contains(&js[0].ljp_mv), "{}", js[0].ljp_mv);
    for j in &js {
        assert_eq!(j.offset_mv, j.ljp_mv + j.reference_mv);
    }
    let offsets = p.offsets(&s).unwrap_or_else(|| panic!("offsets"));
    assert_eq!(offsets.at(0.0), js[0].offset_mv);
    assert_eq!(offsets.at(49.9), js[0].offset_mv);
    assert_eq!(offsets.at(50.0), js[1].offset_mv);
    // The CSV's third column is V plus that offset.
    let v = permeant::scenario::validate(s).unwrap_or_else(|e| panic!("{e}"));
    let mut run = Run::new(&v, SolverSettings::default()).unwrap_or_else(|e| panic!("{e}"));
    run.advance(Budget::to_end()).unwrap_or_else(|e| panic!("{e}"));
    let mut out = Vec::new();
    permeant::report::csv::write_header(&mut out, run.model(), run.trace()).unwrap_or_else(|e| panic!("{e}"));
    permeant::report::csv::write_rows(&mut out, run.model(), run.trace()).unwrap_or_else(|e| panic!("{e}"));
    let text = String::from_utf8(out).unwrap_or_default();
    let mut lines = text.lines();
    assert!(
        lines
            .next()
            .unwrap_or("")
            .starts_with("time_ms,v_mv,v_recorded_mv,")
    );
    for line in lines {
        let cells: Vec<f64> = line
            .split(',')
            .take(3)
            .map(|c| c.parse().unwrap_or(f64::NAN))
            .collect();
        assert_eq!(cells[2], cells[1] + offsets.at(cells[0]), "{line}");
    }
}

#[test]
fn a_bare_silver_wire_follows_the_bath_chloride_as_a_chloride_electrode_does() {
    // Ag/AgCl: E = E0 − (RT/F) ln a_Cl (standard electrochemistry); with the wire at ground,
    // the bath (and every potential read against it) moves by −ΔE = (RT/F) ln(a_new/a_old).
    let text = WITH_SOLUTIONS.replace(
        "    inside: Some",
        "    reference: Some(SilverChloride),\n    inside: Some",
    );
    let s = read(&text).unwrap_or_else(|e| panic!("{e}"));
    let js = permeant::solutions::plan(&s).junctions(&s);
    assert_eq!(js[0].reference_mv, 0.0);
    // The low-sodium bath has 140 + 5 + 4 + 2 = 151 mM Cl-; the starting bath the same.
    assert!(js[1].reference_mv.abs() < 1e-12, "{}", js[1].reference_mv);
    let text = text.replace("(\"NMDG-Cl\", 140.0)", "(\"Na-gluconate\", 140.0)");
    let s = read(&text).unwrap_or_else(|e| panic!("{e}"));
    let js = permeant::solutions::plan(&s).junctions(&s);
    let expected = rt_over_f_mv(22.0) * (11.0f64 / 151.0).ln();
    assert!(
        (js[1].reference_mv - expected).abs() < 1e-9,
        "{} vs {expected}",
        js[1].reference_mv
    );
}

#[test]
fn a_replacement_scan_moves_the_junction_from_one_end_to_the_other() {
    let s = read(WITH_SOLUTIONS).unwrap_or_else(|e| panic!("{e}"));
    let r = Replace::parse("NaCl:NMDG-Cl", &s).unwrap_or_else(|e| panic!("{e}"));
    let range = ScanRange {
        from: 0.0,
        to: 140.0,
        points: 3,
        log: false,
    };
    let points = r
        .scan(&s, &range, &ScanControl::default())
        .unwrap_or_else(|e| panic!("{e}"));
    let p = permeant::solutions::plan(&s);
    let start = p.junction(&s, "pipette", "bath").map(|j| j.ljp_mv);
    assert_eq!(points[0].ljp_mv, start);
    // At the far end the bath is the low-sodium one with its HEPES, glucose and titrant.
    assert!(points[2].ljp_mv.unwrap_or(f64::NAN) != start.unwrap_or(f64::NAN));
    assert!(
        Replace::parse("NaCI:NMDG-Cl", &s).is_err_and(|e| e.to_string().contains("did you mean \"NaCl\""))
    );
    assert!(r.apply(&s, 141.0).is_err());
}

/// The problems of a file refused for its meaning.
fn problems(text: &str) -> Vec<permeant::scenario::Problem> {
    match read(text) {
        Err(ScenarioError::Invalid { problems, .. }) => problems,
        Err(e) => panic!("expected a meaning error, got {e}"),
        Ok(_) => panic!("expected a meaning error, got a valid scenario"),
    }
}

fn assert_problem(text: &str, path: &str, words: &[&str]) {
    let ps = problems(text);
    let Some(p) = ps.iter().find(|p| p.path == path) else {
        panic!("no problem at {path}: {ps:?}");
    };
    for w in words {
        assert!(p.message.contains(w), "`{w}` missing from {path}: {}", p.message);
    }
}

#[test]
fn every_rule_of_the_solutions_fields_names_its_place() {
    let t = |a: &str, b: &str| {
        assert!(WITH_SOLUTIONS.contains(a), "{a}");
        WITH_SOLUTIONS.replacen(a, b, 1)
    };
    // Unknown names, with the nearest suggested.
    assert_problem(
        &t("(\"KCl\", 10.0)", "(\"KCI\", 10.0)"),
        "solutions[1].parts[1][0]",
        &["KCI", "did you mean \"KCl\""],
    );
    assert_problem(
        &t("inside: Some(\"pipette\")", "inside: Some(\"pipete\")"),
        "inside",
        &["did you mean \"pipette\""],
    );
    assert_problem(
        &t("outside: Some(\"bath\")", "outside: Some(\"baht\")"),
        "outside",
        &["did you mean \"bath\""],
    );
    assert_problem(
        &t("solution: \"low sodium\"", "solution: \"low sodiun\""),
        "protocol[0].solution",
        &["did you mean \"low sodium\""],
    );
    // A negative amount; a pH outside 0–14; a titrant that is no strong base or acid.
    assert_problem(
        &t("(\"KCl\", 10.0)", "(\"KCl\", -1.0)"),
        "solutions[1].parts[1][1]",
        &["negative"],
    );
    assert_problem(
        &t("ph: Some(7.3)", "ph: Some(15.0)"),
        "solutions[1].ph",
        &["0–14"],
    );
    assert_problem(
        &t("titrant: Some(\"KOH\")", "titrant: Some(\"KCl\")"),
        "solutions[1].titrant",
        &["not a strong base or acid", "KOH"],
    );
    assert_problem(
        &t("ph: Some(7.3), titrant: Some(\"KOH\")", "ph: Some(7.3)"),
        "solutions[1].titrant",
        &["pH needs a titrant"],
    );
    // A species' own number where a solution gives it; a species that is no ion of the table.
    assert_problem(
        &t(
            "(name: \"K+\", charge: 1, ",
            "(name: \"K+\", charge: 1, inside_mm: 140.0, ",
        ),
        "species[0].inside_mm",
        &["K+", "pipette", "leave `inside_mm` out"],
    );
    assert_problem(
        &t("(name: \"Cl-\", charge: -1,", "(name: \"CI-\", charge: -1,"),
        "species[2].name",
        &["did you mean \"Cl-\""],
    );
    assert_problem(
        &t("(name: \"Cl-\", charge: -1,", "(name: \"Cl-\", charge: -2,"),
        "species[2].charge",
        &["charge -1"],
    );
    // Without a solution the numbers are required.
    assert_problem(
        &t("    inside: Some(\"pipette\"),\n", ""),
        "species[0].inside_mm",
        &["missing"],
    );
    // User compounds: no ions, an unknown ion without a conductivity, a conductivity ≤ 0, a
    // charge that contradicts the table.
    let with_compounds = |c: &str| {
        t(
            "    solutions: [",
            &format!("    compounds: [{c}],\n    solutions: ["),
        )
    };
    assert_problem(
        &with_compounds("(name: \"nothing\", ions: [])"),
        "compounds[0].ions",
        &["at least one ion"],
    );
    assert_problem(
        &with_compounds(
            "(name: \"drug-HCl\", ions: [(ion: \"drugH+\", charge: 1, count: 1), (ion: \"Cl-\", charge: -1, count: 1)])",
        ),
        "compounds[0].ions[0].ion",
        &["drugH+", "conductivity"],
    );
    assert_problem(
        &with_compounds(
            "(name: \"drug-HCl\", ions: [(ion: \"drugH+\", charge: 1, count: 1, conductivity: 0.0)])",
        ),
        "compounds[0].ions[0].conductivity",
        &["greater than 0"],
    );
    assert_problem(
        &with_compounds("(name: \"odd\", ions: [(ion: \"Cl-\", charge: 1, count: 1)])"),
        "compounds[0].ions[0].charge",
        &["charge -1"],
    );
    // A user compound that is fine is used like a built-in one.
    let ok = with_compounds("(name: \"drug-HCl\", ions: [(ion: \"drugH+\", charge: 1, count: 1, conductivity: 30.0), (ion: \"Cl-\", charge: -1, count: 1)])")
        .replace("(\"NMDG-Cl\", 140.0)", "(\"drug-HCl\", 140.0)");
    let s = read(&ok).unwrap_or_else(|e| panic!("{e}"));
    let m = permeant::solutions::plan(&s);
    assert_eq!(
        m.mixture(&s, "low sodium").map(|x| x.mm_of("drugH+")),
        Some(140.0)
    );
}

#[test]
fn warnings_flag_an_unbalanced_recipe_and_unequal_osmolarities() {
    let text = WITH_SOLUTIONS.replace("(\"K-gluconate\", 130.0)", "(\"K-gluconate\", 60.0)");
    let s = read(&text).unwrap_or_else(|e| panic!("{e}"));
    let w = permeant::scenario::warnings(&s);
    assert!(
        w.iter().any(|p| p.path == "inside" && p.message.contains("10 %")),
        "{w:?}"
    );
    let mut s = read(WITH_SOLUTIONS).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(permeant::scenario::warnings(&s), vec![]);
    // Every built-in compound is neutral; a compound of the file's own need not be.
    s.compounds.push(permeant::scenario::UserCompound {
        name: "bare potassium".into(),
        ions: vec![permeant::scenario::CompoundIon {
            ion: "K+".into(),
            charge: 1,
            count: 1,
            conductivity: None,
        }],
    });
    s.solutions[2].parts.push(("bare potassium".into(), 2.0));
    let w = permeant::scenario::warnings(&s);
    assert!(
        w.iter()
            .any(|p| p.path == "solutions[2]" && p.message.contains("2.00 mEq/L more cation")),
        "{w:?}"
    );
}

#[test]
fn a_file_with_solutions_saves_as_it_was_written_and_reads_back_the_same() {
    let s = read(WITH_SOLUTIONS).unwrap_or_else(|e| panic!("{e}"));
    let text = to_ron(&s).unwrap_or_else(|e| panic!("{e}"));
    assert!(
        !text.contains(" inside_mm") && !text.contains(" outside_mm"),
        "{text}"
    );
    assert!(text.contains("BathExchange"));
    let back = read(&text).unwrap_or_else(|e| panic!("{e}\n{text}"));
    assert_eq!(back, s);
    assert_eq!(to_ron(&back).unwrap_or_default(), text);
    // A file without solutions is unchanged by the new fields.
    let plain = Scenario::new_default();
    let t = to_ron(&plain).unwrap_or_default();
    for key in [
        "compounds",
        "solutions",
        "inside:",
        "outside:",
        "activities",
        "reference",
    ] {
        assert!(!t.contains(key), "{key} in {t}");
    }
}

#[test]
fn activities_lower_every_concentration_the_cell_sees() {
    let on = WITH_SOLUTIONS.replace("    inside: Some", "    activities: true,\n    inside: Some");
    let (a, c) = (
        read(&on).unwrap_or_else(|e| panic!("{e}")),
        read(WITH_SOLUTIONS).unwrap_or_else(|e| panic!("{e}")),
    );
    let p = permeant::solutions::plan(&c);
    let bath = p.mixture(&c, "bath").cloned().unwrap_or_else(|| panic!("bath"));
    let gamma = davies_gamma(1, bath.checks().ionic_strength_mm, 22.0);
    assert!((a.species[0].outside_mm - gamma * c.species[0].outside_mm).abs() < 1e-12);
    assert!(gamma < 1.0 && gamma > 0.7, "{gamma}");
}

/// The program itself on a file written to a temporary directory.
fn permeant(args: &[&str], file: &str) -> std::process::Output {
    let dir = tempfile::tempdir().unwrap_or_else(|e| panic!("{e}"));
    let path = dir.path().join("cell.ron");
    std::fs::write(&path, file).unwrap_or_else(|e| panic!("{e}"));
    let mut all: Vec<String> = args.iter().map(|a| a.to_string()).collect();
    all.insert(1, path.display().to_string());
    std::process::Command::new(env!("CARGO_BIN_EXE_permeant"))
        .args(&all)
        .env("PERMEANT_DATA_DIR", dir.path())
        .output()
        .unwrap_or_else(|e| panic!("{e}"))
}

#[test]
fn the_solutions_command_prints_exactly_the_keys_of_the_contract() {
    let out = permeant(&["solutions", "--json"], WITH_SOLUTIONS);
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let text = String::from_utf8_lossy(&out.stdout);
    // Key order as solutions.md writes it (serde_json keeps the struct's order in the text).
    let order = [
        "\"temperature_c\"",
        "\"activities\"",
        "\"solutions\"",
        "\"name\"",
        "\"ions\"",
        "\"charge\"",
        "\"mm\"",
        "\"cation_meq\"",
        "\"anion_meq\"",
        "\"imbalance_meq\"",
        "\"osmolarity_mosm\"",
        "\"ionic_strength_mm\"",
        "\"titrant_mm\"",
        "\"junctions\"",
        "\"pipette\"",
        "\"bath\"",
        "\"ljp_mv\"",
        "\"reference_mv\"",
        "\"offset_mv\"",
    ];
    let mut at = 0;
    for k in order {
        let Some(i) = text[at..].find(k) else {
            panic!("{k} not after {at} in {text}")
        };
        at += i;
    }
    let v: serde_json::Value = serde_json::from_str(&text).unwrap_or_else(|e| panic!("{e}"));
    let keys = |x: &serde_json::Value| -> Vec<String> {
        x.as_object()
            .map(|m| m.keys().cloned().collect())
            .unwrap_or_default()
    };
    let mut top = keys(&v);
    top.sort();
    assert_eq!(top, ["activities", "junctions", "solutions", "temperature_c"]);
    let sol = &v["solutions"][2];
    assert_eq!(sol["name"], "low sodium");
    assert_eq!(sol["titrant_mm"], serde_json::Value::Null);
    assert_eq!(keys(&sol["ions"][0]), ["charge", "mm", "name"]);
    assert_eq!(v["junctions"].as_array().map(Vec::len), Some(2));
    let j = &v["junctions"][0];
    let (l, r, o) = (
        j["ljp_mv"].as_f64().unwrap_or(f64::NAN),
        j["reference_mv"].as_f64().unwrap_or(f64::NAN),
        j["offset_mv"].as_f64().unwrap_or(f64::NAN),
    );
    // serde_json reads floats to within an ulp.
    assert!((o - (l + r)).abs() < 1e-12, "{o} {l} {r}");
    // A bad file: exit status 2, the place named.
    let bad = permeant(
        &["solutions"],
        &WITH_SOLUTIONS.replace("(\"KCl\", 10.0)", "(\"KCI\", 10.0)"),
    );
    assert_eq!(bad.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&bad.stderr).contains("solutions[1].parts[1][0]"));
}

#[test]
fn scan_replaces_in_the_bath_and_fit_corrects_for_the_junction() {
    let out = permeant(
        &[
            "scan",
            "--vary",
            "replace:NaCl:NMDG-Cl",
            "--from",
            "0",
            "--to",
            "140",
            "--points",
            "3",
            "--json",
        ],
        WITH_SOLUTIONS,
    );
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(v["points"].as_array().map(Vec::len), Some(3));
    assert!(v["points"][2]["ljp_mv"].is_number());
    // Beyond OLD's amount is bad input.
    let out = permeant(
        &[
            "scan",
            "--vary",
            "replace:NaCl:NMDG-Cl",
            "--from",
            "0",
            "--to",
            "150",
            "--points",
            "3",
        ],
        WITH_SOLUTIONS,
    );
    assert_eq!(out.status.code(), Some(2));
    // A concentration a solution gives cannot be scanned on its own.
    let out = permeant(
        &[
            "scan",
            "--vary",
            "outside_mm:K+",
            "--from",
            "1",
            "--to",
            "10",
            "--points",
            "3",
        ],
        WITH_SOLUTIONS,
    );
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("comes from the solution \"bath\""));
}

#[test]
fn correcting_for_the_junction_gives_back_the_ratio_a_membrane_potential_series_was_made_with() {
    use permeant::analysis::fit::{DataPoint, FitSpace, fit};
    use permeant::analysis::scan::apply;
    // Recorded potentials of a temperature series: the membrane's GHK potential plus the
    // offset in force (recorded = V + offset). Correcting them must give the cell's own ratio.
    let mut s = read(WITH_SOLUTIONS).unwrap_or_else(|e| panic!("{e}"));
    s.pump = None;
    s.protocol.clear();
    let vary = Vary::TemperatureC;
    let truth = s.species[1].permeability_cm_per_s / s.species[0].permeability_cm_per_s;
    let mut points: Vec<DataPoint> = [15.0, 20.0, 25.0, 30.0, 35.0]
        .iter()
        .enumerate()
        .map(|(row, &t)| {
            let at = permeant::scenario::validate(apply(&s, &vary, t).unwrap_or_else(|e| panic!("{e}")))
                .unwrap_or_else(|e| panic!("{e}"));
            let v = rest_report(&at)
                .ok()
                .and_then(|r| r.resting_mv())
                .unwrap_or(f64::NAN);
            let offset = permeant::solutions::recording_offsets(&at).map_or(f64::NAN, |o| o.start_mv);
            DataPoint {
                value: t,
                v_mv: v + offset,
                row: row + 1,
            }
        })
        .collect();
    let free = ["Na+".to_string()];
    let raw = fit(&s, &vary, &free, &points, FitSpace::LogRatio).unwrap_or_else(|e| panic!("{e}"));
    permeant::solutions::correct_points(&s, &vary, &mut points).unwrap_or_else(|e| panic!("{e}"));
    let fixed = fit(&s, &vary, &free, &points, FitSpace::LogRatio).unwrap_or_else(|e| panic!("{e}"));
    assert!(
        (fixed.ratios[0].ratio / truth - 1.0).abs() < 1e-6,
        "{} vs {truth}",
        fixed.ratios[0].ratio
    );
    assert!(fixed.rms_residual_mv < 1e-6, "{}", fixed.rms_residual_mv);
    // Uncorrected, the ~+14 mV offset is read as more than twice the sodium permeability.
    assert!(raw.ratios[0].ratio > 2.0 * truth, "{}", raw.ratios[0].ratio);
}
