//! Single-file outputs: `--report`, `--out`, `--csv` files, explanations, exports.
//!
//! What is at the path decides how it is written, and nothing there is ever destroyed:
//! - nothing: a new file, written under a temporary name and renamed into place;
//! - a regular file: replaced atomically the same way (its permission bits are kept), so
//!   an interrupted write leaves the old file whole;
//! - a device, FIFO or socket (`/dev/stdout`, a named pipe, a terminal): written in place,
//!   streamed, never replaced; so are paths under `/dev/` and `/proc/`;
//! - a symlink the user names: followed. If it points to a regular file, that file is
//!   replaced atomically and the link stays; a device or FIFO is written in place; a link
//!   pointing nowhere is refused;
//! - a folder: refused;
//! - `-`: standard output.
//!
//! Write errors (a full disk) are reported, naming the path; nothing is left behind under
//! a temporary name.

use std::fs::{self, File};
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};

use super::{TempFile, describe_io, parent_of};

/// Why an output could not be written.
#[derive(Debug, thiserror::Error)]
pub enum OutputError {
    /// What is at the path must not be written to (a folder, a dangling link): bad usage.
    #[error("{path}: {reason}")]
    Refused {
        /// The path as the user gave it.
        path: String,
        /// Why, and what to do.
        reason: String,
    },
    /// The write failed (full disk, permissions, …).
    #[error("{path}: cannot write: {reason}")]
    Io {
        /// The path as the user gave it.
        path: String,
        /// The failure in words a user can act on.
        reason: String,
        /// The operating system's error.
        #[source]
        source: io::Error,
    },
}

impl OutputError {
    /// A write failure at `path`.
    pub fn io(path: &Path, source: io::Error) -> Self {
        Self::Io {
            path: path.display().to_string(),
            reason: describe_io(&source),
            source,
        }
    }

    fn refused(path: &Path, reason: impl Into<String>) -> Self {
        Self::Refused {
            path: path.display().to_string(),
            reason: reason.into(),
        }
    }
}

/// How a path will be written.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Destination {
    /// `-`: standard output.
    Stdout,
    /// A device, FIFO or socket (or a path under `/dev/` or `/proc/`): written in place.
    InPlace(PathBuf),
    /// A regular file, existing or not: `real` (the path, or the regular file a symlink
    /// points to) is replaced atomically.
    Replace {
        /// The file that is written.
        real: PathBuf,
    },
}

/// Decides how `path` is written (see the module documentation).
pub fn destination(path: &Path) -> Result<Destination, OutputError> {
    if path.as_os_str() == "-" {
        return Ok(Destination::Stdout);
    }
    let system = path.starts_with("/dev") || path.starts_with("/proc");
    let link = match fs::symlink_metadata(path) {
        Ok(meta) => meta,
        Err(e) if e.kind() == io::ErrorKind::NotFound => {
            return Ok(Destination::Replace {
                real: path.to_path_buf(),
            });
        }
        Err(e) => return Err(OutputError::io(path, e)),
    };
    let target = if link.file_type().is_symlink() {
        match fs::metadata(path) {
            Ok(meta) => meta,
            Err(e) if e.kind() == io::ErrorKind::NotFound => {
                return Err(OutputError::refused(
                    path,
                    "is a symbolic link to a file that does not exist; \
                     remove the link or name the file itself",
                ));
            }
            Err(e) => return Err(OutputError::io(path, e)),
        }
    } else {
        link.clone()
    };
    let kind = target.file_type();
    if kind.is_dir() {
        return Err(OutputError::refused(
            path,
            "is a folder; give the name of a file to write",
        ));
    }
    if !kind.is_file() || system {
        return Ok(Destination::InPlace(path.to_path_buf()));
    }
    let real = if link.file_type().is_symlink() {
        fs::canonicalize(path).map_err(|e| OutputError::io(path, e))?
    } else {
        path.to_path_buf()
    };
    Ok(Destination::Replace { real })
}

enum Sink {
    Stdout(BufWriter<io::Stdout>),
    InPlace(BufWriter<File>),
    Temp(BufWriter<TempFile>, PathBuf),
}

/// An output being written; [`Output::finish`] completes it. Dropped unfinished, a
/// replaced file keeps its old content.
pub struct Output {
    shown: PathBuf,
    sink: Sink,
}

impl Output {
    /// Opens `path` for writing as its [`destination`] says.
    pub fn create(path: &Path) -> Result<Self, OutputError> {
        let sink = match destination(path)? {
            Destination::Stdout => Sink::Stdout(BufWriter::new(io::stdout())),
            Destination::InPlace(p) => {
                // No create, no truncate: a device or pipe is written as it is.
                let file = fs::OpenOptions::new()
                    .write(true)
                    .open(&p)
                    .map_err(|e| OutputError::io(path, e))?;
                Sink::InPlace(BufWriter::with_capacity(1 << 16, file))
            }
            Destination::Replace { real } => {
                let label = real
                    .file_name()
                    .map_or_else(|| "out".into(), |n| n.to_string_lossy().into_owned());
                let temp = TempFile::new_in(&parent_of(&real), &label)
                    .map_err(|e| OutputError::io(path, e))?;
                if let Ok(old) = fs::metadata(&real) {
                    temp.copy_permissions(&old)
                        .map_err(|e| OutputError::io(path, e))?;
                }
                Sink::Temp(BufWriter::with_capacity(1 << 16, temp), real)
            }
        };
        Ok(Self {
            shown: path.to_path_buf(),
            sink,
        })
    }

    /// The path as the user gave it.
    pub fn path(&self) -> &Path {
        &self.shown
    }

    /// Flushes and completes the output: a replaced file is synced and renamed into place.
    pub fn finish(self) -> Result<(), OutputError> {
        let shown = self.shown;
        let fail = |e: io::Error| OutputError::io(&shown, e);
        match self.sink {
            Sink::Stdout(mut w) => w.flush().map_err(fail),
            Sink::InPlace(mut w) => w.flush().map_err(fail),
            Sink::Temp(w, real) => {
                let temp = w.into_inner().map_err(|e| fail(e.into_error()))?;
                temp.commit(&real).map_err(fail)
            }
        }
    }
}

impl Write for Output {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        match &mut self.sink {
            Sink::Stdout(w) => w.write(buf),
            Sink::InPlace(w) => w.write(buf),
            Sink::Temp(w, _) => w.write(buf),
        }
    }

    fn flush(&mut self) -> io::Result<()> {
        match &mut self.sink {
            Sink::Stdout(w) => w.flush(),
            Sink::InPlace(w) => w.flush(),
            Sink::Temp(w, _) => w.flush(),
        }
    }
}

/// Writes `bytes` to `path` (see the module documentation for what happens at the path).
pub fn write_file(path: &Path, bytes: &[u8]) -> Result<(), OutputError> {
    write_with(path, |w| w.write_all(bytes))
}

/// Streams into `path` through `write`, then completes it.
pub fn write_with(
    path: &Path,
    write: impl FnOnce(&mut Output) -> io::Result<()>,
) -> Result<(), OutputError> {
    let mut out = Output::create(path)?;
    write(&mut out).map_err(|e| OutputError::io(path, e))?;
    out.finish()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn temp_names(dir: &Path) -> Vec<String> {
        fs::read_dir(dir)
            .unwrap()
            .flatten()
            .map(|e| e.file_name().to_string_lossy().into_owned())
            .filter(|n| super::super::is_temp_name(n))
            .collect()
    }

    #[test]
    fn a_regular_file_is_replaced_whole_and_keeps_its_mode() {
        use std::os::unix::fs::PermissionsExt;
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("report.md");
        fs::write(&path, "old").unwrap();
        fs::set_permissions(&path, fs::Permissions::from_mode(0o600)).unwrap();
        write_file(&path, b"new").unwrap();
        assert_eq!(fs::read_to_string(&path).unwrap(), "new");
        assert_eq!(
            fs::metadata(&path).unwrap().permissions().mode() & 0o777,
            0o600
        );
        assert!(temp_names(dir.path()).is_empty());
    }

    #[test]
    fn a_failed_write_keeps_the_old_file_and_leaves_no_temporary() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("list.csv");
        fs::write(&path, "old").unwrap();
        let err = write_with(&path, |w| {
            w.write_all(b"half")?;
            Err(io::Error::other("stopped"))
        })
        .unwrap_err();
        assert!(err.to_string().contains("list.csv"), "{err}");
        assert_eq!(fs::read_to_string(&path).unwrap(), "old");
        assert!(temp_names(dir.path()).is_empty());
    }

    #[test]
    fn a_symlink_to_a_regular_file_replaces_the_file_and_keeps_the_link() {
        let dir = tempfile::tempdir().unwrap();
        let real = dir.path().join("real.md");
        let link = dir.path().join("link.md");
        fs::write(&real, "old").unwrap();
        std::os::unix::fs::symlink(&real, &link).unwrap();
        write_file(&link, b"new").unwrap();
        assert!(
            fs::symlink_metadata(&link)
                .unwrap()
                .file_type()
                .is_symlink()
        );
        assert_eq!(fs::read_to_string(&real).unwrap(), "new");
    }

    #[test]
    fn folders_and_dangling_links_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let err = write_file(dir.path(), b"x").unwrap_err();
        assert!(matches!(err, OutputError::Refused { .. }), "{err}");
        let link = dir.path().join("nowhere.md");
        std::os::unix::fs::symlink(dir.path().join("missing"), &link).unwrap();
        let err = write_file(&link, b"x").unwrap_err();
        assert!(err.to_string().contains("does not exist"), "{err}");
        assert!(
            fs::symlink_metadata(&link)
                .unwrap()
                .file_type()
                .is_symlink()
        );
    }

    #[test]
    fn a_full_device_is_an_error_naming_the_path() {
        // Only the real device (a character device) shows a full disk.
        let device = fs::metadata("/dev/full").is_ok_and(|m| !m.is_file() && !m.is_dir());
        if !device {
            return;
        }
        let err = write_file(Path::new("/dev/full"), &vec![b'x'; 100_000]).unwrap_err();
        assert!(matches!(err, OutputError::Io { .. }), "{err}");
        assert!(
            err.to_string()
                .contains("/dev/full: cannot write: the disk is full"),
            "{err}"
        );
        // The device is still a device.
        assert!(!fs::metadata("/dev/full").unwrap().is_file());
    }
}
