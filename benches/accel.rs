//! Plain coordinate ascent against the accelerated fits, iterations and time to the
//! tolerance, on the bundled demo and on generated sets with a planted low-rank structure.
//!
//! For every data set and rank, each method runs from the same start to the default
//! tolerance (1e-6) and the plain method also to 1e-10; the table gives iterations,
//! seconds, how many iterations ended on an extrapolated point, and how far the final L is
//! from the plain 1e-10 run's, in units of |L|. Ratios are within one run (shared machines
//! are noisy).
//!
//! ```sh
//! cargo bench --bench accel              # demo, 200k and 2M ratings, ranks 10 and 32 (hours:
//!                                        # the plain runs to 1e-10 take up to 20,000 iterations)
//! cargo bench --bench accel -- --quick   # demo and 200k only
//! cargo bench --bench accel -- --sets=demo,200k --ranks=10
//! ```

use std::path::Path;
use std::time::Instant;

use sextant::data::{Ratings, RatingsOptions, assign_holdout, read_ratings};
use sextant::model::{Accel, Center, FitOptions, fit};

/// The project's seeded planted ratings (`sextant::synthetic`), read as a user would.
fn planted(users: usize, items: usize, per_user: u64, seed: u64) -> Ratings {
    let mut csv = Vec::new();
    sextant::synthetic::write_ratings(&mut csv, users, items, per_user, seed).expect("generate");
    read_ratings(
        &csv[..],
        Path::new("planted.csv"),
        &RatingsOptions::default(),
    )
    .expect("planted ratings")
}

struct Run {
    iterations: usize,
    seconds: f64,
    extrapolated: usize,
    log_joint: f64,
    converged: bool,
}

fn run(ratings: &Ratings, rank: usize, accel: Accel, tol: f64, max_iters: usize) -> Run {
    let options = FitOptions {
        rank,
        center: Center::Global,
        tol,
        max_iters,
        accel,
        ..FitOptions::default()
    };
    let start = Instant::now();
    let result = fit(ratings, &options, None, |_| {}).expect("fit");
    let last = result.trace.last().expect("one iteration");
    Run {
        iterations: result.trace.len(),
        seconds: start.elapsed().as_secs_f64(),
        extrapolated: result.trace.iter().filter(|r| r.extrapolated).count(),
        log_joint: last.log_joint,
        converged: result.converged,
    }
}

fn main() {
    let quick = std::env::args().any(|a| a == "--quick");
    let list = |flag: &str| -> Option<Vec<String>> {
        std::env::args().find_map(|a| {
            a.strip_prefix(flag)
                .map(|v| v.split(',').map(str::to_owned).collect())
        })
    };
    let ranks: Vec<usize> = list("--ranks=").map_or(vec![10, 32], |r| {
        r.iter().filter_map(|x| x.parse().ok()).collect()
    });
    let only = list("--sets=");
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/ratings.csv");
    let file = std::fs::File::open(&demo).expect("demo-data/ratings.csv");
    let mut sets = vec![(
        "demo".to_owned(),
        read_ratings(file, &demo, &RatingsOptions::default()).expect("demo ratings"),
    )];
    sets.push(("200k".to_owned(), planted(5_000, 2_000, 40, 7)));
    if !quick {
        sets.push(("2M".to_owned(), planted(50_000, 10_000, 40, 8)));
    }
    println!(
        "set    rank  method  tol     iters  extrap  seconds   converged  (L - L_plain@1e-10)/|L|"
    );
    for (name, mut ratings) in sets {
        if only.as_ref().is_some_and(|o| !o.contains(&name)) {
            continue;
        }
        assign_holdout(&mut ratings, 0.1, 0);
        for &rank in &ranks {
            let reference = run(&ratings, rank, Accel::None, 1e-10, 20_000);
            let print = |method: &str, tol: f64, r: &Run| {
                println!(
                    "{name:<6} {rank:>4}  {method:<6}  {tol:<6.0e}  {:>5}  {:>6}  {:>8.3}  {:<9}  {:+.2e}",
                    r.iterations,
                    r.extrapolated,
                    r.seconds,
                    r.converged,
                    (r.log_joint - reference.log_joint) / reference.log_joint.abs()
                );
            };
            print("plain", 1e-10, &reference);
            let methods = [
                ("plain", Accel::None),
                ("line", Accel::Line),
                ("anders", Accel::Anderson),
            ];
            for (method, accel) in methods {
                let r = run(&ratings, rank, accel, 1e-6, 5_000);
                print(method, 1e-6, &r);
            }
            for (method, accel) in &methods[1..] {
                print(method, 1e-10, &run(&ratings, rank, *accel, 1e-10, 20_000));
            }
        }
    }
}
