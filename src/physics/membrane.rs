//! A compiled cell membrane: species, gated channels and pump with every name resolved to an
//! index, and the one function that sums their currents. The engine, the steady-state solver
//! and the analysis all compute currents through [`Membrane::currents`].

use super::gates::{Kinetics, temperature_factor};
use super::{Undefined, ghk_current_ua_per_cm2, ghk_potential_mv, pump};

/// One permeant species with its file values.
#[derive(Debug, Clone, PartialEq)]
pub struct Ion {
    pub charge: i32,
    pub inside_mm: f64,
    pub outside_mm: f64,
    /// Resting (ungated) permeability.
    pub p_cm_per_s: f64,
}

/// A gated channel: extra permeability `p_max · Π x_g^p_g` for one species.
#[derive(Debug, Clone, PartialEq)]
pub struct GatedChannel {
    pub species: usize,
    pub p_max_cm_per_s: f64,
    pub shift_mv: f64,
    /// Temperature factor φ, already evaluated at the cell's temperature.
    pub phi: f64,
    pub gates: Vec<(Kinetics, u32)>,
}

impl GatedChannel {
    pub fn new(
        species: usize,
        p_max_cm_per_s: f64,
        shift_mv: f64,
        q10: f64,
        reference_c: f64,
        temperature_c: f64,
        gates: Vec<(Kinetics, u32)>,
    ) -> Self {
        Self {
            species,
            p_max_cm_per_s,
            shift_mv,
            phi: temperature_factor(q10, temperature_c, reference_c),
            gates,
        }
    }

    /// Open fraction `Π x_g^p_g` from this channel's gate values.
    pub fn open_fraction(&self, x: &[f64]) -> f64 {
        self.gates
            .iter()
            .zip(x)
            .map(|((_, p), &x)| x.clamp(0.0, 1.0).powi(i32::try_from(*p).unwrap_or(i32::MAX)))
            .product()
    }
}

/// The pump with its species resolved.
#[derive(Debug, Clone, PartialEq)]
pub struct PumpModel {
    pub exported: usize,
    pub imported: usize,
    pub exported_per_cycle: u32,
    pub imported_per_cycle: u32,
    pub max_ua_per_cm2: f64,
    pub half_inside_mm: f64,
    pub hill_inside: f64,
    pub half_outside_mm: f64,
    pub hill_outside: f64,
}

/// What varies in time around a fixed membrane: concentrations on both sides, a multiplier on
/// each species' permeability (scales and blocks), and the injected current. One per species
/// in each vector. The engine keeps one as a buffer and rewrites it in place for every
/// evaluation and sample, so nothing is allocated per sample.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Conditions {
    pub inside_mm: Vec<f64>,
    pub outside_mm: Vec<f64>,
    pub p_factor: Vec<f64>,
    pub inject_ua_per_cm2: f64,
    /// Fraction of the pump's maximum current blocked by agents on the pump (0 = none).
    pub pump_block: f64,
}

impl Conditions {
    /// Room for `species` species, everything 0 and every factor 1.
    pub fn with_species(species: usize) -> Conditions {
        Conditions {
            inside_mm: vec![0.0; species],
            outside_mm: vec![0.0; species],
            p_factor: vec![1.0; species],
            inject_ua_per_cm2: 0.0,
            pump_block: 0.0,
        }
    }
}

/// The whole membrane of one cell.
#[derive(Debug, Clone, PartialEq)]
pub struct Membrane {
    pub temperature_c: f64,
    pub capacitance_uf_per_cm2: f64,
    pub ions: Vec<Ion>,
    pub channels: Vec<GatedChannel>,
    pub pump: Option<PumpModel>,
    /// Where each channel's gates start in the flat gate vector.
    pub gate_offsets: Vec<usize>,
}

/// Currents of one evaluation, µA/cm², outward positive.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Currents {
    /// Each species' GHK current, resting plus gated permeability.
    pub species: Vec<f64>,
    /// Net pump current.
    pub pump: f64,
}

impl Membrane {
    pub fn new(
        temperature_c: f64,
        capacitance_uf_per_cm2: f64,
        ions: Vec<Ion>,
        channels: Vec<GatedChannel>,
        pump: Option<PumpModel>,
    ) -> Self {
        let mut gate_offsets = Vec::with_capacity(channels.len());
        let mut n = 0;
        for c in &channels {
            gate_offsets.push(n);
            n += c.gates.len();
        }
        Self {
            temperature_c,
            capacitance_uf_per_cm2,
            ions,
            channels,
            pump,
            gate_offsets,
        }
    }

    pub fn gate_count(&self) -> usize {
        self.channels.iter().map(|c| c.gates.len()).sum()
    }

    /// The file's own inside and outside concentrations, a factor of 1 everywhere and no
    /// injected current.
    pub fn file_values(&self) -> Conditions {
        Conditions {
            inside_mm: self.ions.iter().map(|i| i.inside_mm).collect(),
            outside_mm: self.ions.iter().map(|i| i.outside_mm).collect(),
            p_factor: vec![1.0; self.ions.len()],
            inject_ua_per_cm2: 0.0,
            pump_block: 0.0,
        }
    }

    /// The GHK potential of the resting permeabilities alone (no channels, pump, factors or
    /// injection) with the concentrations of `cond`: with the file's own concentrations it is
    /// the resting report's GHK potential, and along a run it follows the bath and the inside
    /// as they change, so the window's GHK line and its readouts "now" have one source.
    pub fn ghk_potential_mv(&self, cond: &Conditions) -> Result<f64, Undefined> {
        let ions: Vec<Ion> = self
            .ions
            .iter()
            .zip(cond.inside_mm.iter().zip(&cond.outside_mm))
            .map(|(ion, (inside, outside))| Ion {
                charge: ion.charge,
                inside_mm: inside.max(0.0),
                outside_mm: outside.max(0.0),
                p_cm_per_s: ion.p_cm_per_s,
            })
            .collect();
        ghk_potential_mv(&ions, self.temperature_c)
    }

    /// Total permeability of species `s` at this instant, cm/s.
    pub fn permeability_cm_per_s(&self, s: usize, gates: &[f64], cond: &Conditions) -> f64 {
        let mut p = self.ions[s].p_cm_per_s;
        for (c, ch) in self.channels.iter().enumerate() {
            if ch.species == s {
                let o = self.gate_offsets[c];
                p += ch.p_max_cm_per_s * ch.open_fraction(&gates[o..o + ch.gates.len()]);
            }
        }
        p * cond.p_factor[s]
    }

    /// Pump current at these conditions (0 without a pump).
    pub fn pump_current(&self, cond: &Conditions) -> f64 {
        self.pump.as_ref().map_or(0.0, |p| {
            pump::pump_current_ua_per_cm2(
                p.max_ua_per_cm2 * (1.0 - cond.pump_block),
                cond.inside_mm[p.exported],
                p.half_inside_mm,
                p.hill_inside,
                cond.outside_mm[p.imported],
                p.half_outside_mm,
                p.hill_outside,
            )
        })
    }

    /// Each species' GHK current into `species_out` (length = species count); returns the pump
    /// current. This is the single place where membrane currents are computed.
    pub fn currents(&self, v_mv: f64, gates: &[f64], cond: &Conditions, species_out: &mut [f64]) -> f64 {
        // Each species' permeability first, summed in the order of `permeability_cm_per_s`
        // (resting, then each of its channels in file order), in one pass over the channels.
        for (p, ion) in species_out.iter_mut().zip(&self.ions) {
            *p = ion.p_cm_per_s;
        }
        for (ch, &o) in self.channels.iter().zip(&self.gate_offsets) {
            if let (Some(p), Some(x)) = (species_out.get_mut(ch.species), gates.get(o..o + ch.gates.len())) {
                *p += ch.p_max_cm_per_s * ch.open_fraction(x);
            }
        }
        let per_species = species_out
            .iter_mut()
            .zip(&self.ions)
            .zip(&cond.p_factor)
            .zip(cond.inside_mm.iter().zip(&cond.outside_mm));
        for (((i, ion), factor), (inside, outside)) in per_species {
            *i = ghk_current_ua_per_cm2(
                *i * factor,
                ion.charge,
                inside.max(0.0),
                outside.max(0.0),
                v_mv,
                self.temperature_c,
            );
        }
        self.pump_current(cond)
    }

    /// Net membrane current `Σ I_s + I_pump − I_inject`, µA/cm² (outward positive): the
    /// membrane equation is `C dV/dt = −net`.
    pub fn net_current(&self, v_mv: f64, gates: &[f64], cond: &Conditions, scratch: &mut [f64]) -> f64 {
        let pump = self.currents(v_mv, gates, cond, scratch);
        scratch.iter().sum::<f64>() + pump - cond.inject_ua_per_cm2
    }

    /// Fill `gates` with every gate's steady state at `v_mv`.
    pub fn steady_gates(&self, v_mv: f64, gates: &mut [f64]) {
        for (c, ch) in self.channels.iter().enumerate() {
            let o = self.gate_offsets[c];
            for (j, (k, _)) in ch.gates.iter().enumerate() {
                gates[o + j] = k.steady_state(v_mv - ch.shift_mv);
            }
        }
    }

    /// Gate derivatives (1/ms) into `out`.
    pub fn gate_derivatives(&self, v_mv: f64, gates: &[f64], out: &mut [f64]) {
        for (c, ch) in self.channels.iter().enumerate() {
            let o = self.gate_offsets[c];
            for (j, (k, _)) in ch.gates.iter().enumerate() {
                out[o + j] = k.derivative(gates[o + j], v_mv - ch.shift_mv, ch.phi);
            }
        }
    }

    /// Pump share of each species' flux as current, µA/cm²: the exported species carries
    /// `n_e z_e / q` of the pump current, the imported one `−n_i z_i / q`.
    pub fn pump_shares(&self, pump_ua_per_cm2: f64) -> Option<(usize, f64, usize, f64)> {
        let p = self.pump.as_ref()?;
        let ze = f64::from(self.ions[p.exported].charge) * f64::from(p.exported_per_cycle);
        let zi = f64::from(self.ions[p.imported].charge) * f64::from(p.imported_per_cycle);
        let q = ze - zi;
        Some((
            p.exported,
            pump_ua_per_cm2 * ze / q,
            p.imported,
            -pump_ua_per_cm2 * zi / q,
        ))
    }
}
