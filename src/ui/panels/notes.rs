//! The side panel's notes: a scenario's notes beside the plots as formatted text (headings, list
//! items, *emphasis* and **strong** text, read by [`crate::notes::parse`]), and a plain text
//! field to write them. The side panel holds the current–voltage view and the notes as two tabs,
//! so the plots keep their width.

use egui::text::LayoutJob;
use egui::{Align, FontSelection, RichText, ScrollArea, TextEdit, TextStyle, Ui};

use crate::notes::{Block, Span};
use crate::scenario::Edit;
use crate::scenario::Scenario;
use crate::ui::command::Command;

/// Which tab of the side panel is open.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SideTab {
    #[default]
    Iv,
    Notes,
    /// The family of runs: measured against the varied value.
    Family,
}

/// The side panel's state.
#[derive(Debug, Default)]
pub struct Side {
    pub tab: SideTab,
    /// The notes show as the plain text field rather than formatted.
    pub editing: bool,
}

impl Side {
    /// A scenario was opened: its notes come first when it has any.
    pub fn document_loaded(&mut self, s: &Scenario) {
        self.tab = if s.notes.trim().is_empty() {
            SideTab::Iv
        } else {
            SideTab::Notes
        };
        self.editing = false;
    }
}

/// The tab strip at the top of the side panel.
pub fn tabs(ui: &mut Ui, side: &mut Side, has_family: bool) {
    if !has_family && side.tab == SideTab::Family {
        side.tab = SideTab::Iv;
    }
    // Wrapped: a narrow side panel (large text) puts a tab on a second row.
    ui.horizontal_wrapped(|ui| {
        let mut list = vec![(SideTab::Iv, "Current–voltage"), (SideTab::Notes, "Notes")];
        if has_family {
            list.push((SideTab::Family, "Family"));
        }
        for (tab, label) in list {
            if ui
                .selectable_label(side.tab == tab, RichText::new(label).strong())
                .clicked()
            {
                side.tab = tab;
            }
        }
    });
    ui.separator();
}

/// The notes tab: formatted notes, or the text field while editing.
pub fn show(ui: &mut Ui, side: &mut Side, s: &Scenario, commands: &mut Vec<Command>) {
    ui.horizontal(|ui| {
        let label = if side.editing { "Done" } else { "Edit notes" };
        if ui
            .button(label)
            .on_hover_text("Notes are plain text: # heading, - list item, *emphasis*, **strong**")
            .clicked()
        {
            side.editing = !side.editing;
        }
    });
    ScrollArea::vertical().auto_shrink([false, false]).show(ui, |ui| {
        if side.editing {
            let mut text = s.notes.clone();
            let edit = ui.add(
                TextEdit::multiline(&mut text)
                    .desired_width(f32::INFINITY)
                    .desired_rows(18)
                    .hint_text("# What this shows\n- what to change\n- what to watch"),
            );
            ui.ctx()
                .accesskit_node_builder(edit.id, |n| n.set_label("Notes text".to_string()));
            if edit.changed() && text != s.notes {
                commands.push(Command::Edit(Edit::Notes(text)));
            }
        } else if s.notes.trim().is_empty() {
            ui.label(RichText::new("This scenario has no notes.").weak());
        } else {
            render(ui, &crate::notes::parse(&s.notes));
        }
    });
}

/// Draws parsed notes.
pub fn render(ui: &mut Ui, blocks: &[Block]) {
    let body = TextStyle::Body.resolve(ui.style()).size;
    for (k, b) in blocks.iter().enumerate() {
        match b {
            Block::Heading { level, spans } => {
                if k > 0 {
                    ui.add_space(body * 0.5);
                }
                let size = match level {
                    1 => TextStyle::Heading.resolve(ui.style()).size,
                    2 => body * 1.15,
                    _ => body,
                };
                ui.label(job(ui, spans, |r| r.size(size).strong()));
            }
            Block::Item(spans) => {
                ui.horizontal_top(|ui| {
                    ui.label("•");
                    ui.vertical(|ui| ui.label(job(ui, spans, |r| r)));
                });
            }
            Block::Paragraph(spans) => {
                ui.label(job(ui, spans, |r| r));
                ui.add_space(body * 0.3);
            }
        }
    }
}

/// One block's spans as a wrapping text layout; `base` styles every span of the block.
fn job(ui: &Ui, spans: &[Span], base: impl Fn(RichText) -> RichText) -> LayoutJob {
    let mut job = LayoutJob::default();
    for sp in spans {
        let mut r = base(RichText::new(sp.text.as_str()));
        if sp.strong {
            r = r.strong();
        }
        if sp.emphasis {
            r = r.italics();
        }
        r.append_to(&mut job, ui.style(), FontSelection::Default, Align::Center);
    }
    job
}
