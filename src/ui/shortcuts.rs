//! Keyboard shortcuts and the overlay that lists them (F1 or `?`). One table drives both, so the
//! list cannot drift from what the keys do. Keys without Ctrl (Space, `?`) and undo/redo act
//! only when no text field has the keyboard, so they never take a character or a text field's
//! own undo from the user.

use egui::{Context, Event, Id, Key, Modal, Modifiers, RichText, Ui};

use crate::ui::analysis::AnalysisCommand;
use crate::ui::command::Command;

/// What a key does.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Action {
    RunPause,
    Restart,
    Undo,
    Redo,
    Save,
    SaveAs,
    Open,
    Presentation,
    /// Esc: closes what is on top (a dialog, the key list, About), else leaves presentation.
    Close,
    Shortcuts,
    KeepTrace,
    Analysis,
}

struct Binding {
    action: Action,
    /// Key combinations, the more specific first (Ctrl+Shift+S before Ctrl+S).
    keys: &'static [(Modifiers, Key)],
    /// What the overlay shows for the keys.
    shown: &'static str,
    what: &'static str,
    /// Acts only while no text field has the keyboard.
    outside_text: bool,
}

const CTRL: Modifiers = Modifiers::COMMAND;
const CTRL_SHIFT: Modifiers = Modifiers {
    shift: true,
    ..Modifiers::COMMAND
};
const NONE: Modifiers = Modifiers::NONE;

/// Every shortcut, in the order the overlay lists them. Specific combinations come before the
/// ones they contain, because egui matches Shift loosely.
const BINDINGS: &[Binding] = &[
    Binding {
        action: Action::RunPause,
        keys: &[(NONE, Key::Space), (NONE, Key::F5)],
        shown: "Space or F5",
        what: "Run or pause",
        outside_text: true,
    },
    Binding {
        action: Action::Restart,
        keys: &[(CTRL, Key::R)],
        shown: "Ctrl+R",
        what: "Restart at t = 0",
        outside_text: false,
    },
    Binding {
        action: Action::Redo,
        keys: &[(CTRL_SHIFT, Key::Z), (CTRL, Key::Y)],
        shown: "Ctrl+Shift+Z or Ctrl+Y",
        what: "Redo",
        outside_text: true,
    },
    Binding {
        action: Action::Undo,
        keys: &[(CTRL, Key::Z)],
        shown: "Ctrl+Z",
        what: "Undo the last change to the scenario",
        outside_text: true,
    },
    Binding {
        action: Action::SaveAs,
        keys: &[(CTRL_SHIFT, Key::S)],
        shown: "Ctrl+Shift+S",
        what: "Save as…",
        outside_text: false,
    },
    Binding {
        action: Action::Save,
        keys: &[(CTRL, Key::S)],
        shown: "Ctrl+S",
        what: "Save",
        outside_text: false,
    },
    Binding {
        action: Action::Open,
        keys: &[(CTRL, Key::O)],
        shown: "Ctrl+O",
        what: "Open a scenario",
        outside_text: false,
    },
    Binding {
        action: Action::KeepTrace,
        keys: &[(CTRL, Key::K)],
        shown: "Ctrl+K",
        what: "Keep the shown trace for comparison",
        outside_text: false,
    },
    Binding {
        action: Action::Analysis,
        keys: &[(CTRL, Key::L)],
        shown: "Ctrl+L",
        what: "Analysis window: compare, scan, dose–response, fit",
        outside_text: false,
    },
    Binding {
        action: Action::Presentation,
        keys: &[(NONE, Key::F11)],
        shown: "F11",
        what: "Presentation on or off",
        outside_text: false,
    },
    Binding {
        action: Action::Close,
        keys: &[(NONE, Key::Escape)],
        shown: "Esc",
        what: "Close a question, this list or About; leave presentation",
        outside_text: true,
    },
    Binding {
        action: Action::Shortcuts,
        keys: &[(NONE, Key::F1), (NONE, Key::Questionmark)],
        shown: "F1 or ?",
        what: "This list of keys",
        outside_text: false,
    },
];

/// What the keys depend on.
#[derive(Debug, Clone, Copy, Default)]
pub struct KeyContext {
    pub presenting: bool,
    /// The list of keys is on screen.
    pub overlay_open: bool,
    /// A dialog waits for an answer: keys must not act behind it (Esc cancels it).
    pub dialog_open: bool,
    /// The offer to restore a crashed session's scenario: only its buttons answer it.
    pub offer_open: bool,
    /// The About window is open.
    pub about_open: bool,
    /// The analysis window is open.
    pub analysis_open: bool,
}

/// Takes this frame's shortcut key presses out of the input (so no widget also acts on them)
/// and returns what they ask for. Call before the panels are drawn.
pub fn read(ctx: &Context, kc: KeyContext) -> Vec<Command> {
    let typing = ctx.egui_wants_keyboard_input();
    let mut out = Vec::new();
    ctx.input_mut(|i| {
        i.events.retain(|e| {
            let Event::Key {
                key,
                pressed: true,
                repeat,
                modifiers,
                ..
            } = e
            else {
                return true;
            };
            let Some(b) = BINDINGS.iter().find(|b| {
                b.keys
                    .iter()
                    .any(|(m, k)| k == key && modifiers.matches_logically(*m))
            }) else {
                return true;
            };
            if b.outside_text && typing {
                return true;
            }
            // Held keys repeat; a held Space must not start and stop the run over and over.
            if !*repeat && let Some(cmd) = command(b.action, kc) {
                out.push(cmd);
            }
            // Esc stays in the input: a field that just lost the keyboard to it must still see
            // that its entry was abandoned, not completed.
            b.action == Action::Close
        });
    });
    out
}

fn command(a: Action, kc: KeyContext) -> Option<Command> {
    // The modal layers, topmost first: Esc closes the top one, other keys wait behind it.
    if kc.offer_open {
        return None;
    }
    if kc.dialog_open {
        return (a == Action::Close).then_some(Command::Dismiss);
    }
    if kc.overlay_open {
        // F1 and `?` close the list too.
        return matches!(a, Action::Shortcuts | Action::Close).then_some(Command::ShowShortcuts(false));
    }
    if kc.about_open && a == Action::Close {
        return Some(Command::ShowAbout(false));
    }
    Some(match a {
        Action::RunPause => Command::RunPause,
        Action::Restart => Command::Restart,
        Action::Undo => Command::Undo,
        Action::Redo => Command::Redo,
        Action::Save => Command::Save,
        Action::SaveAs => Command::SaveAs,
        Action::Open => Command::Open,
        Action::Presentation => Command::SetPresentation(!kc.presenting),
        Action::Close if kc.presenting => Command::SetPresentation(false),
        Action::Close => return None,
        Action::Shortcuts => Command::ShowShortcuts(true),
        Action::KeepTrace => Command::Analysis(AnalysisCommand::Keep),
        Action::Analysis => Command::Analysis(AnalysisCommand::Show(!kc.analysis_open)),
    })
}

/// The overlay listing every key.
pub fn overlay(ui: &Ui, commands: &mut Vec<Command>) {
    let modal = Modal::new(Id::unique("permeant keys")).show(ui.ctx(), |ui| {
        ui.set_max_width(460.0);
        ui.heading("Keyboard shortcuts");
        ui.add_space(4.0);
        egui::Grid::new("keys grid")
            .num_columns(2)
            .spacing([24.0, 6.0])
            .striped(true)
            .show(ui, |ui| {
                for b in BINDINGS {
                    ui.label(RichText::new(b.shown).monospace().strong());
                    ui.label(b.what);
                    ui.end_row();
                }
            });
        ui.add_space(4.0);
        ui.label(
            RichText::new("Space, ? and undo/redo work when no text field is being typed in.")
                .small()
                .weak(),
        );
        if ui.button("Close").clicked() {
            commands.push(Command::ShowShortcuts(false));
        }
    });
    if modal.should_close() {
        commands.push(Command::ShowShortcuts(false));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn no_key_combination_is_bound_twice() {
        let mut seen: Vec<(Modifiers, Key)> = Vec::new();
        for b in BINDINGS {
            for k in b.keys {
                assert!(!seen.contains(k), "{k:?} twice");
                seen.push(*k);
            }
        }
    }

    #[test]
    fn a_combination_reaches_its_own_binding_before_a_looser_one() {
        // egui ignores an extra Shift when matching, so Ctrl+Shift+S must be found as "Save as"
        // and Ctrl+Shift+Z as "Redo", not as Save and Undo.
        let find = |m: Modifiers, k: Key| {
            BINDINGS
                .iter()
                .find(|b| b.keys.iter().any(|(bm, bk)| *bk == k && m.matches_logically(*bm)))
                .map(|b| b.action)
        };
        assert_eq!(find(CTRL_SHIFT, Key::S), Some(Action::SaveAs));
        assert_eq!(find(CTRL, Key::S), Some(Action::Save));
        assert_eq!(find(CTRL_SHIFT, Key::Z), Some(Action::Redo));
        assert_eq!(find(CTRL, Key::Z), Some(Action::Undo));
        assert_eq!(find(NONE, Key::Space), Some(Action::RunPause));
        assert_eq!(find(CTRL, Key::Space), None);
    }

    #[test]
    fn keys_wait_while_a_dialog_asks_and_the_overlay_only_closes() {
        let dialog = KeyContext {
            dialog_open: true,
            ..KeyContext::default()
        };
        assert_eq!(command(Action::RunPause, dialog), None);
        let overlay = KeyContext {
            overlay_open: true,
            ..KeyContext::default()
        };
        assert_eq!(command(Action::RunPause, overlay), None);
        assert_eq!(
            command(Action::Shortcuts, overlay),
            Some(Command::ShowShortcuts(false))
        );
        assert_eq!(
            command(Action::Close, overlay),
            Some(Command::ShowShortcuts(false))
        );
        assert_eq!(command(Action::Close, dialog), Some(Command::Dismiss));
        assert_eq!(command(Action::Close, KeyContext::default()), None);
        let presenting = KeyContext {
            presenting: true,
            ..KeyContext::default()
        };
        assert_eq!(
            command(Action::Presentation, presenting),
            Some(Command::SetPresentation(false))
        );
    }
}
