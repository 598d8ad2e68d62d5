//! How a scenario's solutions reach the rest of the program: the species' concentrations
//! (activities when on), the outside values a bath exchange switches to, the junctions of a
//! recording and the offset in force at each time of a run.

use super::catalog::Catalog;
use super::junction::{junction_mv, reference_mv};
use super::recipe::{Mixture, mix};
use crate::scenario::{Event, Scenario};

/// A scenario's solutions, mixed.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    pub catalog: Catalog,
    /// One per `Scenario::solutions`, in order.
    pub mixtures: Vec<Mixture>,
    pub activities: bool,
    pub temperature_c: f64,
}

/// The junction of a pipette solution against one bath.
#[derive(Debug, Clone, PartialEq)]
pub struct Junction {
    pub pipette: String,
    pub bath: String,
    /// The bath relative to the pipette solution (Henderson).
    pub ljp_mv: f64,
    pub reference_mv: f64,
    /// What a recording shows on top of the membrane potential: `ljp_mv + reference_mv`.
    pub offset_mv: f64,
}

/// The offset of a recording over a run: the starting bath's, then each bath exchange's
/// from its time on.
#[derive(Debug, Clone, PartialEq)]
pub struct Offsets {
    pub start_mv: f64,
    /// (time ms, offset mV), in time order.
    pub changes: Vec<(f64, f64)>,
}

impl Offsets {
    /// The offset in force at `t_ms` (an exchange at `t_ms` is already in force).
    pub fn at(&self, t_ms: f64) -> f64 {
        self.changes
            .iter()
            .rev()
            .find(|c| c.0 <= t_ms)
            .map_or(self.start_mv, |c| c.1)
    }
}

/// Mixes every solution of `s` with its compounds.
pub fn plan(s: &Scenario) -> Plan {
    plan_where(s, |_| true)
}

/// Mixes only the solutions of `s` named in `names`; the others are left without particles.
/// For callers that read nothing else (the species' values, one junction): a replacement scan
/// of a file with ten solutions mixed all ten twice at every point.
pub fn plan_of(s: &Scenario, names: &[&str]) -> Plan {
    plan_where(s, |name| names.contains(&name))
}

fn plan_where(s: &Scenario, wanted: impl Fn(&str) -> bool) -> Plan {
    let (catalog, _) = Catalog::with_user(&s.compounds);
    let mixtures = s
        .solutions
        .iter()
        .map(|x| {
            if wanted(&x.name) {
                mix(&catalog, x)
            } else {
                Mixture {
                    particles: Vec::new(),
                    titrant_mm: None,
                }
            }
        })
        .collect();
    Plan {
        catalog,
        mixtures,
        activities: s.activities,
        temperature_c: s.temperature_c,
    }
}

impl Plan {
    /// The mixture of the solution called `name`.
    pub fn mixture(&self, s: &Scenario, name: &str) -> Option<&Mixture> {
        s.solution_index(name).and_then(|i| self.mixtures.get(i))
    }

    /// What a species called `species` sees of the solution `name`: its concentration, or its
    /// activity when activities are on; 0 where the solution lacks it.
    pub fn value_of(&self, s: &Scenario, name: &str, species: &str) -> f64 {
        self.mixture(s, name).map_or(0.0, |m| {
            m.effective_of(species, self.activities, self.temperature_c)
        })
    }

    /// The osmolarity of the solution `name` that no species' value carries, mOsm: its
    /// neutral solutes (sucrose, glucose, a buffer's neutral part) and the ions no species
    /// lists, plus what activities take off the listed ones. With it, the species' values add
    /// up to the solution's ideal osmolarity (solutions.md). 0 for a name that does not resolve.
    pub fn unlisted_mosm(&self, s: &Scenario, name: &str) -> f64 {
        let Some(m) = self.mixture(s, name) else {
            return 0.0;
        };
        let listed: f64 = s.species.iter().map(|sp| self.value_of(s, name, &sp.name)).sum();
        m.checks().osmolarity_mosm - listed
    }

    /// One junction of `pipette` against `bath` (names of solutions of `s`).
    pub fn junction(&self, s: &Scenario, pipette: &str, bath: &str) -> Option<Junction> {
        let start = self.mixture(s, s.outside.as_deref()?)?;
        let p = self.mixture(s, pipette)?;
        let b = self.mixture(s, bath)?;
        let (act, t) = (self.activities, self.temperature_c);
        let ljp_mv = junction_mv(p, b, act, t);
        let reference_mv = reference_mv(&s.reference_electrode(), &self.catalog, b, start, act, t);
        Some(Junction {
            pipette: pipette.into(),
            bath: bath.into(),
            ljp_mv,
            reference_mv,
            offset_mv: ljp_mv + reference_mv,
        })
    }

    /// The pipette (inside) solution against the bath (outside) and against every solution a
    /// bath exchange uses, each once, in file order. Empty unless both `inside` and `outside`
    /// name solutions.
    pub fn junctions(&self, s: &Scenario) -> Vec<Junction> {
        let (Some(pipette), Some(bath)) = (s.inside.as_deref(), s.outside.as_deref()) else {
            return Vec::new();
        };
        let mut baths = vec![bath];
        for e in &s.protocol {
            if let Event::BathExchange { solution, .. } = e
                && !baths.contains(&solution.as_str())
            {
                baths.push(solution);
            }
        }
        baths
            .into_iter()
            .filter_map(|b| self.junction(s, pipette, b))
            .collect()
    }

    /// The offset of a recording over a run, when `inside` and `outside` name solutions.
    pub fn offsets(&self, s: &Scenario) -> Option<Offsets> {
        let pipette = s.inside.as_deref()?;
        let start = self.junction(s, pipette, s.outside.as_deref()?)?;
        let mut changes: Vec<(f64, f64)> = s
            .protocol
            .iter()
            .filter_map(|e| match e {
                Event::BathExchange { solution, at_ms, .. } => {
                    self.junction(s, pipette, solution).map(|j| (*at_ms, j.offset_mv))
                }
                _ => None,
            })
            .collect();
        changes.sort_by(|a, b| a.0.total_cmp(&b.0));
        Some(Offsets {
            start_mv: start.offset_mv,
            changes,
        })
    }
}

/// The offset of a recording over a run of `s`, when its cell and bath are solutions (the
/// solutions are only mixed then).
pub fn recording_offsets(s: &Scenario) -> Option<Offsets> {
    if s.inside.is_none() || s.outside.is_none() {
        return None;
    }
    plan(s).offsets(s)
}

/// Writes the concentrations the solutions give into the species: every inside value from
/// `inside`, every outside value from `outside` (activities when on; 0 where the solution
/// lacks the ion, or where a name does not resolve, which validation reports).
pub fn fill_species(s: &mut Scenario) {
    let names: Vec<&str> = [s.inside.as_deref(), s.outside.as_deref()]
        .into_iter()
        .flatten()
        .collect();
    if names.is_empty() {
        return;
    }
    let p = plan_of(s, &names);
    let values: Vec<(Option<f64>, Option<f64>)> = s
        .species
        .iter()
        .map(|sp| {
            (
                s.inside.as_deref().map(|n| p.value_of(s, n, &sp.name)),
                s.outside.as_deref().map(|n| p.value_of(s, n, &sp.name)),
            )
        })
        .collect();
    for (sp, (inside, outside)) in s.species.iter_mut().zip(values) {
        if let Some(v) = inside {
            sp.inside_mm = v;
        }
        if let Some(v) = outside {
            sp.outside_mm = v;
        }
    }
}

/// Subtracts from each measured potential the offset in force when it was recorded: that of
/// the scenario with the point's value put in (the starting bath's junction and reference),
/// so a fit sees membrane potentials.
pub fn correct_points(
    s: &Scenario,
    vary: &crate::analysis::scan::Vary,
    points: &mut [crate::analysis::fit::DataPoint],
) -> Result<(), String> {
    if s.inside.is_none() || s.outside.is_none() {
        return Err(
            "the scenario's `inside` and `outside` must name solutions, so that the junction is known".into(),
        );
    }
    for p in points {
        let at = crate::analysis::scan::apply(s, vary, p.value).map_err(|e| e.to_string())?;
        let offset = recording_offsets(&at)
            .map(|o| o.start_mv)
            .ok_or_else(|| format!("row {}: no junction potential", p.row))?;
        p.v_mv -= offset;
    }
    Ok(())
}
