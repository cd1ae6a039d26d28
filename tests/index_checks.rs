//! The neighbour index against brute force and against scipy's cKDTree.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use common::{fixture, floats, matrix};
use sextant::index::{InnerProductIndex, Metric, NeighbourIndex, Path};
use sextant::rng::Rng;

/// Brute force: every other row, exact distance by a plain formula, sorted.
fn brute_force(
    points: &[f64],
    width: usize,
    query: &[f64],
    skip: Option<usize>,
    metric: Metric,
) -> Vec<(usize, f64)> {
    let unit = |v: &[f64]| -> Option<Vec<f64>> {
        let norm = v.iter().map(|x| x * x).sum::<f64>().sqrt();
        (norm > 0.0).then(|| v.iter().map(|x| x / norm).collect())
    };
    let q = match metric {
        Metric::Euclidean => query.to_vec(),
        Metric::Cosine => unit(query).expect("non-zero query"),
    };
    let mut all: Vec<(usize, f64)> = points
        .chunks_exact(width)
        .enumerate()
        .filter(|&(r, _)| Some(r) != skip)
        .filter_map(|(r, p)| {
            let p = match metric {
                Metric::Euclidean => p.to_vec(),
                Metric::Cosine => unit(p)?,
            };
            Some((
                r,
                p.iter()
                    .zip(&q)
                    .map(|(a, b)| (a - b).powi(2))
                    .sum::<f64>()
                    .sqrt(),
            ))
        })
        .collect();
    all.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
    all
}

/// Points with falling variance across axes, some exact duplicates and some zero rows.
fn points(rng: &mut Rng, rows: usize, width: usize) -> Vec<f64> {
    let mut p: Vec<f64> = (0..rows * width)
        .map(|i| rng.normal() / (1.0 + (i % width) as f64).sqrt())
        .collect();
    for r in (0..rows).step_by(17) {
        let copy: Vec<f64> = p[..width].to_vec();
        p[r * width..(r + 1) * width].copy_from_slice(&copy); // duplicates of row 0
    }
    for r in (5..rows).step_by(41) {
        p[r * width..(r + 1) * width].fill(0.0);
    }
    p
}

fn compare(found: &[(usize, f64)], expected: &[(usize, f64)], context: &str) {
    assert_eq!(found.len(), expected.len(), "{context}: count");
    for (k, (f, e)) in found.iter().zip(expected).enumerate() {
        assert!(
            (f.1 - e.1).abs() <= 1e-9 * e.1.max(1.0),
            "{context}: distance {k}: {} vs {}",
            f.1,
            e.1
        );
        // Compare ids only where the distance is not tied with a neighbour's.
        let tied = expected
            .iter()
            .filter(|x| (x.1 - e.1).abs() <= 1e-9 * e.1.max(1.0))
            .count()
            > 1;
        if !tied {
            assert_eq!(f.0, e.0, "{context}: id at {k}");
        }
    }
}

#[test]
fn tree_and_scan_match_brute_force_for_many_seeds_ranks_metrics_and_k() {
    for (seed, width) in [
        (1u64, 1usize),
        (2, 2),
        (3, 3),
        (4, 5),
        (5, 8),
        (6, 10),
        (7, 13),
        (8, 16),
        (9, 17),
        (10, 24),
        (11, 32),
        (12, 64),
        (13, 128),
    ] {
        let mut rng = Rng::new(seed);
        let rows = if width > 32 { 300 } else { 900 };
        let data = points(&mut rng, rows, width);
        for metric in [Metric::Euclidean, Metric::Cosine] {
            let tree = NeighbourIndex::build(&data, width, metric, Path::Tree);
            let scan = NeighbourIndex::build(&data, width, metric, Path::Scan);
            assert_eq!(tree.uses_tree(), width <= 17, "width {width}");
            for (query_row, k) in [(1usize, 1usize), (2, 10), (0, 25), (3, rows + 5)] {
                let context = format!("seed {seed} width {width} {metric:?} row {query_row} k {k}");
                let expected: Vec<(usize, f64)> = brute_force(
                    &data,
                    width,
                    &data[query_row * width..(query_row + 1) * width],
                    Some(query_row),
                    metric,
                )
                .into_iter()
                .take(k)
                .collect();
                let from_tree: Vec<(usize, f64)> = tree
                    .nearest_to_row(query_row as u32, k)
                    .unwrap()
                    .iter()
                    .map(|n| (n.row as usize, n.distance))
                    .collect();
                let from_scan: Vec<(usize, f64)> = scan
                    .nearest_to_row(query_row as u32, k)
                    .unwrap()
                    .iter()
                    .map(|n| (n.row as usize, n.distance))
                    .collect();
                compare(&from_tree, &expected, &context);
                // Both paths give identical answers, bit for bit.
                assert_eq!(from_tree, from_scan, "{context}: tree vs scan");
            }
        }
    }
}

#[test]
fn defined_behaviour_at_the_edges() {
    let width = 3;
    let data = vec![1.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 2.0, 0.0];
    let index = NeighbourIndex::build(&data, width, Metric::Euclidean, Path::Tree);
    // The query row is left out; its duplicate (row 1) comes first at distance 0.
    let n = index.nearest_to_row(0, 10).unwrap();
    assert_eq!(n.iter().map(|x| x.row).collect::<Vec<_>>(), [1, 2, 3]);
    assert_eq!(n[0].distance, 0.0);
    // Cosine: the zero row is never returned and cannot be queried.
    let cosine = NeighbourIndex::build(&data, width, Metric::Cosine, Path::Tree);
    assert!(cosine.nearest_to_row(2, 5).is_err());
    let n = cosine.nearest_to_row(3, 5).unwrap();
    assert_eq!(n.iter().map(|x| x.row).collect::<Vec<_>>(), [0, 1]);
    assert!((n[0].distance - 2f64.sqrt()).abs() < 1e-15); // orthogonal: √(2 − 2·0)
    assert!(cosine.nearest_to(&[0.0, 0.0, 0.0], 2).is_err());
    // k = 0 gives nothing.
    assert!(index.nearest_to_row(0, 0).unwrap().is_empty());
}

#[test]
fn inner_product_top_n_equals_brute_force_ranking() {
    // Bachrach et al., RecSys 2014: the transform makes Euclidean order equal inner-product
    // order; checked against a brute-force ranking by exact dot product.
    for (seed, width) in [(21u64, 2usize), (22, 5), (23, 10), (24, 16), (25, 32)] {
        let mut rng = Rng::new(seed);
        let rows = 1500;
        let data: Vec<f64> = (0..rows * width).map(|_| rng.normal()).collect();
        let tree = InnerProductIndex::build(&data, width, Path::Tree);
        let scan = InnerProductIndex::build(&data, width, Path::Scan);
        for q in 0..5 {
            let query: Vec<f64> = (0..width).map(|_| rng.normal()).collect();
            let rated: Vec<u32> = (0..30).map(|_| rng.below(rows as u64) as u32).collect();
            let keep = |r: u32| !rated.contains(&r);
            let mut expected: Vec<(u32, f64)> = (0..rows as u32)
                .filter(|&r| keep(r))
                .map(|r| {
                    (
                        r,
                        data[r as usize * width..(r as usize + 1) * width]
                            .iter()
                            .zip(&query)
                            .map(|(a, b)| a * b)
                            .sum(),
                    )
                })
                .collect();
            expected.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
            expected.truncate(10);
            let found = tree.top(&query, 10, keep, rated.len());
            assert_eq!(
                found,
                scan.top(&query, 10, keep, rated.len()),
                "seed {seed} query {q}: tree vs scan"
            );
            for (f, e) in found.iter().zip(&expected) {
                assert_eq!(f.row, e.0, "seed {seed} query {q}");
                assert!((-f.score - e.1).abs() < 1e-12);
            }
        }
    }
}

#[test]
fn neighbours_match_scipy_ckdtree() {
    // Source: scipy.spatial.cKDTree.query (fixture written by tests/reference/make_fixtures.py).
    let f = fixture("knn_ckdtree.json");
    for case in f["cases"].as_array().unwrap() {
        let (data, width) = matrix(&case["points"]);
        let (queries, _) = matrix(&case["queries"]);
        let k = case["k"].as_u64().unwrap() as usize;
        let index = NeighbourIndex::build(&data, width, Metric::Euclidean, Path::Tree);
        for (q, query) in queries.chunks_exact(width).enumerate() {
            let found = index.nearest_to(query, k).unwrap();
            let distances = floats(&case["distances"][q]);
            let ids = floats(&case["ids"][q]);
            for (j, n) in found.iter().enumerate() {
                assert!(
                    (n.distance - distances[j]).abs() < 1e-12,
                    "width {width} query {q} rank {j}"
                );
                assert_eq!(f64::from(n.row), ids[j], "width {width} query {q} rank {j}");
            }
        }
    }
}
