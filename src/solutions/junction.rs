//! Liquid junction potentials by the Henderson equation (any valences, with its removable
//! singularity), and the reference electrode's term (solutions.md).

use super::catalog::Catalog;
use super::recipe::Mixture;
use crate::constants::rt_over_f_mv;
use crate::scenario::Reference;

/// One ion across a junction: its charge, conductivity and concentration (or activity) on
/// each side.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Term {
    pub charge: i32,
    pub conductivity: f64,
    pub alpha_mm: f64,
    pub beta_mm: f64,
}

/// The potential of side β relative to side α, mV, at `theta_c` °C:
/// `(RT/F) · S/D · ln(Gα/Gβ)` with `S = Σ sgn(z) λ Δc`, `D = Σ |z| λ Δc = Gβ − Gα`,
/// `G = Σ |z| λ c`. Neutral particles do not enter. Where D vanishes the factor's limit is
/// `−S/Gβ`; the form `−S/Gα · ln(1 + x)/x` with `x = D/Gα` is used throughout, so values
/// near the singularity are as accurate as those far from it. Two empty sides give 0.
pub fn henderson_mv(terms: &[Term], theta_c: f64) -> f64 {
    let (mut s, mut g_alpha, mut g_beta) = (0.0, 0.0, 0.0);
    for t in terms {
        let delta = t.beta_mm - t.alpha_mm;
        let l = t.conductivity;
        s += f64::from(t.charge.signum()) * l * delta;
        g_alpha += f64::from(t.charge.abs()) * l * t.alpha_mm;
        g_beta += f64::from(t.charge.abs()) * l * t.beta_mm;
    }
    if s == 0.0 {
        return 0.0;
    }
    if g_alpha <= 0.0 || g_beta <= 0.0 {
        // A side without any ion conducts nothing: no finite junction potential exists.
        return f64::NAN;
    }
    let x = (g_beta - g_alpha) / g_alpha;
    // ln(1 + x)/x, with its series where the division would lose digits.
    let log_ratio = if x.abs() < 1e-6 {
        1.0 - x / 2.0 + x * x / 3.0
    } else {
        x.ln_1p() / x
    };
    rt_over_f_mv(theta_c) * (-s / g_alpha) * log_ratio
}

/// The junction potential of `beta` relative to `alpha`, mV, with each side's activities when
/// `activities` is on.
pub fn junction_mv(alpha: &Mixture, beta: &Mixture, activities: bool, theta_c: f64) -> f64 {
    let a_eff = alpha.effective_mm(activities, theta_c);
    let b_eff = beta.effective_mm(activities, theta_c);
    let mut terms: Vec<(usize, Term)> = Vec::new();
    for (p, c) in alpha.particles.iter().zip(&a_eff) {
        terms.push((
            p.ion,
            Term {
                charge: p.charge,
                conductivity: p.conductivity,
                alpha_mm: *c,
                beta_mm: 0.0,
            },
        ));
    }
    for (p, c) in beta.particles.iter().zip(&b_eff) {
        match terms.iter_mut().find(|(ion, _)| *ion == p.ion) {
            Some((_, t)) => t.beta_mm = *c,
            None => terms.push((
                p.ion,
                Term {
                    charge: p.charge,
                    conductivity: p.conductivity,
                    alpha_mm: 0.0,
                    beta_mm: *c,
                },
            )),
        }
    }
    let terms: Vec<Term> = terms.into_iter().map(|(_, t)| t).collect();
    henderson_mv(&terms, theta_c)
}

/// The reference electrode's contribution to the recorded potential with `bath` in the dish,
/// mV. A KCl bridge adds its own junction with the bath (the bath relative to the bridge). A
/// bare chlorided silver wire adds `(RT/F) ln(a_Cl,bath / a_Cl,start)`, 0 in the starting
/// bath `start` (where the amplifier was zeroed): the wire's own potential,
/// `E0 − (RT/F) ln a_Cl`, rises as the bath's Cl- falls, and with the wire held at ground
/// the bath, and so every potential measured against it, falls by as much.
pub fn reference_mv(
    reference: &Reference,
    catalog: &Catalog,
    bath: &Mixture,
    start: &Mixture,
    activities: bool,
    theta_c: f64,
) -> f64 {
    match reference {
        Reference::Bridge { kcl_mm } => {
            let bridge = super::recipe::mix(
                catalog,
                &crate::scenario::Solution {
                    name: "bridge".into(),
                    parts: vec![("KCl".into(), *kcl_mm)],
                    ph: None,
                    titrant: None,
                },
            );
            junction_mv(&bridge, bath, activities, theta_c)
        }
        Reference::SilverChloride => {
            let now = bath.effective_of("Cl-", activities, theta_c);
            let then = start.effective_of("Cl-", activities, theta_c);
            if now == then {
                0.0
            } else {
                rt_over_f_mv(theta_c) * (now / then).ln()
            }
        }
    }
}
