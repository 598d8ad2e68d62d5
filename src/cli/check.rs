//! `permeant check FILE`: validate a scenario.

use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The scenario file.
    file: PathBuf,
}

pub fn run(a: Args) -> anyhow::Result<()> {
    let s = super::load(&a.file)?;
    super::print_warnings(&a.file, &s);
    // A valid file whose cell has no resting state is still a file the window opens and `rest`
    // and `scan` describe, but `run` cannot start it: say so here, so that `check` and `run`
    // agree about what runs.
    let model = crate::engine::Model::new(&s);
    if let Err(e) = model.initial_state() {
        super::note(&format!(
            "permeant: warning: {}: `permeant run` cannot start this scenario: {e}; \
             give run.start a potential (Voltage(...)) or change the cell so that it has a resting state",
            a.file.display()
        ));
    }
    super::emit("ok\n")
}
