//! The editor's Solutions tab: each solution's recipe (compounds and amounts, added from the
//! table with a search, removed with ×), the ions it gives, its checks with their warnings, the
//! junction and reference offset of the pipette against each bath, and the activities switch.

use egui::{Grid, RichText, Ui};

use crate::scenario::Edit;
use crate::scenario::fields::{Address, Part};
use crate::solutions::plan;
use crate::ui::widgets::Editing;

/// A concentration of the cell tab that a solution gives: shown, not editable there, with
/// the reason on hover.
pub fn derived_number(ui: &mut Ui, ed: &mut Editing, path: &str, species: usize, solution: &str) {
    let address = Address::of(path, &[species]);
    if let Some(a) = address {
        ed.mark_drawn(a);
    }
    let value = address.and_then(|a| a.get(ed.scenario));
    let text = value.map_or_else(|| "—".to_string(), |v| format!("{v:.2} mM"));
    ui.label(RichText::new(text).italics()).on_hover_text(format!(
        "From the solution \"{solution}\" (Solutions tab): change its recipe there{}",
        if ed.scenario.activities {
            "; activities are on, so this is the ion's activity"
        } else {
            ""
        }
    ));
}

pub fn show(ui: &mut Ui, ed: &mut Editing) {
    let s = ed.scenario;
    if s.solutions.is_empty() {
        compounds(ui, ed);
        ui.label(
            "This scenario has no solutions. Solutions are written as recipes in the scenario \
             file (`solutions: [ … ]`, with `inside` and `outside` naming the pipette and the bath).",
        );
        return;
    }
    let mut activities = s.activities;
    if ui
        .checkbox(&mut activities, "Use activities (Davies) instead of concentrations")
        .on_hover_text("Every Nernst potential, GHK current, steady state and junction uses γ·c, with γ from each solution's own ionic strength")
        .changed()
    {
        ed.push(Edit::Activities(activities));
    }
    let p = plan(s);
    let warnings = crate::scenario::warnings(s);
    for (i, sol) in s.solutions.iter().enumerate() {
        ui.add_space(6.0);
        let role = match (s.inside.as_deref(), s.outside.as_deref()) {
            (Some(n), _) if n == sol.name => " — pipette (inside)",
            (_, Some(n)) if n == sol.name => " — bath (outside)",
            _ => "",
        };
        ui.heading(format!("{}{role}", sol.name));
        Grid::new(("recipe", i))
            .num_columns(3)
            .spacing([8.0, 4.0])
            .striped(true)
            .show(ui, |ui| {
                for (j, (compound, _)) in sol.parts.iter().enumerate() {
                    ui.label(compound);
                    ed.number(ui, "solutions[].parts[][1]", &[i, j], 64.0);
                    ed.button(
                        ui,
                        "×",
                        &format!("Remove {compound} from {}", sol.name),
                        Edit::RemovePart { solution: i, part: j },
                    );
                    ui.end_row();
                }
                if sol.ph.is_some() {
                    ui.label("pH");
                    ed.number(ui, "solutions[].ph", &[i], 64.0);
                    ui.label(format!("with {}", sol.titrant.as_deref().unwrap_or("—")));
                    ui.end_row();
                }
            });
        ed.others(ui, ("solution", i), Part::Solution, &[i]);
        add_compound(ui, ed, i, &p.catalog.compound_names());
        if let Some(m) = p.mixtures.get(i) {
            let c = m.checks();
            let ions: Vec<String> = m
                .particles
                .iter()
                .filter(|x| x.mm > 0.0)
                .map(|x| format!("{} {:.4}", x.name, x.mm))
                .collect();
            ui.label(RichText::new(format!("Gives (mM): {}", ions.join(", "))).small());
            ui.label(
                RichText::new(format!(
                    "Cations {:.2}, anions {:.2} mEq/L; {:.1} mOsm/L (ideal); ionic strength {:.1} mM{}",
                    c.cation_meq,
                    c.anion_meq,
                    c.osmolarity_mosm,
                    c.ionic_strength_mm,
                    c.titrant_mm
                        .map(|t| format!("; titrant {t:.2} mM"))
                        .unwrap_or_default()
                ))
                .small(),
            );
        }
        let here = format!("solutions[{i}]");
        for w in warnings.iter().filter(|w| w.path == here) {
            ui.colored_label(ui.visuals().warn_fg_color, format!("⚠ {}", w.message));
        }
    }
    for w in warnings.iter().filter(|w| w.path == "inside") {
        ui.colored_label(ui.visuals().warn_fg_color, format!("⚠ {}", w.message));
    }
    let junctions = p.junctions(s);
    if !junctions.is_empty() {
        ui.add_space(8.0);
        ui.heading("Junctions of the recording");
        ui.label(
            RichText::new(
                "Bath relative to pipette; recorded potential = membrane potential + offset. Estimates.",
            )
            .small(),
        );
        Grid::new("junctions")
            .num_columns(5)
            .spacing([10.0, 4.0])
            .striped(true)
            .show(ui, |ui| {
                for h in ["Pipette", "Bath", "Junction", "Reference", "Offset"] {
                    ui.label(RichText::new(h).small().strong());
                }
                ui.end_row();
                for j in &junctions {
                    ui.label(&j.pipette);
                    ui.label(&j.bath);
                    ui.label(format!("{:+.2} mV", j.ljp_mv));
                    ui.label(format!("{:+.2} mV", j.reference_mv));
                    ui.label(RichText::new(format!("{:+.2} mV", j.offset_mv)).strong());
                    ui.end_row();
                }
            });
    }
    reference(ui, ed);
    compounds(ui, ed);
}

/// The bath's reference electrode, and a bridge's KCl.
fn reference(ui: &mut Ui, ed: &mut Editing) {
    ui.horizontal(|ui| match ed.scenario.reference_electrode() {
        crate::scenario::Reference::Bridge { .. } => {
            ui.label("Reference: KCl bridge");
            if ed.scenario.reference.is_some() {
                ed.number(ui, "reference.kcl_mm", &[], 70.0);
            } else {
                ui.label(format!("{} mM (default)", crate::scenario::DEFAULT_BRIDGE_KCL_MM));
            }
        }
        crate::scenario::Reference::SilverChloride => {
            ui.label("Reference: bare chlorided silver wire in the bath (follows the bath's Cl-)");
        }
    });
}

/// The scenario's own compounds, each ion's numbers.
fn compounds(ui: &mut Ui, ed: &mut Editing) {
    let s = ed.scenario;
    if s.compounds.is_empty() {
        return;
    }
    ui.add_space(8.0);
    ui.heading("This scenario's compounds");
    for (i, c) in s.compounds.iter().enumerate() {
        ui.label(RichText::new(&c.name).strong());
        for j in 0..c.ions.len() {
            ed.others(ui, ("compound ion", i, j), Part::CompoundIon, &[i, j]);
        }
    }
}

/// A search box over the compounds table, and the compounds whose names hold what is typed.
fn add_compound(ui: &mut Ui, ed: &mut Editing, solution: usize, names: &[&str]) {
    let label = format!(
        "search compounds for {}",
        ed.scenario
            .solutions
            .get(solution)
            .map_or("", |x| x.name.as_str())
    );
    let id = ui.make_persistent_id(("compound search", solution));
    let mut query: String = ui.data_mut(|d| d.get_temp(id)).unwrap_or_default();
    ui.horizontal(|ui| {
        ui.label("Add");
        let r = ui.add(
            egui::TextEdit::singleline(&mut query)
                .hint_text("search compounds")
                .desired_width(120.0),
        );
        r.widget_info(|| egui::WidgetInfo::labeled(egui::Role::SearchInput, true, &label));
        if r.changed() {
            ui.data_mut(|d| d.insert_temp(id, query.clone()));
        }
    });
    let found = matching(names, &query);
    if found.is_empty() {
        return;
    }
    ui.horizontal_wrapped(|ui| {
        for name in found {
            let edit = Edit::AddPart {
                solution,
                compound: (*name).to_string(),
            };
            if ed
                .button(ui, name, &format!("Add {name} to this recipe (1 mM)"), edit)
                .clicked()
            {
                ui.data_mut(|d| d.insert_temp(id, String::new()));
            }
        }
    });
}

/// The compounds whose names hold `query` (any case), at most a dozen; none for an empty query.
fn matching<'a>(names: &[&'a str], query: &str) -> Vec<&'a str> {
    let q = query.trim().to_lowercase();
    if q.is_empty() {
        return Vec::new();
    }
    names
        .iter()
        .filter(|n| n.to_lowercase().contains(&q))
        .take(12)
        .copied()
        .collect()
}
