//! The analysis window, driven through egui_kittest on the real app: keeping a trace and its
//! metrics, a sweep computed in the background against the library's own sweep, a fit that
//! recovers the ratios its points were made from, and a data file with a bad row.

use std::time::{Duration, Instant};

use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable};
use permeant::analysis::fit::FitSpace;
use permeant::analysis::sweep::{SweepControl, SweepRange, Vary, sweep};
use permeant::scenario::Scenario;
use permeant::ui::analysis::{AnalysisCommand, AnalysisTab, SweepForm};
use permeant::ui::prefs::Speed;
use permeant::ui::{App, AppOptions, Command};

fn harness() -> Harness<'static, App> {
    Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .build_eframe(|cc| App::new(cc, AppOptions::default()))
}

/// Steps frames until the background computation has finished (at most 60 s).
fn wait_for_job(h: &mut Harness<'_, App>) {
    let started = Instant::now();
    h.run_steps(1);
    while h.state().analysis().busy() {
        assert!(
            started.elapsed() < Duration::from_secs(60),
            "the computation did not finish"
        );
        std::thread::sleep(Duration::from_millis(5));
        h.run_steps(1);
    }
    h.run_steps(2);
}

fn open_tab(h: &mut Harness<'_, App>, tab: AnalysisTab) {
    h.state_mut().analysis_mut().open = true;
    h.state_mut().analysis_mut().tab = tab;
    h.run_steps(4);
}

#[test]
fn keep_trace_adds_a_kept_trace_whose_final_potential_is_in_the_table() {
    let mut h = harness();
    h.state_mut()
        .queue(Command::OpenExample("potassium-blocker-washin.ron".into()));
    h.state_mut().queue(Command::SetSpeed(Speed::Fastest));
    h.run_steps(2);
    h.get_by_label("▶ Run").click();
    h.run_steps(6);
    h.get_by_label("Keep trace").click();
    // The click, then the window's first (sizing) frame, then it is drawn.
    h.run_steps(4);
    let kept = &h.state().analysis().kept.traces;
    assert_eq!(kept.len(), 1);
    let shown = h.state().runtime().shown_len();
    assert!(shown > 10, "{shown} samples shown");
    let final_mv = kept[0].v_mv[kept[0].v_mv.len() - 1];
    let run_v = h
        .state()
        .runtime()
        .trace()
        .map(|t| t.v_mv()[kept[0].v_mv.len() - 1]);
    assert_eq!(Some(final_mv), run_v, "the kept trace is a copy of the run");
    // The window opened on the comparison, whose table shows the final potential.
    h.get_by_label("Final potential (mV)");
    h.get_by_label(&format!("{final_mv:.2}"));
    // The key keeps another; against the first as baseline its change is listed.
    h.key_press_modifiers(egui::Modifiers::COMMAND, egui::Key::K);
    h.run_steps(2);
    assert_eq!(h.state().analysis().kept.traces.len(), 2);
    assert_eq!(h.state().analysis().kept.baseline, Some(0));
    // One difference per metric.
    assert_eq!(h.query_all_by_label_contains("(Δ ").count(), 10);
    // Deleting goes through the same commands as the panel.
    h.state_mut()
        .queue(Command::Analysis(AnalysisCommand::DeleteKept(0)));
    h.run_steps(2);
    assert_eq!(h.state().analysis().kept.traces.len(), 1);
    assert_eq!(h.state().analysis().kept.baseline, None);
}

#[test]
fn a_bath_potassium_sweep_in_the_window_equals_the_library_sweep() {
    let mut h = harness();
    h.run_steps(2);
    let vary = Vary::OutsideMm("K+".into());
    let range = SweepRange {
        from: 1.0,
        to: 100.0,
        points: 30,
        log: true,
    };
    h.state_mut().analysis_mut().sweep_form = Some(SweepForm {
        vary: vary.clone(),
        range,
    });
    open_tab(&mut h, AnalysisTab::Sweep);
    h.get_by_label("Compute sweep").click();
    wait_for_job(&mut h);
    let s = h.state().scenario().clone();
    let expected = sweep(&s, &vary, &range, &SweepControl::default()).expect("library sweep");
    let out = match &h.state().analysis().sweep {
        Some(Ok(out)) => out.clone(),
        other => panic!("no sweep result: {other:?}"),
    };
    assert_eq!(out.points, expected);
    // A concentration sweep of one species carries its Nernst line.
    let nernst = out.nernst.expect("a Nernst line for outside K+");
    assert_eq!(nernst.species, "K+");
    h.get_by_label_contains("Nernst K+");
}

/// Points computed from known ratios P_Na/P_K = 0.05 and P_Cl/P_K = 0.3 (invented values),
/// as a bath potassium series, fit back to those ratios.
#[test]
fn a_fit_of_points_made_from_known_ratios_reports_them() {
    let dir = tempfile::tempdir().expect("temporary directory");
    let mut truth = Scenario::new_default();
    let p_k = truth.species[0].permeability_cm_per_s;
    truth.species[1].permeability_cm_per_s = 0.05 * p_k;
    truth.species[2].permeability_cm_per_s = 0.3 * p_k;
    let vary = Vary::OutsideMm("K+".into());
    let range = SweepRange {
        from: 2.0,
        to: 100.0,
        points: 8,
        log: true,
    };
    let points = sweep(&truth, &vary, &range, &SweepControl::default()).expect("points");
    let mut csv = String::from("outside_k_mm,v_mv\n");
    for p in &points {
        csv += &format!("{},{}\n", p.value, p.resting_mv.expect("a resting potential"));
    }
    let path = dir.path().join("bath-series.csv");
    std::fs::write(&path, csv).expect("written");

    let mut h = harness();
    h.run_steps(2);
    h.state_mut()
        .queue(Command::Analysis(AnalysisCommand::LoadFitData(path)));
    open_tab(&mut h, AnalysisTab::Fit);
    h.get_by_label_contains("8 points from");
    assert_eq!(h.state().analysis().fit.vary, Some(vary));
    h.get_by_label("Fit ratios").click();
    wait_for_job(&mut h);
    let out = match &h.state().analysis().fit.result {
        Some(Ok(out)) => out.clone(),
        other => panic!("no fit result: {other:?}"),
    };
    let ratio = |name: &str| {
        out.result
            .ratios
            .iter()
            .find(|r| r.name == name)
            .map(|r| r.ratio)
            .unwrap_or(f64::NAN)
    };
    assert!((ratio("Na+") - 0.05).abs() < 1e-4, "{}", ratio("Na+"));
    assert!((ratio("Cl-") - 0.3).abs() < 1e-4, "{}", ratio("Cl-"));
    h.get_by_label("0.0500");
    h.get_by_label("0.3000");
    assert!(
        out.result.rms_residual_mv < 0.01,
        "{}",
        out.result.rms_residual_mv
    );
    // The same fit through the library directly gives the same numbers.
    let direct = permeant::analysis::fit::fit(
        h.state().scenario(),
        &Vary::OutsideMm("K+".into()),
        &["Na+".to_string(), "Cl-".to_string()],
        &out.data,
        FitSpace::LogRatio,
    )
    .expect("library fit");
    assert_eq!(direct.ratios, out.result.ratios);
}

#[test]
fn a_bad_data_file_shows_the_row_it_stopped_at() {
    let dir = tempfile::tempdir().expect("temporary directory");
    let path = dir.path().join("bad.csv");
    std::fs::write(&path, "outside_k_mm,v_mv\n5,-70.1\n10,about -60\n20,-45\n").expect("written");
    let mut h = harness();
    h.run_steps(2);
    h.state_mut()
        .queue(Command::Analysis(AnalysisCommand::LoadFitData(path)));
    open_tab(&mut h, AnalysisTab::Fit);
    h.get_by_label_contains("row 3: the v_mv cell \"about -60\" is not a number");
    // Nothing to fit, so the button waits.
    assert!(h.get_by_label("Fit ratios").accesskit_node().is_disabled());
}
