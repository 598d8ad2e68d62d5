//! The `permeant` binary: the window, or a headless subcommand (see `permeant --help`).

#![forbid(unsafe_code)]

fn main() -> std::process::ExitCode {
    permeant::cli::main()
}
