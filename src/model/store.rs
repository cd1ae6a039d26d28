//! Model directories: a self-contained, validated, atomically written home for a model.
//!
//! A directory holds `manifest.ron`, `users.csv`, `items.csv`, `ratings.csv`
//! (`user,item,rating,split`), `items-meta.csv` when metadata was given, and
//! `annotations.ron` once curators save notes. Saving writes a complete new directory next
//! to the target, syncs it, and swaps it in with one atomic rename, so a crash leaves either
//! the old model or the new one. Loading checks everything and names the file, line and
//! reason of the first problem.

use std::fs::{self, File};
use std::io::{BufWriter, Write};
use std::path::{Component, Path, PathBuf};

use super::FactorModel;
use super::manifest::{Counts, FORMAT_TAG, FORMAT_VERSION, Files, Manifest};
use crate::data::ratings::{RatingColumns, RatingsOptions, read_ratings_with_ids};
use crate::data::{
    ItemsMeta, Ratings, read_factor_table, read_items_meta, write_factor_table, write_items_meta,
};
use crate::error::DataError;

/// Name of the manifest inside a model directory.
pub const MANIFEST: &str = "manifest.ron";
/// Name of the curator notes file, carried over when a model is replaced.
pub const ANNOTATIONS: &str = "annotations.ron";
/// Name of the items metadata file.
pub const ITEMS_META: &str = "items-meta.csv";

/// A complete model: manifest, ratings with their split, vectors and optional metadata.
#[derive(Debug, Clone, PartialEq)]
pub struct Model {
    /// The manifest (options, trace, metrics, counts).
    pub manifest: Manifest,
    /// Ratings (ids in the same order as the vectors).
    pub ratings: Ratings,
    /// The vectors.
    pub factors: FactorModel,
    /// Items metadata, indexed like the items.
    pub meta: Option<ItemsMeta>,
}

/// Why a model could not be saved.
#[derive(Debug, thiserror::Error)]
pub enum SaveError {
    /// The target is something we must not overwrite.
    #[error("{path}: {reason}")]
    Refused {
        /// The target directory.
        path: String,
        /// Why.
        reason: String,
    },
    /// The file system failed.
    #[error("{path}: cannot write: {source}")]
    Io {
        /// The file being written.
        path: String,
        /// The operating system's reason.
        source: std::io::Error,
    },
}

fn io_error(path: &Path) -> impl FnOnce(std::io::Error) -> SaveError + '_ {
    move |source| SaveError::Io {
        path: path.display().to_string(),
        source,
    }
}

/// Files a model directory may contain; anything else makes `save_model` refuse to replace it.
const KNOWN_FILES: [&str; 9] = [
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

/// Writes `model` to `dir` atomically. `dir` may be absent, an empty directory, or an
/// existing model directory (replaced as a whole; its `annotations.ron` is kept).
pub fn save_model(dir: &Path, model: &Model) -> Result<(), SaveError> {
    let existing = inspect_target(dir)?;
    let parent = match dir.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = dir
        .file_name()
        .map_or_else(|| "model".into(), |n| n.to_string_lossy().into_owned());
    remove_stale_staging(&parent, &name);
    let staging = Staging::create(&parent, &name)?;
    write_files(&staging.path, model)?;
    // Curator notes are copied and the directories swapped under the notes lock, so a note
    // saved by an open explorer meanwhile lands either before the copy or in the new model.
    let _lock = if existing == Target::Model {
        Some(super::notes::lock_dir(dir).map_err(io_error(dir))?)
    } else {
        None
    };
    if existing == Target::Model {
        let notes = dir.join(ANNOTATIONS);
        if notes.is_file() {
            fs::copy(&notes, staging.path.join(ANNOTATIONS)).map_err(io_error(&notes))?;
            sync_file(&staging.path.join(ANNOTATIONS))?;
        }
    }
    sync_dir(&staging.path)?;
    match existing {
        Target::Absent | Target::Empty => {
            fs::rename(&staging.path, dir).map_err(io_error(dir))?;
        }
        Target::Model => swap_dirs(&staging.path, dir)?,
    }
    sync_dir(&parent)?;
    // After a swap the staging path holds the old model; the drop removes it.
    drop(staging);
    Ok(())
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Target {
    Absent,
    Empty,
    Model,
}

fn inspect_target(dir: &Path) -> Result<Target, SaveError> {
    let refuse = |reason: String| SaveError::Refused {
        path: dir.display().to_string(),
        reason,
    };
    let meta = match fs::symlink_metadata(dir) {
        Ok(meta) => meta,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Target::Absent),
        Err(e) => return Err(io_error(dir)(e)),
    };
    if !meta.is_dir() {
        return Err(refuse(
            "exists and is not a directory; choose another --out".into(),
        ));
    }
    let mut names = Vec::new();
    for entry in fs::read_dir(dir).map_err(io_error(dir))? {
        names.push(
            entry
                .map_err(io_error(dir))?
                .file_name()
                .to_string_lossy()
                .into_owned(),
        );
    }
    if names.is_empty() {
        return Ok(Target::Empty);
    }
    if !names.iter().any(|n| n == MANIFEST) {
        return Err(refuse(
            "exists, is not empty and is not a sextant model directory (no manifest.ron); \
             choose a new --out or empty it"
                .into(),
        ));
    }
    let mut foreign: Vec<&String> = names
        .iter()
        .filter(|n| !KNOWN_FILES.contains(&n.as_str()))
        .collect();
    foreign.sort();
    if let Some(first) = foreign.first() {
        return Err(refuse(format!(
            "holds a model and {} other file(s) (first: '{first}') that replacing it would delete; \
             move them out or choose another --out",
            foreign.len()
        )));
    }
    Ok(Target::Model)
}

/// Removes staging directories that a killed save of the same model left behind (their
/// process is gone). They are never read, so this only frees the space.
fn remove_stale_staging(parent: &Path, name: &str) {
    let prefix = format!(".{name}.sextant-new-");
    let Ok(entries) = fs::read_dir(parent) else {
        return;
    };
    for entry in entries.flatten() {
        let file = entry.file_name().to_string_lossy().into_owned();
        let Some(rest) = file.strip_prefix(&prefix) else {
            continue;
        };
        let Some(pid) = rest.split('-').next().and_then(|p| p.parse::<u32>().ok()) else {
            continue;
        };
        if pid != std::process::id() && !process_alive(pid) {
            let _ = fs::remove_dir_all(entry.path());
        }
    }
}

/// Whether a process with this id exists (Linux: /proc; elsewhere assume it does, so
/// nothing is removed).
fn process_alive(pid: u32) -> bool {
    if cfg!(target_os = "linux") {
        Path::new("/proc").join(pid.to_string()).exists()
    } else {
        true
    }
}

/// A sibling directory being filled; removed on drop unless it was renamed away.
struct Staging {
    path: PathBuf,
}

impl Staging {
    fn create(parent: &Path, name: &str) -> Result<Self, SaveError> {
        for attempt in 0..1000u32 {
            let path = parent.join(format!(
                ".{name}.sextant-new-{}-{attempt}",
                std::process::id()
            ));
            match fs::create_dir(&path) {
                Ok(()) => return Ok(Self { path }),
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {}
                Err(e) => return Err(io_error(&path)(e)),
            }
        }
        Err(SaveError::Refused {
            path: parent.display().to_string(),
            reason: "too many leftover .sextant-new directories; remove them".into(),
        })
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        // Best effort: the directory is either renamed away already or a leftover.
        let _ = fs::remove_dir_all(&self.path);
    }
}

/// Exchanges two directories atomically where the system can (Linux `RENAME_EXCHANGE`);
/// elsewhere moves the old one aside first.
fn swap_dirs(new: &Path, target: &Path) -> Result<(), SaveError> {
    #[cfg(target_os = "linux")]
    {
        use rustix::fs::{CWD, RenameFlags, renameat_with};
        match renameat_with(CWD, new, CWD, target, RenameFlags::EXCHANGE) {
            Ok(()) => return Ok(()),
            Err(e) if e == rustix::io::Errno::INVAL || e == rustix::io::Errno::NOSYS => {}
            Err(e) => return Err(io_error(target)(e.into())),
        }
    }
    let aside = new.with_extension("old");
    fs::rename(target, &aside).map_err(io_error(target))?;
    fs::rename(new, target).map_err(io_error(target))?;
    fs::rename(&aside, new).map_err(io_error(new))?;
    Ok(())
}

/// Smallest table (values) or rating list (entries) that gets a binary twin: below it the
/// CSV opens in a blink and the twin would only take space.
const BINARY_MIN_ENTRIES: usize = 250_000;

fn write_files(dir: &Path, model: &Model) -> Result<(), SaveError> {
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
        ),
        (
            &files.items,
            &files.items_bin,
            &model.ratings.items,
            &f.items,
        ),
    ];
    for (csv_name, bin_name, ids, values) in tables {
        let csv_path = dir.join(csv_name);
        write_synced(&csv_path, |w| write_factor_table(w, ids, f.rank, values))?;
        if let Some(bin_name) = bin_name {
            let twin = file_twin(&csv_path).map_err(io_error(&csv_path))?;
            let encoded = crate::data::binary::encode(ids, f.rank, values, twin);
            write_synced(&dir.join(bin_name), |w| w.write_all(&encoded))?;
        }
    }
    let ratings_path = dir.join(&files.ratings);
    write_synced(&ratings_path, |w| write_model_ratings(w, &model.ratings))?;
    if let Some(bin_name) = &files.ratings_bin {
        let twin = file_twin(&ratings_path).map_err(io_error(&ratings_path))?;
        let encoded = crate::data::binary::encode_ratings(&model.ratings, twin);
        write_synced(&dir.join(bin_name), |w| w.write_all(&encoded))?;
    }
    if let (Some(name), Some(meta)) = (&files.items_meta, &model.meta) {
        write_synced(&dir.join(name), |w| {
            write_items_meta(w, meta, &model.ratings.items)
        })?;
    }
    let text = manifest_text(&manifest);
    write_synced(&dir.join(MANIFEST), |w| w.write_all(text.as_bytes()))
}

/// Size and streamed checksum of a file.
fn file_twin(path: &Path) -> std::io::Result<crate::data::binary::Twin> {
    use std::io::Read;
    let mut file = File::open(path)?;
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

/// The manifest as RON text.
pub fn manifest_text(manifest: &Manifest) -> String {
    let config = ron::ser::PrettyConfig::new()
        .depth_limit(2)
        .struct_names(false);
    let mut text =
        ron::ser::to_string_pretty(manifest, config).expect("a manifest always serialises");
    text.push('\n');
    text
}

fn write_synced(
    path: &Path,
    write: impl FnOnce(&mut BufWriter<&File>) -> std::io::Result<()>,
) -> Result<(), SaveError> {
    let file = File::create(path).map_err(io_error(path))?;
    let mut out = BufWriter::with_capacity(1 << 16, &file);
    write(&mut out)
        .and_then(|()| out.flush())
        .map_err(io_error(path))?;
    drop(out);
    file.sync_all().map_err(io_error(path))
}

fn sync_file(path: &Path) -> Result<(), SaveError> {
    File::open(path)
        .and_then(|f| f.sync_all())
        .map_err(io_error(path))
}

fn sync_dir(path: &Path) -> Result<(), SaveError> {
    File::open(path)
        .and_then(|f| f.sync_all())
        .map_err(io_error(path))
}

fn write_model_ratings(out: impl Write, ratings: &Ratings) -> std::io::Result<()> {
    let mut out = BufWriter::new(out);
    out.write_all(b"user,item,rating,split\n")?;
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

/// Where a model's files come from: a directory, or files embedded in the binary.
pub trait ModelSource {
    /// Reads one file of the model.
    fn read(&self, name: &str) -> Result<Vec<u8>, DataError>;
    /// The path to show in messages for `name`.
    fn path(&self, name: &str) -> PathBuf;
    /// The size of a file in bytes, if it exists.
    fn size(&self, name: &str) -> Option<u64>;
    /// The [`crate::data::binary::checksum`] of a file, streamed (no copy in memory).
    fn checksum(&self, name: &str) -> Option<u64>;
}

/// A model directory on disk. Every file the manifest names must stay inside it.
#[derive(Debug, Clone)]
pub struct DirSource {
    dir: PathBuf,
}

impl DirSource {
    /// A source reading from `dir`.
    pub fn new(dir: &Path) -> Self {
        Self {
            dir: dir.to_path_buf(),
        }
    }
}

impl ModelSource for DirSource {
    fn read(&self, name: &str) -> Result<Vec<u8>, DataError> {
        let path = self.path(name);
        let inside = fs::canonicalize(&self.dir)
            .and_then(|dir| fs::canonicalize(&path).map(|file| file.starts_with(dir)))
            .map_err(|e| DataError::read(&path, e))?;
        if !inside {
            return Err(DataError::in_file(
                &path,
                "resolves to a place outside the model directory; refusing to read it",
            ));
        }
        fs::read(&path).map_err(|e| DataError::read(&path, e))
    }

    fn path(&self, name: &str) -> PathBuf {
        self.dir.join(name)
    }

    fn size(&self, name: &str) -> Option<u64> {
        fs::metadata(self.path(name)).ok().map(|m| m.len())
    }

    fn checksum(&self, name: &str) -> Option<u64> {
        // Only files that stay inside the directory (the same check as `read`).
        let path = self.path(name);
        let inside = fs::canonicalize(&self.dir)
            .and_then(|d| fs::canonicalize(&path).map(|p| p.starts_with(d)))
            .ok()?;
        inside
            .then(|| file_twin(&path).ok().map(|t| t.checksum))
            .flatten()
    }
}

/// Model files compiled into the binary (the bundled demo).
#[derive(Debug, Clone, Copy)]
pub struct EmbeddedSource {
    /// The label shown in messages, e.g. `<bundled demo>`.
    pub label: &'static str,
    /// (name, content) pairs.
    pub files: &'static [(&'static str, &'static [u8])],
}

impl ModelSource for EmbeddedSource {
    fn read(&self, name: &str) -> Result<Vec<u8>, DataError> {
        self.files
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, bytes)| bytes.to_vec())
            .ok_or_else(|| {
                DataError::read(
                    &self.path(name),
                    std::io::Error::from(std::io::ErrorKind::NotFound),
                )
            })
    }

    fn path(&self, name: &str) -> PathBuf {
        Path::new(self.label).join(name)
    }

    fn size(&self, name: &str) -> Option<u64> {
        self.files
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, bytes)| bytes.len() as u64)
    }

    fn checksum(&self, name: &str) -> Option<u64> {
        self.files
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, bytes)| crate::data::binary::checksum(bytes))
    }
}

/// Loads and validates the model directory `dir`.
pub fn load_model(dir: &Path) -> Result<Model, DataError> {
    if !dir.is_dir() {
        let reason = if dir.exists() {
            "is not a directory"
        } else {
            "does not exist"
        };
        return Err(DataError::in_file(
            dir,
            format!(
                "{reason}; expected a model directory made by `sextant fit` or `sextant import`"
            ),
        ));
    }
    load_model_from(&DirSource::new(dir))
}

/// Largest manifest read (checked before reading it).
pub const MAX_MANIFEST_BYTES: u64 = 64 << 20;

/// Loads and validates a model from any source.
pub fn load_model_from(source: &dyn ModelSource) -> Result<Model, DataError> {
    let manifest_path = source.path(MANIFEST);
    // A manifest holds options, a trace and fingerprints: a few hundred kilobytes at most.
    if let Some(size) = source.size(MANIFEST)
        && size > MAX_MANIFEST_BYTES
    {
        return Err(DataError::in_file(
            &manifest_path,
            format!(
                "is {size} bytes; a manifest is at most {MAX_MANIFEST_BYTES} bytes, so this is not one"
            ),
        ));
    }
    let manifest = parse_manifest(&source.read(MANIFEST)?, &manifest_path)?;
    let files = &manifest.files;
    for name in [
        Some(&files.users),
        Some(&files.items),
        Some(&files.ratings),
        files.items_meta.as_ref(),
        files.users_bin.as_ref(),
        files.items_bin.as_ref(),
        files.ratings_bin.as_ref(),
    ]
    .into_iter()
    .flatten()
    {
        check_file_name(name, &manifest_path)?;
    }
    let rank = manifest.rank;
    let users = load_table(
        source,
        files.users_bin.as_deref(),
        &files.users,
        rank,
        manifest.counts.users,
        "users",
    )?;
    let items = load_table(
        source,
        files.items_bin.as_deref(),
        &files.items,
        rank,
        manifest.counts.items,
        "items",
    )?;
    let ratings_path = source.path(&files.ratings);
    let options = RatingsOptions {
        columns: RatingColumns {
            split: Some("split".into()),
            ..RatingColumns::default()
        },
        known_ids_only: true,
        ..RatingsOptions::default()
    };
    let fast = files.ratings_bin.as_deref().and_then(|bin| {
        let csv_bytes = source.size(&files.ratings)?;
        let bytes = source.read(bin).ok()?;
        crate::data::binary::decode_ratings(
            &bytes,
            users.ids.clone(),
            items.ids.clone(),
            manifest.counts.ratings,
            csv_bytes,
            || source.checksum(&files.ratings),
        )
        .ok()
    });
    let ratings = if let Some(ratings) = fast {
        ratings
    } else {
        let bytes = source.read(&files.ratings)?;
        read_ratings_with_ids(
            bytes.as_slice(),
            &ratings_path,
            &options,
            users.ids.clone(),
            items.ids.clone(),
        )?
    };
    let found = Counts {
        users: ratings.users.len(),
        items: ratings.items.len(),
        ratings: ratings.entries.len(),
        train_ratings: ratings.train_count(),
        holdout_ratings: ratings.holdout_count(),
    };
    if found != manifest.counts {
        return Err(DataError::in_file(
            &manifest_path,
            format!(
                "counts do not match the files: the manifest says {:?}, the files hold {found:?}",
                manifest.counts
            ),
        ));
    }
    let meta = match &files.items_meta {
        Some(name) => {
            let path = source.path(name);
            let meta =
                read_items_meta(source.read(name)?.as_slice(), &path, "item", &ratings.items)?;
            if let Some(id) = meta.unknown.first() {
                return Err(DataError::in_file(
                    &path,
                    format!("describes item '{id}', which the model does not have"),
                ));
            }
            Some(meta)
        }
        None => None,
    };
    let factors = FactorModel {
        rank,
        mu: manifest.mu,
        users: users.values,
        items: items.values,
    };
    Ok(Model {
        manifest,
        ratings,
        factors,
        meta,
    })
}

/// The binary copy of a table when it exists and checks out; `None` sends the caller to
/// the CSV, which stays the source of truth.
fn fast_table(
    source: &dyn ModelSource,
    bin: Option<&str>,
    csv: &str,
    rank: usize,
    rows: usize,
) -> Option<crate::data::FactorTable> {
    let bin = bin?;
    let csv_bytes = source.size(csv)?;
    let bytes = source.read(bin).ok()?;
    crate::data::binary::decode(&bytes, rank, rows, csv_bytes, || source.checksum(csv)).ok()
}

/// A factor table from its binary twin when that checks out, else from the CSV.
fn load_table(
    source: &dyn ModelSource,
    bin: Option<&str>,
    csv: &str,
    rank: usize,
    rows: usize,
    what: &str,
) -> Result<crate::data::FactorTable, DataError> {
    match fast_table(source, bin, csv, rank, rows) {
        Some(table) => Ok(table),
        None => read_table(source, csv, rank, rows, what),
    }
}

fn read_table(
    source: &dyn ModelSource,
    name: &str,
    rank: usize,
    expected: usize,
    what: &str,
) -> Result<crate::data::FactorTable, DataError> {
    let path = source.path(name);
    let table = read_factor_table(source.read(name)?.as_slice(), &path)?;
    if table.rank != rank {
        return Err(DataError::at_line(
            &path,
            1,
            format!(
                "the table has {} factor columns but the manifest says rank {rank}",
                table.rank
            ),
        ));
    }
    if table.ids.len() != expected {
        return Err(DataError::in_file(
            &path,
            format!(
                "the table has {} {what} but the manifest says {expected}",
                table.ids.len()
            ),
        ));
    }
    Ok(table)
}

fn check_file_name(name: &str, manifest: &Path) -> Result<(), DataError> {
    let path = Path::new(name);
    let plain = path.components().count() == 1
        && matches!(path.components().next(), Some(Component::Normal(_)));
    if plain && !name.is_empty() {
        Ok(())
    } else {
        Err(DataError::in_file(
            manifest,
            format!(
                "file name '{name}' would leave the model directory; only plain file names are allowed"
            ),
        ))
    }
}

/// Parses and checks `manifest.ron`.
pub fn parse_manifest(bytes: &[u8], path: &Path) -> Result<Manifest, DataError> {
    let text = std::str::from_utf8(bytes)
        .map_err(|_| DataError::in_file(path, "is not valid UTF-8 text"))?;
    let manifest: Manifest = ron::from_str(text).map_err(|e| {
        DataError::at_line(
            path,
            e.span.start.line as u64,
            format!("not a valid manifest: {}", e.code),
        )
    })?;
    let bad = |reason: String| Err(DataError::in_file(path, reason));
    if manifest.format != FORMAT_TAG {
        return bad(format!(
            "format '{}' is not '{FORMAT_TAG}'",
            manifest.format
        ));
    }
    if manifest.version != FORMAT_VERSION {
        return bad(format!(
            "format version {} is not supported by this sextant, which reads version {FORMAT_VERSION}",
            manifest.version
        ));
    }
    if manifest.rank == 0 || manifest.rank > 4096 {
        return bad(format!("rank {} is outside 1 to 4096", manifest.rank));
    }
    let finite = [
        ("lambda", manifest.lambda),
        ("sigma2", manifest.sigma2),
        ("mu", manifest.mu),
    ];
    if let Some((name, value)) = finite.iter().find(|(_, v)| !v.is_finite()) {
        return bad(format!("{name} is {value}, not a finite number"));
    }
    if manifest.lambda < 0.0 || manifest.sigma2 <= 0.0 {
        return bad("lambda must be ≥ 0 and sigma2 > 0".into());
    }
    let scale_ok = match &manifest.scale {
        crate::data::RatingScale::Levels(levels) => {
            !levels.is_empty()
                && levels.iter().all(|v| v.is_finite())
                && levels.windows(2).all(|w| w[0] < w[1])
        }
        crate::data::RatingScale::Continuous { min, max } => {
            min.is_finite() && max.is_finite() && min <= max
        }
    };
    if !scale_ok {
        return bad("the rating scale is empty, unsorted or not finite".into());
    }
    let numbers_ok = manifest
        .trace
        .iter()
        .all(|r| r.log_joint.is_finite() && r.train_rmse.is_finite());
    if !numbers_ok {
        return bad("the trace holds values that are not finite numbers".into());
    }
    Ok(manifest)
}

/// The default file set, with items metadata when `has_meta`.
pub fn default_files(has_meta: bool) -> Files {
    Files {
        items_meta: has_meta.then(|| ITEMS_META.to_owned()),
        ..Files::default()
    }
}
