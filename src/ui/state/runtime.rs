//! The live run behind the window: advances the engine a bounded amount each frame, paces what
//! is shown to the chosen speed, takes scenario edits mid-run, and keeps the quantities derived
//! from each stored sample (currents, permeabilities) so that no frame recomputes old samples.

use std::time::{Duration, Instant};

use crate::engine::{Budget, Progress, Readout, Run, SolverSettings, Trace};
use crate::scenario::{Scenario, Valid};

use crate::ui::state::document::Revision;
use crate::ui::state::prefs::Speed;

/// Quantities computed once per stored sample, in the trace's order.
#[derive(Debug, Clone, Default)]
pub struct Derived {
    /// Species names the columns belong to.
    pub species: Vec<String>,
    /// Each species' current, µA/cm² (outward positive).
    pub currents_ua_per_cm2: Vec<Vec<f64>>,
    pub pump_ua_per_cm2: Vec<f64>,
    /// Sum of species and pump currents.
    pub net_ua_per_cm2: Vec<f64>,
    /// Injected current, µA/cm² (depolarizing positive).
    pub inject_ua_per_cm2: Vec<f64>,
    /// In voltage clamp, the recorded current (µA/cm², outward positive) and the command (mV).
    pub clamp_ua_per_cm2: Vec<f64>,
    pub command_mv: Vec<f64>,
    /// log10 of each species' total permeability (cm/s); not finite where it is 0.
    pub log10_p: Vec<Vec<f64>>,
    /// Each species' reversal potential at each sample, mV, for species whose concentrations
    /// change during the run (bath exchanges, tracked inside concentrations); not a number for
    /// the others, whose reversal potential is the file's.
    pub reversal_mv: Vec<Vec<f64>>,
    /// Whether each species' concentrations change during the run (so `reversal_mv` holds it).
    pub varying: Vec<bool>,
    /// Relative volume (1 for a fixed volume), inside and bath osmolarity (mOsm) per sample.
    pub volume_rel: Vec<f64>,
    pub osm_in_mosm: Vec<f64>,
    pub osm_out_mosm: Vec<f64>,
    /// Each species' inside concentration in force at each sample, mM.
    pub inside_mm: Vec<Vec<f64>>,
    /// The GHK potential of the resting permeabilities with the concentrations in force at
    /// each sample (`Membrane::ghk_potential_mv`), mV, when any concentration changes during
    /// the run; empty otherwise (the file's GHK potential holds throughout).
    pub ghk_mv: Vec<f64>,
    /// Samples done for the currents and for the permeabilities.
    currents_done: usize,
    perms_done: usize,
}

impl Derived {
    fn follow_species(&mut self, names: &[String]) {
        if self.species == names {
            return;
        }
        // Columns follow their species by name; a new species has no past.
        let remap = |old: &mut Vec<Vec<f64>>, old_names: &[String], len: usize| {
            let mut taken: Vec<Option<Vec<f64>>> = std::mem::take(old).into_iter().map(Some).collect();
            *old = names
                .iter()
                .map(|n| {
                    old_names
                        .iter()
                        .position(|o| o == n)
                        .and_then(|j| taken.get_mut(j).and_then(Option::take))
                        .unwrap_or_else(|| vec![f64::NAN; len])
                })
                .collect();
        };
        let old_names = self.species.clone();
        remap(&mut self.currents_ua_per_cm2, &old_names, self.currents_done);
        remap(&mut self.log10_p, &old_names, self.perms_done);
        remap(&mut self.reversal_mv, &old_names, self.currents_done);
        remap(&mut self.inside_mm, &old_names, self.currents_done);
        self.species = names.to_vec();
    }

    /// Computes currents (and changing reversal potentials) for samples not yet done, at most
    /// [`DERIVED_PER_FRAME`] a frame: a tiny sample interval at the fastest speed can add more
    /// samples in one frame than their currents take to compute within it.
    fn update_currents(&mut self, run: &mut Run, scratch: &mut Vec<f64>) {
        let len = run.trace().len().min(self.currents_done + DERIVED_PER_FRAME);
        let mut r: Readout = run.model().readout();
        let varying = run.model().concentrations_vary();
        let any_varying = varying.iter().any(|v| *v);
        self.varying.clone_from(&varying);
        while self.currents_done < len {
            let k = self.currents_done;
            let t = run.trace().t_ms[k];
            scratch.resize(run.trace().columns.len(), 0.0);
            run.trace().state(k, scratch);
            let model = run.model();
            model.read(t, scratch, &mut r);
            let c = &r.currents;
            for (col, i) in self.currents_ua_per_cm2.iter_mut().zip(&c.species_ua_per_cm2) {
                col.push(*i);
            }
            self.pump_ua_per_cm2.push(c.pump_ua_per_cm2);
            self.net_ua_per_cm2.push(c.net_ua_per_cm2);
            self.inject_ua_per_cm2.push(c.inject_ua_per_cm2);
            self.volume_rel.push(r.volume_rel);
            self.osm_in_mosm.push(r.osm_in_mosm);
            self.osm_out_mosm.push(r.osm_out_mosm);
            self.clamp_ua_per_cm2.push(c.clamp_ua_per_cm2);
            self.command_mv.push(c.command_mv);
            for (col, c) in self.inside_mm.iter_mut().zip(&r.conditions.inside_mm) {
                col.push(*c);
            }
            if any_varying {
                for (s, col) in self.reversal_mv.iter_mut().enumerate() {
                    let e = match varying.get(s) {
                        Some(true) => model.reversal_mv(s, &r.conditions),
                        _ => None,
                    };
                    col.push(e.unwrap_or(f64::NAN));
                }
                // Padded when the concentrations started to vary only after an edit mid-run.
                self.ghk_mv.resize(k, f64::NAN);
                let ghk = model.membrane.ghk_potential_mv(&r.conditions);
                self.ghk_mv.push(ghk.unwrap_or(f64::NAN));
            } else {
                self.reversal_mv.iter_mut().for_each(|c| c.push(f64::NAN));
            }
            self.currents_done += 1;
        }
    }

    /// Computes permeabilities for every sample not yet done.
    fn update_perms(&mut self, run: &mut Run, scratch: &mut Vec<f64>) {
        // Catching up on a long trace (the view was just switched on) is spread over frames.
        let len = run.trace().len().min(self.perms_done + DERIVED_PER_FRAME);
        let mut cond = crate::physics::Conditions::default();
        while self.perms_done < len {
            let k = self.perms_done;
            scratch.resize(run.trace().columns.len(), 0.0);
            run.trace().state(k, scratch);
            let model = run.model();
            model.conditions(scratch, 0.0, &mut cond);
            let gates = model.gates(scratch);
            for (s, col) in self.log10_p.iter_mut().enumerate() {
                col.push(model.membrane.permeability_cm_per_s(s, gates, &cond).log10());
            }
            self.perms_done += 1;
        }
    }
}

/// The cell at one stored sample, for the readouts "now".
#[derive(Debug, Clone, PartialEq)]
pub struct Snapshot {
    pub t_ms: f64,
    pub v_mv: f64,
    /// The GHK potential with the concentrations in force (resting permeabilities).
    pub ghk_mv: Option<f64>,
    pub species: Vec<String>,
    /// Concentrations in force, mM.
    pub inside_mm: Vec<f64>,
    pub outside_mm: Vec<f64>,
    /// Each species' reversal potential with the concentrations in force, mV.
    pub reversal_mv: Vec<Option<f64>>,
    /// Whether each species' concentrations change during the run.
    pub varying: Vec<bool>,
}

/// A stored state `y` at `t_ms` read through the model: the snapshot and the engine's readout.
fn snapshot_of(model: &crate::engine::Model, t_ms: f64, y: &[f64]) -> (Snapshot, Readout) {
    let mut r = model.readout();
    model.read(t_ms, y, &mut r);
    let cond = &r.conditions;
    let t_c = model.membrane.temperature_c;
    let reversal_mv = model
        .membrane
        .ions
        .iter()
        .enumerate()
        .map(|(s, ion)| {
            let (inside, outside) = (cond.inside_mm.get(s)?, cond.outside_mm.get(s)?);
            crate::physics::nernst_mv(ion.charge, *inside, *outside, t_c)
        })
        .collect();
    let snapshot = Snapshot {
        t_ms,
        v_mv: y.first().copied().unwrap_or(f64::NAN),
        ghk_mv: model.membrane.ghk_potential_mv(cond).ok(),
        species: model.species_names.clone(),
        inside_mm: cond.inside_mm.clone(),
        outside_mm: cond.outside_mm.clone(),
        reversal_mv,
        varying: model.concentrations_vary(),
    };
    (snapshot, r)
}

/// Samples whose derived quantities (currents, permeabilities) are computed per frame at most.
const DERIVED_PER_FRAME: usize = 50_000;

/// Accepted steps per second of wall time, over the last half second or so.
#[derive(Debug, Clone, Default)]
struct StepMeter {
    window_start: Option<(Instant, u64)>,
    rate: f64,
}

impl StepMeter {
    fn note(&mut self, now: Instant, accepted: u64, running: bool) {
        if !running {
            self.window_start = None;
            self.rate = 0.0;
            return;
        }
        match self.window_start {
            None => self.window_start = Some((now, accepted)),
            Some((t0, n0)) => {
                let dt = now.duration_since(t0).as_secs_f64();
                if dt >= 0.5 {
                    self.rate = accepted.saturating_sub(n0) as f64 / dt;
                    self.window_start = Some((now, accepted));
                }
            }
        }
    }
}

/// The run in progress and how it is shown.
pub struct Runtime {
    run: Option<Run>,
    /// The scenario the run is running (to start it over after the end).
    scenario: Valid,
    /// The document revision `scenario` is (to notice edits).
    revision: Option<Revision>,
    /// Why the run could not start or stopped early.
    pub error: Option<String>,
    pub running: bool,
    /// Simulated time shown so far: paced to the chosen speed, never ahead of the run.
    shown_ms: f64,
    pub derived: Derived,
    meter: StepMeter,
    scratch: Vec<f64>,
    /// Changes whenever a new run starts or the trace's columns change meaning, so that views
    /// can drop what they cached about the old ones.
    pub generation: u64,
    /// The state the run starts from, read at the last restart.
    start: Option<(Snapshot, Readout)>,
}

/// Solver settings for the window: the default tolerances, with steps short enough that an edit
/// made while running takes effect within a small fraction of the run. A thousandth of the run
/// (not a fixed 5 ms, which made a ten-minute volume run take 120 000 steps and fall behind a
/// speed of minutes per second).
fn window_settings(s: &Scenario) -> SolverSettings {
    SolverSettings {
        h_max_ms: (s.run.duration_ms / 1000.0).clamp(0.05, 1000.0),
        ..SolverSettings::default()
    }
}

impl Runtime {
    /// A run of `s` at t = 0, paused.
    pub fn new(s: &Valid) -> Self {
        let mut r = Runtime {
            run: None,
            scenario: s.clone(),
            revision: None,
            error: None,
            running: false,
            shown_ms: 0.0,
            derived: Derived::default(),
            meter: StepMeter::default(),
            scratch: Vec::new(),
            generation: 0,
            start: None,
        };
        r.restart(s);
        r
    }

    pub fn run(&self) -> Option<&Run> {
        self.run.as_ref()
    }

    pub fn run_mut(&mut self) -> Option<&mut Run> {
        self.run.as_mut()
    }

    pub fn trace(&self) -> Option<&Trace> {
        self.run.as_ref().map(Run::trace)
    }

    /// Starts again at t = 0 with `s`, keeping the running/paused state.
    pub fn restart(&mut self, s: &Valid) {
        self.scenario = s.clone();
        self.generation += 1;
        self.shown_ms = 0.0;
        self.derived = Derived::default();
        self.meter = StepMeter::default();
        match Run::new(s, window_settings(s)) {
            Ok(run) => {
                self.start = Some(snapshot_of(run.model(), run.t_ms(), run.state()));
                self.run = Some(run);
                self.error = None;
            }
            Err(e) => {
                self.run = None;
                self.start = None;
                self.error = Some(e.to_string());
                self.running = false;
            }
        }
        self.follow_layout();
    }

    /// A run of revision `revision` of a document's scenario `s` at t = 0, paused.
    pub fn for_revision(revision: Revision, s: &Valid) -> Self {
        let mut r = Runtime::new(s);
        r.revision = Some(revision);
        r
    }

    /// Takes the document's scenario when it is a revision this run has not taken yet.
    pub fn follow(&mut self, revision: Revision, s: &Valid) {
        if self.revision != Some(revision) {
            self.revision = Some(revision);
            self.scenario_changed(s);
        }
    }

    /// Starts a newly opened document's run at t = 0, paused.
    pub fn open(&mut self, revision: Revision, s: &Valid) {
        self.running = false;
        self.restart(s);
        self.revision = Some(revision);
    }

    /// Takes an edited scenario: a run that has not moved yet starts over (so "start at rest"
    /// uses the new resting state); one under way continues from its present state.
    pub fn scenario_changed(&mut self, s: &Valid) {
        let moved = self.run.as_ref().is_some_and(|r| r.t_ms() > 0.0);
        if !moved {
            self.restart(s);
            return;
        }
        self.scenario = s.clone();
        let layout_before = self.layout();
        if let Some(run) = &mut self.run {
            run.update_scenario(s);
            self.error = None;
        }
        self.follow_layout();
        if self.layout() != layout_before {
            self.generation += 1;
        }
    }

    /// Names of the trace's columns and of the derived species columns.
    fn layout(&self) -> (Vec<String>, Vec<String>) {
        let names = self
            .run
            .as_ref()
            .map(|r| r.trace().names.clone())
            .unwrap_or_default();
        (names, self.derived.species.clone())
    }

    fn follow_layout(&mut self) {
        if let Some(run) = &self.run {
            let names = run.model().species_names.clone();
            self.derived.follow_species(&names);
        }
    }

    /// Run ↔ pause. Pressing run after the end starts over.
    pub fn toggle(&mut self) {
        if self.running {
            self.running = false;
            return;
        }
        if self.run.as_ref().is_some_and(Run::is_finished) || self.run.is_none() {
            let s = self.scenario.clone();
            self.restart(&s);
        }
        self.running = self.run.is_some();
    }

    /// Advances by `dt_s` seconds of wall time at `speed`, spending at most `budget`.
    pub fn advance_frame(&mut self, dt_s: f64, speed: Speed, budget: Duration) {
        let now = Instant::now();
        let Some(run) = &mut self.run else {
            self.running = false;
            return;
        };
        if self.running {
            let dt = dt_s.clamp(0.0, 0.1);
            let target = match speed.resolved(run.duration_ms()) {
                Speed::MsPerSecond(r) => (self.shown_ms + r * dt).min(run.duration_ms()),
                Speed::Fastest | Speed::Auto => f64::INFINITY,
            };
            let deadline = now + budget;
            loop {
                if run.t_ms() >= target {
                    break;
                }
                match run.advance(Budget {
                    until_ms: target,
                    max_steps: 100,
                }) {
                    Ok(Progress::Running) => {}
                    Ok(Progress::Finished) => {
                        self.running = false;
                        break;
                    }
                    Err(e) => {
                        self.error = Some(e.to_string());
                        self.running = false;
                        break;
                    }
                }
                if Instant::now() >= deadline {
                    break;
                }
            }
            self.shown_ms = target.min(run.t_ms());
            if run.is_finished() {
                self.shown_ms = run.t_ms();
            }
        }
        self.meter.note(now, run.stats().accepted, self.running);
    }

    /// Brings the derived quantities up to date (permeabilities only when asked for).
    /// Returns whether anything is left for later frames.
    pub fn update_derived(&mut self, with_permeabilities: bool) -> bool {
        let Some(run) = &mut self.run else { return false };
        self.derived.update_currents(run, &mut self.scratch);
        let currents_behind = self.derived.currents_done < run.trace().len();
        if with_permeabilities {
            self.derived.update_perms(run, &mut self.scratch);
            return currents_behind || self.derived.perms_done < run.trace().len();
        }
        currents_behind
    }

    /// Simulated time shown, ms.
    pub fn shown_ms(&self) -> f64 {
        self.shown_ms
    }

    /// How many stored samples are shown (those at or before [`Runtime::shown_ms`]).
    pub fn shown_len(&self) -> usize {
        self.trace()
            .map_or(0, |t| t.t_ms.partition_point(|&x| x <= self.shown_ms + 1e-9))
    }

    /// Membrane potential at the last shown sample, mV.
    pub fn shown_v_mv(&self) -> Option<f64> {
        let n = self.shown_len();
        self.trace().and_then(|t| n.checked_sub(1).map(|k| t.v_mv()[k]))
    }

    /// What the cell is at time `t_ms` (the last shown sample at or before it; the first
    /// sample for a time before it), or nothing before the run has a sample.
    pub fn snapshot_at(&self, t_ms: f64) -> Option<Snapshot> {
        let run = self.run.as_ref()?;
        let trace = run.trace();
        let n = self.shown_len();
        let k = trace.t_ms[..n]
            .partition_point(|&x| x <= t_ms + 1e-9)
            .max(1)
            .checked_sub(1)?;
        if k >= n {
            return None;
        }
        let mut y = vec![0.0; trace.columns.len()];
        trace.state(k, &mut y);
        Some(snapshot_of(run.model(), trace.t_ms[k], &y).0)
    }

    /// What the cell is at t = 0: the first sample, or before the run has one, the state it
    /// starts from (kept from the last restart).
    pub fn at_start(&self) -> Option<Snapshot> {
        let run = self.run.as_ref()?;
        let trace = run.trace();
        if trace.t_ms.first().is_some_and(|&t| t <= 0.0) {
            let mut y = vec![0.0; trace.columns.len()];
            trace.state(0, &mut y);
            return Some(snapshot_of(run.model(), trace.t_ms[0], &y).0);
        }
        self.start.as_ref().map(|s| s.0.clone())
    }

    /// Conditions and currents of the state the run starts from, for plot axes before the
    /// run has a sample.
    pub fn start_readout(&self) -> Option<&Readout> {
        self.start.as_ref().map(|s| &s.1)
    }

    pub fn steps_per_second(&self) -> f64 {
        self.meter.rate
    }

    pub fn is_finished(&self) -> bool {
        self.run.as_ref().is_some_and(Run::is_finished)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::Event;

    fn v(s: &Scenario) -> crate::scenario::Valid {
        crate::scenario::validate(s.clone()).expect("a valid test scenario")
    }

    fn pulsed() -> Scenario {
        let mut s = Scenario::new_default();
        s.run.duration_ms = 20.0;
        s.protocol.push(Event::Inject {
            amplitude_ua_per_cm2: 5.0,
            from_ms: 2.0,
            until_ms: 4.0,
        });
        s
    }

    #[test]
    fn paced_frames_show_speed_times_wall_time() {
        let s = pulsed();
        let mut rt = Runtime::new(&v(&s));
        rt.toggle();
        for _ in 0..10 {
            rt.advance_frame(0.01, Speed::MsPerSecond(100.0), Duration::from_secs(5));
        }
        // 10 frames × 10 ms × 100 ms/s = 10 ms of simulated time.
        assert!((rt.shown_ms() - 10.0).abs() < 1e-9, "{}", rt.shown_ms());
        assert!(rt.run().is_some_and(|r| r.t_ms() >= 10.0));
        let n = rt.shown_len();
        // Samples 0, 0.1, …, 10 ms (the one at 10 ms once the run has passed it).
        assert!((100..=101).contains(&n), "{n}");
        // The pulse depolarized the cell and it is relaxing back.
        let v = rt.trace().map(|t| t.v_mv()[..n].to_vec()).unwrap_or_default();
        let (rest, peak) = (v[0], v.iter().copied().fold(f64::MIN, f64::max));
        assert!(peak > rest + 1.0, "rest {rest}, peak {peak}");
    }

    #[test]
    fn derived_currents_balance_at_rest_and_follow_the_trace() {
        let s = Scenario::new_default();
        let mut rt = Runtime::new(&v(&s));
        rt.toggle();
        rt.advance_frame(0.1, Speed::Fastest, Duration::from_secs(5));
        rt.update_derived(true);
        let n = rt.trace().map_or(0, Trace::len);
        assert!(n > 10);
        let d = &rt.derived;
        assert_eq!(d.net_ua_per_cm2.len(), n);
        assert_eq!(d.log10_p[0].len(), n);
        // At rest the net membrane current is zero (model.md's steady state).
        assert!(
            d.net_ua_per_cm2.iter().all(|i| i.abs() < 1e-6),
            "{:?}",
            &d.net_ua_per_cm2[..3]
        );
        assert!((d.log10_p[0][0] - (5.0e-7f64).log10()).abs() < 1e-12);
    }

    #[test]
    fn a_bath_exchange_moves_the_reversal_potential_along_time() {
        let mut s = Scenario::new_default();
        s.run.duration_ms = 10.0;
        s.protocol.push(Event::BathChange {
            species: "K+".into(),
            outside_mm: 25.0,
            at_ms: 5.0,
            lag_ms: 0.0,
        });
        let mut rt = Runtime::new(&v(&s));
        rt.toggle();
        rt.advance_frame(0.1, Speed::Fastest, Duration::from_secs(5));
        rt.update_derived(false);
        let e = &rt.derived.reversal_mv;
        let t = s.temperature_c;
        let nernst = |out: f64| crate::physics::nernst_mv(1, 140.0, out, t).unwrap_or(f64::NAN);
        let (first, last) = (e[0][0], e[0][e[0].len() - 1]);
        assert!((first - nernst(5.0)).abs() < 1e-9, "{first}");
        assert!((last - nernst(25.0)).abs() < 1e-9, "{last}");
        // Sodium's bath does not change: its reversal potential is the file's, not a column.
        assert!(e[1].iter().all(|x| x.is_nan()));
    }

    #[test]
    fn an_edit_mid_run_continues_the_trace_and_new_species_have_no_past() {
        let s = pulsed();
        let mut rt = Runtime::new(&v(&s));
        rt.toggle();
        rt.advance_frame(0.05, Speed::MsPerSecond(100.0), Duration::from_secs(5));
        rt.update_derived(false);
        let before = rt.trace().map_or(0, Trace::len);
        let mut t = s.clone();
        t.species.push(crate::scenario::Species {
            name: "Ca2+".into(),
            charge: 2,
            inside_mm: 1e-4,
            outside_mm: 2.0,
            permeability_cm_per_s: 1e-9,
        });
        rt.scenario_changed(&v(&t));
        assert!(rt.error.is_none(), "{:?}", rt.error);
        rt.advance_frame(0.05, Speed::MsPerSecond(100.0), Duration::from_secs(5));
        rt.update_derived(false);
        let after = rt.trace().map_or(0, Trace::len);
        assert!(after > before, "the trace went on: {before} → {after}");
        let ca = &rt.derived.currents_ua_per_cm2[3];
        assert!(ca[0].is_nan() && ca[after - 1].is_finite());
        rt.restart(&v(&t));
        assert_eq!(rt.trace().map_or(0, Trace::len), 0);
    }
}
