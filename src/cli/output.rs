//! Where a command's output files go and how they are written: a regular file (or a new name)
//! is replaced whole through a temporary file, so an interrupted or failed command never leaves
//! half a file that looks complete; a FIFO, a device or `-` (standard output) is written
//! straight, since replacing it would swap the device for a plain file. Before anything is
//! written, every output is checked to be neither an input nor another output, and a read-only
//! target is refused. SIGINT and SIGTERM remove the temporary file being written.

use std::io::Write;
use std::path::{Path, PathBuf};

use super::bad;
use crate::scenario::{Durability, through_links, write_replacing};

/// How one output is written.
#[derive(Debug, Clone, PartialEq, Eq)]
enum Sink {
    /// `-`: the process's standard output.
    Stdout,
    /// A FIFO, a device or a socket (or a name for standard output such as `/dev/stdout`):
    /// opened for appending and written as the output is made.
    Straight(PathBuf),
    /// A regular file or a new name: written to a temporary file beside it, renamed over it
    /// when complete.
    Replace(PathBuf),
}

/// One output file of a command, checked and ready to be written.
#[derive(Debug, Clone)]
pub struct Output {
    /// The name as the user gave it, for messages.
    given: PathBuf,
    sink: Sink,
}

impl Output {
    /// Decides how `path` (given with `flag`, e.g. `--csv`) is written, refusing a folder and a
    /// file that is not writable, with the reason.
    pub fn new(path: &Path, flag: &str) -> anyhow::Result<Output> {
        let shown = path.display();
        let sink = if path.as_os_str() == "-" {
            Sink::Stdout
        } else {
            match std::fs::metadata(path) {
                Ok(m) if m.is_dir() => {
                    return Err(bad(format!("{flag} {shown}: this is a folder, not a file")));
                }
                Ok(m) if !m.is_file() || names_a_descriptor(path) => Sink::Straight(path.to_path_buf()),
                Ok(m) => {
                    if m.permissions().readonly() {
                        return Err(bad(format!(
                            "{flag} {shown}: the file is read-only, so permeant does not replace it; \
                             make it writable or give another name"
                        )));
                    }
                    if let Err(e) = std::fs::OpenOptions::new().append(true).open(path)
                        && e.kind() == std::io::ErrorKind::PermissionDenied
                    {
                        return Err(bad(format!(
                            "{flag} {shown}: permission to write this file is denied; give another name"
                        )));
                    }
                    Sink::Replace(path.to_path_buf())
                }
                Err(e) if e.kind() == std::io::ErrorKind::NotFound => Sink::Replace(path.to_path_buf()),
                Err(e) => return Err(bad(format!("{flag} {shown}: cannot write there: {e}"))),
            }
        };
        Ok(Output {
            given: path.to_path_buf(),
            sink,
        })
    }

    /// The name as given.
    pub fn path(&self) -> &Path {
        &self.given
    }

    /// Writes the output: `fill` produces it into the writer it is given. A replaced file is
    /// changed only when `fill` succeeded. A closed standard output or FIFO (the reader went
    /// away) ends the output quietly.
    pub fn write_with(
        &self,
        fill: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
    ) -> std::io::Result<()> {
        let result = match &self.sink {
            Sink::Stdout => {
                let mut out = std::io::stdout().lock();
                fill(&mut out).and_then(|()| out.flush())
            }
            Sink::Straight(p) => {
                let mut f = std::fs::OpenOptions::new().append(true).open(p)?;
                fill(&mut f).and_then(|()| f.flush())
            }
            Sink::Replace(p) => write_replacing(p, Durability::Regenerable, |f| fill(f)),
        };
        match result {
            Err(e)
                if e.kind() == std::io::ErrorKind::BrokenPipe
                    && self.sink != Sink::Replace(self.given.clone()) =>
            {
                Ok(())
            }
            other => other,
        }
    }

    /// Writes `bytes` as the whole output.
    pub fn write_all(&self, bytes: &[u8]) -> std::io::Result<()> {
        self.write_with(|w| w.write_all(bytes))
    }
}

/// Names such as `/dev/stdout` or `/proc/self/fd/1` stand for a descriptor the process already
/// has; when it is redirected to a regular file, that file is written in place, where the
/// shell's redirection expects it, not replaced.
fn names_a_descriptor(path: &Path) -> bool {
    path.starts_with("/dev/") || path.starts_with("/proc/")
}

/// What two names are compared by: the file itself where it exists (device and inode, so hard
/// links and links of any kind are seen through), else the canonical folder and the name.
#[derive(Debug, Clone, PartialEq, Eq)]
enum Identity {
    Stdout,
    File { dev: u64, ino: u64, device: bool },
    New(PathBuf),
    Unknown,
}

fn identity(path: &Path) -> Identity {
    if path.as_os_str() == "-" {
        return Identity::Stdout;
    }
    match std::fs::metadata(path) {
        Ok(m) => file_identity(&m),
        Err(_) => {
            // A new name, possibly through a dangling link: where it would be created.
            let target = through_links(path).unwrap_or_else(|_| path.to_path_buf());
            let dir = match target.parent() {
                Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
                _ => PathBuf::from("."),
            };
            match (std::fs::canonicalize(&dir), target.file_name()) {
                (Ok(d), Some(name)) => Identity::New(d.join(name)),
                _ => Identity::Unknown,
            }
        }
    }
}

#[cfg(unix)]
fn file_identity(m: &std::fs::Metadata) -> Identity {
    use std::os::unix::fs::{FileTypeExt, MetadataExt};
    Identity::File {
        dev: m.dev(),
        ino: m.ino(),
        device: m.file_type().is_char_device(),
    }
}

#[cfg(not(unix))]
fn file_identity(_: &std::fs::Metadata) -> Identity {
    Identity::Unknown
}

/// The optional `--csv` of a command that reads one scenario, checked against it and against
/// what `Output::new` refuses, before any work is done.
pub fn optional_csv(scenario: &Path, csv: Option<&Path>) -> anyhow::Result<Option<Output>> {
    csv.map(|p| {
        check_distinct(&[("scenario", scenario)], &[("--csv", p)])?;
        Output::new(p, "--csv")
    })
    .transpose()
}

/// Writes a whole CSV text through `out`, removing its temporary file if the process is
/// interrupted meanwhile.
pub fn write_csv(out: &Output, text: &str) -> anyhow::Result<()> {
    remove_temporaries_on_interrupt();
    out.write_all(text.as_bytes())
        .map_err(|e| bad(format!("cannot write {}: {e}", out.path().display())))
}

/// Refuses (exit 2) any output that is the same file as an input, or as another output. A
/// character device (`/dev/null`) may take two outputs; nothing is overwritten there.
pub fn check_distinct(inputs: &[(&str, &Path)], outputs: &[(&str, &Path)]) -> anyhow::Result<()> {
    let ins: Vec<Identity> = inputs.iter().map(|(_, p)| identity(p)).collect();
    let outs: Vec<Identity> = outputs.iter().map(|(_, p)| identity(p)).collect();
    for (k, ((flag, path), id)) in outputs.iter().zip(&outs).enumerate() {
        if *id == Identity::Unknown {
            continue;
        }
        for ((what, input), other) in inputs.iter().zip(&ins) {
            if id == other && *id != Identity::Stdout {
                return Err(bad(format!(
                    "{flag} {}: this is the same file as the {what} {}; writing it would destroy the input",
                    path.display(),
                    input.display()
                )));
            }
        }
        for ((other_flag, other_path), other) in outputs[..k].iter().zip(&outs) {
            let shareable = matches!(id, Identity::File { device: true, .. });
            if id == other && !shareable {
                return Err(bad(format!(
                    "{flag} {}: this is the same file as {other_flag} {}; give each output its own file",
                    path.display(),
                    other_path.display()
                )));
            }
        }
    }
    Ok(())
}

/// From here on, SIGINT (Ctrl-C) and SIGTERM remove the temporary file being written before the
/// process ends as the signal asks. (SIGKILL cannot be caught: it can leave a hidden
/// `.NAME.PID.N.tmp` beside the target, which is safe to delete.)
pub fn remove_temporaries_on_interrupt() {
    #[cfg(unix)]
    {
        use signal_hook::consts::{SIGINT, SIGTERM};
        use std::sync::Once;
        static ONCE: Once = Once::new();
        ONCE.call_once(|| {
            let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM]) else {
                return;
            };
            std::thread::spawn(move || {
                if let Some(sig) = signals.forever().next() {
                    for tmp in crate::scenario::pending_temporaries() {
                        let _ = std::fs::remove_file(tmp);
                    }
                    let _ = signal_hook::low_level::emulate_default_handler(sig);
                    std::process::exit(128 + sig);
                }
            });
        });
    }
}
