//! The "Fit" tab of the analysis window: measured points (value, potential) from a CSV file,
//! the varied input, which species' permeabilities are free relative to the first species,
//! and the fitted ratios with standard errors, the residuals (points numbered 1..n, each with
//! its row in the file), data against fitted curve, and applying the fitted permeabilities to
//! the cell as one undoable edit.

use std::path::{Path, PathBuf};

use egui::{RichText, Ui};
use egui_plot::{Line, PlotPoints, Points};

use crate::analysis::fit::{DataPoint, FitResult, FitSpace, fit, read_points};
use crate::analysis::scan::{ScanControl, ScanPoint, ScanRange, Vary, scan};
use crate::scenario::{Edit, Scenario};
use crate::ui::analysis::{AnalysisCommand, PlotView, plot_x, short, vary_picker};
use crate::ui::command::Command;
use crate::ui::theme::{potential_color, species_color};

/// Points of the fitted curve drawn through the data.
const CURVE_POINTS: usize = 80;

/// The fit form and its last result.
#[derive(Debug, Default)]
pub struct FitForm {
    pub vary: Option<Vary>,
    /// Names of the species whose permeability ratio is free.
    pub free: Vec<String>,
    /// The file of measured points last loaded, if any.
    pub data: Option<Loaded>,
    pub result: Option<Result<FitOutput, String>>,
}

/// A file of measured points and what came of reading it.
#[derive(Debug)]
pub struct Loaded {
    pub path: PathBuf,
    /// The points, or why the file could not be used.
    pub points: Result<Vec<DataPoint>, String>,
}

/// A finished fit and the fitted curve over the data's range.
#[derive(Debug, Clone, PartialEq)]
pub struct FitOutput {
    pub result: FitResult,
    pub vary: Vary,
    pub data: Vec<DataPoint>,
    pub curve: Vec<ScanPoint>,
    pub log: bool,
}

/// Everything a fit needs, moved to the worker thread.
pub struct FitTask {
    s: Scenario,
    vary: Vary,
    free: Vec<String>,
    data: Vec<DataPoint>,
}

impl FitTask {
    pub fn run(&self, control: &ScanControl) -> Result<FitOutput, String> {
        let result = fit(&self.s, &self.vary, &self.free, &self.data, FitSpace::LogRatio)
            .map_err(|e| e.to_string())?;
        let (lo, hi) = self
            .data
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
                (a.min(p.value), b.max(p.value))
            });
        // A log axis when the data span a decade or more of a positive input (bath series do).
        let log = lo > 0.0 && hi / lo >= 10.0;
        let range = ScanRange {
            from: lo,
            to: hi,
            points: if hi > lo { CURVE_POINTS } else { 1 },
            log,
        };
        let curve = scan(&result.apply_to(&self.s), &self.vary, &range, control)
            .map_err(|e| format!("the fit worked, but its curve could not be drawn: {e}"))?;
        Ok(FitOutput {
            result,
            vary: self.vary.clone(),
            data: self.data.clone(),
            curve,
            log,
        })
    }
}

impl FitForm {
    /// Keeps the choices valid for `s`: a varied input that exists, free species that exist
    /// and are not the reference.
    pub fn follow(&mut self, s: &Scenario) {
        if self.vary.as_ref().is_none_or(|v| v.check(s).is_err()) {
            let k = s
                .species
                .iter()
                .find(|x| x.name == "K+")
                .or(s.species.first())
                .map(|x| x.name.clone());
            self.vary = Some(k.map_or(Vary::TemperatureC, Vary::OutsideMm));
            // Monovalent species other than the reference are what a bath series usually frees.
            self.free = s
                .species
                .iter()
                .skip(1)
                .filter(|x| x.charge.abs() == 1)
                .map(|x| x.name.clone())
                .collect();
        }
        let reference = s.species.first().map(|x| x.name.as_str());
        self.free
            .retain(|n| Some(n.as_str()) != reference && s.species_index(n).is_some());
    }

    pub fn load(&mut self, path: &Path) {
        self.data = Some(Loaded {
            path: path.to_path_buf(),
            points: read_points(path).map_err(|e| e.to_string()),
        });
        self.result = None;
    }

    /// The fit to run, when points are loaded and an input is chosen.
    pub fn task(&self, s: &Scenario) -> Option<FitTask> {
        let Some(Loaded { points: Ok(data), .. }) = &self.data else {
            return None;
        };
        Some(FitTask {
            s: s.clone(),
            vary: self.vary.clone()?,
            free: self.free.clone(),
            data: data.clone(),
        })
    }
}

pub fn show(
    ui: &mut Ui,
    form: &mut FitForm,
    s: &Scenario,
    busy: bool,
    view: &mut PlotView,
    commands: &mut Vec<Command>,
) {
    let cmd = |c: AnalysisCommand| Command::Analysis(c);
    ui.horizontal(|ui| {
        if ui
            .button("Load points…")
            .on_hover_text("A CSV file of value,v_mv rows (a header row is allowed)")
            .clicked()
        {
            commands.push(cmd(AnalysisCommand::ChooseFitData));
        }
        match &form.data {
            Some(Loaded {
                path,
                points: Ok(points),
            }) => {
                ui.label(format!("{} points from {}", points.len(), path.display()));
            }
            Some(Loaded { path, .. }) => {
                ui.label(path.display().to_string());
            }
            None => {
                ui.label(RichText::new("No points loaded").weak());
            }
        }
    });
    if let Some(Loaded { points: Err(e), .. }) = &form.data {
        ui.label(RichText::new(format!("Cannot use the file: {e}")).color(ui.visuals().error_fg_color));
    }
    ui.horizontal(|ui| {
        if let Some(v) = &mut form.vary {
            vary_picker(ui, "fit vary", s, v);
        }
    });
    ui.horizontal_wrapped(|ui| {
        let reference = s.species.first().map_or("", |x| x.name.as_str());
        ui.label(format!("Free ratios (relative to {reference}):"));
        for sp in s.species.iter().skip(1) {
            let mut on = form.free.contains(&sp.name);
            if ui
                .checkbox(&mut on, format!("P {} / P {reference}", sp.name))
                .changed()
            {
                form.free.retain(|n| *n != sp.name);
                if on {
                    form.free.push(sp.name.clone());
                }
            }
        }
    });
    let ready = matches!(form.data, Some(Loaded { points: Ok(_), .. })) && !busy;
    if ui.add_enabled(ready, egui::Button::new("Fit ratios")).clicked() {
        commands.push(cmd(AnalysisCommand::StartFit));
    }
    match &form.result {
        None => {}
        Some(Err(e)) => {
            ui.label(RichText::new(format!("Fit failed: {e}")).color(ui.visuals().error_fg_color));
        }
        Some(Ok(out)) => result_view(ui, out, s, view, commands),
    }
}

/// Whether `s` already holds the fitted permeabilities.
fn applied(s: &Scenario, out: &FitOutput) -> bool {
    out.result.ratios.iter().all(|f| {
        s.species_index(&f.name)
            .is_some_and(|i| s.species[i].permeability_cm_per_s == f.p_cm_per_s)
    })
}

fn result_view(ui: &mut Ui, out: &FitOutput, s: &Scenario, view: &mut PlotView, commands: &mut Vec<Command>) {
    let r = &out.result;
    ui.add_space(4.0);
    egui::Grid::new("fit ratios")
        .striped(true)
        .spacing([16.0, 3.0])
        .show(ui, |ui| {
            ui.label(RichText::new("Ratio").strong());
            ui.label(RichText::new("Fitted").strong());
            ui.label(RichText::new("Standard error").strong());
            ui.label(RichText::new("Permeability (cm/s)").strong());
            ui.end_row();
            for f in &r.ratios {
                ui.label(format!("P {} / P {}", f.name, r.reference));
                ui.label(format!("{:.4}", f.ratio));
                ui.label(format!("± {:.4}", f.standard_error));
                ui.label(format!("{:.3e}", f.p_cm_per_s));
                ui.end_row();
            }
        });
    ui.horizontal_wrapped(|ui| {
        let done = applied(s, out);
        let text = if done {
            "Applied to the cell"
        } else {
            "Apply to the cell"
        };
        if ui
            .add_enabled(!done, egui::Button::new(text))
            .on_hover_text(format!(
                "Set the cell's permeabilities of {} to the fitted values ({} unchanged); one undo step",
                r.ratios
                    .iter()
                    .map(|f| f.name.as_str())
                    .collect::<Vec<_>>()
                    .join(", "),
                r.reference
            ))
            .clicked()
        {
            commands.push(Command::Edit(Edit::Permeabilities(
                r.ratios.iter().map(|f| (f.name.clone(), f.p_cm_per_s)).collect(),
            )));
        }
        ui.label(format!(
            "RMS residual {:.3} mV over {} points ({} degrees of freedom)",
            r.rms_residual_mv,
            r.residuals.len(),
            r.degrees_of_freedom
        ));
    });
    ui.columns(2, |cols| {
        egui::ScrollArea::vertical()
            .id_salt("residuals")
            .max_height(cols[0].available_height().max(160.0))
            .show(&mut cols[0], |ui| {
                egui::Grid::new("fit residuals")
                    .striped(true)
                    .spacing([10.0, 2.0])
                    .show(ui, |ui| {
                        ui.label(RichText::new("Point").strong());
                        ui.label(RichText::new("File row").strong())
                            .on_hover_text("The line of the file the point was read from, counting a header");
                        ui.label(RichText::new(out.vary.label()).strong());
                        ui.label(RichText::new("Measured (mV)").strong());
                        ui.label(RichText::new("Residual (mV)").strong());
                        ui.end_row();
                        for (k, x) in r.residuals.iter().enumerate() {
                            ui.label((k + 1).to_string());
                            ui.label(x.row.to_string());
                            ui.label(short(x.value));
                            ui.label(format!("{:.2}", x.measured_mv));
                            ui.label(format!("{:+.3}", x.residual_mv));
                            ui.end_row();
                        }
                    });
            });
        let ui = &mut cols[1];
        let dark = ui.visuals().dark_mode;
        let log = out.log;
        let curve: Vec<[f64; 2]> = out
            .curve
            .iter()
            .filter_map(|p| Some([plot_x(p.value, log), p.resting_mv?]))
            .collect();
        let data: Vec<[f64; 2]> = out
            .data
            .iter()
            .map(|p| [plot_x(p.value, log), p.v_mv])
            .filter(|p| p[0].is_finite())
            .collect();
        // The measured points are read where the pointer is near one, not interpolated.
        let curves = vec![("Fitted steady state".to_string(), curve.clone())];
        view.show(ui, "fit plot", out.vary.label(), log, curves, |pui| {
            pui.line(
                Line::new("Fitted steady state", PlotPoints::new(curve))
                    .color(potential_color(dark))
                    .width(2.0),
            );
            pui.points(
                Points::new("Measured", PlotPoints::new(data))
                    .color(species_color(1))
                    .radius(3.5),
            );
        });
    });
}
