//! Cell volume (clamp-and-volume.md, "Cell volume") against the outside world: the
//! Boyle–van 't Hoff law after a bath step (instant water, and a finite osmotic permeability
//! against the closed form of its approach), the Donnan equilibrium of a cell with only K+ and
//! Cl- permeant (the quadratic solved here by hand), Tosteson & Hoffman's pump–leak results,
//! conservation of mass and charge, an independent ODE solver, a working-pump cell at rest, and
//! what a bad file gets.
//!
//! Every scenario written out here is invented for these tests.

mod common;
use common::{ode, reference, tight, valid};
use permeant::analysis::rest_report;
use permeant::engine::{Model, Run, SolverSettings};
use permeant::scenario::{AgentTarget, Event, Scenario, ScenarioError, from_str};

fn scenario(text: &str) -> Scenario {
    from_str(text, "test scenario")
        .unwrap_or_else(|e| panic!("{e}"))
        .into_inner()
}

fn run_to_end(s: &Scenario, settings: SolverSettings) -> Run {
    let mut r = Run::new(&valid(s), settings).expect("run starts");
    r.run_to_end().expect("run finishes");
    r
}

/// The relative volume and inside osmolarity of every sample of a run.
fn volume_and_osmolarity(r: &Run) -> (Vec<f64>, Vec<f64>) {
    let model = r.model();
    let tr = r.trace();
    let mut y = vec![0.0; model.dim()];
    let (mut w, mut osm) = (Vec::new(), Vec::new());
    for k in 0..tr.len() {
        tr.state(k, &mut y);
        w.push(model.volume_rel(&y));
        osm.push(model.osm_in_mosm(&y));
    }
    (w, osm)
}

/// Inside concentration of species `s` at every sample (its amount over the volume).
fn inside_mm(r: &Run, s: usize) -> Vec<f64> {
    let model = r.model();
    let tr = r.trace();
    let mut y = vec![0.0; model.dim()];
    let mut readout = model.readout();
    (0..tr.len())
        .map(|k| {
            tr.state(k, &mut y);
            model.read(tr.t_ms[k], &y, &mut readout);
            readout.conditions.inside_mm[s]
        })
        .collect()
}

// ---------------------------------------------------------------------------------------------
// Boyle–van 't Hoff
// ---------------------------------------------------------------------------------------------

/// A cell whose only inside solute is impermeant (300 mM of X; K+ is permeant but absent on
/// both sides, so no ion moves and V stays where it starts). The bath holds 150 mM of an
/// impermeant cation and 150 mM of an impermeant anion until `at_ms`, then `after_mm` of each.
fn impermeant_cell(water: &str, after_mm: f64, duration_ms: f64, sample_ms: f64) -> Scenario {
    scenario(&format!(
        r#"(
    format: 1,
    cell: (diameter_um: 20.0, volume: Tracked(water: {water}, impermeant: Some((inside_mm: 300.0, charge: 0.0)))),
    species: [
        (name: "K+", charge: 1, inside_mm: 0.0, outside_mm: 0.0, permeability_cm_per_s: 1.0e-7),
        (name: "NMDG+", charge: 1, inside_mm: 0.0, outside_mm: 150.0, permeability_cm_per_s: 0.0),
        (name: "gluconate-", charge: -1, inside_mm: 0.0, outside_mm: 150.0, permeability_cm_per_s: 0.0),
    ],
    protocol: [
        BathChange(species: "NMDG+", outside_mm: {after_mm:?}, at_ms: 10.0),
        BathChange(species: "gluconate-", outside_mm: {after_mm:?}, at_ms: 10.0),
    ],
    run: (duration_ms: {duration_ms:?}, sample_ms: {sample_ms:?}, start: Voltage(-60.0)),
)"#
    ))
}

#[test]
fn instant_water_follows_the_boyle_van_t_hoff_law() {
    // Boyle–van 't Hoff: a cell whose solutes are all impermeant keeps osm·W constant, so a
    // bath step from osm_out,0 to osm_out,1 takes it to W = osm_out,0/osm_out,1 (van 't Hoff's
    // ideal osmotic pressure; Lucké & McCutcheon 1932, Physiol. Rev. 12:68, from memory).
    for after_mm in [100.0, 200.0, 75.0] {
        let s = impermeant_cell("Instant", after_mm, 20.0, 1.0);
        let r = run_to_end(&s, SolverSettings::default());
        let (w, osm) = volume_and_osmolarity(&r);
        let expected = 300.0 / (2.0 * after_mm);
        assert!((w[0] - 1.0).abs() < 1e-14, "W(0) = {}", w[0]);
        for k in 0..w.len() {
            let t = r.trace().t_ms[k];
            let want = if t < 10.0 { 1.0 } else { expected };
            assert!(
                (w[k] - want).abs() < 1e-12 * want,
                "bath {after_mm} mM: W({t} ms) = {}, Boyle–van 't Hoff {want}",
                w[k]
            );
            // Instant water: the inside is iso-osmotic with the bath at every instant.
            let bath = if t < 10.0 { 300.0 } else { 2.0 * after_mm };
            assert!(
                (osm[k] - bath).abs() < 1e-10 * bath,
                "osm_in {} at {t} ms",
                osm[k]
            );
        }
    }
}

#[test]
fn finite_water_permeability_approaches_boyle_van_t_hoff_with_the_linearised_time_constant() {
    // dW/dt = (A/Vol₀)·P_f·v_w·(N/W − O) (clamp-and-volume.md), with N the inside osmoles per
    // starting volume and O the bath's osmolarity. Its equilibrium is W* = N/O (Boyle–van 't
    // Hoff), and linearised about W* it decays as e^(−t/τ) with
    //     τ = W* / (k·O),  k = (A/Vol₀)·P_f·v_w,
    // (the derivative of N/W at W* is −O/W*). The equation also integrates exactly:
    //     k·O·t = (W₀ − W) + W*·ln((W* − W₀)/(W* − W)),
    // which the whole trace is held to. Constants written here from their definitions:
    // A/Vol₀ = 6/d for a sphere, v_w = 18 cm³/mol, osmolarity in mol/cm³ (1 mOsm = 1e-6).
    let pf_um_per_s = 50.0;
    let s = impermeant_cell(
        &format!("Permeability(pf_um_per_s: {pf_um_per_s:?})"),
        125.0,
        200_000.0,
        100.0,
    );
    let d_cm = 20e-4;
    let k_per_ms_per_mosm = (6.0 / d_cm) * (pf_um_per_s * 1e-4) * 18.0 * 1e-6 * 1e-3;
    let (n, o) = (300.0, 250.0);
    let w_star = n / o;
    let tau_ms = w_star / (k_per_ms_per_mosm * o);
    println!("W* {w_star}, linearised τ {} s", tau_ms / 1e3);
    assert!(
        tau_ms > 5e3 && tau_ms < 50e3,
        "τ = {tau_ms} ms is no sensible test case"
    );

    let r = run_to_end(&s, tight());
    let (w, _) = volume_and_osmolarity(&r);
    let t = &r.trace().t_ms;
    // The exact solution, read as t(W), at every sample after the step.
    for k in 0..w.len() {
        if t[k] <= 10.0 {
            assert!((w[k] - 1.0).abs() < 1e-12);
            continue;
        }
        if w_star - w[k] < 1e-6 {
            break;
        }
        let rate = k_per_ms_per_mosm * o;
        let t_exact = 10.0 + ((1.0 - w[k]) + w_star * ((w_star - 1.0) / (w_star - w[k])).ln()) / rate;
        // A time error converted to the volume error it stands for, through dW/dt there.
        let w_error = (t_exact - t[k]) * rate * (w_star - w[k]) / w[k];
        assert!(
            w_error.abs() < 1e-8,
            "W = {} at {} ms; the closed form puts it at {t_exact} ms",
            w[k],
            t[k]
        );
    }
    // Late in the approach the decay rate is the linearised one.
    let at = |t_ms: f64| w[(t_ms / 100.0).round() as usize];
    let (t1, t2) = (6.0 * tau_ms, 8.0 * tau_ms);
    let seen_tau = (t2 - t1) / ((w_star - at(t1)) / (w_star - at(t2))).ln();
    println!("τ seen late {} s", seen_tau / 1e3);
    assert!(
        (seen_tau / tau_ms - 1.0).abs() < 2e-3,
        "late τ {seen_tau} ms, linearised {tau_ms} ms"
    );
    assert!(
        (w[w.len() - 1] - w_star).abs() < 1e-5,
        "final W {}",
        w[w.len() - 1]
    );
}

// ---------------------------------------------------------------------------------------------
// Neutral solutes of a bath solution
// ---------------------------------------------------------------------------------------------

/// Ideal osmolarity of the two baths below, mOsm (solutions.md: the sum of all particles):
/// 115 NaCl + 5 KCl + 30 NaHCO3 give 145 Na+, 5 K+, 120 Cl- and 30 HCO3-; the second adds
/// 100 mM of sucrose, one neutral particle each.
const SALINE_MOSM: f64 = 145.0 + 5.0 + 120.0 + 30.0;
const SUCROSE_SALINE_MOSM: f64 = SALINE_MOSM + 100.0;

/// A cell whose ions cannot cross (K+, Na+ and Cl- have no permeability, no pump; Li+ may
/// cross but is on neither side), so only water moves, in a bath of solutions: saline, then
/// `events` (bath exchanges). The inside holds 140 K+, 12 Na+, 10 Cl- and the impermeant
/// solute derived to match the bath at t = 0.
fn sucrose_cell(water: &str, events: &str, duration_ms: f64, sample_ms: f64) -> Scenario {
    scenario(&format!(
        r#"(
    format: 1,
    cell: (diameter_um: 20.0, volume: Tracked(water: {water})),
    solutions: [
        (name: "saline", parts: [("NaCl", 115.0), ("KCl", 5.0), ("NaHCO3", 30.0)]),
        (name: "sucrose saline", parts: [("NaCl", 115.0), ("KCl", 5.0), ("NaHCO3", 30.0), ("sucrose", 100.0)]),
    ],
    outside: Some("saline"),
    species: [
        (name: "K+", charge: 1, inside_mm: 140.0, permeability_cm_per_s: 0.0),
        (name: "Na+", charge: 1, inside_mm: 12.0, permeability_cm_per_s: 0.0),
        (name: "Cl-", charge: -1, inside_mm: 10.0, permeability_cm_per_s: 0.0),
        (name: "Li+", charge: 1, inside_mm: 0.0, permeability_cm_per_s: 1.0e-7),
    ],
    protocol: [{events}],
    run: (duration_ms: {duration_ms:?}, sample_ms: {sample_ms:?}, start: Voltage(-60.0)),
)"#
    ))
}

/// The bath's osmolarity at every sample, as the model's water sees it.
fn bath_osmolarity(r: &Run) -> Vec<f64> {
    let model = r.model();
    let tr = r.trace();
    let mut y = vec![0.0; model.dim()];
    (0..tr.len())
        .map(|k| {
            tr.state(k, &mut y);
            model.osm_out_mosm(&y)
        })
        .collect()
}

#[test]
fn sucrose_in_a_bath_solution_shrinks_the_cell_by_boyle_van_t_hoff_and_washout_restores_it() {
    // Boyle–van 't Hoff (Lucké & McCutcheon 1932, Physiol. Rev. 12:68, from memory): with no
    // solute crossing, osm·W stays constant, so W = osm_out,0/osm_out,1 in the sucrose bath and
    // 1 again after washout. The sucrose is no species: before, it did not reach the water.
    let s = sucrose_cell(
        "Instant",
        r#"BathExchange(solution: "sucrose saline", at_ms: 10.0),
           BathExchange(solution: "saline", at_ms: 20.0)"#,
        30.0,
        1.0,
    );
    let r = run_to_end(&s, SolverSettings::default());
    let (w, osm_in) = volume_and_osmolarity(&r);
    let osm_out = bath_osmolarity(&r);
    let shrunk = SALINE_MOSM / SUCROSE_SALINE_MOSM;
    println!("W in sucrose {} (Boyle–van 't Hoff {shrunk})", w[15]);
    for (k, &t) in r.trace().t_ms.iter().enumerate() {
        let (want_w, bath) = if (10.0..20.0).contains(&t) {
            (shrunk, SUCROSE_SALINE_MOSM)
        } else {
            (1.0, SALINE_MOSM)
        };
        assert!(
            (w[k] - want_w).abs() < 1e-12,
            "W({t} ms) = {}, Boyle–van 't Hoff {want_w}",
            w[k]
        );
        assert!(
            (osm_out[k] - bath).abs() < 1e-9 * bath,
            "bath {} at {t} ms",
            osm_out[k]
        );
        assert!(
            (osm_in[k] - bath).abs() < 1e-9 * bath,
            "inside {} at {t} ms",
            osm_in[k]
        );
    }
    // The derived solute makes up what the bath's osmolarity, sucrose-free, has beyond the
    // listed ions: 300 − 162 mM.
    let x = rest_report(&valid(&s)).unwrap().impermeant.expect("derived");
    assert!((x.inside_mm - (SALINE_MOSM - 162.0)).abs() < 1e-9, "{x:?}");
}

#[test]
fn a_sucrose_bath_in_force_at_the_start_sets_the_derived_solute() {
    // An exchange at 0 ms is the bath at t = 0: the cell is made iso-osmotic with the sucrose
    // saline (400 mOsm), so it does not move; its later return to saline swells it to
    // 400/300 (Boyle–van 't Hoff).
    let s = sucrose_cell(
        "Instant",
        r#"BathExchange(solution: "sucrose saline", at_ms: 0.0),
           BathExchange(solution: "saline", at_ms: 10.0)"#,
        20.0,
        1.0,
    );
    let x = rest_report(&valid(&s)).unwrap().impermeant.expect("derived");
    assert!(
        (x.inside_mm - (SUCROSE_SALINE_MOSM - 162.0)).abs() < 1e-9,
        "{x:?}"
    );
    let r = run_to_end(&s, SolverSettings::default());
    let (w, _) = volume_and_osmolarity(&r);
    assert!(
        (w[0] - 1.0).abs() < 1e-14 && (w[9] - 1.0).abs() < 1e-14,
        "{} {}",
        w[0],
        w[9]
    );
    let swollen = SUCROSE_SALINE_MOSM / SALINE_MOSM;
    assert!((w[w.len() - 1] - swollen).abs() < 1e-12, "W {}", w[w.len() - 1]);
}

#[test]
fn the_sucrose_follows_the_exchange_lag_and_instant_water_follows_it() {
    // model.md's lagged input: after an exchange at t₀ with lag τ every bath value moves as
    // c(t) = c₁ + (c₀ − c₁)·e^(−(t − t₀)/τ); the sucrose moves with the ions, so the bath's
    // osmolarity is O(t) = O₁ + (O₀ − O₁)·e^(−(t − t₀)/τ), and with instant water and no solute
    // crossing, W(t) = N/O(t) (Boyle–van 't Hoff at each instant), N = O₀ the inside osmoles.
    let (t0, tau) = (100.0, 250.0);
    let s = sucrose_cell(
        "Instant",
        &format!(r#"BathExchange(solution: "sucrose saline", at_ms: {t0:?}, lag_ms: {tau:?})"#),
        2000.0,
        5.0,
    );
    let r = run_to_end(&s, tight());
    let (w, _) = volume_and_osmolarity(&r);
    let osm_out = bath_osmolarity(&r);
    let (o0, o1) = (SALINE_MOSM, SUCROSE_SALINE_MOSM);
    for (k, &t) in r.trace().t_ms.iter().enumerate() {
        let o = if t < t0 {
            o0
        } else {
            o1 + (o0 - o1) * (-(t - t0) / tau).exp()
        };
        assert!(
            (osm_out[k] - o).abs() < 1e-6,
            "bath {} vs {o} at {t} ms",
            osm_out[k]
        );
        assert!((w[k] - o0 / o).abs() < 1e-8, "W {} vs {} at {t} ms", w[k], o0 / o);
    }
}

#[test]
fn with_finite_water_permeability_a_sucrose_bath_shrinks_the_cell_at_the_closed_form_rate() {
    // dW/dt = k·(N/W − O), k = (A/Vol₀)·P_f·v_w (clamp-and-volume.md), after a step of the bath
    // from O₀ = N to O: W* = N/O, and exactly
    //     k·O·(t − t₀) = (W₀ − W) + W*·ln((W* − W₀)/(W* − W)),
    // which linearised about W* is an exponential approach with τ = W*/(k·O). A/Vol₀ = 6/d
    // for a sphere, v_w = 18 cm³/mol, 1 mOsm = 1e-6 mol/cm³ (written here from definitions).
    let pf_um_per_s = 40.0;
    let s = sucrose_cell(
        &format!("Permeability(pf_um_per_s: {pf_um_per_s:?})"),
        r#"BathExchange(solution: "sucrose saline", at_ms: 10.0)"#,
        200_000.0,
        100.0,
    );
    let d_cm = 20e-4;
    let k = (6.0 / d_cm) * (pf_um_per_s * 1e-4) * 18.0 * 1e-6 * 1e-3;
    let (n, o) = (SALINE_MOSM, SUCROSE_SALINE_MOSM);
    let w_star = n / o;
    let tau_ms = w_star / (k * o);
    println!("W* {w_star}, linearised τ {} s", tau_ms / 1e3);
    let r = run_to_end(&s, tight());
    let (w, _) = volume_and_osmolarity(&r);
    let t = &r.trace().t_ms;
    let rate = k * o;
    for j in 0..w.len() {
        if t[j] <= 10.0 {
            assert!((w[j] - 1.0).abs() < 1e-12);
            continue;
        }
        if w[j] - w_star < 1e-6 {
            break;
        }
        let t_exact = 10.0 + ((1.0 - w[j]) + w_star * ((w_star - 1.0) / (w_star - w[j])).ln()) / rate;
        let w_error = (t_exact - t[j]) * rate * (w[j] - w_star) / w[j];
        assert!(
            w_error.abs() < 1e-8,
            "W = {} at {} ms; the closed form puts it at {t_exact} ms",
            w[j],
            t[j]
        );
    }
    // Read at the samples nearest 6τ and 8τ, over the time between those samples.
    let (i1, i2) = (
        t.partition_point(|x| *x < 6.0 * tau_ms),
        t.partition_point(|x| *x < 8.0 * tau_ms),
    );
    let seen_tau = (t[i2] - t[i1]) / ((w[i1] - w_star) / (w[i2] - w_star)).ln();
    println!("τ seen late {} s", seen_tau / 1e3);
    assert!(
        (seen_tau / tau_ms - 1.0).abs() < 2e-3,
        "late τ {seen_tau} ms, linearised {tau_ms} ms"
    );
}

// ---------------------------------------------------------------------------------------------
// Donnan equilibrium
// ---------------------------------------------------------------------------------------------

/// A small cell with K+ and Cl- permeant, no pump, Na+ present only outside and impermeant, and
/// the impermeant inside solute derived.
const DONNAN: &str = r#"(
    format: 1,
    temperature_c: 37.0,
    cell: (diameter_um: 5.0, volume: Tracked(water: Instant)),
    species: [
        (name: "K+", charge: 1, inside_mm: 140.0, outside_mm: 5.0, permeability_cm_per_s: 1.0e-5),
        (name: "Na+", charge: 1, inside_mm: 0.0, outside_mm: 145.0, permeability_cm_per_s: 0.0),
        (name: "Cl-", charge: -1, inside_mm: 10.0, outside_mm: 150.0, permeability_cm_per_s: 1.0e-5),
    ],
    run: (duration_ms: 300000.0, sample_ms: 1000.0),
)"#;

#[test]
fn a_cell_with_only_k_and_cl_permeant_settles_at_the_donnan_equilibrium() {
    // Donnan (1911): with only K+ and Cl- permeant, equilibrium needs V = E_K = E_Cl, so
    // [K]i[Cl]i = [K]o[Cl]o; with the inside electroneutral and iso-osmotic with the bath:
    //   K − Cl = q/W,  K + Cl = O − X/W,  K·Cl = Ko·Clo,
    // with q the fixed negative charge and X the impermeant osmoles per starting volume. With
    // u = 1/W: (O − X u)² − (q u)² = 4·Ko·Clo, the quadratic
    //   (X² − q²) u² − 2 O X u + (O² − 4 Ko Clo) = 0,
    // whose root with K + Cl > 0 is the smaller one. X and q follow from the file by the
    // definitions (X = Σc_out − Σc_in; q = Σ z c_in = 140 − 10).
    // The membrane capacitor holds the one departure from electroneutrality: the inside
    // charge changes by C·A·ΔV/F, i.e. q grows by δ = C·(6/d)·ΔV/F (in mM of the starting
    // volume) as V moves from its start (the GHK potential, both ions equally permeant) to E.
    // δ depends on the E it helps find, so the quadratic is solved three times.
    let s = scenario(DONNAN);
    let (ko, clo, o): (f64, f64, f64) = (5.0, 150.0, 300.0);
    let x = o - (140.0 + 0.0 + 10.0);
    let v0 = reference::zero_current_mv(&common::reference_ions(&s), 37.0);
    let (mut w_eq, mut k_eq, mut cl_eq, mut e_k) = (1.0, 0.0, 0.0, v0);
    for _ in 0..3 {
        let delta = 1.0 * (6.0 / 5e-4) * (e_k - v0) * 1e-3 / reference::F_C_PER_MOL;
        let q = 140.0 - 10.0 + delta;
        let (a, b, c) = (x * x - q * q, -2.0 * o * x, o * o - 4.0 * ko * clo);
        let u = (-b - (b * b - 4.0 * a * c).sqrt()) / (2.0 * a);
        w_eq = 1.0 / u;
        k_eq = 0.5 * ((o - x * u) + q * u);
        cl_eq = 0.5 * ((o - x * u) - q * u);
        e_k = reference::nernst_mv(1, k_eq, ko, 37.0);
    }
    assert!(k_eq > 0.0 && cl_eq > 0.0);
    println!("Donnan: W {w_eq}, K {k_eq} mM, Cl {cl_eq} mM, E {e_k} mV");

    let report = rest_report(&valid(&s)).unwrap();
    let xs = report.impermeant.expect("the impermeant is derived");
    assert!((xs.inside_mm - x).abs() < 1e-12 && (xs.charge * xs.inside_mm + (140.0 - 10.0)).abs() < 1e-12);

    let r = run_to_end(&s, SolverSettings::default());
    let (w, osm) = volume_and_osmolarity(&r);
    let last = w.len() - 1;
    let (k_in, cl_in) = (inside_mm(&r, 0)[last], inside_mm(&r, 2)[last]);
    let v = r.trace().v_mv()[last];
    println!("model: W {}, K {k_in}, Cl {cl_in}, V {v}", w[last]);
    assert!((w[last] - w_eq).abs() < 1e-6, "W {} vs Donnan {w_eq}", w[last]);
    assert!((k_in - k_eq).abs() < 1e-4 && (cl_in - cl_eq).abs() < 1e-4);
    assert!((k_in * cl_in / (ko * clo) - 1.0).abs() < 1e-5);
    // model.md's accuracy, 0.01 mV, for V against both Nernst potentials.
    assert!((v - e_k).abs() < 0.01, "V {v} mV vs E_K = E_Cl = {e_k} mV");
    assert!((v - reference::nernst_mv(-1, cl_in, clo, 37.0)).abs() < 0.01);
    assert!((osm[last] - o).abs() < 1e-9 * o);
}

// ---------------------------------------------------------------------------------------------
// The pump–leak balance
// ---------------------------------------------------------------------------------------------

/// A cell of 10 µm with Na+, K+ and Cl- permeant and a 3:2 pump of maximum current `pump`;
/// a blocker of the pump at `block` from t = 0 when given.
fn pump_leak(pump: f64, block: Option<f64>, duration_ms: f64, water: &str) -> Scenario {
    let agent = block.map_or(String::new(), |b| {
        format!(r#"Agent(label: "stop", target: Pump, max_block: {b:?}, ic50_um: 1.0, dose_um: 1.0e6, from_ms: 0.0)"#)
    });
    pump_leak_with(pump, &agent, duration_ms, water)
}

/// The cell of [`pump_leak`] with the protocol `protocol`.
fn pump_leak_with(pump: f64, protocol: &str, duration_ms: f64, water: &str) -> Scenario {
    // 10 s samples, or the run's two ends when it is shorter (a longer interval is refused).
    let sample_ms = duration_ms.min(10000.0);
    scenario(&format!(
        r#"(
    format: 1,
    temperature_c: 37.0,
    cell: (diameter_um: 10.0, volume: Tracked(water: {water})),
    species: [
        (name: "K+", charge: 1, inside_mm: 140.0, outside_mm: 5.0, permeability_cm_per_s: 5.0e-7),
        (name: "Na+", charge: 1, inside_mm: 12.0, outside_mm: 145.0, permeability_cm_per_s: 2.0e-8),
        (name: "Cl-", charge: -1, inside_mm: 7.0, outside_mm: 120.0, permeability_cm_per_s: 1.0e-7),
    ],
    pump: Some((exports: "Na+", imports: "K+", exported_per_cycle: 3, imported_per_cycle: 2,
        max_current_ua_per_cm2: {pump:?}, half_saturation_inside_mm: 10.0, hill_inside: 1.0,
        half_saturation_outside_mm: 1.5, hill_outside: 1.0)),
    protocol: [{protocol}],
    run: (duration_ms: {duration_ms:?}, sample_ms: {sample_ms:?}),
)"#
    ))
}

#[test]
fn without_the_pump_the_cell_swells_without_a_steady_state_and_a_faster_pump_keeps_it_smaller() {
    // Tosteson & Hoffman 1960 (J. Gen. Physiol. 44:169), qualitatively: with Na+ permeant and
    // the pump stopped, Na+ and Cl- leak in and water follows, so the volume rises with no
    // steady state; with the pump working the cell reaches a steady volume, the smaller the
    // larger the pump rate.
    let stopped = run_to_end(
        &pump_leak(0.6, Some(1.0), 3.0e6, "Instant"),
        SolverSettings::default(),
    );
    let (w, _) = volume_and_osmolarity(&stopped);
    let n = w.len();
    println!(
        "pump stopped: W at 1/4, 1/2, 3/4, end {} {} {} {}",
        w[n / 4],
        w[n / 2],
        w[3 * n / 4],
        w[n - 1]
    );
    assert!(
        w.windows(2).skip(1).all(|p| p[1] > p[0]),
        "the volume rises throughout"
    );
    // Each quarter swells more than the one before: no approach to a steady state.
    let quarters = [
        w[n / 4] - w[0],
        w[n / 2] - w[n / 4],
        w[3 * n / 4] - w[n / 2],
        w[n - 1] - w[3 * n / 4],
    ];
    assert!(
        quarters.windows(2).all(|q| q[1] > q[0]),
        "swelling per quarter {quarters:?}"
    );
    assert!(w[n - 1] > 1.1);

    let mut steady = Vec::new();
    for pump in [0.4, 0.6, 1.2] {
        let r = run_to_end(
            &pump_leak(pump, None, 3.0e7, "Instant"),
            SolverSettings::default(),
        );
        let (w, _) = volume_and_osmolarity(&r);
        let n = w.len();
        println!(
            "pump {pump}: W end {}, change over the last tenth {}",
            w[n - 1],
            w[n - 1] - w[9 * n / 10]
        );
        assert!(
            (w[n - 1] - w[9 * n / 10]).abs() < 1e-4,
            "pump {pump}: steady at the end"
        );
        steady.push(w[n - 1]);
    }
    assert!(
        steady[0] > steady[1] && steady[1] > steady[2],
        "steady volumes {steady:?}"
    );
}

#[test]
fn amounts_move_by_exactly_the_current_each_species_carries_and_charge_stays_on_the_capacitor() {
    // The bath is infinite, so the inside amount of species s changes only by what crosses:
    // Δn_s = −(A/(z_s F))·∫I_s dt (its GHK current plus its share of the pump flux; model.md).
    // Summed with charges, F·Σ z Δn = −A·∫I_total dt = A·C·ΔV with no injection: the change of
    // inside charge sits on the membrane capacitor (conservation of charge; common practice).
    // The last identity is linear in the state, which Runge–Kutta and Rosenbrock steps keep to
    // rounding (Hairer, Nørsett & Wanner, Solving ODEs I, §II.1 on linear invariants, from memory).
    let s = pump_leak(0.6, Some(0.8), 600_000.0, "Permeability(pf_um_per_s: 20.0)");
    let r = run_to_end(&s, tight());
    let model = r.model();
    let tr = r.trace();
    let co = model.conc_offset();
    let mut y0 = vec![0.0; model.dim()];
    let mut y1 = y0.clone();
    tr.state(0, &mut y0);
    tr.state(tr.len() - 1, &mut y1);
    // Amounts are per starting volume: mM·Vol₀. Vol₀/A = d/6; F in C/mol; C in µF/cm², V in mV
    // → nC/cm² on both sides (mM·cm = 1e-6 mol/cm²·… written out: mM·cm·C/mol·1e3 = nC/cm²).
    let vol_per_area_cm = 10e-4 / 6.0;
    let charge_nc = |y: &[f64]| -> f64 {
        s.species
            .iter()
            .enumerate()
            .map(|(i, sp)| f64::from(sp.charge) * y[co + i])
            .sum::<f64>()
            * vol_per_area_cm
            * reference::F_C_PER_MOL
            * 1e3
    };
    let inside = charge_nc(&y1) - charge_nc(&y0);
    let capacitor = s.cell.capacitance_uf_per_cm2 * (y1[0] - y0[0]);
    println!("Δ inside charge {inside} nC/cm², C·ΔV {capacitor} nC/cm²");
    assert!(capacitor.abs() > 1.0, "the block should move V measurably");
    assert!(
        (inside - capacitor).abs() < 1e-9 * (charge_nc(&y0).abs()),
        "Δ inside charge {inside} vs C·ΔV {capacitor} nC/cm²"
    );

    // Each species against its own integrated current, sampled every 10 s: the trapezoid rule
    // errs by at most (T·h²/12)·max|I''| (common practice), bounded from the samples.
    let h = s.run.sample_ms;
    let n = tr.len();
    let currents = common::species_currents(&r);
    for (sp, i) in currents.iter().enumerate() {
        let z = f64::from(s.species[sp].charge);
        let lhs = (y1[co + sp] - y0[co + sp]) * z * vol_per_area_cm * reference::F_C_PER_MOL * 1e3;
        let integral = h * (i.iter().sum::<f64>() - 0.5 * (i[0] + i[n - 1]));
        let second = i
            .windows(3)
            .map(|w| (w[2] - 2.0 * w[1] + w[0]).abs() / (h * h))
            .fold(0.0, f64::max);
        let bound = (n - 1) as f64 * h * h * h / 12.0 * second + 1e-7 * integral.abs();
        println!(
            "{}: z·F·Δn·Vol₀/A {lhs}, −∫I dt {}, bound {bound}",
            s.species[sp].name, -integral
        );
        assert!((lhs + integral).abs() <= bound, "{}", s.species[sp].name);
    }
}

#[test]
fn a_tracked_volume_run_agrees_with_an_independent_solver() {
    // ode_solvers' DOP853 at 1e-11 on the same derivative: V to model.md's 0.01 mV and the
    // relative volume to 1e-6, at default settings, through a pump block and its washout.
    let s = pump_leak_with(
        0.6,
        r#"Agent(label: "stop", target: Pump, ic50_um: 1.0, dose_um: 100.0, from_ms: 60000.0,
                 until_ms: Some(300000.0), onset_ms: 5000.0, washout_ms: 20000.0)"#,
        600_000.0,
        "Permeability(pf_um_per_s: 5.0)",
    );
    let r = run_to_end(&s, SolverSettings::default());
    let model = Model::new(&valid(&s));
    let times = &r.trace().t_ms;
    let reference = ode::reference_states(&model, times, 1e-11);
    let (w, _) = volume_and_osmolarity(&r);
    let (mut worst_v, mut worst_w) = (0.0f64, 0.0f64);
    for (k, y) in reference.iter().enumerate() {
        worst_v = worst_v.max((r.trace().v_mv()[k] - y[0]).abs());
        worst_w = worst_w.max((w[k] - model.volume_rel(y)).abs());
    }
    println!(
        "worst |ΔV| {worst_v} mV, worst |ΔW| {worst_w}; W range {:?}",
        (w[0], w[w.len() / 2])
    );
    assert!(w[w.len() / 2] > 1.002, "the block should swell the cell");
    assert!(worst_v < 0.01, "V differs by {worst_v} mV");
    assert!(worst_w < 1e-6, "W differs by {worst_w}");
}

#[test]
fn a_cell_at_its_pump_leak_balance_stays_flat_at_rest() {
    // The balance computed here from the published equations (GHK currents, Goldman 1943 /
    // Hodgkin & Katz 1949; the pump of model.md): Cl- in equilibrium (V = E_Cl), and K+ and Na+
    // each carried back by the 3:2 pump, I_Na = −3·I_p and I_K = 2·I_p. With the impermeant
    // derived the cell then starts electroneutral and iso-osmotic, and nothing should move.
    let t = 37.0;
    let v = -75.0;
    let (ko, ki, nao, nai, clo) = (5.0, 140.0, 145.0, 12.0, 120.0);
    let cli = clo * (v / reference::rt_over_f_mv(t)).exp();
    let p_k = 5.0e-7;
    let i_k = reference::ghk_current_ua_per_cm2(p_k, 1, ki, ko, v, t).0;
    let p_na = -1.5 * i_k / reference::ghk_current_ua_per_cm2(1.0, 1, nai, nao, v, t).0;
    let i_pump = i_k / 2.0;
    let i_max = i_pump / ((nai / (nai + 10.0)) * (ko / (ko + 1.5)));
    let mut s = pump_leak(i_max, None, 600_000.0, "Permeability(pf_um_per_s: 20.0)");
    s.species[0].permeability_cm_per_s = p_k;
    s.species[1].permeability_cm_per_s = p_na;
    s.species[2].inside_mm = cli;
    s.run.sample_ms = 1000.0;
    let r = run_to_end(&s, SolverSettings::default());
    let (w, _) = volume_and_osmolarity(&r);
    let vs = r.trace().v_mv();
    let worst_v = vs.iter().map(|x| (x - v).abs()).fold(0.0, f64::max);
    let worst_w = w.iter().map(|x| (x - 1.0).abs()).fold(0.0, f64::max);
    println!("over 10 min: worst |V − E_Cl| {worst_v} mV, worst |W − 1| {worst_w}");
    assert!(worst_v < 1e-6, "V moved {worst_v} mV");
    assert!(worst_w < 1e-9, "W moved {worst_w}");
}

// ---------------------------------------------------------------------------------------------
// Bad files
// ---------------------------------------------------------------------------------------------

/// The problems of a file as `(path, message)`.
fn problems(text: &str) -> Vec<(String, String)> {
    match from_str(text, "bad.ron") {
        Ok(_) => vec![],
        Err(ScenarioError::Invalid { problems, .. }) => problems
            .iter()
            .map(|p| (p.path.clone(), p.message.clone()))
            .collect(),
        Err(e) => vec![("(syntax)".into(), e.to_string())],
    }
}

fn assert_refused(text: &str, path: &str, words: &[&str]) {
    let found = problems(text);
    let hit = found
        .iter()
        .find(|(p, _)| p == path)
        .unwrap_or_else(|| panic!("no problem at {path}: {found:?}"));
    for w in words {
        assert!(hit.1.contains(w), "{path}: \"{}\" lacks \"{w}\"", hit.1);
    }
}

#[test]
fn bad_volumes_are_refused_at_their_field_paths() {
    let base = pump_leak(0.6, None, 1000.0, "Instant");
    assert!(problems(&permeant::scenario::to_ron_string(&base)).is_empty());
    let text = permeant::scenario::to_ron_string(&base);
    // Inside already above the bath: no positive impermeant can make it iso-osmotic.
    let crowded = text.replace("inside_mm: 140.0", "inside_mm: 400.0");
    assert_refused(&crowded, "cell.volume", &["iso-osmotic", "mOsm"]);
    // A negative or non-finite water permeability or impermeant.
    let perm = text.replace("water: Instant", "water: Permeability(pf_um_per_s: -1.0)");
    assert_refused(&perm, "cell.volume.water.pf_um_per_s", &["greater than 0"]);
    let given = |x: &str, z: &str| {
        text.replace(
            "water: Instant",
            &format!("water: Instant, impermeant: Some((inside_mm: {x}, charge: {z}))"),
        )
    };
    assert_refused(
        &given("-5.0", "-1.0"),
        "cell.volume.impermeant.inside_mm",
        &["negative"],
    );
    assert_refused(
        &given("100.0", "inf"),
        "cell.volume.impermeant.charge",
        &["finite"],
    );
    // Instant water needs an iso-osmotic start: 270 out, 159 + 100 in.
    assert_refused(
        &given("100.0", "-1.0"),
        "cell.volume.impermeant.inside_mm",
        &["iso-osmotic", "111"],
    );
    assert!(
        problems(&given("111.0", "-1.0")).is_empty(),
        "{:?}",
        problems(&given("111.0", "-1.0"))
    );
    // Unknown names inside the new parts say where.
    let typo = text.replace("water: Instant", "water: Instnat");
    assert!(!problems(&typo).is_empty());
    for (bad, why) in [("0.0", "greater than 0"), ("inf", "finite"), ("NaN", "finite")] {
        let perm = text.replace(
            "water: Instant",
            &format!("water: Permeability(pf_um_per_s: {bad})"),
        );
        assert_refused(&perm, "cell.volume.water.pf_um_per_s", &[why]);
    }
}

#[test]
fn the_bath_solution_s_neutral_solutes_count_for_the_derived_solute() {
    // 50 mM NaCl is a 100 mOsm bath (solutions.md: ideal osmolarity), below the 162 mM of ions
    // inside: no positive impermeant solute can make the cell iso-osmotic. With 100 mM of
    // sucrose the bath is 200 mOsm, and 38 mM of solute is derived.
    let cell = |parts: &str| {
        format!(
            r#"(
    format: 1,
    cell: (volume: Tracked(water: Instant)),
    solutions: [(name: "bath", parts: [{parts}])],
    outside: Some("bath"),
    species: [
        (name: "K+", charge: 1, inside_mm: 140.0, permeability_cm_per_s: 1.0e-7),
        (name: "Na+", charge: 1, inside_mm: 12.0, permeability_cm_per_s: 1.0e-8),
        (name: "Cl-", charge: -1, inside_mm: 10.0, permeability_cm_per_s: 0.0),
    ],
    run: (duration_ms: 10.0, sample_ms: 1.0),
)"#
        )
    };
    assert_refused(
        &cell(r#"("NaCl", 50.0)"#),
        "cell.volume",
        &["iso-osmotic", "162 mOsm", "100 mOsm"],
    );
    let with_sucrose = cell(r#"("NaCl", 50.0), ("sucrose", 100.0)"#);
    assert!(
        problems(&with_sucrose).is_empty(),
        "{:?}",
        problems(&with_sucrose)
    );
    let x = rest_report(&valid(&scenario(&with_sucrose)))
        .unwrap()
        .impermeant
        .expect("derived");
    assert!((x.inside_mm - 38.0).abs() < 1e-9, "{x:?}");
    // Given, with instant water, it must match the bath with its sucrose.
    let given = with_sucrose.replace(
        "water: Instant",
        "water: Instant, impermeant: Some((inside_mm: 20.0, charge: -1.0))",
    );
    assert_refused(
        &given,
        "cell.volume.impermeant.inside_mm",
        &["iso-osmotic", "200 mOsm", "give 38 mM"],
    );
}

#[test]
fn agents_on_the_pump_are_checked() {
    let s = pump_leak(0.6, Some(0.5), 1000.0, "Instant");
    let text = |s: &Scenario| permeant::scenario::to_ron_string(s);
    assert!(problems(&text(&s)).is_empty(), "{:?}", problems(&text(&s)));
    let edit = |f: &dyn Fn(&mut String, &mut AgentTarget)| {
        let mut t = s.clone();
        if let Event::Agent { species, target, .. } = &mut t.protocol[0] {
            f(species, target);
        }
        t
    };
    let with_species = edit(&|sp, _| *sp = "K+".into());
    assert_refused(&text(&with_species), "protocol[0].species", &["pump", "leave"]);
    let mut no_pump = s.clone();
    no_pump.pump = None;
    assert_refused(&text(&no_pump), "protocol[0].target", &["no pump"]);
    let no_species = edit(&|_, target| *target = AgentTarget::Permeability);
    assert_refused(&text(&no_species), "protocol[0].species", &["needs"]);
}

#[test]
fn a_tracked_volume_round_trips_and_a_fixed_one_writes_nothing_new() {
    for water in ["Instant", "Permeability(pf_um_per_s: 12.5)"] {
        let mut s = pump_leak(0.6, Some(0.5), 1000.0, water);
        if water == "Instant" {
            s.species[2].inside_mm = 8.0;
        }
        let text = permeant::scenario::to_ron_string(&s);
        assert_eq!(scenario(&text), s);
        if let permeant::scenario::Volume::Tracked { impermeant, .. } = &mut s.cell.volume {
            *impermeant = Some(permeant::scenario::Impermeant {
                inside_mm: 110.0,
                charge: -1.25,
            });
        }
        let text = permeant::scenario::to_ron_string(&s);
        assert_eq!(scenario(&text), s);
    }
    let mut fixed = pump_leak(0.6, None, 1000.0, "Instant");
    fixed.cell.volume = permeant::scenario::Volume::Fixed;
    let text = permeant::scenario::to_ron_string(&fixed);
    assert!(!text.contains("volume") && !text.contains("target"), "{text}");
}

// ---------------------------------------------------------------------------------------------
// The bundled examples do what their notes say
// ---------------------------------------------------------------------------------------------

fn example(name: &str) -> Run {
    let text = permeant::examples::example_text(name).expect("bundled");
    let s = scenario(text);
    run_to_end(&s, SolverSettings::default())
}

/// Index of the first sample at or after `t_ms`.
fn at(r: &Run, t_ms: f64) -> usize {
    r.trace()
        .t_ms
        .iter()
        .position(|t| *t >= t_ms)
        .expect("within the run")
}

#[test]
fn pump_block_swells_and_depolarizes_and_the_pump_brings_the_cell_back() {
    let r = example("pump-block-swelling.ron");
    let (w, _) = volume_and_osmolarity(&r);
    let v = r.trace().v_mv();
    let (block, washout) = (at(&r, 30_000.0), at(&r, 240_000.0));
    // Flat before the block: the cell starts at its pump–leak balance.
    assert!((0..block).all(|k| (w[k] - 1.0).abs() < 1e-6 && (v[k] - v[0]).abs() < 1e-3));
    let w_max = w.iter().copied().fold(0.0, f64::max);
    let v_max = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    println!("W max {w_max}, V {} → {v_max} mV, W end {}", v[0], w[w.len() - 1]);
    assert!(w[washout] > 1.07 && w_max > 1.1, "swells by about a tenth");
    assert!(v_max - v[0] > 15.0, "depolarizes by about 20 mV");
    assert!(w[w.len() - 1] < 1.0 + 0.1 * (w_max - 1.0), "shrinks back");
    assert!(v[v.len() - 1] < v_max - 15.0, "repolarizes");
}

#[test]
fn a_diluted_bath_swells_the_cell_by_about_half_in_seconds() {
    let r = example("hypo-osmotic-swelling.ron");
    let (w, osm) = volume_and_osmolarity(&r);
    let (step, later) = (at(&r, 5_000.0), at(&r, 12_000.0));
    assert!((w[step] - 1.0).abs() < 1e-6 && (osm[step] - 270.0).abs() < 1e-3);
    println!("W at 12 s {}, end {}", w[later], w[w.len() - 1]);
    assert!(w[later] > 1.45, "swells by about half within seconds");
    // Boyle–van 't Hoff bounds the water part: 270/170 if no ion moved.
    assert!(w[w.len() - 1] < 270.0 / 170.0 + 0.01);
}

#[test]
fn the_sucrose_example_shrinks_the_cell_to_boyle_van_t_hoff_and_back() {
    // The bath recipe's ideal osmolarity (solutions.md), added up here: 115 NaCl, 5 KCl,
    // 30 NaHCO3 and 10 glucose are 310 mOsm; 100 mM of sucrose makes 410. Ions barely move in
    // the 15 s of sucrose, so the volume comes close to Boyle–van 't Hoff's 310/410.
    let r = example("sucrose-bath-shrinks-the-cell.ron");
    let (w, osm) = volume_and_osmolarity(&r);
    let osm_out = bath_osmolarity(&r);
    let (exchange, before_washout) = (at(&r, 5_000.0), at(&r, 20_000.0));
    let boyle = 310.0 / 410.0;
    println!(
        "W before washout {}, Boyle–van 't Hoff {boyle}; W at the end {}",
        w[before_washout],
        w[w.len() - 1]
    );
    assert!((w[exchange] - 1.0).abs() < 1e-6 && (osm[exchange] - 310.0).abs() < 1e-3);
    assert!((osm_out[exchange] - 310.0).abs() < 1e-9 && (osm_out[before_washout] - 410.0).abs() < 1e-6);
    assert!(
        (w[before_washout] - boyle).abs() < 0.01,
        "W {} vs {boyle}",
        w[before_washout]
    );
    assert!((w[w.len() - 1] - 1.0).abs() < 0.01, "back to {}", w[w.len() - 1]);
}

#[test]
fn the_k_and_cl_cell_ends_with_v_at_both_reversal_potentials() {
    let r = example("donnan-equilibrium.ron");
    let last = r.trace().len() - 1;
    let v = r.trace().v_mv()[last];
    let (k, cl) = (inside_mm(&r, 0)[last], inside_mm(&r, 2)[last]);
    let (e_k, e_cl) = (
        reference::nernst_mv(1, k, 5.0, 37.0),
        reference::nernst_mv(-1, cl, 150.0, 37.0),
    );
    println!("V {v}, E_K {e_k}, E_Cl {e_cl}");
    assert!((v - e_k).abs() < 0.01 && (v - e_cl).abs() < 0.01);
}

// ---------------------------------------------------------------------------------------------
// The command line
// ---------------------------------------------------------------------------------------------

#[test]
fn run_writes_volume_and_osmolarity_and_rest_reports_the_derived_solute() {
    use common::cli::{Sandbox, assert_bad_input};
    let text = permeant::examples::example_text("donnan-equilibrium.ron").unwrap();
    let sb = Sandbox::with("cell.ron", text);
    sb.ok(&["run", "cell.ron", "--csv", "out.csv"]);
    let csv = sb.read("out.csv");
    let mut lines = csv.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    // The contract's two columns, then the bath's osmolarity.
    assert_eq!(
        &header[header.len() - 3..],
        ["volume_rel", "osm_in_mosm", "osm_out_mosm"]
    );
    assert!(header.contains(&"inside_mm:K+") && !header.iter().any(|h| h.starts_with("amount")));
    let first: Vec<f64> = lines
        .next()
        .unwrap()
        .split(',')
        .map(|x| x.parse().unwrap())
        .collect();
    assert_eq!(first[header.len() - 3], 1.0);
    // 140 + 0 + 10 mM of ions and 150 mM of the derived solute, iso-osmotic with the bath.
    assert!((first[header.len() - 2] - 300.0).abs() < 1e-9);
    assert!((first[header.len() - 1] - 300.0).abs() < 1e-9);
    let last: Vec<f64> = csv
        .lines()
        .last()
        .unwrap()
        .split(',')
        .map(|x| x.parse().unwrap())
        .collect();
    assert!(last[header.len() - 3] < 0.97);

    let json: serde_json::Value = serde_json::from_str(&sb.ok(&["rest", "cell.ron", "--json"])).unwrap();
    let x = &json["impermeant"];
    // X = Σc_out − Σc_in = 300 − 150; z_X = −(140 − 10)/150.
    assert_eq!(x["inside_mm"], 150.0);
    assert!((x["charge"].as_f64().unwrap() + 130.0 / 150.0).abs() < 1e-15);
    assert_eq!(x["derived"], true);
    assert!(
        sb.ok(&["rest", "cell.ron"])
            .contains("impermeant inside solute: 150.0000 mM")
    );

    // A fixed cell's outputs are unchanged: no new columns or keys.
    let fixed = permeant::examples::example_text("resting-cell-normal-bath.ron").unwrap();
    sb.write("fixed.ron", fixed);
    let json: serde_json::Value = serde_json::from_str(&sb.ok(&["rest", "fixed.ron", "--json"])).unwrap();
    assert!(json.get("impermeant").is_none());
    sb.ok(&["run", "fixed.ron", "--csv", "fixed.csv"]);
    assert!(!sb.read("fixed.csv").lines().next().unwrap().contains("volume"));

    // No positive solute: refused with exit status 2 and the field path.
    sb.write(
        "crowded.ron",
        text.replace("inside_mm: 140.0", "inside_mm: 340.0"),
    );
    assert_bad_input(
        &sb.run(&["run", "crowded.ron", "--csv", "x.csv"]),
        &["cell.volume", "iso-osmotic"],
    );
}
