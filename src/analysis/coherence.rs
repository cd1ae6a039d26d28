//! Neighbour coherence: how often an item's nearest neighbours in the latent space share its
//! category, against what neighbours drawn at random would give.
//!
//! Nearby items in a fitted space should be items people rate alike (common practice), and where
//! the catalogue's categories reflect taste, alike-rated items tend to share a category. For
//! an item of category c among N searchable items of which n_c are in c, k neighbours drawn
//! at random from the other N − 1 contain a hypergeometric number of same-category items
//! (population N − 1, n_c − 1 marked, k drawn): its mean k (n_c − 1)/(N − 1) is the
//! baseline, and the lower tail `P(X ≤ observed)` ranks the items whose neighbours are the
//! most surprisingly foreign: candidates for a mislabelled category or a data problem.

use rayon::prelude::*;

use super::stats::{Hypergeometric, LnFactorial};
use crate::data::ItemsMeta;
use crate::index::{Metric, NeighbourIndex, Path};
use crate::model::{FactorModel, squared_norm};

/// Categories of the items: their names and each item's category number.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Categories {
    /// Category names, sorted.
    pub names: Vec<String>,
    /// Per item: index into `names`, or `None` when the item has no category.
    pub of_item: Vec<Option<u32>>,
}

impl Categories {
    /// The categories given in the items metadata, for `items` items.
    pub fn from_meta(meta: Option<&ItemsMeta>, items: usize) -> Self {
        let label = |j: usize| {
            meta.and_then(|m| m.get(j as u32))
                .and_then(|m| m.category.as_deref())
                .filter(|c| !c.is_empty())
        };
        let mut names: Vec<String> = (0..items).filter_map(label).map(str::to_owned).collect();
        names.sort();
        names.dedup();
        let of_item = (0..items)
            .map(|j| {
                label(j).map(|c| names.binary_search_by(|n| n.as_str().cmp(c)).unwrap_or(0) as u32)
            })
            .collect();
        Self { names, of_item }
    }

    /// True when at least two categories are in use (otherwise coherence says nothing).
    pub fn usable(&self) -> bool {
        self.names.len() >= 2
    }

    /// Category name of item `j`.
    pub fn name_of(&self, j: u32) -> Option<&str> {
        self.of_item
            .get(j as usize)
            .copied()
            .flatten()
            .map(|c| self.names[c as usize].as_str())
    }
}

/// Coherence of one item.
#[derive(Debug, Clone, PartialEq)]
pub struct ItemCoherence {
    /// The item.
    pub item: u32,
    /// Its category (index into [`Categories::names`]).
    pub category: u32,
    /// Neighbours examined (k, or fewer in a tiny catalogue).
    pub neighbours: usize,
    /// Neighbours in the same category.
    pub same: usize,
    /// `same / neighbours`.
    pub share: f64,
    /// Share expected from random neighbours.
    pub expected: f64,
    /// `P(X ≤ same)` for random neighbours: small means surprisingly few.
    pub p_low: f64,
    /// The category most common among the neighbours (lowest index on ties), if any.
    pub neighbour_category: Option<u32>,
    /// The category other than its own most common among the neighbours (lowest index on
    /// ties), if any: where the neighbours come from instead.
    pub other_category: Option<u32>,
}

/// Coherence of one category.
#[derive(Debug, Clone, PartialEq)]
pub struct CategoryCoherence {
    /// Index into [`Categories::names`].
    pub category: u32,
    /// Items of the category that were examined.
    pub items: usize,
    /// Mean share of same-category neighbours.
    pub mean: f64,
    /// Mean share expected from random neighbours.
    pub baseline: f64,
}

/// Neighbour coherence of a catalogue.
#[derive(Debug, Clone, PartialEq)]
pub struct Coherence {
    /// Neighbours per item.
    pub k: usize,
    /// The metric used to find them.
    pub metric: Metric,
    /// Every examined item (has a category, and under cosine a non-zero vector).
    pub items: Vec<ItemCoherence>,
    /// Mean share over the examined items.
    pub mean: f64,
    /// Mean share expected from random neighbours.
    pub baseline: f64,
    /// `histogram[s]`: examined items with exactly `s` same-category neighbours.
    pub histogram: Vec<usize>,
    /// The same, expected from random neighbours (sum of the items' hypergeometric laws).
    pub expected_histogram: Vec<f64>,
    /// Per category, in name order.
    pub categories: Vec<CategoryCoherence>,
}

impl Coherence {
    /// The p-value at or below which an item's few same-category neighbours count as
    /// unusual: the Benjamini–Hochberg cut over every examined item at
    /// [`DISCOVERY_RATE`](crate::analysis::stats::DISCOVERY_RATE), so that among the items
    /// called unusual about 5% are expected to be so by chance. `None` when none is.
    pub fn unusual_cut(&self) -> Option<f64> {
        let p: Vec<f64> = self.items.iter().map(|i| i.p_low).collect();
        crate::analysis::stats::false_discovery_cut(&p, crate::analysis::stats::DISCOVERY_RATE)
    }

    /// The `n` least coherent items: lowest lower-tail probability first, then lowest share,
    /// then item order.
    pub fn least_coherent(&self, n: usize) -> Vec<&ItemCoherence> {
        let mut all: Vec<&ItemCoherence> = self.items.iter().collect();
        all.sort_by(|a, b| {
            a.p_low
                .total_cmp(&b.p_low)
                .then(a.share.total_cmp(&b.share))
                .then(a.item.cmp(&b.item))
        });
        all.truncate(n);
        all
    }
}

/// Measures coherence with `k` neighbours per item under `metric`. `None` when fewer than
/// two categories are in use or no item can be examined.
pub fn coherence(
    factors: &FactorModel,
    categories: &Categories,
    k: usize,
    metric: Metric,
) -> Option<Coherence> {
    coherence_sample(factors, categories, k, metric, usize::MAX)
}

/// [`coherence`] over at most `limit` of the examinable items, taken at an even stride
/// through the catalogue (deterministic); neighbours are still searched among all items.
pub fn coherence_sample(
    factors: &FactorModel,
    categories: &Categories,
    k: usize,
    metric: Metric,
    limit: usize,
) -> Option<Coherence> {
    if !categories.usable() || k == 0 {
        return None;
    }
    let d = factors.rank;
    let count = factors.item_count();
    let searchable =
        |j: usize| metric == Metric::Euclidean || squared_norm(factors.item(j as u32)) > 0.0;
    // Category sizes among the items a neighbour can be.
    let mut sizes = vec![0usize; categories.names.len()];
    let mut population = 0usize;
    for j in (0..count).filter(|&j| searchable(j)) {
        population += 1;
        if let Some(c) = categories.of_item[j] {
            sizes[c as usize] += 1;
        }
    }
    if population < 2 {
        return None;
    }
    let index = NeighbourIndex::build(&factors.items, d, metric, Path::Auto);
    let table = LnFactorial::new(population);
    let mut examined: Vec<usize> = (0..count)
        .filter(|&j| searchable(j) && categories.of_item[j].is_some())
        .collect();
    if examined.len() > limit.max(1) {
        let stride = examined.len().div_ceil(limit.max(1));
        examined = examined.into_iter().step_by(stride).collect();
    }
    let items: Vec<ItemCoherence> = examined
        .par_iter()
        .map(|&j| {
            let category = categories.of_item[j].expect("examined items have a category");
            let found = index
                .nearest_to_row(j as u32, k)
                .expect("searchable items have a direction");
            let mut tally = vec![0usize; categories.names.len()];
            for n in &found {
                if let Some(c) = categories.of_item[n.row as usize] {
                    tally[c as usize] += 1;
                }
            }
            let same = tally[category as usize];
            let neighbours = found.len();
            let law = Hypergeometric::new(population - 1, sizes[category as usize] - 1, neighbours);
            let most = |skip: Option<u32>| {
                tally
                    .iter()
                    .enumerate()
                    .filter(|&(c, &t)| t > 0 && Some(c as u32) != skip)
                    .max_by(|a, b| a.1.cmp(b.1).then(b.0.cmp(&a.0)))
                    .map(|(c, _)| c as u32)
            };
            let neighbour_category = most(None);
            let other_category = most(Some(category));
            ItemCoherence {
                item: j as u32,
                category,
                neighbours,
                same,
                share: ratio(same as f64, neighbours as f64),
                expected: ratio(law.mean(), neighbours as f64),
                p_low: law.at_most(same, &table),
                neighbour_category,
                other_category,
            }
        })
        .collect();
    if items.is_empty() {
        return None;
    }
    let width = items.iter().map(|i| i.neighbours).max().unwrap_or(0);
    let mut histogram = vec![0usize; width + 1];
    let mut expected_histogram = vec![0.0f64; width + 1];
    for i in &items {
        histogram[i.same] += 1;
        let law = Hypergeometric::new(population - 1, sizes[i.category as usize] - 1, i.neighbours);
        for (s, slot) in expected_histogram
            .iter_mut()
            .enumerate()
            .take(i.neighbours + 1)
        {
            *slot += law.pmf(s, &table);
        }
    }
    let mean_of = |f: &dyn Fn(&ItemCoherence) -> f64, chosen: &[&ItemCoherence]| {
        chosen.iter().map(|i| f(i)).sum::<f64>() / chosen.len() as f64
    };
    let all: Vec<&ItemCoherence> = items.iter().collect();
    let per_category = (0..categories.names.len() as u32)
        .filter_map(|c| {
            let chosen: Vec<&ItemCoherence> = items.iter().filter(|i| i.category == c).collect();
            (!chosen.is_empty()).then(|| CategoryCoherence {
                category: c,
                items: chosen.len(),
                mean: mean_of(&|i| i.share, &chosen),
                baseline: mean_of(&|i| i.expected, &chosen),
            })
        })
        .collect();
    Some(Coherence {
        k,
        metric,
        mean: mean_of(&|i| i.share, &all),
        baseline: mean_of(&|i| i.expected, &all),
        items,
        histogram,
        expected_histogram,
        categories: per_category,
    })
}

fn ratio(a: f64, b: f64) -> f64 {
    if b > 0.0 { a / b } else { 0.0 }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn meta(categories: &[&str]) -> ItemsMeta {
        ItemsMeta {
            untitled: None,
            attribute_names: Vec::new(),
            rows: categories
                .iter()
                .map(|c| {
                    Some(crate::data::ItemMeta {
                        category: (!c.is_empty()).then(|| (*c).to_owned()),
                        ..Default::default()
                    })
                })
                .collect(),
            unknown: Vec::new(),
        }
    }

    #[test]
    fn two_separated_clusters_are_fully_coherent() {
        // Items 0-2 near (1, 0), items 3-5 near (0, 1): every neighbour (k = 2) shares the
        // category. Random neighbours: 2 of the 5 others are in the same category.
        let items = vec![1.0, 0.0, 1.1, 0.1, 0.9, -0.1, 0.0, 1.0, 0.1, 1.1, -0.1, 0.9];
        let factors = FactorModel {
            rank: 2,
            mu: 0.0,
            users: vec![],
            items,
            biases: None,
        };
        let cats = Categories::from_meta(Some(&meta(&["a", "a", "a", "b", "b", "b"])), 6);
        let c = coherence(&factors, &cats, 2, Metric::Euclidean).unwrap();
        assert_eq!(c.items.len(), 6);
        assert!((c.mean - 1.0).abs() < 1e-15);
        assert!((c.baseline - 0.4).abs() < 1e-15);
        assert_eq!(c.histogram, vec![0, 0, 6]);
        // P(X = 2) with 2 drawn from 5, 2 marked = 1/10 per item.
        assert!((c.expected_histogram[2] - 0.6).abs() < 1e-12);
        let total: f64 = c.expected_histogram.iter().sum();
        assert!((total - 6.0).abs() < 1e-12);
    }

    #[test]
    fn a_misplaced_item_is_listed_first() {
        // Item 5 says "b" but sits among the "a" items.
        let items = vec![
            1.0, 0.0, 1.1, 0.1, 0.9, -0.1, 0.0, 1.0, 0.1, 1.1, 1.05, 0.05,
        ];
        let factors = FactorModel {
            rank: 2,
            mu: 0.0,
            users: vec![],
            items,
            biases: None,
        };
        let cats = Categories::from_meta(Some(&meta(&["a", "a", "a", "b", "b", "b"])), 6);
        let c = coherence(&factors, &cats, 2, Metric::Cosine).unwrap();
        let worst = c.least_coherent(1)[0];
        assert_eq!(worst.item, 5);
        assert_eq!(worst.same, 0);
        assert_eq!(worst.neighbour_category, Some(0));
    }

    #[test]
    fn one_category_or_none_is_not_usable() {
        let factors = FactorModel {
            rank: 1,
            mu: 0.0,
            users: vec![],
            items: vec![1.0, 2.0, 3.0],
            biases: None,
        };
        let one = Categories::from_meta(Some(&meta(&["a", "a", ""])), 3);
        assert!(coherence(&factors, &one, 2, Metric::Euclidean).is_none());
        assert!(
            coherence(
                &factors,
                &Categories::from_meta(None, 3),
                2,
                Metric::Euclidean
            )
            .is_none()
        );
    }
}
