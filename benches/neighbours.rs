//! Neighbour and suggestion queries: index build time and median 10-NN query time on
//! 100,000 and 1,000,000 items at ranks 8, 16 and 32, for isotropic random vectors and for
//! vectors shaped like a fit (variance falling across factors), each beside a plain
//! brute-force scan (one thread, every distance, then the 10 best) in the same run.
//!
//! Run: `cargo bench --bench neighbours` (add `-- --quick` for 100,000 items only).

use std::fmt::Write as _;
use std::time::{Duration, Instant};

use sextant::index::{InnerProductIndex, Metric, NeighbourIndex, Path, squared_distance};
use sextant::rng::Rng;

#[derive(Clone, Copy)]
enum Shape {
    Isotropic,
    Fitted,
}

fn vectors(n: usize, d: usize, shape: Shape, seed: u64) -> Vec<f64> {
    let mut rng = Rng::new(seed);
    (0..n * d)
        .map(|i| {
            let scale = match shape {
                Shape::Isotropic => 1.0,
                // Fitted factors: variance falling off across factors, like an eigenvalue decay.
                Shape::Fitted => (-((i % d) as f64) / 4.0).exp(),
            };
            scale * rng.normal()
        })
        .collect()
}

fn median(mut times: Vec<Duration>) -> Duration {
    times.sort();
    times[times.len() / 2]
}

/// Brute force: every squared distance, then the 10 smallest (the query row left out).
fn brute_nearest(points: &[f64], d: usize, row: usize) -> Vec<(usize, f64)> {
    let q = &points[row * d..(row + 1) * d];
    let mut all: Vec<(usize, f64)> = points
        .chunks_exact(d)
        .enumerate()
        .filter(|&(r, _)| r != row)
        .map(|(r, p)| (r, squared_distance(q, p)))
        .collect();
    all.select_nth_unstable_by(10, |a, b| a.1.total_cmp(&b.1));
    all.truncate(10);
    all
}

/// Brute force: every inner product, then the 10 largest.
fn brute_top(points: &[f64], d: usize, query: &[f64]) -> Vec<(usize, f64)> {
    let mut all: Vec<(usize, f64)> = points
        .chunks_exact(d)
        .enumerate()
        .map(|(r, p)| (r, -p.iter().zip(query).map(|(a, b)| a * b).sum::<f64>()))
        .collect();
    all.select_nth_unstable_by(10, |a, b| a.1.total_cmp(&b.1));
    all.truncate(10);
    all
}

fn ms(t: Duration) -> f64 {
    t.as_secs_f64() * 1e3
}

fn main() {
    let quick = std::env::args().any(|a| a == "--quick");
    let sizes: &[usize] = if quick {
        &[100_000]
    } else {
        &[100_000, 1_000_000]
    };
    let mut report = String::new();
    let _ = writeln!(
        report,
        "10-NN queries, median over sample queries; scan = plain brute force on one thread"
    );
    for &n in sizes {
        for d in [8, 16, 32] {
            for shape in [Shape::Isotropic, Shape::Fitted] {
                let points = vectors(n, d, shape, 7 + d as u64);
                let start = Instant::now();
                let index = NeighbourIndex::build(&points, d, Metric::Euclidean, Path::Auto);
                let build = start.elapsed();
                let mut rng = Rng::new(99);
                let rows: Vec<usize> = (0..200).map(|_| rng.below(n as u64) as usize).collect();
                let mut query_times = Vec::new();
                for &row in &rows {
                    let start = Instant::now();
                    let found = index.nearest_to_row(row as u32, 10).expect("non-zero");
                    query_times.push(start.elapsed());
                    std::hint::black_box(found);
                }
                let mut scan_times = Vec::new();
                for &row in rows.iter().take(15) {
                    let start = Instant::now();
                    std::hint::black_box(brute_nearest(&points, d, row));
                    scan_times.push(start.elapsed());
                }
                // The same answers, checked on a few queries.
                for &row in rows.iter().take(5) {
                    let found = index.nearest_to_row(row as u32, 10).expect("non-zero");
                    let mut brute = brute_nearest(&points, d, row);
                    brute.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
                    assert_eq!(
                        found.iter().map(|f| f.row as usize).collect::<Vec<_>>(),
                        brute.iter().map(|b| b.0).collect::<Vec<_>>()
                    );
                }
                let (q, s) = (median(query_times), median(scan_times));
                let _ = writeln!(
                    report,
                    "neighbours n={n:>7} d={d:>2} {:<9} path={:<4} build {:>7.1} ms  query {:>8.3} ms  scan {:>8.3} ms  -> {:>6.1}x",
                    match shape {
                        Shape::Isotropic => "isotropic",
                        Shape::Fitted => "fitted",
                    },
                    if index.uses_tree() { "tree" } else { "scan" },
                    ms(build),
                    ms(q),
                    ms(s),
                    s.as_secs_f64() / q.as_secs_f64()
                );
                let start = Instant::now();
                let top = InnerProductIndex::build(&points, d, Path::Auto);
                let build = start.elapsed();
                // Member vectors stand in as queries: drawn like the items, independently.
                let members = vectors(100, d, shape, 1000 + d as u64);
                let queries: Vec<Vec<f64>> = members.chunks_exact(d).map(<[f64]>::to_vec).collect();
                let mut query_times = Vec::new();
                for query in &queries {
                    let start = Instant::now();
                    std::hint::black_box(top.top(query, 10, |_| true, 0));
                    query_times.push(start.elapsed());
                }
                let mut scan_times = Vec::new();
                for query in queries.iter().take(15) {
                    let start = Instant::now();
                    std::hint::black_box(brute_top(&points, d, query));
                    scan_times.push(start.elapsed());
                }
                let forced = InnerProductIndex::build(
                    &points,
                    d,
                    if top.uses_tree() {
                        Path::Scan
                    } else {
                        Path::Tree
                    },
                );
                let mut other_times = Vec::new();
                for query in &queries {
                    let start = Instant::now();
                    std::hint::black_box(forced.top(query, 10, |_| true, 0));
                    other_times.push(start.elapsed());
                }
                eprintln!(
                    "  (suggest, the other path: {:.3} ms)",
                    ms(median(other_times))
                );
                let (q, s) = (median(query_times), median(scan_times));
                let _ = writeln!(
                    report,
                    "suggest    n={n:>7} d={d:>2} {:<9} path={:<4} build {:>7.1} ms  query {:>8.3} ms  scan {:>8.3} ms  -> {:>6.1}x",
                    match shape {
                        Shape::Isotropic => "isotropic",
                        Shape::Fitted => "fitted",
                    },
                    if top.uses_tree() { "tree" } else { "scan" },
                    ms(build),
                    ms(q),
                    ms(s),
                    s.as_secs_f64() / q.as_secs_f64()
                );
                eprint!("{report}");
                report.clear();
            }
        }
    }
}
