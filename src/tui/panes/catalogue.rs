//! The catalogue: every item (or those matching the filter), virtualised: only the visible
//! window of rows is built each frame. The title gets the room; the category column goes
//! first when the pane is narrow.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;

use super::{framed, inner, padded, row, window_start};
use crate::tui::app::App;
use crate::tui::screens::items::ItemsPane;
use crate::tui::theme::Theme;

/// Fewest characters a title keeps before the category column is dropped.
const TITLE_ROOM: usize = 20;

/// Draws the catalogue pane.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let c = &app.screens.items.catalogue;
    let shown = if c.filter.is_empty() {
        format!(
            " Catalogue · {} items · by {} ",
            c.visible.len(),
            c.order.name()
        )
    } else {
        format!(
            " Catalogue · {} of {} match '{}' ",
            c.visible.len(),
            app.shared.model.ratings.items.len(),
            c.filter
        )
    };
    let block = framed(
        shown,
        app.screens.items.focus == ItemsPane::Catalogue,
        theme,
    );
    let body = inner(area);
    frame.render_widget(block, area);
    let height = body.height as usize;
    let width = body.width as usize;
    let start = window_start(c.selected, c.visible.len(), height);
    let window = &c.visible[start..(start + height).min(c.visible.len())];
    let id_width = window
        .iter()
        .map(|&j| {
            sextant::text::escaped(app.shared.item_id(j))
                .chars()
                .count()
        })
        .max()
        .unwrap_or(0);
    // id, mark, title, " " + category, " " + 5-wide count.
    let fixed = id_width + 1 + 6;
    let with_category = width.saturating_sub(fixed + 13) >= TITLE_ROOM;
    let title_width = width.saturating_sub(fixed + if with_category { 13 } else { 0 });
    let lines: Vec<Line<'_>> = window
        .iter()
        .enumerate()
        .map(|(offset, &j)| {
            let id = sextant::text::escaped(app.shared.item_id(j));
            let mark = if app.has_note(j) { "✎" } else { " " };
            let mut spans = vec![
                Span::styled(format!("{id:<id_width$}{mark}"), theme.muted()),
                Span::raw(padded(app.title(j), title_width)),
            ];
            if with_category {
                spans.push(Span::styled(
                    format!(" {}", padded(app.category(j).unwrap_or(""), 12)),
                    theme.category(),
                ));
            }
            spans.push(Span::styled(
                format!(" {:>5}", app.shared.item_counts[j as usize]),
                theme.muted(),
            ));
            row(spans, start + offset == c.selected, theme)
        })
        .collect();
    let text = if lines.is_empty() {
        vec![Line::styled("no item matches the filter", theme.muted())]
    } else {
        lines
    };
    frame.render_widget(Paragraph::new(text), body);
}
