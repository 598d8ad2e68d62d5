//! The cell's volume as the file sets it up (clamp-and-volume.md, "Cell volume"): the bath and
//! the inside at t = 0, the impermeant inside solute X given in the file or derived from them,
//! and the rules across fields that a tracked volume adds. The engine and the resting report
//! take X from here, so validation refuses exactly what the engine could not start from.

use super::{Event, Impermeant, Problem, Scenario, Volume, Water};

/// Relative mismatch of inside and bath osmolarity that instant water tolerates at t = 0.
const ISO_OSMOTIC_TOLERANCE: f64 = 1e-9;

/// The impermeant inside solute in force at t = 0.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Solute {
    /// Concentration at t = 0 (W = 1), mM.
    pub inside_mm: f64,
    /// Mean charge per particle.
    pub charge: f64,
    /// Whether it was derived from electroneutrality and iso-osmolarity (not given in the file).
    pub derived: bool,
}

/// The bath changes of `s` in force at t = 0, in the engine's order: by time, a later entry
/// of the file winning a tie. Each is `(protocol index, at ms)`.
fn changes_at_start(s: &Scenario) -> Vec<(usize, f64)> {
    let mut at: Vec<(usize, f64)> = s
        .protocol
        .iter()
        .enumerate()
        .filter_map(|(i, e)| match e {
            Event::BathChange { at_ms, .. } | Event::BathExchange { at_ms, .. } if *at_ms <= 0.0 => {
                Some((i, *at_ms))
            }
            _ => None,
        })
        .collect();
    // Stable: equal times keep file order, and the later one wins.
    at.sort_by(|a, b| a.1.total_cmp(&b.1));
    at
}

/// Every species' outside concentration in force at t = 0, mM: its latest bath change or bath
/// exchange at or before 0 ms (a later one in the file wins a tie, as in the engine), else the
/// file's value (the `outside` solution's, when one is named).
pub fn outside_at_start(s: &Scenario) -> Vec<f64> {
    let mut out: Vec<f64> = s.species.iter().map(|x| x.outside_mm).collect();
    let mut plan = None;
    for (i, _) in changes_at_start(s) {
        match &s.protocol[i] {
            Event::BathChange {
                species, outside_mm, ..
            } => {
                if let Some(k) = s.species_index(species) {
                    out[k] = *outside_mm;
                }
            }
            Event::BathExchange { solution, .. } => {
                let plan = plan.get_or_insert_with(|| crate::solutions::plan(s));
                for (k, sp) in s.species.iter().enumerate() {
                    out[k] = plan.value_of(s, solution, &sp.name);
                }
            }
            _ => {}
        }
    }
    out
}

/// The solution the bath is at t = 0: the latest bath exchange at or before 0 ms, else the
/// `outside` solution; `None` when the bath is only the species' own numbers.
pub fn bath_solution_at_start(s: &Scenario) -> Option<&str> {
    let exchanged = changes_at_start(s)
        .into_iter()
        .rev()
        .find_map(|(i, _)| match &s.protocol[i] {
            Event::BathExchange { solution, .. } => Some(solution.as_str()),
            _ => None,
        });
    exchanged.or(s.outside.as_deref())
}

/// Whether the bath of a run of `s` is ever a solution (so its unlisted solutes count for
/// the bath's osmolarity).
pub fn bath_uses_solutions(s: &Scenario) -> bool {
    s.outside.is_some() || s.protocol.iter().any(|e| matches!(e, Event::BathExchange { .. }))
}

/// Total osmolarity of the bath at t = 0, mOsm (ideal: the sum of all its particles'
/// concentrations, solutions.md): the species' outside values and, where the bath is a
/// solution, the solutes no species lists (sucrose, gluconate, a buffer). A bath change of a
/// single species at t ≤ 0 changes that species' share only.
pub fn outside_osmolarity_at_start(s: &Scenario) -> f64 {
    let listed: f64 = outside_at_start(s).iter().sum();
    let unlisted =
        bath_solution_at_start(s).map_or(0.0, |name| crate::solutions::plan(s).unlisted_mosm(s, name));
    listed + unlisted
}

/// The impermeant solute of a tracked cell (`None` for a fixed volume), or why no such solute
/// exists: derived, it must make the inside electroneutral (`Σ z c_in + z_X X = 0`) and
/// iso-osmotic with the bath at t = 0 (`Σ c_in + X = Σ c_out`), which needs `X > 0`.
pub fn solute_at_start(s: &Scenario) -> Result<Option<Solute>, String> {
    let Volume::Tracked { impermeant, .. } = &s.cell.volume else {
        return Ok(None);
    };
    if let Some(Impermeant { inside_mm, charge }) = impermeant {
        return Ok(Some(Solute {
            inside_mm: *inside_mm,
            charge: *charge,
            derived: false,
        }));
    }
    let osm_in: f64 = s.species.iter().map(|x| x.inside_mm).sum();
    let osm_out = outside_osmolarity_at_start(s);
    let x = osm_out - osm_in;
    if x.is_nan() || x <= ISO_OSMOTIC_TOLERANCE * osm_out {
        return Err(format!(
            "no impermeant inside solute can make the cell iso-osmotic: the species inside already add up to {osm_in} mOsm and the bath to {osm_out} mOsm at t = 0; lower the inside concentrations, or give `impermeant: Some((inside_mm: .., charge: ..))`"
        ));
    }
    let inside_charge: f64 = s
        .species
        .iter()
        .map(|sp| f64::from(sp.charge) * sp.inside_mm)
        .sum();
    Ok(Some(Solute {
        inside_mm: x,
        charge: -inside_charge / x,
        derived: true,
    }))
}

/// The rules across fields of a tracked volume, each with its field path. The bounds of its
/// single numbers are rows of the field table.
pub fn problems(s: &Scenario, out: &mut Vec<Problem>) {
    let Volume::Tracked { water, impermeant } = &s.cell.volume else {
        return;
    };
    let finite = |x: f64| x.is_finite();
    let concentrations_finite = s
        .species
        .iter()
        .all(|x| finite(x.inside_mm) && finite(x.outside_mm))
        && s.protocol.iter().all(|e| match e {
            Event::BathChange {
                outside_mm, at_ms, ..
            } => finite(*outside_mm) && finite(*at_ms),
            Event::BathExchange { at_ms, .. } => finite(*at_ms),
            _ => true,
        });
    if !concentrations_finite {
        // Told at each concentration's own path already.
        return;
    }
    match impermeant {
        None => {
            if let Err(why) = solute_at_start(s) {
                out.push(Problem {
                    path: "cell.volume".into(),
                    message: why,
                });
            }
        }
        Some(x) if *water == Water::Instant && x.inside_mm.is_finite() && x.inside_mm >= 0.0 => {
            let osm_in: f64 = s.species.iter().map(|sp| sp.inside_mm).sum::<f64>() + x.inside_mm;
            let osm_out = outside_osmolarity_at_start(s);
            if (osm_in - osm_out).abs() > ISO_OSMOTIC_TOLERANCE * osm_out.max(1.0) {
                let need = osm_out - (osm_in - x.inside_mm);
                let hint = if need > 0.0 {
                    format!("give {need} mM, or leave the impermeant out to derive it")
                } else {
                    "lower the inside concentrations".to_string()
                };
                out.push(Problem {
                    path: "cell.volume.impermeant.inside_mm".into(),
                    message: format!(
                        "with instant water the cell starts iso-osmotic with the bath, but the inside holds {osm_in} mOsm and the bath {osm_out} mOsm at t = 0; {hint}"
                    ),
                });
            }
        }
        Some(_) => {}
    }
}
