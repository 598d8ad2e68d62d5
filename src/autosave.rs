//! Nothing lost: the working scenario is written to the platform's data directory every 30 s and
//! on exit, and a session marker tells the next start whether the last one ended cleanly. After a
//! crash the next start finds the marker and offers the autosaved scenario back.
//!
//! No UI types here: the window decides when to call these and how to ask the user.

use std::path::{Path, PathBuf};
use std::time::SystemTime;

use crate::scenario::{Scenario, ScenarioError, Valid, read_file, save_atomic, write_atomic};

/// How often the window autosaves, seconds.
pub const INTERVAL_S: u64 = 30;

const SCENARIO_FILE: &str = "autosave.ron";
const SOURCE_FILE: &str = "autosave-source.txt";
const MARKER_FILE: &str = "session.lock";

/// The platform's data directory for permeant, where the window keeps its autosave, view
/// settings and recent files; `$PERMEANT_DATA_DIR` overrides it, which tests and screenshots
/// use to keep away from the user's own files.
pub fn data_dir() -> Option<PathBuf> {
    if let Some(d) = std::env::var_os("PERMEANT_DATA_DIR") {
        return Some(PathBuf::from(d));
    }
    directories::ProjectDirs::from("org", "permeant", "permeant").map(|p| p.data_dir().to_path_buf())
}

/// The autosave folder.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Autosave {
    dir: PathBuf,
}

/// What a previous session left behind when it did not end cleanly.
#[derive(Debug)]
pub struct Recovered {
    pub scenario: Result<Valid, ScenarioError>,
    /// The file the scenario was opened from or saved to, if any.
    pub source: Option<PathBuf>,
    pub saved_at: Option<SystemTime>,
}

impl Autosave {
    /// Autosave in [`data_dir`].
    pub fn in_data_dir() -> Option<Self> {
        data_dir().map(Self::at)
    }

    pub fn at(dir: PathBuf) -> Self {
        Self { dir }
    }

    pub fn dir(&self) -> &Path {
        &self.dir
    }

    fn marker(&self) -> PathBuf {
        self.dir.join(MARKER_FILE)
    }

    /// Starts a session: returns what a crashed earlier session left (if anything), then marks
    /// this session as running.
    pub fn begin_session(&self) -> std::io::Result<Option<Recovered>> {
        std::fs::create_dir_all(&self.dir)?;
        let crashed = match std::fs::read_to_string(self.marker()) {
            Ok(pid) => !process_alive(pid.trim()),
            Err(_) => false,
        };
        let scenario_path = self.dir.join(SCENARIO_FILE);
        let recovered = (crashed && scenario_path.exists()).then(|| Recovered {
            scenario: read_file(&scenario_path),
            source: std::fs::read_to_string(self.dir.join(SOURCE_FILE))
                .ok()
                .map(|s| s.trim().to_string())
                .filter(|s| !s.is_empty())
                .map(PathBuf::from),
            saved_at: std::fs::metadata(&scenario_path).and_then(|m| m.modified()).ok(),
        });
        write_atomic(&self.marker(), std::process::id().to_string().as_bytes())?;
        Ok(recovered)
    }

    /// Writes the working scenario (atomically) and where it came from.
    pub fn save(&self, s: &Scenario, source: Option<&Path>) -> std::io::Result<()> {
        std::fs::create_dir_all(&self.dir)?;
        save_atomic(s, &self.dir.join(SCENARIO_FILE))?;
        let src = source.map(|p| p.display().to_string()).unwrap_or_default();
        write_atomic(&self.dir.join(SOURCE_FILE), src.as_bytes())
    }

    /// Ends the session cleanly: the next start will not offer a restore.
    pub fn end_session(&self) -> std::io::Result<()> {
        match std::fs::remove_file(self.marker()) {
            Err(e) if e.kind() != std::io::ErrorKind::NotFound => Err(e),
            _ => Ok(()),
        }
    }
}

/// Whether the process that wrote a session marker still runs (then its session is not a
/// crash but another open window). Windows open at once share the one autosave file: the
/// last to write it wins.
fn process_alive(pid: &str) -> bool {
    let Ok(pid) = pid.parse::<u32>() else { return false };
    if pid == std::process::id() {
        return false;
    }
    // After a reboot the old number often belongs to another program: only a live permeant
    // counts as "another open window".
    if cfg!(target_os = "linux") {
        std::fs::read_to_string(Path::new("/proc").join(pid.to_string()).join("comm"))
            .is_ok_and(|name| name.trim().starts_with("permeant"))
    } else {
        false
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_clean_exit_offers_nothing_and_a_crash_offers_the_autosave() {
        let dir = tempfile::tempdir().unwrap();
        let a = Autosave::at(dir.path().to_path_buf());
        assert!(a.begin_session().unwrap().is_none());
        let mut s = Scenario::new_default();
        s.title = "before the crash".into();
        a.save(&s, Some(Path::new("/data/cell.ron"))).unwrap();
        a.end_session().unwrap();
        assert!(a.begin_session().unwrap().is_none(), "clean exit: no offer");
        // A killed session leaves its marker behind, naming a process that no longer runs.
        a.save(&s, None).unwrap();
        std::fs::write(dir.path().join(MARKER_FILE), "4294967295").unwrap();
        let r = a.begin_session().unwrap().expect("an offer after a crash");
        assert_eq!(r.scenario.unwrap().title, "before the crash");
        assert_eq!(r.source, None);
        assert!(r.saved_at.is_some());
    }

    /// A marker whose number now belongs to another program (as after a reboot) is a crash,
    /// not another open window: the autosave is offered back.
    #[cfg(target_os = "linux")]
    #[test]
    fn a_reused_process_number_still_counts_as_a_crash() {
        let dir = tempfile::tempdir().unwrap();
        let a = Autosave::at(dir.path().to_path_buf());
        a.save(&Scenario::new_default(), None).unwrap();
        // Process 1 always runs, and is never permeant.
        std::fs::write(dir.path().join(MARKER_FILE), "1").unwrap();
        assert!(a.begin_session().unwrap().is_some());
    }
}
