//! `sextant tune`: the grid, the best fit, the written model and the failures it reports.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::fmt::Write as _;

use common::sextant;

/// Ratings of a planted rank-2 structure with a little noise (deterministic).
fn planted(dir: &std::path::Path) -> std::path::PathBuf {
    let path = dir.join("ratings.csv");
    let mut text = String::from("user,item,rating\n");
    for u in 0..60 {
        for i in 0..25 {
            if (u * 13 + i * 7) % 5 == 0 {
                continue;
            }
            let a = f64::from((u % 7) as u8) / 3.0 - 1.0;
            let b = f64::from((u % 5) as u8) / 2.0 - 1.0;
            let x = f64::from((i % 4) as u8) / 1.5 - 1.0;
            let y = f64::from((i % 3) as u8) - 1.0;
            let wobble = f64::from(((u * 31 + i * 17) % 11) as u8) / 11.0 - 0.5;
            let value = (3.0 + 1.2 * (a * x + b * y) + 0.4 * wobble)
                .round()
                .clamp(1.0, 5.0);
            let _ = writeln!(text, "u{u},i{i},{value}");
        }
    }
    std::fs::write(&path, text).unwrap();
    path
}

#[test]
fn tune_finds_the_best_fit_and_writes_it() {
    let dir = tempfile::tempdir().unwrap();
    let ratings = planted(dir.path());
    let out_dir = dir.path().join("best");
    let out = sextant(&[
        "tune",
        ratings.to_str().unwrap(),
        "--ranks",
        "1,2,4",
        "--lambdas",
        "0,0.5,5",
        "--holdout",
        "0.2",
        "--max-iters",
        "300",
        "--out",
        out_dir.to_str().unwrap(),
        "--format",
        "json",
        "-q",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let grid = json["grid"].as_array().unwrap();
    assert_eq!(grid.len(), 9);
    let best = &json["best"];
    let best_rmse = best["holdout_rmse"].as_f64().unwrap();
    for p in grid {
        if let Some(v) = p["holdout_rmse"].as_f64() {
            assert!(v >= best_rmse);
            assert!(p["seconds"].as_f64().unwrap() >= 0.0);
        } else {
            // λ = 0 at rank 4 leaves members with fewer than 4 training ratings unsolvable.
            assert!(p["error"].as_str().unwrap().contains("fewer than"), "{p}");
        }
    }
    // The written model is the best fit: same rank, λ and held-out RMSE.
    let info = sextant(&["info", out_dir.to_str().unwrap(), "--format", "json"]);
    let info: serde_json::Value = serde_json::from_slice(&info.stdout).unwrap();
    assert_eq!(info["rank"], best["rank"]);
    assert_eq!(info["lambda"], best["lambda"]);
    assert!((info["holdout"]["rmse"].as_f64().unwrap() - best_rmse).abs() < 1e-12);

    // The table marks the same fit.
    let table = sextant(&[
        "tune",
        ratings.to_str().unwrap(),
        "--ranks",
        "1,2",
        "--lambdas",
        "0.5",
        "--holdout",
        "0.2",
        "-q",
    ]);
    let text = String::from_utf8(table.stdout).unwrap();
    assert_eq!(text.matches("◀ best").count(), 1, "{text}");
}

#[test]
fn tune_refuses_what_cannot_be_compared() {
    let dir = tempfile::tempdir().unwrap();
    let ratings = planted(dir.path());
    let r = ratings.to_str().unwrap();
    for (args, reason) in [
        (vec!["--holdout", "0"], "--holdout must be above 0"),
        (
            vec!["--ranks", "0"],
            "--ranks: every rank must be between 1 and 1024, not 0",
        ),
        (
            vec!["--lambdas=-1"],
            "--lambdas: every λ must be a finite number ≥ 0, not -1",
        ),
    ] {
        let mut all = vec!["tune", r];
        all.extend(args);
        let out = sextant(&all);
        assert_eq!(out.status.code(), Some(2));
        assert!(
            String::from_utf8_lossy(&out.stderr).contains(reason),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
}
