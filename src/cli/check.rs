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
    super::emit("ok\n")
}
