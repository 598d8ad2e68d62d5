//! The document: the scenario being edited, where it came from, and whether it differs from
//! what was last opened or saved. Only this is ever written to disk.
//!
//! Each accepted change gives the scenario a new [`Revision`], so the readouts, the live run,
//! autosave, the dirty mark and undo notice a change by comparing two numbers rather than two
//! scenarios each frame (undo compares scenarios only just after an edit: see [`Version`]).

use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

use crate::scenario::Valid;

/// Which version of a scenario a document holds. A new number for every accepted change, in
/// any document of the session; undo brings a version back with its own number.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Revision(u64);

impl Revision {
    fn next() -> Revision {
        static LAST: AtomicU64 = AtomicU64::new(0);
        Revision(LAST.fetch_add(1, Ordering::Relaxed) + 1)
    }
}

/// A scenario with its revision: what undo keeps, and feeds every frame. Two versions are
/// equal when their scenarios are; one revision is one scenario, so the question ends at the
/// revision numbers unless they differ, which they do only in the moments after an edit, before
/// undo has taken it in (an edit may have brought back an earlier scenario, typed again by hand).
#[derive(Debug, Clone)]
pub struct Version {
    revision: Revision,
    scenario: Valid,
}

impl PartialEq for Version {
    fn eq(&self, other: &Self) -> bool {
        self.revision == other.revision || self.scenario == other.scenario
    }
}

/// Where the scenario came from.
#[derive(Debug, Clone, PartialEq)]
pub enum Origin {
    /// Made with "New".
    Fresh,
    /// A bundled example, by file name: saving it asks for a file.
    Example(String),
    /// A file on disk.
    File(PathBuf),
}

#[derive(Debug, Clone)]
pub struct Document {
    current: Version,
    pub origin: Origin,
    /// The scenario as last opened or saved: the document is "dirty" when it differs, so
    /// undoing back to it clears the mark.
    saved: Valid,
    /// Whether `current` differs from `saved`, decided once per change.
    dirty: bool,
}

impl Document {
    pub fn new(scenario: Valid, origin: Origin) -> Self {
        Self {
            saved: scenario.clone(),
            current: Version {
                revision: Revision::next(),
                scenario,
            },
            origin,
            dirty: false,
        }
    }

    pub fn fresh() -> Self {
        Self::new(Valid::new_default(), Origin::Fresh)
    }

    /// The scenario being edited.
    pub fn scenario(&self) -> &Valid {
        &self.current.scenario
    }

    /// The scenario's present revision.
    pub fn revision(&self) -> Revision {
        self.current.revision
    }

    /// The scenario with its revision, as undo keeps it.
    pub fn version(&self) -> &Version {
        &self.current
    }

    /// Takes `next` as a new revision (unless it is the same scenario, which changes nothing).
    pub fn change(&mut self, next: Valid) {
        if next != self.current.scenario {
            self.restore(Version {
                revision: Revision::next(),
                scenario: next,
            });
        }
    }

    /// Goes back (or forward) to a version kept by undo.
    pub fn restore(&mut self, version: Version) {
        self.dirty = version.scenario != self.saved;
        self.current = version;
    }

    pub fn is_dirty(&self) -> bool {
        self.dirty
    }

    pub fn path(&self) -> Option<&Path> {
        match &self.origin {
            Origin::File(p) => Some(p),
            _ => None,
        }
    }

    /// Records a successful save to `path`.
    pub fn saved_to(&mut self, path: PathBuf) {
        self.saved = self.current.scenario.clone();
        self.dirty = false;
        self.origin = Origin::File(path);
    }

    /// The window title: scenario title, where it is from, and `*` for unsaved changes.
    pub fn window_title(&self) -> String {
        let title = &self.scenario().title;
        let name = if title.trim().is_empty() {
            "untitled"
        } else {
            title.trim()
        };
        let from = match &self.origin {
            Origin::Fresh => String::new(),
            Origin::Example(f) => format!(" — example {f}"),
            Origin::File(p) => format!(
                " — {}",
                p.file_name()
                    .map_or_else(|| p.display().to_string(), |n| n.to_string_lossy().into())
            ),
        };
        format!(
            "{}{name}{from} · permeant",
            if self.is_dirty() { "*" } else { "" }
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn change(d: &mut Document, f: &dyn Fn(&mut crate::scenario::Scenario)) {
        let mut s = d.scenario().clone().into_inner();
        f(&mut s);
        d.change(crate::scenario::validate(s).expect("a valid change"));
    }

    #[test]
    fn dirty_mark_follows_the_content_not_the_history() {
        let mut d = Document::fresh();
        assert!(!d.is_dirty());
        assert!(!d.window_title().starts_with('*'));
        change(&mut d, &|s| s.temperature_c = 20.0);
        assert!(d.is_dirty());
        assert!(d.window_title().starts_with('*'));
        change(&mut d, &|s| s.temperature_c = 37.0);
        assert!(!d.is_dirty());
        change(&mut d, &|s| s.title = "Squid axon".into());
        d.saved_to(PathBuf::from("/tmp/x/axon.ron"));
        assert!(!d.is_dirty());
        assert_eq!(d.window_title(), "Squid axon — axon.ron · permeant");
        assert_eq!(d.path(), Some(Path::new("/tmp/x/axon.ron")));
    }

    #[test]
    fn each_change_is_a_new_revision_and_undo_brings_one_back() {
        let mut d = Document::fresh();
        let first = d.version().clone();
        change(&mut d, &|s| s.temperature_c = 20.0);
        let second = d.revision();
        assert_ne!(second, first.revision);
        // The same scenario again is no change.
        change(&mut d, &|s| s.temperature_c = 20.0);
        assert_eq!(d.revision(), second);
        // Changed back by hand: a new revision, the same scenario as the first version.
        change(&mut d, &|s| s.temperature_c = 37.0);
        assert_ne!(d.revision(), first.revision);
        assert_eq!(d.version(), &first);
        d.restore(first.clone());
        assert_eq!(d.revision(), first.revision);
        assert_eq!(d.scenario().temperature_c, 37.0);
        assert!(!d.is_dirty());
        // Another document never shares a revision with this one.
        assert_ne!(Document::fresh().revision(), d.revision());
    }
}
