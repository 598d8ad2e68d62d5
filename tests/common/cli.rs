//! The command line as a user meets it: the real `permeant` binary run in a fresh temporary
//! directory (ripgrep's habit), and the exit-status policy of command-line.md.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// Runs the binary in `dir`.
pub fn permeant(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_permeant"))
        .args(args)
        .current_dir(dir)
        .output()
        .expect("run the permeant binary")
}

/// A fresh directory holding the files of one test; commands run inside it.
pub struct Sandbox {
    dir: tempfile::TempDir,
}

impl Sandbox {
    pub fn new() -> Self {
        Sandbox {
            dir: tempfile::tempdir().expect("a temporary directory"),
        }
    }

    /// A sandbox holding one file.
    pub fn with(name: &str, contents: impl AsRef<[u8]>) -> Self {
        let sb = Sandbox::new();
        sb.write(name, contents);
        sb
    }

    pub fn write(&self, name: &str, contents: impl AsRef<[u8]>) -> PathBuf {
        let path = self.path(name);
        std::fs::write(&path, contents).expect("write a test file");
        path
    }

    pub fn read(&self, name: &str) -> String {
        std::fs::read_to_string(self.path(name)).unwrap_or_else(|e| panic!("{name} was not written: {e}"))
    }

    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    pub fn run(&self, args: &[&str]) -> Output {
        permeant(self.dir.path(), args)
    }

    /// Runs, expecting exit status 0, and returns stdout.
    pub fn ok(&self, args: &[&str]) -> String {
        let o = self.run(args);
        assert_eq!(o.status.code(), Some(0), "{args:?}: stderr:\n{}", stderr(&o));
        stdout(&o)
    }
}

pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// Exit status 2 (bad input), a message on stderr containing every word, nothing on stdout,
/// and no panic.
pub fn assert_bad_input(o: &Output, words: &[&str]) {
    let err = stderr(o);
    assert_eq!(o.status.code(), Some(2), "exit status; stderr:\n{err}");
    assert!(!err.contains("panicked"), "{err}");
    assert!(o.stdout.is_empty(), "nothing on stdout, got:\n{}", stdout(o));
    for w in words {
        assert!(err.contains(w), "`{w}` missing from stderr:\n{err}");
    }
}
