//! Every item's 10 nearest neighbours at once (`neighbours --all`: blocked matrix products
//! where the index scans, parallel tree queries where it has a tree) against issuing one
//! query per item through the same index the
//! single-item command uses (tree or parallel scan, whichever it picks), same data, same
//! run. One-by-one over every item would take hours at the larger sizes, so it is timed on
//! 2,000 evenly spaced items and scaled to the catalogue (the queries cost alike).
//!
//! Run: `cargo bench --bench bulk` (add `-- --quick` for 20,000 items only).

use std::time::Instant;

use sextant::index::bulk::all_neighbours_auto;
use sextant::index::{Metric, NeighbourIndex, Path};
use sextant::rng::Rng;

fn fitted(n: usize, d: usize, seed: u64) -> Vec<f64> {
    let mut rng = Rng::new(seed);
    (0..n * d)
        .map(|i| (-((i % d) as f64) / 4.0).exp() * rng.normal())
        .collect()
}

fn main() {
    let quick = std::env::args().any(|a| a == "--quick");
    let sizes: &[usize] = if quick { &[20_000] } else { &[20_000, 100_000] };
    for &n in sizes {
        for &(d, metric) in &[
            (32usize, Metric::Cosine),
            (32, Metric::Euclidean),
            (8, Metric::Cosine),
        ] {
            let v = fitted(n, d, 5);
            let start = Instant::now();
            let bulk = all_neighbours_auto(&v, d, metric, 10);
            let bulk_s = start.elapsed().as_secs_f64();
            let start = Instant::now();
            let index = NeighbourIndex::build(&v, d, metric, Path::Auto);
            let build_s = start.elapsed().as_secs_f64();
            let sample = 2000.min(n);
            let step = n / sample;
            let start = Instant::now();
            for s in 0..sample {
                let row = (s * step) as u32;
                let single = index.nearest_to_row(row, 10).expect("non-zero vectors");
                assert_eq!(
                    single, bulk[row as usize],
                    "row {row}: bulk and single agree"
                );
            }
            let per_query = start.elapsed().as_secs_f64() / sample as f64;
            let one_by_one = build_s + per_query * n as f64;
            println!(
                "{n} items, rank {d}, {metric:?}: bulk {bulk_s:.2} s; one by one {one_by_one:.1} s (build {build_s:.2} s + {:.3} ms × {n}, {}); ratio {:.1}×",
                per_query * 1e3,
                if index.uses_tree() { "tree" } else { "scan" },
                one_by_one / bulk_s
            );
        }
    }
}
