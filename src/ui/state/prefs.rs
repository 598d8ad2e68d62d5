//! What the window remembers between sessions, apart from scenarios: view preferences
//! (`prefs.ron`) and the recently opened files (`recent.ron`), both in the platform's data
//! directory. Undo history and traces are never saved.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Deserializer, Serialize};

use crate::scenario::Address;

/// Light, dark, or whatever the desktop uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum ThemeChoice {
    #[default]
    System,
    Light,
    Dark,
}

/// What the plot under the membrane potential shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum LowerPlot {
    /// Each species' current, the pump current and the net current.
    #[default]
    Currents,
    /// Each species' total permeability (resting, gated, scaled and blocked).
    Permeabilities,
    /// Every gate's open fraction.
    Gates,
    /// Each species' inside concentration, when inside concentrations are tracked.
    Concentrations,
    /// The relative volume of a cell whose volume is tracked.
    Volume,
    /// Inside and bath osmolarity of a cell whose volume is tracked.
    Osmolarity,
}

impl LowerPlot {
    pub const ALL: [LowerPlot; 6] = [
        LowerPlot::Currents,
        LowerPlot::Permeabilities,
        LowerPlot::Gates,
        LowerPlot::Concentrations,
        LowerPlot::Volume,
        LowerPlot::Osmolarity,
    ];
    /// Whether this view has anything to show for a cell whose volume is fixed.
    pub fn needs_tracked_volume(self) -> bool {
        matches!(self, LowerPlot::Volume | LowerPlot::Osmolarity)
    }
    pub fn label(self) -> &'static str {
        match self {
            LowerPlot::Currents => "Currents",
            LowerPlot::Permeabilities => "Permeabilities",
            LowerPlot::Gates => "Gates",
            LowerPlot::Concentrations => "Inside concentrations",
            LowerPlot::Volume => "Volume",
            LowerPlot::Osmolarity => "Osmolarity",
        }
    }
}

/// Simulated milliseconds per second of wall time, as fast as the machine allows, or chosen
/// from the run's length so that it finishes in a few seconds (the default).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
pub enum Speed {
    MsPerSecond(f64),
    Fastest,
    #[default]
    Auto,
}

/// Wall time an automatic speed gives a whole run, seconds: long enough to watch it unfold,
/// short enough that a one-minute or ten-minute run is not a wait.
pub const AUTO_RUN_S: f64 = 5.0;

impl Speed {
    pub const CHOICES: [Speed; 12] = [
        Speed::Auto,
        Speed::MsPerSecond(1.0),
        Speed::MsPerSecond(5.0),
        Speed::MsPerSecond(20.0),
        Speed::MsPerSecond(50.0),
        Speed::MsPerSecond(200.0),
        Speed::MsPerSecond(1000.0),
        Speed::MsPerSecond(5000.0),
        Speed::MsPerSecond(20000.0),
        // A minute per second and more: a cell's volume changes over minutes.
        Speed::MsPerSecond(60000.0),
        Speed::MsPerSecond(300000.0),
        Speed::Fastest,
    ];

    /// The speed in force for a run of `duration_ms`: "auto" becomes the slowest speed on a
    /// 1-2-5 ladder (in ms/s, s/s or min/s, whichever reads best) that shows the whole run
    /// within [`AUTO_RUN_S`] seconds.
    pub fn resolved(self, duration_ms: f64) -> Speed {
        match self {
            Speed::Auto => {
                let raw = (duration_ms / AUTO_RUN_S).max(1.0);
                let unit = if raw >= 60_000.0 {
                    60_000.0
                } else if raw >= 1_000.0 {
                    1_000.0
                } else {
                    1.0
                };
                let x = raw / unit;
                let decade = 10f64.powf(x.log10().floor());
                let m = [1.0, 2.0, 5.0, 10.0]
                    .into_iter()
                    .find(|m| m * decade >= x * (1.0 - 1e-12))
                    .unwrap_or(10.0);
                Speed::MsPerSecond(m * decade * unit)
            }
            s => s,
        }
    }

    /// The speed as written in a menu ("50 ms/s", "20 s/s", "2 min/s", "fastest", "auto").
    pub fn label(self) -> String {
        let n = crate::report::csv::number;
        match self {
            Speed::MsPerSecond(v) if v >= 60000.0 => format!("{} min/s", n(v / 60000.0)),
            Speed::MsPerSecond(v) if v >= 1000.0 => format!("{} s/s", n(v / 1000.0)),
            Speed::MsPerSecond(v) => format!("{} ms/s", n(v)),
            Speed::Fastest => "fastest".into(),
            Speed::Auto => "auto".into(),
        }
    }

    /// The label of the speed in force for a run of `duration_ms`: "auto (20 s/s)" for auto.
    pub fn label_for(self, duration_ms: f64) -> String {
        match self {
            Speed::Auto => format!("auto ({})", self.resolved(duration_ms).label()),
            s => s.label(),
        }
    }
}

/// View preferences. `#[serde(default)]` so that a file from an older version still loads.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Prefs {
    pub theme: ThemeChoice,
    pub large_text: bool,
    /// Not kept between sessions: a speed in ms/s suits runs of one length only, and one
    /// saved for a quarter-second demo would make a minute-long run take twenty minutes.
    /// Each session and each opened scenario start at "auto".
    #[serde(skip)]
    pub speed: Speed,
    pub lower_plot: LowerPlot,
    pub show_iv: bool,
    /// Inputs shown as big sliders in presentation, kept between sessions so a class can be
    /// prepared ahead. Saved as field paths of the scenario file (`species[0].outside_mm`); a
    /// path this version does not know is left out rather than losing every preference.
    #[serde(deserialize_with = "known_addresses")]
    pub pins: Vec<Address>,
    /// Width and height in pixels of the plots' PNG export.
    pub png_size_px: [u32; 2],
}

/// The PNG export's size until the user picks another: sharp on a slide or a page.
pub const DEFAULT_PNG_SIZE_PX: [u32; 2] = [1600, 900];

impl Default for Prefs {
    fn default() -> Self {
        Self {
            theme: ThemeChoice::System,
            large_text: false,
            speed: Speed::default(),
            lower_plot: LowerPlot::Currents,
            show_iv: true,
            pins: Vec::new(),
            png_size_px: DEFAULT_PNG_SIZE_PX,
        }
    }
}

/// The addresses among saved field paths, in order.
fn known_addresses<'de, D: Deserializer<'de>>(d: D) -> Result<Vec<Address>, D::Error> {
    let paths = Vec::<String>::deserialize(d)?;
    Ok(paths.iter().filter_map(|p| p.parse().ok()).collect())
}

/// How many recent files are kept.
pub const RECENT_MAX: usize = 10;

/// Where preferences live; `None` keeps everything in memory (tests, or no home directory).
#[derive(Debug, Clone, Default)]
pub struct Store {
    pub dir: Option<PathBuf>,
}

impl Store {
    /// The platform's data directory for permeant, if there is one (the autosave's too;
    /// `$PERMEANT_DATA_DIR` overrides it).
    pub fn platform() -> Store {
        Store {
            dir: crate::autosave::data_dir(),
        }
    }

    fn read<T: for<'de> Deserialize<'de>>(&self, name: &str) -> Option<T> {
        let path = self.dir.as_ref()?.join(name);
        let text = std::fs::read_to_string(path).ok()?;
        ron::from_str(&text).ok()
    }

    fn write<T: Serialize>(&self, name: &str, value: &T) -> Result<(), String> {
        let Some(dir) = &self.dir else { return Ok(()) };
        std::fs::create_dir_all(dir).map_err(|e| format!("{}: {e}", dir.display()))?;
        let text =
            ron::ser::to_string_pretty(value, ron::ser::PrettyConfig::new()).map_err(|e| e.to_string())?;
        let path = dir.join(name);
        crate::scenario::write_atomic(&path, text.as_bytes()).map_err(|e| format!("{}: {e}", path.display()))
    }

    pub fn load_prefs(&self) -> Prefs {
        self.read("prefs.ron").unwrap_or_default()
    }

    pub fn save_prefs(&self, p: &Prefs) -> Result<(), String> {
        self.write("prefs.ron", p)
    }

    pub fn load_recent(&self) -> Vec<PathBuf> {
        self.read("recent.ron").unwrap_or_default()
    }

    pub fn save_recent(&self, recent: &[PathBuf]) -> Result<(), String> {
        self.write("recent.ron", &recent)
    }
}

/// Puts `path` first in `recent`, without duplicates, keeping at most [`RECENT_MAX`].
pub fn remember(recent: &mut Vec<PathBuf>, path: &Path) {
    let path = std::fs::canonicalize(path).unwrap_or_else(|_| path.to_path_buf());
    recent.retain(|p| *p != path);
    recent.insert(0, path);
    recent.truncate(RECENT_MAX);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn auto_speed_shows_a_run_in_a_few_seconds() {
        let ms_per_s = |d: f64| match Speed::Auto.resolved(d) {
            Speed::MsPerSecond(v) => v,
            s => panic!("{s:?}"),
        };
        // 250 ms at 50 ms/s: 5 s; 60 s at 20 s/s: 3 s; 10 min at 2 min/s: 5 s.
        assert_eq!(ms_per_s(250.0), 50.0);
        assert_eq!(ms_per_s(60_000.0), 20_000.0);
        assert_eq!(ms_per_s(600_000.0), 120_000.0);
        for d in [1.0, 7.0, 250.0, 1234.0, 60_000.0, 600_000.0, 3_600_000.0] {
            let wall_s = d / ms_per_s(d);
            assert!(
                wall_s <= AUTO_RUN_S + 1e-9 && (d <= 5.0 || wall_s > 1.0),
                "{d} ms: {wall_s} s"
            );
        }
        assert_eq!(Speed::Auto.label_for(600_000.0), "auto (2 min/s)");
        assert_eq!(Speed::MsPerSecond(60_000.0).label(), "1 min/s");
        assert_eq!(Speed::MsPerSecond(5_000.0).label(), "5 s/s");
    }

    #[test]
    fn recent_files_keep_order_without_duplicates() {
        let mut r = Vec::new();
        for k in 0..12 {
            remember(&mut r, Path::new(&format!("/nonexistent/f{k}.ron")));
        }
        remember(&mut r, Path::new("/nonexistent/f5.ron"));
        assert_eq!(r.len(), RECENT_MAX);
        assert_eq!(r[0], Path::new("/nonexistent/f5.ron"));
        assert_eq!(r.iter().filter(|p| p.ends_with("f5.ron")).count(), 1);
        assert_eq!(r[1], Path::new("/nonexistent/f11.ron"));
    }

    #[test]
    fn prefs_and_recent_files_survive_a_restart() {
        let dir = tempfile::tempdir().expect("temporary directory");
        let store = Store {
            dir: Some(dir.path().join("nested")),
        };
        assert_eq!(store.load_prefs(), Prefs::default());
        let p = Prefs {
            large_text: true,
            theme: ThemeChoice::Dark,
            speed: Speed::Fastest,
            ..Prefs::default()
        };
        store.save_prefs(&p).expect("saved");
        store.save_recent(&[PathBuf::from("/a/b.ron")]).expect("saved");
        assert_eq!(
            store.load_prefs(),
            Prefs {
                speed: Speed::Auto,
                ..p
            }
        );
        assert_eq!(store.load_recent(), vec![PathBuf::from("/a/b.ron")]);
        // Pins are kept as the field paths of the file; one this version does not know is
        // dropped, the others and every other preference kept.
        std::fs::write(
            dir.path().join("nested/prefs.ron"),
            "(large_text: true, pins: [\"species[0].outside_mm\", \"species[0].colour\", \"protocol[2].dose_um\"])",
        )
        .expect("written");
        let read = store.load_prefs();
        assert!(read.large_text);
        let pins: Vec<String> = read.pins.iter().map(ToString::to_string).collect();
        assert_eq!(pins, ["species[0].outside_mm", "protocol[2].dose_um"]);
        // A speed saved by an older version is read past and not used.
        std::fs::write(
            dir.path().join("nested/prefs.ron"),
            "(large_text: true, speed: MsPerSecond(50.0))",
        )
        .expect("written");
        let old = store.load_prefs();
        assert!(old.large_text);
        assert_eq!(old.speed, Speed::Auto);
        store.save_prefs(&read).expect("saved");
        assert_eq!(store.load_prefs(), read);
        // A damaged file falls back to the defaults instead of failing.
        std::fs::write(dir.path().join("nested/prefs.ron"), "(theme: Purple").expect("written");
        assert_eq!(store.load_prefs(), Prefs::default());
    }
}
