//! The held-out split: a seeded, per-user draw that keeps at least one training rating for
//! every user.

use super::ratings::Ratings;
use crate::rng::Rng;

/// The share of each user's ratings held out when no other is asked for.
pub const DEFAULT_HOLDOUT: f64 = 0.1;

/// Salt mixed into the seed so the split stream differs from the initialisation stream.
const SPLIT_SALT: u64 = 0x5EED_5EED_0000_0001;

/// Marks a fraction of each user's ratings as held out (`0 ≤ fraction < 1`).
///
/// Each rating is held out with probability `fraction`, drawn from a stream of its own per
/// user (so the result does not depend on how users are ordered in memory or on threads).
/// A user whose every rating was drawn keeps one of them, picked at random, for training.
/// Entries must be sorted by user, as [`Ratings`] guarantees.
pub fn assign_holdout(ratings: &mut Ratings, fraction: f64, seed: u64) {
    let entries = &mut ratings.entries;
    let mut start = 0;
    while start < entries.len() {
        let user = entries[start].user;
        let end = start
            + entries[start..]
                .iter()
                .take_while(|r| r.user == user)
                .count();
        let block = &mut entries[start..end];
        let mut rng = Rng::stream(seed ^ SPLIT_SALT, u64::from(user));
        for r in block.iter_mut() {
            r.holdout = fraction > 0.0 && rng.uniform() < fraction;
        }
        if block.iter().all(|r| r.holdout) {
            let keep = rng.below(block.len() as u64) as usize;
            block[keep].holdout = false;
        }
        start = end;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::ratings::Rating;

    fn ratings(per_user: &[usize]) -> Ratings {
        let mut r = Ratings::default();
        for (u, &n) in per_user.iter().enumerate() {
            let user = r.users.intern(&format!("u{u}"));
            for j in 0..n {
                let item = r.items.intern(&format!("i{j}"));
                r.entries.push(Rating {
                    user,
                    item,
                    value: 1.0,
                    holdout: false,
                });
            }
        }
        r
    }

    #[test]
    fn every_user_keeps_a_training_rating() {
        let mut r = ratings(&[1, 2, 3, 50, 1]);
        assign_holdout(&mut r, 0.9, 4);
        for u in 0..5 {
            assert!(
                r.entries.iter().any(|e| e.user == u && !e.holdout),
                "user {u}"
            );
        }
    }

    #[test]
    fn fraction_is_respected_on_average_and_zero_means_none() {
        let mut r = ratings(&[200; 50]);
        assign_holdout(&mut r, 0.1, 1);
        let share = r.holdout_count() as f64 / r.entries.len() as f64;
        assert!((share - 0.1).abs() < 0.01, "share {share}");
        assign_holdout(&mut r, 0.0, 1);
        assert_eq!(r.holdout_count(), 0);
    }
}
