//! `permeant fit FILE --data CSV --vary WHAT --free NAME[,NAME…] [--json]`: permeability
//! ratios fitted to measured potentials, with standard errors and residuals.

use std::path::PathBuf;

use serde::Serialize;
use serde::ser::{SerializeMap, Serializer};

use crate::analysis::fit::{FitError, FitResult, FitSpace, Residual, fit, read_points};
use crate::analysis::scan::Vary;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The scenario file.
    file: PathBuf,
    /// Measured points: a CSV file of `value,v_mv` rows (a header line is allowed).
    #[arg(long, value_name = "CSV")]
    data: PathBuf,
    /// The input the data's first column gives: temperature_c, outside_mm:NAME,
    /// inside_mm:NAME, permeability:NAME or dose_um:LABEL.
    #[arg(long, value_name = "WHAT")]
    vary: String,
    /// Species whose permeability is fitted, relative to the scenario's first species.
    #[arg(long, value_name = "NAME[,NAME…]", value_delimiter = ',', required = true)]
    free: Vec<String>,
    /// Subtract the recording's offset (liquid junction and reference electrode, from the
    /// scenario's `inside` and `outside` solutions) from each measured potential first.
    #[arg(long)]
    correct_junction: bool,
    /// Print one JSON object instead of a table.
    #[arg(long)]
    json: bool,
}

/// A JSON object whose keys keep the free species' order.
struct Ordered<'a>(Vec<(&'a str, f64)>);

impl Serialize for Ordered<'_> {
    fn serialize<S: Serializer>(&self, ser: S) -> Result<S::Ok, S::Error> {
        let mut m = ser.serialize_map(Some(self.0.len()))?;
        for (k, v) in &self.0 {
            m.serialize_entry(k, v)?;
        }
        m.end()
    }
}

/// command-line.md's keys first; the rest are additions it allows.
#[derive(Serialize)]
struct FitJson<'a> {
    ratios: Ordered<'a>,
    standard_errors: Ordered<'a>,
    rms_residual_mv: f64,
    reference: &'a str,
    permeabilities_cm_per_s: Ordered<'a>,
    degrees_of_freedom: usize,
    residuals: Vec<ResidualJson>,
}

#[derive(Serialize)]
struct ResidualJson {
    row: usize,
    value: f64,
    measured_mv: f64,
    fitted_mv: f64,
    residual_mv: f64,
}

impl From<&Residual> for ResidualJson {
    fn from(r: &Residual) -> Self {
        Self {
            row: r.row,
            value: r.value,
            measured_mv: r.measured_mv,
            fitted_mv: r.fitted_mv,
            residual_mv: r.residual_mv,
        }
    }
}

pub fn run(a: Args) -> anyhow::Result<()> {
    let s = super::load(&a.file)?;
    super::print_warnings(&a.file, &s);
    let vary =
        Vary::parse(&a.vary, &s).map_err(|e| super::bad(format!("{}: --vary: {e}", a.file.display())))?;
    let mut points =
        read_points(&a.data).map_err(|e| super::bad(format!("{} (--data): {e}", a.data.display())))?;
    if a.correct_junction {
        crate::solutions::correct_points(&s, &vary, &mut points)
            .map_err(|e| super::bad(format!("{}: --correct-junction: {e}", a.file.display())))?;
    }
    let free: Vec<String> = a
        .free
        .iter()
        .map(|n| n.trim().to_string())
        .filter(|n| !n.is_empty())
        .collect();
    let r = fit(&s, &vary, &free, &points, FitSpace::LogRatio).map_err(|e| {
        let place = match &e {
            FitError::InvalidPoint { .. } | FitError::NoPotential { .. } | FitError::TooFewPoints { .. } => {
                format!("{} (--data)", a.data.display())
            }
            FitError::UnknownSpecies { .. }
            | FitError::ReferenceFree { .. }
            | FitError::DuplicateFree { .. } => "--free".to_string(),
            _ => a.file.display().to_string(),
        };
        if e.is_bad_input() {
            super::bad(format!("{place}: {e}"))
        } else {
            anyhow::anyhow!("{place}: {e}")
        }
    })?;
    if a.json {
        let j = FitJson {
            ratios: Ordered(r.ratios.iter().map(|x| (x.name.as_str(), x.ratio)).collect()),
            standard_errors: Ordered(
                r.ratios
                    .iter()
                    .map(|x| (x.name.as_str(), x.standard_error))
                    .collect(),
            ),
            rms_residual_mv: r.rms_residual_mv,
            reference: &r.reference,
            permeabilities_cm_per_s: Ordered(
                r.ratios.iter().map(|x| (x.name.as_str(), x.p_cm_per_s)).collect(),
            ),
            degrees_of_freedom: r.degrees_of_freedom,
            residuals: r.residuals.iter().map(ResidualJson::from).collect(),
        };
        super::emit(&format!("{}\n", serde_json::to_string(&j)?))?;
    } else {
        super::emit(&table(&s.title, &vary, &r))?;
    }
    Ok(())
}

/// The human-readable report.
fn table(title: &str, vary: &Vary, r: &FitResult) -> String {
    let mut o = super::title_line(title);
    o += &format!(
        "permeabilities relative to {} (fixed), fitted to {} point(s) over {}\n\n",
        r.reference,
        r.residuals.len(),
        vary.label()
    );
    let name_w = super::name_width(r.ratios.iter().map(|x| x.name.as_str()));
    o += &format!(
        "{:<name_w$}  {:>12}  {:>12}  {:>14}\n",
        "species", "ratio", "std. error", "P (cm/s)"
    );
    for x in &r.ratios {
        o += &format!(
            "{:<name_w$}  {:>12.6}  {:>12.6}  {:>14.4e}\n",
            x.name, x.ratio, x.standard_error, x.p_cm_per_s
        );
    }
    o += &format!(
        "\nrms residual {:.3} mV ({} degree(s) of freedom)\n\n",
        r.rms_residual_mv, r.degrees_of_freedom
    );
    let head = format!("{} ({})", vary.quantity(), vary.unit());
    let w = head.chars().count().max(8);
    o += &format!(
        "{:>5}  {head:>w$}  {:>13}  {:>11}  {:>13}\n",
        "row", "measured (mV)", "fitted (mV)", "residual (mV)"
    );
    for x in &r.residuals {
        o += &format!(
            "{:>5}  {:>w$}  {:>13.2}  {:>11.2}  {:>13.3}\n",
            x.row,
            format!("{}", x.value),
            x.measured_mv,
            x.fitted_mv,
            x.residual_mv
        );
    }
    o
}
