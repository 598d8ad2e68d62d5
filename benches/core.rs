//! Speed and memory of the core: the resting report of every bundled scenario, whole runs of
//! every bundled scenario, one second of the excitable example under a 10 Hz train, one second
//! of a passive cell through a bath change, and the resident memory of a run that keeps a
//! million samples, and a whole `permeant run` in process: two seconds of the excitable cell at
//! 20 °C sampled every 0.1 ms (20,001 rows, every column) streamed to CSV as the command line
//! does. Targets (from the project brief): rest < 100 µs, the excitable second < 20 ms, the
//! passive second < 2 ms, a million samples < 100 MB resident, the whole 2-s run with its CSV
//! < 15 ms as a process (the in-process figure here leaves out start-up and the file system).
//!
//! Run with `cargo bench --bench core`; the step statistics and the memory figures are printed
//! before criterion's timings.

use std::hint::black_box;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use criterion::{Criterion, criterion_group};
use permeant::analysis::rest_report;
use permeant::engine::{Method, Progress, Run, SolverSettings};
use permeant::report::csv;
use permeant::scenario::{Event, Scenario, Valid, read_file};

fn scenario_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("scenarios")
}

/// Every bundled scenario, by file name, in name order.
fn bundled() -> Vec<(String, Valid)> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(scenario_dir())
        .map(|d| d.filter_map(|e| e.ok().map(|e| e.path())).collect())
        .unwrap_or_default();
    files.retain(|p| p.extension().is_some_and(|x| x == "ron"));
    files.sort();
    files
        .into_iter()
        .filter_map(|p| {
            let name = p.file_stem()?.to_string_lossy().into_owned();
            match read_file(&p) {
                Ok(s) => Some((name, s)),
                Err(e) => {
                    eprintln!("skipping {}: {e}", p.display());
                    None
                }
            }
        })
        .collect()
}

fn load(name: &str) -> Option<Scenario> {
    read_file(&scenario_dir().join(format!("{name}.ron")))
        .ok()
        .map(Valid::into_inner)
}

/// The excitable example for one second under a 10 Hz train of its own pulses.
fn excitable_second() -> Option<Scenario> {
    let mut s = load("excitable-cell-pulse-train")?;
    let (amplitude, width) = s.protocol.iter().find_map(|e| match *e {
        Event::InjectTrain {
            amplitude_ua_per_cm2,
            width_ms,
            ..
        } => Some((amplitude_ua_per_cm2, width_ms)),
        Event::Inject {
            amplitude_ua_per_cm2,
            from_ms,
            until_ms,
        } => Some((amplitude_ua_per_cm2, until_ms - from_ms)),
        _ => None,
    })?;
    s.protocol = vec![Event::InjectTrain {
        amplitude_ua_per_cm2: amplitude,
        width_ms: width,
        period_ms: 100.0,
        count: 10,
        from_ms: 10.0,
    }];
    s.run.duration_ms = 1000.0;
    Some(s)
}

/// The same second warmed to 37 °C, where the HH gates run 29 times faster (q10 = 3) and
/// make the cell stiff.
fn warm_excitable_second() -> Option<Scenario> {
    let mut s = excitable_second()?;
    s.temperature_c = 37.0;
    Some(s)
}

/// The raised-bath example (a passive cell with a bath change) for one second.
fn passive_second() -> Option<Scenario> {
    let mut s = load("raised-bath-potassium")?;
    s.run.duration_ms = 1000.0;
    Some(s)
}

/// The excitable example at 20 °C for two seconds, sampled every 0.1 ms: the command line's
/// speed case (20,001 rows).
fn excitable_two_seconds() -> Option<Scenario> {
    let mut s = load("excitable-cell-pulse-train")?;
    s.temperature_c = 20.0;
    s.run.duration_ms = 2000.0;
    s.run.sample_ms = 0.1;
    Some(s)
}

/// A run streamed to CSV in chunks of 4096 samples, as `permeant run` does; returns the bytes
/// written.
fn run_to_csv(s: &Valid, out: &mut Vec<u8>) -> usize {
    out.clear();
    let mut r = Run::new(s, SolverSettings::default()).expect("bundled scenario starts");
    let model = r.model().clone();
    let mut rows = csv::RowWriter::new(&model);
    csv::write_header(out, &model, r.trace()).expect("writes to memory");
    loop {
        let p = r.advance(r.next_chunk(4096)).expect("bundled scenario runs");
        rows.write_rows(out, &model, r.trace()).expect("writes to memory");
        r.trace_mut().discard_front();
        if p == Progress::Finished {
            return out.len();
        }
    }
}

fn run(s: &Scenario) -> Run {
    run_with(s, Method::Auto)
}

fn run_with(s: &Scenario, method: Method) -> Run {
    let settings = SolverSettings {
        method,
        ..Default::default()
    };
    let s = permeant::scenario::validate(s.clone()).expect("bundled scenarios are valid");
    let mut r = Run::new(&s, settings).expect("bundled scenario starts");
    r.run_to_end().expect("bundled scenario runs");
    r
}

/// A field of /proc/self/status in MB (Linux only; `None` elsewhere).
fn status_mb(field: &str) -> Option<f64> {
    let text = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = text.lines().find(|l| l.starts_with(field))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

/// Step statistics of every run measured here, and the memory of a million-sample run.
fn report() {
    println!("step statistics at default settings (accepted, rejected, evaluations, Jacobians):");
    let mut cases: Vec<(String, Scenario, Method)> = bundled()
        .into_iter()
        .map(|(n, s)| (n, s.into_inner(), Method::Auto))
        .collect();
    if let Some(s) = excitable_second() {
        cases.push(("excitable, 1 s at 10 Hz".into(), s.clone(), Method::Auto));
        cases.push(("  same, explicit only".into(), s.clone(), Method::Explicit));
        cases.push(("  same, Rosenbrock only".into(), s, Method::Rosenbrock));
    }
    if let Some(s) = warm_excitable_second() {
        cases.push(("excitable, 1 s at 10 Hz, 37 °C".into(), s.clone(), Method::Auto));
        cases.push(("  same, explicit only".into(), s.clone(), Method::Explicit));
        cases.push(("  same, Rosenbrock only".into(), s, Method::Rosenbrock));
    }
    cases.extend(passive_second().map(|s| ("raised bath, 1 s".to_string(), s, Method::Auto)));
    for (name, s, method) in &cases {
        let start = Instant::now();
        let r = run_with(s, *method);
        let st = r.stats();
        println!(
            "  {name:<32} {:>6} {:>4} {:>7} {:>5}   {:>6} samples  {:?}",
            st.accepted,
            st.rejected,
            st.evaluations,
            st.jacobians,
            r.trace().len(),
            start.elapsed()
        );
    }

    let Some(mut s) = load("excitable-cell-pulse-train") else {
        println!("memory: excitable example not found");
        return;
    };
    s.run.duration_ms = 1e6 * s.run.sample_ms;
    let before = status_mb("VmHWM:");
    let start = Instant::now();
    let r = run(&s);
    let elapsed = start.elapsed();
    let after = status_mb("VmHWM:");
    let columns = r.trace().columns.len() + 1;
    let rows = r.trace().len();
    drop(r);
    match (before, after) {
        (Some(b), Some(a)) => println!(
            "memory: {rows} samples × {columns} columns in {elapsed:?}: peak resident {b:.1} MB before, {a:.1} MB after (target < 100 MB)"
        ),
        _ => println!("memory: /proc/self/status not available; {rows} samples in {elapsed:?}"),
    }
}

fn rest(c: &mut Criterion) {
    let mut g = c.benchmark_group("rest");
    for (name, s) in bundled() {
        g.bench_function(&name, |b| b.iter(|| rest_report(black_box(&s))));
    }
    g.finish();
}

fn runs(c: &mut Criterion) {
    let mut g = c.benchmark_group("run");
    if let Some(s) = excitable_second() {
        g.bench_function("excitable 1 s at 10 Hz", |b| b.iter(|| run(black_box(&s))));
    }
    if let Some(s) = passive_second() {
        g.bench_function("passive 1 s with bath change", |b| b.iter(|| run(black_box(&s))));
    }
    for (name, s) in bundled() {
        g.bench_function(&name, |b| b.iter(|| run(black_box(&s))));
    }
    g.finish();
}

/// The stiff case, with the automatic choice and with the explicit method alone (about 0.15 s
/// a run in release, hence the small sample).
fn stiff(c: &mut Criterion) {
    let Some(s) = warm_excitable_second() else { return };
    let mut g = c.benchmark_group("stiff");
    g.sample_size(10);
    g.bench_function("excitable 1 s at 10 Hz, 37 °C", |b| {
        b.iter(|| run(black_box(&s)))
    });
    g.bench_function("excitable 1 s at 10 Hz, 37 °C, explicit only", |b| {
        b.iter(|| run_with(black_box(&s), Method::Explicit))
    });
    g.finish();
}

/// Issue 12's target: ten minutes of a pump block in a cell of tracked volume, sampled every
/// 100 ms (6001 samples), under 50 ms.
fn volume(c: &mut Criterion) {
    let Some(s) = load("pump-block-swelling") else {
        return;
    };
    let mut g = c.benchmark_group("volume");
    g.bench_function("pump block 10 min, 100 ms samples", |b| {
        b.iter(|| run(black_box(&s)))
    });
    g.finish();
}

fn run_and_csv(c: &mut Criterion) {
    let Some(s) = excitable_two_seconds() else { return };
    let s = permeant::scenario::validate(s).expect("bundled scenarios are valid");
    let mut out = Vec::new();
    let mut g = c.benchmark_group("cli");
    g.sample_size(20);
    g.bench_function("run + csv, excitable 2 s at 20 °C, 20001 rows", |b| {
        b.iter(|| run_to_csv(black_box(&s), &mut out))
    });
    g.finish();
}

fn config() -> Criterion {
    // The machine is shared: short windows keep the whole file to a couple of minutes.
    Criterion::default()
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(2))
}

criterion_group! {
    name = benches;
    config = config();
    targets = rest, runs, stiff, volume, run_and_csv
}

fn main() {
    report();
    benches();
    Criterion::default().configure_from_args().final_summary();
}
