//! The bottom line: the line being typed, a message when there is one, otherwise the keys
//! that work here (from the key tables of the current context, as many as fit).

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;

use crate::tui::app::{App, Mode, Prompt};
use crate::tui::keymap::hints;
use crate::tui::theme::Theme;

/// Draws the status line.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let line = match app.mode {
        Mode::Search => Line::from(vec![
            Span::styled("find: ", theme.key()),
            Span::raw(sextant::text::escaped(&app.screens.items.catalogue.filter).into_owned()),
            Span::styled("▏", theme.key()),
            Span::styled("   Enter keep · Esc drop", theme.muted()),
        ]),
        Mode::Prompt => {
            let (label, done) = match &app.prompt {
                Prompt::Member => ("member id: ".to_owned(), "Enter open"),
                Prompt::ItemNote(j) => (
                    format!("note on {}: ", super::fit(app.title(*j), 30)),
                    "Enter save (empty removes)",
                ),
                Prompt::FactorLabel(f) => (
                    format!("label of factor {}: ", f + 1),
                    "Enter save (empty removes)",
                ),
                Prompt::NotesDir => ("save the notes in directory: ".to_owned(), "Enter save"),
                Prompt::ReplacePlain(name) => (
                    format!("{} exists; replace it? ", super::fit(name, 40)),
                    "y replaces, any other key keeps it",
                ),
            };
            Line::from(vec![
                Span::styled(label, theme.key()),
                Span::raw(sextant::text::escaped(&app.prompt_input).into_owned()),
                Span::styled("▏", theme.key()),
                Span::styled(format!("   {done} · Esc cancel"), theme.muted()),
            ])
        }
        _ if !app.status.is_empty() => Line::styled(
            sextant::text::escaped(&app.status).into_owned(),
            theme.warning(),
        ),
        _ => {
            let mut spans = Vec::new();
            let mut used = 0;
            for (key, hint) in hints(app.context()) {
                let width = key.chars().count() + hint.chars().count() + 3;
                if used + width > area.width as usize {
                    break;
                }
                used += width;
                spans.push(Span::styled(key, theme.key()));
                spans.push(Span::styled(format!(" {hint}  "), theme.muted()));
            }
            Line::from(spans)
        }
    };
    frame.render_widget(Paragraph::new(line), area);
}
