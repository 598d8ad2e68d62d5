//! The Scan tab's equimolar replacement in the bath solution, the window's side of
//! `permeant scan --vary replace:OLD:NEW`: compound OLD of the bath is replaced by NEW from
//! none to all of it, and each mix gives the GHK and steady-state potentials and the junction
//! potential of the pipette against that bath. A scenario whose bath is a solution cannot scan
//! its bath concentrations one by one (the recipe sets them), so this is how an ion
//! substitution is planned in the window.

use egui::{RichText, Ui};

use super::{PlotView, line_of, potential_lines, short};
use crate::analysis::scan::{ScanControl, ScanRange};
use crate::scenario::Scenario;
use crate::solutions::Catalog;
use crate::solutions::replace::{Replace, ReplacePoint};

/// What the user asks to replace, and in how many steps.
#[derive(Debug, Clone, PartialEq)]
pub struct ReplaceForm {
    /// A compound of the bath solution.
    pub old: String,
    /// Any compound the scenario knows (built-in or its own).
    pub new: String,
    /// Mixes from none of NEW to all of OLD replaced, both ends included.
    pub points: usize,
}

/// A finished replacement scan.
#[derive(Debug, Clone, PartialEq)]
pub struct ReplaceOutput {
    pub old: String,
    pub new: String,
    /// OLD's amount in the unchanged bath, mM: the last point replaces all of it.
    pub most_mm: f64,
    pub points: Vec<ReplacePoint>,
    pub elapsed_ms: f64,
}

/// The bath solution's compounds with their mM, or none when the bath is not a solution.
fn bath_parts(s: &Scenario) -> &[(String, f64)] {
    s.outside
        .as_deref()
        .and_then(|b| s.solution_index(b))
        .map_or(&[], |i| s.solutions[i].parts.as_slice())
}

/// The compounds of the bath solution, or none when the bath is not a solution.
pub fn bath_compounds(s: &Scenario) -> Vec<String> {
    bath_parts(s).iter().map(|p| p.0.clone()).collect()
}

/// Every compound that can take OLD's place: all the scenario knows, but OLD itself.
pub fn new_choices(s: &Scenario, old: &str) -> Vec<String> {
    let (catalog, _) = Catalog::with_user(&s.compounds);
    catalog
        .compound_names()
        .into_iter()
        .filter(|n| *n != old)
        .map(str::to_string)
        .collect()
}

/// The first replacement to offer: the bath's largest compound (the one a substitution
/// usually changes), by NMDG-Cl (an impermeant cation of common practice) or else the first
/// compound the bath does not hold. `None` when the bath is not a solution.
pub fn default_form(s: &Scenario) -> Option<ReplaceForm> {
    let parts = bath_parts(s);
    let old = parts.iter().max_by(|a, b| a.1.total_cmp(&b.1))?.0.clone();
    let choices = new_choices(s, &old);
    let new = choices
        .iter()
        .find(|n| *n == "NMDG-Cl")
        .or_else(|| choices.iter().find(|n| !parts.iter().any(|p| &p.0 == *n)))?
        .clone();
    Some(ReplaceForm { old, new, points: 15 })
}

/// Whether `form` still fits `s` (a renamed bath compound, a bath that became a species list).
/// Asked every frame the Analysis window is open, so it lists nothing.
pub fn still_fits(form: &ReplaceForm, s: &Scenario) -> bool {
    form.new != form.old
        && bath_parts(s).iter().any(|p| p.0 == form.old)
        && Catalog::with_user(&s.compounds).0.compound(&form.new).is_some()
}

/// Runs the replacement of `form` on `s` (on the current rayon pool).
pub fn compute(s: &Scenario, form: &ReplaceForm, control: &ScanControl) -> Result<ReplaceOutput, String> {
    let started = std::time::Instant::now();
    let r = Replace::parse(&format!("{}:{}", form.old, form.new), s).map_err(|e| e.to_string())?;
    let most_mm = r.most_mm(s);
    let range = ScanRange {
        from: 0.0,
        to: most_mm,
        points: form.points,
        log: false,
    };
    let points = r.scan(s, &range, control).map_err(|e| e.to_string())?;
    Ok(ReplaceOutput {
        old: form.old.clone(),
        new: form.new.clone(),
        most_mm,
        points,
        elapsed_ms: started.elapsed().as_secs_f64() * 1e3,
    })
}

/// The form's pickers, editing `form` in place.
pub fn form_ui(ui: &mut Ui, s: &Scenario, form: &mut ReplaceForm) {
    ui.horizontal_wrapped(|ui| {
        let label = ui.label("Replace");
        egui::ComboBox::from_id_salt("replace old")
            .selected_text(&form.old)
            .show_ui(ui, |ui| {
                for c in bath_compounds(s) {
                    ui.selectable_value(&mut form.old, c.clone(), c);
                }
            })
            .response
            .labelled_by(label.id);
        let label = ui.label("by");
        egui::ComboBox::from_id_salt("replace new")
            .selected_text(&form.new)
            .height(320.0)
            .show_ui(ui, |ui| {
                for c in new_choices(s, &form.old) {
                    ui.selectable_value(&mut form.new, c.clone(), c);
                }
            })
            .response
            .labelled_by(label.id);
        let label = ui.label("in the bath, mM for mM:");
        ui.add(egui::DragValue::new(&mut form.points).range(2..=500))
            .labelled_by(label.id);
        let most = bath_parts(s)
            .iter()
            .find(|p| p.0 == form.old)
            .map_or(0.0, |p| p.1);
        ui.label(format!("mixes, from none to all {} mM", short(most)));
    });
    if form.new == form.old {
        // The old compound changed under the new one: offer the first other choice.
        if let Some(n) = new_choices(s, &form.old).into_iter().next() {
            form.new = n;
        }
    }
}

/// The scan's values: NEW's and OLD's amounts, then the potentials.
pub fn table(ui: &mut Ui, out: &ReplaceOutput) {
    egui::ScrollArea::vertical()
        .id_salt("replace table")
        .max_height(160.0)
        .show(ui, |ui| {
            egui::Grid::new("replace values grid")
                .striped(true)
                .spacing([16.0, 2.0])
                .show(ui, |ui| {
                    for head in [
                        format!("{} (mM)", out.new),
                        format!("{} left (mM)", out.old),
                        "GHK potential (mV)".into(),
                        "Steady state (mV)".into(),
                        "Junction (mV)".into(),
                    ] {
                        ui.label(RichText::new(head).strong());
                    }
                    ui.end_row();
                    let mv = |x: Option<f64>| x.map_or("—".to_string(), |v| format!("{v:.2}"));
                    for p in &out.points {
                        ui.label(short(p.value));
                        ui.label(short(out.most_mm - p.value));
                        ui.label(mv(p.ghk_mv));
                        ui.label(mv(p.resting_mv));
                        ui.label(mv(p.ljp_mv)).on_hover_text(
                            "Bath relative to the pipette solution (Henderson); none without a pipette solution",
                        );
                        ui.end_row();
                    }
                });
        });
}

/// From none to all replaced, how much the membrane and the junction move: the two changes an
/// ion substitution is planned around (the recorded potential shows their sum).
pub fn summary(out: &ReplaceOutput) -> Option<String> {
    let (first, last) = (out.points.first()?, out.points.last()?);
    let change = |a: Option<f64>, b: Option<f64>, what: &str| {
        Some(format!("{what} {:.2} → {:.2} mV (Δ {:+.2} mV)", a?, b?, b? - a?))
    };
    let membrane = change(first.resting_mv, last.resting_mv, "steady state");
    let junction = change(first.ljp_mv, last.ljp_mv, "junction");
    let parts: Vec<String> = [membrane, junction].into_iter().flatten().collect();
    (!parts.is_empty()).then(|| format!("From none to all replaced: {}", parts.join("; ")))
}

/// Potentials against the mM of NEW: the steady state and the GHK potential. The junction,
/// some ten mV against potentials near −60, would flatten them on one axis: its change is in
/// the summary line and its values in the table.
pub fn plot(ui: &mut Ui, out: &ReplaceOutput, view: &mut PlotView) {
    let dark = ui.visuals().dark_mode;
    if let Some(text) = summary(out) {
        ui.label(text);
    }
    let rest = line_of(out.points.iter().map(|p| (p.value, p.resting_mv)), false);
    let ghk = line_of(out.points.iter().map(|p| (p.value, p.ghk_mv)), false);
    let curves = vec![
        ("Steady state".to_string(), rest.clone()),
        ("GHK potential".to_string(), ghk.clone()),
    ];
    let x_label = format!("{} replacing {} (mM)", out.new, out.old);
    view.show(ui, "replace plot", x_label, false, curves, |pui| {
        potential_lines(pui, dark, ghk, rest);
    });
}
