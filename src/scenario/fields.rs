//! Every number of a scenario in one table, [`FIELDS`]: for each, its place in the file, its
//! unit, a plain label, the bounds it must keep, how it is written and dragged, the span a big
//! slider covers, and how to read and write it. The window's editor, undo and presentation pins,
//! `validate`'s simple bounds, and (later) `permeant family --vary` all go through this table, so
//! a new number of the format is one row here.
//!
//! A number is addressed by an [`Address`]: a row and the list indices its path needs. It prints
//! as the field path that validation messages use (`temperature_c`, `species[1].outside_mm`,
//! `channels[0].gates[1].kinetics.tau_ms`, `run.start`) and parses back from it. An enum's
//! variant name (an event's kind, `Boltzmann`, `Voltage`) is not part of a path, so `run.start`
//! is the potential of `start: Voltage(v)` and `protocol[2].from_ms` is the start of whatever
//! event is third.

use std::fmt;
use std::hash::{Hash, Hasher};
use std::str::FromStr;

use serde::{Deserialize, Deserializer, Serialize, Serializer};

use super::validate::{MAX_DURATION_MS, MAX_GATE_POWER};
use super::{
    Cell, Channel, CompoundIon, Event, Family, Gate, Impermeant, Kinetics, Pump, Reference, RunMode,
    RunSettings, Scenario, Solution, Species, Start, Volume, Water,
};

/// One number of the scenario format: one row of [`FIELDS`].
#[derive(Debug)]
pub struct Field {
    /// The field path with its list indices left out, e.g. `species[].outside_mm`.
    pub path: &'static str,
    /// The unit shown beside the value ("" for plain numbers).
    pub unit: &'static str,
    /// A short plain name; [`Address::label`] puts the name of its species, channel, gate or
    /// event before it ("K+ outside", "event 2 dose").
    pub label: &'static str,
    /// Bounds that `validate` checks on this number alone (rules across fields stay there).
    pub limits: Limits,
    pub style: Style,
    pub drag: Drag,
    /// What a big presentation slider covers on a linear scale (log-dragged numbers get four
    /// decades around their value).
    pub span: Span,
    /// Where the number lives and how to read and write it there.
    pub holder: Holder,
}

/// The bounds one number keeps, with the message that says why a value is refused.
#[derive(Debug, Clone, Copy)]
pub enum Limits {
    /// Any finite number.
    Finite,
    /// A finite number ≥ 0; the words name the quantity ("a concentration").
    NonNegative(&'static str),
    /// A finite number > 0.
    Positive(&'static str),
    /// A finite number > 0 and at most `max` (the bound is checked on its own, so an infinite
    /// value is told both).
    PositiveUpTo {
        what: &'static str,
        max: f64,
        over: fn(f64) -> String,
    },
    /// A finite number from `lo` to `hi` (or exactly 0 when `zero_ok`): bounds where physics
    /// or the integrator's reach ends, so that a file `check` accepts also runs. The words name
    /// the quantity, `unit` its unit in messages.
    Within {
        what: &'static str,
        unit: &'static str,
        lo: f64,
        hi: f64,
        zero_ok: bool,
    },
    /// A finite number from `lo` to `hi`, and not 0 when `nonzero`; `outside` says why not.
    Range {
        lo: f64,
        hi: f64,
        nonzero: bool,
        outside: fn(f64) -> String,
    },
}

impl Limits {
    /// Why `x` breaks these bounds, each reason once (empty when it keeps them).
    pub fn check(&self, x: f64) -> Vec<String> {
        let mut why = Vec::new();
        if !x.is_finite() {
            why.push(format!("must be a finite number, not {}", shown(x)));
        }
        let finite = why.is_empty();
        match *self {
            Limits::Finite => {}
            Limits::NonNegative(what) => {
                if finite && x < 0.0 {
                    why.push(format!("{what} cannot be negative (got {})", shown(x)));
                }
            }
            Limits::Positive(what) => {
                if finite && x <= 0.0 {
                    why.push(format!("{what} must be greater than 0 (got {})", shown(x)));
                }
            }
            Limits::PositiveUpTo { what, max, over } => {
                if finite && x <= 0.0 {
                    why.push(format!("{what} must be greater than 0 (got {})", shown(x)));
                }
                if x > max {
                    why.push(over(x));
                }
            }
            Limits::Within {
                what,
                unit,
                lo,
                hi,
                zero_ok,
            } => {
                let unit = if unit.is_empty() {
                    String::new()
                } else {
                    format!(" {unit}")
                };
                if finite && x < 0.0 && (lo == 0.0 || zero_ok) {
                    why.push(format!("{what} cannot be negative (got {})", shown(x)));
                } else if finite && x <= 0.0 && lo > 0.0 && !zero_ok {
                    why.push(format!("{what} must be greater than 0 (got {})", shown(x)));
                } else if finite && !(lo..=hi).contains(&x) && !(zero_ok && x == 0.0) {
                    let or_zero = if zero_ok { "0 or " } else { "" };
                    why.push(format!(
                        "{what} must be {or_zero}from {} to {}{unit} (got {})",
                        shown(lo),
                        shown(hi),
                        shown(x)
                    ));
                }
            }
            Limits::Range {
                lo,
                hi,
                nonzero,
                outside,
            } => {
                if finite && (!(lo..=hi).contains(&x) || (nonzero && x == 0.0)) {
                    why.push(outside(x));
                }
            }
        }
        why
    }
}

/// A number in a message: as written in a file, but in scientific notation when it would
/// take more than about 16 digits (1e308 is not printed as 309 of them).
pub fn shown(x: f64) -> String {
    let a = x.abs();
    if a != 0.0 && a.is_finite() && !(1e-5..1e16).contains(&a) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// Largest concentration, mM: 10 M, beyond any salt's solubility in water.
pub const MAX_CONCENTRATION_MM: f64 = 1e4;
/// Shortest time constant (of a gate, a lag, an onset or a washout), ms: 1 µs, faster than any
/// channel's gating; shorter ones only make the equations stiff beyond what a step resolves.
pub const MIN_TIME_CONSTANT_MS: f64 = 1e-3;
/// Largest Hill coefficient: published ones stay below about 10.
pub const MAX_HILL: f64 = 20.0;

/// How a value is written in a field.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Style {
    /// Up to four significant digits, scientific only for very large or small values.
    Plain,
    /// Always scientific (permeabilities span many decades).
    Scientific,
    /// A whole number.
    Whole,
}

/// How dragging a value changes it (a hint for a front end; no pointer types here).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Drag {
    /// Add `per_point` for each point of pointer movement.
    Linear { per_point: f64 },
    /// Multiply by a constant factor per point moved; a value of 0 starts from `floor`.
    /// Concentrations, permeabilities, doses and time constants span decades.
    Log { floor: f64 },
}

/// The values a big slider for a linearly dragged number covers, before it is widened to
/// hold the present value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Span {
    /// From 0 to several times the value (to the value ×4 below 0; whole numbers from 0 to
    /// twice the value, at least 6).
    Auto,
    /// A span that suits the quantity (a temperature, a potential, a fraction).
    Fixed { lo: f64, hi: f64 },
    /// From 0 to the run's duration (event times).
    RunTime,
    /// As far below 0 as above it (an injected current of either sign).
    Symmetric,
}

/// A number's storage in a scenario.
#[derive(Debug)]
pub enum Place<'a> {
    Real(&'a mut f64),
    /// A signed whole number (a charge).
    Signed(&'a mut i32),
    /// A count or a power.
    Unsigned(&'a mut u32),
}

impl<'a> From<&'a mut f64> for Place<'a> {
    fn from(x: &'a mut f64) -> Self {
        Place::Real(x)
    }
}
impl<'a> From<&'a mut i32> for Place<'a> {
    fn from(x: &'a mut i32) -> Self {
        Place::Signed(x)
    }
}
impl<'a> From<&'a mut u32> for Place<'a> {
    fn from(x: &'a mut u32) -> Self {
        Place::Unsigned(x)
    }
}

impl Place<'_> {
    /// Stores `v`; whole-number places take the nearest whole number their type holds.
    fn store(self, v: f64) {
        match self {
            Place::Real(x) => *x = v,
            Place::Signed(x) => *x = v.round().clamp(f64::from(i32::MIN), f64::from(i32::MAX)) as i32,
            Place::Unsigned(x) => *x = v.round().clamp(0.0, f64::from(u32::MAX)) as u32,
        }
    }
}

/// A number as stored (real or whole), read as a real number.
trait Stored {
    fn value(&self) -> f64;
}
impl Stored for f64 {
    fn value(&self) -> f64 {
        *self
    }
}
impl Stored for i32 {
    fn value(&self) -> f64 {
        f64::from(*self)
    }
}
impl Stored for u32 {
    fn value(&self) -> f64 {
        f64::from(*self)
    }
}

/// Reading and writing one number inside a `T`; `None` where this `T` has no such number (an
/// event of another kind, an agent that lasts to the end, a Hodgkin–Huxley gate's `v_half_mv`).
pub struct Pick<T> {
    read: fn(&T) -> Option<f64>,
    place: for<'a> fn(&'a mut T) -> Option<Place<'a>>,
}

impl<T> Clone for Pick<T> {
    fn clone(&self) -> Self {
        *self
    }
}
impl<T> Copy for Pick<T> {}
impl<T> fmt::Debug for Pick<T> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("Pick")
    }
}

/// A [`Pick`] from match arms written once: each arm's pattern binds the number, and default
/// binding modes make the same arm read through `&T` and write through `&mut T`.
macro_rules! pick {
    ($($pattern:pat => $number:ident),+ $(,)?) => {
        Pick {
            read: |x| match x {
                $($pattern => Some(Stored::value($number)),)+
                #[allow(unreachable_patterns)]
                _ => None,
            },
            place: |x| match x {
                $($pattern => Some(Place::from($number)),)+
                #[allow(unreachable_patterns)]
                _ => None,
            },
        }
    };
}

/// Where a number lives, and how to reach it there.
#[derive(Debug, Clone, Copy)]
pub enum Holder {
    Scenario(Pick<Scenario>),
    Cell(Pick<Cell>),
    /// `species[i]`
    Species(Pick<Species>),
    Pump(Pick<Pump>),
    /// `channels[i]`
    Channel(Pick<Channel>),
    /// `channels[i].gates[j]`
    Gate(Pick<Gate>),
    /// `protocol[i]`
    Event(Pick<Event>),
    Run(Pick<RunSettings>),
    /// `run.family.values[i]`
    FamilyValue(Pick<f64>),
    /// `compounds[i].ions[j]`
    CompoundIon(Pick<CompoundIon>),
    /// `solutions[i]`
    Solution(Pick<Solution>),
    /// `solutions[i].parts[j]`: a compound and its amount
    SolutionPart(Pick<(String, f64)>),
}

/// The kinds of [`Holder`], in the order the file has them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Part {
    Scenario,
    Cell,
    Species,
    Pump,
    Channel,
    Gate,
    Event,
    Run,
    FamilyValue,
    CompoundIon,
    Solution,
    SolutionPart,
}

impl Holder {
    pub fn part(&self) -> Part {
        match self {
            Holder::Scenario(_) => Part::Scenario,
            Holder::Cell(_) => Part::Cell,
            Holder::Species(_) => Part::Species,
            Holder::Pump(_) => Part::Pump,
            Holder::Channel(_) => Part::Channel,
            Holder::Gate(_) => Part::Gate,
            Holder::Event(_) => Part::Event,
            Holder::Run(_) => Part::Run,
            Holder::FamilyValue(_) => Part::FamilyValue,
            Holder::CompoundIon(_) => Part::CompoundIon,
            Holder::Solution(_) => Part::Solution,
            Holder::SolutionPart(_) => Part::SolutionPart,
        }
    }
}

/// Goes from the scenario to the holder at `at` and calls its pick's `$call`: the same walk
/// for reading (`get`, `as_ref`) and for writing (`get_mut`, `as_mut`, `mut`).
macro_rules! reach {
    ($holder:expr, $s:ident, $at:expr, $call:ident, $get:ident, $opt:ident $(, $mut:tt)?) => {{
        let [i, j] = $at;
        match $holder {
            Holder::Scenario(p) => (p.$call)($s),
            Holder::Cell(p) => (p.$call)(& $($mut)? $s.cell),
            Holder::Species(p) => (p.$call)($s.species.$get(i)?),
            Holder::Pump(p) => (p.$call)($s.pump.$opt()?),
            Holder::Channel(p) => (p.$call)($s.channels.$get(i)?),
            Holder::Gate(p) => (p.$call)($s.channels.$get(i)?.gates.$get(j)?),
            Holder::Event(p) => (p.$call)($s.protocol.$get(i)?),
            Holder::Run(p) => (p.$call)(& $($mut)? $s.run),
            Holder::FamilyValue(p) => match & $($mut)? $s.run.family {
                Some(Family::Values { values, .. }) => (p.$call)(values.$get(i)?),
                _ => None,
            },
            Holder::CompoundIon(p) => (p.$call)($s.compounds.$get(i)?.ions.$get(j)?),
            Holder::Solution(p) => (p.$call)($s.solutions.$get(i)?),
            Holder::SolutionPart(p) => (p.$call)($s.solutions.$get(i)?.parts.$get(j)?),
        }
    }};
}

fn read(holder: Holder, s: &Scenario, at: [usize; 2]) -> Option<f64> {
    reach!(holder, s, at, read, get, as_ref)
}

fn place(holder: Holder, s: &mut Scenario, at: [usize; 2]) -> Option<Place<'_>> {
    reach!(holder, s, at, place, get_mut, as_mut, mut)
}

/// Temperatures the model accepts, °C (model.md; `validate` warns outside 0–45 °C).
const TEMPERATURE_LIMITS: Limits = Limits::Range {
    lo: -5.0,
    hi: 60.0,
    nonzero: false,
    outside: |t| format!("{t} °C is outside the range the model accepts (−5 to 60 °C)"),
};

/// Span of a temperature slider, °C.
const TEMPERATURE_SPAN: Span = Span::Fixed { lo: 0.0, hi: 45.0 };
/// Span of a potential slider, mV.
const POTENTIAL_SPAN: Span = Span::Fixed {
    lo: -150.0,
    hi: 100.0,
};
/// Command and holding potentials a clamp accepts, mV (as a held start's).
const CLAMP_POTENTIAL_LIMITS: Limits = Limits::Range {
    lo: -1000.0,
    hi: 1000.0,
    nonzero: false,
    outside: |v| format!("a command potential of {v} mV is outside ±1000 mV"),
};
/// Largest series-resistance compensation: below 1, or no resistance would be left.
pub const MAX_COMPENSATION: f64 = 0.99;

/// Span of a Hill coefficient or q10 slider.
const COEFFICIENT_SPAN: Span = Span::Fixed { lo: 0.5, hi: 5.0 };

/// Steps of whole-number drags: twenty points of movement per unit.
const WHOLE_DRAG: Drag = Drag::Linear { per_point: 0.05 };
/// Concentrations, from 10 µM up.
const CONCENTRATION_DRAG: Drag = Drag::Log { floor: 0.01 };
/// Time constants, from 0.1 ms up.
const TIME_CONSTANT_DRAG: Drag = Drag::Log { floor: 0.1 };
/// Permeabilities, from 1e-10 cm/s up.
const PERMEABILITY_DRAG: Drag = Drag::Log { floor: 1e-10 };
/// Event times, 1 ms per point.
const TIME_DRAG: Drag = Drag::Linear { per_point: 1.0 };

/// Every number of a scenario. Rows of one holder are in the order `validate` reports their
/// problems; the format version is not a number a user changes, so it has no row.
pub static FIELDS: &[Field] = &[
    Field {
        path: "temperature_c",
        unit: "°C",
        label: "temperature",
        limits: TEMPERATURE_LIMITS,
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: TEMPERATURE_SPAN,
        holder: Holder::Scenario(pick!(Scenario { temperature_c, .. } => temperature_c)),
    },
    Field {
        path: "reference.kcl_mm",
        unit: "mM",
        label: "reference bridge KCl",
        limits: Limits::Positive("the bridge's KCl concentration"),
        style: Style::Plain,
        drag: CONCENTRATION_DRAG,
        span: Span::Auto,
        holder: Holder::Scenario(
            pick!(Scenario { reference: Some(Reference::Bridge { kcl_mm }), .. } => kcl_mm),
        ),
    },
    Field {
        path: "compounds[].ions[].charge",
        unit: "",
        label: "charge",
        limits: Limits::Range {
            lo: -3.0,
            hi: 3.0,
            nonzero: false,
            outside: |z| format!("the charge must be a whole number from −3 to 3 (got {z})"),
        },
        style: Style::Whole,
        drag: WHOLE_DRAG,
        span: Span::Fixed { lo: -3.0, hi: 3.0 },
        holder: Holder::CompoundIon(pick!(CompoundIon { charge, .. } => charge)),
    },
    Field {
        path: "compounds[].ions[].count",
        unit: "",
        label: "ions per formula unit",
        limits: Limits::Range {
            lo: 1.0,
            hi: f64::INFINITY,
            nonzero: false,
            outside: |_| "a compound gives at least 1 of each of its ions".into(),
        },
        style: Style::Whole,
        drag: WHOLE_DRAG,
        span: Span::Auto,
        holder: Holder::CompoundIon(pick!(CompoundIon { count, .. } => count)),
    },
    Field {
        path: "compounds[].ions[].conductivity",
        unit: "S·cm²/mol",
        label: "conductivity",
        limits: Limits::Positive("a conductivity"),
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: Span::Auto,
        holder: Holder::CompoundIon(
            pick!(CompoundIon { conductivity: Some(conductivity), .. } => conductivity),
        ),
    },
    Field {
        path: "solutions[].parts[][1]",
        unit: "mM",
        label: "amount",
        limits: Limits::NonNegative("an amount"),
        style: Style::Plain,
        drag: CONCENTRATION_DRAG,
        span: Span::Auto,
        holder: Holder::SolutionPart(pick!((_, mm) => mm)),
    },
    Field {
        path: "solutions[].ph",
        unit: "",
        label: "pH",
        limits: Limits::Range {
            lo: 0.0,
            hi: 14.0,
            nonzero: false,
            outside: |ph| format!("a pH of {ph} is outside 0–14"),
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.01 },
        span: Span::Fixed { lo: 6.0, hi: 8.5 },
        holder: Holder::Solution(pick!(Solution { ph: Some(ph), .. } => ph)),
    },
    Field {
        path: "cell.diameter_um",
        unit: "µm",
        label: "cell diameter",
        limits: Limits::Within {
            what: "the cell diameter",
            unit: "µm",
            lo: 0.1,
            hi: 10000.0,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: Span::Auto,
        holder: Holder::Cell(pick!(Cell { diameter_um, .. } => diameter_um)),
    },
    Field {
        path: "cell.capacitance_uf_per_cm2",
        unit: "µF/cm²",
        label: "membrane capacitance",
        limits: Limits::Within {
            what: "the membrane capacitance",
            unit: "µF/cm²",
            lo: 0.01,
            hi: 100.0,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.01 },
        span: Span::Auto,
        holder: Holder::Cell(pick!(Cell { capacitance_uf_per_cm2, .. } => capacitance_uf_per_cm2)),
    },
    Field {
        path: "cell.volume.water.pf_um_per_s",
        unit: "µm/s",
        label: "osmotic water permeability",
        limits: Limits::Positive("an osmotic water permeability"),
        style: Style::Plain,
        drag: Drag::Log { floor: 0.1 },
        span: Span::Auto,
        holder: Holder::Cell(pick!(
            Cell { volume: Volume::Tracked { water: Water::Permeability { pf_um_per_s }, .. }, .. } => pf_um_per_s
        )),
    },
    Field {
        path: "cell.volume.impermeant.inside_mm",
        unit: "mM",
        label: "impermeant inside",
        limits: Limits::NonNegative("a concentration"),
        style: Style::Plain,
        drag: CONCENTRATION_DRAG,
        span: Span::Auto,
        holder: Holder::Cell(pick!(
            Cell { volume: Volume::Tracked { impermeant: Some(Impermeant { inside_mm, .. }), .. }, .. } => inside_mm
        )),
    },
    Field {
        path: "cell.volume.impermeant.charge",
        unit: "",
        label: "impermeant mean charge",
        // A mean over large molecules: any finite value, whole or not.
        limits: Limits::Finite,
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.01 },
        span: Span::Fixed { lo: -3.0, hi: 3.0 },
        holder: Holder::Cell(pick!(
            Cell { volume: Volume::Tracked { impermeant: Some(Impermeant { charge, .. }), .. }, .. } => charge
        )),
    },
    Field {
        path: "species[].charge",
        unit: "",
        label: "charge",
        limits: Limits::Range {
            lo: -3.0,
            hi: 3.0,
            nonzero: true,
            outside: |z| format!("the charge must be a whole number from −3 to 3 and not 0 (got {z})"),
        },
        style: Style::Whole,
        drag: WHOLE_DRAG,
        span: Span::Fixed { lo: -3.0, hi: 3.0 },
        holder: Holder::Species(pick!(Species { charge, .. } => charge)),
    },
    Field {
        path: "species[].inside_mm",
        unit: "mM",
        label: "inside",
        limits: Limits::Within {
            what: "a concentration",
            unit: "mM",
            lo: 0.0,
            hi: MAX_CONCENTRATION_MM,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: CONCENTRATION_DRAG,
        span: Span::Auto,
        holder: Holder::Species(pick!(Species { inside_mm, .. } => inside_mm)),
    },
    Field {
        path: "species[].outside_mm",
        unit: "mM",
        label: "outside",
        limits: Limits::Within {
            what: "a concentration",
            unit: "mM",
            lo: 0.0,
            hi: MAX_CONCENTRATION_MM,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: CONCENTRATION_DRAG,
        span: Span::Auto,
        holder: Holder::Species(pick!(Species { outside_mm, .. } => outside_mm)),
    },
    Field {
        path: "species[].permeability_cm_per_s",
        unit: "cm/s",
        label: "permeability",
        limits: Limits::Within {
            what: "a permeability",
            unit: "cm/s",
            lo: 0.0,
            hi: 1.0,
            zero_ok: false,
        },
        style: Style::Scientific,
        drag: PERMEABILITY_DRAG,
        span: Span::Auto,
        holder: Holder::Species(pick!(Species { permeability_cm_per_s, .. } => permeability_cm_per_s)),
    },
    Field {
        path: "pump.exported_per_cycle",
        unit: "",
        label: "ions out per cycle",
        limits: Limits::Range {
            lo: 1.0,
            hi: f64::INFINITY,
            nonzero: false,
            outside: |_| "a pump must export at least 1 ion per cycle".into(),
        },
        style: Style::Whole,
        drag: WHOLE_DRAG,
        span: Span::Auto,
        holder: Holder::Pump(pick!(Pump { exported_per_cycle, .. } => exported_per_cycle)),
    },
    Field {
        path: "pump.imported_per_cycle",
        unit: "",
        label: "ions in per cycle",
        limits: Limits::Finite,
        style: Style::Whole,
        drag: WHOLE_DRAG,
        span: Span::Auto,
        holder: Holder::Pump(pick!(Pump { imported_per_cycle, .. } => imported_per_cycle)),
    },
    Field {
        path: "pump.max_current_ua_per_cm2",
        unit: "µA/cm²",
        label: "largest current",
        limits: Limits::Within {
            what: "the pump current",
            unit: "µA/cm²",
            lo: 0.0,
            hi: 1000.0,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.01 },
        span: Span::Auto,
        holder: Holder::Pump(pick!(Pump { max_current_ua_per_cm2, .. } => max_current_ua_per_cm2)),
    },
    Field {
        path: "pump.half_saturation_inside_mm",
        unit: "mM",
        label: "half-activation inside",
        limits: Limits::Within {
            what: "a half-saturation concentration",
            unit: "mM",
            lo: 1e-6,
            hi: MAX_CONCENTRATION_MM,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: CONCENTRATION_DRAG,
        span: Span::Auto,
        holder: Holder::Pump(pick!(Pump { half_saturation_inside_mm, .. } => half_saturation_inside_mm)),
    },
    Field {
        path: "pump.half_saturation_outside_mm",
        unit: "mM",
        label: "half-activation outside",
        limits: Limits::Within {
            what: "a half-saturation concentration",
            unit: "mM",
            lo: 1e-6,
            hi: MAX_CONCENTRATION_MM,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: CONCENTRATION_DRAG,
        span: Span::Auto,
        holder: Holder::Pump(pick!(Pump { half_saturation_outside_mm, .. } => half_saturation_outside_mm)),
    },
    Field {
        path: "pump.hill_inside",
        unit: "",
        label: "Hill coefficient inside",
        limits: Limits::Within {
            what: "a Hill coefficient",
            unit: "",
            lo: 0.1,
            hi: MAX_HILL,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.02 },
        span: COEFFICIENT_SPAN,
        holder: Holder::Pump(pick!(Pump { hill_inside, .. } => hill_inside)),
    },
    Field {
        path: "pump.hill_outside",
        unit: "",
        label: "Hill coefficient outside",
        limits: Limits::Within {
            what: "a Hill coefficient",
            unit: "",
            lo: 0.1,
            hi: MAX_HILL,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.02 },
        span: COEFFICIENT_SPAN,
        holder: Holder::Pump(pick!(Pump { hill_outside, .. } => hill_outside)),
    },
    Field {
        path: "channels[].max_permeability_cm_per_s",
        unit: "cm/s",
        label: "largest permeability",
        limits: Limits::Within {
            what: "a permeability",
            unit: "cm/s",
            lo: 0.0,
            hi: 1.0,
            zero_ok: false,
        },
        style: Style::Scientific,
        drag: PERMEABILITY_DRAG,
        span: Span::Auto,
        holder: Holder::Channel(
            pick!(Channel { max_permeability_cm_per_s, .. } => max_permeability_cm_per_s),
        ),
    },
    Field {
        path: "channels[].shift_mv",
        unit: "mV",
        label: "voltage shift",
        limits: Limits::Within {
            what: "a voltage shift",
            unit: "mV",
            lo: -1000.0,
            hi: 1000.0,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: POTENTIAL_SPAN,
        holder: Holder::Channel(pick!(Channel { shift_mv, .. } => shift_mv)),
    },
    Field {
        path: "channels[].q10",
        unit: "",
        label: "q10",
        limits: Limits::Within {
            what: "q10",
            unit: "",
            lo: 0.1,
            hi: 10.0,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.02 },
        span: COEFFICIENT_SPAN,
        holder: Holder::Channel(pick!(Channel { q10, .. } => q10)),
    },
    Field {
        path: "channels[].reference_temperature_c",
        unit: "°C",
        label: "reference temperature",
        // Q10 scaling is q10^((T − T_ref)/10): a reference far outside the living range makes
        // every rate overflow or vanish, so it gets the same bounds as the cell's temperature.
        limits: TEMPERATURE_LIMITS,
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: TEMPERATURE_SPAN,
        holder: Holder::Channel(pick!(Channel { reference_temperature_c, .. } => reference_temperature_c)),
    },
    Field {
        path: "channels[].gates[].power",
        unit: "",
        label: "power",
        limits: Limits::Range {
            lo: 1.0,
            hi: MAX_GATE_POWER as f64,
            nonzero: false,
            outside: |n| format!("a gate power must be from 1 to {MAX_GATE_POWER} (got {n})"),
        },
        style: Style::Whole,
        drag: WHOLE_DRAG,
        span: Span::Auto,
        holder: Holder::Gate(pick!(Gate { power, .. } => power)),
    },
    Field {
        path: "channels[].gates[].kinetics.v_half_mv",
        unit: "mV",
        label: "half-activation potential",
        limits: Limits::Within {
            what: "a half-activation potential",
            unit: "mV",
            lo: -1000.0,
            hi: 1000.0,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: POTENTIAL_SPAN,
        holder: Holder::Gate(
            pick!(Gate { kinetics: Kinetics::Boltzmann { v_half_mv, .. }, .. } => v_half_mv),
        ),
    },
    Field {
        path: "channels[].gates[].kinetics.slope_mv",
        unit: "mV",
        label: "slope",
        limits: Limits::Range {
            lo: f64::NEG_INFINITY,
            hi: f64::INFINITY,
            nonzero: true,
            outside: |_| "the slope cannot be 0 (positive activates, negative inactivates)".into(),
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: Span::Auto,
        holder: Holder::Gate(pick!(Gate { kinetics: Kinetics::Boltzmann { slope_mv, .. }, .. } => slope_mv)),
    },
    Field {
        path: "channels[].gates[].kinetics.tau_ms",
        unit: "ms",
        label: "time constant",
        limits: Limits::Within {
            what: "the time constant",
            unit: "ms",
            lo: MIN_TIME_CONSTANT_MS,
            hi: 1e9,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: TIME_CONSTANT_DRAG,
        span: Span::Auto,
        holder: Holder::Gate(pick!(Gate { kinetics: Kinetics::Boltzmann { tau_ms, .. }, .. } => tau_ms)),
    },
    Field {
        path: "protocol[].factor",
        unit: "",
        label: "factor",
        limits: Limits::Within {
            what: "a permeability factor",
            unit: "",
            lo: 0.0,
            hi: 1e6,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Log { floor: 0.01 },
        span: Span::Auto,
        holder: Holder::Event(pick!(Event::PermeabilityScale { factor, .. } => factor)),
    },
    Field {
        path: "protocol[].outside_mm",
        unit: "mM",
        label: "new bath concentration",
        limits: Limits::Within {
            what: "a concentration",
            unit: "mM",
            lo: 0.0,
            hi: MAX_CONCENTRATION_MM,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: CONCENTRATION_DRAG,
        span: Span::Auto,
        holder: Holder::Event(pick!(Event::BathChange { outside_mm, .. } => outside_mm)),
    },
    Field {
        path: "protocol[].at_ms",
        unit: "ms",
        label: "time",
        limits: Limits::NonNegative("an event time"),
        style: Style::Plain,
        drag: TIME_DRAG,
        span: Span::RunTime,
        holder: Holder::Event(pick!(
            Event::BathChange { at_ms, .. } | Event::BathExchange { at_ms, .. } => at_ms
        )),
    },
    Field {
        path: "protocol[].max_block",
        unit: "",
        label: "largest block",
        limits: Limits::Range {
            lo: 0.0,
            hi: 1.0,
            nonzero: false,
            outside: |b| format!("the largest fraction blocked must be from 0 to 1 (got {b})"),
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.005 },
        span: Span::Fixed { lo: 0.0, hi: 1.0 },
        holder: Holder::Event(pick!(Event::Agent { max_block, .. } => max_block)),
    },
    Field {
        path: "protocol[].max_increase",
        unit: "",
        label: "largest increase",
        limits: Limits::NonNegative("the largest increase of an opener"),
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.01 },
        span: Span::Fixed { lo: 0.0, hi: 10.0 },
        holder: Holder::Event(pick!(Event::Agent { max_increase: Some(max_increase), .. } => max_increase)),
    },
    Field {
        path: "protocol[].ic50_um",
        unit: "µM",
        label: "IC50",
        limits: Limits::Within {
            what: "the IC50",
            unit: "µM",
            lo: 1e-9,
            hi: 1e9,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Log { floor: 0.01 },
        span: Span::Auto,
        holder: Holder::Event(pick!(Event::Agent { ic50_um, .. } => ic50_um)),
    },
    Field {
        path: "protocol[].hill",
        unit: "",
        label: "Hill coefficient",
        limits: Limits::Within {
            what: "the Hill coefficient",
            unit: "",
            lo: 0.1,
            hi: MAX_HILL,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.02 },
        span: COEFFICIENT_SPAN,
        holder: Holder::Event(pick!(Event::Agent { hill, .. } => hill)),
    },
    Field {
        path: "protocol[].dose_um",
        unit: "µM",
        label: "dose",
        limits: Limits::Within {
            what: "a dose",
            unit: "µM",
            lo: 0.0,
            hi: 1e9,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Log { floor: 0.01 },
        span: Span::Auto,
        holder: Holder::Event(pick!(Event::Agent { dose_um, .. } => dose_um)),
    },
    Field {
        path: "protocol[].amplitude_ua_per_cm2",
        unit: "µA/cm²",
        label: "amplitude",
        limits: Limits::Within {
            what: "an injected current",
            unit: "µA/cm²",
            lo: -10000.0,
            hi: 10000.0,
            zero_ok: false,
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: Span::Symmetric,
        holder: Holder::Event(pick!(
            Event::Inject { amplitude_ua_per_cm2, .. }
            | Event::InjectTrain { amplitude_ua_per_cm2, .. } => amplitude_ua_per_cm2
        )),
    },
    Field {
        path: "protocol[].from_mv",
        unit: "mV",
        label: "ramp start potential",
        limits: CLAMP_POTENTIAL_LIMITS,
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: POTENTIAL_SPAN,
        holder: Holder::Event(pick!(Event::Ramp { from_mv, .. } => from_mv)),
    },
    Field {
        path: "protocol[].to_mv",
        unit: "mV",
        label: "command potential",
        limits: CLAMP_POTENTIAL_LIMITS,
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: POTENTIAL_SPAN,
        holder: Holder::Event(pick!(Event::Step { to_mv, .. } | Event::Ramp { to_mv, .. } => to_mv)),
    },
    Field {
        path: "protocol[].from_ms",
        unit: "ms",
        label: "start",
        limits: Limits::NonNegative("an event time"),
        style: Style::Plain,
        drag: TIME_DRAG,
        span: Span::RunTime,
        holder: Holder::Event(pick!(
            Event::PermeabilityScale { from_ms, .. }
            | Event::Agent { from_ms, .. }
            | Event::Inject { from_ms, .. }
            | Event::InjectTrain { from_ms, .. }
            | Event::Step { from_ms, .. }
            | Event::Ramp { from_ms, .. } => from_ms
        )),
    },
    Field {
        path: "protocol[].until_ms",
        unit: "ms",
        label: "end",
        limits: Limits::NonNegative("an event time"),
        style: Style::Plain,
        drag: TIME_DRAG,
        span: Span::RunTime,
        // A step or agent that lasts to the end of the run has no end time to read or set.
        holder: Holder::Event(pick!(
            Event::PermeabilityScale { until_ms: Some(until_ms), .. }
            | Event::Agent { until_ms: Some(until_ms), .. }
            | Event::Step { until_ms: Some(until_ms), .. } => until_ms,
            Event::Inject { until_ms, .. } | Event::Ramp { until_ms, .. } => until_ms,
        )),
    },
    Field {
        path: "protocol[].lag_ms",
        unit: "ms",
        label: "lag",
        limits: Limits::Within {
            what: "a lag",
            unit: "ms",
            lo: MIN_TIME_CONSTANT_MS,
            hi: 1e9,
            zero_ok: true,
        },
        style: Style::Plain,
        drag: TIME_CONSTANT_DRAG,
        span: Span::Auto,
        holder: Holder::Event(pick!(
            Event::PermeabilityScale { lag_ms, .. }
            | Event::BathChange { lag_ms, .. }
            | Event::BathExchange { lag_ms, .. } => lag_ms
        )),
    },
    Field {
        path: "protocol[].onset_ms",
        unit: "ms",
        label: "onset time constant",
        limits: Limits::Within {
            what: "a time constant",
            unit: "ms",
            lo: MIN_TIME_CONSTANT_MS,
            hi: 1e9,
            zero_ok: true,
        },
        style: Style::Plain,
        drag: TIME_CONSTANT_DRAG,
        span: Span::Auto,
        holder: Holder::Event(pick!(Event::Agent { onset_ms, .. } => onset_ms)),
    },
    Field {
        path: "protocol[].washout_ms",
        unit: "ms",
        label: "washout time constant",
        limits: Limits::Within {
            what: "a time constant",
            unit: "ms",
            lo: MIN_TIME_CONSTANT_MS,
            hi: 1e9,
            zero_ok: true,
        },
        style: Style::Plain,
        drag: TIME_CONSTANT_DRAG,
        span: Span::Auto,
        holder: Holder::Event(pick!(Event::Agent { washout_ms, .. } => washout_ms)),
    },
    Field {
        path: "protocol[].count",
        unit: "",
        label: "pulse count",
        limits: Limits::Range {
            lo: 1.0,
            hi: f64::INFINITY,
            nonzero: false,
            outside: |_| "a train needs at least one pulse".into(),
        },
        style: Style::Whole,
        drag: WHOLE_DRAG,
        span: Span::Auto,
        holder: Holder::Event(pick!(Event::InjectTrain { count, .. } => count)),
    },
    Field {
        path: "protocol[].period_ms",
        unit: "ms",
        label: "period",
        limits: Limits::Positive("the period"),
        style: Style::Plain,
        drag: TIME_DRAG,
        span: Span::Auto,
        holder: Holder::Event(pick!(Event::InjectTrain { period_ms, .. } => period_ms)),
    },
    Field {
        path: "protocol[].width_ms",
        unit: "ms",
        label: "pulse width",
        limits: Limits::Positive("the pulse width"),
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.05 },
        span: Span::Auto,
        holder: Holder::Event(pick!(Event::InjectTrain { width_ms, .. } => width_ms)),
    },
    Field {
        path: "run.duration_ms",
        unit: "ms",
        label: "run duration",
        limits: Limits::PositiveUpTo {
            what: "the duration",
            max: MAX_DURATION_MS,
            over: |d| {
                format!(
                    "{d} ms is longer than the longest run this program integrates ({MAX_DURATION_MS:e} ms)"
                )
            },
        },
        style: Style::Plain,
        drag: TIME_DRAG,
        span: Span::Auto,
        holder: Holder::Run(pick!(RunSettings { duration_ms, .. } => duration_ms)),
    },
    Field {
        path: "run.sample_ms",
        unit: "ms",
        label: "sample interval",
        limits: Limits::Positive("the sample interval"),
        style: Style::Plain,
        drag: Drag::Log { floor: 0.001 },
        span: Span::Auto,
        holder: Holder::Run(pick!(RunSettings { sample_ms, .. } => sample_ms)),
    },
    Field {
        path: "run.start",
        unit: "mV",
        label: "starting potential",
        limits: Limits::Range {
            lo: -1000.0,
            hi: 1000.0,
            nonzero: false,
            outside: |v| format!("a starting potential of {v} mV is outside ±1000 mV"),
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: POTENTIAL_SPAN,
        // Only a run held at a potential has one; `start: Rest` has no number.
        holder: Holder::Run(pick!(RunSettings { start: Start::Voltage(v), .. } => v)),
    },
    Field {
        path: "run.mode.holding_mv",
        unit: "mV",
        label: "holding potential",
        limits: CLAMP_POTENTIAL_LIMITS,
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: POTENTIAL_SPAN,
        holder: Holder::Run(
            pick!(RunSettings { mode: RunMode::VoltageClamp { holding_mv, .. }, .. } => holding_mv),
        ),
    },
    Field {
        path: "run.mode.series_resistance_mohm",
        unit: "MΩ",
        label: "series resistance",
        limits: Limits::NonNegative("a series resistance"),
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: Span::Fixed { lo: 0.0, hi: 30.0 },
        holder: Holder::Run(pick!(
            RunSettings { mode: RunMode::VoltageClamp { series_resistance_mohm, .. }, .. } => series_resistance_mohm
        )),
    },
    Field {
        path: "run.mode.compensation",
        unit: "",
        label: "series-resistance compensation",
        limits: Limits::Range {
            lo: 0.0,
            hi: MAX_COMPENSATION,
            nonzero: false,
            outside: |k| {
                format!(
                    "compensation is a fraction from 0 to {MAX_COMPENSATION} (full compensation, 1, would leave no resistance to clamp through; got {k})"
                )
            },
        },
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.005 },
        span: Span::Fixed {
            lo: 0.0,
            hi: MAX_COMPENSATION,
        },
        holder: Holder::Run(pick!(
            RunSettings { mode: RunMode::VoltageClamp { compensation, .. }, .. } => compensation
        )),
    },
    Field {
        path: "run.family.from",
        unit: "",
        label: "family: first value",
        limits: Limits::Finite,
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: Span::Symmetric,
        holder: Holder::Run(pick!(RunSettings { family: Some(Family::Range { from, .. }), .. } => from)),
    },
    Field {
        path: "run.family.to",
        unit: "",
        label: "family: last value",
        limits: Limits::Finite,
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: Span::Symmetric,
        holder: Holder::Run(pick!(RunSettings { family: Some(Family::Range { to, .. }), .. } => to)),
    },
    Field {
        path: "run.family.step",
        unit: "",
        label: "family: step",
        limits: Limits::Positive("the family's step"),
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: Span::Auto,
        holder: Holder::Run(pick!(RunSettings { family: Some(Family::Range { step, .. }), .. } => step)),
    },
    Field {
        path: "run.family.values[]",
        unit: "",
        label: "family value",
        limits: Limits::Finite,
        style: Style::Plain,
        drag: Drag::Linear { per_point: 0.1 },
        span: Span::Symmetric,
        holder: Holder::FamilyValue(pick!(v => v)),
    },
];

/// Most list indices a path holds (`channels[i].gates[j]`).
const DEPTH: usize = 2;

/// The address of one number of a scenario: a row of [`FIELDS`] and the list indices its
/// path needs. It prints as the field path validation uses and parses back from it.
#[derive(Clone, Copy)]
pub struct Address {
    field: &'static Field,
    at: [usize; DEPTH],
}

impl Field {
    /// How many list indices the path holds.
    pub fn depth(&self) -> usize {
        self.path.matches("[]").count()
    }

    /// This number in the holder at list indices `at` (extra indices are ignored, missing
    /// ones are 0).
    pub fn at(&'static self, at: &[usize]) -> Address {
        let mut ix = [0; DEPTH];
        for (slot, i) in ix.iter_mut().zip(at.iter().take(self.depth())) {
            *slot = *i;
        }
        Address { field: self, at: ix }
    }
}

/// The row whose path (indices left out) is `path`, e.g. `species[].outside_mm`.
pub fn field(path: &str) -> Option<&'static Field> {
    FIELDS.iter().find(|f| f.path == path)
}

impl Address {
    /// The number at `path` (indices left out) and list indices `at`, e.g.
    /// `Address::of("species[].outside_mm", &[0])`; `None` when no row has that path.
    pub fn of(path: &str, at: &[usize]) -> Option<Address> {
        field(path).map(|f| f.at(at))
    }

    /// The row of the table.
    pub fn field(&self) -> &'static Field {
        self.field
    }

    /// The list indices of the path, outermost first.
    pub fn indices(&self) -> &[usize] {
        self.at.get(..self.field.depth()).unwrap_or(&[])
    }

    /// The value in `s`, or `None` when `s` has no such number (an index past the end, a
    /// number this event kind does not have, an agent without an end).
    pub fn get(&self, s: &Scenario) -> Option<f64> {
        read(self.field.holder, s, self.at)
    }

    /// Writes `v` into `s`; returns false (and changes nothing) when `s` has no such number.
    /// Whole-number fields take the nearest whole number. Whether the scenario still makes
    /// sense is `validate`'s to say.
    pub fn set(&self, s: &mut Scenario, v: f64) -> bool {
        match place(self.field.holder, s, self.at) {
            Some(p) => {
                p.store(v);
                true
            }
            None => false,
        }
    }

    /// A short plain name for labels, tooltips and screen readers, e.g. "K+ outside".
    pub fn label(&self, s: &Scenario) -> String {
        let [i, j] = self.at;
        let label = self.field.label;
        let channel = || {
            s.channels
                .get(i)
                .map_or_else(|| format!("channel {}", i + 1), |x| x.label.clone())
        };
        match self.field.holder.part() {
            Part::Scenario | Part::Cell | Part::Run => label.to_string(),
            Part::FamilyValue => format!("{label} {}", i + 1),
            Part::Species => {
                let name = s
                    .species
                    .get(i)
                    .map_or_else(|| format!("species {}", i + 1), |x| x.name.clone());
                format!("{name} {label}")
            }
            Part::Pump => format!("pump: {label}"),
            Part::Channel => format!("{}: {label}", channel()),
            Part::Gate => format!("{} gate {}: {label}", channel(), j + 1),
            Part::Event => format!("event {} {label}", i + 1),
            Part::CompoundIon => {
                let name = s
                    .compounds
                    .get(i)
                    .and_then(|c| c.ions.get(j))
                    .map_or_else(|| format!("compound {} ion {}", i + 1, j + 1), |x| x.ion.clone());
                format!("{name} {label}")
            }
            Part::Solution => {
                let name = s
                    .solutions
                    .get(i)
                    .map_or_else(|| format!("solution {}", i + 1), |x| x.name.clone());
                format!("{name}: {label}")
            }
            Part::SolutionPart => {
                let solution = s.solutions.get(i);
                let name = solution.map_or_else(|| format!("solution {}", i + 1), |x| x.name.clone());
                let compound = solution
                    .and_then(|x| x.parts.get(j))
                    .map_or_else(|| format!("part {}", j + 1), |x| x.0.clone());
                format!("{name}: {compound}")
            }
        }
    }
}

/// The numbers of `part` at list indices `at` that `s` has, in table order.
pub fn numbers_of<'s>(s: &'s Scenario, part: Part, at: &'s [usize]) -> impl Iterator<Item = Address> + 's {
    FIELDS
        .iter()
        .filter(move |f| f.holder.part() == part)
        .map(move |f| f.at(at))
        .filter(move |a| a.get(s).is_some())
}

/// Every number of `s`, in the order of the file (each species, channel with its gates, and
/// event in turn).
pub fn addresses(s: &Scenario) -> Vec<Address> {
    let mut out: Vec<Address> = Vec::new();
    out.extend(numbers_of(s, Part::Scenario, &[]));
    out.extend(numbers_of(s, Part::Cell, &[]));
    for (i, c) in s.compounds.iter().enumerate() {
        for j in 0..c.ions.len() {
            out.extend(numbers_of(s, Part::CompoundIon, &[i, j]));
        }
    }
    for (i, x) in s.solutions.iter().enumerate() {
        for j in 0..x.parts.len() {
            out.extend(numbers_of(s, Part::SolutionPart, &[i, j]));
        }
        out.extend(numbers_of(s, Part::Solution, &[i]));
    }
    for i in 0..s.species.len() {
        out.extend(numbers_of(s, Part::Species, &[i]));
    }
    out.extend(numbers_of(s, Part::Pump, &[]));
    for (i, c) in s.channels.iter().enumerate() {
        out.extend(numbers_of(s, Part::Channel, &[i]));
        for j in 0..c.gates.len() {
            out.extend(numbers_of(s, Part::Gate, &[i, j]));
        }
    }
    for i in 0..s.protocol.len() {
        out.extend(numbers_of(s, Part::Event, &[i]));
    }
    out.extend(numbers_of(s, Part::Run, &[]));
    if let Some(Family::Values { values, .. }) = &s.run.family {
        for i in 0..values.len() {
            out.extend(numbers_of(s, Part::FamilyValue, &[i]));
        }
    }
    out
}

impl PartialEq for Address {
    fn eq(&self, other: &Self) -> bool {
        self.field.path == other.field.path && self.at == other.at
    }
}
impl Eq for Address {}
impl Hash for Address {
    fn hash<H: Hasher>(&self, state: &mut H) {
        self.field.path.hash(state);
        self.at.hash(state);
    }
}

impl fmt::Display for Address {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut indices = self.indices().iter();
        for (k, piece) in self.field.path.split("[]").enumerate() {
            if k > 0 {
                match indices.next() {
                    Some(i) => write!(f, "[{i}]")?,
                    None => f.write_str("[]")?,
                }
            }
            f.write_str(piece)?;
        }
        Ok(())
    }
}

impl fmt::Debug for Address {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "Address({self})")
    }
}

/// Why a text is not the address of a number.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum AddressError {
    #[error("\"{0}\" is not a field path (write it like species[0].outside_mm)")]
    Syntax(String),
    #[error("{path} is not a number of a scenario{}", hint(.nearest))]
    Unknown { path: String, nearest: Option<String> },
}

fn hint(nearest: &Option<String>) -> String {
    nearest
        .as_ref()
        .map_or_else(String::new, |n| format!("; did you mean {n}?"))
}

impl FromStr for Address {
    type Err = AddressError;

    fn from_str(text: &str) -> Result<Address, AddressError> {
        let bad = || AddressError::Syntax(text.to_string());
        let mut pattern = String::with_capacity(text.len());
        let mut at = Vec::new();
        for (k, part) in text.split('.').enumerate() {
            let (name, mut rest) = part.split_at(part.find('[').unwrap_or(part.len()));
            let is_name = !name.is_empty()
                && name
                    .chars()
                    .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_');
            if !is_name {
                return Err(bad());
            }
            if k > 0 {
                pattern.push('.');
            }
            pattern.push_str(name);
            while !rest.is_empty() {
                let inner = rest.strip_prefix('[').ok_or_else(bad)?;
                let (index, after) = inner.split_once(']').ok_or_else(bad)?;
                if index.is_empty() || !index.chars().all(|c| c.is_ascii_digit()) {
                    return Err(bad());
                }
                at.push(index.parse::<usize>().map_err(|_| bad())?);
                pattern.push_str("[]");
                rest = after;
            }
        }
        // A tuple's member keeps its index in the row's path (`solutions[].parts[][1]`).
        let member = || {
            let last = at.last()?;
            let cut = pattern.rfind("[]")?;
            let p = format!("{}[{last}]{}", &pattern[..cut], &pattern[cut + 2..]);
            field(&p).map(|f| f.at(&at[..at.len() - 1]))
        };
        match field(&pattern) {
            Some(f) => Ok(f.at(&at)),
            None if member().is_some() => member().ok_or_else(bad),
            None => {
                let known: Vec<&'static str> = FIELDS.iter().map(|f| f.path).collect();
                Err(AddressError::Unknown {
                    path: text.to_string(),
                    nearest: super::read::nearest(&pattern, &known)
                        .and_then(field)
                        .map(|f| f.at(&at).to_string()),
                })
            }
        }
    }
}

impl Serialize for Address {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_str(self)
    }
}

impl<'de> Deserialize<'de> for Address {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Address, D::Error> {
        let text = String::deserialize(deserializer)?;
        text.parse().map_err(serde::de::Error::custom)
    }
}

/// Why a typed value is not taken.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum ValueError {
    #[error("type a number")]
    Empty,
    #[error("\"{0}\" is not a number")]
    NotANumber(String),
    #[error("must be a finite number")]
    NotFinite,
    #[error("must be a whole number")]
    NotWhole,
}

impl Style {
    /// `v` as a field shows it: "—" when it is not finite.
    pub fn format(self, v: f64) -> String {
        if !v.is_finite() {
            return "—".into();
        }
        match self {
            Style::Whole => format!("{v:.0}"),
            Style::Scientific => {
                if v == 0.0 {
                    return "0".into();
                }
                trim_mantissa(&format!("{v:.3e}"))
            }
            Style::Plain => {
                let a = v.abs();
                if a != 0.0 && !(1e-3..1e6).contains(&a) {
                    return trim_mantissa(&format!("{v:.3e}"));
                }
                // Four significant digits, trailing zeros dropped.
                let decimals = if a == 0.0 {
                    0
                } else {
                    (3 - a.log10().floor() as i32).clamp(0, 6) as usize
                };
                let s = format!("{v:.decimals$}");
                let s = if s.contains('.') {
                    s.trim_end_matches('0').trim_end_matches('.').to_string()
                } else {
                    s
                };
                if s == "-0" { "0".into() } else { s }
            }
        }
    }

    /// A typed value: a plain or scientific number, with a unicode minus or a decimal comma
    /// accepted.
    pub fn parse(self, text: &str) -> Result<f64, ValueError> {
        let t = text.trim().replace('−', "-").replace(',', ".");
        if t.is_empty() {
            return Err(ValueError::Empty);
        }
        let v: f64 = t
            .parse()
            .map_err(|_| ValueError::NotANumber(text.trim().to_string()))?;
        if !v.is_finite() {
            return Err(ValueError::NotFinite);
        }
        if self == Style::Whole && v.fract() != 0.0 {
            return Err(ValueError::NotWhole);
        }
        Ok(v)
    }
}

fn trim_mantissa(s: &str) -> String {
    match s.split_once('e') {
        Some((m, e)) => {
            let m = if m.contains('.') {
                m.trim_end_matches('0').trim_end_matches('.')
            } else {
                m
            };
            format!("{m}e{e}")
        }
        None => s.to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;

    /// A scenario with a number of every row (the window's tests open the same file).
    fn rich() -> Scenario {
        let text = include_str!("../../tests/data/every-number.ron");
        crate::scenario::from_str(text, "rich.ron")
            .unwrap_or_else(|e| panic!("{e}"))
            .into_inner()
    }

    /// The numbers only voltage clamp and families have (a clamp file cannot hold injected
    /// current, so they are in files of their own).
    fn rich_clamp() -> Vec<Scenario> {
        [
            include_str!("../../tests/data/every-clamp-number.ron"),
            include_str!("../../tests/data/every-family-range.ron"),
        ]
        .iter()
        .map(|text| {
            crate::scenario::from_str(text, "clamp.ron")
                .unwrap_or_else(|e| panic!("{e}"))
                .into_inner()
        })
        .collect()
    }

    fn scenarios() -> Vec<(String, Scenario)> {
        let mut out = vec![
            ("rich".to_string(), rich()),
            ("default".into(), Scenario::new_default()),
        ];
        out.extend(rich_clamp().into_iter().map(|s| ("rich clamp".to_string(), s)));
        for (file, text) in crate::examples::EXAMPLES {
            let s = crate::scenario::from_str(text, file).unwrap_or_else(|e| panic!("{e}"));
            out.push((file.to_string(), s.into_inner()));
        }
        out
    }

    /// The numbers of `s` as serde sees the file: each number's field path (enum variant names
    /// left out, as validation writes paths) and value. An independent reading of the format,
    /// through the same derive that writes the file, to hold the table's paths against.
    fn serde_numbers(s: &Scenario) -> Vec<(String, f64)> {
        fn untag(v: &Value) -> &Value {
            match v {
                Value::Object(m) if m.len() == 1 => match m.iter().next() {
                    Some((k, inner)) if k.starts_with(|c: char| c.is_ascii_uppercase()) => untag(inner),
                    _ => v,
                },
                _ => v,
            }
        }
        fn walk(v: &Value, at: &str, out: &mut Vec<(String, f64)>) {
            match untag(v) {
                Value::Number(n) => out.push((at.to_string(), n.as_f64().unwrap_or(f64::NAN))),
                Value::Object(m) => {
                    for (k, x) in m {
                        let next = if at.is_empty() {
                            k.clone()
                        } else {
                            format!("{at}.{k}")
                        };
                        walk(x, &next, out);
                    }
                }
                Value::Array(a) => {
                    for (i, x) in a.iter().enumerate() {
                        walk(x, &format!("{at}[{i}]"), out);
                    }
                }
                _ => {}
            }
        }
        let value = serde_json::to_value(s).unwrap_or(Value::Null);
        let mut out = Vec::new();
        walk(&value, "", &mut out);
        out.retain(|(p, _)| p != "format");
        out.sort_by(|a, b| a.0.cmp(&b.0));
        out
    }

    fn table_numbers(s: &Scenario) -> Vec<(String, f64)> {
        let mut out: Vec<(String, f64)> = addresses(s)
            .iter()
            .map(|a| (a.to_string(), a.get(s).unwrap_or(f64::NAN)))
            .collect();
        out.sort_by(|a, b| a.0.cmp(&b.0));
        out
    }

    #[test]
    fn every_number_of_the_file_has_one_row_and_reads_the_value_at_its_path() {
        for (name, s) in scenarios() {
            assert_eq!(table_numbers(&s), serde_numbers(&s), "{name}");
        }
        // The rich scenario reaches every row.
        let mut used: Vec<&str> = addresses(&rich()).iter().map(|a| a.field().path).collect();
        for s in rich_clamp() {
            used.extend(addresses(&s).iter().map(|a| a.field().path));
        }
        for f in FIELDS {
            assert!(
                used.contains(&f.path),
                "no number of the test scenario is at {}",
                f.path
            );
        }
    }

    #[test]
    fn every_row_has_a_unique_path_its_address_can_hold() {
        for (k, f) in FIELDS.iter().enumerate() {
            assert!(
                f.depth() <= DEPTH,
                "{} has more list indices than an address holds",
                f.path
            );
            assert!(
                FIELDS.iter().skip(k + 1).all(|g| g.path != f.path),
                "{} is in the table twice",
                f.path
            );
        }
    }

    #[test]
    fn writing_through_an_address_changes_that_number_and_nothing_else() {
        let s = rich();
        let before = serde_numbers(&s);
        for a in addresses(&s) {
            let old = a.get(&s).unwrap_or(f64::NAN);
            let new = if a.field().style == Style::Whole {
                old + 1.0
            } else {
                old * 2.0 + 0.5
            };
            let mut t = s.clone();
            assert!(a.set(&mut t, new), "{a}");
            let expected: Vec<(String, f64)> = before
                .iter()
                .map(|(p, v)| (p.clone(), if *p == a.to_string() { new } else { *v }))
                .collect();
            assert_eq!(serde_numbers(&t), expected, "{a}");
        }
    }

    #[test]
    fn whole_numbers_take_the_nearest_whole_value_their_type_holds() {
        let mut s = rich();
        let charge = Address::of("species[].charge", &[2]).expect("a row");
        assert!(charge.set(&mut s, -2.4));
        assert_eq!(s.species[2].charge, -2);
        let power = Address::of("channels[].gates[].power", &[0, 1]).expect("a row");
        assert!(power.set(&mut s, -3.0));
        assert_eq!(s.channels[0].gates[1].power, 0);
    }

    #[test]
    fn numbers_a_scenario_does_not_have_are_not_read_or_written() {
        let mut s = rich();
        let before = s.clone();
        for (path, at) in [
            ("species[].inside_mm", &[7][..]),
            // The agent lasts to the end of the run: it has no end time.
            ("protocol[].until_ms", &[2]),
            // A bath change has no dose; an HH gate no half-activation potential.
            ("protocol[].dose_um", &[1]),
            ("channels[].gates[].kinetics.v_half_mv", &[0, 0]),
            ("channels[].gates[].power", &[0, 5]),
        ] {
            let a = Address::of(path, at).expect("a row");
            assert_eq!(a.get(&s), None, "{a}");
            assert!(!a.set(&mut s, 1.0), "{a}");
        }
        s.run.start = Start::Rest;
        s.pump = None;
        let held = Address::of("run.start", &[]).expect("a row");
        let pump = Address::of("pump.hill_inside", &[]).expect("a row");
        assert_eq!((held.get(&s), pump.get(&s)), (None, None));
        assert!(!held.set(&mut s, -60.0) && !pump.set(&mut s, 2.0));
        assert_eq!(s.run.start, Start::Rest);
        assert_eq!(s.species, before.species);
    }

    #[test]
    fn addresses_print_as_field_paths_and_parse_back() {
        for a in addresses(&rich()) {
            assert_eq!(a.to_string().parse::<Address>(), Ok(a));
        }
        let a: Address = "channels[0].gates[1].kinetics.tau_ms"
            .parse()
            .expect("an address");
        assert_eq!(
            (a.field().path, a.indices()),
            ("channels[].gates[].kinetics.tau_ms", &[0, 1][..])
        );
        assert_eq!(
            "protocol[12].amplitude_ua_per_cm2"
                .parse::<Address>()
                .map(|a| a.to_string()),
            Ok("protocol[12].amplitude_ua_per_cm2".to_string())
        );
        for bad in [
            "",
            "species[",
            "species[x].inside_mm",
            "Species[0]",
            "a..b",
            "species]0[",
            "species[-1].charge",
        ] {
            assert_eq!(
                bad.parse::<Address>(),
                Err(AddressError::Syntax(bad.into())),
                "{bad:?}"
            );
        }
        let e = "species[1].outside_m"
            .parse::<Address>()
            .expect_err("no such field");
        assert_eq!(
            e.to_string(),
            "species[1].outside_m is not a number of a scenario; did you mean species[1].outside_mm?"
        );
        // Names are numbers' places only: the species' name is not a number.
        assert!(matches!(
            "species[0].name".parse::<Address>(),
            Err(AddressError::Unknown { .. })
        ));
    }

    #[test]
    fn an_address_saves_as_its_path_and_reads_back() {
        let a = Address::of("species[].outside_mm", &[1]).expect("a row");
        let text = ron::to_string(&vec![a]).expect("serialized");
        assert_eq!(text, r#"["species[1].outside_mm"]"#);
        assert_eq!(ron::from_str::<Vec<Address>>(&text).expect("read back"), vec![a]);
        assert!(ron::from_str::<Address>(r#""species[1].outside""#).is_err());
    }

    #[test]
    fn labels_name_the_holder_first() {
        let s = rich();
        let label = |path: &str, at: &[usize]| Address::of(path, at).map(|a| a.label(&s));
        assert_eq!(label("species[].outside_mm", &[0]).as_deref(), Some("K+ outside"));
        assert_eq!(label("temperature_c", &[]).as_deref(), Some("temperature"));
        assert_eq!(
            label("pump.hill_inside", &[]).as_deref(),
            Some("pump: Hill coefficient inside")
        );
        assert_eq!(label("channels[].q10", &[0]).as_deref(), Some("slow: q10"));
        assert_eq!(
            label("channels[].gates[].kinetics.tau_ms", &[0, 1]).as_deref(),
            Some("slow gate 2: time constant")
        );
        assert_eq!(label("protocol[].dose_um", &[2]).as_deref(), Some("event 3 dose"));
        assert_eq!(
            label("species[].inside_mm", &[9]).as_deref(),
            Some("species 10 inside")
        );
    }

    #[test]
    fn limits_refuse_with_the_reason_and_accept_the_bounds() {
        let finite = "must be a finite number, not NaN";
        assert_eq!(Limits::Finite.check(f64::NAN), [finite]);
        assert!(Limits::Finite.check(-1e300).is_empty());
        let nonneg = Limits::NonNegative("a dose");
        assert!(nonneg.check(0.0).is_empty());
        assert_eq!(nonneg.check(-0.5), ["a dose cannot be negative (got -0.5)"]);
        let positive = Limits::Positive("the period");
        assert_eq!(positive.check(0.0), ["the period must be greater than 0 (got 0)"]);
        let duration = field("run.duration_ms").expect("a row").limits;
        assert!(duration.check(MAX_DURATION_MS).is_empty());
        assert_eq!(duration.check(f64::INFINITY).len(), 2, "not finite, and too long");
        let charge = field("species[].charge").expect("a row").limits;
        assert!(charge.check(-3.0).is_empty() && charge.check(2.0).is_empty());
        for z in [0.0, 4.0, -4.0] {
            assert_eq!(
                charge.check(z),
                [format!(
                    "the charge must be a whole number from −3 to 3 and not 0 (got {z})"
                )]
            );
        }
        let slope = field("channels[].gates[].kinetics.slope_mv")
            .expect("a row")
            .limits;
        assert!(slope.check(-0.1).is_empty());
        assert_eq!(slope.check(0.0).len(), 1);
        assert_eq!(slope.check(f64::INFINITY), ["must be a finite number, not inf"]);
    }

    #[test]
    fn values_are_written_compactly_and_read_back() {
        assert_eq!(Style::Plain.format(140.0), "140");
        assert_eq!(Style::Plain.format(0.1), "0.1");
        assert_eq!(Style::Plain.format(-65.4321), "-65.43");
        assert_eq!(Style::Plain.format(-0.00001), "-1e-5");
        assert_eq!(Style::Plain.format(f64::NAN), "—");
        assert_eq!(Style::Scientific.format(5e-7), "5e-7");
        assert_eq!(Style::Scientific.format(2.5e-8), "2.5e-8");
        assert_eq!(Style::Scientific.format(0.0), "0");
        assert_eq!(Style::Whole.format(3.0), "3");
        assert_eq!(Style::Plain.parse(" −12,5 "), Ok(-12.5));
        assert_eq!(Style::Scientific.parse("5e-7"), Ok(5e-7));
        assert_eq!(Style::Whole.parse("1.5"), Err(ValueError::NotWhole));
        assert_eq!(
            Style::Plain.parse("abc"),
            Err(ValueError::NotANumber("abc".into()))
        );
        assert_eq!(Style::Plain.parse(""), Err(ValueError::Empty));
        assert_eq!(Style::Plain.parse("inf"), Err(ValueError::NotFinite));
        assert_eq!(
            ValueError::NotANumber("abc".into()).to_string(),
            "\"abc\" is not a number"
        );
    }
}
