//! Parsing: where the needed columns stand in a file, and the rows of a block — the one-pass
//! fast parser for well-formed blocks without quotes, the plain splitter that words the errors,
//! and the csv crate for blocks with quotes.

use super::read::{RawBlock, READ_AHEAD};
use super::{FieldError, FieldSpec};
use std::path::{Path, PathBuf};

/// Where the needed columns stand in one file.
pub(super) struct Layout {
    pub(super) path: PathBuf,
    pub(super) header: Vec<String>,
    pub(super) id_idx: usize,
    pub(super) col_idx: Vec<usize>,
    /// Keep the values' text (the finest mesh's, written back as given).
    pub(super) keep_text: bool,
    /// What each field of a record is, in header order (for the fast parser).
    pub(super) roles: Vec<Role>,
    /// The separating byte; `None` for runs of blanks.
    pub(super) sep: Option<u8>,
    /// The decimal mark.
    pub(super) decimal: crate::tabular::Decimal,
    /// Factor applied to each needed column's values (1 unless scaled or in `%`).
    pub(super) factors: Vec<f64>,
    /// Whether the record after the header is a units row (skipped).
    pub(super) units_row: bool,
}

/// What one field of a record is to the fast parser.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Role {
    /// Not needed.
    Skip,
    /// The probe id.
    Id,
    /// The value of needed column `c` (index into the spec's columns).
    Value(usize),
}

pub(super) fn roles(fields: usize, id_idx: usize, col_idx: &[usize]) -> Vec<Role> {
    let mut r = vec![Role::Skip; fields];
    if let Some(x) = r.get_mut(id_idx) {
        *x = Role::Id;
    }
    for (c, &i) in col_idx.iter().enumerate() {
        if let Some(x) = r.get_mut(i) {
            *x = Role::Value(c);
        }
    }
    r
}

impl Layout {
    pub(super) fn new(
        path: &Path,
        head: &super::read::Header,
        spec: &FieldSpec,
    ) -> Result<Self, FieldError> {
        use crate::tabular::ColumnRef;
        let header = &head.names;
        let find = |col: &ColumnRef| -> Result<usize, FieldError> {
            if let ColumnRef::Name(n) = col {
                if crate::tabular::matches(header, n) > 1 {
                    return Err(FieldError::DuplicateColumn {
                        path: path.to_path_buf(),
                        line: head.line,
                        column: n.clone(),
                    });
                }
            }
            crate::tabular::find(header, col).ok_or_else(|| FieldError::MissingColumn {
                path: path.to_path_buf(),
                line: head.line,
                column: match col {
                    ColumnRef::Name(n) => n.clone(),
                    ColumnRef::Index(i) => format!("number {i}"),
                },
                hint: crate::tabular::separator_hint(header, head.format.separator)
                    .map(|h| format!("; {h}"))
                    .unwrap_or_default(),
            })
        };
        let id_idx = match &spec.id {
            Some(name) => find(&ColumnRef::Name(name.clone()))?,
            None => 0,
        };
        let source = |c: usize| -> (ColumnRef, Option<f64>) {
            let (col, scale) = spec.reading.columns.get(c).cloned().unwrap_or((None, None));
            (
                col.unwrap_or_else(|| ColumnRef::Name(spec.columns[c].clone())),
                scale,
            )
        };
        let col_idx = spec
            .columns
            .iter()
            .enumerate()
            .map(|(k, c)| {
                let i = find(&source(k).0)?;
                if i == id_idx {
                    return Err(FieldError::Spec {
                        field: spec.name.clone(),
                        message: format!(
                            "column `{c}` is the id column of {}; list only quantities under `columns`",
                            path.display()
                        ),
                    });
                }
                Ok(i)
            })
            .collect::<Result<Vec<_>, _>>()?;
        let units_row = head.next_cells.as_ref().is_some_and(|cells| {
            crate::tabular::is_units_row(
                col_idx
                    .iter()
                    .map(|&i| cells.get(i).map_or("", String::as_str)),
                head.format.decimal,
            )
        });
        let factors = (0..col_idx.len())
            .map(|k| {
                source(k).1.unwrap_or_else(|| {
                    let from_row = if units_row {
                        head.next_cells
                            .as_ref()
                            .and_then(|c| c.get(col_idx[k]))
                            .and_then(|u| crate::tabular::clean_unit(u))
                    } else {
                        None
                    };
                    from_row
                        .or_else(|| crate::tabular::split_unit(&header[col_idx[k]]).1)
                        .and_then(crate::tabular::percent_factor)
                        .unwrap_or(1.0)
                })
            })
            .collect();
        Ok(Layout {
            path: path.to_path_buf(),
            roles: roles(header.len(), id_idx, &col_idx),
            header: header.clone(),
            id_idx,
            col_idx,
            keep_text: false,
            sep: head.format.separator.byte(),
            decimal: head.format.decimal,
            factors,
            units_row,
        })
    }

    /// Whether the values are read as written (no scale, a decimal point), so that the finest
    /// mesh's text can be written back as given.
    pub(super) fn as_given(&self) -> bool {
        self.decimal == crate::tabular::Decimal::Point
            && self.factors.iter().all(|&f| f.to_bits() == 1f64.to_bits())
    }

    /// Whether the one-pass parser applies: comma or semicolon (blanks are padding there),
    /// decimal point, no scale.
    fn fast(&self) -> bool {
        matches!(self.sep, Some(b',' | b';')) && self.as_given()
    }
}

/// Parsed rows of one file: ids, values (row-major, one per needed column) and lines.
#[derive(Debug, Default)]
pub(super) struct Rows {
    pub(super) ncols: usize,
    pub(super) ids: Vec<u8>,
    pub(super) id_end: Vec<usize>,
    /// The values' trimmed text, when the layout keeps it (row-major like `values`).
    pub(super) texts: Vec<u8>,
    pub(super) text_end: Vec<usize>,
    pub(super) values: Vec<f64>,
    /// Line of each row; empty when row `i` stands on line `first_line + i` (no blank lines).
    pub(super) lines: Vec<u64>,
    pub(super) first_line: u64,
    /// Every id is plain (read by the one-pass parser: no quote, separator, line end or outer
    /// blank), so it is written back without the check for quoting.
    pub(super) plain_ids: bool,
}

impl Rows {
    pub(super) fn new(ncols: usize, rows: usize) -> Self {
        Rows {
            ncols,
            ids: Vec::with_capacity(rows * 8),
            id_end: Vec::with_capacity(rows),
            texts: Vec::new(),
            text_end: Vec::new(),
            values: Vec::with_capacity(rows * ncols),
            lines: Vec::new(),
            first_line: 0,
            plain_ids: false,
        }
    }

    pub(super) fn len(&self) -> usize {
        self.id_end.len()
    }

    /// Line of row `i`.
    pub(super) fn line(&self, i: usize) -> u64 {
        match self.lines.get(i) {
            Some(&l) => l,
            None => self.first_line + i as u64,
        }
    }

    /// Empties the rows for reuse, keeping the allocations.
    pub(super) fn reset(&mut self, ncols: usize) {
        self.ncols = ncols;
        self.ids.clear();
        self.id_end.clear();
        self.texts.clear();
        self.text_end.clear();
        self.values.clear();
        self.lines.clear();
        self.first_line = 0;
        self.plain_ids = false;
    }

    pub(super) fn id(&self, i: usize) -> &[u8] {
        let start = if i == 0 { 0 } else { self.id_end[i - 1] };
        &self.ids[start..self.id_end[i]]
    }

    pub(super) fn value(&self, i: usize, c: usize) -> f64 {
        self.values[i * self.ncols + c]
    }

    /// The text of value `c` of row `i`, when kept.
    pub(super) fn text(&self, i: usize, c: usize) -> Option<&[u8]> {
        let k = i * self.ncols + c;
        let end = *self.text_end.get(k)?;
        let start = if k == 0 { 0 } else { self.text_end[k - 1] };
        Some(&self.texts[start..end])
    }
}

/// Text for a message: lossy UTF-8, at most 40 characters.
pub(super) fn shown(bytes: &[u8]) -> String {
    let s = String::from_utf8_lossy(bytes);
    if s.chars().count() > 40 {
        let mut t: String = s.chars().take(40).collect();
        t.push('…');
        t
    } else {
        s.into_owned()
    }
}

/// Checks one record's field count and appends its id and values; `field(i)` gives field i.
pub(super) fn push_row<'b>(
    layout: &Layout,
    rows: &mut Rows,
    line: u64,
    count: usize,
    field: impl Fn(usize) -> &'b [u8],
) -> Result<(), FieldError> {
    let expected = layout.header.len();
    if count != expected {
        return Err(if count < expected {
            FieldError::ShortRow {
                path: layout.path.clone(),
                line,
                column: layout.header[count].clone(),
                found: count,
                expected,
            }
        } else {
            FieldError::LongRow {
                path: layout.path.clone(),
                line,
                column: layout.header[expected - 1].clone(),
                found: count,
                expected,
            }
        });
    }
    rows.ids
        .extend_from_slice(field(layout.id_idx).trim_ascii());
    rows.id_end.push(rows.ids.len());
    rows.lines.push(line);
    for (k, &ci) in layout.col_idx.iter().enumerate() {
        let text = field(ci).trim_ascii();
        // The same grammar as `str::parse::<f64>` (checked by a test), straight from the bytes.
        let v = match layout.decimal {
            crate::tabular::Decimal::Point => fast_float2::parse::<f64, _>(text).ok(),
            crate::tabular::Decimal::Comma => comma_number(text),
        };
        match v {
            Some(v) if v.is_finite() => {
                rows.values.push(v * layout.factors[k]);
                if layout.keep_text {
                    rows.texts.extend_from_slice(text);
                    rows.text_end.push(rows.texts.len());
                }
            }
            _ if is_missing(text) => {
                // Marked missing: the probe gets no estimate in this column.
                rows.values.push(f64::NAN);
                if layout.keep_text {
                    rows.text_end.push(rows.texts.len());
                }
            }
            Some(_) => {
                return Err(FieldError::NotFinite {
                    path: layout.path.clone(),
                    line,
                    column: layout.header[ci].clone(),
                    text: shown(text),
                })
            }
            None => {
                return Err(FieldError::NotANumber {
                    path: layout.path.clone(),
                    line,
                    column: layout.header[ci].clone(),
                    text: shown(text),
                })
            }
        }
    }
    Ok(())
}

/// Whether a trimmed cell marks a missing value (see [`crate::tabular::is_missing`]).
fn is_missing(text: &[u8]) -> bool {
    std::str::from_utf8(text).is_ok_and(crate::tabular::is_missing)
}

/// A number written with a decimal comma (see [`crate::tabular::number`]); `None` when it is
/// none (a cell marked missing included).
fn comma_number(text: &[u8]) -> Option<f64> {
    // One comma and no point, as `tabular::number` reads it, without an allocation: the
    // number is copied with the comma made a point (longer texts take the general way).
    let mut buf = [0u8; 64];
    let commas = text.iter().filter(|&&c| c == b',').count();
    if text.len() <= buf.len() && commas <= 1 && !text.contains(&b'.') {
        for (d, &c) in buf.iter_mut().zip(text) {
            *d = if c == b',' { b'.' } else { c };
        }
        return fast_float2::parse::<f64, _>(&buf[..text.len()]).ok();
    }
    let t = std::str::from_utf8(text).ok()?;
    crate::tabular::number(t, crate::tabular::Decimal::Comma)
        .ok()
        .flatten()
}

/// Parses a block without double quotes by splitting at the separator (or runs of blanks) and
/// line ends, which is what CSV means for such text; lines starting with `#` are comments.
/// Gives `None` when a lone carriage return (a record end to the CSV reader) makes the general
/// path the safer one.
// Kept out of line so that profiles show parsing and estimating apart.
#[inline(never)]
pub(super) fn parse_plain(
    layout: &Layout,
    block: &RawBlock,
    mut rows: Rows,
) -> Result<Option<Rows>, FieldError> {
    let bytes = &block.bytes[..];
    let len = bytes.len();
    let mut fields: Vec<(usize, usize)> = Vec::with_capacity(layout.header.len() + 1);
    let mut line = block.first_line;
    let mut pos = 0;
    while pos < len {
        let (end, next) = match memchr::memchr2(b'\n', b'\r', &bytes[pos..]) {
            None => (len, len),
            Some(k) => {
                let i = pos + k;
                if bytes[i] == b'\n' {
                    (i, i + 1)
                } else if i + 1 == len {
                    (i, len)
                } else if bytes[i + 1] == b'\n' {
                    (i, i + 2)
                } else {
                    return Ok(None);
                }
            }
        };
        let this_line = line;
        line += 1;
        let rec = &bytes[pos..end];
        pos = next;
        // (a blank line is skipped, as the CSV reader skips it; so is a comment)
        if rec.is_empty() || rec[0] == b'#' {
            continue;
        }
        fields.clear();
        match layout.sep {
            Some(sep) => {
                let mut a = 0;
                for i in memchr::memchr_iter(sep, rec) {
                    fields.push((a, i));
                    a = i + 1;
                }
                fields.push((a, rec.len()));
            }
            None => {
                // Runs of blanks, outside parentheses (as `tabular::split` reads them).
                let mut a = None;
                let mut depth = 0usize;
                for (i, &c) in rec.iter().enumerate() {
                    match c {
                        b'(' => depth += 1,
                        b')' => depth = depth.saturating_sub(1),
                        _ => {}
                    }
                    match ((c == b' ' || c == b'\t') && depth == 0, a) {
                        (true, Some(s)) => {
                            fields.push((s, i));
                            a = None;
                        }
                        (false, None) => a = Some(i),
                        _ => {}
                    }
                }
                if let Some(s) = a {
                    fields.push((s, rec.len()));
                }
                if fields.is_empty() {
                    continue;
                }
            }
        }
        push_row(layout, &mut rows, this_line, fields.len(), |k| {
            let (a, b) = fields[k];
            &rec[a..b]
        })?;
    }
    Ok(Some(rows))
}

/// Field padding the fast parser skips: what `trim_ascii` trims inside a field of a record
/// without quotes (line feeds and carriage returns end the field there).
pub(super) fn is_pad(c: u8) -> bool {
    c == b' ' || c == b'\t' || c == b'\x0C'
}

/// The fast parser for blocks without double quotes: one pass over each record that parses the
/// needed values in place (`parse_partial`) and walks the other fields byte by byte. It takes
/// only well-formed records (the right field count, finite numbers, LF or CRLF line ends, no
/// blank lines) and gives `false` at anything else, leaving the block to [`parse_plain`],
/// which reads the same records the same way and words the errors. `rows` is then stale.
pub(super) fn parse_fast(layout: &Layout, block: &RawBlock, rows: &mut Rows) -> bool {
    // The separator as a constant: the byte loops compare against fixed bytes.
    match layout.sep {
        Some(b';') => parse_fast_with::<b';'>(layout, block, rows),
        _ => parse_fast_with::<b','>(layout, block, rows),
    }
}

/// [`parse_fast`] for the separator `SEP`.
// Kept out of line so that profiles show parsing and estimating apart.
#[inline(never)]
fn parse_fast_with<const SEP: u8>(layout: &Layout, block: &RawBlock, rows: &mut Rows) -> bool {
    let bytes = &block.bytes[..];
    let len = bytes.len();
    let roles = &layout.roles[..];
    let nf = roles.len();
    let ncols = rows.ncols;
    if !layout.fast() {
        return false;
    }
    // The needed values' text, by column, for the record at hand.
    let mut spans = [(0usize, 0usize); 8];
    // (A layout always has an id and a value field.)
    if ncols > spans.len() || nf < 2 {
        return false;
    }
    let mut pos = 0;
    // Row i stands on line first_line + i: no blank lines are taken here.
    rows.first_line = block.first_line;
    while pos < len {
        if bytes[pos] == b'#' {
            return false; // a comment line
        }
        let base = rows.values.len();
        rows.values.resize(base + ncols, 0.0);
        let mut id = (pos, pos);
        let mut f = 0;
        loop {
            match roles[f] {
                Role::Value(c) => {
                    let mut a = pos;
                    while a < len && is_pad(bytes[a]) {
                        a += 1;
                    }
                    let Ok((v, n)) = fast_float2::parse_partial::<f64, _>(&bytes[a..]) else {
                        return false;
                    };
                    if !v.is_finite() {
                        return false;
                    }
                    rows.values[base + c] = v;
                    spans[c] = (a, a + n);
                    pos = a + n;
                    while pos < len && is_pad(bytes[pos]) {
                        pos += 1;
                    }
                }
                role => {
                    let a = pos;
                    while pos < len && bytes[pos] != SEP && !matches!(bytes[pos], b'\n' | b'\r') {
                        pos += 1;
                    }
                    if role == Role::Id {
                        let (mut s, mut e) = (a, pos);
                        while s < e && is_pad(bytes[s]) {
                            s += 1;
                        }
                        while e > s && is_pad(bytes[e - 1]) {
                            e -= 1;
                        }
                        id = (s, e);
                    }
                }
            }
            // `pos` stands on the field's end.
            let end_of_record = match bytes.get(pos) {
                None => true,
                Some(&c) if c == SEP => {
                    pos += 1;
                    false
                }
                Some(b'\n') => {
                    pos += 1;
                    true
                }
                Some(b'\r') if bytes.get(pos + 1) == Some(&b'\n') => {
                    pos += 2;
                    true
                }
                Some(b'\r') if pos + 1 == len => {
                    pos += 1;
                    true
                }
                _ => return false,
            };
            f += 1;
            if end_of_record {
                break;
            }
            if f == nf {
                return false; // too many fields
            }
        }
        if f != nf {
            return false; // too few fields, or a blank line
        }
        rows.ids.extend_from_slice(&bytes[id.0..id.1]);
        rows.id_end.push(rows.ids.len());
        if layout.keep_text {
            for &(a, b) in &spans[..ncols] {
                rows.texts.extend_from_slice(&bytes[a..b]);
                rows.text_end.push(rows.texts.len());
            }
        }
    }
    true
}

pub(super) fn parse_block(
    layout: &Layout,
    block: &RawBlock,
    pool: &RowsPool,
) -> Result<Rows, FieldError> {
    let ncols = layout.col_idx.len();
    if !block.quoted {
        let mut rows = pooled_rows(pool, ncols, block.newlines + 1);
        if parse_fast(layout, block, &mut rows) {
            rows.plain_ids = true;
            return Ok(rows);
        }
        rows.reset(ncols);
        if let Some(rows) = parse_plain(layout, block, rows)? {
            return Ok(rows);
        }
    }
    let mut rows = pooled_rows(pool, ncols, block.newlines + 1);
    let Some(sep) = layout.sep else {
        return parse_blanks(layout, block, rows);
    };
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(sep)
        .comment(Some(b'#'))
        .from_reader(&block.bytes[..]);
    let mut rec = csv::ByteRecord::new();
    loop {
        match rdr.read_byte_record(&mut rec) {
            Ok(true) => {}
            Ok(false) => break,
            Err(e) => {
                let line = e
                    .position()
                    .map_or(block.first_line, |p| block.first_line + p.line() - 1);
                return Err(FieldError::Malformed {
                    path: layout.path.clone(),
                    line,
                    message: e.to_string(),
                });
            }
        }
        // csv reports the position where it started, before any blank lines it skipped.
        let line = match rec.position() {
            Some(p) => {
                let from = (p.byte() as usize).min(block.bytes.len());
                let skipped = block.bytes[from..]
                    .iter()
                    .take_while(|&&c| c == b'\n' || c == b'\r')
                    .filter(|&&c| c == b'\n')
                    .count() as u64;
                block.first_line + p.line() - 1 + skipped
            }
            None => block.first_line,
        };
        push_row(layout, &mut rows, line, rec.len(), |k| {
            rec.get(k).unwrap_or_default()
        })?;
    }
    Ok(rows)
}

/// A block with double quotes or lone carriage returns in a file separated by blanks: read by
/// the tabular reader's rules (quotes group blanks into a field).
fn parse_blanks(layout: &Layout, block: &RawBlock, mut rows: Rows) -> Result<Rows, FieldError> {
    let text = String::from_utf8_lossy(&block.bytes);
    for (l, rec) in crate::tabular::Lines::new(&text) {
        let fields = crate::tabular::split(rec, crate::tabular::Separator::Whitespace);
        let texts: Vec<std::borrow::Cow<str>> = fields.iter().map(|f| f.text()).collect();
        let line = block.first_line + l as u64 - 1;
        push_row(layout, &mut rows, line, texts.len(), |k| {
            texts[k].as_bytes()
        })?;
    }
    Ok(rows)
}

/// Parsed-row buffers handed back for reuse.
pub(super) type RowsPool = std::sync::Mutex<Vec<Rows>>;

/// Row buffers kept for reuse at most (about two rounds of blocks).
pub(super) const ROWS_POOL_MAX: usize = 6 * READ_AHEAD;

/// Rows for a block of about `hint` records, from the pool when it has some.
pub(super) fn pooled_rows(pool: &RowsPool, ncols: usize, hint: usize) -> Rows {
    match pool.lock().ok().and_then(|mut p| p.pop()) {
        Some(mut r) => {
            r.reset(ncols);
            r
        }
        None => Rows::new(ncols, hint),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn plain_and_csv_parsers_agree() {
        // The quote-free splitter must read exactly what the csv crate reads (RFC 4180 text
        // without quotes), including CRLF, blank lines and a missing final line end.
        let layout = Layout {
            path: PathBuf::from("m.csv"),
            header: vec!["id".into(), "x".into(), "cp".into()],
            id_idx: 0,
            col_idx: vec![2],
            keep_text: false,
            roles: roles(3, 0, &[2]),
            sep: Some(b','),
            decimal: crate::tabular::Decimal::Point,
            factors: vec![1.0],
            units_row: false,
        };
        let text = b"a,0.1,1.5\r\n\nb , 2, -2e-3 \n\r\nc,3,4";
        let block = |quoted| RawBlock {
            bytes: text.to_vec(),
            first_line: 7,
            newlines: 4,
            quoted,
        };
        let pool = RowsPool::default();
        let plain = parse_plain(&layout, &block(false), Rows::new(1, 4))
            .unwrap()
            .unwrap();
        let general = parse_block(&layout, &block(true), &pool).unwrap();
        for r in [&plain, &general] {
            assert_eq!([r.line(0), r.line(1), r.line(2)], [7, 9, 11]);
            assert_eq!([r.id(0), r.id(1), r.id(2)], [&b"a"[..], b"b", b"c"]);
            assert_eq!(
                r.values.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
                [1.5f64, -2e-3, 4.0].map(f64::to_bits)
            );
        }
        // A lone carriage return ends a record for the csv reader: the plain path declines.
        let lone = RawBlock {
            bytes: b"a,1,2\rb,3,4\n".to_vec(),
            first_line: 2,
            newlines: 1,
            quoted: false,
        };
        assert!(parse_plain(&layout, &lone, Rows::new(1, 4))
            .unwrap()
            .is_none());
        assert_eq!(parse_block(&layout, &lone, &pool).unwrap().len(), 2);
        // Errors name the physical line in both paths.
        let bad = |quoted| RawBlock {
            bytes: b"a,1,2\n\nb,3\n".to_vec(),
            first_line: 2,
            newlines: 3,
            quoted,
        };
        for q in [false, true] {
            let e = parse_block(&layout, &bad(q), &pool)
                .unwrap_err()
                .to_string();
            assert_eq!(
                e,
                "m.csv, line 4, column `cp`: the row has 2 fields but the header has 3"
            );
        }
    }

    /// A layout over `fields` header fields with the id first and the needed columns at
    /// `cols` (header indices, in the spec's order).
    fn layout_of(fields: usize, cols: &[usize], keep_text: bool) -> Layout {
        Layout {
            path: PathBuf::from("m.csv"),
            header: (0..fields).map(|i| format!("c{i}")).collect(),
            id_idx: 0,
            col_idx: cols.to_vec(),
            keep_text,
            roles: roles(fields, 0, cols),
            sep: Some(b','),
            decimal: crate::tabular::Decimal::Point,
            factors: vec![1.0; cols.len()],
            units_row: false,
        }
    }

    /// One parsed row as plain data: id, line, the values' bits, the kept texts.
    type RowData = (Vec<u8>, u64, Vec<u64>, Vec<Vec<u8>>);

    fn rows_text(r: &Rows) -> Vec<RowData> {
        (0..r.len())
            .map(|i| {
                (
                    r.id(i).to_vec(),
                    r.line(i),
                    (0..r.ncols).map(|c| r.value(i, c).to_bits()).collect(),
                    (0..r.ncols)
                        .filter_map(|c| r.text(i, c).map(<[u8]>::to_vec))
                        .collect(),
                )
            })
            .collect()
    }

    #[test]
    fn fast_parser_takes_well_formed_blocks() {
        // Checks the parser itself (no external value): ordinary records, CRLF and LF, padding
        // and a missing final line end go through the fast path, with the splitter's result.
        let layout = layout_of(3, &[2, 1], true);
        let block = RawBlock {
            bytes: b"a,0.1,1.5\r\n b ,2 , -2e-3 \nc,3,4".to_vec(),
            first_line: 7,
            newlines: 2,
            quoted: false,
        };
        let mut fast = Rows::new(2, 4);
        assert!(parse_fast(&layout, &block, &mut fast));
        let plain = parse_plain(&layout, &block, Rows::new(2, 4))
            .unwrap()
            .unwrap();
        assert_eq!(rows_text(&fast), rows_text(&plain));
        assert_eq!(fast.id(1), b"b");
        assert_eq!(fast.text(1, 0), Some(&b"-2e-3"[..]));
        assert_eq!(fast.line(2), 9);
        // Anything unusual is left to the splitter.
        for odd in [
            &b"a,1,2\n\nb,3,4\n"[..],
            b"a,1,2\rb,3,4\n",
            b"a,1,x\n",
            b"a,1,nan\n",
            b"a,1\n",
            b"a,1,2,3\n",
            b"a,1,2e\n",
        ] {
            let b = RawBlock {
                bytes: odd.to_vec(),
                first_line: 2,
                newlines: 1,
                quoted: false,
            };
            assert!(
                !parse_fast(&layout, &b, &mut Rows::new(2, 4)),
                "{}",
                String::from_utf8_lossy(odd)
            );
        }
    }

    #[test]
    fn other_separators_comments_and_missing_cells() {
        // The rules of docs/study-file.md, "Tabular files": `#` lines are comments, blanks
        // separate with `whitespace`, a decimal comma reads as a point, a missing cell is NaN
        // (no estimate), a `%` factor scales.
        let pool = RowsPool::default();
        let read = |layout: &Layout, text: &[u8]| {
            let b = RawBlock {
                bytes: text.to_vec(),
                first_line: 3,
                newlines: 0,
                quoted: text.contains(&b'"'),
            };
            let mut fast = Rows::new(2, 4);
            let took = parse_fast(layout, &b, &mut fast);
            (took, parse_block(layout, &b, &pool).map(|r| rows_text(&r)))
        };
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        let mut l = layout_of(3, &[2, 1], false);
        l.sep = Some(b';');
        let (took, rows) = read(&l, b"a;1.5;2\n# note;9;9\nb;3;-\n");
        assert!(!took, "a comment and a missing cell leave the fast path");
        let rows = rows.unwrap();
        assert_eq!(rows.len(), 2);
        assert_eq!((rows[0].1, rows[1].1), (3, 5));
        assert_eq!(rows[0].2, bits(&[2.0, 1.5]));
        assert!(f64::from_bits(rows[1].2[0]).is_nan() && rows[1].2[1] == 3f64.to_bits());
        // Semicolons without anything odd: the fast path takes them.
        assert!(read(&l, b"a;1.5;2\nb;3;4\n").0);
        // Decimal commas and a scale.
        l.decimal = crate::tabular::Decimal::Comma;
        l.factors = vec![0.01, 1.0];
        let (took, rows) = read(&l, b"a;1,5;25\n");
        assert!(!took);
        assert_eq!(rows.unwrap()[0].2, bits(&[0.25, 1.5]));
        // Runs of blanks, with quotes too.
        let mut w = layout_of(3, &[2, 1], false);
        w.sep = None;
        let (took, rows) = read(&w, b"  a   1.5  2\n\tb 3 4 \n");
        assert!(!took);
        assert_eq!(rows.unwrap()[1].2, bits(&[4.0, 3.0]));
        let (_, rows) = read(&w, b"\"a b\" 1.5 2\n");
        let rows = rows.unwrap();
        assert_eq!(rows[0].0, b"a b");
        // `inf` is still refused.
        assert!(read(&l, b"a;1;inf\n").1.is_err());
    }

    /// Blocks the fast parser took in `fast_parser_reads_what_the_splitter_reads`.
    static FAST_TAKEN: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);

    #[test]
    fn fast_parser_property_takes_many_blocks() {
        // Guards the property test below against passing vacuously: run it here too and
        // require that the fast path took a good share of the generated blocks.
        fast_parser_reads_what_the_splitter_reads();
        let taken = FAST_TAKEN.load(std::sync::atomic::Ordering::Relaxed);
        assert!(taken >= 200, "the fast parser took only {taken} blocks");
    }

    fn csv_text() -> impl Strategy<Value = Vec<u8>> {
        // Mostly well-formed records (so that the fast parser takes many blocks), with odd
        // pieces between them now and then.
        let id = prop_oneof![Just("a"), Just("id9"), Just(" b "), Just("\t7")];
        let num = || {
            prop_oneof![
                Just("1"),
                Just("0.25"),
                Just("-3e2"),
                Just("+.5"),
                Just("5."),
                Just("1E+3"),
                Just(" 4 "),
                Just("-0"),
                Just("12345678901234567890.5e-3"),
            ]
        };
        let end = prop_oneof![Just("\n"), Just("\r\n")];
        let record =
            (id, num(), num(), end).prop_map(|(i, x, y, e)| format!("{i},{x},{y}{e}").into_bytes());
        let odd = prop_oneof![
            Just(&b","[..]),
            Just(&b"\n"[..]),
            Just(&b"\r"[..]),
            Just(&b" "[..]),
            Just(&b"1"[..]),
            Just(&b"e"[..]),
            Just(&b"."[..]),
            Just(&b"+"[..]),
            Just(&b"inf"[..]),
            Just(&b"x"[..]),
        ]
        .prop_map(<[u8]>::to_vec);
        let piece = prop_oneof![12 => record, 1 => odd];
        proptest::collection::vec(piece, 0..30).prop_map(|v| v.concat())
    }

    fn number_text() -> impl Strategy<Value = String> {
        let piece = prop_oneof![
            Just("0"),
            Just("7"),
            Just("12345678901234567890"),
            Just("."),
            Just("e"),
            Just("E"),
            Just("+"),
            Just("-"),
            Just("inf"),
            Just("INFINITY"),
            Just("nan"),
            Just("NaN"),
            Just("ity"),
            Just("x"),
            Just("_"),
            Just("99999"),
        ];
        proptest::collection::vec(piece, 0..7).prop_map(|v| v.concat())
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 2000, ..ProptestConfig::default() })]
        // Source of the check: Rust's standard library `str::parse::<f64>` (correctly rounded,
        // its documented grammar): the values read from the probe files must be the same
        // doubles, and the same texts must be refused.
        #[test]
        fn number_grammar_is_that_of_std(text in number_text()) {
            let ours = fast_float2::parse::<f64, _>(text.as_bytes()).ok();
            let std = text.parse::<f64>().ok();
            match (ours, std) {
                (Some(a), Some(b)) => prop_assert!(
                    a.to_bits() == b.to_bits() || (a.is_nan() && b.is_nan()),
                    "{}: {} vs {}", text, a, b
                ),
                (None, None) => {}
                _ => prop_assert!(false, "{}: {:?} vs {:?}", text, ours, std),
            }
        }

        // Checks the parser itself against the splitter (no external value): whenever the
        // fast parser takes a block, it reads the same ids, values, texts and lines.
        #[test]
        fn fast_parser_reads_what_the_splitter_reads(text in csv_text(), keep in any::<bool>()) {
            let layout = layout_of(3, &[2, 1], keep);
            let block = RawBlock { bytes: text.clone(), first_line: 3, newlines: 0, quoted: false };
            let mut fast = Rows::new(2, 4);
            if parse_fast(&layout, &block, &mut fast) {
                FAST_TAKEN.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                let plain = parse_plain(&layout, &block, Rows::new(2, 4));
                let plain = match plain {
                    Ok(Some(r)) => r,
                    other => {
                        return Err(TestCaseError::fail(format!(
                            "{:?}: fast took it, the splitter gave {:?}",
                            String::from_utf8_lossy(&text),
                            other.map(|o| o.map(|r| r.len()))
                        )))
                    }
                };
                prop_assert_eq!(rows_text(&fast), rows_text(&plain));
            }
        }
    }
}
