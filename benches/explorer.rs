//! The explorer on a generated 1,000,000-item, rank-32 model: time to the first frame
//! (load, state, draw) and the time to answer a keystroke with a new frame, through the
//! binary's hidden `explore --measure-frames` hook (an off-screen 120×40 buffer).
//!
//! Run: `cargo bench --bench explorer` (add `-- --quick` for 100,000 items).

use std::process::Command;

use sextant::data::{IdMap, Rating, RatingScale, Ratings};
use sextant::model::{Center, FactorModel, Model, Provenance, save_model};
use sextant::rng::Rng;

fn main() {
    let quick = std::env::args().any(|a| a == "--quick");
    let (items, users, rank) = if quick {
        (100_000, 20_000, 32)
    } else {
        (1_000_000, 50_000, 32)
    };
    let mut rng = Rng::new(5);
    let mut ratings = Ratings {
        users: IdMap::new(),
        items: IdMap::new(),
        entries: Vec::new(),
    };
    for i in 0..users {
        ratings.users.intern(&format!("u{i}"));
    }
    for j in 0..items {
        ratings.items.intern(&format!("i{j}"));
    }
    for user in 0..users as u32 {
        let mut chosen: Vec<u32> = (0..40).map(|_| rng.below(items as u64) as u32).collect();
        chosen.sort_unstable();
        chosen.dedup();
        for item in chosen {
            ratings.entries.push(Rating {
                user,
                item,
                value: 1.0 + rng.below(5) as f64,
                holdout: false,
            });
        }
    }
    let decay = |d: usize| (-(d as f64) / 8.0).exp();
    let factors = FactorModel {
        rank,
        mu: 3.0,
        users: (0..users * rank)
            .map(|k| decay(k % rank) * rng.normal() * 0.3)
            .collect(),
        items: (0..items * rank)
            .map(|k| decay(k % rank) * rng.normal() * 0.3)
            .collect(),
    };
    let provenance = Provenance {
        scale: RatingScale::Levels(vec![1.0, 2.0, 3.0, 4.0, 5.0]),
        inputs: Vec::new(),
        meta: None,
    };
    let model = Model::from_import(ratings, factors, 1.0, 1.0, Center::Global, provenance)
        .expect("training ratings");
    let dir = std::env::var_os("SEXTANT_BENCH_KEEP").map_or_else(
        || std::env::temp_dir().join(format!("sextant-bench-explorer-{}", std::process::id())),
        std::path::PathBuf::from,
    );
    save_model(&dir, &model).expect("model written");
    let binary = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("target/release/sextant");
    let output = Command::new(&binary)
        .args([
            "explore",
            &dir.display().to_string(),
            "--measure-frames",
            "300",
        ])
        .output()
        .expect("run `cargo build --release` first: the benchmark drives target/release/sextant");
    if std::env::var_os("SEXTANT_BENCH_KEEP").is_none() {
        let _ = std::fs::remove_dir_all(&dir);
    }
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    println!(
        "{items} items, {users} members, rank {rank}: {}",
        String::from_utf8_lossy(&output.stdout).trim()
    );
}
