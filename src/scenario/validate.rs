//! Meaning checks on a parsed scenario: every rule of scenario-format.md's "What a bad file
//! gets", each reported with the field path it concerns.

use super::{Event, Kinetics, Problem, Scenario, Start};
use std::collections::HashSet;

/// Largest number of output samples a run may ask for.
pub const MAX_OUTPUT_SAMPLES: f64 = 1e7;
/// Longest run, ms (about 11.6 days): beyond it a stepper's time no longer resolves its steps.
pub const MAX_DURATION_MS: f64 = 1e9;
/// Largest gate power: published channels use at most 4; far larger ones only underflow.
pub const MAX_GATE_POWER: u32 = 16;
/// Most injected-pulse edges a run may hold (two per pulse): the stepper stops at each one.
pub const MAX_PULSE_EDGES: f64 = 1e7;

/// Temperatures the model accepts, °C; outside `WARN_*` a warning is shown.
const MIN_TEMPERATURE_C: f64 = -5.0;
const MAX_TEMPERATURE_C: f64 = 60.0;
const WARN_BELOW_C: f64 = 0.0;
const WARN_ABOVE_C: f64 = 45.0;

/// Collects problems with their field paths.
struct Checker {
    problems: Vec<Problem>,
}

impl Checker {
    fn fail(&mut self, path: impl Into<String>, message: impl Into<String>) {
        self.problems.push(Problem {
            path: path.into(),
            message: message.into(),
        });
    }

    /// A finite number; returns whether it was.
    fn finite(&mut self, path: &str, x: f64) -> bool {
        if x.is_finite() {
            true
        } else {
            self.fail(path, format!("must be a finite number, not {x}"));
            false
        }
    }

    fn non_negative(&mut self, path: &str, x: f64, what: &str) {
        if self.finite(path, x) && x < 0.0 {
            self.fail(path, format!("{what} cannot be negative (got {x})"));
        }
    }

    fn positive(&mut self, path: &str, x: f64, what: &str) {
        if self.finite(path, x) && x <= 0.0 {
            self.fail(path, format!("{what} must be greater than 0 (got {x})"));
        }
    }

    fn species_name(&mut self, path: &str, name: &str, known: &[&str]) {
        if !known.contains(&name) {
            let message = match super::read::nearest(name, known) {
                Some(n) => format!("no species is named \"{name}\"; did you mean \"{n}\"?"),
                None => {
                    let list = known
                        .iter()
                        .map(|n| format!("\"{n}\""))
                        .collect::<Vec<_>>()
                        .join(", ");
                    format!("no species is named \"{name}\"; the species are {list}")
                }
            };
            self.fail(path, message);
        }
    }

    /// A temperature inside the range the model accepts.
    fn temperature(&mut self, path: &str, t_c: f64) {
        if self.finite(path, t_c) && !(MIN_TEMPERATURE_C..=MAX_TEMPERATURE_C).contains(&t_c) {
            self.fail(
                path,
                format!("{t_c} °C is outside the range the model accepts (−5 to 60 °C)"),
            );
        }
    }

    fn span(&mut self, path: &str, from_ms: f64, until_ms: Option<f64>) {
        self.non_negative(&format!("{path}.from_ms"), from_ms, "an event time");
        if let Some(u) = until_ms {
            self.non_negative(&format!("{path}.until_ms"), u, "an event time");
            if u.is_finite() && from_ms.is_finite() && u < from_ms {
                self.fail(
                    format!("{path}.until_ms"),
                    format!("ends at {u} ms, before it starts ({from_ms} ms)"),
                );
            }
        }
    }
}

/// Every problem that makes the scenario unusable, empty when it is valid. [`super::validate`]
/// turns an empty list into a [`super::Valid`] scenario.
pub fn problems(s: &Scenario) -> Vec<Problem> {
    let mut c = Checker { problems: Vec::new() };
    if s.format > super::FORMAT {
        c.fail(
            "format",
            format!(
                "format {} is newer than this program reads (format {})",
                s.format,
                super::FORMAT
            ),
        );
    } else if s.format != super::FORMAT {
        c.fail(
            "format",
            format!(
                "there is no format {}; this program reads format {}",
                s.format,
                super::FORMAT
            ),
        );
    }
    c.temperature("temperature_c", s.temperature_c);
    c.positive("cell.diameter_um", s.cell.diameter_um, "the cell diameter");
    c.positive(
        "cell.capacitance_uf_per_cm2",
        s.cell.capacitance_uf_per_cm2,
        "the membrane capacitance",
    );

    if s.species.is_empty() {
        c.fail("species", "at least one species is needed");
    }
    let mut seen = HashSet::new();
    for (i, sp) in s.species.iter().enumerate() {
        let p = format!("species[{i}]");
        if sp.name.trim().is_empty() {
            c.fail(format!("{p}.name"), "a species needs a name");
        }
        if !seen.insert(sp.name.as_str()) {
            c.fail(
                format!("{p}.name"),
                format!("two species are named \"{}\"; names must be unique", sp.name),
            );
        }
        if sp.charge == 0 || !(-3..=3).contains(&sp.charge) {
            c.fail(
                format!("{p}.charge"),
                format!(
                    "the charge must be a whole number from −3 to 3 and not 0 (got {})",
                    sp.charge
                ),
            );
        }
        c.non_negative(&format!("{p}.inside_mm"), sp.inside_mm, "a concentration");
        c.non_negative(&format!("{p}.outside_mm"), sp.outside_mm, "a concentration");
        c.non_negative(
            &format!("{p}.permeability_cm_per_s"),
            sp.permeability_cm_per_s,
            "a permeability",
        );
    }
    let names: Vec<&str> = s.species.iter().map(|x| x.name.as_str()).collect();

    if let Some(pump) = &s.pump {
        c.species_name("pump.exports", &pump.exports, &names);
        c.species_name("pump.imports", &pump.imports, &names);
        if pump.exports == pump.imports {
            c.fail(
                "pump.imports",
                "the pump must import a different species than it exports",
            );
        }
        if pump.exported_per_cycle == 0 {
            c.fail(
                "pump.exported_per_cycle",
                "a pump must export at least 1 ion per cycle",
            );
        }
        c.non_negative(
            "pump.max_current_ua_per_cm2",
            pump.max_current_ua_per_cm2,
            "the pump current",
        );
        c.positive(
            "pump.half_saturation_inside_mm",
            pump.half_saturation_inside_mm,
            "a half-saturation concentration",
        );
        c.positive(
            "pump.half_saturation_outside_mm",
            pump.half_saturation_outside_mm,
            "a half-saturation concentration",
        );
        c.positive("pump.hill_inside", pump.hill_inside, "a Hill coefficient");
        c.positive("pump.hill_outside", pump.hill_outside, "a Hill coefficient");
        let exported = s.species_index(&pump.exports);
        let imported = s.species_index(&pump.imports);
        if let (Some(e), Some(i)) = (exported, imported)
            && e != i
        {
            let (ne, ze) = (i64::from(pump.exported_per_cycle), i64::from(s.species[e].charge));
            let (ni, zi) = (i64::from(pump.imported_per_cycle), i64::from(s.species[i].charge));
            let q = ne * ze - ni * zi;
            if q <= 0 {
                c.fail(
                    "pump",
                    format!(
                        "each cycle must carry net positive charge out of the cell, but {ne} × ({ze:+}) out and {ni} × ({zi:+}) in gives {q:+}"
                    ),
                );
            }
        }
    }

    let mut labels = HashSet::new();
    for (i, ch) in s.channels.iter().enumerate() {
        let p = format!("channels[{i}]");
        if !labels.insert(ch.label.as_str()) {
            c.fail(
                format!("{p}.label"),
                format!(
                    "two channels are labelled \"{}\"; labels must be unique",
                    ch.label
                ),
            );
        }
        c.species_name(&format!("{p}.species"), &ch.species, &names);
        c.non_negative(
            &format!("{p}.max_permeability_cm_per_s"),
            ch.max_permeability_cm_per_s,
            "a permeability",
        );
        c.finite(&format!("{p}.shift_mv"), ch.shift_mv);
        c.positive(&format!("{p}.q10"), ch.q10, "q10");
        // Q10 scaling is q10^((T − T_ref)/10): a reference far outside the living range makes
        // every rate overflow or vanish, so it gets the same bounds as the cell's temperature.
        c.temperature(
            &format!("{p}.reference_temperature_c"),
            ch.reference_temperature_c,
        );
        if ch.gates.is_empty() {
            c.fail(format!("{p}.gates"), "a gated channel needs at least one gate");
        }
        for (j, g) in ch.gates.iter().enumerate() {
            let gp = format!("{p}.gates[{j}]");
            if g.power == 0 || g.power > MAX_GATE_POWER {
                c.fail(
                    format!("{gp}.power"),
                    format!(
                        "a gate power must be from 1 to {MAX_GATE_POWER} (got {})",
                        g.power
                    ),
                );
            }
            if let Kinetics::Boltzmann {
                v_half_mv,
                slope_mv,
                tau_ms,
            } = g.kinetics
            {
                c.finite(&format!("{gp}.kinetics.v_half_mv"), v_half_mv);
                if c.finite(&format!("{gp}.kinetics.slope_mv"), slope_mv) && slope_mv == 0.0 {
                    c.fail(
                        format!("{gp}.kinetics.slope_mv"),
                        "the slope cannot be 0 (positive activates, negative inactivates)",
                    );
                }
                c.positive(&format!("{gp}.kinetics.tau_ms"), tau_ms, "the time constant");
            }
        }
    }

    let any_permeant = s.species.iter().any(|x| x.permeability_cm_per_s > 0.0)
        || s.channels.iter().any(|x| x.max_permeability_cm_per_s > 0.0);
    if !s.species.is_empty() && !any_permeant {
        c.fail(
            "species",
            "every permeability is 0 (resting and channel maxima alike), so no membrane potential is defined",
        );
    }

    let mut agents = HashSet::new();
    for (i, ev) in s.protocol.iter().enumerate() {
        let p = format!("protocol[{i}]");
        if let Some(sp) = ev.species() {
            c.species_name(&format!("{p}.species"), sp, &names);
        }
        match ev {
            Event::PermeabilityScale {
                factor,
                from_ms,
                until_ms,
                lag_ms,
                ..
            } => {
                c.non_negative(&format!("{p}.factor"), *factor, "a permeability factor");
                c.span(&p, *from_ms, *until_ms);
                c.non_negative(&format!("{p}.lag_ms"), *lag_ms, "a lag");
            }
            Event::BathChange {
                outside_mm,
                at_ms,
                lag_ms,
                ..
            } => {
                c.non_negative(&format!("{p}.outside_mm"), *outside_mm, "a concentration");
                c.non_negative(&format!("{p}.at_ms"), *at_ms, "an event time");
                c.non_negative(&format!("{p}.lag_ms"), *lag_ms, "a lag");
            }
            Event::Agent {
                label,
                max_block,
                ic50_um,
                hill,
                dose_um,
                from_ms,
                until_ms,
                onset_ms,
                washout_ms,
                ..
            } => {
                if !agents.insert(label.as_str()) {
                    c.fail(
                        format!("{p}.label"),
                        format!("two agents are labelled \"{label}\"; labels must be unique"),
                    );
                }
                if c.finite(&format!("{p}.max_block"), *max_block) && !(0.0..=1.0).contains(max_block) {
                    c.fail(
                        format!("{p}.max_block"),
                        format!("the largest fraction blocked must be from 0 to 1 (got {max_block})"),
                    );
                }
                c.positive(&format!("{p}.ic50_um"), *ic50_um, "the IC50");
                c.positive(&format!("{p}.hill"), *hill, "the Hill coefficient");
                c.non_negative(&format!("{p}.dose_um"), *dose_um, "a dose");
                c.span(&p, *from_ms, *until_ms);
                c.non_negative(&format!("{p}.onset_ms"), *onset_ms, "a time constant");
                c.non_negative(&format!("{p}.washout_ms"), *washout_ms, "a time constant");
            }
            Event::Inject {
                amplitude_ua_per_cm2,
                from_ms,
                until_ms,
            } => {
                c.finite(&format!("{p}.amplitude_ua_per_cm2"), *amplitude_ua_per_cm2);
                c.span(&p, *from_ms, Some(*until_ms));
            }
            Event::InjectTrain {
                amplitude_ua_per_cm2,
                width_ms,
                period_ms,
                count,
                from_ms,
            } => {
                c.finite(&format!("{p}.amplitude_ua_per_cm2"), *amplitude_ua_per_cm2);
                c.non_negative(&format!("{p}.from_ms"), *from_ms, "an event time");
                if *count == 0 {
                    c.fail(format!("{p}.count"), "a train needs at least one pulse");
                }
                c.positive(&format!("{p}.period_ms"), *period_ms, "the period");
                c.positive(&format!("{p}.width_ms"), *width_ms, "the pulse width");
                if width_ms.is_finite() && period_ms.is_finite() && *period_ms > 0.0 && width_ms > period_ms {
                    c.fail(
                        format!("{p}.width_ms"),
                        format!("a pulse ({width_ms} ms) cannot be longer than the period ({period_ms} ms)"),
                    );
                }
                // Pulses that start within the run, and whether their edges stay apart in f64.
                if *period_ms > 0.0 && *width_ms > 0.0 && s.run.duration_ms.is_finite() && from_ms.is_finite()
                {
                    let within = ((s.run.duration_ms - from_ms) / period_ms).floor() + 1.0;
                    let pulses = within.clamp(0.0, f64::from(*count));
                    if 2.0 * pulses > MAX_PULSE_EDGES {
                        c.fail(
                            format!("{p}.count"),
                            format!("{pulses:.0} pulses fall within the run, more than the limit of {:.0}; use a longer period or fewer pulses", MAX_PULSE_EDGES / 2.0),
                        );
                    } else if pulses > 0.0 && *width_ms < 1e-9 * (from_ms + pulses * period_ms).max(1.0) {
                        c.fail(
                            format!("{p}.width_ms"),
                            format!("a pulse of {width_ms} ms is too short to tell its start from its end this far into the run"),
                        );
                    }
                }
            }
        }
    }

    c.positive("run.duration_ms", s.run.duration_ms, "the duration");
    if s.run.duration_ms > MAX_DURATION_MS {
        c.fail(
            "run.duration_ms",
            format!(
                "{} ms is longer than the longest run this program integrates ({MAX_DURATION_MS:e} ms)",
                s.run.duration_ms
            ),
        );
    }
    c.positive("run.sample_ms", s.run.sample_ms, "the sample interval");
    if s.run.duration_ms.is_finite() && s.run.sample_ms.is_finite() && s.run.sample_ms > 0.0 {
        let n = (s.run.duration_ms / s.run.sample_ms).floor() + 1.0;
        if n > MAX_OUTPUT_SAMPLES {
            c.fail(
                "run.sample_ms",
                format!("the run would write {n:.0} samples, more than the limit of 10 million; choose a larger sample interval or a shorter duration"),
            );
        }
    }
    if let Start::Voltage(v) = s.run.start
        && c.finite("run.start", v)
        && v.abs() > 1000.0
    {
        c.fail(
            "run.start",
            format!("a starting potential of {v} mV is outside ±1000 mV"),
        );
    }
    c.problems
}

/// Things worth saying about a valid scenario that do not stop it from running.
pub fn warnings(s: &Scenario) -> Vec<Problem> {
    let mut w = Vec::new();
    let t_c = s.temperature_c;
    if (MIN_TEMPERATURE_C..=MAX_TEMPERATURE_C).contains(&t_c) && !(WARN_BELOW_C..=WARN_ABOVE_C).contains(&t_c)
    {
        w.push(Problem {
            path: "temperature_c".into(),
            message: format!(
                "{} °C is outside 0–45 °C, where few cells keep working; the model computes it anyway",
                s.temperature_c
            ),
        });
    }
    w
}
