//! `permeant scan FILE --vary replace:OLD:NEW …`: an equimolar replacement in the bath
//! solution, with each point's junction potential (solutions.md, "Outputs").

use std::path::Path;

use serde::Serialize;

use super::output::{Output, write_csv};
use crate::analysis::scan::{ScanControl, ScanRange};
use crate::scenario::Valid;
use crate::solutions::replace::{Replace, ReplacePoint, replace_csv};

#[derive(Serialize)]
struct PointJson {
    value: f64,
    ghk_mv: Option<f64>,
    resting_mv: Option<f64>,
    ljp_mv: Option<f64>,
}

#[derive(Serialize)]
struct ScanJson<'a> {
    vary: &'a str,
    points: Vec<PointJson>,
}

/// What `scan` asked for, when `--vary` is a replacement.
pub struct Request<'a> {
    pub file: &'a Path,
    pub vary: &'a str,
    pub spec: &'a str,
    pub range: ScanRange,
    /// Checked against the scenario before the scan, as every command's output.
    pub csv: Option<&'a Output>,
    pub json: bool,
}

pub fn run(s: &Valid, q: Request<'_>) -> anyhow::Result<()> {
    let in_file = |e: &dyn std::fmt::Display| format!("{}: --vary: {e}", q.file.display());
    let r = Replace::parse(q.spec, s).map_err(|e| super::bad(in_file(&e)))?;
    let points = r.scan(s, &q.range, &ScanControl::default()).map_err(|e| {
        if e.is_bad_input() {
            super::bad(in_file(&e))
        } else {
            anyhow::anyhow!(in_file(&e))
        }
    })?;
    if let Some(out) = q.csv {
        write_csv(out, &replace_csv(&points))?;
    }
    if q.json {
        let j = ScanJson {
            vary: q.vary,
            points: points
                .iter()
                .map(|p| PointJson {
                    value: p.value,
                    ghk_mv: p.ghk_mv,
                    resting_mv: p.resting_mv,
                    ljp_mv: p.ljp_mv,
                })
                .collect(),
        };
        super::emit(&format!("{}\n", serde_json::to_string(&j)?))
    } else {
        super::emit(&table(&s.title, &r, &points))
    }
}

fn table(title: &str, r: &Replace, points: &[ReplacePoint]) -> String {
    let mv = |x: Option<f64>| x.map_or("—".to_string(), |v| format!("{v:.2}"));
    let mut o = super::title_line(title);
    o += &format!("{} replaced by {} in the bath, equimolar\n\n", r.old, r.new);
    o += &format!(
        "{:>12}  {:>10}  {:>12}  {:>10}\n",
        format!("{} (mM)", r.new),
        "GHK (mV)",
        "resting (mV)",
        "LJP (mV)"
    );
    for p in points {
        o += &format!(
            "{:>12.4}  {:>10}  {:>12}  {:>10}\n",
            p.value,
            mv(p.ghk_mv),
            mv(p.resting_mv),
            mv(p.ljp_mv)
        );
    }
    o
}
