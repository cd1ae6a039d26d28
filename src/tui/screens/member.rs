//! The member screen's state: one member's ratings beside the model's predictions (or a
//! what-if profile's), their suggestions, the explanation of the highlighted item, and
//! which list has focus; its keys and its update.

pub mod pane;

use ratatui::crossterm::event::KeyCode;
use sextant::analysis::explain::{Explanation, Profile, explain, explain_profile};
use sextant::analysis::{Suggestion, suggest};

use crate::tui::action::{Action, Move};
use crate::tui::app::App;
use crate::tui::keymap::{Binding, bind, chars};
use crate::tui::layout;
use crate::tui::panes::window_start;
use crate::tui::screens::ScreenId;
use crate::tui::state::shared::Shared;
use crate::tui::state::what_if::WhatIf;

const NONE: ratatui::crossterm::event::KeyModifiers = ratatui::crossterm::event::KeyModifiers::NONE;

/// The member screen's own keys.
pub const OWN: &[Binding] = &[
    bind(
        &[(KeyCode::Char('r'), NONE)],
        "r",
        Action::ToggleResidualOrder,
        "",
        "ratings by size of residual, or by title",
    ),
    bind(
        &[(KeyCode::Char('n'), NONE)],
        "n",
        Action::NoteItem,
        "note",
        "curator's note on the highlighted item",
    ),
    bind(
        &[(KeyCode::Char('p'), NONE)],
        "p",
        Action::WritePlain,
        "plain text",
        "write the plain explanation of the highlighted item to a file (asks before replacing one)",
    ),
    bind(
        &[(KeyCode::Char('a'), NONE)],
        "a",
        Action::AddToProfile,
        "",
        "what-if: add the highlighted suggestion to the profile",
    ),
    bind(
        chars!('>', '.'),
        ">",
        Action::RaiseRating,
        "",
        "what-if: raise the highlighted rating one step",
    ),
    bind(
        chars!('<', ','),
        "<",
        Action::LowerRating,
        "",
        "what-if: lower the highlighted rating one step",
    ),
    bind(
        &[(KeyCode::Char('d'), NONE), (KeyCode::Delete, NONE)],
        "d/Del",
        Action::RemoveRating,
        "",
        "what-if: remove the highlighted rating",
    ),
];

/// The member screen's own keys (besides those of lists).
pub const BINDINGS: &[Binding] = OWN;

/// One of the member's ratings, ready to draw.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RatedRow {
    /// The item.
    pub item: u32,
    /// The member's rating.
    pub actual: f64,
    /// The raw prediction.
    pub predicted: f64,
    /// The prediction on the scale (`None` for implicit feedback, whose predictions are
    /// scores).
    pub rounded: Option<f64>,
    /// `actual − predicted`.
    pub residual: f64,
    /// True for a held-out rating.
    pub holdout: bool,
}

/// The member screen's lists, in focus order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MemberPane {
    /// The member's ratings.
    Ratings,
    /// Their suggestions.
    Suggestions,
    /// The explanation of the highlighted item (scrolls).
    Why,
}

/// The member screen's state.
#[derive(Debug, Clone, PartialEq)]
pub struct MemberView {
    /// The member (`None` for a what-if profile started from nobody).
    pub user: Option<u32>,
    /// The what-if profile when the view shows one (ratings editable, vector folded in).
    pub what_if: Option<WhatIf>,
    /// Their ratings.
    pub rated: Vec<RatedRow>,
    /// Their top suggestions.
    pub suggestions: Vec<Suggestion>,
    /// Highlighted rating.
    pub rated_selected: usize,
    /// Highlighted suggestion.
    pub suggestion_selected: usize,
    /// The focused list.
    pub focus: MemberPane,
    /// The list whose highlighted item is explained (the last list focused).
    pub explained_list: MemberPane,
    /// First line of the explanation shown.
    pub why_scroll: usize,
    /// Ratings ordered by |residual| (else by item title).
    pub by_residual: bool,
    /// Explanation of the highlighted item.
    pub explanation: Option<Explanation>,
}

impl MemberView {
    /// The view of fitted member `user`.
    pub fn of_member(shared: &Shared, user: u32) -> Self {
        let model = &shared.model;
        let entries = &model.ratings.entries;
        let start = entries.partition_point(|r| r.user < user);
        let rated = entries[start..]
            .iter()
            .take_while(|r| r.user == user)
            .map(|r| {
                let predicted = model.factors.predict(user, r.item);
                RatedRow {
                    item: r.item,
                    actual: r.value,
                    predicted,
                    rounded: model.round(predicted),
                    residual: r.value - predicted,
                    holdout: r.holdout,
                }
            })
            .collect();
        let suggestions = suggest(model, shared.suggestion_index(), user, 10, false);
        let mut view = Self::empty(Some(user), None);
        view.rated = rated;
        view.suggestions = suggestions;
        view.by_residual = true;
        view.sort(shared);
        view
    }

    /// A view with no rows yet.
    pub fn empty(user: Option<u32>, what_if: Option<WhatIf>) -> Self {
        Self {
            user,
            what_if,
            rated: Vec::new(),
            suggestions: Vec::new(),
            rated_selected: 0,
            suggestion_selected: 0,
            focus: MemberPane::Ratings,
            explained_list: MemberPane::Ratings,
            why_scroll: 0,
            by_residual: false,
            explanation: None,
        }
    }

    /// The item highlighted in the list being explained.
    pub fn highlighted(&self) -> Option<u32> {
        match self.explained_list {
            MemberPane::Suggestions => self
                .suggestions
                .get(self.suggestion_selected)
                .map(|s| s.item),
            _ => self.rated.get(self.rated_selected).map(|r| r.item),
        }
    }

    /// Orders the ratings (by |residual| — for implicit feedback, most chosen first — or by
    /// title) and highlights the first.
    pub fn sort(&mut self, shared: &Shared) {
        if self.by_residual && shared.model.implicit().is_some() {
            self.rated
                .sort_by(|a, b| b.actual.total_cmp(&a.actual).then(a.item.cmp(&b.item)));
        } else if self.by_residual {
            self.rated.sort_by(|a, b| {
                b.residual
                    .abs()
                    .total_cmp(&a.residual.abs())
                    .then(a.item.cmp(&b.item))
            });
        } else {
            self.rated
                .sort_by_cached_key(|r| (shared.title(r.item).to_lowercase(), r.item));
        }
        self.rated_selected = 0;
        self.explain(shared);
    }

    /// Explains the highlighted item again.
    pub fn explain(&mut self, shared: &Shared) {
        self.why_scroll = 0;
        let Some(item) = self.highlighted() else {
            self.explanation = None;
            return;
        };
        let model = &shared.model;
        self.explanation = match (&self.what_if, self.user) {
            (Some(w), _) => Some(explain_profile(
                model,
                &Profile {
                    vector: &w.vector,
                    bias: w.bias,
                    rated: &w.ratings,
                },
                item,
                3,
                &shared.item_counts,
            )),
            (None, Some(user)) => Some(explain(model, user, item, 3, &shared.item_counts)),
            (None, None) => None,
        };
    }

    /// Highlights `item` in the ratings when it is there.
    pub fn highlight_rating(&mut self, item: u32, shared: &Shared) {
        if let Some(at) = self.rated.iter().position(|r| r.item == item) {
            self.rated_selected = at;
            self.focus = MemberPane::Ratings;
            self.explained_list = MemberPane::Ratings;
            self.explain(shared);
        }
    }
}

impl App {
    /// The member screen's layout in the current window.
    pub fn member_layout(&self) -> layout::Member {
        let suggestions = self
            .screens
            .member
            .as_ref()
            .is_some_and(|m| m.explained_list == MemberPane::Suggestions);
        layout::member(layout::body_of(self.size.0, self.size.1), suggestions)
    }

    /// Opens member `user` on the member screen, with `item` highlighted when they rated
    /// it.
    pub fn open_member(&mut self, user: u32, item: Option<u32>) {
        let mut view = MemberView::of_member(&self.shared, user);
        if let Some(item) = item {
            view.highlight_rating(item, &self.shared);
        }
        self.screens.member = Some(view);
        self.shown = ScreenId::Member;
    }

    pub(crate) fn open_member_by_id(&mut self, id: &str) {
        if let Some(user) = self.shared.model.ratings.users.get(id) {
            self.open_member(user, None);
        } else {
            let close = self.shared.model.ratings.users.closest(id, 3).join(", ");
            self.status = format!("no member '{id}'; closest: {close}");
        }
    }

    /// The member screen's own actions.
    pub fn update_member(&mut self, action: Action) {
        match action {
            Action::Show(_) if self.screens.member.is_none() => {
                self.status = "press u to open a member by id, or w to start a what-if".into();
            }
            Action::ToggleResidualOrder => {
                if let Some(m) = &mut self.screens.member {
                    m.by_residual = !m.by_residual;
                    m.sort(&self.shared);
                }
            }
            Action::WritePlain => self.write_plain(false),
            Action::AddToProfile => {
                let item = self
                    .screens
                    .member
                    .as_ref()
                    .filter(|m| m.focus == MemberPane::Suggestions)
                    .and_then(|m| m.suggestions.get(m.suggestion_selected))
                    .map(|s| s.item);
                match item {
                    Some(j) => self.add_to_profile(j),
                    None => self.status = "highlight a suggestion to add (Tab to the list)".into(),
                }
            }
            Action::RaiseRating => self.step_rating(true),
            Action::LowerRating => self.step_rating(false),
            Action::RemoveRating => self.remove_rating(),
            Action::Click(column, row) => self.click_member(column, row),
            _ => {
                let l = self.member_layout();
                if let Some(m) = &mut self.screens.member
                    && let Some(open) = navigate(m, action, &l, &self.shared)
                {
                    self.open_item(open);
                }
            }
        }
    }

    fn click_member(&mut self, column: u16, row: u16) {
        let l = self.member_layout();
        let Some(m) = &mut self.screens.member else {
            return;
        };
        // Each list's first line is its column header.
        let pick = |area, selected: usize, len: usize| {
            let inner = layout::inner(area);
            let height = (inner.height as usize).saturating_sub(1);
            let start = window_start(selected, len, height);
            let line = (row - inner.y) as usize;
            (line >= 1 && start + line - 1 < len).then(|| start + line - 1)
        };
        if layout::contains(l.ratings, column, row) {
            if let Some(at) = pick(l.ratings, m.rated_selected, m.rated.len()) {
                m.rated_selected = at;
            }
            m.focus = MemberPane::Ratings;
            m.explained_list = MemberPane::Ratings;
            m.explain(&self.shared);
        } else if layout::contains(l.suggestions, column, row) {
            if let Some(at) = pick(l.suggestions, m.suggestion_selected, m.suggestions.len()) {
                m.suggestion_selected = at;
            }
            m.focus = MemberPane::Suggestions;
            m.explained_list = MemberPane::Suggestions;
            m.explain(&self.shared);
        } else if layout::contains(l.why, column, row) {
            m.focus = MemberPane::Why;
        }
    }
}

/// Focus, movement and Enter on the member screen; returns an item to open.
fn navigate(
    m: &mut MemberView,
    action: Action,
    l: &layout::Member,
    shared: &Shared,
) -> Option<u32> {
    const ORDER: [MemberPane; 3] = [
        MemberPane::Ratings,
        MemberPane::Suggestions,
        MemberPane::Why,
    ];
    match action {
        Action::FocusNext | Action::FocusPrevious => {
            let at = ORDER.iter().position(|&p| p == m.focus).unwrap_or(0);
            let step = if action == Action::FocusNext { 1 } else { 2 };
            m.focus = ORDER[(at + step) % ORDER.len()];
            if m.focus != MemberPane::Why && m.focus != m.explained_list {
                m.explained_list = m.focus;
                m.explain(shared);
            }
            None
        }
        Action::Select(movement) => {
            let page = |area| (layout::inner(area).height as usize).saturating_sub(1);
            match m.focus {
                MemberPane::Ratings => {
                    m.rated_selected =
                        movement.apply(m.rated_selected, m.rated.len(), page(l.ratings));
                    m.explain(shared);
                }
                MemberPane::Suggestions => {
                    m.suggestion_selected = movement.apply(
                        m.suggestion_selected,
                        m.suggestions.len(),
                        page(l.suggestions),
                    );
                    m.explain(shared);
                }
                MemberPane::Why => {
                    let lines = m
                        .explanation
                        .as_ref()
                        .map_or(0, crate::tui::screens::member::pane::why_line_count);
                    let height = layout::inner(l.why).height as usize;
                    let last = lines.saturating_sub(height);
                    m.why_scroll = match movement {
                        Move::First => 0,
                        Move::Last => last,
                        _ => movement.apply(m.why_scroll, last + 1, height),
                    };
                }
            }
            None
        }
        Action::Open => match m.focus {
            MemberPane::Why => None,
            _ => m.highlighted(),
        },
        _ => None,
    }
}
