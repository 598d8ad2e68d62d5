//! Protocol compilation: a scenario's events turned into lagged inputs (permeability scales,
//! bath concentrations, agents), trains of injected current and the sorted command edges the
//! stepper must land on (model.md, "Time-varying inputs").

use crate::scenario::{AgentTarget, Event, Valid};

/// Which lagged input a lag state is, independent of where its event sits in the protocol, so
/// that an edit mid-run can carry its present value over.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub enum LagId {
    /// The `nth` permeability scale (0 first) on `species`, counted in protocol order. Moving
    /// the event among the others, or changing its factor, times or lag, keeps the identity.
    Scale { species: String, nth: usize },
    /// The outside concentration of `species`, which all its bath changes share.
    Bath { species: String },
    /// An agent's effective dose, by the agent's label (labels are unique).
    Agent { label: String },
    /// The bath's osmolarity that no species carries (a solution's sucrose, its unlisted ions),
    /// which a tracked volume's water follows.
    BathUnlisted,
}

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
    /// The bath's osmolarity that no species' value carries, mOsm (see
    /// [`crate::solutions::Plan::unlisted_mosm`]): that of the `outside` solution at first,
    /// then `(at_ms, mOsm, lag_ms)` of each bath exchange in time order, so it follows each
    /// exchange through the same lag as the exchanged ions. Made only for a tracked volume
    /// whose bath is a solution.
    BathUnlisted {
        file_mosm: f64,
        changes: Vec<(f64, f64, f64)>,
    },
    /// An agent's effective dose, µM; it blocks its species' permeability, or the pump's
    /// maximum current when `species` is `None`.
    Agent {
        species: Option<usize>,
        action: AgentAction,
        ic50_um: f64,
        hill: f64,
        dose_um: f64,
        from_ms: f64,
        until_ms: Option<f64>,
        onset_ms: f64,
        washout_ms: f64,
    },
}

/// One lagged input: its identity, the protocol position of its (first) event, and its law.
#[derive(Debug, Clone, PartialEq)]
pub struct Lag {
    pub id: LagId,
    /// Index in the protocol of the event that made it (the first bath change of a species).
    pub event: usize,
    pub kind: LagKind,
}

/// `on` inside `[from, until)`, `off` outside.
fn in_span(t: f64, from: f64, until: Option<f64>, on: f64, off: f64) -> f64 {
    if t >= from && until.is_none_or(|u| t < u) {
        on
    } else {
        off
    }
}

impl Lag {
    /// Display name for CSV headers and plots: `factor:<species>:event<i>`,
    /// `bath_mm:<species>`, `dose_um:<label>` or `bath_unlisted_mosm`.
    pub fn name(&self) -> String {
        match &self.id {
            LagId::Scale { species, .. } => format!("factor:{species}:event{}", self.event),
            LagId::Bath { species } => format!("bath_mm:{species}"),
            LagId::Agent { label } => format!("dose_um:{label}"),
            LagId::BathUnlisted => "bath_unlisted_mosm".to_string(),
        }
    }

    /// The species whose permeability or bath this input acts on (`None`: the pump, or the
    /// bath's unlisted solutes).
    pub fn species(&self) -> Option<usize> {
        match self.kind {
            LagKind::Scale { species, .. } | LagKind::Bath { species, .. } => Some(species),
            LagKind::Agent { species, .. } => species,
            LagKind::BathUnlisted { .. } => None,
        }
    }

    /// The command in force at `t` (right-continuous: an edge at `t` is already applied).
    pub fn command(&self, t_ms: f64) -> f64 {
        match &self.kind {
            LagKind::Scale {
                factor,
                from_ms,
                until_ms,
                ..
            } => in_span(t_ms, *from_ms, *until_ms, *factor, 1.0),
            LagKind::Bath {
                file_mm: file,
                changes,
                ..
            }
            | LagKind::BathUnlisted {
                file_mosm: file,
                changes,
            } => changes.iter().rev().find(|c| c.0 <= t_ms).map_or(*file, |c| c.1),
            LagKind::Agent {
                dose_um,
                from_ms,
                until_ms,
                ..
            } => in_span(t_ms, *from_ms, *until_ms, *dose_um, 0.0),
        }
    }

    /// The time constant in force at `t` given the present lagged value `e`: an agent's onset
    /// constant while its command is above `e`, its washout constant otherwise (model.md).
    pub fn tau_ms(&self, t_ms: f64, e: f64) -> f64 {
        match &self.kind {
            LagKind::Scale { lag_ms, .. } => *lag_ms,
            LagKind::Bath { changes, .. } | LagKind::BathUnlisted { changes, .. } => {
                changes.iter().rev().find(|c| c.0 <= t_ms).map_or(0.0, |c| c.2)
            }
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

    /// The largest value the command takes, at least 1: the scale of its absolute tolerance.
    pub fn scale(&self) -> f64 {
        self.command(0.0).abs().max(1.0).max(match &self.kind {
            LagKind::Bath {
                changes,
                file_mm: file,
                ..
            }
            | LagKind::BathUnlisted {
                changes,
                file_mosm: file,
            } => changes.iter().fold(*file, |m, c| m.max(c.1)),
            LagKind::Scale { factor, .. } => *factor,
            LagKind::Agent { dose_um, .. } => *dose_um,
        })
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
            LagKind::Bath { changes, .. } | LagKind::BathUnlisted { changes, .. } => {
                out.extend(changes.iter().map(|c| c.0));
            }
        }
    }
}

/// What an agent does to its species' permeability at full occupancy: one or the other, never
/// both (the file's `max_block` and `max_increase` are exclusive).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AgentAction {
    /// Removes up to this fraction (0–1).
    Block { max_block: f64 },
    /// Adds up to this multiple of the permeability (≥ 0).
    Open { max_increase: f64 },
}

impl AgentAction {
    /// The action an `Agent` event describes.
    pub fn of(max_block: f64, max_increase: Option<f64>) -> AgentAction {
        match max_increase {
            Some(max_increase) => AgentAction::Open { max_increase },
            None => AgentAction::Block { max_block },
        }
    }

    /// The factor on the species' permeability at lagged dose `d_um`: `1 − max_block·occupancy`
    /// or `1 + max_increase·occupancy`, occupancy being `dⁿ/(dⁿ + IC50ⁿ)`.
    pub fn permeability_factor(self, ic50_um: f64, hill: f64, d_um: f64) -> f64 {
        let occupancy = fraction_blocked(1.0, ic50_um, hill, d_um);
        match self {
            AgentAction::Block { max_block } => 1.0 - max_block * occupancy,
            AgentAction::Open { max_increase } => 1.0 + max_increase * occupancy,
        }
    }
}

/// Fraction of a species' permeability blocked by an agent at lagged dose `d_um`
/// (`max_block·dⁿ/(dⁿ + IC50ⁿ)`, written so that large Hill coefficients cannot overflow).
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
    pub fn at(&self, t_ms: f64) -> f64 {
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
    pub fn next_edge_after(&self, t_ms: f64) -> Option<f64> {
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

/// A compiled protocol.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Protocol {
    pub lags: Vec<Lag>,
    pub pulses: Vec<Pulses>,
    /// Which lag holds each species' bath concentration, if any.
    pub bath_lag: Vec<Option<usize>>,
    /// Which lag holds the bath's unlisted osmolarity, if any (a tracked volume in a bath of
    /// solutions).
    pub unlisted_lag: Option<usize>,
    /// Command edges of the lagged inputs, finite, sorted, without repeats (pulse edges are
    /// found by [`Pulses::next_edge_after`]: a train may have very many).
    pub edges: Vec<f64>,
}

/// Adds one change of species `sp`'s bath, `(at ms, mM, lag ms)`, made by event `event`, to
/// the species' bath input (made on its first change).
fn bath_change(
    lags: &mut Vec<Lag>,
    bath_lag: &mut [Option<usize>],
    s: &Valid,
    sp: usize,
    event: usize,
    change: (f64, f64, f64),
) {
    let l = match bath_lag[sp] {
        Some(l) => l,
        None => {
            lags.push(Lag {
                id: LagId::Bath {
                    species: s.species[sp].name.clone(),
                },
                event,
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
    if let Some(Lag {
        kind: LagKind::Bath { changes, .. },
        ..
    }) = lags.get_mut(l)
    {
        changes.push(change);
    }
}

impl Protocol {
    /// Compiles the protocol of a validated scenario. Validation has resolved every species
    /// name, so an event whose species is missing cannot occur; it would be skipped.
    pub fn new(s: &Valid) -> Protocol {
        let mut lags: Vec<Lag> = Vec::new();
        let mut pulses = Vec::new();
        let mut bath_lag: Vec<Option<usize>> = vec![None; s.species.len()];
        let mut edges = Vec::new();
        // Mixed once, and only for a protocol that exchanges whole solutions.
        let mut plan = None;
        for (i, ev) in s.protocol.iter().enumerate() {
            let species_of = |name: &str| s.species_index(name);
            match ev {
                Event::PermeabilityScale {
                    species,
                    factor,
                    from_ms,
                    until_ms,
                    lag_ms,
                } => {
                    let Some(sp) = species_of(species) else { continue };
                    let nth = lags
                        .iter()
                        .filter(|l| matches!(&l.id, LagId::Scale { species: n, .. } if n == species))
                        .count();
                    lags.push(Lag {
                        id: LagId::Scale {
                            species: species.clone(),
                            nth,
                        },
                        event: i,
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
                    let Some(sp) = species_of(species) else { continue };
                    bath_change(&mut lags, &mut bath_lag, s, sp, i, (*at_ms, *outside_mm, *lag_ms));
                }
                Event::BathExchange {
                    solution,
                    at_ms,
                    lag_ms,
                } => {
                    let plan = plan.get_or_insert_with(|| crate::solutions::plan(s));
                    for sp in 0..s.species.len() {
                        let mm = plan.value_of(s, solution, &s.species[sp].name);
                        bath_change(&mut lags, &mut bath_lag, s, sp, i, (*at_ms, mm, *lag_ms));
                    }
                }
                Event::Agent {
                    label,
                    species,
                    target,
                    max_block,
                    max_increase,
                    ic50_um,
                    hill,
                    dose_um,
                    from_ms,
                    until_ms,
                    onset_ms,
                    washout_ms,
                } => {
                    let sp = match target {
                        AgentTarget::Pump => None,
                        AgentTarget::Permeability => {
                            let Some(sp) = species_of(species) else { continue };
                            Some(sp)
                        }
                    };
                    lags.push(Lag {
                        id: LagId::Agent { label: label.clone() },
                        event: i,
                        kind: LagKind::Agent {
                            species: sp,
                            action: AgentAction::of(*max_block, *max_increase),
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
                // Voltage-clamp commands act through the model's clamp; only their edges are here.
                Event::Step { .. } | Event::Ramp { .. } => {
                    edges.extend(super::clamp::command_edges(ev).into_iter().flatten());
                }
            }
        }
        // A tracked volume's water sees every particle of the bath (solutions.md: ideal
        // osmolarity), also those no species lists: they follow each exchange as one more input.
        let mut unlisted_lag = None;
        if !s.cell.volume.is_fixed() && crate::scenario::volume::bath_uses_solutions(s) {
            let plan = plan.get_or_insert_with(|| crate::solutions::plan(s));
            let file_mosm = s.outside.as_deref().map_or(0.0, |o| plan.unlisted_mosm(s, o));
            let changes = s
                .protocol
                .iter()
                .filter_map(|e| match e {
                    Event::BathExchange {
                        solution,
                        at_ms,
                        lag_ms,
                    } => Some((*at_ms, plan.unlisted_mosm(s, solution), *lag_ms)),
                    _ => None,
                })
                .collect();
            let event = s
                .protocol
                .iter()
                .position(|e| matches!(e, Event::BathExchange { .. }))
                .unwrap_or(0);
            lags.push(Lag {
                id: LagId::BathUnlisted,
                event,
                kind: LagKind::BathUnlisted { file_mosm, changes },
            });
            unlisted_lag = Some(lags.len() - 1);
        }
        for l in &mut lags {
            if let LagKind::Bath { changes, .. } | LagKind::BathUnlisted { changes, .. } = &mut l.kind {
                // Stable sort: equal times keep file order, and the later one wins.
                changes.sort_by(|a, b| a.0.total_cmp(&b.0));
            }
        }
        for l in &lags {
            l.edges(&mut edges);
        }
        edges.retain(|e| e.is_finite());
        edges.sort_by(f64::total_cmp);
        edges.dedup();
        Protocol {
            lags,
            pulses,
            bath_lag,
            unlisted_lag,
            edges,
        }
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

    /// Injected current in force at `t`, µA/cm².
    pub fn inject_at(&self, t_ms: f64) -> f64 {
        self.pulses.iter().map(|p| p.at(t_ms)).sum()
    }
}
