//! The audit's figures: the hypergeometric law against scipy, NDCG against scikit-learn,
//! ranking metrics against worked values, coherence on the demo against its random
//! baseline, and the written report read back.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::collections::HashMap;
use std::fmt::Write as _;

use common::{copy_dir, fixture, floats, repo, sextant};
use sextant::analysis::audit::{AuditOptions, audit};
use sextant::analysis::ranking::ndcg_at;
use sextant::analysis::stats::{Hypergeometric, LnFactorial};
use sextant::model::load_model;

#[test]
fn hypergeometric_law_equals_scipy() {
    // Source: scipy.stats.hypergeom pmf, cdf and sf (tests/reference/fixtures).
    for case in fixture("hypergeometric.json")["cases"].as_array().unwrap() {
        let n = case["population"].as_u64().unwrap() as usize;
        let k = case["marked"].as_u64().unwrap() as usize;
        let d = case["draws"].as_u64().unwrap() as usize;
        let table = LnFactorial::new(n);
        let law = Hypergeometric::new(n, k, d);
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs().max(1e-300) + 1e-14;
        for (x, ((pmf, cdf), sf)) in floats(&case["pmf"])
            .into_iter()
            .zip(floats(&case["cdf"]))
            .zip(floats(&case["at_least"]))
            .enumerate()
        {
            assert!(close(law.pmf(x, &table), pmf), "pmf {n} {k} {d} at {x}");
            assert!(close(law.at_most(x, &table), cdf), "cdf {n} {k} {d} at {x}");
            assert!(close(law.at_least(x, &table), sf), "sf {n} {k} {d} at {x}");
        }
    }
}

#[test]
fn ndcg_equals_scikit_learn() {
    // Source: sklearn.metrics.ndcg_score (linear gain), tests/reference/fixtures/ndcg.json.
    for case in fixture("ndcg.json")["cases"].as_array().unwrap() {
        let k = case["k"].as_u64().unwrap() as usize;
        let relevance = floats(&case["relevance"]);
        let scores = floats(&case["scores"]);
        let mut order: Vec<usize> = (0..scores.len()).collect();
        order.sort_by(|&a, &b| scores[b].total_cmp(&scores[a]));
        let gains: Vec<f64> = order.iter().map(|&i| relevance[i]).collect();
        let expected = case["ndcg"].as_f64().unwrap();
        assert!((ndcg_at(&gains, k) - expected).abs() < 1e-12, "k = {k}");
    }
}

#[test]
fn demo_neighbours_are_far_more_coherent_than_random() {
    // Nearby items in a fitted space should be items people rate alike [practice]; the demo
    // plants tastes by category, so neighbours must share categories far above chance.
    let model = load_model(&repo("demo-data/model")).unwrap();
    let found = audit(&model, AuditOptions::default());
    let c = found.coherence.expect("the demo has categories");
    assert_eq!(c.items.len(), 400);
    assert!(c.mean > 3.0 * c.baseline, "{} vs {}", c.mean, c.baseline);
    assert!(c.mean > 0.6);
    // Eight equal categories of 50: random share (50 − 1)/(400 − 1) exactly.
    assert!((c.baseline - 49.0 / 399.0).abs() < 1e-12);
    assert_eq!(c.histogram.iter().sum::<usize>(), 400);
    // Held-out ranking beats a random order by a wide margin, and stays a proportion.
    let r = found.ranking.expect("the demo holds ratings out");
    assert!(r.precision > 3.0 * r.random.0 && r.ndcg > 3.0 * r.random.2);
    assert!((0.0..=1.0).contains(&r.recall));
    // Prior-dominated members and items: the same counts the fit recorded.
    let m = model.manifest.metrics.as_ref().unwrap();
    assert_eq!(
        found.low_support.len(),
        m.low_support_users + m.low_support_items
    );
    assert!(
        found
            .low_support
            .windows(2)
            .all(|w| w[0].ratings <= w[1].ratings)
    );
    // Vector-length outliers really are beyond 3.5 modified z-scores.
    for n in &found.norms {
        assert!(n.outliers.iter().all(|o| o.score.abs() > 3.5));
    }
    // Worst fits are sorted and really the largest.
    let worst = &found.worst_holdout;
    assert!(
        worst
            .windows(2)
            .all(|w| w[0].residual().abs() >= w[1].residual().abs())
    );
    let last = worst.last().unwrap().residual().abs();
    let larger = model
        .ratings
        .entries
        .iter()
        .filter(|e| e.holdout)
        .filter(|e| (e.value - model.factors.predict(e.user, e.item)).abs() > last)
        .count();
    assert!(larger < worst.len());
}

/// Rows of the Markdown table that follows `heading`, as cells.
fn markdown_table(text: &str, heading: &str) -> Vec<Vec<String>> {
    let start = text
        .find(heading)
        .unwrap_or_else(|| panic!("no '{heading}'"));
    text[start..]
        .lines()
        .skip_while(|l| !l.starts_with('|'))
        .take_while(|l| l.starts_with('|'))
        .skip(2)
        .map(|l| {
            l.trim_matches('|')
                .split(" | ")
                .map(|c| c.trim().to_owned())
                .collect()
        })
        .collect()
}

fn csv_rows(path: &std::path::Path) -> Vec<HashMap<String, String>> {
    let mut reader = csv::Reader::from_path(path).unwrap();
    let header: Vec<String> = reader
        .headers()
        .unwrap()
        .iter()
        .map(str::to_owned)
        .collect();
    reader
        .records()
        .map(|r| {
            header
                .iter()
                .cloned()
                .zip(r.unwrap().iter().map(str::to_owned))
                .collect()
        })
        .collect()
}

#[test]
fn the_report_reads_back_with_the_computed_figures() {
    let dir = tempfile::tempdir().unwrap();
    let model_dir = dir.path().join("model");
    copy_dir(&repo("demo-data/model"), &model_dir);
    std::fs::write(
        model_dir.join("annotations.ron"),
        "(format: \"sextant-notes\", version: 1, factors: {3: \"soups\"}, items: {\"r071\": \"check the category\"}, pairs: [(a: \"r001\", b: \"r002\", note: \"different dishes\")])\n",
    )
    .unwrap();
    let report = dir.path().join("audit.md");
    let csv_dir = dir.path().join("csv");
    let out = sextant(&[
        "audit",
        model_dir.to_str().unwrap(),
        "--report",
        report.to_str().unwrap(),
        "--csv",
        csv_dir.to_str().unwrap(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = std::fs::read_to_string(&report).unwrap();
    let model = load_model(&model_dir).unwrap();
    let found = audit(&model, AuditOptions::default());

    // Ranking table: model and random columns at 4 decimals.
    let ranking = markdown_table(&text, "## Ranking quality");
    let r = found.ranking.unwrap();
    assert_eq!(ranking[0][0], "precision@10");
    assert_eq!(ranking[0][1], format!("{:.4}", r.precision));
    assert_eq!(ranking[2][1], format!("{:.4}", r.ndcg));
    assert_eq!(ranking[1][2], format!("{:.4}", r.random.1));
    let csv_ranking = csv_rows(&csv_dir.join("ranking.csv"));
    let ndcg: f64 = csv_ranking[2]["model"].parse().unwrap();
    assert_eq!(ndcg, r.ndcg);

    // Coherence: the distribution adds up to the items, the categories match the CSV.
    let c = found.coherence.unwrap();
    assert!(text.contains(&format!("Mean share **{:.3}**", c.mean)));
    let histogram = markdown_table(&text, "### Distribution");
    let counted: usize = histogram
        .iter()
        .map(|r| r[1].parse::<usize>().unwrap())
        .sum();
    assert_eq!(counted, 400);
    let coherence = csv_rows(&csv_dir.join("coherence.csv"));
    assert_eq!(coherence.len(), 400);
    let mean: f64 = coherence
        .iter()
        .map(|r| r["share"].parse::<f64>().unwrap())
        .sum::<f64>()
        / 400.0;
    assert!((mean - c.mean).abs() < 1e-12);
    let least = markdown_table(&text, "### Least coherent items");
    let first = c.least_coherent(1)[0];
    assert!(least[0][0].starts_with(model.ratings.items.name(first.item)));
    assert_eq!(least[0][1], format!("{}/{}", first.same, first.neighbours));

    // Worst fits: the first held-out row.
    let worst = markdown_table(&text, "### Held-out ratings");
    let w = found.worst_holdout[0];
    assert_eq!(worst[0][0], model.ratings.users.name(w.user));
    assert_eq!(worst[0][4], format!("{:+.3}", w.residual()));

    // Factor meaning carries the curator's label; the notes section lists all three notes.
    assert!(text.contains("### Factor 3: soups"));
    let notes = markdown_table(&text, "## Curator notes");
    assert_eq!(notes.len(), 3);
    assert!(notes.iter().any(|r| r[2] == "check the category"));
    assert!(notes.iter().any(|r| r[2].contains("different dishes")));
    assert_eq!(csv_rows(&csv_dir.join("notes.csv")).len(), 3);
    let factors = csv_rows(&csv_dir.join("factors.csv"));
    assert_eq!(factors.len(), 10 * 2 * 8);
    assert!(
        factors
            .iter()
            .filter(|r| r["factor"] == "3")
            .all(|r| r["label"] == "soups")
    );
}

/// A small ratings file (30 members × 12 items, some pairs missing).
fn small_ratings(dir: &std::path::Path) -> std::path::PathBuf {
    let ratings = dir.join("r.csv");
    let mut text = String::from("user,item,rating\n");
    for u in 0..30 {
        for i in 0..12 {
            if (u * 7 + i * 3) % 4 != 0 {
                let _ = writeln!(text, "u{u},i{i},{}", 1 + (u + i) % 5);
            }
        }
    }
    std::fs::write(&ratings, text).unwrap();
    ratings
}

fn fit_small(ratings: &std::path::Path, model: &std::path::Path) -> std::process::Output {
    fit_small_with(ratings, model, &["-q"])
}

fn fit_small_with(
    ratings: &std::path::Path,
    model: &std::path::Path,
    extra: &[&str],
) -> std::process::Output {
    let mut args = vec![
        "fit",
        ratings.to_str().unwrap(),
        "--out",
        model.to_str().unwrap(),
        "--rank",
        "2",
        "--holdout",
        "0",
    ];
    args.extend_from_slice(extra);
    let out = sextant(&args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

#[test]
fn audit_without_categories_or_holdout_says_what_it_could_not_measure() {
    let dir = tempfile::tempdir().unwrap();
    let ratings = small_ratings(dir.path());
    let model = dir.path().join("m");
    fit_small(&ratings, &model);
    let out = sextant(&["audit", model.to_str().unwrap()]);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.contains("Not measured: no member has a held-out rating"));
    assert!(text.contains("Not measured: the items metadata names fewer than two categories"));
    assert!(text.contains("No ratings are held out."));
    assert!(!text.contains("NaN"));
}

#[test]
fn a_refit_keeps_the_notes_and_reports_those_about_missing_items() {
    let dir = tempfile::tempdir().unwrap();
    let ratings = small_ratings(dir.path());
    let model = dir.path().join("m");
    fit_small(&ratings, &model);
    let notes = "(format: \"sextant-notes\", version: 1, factors: {1: \"mild\", 7: \"gone\"}, \
                 items: {\"i3\": \"keep\", \"i99\": \"orphan\"})\n";
    std::fs::write(model.join("annotations.ron"), notes).unwrap();
    // Not quiet: the carried-over notes are reported on stderr.
    let out = fit_small_with(&ratings, &model, &[]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("kept 4 curator note(s)"), "{stderr}");
    assert!(stderr.contains("1 item note refers"), "{stderr}");
    assert!(
        stderr.contains("'i99'") && stderr.contains("factors 7"),
        "{stderr}"
    );
    // Nothing is dropped from the file: orphans stay until a curator removes them.
    assert_eq!(
        std::fs::read_to_string(model.join("annotations.ron")).unwrap(),
        notes
    );
}

#[test]
fn notes_saved_by_an_open_session_survive_a_refit_into_the_same_directory() {
    use sextant::model::notes::{Notes, read_notes};
    let dir = tempfile::tempdir().unwrap();
    let ratings = small_ratings(dir.path());
    let model = dir.path().join("m");
    fit_small(&ratings, &model);
    // Two sessions have the model open; one saves a note before the refit.
    let mut early = Notes::open(&model).unwrap();
    let mut late = Notes::open(&model).unwrap();
    early
        .current
        .set_item_note("i1", "before the refit")
        .unwrap();
    early.save().unwrap();
    fit_small(&ratings, &model);
    // The other saves after it: its note lands in the new model, beside the carried one.
    late.current.set_factor_label(1, "after the refit").unwrap();
    let merge = late.save().unwrap();
    assert_eq!(merge.taken, 1);
    let on_disk = read_notes(&model).unwrap();
    assert_eq!(on_disk.item_note("i1"), Some("before the refit"));
    assert_eq!(on_disk.factor_label(1), Some("after the refit"));
    // The refitted directory still loads, with no leftover files.
    assert!(load_model(&model).is_ok());
    let names: Vec<String> = std::fs::read_dir(&model)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(names.iter().all(|n| !n.starts_with('.')), "{names:?}");
}
