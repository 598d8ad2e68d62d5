//! Dormand–Prince 5(4) with a PI step-size controller and 4th-order dense output.
//!
//! Written here rather than taken from a crate because the run loop must stop exactly on every
//! command edge, restart the first-same-as-last stage there, advance in bounded chunks across
//! frames and report which state component failed; the general-purpose crates integrate a whole
//! interval in one call. An independent crate (ode_solvers' DOP853) checks it in the tests.
//! Coefficients: Dormand & Prince 1980, dense output after Hairer, Nørsett & Wanner (1993).
//!
//! Each accepted step also estimates the largest |λ| from its last two stages (Hairer's
//! stiffness test). The estimate keeps the next step inside the stability boundary, so rounding
//! noise is never amplified (a cell at rest stays flat), and counts the steps held there by
//! stability: many in a row mean the cell is stiff, and `Method::Auto` hands over to the
//! Rosenbrock stepper.

use super::stepper::{
    Settings, Stats, StepFailure, System, first_non_finite, initial_step, land_on_end, too_small, underflow,
};

/// Largest h·|λ| a step is allowed from the stiffness estimate (the real stability boundary
/// of DOPRI5 is near 3.3).
pub const STABLE_H_LAMBDA: f64 = 3.0;
/// h·|λ| above which a step counts as held by stability.
pub const STIFF_H_LAMBDA: f64 = 2.5;

const C2: f64 = 1.0 / 5.0;
const C3: f64 = 3.0 / 10.0;
const C4: f64 = 4.0 / 5.0;
const C5: f64 = 8.0 / 9.0;
const A21: f64 = 1.0 / 5.0;
const A31: f64 = 3.0 / 40.0;
const A32: f64 = 9.0 / 40.0;
const A41: f64 = 44.0 / 45.0;
const A42: f64 = -56.0 / 15.0;
const A43: f64 = 32.0 / 9.0;
const A51: f64 = 19372.0 / 6561.0;
const A52: f64 = -25360.0 / 2187.0;
const A53: f64 = 64448.0 / 6561.0;
const A54: f64 = -212.0 / 729.0;
const A61: f64 = 9017.0 / 3168.0;
const A62: f64 = -355.0 / 33.0;
const A63: f64 = 46732.0 / 5247.0;
const A64: f64 = 49.0 / 176.0;
const A65: f64 = -5103.0 / 18656.0;
const A71: f64 = 35.0 / 384.0;
const A73: f64 = 500.0 / 1113.0;
const A74: f64 = 125.0 / 192.0;
const A75: f64 = -2187.0 / 6784.0;
const A76: f64 = 11.0 / 84.0;
const E1: f64 = 71.0 / 57600.0;
const E3: f64 = -71.0 / 16695.0;
const E4: f64 = 71.0 / 1920.0;
const E5: f64 = -17253.0 / 339200.0;
const E6: f64 = 22.0 / 525.0;
const E7: f64 = -1.0 / 40.0;
const D1: f64 = -12715105075.0 / 11282082432.0;
const D3: f64 = 87487479700.0 / 32700410799.0;
const D4: f64 = -10690763975.0 / 1880347072.0;
const D5: f64 = 701980252875.0 / 199316789632.0;
const D6: f64 = -1453857185.0 / 822651844.0;
const D7: f64 = 69997945.0 / 29380423.0;

/// The stepper's working state between steps.
#[derive(Debug, Clone)]
pub struct Dopri5 {
    pub settings: Settings,
    pub stats: Stats,
    /// Proposed next step size, ms (0 until the first step chooses one).
    pub h: f64,
    k: [Vec<f64>; 7],
    y_stage: Vec<f64>,
    y_new: Vec<f64>,
    err: Vec<f64>,
    /// Dense-output coefficients of the last accepted step, and its start and size.
    cont: [Vec<f64>; 5],
    t_old: f64,
    h_old: f64,
    /// `k[0]` holds f(t, y) for the present point.
    fsal_valid: bool,
    fac_old: f64,
    /// Stiffness detection (Hairer, Nørsett & Wanner 1993, II.10 and their DOPRI5 code):
    /// accepted steps in a row whose h·λ sits on the stability boundary, and recent ones that
    /// did not.
    stiff_count: u32,
    nonstiff_count: u32,
}

impl Dopri5 {
    pub fn new(dim: usize, settings: Settings) -> Self {
        let z = || vec![0.0; dim];
        Self {
            settings,
            stats: Stats::default(),
            h: 0.0,
            k: [z(), z(), z(), z(), z(), z(), z()],
            y_stage: z(),
            y_new: z(),
            err: z(),
            cont: [z(), z(), z(), z(), z()],
            t_old: 0.0,
            h_old: 0.0,
            fsal_valid: false,
            fac_old: 1e-4,
            stiff_count: 0,
            nonstiff_count: 0,
        }
    }

    /// Whether the recent steps were held by stability rather than accuracy: 15 accepted
    /// steps with h·λ above [`STIFF_H_LAMBDA`], λ estimated from the last two stages, not
    /// interrupted by 6 that were not (the counts of Hairer's DOPRI5 code, whose threshold of
    /// 3.25 is lowered here because steps are kept at h·λ ≤ [`STABLE_H_LAMBDA`]).
    pub fn stiffness_detected(&self) -> bool {
        self.stiff_count >= 15
    }

    /// Start the stiffness count afresh.
    pub fn reset_stiffness(&mut self) {
        self.stiff_count = 0;
        self.nonstiff_count = 0;
    }

    /// Size of the last accepted step.
    pub fn last_step(&self) -> f64 {
        self.h_old
    }

    /// Forget the derivative at the present point: the system changed (a command edge or an edit).
    pub fn invalidate(&mut self) {
        self.fsal_valid = false;
    }

    /// Takes one accepted step from `(t, y)` that does not pass `t_end`; updates both.
    /// Lands exactly on `t_end` when the step reaches it.
    pub fn step(
        &mut self,
        sys: &mut impl System,
        t: &mut f64,
        y: &mut [f64],
        t_end: f64,
    ) -> Result<(), StepFailure> {
        let n = y.len();
        if !self.fsal_valid {
            sys.derivatives(*t, y, &mut self.k[0]);
            self.stats.evaluations += 1;
            if let Some(c) = first_non_finite(&self.k[0]) {
                return Err(StepFailure::NotFinite { component: c });
            }
            self.fsal_valid = true;
        }
        let span = t_end - *t;
        let h_limit = span.min(self.settings.h_max);
        if self.h <= 0.0 {
            let [k1, k2, ..] = &mut self.k;
            self.h = initial_step(
                sys,
                &self.settings,
                5,
                Some(STABLE_H_LAMBDA),
                *t,
                y,
                k1,
                &mut self.y_stage,
                k2,
                h_limit,
            );
            self.stats.evaluations += 1;
        }
        let mut h = self.h.min(h_limit);
        let mut last_rejected = false;
        loop {
            h = land_on_end(*t, h, t_end, span);
            if too_small(h, *t) {
                return Err(underflow(&self.err));
            }
            let [k1, k2, k3, k4, k5, k6, k7] = &mut self.k;
            let ys = &mut self.y_stage;
            for i in 0..n {
                ys[i] = y[i] + h * A21 * k1[i];
            }
            sys.derivatives(*t + C2 * h, ys, k2);
            for i in 0..n {
                ys[i] = y[i] + h * (A31 * k1[i] + A32 * k2[i]);
            }
            sys.derivatives(*t + C3 * h, ys, k3);
            for i in 0..n {
                ys[i] = y[i] + h * (A41 * k1[i] + A42 * k2[i] + A43 * k3[i]);
            }
            sys.derivatives(*t + C4 * h, ys, k4);
            for i in 0..n {
                ys[i] = y[i] + h * (A51 * k1[i] + A52 * k2[i] + A53 * k3[i] + A54 * k4[i]);
            }
            sys.derivatives(*t + C5 * h, ys, k5);
            for i in 0..n {
                ys[i] = y[i] + h * (A61 * k1[i] + A62 * k2[i] + A63 * k3[i] + A64 * k4[i] + A65 * k5[i]);
            }
            sys.derivatives(*t + h, ys, k6);
            let yn = &mut self.y_new;
            for i in 0..n {
                yn[i] = y[i] + h * (A71 * k1[i] + A73 * k3[i] + A74 * k4[i] + A75 * k5[i] + A76 * k6[i]);
            }
            sys.derivatives(*t + h, yn, k7);
            self.stats.evaluations += 6;
            let mut sum = 0.0;
            let mut bad = None;
            for i in 0..n {
                let e = h * (E1 * k1[i] + E3 * k3[i] + E4 * k4[i] + E5 * k5[i] + E6 * k6[i] + E7 * k7[i]);
                let sk = self.settings.atol[i] + self.settings.rtol * y[i].abs().max(yn[i].abs());
                self.err[i] = e / sk;
                sum += self.err[i] * self.err[i];
                if bad.is_none() && !(yn[i].is_finite() && k7[i].is_finite()) {
                    bad = Some(i);
                }
            }
            // A ratio to a vanishing tolerance can overflow without anything being wrong with
            // the state: that is a very large error, not a non-finite quantity.
            let err = (sum / n as f64).sqrt();
            let err = if err.is_finite() { err } else { f64::MAX };
            // A non-finite trial is treated as a large error: shrink and try again, and only
            // report it when the step cannot shrink further.
            if let Some(component) = bad {
                self.stats.rejected += 1;
                h *= 0.1;
                if too_small(h, *t) {
                    return Err(StepFailure::NotFinite { component });
                }
                last_rejected = true;
                continue;
            }
            // PI controller (Hairer's dopri5 constants: β = 0.04, safety 0.9, factors 0.2..10).
            const BETA: f64 = 0.04;
            let expo1 = 0.2 - BETA * 0.75;
            let fac11 = err.powf(expo1);
            if err <= 1.0 {
                let mut fac = fac11 / self.fac_old.powf(BETA);
                fac = (fac / 0.9).clamp(0.1, 5.0);
                let mut h_new = h / fac;
                if last_rejected {
                    h_new = h_new.min(h);
                }
                self.fac_old = err.max(1e-4);
                self.stats.accepted += 1;
                // Stages 6 and 7 both sit at t + h, so their difference quotient estimates
                // the largest |λ| along the step (Hairer's stiffness test).
                let (mut num, mut den, mut den_scaled) = (0.0, 0.0, 0.0);
                for i in 0..n {
                    let dy = yn[i] - ys[i];
                    num += (k7[i] - k6[i]).powi(2);
                    den += dy * dy;
                    den_scaled += (dy / self.settings.scale(i, y[i], yn[i])).powi(2);
                }
                let lambda = if den > 0.0 { (num / den).sqrt() } else { 0.0 };
                // Past |hλ| ≈ 3.3 the method is unstable on the negative real axis: rounding
                // noise then grows until the error test notices it, which moves a cell at rest
                // by about the tolerance. So the next step stays inside the boundary, unless
                // the two stages differ by less than rounding, where the quotient means nothing.
                if lambda.is_finite() && lambda > 0.0 && (den_scaled / n as f64).sqrt() > 1e-10 {
                    h_new = h_new.min((STABLE_H_LAMBDA / lambda).max(0.01 * h));
                }
                if h * lambda > STIFF_H_LAMBDA {
                    self.nonstiff_count = 0;
                    self.stiff_count += 1;
                } else {
                    self.nonstiff_count += 1;
                    if self.nonstiff_count == 6 {
                        self.stiff_count = 0;
                    }
                }
                // Dense output of this step.
                for i in 0..n {
                    let ydiff = yn[i] - y[i];
                    let bspl = h * k1[i] - ydiff;
                    self.cont[0][i] = y[i];
                    self.cont[1][i] = ydiff;
                    self.cont[2][i] = bspl;
                    self.cont[3][i] = ydiff - h * k7[i] - bspl;
                    self.cont[4][i] =
                        h * (D1 * k1[i] + D3 * k3[i] + D4 * k4[i] + D5 * k5[i] + D6 * k6[i] + D7 * k7[i]);
                }
                self.t_old = *t;
                self.h_old = h;
                y.copy_from_slice(yn);
                std::mem::swap(k1, k7);
                *t = if h == span { t_end } else { *t + h };
                self.h = h_new.min(self.settings.h_max);
                return Ok(());
            }
            self.stats.rejected += 1;
            h /= (fac11 / 0.9).min(5.0);
            last_rejected = true;
        }
    }

    /// The dense-output value of component `i` at `t` inside the last accepted step.
    pub fn dense(&self, i: usize, t: f64) -> f64 {
        let theta = (t - self.t_old) / self.h_old;
        let theta1 = 1.0 - theta;
        let c = &self.cont;
        c[0][i] + theta * (c[1][i] + theta1 * (c[2][i] + theta * (c[3][i] + theta1 * c[4][i])))
    }

    /// The dense-output state at `t` into `out`.
    pub fn dense_all(&self, t: f64, out: &mut [f64]) {
        for (i, o) in out.iter_mut().enumerate() {
            *o = self.dense(i, t);
        }
    }
}
