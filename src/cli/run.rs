//! `permeant run FILE --csv OUT [--svg OUT] [--sample-ms X] [--columns WHICH]`: integrate the
//! protocol, streaming the samples to the CSV as they are computed.

use std::io::{BufWriter, IsTerminal, Write};
use std::path::PathBuf;
use std::time::Instant;

use super::output::{Output, check_distinct, remove_temporaries_on_interrupt};
use crate::analysis::decimate::Envelope;
use crate::engine::{Progress, Run, SolverSettings};
use crate::report::csv::{self, Columns};
use crate::report::svg;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The scenario file.
    file: PathBuf,
    /// Where to write the samples (CSV); `-` is standard output.
    #[arg(long, value_name = "OUT")]
    csv: PathBuf,
    /// Also write a figure of V(t) with reversal potentials (SVG); `-` is standard output.
    #[arg(long, value_name = "OUT")]
    svg: Option<PathBuf>,
    /// Sample interval in ms, instead of the file's run.sample_ms.
    #[arg(long, value_name = "X", allow_hyphen_values = true, value_parser = super::parse_number)]
    sample_ms: Option<f64>,
    /// Which columns the CSV holds: `all` (the default), `currents` (time, potential and the
    /// currents) or `v` (time and potential only).
    #[arg(long, value_name = "WHICH", default_value = "all", value_parser = parse_columns)]
    columns: Columns,
}

fn parse_columns(text: &str) -> Result<Columns, String> {
    Columns::WORDS
        .iter()
        .find(|(w, _)| *w == text)
        .map(|(_, c)| *c)
        .ok_or_else(|| {
            let words: Vec<&str> = Columns::WORDS.iter().map(|(w, _)| *w).collect();
            format!(
                "\"{text}\" is not a choice of columns; choose one of {}",
                words.join(", ")
            )
        })
}

/// Bytes of text a run's CSV may reach; above it `run` refuses before starting. A CSV this
/// large is beyond what spreadsheets and most analysis scripts open.
pub const MAX_CSV_BYTES: f64 = 2e9;

/// Bytes one number takes in the CSV on average, with its comma: full-precision potentials,
/// currents and concentrations are written with up to 17 significant digits.
const BYTES_PER_NUMBER: f64 = 20.0;

/// Text per chunk of samples (the trace and the text buffer are this small and reused, so a
/// long run neither grows its memory nor copies it around as vectors grow).
const CHUNK_BYTES: f64 = 4e6;

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
    let mut outputs = vec![("--csv", a.csv.as_path())];
    if let Some(p) = &a.svg {
        outputs.push(("--svg", p.as_path()));
    }
    check_distinct(&[("scenario", a.file.as_path())], &outputs)?;
    let csv_out = Output::new(&a.csv, "--csv")?;
    let svg_out = a.svg.as_deref().map(|p| Output::new(p, "--svg")).transpose()?;
    super::print_warnings(&a.file, &s);
    let mut run = Run::new(&s, SolverSettings::default())
        .map_err(|e| super::bad(format!("{}: {e}", a.file.display())))?;
    let model = run.model().clone();
    let width = csv::header_of(&model, run.trace(), a.columns).len() as f64;
    let rows = (s.run.duration_ms / s.run.sample_ms).floor() + 2.0;
    let estimate = rows * width * BYTES_PER_NUMBER;
    if estimate > MAX_CSV_BYTES {
        return Err(super::bad(format!(
            "{}: the CSV would be about {} ({} rows of {} columns), more than the {} permeant \
             writes; write fewer rows with a larger --sample-ms (about {} ms keeps it under the \
             limit){}",
            a.file.display(),
            gigabytes(estimate),
            rows,
            width,
            gigabytes(MAX_CSV_BYTES),
            super::readable(round_up(s.run.sample_ms * estimate / MAX_CSV_BYTES)),
            if a.columns == Columns::Potential {
                String::new()
            } else {
                " or fewer columns with --columns v".to_string()
            }
        )));
    }
    remove_temporaries_on_interrupt();
    let chunk = (CHUNK_BYTES / (width * BYTES_PER_NUMBER)).clamp(16.0, 4096.0) as u32;
    run.cap_trace(chunk as usize);
    let mut envelope = svg_out
        .as_ref()
        .map(|_| Envelope::new((0.0, s.run.duration_ms), svg::TRACE_COLUMNS));
    let mut tracks = svg_out
        .as_ref()
        .map(|_| svg::Tracks::new(&model, s.run.duration_ms));
    let show_progress = std::io::stderr().is_terminal();
    let started = Instant::now();
    // A replaced CSV is streamed into a temporary file that takes the target's place only
    // when the whole run succeeded: a failed run never leaves a truncated CSV that looks
    // complete.
    let mut failure: Option<anyhow::Error> = None;
    let written = csv_out.write_with(|out| {
        let mut w = BufWriter::new(out);
        let mut rows = csv::RowWriter::new(&model).with_columns(a.columns);
        csv::write_header_of(&mut w, &model, run.trace(), a.columns)?;
        let mut last_note = Instant::now();
        loop {
            let progress = match run.advance(run.next_chunk(chunk)) {
                Ok(p) => p,
                Err(e) => {
                    failure = Some(super::bad(format!("{}: {e}", a.file.display())));
                    return Err(std::io::Error::other("the run failed"));
                }
            };
            rows.write_rows(&mut w, &model, run.trace())?;
            if let Some(env) = &mut envelope {
                env.extend(&run.trace().t_ms, run.trace().v_mv());
            }
            if let Some(tracks) = &mut tracks {
                tracks.extend(&model, run.trace());
            }
            run.trace_mut().discard_front();
            if show_progress && last_note.elapsed().as_secs_f64() > 0.5 {
                super::note_inline(&format!(
                    "\rpermeant: {:.0}% ({:.0} of {:.0} ms)",
                    100.0 * run.t_ms() / run.duration_ms(),
                    run.t_ms(),
                    run.duration_ms()
                ));
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
        super::note(&format!(
            "\rpermeant: done in {:.2} s: {} steps accepted, {} rejected, {} derivative evaluations",
            started.elapsed().as_secs_f64(),
            st.accepted,
            st.rejected,
            st.evaluations
        ));
    }
    if let (Some(out), Some(env)) = (&svg_out, &envelope) {
        let (t, v) = env.points();
        let mut fig = svg::figure_for(&s, &t, &v)?;
        if let Some(tracks) = &tracks {
            tracks.apply(&mut fig);
        }
        if fig.title.is_empty() {
            fig.title = a.file.display().to_string();
        }
        let text = svg::render(&fig).map_err(|e| anyhow::anyhow!(e))?;
        out.write_all(text.as_bytes())
            .map_err(|e| super::bad(format!("cannot write {}: {e}", out.path().display())))?;
    }
    Ok(())
}

fn gigabytes(bytes: f64) -> String {
    format!("{} GB", super::readable(bytes / 1e9))
}

/// `x` rounded up to two significant digits (0.59994 → 0.6, 1234 → 1300), for a suggestion.
fn round_up(x: f64) -> f64 {
    if !(x.is_finite() && x > 0.0) {
        return x;
    }
    let unit = 10f64.powf(x.log10().floor() - 1.0);
    (x / unit).ceil() * unit
}
