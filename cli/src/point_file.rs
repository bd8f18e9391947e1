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
    tmp: Pending,
    target: PathBuf,
}

/// The sinks of one run; see the module notes.
#[derive(Default)]
pub struct FileOutputs {
    staged: Mutex<Vec<Staged>>,
    /// Folders made for requested files, outermost first; each removed again (when still
    /// empty) unless published.
    made: Mutex<Vec<Pending>>,
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
            drop(d);
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
    /// deleted, and so are the folders made for them where they stay empty).
    pub fn publish(mut self) -> Result<(), (PathBuf, std::io::Error)> {
        let staged = std::mem::take(
            self.staged
                .get_mut()
                .unwrap_or_else(PoisonError::into_inner),
        );
        let mut staged = staged.into_iter();
        for s in staged.by_ref() {
            if let Err(e) = std::fs::rename(s.tmp.path(), &s.target) {
                return Err((s.target, e));
            }
            s.tmp.keep();
        }
        // Every file is in place: the folders stay, they hold the published files.
        for d in std::mem::take(self.made.get_mut().unwrap_or_else(PoisonError::into_inner)) {
            d.keep();
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
            match Pending::create_folder(&d) {
                Ok(p) => made.push(p),
                // Made meanwhile by another field of the same run or someone else: not ours.
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {}
                Err(e) => return Err(e),
            }
        }
        Ok(())
    }
}

impl Outputs for FileOutputs {
    fn open(&self, target: &Path) -> std::io::Result<Option<Box<dyn PointSink>>> {
        let keep_mode = crate::output::replaceable(target)?;
        let dir = match target.parent() {
            Some(p) if !p.as_os_str().is_empty() => p,
            _ => Path::new("."),
        };
        self.make_folders(dir)?;
        let (file, tmp) = Pending::create_file(dir, ".meshbound-", ".part")?;
        if let Some(perm) = keep_mode {
            file.set_permissions(perm)?;
        }
        let sink = DirectFile::new(file, tmp.path());
        self.staged
            .lock()
            .unwrap_or_else(PoisonError::into_inner)
            .push(Staged {
                tmp,
                target: target.to_path_buf(),
            });
        Ok(Some(Box::new(sink)))
    }
}
