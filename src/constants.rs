//! Physical constants and the few unit conversions built on them, in one place.
//!
//! Values are CODATA 2018, exact in the 2019 SI. Nothing else in the crate writes these numbers.

/// Faraday constant, C/mol.
pub const FARADAY_C_PER_MOL: f64 = 96_485.332_12;
/// Molar gas constant, J/(mol·K).
pub const GAS_J_PER_MOL_K: f64 = 8.314_462_618;
/// Molar volume of water used for osmotic water flow, cm³/mol (clamp-and-volume.md's value;
/// 18.07 at 25 °C in handbook tables, from memory).
pub const WATER_MOLAR_VOLUME_CM3_PER_MOL: f64 = 18.0;
/// Offset between degrees Celsius and kelvin.
pub const ZERO_CELSIUS_K: f64 = 273.15;

/// Absolute temperature in kelvin.
#[inline]
pub fn kelvin(temperature_c: f64) -> f64 {
    temperature_c + ZERO_CELSIUS_K
}

/// RT/F in millivolts: the voltage scale of every Nernst and GHK expression.
#[inline]
pub fn rt_over_f_mv(temperature_c: f64) -> f64 {
    GAS_J_PER_MOL_K * kelvin(temperature_c) / FARADAY_C_PER_MOL * 1e3
}

/// The Nernst slope per tenfold change of concentration, ln(10)·RT/(zF), in mV.
pub fn nernst_slope_mv_per_decade(temperature_c: f64, charge: i32) -> f64 {
    std::f64::consts::LN_10 * rt_over_f_mv(temperature_c) / f64::from(charge)
}

/// The Debye–Hückel limiting-law prefactor's constant part, K^(3/2)·(mol/L)^(−1/2): the
/// parameter `A` of the Davies equation is this times `(ε_r · T)^(−3/2)` (solutions.md; the
/// value follows from e, ε0, k and N_A, as in Robinson & Stokes, Electrolyte Solutions).
pub const DEBYE_HUCKEL_A_FACTOR: f64 = 1.824_83e6;
