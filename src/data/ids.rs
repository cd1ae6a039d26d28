//! External ids and the dense indices used internally.
//!
//! Users and items arrive as strings; every computation works on dense indices `0..n` in
//! first-seen order. [`IdMap`] interns the strings once and answers both directions.

use std::collections::HashMap;
use std::hash::{BuildHasherDefault, Hasher};

/// A word-at-a-time multiplicative hash of the id's bytes (eight bytes per step, then a
/// final avalanche): ids are short, so this is many times faster than the standard
/// library's default hasher, which matters when every rating looks its ids up. (Ids come
/// from the user's own files: hash flooding is not a threat worth SipHash's cost here.)
#[derive(Debug, Clone, Copy, Default)]
pub struct IdHasher(u64);

const MULTIPLIER: u64 = 0x9E37_79B9_7F4A_7C15;

impl Hasher for IdHasher {
    fn finish(&self) -> u64 {
        // Avalanche (the finaliser of SplitMix64): hashbrown takes bucket bits from the
        // bottom and tag bits from the top, so every input bit must reach both.
        let mut h = self.0;
        h = (h ^ (h >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        h = (h ^ (h >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        h ^ (h >> 31)
    }

    fn write(&mut self, bytes: &[u8]) {
        let mut h = self.0;
        let mut words = bytes.chunks_exact(8);
        for word in &mut words {
            let w = u64::from_le_bytes(word.try_into().expect("eight bytes"));
            h = (h.rotate_left(23) ^ w).wrapping_mul(MULTIPLIER);
        }
        let rest = words.remainder();
        if !rest.is_empty() {
            let mut last = [0u8; 8];
            last[..rest.len()].copy_from_slice(rest);
            h = (h.rotate_left(23) ^ u64::from_le_bytes(last) ^ ((rest.len() as u64) << 56))
                .wrapping_mul(MULTIPLIER);
        }
        self.0 = h;
    }
}

/// Dense index of a user (`0..users`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct UserIndex(pub u32);

/// Dense index of an item (`0..items`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct ItemIndex(pub u32);

/// Ids up to this many bytes are kept inside the hash table's keys.
const INLINE: usize = 39;

/// An id as a hash-map key: up to [`INLINE`] bytes stored in the key itself (its length in
/// the last byte), so comparing keys during a lookup never chases a pointer to a heap
/// string elsewhere in memory; longer ids live on the heap.
#[derive(Debug, Clone, PartialEq, Eq)]
enum Key {
    Inline([u8; INLINE + 1]),
    Heap(Box<[u8]>),
}

impl Key {
    fn new(id: &str) -> Self {
        let bytes = id.as_bytes();
        if bytes.len() <= INLINE {
            let mut inline = [0u8; INLINE + 1];
            inline[..bytes.len()].copy_from_slice(bytes);
            inline[INLINE] = bytes.len() as u8;
            Self::Inline(inline)
        } else {
            Self::Heap(bytes.into())
        }
    }
}

impl std::hash::Hash for Key {
    fn hash<H: Hasher>(&self, state: &mut H) {
        match self {
            Self::Inline(b) => state.write(&b[..b[INLINE] as usize]),
            Self::Heap(b) => state.write(b),
        }
    }
}

/// Interned ids: external string id ↔ dense index, in first-seen order.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct IdMap {
    names: Vec<String>,
    index: HashMap<Key, u32, BuildHasherDefault<IdHasher>>,
}

impl IdMap {
    /// An empty map.
    pub fn new() -> Self {
        Self::default()
    }

    /// The dense index of `id`, adding it at the end if new.
    pub fn intern(&mut self, id: &str) -> u32 {
        let next = self.names.len();
        match self.index.entry(Key::new(id)) {
            std::collections::hash_map::Entry::Occupied(e) => *e.get(),
            std::collections::hash_map::Entry::Vacant(e) => {
                let i = u32::try_from(next).expect("fewer than 2^32 distinct ids");
                e.insert(i);
                self.names.push(id.to_owned());
                i
            }
        }
    }

    /// Adds `id` at the end; returns `None` (and changes nothing) if it is already present.
    pub fn push_new(&mut self, id: &str) -> Option<u32> {
        if self.index.contains_key(&Key::new(id)) {
            return None;
        }
        Some(self.intern(id))
    }

    /// The dense index of `id`, if known.
    pub fn get(&self, id: &str) -> Option<u32> {
        self.index.get(&Key::new(id)).copied()
    }

    /// The external id at dense index `i`.
    pub fn name(&self, i: u32) -> &str {
        &self.names[i as usize]
    }

    /// All external ids in index order.
    pub fn names(&self) -> &[String] {
        &self.names
    }

    /// Number of ids.
    pub fn len(&self) -> usize {
        self.names.len()
    }

    /// True when there are no ids.
    pub fn is_empty(&self) -> bool {
        self.names.is_empty()
    }
}

impl IdMap {
    /// Up to `n` existing ids closest to `query` by edit distance (case-insensitive), closest
    /// first, for "did you mean" messages.
    pub fn closest(&self, query: &str, n: usize) -> Vec<&str> {
        let query: Vec<char> = query.to_lowercase().chars().collect();
        let mut scored: Vec<(usize, &str)> = self
            .names
            .iter()
            .map(|name| {
                (
                    edit_distance(&query, &name.to_lowercase().chars().collect::<Vec<_>>()),
                    name.as_str(),
                )
            })
            .collect();
        scored.sort_by(|a, b| a.0.cmp(&b.0).then(a.1.cmp(b.1)));
        scored.into_iter().take(n).map(|(_, name)| name).collect()
    }
}

/// Levenshtein distance (insertions, deletions, substitutions of one character each).
pub fn edit_distance(a: &[char], b: &[char]) -> usize {
    let mut previous: Vec<usize> = (0..=b.len()).collect();
    let mut current = vec![0; b.len() + 1];
    for (i, ca) in a.iter().enumerate() {
        current[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let substitution = previous[j] + usize::from(ca != cb);
            current[j + 1] = substitution.min(previous[j + 1] + 1).min(current[j] + 1);
        }
        std::mem::swap(&mut previous, &mut current);
    }
    previous[b.len()]
}

/// Formats up to `limit` ids as `" (first: 'a', 'b', …)"`, or an empty string.
pub fn first_few<'a>(ids: impl IntoIterator<Item = &'a str>, limit: usize) -> String {
    let mut shown = Vec::new();
    let mut more = false;
    for id in ids {
        if shown.len() == limit {
            more = true;
            break;
        }
        shown.push(format!("'{id}'"));
    }
    if shown.is_empty() {
        return String::new();
    }
    let ellipsis = if more { ", …" } else { "" };
    format!(" (first: {}{ellipsis})", shown.join(", "))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn interning_keeps_first_seen_order() {
        let mut ids = IdMap::new();
        assert_eq!(ids.intern("b"), 0);
        assert_eq!(ids.intern("a"), 1);
        assert_eq!(ids.intern("b"), 0);
        assert_eq!(ids.names(), ["b", "a"]);
        assert_eq!(ids.get("a"), Some(1));
        assert_eq!(ids.push_new("a"), None);
    }

    #[test]
    fn edit_distance_of_classic_pairs() {
        // Common practice: "kitten" → "sitting" needs 3 edits; "flaw" → "lawn" needs 2.
        let chars = |s: &str| s.chars().collect::<Vec<_>>();
        assert_eq!(edit_distance(&chars("kitten"), &chars("sitting")), 3);
        assert_eq!(edit_distance(&chars("flaw"), &chars("lawn")), 2);
        assert_eq!(edit_distance(&chars(""), &chars("abc")), 3);
        let mut ids = IdMap::new();
        for id in ["r001", "r010", "r100", "m0001"] {
            ids.intern(id);
        }
        assert_eq!(ids.closest("R01", 2), ["r001", "r010"]);
    }

    #[test]
    fn first_few_lists_and_elides() {
        assert_eq!(first_few(["x", "y", "z"], 2), " (first: 'x', 'y', …)");
        assert_eq!(first_few(["x"], 2), " (first: 'x')");
        assert_eq!(first_few(std::iter::empty(), 2), "");
    }
}
