//! The colour-blind-safe palette (Okabe & Ito, "Color Universal Design", 2008), shared by the
//! window and the SVG figures so that a species has one colour everywhere.

/// Okabe–Ito colours as RGB, black first.
pub const OKABE_ITO: [(u8, u8, u8); 8] = [
    (0, 0, 0),
    (230, 159, 0),
    (86, 180, 233),
    (0, 158, 115),
    (240, 228, 66),
    (0, 114, 178),
    (213, 94, 0),
    (204, 121, 167),
];

/// Colour of the species at `index`: the palette without black (kept for V), cycling.
/// Yellow comes last because it is hard to read on white.
pub fn species_rgb(index: usize) -> (u8, u8, u8) {
    const ORDER: [usize; 7] = [5, 6, 3, 7, 1, 2, 4];
    OKABE_ITO[ORDER[index % ORDER.len()]]
}

/// Colour of the membrane potential trace.
pub fn potential_rgb() -> (u8, u8, u8) {
    OKABE_ITO[0]
}
