//! The catalogue: every item in the chosen order, narrowed by the filter, and the
//! highlighted row.

use super::shared::Shared;

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

impl Order {
    /// The next order in the cycle.
    pub fn next(self) -> Self {
        match self {
            Order::Title => Order::Category,
            Order::Category => Order::Ratings,
            Order::Ratings => Order::Title,
        }
    }

    /// How the order is named on screen.
    pub fn name(self) -> &'static str {
        match self {
            Order::Title => "title",
            Order::Category => "category",
            Order::Ratings => "ratings",
        }
    }
}

/// The catalogue's state.
#[derive(Debug, Clone, PartialEq)]
pub struct Catalogue {
    /// Every item in the current order.
    order_all: Vec<u32>,
    /// Items passing the filter, in order.
    pub visible: Vec<u32>,
    /// Row of `visible` that is highlighted.
    pub selected: usize,
    /// The filter text.
    pub filter: String,
    /// The order.
    pub order: Order,
}

impl Catalogue {
    /// Every item of `shared`, by title.
    pub fn new(shared: &Shared) -> Self {
        let mut c = Self {
            order_all: Vec::new(),
            visible: Vec::new(),
            selected: 0,
            filter: String::new(),
            order: Order::Title,
        };
        c.sort(shared);
        c
    }

    /// The highlighted item.
    pub fn highlighted(&self) -> Option<u32> {
        self.visible.get(self.selected).copied()
    }

    /// Sorts every item in `self.order` and applies the filter again.
    pub fn sort(&mut self, shared: &Shared) {
        let mut all: Vec<u32> = (0..shared.model.ratings.items.len() as u32).collect();
        let key_title = |j: &u32| (shared.title(*j).to_lowercase(), *j);
        match self.order {
            Order::Title => {
                use rayon::slice::ParallelSliceMut;
                all.par_sort_by_cached_key(key_title);
            }
            Order::Category => all.sort_by_cached_key(|j| {
                (
                    shared.category(*j).unwrap_or("~").to_lowercase(),
                    key_title(j),
                )
            }),
            Order::Ratings => {
                all.sort_by_key(|&j| (std::cmp::Reverse(shared.item_counts[j as usize]), j));
            }
        }
        self.order_all = all;
        self.apply_filter(shared);
    }

    /// Narrows `visible` to the items whose id, title or category contains the filter.
    pub fn apply_filter(&mut self, shared: &Shared) {
        let needle = self.filter.to_lowercase();
        self.visible = if needle.is_empty() {
            self.order_all.clone()
        } else {
            let matches = |j: u32| {
                shared.item_id(j).to_lowercase().contains(&needle)
                    || shared.title(j).to_lowercase().contains(&needle)
                    || shared
                        .category(j)
                        .is_some_and(|c| c.to_lowercase().contains(&needle))
            };
            self.order_all
                .iter()
                .copied()
                .filter(|&j| matches(j))
                .collect()
        };
        self.selected = self.selected.min(self.visible.len().saturating_sub(1));
    }

    /// Moves the highlight onto item `j` when it is visible.
    pub fn reveal(&mut self, j: u32) {
        if let Some(at) = self.visible.iter().position(|&v| v == j) {
            self.selected = at;
        }
    }
}
