//! The window for teaching and sharing, driven through egui_kittest on the real app:
//! presentation with a pinned big slider, keyboard shortcuts, notes beside the plots, the offer
//! to restore an autosave left by a killed session, and the CSV and SVG exports.
//!
//! Each test keeps its files in its own temporary directory, passed to the app explicitly (tests
//! in one binary run in parallel threads, so an environment variable would be shared).

use std::path::Path;

use egui::{Key, Modifiers};
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use permeant::autosave::Autosave;
use permeant::scenario::Scenario;
use permeant::ui::command::FilePurpose;
use permeant::ui::export::ExportKind;
use permeant::ui::prefs::{Speed, Store};
use permeant::ui::{App, AppOptions, Command};

/// The real app at a common laptop size; preferences and autosave in `dir`.
fn harness_in(dir: &Path) -> Harness<'static, App> {
    let options = AppOptions {
        store: Store {
            dir: Some(dir.join("data")),
        },
        autosave: Some(Autosave::at(dir.join("data"))),
        ..AppOptions::default()
    };
    Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .build_eframe(move |cc| App::new(cc, options))
}

fn tempdir() -> tempfile::TempDir {
    tempfile::tempdir().expect("a temporary directory")
}

#[test]
fn presentation_hides_the_editor_and_shows_the_pinned_slider() {
    let dir = tempdir();
    let mut h = harness_in(dir.path());
    h.run_steps(2);
    // Pin the bath potassium from its own right-click menu in the editor.
    h.get_by_label("K+ outside (mM)").click_secondary();
    h.run_steps(2);
    h.get_by_label("Big slider in presentation").click();
    h.run_steps(2);
    let pins: Vec<String> = h.state().prefs().pins.iter().map(ToString::to_string).collect();
    assert_eq!(pins, ["species[0].outside_mm"]);

    h.key_press(Key::F11);
    h.run_steps(3);
    assert!(h.state().presenting());
    assert!(
        h.query_by_label("K+ outside (mM)").is_none(),
        "the editor is hidden"
    );
    assert!(h.query_by_label("+ Add ion").is_none());
    // Run controls stay; the menu bar goes.
    h.get_by_label("▶ Run");
    h.get_by_label("↺ Restart");
    assert!(h.query_by_label("Examples").is_none());
    // Presentation draws larger than the desk (the zoom follows the window: 1280 × 800 → 1.3).
    let zoom = h.ctx.zoom_factor();
    assert!((zoom - 1.3).abs() < 1e-6, "zoom {zoom}");

    // The big slider moves the bath potassium, checked like any edit.
    h.get_by_label("Bath K+, big slider").set_value_accesskit(25.0);
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 25.0);
    // And by the pointer: pressed at its middle (5 mM: the range is four decades around the
    // value it had when shown) and dragged to the right end (500 mM).
    let rail = h.get_by_label("Bath K+, big slider").rect();
    h.drag_at(rail.center());
    h.run_steps(1);
    h.hover_at(rail.center() + egui::vec2(rail.width() * 0.25, 0.0));
    h.run_steps(1);
    h.drop_at(rail.right_center() + egui::vec2(20.0, 0.0));
    h.run_steps(2);
    let out = h.state().scenario().species[0].outside_mm;
    assert!((out - 500.0).abs() < 1e-9, "dragged to {out} mM");

    h.key_press(Key::Escape);
    h.run_steps(3);
    assert!(!h.state().presenting());
    assert_eq!(h.ctx.zoom_factor(), 1.0);
    h.get_by_label("K+ outside (mM)");
}

#[test]
fn run_pause_undo_redo_and_the_key_list_work_from_the_keyboard() {
    let dir = tempdir();
    let mut h = harness_in(dir.path());
    h.state_mut().queue(Command::SetSpeed(Speed::MsPerSecond(100.0)));
    h.run_steps(2);
    assert!(!h.state().runtime().running);
    h.key_press(Key::Space);
    h.run_steps(3);
    assert!(h.state().runtime().running, "Space starts the run");
    assert!(h.state().runtime().shown_ms() > 0.0);
    h.key_press(Key::F5);
    h.run_steps(2);
    assert!(!h.state().runtime().running, "F5 pauses it");

    // Ctrl+R goes back to t = 0.
    h.key_press_modifiers(Modifiers::COMMAND, Key::R);
    h.run_steps(2);
    assert_eq!(h.state().runtime().shown_ms(), 0.0);

    // Type a new bath potassium, leave the field, undo it and redo it by keys.
    h.get_by_label("K+ outside (mM)").click();
    h.run_steps(2);
    h.get_by_label("K+ outside (mM)").type_text("20");
    h.run_steps(2);
    // While a field has the keyboard, Space is a character, not Run.
    h.key_press(Key::Space);
    h.run_steps(2);
    assert!(!h.state().runtime().running);
    h.key_press(Key::Enter);
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 20.0);
    h.key_press_modifiers(Modifiers::COMMAND, Key::Z);
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 5.0);
    h.key_press_modifiers(Modifiers::COMMAND | Modifiers::SHIFT, Key::Z);
    h.run_steps(2);
    assert_eq!(h.state().scenario().species[0].outside_mm, 20.0);

    // F1 lists the keys; F1 again closes the list.
    h.key_press(Key::F1);
    h.run_steps(2);
    h.get_by_label("Keyboard shortcuts");
    h.get_by_label("Ctrl+Shift+Z or Ctrl+Y");
    // Keys other than F1 wait while the list is open.
    h.key_press(Key::Space);
    h.run_steps(2);
    assert!(!h.state().runtime().running);
    h.key_press(Key::F1);
    h.run_steps(2);
    assert!(h.query_by_label("Ctrl+Shift+Z or Ctrl+Y").is_none());
}

#[test]
fn notes_show_formatted_beside_the_plots_and_can_be_edited() {
    let dir = tempdir();
    let mut h = harness_in(dir.path());
    h.state_mut()
        .queue(Command::OpenExample("excitable-cell-pulse-train.ron".into()));
    h.run_steps(3);
    // The example has notes, so they are what the side panel shows; its heading and a list
    // item appear as text of their own, without the markers.
    h.get_by_label("An excitable membrane");
    assert!(h.query_by_label_contains("# An excitable").is_none());
    h.get_by_label_contains("Five 1 ms current pulses");
    h.get_by_label("Edit notes").click();
    h.run_steps(2);
    h.get_by_label("Notes text").click();
    h.run_steps(1);
    h.get_by_label("Notes text")
        .type_text("\n- watch the **overshoot**");
    h.run_steps(2);
    assert!(
        h.state().scenario().notes.contains("\n- watch the **overshoot**"),
        "{:?}",
        h.state().scenario().notes
    );
    h.get_by_label("Done").click();
    h.run_steps(2);
    // The new item shows formatted: the strong span is a run of its own text.
    h.get_by_label_contains("watch the overshoot");
    assert!(h.state().document().is_dirty());
}

/// Leaves what a killed session leaves: an autosave and a session marker that no running
/// session holds locked (the operating system releases the lock of a process that is gone).
/// The marker has the name earlier versions used, which is read the same way.
fn crashed_session(data: &Path, title: &str) -> Scenario {
    let mut s = Scenario::new_default();
    s.title = title.into();
    s.species[0].outside_mm = 40.0;
    let a = Autosave::at(data.to_path_buf());
    a.save(&s, None).expect("autosaved");
    std::fs::write(data.join("session.lock"), "").expect("marker written");
    s
}

#[test]
fn an_autosave_left_by_a_killed_session_is_offered_and_restored() {
    let dir = tempdir();
    let kept = crashed_session(&dir.path().join("data"), "before the crash");
    let mut h = harness_in(dir.path());
    h.run_steps(2);
    assert!(h.state().restore_offered());
    h.get_by_label("Restore the unsaved work?");
    h.get_by_label("\"before the crash\"");
    // Keys do nothing behind the offer.
    h.key_press(Key::Space);
    h.run_steps(2);
    assert!(!h.state().runtime().running);
    h.get_by_label("Restore it").click();
    h.run_steps(2);
    assert!(!h.state().restore_offered());
    assert_eq!(*h.state().scenario(), kept);
    // Restored work is unsaved work.
    assert!(h.state().document().is_dirty());
}

#[test]
fn a_discarded_autosave_is_not_offered_again() {
    let dir = tempdir();
    crashed_session(&dir.path().join("data"), "not wanted");
    let mut h = harness_in(dir.path());
    h.run_steps(2);
    h.get_by_label("Discard it").click();
    h.run_steps(2);
    assert!(!h.state().restore_offered());
    assert_eq!(*h.state().scenario(), Scenario::new_default());
    // The kept copy now holds this session's work at once, so a crash right after the answer
    // cannot bring the discarded scenario back.
    let kept = permeant::scenario::read_file(&dir.path().join("data/autosave.ron")).expect("readable");
    assert_eq!(kept.into_inner(), Scenario::new_default());
}

/// Runs the pulse-train example for a while and pauses it; returns the samples shown.
fn run_example(h: &mut Harness<'static, App>) -> usize {
    h.state_mut()
        .queue(Command::OpenExample("excitable-cell-pulse-train.ron".into()));
    h.state_mut().queue(Command::SetSpeed(Speed::MsPerSecond(200.0)));
    h.run_steps(2);
    h.key_press(Key::Space);
    h.run_steps(4);
    h.key_press(Key::Space);
    h.run_steps(2);
    let n = h.state().runtime().shown_len();
    assert!(n > 100, "{n} samples");
    n
}

#[test]
fn the_trace_exports_as_csv_with_its_header_and_one_row_per_sample() {
    let dir = tempdir();
    let mut h = harness_in(dir.path());
    let n = run_example(&mut h);
    // Through the typed-path dialog (what the window shows when no file dialog can open); the
    // extension is added.
    h.state_mut()
        .queue(Command::TypePath(FilePurpose::Export(ExportKind::Csv)));
    h.run_steps(3);
    h.get_by_label("Export the traces as CSV");
    h.get_by_label("File path").click();
    h.run_steps(1);
    let target = dir.path().join("trace");
    h.get_by_label("File path")
        .type_text(&target.display().to_string());
    h.run_steps(1);
    h.get_by_label("Export").click();
    h.run_steps(2);
    let text = std::fs::read_to_string(dir.path().join("trace.csv")).expect("the CSV was written");
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], format!("# permeant {}", env!("CARGO_PKG_VERSION")));
    assert_eq!(lines[1], "# scenario: Action potentials from a pulse train");
    // An RFC 3339 time stamp, e.g. 2026-12-01T23:10:00Z.
    let written = lines[2].strip_prefix("# written: ").expect("a time stamp");
    assert!(
        written.len() == 20 && written.as_bytes()[10] == b'T' && written.ends_with('Z'),
        "{written}"
    );
    assert_eq!(lines[3], "trace,time_ms,v_mv");
    let rows = &lines[4..];
    assert_eq!(rows.len(), n);
    let trace = h.state().runtime().trace().expect("a trace");
    for (k, row) in rows.iter().enumerate() {
        let f: Vec<&str> = row.split(',').collect();
        assert_eq!(f.len(), 3, "{row}");
        assert_eq!(f[0], "current run");
        let t: f64 = f[1].parse().expect("a time");
        let v: f64 = f[2].parse().expect("a potential");
        // Written with the shortest form that reads back exactly.
        assert_eq!((t, v), (trace.t_ms[k], trace.v_mv()[k]), "row {k}");
    }
    assert!(h.state().notice().is_some_and(|n| n.starts_with("Exported")));
}

/// Whether `text` is well-formed XML as far as this figure needs: one root element, every tag
/// closed in order, quoted attributes, and only the predefined or numeric entities. Returns the
/// trimmed content of every `<text>` element.
fn well_formed_xml(text: &str) -> Result<Vec<String>, String> {
    let mut texts = Vec::new();
    let mut stack: Vec<String> = Vec::new();
    let mut roots = 0;
    let mut rest = text.trim_start();
    if let Some(r) = rest.strip_prefix("<?xml") {
        rest = &r[r.find("?>").ok_or("unclosed XML declaration")? + 2..];
    }
    while let Some(lt) = rest.find('<') {
        check_text(&rest[..lt])?;
        if stack.last().is_some_and(|open| open == "text") && !rest[..lt].trim().is_empty() {
            texts.push(rest[..lt].trim().to_string());
        }
        if !stack.is_empty() || rest[..lt].trim().is_empty() {
        } else {
            return Err(format!("text outside the root: {:?}", &rest[..lt]));
        }
        rest = &rest[lt..];
        if let Some(r) = rest.strip_prefix("<!--") {
            rest = &r[r.find("-->").ok_or("unclosed comment")? + 3..];
            continue;
        }
        let gt = tag_end(rest).ok_or("unclosed tag")?;
        let tag = &rest[1..gt];
        rest = &rest[gt + 1..];
        if let Some(name) = tag.strip_prefix('/') {
            let open = stack.pop().ok_or_else(|| format!("</{name}> closes nothing"))?;
            if open != name.trim() {
                return Err(format!("<{open}> closed by </{name}>"));
            }
            continue;
        }
        let self_closing = tag.ends_with('/');
        let body = tag.trim_end_matches('/');
        let name: String = body.chars().take_while(|c| !c.is_whitespace()).collect();
        if name.is_empty() || !name.chars().all(|c| c.is_alphanumeric() || ":-_.".contains(c)) {
            return Err(format!("bad tag name in <{tag}>"));
        }
        check_attributes(&body[name.len()..])?;
        if stack.is_empty() {
            roots += 1;
        }
        if !self_closing {
            stack.push(name);
        }
    }
    if !rest.trim().is_empty() {
        return Err(format!("text after the root: {rest:?}"));
    }
    match (stack.last(), roots) {
        (Some(open), _) => Err(format!("<{open}> is never closed")),
        (None, 1) => Ok(texts),
        (None, n) => Err(format!("{n} root elements")),
    }
}

/// The index of the `>` ending the tag at the start of `s`, skipping quoted attribute values.
fn tag_end(s: &str) -> Option<usize> {
    let mut quote = None;
    for (i, c) in s.char_indices() {
        match (quote, c) {
            (None, '"' | '\'') => quote = Some(c),
            (Some(q), _) if c == q => quote = None,
            (None, '>') => return Some(i),
            _ => {}
        }
    }
    None
}

fn check_attributes(mut s: &str) -> Result<(), String> {
    loop {
        s = s.trim_start();
        if s.is_empty() {
            return Ok(());
        }
        let eq = s
            .find('=')
            .ok_or_else(|| format!("attribute without value: {s}"))?;
        let q = s[eq + 1..].chars().next().ok_or("attribute without value")?;
        if q != '"' && q != '\'' {
            return Err(format!("unquoted attribute: {s}"));
        }
        let value_start = eq + 2;
        let close = s[value_start..].find(q).ok_or("unclosed attribute value")?;
        check_text(&s[value_start..value_start + close])?;
        s = &s[value_start + close + 1..];
    }
}

fn check_text(s: &str) -> Result<(), String> {
    let mut rest = s;
    while let Some(amp) = rest.find('&') {
        let after = &rest[amp + 1..];
        let semi = after.find(';').ok_or("& without ;")?;
        let entity = &after[..semi];
        let known = ["amp", "lt", "gt", "quot", "apos"].contains(&entity)
            || entity
                .strip_prefix("#x")
                .is_some_and(|h| !h.is_empty() && h.chars().all(|c| c.is_ascii_hexdigit()))
            || entity
                .strip_prefix('#')
                .is_some_and(|d| !d.is_empty() && d.chars().all(|c| c.is_ascii_digit()));
        if !known {
            return Err(format!("unknown entity &{entity};"));
        }
        rest = &after[semi + 1..];
    }
    if s.contains('<') {
        return Err("< in text".into());
    }
    Ok(())
}

#[test]
fn the_xml_check_itself_refuses_broken_documents() {
    assert!(well_formed_xml("<svg a=\"1\"><g><text>x &amp; y</text></g></svg>").is_ok());
    for bad in [
        "<svg><g></svg>",
        "<svg></svg><svg></svg>",
        "<svg a=1></svg>",
        "<svg><text>a & b</text></svg>",
        "<svg>",
        "text<svg></svg>",
    ] {
        assert!(well_formed_xml(bad).is_err(), "{bad}");
    }
}

#[test]
fn the_figure_exports_as_well_formed_svg_with_its_axis_labels() {
    let dir = tempdir();
    let mut h = harness_in(dir.path());
    run_example(&mut h);
    let path = dir.path().join("figure.svg");
    h.state_mut()
        .queue(Command::ExportTo(ExportKind::Svg, path.clone()));
    h.run_steps(2);
    let text = std::fs::read_to_string(&path).expect("the SVG was written");
    let texts = well_formed_xml(&text).unwrap_or_else(|e| panic!("not well-formed: {e}"));
    // The same axis labels as `permeant run --svg`, as text elements, and the title.
    for label in [
        "time (ms)",
        "membrane potential (mV)",
        "Action potentials from a pulse train",
    ] {
        assert!(texts.iter().any(|t| t == label), "no text {label:?} in {texts:?}");
    }
}

#[test]
fn the_about_window_names_the_sources_and_the_caution() {
    let dir = tempdir();
    let mut h = harness_in(dir.path());
    h.run_steps(1);
    h.get_by_label("Help").click();
    h.run_steps(2);
    h.get_by_label("About permeant").click();
    h.run_steps(3);
    h.get_by_label(&format!("permeant {}", env!("CARGO_PKG_VERSION")));
    h.get_by_label_contains("MIT OR Apache-2.0");
    h.get_by_label_contains("CODATA 2018");
    h.get_by_label_contains("Hodgkin & Huxley (1952), J. Physiol. 117:500");
    h.get_by_label_contains("not for diagnosing or treating anyone");
}
