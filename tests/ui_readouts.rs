//! Issue 13, points 5 and 6, driven through egui_kittest on the real app: readouts that say
//! which time they belong to (at start, now, at the plot cursor) with the GHK line following
//! the bath; and slow runs made watchable (an automatic speed from the run's length, a time
//! axis in s or min, the lower plot sized from its data before a run, inside concentrations
//! as a lower-plot choice). Each kittest frame counts as 0.1 s of wall time.

mod common;

use common::reference::{self, Ion};
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use permeant::scenario::{Event, Scenario};
use permeant::ui::prefs::{LowerPlot, Speed, Store};
use permeant::ui::time::TimeUnit;
use permeant::ui::{App, AppOptions, Command};

/// The real app at the size the issue was tried at, keeping nothing on disk.
fn harness() -> Harness<'static, App> {
    Harness::builder()
        .with_size(egui::vec2(1280.0, 720.0))
        .build_eframe(|cc| App::new(cc, AppOptions::default()))
}

fn open(h: &mut Harness<'_, App>, example: &str) {
    h.state_mut().queue(Command::OpenExample(example.into()));
    h.run_steps(3);
}

/// Runs until the run is finished, at most `frames` frames.
fn run_to_end(h: &mut Harness<'_, App>, frames: usize) -> usize {
    h.get_by_label("▶ Run").click();
    for k in 0..frames {
        h.run_steps(1);
        if h.state().runtime().is_finished() {
            return k + 1;
        }
    }
    frames
}

/// The scenario's ions for the reference GHK equation, with K+'s bath at `k_out_mm`.
fn ions_with_bath_k(s: &Scenario, k_out_mm: f64) -> Vec<Ion> {
    s.species
        .iter()
        .map(|x| Ion {
            charge: x.charge,
            inside_mm: x.inside_mm,
            outside_mm: if x.name == "K+" { k_out_mm } else { x.outside_mm },
            p_cm_per_s: x.permeability_cm_per_s,
        })
        .collect()
}

/// The new bath K+ of the example's one bath change.
fn new_bath_k(s: &Scenario) -> f64 {
    s.protocol
        .iter()
        .find_map(|e| match e {
            Event::BathChange { outside_mm, .. } => Some(*outside_mm),
            _ => None,
        })
        .expect("the example raises bath K+")
}

fn mv(v: f64) -> String {
    format!("{v:+.1} mV")
}

// Point 5: the cell panel kept the t = 0 GHK potential and a bath K+ of 5 mM while the cell
// sat at −43 mV in 25 mM, and the upper plot's GHK line stayed at its t = 0 value.
#[test]
fn readouts_say_which_time_they_belong_to_and_the_ghk_line_follows_the_bath() {
    let mut h = harness();
    open(&mut h, "raised-bath-potassium.ron");
    let s = h.state().scenario().clone();
    let t_c = s.temperature_c;
    let k_new = new_bath_k(&s);
    // Goldman 1943, Hodgkin & Katz 1949: the GHK voltage equation in closed form (CODATA 2018 R, F).
    let ghk_start = reference::ghk_voltage_mv(&ions_with_bath_k(&s, 5.0), t_c);
    let ghk_new = reference::ghk_voltage_mv(&ions_with_bath_k(&s, k_new), t_c);
    let ek_new = reference::nernst_mv(1, 140.0, k_new, t_c);
    h.get_by_label("At start");
    h.get_by_label("Now, 0.0 ms");
    // Before the run, start and now agree.
    h.get_by_label(&format!("GHK potential at start: {}", mv(ghk_start)));
    h.get_by_label(&format!("GHK potential now: {}", mv(ghk_start)));
    h.get_by_label("Bath K+ now: 5.00 mM");

    let frames = run_to_end(&mut h, 120);
    assert!(h.state().runtime().is_finished(), "{frames} frames");
    h.run_steps(2);
    h.get_by_label("Now, 250.0 ms");
    // The GHK potential now is the one with the raised bath; the start column keeps t = 0.
    h.get_by_label(&format!("GHK potential now: {}", mv(ghk_new)));
    h.get_by_label(&format!("GHK potential at start: {}", mv(ghk_start)));
    h.get_by_label("Bath K+ at start: 5.00 mM");
    h.get_by_label(&format!("Bath K+ now: {k_new:.2} mM"));
    // The Nernst equation (common practice), written out with CODATA 2018 R and F.
    h.get_by_label(&format!("E K+ now: {}", mv(ek_new)));

    // The GHK line follows the bath: its first and last points are the closed form's.
    let ghk = &h.state().runtime().derived.ghk_mv;
    let n = h.state().runtime().shown_len();
    assert!(ghk.len() >= n && n > 2000, "{} of {n}", ghk.len());
    assert!((ghk[0] - ghk_start).abs() < 1e-6, "{} vs {ghk_start}", ghk[0]);
    assert!((ghk[n - 1] - ghk_new).abs() < 1e-3, "{} vs {ghk_new}", ghk[n - 1]);

    // A click on the upper plot before the bath change places the cursor: the readouts "now"
    // are read there, where the bath is still 5 mM.
    let [upper, _] = h.state().plot_frames().expect("drawn");
    let at = egui::pos2(upper.left() + upper.width() * 0.12, upper.center().y);
    h.hover_at(at);
    h.run_steps(1);
    h.drag_at(at);
    h.drop_at(at);
    h.run_steps(3);
    let cursor = h.state().plot_cursor_ms().expect("a click places the cursor");
    assert!(cursor > 5.0 && cursor < 60.0, "cursor at {cursor} ms");
    assert!(h.query_by_label_contains("At cursor, ").is_some());
    h.get_by_label(&format!("GHK potential at cursor: {}", mv(ghk_start)));
    h.get_by_label("Bath K+ at cursor: 5.00 mM");
    // V now is the trace's at the cursor's sample.
    let rt = h.state().runtime();
    let trace = rt.trace().expect("a trace");
    let k = trace.t_ms.partition_point(|&t| t <= cursor + 1e-9) - 1;
    h.get_by_label(&format!("Membrane potential at cursor: {}", mv(trace.v_mv()[k])));
    let clear = h.get_by_label_contains("Cursor ");
    clear.click();
    h.run_steps(2);
    assert_eq!(h.state().plot_cursor_ms(), None);
    h.get_by_label("Now, 250.0 ms");
}

// Point 6: the 60-s pump example took about 20 minutes at the default 50 ms/s, and its axis
// and status read ms up to 60 000.
#[test]
fn a_minute_long_run_finishes_in_seconds_on_a_time_axis_in_seconds() {
    let dir = tempfile::tempdir().expect("a temporary directory");
    // A speed saved by an older version for a quarter-second demo.
    std::fs::create_dir_all(dir.path().join("data")).expect("made");
    std::fs::write(
        dir.path().join("data/prefs.ron"),
        "(speed: MsPerSecond(50.0), large_text: false)",
    )
    .expect("written");
    let options = AppOptions {
        store: Store {
            dir: Some(dir.path().join("data")),
        },
        ..AppOptions::default()
    };
    let mut h = Harness::builder()
        .with_size(egui::vec2(1280.0, 720.0))
        .build_eframe(|cc| App::new(cc, options));
    h.run_steps(2);
    assert_eq!(h.state().prefs().speed, Speed::Auto);
    open(&mut h, "sodium-pump-recovery.ron");
    assert_eq!(h.state().prefs().speed.label_for(60_000.0), "auto (20 s/s)");
    h.get_by_value("auto (20 s/s)");
    assert_eq!(h.state().plot_time_unit(), TimeUnit::S);
    h.get_by_label("t = 0.00 s of 60 s");
    // 20 s of the run per second of wall time: three seconds, 30 frames (a few more for the
    // first frames and the engine's budget).
    let frames = run_to_end(&mut h, 60);
    assert!(h.state().runtime().is_finished(), "{frames} frames");
    assert!(frames <= 45, "{frames} frames");
    h.run_steps(2);
    h.get_by_label("t = 60.00 s of 60 s");

    // A speed the user picks stays in force for this scenario, and opening another gives auto.
    h.state_mut().queue(Command::SetSpeed(Speed::MsPerSecond(50.0)));
    h.run_steps(1);
    open(&mut h, "raised-bath-potassium.ron");
    assert_eq!(h.state().prefs().speed, Speed::Auto);
    h.get_by_value("auto (50 ms/s)");
    assert_eq!(h.state().plot_time_unit(), TimeUnit::Ms);
}

// Point 6 (issue 12's speed): a ten-minute tracked-volume run shows live at minutes per second.
#[test]
fn a_ten_minute_volume_run_shows_live_at_minutes_per_second() {
    let mut h = harness();
    open(&mut h, "pump-block-swelling.ron");
    h.get_by_value("auto (2 min/s)");
    assert_eq!(h.state().plot_time_unit(), TimeUnit::Min);
    h.get_by_label("▶ Run");
    h.get_by_label("▶ Run").click();
    h.run_steps(10);
    // Ten frames of 0.1 s at 2 min/s: two minutes, shown while running.
    let shown = h.state().runtime().shown_ms();
    assert!(
        h.state().runtime().running && (100_000.0..=130_000.0).contains(&shown),
        "{shown} ms"
    );
}

// Point 6: before a run the pump example's current axis spanned ±30 000 µA/cm².
#[test]
fn the_lower_plot_is_sized_from_the_steady_state_before_a_run_and_from_the_data_after() {
    let mut h = harness();
    open(&mut h, "sodium-pump-recovery.ron");
    h.run_steps(3);
    let pump_max = h
        .state()
        .scenario()
        .pump
        .as_ref()
        .map(|p| p.max_current_ua_per_cm2)
        .expect("a pump");
    let [_, (lo, hi)] = h.state().plot_y_ranges().expect("drawn");
    // Every current of the cell at rest is within the pump's maximum (common practice: the
    // pump balances the leaks), so the axis is a few µA/cm², not thousands.
    assert!(lo <= 0.0 && hi >= 0.0, "{lo}..{hi}");
    assert!(hi - lo < 4.0 * pump_max, "{lo}..{hi} µA/cm²");
    assert!(hi - lo > 0.1 * pump_max, "{lo}..{hi} µA/cm²");
    run_to_end(&mut h, 60);
    h.run_steps(2);
    let [_, (lo, hi)] = h.state().plot_y_ranges().expect("drawn");
    let d = &h.state().runtime().derived;
    let top = d.pump_ua_per_cm2.iter().copied().fold(f64::MIN, f64::max);
    assert!(
        hi >= top && hi - lo < 4.0 * pump_max,
        "{lo}..{hi} with a pump at {top}"
    );
    // After a restart, before the run again: the axis holds every current at t = 0.
    let at_start: Vec<f64> = d.currents_ua_per_cm2.iter().map(|c| c[0]).collect();
    h.get_by_label("↺ Restart").click();
    h.run_steps(3);
    let [_, (lo, hi)] = h.state().plot_y_ranges().expect("drawn");
    for i in at_start {
        assert!(lo <= i && i <= hi, "{i} µA/cm² outside {lo}..{hi}");
    }
}

// Point 6: the pump example's notes said to watch inside concentrations, which no plot showed.
#[test]
fn inside_concentrations_are_a_lower_plot_choice_where_they_change() {
    let mut h = harness();
    open(&mut h, "raised-bath-potassium.ron");
    // Inside concentrations are fixed here: nothing to plot.
    assert!(h.query_by_label("Inside concentrations").is_none());
    open(&mut h, "sodium-pump-recovery.ron");
    h.get_by_label("Inside concentrations").click();
    h.run_steps(2);
    assert_eq!(h.state().prefs().lower_plot, LowerPlot::Concentrations);
    let s = h.state().scenario().clone();
    let [_, (lo, hi)] = h.state().plot_y_ranges().expect("drawn");
    // Before the run the axis holds the file's inside concentrations (mM).
    for x in &s.species {
        assert!(lo <= x.inside_mm && x.inside_mm <= hi, "{} at {lo}..{hi}", x.name);
    }
    h.get_by_label("Inside Na+ at start: 20.00 mM");
    h.get_by_label("Inside Na+ now: 20.00 mM");
    run_to_end(&mut h, 60);
    h.run_steps(2);
    let d = &h.state().runtime().derived;
    let n = h.state().runtime().shown_len();
    let na = &d.inside_mm[1];
    let k = &d.inside_mm[0];
    assert_eq!(na[0], 20.0);
    // What the notes say: inside Na+ falls by a few mM and inside K+ rises over the minute.
    let fall = na[0] - na[n - 1];
    assert!((1.0..10.0).contains(&fall), "Na+ fell by {fall} mM");
    assert!(k[n - 1] > k[0], "K+ {} → {}", k[0], k[n - 1]);
    // The readout now shows the last shown sample's inside Na+.
    h.get_by_label(&format!("Inside Na+ now: {:.2} mM", na[n - 1]));
}
