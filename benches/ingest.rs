//! Ratings ingest: sextant's loader against a plain `csv` crate pass over the same file
//! (byte records, the rating parsed as f64, nothing kept): MB/s for both, same run. A third
//! pass runs the plain one through the line-length bound every sextant reader uses, so its
//! cost shows as a ratio of its own.
//!
//! ```sh
//! cargo bench --bench ingest                      # generates 20M ratings (~300 MB) in /tmp
//! cargo bench --bench ingest -- FILE.csv          # any ratings CSV
//! ```

use std::path::{Path, PathBuf};
use std::time::Instant;

use sextant::data::{RatingsOptions, load_ratings};

fn baseline(path: &Path, bounded: bool) -> (usize, f64) {
    let file = std::fs::File::open(path).expect("readable");
    let source: Box<dyn std::io::Read> = if bounded {
        // What every sextant reader adds in front of the CSV parser: the line bound.
        Box::new(sextant::files::bounded::Bounded::new(file))
    } else {
        Box::new(file)
    };
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .from_reader(source);
    let mut record = csv::ByteRecord::new();
    let (mut rows, mut sum) = (0usize, 0.0f64);
    while reader.read_byte_record(&mut record).expect("valid CSV") {
        let text = std::str::from_utf8(&record[2]).expect("UTF-8");
        sum += text.parse::<f64>().expect("a number");
        rows += 1;
    }
    (rows, sum)
}

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with("--"))
        .collect();
    let path = if let Some(p) = args.first() {
        PathBuf::from(p)
    } else {
        let path = std::env::temp_dir().join("sextant-ingest-20m.csv");
        if !path.exists() {
            eprintln!("generating {} …", path.display());
            let status = std::process::Command::new(env!("CARGO"))
                .args([
                    "run",
                    "--release",
                    "--example",
                    "make_ratings",
                    "--",
                    "200000",
                    "40000",
                    "100",
                    "7",
                ])
                .arg(&path)
                .status()
                .expect("cargo runs");
            assert!(status.success());
        }
        path
    };
    let megabytes = std::fs::metadata(&path).expect("exists").len() as f64 / 1e6;
    // Warm the page cache so both readers start alike.
    let _ = std::fs::read(&path);
    for round in 0..3 {
        let start = Instant::now();
        let (rows, sum) = baseline(&path, false);
        let base = start.elapsed().as_secs_f64();
        std::hint::black_box(sum);
        let start = Instant::now();
        let (bounded_rows, sum) = baseline(&path, true);
        let bounded = start.elapsed().as_secs_f64();
        std::hint::black_box(sum);
        assert_eq!(bounded_rows, rows);
        let start = Instant::now();
        let ratings = load_ratings(&path, &RatingsOptions::default()).expect("loads");
        let ours = start.elapsed().as_secs_f64();
        assert_eq!(ratings.entries.len(), rows);
        println!(
            "round {round}: {megabytes:.0} MB, {rows} ratings: csv crate (parse only) {base:.2} s = {:.0} MB/s; the same through the line bound {bounded:.2} s (ratio {:.3}); sextant loader (parse, intern, sort, check) {ours:.2} s = {:.0} MB/s; ratio {:.2}",
            megabytes / base,
            base / bounded,
            megabytes / ours,
            base / ours
        );
    }
}
