//! Reading: one thread per probe file reads raw blocks of whole records, cut at the last line
//! end outside double quotes, a few blocks ahead.

use super::{pooled, FieldError, Pool};
use std::fs::File;
use std::io::Read;
use std::path::{Path, PathBuf};
use std::sync::mpsc::SyncSender;
use std::sync::Arc;

/// Longest record accepted, in bytes (a longer one is almost surely an unbalanced quote).
pub(crate) const MAX_RECORD_BYTES: usize = 64 << 20;
/// Raw blocks each reader thread may hold ready.
pub(super) const READ_AHEAD: usize = 8;
/// Raw read buffers kept for reuse at most (the read-ahead of three files and a round).
pub(super) const RAW_POOL_MAX: usize = 3 * READ_AHEAD + 8;

/// A block of whole records of one file.
pub(super) struct RawBlock {
    pub(super) bytes: Vec<u8>,
    /// Line of the block's first byte.
    pub(super) first_line: u64,
    /// Line ends in the block (an upper bound of its records).
    pub(super) newlines: usize,
    /// Whether the block holds a double quote (else the plain parser applies).
    pub(super) quoted: bool,
}

/// Reads one file in blocks cut at record boundaries.
pub(super) struct BlockReader {
    pub(super) path: PathBuf,
    pub(super) file: File,
    pub(super) carry: Vec<u8>,
    pub(super) next_line: u64,
    pub(super) eof: bool,
    pub(super) block_bytes: usize,
    pub(super) first: Option<RawBlock>,
    /// Buffers of parsed blocks, handed back for reuse.
    pub(super) pool: Arc<Pool>,
    /// End of the record after the header in the first block (bytes) and the line after it.
    pub(super) units_end: Option<(usize, u64)>,
}

pub(super) fn count_byte(bytes: &[u8], b: u8) -> usize {
    memchr::memchr_iter(b, bytes).count()
}

pub(super) fn has_quote(bytes: &[u8]) -> bool {
    memchr::memchr(b'"', bytes).is_some()
}

/// Index of the last `\n` outside double quotes (the block starts outside quotes, at a record
/// start). A double quote in a comment line (a line starting with `#`) quotes nothing.
pub(super) fn last_record_end(buf: &[u8]) -> Option<usize> {
    if !has_quote(buf) {
        return memchr::memrchr(b'\n', buf);
    }
    let mut last = None;
    let mut quoted = false;
    let mut comment = false;
    let mut at_start = true;
    for (i, &b) in buf.iter().enumerate() {
        if at_start {
            comment = b == b'#';
            at_start = false;
        }
        match b {
            b'"' if !comment => quoted = !quoted,
            b'\n' if !quoted => {
                last = Some(i);
                at_start = true;
            }
            b'\r' if !quoted => at_start = true,
            _ => {}
        }
    }
    last
}

impl BlockReader {
    pub(super) fn open(
        path: &Path,
        block_bytes: usize,
        pool: Arc<Pool>,
    ) -> Result<Self, FieldError> {
        let file = crate::input::open_regular(path).map_err(|source| FieldError::Read {
            path: path.to_path_buf(),
            source,
        })?;
        Ok(BlockReader {
            path: path.to_path_buf(),
            file,
            carry: Vec::new(),
            next_line: 1,
            eof: false,
            block_bytes: block_bytes.max(1),
            first: None,
            pool,
            units_end: None,
        })
    }

    pub(super) fn fill(&mut self, buf: &mut Vec<u8>, want: usize) -> Result<(), FieldError> {
        if buf.len() >= want || self.eof {
            return Ok(());
        }
        let limit = (want - buf.len()) as u64;
        (&mut self.file)
            .take(limit)
            .read_to_end(buf)
            .map_err(|source| FieldError::Read {
                path: self.path.clone(),
                source,
            })?;
        if buf.len() < want {
            self.eof = true;
        }
        Ok(())
    }

    pub(super) fn make_block(&mut self, bytes: Vec<u8>) -> RawBlock {
        let newlines = count_byte(&bytes, b'\n');
        let block = RawBlock {
            quoted: has_quote(&bytes),
            bytes,
            first_line: self.next_line,
            newlines,
        };
        self.next_line += newlines as u64;
        block
    }

    pub(super) fn next_block(&mut self) -> Result<Option<RawBlock>, FieldError> {
        if let Some(b) = self.first.take() {
            return Ok(Some(b));
        }
        let mut buf = pooled(&self.pool, self.block_bytes.max(self.carry.len()) + 256);
        buf.append(&mut self.carry);
        let mut want = self.block_bytes.max(buf.len() + 1);
        loop {
            self.fill(&mut buf, want)?;
            if self.eof {
                if buf.is_empty() {
                    return Ok(None);
                }
                return Ok(Some(self.make_block(buf)));
            }
            if let Some(cut) = last_record_end(&buf) {
                self.carry = buf[cut + 1..].to_vec();
                buf.truncate(cut + 1);
                return Ok(Some(self.make_block(buf)));
            }
            if buf.len() >= MAX_RECORD_BYTES {
                return Err(FieldError::Malformed {
                    path: self.path.clone(),
                    line: self.next_line,
                    message: format!(
                        "a record longer than {} MiB: probably a double quote that is never closed",
                        MAX_RECORD_BYTES >> 20
                    ),
                });
            }
            want = buf.len().saturating_mul(2);
        }
    }

    /// Reads the header record (comment lines before it skipped) and detects the file's
    /// format; the rest of the first block is kept for `next_block`. The record after the
    /// header, when there is one, is given as a candidate units row ([`Self::skip_units_row`]
    /// drops it).
    pub(super) fn read_header(
        &mut self,
        opts: &crate::tabular::Options,
    ) -> Result<Header, FieldError> {
        let Some(mut block) = self.next_block()? else {
            return Err(FieldError::Empty {
                path: self.path.clone(),
            });
        };
        // The header and the record after it, whole: blocks end at record ends.
        while crate::tabular::Lines::new(&String::from_utf8_lossy(&block.bytes))
            .take(2)
            .count()
            < 2
            && block.bytes.len() < MAX_RECORD_BYTES
        {
            match self.next_block()? {
                Some(more) => {
                    block.bytes.extend_from_slice(&more.bytes);
                    block.newlines += more.newlines;
                }
                None => break,
            }
        }
        let bytes = &block.bytes[..];
        // Offsets are exact on UTF-8 text; where bytes that are not UTF-8 stand before the
        // record after the header, they are found again by counting line feeds.
        let prefix = match std::str::from_utf8(bytes) {
            Ok(t) => Some(t),
            Err(e) => std::str::from_utf8(&bytes[..e.valid_up_to()]).ok(),
        };
        let lossy;
        let (text, exact) = match prefix {
            Some(t)
                if crate::tabular::Lines::new(t).take(2).count() == 2 || t.len() == bytes.len() =>
            {
                (t, true)
            }
            _ => {
                lossy = String::from_utf8_lossy(bytes).into_owned();
                (lossy.as_str(), false)
            }
        };
        let format = crate::tabular::detect(text, opts);
        let mut lines = crate::tabular::Lines::new(text);
        let Some((header_line, head)) = lines.next() else {
            return Err(FieldError::Empty {
                path: self.path.clone(),
            });
        };
        let names = crate::tabular::split(head, format.separator)
            .iter()
            .map(|f| f.text().into_owned())
            .collect();
        let at = |lines: &crate::tabular::Lines| -> usize {
            if exact {
                lines.offset()
            } else {
                // After the (line − 1)-th line feed.
                memchr::memchr_iter(b'\n', bytes)
                    .nth(lines.line().saturating_sub(2))
                    .map_or(bytes.len(), |i| i + 1)
                    .min(bytes.len())
            }
        };
        let after_header = at(&lines);
        let after_line = lines.line() as u64;
        let next_cells = lines.next().map(|(_, t)| {
            crate::tabular::split(t, format.separator)
                .iter()
                .map(|f| f.text().into_owned())
                .collect()
        });
        let after_next = (at(&lines).max(after_header), lines.line() as u64);
        let rest = block.bytes[after_header..].to_vec();
        self.units_end = next_cells
            .as_ref()
            .map(|_| (after_next.0 - after_header, after_next.1));
        self.first = Some(RawBlock {
            newlines: count_byte(&rest, b'\n'),
            quoted: has_quote(&rest),
            first_line: after_line,
            bytes: rest,
        });
        Ok(Header {
            format,
            line: header_line as u64,
            names,
            next_cells,
        })
    }

    /// Drops the record after the header (a units row) from the first block.
    pub(super) fn skip_units_row(&mut self) {
        if let (Some((end, line)), Some(first)) = (self.units_end.take(), self.first.as_mut()) {
            let end = end.min(first.bytes.len());
            first.bytes.drain(..end);
            first.first_line = line;
            first.newlines = count_byte(&first.bytes, b'\n');
            first.quoted = has_quote(&first.bytes);
        }
    }
}

/// A probe file's header.
pub(super) struct Header {
    /// The file's format (detected where the study does not set it).
    pub(super) format: crate::tabular::Format,
    /// The header's line.
    pub(super) line: u64,
    /// The header names, trimmed and unquoted.
    pub(super) names: Vec<String>,
    /// The cells of the record after the header, when there is one (a units row, perhaps).
    pub(super) next_cells: Option<Vec<String>>,
}

pub(super) fn run_reader(mut reader: BlockReader, tx: SyncSender<Result<RawBlock, FieldError>>) {
    loop {
        match reader.next_block() {
            Ok(Some(b)) => {
                if tx.send(Ok(b)).is_err() {
                    return;
                }
            }
            Ok(None) => return,
            Err(e) => {
                let _ = tx.send(Err(e));
                return;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::last_record_end;

    // RFC 4180: a line end inside double quotes is part of the field; our rule: a line
    // starting with `#` is a comment, and its quotes quote nothing.
    #[test]
    fn records_end_outside_quotes_and_comments_quote_nothing() {
        assert_eq!(last_record_end(b"a,1\nb,2\nc"), Some(7));
        assert_eq!(last_record_end(b"a,\"x\ny\",1\nb,\"2\n"), Some(9));
        assert_eq!(last_record_end(b"# it\"s\na,1\nb,2"), Some(10));
        assert_eq!(last_record_end(b"a,1\r\n# \"\r\nb,2\r\n"), Some(14));
        assert_eq!(last_record_end(b"\"a\n#b\",1"), None);
    }
}
