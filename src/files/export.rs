//! The folder of `sextant export`: new, empty, or holding an earlier export, never anyone
//! else's files.
//!
//! An export folder carries a small marker naming the files the export wrote:
//! [`FolderKind::Export`]'s `sextant-export.ron` for `sextant export`,
//! [`FolderKind::AuditCsv`]'s `sextant-audit.ron` for `sextant audit --csv`. Each kind only
//! writes into its own folders, so one never removes the other's files.
//! The marker is written first (listing every file the export may leave), then each file
//! under a temporary name renamed into place, then the marker again with exactly the files
//! written; files an earlier export wrote and this one did not are removed. So a killed
//! export leaves complete files or none under their final names, and the folder stays
//! recognisable for the next export. The folder is locked while it is written: two exports
//! into one folder take turns, and temporary files found under the lock are leftovers of a
//! killed export, removed.

use std::fs;
use std::io;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::output::OutputError;
use super::{DirLock, LockKind, TempFile, is_temp_name, remove_leftovers};

/// Which command owns a folder.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FolderKind {
    /// `sextant export`.
    Export,
    /// `sextant audit --csv`.
    AuditCsv,
}

impl FolderKind {
    /// The marker file's name.
    pub fn marker(self) -> &'static str {
        match self {
            Self::Export => "sextant-export.ron",
            Self::AuditCsv => "sextant-audit.ron",
        }
    }

    fn tag(self) -> &'static str {
        match self {
            Self::Export => "sextant-export",
            Self::AuditCsv => "sextant-audit",
        }
    }

    fn what(self) -> &'static str {
        match self {
            Self::Export => "export",
            Self::AuditCsv => "audit --csv",
        }
    }
}
const VERSION: u32 = 1;
/// Largest marker read.
const MAX_MARKER_BYTES: u64 = 1 << 20;

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct Marker {
    format: String,
    version: u32,
    files: Vec<String>,
}

/// An export folder, locked for writing.
#[derive(Debug)]
pub struct ExportFolder {
    kind: FolderKind,
    lock: DirLock,
    previous: Vec<String>,
    written: Vec<String>,
}

impl ExportFolder {
    /// Opens (creating it if missing) the folder `dir` for an export that will write
    /// `planned` files. Refuses a folder holding anything but an earlier export, naming
    /// the files in the way.
    pub fn open(dir: &Path, kind: FolderKind, planned: &[&str]) -> Result<Self, OutputError> {
        let marker = kind.marker();
        let refuse = |reason: String| OutputError::Refused {
            path: dir.display().to_string(),
            reason,
        };
        match fs::symlink_metadata(dir) {
            Err(e) if e.kind() == io::ErrorKind::NotFound => {
                fs::create_dir_all(dir).map_err(|e| OutputError::io(dir, e))?;
            }
            Err(e) => return Err(OutputError::io(dir, e)),
            Ok(_) => {}
        }
        if !fs::metadata(dir)
            .map_err(|e| OutputError::io(dir, e))?
            .is_dir()
        {
            return Err(refuse(
                "is not a folder; give --out a new or empty folder".into(),
            ));
        }
        let lock = DirLock::new(dir, LockKind::Exclusive).map_err(|e| OutputError::io(dir, e))?;
        remove_leftovers(dir);
        let mut names: Vec<String> = fs::read_dir(dir)
            .map_err(|e| OutputError::io(dir, e))?
            .flatten()
            .map(|e| e.file_name().to_string_lossy().into_owned())
            .filter(|n| !is_temp_name(n))
            .collect();
        names.sort();
        let previous = if names.is_empty() {
            Vec::new()
        } else if names.iter().any(|n| n == marker) {
            read_marker(&dir.join(marker), kind).map_err(|why| {
                refuse(format!(
                    "holds a {marker} that is not sextant's ({why}); \
                     choose a new or empty folder"
                ))
            })?
        } else {
            let shown: Vec<String> = names.iter().take(5).map(|n| format!("'{n}'")).collect();
            return Err(refuse(format!(
                "is not empty and holds no earlier output of sextant {} ({} file(s): {}{}); \
                 it writes only into a new or empty folder or one it wrote before, so \
                 nothing of yours is overwritten: choose another folder",
                kind.what(),
                names.len(),
                shown.join(", "),
                if names.len() > 5 { ", …" } else { "" }
            )));
        };
        let folder = Self {
            kind,
            lock,
            previous,
            written: Vec::new(),
        };
        let mut listed: Vec<String> = folder.previous.clone();
        listed.extend(planned.iter().map(|s| (*s).to_owned()));
        listed.sort();
        listed.dedup();
        folder.write_marker(&listed)?;
        Ok(folder)
    }

    /// The folder.
    pub fn path(&self) -> &Path {
        self.lock.path()
    }

    /// Writes file `name` in the folder: the content goes to a temporary file through
    /// `write`, which is then synced and renamed into place.
    pub fn write(
        &mut self,
        name: &str,
        write: impl FnOnce(&mut fs::File) -> io::Result<()>,
    ) -> Result<(), OutputError> {
        let target = self.path().join(name);
        let fail = |e| OutputError::io(&target, e);
        let mut temp = TempFile::new_in(self.path(), name).map_err(fail)?;
        write(temp.file()).map_err(fail)?;
        temp.commit(&target).map_err(fail)?;
        self.written.push(name.to_owned());
        Ok(())
    }

    /// Records exactly the files written and removes the ones an earlier export wrote that
    /// this one did not.
    pub fn finish(self) -> Result<Vec<PathBuf>, OutputError> {
        let mut written = self.written.clone();
        written.sort();
        self.write_marker(&written)?;
        let mut removed = Vec::new();
        for old in self.previous.iter().filter(|n| !written.contains(n)) {
            let path = self.path().join(old);
            if Path::new(old).components().count() == 1
                && fs::symlink_metadata(&path).is_ok_and(|m| m.is_file())
                && fs::remove_file(&path).is_ok()
            {
                removed.push(path);
            }
        }
        Ok(removed)
    }

    fn write_marker(&self, files: &[String]) -> Result<(), OutputError> {
        let marker = Marker {
            format: self.kind.tag().into(),
            version: VERSION,
            files: files.to_vec(),
        };
        let config = ron::ser::PrettyConfig::new().struct_names(false);
        let mut text = ron::ser::to_string_pretty(&marker, config).expect("a marker serialises");
        text.push('\n');
        let marker = self.kind.marker();
        let target = self.path().join(marker);
        let fail = |e| OutputError::io(&target, e);
        let mut temp = TempFile::new_in(self.path(), marker).map_err(fail)?;
        io::Write::write_all(temp.file(), text.as_bytes()).map_err(fail)?;
        temp.commit(&target).map_err(fail)
    }
}

fn read_marker(path: &Path, kind: FolderKind) -> Result<Vec<String>, String> {
    let meta = fs::symlink_metadata(path).map_err(|e| e.to_string())?;
    if !meta.is_file() || meta.len() > MAX_MARKER_BYTES {
        return Err("not a small regular file".into());
    }
    let bytes = fs::read(path).map_err(|e| e.to_string())?;
    let text = std::str::from_utf8(&bytes).map_err(|_| "not UTF-8 text".to_owned())?;
    let marker: Marker = ron::from_str(text).map_err(|e| e.code.to_string())?;
    if marker.format != kind.tag() || marker.version != VERSION {
        return Err(format!(
            "format '{}' version {}",
            marker.format, marker.version
        ));
    }
    Ok(marker.files)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(dir: &Path) -> Vec<String> {
        let mut n: Vec<String> = fs::read_dir(dir)
            .unwrap()
            .flatten()
            .map(|e| e.file_name().to_string_lossy().into_owned())
            .collect();
        n.sort();
        n
    }

    #[test]
    fn a_folder_of_someone_elses_files_is_refused_and_untouched() {
        let dir = tempfile::tempdir().unwrap();
        fs::write(dir.path().join("items.csv"), "mine").unwrap();
        let err = ExportFolder::open(dir.path(), FolderKind::Export, &["items.csv"]).unwrap_err();
        assert!(matches!(err, OutputError::Refused { .. }));
        assert!(err.to_string().contains("'items.csv'"), "{err}");
        assert_eq!(names(dir.path()), ["items.csv"]);
        assert_eq!(
            fs::read_to_string(dir.path().join("items.csv")).unwrap(),
            "mine"
        );
    }

    #[test]
    fn an_earlier_export_is_replaced_and_its_stale_files_go() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("export");
        let mut f = ExportFolder::open(&out, FolderKind::Export, &["a.csv", "b.csv"]).unwrap();
        f.write("a.csv", |w| io::Write::write_all(w, b"1")).unwrap();
        f.write("b.csv", |w| io::Write::write_all(w, b"2")).unwrap();
        f.finish().unwrap();
        assert_eq!(names(&out), ["a.csv", "b.csv", FolderKind::Export.marker()]);
        let mut f = ExportFolder::open(&out, FolderKind::Export, &["a.parquet"]).unwrap();
        f.write("a.parquet", |w| io::Write::write_all(w, b"3"))
            .unwrap();
        let removed = f.finish().unwrap();
        assert_eq!(removed.len(), 2);
        assert_eq!(names(&out), ["a.parquet", FolderKind::Export.marker()]);
    }

    #[test]
    fn an_audit_never_writes_into_an_export_folder() {
        let dir = tempfile::tempdir().unwrap();
        let f = ExportFolder::open(dir.path(), FolderKind::Export, &["a.csv"]).unwrap();
        f.finish().unwrap();
        let err = ExportFolder::open(dir.path(), FolderKind::AuditCsv, &["a.csv"]).unwrap_err();
        assert!(err.to_string().contains("'sextant-export.ron'"), "{err}");
    }

    #[test]
    fn a_killed_export_leaves_a_folder_the_next_one_accepts() {
        let dir = tempfile::tempdir().unwrap();
        let mut f = ExportFolder::open(dir.path(), FolderKind::Export, &["a.csv"]).unwrap();
        // A failed write leaves nothing under the final name.
        let err = f.write("a.csv", |w| {
            io::Write::write_all(w, b"half")?;
            Err(io::Error::other("killed"))
        });
        assert!(err.is_err());
        drop(f);
        assert_eq!(names(dir.path()), [FolderKind::Export.marker()]);
        let f = ExportFolder::open(dir.path(), FolderKind::Export, &["a.csv"]).unwrap();
        f.finish().unwrap();
    }
}
