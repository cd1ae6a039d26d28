//! Reading untrusted text safely: a bound on the length of a line, and the names of text
//! encodings sextant does not read.
//!
//! Every line-oriented input (ratings, items metadata, factor tables, what-if profiles)
//! is read through [`Bounded`]. A line longer than [`MAX_LINE_BYTES`] is refused as soon as
//! the reader passes the limit, so an endless input without line breaks (a device, a pipe,
//! a binary file) costs at most a megabyte or two of memory and ends with a message naming
//! the line. The first bytes are checked for UTF-16 and UTF-32 (with or without a
//! byte-order mark), which are refused by name instead of as a mess of NUL bytes.

use std::io::{self, Read};

pub use crate::limits::MAX_LINE_BYTES;

/// A line longer than [`MAX_LINE_BYTES`] (carried inside an [`io::Error`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
#[error(
    "the line is longer than {limit} bytes, the most sextant reads in one line; \
     this does not look like a text table (is it the right file?)"
)]
pub struct LineTooLong {
    /// The 1-based line.
    pub line: u64,
    /// The limit in bytes.
    pub limit: usize,
}

/// A text encoding sextant does not read (carried inside an [`io::Error`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
#[error("the file is {0}; save it as UTF-8 and try again")]
pub struct WrongEncoding(pub &'static str);

/// The [`LineTooLong`] or [`WrongEncoding`] inside an I/O error, as a message, if any.
pub fn refusal(error: &io::Error) -> Option<(Option<u64>, String)> {
    let inner = error.get_ref()?;
    if let Some(long) = inner.downcast_ref::<LineTooLong>() {
        return Some((Some(long.line), long.to_string()));
    }
    inner
        .downcast_ref::<WrongEncoding>()
        .map(|e| (None, e.to_string()))
}

/// The encoding the first bytes of a file reveal, when it is one sextant refuses.
pub fn sniff(start: &[u8]) -> Option<&'static str> {
    match start {
        [0xFF, 0xFE, 0, 0, ..] => return Some("UTF-32 (little-endian, with a byte-order mark)"),
        [0, 0, 0xFE, 0xFF, ..] => return Some("UTF-32 (big-endian, with a byte-order mark)"),
        [0xFF, 0xFE, ..] => return Some("UTF-16 (little-endian, with a byte-order mark)"),
        [0xFE, 0xFF, ..] => return Some("UTF-16 (big-endian, with a byte-order mark)"),
        _ => {}
    }
    // Without a mark: text that is mostly ASCII shows its zero bytes in fixed places.
    let words = start.len() / 4;
    if words < 2 {
        return None;
    }
    let every = |offsets: &[usize], zero: bool| {
        (0..words).all(|w| offsets.iter().all(|&o| (start[4 * w + o] == 0) == zero))
    };
    if every(&[1, 2, 3], true) && every(&[0], false) {
        Some("UTF-32 (little-endian)")
    } else if every(&[0, 1, 2], true) && every(&[3], false) {
        Some("UTF-32 (big-endian)")
    } else if every(&[1, 3], true) && every(&[0, 2], false) {
        Some("UTF-16 (little-endian)")
    } else if every(&[0, 2], true) && every(&[1, 3], false) {
        Some("UTF-16 (big-endian)")
    } else {
        None
    }
}

/// A reader that fails with [`LineTooLong`] or [`WrongEncoding`] (see the module docs).
#[derive(Debug)]
pub struct Bounded<R> {
    inner: R,
    /// Bytes since the last line break.
    run: usize,
    /// Line breaks seen.
    breaks: u64,
    limit: usize,
    sniffed: bool,
}

impl<R: Read> Bounded<R> {
    /// Wraps `inner` with the default limit.
    pub fn new(inner: R) -> Self {
        Self::with_limit(inner, MAX_LINE_BYTES)
    }

    /// Wraps `inner` with a line limit of `limit` bytes.
    pub fn with_limit(inner: R, limit: usize) -> Self {
        Self {
            inner,
            run: 0,
            breaks: 0,
            limit,
            sniffed: false,
        }
    }
}

impl<R: Read> Read for Bounded<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        // Never hand out more than the limit at once, so one read cannot hide a long line.
        let cap = buf.len().min(self.limit.max(1));
        let n = self.inner.read(&mut buf[..cap])?;
        let got = &buf[..n];
        if !self.sniffed && n > 0 {
            self.sniffed = true;
            if let Some(name) = sniff(&got[..n.min(64)]) {
                return Err(io::Error::new(
                    io::ErrorKind::InvalidData,
                    WrongEncoding(name),
                ));
            }
        }
        let mut start = 0;
        for k in memchr::memchr_iter(b'\n', got) {
            if self.run + (k - start) > self.limit {
                return Err(self.too_long());
            }
            self.run = 0;
            self.breaks += 1;
            start = k + 1;
        }
        self.run += n - start;
        if self.run > self.limit {
            return Err(self.too_long());
        }
        Ok(n)
    }
}

impl<R> Bounded<R> {
    fn too_long(&self) -> io::Error {
        io::Error::new(
            io::ErrorKind::InvalidData,
            LineTooLong {
                line: self.breaks + 1,
                limit: self.limit,
            },
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn read_all(bytes: &[u8], limit: usize) -> io::Result<Vec<u8>> {
        let mut out = Vec::new();
        Bounded::with_limit(bytes, limit).read_to_end(&mut out)?;
        Ok(out)
    }

    #[test]
    fn lines_up_to_the_limit_pass_and_the_first_longer_one_is_named() {
        assert_eq!(read_all(b"abcd\nefgh\n", 4).unwrap(), b"abcd\nefgh\n");
        let err = read_all(b"ab\ncd\nefghi\n", 4).unwrap_err();
        let (line, text) = refusal(&err).unwrap();
        assert_eq!(line, Some(3));
        assert!(text.contains("the line is longer than 4 bytes"), "{text}");
        // No line break at all: the endless-device case.
        let err = read_all(&[0u8; 100], 10).unwrap_err();
        assert_eq!(refusal(&err).unwrap().0, Some(1));
    }

    #[test]
    fn an_endless_input_ends_with_bounded_memory() {
        // io::repeat never ends and has no line breaks.
        let mut out = Vec::new();
        let err = Bounded::new(io::repeat(b'x'))
            .read_to_end(&mut out)
            .unwrap_err();
        assert!(refusal(&err).is_some());
        assert!(out.len() <= 2 * MAX_LINE_BYTES, "{}", out.len());
    }

    #[test]
    fn utf16_and_utf32_are_named() {
        let utf16le: Vec<u8> = "user,item,rating\n"
            .encode_utf16()
            .flat_map(u16::to_le_bytes)
            .collect();
        let utf16be: Vec<u8> = "user,item,rating\n"
            .encode_utf16()
            .flat_map(u16::to_be_bytes)
            .collect();
        let utf32le: Vec<u8> = "user,item"
            .chars()
            .flat_map(|c| (c as u32).to_le_bytes())
            .collect();
        assert_eq!(sniff(&utf16le), Some("UTF-16 (little-endian)"));
        assert_eq!(sniff(&utf16be), Some("UTF-16 (big-endian)"));
        assert_eq!(sniff(&utf32le), Some("UTF-32 (little-endian)"));
        assert_eq!(
            sniff(&[0xFF, 0xFE, b'u', 0]),
            Some("UTF-16 (little-endian, with a byte-order mark)")
        );
        assert_eq!(sniff(b"user,item,rating\n"), None);
        assert_eq!(sniff(b"\xEF\xBB\xBFuser,item"), None);
        let err = read_all(&utf16le, 100).unwrap_err();
        assert!(refusal(&err).unwrap().1.contains("save it as UTF-8"));
    }
}
