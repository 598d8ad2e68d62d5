//! `permeant run FILE --csv OUT [--svg OUT] [--sample-ms X]`: integrate the protocol.

use std::io::{BufWriter, IsTerminal, Write};
use std::path::PathBuf;
use std::time::Instant;

use crate::engine::{Progress, Run, SolverSettings};
use crate::report::{csv, svg};

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The scenario file.
    file: PathBuf,
    /// Where to write the samples (CSV).
    #[arg(long, value_name = "OUT")]
    csv: PathBuf,
    /// Also write a figure of V(t) with reversal potentials (SVG).
    #[arg(long, value_name = "OUT")]
    svg: Option<PathBuf>,
    /// Sample interval in ms, instead of the file's run.sample_ms.
    #[arg(long, value_name = "X")]
    sample_ms: Option<f64>,
}

/// Samples written per chunk: the trace and the text buffer stay this small and are reused,
/// so a long run neither grows its memory nor copies it around as vectors grow.
const CHUNK_SAMPLES: u32 = 4096;

pub fn run(a: Args) -> anyhow::Result<()> {
    let mut s = super::load(&a.file)?;
    if let Some(x) = a.sample_ms {
        let mut changed = s.into_inner();
        changed.run.sample_ms = x;
        s = crate::scenario::validate(changed).map_err(|e| {
            let reason = e.first().map_or_else(String::new, |p| p.message.clone());
            super::bad(format!("--sample-ms {x}: {reason}"))
        })?;
    }
    super::print_warnings(&a.file, &s);
    let mut run = Run::new(&s, SolverSettings::default())
        .map_err(|e| super::bad(format!("{}: {e}", a.file.display())))?;
    let (mut t_all, mut v_all) = (Vec::new(), Vec::new());
    let keep_figure = a.svg.is_some();
    let show_progress = std::io::stderr().is_terminal();
    let started = Instant::now();
    // The run streams into a temporary file that replaces the target only when the whole run
    // succeeded: a failed run never leaves a truncated CSV that looks complete.
    let mut failure: Option<anyhow::Error> = None;
    let written = crate::scenario::write_atomic_with(&a.csv, |file| {
        let mut w = BufWriter::new(file);
        let model = run.model().clone();
        let mut rows = csv::RowWriter::new(&model);
        csv::write_header(&mut w, &model, run.trace())?;
        let mut last_note = Instant::now();
        loop {
            let progress = match run.advance(run.next_chunk(CHUNK_SAMPLES)) {
                Ok(p) => p,
                Err(e) => {
                    failure = Some(anyhow::anyhow!("{}: {e}", a.file.display()));
                    return Err(std::io::Error::other("the run failed"));
                }
            };
            rows.write_rows(&mut w, &model, run.trace())?;
            if keep_figure {
                t_all.extend_from_slice(&run.trace().t_ms);
                v_all.extend_from_slice(run.trace().v_mv());
            }
            run.trace_mut().discard_front();
            if show_progress && last_note.elapsed().as_secs_f64() > 0.5 {
                eprint!(
                    "\rpermeant: {:.0}% ({:.0} of {:.0} ms)",
                    100.0 * run.t_ms() / run.duration_ms(),
                    run.t_ms(),
                    run.duration_ms()
                );
                last_note = Instant::now();
            }
            if progress == Progress::Finished {
                break;
            }
        }
        w.flush()
    });
    if let Some(e) = failure {
        return Err(e);
    }
    written.map_err(|e| super::bad(format!("cannot write {}: {e}", a.csv.display())))?;
    if show_progress {
        let st = run.stats();
        eprintln!(
            "\rpermeant: done in {:.2} s: {} steps accepted, {} rejected, {} derivative evaluations",
            started.elapsed().as_secs_f64(),
            st.accepted,
            st.rejected,
            st.evaluations
        );
    }
    if let Some(path) = &a.svg {
        let mut fig = svg::figure_for(&s, &t_all, &v_all)?;
        if fig.title.is_empty() {
            fig.title = a.file.display().to_string();
        }
        let text = svg::render(&fig).map_err(|e| anyhow::anyhow!(e))?;
        crate::scenario::write_atomic(path, text.as_bytes())
            .map_err(|e| super::bad(format!("cannot write {}: {e}", path.display())))?;
    }
    Ok(())
}
