//! What a recipe gives in water: every particle's concentration, the titrant a pH takes, and
//! the checks a practitioner makes before weighing anything (charge balance, osmolarity,
//! ionic strength).

use super::activity::davies_gamma;
use super::catalog::Catalog;
use super::table::Role;
use crate::scenario::Solution;

/// One kind of particle of a solution.
#[derive(Debug, Clone, PartialEq)]
pub struct Particle {
    /// Index into [`Catalog::ions`].
    pub ion: usize,
    pub name: String,
    pub charge: i32,
    pub conductivity: f64,
    pub mm: f64,
}

/// A solution's particles, in the order the recipe first names them (the titrant's last).
#[derive(Debug, Clone, PartialEq)]
pub struct Mixture {
    pub particles: Vec<Particle>,
    /// mM of titrant the pH takes; `None` without a pH.
    pub titrant_mm: Option<f64>,
}

/// The checks of one solution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Checks {
    pub cation_meq: f64,
    pub anion_meq: f64,
    pub imbalance_meq: f64,
    pub osmolarity_mosm: f64,
    pub ionic_strength_mm: f64,
    pub titrant_mm: Option<f64>,
}

/// Charge imbalance above which a solution is flagged, mEq/L (solutions.md).
pub const IMBALANCE_WARN_MEQ: f64 = 0.5;

impl Mixture {
    fn add(&mut self, catalog: &Catalog, ion: usize, mm: f64) {
        match self.particles.iter_mut().find(|p| p.ion == ion) {
            Some(p) => p.mm += mm,
            None => {
                if let Some(i) = catalog.ions.get(ion) {
                    self.particles.push(Particle {
                        ion,
                        name: i.name.clone(),
                        charge: i.charge,
                        conductivity: i.conductivity,
                        mm,
                    });
                }
            }
        }
    }

    /// The concentration of the ion called `name` (0 where the solution lacks it).
    pub fn mm_of(&self, name: &str) -> f64 {
        self.particles
            .iter()
            .find(|p| p.name == name)
            .map_or(0.0, |p| p.mm)
    }

    /// The checks of solutions.md: charges, ideal osmolarity, ionic strength.
    pub fn checks(&self) -> Checks {
        let mut c = Checks {
            cation_meq: 0.0,
            anion_meq: 0.0,
            imbalance_meq: 0.0,
            osmolarity_mosm: 0.0,
            ionic_strength_mm: 0.0,
            titrant_mm: self.titrant_mm,
        };
        for p in &self.particles {
            let z = f64::from(p.charge);
            if p.charge > 0 {
                c.cation_meq += z * p.mm;
            } else {
                c.anion_meq += -z * p.mm;
            }
            c.osmolarity_mosm += p.mm;
            c.ionic_strength_mm += 0.5 * z * z * p.mm;
        }
        c.imbalance_meq = c.cation_meq - c.anion_meq;
        c
    }

    /// Each particle's activity (mM) at `theta_c` °C by the Davies equation with this
    /// solution's own ionic strength, or its concentration when `activities` is off.
    pub fn effective_mm(&self, activities: bool, theta_c: f64) -> Vec<f64> {
        let strength = self.checks().ionic_strength_mm;
        self.particles
            .iter()
            .map(|p| {
                if activities {
                    davies_gamma(p.charge, strength, theta_c) * p.mm
                } else {
                    p.mm
                }
            })
            .collect()
    }

    /// The effective concentration (activity when `activities`) of the ion called `name`.
    pub fn effective_of(&self, name: &str, activities: bool, theta_c: f64) -> f64 {
        let eff = self.effective_mm(activities, theta_c);
        self.particles
            .iter()
            .zip(eff)
            .find(|(p, _)| p.name == name)
            .map_or(0.0, |(_, a)| a)
    }
}

/// The charged fraction of a buffer at `ph` (Henderson–Hasselbalch, a weak acid).
pub fn charged_fraction(pka: f64, ph: f64) -> f64 {
    1.0 / (1.0 + 10f64.powf(pka - ph))
}

/// What `solution` gives in water. Unknown compounds are skipped (validation names them).
pub fn mix(catalog: &Catalog, solution: &Solution) -> Mixture {
    let mut m = Mixture {
        particles: Vec::new(),
        titrant_mm: None,
    };
    let mut buffer_charge_mm = 0.0;
    for (name, mm) in &solution.parts {
        let Some(compound) = catalog.compound(name) else {
            continue;
        };
        match compound.role {
            Role::Buffer { pka, anion, neutral } => {
                let f = solution.ph.map_or(0.0, |ph| charged_fraction(pka, ph));
                if let Some(a) = catalog.ion(anion) {
                    m.add(catalog, a, f * mm);
                    buffer_charge_mm += f * mm * f64::from(catalog.ions[a].charge.abs());
                }
                if let Some(n) = catalog.ion(neutral) {
                    m.add(catalog, n, (1.0 - f) * mm);
                }
            }
            _ => {
                for &(ion, count) in &compound.ions {
                    m.add(catalog, ion, f64::from(count) * mm);
                }
            }
        }
    }
    if solution.ph.is_some()
        && let Some(titrant) = solution.titrant.as_deref().and_then(|t| catalog.compound(t))
    {
        // One titrant ion per buffer charge: a base gives its cation (its OH- takes up the
        // buffer's protons), an acid its anion.
        let wanted = |z: i32| match titrant.role {
            Role::StrongBase => z > 0,
            Role::StrongAcid => z < 0,
            _ => false,
        };
        let counter = titrant
            .ions
            .iter()
            .find(|(ion, _)| catalog.ions.get(*ion).is_some_and(|i| wanted(i.charge)));
        let mut titrant_mm = 0.0;
        if let Some(&(ion, count)) = counter {
            let z = f64::from(catalog.ions[ion].charge.abs()) * f64::from(count);
            titrant_mm = buffer_charge_mm / z;
            m.add(catalog, ion, titrant_mm * f64::from(count));
        }
        m.titrant_mm = Some(titrant_mm);
    }
    m
}
