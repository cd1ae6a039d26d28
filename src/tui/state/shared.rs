//! What every screen reads and none owns: the model, names, counts, and the indexes built
//! the first time a screen needs them.

use std::sync::OnceLock as OnceCell;

use sextant::analysis::coherence::Categories;
use sextant::index::{InnerProductIndex, Metric, NeighbourIndex, Path};
use sextant::model::Model;
use sextant::model::notes::Annotations;

/// The model and what is derived from it once.
pub struct Shared {
    /// The model being explored.
    pub model: Model,
    /// How the model is named in the header.
    pub label: String,
    /// Training ratings per item.
    pub item_counts: Vec<u32>,
    /// Distinct categories, sorted (map colours and legend).
    pub categories: Vec<String>,
    category_sizes: OnceCell<(Categories, Vec<usize>)>,
    euclidean: OnceCell<NeighbourIndex>,
    cosine: OnceCell<NeighbourIndex>,
    suggestions: OnceCell<InnerProductIndex>,
}

impl Shared {
    /// The shared state of `model`.
    pub fn new(model: Model, label: String) -> Self {
        let item_counts = model.ratings.train_support().1;
        let mut categories: Vec<String> = model
            .meta
            .iter()
            .flat_map(|m| m.rows.iter().flatten().filter_map(|r| r.category.clone()))
            .collect();
        categories.sort_unstable();
        categories.dedup();
        Self {
            model,
            label,
            item_counts,
            categories,
            category_sizes: OnceCell::new(),
            euclidean: OnceCell::new(),
            cosine: OnceCell::new(),
            suggestions: OnceCell::new(),
        }
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

    /// Id of item `j`.
    pub fn item_id(&self, j: u32) -> &str {
        self.model.ratings.items.name(j)
    }

    /// Id of member `u`.
    pub fn member_id(&self, u: u32) -> &str {
        self.model.ratings.users.name(u)
    }

    /// The neighbour index for `metric`, built on first use.
    pub fn neighbour_index(&self, metric: Metric) -> &NeighbourIndex {
        let f = &self.model.factors;
        let slot = match metric {
            Metric::Euclidean => &self.euclidean,
            Metric::Cosine => &self.cosine,
        };
        slot.get_or_init(|| NeighbourIndex::build(&f.items, f.rank, metric, Path::Auto))
    }

    /// The inner-product index for suggestions, built on first use.
    pub fn suggestion_index(&self) -> &InnerProductIndex {
        self.suggestions
            .get_or_init(|| sextant::analysis::suggest::ranking_index(&self.model))
    }

    /// The items' categories and the number of items in each.
    pub fn category_sizes(&self) -> &(Categories, Vec<usize>) {
        self.category_sizes.get_or_init(|| {
            let c =
                Categories::from_meta(self.model.meta.as_ref(), self.model.factors.item_count());
            let mut sizes = vec![0usize; c.names.len()];
            for k in c.of_item.iter().flatten() {
                sizes[*k as usize] += 1;
            }
            (c, sizes)
        })
    }
}

/// Factor `f` (1-based) as people read it: "factor 3", or "factor 3 (spice)" when a
/// curator labelled it.
pub fn factor_name(notes: &Annotations, f: usize) -> String {
    match notes.factor_label(f) {
        Some(label) => format!("factor {f} ({})", sextant::text::escaped(label)),
        None => format!("factor {f}"),
    }
}
