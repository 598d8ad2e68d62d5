//! The simulated cell as an ODE: the flat state vector with a typed identity per component, the
//! one derivative function every time course computes through, and the read-only quantities of
//! a stored state (conditions, currents, steady state). The model is immutable once built: what
//! changes while a run goes on (the present segment's commands, scratch space) lives in a
//! [`Workspace`] the run owns, so one model can serve several threads at once.
//!
//! State layout: `[V, gates…, lagged inputs…, inside concentrations… (when tracked)]`; with a
//! tracked volume the concentration slots hold inside amounts instead, followed by the relative
//! volume W when water moves at a finite permeability ([`super::volume`]).

use crate::constants::FARADAY_C_PER_MOL;
use crate::physics::{Conditions, GatedChannel, IvCurves, Kinetics, Membrane, PumpModel, SteadyState};
use crate::scenario::{Start, Valid};

use super::EngineError;
use super::clamp::Clamp;
use super::protocol::{Lag, LagId, LagKind, Protocol};
use super::stepper::System;
use super::volume::VolumeModel;

/// The kind of a gate, as far as its identity and short name go.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum GateKind {
    /// Hodgkin–Huxley sodium activation, `m`.
    M,
    /// Hodgkin–Huxley sodium inactivation, `h`.
    H,
    /// Hodgkin–Huxley potassium activation, `n`.
    N,
    /// A Boltzmann gate, named by its position in the channel.
    Boltzmann,
}

impl GateKind {
    fn of(k: &Kinetics) -> GateKind {
        match k {
            Kinetics::HhSodiumActivation => GateKind::M,
            Kinetics::HhSodiumInactivation => GateKind::H,
            Kinetics::HhPotassiumActivation => GateKind::N,
            Kinetics::Boltzmann { .. } => GateKind::Boltzmann,
        }
    }
}

/// What one component of the state vector is. An edit mid-run carries each component over to
/// the new model by this identity, never by position or display name.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub enum StateId {
    /// The membrane potential.
    V,
    /// A gate of the channel labelled `channel`: for Hodgkin–Huxley kinds the `nth` gate of
    /// that kind in the channel (0 first), for Boltzmann gates the gate's position.
    Gate {
        channel: String,
        kind: GateKind,
        nth: usize,
    },
    /// A lagged input.
    Lag(LagId),
    /// The tracked inside concentration of a species.
    Inside { species: String },
    /// The inside amount of a species in a cell of tracked volume (mM of the starting volume).
    Amount { species: String },
    /// The relative volume W of a cell whose water moves at a finite permeability.
    Volume,
}

/// The compiled scenario: membrane, protocol and layout. Immutable and `Sync`.
#[derive(Debug, Clone)]
pub struct Model {
    pub membrane: Membrane,
    pub protocol: Protocol,
    pub species_names: Vec<String>,
    /// Display names of the gates, in state order (`gate:<channel>:<short>`).
    pub gate_names: Vec<String>,
    pub track_concentrations: bool,
    /// Area over volume of the spherical cell, 1/cm.
    pub area_per_volume_per_cm: f64,
    pub duration_ms: f64,
    pub sample_ms: f64,
    pub start: Start,
    /// Label of each channel, in the membrane's order.
    channel_labels: Vec<String>,
    /// The tracked volume, if any (it implies tracked concentrations, held as amounts).
    pub volume: Option<VolumeModel>,
    /// The voltage clamp, `None` in current clamp.
    pub clamp: Option<Clamp>,
    /// What a recording adds to V over the run (junctions and reference), when the cell and
    /// bath are solutions (solutions.md).
    pub recording_offset: Option<crate::solutions::Offsets>,
}

// The model is shared read-only (a scan's threads, a window frame and a run at once): keep it so.
const _: () = {
    const fn shared_across_threads<T: Sync + Send>() {}
    shared_across_threads::<Model>();
};

/// What a run changes while it goes on: the commands of the present segment and scratch space
/// for the derivative. One per run (or per thread), made by [`Model::workspace`].
#[derive(Debug, Clone)]
pub struct Workspace {
    /// Commands of the present segment, one per lag, and their time constants.
    seg_command: Vec<f64>,
    seg_tau: Vec<f64>,
    seg_inject: f64,
    /// The clamp's command at `seg_t0_ms` and its slope, and the time of the present evaluation.
    seg_command_mv: f64,
    seg_slope_mv_per_ms: f64,
    seg_t0_ms: f64,
    t_ms: f64,
    cond: Conditions,
    currents: Vec<f64>,
}

/// Currents of one stored sample, µA/cm²: what the CSV writes and the window plots.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SampleCurrents {
    /// Each species' GHK current, resting plus gated (outward positive).
    pub species_ua_per_cm2: Vec<f64>,
    pub pump_ua_per_cm2: f64,
    /// Sum of the species and pump currents.
    pub net_ua_per_cm2: f64,
    /// Injected current (depolarizing positive).
    pub inject_ua_per_cm2: f64,
    /// In voltage clamp, the recorded current (outward positive): the ionic current under an
    /// ideal clamp, the pipette current through the series resistance otherwise; 0 in current
    /// clamp.
    pub clamp_ua_per_cm2: f64,
    /// In voltage clamp, the command potential; the membrane potential in current clamp.
    pub command_mv: f64,
}

/// Reusable buffers for reading a stored sample: its conditions and its currents.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Readout {
    pub conditions: Conditions,
    pub currents: SampleCurrents,
    /// Relative volume W (1 when the volume is fixed).
    pub volume_rel: f64,
    /// Inside osmolarity, mOsm.
    pub osm_in_mosm: f64,
    /// The bath's osmolarity, mOsm.
    pub osm_out_mosm: f64,
}

/// Identity of gate `j` of a channel with these gates: its kind, and for the
/// Hodgkin–Huxley kinds its rank among the channel's gates of that kind (0 first), for a
/// Boltzmann gate its position.
fn gate_identity(gates: &[(Kinetics, u32)], j: usize) -> (GateKind, usize) {
    let kind = gates.get(j).map_or(GateKind::Boltzmann, |g| GateKind::of(&g.0));
    match kind {
        GateKind::Boltzmann => (kind, j),
        _ => (
            kind,
            gates[..j].iter().filter(|g| GateKind::of(&g.0) == kind).count(),
        ),
    }
}

/// Display name of a gate: `gate:<channel>:<short>`, the short name m, h or n for the
/// Hodgkin–Huxley kinds (m2, m3… for a second or third gate of one kind), `gate<j>` for a
/// Boltzmann gate at position j.
fn gate_name(label: &str, kind: GateKind, nth: usize) -> String {
    let letter = match kind {
        GateKind::M => "m",
        GateKind::H => "h",
        GateKind::N => "n",
        GateKind::Boltzmann => return format!("gate:{label}:gate{nth}"),
    };
    if nth == 0 {
        format!("gate:{label}:{letter}")
    } else {
        format!("gate:{label}:{letter}{}", nth + 1)
    }
}

impl Model {
    /// Builds the model of a validated scenario. Validation resolved every name already, so
    /// this cannot fail; a name that did not resolve would leave its item out.
    pub fn new(s: &Valid) -> Model {
        let ions = s.ions();
        let mut channels = Vec::new();
        let mut gate_names = Vec::new();
        let mut channel_labels = Vec::new();
        for c in &s.channels {
            let Some(sp) = s.species_index(&c.species) else {
                continue;
            };
            channels.push(GatedChannel::new(
                sp,
                c.max_permeability_cm_per_s,
                c.shift_mv,
                c.q10,
                c.reference_temperature_c,
                s.temperature_c,
                c.gates.iter().map(|g| (g.kinetics, g.power)).collect(),
            ));
            let gates = channels.last().map_or(&[][..], |ch: &GatedChannel| &ch.gates[..]);
            for j in 0..gates.len() {
                let (kind, nth) = gate_identity(gates, j);
                gate_names.push(gate_name(&c.label, kind, nth));
            }
            channel_labels.push(c.label.clone());
        }
        let pump = s.pump.as_ref().and_then(|p| {
            Some(PumpModel {
                exported: s.species_index(&p.exports)?,
                imported: s.species_index(&p.imports)?,
                exported_per_cycle: p.exported_per_cycle,
                imported_per_cycle: p.imported_per_cycle,
                max_ua_per_cm2: p.max_current_ua_per_cm2,
                half_inside_mm: p.half_saturation_inside_mm,
                hill_inside: p.hill_inside,
                half_outside_mm: p.half_saturation_outside_mm,
                hill_outside: p.hill_outside,
            })
        });
        let membrane = Membrane::new(
            s.temperature_c,
            s.cell.capacitance_uf_per_cm2,
            ions,
            channels,
            pump,
        );
        let protocol = Protocol::new(s);
        let d_cm = s.cell.diameter_um * 1e-4;
        let volume = VolumeModel::new(s, 6.0 / d_cm);
        Model {
            membrane,
            protocol,
            species_names: s.species.iter().map(|x| x.name.clone()).collect(),
            gate_names,
            track_concentrations: s.cell.track_concentrations || volume.is_some(),
            area_per_volume_per_cm: 6.0 / d_cm,
            duration_ms: s.run.duration_ms,
            sample_ms: s.run.sample_ms,
            start: s.run.start,
            channel_labels,
            volume,
            clamp: Clamp::new(s),
            recording_offset: crate::solutions::recording_offsets(s),
        }
    }

    /// Scratch and segment state for one run of this model.
    pub fn workspace(&self) -> Workspace {
        let n_lags = self.protocol.lags.len();
        Workspace {
            seg_command: vec![0.0; n_lags],
            seg_tau: vec![0.0; n_lags],
            seg_inject: 0.0,
            seg_command_mv: 0.0,
            seg_slope_mv_per_ms: 0.0,
            seg_t0_ms: 0.0,
            t_ms: 0.0,
            cond: Conditions::with_species(self.species_count()),
            currents: vec![0.0; self.species_count()],
        }
    }

    /// Buffers for [`Model::read`], sized for this model.
    pub fn readout(&self) -> Readout {
        Readout {
            conditions: Conditions::with_species(self.species_count()),
            currents: SampleCurrents {
                species_ua_per_cm2: vec![0.0; self.species_count()],
                ..SampleCurrents::default()
            },
            volume_rel: 1.0,
            osm_in_mosm: 0.0,
            osm_out_mosm: 0.0,
        }
    }

    /// The lagged inputs, in state order.
    pub fn lags(&self) -> &[Lag] {
        &self.protocol.lags
    }

    /// Identity of every state component, in state order (made when asked: only an edit
    /// mid-run needs them).
    pub fn state_ids(&self) -> Vec<StateId> {
        let mut ids = Vec::with_capacity(self.dim());
        ids.push(StateId::V);
        for (ch, label) in self.membrane.channels.iter().zip(&self.channel_labels) {
            ids.extend((0..ch.gates.len()).map(|j| {
                let (kind, nth) = gate_identity(&ch.gates, j);
                StateId::Gate {
                    channel: label.clone(),
                    kind,
                    nth,
                }
            }));
        }
        ids.extend(self.protocol.lags.iter().map(|l| StateId::Lag(l.id.clone())));
        if self.track_concentrations {
            let tracked_volume = self.volume.is_some();
            ids.extend(self.species_names.iter().map(|s| match tracked_volume {
                true => StateId::Amount { species: s.clone() },
                false => StateId::Inside { species: s.clone() },
            }));
        }
        if self.volume_index().is_some() {
            ids.push(StateId::Volume);
        }
        ids
    }

    pub fn species_count(&self) -> usize {
        self.membrane.ions.len()
    }
    pub fn gate_offset(&self) -> usize {
        1
    }
    pub fn lag_offset(&self) -> usize {
        1 + self.membrane.gate_count()
    }
    pub fn conc_offset(&self) -> usize {
        self.lag_offset() + self.protocol.lags.len()
    }
    /// Index of the relative volume W in the state, when it is a state component.
    pub fn volume_index(&self) -> Option<usize> {
        self.volume
            .as_ref()
            .filter(|v| v.has_state())
            .map(|_| self.conc_offset() + self.species_count())
    }
    /// Length of the state vector.
    pub fn dim(&self) -> usize {
        self.conc_offset()
            + if self.track_concentrations {
                self.species_count()
            } else {
                0
            }
            + usize::from(self.volume_index().is_some())
    }

    /// Display name of state component `i`, for CSV headers and plots: `v_mv`,
    /// `gate:<channel>:<short>`, the lag's name, `inside_mm:<species>` (`amount_mm:<species>`
    /// with a tracked volume), `volume_rel`.
    pub fn state_name(&self, i: usize) -> String {
        if self.volume_index() == Some(i) {
            return "volume_rel".to_string();
        }
        let conc = if self.volume.is_some() {
            "amount_mm"
        } else {
            "inside_mm"
        };
        if i < self.gate_offset() {
            "v_mv".to_string()
        } else if i < self.lag_offset() {
            self.gate_names
                .get(i - self.gate_offset())
                .cloned()
                .unwrap_or_default()
        } else if i < self.conc_offset() {
            self.protocol
                .lags
                .get(i - self.lag_offset())
                .map(Lag::name)
                .unwrap_or_default()
        } else {
            self.species_names
                .get(i - self.conc_offset())
                .map(|s| format!("{conc}:{s}"))
                .unwrap_or_default()
        }
    }

    /// Display names of every state component, in state order.
    pub fn state_names(&self) -> Vec<String> {
        (0..self.dim()).map(|i| self.state_name(i)).collect()
    }

    /// The first command edge strictly after `t`, or `None`.
    pub fn next_edge_after(&self, t_ms: f64) -> Option<f64> {
        self.protocol.next_edge_after(t_ms)
    }

    /// Injected current in force at `t`.
    pub fn inject_at(&self, t_ms: f64) -> f64 {
        self.protocol.inject_at(t_ms)
    }

    /// Which species' concentrations change during a run: those with a bath change, and all
    /// of them when inside concentrations are tracked.
    pub fn concentrations_vary(&self) -> Vec<bool> {
        let mut v = vec![self.track_concentrations; self.species_count()];
        for (x, l) in v.iter_mut().zip(&self.protocol.bath_lag) {
            *x |= l.is_some();
        }
        v
    }

    /// Fix the commands for the segment that starts at `t` and snap instant (τ = 0) lags in `y`.
    pub fn begin_segment(&self, ws: &mut Workspace, t_ms: f64, y: &mut [f64]) {
        let off = self.lag_offset();
        for (i, l) in self.protocol.lags.iter().enumerate() {
            let cmd = l.command(t_ms);
            let tau = l.tau_ms(t_ms, y[off + i]);
            ws.seg_command[i] = cmd;
            ws.seg_tau[i] = tau;
            if tau <= 0.0 {
                y[off + i] = cmd;
            }
        }
        ws.seg_inject = self.inject_at(t_ms);
        if let Some(c) = &self.clamp {
            let (v, slope) = c.command(t_ms);
            ws.seg_command_mv = v;
            ws.seg_slope_mv_per_ms = slope;
            ws.seg_t0_ms = t_ms;
            ws.t_ms = t_ms;
            if c.series_mohm_cm2.is_none() {
                // The ideal clamp sets V: each segment starts on its command exactly.
                y[0] = v;
            }
        }
    }

    /// Lags at their t = 0 commands, written into `y`.
    pub fn lags_at_start(&self, y: &mut [f64]) {
        let off = self.lag_offset();
        for (i, l) in self.protocol.lags.iter().enumerate() {
            y[off + i] = l.command(0.0);
        }
    }

    /// The concentrations and permeability factors of the state `y` written into `out`, with
    /// `inject_ua_per_cm2` as its injected current.
    pub fn conditions(&self, y: &[f64], inject_ua_per_cm2: f64, out: &mut Conditions) {
        let n = self.species_count();
        let lo = self.lag_offset();
        let co = self.conc_offset();
        out.inside_mm.resize(n, 0.0);
        out.outside_mm.resize(n, 0.0);
        out.p_factor.resize(n, 1.0);
        for s in 0..n {
            out.outside_mm[s] = self.outside_mm(y, s);
        }
        // With a tracked volume the slots hold amounts: concentrations are amounts over W.
        let per_volume = 1.0 / self.volume_rel(y);
        for s in 0..n {
            out.inside_mm[s] = if self.track_concentrations {
                y[co + s].max(0.0) * per_volume
            } else {
                self.membrane.ions[s].inside_mm
            };
            out.p_factor[s] = 1.0;
        }
        out.pump_block = 0.0;
        for (i, l) in self.protocol.lags.iter().enumerate() {
            let e = y[lo + i];
            match &l.kind {
                LagKind::Scale { species, .. } => out.p_factor[*species] *= e.max(0.0),
                LagKind::Agent {
                    species,
                    action,
                    ic50_um,
                    hill,
                    ..
                } => {
                    let factor = action.permeability_factor(*ic50_um, *hill, e);
                    match species {
                        Some(sp) => out.p_factor[*sp] *= factor,
                        // Several agents on the pump multiply, as on a species.
                        None => out.pump_block = 1.0 - (1.0 - out.pump_block) * factor,
                    }
                }
                LagKind::Bath { .. } | LagKind::BathUnlisted { .. } => {}
            }
        }
        out.inject_ua_per_cm2 = inject_ua_per_cm2;
    }

    /// The derivative of the state at `y`, under the segment's commands held in `ws`.
    pub fn derivatives(&self, ws: &mut Workspace, y: &[f64], dy: &mut [f64]) {
        self.conditions(y, ws.seg_inject, &mut ws.cond);
        let g0 = self.gate_offset();
        let ng = self.membrane.gate_count();
        let v = y[0];
        let pump = self
            .membrane
            .currents(v, &y[g0..g0 + ng], &ws.cond, &mut ws.currents);
        let net: f64 = ws.currents.iter().sum::<f64>() + pump;
        dy[0] = match &self.clamp {
            None => (ws.seg_inject - net) / self.membrane.capacitance_uf_per_cm2,
            // Ideal: V follows the command, linear within a segment.
            Some(Clamp {
                series_mohm_cm2: None,
                ..
            }) => ws.seg_slope_mv_per_ms,
            Some(Clamp {
                series_mohm_cm2: Some(r),
                ..
            }) => {
                let v_cmd = ws.seg_command_mv + ws.seg_slope_mv_per_ms * (ws.t_ms - ws.seg_t0_ms);
                (Clamp::pipette_ua_per_cm2(*r, v_cmd, v) - net) / self.membrane.capacitance_uf_per_cm2
            }
        };
        self.membrane
            .gate_derivatives(v, &y[g0..g0 + ng], &mut dy[g0..g0 + ng]);
        let lo = self.lag_offset();
        for i in 0..self.protocol.lags.len() {
            let tau = ws.seg_tau[i];
            dy[lo + i] = if tau > 0.0 {
                (ws.seg_command[i] - y[lo + i]) / tau
            } else {
                0.0
            };
        }
        if self.track_concentrations {
            let co = self.conc_offset();
            let shares = self.membrane.pump_shares(pump);
            // dc/dt in mM/ms = −I·(A/Vol)/(zF) with I in µA/cm²: µA → A is 1e-6, mol/cm³ → mM is
            // 1e6, and s → ms is 1e-3, leaving the 1e-3 below.
            for s in 0..self.species_count() {
                let mut i_s = ws.currents[s];
                if let Some((e, ie, m, im)) = shares {
                    if s == e {
                        i_s += ie;
                    }
                    if s == m {
                        i_s += im;
                    }
                }
                let z = f64::from(self.membrane.ions[s].charge);
                dy[co + s] = -i_s * self.area_per_volume_per_cm / (z * FARADAY_C_PER_MOL) * 1e-3;
            }
        }
        if let (Some(w), Some(vm)) = (self.volume_index(), &self.volume) {
            let rate = vm.water_per_ms_per_mosm.unwrap_or(0.0);
            dy[w] = rate * (self.osm_in_mosm(y) - self.osm_out_mosm(y));
        }
    }

    /// Outside concentration of species `s` in the state `y`, mM.
    fn outside_mm(&self, y: &[f64], s: usize) -> f64 {
        match self.protocol.bath_lag[s] {
            Some(l) => y[self.lag_offset() + l].max(0.0),
            None => self.membrane.ions[s].outside_mm,
        }
    }

    /// Osmolarity of the bath in the state `y`, mOsm (ideal: the sum of the concentrations of
    /// all its particles): every species' outside value and, in a bath of solutions, the
    /// solutes no species lists, each where its lag has taken it.
    pub fn osm_out_mosm(&self, y: &[f64]) -> f64 {
        let unlisted = self
            .protocol
            .unlisted_lag
            .map_or(0.0, |l| y[self.lag_offset() + l]);
        (0..self.species_count())
            .map(|s| self.outside_mm(y, s))
            .sum::<f64>()
            + unlisted
    }

    /// The inside amounts of a tracked cell's state `y` (empty when concentrations are fixed).
    fn amounts<'a>(&self, y: &'a [f64]) -> &'a [f64] {
        match self.track_concentrations {
            true => &y[self.conc_offset()..self.conc_offset() + self.species_count()],
            false => &[],
        }
    }

    /// The relative volume W of the state `y`: 1 when the volume is fixed.
    pub fn volume_rel(&self, y: &[f64]) -> f64 {
        match &self.volume {
            None => 1.0,
            Some(vm) => vm.volume_rel(
                self.amounts(y),
                self.volume_index().map(|w| y[w]),
                self.osm_out_mosm(y),
            ),
        }
    }

    /// Osmolarity of the inside in the state `y`, mOsm: every species' inside concentration,
    /// and the impermeant solute's when the volume is tracked.
    pub fn osm_in_mosm(&self, y: &[f64]) -> f64 {
        match &self.volume {
            Some(vm) => vm.inside_osmoles(self.amounts(y)) / self.volume_rel(y),
            None if self.track_concentrations => self.amounts(y).iter().map(|c| c.max(0.0)).sum(),
            None => self.membrane.ions.iter().map(|i| i.inside_mm).sum(),
        }
    }

    /// Everything derived from the stored sample `(t, y)` for output: its conditions and its
    /// currents (each species', the pump's, their sum, and the injected current), into `r`.
    /// The one place the CSV and the window compute per-sample currents.
    pub fn read(&self, t_ms: f64, y: &[f64], r: &mut Readout) {
        let inject = self.inject_at(t_ms);
        self.conditions(y, inject, &mut r.conditions);
        let g0 = self.gate_offset();
        let ng = self.membrane.gate_count();
        let c = &mut r.currents;
        c.species_ua_per_cm2.resize(self.species_count(), 0.0);
        let pump = self
            .membrane
            .currents(y[0], &y[g0..g0 + ng], &r.conditions, &mut c.species_ua_per_cm2);
        c.pump_ua_per_cm2 = pump;
        c.net_ua_per_cm2 = c.species_ua_per_cm2.iter().sum::<f64>() + pump;
        c.inject_ua_per_cm2 = inject;
        r.volume_rel = self.volume_rel(y);
        r.osm_in_mosm = self.osm_in_mosm(y);
        r.osm_out_mosm = self.osm_out_mosm(y);
        (c.command_mv, c.clamp_ua_per_cm2) = match &self.clamp {
            None => (y[0], 0.0),
            Some(clamp) => {
                let v_cmd = clamp.command(t_ms).0;
                match clamp.series_mohm_cm2 {
                    None => (v_cmd, c.net_ua_per_cm2),
                    Some(r) => (v_cmd, Clamp::pipette_ua_per_cm2(r, v_cmd, y[0])),
                }
            }
        };
    }

    /// The reversal (Nernst) potential of species `s` under the concentrations of `cond`, mV
    /// (`None` where it is undefined: no charge, or a concentration of 0). The one computation
    /// behind every reversal line: the window's plots (and so its PNG) and the SVG figure read
    /// it sample by sample, so a moving bath or inside moves the line alike in all of them.
    pub fn reversal_mv(&self, s: usize, cond: &Conditions) -> Option<f64> {
        let ion = self.membrane.ions.get(s)?;
        crate::physics::nernst_mv(
            ion.charge,
            *cond.inside_mm.get(s)?,
            *cond.outside_mm.get(s)?,
            self.membrane.temperature_c,
        )
    }

    /// The gates of the state `y`.
    pub fn gates<'a>(&self, y: &'a [f64]) -> &'a [f64] {
        let g0 = self.gate_offset();
        &y[g0..g0 + self.membrane.gate_count()]
    }

    /// Instantaneous I–V curves at the state `y` (gates, concentrations and factors frozen)
    /// over `[lo_mv, hi_mv]` in `steps` intervals.
    pub fn iv_curves(&self, y: &[f64], lo_mv: f64, hi_mv: f64, steps: usize) -> IvCurves {
        let mut cond = Conditions::with_species(self.species_count());
        self.conditions(y, 0.0, &mut cond);
        crate::physics::iv::curves(&self.membrane, self.gates(y), &cond, lo_mv, hi_mv, steps)
    }

    /// The state at t = 0 before V and the gates are chosen: lagged inputs at their t = 0
    /// commands, inside concentrations as in the file.
    fn start_inputs(&self) -> Vec<f64> {
        let mut y = vec![0.0; self.dim()];
        self.lags_at_start(&mut y);
        if self.track_concentrations {
            let co = self.conc_offset();
            for s in 0..self.species_count() {
                y[co + s] = self.membrane.ions[s].inside_mm;
            }
        }
        if let Some(w) = self.volume_index() {
            y[w] = 1.0;
        }
        y
    }

    /// Inside and outside concentrations, permeability factors and injected current in force
    /// at t = 0: the conditions of [`Model::steady_state_at_start`].
    pub fn conditions_at_start(&self) -> Conditions {
        let y = self.start_inputs();
        let mut cond = Conditions::with_species(self.species_count());
        self.conditions(&y, self.inject_at(0.0), &mut cond);
        cond
    }

    /// The steady state under the commands in force at t = 0 (lags at their t = 0 commands,
    /// injection at t = 0, inside concentrations as in the file).
    pub fn steady_state_at_start(&self) -> SteadyState {
        self.membrane.steady_state(&self.conditions_at_start())
    }

    /// The initial state of a run (model.md "Time-varying inputs" and `run.start`).
    pub fn initial_state(&self) -> Result<Vec<f64>, EngineError> {
        let mut y = self.start_inputs();
        let v = match (&self.clamp, self.start) {
            // A clamped cell starts with everything at its steady state at the holding potential.
            (Some(c), _) => c.holding_mv,
            (None, Start::Voltage(v)) => v,
            (None, Start::Rest) => self
                .steady_state_at_start()
                .resting_mv
                .map_err(|reason| EngineError::NoRestingState { reason })?,
        };
        y[0] = v;
        let ng = self.membrane.gate_count();
        self.membrane.steady_gates(v, &mut y[1..1 + ng]);
        Ok(y)
    }
}

impl System for Model {
    type Workspace = Workspace;
    fn derivatives(&self, ws: &mut Workspace, t: f64, y: &[f64], dy: &mut [f64]) {
        ws.t_ms = t;
        Model::derivatives(self, ws, y, dy);
    }
}
