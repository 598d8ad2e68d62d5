//! The simulated cell as an ODE: the flat state vector, the protocol's piecewise-constant
//! commands, and the one derivative function every time course computes through.
//!
//! State layout: `[V, gates…, lagged inputs…, inside concentrations… (when tracked)]`.

use crate::constants::FARADAY_C_PER_MOL;
use crate::physics::{Conditions, GatedChannel, Membrane, PumpModel, SteadyState};
use crate::scenario::{Event, Start, Valid};

use super::EngineError;

/// What one lagged input follows.
#[derive(Debug, Clone, PartialEq)]
pub enum LagKind {
    /// A permeability scale on one species (one per event).
    Scale {
        species: usize,
        factor: f64,
        from_ms: f64,
        until_ms: Option<f64>,
        lag_ms: f64,
    },
    /// The bath concentration of one species: `(at_ms, outside_mm, lag_ms)` in time order,
    /// ties kept in file order so the later entry wins.
    Bath {
        species: usize,
        file_mm: f64,
        changes: Vec<(f64, f64, f64)>,
    },
    /// An agent's effective dose, µM.
    Agent {
        species: usize,
        max_block: f64,
        ic50_um: f64,
        hill: f64,
        dose_um: f64,
        from_ms: f64,
        until_ms: Option<f64>,
        onset_ms: f64,
        washout_ms: f64,
    },
}

/// One lagged input with its display name.
#[derive(Debug, Clone, PartialEq)]
pub struct Lag {
    pub name: String,
    pub kind: LagKind,
}

fn in_span(t: f64, from: f64, until: Option<f64>) -> bool {
    t >= from && until.is_none_or(|u| t < u)
}

impl Lag {
    /// The command in force at `t` (right-continuous: an edge at `t` is already applied).
    pub fn command(&self, t_ms: f64) -> f64 {
        match &self.kind {
            LagKind::Scale {
                factor,
                from_ms,
                until_ms,
                ..
            } => {
                if in_span(t_ms, *from_ms, *until_ms) {
                    *factor
                } else {
                    1.0
                }
            }
            LagKind::Bath { file_mm, changes, .. } => changes
                .iter()
                .rev()
                .find(|c| c.0 <= t_ms)
                .map_or(*file_mm, |c| c.1),
            LagKind::Agent {
                dose_um,
                from_ms,
                until_ms,
                ..
            } => {
                if in_span(t_ms, *from_ms, *until_ms) {
                    *dose_um
                } else {
                    0.0
                }
            }
        }
    }

    /// The time constant in force at `t` given the present lagged value `e`.
    pub fn tau_ms(&self, t_ms: f64, e: f64) -> f64 {
        match &self.kind {
            LagKind::Scale { lag_ms, .. } => *lag_ms,
            LagKind::Bath { changes, .. } => changes.iter().rev().find(|c| c.0 <= t_ms).map_or(0.0, |c| c.2),
            LagKind::Agent {
                onset_ms, washout_ms, ..
            } => {
                if self.command(t_ms) > e {
                    *onset_ms
                } else {
                    *washout_ms
                }
            }
        }
    }

    /// Every time at which the command may change.
    fn edges(&self, out: &mut Vec<f64>) {
        match &self.kind {
            LagKind::Scale {
                from_ms, until_ms, ..
            }
            | LagKind::Agent {
                from_ms, until_ms, ..
            } => {
                out.push(*from_ms);
                out.extend(until_ms);
            }
            LagKind::Bath { changes, .. } => out.extend(changes.iter().map(|c| c.0)),
        }
    }
}

/// Fraction of a species' permeability blocked by an agent at lagged dose `d_um`.
pub fn fraction_blocked(max_block: f64, ic50_um: f64, hill: f64, d_um: f64) -> f64 {
    let d = d_um.max(0.0);
    if d == 0.0 {
        return 0.0;
    }
    max_block / (1.0 + (ic50_um / d).powf(hill))
}

/// A train of injected pulses (a single `Inject` is a train of one).
#[derive(Debug, Clone, PartialEq)]
pub struct Pulses {
    pub amplitude_ua_per_cm2: f64,
    pub from_ms: f64,
    pub width_ms: f64,
    pub period_ms: f64,
    pub count: u32,
}

impl Pulses {
    fn start(&self, k: u32) -> f64 {
        self.from_ms + f64::from(k) * self.period_ms
    }

    /// Amplitude in force at `t` (pulse k covers `[from + k·period, from + k·period + width)`).
    fn at(&self, t_ms: f64) -> f64 {
        if t_ms < self.from_ms {
            return 0.0;
        }
        let k = ((t_ms - self.from_ms) / self.period_ms).floor();
        // The neighbouring pulse is checked too: rounding in the division can land one off.
        let mut sum = 0.0;
        for k in [k - 1.0, k, k + 1.0] {
            if k >= 0.0 && k < f64::from(self.count) {
                let s = self.start(k as u32);
                if t_ms >= s && t_ms < s + self.width_ms {
                    sum += self.amplitude_ua_per_cm2;
                }
            }
        }
        sum
    }

    /// First pulse edge strictly after `t`, if any.
    fn next_edge_after(&self, t_ms: f64) -> Option<f64> {
        let k0 = if t_ms < self.from_ms {
            0.0
        } else {
            ((t_ms - self.from_ms) / self.period_ms).floor() - 1.0
        };
        let mut k = k0.max(0.0);
        while k < f64::from(self.count) {
            let s = self.start(k as u32);
            if s > t_ms {
                return Some(s);
            }
            if s + self.width_ms > t_ms {
                return Some(s + self.width_ms);
            }
            k += 1.0;
        }
        None
    }
}

/// The compiled scenario: membrane, lagged inputs, pulses and layout.
#[derive(Debug, Clone)]
pub struct Model {
    pub membrane: Membrane,
    pub lags: Vec<Lag>,
    pub pulses: Vec<Pulses>,
    pub species_names: Vec<String>,
    pub gate_names: Vec<String>,
    pub track_concentrations: bool,
    /// Area over volume of the spherical cell, 1/cm.
    pub area_per_volume_per_cm: f64,
    pub duration_ms: f64,
    pub sample_ms: f64,
    pub start: Start,
    /// Static command edges, sorted.
    edges: Vec<f64>,
    /// Which lag holds each species' bath concentration, if any.
    bath_lag: Vec<Option<usize>>,
    /// Commands of the present segment, one per lag, and their time constants.
    seg_command: Vec<f64>,
    seg_tau: Vec<f64>,
    seg_inject: f64,
    scratch_inside: Vec<f64>,
    scratch_outside: Vec<f64>,
    scratch_factor: Vec<f64>,
    scratch_currents: Vec<f64>,
}

impl Model {
    /// Builds the model of a validated scenario. Names are resolved here; a name that no
    /// species has is reported (validation already refuses it, so this is a second guard).
    pub fn new(s: &Valid) -> Result<Model, EngineError> {
        let idx = |name: &str, place: String| {
            s.species_index(name).ok_or(EngineError::UnknownSpecies {
                place,
                name: name.to_string(),
            })
        };
        let ions = s.ions();
        let mut channels = Vec::new();
        let mut gate_names = Vec::new();
        for (i, c) in s.channels.iter().enumerate() {
            let sp = idx(&c.species, format!("channels[{i}].species"))?;
            channels.push(GatedChannel::new(
                sp,
                c.max_permeability_cm_per_s,
                c.shift_mv,
                c.q10,
                c.reference_temperature_c,
                s.temperature_c,
                c.gates.iter().map(|g| (g.kinetics, g.power)).collect(),
            ));
            for (j, g) in c.gates.iter().enumerate() {
                let short = match g.kinetics {
                    crate::physics::Kinetics::HhSodiumActivation => "m".to_string(),
                    crate::physics::Kinetics::HhSodiumInactivation => "h".to_string(),
                    crate::physics::Kinetics::HhPotassiumActivation => "n".to_string(),
                    crate::physics::Kinetics::Boltzmann { .. } => format!("gate{j}"),
                };
                gate_names.push(format!("gate:{}:{short}", c.label));
            }
        }
        let pump = match &s.pump {
            Some(p) => Some(PumpModel {
                exported: idx(&p.exports, "pump.exports".into())?,
                imported: idx(&p.imports, "pump.imports".into())?,
                exported_per_cycle: p.exported_per_cycle,
                imported_per_cycle: p.imported_per_cycle,
                max_ua_per_cm2: p.max_current_ua_per_cm2,
                half_inside_mm: p.half_saturation_inside_mm,
                hill_inside: p.hill_inside,
                half_outside_mm: p.half_saturation_outside_mm,
                hill_outside: p.hill_outside,
            }),
            None => None,
        };
        let membrane = Membrane::new(
            s.temperature_c,
            s.cell.capacitance_uf_per_cm2,
            ions,
            channels,
            pump,
        );

        let mut lags = Vec::new();
        let mut pulses = Vec::new();
        let mut bath_lag: Vec<Option<usize>> = vec![None; s.species.len()];
        for (i, ev) in s.protocol.iter().enumerate() {
            match ev {
                Event::PermeabilityScale {
                    species,
                    factor,
                    from_ms,
                    until_ms,
                    lag_ms,
                } => {
                    let sp = idx(species, format!("protocol[{i}].species"))?;
                    lags.push(Lag {
                        name: format!("factor:{species}:event{i}"),
                        kind: LagKind::Scale {
                            species: sp,
                            factor: *factor,
                            from_ms: *from_ms,
                            until_ms: *until_ms,
                            lag_ms: *lag_ms,
                        },
                    });
                }
                Event::BathChange {
                    species,
                    outside_mm,
                    at_ms,
                    lag_ms,
                } => {
                    let sp = idx(species, format!("protocol[{i}].species"))?;
                    let l = match bath_lag[sp] {
                        Some(l) => l,
                        None => {
                            lags.push(Lag {
                                name: format!("bath_mm:{species}"),
                                kind: LagKind::Bath {
                                    species: sp,
                                    file_mm: s.species[sp].outside_mm,
                                    changes: vec![],
                                },
                            });
                            bath_lag[sp] = Some(lags.len() - 1);
                            lags.len() - 1
                        }
                    };
                    if let LagKind::Bath { changes, .. } = &mut lags[l].kind {
                        changes.push((*at_ms, *outside_mm, *lag_ms));
                    }
                }
                Event::Agent {
                    label,
                    species,
                    max_block,
                    ic50_um,
                    hill,
                    dose_um,
                    from_ms,
                    until_ms,
                    onset_ms,
                    washout_ms,
                } => {
                    let sp = idx(species, format!("protocol[{i}].species"))?;
                    lags.push(Lag {
                        name: format!("dose_um:{label}"),
                        kind: LagKind::Agent {
                            species: sp,
                            max_block: *max_block,
                            ic50_um: *ic50_um,
                            hill: *hill,
                            dose_um: *dose_um,
                            from_ms: *from_ms,
                            until_ms: *until_ms,
                            onset_ms: *onset_ms,
                            washout_ms: *washout_ms,
                        },
                    });
                }
                Event::Inject {
                    amplitude_ua_per_cm2,
                    from_ms,
                    until_ms,
                } => pulses.push(Pulses {
                    amplitude_ua_per_cm2: *amplitude_ua_per_cm2,
                    from_ms: *from_ms,
                    width_ms: until_ms - from_ms,
                    period_ms: (until_ms - from_ms).max(f64::MIN_POSITIVE),
                    count: 1,
                }),
                Event::InjectTrain {
                    amplitude_ua_per_cm2,
                    width_ms,
                    period_ms,
                    count,
                    from_ms,
                } => pulses.push(Pulses {
                    amplitude_ua_per_cm2: *amplitude_ua_per_cm2,
                    from_ms: *from_ms,
                    width_ms: *width_ms,
                    period_ms: *period_ms,
                    count: *count,
                }),
            }
        }
        for l in &mut lags {
            if let LagKind::Bath { changes, .. } = &mut l.kind {
                // Stable sort: equal times keep file order, and the later one wins.
                changes.sort_by(|a, b| a.0.total_cmp(&b.0));
            }
        }
        let mut edges = Vec::new();
        for l in &lags {
            l.edges(&mut edges);
        }
        edges.retain(|e| e.is_finite());
        edges.sort_by(f64::total_cmp);
        edges.dedup();
        let n_species = s.species.len();
        let n_lags = lags.len();
        let d_cm = s.cell.diameter_um * 1e-4;
        Ok(Model {
            membrane,
            lags,
            pulses,
            species_names: s.species.iter().map(|x| x.name.clone()).collect(),
            gate_names,
            track_concentrations: s.cell.track_concentrations,
            area_per_volume_per_cm: 6.0 / d_cm,
            duration_ms: s.run.duration_ms,
            sample_ms: s.run.sample_ms,
            start: s.run.start,
            edges,
            bath_lag,
            seg_command: vec![0.0; n_lags],
            seg_tau: vec![0.0; n_lags],
            seg_inject: 0.0,
            scratch_inside: vec![0.0; n_species],
            scratch_outside: vec![0.0; n_species],
            scratch_factor: vec![1.0; n_species],
            scratch_currents: vec![0.0; n_species],
        })
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
        self.lag_offset() + self.lags.len()
    }
    /// Length of the state vector.
    pub fn dim(&self) -> usize {
        self.conc_offset()
            + if self.track_concentrations {
                self.species_count()
            } else {
                0
            }
    }

    /// Names of the state components, for CSV headers and plots.
    pub fn state_names(&self) -> Vec<String> {
        let mut n = vec!["v_mv".to_string()];
        n.extend(self.gate_names.iter().cloned());
        n.extend(self.lags.iter().map(|l| l.name.clone()));
        if self.track_concentrations {
            n.extend(self.species_names.iter().map(|s| format!("inside_mm:{s}")));
        }
        n
    }

    /// The first command edge strictly after `t`, or `None`.
    pub fn next_edge_after(&self, t_ms: f64) -> Option<f64> {
        let i = self.edges.partition_point(|&e| e <= t_ms);
        let mut next = self.edges.get(i).copied();
        for p in &self.pulses {
            if let Some(e) = p.next_edge_after(t_ms) {
                next = Some(next.map_or(e, |n: f64| n.min(e)));
            }
        }
        next
    }

    /// Injected current in force at `t`.
    pub fn inject_at(&self, t_ms: f64) -> f64 {
        self.pulses.iter().map(|p| p.at(t_ms)).sum()
    }

    /// Fix the commands for the segment that starts at `t` and snap instant (τ = 0) lags in `y`.
    pub fn begin_segment(&mut self, t_ms: f64, y: &mut [f64]) {
        let off = self.lag_offset();
        for (i, l) in self.lags.iter().enumerate() {
            let cmd = l.command(t_ms);
            let tau = l.tau_ms(t_ms, y[off + i]);
            self.seg_command[i] = cmd;
            self.seg_tau[i] = tau;
            if tau <= 0.0 {
                y[off + i] = cmd;
            }
        }
        self.seg_inject = self.inject_at(t_ms);
    }

    /// Lags at their t = 0 commands, written into `y`.
    pub fn lags_at_start(&self, y: &mut [f64]) {
        let off = self.lag_offset();
        for (i, l) in self.lags.iter().enumerate() {
            y[off + i] = l.command(0.0);
        }
    }

    /// Fill the concentration and factor scratch from a state vector.
    fn fill_conditions(&mut self, y: &[f64]) {
        let n = self.species_count();
        let lo = self.lag_offset();
        for s in 0..n {
            self.scratch_inside[s] = if self.track_concentrations {
                y[self.conc_offset() + s].max(0.0)
            } else {
                self.membrane.ions[s].inside_mm
            };
            self.scratch_outside[s] = match self.bath_lag[s] {
                Some(l) => y[lo + l].max(0.0),
                None => self.membrane.ions[s].outside_mm,
            };
            self.scratch_factor[s] = 1.0;
        }
        for (i, l) in self.lags.iter().enumerate() {
            let e = y[lo + i];
            match &l.kind {
                LagKind::Scale { species, .. } => self.scratch_factor[*species] *= e.max(0.0),
                LagKind::Agent {
                    species,
                    max_block,
                    ic50_um,
                    hill,
                    ..
                } => {
                    self.scratch_factor[*species] *= 1.0 - fraction_blocked(*max_block, *ic50_um, *hill, e);
                }
                LagKind::Bath { .. } => {}
            }
        }
    }

    /// The derivative of the state at `y`, under the present segment's commands.
    pub fn derivatives(&mut self, y: &[f64], dy: &mut [f64]) {
        self.fill_conditions(y);
        let cond = Conditions {
            inside_mm: &self.scratch_inside,
            outside_mm: &self.scratch_outside,
            p_factor: &self.scratch_factor,
            inject_ua_per_cm2: self.seg_inject,
        };
        let g0 = self.gate_offset();
        let ng = self.membrane.gate_count();
        let v = y[0];
        let pump = self
            .membrane
            .currents(v, &y[g0..g0 + ng], &cond, &mut self.scratch_currents);
        let net: f64 = self.scratch_currents.iter().sum::<f64>() + pump;
        dy[0] = (self.seg_inject - net) / self.membrane.capacitance_uf_per_cm2;
        self.membrane
            .gate_derivatives(v, &y[g0..g0 + ng], &mut dy[g0..g0 + ng]);
        let lo = self.lag_offset();
        for i in 0..self.lags.len() {
            let tau = self.seg_tau[i];
            dy[lo + i] = if tau > 0.0 {
                (self.seg_command[i] - y[lo + i]) / tau
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
                let mut i_s = self.scratch_currents[s];
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
    }

    /// Species currents (µA/cm²) and pump current at a stored state.
    pub fn currents_at(&mut self, y: &[f64], species_out: &mut [f64]) -> f64 {
        self.fill_conditions(y);
        let cond = Conditions {
            inside_mm: &self.scratch_inside,
            outside_mm: &self.scratch_outside,
            p_factor: &self.scratch_factor,
            inject_ua_per_cm2: 0.0,
        };
        let g0 = self.gate_offset();
        let ng = self.membrane.gate_count();
        self.membrane.currents(y[0], &y[g0..g0 + ng], &cond, species_out)
    }

    /// Conditions (inside, outside, permeability factor) at a stored state, copied out.
    pub fn conditions_at(&mut self, y: &[f64]) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
        self.fill_conditions(y);
        (
            self.scratch_inside.clone(),
            self.scratch_outside.clone(),
            self.scratch_factor.clone(),
        )
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
        y
    }

    /// Inside and outside concentrations, permeability factors and injected current in force
    /// at t = 0: the conditions of [`Model::steady_state_at_start`], copied out.
    pub fn conditions_at_start(&mut self) -> (Vec<f64>, Vec<f64>, Vec<f64>, f64) {
        let y = self.start_inputs();
        let (inside, outside, factor) = self.conditions_at(&y);
        (inside, outside, factor, self.inject_at(0.0))
    }

    /// The steady state under the commands in force at t = 0 (lags at their t = 0 commands,
    /// injection at t = 0, inside concentrations as in the file).
    pub fn steady_state_at_start(&mut self) -> SteadyState {
        let y = self.start_inputs();
        self.fill_conditions(&y);
        let cond = Conditions {
            inside_mm: &self.scratch_inside,
            outside_mm: &self.scratch_outside,
            p_factor: &self.scratch_factor,
            inject_ua_per_cm2: self.inject_at(0.0),
        };
        self.membrane.steady_state(&cond)
    }

    /// The initial state of a run (model.md "Time-varying inputs" and `run.start`).
    pub fn initial_state(&mut self) -> Result<Vec<f64>, EngineError> {
        let mut y = self.start_inputs();
        let v = match self.start {
            Start::Voltage(v) => v,
            Start::Rest => self
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
