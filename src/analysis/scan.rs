//! Scans: vary one input of a scenario over a range and compute, at each point, the passive
//! GHK potential and the full steady state at t = 0. `permeant scan` and the window's scan
//! panel both compute through [`scan`]; the points are independent, so they run on every core.

use std::fmt;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};

use rayon::prelude::*;

use crate::engine::{EngineError, Model};
use crate::physics::{Undefined, ghk_potential_mv, nernst_mv};
use crate::scenario::{Event, Invalid, Scenario, Valid};

/// The input a scan or a fit varies, in the command line's spelling (command-line.md).
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub enum Vary {
    /// `temperature_c`
    TemperatureC,
    /// `outside_mm:NAME`, a species' bath concentration.
    OutsideMm(String),
    /// `inside_mm:NAME`, a species' cytoplasmic concentration.
    InsideMm(String),
    /// `permeability:NAME`, a species' resting permeability in cm/s.
    Permeability(String),
    /// `dose_um:LABEL`, an agent's dose in µM.
    DoseUm(String),
}

/// What is wrong with a scan request.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ScanError {
    #[error(
        "cannot vary \"{0}\": choose temperature_c, outside_mm:NAME, inside_mm:NAME or permeability:NAME (NAME a species), or dose_um:LABEL (LABEL an agent)"
    )]
    UnknownQuantity(String),
    #[error("{quantity}: no species is named \"{name}\"; the species are {choices}")]
    UnknownSpecies {
        quantity: String,
        name: String,
        choices: String,
    },
    #[error(
        "{quantity}:{name}: the concentration comes from the solution \"{solution}\"; vary its recipe instead (replace:OLD:NEW)"
    )]
    FromSolution {
        quantity: &'static str,
        name: String,
        solution: String,
    },
    #[error("dose_um: no agent is labelled \"{label}\"; {choices}")]
    UnknownAgent { label: String, choices: String },
    #[error("the number of points must be at least 1 (got {0})")]
    TooFewPoints(usize),
    #[error(
        "the number of points must be at most {MAX_POINTS} (got {0}); a finer scan of a part of the range gives more detail where it is needed"
    )]
    TooManyPoints(usize),
    #[error("the range's {end} must be a finite number (got {value})")]
    NotFinite { end: &'static str, value: f64 },
    #[error("a log range needs both ends above 0 (got {from} to {to})")]
    LogNeedsPositive { from: f64, to: f64 },
    /// Only the first problem is named: it is the one the varied value causes.
    #[error("at {vary} = {value} the scenario is not valid: {}", first_problem(problem))]
    InvalidAt {
        vary: Vary,
        value: f64,
        problem: Invalid,
    },
    #[error(transparent)]
    Engine(#[from] EngineError),
    #[error("the scan was cancelled")]
    Cancelled,
}

impl ScanError {
    /// Whether the request itself is at fault (a name, a range, a value), as opposed to a
    /// failure inside the computation or a cancel.
    pub fn is_bad_input(&self) -> bool {
        !matches!(self, ScanError::Engine(_) | ScanError::Cancelled)
    }
}

fn first_problem(e: &Invalid) -> String {
    e.first().map(ToString::to_string).unwrap_or_default()
}

fn quoted_list<'a>(names: impl Iterator<Item = &'a str>) -> String {
    names.map(|n| format!("\"{n}\"")).collect::<Vec<_>>().join(", ")
}

/// The solution that gives the concentration `vary` would change, if one does.
fn solution_of<'a>(vary: &Vary, s: &'a Scenario) -> Option<&'a str> {
    match vary {
        Vary::OutsideMm(_) => s.outside.as_deref(),
        Vary::InsideMm(_) => s.inside.as_deref(),
        _ => None,
    }
}

impl Vary {
    /// Parses the command-line spelling and checks that the species or agent exists in `s`.
    pub fn parse(text: &str, s: &Scenario) -> Result<Vary, ScanError> {
        let vary = match text.split_once(':') {
            None if text == "temperature_c" => Vary::TemperatureC,
            Some(("outside_mm", name)) => Vary::OutsideMm(name.to_string()),
            Some(("inside_mm", name)) => Vary::InsideMm(name.to_string()),
            Some(("permeability", name)) => Vary::Permeability(name.to_string()),
            Some(("dose_um", label)) => Vary::DoseUm(label.to_string()),
            _ => return Err(ScanError::UnknownQuantity(text.to_string())),
        };
        vary.check(s)?;
        Ok(vary)
    }

    /// Checks that the named species or agent exists in `s`.
    pub fn check(&self, s: &Scenario) -> Result<(), ScanError> {
        self.target(s).map(|_| ())
    }

    /// The species index (concentration or permeability) or protocol index (dose) this acts on.
    fn target(&self, s: &Scenario) -> Result<usize, ScanError> {
        match self {
            Vary::TemperatureC => Ok(0),
            Vary::OutsideMm(name) | Vary::InsideMm(name) if solution_of(self, s).is_some() => {
                Err(ScanError::FromSolution {
                    quantity: self.quantity(),
                    name: name.clone(),
                    solution: solution_of(self, s).unwrap_or_default().to_string(),
                })
            }
            Vary::OutsideMm(name) | Vary::InsideMm(name) | Vary::Permeability(name) => {
                s.species_index(name).ok_or_else(|| ScanError::UnknownSpecies {
                    quantity: self.quantity().to_string(),
                    name: name.clone(),
                    choices: quoted_list(s.species.iter().map(|x| x.name.as_str())),
                })
            }
            Vary::DoseUm(label) => s
                .protocol
                .iter()
                .position(|e| matches!(e, Event::Agent { label: l, .. } if l == label))
                .ok_or_else(|| {
                    let labels: Vec<&str> = s.agent_labels().collect();
                    let choices = if labels.is_empty() {
                        "the scenario has no agents".to_string()
                    } else {
                        format!("the agents are {}", quoted_list(labels.into_iter()))
                    };
                    ScanError::UnknownAgent {
                        label: label.clone(),
                        choices,
                    }
                }),
        }
    }

    /// The quantity's field name without the species or agent.
    pub fn quantity(&self) -> &'static str {
        match self {
            Vary::TemperatureC => "temperature_c",
            Vary::OutsideMm(_) => "outside_mm",
            Vary::InsideMm(_) => "inside_mm",
            Vary::Permeability(_) => "permeability",
            Vary::DoseUm(_) => "dose_um",
        }
    }

    /// Unit of the varied value, for axis labels and tables.
    pub fn unit(&self) -> &'static str {
        match self {
            Vary::TemperatureC => "°C",
            Vary::OutsideMm(_) | Vary::InsideMm(_) => "mM",
            Vary::Permeability(_) => "cm/s",
            Vary::DoseUm(_) => "µM",
        }
    }

    /// A plain-words label such as "outside K+ (mM)".
    pub fn label(&self) -> String {
        match self {
            Vary::TemperatureC => "temperature (°C)".into(),
            Vary::OutsideMm(n) => format!("outside {n} (mM)"),
            Vary::InsideMm(n) => format!("inside {n} (mM)"),
            Vary::Permeability(n) => format!("permeability of {n} (cm/s)"),
            Vary::DoseUm(l) => format!("dose of {l} (µM)"),
        }
    }

    /// The varied input's value in `s`, if the species or agent exists.
    pub fn value_in(&self, s: &Scenario) -> Option<f64> {
        let i = self.target(s).ok()?;
        match self {
            Vary::TemperatureC => Some(s.temperature_c),
            Vary::OutsideMm(_) => Some(s.species[i].outside_mm),
            Vary::InsideMm(_) => Some(s.species[i].inside_mm),
            Vary::Permeability(_) => Some(s.species[i].permeability_cm_per_s),
            Vary::DoseUm(_) => match &s.protocol[i] {
                Event::Agent { dose_um, .. } => Some(*dose_um),
                _ => None,
            },
        }
    }
}

impl fmt::Display for Vary {
    /// The command-line spelling, so that parsing the output gives the same `Vary`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Vary::TemperatureC => f.write_str("temperature_c"),
            Vary::OutsideMm(n) | Vary::InsideMm(n) | Vary::Permeability(n) | Vary::DoseUm(n) => {
                write!(f, "{}:{n}", self.quantity())
            }
        }
    }
}

/// A copy of `s` with the varied input set to `value`.
///
/// A dose asks what the cell does with the agent present, so the agent is put in force from
/// t = 0 to the end of the run (`from_ms` 0, `until_ms` None): the steady state at t = 0 then
/// includes its block. Left at its own start time, an agent that arrives later would leave
/// every point of a dose scan at the untreated potential.
pub fn apply(s: &Scenario, vary: &Vary, value: f64) -> Result<Scenario, ScanError> {
    let i = vary.target(s)?;
    let mut out = s.clone();
    match vary {
        Vary::TemperatureC => out.temperature_c = value,
        Vary::OutsideMm(_) => out.species[i].outside_mm = value,
        Vary::InsideMm(_) => out.species[i].inside_mm = value,
        Vary::Permeability(_) => out.species[i].permeability_cm_per_s = value,
        Vary::DoseUm(_) => {
            if let Event::Agent {
                dose_um,
                from_ms,
                until_ms,
                ..
            } = &mut out.protocol[i]
            {
                *dose_um = value;
                *from_ms = 0.0;
                *until_ms = None;
            }
        }
    }
    Ok(out)
}

/// Checks that `s` with the input set to `value` is a valid scenario.
pub fn check_value(s: &Scenario, vary: &Vary, value: f64) -> Result<Valid, ScanError> {
    crate::scenario::validate(apply(s, vary, value)?).map_err(|problem| ScanError::InvalidAt {
        vary: vary.clone(),
        value,
        problem,
    })
}

/// Most values one scan takes: each point is a steady-state solve and a row of the report, and
/// far more than a plot's width of points shows nothing new.
pub const MAX_POINTS: usize = 100_000;

/// A range of values: `points` values from `from` to `to` inclusive, evenly spaced on a linear
/// or a logarithmic scale. `from` may exceed `to` (a descending scan).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScanRange {
    pub from: f64,
    pub to: f64,
    pub points: usize,
    pub log: bool,
}

impl ScanRange {
    /// Checks the range and returns its values. Each value is computed from its index (never
    /// as a running sum) and the ends are exactly `from` and `to`.
    pub fn values(&self) -> Result<Vec<f64>, ScanError> {
        if self.points < 1 {
            return Err(ScanError::TooFewPoints(self.points));
        }
        if self.points > MAX_POINTS {
            return Err(ScanError::TooManyPoints(self.points));
        }
        if !self.from.is_finite() {
            return Err(ScanError::NotFinite {
                end: "start (from)",
                value: self.from,
            });
        }
        if !self.to.is_finite() {
            return Err(ScanError::NotFinite {
                end: "end (to)",
                value: self.to,
            });
        }
        if self.log && !(self.from > 0.0 && self.to > 0.0) {
            return Err(ScanError::LogNeedsPositive {
                from: self.from,
                to: self.to,
            });
        }
        let n = self.points;
        if n == 1 {
            return Ok(vec![self.from]);
        }
        let last = (n - 1) as f64;
        // Log ranges interpolate decimal exponents: users pick decades, and 10^k for integer k
        // is exact, so a range from 0.01 to 100 passes through exactly 0.1, 1 and 10.
        let (a, b) = if self.log {
            (self.from.log10(), self.to.log10())
        } else {
            (self.from, self.to)
        };
        Ok((0..n)
            .map(|k| {
                if k == 0 {
                    self.from
                } else if k == n - 1 {
                    self.to
                } else {
                    let x = a + (b - a) * (k as f64 / last);
                    if self.log { 10f64.powf(x) } else { x }
                }
            })
            .collect())
    }
}

/// One point of a scan.
#[derive(Debug, Clone, PartialEq)]
pub struct ScanPoint {
    pub value: f64,
    /// The passive zero-current potential, `None` where none exists (`ghk_undefined` says why).
    pub ghk_mv: Option<f64>,
    /// The full steady state at t = 0, `None` where none exists (`resting_undefined` says why).
    pub resting_mv: Option<f64>,
    pub ghk_undefined: Option<Undefined>,
    pub resting_undefined: Option<Undefined>,
}

/// Progress reporting and cancelling for a scan running on another thread.
#[derive(Debug, Clone, Default)]
pub struct ScanControl {
    /// Incremented once per finished point.
    pub progress: Option<Arc<AtomicUsize>>,
    /// Set to stop; points not yet started are skipped and the scan returns `Cancelled`.
    pub cancel: Option<Arc<AtomicBool>>,
}

impl ScanControl {
    pub fn is_cancelled(&self) -> bool {
        self.cancel.as_ref().is_some_and(|c| c.load(Ordering::Relaxed))
    }
    pub fn tick(&self) {
        if let Some(p) = &self.progress {
            p.fetch_add(1, Ordering::Relaxed);
        }
    }
}

/// The GHK potential and the steady state at t = 0, each with the reason where it is undefined.
pub type Potentials = (Result<f64, Undefined>, Result<f64, Undefined>);

/// GHK and steady-state potentials of a scenario, exactly as `rest_report` computes them.
pub fn potentials(s: &Valid) -> Result<Potentials, EngineError> {
    let ghk = ghk_potential_mv(&s.ions(), s.temperature_c);
    let resting = Model::new(s).steady_state_at_start().resting_mv;
    Ok((ghk, resting))
}

/// One point: the scenario with the input set to `value`.
pub fn scan_point(s: &Scenario, vary: &Vary, value: f64) -> Result<ScanPoint, ScanError> {
    let (ghk, resting) = potentials(&check_value(s, vary, value)?)?;
    Ok(ScanPoint {
        value,
        ghk_mv: ghk.as_ref().ok().copied(),
        resting_mv: resting.as_ref().ok().copied(),
        ghk_undefined: ghk.err(),
        resting_undefined: resting.err(),
    })
}

/// `value,ghk_mv,resting_mv` rows (`permeant scan --csv` and the window's export): shortest
/// round-trip numbers, an empty cell where a potential is undefined.
pub fn scan_csv(points: &[ScanPoint]) -> String {
    let cell = |x: Option<f64>| x.map_or(String::new(), |v| format!("{v}"));
    let mut o = String::from("value,ghk_mv,resting_mv\n");
    for p in points {
        o += &format!("{},{},{}\n", p.value, cell(p.ghk_mv), cell(p.resting_mv));
    }
    o
}

/// Runs a scan on the current rayon pool (every core by default).
///
/// Both ends of the range are validated first: every check on a scenario value is a bound, so
/// valid ends mean every point between them is valid too.
pub fn scan(
    s: &Scenario,
    vary: &Vary,
    range: &ScanRange,
    control: &ScanControl,
) -> Result<Vec<ScanPoint>, ScanError> {
    let values = range.values()?;
    vary.check(s)?;
    check_value(s, vary, range.from)?;
    check_value(s, vary, range.to)?;
    values
        .par_iter()
        .map(|&x| {
            if control.is_cancelled() {
                return Err(ScanError::Cancelled);
            }
            let p = scan_point(s, vary, x);
            control.tick();
            p
        })
        .collect()
}

/// The Nernst potential of the scanned species at each value, for a concentration scan.
#[derive(Debug, Clone, PartialEq)]
pub struct NernstLine {
    pub species: String,
    pub charge: i32,
    /// Slope, mV per tenfold change of the scanned concentration (negative for an inside scan of
    /// a cation, whose potential falls as the inside concentration rises).
    pub slope_mv_per_decade: f64,
    /// `None` where a concentration is 0.
    pub e_mv: Vec<Option<f64>>,
}

/// The reference Nernst line for a scan of one species' inside or outside concentration;
/// `None` for any other kind of scan.
pub fn nernst_line(s: &Scenario, vary: &Vary, values: &[f64]) -> Option<NernstLine> {
    let i = vary.target(s).ok()?;
    let sp = &s.species[i];
    let slope = crate::constants::nernst_slope_mv_per_decade(s.temperature_c, sp.charge);
    let (e_mv, slope_mv_per_decade) = match vary {
        Vary::OutsideMm(_) => (
            values
                .iter()
                .map(|&c| nernst_mv(sp.charge, sp.inside_mm, c, s.temperature_c))
                .collect(),
            slope,
        ),
        Vary::InsideMm(_) => (
            values
                .iter()
                .map(|&c| nernst_mv(sp.charge, c, sp.outside_mm, s.temperature_c))
                .collect(),
            -slope,
        ),
        _ => return None,
    };
    Some(NernstLine {
        species: sp.name.clone(),
        charge: sp.charge,
        slope_mv_per_decade,
        e_mv,
    })
}
