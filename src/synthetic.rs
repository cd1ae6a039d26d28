//! Seeded synthetic ratings for scale tests and measurements (not the demo: ids are plain
//! `u…`/`i…`). Members and items get planted 8-dimensional tastes; a rating is
//! `round(3 + 0.6·u·v + noise)` clipped to 1–5. Items are picked with popularity falling
//! like 1/(rank + 100); each member rates `per_user/2` to `3·per_user/2` distinct items.

use std::io::Write;

use crate::rng::Rng;

const PLANTED: usize = 8;

/// Writes a ratings CSV (`user,item,rating`) of `users` members and `items` items; returns
/// the number of ratings written.
pub fn write_ratings(
    out: impl Write,
    users: usize,
    items: usize,
    per_user: u64,
    seed: u64,
) -> std::io::Result<u64> {
    let mut file = std::io::BufWriter::with_capacity(1 << 20, out);
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
    Ok(written)
}
