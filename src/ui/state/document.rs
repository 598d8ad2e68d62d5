//! The document: the scenario being edited, where it came from, and whether it differs from
//! what was last opened or saved. Only this is ever written to disk.

use std::path::{Path, PathBuf};

use crate::scenario::Valid;

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
    pub scenario: Valid,
    pub origin: Origin,
    /// The scenario as last opened or saved: the document is "dirty" when it differs, so
    /// undoing back to it clears the mark.
    saved: Valid,
}

impl Document {
    pub fn new(scenario: Valid, origin: Origin) -> Self {
        Self {
            saved: scenario.clone(),
            scenario,
            origin,
        }
    }

    pub fn fresh() -> Self {
        Self::new(Valid::new_default(), Origin::Fresh)
    }

    pub fn is_dirty(&self) -> bool {
        self.scenario != self.saved
    }

    pub fn path(&self) -> Option<&Path> {
        match &self.origin {
            Origin::File(p) => Some(p),
            _ => None,
        }
    }

    /// Records a successful save to `path`.
    pub fn saved_to(&mut self, path: PathBuf) {
        self.saved = self.scenario.clone();
        self.origin = Origin::File(path);
    }

    /// The window title: scenario title, where it is from, and `*` for unsaved changes.
    pub fn window_title(&self) -> String {
        let name = if self.scenario.title.trim().is_empty() {
            "untitled"
        } else {
            self.scenario.title.trim()
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

    #[test]
    fn dirty_mark_follows_the_content_not_the_history() {
        let mut d = Document::fresh();
        assert!(!d.is_dirty());
        assert!(!d.window_title().starts_with('*'));
        let change = |d: &mut Document, f: &dyn Fn(&mut crate::scenario::Scenario)| {
            let mut s = d.scenario.clone().into_inner();
            f(&mut s);
            d.scenario = crate::scenario::validate(s).expect("a valid change");
        };
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
}
