//! Helpers shared by the integration tests.
#![allow(dead_code)]

use std::path::{Path, PathBuf};

use serde_json::Value;
use sextant::data::{FactorTable, IdMap, Rating, Ratings};

/// Path of a file in the repository.
pub fn repo(path: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(path)
}

/// A reference fixture written by tests/reference/make_fixtures.py.
pub fn fixture(name: &str) -> Value {
    let text = std::fs::read_to_string(repo(&format!("tests/reference/fixtures/{name}")))
        .unwrap_or_else(|e| {
            panic!("fixture {name}: {e}; run python3 tests/reference/make_fixtures.py")
        });
    serde_json::from_str(&text).expect("fixture is JSON")
}

/// A JSON array of numbers as a vector.
pub fn floats(value: &Value) -> Vec<f64> {
    value
        .as_array()
        .expect("array")
        .iter()
        .map(|v| v.as_f64().expect("number"))
        .collect()
}

/// A JSON array of rows as a row-major vector and its width.
pub fn matrix(value: &Value) -> (Vec<f64>, usize) {
    let rows = value.as_array().expect("rows");
    let width = rows.first().map_or(0, |r| r.as_array().expect("row").len());
    (rows.iter().flat_map(floats).collect(), width)
}

/// Ratings from `[[user, item, value], ...]`, interned in the order given.
pub fn ratings_from(rows: &Value) -> Ratings {
    let mut ratings = Ratings::default();
    for row in rows.as_array().expect("rows") {
        let user = ratings.users.intern(row[0].as_str().expect("user"));
        let item = ratings.items.intern(row[1].as_str().expect("item"));
        ratings.entries.push(Rating {
            user,
            item,
            value: row[2].as_f64().expect("value"),
            holdout: false,
        });
    }
    ratings.entries.sort_by_key(|r| (r.user, r.item));
    ratings
}

/// A factor table with ids `prefix0..` from row-major values.
pub fn table(prefix: &str, values: Vec<f64>, rank: usize) -> FactorTable {
    let mut ids = IdMap::new();
    for k in 0..values.len() / rank {
        ids.intern(&format!("{prefix}{k}"));
    }
    FactorTable {
        ids,
        rank,
        values,
        bias: None,
    }
}

/// Largest absolute difference, relative to max(1, |expected|).
pub fn max_rel_diff(actual: &[f64], expected: &[f64]) -> f64 {
    assert_eq!(actual.len(), expected.len());
    actual
        .iter()
        .zip(expected)
        .map(|(a, e)| (a - e).abs() / e.abs().max(1.0))
        .fold(0.0, f64::max)
}

/// The files every model directory written from the demo data holds.
pub const MODEL_FILES: [&str; 8] = [
    "manifest.ron",
    "users.csv",
    "items.csv",
    "ratings.csv",
    "items-meta.csv",
    "users.bin",
    "items.bin",
    "ratings.bin",
];

/// Asserts that two model directories hold byte-identical files.
pub fn assert_same_model_files(a: &Path, b: &Path) {
    for name in MODEL_FILES {
        // Files absent from both (binary twins of small tables) agree too.
        let (x, y) = (
            std::fs::read(a.join(name)).ok(),
            std::fs::read(b.join(name)).ok(),
        );
        assert!(
            x == y,
            "{name} differs between {} and {}",
            a.display(),
            b.display()
        );
    }
}

/// Runs the built `sextant` binary with `args`.
pub fn sextant(args: &[&str]) -> std::process::Output {
    std::process::Command::new(env!("CARGO_BIN_EXE_sextant"))
        .args(args)
        .output()
        .expect("the binary runs")
}

/// Every file directly in `dir`, by name, with its bytes (to prove nothing changed).
pub fn snapshot(dir: &Path) -> std::collections::BTreeMap<String, Vec<u8>> {
    std::fs::read_dir(dir)
        .expect("a directory")
        .map(|e| {
            let e = e.expect("an entry");
            (
                e.file_name().to_string_lossy().into_owned(),
                std::fs::read(e.path()).expect("readable"),
            )
        })
        .collect()
}

/// Copies the files directly in `from` into `to` (created).
pub fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).expect("created");
    for entry in std::fs::read_dir(from).expect("a directory") {
        let entry = entry.expect("an entry");
        std::fs::copy(entry.path(), to.join(entry.file_name())).expect("copied");
    }
}
