//! Opening input files: only regular files, and never blocking on the open.
//!
//! A FIFO named as an input would block an ordinary open until a writer appears, and reading a
//! character device or a directory gives nothing useful. [`open_regular`] opens without
//! blocking and refuses everything but a regular file, with a message naming what was found.

use std::fs::File;
use std::io;
use std::path::Path;

/// Opens `path` for reading if it is a regular file (after following symbolic links).
///
/// On Unix the open does not block (`O_NONBLOCK`, which matters only for FIFOs and devices);
/// the kind is checked on the open handle (no race with a rename), and the flag is cleared
/// again before the file is returned, so reads behave as usual. Anything but a regular file
/// gives an [`io::ErrorKind::InvalidInput`] error naming its kind.
pub fn open_regular(path: &Path) -> io::Result<File> {
    let file = open_nonblocking(path)?;
    let meta = file.metadata()?;
    if !meta.is_file() {
        return Err(io::Error::new(
            io::ErrorKind::InvalidInput,
            format!("{} is not a regular file", kind_of(&meta)),
        ));
    }
    clear_nonblocking(&file)?;
    Ok(file)
}

#[cfg(unix)]
fn open_nonblocking(path: &Path) -> io::Result<File> {
    use std::os::unix::fs::OpenOptionsExt;
    std::fs::OpenOptions::new()
        .read(true)
        .custom_flags(libc::O_NONBLOCK)
        .open(path)
}

#[cfg(not(unix))]
fn open_nonblocking(path: &Path) -> io::Result<File> {
    File::open(path)
}

#[cfg(unix)]
fn clear_nonblocking(file: &File) -> io::Result<()> {
    use std::os::unix::io::AsRawFd;
    let fd = file.as_raw_fd();
    // SAFETY: `fd` is an open descriptor owned by `file` for the duration of both calls;
    // F_GETFL and F_SETFL read and set only its status flags.
    let flags = unsafe { libc::fcntl(fd, libc::F_GETFL) };
    if flags < 0 {
        return Err(io::Error::last_os_error());
    }
    // SAFETY: as above.
    if unsafe { libc::fcntl(fd, libc::F_SETFL, flags & !libc::O_NONBLOCK) } < 0 {
        return Err(io::Error::last_os_error());
    }
    Ok(())
}

#[cfg(not(unix))]
fn clear_nonblocking(_file: &File) -> io::Result<()> {
    Ok(())
}

/// The kind of a file that is not a regular one, in words.
fn kind_of(meta: &std::fs::Metadata) -> &'static str {
    let t = meta.file_type();
    if t.is_dir() {
        return "a directory";
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if t.is_fifo() {
            return "a FIFO (named pipe)";
        }
        if t.is_char_device() {
            return "a character device";
        }
        if t.is_block_device() {
            return "a block device";
        }
        if t.is_socket() {
            return "a socket";
        }
    }
    "not a regular file"
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Read;

    #[test]
    fn regular_files_open_and_read() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.csv");
        std::fs::write(&p, "id,cp\n1,2\n").unwrap();
        let mut s = String::new();
        open_regular(&p).unwrap().read_to_string(&mut s).unwrap();
        assert_eq!(s, "id,cp\n1,2\n");
    }

    #[test]
    fn directories_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let e = open_regular(dir.path()).unwrap_err();
        assert_eq!(e.kind(), io::ErrorKind::InvalidInput);
        assert_eq!(e.to_string(), "a directory is not a regular file");
    }

    #[cfg(unix)]
    #[test]
    fn fifos_are_refused_without_blocking() {
        // Without O_NONBLOCK this open would wait for a writer that never comes.
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("probe.csv");
        let c = std::ffi::CString::new(p.as_os_str().as_encoded_bytes()).unwrap();
        // SAFETY: `c` is a valid NUL-terminated path.
        assert_eq!(unsafe { libc::mkfifo(c.as_ptr(), 0o600) }, 0);
        let e = open_regular(&p).unwrap_err();
        assert_eq!(e.kind(), io::ErrorKind::InvalidInput);
        assert_eq!(e.to_string(), "a FIFO (named pipe) is not a regular file");
    }

    #[cfg(unix)]
    #[test]
    fn character_devices_are_refused() {
        let e = open_regular(Path::new("/dev/null")).unwrap_err();
        assert_eq!(e.to_string(), "a character device is not a regular file");
    }
}
