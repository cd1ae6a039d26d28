//! End-to-end tests of the `sextant` binary: output formats, exit codes, refusals of bad
//! input (with file, line and reason), and that nothing is written when input is bad.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use common::{repo, sextant};

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

fn bad(name: &str) -> String {
    repo(&format!("tests/bad-inputs/{name}"))
        .display()
        .to_string()
}

fn small() -> String {
    bad("good-small.csv")
}

/// Fits the demo data quickly into `dir` and returns the output.
fn fit_demo(dir: &Path, extra: &[&str]) -> Output {
    let ratings = repo("demo-data/ratings.csv").display().to_string();
    let items = repo("demo-data/items.csv").display().to_string();
    let out = dir.display().to_string();
    let mut args = vec![
        "fit",
        &ratings,
        "--catalogue",
        &items,
        "--out",
        &out,
        "--max-iters",
        "5",
        "--quiet",
    ];
    args.extend_from_slice(extra);
    sextant(&args)
}

#[test]
fn bad_inputs_are_refused_with_file_line_reason_and_exit_code_2() {
    // (fit arguments after the ratings file, expected message fragments)
    let cases: Vec<(String, Vec<&str>, Vec<String>)> = vec![
        (bad("ratings-missing-rating-column.csv"), vec![], vec!["line 1: missing column 'rating' in the header (found: user, item, stars); name the right column with --rating-col".into()]),
        (bad("ratings-empty-user-id.csv"), vec![], vec!["line 3: the user id is empty".into()]),
        (bad("ratings-rating-not-a-number.csv"), vec![], vec!["line 3: rating 'four' is not a number".into()]),
        (bad("ratings-rating-infinite.csv"), vec![], vec!["line 2: rating 'inf' is not a finite number".into()]),
        (bad("ratings-rating-nan.csv"), vec![], vec!["line 3: rating 'NaN' is not a finite number".into()]),
        (bad("ratings-rating-empty.csv"), vec![], vec!["line 2: the rating is empty".into()]),
        (bad("ratings-rating-outside-scale.csv"), vec!["--scale", "1:5:1"], vec!["line 3: rating '6' is outside the scale 1 to 5 given by --scale".into()]),
        (bad("ratings-rating-off-scale-step.csv"), vec!["--scale", "1:5:1"], vec!["line 3: rating '3.5' is not on the scale given by --scale (1, 2, 3, 4, 5)".into()]),
        (bad("ratings-duplicate-pair.csv"), vec![], vec!["line 4: duplicate rating for user 'm1' and item 'r1' (first rated on line 2)".into()]),
        (bad("ratings-empty-file.csv"), vec![], vec!["the file is empty; expected a header row naming the columns user, item, rating".into()]),
        (bad("ratings-header-only.csv"), vec![], vec!["no ratings: the file has a header row but no data rows".into()]),
        (bad("ratings-short-row.csv"), vec![], vec!["line 3: the row has 2 field(s) but the rating is in column 3".into()]),
        (bad("ratings-non-utf8-id.csv"), vec![], vec!["line 3: the user id is not valid UTF-8 text".into()]),
        (small(), vec!["--catalogue", &bad("meta-missing-item-column.csv")].into_iter().map(leak).collect(), vec!["meta-missing-item-column.csv, line 1: missing column 'item'".into()]),
        (small(), vec!["--catalogue", &bad("meta-duplicate-item.csv")].into_iter().map(leak).collect(), vec!["meta-duplicate-item.csv, line 4: item 'r1' is described twice (first on line 2)".into()]),
        (small(), vec!["--catalogue", &bad("meta-empty-item-id.csv")].into_iter().map(leak).collect(), vec!["meta-empty-item-id.csv, line 3: the item id is empty".into()]),
        (small(), vec!["--rank", "1", "--init-items", &bad("init-items-wrong-width.csv")].into_iter().map(leak).collect(), vec!["init-items-wrong-width.csv: the initial item table has 2 factor columns but --rank is 1".into()]),
        (small(), vec!["--rank", "1", "--init-items", &bad("init-items-non-finite.csv")].into_iter().map(leak).collect(), vec!["init-items-non-finite.csv, line 3: factor f1 of 'r2' is 'NaN', not a finite number".into()]),
        (small(), vec!["--rank", "1", "--init-items", &bad("init-items-missing-item.csv")].into_iter().map(leak).collect(), vec!["init-items-missing-item.csv: 1 rated item(s) have no initial vector (first: 'r2')".into()]),
        (small(), vec!["--rank", "0"], vec!["--rank must be between 1 and 1024, not 0".into()]),
        (small(), vec!["--holdout", "1"], vec!["--holdout must be at least 0 and below 1".into()]),
        (small(), vec!["--scale", "1:5"], vec!["--scale: scale '1:5' must look like MIN:MAX:STEP".into()]),
        (small(), vec!["--lambda", "0", "--rank", "3"], vec!["with lambda = 0 every user and item needs at least 3 training ratings".into(), "3 user(s) (first: 'm1', 'm2', 'm3')".into()]),
        (repo("tests/bad-inputs/does-not-exist.csv").display().to_string(), vec![], vec!["does-not-exist.csv: cannot read".into()]),
    ];
    let tmp = tempfile::tempdir().unwrap();
    for (k, (ratings, extra, expected)) in cases.iter().enumerate() {
        let out = tmp.path().join(format!("model-{k}"));
        let out_text = out.display().to_string();
        let mut args = vec!["fit", ratings.as_str(), "--out", &out_text, "--quiet"];
        args.extend(extra.iter().copied());
        let result = sextant(&args);
        let stderr = text(&result.stderr);
        assert_eq!(
            result.status.code(),
            Some(2),
            "case {k} ({ratings}): exit code; stderr: {stderr}"
        );
        assert!(stderr.starts_with("error: "), "case {k}: {stderr}");
        for fragment in expected {
            assert!(
                stderr.contains(fragment.as_str()),
                "case {k}: expected {fragment:?} in {stderr:?}"
            );
        }
        assert!(result.stdout.is_empty(), "case {k}: nothing on stdout");
        assert!(!out.exists(), "case {k}: no model directory may appear");
    }
    // Nothing else was left behind either (no staging directories).
    assert_eq!(std::fs::read_dir(tmp.path()).unwrap().count(), 0);
}

fn leak(s: &str) -> &'static str {
    Box::leak(s.to_owned().into_boxed_str())
}

#[test]
fn fit_then_info_in_three_formats() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("m");
    let fitted = fit_demo(&dir, &["--format", "json"]);
    assert_eq!(fitted.status.code(), Some(0), "{}", text(&fitted.stderr));
    assert!(
        fitted.stderr.is_empty(),
        "--quiet prints nothing: {}",
        text(&fitted.stderr)
    );
    let from_fit: serde_json::Value = serde_json::from_slice(&fitted.stdout).unwrap();
    let d = dir.display().to_string();
    let info = sextant(&["info", &d, "--format", "json"]);
    assert_eq!(info.status.code(), Some(0));
    let json: serde_json::Value = serde_json::from_slice(&info.stdout).unwrap();
    assert_eq!(json, from_fit);
    // Field names fixed by DESIGN.md, "Machine-readable output".
    for field in [
        "rank",
        "lambda",
        "sigma2",
        "mu",
        "center",
        "scale",
        "users",
        "items",
        "ratings",
        "train_ratings",
        "holdout_ratings",
        "seed",
        "converged",
        "iterations",
        "train",
        "holdout",
        "low_support_users",
        "low_support_items",
    ] {
        assert!(json.get(field).is_some(), "missing field {field}");
    }
    for field in ["rmse", "mae", "rmse_rounded", "mae_rounded", "exact_rate"] {
        assert!(json["train"][field].is_f64(), "train.{field}");
        assert!(json["holdout"][field].is_f64(), "holdout.{field}");
    }
    assert_eq!(json["rank"], 10);
    assert_eq!(json["users"], 1500);
    assert_eq!(json["center"], "global");
    assert_eq!(json["converged"], false);
    let iterations = json["iterations"].as_array().unwrap();
    assert_eq!(iterations.len(), 5);
    for field in ["iter", "log_joint", "train_rmse", "holdout_rmse"] {
        assert!(iterations[0].get(field).is_some(), "iterations[].{field}");
    }
    // CSV: the per-iteration trace, agreeing with the JSON.
    let csv = text(&sextant(&["info", &d, "--format", "csv"]).stdout);
    let mut lines = csv.lines();
    assert_eq!(lines.next(), Some("iter,log_joint,train_rmse,holdout_rmse"));
    let first: Vec<f64> = lines
        .next()
        .unwrap()
        .split(',')
        .map(|v| v.parse().unwrap())
        .collect();
    assert_eq!(first[1], iterations[0]["log_joint"].as_f64().unwrap());
    assert_eq!(first[3], iterations[0]["holdout_rmse"].as_f64().unwrap());
    // Table: the human summary names what matters.
    let table = text(&sextant(&["info", &d]).stdout);
    for fragment in [
        "rank         10",
        "1,500",
        "held out",
        "stopped without converging after 5",
        "exact",
    ] {
        assert!(table.contains(fragment), "{fragment:?} in {table}");
    }
}

#[test]
fn fit_prints_options_with_defaults_marked() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path().join("m").display().to_string();
    let result = sextant(&[
        "fit",
        &small(),
        "--out",
        &d,
        "--rank",
        "2",
        "--holdout",
        "0",
    ]);
    assert_eq!(result.status.code(), Some(0), "{}", text(&result.stderr));
    let stderr = text(&result.stderr);
    assert!(
        stderr.contains(
            "rank 2, lambda 1 (default), sigma2 1 (default), center global (default), holdout 0,"
        ),
        "{stderr}"
    );
    assert!(stderr.contains("wrote model directory"), "{stderr}");
    let json: serde_json::Value =
        serde_json::from_slice(&sextant(&["info", &d, "--format", "json"]).stdout).unwrap();
    assert_eq!(json["holdout"], serde_json::Value::Null);
    assert_eq!(json["holdout_ratings"], 0);
}

#[test]
fn refit_replaces_a_model_keeps_notes_and_refuses_foreign_directories() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("m");
    assert_eq!(fit_demo(&dir, &[]).status.code(), Some(0));
    std::fs::write(dir.join("annotations.ron"), "(notes: [])\n").unwrap();
    let before = std::fs::read(dir.join("users.csv")).unwrap();
    assert_eq!(fit_demo(&dir, &["--seed", "7"]).status.code(), Some(0));
    assert_ne!(
        std::fs::read(dir.join("users.csv")).unwrap(),
        before,
        "replaced"
    );
    assert_eq!(
        std::fs::read_to_string(dir.join("annotations.ron")).unwrap(),
        "(notes: [])\n"
    );
    // A fit that fails on bad input leaves the existing model exactly as it was.
    let snapshot: Vec<(String, Vec<u8>)> =
        ["manifest.ron", "users.csv", "items.csv", "ratings.csv"]
            .iter()
            .map(|n| ((*n).to_owned(), std::fs::read(dir.join(n)).unwrap()))
            .collect();
    let d = dir.display().to_string();
    let failed = sextant(&[
        "fit",
        &bad("ratings-duplicate-pair.csv"),
        "--out",
        &d,
        "--quiet",
    ]);
    assert_eq!(failed.status.code(), Some(2));
    let failed = sextant(&[
        "fit",
        &small(),
        "--out",
        &d,
        "--lambda",
        "0",
        "--rank",
        "3",
        "--quiet",
    ]);
    assert_eq!(failed.status.code(), Some(2));
    for (name, bytes) in &snapshot {
        assert!(
            &std::fs::read(dir.join(name)).unwrap() == bytes,
            "{name} changed"
        );
    }
    // An existing empty directory is a fine target.
    let empty = tmp.path().join("empty");
    std::fs::create_dir(&empty).unwrap();
    assert_eq!(fit_demo(&empty, &[]).status.code(), Some(0));
    assert!(empty.join("manifest.ron").is_file());
    // A directory with other files is not ours to replace.
    let foreign = tmp.path().join("photos");
    std::fs::create_dir(&foreign).unwrap();
    std::fs::write(foreign.join("cat.jpg"), "meow").unwrap();
    let result = fit_demo(&foreign, &[]);
    assert_eq!(result.status.code(), Some(2));
    assert!(
        text(&result.stderr).contains("is not a sextant model directory"),
        "{}",
        text(&result.stderr)
    );
    assert_eq!(std::fs::read_dir(&foreign).unwrap().count(), 1);
    // A model directory with a stray file is refused too, and left as it was.
    std::fs::write(dir.join("report.txt"), "mine").unwrap();
    let result = fit_demo(&dir, &[]);
    assert_eq!(result.status.code(), Some(2));
    assert!(
        text(&result.stderr).contains("other file(s) or link(s) ('report.txt')"),
        "{}",
        text(&result.stderr)
    );
    assert!(dir.join("report.txt").exists());
    // No staging directories are left next to the targets.
    let leftovers: Vec<_> = std::fs::read_dir(tmp.path())
        .unwrap()
        .filter_map(Result::ok)
        .filter(|e| e.file_name().to_string_lossy().contains("sextant-tmp"))
        .collect();
    assert!(leftovers.is_empty());
}

#[test]
fn fits_are_identical_whatever_the_thread_count() {
    let tmp = tempfile::tempdir().unwrap();
    let one = tmp.path().join("one");
    let two = tmp.path().join("two");
    assert_eq!(fit_demo(&one, &["--threads", "1"]).status.code(), Some(0));
    assert_eq!(fit_demo(&two, &["--threads", "2"]).status.code(), Some(0));
    common::assert_same_model_files(&one, &two);
}

#[test]
fn save_load_save_is_byte_identical() {
    let tmp = tempfile::tempdir().unwrap();
    let first = tmp.path().join("first");
    assert_eq!(fit_demo(&first, &[]).status.code(), Some(0));
    let model = sextant::model::load_model(&first).unwrap();
    let second = tmp.path().join("second");
    sextant::model::save_model(&second, &model).unwrap();
    common::assert_same_model_files(&first, &second);
    assert_eq!(sextant::model::load_model(&second).unwrap(), model);
}

#[test]
fn import_of_a_models_own_tables_reproduces_its_predictions() {
    let tmp = tempfile::tempdir().unwrap();
    let fitted = tmp.path().join("fitted");
    assert_eq!(fit_demo(&fitted, &[]).status.code(), Some(0));
    let model = sextant::model::load_model(&fitted).unwrap();
    let path = |name: &str| fitted.join(name).display().to_string();
    let imported = tmp.path().join("imported");
    let mu = model.manifest.mu.to_string();
    let result = sextant(&[
        "import",
        "--ratings",
        &path("ratings.csv"),
        "--user-vectors",
        &path("users.csv"),
        "--item-vectors",
        &path("items.csv"),
        "--catalogue",
        &path("items-meta.csv"),
        "--mu",
        &mu,
        "--out",
        &imported.display().to_string(),
    ]);
    assert_eq!(result.status.code(), Some(0), "{}", text(&result.stderr));
    let again = sextant::model::load_model(&imported).unwrap();
    assert_eq!(
        again.manifest.origin,
        sextant::model::manifest::Origin::Import
    );
    assert_eq!(again.ratings, model.ratings, "same ratings and split");
    for r in &model.ratings.entries {
        assert_eq!(
            again.factors.predict(r.user, r.item),
            model.factors.predict(r.user, r.item)
        );
    }
    assert_eq!(again.manifest.metrics, model.manifest.metrics);
}

#[test]
fn import_refuses_tables_that_do_not_fit() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("m").display().to_string();
    let users = tmp.path().join("users.csv");
    std::fs::write(&users, "id,f1\nm1,0.1\nm2,0.2\n").unwrap();
    let items = tmp.path().join("items.csv");
    std::fs::write(&items, "id,f1\nr1,0.5\nr2,0.1\n").unwrap();
    let (u, i) = (users.display().to_string(), items.display().to_string());
    let run = |ratings: &str, users: &str, items: &str| {
        sextant(&[
            "import",
            "--ratings",
            ratings,
            "--user-vectors",
            users,
            "--item-vectors",
            items,
            "--center",
            "none",
            "--out",
            &out,
        ])
    };
    let cases = [
        (
            run(&small(), &u, &i),
            "good-small.csv, line 6: user 'm3' is not in the users table",
        ),
        (
            run(&small(), &bad("factors-duplicate-id.csv"), &i),
            "factors-duplicate-id.csv, line 3: id 'm1' appears more than once",
        ),
        (
            run(&small(), &bad("factors-row-too-short.csv"), &i),
            "factors-row-too-short.csv, line 3: expected 3 fields (an id and 2 factors), found 2",
        ),
        (
            run(&small(), &bad("init-items-wrong-width.csv"), &i),
            "the item table has 1 factors but the user table",
        ),
    ];
    for (result, expected) in cases {
        let stderr = text(&result.stderr);
        assert_eq!(result.status.code(), Some(2), "{stderr}");
        assert!(stderr.contains(expected), "{expected:?} in {stderr:?}");
        assert!(!tmp.path().join("m").exists());
    }
}

/// Copies the committed demo model into a temporary directory for tampering.
fn demo_copy(tmp: &Path) -> PathBuf {
    let dir = tmp.join("demo");
    std::fs::create_dir(&dir).unwrap();
    for entry in std::fs::read_dir(repo("demo-data/model")).unwrap() {
        let entry = entry.unwrap();
        std::fs::copy(entry.path(), dir.join(entry.file_name())).unwrap();
    }
    dir
}

fn edit(path: &Path, from: &str, to: &str) {
    let content = std::fs::read_to_string(path).unwrap();
    assert!(content.contains(from), "{from:?} not in {}", path.display());
    std::fs::write(path, content.replacen(from, to, 1)).unwrap();
}

#[test]
fn tampered_models_are_refused_with_file_line_and_reason() {
    // (file, text to replace, replacement, expected message); an empty replacement of the
    // whole file name means "delete the file".
    let cases: [(&str, &str, &str, &str); 17] = [
        (
            "manifest.ron",
            "version: 1,",
            "version: 99,",
            "manifest.ron: format version 99 is not supported by this sextant, which reads versions 1 to 3",
        ),
        (
            "manifest.ron",
            "format: \"sextant-model\"",
            "format: \"other\"",
            "manifest.ron: format 'other' is not 'sextant-model'",
        ),
        (
            "manifest.ron",
            "rank: 10,",
            "rank: 9,",
            "users.csv, line 1: the table has 10 factor columns but the manifest says rank 9",
        ),
        (
            "manifest.ron",
            "rank: 10,",
            "rank: 0,",
            "manifest.ron: the rank must be between 1 and 1024, not 0",
        ),
        (
            "manifest.ron",
            "users: 1500,",
            "users: 1499,",
            "users.csv: the table has 1500 users but the manifest says 1499",
        ),
        (
            "manifest.ron",
            "train_ratings: 34366,",
            "train_ratings: 34365,",
            "manifest.ron: counts do not match the files",
        ),
        (
            "manifest.ron",
            "users: \"users.csv\"",
            "users: \"../users.csv\"",
            "manifest.ron: file name '../users.csv' would leave the model directory",
        ),
        (
            "manifest.ron",
            "users: \"users.csv\"",
            "users: \"/etc/passwd\"",
            "file name '/etc/passwd' would leave the model directory",
        ),
        (
            "manifest.ron",
            "lambda: 1.0,",
            "lambda: NaN,",
            "manifest.ron: lambda is NaN, not a finite number",
        ),
        (
            "manifest.ron",
            "seed: 0,",
            "seed: zero,",
            "manifest.ron, line",
        ),
        (
            "users.csv",
            "\nm0002,",
            "\nm0001,",
            "users.csv, line 3: id 'm0001' appears more than once",
        ),
        (
            "items.csv",
            "\n",
            "\nX,",
            "items.csv, line 2: expected 11 fields (an id and 10 factors), found 12",
        ),
        (
            "items.csv",
            ",f10\n",
            ",f10\nrZZZ,inf,0,0,0,0,0,0,0,0,0\n",
            "items.csv, line 2: factor f1 of 'rZZZ' is 'inf', not a finite number",
        ),
        (
            "ratings.csv",
            "\nm0001,",
            "\nm9999,",
            "ratings.csv, line 2: user 'm9999' is not in the users table",
        ),
        (
            "ratings.csv",
            ",train\n",
            ",maybe\n",
            "ratings.csv, line 2: split 'maybe' must be 'train' or 'holdout'",
        ),
        (
            "items-meta.csv",
            "\nr001,",
            "\nr0001,",
            "items-meta.csv: describes item 'r0001', which the model does not have",
        ),
        (
            "items.csv",
            "",
            "",
            "items.csv: is missing: the model directory is incomplete",
        ),
    ];
    let tmp = tempfile::tempdir().unwrap();
    for (k, (file, from, to, expected)) in cases.into_iter().enumerate() {
        let case = tmp.path().join(format!("case-{k}"));
        std::fs::create_dir(&case).unwrap();
        let dir = demo_copy(&case);
        if from.is_empty() {
            std::fs::remove_file(dir.join(file)).unwrap();
        } else {
            edit(&dir.join(file), from, to);
        }
        let result = sextant(&["info", &dir.display().to_string()]);
        let stderr = text(&result.stderr);
        assert_eq!(result.status.code(), Some(2), "case {k}: {stderr}");
        assert!(
            stderr.contains(expected),
            "case {k}: {expected:?} in {stderr:?}"
        );
        assert!(result.stdout.is_empty());
    }
}

/// A model large enough to get binary twins of its user table and ratings.
fn large_model(dir: &Path) -> sextant::model::Model {
    use sextant::data::{Rating, RatingScale, Ratings};
    let mut rng = sextant::rng::Rng::new(3);
    let mut ratings = Ratings::default();
    let (users, items, rank) = (32_000u32, 400u32, 10);
    for i in 0..users {
        ratings.users.intern(&format!("u{i}"));
    }
    for j in 0..items {
        ratings.items.intern(&format!("i{j}"));
    }
    for user in 0..users {
        for item in (0..360).step_by(45) {
            let value = 1.0 + rng.below(5) as f64;
            ratings.entries.push(Rating {
                user,
                item: item + user % 45,
                value,
                holdout: user % 7 == 0,
            });
        }
    }
    ratings.entries.sort_by_key(|r| (r.user, r.item));
    let factors = sextant::model::FactorModel {
        rank,
        mu: 3.0,
        users: (0..users as usize * rank).map(|_| rng.normal()).collect(),
        items: (0..items as usize * rank).map(|_| rng.normal()).collect(),
        biases: None,
    };
    let provenance = sextant::model::Provenance {
        scale: RatingScale::Levels(vec![1.0, 2.0, 3.0, 4.0, 5.0]),
        inputs: Vec::new(),
        meta: None,
    };
    let model = sextant::model::Model::from_import(
        ratings,
        factors,
        (1.0, 1.0),
        sextant::model::Center::Global,
        None,
        provenance,
    )
    .unwrap();
    sextant::model::save_model(dir, &model).unwrap();
    sextant::model::load_model(dir).unwrap()
}

#[test]
fn binary_twins_are_a_cache_the_csv_overrules() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("large");
    let model = large_model(&dir);
    assert!(dir.join("users.bin").is_file() && dir.join("ratings.bin").is_file());
    assert!(!dir.join("items.bin").exists(), "small tables get no twin");
    // Saving what was loaded gives the same files, twins included.
    let again = tmp.path().join("again");
    sextant::model::save_model(&again, &model).unwrap();
    common::assert_same_model_files(&dir, &again);
    // Damaged or missing twins are ignored: the CSVs give the same model.
    for name in ["users.bin", "ratings.bin"] {
        let mut bytes = std::fs::read(dir.join(name)).unwrap();
        let at = bytes.len() / 2;
        bytes[at] ^= 0x40;
        std::fs::write(dir.join(name), &bytes).unwrap();
    }
    assert_eq!(sextant::model::load_model(&dir).unwrap(), model);
    std::fs::remove_file(dir.join("users.bin")).unwrap();
    assert_eq!(sextant::model::load_model(&dir).unwrap(), model);
    // A CSV edited after its twin was written wins, even at the same size.
    let fresh = tmp.path().join("fresh");
    sextant::model::save_model(&fresh, &model).unwrap();
    let edited = std::fs::read_to_string(fresh.join("users.csv")).unwrap();
    let line = edited.lines().nth(1).unwrap();
    let value = line.split(',').nth(1).unwrap();
    let digit = value.chars().rev().find(char::is_ascii_digit).unwrap();
    let swapped = if digit == '1' { '2' } else { '1' };
    let changed_value = format!("{}{swapped}", &value[..value.rfind(digit).unwrap()])
        + &value[value.rfind(digit).unwrap() + 1..];
    std::fs::write(
        fresh.join("users.csv"),
        edited.replacen(value, &changed_value, 1),
    )
    .unwrap();
    let loaded = sextant::model::load_model(&fresh).unwrap();
    assert_ne!(loaded.factors.users[0], model.factors.users[0]);
    assert_eq!(
        loaded.factors.users[0],
        changed_value.parse::<f64>().unwrap()
    );
}

#[test]
fn a_symlink_leading_out_of_the_model_directory_is_refused() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = demo_copy(tmp.path());
    let outside = tmp.path().join("outside.csv");
    std::fs::rename(dir.join("users.csv"), &outside).unwrap();
    std::os::unix::fs::symlink(&outside, dir.join("users.csv")).unwrap();
    let result = sextant(&["info", &dir.display().to_string()]);
    assert_eq!(result.status.code(), Some(2));
    assert!(
        text(&result.stderr).contains("users.csv: is a symbolic link; every model file must be a regular file inside the model directory"),
        "{}",
        text(&result.stderr)
    );
}

#[test]
fn bare_command_shows_the_bundled_demo_from_any_directory() {
    let tmp = tempfile::tempdir().unwrap();
    let result = Command::new(env!("CARGO_BIN_EXE_sextant"))
        .current_dir(tmp.path())
        .output()
        .unwrap();
    assert_eq!(result.status.code(), Some(0), "{}", text(&result.stderr));
    let stdout = text(&result.stdout);
    assert!(stdout.contains("Ladle & Loaf"), "{stdout}");
    assert!(stdout.contains("1,500"), "{stdout}");
}

#[test]
fn usage_errors_exit_2_and_a_closed_pipe_exits_0() {
    assert_eq!(sextant(&["fit"]).status.code(), Some(2));
    assert_eq!(sextant(&["no-such-command"]).status.code(), Some(2));
    assert_eq!(sextant(&["info", "/no/such/model"]).status.code(), Some(2));
    let demo = repo("demo-data/model").display().to_string();
    let script = format!(
        "set -o pipefail; '{}' info '{demo}' --format csv | head -n 1 >/dev/null",
        env!("CARGO_BIN_EXE_sextant")
    );
    let status = Command::new("bash").args(["-c", &script]).status().unwrap();
    assert!(status.success(), "broken pipe must exit 0");
}
