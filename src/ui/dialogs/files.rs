//! Native file dialogs (rfd: the platform's own on Windows and macOS, the xdg desktop portal on
//! Linux) run on their own thread, so the window keeps drawing and the simulation keeps running
//! while one is open. A dialog is tried on every platform; when none can be shown (rfd fails,
//! or no portal answers) the window falls back to a typed path from then on.

use std::path::PathBuf;
use std::sync::mpsc::{Receiver, TryRecvError, channel};
use std::time::{Duration, Instant};

use crate::ui::command::FilePurpose;

/// A dialog that answers faster than this without a file was not shown at all: nobody cancels
/// a dialog in a quarter of a second.
const TOO_FAST_TO_BE_A_PERSON: Duration = Duration::from_millis(250);

/// What came back from a dialog.
#[derive(Debug, Clone, PartialEq)]
pub enum Chosen {
    File(FilePurpose, PathBuf),
    Cancelled,
    /// No dialog could be shown; ask for a typed path instead.
    Unavailable(FilePurpose),
}

/// A dialog on screen, waiting for its answer.
struct Waiting {
    purpose: FilePurpose,
    since: Instant,
    answer: Receiver<Option<PathBuf>>,
}

#[derive(Default)]
pub struct FileChooser {
    pending: Option<Waiting>,
    /// Set once a dialog failed; from then on the typed path is used directly.
    unavailable: bool,
}

impl FileChooser {
    pub fn is_open(&self) -> bool {
        self.pending.is_some()
    }

    /// Opens a dialog, or reports at once that none can be shown.
    pub fn start(
        &mut self,
        purpose: FilePurpose,
        start_dir: Option<PathBuf>,
        ctx: &egui::Context,
    ) -> Option<Chosen> {
        if self.pending.is_some() {
            return None;
        }
        if self.unavailable {
            return Some(Chosen::Unavailable(purpose));
        }
        let (tx, rx) = channel();
        let ctx = ctx.clone();
        let spawned = std::thread::Builder::new()
            .name("file dialog".into())
            .spawn(move || {
                let mut dialog = match purpose {
                    FilePurpose::Export(kind) => {
                        rfd::FileDialog::new().add_filter(kind.file_kind(), &[kind.extension()])
                    }
                    FilePurpose::Open | FilePurpose::Save => {
                        rfd::FileDialog::new().add_filter("Scenario", &["ron"])
                    }
                    FilePurpose::FitData => rfd::FileDialog::new().add_filter("CSV table", &["csv", "txt"]),
                }
                .add_filter("Any file", &["*"]);
                if let Some(dir) = start_dir {
                    dialog = dialog.set_directory(dir);
                }
                let picked = match purpose {
                    FilePurpose::Export(kind) => dialog
                        .set_title(kind.title())
                        .set_file_name(kind.default_file_name())
                        .save_file(),
                    FilePurpose::Open => dialog.set_title("Open a scenario").pick_file(),
                    FilePurpose::FitData => dialog.set_title("Load measured points").pick_file(),
                    FilePurpose::Save => dialog
                        .set_title("Save the scenario")
                        .set_file_name("scenario.ron")
                        .save_file(),
                };
                let _ = tx.send(picked);
                ctx.request_repaint();
            });
        match spawned {
            Ok(_) => {
                self.pending = Some(Waiting {
                    purpose,
                    since: Instant::now(),
                    answer: rx,
                });
                None
            }
            Err(_) => {
                self.unavailable = true;
                Some(Chosen::Unavailable(purpose))
            }
        }
    }

    /// The dialog's answer, once there is one.
    pub fn poll(&mut self) -> Option<Chosen> {
        let w = self.pending.as_ref()?;
        let purpose = w.purpose;
        let answer = match w.answer.try_recv() {
            Ok(Some(path)) => Chosen::File(purpose, path),
            Ok(None) if w.since.elapsed() < TOO_FAST_TO_BE_A_PERSON => {
                self.unavailable = true;
                Chosen::Unavailable(purpose)
            }
            Ok(None) => Chosen::Cancelled,
            Err(TryRecvError::Empty) => return None,
            Err(TryRecvError::Disconnected) => {
                self.unavailable = true;
                Chosen::Unavailable(purpose)
            }
        };
        self.pending = None;
        Some(answer)
    }
}
