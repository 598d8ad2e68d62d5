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
