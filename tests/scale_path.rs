//! The large-model path on a generated set small enough for CI: a seeded 300,000-rating file
//! (the same generator as the 20-million-rating measurements) is read by the streaming
//! loader, fitted at rank 32, saved with its binary twins, reopened through them, and its
//! neighbours listed in bulk.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use common::sextant;

#[test]
fn a_generated_large_set_fits_saves_with_binary_twins_and_reopens() {
    let dir = tempfile::tempdir().unwrap();
    let ratings = dir.path().join("ratings.csv");
    let written = sextant::synthetic::write_ratings(
        std::fs::File::create(&ratings).unwrap(),
        6_000,
        1_500,
        100,
        7,
    )
    .unwrap();
    assert!(written > 250_000, "{written}");
    let model = dir.path().join("model");
    let m = model.to_str().unwrap();
    let fit = sextant(&[
        "fit",
        ratings.to_str().unwrap(),
        "--out",
        m,
        "--rank",
        "32",
        "--max-iters",
        "3",
        "-q",
        "--format",
        "json",
    ]);
    assert!(
        fit.status.success(),
        "{}",
        String::from_utf8_lossy(&fit.stderr)
    );
    let json: serde_json::Value = serde_json::from_slice(&fit.stdout).unwrap();
    assert_eq!(json["ratings"].as_u64().unwrap(), written);
    let trace = json["iterations"].as_array().unwrap();
    assert_eq!(trace.len(), 3);
    // L never decreases, and the held-out error is a sane number on a 1–5 scale.
    assert!(
        trace
            .windows(2)
            .all(|w| w[1]["log_joint"].as_f64() >= w[0]["log_joint"].as_f64())
    );
    assert!(json["holdout"]["rmse"].as_f64().unwrap() < 2.0);
    // Over 250k ratings: the binary twin of the ratings is written and used on reopening.
    assert!(model.join("ratings.bin").exists());
    let info = sextant(&["info", m, "--format", "json"]);
    let reopened: serde_json::Value = serde_json::from_slice(&info.stdout).unwrap();
    assert_eq!(reopened, json);
    let all = sextant(&["neighbours", m, "--all", "-k", "3"]);
    assert!(all.status.success());
    assert_eq!(
        String::from_utf8(all.stdout).unwrap().lines().count(),
        1 + 1_500 * 3
    );
}
