//! The items' 2-D PCA map: a scatter coloured by category, the current item and its
//! neighbours marked, with zoom and pan. Large catalogues draw an evenly spaced sample of
//! at most [`MAX_POINTS`] items, so a frame's cost does not grow with the catalogue.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::style::Color;
use ratatui::symbols::Marker;
use ratatui::text::Line;
use ratatui::widgets::canvas::{Canvas, Points};

use crate::tui::app::App;
use crate::tui::panes::framed;
use crate::tui::theme::Theme;

/// Most points drawn per frame.
pub const MAX_POINTS: usize = 20_000;

const PALETTE: [Color; 8] = [
    Color::Cyan,
    Color::Green,
    Color::Yellow,
    Color::Magenta,
    Color::Blue,
    Color::Red,
    Color::LightCyan,
    Color::LightGreen,
];

/// Draws the map screen.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let map = &app.screens.map;
    let Some(p) = &map.projection else { return };
    let [[x0, x1], [y0, y1]] = map.extent;
    let half = |lo: f64, hi: f64| ((hi - lo) / 2.0).max(1e-9) / map.zoom;
    let (cx, cy) = (
        f64::midpoint(x0, x1) + map.centre[0],
        f64::midpoint(y0, y1) + map.centre[1],
    );
    let (hx, hy) = (half(x0, x1), half(y0, y1));
    let categories = &app.shared.categories;
    let step = (p.points.len() / MAX_POINTS).max(1);
    let mut layers: Vec<(Color, Vec<(f64, f64)>)> =
        PALETTE.iter().map(|&c| (c, Vec::new())).collect();
    for (j, q) in p.points.iter().enumerate().step_by(step) {
        let layer = app
            .category(j as u32)
            .and_then(|c| categories.iter().position(|x| *x == c))
            .unwrap_or(0)
            % PALETTE.len();
        layers[layer].1.push((q[0], q[1]));
    }
    let neighbours: Vec<(f64, f64)> = app
        .screens
        .items
        .neighbours
        .iter()
        .map(|n| (p.points[n.item as usize][0], p.points[n.item as usize][1]))
        .collect();
    let current = app.screens.items.current.map(|j| p.points[j as usize]);
    let title = format!(
        " Map · principal components x {:.0}%, y {:.0}% · zoom {:.1}× · ● current ○ neighbours ",
        100.0 * p.explained_ratio[0],
        100.0 * p.explained_ratio[1],
        map.zoom
    );
    let legend = categories
        .iter()
        .take(PALETTE.len())
        .cloned()
        .collect::<Vec<_>>()
        .join(" ");
    let canvas = Canvas::default()
        .block(
            framed(title, true, theme)
                .title_bottom(Line::raw(format!(" {}", sextant::text::escaped(&legend)))),
        )
        .marker(Marker::Braille)
        .x_bounds([cx - hx, cx + hx])
        .y_bounds([cy - hy, cy + hy])
        .paint(move |ctx| {
            for (color, coords) in &layers {
                ctx.draw(&Points {
                    coords,
                    color: if theme_is_plain(theme) {
                        Color::Reset
                    } else {
                        *color
                    },
                });
            }
            ctx.layer();
            for &(x, y) in &neighbours {
                ctx.print(x, y, "○");
            }
            if let Some([x, y]) = current {
                ctx.print(x, y, "●");
            }
        });
    frame.render_widget(canvas, area);
}

fn theme_is_plain(theme: Theme) -> bool {
    theme.muted() == ratatui::style::Style::new()
}
