//! A linearly implicit (Rosenbrock) method of order 4 with an embedded order-3 error estimate,
//! for stiff cells, with cubic Hermite dense output.
//!
//! Why: Hodgkin–Huxley gates at body temperature relax in a few microseconds (φ ≈ 29 at 37 °C
//! from a 6.3 °C reference), while a protocol runs for seconds. An explicit method is then held
//! to steps of some tens of microseconds by stability alone, even at rest; this one takes steps
//! as long as accuracy allows, at the price of one Jacobian and one LU factorization per step.
//! The state is small (a few to a few dozen components), so a dense Jacobian by forward
//! differences and a dense LU cost little.
//!
//! The scheme is the four-stage Kaps–Rentrop form with Shampine's parameter set (γ = 1/2),
//! Shampine 1982, ACM Trans. Math. Softw. 8:93 (coefficients from memory; the unit tests
//! below check the order of the stability function, A-stability along the axes and the
//! observed convergence order on a nonlinear problem). The system must be autonomous between
//! calls to [`Rosenbrock::invalidate`], which the model is: its commands are constant inside a
//! command segment, so no ∂f/∂t term appears.

use nalgebra::{DMatrix, DVectorViewMut};

use super::stepper::{
    Settings, Stats, StepFailure, System, first_non_finite, initial_step, land_on_end, too_small, underflow,
};

const GAMMA: f64 = 0.5;
const A21: f64 = 2.0;
const A31: f64 = 48.0 / 25.0;
const A32: f64 = 6.0 / 25.0;
const C21: f64 = -8.0;
const C31: f64 = 372.0 / 25.0;
const C32: f64 = 12.0 / 5.0;
const C41: f64 = -112.0 / 125.0;
const C42: f64 = -54.0 / 125.0;
const C43: f64 = -2.0 / 5.0;
const B1: f64 = 19.0 / 9.0;
const B2: f64 = 1.0 / 2.0;
const B3: f64 = 25.0 / 108.0;
const B4: f64 = 125.0 / 108.0;
const E1: f64 = 17.0 / 54.0;
const E2: f64 = 7.0 / 36.0;
const E3: f64 = 0.0;
const E4: f64 = 125.0 / 108.0;

/// The stepper's working state between steps.
#[derive(Debug, Clone)]
pub struct Rosenbrock {
    pub settings: Settings,
    pub stats: Stats,
    /// Proposed next step size, ms (0 until the first step chooses one).
    pub h: f64,
    n: usize,
    /// f at the present point, valid when `f0_valid`.
    f0: Vec<f64>,
    f0_valid: bool,
    /// ∂f/∂y at the present point, valid when `jac_valid`.
    jac: DMatrix<f64>,
    jac_valid: bool,
    g: [Vec<f64>; 4],
    y_stage: Vec<f64>,
    f_stage: Vec<f64>,
    y_new: Vec<f64>,
    f_new: Vec<f64>,
    err: Vec<f64>,
    err_raw: Vec<f64>,
    /// Start of the last accepted step: state, derivative, time, size (for dense output).
    y_old: Vec<f64>,
    f_old: Vec<f64>,
    t_old: f64,
    h_old: f64,
}

impl Rosenbrock {
    pub fn new(dim: usize, settings: Settings) -> Self {
        let z = || vec![0.0; dim];
        Self {
            settings,
            stats: Stats::default(),
            h: 0.0,
            n: dim,
            f0: z(),
            f0_valid: false,
            jac: DMatrix::zeros(dim, dim),
            jac_valid: false,
            g: [z(), z(), z(), z()],
            y_stage: z(),
            f_stage: z(),
            y_new: z(),
            f_new: z(),
            err: z(),
            err_raw: z(),
            y_old: z(),
            f_old: z(),
            t_old: 0.0,
            h_old: 0.0,
        }
    }

    /// Forget the derivative and Jacobian at the present point: the system changed.
    pub fn invalidate(&mut self) {
        self.f0_valid = false;
        self.jac_valid = false;
    }

    /// Forward-difference Jacobian at `(t, y)`, with `f0 = f(t, y)` already known. Increments
    /// follow Hairer & Wanner's RADAU5: `sqrt(u · max(1e-5, |y_j|))`, `u` the unit roundoff.
    fn form_jacobian(&mut self, sys: &mut impl System, t: f64, y: &[f64]) {
        self.y_stage.copy_from_slice(y);
        for (j, &yj) in y.iter().enumerate() {
            let delta = (f64::EPSILON * yj.abs().max(1e-5)).sqrt();
            self.y_stage[j] = yj + delta;
            // The increment actually represented in floating point.
            let d = self.y_stage[j] - yj;
            sys.derivatives(t, &self.y_stage, &mut self.f_stage);
            for i in 0..self.n {
                self.jac[(i, j)] = (self.f_stage[i] - self.f0[i]) / d;
            }
            self.y_stage[j] = yj;
        }
        self.stats.evaluations += self.n as u64;
        self.stats.jacobians += 1;
    }

    /// Error of the dense output, in units of the tolerance. The cubic Hermite interpolant
    /// uses the end slopes `h·f`, and along a stiff direction `f` turns the small error `e` of
    /// an end state into `J·e`, amplified by up to `h·‖J‖` — gates at body temperature, or a
    /// membrane that follows slowly changing concentrations over steps of seconds. The
    /// interpolant's error from a slope error is at most `(4/27)·h·|J·e|` (the largest value
    /// of θ(1 − θ)²), so that is held within the tolerance like the step's own error.
    fn dense_error(&self, h: f64, y: &[f64]) -> f64 {
        let n = self.n;
        let mut sum = 0.0;
        for (i, &yi) in y.iter().enumerate() {
            let je: f64 = (0..n).map(|j| self.jac[(i, j)] * self.err_raw[j]).sum();
            let r = 4.0 / 27.0 * h * je / self.settings.scale(i, yi, self.y_new[i]);
            sum += r * r;
        }
        (sum / n as f64).sqrt()
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
        let n = self.n;
        if !self.f0_valid {
            sys.derivatives(*t, y, &mut self.f0);
            self.stats.evaluations += 1;
            if let Some(c) = first_non_finite(&self.f0) {
                return Err(StepFailure::NotFinite { component: c });
            }
            self.f0_valid = true;
            self.jac_valid = false;
        }
        if !self.jac_valid {
            self.form_jacobian(sys, *t, y);
            if let Some(c) = (0..n).find(|&j| (0..n).any(|i| !self.jac[(i, j)].is_finite())) {
                return Err(StepFailure::NotFinite { component: c });
            }
            self.jac_valid = true;
        }
        let span = t_end - *t;
        let h_limit = span.min(self.settings.h_max);
        if self.h <= 0.0 {
            self.h = initial_step(
                sys,
                &self.settings,
                4,
                None,
                *t,
                y,
                &self.f0,
                &mut self.y_stage,
                &mut self.f_stage,
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
            let mut w = DMatrix::from_fn(n, n, |i, j| -self.jac[(i, j)]);
            for i in 0..n {
                w[(i, i)] += 1.0 / (GAMMA * h);
            }
            let lu = w.lu();
            if !lu.is_invertible() {
                // Only at a step size that makes 1/(γh) an eigenvalue of J; any other will do.
                self.stats.rejected += 1;
                h *= 0.5;
                last_rejected = true;
                continue;
            }
            let solve = |v: &mut [f64]| {
                lu.solve_mut(&mut DVectorViewMut::from_slice(v, n));
            };
            let [g1, g2, g3, g4] = &mut self.g;
            g1.copy_from_slice(&self.f0);
            solve(g1);
            for i in 0..n {
                self.y_stage[i] = y[i] + A21 * g1[i];
            }
            sys.derivatives(*t + h, &self.y_stage, &mut self.f_stage);
            for i in 0..n {
                g2[i] = self.f_stage[i] + C21 * g1[i] / h;
            }
            solve(g2);
            for i in 0..n {
                self.y_stage[i] = y[i] + A31 * g1[i] + A32 * g2[i];
            }
            sys.derivatives(*t + 0.6 * h, &self.y_stage, &mut self.f_stage);
            for i in 0..n {
                g3[i] = self.f_stage[i] + (C31 * g1[i] + C32 * g2[i]) / h;
            }
            solve(g3);
            for i in 0..n {
                g4[i] = self.f_stage[i] + (C41 * g1[i] + C42 * g2[i] + C43 * g3[i]) / h;
            }
            solve(g4);
            self.stats.evaluations += 2;
            let mut sum = 0.0;
            let mut bad = None;
            for i in 0..n {
                self.y_new[i] = y[i] + B1 * g1[i] + B2 * g2[i] + B3 * g3[i] + B4 * g4[i];
                let e = E1 * g1[i] + E2 * g2[i] + E3 * g3[i] + E4 * g4[i];
                self.err_raw[i] = e;
                self.err[i] = e / self.settings.scale(i, y[i], self.y_new[i]);
                sum += self.err[i] * self.err[i];
                if bad.is_none() && !self.y_new[i].is_finite() {
                    bad = Some(i);
                }
            }
            // A ratio to a vanishing tolerance can overflow without anything being wrong with
            // the state: that is a very large error, not a non-finite quantity.
            let err = (sum / n as f64).sqrt();
            let err = if err.is_finite() { err } else { f64::MAX };
            let dense_err = if bad.is_none() {
                self.dense_error(h, y)
            } else {
                f64::MAX
            };
            let dense_err = if dense_err.is_finite() {
                dense_err
            } else {
                f64::MAX
            };
            if bad.is_none() && err <= 1.0 && dense_err <= 1.0 {
                sys.derivatives(*t + h, &self.y_new, &mut self.f_new);
                self.stats.evaluations += 1;
                bad = first_non_finite(&self.f_new);
            }
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
            // The step's estimate is O(h⁴) (order 3 against order 4), the dense-output one
            // O(h⁵): exponents 1/4 and 1/5, safety 0.9, factors 0.2..6, and no growth straight
            // after a rejection.
            let fac = (0.9 * err.max(1e-10).powf(-0.25))
                .min(0.9 * dense_err.max(1e-10).powf(-0.2))
                .clamp(0.2, 6.0);
            if err <= 1.0 && dense_err <= 1.0 {
                self.stats.accepted += 1;
                self.y_old.copy_from_slice(y);
                self.f_old.copy_from_slice(&self.f0);
                self.t_old = *t;
                self.h_old = h;
                y.copy_from_slice(&self.y_new);
                std::mem::swap(&mut self.f0, &mut self.f_new);
                self.jac_valid = false;
                *t = if h == span { t_end } else { *t + h };
                let h_new = if last_rejected { h * fac.min(1.0) } else { h * fac };
                self.h = h_new.min(self.settings.h_max);
                return Ok(());
            }
            self.stats.rejected += 1;
            h *= fac.min(1.0);
            last_rejected = true;
        }
    }

    /// The dense-output state at `t` inside the last accepted step: the cubic Hermite
    /// interpolant of the values and derivatives at both ends.
    pub fn dense_all(&self, t: f64, out: &mut [f64]) {
        let theta = (t - self.t_old) / self.h_old;
        let h = self.h_old;
        // Start of the step: y_old, f_old; end: y_new (kept after acceptance), whose
        // derivative is the present f0.
        for (i, o) in out.iter_mut().enumerate() {
            let y0 = self.y_old[i];
            let y1 = self.y_new[i];
            let dy = y1 - y0;
            *o = (1.0 - theta) * y0
                + theta * y1
                + theta
                    * (theta - 1.0)
                    * ((1.0 - 2.0 * theta) * dy + (theta - 1.0) * h * self.f_old[i] + theta * h * self.f0[i]);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    struct Linear(f64);
    impl System for Linear {
        fn derivatives(&mut self, _t: f64, y: &[f64], dy: &mut [f64]) {
            dy[0] = self.0 * y[0];
        }
    }

    /// One step of size 1 on y' = z·y from y = 1 gives the stability function R(z).
    fn stability(z: f64) -> f64 {
        let settings = Settings {
            rtol: 1e300,
            atol: vec![1e300],
            h_max: 1.0,
        };
        let mut r = Rosenbrock::new(1, settings);
        r.h = 1.0;
        let (mut t, mut y) = (0.0, [1.0]);
        r.step(&mut Linear(z), &mut t, &mut y, 1.0).unwrap();
        y[0]
    }

    #[test]
    fn stability_function_matches_the_exponential_to_fourth_order() {
        // An order-4 method has R(z) − e^z = O(z⁵) (Hairer & Wanner 1996, IV.7; common
        // practice): halving a small z divides the difference by about 32.
        let d = |z: f64| (stability(z) - z.exp()).abs();
        let ratio = d(-0.02) / d(-0.01);
        assert!((ratio - 32.0).abs() < 3.0, "ratio {ratio}");
    }

    #[test]
    fn stable_for_every_decaying_real_mode() {
        // A-stability on the negative real axis: |R(z)| ≤ 1 for every z ≤ 0, including very
        // stiff modes (Hairer & Wanner 1996, IV.3; common practice).
        for k in 0..60 {
            let z = -(10f64.powf(-3.0 + 0.15 * f64::from(k)));
            let r = stability(z);
            assert!(r.abs() <= 1.0, "R({z}) = {r}");
        }
    }

    /// y' = 1 − y², y(0) = 0, whose solution is tanh t.
    struct Riccati;
    impl System for Riccati {
        fn derivatives(&mut self, _t: f64, y: &[f64], dy: &mut [f64]) {
            dy[0] = 1.0 - y[0] * y[0];
        }
    }

    fn fixed_steps(steps: u32) -> f64 {
        let settings = Settings {
            rtol: 1e300,
            atol: vec![1e300],
            h_max: f64::INFINITY,
        };
        let mut r = Rosenbrock::new(1, settings);
        let h = 2.0 / f64::from(steps);
        let (mut t, mut y) = (0.0, [0.0]);
        for k in 1..=steps {
            r.h = h;
            r.step(&mut Riccati, &mut t, &mut y, f64::from(k) * h).unwrap();
        }
        y[0]
    }

    #[test]
    fn converges_with_fourth_order_on_a_nonlinear_problem() {
        // y' = 1 − y², y(0) = 0 has the solution tanh t (common practice). Halving the step
        // of an order-4 method divides the global error by about 2⁴ = 16.
        let e = |n| (fixed_steps(n) - 2f64.tanh()).abs();
        let order = (e(40) / e(80)).log2();
        assert!((3.7..4.3).contains(&order), "observed order {order}");
    }

    #[test]
    fn dense_output_is_hermite_between_the_ends() {
        // The interpolant matches both ends of the step and stays within the order-4 error of
        // tanh inside it (common practice for cubic Hermite: O(h⁴)).
        let settings = Settings {
            rtol: 1e-10,
            atol: vec![1e-12],
            h_max: 0.05,
        };
        let mut r = Rosenbrock::new(1, settings);
        let (mut t, mut y) = (0.0, [0.0]);
        let mut out = [0.0];
        while t < 1.0 {
            let t0 = t;
            r.step(&mut Riccati, &mut t, &mut y, 1.0).unwrap();
            r.dense_all(t, &mut out);
            assert!((out[0] - y[0]).abs() < 1e-15);
            r.dense_all(0.5 * (t0 + t), &mut out);
            assert!((out[0] - (0.5 * (t0 + t)).tanh()).abs() < 1e-8);
        }
    }

    /// A slow mode x' = −εx² and a fast one that follows x³, y' = −K(y − x³).
    struct SlowAndFast;
    const EPS: f64 = 1e-3;
    const K: f64 = 1e3;
    impl System for SlowAndFast {
        fn derivatives(&mut self, _t: f64, y: &[f64], dy: &mut [f64]) {
            dy[0] = -EPS * y[0] * y[0];
            dy[1] = -K * (y[1] - y[0] * y[0] * y[0]);
        }
    }

    #[test]
    fn dense_output_stays_accurate_on_long_stiff_steps() {
        // From x(0) = y(0) = 1: x = 1/(1 + εt), and after the fast transient y follows its
        // quasi-steady value x³ + 3εx⁴/K (first order in 1/K; singular perturbation, common
        // practice). Steps grow to hundreds of times 1/K; the cubic Hermite interpolant, whose
        // end slopes amplify the fast component's error by h·K, must still hold about the
        // tolerance (without the dense-output control it is off by 2e-3).
        let settings = Settings {
            rtol: 1e-6,
            atol: vec![1e-9, 1e-9],
            h_max: f64::INFINITY,
        };
        let mut r = Rosenbrock::new(2, settings);
        let (mut t, mut y) = (0.0, [1.0, 1.0]);
        let quasi_steady = |t: f64| {
            let x = 1.0 / (1.0 + EPS * t);
            x.powi(3) + 3.0 * EPS * x.powi(4) / K
        };
        let (mut worst, mut longest) = (0.0f64, 0.0f64);
        let mut out = [0.0; 2];
        while t < 3000.0 {
            let t0 = t;
            r.step(&mut SlowAndFast, &mut t, &mut y, 3000.0).unwrap();
            longest = longest.max(t - t0);
            if t0 < 0.1 {
                continue;
            }
            for k in 1..10 {
                let tk = t0 + (t - t0) * f64::from(k) / 10.0;
                r.dense_all(tk, &mut out);
                worst = worst.max((out[1] - quasi_steady(tk)).abs());
            }
        }
        assert!(longest * K > 100.0, "steps stayed short ({longest})");
        assert!(worst < 2e-5, "dense error {worst}");
    }
}
