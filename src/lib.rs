//! permeant: how a single cell's membrane potential follows its solutions, temperature, pump
//! and permeabilities, at rest and over time.
//!
//! The core (`constants`, `physics`, `scenario`, `engine`, `analysis`, `report`) has no UI
//! dependency; `cli` and `ui` are thin fronts over it. The window is behind the default `gui`
//! feature, so building without it (`--no-default-features`) proves that the core compiles
//! without any GUI crate.

#![forbid(unsafe_code)]

pub mod analysis;
pub mod autosave;
pub mod cli;
pub mod constants;
pub mod engine;
pub mod examples;
pub mod notes;
pub mod palette;
pub mod physics;
pub mod report;
pub mod scenario;
pub mod solutions;
#[cfg(feature = "gui")]
pub mod ui;
