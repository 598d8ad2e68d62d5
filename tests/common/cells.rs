//! Cells built in code, shared by the tests and the analysis benchmarks (which include this file
//! by path): species and the Hodgkin–Huxley 1952 channels, with invented numbers.

use permeant::physics::Kinetics;
use permeant::scenario::{Channel, Gate, Species};

pub fn species(name: &str, charge: i32, inside_mm: f64, outside_mm: f64, p_cm_per_s: f64) -> Species {
    Species {
        name: name.into(),
        charge,
        inside_mm,
        outside_mm,
        permeability_cm_per_s: p_cm_per_s,
    }
}

/// A fast sodium channel (m³h) and a delayed potassium channel (n⁴) with Hodgkin & Huxley's
/// 1952 rates at their 6.3 °C and a q10 of 3, on GHK permeabilities of the given maxima.
pub fn hh_channels(na_max_cm_per_s: f64, k_max_cm_per_s: f64) -> Vec<Channel> {
    let channel = |label: &str, species: &str, p: f64, gates: &[(Kinetics, u32)]| Channel {
        label: label.into(),
        species: species.into(),
        max_permeability_cm_per_s: p,
        shift_mv: 0.0,
        q10: 3.0,
        reference_temperature_c: 6.3,
        gates: gates
            .iter()
            .map(|&(kinetics, power)| Gate { kinetics, power })
            .collect(),
    };
    vec![
        channel(
            "fast sodium",
            "Na+",
            na_max_cm_per_s,
            &[
                (Kinetics::HhSodiumActivation, 3),
                (Kinetics::HhSodiumInactivation, 1),
            ],
        ),
        channel(
            "delayed potassium",
            "K+",
            k_max_cm_per_s,
            &[(Kinetics::HhPotassiumActivation, 4)],
        ),
    ]
}
