//! Helpers shared by the integration tests (each test file that needs them says `mod common;`).

#![allow(dead_code)]

pub mod cells;
pub mod cli;
pub mod reference;

use permeant::scenario::{Scenario, Valid, validate};

/// `s` as a validated scenario; a test that builds an invalid one has a bug, so this panics
/// with every problem.
pub fn valid(s: &Scenario) -> Valid {
    validate(s.clone()).unwrap_or_else(|e| panic!("the test's scenario is not valid: {e}"))
}
