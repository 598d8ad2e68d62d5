//! Meaning checks on a parsed scenario: every rule of scenario-format.md's "What a bad file
//! gets", each reported with the field path it concerns.

use super::fields::{self, Part};
use super::{AgentTarget, Event, FamilyError, Problem, Scenario};
use std::collections::HashSet;

/// Largest number of output samples a run may ask for.
pub const MAX_OUTPUT_SAMPLES: f64 = 1e7;
/// Longest run, ms (about 11.6 days): beyond it a stepper's time no longer resolves its steps.
pub const MAX_DURATION_MS: f64 = 1e9;
/// Largest gate power: published channels use at most 4; far larger ones only underflow.
pub const MAX_GATE_POWER: u32 = 16;
/// Most injected-pulse edges a run may hold (two per pulse): the stepper stops at each one.
pub const MAX_PULSE_EDGES: f64 = 1e7;

/// Most species a scenario may hold. With concentrations tracked each is a state component;
/// the implicit stepper's Jacobian grows with the square of the state and its factorisation
/// with the cube, so the model's size is bounded here rather than by the memory of the machine.
pub const MAX_SPECIES: usize = 50;
/// Most gated channels.
pub const MAX_CHANNELS: usize = 32;
/// Most gates of one channel (published channels have two or three).
pub const MAX_GATES_PER_CHANNEL: usize = 6;
/// Most protocol events (each may add a lagged input to the state).
pub const MAX_EVENTS: usize = 200;

/// Temperatures outside which a warning is shown, °C (the refused range is the row's).
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

    /// The bounds of every number of `part` at list indices `at`, as the table gives them, in
    /// table order; `after` runs after each one, for a rule across fields that is reported
    /// beside it.
    fn numbers(
        &mut self,
        s: &Scenario,
        part: Part,
        at: &[usize],
        mut after: impl FnMut(&mut Self, &'static str),
    ) {
        for address in fields::numbers_of(s, part, at) {
            let Some(x) = address.get(s) else { continue };
            let field = address.field();
            let path = address.to_string();
            for message in field.limits.check(x) {
                self.fail(path.clone(), message);
            }
            after(self, field.path);
        }
    }

    /// A list longer than the program handles.
    fn count(&mut self, path: &str, n: usize, max: usize, what: &str) {
        if n > max {
            self.fail(
                path,
                format!("{n} {what}, more than the {max} a scenario may hold"),
            );
        }
    }

    /// A name or label: control characters (a tab, a line break, an escape) cannot be shown in
    /// tables, CSV headers or figures.
    fn plain_text(&mut self, path: &str, what: &str, text: &str) {
        if text.chars().any(char::is_control) {
            self.fail(
                path,
                format!("{what} cannot hold control characters such as tabs or line breaks"),
            );
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
}

/// A name as a reader takes it: capitals and surrounding spaces do not make another ion.
fn alike(name: &str) -> String {
    name.trim().to_lowercase()
}

/// No bound across fields beside a number.
fn alone(_: &mut Checker, _: &'static str) {}

/// Every problem that makes the scenario unusable, empty when it is valid. [`super::validate`]
/// turns an empty list into a [`super::Valid`] scenario. The bounds of each number alone come
/// from its row of [`fields::FIELDS`]; the rules here are those across fields and names.
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
    c.numbers(s, Part::Scenario, &[], alone);
    c.numbers(s, Part::Cell, &[], alone);
    super::volume::problems(s, &mut c.problems);

    if s.species.is_empty() {
        c.fail("species", "at least one species is needed");
    }
    c.count("species", s.species.len(), MAX_SPECIES, "species");
    c.count("channels", s.channels.len(), MAX_CHANNELS, "gated channels");
    c.count("protocol", s.protocol.len(), MAX_EVENTS, "events");
    let mut seen = HashSet::new();
    let mut seen_alike: Vec<(String, &str)> = Vec::new();
    for (i, sp) in s.species.iter().enumerate() {
        let p = format!("species[{i}]");
        if sp.name.trim().is_empty() {
            c.fail(format!("{p}.name"), "a species needs a name");
        }
        c.plain_text(&format!("{p}.name"), "a species name", &sp.name);
        if !seen.insert(sp.name.as_str()) {
            c.fail(
                format!("{p}.name"),
                format!("two species are named \"{}\"; names must be unique", sp.name),
            );
        } else if let Some((_, other)) = seen_alike.iter().find(|(k, _)| *k == alike(&sp.name)) {
            c.fail(
                format!("{p}.name"),
                format!(
                    "\"{}\" differs from the species \"{other}\" only in capitals or spaces, so the two read as one ion; rename one",
                    sp.name
                ),
            );
        }
        seen_alike.push((alike(&sp.name), sp.name.as_str()));
        c.numbers(s, Part::Species, &[i], alone);
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
        c.numbers(s, Part::Pump, &[], alone);
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
        c.plain_text(&format!("{p}.label"), "a channel label", &ch.label);
        c.species_name(&format!("{p}.species"), &ch.species, &names);
        c.numbers(s, Part::Channel, &[i], alone);
        if ch.gates.is_empty() {
            c.fail(format!("{p}.gates"), "a gated channel needs at least one gate");
        }
        c.count(
            &format!("{p}.gates"),
            ch.gates.len(),
            MAX_GATES_PER_CHANNEL,
            "gates",
        );
        for j in 0..ch.gates.len() {
            c.numbers(s, Part::Gate, &[i, j], alone);
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

    let clamp = !s.run.mode.is_current_clamp();
    let mut agents = HashSet::new();
    // Pulses of every train together: the stepper stops at each edge of each of them.
    let mut pulses_in_run = 0.0;
    for (i, ev) in s.protocol.iter().enumerate() {
        let p = format!("protocol[{i}]");
        match ev.clamp_only() {
            Some(true) if !clamp => c.fail(
                p.clone(),
                format!(
                    "a {} command needs voltage clamp; set run.mode to VoltageClamp(holding_mv: …) or use Inject in current clamp",
                    ev.kind()
                ),
            ),
            Some(false) if clamp => c.fail(
                p.clone(),
                format!(
                    "{} injects current, which voltage clamp does not take (the amplifier sets the potential); use Step or Ramp commands, or current clamp",
                    ev.kind()
                ),
            ),
            _ => {}
        }
        match ev {
            Event::Agent {
                species,
                target: AgentTarget::Pump,
                ..
            } => {
                if !species.is_empty() {
                    c.fail(
                        format!("{p}.species"),
                        "an agent on the pump acts on no one species; leave `species` out",
                    );
                }
                if s.pump.is_none() {
                    c.fail(
                        format!("{p}.target"),
                        "the cell has no pump for this agent to block; add a pump or target a species' permeability",
                    );
                }
            }
            Event::Agent { species, .. } if species.is_empty() => c.fail(
                format!("{p}.species"),
                "an agent on a permeability needs the `species` it blocks",
            ),
            _ => {
                if let Some(sp) = ev.species() {
                    c.species_name(&format!("{p}.species"), sp, &names);
                }
            }
        }
        if let Event::Agent { label, .. } = ev {
            c.plain_text(&format!("{p}.label"), "an agent label", label);
        }
        if let Event::Agent { label, .. } = ev
            && !agents.insert(label.as_str())
        {
            c.fail(
                format!("{p}.label"),
                format!("two agents are labelled \"{label}\"; labels must be unique"),
            );
        }
        let (from_ms, until_ms) = ev.span_ms();
        c.numbers(s, Part::Event, &[i], |c, path| {
            // An end before the start is told right after the end's own bounds.
            if path == "protocol[].until_ms"
                && let Some(u) = until_ms
                && u.is_finite()
                && from_ms.is_finite()
                && u < from_ms
            {
                c.fail(
                    format!("{p}.until_ms"),
                    format!("ends at {u} ms, before it starts ({from_ms} ms)"),
                );
            }
            // An opener that also names a block is told right after its increase's bounds.
            if path == "protocol[].max_increase"
                && let Event::Agent {
                    max_block,
                    max_increase: Some(_),
                    ..
                } = ev
                && *max_block != 1.0
            {
                c.fail(
                    format!("{p}.max_increase"),
                    format!("an agent either blocks (max_block) or opens (max_increase), not both; this one also gives max_block: {max_block}"),
                );
            }
            if path == "protocol[].until_ms"
                && let Event::Ramp {
                    from_ms, until_ms, ..
                } = ev
                && until_ms == from_ms
            {
                c.fail(
                    format!("{p}.until_ms"),
                    format!("a ramp needs time to run: it starts and ends at {from_ms} ms"),
                );
            }
        });
        if let Event::InjectTrain {
            width_ms,
            period_ms,
            count,
            from_ms,
            ..
        } = ev
        {
            if width_ms.is_finite() && period_ms.is_finite() && *period_ms > 0.0 && width_ms > period_ms {
                c.fail(
                    format!("{p}.width_ms"),
                    format!("a pulse ({width_ms} ms) cannot be longer than the period ({period_ms} ms)"),
                );
            }
            // Pulses that start within the run, and whether their edges stay apart in f64.
            if *period_ms > 0.0 && *width_ms > 0.0 && s.run.duration_ms.is_finite() && from_ms.is_finite() {
                let within = ((s.run.duration_ms - from_ms) / period_ms).floor() + 1.0;
                let pulses = within.clamp(0.0, f64::from(*count));
                pulses_in_run += pulses;
                if 2.0 * pulses_in_run > MAX_PULSE_EDGES {
                    c.fail(
                        format!("{p}.count"),
                        format!("{} pulses fall within the run (this train and those before it), more than the limit of {:.0} a run may hold; use a longer period or fewer pulses", pulses_in_run, MAX_PULSE_EDGES / 2.0),
                    );
                } else if pulses > 0.0
                    && *width_ms < 1e-9 * (from_ms + (pulses - 1.0) * period_ms + width_ms).max(1.0)
                {
                    c.fail(
                        format!("{p}.width_ms"),
                        format!("a pulse of {width_ms} ms is too short to tell its start from its end this far into the run"),
                    );
                }
            }
        }
    }

    c.problems.extend(super::recipes::problems(s));

    c.numbers(s, Part::Run, &[], |c, path| {
        // The number of samples is told right after the sample interval's own bounds.
        if path == "run.sample_ms"
            && s.run.duration_ms.is_finite()
            && s.run.sample_ms.is_finite()
            && s.run.sample_ms > 0.0
        {
            let n = (s.run.duration_ms / s.run.sample_ms).floor() + 1.0;
            // The grid's last sample is at floor(duration/sample + 1e-9) intervals (model.md):
            // with none, only the starting point would be recorded, a run that plots nothing.
            if s.run.duration_ms > 0.0 && (s.run.duration_ms / s.run.sample_ms + 1e-9).floor() < 1.0 {
                c.fail(
                    "run.sample_ms",
                    format!(
                        "a sample interval of {} ms is longer than the run ({} ms), so only the starting point would be recorded; choose at most {} ms",
                        s.run.sample_ms, s.run.duration_ms, s.run.duration_ms
                    ),
                );
            } else if n > MAX_OUTPUT_SAMPLES {
                c.fail(
                    "run.sample_ms",
                    format!("the run would write {n:.0} samples, more than the limit of 10 million; choose a larger sample interval or a shorter duration"),
                );
            }
        }
    });
    if let Some(family) = &s.run.family {
        if let Err(e) = family.check_field(s) {
            c.fail(e.path(), e.to_string());
        }
        // A bad end or step is told by its row above; the count is told here.
        if let Err(e @ (FamilyError::Empty | FamilyError::TooMany(_))) = family.values() {
            c.fail(e.path(), e.to_string());
        }
        if let super::Family::Values { values, .. } = family {
            for i in 0..values.len() {
                c.numbers(s, Part::FamilyValue, &[i], alone);
            }
        }
    }
    c.problems
}

/// Things worth saying about a valid scenario that do not stop it from running.
pub fn warnings(s: &Scenario) -> Vec<Problem> {
    let mut w = Vec::new();
    let t_c = s.temperature_c;
    let accepted = fields::field("temperature_c").is_some_and(|f| f.limits.check(t_c).is_empty());
    if accepted && !(WARN_BELOW_C..=WARN_ABOVE_C).contains(&t_c) {
        w.push(Problem {
            path: "temperature_c".into(),
            message: format!(
                "{} °C is outside 0–45 °C, where few cells keep working; the model computes it anyway",
                s.temperature_c
            ),
        });
    }
    w.extend(super::recipes::warnings(s));
    w
}
