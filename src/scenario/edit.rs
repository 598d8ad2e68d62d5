//! What a user can change in a scenario: one [`Edit`] at a time, applied by [`Edit::apply`]
//! and checked by [`check_edit`], which gives the scenario after it or the first reason it would
//! not be valid. Also the starting points for what is added (an ion, a pump, a channel, a gate,
//! an event) and the renaming of a species wherever it is named.

use super::fields::Address;
use super::{Channel, Event, Gate, Kinetics, Problem, Pump, RunMode, Scenario, Species, Start, Valid};

/// The kinds of protocol event a user can add.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EventKind {
    PermeabilityScale,
    BathChange,
    Agent,
    Inject,
    InjectTrain,
    /// Voltage clamp only.
    Step,
    /// Voltage clamp only.
    Ramp,
    /// Offered only where the scenario has solutions (it names one), so not in [`Self::ALL`].
    BathExchange,
}

impl EventKind {
    /// The kinds a current-clamp run takes.
    pub const ALL: [EventKind; 5] = [
        EventKind::PermeabilityScale,
        EventKind::BathChange,
        EventKind::Agent,
        EventKind::Inject,
        EventKind::InjectTrain,
    ];
    /// The kinds a voltage-clamp run takes: commands instead of injected current.
    pub const CLAMP: [EventKind; 5] = [
        EventKind::PermeabilityScale,
        EventKind::BathChange,
        EventKind::Agent,
        EventKind::Step,
        EventKind::Ramp,
    ];

    /// The kinds a run in `mode` takes.
    pub fn for_mode(mode: &RunMode) -> &'static [EventKind; 5] {
        if mode.is_current_clamp() {
            &Self::ALL
        } else {
            &Self::CLAMP
        }
    }

    /// The name shown in menus and event headers.
    pub fn label(self) -> &'static str {
        match self {
            EventKind::PermeabilityScale => "Permeability step",
            EventKind::BathChange => "Bath exchange",
            EventKind::Agent => "Drug (blocker or opener)",
            EventKind::Inject => "Current pulse",
            EventKind::InjectTrain => "Pulse train",
            EventKind::Step => "Command step",
            EventKind::Ramp => "Command ramp",
            EventKind::BathExchange => "Solution exchange",
        }
    }

    pub fn of(e: &Event) -> EventKind {
        match e {
            Event::PermeabilityScale { .. } => EventKind::PermeabilityScale,
            Event::BathChange { .. } => EventKind::BathChange,
            Event::Agent { .. } => EventKind::Agent,
            Event::Inject { .. } => EventKind::Inject,
            Event::InjectTrain { .. } => EventKind::InjectTrain,
            Event::Step { .. } => EventKind::Step,
            Event::Ramp { .. } => EventKind::Ramp,
            Event::BathExchange { .. } => EventKind::BathExchange,
        }
    }
}

/// Starting points for a new gated channel.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ChannelPreset {
    /// Hodgkin–Huxley sodium channel, m³h.
    HhSodium,
    /// Hodgkin–Huxley delayed-rectifier potassium channel, n⁴.
    HhPotassium,
    /// One Boltzmann gate with a fixed time constant.
    Boltzmann,
}

/// The kinetics a gate can be switched to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GateKind {
    HhM,
    HhH,
    HhN,
    Boltzmann,
}

impl GateKind {
    pub const ALL: [GateKind; 4] = [GateKind::HhM, GateKind::HhH, GateKind::HhN, GateKind::Boltzmann];

    pub fn of(k: &Kinetics) -> GateKind {
        match k {
            Kinetics::HhSodiumActivation => GateKind::HhM,
            Kinetics::HhSodiumInactivation => GateKind::HhH,
            Kinetics::HhPotassiumActivation => GateKind::HhN,
            Kinetics::Boltzmann { .. } => GateKind::Boltzmann,
        }
    }

    pub fn label(self) -> &'static str {
        match self {
            GateKind::HhM => "HH 1952 sodium activation (m)",
            GateKind::HhH => "HH 1952 sodium inactivation (h)",
            GateKind::HhN => "HH 1952 potassium activation (n)",
            GateKind::Boltzmann => "Boltzmann, fixed τ",
        }
    }

    /// The kinetics a new gate of this kind starts with.
    pub fn kinetics(self) -> Kinetics {
        match self {
            GateKind::HhM => Kinetics::HhSodiumActivation,
            GateKind::HhH => Kinetics::HhSodiumInactivation,
            GateKind::HhN => Kinetics::HhPotassiumActivation,
            GateKind::Boltzmann => Kinetics::Boltzmann {
                v_half_mv: -30.0,
                slope_mv: 8.0,
                tau_ms: 10.0,
            },
        }
    }
}

/// One change to the scenario.
#[derive(Debug, Clone, PartialEq)]
pub enum Edit {
    /// Set one number.
    Number(Address, f64),
    Title(String),
    /// Replace the notes shown beside the plots.
    Notes(String),
    /// Rename a species; the pump, channels and events that name it follow.
    SpeciesName {
        index: usize,
        name: String,
    },
    AddSpecies,
    RemoveSpecies(usize),
    TrackConcentrations(bool),
    /// Fix the cell's volume or let it follow water (clamp-and-volume.md).
    Volume(super::Volume),
    /// Start at rest or held at a potential (see [`held_start`] for the usual one).
    Start(Start),
    /// Current or voltage clamp. Events of the other mode (injected current in voltage clamp,
    /// commands in current clamp) are removed with it; undo brings them back.
    Mode(RunMode),
    /// Run the scenario as a family of runs over one number, or once.
    Family(Option<super::Family>),
    /// Add the default pump or remove the pump.
    Pump(bool),
    PumpExports(String),
    PumpImports(String),
    AddChannel(ChannelPreset),
    RemoveChannel(usize),
    ChannelLabel {
        index: usize,
        label: String,
    },
    ChannelSpecies {
        index: usize,
        species: String,
    },
    AddGate {
        channel: usize,
        kind: GateKind,
    },
    RemoveGate {
        channel: usize,
        gate: usize,
    },
    GateKinetics {
        channel: usize,
        gate: usize,
        kind: GateKind,
    },
    AddEvent(EventKind),
    RemoveEvent(usize),
    /// Swap an event with the one before it.
    MoveEventUp(usize),
    EventSpecies {
        index: usize,
        species: String,
    },
    EventLabel {
        index: usize,
        label: String,
    },
    /// Make a step or agent last to the end of the run (`true`) or end at a time (`false`).
    EventOpenEnded {
        index: usize,
        open_ended: bool,
    },
    /// Make the agent at `index` an opener (`true`, doubling the permeability at most, and no
    /// block) or a blocker (`false`, blocking fully at most).
    AgentOpens {
        index: usize,
        opens: bool,
    },
    /// Add a compound to a solution's recipe (1 mM, to be set), or 1 mM more of one it has.
    AddPart {
        solution: usize,
        compound: String,
    },
    /// Take a compound out of a solution's recipe.
    RemovePart {
        solution: usize,
        part: usize,
    },
    /// Use activities (Davies) instead of concentrations.
    Activities(bool),
    /// Set the resting permeability (cm/s) of several species at once, by species name: a
    /// fit's ratios applied to the cell, as one step.
    Permeabilities(Vec<(String, f64)>),
}

impl Edit {
    /// Whether this edit is one deliberate step (a click) rather than part of a drag or of
    /// typing; such edits always get their own undo step.
    pub fn is_discrete(&self) -> bool {
        !matches!(
            self,
            Edit::Number(..)
                | Edit::Title(_)
                | Edit::Notes(_)
                | Edit::SpeciesName { .. }
                | Edit::ChannelLabel { .. }
                | Edit::EventLabel { .. }
        )
    }

    /// Applies the edit to `s`. Edits addressing something that is not there change nothing.
    pub fn apply(&self, s: &mut Scenario) {
        match self {
            Edit::Number(address, v) => {
                address.set(s, *v);
            }
            Edit::Title(t) => s.title = t.clone(),
            Edit::Notes(n) => s.notes = n.clone(),
            Edit::SpeciesName { index, name } => {
                let Some(old) = s.species.get(*index).map(|x| x.name.clone()) else {
                    return;
                };
                rename_references(s, &old, name);
                if let Some(sp) = s.species.get_mut(*index) {
                    sp.name = name.clone();
                }
            }
            Edit::AddSpecies => {
                let name = unique_name(|n| s.species_index(n).is_some(), "ion");
                s.species.push(Species {
                    name,
                    charge: 1,
                    inside_mm: 10.0,
                    outside_mm: 10.0,
                    permeability_cm_per_s: 0.0,
                });
            }
            Edit::RemoveSpecies(i) => {
                if *i < s.species.len() {
                    s.species.remove(*i);
                }
            }
            Edit::TrackConcentrations(on) => s.cell.track_concentrations = *on,
            Edit::Volume(v) => s.cell.volume = v.clone(),
            Edit::AddPart { solution, compound } => {
                if let Some(x) = s.solutions.get_mut(*solution) {
                    match x.parts.iter_mut().find(|p| p.0 == *compound) {
                        Some(p) => p.1 += 1.0,
                        None => x.parts.push((compound.clone(), 1.0)),
                    }
                }
            }
            Edit::RemovePart { solution, part } => {
                if let Some(x) = s.solutions.get_mut(*solution)
                    && *part < x.parts.len()
                {
                    x.parts.remove(*part);
                }
            }
            Edit::Activities(on) => s.activities = *on,
            Edit::Permeabilities(set) => {
                for (name, p_cm_per_s) in set {
                    if let Some(i) = s.species_index(name) {
                        s.species[i].permeability_cm_per_s = *p_cm_per_s;
                    }
                }
            }
            Edit::Start(start) => s.run.start = *start,
            Edit::Mode(mode) => {
                let clamp = !mode.is_current_clamp();
                s.protocol.retain(|e| e.clamp_only().is_none_or(|c| c == clamp));
                s.run.mode = *mode;
            }
            Edit::Family(family) => s.run.family = family.clone(),
            Edit::Pump(on) => {
                s.pump = if *on { Some(default_pump(s)) } else { None };
            }
            Edit::PumpExports(name) => {
                if let Some(p) = &mut s.pump {
                    p.exports = name.clone();
                }
            }
            Edit::PumpImports(name) => {
                if let Some(p) = &mut s.pump {
                    p.imports = name.clone();
                }
            }
            Edit::AddChannel(preset) => {
                let c = new_channel(s, *preset);
                s.channels.push(c);
            }
            Edit::RemoveChannel(i) => {
                if *i < s.channels.len() {
                    s.channels.remove(*i);
                }
            }
            Edit::ChannelLabel { index, label } => {
                if let Some(c) = s.channels.get_mut(*index) {
                    c.label = label.clone();
                }
            }
            Edit::ChannelSpecies { index, species } => {
                if let Some(c) = s.channels.get_mut(*index) {
                    c.species = species.clone();
                }
            }
            Edit::AddGate { channel, kind } => {
                if let Some(c) = s.channels.get_mut(*channel) {
                    c.gates.push(Gate {
                        kinetics: kind.kinetics(),
                        power: 1,
                    });
                }
            }
            Edit::RemoveGate { channel, gate } => {
                if let Some(c) = s.channels.get_mut(*channel)
                    && *gate < c.gates.len()
                {
                    c.gates.remove(*gate);
                }
            }
            Edit::GateKinetics { channel, gate, kind } => {
                if let Some(g) = s.channels.get_mut(*channel).and_then(|c| c.gates.get_mut(*gate))
                    && GateKind::of(&g.kinetics) != *kind
                {
                    g.kinetics = kind.kinetics();
                }
            }
            Edit::AddEvent(kind) => {
                let e = new_event(s, *kind);
                s.protocol.push(e);
            }
            Edit::RemoveEvent(i) => {
                if *i < s.protocol.len() {
                    s.protocol.remove(*i);
                }
            }
            Edit::MoveEventUp(i) => {
                if *i > 0 && *i < s.protocol.len() {
                    s.protocol.swap(*i - 1, *i);
                }
            }
            Edit::EventSpecies { index, species } => match s.protocol.get_mut(*index) {
                Some(Event::PermeabilityScale { species: sp, .. })
                | Some(Event::BathChange { species: sp, .. })
                | Some(Event::Agent { species: sp, .. }) => *sp = species.clone(),
                _ => {}
            },
            Edit::EventLabel { index, label } => {
                if let Some(Event::Agent { label: l, .. }) = s.protocol.get_mut(*index) {
                    *l = label.clone();
                }
            }
            Edit::AgentOpens { index, opens } => {
                if let Some(Event::Agent {
                    max_block,
                    max_increase,
                    ..
                }) = s.protocol.get_mut(*index)
                    && max_increase.is_some() != *opens
                {
                    *max_block = 1.0;
                    *max_increase = opens.then_some(1.0);
                }
            }
            Edit::EventOpenEnded { index, open_ended } => {
                let duration = s.run.duration_ms;
                match s.protocol.get_mut(*index) {
                    Some(Event::PermeabilityScale {
                        from_ms, until_ms, ..
                    })
                    | Some(Event::Agent {
                        from_ms, until_ms, ..
                    })
                    | Some(Event::Step {
                        from_ms, until_ms, ..
                    }) => {
                        *until_ms = if *open_ended {
                            None
                        } else {
                            Some(round_ms(*from_ms + ((duration - *from_ms) / 2.0).max(1.0)))
                        };
                    }
                    _ => {}
                }
            }
        }
    }
}

/// The scenario after `edit`, or the first reason it would not be valid.
pub fn check_edit(s: &Scenario, edit: &Edit) -> Result<Valid, Problem> {
    let mut next = s.clone();
    edit.apply(&mut next);
    super::validate(next).map_err(super::Invalid::into_first)
}

/// A start held at `resting_mv` (rounded to 0.1 mV), or at −70 mV when the cell has no resting
/// potential: what "held at" offers first, so that switching from rest changes little.
pub fn held_start(resting_mv: Option<f64>) -> Start {
    let v = resting_mv.unwrap_or(-70.0);
    Start::Voltage((v * 10.0).round() / 10.0)
}

/// Renames the species `old` to `new` wherever the pump, a channel or an event names it.
pub fn rename_references(s: &mut Scenario, old: &str, new: &str) {
    let fix = |n: &mut String| {
        if n == old {
            *n = new.to_string();
        }
    };
    if let Some(p) = &mut s.pump {
        fix(&mut p.exports);
        fix(&mut p.imports);
    }
    for c in &mut s.channels {
        fix(&mut c.species);
    }
    for e in &mut s.protocol {
        match e {
            Event::PermeabilityScale { species, .. }
            | Event::BathChange { species, .. }
            | Event::Agent { species, .. } => fix(species),
            Event::Inject { .. }
            | Event::InjectTrain { .. }
            | Event::Step { .. }
            | Event::Ramp { .. }
            | Event::BathExchange { .. } => {}
        }
    }
}

/// `base N` with the smallest N ≥ 1 that `taken` refuses.
fn unique_name(taken: impl Fn(&str) -> bool, base: &str) -> String {
    (1..)
        .map(|k| format!("{base} {k}"))
        .find(|n| !taken(n))
        .unwrap_or_else(|| base.to_string())
}

/// The first species called one of `names`, else the first species, else "".
fn pick_species(s: &Scenario, names: &[&str]) -> String {
    names
        .iter()
        .find(|n| s.species_index(n).is_some())
        .map(|n| n.to_string())
        .or_else(|| s.species.first().map(|x| x.name.clone()))
        .unwrap_or_default()
}

fn round_ms(t: f64) -> f64 {
    if t >= 10.0 {
        t.round()
    } else {
        (t * 10.0).round() / 10.0
    }
}

/// A 3:2 sodium–potassium exchanger between the species of `s` called Na+ and K+ (or the
/// first ones there are).
pub fn default_pump(s: &Scenario) -> Pump {
    let exports = pick_species(s, &["Na+"]);
    let imports = s
        .species
        .iter()
        .map(|x| x.name.as_str())
        .find(|n| *n == "K+")
        .or_else(|| s.species.iter().map(|x| x.name.as_str()).find(|n| *n != exports))
        .unwrap_or_default()
        .to_string();
    Pump {
        exports,
        imports,
        exported_per_cycle: 3,
        imported_per_cycle: 2,
        max_current_ua_per_cm2: 1.0,
        half_saturation_inside_mm: 10.0,
        hill_inside: 1.0,
        half_saturation_outside_mm: 1.5,
        hill_outside: 1.0,
    }
}

/// A new channel from `preset`, with a label no channel of `s` has.
pub fn new_channel(s: &Scenario, preset: ChannelPreset) -> Channel {
    let taken = |n: &str| s.channels.iter().any(|c| c.label == n);
    let label = |base: &str| {
        if taken(base) {
            unique_name(taken, base)
        } else {
            base.to_string()
        }
    };
    match preset {
        ChannelPreset::HhSodium => Channel {
            label: label("fast sodium"),
            species: pick_species(s, &["Na+"]),
            // Large enough beside a resting K+ permeability of ~5e-7 cm/s for spikes that
            // overshoot 0 mV (the bundled excitable example uses the same pair).
            max_permeability_cm_per_s: 1.0e-4,
            shift_mv: 0.0,
            q10: 3.0,
            reference_temperature_c: 6.3,
            gates: vec![
                Gate {
                    kinetics: Kinetics::HhSodiumActivation,
                    power: 3,
                },
                Gate {
                    kinetics: Kinetics::HhSodiumInactivation,
                    power: 1,
                },
            ],
        },
        ChannelPreset::HhPotassium => Channel {
            label: label("delayed potassium"),
            species: pick_species(s, &["K+"]),
            max_permeability_cm_per_s: 3.0e-5,
            shift_mv: 0.0,
            q10: 3.0,
            reference_temperature_c: 6.3,
            gates: vec![Gate {
                kinetics: Kinetics::HhPotassiumActivation,
                power: 4,
            }],
        },
        ChannelPreset::Boltzmann => Channel {
            label: label("voltage-gated"),
            species: pick_species(s, &["K+"]),
            max_permeability_cm_per_s: 1.0e-7,
            shift_mv: 0.0,
            q10: 1.0,
            reference_temperature_c: s.temperature_c,
            gates: vec![Gate {
                kinetics: GateKind::Boltzmann.kinetics(),
                power: 1,
            }],
        },
    }
}

/// A new event of `kind`, timed inside the run of `s` and acting on a species it has.
pub fn new_event(s: &Scenario, kind: EventKind) -> Event {
    let d = s.run.duration_ms;
    let start = round_ms(d * 0.25);
    let end = round_ms(d * 0.5);
    match kind {
        EventKind::PermeabilityScale => Event::PermeabilityScale {
            species: pick_species(s, &["Na+"]),
            factor: 10.0,
            from_ms: start,
            until_ms: Some(end),
            lag_ms: 0.0,
        },
        EventKind::BathChange => {
            let species = pick_species(s, &["K+"]);
            let now = s.species_index(&species).map_or(5.0, |i| s.species[i].outside_mm);
            Event::BathChange {
                species,
                outside_mm: if now > 0.0 { now * 4.0 } else { 20.0 },
                at_ms: start,
                lag_ms: round_ms(d * 0.02).max(0.1),
            }
        }
        EventKind::Agent => {
            let taken = |n: &str| {
                s.protocol
                    .iter()
                    .any(|e| matches!(e, Event::Agent { label, .. } if label == n))
            };
            Event::Agent {
                label: unique_name(taken, "agent"),
                species: pick_species(s, &["K+"]),
                target: Default::default(),
                max_block: 1.0,
                max_increase: None,
                ic50_um: 1.0,
                hill: 1.0,
                dose_um: 10.0,
                from_ms: start,
                until_ms: None,
                onset_ms: round_ms(d * 0.05).max(0.1),
                washout_ms: round_ms(d * 0.1).max(0.1),
            }
        }
        EventKind::Inject => Event::Inject {
            amplitude_ua_per_cm2: 10.0,
            from_ms: start,
            until_ms: round_ms(start + (d * 0.01).max(1.0)),
        },
        EventKind::InjectTrain => Event::InjectTrain {
            amplitude_ua_per_cm2: 10.0,
            width_ms: 1.0,
            period_ms: round_ms((d * 0.1).max(2.0)),
            count: 3,
            from_ms: start,
        },
        EventKind::Step => Event::Step {
            to_mv: 0.0,
            from_ms: start,
            until_ms: Some(end),
        },
        EventKind::Ramp => Event::Ramp {
            from_mv: -100.0,
            to_mv: 40.0,
            from_ms: start,
            until_ms: end,
        },
        EventKind::BathExchange => Event::BathExchange {
            // The first solution that is not the bath already.
            solution: s
                .solutions
                .iter()
                .map(|x| x.name.as_str())
                .find(|n| Some(*n) != s.outside.as_deref())
                .or(s.outside.as_deref())
                .unwrap_or("bath")
                .to_string(),
            at_ms: start,
            lag_ms: round_ms(d * 0.02).max(0.1),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn valid(s: &Scenario) -> bool {
        crate::scenario::problems(s).is_empty()
    }

    #[test]
    fn every_added_event_kind_leaves_the_default_scenario_valid() {
        for kind in EventKind::ALL {
            let next = check_edit(&Scenario::new_default(), &Edit::AddEvent(kind));
            assert!(next.is_ok(), "{kind:?}: {next:?}");
            assert_eq!(
                EventKind::of(
                    next.as_ref()
                        .map(|s| &s.protocol[0])
                        .unwrap_or_else(|e| panic!("{e}"))
                ),
                kind
            );
        }
    }

    #[test]
    fn every_channel_preset_and_the_pump_are_valid_additions() {
        let mut s = Scenario::new_default();
        for p in [
            ChannelPreset::HhSodium,
            ChannelPreset::HhPotassium,
            ChannelPreset::Boltzmann,
            ChannelPreset::HhSodium,
        ] {
            s = check_edit(&s, &Edit::AddChannel(p))
                .unwrap_or_else(|e| panic!("{p:?}: {e}"))
                .into_inner();
        }
        // A second sodium channel gets a label of its own.
        assert_eq!(s.channels[3].label, "fast sodium 1");
        s = check_edit(&s, &Edit::Pump(true))
            .unwrap_or_else(|e| panic!("{e}"))
            .into_inner();
        let pump = s.pump.as_ref().map(|p| (p.exports.as_str(), p.imports.as_str()));
        assert_eq!(pump, Some(("Na+", "K+")));
    }

    #[test]
    fn renaming_a_species_renames_its_references() {
        let mut s = Scenario::new_default();
        for e in [
            Edit::Pump(true),
            Edit::AddChannel(ChannelPreset::HhPotassium),
            Edit::AddEvent(EventKind::BathChange),
        ] {
            e.apply(&mut s);
        }
        let s = check_edit(
            &s,
            &Edit::SpeciesName {
                index: 0,
                name: "Kplus".into(),
            },
        )
        .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(s.species[0].name, "Kplus");
        assert_eq!(s.pump.as_ref().map(|p| p.imports.as_str()), Some("Kplus"));
        assert_eq!(s.channels[0].species, "Kplus");
        assert_eq!(s.protocol[0].species(), Some("Kplus"));
    }

    #[test]
    fn invalid_edits_are_refused_with_a_reason() {
        let s = Scenario::new_default();
        let dup = check_edit(
            &s,
            &Edit::SpeciesName {
                index: 1,
                name: "K+".into(),
            },
        );
        assert!(dup.is_err_and(|e| e.path == "species[1].name" && e.message.contains("K+")));
        let outside = Address::of("species[].outside_mm", &[0]).expect("a row");
        let neg = check_edit(&s, &Edit::Number(outside, -1.0));
        assert!(neg.is_err_and(|e| e.path == "species[0].outside_mm" && e.message.contains("negative")));
        let mut with_pump = s.clone();
        Edit::Pump(true).apply(&mut with_pump);
        // The pump names Na+, so Na+ cannot go.
        assert!(check_edit(&with_pump, &Edit::RemoveSpecies(1)).is_err());
        assert!(check_edit(&s, &Edit::RemoveSpecies(1)).is_ok());
        assert!(valid(&s));
    }

    #[test]
    fn open_ended_events_switch_both_ways() {
        let mut s = Scenario::new_default();
        Edit::AddEvent(EventKind::Agent).apply(&mut s);
        assert_eq!(s.protocol[0].span_ms().1, None);
        Edit::EventOpenEnded {
            index: 0,
            open_ended: false,
        }
        .apply(&mut s);
        let (from, until) = s.protocol[0].span_ms();
        assert!(until.is_some_and(|u| u > from));
        assert!(valid(&s));
        // A blocker made an opener and back: always one of the two, valid either way.
        let agent = |s: &Scenario| match &s.protocol[0] {
            Event::Agent {
                max_block,
                max_increase,
                ..
            } => (*max_block, *max_increase),
            _ => panic!("the agent"),
        };
        Edit::AgentOpens {
            index: 0,
            opens: true,
        }
        .apply(&mut s);
        assert_eq!(agent(&s), (1.0, Some(1.0)));
        assert!(valid(&s));
        Edit::AgentOpens {
            index: 0,
            opens: false,
        }
        .apply(&mut s);
        assert_eq!(agent(&s), (1.0, None));
        Edit::MoveEventUp(0).apply(&mut s);
        Edit::AddEvent(EventKind::Inject).apply(&mut s);
        Edit::MoveEventUp(1).apply(&mut s);
        assert_eq!(EventKind::of(&s.protocol[0]), EventKind::Inject);
    }
}
