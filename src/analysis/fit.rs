//! Fitting permeability ratios to measured potentials: measured points (value of one varied
//! input, potential) are matched by the steady state at t = 0 of the scenario, with the resting
//! permeabilities of chosen species free relative to the first species' permeability, which
//! stays fixed. Nonlinear least squares by the `levenberg-marquardt` crate; standard errors
//! from the Jacobian at the solution. `permeant fit` and the window's fit panel use this.

use std::path::Path;

use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt, TerminationReason};
use nalgebra::storage::Owned;
use nalgebra::{DMatrix, DVector, Dyn, SymmetricEigen};
use rayon::prelude::*;

use super::scan::{ScanError, Vary, apply, check_value};
use crate::engine::Model;
use crate::physics::{Undefined, ghk_current_ua_per_cm2};
use crate::scenario::{Scenario, Valid};

/// One measured point. `row` is its 1-based line in the file (the spreadsheet row), for messages.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DataPoint {
    pub value: f64,
    pub v_mv: f64,
    pub row: usize,
}

/// What is wrong with a data file.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DataError {
    #[error("{path}: cannot read the file: {message}")]
    Io { path: String, message: String },
    #[error("row {row}: the {column} cell \"{cell}\" is not a number")]
    NotNumber {
        row: usize,
        column: &'static str,
        cell: String,
    },
    #[error("row {row}: the {column} cell \"{cell}\" is not a finite number")]
    NotFinite {
        row: usize,
        column: &'static str,
        cell: String,
    },
    #[error("row {row}: expected two cells, value,v_mv, but found {found}")]
    WrongCellCount { row: usize, found: usize },
    #[error("the data hold no rows of value,v_mv")]
    NoPoints,
    #[error("row {row}: the row cannot be read as CSV: {message}")]
    Malformed { row: usize, message: String },
    #[error(
        "row {row}: a measured potential of {cell} mV is outside ±{MAX_MEASURED_MV} mV, which no cell reaches"
    )]
    NotPhysical { row: usize, cell: String },
    #[error("{path}: the file is larger than {} MB, far more than measured points take; is it the right file?", MAX_DATA_BYTES / (1024 * 1024))]
    TooLarge { path: String },
}

/// Largest measured potential accepted, mV (the bound of a holding potential too).
pub const MAX_MEASURED_MV: f64 = 1000.0;

/// Largest data file read: a million points take about 20 MB; the cap keeps a wrong path (a
/// device, a log) from filling memory.
pub const MAX_DATA_BYTES: u64 = 32 * 1024 * 1024;

/// Parses `value,v_mv` rows with a CSV reader, so quoted cells may hold commas and quotes.
/// Blank lines and lines whose first cell starts with `#` are skipped; the first other row is a
/// header when none of its cells is a number. Spreadsheet habits are accepted: a byte-order
/// mark, quoted cells, spaces around cells, trailing empty cells and Windows line ends. Rows
/// are numbered by the line they start on (the spreadsheet row), for messages.
pub fn parse_points(text: &str) -> Result<Vec<DataPoint>, DataError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .comment(Some(b'#'))
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    // The reader's own line count passes over blank lines, and its position of a record is
    // where it began reading, before the blank and comment lines it skipped: rows are counted
    // from the first byte of the record itself.
    let bytes = text.as_bytes();
    let row_at = |pos: Option<&csv::Position>| {
        let mut at = pos.map_or(0, |p| usize::try_from(p.byte()).unwrap_or(usize::MAX));
        loop {
            match bytes.get(at) {
                Some(b'\n' | b'\r') => at += 1,
                Some(b'#') => {
                    at += bytes
                        .get(at..)
                        .and_then(|rest| rest.iter().position(|&b| b == b'\n'))
                        .unwrap_or(0)
                        + 1;
                }
                _ => break,
            }
        }
        let before = bytes.get(..at).unwrap_or(bytes);
        1 + before.iter().filter(|&&b| b == b'\n').count()
    };
    let mut points = Vec::new();
    let mut first = true;
    for record in reader.records() {
        let record = record.map_err(|e| DataError::Malformed {
            row: row_at(e.position()),
            message: e.to_string(),
        })?;
        let row = row_at(record.position());
        let mut cells: Vec<&str> = record.iter().collect();
        // The reader knows only comments at the start of a line; an indented one is one too.
        if cells.first().is_some_and(|c| c.starts_with('#')) || cells.iter().all(|c| c.is_empty()) {
            continue;
        }
        while cells.len() > 2 && cells.last().is_some_and(|c| c.is_empty()) {
            cells.pop();
        }
        let was_first = std::mem::replace(&mut first, false);
        if was_first && cells.iter().all(|c| c.parse::<f64>().is_err()) {
            continue;
        }
        let [value, v_mv] = cells[..] else {
            return Err(DataError::WrongCellCount {
                row,
                found: cells.len(),
            });
        };
        let measured = number(row, "v_mv", v_mv)?;
        if measured.abs() > MAX_MEASURED_MV {
            return Err(DataError::NotPhysical {
                row,
                cell: v_mv.to_string(),
            });
        }
        points.push(DataPoint {
            value: number(row, "value", value)?,
            v_mv: measured,
            row,
        });
    }
    if points.is_empty() {
        return Err(DataError::NoPoints);
    }
    Ok(points)
}

/// The finite number in a cell; `row` and `column` name it in messages.
fn number(row: usize, column: &'static str, cell: &str) -> Result<f64, DataError> {
    let x: f64 = cell.parse().map_err(|_| DataError::NotNumber {
        row,
        column,
        cell: cell.to_string(),
    })?;
    if !x.is_finite() {
        return Err(DataError::NotFinite {
            row,
            column,
            cell: cell.to_string(),
        });
    }
    Ok(x)
}

/// Reads and parses a data file.
pub fn read_points(path: &Path) -> Result<Vec<DataPoint>, DataError> {
    use std::io::Read;
    let io = |e: std::io::Error| DataError::Io {
        path: path.display().to_string(),
        message: e.to_string(),
    };
    let mut bytes = Vec::new();
    std::fs::File::open(path)
        .map_err(io)?
        .take(MAX_DATA_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(io)?;
    if bytes.len() as u64 > MAX_DATA_BYTES {
        return Err(DataError::TooLarge {
            path: path.display().to_string(),
        });
    }
    let text = String::from_utf8(bytes).map_err(|_| DataError::Io {
        path: path.display().to_string(),
        message: "the file is not text (UTF-8)".to_string(),
    })?;
    parse_points(&text)
}

/// Which parameters the least-squares problem works in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum FitSpace {
    /// ln(ratio): ratios stay positive; standard errors of the ratios by the delta method.
    #[default]
    LogRatio,
    /// The ratios themselves; a trial ratio may go negative, which the model then refuses.
    Direct,
}

/// Why a fit could not be done or finished.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FitError {
    #[error(transparent)]
    Data(#[from] DataError),
    #[error(transparent)]
    Vary(#[from] ScanError),
    #[error("no species is free: name at least one species whose permeability the fit may change")]
    NothingFree,
    #[error("no species is named \"{name}\"; the species are {choices}")]
    UnknownSpecies { name: String, choices: String },
    #[error(
        "\"{name}\" is the reference species (the scenario's first), whose permeability stays fixed; free only the others"
    )]
    ReferenceFree { name: String },
    #[error("\"{name}\" is named twice among the free species")]
    DuplicateFree { name: String },
    #[error("the permeability of \"{name}\" is the varied input, so it cannot also be free")]
    VariedIsFree { name: String },
    #[error(
        "the reference species \"{name}\" has permeability 0, so ratios to it are undefined; give it a permeability or put another species first"
    )]
    ReferenceZero { name: String },
    #[error(
        "{points} data point(s) are too few for {free} free ratio(s) with standard errors: at least {} are needed",
        free + 1
    )]
    TooFewPoints { points: usize, free: usize },
    #[error("row {row}: {source}")]
    InvalidPoint { row: usize, source: ScanError },
    #[error(
        "the data cannot determine the permeability of \"{name}\": its concentration is 0 on both sides at every data point"
    )]
    NoConcentration { name: String },
    #[error("the data cannot determine the permeability ratio of {}: {detail}", names.iter().map(|n| format!("\"{n}\"")).collect::<Vec<_>>().join(" and "))]
    Undetermined {
        names: Vec<String>,
        detail: &'static str,
    },
    #[error("row {row} ({value}): at the ratios {ratios} the model has no resting potential: {reason}")]
    NoPotential {
        row: usize,
        value: f64,
        ratios: String,
        reason: Undefined,
    },
    #[error("at the ratios {ratios} the model's potential or its slope is not finite")]
    NotFinite { ratios: String },
    #[error("the fit did not converge: no minimum within {evaluations} evaluations (last ratios {ratios})")]
    NotConverged { evaluations: usize, ratios: String },
    /// The minimiser gave up for a reason of its own (its termination report, as it words it).
    #[error("the fit did not converge: {reason}")]
    Stopped { reason: String },
}

impl FitError {
    /// Whether the data, names or values given are at fault (everything but a fit that did
    /// not converge or a failed computation).
    pub fn is_bad_input(&self) -> bool {
        match self {
            FitError::Vary(e) | FitError::InvalidPoint { source: e, .. } => e.is_bad_input(),
            FitError::NotFinite { .. } | FitError::NotConverged { .. } | FitError::Stopped { .. } => false,
            _ => true,
        }
    }
}

/// One fitted ratio.
#[derive(Debug, Clone, PartialEq)]
pub struct FittedRatio {
    pub name: String,
    /// P_name / P_reference.
    pub ratio: f64,
    pub standard_error: f64,
    /// The fitted permeability, cm/s (the ratio times the reference's file permeability).
    pub p_cm_per_s: f64,
}

/// One data point against the fitted model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Residual {
    pub row: usize,
    pub value: f64,
    pub measured_mv: f64,
    pub fitted_mv: f64,
    /// measured − fitted.
    pub residual_mv: f64,
}

/// The result of a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct FitResult {
    /// The species whose permeability stays fixed.
    pub reference: String,
    pub ratios: Vec<FittedRatio>,
    pub residuals: Vec<Residual>,
    pub rms_residual_mv: f64,
    /// Data points minus free ratios.
    pub degrees_of_freedom: usize,
    /// Model evaluations (each over every data point) the minimiser used.
    pub evaluations: usize,
}

impl FitResult {
    /// `s` with the fitted permeabilities written in, e.g. to draw the fitted curve by a scan.
    pub fn apply_to(&self, s: &Scenario) -> Scenario {
        let mut out = s.clone();
        for r in &self.ratios {
            if let Some(i) = out.species_index(&r.name) {
                out.species[i].permeability_cm_per_s = r.p_cm_per_s;
            }
        }
        out
    }
}

/// Everything fixed during a fit.
struct Setup<'a> {
    base: &'a Scenario,
    vary: &'a Vary,
    free: Vec<usize>,
    points: &'a [DataPoint],
    space: FitSpace,
}

impl Setup<'_> {
    fn ratio(&self, theta: f64) -> f64 {
        match self.space {
            FitSpace::LogRatio => theta.exp(),
            FitSpace::Direct => theta,
        }
    }

    fn ratios_text(&self, theta: &DVector<f64>) -> String {
        self.free
            .iter()
            .zip(theta.iter())
            .map(|(&i, &t)| format!("{} {:.4}", self.base.species[i].name, self.ratio(t)))
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// The scenario of one data point under trial parameters.
    fn point_scenario(&self, value: f64, theta: &DVector<f64>) -> Result<Valid, ScanError> {
        let mut s = apply(self.base, self.vary, value)?;
        // After `apply`, so that a scan of the reference's own permeability carries the
        // free species along at their ratios.
        let p_ref = s.species[0].permeability_cm_per_s;
        for (&i, &t) in self.free.iter().zip(theta.iter()) {
            s.species[i].permeability_cm_per_s = self.ratio(t) * p_ref;
        }
        crate::scenario::validate(s).map_err(|problem| ScanError::InvalidAt {
            vary: self.vary.clone(),
            value,
            problem,
        })
    }

    /// Model potential of one point and its derivatives with respect to the parameters.
    ///
    /// The derivatives come from the implicit function theorem on the steady-state current
    /// F(V, θ) = 0: dV/dθ = −(∂F/∂θ)/(∂F/∂V). Each resting permeability enters F linearly
    /// through its own species' GHK current, so ∂F/∂P_j is that current per unit permeability;
    /// ∂F/∂V is a central difference of the steady-state current. This costs two current
    /// evaluations per point instead of a root solve per parameter, and is exact to rounding
    /// where finite differences of solved potentials would carry the solver's tolerance.
    fn point(&self, dp: &DataPoint, theta: &DVector<f64>) -> Result<(f64, Vec<f64>), FitError> {
        let s = self.point_scenario(dp.value, theta)?;
        let model = Model::new(&s);
        let v = model
            .steady_state_at_start()
            .resting_mv
            .map_err(|reason| FitError::NoPotential {
                row: dp.row,
                value: dp.value,
                ratios: self.ratios_text(theta),
                reason,
            })?;
        let cond = model.conditions_at_start();
        let (inside, outside, factor) = (&cond.inside_mm, &cond.outside_mm, &cond.p_factor);
        let m = &model.membrane;
        let mut gates = vec![0.0; m.gate_count()];
        let mut scratch = vec![0.0; m.ions.len()];
        let dv_mv = 1e-3;
        let hi = m.steady_net_current(v + dv_mv, &cond, &mut gates, &mut scratch);
        let lo = m.steady_net_current(v - dv_mv, &cond, &mut gates, &mut scratch);
        let df_dv = (hi - lo) / (2.0 * dv_mv);
        let p_ref = s.species[0].permeability_cm_per_s;
        let grads = self
            .free
            .iter()
            .zip(theta.iter())
            .map(|(&j, &t)| {
                let ion = &m.ions[j];
                let unit = factor[j]
                    * ghk_current_ua_per_cm2(
                        1.0,
                        ion.charge,
                        inside[j].max(0.0),
                        outside[j].max(0.0),
                        v,
                        m.temperature_c,
                    );
                let dp_dtheta = match self.space {
                    FitSpace::LogRatio => self.ratio(t) * p_ref,
                    FitSpace::Direct => p_ref,
                };
                -unit * dp_dtheta / df_dv
            })
            .collect();
        Ok((v, grads))
    }

    /// Model potentials and Jacobian over every point.
    fn evaluate(&self, theta: &DVector<f64>) -> Result<(DVector<f64>, DMatrix<f64>), FitError> {
        let rows: Vec<(f64, Vec<f64>)> = self
            .points
            .par_iter()
            .map(|dp| self.point(dp, theta))
            .collect::<Result<_, _>>()?;
        let n = rows.len();
        let p = self.free.len();
        let v = DVector::from_iterator(n, rows.iter().map(|r| r.0));
        let j = DMatrix::from_fn(n, p, |k, c| rows[k].1[c]);
        if v.iter().chain(j.iter()).any(|x| !x.is_finite()) {
            return Err(FitError::NotFinite {
                ratios: self.ratios_text(theta),
            });
        }
        Ok((v, j))
    }
}

/// Residual given to every point of a trial step where the model is undefined.
const REJECTED_RESIDUAL_MV: f64 = 1e6;

/// The least-squares problem as the minimiser sees it; every evaluation is cached with its
/// Jacobian, which costs almost nothing extra (see [`Setup::point`]).
struct Problem<'a> {
    setup: &'a Setup<'a>,
    theta: DVector<f64>,
    measured: DVector<f64>,
    state: Result<(DVector<f64>, DMatrix<f64>), FitError>,
}

impl Problem<'_> {
    fn set(&mut self, theta: DVector<f64>) {
        self.state = self.setup.evaluate(&theta);
        self.theta = theta;
    }
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for Problem<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, x: &DVector<f64>) {
        self.set(x.clone());
    }
    fn params(&self) -> DVector<f64> {
        self.theta.clone()
    }
    fn residuals(&self) -> Option<DVector<f64>> {
        match &self.state {
            Ok((v, _)) => Some(v - &self.measured),
            // A trial step into ratios where the cell has no resting potential (e.g. a negative
            // ratio in direct space) gets residuals far worse than any real ones, so the
            // minimiser rejects it and shrinks its trust region instead of stopping. The start
            // is checked before minimising, so an accepted point is always a real one.
            Err(_) => Some(DVector::from_element(self.measured.len(), REJECTED_RESIDUAL_MV)),
        }
    }
    fn jacobian(&self) -> Option<DMatrix<f64>> {
        self.state.as_ref().ok().map(|(_, j)| j.clone())
    }
}

/// Resolves and checks the free species' names; returns their indices.
fn free_indices(s: &Scenario, vary: &Vary, free: &[String]) -> Result<Vec<usize>, FitError> {
    if free.is_empty() {
        return Err(FitError::NothingFree);
    }
    let mut out: Vec<usize> = Vec::with_capacity(free.len());
    for name in free {
        let i = s.species_index(name).ok_or_else(|| FitError::UnknownSpecies {
            name: name.clone(),
            choices: s
                .species
                .iter()
                .map(|x| format!("\"{}\"", x.name))
                .collect::<Vec<_>>()
                .join(", "),
        })?;
        if i == 0 {
            return Err(FitError::ReferenceFree { name: name.clone() });
        }
        if out.contains(&i) {
            return Err(FitError::DuplicateFree { name: name.clone() });
        }
        if *vary == Vary::Permeability(name.clone()) {
            return Err(FitError::VariedIsFree { name: name.clone() });
        }
        out.push(i);
    }
    Ok(out)
}

/// Below this, a column of the Jacobian (mV per unit parameter over all points) means the
/// potentials do not depend on that parameter.
const FLAT_COLUMN_MV: f64 = 1e-7;
/// Below this smallest eigenvalue of the column-scaled JᵀJ (whose largest is at most the number
/// of parameters), two or more parameters act on the potentials in lockstep.
const COLLINEAR_EIGENVALUE: f64 = 1e-10;

/// Checks that JᵀJ can be inverted and returns its inverse, or names what cannot be determined.
fn inverse_normal_matrix(j: &DMatrix<f64>, names: &[String]) -> Result<DMatrix<f64>, FitError> {
    let p = j.ncols();
    let norms: Vec<f64> = (0..p).map(|c| j.column(c).norm()).collect();
    let flat: Vec<String> = (0..p)
        .filter(|&c| norms[c].is_nan() || norms[c] <= FLAT_COLUMN_MV)
        .map(|c| names[c].clone())
        .collect();
    if !flat.is_empty() {
        return Err(FitError::Undetermined {
            names: flat,
            detail: "the fitted potentials hardly change with it (it may be fitting towards 0; try without it)",
        });
    }
    // Scaling the columns to unit length makes the test independent of the parameters' units.
    let d = DMatrix::from_diagonal(&DVector::from_iterator(p, norms.iter().map(|n| 1.0 / n)));
    let scaled = &d * j.transpose() * j * &d;
    let eig = SymmetricEigen::new(scaled.clone());
    let (k_min, &l_min) = eig
        .eigenvalues
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.total_cmp(b.1))
        .ok_or(FitError::NothingFree)?;
    if l_min < COLLINEAR_EIGENVALUE {
        let v = eig.eigenvectors.column(k_min);
        let involved: Vec<String> = (0..p)
            .filter(|&c| v[c].abs() > 0.2)
            .map(|c| names[c].clone())
            .collect();
        return Err(FitError::Undetermined {
            names: involved,
            detail: "over these data their effects on the potential are proportional, so only a combination of them is fixed; add points over a wider range or vary another input",
        });
    }
    let inv = scaled.try_inverse().ok_or_else(|| FitError::Undetermined {
        names: names.to_vec(),
        detail: "the normal matrix is singular",
    })?;
    Ok(&d * inv * &d)
}

/// One Levenberg–Marquardt run from `start`: the best parameters, their sum of squared
/// residuals and the number of model evaluations used.
fn minimize(
    setup: &Setup,
    measured: &DVector<f64>,
    start: DVector<f64>,
) -> Result<(DVector<f64>, f64, usize), FitError> {
    let mut problem = Problem {
        setup,
        theta: start.clone(),
        measured: measured.clone(),
        state: Err(FitError::NothingFree),
    };
    problem.set(start);
    if let Err(e) = &problem.state {
        return Err(e.clone());
    }
    let (problem, report) = LevenbergMarquardt::new()
        .with_ftol(1e-12)
        .with_xtol(1e-12)
        .minimize(problem);
    match report.termination {
        TerminationReason::User(_) => {
            // The minimiser stopped because an evaluation failed; say which and where.
            return Err(match &problem.state {
                Err(e) => e.clone(),
                Ok(_) => FitError::Stopped {
                    reason: "a model evaluation failed".into(),
                },
            });
        }
        TerminationReason::ResidualsZero
        | TerminationReason::Orthogonal
        | TerminationReason::Converged { .. }
        // Rounding stops further progress: the fit sits at its minimum to machine precision.
        | TerminationReason::NoImprovementPossible(_) => {}
        TerminationReason::LostPatience => {
            return Err(FitError::NotConverged {
                evaluations: report.number_of_evaluations,
                ratios: setup.ratios_text(&problem.theta),
            });
        }
        other => {
            return Err(FitError::Stopped {
                reason: format!("{other:?}"),
            });
        }
    }
    // The minimiser leaves its best parameters set, with their evaluation cached.
    let ssr = match &problem.state {
        Ok((v, _)) => (v - measured).norm_squared(),
        Err(e) => return Err(e.clone()),
    };
    Ok((problem.theta, ssr, report.number_of_evaluations))
}

/// Fits the resting permeabilities of `free` species, relative to the first species' (fixed)
/// permeability, to measured potentials at the given values of `vary`.
///
/// The model potential at each point is the steady state at t = 0 of the scenario with the
/// varied input set to the point's value. The minimiser starts from the file's ratios (0.1
/// where the file's is 0), all ratios 1 and all ratios 0.01, and keeps the best. Standard errors: cov = s²·(JᵀJ)⁻¹ with s² = SSR/(n − p), J the
/// Jacobian at the solution; in log space SE(r) = r·SE(ln r) (delta method).
pub fn fit(
    s: &Scenario,
    vary: &Vary,
    free: &[String],
    points: &[DataPoint],
    space: FitSpace,
) -> Result<FitResult, FitError> {
    vary.check(s)?;
    let free_idx = free_indices(s, vary, free)?;
    let names: Vec<String> = free_idx.iter().map(|&i| s.species[i].name.clone()).collect();
    let p_ref = s.species[0].permeability_cm_per_s;
    if p_ref.is_nan() || p_ref <= 0.0 {
        return Err(FitError::ReferenceZero {
            name: s.species[0].name.clone(),
        });
    }
    let (n, p) = (points.len(), free_idx.len());
    if n == 0 {
        return Err(DataError::NoPoints.into());
    }
    if n < p + 1 {
        return Err(FitError::TooFewPoints { points: n, free: p });
    }
    let mut point_scenarios = Vec::with_capacity(n);
    for dp in points {
        point_scenarios.push(
            check_value(s, vary, dp.value)
                .map_err(|source| FitError::InvalidPoint { row: dp.row, source })?,
        );
    }
    for (&i, name) in free_idx.iter().zip(&names) {
        if point_scenarios
            .iter()
            .all(|x| x.species[i].inside_mm == 0.0 && x.species[i].outside_mm == 0.0)
        {
            return Err(FitError::NoConcentration { name: name.clone() });
        }
    }

    let setup = Setup {
        base: s,
        vary,
        free: free_idx,
        points,
        space,
    };
    let file_ratios: Vec<f64> = setup
        .free
        .iter()
        .map(|&i| {
            let r = s.species[i].permeability_cm_per_s / p_ref;
            if r > 0.0 { r } else { 0.1 }
        })
        .collect();
    let measured = DVector::from_iterator(n, points.iter().map(|d| d.v_mv));
    // Besides the file's ratios, two fixed starts: in a valley where two species act almost
    // alike, a minimiser can slide towards a ratio of 0 (a minimum on the boundary) from one
    // start and reach the interior minimum from another. The lowest sum of squares wins.
    let starts = [file_ratios, vec![1.0; p], vec![0.01; p]];
    let mut best: Option<(DVector<f64>, f64)> = None;
    let mut first_error = None;
    let mut evaluations = 0;
    for ratios in starts {
        let start = DVector::from_iterator(
            p,
            ratios.iter().map(|&r| match space {
                FitSpace::LogRatio => r.ln(),
                FitSpace::Direct => r,
            }),
        );
        match minimize(&setup, &measured, start) {
            Ok((theta, ssr, evals)) => {
                evaluations += evals;
                if best.as_ref().is_none_or(|b| ssr < b.1) {
                    best = Some((theta, ssr));
                }
            }
            Err(e) => {
                first_error.get_or_insert(e);
            }
        }
    }
    let Some((theta, _)) = best else {
        return Err(first_error.unwrap_or(FitError::NothingFree));
    };
    let (fitted, jac) = setup.evaluate(&theta)?;
    let resid: DVector<f64> = &measured - &fitted;
    let ssr = resid.norm_squared();
    let dof = n - p;
    let s2 = ssr / dof as f64;
    let cov = inverse_normal_matrix(&jac, &names)? * s2;

    let ratios = names
        .iter()
        .zip(setup.free.iter())
        .enumerate()
        .map(|(c, (name, _))| {
            let r = setup.ratio(theta[c]);
            let se_theta = cov[(c, c)].max(0.0).sqrt();
            let standard_error = match space {
                FitSpace::LogRatio => r * se_theta,
                FitSpace::Direct => se_theta,
            };
            FittedRatio {
                name: name.clone(),
                ratio: r,
                standard_error,
                p_cm_per_s: r * p_ref,
            }
        })
        .collect::<Vec<FittedRatio>>();
    let residuals = points
        .iter()
        .enumerate()
        .map(|(k, d)| Residual {
            row: d.row,
            value: d.value,
            measured_mv: d.v_mv,
            fitted_mv: fitted[k],
            residual_mv: resid[k],
        })
        .collect();
    let rms_residual_mv = (ssr / n as f64).sqrt();
    let finite = rms_residual_mv.is_finite()
        && ratios
            .iter()
            .all(|r| r.ratio.is_finite() && r.standard_error.is_finite() && r.p_cm_per_s.is_finite());
    if !finite {
        return Err(FitError::NotFinite {
            ratios: ratios
                .iter()
                .map(|r| format!("{} {}", r.name, r.ratio))
                .collect::<Vec<_>>()
                .join(", "),
        });
    }
    Ok(FitResult {
        reference: s.species[0].name.clone(),
        ratios,
        residuals,
        rms_residual_mv,
        degrees_of_freedom: dof,
        evaluations,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The implicit-function Jacobian against central differences of solved potentials, on a
    /// cell with a pump and a gated channel, where every term of the steady current matters.
    #[test]
    fn jacobian_matches_finite_differences() {
        let mut s = Scenario::new_default();
        s.pump = Some(crate::scenario::Pump {
            exports: "Na+".into(),
            imports: "K+".into(),
            exported_per_cycle: 3,
            imported_per_cycle: 2,
            max_current_ua_per_cm2: 0.8,
            half_saturation_inside_mm: 10.0,
            hill_inside: 1.0,
            half_saturation_outside_mm: 1.5,
            hill_outside: 1.0,
        });
        s.channels.push(crate::scenario::Channel {
            label: "slow k".into(),
            species: "K+".into(),
            max_permeability_cm_per_s: 2e-7,
            shift_mv: 0.0,
            q10: 1.0,
            reference_temperature_c: 37.0,
            gates: vec![crate::scenario::Gate {
                kinetics: crate::physics::Kinetics::Boltzmann {
                    v_half_mv: -60.0,
                    slope_mv: 10.0,
                    tau_ms: 5.0,
                },
                power: 1,
            }],
        });
        let vary = Vary::OutsideMm("K+".into());
        let points: Vec<DataPoint> = [3.0, 10.0, 40.0]
            .iter()
            .enumerate()
            .map(|(k, &x)| DataPoint {
                value: x,
                v_mv: 0.0,
                row: k + 1,
            })
            .collect();
        for space in [FitSpace::LogRatio, FitSpace::Direct] {
            let setup = Setup {
                base: &s,
                vary: &vary,
                free: vec![1, 2],
                points: &points,
                space,
            };
            let theta = match space {
                FitSpace::LogRatio => DVector::from_vec(vec![0.05f64.ln(), 0.3f64.ln()]),
                FitSpace::Direct => DVector::from_vec(vec![0.05, 0.3]),
            };
            let (_, j) = setup.evaluate(&theta).expect("evaluates");
            for c in 0..2 {
                let h = 1e-5 * theta[c].abs().max(1e-2);
                let mut up = theta.clone();
                up[c] += h;
                let mut down = theta.clone();
                down[c] -= h;
                let (vu, _) = setup.evaluate(&up).expect("evaluates");
                let (vd, _) = setup.evaluate(&down).expect("evaluates");
                for k in 0..points.len() {
                    let fd = (vu[k] - vd[k]) / (2.0 * h);
                    assert!(
                        (fd - j[(k, c)]).abs() <= 1e-5 * fd.abs().max(1.0),
                        "{space:?} point {k} param {c}: {fd} vs {}",
                        j[(k, c)]
                    );
                }
            }
        }
    }
}
