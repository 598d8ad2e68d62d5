//! Voltage clamp (clamp-and-volume.md): the command potential in time from the holding
//! potential and the `Step`/`Ramp` events, and the amplifier's series resistance. The model
//! holds V at the command (ideal clamp) or drives it through the resistance (an ODE).

use crate::scenario::{Event, RunMode, Valid};

/// Whether the command event `e` is in force at `t` (`Step` and `Ramp` only).
fn in_force(e: &Event, t_ms: f64) -> bool {
    match *e {
        Event::Step {
            from_ms, until_ms, ..
        } => t_ms >= from_ms && until_ms.is_none_or(|u| t_ms < u),
        Event::Ramp {
            from_ms, until_ms, ..
        } => t_ms >= from_ms && t_ms < until_ms,
        _ => false,
    }
}

/// The command of `e` at `t` and its slope (mV/ms); `None` for an event that is no command.
fn value(e: &Event, t_ms: f64) -> Option<(f64, f64)> {
    match *e {
        Event::Step { to_mv, .. } => Some((to_mv, 0.0)),
        Event::Ramp {
            from_mv,
            to_mv,
            from_ms,
            until_ms,
        } => {
            let slope = (to_mv - from_mv) / (until_ms - from_ms);
            Some((from_mv + slope * (t_ms - from_ms), slope))
        }
        _ => None,
    }
}

/// Times at which a command event starts or stops (none for other events).
pub fn command_edges(e: &Event) -> [Option<f64>; 2] {
    match *e {
        Event::Step {
            from_ms, until_ms, ..
        } => [Some(from_ms), until_ms],
        Event::Ramp {
            from_ms, until_ms, ..
        } => [Some(from_ms), Some(until_ms)],
        _ => [None, None],
    }
}

/// The clamp of a voltage-clamp run.
#[derive(Debug, Clone, PartialEq)]
pub struct Clamp {
    pub holding_mv: f64,
    /// `R_eff·A`, MΩ·cm² (`R_eff = R_s(1 − k)`, A the cell's area); `None` for an ideal clamp.
    pub series_mohm_cm2: Option<f64>,
    /// The command events (`Step`, `Ramp`), in protocol order.
    pub commands: Vec<Event>,
}

impl Clamp {
    /// The clamp of `s`, `None` in current clamp.
    pub fn new(s: &Valid) -> Option<Clamp> {
        let RunMode::VoltageClamp {
            holding_mv,
            series_resistance_mohm,
            compensation,
        } = s.run.mode
        else {
            return None;
        };
        let d_cm = s.cell.diameter_um * 1e-4;
        let area_cm2 = std::f64::consts::PI * d_cm * d_cm;
        let r_eff = series_resistance_mohm * (1.0 - compensation);
        Some(Clamp {
            holding_mv,
            series_mohm_cm2: (r_eff > 0.0).then_some(r_eff * area_cm2),
            commands: s
                .protocol
                .iter()
                .filter(|e| matches!(e, Event::Step { .. } | Event::Ramp { .. }))
                .cloned()
                .collect(),
        })
    }

    /// The command potential at `t` and its slope, mV and mV/ms (right-continuous: at an
    /// edge the new command holds already). The last command in force wins.
    pub fn command(&self, t_ms: f64) -> (f64, f64) {
        self.commands
            .iter()
            .rev()
            .find(|c| in_force(c, t_ms))
            .and_then(|c| value(c, t_ms))
            .unwrap_or((self.holding_mv, 0.0))
    }

    /// Every command edge.
    pub fn edges(&self, out: &mut Vec<f64>) {
        for c in &self.commands {
            out.extend(command_edges(c).into_iter().flatten());
        }
    }

    /// The pipette current, µA/cm², that flows through `R_eff` from a command `v_cmd` to a
    /// membrane at `v`: mV / (MΩ·cm²) is 1e-9 A/cm², 1e-3 µA/cm².
    pub fn pipette_ua_per_cm2(r_mohm_cm2: f64, v_cmd_mv: f64, v_mv: f64) -> f64 {
        (v_cmd_mv - v_mv) / r_mohm_cm2 * 1e-3
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn clamp(commands: Vec<Event>) -> Clamp {
        Clamp {
            holding_mv: -80.0,
            series_mohm_cm2: None,
            commands,
        }
    }

    #[test]
    fn the_last_command_in_force_wins_and_the_holding_potential_holds_outside() {
        let c = clamp(vec![
            Event::Step {
                to_mv: 0.0,
                from_ms: 10.0,
                until_ms: None,
            },
            Event::Ramp {
                from_mv: -100.0,
                to_mv: 0.0,
                from_ms: 20.0,
                until_ms: 30.0,
            },
        ]);
        assert_eq!(c.command(5.0), (-80.0, 0.0));
        assert_eq!(c.command(10.0), (0.0, 0.0));
        assert_eq!(c.command(25.0), (-50.0, 10.0));
        assert_eq!(c.command(30.0), (0.0, 0.0));
        let mut e = Vec::new();
        c.edges(&mut e);
        assert_eq!(e, vec![10.0, 20.0, 30.0]);
    }
}
