//! The command line: argument parsing (clap) and the exit-code policy of command-line.md.
//! Each subcommand lives in its own file and is a thin front over the core.

mod check;
mod family;
mod fit;
mod output;
mod replace;
mod rest;
mod run;
mod scan;
mod solutions;

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand};

/// A failure caused by what the user gave (arguments or files): exit status 2.
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct BadInput(pub String);

/// Shorthand for returning a bad-input error.
pub fn bad(msg: impl Into<String>) -> anyhow::Error {
    anyhow::Error::new(BadInput(msg.into()))
}

#[derive(Debug, Parser)]
#[command(
    name = "permeant",
    version,
    about = "Membrane potential from solutions, permeabilities, pumps and channels",
    long_about = "Membrane potential from solutions, permeabilities, pumps and channels.\n\
        With no arguments, opens the window; with a scenario file, opens the window on it.\n\
        For research and teaching, not for diagnosing or treating anyone.",
    args_conflicts_with_subcommands = true
)]
struct Cli {
    #[command(subcommand)]
    command: Option<Command>,
    /// A scenario file (.ron) to open in the window.
    file: Option<PathBuf>,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Reversal potentials, the passive GHK potential and the steady state at t = 0.
    Rest(rest::Args),
    /// Integrate the protocol over time; write samples as CSV and optionally a figure as SVG.
    Run(run::Args),
    /// Validate a scenario file: prints `ok`, or the errors (exit status 2).
    Check(check::Args),
    // "Scan", because to electrophysiologists a sweep is one recorded episode; `sweep` is
    // still accepted, unlisted, for one release.
    /// Vary one input over a range: the GHK and the steady-state potential at each value.
    #[command(alias = "sweep")]
    Scan(scan::Args),
    /// Fit permeability ratios (relative to the first species) to measured potentials.
    Fit(fit::Args),
    /// One run per value of one number (by its field path), in parallel, each measured.
    Family(family::Args),
    /// Each solution's ions and checks, and the junction potentials of the recording.
    Solutions(solutions::Args),
}

/// Parses the arguments, runs, and turns the outcome into command-line.md's exit status.
pub fn main() -> ExitCode {
    // A mistyped command followed by more words (`permeant chek f.ron`) would otherwise reach
    // clap as a file name with stray arguments, and get its confusing message.
    if let Some(first) = std::env::args_os().nth(1).map(PathBuf::from)
        && !first.to_string_lossy().starts_with('-')
        && !COMMANDS.contains(&first.to_string_lossy().as_ref())
        && first.as_os_str() != "sweep"
        && let Err(e) = not_a_command(Some(&first))
    {
        note(&format!("permeant: {e:#}"));
        return ExitCode::from(2);
    }
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let _ = e.print();
            return ExitCode::from(u8::try_from(e.exit_code()).unwrap_or(2));
        }
    };
    let result = match cli.command {
        Some(Command::Rest(a)) => rest::run(a),
        Some(Command::Run(a)) => run::run(a),
        Some(Command::Check(a)) => check::run(a),
        Some(Command::Scan(a)) => scan::run(a),
        Some(Command::Fit(a)) => fit::run(a),
        Some(Command::Family(a)) => family::run(a),
        Some(Command::Solutions(a)) => solutions::run(a),
        None => not_a_command(cli.file.as_deref()).and_then(|()| open_window(cli.file)),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            note(&format!("permeant: {e:#}"));
            if is_bad_input(&e) {
                ExitCode::from(2)
            } else {
                ExitCode::from(1)
            }
        }
    }
}

fn is_bad_input(e: &anyhow::Error) -> bool {
    e.chain()
        .any(|c| c.is::<BadInput>() || c.is::<crate::scenario::ScenarioError>())
}

/// The names a user types as the first word.
const COMMANDS: [&str; 8] = [
    "rest",
    "run",
    "check",
    "scan",
    "fit",
    "family",
    "solutions",
    "help",
];

/// A first word that names no file but is close to a command (`permeant chek`) is a mistyped
/// command, not a scenario for the window to open.
fn not_a_command(file: Option<&std::path::Path>) -> anyhow::Result<()> {
    let Some(word) = file.and_then(|f| f.to_str()) else {
        return Ok(());
    };
    if std::path::Path::new(word).exists() || word.contains(['/', '\\', '.']) {
        return Ok(());
    }
    let nearest = COMMANDS
        .iter()
        .map(|c| (strsim::damerau_levenshtein(word, c), *c))
        .min()
        .filter(|(d, c)| *d <= 2.max(c.len() / 3));
    match nearest {
        Some((_, c)) => Err(bad(format!(
            "`{word}` is not a command; did you mean `permeant {c}`? (see `permeant --help`)"
        ))),
        None => Err(bad(format!(
            "`{word}` is neither a command nor a file; the commands are {} (see `permeant --help`)",
            COMMANDS.join(", ")
        ))),
    }
}

#[cfg(feature = "gui")]
fn open_window(file: Option<PathBuf>) -> anyhow::Result<()> {
    #[cfg(all(unix, not(target_os = "macos")))]
    if std::env::var_os("DISPLAY").is_none_or(|d| d.is_empty())
        && std::env::var_os("WAYLAND_DISPLAY").is_none_or(|d| d.is_empty())
    {
        return Err(bad(
            "no display is available (neither DISPLAY nor WAYLAND_DISPLAY is set), so the window \
             cannot open; run permeant headless with a command, such as `permeant check FILE`, \
             `permeant rest FILE` or `permeant run FILE --csv OUT` (see `permeant --help`)",
        ));
    }
    crate::ui::run(file)
}

/// A build without the window says how to get it, and what it can do instead.
#[cfg(not(feature = "gui"))]
fn open_window(_file: Option<PathBuf>) -> anyhow::Result<()> {
    Err(bad(
        "this permeant was built without the window (the `gui` feature); rebuild with \
         `cargo build --release` (the feature is on by default) to get it, or use a \
         subcommand such as `permeant rest FILE` (see `permeant --help`)",
    ))
}

/// Writes command output to stdout. A closed pipe (`permeant rest f.ron | head -1`) ends the
/// output quietly; any other write failure is reported instead of panicking as `println!` would.
pub fn emit(text: &str) -> anyhow::Result<()> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => {
            Err(anyhow::anyhow!("cannot write the output: {e}"))
        }
        _ => Ok(()),
    }
}

/// The first line of a readable report: the scenario's title, or nothing when it has none.
pub fn title_line(title: &str) -> String {
    if title.is_empty() {
        String::new()
    } else {
        format!("{title}\n")
    }
}

/// The width of a report's name column: its longest name, and at least the word "species".
pub fn name_width<'a>(names: impl Iterator<Item = &'a str>) -> usize {
    names.map(|n| n.chars().count()).max().unwrap_or(0).max(7)
}

/// Runs `work` with a control that counts finished items; while it runs, and when stderr is a
/// terminal, a line on stderr says how many of `n` `items` are done (command-line.md: long runs
/// print progress).
pub fn with_progress<T>(
    n: usize,
    items: &str,
    work: impl FnOnce(&crate::analysis::scan::ScanControl) -> T,
) -> T {
    use std::io::IsTerminal;
    use std::sync::Arc;
    use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
    let progress = Arc::new(AtomicUsize::new(0));
    let control = crate::analysis::scan::ScanControl {
        progress: Some(progress.clone()),
        cancel: None,
    };
    let done = AtomicBool::new(false);
    std::thread::scope(|scope| {
        if std::io::stderr().is_terminal() {
            let done = &done;
            scope.spawn(move || {
                let mut shown = false;
                loop {
                    std::thread::sleep(std::time::Duration::from_millis(250));
                    if done.load(Ordering::Relaxed) {
                        break;
                    }
                    note_inline(&format!(
                        "\rpermeant: {} of {n} {items}",
                        progress.load(Ordering::Relaxed)
                    ));
                    shown = true;
                }
                if shown {
                    note("");
                }
            });
        }
        let r = work(&control);
        done.store(true, Ordering::Relaxed);
        r
    })
}

/// Reads a scenario, turning its error into bad input (exit 2).
pub fn load(path: &std::path::Path) -> anyhow::Result<crate::scenario::Valid> {
    crate::scenario::read_file(path).map_err(anyhow::Error::new)
}

/// Prints the scenario's warnings to stderr.
pub fn print_warnings(path: &std::path::Path, s: &crate::scenario::Scenario) {
    for w in crate::scenario::warnings(s) {
        note(&format!("permeant: warning: {}: {w}", path.display()));
    }
}

/// Writes a line to stderr. A closed or full stderr loses the message but never panics (as
/// `eprintln!` would), so the exit status still tells the outcome.
pub fn note(line: &str) {
    use std::io::Write;
    let mut err = std::io::stderr().lock();
    let _ = err.write_all(line.as_bytes()).and_then(|()| err.write_all(b"\n"));
}

/// Like [`note`], without ending the line (a progress counter rewritten with `\r`).
pub fn note_inline(text: &str) {
    use std::io::Write;
    let mut err = std::io::stderr().lock();
    let _ = err.write_all(text.as_bytes()).and_then(|()| err.flush());
}

/// A value for reading: up to six significant digits, scientific form outside 0.001–10⁶, so a
/// value such as 1e308 is not printed as 309 digits.
pub fn readable(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        format!("{x}")
    } else if (1e-3..1e6).contains(&x.abs()) {
        let digits = (5 - x.abs().log10().floor() as i32).clamp(0, 9) as usize;
        let s = format!("{x:.digits$}");
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        }
    } else {
        format!("{x:.5e}")
    }
}

/// A number option: any number, negative ones included (the command says what range it
/// takes), or a plain message instead of clap's.
pub fn parse_number(text: &str) -> Result<f64, String> {
    text.trim()
        .parse::<f64>()
        .map_err(|_| format!("\"{text}\" is not a number"))
}
