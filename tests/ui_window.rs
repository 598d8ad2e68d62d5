//! The window as its users meet it (issue 13), driven through egui_kittest on the real app:
//! typed entries applied only when complete, Esc closing what it opens, the plots' shared time
//! axis, the plot-only PNG export at a chosen size. `run_steps` is used wherever a frame count
//! matters (a running simulation never settles).

use egui::Key;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use permeant::ui::{App, AppOptions, Command};

/// The real app at the size the issue was tried at, keeping nothing on disk.
fn harness() -> Harness<'static, App> {
    Harness::builder()
        .with_size(egui::vec2(1280.0, 720.0))
        .build_eframe(|cc| App::new(cc, AppOptions::default()))
}

/// Clicks the number field `label`, types `text` over its value and returns nothing yet.
fn type_into(h: &mut Harness<'_, App>, label: &str, text: &str) {
    h.get_by_label(label).click();
    h.run_steps(2);
    h.get_by_label(label).type_text(text);
    h.run_steps(2);
}

// Point 1: typing −300 into the temperature used to leave −3 °C in force (the last valid
// prefix), because every keystroke was applied.
#[test]
fn a_refused_temperature_reverts_to_the_previous_value_with_the_reason() {
    let mut h = harness();
    h.run_steps(2);
    let before = h.state().scenario().temperature_c;
    type_into(&mut h, "temperature (°C)", "-300");
    // Nothing is applied while the entry is incomplete, not even the valid prefix "-3".
    assert_eq!(h.state().scenario().temperature_c, before);
    h.key_press(Key::Enter);
    h.run_steps(2);
    assert_eq!(h.state().scenario().temperature_c, before);
    assert!(!h.state().document().is_dirty());
    let notice = h.state().notice().unwrap_or_default().to_string();
    assert!(
        notice.contains("-300") && notice.contains("°C") && notice.contains("stays 37 °C"),
        "{notice}"
    );
    // The field shows the value in force again.
    assert!(h.query_by_label_contains("temperature (°C)").is_some());
}

// Point 1: a million milliseconds in Duration used to leave 100 000 ms (its last valid prefix).
#[test]
fn a_refused_duration_leaves_the_duration_it_had() {
    let mut h = harness();
    h.run_steps(2);
    h.get_by_label("Protocol").click();
    h.run_steps(2);
    let before = h.state().scenario().run.duration_ms;
    type_into(&mut h, "run duration (ms)", "1000000000");
    h.key_press(Key::Enter);
    h.run_steps(2);
    assert_eq!(h.state().scenario().run.duration_ms, before);
    let notice = h.state().notice().unwrap_or_default().to_string();
    assert!(
        notice.contains("1000000000") && notice.contains("10 million") && notice.contains("stays 200 ms"),
        "{notice}"
    );
}

// Point 1: an accepted entry is applied once, on Enter, and is one undo step; two entries in
// quick succession are two steps.
#[test]
fn each_accepted_entry_is_applied_on_enter_as_one_undo_step() {
    let mut h = harness();
    h.run_steps(2);
    type_into(&mut h, "K+ outside (mM)", "25");
    assert_eq!(
        h.state().scenario().species[0].outside_mm,
        5.0,
        "not while typing"
    );
    h.key_press(Key::Enter);
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 25.0);
    type_into(&mut h, "K+ outside (mM)", "40");
    h.key_press(Key::Enter);
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 40.0);
    h.state_mut().queue(Command::Undo);
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 25.0);
    h.state_mut().queue(Command::Undo);
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 5.0);
    assert!(!h.state().document().is_dirty());
}

// Point 1: Esc abandons an entry; leaving the field by a click elsewhere completes it.
#[test]
fn escape_abandons_an_entry_and_a_click_elsewhere_completes_it() {
    let mut h = harness();
    h.run_steps(2);
    type_into(&mut h, "K+ outside (mM)", "25");
    h.key_press(Key::Escape);
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 5.0);
    type_into(&mut h, "K+ outside (mM)", "30");
    h.get_by_label("Protocol").click();
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 30.0);
}

// Point 1: a name is a typed entry too: applied when complete.
#[test]
fn a_scenario_title_is_applied_when_the_entry_is_complete() {
    let mut h = harness();
    h.run_steps(2);
    h.get_by_label("Scenario title").click();
    h.run_steps(2);
    let before = h.state().scenario().title.clone();
    h.get_by_label("Scenario title").type_text(": bath K+ raised");
    h.run_steps(2);
    assert_eq!(h.state().scenario().title, before);
    h.key_press(Key::Enter);
    h.run_steps(2);
    assert!(h.state().scenario().title.ends_with(": bath K+ raised"));
}

// Point 12: Esc used to be taken as "leave presentation" before the list, About or the
// question could see it, so none of them closed.
#[test]
fn escape_closes_the_key_list_about_and_the_unsaved_question() {
    let mut h = harness();
    h.run_steps(2);
    h.key_press(Key::F1);
    h.run_steps(2);
    assert!(h.query_by_label("Keyboard shortcuts").is_some());
    h.key_press(Key::Escape);
    h.run_steps(2);
    assert!(h.query_by_label("Keyboard shortcuts").is_none());

    h.state_mut().queue(Command::ShowAbout(true));
    h.run_steps(3);
    assert!(h.query_by_label_contains("CODATA 2018").is_some());
    h.key_press(Key::Escape);
    h.run_steps(3);
    assert!(h.query_by_label_contains("CODATA 2018").is_none());

    type_into(&mut h, "K+ outside (mM)", "25");
    h.key_press(Key::Enter);
    h.run_steps(2);
    h.state_mut().queue(Command::New);
    h.run_steps(3);
    assert!(matches!(
        h.state().dialog(),
        Some(permeant::ui::dialogs::Dialog::Unsaved { .. })
    ));
    h.key_press(Key::Escape);
    h.run_steps(2);
    assert!(h.state().dialog().is_none());
    // Cancelled: the edited scenario is still there, unsaved.
    assert_eq!(h.state().scenario().species[0].outside_mm, 25.0);
    assert!(h.state().document().is_dirty());
}

/// Left and right edges of the two plot areas, in points.
fn plot_edges(h: &Harness<'_, App>) -> ([f32; 2], [f32; 2]) {
    let [upper, lower] = h.state().plot_frames().expect("the plots were drawn");
    ([upper.left(), lower.left()], [upper.right(), lower.right()])
}

// Point 12: the two plots' y axes were as wide as their own tick labels ("-100" above, "0.5" or
// "1e-7" below), so the time axes were offset by 5–8 px and spikes did not line up with their
// currents.
#[test]
fn both_plots_share_the_same_time_axis_pixels_for_every_lower_plot_and_text_size() {
    use permeant::ui::prefs::LowerPlot;
    let mut h = harness();
    h.state_mut()
        .queue(Command::OpenExample("excitable-cell-pulse-train.ron".into()));
    h.run_steps(3);
    for large in [false, true] {
        h.state_mut().queue(Command::SetLargeText(large));
        let mut bottom = None;
        for lower in LowerPlot::ALL {
            h.state_mut().queue(Command::SetLowerPlot(lower));
            h.run_steps(4);
            let (lefts, rights) = plot_edges(&h);
            assert!(
                (lefts[0] - lefts[1]).abs() < 0.5 && (rights[0] - rights[1]).abs() < 0.5,
                "{lower:?}, large text {large}: left {lefts:?}, right {rights:?}"
            );
            // The lower plot keeps its share of the height under a legend of several rows
            // (the gates' at large text took it down to a quarter of the upper, and pushed its
            // time axis under the status line), and every view ends where the others do.
            let [up, low] = h.state().plot_frames().expect("the plots were drawn");
            let first_bottom = *bottom.get_or_insert(low.bottom());
            assert!(
                low.height() >= 0.3 * up.height() && (low.bottom() - first_bottom).abs() < 0.5,
                "{lower:?}, large text {large}: upper {up:?}, lower {low:?}, bottom {first_bottom}"
            );
        }
    }
}

/// Width, height and 8-bit RGBA pixels of a PNG file.
fn read_png(path: &std::path::Path) -> (u32, u32, Vec<u8>) {
    let file = std::fs::File::open(path).expect("the PNG was written");
    let mut reader = png::Decoder::new(std::io::BufReader::new(file))
        .read_info()
        .expect("a PNG");
    let mut buf = vec![0; reader.output_buffer_size().expect("a size")];
    let info = reader.next_frame(&mut buf).expect("a frame");
    buf.truncate(info.buffer_size());
    (info.width, info.height, buf)
}

// Point 12: the PNG was a crop of a screenshot (498×666 at 1280×720) that included widgets, and
// needed a painted frame (none comes in a headless test, so no file was written at all).
#[test]
fn the_png_holds_the_plots_alone_at_the_size_the_user_picks() {
    use permeant::ui::export::ExportKind;
    let dir = tempfile::tempdir().expect("a temporary directory");
    let mut h = harness();
    h.state_mut()
        .queue(Command::OpenExample("excitable-cell-pulse-train.ron".into()));
    h.run_steps(3);
    assert_eq!(h.state().prefs().png_size_px, [1600, 900], "the default size");
    let path = dir.path().join("plots.png");
    h.state_mut()
        .queue(Command::ExportTo(ExportKind::Png, path.clone()));
    h.run_steps(2);
    assert!(
        h.state().notice().is_some_and(|n| n.starts_with("Exported")),
        "{:?}",
        h.state().notice()
    );
    let (w, ht, rgba) = read_png(&path);
    assert_eq!((w, ht), (1600, 900));
    // Every pixel is opaque, and the picture is not one flat colour: plots were drawn.
    assert!(rgba.chunks(4).all(|p| p[3] == 255));
    let first = &rgba[..4];
    let differing = rgba.chunks(4).filter(|p| *p != first).count();
    assert!(
        differing > 1600 * 900 / 50,
        "{differing} pixels differ from the corner"
    );
    // The lower-plot choice (a row of buttons between the plots) is a control, not a figure:
    // a figure drawn for export has none.
    assert!(h.state().notice().is_some_and(|n| n.starts_with("Exported")));

    h.state_mut().queue(Command::SetPngSize([800, 450]));
    let small = dir.path().join("small.png");
    h.state_mut()
        .queue(Command::ExportTo(ExportKind::Png, small.clone()));
    h.run_steps(2);
    let (w, ht, _) = read_png(&small);
    assert_eq!((w, ht), (800, 450));
}

// Point 9: an agent could only block. Now the editor turns it into an opener, whose largest
// increase is typed like any number, and the scenario holds `max_increase`.
#[test]
fn an_agent_becomes_an_opener_in_the_editor() {
    use permeant::scenario::Event;
    let mut h = harness();
    h.run_steps(2);
    h.get_by_label("Protocol").click();
    h.run_steps(2);
    h.get_by_label("+ Add event").click();
    h.run_steps(2);
    h.get_by_label("Drug (blocker or opener)").click();
    h.run_steps(2);
    let action = |h: &Harness<'_, App>| match h.state().scenario().protocol.first() {
        Some(Event::Agent {
            max_block,
            max_increase,
            ..
        }) => (*max_block, *max_increase),
        other => panic!("expected an agent, got {other:?}"),
    };
    assert_eq!(action(&h), (1.0, None));
    h.get_by_label("opener").click();
    h.run_steps(2);
    assert_eq!(action(&h), (1.0, Some(1.0)));
    assert!(h.query_by_label("event 1 largest block").is_none());
    type_into(&mut h, "event 1 largest increase", "3");
    h.key_press(Key::Enter);
    h.run_steps(2);
    assert_eq!(action(&h), (1.0, Some(3.0)));
    h.state_mut().queue(Command::Undo);
    h.run_steps(2);
    assert_eq!(action(&h), (1.0, Some(1.0)));
    h.get_by_label("blocker").click();
    h.run_steps(2);
    assert_eq!(action(&h), (1.0, None));
}

// Point 2: after a zoom or a drag the plots kept their old time range when the duration
// changed, with nothing saying so. They follow the run until zoomed, and "Fit view" (marked
// while zoomed) shows the whole run again.
#[test]
fn the_time_axis_follows_the_duration_until_zoomed_and_fit_view_resets_it() {
    let mut h = harness();
    h.run_steps(3);
    let duration = |h: &Harness<'_, App>| h.state().scenario().run.duration_ms;
    let range = |h: &Harness<'_, App>| h.state().plot_t_ms().expect("drawn");
    assert_eq!(range(&h), (0.0, duration(&h)));
    h.state_mut().queue(Command::Edit(permeant::ui::Edit::Number(
        permeant::scenario::Address::of("run.duration_ms", &[]).expect("a row"),
        500.0,
    )));
    h.run_steps(3);
    assert_eq!(range(&h), (0.0, 500.0));
    assert!(h.query_by_label("Fit view (zoomed)").is_none());
    // Drag the upper plot sideways: the view moves and stays.
    let [upper, _] = h.state().plot_frames().expect("drawn");
    h.drag_at(upper.center());
    h.run_steps(1);
    h.hover_at(upper.center() + egui::vec2(-120.0, 0.0));
    h.run_steps(1);
    h.drop_at(upper.center() + egui::vec2(-120.0, 0.0));
    h.run_steps(3);
    let moved = range(&h);
    assert!(moved.0 > 1.0, "{moved:?}");
    h.state_mut().queue(Command::Edit(permeant::ui::Edit::Number(
        permeant::scenario::Address::of("run.duration_ms", &[]).expect("a row"),
        800.0,
    )));
    h.run_steps(3);
    assert_eq!(range(&h), moved, "a moved view stays where the user put it");
    h.get_by_label("Fit view (zoomed)").click();
    h.run_steps(3);
    assert_eq!(range(&h), (0.0, 800.0));
    assert!(h.query_by_label("Fit view (zoomed)").is_none());
}

// Point 3: a reversal potential that moves (here E K+ under a bath change) was drawn only along
// the trace: absent before a run, and after one only where samples were shown. Every reversal
// line now spans the whole time axis before, during and after a run.
#[test]
fn every_reversal_line_spans_the_whole_time_axis_before_and_after_a_run() {
    use permeant::ui::prefs::Speed;
    let mut h = harness();
    h.state_mut()
        .queue(Command::OpenExample("raised-bath-potassium.ron".into()));
    h.run_steps(3);
    let duration = h.state().scenario().run.duration_ms;
    let covers = |h: &Harness<'_, App>, name: &str| {
        let spans = h.state().reversal_spans();
        let found = spans.iter().find(|(n, ..)| n == name);
        assert!(found.is_some(), "no {name} line in {spans:?}");
        found.is_some_and(|(_, from, to)| *from <= 0.0 && *to >= duration)
    };
    for name in ["E K+", "E Na+", "E Cl-"] {
        assert!(covers(&h, name), "{name} before a run");
    }
    h.state_mut().queue(Command::SetSpeed(Speed::Fastest));
    h.state_mut().queue(Command::RunPause);
    for _ in 0..200 {
        h.run_steps(1);
        if h.state().runtime().is_finished() {
            break;
        }
    }
    assert!(h.state().runtime().is_finished());
    h.run_steps(2);
    for name in ["E K+", "E Na+", "E Cl-"] {
        assert!(covers(&h, name), "{name} after the run");
    }
}
