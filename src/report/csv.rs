//! CSV of a run's samples: `time_ms,v_mv`, then `v_recorded_mv` (V plus the recording's offset)
//! when the scenario's cell and bath are solutions, in voltage clamp the recorded current
//! `i_total_ua_per_cm2`, each species' current, the pump current, then every other state
//! component (gates, lagged inputs, tracked concentrations), with a tracked volume
//! `volume_rel` and `osm_in_mosm` (the inside amounts written as the concentrations they make,
//! `inside_mm:<species>`) and after them the bath's osmolarity `osm_out_mosm` (which holds the
//! solutes of a bath solution no species lists, so that input has no column of its own), and
//! in voltage clamp the command `v_command_mv` last. Also the one home of
//! CSV quoting ([`quote`]) and number formatting ([`push_number`], [`number`]) for every CSV the
//! program writes.
//!
//! Numbers are written as Rust's `{}` writes an f64: the shortest form that reads back to the
//! same value, in plain decimal notation (model.md, "Output samples"). A run writes hundreds of
//! thousands of them, so they are made by zmij's shortest-digit algorithm (Schubfach) and laid
//! out in that notation, instead of through `std::fmt`, about three times faster; a proptest
//! keeps the two byte-identical.

use std::borrow::Cow;
use std::io::{self, Write};

use crate::engine::{Model, Readout, Trace};

/// `field` as one CSV field (RFC 4180): quoted, with inner quotes doubled, when it holds a
/// comma, a quote or a line break; unchanged otherwise.
pub fn quote(field: &str) -> Cow<'_, str> {
    if field.contains([',', '"', '\n', '\r']) {
        Cow::Owned(format!("\"{}\"", field.replace('"', "\"\"")))
    } else {
        Cow::Borrowed(field)
    }
}

/// Appends `x` to `out` exactly as `format!("{x}")` writes it: the shortest decimal digits that
/// read back to the same f64, in plain notation (`0.0001`, `1500`, `-0`), `NaN`, `inf`, `-inf`.
pub fn push_number(out: &mut Vec<u8>, x: f64) {
    if !x.is_finite() {
        out.extend_from_slice(if x.is_nan() {
            b"NaN"
        } else if x > 0.0 {
            b"inf"
        } else {
            b"-inf"
        });
        return;
    }
    if tie_possible(x) {
        // zmij breaks an exact tie between two shortest candidates to even, std upwards
        // (177511795034318.625 is written …318.62 by one and …318.63 by the other). Such a
        // tie needs a value with few fractional bits, which a run rarely writes: std does those.
        use std::io::Write as _;
        let _ = write!(out, "{x}");
        return;
    }
    let mut buf = zmij::Buffer::new();
    let text = buf.format_finite(x).as_bytes();
    // Near 1 zmij writes plain decimals already ("12.34", "0.001234", "1500.0", "-0.0"), the
    // same as `{}` but for the ".0" of whole numbers.
    let Some(e) = text.iter().position(|&c| c == b'e') else {
        out.extend_from_slice(text.strip_suffix(b".0").unwrap_or(text));
        return;
    };
    // Far from 1 it writes scientific notation ("1.234e-7", "5e+22"): rebuild the plain form
    // from the digits and the exponent.
    let (negative, mantissa) = match text[..e].split_first() {
        Some((b'-', rest)) => (true, rest),
        _ => (false, &text[..e]),
    };
    let exp_text = &text[e + 1..];
    let (sign, exp_digits) = match exp_text.split_first() {
        Some((b'-', d)) => (-1, d),
        Some((b'+', d)) => (1, d),
        _ => (1, exp_text),
    };
    let exponent = sign
        * exp_digits
            .iter()
            .fold(0i32, |m, d| m * 10 + i32::from(d.wrapping_sub(b'0')));
    // The mantissa is one digit, a point and the rest ("1.234"), or one digit alone ("5").
    let mut digits = [0u8; 32];
    let mut n = 0;
    for &c in mantissa.iter().filter(|c| c.is_ascii_digit()) {
        if let Some(d) = digits.get_mut(n) {
            *d = c;
            n += 1;
        }
    }
    let digits = &digits[..n];
    // Digits before the decimal point.
    let int_len = 1 + exponent;
    if negative {
        out.push(b'-');
    }
    if int_len <= 0 {
        out.extend_from_slice(b"0.");
        out.extend(std::iter::repeat_n(b'0', int_len.unsigned_abs() as usize));
        out.extend_from_slice(digits);
    } else if int_len as usize >= digits.len() {
        out.extend_from_slice(digits);
        out.extend(std::iter::repeat_n(b'0', int_len as usize - digits.len()));
    } else {
        let (whole, fraction) = digits.split_at(int_len as usize);
        out.extend_from_slice(whole);
        out.push(b'.');
        out.extend_from_slice(fraction);
    }
}

/// Whether the shortest digits of `x` could end in an exact tie between two candidates. With
/// `x = m·2^q`, `m` odd and `q < 0`, the exact decimal expansion of `x` has as many significant
/// digits as `m·5^(−q)`, at least `−q·log10(5) + 1`: from `q ≤ −26` on that is 19 or more, while
/// a tie between two candidates of at most 17 digits needs an exact value of at most 18. Zero
/// has no tie.
fn tie_possible(x: f64) -> bool {
    let bits = x.to_bits();
    let exponent = ((bits >> 52) & 0x7ff) as i32;
    let fraction = bits & ((1u64 << 52) - 1);
    let (m, q) = if exponent == 0 {
        (fraction, -1074)
    } else {
        (fraction | (1u64 << 52), exponent - 1075)
    };
    if m == 0 {
        return false;
    }
    q + m.trailing_zeros() as i32 > -26
}

/// `x` as [`push_number`] writes it.
pub fn number(x: f64) -> String {
    let mut out = Vec::with_capacity(24);
    push_number(&mut out, x);
    String::from_utf8(out).unwrap_or_default()
}

/// Which columns a run's CSV holds; each choice is a leading part of the full list.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Columns {
    /// Time, potential, currents and every other state component.
    #[default]
    All,
    /// Time, potential, each species' current and the pump's.
    Currents,
    /// Time and potential only.
    Potential,
}

impl Columns {
    /// The command line's words for each choice.
    pub const WORDS: [(&'static str, Columns); 3] = [
        ("all", Columns::All),
        ("currents", Columns::Currents),
        ("v", Columns::Potential),
    ];
}

/// Column names, in order.
pub fn header(model: &Model, trace: &Trace) -> Vec<String> {
    header_of(model, trace, Columns::All)
}

/// Names of the `columns` chosen, in order.
pub fn header_of(model: &Model, trace: &Trace, columns: Columns) -> Vec<String> {
    let mut h = vec!["time_ms".to_string(), "v_mv".to_string()];
    if model.recording_offset.is_some() {
        h.push("v_recorded_mv".into());
    }
    if columns == Columns::Potential {
        return h;
    }
    if model.clamp.is_some() {
        // Under an ideal clamp the ionic current; the capacitive current of a step is not in it.
        h.push(CLAMP_CURRENT.into());
    }
    h.extend(model.species_names.iter().map(|n| format!("i_ua_per_cm2:{n}")));
    if model.membrane.pump.is_some() {
        h.push("i_pump_ua_per_cm2".into());
    }
    if columns == Columns::All {
        match &model.volume {
            None => h.extend(trace.names.iter().skip(1).cloned()),
            Some(_) => {
                let co = model.conc_offset();
                let unlisted = model.protocol.unlisted_lag.map(|l| model.lag_offset() + l);
                for (i, name) in trace.names.iter().enumerate().skip(1) {
                    if (co..co + model.species_count()).contains(&i) {
                        h.push(format!("inside_mm:{}", model.species_names[i - co]));
                    } else if model.volume_index() != Some(i) && unlisted != Some(i) {
                        h.push(name.clone());
                    }
                }
                h.push("volume_rel".into());
                h.push("osm_in_mosm".into());
                h.push("osm_out_mosm".into());
            }
        }
    }
    if model.clamp.is_some() {
        h.push(COMMAND.into());
    }
    h
}

/// The recorded current of a voltage-clamp run (clamp-and-volume.md).
pub const CLAMP_CURRENT: &str = "i_total_ua_per_cm2";
/// The command potential of a voltage-clamp run.
pub const COMMAND: &str = "v_command_mv";

/// Writes the header line.
pub fn write_header(w: &mut impl Write, model: &Model, trace: &Trace) -> io::Result<()> {
    write_header_of(w, model, trace, Columns::All)
}

/// Writes the header line of the `columns` chosen.
pub fn write_header_of(w: &mut impl Write, model: &Model, trace: &Trace, columns: Columns) -> io::Result<()> {
    let h: Vec<String> = header_of(model, trace, columns)
        .iter()
        .map(|n| quote(n).into_owned())
        .collect();
    writeln!(w, "{}", h.join(","))
}

/// Writes sample rows, reusing its buffers from one call to the next: the readout of each
/// sample, and the text of all the rows of one call, handed to the writer in one piece.
#[derive(Debug, Clone, Default)]
pub struct RowWriter {
    readout: Readout,
    y: Vec<f64>,
    text: Vec<u8>,
    columns: Columns,
}

impl RowWriter {
    pub fn new(model: &Model) -> RowWriter {
        RowWriter {
            readout: model.readout(),
            y: vec![0.0; model.dim()],
            text: Vec::new(),
            columns: Columns::All,
        }
    }

    /// Writes only the `columns` chosen.
    pub fn with_columns(mut self, columns: Columns) -> RowWriter {
        self.columns = columns;
        self
    }

    /// Writes every sample now held in `trace` as a row.
    pub fn write_rows(&mut self, w: &mut impl Write, model: &Model, trace: &Trace) -> io::Result<()> {
        let has_pump = model.membrane.pump.is_some();
        let clamped = model.clamp.is_some();
        self.y.resize(trace.columns.len(), 0.0);
        self.text.clear();
        // Room for every row at once, most numbers taking under 24 bytes.
        self.text.reserve(
            trace.len() * (trace.columns.len() + self.readout.currents.species_ua_per_cm2.len() + 2) * 24,
        );
        for k in 0..trace.len() {
            let t = &mut self.text;
            if self.columns == Columns::Potential {
                push_number(t, trace.t_ms[k]);
                t.push(b',');
                push_number(t, trace.v_mv()[k]);
                if let Some(offset) = &model.recording_offset {
                    t.push(b',');
                    push_number(t, trace.v_mv()[k] + offset.at(trace.t_ms[k]));
                }
                t.push(b'\n');
                continue;
            }
            trace.state(k, &mut self.y);
            model.read(trace.t_ms[k], &self.y, &mut self.readout);
            push_number(t, trace.t_ms[k]);
            t.push(b',');
            push_number(t, self.y[0]);
            if let Some(offset) = &model.recording_offset {
                t.push(b',');
                push_number(t, self.y[0] + offset.at(trace.t_ms[k]));
            }
            if clamped {
                t.push(b',');
                push_number(t, self.readout.currents.clamp_ua_per_cm2);
            }
            for &c in &self.readout.currents.species_ua_per_cm2 {
                t.push(b',');
                push_number(t, c);
            }
            if has_pump {
                t.push(b',');
                push_number(t, self.readout.currents.pump_ua_per_cm2);
            }
            if self.columns == Columns::All {
                match &model.volume {
                    None => {
                        for &v in &self.y[1..] {
                            t.push(b',');
                            push_number(t, v);
                        }
                    }
                    Some(_) => {
                        let co = model.conc_offset();
                        let amounts = co..co + model.species_count();
                        let unlisted = model.protocol.unlisted_lag.map(|l| model.lag_offset() + l);
                        for (i, &v) in self.y.iter().enumerate().skip(1) {
                            if amounts.contains(&i) {
                                t.push(b',');
                                push_number(t, self.readout.conditions.inside_mm[i - co]);
                            } else if model.volume_index() != Some(i) && unlisted != Some(i) {
                                t.push(b',');
                                push_number(t, v);
                            }
                        }
                        t.push(b',');
                        push_number(t, self.readout.volume_rel);
                        t.push(b',');
                        push_number(t, self.readout.osm_in_mosm);
                        t.push(b',');
                        push_number(t, self.readout.osm_out_mosm);
                    }
                }
            }
            if clamped {
                t.push(b',');
                push_number(t, self.readout.currents.command_mv);
            }
            t.push(b'\n');
        }
        w.write_all(&self.text)
    }
}

/// Writes every sample now held in `trace` as a row (one call; see [`RowWriter`] for many).
pub fn write_rows(w: &mut impl Write, model: &Model, trace: &Trace) -> io::Result<()> {
    RowWriter::new(model).write_rows(w, model, trace)
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
    let mut o = Vec::new();
    o.extend_from_slice(format!("# permeant {}\n", env!("CARGO_PKG_VERSION")).as_bytes());
    o.extend_from_slice(format!("# scenario: {}\n", title.replace(['\n', '\r'], " ")).as_bytes());
    o.extend_from_slice(format!("# written: {}\n", humantime::format_rfc3339_seconds(written)).as_bytes());
    o.extend_from_slice(b"trace,time_ms,v_mv\n");
    for t in traces {
        let name = quote(t.name);
        for (time, v) in t.t_ms.iter().zip(t.v_mv) {
            o.extend_from_slice(name.as_bytes());
            o.push(b',');
            push_number(&mut o, *time);
            o.push(b',');
            push_number(&mut o, *v);
            o.push(b'\n');
        }
    }
    String::from_utf8(o).unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// Rust's own `{}` is the reference (model.md, "Output samples").
    fn same_as_std(x: f64) -> Result<(), TestCaseError> {
        prop_assert_eq!(number(x), format!("{x}"), "bits {:#x}", x.to_bits());
        Ok(())
    }

    #[test]
    fn numbers_are_written_as_std_writes_them_at_the_edges() {
        for x in [
            0.0,
            -0.0,
            1.0,
            -1.0,
            0.1,
            0.5,
            1500.0,
            1e-5,
            1e-6,
            1e-7,
            1.234e-7,
            9.999999999999999e-5,
            1e15,
            1e16,
            1e17,
            1e21,
            1e22,
            123_456_789_012_345_680.0,
            f64::MIN_POSITIVE,
            5e-324,
            f64::MAX,
            f64::MIN,
            f64::EPSILON,
            f64::NAN,
            f64::INFINITY,
            f64::NEG_INFINITY,
            -72.14579973535416,
            0.021_594_307_618_148_54,
            // 177511795034318.625 exactly: a tie between two shortest candidates (…318.62
            // and …318.63).
            f64::from_bits(0x42e4_2e45_ef91_19d4),
            2f64.powi(60),
        ] {
            same_as_std(x).unwrap_or_else(|e| panic!("{e}"));
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 20_000, ..ProptestConfig::default() })]

        #[test]
        fn prop_any_f64_is_written_as_std_writes_it(bits in any::<u64>()) {
            same_as_std(f64::from_bits(bits))?;
        }

        #[test]
        fn prop_numbers_of_a_run_are_written_as_std_writes_them(
            mantissa in -1.0f64..1.0, exponent in -12i32..6,
        ) {
            // Values of the size a run writes: potentials, currents, gates, concentrations.
            same_as_std(mantissa * 10f64.powi(exponent))?;
        }

        #[test]
        fn prop_numbers_with_few_fractional_bits_are_written_as_std_writes_them(
            n in any::<i64>(), k in 0i32..40,
        ) {
            // Where exact ties between shortest candidates live.
            same_as_std(n as f64 / 2f64.powi(k))?;
        }
    }

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
