//! `permeant family FILE --vary ADDRESS --from A --to B --step S [--measure …] [--csv OUT]
//! [--json]`: one run per value of one number of the scenario, in parallel, each measured
//! (clamp-and-volume.md, "Families"). Without `--vary` the file's own `run.family` is used.

use std::path::PathBuf;

use serde::Serialize;

use super::output::{optional_csv, write_csv};
use serde_json::{Map, Value};

use crate::analysis::family::{FamilyTable, Measure, analyse, run_family};
use crate::analysis::metrics::SpikeSettings;
use crate::engine::SolverSettings;
use crate::report::csv::number;
use crate::scenario::{Address, range_values};

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The scenario file.
    file: PathBuf,
    /// The number to vary, by its field path (e.g. protocol[0].to_mv, species[1].outside_mm).
    /// Without it, the file's run.family is used.
    #[arg(long, value_name = "ADDRESS", requires_all = ["from", "to", "step"])]
    vary: Option<String>,
    /// First value.
    #[arg(long, value_name = "A", allow_negative_numbers = true)]
    from: Option<f64>,
    /// Last value (included when the steps reach it).
    #[arg(long, value_name = "B", allow_negative_numbers = true)]
    to: Option<f64>,
    /// Distance between values (> 0; the values go down when B < A).
    #[arg(long, value_name = "S", allow_negative_numbers = true)]
    step: Option<f64>,
    /// What to measure on each run, comma-separated: peak:FROM:UNTIL, late:FROM:UNTIL,
    /// tail:AT, spikes:FROM:UNTIL, latency:FROM:UNTIL (ms). Default: the peak over the whole
    /// run in voltage clamp, spike count and latency over the whole run in current clamp.
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    measure: Vec<String>,
    /// Write one row per run, one column per measurement, to this CSV file.
    #[arg(long, value_name = "OUT")]
    csv: Option<PathBuf>,
    /// Print one JSON object instead of a table.
    #[arg(long)]
    json: bool,
}

#[derive(Serialize)]
struct BoltzmannJson {
    v_half_mv: f64,
    slope_mv: f64,
    se_v_half_mv: f64,
    se_slope_mv: f64,
}

pub fn run(a: Args) -> anyhow::Result<()> {
    let s = super::load(&a.file)?;
    // The CSV target is checked before any run, and written like every command's output.
    let csv_out = optional_csv(&a.file, a.csv.as_deref())?;
    super::print_warnings(&a.file, &s);
    let file = a.file.display().to_string();
    let (field, values) = match (&a.vary, a.from, a.to, a.step, &s.run.family) {
        (Some(vary), Some(from), Some(to), Some(step), _) => {
            let field: Address = vary
                .parse()
                .map_err(|e| super::bad(format!("{file}: --vary: {e}")))?;
            let values = range_values(from, to, step).map_err(|e| super::bad(format!("{file}: {e}")))?;
            (field, values)
        }
        (None, _, _, _, Some(f)) => {
            let values = f
                .values()
                .map_err(|e| super::bad(format!("{file}: {}: {e}", e.path())))?;
            (f.field(), values)
        }
        _ => {
            return Err(super::bad(format!(
                "{file}: say what to vary with --vary ADDRESS --from A --to B --step S (the file has no run.family)"
            )));
        }
    };
    let measures = parse_measures(&a.measure, s.run.duration_ms, !s.run.mode.is_current_clamp())
        .map_err(|e| super::bad(format!("--measure: {e}")))?;

    let runs = super::with_progress(values.len(), "runs", |control| {
        run_family(&s, field, &values, &SolverSettings::default(), control)
    })
    .map_err(|e| {
        let msg = format!("{file}: {e}");
        if e.is_bad_input() {
            super::bad(msg)
        } else {
            anyhow::anyhow!(msg)
        }
    })?;
    let kinds: Vec<Measure> = measures.iter().map(|m| m.1).collect();
    let table = analyse(&runs, &kinds, SpikeSettings::default());
    let names: Vec<&str> = measures.iter().map(|m| m.0.as_str()).collect();
    if let Some(out) = &csv_out {
        write_csv(out, &csv(&names, &table))?;
    }
    let vary = field.to_string();
    if a.json {
        super::emit(&format!(
            "{}\n",
            serde_json::to_string(&json(&vary, &names, &table))?
        ))?;
    } else {
        super::emit(&text(&s.title, &vary, field.field().unit, &names, &table))?;
    }
    Ok(())
}

/// The `--measure` items as written, each with its measurement; the mode's default when none.
fn parse_measures(
    items: &[String],
    duration_ms: f64,
    clamped: bool,
) -> Result<Vec<(String, Measure)>, String> {
    let items: Vec<String> = if items.iter().all(|x| x.trim().is_empty()) {
        let d = number(duration_ms);
        if clamped {
            vec![format!("peak:0:{d}")]
        } else {
            vec![format!("spikes:0:{d}"), format!("latency:0:{d}")]
        }
    } else {
        items.iter().filter(|x| !x.trim().is_empty()).cloned().collect()
    };
    items
        .into_iter()
        .map(|x| {
            let m: Measure = x
                .parse()
                .map_err(|e: crate::analysis::family::MeasureError| e.to_string())?;
            Ok((x, m))
        })
        .collect()
}

/// The JSON object of command-line.md and clamp-and-volume.md.
fn json(vary: &str, names: &[&str], t: &FamilyTable) -> Value {
    let runs: Vec<Value> = t
        .values
        .iter()
        .zip(&t.cells)
        .map(|(v, row)| {
            let mut measures = Map::new();
            for (name, m) in names.iter().zip(row) {
                measures.insert(
                    (*name).to_string(),
                    serde_json::json!({"value": m.value, "at_ms": m.at_ms}),
                );
            }
            serde_json::json!({"value": v, "measures": measures})
        })
        .collect();
    let boltzmann = t.boltzmann.map(|b| BoltzmannJson {
        v_half_mv: b.v_half_mv,
        slope_mv: b.slope_mv,
        se_v_half_mv: b.se_v_half_mv,
        se_slope_mv: b.se_slope_mv,
    });
    serde_json::json!({
        "vary": vary,
        "runs": runs,
        "reversal_mv": t.reversal_mv,
        "boltzmann": boltzmann,
    })
}

fn cell(x: Option<f64>) -> String {
    x.map_or(String::new(), number)
}

/// `value,<measure>,…` rows; shortest round-trip numbers, an empty cell where undefined.
fn csv(names: &[&str], t: &FamilyTable) -> String {
    let mut o = String::from("value");
    for n in names {
        o.push(',');
        o += &crate::report::csv::quote(n);
    }
    o.push('\n');
    for (v, row) in t.values.iter().zip(&t.cells) {
        o += &number(*v);
        for m in row {
            o.push(',');
            o += &cell(m.value);
        }
        o.push('\n');
    }
    o
}

/// A measured value as the table shows it: counts whole, the rest to four decimals.
fn shown(m: &Measure, x: Option<f64>) -> String {
    fixed(x, if matches!(m, Measure::Spikes { .. }) { 0 } else { 4 })
}

fn fixed(x: Option<f64>, digits: usize) -> String {
    x.map_or("—".to_string(), |v| format!("{v:.digits$}"))
}

/// The human-readable table: one row per run, then the reversal potential and the fit.
fn text(title: &str, vary: &str, unit: &str, names: &[&str], t: &FamilyTable) -> String {
    let mut o = super::title_line(title);
    o += &format!("{} run(s) over {vary}\n\n", t.values.len());
    let head = if unit.is_empty() {
        vary.to_string()
    } else {
        format!("{vary} ({unit})")
    };
    let w = head.chars().count().max(10);
    o += &format!("{head:>w$}");
    let widths: Vec<usize> = names.iter().map(|n| n.chars().count().max(12)).collect();
    for (n, cw) in names.iter().zip(&widths) {
        o += &format!("  {n:>cw$}");
    }
    let chord = t.reversal_mv.is_some();
    if chord {
        o += &format!("  {:>12}  {:>8}", "G (mS/cm²)", "G/Gmax");
    }
    let blocked = !t.blocked.is_empty();
    if blocked {
        o += &format!("  {:>8}", "blocked");
    }
    o += "\n";
    for (k, (v, row)) in t.values.iter().zip(&t.cells).enumerate() {
        o += &format!("{:>w$}", number(*v));
        for ((m, kind), cw) in row.iter().zip(&t.measures).zip(&widths) {
            o += &format!("  {:>cw$}", shown(kind, m.value));
        }
        if chord {
            o += &format!(
                "  {:>12}  {:>8}",
                fixed(t.chord_ms_per_cm2.get(k).copied().flatten(), 5),
                fixed(t.g_rel.get(k).copied().flatten(), 3)
            );
        }
        if blocked {
            o += &format!("  {:>8}", fixed(t.blocked.get(k).copied().flatten(), 3));
        }
        o += "\n";
    }
    if let Some(first) = names.first().filter(|_| unit == "mV") {
        o += &format!(
            "\nreversal potential of {first}: {}\n",
            t.reversal_mv.map_or(
                "none (the current keeps one sign, or the family does not vary a potential in voltage clamp)"
                    .to_string(),
                |e| format!("{e:.2} mV")
            )
        );
    }
    if let Some(b) = t.boltzmann {
        o += &format!(
            "Boltzmann fit of G/Gmax: V½ = {:.2} ± {:.2} mV, k = {:.2} ± {:.2} mV\n",
            b.v_half_mv, b.se_v_half_mv, b.slope_mv, b.se_slope_mv
        );
    }
    if t.clamped
        && let Ok(d) = crate::analysis::block::dose_block(t, 0)
    {
        match d.fit {
            Ok(f) => {
                o += &format!(
                    "\nHill fit of the fraction blocked ({}): IC50 = {} ± {} µM, Hill coefficient = {} ± {}\n",
                    names.first().copied().unwrap_or_default(),
                    significant(f.ic50_um),
                    significant(f.se_ic50_um),
                    significant(f.hill),
                    significant(f.se_hill)
                );
            }
            Err(e) => o += &format!("\nno Hill fit: {e}\n"),
        }
    }
    o
}

/// Four significant digits, in scientific notation when very small or large.
fn significant(x: f64) -> String {
    let a = x.abs();
    if a != 0.0 && !(1e-3..1e5).contains(&a) {
        format!("{x:.3e}")
    } else {
        let digits = if a == 0.0 {
            0
        } else {
            (3 - a.log10().floor() as i32).max(0) as usize
        };
        format!("{x:.digits$}")
    }
}
