//! `permeant scan FILE --vary WHAT --from A --to B --points N [--log] [--csv OUT] [--json]`:
//! the GHK and steady-state potentials across a range of one input, on every core.

use std::path::PathBuf;

use serde::Serialize;

use super::output::{optional_csv, write_csv};
use super::readable;
use crate::analysis::scan::{NernstLine, ScanPoint, ScanRange, Vary, nernst_line, scan, scan_csv};
use crate::physics::Undefined;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The scenario file.
    file: PathBuf,
    /// What to vary: temperature_c, outside_mm:NAME, inside_mm:NAME, permeability:NAME (NAME a
    /// species), dose_um:LABEL (LABEL an agent), or replace:OLD:NEW (compound OLD of the bath
    /// solution replaced by NEW, the value being the mM of NEW).
    #[arg(long, value_name = "WHAT")]
    vary: String,
    /// First value of the range.
    #[arg(long, value_name = "A", allow_hyphen_values = true, value_parser = super::parse_number)]
    from: f64,
    /// Last value of the range.
    #[arg(long, value_name = "B", allow_hyphen_values = true, value_parser = super::parse_number)]
    to: f64,
    /// Number of values, ends included (at most 100000).
    #[arg(long, value_name = "N", allow_hyphen_values = true, value_parser = parse_points)]
    points: usize,
    /// Space the values evenly on a log scale (both ends above 0).
    #[arg(long)]
    log: bool,
    /// Also write `value,ghk_mv,resting_mv` rows to this CSV file (an undefined potential is an
    /// empty cell).
    #[arg(long, value_name = "OUT")]
    csv: Option<PathBuf>,
    /// Print one JSON object instead of a table.
    #[arg(long)]
    json: bool,
}

/// The number of points in plain words, whatever was typed (`-3`, `2.5`, `1e99`).
fn parse_points(text: &str) -> Result<usize, String> {
    let wanted = format!(
        "the number of points must be a whole number from 1 to {}",
        crate::analysis::scan::MAX_POINTS
    );
    match text.trim().parse::<f64>() {
        Ok(x) if x.fract() == 0.0 && (1.0..=crate::analysis::scan::MAX_POINTS as f64).contains(&x) => {
            Ok(x as usize)
        }
        Ok(_) => Err(format!("{wanted} (got {text})")),
        Err(_) => Err(format!("{wanted}; \"{text}\" is not a number")),
    }
}

#[derive(Serialize)]
struct PointJson {
    value: f64,
    ghk_mv: Option<f64>,
    resting_mv: Option<f64>,
}

#[derive(Serialize)]
struct ScanJson<'a> {
    vary: &'a str,
    points: Vec<PointJson>,
}

pub fn run(a: Args) -> anyhow::Result<()> {
    let s = super::load(&a.file)?;
    let csv_out = optional_csv(&a.file, a.csv.as_deref())?;
    super::print_warnings(&a.file, &s);
    if let Some(spec) = a.vary.strip_prefix("replace:") {
        let range = ScanRange {
            from: a.from,
            to: a.to,
            points: a.points,
            log: a.log,
        };
        return super::replace::run(
            &s,
            super::replace::Request {
                file: &a.file,
                vary: &a.vary,
                spec,
                range,
                csv: csv_out.as_ref(),
                json: a.json,
            },
        );
    }
    let in_file = |e: &dyn std::fmt::Display| format!("{}: {e}", a.file.display());
    let vary =
        Vary::parse(&a.vary, &s).map_err(|e| super::bad(format!("{}: --vary: {e}", a.file.display())))?;
    let range = ScanRange {
        from: a.from,
        to: a.to,
        points: a.points,
        log: a.log,
    };

    let points = super::with_progress(a.points, "points", |control| scan(&s, &vary, &range, control))
        .map_err(|e| {
            let msg = in_file(&e);
            if e.is_bad_input() {
                super::bad(msg)
            } else {
                anyhow::anyhow!(msg)
            }
        })?;

    report_undefined(&vary, &points);
    if let Some(out) = &csv_out {
        write_csv(out, &scan_csv(&points))?;
    }
    if a.json {
        let j = ScanJson {
            vary: &a.vary,
            points: points
                .iter()
                .map(|p| PointJson {
                    value: p.value,
                    ghk_mv: p.ghk_mv,
                    resting_mv: p.resting_mv,
                })
                .collect(),
        };
        super::emit(&format!("{}\n", serde_json::to_string(&j)?))?;
    } else {
        let values: Vec<f64> = points.iter().map(|p| p.value).collect();
        super::emit(&table(
            &s.title,
            &vary,
            &range,
            &points,
            nernst_line(&s, &vary, &values).as_ref(),
        ))?;
    }
    Ok(())
}

/// One stderr line per distinct reason a potential is undefined, with how often and where first.
fn report_undefined(vary: &Vary, points: &[ScanPoint]) {
    for (what, get) in [
        (
            "GHK potential",
            (|p: &ScanPoint| p.ghk_undefined.clone()) as fn(&ScanPoint) -> Option<Undefined>,
        ),
        ("resting potential", |p: &ScanPoint| p.resting_undefined.clone()),
    ] {
        let mut seen: Vec<(Undefined, usize, f64)> = Vec::new();
        for p in points {
            if let Some(why) = get(p) {
                match seen.iter_mut().find(|x| x.0 == why) {
                    Some(x) => x.1 += 1,
                    None => seen.push((why, 1, p.value)),
                }
            }
        }
        for (why, count, first) in seen {
            super::note(&format!(
                "permeant: the {what} is undefined at {count} point(s), first at {vary} = {first}: {why}"
            ));
        }
    }
}

fn mv(x: Option<f64>) -> String {
    x.map_or("—".to_string(), |v| format!("{v:.2}"))
}

/// The human-readable table.
fn table(
    title: &str,
    vary: &Vary,
    range: &ScanRange,
    points: &[ScanPoint],
    nernst: Option<&NernstLine>,
) -> String {
    let mut o = super::title_line(title);
    o += &format!(
        "{} from {} to {}, {} point(s), {} spacing\n",
        vary.label(),
        readable(range.from),
        readable(range.to),
        range.points,
        if range.log { "log" } else { "linear" }
    );
    if let Some(n) = nernst {
        o += &format!(
            "E_{} is its Nernst potential ({:+.2} mV per decade)\n",
            n.species, n.slope_mv_per_decade
        );
    }
    o += "\n";
    let head = format!("{} ({})", vary.quantity(), vary.unit());
    let w = head.chars().count().max(12);
    o += &format!("{head:>w$}  {:>10}  {:>12}", "GHK (mV)", "resting (mV)");
    if let Some(n) = nernst {
        o += &format!("  {:>12}", format!("E_{} (mV)", n.species));
    }
    o += "\n";
    for (k, p) in points.iter().enumerate() {
        o += &format!(
            "{:>w$}  {:>10}  {:>12}",
            readable(p.value),
            mv(p.ghk_mv),
            mv(p.resting_mv)
        );
        if let Some(n) = nernst {
            o += &format!("  {:>12}", mv(n.e_mv.get(k).copied().flatten()));
        }
        o += "\n";
    }
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_writes_undefined_as_an_empty_cell() {
        let p = |value: f64, ghk_mv: Option<f64>, resting_mv: Option<f64>| ScanPoint {
            value,
            ghk_mv,
            resting_mv,
            ghk_undefined: ghk_mv.is_none().then_some(Undefined::AlwaysOutward),
            resting_undefined: resting_mv.is_none().then_some(Undefined::AlwaysOutward),
        };
        let text = scan_csv(&[p(0.1, Some(-70.25), Some(-71.0)), p(0.0, None, None)]);
        assert_eq!(text, "value,ghk_mv,resting_mv\n0.1,-70.25,-71\n0,,\n");
        assert_eq!(readable(1.2589254117941673), "1.25893");
        assert_eq!(readable(150.0), "150");
        assert_eq!(readable(2.5e-8), "2.50000e-8");
        assert_eq!(readable(0.0), "0");
        assert_eq!(readable(-12.5), "-12.5");
    }
}
