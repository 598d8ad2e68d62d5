//! What the window shows that depends on the scenario alone: the resting report and the
//! warnings, computed once per revision of the document.

use crate::analysis::{RestReport, rest_report};
use crate::scenario;

use super::document::{Document, Revision};

/// The readouts of one revision.
pub struct Readouts {
    revision: Option<Revision>,
    /// The resting report, or why there is none.
    pub rest: Result<RestReport, String>,
    /// Things worth saying that do not stop the scenario from running.
    pub warnings: Vec<String>,
}

impl Default for Readouts {
    fn default() -> Self {
        Readouts {
            revision: None,
            rest: Err(String::new()),
            warnings: Vec::new(),
        }
    }
}

impl Readouts {
    /// Brings the readouts to the document's revision (nothing to do when they are at it).
    pub fn refresh(&mut self, doc: &Document) {
        if self.revision == Some(doc.revision()) {
            return;
        }
        let s = doc.scenario();
        self.rest = rest_report(s).map_err(|e| e.to_string());
        self.warnings = scenario::warnings(s).iter().map(|w| w.message.clone()).collect();
        self.revision = Some(doc.revision());
    }

    /// The resting potential, when there is one.
    pub fn resting_mv(&self) -> Option<f64> {
        self.rest.as_ref().ok().and_then(RestReport::resting_mv)
    }
}
