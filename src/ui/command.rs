//! What panels ask for. Panels never change the document, the run or the settings directly:
//! they return [`Command`]s, which the app applies once at the end of the frame. Scenario
//! changes are [`Edit`]s (the core's `scenario::edit`), checked before they reach the
//! document, so the document always holds a valid scenario.

use std::path::PathBuf;

use crate::scenario::{Address, Edit};

use crate::ui::analysis::AnalysisCommand;
use crate::ui::dialogs::export::ExportKind;
use crate::ui::state::prefs::{LowerPlot, Speed, ThemeChoice};

/// One thing a panel wants done.
#[must_use]
#[derive(Debug, Clone, PartialEq)]
pub enum Command {
    /// Change the scenario. Edits that would make it invalid are refused with the reason.
    Edit(Edit),
    /// A typed entry, complete (Enter or its field left): applied like [`Command::Edit`], and
    /// always its own undo step however quickly the next one follows.
    Entry(Edit),

    /// Start a new scenario from the default cell (asks first when there are unsaved changes).
    New,
    /// Choose a scenario file to open (asks first when there are unsaved changes).
    Open,
    /// Open this file (asks first when there are unsaved changes).
    OpenPath(PathBuf),
    /// Open the file typed into the path field of an Open that already asked about unsaved
    /// changes (the typed-path twin of a file chosen in the native dialog).
    OpenChosen(PathBuf),
    /// Open a bundled example by file name (asks first when there are unsaved changes).
    OpenExample(String),
    /// Save to the present file, or ask for one.
    Save,
    /// Choose a file and save to it.
    SaveAs,
    /// Save to this file and make it the present file.
    SaveTo(PathBuf),
    /// Show the field where a path can be typed (used when no file dialog can be shown).
    TypePath(FilePurpose),
    /// Answer to "unsaved changes": save first (`true`) or discard them (`false`), then go on.
    Proceed {
        save_first: bool,
    },
    /// Close the open dialog without doing anything.
    Dismiss,

    /// Go back one step of scenario edits.
    Undo,
    /// Go forward again after an undo.
    Redo,

    /// Start or pause the run.
    RunPause,
    /// Start the run again from t = 0.
    Restart,
    /// How fast simulated time runs.
    SetSpeed(Speed),

    /// What the plot under the membrane potential shows.
    SetLowerPlot(LowerPlot),
    /// Width and height in pixels of the plots' PNG export.
    SetPngSize([u32; 2]),
    SetTheme(ThemeChoice),
    /// Scale the whole interface up for a projector.
    SetLargeText(bool),
    /// Show or hide the current–voltage view.
    SetShowIv(bool),
    /// Show or hide the About window.
    ShowAbout(bool),
    /// Close the window (asks first when there are unsaved changes).
    Quit,
    /// Show a short message in the status line (e.g. why a choice was refused).
    Notice(String),

    /// Presentation on or off: no editor, large text, run controls and big sliders.
    SetPresentation(bool),
    /// Add (`pinned: true`) or remove the big presentation slider of the number at `address`.
    Pin {
        address: Address,
        pinned: bool,
    },
    /// Show or hide the list of keyboard shortcuts.
    ShowShortcuts(bool),
    /// Choose a file and export to it.
    Export(ExportKind),
    /// Export to this file.
    ExportTo(ExportKind, PathBuf),
    /// Answer to the offer of the scenario a crashed session left: restore it (`true`) or
    /// discard it.
    Recover(bool),
    /// Kept traces, scans, dose–response and fits (runtime state of the analysis window;
    /// never part of the scenario or of undo).
    Analysis(AnalysisCommand),
    /// Stop the family of runs now being computed (until the next edit).
    CancelFamily,
}

/// What a file dialog or typed path is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FilePurpose {
    Open,
    Save,
    Export(ExportKind),
    /// A CSV of measured points for a fit.
    FitData,
}
