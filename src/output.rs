//! Writing outputs atomically: a temporary file beside the target, then a rename, so that a
//! reader never sees a half-written file and a failure leaves nothing behind.

use std::io::Write;
use std::path::Path;

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
    tmp.write_all(bytes).map_err(fail)?;
    tmp.as_file().sync_all().map_err(fail)?;
    tmp.persist(path).map_err(|e| fail(e.error))?;
    Ok(())
}
