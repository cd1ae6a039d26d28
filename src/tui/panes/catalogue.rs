//! The catalogue: every item (or those matching the filter), virtualised: only the visible
//! window of rows is built each frame.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;

use super::{fit, framed, inner, window_start};
use crate::tui::app::{App, Order, Pane};
use crate::tui::theme::Theme;

/// Draws the catalogue pane.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let order = match app.order {
        Order::Title => "title",
        Order::Category => "category",
        Order::Ratings => "ratings",
    };
    let shown = if app.filter.is_empty() {
        format!(" Catalogue · {} items · by {order} ", app.visible.len())
    } else {
        format!(
            " Catalogue · {} of {} match '{}' ",
            app.visible.len(),
            app.model.ratings.items.len(),
            app.filter
        )
    };
    let block = framed(shown, app.focus == Pane::Catalogue, theme);
    let body = inner(area);
    frame.render_widget(block, area);
    let height = body.height as usize;
    let width = body.width as usize;
    let start = window_start(app.catalogue_selected, app.visible.len(), height);
    let lines: Vec<Line<'_>> = app.visible[start..(start + height).min(app.visible.len())]
        .iter()
        .enumerate()
        .map(|(offset, &j)| {
            let count = format!("{:>5}", app.item_counts[j as usize]);
            let category = app.category(j).unwrap_or("");
            let id = sextant::text::escaped(app.model.ratings.items.name(j));
            // id, space, title, " " + 12-wide category, 5-wide count.
            let title_width = width.saturating_sub(id.len() + 1 + 13 + count.len());
            let mark = if app.has_note(j) { "✎" } else { " " };
            let title_width = title_width.saturating_sub(1);
            let mut spans = vec![
                Span::styled(format!("{id}{mark}"), theme.muted()),
                Span::raw(format!("{:<title_width$}", fit(app.title(j), title_width))),
                Span::styled(format!(" {:<12}", fit(category, 12)), theme.category()),
                Span::styled(count, theme.muted()),
            ];
            if start + offset == app.catalogue_selected {
                spans = spans
                    .into_iter()
                    .map(|s| s.patch_style(theme.selected()))
                    .collect();
            }
            Line::from(spans)
        })
        .collect();
    let text = if lines.is_empty() {
        vec![Line::styled("no item matches the filter", theme.muted())]
    } else {
        lines
    };
    frame.render_widget(Paragraph::new(text), body);
}
