//! The current item's nearest items, with both measures. The title gets the room; the
//! category column goes first when the pane is narrow.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;
use sextant::index::Metric;

use super::{fit, framed, inner, padded, row, window_start};
use crate::tui::app::App;
use crate::tui::screens::items::ItemsPane;
use crate::tui::theme::Theme;

/// Fewest characters a title keeps before the category column is dropped.
const TITLE_ROOM: usize = 20;

/// Draws the neighbours pane.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let s = &app.screens.items;
    let metric = match s.metric {
        Metric::Euclidean => "euclidean",
        Metric::Cosine => "cosine",
    };
    let room = (area.width as usize).saturating_sub(30).max(12);
    let title = match s.current {
        Some(j) if app.deferred.neighbours => {
            format!(" Nearest to {} · updating… ", fit(app.title(j), room))
        }
        Some(j) => format!(
            " Nearest {} to {} · {metric} ",
            s.k,
            fit(app.title(j), room)
        ),
        None => " Nearest items ".to_owned(),
    };
    let focused = s.focus == ItemsPane::Neighbours;
    frame.render_widget(framed(title, focused, theme), area);
    let body = inner(area);
    let width = body.width as usize;
    let height = (body.height as usize).saturating_sub(1);
    let mut lines = vec![Line::styled(
        format!("{:>3} {:>8} {:>7}  item", "#", "distance", "cosine"),
        theme.muted(),
    )];
    // "#", distance, cosine and the mark take 22 columns.
    let with_category = width.saturating_sub(22 + 13) >= TITLE_ROOM;
    let title_width = width.saturating_sub(22 + if with_category { 13 } else { 0 });
    let start = window_start(s.neighbour_selected, s.neighbours.len(), height);
    for (offset, n) in s.neighbours.iter().enumerate().skip(start).take(height) {
        let cos = n
            .near
            .cosine
            .map_or_else(|| "–".to_owned(), |c| format!("{c:.3}"));
        let flagged = s.current.is_some_and(|j| app.is_flagged(j, n.item));
        let mark = if flagged {
            "✗"
        } else if app.has_note(n.item) {
            "✎"
        } else {
            " "
        };
        let mut spans = vec![
            Span::raw(format!(
                "{:>3} {:>8.4} {cos:>7} {mark}",
                offset + 1,
                n.near.distance
            )),
            Span::raw(padded(app.title(n.item), title_width)),
        ];
        if with_category {
            spans.push(Span::styled(
                format!(" {}", fit(app.category(n.item).unwrap_or(""), 12)),
                theme.category(),
            ));
        }
        lines.push(row(spans, focused && offset == s.neighbour_selected, theme));
    }
    frame.render_widget(Paragraph::new(lines), body);
}
