//! The `permeant` binary: the window, or a headless subcommand (see `permeant --help`).

fn main() -> std::process::ExitCode {
    permeant::cli::main()
}
