//! Measures one machine's limits for docs/scaling.md: load time of a ratings CSV, fitter
//! set-up, time per iteration and iterations to convergence, at a given rank. Run it under
//! `/usr/bin/time -v` for the peak memory.
//!
//! ```sh
//! cargo run --release --example make_ratings -- 200000 40000 100 7 /tmp/r20m.csv
//! /usr/bin/time -v target/release/examples/scale_probe /tmp/r20m.csv 32 100 1e-4   # rank, max iterations, tol
//! ```

use std::time::Instant;

use sextant::data::{RatingsOptions, assign_holdout, load_ratings};
use sextant::model::{FitOptions, Fitter};

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let path = std::path::PathBuf::from(args.first().expect("a ratings CSV"));
    let rank: usize = args.get(1).map_or(32, |a| a.parse().expect("a rank"));
    let max_iters: usize = args
        .get(2)
        .map_or(100, |a| a.parse().expect("an iteration limit"));
    let tol: f64 = args
        .get(3)
        .map_or(1e-6, |a| a.parse().expect("a tolerance"));
    let start = Instant::now();
    let mut ratings = load_ratings(&path, &RatingsOptions::default()).expect("loads");
    let load = start.elapsed().as_secs_f64();
    assign_holdout(&mut ratings, 0.1, 0);
    let options = FitOptions {
        rank,
        max_iters,
        tol,
        ..FitOptions::default()
    };
    let start = Instant::now();
    let fitter = Fitter::new(&ratings, &options, None).expect("valid");
    let setup = start.elapsed().as_secs_f64();
    let start = Instant::now();
    let mut last = Instant::now();
    let mut times = Vec::new();
    let result = fitter
        .run(|_| {
            times.push(last.elapsed().as_secs_f64());
            last = Instant::now();
        })
        .expect("fits");
    let total = start.elapsed().as_secs_f64();
    times.sort_by(f64::total_cmp);
    let median = times[times.len() / 2];
    let held = result
        .trace
        .last()
        .and_then(|r| r.holdout_rmse)
        .unwrap_or(f64::NAN);
    println!(
        "{} ratings ({} members × {} items), rank {rank}, tol {tol:e}: load {load:.2} s; set-up {setup:.2} s; {} iterations ({}), median {median:.3} s per iteration, fit {total:.1} s; held-out RMSE {held:.4}",
        ratings.entries.len(),
        ratings.users.len(),
        ratings.items.len(),
        result.trace.len(),
        if result.converged {
            "converged"
        } else {
            "iteration limit"
        },
    );
}
