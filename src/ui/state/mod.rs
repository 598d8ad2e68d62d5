//! What the window holds: the document being edited (with its revisions), the edits checked
//! against it, the readouts of its scenario, the live run, and the preferences kept between
//! sessions.

pub mod checks;
pub mod document;
pub mod family;
pub mod prefs;
pub mod readouts;
pub mod runtime;
