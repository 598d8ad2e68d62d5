//! A scenario that passed every rule of `validate`: the one type the engine and the analyses
//! accept, so validation happens once, where a scenario is read or edited, and nothing
//! downstream guards against a bad file again.

use std::fmt;
use std::ops::Deref;

use super::{Problem, Scenario, problems};

/// A scenario with no problem. Only [`validate`] makes one (and [`Valid::new_default`], whose
/// cell a unit test keeps valid); it reads like a [`Scenario`] through `Deref`, and changing it
/// means taking the scenario out ([`Valid::into_inner`]) and validating the result again.
#[derive(Debug, Clone, PartialEq)]
pub struct Valid(Scenario);

/// Why a scenario is not valid: every problem, each with its field path (never empty).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub struct Invalid(pub Vec<Problem>);

impl fmt::Display for Invalid {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let all: Vec<String> = self.0.iter().map(Problem::to_string).collect();
        f.write_str(&all.join("; "))
    }
}

impl Invalid {
    /// The first problem, which the window shows beside the field being edited.
    pub fn first(&self) -> Option<&Problem> {
        self.0.first()
    }

    /// The first problem, taken out (an `Invalid` made by [`validate`] always has one).
    pub fn into_first(self) -> Problem {
        self.0.into_iter().next().unwrap_or_else(|| Problem {
            path: String::new(),
            message: "the scenario is not valid".into(),
        })
    }
}

/// Checks every rule of scenario-format.md and, when none is broken, vouches for `s`.
pub fn validate(mut s: Scenario) -> Result<Valid, Invalid> {
    crate::solutions::fill_species(&mut s);
    let found = problems(&s);
    if found.is_empty() {
        Ok(Valid(s))
    } else {
        Err(Invalid(found))
    }
}

impl Valid {
    /// The window's starting cell for "New" (see [`Scenario::new_default`]).
    pub fn new_default() -> Valid {
        Valid(Scenario::new_default())
    }

    /// The scenario itself, to be changed and validated again.
    pub fn into_inner(self) -> Scenario {
        self.0
    }

    /// The scenario, borrowed.
    pub fn scenario(&self) -> &Scenario {
        &self.0
    }
}

impl Deref for Valid {
    type Target = Scenario;
    fn deref(&self) -> &Scenario {
        &self.0
    }
}

impl TryFrom<Scenario> for Valid {
    type Error = Invalid;
    fn try_from(s: Scenario) -> Result<Valid, Invalid> {
        validate(s)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_default_cell_is_valid() {
        assert_eq!(problems(&Scenario::new_default()), vec![]);
        assert_eq!(validate(Scenario::new_default()), Ok(Valid::new_default()));
    }

    #[test]
    fn an_invalid_scenario_gives_every_problem_with_its_place() {
        let mut s = Scenario::new_default();
        s.temperature_c = f64::NAN;
        s.species[0].inside_mm = -1.0;
        let e = validate(s).expect_err("two rules broken");
        assert_eq!(e.0.len(), 2, "{e}");
        assert_eq!(e.first().map(|p| p.path.as_str()), Some("temperature_c"));
        assert!(e.to_string().contains("species[0].inside_mm"), "{e}");
    }
}
