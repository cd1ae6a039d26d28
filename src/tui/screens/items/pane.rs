//! The item screen: catalogue, neighbours and loadings, placed by `layout::items`.

use ratatui::Frame;
use ratatui::layout::Rect;

use crate::tui::app::App;
use crate::tui::layout;
use crate::tui::screens::items::ItemsPane;
use crate::tui::theme::Theme;

/// Draws the item screen into `body`.
pub fn render(app: &App, frame: &mut Frame<'_>, body: Rect, theme: Theme) {
    let l = layout::items(
        body,
        app.shared.model.factors.rank,
        app.screens.items.focus == ItemsPane::Loadings,
    );
    crate::tui::panes::catalogue::render(app, frame, l.catalogue, theme);
    if !l.neighbours.is_empty() {
        crate::tui::panes::neighbours::render(app, frame, l.neighbours, theme);
    }
    if !l.loadings.is_empty() {
        crate::tui::panes::loadings::render(app, frame, l.loadings, theme);
    }
}
