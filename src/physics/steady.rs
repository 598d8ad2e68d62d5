//! The steady state: the potential at which the net current vanishes with every gate at its
//! steady state, and every such crossing when gated channels make there be several.

use super::membrane::{Conditions, Membrane};
use super::{Undefined, root};

/// One zero crossing of the steady-state current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Crossing {
    pub v_mv: f64,
    /// The steady-state current increases with V here (a candidate resting potential).
    pub increasing: bool,
}

/// All crossings, most negative first, and the resting potential chosen by model.md's rule.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyState {
    pub crossings: Vec<Crossing>,
    pub resting_mv: Result<f64, Undefined>,
}

/// Grid used to find every crossing when gates make the current non-monotonic: 4 mV steps where
/// gates move, a few points outside ±200 mV, where gates are saturated and the current is a sum
/// of GHK curves. Steep Boltzmann gates (a slope of a fraction of a millivolt) can make two
/// crossings within one cell, so the grid is refined to half a slope around each gate's midpoint;
/// any other pair of crossings hidden inside one cell is found by [`refine_near_misses`].
fn scan_grid(m: &Membrane) -> Vec<f64> {
    let mut g = vec![-1000.0, -600.0, -400.0, -300.0, -250.0];
    g.extend((0..=100).map(|k| -200.0 + 4.0 * f64::from(k))); // −200..200 by 4 mV
    g.extend([250.0, 300.0, 400.0, 600.0, 1000.0]);
    for ch in &m.channels {
        for (k, _) in &ch.gates {
            if let crate::physics::Kinetics::Boltzmann {
                v_half_mv, slope_mv, ..
            } = *k
            {
                let step = (slope_mv.abs() / 2.0).max(1e-3);
                if step < 4.0 {
                    let mid = v_half_mv + ch.shift_mv;
                    g.extend(
                        (-32..=32)
                            .map(|j| mid + step * f64::from(j))
                            .filter(|v| v.abs() < 1000.0),
                    );
                }
            }
        }
    }
    g.sort_by(f64::total_cmp);
    g.dedup();
    g
}

/// Where |I| has a local minimum on the grid without a sign change, the curve may dip through
/// zero and back between grid points: sample the two cells around it 16 times finer, twice over.
fn refine_near_misses(xs: &mut Vec<f64>, fs: &mut Vec<f64>, f: &mut impl FnMut(f64) -> f64) {
    for _ in 0..2 {
        let mut added = false;
        let mut k = 1;
        while k + 1 < xs.len() {
            let (a, b, c) = (fs[k - 1], fs[k], fs[k + 1]);
            let same_sign = (a > 0.0 && b > 0.0 && c > 0.0) || (a < 0.0 && b < 0.0 && c < 0.0);
            if same_sign && b.abs() < a.abs() && b.abs() < c.abs() {
                let (lo, hi) = (xs[k - 1], xs[k + 1]);
                let mut nx = Vec::with_capacity(31);
                let mut nf = Vec::with_capacity(31);
                for j in 1..32 {
                    let v = lo + (hi - lo) * f64::from(j) / 32.0;
                    if v != xs[k] {
                        nx.push(v);
                        nf.push(f(v));
                    }
                }
                let mut merged: Vec<(f64, f64)> = nx.into_iter().zip(nf).collect();
                merged.push((xs[k], fs[k]));
                merged.sort_by(|p, q| p.0.total_cmp(&q.0));
                let n = merged.len();
                xs.splice(k..k + 1, merged.iter().map(|p| p.0));
                fs.splice(k..k + 1, merged.iter().map(|p| p.1));
                k += n + 1;
                added = true;
            } else {
                k += 1;
            }
        }
        if !added {
            break;
        }
    }
}

/// Every zero crossing of the current `f` on the sorted grid `xs` (with `fs = f(xs)`), most
/// negative first: a grid point where `f` is exactly 0, or a sign change between neighbours
/// refined with Brent's method to 1e-12 mV. This is the one zero-current root of the program:
/// the GHK potential, the steady state and the I–V view's zero crossings all go through it.
pub fn crossings(f: &mut impl FnMut(f64) -> f64, xs: &[f64], fs: &[f64]) -> Vec<Crossing> {
    let n = xs.len().min(fs.len());
    let mut out = Vec::new();
    for k in 0..n.saturating_sub(1) {
        let (a, b, fa, fb) = (xs[k], xs[k + 1], fs[k], fs[k + 1]);
        if fa == 0.0 {
            let before = if k > 0 { fs[k - 1] } else { fa };
            out.push(Crossing {
                v_mv: a,
                increasing: fb > 0.0 && before <= 0.0,
            });
        } else if fa * fb < 0.0
            && let Some(v) = root::brent(&mut *f, a, b, fa, fb, 1e-12)
        {
            out.push(Crossing {
                v_mv: v,
                increasing: fb > fa,
            });
        }
    }
    if n >= 1 && fs[n - 1] == 0.0 {
        out.push(Crossing {
            v_mv: xs[n - 1],
            increasing: n >= 2 && fs[n - 2] < 0.0,
        });
    }
    out
}

/// Every zero of the net current `f` (outward positive) and the resting potential among them
/// (model.md): `f` on the grid `xs` (refined around near misses when `refine`), widened past
/// the ends while the current keeps one sign there, each sign change refined by [`crossings`];
/// the resting potential is the most negative crossing at which the current increases. This is
/// the one zero-current search of the program: the steady state of a membrane, and through it
/// the GHK potential of a passive one, go through it.
pub fn zero_current(f: &mut impl FnMut(f64) -> f64, mut xs: Vec<f64>, refine: bool) -> SteadyState {
    let mut fs: Vec<f64> = xs.iter().map(|&v| f(v)).collect();
    if refine {
        refine_near_misses(&mut xs, &mut fs, f);
    }
    // Widen past ±1000 mV while the ends keep the same sign as their neighbourhood needs.
    // A current that has decayed to exactly 0 far out (its exponential underflowed, e.g. when
    // the only permeant ion is absent on one side) has not changed sign: nothing lies beyond.
    let (mut lo_done, mut hi_done) = (false, false);
    for _ in 0..12 {
        let (f_lo, f_hi) = (fs[0], fs[fs.len() - 1]);
        if (lo_done || f_lo <= 0.0) && (hi_done || f_hi >= 0.0) {
            break;
        }
        if !lo_done && f_lo > 0.0 {
            let v = xs[0] * 2.0;
            let fv = f(v);
            if fv == 0.0 {
                lo_done = true;
            } else {
                xs.insert(0, v);
                fs.insert(0, fv);
            }
        }
        if !hi_done && f_hi < 0.0 {
            let v = xs[xs.len() - 1] * 2.0;
            let fv = f(v);
            if fv == 0.0 {
                hi_done = true;
            } else {
                xs.push(v);
                fs.push(fv);
            }
        }
    }
    if fs.iter().any(|x| !x.is_finite()) {
        return SteadyState {
            crossings: vec![],
            resting_mv: Err(Undefined::NotFinite),
        };
    }
    if fs.iter().all(|&x| x == 0.0) {
        return SteadyState {
            crossings: vec![],
            resting_mv: Err(Undefined::NoCurrent),
        };
    }
    let crossings = crossings(f, &xs, &fs);
    let resting_mv = match crossings.iter().find(|c| c.increasing) {
        Some(c) => Ok(c.v_mv),
        None if fs.iter().all(|&x| x < 0.0) => Err(Undefined::AlwaysInward),
        None if fs.iter().all(|&x| x > 0.0) => Err(Undefined::AlwaysOutward),
        None => Err(Undefined::NoStableCrossing),
    };
    SteadyState {
        crossings,
        resting_mv,
    }
}

impl Membrane {
    /// Steady-state net current at `v_mv` (gates at x∞(V)), outward positive.
    pub fn steady_net_current(
        &self,
        v_mv: f64,
        cond: &Conditions,
        gates: &mut [f64],
        scratch: &mut [f64],
    ) -> f64 {
        self.steady_gates(v_mv, gates);
        self.net_current(v_mv, gates, cond, scratch)
    }

    /// Solve for every steady state under `cond`.
    pub fn steady_state(&self, cond: &Conditions) -> SteadyState {
        let mut gates = vec![0.0; self.gate_count()];
        let mut scratch = vec![0.0; self.ions.len()];
        let all_finite = self.temperature_c.is_finite()
            && cond
                .inside_mm
                .iter()
                .chain(&cond.outside_mm)
                .chain(&cond.p_factor)
                .all(|x| x.is_finite())
            && cond.inject_ua_per_cm2.is_finite();
        if !all_finite {
            return SteadyState {
                crossings: vec![],
                resting_mv: Err(Undefined::NotFinite),
            };
        }
        let mut f = |v: f64| self.steady_net_current(v, cond, &mut gates, &mut scratch);
        if self.channels.is_empty() {
            zero_current(&mut f, vec![-1000.0, 1000.0], false)
        } else {
            zero_current(&mut f, scan_grid(self), true)
        }
    }
}
