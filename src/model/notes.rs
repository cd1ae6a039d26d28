//! Curator notes kept with a model: factor labels, notes on items and neighbour pairs
//! flagged as wrong, in `annotations.ron`.
//!
//! Saving never loses a note. The file is replaced atomically (temporary file in the model
//! directory, fsync, rename, fsync of the directory) while holding an exclusive lock on the
//! directory, and the notes are merged three ways: what this session loaded (the base),
//! what it holds now (ours) and what is on disk at the moment of saving (theirs, e.g. from
//! another explorer). A note changed on one side only takes that side's version; a note
//! changed differently on both sides keeps both texts, joined by [`JOIN`], and the merge
//! reports it so the curator can tidy it up. A refit into the same directory carries the
//! file over (see [`super::dir::save_model`], which takes the same lock); notes about
//! items that no longer exist stay in the file and are reported by [`Annotations::orphans`].
//!
//! A note is kept as written or refused ([`check_note`]): line breaks and tabs are kept,
//! a note longer than [`MAX_NOTE_CHARS`] or holding another control character is refused
//! with the reason. Front ends escape control characters when they show a note.

use std::collections::{BTreeMap, BTreeSet};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::dir::{ANNOTATIONS, ModelDir};
use crate::data::IdMap;
use crate::error::DataError;

/// Tag of the notes file.
pub const NOTES_TAG: &str = "sextant-notes";
/// Version of the notes file this build writes and reads.
pub const NOTES_VERSION: u32 = 1;
pub use crate::limits::{MAX_NOTE_CHARS, MAX_NOTES_BYTES};
/// Separator placed between two versions of a note edited in two places at once.
pub const JOIN: &str = " ‖ ";

/// A neighbour pair, stored with the smaller id first.
pub type Pair = (String, String);

/// The notes of one model.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Annotations {
    /// Factor number (from 1) → label.
    pub factors: BTreeMap<usize, String>,
    /// Item id → note.
    pub items: BTreeMap<String, String>,
    /// Pairs flagged as wrong neighbours → note (may be empty).
    pub pairs: BTreeMap<Pair, String>,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct NotesFile {
    format: String,
    version: u32,
    #[serde(default)]
    factors: BTreeMap<usize, String>,
    #[serde(default)]
    items: BTreeMap<String, String>,
    #[serde(default)]
    pairs: Vec<PairNote>,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct PairNote {
    a: String,
    b: String,
    #[serde(default)]
    note: String,
}

/// The normalised key of a pair (smaller id first).
pub fn pair(a: &str, b: &str) -> Pair {
    if a <= b {
        (a.to_owned(), b.to_owned())
    } else {
        (b.to_owned(), a.to_owned())
    }
}

impl Annotations {
    /// True when there is nothing to keep.
    pub fn is_empty(&self) -> bool {
        self.factors.is_empty() && self.items.is_empty() && self.pairs.is_empty()
    }

    /// Total number of notes, labels and flags.
    pub fn len(&self) -> usize {
        self.factors.len() + self.items.len() + self.pairs.len()
    }

    /// Label of factor `factor` (from 1).
    pub fn factor_label(&self, factor: usize) -> Option<&str> {
        self.factors.get(&factor).map(String::as_str)
    }

    /// Note on item `id`.
    pub fn item_note(&self, id: &str) -> Option<&str> {
        self.items.get(id).map(String::as_str)
    }

    /// The note of a flagged pair (`Some("")` when flagged without a note).
    pub fn pair_note(&self, a: &str, b: &str) -> Option<&str> {
        self.pairs.get(&pair(a, b)).map(String::as_str)
    }

    /// Sets (or with empty text removes) a factor label; refuses text [`check_note`] refuses.
    pub fn set_factor_label(&mut self, factor: usize, text: &str) -> Result<(), NoteError> {
        set(&mut self.factors, factor, text)
    }

    /// Sets (or with empty text removes) an item note; refuses text [`check_note`] refuses.
    pub fn set_item_note(&mut self, id: &str, text: &str) -> Result<(), NoteError> {
        set(&mut self.items, id.to_owned(), text)
    }

    /// Flags a pair as wrong neighbours, with an optional note.
    pub fn flag_pair(&mut self, a: &str, b: &str, note: &str) -> Result<(), NoteError> {
        self.pairs.insert(pair(a, b), check_note(note)?);
        Ok(())
    }

    /// Removes a pair's flag.
    pub fn unflag_pair(&mut self, a: &str, b: &str) {
        self.pairs.remove(&pair(a, b));
    }

    /// Notes that refer to things the model does not have: items not in `items`, pairs
    /// with such an item, factors beyond `rank`.
    pub fn orphans(&self, items: &IdMap, rank: usize) -> Orphans {
        let known = |id: &str| items.get(id).is_some();
        Orphans {
            factors: self.factors.keys().copied().filter(|&f| f > rank).collect(),
            items: self.items.keys().filter(|id| !known(id)).cloned().collect(),
            pairs: self
                .pairs
                .keys()
                .filter(|(a, b)| !known(a) || !known(b))
                .cloned()
                .collect(),
        }
    }

    /// The notes as the text of an `annotations.ron` file.
    pub fn to_text(&self) -> String {
        let file = NotesFile {
            format: NOTES_TAG.into(),
            version: NOTES_VERSION,
            factors: self.factors.clone(),
            items: self.items.clone(),
            pairs: self
                .pairs
                .iter()
                .map(|((a, b), note)| PairNote {
                    a: a.clone(),
                    b: b.clone(),
                    note: note.clone(),
                })
                .collect(),
        };
        let config = ron::ser::PrettyConfig::new().struct_names(false);
        let mut text = ron::ser::to_string_pretty(&file, config).expect("notes always serialise");
        text.push('\n');
        text
    }

    /// Parses the text of an `annotations.ron` file; `path` is used in messages.
    pub fn parse(bytes: &[u8], path: &Path) -> Result<Self, DataError> {
        let text = std::str::from_utf8(bytes)
            .map_err(|_| DataError::in_file(path, "is not valid UTF-8 text"))?;
        let file: NotesFile = ron::from_str(text).map_err(|e| {
            DataError::at_line(
                path,
                e.span.start.line as u64,
                format!("not a valid notes file: {}", e.code),
            )
        })?;
        let bad = |reason: String| Err(DataError::in_file(path, reason));
        if file.format != NOTES_TAG {
            return bad(format!("format '{}' is not '{NOTES_TAG}'", file.format));
        }
        if file.version != NOTES_VERSION {
            return bad(format!(
                "notes version {} is not supported by this sextant, which reads version {NOTES_VERSION}",
                file.version
            ));
        }
        if file.factors.contains_key(&0) {
            return bad("factor numbers start at 1; found a label for factor 0".into());
        }
        let long = |s: &String| s.chars().count() > MAX_NOTE_CHARS;
        let texts = file.factors.values().chain(file.items.values());
        if let Some(Err(e)) = texts
            .chain(file.pairs.iter().map(|p| &p.note))
            .map(|t| check_note(t))
            .find(Result::is_err)
        {
            return bad(e.to_string());
        }
        if file.items.keys().any(long) {
            return bad(format!(
                "an item id is longer than {MAX_NOTE_CHARS} characters"
            ));
        }
        let mut pairs = BTreeMap::new();
        for p in file.pairs {
            if p.a == p.b {
                return bad(format!(
                    "pair ('{}', '{}') names the same item twice",
                    p.a, p.b
                ));
            }
            pairs.insert(pair(&p.a, &p.b), p.note);
        }
        Ok(Self {
            factors: file.factors,
            items: file.items,
            pairs,
        })
    }
}

/// A note that cannot be kept as written.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("{0}")]
pub struct NoteError(pub String);

/// The text of a note as it is kept: surrounding white space dropped, Windows line ends
/// made plain, everything else exactly as written. Refused: more than [`MAX_NOTE_CHARS`]
/// characters, or a control character other than a line break or a tab (an escape
/// sequence in a note could rewrite the terminal of whoever reads it).
pub fn check_note(text: &str) -> Result<String, NoteError> {
    let text = text.replace("\r\n", "\n");
    let text = text.trim();
    let chars = text.chars().count();
    if chars > MAX_NOTE_CHARS {
        return Err(NoteError(format!(
            "the note is {chars} characters long; at most {MAX_NOTE_CHARS} are kept, so shorten it"
        )));
    }
    if let Some(c) = text
        .chars()
        .find(|&c| c.is_control() && c != '\n' && c != '\t')
    {
        return Err(NoteError(format!(
            "the note holds the control character {}; notes keep line breaks and tabs but no \
             other control characters",
            crate::text::escape_char(c)
        )));
    }
    Ok(text.to_owned())
}

fn set<K: Ord>(map: &mut BTreeMap<K, String>, key: K, text: &str) -> Result<(), NoteError> {
    let text = check_note(text)?;
    if text.is_empty() {
        map.remove(&key);
    } else {
        map.insert(key, text);
    }
    Ok(())
}

/// Notes about things a model does not have.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Orphans {
    /// Factor labels beyond the rank.
    pub factors: Vec<usize>,
    /// Item ids with notes but not in the model.
    pub items: Vec<String>,
    /// Flagged pairs with an item not in the model.
    pub pairs: Vec<Pair>,
}

impl Orphans {
    /// True when every note refers to something the model has.
    pub fn is_empty(&self) -> bool {
        self.factors.is_empty() && self.items.is_empty() && self.pairs.is_empty()
    }

    /// One sentence for the user, e.g. "2 item notes and 1 flagged pair refer to items
    /// this model does not have (first: 'r999'); they stay in annotations.ron".
    pub fn describe(&self) -> String {
        let mut parts = Vec::new();
        let count =
            |n: usize, one: &str, many: &str| format!("{n} {}", if n == 1 { one } else { many });
        if !self.items.is_empty() {
            parts.push(count(self.items.len(), "item note", "item notes"));
        }
        if !self.pairs.is_empty() {
            parts.push(count(self.pairs.len(), "flagged pair", "flagged pairs"));
        }
        let mut text = String::new();
        if !parts.is_empty() {
            let first = self
                .items
                .first()
                .cloned()
                .or_else(|| self.pairs.first().map(|(a, b)| format!("{a}–{b}")))
                .unwrap_or_default();
            let verb = if self.items.len() + self.pairs.len() == 1 {
                "refers"
            } else {
                "refer"
            };
            text = format!(
                "{} {verb} to items this model does not have (first: '{first}')",
                parts.join(" and ")
            );
        }
        if !self.factors.is_empty() {
            if !text.is_empty() {
                text.push_str("; ");
            }
            let list: Vec<String> = self.factors.iter().map(ToString::to_string).collect();
            let _ = write!(
                text,
                "labels of factors {} are beyond this model's rank",
                list.join(", ")
            );
        }
        text.push_str("; they stay in annotations.ron");
        text
    }
}

/// What a three-way merge did.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Merge {
    /// Notes taken from the other writer.
    pub taken: usize,
    /// Notes edited on both sides and kept as both texts: a short description of each.
    pub joined: Vec<String>,
    /// The model in the directory was replaced (refitted) since these notes were opened:
    /// the notes went into the new model, and what is on screen is the old one.
    pub model_replaced: bool,
}

/// Three-way merge of one map.
fn merge_map<K: Ord + Clone>(
    base: &BTreeMap<K, String>,
    ours: &BTreeMap<K, String>,
    theirs: &BTreeMap<K, String>,
    describe: impl Fn(&K) -> String,
    report: &mut Merge,
) -> BTreeMap<K, String> {
    let keys: BTreeSet<&K> = base
        .keys()
        .chain(ours.keys())
        .chain(theirs.keys())
        .collect();
    let mut out = BTreeMap::new();
    for key in keys {
        let (b, o, t) = (base.get(key), ours.get(key), theirs.get(key));
        let chosen = if o == t || t == b {
            o.cloned()
        } else if o == b {
            report.taken += 1;
            t.cloned()
        } else {
            // Changed on both sides, differently. A removal loses to an edit; two edits are
            // both kept. Flags without notes (empty text) simply stay flagged.
            match (o, t) {
                (Some(o), Some(t)) if o.is_empty() || t.is_empty() => {
                    Some(if o.is_empty() { t.clone() } else { o.clone() })
                }
                (Some(o), Some(t)) => {
                    report.joined.push(describe(key));
                    Some(format!("{t}{JOIN}{o}"))
                }
                (Some(x), None) | (None, Some(x)) => Some(x.clone()),
                (None, None) => None,
            }
        };
        if let Some(text) = chosen {
            out.insert(key.clone(), text);
        }
    }
    out
}

/// Three-way merge of whole note sets.
pub fn merge(base: &Annotations, ours: &Annotations, theirs: &Annotations) -> (Annotations, Merge) {
    let mut report = Merge::default();
    let factors = merge_map(
        &base.factors,
        &ours.factors,
        &theirs.factors,
        |f| format!("label of factor {f}"),
        &mut report,
    );
    let items = merge_map(
        &base.items,
        &ours.items,
        &theirs.items,
        |id| format!("note on item {id}"),
        &mut report,
    );
    let pairs = merge_map(
        &base.pairs,
        &ours.pairs,
        &theirs.pairs,
        |(a, b)| format!("note on pair {a}–{b}"),
        &mut report,
    );
    (
        Annotations {
            factors,
            items,
            pairs,
        },
        report,
    )
}

/// Why notes could not be saved.
#[derive(Debug, thiserror::Error)]
pub enum NotesError {
    /// The file on disk could not be read or is not a notes file.
    #[error(transparent)]
    Data(#[from] DataError),
    /// Writing failed (read-only directory, disk full, …); the notes are still in memory.
    #[error("{path}: cannot save notes: {source}")]
    Io {
        /// The file or directory.
        path: String,
        /// The operating system's reason.
        source: std::io::Error,
    },
}

fn io_error(path: &Path) -> impl FnOnce(std::io::Error) -> NotesError + '_ {
    move |source| NotesError::Io {
        path: path.display().to_string(),
        source,
    }
}

/// Reads the notes of one generation of a model directory; empty when it has none.
pub fn read_notes_in(dir: &ModelDir) -> Result<Annotations, DataError> {
    match dir.read_file(ANNOTATIONS, MAX_NOTES_BYTES)? {
        Some(bytes) => Annotations::parse(&bytes, &dir.path().join(ANNOTATIONS)),
        None => Ok(Annotations::default()),
    }
}

/// Loads a model and its notes from one generation of the directory `dir` (the reading
/// lock is let go before returning, so the notes can be saved afterwards).
pub fn load_with_notes(dir: &Path) -> Result<(super::Model, Notes), DataError> {
    let generation = ModelDir::read(dir)?;
    Ok((generation.load()?, Notes::open_in(&generation)?))
}

/// Reads the notes of the model directory `dir`; empty when there is no notes file.
pub fn read_notes(dir: &Path) -> Result<Annotations, DataError> {
    read_notes_in(&ModelDir::read(dir)?)
}

/// The notes of an open model, as loaded and as edited since.
#[derive(Debug, Clone, Default)]
pub struct Notes {
    /// The model directory (None for the embedded demo, whose notes cannot be saved).
    dir: Option<PathBuf>,
    /// Which generation of the directory the notes were opened with.
    generation: Option<(u64, u64)>,
    base: Annotations,
    /// The notes as they are now.
    pub current: Annotations,
}

impl Notes {
    /// Loads the notes of model directory `dir`.
    pub fn open(dir: &Path) -> Result<Self, DataError> {
        Self::open_in(&ModelDir::read(dir)?)
    }

    /// Loads the notes of the generation `dir` (the one its model was loaded from).
    pub fn open_in(dir: &ModelDir) -> Result<Self, DataError> {
        let base = read_notes_in(dir)?;
        Ok(Self {
            dir: Some(dir.path().to_path_buf()),
            generation: dir.identity(),
            current: base.clone(),
            base,
        })
    }

    /// Notes that live in memory only (e.g. for a model that has no directory).
    pub fn in_memory() -> Self {
        Self::default()
    }

    /// The directory the notes are saved to.
    pub fn dir(&self) -> Option<&Path> {
        self.dir.as_deref()
    }

    /// True when there are edits not yet saved.
    pub fn unsaved(&self) -> bool {
        self.current != self.base
    }

    /// Saves to the model directory (see the module documentation for the merge). On
    /// success the merged notes become both the base and the current notes. On failure
    /// nothing in memory changes.
    pub fn save(&mut self) -> Result<Merge, NotesError> {
        let Some(dir) = self.dir.clone() else {
            return Err(NotesError::Io {
                path: "the bundled demo model".into(),
                source: std::io::Error::new(
                    std::io::ErrorKind::Unsupported,
                    "it has no directory; write the demo out and open that to keep notes",
                ),
            });
        };
        self.save_to(&dir)
    }

    /// Saves into another model directory (e.g. when the model's own is read-only), which
    /// then becomes this session's notes directory.
    pub fn save_to(&mut self, dir: &Path) -> Result<Merge, NotesError> {
        let locked = ModelDir::write(dir)?;
        // Under the lock no other save is writing, so any temporary file is a leftover.
        locked.remove_leftovers();
        let same_dir = self.dir.as_deref() == Some(dir);
        let theirs = read_notes_in(&locked)?;
        let base = if same_dir {
            &self.base
        } else {
            &Annotations::default()
        };
        let (merged, mut report) = merge(base, &self.current, &theirs);
        report.model_replaced =
            same_dir && self.generation.is_some() && locked.identity() != self.generation;
        if merged != theirs {
            locked
                .replace_file(ANNOTATIONS, merged.to_text().as_bytes())
                .map_err(io_error(dir))?;
        }
        self.generation = locked.identity();
        self.base = merged.clone();
        self.current = merged;
        self.dir = Some(dir.to_path_buf());
        Ok(report)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn notes(f: &[(usize, &str)], i: &[(&str, &str)], p: &[(&str, &str, &str)]) -> Annotations {
        let mut a = Annotations::default();
        for (k, v) in f {
            a.set_factor_label(*k, v).unwrap();
        }
        for (k, v) in i {
            a.set_item_note(k, v).unwrap();
        }
        for (x, y, n) in p {
            a.flag_pair(x, y, n).unwrap();
        }
        a
    }

    #[test]
    fn text_round_trip() {
        let a = notes(
            &[(3, "spice")],
            &[("r1", "title misspelt")],
            &[("r9", "r2", "")],
        );
        let back = Annotations::parse(a.to_text().as_bytes(), Path::new("a.ron")).unwrap();
        assert_eq!(back, a);
        assert_eq!(back.pair_note("r2", "r9"), Some(""));
    }

    #[test]
    fn three_way_merge_keeps_every_edit() {
        let base = notes(&[(1, "sweet")], &[("r1", "x")], &[]);
        let ours = notes(&[(1, "sweet"), (2, "heat")], &[("r1", "ours")], &[]);
        let theirs = notes(&[(1, "sugar")], &[("r1", "theirs")], &[("r3", "r4", "")]);
        let (m, report) = merge(&base, &ours, &theirs);
        assert_eq!(m.factor_label(1), Some("sugar"));
        assert_eq!(m.factor_label(2), Some("heat"));
        assert_eq!(m.item_note("r1"), Some("theirs ‖ ours"));
        assert_eq!(m.pair_note("r4", "r3"), Some(""));
        assert_eq!(report.taken, 2);
        assert_eq!(report.joined, ["note on item r1"]);
        // A removal on one side and an edit on the other keeps the edit.
        let removed = notes(&[], &[], &[]);
        let (m, _) = merge(
            &base,
            &removed,
            &notes(&[(1, "sweet!")], &[("r1", "x")], &[]),
        );
        assert_eq!(m.factor_label(1), Some("sweet!"));
        assert_eq!(m.item_note("r1"), None);
    }

    #[test]
    fn bad_files_are_refused_with_reasons() {
        let p = Path::new("annotations.ron");
        let err = |t: &str| Annotations::parse(t.as_bytes(), p).unwrap_err().to_string();
        assert!(err("(format: \"x\", version: 1)").contains("is not 'sextant-notes'"));
        assert!(err("(format: \"sextant-notes\", version: 9)").contains("version 9"));
        assert!(
            err("(format: \"sextant-notes\", version: 1, factors: {0: \"a\"})")
                .contains("factor 0")
        );
        assert!(
            err("(format: \"sextant-notes\", version: 1, pairs: [(a: \"x\", b: \"x\")])")
                .contains("same item")
        );
        assert!(err("(format: \"sextant-notes\",\n version: 1, surprise: 3)").contains("line 2"));
    }
}

#[cfg(test)]
mod save_tests {
    use super::*;

    #[test]
    fn two_sessions_saving_lose_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let mut one = Notes::open(dir.path()).unwrap();
        let mut two = Notes::open(dir.path()).unwrap();
        one.current.set_item_note("r1", "first").unwrap();
        one.current.set_factor_label(2, "heat").unwrap();
        assert!(one.unsaved());
        assert_eq!(one.save().unwrap(), Merge::default());
        assert!(!one.unsaved());
        two.current.set_item_note("r1", "second").unwrap();
        two.current.flag_pair("r5", "r4", "").unwrap();
        let report = two.save().unwrap();
        assert_eq!(report.taken, 1);
        assert_eq!(report.joined, ["note on item r1"]);
        let on_disk = read_notes(dir.path()).unwrap();
        assert_eq!(on_disk.item_note("r1"), Some("first ‖ second"));
        assert_eq!(on_disk.factor_label(2), Some("heat"));
        assert_eq!(on_disk.pair_note("r4", "r5"), Some(""));
        // The first session removes its label; the second's later save keeps that removal.
        one.current.set_factor_label(2, "").unwrap();
        one.save().unwrap();
        two.save().unwrap();
        assert_eq!(read_notes(dir.path()).unwrap().factor_label(2), None);
        assert!(
            !dir.path()
                .read_dir()
                .unwrap()
                .flatten()
                .any(|e| { e.file_name().to_string_lossy().ends_with(".tmp") })
        );
    }

    #[test]
    fn a_failed_save_keeps_the_notes_in_memory() {
        let dir = tempfile::tempdir().unwrap();
        let mut notes = Notes::open(dir.path()).unwrap();
        notes.current.set_item_note("r1", "keep me").unwrap();
        let gone = dir.path().join("gone");
        assert!(notes.save_to(&gone).is_err());
        assert_eq!(notes.current.item_note("r1"), Some("keep me"));
        assert!(notes.unsaved());
        notes.save().unwrap();
        assert_eq!(
            read_notes(dir.path()).unwrap().item_note("r1"),
            Some("keep me")
        );
    }
}
