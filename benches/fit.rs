//! One fitting iteration (all users, then all items) on about 2 million generated ratings
//! (50,000 users × 10,000 items) at ranks 10 and 32, beside a batched numpy implementation
//! of the same updates (benches/numpy_fit.py) timed on the same data in the same run, and
//! the machine's float64 matrix-product peak measured by numpy.
//!
//! The same data read as counts gives the implicit-feedback iteration (confidence
//! 1 + 40·count), timed beside the implicit mode of the same numpy script.
//!
//! Run: `cargo bench --bench fit` (add `-- --quick` for a smaller data set). Prints ratios;
//! absolute times vary with the machine and its load.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Instant;

use sextant::data::{FactorTable, IdMap, Rating, Ratings};
use sextant::model::{Center, FitOptions, Fitter};
use sextant::rng::Rng;

struct Sizes {
    users: usize,
    items: usize,
    mean_per_user: usize,
    reps: usize,
}

fn generate(sizes: &Sizes, seed: u64) -> Ratings {
    let mut rng = Rng::new(seed);
    let mut ratings = Ratings::default();
    for i in 0..sizes.users {
        ratings.users.intern(&format!("u{i}"));
    }
    for j in 0..sizes.items {
        ratings.items.intern(&format!("i{j}"));
    }
    // Popularity falls off like 1/(rank + 100): a realistic skew without empty items.
    let weights: Vec<f64> = (0..sizes.items).map(|j| 1.0 / (j as f64 + 100.0)).collect();
    let total: f64 = weights.iter().sum();
    let mut cumulative = Vec::with_capacity(sizes.items);
    let mut running = 0.0;
    for w in &weights {
        running += w / total;
        cumulative.push(running);
    }
    let spread = sizes.mean_per_user as u64;
    let mut chosen = std::collections::HashSet::new();
    for user in 0..sizes.users as u32 {
        let count = (spread / 2 + rng.below(spread + 1)) as usize;
        chosen.clear();
        while chosen.len() < count.min(sizes.items) {
            let u = rng.uniform();
            let item = cumulative.partition_point(|&c| c < u).min(sizes.items - 1) as u32;
            if chosen.insert(item) {
                let value = 1.0 + rng.below(5) as f64;
                ratings.entries.push(Rating {
                    user,
                    item,
                    value,
                    holdout: false,
                });
            }
        }
    }
    ratings.entries.sort_by_key(|r| (r.user, r.item));
    ratings
}

fn write_arrays(dir: &Path, ratings: &Ratings, init: &[f64], options: &FitOptions, alpha: f64) {
    std::fs::create_dir_all(dir).expect("bench directory");
    let bytes =
        |values: Vec<u8>, name: &str| std::fs::write(dir.join(name), values).expect("write");
    bytes(
        ratings
            .entries
            .iter()
            .flat_map(|r| (r.user as i32).to_le_bytes())
            .collect(),
        "users.i32",
    );
    bytes(
        ratings
            .entries
            .iter()
            .flat_map(|r| (r.item as i32).to_le_bytes())
            .collect(),
        "items.i32",
    );
    bytes(
        ratings
            .entries
            .iter()
            .flat_map(|r| r.value.to_le_bytes())
            .collect(),
        "values.f64",
    );
    bytes(
        init.iter().flat_map(|v| v.to_le_bytes()).collect(),
        "init_items.f64",
    );
    let meta = format!(
        "{{\"rank\": {}, \"users\": {}, \"items\": {}, \"lambda\": {}, \"sigma2\": {}, \"alpha\": {alpha}}}",
        options.rank,
        ratings.users.len(),
        ratings.items.len(),
        options.lambda,
        options.sigma2
    );
    std::fs::write(dir.join("meta.json"), meta).expect("write meta");
}

fn read_f64(path: &Path) -> Vec<f64> {
    std::fs::read(path)
        .expect("numpy result")
        .chunks_exact(8)
        .map(|c| f64::from_le_bytes(c.try_into().expect("8 bytes")))
        .collect()
}

/// Useful floating-point work of one iteration, the part the speed bar is about: the
/// symmetric Gram matrices (n·D(D+1): D(D+1)/2 entries of n multiply-adds each; a general
/// matrix product would count 2nD²) and the Cholesky factorisations (D³/3).
fn gram_and_cholesky_flops(ratings: &Ratings, d: usize) -> f64 {
    let (users, items) = ratings.train_support();
    let d = d as f64;
    users
        .iter()
        .chain(&items)
        .map(|&n| f64::from(n) * d * (d + 1.0) + d * d * d / 3.0)
        .sum()
}

fn median(mut times: Vec<f64>) -> f64 {
    times.sort_by(f64::total_cmp);
    times[times.len() / 2]
}

struct Measured {
    rust: f64,
    /// The same iteration with member and item offsets (`Fitter::with_biases`), timed
    /// alternately with the plain one.
    biased: f64,
    /// The median over repetitions of (biased / plain) for the two iterations timed back to
    /// back: a load that comes and goes between repetitions cancels out of each pair.
    biased_ratio: f64,
    numpy: f64,
    peak: f64,
    flops: f64,
    max_difference: f64,
}

fn measure(ratings: &Ratings, rank: usize, reps: usize, dir: &Path, rust_only: bool) -> Measured {
    let options = FitOptions {
        rank,
        center: Center::Global,
        ..FitOptions::default()
    };
    let mut rng = Rng::new(17);
    let init: Vec<f64> = (0..ratings.items.len() * rank)
        .map(|_| rng.normal())
        .collect();
    write_arrays(dir, ratings, &init, &options, ALPHA);
    let mut ids = IdMap::new();
    for name in ratings.items.names() {
        ids.intern(name);
    }
    let table = FactorTable {
        ids,
        rank,
        values: init,
        bias: None,
    };
    let mut fitter =
        Fitter::new(ratings, &options, Some((&table, Path::new("init")))).expect("fitter");
    let mut biased_fitter = Fitter::new(ratings, &options, Some((&table, Path::new("init"))))
        .and_then(|f| f.with_biases(options.lambda))
        .expect("biased fitter");
    let mut times = Vec::new();
    let mut biased_times = Vec::new();
    let mut ratios = Vec::new();
    let mut split = (0.0, 0.0);
    let mut biased_split = (0.0, 0.0);
    for _ in 0..reps {
        let start = Instant::now();
        fitter.update_users().expect("users");
        let middle = Instant::now();
        fitter.update_items().expect("items");
        times.push(start.elapsed().as_secs_f64());
        split.0 += (middle - start).as_secs_f64() / reps as f64;
        split.1 += middle.elapsed().as_secs_f64() / reps as f64;
        let start = Instant::now();
        biased_fitter.update_users().expect("users");
        let middle = Instant::now();
        biased_fitter.update_items().expect("items");
        biased_times.push(start.elapsed().as_secs_f64());
        ratios.push(biased_times[biased_times.len() - 1] / times[times.len() - 1]);
        biased_split.0 += (middle - start).as_secs_f64() / reps as f64;
        biased_split.1 += middle.elapsed().as_secs_f64() / reps as f64;
    }
    let biased = median(biased_times);
    let biased_ratio = median(ratios);
    if rust_only {
        eprintln!(
            "rank {rank}: users {:.4} s, items {:.4} s (means); with biases {:.4} s, {:.4} s",
            split.0, split.1, biased_split.0, biased_split.1
        );
    }
    if rust_only {
        return Measured {
            rust: median(times),
            biased,
            biased_ratio,
            numpy: f64::NAN,
            peak: f64::NAN,
            flops: gram_and_cholesky_flops(ratings, rank),
            max_difference: f64::NAN,
        };
    }
    let report = numpy(dir, reps, &["dump"]);
    let numpy_items = read_f64(&dir.join("numpy_items.f64"));
    let ours = &fitter.model().items;
    let max_difference = ours
        .iter()
        .zip(&numpy_items)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    Measured {
        rust: median(times),
        biased,
        biased_ratio,
        numpy: report["seconds"].as_f64().expect("seconds"),
        peak: report["peak_gflops"].as_f64().expect("peak"),
        flops: gram_and_cholesky_flops(ratings, rank),
        max_difference,
    }
}

/// The confidence slope of the implicit benchmark (the paper's default).
const ALPHA: f64 = 40.0;

/// One implicit iteration (members, then items) on the same data read as counts, beside
/// the implicit mode of the numpy script; returns (sextant, numpy) seconds and the largest
/// difference of the item vectors after the same iterations. Reuses the arrays that
/// [`measure`] wrote into `dir` (with [`ALPHA`] in their meta).
fn measure_implicit(
    ratings: &Ratings,
    rank: usize,
    reps: usize,
    dir: &Path,
    rust_only: bool,
) -> (f64, f64, f64) {
    use sextant::model::implicit::{Confidence, ImplicitFitter, ImplicitOptions};
    let options = ImplicitOptions {
        rank,
        confidence: Confidence::Linear { alpha: ALPHA },
        ..ImplicitOptions::default()
    };
    let init = read_f64(&dir.join("init_items.f64"));
    let mut fitter = ImplicitFitter::new(ratings, &options, None)
        .expect("implicit fitter")
        .with_items(init);
    let mut times = Vec::new();
    for _ in 0..reps {
        let start = Instant::now();
        fitter.update_users().expect("users");
        fitter.update_items().expect("items");
        times.push(start.elapsed().as_secs_f64());
    }
    let rust = median(times);
    if rust_only {
        return (rust, f64::NAN, f64::NAN);
    }
    let report = numpy(dir, reps, &["dump", "implicit"]);
    let numpy_items = read_f64(&dir.join("numpy_items.f64"));
    let max_difference = fitter
        .model()
        .items
        .iter()
        .zip(&numpy_items)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    (
        rust,
        report["seconds"].as_f64().expect("seconds"),
        max_difference,
    )
}

/// Runs benches/numpy_fit.py on the arrays in `dir` and returns its JSON report.
fn numpy(dir: &Path, reps: usize, extra: &[&str]) -> serde_json::Value {
    let output = Command::new("python3")
        .arg(Path::new(env!("CARGO_MANIFEST_DIR")).join("benches/numpy_fit.py"))
        .arg(dir)
        .arg(reps.to_string())
        .args(extra)
        // Some machines here set these for old OpenBLAS builds; they slow a current numpy.
        .env_remove("OPENBLAS_CORETYPE")
        .env_remove("OPENBLAS_L2_SIZE")
        .output()
        .expect("python3 runs benches/numpy_fit.py");
    if !output.status.success() {
        let stderr = String::from_utf8_lossy(&output.stderr);
        eprintln!("the numpy baseline (benches/numpy_fit.py) failed:\n{stderr}");
        if stderr.contains("No module named 'numpy'") {
            eprintln!(
                "this benchmark times numpy beside sextant: install it with \
                 `python3 -m pip install numpy`, or pass --rust-only to time sextant alone"
            );
        }
        std::process::exit(2);
    }
    serde_json::from_slice(&output.stdout).expect("numpy JSON")
}

fn main() {
    let quick = std::env::args().any(|a| a == "--quick");
    // For profiling the Rust side alone.
    let rust_only = std::env::args().any(|a| a == "--rust-only");
    let ranks: Vec<usize> = std::env::args()
        .find_map(|a| {
            a.strip_prefix("--ranks=")
                .map(|r| r.split(',').filter_map(|x| x.parse().ok()).collect())
        })
        .unwrap_or_else(|| vec![10, 32]);
    let mut sizes = if quick {
        Sizes {
            users: 5_000,
            items: 1_000,
            mean_per_user: 40,
            reps: 3,
        }
    } else {
        Sizes {
            users: 50_000,
            items: 10_000,
            mean_per_user: 40,
            reps: 5,
        }
    };
    if let Some(reps) =
        std::env::args().find_map(|a| a.strip_prefix("--reps=").and_then(|r| r.parse().ok()))
    {
        sizes.reps = reps;
    }
    let ratings = generate(&sizes, 2026);
    let dir: PathBuf =
        std::env::temp_dir().join(format!("sextant-bench-fit-{}", std::process::id()));
    let mut report = format!(
        "one iteration, {} ratings, {} users x {} items, {} threads, median of {}, {} kernels\n",
        ratings.entries.len(),
        ratings.users.len(),
        ratings.items.len(),
        rayon::current_num_threads(),
        sizes.reps,
        if sextant::model::kernels::WIDE_KERNELS {
            "512-bit"
        } else {
            "portable"
        }
    );
    for rank in ranks {
        let m = measure(&ratings, rank, sizes.reps, &dir, rust_only);
        let gflops = m.flops / m.rust / 1e9;
        let _ = writeln!(
            report,
            "rank {rank:>2}: sextant {:.4} s, numpy {:.4} s -> {:.1}x faster; Gram (symmetric) + Cholesky \
             {:.1} GFLOP/s = {:.0}% of numpy's matmul peak {:.1} GFLOP/s; max |sextant - numpy| after \
             {} iterations {:.1e}",
            m.rust,
            m.numpy,
            m.numpy / m.rust,
            gflops,
            100.0 * gflops / m.peak,
            m.peak,
            sizes.reps,
            m.max_difference
        );
        let _ = writeln!(
            report,
            "rank {rank:>2}: with member and item biases {:.4} s -> {:+.1}% per iteration \
             (median of the {} back-to-back pairs' ratios: {:+.1}%)",
            m.biased,
            100.0 * (m.biased / m.rust - 1.0),
            sizes.reps,
            100.0 * (m.biased_ratio - 1.0)
        );
        let (ours, theirs, difference) =
            measure_implicit(&ratings, rank, sizes.reps, &dir, rust_only);
        let _ = writeln!(
            report,
            "rank {rank:>2}: implicit feedback (the values as counts) sextant {ours:.4} s, numpy \
             {theirs:.4} s -> {:.1}x faster; max |sextant - numpy| after {} iterations {difference:.1e}",
            theirs / ours,
            sizes.reps
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
    print!("{report}");
}
