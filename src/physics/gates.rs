//! Gate kinetics: the published Hodgkin–Huxley 1952 rate functions and Boltzmann gates.
//!
//! Rates are in 1/ms at the channel's reference temperature; the caller multiplies by the
//! temperature factor φ = q10^((θ − θ_ref)/10). Voltages are `V' = V − shift` in mV.

use serde::{Deserialize, Serialize};

use super::ghk_factor;

/// The kinetics of one gate. Names are the scenario file's (format 1); misspelt fields are
/// refused like everywhere else in the file, so `Boltzmann(tau: 5.0, …)` cannot silently lose
/// its time constant.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub enum Kinetics {
    /// Hodgkin & Huxley 1952 sodium activation, m.
    HhSodiumActivation,
    /// Hodgkin & Huxley 1952 sodium inactivation, h.
    HhSodiumInactivation,
    /// Hodgkin & Huxley 1952 potassium activation, n.
    HhPotassiumActivation,
    /// `x∞ = 1/(1 + e^(−(V' − v_half)/slope))` approached with a fixed time constant.
    Boltzmann {
        v_half_mv: f64,
        slope_mv: f64,
        tau_ms: f64,
    },
}

/// Gate rate arguments are kept within ±2000 mV: beyond that every gate is saturated anyway, and
/// the exponentials of the rate functions would overflow to infinity and give NaN ratios.
const V_LIMIT_MV: f64 = 2000.0;

impl Kinetics {
    /// Display name for tables and menus.
    pub fn name(&self) -> &'static str {
        match self {
            Kinetics::HhSodiumActivation => "HH sodium activation (m)",
            Kinetics::HhSodiumInactivation => "HH sodium inactivation (h)",
            Kinetics::HhPotassiumActivation => "HH potassium activation (n)",
            Kinetics::Boltzmann { .. } => "Boltzmann",
        }
    }

    /// Opening and closing rates α, β in 1/ms at the reference temperature, for the rate-form
    /// gates; `None` for Boltzmann gates, which are given as x∞ and τ instead.
    pub fn rates_per_ms(&self, v_prime_mv: f64) -> Option<(f64, f64)> {
        let v = v_prime_mv.clamp(-V_LIMIT_MV, V_LIMIT_MV);
        // α_m = 0.1(V'+40)/(1 − e^(−(V'+40)/10)) = ghk_factor((V'+40)/10), whose removable
        // singularity at V' = −40 mV (limit 1.0) the factor's series already handles.
        match self {
            Kinetics::HhSodiumActivation => {
                Some((ghk_factor((v + 40.0) / 10.0), 4.0 * (-(v + 65.0) / 18.0).exp()))
            }
            Kinetics::HhSodiumInactivation => Some((
                0.07 * (-(v + 65.0) / 20.0).exp(),
                1.0 / (1.0 + (-(v + 35.0) / 10.0).exp()),
            )),
            Kinetics::HhPotassiumActivation => Some((
                0.1 * ghk_factor((v + 55.0) / 10.0),
                0.125 * (-(v + 65.0) / 80.0).exp(),
            )),
            Kinetics::Boltzmann { .. } => None,
        }
    }

    /// Steady-state value x∞ at `v_prime_mv`.
    pub fn steady_state(&self, v_prime_mv: f64) -> f64 {
        match *self {
            Kinetics::Boltzmann {
                v_half_mv, slope_mv, ..
            } => 1.0 / (1.0 + (-(v_prime_mv - v_half_mv) / slope_mv).exp()),
            _ => {
                let (a, b) = self.rates_per_ms(v_prime_mv).unwrap_or((0.0, 1.0));
                a / (a + b)
            }
        }
    }

    /// Time constant τ in ms at the reference temperature (divide by φ for another temperature).
    pub fn tau_ms(&self, v_prime_mv: f64) -> f64 {
        match *self {
            Kinetics::Boltzmann { tau_ms, .. } => tau_ms,
            _ => {
                let (a, b) = self.rates_per_ms(v_prime_mv).unwrap_or((0.0, 1.0));
                1.0 / (a + b)
            }
        }
    }

    /// dx/dt in 1/ms, with the temperature factor `phi` applied.
    pub fn derivative(&self, x: f64, v_prime_mv: f64, phi: f64) -> f64 {
        match *self {
            Kinetics::Boltzmann { tau_ms, .. } => phi * (self.steady_state(v_prime_mv) - x) / tau_ms,
            _ => {
                let (a, b) = self.rates_per_ms(v_prime_mv).unwrap_or((0.0, 0.0));
                phi * (a * (1.0 - x) - b * x)
            }
        }
    }
}

/// Temperature factor φ = q10^((θ − θ_ref)/10).
pub fn temperature_factor(q10: f64, temperature_c: f64, reference_c: f64) -> f64 {
    q10.powf((temperature_c - reference_c) / 10.0)
}
