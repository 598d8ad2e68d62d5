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
    let mut text = ron::ser::to_string_pretty(s, config)?;
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
    // Through a symbolic link, replace the file it points at rather than the link itself.
    let target = std::fs::canonicalize(path).unwrap_or_else(|_| path.to_path_buf());
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
    let result = (|| {
        let mut f = std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)?;
        fill(&mut f)?;
        // Keep the permissions of the file being replaced (a shared, read-only-for-others file
        // stays so); a new file gets the usual ones.
        if let Ok(meta) = std::fs::metadata(&target) {
            let _ = f.set_permissions(meta.permissions());
        }
        f.sync_all()?;
        drop(f);
        std::fs::rename(&tmp, &target)
    })();
    match result {
        Ok(()) => {
            sync_dir(&dir);
            Ok(())
        }
        Err(e) => {
            let _ = std::fs::remove_file(&tmp);
            Err(e)
        }
    }
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
