//! Outside references written out in the tests' own code, never the crate's: the CODATA 2018
//! constants and the published equations of model.md, so that a check compares the program
//! against them rather than against itself.

/// Molar gas constant R = N_A·k, J/(mol·K): CODATA 2018, exact in the 2019 SI (the product of
/// the exact N_A = 6.022 140 76e23 /mol and k = 1.380 649e-23 J/K).
pub const R_J_PER_MOL_K: f64 = 8.314_462_618_153_24;
/// Faraday constant F = N_A·e, C/mol: CODATA 2018, exact (e = 1.602 176 634e-19 C).
pub const F_C_PER_MOL: f64 = 96_485.332_123_310_02;
/// 0 °C in kelvin (the SI definition of the Celsius scale).
pub const ZERO_CELSIUS_K: f64 = 273.15;

/// RT/F in mV at `t_c` °C.
pub fn rt_over_f_mv(t_c: f64) -> f64 {
    1000.0 * R_J_PER_MOL_K * (t_c + ZERO_CELSIUS_K) / F_C_PER_MOL
}

/// The Nernst potential E = (RT/zF) ln(c_out/c_in), mV (Nernst 1889).
pub fn nernst_mv(charge: i32, inside_mm: f64, outside_mm: f64, t_c: f64) -> f64 {
    rt_over_f_mv(t_c) / f64::from(charge) * (outside_mm / inside_mm).ln()
}

/// The GHK current density (Goldman 1943; Hodgkin & Katz 1949) in the form of model.md:
/// `I = P z F (c_in − c_out e^(−u)) · u/(1 − e^(−u))`, `u = zFV/RT`, outward positive.
/// With P in cm/s and c in mM (1e-6 mol/cm³) it is in µA/cm² (1e-6 A/cm²), so the two factors
/// of 1e-6 cancel. `u/(1 − e^(−u))` is written with `expm1` as model.md asks, and is 1 at u = 0.
///
/// Returns the current and the size of its larger unidirectional part,
/// `|P z F| · max(c_in, c_out e^(−u)) · |u/(1 − e^(−u))|`, the scale against which rounding in
/// the difference is judged.
pub fn ghk_current_ua_per_cm2(
    p_cm_per_s: f64,
    charge: i32,
    inside_mm: f64,
    outside_mm: f64,
    v_mv: f64,
    t_c: f64,
) -> (f64, f64) {
    let z = f64::from(charge);
    let u = z * v_mv / rt_over_f_mv(t_c);
    let g = if u == 0.0 { 1.0 } else { u / -(-u).exp_m1() };
    let (efflux, influx) = (inside_mm, outside_mm * (-u).exp());
    let pzf = p_cm_per_s * z * F_C_PER_MOL;
    (pzf * (efflux - influx) * g, (pzf * efflux.max(influx) * g).abs())
}

/// ln(10)·RT/(zF), mV per tenfold change of concentration (the Nernst slope).
pub fn nernst_slope_mv_per_decade(charge: i32, t_c: f64) -> f64 {
    std::f64::consts::LN_10 * rt_over_f_mv(t_c) / f64::from(charge)
}

/// One permeant species for the references below: charge, inside and outside mM, P in cm/s.
#[derive(Debug, Clone, Copy)]
pub struct Ion {
    pub charge: i32,
    pub inside_mm: f64,
    pub outside_mm: f64,
    pub p_cm_per_s: f64,
}

/// The GHK voltage equation for monovalent ions (Goldman 1943; Hodgkin & Katz 1949):
/// `V = (RT/F) ln((Σ_cations P c_out + Σ_anions P c_in) / (Σ_cations P c_in + Σ_anions P c_out))`.
pub fn ghk_voltage_mv(ions: &[Ion], t_c: f64) -> f64 {
    let (mut num, mut den) = (0.0, 0.0);
    for i in ions {
        match i.charge {
            1 => {
                num += i.p_cm_per_s * i.outside_mm;
                den += i.p_cm_per_s * i.inside_mm;
            }
            -1 => {
                num += i.p_cm_per_s * i.inside_mm;
                den += i.p_cm_per_s * i.outside_mm;
            }
            z => panic!("the closed form holds for monovalent ions only, not charge {z}"),
        }
    }
    rt_over_f_mv(t_c) * (num / den).ln()
}

/// The potential where the GHK currents of `ions` sum to zero, for any charges.
pub fn zero_current_mv(ions: &[Ion], t_c: f64) -> f64 {
    potential_carrying_mv(ions, t_c, 0.0)
}

/// The potential at which the GHK currents of `ions` sum to `outward_ua_per_cm2` (a steady
/// injected current, model.md's membrane equation at dV/dt = 0), by plain bisection of
/// [`ghk_current_ua_per_cm2`] between −1000 and +1000 mV (each current rises with V): slow and
/// simple, and sharing no code with the program's root finder.
pub fn potential_carrying_mv(ions: &[Ion], t_c: f64, outward_ua_per_cm2: f64) -> f64 {
    let excess = |v: f64| -> f64 {
        ions.iter()
            .map(|i| ghk_current_ua_per_cm2(i.p_cm_per_s, i.charge, i.inside_mm, i.outside_mm, v, t_c).0)
            .sum::<f64>()
            - outward_ua_per_cm2
    };
    let (mut lo, mut hi) = (-1000.0, 1000.0);
    assert!(
        excess(lo) < 0.0 && excess(hi) > 0.0,
        "no such potential within ±1000 mV"
    );
    // 2000 mV halved 60 times is below 2e-15 mV: the f64 spacing near any potential here.
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if excess(mid) < 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// The slope conductance `dΣI/dV` of `ions` at `v_mv`, mS/cm² (µA/cm² per mV), by a central
/// difference of [`ghk_current_ua_per_cm2`] over ±1 µV.
pub fn slope_conductance_ms_per_cm2(ions: &[Ion], t_c: f64, v_mv: f64) -> f64 {
    let net = |v: f64| -> f64 {
        ions.iter()
            .map(|i| ghk_current_ua_per_cm2(i.p_cm_per_s, i.charge, i.inside_mm, i.outside_mm, v, t_c).0)
            .sum()
    };
    let h = 1e-3;
    (net(v_mv + h) - net(v_mv - h)) / (2.0 * h)
}

/// The fraction of a channel an agent blocks at dose `d` (the Hill equation, Hill 1910, as
/// model.md writes it): `b = max_block · dⁿ/(dⁿ + IC50ⁿ)`.
pub fn fraction_blocked(max_block: f64, ic50_um: f64, hill: f64, dose_um: f64) -> f64 {
    max_block * dose_um.powf(hill) / (dose_um.powf(hill) + ic50_um.powf(hill))
}
