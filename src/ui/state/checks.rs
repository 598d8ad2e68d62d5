//! Edits checked against the present revision of the document. A button asks every frame
//! whether its edit is allowed, a typed value is checked as it is typed, and the app checks
//! the edit again when it applies it: with the answers kept per revision, each edit is
//! validated once, however often it is asked about.

use crate::scenario::{Edit, Problem, Valid, check_edit};

use super::document::{Document, Revision};

/// Most answers kept for one revision: typing tries many values before one is accepted.
const KEPT: usize = 64;

/// The answers of [`check_edit`] for the document's present revision.
#[derive(Debug, Default)]
pub struct Checked {
    revision: Option<Revision>,
    answers: Vec<(Edit, Result<Valid, Problem>)>,
}

impl Checked {
    /// Whether `edit` may be applied to `doc` now, or the first reason it may not.
    pub fn check(&mut self, doc: &Document, edit: &Edit) -> Result<(), Problem> {
        match self.answer(doc, edit) {
            Some((_, Err(problem))) => Err(problem.clone()),
            _ => Ok(()),
        }
    }

    /// The scenario after `edit`, or why it is refused, to apply it.
    pub fn take(&mut self, doc: &Document, edit: &Edit) -> Result<Valid, Problem> {
        self.answer(doc, edit);
        match self.answers.pop() {
            Some((_, answer)) => answer,
            None => check_edit(doc.scenario(), edit),
        }
    }

    /// The answer for `edit`, computed when it is not known yet, and moved last.
    fn answer(&mut self, doc: &Document, edit: &Edit) -> Option<&(Edit, Result<Valid, Problem>)> {
        if self.revision != Some(doc.revision()) || self.answers.len() >= KEPT {
            self.revision = Some(doc.revision());
            self.answers.clear();
        }
        match self.answers.iter().position(|(e, _)| e == edit) {
            Some(k) => {
                let last = self.answers.len() - 1;
                self.answers.swap(k, last);
            }
            None => self
                .answers
                .push((edit.clone(), check_edit(doc.scenario(), edit))),
        }
        self.answers.last()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::Address;

    #[test]
    fn an_edit_is_checked_once_per_revision_and_applied_from_the_answer() {
        let mut doc = Document::fresh();
        let mut checked = Checked::default();
        let outside = Address::of("species[].outside_mm", &[0]).expect("a row");
        let good = Edit::Number(outside, 20.0);
        let bad = Edit::Number(outside, -1.0);
        assert_eq!(checked.check(&doc, &good), Ok(()));
        let refused = checked.check(&doc, &bad).expect_err("a negative concentration");
        assert_eq!(refused.path, "species[0].outside_mm");
        assert_eq!(checked.answers.len(), 2);
        // Asked again, nothing new is computed.
        assert_eq!(checked.check(&doc, &good), Ok(()));
        assert_eq!(checked.answers.len(), 2);
        let next = checked.take(&doc, &good).expect("valid");
        assert_eq!(next.species[0].outside_mm, 20.0);
        doc.change(next);
        // A new revision starts afresh: the answers were for the old scenario.
        assert_eq!(
            checked.check(&doc, &bad).map_err(|p| p.path),
            Err("species[0].outside_mm".into())
        );
        assert_eq!(checked.answers.len(), 1);
    }
}
