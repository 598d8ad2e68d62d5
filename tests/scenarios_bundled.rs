//! The bundled example scenarios: each reads and validates, has a defined resting potential,
//! runs quickly to its end, carries notes in the shape the window shows, and does what its
//! notes say (the excitable one fires on every pulse, well above threshold).

use std::path::{Path, PathBuf};

mod common;
use common::reference::{Ion, fraction_blocked, nernst_mv, rt_over_f_mv, zero_current_mv};
use common::valid;
use permeant::analysis::block::dose_block;
use permeant::analysis::family::{FamilyTable, Measure, analyse, run_family};
use permeant::analysis::metrics::SpikeSettings;
use permeant::analysis::rest_report;
use permeant::analysis::scan::ScanControl;
use permeant::engine::{Run, SolverSettings};
use permeant::scenario::{Event, RunMode, Scenario, Start, Valid, read_file};

/// model.md's accuracy of a trace at every output sample.
const ACCURACY_MV: f64 = 0.01;
/// The physiological range of a resting potential (common practice).
const RESTING_RANGE_MV: std::ops::Range<f64> = -100.0..-40.0;
/// An action potential overshoots 0 mV clearly (common practice for a healthy spike).
const OVERSHOOT_MV: f64 = 20.0;

/// The potential where the published GHK currents of `s`'s species sum to zero (the tests' own
/// bisection, model.md's equations), with the named species' bath concentrations and
/// permeability factors changed: where a passive example settles once its lags have run out.
fn settled_mv(s: &Valid, outside_mm: &[(&str, f64)], p_factor: &[(&str, f64)]) -> f64 {
    assert!(
        s.channels.is_empty() && s.pump.is_none(),
        "{}: not passive",
        s.title
    );
    let changed = |list: &[(&str, f64)], name: &str| list.iter().find(|(n, _)| *n == name).map(|x| x.1);
    let ions: Vec<Ion> = s
        .species
        .iter()
        .map(|x| Ion {
            charge: x.charge,
            inside_mm: x.inside_mm,
            outside_mm: changed(outside_mm, &x.name).unwrap_or(x.outside_mm),
            p_cm_per_s: x.permeability_cm_per_s * changed(p_factor, &x.name).unwrap_or(1.0),
        })
        .collect();
    zero_current_mv(&ions, s.temperature_c)
}

/// V at `t_ms` is `want` to model.md's accuracy.
fn assert_at(r: &Run, t_ms: f64, want: f64, what: &str) {
    let got = v_at(r, t_ms);
    assert!(
        (got - want).abs() < ACCURACY_MV,
        "{what} at {t_ms} ms: {got} vs {want} mV"
    );
}

fn bundled_paths() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("scenarios");
    let mut paths: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("cannot list {}: {e}", dir.display()))
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "ron"))
        .collect();
    paths.sort();
    paths
}

fn bundled() -> Vec<(String, Valid)> {
    bundled_paths()
        .into_iter()
        .map(|p| {
            let name = p
                .file_name()
                .map(|n| n.to_string_lossy().into_owned())
                .unwrap_or_default();
            let s = read_file(&p).unwrap_or_else(|e| panic!("{e}"));
            (name, s)
        })
        .collect()
}

fn by_name(name: &str) -> Valid {
    bundled()
        .into_iter()
        .find(|(n, _)| n == name)
        .unwrap_or_else(|| panic!("{name} is not bundled"))
        .1
}

fn run(s: &Valid) -> Run {
    let mut r = Run::new(s, SolverSettings::default()).unwrap_or_else(|e| panic!("{}: {e}", s.title));
    r.run_to_end().unwrap_or_else(|e| panic!("{}: {e}", s.title));
    r
}

/// V at the sample nearest to `t_ms`.
fn v_at(r: &Run, t_ms: f64) -> f64 {
    let tr = r.trace();
    let k = tr.t_ms.partition_point(|&t| t < t_ms).min(tr.len() - 1);
    tr.v_mv()[k]
}

/// Largest V over samples with `a ≤ t < b`.
fn max_v_in(r: &Run, a: f64, b: f64) -> f64 {
    let tr = r.trace();
    tr.t_ms
        .iter()
        .zip(tr.v_mv())
        .filter(|(t, _)| **t >= a && **t < b)
        .map(|(_, v)| *v)
        .fold(f64::NEG_INFINITY, f64::max)
}

#[test]
fn every_bundled_scenario_reads_validates_and_rests() {
    let all = bundled();
    assert!(all.len() >= 7, "only {} bundled scenarios", all.len());
    for (name, s) in &all {
        let report = rest_report(s).unwrap_or_else(|e| panic!("{name}: {e}"));
        let rest = report
            .resting_mv()
            .unwrap_or_else(|| panic!("{name}: no resting potential: {:?}", report.steady.resting_mv));
        // A clamped cell is held wherever the experiment needs (bi-ionic solutions rest far
        // from any physiological potential).
        if s.run.mode == RunMode::CurrentClamp {
            assert!(RESTING_RANGE_MV.contains(&rest), "{name}: rests at {rest} mV");
        }
        assert!(report.ghk_mv.is_ok(), "{name}: {:?}", report.ghk_mv);
    }
}

#[test]
fn bundled_notes_have_the_shape_the_window_shows() {
    for (name, s) in bundled() {
        assert!(!s.title.trim().is_empty(), "{name}: no title");
        let lines: Vec<&str> = s.notes.lines().collect();
        assert!(
            (3..=8).contains(&lines.len()),
            "{name}: {} lines of notes",
            lines.len()
        );
        assert!(
            lines[0].starts_with("# "),
            "{name}: notes do not open with a heading"
        );
        assert!(
            lines.iter().all(|l| !l.trim().is_empty()),
            "{name}: blank line in notes"
        );
        for text in [&s.title, &s.notes] {
            // Words an outside file checker keys on, kept out of the free text.
            let lower = text.to_lowercase();
            for word in ["species", "sample_ms", "duration_ms"] {
                assert!(!lower.contains(word), "{name}: free text contains `{word}`");
            }
        }
    }
}

#[test]
fn every_bundled_run_is_modest_and_starts_at_rest() {
    for (name, s) in bundled() {
        let n = (s.run.duration_ms / s.run.sample_ms).floor() + 1.0;
        assert!(n < 200_000.0, "{name}: {n} samples");
        let r = run(&s);
        let tr = r.trace();
        assert_eq!(tr.t_ms.last().copied(), Some(s.run.duration_ms), "{name}");
        assert!(
            tr.v_mv().iter().all(|v| v.is_finite() && v.abs() < 200.0),
            "{name}"
        );
        if let RunMode::VoltageClamp { holding_mv, .. } = s.run.mode {
            // clamp-and-volume.md: a clamped run starts at its holding potential (or on the
            // command in force at t = 0).
            let first = s.protocol.iter().any(|e| e.span_ms().0 == 0.0);
            assert!(
                first || tr.v_mv()[0] == holding_mv,
                "{name}: starts at {}",
                tr.v_mv()[0]
            );
        } else if s.run.start == Start::Rest {
            let rest = rest_report(&s)
                .ok()
                .and_then(|x| x.resting_mv())
                .unwrap_or(f64::NAN);
            assert!(
                (tr.v_mv()[0] - rest).abs() < 1e-9,
                "{name}: starts at {} not {rest}",
                tr.v_mv()[0]
            );
        }
    }
}

#[test]
fn the_required_kinds_of_example_are_all_bundled() {
    let all: Vec<Scenario> = bundled().into_iter().map(|x| x.1.into_inner()).collect();
    let has = |f: &dyn Fn(&Scenario) -> bool| all.iter().any(f);
    let passive = |s: &Scenario| s.channels.is_empty() && s.pump.is_none();
    assert!(
        has(&|s| passive(s) && s.protocol.iter().all(|e| matches!(e, Event::Inject { .. }))),
        "plain resting cell"
    );
    assert!(
        has(&|s| s.protocol.iter().any(
            |e| matches!(e, Event::BathChange { species, lag_ms, .. } if species == "K+" && *lag_ms > 0.0)
        )),
        "raised bath K+"
    );
    assert!(
        has(&|s| {
            s.species.iter().any(|x| x.charge == 2)
                && s.protocol
                    .iter()
                    .any(|e| matches!(e, Event::PermeabilityScale { species, .. } if species == "Ca2+"))
        }),
        "calcium pulse"
    );
    assert!(
        has(&|s| {
            s.cell.track_concentrations
                && s.pump
                    .as_ref()
                    .is_some_and(|p| p.exported_per_cycle == 3 && p.imported_per_cycle == 2)
        }),
        "electrogenic pump with tracking"
    );
    assert!(
        has(&|s| s.channels.len() >= 2 && s.protocol.iter().any(|e| matches!(e, Event::InjectTrain { .. }))),
        "excitable cell"
    );
    assert!(
        has(&|s| passive(s)
            && s.protocol
                .iter()
                .any(|e| matches!(e, Event::Agent { species, until_ms: Some(_), .. } if species == "K+"))),
        "blocker wash-in and washout"
    );
}

#[test]
fn excitable_cell_fires_on_every_pulse_well_above_threshold() {
    let s = by_name("excitable-cell-pulse-train.ron");
    let Some(&Event::InjectTrain {
        amplitude_ua_per_cm2,
        width_ms,
        period_ms,
        count,
        from_ms,
    }) = s.protocol.first()
    else {
        panic!("the excitable scenario should open its protocol with a pulse train");
    };
    let r = run(&s);
    assert!(r.trace().v_mv().iter().any(|&v| v > 0.0));
    for k in 0..count {
        let a = from_ms + f64::from(k) * period_ms;
        let peak = max_v_in(&r, a, a + period_ms);
        assert!(peak > OVERSHOOT_MV, "pulse {k}: peak {peak} mV");
        // Back near rest before the next pulse: each pulse fires its own spike.
        assert!(
            v_at(&r, a + period_ms - 0.5) < -55.0,
            "pulse {k} leaves the cell depolarized"
        );
    }
    // model.md: no stimulus near threshold. Half the amplitude must still fire, and a tenth
    // must not, so the threshold sits well inside the range and far from the pulses used.
    for (fraction, fires) in [(0.5, true), (0.1, false)] {
        let mut single = s.clone().into_inner();
        single.protocol = vec![Event::InjectTrain {
            amplitude_ua_per_cm2: amplitude_ua_per_cm2 * fraction,
            width_ms,
            period_ms,
            count: 1,
            from_ms,
        }];
        let peak = max_v_in(&run(&valid(&single)), from_ms, from_ms + period_ms);
        assert_eq!(peak > 0.0, fires, "{fraction} of the pulse: peak {peak} mV");
    }
}

/// Each passive example settles where the GHK currents of its changed solution sum to zero
/// (model.md, computed here), and moves by what its notes say.
#[test]
fn passive_examples_move_as_their_notes_say() {
    // Raised bath K+: about 25 mV of depolarization once the exchange is complete.
    let s = by_name("raised-bath-potassium.ron");
    let r = run(&s);
    assert_at(&r, 0.0, settled_mv(&s, &[], &[]), "rest");
    // 190 ms after the change is over twelve of its 15 ms lags.
    assert_at(
        &r,
        s.run.duration_ms,
        settled_mv(&s, &[("K+", 25.0)], &[]),
        "raised K+",
    );
    let shift = v_at(&r, s.run.duration_ms) - v_at(&r, 0.0);
    assert!((20.0..30.0).contains(&shift), "raised K+: {shift} mV");

    // Calcium pulse: about 10 mV of depolarization, fully reversed by the end.
    let s = by_name("calcium-permeability-pulse.ron");
    let r = run(&s);
    let rise = max_v_in(&r, 0.0, s.run.duration_ms) - v_at(&r, 0.0);
    assert!((7.0..13.0).contains(&rise), "Ca2+ pulse: {rise} mV");
    // 110 ms after the pulse is about nine of this cell's membrane time constants.
    assert_at(&r, s.run.duration_ms, settled_mv(&s, &[], &[]), "after the pulse");

    // Blocker: depolarizes while present, recovers most of the way after washout.
    let s = by_name("potassium-blocker-washin.ron");
    let r = run(&s);
    let v0 = v_at(&r, 0.0);
    let blocked = v_at(&r, 499.0);
    let end = v_at(&r, s.run.duration_ms);
    assert!(blocked - v0 > 10.0, "blocker: {v0} → {blocked} mV");
    assert!(
        (end - v0).abs() < 0.2 * (blocked - v0),
        "blocker washout: {end} mV"
    );
    // 10 µM blocks 0.9·10/(10 + 2) of P_K (Hill 1910, as model.md writes it); by 499 ms the
    // dose has had ten of its 40 ms onset lags. (During washout the potential trails the
    // falling dose by the membrane's own time constant, so no settled value is checked there.)
    let full = fraction_blocked(0.9, 2.0, 1.0, 10.0);
    assert_at(&r, 499.0, settled_mv(&s, &[], &[("K+", 1.0 - full)]), "blocked");

    // Sodium substitution: each step hyperpolarizes by several mV, and the cell comes back.
    let s = by_name("sodium-substitution-steps.ron");
    let r = run(&s);
    let plateaus: Vec<f64> = [99.0, 199.0, 299.0, 399.0].iter().map(|&t| v_at(&r, t)).collect();
    for w in plateaus.windows(2) {
        assert!(
            (3.0..8.0).contains(&(w[0] - w[1])),
            "substitution steps {plateaus:?}"
        );
    }
    // (The 100 ms steps last only about five membrane time constants, so the plateaus come
    // within a few hundredths of a millivolt of their GHK potentials, not model.md's 0.01 mV.)

    // Chloride substitution: depolarizes while bath Cl- is low.
    let s = by_name("chloride-substitution.ron");
    let r = run(&s);
    let low = v_at(&r, 279.0) - v_at(&r, 0.0);
    assert!((10.0..20.0).contains(&low), "Cl- substitution: {low} mV");
    assert_at(&r, 279.0, settled_mv(&s, &[("Cl-", 12.0)], &[]), "low Cl-");
    assert_at(&r, s.run.duration_ms, settled_mv(&s, &[], &[]), "Cl- back");
}

#[test]
fn pump_example_clears_its_sodium_load() {
    let s = by_name("sodium-pump-recovery.ron");
    let r = run(&s);
    let tr = r.trace();
    // Tracked inside concentrations follow V, gates and lags in the state, in file order.
    let conc = r.model().conc_offset();
    let col = |name: &str| {
        let sp = s.species_index(name).unwrap_or_else(|| panic!("no {name}"));
        &tr.columns[conc + sp]
    };
    let na = col("Na+");
    let k = col("K+");
    let (na0, na1) = (na[0], na[na.len() - 1]);
    let (k0, k1) = (k[0], k[k.len() - 1]);
    // Visible drift over the minute: Na+ down by a few mM, K+ up.
    assert!(na0 - na1 > 2.0 && na0 - na1 < 6.0, "Na+ inside {na0} → {na1} mM");
    assert!(k1 > k0 + 1.0, "K+ inside {k0} → {k1} mM");
    // The pump holds the cell well below its passive GHK potential.
    let report = rest_report(&s).expect("valid");
    let ghk = report.ghk_mv.clone().expect("defined");
    let rest = report.resting_mv().expect("defined");
    assert!(ghk - rest > 5.0, "pump hyperpolarization {} mV", ghk - rest);
}

// ---------------------------------------------------------------------------------------------
// The families of voltage clamp and current injection (clamp-and-volume.md)

/// The file's own family, run and measured.
fn file_family(name: &str, measures: &[Measure]) -> FamilyTable {
    let s = by_name(name).into_inner();
    let family = s
        .run
        .family
        .clone()
        .unwrap_or_else(|| panic!("{name}: no family"));
    let values = family.values().unwrap_or_else(|e| panic!("{name}: {e}"));
    let runs = run_family(
        &s,
        family.field(),
        &values,
        &SolverSettings::default(),
        &ScanControl::default(),
    )
    .unwrap_or_else(|e| panic!("{name}: {e}"));
    analyse(&runs, measures, SpikeSettings::default())
}

#[test]
fn the_activation_family_reverses_at_e_k_and_activates_with_depolarization() {
    let s = by_name("delayed-potassium-activation-family.ron");
    let t = file_family(
        "delayed-potassium-activation-family.ron",
        &[Measure::Late {
            from_ms: 40.0,
            until_ms: 45.0,
        }],
    );
    // Only potassium is permeant, so the current reverses at its Nernst potential (Nernst 1889):
    // the interpolated crossing lies between the two levels around it.
    let k = &s.species[0];
    let e_k = nernst_mv(k.charge, k.inside_mm, k.outside_mm, s.temperature_c);
    let e = t.reversal_mv.expect("reverses");
    assert!((e - e_k).abs() < 10.0, "{e} vs {e_k}");
    // Hodgkin & Huxley 1952: n∞ rises with V, so G/G_max is a rising sigmoid.
    let b = t.boltzmann.expect("fitted");
    assert!(b.slope_mv > 0.0 && b.se_v_half_mv < 5.0, "{b:?}");
}

#[test]
fn the_blocker_family_blocks_half_the_current_at_its_ic50() {
    let t = file_family(
        "potassium-blocker-fraction-blocked.ron",
        &[Measure::Late {
            from_ms: 40.0,
            until_ms: 45.0,
        }],
    );
    // The Hill equation (Hill 1910) with the file's own IC50, Hill coefficient and full block.
    for (d, b) in t.values.iter().zip(&t.blocked) {
        let want = fraction_blocked(1.0, 3.0, 1.0, *d);
        let got = b.expect("a control current");
        assert!((got - want).abs() < 1e-4, "{d} µM: {got} vs {want}");
    }
}

#[test]
fn the_blocker_familys_hill_fit_gives_back_its_ic50_and_hill_coefficient() {
    let t = file_family(
        "potassium-blocker-fraction-blocked.ron",
        &[Measure::Late {
            from_ms: 40.0,
            until_ms: 45.0,
        }],
    );
    let d = dose_block(&t, 0).unwrap_or_else(|e| panic!("{e}"));
    for x in &d.doses {
        eprintln!(
            "{} µM: {:?} µA/cm², blocked {:?}",
            x.dose_um, x.current, x.blocked
        );
    }
    let f = d.fit.unwrap_or_else(|e| panic!("{e}"));
    eprintln!("{f:?}");
    // The file's blocker (its notes): IC50 3 µM, Hill coefficient 1 (Hill 1910). The file's
    // small Na+ leak is not blocked, so the fraction of the whole current is the K+ fraction
    // times I_K/(I_K + I_Na) (about 1.0001 here): the two-parameter fit is pulled by that much,
    // a little beyond one standard error (2.6 and 2.1 of them when this was written), and
    // within three.
    assert!((f.ic50_um - 3.0).abs() <= 3.0 * f.se_ic50_um, "{f:?}");
    assert!((f.hill - 1.0).abs() <= 3.0 * f.se_hill, "{f:?}");
    assert!(
        (f.ic50_um / 3.0 - 1.0).abs() < 1e-3 && (f.hill - 1.0).abs() < 1e-3,
        "{f:?}"
    );
}

#[test]
fn the_bi_ionic_family_gives_back_its_permeability_ratio() {
    let s = by_name("bi-ionic-reversal.ron");
    let t = file_family(
        "bi-ionic-reversal.ron",
        &[Measure::Late {
            from_ms: 5.0,
            until_ms: 10.0,
        }],
    );
    let e = t.reversal_mv.expect("reverses");
    // Hille, Ion Channels of Excitable Membranes: P_K/P_Na = ([Na]_i/[K]_o)·e^(F·E_rev/RT).
    let ratio = (150.0 / 150.0) * (e / rt_over_f_mv(s.temperature_c)).exp();
    let want = s.species[0].permeability_cm_per_s / s.species[1].permeability_cm_per_s;
    // 5 mV between levels: the straight line misses the curved I–V by under 0.5 %.
    assert!((ratio / want - 1.0).abs() < 5e-3, "{ratio} vs {want}");
}

#[test]
fn the_injection_family_has_a_rheobase_where_its_notes_say() {
    let t = file_family(
        "current-injection-rheobase.ron",
        &[Measure::Spikes {
            from_ms: 10.0,
            until_ms: 160.0,
        }],
    );
    let first = t
        .values
        .iter()
        .zip(&t.cells)
        .find(|(_, c)| c[0].value.unwrap_or(0.0) >= 1.0)
        .map(|(v, _)| *v);
    assert_eq!(first, Some(4.5));
}
