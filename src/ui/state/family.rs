//! The family of runs of the document's scenario (`run.family`), computed off the frame loop:
//! one job per revision on its own thread (the runs themselves spread over rayon's pool), with
//! its progress shown and a cancel that an edit, a closed document or the user sets.

use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::{Arc, Mutex};

use crate::analysis::family::{FamilyRuns, FamilyTable, Measure, analyse, run_family};
use crate::analysis::metrics::SpikeSettings;
use crate::analysis::scan::ScanControl;
use crate::engine::SolverSettings;
use crate::scenario::{Event, Scenario};

use super::document::{Document, Revision};

/// A family computed for one revision, with what is measured on it.
#[derive(Debug, Clone)]
pub struct FamilyResult {
    pub runs: FamilyRuns,
    pub table: FamilyTable,
}

/// One family job in flight.
struct Job {
    total: usize,
    progress: Arc<AtomicUsize>,
    cancel: Arc<AtomicBool>,
    out: Arc<Mutex<Option<Result<FamilyResult, String>>>>,
}

/// The family of the present revision: running, done, failed or none.
#[derive(Default)]
pub struct FamilyState {
    revision: Option<Revision>,
    job: Option<Job>,
    /// The last finished family (kept while a new one runs, so the plots do not flicker).
    pub result: Option<FamilyResult>,
    /// Why the last family could not be run.
    pub error: Option<String>,
    /// Set by the user's cancel: no new job until the next edit.
    cancelled: bool,
}

/// What the window measures on each run: in voltage clamp the peak current from the varied
/// command's start to its end (or the whole run); in current clamp the spikes and their first
/// latency over the whole run.
pub fn window_measures(s: &Scenario) -> Vec<Measure> {
    let d = s.run.duration_ms;
    if s.run.mode.is_current_clamp() {
        return vec![
            Measure::Spikes {
                from_ms: 0.0,
                until_ms: d,
            },
            Measure::Latency {
                from_ms: 0.0,
                until_ms: d,
            },
        ];
    }
    let step = s
        .run
        .family
        .as_ref()
        .and_then(|f| f.field().indices().first().copied())
        .and_then(|i| s.protocol.get(i))
        .filter(|e| matches!(e, Event::Step { .. } | Event::Ramp { .. }))
        .or_else(|| s.protocol.iter().find(|e| matches!(e, Event::Step { .. })));
    let (from_ms, until_ms) = step.map_or((0.0, d), |e| {
        let (a, b) = e.span_ms();
        (a.min(d), b.unwrap_or(d).min(d))
    });
    vec![Measure::Peak { from_ms, until_ms }]
}

impl FamilyState {
    /// Brings the family to the document's revision: a finished job is taken in, an edit
    /// cancels the job of an older revision and starts one for the new (when the scenario has
    /// a family). Returns whether a job is running, so the caller keeps repainting.
    pub fn refresh(&mut self, doc: &Document) -> bool {
        if let Some(job) = &self.job
            && let Some(done) = job.out.lock().ok().and_then(|mut o| o.take())
        {
            self.job = None;
            match done {
                Ok(r) => {
                    self.result = Some(r);
                    self.error = None;
                }
                Err(e) => self.error = Some(e),
            }
        }
        if self.revision != Some(doc.revision()) {
            self.revision = Some(doc.revision());
            self.cancelled = false;
            self.stop();
            let s = doc.scenario();
            match &s.run.family {
                None => {
                    self.result = None;
                    self.error = None;
                }
                Some(f) => match f.values() {
                    Err(e) => self.error = Some(e.to_string()),
                    Ok(values) => self.start(s.scenario().clone(), f.field(), values),
                },
            }
        }
        self.job.is_some()
    }

    fn start(&mut self, s: Scenario, field: crate::scenario::Address, values: Vec<f64>) {
        let job = Job {
            total: values.len(),
            progress: Arc::new(AtomicUsize::new(0)),
            cancel: Arc::new(AtomicBool::new(false)),
            out: Arc::new(Mutex::new(None)),
        };
        let control = ScanControl {
            progress: Some(job.progress.clone()),
            cancel: Some(job.cancel.clone()),
        };
        let out = job.out.clone();
        std::thread::spawn(move || {
            let measures = window_measures(&s);
            let r = run_family(&s, field, &values, &SolverSettings::default(), &control)
                .map(|runs| FamilyResult {
                    table: analyse(&runs, &measures, SpikeSettings::default()),
                    runs,
                })
                .map_err(|e| e.to_string());
            if let Ok(mut o) = out.lock() {
                *o = Some(r);
            }
        });
        self.job = Some(job);
    }

    /// Cancels the running job, if any (its thread ends at its next look at the flag).
    fn stop(&mut self) {
        if let Some(job) = self.job.take() {
            job.cancel.store(true, Ordering::Relaxed);
        }
    }

    /// The user's cancel: the family stops and stays stopped until the next edit.
    pub fn cancel(&mut self) {
        self.stop();
        self.cancelled = true;
        self.error = Some("the family was cancelled; edit the scenario to run it again".into());
    }

    /// Runs done and runs in all, while a job is running.
    pub fn progress(&self) -> Option<(usize, usize)> {
        self.job
            .as_ref()
            .map(|j| (j.progress.load(Ordering::Relaxed), j.total))
    }

    pub fn was_cancelled(&self) -> bool {
        self.cancelled
    }
}
