//! The audit screen: how coherent item neighbourhoods are, the least coherent items (a
//! selectable list: Enter opens one), the largest misses and odd vector lengths.

use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;

use super::{fit, framed, inner, window_start};
use crate::tui::app::App;
use crate::tui::theme::Theme;

/// Draws the audit screen.
pub fn render(app: &mut App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(55), Constraint::Percentage(45)]).areas(area);
    app.page = inner(left).height.saturating_sub(4).max(1) as usize;
    let Some(a) = &app.audit else { return };
    // Left: coherence summary, then the least coherent items.
    let title = match &a.coherence {
        Some(c) if a.sampled => format!(
            " Coherence · {} sampled items · {} nearest by cosine ",
            c.items.len(),
            c.k
        ),
        Some(c) => format!(
            " Coherence · {} items · {} nearest by cosine ",
            c.items.len(),
            c.k
        ),
        None => " Coherence ".to_owned(),
    };
    frame.render_widget(framed(title, true, theme), left);
    let body = inner(left);
    let width = body.width as usize;
    let mut lines = Vec::new();
    match &a.coherence {
        Some(c) => {
            lines.push(Line::from(vec![
                Span::raw("same-category share "),
                Span::styled(format!("{:.3}", c.mean), theme.title()),
                Span::raw(format!(
                    " · random neighbours {:.3} ({:.1}×)",
                    c.baseline,
                    if c.baseline > 0.0 {
                        c.mean / c.baseline
                    } else {
                        0.0
                    }
                )),
            ]));
            let weakest = c
                .categories
                .iter()
                .min_by(|x, y| x.mean.total_cmp(&y.mean))
                .map(|g| {
                    format!(
                        "least coherent category: {} {:.2}",
                        a.categories.names[g.category as usize], g.mean
                    )
                })
                .unwrap_or_default();
            lines.push(Line::styled(weakest, theme.muted()));
            lines.push(Line::styled(
                format!(
                    "{:>5} {:>6}  item (category) · neighbours mostly",
                    "same", "P"
                ),
                theme.muted(),
            ));
            let height = (body.height as usize).saturating_sub(3);
            let start = window_start(a.selected, a.least.len(), height);
            for (k, i) in a.least.iter().enumerate().skip(start).take(height) {
                let mostly = i
                    .neighbour_category
                    .map_or("–", |n| a.categories.names[n as usize].as_str());
                let own = &a.categories.names[i.category as usize];
                let mark = if app.has_note(i.item) { "✎" } else { " " };
                let text = format!(
                    "{:>2}/{:<2} {:>6.3} {mark}{} ({own}) · {mostly}",
                    i.same,
                    i.neighbours,
                    i.p_low,
                    fit(app.title(i.item), width.saturating_sub(36)),
                );
                lines.push(if k == a.selected {
                    Line::styled(text, theme.selected())
                } else {
                    Line::raw(text)
                });
            }
        }
        None => lines.push(Line::raw(
            "Not measured: the items metadata names fewer than two categories.",
        )),
    }
    frame.render_widget(Paragraph::new(lines), body);

    // Right: worst fits over vector lengths.
    let [upper, lower] =
        Layout::vertical([Constraint::Percentage(60), Constraint::Percentage(40)]).areas(right);
    let which = if a.worst_held_out {
        "held-out"
    } else {
        "training"
    };
    frame.render_widget(
        framed(format!(" Largest misses · {which} ratings "), false, theme),
        upper,
    );
    let body = inner(upper);
    let mut lines = vec![Line::styled(
        format!("{:>6} {:>6} {:>7}  member · item", "rated", "pred", "resid"),
        theme.muted(),
    )];
    for m in a
        .worst
        .iter()
        .take((body.height as usize).saturating_sub(1))
    {
        lines.push(Line::raw(format!(
            "{:>6} {:>6.2} {:>+7.2}  {} · {}",
            m.actual,
            m.predicted,
            m.residual(),
            sextant::text::escaped(app.model.ratings.users.name(m.user)),
            fit(app.title(m.item), (body.width as usize).saturating_sub(32))
        )));
    }
    frame.render_widget(Paragraph::new(lines), body);
    frame.render_widget(
        framed(" Vector lengths and support ".into(), false, theme),
        lower,
    );
    let body = inner(lower);
    let mut lines = vec![Line::raw(format!(
        "prior-dominated (fewer ratings than the rank): {} members, {} items",
        a.thin.0, a.thin.1
    ))];
    for n in &a.norms {
        lines.push(Line::raw(format!(
            "{}s: median {:.3}, {:.3} to {:.3}, {} outlier(s)",
            n.side.noun(),
            n.median,
            n.range.0,
            n.range.1,
            n.outliers.len()
        )));
        for o in n.outliers.iter().take(2) {
            let name = match o.side {
                sextant::analysis::diagnostics::Side::User => {
                    app.model.ratings.users.name(o.row).to_owned()
                }
                sextant::analysis::diagnostics::Side::Item => app.title(o.row).to_owned(),
            };
            lines.push(Line::styled(
                format!(
                    "  {} · norm {:.3} (z {:+.1}, {} ratings)",
                    fit(&name, (body.width as usize).saturating_sub(36)),
                    o.norm,
                    o.score,
                    o.ratings
                ),
                theme.muted(),
            ));
        }
    }
    lines.push(Line::styled(
        "full report: sextant audit MODEL --report FILE",
        theme.muted(),
    ));
    frame.render_widget(Paragraph::new(lines), body);
}
