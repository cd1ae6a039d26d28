//! Explanations, uncertainty and suggestions on the demo model, and against numpy.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use common::{fixture, floats, matrix, repo};
use sextant::analysis::explain::{
    explain, explain_profile, item_support, smoother_shares, training_ratings,
};
use sextant::analysis::foldin::fold_in;
use sextant::analysis::{Posterior, suggest};
use sextant::index::{InnerProductIndex, Path};
use sextant::model::load_model;

#[test]
fn predictive_sd_matches_numpy() {
    // Source: numpy on the same Φ, λ, σ² (Bishop, PRML 2006, §3.3.2, eq. 3.59 [memory for the
    // equation number]), via tests/reference/fixtures/predictive_sd.json.
    let f = fixture("predictive_sd.json");
    for case in f["cases"].as_array().unwrap() {
        let d = case["d"].as_u64().unwrap() as usize;
        let (items, _) = matrix(&case["items"]);
        let rated: Vec<u32> = floats(&case["rated"]).iter().map(|&r| r as u32).collect();
        let posterior = Posterior::new(
            &items,
            d,
            rated,
            (case["lambda"].as_f64().unwrap(), None),
            case["sigma2"].as_f64().unwrap(),
        );
        for (j, expected) in floats(&case["sd"]).iter().enumerate() {
            let sd = posterior.predictive_sd(&items[j * d..(j + 1) * d]).unwrap();
            assert!(
                (sd - expected).abs() < 1e-12,
                "d {d} item {j}: {sd} vs {expected}"
            );
        }
    }
}

#[test]
fn contributions_add_up_to_the_prediction_on_the_demo_model() {
    let model = load_model(&repo("demo-data/model")).unwrap();
    let counts = item_support(&model);
    for (user, item) in [(0u32, 0u32), (5, 17), (1499, 399), (42, 7)] {
        let e = explain(&model, user, item, 5, &counts);
        let sum: f64 = e.mu + e.contributions.iter().map(|c| c.value).sum::<f64>();
        assert!((sum - e.predicted).abs() < 1e-12, "user {user} item {item}");
        assert!((e.predicted - model.factors.predict(user, item)).abs() < 1e-12);
        assert!(
            e.contributions
                .windows(2)
                .all(|w| w[0].value.abs() >= w[1].value.abs())
        );
        assert_eq!(e.contributions.len(), model.factors.rank);
        assert!(
            e.evidence
                .windows(2)
                .all(|w| w[0].distance <= w[1].distance)
        );
        assert!(e.evidence.iter().all(|x| x.item != item));
        // The predictive SD is at least the noise SD, σ.
        assert!(e.predictive_sd.unwrap() >= model.manifest.sigma2.sqrt());
        assert_eq!(
            e.support.user_low_support,
            e.support.user_ratings < model.factors.rank
        );
    }
}

#[test]
fn suggestions_equal_a_brute_force_ranking_and_skip_rated_items() {
    let model = load_model(&repo("demo-data/model")).unwrap();
    let d = model.factors.rank;
    for path in [Path::Tree, Path::Scan] {
        let index = InnerProductIndex::build(&model.factors.items, d, path);
        for user in [0u32, 3, 777, 1499] {
            let rated: Vec<u32> = model
                .ratings
                .entries
                .iter()
                .filter(|r| r.user == user)
                .map(|r| r.item)
                .collect();
            let mut expected: Vec<(u32, f64)> = (0..model.ratings.items.len() as u32)
                .filter(|j| !rated.contains(j))
                .map(|j| (j, model.factors.predict(user, j)))
                .collect();
            expected.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
            let found = suggest(&model, &index, user, 10, false);
            assert_eq!(found.len(), 10);
            for (s, e) in found.iter().zip(&expected) {
                assert_eq!(s.item, e.0, "user {user}");
                assert!((s.predicted - e.1).abs() < 1e-12);
                assert_eq!(s.rounded, Some(model.manifest.scale.round(s.predicted)));
            }
            let with_rated = suggest(&model, &index, user, 3, true);
            let best = (0..model.ratings.items.len() as u32)
                .max_by(|&a, &b| {
                    model
                        .factors
                        .predict(user, a)
                        .total_cmp(&model.factors.predict(user, b))
                        .then(b.cmp(&a))
                })
                .unwrap();
            assert_eq!(with_rated[0].item, best);
        }
    }
}

#[test]
fn the_by_rating_decomposition_matches_numpy() {
    // Source: numpy.linalg.solve of the member's ridge system, read as a linear smoother
    // (the prediction's vector part is Σ_j s_jk y_j with s_jk = [v_k, 0]ᵀ A⁻¹ x_j), via
    // tests/reference/fixtures/by_rating.json; with and without a member offset.
    let f = fixture("by_rating.json");
    for (n, case) in f["cases"].as_array().unwrap().iter().enumerate() {
        let d = case["d"].as_u64().unwrap() as usize;
        let (items, _) = matrix(&case["items"]);
        let offsets = floats(&case["item_offsets"]);
        let lambda_bias = case["lambda_bias"].as_f64();
        let rated: Vec<(u32, f64)> = floats(&case["rated"])
            .iter()
            .zip(floats(&case["ratings"]))
            .map(|(&j, r)| (j as u32, r))
            .collect();
        let (shares, w) = smoother_shares(
            (&items, lambda_bias.map(|l| (&offsets[..], l))),
            d,
            (
                case["mu"].as_f64().unwrap(),
                case["lambda"].as_f64().unwrap(),
                case["sigma2"].as_f64().unwrap(),
            ),
            &rated,
            case["item"].as_u64().unwrap() as u32,
        )
        .unwrap();
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * b.abs().max(1.0);
        for ((s, weight), share) in shares
            .iter()
            .zip(floats(&case["weights"]))
            .zip(floats(&case["shares"]))
        {
            assert!(
                close(s.weight, weight),
                "case {n}: {} vs {weight}",
                s.weight
            );
            assert!(close(s.share, share), "case {n}: {} vs {share}", s.share);
        }
        for (a, b) in w.iter().zip(floats(&case["vector"])) {
            assert!(close(*a, b), "case {n}: vector {a} vs {b}");
        }
        if let Some(bias) = case["bias"].as_f64() {
            assert!(close(w[d], bias), "case {n}: offset {} vs {bias}", w[d]);
        }
        // The shares add up to the vector's part of the prediction.
        let k = case["item"].as_u64().unwrap() as usize;
        let part: f64 = w[..d]
            .iter()
            .zip(&items[k * d..(k + 1) * d])
            .map(|(a, b)| a * b)
            .sum();
        let sum: f64 = shares.iter().map(|s| s.share).sum();
        assert!((sum - part).abs() < 1e-12, "case {n}: {sum} vs {part}");
    }
}

#[test]
fn by_rating_shares_add_up_and_say_how_far_the_stored_vector_is() {
    let model = load_model(&repo("demo-data/model")).unwrap();
    let counts = item_support(&model);
    for (user, item) in [(0u32, 0u32), (5, 17), (1499, 399), (42, 7)] {
        let e = explain(&model, user, item, 5, &counts);
        let b = e.by_rating.as_ref().expect("λ > 0: always determined");
        let sum: f64 = e.mu + b.shares.iter().map(|s| s.share).sum::<f64>();
        assert!((sum - b.predicted).abs() < 1e-12, "{user}/{item}");
        assert!(
            b.shares
                .windows(2)
                .all(|w| w[0].share.abs() >= w[1].share.abs())
        );
        assert_eq!(b.shares.len(), e.support.user_ratings);
        // The re-solved member is the fold-in of their training ratings.
        let rated = training_ratings(&model, user);
        let folded = fold_in(&model, &rated).unwrap();
        let refreshed = model.factors.predict_for(&folded.vector, folded.bias, item);
        assert!(
            (refreshed - b.predicted).abs() < 1e-12,
            "{refreshed} vs {}",
            b.predicted
        );
        assert!((b.difference - (b.predicted - e.predicted)).abs() < 1e-15);
        // The demo fit converged (tol 1e-6 on L): the stored vector is near the optimum
        // for the final item vectors, not at it; a thousandth of a star is typical.
        assert!(
            b.difference != 0.0 && b.difference.abs() < 0.05,
            "{}",
            b.difference
        );
        // A what-if profile's vector is the optimum itself.
        let profile = explain_profile(&model, &folded.profile(&rated), item, 0, &counts);
        let p = profile.by_rating.unwrap();
        assert!(p.difference.abs() < 1e-12, "{}", p.difference);
    }
}

#[test]
fn expected_percentile_rank_matches_numpy() {
    // Source: numpy by the definition of Hu, Koren & Volinsky (ICDM 2008, §6): candidates
    // are the items without a training interaction, ties count half. Fixture:
    // percentile_rank.json (one case with tied scores).
    use sextant::analysis::ranking::expected_percentile_rank;
    use sextant::data::{Rating, Ratings};
    let f = fixture("percentile_rank.json");
    for case in f["cases"].as_array().unwrap() {
        let rank = case["rank"].as_u64().unwrap() as usize;
        let (users, _) = matrix(&case["users"]);
        let (items, _) = matrix(&case["items"]);
        let mut counts = Ratings::default();
        for u in 0..users.len() / rank {
            counts.users.intern(&format!("u{u}"));
        }
        for j in 0..case["n_items"].as_u64().unwrap() {
            counts.items.intern(&format!("i{j}"));
        }
        for row in case["counts"].as_array().unwrap() {
            counts.entries.push(Rating {
                user: counts.users.get(row[0].as_str().unwrap()).unwrap(),
                item: counts.items.get(row[1].as_str().unwrap()).unwrap(),
                value: row[2].as_f64().unwrap(),
                holdout: row[3] == "holdout",
            });
        }
        counts.entries.sort_by_key(|r| (r.user, r.item));
        let factors = sextant::model::FactorModel {
            rank,
            mu: 0.0,
            users,
            items,
            biases: None,
        };
        let epr = expected_percentile_rank(&factors, &counts).unwrap();
        let expected = case["epr"].as_f64().unwrap();
        assert!((epr - expected).abs() < 1e-12, "{epr} vs {expected}");
    }
}
