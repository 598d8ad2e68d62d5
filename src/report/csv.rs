//! CSV of a run's samples: `time_ms,v_mv`, each species' current, the pump current, then every
//! other state component (gates, lagged inputs, tracked concentrations). Numbers are written
//! with Rust's `{}` for f64: the shortest form that reads back to the same value.

use std::io::{self, Write};

use crate::engine::{Model, Trace};

/// Quotes a header field when it holds a comma, quote or line break.
fn field(name: &str) -> String {
    if name.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", name.replace('"', "\"\""))
    } else {
        name.to_string()
    }
}

/// Column names, in order.
pub fn header(model: &Model, trace: &Trace) -> Vec<String> {
    let mut h = vec!["time_ms".to_string(), "v_mv".to_string()];
    h.extend(model.species_names.iter().map(|n| format!("i_ua_per_cm2:{n}")));
    if model.membrane.pump.is_some() {
        h.push("i_pump_ua_per_cm2".into());
    }
    h.extend(trace.names.iter().skip(1).cloned());
    h
}

/// Writes the header line.
pub fn write_header(w: &mut impl Write, model: &Model, trace: &Trace) -> io::Result<()> {
    let h: Vec<String> = header(model, trace).iter().map(|n| field(n)).collect();
    writeln!(w, "{}", h.join(","))
}

/// Writes every sample now held in `trace` as a row.
pub fn write_rows(w: &mut impl Write, model: &mut Model, trace: &Trace) -> io::Result<()> {
    let mut y = vec![0.0; trace.columns.len()];
    let mut currents = vec![0.0; model.species_count()];
    let has_pump = model.membrane.pump.is_some();
    for k in 0..trace.len() {
        trace.state(k, &mut y);
        let pump = model.currents_at(&y, &mut currents);
        write!(w, "{},{}", trace.t_ms[k], y[0])?;
        for c in &currents {
            write!(w, ",{c}")?;
        }
        if has_pump {
            write!(w, ",{pump}")?;
        }
        for v in &y[1..] {
            write!(w, ",{v}")?;
        }
        writeln!(w)?;
    }
    Ok(())
}

/// One trace for a traces export: its name, times and potentials.
pub struct NamedTrace<'a> {
    pub name: &'a str,
    pub t_ms: &'a [f64],
    pub v_mv: &'a [f64],
}

/// The current and kept traces as one CSV in long form (`trace,time_ms,v_mv`), so traces
/// with different sample times sit in one file. Comment lines (`#`) first record the program
/// version, the scenario title and when it was written.
pub fn traces_csv(title: &str, traces: &[NamedTrace], written: std::time::SystemTime) -> String {
    let mut o = String::new();
    o += &format!("# permeant {}\n", env!("CARGO_PKG_VERSION"));
    o += &format!("# scenario: {}\n", title.replace(['\n', '\r'], " "));
    o += &format!("# written: {}\n", humantime::format_rfc3339_seconds(written));
    o += "trace,time_ms,v_mv\n";
    for t in traces {
        let name = field(t.name);
        for (time, v) in t.t_ms.iter().zip(t.v_mv) {
            o += &format!("{name},{time},{v}\n");
        }
    }
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn traces_csv_has_its_header_and_one_row_per_sample() {
        let when = std::time::UNIX_EPOCH + std::time::Duration::from_secs(1_800_000_000);
        let text = traces_csv(
            "Raised bath",
            &[
                NamedTrace {
                    name: "now",
                    t_ms: &[0.0, 0.5],
                    v_mv: &[-70.0, -69.5],
                },
                NamedTrace {
                    name: "with, comma",
                    t_ms: &[0.0],
                    v_mv: &[-60.25],
                },
            ],
            when,
        );
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[0], format!("# permeant {}", env!("CARGO_PKG_VERSION")));
        assert_eq!(lines[1], "# scenario: Raised bath");
        // 1.8e9 s after the epoch is 2027-01-15T08:00:00Z (humantime, checked by hand).
        assert_eq!(lines[2], "# written: 2027-01-15T08:00:00Z");
        assert_eq!(lines[3], "trace,time_ms,v_mv");
        assert_eq!(
            &lines[4..],
            ["now,0,-70", "now,0.5,-69.5", "\"with, comma\",0,-60.25"]
        );
    }
}
