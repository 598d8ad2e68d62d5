//! `permeant solutions FILE [--json]`: each solution's ions and checks, then the junction
//! potentials of the recording (solutions.md, "Outputs").

use std::path::PathBuf;

use serde::Serialize;

use crate::scenario::Scenario;
use crate::solutions::{Junction, Plan, plan};

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The scenario file.
    file: PathBuf,
    /// Print one JSON object instead of a table.
    #[arg(long)]
    json: bool,
}

/// The JSON shape of solutions.md, keys in its order.
#[derive(Serialize)]
struct SolutionsJson<'a> {
    temperature_c: f64,
    activities: bool,
    solutions: Vec<SolutionJson<'a>>,
    junctions: Vec<JunctionJson<'a>>,
}

#[derive(Serialize)]
struct SolutionJson<'a> {
    name: &'a str,
    ions: Vec<IonJson<'a>>,
    cation_meq: f64,
    anion_meq: f64,
    imbalance_meq: f64,
    osmolarity_mosm: f64,
    ionic_strength_mm: f64,
    titrant_mm: Option<f64>,
}

#[derive(Serialize)]
struct IonJson<'a> {
    name: &'a str,
    charge: i32,
    mm: f64,
}

#[derive(Serialize)]
struct JunctionJson<'a> {
    pipette: &'a str,
    bath: &'a str,
    ljp_mv: f64,
    reference_mv: f64,
    offset_mv: f64,
}

pub fn run(a: Args) -> anyhow::Result<()> {
    let s = super::load(&a.file)?;
    super::print_warnings(&a.file, &s);
    if s.solutions.is_empty() {
        eprintln!(
            "permeant: {} defines no solutions (solutions.md: `solutions: [ … ]`)",
            a.file.display()
        );
    }
    let p = plan(&s);
    let junctions = p.junctions(&s);
    let text = if a.json {
        format!("{}\n", serde_json::to_string(&json(&s, &p, &junctions))?)
    } else {
        table(&s, &p, &junctions)
    };
    super::emit(&text)
}

fn json<'a>(s: &'a Scenario, p: &'a Plan, junctions: &'a [Junction]) -> SolutionsJson<'a> {
    SolutionsJson {
        temperature_c: s.temperature_c,
        activities: s.activities,
        solutions: s
            .solutions
            .iter()
            .zip(&p.mixtures)
            .map(|(sol, m)| {
                let c = m.checks();
                SolutionJson {
                    name: &sol.name,
                    ions: m
                        .particles
                        .iter()
                        .map(|x| IonJson {
                            name: &x.name,
                            charge: x.charge,
                            mm: x.mm,
                        })
                        .collect(),
                    cation_meq: c.cation_meq,
                    anion_meq: c.anion_meq,
                    imbalance_meq: c.imbalance_meq,
                    osmolarity_mosm: c.osmolarity_mosm,
                    ionic_strength_mm: c.ionic_strength_mm,
                    titrant_mm: c.titrant_mm,
                }
            })
            .collect(),
        junctions: junctions
            .iter()
            .map(|j| JunctionJson {
                pipette: &j.pipette,
                bath: &j.bath,
                ljp_mv: j.ljp_mv,
                reference_mv: j.reference_mv,
                offset_mv: j.offset_mv,
            })
            .collect(),
    }
}

/// The human-readable report.
fn table(s: &Scenario, p: &Plan, junctions: &[Junction]) -> String {
    let mut o = super::title_line(&s.title);
    o += &format!(
        "temperature {:.2} °C, {}\n",
        s.temperature_c,
        if s.activities {
            "activities (Davies) on"
        } else {
            "concentrations (activities off)"
        }
    );
    for (sol, m) in s.solutions.iter().zip(&p.mixtures) {
        let c = m.checks();
        o += &format!("\n{}\n", sol.name);
        let w = super::name_width(m.particles.iter().map(|x| x.name.as_str()));
        for x in &m.particles {
            o += &format!("  {:<w$}  {:>+3}  {:>10.3} mM\n", x.name, x.charge, x.mm);
        }
        o += &format!(
            "  cations {:.2} mEq/L, anions {:.2} mEq/L, difference {:+.2} mEq/L\n",
            c.cation_meq, c.anion_meq, c.imbalance_meq
        );
        o += &format!(
            "  osmolarity {:.1} mOsm/L (ideal), ionic strength {:.1} mM\n",
            c.osmolarity_mosm, c.ionic_strength_mm
        );
        if let (Some(t), Some(name)) = (c.titrant_mm, sol.titrant.as_deref()) {
            o += &format!("  {name} to pH {}: {t:.2} mM\n", sol.ph.unwrap_or(f64::NAN));
        }
    }
    if !junctions.is_empty() {
        o += "\njunctions (bath relative to pipette; recorded = membrane + offset)\n";
        for j in junctions {
            o += &format!(
                "  {} | {}: junction {:+.2} mV, reference {:+.2} mV, offset {:+.2} mV\n",
                j.pipette, j.bath, j.ljp_mv, j.reference_mv, j.offset_mv
            );
        }
    }
    o
}
