//! Where the library writes the files a study asks for (today the per-point file of a field).
//!
//! The library never creates, renames or deletes a file: it formats bytes into a
//! [`PointSink`] that the caller hands it through [`Outputs`]. The caller decides where the
//! bytes go (a temporary file renamed into place once the whole run succeeded, memory, nowhere)
//! and what an interruption leaves behind. [`Skip`] writes nothing (checks such as acceptance
//! limits need only the summaries); [`InMemory`] keeps the bytes (tests, embedding);
//! [`DirectFile`] writes into a file the caller created, past the page cache on Linux (the
//! caller still owns its name, its lifetime and its publication).

use std::fs::File;
use std::io;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex, PoisonError};

/// A destination for the bytes of one output file, written in order. The library calls
/// [`PointSink::finish`] only when the whole output succeeded; a sink dropped unfinished belongs
/// to a failed run, and its owner discards what it holds.
pub trait PointSink: Send {
    /// Appends `bytes`.
    fn write_all(&mut self, bytes: &[u8]) -> io::Result<()>;
    /// Every byte has been written. The output is complete but not necessarily visible: the
    /// caller publishes it when the whole run has succeeded, or discards it.
    fn finish(self: Box<Self>) -> io::Result<()>;
}

/// A [`PointSink`] as a [`std::io::Write`], for formatters that stream into any writer (wrap
/// it in a `BufWriter` for small writes).
pub struct SinkWriter<'a>(pub &'a mut dyn PointSink);

impl io::Write for SinkWriter<'_> {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        self.0.write_all(buf)?;
        Ok(buf.len())
    }
    fn write_all(&mut self, buf: &[u8]) -> io::Result<()> {
        self.0.write_all(buf)
    }
    fn flush(&mut self) -> io::Result<()> {
        Ok(())
    }
}

/// Hands out a sink for each file a study asks to write.
pub trait Outputs: Sync {
    /// A sink for the file the study names `target` (already checked by the study reader);
    /// `Ok(None)` skips that file (the summary is still computed).
    fn open(&self, target: &Path) -> io::Result<Option<Box<dyn PointSink>>>;
}

/// Writes nothing: every requested file is skipped.
#[derive(Debug, Clone, Copy, Default)]
pub struct Skip;

impl Outputs for Skip {
    fn open(&self, _target: &Path) -> io::Result<Option<Box<dyn PointSink>>> {
        Ok(None)
    }
}

/// Finished files shared between [`InMemory`] and its sinks.
type Shared = Arc<Mutex<Vec<(PathBuf, Vec<u8>)>>>;

/// Keeps every finished file in memory, in the order they were finished.
#[derive(Debug, Clone, Default)]
pub struct InMemory {
    files: Shared,
}

impl InMemory {
    /// An empty collection.
    pub fn new() -> Self {
        Self::default()
    }

    /// The finished files: target path and bytes.
    pub fn files(&self) -> Vec<(PathBuf, Vec<u8>)> {
        self.files
            .lock()
            .unwrap_or_else(PoisonError::into_inner)
            .clone()
    }
}

struct MemorySink {
    target: PathBuf,
    bytes: Vec<u8>,
    into: Shared,
}

impl PointSink for MemorySink {
    fn write_all(&mut self, bytes: &[u8]) -> io::Result<()> {
        self.bytes.extend_from_slice(bytes);
        Ok(())
    }
    fn finish(self: Box<Self>) -> io::Result<()> {
        let MemorySink {
            target,
            bytes,
            into,
        } = *self;
        into.lock()
            .unwrap_or_else(PoisonError::into_inner)
            .push((target, bytes));
        Ok(())
    }
}

impl Outputs for InMemory {
    fn open(&self, target: &Path) -> io::Result<Option<Box<dyn PointSink>>> {
        Ok(Some(Box::new(MemorySink {
            target: target.to_path_buf(),
            bytes: Vec::new(),
            into: Arc::clone(&self.files),
        })))
    }
}

/// Alignment of the direct writes (the page size, a multiple of every block size met).
const DIRECT_ALIGN: usize = 4096;
/// Bytes gathered before one direct write.
const DIRECT_STAGE: usize = 2 << 20;

/// A sink over a file the caller created (empty), written past the page cache where the system allows it.
///
/// Copying nearly a gigabyte into the page cache costs about as much processor time as parsing
/// the three input files; a direct write (`O_DIRECT`, Linux) leaves the copy to the disk's DMA.
/// Direct writes need aligned buffers, offsets and lengths: the bytes are gathered in an aligned
/// stage and written in whole stages, and the last, partial stage goes through the ordinary
/// handle. Where the file cannot be opened for direct writes, or the first direct write is
/// refused (`EINVAL`: a file system without direct I/O), everything goes through the ordinary
/// handle.
pub struct DirectFile {
    file: File,
    direct: Option<File>,
    stage: Vec<u8>,
    /// Start of the aligned part of `stage`.
    off: usize,
    /// Bytes gathered in the stage.
    len: usize,
    /// Bytes in the file.
    pos: u64,
}

impl DirectFile {
    /// Creates (or truncates) the file at `path` and writes into it directly: no temporary and
    /// no rename, for benchmarks and tests; the command line writes atomically instead.
    pub fn create(path: &Path) -> io::Result<Self> {
        let file = File::create(path)?;
        Ok(Self::new(file, path))
    }

    /// Writes into `file`, which was created empty at `path`.
    pub fn new(file: File, path: &Path) -> Self {
        let direct = open_direct(path);
        let stage = if direct.is_some() {
            vec![0; DIRECT_STAGE + DIRECT_ALIGN]
        } else {
            Vec::new()
        };
        let off = stage.as_ptr().align_offset(DIRECT_ALIGN).min(DIRECT_ALIGN);
        DirectFile {
            file,
            direct,
            stage,
            off,
            len: 0,
            pos: 0,
        }
    }

    fn write(&mut self, mut bytes: &[u8]) -> std::io::Result<()> {
        if self.direct.is_none() {
            return self.plain(bytes);
        }
        while !bytes.is_empty() {
            let n = bytes.len().min(DIRECT_STAGE - self.len);
            let at = self.off + self.len;
            self.stage[at..at + n].copy_from_slice(&bytes[..n]);
            self.len += n;
            bytes = &bytes[n..];
            if self.len == DIRECT_STAGE {
                self.flush_stage()?;
            }
        }
        Ok(())
    }

    /// Writes the full stage directly, or through the ordinary handle from now on when the
    /// system refuses direct writes.
    fn flush_stage(&mut self) -> std::io::Result<()> {
        let Some(file) = &self.direct else {
            return Ok(());
        };
        let staged = &self.stage[self.off..self.off + self.len];
        match write_at(file, staged, self.pos) {
            Ok(()) => {}
            Err(e) if e.kind() == std::io::ErrorKind::InvalidInput && self.pos == 0 => {
                self.direct = None;
                let staged = std::mem::take(&mut self.stage);
                let (off, len) = (self.off, self.len);
                self.len = 0;
                return self.plain(&staged[off..off + len]);
            }
            Err(e) => return Err(e),
        }
        self.pos += self.len as u64;
        self.len = 0;
        Ok(())
    }

    fn plain(&mut self, bytes: &[u8]) -> std::io::Result<()> {
        write_at(&self.file, bytes, self.pos)?;
        self.pos += bytes.len() as u64;
        Ok(())
    }

    fn finish(mut self) -> std::io::Result<()> {
        if self.len > 0 {
            let (off, len) = (self.off, self.len);
            let tail = std::mem::take(&mut self.stage);
            self.len = 0;
            self.plain(&tail[off..off + len])?;
        }
        Ok(())
    }
}

impl PointSink for DirectFile {
    fn write_all(&mut self, bytes: &[u8]) -> std::io::Result<()> {
        self.write(bytes)
    }
    fn finish(self: Box<Self>) -> std::io::Result<()> {
        DirectFile::finish(*self)
    }
}

#[cfg(target_os = "linux")]
fn open_direct(path: &Path) -> Option<File> {
    use std::os::unix::fs::OpenOptionsExt;
    std::fs::OpenOptions::new()
        .write(true)
        .custom_flags(libc::O_DIRECT)
        .open(path)
        .ok()
}

#[cfg(not(target_os = "linux"))]
fn open_direct(_path: &Path) -> Option<File> {
    None
}

#[cfg(unix)]
fn write_at(file: &File, bytes: &[u8], pos: u64) -> std::io::Result<()> {
    std::os::unix::fs::FileExt::write_all_at(file, bytes, pos)
}

#[cfg(not(unix))]
fn write_at(mut file: &File, bytes: &[u8], pos: u64) -> std::io::Result<()> {
    use std::io::{Seek, Write};
    file.seek(std::io::SeekFrom::Start(pos))?;
    file.write_all(bytes)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn memory_keeps_finished_files_and_skip_gives_none() {
        let m = InMemory::new();
        let mut s = m.open(Path::new("a.csv")).unwrap().unwrap();
        s.write_all(b"id,").unwrap();
        s.write_all(b"u\n").unwrap();
        assert!(m.files().is_empty(), "nothing before finish");
        s.finish().unwrap();
        assert_eq!(
            m.files(),
            vec![(PathBuf::from("a.csv"), b"id,u\n".to_vec())]
        );
        assert!(Skip.open(Path::new("b.csv")).unwrap().is_none());
    }

    /// Bytes of several whole stages and an unaligned tail, in pieces of odd sizes.
    fn sink_bytes() -> Vec<u8> {
        (0..(2 * DIRECT_STAGE + 12_345))
            .map(|i| (i % 251) as u8)
            .collect()
    }

    fn write_through_sink(dir: &Path) -> Vec<u8> {
        let bytes = sink_bytes();
        let tmp = tempfile::Builder::new().tempfile_in(dir).unwrap();
        let (file, path) = tmp.into_parts();
        let mut sink = DirectFile::new(file, &path);
        let mut rest = &bytes[..];
        let mut k = 1;
        while !rest.is_empty() {
            let n = rest.len().min(k * 7919);
            sink.write(&rest[..n]).unwrap();
            rest = &rest[n..];
            k = k % 300 + 1;
        }
        sink.finish().unwrap();
        std::fs::read(&path).unwrap()
    }

    #[test]
    fn sink_writes_every_byte_in_order() {
        // Direct writes where the file system takes them (ext4 here), else ordinary ones.
        let dir = tempfile::tempdir().unwrap();
        assert!(write_through_sink(dir.path()) == sink_bytes());
        // tmpfs, where direct I/O may be refused: the ordinary handle takes over.
        if Path::new("/dev/shm").is_dir() {
            if let Ok(shm) = tempfile::tempdir_in("/dev/shm") {
                assert!(write_through_sink(shm.path()) == sink_bytes());
            }
        }
    }

    #[test]
    fn sink_without_direct_handle_writes_plainly() {
        let dir = tempfile::tempdir().unwrap();
        let tmp = tempfile::Builder::new().tempfile_in(dir.path()).unwrap();
        let (file, path) = tmp.into_parts();
        let mut sink = DirectFile::new(file, &path);
        sink.direct = None;
        sink.stage = Vec::new();
        sink.write(b"id,cp\n").unwrap();
        sink.write(b"1,2\n").unwrap();
        sink.finish().unwrap();
        assert_eq!(std::fs::read(&path).unwrap(), b"id,cp\n1,2\n");
    }
}
