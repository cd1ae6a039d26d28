//! The help overlay, generated from the key table, with the cautions every view carries.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Clear, Paragraph, Wrap};

use super::framed;
use crate::tui::keymap::BINDINGS;
use crate::tui::theme::Theme;

/// Draws the help overlay centred over `area`.
pub fn render(frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let width = area.width.saturating_sub(4).min(76);
    let height = area.height.saturating_sub(2).min(BINDINGS.len() as u16 + 9);
    let popup = Rect {
        x: area.x + (area.width - width) / 2,
        y: area.y + (area.height - height) / 2,
        width,
        height,
    };
    let mut lines: Vec<Line<'_>> = BINDINGS
        .iter()
        .map(|b| {
            Line::from(vec![
                Span::styled(format!("{:>10}  ", b.key_label), theme.key()),
                Span::raw(b.description),
            ])
        })
        .collect();
    lines.push(Line::raw(""));
    lines.push(Line::styled(
        "While filtering: type to narrow the catalogue, Enter keeps the filter, Esc drops it.",
        theme.muted(),
    ));
    lines.push(Line::styled(
        "Ratings and vectors are personal data; nothing leaves this machine. Explanations",
        theme.muted(),
    ));
    lines.push(Line::styled(
        "describe the model's arithmetic, not people's motives or traits.",
        theme.muted(),
    ));
    frame.render_widget(Clear, popup);
    frame.render_widget(
        Paragraph::new(lines)
            .wrap(Wrap { trim: false })
            .block(framed(" Keys · ? or Esc to close ".into(), true, theme)),
        popup,
    );
}
