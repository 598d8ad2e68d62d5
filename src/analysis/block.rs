//! Block read as lost current (clamp-and-volume.md, "Families": "from a control and a treated
//! family: the fraction of current blocked at each level"): a control family and a treated
//! family compared level by level, and the dose–response of the current of a family that
//! varies an agent's dose, with a Hill fit giving the IC50 and the Hill coefficient.
//!
//! The Hill fit is the Boltzmann fit of [`super::family::fit_boltzmann`] on the log of the
//! dose: `b = 1/(1 + (IC50/d)ⁿ) = 1/(1 + e^(−(ln d − ln IC50)/(1/n)))` is a Boltzmann in
//! `ln d` with `V½ = ln IC50` and slope `k = 1/n`, so one Levenberg–Marquardt fitter with its
//! standard errors serves both.

use super::family::{BoltzmannError, FamilyTable, Measure, fit_boltzmann, fraction_blocked};
use crate::scenario::Address;
use crate::scenario::fields::shown;

/// A control current smaller than this share of the family's largest control current is not
/// divided by: near the reversal potential `1 − I_treated/I_control` is the ratio of two
/// numbers close to zero and says nothing about the block.
pub const SMALL_CONTROL: f64 = 0.01;

/// One level of a control-versus-treated comparison.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LevelBlock {
    /// The varied value (a command potential, a dose …) in the unit of the varied field.
    pub level: f64,
    /// The measurement on the control run: a current in µA/cm² in voltage clamp.
    pub control: Option<f64>,
    /// The measurement on the treated run at the same level.
    pub treated: Option<f64>,
    /// `1 − treated/control`; `None` without both values or where the control current is
    /// under [`SMALL_CONTROL`] of its largest.
    pub blocked: Option<f64>,
}

/// A control family and a treated family compared at every level.
#[derive(Debug, Clone, PartialEq)]
pub struct BlockComparison {
    pub field: Address,
    pub measure: Measure,
    /// In order of level.
    pub rows: Vec<LevelBlock>,
}

/// Why two families cannot be compared level by level.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CompareError {
    #[error(
        "the control varies {control}, this family varies {treated}: compare families over the same number"
    )]
    DifferentField { control: String, treated: String },
    #[error("the control was run in {control}, this family in {treated}")]
    DifferentMode {
        control: &'static str,
        treated: &'static str,
    },
    #[error("the control was measured as {control}, this family as {treated}: the windows of time differ")]
    DifferentMeasure { control: String, treated: String },
    #[error("the family has no measurement number {0}")]
    NoMeasure(usize),
    #[error("block is read from the clamp current: run both families in voltage clamp")]
    NotClamped,
    #[error("level {level} {unit} of this family has no control run at the same level")]
    NoControlLevel { level: String, unit: &'static str },
    #[error("the control's level {level} {unit} is missing from this family")]
    NoTreatedLevel { level: String, unit: &'static str },
}

fn mode_name(clamped: bool) -> &'static str {
    if clamped { "voltage clamp" } else { "current clamp" }
}

/// Whether two levels are the same value (a level typed once and read back, or the same
/// range computed twice: equal to a few units in the last place).
fn same_level(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1.0)
}

/// The `k`th measurement of each run.
fn column(t: &FamilyTable, k: usize) -> Vec<Option<f64>> {
    t.cells.iter().map(|r| r.get(k).and_then(|m| m.value)).collect()
}

/// Compares the `k`th measurement of `treated` with that of `control`, level by level. The
/// two must vary the same number in the same mode with the same measurement, over the same
/// levels (in any order); otherwise the first difference is the error.
pub fn compare_families(
    control: &FamilyTable,
    treated: &FamilyTable,
    k: usize,
) -> Result<BlockComparison, CompareError> {
    if control.field != treated.field {
        return Err(CompareError::DifferentField {
            control: control.field.to_string(),
            treated: treated.field.to_string(),
        });
    }
    if control.clamped != treated.clamped {
        return Err(CompareError::DifferentMode {
            control: mode_name(control.clamped),
            treated: mode_name(treated.clamped),
        });
    }
    if !treated.clamped {
        return Err(CompareError::NotClamped);
    }
    let (Some(mc), Some(mt)) = (control.measures.get(k), treated.measures.get(k)) else {
        return Err(CompareError::NoMeasure(k + 1));
    };
    if mc != mt {
        return Err(CompareError::DifferentMeasure {
            control: mc.to_string(),
            treated: mt.to_string(),
        });
    }
    let unit = treated.field.field().unit;
    // Each treated level finds its control run, and no control level is left over.
    let matched = treated
        .values
        .iter()
        .map(|&v| {
            control
                .values
                .iter()
                .position(|&c| same_level(c, v))
                .ok_or(CompareError::NoControlLevel {
                    level: shown(v),
                    unit,
                })
        })
        .collect::<Result<Vec<usize>, _>>()?;
    if let Some(&c) = control
        .values
        .iter()
        .find(|&&c| !treated.values.iter().any(|&v| same_level(c, v)))
    {
        return Err(CompareError::NoTreatedLevel {
            level: shown(c),
            unit,
        });
    }
    let (ic, it) = (column(control, k), column(treated, k));
    let paired_control: Vec<Option<f64>> = matched.iter().map(|&c| ic[c]).collect();
    let largest = paired_control
        .iter()
        .flatten()
        .fold(0.0f64, |m, x| m.max(x.abs()));
    let usable: Vec<Option<f64>> = paired_control
        .iter()
        .map(|c| c.filter(|x| x.abs() >= SMALL_CONTROL * largest))
        .collect();
    let blocked = fraction_blocked(&usable, &it);
    let mut rows: Vec<LevelBlock> = treated
        .values
        .iter()
        .enumerate()
        .map(|(r, &v)| LevelBlock {
            level: v,
            control: paired_control[r],
            treated: it[r],
            blocked: blocked[r],
        })
        .collect();
    rows.sort_by(|a, b| a.level.total_cmp(&b.level));
    Ok(BlockComparison {
        field: treated.field,
        measure: *mt,
        rows,
    })
}

/// The fitted Hill equation `b = 1/(1 + (IC50/d)ⁿ)` with standard errors (full block at a
/// saturating dose assumed).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HillFit {
    pub ic50_um: f64,
    /// From the fit's standard error of ln IC50 by the delta method (common practice):
    /// `SE(IC50) = IC50·SE(ln IC50)`.
    pub se_ic50_um: f64,
    pub hill: f64,
    /// `SE(n) = SE(k)/k²` with `n = 1/k` (delta method).
    pub se_hill: f64,
}

impl HillFit {
    /// The fitted fraction blocked at `dose_um`.
    pub fn blocked(&self, dose_um: f64) -> f64 {
        crate::engine::protocol::fraction_blocked(1.0, self.ic50_um, self.hill, dose_um)
    }
}

/// One dose of a dose family.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DoseLevel {
    pub dose_um: f64,
    /// The measurement (µA/cm² in voltage clamp).
    pub current: Option<f64>,
    /// `1 − I(dose)/I(0)`.
    pub blocked: Option<f64>,
}

/// The dose–response of the current of a family over an agent's dose.
#[derive(Debug, Clone, PartialEq)]
pub struct DoseBlock {
    pub measure: Measure,
    /// In order of dose; the first is the control (dose 0).
    pub doses: Vec<DoseLevel>,
    /// `None` with the reason when the doses do not fix a Hill curve.
    pub fit: Result<HillFit, DoseBlockError>,
}

/// Why a family gives no dose–response of its current, or no Hill fit.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DoseBlockError {
    #[error("the family varies {0}, not an agent's dose")]
    NotDose(String),
    #[error("the family has no measurement number {0}")]
    NoMeasure(usize),
    #[error("the family has no run at dose 0 µM to serve as the control")]
    NoControl,
    #[error("the control run has no current to compare with")]
    NoControlCurrent,
    #[error("a Hill fit needs at least 3 doses above 0 µM with a fraction blocked, got {0}")]
    TooFew(usize),
    #[error("the current does not fall with dose: there is no block to fit")]
    NoBlock,
    #[error("the Hill fit did not settle: {0}")]
    Fit(String),
}

/// The fraction of the `k`th measurement blocked at each dose of a family over an agent's
/// dose (its run at dose 0 is the control), and the Hill fit of the doses above 0.
pub fn dose_block(t: &FamilyTable, k: usize) -> Result<DoseBlock, DoseBlockError> {
    if t.field.field().path != "protocol[].dose_um" {
        return Err(DoseBlockError::NotDose(t.field.to_string()));
    }
    let measure = *t.measures.get(k).ok_or(DoseBlockError::NoMeasure(k + 1))?;
    let current = column(t, k);
    let control_at = t
        .values
        .iter()
        .position(|&d| d == 0.0)
        .ok_or(DoseBlockError::NoControl)?;
    let control = current[control_at]
        .filter(|c| *c != 0.0 && c.is_finite())
        .ok_or(DoseBlockError::NoControlCurrent)?;
    let blocked = fraction_blocked(&vec![Some(control); current.len()], &current);
    let mut doses: Vec<DoseLevel> = t
        .values
        .iter()
        .zip(current.iter().zip(&blocked))
        .map(|(&dose_um, (&current, &blocked))| DoseLevel {
            dose_um,
            current,
            blocked,
        })
        .collect();
    doses.sort_by(|a, b| a.dose_um.total_cmp(&b.dose_um));
    let fit = hill_fit(&doses);
    Ok(DoseBlock { measure, doses, fit })
}

/// The Hill fit of the fractions blocked at the doses above 0.
fn hill_fit(doses: &[DoseLevel]) -> Result<HillFit, DoseBlockError> {
    let (ln_d, b): (Vec<f64>, Vec<f64>) = doses
        .iter()
        .filter(|d| d.dose_um > 0.0)
        .filter_map(|d| d.blocked.filter(|b| b.is_finite()).map(|b| (d.dose_um.ln(), b)))
        .unzip();
    if ln_d.len() < 3 {
        return Err(DoseBlockError::TooFew(ln_d.len()));
    }
    // The largest dose must block something, and more than the smallest: a rising curve.
    let (first, last) = (b[0], b[b.len() - 1]);
    if last <= 0.0 || last <= first {
        return Err(DoseBlockError::NoBlock);
    }
    let f = fit_boltzmann(&ln_d, &b).map_err(|e| match e {
        BoltzmannError::TooFew(n) => DoseBlockError::TooFew(n),
        BoltzmannError::NotConverged(why) => DoseBlockError::Fit(why),
    })?;
    if f.slope_mv <= 0.0 {
        return Err(DoseBlockError::NoBlock);
    }
    let ic50_um = f.v_half_mv.exp();
    let hill = 1.0 / f.slope_mv;
    Ok(HillFit {
        ic50_um,
        se_ic50_um: ic50_um * f.se_v_half_mv,
        hill,
        se_hill: f.se_slope_mv / (f.slope_mv * f.slope_mv),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::family::Measured;

    fn table(path: &str, at: &[usize], values: &[f64], current: &[f64]) -> FamilyTable {
        FamilyTable {
            field: Address::of(path, at).expect("a row"),
            clamped: true,
            measures: vec![Measure::Late {
                from_ms: 1.0,
                until_ms: 2.0,
            }],
            values: values.to_vec(),
            cells: current
                .iter()
                .map(|&i| {
                    vec![Measured {
                        value: Some(i),
                        at_ms: None,
                    }]
                })
                .collect(),
            reversal_mv: None,
            chord_ms_per_cm2: vec![None; values.len()],
            g_rel: vec![None; values.len()],
            boltzmann: None,
            blocked: Vec::new(),
        }
    }

    #[test]
    fn levels_are_matched_in_any_order_and_small_controls_are_not_divided_by() {
        let c = table("protocol[].to_mv", &[0], &[-40.0, 0.0, 40.0], &[0.001, 4.0, 8.0]);
        let t = table("protocol[].to_mv", &[0], &[40.0, -40.0, 0.0], &[2.0, 0.0005, 1.0]);
        let r = compare_families(&c, &t, 0).expect("comparable");
        let levels: Vec<f64> = r.rows.iter().map(|x| x.level).collect();
        assert_eq!(levels, [-40.0, 0.0, 40.0]);
        // 1 − 1/4 and 1 − 2/8 (the definition, common practice).
        assert_eq!(r.rows[1].blocked, Some(0.75));
        assert_eq!(r.rows[2].blocked, Some(0.75));
        // 0.001 is under 1 % of the largest control current, 8.
        assert_eq!(r.rows[0].blocked, None);
        assert_eq!(r.rows[0].control, Some(0.001));
    }

    #[test]
    fn mismatched_families_are_refused_with_the_difference() {
        let c = table("protocol[].to_mv", &[0], &[-40.0, 0.0], &[1.0, 2.0]);
        let other_levels = table("protocol[].to_mv", &[0], &[-40.0, 10.0], &[1.0, 2.0]);
        let e = compare_families(&c, &other_levels, 0).expect_err("refused");
        assert_eq!(
            e.to_string(),
            "level 10 mV of this family has no control run at the same level"
        );
        let fewer = table("protocol[].to_mv", &[0], &[0.0], &[1.0]);
        let e = compare_families(&c, &fewer, 0).expect_err("refused");
        assert_eq!(
            e.to_string(),
            "the control's level -40 mV is missing from this family"
        );
        let other_field = table("protocol[].to_mv", &[1], &[-40.0, 0.0], &[1.0, 2.0]);
        let e = compare_families(&c, &other_field, 0).expect_err("refused");
        assert!(e.to_string().contains("protocol[0].to_mv") && e.to_string().contains("protocol[1].to_mv"));
        let mut other_measure = c.clone();
        other_measure.measures = vec![Measure::Tail { at_ms: 3.0 }];
        let e = compare_families(&c, &other_measure, 0).expect_err("refused");
        assert!(e.to_string().contains("late:1:2") && e.to_string().contains("tail:3"));
        let mut current_clamp = c.clone();
        current_clamp.clamped = false;
        assert!(matches!(
            compare_families(&c, &current_clamp, 0),
            Err(CompareError::DifferentMode { .. })
        ));
        assert_eq!(
            compare_families(&current_clamp, &current_clamp, 0),
            Err(CompareError::NotClamped)
        );
        assert!(matches!(
            compare_families(&c, &c, 1),
            Err(CompareError::NoMeasure(2))
        ));
    }

    #[test]
    fn a_dose_family_needs_its_control_and_a_falling_current() {
        let steps = table("protocol[].to_mv", &[0], &[0.0, 1.0, 2.0], &[1.0, 1.0, 1.0]);
        assert!(matches!(dose_block(&steps, 0), Err(DoseBlockError::NotDose(_))));
        let no_zero = table("protocol[].dose_um", &[1], &[1.0, 2.0, 3.0], &[3.0, 2.0, 1.0]);
        assert_eq!(dose_block(&no_zero, 0), Err(DoseBlockError::NoControl));
        let opener = table(
            "protocol[].dose_um",
            &[1],
            &[0.0, 1.0, 2.0, 3.0],
            &[1.0, 2.0, 3.0, 4.0],
        );
        let d = dose_block(&opener, 0).expect("a dose table");
        assert_eq!(d.fit, Err(DoseBlockError::NoBlock));
        assert_eq!(d.doses[3].blocked, Some(-3.0));
    }

    #[test]
    fn the_hill_fit_gives_back_ic50_and_n_of_exact_hill_data() {
        // Fractions from the Hill equation (Hill 1910) with IC50 2.5 µM and n 1.7 as the
        // current lost from a control of 10 µA/cm².
        let doses = [0.0, 0.1, 0.3, 1.0, 3.0, 10.0, 30.0, 100.0];
        let current: Vec<f64> = doses
            .iter()
            .map(|&d: &f64| 10.0 * (1.0 - 1.0 / (1.0 + (2.5f64 / d).powf(1.7))))
            .collect();
        let t = table("protocol[].dose_um", &[1], &doses, &current);
        let d = dose_block(&t, 0).expect("a dose table");
        let f = d.fit.expect("fitted");
        assert!((f.ic50_um - 2.5).abs() < 1e-6, "{f:?}");
        assert!((f.hill - 1.7).abs() < 1e-6, "{f:?}");
        assert!(f.se_ic50_um < 1e-6 && f.se_hill < 1e-6, "{f:?}");
        assert!((f.blocked(2.5) - 0.5).abs() < 1e-6);
    }
}
