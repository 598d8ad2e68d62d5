//! The Analysis window's "Lost current" tab, driven through egui_kittest on the real app: a
//! step family kept as the control with the Family panel's button, a blocker added, and the
//! fraction blocked read from the table at each level; the blocker example's dose family read
//! as an IC50 on current; families that cannot be compared say why; a control can be dropped.

use std::time::{Duration, Instant};

use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use permeant::analysis::block::compare_families;
use permeant::scenario::{Address, Edit, EventKind};
use permeant::ui::analysis::AnalysisTab;
use permeant::ui::{App, AppOptions, Command};

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
            h.run_steps(2);
            return;
        }
        assert!(
            start.elapsed() < Duration::from_secs(120),
            "the family never finished"
        );
        std::thread::sleep(Duration::from_millis(20));
    }
}

fn number(path: &str, at: usize, value: f64) -> Command {
    Command::Edit(Edit::Number(Address::of(path, &[at]).expect("a row"), value))
}

fn open_example(h: &mut Harness<'_, App>, name: &str) {
    h.state_mut().queue(Command::OpenExample(name.into()));
    until_family_done(h);
}

fn keep_as_control(h: &mut Harness<'_, App>) {
    h.get_by_label("Family").click();
    h.run_steps(2);
    h.get_by_label("Keep as control").click();
    h.run_steps(4);
}

#[test]
fn a_step_family_kept_as_control_shows_the_current_a_blocker_takes_at_each_level() {
    let mut h = harness();
    open_example(&mut h, "delayed-potassium-activation-family.ron");
    keep_as_control(&mut h);
    let a = h.state().analysis();
    assert!(a.open && a.tab == AnalysisTab::LostCurrent);
    assert_eq!(a.control_family.as_ref().map(|c| c.table.values.len()), Some(15));
    // Nothing changed yet: this family is its own control, nothing is blocked.
    assert!(h.query_all_by_label("0.0 %").count() >= 10);
    // A blocker of the K+ channel at its IC50, in force from the start without a lag.
    h.state_mut()
        .queue(Command::Edit(Edit::AddEvent(EventKind::Agent)));
    h.run_steps(1);
    for (path, v) in [
        ("protocol[].from_ms", 0.0),
        ("protocol[].onset_ms", 0.0),
        ("protocol[].ic50_um", 3.0),
        ("protocol[].dose_um", 3.0),
    ] {
        h.state_mut().queue(number(path, 1, v));
    }
    until_family_done(&mut h);
    h.run_steps(2);
    // The Hill equation with n = 1 and full block (Hill 1910): half the K+ current is lost
    // at the IC50, at every level where the control carries a measurable current; K+ is the
    // only permeant ion of this example, and the block scales its whole permeability.
    let a = h.state().analysis();
    let control = &a.control_family.as_ref().expect("a control").table;
    let present = &h.state().family().result.as_ref().expect("a family").table;
    let cmp = compare_families(control, present, 0).unwrap_or_else(|e| panic!("{e}"));
    let fractions: Vec<f64> = cmp.rows.iter().filter_map(|r| r.blocked).collect();
    assert!(fractions.len() >= 8, "{fractions:?}");
    for f in &fractions {
        assert!((f - 0.5).abs() < 1e-5, "{fractions:?}");
    }
    // The table shows each of them, and nothing else in per cent.
    assert_eq!(h.query_all_by_label("50.0 %").count(), fractions.len());
    assert!(h.query_all_by_label("0.0 %").next().is_none());
    assert!(
        h.query_by_label_contains("Control: \"Delayed potassium current")
            .is_some()
    );
}

#[test]
fn the_blocker_dose_family_gives_its_ic50_on_current() {
    let mut h = harness();
    open_example(&mut h, "potassium-blocker-fraction-blocked.ron");
    h.get_by_label("Analysis").click();
    h.run_steps(3);
    h.get_by_label("Lost current").click();
    h.run_steps(4);
    // The file's blocker: IC50 3 µM, Hill coefficient 1, full block (Hill 1910); the fit of
    // the current lost gives them back.
    assert!(
        h.query_by_label_contains("Hill fit: IC50 = 3.00 ±").is_some(),
        "the IC50 with its standard error"
    );
    assert!(
        h.query_by_label_contains("µM, Hill coefficient = 1.00 ±")
            .is_some()
    );
    // At 3 µM half the control's current is lost.
    assert!(h.query_all_by_label("50.0 %").count() >= 1);
    assert!(h.query_by_label("Dose (µM)").is_some());
}

#[test]
fn families_that_cannot_be_compared_say_why_and_a_control_can_be_dropped() {
    let mut h = harness();
    open_example(&mut h, "potassium-blocker-fraction-blocked.ron");
    keep_as_control(&mut h);
    open_example(&mut h, "delayed-potassium-activation-family.ron");
    h.run_steps(2);
    assert!(
        h.query_by_label_contains(
            "Cannot compare: the control varies protocol[1].dose_um, this family varies protocol[0].to_mv"
        )
        .is_some(),
        "the reason"
    );
    h.get_by_label("Forget control").click();
    h.run_steps(3);
    assert!(h.state().analysis().control_family.is_none());
    assert!(h.query_by_label("Keep this family as control").is_some());
}
