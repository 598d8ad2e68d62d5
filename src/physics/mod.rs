//! Membrane physics: Nernst and GHK expressions, the zero-current potential, the pump, gate
//! kinetics and the steady state. Pure functions over plain numbers; no file formats, no UI.
//!
//! Units follow model.md: mV, ms, mM, cm/s, µA/cm², µF/cm², °C. With P in cm/s and
//! concentrations in mM, `P·z·F·c` comes out directly in µA/cm² (the 1e-6 of mM → mol/cm³
//! cancels the 1e6 of A → µA), which is why no scale factor appears in the current below.

pub mod gates;
pub mod iv;
pub mod membrane;
pub mod pump;
pub mod root;
pub mod steady;

use crate::constants::{FARADAY_C_PER_MOL, rt_over_f_mv};

pub use gates::Kinetics;
pub use iv::IvCurves;
pub use membrane::{Conditions, GatedChannel, Ion, Membrane, PumpModel};
pub use steady::{Crossing, SteadyState};

/// Nernst (reversal) potential in mV, or `None` when either concentration is 0 (or negative),
/// where the potential is undefined.
pub fn nernst_mv(charge: i32, inside_mm: f64, outside_mm: f64, temperature_c: f64) -> Option<f64> {
    if charge == 0 || inside_mm <= 0.0 || outside_mm <= 0.0 {
        return None;
    }
    let e = rt_over_f_mv(temperature_c) / f64::from(charge) * (outside_mm / inside_mm).ln();
    e.is_finite().then_some(e)
}

/// `u / (1 − e^(−u))`, the GHK rectification factor, stable at and near `u = 0` and for large |u|.
#[inline]
pub fn ghk_factor(u: f64) -> f64 {
    if u.abs() < 1e-6 {
        1.0 + u / 2.0 + u * u / 12.0
    } else {
        u / -(-u).exp_m1()
    }
}

/// GHK current density of one species in µA/cm² (outward positive).
///
/// `p_cm_per_s` permeability, concentrations in mM, `v_mv` inside minus outside.
/// Two algebraically equal forms are used by the sign of `u` so that no exponential of a large
/// positive number is ever taken: the result is finite for any finite input.
#[inline]
pub fn ghk_current_ua_per_cm2(
    p_cm_per_s: f64,
    charge: i32,
    inside_mm: f64,
    outside_mm: f64,
    v_mv: f64,
    temperature_c: f64,
) -> f64 {
    if p_cm_per_s == 0.0 {
        return 0.0;
    }
    let z = f64::from(charge);
    let u = z * v_mv / rt_over_f_mv(temperature_c);
    let pzf = p_cm_per_s * z * FARADAY_C_PER_MOL;
    if u >= 0.0 {
        pzf * (inside_mm - outside_mm * (-u).exp()) * ghk_factor(u)
    } else {
        // u / expm1(u) = ghk_factor(-u) ... evaluated directly to keep both branches symmetric.
        pzf * (inside_mm * u.exp() - outside_mm) * ghk_factor(-u)
    }
}

/// Why a potential could not be found.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum Undefined {
    #[error("no species has a resting permeability above 0")]
    NothingPermeant,
    #[error(
        "the net current is inward at every potential (no permeant ion can carry outward current), so it never crosses zero"
    )]
    AlwaysInward,
    #[error(
        "the net current is outward at every potential (no permeant ion can carry inward current), so it never crosses zero"
    )]
    AlwaysOutward,
    #[error(
        "the net current has no zero crossing at which it increases with potential between -1000 and +1000 mV"
    )]
    NoStableCrossing,
    #[error(
        "no current flows at any potential: every ion with a permeability is at 0 mM on both sides, or its permeability is scaled or blocked to 0"
    )]
    NoCurrent,
    #[error("a concentration, permeability or temperature is not a finite number")]
    NotFinite,
}

/// The passive zero-current ("GHK") potential in mV of a set of ions, any charges.
///
/// The zero of the net current of a membrane with these ions' resting permeabilities and
/// nothing else (no channels, pump or injection), found by the same search as every steady
/// state ([`steady::zero_current`]: bracketing from ±1000 mV, widening as needed, Brent's
/// root). Each GHK current increases with V, so the root is unique when it exists. The net
/// current is summed here directly rather than through a [`Membrane`] built for the purpose:
/// the rest report and every scan point compute this, and it is the same sum.
pub fn ghk_potential_mv(ions: &[Ion], temperature_c: f64) -> Result<f64, Undefined> {
    if !temperature_c.is_finite()
        || ions
            .iter()
            .any(|i| !(i.inside_mm.is_finite() && i.outside_mm.is_finite() && i.p_cm_per_s.is_finite()))
    {
        return Err(Undefined::NotFinite);
    }
    if ions.iter().all(|i| i.p_cm_per_s <= 0.0) {
        return Err(Undefined::NothingPermeant);
    }
    let mut net = |v: f64| -> f64 {
        ions.iter()
            .map(|i| {
                ghk_current_ua_per_cm2(
                    i.p_cm_per_s,
                    i.charge,
                    i.inside_mm,
                    i.outside_mm,
                    v,
                    temperature_c,
                )
            })
            .sum()
    };
    // Permeant ions absent on both sides is told as such (`NoCurrent`), not blamed on the
    // permeabilities.
    steady::zero_current(&mut net, vec![-1000.0, 1000.0], false).resting_mv
}

/// The closed-form GHK voltage equation, valid only when every permeant ion is monovalent.
/// `None` when some permeant ion has |z| ≠ 1 or the logarithm's argument is 0 or infinite.
pub fn ghk_voltage_closed_form_mv(ions: &[Ion], temperature_c: f64) -> Option<f64> {
    let (mut num, mut den) = (0.0, 0.0);
    for i in ions.iter().filter(|i| i.p_cm_per_s > 0.0) {
        match i.charge {
            1 => {
                num += i.p_cm_per_s * i.outside_mm;
                den += i.p_cm_per_s * i.inside_mm;
            }
            -1 => {
                num += i.p_cm_per_s * i.inside_mm;
                den += i.p_cm_per_s * i.outside_mm;
            }
            _ => return None,
        }
    }
    let v = rt_over_f_mv(temperature_c) * (num / den).ln();
    v.is_finite().then_some(v)
}
