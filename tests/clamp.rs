//! Voltage clamp and families of runs (clamp-and-volume.md) against closed forms: the GHK
//! currents of a passive membrane and its GHK potential, Hodgkin & Huxley's 1952 gates under an
//! ideal step, the bi-ionic reversal potential, the series-resistance transient, the Boltzmann
//! fit under noise, the fraction blocked at the IC50, a control family against a blocked one
//! and the Hill fit of a dose family; then every new rule of a bad file.
//!
//! The scenarios here are invented for these tests.

use permeant::analysis::block::{compare_families, dose_block};
use permeant::analysis::family::{FamilyRuns, Measure, analyse, fit_boltzmann, fraction_blocked, run_family};
use permeant::analysis::metrics::SpikeSettings;
use permeant::analysis::scan::ScanControl;
use permeant::engine::{Run, SolverSettings};
use permeant::scenario::{
    Address, Event, Problem, RunMode, Scenario, from_str, problems, range_values, to_ron_string,
};

mod common;
use common::cells::{hh_channels, species};
use common::reference::{
    F_C_PER_MOL, R_J_PER_MOL_K, ZERO_CELSIUS_K, ghk_current_ua_per_cm2, ghk_voltage_mv, rt_over_f_mv,
};
use common::rng::{Rng, assert_honest_errors};
use common::{reference_ions, valid};

/// A current the program computes from the same equation as the test (a GHK current at a
/// clamped potential): only rounding separates them.
const RELATIVE: f64 = 1e-9;

fn clamped(mut s: Scenario, holding_mv: f64, rs_mohm: f64, compensation: f64) -> Scenario {
    s.run.mode = RunMode::VoltageClamp {
        holding_mv,
        series_resistance_mohm: rs_mohm,
        compensation,
    };
    s
}

fn step(to_mv: f64, from_ms: f64) -> Event {
    Event::Step {
        to_mv,
        from_ms,
        until_ms: None,
    }
}

/// A passive cell in a normal bath, three permeant ions, no pump or channels.
fn passive(temperature_c: f64) -> Scenario {
    let mut s = Scenario::new_default();
    s.temperature_c = temperature_c;
    s.species = vec![
        species("K+", 1, 140.0, 5.0, 5e-7),
        species("Na+", 1, 12.0, 145.0, 2.5e-8),
        species("Cl-", -1, 10.0, 120.0, 1e-7),
    ];
    s.run.duration_ms = 10.0;
    s.run.sample_ms = 0.5;
    s
}

fn family(s: &Scenario, path: &str, values: &[f64]) -> FamilyRuns {
    let field: Address = path.parse().expect("an address");
    run_family(
        s,
        field,
        values,
        &SolverSettings::default(),
        &ScanControl::default(),
    )
    .unwrap_or_else(|e| panic!("{e}"))
}

#[test]
fn a_passive_membrane_under_ideal_clamp_carries_the_sum_of_its_ghk_currents() {
    // Goldman 1943; Hodgkin & Katz 1949: with V held, each ion's current is its GHK current.
    let mut s = clamped(passive(22.0), -80.0, 0.0, 0.0);
    s.protocol = vec![step(-100.0, 2.0)];
    let levels = range_values(-100.0, 40.0, 10.0).expect("a range");
    let runs = family(&s, "protocol[0].to_mv", &levels);
    let late = Measure::Late {
        from_ms: 5.0,
        until_ms: 10.0,
    };
    let table = analyse(&runs, &[late], SpikeSettings::default());
    let ions = reference_ions(&s);
    for (k, &v) in levels.iter().enumerate() {
        let (mut want, mut scale) = (0.0, 0.0);
        for i in &ions {
            let (c, size) =
                ghk_current_ua_per_cm2(i.p_cm_per_s, i.charge, i.inside_mm, i.outside_mm, v, 22.0);
            want += c;
            scale += size;
        }
        let got = table.cells[k][0].value.expect("a late mean");
        assert!(
            (got - want).abs() < RELATIVE * scale,
            "{v} mV: {got} vs {want} µA/cm²"
        );
        // The membrane sits exactly on the command.
        let m = &runs.members[k];
        assert!(
            m.v_mv
                .iter()
                .zip(&m.command_mv)
                .all(|(a, b)| (a - b).abs() < 1e-9)
        );
    }
}

#[test]
fn a_passive_familys_reversal_is_the_ghk_potential() {
    // The GHK voltage equation (Goldman 1943; Hodgkin & Katz 1949) for monovalent ions.
    let mut s = clamped(passive(22.0), -80.0, 0.0, 0.0);
    s.run.duration_ms = 2.0;
    s.protocol = vec![step(-100.0, 0.0)];
    let want = ghk_voltage_mv(&reference_ions(&s), 22.0);
    // Levels a quarter millivolt apart around it: the straight line between two of them is
    // off the curved I–V by well under 0.01 mV (model.md's accuracy).
    let levels = range_values((want - 5.0).round(), (want + 5.0).round(), 0.25).expect("a range");
    let runs = family(&s, "protocol[0].to_mv", &levels);
    let table = analyse(
        &runs,
        &[Measure::Late {
            from_ms: 1.0,
            until_ms: 2.0,
        }],
        SpikeSettings::default(),
    );
    let got = table.reversal_mv.expect("a reversal potential");
    assert!((got - want).abs() < 0.01, "{got} vs {want} mV");
}

#[test]
fn a_current_that_keeps_one_sign_has_no_reversal() {
    let mut s = clamped(passive(22.0), -80.0, 0.0, 0.0);
    s.run.duration_ms = 2.0;
    s.protocol = vec![step(-100.0, 0.0)];
    let runs = family(&s, "protocol[0].to_mv", &[-40.0, -20.0, 0.0]);
    let table = analyse(&runs, &[Measure::Tail { at_ms: 1.0 }], SpikeSettings::default());
    assert_eq!(table.reversal_mv, None);
    assert_eq!(table.boltzmann, None);
}

// ---------------------------------------------------------------------------------------------
// Hodgkin & Huxley 1952 under an ideal step

/// The published rates (Hodgkin & Huxley 1952, J. Physiol. 117:500) in model.md's
/// absolute-voltage form, 1/ms at 6.3 °C: (α, β) of m, h and n. Written here, not the crate's.
fn hh(v: f64) -> [(f64, f64); 3] {
    let lin = |x: f64, k: f64| {
        if x.abs() < 1e-9 {
            k
        } else {
            x / (1.0 - (-x / k).exp())
        }
    };
    [
        (0.1 * lin(v + 40.0, 10.0), 4.0 * (-(v + 65.0) / 18.0).exp()),
        (
            0.07 * (-(v + 65.0) / 20.0).exp(),
            1.0 / (1.0 + (-(v + 35.0) / 10.0).exp()),
        ),
        (0.01 * lin(v + 55.0, 10.0), 0.125 * (-(v + 65.0) / 80.0).exp()),
    ]
}

#[test]
fn hh_gates_under_an_ideal_step_relax_exponentially_with_the_published_rates() {
    // Each gate obeys dx/dt = α(1 − x) − βx; at a fixed V that is
    // x(t) = x∞ − (x∞ − x₀)e^(−t/τ), x∞ = α/(α + β), τ = 1/(α + β) (Hodgkin & Huxley 1952).
    let (hold, to, t0) = (-80.0, -10.0, 1.0);
    let mut s = Scenario::new_default();
    s.temperature_c = 6.3;
    s.species = vec![
        species("Na+", 1, 10.0, 140.0, 0.0),
        species("K+", 1, 140.0, 5.0, 0.0),
    ];
    s.channels = hh_channels(2e-5, 6e-6);
    s.protocol = vec![step(to, t0)];
    s.run.duration_ms = 12.0;
    s.run.sample_ms = 0.05;
    let s = clamped(s, hold, 0.0, 0.0);
    let mut run = Run::new(&valid(&s), SolverSettings::default()).expect("starts");
    run.run_to_end().expect("runs");
    let (trace, model) = (run.trace(), run.model());
    let column = |name: &str| {
        let k = trace
            .names
            .iter()
            .position(|n| n == name)
            .unwrap_or_else(|| panic!("{name}"));
        &trace.columns[k]
    };
    let (m, h, n) = (
        column("gate:fast sodium:m"),
        column("gate:fast sodium:h"),
        column("gate:delayed potassium:n"),
    );
    let closed = |gate: usize, t: f64| {
        let inf = |v: f64| {
            let (a, b) = hh(v)[gate];
            a / (a + b)
        };
        if t < t0 {
            return inf(hold);
        }
        let (a, b) = hh(to)[gate];
        inf(to) - (inf(to) - inf(hold)) * (-(t - t0) * (a + b)).exp()
    };
    let ions = reference_ions(&s);
    let mut readout = model.readout();
    let mut y = vec![0.0; trace.columns.len()];
    let mut peak_na: f64 = 0.0;
    let mut worst = (0.0f64, 0.0f64);
    for k in 0..trace.len() {
        let t = trace.t_ms[k];
        for (gate, col) in [m, h, n].into_iter().enumerate() {
            let want = closed(gate, t);
            // The stepper's tolerances (model.md) keep a gate within 1e-5 of its solution.
            assert!(
                (col[k] - want).abs() < 1e-5,
                "gate {gate} at {t} ms: {} vs {want}",
                col[k]
            );
        }
        // The currents then have a closed form in time: P·m³h·GHK and P·n⁴·GHK.
        let v = if t < t0 { hold } else { to };
        let ghk = |i: usize| {
            let ion = ions[i];
            ghk_current_ua_per_cm2(1.0, ion.charge, ion.inside_mm, ion.outside_mm, v, 6.3).0
        };
        let want_na = 2e-5 * closed(0, t).powi(3) * closed(1, t) * ghk(0);
        let want_k = 6e-6 * closed(2, t).powi(4) * ghk(1);
        trace.state(k, &mut y);
        model.read(t, &y, &mut readout);
        let c = &readout.currents;
        peak_na = peak_na.max(want_na.abs());
        worst.0 = worst.0.max((c.species_ua_per_cm2[0] - want_na).abs());
        worst.1 = worst.1.max((c.species_ua_per_cm2[1] - want_k).abs());
        assert!((c.clamp_ua_per_cm2 - c.net_ua_per_cm2).abs() < 1e-12);
    }
    // A gate within 1e-5 moves m³h by at most about 3e-5 of the peak's scale.
    assert!(peak_na > 10.0, "the step opens the sodium channel: {peak_na}");
    assert!(worst.0 < 1e-4 * peak_na, "sodium current off by {}", worst.0);
    assert!(worst.1 < 1e-4 * peak_na, "potassium current off by {}", worst.1);
}

// ---------------------------------------------------------------------------------------------
// Bi-ionic reversal

#[test]
fn a_bi_ionic_family_recovers_the_permeability_ratio() {
    // The GHK bi-ionic equation (Hille, Ion Channels of Excitable Membranes): with only Na+
    // inside and only K+ outside, P_K/P_Na = ([Na]_i/[K]_o)·e^(F·E_rev/RT).
    let (t_c, ratio) = (22.0, 8.0);
    let mut s = Scenario::new_default();
    s.temperature_c = t_c;
    s.species = vec![
        species("Na+", 1, 150.0, 0.0, 1e-7),
        species("K+", 1, 0.0, 100.0, ratio * 1e-7),
    ];
    s.protocol = vec![step(0.0, 0.0)];
    s.run.duration_ms = 1.0;
    s.run.sample_ms = 0.5;
    let s = clamped(s, 0.0, 0.0, 0.0);
    let levels = range_values(0.0, 60.0, 0.5).expect("a range");
    let runs = family(&s, "protocol[0].to_mv", &levels);
    let table = analyse(&runs, &[Measure::Tail { at_ms: 1.0 }], SpikeSettings::default());
    let e = table.reversal_mv.expect("a reversal potential");
    let kelvin = t_c + ZERO_CELSIUS_K;
    let got = (150.0 / 100.0) * (F_C_PER_MOL * e * 1e-3 / (R_J_PER_MOL_K * kelvin)).exp();
    assert!(
        (got / ratio - 1.0).abs() < 1e-4,
        "P_K/P_Na = {got}, file {ratio} (E_rev {e} mV)"
    );
}

// ---------------------------------------------------------------------------------------------
// Series resistance

/// The transient of a step through R_eff into an ohmic membrane. With equal concentrations on
/// both sides the GHK current is exactly ohmic, `I = P z² F² c V/(RT)` (the limit of the GHK
/// current at c_in = c_out; Hille), so the membrane is a resistor in parallel with C. Through
/// R_eff (common practice): `τ = R_eff R_m A C/(R_eff + R_m)`, V settles at `R_m/(R_eff + R_m)`
/// of the step.
fn series_transient(rs_mohm: f64, compensation: f64) {
    let (t_c, c_mm, p, d_um, step_mv, t0) = (22.0, 140.0, 1e-6, 20.0, 10.0, 1.0);
    let mut s = Scenario::new_default();
    s.temperature_c = t_c;
    s.cell.diameter_um = d_um;
    s.species = vec![species("K+", 1, c_mm, c_mm, p)];
    s.protocol = vec![step(step_mv, t0)];
    s.run.duration_ms = 4.0;
    s.run.sample_ms = 0.01;
    let s = clamped(s, 0.0, rs_mohm, compensation);
    let mut run = Run::new(&valid(&s), SolverSettings::default()).expect("starts");
    run.run_to_end().expect("runs");
    let tr = run.trace();

    // g in S/cm²: P (cm/s) · F² · c (mol/cm³) / (RT).
    let g = p * F_C_PER_MOL * F_C_PER_MOL * (c_mm * 1e-6) / (R_J_PER_MOL_K * (t_c + ZERO_CELSIUS_K));
    let area_cm2 = std::f64::consts::PI * (d_um * 1e-4).powi(2);
    let r_m = 1.0 / g / area_cm2; // Ω, whole cell
    let r_eff = rs_mohm * 1e6 * (1.0 - compensation);
    let cap = 1e-6 * area_cm2; // F
    let tau_ms = 1e3 * r_eff * r_m * cap / (r_eff + r_m);
    let fraction = r_m / (r_eff + r_m);
    assert!(tau_ms > 0.02 && tau_ms < 1.0, "test setup: τ = {tau_ms} ms");
    for (k, &t) in tr.t_ms.iter().enumerate() {
        let want = if t < t0 {
            0.0
        } else {
            step_mv * fraction * (1.0 - (-(t - t0) / tau_ms).exp())
        };
        // model.md's accuracy on V: 0.01 mV; the run keeps far inside it.
        assert!(
            (tr.v_mv()[k] - want).abs() < 1e-3,
            "at {t} ms: {} vs {want} mV",
            tr.v_mv()[k]
        );
    }
}

#[test]
fn series_resistance_slows_the_clamp_and_leaves_the_classic_error() {
    series_transient(20.0, 0.0);
}

#[test]
fn compensation_shortens_the_transient_as_stated() {
    series_transient(20.0, 0.6);
}

#[test]
fn the_pipette_current_is_the_drop_across_the_resistance() {
    let mut s = Scenario::new_default();
    s.species = vec![species("K+", 1, 140.0, 140.0, 1e-6)];
    s.protocol = vec![step(10.0, 1.0)];
    s.run.duration_ms = 3.0;
    let s = clamped(s, 0.0, 10.0, 0.0);
    let mut run = Run::new(&valid(&s), SolverSettings::default()).expect("starts");
    run.run_to_end().expect("runs");
    let (tr, model) = (run.trace(), run.model());
    let mut readout = model.readout();
    let mut y = vec![0.0; tr.columns.len()];
    let area_cm2 = std::f64::consts::PI * (20.0e-4f64).powi(2);
    for k in 0..tr.len() {
        tr.state(k, &mut y);
        model.read(tr.t_ms[k], &y, &mut readout);
        let cmd = if tr.t_ms[k] < 1.0 { 0.0 } else { 10.0 };
        // Ohm's law: (V_cmd − V)/R_s, A → µA, per cm² of membrane.
        let want = (cmd - y[0]) * 1e-3 / (10e6 * area_cm2) * 1e6;
        assert!((readout.currents.clamp_ua_per_cm2 - want).abs() < 1e-9 * want.abs().max(1.0));
        assert_eq!(readout.currents.command_mv, cmd);
    }
}

// ---------------------------------------------------------------------------------------------
// Fits and block

#[test]
fn the_boltzmann_fit_recovers_its_parameters_within_honest_standard_errors() {
    // Least-squares theory (common practice): with Gaussian noise the estimate lies within one
    // standard error of the truth about 68 % of the time, and almost always within three.
    let (v_half, k) = (-22.0, 7.5);
    let v: Vec<f64> = range_values(-70.0, 30.0, 5.0).expect("a range");
    let trials = 60;
    let mut within_one = [0usize; 2];
    for seed in 1..=trials {
        let mut rng = Rng::new(seed);
        let g: Vec<f64> = v
            .iter()
            .map(|x| 1.0 / (1.0 + (-(x - v_half) / k).exp()) + 0.02 * rng.normal())
            .collect();
        let b = fit_boltzmann(&v, &g).unwrap_or_else(|e| panic!("seed {seed}: {e}"));
        for (c, (got, se, want)) in [
            (b.v_half_mv, b.se_v_half_mv, v_half),
            (b.slope_mv, b.se_slope_mv, k),
        ]
        .into_iter()
        .enumerate()
        {
            let z = (got - want) / se;
            assert!(z.abs() < 4.0, "seed {seed} parameter {c}: {got} ± {se} vs {want}");
            if z.abs() <= 1.0 {
                within_one[c] += 1;
            }
        }
    }
    assert_honest_errors(&within_one, trials);
    // Without noise it is exact.
    let g: Vec<f64> = v
        .iter()
        .map(|x| 1.0 / (1.0 + (-(x - v_half) / k).exp()))
        .collect();
    let b = fit_boltzmann(&v, &g).expect("fits");
    assert!(
        (b.v_half_mv - v_half).abs() < 1e-6 && (b.slope_mv - k).abs() < 1e-6,
        "{b:?}"
    );
}

#[test]
fn a_delayed_potassium_family_gives_an_activation_curve() {
    // The steady n⁴ of Hodgkin & Huxley 1952 rises with V: G/G_max from a step family is a
    // rising sigmoid, so the fit has a positive slope and its midpoint inside the levels.
    let mut s = Scenario::new_default();
    s.temperature_c = 6.3;
    s.species = vec![
        species("K+", 1, 140.0, 5.0, 0.0),
        species("Na+", 1, 10.0, 140.0, 0.0),
    ];
    s.channels = hh_channels(0.0, 6e-6).into_iter().skip(1).collect();
    s.protocol = vec![step(-100.0, 1.0)];
    s.run.duration_ms = 40.0;
    s.run.sample_ms = 0.1;
    let s = clamped(s, -90.0, 0.0, 0.0);
    let levels = range_values(-60.0, 60.0, 10.0).expect("a range");
    let runs = family(&s, "protocol[0].to_mv", &levels);
    let table = analyse(
        &runs,
        &[Measure::Late {
            from_ms: 35.0,
            until_ms: 40.0,
        }],
        SpikeSettings::default(),
    );
    // Outward at every level above E_K: no crossing among these levels, so no reversal.
    assert_eq!(table.reversal_mv, None);
    // With the levels widened below E_K the current reverses there.
    let wide = range_values(-120.0, 60.0, 10.0).expect("a range");
    let runs = family(&s, "protocol[0].to_mv", &wide);
    let table = analyse(&runs, &[Measure::Tail { at_ms: 40.0 }], SpikeSettings::default());
    let e = table.reversal_mv.expect("reverses");
    // A channel passing one ion reverses at that ion's Nernst potential (Nernst 1889), so the
    // interpolated crossing lies between the two levels around E_K (the line between them is
    // not the curved gated I–V, so it is no closer than that).
    let e_k = rt_over_f_mv(6.3) * (5.0f64 / 140.0).ln();
    let below = (e_k / 10.0).floor() * 10.0;
    assert!(e > below && e < below + 10.0, "{e} vs E_K {e_k}");
    let b = table.boltzmann.expect("fitted");
    assert!(
        b.slope_mv > 0.0 && b.v_half_mv > -60.0 && b.v_half_mv < 60.0,
        "{b:?}"
    );
}

#[test]
fn a_dose_at_the_ic50_blocks_half_the_current_at_every_level() {
    // The Hill equation with n = 1 and full block (Hill 1910): b(IC50) = 1/2. The agent is in
    // force from t = 0 without lag, so its block is steady through the run.
    let mut s = Scenario::new_default();
    s.temperature_c = 6.3;
    s.species = vec![species("K+", 1, 140.0, 5.0, 1e-7)];
    s.channels = hh_channels(0.0, 6e-6).into_iter().skip(1).collect();
    s.protocol = vec![step(-100.0, 1.0)];
    s.run.duration_ms = 20.0;
    let control = clamped(s, -80.0, 0.0, 0.0);
    let mut treated = control.clone();
    treated.protocol.push(Event::Agent {
        label: "blocker".into(),
        species: "K+".into(),
        max_block: 1.0,
        max_increase: None,
        ic50_um: 3.0,
        hill: 1.0,
        dose_um: 3.0,
        from_ms: 0.0,
        until_ms: None,
        onset_ms: 0.0,
        washout_ms: 0.0,
        target: Default::default(),
    });
    let levels = [-40.0, -20.0, 0.0, 20.0];
    let late = [Measure::Late {
        from_ms: 15.0,
        until_ms: 20.0,
    }];
    let c = analyse(
        &family(&control, "protocol[0].to_mv", &levels),
        &late,
        SpikeSettings::default(),
    );
    let t = analyse(
        &family(&treated, "protocol[0].to_mv", &levels),
        &late,
        SpikeSettings::default(),
    );
    for (v, f) in levels.iter().zip(fraction_blocked(&c.first(), &t.first())) {
        let f = f.expect("a control current");
        // The two runs take their own steps: each current is within the stepper's 1e-6
        // relative tolerance of the same solution.
        assert!((f - 0.5).abs() < 1e-5, "{v} mV: {f}");
    }
    // The same through the level-by-level comparison the window shows.
    let cmp = compare_families(&c, &t, 0).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(cmp.rows.len(), levels.len());
    for r in &cmp.rows {
        let f = r.blocked.expect("a control current");
        assert!((f - 0.5).abs() < 1e-5, "{} mV: {f}", r.level);
    }
}

/// A passive cell of K+ and Na+ (only K+ blocked), without channels: each level's current is
/// a sum of GHK currents in closed form.
fn k_and_na() -> Scenario {
    let mut s = clamped(passive(22.0), -80.0, 0.0, 0.0);
    s.species = vec![
        species("K+", 1, 140.0, 5.0, 5e-7),
        species("Na+", 1, 12.0, 145.0, 2.5e-8),
    ];
    s.protocol = vec![step(-100.0, 1.0)];
    s.run.duration_ms = 4.0;
    s
}

fn k_blocker(dose_um: f64, ic50_um: f64, hill: f64) -> Event {
    Event::Agent {
        label: "k blocker".into(),
        species: "K+".into(),
        max_block: 1.0,
        max_increase: None,
        ic50_um,
        hill,
        dose_um,
        from_ms: 0.0,
        until_ms: None,
        onset_ms: 0.0,
        washout_ms: 0.0,
        target: Default::default(),
    }
}

#[test]
fn a_blocked_family_loses_the_ghk_fraction_of_the_control_at_each_level() {
    // The block scales P_K by 1/(1 + d/IC50) (the Hill equation with n = 1 and full block,
    // Hill 1910); the GHK current (Goldman 1943; Hodgkin & Katz 1949) is linear in P, so at
    // each level I_treated = I_K/(1 + d/IC50) + I_Na, and the fraction blocked is
    // 1 − I_treated/I_control, in closed form.
    let control = k_and_na();
    let mut treated = control.clone();
    let (dose, ic50) = (6.0, 2.0);
    treated.protocol.push(k_blocker(dose, ic50, 1.0));
    // Levels clear of the GHK potential (about −62 mV), where the control carries current.
    let levels = [-100.0, -40.0, -20.0, 0.0, 20.0, 40.0];
    let late = [Measure::Late {
        from_ms: 2.0,
        until_ms: 4.0,
    }];
    let c = analyse(
        &family(&control, "protocol[0].to_mv", &levels),
        &late,
        SpikeSettings::default(),
    );
    // The treated family lists its levels in another order: they are matched by value.
    let mut reversed = levels;
    reversed.reverse();
    let t = analyse(
        &family(&treated, "protocol[0].to_mv", &reversed),
        &late,
        SpikeSettings::default(),
    );
    let cmp = compare_families(&c, &t, 0).unwrap_or_else(|e| panic!("{e}"));
    let keep = 1.0 / (1.0 + dose / ic50);
    for (r, &v) in cmp.rows.iter().zip(&levels) {
        assert_eq!(r.level, v);
        let (i_k, k_size) = ghk_current_ua_per_cm2(5e-7, 1, 140.0, 5.0, v, 22.0);
        let (i_na, na_size) = ghk_current_ua_per_cm2(2.5e-8, 1, 12.0, 145.0, v, 22.0);
        let scale = RELATIVE * (k_size + na_size);
        let (want_c, want_t) = (i_k + i_na, keep * i_k + i_na);
        let (got_c, got_t) = (r.control.expect("control"), r.treated.expect("treated"));
        assert!(
            (got_c - want_c).abs() < scale,
            "{v} mV control: {got_c} vs {want_c}"
        );
        assert!(
            (got_t - want_t).abs() < scale,
            "{v} mV treated: {got_t} vs {want_t}"
        );
        let f = r.blocked.expect("a fraction");
        let want = 1.0 - want_t / want_c;
        assert!((f - want).abs() < 1e-9, "{v} mV: {f} vs {want}");
    }
    // At 0 mV the GHK current is P·F·(c_in − c_out) (its limit at V = 0), by hand:
    // K+ 5e-7 cm/s × 96485.332 C/mol × 135e-6 mol/cm³ = 6.512760 µA/cm² and
    // Na+ 2.5e-8 × 96485.332 × (−133e-6) = −0.320814 µA/cm²; the blocker leaves a quarter of
    // the K+ current: 1.628190 − 0.320814 = 1.307376 µA/cm², so 1 − 1.307376/6.191946 = 0.788859
    // is blocked.
    let zero = &cmp.rows[3];
    assert!((zero.control.expect("control") - 6.191946).abs() < 1e-5);
    assert!((zero.treated.expect("treated") - 1.307376).abs() < 1e-5);
    assert!((zero.blocked.expect("blocked") - 0.788859).abs() < 1e-6);
}

#[test]
fn families_over_other_levels_or_numbers_are_not_compared() {
    let s = k_and_na();
    let late = [Measure::Late {
        from_ms: 2.0,
        until_ms: 4.0,
    }];
    let c = analyse(
        &family(&s, "protocol[0].to_mv", &[-40.0, 0.0]),
        &late,
        SpikeSettings::default(),
    );
    let t = analyse(
        &family(&s, "protocol[0].to_mv", &[-40.0, 10.0]),
        &late,
        SpikeSettings::default(),
    );
    let e = compare_families(&c, &t, 0).expect_err("other levels");
    assert_eq!(
        e.to_string(),
        "level 10 mV of this family has no control run at the same level"
    );
    let o = analyse(
        &family(&s, "species[0].outside_mm", &[40.0, 10.0]),
        &late,
        SpikeSettings::default(),
    );
    let e = compare_families(&c, &o, 0).expect_err("another number");
    assert!(
        e.to_string().contains("species[0].outside_mm") && e.to_string().contains("protocol[0].to_mv"),
        "{e}"
    );
}

#[test]
fn a_dose_family_of_current_gives_back_the_agents_ic50_and_hill_coefficient() {
    // With only K+ permeant and the K+ conductance blocked, the current lost at a dose is the
    // Hill fraction itself (Hill 1910; the GHK current is linear in P), so the fit of the
    // dose family recovers the file's IC50 and n.
    let mut s = k_and_na();
    s.species[1].permeability_cm_per_s = 0.0;
    s.protocol[0] = step(20.0, 1.0);
    s.protocol.push(k_blocker(1.0, 4.0, 2.0));
    let doses = [0.0, 0.5, 1.0, 2.0, 4.0, 8.0, 16.0, 32.0];
    let late = [Measure::Late {
        from_ms: 2.0,
        until_ms: 4.0,
    }];
    let t = analyse(
        &family(&s, "protocol[1].dose_um", &doses),
        &late,
        SpikeSettings::default(),
    );
    let d = dose_block(&t, 0).unwrap_or_else(|e| panic!("{e}"));
    for x in &d.doses {
        let want = common::reference::fraction_blocked(1.0, 4.0, 2.0, x.dose_um);
        let got = x.blocked.expect("a fraction");
        assert!((got - want).abs() < 1e-9, "{} µM: {got} vs {want}", x.dose_um);
    }
    let f = d.fit.unwrap_or_else(|e| panic!("{e}"));
    assert!((f.ic50_um - 4.0).abs() < 1e-6, "{f:?}");
    assert!((f.hill - 2.0).abs() < 1e-6, "{f:?}");
}

#[test]
fn an_injection_family_finds_the_rheobase() {
    // An excitable cell fires for strong enough pulses only (Hodgkin & Huxley 1952): the
    // spike count over the family rises from 0 to at least 1, and latency shortens with current.
    let mut s = Scenario::new_default();
    s.temperature_c = 6.3;
    s.species = vec![
        species("K+", 1, 140.0, 5.0, 5e-8),
        species("Na+", 1, 10.0, 140.0, 2e-9),
    ];
    s.channels = hh_channels(2e-5, 6e-6);
    s.protocol = vec![Event::Inject {
        amplitude_ua_per_cm2: 0.0,
        from_ms: 5.0,
        until_ms: 6.0,
    }];
    s.run.duration_ms = 30.0;
    let levels = range_values(0.0, 60.0, 4.0).expect("a range");
    let runs = family(&s, "protocol[0].amplitude_ua_per_cm2", &levels);
    assert!(!runs.clamped);
    let table = analyse(
        &runs,
        &[
            Measure::Spikes {
                from_ms: 0.0,
                until_ms: 30.0,
            },
            Measure::Latency {
                from_ms: 5.0,
                until_ms: 30.0,
            },
        ],
        SpikeSettings::default(),
    );
    let counts: Vec<f64> = table.cells.iter().map(|r| r[0].value.unwrap_or(0.0)).collect();
    assert_eq!(counts[0], 0.0);
    let first = counts
        .iter()
        .position(|&n| n >= 1.0)
        .expect("fires at some level");
    assert!(
        first > 0 && counts[first..].iter().all(|&n| n >= 1.0),
        "{counts:?}"
    );
    let lat: Vec<f64> = table.cells[first..].iter().filter_map(|r| r[1].value).collect();
    assert!(lat.first() > lat.last(), "{lat:?}");
}

// ---------------------------------------------------------------------------------------------
// Files

const CLAMP_FILE: &str = r#"(
    format: 1,
    species: [(name: "K+", charge: 1, inside_mm: 140.0, outside_mm: 5.0, permeability_cm_per_s: 5.0e-7)],
    protocol: [
        Step(to_mv: -20.0, from_ms: 5.0, until_ms: Some(15.0)),
        Ramp(from_mv: -100.0, to_mv: 40.0, from_ms: 20.0, until_ms: 40.0),
    ],
    run: (
        duration_ms: 50.0,
        mode: VoltageClamp(holding_mv: -80.0, series_resistance_mohm: 5.0, compensation: 0.7),
        family: Some((field: "protocol[0].to_mv", from: -100.0, to: 40.0, step: 10.0)),
    ),
)
"#;

fn problems_of(text: &str) -> Vec<Problem> {
    let s: Scenario = ron::from_str(text).unwrap_or_else(|e| panic!("parses: {e}"));
    problems(&s)
}

fn assert_problem(text: &str, path: &str, words: &[&str]) {
    let found = problems_of(text);
    let p = found
        .iter()
        .find(|p| p.path == path)
        .unwrap_or_else(|| panic!("no problem at {path}: {found:?}"));
    for w in words {
        assert!(p.message.contains(w), "{path}: \"{}\" lacks \"{w}\"", p.message);
    }
}

fn clamp_with(old: &str, new: &str) -> String {
    assert_eq!(CLAMP_FILE.matches(old).count(), 1, "test setup: {old}");
    CLAMP_FILE.replacen(old, new, 1)
}

#[test]
fn a_clamp_file_reads_and_saves_back_to_itself() {
    let s = from_str(CLAMP_FILE, "clamp.ron")
        .unwrap_or_else(|e| panic!("{e}"))
        .into_inner();
    let text = to_ron_string(&s);
    let again = from_str(&text, "again.ron")
        .unwrap_or_else(|e| panic!("{e}"))
        .into_inner();
    assert_eq!(s, again);
    // Ramps carry their whole span; the family the path of its number.
    assert!(text.contains("family: Some((\n"), "{text}");
    assert!(text.contains("field: \"protocol[0].to_mv\""), "{text}");
    let values = ron::from_str::<Scenario>(&clamp_with(
        "(field: \"protocol[0].to_mv\", from: -100.0, to: 40.0, step: 10.0)",
        "(field: \"protocol[0].to_mv\", values: [-60.0, 0.0])",
    ))
    .expect("parses");
    assert!(problems(&values).is_empty(), "{:?}", problems(&values));
    assert_eq!(
        from_str(&to_ron_string(&values), "v.ron")
            .map(|v| v.into_inner())
            .ok(),
        Some(values)
    );
}

#[test]
fn a_command_in_current_clamp_is_refused_at_its_path() {
    let text = clamp_with(
        "        mode: VoltageClamp(holding_mv: -80.0, series_resistance_mohm: 5.0, compensation: 0.7),\n",
        "",
    );
    assert_problem(&text, "protocol[0]", &["Step", "voltage clamp"]);
    assert_problem(&text, "protocol[1]", &["Ramp", "voltage clamp"]);
}

#[test]
fn injected_current_in_voltage_clamp_is_refused_at_its_path() {
    let text = clamp_with(
        "Ramp(from_mv: -100.0, to_mv: 40.0, from_ms: 20.0, until_ms: 40.0)",
        "Inject(amplitude_ua_per_cm2: 1.0, from_ms: 1.0, until_ms: 2.0)",
    );
    assert_problem(&text, "protocol[1]", &["Inject", "voltage clamp"]);
}

#[test]
fn ramps_and_steps_that_end_before_they_start_are_refused() {
    let text = clamp_with("from_ms: 20.0, until_ms: 40.0", "from_ms: 20.0, until_ms: 10.0");
    assert_problem(&text, "protocol[1].until_ms", &["before it starts"]);
    let text = clamp_with("from_ms: 20.0, until_ms: 40.0", "from_ms: 20.0, until_ms: 20.0");
    assert_problem(&text, "protocol[1].until_ms", &["ramp", "20 ms"]);
    let text = clamp_with("until_ms: Some(15.0)", "until_ms: Some(1.0)");
    assert_problem(&text, "protocol[0].until_ms", &["before it starts"]);
    let text = clamp_with("to_mv: -20.0", "to_mv: inf");
    assert_problem(&text, "protocol[0].to_mv", &["finite"]);
    let text = clamp_with("from_mv: -100.0", "from_mv: -2000.0");
    assert_problem(&text, "protocol[1].from_mv", &["±1000 mV"]);
}

#[test]
fn bad_clamp_settings_are_refused_at_their_paths() {
    let text = clamp_with("holding_mv: -80.0", "holding_mv: 5000.0");
    assert_problem(&text, "run.mode.holding_mv", &["±1000 mV"]);
    let text = clamp_with("series_resistance_mohm: 5.0", "series_resistance_mohm: -1.0");
    assert_problem(&text, "run.mode.series_resistance_mohm", &["negative"]);
    let text = clamp_with("compensation: 0.7", "compensation: 1.0");
    assert_problem(&text, "run.mode.compensation", &["fraction", "0.99"]);
}

#[test]
fn families_of_no_runs_or_too_many_are_refused() {
    let text = clamp_with(
        "from: -100.0, to: 40.0, step: 10.0",
        "from: 0.0, to: 1e6, step: 0.01",
    );
    assert_problem(&text, "run.family", &["10000"]);
    let text = clamp_with(
        "(field: \"protocol[0].to_mv\", from: -100.0, to: 40.0, step: 10.0)",
        "(field: \"protocol[0].to_mv\", values: [])",
    );
    assert_problem(&text, "run.family", &["at least one"]);
    let text = clamp_with("step: 10.0", "step: 0.0");
    assert_problem(&text, "run.family.step", &["greater than 0"]);
    let text = clamp_with("field: \"protocol[0].to_mv\"", "field: \"protocol[5].to_mv\"");
    assert_problem(&text, "run.family.field", &["protocol[5].to_mv"]);
    let text = clamp_with("field: \"protocol[0].to_mv\"", "field: \"run.family.step\"");
    assert_problem(&text, "run.family.field", &["own"]);
    // The run-time check says the same for a family built in code.
    let s = from_str(CLAMP_FILE, "c.ron").expect("valid").into_inner();
    let field: Address = "protocol[0].to_mv".parse().expect("an address");
    let many = vec![0.0; 10_001];
    let e = run_family(
        &s,
        field,
        &many,
        &SolverSettings::default(),
        &ScanControl::default(),
    )
    .expect_err("refused");
    assert!(e.is_bad_input() && e.to_string().contains("10000"), "{e}");
    let e = run_family(
        &s,
        field,
        &[],
        &SolverSettings::default(),
        &ScanControl::default(),
    )
    .expect_err("refused");
    assert!(e.is_bad_input(), "{e}");
}

#[test]
fn a_family_value_that_breaks_the_scenario_is_named() {
    let s = from_str(CLAMP_FILE, "c.ron").expect("valid").into_inner();
    let field: Address = "run.mode.compensation".parse().expect("an address");
    let e = run_family(
        &s,
        field,
        &[0.1, 2.0],
        &SolverSettings::default(),
        &ScanControl::default(),
    )
    .expect_err("refused");
    let text = e.to_string();
    assert!(
        e.is_bad_input() && text.contains("run.mode.compensation = 2"),
        "{text}"
    );
}
