//! Input fingerprints: FNV-1a 64-bit hashes of the bytes a model was built from, so a model
//! records exactly which file it came from without keeping a path that may move.
//!
//! FNV-1a: Fowler, Noll & Vo; parameters as published in the IETF draft
//! "The FNV Non-Cryptographic Hash Algorithm" (offset basis 0xcbf29ce484222325,
//! prime 0x100000001b3).

use std::io::Read;

const OFFSET_BASIS: u64 = 0xcbf2_9ce4_8422_2325;
const PRIME: u64 = 0x0000_0100_0000_01b3;

/// Running FNV-1a 64 hash.
#[derive(Debug, Clone, Copy)]
pub struct Fnv1a64(u64);

impl Default for Fnv1a64 {
    fn default() -> Self {
        Self(OFFSET_BASIS)
    }
}

impl Fnv1a64 {
    /// Adds bytes to the hash.
    pub fn update(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.0 = (self.0 ^ u64::from(b)).wrapping_mul(PRIME);
        }
    }

    /// The hash so far, as 16 lowercase hex digits.
    pub fn hex(&self) -> String {
        format!("{:016x}", self.0)
    }
}

/// A reader that hashes and counts every byte read through it.
#[derive(Debug)]
pub struct HashingReader<R> {
    inner: R,
    hash: Fnv1a64,
    bytes: u64,
}

impl<R: Read> HashingReader<R> {
    /// Wraps `inner`.
    pub fn new(inner: R) -> Self {
        Self {
            inner,
            hash: Fnv1a64::default(),
            bytes: 0,
        }
    }

    /// Bytes read so far and their hash.
    pub fn summary(&self) -> (u64, String) {
        (self.bytes, self.hash.hex())
    }
}

impl<R: Read> Read for HashingReader<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.hash.update(&buf[..n]);
        self.bytes += n as u64;
        Ok(n)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn published_test_vectors() {
        // Test vectors from the FNV reference code (test_fnv.c): FNV-1a 64 of "" is
        // cbf29ce484222325, of "a" is af63dc4c8601ec8c, of "foobar" is 85944171f73967e8
        // [memory].
        let hash = |s: &str| {
            let mut h = Fnv1a64::default();
            h.update(s.as_bytes());
            h.hex()
        };
        assert_eq!(hash(""), "cbf29ce484222325");
        assert_eq!(hash("a"), "af63dc4c8601ec8c");
        assert_eq!(hash("foobar"), "85944171f73967e8");
    }

    #[test]
    fn reader_hashes_what_passes() {
        let mut reader = HashingReader::new("foobar".as_bytes());
        let mut sink = Vec::new();
        reader.read_to_end(&mut sink).unwrap();
        assert_eq!(reader.summary(), (6, "85944171f73967e8".to_owned()));
    }
}
