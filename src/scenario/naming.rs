//! Names of a scenario's numbers as the experiment's controls ("Bath K+ after the change",
//! "blocker A dose"), for places where a number stands alone, away from the card or row that
//! says what it belongs to (presentation's big sliders). [`Address::label`] stays the short name
//! that messages and the editor's fields use ("event 1 new bath concentration").

use super::fields::Part;
use super::{Address, Event, Scenario};

/// The name of the number at `a` as the experiment's control, capitalized.
pub fn control_name(a: Address, s: &Scenario) -> String {
    let path = a.field().path;
    let last = path.rsplit('.').next().unwrap_or(path);
    let i = a.indices().first().copied().unwrap_or(0);
    let name = match a.field().holder.part() {
        Part::Species => match s.species.get(i) {
            Some(sp) => match last {
                // With a bath change of this ion in the protocol, the file's value is the bath
                // before it.
                "outside_mm" if changes_bath(s, &sp.name) => format!("bath {} before the change", sp.name),
                "outside_mm" => format!("bath {}", sp.name),
                "inside_mm" => format!("inside {}", sp.name),
                "permeability_cm_per_s" => format!("{} resting permeability", sp.name),
                _ => a.label(s),
            },
            None => a.label(s),
        },
        Part::Event => match s.protocol.get(i) {
            Some(e) => event_control(e, last, a.field().label),
            None => a.label(s),
        },
        _ => a.label(s),
    };
    capitalized(&name)
}

/// Whether the protocol changes the bath concentration of `species`.
fn changes_bath(s: &Scenario, species: &str) -> bool {
    s.protocol
        .iter()
        .any(|e| matches!(e, Event::BathChange { species: x, .. } if x == species))
}

/// An event's number named by what the event does.
fn event_control(e: &Event, last: &str, row_label: &str) -> String {
    let noun = match e {
        Event::PermeabilityScale { species, .. } => format!("{species} permeability change"),
        Event::BathChange { species, .. } => format!("bath {species} change"),
        Event::BathExchange { solution, .. } => format!("exchange to {solution}"),
        Event::Agent { label, .. } => label.clone(),
        Event::Inject { .. } => "injected pulse".into(),
        Event::InjectTrain { .. } => "pulse train".into(),
        Event::Step { .. } => "voltage step".into(),
        Event::Ramp { .. } => "voltage ramp".into(),
    };
    match (e, last) {
        (Event::BathChange { species, .. }, "outside_mm") => format!("bath {species} after the change"),
        (Event::BathChange { .. } | Event::BathExchange { .. }, "at_ms") => format!("time of the {noun}"),
        (Event::BathChange { .. } | Event::BathExchange { .. }, "lag_ms") => {
            format!("{noun}: exchange time constant")
        }
        (Event::PermeabilityScale { species, .. }, "factor") => format!("{species} permeability factor"),
        (Event::Agent { label, .. }, "dose_um") => format!("{label} dose"),
        (Event::Inject { .. } | Event::InjectTrain { .. }, "amplitude_ua_per_cm2") => {
            format!("{noun} amplitude")
        }
        (Event::Step { .. }, "to_mv") => "step potential".into(),
        (_, "from_ms") => format!("{noun} start"),
        (_, "until_ms") => format!("{noun} end"),
        _ => format!("{noun}: {row_label}"),
    }
}

/// `text` with its first letter in upper case.
fn capitalized(text: &str) -> String {
    let mut chars = text.chars();
    match chars.next() {
        Some(first) => first.to_uppercase().chain(chars).collect(),
        None => String::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn at(path: &str, ix: &[usize]) -> Address {
        Address::of(path, ix).unwrap_or_else(|| panic!("no row {path}"))
    }

    #[test]
    fn numbers_are_named_as_the_experiment_controls_them() {
        let mut s = Scenario::new_default();
        s.protocol = vec![
            Event::BathChange {
                species: "K+".into(),
                outside_mm: 25.0,
                at_ms: 60.0,
                lag_ms: 15.0,
            },
            Event::Inject {
                amplitude_ua_per_cm2: 10.0,
                from_ms: 20.0,
                until_ms: 21.0,
            },
        ];
        let name = |p: &str, ix: &[usize]| control_name(at(p, ix), &s);
        assert_eq!(name("protocol[].outside_mm", &[0]), "Bath K+ after the change");
        assert_eq!(name("protocol[].at_ms", &[0]), "Time of the bath K+ change");
        assert_eq!(
            name("protocol[].amplitude_ua_per_cm2", &[1]),
            "Injected pulse amplitude"
        );
        assert_eq!(name("protocol[].from_ms", &[1]), "Injected pulse start");
        assert_eq!(name("species[].outside_mm", &[0]), "Bath K+ before the change");
        assert_eq!(name("species[].outside_mm", &[1]), "Bath Na+");
        assert_eq!(name("temperature_c", &[]), "Temperature");
        // No internal numbering or field paths in any of them.
        for a in crate::scenario::fields::addresses(&s) {
            let n = control_name(a, &s);
            assert!(
                !n.contains("event ") && !n.contains('[') && !n.contains('_'),
                "{n}"
            );
        }
    }
}
