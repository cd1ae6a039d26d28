//! The model directory on disk: its file names, its locks, one generation read whole, and
//! atomic replacement. The only module that touches a model directory.
//!
//! - **Reading** ([`ModelDir::read`]): a shared lock on the directory, re-checked against
//!   the path, and every file opened relative to the locked directory's handle. A refit
//!   swaps a new directory in only under the exclusive lock, so a reader sees one whole
//!   generation — never files of two models.
//! - **Files are regular files inside the directory**: a model file that is a symbolic
//!   link, a FIFO or a device is refused, whatever it points to.
//! - **Saving** ([`save_model`]): a complete new directory is written next to the target
//!   under an unpredictable name, then swapped in (Linux `RENAME_EXCHANGE`) under the
//!   target's exclusive lock, with the curator notes copied over under the same lock. A
//!   target is replaced only when it is empty or a sextant model by content (its manifest
//!   parses, with sextant's format tag and version) and holds nothing but model files; no
//!   file sextant did not write is ever deleted. Two fits into one target take turns.
//! - **Notes** are written under the exclusive lock ([`ModelDir::replace_file`]); a killed
//!   writer's temporary file is removed by the next writer under the lock, and never stops
//!   a refit.

use std::fs::{self, File};
use std::io::{self, BufWriter, Read, Write};
use std::path::{Path, PathBuf};

use super::store::{Model, ModelSource, load_model_from, parse_manifest};
use crate::data::ratings::Ratings;
use crate::data::{write_factor_table, write_items_meta};
use crate::error::DataError;
use crate::files::{
    DirLock, LockKind, TEMP_PREFIX, describe_io, is_temp_name, parent_of, random_token,
    remove_leftovers, sync_dir,
};

/// Name of the manifest inside a model directory.
pub const MANIFEST: &str = "manifest.ron";
/// Name of the curator notes file, carried over when a model is replaced.
pub const ANNOTATIONS: &str = "annotations.ron";
/// Name of the items metadata file.
pub const ITEMS_META: &str = "items-meta.csv";
pub use crate::limits::MAX_MANIFEST_BYTES;

/// Every file a model directory may contain.
pub const MODEL_FILES: [&str; 9] = [
    MANIFEST,
    "users.csv",
    "items.csv",
    "ratings.csv",
    ITEMS_META,
    ANNOTATIONS,
    "users.bin",
    "items.bin",
    "ratings.bin",
];

/// Why a model could not be saved.
#[derive(Debug, thiserror::Error)]
pub enum SaveError {
    /// The target is something we must not overwrite (exit code 2).
    #[error("{path}: {reason}")]
    Refused {
        /// The target directory, as the user named it.
        path: String,
        /// Why, and what to do.
        reason: String,
    },
    /// The file system failed (exit code 1).
    #[error("{path}: cannot write the model: {reason}")]
    Io {
        /// The target directory, as the user named it.
        path: String,
        /// What failed, in words a user can act on.
        reason: String,
        /// The operating system's error.
        #[source]
        source: io::Error,
    },
}

fn io_error(target: &Path) -> impl Fn(io::Error) -> SaveError + '_ {
    move |source| SaveError::Io {
        path: target.display().to_string(),
        reason: describe_io(&source),
        source,
    }
}

fn refused(target: &Path, reason: impl Into<String>) -> SaveError {
    SaveError::Refused {
        path: target.display().to_string(),
        reason: reason.into(),
    }
}

/// One generation of a model directory, locked: shared for reading, exclusive for
/// writing notes. Every file is read through the locked directory's handle.
#[derive(Debug)]
pub struct ModelDir {
    lock: DirLock,
}

impl ModelDir {
    /// Opens `path` for reading (shared lock; waits while a refit swaps a model in).
    pub fn read(path: &Path) -> Result<Self, DataError> {
        Self::open(path, LockKind::Shared)
    }

    /// Opens `path` for writing notes (exclusive lock; waits for readers and writers).
    pub fn write(path: &Path) -> Result<Self, DataError> {
        Self::open(path, LockKind::Exclusive)
    }

    fn open(path: &Path, kind: LockKind) -> Result<Self, DataError> {
        match fs::metadata(path) {
            Ok(meta) if meta.is_dir() => {}
            Ok(_) => return Err(not_a_model(path, "is a file, not a model directory")),
            Err(e) if e.kind() == io::ErrorKind::NotFound => {
                return Err(DataError::in_file(
                    path,
                    "does not exist; name a model directory made by `sextant fit` or \
                     `sextant import`",
                ));
            }
            Err(e) => return Err(DataError::read(path, e)),
        }
        let lock = DirLock::new(path, kind).map_err(|e| DataError::read(path, e))?;
        Ok(Self { lock })
    }

    /// The directory as the user named it.
    pub fn path(&self) -> &Path {
        self.lock.path()
    }

    /// Which generation this is (device and inode of the directory).
    pub fn identity(&self) -> Option<(u64, u64)> {
        self.lock.identity()
    }

    /// Loads and validates the model of this generation.
    pub fn load(&self) -> Result<Model, DataError> {
        load_model_from(self)
    }

    /// Reads file `name`, refusing it when larger than `max_bytes`. `Ok(None)` when absent.
    pub fn read_file(&self, name: &str, max_bytes: u64) -> Result<Option<Vec<u8>>, DataError> {
        read_locked(&self.lock, name, max_bytes)
    }

    /// Replaces file `name` atomically (temporary file in the directory, fsync, rename).
    /// Only for a directory opened with [`ModelDir::write`].
    pub fn replace_file(&self, name: &str, bytes: &[u8]) -> io::Result<()> {
        let mut temp = crate::files::TempFile::new_in(self.path(), name)?;
        temp.file().write_all(bytes)?;
        temp.commit(&self.path().join(name))
    }

    /// Removes temporary files a killed writer left (only under the exclusive lock).
    pub fn remove_leftovers(&self) {
        remove_model_leftovers(self.path());
    }
}

/// Opens file `name` of this generation: it must be a regular file (not a symlink,
/// FIFO or device). `Ok(None)` when it does not exist.
fn open_locked(lock: &DirLock, name: &str) -> Result<Option<File>, DataError> {
    let path = lock.path().join(name);
    let opened = open_inside(lock.handle(), lock.path(), name);
    let file = match opened {
        Ok(file) => file,
        Err(e) if e.kind() == io::ErrorKind::NotFound => return Ok(None),
        Err(e) if is_symlink_error(&e) => {
            return Err(DataError::in_file(
                &path,
                "is a symbolic link; every model file must be a regular file inside \
                 the model directory (replace the link with the file itself)",
            ));
        }
        Err(e) => return Err(DataError::read(&path, e)),
    };
    let meta = file.metadata().map_err(|e| DataError::read(&path, e))?;
    if !meta.is_file() {
        return Err(DataError::in_file(
            &path,
            "is not a regular file; every model file must be a regular file inside \
             the model directory",
        ));
    }
    Ok(Some(file))
}

/// Reads file `name`, refusing it when larger than `max_bytes`. `Ok(None)` when absent.
fn read_locked(lock: &DirLock, name: &str, max_bytes: u64) -> Result<Option<Vec<u8>>, DataError> {
    let path = lock.path().join(name);
    let Some(mut file) = open_locked(lock, name)? else {
        return Ok(None);
    };
    let size = file
        .metadata()
        .map_err(|e| DataError::read(&path, e))?
        .len();
    if size > max_bytes {
        return Err(DataError::in_file(
            &path,
            format!("is {size} bytes; at most {max_bytes} bytes are read from this file"),
        ));
    }
    let mut bytes = Vec::with_capacity(size as usize);
    Read::by_ref(&mut file)
        .take(max_bytes.saturating_add(1))
        .read_to_end(&mut bytes)
        .map_err(|e| DataError::read(&path, e))?;
    Ok(Some(bytes))
}

/// A temporary file of a killed writer: ours ([`TEMP_PREFIX`]) or the notes writer of
/// earlier versions (`.annotations.ron.<pid>.tmp`).
fn is_leftover(name: &str) -> bool {
    is_temp_name(name)
        || name
            .strip_prefix(".annotations.ron.")
            .and_then(|rest| rest.strip_suffix(".tmp"))
            .is_some_and(|pid| !pid.is_empty() && pid.bytes().all(|b| b.is_ascii_digit()))
}

/// Removes leftovers of killed writers from a model directory (only under its exclusive
/// lock, where no live writer can be at work).
fn remove_model_leftovers(dir: &Path) {
    remove_leftovers(dir);
    if let Ok(entries) = fs::read_dir(dir) {
        for entry in entries.flatten() {
            let name = entry.file_name().to_string_lossy().into_owned();
            if is_leftover(&name) && entry.file_type().is_ok_and(|t| t.is_file()) {
                let _ = fs::remove_file(entry.path());
            }
        }
    }
}

fn not_a_model(path: &Path, reason: &str) -> DataError {
    DataError::in_file(path, format!("{reason}; {}", model_hint(path)))
}

/// What to do instead, from a look at what `path` holds: a model one level down is named;
/// a data folder or a CSV gets the `sextant fit` command that makes a model of it.
fn model_hint(path: &Path) -> String {
    /// Entries looked at: enough for any data folder, bounded for a huge one.
    const LOOK_AT: usize = 10_000;
    let shown = |p: &Path| crate::text::escaped(&p.display().to_string()).into_owned();
    let fit = |ratings: &str, items: Option<&str>| {
        let items = items.map_or_else(String::new, |i| format!(" --catalogue {i}"));
        format!("to make one: sextant fit {ratings}{items} --out MODEL")
    };
    let generic = format!(
        "{} (or sextant import … for vectors fitted elsewhere)",
        fit("RATINGS.csv", None)
    );
    let Ok(meta) = fs::metadata(path) else {
        return generic;
    };
    if meta.is_file() {
        return fit(&shown(path), None);
    }
    let Ok(entries) = fs::read_dir(path) else {
        return generic;
    };
    let mut csvs: Vec<String> = Vec::new();
    let mut models: Vec<PathBuf> = Vec::new();
    for entry in entries.take(LOOK_AT).flatten() {
        let child = entry.path();
        let Ok(kind) = entry.file_type() else {
            continue;
        };
        if kind.is_dir() && fs::symlink_metadata(child.join(MANIFEST)).is_ok_and(|m| m.is_file()) {
            models.push(child);
            continue;
        }
        let is_csv = Path::new(&entry.file_name())
            .extension()
            .is_some_and(|e| e.eq_ignore_ascii_case("csv"));
        if kind.is_file() && is_csv {
            csvs.push(entry.file_name().to_string_lossy().into_owned());
        }
    }
    csvs.sort();
    let find = |words: &[&str]| {
        csvs.iter()
            .find(|n| words.iter().any(|w| n.to_lowercase().contains(w)))
            .map(|n| shown(&path.join(n)))
    };
    let ratings = find(&["rating", "score", "review"]);
    let items = find(&["item", "catalog", "meta", "title"]);
    let make = match (ratings, items) {
        (Some(r), items) => fit(&r, items.as_deref()),
        (None, _) if csvs.len() == 1 => fit(&shown(&path.join(&csvs[0])), None),
        _ => generic,
    };
    models.sort();
    match models.as_slice() {
        [] => make,
        [model] => format!(
            "it holds a model at {}: name that instead, or {make}",
            shown(model)
        ),
        several => {
            let named: Vec<String> = several.iter().take(5).map(|m| shown(m)).collect();
            format!(
                "it holds models at {}{}: name one of those instead, or {make}",
                named.join(" and "),
                if several.len() > 5 { " and more" } else { "" }
            )
        }
    }
}

#[cfg(target_os = "linux")]
fn open_inside(dir: &File, _dir_path: &Path, name: &str) -> io::Result<File> {
    use rustix::fs::{Mode, OFlags, openat};
    // No symlink is followed, and a FIFO does not block the open.
    let flags = OFlags::RDONLY | OFlags::NOFOLLOW | OFlags::NONBLOCK | OFlags::CLOEXEC;
    let fd = openat(dir, name, flags, Mode::empty())?;
    Ok(File::from(fd))
}

#[cfg(not(target_os = "linux"))]
fn open_inside(_dir: &File, dir_path: &Path, name: &str) -> io::Result<File> {
    let path = dir_path.join(name);
    if fs::symlink_metadata(&path)?.file_type().is_symlink() {
        return Err(io::Error::other("symbolic link"));
    }
    File::open(path)
}

fn is_symlink_error(e: &io::Error) -> bool {
    // O_NOFOLLOW on a symlink fails with ELOOP.
    #[cfg(target_os = "linux")]
    {
        e.raw_os_error() == Some(rustix::io::Errno::LOOP.raw_os_error())
    }
    #[cfg(not(target_os = "linux"))]
    {
        e.to_string() == "symbolic link"
    }
}

impl ModelSource for ModelDir {
    fn read(&self, name: &str) -> Result<Vec<u8>, DataError> {
        self.read_file(name, u64::MAX)?.ok_or_else(|| {
            if name == MANIFEST {
                not_a_model(
                    self.path(),
                    "holds no manifest.ron, so it is not a model directory",
                )
            } else {
                DataError::in_file(
                    &self.path().join(name),
                    "is missing: the model directory is incomplete; fit or import it again",
                )
            }
        })
    }

    fn path(&self, name: &str) -> PathBuf {
        self.path().join(name)
    }

    fn size(&self, name: &str) -> Option<u64> {
        Some(open_locked(&self.lock, name).ok()??.metadata().ok()?.len())
    }

    fn checksum(&self, name: &str) -> Option<u64> {
        let file = open_locked(&self.lock, name).ok()??;
        stream_twin(file).ok().map(|t| t.checksum)
    }
}

/// Loads and validates the model directory `dir` (one whole generation).
pub fn load_model(dir: &Path) -> Result<Model, DataError> {
    ModelDir::read(dir)?.load()
}

/// Device and inode of the directory at `path` now (which generation is there).
pub fn identity_of(path: &Path) -> Option<(u64, u64)> {
    crate::files::identity(&fs::metadata(path).ok()?)
}

// ---------------------------------------------------------------------------------------
// Saving

/// What is at a save target.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Target {
    Absent,
    Empty,
    Model,
}

/// Checks that `dir` may receive a model (absent, empty, or a sextant model holding only
/// model files), so a long fit can be refused before it starts. [`save_model`] checks
/// again under the lock.
pub fn check_target(dir: &Path) -> Result<(), SaveError> {
    inspect_target(dir).map(|_| ())
}

fn inspect_target(dir: &Path) -> Result<Target, SaveError> {
    let meta = match fs::symlink_metadata(dir) {
        Ok(meta) => meta,
        Err(e) if e.kind() == io::ErrorKind::NotFound => return Ok(Target::Absent),
        Err(e) => return Err(io_error(dir)(e)),
    };
    if meta.file_type().is_symlink() {
        return Err(refused(
            dir,
            "is a symbolic link; give the model directory itself as --out",
        ));
    }
    if !meta.is_dir() {
        return Err(refused(
            dir,
            "exists and is not a directory; choose another --out",
        ));
    }
    let mut names = Vec::new();
    for entry in fs::read_dir(dir).map_err(io_error(dir))? {
        let name = entry
            .map_err(io_error(dir))?
            .file_name()
            .to_string_lossy()
            .into_owned();
        if !is_leftover(&name) {
            names.push(name);
        }
    }
    names.sort();
    if names.is_empty() {
        return Ok(Target::Empty);
    }
    let list = |names: &[&String]| {
        let shown: Vec<String> = names.iter().take(5).map(|n| format!("'{n}'")).collect();
        format!(
            "{}{}",
            shown.join(", "),
            if names.len() > 5 { ", …" } else { "" }
        )
    };
    if !names.iter().any(|n| n == MANIFEST) {
        return Err(refused(
            dir,
            format!(
                "is not empty and is not a sextant model directory (it holds {}); \
                 sextant replaces only its own models: choose a new or empty --out",
                list(&names.iter().collect::<Vec<_>>())
            ),
        ));
    }
    let manifest = dir.join(MANIFEST);
    let why_not = match fs::symlink_metadata(&manifest) {
        Ok(m) if !m.is_file() => Some("it is not a regular file".to_owned()),
        Ok(m) if m.len() > MAX_MANIFEST_BYTES => Some("it is far too large".to_owned()),
        Ok(_) => match fs::read(&manifest) {
            Ok(bytes) => parse_manifest(&bytes, &manifest)
                .err()
                .map(|e| e.to_string()),
            Err(e) => Some(describe_io(&e)),
        },
        Err(e) => Some(describe_io(&e)),
    };
    if let Some(why) = why_not {
        return Err(refused(
            dir,
            format!(
                "holds a manifest.ron that is not a sextant model's ({why}); sextant \
                 replaces only its own models: choose a new or empty --out"
            ),
        ));
    }
    let foreign: Vec<&String> = names
        .iter()
        .filter(|n| {
            !MODEL_FILES.contains(&n.as_str())
                || !fs::symlink_metadata(dir.join(n)).is_ok_and(|m| m.is_file())
        })
        .collect();
    if !foreign.is_empty() {
        return Err(refused(
            dir,
            format!(
                "holds a model and {} other file(s) or link(s) ({}) that replacing it would \
                 delete; move them out or choose another --out",
                foreign.len(),
                list(&foreign)
            ),
        ));
    }
    Ok(Target::Model)
}

/// Writes `model` to `dir` atomically. `dir` may be absent, an empty directory, or a
/// sextant model directory (replaced as a whole; its `annotations.ron` is kept).
pub fn save_model(dir: &Path, model: &Model) -> Result<(), SaveError> {
    inspect_target(dir)?;
    let parent = parent_of(dir);
    let name = dir
        .file_name()
        .map_or_else(|| "model".into(), |n| n.to_string_lossy().into_owned());
    remove_stale_staging(&parent, &name);
    let mut staging = Staging::create(&parent, &name).map_err(io_error(dir))?;
    write_files(&staging.path, model).map_err(io_error(dir))?;
    // The target exists from here on, so its lock orders concurrent saves.
    let created = match fs::create_dir(dir) {
        Ok(()) => true,
        Err(e) if e.kind() == io::ErrorKind::AlreadyExists => false,
        Err(e) => return Err(io_error(dir)(e)),
    };
    let lock = DirLock::new(dir, LockKind::Exclusive).map_err(io_error(dir))?;
    let swapped = swap_in(dir, &staging, &lock);
    if swapped.is_err() && created {
        // Only an empty directory is removed: this one, unless someone wrote into it.
        let _ = fs::remove_dir(dir);
    }
    swapped?;
    // Readers wait for neither the new model's staging lock nor the old model's removal.
    staging.unlock();
    drop(lock);
    // After the swap the staging path holds the old model; the drop removes it.
    drop(staging);
    Ok(())
}

/// Under the target's exclusive lock: check it again, carry the notes over, swap.
fn swap_in(dir: &Path, staging: &Staging, lock: &DirLock) -> Result<(), SaveError> {
    remove_model_leftovers(dir);
    let target = inspect_target(dir)?;
    if target == Target::Model {
        // Read through the lock this process already holds: a second lock on the same
        // directory would wait for itself.
        match read_locked(lock, ANNOTATIONS, super::notes::MAX_NOTES_BYTES) {
            Ok(Some(bytes)) => {
                write_synced(&staging.path.join(ANNOTATIONS), |w| w.write_all(&bytes))
                    .map_err(io_error(dir))?;
            }
            Ok(None) => {}
            Err(e) => {
                return Err(refused(
                    dir,
                    format!("its curator notes cannot be carried over: {e}"),
                ));
            }
        }
    }
    sync_dir(&staging.path).map_err(io_error(dir))?;
    swap_dirs(&staging.path, dir).map_err(io_error(dir))?;
    sync_dir(&parent_of(dir)).map_err(io_error(dir))
}

/// Removes staging directories that a killed save of the same model left behind: every
/// live writer holds its staging directory's lock, so an unlocked one is a leftover. They
/// are never read, so this only frees the space.
fn remove_stale_staging(parent: &Path, name: &str) {
    let suffix = format!("-{name}");
    let Ok(entries) = fs::read_dir(parent) else {
        return;
    };
    for entry in entries.flatten() {
        let file = entry.file_name().to_string_lossy().into_owned();
        if !(file.starts_with(TEMP_PREFIX) && file.ends_with(&suffix)) {
            continue;
        }
        let path = entry.path();
        if !fs::symlink_metadata(&path).is_ok_and(|m| m.is_dir()) {
            continue;
        }
        // Held while removing: a writer that creates a directory of the same name
        // meanwhile cannot lock it, and tries another name.
        if let Ok(Some(_held)) = DirLock::try_exclusive(&path) {
            let _ = fs::remove_dir_all(&path);
        }
    }
}

/// A sibling directory being filled, locked while it lives; removed on drop (after a swap
/// it holds the old model).
struct Staging {
    path: PathBuf,
    lock: Option<DirLock>,
}

impl Staging {
    fn create(parent: &Path, name: &str) -> io::Result<Self> {
        for _ in 0..100 {
            let path = parent.join(format!("{TEMP_PREFIX}{}-{name}", random_token()));
            match fs::create_dir(&path) {
                Ok(()) => {
                    // A cleaner may have taken it for a leftover between the creation and
                    // the lock; then try another name.
                    let Ok(Some(lock)) = DirLock::try_exclusive(&path) else {
                        continue;
                    };
                    if lock.identity().is_some() && lock.identity() == identity_of(&path) {
                        return Ok(Self {
                            path,
                            lock: Some(lock),
                        });
                    }
                }
                Err(e) if e.kind() == io::ErrorKind::AlreadyExists => {}
                Err(e) => return Err(e),
            }
        }
        Err(io::Error::new(
            io::ErrorKind::AlreadyExists,
            "no free staging directory name after 100 tries",
        ))
    }
}

impl Staging {
    fn unlock(&mut self) {
        self.lock = None;
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        // Best effort: the directory is either the old model or an unfinished new one.
        let _ = fs::remove_dir_all(&self.path);
    }
}

/// Exchanges two directories atomically where the system can (Linux `RENAME_EXCHANGE`);
/// elsewhere moves the old one aside first.
fn swap_dirs(new: &Path, target: &Path) -> io::Result<()> {
    #[cfg(target_os = "linux")]
    {
        use rustix::fs::{CWD, RenameFlags, renameat_with};
        match renameat_with(CWD, new, CWD, target, RenameFlags::EXCHANGE) {
            Ok(()) => return Ok(()),
            Err(e) if e == rustix::io::Errno::INVAL || e == rustix::io::Errno::NOSYS => {}
            Err(e) => return Err(e.into()),
        }
    }
    let aside = new.with_extension("old");
    fs::rename(target, &aside)?;
    fs::rename(new, target)?;
    fs::rename(&aside, new)
}

/// Smallest table (values) or rating list (entries) that gets a binary twin: below it the
/// CSV opens in a blink and the twin would only take space.
const BINARY_MIN_ENTRIES: usize = 250_000;

fn write_files(dir: &Path, model: &Model) -> io::Result<()> {
    // Binary twins only for large tables; the manifest names exactly the files written.
    let mut manifest = model.manifest.clone();
    let big = |n: usize| n >= BINARY_MIN_ENTRIES;
    let default = super::manifest::Files::default();
    manifest.files.users_bin = big(model.factors.users.len())
        .then_some(default.users_bin)
        .flatten();
    manifest.files.items_bin = big(model.factors.items.len())
        .then_some(default.items_bin)
        .flatten();
    manifest.files.ratings_bin = big(model.ratings.entries.len())
        .then_some(default.ratings_bin)
        .flatten();
    let files = &manifest.files;
    let f = &model.factors;
    let tables = [
        (
            &files.users,
            &files.users_bin,
            &model.ratings.users,
            &f.users,
            f.biases.as_ref().map(|b| &b.user[..]),
        ),
        (
            &files.items,
            &files.items_bin,
            &model.ratings.items,
            &f.items,
            f.biases.as_ref().map(|b| &b.item[..]),
        ),
    ];
    for (csv_name, bin_name, ids, values, bias) in tables {
        let csv_path = dir.join(csv_name);
        write_synced(&csv_path, |w| {
            write_factor_table(w, ids, f.rank, values, bias)
        })?;
        if let Some(bin_name) = bin_name {
            let twin = stream_twin(File::open(&csv_path)?)?;
            let encoded = crate::data::binary::encode(ids, f.rank, values, bias, twin);
            write_synced(&dir.join(bin_name), |w| w.write_all(&encoded))?;
        }
    }
    let ratings_path = dir.join(&files.ratings);
    let column = super::manifest::value_column(model.manifest.implicit.is_some());
    write_synced(&ratings_path, |w| {
        write_model_ratings(w, &model.ratings, column)
    })?;
    if let Some(bin_name) = &files.ratings_bin {
        let twin = stream_twin(File::open(&ratings_path)?)?;
        let encoded = crate::data::binary::encode_ratings(&model.ratings, twin);
        write_synced(&dir.join(bin_name), |w| w.write_all(&encoded))?;
    }
    if let (Some(name), Some(meta)) = (&files.items_meta, &model.meta) {
        write_synced(&dir.join(name), |w| {
            write_items_meta(w, meta, &model.ratings.items)
        })?;
    }
    let text = super::store::manifest_text(&manifest);
    write_synced(&dir.join(MANIFEST), |w| w.write_all(text.as_bytes()))
}

/// Size and streamed checksum of an open file.
fn stream_twin(mut file: File) -> io::Result<crate::data::binary::Twin> {
    let mut sum = crate::data::binary::Checksum::default();
    let mut buffer = vec![0u8; 1 << 20];
    loop {
        let n = file.read(&mut buffer)?;
        if n == 0 {
            break;
        }
        sum.update(&buffer[..n]);
    }
    Ok(crate::data::binary::Twin {
        bytes: file.metadata()?.len(),
        checksum: sum.finish(),
    })
}

/// Creates `path` exclusively (inside a fresh staging directory), writes and syncs it.
fn write_synced(
    path: &Path,
    write: impl FnOnce(&mut BufWriter<&File>) -> io::Result<()>,
) -> io::Result<()> {
    let file = fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(path)?;
    let mut out = BufWriter::with_capacity(1 << 16, &file);
    write(&mut out)?;
    out.flush()?;
    drop(out);
    file.sync_all()
}

/// Writes `user,item,VALUE,split` rows, `VALUE` being the value column's name.
fn write_model_ratings(out: impl Write, ratings: &Ratings, value: &str) -> io::Result<()> {
    let mut out = BufWriter::new(out);
    writeln!(out, "user,item,{value},split")?;
    let mut field = Vec::new();
    for r in &ratings.entries {
        field.clear();
        crate::data::factors::quote_field(&mut field, ratings.users.name(r.user));
        field.push(b',');
        crate::data::factors::quote_field(&mut field, ratings.items.name(r.item));
        out.write_all(&field)?;
        let split = if r.holdout { "holdout" } else { "train" };
        writeln!(
            out,
            ",{},{split}",
            crate::data::factors::format_float(r.value)
        )?;
    }
    out.flush()
}
