//! The list of screens: the tab bar, the keys that switch screens and the help's sections
//! are all generated from [`SCREENS`].
//!
//! Adding a screen touches three files: `screens/NAME.rs` (its state, keys and `update`),
//! `screens/NAME/pane.rs` (its drawing), and this one (a `mod` line, (a variant of [`ScreenId`], a field of
//! [`Screens`], a row of the table, and one arm in each of [`render`] and [`update`]).

use ratatui::Frame;
use ratatui::layout::Rect;

pub mod audit;
pub mod fit;
pub mod items;
pub mod map;
pub mod member;

use super::action::Action;
use super::app::App;
use super::keymap::Binding;
use super::screens::audit::AuditView;
use super::screens::fit::FitView;
use super::screens::items::ItemsScreen;
use super::screens::map::MapView;
use super::screens::member::MemberView;
use super::state::shared::Shared;
use super::theme::Theme;

/// Every screen's own state, owned by the `App`.
pub struct Screens {
    /// The item screen.
    pub items: ItemsScreen,
    /// The member screen (a member or a what-if profile), once one is open.
    pub member: Option<MemberView>,
    /// The map screen.
    pub map: MapView,
    /// The fit screen.
    pub fit: FitView,
    /// The audit screen, once shown.
    pub audit: Option<AuditView>,
}

impl Screens {
    /// Every screen as it starts.
    pub fn new(shared: &Shared) -> Self {
        Self {
            items: ItemsScreen::new(shared),
            member: None,
            map: MapView::default(),
            fit: FitView::default(),
            audit: None,
        }
    }
}

/// Which screen is shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ScreenId {
    /// Catalogue, neighbours, loadings.
    Items,
    /// One member (or a what-if profile): ratings, suggestions, explanation.
    Member,
    /// The items' 2-D map.
    Map,
    /// The fit's health.
    Fit,
    /// Audit: neighbour coherence, largest misses, odd vector lengths.
    Audit,
}

/// One screen: the key that shows it, its name on the tab bar, what it is for, and its
/// own keys.
#[derive(Debug, Clone, Copy)]
pub struct Screen {
    /// Which screen.
    pub id: ScreenId,
    /// The key that shows it.
    pub key: char,
    /// Its name on the tab bar and in the help.
    pub name: &'static str,
    /// One line on what it shows, for the help.
    pub description: &'static str,
    /// Whether it has lists (and so the keys of [`LISTS`](super::keymap::LISTS)).
    pub lists: bool,
    /// Its own keys (besides the keys of every screen).
    pub bindings: &'static [Binding],
}

/// Every screen, in tab order.
pub const SCREENS: &[Screen] = &[
    Screen {
        id: ScreenId::Items,
        key: '1',
        name: "items",
        description: "catalogue, nearest items, factor values",
        lists: true,
        bindings: super::screens::items::BINDINGS,
    },
    Screen {
        id: ScreenId::Member,
        key: '2',
        name: "member",
        description: "a member's ratings, suggestions and why; what-if profiles",
        lists: true,
        bindings: super::screens::member::BINDINGS,
    },
    Screen {
        id: ScreenId::Map,
        key: '3',
        name: "map",
        description: "2-D map of the items (principal components)",
        lists: false,
        bindings: super::screens::map::BINDINGS,
    },
    Screen {
        id: ScreenId::Fit,
        key: '4',
        name: "fit",
        description: "fit health: convergence, accuracy, residuals",
        lists: false,
        bindings: super::screens::fit::BINDINGS,
    },
    Screen {
        id: ScreenId::Audit,
        key: '5',
        name: "audit",
        description: "neighbour coherence, largest misses, odd vectors",
        lists: true,
        bindings: super::screens::audit::BINDINGS,
    },
];

/// The table row of `id`.
pub fn screen(id: ScreenId) -> &'static Screen {
    SCREENS
        .iter()
        .find(|s| s.id == id)
        .expect("every screen has a row in SCREENS")
}

/// Draws screen `id` into `area`.
pub fn render(id: ScreenId, app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    match id {
        ScreenId::Items => items::pane::render(app, frame, area, theme),
        ScreenId::Member => member::pane::render(app, frame, area, theme),
        ScreenId::Map => map::pane::render(app, frame, area, theme),
        ScreenId::Fit => fit::pane::render(app, frame, area, theme),
        ScreenId::Audit => audit::pane::render(app, frame, area, theme),
    }
}

/// Hands `action` to screen `id`'s own update (for actions of its own context).
pub fn update(id: ScreenId, app: &mut App, action: Action) {
    match id {
        ScreenId::Items => app.update_items(action),
        ScreenId::Member => app.update_member(action),
        ScreenId::Map => app.update_map(action),
        ScreenId::Fit => app.update_fit(action),
        ScreenId::Audit => app.update_audit(action),
    }
}
