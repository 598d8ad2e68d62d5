//! The window: a live membrane workbench over the core. Everything here is a thin front; the
//! physics, the engine and the analyses live in the core modules and never import egui.
//!
//! Layout of this module: [`app`] holds the state and the frame loop and applies
//! [`command::Command`]s, which every panel returns instead of changing anything itself. One
//! file per panel or dialog: `toolbar`, `editor` (with `channels` and `protocol` as its tabs),
//! `plots`, `iv`, `status`, `dialogs`. `fields` addresses every number of a scenario,
//! `widgets` checks values as they are typed, `runtime` runs the engine live, `document`,
//! `prefs` and `files` deal with what is kept on disk, `theme` with the look.
//!
//! For teaching and sharing: `presentation` (the class view with big sliders), `shortcuts`
//! (keys and their overlay), `notes_view` (a scenario's notes beside the plots), `export`
//! (PNG, SVG and CSV) and `restore` (autosave and the offer after a crash).
//!
//! Beyond one run: `analysis` (a window with `kept` traces and their metrics, scans,
//! dose–response and `fit_view`), computed off the drawing thread.

pub mod analysis;
pub mod app;
pub mod command;
pub mod dialogs;
pub mod panels;
mod shortcuts;
pub mod state;
mod theme;
pub mod time;
mod widgets;

pub use dialogs::export;
pub use state::{document, prefs, runtime};

use std::path::PathBuf;
use std::time::Instant;

pub use crate::scenario::{Address, Edit};
pub use app::{App, AppOptions};
pub use command::Command;

/// Opens the window, on `initial` when given, and returns when it is closed.
///
/// `PERMEANT_FRAME_LOG=1` prints the time to the first frame and each frame's time to stderr.
pub fn run(initial: Option<PathBuf>) -> anyhow::Result<()> {
    let started = Instant::now();
    let options = eframe::NativeOptions {
        renderer: eframe::Renderer::Glow,
        viewport: egui::ViewportBuilder::default()
            .with_title("permeant")
            .with_app_id("permeant")
            .with_inner_size([1280.0, 800.0])
            .with_min_inner_size([800.0, 500.0]),
        ..Default::default()
    };
    let app_options = AppOptions {
        initial,
        store: prefs::Store::platform(),
        started: Some(started),
        frame_log: std::env::var_os("PERMEANT_FRAME_LOG").is_some_and(|v| v == "1"),
        autosave: crate::autosave::Autosave::in_data_dir(),
    };
    eframe::run_native(
        "permeant",
        options,
        Box::new(move |cc| Ok(Box::new(App::new(cc, app_options)))),
    )
    .map_err(|e| anyhow::anyhow!("could not open the window: {e}"))
}
