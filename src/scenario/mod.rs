//! Scenario files, format 1: the serde types, reading with validation, and atomic saving; the
//! table of every number a scenario holds (`fields`), and what a user can change (`edit`).
//!
//! The types mirror scenario-format.md field for field and in the same order, because the
//! saved file's field order is the struct order. Field names carry their units.

mod edit;
mod events;
mod family;
pub mod fields;
mod naming;
mod read;
mod recipes;
mod save;
mod valid;
mod validate;
pub mod volume;

use serde::{Deserialize, Serialize};

pub use crate::physics::Kinetics;
pub use edit::{
    ChannelPreset, Edit, EventKind, GateKind, check_edit, default_pump, held_start, new_channel, new_event,
    rename_references,
};
pub use events::{Interval, Wording};
pub use family::{FamilyError, MAX_FAMILY_RUNS, member, range_values};
pub use fields::{Address, AddressError, Drag, Span, Style};
pub use naming::control_name;
pub use read::{Location, Problem, ScenarioError, from_str, nearest_name, read_file};
pub use recipes::{CompoundIon, DEFAULT_BRIDGE_KCL_MM, Reference, Solution, UserCompound};
pub(crate) use save::through_links;
pub use save::{
    Durability, pending_temporaries, save_atomic, to_ron, to_ron_string, write_atomic, write_atomic_with,
    write_replacing,
};
pub use valid::{Invalid, Valid, validate};
pub use validate::{MAX_OUTPUT_SAMPLES, problems, warnings};

/// The newest scenario format this build reads and writes.
pub const FORMAT: u32 = 1;

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scenario {
    pub format: u32,
    #[serde(default)]
    pub title: String,
    #[serde(default)]
    pub notes: String,
    #[serde(default = "default_temperature_c")]
    pub temperature_c: f64,
    #[serde(default)]
    pub cell: Cell,
    /// Solutions as recipes (solutions.md): all optional, so a file without them is unchanged.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub compounds: Vec<UserCompound>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub solutions: Vec<Solution>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub inside: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub outside: Option<String>,
    #[serde(default, skip_serializing_if = "is_false")]
    pub activities: bool,
    /// `None` is the default 3 M KCl bridge.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference: Option<Reference>,
    pub species: Vec<Species>,
    #[serde(default)]
    pub pump: Option<Pump>,
    #[serde(default)]
    pub channels: Vec<Channel>,
    #[serde(default)]
    pub protocol: Vec<Event>,
    pub run: RunSettings,
}

fn default_temperature_c() -> f64 {
    37.0
}

fn is_false(x: &bool) -> bool {
    !*x
}

/// A concentration the file leaves out because a solution gives it (`inside`/`outside`);
/// reading fills in the solution's value, saving leaves it out again. A not-a-number with its
/// own bit pattern, so that a `NaN` written in a file is still told apart (and refused).
pub(crate) const FROM_SOLUTION: f64 = f64::from_bits(0x7ff8_0000_5017_0000);

fn from_solution() -> f64 {
    FROM_SOLUTION
}

pub(crate) fn is_from_solution(x: &f64) -> bool {
    x.to_bits() == FROM_SOLUTION.to_bits()
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Cell {
    pub diameter_um: f64,
    pub capacitance_uf_per_cm2: f64,
    pub track_concentrations: bool,
    /// Whether the cell's volume follows water (clamp-and-volume.md, "Cell volume").
    #[serde(skip_serializing_if = "Volume::is_fixed")]
    pub volume: Volume,
}

impl Default for Cell {
    fn default() -> Self {
        Self {
            diameter_um: 20.0,
            capacitance_uf_per_cm2: 1.0,
            track_concentrations: false,
            volume: Volume::Fixed,
        }
    }
}

/// The cell's volume: fixed, or following water (which implies concentration tracking).
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub enum Volume {
    #[default]
    Fixed,
    Tracked {
        water: Water,
        /// The impermeant inside solute; derived at t = 0 when left out.
        #[serde(default, skip_serializing_if = "Option::is_none")]
        impermeant: Option<Impermeant>,
    },
}

impl Volume {
    pub fn is_fixed(&self) -> bool {
        matches!(self, Volume::Fixed)
    }
}

/// How water crosses the membrane.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum Water {
    /// So fast that the inside stays iso-osmotic with the bath at every instant.
    Instant,
    /// At a finite osmotic permeability, µm/s.
    Permeability { pf_um_per_s: f64 },
}

/// The impermeant inside solute X: its concentration at the start and its mean charge.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Impermeant {
    pub inside_mm: f64,
    pub charge: f64,
}

/// What an agent acts on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum AgentTarget {
    /// The resting and gated permeability of its species.
    #[default]
    Permeability,
    /// The pump's maximum current.
    Pump,
}

impl AgentTarget {
    pub fn is_permeability(&self) -> bool {
        *self == AgentTarget::Permeability
    }
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Species {
    pub name: String,
    pub charge: i32,
    #[serde(default = "from_solution", skip_serializing_if = "is_from_solution")]
    pub inside_mm: f64,
    #[serde(default = "from_solution", skip_serializing_if = "is_from_solution")]
    pub outside_mm: f64,
    pub permeability_cm_per_s: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Pump {
    pub exports: String,
    pub imports: String,
    pub exported_per_cycle: u32,
    pub imported_per_cycle: u32,
    pub max_current_ua_per_cm2: f64,
    pub half_saturation_inside_mm: f64,
    pub hill_inside: f64,
    pub half_saturation_outside_mm: f64,
    pub hill_outside: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Channel {
    pub label: String,
    pub species: String,
    pub max_permeability_cm_per_s: f64,
    #[serde(default)]
    pub shift_mv: f64,
    #[serde(default = "default_q10")]
    pub q10: f64,
    #[serde(default = "default_reference_c")]
    pub reference_temperature_c: f64,
    pub gates: Vec<Gate>,
}

fn default_q10() -> f64 {
    3.0
}
fn default_reference_c() -> f64 {
    6.3
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Gate {
    pub kinetics: Kinetics,
    pub power: u32,
}

/// One protocol event. Times in ms from the start of the run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub enum Event {
    /// Multiply one species' resting and gated permeability by `factor` inside `[from, until)`.
    PermeabilityScale {
        species: String,
        factor: f64,
        from_ms: f64,
        #[serde(default)]
        until_ms: Option<f64>,
        #[serde(default)]
        lag_ms: f64,
    },
    /// Exchange the bath: one species' outside concentration becomes `outside_mm` from `at_ms`.
    BathChange {
        species: String,
        outside_mm: f64,
        at_ms: f64,
        #[serde(default)]
        lag_ms: f64,
    },
    /// A drug applied inside `[from, until)` on its species' permeability, or on the pump's
    /// maximum current (`target: Pump`, no species). A blocker multiplies it by
    /// `1 − max_block·occupancy`, an opener (`max_increase` given) by
    /// `1 + max_increase·occupancy`, where occupancy is `dⁿ/(dⁿ + IC50ⁿ)`.
    Agent {
        label: String,
        #[serde(default, skip_serializing_if = "String::is_empty")]
        species: String,
        #[serde(default, skip_serializing_if = "AgentTarget::is_permeability")]
        target: AgentTarget,
        #[serde(default = "one")]
        max_block: f64,
        /// An opener's largest relative increase of permeability; exclusive with a `max_block`
        /// other than its default (a compatible addition to format 1).
        #[serde(default, skip_serializing_if = "Option::is_none")]
        max_increase: Option<f64>,
        ic50_um: f64,
        #[serde(default = "one")]
        hill: f64,
        dose_um: f64,
        from_ms: f64,
        #[serde(default)]
        until_ms: Option<f64>,
        #[serde(default)]
        onset_ms: f64,
        #[serde(default)]
        washout_ms: f64,
    },
    /// One rectangular current pulse, depolarizing when positive.
    Inject {
        amplitude_ua_per_cm2: f64,
        from_ms: f64,
        until_ms: f64,
    },
    /// Exchange the whole bath for the solution named `solution` from `at_ms`: every species'
    /// outside concentration becomes that solution's, each through the lag (solutions.md).
    BathExchange {
        solution: String,
        at_ms: f64,
        #[serde(default)]
        lag_ms: f64,
    },
    /// `count` rectangular pulses, one every `period_ms`.
    InjectTrain {
        amplitude_ua_per_cm2: f64,
        width_ms: f64,
        period_ms: f64,
        count: u32,
        from_ms: f64,
    },
    /// Voltage clamp only: command `to_mv` inside `[from, until)` (`None` = to the end).
    Step {
        to_mv: f64,
        from_ms: f64,
        #[serde(default)]
        until_ms: Option<f64>,
    },
    /// Voltage clamp only: command rising linearly from `from_mv` to `to_mv` inside `[from, until)`.
    Ramp {
        from_mv: f64,
        to_mv: f64,
        from_ms: f64,
        until_ms: f64,
    },
}

fn one() -> f64 {
    1.0
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum Start {
    /// The steady state of everything under the commands in force at t = 0.
    Rest,
    /// This membrane potential, mV, with gates at their steady state for it.
    Voltage(f64),
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RunSettings {
    pub duration_ms: f64,
    #[serde(default = "default_sample_ms")]
    pub sample_ms: f64,
    #[serde(default = "default_start")]
    pub start: Start,
    /// Current clamp (the default, written nowhere) or voltage clamp (clamp-and-volume.md).
    #[serde(default, skip_serializing_if = "RunMode::is_current_clamp")]
    pub mode: RunMode,
    /// One number varied over values, one run per value (clamp-and-volume.md, "Families").
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub family: Option<Family>,
}

/// What holds the membrane: the cell itself, or a voltage-clamp amplifier.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub enum RunMode {
    /// V follows the membrane equation; `Inject`/`InjectTrain` events apply.
    #[default]
    CurrentClamp,
    /// V is held at a command: `holding_mv` outside every `Step`/`Ramp`. With a series
    /// resistance (MΩ, whole cell) V lags the command; `compensation` (0 ≤ k < 1) removes
    /// that fraction of it.
    VoltageClamp {
        holding_mv: f64,
        #[serde(default)]
        series_resistance_mohm: f64,
        #[serde(default)]
        compensation: f64,
    },
}

impl RunMode {
    pub fn is_current_clamp(&self) -> bool {
        matches!(self, RunMode::CurrentClamp)
    }
}

/// One number of the scenario (by its field path) and the values it takes, one run each.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum Family {
    /// The listed values, in order.
    Values {
        field: fields::Address,
        values: Vec<f64>,
    },
    /// `from`, `from + step`, … up to `to` (inclusive, within rounding).
    Range {
        field: fields::Address,
        from: f64,
        to: f64,
        step: f64,
    },
}

fn default_sample_ms() -> f64 {
    0.1
}
fn default_start() -> Start {
    Start::Rest
}

impl Scenario {
    /// The species as physics ions with the file's own values.
    pub fn ions(&self) -> Vec<crate::physics::Ion> {
        self.species
            .iter()
            .map(|x| crate::physics::Ion {
                charge: x.charge,
                inside_mm: x.inside_mm,
                outside_mm: x.outside_mm,
                p_cm_per_s: x.permeability_cm_per_s,
            })
            .collect()
    }

    /// Labels of the protocol's agents, in file order.
    pub fn agent_labels(&self) -> impl Iterator<Item = &str> {
        self.protocol.iter().filter_map(|e| match e {
            Event::Agent { label, .. } => Some(label.as_str()),
            _ => None,
        })
    }

    /// The IC50 (µM) of the agent labelled `label`.
    pub fn agent_ic50_um(&self, label: &str) -> Option<f64> {
        self.protocol.iter().find_map(|e| match e {
            Event::Agent {
                label: l, ic50_um, ..
            } if l == label => Some(*ic50_um),
            _ => None,
        })
    }

    /// Index of the species called `name`.
    pub fn species_index(&self, name: &str) -> Option<usize> {
        self.species.iter().position(|s| s.name == name)
    }

    /// A small passive cell in a normal bath: the window's starting point for "New".
    pub fn new_default() -> Self {
        Scenario {
            format: FORMAT,
            title: "Untitled cell".into(),
            notes: String::new(),
            temperature_c: 37.0,
            cell: Cell::default(),
            compounds: vec![],
            solutions: vec![],
            inside: None,
            outside: None,
            activities: false,
            reference: None,
            species: vec![
                Species {
                    name: "K+".into(),
                    charge: 1,
                    inside_mm: 140.0,
                    outside_mm: 5.0,
                    permeability_cm_per_s: 5.0e-7,
                },
                Species {
                    name: "Na+".into(),
                    charge: 1,
                    inside_mm: 12.0,
                    outside_mm: 145.0,
                    permeability_cm_per_s: 2.5e-8,
                },
                Species {
                    name: "Cl-".into(),
                    charge: -1,
                    inside_mm: 10.0,
                    outside_mm: 120.0,
                    permeability_cm_per_s: 1.0e-7,
                },
            ],
            pump: None,
            channels: vec![],
            protocol: vec![],
            run: RunSettings {
                duration_ms: 200.0,
                sample_ms: 0.1,
                start: Start::Rest,
                mode: RunMode::CurrentClamp,
                family: None,
            },
        }
    }
}
