//! The solutions part of a scenario file (solutions.md): a scenario's own compounds, its
//! solutions as recipes, which solution fills the cell and which the bath, activities and the
//! reference electrode; and every rule across those fields, each with its field path.

use serde::{Deserialize, Deserializer, Serialize, Serializer};

use super::fields::{self, Part};
use super::{Event, Problem, Scenario};
use crate::solutions::{Catalog, Role};

/// A compound a scenario defines beside the built-in table (or in place of a built-in one of
/// the same name).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct UserCompound {
    pub name: String,
    pub ions: Vec<CompoundIon>,
}

/// One kind of ion a formula unit gives. A known ion needs no conductivity; one given for a
/// known ion replaces the table's value in this scenario.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CompoundIon {
    pub ion: String,
    pub charge: i32,
    pub count: u32,
    /// Limiting equivalent conductivity, S·cm²/mol per unit charge, written as a plain number.
    #[serde(
        default,
        skip_serializing_if = "Option::is_none",
        serialize_with = "plain_number",
        deserialize_with = "some_number"
    )]
    pub conductivity: Option<f64>,
}

fn plain_number<S: Serializer>(x: &Option<f64>, s: S) -> Result<S::Ok, S::Error> {
    match x {
        Some(v) => s.serialize_f64(*v),
        None => s.serialize_none(),
    }
}

fn some_number<'de, D: Deserializer<'de>>(d: D) -> Result<Option<f64>, D::Error> {
    f64::deserialize(d).map(Some)
}

/// A recipe: compounds with their amounts (mM), optionally titrated to a pH.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Solution {
    pub name: String,
    pub parts: Vec<(String, f64)>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ph: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub titrant: Option<String>,
}

/// The bath's reference electrode.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum Reference {
    /// An agar bridge of KCl (mM) between the bath and the electrode: its own junction with
    /// each bath adds to the offset.
    Bridge { kcl_mm: f64 },
    /// A bare chlorided silver wire in the bath: its potential follows the bath's Cl-.
    SilverChloride,
}

/// The reference a file without one has: a 3 M KCl bridge.
pub const DEFAULT_BRIDGE_KCL_MM: f64 = 3000.0;

impl Default for Reference {
    fn default() -> Self {
        Reference::Bridge {
            kcl_mm: DEFAULT_BRIDGE_KCL_MM,
        }
    }
}

impl Scenario {
    /// The reference electrode in force (the file's, or the default bridge).
    pub fn reference_electrode(&self) -> Reference {
        self.reference.clone().unwrap_or_default()
    }

    /// Index of the solution called `name`.
    pub fn solution_index(&self, name: &str) -> Option<usize> {
        self.solutions.iter().position(|x| x.name == name)
    }

    /// Whether the species' concentrations come from solutions (inside, outside).
    pub fn from_solutions(&self) -> (bool, bool) {
        (self.inside.is_some(), self.outside.is_some())
    }
}

/// A name that is not among `known`, with the nearest one suggested.
fn unknown(what: &str, name: &str, known: &[&str]) -> String {
    match super::read::nearest(name, known) {
        Some(n) => format!("no {what} is named \"{name}\"; did you mean \"{n}\"?"),
        None if known.is_empty() => format!("no {what} is named \"{name}\"; none is defined"),
        None if known.len() > 12 => format!("no {what} is named \"{name}\""),
        None => {
            let list: Vec<String> = known.iter().map(|k| format!("\"{k}\"")).collect();
            format!(
                "no {what} is named \"{name}\"; the choices are {}",
                list.join(", ")
            )
        }
    }
}

/// The bounds of every number of `part` at `at`, as the field table gives them.
fn numbers(s: &Scenario, part: Part, at: &[usize], out: &mut Vec<Problem>) {
    for address in fields::numbers_of(s, part, at) {
        let Some(x) = address.get(s) else { continue };
        for message in address.field().limits.check(x) {
            out.push(Problem {
                path: address.to_string(),
                message,
            });
        }
    }
}

/// Every rule of solutions.md across the solutions fields, in file order.
pub(super) fn problems(s: &Scenario) -> Vec<Problem> {
    let mut out = Vec::new();
    let mut fail = |path: String, message: String| out.push(Problem { path, message });
    let (catalog, compound_problems) = Catalog::with_user(&s.compounds);
    for p in compound_problems {
        fail(p.path, p.message);
    }
    let mut numbers_out = Vec::new();
    for (i, c) in s.compounds.iter().enumerate() {
        for j in 0..c.ions.len() {
            numbers(s, Part::CompoundIon, &[i, j], &mut numbers_out);
        }
    }
    let compound_names = catalog.compound_names();
    let mut seen = std::collections::HashSet::new();
    for (i, sol) in s.solutions.iter().enumerate() {
        let p = format!("solutions[{i}]");
        if sol.name.trim().is_empty() {
            fail(format!("{p}.name"), "a solution needs a name".into());
        }
        if !seen.insert(sol.name.as_str()) {
            fail(
                format!("{p}.name"),
                format!("two solutions are named \"{}\"; names must be unique", sol.name),
            );
        }
        numbers(s, Part::Solution, &[i], &mut numbers_out);
        for (j, (name, _)) in sol.parts.iter().enumerate() {
            if catalog.compound(name).is_none() {
                fail(
                    format!("{p}.parts[{j}][0]"),
                    unknown("compound", name, &compound_names),
                );
            }
            numbers(s, Part::SolutionPart, &[i, j], &mut numbers_out);
        }
        match (&sol.ph, &sol.titrant) {
            (Some(_), None) => fail(
                format!("{p}.titrant"),
                "a pH needs a titrant (a strong base or acid of the table, e.g. \"NaOH\")".into(),
            ),
            (None, Some(_)) => fail(format!("{p}.ph"), "a titrant needs the pH it titrates to".into()),
            _ => {}
        }
        if let Some(t) = &sol.titrant {
            match catalog.compound(t) {
                None => fail(format!("{p}.titrant"), unknown("compound", t, &compound_names)),
                Some(c) if !matches!(c.role, Role::StrongBase | Role::StrongAcid) => {
                    let titrants: Vec<&str> = catalog
                        .compounds
                        .iter()
                        .filter(|c| matches!(c.role, Role::StrongBase | Role::StrongAcid))
                        .map(|c| c.name.as_str())
                        .collect();
                    fail(
                        format!("{p}.titrant"),
                        format!(
                            "\"{t}\" is not a strong base or acid of the table; use one of {}",
                            titrants.join(", ")
                        ),
                    );
                }
                Some(_) => {}
            }
        }
    }
    let solution_names: Vec<&str> = s.solutions.iter().map(|x| x.name.as_str()).collect();
    for (field, name) in [("inside", &s.inside), ("outside", &s.outside)] {
        if let Some(n) = name
            && !solution_names.contains(&n.as_str())
        {
            fail(field.into(), unknown("solution", n, &solution_names));
        }
    }
    for (i, ev) in s.protocol.iter().enumerate() {
        if let Event::BathExchange { solution, .. } = ev
            && !solution_names.contains(&solution.as_str())
        {
            fail(
                format!("protocol[{i}].solution"),
                unknown("solution", solution, &solution_names),
            );
        }
    }
    let ion_names = catalog.ion_names();
    if s.inside.is_some() || s.outside.is_some() {
        for (i, sp) in s.species.iter().enumerate() {
            let p = format!("species[{i}]");
            match catalog.ion(&sp.name) {
                None => fail(
                    format!("{p}.name"),
                    format!(
                        "{}; concentrations from solutions need the species to be an ion of the table or of `compounds`",
                        unknown("ion", &sp.name, &ion_names)
                    ),
                ),
                Some(ion) if catalog.ions[ion].charge != sp.charge => fail(
                    format!("{p}.charge"),
                    format!(
                        "the ion \"{}\" has charge {:+} in the compounds table, not {:+}",
                        sp.name, catalog.ions[ion].charge, sp.charge
                    ),
                ),
                Some(_) => {}
            }
        }
    }
    out.extend(numbers_out);
    out
}

/// The rule only a file can break: a species that gives its own concentration where a
/// solution gives it (after reading, the solution's value is filled in, so an edit cannot
/// tell the two apart).
pub(super) fn given_twice(s: &Scenario) -> Vec<Problem> {
    let mut out = Vec::new();
    for (i, sp) in s.species.iter().enumerate() {
        for (side, from, value) in [
            ("inside", &s.inside, sp.inside_mm),
            ("outside", &s.outside, sp.outside_mm),
        ] {
            if let Some(solution) = from
                && !super::is_from_solution(&value)
            {
                out.push(Problem {
                    path: format!("species[{i}].{side}_mm"),
                    message: format!(
                        "species \"{}\" gives its own {side} concentration, but `{side}` takes it from the solution \"{solution}\"; leave `{side}_mm` out",
                        sp.name
                    ),
                });
            }
        }
    }
    out
}

/// A concentration the file leaves out although no solution gives it.
pub(super) fn missing(s: &Scenario) -> Vec<Problem> {
    let mut out = Vec::new();
    for (i, sp) in s.species.iter().enumerate() {
        for (side, from, value) in [
            ("inside", &s.inside, sp.inside_mm),
            ("outside", &s.outside, sp.outside_mm),
        ] {
            if from.is_none() && super::is_from_solution(&value) {
                out.push(Problem {
                    path: format!("species[{i}].{side}_mm"),
                    message: format!(
                        "the required field `{side}_mm` is missing from species \"{}\" (or name a solution in `{side}`)",
                        sp.name
                    ),
                });
            }
        }
    }
    out
}

/// Pipette and bath osmolarities further apart than this fraction are flagged (solutions.md).
pub const OSMOLARITY_WARN_FRACTION: f64 = 0.10;

/// Warnings, never refusals: a solution whose charges do not balance, and a pipette and bath
/// whose osmolarities are more than 10 % apart.
pub(super) fn warnings(s: &Scenario) -> Vec<Problem> {
    let mut out = Vec::new();
    if s.solutions.is_empty() {
        return out;
    }
    let plan = crate::solutions::plan(s);
    for (i, (sol, m)) in s.solutions.iter().zip(&plan.mixtures).enumerate() {
        let c = m.checks();
        if c.imbalance_meq.abs() > crate::solutions::recipe::IMBALANCE_WARN_MEQ {
            out.push(Problem {
                path: format!("solutions[{i}]"),
                message: format!(
                    "\"{}\" carries {:.2} mEq/L more {} than {}; a real solution is neutral, so a counter-ion is missing from the recipe",
                    sol.name,
                    c.imbalance_meq.abs(),
                    if c.imbalance_meq > 0.0 { "cation" } else { "anion" },
                    if c.imbalance_meq > 0.0 { "anion" } else { "cation" },
                ),
            });
        }
    }
    if let (Some(p), Some(b)) = (s.inside.as_deref(), s.outside.as_deref())
        && let (Some(pm), Some(bm)) = (plan.mixture(s, p), plan.mixture(s, b))
    {
        let (po, bo) = (pm.checks().osmolarity_mosm, bm.checks().osmolarity_mosm);
        if (po - bo).abs() > OSMOLARITY_WARN_FRACTION * po.max(bo) {
            out.push(Problem {
                path: "inside".into(),
                message: format!(
                    "the pipette solution \"{p}\" ({po:.0} mOsm/L) and the bath \"{b}\" ({bo:.0} mOsm/L) differ by more than 10 %"
                ),
            });
        }
    }
    out
}

/// `s` as its file is written: concentrations that come from a solution are left out (they
/// are filled in again when the file is read).
pub(super) fn as_written(s: &Scenario) -> std::borrow::Cow<'_, Scenario> {
    if s.inside.is_none() && s.outside.is_none() {
        return std::borrow::Cow::Borrowed(s);
    }
    let mut out = s.clone();
    for sp in &mut out.species {
        if s.inside.is_some() {
            sp.inside_mm = super::FROM_SOLUTION;
        }
        if s.outside.is_some() {
            sp.outside_mm = super::FROM_SOLUTION;
        }
    }
    std::borrow::Cow::Owned(out)
}
