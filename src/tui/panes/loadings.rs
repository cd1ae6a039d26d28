//! The current item's factor values as signed horizontal bars around a centre line.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;

use super::{framed, inner};
use crate::tui::app::App;
use crate::tui::screens::items::ItemsPane;
use crate::tui::state::shared::factor_name;
use crate::tui::theme::Theme;

/// A bar of `value / scale` of `half` cells, drawn leftwards for negative values.
pub fn signed_bar(value: f64, scale: f64, half: usize) -> (String, String) {
    let cells = if scale > 0.0 {
        (value.abs() / scale * half as f64).round() as usize
    } else {
        0
    };
    let cells = cells.min(half);
    let bar = "█".repeat(cells);
    if value < 0.0 {
        (format!("{bar:>half$}"), " ".repeat(half))
    } else {
        (" ".repeat(half), format!("{bar:<half$}"))
    }
}

/// Fewest cells each half of a bar keeps when factor labels take a column.
const MIN_HALF: usize = 8;

/// Draws the loadings pane.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let s = &app.screens.items;
    let focused = s.focus == ItemsPane::Loadings;
    let note = s
        .current
        .and_then(|j| app.notes.current.item_note(app.shared.item_id(j)));
    let title = match note {
        Some(n) => format!(
            " Loadings · note: {} ",
            super::fit(n, area.width.saturating_sub(20) as usize)
        ),
        None => " Loadings · factor values of the current item ".to_owned(),
    };
    frame.render_widget(framed(title, focused, theme), area);
    let mut body = inner(area);
    let Some(j) = s.current else { return };
    if focused && body.width >= 60 {
        // Beside the bars: what the highlighted factor stands for.
        let [bars, meaning] = ratatui::layout::Layout::horizontal([
            ratatui::layout::Constraint::Percentage(55),
            ratatui::layout::Constraint::Percentage(45),
        ])
        .areas(body);
        body = bars;
        render_meaning(app, frame, meaning, theme);
    }
    let values = app.shared.model.factors.item(j);
    let scale = values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    // Curators' factor labels get a column of their own when there are any, as wide as
    // leaves each half of the bars at least MIN_HALF cells (the whole label is in the
    // meaning beside the bars, and in the help of the highlighted factor).
    let labels = &app.notes.current.factors;
    let room = (body.width as usize).saturating_sub(14 + 2 * MIN_HALF);
    let label_width = labels
        .iter()
        .filter(|(f, _)| **f <= values.len())
        .map(|(_, l)| l.chars().count())
        .max()
        .map_or(0, |w| w.min(14).min(room.saturating_sub(1)) + 1);
    let label_width = if label_width < 4 { 0 } else { label_width };
    let half = (body.width as usize).saturating_sub(14 + label_width) / 2;
    let height = body.height as usize;
    let start = s.factor_selected.saturating_sub(height.saturating_sub(1));
    let lines: Vec<Line<'_>> = values
        .iter()
        .enumerate()
        .skip(start)
        .take(height)
        .map(|(d, &v)| {
            let (left, right) = signed_bar(v, scale, half);
            let name = app.notes.current.factor_label(d + 1).unwrap_or("");
            let name = if label_width > 0 {
                format!("{:<w$}", super::fit(name, label_width - 1), w = label_width)
            } else {
                String::new()
            };
            let label = format!("f{:<3}{name}{:>+7.3} ", d + 1, v);
            let label = if d == s.factor_selected && focused {
                Span::styled(label, theme.selected())
            } else {
                Span::raw(label)
            };
            Line::from(vec![
                label,
                Span::styled(left, theme.negative()),
                Span::styled("│", theme.muted()),
                Span::styled(right, theme.positive()),
            ])
        })
        .collect();
    frame.render_widget(Paragraph::new(lines), body);
}

/// The items loading most positively and most negatively on the highlighted factor.
fn render_meaning(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let width = area.width as usize;
    let s = &app.screens.items;
    let (top, bottom) = &s.factor_extremes;
    let row = |&(j, v): &(u32, f64)| {
        Line::raw(format!(
            "{v:>+6.2} {}",
            super::fit(app.title(j), width.saturating_sub(8))
        ))
    };
    let heading = format!(
        "{} — most positive:",
        factor_name(&app.notes.current, s.factor_selected + 1)
    );
    let favours = |list: &[String]| {
        if list.is_empty() {
            None
        } else {
            Some(Line::styled(
                super::fit(&format!("  over-represented: {}", list.join(", ")), width),
                theme.category(),
            ))
        }
    };
    let mut lines = vec![Line::styled(heading, theme.positive())];
    lines.extend(favours(&s.factor_favours.0));
    lines.extend(top.iter().map(row));
    lines.push(Line::styled("most negative:", theme.negative()));
    lines.extend(favours(&s.factor_favours.1));
    lines.extend(bottom.iter().map(row));
    frame.render_widget(Paragraph::new(lines), area);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bars_point_the_right_way() {
        assert_eq!(
            signed_bar(1.0, 1.0, 4),
            ("    ".to_owned(), "████".to_owned())
        );
        assert_eq!(
            signed_bar(-0.5, 1.0, 4),
            ("  ██".to_owned(), "    ".to_owned())
        );
        assert_eq!(signed_bar(0.0, 0.0, 2), ("  ".to_owned(), "  ".to_owned()));
    }
}
