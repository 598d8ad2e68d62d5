//! Time courses against the outside world: closed forms of a passive membrane, an independent
//! general-purpose ODE solver on every bundled scenario, Hodgkin & Huxley's excitable membrane,
//! Goldman's voltage equation after bath changes and blocks, the closed forms of lagged inputs
//! and agents, conservation of mass under concentration tracking, the output-sample rule of
//! model.md, state identities across edits mid-run, and what a run that cannot proceed reports.
//!
//! Every scenario written out here is invented for these tests.

use std::path::Path;

mod common;
use common::ode;
use common::reference;
use common::tight;
use common::valid;
use permeant::analysis::rest_report;
use permeant::engine::{Budget, EngineError, Method, Model, Progress, Run, SolverSettings};
use permeant::physics::ghk_current_ua_per_cm2;
use permeant::scenario::{Event, Scenario, Start, Volume, from_str, read_file};

/// model.md "Accuracy": a trace agrees with a high-precision reference to 0.01 mV.
const ACCURACY_MV: f64 = 0.01;
/// model.md "Accuracy": a cell at rest without protocol stays flat to 1e-6 mV.
const FLAT_MV: f64 = 1e-6;
/// How close a run that has relaxed for many time constants must sit to its zero-current
/// potential: the default tolerances (rtol 1e-6 of ~70 mV) allow about 1e-4 mV.
const SETTLED_MV: f64 = 1e-4;
/// The same for a dimensionless lagged input near 1 (rtol 1e-6).
const SETTLED_FACTOR: f64 = 1e-6;
/// Agreement of two exact evaluations of one expression, up to rounding.
const ROUNDING: f64 = 1e-12;

/// Goldman's voltage equation (Goldman 1943, J. Gen. Physiol. 27:37; Hodgkin & Katz 1949,
/// J. Physiol. 108:37) for the scenario's monovalent species at their file values, as the
/// tests' own reference writes it (independent of the crate's root finder).
fn goldman_mv(s: &Scenario) -> f64 {
    let ions: Vec<reference::Ion> = s
        .species
        .iter()
        .map(|x| reference::Ion {
            charge: x.charge,
            inside_mm: x.inside_mm,
            outside_mm: x.outside_mm,
            p_cm_per_s: x.permeability_cm_per_s,
        })
        .collect();
    reference::ghk_voltage_mv(&ions, s.temperature_c)
}

fn scenario(text: &str) -> Scenario {
    from_str(text, "test scenario")
        .expect("test scenario reads")
        .into_inner()
}

fn run_to_end(s: &Scenario, settings: SolverSettings) -> Run {
    let mut r = Run::new(&valid(s), settings).expect("run starts");
    r.run_to_end().expect("run finishes");
    r
}

/// A passive cell: three species, no pump, no channels.
const PASSIVE: &str = r#"(
    format: 1,
    temperature_c: 36.0,
    cell: (diameter_um: 18.0, capacitance_uf_per_cm2: 1.1),
    species: [
        (name: "K+", charge: 1, inside_mm: 138.0, outside_mm: 4.5, permeability_cm_per_s: 4.0e-7),
        (name: "Na+", charge: 1, inside_mm: 13.0, outside_mm: 142.0, permeability_cm_per_s: 2.0e-8),
        (name: "Cl-", charge: -1, inside_mm: 9.0, outside_mm: 115.0, permeability_cm_per_s: 1.2e-7),
    ],
    protocol: [PROTOCOL],
    run: (duration_ms: DURATION, sample_ms: SAMPLE, start: START),
)"#;

fn passive(protocol: &str, duration_ms: f64, sample_ms: f64, start: &str) -> Scenario {
    scenario(
        &PASSIVE
            .replace("PROTOCOL", protocol)
            .replace("DURATION", &format!("{duration_ms:?}"))
            .replace("SAMPLE", &format!("{sample_ms:?}"))
            .replace("START", start),
    )
}

/// An excitable cell with the Hodgkin–Huxley 1952 gates on GHK channels, sized so that the
/// maximal conductances come near HH's (about 120 and 36 mS/cm²).
const EXCITABLE: &str = r#"(
    format: 1,
    temperature_c: TEMPERATURE,
    species: [
        (name: "K+", charge: 1, inside_mm: 135.0, outside_mm: 4.0, permeability_cm_per_s: 4.0e-7),
        (name: "Na+", charge: 1, inside_mm: 15.0, outside_mm: 140.0, permeability_cm_per_s: 1.5e-8),
        (name: "Cl-", charge: -1, inside_mm: 8.0, outside_mm: 110.0, permeability_cm_per_s: 1.5e-7),
    ],
    channels: [
        (label: "fast sodium", species: "Na+", max_permeability_cm_per_s: 2.0e-4,
         gates: [(kinetics: HhSodiumActivation, power: 3), (kinetics: HhSodiumInactivation, power: 1)]),
        (label: "delayed potassium", species: "K+", max_permeability_cm_per_s: 7.0e-5,
         gates: [(kinetics: HhPotassiumActivation, power: 4)]),
    ],
    protocol: [PROTOCOL],
    run: (duration_ms: DURATION, sample_ms: 0.02),
)"#;

fn excitable(temperature_c: f64, protocol: &str, duration_ms: f64) -> Scenario {
    scenario(
        &EXCITABLE
            .replace("TEMPERATURE", &format!("{temperature_c:?}"))
            .replace("PROTOCOL", protocol)
            .replace("DURATION", &format!("{duration_ms:?}")),
    )
}

fn pulse(amplitude: f64, from_ms: f64, width_ms: f64) -> String {
    format!(
        "Inject(amplitude_ua_per_cm2: {amplitude:?}, from_ms: {from_ms:?}, until_ms: {:?})",
        from_ms + width_ms
    )
}

/// Net passive GHK current of the scenario's species at `v_mv` with the file's values, µA/cm².
fn passive_current(s: &Scenario, v_mv: f64) -> f64 {
    s.species
        .iter()
        .map(|x| {
            ghk_current_ua_per_cm2(
                x.permeability_cm_per_s,
                x.charge,
                x.inside_mm,
                x.outside_mm,
                v_mv,
                s.temperature_c,
            )
        })
        .sum()
}

fn column<'a>(r: &'a Run, name: &str) -> &'a [f64] {
    let i = r
        .trace()
        .names
        .iter()
        .position(|n| n == name)
        .unwrap_or_else(|| panic!("no column {name}"));
    &r.trace().columns[i]
}

fn max(v: &[f64]) -> f64 {
    v.iter().copied().fold(f64::NEG_INFINITY, f64::max)
}

/// Upward crossings of 0 mV: overshooting action potentials.
fn overshoots(v: &[f64]) -> usize {
    v.windows(2).filter(|w| w[0] < 0.0 && w[1] >= 0.0).count()
}

// ---------------------------------------------------------------------------------------------
// Closed forms of a passive membrane
// ---------------------------------------------------------------------------------------------

#[test]
fn small_displacement_relaxes_with_c_over_slope_conductance() {
    // A passive membrane displaced slightly from rest relaxes exponentially with τ = C/g, g the
    // slope conductance dI/dV of the net current at rest (linearized RC membrane; common
    // practice). g is computed here by a central difference of the GHK currents themselves.
    let probe = passive("", 1.0, 1.0, "Rest");
    let rest_mv = goldman_mv(&probe);
    let dv = 1e-3;
    let g_ms_per_cm2 =
        (passive_current(&probe, rest_mv + dv) - passive_current(&probe, rest_mv - dv)) / (2.0 * dv);
    let tau_ms = probe.cell.capacitance_uf_per_cm2 / g_ms_per_cm2;
    assert!(
        tau_ms > 1.0 && tau_ms < 20.0,
        "τ = {tau_ms} ms is not a sensible test case"
    );

    let s = passive(
        "",
        6.0 * tau_ms,
        tau_ms / 100.0,
        &format!("Voltage({:?})", rest_mv + 1.0),
    );
    let r = run_to_end(&s, SolverSettings::default());
    let (t, v) = (&r.trace().t_ms, r.trace().v_mv());
    // Read the decay late (2τ..4τ), where the displacement is below 0.14 mV and the
    // second-order term of the current is well under 1 % of the first.
    let at = |k: usize| (t[k], v[k] - rest_mv);
    let (t1, d1) = at(200);
    let (t2, d2) = at(400);
    let tau_seen = (t2 - t1) / (d1 / d2).ln();
    println!("τ seen {tau_seen} ms, C/g {tau_ms} ms");
    assert!(
        (tau_seen / tau_ms - 1.0).abs() < 0.01,
        "τ seen {tau_seen} ms, C/g = {tau_ms} ms"
    );
    // First order: the displacement itself follows 1 mV · e^(−t/τ).
    for k in (0..v.len()).step_by(50) {
        let expected = (-t[k] / tau_ms).exp();
        assert!(
            (v[k] - rest_mv - expected).abs() < 0.02 * expected + 1e-5,
            "t = {} ms",
            t[k]
        );
    }
}

/// Composite Simpson rule over samples `f[a..=b]` spaced `h` apart (`b − a` even).
fn simpson(f: &[f64], a: usize, b: usize, h: f64) -> f64 {
    assert!((b - a).is_multiple_of(2));
    let mut s = f[a] + f[b];
    for (k, fk) in f.iter().enumerate().take(b).skip(a + 1) {
        s += if (k - a) % 2 == 1 { 4.0 } else { 2.0 } * fk;
    }
    s * h / 3.0
}

#[test]
fn charge_on_the_capacitor_balances_the_integrated_current() {
    // C·ΔV = ∫ (I_inject − I_membrane) dt: conservation of charge on the membrane capacitor
    // (common practice). The membrane current is computed from the GHK expression at each
    // sample, and the integral is split at the pulse edges, where dV/dt jumps.
    let amplitude = 1.5;
    let s = passive(&pulse(amplitude, 10.0, 20.0), 60.0, 0.01, "Rest");
    let r = run_to_end(&s, SolverSettings::default());
    let (t, v) = (&r.trace().t_ms, r.trace().v_mv());
    assert_eq!(t.len(), 6001);
    let membrane: Vec<f64> = v.iter().map(|&x| passive_current(&s, x)).collect();
    let integral = simpson(&membrane, 0, 1000, 0.01)
        + simpson(&membrane, 1000, 3000, 0.01)
        + simpson(&membrane, 3000, 6000, 0.01);
    let injected = amplitude * 20.0;
    let lhs = s.cell.capacitance_uf_per_cm2 * (v[6000] - v[0]);
    let rhs = injected - integral;
    println!("C·ΔV {lhs} nC/cm², ∫(I_inject − I_m) dt {rhs} nC/cm²");
    // The pulse moves about 20 nC/cm² onto the capacitor and most of it leaks away again.
    assert!(injected > 10.0);
    assert!((lhs - rhs).abs() < 1e-6 * injected, "C·ΔV = {lhs}, ∫I dt = {rhs}");
    // And halfway through the pulse, likewise.
    let lhs = s.cell.capacitance_uf_per_cm2 * (v[2000] - v[0]);
    let rhs = amplitude * 10.0 - simpson(&membrane, 0, 1000, 0.01) - simpson(&membrane, 1000, 2000, 0.01);
    assert!((lhs - rhs).abs() < 1e-6 * injected, "C·ΔV = {lhs}, ∫I dt = {rhs}");
}

// ---------------------------------------------------------------------------------------------
// An independent solver
// ---------------------------------------------------------------------------------------------

/// V at `times` from ode_solvers' DOP853 at tolerance 1e-11 (`common::ode`).
fn reference_v_mv(s: &Scenario, times: &[f64]) -> Vec<f64> {
    let model = Model::new(&valid(s));
    ode::reference_states(&model, times, 1e-11)
        .iter()
        .map(|y| y[0])
        .collect()
}

/// Largest |ΔV| between our run at default settings and the reference, and where.
fn worst_difference(s: &Scenario) -> (f64, f64, Run) {
    let r = run_to_end(s, SolverSettings::default());
    let t = &r.trace().t_ms;
    let reference = reference_v_mv(s, t);
    let (k, d) = r
        .trace()
        .v_mv()
        .iter()
        .zip(&reference)
        .map(|(a, b)| (a - b).abs())
        .enumerate()
        .fold((0, 0.0), |m, (k, d)| if d > m.1 { (k, d) } else { m });
    (d, t[k], r)
}

fn bundled() -> Vec<(String, Scenario)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("scenarios");
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .expect("scenarios/ exists")
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "ron"))
        .collect();
    files.sort();
    files
        .into_iter()
        .map(|p| {
            let s = read_file(&p)
                .unwrap_or_else(|e| panic!("{}: {e}", p.display()))
                .into_inner();
            (p.file_name().unwrap().to_string_lossy().into_owned(), s)
        })
        .collect()
}

#[test]
fn every_bundled_scenario_agrees_with_an_independent_solver() {
    // model.md "Accuracy": within 0.01 mV of a high-precision reference at every output sample,
    // at default settings. Reference: ode_solvers' Dop853 at 1e-11.
    let all = bundled();
    assert!(!all.is_empty(), "no bundled scenarios found");
    for (name, s) in all {
        let (d, t, r) = worst_difference(&s);
        let st = r.stats();
        println!(
            "{name}: max |ΔV| = {d:.2e} mV at {t} ms; {} steps, {} rejected, {} evaluations, {} Jacobians",
            st.accepted, st.rejected, st.evaluations, st.jacobians
        );
        assert!(d <= ACCURACY_MV, "{name}: |ΔV| = {d} mV at t = {t} ms");
    }
}

#[test]
fn a_warm_excitable_cell_agrees_with_an_independent_solver_and_switches_to_the_stiff_method() {
    // At 25 °C the HH gates run φ = 3^1.87 ≈ 7.8 times faster than at 6.3 °C (q10 = 3,
    // Hodgkin & Huxley 1952), which makes the cell stiff between spikes. Same 0.01 mV
    // criterion and reference as above.
    let train =
        "InjectTrain(amplitude_ua_per_cm2: 100.0, width_ms: 0.5, period_ms: 50.0, count: 4, from_ms: 5.0)";
    let s = excitable(25.0, train, 200.0);
    let (d, t, auto) = worst_difference(&s);
    assert!(d <= ACCURACY_MV, "|ΔV| = {d} mV at t = {t} ms");
    assert_eq!(overshoots(auto.trace().v_mv()), 4, "each pulse should fire once");
    // The automatic choice spends far less than the explicit method held by stability.
    let explicit = run_to_end(
        &s,
        SolverSettings {
            method: Method::Explicit,
            ..Default::default()
        },
    );
    let (a, e) = (auto.stats(), explicit.stats());
    println!("25 °C: auto {a:?}, explicit {e:?}");
    assert!(a.jacobians > 0, "the stiff method was never used");
    assert!(2 * a.evaluations < e.evaluations, "auto {a:?} vs explicit {e:?}");
}

#[test]
fn each_method_alone_also_meets_the_accuracy() {
    // Both steppers, forced, on the cool excitable cell (where the explicit one is at home)
    // and the same 0.01 mV criterion at every sample.
    let s = excitable(
        6.3,
        &format!("{}, {}", pulse(10.0, 5.0, 1.0), pulse(10.0, 40.0, 1.0)),
        70.0,
    );
    let reference = reference_v_mv(&s, &run_to_end(&s, SolverSettings::default()).trace().t_ms);
    for method in [Method::Explicit, Method::Rosenbrock] {
        let r = run_to_end(
            &s,
            SolverSettings {
                method,
                ..Default::default()
            },
        );
        let d = r
            .trace()
            .v_mv()
            .iter()
            .zip(&reference)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0, f64::max);
        assert!(d <= ACCURACY_MV, "{method:?}: |ΔV| = {d} mV");
    }
}

// ---------------------------------------------------------------------------------------------
// Rest
// ---------------------------------------------------------------------------------------------

#[test]
fn a_cell_at_rest_without_protocol_stays_flat_in_few_steps() {
    // model.md "Accuracy": the steady state at t = 0 solves V, gates and lags together, so a
    // run with no protocol stays flat to 1e-6 mV. Few steps, because nothing changes.
    let mut cells = vec![passive("", 1000.0, 0.1, "Rest")];
    for temperature_c in [6.3, 15.0, 25.0, 37.0] {
        cells.push(excitable(temperature_c, "", 1000.0));
    }
    // And every bundled cell with its protocol and concentration tracking taken away.
    for (_, mut s) in bundled() {
        s.protocol.clear();
        s.run.family = None;
        s.cell.track_concentrations = false;
        s.cell.volume = Volume::Fixed;
        s.run.duration_ms = 1000.0;
        s.run.start = Start::Rest;
        cells.push(s);
    }
    for s in cells {
        let r = run_to_end(&s, SolverSettings::default());
        let v = r.trace().v_mv();
        let spread = v.iter().map(|x| (x - v[0]).abs()).fold(0.0, f64::max);
        println!(
            "{} at {} °C: spread {spread:.1e} mV, {:?}",
            s.title,
            s.temperature_c,
            r.stats()
        );
        assert!(
            spread <= FLAT_MV,
            "{}: V moved by {spread} mV at {} °C",
            s.title,
            s.temperature_c
        );
        assert!(
            r.stats().accepted < 50,
            "{:?} at {} °C",
            r.stats(),
            s.temperature_c
        );
    }
}

// ---------------------------------------------------------------------------------------------
// Hodgkin & Huxley 1952 (J. Physiol. 117:500)
// ---------------------------------------------------------------------------------------------

#[test]
fn action_potentials_are_all_or_none_and_overshoot() {
    // HH 1952: a stimulus below threshold gives a small graded response, one above it a full
    // action potential that overshoots 0 mV, of nearly the same height for a stimulus four
    // times stronger (from memory: the computed spikes of their Fig. 12).
    let rest = rest_report(&valid(&excitable(6.3, "", 10.0)))
        .unwrap()
        .resting_mv()
        .unwrap();
    let peak = |a: f64| {
        let r = run_to_end(
            &excitable(6.3, &pulse(a, 5.0, 1.0), 40.0),
            SolverSettings::default(),
        );
        (max(r.trace().v_mv()), overshoots(r.trace().v_mv()))
    };
    let (below, n_below) = peak(2.0);
    let (above, n_above) = peak(8.0);
    let (far_above, n_far) = peak(32.0);
    assert_eq!((n_below, n_above, n_far), (0, 1, 1));
    assert!(
        below < rest + 5.0,
        "subthreshold peak {below} mV (rest {rest} mV)"
    );
    assert!(above > 20.0, "peak {above} mV");
    assert!(
        (far_above - above).abs() < 6.0,
        "peaks {above} and {far_above} mV"
    );
}

#[test]
fn a_second_pulse_fails_while_refractory_and_fires_later() {
    // HH 1952: after an action potential the membrane is refractory, because sodium
    // inactivation (h) and potassium activation (n) recover slowly; a second equal pulse
    // soon after fails, the same pulse later fires again (from memory: their Fig. 20).
    let twice = |delay: f64| {
        let protocol = format!("{}, {}", pulse(20.0, 5.0, 1.0), pulse(20.0, 5.0 + delay, 1.0));
        overshoots(
            run_to_end(
                &excitable(6.3, &protocol, 5.0 + delay + 30.0),
                SolverSettings::default(),
            )
            .trace()
            .v_mv(),
        )
    };
    assert_eq!(twice(6.0), 1, "a pulse 6 ms after the first should fail");
    assert_eq!(twice(25.0), 2, "a pulse 25 ms after the first should fire");
}

/// HH 1952 m-gate rates at 6.3 °C, written out here from the paper (absolute-voltage form with
/// rest near −65 mV, as model.md gives them), 1/ms.
fn hh_m_rates(v_mv: f64) -> (f64, f64) {
    let alpha = 0.1 * (v_mv + 40.0) / (1.0 - (-(v_mv + 40.0) / 10.0).exp());
    let beta = 4.0 * (-(v_mv + 65.0) / 18.0).exp();
    (alpha, beta)
}

/// The m-gate's time constant seen in a voltage step from −65 to 0 mV at `temperature_c`.
///
/// The "clamp" is the membrane itself: one permeant species at equal concentrations on both
/// sides holds V at 0 mV at any temperature, and its large permeability brings V there within
/// microseconds of a start at −65 mV, while the gates start at their −65 mV steady state.
fn m_time_constant_after_step_ms(temperature_c: f64) -> f64 {
    let text = r#"(
        format: 1,
        temperature_c: TEMPERATURE,
        species: [(name: "X+", charge: 1, inside_mm: 100.0, outside_mm: 100.0, permeability_cm_per_s: 1.0e-3)],
        channels: [(label: "fast sodium", species: "X+", max_permeability_cm_per_s: 1.0e-6,
                    q10: 3.0, reference_temperature_c: 6.3,
                    gates: [(kinetics: HhSodiumActivation, power: 3), (kinetics: HhSodiumInactivation, power: 1)])],
        run: (duration_ms: 1.0, sample_ms: 0.001, start: Voltage(-65.0)),
    )"#;
    let s = scenario(&text.replace("TEMPERATURE", &format!("{temperature_c:?}")));
    let r = run_to_end(&s, SolverSettings::default());
    let (t, m, v) = (
        &r.trace().t_ms,
        column(&r, "gate:fast sodium:m"),
        r.trace().v_mv(),
    );
    // V relaxes with C/g ≈ 2.5 µs: within 50 µs it sits at 0 mV.
    assert!(
        v[50].abs() < 1e-5,
        "V should sit at 0 mV after 50 µs, is {} mV",
        v[50]
    );
    let (a, b) = hh_m_rates(0.0);
    let m_inf = a / (a + b);
    // Two points early in the relaxation, after V has settled.
    let (k1, k2) = (50, 150);
    (t[k2] - t[k1]) / ((m[k1] - m_inf) / (m[k2] - m_inf)).ln()
}

#[test]
fn the_m_gate_follows_its_published_time_constant_and_q10() {
    // HH 1952: τ_m = 1/(α_m + β_m) at 6.3 °C, and their temperature factor
    // φ = 3^((θ − 6.3)/10): ten degrees warmer, every gate three times faster.
    let (a, b) = hh_m_rates(0.0);
    let tau_published = 1.0 / (a + b);
    let cool = m_time_constant_after_step_ms(6.3);
    let warm = m_time_constant_after_step_ms(16.3);
    println!("τ_m(0 mV): {cool} ms at 6.3 °C, {warm} ms at 16.3 °C, published {tau_published} ms");
    assert!(
        (cool / tau_published - 1.0).abs() < 0.01,
        "τ_m {cool} ms, published {tau_published} ms"
    );
    assert!((cool / warm / 3.0 - 1.0).abs() < 0.01, "speed-up {}", cool / warm);
}

// ---------------------------------------------------------------------------------------------
// Bath changes and agents
// ---------------------------------------------------------------------------------------------

#[test]
fn a_bath_change_ends_at_the_new_ghk_potential() {
    // The zero-current potential of a passive membrane is the GHK potential (Goldman 1943,
    // J. Gen. Physiol. 27:37; Hodgkin & Katz 1949, J. Physiol. 108:37), here of the bath after
    // the change: the run must end where the rest report of the changed file says.
    let s = passive(
        r#"BathChange(species: "K+", outside_mm: 20.0, at_ms: 20.0, lag_ms: 3.0)"#,
        300.0,
        0.5,
        "Rest",
    );
    let r = run_to_end(&s, SolverSettings::default());
    let mut changed = s.clone();
    changed.protocol.clear();
    changed.species[0].outside_mm = 20.0;
    let before = goldman_mv(&s);
    let after = goldman_mv(&changed);
    assert!(after - before > 10.0, "the change should depolarize clearly");
    assert!((r.trace().v_mv()[0] - before).abs() < FLAT_MV);
    assert!(
        (r.v_mv() - after).abs() < SETTLED_MV,
        "ended at {} mV, GHK {after} mV",
        r.v_mv()
    );
}

#[test]
fn an_agent_at_its_ic50_halves_the_target_permeability() {
    // Hill–Langmuir occupancy (Hill 1910; common practice): the fraction blocked at dose d is
    // max_block·dⁿ/(dⁿ + IC50ⁿ), one half at d = IC50 with max_block 1.
    let agent = r#"Agent(label: "blocker", species: "K+", max_block: 1.0, ic50_um: 4.0, hill: 1.0,
                          dose_um: 4.0, from_ms: 10.0, onset_ms: 5.0, washout_ms: 5.0)"#;
    // Blocking half the K+ permeability slows the membrane (τ = C/g near 40 ms): run long.
    let s = passive(agent, 800.0, 1.0, "Rest");
    let r = run_to_end(&s, SolverSettings::default());
    let state = r.state().to_vec();
    let mut cond = permeant::physics::Conditions::default();
    r.model().conditions(&state, 0.0, &mut cond);
    let factor = cond.p_factor;
    assert!(
        (factor[0] - 0.5).abs() < SETTLED_FACTOR,
        "K+ permeability factor {}",
        factor[0]
    );
    assert_eq!((factor[1], factor[2]), (1.0, 1.0));
    let mut halved = s.clone();
    halved.protocol.clear();
    halved.species[0].permeability_cm_per_s *= 0.5;
    let expected = goldman_mv(&halved);
    assert!(
        (r.v_mv() - expected).abs() < SETTLED_MV,
        "ended at {} mV, GHK with P_K halved {expected} mV",
        r.v_mv()
    );
}

#[test]
fn an_opener_multiplies_the_permeability_by_one_plus_its_increase_times_occupancy() {
    // scenario-format.md: an opener multiplies its species' permeability by
    // 1 + max_increase·occupancy, the occupancy dⁿ/(dⁿ + IC50ⁿ) of Hill–Langmuir (Hill 1910;
    // common practice). At d = IC50 with Hill 2 the occupancy is one half, so an increase of 3
    // gives 1 + 3/2 = 2.5 times the K+ permeability, and the cell settles at the GHK potential
    // of that permeability.
    let agent = r#"Agent(label: "opener", species: "K+", max_increase: Some(3.0), ic50_um: 4.0, hill: 2.0,
                          dose_um: 4.0, from_ms: 10.0, onset_ms: 5.0, washout_ms: 5.0)"#;
    let s = passive(agent, 400.0, 1.0, "Rest");
    let r = run_to_end(&s, SolverSettings::default());
    let state = r.state().to_vec();
    let mut cond = permeant::physics::Conditions::default();
    r.model().conditions(&state, 0.0, &mut cond);
    let occupancy = reference::fraction_blocked(1.0, 4.0, 2.0, 4.0);
    assert!((occupancy - 0.5).abs() < 1e-15);
    assert!(
        (cond.p_factor[0] - 2.5).abs() < SETTLED_FACTOR,
        "K+ permeability factor {}",
        cond.p_factor[0]
    );
    assert_eq!((cond.p_factor[1], cond.p_factor[2]), (1.0, 1.0));
    let mut opened = s.clone();
    opened.protocol.clear();
    opened.species[0].permeability_cm_per_s *= 2.5;
    let expected = goldman_mv(&opened);
    assert!(
        expected
            < goldman_mv(&{
                let mut c = s.clone();
                c.protocol.clear();
                c
            }),
        "more K+ permeability hyperpolarizes"
    );
    assert!(
        (r.v_mv() - expected).abs() < SETTLED_MV,
        "ended at {} mV, GHK with P_K × 2.5 {expected} mV",
        r.v_mv()
    );
}

// ---------------------------------------------------------------------------------------------
// Output samples (model.md "Output samples")
// ---------------------------------------------------------------------------------------------

#[test]
fn samples_sit_on_the_grid_as_products() {
    // N = floor(duration/sample + 1e-9): 150/0.1 gives 1500, so 1501 rows at k·0.1 exactly.
    let s = passive(&pulse(1.0, 20.0, 30.0), 150.0, 0.1, "Rest");
    let r = run_to_end(&s, SolverSettings::default());
    let t = &r.trace().t_ms;
    assert_eq!(t.len(), 1501);
    for (k, &tk) in t.iter().enumerate() {
        assert_eq!(tk.to_bits(), (k as f64 * 0.1).to_bits(), "row {k}");
    }
    assert_eq!(*t.last().unwrap(), 150.0);
}

#[test]
fn an_off_grid_duration_is_added_as_a_last_row() {
    // 10.05/0.1 = 100.5: grid rows k = 0..100, then the duration itself.
    let s = passive(&pulse(1.0, 2.0, 3.0), 10.05, 0.1, "Rest");
    let r = run_to_end(&s, SolverSettings::default());
    let t = &r.trace().t_ms;
    assert_eq!(t.len(), 102);
    assert_eq!(t[100], 100.0 * 0.1);
    assert_eq!(t[101], 10.05);
    // The last row is the state at the end of the run.
    assert_eq!(*r.trace().v_mv().last().unwrap(), r.v_mv());
}

#[test]
fn advancing_in_small_chunks_gives_the_same_samples() {
    // The window advances a little every frame; the command line runs to the end. Both must
    // produce the same trace, bit for bit (the step sequence does not depend on the budget).
    let s = excitable(
        37.0,
        "InjectTrain(amplitude_ua_per_cm2: 60.0, width_ms: 0.5, period_ms: 20.0, count: 3, from_ms: 2.0)",
        60.0,
    );
    let whole = run_to_end(&s, SolverSettings::default());
    let mut by_steps = Run::new(&valid(&s), SolverSettings::default()).unwrap();
    let mut calls = 0;
    while by_steps.advance(Budget::steps(7)).unwrap() == Progress::Running {
        calls += 1;
    }
    assert!(calls > 10);
    assert_eq!(by_steps.trace(), whole.trace());
    let mut by_time = Run::new(&valid(&s), SolverSettings::default()).unwrap();
    let mut until = 0.0;
    while by_time
        .advance(Budget {
            until_ms: until,
            max_steps: u64::MAX,
        })
        .unwrap()
        == Progress::Running
    {
        until += 0.37;
    }
    assert_eq!(by_time.trace(), whole.trace());
    assert_eq!(by_time.stats(), whole.stats());
}

#[test]
fn an_edit_mid_run_continues_from_the_present_state() {
    // Changing the bath in the file mid-run: V carries over unchanged, time goes on, the new
    // value takes effect at once, and the run ends at the new GHK potential.
    let s = passive("", 300.0, 0.1, "Rest");
    let mut r = Run::new(&valid(&s), SolverSettings::default()).unwrap();
    r.advance(Budget {
        until_ms: 50.0,
        max_steps: u64::MAX,
    })
    .unwrap();
    let (t_edit, v_edit, rows) = (r.t_ms(), r.v_mv(), r.trace().len());
    assert!((50.0..300.0).contains(&t_edit));
    let mut edited = s.clone();
    edited.species[0].outside_mm = 20.0;
    r.update_scenario(&valid(&edited));
    assert_eq!((r.t_ms(), r.v_mv(), r.trace().len()), (t_edit, v_edit, rows));
    r.run_to_end().unwrap();
    let t = &r.trace().t_ms;
    assert_eq!(t.len(), 3001);
    assert!(t.windows(2).all(|w| w[1] > w[0]));
    // Depolarizing at once after the edit, not before.
    let v = r.trace().v_mv();
    let k = rows; // first sample after the edit
    assert!((v[k - 1] - v[0]).abs() < FLAT_MV);
    assert!(v[k + 5] > v[k - 1] + 0.1);
    let expected = goldman_mv(&edited);
    assert!(
        (r.v_mv() - expected).abs() < SETTLED_MV,
        "ended at {} mV, GHK {expected} mV",
        r.v_mv()
    );
}

#[test]
fn an_edit_that_shortens_the_run_below_the_present_time_stops_it() {
    // The window lets the duration be edited while running; time does not go back.
    let s = passive(&pulse(1.0, 5.0, 50.0), 100.0, 0.1, "Rest");
    let mut r = Run::new(&valid(&s), SolverSettings::default()).unwrap();
    r.advance(Budget {
        until_ms: 50.0,
        max_steps: u64::MAX,
    })
    .unwrap();
    let (t_edit, rows) = (r.t_ms(), r.trace().len());
    let mut shorter = s.clone();
    shorter.run.duration_ms = 30.05;
    r.update_scenario(&valid(&shorter));
    assert_eq!(r.advance(Budget::to_end()).unwrap(), Progress::Finished);
    assert_eq!(r.t_ms(), t_edit);
    assert!(r.trace().len() >= rows);
    assert!(r.trace().t_ms.windows(2).all(|w| w[1] > w[0]));
    assert!(*r.trace().t_ms.last().unwrap() <= t_edit);
}

#[test]
fn abutting_pulses_run_through_the_rounding_between_them() {
    // A train with width = period is a steady current; pulse k's end (from + k·period + width)
    // and pulse k+1's start ((k+1)·period after from) differ by one rounding in 17 of these 50
    // pulses. The run must cross those slivers and match one long pulse (scenario-format.md:
    // pulse k covers [from + k·period, from + k·period + width)).
    let train =
        "InjectTrain(amplitude_ua_per_cm2: 2.0, width_ms: 0.1, period_ms: 0.1, count: 50, from_ms: 0.3)";
    let a = run_to_end(&passive(train, 20.0, 0.1, "Rest"), SolverSettings::default());
    let b = run_to_end(
        &passive(&pulse(2.0, 0.3, 5.0), 20.0, 0.1, "Rest"),
        SolverSettings::default(),
    );
    let d = a
        .trace()
        .v_mv()
        .iter()
        .zip(b.trace().v_mv())
        .map(|(x, y)| (x - y).abs())
        .fold(0.0, f64::max);
    assert!(max(a.trace().v_mv()) > a.trace().v_mv()[0] + 1.0);
    assert!(d < 1e-3, "|ΔV| = {d} mV");
}

// ---------------------------------------------------------------------------------------------
// Runs that cannot proceed
// ---------------------------------------------------------------------------------------------

#[test]
fn a_permeability_large_enough_to_overflow_the_current_is_refused_before_a_run() {
    // A permeability so large that the current overflows to infinity away from rest: once a
    // valid file that could only fail in `run` (issue 14), now refused where it is written.
    let mut s = passive("", 10.0, 0.1, "Voltage(-20.0)");
    s.species[0].permeability_cm_per_s = 1e300;
    let e = permeant::scenario::validate(s).expect_err("refused");
    let message = e.to_string();
    assert!(
        message.contains("species[0].permeability_cm_per_s") && message.contains("1e300"),
        "{message}"
    );
}

#[test]
fn an_unreachable_tolerance_stops_with_the_time_and_the_quantity() {
    // A zero relative and a vanishing absolute tolerance cannot be met in floating point: the
    // steps shrink until time stops advancing, and the run says so instead of hanging.
    let s = excitable(6.3, &pulse(20.0, 1.0, 1.0), 10.0);
    for method in [Method::Auto, Method::Explicit, Method::Rosenbrock] {
        let settings = SolverSettings {
            rtol: 0.0,
            atol_v_mv: 1e-300,
            atol_gate: 1e-300,
            atol_relative: 1e-300,
            method,
            ..Default::default()
        };
        let mut r = Run::new(&valid(&s), settings).unwrap();
        match r.run_to_end() {
            Err(EngineError::StepUnderflow { t_ms, quantity }) => {
                let e = EngineError::StepUnderflow { t_ms, quantity };
                assert!((0.0..10.0).contains(&t_ms));
                let message = e.to_string();
                assert!(message.contains(&format!("t = {t_ms} ms")), "{message}");
                assert!(
                    r.trace().names.iter().any(|n| message.contains(n.as_str())),
                    "{message}"
                );
            }
            other => panic!("{method:?}: expected StepUnderflow, got {other:?}"),
        }
    }
}

#[test]
fn start_voltage_sets_the_gates_to_their_steady_state_there() {
    // scenario-format.md: `Voltage(v)` starts at v with gates at their steady state for v;
    // m∞ = α/(α + β) with HH 1952's rates.
    let mut s = excitable(6.3, "", 1.0);
    s.run.start = Start::Voltage(-50.0);
    let r = Run::new(&valid(&s), SolverSettings::default()).unwrap();
    let (a, b) = hh_m_rates(-50.0);
    assert_eq!(r.v_mv(), -50.0);
    assert!((r.state()[1] - a / (a + b)).abs() < ROUNDING);
}

/// model.md's output rule: N = floor(duration/sample + 1e-9) may place the last grid sample a
/// hair past the duration; it is still written (a review found it dropped once), at the
/// duration itself, since no row may lie after the end of the run (issue 14).
#[test]
fn a_last_grid_sample_just_past_the_duration_is_still_written() {
    let mut s = permeant::scenario::Scenario::new_default();
    s.run.duration_ms = 1.0;
    s.run.sample_ms = 1.000_000_000_5;
    let mut run = Run::new(&valid(&s), SolverSettings::default()).unwrap();
    run.run_to_end().unwrap();
    assert_eq!(run.trace().t_ms, vec![0.0, 1.0]);
}

/// A run that takes far more steps per simulated time than any cell needs stops with the
/// quantity that changes fastest, instead of running for hours. A largest step of 1e-6 ms
/// asks for 10⁶ steps per ms, fifty times the budget.
#[test]
fn a_run_over_its_step_budget_stops_naming_the_fastest_quantity() {
    let s = excitable(6.3, &pulse(20.0, 1.0, 1.0), 10.0);
    let settings = SolverSettings {
        h_max_ms: 1e-6,
        ..Default::default()
    };
    let mut r = Run::new(&valid(&s), settings).unwrap();
    match r.run_to_end() {
        Err(e @ EngineError::StepBudget { .. }) => {
            let EngineError::StepBudget {
                t_ms,
                steps,
                ref quantity,
                timescale_ms,
            } = e
            else {
                unreachable!()
            };
            assert!(t_ms > 0.0 && t_ms < 1.0, "{e}");
            assert!(steps > permeant::engine::run::STEP_BUDGET_BASE, "{e}");
            // At rest the sodium activation gate (HH 1952: τm ≈ 0.2–0.5 ms at 6.3 °C) is the
            // fastest component of this cell.
            assert_eq!(quantity, "gate:fast sodium:m", "{e}");
            assert!(timescale_ms > 0.01 && timescale_ms < 2.0, "{e}");
            let message = e.to_string();
            assert!(
                message.contains("gate:fast sodium:m") && message.contains("budget"),
                "{message}"
            );
        }
        other => panic!("expected a stop by the step budget, got {other:?}"),
    }
}

/// An injection strong enough to drive the potential past ±1000 mV stops the run there with
/// the quantity, the time and the reason (it once ended as an internal failure).
#[test]
fn a_potential_leaving_the_models_range_stops_the_run_with_the_reason() {
    let s = passive(&pulse(-10000.0, 1.0, 5.0), 10.0, 0.1, "Rest");
    let mut r = Run::new(&valid(&s), SolverSettings::default()).unwrap();
    match r.run_to_end() {
        Err(e @ EngineError::OutOfRange { .. }) => {
            let message = e.to_string();
            assert!(
                message.contains("v_mv") && message.contains("1000 mV"),
                "{message}"
            );
            let EngineError::OutOfRange { t_ms, value, .. } = e else {
                unreachable!()
            };
            assert!((1.0..=6.0).contains(&t_ms), "{t_ms}");
            assert!(value < -1000.0, "{value}");
        }
        other => panic!("expected a stop out of range, got {other:?}"),
    }
}

// ---------------------------------------------------------------------------------------------
// Lagged inputs and agents against their closed forms (model.md "Time-varying inputs")
// ---------------------------------------------------------------------------------------------

/// Agreement asked of a lagged input with its closed form under [`tight`] tolerances: the
/// relative tolerance 1e-10 of a value of order 10, with room for the error carried along.
const LAG_TOLERANCE: f64 = 1e-7;

/// The first-order lag `τ de/dt = c − e` from `e0` at `t0`: `c + (e0 − c)·e^(−(t − t0)/τ)`
/// (the solution of a linear first-order ODE with constant input; common practice).
fn lag_closed_form(c: f64, e0: f64, tau_ms: f64, t_ms: f64, t0_ms: f64) -> f64 {
    c + (e0 - c) * (-(t_ms - t0_ms) / tau_ms).exp()
}

#[test]
fn a_scale_and_a_bath_change_follow_the_first_order_lag_closed_form() {
    // model.md: every time-varying input is its piecewise-constant command through a
    // first-order lag. A scale of K+ by 3 from 10 ms with τ = 7 ms starts at 1 (the command
    // before the event); the K+ bath goes from 4.5 to 20 mM at 5 ms with τ = 3 ms.
    let s = passive(
        r#"PermeabilityScale(species: "K+", factor: 3.0, from_ms: 10.0, lag_ms: 7.0),
           BathChange(species: "K+", outside_mm: 20.0, at_ms: 5.0, lag_ms: 3.0)"#,
        60.0,
        0.1,
        "Rest",
    );
    let r = run_to_end(&s, tight());
    let t = &r.trace().t_ms;
    let (scale, bath) = (column(&r, "factor:K+:event0"), column(&r, "bath_mm:K+"));
    for k in 0..t.len() {
        let expected_scale = if t[k] < 10.0 {
            1.0
        } else {
            lag_closed_form(3.0, 1.0, 7.0, t[k], 10.0)
        };
        let expected_bath = if t[k] < 5.0 {
            4.5
        } else {
            lag_closed_form(20.0, 4.5, 3.0, t[k], 5.0)
        };
        assert!(
            (scale[k] - expected_scale).abs() < LAG_TOLERANCE,
            "scale at {} ms: {} vs {expected_scale}",
            t[k],
            scale[k]
        );
        assert!(
            (bath[k] - expected_bath).abs() < LAG_TOLERANCE,
            "bath at {} ms: {} vs {expected_bath}",
            t[k],
            bath[k]
        );
    }
}

#[test]
fn an_agent_rises_with_its_onset_and_falls_with_its_washout_time_constant() {
    // model.md: an agent's dose is its command (dose inside [from, until), 0 outside) through a
    // lag whose τ is the onset constant while the command is above the lagged value and the
    // washout constant below it. Onset 5 ms from 10 to 40 ms, then washout 20 ms.
    let agent = r#"Agent(label: "blocker", species: "K+", max_block: 0.8, ic50_um: 2.0, hill: 1.5,
                         dose_um: 4.0, from_ms: 10.0, until_ms: Some(40.0), onset_ms: 5.0, washout_ms: 20.0)"#;
    let r = run_to_end(&passive(agent, 120.0, 0.1, "Rest"), tight());
    let (t, dose) = (&r.trace().t_ms, column(&r, "dose_um:blocker"));
    let at_until = lag_closed_form(4.0, 0.0, 5.0, 40.0, 10.0);
    for k in 0..t.len() {
        let expected = if t[k] < 10.0 {
            0.0
        } else if t[k] < 40.0 {
            lag_closed_form(4.0, 0.0, 5.0, t[k], 10.0)
        } else {
            lag_closed_form(0.0, at_until, 20.0, t[k], 40.0)
        };
        assert!(
            (dose[k] - expected).abs() < LAG_TOLERANCE,
            "dose at {} ms: {} µM vs {expected} µM",
            t[k],
            dose[k]
        );
    }
    // The blocked fraction follows the Hill–Langmuir law of the lagged dose (Hill 1910; common
    // practice): max_block·dⁿ/(dⁿ + IC50ⁿ), so K+ keeps 1 minus that of its permeability.
    let model = r.model();
    let mut y = vec![0.0; model.dim()];
    let mut cond = permeant::physics::Conditions::default();
    for k in (0..t.len()).step_by(37) {
        r.trace().state(k, &mut y);
        model.conditions(&y, 0.0, &mut cond);
        let blocked = reference::fraction_blocked(0.8, 2.0, 1.5, dose[k].max(0.0));
        assert!(
            (cond.p_factor[0] - (1.0 - blocked)).abs() < ROUNDING,
            "factor at {} ms",
            t[k]
        );
    }
}

// ---------------------------------------------------------------------------------------------
// Concentration tracking conserves mass (model.md "Concentration tracking")
// ---------------------------------------------------------------------------------------------

#[test]
fn tracked_concentrations_change_by_exactly_the_charge_that_crossed() {
    // With the bath infinite, each species' inside concentration moves only by what its current
    // carries across the membrane: Δc_in·Vol·z·F = −A·∫I dt (conservation of mass and charge;
    // model.md). A small cell (5 µm) under a 100 ms injected current moves measurable amounts.
    // ∫I dt is integrated here from the sampled currents by the trapezoid rule, piecewise
    // between the pulse's edges (samples 500 and 10500), where the currents have kinks.
    let mut s = passive(&pulse(3.0, 5.0, 100.0), 200.0, 0.01, "Rest");
    s.cell.diameter_um = 5.0;
    s.cell.track_concentrations = true;
    let r = run_to_end(&s, tight());
    let h = s.run.sample_ms;
    let n = r.trace().len();
    assert_eq!(n, 20_001);
    let currents = common::species_currents(&r);
    // Vol/A of a sphere is d/6; µA·ms = nC, and mM·cm·C/mol = 1e-6 C/cm², so both sides below
    // are in nC/cm².
    let d_cm = s.cell.diameter_um * 1e-4;
    let mut moved_any = false;
    for (sp, i) in s.species.iter().zip(&currents) {
        let inside = column(&r, &format!("inside_mm:{}", sp.name));
        let dc = inside[n - 1] - inside[0];
        let lhs = dc * (d_cm / 6.0) * f64::from(sp.charge) * reference::F_C_PER_MOL * 1e3;
        // The composite trapezoid rule over [a, b] errs by at most ((b − a)·h²/12)·max|I''|
        // (common practice); max|I''| of each piece is taken from its samples' second
        // differences. The solver's relative tolerance (1e-10) adds a little on top.
        let (mut integral, mut trapezoid_bound) = (0.0, 0.0);
        for (a, b) in [(0, 500), (500, 10_500), (10_500, n - 1)] {
            let piece = &i[a..=b];
            integral += h * (piece.iter().sum::<f64>() - 0.5 * (piece[0] + piece[piece.len() - 1]));
            let second = piece
                .windows(3)
                .map(|w| (w[2] - 2.0 * w[1] + w[0]).abs() / (h * h))
                .fold(0.0, f64::max);
            trapezoid_bound += (b - a) as f64 * h * h * h / 12.0 * second;
        }
        let rhs = -integral;
        let tolerance = trapezoid_bound + 1e-8 * rhs.abs();
        println!(
            "{}: Δc {dc:e} mM, Δc·Vol·zF/A {lhs} nC/cm², −∫I dt {rhs} nC/cm², bound {tolerance:e}",
            sp.name
        );
        assert!(
            (lhs - rhs).abs() <= tolerance,
            "{}: Δc·Vol·zF/A = {lhs}, −∫I dt = {rhs} nC/cm² (bound {tolerance})",
            sp.name
        );
        moved_any |= rhs.abs() > 1.0;
    }
    assert!(moved_any, "the pulse should move charge measurably");
}

// ---------------------------------------------------------------------------------------------
// State identities across edits mid-run
// ---------------------------------------------------------------------------------------------

/// The lag state of the (only) K+ scale of a run.
fn scale_lag(r: &Run) -> f64 {
    let i = r
        .trace()
        .names
        .iter()
        .position(|n| n.starts_with("factor:K+:"))
        .expect("a K+ scale");
    r.state()[i]
}

#[test]
fn moving_or_changing_a_scale_mid_run_keeps_its_lag() {
    // A slow scale (τ = 50 ms) is half-way when the protocol is edited at 30 ms: moving the
    // event up past an injection, and then changing its factor, must leave the lagged value
    // where it was (the state is the same scale), and the trace's column follows it.
    let inject = pulse(1.0, 5.0, 10.0);
    let scale = r#"PermeabilityScale(species: "K+", factor: 2.0, from_ms: 10.0, lag_ms: 50.0)"#;
    let s = passive(&format!("{inject}, {scale}"), 100.0, 0.1, "Rest");
    let mut r = Run::new(&valid(&s), SolverSettings::default()).unwrap();
    r.advance(Budget {
        until_ms: 30.0,
        max_steps: u64::MAX,
    })
    .unwrap();
    let (before, t_edit) = (scale_lag(&r), r.t_ms());
    assert!(before > 1.2 && before < 1.8, "lag {before} not half-way");
    let history = column(&r, "factor:K+:event1").to_vec();

    let mut moved = s.clone();
    moved.protocol.swap(0, 1);
    r.update_scenario(&valid(&moved));
    assert_eq!(scale_lag(&r), before, "moving the event reset its lag");
    assert_eq!(column(&r, "factor:K+:event0"), &history[..]);
    assert!(!r.trace().names.iter().any(|n| n == "factor:K+:event1"));

    let mut stronger = moved.clone();
    stronger.protocol[0] = Event::PermeabilityScale {
        species: "K+".into(),
        factor: 3.0,
        from_ms: 10.0,
        until_ms: None,
        lag_ms: 50.0,
    };
    r.update_scenario(&valid(&stronger));
    assert_eq!(scale_lag(&r), before, "changing the factor reset the lag");
    r.run_to_end().unwrap();
    // And from there the lag heads for the new command, 3, along its closed form (default
    // tolerances: rtol 1e-6 of a value near 3).
    let expected = lag_closed_form(3.0, before, 50.0, 100.0, t_edit);
    assert!(
        (scale_lag(&r) - expected).abs() < 3.0 * 10.0 * SETTLED_FACTOR,
        "lag {} at the end, closed form {expected}",
        scale_lag(&r)
    );
}

#[test]
fn two_gates_of_one_kind_on_one_channel_get_distinct_names() {
    // Each state component has its own identity and column: a channel with two activation
    // gates of the same kind (m·m·h) has three gate columns, none shared.
    let s = scenario(
        r#"(
        format: 1,
        species: [(name: "Na+", charge: 1, inside_mm: 12.0, outside_mm: 145.0, permeability_cm_per_s: 1.0e-8),
                  (name: "K+", charge: 1, inside_mm: 140.0, outside_mm: 5.0, permeability_cm_per_s: 5.0e-7)],
        channels: [(label: "odd sodium", species: "Na+", max_permeability_cm_per_s: 1.0e-5,
                    gates: [(kinetics: HhSodiumActivation, power: 1), (kinetics: HhSodiumActivation, power: 2),
                            (kinetics: HhSodiumInactivation, power: 1)])],
        run: (duration_ms: 1.0, sample_ms: 0.5),
    )"#,
    );
    let r = run_to_end(&s, SolverSettings::default());
    assert_eq!(
        r.trace().names,
        [
            "v_mv",
            "gate:odd sodium:m",
            "gate:odd sodium:m2",
            "gate:odd sodium:h"
        ]
    );
}
