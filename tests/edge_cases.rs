//! Numerical edge cases: every command gives a sensible answer or a clear error, and no
//! output ever holds NaN or infinity.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::fmt::Write as _;
use std::path::Path;

use common::sextant;

fn write(dir: &Path, name: &str, rows: &[(String, String, String)]) -> std::path::PathBuf {
    let mut text = String::from("user,item,rating\n");
    for (u, i, r) in rows {
        let _ = writeln!(text, "{u},{i},{r}");
    }
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

fn grid(
    users: usize,
    items: usize,
    value: impl Fn(usize, usize) -> String,
) -> Vec<(String, String, String)> {
    (0..users)
        .flat_map(|u| (0..items).map(move |i| (u, i)))
        .map(|(u, i)| (format!("u{u}"), format!("i{i}"), value(u, i)))
        .collect()
}

/// Runs a command and checks that it succeeded and printed no NaN or infinity.
fn clean(args: &[&str]) -> String {
    let out = sextant(args);
    let stdout = String::from_utf8_lossy(&out.stdout).into_owned();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(out.status.success(), "{args:?}: {stderr}");
    for bad in ["NaN", "nan", "inf"] {
        assert!(
            !stdout
                .split(|c: char| !c.is_alphanumeric())
                .any(|w| w == bad),
            "{args:?} printed {bad}:\n{stdout}"
        );
    }
    stdout
}

#[test]
fn degenerate_data_and_extreme_options_give_finite_answers() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let equal = write(d, "equal.csv", &grid(6, 5, |_, _| "3".into()));
    let one_member = write(d, "one-member.csv", &grid(1, 4, |_, i| (1 + i).to_string()));
    let one_item = write(d, "one-item.csv", &grid(4, 1, |u, _| (1 + u).to_string()));
    let wide = write(
        d,
        "scale-0-1000.csv",
        &grid(8, 6, |u, i| ((u * 379 + i * 613) % 1001).to_string()),
    );
    let cases: Vec<(&Path, Vec<&str>)> = vec![
        (&equal, vec!["--rank", "3"]),
        (&one_member, vec!["--rank", "2"]),
        (&one_item, vec!["--rank", "2"]),
        // Rank larger than the catalogue and than anyone's ratings.
        (&equal, vec!["--rank", "10"]),
        (&equal, vec!["--lambda", "1e12"]),
        (&one_member, vec!["--sigma2", "1e-12", "--rank", "2"]),
        (&wide, vec!["--rank", "2"]),
        (&wide, vec!["--rank", "2", "--center", "none"]),
    ];
    for (k, (ratings, options)) in cases.iter().enumerate() {
        let model = d.join(format!("m{k}"));
        let m = model.to_str().unwrap();
        let mut args = vec!["fit", ratings.to_str().unwrap(), "--out", m, "-q"];
        args.extend(options);
        clean(&args);
        let info = clean(&["info", m, "--format", "json"]);
        let json: serde_json::Value = serde_json::from_str(&info).unwrap();
        assert!(
            json["train"]["rmse"].as_f64().unwrap().is_finite(),
            "{options:?}"
        );
        clean(&["audit", m]);
        clean(&["neighbours", m, "i0", "--format", "json"]);
        clean(&["neighbours", m, "--user", "u0", "--format", "json"]);
        clean(&["suggest", m, "u0", "--format", "json"]);
        clean(&["explain", m, "u0", "i0", "--format", "json"]);
        clean(&["explain", m, "u0", "i0", "--plain"]);
        let profile = d.join("profile.csv");
        std::fs::write(&profile, "item,rating\ni0,3\n").unwrap();
        clean(&["fold-in", m, profile.to_str().unwrap(), "--format", "json"]);
    }
}

#[test]
fn a_ridge_too_small_for_floating_point_is_a_clear_error() {
    let dir = tempfile::tempdir().unwrap();
    let one_member = write(
        dir.path(),
        "one-member.csv",
        &grid(1, 4, |_, i| (1 + i).to_string()),
    );
    let model = dir.path().join("m");
    let out = sextant(&[
        "fit",
        one_member.to_str().unwrap(),
        "--out",
        model.to_str().unwrap(),
        "--sigma2",
        "1e-300",
        "-q",
    ]);
    assert_eq!(out.status.code(), Some(1));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("'u0'") && stderr.contains("raise --lambda or --sigma2"),
        "{stderr}"
    );
    assert!(!model.exists());
}

#[test]
fn a_member_whose_every_rating_is_held_out_is_explained_without_nan() {
    // The split always keeps one training rating per member; an imported model may not.
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let ratings = write(
        d,
        "r.csv",
        &grid(5, 4, |u, i| (1 + (u + i) % 5).to_string()),
    );
    let fitted = d.join("fitted");
    clean(&[
        "fit",
        ratings.to_str().unwrap(),
        "--out",
        fitted.to_str().unwrap(),
        "--rank",
        "2",
        "--holdout",
        "0",
        "-q",
    ]);
    // Mark all of u0's ratings as held out in an imported copy.
    let mut text = std::fs::read_to_string(fitted.join("ratings.csv")).unwrap();
    text = text
        .lines()
        .map(|l| {
            if l.starts_with("u0,") {
                l.replace(",train", ",holdout")
            } else {
                l.to_owned()
            }
        })
        .collect::<Vec<_>>()
        .join("\n")
        + "\n";
    let split = d.join("split.csv");
    std::fs::write(&split, &text).unwrap();
    let imported = d.join("imported");
    let out = sextant(&[
        "import",
        "--ratings",
        split.to_str().unwrap(),
        "--user-vectors",
        fitted.join("users.csv").to_str().unwrap(),
        "--item-vectors",
        fitted.join("items.csv").to_str().unwrap(),
        "--center",
        "none",
        "--out",
        imported.to_str().unwrap(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let m = imported.to_str().unwrap();
    let explained = clean(&["explain", m, "u0", "i1", "--format", "json"]);
    let json: serde_json::Value = serde_json::from_str(&explained).unwrap();
    assert_eq!(json["support"]["user_ratings"], 0);
    assert_eq!(json["support"]["user_low_support"], true);
    clean(&["suggest", m, "u0"]);
    clean(&["audit", m]);
}
