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
