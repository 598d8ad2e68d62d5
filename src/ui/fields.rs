//! Every number of a scenario that the window lets a user change, addressed by one small value
//! ([`NumField`]). Editors, undo, validation and (later) big presentation sliders all go
//! through this one address, so adding a field means adding it here once.

use serde::{Deserialize, Serialize};

use crate::physics::Kinetics;
use crate::scenario::{Event, Scenario, Start};

/// A number in the pump.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum PumpNum {
    ExportedPerCycle,
    ImportedPerCycle,
    MaxCurrent,
    HalfInside,
    HillInside,
    HalfOutside,
    HillOutside,
}

/// A number of one gated channel.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum ChannelNum {
    MaxPermeability,
    Shift,
    Q10,
    ReferenceTemperature,
}

/// A number of one gate of a channel (the last three only for Boltzmann gates).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum GateNum {
    Power,
    VHalf,
    Slope,
    Tau,
}

/// A number of one protocol event; which ones exist depends on the event's kind.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum EventNum {
    Factor,
    From,
    Until,
    Lag,
    OutsideMm,
    At,
    MaxBlock,
    Ic50,
    Hill,
    Dose,
    Onset,
    Washout,
    Amplitude,
    Width,
    Period,
    Count,
}

/// The address of one number in a scenario.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum NumField {
    TemperatureC,
    DiameterUm,
    CapacitanceUfPerCm2,
    DurationMs,
    SampleMs,
    /// The holding potential of `start: Voltage(v)`; absent when the run starts at rest.
    StartMv,
    Charge(usize),
    InsideMm(usize),
    OutsideMm(usize),
    PermeabilityCmPerS(usize),
    Pump(PumpNum),
    Channel(usize, ChannelNum),
    Gate {
        channel: usize,
        gate: usize,
        what: GateNum,
    },
    Event(usize, EventNum),
}

/// How dragging changes a value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Drag {
    /// Add `per_point` for each point of pointer movement.
    Linear { per_point: f64 },
    /// Multiply by ten for every `points_per_decade` points; a value of 0 starts from `floor`.
    Log { points_per_decade: f64, floor: f64 },
}

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

impl NumField {
    /// The value in `s`, or `None` when `s` has no such field (e.g. an index past the end, or a
    /// field that this event kind does not have).
    pub fn get(&self, s: &Scenario) -> Option<f64> {
        Some(match *self {
            NumField::TemperatureC => s.temperature_c,
            NumField::DiameterUm => s.cell.diameter_um,
            NumField::CapacitanceUfPerCm2 => s.cell.capacitance_uf_per_cm2,
            NumField::DurationMs => s.run.duration_ms,
            NumField::SampleMs => s.run.sample_ms,
            NumField::StartMv => match s.run.start {
                Start::Voltage(v) => v,
                Start::Rest => return None,
            },
            NumField::Charge(i) => f64::from(s.species.get(i)?.charge),
            NumField::InsideMm(i) => s.species.get(i)?.inside_mm,
            NumField::OutsideMm(i) => s.species.get(i)?.outside_mm,
            NumField::PermeabilityCmPerS(i) => s.species.get(i)?.permeability_cm_per_s,
            NumField::Pump(what) => {
                let p = s.pump.as_ref()?;
                match what {
                    PumpNum::ExportedPerCycle => f64::from(p.exported_per_cycle),
                    PumpNum::ImportedPerCycle => f64::from(p.imported_per_cycle),
                    PumpNum::MaxCurrent => p.max_current_ua_per_cm2,
                    PumpNum::HalfInside => p.half_saturation_inside_mm,
                    PumpNum::HillInside => p.hill_inside,
                    PumpNum::HalfOutside => p.half_saturation_outside_mm,
                    PumpNum::HillOutside => p.hill_outside,
                }
            }
            NumField::Channel(i, what) => {
                let c = s.channels.get(i)?;
                match what {
                    ChannelNum::MaxPermeability => c.max_permeability_cm_per_s,
                    ChannelNum::Shift => c.shift_mv,
                    ChannelNum::Q10 => c.q10,
                    ChannelNum::ReferenceTemperature => c.reference_temperature_c,
                }
            }
            NumField::Gate { channel, gate, what } => {
                let g = s.channels.get(channel)?.gates.get(gate)?;
                match (what, g.kinetics) {
                    (GateNum::Power, _) => f64::from(g.power),
                    (GateNum::VHalf, Kinetics::Boltzmann { v_half_mv, .. }) => v_half_mv,
                    (GateNum::Slope, Kinetics::Boltzmann { slope_mv, .. }) => slope_mv,
                    (GateNum::Tau, Kinetics::Boltzmann { tau_ms, .. }) => tau_ms,
                    _ => return None,
                }
            }
            NumField::Event(i, what) => event_get(s.protocol.get(i)?, what)?,
        })
    }

    /// Writes `v` into `s`; returns false when `s` has no such field. Whole-number fields take
    /// the nearest whole number; callers check [`NumField::style`] first to refuse fractions.
    pub fn set(&self, s: &mut Scenario, v: f64) -> bool {
        let whole_i32 = || v.round().clamp(f64::from(i32::MIN), f64::from(i32::MAX)) as i32;
        let whole_u32 = || v.round().clamp(0.0, f64::from(u32::MAX)) as u32;
        let slot: &mut f64 = match *self {
            NumField::TemperatureC => &mut s.temperature_c,
            NumField::DiameterUm => &mut s.cell.diameter_um,
            NumField::CapacitanceUfPerCm2 => &mut s.cell.capacitance_uf_per_cm2,
            NumField::DurationMs => &mut s.run.duration_ms,
            NumField::SampleMs => &mut s.run.sample_ms,
            NumField::StartMv => {
                s.run.start = Start::Voltage(v);
                return true;
            }
            NumField::Charge(i) => {
                let Some(sp) = s.species.get_mut(i) else {
                    return false;
                };
                sp.charge = whole_i32();
                return true;
            }
            NumField::InsideMm(i) => match s.species.get_mut(i) {
                Some(sp) => &mut sp.inside_mm,
                None => return false,
            },
            NumField::OutsideMm(i) => match s.species.get_mut(i) {
                Some(sp) => &mut sp.outside_mm,
                None => return false,
            },
            NumField::PermeabilityCmPerS(i) => match s.species.get_mut(i) {
                Some(sp) => &mut sp.permeability_cm_per_s,
                None => return false,
            },
            NumField::Pump(what) => {
                let Some(p) = s.pump.as_mut() else { return false };
                match what {
                    PumpNum::ExportedPerCycle => {
                        p.exported_per_cycle = whole_u32();
                        return true;
                    }
                    PumpNum::ImportedPerCycle => {
                        p.imported_per_cycle = whole_u32();
                        return true;
                    }
                    PumpNum::MaxCurrent => &mut p.max_current_ua_per_cm2,
                    PumpNum::HalfInside => &mut p.half_saturation_inside_mm,
                    PumpNum::HillInside => &mut p.hill_inside,
                    PumpNum::HalfOutside => &mut p.half_saturation_outside_mm,
                    PumpNum::HillOutside => &mut p.hill_outside,
                }
            }
            NumField::Channel(i, what) => {
                let Some(c) = s.channels.get_mut(i) else {
                    return false;
                };
                match what {
                    ChannelNum::MaxPermeability => &mut c.max_permeability_cm_per_s,
                    ChannelNum::Shift => &mut c.shift_mv,
                    ChannelNum::Q10 => &mut c.q10,
                    ChannelNum::ReferenceTemperature => &mut c.reference_temperature_c,
                }
            }
            NumField::Gate { channel, gate, what } => {
                let Some(g) = s.channels.get_mut(channel).and_then(|c| c.gates.get_mut(gate)) else {
                    return false;
                };
                match (what, &mut g.kinetics) {
                    (GateNum::Power, _) => {
                        g.power = whole_u32();
                        return true;
                    }
                    (GateNum::VHalf, Kinetics::Boltzmann { v_half_mv, .. }) => v_half_mv,
                    (GateNum::Slope, Kinetics::Boltzmann { slope_mv, .. }) => slope_mv,
                    (GateNum::Tau, Kinetics::Boltzmann { tau_ms, .. }) => tau_ms,
                    _ => return false,
                }
            }
            NumField::Event(i, what) => {
                let Some(e) = s.protocol.get_mut(i) else {
                    return false;
                };
                return event_set(e, what, v);
            }
        };
        *slot = v;
        true
    }

    /// The unit shown beside the value ("" for plain numbers).
    pub fn unit(&self) -> &'static str {
        match self {
            NumField::TemperatureC | NumField::Channel(_, ChannelNum::ReferenceTemperature) => "°C",
            NumField::DiameterUm => "µm",
            NumField::CapacitanceUfPerCm2 => "µF/cm²",
            NumField::DurationMs | NumField::SampleMs => "ms",
            NumField::StartMv | NumField::Channel(_, ChannelNum::Shift) => "mV",
            NumField::Charge(_) => "",
            NumField::InsideMm(_) | NumField::OutsideMm(_) => "mM",
            NumField::PermeabilityCmPerS(_) | NumField::Channel(_, ChannelNum::MaxPermeability) => "cm/s",
            NumField::Channel(_, ChannelNum::Q10) => "",
            NumField::Pump(PumpNum::MaxCurrent) => "µA/cm²",
            NumField::Pump(PumpNum::HalfInside | PumpNum::HalfOutside) => "mM",
            NumField::Pump(_) => "",
            NumField::Gate { what, .. } => match what {
                GateNum::Power => "",
                GateNum::VHalf | GateNum::Slope => "mV",
                GateNum::Tau => "ms",
            },
            NumField::Event(_, what) => match what {
                EventNum::Factor | EventNum::MaxBlock | EventNum::Hill | EventNum::Count => "",
                EventNum::OutsideMm => "mM",
                EventNum::Ic50 | EventNum::Dose => "µM",
                EventNum::Amplitude => "µA/cm²",
                EventNum::From
                | EventNum::Until
                | EventNum::Lag
                | EventNum::At
                | EventNum::Onset
                | EventNum::Washout
                | EventNum::Width
                | EventNum::Period => "ms",
            },
        }
    }

    /// The field's path in the scenario file, as validation reports it.
    pub fn path(&self) -> String {
        match *self {
            NumField::TemperatureC => "temperature_c".into(),
            NumField::DiameterUm => "cell.diameter_um".into(),
            NumField::CapacitanceUfPerCm2 => "cell.capacitance_uf_per_cm2".into(),
            NumField::DurationMs => "run.duration_ms".into(),
            NumField::SampleMs => "run.sample_ms".into(),
            NumField::StartMv => "run.start".into(),
            NumField::Charge(i) => format!("species[{i}].charge"),
            NumField::InsideMm(i) => format!("species[{i}].inside_mm"),
            NumField::OutsideMm(i) => format!("species[{i}].outside_mm"),
            NumField::PermeabilityCmPerS(i) => format!("species[{i}].permeability_cm_per_s"),
            NumField::Pump(what) => format!(
                "pump.{}",
                match what {
                    PumpNum::ExportedPerCycle => "exported_per_cycle",
                    PumpNum::ImportedPerCycle => "imported_per_cycle",
                    PumpNum::MaxCurrent => "max_current_ua_per_cm2",
                    PumpNum::HalfInside => "half_saturation_inside_mm",
                    PumpNum::HillInside => "hill_inside",
                    PumpNum::HalfOutside => "half_saturation_outside_mm",
                    PumpNum::HillOutside => "hill_outside",
                }
            ),
            NumField::Channel(i, what) => format!(
                "channels[{i}].{}",
                match what {
                    ChannelNum::MaxPermeability => "max_permeability_cm_per_s",
                    ChannelNum::Shift => "shift_mv",
                    ChannelNum::Q10 => "q10",
                    ChannelNum::ReferenceTemperature => "reference_temperature_c",
                }
            ),
            NumField::Gate { channel, gate, what } => format!(
                "channels[{channel}].gates[{gate}].{}",
                match what {
                    GateNum::Power => "power",
                    GateNum::VHalf => "kinetics.v_half_mv",
                    GateNum::Slope => "kinetics.slope_mv",
                    GateNum::Tau => "kinetics.tau_ms",
                }
            ),
            NumField::Event(i, what) => format!(
                "protocol[{i}].{}",
                match what {
                    EventNum::Factor => "factor",
                    EventNum::From => "from_ms",
                    EventNum::Until => "until_ms",
                    EventNum::Lag => "lag_ms",
                    EventNum::OutsideMm => "outside_mm",
                    EventNum::At => "at_ms",
                    EventNum::MaxBlock => "max_block",
                    EventNum::Ic50 => "ic50_um",
                    EventNum::Hill => "hill",
                    EventNum::Dose => "dose_um",
                    EventNum::Onset => "onset_ms",
                    EventNum::Washout => "washout_ms",
                    EventNum::Amplitude => "amplitude_ua_per_cm2",
                    EventNum::Width => "width_ms",
                    EventNum::Period => "period_ms",
                    EventNum::Count => "count",
                }
            ),
        }
    }

    /// How the value is written.
    pub fn style(&self) -> Style {
        match self {
            NumField::Charge(_)
            | NumField::Pump(PumpNum::ExportedPerCycle | PumpNum::ImportedPerCycle)
            | NumField::Gate {
                what: GateNum::Power, ..
            }
            | NumField::Event(_, EventNum::Count) => Style::Whole,
            NumField::PermeabilityCmPerS(_) | NumField::Channel(_, ChannelNum::MaxPermeability) => {
                Style::Scientific
            }
            _ => Style::Plain,
        }
    }

    /// How dragging changes it: concentrations, permeabilities, doses and time constants span
    /// decades and drag on a log scale; potentials, temperatures and times drag linearly.
    pub fn drag(&self) -> Drag {
        let log = |floor: f64| Drag::Log {
            points_per_decade: 150.0,
            floor,
        };
        match self {
            NumField::PermeabilityCmPerS(_) | NumField::Channel(_, ChannelNum::MaxPermeability) => log(1e-10),
            NumField::InsideMm(_)
            | NumField::OutsideMm(_)
            | NumField::Event(_, EventNum::OutsideMm)
            | NumField::Pump(PumpNum::HalfInside | PumpNum::HalfOutside) => log(0.01),
            NumField::Event(_, EventNum::Dose | EventNum::Ic50 | EventNum::Factor) => log(0.01),
            NumField::Event(_, EventNum::Lag | EventNum::Onset | EventNum::Washout) => log(0.1),
            NumField::Gate {
                what: GateNum::Tau, ..
            } => log(0.1),
            NumField::SampleMs => log(0.001),
            NumField::Charge(_)
            | NumField::Pump(PumpNum::ExportedPerCycle | PumpNum::ImportedPerCycle)
            | NumField::Gate {
                what: GateNum::Power, ..
            }
            | NumField::Event(_, EventNum::Count) => Drag::Linear { per_point: 0.05 },
            NumField::Event(_, EventNum::MaxBlock) => Drag::Linear { per_point: 0.005 },
            NumField::Pump(PumpNum::HillInside | PumpNum::HillOutside)
            | NumField::Event(_, EventNum::Hill)
            | NumField::Channel(_, ChannelNum::Q10) => Drag::Linear { per_point: 0.02 },
            NumField::CapacitanceUfPerCm2 | NumField::Pump(PumpNum::MaxCurrent) => {
                Drag::Linear { per_point: 0.01 }
            }
            NumField::Event(_, EventNum::Amplitude) => Drag::Linear { per_point: 0.1 },
            NumField::DurationMs
            | NumField::Event(_, EventNum::From | EventNum::Until | EventNum::At | EventNum::Period) => {
                Drag::Linear { per_point: 1.0 }
            }
            NumField::Event(_, EventNum::Width) => Drag::Linear { per_point: 0.05 },
            _ => Drag::Linear { per_point: 0.1 },
        }
    }

    /// A short plain name for labels, tooltips and screen readers, e.g. "K+ outside".
    pub fn describe(&self, s: &Scenario) -> String {
        let species = |i: usize| {
            s.species
                .get(i)
                .map_or_else(|| format!("species {}", i + 1), |x| x.name.clone())
        };
        let channel = |i: usize| {
            s.channels
                .get(i)
                .map_or_else(|| format!("channel {}", i + 1), |x| x.label.clone())
        };
        match *self {
            NumField::TemperatureC => "temperature".into(),
            NumField::DiameterUm => "cell diameter".into(),
            NumField::CapacitanceUfPerCm2 => "membrane capacitance".into(),
            NumField::DurationMs => "run duration".into(),
            NumField::SampleMs => "sample interval".into(),
            NumField::StartMv => "starting potential".into(),
            NumField::Charge(i) => format!("{} charge", species(i)),
            NumField::InsideMm(i) => format!("{} inside", species(i)),
            NumField::OutsideMm(i) => format!("{} outside", species(i)),
            NumField::PermeabilityCmPerS(i) => format!("{} permeability", species(i)),
            NumField::Pump(what) => match what {
                PumpNum::ExportedPerCycle => "pump: ions out per cycle".into(),
                PumpNum::ImportedPerCycle => "pump: ions in per cycle".into(),
                PumpNum::MaxCurrent => "pump: largest current".into(),
                PumpNum::HalfInside => "pump: half-activation inside".into(),
                PumpNum::HillInside => "pump: Hill coefficient inside".into(),
                PumpNum::HalfOutside => "pump: half-activation outside".into(),
                PumpNum::HillOutside => "pump: Hill coefficient outside".into(),
            },
            NumField::Channel(i, what) => format!(
                "{}: {}",
                channel(i),
                match what {
                    ChannelNum::MaxPermeability => "largest permeability",
                    ChannelNum::Shift => "voltage shift",
                    ChannelNum::Q10 => "q10",
                    ChannelNum::ReferenceTemperature => "reference temperature",
                }
            ),
            NumField::Gate {
                channel: c,
                gate,
                what,
            } => format!(
                "{} gate {}: {}",
                channel(c),
                gate + 1,
                match what {
                    GateNum::Power => "power",
                    GateNum::VHalf => "half-activation potential",
                    GateNum::Slope => "slope",
                    GateNum::Tau => "time constant",
                }
            ),
            NumField::Event(i, what) => format!(
                "event {} {}",
                i + 1,
                match what {
                    EventNum::Factor => "factor",
                    EventNum::From => "start",
                    EventNum::Until => "end",
                    EventNum::Lag => "lag",
                    EventNum::OutsideMm => "new bath concentration",
                    EventNum::At => "time",
                    EventNum::MaxBlock => "largest block",
                    EventNum::Ic50 => "IC50",
                    EventNum::Hill => "Hill coefficient",
                    EventNum::Dose => "dose",
                    EventNum::Onset => "onset time constant",
                    EventNum::Washout => "washout time constant",
                    EventNum::Amplitude => "amplitude",
                    EventNum::Width => "pulse width",
                    EventNum::Period => "period",
                    EventNum::Count => "pulse count",
                }
            ),
        }
    }
}

fn event_get(e: &Event, what: EventNum) -> Option<f64> {
    use EventNum as N;
    Some(match (e, what) {
        (Event::PermeabilityScale { factor, .. }, N::Factor) => *factor,
        (Event::PermeabilityScale { from_ms, .. } | Event::Agent { from_ms, .. }, N::From) => *from_ms,
        (Event::PermeabilityScale { until_ms, .. } | Event::Agent { until_ms, .. }, N::Until) => (*until_ms)?,
        (Event::PermeabilityScale { lag_ms, .. } | Event::BathChange { lag_ms, .. }, N::Lag) => *lag_ms,
        (Event::BathChange { outside_mm, .. }, N::OutsideMm) => *outside_mm,
        (Event::BathChange { at_ms, .. }, N::At) => *at_ms,
        (Event::Agent { max_block, .. }, N::MaxBlock) => *max_block,
        (Event::Agent { ic50_um, .. }, N::Ic50) => *ic50_um,
        (Event::Agent { hill, .. }, N::Hill) => *hill,
        (Event::Agent { dose_um, .. }, N::Dose) => *dose_um,
        (Event::Agent { onset_ms, .. }, N::Onset) => *onset_ms,
        (Event::Agent { washout_ms, .. }, N::Washout) => *washout_ms,
        (
            Event::Inject {
                amplitude_ua_per_cm2, ..
            }
            | Event::InjectTrain {
                amplitude_ua_per_cm2, ..
            },
            N::Amplitude,
        ) => *amplitude_ua_per_cm2,
        (Event::Inject { from_ms, .. } | Event::InjectTrain { from_ms, .. }, N::From) => *from_ms,
        (Event::Inject { until_ms, .. }, N::Until) => *until_ms,
        (Event::InjectTrain { width_ms, .. }, N::Width) => *width_ms,
        (Event::InjectTrain { period_ms, .. }, N::Period) => *period_ms,
        (Event::InjectTrain { count, .. }, N::Count) => f64::from(*count),
        _ => return None,
    })
}

fn event_set(e: &mut Event, what: EventNum, v: f64) -> bool {
    use EventNum as N;
    let slot: &mut f64 = match (e, what) {
        (Event::PermeabilityScale { factor, .. }, N::Factor) => factor,
        (Event::PermeabilityScale { from_ms, .. } | Event::Agent { from_ms, .. }, N::From) => from_ms,
        (Event::PermeabilityScale { until_ms, .. } | Event::Agent { until_ms, .. }, N::Until) => {
            *until_ms = Some(v);
            return true;
        }
        (Event::PermeabilityScale { lag_ms, .. } | Event::BathChange { lag_ms, .. }, N::Lag) => lag_ms,
        (Event::BathChange { outside_mm, .. }, N::OutsideMm) => outside_mm,
        (Event::BathChange { at_ms, .. }, N::At) => at_ms,
        (Event::Agent { max_block, .. }, N::MaxBlock) => max_block,
        (Event::Agent { ic50_um, .. }, N::Ic50) => ic50_um,
        (Event::Agent { hill, .. }, N::Hill) => hill,
        (Event::Agent { dose_um, .. }, N::Dose) => dose_um,
        (Event::Agent { onset_ms, .. }, N::Onset) => onset_ms,
        (Event::Agent { washout_ms, .. }, N::Washout) => washout_ms,
        (
            Event::Inject {
                amplitude_ua_per_cm2, ..
            }
            | Event::InjectTrain {
                amplitude_ua_per_cm2, ..
            },
            N::Amplitude,
        ) => amplitude_ua_per_cm2,
        (Event::Inject { from_ms, .. } | Event::InjectTrain { from_ms, .. }, N::From) => from_ms,
        (Event::Inject { until_ms, .. }, N::Until) => until_ms,
        (Event::InjectTrain { width_ms, .. }, N::Width) => width_ms,
        (Event::InjectTrain { period_ms, .. }, N::Period) => period_ms,
        (Event::InjectTrain { count, .. }, N::Count) => {
            *count = v.round().clamp(0.0, f64::from(u32::MAX)) as u32;
            return true;
        }
        _ => return false,
    };
    *slot = v;
    true
}

/// Writes a value as a field shows it.
pub fn format_value(v: f64, style: Style) -> String {
    if !v.is_finite() {
        return "—".into();
    }
    match style {
        Style::Whole => format!("{v:.0}"),
        Style::Scientific => {
            if v == 0.0 {
                return "0".into();
            }
            let s = format!("{v:.3e}");
            trim_mantissa(&s)
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

/// Reads a typed value: a plain or scientific number, with a unicode minus accepted.
pub fn parse_value(text: &str, style: Style) -> Result<f64, String> {
    let t = text.trim().replace('−', "-").replace(',', ".");
    if t.is_empty() {
        return Err("type a number".into());
    }
    let v: f64 = t
        .parse()
        .map_err(|_| format!("\"{}\" is not a number", text.trim()))?;
    if !v.is_finite() {
        return Err("must be a finite number".into());
    }
    if style == Style::Whole && v.fract() != 0.0 {
        return Err("must be a whole number".into());
    }
    Ok(v)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_field_reads_back_what_was_written() {
        let mut s = Scenario::new_default();
        s.run.start = Start::Voltage(-80.0);
        for f in [
            NumField::TemperatureC,
            NumField::DiameterUm,
            NumField::CapacitanceUfPerCm2,
            NumField::DurationMs,
            NumField::SampleMs,
            NumField::StartMv,
            NumField::Charge(1),
            NumField::InsideMm(0),
            NumField::OutsideMm(2),
            NumField::PermeabilityCmPerS(1),
        ] {
            assert!(f.set(&mut s, 3.0), "{f:?}");
            assert_eq!(f.get(&s), Some(3.0), "{f:?}");
        }
        assert_eq!(NumField::InsideMm(7).get(&s), None);
        assert!(!NumField::InsideMm(7).set(&mut s, 1.0));
        assert_eq!(NumField::Pump(PumpNum::MaxCurrent).get(&s), None);
    }

    #[test]
    fn event_fields_exist_only_for_their_kind() {
        let mut s = Scenario::new_default();
        s.protocol.push(Event::Inject {
            amplitude_ua_per_cm2: 5.0,
            from_ms: 10.0,
            until_ms: 12.0,
        });
        assert_eq!(NumField::Event(0, EventNum::Until).get(&s), Some(12.0));
        assert_eq!(NumField::Event(0, EventNum::Dose).get(&s), None);
        assert!(NumField::Event(0, EventNum::Amplitude).set(&mut s, -3.0));
        assert_eq!(NumField::Event(0, EventNum::Amplitude).get(&s), Some(-3.0));
        assert_eq!(
            NumField::Event(0, EventNum::Amplitude).path(),
            "protocol[0].amplitude_ua_per_cm2"
        );
    }

    #[test]
    fn values_are_written_compactly_and_read_back() {
        assert_eq!(format_value(140.0, Style::Plain), "140");
        assert_eq!(format_value(0.1, Style::Plain), "0.1");
        assert_eq!(format_value(-65.4321, Style::Plain), "-65.43");
        assert_eq!(format_value(5e-7, Style::Scientific), "5e-7");
        assert_eq!(format_value(2.5e-8, Style::Scientific), "2.5e-8");
        assert_eq!(format_value(0.0, Style::Scientific), "0");
        assert_eq!(format_value(3.0, Style::Whole), "3");
        assert_eq!(parse_value(" −12,5 ", Style::Plain), Ok(-12.5));
        assert_eq!(parse_value("5e-7", Style::Scientific), Ok(5e-7));
        assert!(parse_value("1.5", Style::Whole).is_err());
        assert!(parse_value("abc", Style::Plain).is_err());
        assert!(parse_value("", Style::Plain).is_err());
        assert!(parse_value("inf", Style::Plain).is_err());
    }
}
