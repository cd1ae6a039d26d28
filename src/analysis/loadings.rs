//! What a factor stands for: the items loading most positively and most negatively on it.

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
