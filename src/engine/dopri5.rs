//! Dormand–Prince 5(4) with a PI step-size controller and 4th-order dense output.
//!
//! Written here rather than taken from a crate because the run loop must stop exactly on every
//! command edge, restart the first-same-as-last stage there, advance in bounded chunks across
//! frames and report which state component failed; the general-purpose crates integrate a whole
//! interval in one call. An independent crate (ode_solvers' DOP853) checks it in the tests.
//! Coefficients: J. R. Dormand & P. J. Prince, "A family of embedded Runge–Kutta formulae",
//! J. Comput. Appl. Math. 6 (1980) 19–26, table 2 (the 5(4) pair, first same as last); the
//! dense-output coefficients `D*` are those of Hairer, Nørsett & Wanner, Solving Ordinary
//! Differential Equations I, 2nd ed. (1993), II.6, and their DOPRI5 code.
//!
//! Each accepted step also estimates the largest |λ| from its last two stages (Hairer's
//! stiffness test). The estimate keeps the next step inside the stability boundary, so rounding
//! noise is never amplified (a cell at rest stays flat), and counts the steps held there by
//! stability: many in a row mean the cell is stiff, and `Method::Auto` hands over to the
//! Rosenbrock stepper.

use super::stepper::{Adaptive, Attempt, Scheme, System, Trial};

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

/// Dormand–Prince 5(4) on the shared adaptive driver.
pub type Dopri5 = Adaptive<DormandPrince>;

/// The stages, controller memory, dense output and stiffness count of Dormand–Prince 5(4).
/// `k[0]` is unused: the first stage is the driver's f(t, y).
#[derive(Debug, Clone)]
pub struct DormandPrince {
    k: [Vec<f64>; 7],
    y_stage: Vec<f64>,
    y_new: Vec<f64>,
    /// Dense-output coefficients of the last accepted step.
    cont: [Vec<f64>; 5],
    fac_old: f64,
    /// Stiffness detection (Hairer, Nørsett & Wanner 1993, II.10 and their DOPRI5 code):
    /// accepted steps in a row whose h·λ sits on the stability boundary, and recent ones that
    /// did not.
    stiff_count: u32,
    nonstiff_count: u32,
}

impl DormandPrince {
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
}

impl Scheme for DormandPrince {
    const ORDER: i32 = 5;
    const STABLE_H_LAMBDA: Option<f64> = Some(STABLE_H_LAMBDA);

    fn new(dim: usize) -> Self {
        let z = || vec![0.0; dim];
        Self {
            k: [Vec::new(), z(), z(), z(), z(), z(), z()],
            y_stage: z(),
            y_new: z(),
            cont: [z(), z(), z(), z(), z()],
            fac_old: 1e-4,
            stiff_count: 0,
            nonstiff_count: 0,
        }
    }

    fn attempt<S: System>(&mut self, sys: &S, ws: &mut S::Workspace, a: Attempt<'_>) -> Trial {
        let Attempt {
            settings,
            stats,
            t,
            y,
            f0: k1,
            h,
            last_rejected,
            err,
        } = a;
        let n = y.len();
        let [_, k2, k3, k4, k5, k6, k7] = &mut self.k;
        let ys = &mut self.y_stage;
        for i in 0..n {
            ys[i] = y[i] + h * A21 * k1[i];
        }
        sys.derivatives(ws, t + C2 * h, ys, k2);
        for i in 0..n {
            ys[i] = y[i] + h * (A31 * k1[i] + A32 * k2[i]);
        }
        sys.derivatives(ws, t + C3 * h, ys, k3);
        for i in 0..n {
            ys[i] = y[i] + h * (A41 * k1[i] + A42 * k2[i] + A43 * k3[i]);
        }
        sys.derivatives(ws, t + C4 * h, ys, k4);
        for i in 0..n {
            ys[i] = y[i] + h * (A51 * k1[i] + A52 * k2[i] + A53 * k3[i] + A54 * k4[i]);
        }
        sys.derivatives(ws, t + C5 * h, ys, k5);
        for i in 0..n {
            ys[i] = y[i] + h * (A61 * k1[i] + A62 * k2[i] + A63 * k3[i] + A64 * k4[i] + A65 * k5[i]);
        }
        sys.derivatives(ws, t + h, ys, k6);
        let yn = &mut self.y_new;
        for i in 0..n {
            yn[i] = y[i] + h * (A71 * k1[i] + A73 * k3[i] + A74 * k4[i] + A75 * k5[i] + A76 * k6[i]);
        }
        sys.derivatives(ws, t + h, yn, k7);
        stats.evaluations += 6;
        let mut sum = 0.0;
        let mut bad = None;
        for i in 0..n {
            let e = h * (E1 * k1[i] + E3 * k3[i] + E4 * k4[i] + E5 * k5[i] + E6 * k6[i] + E7 * k7[i]);
            let sk = settings.atol[i] + settings.rtol * y[i].abs().max(yn[i].abs());
            err[i] = e / sk;
            sum += err[i] * err[i];
            if bad.is_none() && !(yn[i].is_finite() && k7[i].is_finite()) {
                bad = Some(i);
            }
        }
        // A ratio to a vanishing tolerance can overflow without anything being wrong with
        // the state: that is a very large error, not a non-finite quantity.
        let err = (sum / n as f64).sqrt();
        let err = if err.is_finite() { err } else { f64::MAX };
        if let Some(component) = bad {
            return Trial::NotFinite { component };
        }
        // PI controller (Hairer's dopri5 constants: β = 0.04, safety 0.9, factors 0.2..10).
        const BETA: f64 = 0.04;
        let expo1 = 0.2 - BETA * 0.75;
        let fac11 = err.powf(expo1);
        if err > 1.0 {
            return Trial::Reject {
                h: h / (fac11 / 0.9).min(5.0),
            };
        }
        let mut fac = fac11 / self.fac_old.powf(BETA);
        fac = (fac / 0.9).clamp(0.1, 5.0);
        let mut h_new = h / fac;
        if last_rejected {
            h_new = h_new.min(h);
        }
        self.fac_old = err.max(1e-4);
        // Stages 6 and 7 both sit at t + h, so their difference quotient estimates the
        // largest |λ| along the step (Hairer's stiffness test).
        let (mut num, mut den, mut den_scaled) = (0.0, 0.0, 0.0);
        for i in 0..n {
            let dy = yn[i] - ys[i];
            num += (k7[i] - k6[i]).powi(2);
            den += dy * dy;
            den_scaled += (dy / settings.scale(i, y[i], yn[i])).powi(2);
        }
        let lambda = if den > 0.0 { (num / den).sqrt() } else { 0.0 };
        // Past |hλ| ≈ 3.3 the method is unstable on the negative real axis: rounding noise then
        // grows until the error test notices it, which moves a cell at rest by about the
        // tolerance. So the next step stays inside the boundary, unless the two stages differ
        // by less than rounding, where the quotient means nothing.
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
        Trial::Accept { h_new }
    }

    fn commit(&mut self, _h: f64, y: &mut [f64], f0: &mut Vec<f64>) {
        y.copy_from_slice(&self.y_new);
        // First same as last: the seventh stage is f at the new point.
        std::mem::swap(f0, &mut self.k[6]);
    }

    fn dense(&self, t_old: f64, h_old: f64, t: f64, out: &mut [f64]) {
        let theta = (t - t_old) / h_old;
        let theta1 = 1.0 - theta;
        let c = &self.cont;
        for (i, o) in out.iter_mut().enumerate() {
            *o = c[0][i] + theta * (c[1][i] + theta1 * (c[2][i] + theta * (c[3][i] + theta1 * c[4][i])));
        }
    }
}
