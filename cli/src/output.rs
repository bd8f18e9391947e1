//! Writing outputs atomically: a temporary file beside the target, then a rename, so that a
//! reader never sees a half-written file and a failure leaves nothing behind.
//!
//! # Interruption
//! Temporary files and folders are registered while they exist ([`Pending`]); the command's
//! handler of SIGINT, SIGTERM and SIGHUP deletes every registered path ([`discard_pending`])
//! before the process ends. Steps that must not be cut halfway — writing one file into a
//! temporary folder, renaming a folder into place — run while holding [`hold`], so the handler
//! waits for them: an interrupted command leaves either the finished output or nothing, and no
//! temporary file. Nothing can run on SIGKILL or a power cut: then a temporary file or folder
//! may stay, always hidden beside its target and named `.meshbound-….part` (files) or
//! `.DIR.meshbound-…` (report folders), and safe to delete.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::{Mutex, MutexGuard, PoisonError};

/// Temporary paths of outputs being written (see the module notes).
static PENDING: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

/// Holds off the interruption handler: while the guard lives, [`discard_pending`] cannot run.
/// Take it around a step that must not be cut halfway; never across a long computation.
pub fn hold() -> MutexGuard<'static, Vec<PathBuf>> {
    PENDING.lock().unwrap_or_else(PoisonError::into_inner)
}

/// A temporary path registered for deletion on interruption while the value lives.
#[derive(Debug)]
pub struct Pending(PathBuf);

impl Pending {
    /// Registers `path`.
    pub fn new(path: &Path) -> Self {
        hold().push(path.to_path_buf());
        Pending(path.to_path_buf())
    }
}

impl Drop for Pending {
    fn drop(&mut self) {
        let mut list = hold();
        if let Some(i) = list.iter().rposition(|p| *p == self.0) {
            list.remove(i);
        }
    }
}

/// Deletes every registered temporary path (files and folders), for the interruption handler:
/// call it with the guard of [`hold`] and end the process while still holding it. Returns the
/// paths that could not be deleted.
pub fn discard_pending(list: &mut Vec<PathBuf>) -> Vec<PathBuf> {
    let mut left = Vec::new();
    for p in list.drain(..) {
        let gone = match std::fs::symlink_metadata(&p) {
            Ok(m) if m.is_dir() => std::fs::remove_dir_all(&p),
            Ok(_) => std::fs::remove_file(&p),
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(()),
            Err(e) => Err(e),
        };
        if gone.is_err() {
            left.push(p);
        }
    }
    left
}

/// Why an output could not be written.
#[derive(Debug, thiserror::Error)]
#[error("cannot write {path}: {source}")]
pub struct OutputError {
    /// The target path.
    pub path: String,
    /// The underlying error.
    #[source]
    pub source: std::io::Error,
}

/// Writes `bytes` to `path` (or to stdout when `path` is `-`) atomically.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), OutputError> {
    let fail = |source| OutputError {
        path: path.display().to_string(),
        source,
    };
    if path.as_os_str() == "-" {
        let mut out = std::io::stdout().lock();
        return match out.write_all(bytes).and_then(|_| out.flush()) {
            Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
            r => r.map_err(fail),
        };
    }
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let mut tmp = tempfile::Builder::new()
        .prefix(".meshbound-")
        .suffix(".part")
        .tempfile_in(dir)
        .map_err(fail)?;
    // The rename is atomic and so is the handler's deletion: no hold needed for one file.
    let _pending = Pending::new(tmp.path());
    tmp.write_all(bytes).map_err(fail)?;
    tmp.as_file().sync_all().map_err(fail)?;
    tmp.persist(path).map_err(|e| fail(e.error))?;
    Ok(())
}
