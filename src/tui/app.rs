//! The explorer's state and the one place it changes (`App::update`). Derived rows
//! (neighbours, loadings) are recomputed when the selection changes, never per frame.

use sextant::analysis::explain::{Explanation, explain};
use sextant::analysis::metrics::residual_histogram;
use sextant::analysis::{Projection, Suggestion, cosine, pca_2d, suggest};
use sextant::index::{InnerProductIndex, Metric, NeighbourIndex, Path, squared_distance};
use sextant::model::Model;

use super::action::Action;

/// Panes that can have focus.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Pane {
    /// The list of every item.
    Catalogue,
    /// The current item's nearest items.
    Neighbours,
    /// The current item's factor values.
    Loadings,
}

const PANES: [Pane; 3] = [Pane::Catalogue, Pane::Neighbours, Pane::Loadings];

/// What keys currently do.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mode {
    /// Browsing.
    Normal,
    /// Typing a catalogue filter.
    Search,
    /// Typing a line of text for [`App::prompt`] (a member id, a note, a label).
    Prompt,
    /// The help overlay is open.
    Help,
}

/// Which screen is shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Screen {
    /// Catalogue, neighbours, loadings.
    Items,
    /// One member: ratings, suggestions, explanation.
    Member,
    /// The items' 2-D map.
    Map,
    /// The fit's health.
    Fit,
    /// Audit: neighbour coherence, worst fits, odd vector lengths.
    Audit,
}

/// The audit screen's figures, computed the first time it is shown.
#[derive(Debug, Clone)]
pub struct AuditView {
    /// The items' categories.
    pub categories: sextant::analysis::coherence::Categories,
    /// Neighbour coherence (cosine, 10 neighbours), over a sample in large catalogues.
    pub coherence: Option<sextant::analysis::coherence::Coherence>,
    /// True when coherence covers a sample of the items.
    pub sampled: bool,
    /// Least coherent items, the selectable list.
    pub least: Vec<sextant::analysis::coherence::ItemCoherence>,
    /// Largest misses on held-out ratings (training ones when nothing is held out).
    pub worst: Vec<sextant::analysis::diagnostics::Miss>,
    /// True when `worst` lists held-out ratings.
    pub worst_held_out: bool,
    /// Vector-length summaries of members and items.
    pub norms: Vec<sextant::analysis::diagnostics::NormReport>,
    /// Prior-dominated members and items.
    pub thin: (usize, usize),
    /// Highlighted row of `least`.
    pub selected: usize,
}

/// Most items the explorer's coherence check examines (a larger catalogue is sampled;
/// `sextant audit` examines every item).
pub const AUDIT_SAMPLE: usize = 20_000;

/// One of the member's ratings, ready to draw.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RatedRow {
    /// The item.
    pub item: u32,
    /// The member's rating.
    pub actual: f64,
    /// The raw prediction.
    pub predicted: f64,
    /// The prediction on the scale.
    pub rounded: f64,
    /// `actual − predicted`.
    pub residual: f64,
    /// True for a held-out rating.
    pub holdout: bool,
}

/// What the text being typed is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Prompt {
    /// A member id to open.
    Member,
    /// A curator's note on an item.
    ItemNote(u32),
    /// A curator's label for a factor (0-based).
    FactorLabel(usize),
    /// A directory to save the notes to when the model's own cannot take them.
    NotesDir,
}

/// The member screen's state.
#[derive(Debug, Clone, PartialEq)]
pub struct MemberView {
    /// The member (`None` for a what-if profile started from nobody).
    pub user: Option<u32>,
    /// The what-if profile when the view shows one (ratings editable, vector folded in).
    pub what_if: Option<super::workbench::WhatIf>,
    /// Their ratings.
    pub rated: Vec<RatedRow>,
    /// Their top suggestions.
    pub suggestions: Vec<Suggestion>,
    /// Highlighted row of the focused list.
    pub selected: usize,
    /// True when the suggestions list has focus (else the ratings).
    pub in_suggestions: bool,
    /// Ratings ordered by |residual| (else by item title).
    pub by_residual: bool,
    /// Explanation of the highlighted item.
    pub explanation: Option<Explanation>,
}

/// Catalogue order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Order {
    /// By title (then id).
    Title,
    /// By category, then title.
    Category,
    /// By number of training ratings, most first.
    Ratings,
}

/// One row of the neighbours pane, ready to draw.
#[derive(Debug, Clone, PartialEq)]
pub struct NeighbourRow {
    /// The item.
    pub item: u32,
    /// Euclidean distance between the raw vectors.
    pub distance: f64,
    /// Cosine similarity (none for zero vectors).
    pub cosine: Option<f64>,
}

/// The explorer's whole state.
pub struct App {
    /// The model being explored.
    pub model: Model,
    /// How the model is named in the header.
    pub label: String,
    /// Training ratings per item.
    pub item_counts: Vec<u32>,
    /// Every item in the current order.
    order_all: Vec<u32>,
    /// Items passing the filter, in order.
    pub visible: Vec<u32>,
    /// Row of `visible` that is highlighted.
    pub catalogue_selected: usize,
    /// The filter text.
    pub filter: String,
    /// Catalogue order.
    pub order: Order,
    /// The item whose neighbours and loadings are shown.
    pub current: Option<u32>,
    /// Neighbours of the current item.
    pub neighbours: Vec<NeighbourRow>,
    /// Highlighted neighbour.
    pub neighbour_selected: usize,
    /// Highlighted factor in the loadings pane.
    pub factor_selected: usize,
    /// Items loading most positively and most negatively on the highlighted factor.
    pub factor_extremes: sextant::analysis::loadings::Extremes,
    /// Categories over-represented among the highlighted factor's 8 most positive and 8
    /// most negative items, e.g. "cakes 5/8".
    pub factor_favours: (Vec<String>, Vec<String>),
    category_sizes: Option<(sextant::analysis::coherence::Categories, Vec<usize>)>,
    /// Ranking metric of the neighbours pane.
    pub metric: Metric,
    /// How many neighbours to show.
    pub k: usize,
    /// Focused pane.
    pub focus: Pane,
    /// Keys' meaning.
    pub mode: Mode,
    /// Items visited before the current one.
    history: Vec<u32>,
    /// Items to go forward to.
    future: Vec<u32>,
    /// A message for the status line.
    pub status: String,
    /// Rows a page moves (set from the last frame's list height).
    pub page: usize,
    /// Where the last frame drew the catalogue and neighbour lists (for mouse clicks).
    pub catalogue_area: ratatui::layout::Rect,
    /// See `catalogue_area`.
    pub neighbours_area: ratatui::layout::Rect,
    /// Extent of the map, `[[x0, x1], [y0, y1]]`, and the distinct categories in order,
    /// computed with the projection so that a frame does not walk the catalogue.
    pub map_extent: [[f64; 2]; 2],
    /// Distinct categories, sorted (map colours and legend).
    pub categories: Vec<String>,
    /// True once the person asked to leave.
    pub quit: bool,
    /// Work that waits until input pauses.
    pub deferred: Deferred,
    euclidean: Option<NeighbourIndex>,
    cosine: Option<NeighbourIndex>,
    /// The screen shown.
    pub screen: Screen,
    /// The open member, if any.
    pub member: Option<MemberView>,
    /// What the text being typed is for.
    pub prompt: Prompt,
    /// The text being typed.
    pub prompt_input: String,
    /// Curator notes of the model (saved to its directory when it has one).
    pub notes: sextant::model::notes::Notes,
    /// The items' PCA map, computed the first time the map is shown.
    pub projection: Option<Projection>,
    /// Map zoom (1 = everything) and centre in map coordinates.
    pub map_zoom: f64,
    /// Map centre.
    pub map_centre: [f64; 2],
    /// Training residuals in bins (centre, count).
    pub histogram: Vec<(f64, u64)>,
    pub(crate) suggestions_index: Option<InnerProductIndex>,
    /// The audit screen, once shown.
    pub audit: Option<AuditView>,
    /// Set when quit was pressed once with unsaved notes (a second press quits).
    pub quit_armed: bool,
}

impl App {
    /// The explorer on `model`, with the first item selected.
    pub fn new(model: Model, label: impl Into<String>) -> Self {
        let item_counts = model.ratings.train_support().1;
        let mut app = Self {
            model,
            label: label.into(),
            item_counts,
            order_all: Vec::new(),
            visible: Vec::new(),
            catalogue_selected: 0,
            filter: String::new(),
            order: Order::Title,
            current: None,
            neighbours: Vec::new(),
            neighbour_selected: 0,
            factor_selected: 0,
            factor_extremes: (Vec::new(), Vec::new()),
            factor_favours: (Vec::new(), Vec::new()),
            category_sizes: None,
            metric: Metric::Euclidean,
            k: 10,
            focus: Pane::Catalogue,
            mode: Mode::Normal,
            history: Vec::new(),
            future: Vec::new(),
            status: String::new(),
            page: 10,
            deferred: Deferred::default(),
            catalogue_area: ratatui::layout::Rect::default(),
            neighbours_area: ratatui::layout::Rect::default(),
            map_extent: [[0.0, 1.0], [0.0, 1.0]],
            categories: Vec::new(),
            quit: false,
            euclidean: None,
            cosine: None,
            screen: Screen::Items,
            member: None,
            prompt: Prompt::Member,
            prompt_input: String::new(),
            notes: sextant::model::notes::Notes::in_memory(),
            projection: None,
            map_zoom: 1.0,
            map_centre: [0.0, 0.0],
            histogram: Vec::new(),
            suggestions_index: None,
            audit: None,
            quit_armed: false,
        };

        let mut categories: Vec<String> = app
            .model
            .meta
            .iter()
            .flat_map(|m| m.rows.iter().flatten().filter_map(|r| r.category.clone()))
            .collect();
        categories.sort_unstable();
        categories.dedup();
        app.categories = categories;
        app.sort_catalogue();
        app.select_in_catalogue(0);
        app
    }

    /// Title of item `j` (its id when there is no metadata).
    pub fn title(&self, j: u32) -> &str {
        self.model
            .meta
            .as_ref()
            .and_then(|m| m.get(j))
            .and_then(|m| m.title.as_deref())
            .unwrap_or_else(|| self.model.ratings.items.name(j))
    }

    /// Category of item `j`, if known.
    pub fn category(&self, j: u32) -> Option<&str> {
        self.model
            .meta
            .as_ref()
            .and_then(|m| m.get(j))
            .and_then(|m| m.category.as_deref())
    }

    /// Applies one action.
    pub fn update(&mut self, action: Action) {
        self.status.clear();
        if action != Action::Quit {
            self.quit_armed = false;
        }
        match action {
            Action::Quit => {
                if self.mode == Mode::Help {
                    self.mode = Mode::Normal;
                } else if self.notes.unsaved() && !self.quit_armed {
                    // Notes that could not be saved are not dropped without a word.
                    self.quit_armed = true;
                    self.status =
                        "curator notes are not saved: S saves them elsewhere; q again quits without them"
                            .into();
                } else {
                    self.quit = true;
                }
            }
            Action::ToggleHelp => {
                self.mode = if self.mode == Mode::Help {
                    Mode::Normal
                } else {
                    Mode::Help
                }
            }
            Action::FocusNextPane | Action::FocusPreviousPane if self.screen == Screen::Member => {
                if let Some(m) = &mut self.member {
                    m.in_suggestions = !m.in_suggestions;
                    m.selected = 0;
                }
                self.explain_selected();
            }
            Action::SelectNext | Action::SelectPrevious | Action::PageDown | Action::PageUp
                if self.screen == Screen::Map =>
            {
                self.pan(action);
            }
            Action::MoreNeighbours if self.screen == Screen::Map => {
                self.map_zoom = (self.map_zoom * 1.5).min(200.0);
            }
            Action::FewerNeighbours if self.screen == Screen::Map => {
                self.map_zoom = (self.map_zoom / 1.5).max(1.0);
            }
            Action::SelectNext
            | Action::SelectPrevious
            | Action::PageDown
            | Action::PageUp
            | Action::SelectFirst
            | Action::SelectLast
                if self.screen == Screen::Audit =>
            {
                self.move_in_audit(action);
            }
            Action::Open if self.screen == Screen::Audit => self.open_audited(),
            Action::ShowAudit => {
                if self.audit.is_none() {
                    self.audit = Some(self.compute_audit());
                }
                self.screen = Screen::Audit;
            }
            Action::SelectNext
            | Action::SelectPrevious
            | Action::PageDown
            | Action::PageUp
            | Action::SelectFirst
            | Action::SelectLast
                if self.screen == Screen::Member =>
            {
                self.move_in_member(action);
            }
            Action::ShowItems => self.screen = Screen::Items,
            Action::ShowMember => {
                self.screen = Screen::Member;
                if self.member.is_none() {
                    self.status = "press u to open a member by id".into();
                }
            }
            Action::ShowMap => {
                if self.projection.is_none() {
                    let f = &self.model.factors;
                    let p = pca_2d(&f.items, f.rank);
                    let extent = |k: usize| {
                        p.points
                            .iter()
                            .fold([f64::INFINITY, f64::NEG_INFINITY], |[lo, hi], q| {
                                [lo.min(q[k]), hi.max(q[k])]
                            })
                    };
                    self.map_extent = [extent(0), extent(1)];
                    self.projection = Some(p);
                }
                self.screen = Screen::Map;
            }
            Action::ShowFit => {
                if self.histogram.is_empty() {
                    self.histogram =
                        residual_histogram(&self.model.factors, &self.model.ratings, 21, 3.0);
                }
                self.screen = Screen::Fit;
            }
            Action::FindMember => self.start_prompt(Prompt::Member, String::new()),
            Action::NoteItem
            | Action::LabelFactor
            | Action::FlagPair
            | Action::WritePlain
            | Action::WhatIf
            | Action::AddToProfile
            | Action::RaiseRating
            | Action::LowerRating
            | Action::RemoveRating
            | Action::SaveNotesElsewhere => self.workbench(action),
            Action::ToggleResidualOrder => {
                if let Some(m) = &mut self.member {
                    m.by_residual = !m.by_residual;
                }
                self.sort_member_ratings();
            }
            Action::FocusNextPane => {
                self.focus = PANES[(self.focus_index() + 1) % PANES.len()];
                self.refresh_factor();
            }
            Action::FocusPreviousPane => {
                self.focus = PANES[(self.focus_index() + PANES.len() - 1) % PANES.len()];
                self.refresh_factor();
            }
            Action::SelectNext => self.move_selection(1),
            Action::SelectPrevious => self.move_selection(-1),
            Action::PageDown => self.move_selection(self.page as isize),
            Action::PageUp => self.move_selection(-(self.page as isize)),
            Action::SelectFirst => self.move_selection(isize::MIN / 2),
            Action::SelectLast => self.move_selection(isize::MAX / 2),
            Action::Open => self.open_highlighted(),
            Action::Back => self.go_back(),
            Action::Forward => self.go_forward(),
            Action::StartSearch => {
                self.mode = Mode::Search;
                self.focus = Pane::Catalogue;
            }
            Action::ClearSearch => self.set_filter(String::new()),
            Action::ToggleMetric => {
                self.metric = match self.metric {
                    Metric::Euclidean => Metric::Cosine,
                    Metric::Cosine => Metric::Euclidean,
                };
                self.refresh_neighbours();
            }
            Action::MoreNeighbours => {
                self.k = (self.k + 5).min(100);
                self.refresh_neighbours();
            }
            Action::FewerNeighbours => {
                self.k = self.k.saturating_sub(5).max(5);
                self.refresh_neighbours();
            }
            Action::CycleSort => {
                self.order = match self.order {
                    Order::Title => Order::Category,
                    Order::Category => Order::Ratings,
                    Order::Ratings => Order::Title,
                };
                self.sort_catalogue();
                self.select_in_catalogue(0);
            }
        }
    }

    /// A typed character or editing key while in search mode.
    pub fn search_input(&mut self, edit: SearchEdit) {
        match edit {
            SearchEdit::Insert(c) => {
                let mut f = self.filter.clone();
                f.push(c);
                self.set_filter(f);
            }
            SearchEdit::Delete => {
                let mut f = self.filter.clone();
                f.pop();
                self.set_filter(f);
            }
            SearchEdit::Accept => self.mode = Mode::Normal,
            SearchEdit::Cancel => {
                self.mode = Mode::Normal;
                self.set_filter(String::new());
            }
        }
    }

    /// Starts typing a line of text for `prompt`, starting from `text`.
    pub fn start_prompt(&mut self, prompt: Prompt, text: String) {
        self.mode = Mode::Prompt;
        self.prompt = prompt;
        self.prompt_input = text;
    }

    /// A typed character or editing key while a prompt is open.
    pub fn prompt_edit(&mut self, edit: SearchEdit) {
        match edit {
            SearchEdit::Insert(c) => {
                if self.prompt_input.chars().count() < sextant::model::notes::MAX_NOTE_CHARS {
                    self.prompt_input.push(c);
                }
            }
            SearchEdit::Delete => {
                self.prompt_input.pop();
            }
            SearchEdit::Cancel => self.mode = Mode::Normal,
            SearchEdit::Accept => {
                self.mode = Mode::Normal;
                let text = std::mem::take(&mut self.prompt_input);
                match self.prompt {
                    Prompt::Member => self.open_member_by_id(text.trim()),
                    Prompt::ItemNote(j) => self.set_item_note(j, &text),
                    Prompt::FactorLabel(f) => self.set_factor_label(f, &text),
                    Prompt::NotesDir => self.save_notes_to(text.trim()),
                }
            }
        }
    }

    fn open_member_by_id(&mut self, id: &str) {
        if let Some(user) = self.model.ratings.users.get(id) {
            self.open_member(user);
        } else {
            let close = self.model.ratings.users.closest(id, 3).join(", ");
            self.status = format!("no member '{id}'; closest: {close}");
        }
    }

    /// Opens member `user` on the member screen.
    pub fn open_member(&mut self, user: u32) {
        let model = &self.model;
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
                    rounded: model.manifest.scale.round(predicted),
                    residual: r.value - predicted,
                    holdout: r.holdout,
                }
            })
            .collect();
        let f = &model.factors;
        let index = self
            .suggestions_index
            .get_or_insert_with(|| InnerProductIndex::build(&f.items, f.rank, Path::Auto));
        let suggestions = suggest(model, index, user, 10, false);
        self.member = Some(MemberView {
            user: Some(user),
            what_if: None,
            rated,
            suggestions,
            selected: 0,
            in_suggestions: false,
            by_residual: true,
            explanation: None,
        });
        self.sort_member_ratings();
        self.screen = Screen::Member;
    }

    pub(crate) fn sort_member_ratings(&mut self) {
        let Some(mut m) = self.member.take() else {
            return;
        };
        if m.by_residual {
            m.rated.sort_by(|a, b| {
                b.residual
                    .abs()
                    .total_cmp(&a.residual.abs())
                    .then(a.item.cmp(&b.item))
            });
        } else {
            m.rated
                .sort_by_cached_key(|r| (self.title(r.item).to_lowercase(), r.item));
        }
        m.selected = 0;
        self.member = Some(m);
        self.explain_selected();
    }

    fn move_in_member(&mut self, action: Action) {
        let page = self.page;
        let Some(m) = &mut self.member else { return };
        let len = if m.in_suggestions {
            m.suggestions.len()
        } else {
            m.rated.len()
        };
        m.selected = stepped(m.selected, len, action, page);
        self.explain_selected();
    }

    /// The item highlighted on the member screen.
    pub fn member_item(&self) -> Option<u32> {
        let m = self.member.as_ref()?;
        if m.in_suggestions {
            m.suggestions.get(m.selected).map(|s| s.item)
        } else {
            m.rated.get(m.selected).map(|r| r.item)
        }
    }

    pub(crate) fn explain_selected(&mut self) {
        let Some(item) = self.member_item() else {
            if let Some(m) = &mut self.member {
                m.explanation = None;
            }
            return;
        };
        let Some(m) = self.member.as_ref() else {
            return;
        };
        let explanation = match (&m.what_if, m.user) {
            (Some(w), _) => sextant::analysis::explain::explain_profile(
                &self.model,
                &sextant::analysis::explain::Profile {
                    vector: &w.vector,
                    rated: &w.ratings,
                },
                item,
                3,
                &self.item_counts,
            ),
            (None, Some(user)) => explain(&self.model, user, item, 3, &self.item_counts),
            (None, None) => return,
        };
        if let Some(m) = &mut self.member {
            m.explanation = Some(explanation);
        }
    }

    fn compute_audit(&self) -> AuditView {
        use sextant::analysis::coherence::{Categories, coherence_sample};
        use sextant::analysis::diagnostics::{Side, low_support, norm_report, worst_fits};
        let f = &self.model.factors;
        let categories = Categories::from_meta(self.model.meta.as_ref(), f.item_count());
        let coherence = coherence_sample(f, &categories, 10, Metric::Cosine, AUDIT_SAMPLE);
        let sampled = coherence
            .as_ref()
            .is_some_and(|c| c.items.len() < categories.of_item.iter().flatten().count());
        let least = coherence
            .as_ref()
            .map(|c| c.least_coherent(50).into_iter().cloned().collect())
            .unwrap_or_default();
        let held = self.model.ratings.holdout_count() > 0;
        let thin = low_support(&self.model);
        let users = thin.iter().filter(|t| t.side == Side::User).count();
        AuditView {
            categories,
            coherence,
            sampled,
            least,
            worst: worst_fits(&self.model, held, 50),
            worst_held_out: held,
            norms: [Side::User, Side::Item]
                .into_iter()
                .filter_map(|s| norm_report(&self.model, s))
                .collect(),
            thin: (users, thin.len() - users),
            selected: 0,
        }
    }

    fn move_in_audit(&mut self, action: Action) {
        let page = self.page;
        if let Some(a) = &mut self.audit {
            a.selected = stepped(a.selected, a.least.len(), action, page);
        }
    }

    /// Opens the audit screen's highlighted item on the item screen.
    fn open_audited(&mut self) {
        let Some(j) = self
            .audit
            .as_ref()
            .and_then(|a| a.least.get(a.selected))
            .map(|i| i.item)
        else {
            return;
        };
        self.screen = Screen::Items;
        self.focus = Pane::Neighbours;
        self.visit(j);
    }

    /// Makes `j` the current item, remembering the one it replaces for going back.
    fn visit(&mut self, j: u32) {
        if let Some(previous) = self.current {
            self.history.push(previous);
        }
        self.future.clear();
        self.show(j);
        self.reveal(j);
    }

    fn pan(&mut self, action: Action) {
        let Some(p) = &self.projection else { return };
        let spread = |k: usize| {
            let (lo, hi) = p
                .points
                .iter()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), q| {
                    (lo.min(q[k]), hi.max(q[k]))
                });
            (hi - lo).max(f64::MIN_POSITIVE)
        };
        let step = 0.1 / self.map_zoom;
        match action {
            Action::SelectNext => self.map_centre[1] -= step * spread(1),
            Action::SelectPrevious => self.map_centre[1] += step * spread(1),
            Action::PageDown => self.map_centre[0] += step * spread(0),
            _ => self.map_centre[0] -= step * spread(0),
        }
    }

    /// A mouse click at a screen position: selects the catalogue row or neighbour under it.
    pub fn click(&mut self, column: u16, row: u16) {
        let inside = |area: ratatui::layout::Rect| {
            column > area.x
                && column < area.right().saturating_sub(1)
                && row > area.y
                && row < area.bottom().saturating_sub(1)
        };
        if self.screen != Screen::Items {
            return;
        }
        if inside(self.catalogue_area) {
            self.focus = Pane::Catalogue;
            let height = self.catalogue_area.height.saturating_sub(2) as usize;
            let start =
                super::panes::window_start(self.catalogue_selected, self.visible.len(), height);
            let at = start + (row - self.catalogue_area.y - 1) as usize;
            if at < self.visible.len() {
                self.select_in_catalogue(at);
            }
        } else if inside(self.neighbours_area) {
            self.focus = Pane::Neighbours;
            // The first line of the pane is its column header.
            let height = self.neighbours_area.height.saturating_sub(3) as usize;
            let start =
                super::panes::window_start(self.neighbour_selected, self.neighbours.len(), height);
            let line = (row - self.neighbours_area.y - 1) as usize;
            if line >= 1 && start + line - 1 < self.neighbours.len() {
                self.neighbour_selected = start + line - 1;
            }
        }
    }

    fn focus_index(&self) -> usize {
        PANES.iter().position(|&p| p == self.focus).unwrap_or(0)
    }

    fn move_selection(&mut self, delta: isize) {
        let step = |at: usize, len: usize| -> usize {
            if len == 0 {
                return 0;
            }
            (at as isize)
                .saturating_add(delta)
                .clamp(0, len as isize - 1) as usize
        };
        match self.focus {
            Pane::Catalogue => {
                let at = step(self.catalogue_selected, self.visible.len());
                self.select_in_catalogue(at);
            }
            Pane::Neighbours => {
                self.neighbour_selected = step(self.neighbour_selected, self.neighbours.len());
            }
            Pane::Loadings => {
                self.factor_selected = step(self.factor_selected, self.model.factors.rank);
                self.refresh_factor();
            }
        }
    }

    fn select_in_catalogue(&mut self, at: usize) {
        self.catalogue_selected = at;
        if let Some(&j) = self.visible.get(at)
            && self.current != Some(j)
        {
            if let Some(previous) = self.current {
                self.history.push(previous);
                self.future.clear();
            }
            self.show(j);
        }
    }

    fn open_highlighted(&mut self) {
        match self.focus {
            Pane::Neighbours => {
                let Some(row) = self.neighbours.get(self.neighbour_selected) else {
                    return;
                };
                let j = row.item;
                self.visit(j);
            }
            Pane::Catalogue | Pane::Loadings => {
                self.focus = Pane::Neighbours;
            }
        }
    }

    fn go_back(&mut self) {
        let Some(j) = self.history.pop() else {
            self.status = "nothing to go back to".into();
            return;
        };
        if let Some(current) = self.current {
            self.future.push(current);
        }
        self.show(j);
        self.reveal(j);
    }

    fn go_forward(&mut self) {
        let Some(j) = self.future.pop() else {
            self.status = "nothing to go forward to".into();
            return;
        };
        if let Some(current) = self.current {
            self.history.push(current);
        }
        self.show(j);
        self.reveal(j);
    }

    /// Moves the catalogue highlight onto item `j` when it is visible.
    fn reveal(&mut self, j: u32) {
        if let Some(at) = self.visible.iter().position(|&v| v == j) {
            self.catalogue_selected = at;
        }
    }

    fn show(&mut self, j: u32) {
        self.current = Some(j);
        self.neighbour_selected = 0;
        if self.deferred.enabled {
            self.deferred.neighbours = true;
        } else {
            self.refresh_neighbours();
        }
    }

    /// Recomputes the highlighted factor's extreme items (once per change of factor).
    fn refresh_factor(&mut self) {
        if self.focus != Pane::Loadings {
            return;
        }
        if self.deferred.enabled {
            self.deferred.factor = true;
            return;
        }
        self.compute_factor_extremes();
    }

    fn compute_factor_extremes(&mut self) {
        use sextant::analysis::coherence::Categories;
        use sextant::analysis::loadings::{enrichment, factor_extremes};
        use sextant::analysis::stats::LnFactorial;
        const SHOWN: usize = 4;
        const TESTED: usize = 8;
        let f = &self.model.factors;
        let (mut top, mut bottom) = factor_extremes(&f.items, f.rank, self.factor_selected, TESTED);
        let count = f.item_count();
        let (categories, sizes) = self.category_sizes.get_or_insert_with(|| {
            let c = Categories::from_meta(self.model.meta.as_ref(), count);
            let mut sizes = vec![0usize; c.names.len()];
            for k in c.of_item.iter().flatten() {
                sizes[*k as usize] += 1;
            }
            (c, sizes)
        });
        let table = LnFactorial::new(0);
        let names = |end: &[(u32, f64)]| -> Vec<String> {
            enrichment(end, categories, sizes, count, &table)
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

    /// Brings deferred work up to date (called by the event loop when no input is waiting).
    pub fn settle(&mut self) {
        if self.deferred.factor {
            self.deferred.factor = false;
            self.compute_factor_extremes();
        }
        if self.deferred.filter {
            self.deferred.filter = false;
            self.refilter();
        }
        if self.deferred.neighbours {
            self.deferred.neighbours = false;
            self.refresh_neighbours();
        }
    }

    fn index(&mut self) -> &NeighbourIndex {
        let f = &self.model.factors;
        let slot = match self.metric {
            Metric::Euclidean => &mut self.euclidean,
            Metric::Cosine => &mut self.cosine,
        };
        slot.get_or_insert_with(|| NeighbourIndex::build(&f.items, f.rank, self.metric, Path::Auto))
    }

    fn refresh_neighbours(&mut self) {
        let Some(j) = self.current else { return };
        let k = self.k;
        let found = self.index().nearest_to_row(j, k);
        let f = &self.model.factors;
        self.neighbours = match found {
            Ok(found) => found
                .iter()
                .map(|n| NeighbourRow {
                    item: n.row,
                    distance: squared_distance(f.item(j), f.item(n.row)).sqrt(),
                    cosine: cosine(f.item(j), f.item(n.row)),
                })
                .collect(),
            Err(e) => {
                self.status = format!("{}: {e}", self.model.ratings.items.name(j));
                Vec::new()
            }
        };
        self.neighbour_selected = self
            .neighbour_selected
            .min(self.neighbours.len().saturating_sub(1));
    }

    fn sort_catalogue(&mut self) {
        let mut all: Vec<u32> = (0..self.model.ratings.items.len() as u32).collect();
        let key_title = |j: &u32| (self.title(*j).to_lowercase(), *j);
        match self.order {
            Order::Title => {
                use rayon::slice::ParallelSliceMut;
                all.par_sort_by_cached_key(key_title);
            }
            Order::Category => all.sort_by_cached_key(|j| {
                (
                    self.category(*j).unwrap_or("~").to_lowercase(),
                    key_title(j),
                )
            }),
            Order::Ratings => {
                all.sort_by_key(|&j| (std::cmp::Reverse(self.item_counts[j as usize]), j));
            }
        }
        self.order_all = all;
        self.apply_filter();
    }

    fn set_filter(&mut self, filter: String) {
        self.filter = filter;
        if self.deferred.enabled {
            // Matching walks the whole catalogue: wait until typing pauses.
            self.deferred.filter = true;
        } else {
            self.refilter();
        }
    }

    fn refilter(&mut self) {
        self.apply_filter();
        self.catalogue_selected = 0;
        match self.current {
            // Keep the current item when it still matches; otherwise show the first match.
            Some(j) if self.visible.contains(&j) => self.reveal(j),
            _ => self.select_in_catalogue(0),
        }
    }

    fn apply_filter(&mut self) {
        let needle = self.filter.to_lowercase();
        self.visible = if needle.is_empty() {
            self.order_all.clone()
        } else {
            let matches = |j: u32| {
                self.model
                    .ratings
                    .items
                    .name(j)
                    .to_lowercase()
                    .contains(&needle)
                    || self.title(j).to_lowercase().contains(&needle)
                    || self
                        .category(j)
                        .is_some_and(|c| c.to_lowercase().contains(&needle))
            };
            self.order_all
                .iter()
                .copied()
                .filter(|&j| matches(j))
                .collect()
        };
        self.catalogue_selected = self
            .catalogue_selected
            .min(self.visible.len().saturating_sub(1));
    }
}

/// The row a movement action lands on in a list of `len` rows (0 for an empty list).
fn stepped(selected: usize, len: usize, action: Action, page: usize) -> usize {
    if len == 0 {
        return 0;
    }
    let page = page as isize;
    let delta = match action {
        Action::SelectNext => 1,
        Action::SelectPrevious => -1,
        Action::PageDown => page,
        Action::PageUp => -page,
        Action::SelectFirst => isize::MIN / 2,
        _ => isize::MAX / 2,
    };
    (selected as isize)
        .saturating_add(delta)
        .clamp(0, len as isize - 1) as usize
}

/// Work that waits until input pauses ([`App::settle`]), so that holding a key over a
/// large catalogue never waits on a search.
// Independent pending-work flags: a bool each is the plain way to say it.
#[allow(clippy::struct_excessive_bools)]
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Deferred {
    /// Defer at all (the event loop turns this on; tests and scripts leave it off).
    pub enabled: bool,
    /// The neighbour list belongs to an earlier item.
    pub neighbours: bool,
    /// The catalogue does not reflect the filter text yet.
    pub filter: bool,
    /// The highlighted factor's extreme items are not computed yet.
    pub factor: bool,
}

/// Keys that edit the filter in search mode.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SearchEdit {
    /// Add a character.
    Insert(char),
    /// Remove the last character.
    Delete,
    /// Keep the filter and go back to browsing.
    Accept,
    /// Drop the filter and go back to browsing.
    Cancel,
}
