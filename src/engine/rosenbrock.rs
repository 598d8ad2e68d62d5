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
//! The scheme is the four-stage Kaps–Rentrop form with Shampine's parameter set (γ = 1/2):
//! L. F. Shampine, "Implementation of Rosenbrock methods", ACM Trans. Math. Softw. 8 (1982)
//! 93–113. The unit tests below check the order of the stability function, A-stability along
//! the axes and the observed convergence order on a nonlinear problem. The system must be
//! autonomous between calls to [`Adaptive::invalidate`], which the model is: its commands are
//! constant inside a command segment, so no ∂f/∂t term appears.
//!
//! The Jacobian, the iteration matrix `1/(γh) − J` and its LU factors live in storage made once
//! per run: a step allocates nothing.

use nalgebra::{DMatrix, DVectorViewMut};

use super::stepper::{Adaptive, Attempt, Scheme, Settings, Stats, StepFailure, System, Trial};

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

/// The Rosenbrock method on the shared adaptive driver.
pub type Rosenbrock = Adaptive<KapsRentrop>;

/// Jacobian, LU storage, stages and dense-output ends of the Rosenbrock method.
#[derive(Debug, Clone)]
pub struct KapsRentrop {
    n: usize,
    /// ∂f/∂y at the present point, valid when `jac_valid`.
    jac: DMatrix<f64>,
    jac_valid: bool,
    /// `1/(γh) − J`, overwritten by its LU factors (unit lower part below the diagonal), and
    /// the row swapped with each row during the factorization.
    lu: DMatrix<f64>,
    pivots: Vec<usize>,
    g: [Vec<f64>; 4],
    y_stage: Vec<f64>,
    f_stage: Vec<f64>,
    y_new: Vec<f64>,
    f_new: Vec<f64>,
    err_raw: Vec<f64>,
    /// Start of the last accepted step: state and derivative (its end is `y_new`, `f_new`).
    y_old: Vec<f64>,
    f_old: Vec<f64>,
}

/// Solves `LU x = v` in place with the factors and pivots of [`KapsRentrop::factor`].
fn lu_solve(lu: &DMatrix<f64>, pivots: &[usize], v: &mut [f64]) {
    for (i, &p) in pivots.iter().enumerate() {
        if p != i {
            v.swap(i, p);
        }
    }
    let n = v.len();
    let mut b = DVectorViewMut::from_slice(v, n);
    let _ = lu.solve_lower_triangular_with_diag_mut(&mut b, 1.0);
    let _ = lu.solve_upper_triangular_mut(&mut b);
}

impl KapsRentrop {
    /// Forward-difference Jacobian at `(t, y)`, with `f0 = f(t, y)` already known. Increments
    /// follow Hairer & Wanner's RADAU5: `sqrt(u · max(1e-5, |y_j|))`, `u` the unit roundoff.
    fn form_jacobian<S: System>(&mut self, sys: &S, ws: &mut S::Workspace, t: f64, y: &[f64], f0: &[f64]) {
        self.y_stage.copy_from_slice(y);
        for (j, &yj) in y.iter().enumerate() {
            let delta = (f64::EPSILON * yj.abs().max(1e-5)).sqrt();
            self.y_stage[j] = yj + delta;
            // The increment actually represented in floating point.
            let d = self.y_stage[j] - yj;
            sys.derivatives(ws, t, &self.y_stage, &mut self.f_stage);
            for (i, (&fs, &f)) in self.f_stage.iter().zip(f0).enumerate() {
                self.jac[(i, j)] = (fs - f) / d;
            }
            self.y_stage[j] = yj;
        }
    }

    /// LU factorization with partial pivoting of `1/(γh) − J` into the kept storage, step for
    /// step nalgebra's own `LU::new` (so the numbers are the same) without its allocation.
    /// Returns whether the matrix is invertible.
    fn factor(&mut self, h: f64) -> bool {
        let n = self.n;
        for j in 0..n {
            for i in 0..n {
                self.lu[(i, j)] = -self.jac[(i, j)];
            }
        }
        for i in 0..n {
            self.lu[(i, i)] += 1.0 / (GAMMA * h);
        }
        for i in 0..n {
            self.pivots[i] = i;
            let piv = self.lu.view_range(i.., i).icamax() + i;
            let diag = self.lu[(piv, i)];
            if diag == 0.0 {
                continue;
            }
            if piv != i {
                self.pivots[i] = piv;
                self.lu.columns_range_mut(..i).swap_rows(i, piv);
                nalgebra::linalg::gauss_step_swap(&mut self.lu, diag, i, piv);
            } else {
                nalgebra::linalg::gauss_step(&mut self.lu, diag, i);
            }
        }
        (0..n).all(|i| self.lu[(i, i)] != 0.0)
    }

    /// Error of the dense output, in units of the tolerance. The cubic Hermite interpolant
    /// uses the end slopes `h·f`, and along a stiff direction `f` turns the small error `e` of
    /// an end state into `J·e`, amplified by up to `h·‖J‖` — gates at body temperature, or a
    /// membrane that follows slowly changing concentrations over steps of seconds. The
    /// interpolant's error from a slope error is at most `(4/27)·h·|J·e|` (the largest value
    /// of θ(1 − θ)²), so that is held within the tolerance like the step's own error.
    fn dense_error(&self, settings: &Settings, h: f64, y: &[f64]) -> f64 {
        let n = self.n;
        let mut sum = 0.0;
        for (i, &yi) in y.iter().enumerate() {
            let je: f64 = (0..n).map(|j| self.jac[(i, j)] * self.err_raw[j]).sum();
            let r = 4.0 / 27.0 * h * je / settings.scale(i, yi, self.y_new[i]);
            sum += r * r;
        }
        (sum / n as f64).sqrt()
    }
}

impl Scheme for KapsRentrop {
    const ORDER: i32 = 4;
    const STABLE_H_LAMBDA: Option<f64> = None;

    fn new(dim: usize) -> Self {
        let z = || vec![0.0; dim];
        Self {
            n: dim,
            jac: DMatrix::zeros(dim, dim),
            jac_valid: false,
            lu: DMatrix::zeros(dim, dim),
            pivots: vec![0; dim],
            g: [z(), z(), z(), z()],
            y_stage: z(),
            f_stage: z(),
            y_new: z(),
            f_new: z(),
            err_raw: z(),
            y_old: z(),
            f_old: z(),
        }
    }

    fn invalidate(&mut self) {
        self.jac_valid = false;
    }

    fn prepare<S: System>(
        &mut self,
        sys: &S,
        ws: &mut S::Workspace,
        t: f64,
        y: &[f64],
        f0: &[f64],
        stats: &mut Stats,
    ) -> Result<(), StepFailure> {
        if self.jac_valid {
            return Ok(());
        }
        self.form_jacobian(sys, ws, t, y, f0);
        stats.evaluations += self.n as u64;
        stats.jacobians += 1;
        let n = self.n;
        if let Some(c) = (0..n).find(|&j| (0..n).any(|i| !self.jac[(i, j)].is_finite())) {
            return Err(StepFailure::NotFinite { component: c });
        }
        self.jac_valid = true;
        Ok(())
    }

    fn attempt<S: System>(&mut self, sys: &S, ws: &mut S::Workspace, a: Attempt<'_>) -> Trial {
        let Attempt {
            settings,
            stats,
            t,
            y,
            f0,
            h,
            last_rejected,
            err,
        } = a;
        let n = self.n;
        if !self.factor(h) {
            // Only at a step size that makes 1/(γh) an eigenvalue of J; any other will do.
            return Trial::Reject { h: h * 0.5 };
        }
        let (lu, pivots) = (&self.lu, &self.pivots);
        let [g1, g2, g3, g4] = &mut self.g;
        g1.copy_from_slice(f0);
        lu_solve(lu, pivots, g1);
        for i in 0..n {
            self.y_stage[i] = y[i] + A21 * g1[i];
        }
        sys.derivatives(ws, t + h, &self.y_stage, &mut self.f_stage);
        for i in 0..n {
            g2[i] = self.f_stage[i] + C21 * g1[i] / h;
        }
        lu_solve(lu, pivots, g2);
        for i in 0..n {
            self.y_stage[i] = y[i] + A31 * g1[i] + A32 * g2[i];
        }
        sys.derivatives(ws, t + 0.6 * h, &self.y_stage, &mut self.f_stage);
        for i in 0..n {
            g3[i] = self.f_stage[i] + (C31 * g1[i] + C32 * g2[i]) / h;
        }
        lu_solve(lu, pivots, g3);
        for i in 0..n {
            g4[i] = self.f_stage[i] + (C41 * g1[i] + C42 * g2[i] + C43 * g3[i]) / h;
        }
        lu_solve(lu, pivots, g4);
        stats.evaluations += 2;
        let mut sum = 0.0;
        let mut bad = None;
        for i in 0..n {
            self.y_new[i] = y[i] + B1 * g1[i] + B2 * g2[i] + B3 * g3[i] + B4 * g4[i];
            let e = E1 * g1[i] + E2 * g2[i] + E3 * g3[i] + E4 * g4[i];
            self.err_raw[i] = e;
            err[i] = e / settings.scale(i, y[i], self.y_new[i]);
            sum += err[i] * err[i];
            if bad.is_none() && !self.y_new[i].is_finite() {
                bad = Some(i);
            }
        }
        // A ratio to a vanishing tolerance can overflow without anything being wrong with
        // the state: that is a very large error, not a non-finite quantity.
        let e = (sum / n as f64).sqrt();
        let e = if e.is_finite() { e } else { f64::MAX };
        let dense_err = if bad.is_none() {
            self.dense_error(settings, h, y)
        } else {
            f64::MAX
        };
        let dense_err = if dense_err.is_finite() {
            dense_err
        } else {
            f64::MAX
        };
        if bad.is_none() && e <= 1.0 && dense_err <= 1.0 {
            sys.derivatives(ws, t + h, &self.y_new, &mut self.f_new);
            stats.evaluations += 1;
            bad = super::stepper::first_non_finite(&self.f_new);
        }
        if let Some(component) = bad {
            return Trial::NotFinite { component };
        }
        // The step's estimate is O(h⁴) (order 3 against order 4), the dense-output one
        // O(h⁵): exponents 1/4 and 1/5, safety 0.9, factors 0.2..6, and no growth straight
        // after a rejection.
        let fac = (0.9 * e.max(1e-10).powf(-0.25))
            .min(0.9 * dense_err.max(1e-10).powf(-0.2))
            .clamp(0.2, 6.0);
        if e <= 1.0 && dense_err <= 1.0 {
            let h_new = if last_rejected { h * fac.min(1.0) } else { h * fac };
            Trial::Accept { h_new }
        } else {
            Trial::Reject { h: h * fac.min(1.0) }
        }
    }

    fn commit(&mut self, _h: f64, y: &mut [f64], f0: &mut Vec<f64>) {
        self.y_old.copy_from_slice(y);
        self.f_old.copy_from_slice(f0);
        y.copy_from_slice(&self.y_new);
        f0.copy_from_slice(&self.f_new);
        self.jac_valid = false;
    }

    /// The cubic Hermite interpolant of the values and derivatives at both ends.
    fn dense(&self, t_old: f64, h_old: f64, t: f64, out: &mut [f64]) {
        let theta = (t - t_old) / h_old;
        let h = h_old;
        for (i, o) in out.iter_mut().enumerate() {
            let y0 = self.y_old[i];
            let y1 = self.y_new[i];
            let dy = y1 - y0;
            *o = (1.0 - theta) * y0
                + theta * y1
                + theta
                    * (theta - 1.0)
                    * ((1.0 - 2.0 * theta) * dy
                        + (theta - 1.0) * h * self.f_old[i]
                        + theta * h * self.f_new[i]);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    struct Linear(f64);
    impl System for Linear {
        type Workspace = ();
        fn derivatives(&self, _ws: &mut (), _t: f64, y: &[f64], dy: &mut [f64]) {
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
        r.step(&Linear(z), &mut (), &mut t, &mut y, 1.0).unwrap();
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
        type Workspace = ();
        fn derivatives(&self, _ws: &mut (), _t: f64, y: &[f64], dy: &mut [f64]) {
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
            r.step(&Riccati, &mut (), &mut t, &mut y, f64::from(k) * h)
                .unwrap();
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
            r.step(&Riccati, &mut (), &mut t, &mut y, 1.0).unwrap();
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
        type Workspace = ();
        fn derivatives(&self, _ws: &mut (), _t: f64, y: &[f64], dy: &mut [f64]) {
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
            r.step(&SlowAndFast, &mut (), &mut t, &mut y, 3000.0).unwrap();
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
