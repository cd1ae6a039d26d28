//! The bottom line: the filter prompt while typing, a message when there is one, otherwise
//! the keys that work here (from the key table).

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;

use crate::tui::app::{App, Mode};
use crate::tui::keymap::BINDINGS;
use crate::tui::theme::Theme;

/// Draws the status line.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let line = match app.mode {
        Mode::Search => Line::from(vec![
            Span::styled("find: ", theme.key()),
            Span::raw(app.filter.clone()),
            Span::styled("▏", theme.key()),
            Span::styled("   Enter keep · Esc drop", theme.muted()),
        ]),
        Mode::MemberPrompt => Line::from(vec![
            Span::styled("member id: ", theme.key()),
            Span::raw(app.member_input.clone()),
            Span::styled("▏", theme.key()),
            Span::styled("   Enter open · Esc cancel", theme.muted()),
        ]),
        _ if !app.status.is_empty() => Line::styled(app.status.clone(), theme.warning()),
        _ => {
            let mut spans = Vec::new();
            for b in BINDINGS.iter().filter(|b| !b.hint.is_empty()) {
                spans.push(Span::styled(b.key_label, theme.key()));
                spans.push(Span::styled(format!(" {}  ", b.hint), theme.muted()));
            }
            Line::from(spans)
        }
    };
    frame.render_widget(Paragraph::new(line), area);
}
