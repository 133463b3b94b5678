//! Atomic file output: every file the tool writes goes through here.
//!
//! A file is written to a temporary sibling in the same directory (so the final rename
//! never crosses a file system), flushed to disk and then renamed over the target. A
//! reader therefore sees either the old file or the complete new one, never a half
//! report. When anything fails before the rename (an unwritable directory, a full disk,
//! a renderer that errors half way) the temporary file is removed and the target is left
//! untouched. This module knows nothing of what it writes.

use std::fs::{self, File, OpenOptions};
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU32, Ordering};

/// An output file could not be written. Carries the path the user asked for.
#[derive(Debug, thiserror::Error)]
#[error("cannot write `{}`: {source}", path.display())]
pub struct OutputError {
    pub path: PathBuf,
    #[source]
    pub source: io::Error,
}

/// A file being written: a temporary sibling of `target` that becomes `target` only on
/// [`PendingFile::commit`]. Dropped uncommitted, it removes its temporary file.
///
/// Create it before the long work starts, so a bad path fails in the first second.
#[derive(Debug)]
pub struct PendingFile {
    target: PathBuf,
    temp: PathBuf,
    file: Option<File>,
}

/// Distinguishes temporary files of one process (several outputs may be pending at once).
static COUNTER: AtomicU32 = AtomicU32::new(0);

impl PendingFile {
    /// Opens a fresh temporary file beside `target`. Fails when the directory does not
    /// exist or cannot be written, or when `target` is an existing directory.
    pub fn create(target: &Path) -> Result<PendingFile, OutputError> {
        let err = |source| OutputError {
            path: target.to_path_buf(),
            source,
        };
        let name = target.file_name().ok_or_else(|| {
            err(io::Error::new(
                io::ErrorKind::InvalidInput,
                "not a file name",
            ))
        })?;
        if target.is_dir() {
            return Err(err(io::Error::new(
                io::ErrorKind::InvalidInput,
                "it is a directory; give a file name",
            )));
        }
        let dir = match target.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        let temp = dir.join(format!(
            ".{}.{}-{}.tmp",
            name.to_string_lossy(),
            std::process::id(),
            COUNTER.fetch_add(1, Ordering::Relaxed)
        ));
        let file = OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&temp)
            .map_err(err)?;
        Ok(PendingFile {
            target: target.to_path_buf(),
            temp,
            file: Some(file),
        })
    }

    /// The path the file will have once committed.
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// Writes the whole content with `write`, syncs it and renames it into place. On any
    /// error the temporary file is removed and the target is not touched.
    pub fn commit_with<F>(mut self, write: F) -> Result<(), OutputError>
    where
        F: FnOnce(&mut dyn Write) -> io::Result<()>,
    {
        let file = self.file.take().expect("a pending file is committed once");
        let result = (|| {
            let mut out = BufWriter::new(file);
            write(&mut out)?;
            let file = out.into_inner().map_err(|e| e.into_error())?;
            file.sync_all()?;
            drop(file);
            fs::rename(&self.temp, &self.target)
        })();
        result.map_err(|source| OutputError {
            path: self.target.clone(),
            source,
        })
        // On error, Drop removes the temporary file; after a rename there is none left.
    }

    /// Writes `bytes` as the whole content (see [`PendingFile::commit_with`]).
    pub fn commit(self, bytes: &[u8]) -> Result<(), OutputError> {
        self.commit_with(|w| w.write_all(bytes))
    }
}

impl Drop for PendingFile {
    fn drop(&mut self) {
        self.file.take();
        // Missing after a successful rename; any other failure leaves nothing to do.
        let _ = fs::remove_file(&self.temp);
    }
}

/// Writes `bytes` to `path` atomically.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), OutputError> {
    PendingFile::create(path)?.commit(bytes)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn entries(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn writes_and_replaces_whole_files() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("out.txt");
        write_atomically(&path, b"first").unwrap();
        write_atomically(&path, b"second").unwrap();
        assert_eq!(fs::read_to_string(&path).unwrap(), "second");
        assert_eq!(entries(dir.path()), vec!["out.txt"]);
    }

    #[test]
    fn failing_writer_leaves_no_file_and_keeps_the_old_one() {
        let dir = tempfile::tempdir().unwrap();
        let fresh = dir.path().join("fresh.html");
        let err = PendingFile::create(&fresh)
            .unwrap()
            .commit_with(|w| {
                w.write_all(b"<html>half a report")?;
                Err(io::Error::other("renderer failed"))
            })
            .unwrap_err();
        assert!(err.to_string().contains("renderer failed"), "{err}");
        assert!(!fresh.exists());

        let old = dir.path().join("old.html");
        fs::write(&old, "complete old report").unwrap();
        let _ = PendingFile::create(&old)
            .unwrap()
            .commit_with(|w| {
                w.write_all(&[b'x'; 100_000])?;
                Err(io::Error::other("interrupted"))
            })
            .unwrap_err();
        assert_eq!(fs::read_to_string(&old).unwrap(), "complete old report");
        assert_eq!(entries(dir.path()), vec!["old.html"]);
    }

    #[test]
    fn dropped_before_commit_leaves_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let pending = PendingFile::create(&dir.path().join("a.svg")).unwrap();
        assert_eq!(entries(dir.path()).len(), 1, "the temporary file exists");
        drop(pending);
        assert!(entries(dir.path()).is_empty());
    }

    #[test]
    fn missing_directory_fails_early_and_names_the_path() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("no-such-dir").join("r.html");
        let err = PendingFile::create(&path).unwrap_err();
        assert!(err.to_string().contains("no-such-dir"), "{err}");
        assert!(!path.exists());
    }

    #[test]
    fn a_directory_is_not_a_target() {
        let dir = tempfile::tempdir().unwrap();
        let err = write_atomically(dir.path(), b"x").unwrap_err();
        assert!(err.to_string().contains("directory"), "{err}");
    }

    #[test]
    fn unwritable_location_leaves_no_partial_file() {
        // A regular file where a directory should be: no one, root included, can create
        // a file below it, so this holds whatever user runs the tests.
        let dir = tempfile::tempdir().unwrap();
        let blocker = dir.path().join("plain-file");
        fs::write(&blocker, b"").unwrap();
        let err = write_atomically(&blocker.join("r.html"), b"report").unwrap_err();
        assert!(err.to_string().contains("plain-file"), "{err}");
        assert_eq!(entries(dir.path()), vec!["plain-file"]);
    }
}
