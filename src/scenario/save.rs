//! Saving scenarios: pretty RON in field order, written to a temporary file beside the target
//! and renamed over it, so that a crash or a full disk never leaves half a scenario.

use std::io::Write;
use std::path::Path;

use super::Scenario;

/// The scenario as pretty-printed RON text, fields in the order of scenario-format.md.
pub fn to_ron_string(s: &Scenario) -> String {
    let config = ron::ser::PrettyConfig::new().indentor("    ".to_string()).struct_names(false);
    // Serialising plain data into a String cannot fail: every type here is a struct, enum,
    // string or number that RON represents.
    ron::ser::to_string_pretty(s, config).unwrap_or_else(|e| format!("// could not serialise: {e}\n"))
}

/// Writes `s` to `path` atomically.
pub fn save_atomic(s: &Scenario, path: &Path) -> std::io::Result<()> {
    write_atomic(path, to_ron_string(s).as_bytes())
}

/// Writes bytes to `path` through a temporary file in the same directory and a rename.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_else(|| "scenario".into());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}
