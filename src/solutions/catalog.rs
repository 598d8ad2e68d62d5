//! The compounds a scenario can use: the built-in table with the scenario's own compounds and
//! conductivity overrides laid over it.

use super::table::{COMPOUNDS, IONS, Role};
use crate::scenario::{Problem, UserCompound};

/// One ion (or neutral particle) known to a scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct Ion {
    pub name: String,
    pub charge: i32,
    /// Limiting equivalent conductivity at 25 °C, S·cm²/mol per unit charge.
    pub conductivity: f64,
}

/// One compound known to a scenario: ions by index into [`Catalog::ions`], with counts.
#[derive(Debug, Clone, PartialEq)]
pub struct Compound {
    pub name: String,
    pub ions: Vec<(usize, u32)>,
    pub role: Role,
}

/// The built-in table with a scenario's own compounds.
#[derive(Debug, Clone, PartialEq)]
pub struct Catalog {
    pub ions: Vec<Ion>,
    pub compounds: Vec<Compound>,
}

impl Catalog {
    /// The built-in table alone.
    pub fn builtin() -> Catalog {
        let ions: Vec<Ion> = IONS
            .iter()
            .map(|r| Ion {
                name: r.name.into(),
                charge: r.charge,
                conductivity: r.conductivity,
            })
            .collect();
        let index = |name: &str| ions.iter().position(|i| i.name == name);
        let compounds = COMPOUNDS
            .iter()
            .map(|c| Compound {
                name: c.name.into(),
                ions: c
                    .ions
                    .iter()
                    .filter_map(|(ion, n)| index(ion).map(|k| (k, *n)))
                    .collect(),
                role: c.role,
            })
            .collect();
        Catalog { ions, compounds }
    }

    /// The built-in table with `user`'s compounds added (a user compound of a built-in name
    /// replaces it), and the problems of `user` at their field paths (`compounds[i]…`). Ions
    /// with a problem are left out, so the catalog is always usable.
    pub fn with_user(user: &[UserCompound]) -> (Catalog, Vec<Problem>) {
        let mut cat = Catalog::builtin();
        let mut problems = Vec::new();
        let mut fail = |path: String, message: String| problems.push(Problem { path, message });
        let mut names = std::collections::HashSet::new();
        for (i, c) in user.iter().enumerate() {
            let p = format!("compounds[{i}]");
            if c.name.trim().is_empty() {
                fail(format!("{p}.name"), "a compound needs a name".into());
            }
            if !names.insert(c.name.as_str()) {
                fail(
                    format!("{p}.name"),
                    format!("two compounds are named \"{}\"; names must be unique", c.name),
                );
            }
            if c.ions.is_empty() {
                fail(
                    format!("{p}.ions"),
                    "a compound needs at least one ion (or neutral particle, charge 0)".into(),
                );
            }
            let mut ions = Vec::new();
            for (j, x) in c.ions.iter().enumerate() {
                let q = format!("{p}.ions[{j}]");
                match cat.ion(&x.ion) {
                    Some(k) => {
                        if cat.ions[k].charge != x.charge {
                            fail(
                                format!("{q}.charge"),
                                format!(
                                    "the ion \"{}\" has charge {:+} in the table, not {:+}",
                                    x.ion, cat.ions[k].charge, x.charge
                                ),
                            );
                            continue;
                        }
                        if let Some(l) = x.conductivity
                            && l.is_finite()
                            && l > 0.0
                        {
                            cat.ions[k].conductivity = l;
                        }
                        ions.push((k, x.count));
                    }
                    None => {
                        if x.ion.trim().is_empty() {
                            fail(format!("{q}.ion"), "an ion needs a name".into());
                            continue;
                        }
                        let conductivity = match (x.charge, x.conductivity) {
                            (0, c) => c.unwrap_or(0.0),
                            (_, Some(c)) => c,
                            (_, None) => {
                                let known = cat.ion_names();
                                let near = crate::scenario::nearest_name(&x.ion, &known)
                                    .map(|n| format!("did you mean \"{n}\"? "))
                                    .unwrap_or_default();
                                fail(
                                    format!("{q}.ion"),
                                    format!(
                                        "no ion is named \"{}\"; {near}a new ion needs its `conductivity`",
                                        x.ion
                                    ),
                                );
                                continue;
                            }
                        };
                        cat.ions.push(Ion {
                            name: x.ion.clone(),
                            charge: x.charge,
                            conductivity,
                        });
                        ions.push((cat.ions.len() - 1, x.count));
                    }
                }
            }
            let compound = Compound {
                name: c.name.clone(),
                ions,
                role: Role::Plain,
            };
            match cat.compounds.iter().position(|k| k.name == c.name) {
                Some(k) => cat.compounds[k] = compound,
                None => cat.compounds.push(compound),
            }
        }
        (cat, problems)
    }

    /// Index of the ion called `name`.
    pub fn ion(&self, name: &str) -> Option<usize> {
        self.ions.iter().position(|i| i.name == name)
    }

    /// The compound called `name`.
    pub fn compound(&self, name: &str) -> Option<&Compound> {
        self.compounds.iter().find(|c| c.name == name)
    }

    pub fn ion_names(&self) -> Vec<&str> {
        self.ions.iter().map(|i| i.name.as_str()).collect()
    }

    pub fn compound_names(&self) -> Vec<&str> {
        self.compounds.iter().map(|c| c.name.as_str()).collect()
    }
}
