//! k-d trees of every width up to [`MAX_TREE_WIDTH`] behind one object-safe trait.
//!
//! kiddo fixes a tree's dimension at compile time while the rank of a model is known only at
//! run time. Zero-padding to a wider tree is several times slower than the exact width
//! (splits on empty axes), so every width gets its own monomorphised tree, chosen at one
//! dispatch point ([`build_tree`]).

use std::num::NonZero;

use kiddo::{ImmutableKdTree, SquaredEuclidean};

/// Widest tree built; above it the index scans (a tree of a million points is only ~20
/// levels deep and splits on the first ~20 axes only, so it stops paying off).
pub const MAX_TREE_WIDTH: usize = 17;

/// Exact Euclidean queries on a tree of points of some width.
pub trait KnnTree: Send + Sync {
    /// The `k` nearest points (row numbers and squared distances), nearest first.
    fn nearest(&self, query: &[f64], k: usize) -> Vec<(u32, f64)>;
    /// Every point within squared distance `radius` (inclusive), in any order.
    fn within(&self, query: &[f64], radius: f64) -> Vec<u32>;
}

struct Tree<const K: usize>(ImmutableKdTree<f64, K>);

impl<const K: usize> KnnTree for Tree<K> {
    fn nearest(&self, query: &[f64], k: usize) -> Vec<(u32, f64)> {
        let Some(k) = NonZero::new(k) else {
            return Vec::new();
        };
        let point: &[f64; K] = query.try_into().expect("query has the tree's width");
        self.0
            .query(point)
            .nearest_n::<SquaredEuclidean<f64>>(k)
            .execute()
            .into_iter()
            .map(|r| (r.item, r.distance))
            .collect()
    }

    fn within(&self, query: &[f64], radius: f64) -> Vec<u32> {
        let point: &[f64; K] = query.try_into().expect("query has the tree's width");
        self.0
            .query(point)
            .within::<SquaredEuclidean<f64>>(radius)
            .execute()
            .into_iter()
            .map(|r| r.item)
            .collect()
    }
}

fn build<const K: usize>(points: &[f64]) -> Option<Box<dyn KnnTree>> {
    let rows: Vec<[f64; K]> = points
        .chunks_exact(K)
        .map(|row| row.try_into().expect("exact chunk"))
        .collect();
    let tree = ImmutableKdTree::new_from_slice(&rows).ok()?;
    Some(Box::new(Tree(tree)))
}

/// A tree over `points` (row-major, `width` values per row), or `None` when the width is
/// above [`MAX_TREE_WIDTH`], the set is empty, or the tree cannot be built.
pub fn build_tree(points: &[f64], width: usize) -> Option<Box<dyn KnnTree>> {
    if points.is_empty() || u32::try_from(points.len() / width.max(1)).is_err() {
        return None;
    }
    match width {
        1 => build::<1>(points),
        2 => build::<2>(points),
        3 => build::<3>(points),
        4 => build::<4>(points),
        5 => build::<5>(points),
        6 => build::<6>(points),
        7 => build::<7>(points),
        8 => build::<8>(points),
        9 => build::<9>(points),
        10 => build::<10>(points),
        11 => build::<11>(points),
        12 => build::<12>(points),
        13 => build::<13>(points),
        14 => build::<14>(points),
        15 => build::<15>(points),
        16 => build::<16>(points),
        17 => build::<17>(points),
        _ => None,
    }
}
