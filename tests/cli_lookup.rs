//! End-to-end tests of `neighbours`, `suggest` and `explain` on the demo model: the three
//! output formats parse, carry the fields fixed in DESIGN.md and agree with each other.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use common::{repo, sextant};
use serde_json::Value;

fn demo() -> String {
    repo("demo-data/model").display().to_string()
}

fn json(args: &[&str]) -> Value {
    let mut all = args.to_vec();
    all.extend(["--format", "json"]);
    let out = sextant(&all);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn csv_rows(args: &[&str]) -> Vec<Vec<String>> {
    let mut all = args.to_vec();
    all.extend(["--format", "csv"]);
    let out = sextant(&all);
    assert_eq!(out.status.code(), Some(0));
    String::from_utf8(out.stdout)
        .unwrap()
        .lines()
        .map(|l| l.split(',').map(str::to_owned).collect())
        .collect()
}

#[test]
fn neighbours_formats_agree() {
    let m = demo();
    for metric in ["euclidean", "cosine"] {
        let j = json(&["neighbours", &m, "r001", "-k", "7", "--metric", metric]);
        assert_eq!(j["query"], "r001");
        assert_eq!(j["kind"], "item");
        assert_eq!(j["metric"], metric);
        assert_eq!(j["k"], 7);
        let list = j["neighbours"].as_array().unwrap();
        assert_eq!(list.len(), 7);
        let csv = csv_rows(&["neighbours", &m, "r001", "-k", "7", "--metric", metric]);
        assert_eq!(
            csv[0],
            ["rank", "id", "distance", "cosine", "title", "category"]
        );
        for (row, entry) in csv[1..].iter().zip(list) {
            assert_eq!(
                row[0].parse::<u64>().unwrap(),
                entry["rank"].as_u64().unwrap()
            );
            assert_eq!(row[1], entry["id"].as_str().unwrap());
            assert_eq!(
                row[2].parse::<f64>().unwrap(),
                entry["distance"].as_f64().unwrap()
            );
            assert_eq!(
                row[3].parse::<f64>().unwrap(),
                entry["cosine"].as_f64().unwrap()
            );
            assert!(entry["title"].is_string());
        }
        // Ranked by the chosen metric.
        let key = |e: &Value| {
            if metric == "euclidean" {
                e["distance"].as_f64().unwrap()
            } else {
                -e["cosine"].as_f64().unwrap()
            }
        };
        assert!(list.windows(2).all(|w| key(&w[0]) <= key(&w[1]) + 1e-12));
        assert!(
            list.iter().all(|e| e["id"] != "r001"),
            "the query is left out"
        );
    }
    let table = String::from_utf8(sextant(&["neighbours", &m, "r001", "-k", "3"]).stdout).unwrap();
    assert!(table.contains("3 nearest items to r001"), "{table}");
    let members = json(&["neighbours", &m, "--user", "m0001", "-k", "4"]);
    assert_eq!(members["kind"], "user");
    assert_eq!(members["neighbours"].as_array().unwrap().len(), 4);
}

#[test]
fn suggest_formats_agree() {
    let m = demo();
    let j = json(&["suggest", &m, "m0001", "-n", "6"]);
    assert_eq!(j["user"], "m0001");
    assert_eq!(j["n"], 6);
    let list = j["suggestions"].as_array().unwrap();
    assert_eq!(list.len(), 6);
    let csv = csv_rows(&["suggest", &m, "m0001", "-n", "6"]);
    assert_eq!(&csv[0][..4], ["rank", "item", "predicted", "rounded"]);
    for (row, entry) in csv[1..].iter().zip(list) {
        assert_eq!(row[1], entry["item"].as_str().unwrap());
        assert_eq!(
            row[2].parse::<f64>().unwrap(),
            entry["predicted"].as_f64().unwrap()
        );
        assert_eq!(
            row[3].parse::<f64>().unwrap(),
            entry["rounded"].as_f64().unwrap()
        );
        assert!(entry["predictive_sd"].as_f64().unwrap() >= 1.0);
    }
    assert!(
        list.windows(2)
            .all(|w| w[0]["predicted"].as_f64() >= w[1]["predicted"].as_f64())
    );
    let rated = json(&["suggest", &m, "m0001", "-n", "3", "--include-rated"]);
    assert_eq!(rated["suggestions"].as_array().unwrap().len(), 3);
}

#[test]
fn explain_formats_agree_and_add_up() {
    let m = demo();
    let j = json(&["explain", &m, "m0001", "r001"]);
    for field in [
        "user",
        "item",
        "mu",
        "predicted",
        "rounded",
        "predictive_sd",
        "actual",
        "contributions",
        "evidence",
        "support",
    ] {
        assert!(j.get(field).is_some(), "field {field}");
    }
    // A model without biases says so with nulls.
    assert_eq!(
        (&j["user_bias"], &j["item_bias"]),
        (&serde_json::Value::Null, &serde_json::Value::Null)
    );
    let contributions = j["contributions"].as_array().unwrap();
    let sum: f64 = j["mu"].as_f64().unwrap()
        + contributions
            .iter()
            .map(|c| c["value"].as_f64().unwrap())
            .sum::<f64>();
    assert!((sum - j["predicted"].as_f64().unwrap()).abs() < 1e-12);
    let csv = csv_rows(&["explain", &m, "m0001", "r001"]);
    assert_eq!(
        csv[0],
        [
            "factor",
            "value",
            "label",
            "mu",
            "predicted",
            "rounded",
            "predictive_sd",
            "actual",
            "user_bias",
            "item_bias",
            "score"
        ]
    );
    // Unlabelled factors: null in JSON, empty in CSV.
    assert!(contributions.iter().all(|c| c["label"].is_null()));
    for (row, c) in csv[1..].iter().zip(contributions) {
        assert_eq!(
            row[0].parse::<u64>().unwrap(),
            c["factor"].as_u64().unwrap()
        );
        assert_eq!(row[1].parse::<f64>().unwrap(), c["value"].as_f64().unwrap());
    }
    for field in [
        "user_ratings",
        "item_ratings",
        "user_low_support",
        "item_low_support",
    ] {
        assert!(j["support"].get(field).is_some(), "support.{field}");
    }
    for field in ["item", "actual", "predicted", "distance"] {
        assert!(j["evidence"][0].get(field).is_some(), "evidence[].{field}");
    }
    // A rated item shows the actual rating.
    let first_rated = std::fs::read_to_string(repo("demo-data/model/ratings.csv")).unwrap();
    let line = first_rated
        .lines()
        .nth(1)
        .unwrap()
        .split(',')
        .collect::<Vec<_>>();
    let rated = json(&["explain", &m, line[0], line[1]]);
    assert_eq!(
        rated["actual"].as_f64().unwrap(),
        line[2].parse::<f64>().unwrap()
    );
    let help = String::from_utf8(sextant(&["explain", "--help"]).stdout).unwrap();
    assert!(
        help.contains("personal data") && help.contains("not a person's motives"),
        "{help}"
    );
}

#[test]
fn unknown_ids_suggest_the_closest_and_exit_2() {
    let m = demo();
    for (args, expected) in [
        (
            vec!["neighbours", &m, "r0001"],
            "the model has no item with id or title 'r0001'; did you mean 'r001'",
        ),
        (
            vec!["neighbours", &m, "--user", "m1"],
            "the model has no member 'm1'; did you mean",
        ),
        (
            vec!["suggest", &m, "M0001"],
            "the model has no member 'M0001'; did you mean 'm0001'",
        ),
        (
            vec!["explain", &m, "m0001", "soup"],
            "the model has no item with id or title 'soup'",
        ),
    ] {
        let out = sextant(&args);
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{stderr}");
        assert!(stderr.contains(expected), "{expected:?} in {stderr:?}");
    }
}

#[test]
fn neighbours_of_every_item_equal_the_single_lists() {
    let model = common::repo("demo-data/model");
    let m = model.to_str().unwrap();
    for metric in ["euclidean", "cosine"] {
        let all = common::sextant(&["neighbours", m, "--all", "-k", "5", "--metric", metric]);
        assert!(all.status.success());
        let text = String::from_utf8(all.stdout).unwrap();
        let mut lines = text.lines();
        assert_eq!(
            lines.next(),
            Some("query,rank,id,distance,cosine,title,category")
        );
        let rows: Vec<&str> = lines.collect();
        assert_eq!(rows.len(), 400 * 5);
        for item in ["r001", "r250", "r400"] {
            let single = common::sextant(&[
                "neighbours",
                m,
                item,
                "-k",
                "5",
                "--metric",
                metric,
                "--format",
                "csv",
            ]);
            let single = String::from_utf8(single.stdout).unwrap();
            let expected: Vec<String> = single
                .lines()
                .skip(1)
                .map(|l| format!("{item},{l}"))
                .collect();
            let got: Vec<String> = rows
                .iter()
                .filter(|r| r.starts_with(&format!("{item},")))
                .map(|r| (*r).to_owned())
                .collect();
            assert_eq!(got, expected, "{metric} {item}");
        }
    }
}

#[test]
fn explain_names_labelled_factors_in_every_format() {
    let dir = tempfile::tempdir().unwrap();
    let model = dir.path().join("m");
    common::copy_dir(&repo("demo-data/model"), &model);
    let m = model.display().to_string();
    let top = json(&["explain", &m, "m0001", "r001"])["contributions"][0]["factor"]
        .as_u64()
        .unwrap()
        .to_string();
    let out = sextant(&["notes", &m, "--factor", &top, "hearty vs light"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j = json(&["explain", &m, "m0001", "r001"]);
    let first = &j["contributions"][0];
    assert_eq!(first["label"], "hearty vs light");
    assert!(j["contributions"][1]["label"].is_null());
    let csv = csv_rows(&["explain", &m, "m0001", "r001"]);
    assert_eq!(csv[1][2], "hearty vs light");
    let table = sextant(&["explain", &m, "m0001", "r001"]);
    let text = String::from_utf8_lossy(&table.stdout);
    assert!(
        text.contains(&format!("factor {top} (hearty vs light)")),
        "{text}"
    );
    let plain = sextant(&["explain", &m, "m0001", "r001", "--plain"]);
    let text = String::from_utf8_lossy(&plain.stdout);
    assert!(text.contains("\"hearty vs light\""), "{text}");
}

#[test]
fn items_are_named_by_title_anywhere_an_id_is_accepted() {
    let m = demo();
    // The demo's r001 and its title, from the model itself.
    let model = sextant::model::load_model(&common::repo("demo-data/model")).unwrap();
    let j = model.ratings.items.get("r001").unwrap();
    let title = model
        .meta
        .as_ref()
        .unwrap()
        .get(j)
        .unwrap()
        .title
        .clone()
        .unwrap();
    let by_id = json(&["neighbours", &m, "r001"]);
    let by_title = json(&["neighbours", &m, &title.to_uppercase()]);
    assert_eq!(by_id["neighbours"], by_title["neighbours"]);
    let e = json(&["explain", &m, "m0001", &title]);
    assert_eq!(
        e["contributions"],
        json(&["explain", &m, "m0001", "r001"])["contributions"]
    );
    // A near miss of a title suggests the title with its id.
    let typo: String = title.chars().take(title.chars().count() - 1).collect();
    let out = sextant(&["neighbours", &m, &typo]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains(&format!("'r001' ({title})")), "{stderr}");
    // Notes take titles too, and keep the id.
    let dir = tempfile::tempdir().unwrap();
    let copy = dir.path().join("m");
    common::copy_dir(&common::repo("demo-data/model"), &copy);
    let c = copy.display().to_string();
    let out = sextant(&["notes", &c, "--item", &title, "checked"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let notes = sextant::model::notes::read_notes(&copy).unwrap();
    assert_eq!(notes.item_note("r001"), Some("checked"));
}

#[test]
fn a_title_shared_by_several_items_lists_their_ids() {
    let dir = tempfile::tempdir().unwrap();
    let catalogue = dir.path().join("catalogue.csv");
    let rows: Vec<String> = (1..=24)
        .map(|j| {
            let title = if j <= 3 {
                "Same Soup".to_owned()
            } else {
                format!("Dish {j}")
            };
            format!("R-{j:03},{title}\n")
        })
        .collect();
    let text = format!("id,title\n{}", rows.concat());
    std::fs::write(&catalogue, text).unwrap();
    let model = dir.path().join("m");
    let out = sextant(&[
        "fit",
        &common::repo("tests/exports/ratings-pipe.csv")
            .display()
            .to_string(),
        "--catalogue",
        &catalogue.display().to_string(),
        "--rank",
        "2",
        "--holdout",
        "0",
        "--max-iters",
        "5",
        "--out",
        &model.display().to_string(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let out = sextant(&["neighbours", &model.display().to_string(), "same soup"]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.contains("3 items are titled 'same soup': 'R-001' (Same Soup), 'R-002' (Same Soup), 'R-003' (Same Soup); name one by its id"),
        "{stderr}"
    );
}
