//! Where each pane goes, as pure functions of the window's size and the focus. Drawing
//! uses them, and so do page sizes and mouse clicks, so a click lands on the row the frame
//! showed there.
//!
//! Below [`WIDE`] columns ([`WIDE_MEMBER`], [`WIDE_AUDIT`]), panes stack instead of standing side by side, so titles keep
//! their room: on the item screen the catalogue sits over the focused one of neighbours and
//! loadings; the member screen shows its focused list over the explanation; the audit
//! screen shows its focused list alone.

use ratatui::layout::{Constraint, Layout, Rect};

/// Smallest window the explorer draws into; below it, it says so.
pub const MIN_WIDTH: u16 = 60;
/// Smallest window height.
pub const MIN_HEIGHT: u16 = 12;
/// Narrowest window that puts the item screen's panes side by side.
pub const WIDE: u16 = 100;
/// Narrowest window that puts the member screen's panes side by side.
pub const WIDE_MEMBER: u16 = 110;
/// Narrowest window that puts the audit screen's panes side by side.
pub const WIDE_AUDIT: u16 = 120;

/// Header line, body, status line.
pub fn frame(area: Rect) -> [Rect; 3] {
    Layout::vertical([
        Constraint::Length(1),
        Constraint::Min(0),
        Constraint::Length(1),
    ])
    .areas(area)
}

/// The body of a window `width` × `height`.
pub fn body_of(width: u16, height: u16) -> Rect {
    frame(Rect::new(0, 0, width, height))[1]
}

/// The rows inside a bordered pane.
pub fn inner(area: Rect) -> Rect {
    Rect {
        x: area.x.saturating_add(1),
        y: area.y.saturating_add(1),
        width: area.width.saturating_sub(2),
        height: area.height.saturating_sub(2),
    }
}

/// The item screen's panes; a pane not shown has an empty area.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Items {
    /// The catalogue.
    pub catalogue: Rect,
    /// The neighbours.
    pub neighbours: Rect,
    /// The loadings.
    pub loadings: Rect,
}

/// The item screen in `body`, for a model of `rank` factors, with the loadings focused or
/// not.
pub fn items(body: Rect, rank: usize, loadings_focused: bool) -> Items {
    if body.width < WIDE {
        let [top, bottom] =
            Layout::vertical([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(body);
        return if loadings_focused {
            Items {
                catalogue: top,
                neighbours: Rect::default(),
                loadings: bottom,
            }
        } else {
            Items {
                catalogue: top,
                neighbours: bottom,
                loadings: Rect::default(),
            }
        };
    }
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(48), Constraint::Percentage(52)]).areas(body);
    let loadings_height = (rank as u16 + 2).min(right.height / 2).max(4);
    let [upper, lower] =
        Layout::vertical([Constraint::Min(0), Constraint::Length(loadings_height)]).areas(right);
    Items {
        catalogue: left,
        neighbours: upper,
        loadings: lower,
    }
}

/// The member screen's panes; a pane not shown has an empty area.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Member {
    /// The member's ratings (or the what-if profile's).
    pub ratings: Rect,
    /// The suggestions.
    pub suggestions: Rect,
    /// The explanation of the highlighted item.
    pub why: Rect,
}

/// The member screen in `body`; `suggestions_focused` says which list shows when the
/// window is narrow.
pub fn member(body: Rect, suggestions_focused: bool) -> Member {
    if body.width < WIDE_MEMBER {
        let [top, bottom] =
            Layout::vertical([Constraint::Percentage(45), Constraint::Percentage(55)]).areas(body);
        return if suggestions_focused {
            Member {
                ratings: Rect::default(),
                suggestions: top,
                why: bottom,
            }
        } else {
            Member {
                ratings: top,
                suggestions: Rect::default(),
                why: bottom,
            }
        };
    }
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(50), Constraint::Percentage(50)]).areas(body);
    let [upper, lower] =
        Layout::vertical([Constraint::Percentage(40), Constraint::Percentage(60)]).areas(right);
    Member {
        ratings: left,
        suggestions: upper,
        why: lower,
    }
}

/// The audit screen's panes; a pane not shown has an empty area.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Audit {
    /// Coherence and the least coherent items.
    pub coherence: Rect,
    /// The largest misses.
    pub misses: Rect,
    /// Vector lengths and the odd ones.
    pub vectors: Rect,
}

/// The audit screen in `body`; `focus` (0 coherence, 1 misses, 2 vectors) is the pane
/// shown alone when the window is narrow.
pub fn audit(body: Rect, focus: usize) -> Audit {
    if body.width < WIDE_AUDIT {
        let mut a = Audit::default();
        *[&mut a.coherence, &mut a.misses, &mut a.vectors][focus.min(2)] = body;
        return a;
    }
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(52), Constraint::Percentage(48)]).areas(body);
    let [upper, lower] =
        Layout::vertical([Constraint::Percentage(55), Constraint::Percentage(45)]).areas(right);
    Audit {
        coherence: left,
        misses: upper,
        vectors: lower,
    }
}

/// Whether (`column`, `row`) is on a row inside the border of `area`.
pub fn contains(area: Rect, column: u16, row: u16) -> bool {
    let inside = inner(area);
    column >= inside.x && column < inside.right() && row >= inside.y && row < inside.bottom()
}
