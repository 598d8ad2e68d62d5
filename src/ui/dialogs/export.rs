//! Figures and data for sharing: the plots alone as PNG at the size the user picks (drawn apart
//! from the window by `figure`), the figure as SVG (the same drawing as `permeant run --svg`), and the trace
//! as CSV whose header records the program version, the scenario title and the date and time.
//! Every file is written atomically: a failed export leaves no half-written file behind.

use std::path::{Path, PathBuf};
use std::time::SystemTime;

use crate::report::{csv, svg};
use crate::scenario::{Valid, write_atomic};

/// What to export.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ExportKind {
    /// The two plots alone, at the size chosen in the export menu.
    Png,
    /// The membrane potential figure, as the command line draws it.
    Svg,
    /// The trace's samples, and those of the kept traces.
    Csv,
    /// The metrics table of the kept traces.
    MetricsCsv,
    /// The values of the last scan, as `permeant scan --csv` writes them (from the Scan tab,
    /// not the export menu).
    ScanCsv,
}

impl ExportKind {
    pub const ALL: [ExportKind; 4] = [
        ExportKind::Png,
        ExportKind::Svg,
        ExportKind::Csv,
        ExportKind::MetricsCsv,
    ];

    pub fn extension(self) -> &'static str {
        match self {
            ExportKind::Png => "png",
            ExportKind::Svg => "svg",
            ExportKind::Csv | ExportKind::MetricsCsv | ExportKind::ScanCsv => "csv",
        }
    }

    /// The menu entry.
    pub fn menu_label(self) -> &'static str {
        match self {
            ExportKind::Png => "Plots as PNG image…",
            ExportKind::Svg => "Membrane potential figure as SVG…",
            ExportKind::Csv => "Traces (current and kept) as CSV table…",
            ExportKind::MetricsCsv => "Kept-trace metrics as CSV table…",
            ExportKind::ScanCsv => "Scan values as CSV table…",
        }
    }

    /// The title of the file dialog or of the typed-path dialog.
    pub fn title(self) -> &'static str {
        match self {
            ExportKind::Png => "Export the plots as PNG",
            ExportKind::Svg => "Export the figure as SVG",
            ExportKind::Csv => "Export the traces as CSV",
            ExportKind::MetricsCsv => "Export the metrics table as CSV",
            ExportKind::ScanCsv => "Export the scan's values as CSV",
        }
    }

    /// The kind of file, for a file dialog's filter.
    pub fn file_kind(self) -> &'static str {
        match self {
            ExportKind::Png => "PNG image",
            ExportKind::Svg => "SVG figure",
            ExportKind::Csv | ExportKind::MetricsCsv | ExportKind::ScanCsv => "CSV table",
        }
    }

    /// The file name a dialog proposes.
    pub fn default_file_name(self) -> String {
        let stem = match self {
            ExportKind::Png => "plots",
            ExportKind::Svg => "figure",
            ExportKind::Csv => "trace",
            ExportKind::MetricsCsv => "metrics",
            ExportKind::ScanCsv => "scan",
        };
        format!("{stem}.{}", self.extension())
    }
}

/// `path` with the kind's extension when it has none.
pub fn with_extension(path: &Path, kind: ExportKind) -> PathBuf {
    let mut p = path.to_path_buf();
    if p.extension().is_none() {
        p.set_extension(kind.extension());
    }
    p
}

/// The shown part of the run, with its scenario.
pub struct Shown<'a> {
    pub scenario: &'a Valid,
    pub t_ms: &'a [f64],
    pub v_mv: &'a [f64],
    /// Each species' reversal potential at each shown sample (mV, not a number where it is
    /// undefined), for the species whose concentrations change in the run (`varying`); the
    /// window's plots draw the same values.
    pub reversal_mv: &'a [Vec<f64>],
    pub varying: &'a [bool],
    /// The kept traces, exported with the current one.
    pub kept: Vec<csv::NamedTrace<'a>>,
    /// The metrics table of the kept traces as CSV.
    pub metrics_csv: String,
    /// The last scan's values as CSV, when a scan has finished.
    pub scan_csv: Option<String>,
}

/// The SVG figure of the shown trace.
pub fn svg_text(shown: &Shown) -> Result<String, String> {
    let mut fig = svg::figure_for(shown.scenario, shown.t_ms, shown.v_mv).map_err(|e| e.to_string())?;
    let mut tracks = svg::Tracks::of(shown.varying, shown.scenario.run.duration_ms);
    for (s, col) in shown.reversal_mv.iter().enumerate() {
        let n = col.len().min(shown.t_ms.len());
        tracks.extend_species(s, &shown.t_ms[..n], &col[..n]);
    }
    tracks.apply(&mut fig);
    if fig.title.trim().is_empty() {
        fig.title = "untitled".into();
    }
    svg::render(&fig).map_err(|e| e.to_string())
}

/// The CSV of the shown trace, written at `when`.
pub fn csv_text(shown: &Shown, when: SystemTime) -> String {
    let mut traces = vec![csv::NamedTrace {
        name: "current run",
        t_ms: shown.t_ms,
        v_mv: shown.v_mv,
    }];
    traces.extend(shown.kept.iter().map(|k| csv::NamedTrace {
        name: k.name,
        t_ms: k.t_ms,
        v_mv: k.v_mv,
    }));
    csv::traces_csv(&shown.scenario.title, &traces, when)
}

/// An 8-bit straight-alpha RGBA picture, `width` × `height`, as PNG bytes.
pub fn encode_png(width: usize, height: usize, rgba: &[u8]) -> Result<Vec<u8>, String> {
    if width == 0 || height == 0 || rgba.len() != width * height * 4 {
        return Err("the picture is empty".into());
    }
    let too_big = |_| "the picture is too large for a PNG".to_string();
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(
            &mut out,
            u32::try_from(width).map_err(too_big)?,
            u32::try_from(height).map_err(too_big)?,
        );
        enc.set_color(png::ColorType::Rgba);
        enc.set_depth(png::BitDepth::Eight);
        let mut writer = enc.write_header().map_err(|e| e.to_string())?;
        writer.write_image_data(rgba).map_err(|e| e.to_string())?;
        writer.finish().map_err(|e| e.to_string())?;
    }
    Ok(out)
}

/// Exports `kind` to `path` (the kind's extension added when it has none) and says so, or why
/// not. `png` draws the plots' picture, asked only for a PNG.
pub fn export(
    kind: ExportKind,
    path: &Path,
    shown: &Shown,
    png: impl FnOnce() -> Result<Vec<u8>, String>,
) -> Result<String, String> {
    let path = with_extension(path, kind);
    let written = |bytes: &[u8]| {
        write_atomic(&path, bytes)
            .map(|()| format!("Exported {}", path.display()))
            .map_err(|e| format!("Could not export to {}: {e}", path.display()))
    };
    match kind {
        ExportKind::Svg => svg_text(shown)
            .map_err(|e| format!("Could not draw the figure: {e}"))
            .and_then(|text| written(text.as_bytes())),
        ExportKind::Csv => written(csv_text(shown, SystemTime::now()).as_bytes()),
        ExportKind::MetricsCsv => written(shown.metrics_csv.as_bytes()),
        ExportKind::ScanCsv => match &shown.scan_csv {
            Some(text) => written(text.as_bytes()),
            None => Err("Nothing to export: compute a scan first".into()),
        },
        ExportKind::Png => png()
            .map_err(|e| format!("Could not draw the plots: {e}"))
            .and_then(|bytes| written(&bytes)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_picture_reads_back_from_its_png() {
        // 3 × 2 pixels: a red row over a half-transparent blue one.
        let rgba = [[255, 0, 0, 255]; 3]
            .into_iter()
            .chain([[0, 0, 255, 128]; 3])
            .flatten()
            .collect::<Vec<u8>>();
        let bytes = encode_png(3, 2, &rgba).expect("encoded");
        let decoder = png::Decoder::new(std::io::Cursor::new(bytes));
        let mut reader = decoder.read_info().expect("a PNG");
        let mut buf = vec![0; reader.output_buffer_size().expect("size")];
        let info = reader.next_frame(&mut buf).expect("a frame");
        assert_eq!((info.width, info.height), (3, 2));
        assert_eq!(&buf[..info.buffer_size()], &rgba[..]);
        assert!(encode_png(0, 2, &[]).is_err());
        assert!(encode_png(3, 2, &rgba[4..]).is_err());
    }

    #[test]
    fn a_missing_extension_is_added_and_a_given_one_kept() {
        assert_eq!(
            with_extension(Path::new("/tmp/a"), ExportKind::Csv),
            Path::new("/tmp/a.csv")
        );
        assert_eq!(
            with_extension(Path::new("/tmp/a.txt"), ExportKind::Csv),
            Path::new("/tmp/a.txt")
        );
    }
}
