//! The window in voltage clamp and with a family of runs, driven through egui_kittest on the
//! real app: one control switches the mode, the protocol offers commands in clamp mode, and a
//! family is run, measured and shown in the side panel (and can be cancelled).

use std::time::{Duration, Instant};

use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use permeant::scenario::{Event, EventKind, RunMode};
use permeant::ui::{App, AppOptions, Command, Edit};

fn harness() -> Harness<'static, App> {
    Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .build_eframe(|cc| App::new(cc, AppOptions::default()))
}

/// Steps frames until the family of the present scenario is done (its job runs on threads).
fn until_family_done(h: &mut Harness<'_, App>) {
    let start = Instant::now();
    loop {
        h.run_steps(1);
        let f = h.state().family();
        if f.progress().is_none() && (f.result.is_some() || f.error.is_some()) {
            return;
        }
        assert!(
            start.elapsed() < Duration::from_secs(60),
            "the family never finished"
        );
        std::thread::sleep(Duration::from_millis(20));
    }
}

#[test]
fn one_control_switches_to_voltage_clamp_and_the_protocol_offers_commands() {
    let mut h = harness();
    h.run_steps(2);
    h.get_by_label("Protocol").click();
    h.run_steps(2);
    h.get_by_label("voltage clamp").click();
    h.run_steps(2);
    assert!(matches!(
        h.state().scenario().run.mode,
        RunMode::VoltageClamp {
            holding_mv: -80.0,
            ..
        }
    ));
    // The clamp's own numbers are in the Run grid.
    assert!(h.query_by_label_contains("Holding").is_some());
    h.get_by_label("+ Add event").click();
    h.run_steps(2);
    assert!(h.query_by_label("Command step").is_some());
    assert!(h.query_by_label("Current pulse").is_none());
    h.get_by_label("Command step").click();
    h.run_steps(2);
    assert!(matches!(h.state().scenario().protocol[..], [Event::Step { .. }]));
    // Back to current clamp: the command goes with it (undo brings it back).
    h.state_mut()
        .queue(Command::Edit(Edit::Mode(RunMode::CurrentClamp)));
    h.run_steps(2);
    assert!(h.state().scenario().protocol.is_empty());
    h.state_mut()
        .queue(Command::Edit(Edit::AddEvent(EventKind::Inject)));
    h.run_steps(2);
    assert_eq!(h.state().scenario().protocol.len(), 1);
}

#[test]
fn a_step_family_shows_its_iv_reversal_and_activation_fit() {
    let mut h = harness();
    h.state_mut().queue(Command::OpenExample(
        "delayed-potassium-activation-family.ron".into(),
    ));
    until_family_done(&mut h);
    let f = h.state().family();
    let r = f.result.as_ref().expect("a family");
    assert_eq!(r.runs.members.len(), 15);
    assert!(r.table.reversal_mv.is_some() && r.table.boltzmann.is_some());
    h.get_by_label("Family").click();
    h.run_steps(3);
    assert!(
        h.query_by_label_contains("Reversal potential (interpolated)")
            .is_some()
    );
    assert!(h.query_by_label_contains("Boltzmann fit: V½").is_some());
    // An edit runs the family again for the new revision.
    h.state_mut().queue(Command::Edit(Edit::Number(
        permeant::scenario::Address::of("run.mode.holding_mv", &[]).expect("a row"),
        -100.0,
    )));
    h.run_steps(1);
    assert!(h.state().family().progress().is_some() || h.state().family().result.is_some());
    until_family_done(&mut h);
}

#[test]
fn a_family_can_be_cancelled_and_says_so() {
    let mut h = harness();
    h.state_mut()
        .queue(Command::OpenExample("current-injection-rheobase.ron".into()));
    h.run_steps(1);
    h.state_mut().queue(Command::CancelFamily);
    h.run_steps(2);
    let f = h.state().family();
    assert!(f.was_cancelled() && f.progress().is_none());
    assert!(f.error.as_deref().is_some_and(|e| e.contains("cancelled")));
}

// Found after the merge: the lower plot sized itself from the live run alone; a cell held at
// −90 mV carries almost no current, so the family's step currents (about 150 µA/cm²) stood 1e5
// plot heights off the axis and their dashed lines ran out of memory at large text.
#[test]
fn the_current_axis_holds_every_run_of_the_family() {
    let mut h = harness();
    h.state_mut().queue(Command::OpenExample(
        "delayed-potassium-activation-family.ron".into(),
    ));
    until_family_done(&mut h);
    h.run_steps(3);
    let f = h.state().family().result.as_ref().expect("a family");
    let (lo, hi) = f
        .runs
        .members
        .iter()
        .flat_map(|m| m.i_ua_per_cm2.iter().copied())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    assert!(
        hi > 100.0,
        "the +50 mV step carries a large outward current ({hi})"
    );
    let [_, (y_lo, y_hi)] = h.state().plot_y_ranges().expect("drawn");
    assert!(
        y_lo <= lo && y_hi >= hi,
        "the axis {y_lo}..{y_hi} µA/cm² holds the family's {lo}..{hi} µA/cm²"
    );
}
