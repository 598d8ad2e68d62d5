//! Solutions as recipes (solutions.md): the compounds table with a scenario's own compounds,
//! what a recipe gives in ions and its checks, activity coefficients (Davies), liquid junction
//! potentials (Henderson) with the reference electrode's term, and how all of it reaches a
//! scenario's species and the offset of a recording over a run.

pub mod activity;
pub mod catalog;
pub mod junction;
pub mod recipe;
pub mod replace;
pub mod table;
mod wiring;

pub use activity::{davies_a, davies_gamma, water_permittivity};
pub use catalog::{Catalog, Compound, Ion};
pub use junction::{Term, henderson_mv, junction_mv, reference_mv};
pub use recipe::{Checks, Mixture, Particle, mix};
pub use table::Role;
pub use wiring::{Junction, Offsets, Plan, correct_points, fill_species, plan, plan_of, recording_offsets};
