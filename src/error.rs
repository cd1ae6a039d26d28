//! Error types of the core library.
//!
//! [`DataError`] covers everything read from disk (ratings, metadata, factor tables, model
//! directories) and always names the file, and the line where there is one. [`FitError`]
//! covers problems found while fitting. Both say what is wrong and how to fix it.

use std::fmt;
use std::path::Path;

/// Where a problem was found: a file and, when known, a line (1-based).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Location {
    /// The file as the user named it (or a model-relative name).
    pub file: String,
    /// The 1-based line, when the problem belongs to one.
    pub line: Option<u64>,
}

impl Location {
    /// A location covering a whole file.
    pub fn file(path: &Path) -> Self {
        Self {
            file: path.display().to_string(),
            line: None,
        }
    }

    /// A location on one line of a file.
    pub fn line(path: &Path, line: u64) -> Self {
        Self {
            file: path.display().to_string(),
            line: Some(line),
        }
    }
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.line {
            Some(line) => write!(f, "{}, line {line}", self.file),
            None => write!(f, "{}", self.file),
        }
    }
}

/// A problem with an input file or a model directory.
#[derive(Debug, thiserror::Error)]
pub enum DataError {
    /// The file could not be read (missing, unreadable, not a file).
    #[error("{location}: cannot read: {}", crate::files::describe_read(.source))]
    Read {
        /// The file.
        location: Location,
        /// The operating system's reason.
        source: std::io::Error,
    },
    /// The file was read but its content is not acceptable.
    #[error("{location}: {reason}")]
    Invalid {
        /// The file and line.
        location: Location,
        /// What is wrong, in words a user understands.
        reason: String,
    },
}

impl DataError {
    /// An invalid-content error on a given line of `path`.
    pub fn at_line(path: &Path, line: u64, reason: impl Into<String>) -> Self {
        Self::Invalid {
            location: Location::line(path, line),
            reason: reason.into(),
        }
    }

    /// An invalid-content error about a whole file.
    pub fn in_file(path: &Path, reason: impl Into<String>) -> Self {
        Self::Invalid {
            location: Location::file(path),
            reason: reason.into(),
        }
    }

    /// A read error for `path`.
    pub fn read(path: &Path, source: std::io::Error) -> Self {
        Self::Read {
            location: Location::file(path),
            source,
        }
    }

    /// The file and line the error is about.
    pub fn location(&self) -> &Location {
        match self {
            Self::Read { location, .. } | Self::Invalid { location, .. } => location,
        }
    }
}

/// A problem found while fitting.
#[derive(Debug, thiserror::Error)]
pub enum FitError {
    /// An option value that cannot work (rank 0, negative λ, …).
    #[error("invalid option: {0}")]
    Option(String),
    /// λ = 0 with users or items that have fewer training ratings than the rank (one more
    /// with an unpenalised offset, λ_b = 0).
    #[error(
        "with lambda = 0 every user and item needs at least {needed} training ratings ({why}), \
         but {short_users} user(s){user_list} and {short_items} item(s){item_list} have fewer; \
         their least-squares problems have no unique solution. Use --lambda > 0 (for example 0.1) \
         or a smaller --rank{also}",
        needed = rank + usize::from(*free_offset),
        why = if *free_offset { "the rank, plus one for the offset" } else { "the rank" },
        also = if *free_offset { ", or give the offsets a prior with --lambda-bias > 0" } else { "" }
    )]
    Underdetermined {
        /// The rank D.
        rank: usize,
        /// Whether each solve also fits an unpenalised offset (biases with λ_b = 0).
        free_offset: bool,
        /// How many users fall short.
        short_users: usize,
        /// How many items fall short.
        short_items: usize,
        /// " (first: 'a', 'b')" or empty.
        user_list: String,
        /// " (first: 'x')" or empty.
        item_list: String,
    },
    /// A Cholesky factorization failed; with λ > 0 this points at non-finite input.
    #[error(
        "the {kind} '{id}' could not be solved: its normal equations are not positive definite{hint}"
    )]
    NotPositiveDefinite {
        /// "user" or "item".
        kind: &'static str,
        /// The external id.
        id: String,
        /// Extra advice.
        hint: &'static str,
    },
    /// The initial item table does not fit the ratings.
    #[error(transparent)]
    Init(#[from] DataError),
}
