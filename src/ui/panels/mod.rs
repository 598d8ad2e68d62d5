//! The window's panels, one file each; the editor's tabs are together under `editor`.

pub mod editor;
pub mod family;
pub mod iv;
pub mod notes;
pub mod plot_labels;
pub mod plots;
pub mod presentation;
pub mod status;
pub mod toolbar;
