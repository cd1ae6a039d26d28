//! Every size limit sextant enforces, in one place. Each is checked by every command that
//! reads or creates what it limits: a model a command can make, another command can open.

/// Largest rank (number of factors) of any model, fitted or imported. A rank-D fit solves
/// D × D systems for every member and item each iteration, so the cost grows with D³; 1,024
/// is far beyond the ranks rating data supports (tens, rarely a few hundred), and keeps a
/// factor-table line well under [`MAX_LINE_BYTES`].
pub const MAX_RANK: usize = 1024;

/// Longest id accepted, in bytes: longer ones are almost always a broken export (a whole
/// row or file in one field), and refusing them keeps messages and memory sane.
pub const MAX_ID_BYTES: usize = 1024;

/// Largest rating or factor magnitude accepted: beyond it sums of squares overflow.
pub const MAX_MAGNITUDE: f64 = 1e12;

/// Longest line read from any line-oriented input, in bytes (1 MiB). The widest legitimate
/// line is a factor-table row at [`MAX_RANK`] (1,024 numbers of up to 25 characters, about
/// 26 kB) or an id of [`MAX_ID_BYTES`].
pub const MAX_LINE_BYTES: usize = 1 << 20;

/// Largest manifest read (checked before reading it).
pub const MAX_MANIFEST_BYTES: u64 = 64 << 20;

/// Longest curator note or factor label accepted, in characters.
pub const MAX_NOTE_CHARS: usize = 4000;

/// Largest notes file read (checked before reading it).
pub const MAX_NOTES_BYTES: u64 = 64 << 20;

/// Checks a rank against [`MAX_RANK`]. The error is the predicate alone ("must be between
/// 1 and 1024, not 0") so each caller puts its own subject before it: `--rank`, every rank
/// of `--ranks`, a manifest's rank, a table's width.
pub fn check_rank(rank: usize) -> Result<(), String> {
    if (1..=MAX_RANK).contains(&rank) {
        Ok(())
    } else {
        Err(format!("must be between 1 and {MAX_RANK}, not {rank}"))
    }
}
