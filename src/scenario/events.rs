//! What an event does over time and how it is told: when it is in force (its span, and each
//! pulse of a train), and a one-line summary. The window's editor, time strip and plot bands
//! and the SVG figure all use these, so an event is described the same way everywhere.

use super::Event;

/// A time interval `[from_ms, until_ms)`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Interval {
    pub from_ms: f64,
    pub until_ms: f64,
}

/// Who reads an event's summary.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Wording {
    /// Beside the event's kind and colour (the window): as short as it can be.
    Brief,
    /// On its own (a printed figure): says what kind of change it is.
    Standalone,
}

impl Event {
    /// Whether the event is a voltage-clamp command (`Step`, `Ramp`), allowed only in voltage
    /// clamp, or an injected current (`Inject`, `InjectTrain`), allowed only in current clamp;
    /// `None` for events of either mode.
    pub fn clamp_only(&self) -> Option<bool> {
        match self {
            Event::Step { .. } | Event::Ramp { .. } => Some(true),
            Event::Inject { .. } | Event::InjectTrain { .. } => Some(false),
            _ => None,
        }
    }

    /// The kind's name as written in the file.
    pub fn kind(&self) -> &'static str {
        match self {
            Event::PermeabilityScale { .. } => "PermeabilityScale",
            Event::BathChange { .. } => "BathChange",
            Event::Agent { .. } => "Agent",
            Event::Inject { .. } => "Inject",
            Event::InjectTrain { .. } => "InjectTrain",
            Event::Step { .. } => "Step",
            Event::Ramp { .. } => "Ramp",
            Event::BathExchange { .. } => "BathExchange",
        }
    }

    /// The species the event acts on, if any.
    pub fn species(&self) -> Option<&str> {
        match self {
            Event::PermeabilityScale { species, .. }
            | Event::BathChange { species, .. }
            | Event::Agent {
                species,
                target: super::AgentTarget::Permeability,
                ..
            } => Some(species),
            Event::Agent { .. }
            | Event::Inject { .. }
            | Event::InjectTrain { .. }
            | Event::Step { .. }
            | Event::Ramp { .. }
            | Event::BathExchange { .. } => None,
        }
    }

    /// When the event is in force, `[start, end)` in ms; `end` is `None` for "to the end".
    pub fn span_ms(&self) -> (f64, Option<f64>) {
        match *self {
            Event::PermeabilityScale {
                from_ms, until_ms, ..
            }
            | Event::Agent {
                from_ms, until_ms, ..
            }
            | Event::Step {
                from_ms, until_ms, ..
            } => (from_ms, until_ms),
            Event::Ramp {
                from_ms, until_ms, ..
            } => (from_ms, Some(until_ms)),
            Event::BathChange { at_ms, .. } | Event::BathExchange { at_ms, .. } => (at_ms, None),
            Event::Inject {
                from_ms, until_ms, ..
            } => (from_ms, Some(until_ms)),
            Event::InjectTrain {
                from_ms,
                width_ms,
                period_ms,
                count,
                ..
            } => {
                let last = f64::from(count.saturating_sub(1));
                (from_ms, Some(from_ms + last * period_ms + width_ms))
            }
        }
    }
}

impl Event {
    /// The intervals in which the event is in force, clipped to a run of `duration_ms`: one
    /// per pulse of a train of at most `max_pulses` pulses, else one for the whole span (an
    /// event after the end is an empty interval at the end).
    pub fn intervals(&self, duration_ms: f64, max_pulses: u32) -> Vec<Interval> {
        let clip = |a: f64, b: f64| Interval {
            from_ms: a.min(duration_ms),
            until_ms: b.min(duration_ms),
        };
        match *self {
            Event::InjectTrain {
                from_ms,
                width_ms,
                period_ms,
                count,
                ..
            } if count <= max_pulses => (0..count)
                .map(|k| {
                    let s = from_ms + f64::from(k) * period_ms;
                    clip(s, s + width_ms)
                })
                .filter(|i| i.until_ms > i.from_ms)
                .collect(),
            _ => {
                let (from, until) = self.span_ms();
                let i = clip(from, until.unwrap_or(duration_ms));
                vec![Interval {
                    until_ms: i.until_ms.max(i.from_ms),
                    ..i
                }]
            }
        }
    }

    /// A one-line description: what changes, and by how much.
    pub fn summary(&self, wording: Wording) -> String {
        let standalone = wording == Wording::Standalone;
        match self {
            Event::PermeabilityScale { species, factor, .. } => format!("P({species}) ×{factor}"),
            Event::BathChange {
                species, outside_mm, ..
            } if standalone => format!("bath {species} → {outside_mm} mM"),
            Event::BathChange {
                species, outside_mm, ..
            } => format!("{species} out → {outside_mm} mM"),
            Event::Agent { label, dose_um, .. } if standalone => format!("{label} {dose_um} µM"),
            Event::Agent {
                label,
                dose_um,
                target: super::AgentTarget::Pump,
                ..
            } => format!("{label} {dose_um} µM on the pump"),
            Event::Agent {
                label,
                species,
                dose_um,
                ..
            } => format!("{label} {dose_um} µM on {species}"),
            Event::Inject {
                amplitude_ua_per_cm2, ..
            } if standalone => format!("inject {amplitude_ua_per_cm2} µA/cm²"),
            Event::Inject {
                amplitude_ua_per_cm2, ..
            } => format!("{amplitude_ua_per_cm2} µA/cm²"),
            Event::InjectTrain {
                amplitude_ua_per_cm2,
                count,
                ..
            } => format!("{count} pulses of {amplitude_ua_per_cm2} µA/cm²"),
            Event::Step { to_mv, .. } if standalone => format!("clamp to {to_mv} mV"),
            Event::Step { to_mv, .. } => format!("→ {to_mv} mV"),
            Event::Ramp { from_mv, to_mv, .. } if standalone => {
                format!("ramp {from_mv} → {to_mv} mV")
            }
            Event::Ramp { from_mv, to_mv, .. } => format!("{from_mv} → {to_mv} mV"),
            Event::BathExchange { solution, .. } => format!("bath → {solution}"),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spans(e: &Event, duration_ms: f64, max_pulses: u32) -> Vec<(f64, f64)> {
        e.intervals(duration_ms, max_pulses)
            .iter()
            .map(|i| (i.from_ms, i.until_ms))
            .collect()
    }

    #[test]
    fn intervals_follow_the_event_kinds() {
        let train = Event::InjectTrain {
            amplitude_ua_per_cm2: 1.0,
            width_ms: 1.0,
            period_ms: 10.0,
            count: 3,
            from_ms: 5.0,
        };
        assert_eq!(
            spans(&train, 100.0, 200),
            vec![(5.0, 6.0), (15.0, 16.0), (25.0, 26.0)]
        );
        // Pulses past the end of the run are left out, one cut by it is clipped.
        assert_eq!(spans(&train, 15.5, 200), vec![(5.0, 6.0), (15.0, 15.5)]);
        let long = Event::InjectTrain {
            amplitude_ua_per_cm2: 1.0,
            width_ms: 1.0,
            period_ms: 2.0,
            count: 1000,
            from_ms: 0.0,
        };
        // Too many pulses to draw: one band, clipped to the run.
        assert_eq!(spans(&long, 100.0, 200), vec![(0.0, 100.0)]);
        let bath = Event::BathChange {
            species: "K+".into(),
            outside_mm: 20.0,
            at_ms: 40.0,
            lag_ms: 0.0,
        };
        assert_eq!(spans(&bath, 100.0, 200), vec![(40.0, 100.0)]);
        let late = Event::Inject {
            amplitude_ua_per_cm2: 1.0,
            from_ms: 150.0,
            until_ms: 160.0,
        };
        assert_eq!(spans(&late, 100.0, 200), vec![(100.0, 100.0)]);
    }

    #[test]
    fn summaries_say_what_changes_alone_or_beside_the_kind() {
        let agent = Event::Agent {
            label: "blocker A".into(),
            species: "K+".into(),
            target: Default::default(),
            max_block: 1.0,
            max_increase: None,
            ic50_um: 1.0,
            hill: 1.0,
            dose_um: 10.0,
            from_ms: 0.0,
            until_ms: None,
            onset_ms: 0.0,
            washout_ms: 0.0,
        };
        assert_eq!(agent.summary(Wording::Brief), "blocker A 10 µM on K+");
        assert_eq!(agent.summary(Wording::Standalone), "blocker A 10 µM");
        let bath = Event::BathChange {
            species: "K+".into(),
            outside_mm: 25.0,
            at_ms: 40.0,
            lag_ms: 0.0,
        };
        assert_eq!(bath.summary(Wording::Brief), "K+ out → 25 mM");
        assert_eq!(bath.summary(Wording::Standalone), "bath K+ → 25 mM");
        let pulse = Event::Inject {
            amplitude_ua_per_cm2: -2.5,
            from_ms: 1.0,
            until_ms: 2.0,
        };
        assert_eq!(pulse.summary(Wording::Brief), "-2.5 µA/cm²");
        assert_eq!(pulse.summary(Wording::Standalone), "inject -2.5 µA/cm²");
    }
}
