//! The cell's volume in the engine (clamp-and-volume.md, "Cell volume"): the impermeant inside
//! solute and the law of water. With a tracked volume the state holds each species' inside
//! amount (as mM of the starting volume, so amount = concentration × W) and, when water moves
//! at a finite permeability, the relative volume W; with instant water W is not a state but
//! follows from the amounts at every instant (`osm_in = osm_out`), so no stiff water state
//! exists. The bath is infinite.

use crate::constants::WATER_MOLAR_VOLUME_CM3_PER_MOL;
use crate::scenario::volume::{Solute, solute_at_start};
use crate::scenario::{Valid, Volume, Water};

/// The smallest relative volume the model computes with: a guard against division by zero in
/// a state that rounding or a runaway bath took there.
const MIN_VOLUME_REL: f64 = 1e-9;

/// A tracked volume, compiled.
#[derive(Debug, Clone, PartialEq)]
pub struct VolumeModel {
    /// The impermeant inside solute X: its amount (mM at W = 1) and mean charge.
    pub solute: Solute,
    /// `dW/dt` per mOsm of inside excess over the bath, 1/ms; `None` for instant water.
    pub water_per_ms_per_mosm: Option<f64>,
}

impl VolumeModel {
    /// The volume model of a valid scenario (`None` when its volume is fixed). Validation
    /// refused every tracked cell without a solute, so `None` here also means fixed.
    pub fn new(s: &Valid, area_per_volume_per_cm: f64) -> Option<VolumeModel> {
        let Volume::Tracked { water, .. } = &s.cell.volume else {
            return None;
        };
        let solute = solute_at_start(s).ok().flatten()?;
        // dW/dt = (A/Vol₀)·P_f·v_w·Δosm: P_f µm/s → cm/s is 1e-4, mOsm → mol/cm³ is 1e-6, and
        // s → ms is 1e-3.
        let water_per_ms_per_mosm = match water {
            Water::Instant => None,
            Water::Permeability { pf_um_per_s } => Some(
                area_per_volume_per_cm * pf_um_per_s * 1e-4 * WATER_MOLAR_VOLUME_CM3_PER_MOL * 1e-6 * 1e-3,
            ),
        };
        Some(VolumeModel {
            solute,
            water_per_ms_per_mosm,
        })
    }

    /// Whether W is a state component (finite water permeability).
    pub fn has_state(&self) -> bool {
        self.water_per_ms_per_mosm.is_some()
    }

    /// Total inside osmoles over the starting volume, mOsm at W = 1: the amounts and X.
    pub fn inside_osmoles(&self, amounts: &[f64]) -> f64 {
        amounts.iter().map(|n| n.max(0.0)).sum::<f64>() + self.solute.inside_mm
    }

    /// The relative volume: the state's W with finite permeability, else the W at which the
    /// inside is iso-osmotic with a bath of `osm_out` mOsm.
    pub fn volume_rel(&self, amounts: &[f64], w_state: Option<f64>, osm_out: f64) -> f64 {
        match w_state {
            Some(w) => w.max(MIN_VOLUME_REL),
            None => (self.inside_osmoles(amounts) / osm_out).max(MIN_VOLUME_REL),
        }
    }
}
