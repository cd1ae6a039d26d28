//! The item screen's state: the catalogue, the current item with its neighbours and
//! loadings, the history of items visited, and which pane has focus; its keys and its
//! update.

pub mod pane;

use ratatui::crossterm::event::KeyCode;
use sextant::analysis::{Closeness, closeness};
use sextant::index::Metric;

use crate::tui::action::{Action, Move};
use crate::tui::app::App;
use crate::tui::keymap::{Binding, bind, chars};
use crate::tui::layout;
use crate::tui::panes::window_start;
use crate::tui::state::catalogue::Catalogue;
use crate::tui::state::shared::Shared;

const NONE: ratatui::crossterm::event::KeyModifiers = ratatui::crossterm::event::KeyModifiers::NONE;

/// The item screen's own keys.
pub const OWN: &[Binding] = &[
    bind(
        &[(KeyCode::Char('['), NONE), (KeyCode::Backspace, NONE)],
        "[",
        Action::Back,
        "back",
        "back to the previous item",
    ),
    bind(
        &[(KeyCode::Char(']'), NONE)],
        "]",
        Action::Forward,
        "",
        "forward again",
    ),
    bind(
        &[(KeyCode::Char('/'), NONE)],
        "/",
        Action::StartSearch,
        "find",
        "filter the catalogue by id, title or category",
    ),
    bind(
        &[(KeyCode::Char('x'), NONE)],
        "x",
        Action::ClearSearch,
        "",
        "clear the filter",
    ),
    bind(
        &[(KeyCode::Char('o'), NONE)],
        "o",
        Action::CycleSort,
        "",
        "order the catalogue by title, category or rating count",
    ),
    bind(
        &[(KeyCode::Char('m'), NONE)],
        "m",
        Action::ToggleMetric,
        "metric",
        "switch neighbours between Euclidean distance and cosine",
    ),
    bind(
        chars!('+', '='),
        "+",
        Action::MoreNeighbours,
        "",
        "more neighbours",
    ),
    bind(
        &[(KeyCode::Char('-'), NONE)],
        "-",
        Action::FewerNeighbours,
        "",
        "fewer neighbours",
    ),
    bind(
        &[(KeyCode::Char('n'), NONE)],
        "n",
        Action::NoteItem,
        "note",
        "curator's note on the current item (saved with the model; empty removes it)",
    ),
    bind(
        &[(KeyCode::Char('f'), NONE)],
        "f",
        Action::FlagPair,
        "",
        "flag the highlighted neighbour as a wrong neighbour of the current item, or unflag it",
    ),
    bind(
        chars!('L'),
        "L",
        Action::LabelFactor,
        "",
        "label the highlighted factor (loadings pane; empty removes the label)",
    ),
    bind(
        &[(KeyCode::Char('a'), NONE)],
        "a",
        Action::AddToProfile,
        "",
        "add the current item to the what-if profile (starts one when none is open)",
    ),
];

/// The item screen's own keys (besides those of lists).
pub const BINDINGS: &[Binding] = OWN;

/// Panes of the item screen, in focus order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ItemsPane {
    /// The list of every item.
    Catalogue,
    /// The current item's nearest items.
    Neighbours,
    /// The current item's factor values.
    Loadings,
}

const PANES: [ItemsPane; 3] = [
    ItemsPane::Catalogue,
    ItemsPane::Neighbours,
    ItemsPane::Loadings,
];

/// One row of the neighbours pane.
#[derive(Debug, Clone, PartialEq)]
pub struct NeighbourRow {
    /// The item.
    pub item: u32,
    /// Distance and cosine to the current item.
    pub near: Closeness,
}

/// The item screen's state.
#[derive(Debug, Clone)]
pub struct ItemsScreen {
    /// The catalogue.
    pub catalogue: Catalogue,
    /// The item whose neighbours and loadings are shown.
    pub current: Option<u32>,
    /// Neighbours of the current item.
    pub neighbours: Vec<NeighbourRow>,
    /// Highlighted neighbour.
    pub neighbour_selected: usize,
    /// Highlighted factor (0-based).
    pub factor_selected: usize,
    /// Items loading most positively and most negatively on the highlighted factor.
    pub factor_extremes: sextant::analysis::loadings::Extremes,
    /// Categories over-represented among the highlighted factor's 8 most positive and 8
    /// most negative items, e.g. "cakes 5/8".
    pub factor_favours: (Vec<String>, Vec<String>),
    /// Ranking metric of the neighbours.
    pub metric: Metric,
    /// How many neighbours to show.
    pub k: usize,
    /// Focused pane.
    pub focus: ItemsPane,
    history: Vec<u32>,
    future: Vec<u32>,
}

impl ItemsScreen {
    /// The screen with the catalogue in title order and nothing current yet.
    pub fn new(shared: &Shared) -> Self {
        Self {
            catalogue: Catalogue::new(shared),
            current: None,
            neighbours: Vec::new(),
            neighbour_selected: 0,
            factor_selected: 0,
            factor_extremes: (Vec::new(), Vec::new()),
            factor_favours: (Vec::new(), Vec::new()),
            metric: Metric::Euclidean,
            k: 10,
            focus: ItemsPane::Catalogue,
            history: Vec::new(),
            future: Vec::new(),
        }
    }

    /// The item the focused pane highlights (the current item for the loadings).
    pub fn highlighted(&self) -> Option<u32> {
        match self.focus {
            ItemsPane::Catalogue => self.catalogue.highlighted(),
            ItemsPane::Neighbours => self.neighbours.get(self.neighbour_selected).map(|n| n.item),
            ItemsPane::Loadings => self.current,
        }
    }

    /// The neighbours of the current item, from the index.
    pub fn refresh_neighbours(&mut self, shared: &Shared) -> Result<(), String> {
        let Some(j) = self.current else {
            return Ok(());
        };
        let f = &shared.model.factors;
        let found = shared
            .neighbour_index(self.metric)
            .nearest_to_row(j, self.k);
        let result = match found {
            Ok(found) => {
                self.neighbours = found
                    .iter()
                    .map(|n| NeighbourRow {
                        item: n.row,
                        near: closeness(f.item(j), f.item(n.row)),
                    })
                    .collect();
                Ok(())
            }
            Err(e) => {
                self.neighbours.clear();
                Err(format!("{}: {e}", shared.item_id(j)))
            }
        };
        self.neighbour_selected = self
            .neighbour_selected
            .min(self.neighbours.len().saturating_sub(1));
        result
    }

    /// The highlighted factor's extreme items and the categories they over-represent.
    pub fn refresh_factor(&mut self, shared: &Shared) {
        use sextant::analysis::loadings::{enrichment, factor_extremes};
        use sextant::analysis::stats::LnFactorial;
        const SHOWN: usize = 4;
        const TESTED: usize = 8;
        let f = &shared.model.factors;
        let (mut top, mut bottom) = factor_extremes(&f.items, f.rank, self.factor_selected, TESTED);
        let (categories, sizes) = shared.category_sizes();
        let table = LnFactorial::new(0);
        let names = |end: &[(u32, f64)]| -> Vec<String> {
            enrichment(end, categories, sizes, f.item_count(), &table)
                .iter()
                .map(|e| {
                    format!(
                        "{} {}/{}",
                        categories.names[e.category as usize],
                        e.count,
                        end.len()
                    )
                })
                .collect()
        };
        self.factor_favours = (names(&top), names(&bottom));
        top.truncate(SHOWN);
        bottom.truncate(SHOWN);
        self.factor_extremes = (top, bottom);
    }
}

impl App {
    /// The item screen's layout in the current window.
    pub fn items_layout(&self) -> layout::Items {
        layout::items(
            layout::body_of(self.size.0, self.size.1),
            self.shared.model.factors.rank,
            self.screens.items.focus == ItemsPane::Loadings,
        )
    }

    /// The item screen's own actions.
    pub fn update_items(&mut self, action: Action) {
        match action {
            Action::FocusNext | Action::FocusPrevious => {
                let at = PANES
                    .iter()
                    .position(|&p| p == self.screens.items.focus)
                    .unwrap_or(0);
                let step = if action == Action::FocusNext { 1 } else { 2 };
                self.screens.items.focus = PANES[(at + step) % PANES.len()];
                if self.screens.items.focus == ItemsPane::Loadings {
                    self.defer_factor();
                }
            }
            Action::Select(movement) => self.move_in_items(movement),
            Action::Open => match self.screens.items.focus {
                ItemsPane::Neighbours => {
                    if let Some(j) = self.screens.items.highlighted() {
                        self.visit(j);
                    }
                }
                ItemsPane::Catalogue => self.screens.items.focus = ItemsPane::Neighbours,
                ItemsPane::Loadings => {
                    self.status = "L labels the highlighted factor".into();
                }
            },
            Action::Back => self.go_back(),
            Action::Forward => self.go_forward(),
            Action::StartSearch => {
                self.mode = crate::tui::app::Mode::Search;
                self.screens.items.focus = ItemsPane::Catalogue;
            }
            Action::ClearSearch => self.set_filter(String::new()),
            Action::ToggleMetric => {
                self.screens.items.metric = match self.screens.items.metric {
                    Metric::Euclidean => Metric::Cosine,
                    Metric::Cosine => Metric::Euclidean,
                };
                self.refresh_neighbours();
            }
            Action::MoreNeighbours => {
                self.screens.items.k = (self.screens.items.k + 5).min(100);
                self.refresh_neighbours();
            }
            Action::FewerNeighbours => {
                self.screens.items.k = self.screens.items.k.saturating_sub(5).max(5);
                self.refresh_neighbours();
            }
            Action::CycleSort => {
                self.screens.items.catalogue.order = self.screens.items.catalogue.order.next();
                self.screens.items.catalogue.sort(&self.shared);
                self.select_in_catalogue(0);
            }
            Action::FlagPair => self.toggle_pair_flag(),
            Action::LabelFactor => self.begin_factor_label(),
            Action::AddToProfile => match self.screens.items.current {
                Some(j) => self.add_to_profile(j),
                None => self.status = "no current item to add".into(),
            },
            Action::Click(column, row) => self.click_items(column, row),
            _ => {}
        }
    }

    fn move_in_items(&mut self, movement: Move) {
        let l = self.items_layout();
        match self.screens.items.focus {
            ItemsPane::Catalogue => {
                let page = layout::inner(l.catalogue).height as usize;
                let c = &self.screens.items.catalogue;
                let at = movement.apply(c.selected, c.visible.len(), page);
                self.select_in_catalogue(at);
            }
            ItemsPane::Neighbours => {
                let page = (layout::inner(l.neighbours).height as usize).saturating_sub(1);
                let s = &mut self.screens.items;
                s.neighbour_selected =
                    movement.apply(s.neighbour_selected, s.neighbours.len(), page);
            }
            ItemsPane::Loadings => {
                let page = layout::inner(l.loadings).height as usize;
                let rank = self.shared.model.factors.rank;
                self.screens.items.factor_selected =
                    movement.apply(self.screens.items.factor_selected, rank, page);
                self.defer_factor();
            }
        }
    }

    fn click_items(&mut self, column: u16, row: u16) {
        let l = self.items_layout();
        if layout::contains(l.catalogue, column, row) {
            self.screens.items.focus = ItemsPane::Catalogue;
            let inner = layout::inner(l.catalogue);
            let c = &self.screens.items.catalogue;
            let start = window_start(c.selected, c.visible.len(), inner.height as usize);
            let at = start + (row - inner.y) as usize;
            if at < c.visible.len() {
                self.select_in_catalogue(at);
            }
        } else if layout::contains(l.neighbours, column, row) {
            self.screens.items.focus = ItemsPane::Neighbours;
            // The first line of the pane is its column header.
            let inner = layout::inner(l.neighbours);
            let s = &mut self.screens.items;
            let height = (inner.height as usize).saturating_sub(1);
            let start = window_start(s.neighbour_selected, s.neighbours.len(), height);
            let line = (row - inner.y) as usize;
            if line >= 1 && start + line - 1 < s.neighbours.len() {
                s.neighbour_selected = start + line - 1;
            }
        } else if layout::contains(l.loadings, column, row) {
            self.screens.items.focus = ItemsPane::Loadings;
            self.defer_factor();
        }
    }

    /// Makes `j` the current item on the item screen, remembering the one it replaces,
    /// and shows the screen with the neighbours focused.
    pub fn open_item(&mut self, j: u32) {
        self.shown = crate::tui::screens::ScreenId::Items;
        self.screens.items.focus = ItemsPane::Neighbours;
        self.visit(j);
    }

    /// Makes `j` the current item, remembering the one it replaces for going back.
    pub(crate) fn visit(&mut self, j: u32) {
        if let Some(previous) = self.screens.items.current {
            self.screens.items.history.push(previous);
        }
        self.screens.items.future.clear();
        self.show_item(j);
        self.screens.items.catalogue.reveal(j);
    }

    pub(crate) fn select_in_catalogue(&mut self, at: usize) {
        self.screens.items.catalogue.selected = at;
        if let Some(j) = self.screens.items.catalogue.highlighted()
            && self.screens.items.current != Some(j)
        {
            if let Some(previous) = self.screens.items.current {
                self.screens.items.history.push(previous);
                self.screens.items.future.clear();
            }
            self.show_item(j);
        }
    }

    fn go_back(&mut self) {
        let Some(j) = self.screens.items.history.pop() else {
            self.status = "nothing to go back to".into();
            return;
        };
        if let Some(current) = self.screens.items.current {
            self.screens.items.future.push(current);
        }
        self.show_item(j);
        self.screens.items.catalogue.reveal(j);
    }

    fn go_forward(&mut self) {
        let Some(j) = self.screens.items.future.pop() else {
            self.status = "nothing to go forward to".into();
            return;
        };
        if let Some(current) = self.screens.items.current {
            self.screens.items.history.push(current);
        }
        self.show_item(j);
        self.screens.items.catalogue.reveal(j);
    }

    fn show_item(&mut self, j: u32) {
        self.screens.items.current = Some(j);
        self.screens.items.neighbour_selected = 0;
        if self.deferred.enabled {
            self.deferred.neighbours = true;
        } else {
            self.refresh_neighbours();
        }
    }

    pub(crate) fn refresh_neighbours(&mut self) {
        if let Err(e) = self.screens.items.refresh_neighbours(&self.shared) {
            self.status = e;
        }
    }

    fn defer_factor(&mut self) {
        if self.deferred.enabled {
            self.deferred.factor = true;
        } else {
            self.screens.items.refresh_factor(&self.shared);
        }
    }

    /// Sets the catalogue filter (the matching waits for a pause in typing when deferred).
    pub(crate) fn set_filter(&mut self, filter: String) {
        self.screens.items.catalogue.filter = filter;
        if self.deferred.enabled {
            // Matching walks the whole catalogue: wait until typing pauses.
            self.deferred.filter = true;
        } else {
            self.refilter();
        }
    }

    pub(crate) fn refilter(&mut self) {
        self.screens.items.catalogue.apply_filter(&self.shared);
        self.screens.items.catalogue.selected = 0;
        match self.screens.items.current {
            // Keep the current item when it still matches; otherwise show the first match.
            Some(j) if self.screens.items.catalogue.visible.contains(&j) => {
                self.screens.items.catalogue.reveal(j);
            }
            _ => self.select_in_catalogue(0),
        }
    }
}
