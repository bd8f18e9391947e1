//! Reading the CSV files a study names (sweeps, measured points) within bounds: the file's size
//! is checked before anything is read, and the reader refuses a record longer than
//! [`MAX_RECORD_BYTES`] as soon as it has seen that many bytes of it, so that memory stays
//! bounded whatever the file holds (one endless line, an unbalanced double quote, a device that
//! never ends).

use std::fs::File;
use std::io::{self, Read};
use std::path::Path;

/// Largest CSV file a study may name, in bytes.
pub const MAX_CSV_BYTES: u64 = 256 * 1024 * 1024;

/// Longest record (a line, or the lines of one record with a quoted line break) accepted, in
/// bytes. A row of a sweep or of measured points holds a few numbers.
pub const MAX_RECORD_BYTES: usize = 1024 * 1024;

/// Why a bounded read stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Overrun {
    /// The record starting at this 1-based line is longer than [`MAX_RECORD_BYTES`]; `lines`
    /// is the number of lines it spans so far.
    Record {
        /// Its first line.
        line: u64,
        /// Lines it spans so far (1: one long line).
        lines: u64,
    },
    /// More than [`MAX_CSV_BYTES`] were read (a file that grew, or a device).
    File,
}

impl std::fmt::Display for Overrun {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match *self {
            Overrun::Record { lines: 1, .. } => write!(
                f,
                "the line is longer than {} bytes (1 MiB); a CSV row holds a few numbers, so the file is refused",
                MAX_RECORD_BYTES
            ),
            Overrun::Record { lines, .. } => write!(
                f,
                "the record starting on this line runs over {lines} lines and more than {} bytes (1 MiB) (an unbalanced double quote?), so the file is refused",
                MAX_RECORD_BYTES
            ),
            Overrun::File => write!(
                f,
                "more than {MAX_CSV_BYTES} bytes were read; CSV files above 256 MiB are refused"
            ),
        }
    }
}

impl std::error::Error for Overrun {}

impl Overrun {
    /// The line to name in a message, when there is one.
    pub fn line(&self) -> Option<usize> {
        match *self {
            Overrun::Record { line, .. } => Some(line as usize),
            Overrun::File => None,
        }
    }

    /// The overrun behind a csv error, if that is what stopped the reader.
    pub fn of(e: &csv::Error) -> Option<Overrun> {
        match e.kind() {
            csv::ErrorKind::Io(io) => io.get_ref()?.downcast_ref::<Overrun>().copied(),
            _ => None,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum State {
    /// Before the first byte of a record (also after a line end outside quotes).
    Start,
    /// In a comment line (`#` as a record's first byte, as the CSV readers are set up).
    Comment,
    /// In a record, outside double quotes.
    Field,
    /// In a record, inside double quotes (`""` toggles twice, which is right).
    Quoted,
}

/// A reader that passes bytes through and fails with an [`Overrun`] (as an
/// [`io::ErrorKind::InvalidData`] error) once a record or the whole input is too long. Records
/// end at a line feed or carriage return outside double quotes, as the csv crate reads them.
#[derive(Debug)]
pub struct Bounded<R> {
    inner: R,
    state: State,
    /// 1-based line of the current byte.
    line: u64,
    /// First line of the current record.
    record_line: u64,
    /// Bytes of the current record (or comment) so far.
    record_bytes: usize,
    total: u64,
    record_limit: usize,
    total_limit: u64,
}

impl<R: Read> Bounded<R> {
    /// Wraps `inner` with the limits [`MAX_RECORD_BYTES`] and [`MAX_CSV_BYTES`].
    pub fn new(inner: R) -> Self {
        Self::with_limits(inner, MAX_RECORD_BYTES, MAX_CSV_BYTES)
    }

    /// Wraps `inner` with other limits (for tests).
    pub fn with_limits(inner: R, record_limit: usize, total_limit: u64) -> Self {
        Bounded {
            inner,
            state: State::Start,
            line: 1,
            record_line: 1,
            record_bytes: 0,
            total: 0,
            record_limit,
            total_limit,
        }
    }

    fn scan(&mut self, bytes: &[u8]) -> Result<(), Overrun> {
        for &b in bytes {
            if self.state == State::Start {
                self.record_line = self.line;
                self.record_bytes = 0;
                self.state = match b {
                    b'#' => State::Comment,
                    b'\n' | b'\r' => State::Start,
                    _ => State::Field,
                };
            }
            self.record_bytes += 1;
            match (self.state, b) {
                (State::Comment, b'\n' | b'\r') | (State::Field, b'\n' | b'\r') => {
                    self.state = State::Start
                }
                (State::Field, b'"') => self.state = State::Quoted,
                (State::Quoted, b'"') => self.state = State::Field,
                _ => {}
            }
            if self.state != State::Start && self.record_bytes > self.record_limit {
                return Err(Overrun::Record {
                    line: self.record_line,
                    lines: self.line - self.record_line + 1,
                });
            }
            if b == b'\n' {
                self.line += 1;
            }
        }
        Ok(())
    }
}

impl<R: Read> Read for Bounded<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.total += n as u64;
        if self.total > self.total_limit {
            return Err(io::Error::new(io::ErrorKind::InvalidData, Overrun::File));
        }
        self.scan(&buf[..n])
            .map_err(|o| io::Error::new(io::ErrorKind::InvalidData, o))?;
        Ok(n)
    }
}

/// Why a CSV file was not opened.
#[derive(Debug)]
pub enum OpenError {
    /// It cannot be opened (missing, no permission, …).
    Io(io::Error),
    /// It is refused before reading: a folder, or larger than [`MAX_CSV_BYTES`].
    Refused(String),
}

/// Opens a CSV file a study names: its size is checked first, then it is read through
/// [`Bounded`], trimmed, with `#` comment lines and a header row.
pub fn open(path: &Path) -> Result<csv::Reader<Bounded<File>>, OpenError> {
    // Opened without blocking: a FIFO, a device or a folder is refused before any read.
    let file = crate::input::open_regular(path).map_err(|e| {
        if e.kind() == io::ErrorKind::InvalidInput {
            OpenError::Refused(e.to_string())
        } else {
            OpenError::Io(e)
        }
    })?;
    let meta = file.metadata().map_err(OpenError::Io)?;
    if meta.len() > MAX_CSV_BYTES {
        return Err(OpenError::Refused(format!(
            "the file has {} bytes; CSV files above 256 MiB are refused",
            meta.len()
        )));
    }
    Ok(csv::ReaderBuilder::new()
        .has_headers(true)
        .trim(csv::Trim::All)
        .comment(Some(b'#'))
        .from_reader(Bounded::new(file)))
}

/// Why a CSV file could not be read whole.
#[derive(Debug)]
pub enum ReadError {
    /// It cannot be opened (missing, no permission, …).
    Io(io::Error),
    /// It is refused before reading: a folder, or larger than [`MAX_CSV_BYTES`].
    Refused(String),
    /// A record or the file ran over its bound.
    Overrun(Overrun),
}

/// Reads a CSV file a study names into text, within the bounds of [`open`] (the size first,
/// then every record through [`Bounded`]). Bytes that are not UTF-8 are replaced (`�`): a
/// name holding them matches no column, and a number holding them is refused.
pub fn read_text(path: &Path) -> Result<String, ReadError> {
    let file = crate::input::open_regular(path).map_err(|e| {
        if e.kind() == io::ErrorKind::InvalidInput {
            ReadError::Refused(e.to_string())
        } else {
            ReadError::Io(e)
        }
    })?;
    let meta = file.metadata().map_err(ReadError::Io)?;
    if meta.len() > MAX_CSV_BYTES {
        return Err(ReadError::Refused(format!(
            "the file has {} bytes; CSV files above 256 MiB are refused",
            meta.len()
        )));
    }
    let mut bytes = Vec::with_capacity(meta.len() as usize);
    Bounded::new(file).read_to_end(&mut bytes).map_err(|e| {
        match e.get_ref().and_then(|r| r.downcast_ref::<Overrun>()) {
            Some(o) => ReadError::Overrun(*o),
            None => ReadError::Io(e),
        }
    })?;
    Ok(match String::from_utf8(bytes) {
        Ok(s) => s,
        Err(e) => String::from_utf8_lossy(e.as_bytes()).into_owned(),
    })
}

/// Most header names a message shows.
pub const MAX_NAMES_SHOWN: usize = 12;

/// Longest header name or field shown in full, in characters; longer ones are cut.
pub const MAX_NAME_CHARS: usize = 32;

/// Whether a header name looks like a column name: letters, digits, blanks and the signs of
/// units and indices. Anything else (a line of some other file) is not echoed.
fn looks_like_name(name: &str) -> bool {
    !name.is_empty()
        && name
            .chars()
            .all(|c| c.is_alphanumeric() || " _-.()[]/%°·+^;".contains(c))
}

fn cut(text: &str) -> String {
    if text.chars().count() > MAX_NAME_CHARS {
        let mut t: String = text.chars().take(MAX_NAME_CHARS).collect();
        t.push('…');
        t
    } else {
        text.to_string()
    }
}

/// The header names of a CSV file as a message may show them: only names that look like
/// column names, each cut to [`MAX_NAME_CHARS`] characters, at most [`MAX_NAMES_SHOWN`] of
/// them, and a count of the rest. A message never echoes raw text of a file this way (a study
/// could name any file).
pub fn header_names<'a>(headers: impl IntoIterator<Item = &'a str>) -> String {
    let mut shown = Vec::new();
    let mut hidden = 0usize;
    for h in headers {
        if shown.len() < MAX_NAMES_SHOWN && looks_like_name(h) {
            shown.push(format!("`{}`", cut(h)));
        } else {
            hidden += 1;
        }
    }
    match (shown.is_empty(), hidden) {
        (true, _) => "no name that looks like a column name".to_string(),
        (false, 0) => shown.join(", "),
        (false, n) => format!(
            "{} and {n} other{} not shown",
            shown.join(", "),
            if n == 1 { "" } else { "s" }
        ),
    }
}

/// A CSV field as a message may show it: cut to [`MAX_NAME_CHARS`] characters, with
/// control characters replaced.
pub fn field_text(field: &str) -> String {
    cut(&field
        .chars()
        .map(|c| if c.is_control() { '�' } else { c })
        .collect::<String>())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn header_names_echo_only_column_like_names() {
        fn rec<'a>(v: &[&'a str]) -> Vec<&'a str> {
            v.to_vec()
        }
        assert_eq!(
            header_names(rec(&["sigma", "head (m)"])),
            "`sigma`, `head (m)`"
        );
        // A line of some other file: not echoed.
        let secret = "root:$6$abc$Zx9:19000:0:99999:7:::";
        let shown = header_names(rec(&[secret]));
        assert!(!shown.contains("root"), "{shown}");
        assert_eq!(shown, "no name that looks like a column name");
        // Long names are cut, and the count is capped.
        let long = "a".repeat(1000);
        let shown = header_names(rec(&[&long]));
        assert!(shown.chars().count() < MAX_NAME_CHARS + 5, "{shown}");
        let many: Vec<String> = (0..100).map(|i| format!("c{i}")).collect();
        let shown = header_names(many.iter().map(String::as_str));
        assert!(shown.ends_with("and 88 others not shown"), "{shown}");
        assert!(field_text(&"9".repeat(5000)).chars().count() <= MAX_NAME_CHARS + 1);
        assert_eq!(field_text("a\u{1b}[2J"), "a�[2J");
    }

    /// Reads all of `text` through a reader with small limits; the overrun, if any.
    fn overrun(text: &[u8], record: usize, total: u64) -> Option<Overrun> {
        let mut r = Bounded::with_limits(text, record, total);
        let mut sink = Vec::new();
        // Read in small pieces so that records cross the reads.
        let mut buf = [0u8; 3];
        loop {
            match r.read(&mut buf) {
                Ok(0) => return None,
                Ok(n) => sink.extend_from_slice(&buf[..n]),
                Err(e) => return e.get_ref()?.downcast_ref::<Overrun>().copied(),
            }
        }
    }

    #[test]
    fn records_within_the_limit_pass() {
        assert_eq!(overrun(b"x,y\n1,2\n3,4\n", 4, 100), None);
        assert_eq!(overrun(b"x,y\r\n1,2\r\n", 4, 100), None);
        // A quoted field with a line break counts as one record (x,"a\nb" is 9 bytes).
        assert_eq!(overrun(b"x,\"a\nb\"\n", 9, 100), None);
        // Empty lines are no records.
        assert_eq!(overrun(b"\n\n\n\n\n\n", 0, 100), None);
    }

    #[test]
    fn a_long_line_is_named() {
        assert_eq!(
            overrun(b"x,y\n1,2\n12345,6\n", 4, 100),
            Some(Overrun::Record { line: 3, lines: 1 })
        );
        // A long comment line too.
        assert_eq!(
            overrun(b"x,y\n# a long comment\n", 4, 100),
            Some(Overrun::Record { line: 2, lines: 1 })
        );
    }

    #[test]
    fn an_unbalanced_quote_is_a_long_record() {
        assert_eq!(
            overrun(b"x,y\n\"1,2\n3,4\n5,6\n", 8, 100),
            Some(Overrun::Record { line: 2, lines: 2 })
        );
        // A quote in a comment does not start a quoted field.
        assert_eq!(overrun(b"# it\"s\nx,y\n1,2\n3,4\n", 7, 100), None);
    }

    #[test]
    fn the_whole_input_is_bounded() {
        assert_eq!(overrun(b"x\n1\n2\n3\n", 10, 5), Some(Overrun::File));
    }
}
