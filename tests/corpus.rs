//! The hostile-input corpus (tests/bad-inputs/): every file is named after its fault, and
//! this one table says, for each, which command reads it, the exit code, the file and line
//! named, and the reason in words — and checks that nothing was written. Every file of the
//! corpus must be in the table and on the documentation page docs/refused-inputs.md.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::path::{Path, PathBuf};

use common::{copy_dir, repo, sextant, snapshot};

/// How a corpus file is fed to sextant.
#[derive(Debug, Clone, Copy)]
enum Feed {
    /// `fit FILE --out NEW --rank 1` plus options.
    Ratings(&'static [&'static str]),
    /// `fit good-small.csv --items FILE`.
    Meta,
    /// `fit good-small.csv --rank 1 --init-items FILE`.
    InitItems,
    /// `import --ratings good-small.csv --users tiny-model/users.csv --items FILE`.
    ItemTable,
    /// Replaces manifest.ron in a copy of tiny-model, then `info`.
    Manifest,
    /// Adds FILE as annotations.ron to a copy of tiny-model, then `audit`.
    Notes,
    /// `fold-in tiny-model FILE`.
    Profile,
}

/// (file, feed, exit code, line named (None: no line), reason fragment)
type Case = (&'static str, Feed, i32, Option<u64>, &'static str);

const SCALE: &[&str] = &["--scale", "1:5:1"];
const NONE: &[&str] = &[];

#[rustfmt::skip]
const CASES: &[Case] = &[
    // Ratings CSV.
    ("ratings-binary-garbage.csv", Feed::Ratings(NONE), 2, Some(1), "the header row is not valid UTF-8 text"),
    ("ratings-bom-crlf-mix.csv", Feed::Ratings(NONE), 0, None, ""),
    ("ratings-decimal-comma.csv", Feed::Ratings(NONE), 2, Some(3), "the row has 4 fields but the header names 3 columns"),
    ("ratings-duplicate-header-column.csv", Feed::Ratings(NONE), 2, Some(1), "column 'rating' appears more than once in the header"),
    ("ratings-duplicate-pair.csv", Feed::Ratings(NONE), 2, Some(4), "duplicate rating for user 'm1' and item 'r1' (first rated on line 2)"),
    ("ratings-empty-file.csv", Feed::Ratings(NONE), 2, None, "the file is empty; expected a header row"),
    ("ratings-empty-user-id.csv", Feed::Ratings(NONE), 2, Some(3), "the user id is empty"),
    ("ratings-header-only.csv", Feed::Ratings(NONE), 2, None, "no ratings: the file has a header row but no data rows"),
    ("ratings-hex-number.csv", Feed::Ratings(NONE), 2, Some(2), "rating '0x10' is not a number"),
    ("ratings-id-10000-chars.csv", Feed::Ratings(NONE), 2, Some(3), "is 10000 bytes long; ids may have at most 1024"),
    ("ratings-missing-rating-column.csv", Feed::Ratings(NONE), 2, Some(1), "missing column 'rating' in the header (found: user, item, stars)"),
    ("ratings-negative-infinity.csv", Feed::Ratings(NONE), 2, Some(3), "rating '-inf' is not a finite number"),
    ("ratings-negative-zero.csv", Feed::Ratings(NONE), 0, None, ""),
    ("ratings-non-utf8-id.csv", Feed::Ratings(NONE), 2, Some(3), "the user id is not valid UTF-8 text"),
    ("ratings-only-whitespace.csv", Feed::Ratings(NONE), 2, None, "the file is empty"),
    ("ratings-rating-1e308.csv", Feed::Ratings(NONE), 2, Some(3), "rating '1e308' is too large: ratings must lie within ±1e12"),
    ("ratings-rating-empty.csv", Feed::Ratings(NONE), 2, Some(2), "the rating is empty"),
    ("ratings-rating-infinite.csv", Feed::Ratings(NONE), 2, Some(2), "rating 'inf' is not a finite number"),
    ("ratings-rating-nan.csv", Feed::Ratings(NONE), 2, Some(3), "rating 'NaN' is not a finite number"),
    ("ratings-rating-not-a-number.csv", Feed::Ratings(NONE), 2, Some(3), "rating 'four' is not a number"),
    ("ratings-rating-off-scale-step.csv", Feed::Ratings(SCALE), 2, Some(3), "rating '3.5' is not on the scale given by --scale"),
    ("ratings-rating-outside-scale.csv", Feed::Ratings(SCALE), 2, Some(3), "rating '6' is outside the scale 1 to 5"),
    ("ratings-short-row.csv", Feed::Ratings(NONE), 2, Some(3), "the row has 2 field(s) but the rating is in column 3"),
    ("ratings-subnormal.csv", Feed::Ratings(NONE), 0, None, ""),
    ("ratings-trailing-text.csv", Feed::Ratings(NONE), 2, Some(3), "rating '4stars' is not a number"),
    ("ratings-unterminated-quote.csv", Feed::Ratings(NONE), 2, Some(2), "a quote opened on this line is never closed"),
    ("ratings-user-id-only-spaces.csv", Feed::Ratings(NONE), 2, Some(3), "the user id is empty"),
    ("ratings-utf16-no-bom.csv", Feed::Ratings(NONE), 2, None, "the file is UTF-16 (little-endian); save it as UTF-8"),
    ("ratings-utf32-bom.csv", Feed::Ratings(NONE), 2, None, "the file is UTF-32 (little-endian, with a byte-order mark); save it as UTF-8"),
    ("ratings-line-over-1mib.csv", Feed::Ratings(NONE), 2, Some(3), "the line is longer than 1048576 bytes"),
    ("ratings-semicolons.csv", Feed::Ratings(NONE), 0, None, ""),
    // Items metadata.
    ("meta-duplicate-item.csv", Feed::Meta, 2, Some(4), "item 'r1' is described twice (first on line 2)"),
    ("meta-empty-file.csv", Feed::Meta, 2, None, "the file is empty"),
    ("meta-empty-item-id.csv", Feed::Meta, 2, Some(3), "the item id is empty"),
    ("meta-missing-item-column.csv", Feed::Meta, 2, Some(1), "missing column 'item' in the header"),
    ("meta-non-utf8-title.csv", Feed::Meta, 2, Some(3), "column 'title' is not valid UTF-8 text"),
    ("meta-row-too-long.csv", Feed::Meta, 2, Some(3), "the row has 3 fields but the header names 2 columns"),
    ("meta-semicolons.csv", Feed::Meta, 0, None, ""),
    // Factor tables: as initial item vectors of a fit, and as an imported item table.
    ("init-items-missing-item.csv", Feed::InitItems, 2, None, "1 rated item(s) have no initial vector (first: 'r2')"),
    ("init-items-non-finite.csv", Feed::InitItems, 2, Some(3), "factor f1 of 'r2' is 'NaN', not a finite number"),
    ("init-items-wrong-width.csv", Feed::InitItems, 2, None, "the initial item table has 2 factor columns but --rank is 1"),
    ("factors-duplicate-id.csv", Feed::ItemTable, 2, Some(3), "id 'm1' appears more than once"),
    ("factors-header-only.csv", Feed::ItemTable, 2, None, "no rows: the file has a header row but no vectors"),
    ("factors-huge-value.csv", Feed::ItemTable, 2, Some(3), "factor f1 of 'r2' is 1e300: factor values must lie within ±1e12"),
    ("factors-id-10000-chars.csv", Feed::ItemTable, 2, Some(3), "is 10000 bytes long; ids may have at most 1024"),
    ("factors-infinite-value.csv", Feed::InitItems, 2, Some(3), "factor f1 of 'r2' is 'inf', not a finite number"),
    ("factors-no-factor-columns.csv", Feed::ItemTable, 2, Some(1), "a factor table needs an id column and at least one factor column"),
    ("factors-rank-1025.csv", Feed::ItemTable, 2, Some(1), "the table has 1025 factor columns, and a rank must be between 1 and 1024, not 1025"),
    ("factors-row-too-long.csv", Feed::ItemTable, 2, Some(3), "expected 2 fields (an id and 1 factors), found 3"),
    ("factors-row-too-short.csv", Feed::ItemTable, 2, Some(3), "expected 3 fields (an id and 2 factors), found 2"),
    // manifest.ron of a model directory.
    ("manifest-absolute-path.ron", Feed::Manifest, 2, None, "file name '/etc/passwd' would leave the model directory"),
    ("manifest-counts-mismatch.ron", Feed::Manifest, 2, None, "the table has 3 users but the manifest says 4"),
    ("manifest-empty.ron", Feed::Manifest, 2, Some(1), "not a valid manifest"),
    ("manifest-future-version.ron", Feed::Manifest, 2, None, "format version 99 is not supported by this sextant"),
    ("manifest-nan-mu.ron", Feed::Manifest, 2, None, "mu is NaN, not a finite number"),
    ("manifest-negative-lambda.ron", Feed::Manifest, 2, None, "lambda must be ≥ 0 and sigma2 > 0"),
    ("manifest-not-ron.ron", Feed::Manifest, 2, Some(1), "not a valid manifest"),
    ("manifest-path-outside.ron", Feed::Manifest, 2, None, "file name '../tiny-model/users.csv' would leave the model directory"),
    ("manifest-rank-1e9.ron", Feed::Manifest, 2, None, "the rank must be between 1 and 1024, not 1000000000"),
    ("manifest-rank-width-mismatch.ron", Feed::Manifest, 2, Some(1), "the table has 1 factor columns but the manifest says rank 2"),
    ("manifest-rank-zero.ron", Feed::Manifest, 2, None, "the rank must be between 1 and 1024, not 0"),
    ("manifest-truncated.ron", Feed::Manifest, 2, Some(36), "not a valid manifest"),
    ("manifest-unknown-field.ron", Feed::Manifest, 0, None, ""),
    ("manifest-wrong-format-tag.ron", Feed::Manifest, 2, None, "format 'some-other-tool' is not 'sextant-model'"),
    // annotations.ron (curator notes).
    ("notes-factor-zero.ron", Feed::Notes, 2, None, "factor numbers start at 1; found a label for factor 0"),
    ("notes-future-version.ron", Feed::Notes, 2, None, "notes version 7 is not supported"),
    ("notes-non-utf8.ron", Feed::Notes, 2, None, "is not valid UTF-8 text"),
    ("notes-not-ron.ron", Feed::Notes, 2, Some(1), "not a valid notes file"),
    ("notes-escape-sequence.ron", Feed::Notes, 2, None, "the note holds the control character \\x1b"),
    ("notes-line-breaks.ron", Feed::Notes, 0, None, ""),
    ("notes-note-too-long.ron", Feed::Notes, 2, None, "the note is 5000 characters long; at most 4000 are kept"),
    ("notes-pair-same-item.ron", Feed::Notes, 2, None, "pair ('r1', 'r1') names the same item twice"),
    ("notes-unknown-field.ron", Feed::Notes, 2, Some(4), "Unexpected field named `colours`"),
    ("notes-wrong-format-tag.ron", Feed::Notes, 2, None, "format 'other-notes' is not 'sextant-notes'"),
    // What-if profiles (fold-in).
    ("profile-duplicate-item.csv", Feed::Profile, 2, Some(4), "item 'r1' is rated twice (first on line 2)"),
    ("profile-empty-item.csv", Feed::Profile, 2, Some(3), "the item id is empty"),
    ("profile-header-only.csv", Feed::Profile, 2, None, "has a header but no ratings"),
    ("profile-no-rating-column.csv", Feed::Profile, 2, Some(1), "missing column 'rating' in the header (found: item, stars); a profile's header row is item,rating"),
    ("profile-not-a-number.csv", Feed::Profile, 2, Some(2), "rating 'five' is not a number"),
    ("profile-off-scale.csv", Feed::Profile, 2, Some(3), "rating 7 is not on the model's rating scale (1, 2, 3, 4, 5)"),
    ("profile-rating-1e308.csv", Feed::Profile, 2, Some(2), "rating '1e308' is too large"),
];

fn corpus(name: &str) -> PathBuf {
    repo(&format!("tests/bad-inputs/{name}"))
}

fn copy_model(to: &Path) {
    copy_dir(&corpus("tiny-model"), to);
}

/// Runs one case; returns (exit code, stderr, the file name the message must name).
fn run(case: &Case, work: &Path) -> (Option<i32>, String, String) {
    let (name, feed, ..) = *case;
    let file = corpus(name);
    let f = file.to_str().unwrap();
    let out = work.join("out");
    let o = out.to_str().unwrap();
    let small = corpus("good-small.csv");
    let small = small.to_str().unwrap();
    let tiny = corpus("tiny-model");
    let model = work.join("model");
    let m = model.to_str().unwrap();
    let (args, named): (Vec<&str>, String) = match feed {
        Feed::Ratings(extra) => {
            let mut a = vec!["fit", f, "--out", o, "--rank", "1", "-q"];
            a.extend(extra);
            (a, name.to_owned())
        }
        Feed::Meta => (
            vec![
                "fit",
                small,
                "--catalogue",
                f,
                "--out",
                o,
                "--rank",
                "1",
                "-q",
            ],
            name.to_owned(),
        ),
        Feed::InitItems => (
            vec![
                "fit",
                small,
                "--rank",
                "1",
                "--init-items",
                f,
                "--out",
                o,
                "-q",
            ],
            name.to_owned(),
        ),
        Feed::ItemTable => {
            let users = tiny.join("users.csv");
            let users = Box::leak(users.to_str().unwrap().to_owned().into_boxed_str());
            (
                vec![
                    "import",
                    "--ratings",
                    small,
                    "--user-vectors",
                    users,
                    "--item-vectors",
                    f,
                    "--center",
                    "none",
                    "--out",
                    o,
                ],
                name.to_owned(),
            )
        }
        Feed::Manifest => {
            copy_model(&model);
            std::fs::copy(&file, model.join("manifest.ron")).unwrap();
            (vec!["info", m], "model/".to_owned())
        }
        Feed::Notes => {
            copy_model(&model);
            std::fs::copy(&file, model.join("annotations.ron")).unwrap();
            (vec!["audit", m], "model/annotations.ron".to_owned())
        }
        Feed::Profile => (vec!["fold-in", tiny.to_str().unwrap(), f], name.to_owned()),
    };
    let before = model.exists().then(|| snapshot(&model));
    let result = sextant(&args);
    if let Some(before) = before {
        assert_eq!(
            snapshot(&model),
            before,
            "{name}: the model directory changed"
        );
    }
    if case.2 != 0 {
        assert!(!out.exists(), "{name}: a model directory appeared");
        assert!(result.stdout.is_empty(), "{name}: output on stdout");
    }
    (
        result.status.code(),
        String::from_utf8_lossy(&result.stderr).into_owned(),
        named,
    )
}

#[test]
fn every_corpus_file_is_refused_or_accepted_as_documented() {
    for case in CASES {
        let (name, _, code, line, reason) = *case;
        let work = tempfile::tempdir().unwrap();
        let (got, stderr, named) = run(case, work.path());
        assert_eq!(got, Some(code), "{name}: exit code; stderr: {stderr}");
        if code == 0 {
            continue;
        }
        assert!(stderr.starts_with("error: "), "{name}: {stderr}");
        assert!(
            stderr.contains(&named),
            "{name}: the file is named: {stderr}"
        );
        match line {
            Some(l) => assert!(
                stderr.contains(&format!(", line {l}: ")),
                "{name}: line {l}: {stderr}"
            ),
            None => assert!(
                !stderr.contains(", line "),
                "{name}: no line expected: {stderr}"
            ),
        }
        assert!(
            stderr.contains(reason),
            "{name}: reason {reason:?} in {stderr}"
        );
        // Nothing left behind in the working directory but the copied model.
        let left: Vec<String> = std::fs::read_dir(work.path())
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .filter(|n| n != "model")
            .collect();
        assert!(left.is_empty(), "{name}: left behind {left:?}");
    }
}

#[test]
fn the_corpus_the_table_and_the_documentation_agree() {
    let listed: std::collections::BTreeSet<&str> = CASES.iter().map(|c| c.0).collect();
    assert_eq!(listed.len(), CASES.len(), "a file is listed twice");
    let docs = std::fs::read_to_string(repo("docs/refused-inputs.md")).unwrap();
    let mut files = 0;
    for entry in std::fs::read_dir(repo("tests/bad-inputs")).unwrap() {
        let name = entry.unwrap().file_name().to_string_lossy().into_owned();
        if name == "good-small.csv" || name == "tiny-model" {
            continue;
        }
        files += 1;
        assert!(
            listed.contains(name.as_str()),
            "{name} is in the corpus but not in the table"
        );
        assert!(
            docs.contains(&format!("`{name}`")),
            "{name} is not on docs/refused-inputs.md"
        );
    }
    assert_eq!(
        files,
        CASES.len(),
        "the table lists a file the corpus lacks"
    );
    assert!(files >= 40);
}

#[test]
fn generated_hostile_inputs_are_refused_too() {
    let work = tempfile::tempdir().unwrap();
    // A 50 MB file that is one line with no newline: a header nobody can use.
    let huge = work.path().join("ratings-50mb-single-line.csv");
    std::fs::write(&huge, vec![b'a'; 50 << 20]).unwrap();
    let out = work.path().join("out");
    let result = sextant(&[
        "fit",
        huge.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "-q",
    ]);
    let stderr = String::from_utf8_lossy(&result.stderr);
    assert_eq!(result.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.contains(
            "ratings-50mb-single-line.csv, line 1: the line is longer than 1048576 bytes"
        ),
        "{}",
        &stderr[..stderr.len().min(300)]
    );
    assert!(stderr.len() < 400, "the message stays short");
    assert!(!out.exists());
    // A symlink inside a model directory that points outside it.
    let model = work.path().join("model");
    copy_model(&model);
    std::fs::remove_file(model.join("users.csv")).unwrap();
    std::os::unix::fs::symlink(corpus("tiny-model/users.csv"), model.join("users.csv")).unwrap();
    let result = sextant(&["info", model.to_str().unwrap()]);
    let stderr = String::from_utf8_lossy(&result.stderr);
    assert_eq!(result.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.contains("users.csv: is a symbolic link; every model file must be a regular file"),
        "{stderr}"
    );
}
