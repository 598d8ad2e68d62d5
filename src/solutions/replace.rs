//! An equimolar replacement scan (`scan --vary replace:OLD:NEW`): compound OLD of the bath
//! solution is replaced by NEW, the value being the mM of NEW (0 to OLD's amount); each point
//! reports the GHK and steady-state potentials and the junction potential of the pipette
//! against that bath.

use rayon::prelude::*;

use crate::analysis::scan::{ScanControl, ScanRange, potentials};
use crate::scenario::{Invalid, Scenario, validate};

/// A replacement in the bath: OLD by NEW, equimolar.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Replace {
    pub old: String,
    pub new: String,
    /// Index of the bath solution (`outside`) in the scenario.
    solution: usize,
    /// Index of OLD among the bath's parts.
    part: usize,
}

/// What is wrong with a replacement scan.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ReplaceError {
    #[error("write the replacement as replace:OLD:NEW, two compound names (got \"{0}\")")]
    Syntax(String),
    #[error("a replacement needs the bath to be a solution: set `outside` to one of `solutions`")]
    NoBath,
    #[error("the bath \"{bath}\" has no compound \"{old}\"; {choices}")]
    NoOld {
        bath: String,
        old: String,
        choices: String,
    },
    #[error("no compound is named \"{0}\"{1}")]
    UnknownNew(String, String),
    #[error("the value is the mM of {new}, from 0 to {old}'s {most} mM (got {value})")]
    OutOfRange {
        new: String,
        old: String,
        most: f64,
        value: f64,
    },
    #[error(transparent)]
    Range(#[from] crate::analysis::scan::ScanError),
    #[error("at {value} mM of {new} the scenario is not valid: {problem}")]
    InvalidAt {
        new: String,
        value: f64,
        problem: Invalid,
    },
    #[error(transparent)]
    Engine(#[from] crate::engine::EngineError),
    #[error("the scan was cancelled")]
    Cancelled,
}

impl ReplaceError {
    /// Whether the request is at fault, as opposed to the computation or a cancel.
    pub fn is_bad_input(&self) -> bool {
        match self {
            ReplaceError::Range(e) => e.is_bad_input(),
            ReplaceError::Engine(_) | ReplaceError::Cancelled => false,
            _ => true,
        }
    }
}

/// One point of a replacement scan.
#[derive(Debug, Clone, PartialEq)]
pub struct ReplacePoint {
    /// mM of NEW in the bath.
    pub value: f64,
    pub ghk_mv: Option<f64>,
    pub resting_mv: Option<f64>,
    /// The junction potential of the bath relative to the pipette solution; `None` without a
    /// pipette solution (`inside`).
    pub ljp_mv: Option<f64>,
}

impl Replace {
    /// Parses `OLD:NEW` (the text after `replace:`) against `s`.
    pub fn parse(spec: &str, s: &Scenario) -> Result<Replace, ReplaceError> {
        let Some((old, new)) = spec
            .split_once(':')
            .filter(|(o, n)| !o.is_empty() && !n.is_empty())
        else {
            return Err(ReplaceError::Syntax(format!("replace:{spec}")));
        };
        let solution = s
            .outside
            .as_deref()
            .and_then(|b| s.solution_index(b))
            .ok_or(ReplaceError::NoBath)?;
        let bath = &s.solutions[solution];
        let part = bath.parts.iter().position(|p| p.0 == old).ok_or_else(|| {
            let names: Vec<&str> = bath.parts.iter().map(|p| p.0.as_str()).collect();
            let choices = match crate::scenario::nearest_name(old, &names) {
                Some(n) => format!("did you mean \"{n}\"?"),
                None => format!("its compounds are {}", names.join(", ")),
            };
            ReplaceError::NoOld {
                bath: bath.name.clone(),
                old: old.into(),
                choices,
            }
        })?;
        let (catalog, _) = super::Catalog::with_user(&s.compounds);
        if catalog.compound(new).is_none() {
            let names = catalog.compound_names();
            let hint = crate::scenario::nearest_name(new, &names)
                .map(|n| format!("; did you mean \"{n}\"?"))
                .unwrap_or_default();
            return Err(ReplaceError::UnknownNew(new.into(), hint));
        }
        Ok(Replace {
            old: old.into(),
            new: new.into(),
            solution,
            part,
        })
    }

    /// OLD's amount in the bath of `s`, mM: the largest value.
    pub fn most_mm(&self, s: &Scenario) -> f64 {
        s.solutions[self.solution].parts[self.part].1
    }

    /// `s` with `value` mM of OLD replaced by NEW in the bath.
    pub fn apply(&self, s: &Scenario, value: f64) -> Result<Scenario, ReplaceError> {
        let most = self.most_mm(s);
        if !(0.0..=most).contains(&value) {
            return Err(ReplaceError::OutOfRange {
                new: self.new.clone(),
                old: self.old.clone(),
                most,
                value,
            });
        }
        let mut out = s.clone();
        let parts = &mut out.solutions[self.solution].parts;
        parts[self.part].1 = most - value;
        match parts.iter_mut().find(|p| p.0 == self.new) {
            Some(p) => p.1 += value,
            None => parts.push((self.new.clone(), value)),
        }
        Ok(out)
    }

    /// One point of the scan.
    pub fn point(&self, s: &Scenario, value: f64) -> Result<ReplacePoint, ReplaceError> {
        let t = validate(self.apply(s, value)?).map_err(|problem| ReplaceError::InvalidAt {
            new: self.new.clone(),
            value,
            problem,
        })?;
        let (ghk, resting) = potentials(&t)?;
        let ljp_mv = match (t.inside.as_deref(), t.outside.as_deref()) {
            (Some(p), Some(b)) => super::plan_of(&t, &[p, b]).junction(&t, p, b).map(|j| j.ljp_mv),
            _ => None,
        };
        Ok(ReplacePoint {
            value,
            ghk_mv: ghk.ok(),
            resting_mv: resting.ok(),
            ljp_mv,
        })
    }

    /// Every point of `range`, on the current rayon pool.
    pub fn scan(
        &self,
        s: &Scenario,
        range: &ScanRange,
        control: &ScanControl,
    ) -> Result<Vec<ReplacePoint>, ReplaceError> {
        let values = range.values()?;
        for v in [range.from, range.to] {
            self.apply(s, v)?;
        }
        values
            .par_iter()
            .map(|&x| {
                if control.is_cancelled() {
                    return Err(ReplaceError::Cancelled);
                }
                let p = self.point(s, x);
                control.tick();
                p
            })
            .collect()
    }
}

/// `value,ghk_mv,resting_mv,ljp_mv` rows (`permeant scan --vary replace:… --csv` and the
/// window's export): shortest round-trip numbers, an empty cell where a value is undefined.
pub fn replace_csv(points: &[ReplacePoint]) -> String {
    let number = crate::report::csv::number;
    let cell = |x: Option<f64>| x.map(number).unwrap_or_default();
    let mut o = String::from("value,ghk_mv,resting_mv,ljp_mv\n");
    for p in points {
        o += &format!(
            "{},{},{},{}\n",
            number(p.value),
            cell(p.ghk_mv),
            cell(p.resting_mv),
            cell(p.ljp_mv)
        );
    }
    o
}
