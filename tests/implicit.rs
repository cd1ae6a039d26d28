//! Models of implicit feedback (`fit --feedback implicit`, `import --feedback implicit`):
//! the model format, scores instead of ratings in every command that reads them, the
//! explanation by the member's own interactions, and the flags that do not apply.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::path::Path;

use common::{fixture, floats, matrix, repo, sextant};
use serde_json::Value;
use sextant::analysis::explain::{explain, implicit_shares, item_support, training_ratings};
use sextant::model::implicit::{Confidence, ImplicitFitter, ImplicitOptions};
use sextant::model::load_model;

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

fn json(args: &[&str]) -> Value {
    let out = sextant(args);
    assert!(out.status.success(), "{args:?}: {}", text(&out.stderr));
    serde_json::from_slice(&out.stdout).unwrap()
}

/// Runs `args`, expects exit code 2, and returns stderr.
fn refused(args: &[&str]) -> String {
    let out = sextant(args);
    assert_eq!(
        out.status.code(),
        Some(2),
        "{args:?}: {}",
        text(&out.stderr)
    );
    text(&out.stderr)
}

fn cooked() -> String {
    repo("demo-data/cooked.csv").display().to_string()
}

/// The demo cooking counts fitted at rank 5 into `dir`.
fn fit_implicit(dir: &Path, extra: &[&str]) {
    let d = dir.display().to_string();
    let items = repo("demo-data/items.csv").display().to_string();
    let mut args = vec![
        "fit",
        &*cooked(),
        "--feedback",
        "implicit",
        "--catalogue",
        &items,
        "--rank",
        "5",
        "--max-iters",
        "15",
        "--quiet",
        "--out",
        &d,
    ]
    .into_iter()
    .map(str::to_owned)
    .collect::<Vec<_>>();
    args.extend(extra.iter().map(|s| (*s).to_owned()));
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let out = sextant(&args);
    assert!(out.status.success(), "{}", text(&out.stderr));
}

#[test]
fn the_smoother_weights_of_an_implicit_member_match_numpy() {
    // Source: numpy.linalg.solve of the dense weighted system Yᵀ C_u Y + λI formed over every
    // item (not through the YᵀY identity), read as a linear smoother: score_k =
    // Σ_j (y_kᵀ W y_j) c_j (Hu, Koren & Volinsky, ICDM 2008, §5), via
    // tests/reference/fixtures/implicit_by_rating.json; linear and log confidences.
    let f = fixture("implicit_by_rating.json");
    for (n, case) in f["cases"].as_array().unwrap().iter().enumerate() {
        let d = case["d"].as_u64().unwrap() as usize;
        let (items, _) = matrix(&case["items"]);
        let alpha = case["alpha"].as_f64().unwrap();
        let confidence = match case["epsilon"].as_f64() {
            Some(epsilon) => Confidence::Log { alpha, epsilon },
            None => Confidence::Linear { alpha },
        };
        let rated: Vec<(u32, f64)> = floats(&case["rated"])
            .iter()
            .zip(floats(&case["counts"]))
            .map(|(&j, c)| (j as u32, c))
            .collect();
        let k = case["item"].as_u64().unwrap() as u32;
        let (shares, x) = implicit_shares(
            &items,
            d,
            (case["lambda"].as_f64().unwrap(), confidence),
            &rated,
            k,
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
        for (a, b) in x.iter().zip(floats(&case["vector"])) {
            assert!(close(*a, b), "case {n}: vector {a} vs {b}");
        }
        let sum: f64 = shares.iter().map(|s| s.share).sum();
        let score = case["score"].as_f64().unwrap();
        assert!((sum - score).abs() < 1e-12, "case {n}: {sum} vs {score}");
    }
}

#[test]
fn an_implicit_model_is_stored_and_summarised_as_counts() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("cooked");
    fit_implicit(&dir, &[]);
    let d = dir.display().to_string();
    let manifest = std::fs::read_to_string(dir.join("manifest.ron")).unwrap();
    assert!(manifest.contains("version: 3,"), "{manifest}");
    assert!(manifest.contains("confidence: Linear(alpha: 40.0)"));
    assert!(!manifest.contains("metrics:"), "no rating metrics");
    let ratings = std::fs::read_to_string(dir.join("ratings.csv")).unwrap();
    assert!(ratings.starts_with("user,item,count,split\n"));
    let info = json(&["info", &d, "--format", "json"]);
    assert_eq!(info["feedback"], "implicit");
    assert!(info["train"].is_null() && info["holdout"].is_null());
    assert_eq!(info["confidence"]["form"], "linear");
    assert_eq!(info["confidence"]["alpha"], 40.0);
    let losses: Vec<f64> = info["loss_trace"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["loss"].as_f64().unwrap())
        .collect();
    assert_eq!(losses.len(), 15);
    // The loss never increases (each half-step is an exact minimisation).
    assert!(losses.windows(2).all(|w| w[1] <= w[0] * (1.0 + 1e-12)));
    assert_eq!(info["final_loss"].as_f64(), losses.last().copied());
    // The planted tastes make held-out recipes rank well above a random order (50%).
    let epr = info["holdout_percentile_rank"].as_f64().unwrap();
    assert!(epr > 0.0 && epr < 0.3, "{epr}");
    // The same figure the library computes from the loaded model.
    let model = load_model(&dir).unwrap();
    let again =
        sextant::analysis::ranking::expected_percentile_rank(&model.factors, &model.ratings);
    assert_eq!(again, Some(epr));
    let table = text(&sextant(&["info", &d]).stdout);
    assert!(table.contains("feedback     implicit: counts, confidence 1 + 40·count"));
    assert!(table.contains("expected percentile rank"), "{table}");
    assert!(!table.contains("RMSE"), "{table}");
    let csv = text(&sextant(&["info", &d, "--format", "csv"]).stdout);
    assert!(csv.starts_with("iter,loss\n1,"), "{csv}");
}

#[test]
fn suggestions_and_explanations_speak_of_scores_and_choices() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("cooked");
    fit_implicit(
        &dir,
        &["--confidence", "log", "--alpha", "8", "--epsilon", "0.5"],
    );
    let d = dir.display().to_string();
    let model = load_model(&dir).unwrap();
    assert_eq!(
        model.implicit(),
        Some(Confidence::Log {
            alpha: 8.0,
            epsilon: 0.5
        })
    );
    let user = "m0007";
    let u = model.ratings.users.get(user).unwrap();
    let chosen: Vec<&str> = model
        .ratings
        .entries
        .iter()
        .filter(|r| r.user == u)
        .map(|r| model.ratings.items.name(r.item))
        .collect();
    let found = json(&["suggest", &d, user, "-n", "5", "--format", "json"]);
    let rows = found["suggestions"].as_array().unwrap();
    assert_eq!(rows.len(), 5);
    let scores: Vec<f64> = rows.iter().map(|r| r["score"].as_f64().unwrap()).collect();
    assert!(scores.windows(2).all(|w| w[0] >= w[1]));
    for r in rows {
        assert!(r["predicted"].is_null() && r["rounded"].is_null());
        assert!(r["predictive_sd"].is_null());
        assert!(!chosen.contains(&r["item"].as_str().unwrap()));
        let j = model
            .ratings
            .items
            .get(r["item"].as_str().unwrap())
            .unwrap();
        assert_eq!(r["score"].as_f64().unwrap(), model.factors.predict(u, j));
    }
    let table = text(&sextant(&["suggest", &d, user]).stdout);
    assert!(table.contains("items they have not chosen") && table.contains("score"));
    assert!(!table.contains("predicted"), "{table}");

    // The explanation by the member's own interactions.
    let item = rows[0]["item"].as_str().unwrap();
    let e = json(&["explain", &d, user, item, "--format", "json"]);
    assert!(e["predicted"].is_null() && e["rounded"].is_null());
    assert!(e["predictive_sd"].is_null());
    let score = e["score"].as_f64().unwrap();
    assert_eq!(score, scores[0]);
    let shares = e["by_rating"].as_array().unwrap();
    let trained = training_ratings(&model, u);
    assert_eq!(shares.len(), trained.len());
    let mut total = 0.0;
    for s in shares {
        assert!(s["rating"].is_null());
        let count = s["count"].as_f64().unwrap();
        let confidence = s["confidence"].as_f64().unwrap();
        assert_eq!(confidence, model.implicit().unwrap().of(count));
        let weight = s["weight"].as_f64().unwrap();
        assert!((s["share"].as_f64().unwrap() - weight * confidence).abs() < 1e-15);
        total += s["share"].as_f64().unwrap();
    }
    let refreshed = &e["by_rating_refreshed"];
    let re = refreshed["predicted"].as_f64().unwrap();
    assert!(
        (total - re).abs() < 1e-12 * re.abs().max(1.0),
        "{total} vs {re}"
    );
    assert!((re - refreshed["difference"].as_f64().unwrap() - score).abs() < 1e-12);
    // The re-solved member is the fitter's own member step against the stored items.
    let options = ImplicitOptions {
        rank: 5,
        lambda: model.manifest.lambda,
        confidence: model.implicit().unwrap(),
        ..ImplicitOptions::default()
    };
    let mut fitter = ImplicitFitter::new(&model.ratings, &options, None)
        .unwrap()
        .with_items(model.factors.items.clone());
    fitter.update_users().unwrap();
    let j = model.ratings.items.get(item).unwrap();
    let stepped = sextant::model::dot(fitter.model().user(u), model.factors.item(j));
    assert!((stepped - re).abs() < 1e-10, "{stepped} vs {re}");

    let table = text(&sextant(&["explain", &d, user, item]).stdout);
    assert!(table.contains("score ") && table.contains("share = weight × confidence"));
    assert!(!table.contains("predicted"), "{table}");
    let plain = text(&sextant(&["explain", &d, user, item, "--plain"]).stdout);
    assert!(plain.contains("You have not chosen"), "{plain}");
    assert!(plain.contains("score"), "{plain}");
    assert!(!plain.contains(" rate"), "{plain}");
    // The library's explanation agrees with the command.
    let lib = explain(&model, u, j, 5, &item_support(&model));
    assert_eq!(lib.predicted, score);
    assert_eq!(lib.rounded, None);
}

#[test]
fn flags_that_do_not_apply_to_a_kind_of_feedback_are_refused() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("m").display().to_string();
    let demo = repo("demo-data/ratings.csv").display().to_string();
    let c = cooked();
    let stderr = refused(&["fit", &demo, "--alpha", "3", "--out", &out]);
    assert!(
        stderr.contains("--alpha is a setting of implicit feedback"),
        "{stderr}"
    );
    let stderr = refused(&[
        "fit",
        &c,
        "--feedback",
        "implicit",
        "--biases",
        "--out",
        &out,
    ]);
    assert!(
        stderr.contains("--biases is a setting of a model of ratings"),
        "{stderr}"
    );
    let stderr = refused(&[
        "fit",
        &c,
        "--feedback",
        "implicit",
        "--center",
        "global",
        "--out",
        &out,
    ]);
    assert!(stderr.contains("--center"), "{stderr}");
    let stderr = refused(&[
        "fit",
        &c,
        "--feedback",
        "implicit",
        "--epsilon",
        "2",
        "--out",
        &out,
    ]);
    assert!(stderr.contains("add --confidence log"), "{stderr}");
    let stderr = refused(&[
        "fit",
        &c,
        "--feedback",
        "implicit",
        "--alpha=-1",
        "--out",
        &out,
    ]);
    assert!(
        stderr.contains("--alpha must be a finite number ≥ 0, not -1"),
        "{stderr}"
    );
    let stderr = refused(&[
        "fit",
        &c,
        "--feedback",
        "implicit",
        "--confidence",
        "log",
        "--epsilon",
        "0",
        "--out",
        &out,
    ]);
    assert!(
        stderr.contains("--epsilon must be a finite number > 0"),
        "{stderr}"
    );
    let stderr = refused(&[
        "fit",
        &c,
        "--feedback",
        "implicit",
        "--scale",
        "1:5:1",
        "--out",
        &out,
    ]);
    assert!(
        stderr.contains("--scale is a setting of ratings"),
        "{stderr}"
    );
    // A negative count, named by file and line.
    let bad = tmp.path().join("negative.csv");
    std::fs::write(&bad, "user,item,count\na,x,3\na,y,-2\nb,x,1\n").unwrap();
    let stderr = refused(&[
        "fit",
        &bad.display().to_string(),
        "--feedback",
        "implicit",
        "--out",
        &out,
    ]);
    assert!(
        stderr.contains("negative.csv, line 3: count '-2' is negative"),
        "{stderr}"
    );
    // Ratings read as counts need their column named: the default is `count`.
    let stderr = refused(&["fit", &demo, "--feedback", "implicit", "--out", &out]);
    assert!(stderr.contains("count"), "{stderr}");
    assert!(!Path::new(&out).exists(), "nothing written");
}

#[test]
fn the_explorer_opens_an_implicit_model_and_the_bundled_implicit_demo() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("cooked");
    fit_implicit(&dir, &[]);
    let d = dir.display().to_string();
    for args in [
        vec!["explore", &*d, "--measure-frames", "3"],
        vec!["explore", "--demo", "implicit", "--measure-frames", "3"],
        vec!["explore", "--demo", "--measure-frames", "1"],
    ] {
        let timing = json(&args);
        assert!(timing["first_frame_s"].as_f64().unwrap() > 0.0, "{args:?}");
    }
    let stderr = refused(&["explore", &d, "--demo", "implicit"]);
    assert!(stderr.contains("cannot be used with"), "{stderr}");
    let stderr = refused(&["explore"]);
    assert!(stderr.contains("<MODEL>"), "{stderr}");
}

#[test]
fn the_committed_implicit_demo_model_is_reproduced_bit_for_bit() {
    // The bundled implicit demo is exactly what `sextant fit` makes from the committed
    // cooking counts with the options its manifest records.
    let committed = load_model(&repo("demo-data/implicit-model")).unwrap();
    let recorded = committed.manifest.options.clone().unwrap();
    assert_eq!(committed.manifest.rank, 10);
    assert_eq!(committed.implicit(), Some(Confidence::default()));
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("refit");
    let max_iters = recorded.max_iters.to_string();
    let out = sextant(&[
        "fit",
        &cooked(),
        "--feedback",
        "implicit",
        "--catalogue",
        &repo("demo-data/items.csv").display().to_string(),
        "--max-iters",
        &max_iters,
        "--quiet",
        "--out",
        &dir.display().to_string(),
    ]);
    assert!(out.status.success(), "{}", text(&out.stderr));
    common::assert_same_model_files(&dir, &repo("demo-data/implicit-model"));
}

#[test]
fn an_implicit_audit_ranks_held_out_interactions_and_lists_the_lowest_scores() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("cooked");
    fit_implicit(&dir, &[]);
    let d = dir.display().to_string();
    let csv_dir = tmp.path().join("audit-csv");
    let out = sextant(&["audit", &d, "--csv", csv_dir.to_str().unwrap()]);
    assert!(out.status.success(), "{}", text(&out.stderr));
    let report = text(&sextant(&["audit", &d]).stdout);
    assert!(
        report.contains("Implicit feedback (Hu, Koren & Volinsky 2008)"),
        "{report}"
    );
    assert!(report.contains("Expected percentile rank of the held-out interactions"));
    assert!(report.contains("## Ranking quality on held-out interactions"));
    assert!(report.contains("The interactions the model scores lowest"));
    assert!(!report.contains("RMSE"), "{report}");
    let model = load_model(&dir).unwrap();
    let found =
        sextant::analysis::audit::audit(&model, sextant::analysis::audit::AuditOptions::default());
    // The misses of implicit feedback: interactions with the lowest scores, lowest first.
    for (list, holdout) in [(&found.worst_train, false), (&found.worst_holdout, true)] {
        assert_eq!(list.len(), 20);
        assert!(list.windows(2).all(|w| w[0].predicted <= w[1].predicted));
        let floor = list.last().unwrap().predicted;
        let below = model
            .ratings
            .entries
            .iter()
            .filter(|e| e.holdout == holdout && e.value > 0.0)
            .filter(|e| model.factors.predict(e.user, e.item) < floor)
            .count();
        assert!(below < 20, "{below}");
        assert!(list.iter().all(|m| m.actual > 0.0));
    }
    // Every held-out interaction is relevant.
    let r = found.ranking.as_ref().unwrap();
    let members_with_held_out = {
        let mut users: Vec<u32> = model
            .ratings
            .entries
            .iter()
            .filter(|e| e.holdout && e.value > 0.0)
            .map(|e| e.user)
            .collect();
        users.dedup();
        users.len()
    };
    assert_eq!(r.users, members_with_held_out);
    assert!(r.precision > 3.0 * r.random.0, "{r:?}");
    let epr = found.percentile_rank.unwrap();
    let ranking = std::fs::read_to_string(csv_dir.join("ranking.csv")).unwrap();
    let last = ranking.lines().last().unwrap();
    assert!(
        last.starts_with("expected_percentile_rank,,,") && last.ends_with(&format!(",{epr},0.5")),
        "{ranking}"
    );
}

#[test]
fn an_implicit_profile_folds_in_as_the_fitters_member_step() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("cooked");
    fit_implicit(&dir, &[]);
    let model = load_model(&dir).unwrap();
    let confidence = model.implicit().unwrap();
    let options = ImplicitOptions {
        rank: 5,
        lambda: model.manifest.lambda,
        confidence,
        ..ImplicitOptions::default()
    };
    let mut fitter = ImplicitFitter::new(&model.ratings, &options, None)
        .unwrap()
        .with_items(model.factors.items.clone());
    fitter.update_users().unwrap();
    for user in [0u32, 6, 700, 1499] {
        let counts = training_ratings(&model, user);
        let folded = sextant::analysis::foldin::fold_in(&model, &counts).unwrap();
        assert_eq!(folded.bias, 0.0);
        let step = fitter.model().user(user);
        let gap = folded
            .vector
            .iter()
            .zip(step)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0, f64::max);
        assert!(gap < 1e-12, "member {user}: {gap}");
    }
    // The command reads item,count and refuses what is not a count.
    let d = dir.display().to_string();
    let profile = tmp.path().join("cooked-profile.csv");
    std::fs::write(&profile, "item,count\nr001,3\nr157,10\nr999,2\n").unwrap();
    let p = profile.display().to_string();
    let j = json(&["fold-in", &d, &p, "-n", "4", "--format", "json"]);
    assert_eq!(j["ratings_used"], 2);
    assert_eq!(j["skipped"][0], "r999");
    let rows = j["suggestions"].as_array().unwrap();
    assert!(
        rows.iter()
            .all(|r| r["score"].is_f64() && r["predicted"].is_null())
    );
    assert!(
        rows.iter()
            .all(|r| r["item"] != "r001" && r["item"] != "r157")
    );
    std::fs::write(&profile, "item,count\nr001,-1\n").unwrap();
    let stderr = refused(&["fold-in", &d, &p]);
    assert!(stderr.contains("line 2: count -1 is negative"), "{stderr}");
    std::fs::write(&profile, "item,rating\nr001,4\n").unwrap();
    let stderr = refused(&["fold-in", &d, &p]);
    assert!(
        stderr.contains("a profile's header row is item,count"),
        "{stderr}"
    );
}

#[test]
fn vectors_fitted_to_implicit_feedback_import_with_their_confidence() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("cooked");
    fit_implicit(&dir, &["--alpha", "12"]);
    let fitted = load_model(&dir).unwrap();
    // The fitted model's counts with their split, as another system would hand them over.
    let counts = tmp.path().join("counts.csv");
    std::fs::copy(dir.join("ratings.csv"), &counts).unwrap();
    let imported = tmp.path().join("imported");
    let args = |extra: &[&str]| -> Vec<String> {
        let mut v: Vec<String> = [
            "import",
            "--ratings",
            counts.to_str().unwrap(),
            "--user-vectors",
            dir.join("users.csv").to_str().unwrap(),
            "--item-vectors",
            dir.join("items.csv").to_str().unwrap(),
            "--out",
            imported.to_str().unwrap(),
            "--feedback",
            "implicit",
        ]
        .iter()
        .map(|s| (*s).to_owned())
        .collect();
        v.extend(extra.iter().map(|s| (*s).to_owned()));
        v
    };
    let run = |extra: &[&str]| {
        let a = args(extra);
        sextant(&a.iter().map(String::as_str).collect::<Vec<_>>())
    };
    let out = run(&["--mu", "0"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("--mu is a setting of a model of ratings"));
    let out = run(&["--alpha", "12", "--lambda", "1"]);
    assert!(out.status.success(), "{}", text(&out.stderr));
    let model = load_model(&imported).unwrap();
    assert_eq!(model.implicit(), Some(Confidence::Linear { alpha: 12.0 }));
    assert_eq!(model.factors, fitted.factors);
    assert_eq!(model.ratings, fitted.ratings);
    // The held-out ranking is recomputed from the same vectors and split.
    assert_eq!(
        model
            .manifest
            .implicit
            .as_ref()
            .unwrap()
            .holdout_percentile_rank,
        fitted
            .manifest
            .implicit
            .as_ref()
            .unwrap()
            .holdout_percentile_rank
    );
}

#[test]
fn a_tampered_implicit_manifest_is_refused_with_the_reason() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("cooked");
    fit_implicit(&dir, &[]);
    let d = dir.display().to_string();
    let manifest = std::fs::read_to_string(dir.join("manifest.ron")).unwrap();
    for (from, to, reason) in [
        (
            "version: 3,",
            "version: 2,",
            "implicit-feedback model is format version 3, not 2",
        ),
        (
            "alpha: 40.0",
            "alpha: -4.0",
            "the confidence rule is not valid: alpha must be",
        ),
        ("mu: 0.0,", "mu: 3.5,", "has mu 0, not 3.5"),
        (
            "version: 3,",
            "version: 4,",
            "format version 4 is not supported",
        ),
    ] {
        std::fs::write(dir.join("manifest.ron"), manifest.replace(from, to)).unwrap();
        let stderr = refused(&["info", &d]);
        assert!(stderr.contains(reason), "{from} → {to}: {stderr}");
    }
    // Counts read as a model of ratings: the manifest without its implicit record.
    let start = manifest.find("    implicit: Some(").unwrap();
    let end = start + manifest[start..].find("\n    )),\n").unwrap() + "\n    )),\n".len();
    let plain = format!("{}{}", &manifest[..start], &manifest[end..]);
    std::fs::write(
        dir.join("manifest.ron"),
        plain.replace("version: 3,", "version: 1,"),
    )
    .unwrap();
    let stderr = refused(&["info", &d]);
    assert!(stderr.contains("needs its metrics"), "{stderr}");
}
