//! Nothing lost: the window's side of [`crate::autosave`]. The working scenario is written every
//! [`INTERVAL_S`] seconds when it changed, and on exit; when the last session did not end
//! cleanly, the start offers what it left (restore or discard) before anything overwrites it.

use std::path::PathBuf;
use std::time::{Duration, Instant, SystemTime};

use egui::{Id, Modal, RichText, Ui};

use crate::autosave::{Autosave, INTERVAL_S, Recovered};
use crate::scenario::{self, Valid};
use crate::ui::command::Command;
use crate::ui::state::document::{Document, Origin, Revision};

/// Autosaving for one session.
pub struct Autosaver {
    store: Autosave,
    /// The revision last written, so an unchanged scenario is not written again.
    last_saved: Option<Revision>,
    /// When the last write was due or done: the next is due an interval after it.
    last_time: Instant,
    interval: Duration,
}

/// A scenario left by a session that did not end cleanly.
#[derive(Debug, Clone)]
pub struct Offer {
    /// The scenario, or why the autosave could not be read.
    pub scenario: Result<Valid, String>,
    pub source: Option<PathBuf>,
    pub saved_at: Option<SystemTime>,
}

impl Autosaver {
    /// Starts a session in `store`; returns the offer a crashed session left, if any.
    pub fn begin(store: Autosave) -> Result<(Autosaver, Option<Offer>), String> {
        let recovered = store
            .begin_session()
            .map_err(|e| format!("{}: {e}", store.dir().display()))?;
        let offer = recovered.map(|r: Recovered| Offer {
            scenario: r.scenario.map_err(|e| e.to_string()),
            source: r.source,
            saved_at: r.saved_at,
        });
        let saver = Autosaver {
            store,
            last_saved: None,
            last_time: Instant::now(),
            interval: Duration::from_secs(INTERVAL_S),
        };
        Ok((saver, offer))
    }

    /// Writes `doc` when the interval has passed at `now` and it changed since the last write.
    /// Returns how long until the next write is due when something is waiting to be written
    /// (so the window can wake up for it), and the error of a failed write. The time is passed
    /// in, so that what is due depends on the clock the caller reads, not on how long this
    /// takes.
    pub fn tick(&mut self, doc: &Document, now: Instant) -> (Option<Duration>, Result<(), String>) {
        let changed = self.last_saved != Some(doc.revision());
        if !changed {
            self.last_time = now;
            return (None, Ok(()));
        }
        let since = now.saturating_duration_since(self.last_time);
        if since < self.interval {
            return (Some(self.interval - since), Ok(()));
        }
        (Some(self.interval), self.save_at(doc, now))
    }

    /// Writes `doc` now.
    pub fn save_now(&mut self, doc: &Document) -> Result<(), String> {
        self.save_at(doc, Instant::now())
    }

    /// Writes `doc`, the write counting as done at `now`.
    fn save_at(&mut self, doc: &Document, now: Instant) -> Result<(), String> {
        self.last_time = now;
        // The next start may run in another folder: keep where the file is, not how it was named.
        let source = doc
            .path()
            .map(|p| std::fs::canonicalize(p).unwrap_or_else(|_| p.to_path_buf()));
        self.store
            .save(doc.scenario(), source.as_deref())
            .map_err(|e| format!("Autosave failed in {}: {e}", self.store.dir().display()))?;
        self.last_saved = Some(doc.revision());
        Ok(())
    }

    /// Ends the session cleanly after a last write: the next start offers nothing.
    pub fn end(&mut self, doc: &Document) -> Result<(), String> {
        self.save_now(doc)?;
        self.store
            .end_session()
            .map_err(|e| format!("{}: {e}", self.store.dir().display()))
    }
}

impl Offer {
    /// The document to continue with: the restored scenario, still marked unsaved against the
    /// file it came from (or as new when that file is gone).
    pub fn into_document(self) -> Option<Document> {
        let restored = self.scenario.ok()?;
        let on_disk = self
            .source
            .as_ref()
            .and_then(|p| scenario::read_file(p).ok().map(|s| (s, p.clone())));
        let mut doc = match on_disk {
            Some((s, p)) => Document::new(s, Origin::File(p)),
            None => Document::fresh(),
        };
        doc.change(restored);
        Some(doc)
    }
}

/// How long ago `t` was, in plain words.
fn ago(t: SystemTime) -> String {
    let Ok(d) = SystemTime::now().duration_since(t) else {
        return "just now".into();
    };
    let min = d.as_secs() / 60;
    match min {
        0 => "less than a minute ago".into(),
        1 => "a minute ago".into(),
        2..=119 => format!("{min} minutes ago"),
        _ => format!("{} hours ago", min / 60),
    }
}

/// The offer to restore; pushes [`Command::Recover`] with the answer.
pub fn offer_modal(ui: &Ui, offer: &Offer, commands: &mut Vec<Command>) {
    Modal::new(Id::unique("permeant restore offer")).show(ui.ctx(), |ui| {
        ui.set_max_width(520.0);
        ui.heading("Restore the unsaved work?");
        ui.label("permeant did not close normally last time. It had kept a copy of the scenario you were working on.");
        match &offer.scenario {
            Ok(s) => {
                let title = if s.title.trim().is_empty() {
                    "untitled"
                } else {
                    s.title.trim()
                };
                ui.label(RichText::new(format!("\"{title}\"")).strong());
                if let Some(p) = &offer.source {
                    ui.label(format!("from {}", p.display()));
                }
                if let Some(t) = offer.saved_at {
                    ui.label(format!("kept {}", ago(t)));
                }
                ui.add_space(6.0);
                ui.horizontal(|ui| {
                    if ui.button("Restore it").clicked() {
                        commands.push(Command::Recover(true));
                    }
                    if ui.button("Discard it").clicked() {
                        commands.push(Command::Recover(false));
                    }
                });
            }
            Err(reason) => {
                ui.label(RichText::new(format!("The copy cannot be read: {reason}")).color(ui.visuals().error_fg_color));
                if ui.button("Close").clicked() {
                    commands.push(Command::Recover(false));
                }
            }
        }
    });
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn writes_only_when_due_and_changed() {
        let dir = tempfile::tempdir().expect("temporary directory");
        let (mut saver, offer) = Autosaver::begin(Autosave::at(dir.path().to_path_buf())).expect("begun");
        assert!(offer.is_none());
        let start = saver.last_time;
        let at = |s: u64| start + Duration::from_secs(s);
        let interval = Duration::from_secs(INTERVAL_S);
        let mut doc = Document::fresh();
        let file = dir.path().join("autosave.ron");
        // Changed (nothing written yet) but not due: the wait is what is left of the interval.
        let (wait, r) = saver.tick(&doc, at(1));
        assert_eq!(wait, Some(interval - Duration::from_secs(1)));
        assert!(r.is_ok() && !file.exists());
        // Due: written.
        assert!(saver.tick(&doc, at(INTERVAL_S)).1.is_ok());
        assert!(file.exists());
        // Unchanged: nothing is waiting, however long after.
        assert_eq!(saver.tick(&doc, at(10 * INTERVAL_S)).0, None);
        let mut changed = doc.scenario().clone().into_inner();
        changed.title = "changed".into();
        doc.change(scenario::validate(changed).expect("valid"));
        // The interval counts from the last unchanged look, so a change is not written at once.
        let (wait, _) = saver.tick(&doc, at(10 * INTERVAL_S + 1));
        assert_eq!(wait, Some(interval - Duration::from_secs(1)));
        assert_eq!(
            scenario::read_file(&file).expect("readable").title,
            "Untitled cell"
        );
        assert!(saver.tick(&doc, at(11 * INTERVAL_S)).1.is_ok());
        let kept = scenario::read_file(&file).expect("readable");
        assert_eq!(kept.title, "changed");
        saver.end(&doc).expect("ended");
        let (_, offer) = Autosaver::begin(Autosave::at(dir.path().to_path_buf())).expect("begun");
        assert!(offer.is_none(), "a clean end offers nothing");
    }

    #[test]
    fn a_restored_scenario_stays_unsaved_against_its_file() {
        let dir = tempfile::tempdir().expect("temporary directory");
        let path = dir.path().join("cell.ron");
        let on_disk = scenario::Scenario::new_default();
        scenario::save_atomic(&on_disk, &path).expect("saved");
        let mut edited = on_disk.clone();
        edited.temperature_c = 21.0;
        let edited = scenario::validate(edited).expect("valid");
        let doc = Offer {
            scenario: Ok(edited.clone()),
            source: Some(path.clone()),
            saved_at: None,
        }
        .into_document()
        .expect("a document");
        assert_eq!(doc.scenario(), &edited);
        assert_eq!(doc.path(), Some(path.as_path()));
        assert!(doc.is_dirty());
        // The file is gone: the scenario comes back as new work.
        std::fs::remove_file(&path).expect("removed");
        let doc = Offer {
            scenario: Ok(edited),
            source: Some(path),
            saved_at: None,
        }
        .into_document()
        .expect("a document");
        assert_eq!(doc.origin, Origin::Fresh);
        assert!(doc.is_dirty());
    }
}
