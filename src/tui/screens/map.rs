//! The map screen's state: the items' 2-D principal-component projection (computed the
//! first time the map is shown), its extent, and the zoom and centre; its keys and update.

pub mod pane;

use ratatui::crossterm::event::KeyCode;
use sextant::analysis::{Projection, pca_2d};

use crate::tui::action::{Action, Direction};
use crate::tui::app::App;
use crate::tui::keymap::{Binding, bind, chars};

const NONE: ratatui::crossterm::event::KeyModifiers = ratatui::crossterm::event::KeyModifiers::NONE;

/// The map screen's keys.
pub const OWN: &[Binding] = &[
    bind(
        &[(KeyCode::Up, NONE), (KeyCode::Char('k'), NONE)],
        "↑/k",
        Action::Pan(Direction::Up),
        "pan",
        "pan up",
    ),
    bind(
        &[(KeyCode::Down, NONE), (KeyCode::Char('j'), NONE)],
        "↓/j",
        Action::Pan(Direction::Down),
        "",
        "pan down",
    ),
    bind(
        &[(KeyCode::Left, NONE), (KeyCode::Char('h'), NONE)],
        "←/h",
        Action::Pan(Direction::Left),
        "",
        "pan left",
    ),
    bind(
        &[(KeyCode::Right, NONE), (KeyCode::Char('l'), NONE)],
        "→/l",
        Action::Pan(Direction::Right),
        "",
        "pan right",
    ),
    bind(chars!('+', '='), "+", Action::ZoomIn, "zoom", "zoom in"),
    bind(
        &[(KeyCode::Char('-'), NONE)],
        "-",
        Action::ZoomOut,
        "",
        "zoom out",
    ),
];

/// The map screen's keys.
pub const BINDINGS: &[Binding] = OWN;

/// The map's state.
#[derive(Debug, Clone, Default)]
pub struct MapView {
    /// The items' projection, once computed.
    pub projection: Option<Projection>,
    /// Extent of the points, `[[x0, x1], [y0, y1]]`.
    pub extent: [[f64; 2]; 2],
    /// Zoom (1 = everything).
    pub zoom: f64,
    /// Centre, as an offset from the middle of the extent.
    pub centre: [f64; 2],
}

impl App {
    /// The map screen's own actions.
    pub fn update_map(&mut self, action: Action) {
        let map = &mut self.screens.map;
        if map.projection.is_none() {
            let f = &self.shared.model.factors;
            let p = pca_2d(&f.items, f.rank);
            let extent = |k: usize| {
                p.points
                    .iter()
                    .fold([f64::INFINITY, f64::NEG_INFINITY], |[lo, hi], q| {
                        [lo.min(q[k]), hi.max(q[k])]
                    })
            };
            map.extent = [extent(0), extent(1)];
            map.projection = Some(p);
            map.zoom = 1.0;
        }
        // The extent is known: a key pans without walking the points.
        let spread = |k: usize| (map.extent[k][1] - map.extent[k][0]).max(f64::MIN_POSITIVE);
        let step = 0.1 / map.zoom;
        match action {
            Action::Pan(Direction::Up) => map.centre[1] += step * spread(1),
            Action::Pan(Direction::Down) => map.centre[1] -= step * spread(1),
            Action::Pan(Direction::Left) => map.centre[0] -= step * spread(0),
            Action::Pan(Direction::Right) => map.centre[0] += step * spread(0),
            Action::ZoomIn => map.zoom = (map.zoom * 1.5).min(200.0),
            Action::ZoomOut => map.zoom = (map.zoom / 1.5).max(1.0),
            _ => {}
        }
    }
}
