//! The audit screen's state: neighbour coherence and the least coherent items, the
//! largest misses, and vector lengths with the odd ones — three lists, each with its own
//! highlight; computed the first time the screen is shown. Its keys and its update.

pub mod pane;

use ratatui::crossterm::event::KeyCode;
use sextant::analysis::coherence::{Categories, Coherence, ItemCoherence};
use sextant::analysis::diagnostics::{Miss, NormOutlier, NormReport, Side};
use sextant::index::Metric;

use crate::tui::action::Action;
use crate::tui::app::App;
use crate::tui::keymap::{Binding, bind};
use crate::tui::layout;
use crate::tui::panes::window_start;
use crate::tui::state::shared::Shared;

const NONE: ratatui::crossterm::event::KeyModifiers = ratatui::crossterm::event::KeyModifiers::NONE;

/// The audit screen's own keys.
pub const OWN: &[Binding] = &[bind(
    &[(KeyCode::Char('n'), NONE)],
    "n",
    Action::NoteItem,
    "note",
    "curator's note on the highlighted item",
)];

/// The audit screen's own keys (besides those of lists).
pub const BINDINGS: &[Binding] = OWN;

/// Most items the explorer's coherence check examines (a larger catalogue is sampled;
/// `sextant audit` examines every item).
pub const AUDIT_SAMPLE: usize = 20_000;

/// The audit's lists, in focus order.
pub const LEAST: usize = 0;
/// See [`LEAST`].
pub const MISSES: usize = 1;
/// See [`LEAST`].
pub const VECTORS: usize = 2;

/// The audit screen's figures and highlights.
#[derive(Debug, Clone)]
pub struct AuditView {
    /// The items' categories.
    pub categories: Categories,
    /// Neighbour coherence (cosine, 10 neighbours), over a sample in large catalogues.
    pub coherence: Option<Coherence>,
    /// True when coherence covers a sample of the items.
    pub sampled: bool,
    /// Least coherent items.
    pub least: Vec<ItemCoherence>,
    /// Largest misses on held-out ratings (training ones when nothing is held out).
    pub worst: Vec<Miss>,
    /// True when `worst` lists held-out ratings.
    pub worst_held_out: bool,
    /// Vector-length summaries of members and items.
    pub norms: Vec<NormReport>,
    /// The odd vectors of both sides, in the order shown.
    pub outliers: Vec<NormOutlier>,
    /// Prior-dominated members and items.
    pub thin: (usize, usize),
    /// The focused list ([`LEAST`], [`MISSES`] or [`VECTORS`]).
    pub focus: usize,
    /// The highlighted row of each list.
    pub selected: [usize; 3],
}

impl AuditView {
    /// Computes the audit of `shared`'s model.
    pub fn compute(shared: &Shared) -> Self {
        use sextant::analysis::coherence::coherence_sample;
        use sextant::analysis::diagnostics::{low_support, norm_report, worst_fits};
        let model = &shared.model;
        let f = &model.factors;
        // The same categories the loadings pane counts, computed once.
        let categories = shared.category_sizes().0.clone();
        let coherence = coherence_sample(f, &categories, 10, Metric::Cosine, AUDIT_SAMPLE);
        let sampled = coherence
            .as_ref()
            .is_some_and(|c| c.items.len() < categories.of_item.iter().flatten().count());
        let least = coherence
            .as_ref()
            .map(|c| c.least_coherent(50).into_iter().cloned().collect())
            .unwrap_or_default();
        let held = model.ratings.holdout_count() > 0;
        let thin = low_support(model);
        let users = thin.iter().filter(|t| t.side == Side::User).count();
        let norms: Vec<NormReport> = [Side::User, Side::Item]
            .into_iter()
            .filter_map(|s| norm_report(model, s))
            .collect();
        let outliers = norms
            .iter()
            .flat_map(|n| n.outliers.iter().copied())
            .collect();
        Self {
            categories,
            coherence,
            sampled,
            least,
            worst: worst_fits(model, held, 50),
            worst_held_out: held,
            norms,
            outliers,
            thin: (users, thin.len() - users),
            focus: LEAST,
            selected: [0; 3],
        }
    }

    fn len(&self, list: usize) -> usize {
        match list {
            LEAST => self.least.len(),
            MISSES => self.worst.len(),
            _ => self.outliers.len(),
        }
    }

    /// The item the focused list highlights (a least coherent item, the item of a miss,
    /// or an odd item vector).
    pub fn highlighted_item(&self) -> Option<u32> {
        let at = self.selected[self.focus];
        match self.focus {
            LEAST => self.least.get(at).map(|i| i.item),
            MISSES => self.worst.get(at).map(|m| m.item),
            _ => self
                .outliers
                .get(at)
                .filter(|o| o.side == Side::Item)
                .map(|o| o.row),
        }
    }
}

/// The rows above the first entry of each audit list inside its pane (headings).
pub fn list_top(list: usize) -> usize {
    match list {
        LEAST => 3,
        MISSES => 1,
        _ => 4,
    }
}

/// How many entries of `list` fit in a pane whose inside is `inner_height` rows (the
/// vectors pane keeps its last row for a pointer to the full report).
pub fn list_rows(list: usize, inner_height: u16) -> usize {
    (inner_height as usize).saturating_sub(list_top(list) + usize::from(list == VECTORS))
}

impl App {
    /// The audit screen's layout in the current window.
    pub fn audit_layout(&self) -> layout::Audit {
        let focus = self.screens.audit.as_ref().map_or(LEAST, |a| a.focus);
        layout::audit(layout::body_of(self.size.0, self.size.1), focus)
    }

    fn audit_area(&self, list: usize) -> ratatui::layout::Rect {
        let l = self.audit_layout();
        [l.coherence, l.misses, l.vectors][list]
    }

    /// The audit screen's own actions.
    pub fn update_audit(&mut self, action: Action) {
        if self.screens.audit.is_none() {
            self.screens.audit = Some(AuditView::compute(&self.shared));
        }
        let focus = self.screens.audit.as_ref().map_or(LEAST, |a| a.focus);
        let page = list_rows(focus, layout::inner(self.audit_area(focus)).height);
        match action {
            Action::FocusNext | Action::FocusPrevious => {
                if let Some(a) = &mut self.screens.audit {
                    a.focus = (a.focus + if action == Action::FocusNext { 1 } else { 2 }) % 3;
                }
            }
            Action::Select(movement) => {
                if let Some(a) = &mut self.screens.audit {
                    let len = a.len(focus);
                    a.selected[focus] = movement.apply(a.selected[focus], len, page);
                }
            }
            Action::Open => self.open_audited(),
            Action::Click(column, row) => {
                for list in [LEAST, MISSES, VECTORS] {
                    let area = self.audit_area(list);
                    if !layout::contains(area, column, row) {
                        continue;
                    }
                    let inner = layout::inner(area);
                    let top = list_top(list);
                    let height = list_rows(list, inner.height);
                    let Some(a) = &mut self.screens.audit else {
                        return;
                    };
                    a.focus = list;
                    let len = a.len(list);
                    let start = window_start(a.selected[list], len, height);
                    let line = (row - inner.y) as usize;
                    if line >= top && start + line - top < len {
                        a.selected[list] = start + line - top;
                    }
                }
            }
            _ => {}
        }
    }

    /// Enter on the audit screen: a least coherent item or an odd item vector opens on the
    /// item screen; a largest miss opens its member with that item highlighted; an odd
    /// member vector opens that member.
    fn open_audited(&mut self) {
        let Some(a) = &self.screens.audit else { return };
        let at = a.selected[a.focus];
        match a.focus {
            LEAST => {
                if let Some(j) = a.least.get(at).map(|i| i.item) {
                    self.open_item(j);
                }
            }
            MISSES => {
                if let Some(m) = a.worst.get(at).copied() {
                    self.open_member(m.user, Some(m.item));
                }
            }
            _ => match a.outliers.get(at).map(|o| (o.side, o.row)) {
                Some((Side::Item, j)) => self.open_item(j),
                Some((Side::User, u)) => self.open_member(u, None),
                None => {}
            },
        }
    }
}
