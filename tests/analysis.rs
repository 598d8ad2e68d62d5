//! Scans, fits, trace metrics and dose–response against outside references: the Nernst slope
//! from CODATA constants, the resting permeability ratio of Hodgkin & Katz 1949, the statistics
//! of least-squares standard errors, and exact agreement with the single-point resting report.
//! Each check names its source; "from memory" marks a published value quoted without the paper
//! at hand, "common practice" a textbook-level fact with no single source. The cells below are
//! invented for these tests.

use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};

mod common;
use common::cells::{hh_channels, species};
use common::reference::{
    self, ghk_voltage_mv, potential_carrying_mv, slope_conductance_ms_per_cm2, zero_current_mv,
};
use common::rng::{Rng, assert_honest_errors};
use common::{reference_ions as ions, valid};

/// A potential the program solves for against a closed form or the tests' own bisection: the
/// root finder stops far inside [`ACCURACY_MV`].
const SOLVED_MV: f64 = 1e-6;
/// model.md's accuracy of a trace against a reference solution at every output sample.
const ACCURACY_MV: f64 = 0.01;
/// Relative agreement with a value computed here from the same formula and CODATA constants
/// (the published ten-digit R and F differ from the exact products by about 2e-11).
const RELATIVE: f64 = 1e-9;
/// Fitted ratios against the ratios exact data were made with: the data carry the reference to
/// every digit, so only the solver's and the minimiser's tolerances remain.
const RATIO_RELATIVE: f64 = 1e-8;
/// What a fit to exact data leaves: rms residuals (mV) and standard errors (of ratios) at the
/// level of the root finder's rounding.
const EXACT_FIT: f64 = 1e-9;
/// Ratios fitted back to data made by the program itself, for a cell with no closed form (a
/// pump, gated channels): the data carry the solver's tolerance, so the ratios carry more.
const ROUND_TRIP_RELATIVE: f64 = 1e-5;
/// A passive GHK membrane is linear only to first order: over a step of about 1 mV its slope
/// conductance changes by about ΔV/(2·RT/F), under 2 % at RT/F = 26.7 mV, so exponential
/// charging with one time constant holds to that.
const LINEARITY: f64 = 0.02;
use permeant::analysis::fit::{DataError, DataPoint, FitError, FitSpace, fit, parse_points};
use permeant::analysis::metrics::{SpikeSettings, dose_response, first_event_ms, run_metrics, trace_metrics};
use permeant::analysis::rest_report;
use permeant::analysis::scan::{
    ScanControl, ScanError, ScanPoint, ScanRange, Vary, nernst_line, scan, scan_point,
};
use permeant::engine::{Run, SolverSettings};
use permeant::scenario::{Event, Pump, Scenario};

// ---------------------------------------------------------------------------------------------
// Cells

/// A passive cell with K+, Na+ and Cl- permeabilities in the ratio 1 : r_na : r_cl.
fn passive(temperature_c: f64, r_na: f64, r_cl: f64) -> Scenario {
    let mut s = Scenario::new_default();
    s.temperature_c = temperature_c;
    s.species = vec![
        species("K+", 1, 140.0, 5.0, 1.0e-6),
        species("Na+", 1, 12.0, 145.0, r_na * 1.0e-6),
        species("Cl-", -1, 10.0, 120.0, r_cl * 1.0e-6),
    ];
    s
}

/// A cold-water giant axon in round invented numbers, at the resting ratio of Hodgkin & Katz.
fn axon_hodgkin_katz() -> Scenario {
    let mut s = Scenario::new_default();
    s.temperature_c = 18.0;
    s.species = vec![
        species("K+", 1, 360.0, 10.0, 1.0e-6),
        species("Na+", 1, 50.0, 440.0, 0.04e-6),
        species("Cl-", -1, 70.0, 500.0, 0.45e-6),
    ];
    s
}

/// An excitable cell (Hodgkin–Huxley 1952 gates on GHK channels) with a pump, a sodium-channel
/// blocker arriving at 60 ms and a train of suprathreshold pulses.
fn excitable() -> Scenario {
    let mut s = Scenario::new_default();
    s.temperature_c = 6.3;
    s.species = vec![
        species("K+", 1, 140.0, 5.0, 5.0e-7),
        species("Na+", 1, 12.0, 145.0, 1.0e-8),
        species("Cl-", -1, 10.0, 120.0, 5.0e-8),
    ];
    s.pump = Some(Pump {
        exports: "Na+".into(),
        imports: "K+".into(),
        exported_per_cycle: 3,
        imported_per_cycle: 2,
        max_current_ua_per_cm2: 0.5,
        half_saturation_inside_mm: 10.0,
        hill_inside: 1.0,
        half_saturation_outside_mm: 1.5,
        hill_outside: 1.0,
    });
    s.channels = hh_channels(8.0e-5, 2.5e-5);
    s.protocol = vec![
        Event::Agent {
            label: "sodium blocker".into(),
            species: "Na+".into(),
            target: Default::default(),
            max_block: 1.0,
            max_increase: None,
            ic50_um: 1.0,
            hill: 1.0,
            dose_um: 3.0,
            from_ms: 60.0,
            until_ms: None,
            onset_ms: 5.0,
            washout_ms: 5.0,
        },
        Event::InjectTrain {
            amplitude_ua_per_cm2: 25.0,
            width_ms: 1.0,
            period_ms: 25.0,
            count: 4,
            from_ms: 10.0,
        },
    ];
    s.run.duration_ms = 110.0;
    s
}

/// `s` with the bath's K+ (the first species) at `k_out_mm`, set here rather than through the
/// scan's own `apply`.
fn with_bath_k(s: &Scenario, k_out_mm: f64) -> Scenario {
    let mut s = s.clone();
    assert_eq!(s.species[0].name, "K+", "test setup: K+ comes first");
    s.species[0].outside_mm = k_out_mm;
    s
}

/// Measured-looking points of a passive cell over bath K+: the potential where the published
/// GHK currents sum to zero, found by the tests' own bisection ([`zero_current_mv`]), plus noise.
fn bath_k_series(s: &Scenario, values: &[f64], noise: &mut dyn FnMut() -> f64) -> Vec<DataPoint> {
    assert!(
        s.channels.is_empty() && s.pump.is_none(),
        "test setup: a passive cell"
    );
    values
        .iter()
        .enumerate()
        .map(|(k, &x)| DataPoint {
            value: x,
            v_mv: zero_current_mv(&ions(&with_bath_k(s, x)), s.temperature_c) + noise(),
            row: k + 2,
        })
        .collect()
}

/// A round trip, for a cell with no closed form (a pump, gated channels): points at the
/// program's own steady states over bath K+, which a fit must find its way back to.
fn program_bath_k_series(s: &Scenario, values: &[f64]) -> Vec<DataPoint> {
    values
        .iter()
        .enumerate()
        .map(|(k, &x)| {
            let r = rest_report(&valid(&with_bath_k(s, x))).expect("report");
            DataPoint {
                value: x,
                v_mv: r.resting_mv().expect("defined"),
                row: k + 2,
            }
        })
        .collect()
}

fn log_values(from: f64, to: f64, n: usize) -> Vec<f64> {
    ScanRange {
        from,
        to,
        points: n,
        log: true,
    }
    .values()
    .expect("range")
}

fn names(v: &[&str]) -> Vec<String> {
    v.iter().map(|s| s.to_string()).collect()
}

// ---------------------------------------------------------------------------------------------
// Scans

#[test]
fn bath_potassium_scan_follows_the_ghk_equation_towards_the_nernst_slope() {
    // CODATA 2018 constants give ln(10)·RT/F = 61.54 mV per decade at 37 °C.
    let nernst = reference::nernst_slope_mv_per_decade(1, 37.0);
    assert!((nernst - 61.54).abs() < 0.005, "{nernst}");
    // A potassium-dominated cell (P_Na/P_K = 0.01, chloride impermeant).
    let s = passive(37.0, 0.01, 0.0);
    let vary = Vary::parse("outside_mm:K+", &s).expect("parses");
    let range = ScanRange {
        from: 1.0,
        to: 150.0,
        points: 41,
        log: true,
    };
    let pts = scan(&s, &vary, &range, &ScanControl::default()).expect("scan");
    // Every point is the GHK voltage equation at its bath K+ (Goldman 1943; Hodgkin & Katz 1949).
    for p in &pts {
        let want = ghk_voltage_mv(&ions(&with_bath_k(&s, p.value)), 37.0);
        for got in [p.ghk_mv, p.resting_mv] {
            let got = got.expect("defined");
            assert!(
                (got - want).abs() < SOLVED_MV,
                "at {} mM: {got} vs {want}",
                p.value
            );
        }
    }
    let slope = |a: &ScanPoint, b: &ScanPoint| {
        (b.resting_mv.expect("defined") - a.resting_mv.expect("defined")) / (b.value / a.value).log10()
    };
    // Near 150 mM the sodium term is 1.45/151 of the potassium term, so the slope is within
    // 2 % of Nernst's (common practice: high bath K+ makes a K+ electrode of the cell).
    let high = slope(&pts[39], &pts[40]);
    assert!(
        (high - nernst).abs() / nernst < 0.02,
        "slope at high K+ {high} mV/decade"
    );
    // Common practice: at low bath potassium the sodium leak matters more and the curve
    // flattens away from the Nernst line; the slope rises steadily with potassium.
    let low = slope(&pts[0], &pts[1]);
    assert!(low < 0.6 * high, "slope at low K+ {low} vs {high} mV/decade");
    let slopes: Vec<f64> = pts.windows(2).map(|w| slope(&w[0], &w[1])).collect();
    assert!(slopes.windows(2).all(|w| w[1] > w[0]), "slopes {slopes:?}");
    // The reference line is the Nernst potential itself, with the CODATA slope.
    let values: Vec<f64> = pts.iter().map(|p| p.value).collect();
    let line = nernst_line(&s, &vary, &values).expect("a concentration scan has a line");
    assert_eq!(line.species, "K+");
    assert!((line.slope_mv_per_decade - nernst).abs() < RELATIVE * nernst);
    for (x, e) in values.iter().zip(&line.e_mv) {
        let want = reference::nernst_mv(1, 140.0, *x, 37.0);
        assert!(
            (e.expect("defined") - want).abs() < RELATIVE * want.abs().max(1.0),
            "{x} mM"
        );
    }
    // The Nernst potential bounds the resting potential from below in a cell where the only
    // other permeant ion (Na+) reverses positive (common practice).
    assert!(
        pts.iter()
            .zip(&line.e_mv)
            .all(|(p, e)| p.resting_mv.expect("defined") > e.expect("defined"))
    );
}

#[test]
fn scan_points_equal_single_rest_reports() {
    let s = excitable();
    let cases = [
        ("temperature_c", 0.0, 30.0, false),
        ("outside_mm:K+", 1.0, 60.0, true),
        ("inside_mm:Na+", 5.0, 40.0, false),
        ("permeability:Cl-", 1e-9, 1e-6, true),
        ("dose_um:sodium blocker", 0.01, 100.0, true),
    ];
    // The scenario each point should be, with the field set here by hand (not by `apply`).
    let by_hand = |what: &str, x: f64| {
        let mut e = s.clone();
        match what {
            "temperature_c" => e.temperature_c = x,
            "outside_mm:K+" => e.species[0].outside_mm = x,
            "inside_mm:Na+" => e.species[1].inside_mm = x,
            "permeability:Cl-" => e.species[2].permeability_cm_per_s = x,
            _ => {
                let Event::Agent {
                    dose_um,
                    from_ms,
                    until_ms,
                    ..
                } = &mut e.protocol[0]
                else {
                    panic!("test setup: the agent comes first");
                };
                // In force from t = 0 to the end (see `scan::apply`).
                (*dose_um, *from_ms, *until_ms) = (x, 0.0, None);
            }
        }
        valid(&e)
    };
    for (what, from, to, log) in cases {
        let vary = Vary::parse(what, &s).expect("parses");
        assert_eq!(
            vary.to_string(),
            what,
            "Display gives the command-line spelling back"
        );
        let pts = scan(
            &s,
            &vary,
            &ScanRange {
                from,
                to,
                points: 7,
                log,
            },
            &ScanControl::default(),
        )
        .expect("scan");
        assert_eq!(pts.len(), 7);
        assert_eq!((pts[0].value, pts[6].value), (from, to), "ends are exact");
        for p in &pts {
            let r = rest_report(&by_hand(what, p.value)).expect("report");
            assert_eq!(p.ghk_mv, r.ghk_mv.as_ref().ok().copied(), "{what} = {}", p.value);
            assert_eq!(p.resting_mv, r.resting_mv(), "{what} = {}", p.value);
            assert!(
                p.resting_mv.is_some(),
                "{what} = {} has a resting potential",
                p.value
            );
        }
    }
    // A dose puts the agent in force from t = 0, so the steady state includes its block: the
    // sodium blocker hyperpolarizes this cell a little, more at the larger dose.
    let vary = Vary::DoseUm("sodium blocker".into());
    let lo = scan_point(&s, &vary, 0.01)
        .expect("point")
        .resting_mv
        .expect("defined");
    let hi = scan_point(&s, &vary, 100.0)
        .expect("point")
        .resting_mv
        .expect("defined");
    assert!(hi < lo - 0.1, "{hi} vs {lo}");
}

#[test]
fn multi_core_scan_equals_single_core() {
    let s = excitable();
    let vary = Vary::OutsideMm("K+".into());
    let range = ScanRange {
        from: 1.0,
        to: 100.0,
        points: 64,
        log: true,
    };
    let many = scan(&s, &vary, &range, &ScanControl::default()).expect("scan");
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("pool");
    let one = pool
        .install(|| scan(&s, &vary, &range, &ScanControl::default()))
        .expect("scan");
    assert_eq!(many, one);
}

#[test]
fn progress_counts_points_and_cancel_stops() {
    let s = passive(37.0, 0.05, 0.2);
    let vary = Vary::TemperatureC;
    let range = ScanRange {
        from: 5.0,
        to: 40.0,
        points: 30,
        log: false,
    };
    let progress = Arc::new(AtomicUsize::new(0));
    let control = ScanControl {
        progress: Some(progress.clone()),
        cancel: None,
    };
    let pts = scan(&s, &vary, &range, &control).expect("scan");
    assert_eq!(progress.load(Ordering::Relaxed), 30);
    // Linear values: an index times the step from the start, never a running sum.
    assert_eq!(pts[10].value, 5.0 + 35.0 * (10.0 / 29.0));
    let cancel = Arc::new(AtomicBool::new(true));
    let control = ScanControl {
        progress: None,
        cancel: Some(cancel),
    };
    assert_eq!(scan(&s, &vary, &range, &control), Err(ScanError::Cancelled));
}

#[test]
fn scan_requests_are_checked_with_plain_messages() {
    let s = excitable();
    let e = Vary::parse("outside_mm:Ca2+", &s)
        .expect_err("no such species")
        .to_string();
    assert!(
        e.contains("\"Ca2+\"") && e.contains("\"K+\", \"Na+\", \"Cl-\""),
        "{e}"
    );
    let e = Vary::parse("dose_um:TTX", &s)
        .expect_err("no such agent")
        .to_string();
    assert!(e.contains("\"TTX\"") && e.contains("\"sodium blocker\""), "{e}");
    let e = Vary::parse("dose_um:x", &passive(37.0, 0.05, 0.2))
        .expect_err("no agents")
        .to_string();
    assert!(e.contains("has no agents"), "{e}");
    let e = Vary::parse("voltage", &s).expect_err("unknown").to_string();
    assert!(
        e.contains("\"voltage\"") && e.contains("temperature_c") && e.contains("dose_um:LABEL"),
        "{e}"
    );
    let vary = Vary::TemperatureC;
    let control = ScanControl::default();
    let go = |from: f64, to: f64, points: usize, log: bool| {
        scan(
            &s,
            &vary,
            &ScanRange {
                from,
                to,
                points,
                log,
            },
            &control,
        )
        .expect_err("refused")
        .to_string()
    };
    assert!(go(5.0, 30.0, 0, false).contains("at least 1"));
    assert!(go(f64::NAN, 30.0, 5, false).contains("start"));
    assert!(go(5.0, f64::INFINITY, 5, false).contains("end"));
    assert!(go(0.0, 30.0, 5, true).contains("log range"));
    let e = go(5.0, 70.0, 5, false);
    assert!(e.contains("temperature_c = 70") && e.contains("−5 to 60"), "{e}");
    let e = scan(
        &s,
        &Vary::OutsideMm("K+".into()),
        &ScanRange {
            from: -1.0,
            to: 5.0,
            points: 3,
            log: false,
        },
        &control,
    )
    .expect_err("negative")
    .to_string();
    assert!(e.contains("species[0].outside_mm"), "{e}");
    // A single point is the start value.
    let one = scan(
        &s,
        &vary,
        &ScanRange {
            from: 20.0,
            to: 30.0,
            points: 1,
            log: false,
        },
        &control,
    )
    .expect("scan");
    assert_eq!(one.len(), 1);
    assert_eq!(one[0].value, 20.0);
}

#[test]
fn undefined_potentials_are_reported_not_nan() {
    // model.md: with K+ the only permeant ion and none of it outside, no ion can carry inward
    // current, so neither potential exists; the scan reports why instead of a number.
    let s = passive(37.0, 0.0, 0.0);
    let vary = Vary::OutsideMm("K+".into());
    let pts = scan(
        &s,
        &vary,
        &ScanRange {
            from: 0.0,
            to: 5.0,
            points: 2,
            log: false,
        },
        &ScanControl::default(),
    )
    .expect("scan");
    assert_eq!((pts[0].ghk_mv, pts[0].resting_mv), (None, None));
    assert!(pts[0].ghk_undefined.is_some() && pts[0].resting_undefined.is_some());
    assert!(pts[1].resting_mv.is_some_and(f64::is_finite));
    // Its Nernst line is undefined there too.
    let line = nernst_line(&s, &vary, &[0.0, 5.0]).expect("line");
    assert_eq!(line.e_mv[0], None);
}

// ---------------------------------------------------------------------------------------------
// Fits

#[test]
fn fit_recovers_known_ratios_from_exact_points() {
    let truth = passive(37.0, 0.05, 0.3);
    let vary = Vary::OutsideMm("K+".into());
    let data = bath_k_series(&truth, &log_values(2.0, 100.0, 20), &mut || 0.0);
    // Start far from the truth, and in both parameter spaces.
    let start = passive(37.0, 0.5, 0.02);
    for space in [FitSpace::LogRatio, FitSpace::Direct] {
        let r = fit(&start, &vary, &names(&["Na+", "Cl-"]), &data, space).expect("fits");
        assert_eq!(r.reference, "K+");
        for (got, want) in r.ratios.iter().zip([0.05, 0.3]) {
            assert!(
                (got.ratio - want).abs() < RATIO_RELATIVE * want,
                "{space:?} {}: {} vs {want}",
                got.name,
                got.ratio
            );
            // Exact data leave only rounding in the standard errors too.
            assert!(
                got.standard_error < EXACT_FIT,
                "{space:?} {} SE {}",
                got.name,
                got.standard_error
            );
            // The reference species' permeability is 1e-6 cm/s.
            assert!((got.p_cm_per_s - want * 1e-6).abs() < RATIO_RELATIVE * want * 1e-6);
        }
        assert!(r.rms_residual_mv < EXACT_FIT);
        assert_eq!(r.degrees_of_freedom, 18);
        assert_eq!(r.residuals.len(), 20);
        assert_eq!(r.residuals[0].row, 2);
    }
}

#[test]
fn noisy_fits_have_honest_standard_errors() {
    // Least-squares theory (common practice): with Gaussian noise the estimate lies within one
    // standard error of the truth about 68 % of the time, and almost always within three.
    let truth = passive(37.0, 0.05, 0.3);
    let vary = Vary::OutsideMm("K+".into());
    let values = log_values(2.0, 100.0, 20);
    let trials = 60;
    let mut within_one = [0usize; 2];
    for seed in 1..=trials {
        let mut rng = Rng::new(seed);
        let data = bath_k_series(&truth, &values, &mut || 0.5 * rng.normal());
        let r = fit(&truth, &vary, &names(&["Na+", "Cl-"]), &data, FitSpace::LogRatio).expect("fits");
        // The rms residual estimates the noise, 0.5 mV.
        assert!(
            r.rms_residual_mv > 0.2 && r.rms_residual_mv < 0.8,
            "seed {seed}: {}",
            r.rms_residual_mv
        );
        for (c, (got, want)) in r.ratios.iter().zip([0.05, 0.3]).enumerate() {
            let z = (got.ratio - want) / got.standard_error;
            if seed <= 10 {
                assert!(
                    z.abs() < 3.0,
                    "seed {seed} {}: {} ± {} vs {want}",
                    got.name,
                    got.ratio,
                    got.standard_error
                );
            }
            if z.abs() <= 1.0 {
                within_one[c] += 1;
            }
        }
    }
    assert_honest_errors(&within_one, trials);
}

/// The resting ratio quoted for the squid giant axon, P_K : P_Na : P_Cl = 1 : 0.04 : 0.45
/// (Hodgkin & Katz 1949, J. Physiol. 108:37, from memory), is used here as parameters only:
/// this checks that such a ratio fits back from a series made with the GHK currents, not the
/// paper's measurements.
#[test]
fn a_squid_axon_like_ratio_fits_back_from_a_bath_potassium_series() {
    let truth = axon_hodgkin_katz();
    let vary = Vary::OutsideMm("K+".into());
    let data = bath_k_series(&truth, &log_values(2.0, 100.0, 12), &mut || 0.0);
    let mut start = truth.clone();
    start.species[1].permeability_cm_per_s = 0.2e-6;
    start.species[2].permeability_cm_per_s = 0.05e-6;
    let r = fit(&start, &vary, &names(&["Na+", "Cl-"]), &data, FitSpace::LogRatio).expect("fits");
    for (got, want) in r.ratios.iter().zip([0.04, 0.45]) {
        assert!((got.ratio - want).abs() < RATIO_RELATIVE * want, "{:?}", r.ratios);
    }
}

#[test]
fn fit_through_a_pump_and_gated_channels() {
    // The model potential is the full steady state, so the fit must also recover ratios where a
    // pump and open channels shift the potential away from the GHK value.
    let truth = excitable();
    let vary = Vary::OutsideMm("K+".into());
    let data = program_bath_k_series(&truth, &log_values(2.0, 20.0, 10));
    let mut start = truth.clone();
    start.species[1].permeability_cm_per_s = 5e-9;
    start.species[2].permeability_cm_per_s = 2e-7;
    let r = fit(&start, &vary, &names(&["Na+", "Cl-"]), &data, FitSpace::LogRatio).expect("fits");
    for (got, want) in r.ratios.iter().zip([0.02, 0.1]) {
        assert!(
            (got.ratio - want).abs() < ROUND_TRIP_RELATIVE * want,
            "{:?}",
            r.ratios
        );
    }
}

#[test]
fn three_ratios_with_a_divalent_ion_from_a_distant_start() {
    // Ca2+ and Na+ both carry inward current at rest, so over a bath-potassium series their
    // effects are nearly alike; from these starting ratios a single minimisation slides the
    // Ca2+ ratio towards 0. The other starts must find the exact minimum.
    let mut truth = passive(37.0, 0.04, 0.3);
    truth.species.push(species("Ca2+", 2, 1.0e-4, 2.0, 0.4e-6));
    let vary = Vary::OutsideMm("K+".into());
    let data = bath_k_series(&truth, &log_values(1.0, 150.0, 20), &mut || 0.0);
    let mut start = truth.clone();
    for (i, p) in [(1, 2.0e-7), (2, 5.0e-8), (3, 1.0e-7)] {
        start.species[i].permeability_cm_per_s = p;
    }
    let r = fit(
        &start,
        &vary,
        &names(&["Na+", "Cl-", "Ca2+"]),
        &data,
        FitSpace::LogRatio,
    )
    .expect("fits");
    for (got, want) in r.ratios.iter().zip([0.04, 0.3, 0.4]) {
        assert!(
            (got.ratio - want).abs() < RATIO_RELATIVE * want,
            "{}: {} vs {want}",
            got.name,
            got.ratio
        );
    }
}

#[test]
fn bad_data_messages_name_the_row_or_parameter() {
    let e = parse_points("value,v_mv\n2,-80\n5,abc\n").expect_err("bad cell");
    assert_eq!(
        e,
        DataError::NotNumber {
            row: 3,
            column: "v_mv",
            cell: "abc".into()
        }
    );
    assert!(e.to_string().contains("row 3") && e.to_string().contains("v_mv"));
    let e = parse_points("2,-80\n\n1.5.2,-70\n")
        .expect_err("bad cell")
        .to_string();
    assert!(
        e.contains("row 3") && e.contains("value") && e.contains("1.5.2"),
        "{e}"
    );
    let e = parse_points("value,v_mv\n2,-80,7\n")
        .expect_err("three cells")
        .to_string();
    assert!(e.contains("row 2") && e.contains("3"), "{e}");
    let e = parse_points("value,v_mv\n2,NaN\n")
        .expect_err("not finite")
        .to_string();
    assert!(e.contains("row 2") && e.contains("finite"), "{e}");
    assert_eq!(parse_points("value,v_mv\n\n"), Err(DataError::NoPoints));
    // Spreadsheet habits are accepted: a byte-order mark, quotes, CRLF, trailing empty cells.
    let ok = parse_points("\u{feff}\"value\",\"v_mv\"\r\n\"2\",\"-80.5\",\r\n# note\r\n10,-50\r\n")
        .expect("reads");
    assert_eq!(
        ok,
        vec![
            DataPoint {
                value: 2.0,
                v_mv: -80.5,
                row: 2
            },
            DataPoint {
                value: 10.0,
                v_mv: -50.0,
                row: 4
            }
        ]
    );

    let s = passive(37.0, 0.05, 0.3);
    let vary = Vary::OutsideMm("K+".into());
    let data = bath_k_series(&s, &log_values(2.0, 100.0, 6), &mut || 0.0);
    let free = |v: &[&str]| fit(&s, &vary, &names(v), &data, FitSpace::LogRatio).expect_err("refused");
    assert!(matches!(free(&[]), FitError::NothingFree));
    let e = free(&["Ca2+"]).to_string();
    assert!(e.contains("\"Ca2+\"") && e.contains("\"Cl-\""), "{e}");
    assert!(free(&["K+"]).to_string().contains("reference"));
    assert!(free(&["Na+", "Na+"]).to_string().contains("twice"));
    let e = fit(&s, &vary, &names(&["Na+", "Cl-"]), &data[..2], FitSpace::LogRatio)
        .expect_err("too few")
        .to_string();
    assert!(e.contains("2 data point(s)") && e.contains("at least 3"), "{e}");
    let e = fit(
        &s,
        &Vary::Permeability("Na+".into()),
        &names(&["Na+"]),
        &data,
        FitSpace::LogRatio,
    )
    .expect_err("varied");
    assert!(matches!(e, FitError::VariedIsFree { .. }), "{e}");
    // A point whose value makes the cell invalid is named by its row.
    let mut bad = data.clone();
    bad[3].value = -4.0;
    let e = fit(&s, &vary, &names(&["Na+"]), &bad, FitSpace::LogRatio)
        .expect_err("negative")
        .to_string();
    assert!(
        e.contains(&format!("row {}", bad[3].row)) && e.contains("outside_mm"),
        "{e}"
    );

    // A free species absent on both sides cannot be determined.
    let mut absent = s.clone();
    absent.species.push(species("Li+", 1, 0.0, 0.0, 1e-8));
    let e = fit(&absent, &vary, &names(&["Na+", "Li+"]), &data, FitSpace::LogRatio).expect_err("absent");
    assert_eq!(e, FitError::NoConcentration { name: "Li+".into() });
    // Two cations with the same concentrations act on the potential in exact proportion.
    let mut twin = s.clone();
    twin.species.push(species("Li+", 1, 12.0, 145.0, 1e-8));
    let e = fit(&twin, &vary, &names(&["Na+", "Li+"]), &data, FitSpace::LogRatio).expect_err("collinear");
    match e {
        FitError::Undetermined { names, .. } => assert_eq!(names, vec!["Na+".to_string(), "Li+".to_string()]),
        other => panic!("expected Undetermined, got {other}"),
    }
    // Data made without any chloride permeability drive that ratio towards 0, where the
    // potentials no longer depend on it.
    let no_cl = passive(37.0, 0.05, 0.0);
    let data = bath_k_series(&no_cl, &log_values(2.0, 100.0, 8), &mut || 0.0);
    let e = fit(&s, &vary, &names(&["Na+", "Cl-"]), &data, FitSpace::LogRatio).expect_err("flat");
    match e {
        FitError::Undetermined { names, .. } => assert_eq!(names, vec!["Cl-".to_string()]),
        other => panic!("expected Undetermined, got {other}"),
    }
}

/// RFC 4180 (common practice for CSV): a quoted cell may hold the delimiter, a doubled quote
/// and a line break; rows are numbered by the line they start on, as a spreadsheet shows them.
#[test]
fn measured_data_are_read_as_csv_with_quoted_cells_and_comments() {
    let text = "# bath potassium series, invented\n\
                \"outside K+\n(mM, \"\"bath\"\")\",\"v_mv\"\n\
                \"2\", -80.5\n\
                \x20 # an indented note, with \"quotes\", and commas\n\
                \n\
                \"1e1\",\"-50\",,\n";
    let points = parse_points(text).expect("reads");
    assert_eq!(
        points,
        vec![
            DataPoint {
                value: 2.0,
                v_mv: -80.5,
                row: 4
            },
            DataPoint {
                value: 10.0,
                v_mv: -50.0,
                row: 7
            }
        ]
    );
    // A comma inside quotes stays in its cell: one bad number, not a third cell.
    let e = parse_points("value,v_mv\n\"1,5\",-70\n").expect_err("a decimal comma");
    assert_eq!(
        e,
        DataError::NotNumber {
            row: 2,
            column: "value",
            cell: "1,5".into()
        }
    );
    // The row of a bad cell after a quoted line break is the line it starts on.
    let e = parse_points("\"value\nin mM\",v_mv\n2,-80\n3,\"-7O\"\n").expect_err("a letter O");
    assert!(e.to_string().starts_with("row 4: the v_mv cell \"-7O\""), "{e}");
    let e = parse_points("# only a note\n\n").expect_err("nothing");
    assert_eq!(e, DataError::NoPoints);
}

/// A cell with a bath potassium series where the point without bath potassium has no
/// potential: K+ can only leave and Cl- (none inside) only enter, so every current is outward
/// (model.md, "Zero-current potential").
fn no_potential_at_zero_bath_potassium() -> (Scenario, Vec<DataPoint>) {
    let mut s = Scenario::new_default();
    s.temperature_c = 37.0;
    s.species = vec![
        species("K+", 1, 140.0, 5.0, 1.0e-6),
        species("Cl-", -1, 0.0, 120.0, 0.1e-6),
    ];
    let mut data = bath_k_series(&s, &[5.0, 20.0, 50.0], &mut || 0.0);
    data.insert(
        1,
        DataPoint {
            value: 0.0,
            v_mv: -90.0,
            row: 9,
        },
    );
    (s, data)
}

#[test]
fn a_point_without_a_potential_is_a_model_error_not_a_failure_to_converge() {
    let (s, data) = no_potential_at_zero_bath_potassium();
    let vary = Vary::OutsideMm("K+".into());
    let e = fit(&s, &vary, &names(&["Cl-"]), &data, FitSpace::LogRatio).expect_err("no potential");
    assert!(matches!(e, FitError::NoPotential { row: 9, .. }), "{e:?}");
    let text = e.to_string();
    assert!(
        text.starts_with("row 9 (0): ") && text.contains("no resting potential"),
        "{text}"
    );
    assert!(!text.contains("converge"), "{text}");
    assert!(e.is_bad_input(), "the data point is at fault");
}

/// A potential that is not finite is a model failure with a message of its own: not worded as
/// a minimiser that did not converge, and not blamed on the user's input. (A point with no
/// resting potential is tested through a real fit above.)
#[test]
fn model_failures_in_a_fit_have_their_own_variants_and_messages() {
    let not_finite = FitError::NotFinite {
        ratios: "Cl- 0.1000".into(),
    };
    assert!(!not_finite.to_string().contains("converge"), "{not_finite}");
    assert!(!not_finite.is_bad_input(), "{not_finite}");
    let stuck = FitError::NotConverged {
        evaluations: 200,
        ratios: "Cl- 0.1000".into(),
    };
    assert!(stuck.to_string().contains("did not converge") && !stuck.is_bad_input());
}

// ---------------------------------------------------------------------------------------------
// Trace metrics and dose–response

#[test]
fn passive_step_response_has_the_membrane_time_constant() {
    // Common practice: a small current step into a passive membrane charges it exponentially
    // with τ = C/G (G the slope conductance at rest) to ΔV = I/G, so half the change takes τ·ln 2.
    let mut s = passive(37.0, 0.05, 0.3);
    let i_ua = 0.05;
    s.protocol = vec![Event::Inject {
        amplitude_ua_per_cm2: i_ua,
        from_ms: 20.0,
        until_ms: 400.0,
    }];
    s.run.duration_ms = 200.0;
    s.run.sample_ms = 0.02;
    let mut run = Run::new(&valid(&s), SolverSettings::default()).expect("run");
    run.run_to_end().expect("runs");
    let tr = run.trace();
    let m =
        trace_metrics(&tr.t_ms, tr.v_mv(), first_event_ms(&s), SpikeSettings::default()).expect("metrics");

    // The resting potential, the potential carrying the injected current, and the slope
    // conductance at rest, all from the published GHK currents (the tests' own code).
    let cell = ions(&s);
    let v0 = zero_current_mv(&cell, 37.0);
    let v_end = potential_carrying_mv(&cell, 37.0, i_ua);
    let g_ms = slope_conductance_ms_per_cm2(&cell, 37.0, v0);
    let tau_ms = s.cell.capacitance_uf_per_cm2 / g_ms;

    assert!((m.before_first_event_mv - v0).abs() < SOLVED_MV);
    // 180 ms after the step is many time constants: the trace has settled to its accuracy.
    assert!(
        180.0 > 15.0 * tau_ms,
        "test setup: τ {tau_ms} ms is short against the run"
    );
    assert!(
        (m.final_mv - v_end).abs() < ACCURACY_MV,
        "final {} vs {v_end} mV",
        m.final_mv
    );
    let dv = m.final_mv - m.before_first_event_mv;
    assert!(
        (dv - i_ua / g_ms).abs() < LINEARITY * i_ua / g_ms,
        "ΔV {dv} vs {}",
        i_ua / g_ms
    );
    let half = m.half_change_ms.expect("half time");
    assert!(
        (half - tau_ms * std::f64::consts::LN_2).abs() < LINEARITY * tau_ms,
        "half {half} ms, τ {tau_ms} ms"
    );
    // The fastest rise is at the step: I/C.
    let rise = m.max_dvdt_mv_per_ms.expect("slope");
    assert!(
        (rise - i_ua / s.cell.capacitance_uf_per_cm2).abs() < LINEARITY * i_ua,
        "{rise}"
    );
    assert_eq!(m.spike_count, 0);
}

#[test]
fn sodium_blocker_dose_response_silences_an_excitable_cell() {
    let s = excitable();
    // Untreated, every pulse of the train fires an overshooting spike (common practice for
    // clearly suprathreshold pulses).
    let mut control = s.clone();
    control.protocol.retain(|e| !matches!(e, Event::Agent { .. }));
    let mut run = Run::new(&valid(&control), SolverSettings::default()).expect("run");
    run.run_to_end().expect("runs");
    let m = trace_metrics(
        &run.trace().t_ms,
        run.trace().v_mv(),
        first_event_ms(&control),
        SpikeSettings::default(),
    )
    .expect("metrics");
    assert_eq!(m.spike_count, 4);
    assert!(m.peak_mv > 20.0, "peak {}", m.peak_mv);
    let lat = m.first_spike_latency_ms.expect("fires");
    assert!(lat > 0.0 && lat < 5.0, "latency {lat}");

    let progress = Arc::new(AtomicUsize::new(0));
    let ctl = ScanControl {
        progress: Some(progress.clone()),
        cancel: None,
    };
    let dr = dose_response(
        &s,
        "sodium blocker",
        0.001,
        1000.0,
        4,
        Some(SpikeSettings::default()),
        &ctl,
    )
    .expect("dose-response");
    assert_eq!(progress.load(Ordering::Relaxed), 8, "steady states and runs");
    assert_eq!(dr.ic50_um, 1.0);
    let counts: Vec<usize> = dr
        .points
        .iter()
        .map(|p| p.spike_count.expect("counted"))
        .collect();
    // 0.001 µM blocks 0.1 % (still fires every pulse); 1000 µM blocks 99.9 % (silent).
    assert_eq!(counts[0], 4, "{counts:?}");
    assert_eq!(counts[3], 0, "{counts:?}");
    assert!(counts.windows(2).all(|w| w[1] <= w[0]), "{counts:?}");
    // Blocking the sodium leak hyperpolarizes; the half effect lies inside the dose range.
    let v: Vec<f64> = dr.points.iter().map(|p| p.resting_mv.expect("defined")).collect();
    assert!(v.windows(2).all(|w| w[1] < w[0]), "{v:?}");
    // Where the potential passes halfway is interpolated between two doses of the range (so
    // it lies inside it by construction); that it exists is what is checked.
    assert!(dr.half_effect_dose_um.is_some(), "{:?}", dr.points);
}

#[test]
fn an_openers_dose_response_follows_ghk_with_the_opened_permeability() {
    // An opener multiplies its species' permeability by 1 + max_increase·dⁿ/(dⁿ + EC50ⁿ)
    // (scenario-format.md; Hill–Langmuir occupancy, Hill 1910, common practice). On a passive
    // cell the steady state at each dose is then the GHK voltage (Goldman 1943; Hodgkin & Katz
    // 1949) of the opened permeabilities, computed here independently of the program.
    let mut s = passive(37.0, 0.05, 0.45);
    s.protocol = vec![Event::Agent {
        label: "K opener".into(),
        species: "K+".into(),
        target: permeant::scenario::AgentTarget::Permeability,
        max_block: 1.0,
        max_increase: Some(4.0),
        ic50_um: 2.0,
        hill: 1.5,
        dose_um: 1.0,
        from_ms: 50.0,
        until_ms: None,
        onset_ms: 0.0,
        washout_ms: 0.0,
    }];
    let dr =
        dose_response(&s, "K opener", 0.01, 100.0, 5, None, &ScanControl::default()).expect("dose-response");
    let mut previous = f64::INFINITY;
    for p in &dr.points {
        let mut ions = ions(&s);
        ions[0].p_cm_per_s *= 1.0 + 4.0 * reference::fraction_blocked(1.0, 2.0, 1.5, p.dose_um);
        let want = ghk_voltage_mv(&ions, 37.0);
        let got = p.resting_mv.expect("defined");
        assert!(
            (got - want).abs() < SOLVED_MV,
            "at {} µM: {got} vs {want} mV",
            p.dose_um
        );
        // More open K+ channels pull the cell towards E_K: each dose hyperpolarizes further.
        assert!(got < previous, "at {} µM", p.dose_um);
        previous = got;
    }
    // The scan of the dose (what the window's scan tab runs) gives the same potentials.
    let scanned = scan(
        &s,
        &Vary::DoseUm("K opener".into()),
        &ScanRange {
            from: 0.01,
            to: 100.0,
            points: 5,
            log: true,
        },
        &ScanControl::default(),
    )
    .expect("scan");
    for (a, b) in scanned.iter().zip(&dr.points) {
        assert_eq!(a.resting_mv, b.resting_mv);
    }
}

/// A K+ blocker with first-order onset and washout lags on a passive membrane of small
/// capacitance (so the potential sits at its GHK value at every moment, behind it only by the
/// membrane's own time constant C/G): the run's effect at steady state is the GHK potential with
/// the blocked permeability minus the control's (the Hill equation, Hill 1910, for the block;
/// the GHK voltage equation, Goldman 1943, Hodgkin & Katz 1949), and the half times follow by
/// hand: the potential halfway, the P_K that gives it (the GHK equation solved for P_K), the
/// dose that blocks that much, and the time each lag takes to reach that dose (model.md's
/// first-order lag of the dose).
#[test]
fn an_agents_effect_and_half_times_follow_the_ghk_equation_and_its_lags() {
    let (dose, ic50, max_block, tau_on, tau_off) = (10.0, 2.0, 0.9, 30.0, 60.0);
    let (from, until) = (50.0, 350.0);
    let mut s = passive(37.0, 0.04, 0.2);
    s.cell.capacitance_uf_per_cm2 = 0.01;
    s.protocol = vec![Event::Agent {
        label: "K blocker".into(),
        species: "K+".into(),
        target: Default::default(),
        max_block,
        max_increase: None,
        ic50_um: ic50,
        hill: 1.0,
        dose_um: dose,
        from_ms: from,
        until_ms: Some(until),
        onset_ms: tau_on,
        washout_ms: tau_off,
    }];
    s.run.duration_ms = 900.0;
    s.run.sample_ms = 0.05;
    let mut run = Run::new(&valid(&s), SolverSettings::default()).expect("run");
    run.run_to_end().expect("runs");
    let tr = run.trace();
    let m = run_metrics(&s, &tr.t_ms, tr.v_mv(), SpikeSettings::default()).expect("metrics");
    let a = m.agent.expect("an acting agent");

    let cell = ions(&s);
    let control = ghk_voltage_mv(&cell, 37.0);
    let blocked = |b: f64| {
        let mut c = cell.clone();
        c[0].p_cm_per_s *= 1.0 - b;
        ghk_voltage_mv(&c, 37.0)
    };
    // Ten onset time constants: the lagged dose is within e^-10 of its value.
    let steady = blocked(reference::fraction_blocked(
        max_block,
        ic50,
        1.0,
        dose * (1.0 - (-10f64).exp()),
    ));
    let effect = a.effect_mv.expect("an effect");
    assert!(
        (effect - (steady - control)).abs() < ACCURACY_MV,
        "effect {effect} mV, by hand {} mV",
        steady - control
    );
    // Halfway: x = e^{V/(RT/F)} = (P_K K_o + B)/(P_K K_i + A), so P_K = (B − xA)/(x K_i − K_o),
    // with A = P_Na Na_i + P_Cl Cl_o and B = P_Na Na_o + P_Cl Cl_i.
    let half_mv = control + 0.5 * effect;
    let x = (half_mv / reference::rt_over_f_mv(37.0)).exp();
    let (k, na, cl) = (&cell[0], &cell[1], &cell[2]);
    let big_a = na.p_cm_per_s * na.inside_mm + cl.p_cm_per_s * cl.outside_mm;
    let big_b = na.p_cm_per_s * na.outside_mm + cl.p_cm_per_s * cl.inside_mm;
    let pk_half = (big_b - x * big_a) / (x * k.inside_mm - k.outside_mm);
    let b_half = 1.0 - pk_half / k.p_cm_per_s;
    let d_half = ic50 * b_half / (max_block - b_half);
    let onset_ms = -tau_on * (1.0 - d_half / dose).ln();
    let d_end = dose * (1.0 - (-(until - from) / tau_on).exp());
    let washout_ms = tau_off * (d_end / d_half).ln();
    // The membrane's own time constant at rest, C/G (common practice), delays the potential
    // behind its GHK value; a sample interval bounds where a crossing is read.
    let tau_m = s.cell.capacitance_uf_per_cm2 / slope_conductance_ms_per_cm2(&cell, 37.0, control);
    let tolerance = 2.0 * tau_m + s.run.sample_ms;
    assert!(tau_m < 0.1, "test setup: the membrane is fast, τ {tau_m} ms");
    let got = a.onset_half_ms.expect("onset half time");
    assert!(
        (got - onset_ms).abs() < tolerance,
        "onset {got} ms, by hand {onset_ms} ms"
    );
    let got = a.washout_half_ms.expect("washout half time");
    assert!(
        (got - washout_ms).abs() < tolerance,
        "washout {got} ms, by hand {washout_ms} ms"
    );
}
