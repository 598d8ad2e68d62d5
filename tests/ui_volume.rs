//! The window with a cell whose volume is tracked: the lower plot offers the volume and the
//! osmolarity only for such a cell, and shows a pump block's swelling live at a minute of
//! simulated time per second.

use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use permeant::scenario::{Volume, Water};
use permeant::ui::prefs::{LowerPlot, Speed};
use permeant::ui::{App, AppOptions, Command, Edit};

fn harness() -> Harness<'static, App> {
    Harness::builder()
        .with_size(egui::vec2(1280.0, 720.0))
        .build_eframe(|cc| App::new(cc, AppOptions::default()))
}

#[test]
fn the_volume_view_is_offered_for_a_tracked_cell_and_shows_the_swelling() {
    let mut h = harness();
    h.run_steps(2);
    // The default cell's volume is fixed: no volume views.
    assert!(h.query_by_label("Volume").is_none());
    assert!(h.query_by_label("Osmolarity").is_none());

    h.state_mut()
        .queue(Command::OpenExample("pump-block-swelling.ron".into()));
    h.state_mut()
        .queue(Command::SetSpeed(Speed::MsPerSecond(60_000.0)));
    h.run_steps(2);
    assert_eq!(h.state().prefs().speed.label(), "1 min/s");
    h.get_by_label("Volume").click();
    h.run_steps(2);
    assert_eq!(h.state().prefs().lower_plot, LowerPlot::Volume);
    h.get_by_label("▶ Run").click();
    // Each kittest frame counts as 0.1 s of wall time: 6 s of the run per frame.
    h.run_steps(30);
    let shown = h.state().runtime().shown_ms();
    assert!(shown > 120_000.0, "the run reached {shown} ms");
    let w = &h.state().runtime().derived.volume_rel;
    let swelled = w.iter().copied().fold(0.0, f64::max);
    assert!(
        (w[0] - 1.0).abs() < 1e-9 && swelled > 1.02,
        "volume up to {swelled}"
    );

    h.get_by_label("Osmolarity").click();
    h.run_steps(2);
    assert_eq!(h.state().prefs().lower_plot, LowerPlot::Osmolarity);
    let d = &h.state().runtime().derived;
    assert!(
        (d.osm_in_mosm[0] - d.osm_out_mosm[0]).abs() < 1e-9,
        "iso-osmotic at the start"
    );

    // A kept trace carries the final volume and the time to half its change into the table.
    h.get_by_label("Keep trace").click();
    h.run_steps(4);
    let kept = &h.state().analysis().kept.traces;
    assert_eq!(kept.len(), 1);
    let m = kept[0].volume.expect("volume metrics of a tracked cell");
    let w = &h.state().runtime().derived.volume_rel;
    let n = kept[0].t_ms.len().min(w.len());
    assert_eq!(m.final_rel, w[n - 1]);
    // The block starts at 30 s; the swelling's half-way point comes after it.
    assert!(m.half_change_ms.is_some_and(|t| t > 0.0), "{m:?}");
    h.get_by_label("Final volume (relative)");
    h.get_by_label(&format!("{:.4}", m.final_rel));
    h.get_by_label("Half of volume change (ms)");
}

#[test]
fn the_editor_lets_the_volume_follow_water() {
    let mut h = harness();
    h.run_steps(2);
    h.get_by_label("Cell volume");
    assert!(h.query_by_label("Volume").is_none());
    h.state_mut().queue(Command::Edit(Edit::Volume(Volume::Tracked {
        water: Water::Instant,
        impermeant: None,
    })));
    h.run_steps(2);
    assert!(!h.state().scenario().cell.volume.is_fixed());
    h.get_by_label("Volume");
    h.get_by_label("Osmolarity");
}
