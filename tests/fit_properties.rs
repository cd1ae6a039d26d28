//! Properties every correct fit has, checked on the demo data and on planted matrices.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use common::repo;
use nalgebra::DMatrix;
use sextant::analysis::principal_angles;
use sextant::data::{Rating, Ratings, RatingsOptions, assign_holdout, load_ratings};
use sextant::error::FitError;
use sextant::model::{Accel, Center, FitOptions, Fitter, fit};
use sextant::rng::Rng;

/// A thread pool of `threads` threads, to run a fit on.
fn pool_of(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
}

fn demo_ratings() -> Ratings {
    load_ratings(&repo("demo-data/ratings.csv"), &RatingsOptions::default()).unwrap()
}

#[test]
fn log_joint_never_decreases_at_any_half_step() {
    // Common practice: each block update maximises L exactly in its block, so L is
    // non-decreasing after every half-step (a decrease would be a bug).
    let mut ratings = demo_ratings();
    assign_holdout(&mut ratings, 0.1, 3);
    for (seed, rank, lambda) in [
        (0, 10, 1.0),
        (1, 3, 0.1),
        (2, 16, 5.0),
        (3, 1, 1.0),
        (4, 6, 25.0),
    ] {
        let options = FitOptions {
            rank,
            lambda,
            seed,
            ..FitOptions::default()
        };
        let mut fitter = Fitter::new(&ratings, &options, None).unwrap();
        let mut previous = f64::NEG_INFINITY;
        for step in 0..30 {
            fitter.update_users().unwrap();
            let after_users = fitter.log_joint();
            fitter.update_items().unwrap();
            let after_items = fitter.log_joint();
            // Allow only rounding noise relative to |L|.
            let slack = 1e-12 * after_users.abs();
            assert!(
                after_users >= previous - slack,
                "seed {seed} rank {rank} λ {lambda} step {step}: users"
            );
            assert!(
                after_items >= after_users - slack,
                "seed {seed} rank {rank} λ {lambda} step {step}: items"
            );
            previous = after_items;
        }
    }
}

#[test]
fn trace_is_non_decreasing_and_reports_every_iteration() {
    let mut ratings = demo_ratings();
    assign_holdout(&mut ratings, 0.1, 0);
    let options = FitOptions {
        max_iters: 40,
        ..FitOptions::default()
    };
    let mut seen = Vec::new();
    let result = fit(&ratings, &options, None, |r| seen.push(r.iter)).unwrap();
    assert_eq!(seen, (1..=result.trace.len()).collect::<Vec<_>>());
    assert!(
        result
            .trace
            .windows(2)
            .all(|w| w[1].log_joint >= w[0].log_joint)
    );
    assert!(result.trace.iter().all(|r| r.holdout_rmse.is_some()));
}

#[test]
fn lambda_zero_guard_counts_and_names_short_users_and_items() {
    // Common practice: without the prior every user needs at least D ratings (and every
    // item D raters) or the least-squares problem has no unique solution.
    let ratings = demo_ratings();
    let (users, items) = ratings.train_support();
    let short_users = users.iter().filter(|&&c| c < 10).count();
    let short_items = items.iter().filter(|&&c| c < 10).count();
    assert!(short_users > 0, "the demo data has a long tail by design");
    let options = FitOptions {
        lambda: 0.0,
        ..FitOptions::default()
    };
    let err = Fitter::new(&ratings, &options, None)
        .err()
        .expect("refused");
    let FitError::Underdetermined {
        rank,
        short_users: u,
        short_items: i,
        user_list,
        ..
    } = &err
    else {
        panic!("unexpected error {err}");
    };
    assert_eq!((*rank, *u, *i), (10, short_users, short_items));
    let first = (0..users.len()).find(|&k| users[k] < 10).unwrap();
    assert!(user_list.contains(&format!("'{}'", ratings.users.name(first as u32))));
    let message = err.to_string();
    assert!(message.contains("--lambda > 0"), "{message}");
    // With rank 1 every user and item has enough ratings and λ = 0 is accepted.
    let options = FitOptions {
        rank: 1,
        lambda: 0.0,
        max_iters: 3,
        ..FitOptions::default()
    };
    fit(&ratings, &options, None, |_| {}).unwrap();
}

#[test]
fn results_are_bit_identical_whatever_the_thread_count() {
    let mut ratings = demo_ratings();
    assign_holdout(&mut ratings, 0.1, 9);
    let options = FitOptions {
        max_iters: 15,
        seed: 9,
        ..FitOptions::default()
    };
    let run = |threads: usize| {
        let pool = pool_of(threads);
        pool.install(|| fit(&ratings, &options, None, |_| {}).unwrap())
    };
    let one = run(1);
    for threads in [2, 3, 8] {
        let other = run(threads);
        assert_eq!(one.factors.users, other.factors.users, "{threads} threads");
        assert_eq!(one.factors.items, other.factors.items, "{threads} threads");
        assert_eq!(one.trace, other.trace, "{threads} threads");
    }
    // With member and item offsets too; and L never falls.
    let biased = |threads: usize| {
        let pool = pool_of(threads);
        pool.install(|| {
            sextant::model::Fitter::new(&ratings, &options, None)
                .and_then(|f| f.with_biases(0.5))
                .and_then(|f| f.run(|_| {}))
                .unwrap()
        })
    };
    let one = biased(1);
    assert!(
        one.trace
            .windows(2)
            .all(|w| w[1].log_joint >= w[0].log_joint - 1e-9 * w[0].log_joint.abs()),
        "L fell with biases"
    );
    for threads in [2, 3] {
        let other = biased(threads);
        assert_eq!(one.factors.users, other.factors.users, "{threads} threads");
        assert_eq!(
            one.factors.biases, other.factors.biases,
            "{threads} threads"
        );
        assert_eq!(one.trace, other.trace, "{threads} threads");
    }
    // Implicit feedback (the ratings read as counts, with the Gram sums in fixed chunks):
    // the same bits on any number of threads, and the loss never rises.
    let implicit = |threads: usize| {
        let pool = pool_of(threads);
        let options = sextant::model::implicit::ImplicitOptions {
            rank: options.rank,
            max_iters: 8,
            ..Default::default()
        };
        pool.install(|| {
            sextant::model::implicit::ImplicitFitter::new(&ratings, &options, None)
                .and_then(|f| f.run(|_| {}))
                .unwrap()
        })
    };
    let one = implicit(1);
    assert!(
        one.trace
            .windows(2)
            .all(|w| w[1].loss <= w[0].loss * (1.0 + 1e-12)),
        "the implicit loss rose: {:?}",
        one.trace
    );
    for threads in [2, 3] {
        let other = implicit(threads);
        assert_eq!(one.factors, other.factors, "{threads} threads");
        assert_eq!(one.trace, other.trace, "{threads} threads");
    }
}

/// A planted rank-`rank` matrix plus Gaussian noise, sampled at `fraction` of its entries.
fn planted(
    users: usize,
    items: usize,
    rank: usize,
    noise: f64,
    fraction: f64,
    seed: u64,
) -> (Ratings, DMatrix<f64>) {
    let mut rng = Rng::new(seed);
    let u = DMatrix::from_fn(users, rank, |_, _| rng.normal());
    let v = DMatrix::from_fn(items, rank, |_, _| rng.normal());
    let truth = &u * v.transpose();
    let mut sample = Rng::new(seed + 1000);
    let mut ratings = Ratings::default();
    for i in 0..users {
        ratings.users.intern(&format!("u{i}"));
    }
    for j in 0..items {
        ratings.items.intern(&format!("i{j}"));
    }
    for i in 0..users {
        for j in 0..items {
            if sample.uniform() < fraction {
                let value = truth[(i, j)] + noise * sample.normal();
                ratings.entries.push(Rating {
                    user: i as u32,
                    item: j as u32,
                    value,
                    holdout: false,
                });
            }
        }
    }
    (ratings, v)
}

#[test]
fn planted_low_rank_is_recovered_better_as_more_is_observed() {
    // Common practice for matrix completion: with a planted rank-3 matrix and noise SD 0.3,
    // held-out RMSE approaches the noise level and the fitted item subspace approaches the
    // planted one (principal angles, Björck & Golub 1973) as the observed share grows.
    let noise = 0.3;
    let mut worst_angles = Vec::new();
    let mut holdout_rmse = Vec::new();
    for fraction in [0.08, 0.2, 0.5] {
        let (mut ratings, truth_items) = planted(300, 200, 3, noise, fraction, 42);
        assign_holdout(&mut ratings, 0.1, 1);
        let options = FitOptions {
            rank: 3,
            lambda: 0.05,
            sigma2: noise * noise,
            center: Center::None,
            max_iters: 300,
            ..FitOptions::default()
        };
        let result = fit(&ratings, &options, None, |_| {}).unwrap();
        let items = DMatrix::from_row_slice(200, 3, &result.factors.items);
        worst_angles.push(principal_angles(&items, &truth_items)[0]);
        holdout_rmse.push(result.trace.last().unwrap().holdout_rmse.unwrap());
    }
    assert!(
        worst_angles.windows(2).all(|w| w[1] < w[0]),
        "angles {worst_angles:?}"
    );
    assert!(
        holdout_rmse.windows(2).all(|w| w[1] < w[0]),
        "held-out RMSE {holdout_rmse:?}"
    );
    assert!(
        holdout_rmse[2] < 1.15 * noise,
        "held-out RMSE {holdout_rmse:?} vs noise {noise}"
    );
    assert!(worst_angles[2] < 0.05, "angles {worst_angles:?}");
}

#[test]
fn committed_demo_model_is_reproduced_bit_for_bit() {
    // The committed demo model must be exactly what `sextant fit` makes from the committed
    // demo data with the options its manifest records.
    let committed = sextant::model::load_model(&repo("demo-data/model")).unwrap();
    let recorded = committed.manifest.options.clone().expect("a fitted model");
    let ratings_path = repo("demo-data/ratings.csv");
    let mut ratings = load_ratings(&ratings_path, &RatingsOptions::default()).unwrap();
    assign_holdout(&mut ratings, recorded.holdout, committed.manifest.seed);
    let options = FitOptions {
        rank: committed.manifest.rank,
        lambda: committed.manifest.lambda,
        sigma2: committed.manifest.sigma2,
        center: committed.manifest.center,
        max_iters: recorded.max_iters,
        tol: recorded.tol,
        seed: committed.manifest.seed,
        lambda_bias: committed.manifest.lambda_bias,
        accel: Accel::None,
    };
    let result = fit(&ratings, &options, None, |_| {}).unwrap();
    assert_eq!(result.trace, committed.manifest.trace);
    assert_eq!(result.factors.users, committed.factors.users);
    assert_eq!(result.factors.items, committed.factors.items);
    assert_eq!(ratings.entries, committed.ratings.entries);
    // And the whole directory, file by file, through the binary's own writer.
    let meta = sextant::data::load_items_meta(
        &repo("demo-data/items.csv"),
        &sextant::data::meta::MetaColumns::default(),
        &ratings.items,
    )
    .unwrap();
    let provenance = sextant::model::Provenance {
        scale: committed.manifest.scale.clone(),
        inputs: committed.manifest.inputs.clone(),
        meta: Some(meta),
    };
    let model =
        sextant::model::Model::from_fit(ratings, &options, recorded, result, provenance).unwrap();
    let out = tempfile::tempdir().unwrap();
    let dir = out.path().join("model");
    sextant::model::save_model(&dir, &model).unwrap();
    common::assert_same_model_files(&dir, &repo("demo-data/model"));
}

#[test]
fn accelerated_fits_never_lower_l_and_do_not_depend_on_threads() {
    // Each iteration keeps a proposal only when it raises L above the plain iteration's
    // result, so the trace is non-decreasing as for the plain method (common practice for
    // safeguarded acceleration); the proposals are element-wise and the sums in fixed
    // order, so the bits do not depend on the thread count. With biases too.
    let mut ratings = demo_ratings();
    assign_holdout(&mut ratings, 0.1, 4);
    for accel in [Accel::Line, Accel::Anderson] {
        for lambda_bias in [None, Some(0.5)] {
            let options = FitOptions {
                max_iters: 40,
                seed: 4,
                accel,
                lambda_bias,
                ..FitOptions::default()
            };
            let run = |threads: usize| {
                let pool = pool_of(threads);
                pool.install(|| fit(&ratings, &options, None, |_| {}).unwrap())
            };
            let one = run(1);
            let what = format!("{accel:?}, biases {lambda_bias:?}");
            assert!(
                one.trace
                    .windows(2)
                    .all(|w| w[1].log_joint >= w[0].log_joint),
                "{what}"
            );
            assert!(
                one.trace.iter().any(|r| r.extrapolated),
                "{what}: never taken"
            );
            assert!(!one.trace[0].extrapolated, "{what}");
            let two = run(2);
            assert_eq!(one.factors, two.factors, "{what}");
            assert_eq!(one.trace, two.trace, "{what}");
        }
    }
}

#[test]
fn accelerated_fits_reach_the_plain_fits_optimum() {
    // Run to a tight tolerance, every method ends at the same L (a local optimum of a
    // well-determined rank-4 fit of the demo) and the same held-out RMSE.
    let mut ratings = demo_ratings();
    assign_holdout(&mut ratings, 0.1, 5);
    let end = |accel: Accel| {
        let options = FitOptions {
            rank: 4,
            lambda: 5.0,
            tol: 1e-12,
            max_iters: 20_000,
            accel,
            ..FitOptions::default()
        };
        let result = fit(&ratings, &options, None, |_| {}).unwrap();
        assert!(result.converged, "{accel:?}");
        let last = *result.trace.last().unwrap();
        (
            last.log_joint,
            last.holdout_rmse.unwrap(),
            result.trace.len(),
        )
    };
    let (plain, plain_rmse, plain_iters) = end(Accel::None);
    for accel in [Accel::Line, Accel::Anderson] {
        let (l, rmse, iters) = end(accel);
        assert!(
            (l - plain).abs() <= 1e-9 * plain.abs(),
            "{accel:?}: {l} vs {plain}"
        );
        assert!(
            (rmse - plain_rmse).abs() <= 1e-6,
            "{accel:?}: {rmse} vs {plain_rmse}"
        );
        assert!(
            iters < plain_iters,
            "{accel:?}: {iters} vs {plain_iters} iterations"
        );
    }
}
