//! Saving scenarios: pretty RON in field order, written to a temporary file beside the target
//! and renamed over it, so that a crash or a full disk never leaves half a scenario.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

use super::Scenario;

/// The scenario as pretty-printed RON, fields in the order of scenario-format.md, or the
/// serialiser's error.
pub fn to_ron(s: &Scenario) -> Result<String, ron::Error> {
    let config = ron::ser::PrettyConfig::new()
        .indentor("    ".to_string())
        .struct_names(false);
    let mut text = ron::ser::to_string_pretty(&*super::recipes::as_written(s), config)?;
    text.push('\n');
    Ok(text)
}

/// The scenario as pretty-printed RON text, for display and copying.
pub fn to_ron_string(s: &Scenario) -> String {
    // Every type here is a struct, enum, string or number that RON represents, so this does
    // not fail in practice; saving goes through `to_ron` and reports an error instead.
    to_ron(s).unwrap_or_else(|e| format!("// this scenario could not be written as RON: {e}\n"))
}

/// Writes `s` to `path` atomically. On any failure the target is left as it was.
pub fn save_atomic(s: &Scenario, path: &Path) -> std::io::Result<()> {
    let text =
        to_ron(s).map_err(|e| std::io::Error::other(format!("cannot write the scenario as RON: {e}")))?;
    write_atomic(path, text.as_bytes())
}

/// Writes bytes to `path` through a temporary file in the same directory and a rename.
/// On failure the temporary file is removed and the target is untouched.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    write_atomic_with(path, |f| f.write_all(bytes))
}

/// Like [`write_atomic`], for output produced as it goes (a long run's CSV): `fill` writes the
/// temporary file, and only when it succeeds does the file replace the target.
pub fn write_atomic_with(
    path: &Path,
    fill: impl FnOnce(&mut std::fs::File) -> std::io::Result<()>,
) -> std::io::Result<()> {
    write_replacing(path, Durability::Durable, fill)
}

/// Whether a replacing write waits for the disk.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Durability {
    /// The file and the rename reach the disk before the write returns: a scenario is the
    /// user's work, and a power cut must not leave an empty file in its place.
    Durable,
    /// Output the program can make again from its inputs (a run's CSV or figure): the rename
    /// alone keeps a crash from leaving a half-written file, and skipping the flush to disk
    /// saves most of a short run's time.
    Regenerable,
}

/// Temporary files being written now, so that an interrupted command can remove them.
static PENDING: std::sync::Mutex<Vec<PathBuf>> = std::sync::Mutex::new(Vec::new());

/// Temporary files that [`write_replacing`] has open at this moment (a signal handler removes
/// them before the process ends).
pub fn pending_temporaries() -> Vec<PathBuf> {
    PENDING.lock().map(|p| p.clone()).unwrap_or_default()
}

fn set_pending(tmp: &Path, pending: bool) {
    if let Ok(mut p) = PENDING.lock() {
        if pending {
            p.push(tmp.to_path_buf());
        } else {
            p.retain(|x| x != tmp);
        }
    }
}

/// [`write_atomic_with`] with a choice of [`Durability`].
pub fn write_replacing(
    path: &Path,
    durability: Durability,
    fill: impl FnOnce(&mut std::fs::File) -> std::io::Result<()>,
) -> std::io::Result<()> {
    let target = through_links(path)?;
    let dir = match target.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = target
        .file_name()
        .map_or_else(|| "scenario".into(), |n| n.to_string_lossy().into_owned());
    // Distinct per process and per call, so two saves at once (an autosave and a Save) never
    // share a temporary file.
    static SERIAL: AtomicU64 = AtomicU64::new(0);
    let serial = SERIAL.fetch_add(1, Ordering::Relaxed);
    let tmp = dir.join(format!(".{name}.{}.{serial}.tmp", std::process::id()));
    // Listed before it exists, so that no moment passes in which it exists unlisted.
    set_pending(&tmp, true);
    let result = (|| {
        let mut f = std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)?;
        fill(&mut f)?;
        // Keep the permissions of the file being replaced (a private or a shared file stays
        // so); a new file gets the usual ones. Failing that, the target stays as it was rather
        // than turning up with other permissions.
        match std::fs::metadata(&target) {
            Ok(meta) => f.set_permissions(meta.permissions())?,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
            Err(e) => return Err(e),
        }
        if durability == Durability::Durable {
            f.sync_all()?;
        }
        drop(f);
        std::fs::rename(&tmp, &target)
    })();
    let outcome = match result {
        Ok(()) => {
            if durability == Durability::Durable {
                sync_dir(&dir);
            }
            Ok(())
        }
        Err(e) => {
            let _ = std::fs::remove_file(&tmp);
            Err(e)
        }
    };
    set_pending(&tmp, false);
    outcome
}

/// How many links are followed before a cycle is assumed (Linux's own limit).
const MAX_LINKS: usize = 40;

/// The file that writing `path` should replace: through symbolic links (a chain of them, and a
/// dangling one, whose target is then created), so the link stays a link to the new contents
/// rather than being replaced by a plain file.
pub(crate) fn through_links(path: &Path) -> std::io::Result<PathBuf> {
    let mut p = path.to_path_buf();
    for _ in 0..MAX_LINKS {
        match std::fs::symlink_metadata(&p) {
            Ok(m) if m.file_type().is_symlink() => {
                let to = std::fs::read_link(&p)?;
                p = match p.parent() {
                    Some(dir) if to.is_relative() => dir.join(to),
                    _ => to,
                };
            }
            _ => return Ok(p),
        }
    }
    Err(std::io::Error::other(format!(
        "{}: more than {MAX_LINKS} symbolic links in a row (a cycle?)",
        path.display()
    )))
}

/// Makes the rename itself durable where the platform allows it; a failure here loses nothing
/// that was on disk before, so it is not reported.
fn sync_dir(dir: &Path) {
    #[cfg(unix)]
    if let Ok(d) = std::fs::File::open(dir) {
        let _ = d.sync_all();
    }
    #[cfg(not(unix))]
    let _ = dir;
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_save_replaces_the_file_and_leaves_no_temporary_file() {
        let dir = tempfile::tempdir().expect("a temporary folder");
        let path = dir.path().join("cell.ron");
        write_atomic(&path, b"old").expect("written");
        write_atomic(&path, b"new").expect("written");
        assert_eq!(std::fs::read(&path).expect("readable"), b"new");
        let names: Vec<_> = std::fs::read_dir(dir.path())
            .expect("lists")
            .filter_map(|e| e.ok().map(|e| e.file_name()))
            .collect();
        assert_eq!(names, ["cell.ron"]);
    }

    #[test]
    fn a_failed_fill_leaves_the_target_as_it_was() {
        let dir = tempfile::tempdir().expect("a temporary folder");
        let path = dir.path().join("run.csv");
        write_atomic(&path, b"complete").expect("written");
        let e = write_atomic_with(&path, |f| {
            f.write_all(b"half")?;
            Err(std::io::Error::other("the run failed"))
        })
        .expect_err("refused");
        assert_eq!(e.to_string(), "the run failed");
        assert_eq!(std::fs::read(&path).expect("readable"), b"complete");
        assert_eq!(std::fs::read_dir(dir.path()).expect("lists").count(), 1);
    }

    #[cfg(unix)]
    mod unix {
        use std::os::unix::fs::{PermissionsExt, symlink};

        use super::*;

        fn mode(p: &Path) -> u32 {
            std::fs::metadata(p).expect("metadata").permissions().mode() & 0o777
        }

        /// Writing through a link (here a relative link to a file in another folder, through a
        /// second link) writes the file it points at; the links stay links to it.
        #[test]
        fn writing_through_a_symbolic_link_writes_its_target_and_keeps_the_link() {
            let dir = tempfile::tempdir().expect("a temporary folder");
            std::fs::create_dir(dir.path().join("shared")).expect("a folder");
            let target = dir.path().join("shared").join("cell.ron");
            std::fs::write(&target, "old").expect("written");
            let link = dir.path().join("link.ron");
            symlink("shared/cell.ron", &link).expect("linked");
            let outer = dir.path().join("outer.ron");
            symlink("link.ron", &outer).expect("linked");
            write_atomic(&outer, b"new").expect("written");
            assert_eq!(std::fs::read(&target).expect("readable"), b"new");
            for (l, to) in [(&link, "shared/cell.ron"), (&outer, "link.ron")] {
                let meta = std::fs::symlink_metadata(l).expect("metadata");
                assert!(meta.file_type().is_symlink(), "{} is still a link", l.display());
                assert_eq!(std::fs::read_link(l).expect("a link"), Path::new(to));
            }
            // No temporary file is left beside the link or the target.
            assert_eq!(
                std::fs::read_dir(dir.path().join("shared"))
                    .expect("lists")
                    .count(),
                1
            );
            assert_eq!(std::fs::read_dir(dir.path()).expect("lists").count(), 3);
        }

        /// A link whose target does not exist yet: the target is created, the link kept.
        #[test]
        fn writing_through_a_dangling_link_creates_its_target() {
            let dir = tempfile::tempdir().expect("a temporary folder");
            let link = dir.path().join("link.ron");
            symlink("later.ron", &link).expect("linked");
            write_atomic(&link, b"first").expect("written");
            assert_eq!(
                std::fs::read(dir.path().join("later.ron")).expect("readable"),
                b"first"
            );
            assert!(
                std::fs::symlink_metadata(&link)
                    .expect("metadata")
                    .file_type()
                    .is_symlink()
            );
        }

        #[test]
        fn a_cycle_of_links_is_refused_and_nothing_is_written() {
            let dir = tempfile::tempdir().expect("a temporary folder");
            let (a, b) = (dir.path().join("a.ron"), dir.path().join("b.ron"));
            symlink("b.ron", &a).expect("linked");
            symlink("a.ron", &b).expect("linked");
            let e = write_atomic(&a, b"x").expect_err("refused");
            assert!(e.to_string().contains("symbolic links"), "{e}");
            assert_eq!(std::fs::read_dir(dir.path()).expect("lists").count(), 2);
        }

        /// The replaced file keeps its permissions, directly and through a link: modes that
        /// differ from what a new file gets (0o644 under the common umask 022), one private
        /// and one read-only.
        #[test]
        fn a_save_keeps_the_permissions_of_the_file_it_replaces() {
            let dir = tempfile::tempdir().expect("a temporary folder");
            let target = dir.path().join("cell.ron");
            let link = dir.path().join("link.ron");
            symlink("cell.ron", &link).expect("linked");
            for (through, wanted) in [(&target, 0o600), (&link, 0o640), (&link, 0o444)] {
                std::fs::write(&target, "old").ok();
                std::fs::set_permissions(&target, std::fs::Permissions::from_mode(wanted))
                    .expect("permissions set");
                save_atomic(&Scenario::new_default(), through).expect("saved");
                assert_eq!(mode(&target), wanted, "through {}", through.display());
                let back = crate::scenario::read_file(&target).expect("reads back");
                assert_eq!(*back, Scenario::new_default());
            }
        }
    }
}
