//! Nothing lost: the working scenario is written to the platform's data directory every 30 s and
//! on exit, and each session holds an advisory lock on a marker file of its own while it runs.
//! A marker that nobody holds was left by a session that ended without cleaning up (a crash, a
//! kill, a power cut: the operating system releases the lock of a process that is gone), so the
//! next start offers the autosaved scenario back; a marker still locked is another open window.
//!
//! The lock is std's `File::try_lock` (advisory: `flock` on Unix, `LockFileEx` on Windows), so
//! no crate and no process-number guess is needed. No UI types here: the window decides when to
//! call these and how to ask the user.

use std::fs::{File, OpenOptions, TryLockError};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Arc, Mutex, PoisonError};
use std::time::SystemTime;

use crate::scenario::{Scenario, ScenarioError, Valid, read_file, save_atomic, write_atomic};

/// How often the window autosaves, seconds.
pub const INTERVAL_S: u64 = 30;

const SCENARIO_FILE: &str = "autosave.ron";
const SOURCE_FILE: &str = "autosave-source.txt";
/// Session markers are `session*.lock`: each session's own is `session-PID-N.lock`, and the
/// single `session.lock` of earlier versions is read the same way.
const MARKER_PREFIX: &str = "session";
const MARKER_SUFFIX: &str = ".lock";

/// The platform's data directory for permeant, where the window keeps its autosave, view
/// settings and recent files; `$PERMEANT_DATA_DIR` overrides it, which tests and screenshots
/// use to keep away from the user's own files.
pub fn data_dir() -> Option<PathBuf> {
    if let Some(d) = std::env::var_os("PERMEANT_DATA_DIR") {
        return Some(PathBuf::from(d));
    }
    directories::ProjectDirs::from("org", "permeant", "permeant").map(|p| p.data_dir().to_path_buf())
}

/// The autosave folder, and this session's marker once [`Autosave::begin_session`] made it.
/// Clones share the session; two `Autosave`s are equal when they name the same folder.
#[derive(Debug, Clone)]
pub struct Autosave {
    dir: PathBuf,
    session: Arc<Mutex<Option<Marker>>>,
}

impl PartialEq for Autosave {
    fn eq(&self, other: &Self) -> bool {
        self.dir == other.dir
    }
}

impl Eq for Autosave {}

/// A session's marker file, locked for as long as it is open.
#[derive(Debug)]
struct Marker {
    path: PathBuf,
    /// Held for the lock; closing it (at exit or when the process dies) releases the lock.
    _file: File,
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
        Self {
            dir,
            session: Arc::default(),
        }
    }

    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// Starts a session: returns what a crashed earlier session left (if anything), then marks
    /// this session as running by a marker it holds locked until [`Autosave::end_session`] or
    /// the end of the process.
    pub fn begin_session(&self) -> std::io::Result<Option<Recovered>> {
        std::fs::create_dir_all(&self.dir)?;
        let mut session = self.session.lock().unwrap_or_else(PoisonError::into_inner);
        // A second start of the same session replaces its marker rather than finding it alive.
        if let Some(old) = session.take() {
            old.remove()?;
        }
        let crashed = self.clear_crashed_markers()?;
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
        *session = Some(Marker::create(&self.dir)?);
        Ok(recovered)
    }

    /// Removes every marker that no running session holds; returns whether there was one.
    fn clear_crashed_markers(&self) -> std::io::Result<bool> {
        let mut crashed = false;
        for entry in std::fs::read_dir(&self.dir)? {
            let path = entry?.path();
            let is_marker = path
                .file_name()
                .and_then(|n| n.to_str())
                .is_some_and(|n| n.starts_with(MARKER_PREFIX) && n.ends_with(MARKER_SUFFIX));
            if !is_marker {
                continue;
            }
            // A marker that cannot be opened is being removed by a session ending right now
            // (Windows refuses to open a file pending deletion): not a crash.
            let Ok(file) = OpenOptions::new().read(true).write(true).open(&path) else {
                continue;
            };
            match file.try_lock() {
                Ok(()) => {}
                Err(TryLockError::WouldBlock) => continue,
                Err(TryLockError::Error(e)) => return Err(e),
            }
            // Locked by us now; a session that ended cleanly meanwhile has unlinked it (Unix
            // lets a lock be taken on a file already removed), which is no crash.
            if !path.exists() {
                continue;
            }
            crashed = true;
            match std::fs::remove_file(&path) {
                Err(e) if e.kind() != std::io::ErrorKind::NotFound => return Err(e),
                _ => {}
            }
        }
        Ok(crashed)
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
        let mut session = self.session.lock().unwrap_or_else(PoisonError::into_inner);
        match session.take() {
            Some(marker) => marker.remove(),
            None => Ok(()),
        }
    }
}

impl Marker {
    /// A new marker, locked before it appears under its `session*.lock` name, so that a
    /// session starting at the same moment never sees it unlocked.
    fn create(dir: &Path) -> std::io::Result<Marker> {
        // Distinct per process and per session within it (tests start several).
        static SERIAL: AtomicU64 = AtomicU64::new(0);
        let serial = SERIAL.fetch_add(1, Ordering::Relaxed);
        let pid = std::process::id();
        let name = format!("{MARKER_PREFIX}-{pid}-{serial}{MARKER_SUFFIX}");
        let tmp = dir.join(format!(".{name}.tmp"));
        let path = dir.join(name);
        let file = OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(true)
            .open(&tmp)?;
        let made = file
            .try_lock()
            .map_err(std::io::Error::from)
            .and_then(|()| std::fs::rename(&tmp, &path));
        if let Err(e) = made {
            let _ = std::fs::remove_file(&tmp);
            return Err(e);
        }
        Ok(Marker { path, _file: file })
    }

    /// Removes the marker while still holding its lock, so no other session can take the
    /// lock of a marker that is about to go and count it as a crash.
    fn remove(self) -> std::io::Result<()> {
        match std::fs::remove_file(&self.path) {
            Err(e) if e.kind() != std::io::ErrorKind::NotFound => Err(e),
            _ => Ok(()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn markers(dir: &Path) -> Vec<String> {
        let mut names: Vec<String> = std::fs::read_dir(dir)
            .expect("the folder lists")
            .filter_map(|e| e.ok()?.file_name().into_string().ok())
            .filter(|n| n.starts_with(MARKER_PREFIX) && n.ends_with(MARKER_SUFFIX))
            .collect();
        names.sort();
        names
    }

    fn titled(title: &str) -> Scenario {
        let mut s = Scenario::new_default();
        s.title = title.into();
        s
    }

    #[test]
    fn a_clean_exit_offers_nothing_and_a_crash_offers_the_autosave() {
        let dir = tempfile::tempdir().expect("a temporary folder");
        let a = Autosave::at(dir.path().to_path_buf());
        assert!(a.begin_session().expect("begins").is_none());
        a.save(&titled("before the crash"), Some(Path::new("/data/cell.ron")))
            .expect("saved");
        a.end_session().expect("ended");
        assert!(markers(dir.path()).is_empty(), "a clean end leaves no marker");
        assert!(
            a.begin_session().expect("begins").is_none(),
            "clean exit: no offer"
        );
        a.save(&titled("before the crash"), None).expect("saved");
        // Dropping every handle without ending the session closes the marker as a dying
        // process would: the lock is released and the marker stays.
        drop(a);
        assert_eq!(markers(dir.path()).len(), 1);
        let b = Autosave::at(dir.path().to_path_buf());
        let r = b
            .begin_session()
            .expect("begins")
            .expect("an offer after a crash");
        assert_eq!(r.scenario.expect("readable").title, "before the crash");
        assert_eq!(r.source, None);
        assert!(r.saved_at.is_some());
        // The crashed marker is gone; only the new session's own remains.
        assert_eq!(markers(dir.path()).len(), 1);
    }

    /// Two windows open at once: the second sees the first's locked marker as a live session,
    /// not a crash, and each keeps its own marker.
    #[test]
    fn a_session_holding_its_lock_is_alive_not_crashed() {
        let dir = tempfile::tempdir().expect("a temporary folder");
        let first = Autosave::at(dir.path().to_path_buf());
        assert!(first.begin_session().expect("begins").is_none());
        first.save(&titled("open elsewhere"), None).expect("saved");
        let second = Autosave::at(dir.path().to_path_buf());
        assert!(
            second.begin_session().expect("begins").is_none(),
            "the first is alive"
        );
        assert_eq!(markers(dir.path()).len(), 2);
        second.end_session().expect("ended");
        let third = Autosave::at(dir.path().to_path_buf());
        assert!(third.begin_session().expect("begins").is_none(), "still alive");
        third.end_session().expect("ended");
        // A clone is the same session: ending it ends the first.
        first.clone().end_session().expect("ended");
        assert!(markers(dir.path()).is_empty());
    }

    /// The single `session.lock` of earlier versions, holding a process number, that nobody
    /// holds locked: a crash, whatever the number (a reused one after a reboot included).
    #[test]
    fn an_unlocked_marker_of_the_earlier_kind_is_a_crash() {
        let dir = tempfile::tempdir().expect("a temporary folder");
        let a = Autosave::at(dir.path().to_path_buf());
        a.save(&titled("left by an older version"), None).expect("saved");
        std::fs::write(dir.path().join("session.lock"), "1").expect("marker written");
        let r = a.begin_session().expect("begins").expect("an offer");
        assert_eq!(r.scenario.expect("readable").title, "left by an older version");
    }

    /// The folder a child process of [`a_killed_process_releases_its_lock_and_counts_as_a_crash`]
    /// holds its session in.
    const CHILD_DIR: &str = "PERMEANT_TEST_SESSION_DIR";

    /// Run only as that test's child process: begins a session, says so, and waits to be
    /// killed. Run by itself (as `cargo test -- --ignored` would) it has nothing to do.
    #[test]
    #[ignore = "a helper process of a_killed_process_releases_its_lock_and_counts_as_a_crash"]
    fn child_session_until_killed() {
        let Some(dir) = std::env::var_os(CHILD_DIR) else {
            return;
        };
        let a = Autosave::at(PathBuf::from(dir));
        a.begin_session().expect("begins");
        println!("session begun");
        let mut line = String::new();
        // Blocks until the parent kills this process (it never writes to stdin).
        let _ = std::io::stdin().read_line(&mut line);
        std::process::exit(0);
    }

    /// Kills the child when a check fails, so no process is left behind.
    struct Child(std::process::Child);

    impl Drop for Child {
        fn drop(&mut self) {
            let _ = self.0.kill();
            let _ = self.0.wait();
        }
    }

    /// A real crash: another process holds a session (alive: no offer), then is killed; the
    /// operating system releases its lock and the next start offers its autosave. No timing is
    /// assumed: the child says when its session has begun, and `wait` returns only after the
    /// process is gone and its files are closed.
    #[test]
    fn a_killed_process_releases_its_lock_and_counts_as_a_crash() {
        use std::io::BufRead;
        let dir = tempfile::tempdir().expect("a temporary folder");
        let exe = std::env::current_exe().expect("the test binary");
        let mut child = Child(
            std::process::Command::new(exe)
                .args([
                    "--exact",
                    "autosave::tests::child_session_until_killed",
                    "--ignored",
                    "--nocapture",
                    "--test-threads=1",
                ])
                .env(CHILD_DIR, dir.path())
                .stdin(std::process::Stdio::piped())
                .stdout(std::process::Stdio::piped())
                .stderr(std::process::Stdio::null())
                .spawn()
                .expect("the child starts"),
        );
        let stdout = child.0.stdout.take().expect("the child's output");
        let begun = std::io::BufReader::new(stdout)
            .lines()
            .map_while(Result::ok)
            .any(|l| l.contains("session begun"));
        assert!(begun, "the child did not begin its session");
        let a = Autosave::at(dir.path().to_path_buf());
        a.save(&titled("the child's work"), None).expect("saved");
        assert!(a.begin_session().expect("begins").is_none(), "the child is alive");
        a.end_session().expect("ended");
        child.0.kill().expect("killed");
        child.0.wait().expect("gone");
        let r = a
            .begin_session()
            .expect("begins")
            .expect("an offer after the kill");
        assert_eq!(r.scenario.expect("readable").title, "the child's work");
    }
}
