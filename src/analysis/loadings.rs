//! What a factor stands for: the items loading most positively and most negatively on it,
//! and the categories over-represented at each end.

use super::coherence::Categories;
use super::stats::{Hypergeometric, LnFactorial};

/// Items with their values: the most positive first, then the most negative first.
pub type Extremes = (Vec<(u32, f64)>, Vec<(u32, f64)>);

/// Items with the largest and the smallest value of factor `factor` (0-based), `k` of
/// each, as (item, value): largest first, and smallest first. Ties go to the lower item.
pub fn factor_extremes(items: &[f64], width: usize, factor: usize, k: usize) -> Extremes {
    let values: Vec<(u32, f64)> = items
        .chunks_exact(width)
        .enumerate()
        .map(|(j, v)| (j as u32, v[factor]))
        .collect();
    let pick = |descending: bool| {
        let mut all = values.clone();
        let order = |a: &(u32, f64), b: &(u32, f64)| {
            let by_value = if descending {
                b.1.total_cmp(&a.1)
            } else {
                a.1.total_cmp(&b.1)
            };
            by_value.then(a.0.cmp(&b.0))
        };
        if all.len() > k {
            all.select_nth_unstable_by(k, order);
            all.truncate(k);
        }
        all.sort_by(order);
        all
    };
    (pick(true), pick(false))
}

/// A category over-represented among the items at one end of a factor.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Enrichment {
    /// Index into [`Categories::names`].
    pub category: u32,
    /// Items of the category at this end.
    pub count: usize,
    /// Expected count if the end were a random draw from the catalogue.
    pub expected: f64,
    /// `P(X ≥ count)` for a random draw (hypergeometric upper tail).
    pub p_value: f64,
}

/// What one factor stands for.
#[derive(Debug, Clone, PartialEq)]
pub struct FactorMeaning {
    /// The factor, 0-based.
    pub factor: usize,
    /// Most positive items, largest first.
    pub positive: Vec<(u32, f64)>,
    /// Most negative items, smallest first.
    pub negative: Vec<(u32, f64)>,
    /// Categories over-represented among `positive`, most significant first.
    pub positive_categories: Vec<Enrichment>,
    /// Categories over-represented among `negative`, most significant first.
    pub negative_categories: Vec<Enrichment>,
}

/// A category is reported as over-represented at an end when at least two of the end's
/// items belong to it and a random draw would give that many or more with probability
/// below this (a conventional significance level (common practice)).
pub const ENRICHMENT_P: f64 = 0.05;

/// Categories over-represented among `end` (a set of items drawn from `population` items
/// with the category sizes `sizes`).
pub fn enrichment(
    end: &[(u32, f64)],
    categories: &Categories,
    sizes: &[usize],
    population: usize,
    table: &LnFactorial,
) -> Vec<Enrichment> {
    let mut tally = vec![0usize; categories.names.len()];
    for &(j, _) in end {
        if let Some(c) = categories.of_item[j as usize] {
            tally[c as usize] += 1;
        }
    }
    let mut out: Vec<Enrichment> = tally
        .iter()
        .enumerate()
        .filter(|&(_, &t)| t >= 2)
        .map(|(c, &count)| {
            let law = Hypergeometric::new(population, sizes[c], end.len());
            Enrichment {
                category: c as u32,
                count,
                expected: law.mean(),
                p_value: law.at_least(count, table),
            }
        })
        .filter(|e| e.p_value < ENRICHMENT_P && e.count as f64 > e.expected)
        .collect();
    out.sort_by(|a, b| {
        a.p_value
            .total_cmp(&b.p_value)
            .then(a.category.cmp(&b.category))
    });
    out
}

/// The meaning of every factor: `k` items at each end and the categories they favour.
pub fn factor_meanings(
    items: &[f64],
    width: usize,
    categories: &Categories,
    k: usize,
) -> Vec<FactorMeaning> {
    let population = items.len() / width.max(1);
    let mut sizes = vec![0usize; categories.names.len()];
    for c in categories.of_item.iter().flatten() {
        sizes[*c as usize] += 1;
    }
    let table = LnFactorial::new(population);
    (0..width)
        .map(|factor| {
            let (positive, negative) = factor_extremes(items, width, factor, k);
            let positive_categories = enrichment(&positive, categories, &sizes, population, &table);
            let negative_categories = enrichment(&negative, categories, &sizes, population, &table);
            FactorMeaning {
                factor,
                positive,
                negative,
                positive_categories,
                negative_categories,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn extremes_of_a_small_table() {
        // Two factors; factor 2 (index 1) values: 0.5, -2, 3, 0, -2.
        let items = [1.0, 0.5, 0.0, -2.0, 9.0, 3.0, 1.0, 0.0, 2.0, -2.0];
        let (top, bottom) = factor_extremes(&items, 2, 1, 2);
        assert_eq!(top, [(2, 3.0), (0, 0.5)]);
        assert_eq!(bottom, [(1, -2.0), (4, -2.0)]);
        let (all, _) = factor_extremes(&items, 2, 0, 10);
        assert_eq!(all.len(), 5);
    }
}

#[cfg(test)]
mod meaning_tests {
    use super::*;

    #[test]
    fn a_category_at_one_end_is_found() {
        // 12 items, one factor; the three "x" items carry the largest values.
        let items: Vec<f64> = (0..12)
            .map(|j| {
                if j < 3 {
                    10.0 + j as f64
                } else {
                    j as f64 * 0.1
                }
            })
            .collect();
        let categories = Categories {
            names: vec!["x".into(), "y".into()],
            of_item: (0..12).map(|j| Some(u32::from(j >= 3))).collect(),
        };
        let meanings = factor_meanings(&items, 1, &categories, 3);
        let m = &meanings[0];
        assert_eq!(
            m.positive.iter().map(|p| p.0).collect::<Vec<_>>(),
            [2, 1, 0]
        );
        // 3 of 3 drawn from 12 with 3 marked: p = 1 / C(12, 3) = 1/220.
        assert_eq!(m.positive_categories.len(), 1);
        assert!((m.positive_categories[0].p_value - 1.0 / 220.0).abs() < 1e-12);
        assert!(m.negative_categories.is_empty());
    }
}
