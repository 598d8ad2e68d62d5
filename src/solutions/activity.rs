//! Activity coefficients by the Davies equation, with its parameter A following the
//! temperature through the permittivity of water (solutions.md).

use crate::constants::{DEBYE_HUCKEL_A_FACTOR, kelvin};

/// Relative permittivity of water at `theta_c` °C: Malmberg & Maryott (1956), J. Res. NBS 56,
/// their fit over 0–100 °C.
pub fn water_permittivity(theta_c: f64) -> f64 {
    87.740 - 0.40008 * theta_c + 9.398e-4 * theta_c.powi(2) - 1.410e-6 * theta_c.powi(3)
}

/// The Davies (and Debye–Hückel) parameter A at `theta_c` °C, (mol/L)^(−1/2), for log10.
pub fn davies_a(theta_c: f64) -> f64 {
    DEBYE_HUCKEL_A_FACTOR * (water_permittivity(theta_c) * kelvin(theta_c)).powf(-1.5)
}

/// The activity coefficient of an ion of charge `charge` in a solution of ionic strength
/// `ionic_strength_mm` (mM), at `theta_c` °C: `log10 γ = −A z² (√I/(1 + √I) − 0.3 I)`, I in
/// mol/L. A neutral particle has γ = 1.
pub fn davies_gamma(charge: i32, ionic_strength_mm: f64, theta_c: f64) -> f64 {
    let i = (ionic_strength_mm / 1000.0).max(0.0);
    let root = i.sqrt();
    let z2 = f64::from(charge * charge);
    let log10 = -davies_a(theta_c) * z2 * (root / (1.0 + root) - 0.3 * i);
    10f64.powf(log10)
}
