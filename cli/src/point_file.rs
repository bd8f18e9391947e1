//! Per-point files: the command line's sinks for the files a study asks to write.
//!
//! [`FileOutputs`] hands the library one [`DirectFile`] per requested file: a temporary file
//! beside the target (hidden, `.meshbound-….part`), registered for deletion on interruption
//! while it exists. Nothing is visible until [`FileOutputs::publish`] renames every finished
//! temporary onto its target, which the command does only once the whole study succeeded;
//! dropping the value instead deletes them all, so a refused or failing run leaves nothing.
//!
//! The bytes go through [`DirectFile`] (past the page cache on Linux). The file is not flushed
//! (no fsync) before the rename: that flush adds a wait on the disk for output that a rerun
//! rebuilds. The cost is durability, not atomicity: after a power loss or an operating-system
//! crash within the seconds after a run, the file may be missing or incomplete, so rerun the
//! assessment after such a crash.

use crate::output::Pending;
use meshbound::sink::{DirectFile, Outputs, PointSink};
use std::path::{Path, PathBuf};
use std::sync::{Mutex, PoisonError};

/// A requested file being written: its temporary (deleted on drop) and its target.
struct Staged {
    tmp: tempfile::TempPath,
    target: PathBuf,
    _pending: Pending,
}

/// A folder made for a requested file; removed again (when still empty) unless published.
struct MadeDir {
    path: PathBuf,
    _pending: Pending,
}

/// The sinks of one run; see the module notes.
#[derive(Default)]
pub struct FileOutputs {
    staged: Mutex<Vec<Staged>>,
    made: Mutex<Vec<MadeDir>>,
}

impl Drop for FileOutputs {
    fn drop(&mut self) {
        // Unpublished: the temporaries go first (their own drop), then the folders made for
        // them, innermost first, where nothing else has appeared in them.
        self.staged
            .get_mut()
            .unwrap_or_else(PoisonError::into_inner)
            .clear();
        let made = self.made.get_mut().unwrap_or_else(PoisonError::into_inner);
        while let Some(d) = made.pop() {
            let _ = std::fs::remove_dir(&d.path);
        }
    }
}

impl FileOutputs {
    /// No files yet.
    pub fn new() -> Self {
        Self::default()
    }

    /// Renames every temporary onto its target, in the order they were opened. Returns the
    /// target and error of the first rename that failed (the temporaries not yet renamed are
    /// deleted).
    pub fn publish(mut self) -> Result<(), (PathBuf, std::io::Error)> {
        let staged = std::mem::take(
            self.staged
                .get_mut()
                .unwrap_or_else(PoisonError::into_inner),
        );
        // The folders stay: they hold the published files.
        self.made
            .get_mut()
            .unwrap_or_else(PoisonError::into_inner)
            .clear();
        for s in staged {
            let Staged {
                tmp,
                target,
                _pending,
            } = s;
            tmp.persist(&target)
                .map_err(|e| (target.clone(), e.error))?;
        }
        Ok(())
    }
}

impl FileOutputs {
    /// Creates the missing folders of `dir`, outermost first, each registered for deletion on
    /// interruption and remembered for removal when the run is not published. (The study
    /// reader has checked that they lie inside the study's folder or a folder the user allowed.)
    fn make_folders(&self, dir: &Path) -> std::io::Result<()> {
        let mut missing = Vec::new();
        let mut d = dir;
        while !d.as_os_str().is_empty() && std::fs::symlink_metadata(d).is_err() {
            missing.push(d.to_path_buf());
            match d.parent() {
                Some(p) => d = p,
                None => break,
            }
        }
        let mut made = self.made.lock().unwrap_or_else(PoisonError::into_inner);
        for d in missing.into_iter().rev() {
            let pending = Pending::new(&d);
            std::fs::create_dir(&d)?;
            made.push(MadeDir {
                path: d,
                _pending: pending,
            });
        }
        Ok(())
    }
}

impl Outputs for FileOutputs {
    fn open(&self, target: &Path) -> std::io::Result<Option<Box<dyn PointSink>>> {
        let dir = match target.parent() {
            Some(p) if !p.as_os_str().is_empty() => p,
            _ => Path::new("."),
        };
        self.make_folders(dir)?;
        let tmp = tempfile::Builder::new()
            .prefix(".meshbound-")
            .suffix(".part")
            .tempfile_in(dir)?;
        let pending = Pending::new(tmp.path());
        let (file, path) = tmp.into_parts();
        let sink = DirectFile::new(file, &path);
        self.staged
            .lock()
            .unwrap_or_else(PoisonError::into_inner)
            .push(Staged {
                tmp: path,
                target: target.to_path_buf(),
                _pending: pending,
            });
        Ok(Some(Box::new(sink)))
    }
}
