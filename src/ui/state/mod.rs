//! What the window holds: the document being edited, the live run, and the preferences kept
//! between sessions.

pub mod document;
pub mod prefs;
pub mod runtime;
