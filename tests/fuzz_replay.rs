//! Replays the fuzzers' corpus (fuzz/corpus/TARGET/, minimised after each fuzzing run) and
//! every crash they ever found (fuzz/regressions/TARGET/) through the same entry points the
//! fuzz targets use, so the guarantee holds in CI without a fuzzer: no reader panics, and
//! what a reader accepts is well formed.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use common::repo;

fn replay(target: &str, check: impl Fn(&[u8]) + std::panic::RefUnwindSafe) -> usize {
    let mut count = 0;
    for dir in ["fuzz/corpus", "fuzz/regressions"] {
        let path = repo(&format!("{dir}/{target}"));
        let Ok(entries) = std::fs::read_dir(&path) else {
            continue;
        };
        for entry in entries {
            let entry = entry.unwrap();
            let data = std::fs::read(entry.path()).unwrap();
            let outcome = std::panic::catch_unwind(|| check(&data));
            assert!(
                outcome.is_ok(),
                "{target}: {} makes the reader panic",
                entry.path().display()
            );
            count += 1;
        }
    }
    count
}

#[test]
fn the_ratings_corpus_replays_cleanly() {
    let n = replay("ratings", |d| {
        sextant::robustness::ratings(d, false);
        sextant::robustness::ratings(d, true);
    });
    assert!(n >= 20, "{n} inputs");
}

#[test]
fn the_factor_table_corpus_replays_cleanly() {
    assert!(replay("factor_table", sextant::robustness::factor_table) >= 10);
}

#[test]
fn the_manifest_corpus_replays_cleanly() {
    assert!(replay("manifest", sextant::robustness::manifest) >= 10);
}

#[test]
fn the_annotations_corpus_replays_cleanly() {
    assert!(replay("annotations", sextant::robustness::annotations) >= 8);
}
