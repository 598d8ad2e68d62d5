//! Look of the window: the colour of each species (Okabe–Ito, shared with the SVG figures
//! through `crate::palette`), trace colours that read on light and dark backgrounds, text sizes,
//! and the large-text scale for projectors.

use egui::{Color32, FontFamily, FontId, TextStyle};

use crate::ui::state::prefs::{Prefs, ThemeChoice};

/// Scale of the whole interface with "large text" on.
pub const LARGE_TEXT_ZOOM: f32 = 1.5;

fn rgb((r, g, b): (u8, u8, u8)) -> Color32 {
    Color32::from_rgb(r, g, b)
}

/// The colour of the species at `index`, the same in every view.
pub fn species_color(index: usize) -> Color32 {
    rgb(crate::palette::species_rgb(index))
}

/// The membrane potential trace: black on light, near-white on dark (palette black otherwise).
pub fn potential_color(dark: bool) -> Color32 {
    if dark {
        Color32::from_gray(235)
    } else {
        rgb(crate::palette::potential_rgb())
    }
}

/// Neutral colour for the GHK potential, the net current and injected current.
pub fn neutral_color(dark: bool) -> Color32 {
    if dark {
        Color32::from_gray(170)
    } else {
        Color32::from_gray(90)
    }
}

/// Fill of a protocol band in `base` colour: faint enough that traces stay readable.
pub fn band_fill(base: Color32, dark: bool) -> Color32 {
    let alpha = if dark { 40 } else { 28 };
    Color32::from_rgba_unmultiplied(base.r(), base.g(), base.b(), alpha)
}

/// Fonts and text sizes. egui's proportional font lacks arrows and play/pause shapes; the
/// bundled monospace font has them, so it is added as a fallback rather than shipping a font.
pub fn install_text_styles(ctx: &egui::Context) {
    let mut fonts = egui::FontDefinitions::default();
    if let Some(family) = fonts.families.get_mut(&FontFamily::Proportional) {
        family.push("Hack".to_owned());
    }
    ctx.set_fonts(fonts);
    ctx.all_styles_mut(|style| {
        style.text_styles = [
            (TextStyle::Small, FontId::new(11.0, FontFamily::Proportional)),
            (TextStyle::Body, FontId::new(14.0, FontFamily::Proportional)),
            (TextStyle::Button, FontId::new(14.0, FontFamily::Proportional)),
            (TextStyle::Heading, FontId::new(18.0, FontFamily::Proportional)),
            (TextStyle::Monospace, FontId::new(13.0, FontFamily::Monospace)),
        ]
        .into();
        style.spacing.item_spacing = egui::vec2(6.0, 4.0);
        style.spacing.interact_size.y = 22.0;
    });
}

/// Applies the theme and text-size preferences (cheap when nothing changed).
pub fn apply(ctx: &egui::Context, prefs: &Prefs) {
    let zoom = if prefs.large_text { LARGE_TEXT_ZOOM } else { 1.0 };
    apply_with_zoom(ctx, prefs, zoom);
}

/// Applies the theme preference and scales the interface by `zoom` (presentation chooses its
/// own scale).
pub fn apply_with_zoom(ctx: &egui::Context, prefs: &Prefs, zoom: f32) {
    let theme = match prefs.theme {
        ThemeChoice::System => egui::ThemePreference::System,
        ThemeChoice::Light => egui::ThemePreference::Light,
        ThemeChoice::Dark => egui::ThemePreference::Dark,
    };
    if ctx.options(|o| o.theme_preference) != theme {
        ctx.set_theme(theme);
    }
    if (ctx.zoom_factor() - zoom).abs() > f32::EPSILON {
        ctx.set_zoom_factor(zoom);
    }
}
