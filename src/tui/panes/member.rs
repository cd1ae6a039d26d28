//! The member screen: their ratings beside the model's predictions, their suggestions, and
//! the explanation of the highlighted item (built from this member's own ratings only).

use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;

use super::{fit, framed, inner, window_start};
use crate::tui::app::App;
use crate::tui::theme::Theme;

/// Draws the member screen.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let Some(m) = &app.member else {
        let text = vec![
            Line::raw(""),
            Line::raw(
                "  No member open. Press u and type a member id (for the demo, m0001 … m1500).",
            ),
            Line::styled(
                "  Ratings are personal data: look only at what your work needs.",
                theme.muted(),
            ),
        ];
        frame.render_widget(
            Paragraph::new(text).block(framed(" Member ".into(), true, theme)),
            area,
        );
        return;
    };
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(area);
    let [upper, lower] =
        Layout::vertical([Constraint::Percentage(45), Constraint::Percentage(55)]).areas(right);
    let train = m.rated.iter().filter(|r| !r.holdout).count();
    let order = if m.by_residual {
        "largest misses first"
    } else {
        "by title"
    };
    let title = match (&m.what_if, m.user) {
        (Some(_), Some(u)) => format!(
            " What-if from member {} · {} ratings · < > d edit, a add, w leave ",
            app.model.ratings.users.name(u),
            m.rated.len()
        ),
        (Some(_), None) => format!(
            " What-if · new profile · {} ratings · < > d edit, a add, w leave ",
            m.rated.len()
        ),
        (None, Some(u)) => format!(
            " Member {} · {train} training + {} held-out ratings · {order} ",
            app.model.ratings.users.name(u),
            m.rated.len() - train
        ),
        (None, None) => " Member ".to_owned(),
    };
    frame.render_widget(framed(title, !m.in_suggestions, theme), left);
    let mut body = inner(left);
    if let Some(w) = &m.what_if {
        // The folded-in vector, one small signed bar per factor, above the ratings.
        let rows = (w.vector.len() as u16 + 1).min(body.height / 2);
        let [vector_area, rest] =
            Layout::vertical([Constraint::Length(rows), Constraint::Min(0)]).areas(body);
        body = rest;
        let scale = w.vector.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        let half = (vector_area.width as usize).saturating_sub(14) / 2;
        let mut lines = vec![match &w.problem {
            Some(p) => Line::styled(fit(p, vector_area.width as usize), theme.warning()),
            None => Line::styled(
                "profile vector (one member step, items fixed):",
                theme.muted(),
            ),
        }];
        for (d, &v) in w
            .vector
            .iter()
            .enumerate()
            .take(rows.saturating_sub(1) as usize)
        {
            let (l, r) = super::loadings::signed_bar(v, scale, half);
            lines.push(Line::from(vec![
                Span::raw(format!("f{:<3}{v:>+7.3} ", d + 1)),
                Span::styled(l, theme.negative()),
                Span::styled("│", theme.muted()),
                Span::styled(r, theme.positive()),
            ]));
        }
        frame.render_widget(Paragraph::new(lines), vector_area);
    }
    let width = body.width as usize;
    let height = body.height as usize;
    let mut lines = vec![Line::styled(
        format!(
            "{:>6} {:>6} {:>4} {:>7}  item  (* held out)",
            "rated", "pred", "rnd", "resid"
        ),
        theme.muted(),
    )];
    let selected = if m.in_suggestions {
        usize::MAX
    } else {
        m.selected
    };
    let start = window_start(m.selected, m.rated.len(), height.saturating_sub(1));
    for (k, r) in m
        .rated
        .iter()
        .enumerate()
        .skip(start)
        .take(height.saturating_sub(1))
    {
        let mark = if r.holdout {
            "*"
        } else if app.has_note(r.item) {
            "✎"
        } else {
            " "
        };
        let text = format!(
            "{:>6} {:>6.2} {:>4} {:>+7.2}{mark} {}",
            r.actual,
            r.predicted,
            r.rounded,
            r.residual,
            fit(app.title(r.item), width.saturating_sub(29))
        );
        lines.push(if k == selected {
            Line::styled(text, theme.selected())
        } else {
            Line::raw(text)
        });
    }
    frame.render_widget(Paragraph::new(lines), body);

    frame.render_widget(
        framed(
            " Suggestions · unrated items, highest predicted first ".into(),
            m.in_suggestions,
            theme,
        ),
        upper,
    );
    let body = inner(upper);
    let mut lines = vec![Line::styled(
        format!("{:>3} {:>6} {:>5}  item", "#", "pred", "± sd"),
        theme.muted(),
    )];
    for (k, s) in m
        .suggestions
        .iter()
        .enumerate()
        .take((body.height as usize).saturating_sub(1))
    {
        let sd = s
            .predictive_sd
            .map_or_else(|| "–".to_owned(), |v| format!("{v:.2}"));
        let mark = if app.has_note(s.item) { "✎" } else { " " };
        let text = format!(
            "{:>3} {:>6.2} {sd:>5} {mark}{}",
            s.rank,
            s.predicted,
            fit(app.title(s.item), (body.width as usize).saturating_sub(19))
        );
        lines.push(if m.in_suggestions && k == m.selected {
            Line::styled(text, theme.selected())
        } else {
            Line::raw(text)
        });
    }
    frame.render_widget(Paragraph::new(lines), body);

    frame.render_widget(
        framed(" Why · the highlighted item ".into(), false, theme),
        lower,
    );
    let body = inner(lower);
    let Some(e) = &m.explanation else { return };
    let sd = e
        .predictive_sd
        .map_or_else(|| "undetermined".to_owned(), |v| format!("± {v:.2}"));
    let actual = e
        .actual
        .map_or_else(|| "not rated".to_owned(), |a| format!("rated {a}"));
    let mut lines = vec![
        Line::from(vec![Span::styled(
            fit(app.title(e.item), body.width as usize),
            theme.title(),
        )]),
        Line::raw(format!(
            "predicted {:.2} → {} ({sd}); {actual}",
            e.predicted, e.rounded
        )),
        Line::raw(format!(
            "  {:+.3}  {}",
            e.mu,
            app.model.manifest.center.mu_label()
        )),
    ];
    for c in e.contributions.iter().take(4) {
        lines.push(Line::raw(format!("  {:+.3}  factor {}", c.value, c.factor)));
    }
    if !e.evidence.is_empty() {
        lines.push(Line::styled(
            "their own nearest rated items:",
            theme.muted(),
        ));
        for x in &e.evidence {
            lines.push(Line::raw(format!(
                "  rated {} · {}",
                x.actual,
                fit(app.title(x.item), (body.width as usize).saturating_sub(12))
            )));
        }
    }
    let s = &e.support;
    let low = |flag: bool| {
        if flag {
            " (few: placed mostly by the prior)"
        } else {
            ""
        }
    };
    lines.push(Line::styled(
        format!(
            "support: member {}{} · item {}{}",
            s.user_ratings,
            low(s.user_low_support),
            s.item_ratings,
            low(s.item_low_support)
        ),
        if s.user_low_support || s.item_low_support {
            theme.warning()
        } else {
            theme.muted()
        },
    ));
    frame.render_widget(Paragraph::new(lines), body);
}
