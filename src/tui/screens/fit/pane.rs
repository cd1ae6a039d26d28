//! The fit's health: the log joint likelihood and RMSE per iteration, accuracy on training
//! and held-out ratings, the residual histogram and how many users and items are thin.

use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::Style;
use ratatui::symbols::Marker;
use ratatui::text::Line;
use ratatui::widgets::{Axis, Bar, BarChart, BarGroup, Chart, Dataset, GraphType, Paragraph};

use crate::tui::app::App;
use crate::tui::panes::{framed, inner};
use crate::tui::theme::Theme;

fn bounds(values: impl Iterator<Item = f64>) -> [f64; 2] {
    let (lo, hi) = values.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
        (lo.min(v), hi.max(v))
    });
    if lo.is_finite() && hi > lo {
        [lo, hi]
    } else if lo.is_finite() {
        [lo - 1.0, lo + 1.0]
    } else {
        [0.0, 1.0]
    }
}

/// A line of Braille points.
fn line(points: &[(f64, f64)], style: Style) -> Dataset<'_> {
    Dataset::default()
        .marker(Marker::Braille)
        .graph_type(GraphType::Line)
        .style(style)
        .data(points)
}

/// A chart over iterations 1 to `count`, with `y_labels` at the ends of `y`.
fn per_iteration<'a>(
    sets: Vec<Dataset<'a>>,
    title: &str,
    count: usize,
    y: [f64; 2],
    y_labels: [String; 2],
    theme: Theme,
) -> Chart<'a> {
    let [low, high] = y_labels;
    Chart::new(sets)
        .block(framed(title.to_owned(), false, theme))
        .x_axis(
            Axis::default()
                .bounds([1.0, count.max(2) as f64])
                .labels(vec![Line::raw("1"), Line::raw(count.to_string())]),
        )
        .y_axis(
            Axis::default()
                .bounds(y)
                .labels(vec![Line::raw(low), Line::raw(high)]),
        )
}

/// Convergence: how far each iteration's objective (`(iteration, value)` pairs) is from
/// the last one, on a log scale, so the approach stays visible after the first big step.
fn render_gaps(
    frame: &mut Frame<'_>,
    area: Rect,
    values: &[(usize, f64)],
    title: &str,
    theme: Theme,
) {
    let last = values.last().map_or(0.0, |r| r.1);
    let gaps: Vec<(f64, f64)> = values
        .iter()
        .filter(|r| r.1 != last)
        .map(|&(iter, v)| (iter as f64, (last - v).abs().log10()))
        .collect();
    let yb = bounds(gaps.iter().map(|p| p.1));
    let chart = per_iteration(
        vec![line(&gaps, theme.positive())],
        title,
        values.len(),
        yb,
        [format!("1e{:.0}", yb[0]), format!("1e{:.0}", yb[1])],
        theme,
    );
    frame.render_widget(chart, area);
}

/// The fit screen of an implicit-feedback model: the loss's approach to its final value,
/// the held-out ranking and the confidence rule, and the training interactions' misses
/// from their preference 1.
fn render_implicit(
    app: &App,
    frame: &mut Frame<'_>,
    area: Rect,
    implicit: &sextant::model::manifest::ImplicitFit,
    theme: Theme,
) {
    let m = &app.shared.model.manifest;
    let [top, bottom] =
        Layout::vertical([Constraint::Percentage(55), Constraint::Percentage(45)]).areas(area);
    let [metrics_area, histogram_area] =
        Layout::horizontal([Constraint::Min(51), Constraint::Percentage(50)]).areas(bottom);
    if implicit.trace.is_empty() {
        frame.render_widget(
            Paragraph::new("imported model: no fitting trace").block(framed(
                " Loss ".into(),
                false,
                theme,
            )),
            top,
        );
    } else {
        let values: Vec<(usize, f64)> = implicit.trace.iter().map(|r| (r.iter, r.loss)).collect();
        render_gaps(frame, top, &values, " Loss: gap to the final (log) ", theme);
    }
    let ranked = implicit.holdout_percentile_rank.map_or_else(
        || "no held-out interactions to rank".to_owned(),
        |p| format!("held-out expected percentile rank {:.2}%", 100.0 * p),
    );
    let state = if implicit.trace.is_empty() {
        "imported: no fitting trace".to_owned()
    } else {
        format!(
            "{} iterations, {}",
            implicit.trace.len(),
            if m.converged {
                "converged"
            } else {
                "NOT converged (raise --max-iters)"
            }
        )
    };
    let lines = vec![
        Line::styled(ranked, theme.title()),
        Line::styled(
            "  0% = every held-out item first; 50% = random",
            theme.muted(),
        ),
        Line::styled(
            state,
            if m.converged || implicit.trace.is_empty() {
                Style::new()
            } else {
                theme.warning()
            },
        ),
        Line::raw(format!("rank {} · λ {}", m.rank, m.lambda)),
        Line::raw(format!("confidence {}", implicit.confidence.describe())),
        Line::styled("scores are preferences, not ratings", theme.muted()),
    ];
    frame.render_widget(
        Paragraph::new(lines).block(framed(" Held-out ranking ".into(), false, theme)),
        metrics_area,
    );
    render_histogram(
        app,
        frame,
        histogram_area,
        " 1 − score, chosen items, ±1.5 ",
        theme,
    );
}

/// The residual histogram of the fit screen's state.
fn render_histogram(app: &App, frame: &mut Frame<'_>, area: Rect, title: &str, theme: Theme) {
    let bars: Vec<Bar<'_>> = app
        .screens
        .fit
        .histogram
        .iter()
        .map(|&(centre, count)| {
            Bar::default()
                .value(count)
                .text_value(String::new())
                .label(Line::raw(if centre.abs() < 1e-9 {
                    "0".to_owned()
                } else {
                    String::new()
                }))
        })
        .collect();
    let inner_width = inner(area).width as usize;
    let bar_width = (inner_width / app.screens.fit.histogram.len().max(1))
        .saturating_sub(1)
        .max(1) as u16;
    let chart = BarChart::default()
        .block(framed(title.to_owned(), false, theme))
        .data(BarGroup::default().bars(&bars))
        .bar_width(bar_width)
        .bar_gap(1)
        .bar_style(theme.category());
    frame.render_widget(chart, area);
}

/// Draws the fit screen.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let m = &app.shared.model.manifest;
    if let Some(implicit) = &m.implicit {
        render_implicit(app, frame, area, implicit, theme);
        return;
    }
    let [top, bottom] =
        Layout::vertical([Constraint::Percentage(55), Constraint::Percentage(45)]).areas(area);
    let [l_area, rmse_area] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(top);
    // The accuracy table keeps its 49 columns whole; the histogram takes the rest.
    let [metrics_area, histogram_area] =
        Layout::horizontal([Constraint::Min(51), Constraint::Percentage(50)]).areas(bottom);

    let trace = &m.trace;
    if trace.is_empty() {
        let note = "imported model: no fitting trace";
        frame.render_widget(
            Paragraph::new(note).block(framed(" Log joint likelihood ".into(), false, theme)),
            l_area,
        );
        frame.render_widget(
            Paragraph::new(note).block(framed(" RMSE ".into(), false, theme)),
            rmse_area,
        );
    } else {
        let values: Vec<(usize, f64)> = trace.iter().map(|r| (r.iter, r.log_joint)).collect();
        render_gaps(
            frame,
            l_area,
            &values,
            " Log joint: gap to the final (log) ",
            theme,
        );
        let train: Vec<(f64, f64)> = trace
            .iter()
            .map(|r| (r.iter as f64, r.train_rmse))
            .collect();
        let held: Vec<(f64, f64)> = trace
            .iter()
            .filter_map(|r| r.holdout_rmse.map(|h| (r.iter as f64, h)))
            .collect();
        // The first iteration starts far off: the range is set from the second on (the
        // first point is drawn at the top edge), so the curve after it is readable.
        let yb = bounds(train.iter().skip(1).chain(held.iter().skip(1)).map(|p| p.1));
        let clipped = |points: &[(f64, f64)]| -> Vec<(f64, f64)> {
            points.iter().map(|&(x, y)| (x, y.min(yb[1]))).collect()
        };
        let (train, held) = (clipped(&train), clipped(&held));
        let mut sets = vec![line(&train, theme.positive()).name("train")];
        if !held.is_empty() {
            sets.push(line(&held, theme.negative()).name("held out"));
        }
        let chart = per_iteration(
            sets,
            " RMSE per iteration (from the 2nd) ",
            trace.len(),
            yb,
            [format!("{:.3}", yb[0]), format!("{:.3}", yb[1])],
            theme,
        );
        frame.render_widget(chart, rmse_area);
    }

    let row = |name: &str, e: Option<&sextant::analysis::ErrorMetrics>| match e {
        Some(e) => format!(
            "{name:<9}{:>7.4}{:>7.4}{:>8.4}{:>8.4}{:>7.1}%",
            e.rmse,
            e.mae,
            e.rmse_rounded,
            e.mae_rounded,
            100.0 * e.exact_rate
        ),
        None => format!("{name:<9}{:>7}", "–"),
    };
    let (thin_users, thin_items) = m
        .metrics
        .as_ref()
        .map_or((0, 0), |f| (f.low_support_users, f.low_support_items));
    let lines = vec![
        Line::styled(
            format!(
                "{:<9}{:>7}{:>7}{:>8}{:>8}{:>8}",
                "", "RMSE", "MAE", "RMSE·r", "MAE·r", "exact"
            ),
            theme.muted(),
        ),
        Line::raw(row("train", m.metrics.as_ref().map(|f| &f.train))),
        Line::raw(row(
            "held out",
            m.metrics.as_ref().and_then(|f| f.holdout.as_ref()),
        )),
        Line::styled(
            if m.trace.is_empty() {
                "imported: no fitting trace".to_owned()
            } else {
                format!(
                    "{} iterations, {}",
                    m.trace.len(),
                    if m.converged {
                        "converged"
                    } else {
                        "NOT converged (raise --max-iters)"
                    }
                )
            },
            if m.converged || m.trace.is_empty() {
                Style::new()
            } else {
                theme.warning()
            },
        ),
        Line::raw(format!(
            "rank {} · λ {} · σ² {} · μ {:.3}{}",
            m.rank,
            m.lambda,
            m.sigma2,
            m.mu,
            m.lambda_bias
                .map(|l| format!(" · offsets λ_b {l}"))
                .unwrap_or_default()
        )),
        Line::styled(
            format!(
                "thin (< {} ratings): {thin_users} members, {thin_items} items",
                m.rank
            ),
            if thin_users + thin_items > 0 {
                theme.warning()
            } else {
                Style::new()
            },
        ),
        Line::styled(
            "·r = predictions rounded onto the rating scale",
            theme.muted(),
        ),
    ];
    frame.render_widget(
        Paragraph::new(lines).block(framed(" Accuracy ".into(), false, theme)),
        metrics_area,
    );

    render_histogram(
        app,
        frame,
        histogram_area,
        " Training residuals, actual − predicted, −3 … +3 ",
        theme,
    );
}
