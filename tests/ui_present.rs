//! The window read from a desk with large text and from the back of a lecture room (issue 13,
//! points 4, 7, 8 and its "Names" paragraph), driven through egui_kittest on the real app at
//! the size the issue was tried at, 1280×720. `run_steps` is used wherever a frame count
//! matters (a running simulation never settles).

use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable, by};
use permeant::scenario::{Address, Edit};
use permeant::ui::prefs::{LowerPlot, Speed};
use permeant::ui::{App, AppOptions, Command};

fn harness() -> Harness<'static, App> {
    Harness::builder()
        .with_size(egui::vec2(1280.0, 720.0))
        .build_eframe(|cc| App::new(cc, AppOptions::default()))
}

fn open(h: &mut Harness<'_, App>, example: &str) {
    h.state_mut().queue(Command::OpenExample(example.into()));
    h.run_steps(4);
}

/// Runs the scenario to its end as fast as the machine allows.
fn run_to_end(h: &mut Harness<'_, App>) {
    h.state_mut().queue(Command::SetSpeed(Speed::Fastest));
    h.state_mut().queue(Command::RunPause);
    for _ in 0..400 {
        h.run_steps(1);
        if h.state().runtime().is_finished() {
            break;
        }
    }
    assert!(h.state().runtime().is_finished(), "the run ends");
    h.run_steps(4);
}

/// Every labelled widget as (label, rect in points).
fn widgets(h: &Harness<'_, App>) -> Vec<(String, egui::Rect)> {
    h.query_all(by().predicate(|n| n.label().is_some_and(|l| !l.is_empty())))
        .map(|n| (n.accesskit_node().label().unwrap_or_default(), n.rect()))
        .collect()
}

// Point 4: with large text the species table's Reversal and relative-permeability columns ran
// under the plots, the toolbar ran past the window's edge, and the lower plot showed ~130 ms
// while the upper showed 250 ms.
#[test]
fn large_text_at_1280x720_cuts_no_widget_and_both_plots_share_their_time_span() {
    let mut h = harness();
    open(&mut h, "calcium-permeability-pulse.ron");
    h.state_mut().queue(Command::SetLargeText(true));
    h.run_steps(8);
    // The window in points: 1280×720 pixels at the large-text scale of 1.5.
    let window = egui::Rect::from_min_size(egui::Pos2::ZERO, egui::vec2(1280.0 / 1.5, 720.0 / 1.5));
    let plots_left = h.state().plots().area_left().expect("the plots were drawn");
    let [upper, lower] = h.state().plot_frames().expect("the plots were drawn");
    for (label, r) in widgets(&h) {
        if r.top() >= window.bottom() {
            continue; // below the fold of a panel that scrolls
        }
        assert!(
            r.left() >= window.left() - 0.5 && r.right() <= window.right() + 0.5,
            "“{label}” at {r:?} runs past the window {window:?}"
        );
        // The editor's widgets end where the plots' panel begins.
        if r.left() < plots_left && r.bottom() > upper.top() && r.top() < lower.bottom() {
            assert!(
                r.right() <= plots_left + 0.5,
                "“{label}” at {r:?} runs under the plots (they start at x = {plots_left})"
            );
        }
    }
    // Every species' reversal potential is in view, left of the plots (Ca2+ is the fourth row).
    let reversals: Vec<String> = h
        .state()
        .rest()
        .as_ref()
        .expect("a resting report")
        .species
        .iter()
        .filter_map(|s| s.reversal_mv)
        .map(|e| format!("{e:+.1} mV"))
        .collect();
    assert_eq!(reversals.len(), 4);
    for e in &reversals {
        let r = h.get_by_label(e).rect();
        assert!(r.right() <= plots_left + 0.5, "{e} at {r:?}");
    }
    let plots = h.state().plots();
    let (a, b) = (
        plots.shown_t_ms().expect("upper"),
        plots.lower_t_ms().expect("lower"),
    );
    assert!(
        (a.0 - b.0).abs() < 1e-9 && (a.1 - b.1).abs() < 1e-9,
        "upper {a:?}, lower {b:?}"
    );
    assert!((a.1 - h.state().scenario().run.duration_ms).abs() < 1e-9);
}

// Point 7: presentation enlarged only the controls; plot labels stayed 10–13 px, lines thin,
// and the E K+ label sat under the trace.
#[test]
fn presentation_draws_plot_text_and_lines_for_the_back_of_the_room_clear_of_traces() {
    let mut h = harness();
    open(&mut h, "raised-bath-potassium.ron");
    run_to_end(&mut h);
    let desk: Vec<_> = h.state().plots().placed_labels().to_vec();
    h.state_mut().queue(Command::SetPresentation(true));
    h.run_steps(8);
    assert!(h.state().presenting());
    let zoom = h.ctx.zoom_factor();
    let plots = h.state().plots();
    let labels = plots.placed_labels();
    let e_k = labels
        .iter()
        .find(|l| l.text.starts_with("E K+"))
        .expect("the E K+ line is labelled");
    // Sizes in screen pixels at 1280×720: at least 1/30 of the image height, 24 px (common
    // practice for text projected to a room).
    assert!(e_k.size_pt * zoom >= 24.0, "E K+ label {} px", e_k.size_pt * zoom);
    let desk_e_k = desk
        .iter()
        .find(|l| l.text.starts_with("E K+"))
        .expect("labelled at the desk");
    assert!(e_k.size_pt > desk_e_k.size_pt);
    let [upper, _] = h.state().plot_frames().expect("drawn");
    for l in labels {
        assert!(
            l.clear,
            "“{}” covers a trace or another label: {labels:?} in {upper:?}",
            l.text
        );
        assert!(
            upper.contains_rect(l.rect),
            "“{}” at {:?} is cut by the plot",
            l.text,
            l.rect
        );
    }
    let (legend, _) = plots.legend();
    assert!(!legend.is_empty());
    for e in legend {
        assert!(
            e.width * zoom >= 3.0,
            "{} drawn {} px wide",
            e.name,
            e.width * zoom
        );
    }
}

// Point 8: the bath change's band label was cut to "1. K+ out…" by the width of its band.
#[test]
fn protocol_band_labels_are_whole_and_apart() {
    let mut h = harness();
    for example in [
        "raised-bath-potassium.ron",
        "potassium-blocker-washin.ron",
        "excitable-cell-pulse-train.ron",
    ] {
        open(&mut h, example);
        h.run_steps(4);
        let labels = h.state().plots().placed_labels().to_vec();
        let bands: Vec<_> = labels
            .iter()
            .filter(|l| l.text.starts_with(char::is_numeric))
            .collect();
        assert!(!bands.is_empty(), "{example}: the protocol is labelled");
        for (k, l) in labels.iter().enumerate() {
            assert!(!l.text.contains('…'), "{example}: {}", l.text);
            for m in &labels[k + 1..] {
                assert!(
                    !l.rect.intersects(m.rect),
                    "{example}: “{}” over “{}”",
                    l.text,
                    m.text
                );
            }
        }
        if example == "raised-bath-potassium.ron" {
            assert_eq!(bands[0].text, "1. K+ out → 25 mM");
        }
    }
}

// Point 8: names were cut to "Ca2·" and "NMI" by a name field 44 points wide.
#[test]
fn ion_names_are_shown_whole_in_the_species_table() {
    let mut h = harness();
    for (example, row, name) in [
        ("calcium-permeability-pulse.ron", 4, "Ca2+"),
        ("sodium-substitution-steps.ron", 4, "NMDG+"),
    ] {
        open(&mut h, example);
        h.run_steps(2);
        let field = h.get_by_label(&format!("name of ion {row}")).rect();
        let font = egui::FontId::proportional(14.0);
        let text_w = h
            .ctx
            .fonts_mut(|f| f.layout_no_wrap(name.into(), font, egui::Color32::WHITE).size().x);
        // The text edit's inner margin is 4 points a side (egui's default).
        assert!(
            field.width() >= text_w + 8.0,
            "{example}: the field of {name} is {} points for {text_w} points of text",
            field.width()
        );
    }
}

// Point 8: gate legends showed the CSV's ids ("gate:fast sodium:h"), m and h in one colour, and
// the legend sat over the first spike and the opening current level.
#[test]
fn gate_legends_name_channel_and_letter_in_colours_apart_outside_the_plot() {
    let mut h = harness();
    open(&mut h, "excitable-cell-pulse-train.ron");
    h.state_mut().queue(Command::SetLowerPlot(LowerPlot::Gates));
    h.run_steps(6);
    let (legend, rect) = h.state().plots().legend();
    let names: Vec<&str> = legend.iter().map(|e| e.name.as_str()).collect();
    assert!(names.iter().all(|n| !n.contains("gate:")), "{names:?}");
    let m = legend
        .iter()
        .find(|e| e.name.ends_with("m (activation)"))
        .expect("m");
    let hh = legend
        .iter()
        .find(|e| e.name.ends_with("h (inactivation)"))
        .expect("h");
    assert_ne!(m.color, hh.color);
    let [upper, lower] = h.state().plot_frames().expect("drawn");
    let rect = rect.expect("a legend was drawn");
    assert!(
        !rect.intersects(lower) && !rect.intersects(upper),
        "legend {rect:?} over a plot"
    );
}

// Point 8: the permeability axis was titled "log₁₀ permeability" over tick values that were
// not logarithms.
#[test]
fn the_permeability_axis_names_the_quantity_on_its_log_scale() {
    let mut h = harness();
    h.state_mut()
        .queue(Command::SetLowerPlot(LowerPlot::Permeabilities));
    h.run_steps(4);
    let title = h.state().plots().lower_title().to_string();
    assert!(
        !title.contains("log₁₀") && title.contains("cm/s") && title.contains("log scale"),
        "{title}"
    );
}

// Names: a pinned slider read "event 1 new bath con…", a row of per-ion sliders; it is named as
// the experiment's control, and its value is shown on the trace it moves (the band's label).
#[test]
fn a_pinned_slider_is_named_as_the_control_and_its_value_shows_on_the_trace() {
    let mut h = harness();
    open(&mut h, "raised-bath-potassium.ron");
    let bath = Address::of("protocol[].outside_mm", &[0]).expect("a row");
    h.state_mut().queue(Command::Pin {
        address: bath,
        pinned: true,
    });
    h.state_mut().queue(Command::SetPresentation(true));
    h.run_steps(6);
    assert!(h.query_by_label("Bath K+ after the change").is_some());
    assert!(h.query_by_label_contains("event 1").is_none());
    h.state_mut().queue(Command::Edit(Edit::Number(bath, 40.0)));
    h.run_steps(4);
    let labels = h.state().plots().placed_labels().to_vec();
    assert!(
        labels.iter().any(|l| l.text == "1. K+ out → 40 mM"),
        "{:?}",
        labels.iter().map(|l| &l.text).collect::<Vec<_>>()
    );
}

// Point 4 (found after the merge): the lower plot's legend row was laid out after the plot's
// height was taken, so the plot ran its time axis (ticks and title) under the status line.
#[test]
fn the_lower_plot_keeps_its_time_axis_above_the_status_line_with_its_legend() {
    for large in [false, true] {
        let mut h = harness();
        open(&mut h, "raised-bath-potassium.ron");
        h.state_mut().queue(Command::SetLargeText(large));
        run_to_end(&mut h);
        assert!(
            !h.state().plots().legend().0.is_empty(),
            "the currents have a legend row"
        );
        let [_, lower] = h.state().plot_frames().expect("drawn");
        let status = h.get_by_label("finished").rect();
        // Tick labels and the axis title stand under the frame: two rows of text at least (in
        // points; large text zooms points to pixels).
        let text_h = 14.0;
        assert!(
            lower.bottom() + 2.0 * text_h <= status.top() + 0.5,
            "large text {large}: the lower plot ends at y = {} and its axis needs {} more, the status line begins at {}",
            lower.bottom(),
            2.0 * text_h,
            status.top()
        );
    }
}
