//! Entry points for the fuzz targets (`fuzz/`) and for the test that replays their corpus
//! (`tests/fuzz_replay.rs`): each feeds arbitrary bytes to one reader and checks what a
//! reader promises — it returns a value or a located error, never panics, and what it
//! returns is well formed.

use std::path::Path;

use crate::data::{RatingScale, RatingsOptions, read_factor_table, read_ratings};
use crate::model::notes::Annotations;
use crate::model::store::parse_manifest;

/// The ratings reader on `data`, with a scale (`1:5:1`) when `with_scale`.
pub fn ratings(data: &[u8], with_scale: bool) {
    let options = RatingsOptions {
        scale: with_scale.then(|| RatingScale::parse("1:5:1").expect("a valid scale")),
        ..RatingsOptions::default()
    };
    match read_ratings(data, Path::new("fuzz.csv"), &options) {
        Ok(r) => {
            assert!(!r.entries.is_empty());
            assert!(
                r.entries
                    .windows(2)
                    .all(|w| (w[0].user, w[0].item) < (w[1].user, w[1].item))
            );
            assert!(r.entries.iter().all(|e| e.value.is_finite()
                && (e.user as usize) < r.users.len()
                && (e.item as usize) < r.items.len()));
        }
        Err(e) => assert!(e.to_string().starts_with("fuzz.csv")),
    }
}

/// The factor-table reader on `data`.
pub fn factor_table(data: &[u8]) {
    match read_factor_table(data, Path::new("fuzz.csv")) {
        Ok(t) => {
            assert!(t.rank >= 1);
            assert_eq!(t.values.len(), t.ids.len() * t.rank);
            assert!(t.values.iter().all(|v| v.is_finite()));
        }
        Err(e) => assert!(e.to_string().starts_with("fuzz.csv")),
    }
}

/// The manifest parser on `data`.
pub fn manifest(data: &[u8]) {
    match parse_manifest(data, Path::new("manifest.ron")) {
        Ok(m) => {
            assert!((1..=crate::limits::MAX_RANK).contains(&m.rank));
            assert!(m.lambda >= 0.0 && m.sigma2 > 0.0 && m.mu.is_finite());
        }
        Err(e) => assert!(e.to_string().starts_with("manifest.ron")),
    }
}

/// The notes parser on `data`; what it accepts must survive writing and reading again.
pub fn annotations(data: &[u8]) {
    let path = Path::new("annotations.ron");
    match Annotations::parse(data, path) {
        Ok(a) => {
            let again = Annotations::parse(a.to_text().as_bytes(), path).expect("round trip");
            assert_eq!(again, a);
        }
        Err(e) => assert!(e.to_string().starts_with("annotations.ron")),
    }
}
