//! A seeded generator of large synthetic ratings files, for scale tests and the scaling
//! measurements in docs/scaling.md (not demo data: ids are plain `u…`/`i…`).
//!
//! ```sh
//! cargo run --release --example make_ratings -- USERS ITEMS PER_USER SEED OUT.csv
//! cargo run --release --example make_ratings -- 200000 40000 100 7 /tmp/r20m.csv   # 20M ratings
//! ```
//!
//! Members and items get planted 8-dimensional tastes; a rating is
//! `round(3 + 0.6·u·v + noise)` clipped to 1–5. Items are picked with popularity falling
//! like 1/(rank + 100), each member rates PER_USER/2 to 3·PER_USER/2 distinct items.

use std::io::{BufWriter, Write};

use sextant::rng::Rng;

const PLANTED: usize = 8;

fn main() -> std::io::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let number = |k: usize, default: u64| {
        args.get(k)
            .map_or(default, |a| a.parse().expect("a whole number"))
    };
    let users = number(0, 10_000) as usize;
    let items = number(1, 2_000) as usize;
    let per_user = number(2, 50);
    let seed = number(3, 7);
    let out = args.get(4).cloned().unwrap_or_else(|| "ratings.csv".into());
    let mut rng = Rng::new(seed);
    let mut vectors = |n: usize| -> Vec<f64> {
        (0..n * PLANTED)
            .map(|_| rng.normal() / (PLANTED as f64).sqrt() * 1.5)
            .collect()
    };
    let user_vectors = vectors(users);
    let item_vectors = vectors(items);
    let weights: Vec<f64> = (0..items).map(|j| 1.0 / (j as f64 + 100.0)).collect();
    let total: f64 = weights.iter().sum();
    let mut cumulative = Vec::with_capacity(items);
    let mut running = 0.0;
    for w in &weights {
        running += w / total;
        cumulative.push(running);
    }
    let mut file = BufWriter::with_capacity(1 << 20, std::fs::File::create(&out)?);
    file.write_all(b"user,item,rating\n")?;
    let mut chosen = std::collections::HashSet::new();
    let mut written = 0u64;
    let mut rng = Rng::new(seed ^ 0x9E37_79B9_7F4A_7C15);
    for u in 0..users {
        let count = (per_user / 2 + rng.below(per_user + 1)) as usize;
        chosen.clear();
        while chosen.len() < count.min(items) {
            let x = rng.uniform();
            let j = cumulative.partition_point(|&c| c < x).min(items - 1);
            if chosen.insert(j) {
                let dot: f64 = (0..PLANTED)
                    .map(|d| user_vectors[u * PLANTED + d] * item_vectors[j * PLANTED + d])
                    .sum();
                let value = (3.0 + 0.6 * dot + 0.5 * rng.normal())
                    .round()
                    .clamp(1.0, 5.0);
                writeln!(file, "u{u},i{j},{value}")?;
                written += 1;
            }
        }
    }
    file.flush()?;
    eprintln!("wrote {written} ratings to {out}");
    Ok(())
}
