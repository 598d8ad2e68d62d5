//! Instantaneous current–voltage curves: each species' GHK current and the total membrane
//! current against voltage with every gate, concentration and permeability factor frozen, and
//! the potentials where the total is zero. The window draws them; the numbers are made here.

use super::membrane::{Conditions, Membrane};
use super::steady::crossings;
use super::{ghk_current_ua_per_cm2, nernst_mv};

/// One species' curve.
#[derive(Debug, Clone, PartialEq)]
pub struct SpeciesCurve {
    /// Index of the species in the membrane.
    pub species: usize,
    /// Its GHK current at each voltage of the curves, µA/cm² (outward positive).
    pub i_ua_per_cm2: Vec<f64>,
    /// Its reversal potential when it carries current (permeability above 0, both sides
    /// present), mV.
    pub reversal_mv: Option<f64>,
}

/// The curves of one frozen state.
#[derive(Debug, Clone, PartialEq)]
pub struct IvCurves {
    pub v_mv: Vec<f64>,
    pub species: Vec<SpeciesCurve>,
    pub pump_ua_per_cm2: f64,
    /// Sum of the species currents and the pump current at each voltage.
    pub total_ua_per_cm2: Vec<f64>,
    /// Potentials where the total current is zero, most negative first.
    pub zeros_mv: Vec<f64>,
}

/// The curves at `steps + 1` evenly spaced voltages over `[lo_mv, hi_mv]`, with the gates at
/// `gates` and the concentrations and factors of `cond` (its injected current is not part of
/// the membrane current and is left out).
pub fn curves(
    m: &Membrane,
    gates: &[f64],
    cond: &Conditions,
    lo_mv: f64,
    hi_mv: f64,
    steps: usize,
) -> IvCurves {
    let steps = steps.max(1);
    let t_c = m.temperature_c;
    let pump = m.pump_current(cond);
    let v_mv: Vec<f64> = (0..=steps)
        .map(|k| lo_mv + (hi_mv - lo_mv) * k as f64 / steps as f64)
        .collect();
    let mut total = vec![pump; v_mv.len()];
    let mut species = Vec::with_capacity(m.ions.len());
    for (s, ion) in m.ions.iter().enumerate() {
        let p = m.permeability_cm_per_s(s, gates, cond);
        let (ci, co) = (cond.inside_mm[s].max(0.0), cond.outside_mm[s].max(0.0));
        let curve: Vec<f64> = v_mv
            .iter()
            .map(|&v| ghk_current_ua_per_cm2(p, ion.charge, ci, co, v, t_c))
            .collect();
        for (t, i) in total.iter_mut().zip(&curve) {
            *t += i;
        }
        species.push(SpeciesCurve {
            species: s,
            i_ua_per_cm2: curve,
            reversal_mv: if p > 0.0 {
                nernst_mv(ion.charge, ci, co, t_c)
            } else {
                None
            },
        });
    }
    let mut without_inject = cond.clone();
    without_inject.inject_ua_per_cm2 = 0.0;
    let mut scratch = vec![0.0; m.ions.len()];
    let mut net = |v: f64| m.net_current(v, gates, &without_inject, &mut scratch);
    let zeros_mv = crossings(&mut net, &v_mv, &total)
        .into_iter()
        .map(|c| c.v_mv)
        .collect();
    IvCurves {
        v_mv,
        species,
        pump_ua_per_cm2: pump,
        total_ua_per_cm2: total,
        zeros_mv,
    }
}
