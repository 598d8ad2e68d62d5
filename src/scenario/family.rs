//! A family of runs as the scenario file states it (clamp-and-volume.md, "Families"): the
//! number it varies, by field path, and the values that number takes, one run each.

use super::fields::Address;
use super::{Family, Scenario};

/// Most runs one family may hold.
pub const MAX_FAMILY_RUNS: usize = 10_000;

/// Why a family cannot be run, told at `run.family…`.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FamilyError {
    #[error("a family needs at least one value")]
    Empty,
    #[error(
        "the family would hold {0} runs, more than the limit of {MAX_FAMILY_RUNS}; use a larger step or a shorter range"
    )]
    TooMany(f64),
    #[error("the family's {end} must be a finite number (got {value})")]
    NotFinite { end: &'static str, value: f64 },
    #[error("the family's step must be greater than 0 (got {0})")]
    Step(f64),
    #[error("the scenario has no number at {0}")]
    Missing(String),
    #[error(
        "{0} is the family's own setting; vary a number of the cell, its solutions, its protocol or its run"
    )]
    SelfReference(String),
}

impl FamilyError {
    /// The field path the problem concerns.
    pub fn path(&self) -> &'static str {
        match self {
            FamilyError::Empty | FamilyError::TooMany(_) => "run.family",
            FamilyError::NotFinite { end, .. } => match *end {
                "first value" => "run.family.from",
                _ => "run.family.to",
            },
            FamilyError::Step(_) => "run.family.step",
            FamilyError::Missing(_) | FamilyError::SelfReference(_) => "run.family.field",
        }
    }
}

/// The values of a range from `from` to `to` in steps of `step` (downwards when `to < from`),
/// each a product of the step, never a running sum; `to` is included when the step reaches
/// it within rounding.
pub fn range_values(from: f64, to: f64, step: f64) -> Result<Vec<f64>, FamilyError> {
    for (end, value) in [("first value", from), ("last value", to)] {
        if !value.is_finite() {
            return Err(FamilyError::NotFinite { end, value });
        }
    }
    if !(step.is_finite() && step > 0.0) {
        return Err(FamilyError::Step(step));
    }
    let n = ((to - from).abs() / step + 1e-9).floor() + 1.0;
    if n > MAX_FAMILY_RUNS as f64 {
        return Err(FamilyError::TooMany(n));
    }
    let sign = if to < from { -1.0 } else { 1.0 };
    Ok((0..n as usize).map(|k| from + sign * k as f64 * step).collect())
}

impl Family {
    /// The number the family varies.
    pub fn field(&self) -> Address {
        match self {
            Family::Values { field, .. } | Family::Range { field, .. } => *field,
        }
    }

    /// The values, one per run, checked for their number (not for what they do to the
    /// scenario: that is each run's own validation).
    pub fn values(&self) -> Result<Vec<f64>, FamilyError> {
        match self {
            Family::Values { values, .. } => {
                if values.is_empty() {
                    Err(FamilyError::Empty)
                } else if values.len() > MAX_FAMILY_RUNS {
                    Err(FamilyError::TooMany(values.len() as f64))
                } else {
                    Ok(values.clone())
                }
            }
            Family::Range { from, to, step, .. } => range_values(*from, *to, *step),
        }
    }

    /// Whether `s` has the number this family varies, and it is not the family's own.
    pub fn check_field(&self, s: &Scenario) -> Result<(), FamilyError> {
        let field = self.field();
        if field.field().path.starts_with("run.family") {
            return Err(FamilyError::SelfReference(field.to_string()));
        }
        if field.get(s).is_none() {
            return Err(FamilyError::Missing(field.to_string()));
        }
        Ok(())
    }
}

/// `s` with the number at `field` set to `value` and the family removed: one member's
/// scenario, to be validated like any other.
pub fn member(s: &Scenario, field: Address, value: f64) -> Option<Scenario> {
    let mut m = s.clone();
    m.run.family = None;
    field.set(&mut m, value).then_some(m)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_are_products_of_the_step_and_include_the_end() {
        let v = range_values(-100.0, 20.0, 10.0).unwrap_or_default();
        assert_eq!(v.len(), 13);
        assert_eq!(v[12], 20.0);
        // 0.1 × 3 is not 0.3 in f64, but the range still reaches it.
        assert_eq!(range_values(0.0, 0.3, 0.1).map(|v| v.len()), Ok(4));
        assert_eq!(range_values(10.0, 0.0, 5.0), Ok(vec![10.0, 5.0, 0.0]));
        assert_eq!(range_values(1.0, 1.0, 1.0), Ok(vec![1.0]));
    }

    #[test]
    fn too_many_runs_and_bad_steps_are_refused() {
        assert!(matches!(
            range_values(0.0, 1e6, 1.0),
            Err(FamilyError::TooMany(_))
        ));
        assert_eq!(range_values(0.0, 9999.0, 1.0).map(|v| v.len()), Ok(10_000));
        assert_eq!(range_values(0.0, 1.0, 0.0), Err(FamilyError::Step(0.0)));
        assert_eq!(range_values(0.0, 1.0, -1.0), Err(FamilyError::Step(-1.0)));
        assert!(matches!(
            range_values(f64::NAN, 1.0, 1.0),
            Err(FamilyError::NotFinite { .. })
        ));
    }
}
