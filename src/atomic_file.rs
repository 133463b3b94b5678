//! Atomic file output: every file the tool writes goes through here.
//!
//! A file is written to a temporary sibling in the same directory (so the final rename
//! never crosses a file system), flushed to disk and then renamed over the target. A
//! reader therefore sees either the old file or the complete new one, never a half
//! report. When anything fails before the rename (an unwritable directory, a full disk,
//! a renderer that errors half way) the temporary file is removed and the target is left
//! untouched. This module knows nothing of what it writes.

use std::fs;
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};

/// An output file could not be written. Carries the path the user asked for.
#[derive(Debug, thiserror::Error)]
#[error("cannot write `{}`: {source}", path.display())]
pub struct OutputError {
    pub path: PathBuf,
    #[source]
    pub source: io::Error,
}

/// A file to be written: a target path checked early (so a bad path fails in the first
/// second), whose temporary sibling is created only in [`PendingFile::commit_with`],
/// when the content is ready, and becomes the target on success. An interrupted run
/// (Ctrl-C, SIGTERM, SIGHUP) removes the temporary files it has open (see
/// [`interrupts`]); only `kill -9` can leave one, and only while a file is being written.
#[derive(Debug)]
pub struct PendingFile {
    target: PathBuf,
    dir: PathBuf,
}

impl PendingFile {
    /// Checks that `target` can be a file: its directory exists and is a directory, and
    /// `target` is not an existing directory. Creates nothing.
    pub fn create(target: &Path) -> Result<PendingFile, OutputError> {
        let err = |source| OutputError {
            path: target.to_path_buf(),
            source,
        };
        if target.file_name().is_none() {
            return Err(err(io::Error::new(
                io::ErrorKind::InvalidInput,
                "not a file name",
            )));
        }
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
        let meta = fs::metadata(&dir).map_err(err)?;
        if !meta.is_dir() {
            return Err(err(io::Error::new(
                io::ErrorKind::NotADirectory,
                format!("`{}` is not a directory", dir.display()),
            )));
        }
        if meta.permissions().readonly() {
            return Err(err(io::Error::new(
                io::ErrorKind::PermissionDenied,
                format!("the directory `{}` is read-only", dir.display()),
            )));
        }
        Ok(PendingFile {
            target: target.to_path_buf(),
            dir,
        })
    }

    /// The path the file will have once committed.
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// Writes the whole content into a fresh temporary sibling, syncs it to disk and
    /// renames it into place. On any error the temporary file is removed and the target
    /// is not touched.
    pub fn commit_with<F>(self, write: F) -> Result<(), OutputError>
    where
        F: FnOnce(&mut dyn Write) -> io::Result<()>,
    {
        let staged = self.stage_with(write)?;
        staged.persist()
    }

    /// Writes `bytes` as the whole content (see [`PendingFile::commit_with`]).
    pub fn commit(self, bytes: &[u8]) -> Result<(), OutputError> {
        self.commit_with(|w| w.write_all(bytes))
    }

    /// Writes and syncs the content into a temporary sibling, without renaming it: a set
    /// of files is staged first, then renamed together ([`commit_all`]).
    pub fn stage_with<F>(self, write: F) -> Result<StagedFile, OutputError>
    where
        F: FnOnce(&mut dyn Write) -> io::Result<()>,
    {
        let err = |source| OutputError {
            path: self.target.clone(),
            source,
        };
        let name = self
            .target
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        let prefix = format!(".{name}.");
        let mut builder = tempfile::Builder::new();
        builder.prefix(&prefix).suffix(".tmp");
        // A temporary file is private (0600) by default; the finished file is an ordinary
        // output, so it gets the usual 0666 less the umask, as `File::create` would give.
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            builder.permissions(std::fs::Permissions::from_mode(0o666));
        }
        let temp = builder.tempfile_in(&self.dir).map_err(err)?;
        let guard = interrupts::Registered::new(temp.path());
        let result = (|| {
            let mut out = BufWriter::new(temp.as_file());
            write(&mut out)?;
            out.flush()?;
            drop(out);
            temp.as_file().sync_all()
        })();
        match result {
            // On error `temp` is dropped here, which removes the file.
            Err(e) => Err(err(e)),
            Ok(()) => Ok(StagedFile {
                target: self.target,
                temp,
                _guard: guard,
            }),
        }
    }
}

/// Content written and synced beside its target, waiting to be renamed over it. Dropped
/// without [`StagedFile::persist`], it removes its temporary file.
#[derive(Debug)]
pub struct StagedFile {
    target: PathBuf,
    temp: tempfile::NamedTempFile,
    _guard: interrupts::Registered,
}

impl StagedFile {
    /// Renames the staged content over the target.
    pub fn persist(self) -> Result<(), OutputError> {
        let target = self.target;
        self.temp
            .persist(&target)
            .map(drop)
            .map_err(|e| OutputError {
                path: target,
                source: e.error,
            })
    }
}

/// Writes a set of files all-or-nothing as far as the file system allows: every file is
/// written and synced to its temporary sibling first (a full disk or a failing renderer
/// stops here, leaving every target untouched and no temporary file), then all are
/// renamed in the given order (put the file that refers to the others last).
pub fn commit_all(files: Vec<(PendingFile, Vec<u8>)>) -> Result<(), OutputError> {
    let mut staged = Vec::with_capacity(files.len());
    for (f, bytes) in files {
        staged.push(f.stage_with(|w| w.write_all(&bytes))?);
    }
    for s in staged {
        s.persist()?;
    }
    Ok(())
}

/// Removing temporary files when the process is interrupted. Paths of files being
/// written sit in a fixed table of C strings; the signal handler (installed once, for
/// SIGINT, SIGTERM and SIGHUP) unlinks each one, which is async-signal-safe, then
/// re-raises the signal with its default action so the exit status is the usual one.
pub mod interrupts {
    use std::path::Path;

    #[cfg(unix)]
    mod imp {
        use std::ffi::{c_char, c_int, CString};
        use std::os::unix::ffi::OsStrExt;
        use std::path::Path;
        use std::sync::atomic::{AtomicPtr, Ordering};
        use std::sync::Once;

        const SLOTS: usize = 64;
        static LIVE: [AtomicPtr<c_char>; SLOTS] =
            [const { AtomicPtr::new(std::ptr::null_mut()) }; SLOTS];
        static INSTALL: Once = Once::new();

        extern "C" fn on_signal(sig: c_int) {
            for slot in &LIVE {
                let p = slot.load(Ordering::SeqCst);
                if !p.is_null() {
                    // SAFETY: `p` is a NUL-terminated string owned by the table until
                    // `unregister` takes it out; unlink is async-signal-safe.
                    unsafe {
                        libc::unlink(p);
                    }
                }
            }
            // SAFETY: restoring the default action and re-raising are async-signal-safe.
            unsafe {
                libc::signal(sig, libc::SIG_DFL);
                libc::raise(sig);
            }
        }

        fn install() {
            INSTALL.call_once(|| {
                for sig in [libc::SIGINT, libc::SIGTERM, libc::SIGHUP] {
                    // SAFETY: `on_signal` only calls async-signal-safe functions.
                    unsafe {
                        libc::signal(sig, on_signal as *const () as libc::sighandler_t);
                    }
                }
            });
        }

        /// Puts `path` in the table; returns its slot, or `None` when the table is full
        /// (the file is then only removed on a normal exit or error).
        pub fn register(path: &Path) -> Option<usize> {
            install();
            let c = CString::new(path.as_os_str().as_bytes()).ok()?;
            let raw = c.into_raw();
            for (i, slot) in LIVE.iter().enumerate() {
                if slot
                    .compare_exchange(
                        std::ptr::null_mut(),
                        raw,
                        Ordering::SeqCst,
                        Ordering::SeqCst,
                    )
                    .is_ok()
                {
                    return Some(i);
                }
            }
            // SAFETY: `raw` came from `CString::into_raw` above and was not stored.
            drop(unsafe { CString::from_raw(raw) });
            None
        }

        pub fn unregister(slot: usize) {
            let p = LIVE[slot].swap(std::ptr::null_mut(), Ordering::SeqCst);
            if !p.is_null() {
                // SAFETY: `p` came from `CString::into_raw` in `register`.
                drop(unsafe { CString::from_raw(p) });
            }
        }
    }

    #[cfg(not(unix))]
    mod imp {
        pub fn register(_: &std::path::Path) -> Option<usize> {
            None
        }
        pub fn unregister(_: usize) {}
    }

    /// A temporary file listed for removal on interrupt while this value lives.
    #[derive(Debug)]
    pub struct Registered(Option<usize>);

    impl Registered {
        pub fn new(path: &Path) -> Registered {
            Registered(imp::register(path))
        }
    }

    impl Drop for Registered {
        fn drop(&mut self) {
            if let Some(slot) = self.0 {
                imp::unregister(slot);
            }
        }
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

    #[cfg(unix)]
    #[test]
    fn finished_files_are_not_private() {
        use std::os::unix::fs::PermissionsExt;
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("out.txt");
        PendingFile::create(&target).unwrap().commit(b"x").unwrap();
        let mode = std::fs::metadata(&target).unwrap().permissions().mode() & 0o777;
        // 0666 less the umask: readable by the group and others under the usual 022.
        assert_ne!(mode & 0o044, 0, "mode {mode:o}");
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
    fn nothing_is_created_before_the_content_is_ready() {
        let dir = tempfile::tempdir().unwrap();
        let pending = PendingFile::create(&dir.path().join("a.svg")).unwrap();
        assert!(
            entries(dir.path()).is_empty(),
            "no temporary file before commit"
        );
        drop(pending);
        assert!(entries(dir.path()).is_empty());
    }

    #[test]
    fn a_set_fails_whole_when_one_file_cannot_be_staged() {
        let dir = tempfile::tempdir().unwrap();
        let a = PendingFile::create(&dir.path().join("a.svg")).unwrap();
        let b = PendingFile::create(&dir.path().join("r.md")).unwrap();
        // The second file's staging fails (as a full disk would): nothing is renamed.
        let staged_a = a.stage_with(|w| w.write_all(b"<svg/>")).unwrap();
        let err = b
            .stage_with(|w| {
                w.write_all(b"# half")?;
                Err(io::Error::new(
                    io::ErrorKind::StorageFull,
                    "no space left on device",
                ))
            })
            .unwrap_err();
        assert!(err.to_string().contains("no space"), "{err}");
        drop(staged_a);
        assert!(entries(dir.path()).is_empty(), "{:?}", entries(dir.path()));
        // And a set that stages cleanly lands whole.
        commit_all(vec![
            (
                PendingFile::create(&dir.path().join("a.svg")).unwrap(),
                b"<svg/>".to_vec(),
            ),
            (
                PendingFile::create(&dir.path().join("r.md")).unwrap(),
                b"# r".to_vec(),
            ),
        ])
        .unwrap();
        assert_eq!(entries(dir.path()), vec!["a.svg", "r.md"]);
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
