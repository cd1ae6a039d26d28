//! Models with member and item offsets (`fit --biases`, `import --user-bias-col`): the
//! offsets reach every figure, round-trip through the model format and the export/import
//! tables, and the profile solve matches numpy.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::path::Path;

use common::{fixture, floats, matrix, repo, sextant};
use serde_json::Value;
use sextant::analysis::Posterior;
use sextant::analysis::explain::{explain, item_support, training_ratings};
use sextant::analysis::foldin::{fold_in, fold_in_with_offsets};
use sextant::analysis::suggest::{ranking_index, suggest};
use sextant::model::{Biases, FactorModel, load_model};

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

fn json(args: &[&str]) -> Value {
    let out = sextant(args);
    assert!(out.status.success(), "{args:?}: {}", text(&out.stderr));
    serde_json::from_slice(&out.stdout).unwrap()
}

/// The demo ratings fitted with biases (λ_b = 2) into `dir`.
fn fit_biased(dir: &Path) {
    let out = sextant(&[
        "fit",
        &repo("demo-data/ratings.csv").display().to_string(),
        "--catalogue",
        &repo("demo-data/items.csv").display().to_string(),
        "--biases",
        "--lambda-bias",
        "2",
        "--max-iters",
        "30",
        "--quiet",
        "--out",
        &dir.display().to_string(),
    ]);
    assert!(out.status.success(), "{}", text(&out.stderr));
}

#[test]
fn a_profile_with_an_offset_matches_numpy() {
    // Source: numpy.linalg.solve on the augmented system [v_j, 1] with penalty
    // diag(λσ², …, λ_bσ²), and numpy.linalg.inv for the posterior (Bishop, PRML 2006,
    // eq. 3.59 [equation number from memory]), via tests/reference/fixtures/biased_profile.json.
    let f = fixture("biased_profile.json");
    for (k, case) in f["cases"].as_array().unwrap().iter().enumerate() {
        let d = case["d"].as_u64().unwrap() as usize;
        let (items, _) = matrix(&case["items"]);
        let offsets = floats(&case["item_offsets"]);
        let (lambda, lambda_bias, sigma2, mu) = (
            case["lambda"].as_f64().unwrap(),
            case["lambda_bias"].as_f64().unwrap(),
            case["sigma2"].as_f64().unwrap(),
            case["mu"].as_f64().unwrap(),
        );
        let rated: Vec<(u32, f64)> = floats(&case["rated"])
            .iter()
            .zip(floats(&case["ratings"]))
            .map(|(&j, r)| (j as u32, r))
            .collect();
        let folded = fold_in_with_offsets(
            (&items, &offsets),
            d,
            mu,
            (lambda * sigma2, lambda_bias * sigma2),
            &rated,
        )
        .unwrap();
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * b.abs().max(1.0);
        for (a, b) in folded.vector.iter().zip(floats(&case["vector"])) {
            assert!(close(*a, b), "case {k}: vector {a} vs {b}");
        }
        let bias = case["bias"].as_f64().unwrap();
        assert!(
            close(folded.bias, bias),
            "case {k}: {} vs {bias}",
            folded.bias
        );
        let model = FactorModel {
            rank: d,
            mu,
            users: Vec::new(),
            items: items.clone(),
            biases: Some(Biases {
                user: Vec::new(),
                item: offsets.clone(),
                lambda: lambda_bias,
            }),
        };
        for (j, expected) in floats(&case["predictions"]).iter().enumerate() {
            let p = model.predict_for(&folded.vector, folded.bias, j as u32);
            assert!(close(p, *expected), "case {k} item {j}: {p} vs {expected}");
        }
        let posterior = Posterior::new(
            &items,
            d,
            rated.iter().map(|&(j, _)| j),
            (lambda, Some(lambda_bias)),
            sigma2,
        );
        for (j, expected) in floats(&case["sd"]).iter().enumerate() {
            let sd = posterior.predictive_sd(model.item(j as u32)).unwrap();
            assert!(
                close(sd, *expected),
                "case {k} item {j}: sd {sd} vs {expected}"
            );
        }
    }
}

#[test]
fn a_biased_fit_carries_its_offsets_into_every_figure() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("biased");
    fit_biased(&dir);
    let users = std::fs::read_to_string(dir.join("users.csv")).unwrap();
    assert!(users.starts_with("id,bias,f1,"), "{}", &users[..40]);
    let manifest = std::fs::read_to_string(dir.join("manifest.ron")).unwrap();
    assert!(manifest.contains("version: 2,"), "{manifest}");
    assert!(manifest.contains("lambda_bias: Some(2.0)"), "{manifest}");

    let model = load_model(&dir).unwrap();
    let f = &model.factors;
    let b = f.biases.as_ref().expect("offsets loaded");
    assert_eq!(b.lambda, 2.0);
    assert!(b.user.iter().any(|&x| x.abs() > 0.1) && b.item.iter().any(|&x| x.abs() > 0.1));

    // Explanations add up: μ + b_i + c_j + Σ contributions = predicted.
    let counts = item_support(&model);
    for (user, item) in [(0u32, 0u32), (5, 17), (1499, 399), (42, 7)] {
        let e = explain(&model, user, item, 3, &counts);
        let sum = e.mu
            + e.user_bias.unwrap()
            + e.item_bias.unwrap()
            + e.contributions.iter().map(|c| c.value).sum::<f64>();
        assert!((sum - e.predicted).abs() < 1e-12, "{user}/{item}");
        assert_eq!(e.predicted, f.predict(user, item));
        assert_eq!(e.user_bias, Some(b.user[user as usize]));
    }

    // Exact top-N with the item offsets folded into the inner product: the same list as
    // sorting every unrated item's prediction (common practice: brute force as the oracle).
    let index = ranking_index(&model);
    for user in [0u32, 77, 1234] {
        let rated: Vec<u32> = model
            .ratings
            .entries
            .iter()
            .filter(|r| r.user == user)
            .map(|r| r.item)
            .collect();
        let mut all: Vec<(f64, u32)> = (0..f.item_count() as u32)
            .filter(|j| !rated.contains(j))
            .map(|j| (f.predict(user, j), j))
            .collect();
        all.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
        let found = suggest(&model, &index, user, 10, false);
        let ids: Vec<u32> = found.iter().map(|s| s.item).collect();
        let expected: Vec<u32> = all.iter().take(10).map(|&(_, j)| j).collect();
        assert_eq!(ids, expected, "member {user}");
        for s in &found {
            assert_eq!(s.predicted, f.predict(user, s.item));
        }
    }

    // The commands say so.
    let d = dir.display().to_string();
    let info = json(&["info", &d, "--format", "json"]);
    assert_eq!(
        (info["biases"].clone(), info["lambda_bias"].clone()),
        (Value::Bool(true), 2.0.into())
    );
    let plain = json(&[
        "info",
        &repo("demo-data/model").display().to_string(),
        "--format",
        "json",
    ]);
    assert_eq!(
        (plain["biases"].clone(), plain["lambda_bias"].clone()),
        (Value::Bool(false), Value::Null)
    );
    let e = json(&["explain", &d, "m0001", "r005", "--format", "json"]);
    let sum = e["mu"].as_f64().unwrap()
        + e["user_bias"].as_f64().unwrap()
        + e["item_bias"].as_f64().unwrap()
        + e["contributions"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| c["value"].as_f64().unwrap())
            .sum::<f64>();
    assert!((sum - e["predicted"].as_f64().unwrap()).abs() < 1e-12);
    // By the member's own ratings: the shares, μ, the re-solved member offset and the item
    // offset add up to the re-solved prediction.
    let refreshed = &e["by_rating_refreshed"];
    let shares: f64 = e["by_rating"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["share"].as_f64().unwrap())
        .sum();
    let total = e["mu"].as_f64().unwrap()
        + refreshed["user_bias"].as_f64().unwrap()
        + e["item_bias"].as_f64().unwrap()
        + shares;
    assert!((total - refreshed["predicted"].as_f64().unwrap()).abs() < 1e-12);
    let gap = refreshed["predicted"].as_f64().unwrap() - e["predicted"].as_f64().unwrap();
    assert!((gap - refreshed["difference"].as_f64().unwrap()).abs() < 1e-15);
    let table = text(&sextant(&["explain", &d, "m0001", "r005"]).stdout);
    assert!(
        table.contains("the member's own ratings that produced it"),
        "{table}"
    );
    assert!(
        table.contains("the member's offset") && table.contains("the item's offset"),
        "{table}"
    );
}

#[test]
fn folding_in_a_members_ratings_gives_the_fits_next_member_step() {
    // Folding in is the fitter's member step: after a member step, every member's (u, b)
    // is what fold-in computes from their training ratings.
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("biased");
    fit_biased(&dir);
    let model = load_model(&dir).unwrap();
    let mut fitter = sextant::model::Fitter::new(
        &model.ratings,
        &sextant::model::FitOptions {
            rank: model.factors.rank,
            lambda_bias: Some(2.0),
            max_iters: 3,
            ..sextant::model::FitOptions::default()
        },
        None,
    )
    .unwrap();
    fitter.iterate(1).unwrap();
    fitter.update_users().unwrap();
    let mut stepped = model.clone();
    stepped.factors = fitter.model().clone();
    let b = stepped.factors.biases.as_ref().unwrap();
    for user in [0u32, 3, 600, 1499] {
        let rated = training_ratings(&stepped, user);
        let folded = fold_in(&stepped, &rated).unwrap();
        let fitted = stepped.factors.user(user);
        let gap = folded
            .vector
            .iter()
            .zip(fitted)
            .map(|(a, b)| (a - b).abs())
            .fold((folded.bias - b.user[user as usize]).abs(), f64::max);
        assert!(gap < 1e-12, "member {user}: {gap}");
    }
}

#[test]
fn offsets_survive_export_and_import_and_are_never_read_as_factors() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("biased");
    fit_biased(&dir);
    let original = load_model(&dir).unwrap();
    let d = dir.display().to_string();
    let ratings = dir.join("ratings.csv").display().to_string();
    for format in ["parquet", "csv"] {
        let out = tmp.path().join(format!("export-{format}"));
        let o = out.display().to_string();
        let run = sextant(&["export", &d, "--out", &o, "--file-format", format]);
        assert!(run.status.success(), "{}", text(&run.stderr));
        let users = format!("{o}/users.{format}");
        let items = format!("{o}/items.{format}");
        let target = tmp.path().join(format!("import-{format}"));
        let t = target.display().to_string();
        let base = [
            "import",
            "--ratings",
            &ratings,
            "--user-vectors",
            &users,
            "--item-vectors",
            &items,
            "--center",
            "global",
            "--out",
            &t,
        ];
        // Left unnamed, the offsets column is refused, not taken for a factor.
        let refused = sextant(&base);
        assert_eq!(refused.status.code(), Some(2));
        let stderr = text(&refused.stderr);
        assert!(
            stderr.contains("--user-bias-col") && stderr.contains("users."),
            "{stderr}"
        );
        // One side only is a usage error.
        let half: Vec<&str> = base
            .iter()
            .copied()
            .chain(["--user-bias-col", "bias"])
            .collect();
        assert_eq!(sextant(&half).status.code(), Some(2));
        let named: Vec<&str> = base
            .iter()
            .copied()
            .chain([
                "--user-bias-col",
                "bias",
                "--item-bias-col",
                "bias",
                "--lambda-bias",
                "2",
            ])
            .collect();
        let run = sextant(&named);
        assert!(run.status.success(), "{}", text(&run.stderr));
        let imported = load_model(&target).unwrap();
        assert_eq!(imported.factors, original.factors, "{format}");
        assert_eq!(
            imported.manifest.metrics, original.manifest.metrics,
            "{format}"
        );
        assert_eq!(imported.manifest.lambda_bias, Some(2.0));
    }
}

#[test]
fn a_tampered_biased_model_is_refused_with_file_line_and_reason() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("biased");
    fit_biased(&dir);
    let d = dir.display().to_string();
    // The users table lost its offsets column.
    let users = std::fs::read_to_string(dir.join("users.csv")).unwrap();
    let stripped: String = users
        .lines()
        .map(|line| {
            let mut fields: Vec<&str> = line.split(',').collect();
            fields.remove(1);
            fields.join(",") + "\n"
        })
        .collect();
    std::fs::write(dir.join("users.csv"), &stripped).unwrap();
    let run = sextant(&["info", &d]);
    assert_eq!(run.status.code(), Some(2));
    let stderr = text(&run.stderr);
    assert!(
        stderr.contains("users.csv, line 1: missing column 'bias'")
            && stderr.contains("lambda_bias"),
        "{stderr}"
    );
    std::fs::write(dir.join("users.csv"), &users).unwrap();
    // A manifest that claims offsets under the old format version.
    let manifest = std::fs::read_to_string(dir.join("manifest.ron")).unwrap();
    std::fs::write(
        dir.join("manifest.ron"),
        manifest.replace("version: 2,", "version: 1,"),
    )
    .unwrap();
    let stderr = text(&sextant(&["info", &d]).stderr);
    assert!(
        stderr.contains("manifest.ron: lambda_bias makes this a model with biases"),
        "{stderr}"
    );
    std::fs::write(
        dir.join("manifest.ron"),
        manifest.replace("lambda_bias: Some(2.0)", "lambda_bias: Some(-1.0)"),
    )
    .unwrap();
    let stderr = text(&sextant(&["info", &d]).stderr);
    assert!(
        stderr.contains("lambda_bias is -1, not a finite number ≥ 0"),
        "{stderr}"
    );
    // A plain model's table that has a column named bias.
    let plain = tmp.path().join("plain");
    common::copy_dir(&repo("demo-data/model"), &plain);
    let items = std::fs::read_to_string(plain.join("items.csv")).unwrap();
    std::fs::write(plain.join("items.csv"), items.replacen(",f1,", ",bias,", 1)).unwrap();
    let stderr = text(&sextant(&["info", &plain.display().to_string()]).stderr);
    assert!(
        stderr.contains("items.csv, line 1: column 2 is named 'bias'"),
        "{stderr}"
    );
}

#[test]
fn without_the_prior_a_free_offset_needs_one_rating_more_than_the_rank() {
    use sextant::data::{RatingsOptions, read_ratings};
    // Rank 1, λ = 0: member d's single rating determines u_d alone, but not (u_d, b_d).
    let csv = "user,item,rating\na,x,5\na,y,1\nb,x,4\nb,y,2\nc,x,5\nc,y,3\nd,x,4\n";
    let ratings =
        read_ratings(csv.as_bytes(), "r.csv".as_ref(), &RatingsOptions::default()).unwrap();
    let options = sextant::model::FitOptions {
        rank: 1,
        lambda: 0.0,
        ..sextant::model::FitOptions::default()
    };
    let free = sextant::model::FitOptions {
        lambda_bias: Some(0.0),
        ..options.clone()
    };
    let err = sextant::model::Fitter::new(&ratings, &free, None)
        .err()
        .unwrap()
        .to_string();
    assert!(
        err.contains("at least 2 training ratings (the rank, plus one for the offset)")
            && err.contains("1 user(s) (first: 'd')")
            && err.contains("--lambda-bias > 0"),
        "{err}"
    );
    // A penalised offset is determined by the prior: the guard stays at D.
    let penalised = sextant::model::FitOptions {
        lambda_bias: Some(1.0),
        ..options
    };
    assert!(sextant::model::Fitter::new(&ratings, &penalised, None).is_ok());
}

#[test]
fn tune_fits_its_grid_with_offsets_and_keeps_them_in_the_best_model() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("best");
    let report = json(&[
        "tune",
        &repo("tests/bad-inputs/good-small.csv")
            .display()
            .to_string(),
        "--ranks",
        "1,2",
        "--lambdas",
        "1",
        "--biases",
        "--lambda-bias",
        "3",
        "--holdout",
        "0.3",
        "--quiet",
        "--format",
        "json",
        "--out",
        &out.display().to_string(),
    ]);
    assert_eq!(report["biases"], Value::Bool(true));
    assert_eq!(report["lambda_bias"], 3.0);
    let best = load_model(&out).unwrap();
    assert_eq!(best.manifest.lambda_bias, Some(3.0));
    assert_eq!(best.factors.biases.as_ref().unwrap().lambda, 3.0);
    // --lambda-bias alone is a usage error: it has no offsets to apply to.
    let alone = sextant(&["tune", "x.csv", "--lambda-bias", "3"]);
    assert_eq!(alone.status.code(), Some(2));
}

#[test]
fn bad_offsets_in_imported_tables_are_refused_with_file_line_and_reason() {
    let tmp = tempfile::tempdir().unwrap();
    let ratings = tmp.path().join("ratings.csv");
    std::fs::write(&ratings, "user,item,rating\na,x,5\na,y,1\nb,x,4\n").unwrap();
    let items = tmp.path().join("items.csv");
    std::fs::write(&items, "id,f1,offset\nx,0.5,0.1\ny,-0.5,0.2\n").unwrap();
    let import = |users: &str| {
        let path = tmp.path().join("users.csv");
        std::fs::write(&path, users).unwrap();
        let out = sextant(&[
            "import",
            "--ratings",
            &ratings.display().to_string(),
            "--user-vectors",
            &path.display().to_string(),
            "--item-vectors",
            &items.display().to_string(),
            "--user-bias-col",
            "offset",
            "--item-bias-col",
            "offset",
            "--mu",
            "3",
            "--out",
            &tmp.path().join("model").display().to_string(),
        ]);
        (out.status.code(), text(&out.stderr))
    };
    let (code, err) = import("id,offset,f1\na,abc,1\nb,0,1\n");
    assert_eq!(code, Some(2));
    assert!(
        err.contains("users.csv, line 2: the offset of 'a' is 'abc', not a finite number"),
        "{err}"
    );
    let (code, err) = import("id,offset,f1\na,1e300,1\nb,0,1\n");
    assert_eq!(code, Some(2));
    assert!(err.contains("offsets must lie within ±1e12"), "{err}");
    let (code, err) = import("id,f1\na,1\nb,1\n");
    assert_eq!(code, Some(2));
    assert!(
        err.contains("users.csv, line 1: missing column 'offset'")
            && err.contains("--user-bias-col"),
        "{err}"
    );
    // Named as the id column: the offsets need a column of their own.
    let (code, err) = import("offset,f1\na,1\nb,1\n");
    assert_eq!(code, Some(2));
    assert!(err.contains("is the id column"), "{err}");
    // A table with only an id and offsets has no factors.
    let (code, err) = import("id,offset\na,1\nb,1\n");
    assert_eq!(code, Some(2));
    assert!(err.contains("at least one factor column"), "{err}");
    // And a good one is accepted, its offsets in every prediction.
    let (code, err) = import("id,offset,f1\na,0.25,1\nb,-0.5,2\n");
    assert_eq!(code, Some(0), "{err}");
    let model = load_model(&tmp.path().join("model")).unwrap();
    let a = model.ratings.users.get("a").unwrap();
    let y = model.ratings.items.get("y").unwrap();
    assert_eq!(model.factors.predict(a, y), 3.0 + 0.25 + 0.2 + 1.0 * -0.5);
}

#[test]
fn absurd_offset_priors_are_refused_before_any_work() {
    let ratings = repo("tests/bad-inputs/good-small.csv")
        .display()
        .to_string();
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("m").display().to_string();
    for bad in ["-1", "nan", "inf"] {
        let flag = format!("--lambda-bias={bad}");
        let run = sextant(&["fit", &ratings, "--biases", &flag, "--out", &out, "--quiet"]);
        assert_eq!(run.status.code(), Some(2), "{bad}");
        let err = text(&run.stderr);
        assert!(
            err.contains("--lambda-bias must be a finite number ≥ 0"),
            "{bad}: {err}"
        );
        assert!(!tmp.path().join("m").exists(), "nothing written for {bad}");
    }
}
