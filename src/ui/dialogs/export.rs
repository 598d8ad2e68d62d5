//! Figures and data for sharing: the plot area as PNG (the pixels as drawn, from a screenshot
//! of the window), the figure as SVG (the same drawing as `permeant run --svg`), and the trace
//! as CSV whose header records the program version, the scenario title and the date and time.
//! Every file is written atomically: a failed export leaves no half-written file behind.

use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::sync::mpsc::{Receiver, TryRecvError, channel};
use std::time::SystemTime;

use egui::{ColorImage, Rect};

use crate::report::{csv, svg};
use crate::scenario::{Valid, write_atomic};

/// What to export.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ExportKind {
    /// The plot area as drawn on screen.
    Png,
    /// The membrane potential figure, as the command line draws it.
    Svg,
    /// The trace's samples, and those of the kept traces.
    Csv,
    /// The metrics table of the kept traces.
    MetricsCsv,
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
            ExportKind::Csv | ExportKind::MetricsCsv => "csv",
        }
    }

    /// The menu entry.
    pub fn menu_label(self) -> &'static str {
        match self {
            ExportKind::Png => "Plots as PNG image…",
            ExportKind::Svg => "Membrane potential figure as SVG…",
            ExportKind::Csv => "Traces (current and kept) as CSV table…",
            ExportKind::MetricsCsv => "Kept-trace metrics as CSV table…",
        }
    }

    /// The title of the file dialog or of the typed-path dialog.
    pub fn title(self) -> &'static str {
        match self {
            ExportKind::Png => "Export the plots as PNG",
            ExportKind::Svg => "Export the figure as SVG",
            ExportKind::Csv => "Export the traces as CSV",
            ExportKind::MetricsCsv => "Export the metrics table as CSV",
        }
    }

    /// The kind of file, for a file dialog's filter.
    pub fn file_kind(self) -> &'static str {
        match self {
            ExportKind::Png => "PNG image",
            ExportKind::Svg => "SVG figure",
            ExportKind::Csv | ExportKind::MetricsCsv => "CSV table",
        }
    }

    /// The file name a dialog proposes.
    pub fn default_file_name(self) -> String {
        let stem = match self {
            ExportKind::Png => "plots",
            ExportKind::Svg => "figure",
            ExportKind::Csv => "trace",
            ExportKind::MetricsCsv => "metrics",
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
    /// The kept traces, exported with the current one.
    pub kept: Vec<csv::NamedTrace<'a>>,
    /// The metrics table of the kept traces as CSV.
    pub metrics_csv: String,
}

/// The SVG figure of the shown trace.
pub fn svg_text(shown: &Shown) -> Result<String, String> {
    let mut fig = svg::figure_for(shown.scenario, shown.t_ms, shown.v_mv).map_err(|e| e.to_string())?;
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

/// The part of a screenshot under `rect` (points) as PNG bytes. The rectangle is clamped to the
/// image, so a window resized between the request and the answer still gives a picture.
pub fn png_bytes(image: &ColorImage, rect: Rect, pixels_per_point: f32) -> Result<Vec<u8>, String> {
    let [w_img, h_img] = image.size;
    let px = |v: f32, max: usize| ((v * pixels_per_point).round().max(0.0) as usize).min(max);
    let (x0, x1) = (px(rect.min.x, w_img), px(rect.max.x, w_img));
    let (y0, y1) = (px(rect.min.y, h_img), px(rect.max.y, h_img));
    if x1 <= x0 || y1 <= y0 {
        return Err("the plot area is not on screen".into());
    }
    let (w, h) = (x1 - x0, y1 - y0);
    let mut rgba = Vec::with_capacity(w * h * 4);
    for y in y0..y1 {
        let row = &image.pixels[y * w_img + x0..y * w_img + x1];
        for c in row {
            rgba.extend_from_slice(&c.to_srgba_unmultiplied());
        }
    }
    let mut out = Vec::new();
    {
        let too_big = |_| "the plot area is too large for a PNG".to_string();
        let mut enc = png::Encoder::new(
            &mut out,
            u32::try_from(w).map_err(too_big)?,
            u32::try_from(h).map_err(too_big)?,
        );
        enc.set_color(png::ColorType::Rgba);
        enc.set_depth(png::BitDepth::Eight);
        let mut writer = enc.write_header().map_err(|e| e.to_string())?;
        writer.write_image_data(&rgba).map_err(|e| e.to_string())?;
        writer.finish().map_err(|e| e.to_string())?;
    }
    Ok(out)
}

/// A PNG export waiting for its screenshot.
struct PngJob {
    path: PathBuf,
    image: Receiver<Arc<ColorImage>>,
}

/// Exports in progress (only a PNG has to wait: for the next frame to be painted).
#[derive(Default)]
pub struct Exporter {
    png: Option<PngJob>,
}

impl Exporter {
    /// Whether a screenshot is awaited.
    pub fn is_waiting(&self) -> bool {
        self.png.is_some()
    }

    /// Exports to `path`. SVG and CSV are written at once and their outcome returned; a PNG
    /// asks for a screenshot of the next painted frame (after the dialog that chose the file
    /// has gone) and is finished by [`Exporter::poll`].
    pub fn start(
        &mut self,
        kind: ExportKind,
        path: &Path,
        shown: &Shown,
        ctx: &egui::Context,
    ) -> Option<Result<String, String>> {
        let path = with_extension(path, kind);
        let written = |bytes: &[u8]| {
            write_atomic(&path, bytes)
                .map(|()| format!("Exported {}", path.display()))
                .map_err(|e| format!("Could not export to {}: {e}", path.display()))
        };
        match kind {
            ExportKind::Svg => Some(
                svg_text(shown)
                    .map_err(|e| format!("Could not draw the figure: {e}"))
                    .and_then(|text| written(text.as_bytes())),
            ),
            ExportKind::Csv => Some(written(csv_text(shown, SystemTime::now()).as_bytes())),
            ExportKind::MetricsCsv => Some(written(shown.metrics_csv.as_bytes())),
            ExportKind::Png => {
                let (tx, rx) = channel();
                let repaint = ctx.clone();
                ctx.request_screenshot(move |image| {
                    let _ = tx.send(image);
                    repaint.request_repaint();
                });
                self.png = Some(PngJob { path, image: rx });
                None
            }
        }
    }

    /// Finishes a PNG export once its screenshot has arrived: crops it to `plot_rect` (points)
    /// and writes the file.
    pub fn poll(&mut self, plot_rect: Rect, pixels_per_point: f32) -> Option<Result<String, String>> {
        let job = self.png.as_ref()?;
        let image = match job.image.try_recv() {
            Ok(image) => image,
            Err(TryRecvError::Empty) => return None,
            Err(TryRecvError::Disconnected) => {
                let job = self.png.take()?;
                return Some(Err(format!(
                    "Could not export to {}: no screenshot could be taken of the window",
                    job.path.display()
                )));
            }
        };
        let job = self.png.take()?;
        let path = &job.path;
        Some(
            png_bytes(&image, plot_rect, pixels_per_point)
                .and_then(|bytes| write_atomic(path, &bytes).map_err(|e| e.to_string()))
                .map(|()| format!("Exported {}", path.display()))
                .map_err(|e| format!("Could not export to {}: {e}", path.display())),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use egui::{Color32, pos2};

    #[test]
    fn the_png_is_the_plot_rectangle_in_pixels() {
        // A 40×30 pixel window at 2 pixels per point: left half red, right half blue.
        let pixels = (0..30)
            .flat_map(|_| (0..40).map(|x| if x < 20 { Color32::RED } else { Color32::BLUE }))
            .collect();
        let image = ColorImage::new([40, 30], pixels);
        let rect = Rect::from_min_max(pos2(5.0, 2.0), pos2(15.0, 12.0));
        let bytes = png_bytes(&image, rect, 2.0).expect("encoded");
        let decoder = png::Decoder::new(std::io::Cursor::new(bytes));
        let mut reader = decoder.read_info().expect("a PNG");
        let mut buf = vec![0; reader.output_buffer_size().expect("size")];
        let info = reader.next_frame(&mut buf).expect("a frame");
        assert_eq!((info.width, info.height), (20, 20));
        let px = |x: usize, y: usize| &buf[(y * 20 + x) * 4..(y * 20 + x) * 4 + 4];
        // Pixel columns 10..30 of the window: 10 red ones, then 10 blue ones.
        assert_eq!(px(0, 0), [255, 0, 0, 255]);
        assert_eq!(px(9, 19), [255, 0, 0, 255]);
        assert_eq!(px(10, 0), [0, 0, 255, 255]);
        // A rectangle reaching past the window is cut at its edge; one outside it is refused.
        let past = Rect::from_min_max(pos2(10.0, 10.0), pos2(100.0, 100.0));
        assert!(png_bytes(&image, past, 2.0).is_ok());
        let outside = Rect::from_min_max(pos2(50.0, 50.0), pos2(60.0, 60.0));
        assert!(png_bytes(&image, outside, 2.0).is_err());
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
