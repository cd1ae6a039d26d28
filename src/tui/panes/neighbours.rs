//! The current item's nearest items, with both measures.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;
use sextant::index::Metric;

use super::{fit, framed, inner, window_start};
use crate::tui::app::{App, Pane};
use crate::tui::theme::Theme;

/// Draws the neighbours pane.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let metric = match app.metric {
        Metric::Euclidean => "euclidean",
        Metric::Cosine => "cosine",
    };
    let title = match app.current {
        Some(j) if app.deferred.neighbours => {
            format!(" Nearest to {} · updating… ", fit(app.title(j), 40))
        }
        Some(j) => format!(
            " Nearest {} to {} · {metric} ",
            app.k,
            fit(app.title(j), 40)
        ),
        None => " Nearest items ".to_owned(),
    };
    frame.render_widget(framed(title, app.focus == Pane::Neighbours, theme), area);
    let body = inner(area);
    let width = body.width as usize;
    let height = body.height as usize;
    let mut lines = vec![Line::styled(
        format!("{:>3} {:>8} {:>7}  item", "#", "distance", "cosine"),
        theme.muted(),
    )];
    let start = window_start(
        app.neighbour_selected,
        app.neighbours.len(),
        height.saturating_sub(1),
    );
    for (offset, row) in app
        .neighbours
        .iter()
        .enumerate()
        .skip(start)
        .take(height.saturating_sub(1))
    {
        let cos = row
            .cosine
            .map_or_else(|| "–".to_owned(), |c| format!("{c:.3}"));
        let category = app.category(row.item).unwrap_or("");
        let title_width = width.saturating_sub(24 + category.len().min(12));
        let flagged = app.current.is_some_and(|j| app.is_flagged(j, row.item));
        let mark = if flagged {
            "✗"
        } else if app.has_note(row.item) {
            "✎"
        } else {
            " "
        };
        let mut spans = vec![
            Span::raw(format!(
                "{:>3} {:>8.4} {cos:>7} {mark}",
                offset + 1,
                row.distance
            )),
            Span::raw(format!(
                "{:<title_width$}",
                fit(app.title(row.item), title_width)
            )),
            Span::styled(format!(" {}", fit(category, 12)), theme.category()),
        ];
        if offset == app.neighbour_selected && app.focus == Pane::Neighbours {
            spans = spans
                .into_iter()
                .map(|s| s.patch_style(theme.selected()))
                .collect();
        }
        lines.push(Line::from(spans));
    }
    frame.render_widget(Paragraph::new(lines), body);
}
