//! The window, driven through egui_kittest on the real app: running, editing a bath
//! concentration by typing, a broken file, undo, and every bundled example. `run_steps` is
//! used instead of `run` wherever a simulation is running, because a running simulation keeps
//! asking for frames and never settles.

use egui::Key;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use permeant::physics::nernst_mv;
use permeant::scenario::Address;
use permeant::scenario::Scenario;
use permeant::ui::dialogs::Dialog;
use permeant::ui::document::Origin;
use permeant::ui::prefs::Speed;
use permeant::ui::{App, AppOptions, Command, Edit};

/// The real app at a common laptop size, keeping nothing on disk.
fn harness() -> Harness<'static, App> {
    Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .build_eframe(|cc| App::new(cc, AppOptions::default()))
}

/// The number at field path `path` (indices left out) and list indices `ix`.
fn at(path: &str, ix: &[usize]) -> Address {
    Address::of(path, ix).unwrap_or_else(|| panic!("no number at {path}"))
}

fn v_trace(h: &Harness<'_, App>) -> Vec<f64> {
    h.state()
        .runtime()
        .trace()
        .map(|t| t.v_mv().to_vec())
        .unwrap_or_default()
}

#[test]
fn run_advances_time_and_the_pulses_move_the_potential() {
    let mut h = harness();
    h.state_mut()
        .queue(Command::OpenExample("excitable-cell-pulse-train.ron".into()));
    h.state_mut().queue(Command::SetSpeed(Speed::MsPerSecond(100.0)));
    h.run_steps(2);
    assert_eq!(h.state().runtime().shown_ms(), 0.0);
    h.get_by_label("▶ Run").click();
    h.run_steps(8);
    let t = h.state().runtime().shown_ms();
    // Each kittest frame counts as 0.1 s of wall time (the cap of one frame's time step), so
    // eight frames at 100 ms/s show at most 80 ms.
    assert!(t > 20.0 && t <= 80.0 + 1e-9, "simulated time advanced to {t} ms");
    assert!(h.state().runtime().running);
    let v = v_trace(&h);
    let (lo, hi) = v
        .iter()
        .fold((f64::MAX, f64::MIN), |(a, b), &x| (a.min(x), b.max(x)));
    // The example's first pulse (10 ms) fires a spike that overshoots 0 mV (its own notes).
    assert!(hi - lo > 50.0 && hi > 0.0, "V spans {lo}..{hi} mV");
    // The status line reports the state and the present time.
    h.get_by_label("running");
    assert!(h.query_by_label_contains("t = ").is_some());
    h.get_by_label("‖ Pause").click();
    h.run_steps(2);
    assert!(!h.state().runtime().running);
    let paused_at = h.state().runtime().shown_ms();
    h.run_steps(3);
    assert_eq!(h.state().runtime().shown_ms(), paused_at);
}

#[test]
fn typing_a_bath_potassium_moves_its_reversal_and_the_resting_potential() {
    let mut h = harness();
    h.run_steps(2);
    let k = 0;
    let temperature = h.state().scenario().temperature_c;
    let e_before = nernst_mv(1, 140.0, 5.0, temperature).expect("defined");
    h.get_by_label(&format!("{e_before:+.1} mV"));
    let rest_before = h
        .state()
        .rest()
        .as_ref()
        .ok()
        .and_then(|r| r.resting_mv())
        .expect("a resting potential");

    h.get_by_label("K+ outside (mM)").click();
    h.run_steps(2);
    h.get_by_label("K+ outside (mM)").type_text("25");
    h.run_steps(2);
    // Applied only once the entry is complete.
    assert_eq!(h.state().scenario().species[k].outside_mm, 5.0);
    h.key_press(Key::Enter);
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[k].outside_mm, 25.0);

    let e_after = nernst_mv(1, 140.0, 25.0, temperature).expect("defined");
    // Nernst: a fivefold rise is log10(5)·RT/F·ln(10) ≈ 43 mV at 37 °C (common practice).
    assert!((e_after - e_before - 43.0).abs() < 0.5, "{e_before} → {e_after}");
    h.get_by_label(&format!("{e_after:+.1} mV"));
    assert!(h.query_by_label(&format!("{e_before:+.1} mV")).is_none());
    let rest_after = h
        .state()
        .rest()
        .as_ref()
        .ok()
        .and_then(|r| r.resting_mv())
        .expect("a resting potential");
    assert!(
        rest_after > rest_before + 10.0,
        "rest {rest_before} → {rest_after} mV"
    );
    // The run has not moved, so it starts over at the new resting state.
    let v0 = h.state().runtime().run().map(|r| r.v_mv());
    assert!(v0.is_some_and(|v| (v - rest_after).abs() < 1e-6));
    assert!(h.state().document().is_dirty());
}

#[test]
fn an_invalid_typed_value_is_refused_and_the_last_valid_one_kept() {
    let mut h = harness();
    h.run_steps(2);
    h.get_by_label("K+ inside (mM)").click();
    h.run_steps(2);
    h.get_by_label("K+ inside (mM)").type_text("-3");
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].inside_mm, 140.0);
    // The reason is on the field's tooltip; it names the problem.
    h.get_by_label("K+ inside (mM)").hover();
    h.run_steps(4);
    assert!(h.query_by_label_contains("cannot be negative").is_some());
    h.key_press(Key::Escape);
    h.run_steps(2);
    assert!(!h.state().document().is_dirty());
}

#[test]
fn a_broken_file_shows_where_and_why_and_leaves_the_scenario_alone() {
    let dir = tempfile::tempdir().expect("temporary directory");
    let path = dir.path().join("broken.ron");
    std::fs::write(&path, "(\n    format: 1,\n    species: [(name: \"K+\", charge: 1, inside_mm: 140.0, outside_mm: 5.0,, )],\n)\n")
        .expect("written");
    let mut h = harness();
    h.state_mut()
        .queue(Command::Edit(Edit::Number(at("temperature_c", &[]), 30.0)));
    h.run_steps(2);
    let before: Scenario = h.state().scenario().clone();
    h.state_mut().queue(Command::OpenPath(path.clone()));
    h.run_steps(3);
    // The edit made the scenario dirty, so opening asks first.
    h.get_by_label("Discard the changes").click();
    h.run_steps(3);
    match h.state().dialog() {
        Some(Dialog::OpenFailed {
            place: Some(place),
            reasons,
            ..
        }) => {
            assert!(place.starts_with("line 3"), "{place}");
            assert!(!reasons.is_empty());
        }
        other => panic!("expected the open-failed dialog, got {other:?}"),
    }
    h.get_by_label("Could not open the scenario");
    assert!(h.query_by_label_contains("Where: line 3").is_some());
    assert_eq!(*h.state().scenario(), before);
    h.get_by_label("Close").click();
    h.run_steps(2);
    assert!(h.state().dialog().is_none());
    assert_eq!(*h.state().scenario(), before);
}

#[test]
fn undo_restores_the_previous_value_and_redo_reapplies_it() {
    let mut h = harness();
    h.run_steps(2);
    h.state_mut().queue(Command::Edit(Edit::Number(
        at("species[].outside_mm", &[0]),
        20.0,
    )));
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 20.0);
    h.get_by_label("↶ Undo").click();
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 5.0);
    assert!(!h.state().document().is_dirty());
    h.get_by_label("↷ Redo").click();
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 20.0);
    // A discrete edit (adding an ion) is its own step.
    h.get_by_label("+ Add ion").click();
    h.run_steps(2);
    assert_eq!(h.state().scenario().species.len(), 4);
    h.get_by_label("↶ Undo").click();
    h.run_steps(2);
    assert_eq!(h.state().scenario().species.len(), 3);
    assert_eq!(h.state().scenario().species[0].outside_mm, 20.0);
}

#[test]
fn the_examples_menu_opens_every_bundled_example() {
    let mut h = harness();
    h.run_steps(1);
    assert!(!permeant::examples::EXAMPLES.is_empty());
    for (file, _) in permeant::examples::EXAMPLES {
        h.get_by_label("Examples").click();
        h.run_steps(2);
        h.get_by_label_contains(&format!("({file})")).click();
        h.run_steps(2);
        let app = h.state();
        assert_eq!(app.document().origin, Origin::Example(file.to_string()), "{file}");
        assert!(app.dialog().is_none(), "{file}: {:?}", app.dialog());
        assert!(app.runtime().error.is_none(), "{file}: {:?}", app.runtime().error);
        assert!(app.rest().is_ok(), "{file}: {:?}", app.rest());
    }
    // Every input on every editor tab can be reached by name (screen readers, and these tests).
    h.state_mut()
        .queue(Command::OpenExample("excitable-cell-pulse-train.ron".into()));
    h.run_steps(2);
    for tab in ["Cell", "Pump & channels", "Protocol", "Solutions"] {
        h.get_by_label(tab).click();
        h.run_steps(2);
        h.check_accessibility();
    }
    h.get_by_label("Pump & channels").click();
    h.run_steps(2);
    h.get_by_label("+ Add a pump").click();
    h.run_steps(2);
    h.check_accessibility();
    assert!(h.state().scenario().pump.is_some());
}

/// Every number the field table lists for a scenario has a field in one of the editor's tabs,
/// found by the name a screen reader gives it.
#[test]
fn every_number_of_a_scenario_can_be_edited_in_the_editor() {
    // A pump, both kinds of gate, every kind of event and a held start (invented).
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/every-number.ron");
    let mut h = harness();
    h.state_mut().queue(Command::OpenPath(path));
    h.run_steps(2);
    let s = h.state().scenario().clone();
    assert_eq!(s.title, "Every number", "{:?}", h.state().dialog());
    let mut missing: Vec<String> = permeant::scenario::fields::addresses(&s)
        .iter()
        // An opener's `max_block` stays at its default and means nothing: not offered.
        .filter(|a| a.to_string() != "protocol[6].max_block")
        .map(|a| match a.field().unit {
            "" => a.label(&s),
            unit => format!("{} ({unit})", a.label(&s)),
        })
        .collect();
    assert!(missing.len() > 40, "{missing:?}");
    for tab in ["Cell", "Pump & channels", "Protocol", "Solutions"] {
        h.get_by_label(tab).click();
        h.run_steps(2);
        missing.retain(|name| h.query_all_by_label(name).next().is_none());
    }
    assert!(missing.is_empty(), "no field in the editor for {missing:?}");
}

#[test]
fn dragging_a_concentration_is_log_scaled_and_one_undo_step() {
    let mut h = harness();
    h.run_steps(2);
    let start = h.get_by_label("K+ outside (mM)").rect().center();
    h.drag_at(start);
    h.run_steps(1);
    // Three moves to the right, 150 points in all: one decade (150 points per decade).
    for dx in [40.0, 100.0, 150.0] {
        h.hover_at(start + egui::vec2(dx, 0.0));
        h.run_steps(1);
    }
    h.drop_at(start + egui::vec2(150.0, 0.0));
    h.run_steps(2);
    let out = h.state().scenario().species[0].outside_mm;
    assert!(
        (out - 50.0).abs() < 1e-9,
        "5 mM dragged one decade up gave {out} mM"
    );
    h.get_by_label("↶ Undo").click();
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 5.0);
}

#[test]
fn an_edit_while_running_continues_the_trace_and_restart_goes_back_to_zero() {
    let mut h = harness();
    h.state_mut().queue(Command::SetSpeed(Speed::MsPerSecond(100.0)));
    h.run_steps(1);
    let rest_before = h
        .state()
        .rest()
        .as_ref()
        .ok()
        .and_then(|r| r.resting_mv())
        .expect("a resting potential");
    h.get_by_label("▶ Run").click();
    h.run_steps(5);
    let t_edit = h.state().runtime().shown_ms();
    assert!(t_edit > 10.0);
    let n_edit = h.state().runtime().trace().map_or(0, |t| t.len());
    h.state_mut().queue(Command::Edit(Edit::Number(
        at("species[].outside_mm", &[0]),
        25.0,
    )));
    h.run_steps(6);
    let rt = h.state().runtime();
    assert!(
        rt.shown_ms() > t_edit + 20.0,
        "the run went on from {t_edit} ms to {} ms",
        rt.shown_ms()
    );
    let v = v_trace(&h);
    // Before the edit the cell sat at its resting potential; after it, it depolarizes toward
    // the new one without the trace starting over.
    assert!((v[n_edit - 1] - rest_before).abs() < 1e-3);
    let rest_after = h
        .state()
        .rest()
        .as_ref()
        .ok()
        .and_then(|r| r.resting_mv())
        .expect("a resting potential");
    let v_end = v[v.len() - 1];
    assert!(
        v_end > rest_before + 5.0 && v_end <= rest_after + 1e-6,
        "{rest_before} → {v_end} (toward {rest_after})"
    );
    h.get_by_label("↺ Restart").click();
    h.run_steps(2);
    assert!(h.state().runtime().shown_ms() < 20.0, "restarted at t = 0");
    assert!(
        v_trace(&h)
            .first()
            .is_some_and(|v0| (v0 - rest_after).abs() < 1e-6)
    );
}

#[test]
fn closing_with_unsaved_changes_asks_first() {
    let commands = |h: &Harness<'_, App>| -> Vec<egui::ViewportCommand> {
        h.output()
            .viewport_output
            .get(&egui::ViewportId::ROOT)
            .map(|v| v.commands.clone())
            .unwrap_or_default()
    };
    let mut h = harness();
    h.state_mut().queue(Command::Edit(Edit::Title("changed".into())));
    h.run_steps(2);
    h.input_mut()
        .viewports
        .entry(egui::ViewportId::ROOT)
        .or_default()
        .events
        .push(egui::ViewportEvent::Close);
    h.step();
    assert!(commands(&h).contains(&egui::ViewportCommand::CancelClose));
    h.run_steps(2);
    assert!(matches!(h.state().dialog(), Some(Dialog::Unsaved { .. })));
    h.get_by_label("Discard the changes").click();
    // One step runs a frame per queued pointer event; the last one answers the dialog.
    h.step();
    assert!(commands(&h).contains(&egui::ViewportCommand::Close));
}

#[test]
fn saving_writes_a_file_that_reopens_to_the_same_scenario() {
    let dir = tempfile::tempdir().expect("temporary directory");
    let path = dir.path().join("pipette");
    let mut h = harness();
    h.state_mut()
        .queue(Command::Edit(Edit::Number(at("species[].inside_mm", &[1]), 20.0)));
    h.run_steps(2);
    assert!(h.state().document().window_title().starts_with('*'));
    h.state_mut().queue(Command::SaveTo(path.clone()));
    h.run_steps(2);
    let saved = dir.path().join("pipette.ron");
    assert!(!h.state().document().is_dirty());
    assert!(!h.state().document().window_title().starts_with('*'));
    let read = permeant::scenario::read_file(&saved).expect("the saved file reads back");
    assert_eq!(read.into_inner(), *h.state().scenario());
    h.state_mut().queue(Command::New);
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[1].inside_mm, 12.0);
    h.state_mut().queue(Command::OpenPath(saved.clone()));
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[1].inside_mm, 20.0);
    assert_eq!(h.state().document().path(), Some(saved.as_path()));
}

#[test]
fn the_solutions_tab_edits_a_recipe_with_undo_and_the_cell_tab_marks_derived_numbers() {
    let mut h = harness();
    h.state_mut()
        .queue(Command::OpenExample("gluconate-pipette-junction.ron".into()));
    h.run_steps(2);
    let k_before = h.state().scenario().species[0].inside_mm;
    // The cell tab shows the derived concentration, not editable, with its reason.
    h.get_by_label("Cell").click();
    h.run_steps(2);
    assert!(h.query_by_label(&format!("{k_before:.2} mM")).is_some());
    h.get_by_label("Solutions").click();
    h.run_steps(2);
    // The junctions of the recording are listed with their offset.
    h.get_by_label("Junctions of the recording");
    assert!(h.query_by_label_contains("+15.").is_some());
    // Search the table and add a compound to the pipette (the second solution).
    h.get_by_label("search compounds for gluconate pipette").click();
    h.run_steps(2);
    h.get_by_label("search compounds for gluconate pipette")
        .type_text("lic");
    h.run_steps(2);
    h.get_by_label("LiCl").click();
    h.run_steps(2);
    assert!(
        h.state().scenario().solutions[1]
            .parts
            .contains(&("LiCl".to_string(), 1.0))
    );
    // One more mM of KCl in the pipette is one more mM of K+ in the cell.
    h.state_mut().queue(Command::Edit(Edit::AddPart {
        solution: 1,
        compound: "KCl".into(),
    }));
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].inside_mm, k_before + 1.0);
    // Remove a part, then undo all three steps.
    h.state_mut()
        .queue(Command::Edit(Edit::RemovePart { solution: 1, part: 4 }));
    h.run_steps(2);
    assert!(
        h.state().scenario().solutions[1]
            .parts
            .iter()
            .all(|p| p.0 != "sucrose")
    );
    for _ in 0..3 {
        h.state_mut().queue(Command::Undo);
        h.run_steps(1);
    }
    h.run_steps(2);
    assert!(
        h.state().scenario().solutions[1]
            .parts
            .iter()
            .all(|p| p.0 != "LiCl")
    );
    assert_eq!(h.state().scenario().species[0].inside_mm, k_before);
    assert!(
        h.state().scenario().solutions[1]
            .parts
            .iter()
            .any(|p| p.0 == "sucrose")
    );
    // The activities switch is one undoable edit that lowers what the cell sees.
    h.get_by_label("Use activities (Davies) instead of concentrations")
        .click();
    h.run_steps(2);
    assert!(h.state().scenario().activities);
    assert!(h.state().scenario().species[0].inside_mm < k_before);
}
