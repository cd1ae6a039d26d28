//! Compact binary twins of a model's factor tables and ratings, for opening large models
//! fast.
//!
//! A model directory keeps its factor tables as CSV (the interchange format) and, beside
//! each, a binary copy that loads without parsing text. The binary copy is only a cache: it
//! is used when everything in it checks out — magic, version, byte order, rank and count as
//! the manifest says, its CSV twin unchanged since it was written (same size and checksum:
//! hashing text is many times faster than parsing it), and its own checksum — and otherwise
//! ignored in favour of the CSV.
//!
//! Layout, all integers and floats little-endian:
//!
//! | bytes | content |
//! |---|---|
//! | 8 | magic `sxtfctrs` |
//! | 4 | version, 1 |
//! | 4 | byte-order mark `0x0A0B0C0D` (reads `0x0D0C0B0A` in the wrong order) |
//! | 4 | rank D |
//! | 4 | flags: bit 0 set when an offsets block follows the values; other bits 0 |
//! | 8 | row count N |
//! | 8 | size in bytes of the CSV twin when this file was written |
//! | 8 | [`checksum`] of the CSV twin when this file was written |
//! | 8 | size in bytes of the id block |
//! | … | id block: per row, a 4-byte length and that many bytes of UTF-8 |
//! | 8·N·D | the values, row by row |
//! | 8·N | with flag bit 0: each row's offset (a model with biases) |
//! | 8 | checksum of every byte before it ([`checksum`]) |

use super::factors::FactorTable;
use super::ids::IdMap;
use super::ratings::{Rating, Ratings};

/// The file's first eight bytes.
pub const MAGIC: [u8; 8] = *b"sxtfctrs";
/// The layout version this build writes and reads.
pub const VERSION: u32 = 1;
const BYTE_ORDER: u32 = 0x0A0B_0C0D;
const HEADER: usize = 8 + 4 + 4 + 4 + 4 + 8 + 8 + 8 + 8;
/// Flag bit: an offsets block follows the values.
const FLAG_BIAS: u32 = 1;

/// Our own 64-bit checksum: FNV-1a's offset and prime applied to 8-byte little-endian
/// words (the last zero-padded), then mixed with the length. Word-wise, so checking a
/// quarter of a gigabyte takes a few hundredths of a second.
pub fn checksum(bytes: &[u8]) -> u64 {
    let mut c = Checksum::default();
    c.update(bytes);
    c.finish()
}

/// [`checksum`] computed piece by piece (for streaming a large file).
#[derive(Debug, Clone)]
pub struct Checksum {
    h: u64,
    pending: [u8; 8],
    filled: usize,
    length: u64,
}

impl Default for Checksum {
    fn default() -> Self {
        Self {
            h: 0xcbf2_9ce4_8422_2325,
            pending: [0; 8],
            filled: 0,
            length: 0,
        }
    }
}

const PRIME: u64 = 0x0000_0100_0000_01b3;

impl Checksum {
    /// Adds bytes.
    pub fn update(&mut self, mut bytes: &[u8]) {
        self.length += bytes.len() as u64;
        if self.filled > 0 {
            let take = (8 - self.filled).min(bytes.len());
            self.pending[self.filled..self.filled + take].copy_from_slice(&bytes[..take]);
            self.filled += take;
            bytes = &bytes[take..];
            if self.filled < 8 {
                return;
            }
            self.h = (self.h ^ u64::from_le_bytes(self.pending)).wrapping_mul(PRIME);
            self.filled = 0;
        }
        let mut words = bytes.chunks_exact(8);
        for w in &mut words {
            self.h =
                (self.h ^ u64::from_le_bytes(w.try_into().expect("8 bytes"))).wrapping_mul(PRIME);
        }
        let rest = words.remainder();
        self.pending[..rest.len()].copy_from_slice(rest);
        self.filled = rest.len();
    }

    /// The checksum of everything added.
    pub fn finish(&self) -> u64 {
        let mut h = self.h;
        if self.filled > 0 {
            let mut last = [0u8; 8];
            last[..self.filled].copy_from_slice(&self.pending[..self.filled]);
            h = (h ^ u64::from_le_bytes(last)).wrapping_mul(PRIME);
        }
        (h ^ self.length).wrapping_mul(PRIME)
    }
}

/// The size and [`checksum`] of a table's CSV twin.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Twin {
    /// Size in bytes.
    pub bytes: u64,
    /// Checksum of the content.
    pub checksum: u64,
}

/// The binary form of a table whose CSV twin is `twin`.
/// With `bias`, the rows' offsets follow the values.
pub fn encode(
    ids: &IdMap,
    rank: usize,
    values: &[f64],
    bias: Option<&[f64]>,
    twin: Twin,
) -> Vec<u8> {
    let id_block: usize = ids.names().iter().map(|n| 4 + n.len()).sum();
    let extra = bias.map_or(0, <[f64]>::len);
    let mut out = Vec::with_capacity(HEADER + id_block + (values.len() + extra) * 8 + 8);
    let flags = if bias.is_some() { FLAG_BIAS } else { 0 };
    write_header(&mut out, MAGIC, (rank, flags), ids.len(), twin, id_block);
    for name in ids.names() {
        out.extend_from_slice(&(name.len() as u32).to_le_bytes());
        out.extend_from_slice(name.as_bytes());
    }
    for v in values.iter().chain(bias.unwrap_or_default()) {
        out.extend_from_slice(&v.to_le_bytes());
    }
    let sum = checksum(&out);
    out.extend_from_slice(&sum.to_le_bytes());
    out
}

/// Why a binary table was not used (the CSV is read instead).
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("{0}")]
pub struct Unusable(pub &'static str);

fn write_header(
    out: &mut Vec<u8>,
    magic: [u8; 8],
    (rank, flags): (usize, u32),
    rows: usize,
    twin: Twin,
    id_block: usize,
) {
    out.extend_from_slice(&magic);
    out.extend_from_slice(&VERSION.to_le_bytes());
    out.extend_from_slice(&BYTE_ORDER.to_le_bytes());
    out.extend_from_slice(&(rank as u32).to_le_bytes());
    out.extend_from_slice(&flags.to_le_bytes());
    out.extend_from_slice(&(rows as u64).to_le_bytes());
    out.extend_from_slice(&twin.bytes.to_le_bytes());
    out.extend_from_slice(&twin.checksum.to_le_bytes());
    out.extend_from_slice(&(id_block as u64).to_le_bytes());
}

/// Magic, version, byte order, row count and the CSV twin's size.
fn check_header(
    bytes: &[u8],
    magic: [u8; 8],
    rows: usize,
    twin_bytes: u64,
) -> Result<(), Unusable> {
    if bytes.len() < HEADER + 8 || bytes[..8] != magic {
        return Err(Unusable("not a sextant binary file of this kind"));
    }
    if u32_at(bytes, 8) != VERSION {
        return Err(Unusable("unsupported version"));
    }
    if u32_at(bytes, 12) != BYTE_ORDER {
        return Err(Unusable("written in another byte order"));
    }
    if u64_at(bytes, 24) != rows as u64 {
        return Err(Unusable("row count differs from the manifest"));
    }
    if u64_at(bytes, 32) != twin_bytes {
        return Err(Unusable(
            "the CSV twin changed since the binary copy was written",
        ));
    }
    Ok(())
}

/// The file's own checksum, then (costlier) its CSV twin's; returns the checksummed body.
fn check_sums(
    bytes: &[u8],
    twin_checksum: impl FnOnce() -> Option<u64>,
) -> Result<&[u8], Unusable> {
    let (body, tail) = bytes.split_at(bytes.len() - 8);
    if checksum(body) != u64::from_le_bytes(tail.try_into().expect("8 bytes")) {
        return Err(Unusable("checksum mismatch"));
    }
    if twin_checksum() != Some(u64_at(bytes, 40)) {
        return Err(Unusable(
            "the CSV twin changed since the binary copy was written",
        ));
    }
    Ok(body)
}

fn u32_at(bytes: &[u8], at: usize) -> u32 {
    u32::from_le_bytes(bytes[at..at + 4].try_into().expect("4 bytes"))
}

fn u64_at(bytes: &[u8], at: usize) -> u64 {
    u64::from_le_bytes(bytes[at..at + 8].try_into().expect("8 bytes"))
}

/// Decodes a binary table, checking it against the expected rank, row count and presence
/// of offsets (`biased`) and the current size of its CSV twin; `twin_checksum` computes the
/// twin's checksum, and is only called when everything cheaper has checked out.
pub fn decode(
    bytes: &[u8],
    (rank, biased): (usize, bool),
    rows: usize,
    twin_bytes: u64,
    twin_checksum: impl FnOnce() -> Option<u64>,
) -> Result<FactorTable, Unusable> {
    check_header(bytes, MAGIC, rows, twin_bytes)?;
    if u32_at(bytes, 16) as usize != rank {
        return Err(Unusable("rank differs from the manifest"));
    }
    if u32_at(bytes, 20) != if biased { FLAG_BIAS } else { 0 } {
        return Err(Unusable("offsets differ from the manifest"));
    }
    let id_block =
        usize::try_from(u64_at(bytes, 48)).map_err(|_| Unusable("id block too large"))?;
    let values_len = rows
        .checked_mul(rank + usize::from(biased))
        .and_then(|n| n.checked_mul(8))
        .ok_or(Unusable("too large"))?;
    let expected_len = HEADER
        .checked_add(id_block)
        .and_then(|n| n.checked_add(values_len))
        .and_then(|n| n.checked_add(8));
    if expected_len != Some(bytes.len()) {
        return Err(Unusable("the file's length does not match its header"));
    }
    let body = check_sums(bytes, twin_checksum)?;
    let mut ids = IdMap::new();
    let mut at = HEADER;
    let end = HEADER + id_block;
    for _ in 0..rows {
        if at + 4 > end {
            return Err(Unusable("id block ends early"));
        }
        let len = u32_at(bytes, at) as usize;
        at += 4;
        if len == 0 || at + len > end {
            return Err(Unusable("bad id length"));
        }
        let name =
            std::str::from_utf8(&bytes[at..at + len]).map_err(|_| Unusable("id is not UTF-8"))?;
        if ids.push_new(name).is_none() {
            return Err(Unusable("duplicate id"));
        }
        at += len;
    }
    if at != end {
        return Err(Unusable("id block has trailing bytes"));
    }
    let mut values: Vec<f64> = body[end..]
        .chunks_exact(8)
        .map(|c| f64::from_le_bytes(c.try_into().expect("8 bytes")))
        .collect();
    if values.iter().any(|v| !v.is_finite()) {
        return Err(Unusable("non-finite value"));
    }
    let bias = biased.then(|| values.split_off(rows * rank));
    Ok(FactorTable {
        ids,
        rank,
        values,
        bias,
    })
}

/// Magic of a binary ratings file.
pub const RATINGS_MAGIC: [u8; 8] = *b"sxtrtngs";

/// The binary twin of a model's `ratings.csv`: the same header as a factor file (with
/// `rank` 0), then four arrays of N entries — user index (u32), item index (u32), rating
/// (f64), split (u8: 0 train, 1 held out) — then the checksum.
pub fn encode_ratings(ratings: &Ratings, twin: Twin) -> Vec<u8> {
    let n = ratings.entries.len();
    let mut out = Vec::with_capacity(HEADER + n * 17 + 8);
    write_header(&mut out, RATINGS_MAGIC, (0, 0), n, twin, 0);
    out.extend(ratings.entries.iter().flat_map(|r| r.user.to_le_bytes()));
    out.extend(ratings.entries.iter().flat_map(|r| r.item.to_le_bytes()));
    out.extend(ratings.entries.iter().flat_map(|r| r.value.to_le_bytes()));
    out.extend(ratings.entries.iter().map(|r| u8::from(r.holdout)));
    let sum = checksum(&out);
    out.extend_from_slice(&sum.to_le_bytes());
    out
}

/// Decodes a binary ratings file for a model with `users` users, `items` items and `rows`
/// ratings (interning into the given id maps), with the same checks as [`decode`], plus:
/// indices in range, finite ratings, entries strictly sorted by (user, item).
pub fn decode_ratings(
    bytes: &[u8],
    users: IdMap,
    items: IdMap,
    rows: usize,
    twin_bytes: u64,
    twin_checksum: impl FnOnce() -> Option<u64>,
) -> Result<Ratings, Unusable> {
    check_header(bytes, RATINGS_MAGIC, rows, twin_bytes)?;
    if rows.checked_mul(17).and_then(|n| n.checked_add(HEADER + 8)) != Some(bytes.len()) {
        return Err(Unusable("the file's length does not match its header"));
    }
    let body = check_sums(bytes, twin_checksum)?;
    let (user_part, rest) = body[HEADER..].split_at(rows * 4);
    let (item_part, rest) = rest.split_at(rows * 4);
    let (value_part, split_part) = rest.split_at(rows * 8);
    let word = |b: &[u8]| u32::from_le_bytes(b.try_into().expect("4 bytes"));
    let mut entries = Vec::with_capacity(rows);
    for k in 0..rows {
        let user = word(&user_part[k * 4..k * 4 + 4]);
        let item = word(&item_part[k * 4..k * 4 + 4]);
        let value = f64::from_le_bytes(value_part[k * 8..k * 8 + 8].try_into().expect("8 bytes"));
        let holdout = match split_part[k] {
            0 => false,
            1 => true,
            _ => return Err(Unusable("bad split flag")),
        };
        if user as usize >= users.len() || item as usize >= items.len() || !value.is_finite() {
            return Err(Unusable("index out of range or non-finite rating"));
        }
        let entry = Rating {
            user,
            item,
            value,
            holdout,
        };
        if entries
            .last()
            .is_some_and(|p: &Rating| (p.user, p.item) >= (user, item))
        {
            return Err(Unusable("ratings not strictly sorted"));
        }
        entries.push(entry);
    }
    Ok(Ratings {
        users,
        items,
        entries,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table() -> FactorTable {
        let mut ids = IdMap::new();
        ids.intern("a");
        ids.intern("béta, with comma");
        FactorTable {
            ids,
            rank: 3,
            values: vec![0.1, -2.0, 1e-300, 3.5, 0.0, -0.0],
            bias: None,
        }
    }

    #[test]
    fn round_trips_and_refuses_anything_off() {
        let t = table();
        let twin = Twin {
            bytes: 77,
            checksum: 5,
        };
        let bytes = encode(&t.ids, 3, &t.values, None, twin);
        let back = decode(&bytes, (3, false), 2, 77, || Some(5)).unwrap();
        assert_eq!(back.ids, t.ids);
        assert_eq!(
            back.values.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
            t.values.iter().map(|v| v.to_bits()).collect::<Vec<_>>()
        );
        assert_eq!(
            decode(&bytes, (4, false), 2, 77, || Some(5)).unwrap_err(),
            Unusable("rank differs from the manifest")
        );
        let changed = Unusable("the CSV twin changed since the binary copy was written");
        assert_eq!(
            decode(&bytes, (3, false), 2, 78, || Some(5)).unwrap_err(),
            changed
        );
        assert_eq!(
            decode(&bytes, (3, false), 2, 77, || Some(6)).unwrap_err(),
            changed
        );
        let mut flipped = bytes.clone();
        let middle = flipped.len() - 20;
        flipped[middle] ^= 1;
        assert_eq!(
            decode(&flipped, (3, false), 2, 77, || Some(5)).unwrap_err(),
            Unusable("checksum mismatch")
        );
        assert!(decode(&bytes[..bytes.len() - 1], (3, false), 2, 77, || Some(5)).is_err());
        let junk = [b'x'; 80];
        assert_eq!(
            decode(&junk, (3, false), 2, 77, || Some(5)).unwrap_err(),
            Unusable("not a sextant binary file of this kind")
        );
        // Offsets ride after the values, and must be expected.
        let bias = [0.25, -1.0];
        let biased = encode(&t.ids, 3, &t.values, Some(&bias), twin);
        let back = decode(&biased, (3, true), 2, 77, || Some(5)).unwrap();
        assert_eq!(
            (back.values, back.bias),
            (t.values.clone(), Some(bias.to_vec()))
        );
        let differ = Unusable("offsets differ from the manifest");
        assert_eq!(
            decode(&biased, (3, false), 2, 77, || Some(5)).unwrap_err(),
            differ
        );
        assert_eq!(
            decode(&bytes, (3, true), 2, 77, || Some(5)).unwrap_err(),
            differ
        );
    }

    #[test]
    fn checksum_depends_on_every_byte_and_the_length() {
        assert_ne!(checksum(b"abcdefgh"), checksum(b"abcdefgi"));
        assert_ne!(checksum(b"abc"), checksum(b"abc\\0"));
        assert_eq!(checksum(b"same"), checksum(b"same"));
        // Streaming in odd pieces gives the same sum.
        let text: Vec<u8> = (0..1000u32).map(|i| (i * 7 % 251) as u8).collect();
        let mut streamed = Checksum::default();
        for piece in text.chunks(13) {
            streamed.update(piece);
        }
        assert_eq!(streamed.finish(), checksum(&text));
    }
}
