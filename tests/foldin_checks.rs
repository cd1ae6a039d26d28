//! What-if profiles: folding in is one ridge solve (checked against numpy), reproduces a
//! converged member's vector, and the command reads profiles with care.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use common::{fixture, floats, matrix, max_rel_diff, repo, sextant};
use sextant::analysis::explain::{Profile, explain_profile, item_support, training_ratings};
use sextant::analysis::foldin::{fold_in, fold_in_vectors, suggest_profile};
use sextant::analysis::plain::plain_explanation;
use sextant::analysis::suggest;
use sextant::index::{InnerProductIndex, Path};
use sextant::model::load_model;
use sextant::model::notes::Annotations;

#[test]
fn folding_in_equals_a_numpy_ridge_solve() {
    // Source: numpy.linalg.solve on (λσ² I + VᵀV) u = Vᵀ(r − μ), via
    // tests/reference/fixtures/fold_in.json.
    for case in fixture("fold_in.json")["cases"].as_array().unwrap() {
        let d = case["d"].as_u64().unwrap() as usize;
        let (items, _) = matrix(&case["items"]);
        let rated: Vec<(u32, f64)> = floats(&case["rated"])
            .into_iter()
            .zip(floats(&case["ratings"]))
            .map(|(j, r)| (j as u32, r))
            .collect();
        let ridge = case["lambda"].as_f64().unwrap() * case["sigma2"].as_f64().unwrap();
        let mu = case["mu"].as_f64().unwrap();
        let vector = fold_in_vectors(&items, d, mu, ridge, &rated).unwrap();
        let expected = floats(&case["vector"]);
        let err = vector
            .iter()
            .zip(&expected)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0, f64::max);
        assert!(err < 1e-9, "d = {d}: {err}");
        let predictions: Vec<f64> = items
            .chunks_exact(d)
            .map(|v| mu + v.iter().zip(&vector).map(|(a, b)| a * b).sum::<f64>())
            .collect();
        assert!(max_rel_diff(&predictions, &floats(&case["predictions"])) < 1e-9);
        // The order of the profile's rows does not matter.
        let mut reversed = rated.clone();
        reversed.reverse();
        assert_eq!(
            fold_in_vectors(&items, d, mu, ridge, &reversed).unwrap(),
            vector
        );
    }
}

#[test]
fn folding_in_a_fitted_members_ratings_lands_on_their_vector() {
    // The fit stops when an iteration raises the log joint likelihood L by less than tol·|L|.
    // Folding every member in again is the next iteration's user step, so it may raise L
    // only by about that much, never lower it (each fold-in maximises the member's block).
    let model = load_model(&repo("demo-data/model")).unwrap();
    let m = &model.manifest;
    assert!(m.converged);
    let tol = m.options.as_ref().unwrap().tol;
    let last = m.trace.last().unwrap().log_joint;
    let block = |u: &[f64], rated: &[(u32, f64)]| {
        let sse: f64 = rated
            .iter()
            .map(|&(j, r)| {
                let v = model.factors.item(j);
                let p = model.factors.mu + u.iter().zip(v).map(|(a, b)| a * b).sum::<f64>();
                (r - p) * (r - p)
            })
            .sum();
        -sse / (2.0 * m.sigma2) - m.lambda / 2.0 * u.iter().map(|x| x * x).sum::<f64>()
    };
    let (mut gain, mut worst_relative) = (0.0f64, 0.0f64);
    for user in 0..model.factors.user_count() as u32 {
        let rated = training_ratings(&model, user);
        let vector = fold_in(&model, &rated).unwrap().vector;
        let fitted = model.factors.user(user);
        let step = block(&vector, &rated) - block(fitted, &rated);
        assert!(
            step >= -1e-9,
            "member {user}: folding in lowered L by {step}"
        );
        gain += step;
        let norm = fitted.iter().map(|x| x * x).sum::<f64>().sqrt().max(1e-12);
        let diff = vector
            .iter()
            .zip(fitted)
            .map(|(a, b)| (a - b).powi(2))
            .sum::<f64>()
            .sqrt();
        worst_relative = worst_relative.max(diff / norm);
    }
    assert!(
        gain < tol * last.abs(),
        "gain {gain} vs tol·|L| {}",
        tol * last.abs()
    );
    assert!(worst_relative < 0.01, "{worst_relative}");
}

#[test]
fn a_folded_member_gets_the_members_suggestions_and_explanations() {
    let model = load_model(&repo("demo-data/model")).unwrap();
    let index = InnerProductIndex::build(&model.factors.items, model.factors.rank, Path::Auto);
    let user = 3;
    let rated = training_ratings(&model, user);
    let vector = model.factors.user(user).to_vec();
    let profile = Profile {
        vector: &vector,
        bias: 0.0,
        rated: &rated,
    };
    // With the member's own vector and training ratings, the profile suggestions equal the
    // member's suggestions when held-out items are not excluded either.
    let all_rated: Vec<u32> = model
        .ratings
        .entries
        .iter()
        .filter(|r| r.user == user && r.holdout)
        .map(|r| r.item)
        .collect();
    let own = suggest(&model, &index, user, 20, false);
    let folded = suggest_profile(&model, &index, &profile, 20 + all_rated.len());
    let folded: Vec<u32> = folded
        .iter()
        .map(|s| s.item)
        .filter(|j| !all_rated.contains(j))
        .take(20)
        .collect();
    assert_eq!(own.iter().map(|s| s.item).collect::<Vec<_>>(), folded);
    let e = explain_profile(&model, &profile, own[0].item, 3, &item_support(&model));
    assert!((e.predicted - own[0].predicted).abs() < 1e-12);
    assert_eq!(e.user, None);
}

#[test]
fn a_plain_explanation_uses_only_the_members_own_ratings() {
    let model = load_model(&repo("demo-data/model")).unwrap();
    let counts = item_support(&model);
    for user in [0u32, 163, 700] {
        let rated = training_ratings(&model, user);
        for item in [5u32, 42, 300] {
            let e = sextant::analysis::explain(&model, user, item, 5, &counts);
            let text = plain_explanation(&model, &e, &Annotations::default());
            // Every catalogue title it names is the item itself or one the member rated.
            let titles = model.meta.as_ref().unwrap();
            for j in 0..model.factors.item_count() as u32 {
                let title = titles.get(j).unwrap().title.as_deref().unwrap();
                if text.contains(title) {
                    let own = j == item || rated.iter().any(|&(r, _)| r == j);
                    let longer = (0..model.factors.item_count() as u32).any(|k| {
                        let other = titles.get(k).unwrap().title.as_deref().unwrap();
                        other != title && other.contains(title) && text.contains(other)
                    });
                    assert!(own || longer, "member {user}: '{title}' in: {text}");
                }
            }
            // No member id, and no aggregate of other members (item rating counts, μ).
            assert!(!text.contains(" m0") && !text.contains(&format!("{:.2}", model.factors.mu)));
            assert!(
                !text.contains(&format!(" {} ", counts[item as usize]))
                    || counts[item as usize] <= 5
            );
            assert!(!text.contains("NaN"));
        }
    }
}

#[test]
fn the_fold_in_command_reads_profiles_with_care() {
    let dir = tempfile::tempdir().unwrap();
    let model = repo("demo-data/model");
    let write = |name: &str, text: &str| {
        let path = dir.path().join(name);
        std::fs::write(&path, text).unwrap();
        path
    };
    let good = write(
        "good.csv",
        "item,rating,when\nr042,5,x\nr001,4,y\nr999,3,z\n",
    );
    let out = sextant(&[
        "fold-in",
        model.to_str().unwrap(),
        good.to_str().unwrap(),
        "-n",
        "3",
        "--format",
        "json",
    ]);
    assert!(out.status.success());
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(json["ratings_used"], 2);
    assert_eq!(json["vector"].as_array().unwrap().len(), 10);
    assert_eq!(json["suggestions"].as_array().unwrap().len(), 3);
    assert_eq!(json["suggestions"][0]["rank"], 1);
    assert!(json["suggestions"][0]["predicted"].is_f64());
    assert!(String::from_utf8_lossy(&out.stderr).contains("'r999' (line 4)"));
    let csv = sextant(&[
        "fold-in",
        model.to_str().unwrap(),
        good.to_str().unwrap(),
        "-n",
        "2",
        "--format",
        "csv",
    ]);
    assert!(String::from_utf8_lossy(&csv.stdout).starts_with("rank,item,predicted,rounded"));

    for (name, text, reason) in [
        (
            "twice.csv",
            "item,rating\nr042,5\nr042,4\n",
            "line 3: item 'r042' is rated twice (first on line 2)",
        ),
        (
            "off-scale.csv",
            "item,rating\nr042,7\n",
            "line 2: rating 7 is not on the model's rating scale",
        ),
        (
            "header-only.csv",
            "item,rating\n",
            "has a header but no ratings",
        ),
        (
            "no-rating-column.csv",
            "item,stars\nr042,5\n",
            "missing column 'rating'",
        ),
        (
            "not-a-number.csv",
            "item,rating\nr042,five\n",
            "line 2: rating 'five' is not a number",
        ),
    ] {
        let path = write(name, text);
        let out = sextant(&["fold-in", model.to_str().unwrap(), path.to_str().unwrap()]);
        assert_eq!(out.status.code(), Some(2), "{name}");
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert!(
            stderr.contains(name) && stderr.contains(reason),
            "{name}: {stderr}"
        );
        assert!(out.stdout.is_empty());
    }
}
