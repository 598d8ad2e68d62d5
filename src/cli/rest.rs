//! `permeant rest FILE [--json]`: reversal potentials, the GHK potential and the resting state.

use std::path::PathBuf;

use serde::Serialize;

use crate::analysis::{RestReport, SpeciesRow, rest_report};
use crate::constants::rt_over_f_mv;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The scenario file.
    file: PathBuf,
    /// Print one JSON object instead of a table.
    #[arg(long)]
    json: bool,
}

/// The JSON shape of command-line.md; keys after `resting_mv` are additions it allows.
#[derive(Serialize)]
struct RestJson<'a> {
    temperature_c: f64,
    species: &'a [SpeciesRow],
    ghk_mv: Option<f64>,
    resting_mv: Option<f64>,
    steady_states_mv: Vec<f64>,
    stable_steady_states_mv: Vec<f64>,
    /// With a tracked volume: the impermeant inside solute X (mM at t = 0) and its mean charge
    /// z_X, and whether they were derived from electroneutrality and iso-osmolarity.
    #[serde(skip_serializing_if = "Option::is_none")]
    impermeant: Option<ImpermeantJson>,
}

#[derive(Serialize)]
struct ImpermeantJson {
    inside_mm: f64,
    charge: f64,
    derived: bool,
}

pub fn run(a: Args) -> anyhow::Result<()> {
    let s = super::load(&a.file)?;
    super::print_warnings(&a.file, &s);
    let r = rest_report(&s)?;
    if let Err(why) = &r.ghk_mv {
        super::note(&format!("permeant: the GHK potential is undefined: {why}"));
    }
    if let Err(why) = &r.steady.resting_mv {
        super::note(&format!("permeant: the resting potential is undefined: {why}"));
    }
    if a.json {
        let j = RestJson {
            temperature_c: r.temperature_c,
            species: &r.species,
            ghk_mv: r.ghk_mv.as_ref().ok().copied(),
            resting_mv: r.resting_mv(),
            steady_states_mv: r.steady.crossings.iter().map(|c| c.v_mv).collect(),
            stable_steady_states_mv: r
                .steady
                .crossings
                .iter()
                .filter(|c| c.increasing)
                .map(|c| c.v_mv)
                .collect(),
            impermeant: r.impermeant.map(|x| ImpermeantJson {
                inside_mm: x.inside_mm,
                charge: x.charge,
                derived: x.derived,
            }),
        };
        super::emit(&format!("{}\n", serde_json::to_string(&j)?))?;
    } else {
        super::emit(&table(&s.title, &r))?;
    }
    Ok(())
}

fn mv(x: Option<f64>) -> String {
    x.map_or("—".to_string(), |v| format!("{v:.2} mV"))
}

/// The human-readable report.
pub fn table(title: &str, r: &RestReport) -> String {
    let mut o = super::title_line(title);
    o += &format!(
        "temperature {:.2} °C (RT/F = {:.3} mV)\n\n",
        r.temperature_c,
        rt_over_f_mv(r.temperature_c)
    );
    let name_w = super::name_width(r.species.iter().map(|s| s.name.as_str()));
    o += &format!(
        "{:<name_w$}  {:>6}  {:>12}  {:>12}  {:>14}  {:>10}  {:>12}\n",
        "species", "charge", "inside (mM)", "outside (mM)", "P (cm/s)", "P/P_max", "E_rev (mV)"
    );
    for s in &r.species {
        o += &format!(
            "{:<name_w$}  {:>+6}  {:>12}  {:>12}  {:>14.3e}  {:>10}  {:>12}\n",
            s.name,
            s.charge,
            format!("{}", s.inside_mm),
            format!("{}", s.outside_mm),
            s.permeability_cm_per_s,
            s.relative_permeability
                .map_or("—".to_string(), |x| format!("{x:.4}")),
            s.reversal_mv.map_or("—".to_string(), |v| format!("{v:.2}")),
        );
    }
    o += "\n";
    o += &format!(
        "GHK potential (passive, resting permeabilities): {}\n",
        mv(r.ghk_mv.as_ref().ok().copied())
    );
    o += &format!(
        "resting potential (steady state at t = 0, pump and channels included): {}\n",
        mv(r.resting_mv())
    );
    if r.steady.crossings.len() > 1 {
        let list: Vec<String> = r
            .steady
            .crossings
            .iter()
            .map(|c| {
                format!(
                    "{:.2} mV ({})",
                    c.v_mv,
                    if c.increasing { "stable in V" } else { "unstable" }
                )
            })
            .collect();
        o += &format!("all steady states: {}\n", list.join(", "));
    }
    if let Some(x) = r.impermeant {
        o += &format!(
            "impermeant inside solute: {:.4} mM, mean charge {:+.4}{}\n",
            x.inside_mm,
            x.charge,
            if x.derived {
                " (derived: electroneutral and iso-osmotic with the bath at t = 0)"
            } else {
                ""
            }
        );
    }
    o
}
