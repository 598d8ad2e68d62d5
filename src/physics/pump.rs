//! The electrogenic pump: a voltage-independent current set by two saturable binding steps.

/// Fraction of saturation `c^h/(c^h + K^h)`; a concentration rounded below 0 counts as 0.
pub fn saturation(c_mm: f64, half_mm: f64, hill: f64) -> f64 {
    let c = c_mm.max(0.0);
    if c == 0.0 {
        return 0.0;
    }
    // Written as 1/(1 + (K/c)^h) so that large Hill coefficients cannot overflow c^h.
    1.0 / (1.0 + (half_mm / c).powf(hill))
}

/// Net outward pump current in µA/cm² from the exported species inside and the imported
/// species outside.
pub fn pump_current_ua_per_cm2(
    max_ua_per_cm2: f64,
    exported_inside_mm: f64,
    half_inside_mm: f64,
    hill_inside: f64,
    imported_outside_mm: f64,
    half_outside_mm: f64,
    hill_outside: f64,
) -> f64 {
    max_ua_per_cm2
        * saturation(exported_inside_mm, half_inside_mm, hill_inside)
        * saturation(imported_outside_mm, half_outside_mm, hill_outside)
}
