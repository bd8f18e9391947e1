//! Writing outputs atomically: a temporary file beside the target, then a rename, so that a
//! reader never sees a half-written file and a failure leaves nothing behind.
//!
//! # Interruption
//! Temporary files and folders are registered while they exist ([`Pending`]): the name is
//! registered and the file or folder created while holding the registry's lock ([`hold`]), and
//! on drop it is deleted and only then unregistered, again under the lock, so there is no
//! moment when a temporary exists unregistered. The command's handler of SIGINT, SIGTERM and
//! SIGHUP takes the same lock and deletes every registered path ([`discard_pending`]) before
//! the process ends. Steps that must not be cut halfway — writing one file into a temporary
//! folder, renaming a folder into place — also run while holding [`hold`], so the handler
//! waits for them: an interrupted command leaves either the finished output or nothing, and no
//! temporary file. Nothing can run on SIGKILL or a power cut: then a temporary file or folder
//! may stay, always hidden beside its target and named `.meshbound-….part` (files) or
//! `.DIR.meshbound-…` (report folders), and safe to delete.
//!
//! # Modes
//! A new output gets the mode `0666` (folders `0777`) less the umask, as any file a command
//! makes; an output that replaces a regular file keeps that file's mode. Only regular files
//! are replaced: a device, a FIFO, a folder or a socket named as output is refused.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Mutex, MutexGuard, PoisonError};

/// Temporary paths of outputs being written (see the module notes).
static PENDING: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

/// Holds off the interruption handler: while the guard lives, [`discard_pending`] cannot run.
/// Take it around a step that must not be cut halfway; never across a long computation.
pub fn hold() -> MutexGuard<'static, Vec<PathBuf>> {
    PENDING.lock().unwrap_or_else(PoisonError::into_inner)
}

/// Test hook, for the integration tests only: with `MESHBOUND_TEST_PAUSE_MS=N` in the
/// environment the command pauses N milliseconds right after creating each temporary file or
/// folder, so that a test can send a signal exactly there. Not for users.
pub fn test_pause() {
    if let Some(ms) = std::env::var_os("MESHBOUND_TEST_PAUSE_MS")
        .and_then(|v| v.to_str().and_then(|s| s.parse::<u64>().ok()))
    {
        std::thread::sleep(std::time::Duration::from_millis(ms));
    }
}

/// What a registered path is, and so how a drop deletes it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    /// A temporary file.
    File,
    /// A temporary folder (deleted with everything in it).
    Tree,
    /// A folder made for an output (deleted only while empty).
    Folder,
    /// Renamed into place or kept: a drop only unregisters it.
    Kept,
}

/// A temporary path registered for deletion on interruption while the value lives; dropping
/// it deletes the path first and then unregisters it. [`Pending::keep`] unregisters it without
/// deleting (after it was renamed into place).
#[derive(Debug)]
pub struct Pending {
    path: PathBuf,
    kind: Kind,
}

/// A name nothing in this process has used: process id, a counter and the clock.
fn fresh(prefix: &str, suffix: &str) -> String {
    static COUNT: AtomicU64 = AtomicU64::new(0);
    let n = COUNT.fetch_add(1, Ordering::Relaxed);
    let t = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.subsec_nanos());
    format!("{prefix}{}-{n}-{t:08x}{suffix}", std::process::id())
}

impl Pending {
    /// Registers `path` and runs `make` to create it, both under the registry's lock; on
    /// failure the registration is withdrawn.
    fn create<T>(
        path: PathBuf,
        kind: Kind,
        make: impl FnOnce(&Path) -> std::io::Result<T>,
    ) -> std::io::Result<(T, Pending)> {
        let made = {
            let mut list = hold();
            list.push(path.clone());
            let made = make(&path);
            if made.is_err() {
                list.pop();
            }
            made
        }?;
        test_pause();
        Ok((made, Pending { path, kind }))
    }

    /// Creates a new temporary file in `dir` named `{prefix}…{suffix}`, with `mode` less the
    /// umask, registered before it exists.
    pub fn create_file(
        dir: &Path,
        prefix: &str,
        suffix: &str,
    ) -> std::io::Result<(std::fs::File, Pending)> {
        loop {
            let path = dir.join(fresh(prefix, suffix));
            let r = Pending::create(path, Kind::File, |p| {
                let mut o = std::fs::OpenOptions::new();
                o.write(true).create_new(true);
                #[cfg(unix)]
                std::os::unix::fs::OpenOptionsExt::mode(&mut o, 0o666);
                o.open(p)
            });
            match r {
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
                r => return r,
            }
        }
    }

    /// Creates a new temporary folder in `dir` named `{prefix}…` (mode `0777` less the umask),
    /// registered before it exists; a drop deletes it with everything in it.
    pub fn create_tree(dir: &Path, prefix: &str) -> std::io::Result<Pending> {
        loop {
            let path = dir.join(fresh(prefix, ""));
            match Pending::create(path, Kind::Tree, |p| std::fs::create_dir(p)) {
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
                r => return r.map(|(_, p)| p),
            }
        }
    }

    /// Creates the folder `path` (mode `0777` less the umask), registered before it exists; a
    /// drop deletes it only while it is empty.
    pub fn create_folder(path: &Path) -> std::io::Result<Pending> {
        Pending::create(path.to_path_buf(), Kind::Folder, |p| std::fs::create_dir(p))
            .map(|(_, p)| p)
    }

    /// The registered path.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Unregisters the path without deleting it (it was renamed into place, or is kept).
    pub fn keep(mut self) {
        self.kind = Kind::Kept;
    }
}

fn unregister(list: &mut Vec<PathBuf>, path: &Path) {
    if let Some(i) = list.iter().rposition(|p| p == path) {
        list.remove(i);
    }
}

impl Drop for Pending {
    fn drop(&mut self) {
        // Delete first, then unregister, both under the lock: an interruption meanwhile
        // either waits or finds the path still registered.
        let mut list = hold();
        let _ = match self.kind {
            Kind::File => std::fs::remove_file(&self.path),
            Kind::Tree => std::fs::remove_dir_all(&self.path),
            Kind::Folder => std::fs::remove_dir(&self.path),
            Kind::Kept => Ok(()),
        };
        unregister(&mut list, &self.path);
    }
}

/// Deletes every registered temporary path (files and folders), for the interruption handler:
/// call it with the guard of [`hold`] and end the process while still holding it. Returns the
/// paths that could not be deleted.
pub fn discard_pending(list: &mut Vec<PathBuf>) -> Vec<PathBuf> {
    let mut left = Vec::new();
    // Newest first: files inside a folder made for them go before the folder.
    while let Some(p) = list.pop() {
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

/// What an output target is now: `Ok(None)` when nothing is there, `Ok(Some(mode))` for a
/// regular file (its permissions, kept by the replacement), an error for anything else (a
/// device, FIFO, folder or socket is never replaced). A symbolic link is judged by what it
/// names.
pub fn replaceable(path: &Path) -> std::io::Result<Option<std::fs::Permissions>> {
    match std::fs::metadata(path) {
        Ok(m) if m.is_file() => Ok(Some(m.permissions())),
        Ok(m) => Err(std::io::Error::other(format!(
            "it exists and is not a regular file ({}); only regular files are replaced",
            describe(&m)
        ))),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
        Err(e) => Err(e),
    }
}

fn describe(m: &std::fs::Metadata) -> &'static str {
    meshbound::input::kind_of(&m.file_type())
}

/// Whether standard output was closed when the command started (see [`guard_std_streams`]).
static STDOUT_CLOSED: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

/// Called first thing in `main`: remembers whether standard output was closed when the
/// command started, so that writing the result there fails instead of being lost.
///
/// Rust's runtime opens `/dev/null` (read-write) on a standard stream found closed at start,
/// before `main`, so that no later file takes its number; a closed standard output is so
/// recognised as `/dev/null` open for reading and writing (a shell's `>/dev/null` opens it for
/// writing only). Should the runtime leave it closed, `/dev/null` is opened on it here.
pub fn guard_std_streams() {
    #[cfg(target_os = "linux")]
    {
        // SAFETY: fcntl(F_GETFD/F_GETFL) and fstat only query the descriptor table; `st` is
        // a plain struct the call fills in.
        let closed = unsafe { libc::fcntl(1, libc::F_GETFD) } == -1;
        let opened_by_runtime = !closed && {
            let flags = unsafe { libc::fcntl(1, libc::F_GETFL) };
            let mut st: libc::stat = unsafe { std::mem::zeroed() };
            let is_null = unsafe { libc::fstat(1, &mut st) } == 0
                && (st.st_mode & libc::S_IFMT) == libc::S_IFCHR
                && std::fs::metadata("/dev/null").is_ok_and(|m| {
                    use std::os::unix::fs::MetadataExt;
                    m.rdev() == st.st_rdev
                });
            flags != -1 && (flags & libc::O_ACCMODE) == libc::O_RDWR && is_null
        };
        if closed || opened_by_runtime {
            STDOUT_CLOSED.store(true, Ordering::Relaxed);
        }
        if closed {
            // The lowest free number is 1 itself when 0 is open.
            let _ = std::fs::OpenOptions::new()
                .write(true)
                .open("/dev/null")
                .map(std::mem::forget);
        }
    }
}

/// Writes `bytes` to standard output. A closed standard output or a failed write (a full
/// disk) is an error; a reader that went away (broken pipe, as in `| head -1`) is not: the
/// command ends quietly (common practice for command-line tools, no source).
pub fn write_stdout(bytes: &[u8]) -> std::io::Result<()> {
    if STDOUT_CLOSED.load(Ordering::Relaxed) {
        return Err(std::io::Error::other("standard output is closed"));
    }
    let mut out = std::io::stdout().lock();
    match out.write_all(bytes).and_then(|_| out.flush()) {
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        r => r,
    }
}

/// Writes `bytes` to `path` (or to stdout when `path` is `-`) atomically.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), OutputError> {
    let fail = |source| OutputError {
        path: path.display().to_string(),
        source,
    };
    if path.as_os_str() == "-" {
        return write_stdout(bytes).map_err(|e| OutputError {
            path: "standard output".into(),
            source: e,
        });
    }
    let keep_mode = replaceable(path).map_err(fail)?;
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let (mut file, pending) = Pending::create_file(dir, ".meshbound-", ".part").map_err(fail)?;
    if let Some(perm) = keep_mode {
        file.set_permissions(perm).map_err(fail)?;
    }
    file.write_all(bytes).map_err(fail)?;
    file.sync_all().map_err(fail)?;
    drop(file);
    // The rename is atomic and so is the handler's deletion of the temporary.
    std::fs::rename(pending.path(), path).map_err(fail)?;
    pending.keep();
    Ok(())
}

/// `path` as an absolute path with its folder's symbolic links resolved (the file itself may
/// not exist yet); `None` when its folder does not exist.
fn canonical(path: &Path) -> Option<PathBuf> {
    if let Ok(p) = std::fs::canonicalize(path) {
        return Some(p);
    }
    let name = path.file_name()?;
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    std::fs::canonicalize(dir).ok().map(|d| d.join(name))
}

/// Whether `a` and `b` name the same file: the same device and inode where both exist (so
/// hard and symbolic links count), else the same canonical path.
pub fn same_file(a: &Path, b: &Path) -> bool {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        if let (Ok(x), Ok(y)) = (std::fs::metadata(a), std::fs::metadata(b)) {
            return x.dev() == y.dev() && x.ino() == y.ino();
        }
    }
    match (canonical(a), canonical(b)) {
        (Some(x), Some(y)) => x == y,
        _ => false,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_registered_temporary_is_deleted_before_it_is_unregistered() {
        let dir = tempfile::tempdir().unwrap();
        let (_f, p) = Pending::create_file(dir.path(), ".meshbound-", ".part").unwrap();
        let path = p.path().to_path_buf();
        assert!(path.exists());
        assert!(hold().contains(&path));
        drop(p);
        assert!(!path.exists());
        assert!(!hold().contains(&path));
    }

    #[test]
    fn same_file_sees_links_and_spellings() {
        let dir = tempfile::tempdir().unwrap();
        let a = dir.path().join("a.txt");
        std::fs::write(&a, "x").unwrap();
        std::fs::create_dir(dir.path().join("d")).unwrap();
        assert!(same_file(&a, &dir.path().join("d/../a.txt")));
        std::fs::hard_link(&a, dir.path().join("h.txt")).unwrap();
        assert!(same_file(&a, &dir.path().join("h.txt")));
        assert!(!same_file(&a, &dir.path().join("d")));
        assert!(same_file(
            &dir.path().join("new.txt"),
            &dir.path().join("d/../new.txt")
        ));
        assert!(!same_file(&a, &dir.path().join("new.txt")));
    }
}
