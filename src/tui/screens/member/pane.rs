//! The member screen: their ratings beside the model's predictions (or a what-if
//! profile's), their suggestions, and the explanation of the highlighted item (built from
//! this member's own ratings only), placed by `layout::member`.

use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;
use sextant::analysis::explain::Explanation;

use crate::tui::app::App;
use crate::tui::layout;
use crate::tui::panes::{fit, framed, inner, text_row, window_start};
use crate::tui::screens::member::{MemberPane, MemberView};
use crate::tui::state::shared::factor_name;
use crate::tui::theme::Theme;

/// Draws the member screen.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let Some(m) = &app.screens.member else {
        render_empty(app, frame, area, theme);
        return;
    };
    let l = layout::member(area, m.explained_list == MemberPane::Suggestions);
    if !l.ratings.is_empty() {
        render_ratings(app, m, frame, l.ratings, theme);
    }
    if !l.suggestions.is_empty() {
        render_suggestions(app, m, frame, l.suggestions, theme);
    }
    let focused = m.focus == MemberPane::Why;
    let title = if focused {
        " Why · the highlighted item · ↑↓ scroll "
    } else {
        " Why · the highlighted item "
    };
    frame.render_widget(framed(title.into(), focused, theme), l.why);
    let body = inner(l.why);
    if let Some(e) = &m.explanation {
        let lines: Vec<Line<'static>> = why_lines(app, e, body.width as usize, theme)
            .into_iter()
            .skip(m.why_scroll)
            .collect();
        frame.render_widget(Paragraph::new(lines), body);
    }
}

fn render_empty(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let users = &app.shared.model.ratings.users;
    let example = if users.is_empty() {
        String::new()
    } else {
        format!(
            " (this model's ids run from {} to {})",
            sextant::text::escaped(users.name(0)),
            sextant::text::escaped(users.name(users.len() as u32 - 1))
        )
    };
    let text = vec![
        Line::raw(""),
        Line::raw(format!(
            "  No member open. Press u and type a member id{example},"
        )),
        Line::raw("  or w to start a what-if profile from nobody."),
        Line::styled(
            "  Ratings are personal data: look only at what your work needs.",
            theme.muted(),
        ),
    ];
    frame.render_widget(
        Paragraph::new(text).block(framed(" Member ".into(), true, theme)),
        area,
    );
}

fn render_ratings(app: &App, m: &MemberView, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let users = &app.shared.model.ratings.users;
    let implicit = app.shared.model.implicit().is_some();
    let train = m.rated.iter().filter(|r| !r.holdout).count();
    let order = match (m.by_residual, implicit) {
        (true, false) => "largest misses first",
        (true, true) => "most chosen first",
        (false, _) => "by title",
    };
    let what = if implicit { "items" } else { "ratings" };
    let title = match (&m.what_if, m.user) {
        (Some(_), Some(u)) => format!(
            " What-if from member {} · {} {what} ",
            users.name(u),
            m.rated.len()
        ),
        (Some(_), None) => format!(" What-if · new profile · {} {what} ", m.rated.len()),
        (None, Some(u)) => format!(
            " Member {} · {train} training + {} held out · {order} ",
            users.name(u),
            m.rated.len() - train
        ),
        (None, None) => " Member ".to_owned(),
    };
    let focused = m.focus == MemberPane::Ratings;
    frame.render_widget(framed(title, focused, theme), area);
    let mut body = inner(area);
    if let Some(w) = &m.what_if {
        // The folded-in vector, one small signed bar per factor (after the offset, in a
        // model with biases), above the ratings.
        let biased = app.shared.model.factors.biases.is_some();
        let entries: Vec<(String, f64)> = biased
            .then(|| ("off ".to_owned(), w.bias))
            .into_iter()
            .chain(
                w.vector
                    .iter()
                    .enumerate()
                    .map(|(d, &v)| (format!("f{:<3}", d + 1), v)),
            )
            .collect();
        let rows = (entries.len() as u16 + 1).min(body.height / 3);
        let [vector_area, rest] =
            Layout::vertical([Constraint::Length(rows), Constraint::Min(0)]).areas(body);
        body = rest;
        let scale = entries.iter().fold(0.0f64, |a, (_, v)| a.max(v.abs()));
        let half = (vector_area.width as usize).saturating_sub(14) / 2;
        let mut lines = vec![match &w.problem {
            Some(p) => Line::styled(fit(p, vector_area.width as usize), theme.warning()),
            None => Line::styled(
                "profile vector (one member step, items fixed):",
                theme.muted(),
            ),
        }];
        for (name, v) in entries.iter().take(rows.saturating_sub(1) as usize) {
            let (l, r) = crate::tui::panes::loadings::signed_bar(*v, scale, half);
            lines.push(Line::from(vec![
                Span::raw(format!("{name}{v:>+7.3} ")),
                Span::styled(l, theme.negative()),
                Span::styled("│", theme.muted()),
                Span::styled(r, theme.positive()),
            ]));
        }
        frame.render_widget(Paragraph::new(lines), vector_area);
    }
    let width = body.width as usize;
    let height = (body.height as usize).saturating_sub(1);
    let header = if implicit {
        format!("{:>6} {:>6}  item  (* held out)", "count", "score")
    } else {
        format!(
            "{:>6} {:>6} {:>4} {:>7}  item  (* held out)",
            "rated", "pred", "rnd", "resid"
        )
    };
    let mut lines = vec![Line::styled(header, theme.muted())];
    let start = window_start(m.rated_selected, m.rated.len(), height);
    for (k, r) in m.rated.iter().enumerate().skip(start).take(height) {
        let mark = if r.holdout {
            "*"
        } else if app.has_note(r.item) {
            "✎"
        } else {
            " "
        };
        let text = match r.rounded {
            Some(rounded) => format!(
                "{:>6} {:>6.2} {rounded:>4} {:>+7.2}{mark} {}",
                r.actual,
                r.predicted,
                r.residual,
                fit(app.title(r.item), width.saturating_sub(29))
            ),
            None => format!(
                "{:>6} {:>6.2}{mark} {}",
                r.actual,
                r.predicted,
                fit(app.title(r.item), width.saturating_sub(15))
            ),
        };
        let highlighted = k == m.rated_selected && m.explained_list == MemberPane::Ratings;
        lines.push(text_row(text, highlighted, theme));
    }
    frame.render_widget(Paragraph::new(lines), body);
}

fn render_suggestions(app: &App, m: &MemberView, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let focused = m.focus == MemberPane::Suggestions;
    let implicit = app.shared.model.implicit().is_some();
    let title = if implicit {
        " Suggestions · not chosen, highest score first "
    } else {
        " Suggestions · unrated, highest predicted first "
    };
    frame.render_widget(framed(title.into(), focused, theme), area);
    let body = inner(area);
    let height = (body.height as usize).saturating_sub(1);
    let header = if implicit {
        format!("{:>3} {:>6}  item", "#", "score")
    } else {
        format!("{:>3} {:>6} {:>5}  item", "#", "pred", "± sd")
    };
    let mut lines = vec![Line::styled(header, theme.muted())];
    let start = window_start(m.suggestion_selected, m.suggestions.len(), height);
    for (k, s) in m.suggestions.iter().enumerate().skip(start).take(height) {
        let sd = s
            .predictive_sd
            .map_or_else(|| "–".to_owned(), |v| format!("{v:.2}"));
        let mark = if app.has_note(s.item) { "✎" } else { " " };
        let text = if implicit {
            format!(
                "{:>3} {:>6.2} {mark}{}",
                s.rank,
                s.predicted,
                fit(app.title(s.item), (body.width as usize).saturating_sub(13))
            )
        } else {
            format!(
                "{:>3} {:>6.2} {sd:>5} {mark}{}",
                s.rank,
                s.predicted,
                fit(app.title(s.item), (body.width as usize).saturating_sub(19))
            )
        };
        let highlighted = k == m.suggestion_selected && m.explained_list == MemberPane::Suggestions;
        lines.push(text_row(text, highlighted, theme));
    }
    frame.render_widget(Paragraph::new(lines), body);
}

/// Lines of the explanation before the contributions (title, prediction, μ), and the two
/// offsets' lines of a model with biases.
const HEAD: usize = 3;

/// The member's and the item's offsets, when the model has them.
fn offsets(e: &Explanation) -> Option<(f64, f64)> {
    e.user_bias.zip(e.item_bias)
}

/// How many lines the explanation `e` takes (for scrolling).
pub fn why_line_count(e: &Explanation) -> usize {
    let evidence = if e.evidence.is_empty() || e.by_rating.is_some() {
        0
    } else {
        1 + e.evidence.len()
    };
    let offsets = if offsets(e).is_some() { 2 } else { 0 };
    HEAD + offsets + e.contributions.len() + 1 + by_rating_lines(e) + evidence + 1
}

/// How many of the member's ratings the Why pane lists by share.
const SHARES_SHOWN: usize = 4;

/// Lines of the by-rating part: a heading and the largest shares.
fn by_rating_lines(e: &Explanation) -> usize {
    e.by_rating
        .as_ref()
        .map_or(0, |b| 1 + b.shares.len().min(SHARES_SHOWN))
}

/// The explanation as lines of at most `width` characters: the prediction, μ (and the
/// offsets) and every factor's contribution (curators' labels beside the factor), their
/// sum, the member's own ratings that moved it most (or, when that decomposition is not
/// determined, their nearest rated items), and the support.
pub fn why_lines(app: &App, e: &Explanation, width: usize, theme: Theme) -> Vec<Line<'static>> {
    let implicit = app.shared.model.implicit().is_some();
    let mut lines = vec![Line::styled(fit(app.title(e.item), width), theme.title())];
    if implicit {
        let actual = e.actual.filter(|&a| a > 0.0).map_or_else(
            || "not chosen".to_owned(),
            |a| format!("chosen {a} time(s)"),
        );
        lines.push(Line::raw(fit(
            &format!("score {:.3}; {actual}", e.predicted),
            width,
        )));
        lines.push(Line::styled(
            fit("  a preference: near 1 likely, near 0 not", width),
            theme.muted(),
        ));
    } else {
        let sd = e
            .predictive_sd
            .map_or_else(|| "undetermined".to_owned(), |v| format!("± {v:.2}"));
        let actual = e
            .actual
            .map_or_else(|| "not rated".to_owned(), |a| format!("rated {a}"));
        lines.push(Line::raw(fit(
            &format!(
                "predicted {:.3} → {} ({sd}); {actual}",
                e.predicted,
                e.rounded.map_or_else(String::new, |r| r.to_string())
            ),
            width,
        )));
        lines.push(Line::raw(fit(
            &format!(
                "  {:+8.3}  {}",
                e.mu,
                app.shared.model.manifest.center.mu_label()
            ),
            width,
        )));
    }
    if let Some((b, c)) = offsets(e) {
        for (value, what) in [(b, "the member's offset"), (c, "the item's offset")] {
            lines.push(Line::raw(fit(&format!("  {value:+8.3}  {what}"), width)));
        }
    }
    for c in &e.contributions {
        lines.push(Line::raw(fit(
            &format!(
                "  {:+8.3}  {}",
                c.value,
                factor_name(&app.notes.current, c.factor)
            ),
            width,
        )));
    }
    lines.push(Line::styled(
        fit(
            &format!(
                "= {:+8.3}  the {}",
                e.predicted,
                match (implicit, offsets(e).is_some()) {
                    (true, _) => "score (every factor)",
                    (false, true) => "prediction (μ + offsets + factors)",
                    (false, false) => "prediction (μ plus every factor)",
                }
            ),
            width,
        ),
        theme.title(),
    ));
    if let Some(b) = &e.by_rating {
        let behind = if b.difference.abs() >= 5e-4 {
            format!(" (re-solved: {:.3})", b.predicted)
        } else {
            String::new()
        };
        let (theirs, rated) = if implicit {
            ("choices", "×")
        } else {
            ("ratings", "rated ")
        };
        lines.push(Line::styled(
            fit(
                &format!("their {theirs} that moved it most{behind}:"),
                width,
            ),
            theme.muted(),
        ));
        for s in b.shares.iter().take(SHARES_SHOWN) {
            lines.push(Line::raw(fit(
                &format!(
                    "  {:+8.3}  {rated}{} · {}",
                    s.share,
                    s.rating,
                    app.title(s.item)
                ),
                width,
            )));
        }
    }
    // The nearest rated items answer the same question less exactly: shown only when the
    // decomposition by rating is not determined.
    if !e.evidence.is_empty() && e.by_rating.is_none() {
        let (heading, rated) = if implicit {
            ("their own nearest chosen items:", "×")
        } else {
            ("their own nearest rated items:", "rated ")
        };
        lines.push(Line::styled(heading, theme.muted()));
        for x in &e.evidence {
            lines.push(Line::raw(format!(
                "  {rated}{} · {}",
                x.actual,
                fit(app.title(x.item), width.saturating_sub(12))
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
        fit(
            &format!(
                "support: member {}{} · item {}{}",
                s.user_ratings,
                low(s.user_low_support),
                s.item_ratings,
                low(s.item_low_support)
            ),
            width,
        ),
        if s.user_low_support || s.item_low_support {
            theme.warning()
        } else {
            theme.muted()
        },
    ));
    debug_assert_eq!(lines.len(), why_line_count(e));
    lines
}
