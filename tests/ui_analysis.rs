//! The analysis window, driven through egui_kittest on the real app: keeping a trace and its
//! metrics, a scan computed in the background against the library's own scan, a fit that
//! recovers the ratios its points were made from, a data file with a bad row, and an ion
//! substitution planned as a replacement of a bath compound.

use std::time::{Duration, Instant};

use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable};
mod common;
use common::reference::{ghk_voltage_mv, nernst_slope_mv_per_decade};
use permeant::analysis::fit::FitSpace;
use permeant::analysis::metrics::COMPARED;
use permeant::analysis::scan::{ScanControl, ScanRange, Vary, scan};
use permeant::scenario::Scenario;
use permeant::ui::analysis::{AnalysisCommand, AnalysisTab, ScanForm};
use permeant::ui::prefs::Speed;
use permeant::ui::{App, AppOptions, Command};

/// The accuracy model.md asks of potentials, mV.
const ACCURACY_MV: f64 = 0.01;
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
    // One difference per compared metric that the second trace has (times of extremes are not
    // compared; a blank has no difference).
    let second = h.state().analysis().kept.traces[1].metrics.expect("metrics");
    let compared = second
        .cells()
        .iter()
        .zip(COMPARED)
        .filter(|(c, on)| c.is_ok() && *on)
        .count();
    assert!(compared >= 8, "{compared}");
    assert_eq!(h.query_all_by_label_contains("(Δ ").count(), compared);
    // Deleting goes through the same commands as the panel; the first kept run left is then
    // the baseline.
    h.state_mut()
        .queue(Command::Analysis(AnalysisCommand::DeleteKept(0)));
    h.run_steps(2);
    assert_eq!(h.state().analysis().kept.traces.len(), 1);
    assert_eq!(h.state().analysis().kept.baseline, Some(0));
}

#[test]
fn a_bath_potassium_scan_in_the_window_equals_the_library_scan() {
    let mut h = harness();
    h.run_steps(2);
    let vary = Vary::OutsideMm("K+".into());
    let range = ScanRange {
        from: 1.0,
        to: 100.0,
        points: 30,
        log: true,
    };
    h.state_mut().analysis_mut().scan_form = Some(ScanForm {
        vary: vary.clone(),
        range,
    });
    open_tab(&mut h, AnalysisTab::Scan);
    h.get_by_label("Compute scan").click();
    wait_for_job(&mut h);
    let s = h.state().scenario().clone();
    let expected = scan(&s, &vary, &range, &ScanControl::default()).expect("library scan");
    let out = match &h.state().analysis().scan {
        Some(Ok(out)) => out.clone(),
        other => panic!("no scan result: {other:?}"),
    };
    assert_eq!(out.points, expected);
    // A concentration scan of one species carries its Nernst line: ln(10)·RT/F per decade,
    // 61.54 mV at 37 °C (CODATA 2018 constants).
    let nernst = out.nernst.expect("a Nernst line for outside K+");
    assert_eq!(nernst.species, "K+");
    let slope = nernst_slope_mv_per_decade(1, s.temperature_c);
    assert!(
        (nernst.slope_mv_per_decade - slope).abs() < 1e-9,
        "{}",
        nernst.slope_mv_per_decade
    );
    h.get_by_label_contains("Nernst K+");
    // The default cell has no pump or channel, so each steady state is the GHK voltage
    // equation's potential at that bath potassium.
    let mut ions = common::reference_ions(&s);
    for p in &out.points {
        ions[0].outside_mm = p.value;
        let expected = ghk_voltage_mv(&ions, s.temperature_c);
        let v = p.resting_mv.expect("a steady state");
        assert!(
            (v - expected).abs() < ACCURACY_MV,
            "{} mM: {v} vs {expected}",
            p.value
        );
    }
}

/// How close fitted ratios come to those exact data were made from. An error of ACCURACY_MV in
/// every point would move a ratio near 0.05 by about 0.0004 (ΔV/(RT/F) relative); the steady
/// states are solved far tighter than that.
const RATIO_TOLERANCE: f64 = 1e-4;

/// Points of a bath potassium series computed from the GHK voltage equation with the ratios
/// P_Na/P_K = 0.05 and P_Cl/P_K = 0.3 (invented values) fit back to those ratios.
#[test]
fn a_fit_of_points_made_from_known_ratios_reports_them() {
    let dir = tempfile::tempdir().expect("temporary directory");
    let cell = Scenario::new_default();
    let mut ions = common::reference_ions(&cell);
    for (ion, ratio) in ions.iter_mut().zip([1.0, 0.05, 0.3]) {
        ion.p_cm_per_s = ratio;
    }
    let vary = Vary::OutsideMm("K+".into());
    let mut csv = String::from("outside_k_mm,v_mv\n");
    for j in 0..8 {
        // 2 to 100 mM, evenly on a log scale.
        let k_out = 2.0 * 50f64.powf(f64::from(j) / 7.0);
        ions[0].outside_mm = k_out;
        let v = ghk_voltage_mv(&ions, cell.temperature_c);
        csv += &format!("{k_out},{v}\n");
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
    assert!((ratio("Na+") - 0.05).abs() < RATIO_TOLERANCE, "{}", ratio("Na+"));
    assert!((ratio("Cl-") - 0.3).abs() < RATIO_TOLERANCE, "{}", ratio("Cl-"));
    h.get_by_label("0.0500");
    h.get_by_label("0.3000");
    assert!(
        out.result.rms_residual_mv < ACCURACY_MV,
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

// An ion substitution planned in the window: the bath is a solution, so its sodium is not a
// number to scan but a compound to replace.
#[test]
fn a_sodium_replacement_in_the_window_equals_the_library_and_the_ghk_equation() {
    use common::reference::Ion;
    use permeant::solutions::replace::Replace;
    let mut h = harness();
    h.state_mut()
        .queue(Command::OpenExample("nmdg-sodium-substitution.ron".into()));
    h.run_steps(2);
    open_tab(&mut h, AnalysisTab::Scan);
    h.get_by_label("Replace a bath compound").click();
    h.run_steps(2);
    // The bath's largest compound, by the impermeant cation of common practice.
    let form = h
        .state()
        .analysis()
        .replace_form
        .clone()
        .expect("a replacement form");
    assert_eq!((form.old.as_str(), form.new.as_str()), ("NaCl", "NMDG-Cl"));
    h.get_by_label("Compute replacement").click();
    wait_for_job(&mut h);
    let s = h.state().scenario().clone();
    let range = ScanRange {
        from: 0.0,
        to: 140.0,
        points: form.points,
        log: false,
    };
    let expected = Replace::parse("NaCl:NMDG-Cl", &s)
        .and_then(|r| r.scan(&s, &range, &ScanControl::default()))
        .expect("library replacement");
    let out = match &h.state().analysis().replace {
        Some(Ok(out)) => out.clone(),
        other => panic!("no replacement result: {other:?}"),
    };
    assert_eq!(out.points, expected);
    h.get_by_label(&format!("Values ({} mixes)", out.points.len()))
        .click();
    h.run_steps(3);
    assert!(
        h.query_by_label("NMDG-Cl (mM)").is_some(),
        "the table's first column"
    );
    assert!(h.query_by_label("Junction (mV)").is_some());
    // With all 140 mM of NaCl replaced, the bath holds no Na+ and the same Cl-: the GHK voltage
    // equation (Goldman 1943; Hodgkin & Katz 1949) by hand from the recipes at 22 °C. Pipette:
    // K+ 130 + 10, Na+ 10, Cl- 10 + 10 + 2·2; bath: K+ 5, Na+ 0, Cl- 140 + 5 + 2·2 + 2·1.
    let p = |name: &str| {
        s.species
            .iter()
            .find(|x| x.name == name)
            .map(|x| x.permeability_cm_per_s)
            .expect("the species")
    };
    let ions = [
        Ion {
            charge: 1,
            inside_mm: 140.0,
            outside_mm: 5.0,
            p_cm_per_s: p("K+"),
        },
        Ion {
            charge: 1,
            inside_mm: 10.0,
            outside_mm: 0.0,
            p_cm_per_s: p("Na+"),
        },
        Ion {
            charge: -1,
            inside_mm: 24.0,
            outside_mm: 151.0,
            p_cm_per_s: p("Cl-"),
        },
    ];
    let by_hand = ghk_voltage_mv(&ions, 22.0);
    let last = out.points.last().expect("points");
    assert_eq!(last.value, 140.0);
    let ghk = last.ghk_mv.expect("a GHK potential");
    assert!((ghk - by_hand).abs() < ACCURACY_MV, "{ghk} vs {by_hand}");
    // Sodium gone, the cell hyperpolarizes; NMDG+ being slower than Na+, the junction moves.
    let first = &out.points[0];
    assert!(ghk < first.ghk_mv.expect("a GHK potential") - 5.0);
    let (j0, j1) = (
        first.ljp_mv.expect("a junction"),
        last.ljp_mv.expect("a junction"),
    );
    assert!((j1 - j0).abs() > 2.0);
    // Both changes, read off the table's ends, are summed up above the plot.
    let line = format!("junction {j0:.2} → {j1:.2} mV (Δ {:+.2} mV)", j1 - j0);
    assert!(
        h.query_by_label_contains(&line).is_some(),
        "the summary names {line}"
    );

    // Its CSV, through the typed-path dialog, is what the command line writes for it.
    let dir = tempfile::tempdir().expect("a temporary directory");
    h.state_mut()
        .queue(Command::TypePath(permeant::ui::command::FilePurpose::Export(
            permeant::ui::export::ExportKind::ScanCsv,
        )));
    h.run_steps(3);
    h.get_by_label("File path").click();
    h.run_steps(1);
    let target = dir.path().join("replace.csv");
    h.get_by_label("File path")
        .type_text(&target.display().to_string());
    h.run_steps(1);
    h.get_by_label("Export").click();
    h.run_steps(3);
    let written = std::fs::read_to_string(&target).expect("the CSV was written");
    let cli_csv = dir.path().join("cli.csv");
    let scenario_file = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("scenarios")
        .join("nmdg-sodium-substitution.ron");
    let status = std::process::Command::new(env!("CARGO_BIN_EXE_permeant"))
        .args([
            "scan",
            &scenario_file.display().to_string(),
            "--vary",
            "replace:NaCl:NMDG-Cl",
            "--from",
            "0",
            "--to",
            "140",
            "--points",
            &form.points.to_string(),
            "--csv",
            &cli_csv.display().to_string(),
        ])
        .output()
        .expect("the command line runs");
    assert!(status.status.success(), "{status:?}");
    assert_eq!(written, std::fs::read_to_string(&cli_csv).expect("the CLI's CSV"));
    assert!(written.starts_with("value,ghk_mv,resting_mv,ljp_mv\n"));
}
