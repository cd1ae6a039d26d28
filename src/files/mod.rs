//! The file-system boundary: every file sextant writes, and every lock it takes, goes
//! through this module (model directories through [`crate::model::dir`], which builds on it).
//!
//! - [`TempFile`]: a temporary file created exclusively (`O_EXCL`, so a planted symlink is
//!   never followed) under an unpredictable name in the target's own folder, synced and
//!   renamed over the target, or removed if anything fails.
//! - [`output`]: single-file outputs (reports, lists, explanations, exports). A regular
//!   file is replaced atomically; a device, FIFO or socket is written in place; `-` is
//!   stdout.
//! - [`DirLock`]: shared or exclusive advisory locks on a directory, re-checked against
//!   the path after they are granted, so a directory swapped in meanwhile is the one locked.
//! - [`bounded`]: readers that refuse endless lines and name UTF-16 and UTF-32 files.
//! - [`export`]: the folder rules of `sextant export` (new, empty, or an earlier export).
//!
//! Errors name the user's own path and say what to do ([`describe_io`]), never an
//! internal name or a bare operating-system message.

pub mod bounded;
pub mod export;
pub mod output;

use std::fs::{self, File};
use std::hash::{BuildHasher, Hasher};
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// Prefix of every temporary file and staging directory sextant creates. A file with this
/// prefix in a folder sextant holds the lock of is a leftover of a killed writer.
pub const TEMP_PREFIX: &str = ".sextant-tmp-";

/// 64 unpredictable bits as hex: the standard library's per-process random hash keys
/// (seeded by the operating system) over the process id, the time and a counter.
pub fn random_token() -> String {
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let mut hasher = std::collections::hash_map::RandomState::new().build_hasher();
    hasher.write_u32(std::process::id());
    hasher.write_u64(COUNTER.fetch_add(1, Ordering::Relaxed));
    if let Ok(t) = std::time::SystemTime::now().duration_since(std::time::UNIX_EPOCH) {
        hasher.write_u128(t.as_nanos());
    }
    format!("{:016x}", hasher.finish())
}

/// The folder a path lives in (`.` for a bare file name).
pub fn parent_of(path: &Path) -> PathBuf {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// A temporary file beside its target, removed on drop unless committed.
#[derive(Debug)]
pub struct TempFile {
    path: PathBuf,
    file: File,
    committed: bool,
}

impl TempFile {
    /// Creates `.sextant-tmp-<random>-<label>` in `dir`, exclusively: an existing file or
    /// symlink of that name makes it pick another name, never open it.
    pub fn new_in(dir: &Path, label: &str) -> io::Result<Self> {
        let label: String = label
            .chars()
            .map(|c| {
                if c.is_alphanumeric() || c == '.' || c == '-' {
                    c
                } else {
                    '_'
                }
            })
            .take(64)
            .collect();
        for _ in 0..100 {
            let path = dir.join(format!("{TEMP_PREFIX}{}-{label}", random_token()));
            match fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&path)
            {
                Ok(file) => {
                    return Ok(Self {
                        path,
                        file,
                        committed: false,
                    });
                }
                Err(e) if e.kind() == io::ErrorKind::AlreadyExists => {}
                Err(e) => return Err(e),
            }
        }
        Err(io::Error::new(
            io::ErrorKind::AlreadyExists,
            "no free temporary file name after 100 tries",
        ))
    }

    /// The open file.
    pub fn file(&mut self) -> &mut File {
        &mut self.file
    }

    /// Gives the file the permission bits of `like` (the file it is about to replace).
    pub fn copy_permissions(&self, like: &fs::Metadata) -> io::Result<()> {
        self.file.set_permissions(like.permissions())
    }

    /// Syncs the file, renames it over `target` and syncs the folder: afterwards `target`
    /// holds the new content completely, even after a crash.
    pub fn commit(mut self, target: &Path) -> io::Result<()> {
        self.file.flush()?;
        self.file.sync_all()?;
        fs::rename(&self.path, target)?;
        self.committed = true;
        sync_dir(&parent_of(target))
    }
}

impl Write for TempFile {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        self.file.write(buf)
    }

    fn flush(&mut self) -> io::Result<()> {
        self.file.flush()
    }
}

impl Drop for TempFile {
    fn drop(&mut self) {
        if !self.committed {
            // Best effort: the file is ours and incomplete.
            let _ = fs::remove_file(&self.path);
        }
    }
}

/// Syncs a directory, so that renames inside it survive a crash.
pub fn sync_dir(dir: &Path) -> io::Result<()> {
    File::open(dir)?.sync_all()
}

/// Removes sextant's temporary files from `dir`. Call it only while holding `dir`'s
/// exclusive lock: every writer into a locked folder holds the lock, so what is left is a
/// leftover of a writer that was killed.
pub fn remove_leftovers(dir: &Path) {
    let Ok(entries) = fs::read_dir(dir) else {
        return;
    };
    for entry in entries.flatten() {
        let is_file = entry.file_type().is_ok_and(|t| t.is_file());
        if is_file && entry.file_name().to_string_lossy().starts_with(TEMP_PREFIX) {
            let _ = fs::remove_file(entry.path());
        }
    }
}

/// True for a name [`TempFile`] creates.
pub fn is_temp_name(name: &str) -> bool {
    name.starts_with(TEMP_PREFIX)
}

/// How a lock is held.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LockKind {
    /// Readers: many at once.
    Shared,
    /// Writers: one at a time, and no reader meanwhile.
    Exclusive,
}

/// An advisory lock (`flock`) on a directory, released on drop. The lock is taken on the
/// directory itself and re-checked after it is granted: if another directory was swapped in
/// at the path meanwhile, the new one is locked instead. On a file system that has no locks
/// (some network mounts) the handle is taken unlocked. The handle also reads files inside
/// the directory that was locked (see [`crate::model::dir`]).
#[derive(Debug)]
pub struct DirLock {
    dir: File,
    path: PathBuf,
}

impl DirLock {
    /// Locks `dir`, waiting for other holders.
    pub fn new(path: &Path, kind: LockKind) -> io::Result<Self> {
        loop {
            let dir = File::open(path)?;
            if !dir.metadata()?.is_dir() {
                return Err(io::Error::new(
                    io::ErrorKind::NotADirectory,
                    "is not a directory",
                ));
            }
            #[cfg(target_os = "linux")]
            {
                use rustix::fs::{FlockOperation, flock, fstat, stat};
                let op = match kind {
                    LockKind::Shared => FlockOperation::LockShared,
                    LockKind::Exclusive => FlockOperation::LockExclusive,
                };
                match flock(&dir, op) {
                    Ok(()) => {}
                    // File systems without locks (some network mounts): go on unlocked
                    // rather than refuse to read or write at all.
                    Err(e)
                        if e == rustix::io::Errno::NOLCK || e == rustix::io::Errno::OPNOTSUPP =>
                    {
                        return Ok(Self {
                            dir,
                            path: path.to_path_buf(),
                        });
                    }
                    Err(e) => return Err(e.into()),
                }
                let held = fstat(&dir)?;
                let now = stat(path)?;
                if held.st_ino != now.st_ino || held.st_dev != now.st_dev {
                    continue;
                }
            }
            #[cfg(not(target_os = "linux"))]
            let _ = kind;
            return Ok(Self {
                dir,
                path: path.to_path_buf(),
            });
        }
    }

    /// Locks `dir` exclusively if no one holds it; `Ok(None)` when someone does.
    pub fn try_exclusive(path: &Path) -> io::Result<Option<Self>> {
        let dir = File::open(path)?;
        #[cfg(target_os = "linux")]
        {
            use rustix::fs::{FlockOperation, flock};
            match flock(&dir, FlockOperation::NonBlockingLockExclusive) {
                Ok(()) => {}
                Err(e) if e == rustix::io::Errno::WOULDBLOCK => return Ok(None),
                Err(e) => return Err(e.into()),
            }
        }
        Ok(Some(Self {
            dir,
            path: path.to_path_buf(),
        }))
    }

    /// The path the lock was taken through.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The locked directory's open handle.
    pub fn handle(&self) -> &File {
        &self.dir
    }

    /// Device and inode of the locked directory: which generation of a model it is.
    pub fn identity(&self) -> Option<(u64, u64)> {
        identity(&self.dir.metadata().ok()?)
    }
}

/// Device and inode from metadata (None where the platform has neither).
pub fn identity(meta: &fs::Metadata) -> Option<(u64, u64)> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        Some((meta.dev(), meta.ino()))
    }
    #[cfg(not(unix))]
    {
        let _ = meta;
        None
    }
}

/// An operating-system error in words a user can act on: what happened and what to do.
pub fn describe_io(error: &io::Error) -> String {
    use io::ErrorKind as K;
    let advice = match error.kind() {
        K::NotFound => "it does not exist (is a folder on the path missing?)",
        K::PermissionDenied => "permission denied; choose a place you can write to",
        K::StorageFull => "the disk is full; free some space or choose another place",
        K::ReadOnlyFilesystem => "the file system is read-only; choose another place",
        K::QuotaExceeded => "your disk quota is used up; free some space or choose another place",
        K::DirectoryNotEmpty => "a folder there is not empty",
        K::ResourceBusy => "it is in use by the system (a mount point?); choose another place",
        K::CrossesDevices => "it is on another file system than its folder",
        K::NotADirectory => "a part of the path is not a folder",
        K::IsADirectory => "it is a folder; give a file name",
        K::FileTooLarge => "the file is too large for this file system",
        _ => "",
    };
    if advice.is_empty() {
        os_message(error)
    } else {
        advice.to_owned()
    }
}

/// A read failure in words: what happened, without the bare error number.
pub fn describe_read(error: &io::Error) -> String {
    use io::ErrorKind as K;
    match error.kind() {
        K::NotFound => "it does not exist; check the path".into(),
        K::PermissionDenied => "permission denied".into(),
        K::IsADirectory => "it is a folder, not a file".into(),
        K::NotADirectory => "a part of the path is not a folder".into(),
        _ => os_message(error),
    }
}

/// The operating system's message without its " (os error N)" tail.
fn os_message(error: &io::Error) -> String {
    let text = error.to_string();
    match (error.raw_os_error(), text.find(" (os error ")) {
        (Some(_), Some(cut)) => text[..cut].to_owned(),
        _ => text,
    }
}
