//! Panes used by more than one view, or by the frame itself (the item screen's three
//! panes, the help, the status line), and helpers every pane uses. Each draws from
//! `&App` and changes nothing. A screen's own drawing is in `screens/NAME/pane.rs`.

pub mod catalogue;
pub mod help;
pub mod loadings;
pub mod neighbours;
pub mod status_bar;

use ratatui::style::Style;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders};

use super::theme::Theme;

pub use super::layout::inner;

/// A bordered block with a title, highlighted when focused.
pub fn framed(title: String, focused: bool, theme: Theme) -> Block<'static> {
    Block::default()
        .borders(Borders::ALL)
        .border_style(theme.border(focused))
        .title(match sextant::text::escaped(&title) {
            std::borrow::Cow::Borrowed(_) => title,
            std::borrow::Cow::Owned(shown) => shown,
        })
        .title_style(theme.title())
}

/// First row of a window of `height` rows that keeps `selected` visible, roughly centred.
/// Drawing and mouse clicks both use it, so a click lands on the row drawn there.
pub fn window_start(selected: usize, len: usize, height: usize) -> usize {
    if len <= height || height == 0 {
        return 0;
    }
    selected.saturating_sub(height / 2).min(len - height)
}

/// Cuts `text` to `width` characters, marking the cut with an ellipsis. Control characters
/// (from ids, titles, categories, notes) are shown escaped, as `\x1b`, before the cut.
pub fn fit(text: &str, width: usize) -> String {
    let text = sextant::text::escaped(text);
    if text.chars().count() <= width {
        return text.into_owned();
    }
    let mut out: String = text.chars().take(width.saturating_sub(1)).collect();
    out.push('…');
    out
}

/// `text` cut or padded to exactly `width` characters.
pub fn padded(text: &str, width: usize) -> String {
    format!("{:<width$}", fit(text, width))
}

/// A row of spans, highlighted as a whole when `selected`.
pub fn row(spans: Vec<Span<'static>>, selected: bool, theme: Theme) -> Line<'static> {
    if selected {
        Line::from(
            spans
                .into_iter()
                .map(|s| s.patch_style(theme.selected()))
                .collect::<Vec<_>>(),
        )
    } else {
        Line::from(spans)
    }
}

/// A plain line of text, highlighted when `selected`.
pub fn text_row(text: String, selected: bool, theme: Theme) -> Line<'static> {
    if selected {
        Line::styled(text, theme.selected())
    } else {
        Line::styled(text, Style::new())
    }
}
