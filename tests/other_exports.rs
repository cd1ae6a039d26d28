//! Files shaped like other people's exports (tests/exports/): semicolon, tab and pipe
//! separated ratings with their own column names, catalogues keyed `id` or `item_id` with
//! `Name` or `Title` columns and quoted titles, and a catalogue without titles.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::path::{Path, PathBuf};

use common::{copy_dir, repo, sextant};

fn export(name: &str) -> String {
    repo("tests/exports").join(name).display().to_string()
}

/// `sextant fit` on `ratings` and `items` with `extra` flags into a new directory:
/// (exit code, stderr, the model directory).
fn fit(dir: &Path, ratings: &str, items: &str, extra: &[&str]) -> (i32, String, PathBuf) {
    let out = dir.join("model");
    let ratings = export(ratings);
    let items = export(items);
    let mut args = vec![
        "fit",
        &ratings,
        "--catalogue",
        &items,
        "--rank",
        "2",
        "--holdout",
        "0",
        "--max-iters",
        "20",
        "--out",
    ];
    let out_text = out.display().to_string();
    args.push(&out_text);
    args.extend(extra);
    let run = sextant(&args);
    (
        run.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&run.stderr).into_owned(),
        out,
    )
}

fn title_of(model: &Path, id: &str) -> (Option<String>, Option<String>) {
    let model = sextant::model::load_model(model).unwrap();
    let j = model.ratings.items.get(id).unwrap();
    let meta = model.meta.as_ref().unwrap().get(j).unwrap().clone();
    (meta.title, meta.category)
}

#[test]
fn semicolon_ratings_and_a_catalogue_keyed_id_with_a_name_column() {
    let dir = tempfile::tempdir().unwrap();
    let (code, stderr, model) = fit(
        dir.path(),
        "ratings-semicolon.csv",
        "catalogue-id-name.csv",
        &[
            "--user-col",
            "Member",
            "--item-col",
            "Recipe",
            "--rating-col",
            "Stars",
        ],
    );
    assert_eq!(code, 0, "{stderr}");
    assert!(!stderr.contains("warning"), "{stderr}");
    // Quoted titles keep their commas, quotes and letters; 'Genre' is the category.
    assert_eq!(
        title_of(&model, "R-001"),
        (Some("Crème brûlée, burnt".into()), Some("desserts".into()))
    );
    assert_eq!(
        title_of(&model, "R-002").0.as_deref(),
        Some("Smørrebrød \"open\" toast")
    );
}

#[test]
fn tab_and_pipe_files_are_read_by_their_header() {
    let dir = tempfile::tempdir().unwrap();
    let (code, stderr, model) = fit(
        dir.path(),
        "ratings-tab.tsv",
        "catalogue-title-semicolon.csv",
        &[],
    );
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(
        title_of(&model, "R-004").0.as_deref(),
        Some("Kale; lemon & garlic")
    );
    let dir = tempfile::tempdir().unwrap();
    let (code, stderr, model) = fit(dir.path(), "ratings-pipe.csv", "catalogue-id-name.csv", &[]);
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(
        title_of(&model, "R-011").0.as_deref(),
        Some("Goulash | paprika")
    );
}

#[test]
fn a_catalogue_without_titles_is_named_once_and_a_column_can_be_chosen() {
    let dir = tempfile::tempdir().unwrap();
    let (code, stderr, model) = fit(
        dir.path(),
        "ratings-pipe.csv",
        "catalogue-no-title.csv",
        &[],
    );
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(stderr.matches("warning:").count(), 1, "{stderr}");
    assert!(
        stderr.contains("no title column among id, genre, year") && stderr.contains("--title-col"),
        "{stderr}"
    );
    assert_eq!(title_of(&model, "R-001"), (None, Some("desserts".into())));
    let dir = tempfile::tempdir().unwrap();
    let (code, stderr, model) = fit(
        dir.path(),
        "ratings-pipe.csv",
        "catalogue-no-title.csv",
        &["--title-col", "year", "--category-col", "genre"],
    );
    assert_eq!(code, 0, "{stderr}");
    assert!(!stderr.contains("warning"), "{stderr}");
    assert_eq!(
        title_of(&model, "R-003"),
        (Some("2002".into()), Some("breads".into()))
    );
}

#[test]
fn advice_in_messages_can_be_followed_in_that_command() {
    // A separator given wrongly: the message names the one the header shows.
    let dir = tempfile::tempdir().unwrap();
    let (code, stderr, _) = fit(
        dir.path(),
        "ratings-semicolon.csv",
        "catalogue-id-name.csv",
        &["--delimiter", ",", "--user-col", "Member"],
    );
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("pass --delimiter ';'"), "{stderr}");
    // A metadata id column that is not there: the flag that names it.
    let (code, stderr, _) = fit(
        dir.path(),
        "ratings-tab.tsv",
        "catalogue-id-name.csv",
        &["--meta-id-col", "sku"],
    );
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("missing column 'sku'") && stderr.contains("--meta-id-col"),
        "{stderr}"
    );
    // A bad --delimiter value is a usage error.
    let (code, stderr, _) = fit(
        dir.path(),
        "ratings-tab.tsv",
        "catalogue-id-name.csv",
        &["--delimiter", "x"],
    );
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("--delimiter: 'x' is not a separator"),
        "{stderr}"
    );
}

#[test]
fn a_damaged_model_directory_is_not_told_to_use_a_flag() {
    let dir = tempfile::tempdir().unwrap();
    let model = dir.path().join("m");
    copy_dir(&repo("tests/bad-inputs/tiny-model"), &model);
    let ratings = std::fs::read_to_string(model.join("ratings.csv")).unwrap();
    let (header, rest) = ratings.split_once('\n').unwrap();
    std::fs::write(
        model.join("ratings.csv"),
        format!("{}\n{rest}", header.replace("rating", "score")),
    )
    .unwrap();
    let run = sextant(&["info", &model.display().to_string()]);
    let stderr = String::from_utf8_lossy(&run.stderr);
    assert_eq!(run.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.contains("fit the model again") && !stderr.contains("--rating-col"),
        "{stderr}"
    );
}
