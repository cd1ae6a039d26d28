//! The audit screen: how coherent item neighbourhoods are and the least coherent items,
//! the largest misses, and vector lengths with the odd ones — three lists, each with its
//! own highlight, placed by `layout::audit`.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;
use sextant::analysis::diagnostics::Side;

use crate::tui::app::App;
use crate::tui::layout;
use crate::tui::panes::{fit, framed, inner, padded, text_row, window_start};
use crate::tui::screens::audit::{AuditView, LEAST, MISSES, VECTORS, list_rows};
use crate::tui::theme::Theme;

/// Draws the audit screen.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let Some(a) = &app.screens.audit else { return };
    let l = layout::audit(area, a.focus);
    // When the window is narrow one list shows at a time: say how to reach the others.
    let hint = if area.width < layout::WIDE_AUDIT {
        "· Tab: next list "
    } else {
        ""
    };
    if !l.coherence.is_empty() {
        render_coherence(app, a, frame, l.coherence, theme, hint);
    }
    if !l.misses.is_empty() {
        render_misses(app, a, frame, l.misses, theme, hint);
    }
    if !l.vectors.is_empty() {
        render_vectors(app, a, frame, l.vectors, theme, hint);
    }
}

fn render_coherence(
    app: &App,
    a: &AuditView,
    frame: &mut Frame<'_>,
    area: Rect,
    theme: Theme,
    hint: &str,
) {
    let focused = a.focus == LEAST;
    let title = match &a.coherence {
        Some(c) => format!(
            " Coherence · {} {}items · {} nearest by cosine {}",
            c.items.len(),
            if a.sampled { "sampled " } else { "" },
            c.k,
            hint
        ),
        None => format!(" Coherence {hint}"),
    };
    frame.render_widget(framed(title, focused, theme), area);
    let body = inner(area);
    let width = body.width as usize;
    let Some(c) = &a.coherence else {
        frame.render_widget(
            Paragraph::new("Not measured: the items metadata names fewer than two categories."),
            body,
        );
        return;
    };
    let cut = c.unusual_cut();
    let mut lines = vec![
        Line::from(vec![
            Span::raw("same-category share "),
            Span::styled(format!("{:.3}", c.mean), theme.title()),
            Span::raw(format!(
                " · random {:.3} ({:.1}×)",
                c.baseline,
                if c.baseline > 0.0 {
                    c.mean / c.baseline
                } else {
                    0.0
                }
            )),
        ]),
        Line::styled(
            fit(
                &format!(
                    "! unusually few (false-discovery rate 5%): {}",
                    cut.map_or_else(|| "none here".to_owned(), |p| format!("P ≤ {p:.2e}"))
                ),
                width,
            ),
            theme.muted(),
        ),
    ];
    // same/n, P, mark, title, " → " + other category.
    let other_width = 14;
    let title_width = width.saturating_sub(6 + 9 + 1 + 3 + other_width);
    lines.push(Line::styled(
        format!(
            "{:>5} {:>8}  {}   mostly",
            "same",
            "P",
            padded("item", title_width)
        ),
        theme.muted(),
    ));
    let height = list_rows(LEAST, body.height);
    let start = window_start(a.selected[LEAST], a.least.len(), height);
    for (k, i) in a.least.iter().enumerate().skip(start).take(height) {
        let other = i
            .other_category
            .map_or("–", |n| a.categories.names[n as usize].as_str());
        let unusual = cut.is_some_and(|cut| i.p_low <= cut);
        let mark = if app.has_note(i.item) { "✎" } else { " " };
        let p = if i.p_low >= 1e-3 {
            format!("{:.3}", i.p_low)
        } else {
            format!("{:.1e}", i.p_low)
        };
        let text = format!(
            "{:>2}/{:<2} {p:>8}{}{mark}{} → {}",
            i.same,
            i.neighbours,
            if unusual { "!" } else { " " },
            padded(app.title(i.item), title_width),
            fit(other, other_width),
        );
        lines.push(text_row(text, focused && k == a.selected[LEAST], theme));
    }
    frame.render_widget(Paragraph::new(lines), body);
}

fn render_misses(
    app: &App,
    a: &AuditView,
    frame: &mut Frame<'_>,
    area: Rect,
    theme: Theme,
    hint: &str,
) {
    let focused = a.focus == MISSES;
    let implicit = app.shared.model.implicit().is_some();
    let which = if a.worst_held_out {
        "held-out"
    } else {
        "training"
    };
    let title = if implicit {
        format!(" Lowest scores · {which} interactions {hint}")
    } else {
        format!(" Largest misses · {which} ratings {hint}")
    };
    frame.render_widget(framed(title, focused, theme), area);
    let body = inner(area);
    let width = body.width as usize;
    let users = &app.shared.model.ratings.users;
    let id_width = a
        .worst
        .iter()
        .map(|m| sextant::text::escaped(users.name(m.user)).chars().count())
        .max()
        .unwrap_or(6)
        .max(6);
    let header = if implicit {
        format!(
            "{:>6} {:>6}  {:<id_width$}  item",
            "count", "score", "member"
        )
    } else {
        format!(
            "{:>6} {:>6} {:>7}  {:<id_width$}  item",
            "rated", "pred", "resid", "member"
        )
    };
    let mut lines = vec![Line::styled(header, theme.muted())];
    let height = list_rows(MISSES, body.height);
    let start = window_start(a.selected[MISSES], a.worst.len(), height);
    for (k, m) in a.worst.iter().enumerate().skip(start).take(height) {
        let member = sextant::text::escaped(users.name(m.user));
        let text = if implicit {
            format!(
                "{:>6} {:>6.2}  {member:<id_width$}  {}",
                m.actual,
                m.predicted,
                fit(app.title(m.item), width.saturating_sub(17 + id_width))
            )
        } else {
            format!(
                "{:>6} {:>6.2} {:>+7.2}  {member:<id_width$}  {}",
                m.actual,
                m.predicted,
                m.residual(),
                fit(app.title(m.item), width.saturating_sub(25 + id_width))
            )
        };
        lines.push(text_row(text, focused && k == a.selected[MISSES], theme));
    }
    frame.render_widget(Paragraph::new(lines), body);
}

fn implicit_model(app: &App) -> bool {
    app.shared.model.implicit().is_some()
}

fn render_vectors(
    app: &App,
    a: &AuditView,
    frame: &mut Frame<'_>,
    area: Rect,
    theme: Theme,
    hint: &str,
) {
    let focused = a.focus == VECTORS;
    frame.render_widget(
        framed(
            format!(" Vector lengths and support {hint}"),
            focused,
            theme,
        ),
        area,
    );
    let body = inner(area);
    let width = body.width as usize;
    // One line each, so no number is cut: support, then each side's lengths.
    let mut lines = vec![Line::raw(fit(
        &format!(
            "thin (< rank {}): {} members, {} items",
            if implicit_model(app) {
                "interactions"
            } else {
                "ratings"
            },
            a.thin.0,
            a.thin.1
        ),
        width,
    ))];
    for side in [Side::User, Side::Item] {
        let text = a.norms.iter().find(|n| n.side == side).map_or_else(
            || format!("{}s: –", side.noun()),
            |n| {
                format!(
                    "{}s: median {:.3}, {:.3} to {:.3}",
                    n.side.noun(),
                    n.median,
                    n.range.0,
                    n.range.1
                )
            },
        );
        lines.push(Line::styled(fit(&text, width), theme.muted()));
    }
    lines.push(Line::styled(
        format!("{:>7} {:>6} {:>7}  odd vector", "norm", "z", "ratings"),
        theme.muted(),
    ));
    let height = list_rows(VECTORS, body.height);
    let start = window_start(a.selected[VECTORS], a.outliers.len(), height);
    for (k, o) in a.outliers.iter().enumerate().skip(start).take(height) {
        let name = match o.side {
            Side::User => format!(
                "member {}",
                sextant::text::escaped(app.shared.member_id(o.row))
            ),
            Side::Item => app.title(o.row).to_owned(),
        };
        let text = format!(
            "{:>7.3} {:>+6.1} {:>7}  {}",
            o.norm,
            o.score,
            o.ratings,
            fit(&name, width.saturating_sub(24))
        );
        lines.push(text_row(text, focused && k == a.selected[VECTORS], theme));
    }
    if a.outliers.is_empty() {
        lines.push(Line::styled("no odd vector lengths", theme.muted()));
    }
    lines.push(Line::styled(
        "full report: sextant audit MODEL --report FILE",
        theme.muted(),
    ));
    frame.render_widget(Paragraph::new(lines), body);
}
