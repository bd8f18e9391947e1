//! Opening the files a study makes meshbound read, refusing anything that is not a regular
//! file: a FIFO would block the reader forever, a device may never end, a folder or a socket
//! has no text to read.

use std::fs::File;
use std::io;
use std::path::Path;

/// What a file that is not a regular file is, in words ("a FIFO (named pipe)", "a folder", …).
pub fn kind_of(ft: &std::fs::FileType) -> &'static str {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if ft.is_fifo() {
            return "a FIFO (named pipe)";
        }
        if ft.is_char_device() {
            return "a character device";
        }
        if ft.is_block_device() {
            return "a block device";
        }
        if ft.is_socket() {
            return "a socket";
        }
    }
    if ft.is_dir() {
        "a folder"
    } else if ft.is_symlink() {
        "a symbolic link"
    } else {
        "not a file"
    }
}

fn refuse(ft: &std::fs::FileType) -> io::Error {
    io::Error::new(
        io::ErrorKind::InvalidInput,
        format!("is {}, not a regular file", kind_of(ft)),
    )
}

/// Opens `path` for reading without blocking, and refuses it unless it is a regular file
/// (after following symbolic links): a FIFO, a device, a folder or a socket gives an error of
/// kind [`io::ErrorKind::InvalidInput`] whose message says what it is. The returned file
/// reads in the ordinary, blocking way.
#[cfg(target_os = "linux")]
pub fn open_regular(path: &Path) -> io::Result<File> {
    use std::os::unix::fs::OpenOptionsExt;
    // O_NONBLOCK: opening a FIFO without a writer returns at once instead of waiting.
    let file = std::fs::OpenOptions::new()
        .read(true)
        .custom_flags(libc::O_NONBLOCK)
        .open(path)?;
    let ft = file.metadata()?.file_type();
    if !ft.is_file() {
        return Err(refuse(&ft));
    }
    // Reads from here on block in the ordinary way.
    let flags = rustix::fs::fcntl_getfl(&file)?;
    rustix::fs::fcntl_setfl(&file, flags - rustix::fs::OFlags::NONBLOCK)?;
    Ok(file)
}

/// Opens `path` for reading and refuses it unless it is a regular file (after following
/// symbolic links). Without a non-blocking open on this system the type is checked before
/// opening.
#[cfg(not(target_os = "linux"))]
pub fn open_regular(path: &Path) -> io::Result<File> {
    let ft = std::fs::metadata(path)?.file_type();
    if !ft.is_file() {
        return Err(refuse(&ft));
    }
    let file = File::open(path)?;
    let ft = file.metadata()?.file_type();
    if !ft.is_file() {
        return Err(refuse(&ft));
    }
    Ok(file)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Read;

    #[test]
    fn a_regular_file_opens_and_reads() {
        let d = tempfile::tempdir().unwrap();
        let p = d.path().join("a.csv");
        std::fs::write(&p, "x\n1\n").unwrap();
        let mut s = String::new();
        open_regular(&p).unwrap().read_to_string(&mut s).unwrap();
        assert_eq!(s, "x\n1\n");
    }

    #[test]
    fn a_folder_is_refused() {
        let d = tempfile::tempdir().unwrap();
        let e = open_regular(d.path()).unwrap_err();
        assert_eq!(e.kind(), io::ErrorKind::InvalidInput);
        assert!(e.to_string().contains("a folder"), "{e}");
    }

    #[cfg(unix)]
    #[test]
    fn a_device_is_refused() {
        let e = open_regular(Path::new("/dev/null")).unwrap_err();
        assert_eq!(e.kind(), io::ErrorKind::InvalidInput);
        assert!(e.to_string().contains("character device"), "{e}");
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn a_fifo_without_writer_is_refused_at_once() {
        let d = tempfile::tempdir().unwrap();
        let p = d.path().join("pipe");
        rustix::fs::mknodat(
            rustix::fs::CWD,
            &p,
            rustix::fs::FileType::Fifo,
            rustix::fs::Mode::from_raw_mode(0o600),
            0,
        )
        .unwrap();
        // Would block forever without O_NONBLOCK (no writer).
        let e = open_regular(&p).unwrap_err();
        assert_eq!(e.kind(), io::ErrorKind::InvalidInput);
        assert!(e.to_string().contains("FIFO"), "{e}");
    }

    #[test]
    fn a_missing_file_is_not_found() {
        let e = open_regular(Path::new("/nonexistent/meshbound/x.csv")).unwrap_err();
        assert_eq!(e.kind(), io::ErrorKind::NotFound);
    }
}
