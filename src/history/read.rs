//! Reading one column of a monitor history (or several row-aligned columns, [`read_table`]),
//! streamed.
//!
//! The layouts read (detected from the text, or set with [`Separator`] and [`Decimal`]):
//!
//! - **Solver function-object files**: whitespace-separated columns after `#` comment lines,
//!   the last non-empty comment line before the data naming the columns — the open-source
//!   CFD solver's `postProcessing/<name>/<time>/*.dat` files (`coefficient.dat` with
//!   `# Time Cm Cd Cl Cl(f) Cl(r)`; `force.dat` whose rows hold parenthesised vectors under a
//!   header such as `(total_x total_y total_z)`; the older `forces.dat` whose rows hold groups of
//!   vectors `((1 2 3) (4 5 6) (0 0 0))` under `forces(pressure viscous porous)`).
//!   A parenthesised value in a row expands into one column per component. The names come from
//!   the header where it names the components (`total_x`), otherwise they are ours: the
//!   header's name, an underscore and `x`, `y`, `z` for three components (`forces_pressure_x`),
//!   `xx xy xz yy yz zz` for six, `xx xy … zz` for nine, or the 1-based position for any other
//!   count.
//! - **Delimited text** with a header row: comma, semicolon or tab separators, double quotes
//!   around fields allowed within a line, a decimal comma where the separator is not a comma.
//!   A row of text right under the header is read as the columns' units.
//!
//! Only the chosen column (and the optional abscissa column, iteration or time) is parsed;
//! every other field is only stepped over. Probe files (`# Probe 0 (x y z)` lines, then
//! `# Probe 0 1 …` and `# Time`) name their columns `Time`, `probe_0`, `probe_1`, … (vectors
//! `probe_0_x`, …); the solver's value for a probe outside the mesh, −1e300, is a missing
//! sample. Empty fields, `nan`, `N/A`, `NA`, `#N/A`, `null`,
//! `-` and non-finite numbers in a chosen column mark a missing sample: the row is skipped and
//! the [`Series`] says which lines were (warning `samples_skipped`). An unterminated last line
//! that does not parse is taken for a row being written when the file was copied and dropped
//! with the warning `last_row_incomplete`. Anything else that is not a number is an error
//! naming the file, line and column.

use super::HistoryError;
use crate::warning::Warning;
use serde::{Deserialize, Serialize};
use std::io::Read;
use std::path::{Path, PathBuf};

/// How the fields of a row are separated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Separator {
    /// Decided from the text (see the module documentation).
    #[default]
    Auto,
    /// Runs of spaces and tabs; parentheses group vector components.
    Spaces,
    /// Commas.
    Comma,
    /// Semicolons.
    Semicolon,
    /// Tabs (each tab separates; empty fields are possible).
    Tab,
}

impl Separator {
    fn byte(self) -> Option<u8> {
        match self {
            Separator::Comma => Some(b','),
            Separator::Semicolon => Some(b';'),
            Separator::Tab => Some(b'\t'),
            Separator::Auto | Separator::Spaces => None,
        }
    }

    /// The word for it in messages.
    pub fn name(self) -> &'static str {
        match self {
            Separator::Auto => "auto",
            Separator::Spaces => "spaces",
            Separator::Comma => "comma",
            Separator::Semicolon => "semicolon",
            Separator::Tab => "tab",
        }
    }
}

/// The decimal mark of the numbers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Decimal {
    /// A comma where the separator is not a comma and the first data row has one in a field;
    /// otherwise a point.
    #[default]
    Auto,
    /// `1.5`.
    Point,
    /// `1,5` (refused together with the comma separator).
    Comma,
}

/// A column: by its name in the header, or by its 1-based position (after vectors are
/// expanded into components).
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum ColumnRef {
    /// 1-based position.
    Position(usize),
    /// Name in the header.
    Name(String),
}

impl std::fmt::Display for ColumnRef {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ColumnRef::Position(i) => write!(f, "column {i}"),
            ColumnRef::Name(n) => write!(f, "column `{n}`"),
        }
    }
}

/// What to read from a history file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ReadOptions {
    /// The monitored value.
    pub column: ColumnRef,
    /// The iteration or time column, if any.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub abscissa: Option<ColumnRef>,
    /// Field separator.
    #[serde(default)]
    pub separator: Separator,
    /// Decimal mark.
    #[serde(default)]
    pub decimal: Decimal,
}

impl ReadOptions {
    /// Reads `column`, everything else detected.
    pub fn column(column: ColumnRef) -> Self {
        ReadOptions {
            column,
            abscissa: None,
            separator: Separator::Auto,
            decimal: Decimal::Auto,
        }
    }
}

/// One column of a history, with its abscissa when one was asked for.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// The file read.
    pub path: PathBuf,
    /// The column's name (its header name, or `column N` without a header).
    pub column: String,
    /// The column's unit, from a unit row under the header.
    pub unit: Option<String>,
    /// The abscissa column's name, when one was read.
    pub abscissa_name: Option<String>,
    /// The samples, in file order (missing ones left out).
    pub values: Vec<f64>,
    /// The abscissa of each sample, when an abscissa column was read.
    pub abscissa: Option<Vec<f64>>,
    /// Every column name after expansion, in order (empty without a header).
    pub columns: Vec<String>,
    /// The separator used (detected or given).
    pub separator: Separator,
    /// Whether numbers were read with a decimal comma.
    pub decimal_comma: bool,
    /// Lines (1-based) of the rows skipped for a missing or non-finite sample.
    pub skipped_lines: Vec<u64>,
    /// `samples_skipped`, `last_row_incomplete`, `abscissa_not_increasing`.
    pub warnings: Vec<Warning>,
}

/// What to read from a table of columns (several columns of one history file at once, for
/// example a value and an operating-point column).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TableOptions {
    /// The columns, in the order wanted.
    pub columns: Vec<ColumnRef>,
    /// Field separator.
    #[serde(default)]
    pub separator: Separator,
    /// Decimal mark.
    #[serde(default)]
    pub decimal: Decimal,
}

/// Columns of a history file, row-aligned: a row missing any of them is left out of all.
#[derive(Debug, Clone, PartialEq)]
pub struct Table {
    /// The file read.
    pub path: PathBuf,
    /// The names of the columns read (header names, or `column N` without a header).
    pub names: Vec<String>,
    /// Their units, from a unit row.
    pub units: Vec<Option<String>>,
    /// Their values, one vector per column read, all of one length.
    pub columns: Vec<Vec<f64>>,
    /// Every column name of the file after expansion, in order (empty without a header).
    pub header: Vec<String>,
    /// The separator used (detected or given).
    pub separator: Separator,
    /// Whether numbers were read with a decimal comma.
    pub decimal_comma: bool,
    /// Lines (1-based) of the rows skipped for a missing or non-finite value.
    pub skipped_lines: Vec<u64>,
    /// `samples_skipped`, `last_row_incomplete`.
    pub warnings: Vec<Warning>,
}

/// Reads the chosen columns of the history file in `path`.
pub fn read_table(path: &Path, opts: &TableOptions) -> Result<Table, HistoryError> {
    let file = crate::input::open_regular(path).map_err(|source| HistoryError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    read_table_from(file, path, opts)
}

/// Reads the chosen columns from any reader; `path` names it in messages.
pub fn read_table_from<R: Read>(
    reader: R,
    path: &Path,
    opts: &TableOptions,
) -> Result<Table, HistoryError> {
    if opts.separator == Separator::Comma && opts.decimal == Decimal::Comma {
        return Err(HistoryError::File {
            path: path.to_path_buf(),
            message: "a decimal comma cannot be read with the comma separator".into(),
        });
    }
    if opts.columns.is_empty() {
        return Err(HistoryError::File {
            path: path.to_path_buf(),
            message: "no column asked for".into(),
        });
    }
    let mut st = State::new(path, opts);
    for_each_line(reader, path, |no, line, terminated| {
        st.line(no, line, terminated)
    })?;
    st.finish()
}

/// The longest line read, in bytes: a history row is a few hundred bytes; a file without line
/// ends is refused after this much.
pub const MAX_LINE: usize = 16 << 20;
const BLOCK: usize = 1 << 20;
/// The most samples read from one history (160 MB per column held): a bound on memory for any
/// input (a project limit).
pub const MAX_SAMPLES: usize = 20_000_000;

/// Reads one column (and the abscissa column) of the history in `path`.
pub fn read_history(path: &Path, opts: &ReadOptions) -> Result<Series, HistoryError> {
    let file = crate::input::open_regular(path).map_err(|source| HistoryError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    read_history_from(file, path, opts)
}

/// Reads one column of a history from any reader; `path` names it in messages.
pub fn read_history_from<R: Read>(
    reader: R,
    path: &Path,
    opts: &ReadOptions,
) -> Result<Series, HistoryError> {
    let table = TableOptions {
        columns: std::iter::once(opts.column.clone())
            .chain(opts.abscissa.clone())
            .collect(),
        separator: opts.separator,
        decimal: opts.decimal,
    };
    let t = read_table_from(reader, path, &table)?;
    Ok(series_of(t, path, opts.abscissa.is_some()))
}

/// Reads `opts.column − minus`, row by row (a row missing either is left out of both), with
/// the abscissa when `opts` asks for one: for example a pressure difference between two probes.
pub fn read_difference(
    path: &Path,
    opts: &ReadOptions,
    minus: &ColumnRef,
) -> Result<Series, HistoryError> {
    let file = crate::input::open_regular(path).map_err(|source| HistoryError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    let table = TableOptions {
        columns: [opts.column.clone(), minus.clone()]
            .into_iter()
            .chain(opts.abscissa.clone())
            .collect(),
        separator: opts.separator,
        decimal: opts.decimal,
    };
    let mut t = read_table_from(file, path, &table)?;
    let minus_values = t.columns.remove(1);
    let minus_name = t.names.remove(1);
    t.units.remove(1);
    for (a, b) in t.columns[0].iter_mut().zip(&minus_values) {
        *a -= b;
    }
    t.names[0] = format!("{} − {minus_name}", t.names[0]);
    Ok(series_of(t, path, opts.abscissa.is_some()))
}

/// The first column of a table as a series, with the second as its abscissa when there is one
/// (warning `abscissa_not_increasing` where it does not increase).
fn series_of(t: Table, path: &Path, with_abscissa: bool) -> Series {
    let mut cols = t.columns.into_iter();
    let mut names = t.names.into_iter();
    let values = cols.next().unwrap_or_default();
    let column = names.next().unwrap_or_default();
    let abscissa = cols.next().filter(|_| with_abscissa);
    let abscissa_name = names.next().filter(|_| with_abscissa);
    let mut warnings = t.warnings;
    if let Some(x) = &abscissa {
        if let Some(i) = x.windows(2).position(|w| w[1] <= w[0]) {
            warnings.push(Warning::new(
                "abscissa_not_increasing",
                format!(
                    "{}: the abscissa `{}` does not increase after sample {} ({} then {}); \
                     a restarted run appended to the same file?",
                    path.display(),
                    abscissa_name.as_deref().unwrap_or(""),
                    i + 1,
                    x[i],
                    x[i + 1]
                ),
            ));
        }
    }
    Series {
        path: t.path,
        column,
        unit: t.units.into_iter().next().flatten(),
        abscissa_name,
        values,
        abscissa,
        columns: t.header,
        separator: t.separator,
        decimal_comma: t.decimal_comma,
        skipped_lines: t.skipped_lines,
        warnings,
    }
}

/// Calls `f` with each line (1-based number, bytes without the line end, whether a line end
/// followed), reading blocks of a mebibyte.
fn for_each_line<R: Read>(
    mut r: R,
    path: &Path,
    mut f: impl FnMut(u64, &[u8], bool) -> Result<(), HistoryError>,
) -> Result<(), HistoryError> {
    let mut buf = vec![0u8; BLOCK];
    let (mut start, mut end) = (0usize, 0usize);
    let mut no = 0u64;
    let mut first = true;
    loop {
        if end == buf.len() {
            if start > 0 {
                buf.copy_within(start..end, 0);
                end -= start;
                start = 0;
            } else if buf.len() >= MAX_LINE {
                return Err(HistoryError::At {
                    path: path.to_path_buf(),
                    line: no + 1,
                    column: 1,
                    message: format!("a line longer than {} MiB", MAX_LINE >> 20),
                });
            } else {
                buf.resize((buf.len() * 2).min(MAX_LINE), 0);
            }
        }
        let n = loop {
            match r.read(&mut buf[end..]) {
                Ok(n) => break n,
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
                Err(source) => {
                    return Err(HistoryError::Io {
                        path: path.to_path_buf(),
                        source,
                    })
                }
            }
        };
        let scan_from = end;
        end += n;
        if first && (end >= 3 || n == 0) {
            // A byte-order mark can only open the file: checked once, before any line.
            first = false;
            if no == 0 && start == 0 && buf[..end].starts_with(&[0xEF, 0xBB, 0xBF]) {
                start = 3;
            }
        }
        // Lines wholly in buf[start..end]; buf[start..scan_from] holds no line end.
        let mut pos = start;
        let from = scan_from.max(start);
        for nl in memchr::memchr_iter(b'\n', &buf[from..end]) {
            let at = from + nl;
            let mut line = &buf[pos..at];
            if let [rest @ .., b'\r'] = line {
                line = rest;
            }
            no += 1;
            f(no, line, true)?;
            pos = at + 1;
        }
        start = pos;
        if n == 0 {
            if start < end {
                let mut line = &buf[start..end];
                if let [rest @ .., b'\r'] = line {
                    line = rest;
                }
                no += 1;
                f(no, line, false)?;
            }
            return Ok(());
        }
    }
}

/// One parsed field of a chosen column.
enum Num {
    Value(f64),
    Missing,
    Bad,
}

const MISSING: [&[u8]; 8] = [b"", b"N/A", b"n/a", b"NA", b"#N/A", b"null", b"-", b"--"];

fn parse_num(text: &[u8], comma: bool) -> Num {
    let t = text.trim_ascii();
    let t = match t {
        [b'"', inner @ .., b'"'] => inner.trim_ascii(),
        _ => t,
    };
    if MISSING.contains(&t) {
        return Num::Missing;
    }
    let parsed = if comma && t.contains(&b',') {
        if t.len() > 64 {
            return Num::Bad;
        }
        let mut b = [0u8; 64];
        for (d, s) in b.iter_mut().zip(t) {
            *d = if *s == b',' { b'.' } else { *s };
        }
        fast_float2::parse::<f64, _>(&b[..t.len()])
    } else {
        fast_float2::parse::<f64, _>(t)
    };
    match parsed {
        // −1e300 is the solver's mark of a probe outside the mesh (−VGREAT); anything
        // below it is no pressure or force either.
        Ok(v) if v <= -1e300 => Num::Missing,
        Ok(v) if v.is_finite() => Num::Value(v),
        Ok(_) => Num::Missing,
        Err(_) => Num::Bad,
    }
}

/// Text for a message: lossy UTF-8, at most 40 characters.
fn shown(bytes: &[u8]) -> String {
    let s = String::from_utf8_lossy(bytes.trim_ascii());
    if s.chars().count() > 40 {
        let mut t: String = s.chars().take(40).collect();
        t.push('…');
        t
    } else {
        s.into_owned()
    }
}

/// 1-based character column of byte offset `at` in `line`.
fn char_column(line: &[u8], at: usize) -> u64 {
    let at = at.min(line.len());
    String::from_utf8_lossy(&line[..at]).chars().count() as u64 + 1
}

// ---------------------------------------------------------------------------------------------
// Splitting rows.

/// Byte ranges of the top-level fields of a delimited line; quotes are honoured within the
/// line. `Err(offset)` for a quote left open.
fn split_delimited(line: &[u8], sep: u8) -> Result<Vec<(usize, usize)>, usize> {
    let mut out = Vec::new();
    if !line.contains(&b'"') {
        let mut a = 0;
        for i in memchr::memchr_iter(sep, line) {
            out.push((a, i));
            a = i + 1;
        }
        out.push((a, line.len()));
        return Ok(out);
    }
    let (mut a, mut i, mut quoted, mut open_at) = (0usize, 0usize, false, 0usize);
    while i < line.len() {
        let c = line[i];
        if quoted {
            if c == b'"' {
                if line.get(i + 1) == Some(&b'"') {
                    i += 1;
                } else {
                    quoted = false;
                }
            }
        } else if c == b'"' {
            quoted = true;
            open_at = i;
        } else if c == sep {
            out.push((a, i));
            a = i + 1;
        }
        i += 1;
    }
    if quoted {
        return Err(open_at);
    }
    out.push((a, line.len()));
    Ok(out)
}

/// A field's text without its quotes (`""` inside read as `"`).
fn unquote(field: &[u8]) -> String {
    let t = field.trim_ascii();
    match t {
        [b'"', inner @ .., b'"'] => String::from_utf8_lossy(inner).replace("\"\"", "\""),
        _ => String::from_utf8_lossy(t).into_owned(),
    }
}

fn is_space(c: u8) -> bool {
    matches!(c, b' ' | b'\t' | b'\r' | b'\x0b' | b'\x0c')
}

/// The shape of a whitespace row: scalars and parenthesised groups.
#[derive(Debug, Clone, PartialEq)]
enum Node {
    Scalar,
    Group(Vec<Node>),
}

/// The top-level nodes of a whitespace row; `Err(offset)` at an unbalanced parenthesis.
fn row_tree(line: &[u8]) -> Result<Vec<Node>, usize> {
    let mut stack: Vec<(Vec<Node>, usize)> = vec![(Vec::new(), 0)];
    let mut i = 0;
    while i < line.len() {
        let c = line[i];
        if c == b'(' {
            if stack.len() > 64 {
                return Err(i);
            }
            stack.push((Vec::new(), i));
            i += 1;
        } else if c == b')' {
            if stack.len() < 2 {
                return Err(i);
            }
            let (g, _) = stack.pop().unwrap_or_default();
            if let Some((top, _)) = stack.last_mut() {
                top.push(Node::Group(g));
            }
            i += 1;
        } else if is_space(c) {
            i += 1;
        } else {
            while i < line.len() && !is_space(line[i]) && line[i] != b'(' && line[i] != b')' {
                i += 1;
            }
            if let Some((top, _)) = stack.last_mut() {
                top.push(Node::Scalar);
            }
        }
    }
    if stack.len() > 1 {
        return Err(stack.last().map_or(0, |s| s.1));
    }
    Ok(stack.pop().map(|s| s.0).unwrap_or_default())
}

/// The offset of the first parenthesis that does not pair up, if any.
fn unbalanced(line: &[u8]) -> Option<usize> {
    memchr::memchr2(b'(', b')', line)?;
    let mut open = Vec::new();
    for (i, c) in line.iter().enumerate() {
        if *c == b'(' {
            open.push(i);
        } else if *c == b')' && open.pop().is_none() {
            return Some(i);
        }
    }
    open.first().copied()
}

/// Splits a whitespace header at spaces outside parentheses.
fn header_tokens(text: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut cur = String::new();
    let mut depth = 0usize;
    for c in text.chars() {
        match c {
            '(' => {
                depth += 1;
                cur.push(c);
            }
            ')' => {
                depth = depth.saturating_sub(1);
                cur.push(c);
            }
            c if c.is_whitespace() && depth == 0 => {
                if !cur.is_empty() {
                    out.push(std::mem::take(&mut cur));
                }
            }
            c => cur.push(c),
        }
    }
    if !cur.is_empty() {
        out.push(cur);
    }
    out
}

/// `forces(pressure viscous porous)` → (`forces`, [pressure, viscous, porous]); a name without
/// a trailing group → (name, []).
fn split_label(label: &str) -> (String, Vec<String>) {
    if let (Some(open), true) = (label.find('('), label.ends_with(')')) {
        let inner = &label[open + 1..label.len() - 1];
        let mut items = Vec::new();
        let mut cur = String::new();
        let mut depth = 0usize;
        for c in inner.chars() {
            match c {
                '(' => {
                    depth += 1;
                    cur.push(c);
                }
                ')' => {
                    depth = depth.saturating_sub(1);
                    cur.push(c);
                }
                c if (c.is_whitespace() || c == ',') && depth == 0 => {
                    if !cur.is_empty() {
                        items.push(std::mem::take(&mut cur));
                    }
                }
                c => cur.push(c),
            }
        }
        if !cur.is_empty() {
            items.push(cur);
        }
        (label[..open].to_string(), items)
    } else {
        (label.to_string(), Vec::new())
    }
}

fn joined(prefix: &str, item: &str) -> String {
    if prefix.is_empty() {
        item.to_string()
    } else {
        format!("{prefix}_{item}")
    }
}

/// Our component names for a group of `n` values.
fn component(i: usize, n: usize) -> String {
    const V: [&str; 3] = ["x", "y", "z"];
    const S: [&str; 6] = ["xx", "xy", "xz", "yy", "yz", "zz"];
    const T: [&str; 9] = ["xx", "xy", "xz", "yx", "yy", "yz", "zx", "zy", "zz"];
    match n {
        3 => V[i].to_string(),
        6 => S[i].to_string(),
        9 => T[i].to_string(),
        _ => (i + 1).to_string(),
    }
}

/// The flat column names of a header label over the shape of its values.
fn flat_names(label: &str, node: &Node, out: &mut Vec<String>) {
    match node {
        Node::Scalar => out.push(label.to_string()),
        Node::Group(children) => {
            let (prefix, items) = split_label(label);
            let n = children.len();
            for (i, child) in children.iter().enumerate() {
                let name = if items.len() == n {
                    joined(&prefix, &items[i])
                } else {
                    joined(&prefix, &component(i, n))
                };
                flat_names(&name, child, out);
            }
        }
    }
}

fn count_leaves(nodes: &[Node]) -> usize {
    nodes
        .iter()
        .map(|n| match n {
            Node::Scalar => 1,
            Node::Group(g) => count_leaves(g),
        })
        .sum()
}

// ---------------------------------------------------------------------------------------------
// The reader's state.

struct Layout {
    sep: Separator,
    comma: bool,
    /// Flat column names (empty: none known).
    names: Vec<String>,
    /// Flat indices of the columns read, in the order asked.
    wanted: Vec<usize>,
    /// The largest flat index needed.
    need: usize,
}

struct State<'a> {
    path: &'a Path,
    opts: &'a TableOptions,
    /// The last non-empty comment line before the data, without its `#`.
    comment: Option<String>,
    /// The comment line before it, for the probe layout (`# Probe 0 1 2` then `# Time`).
    before_comment: Option<String>,
    /// Non-numeric lines before the data (header row, unit row) with their line numbers.
    text_rows: Vec<(u64, Vec<u8>)>,
    layout: Option<Layout>,
    units: Vec<Option<String>>,
    columns: Vec<Vec<f64>>,
    /// The values of the current row (reused).
    row_values: Vec<f64>,
    skipped: Vec<u64>,
    incomplete: Option<u64>,
    first_data_line: u64,
    /// Fields of the current row (reused).
    ranges: Vec<(usize, usize)>,
    /// The separator, fixed at the first line that is not a comment.
    sep: Option<Separator>,
}

fn comment_text(line: &[u8]) -> Option<&[u8]> {
    let t = line.trim_ascii_start();
    t.strip_prefix(b"#")
}

impl<'a> State<'a> {
    fn new(path: &'a Path, opts: &'a TableOptions) -> Self {
        State {
            path,
            opts,
            comment: None,
            before_comment: None,
            text_rows: Vec::new(),
            layout: None,
            units: Vec::new(),
            columns: Vec::new(),
            row_values: Vec::new(),
            skipped: Vec::new(),
            incomplete: None,
            first_data_line: 0,
            ranges: Vec::new(),
            sep: None,
        }
    }

    fn at(&self, line: u64, column: u64, message: String) -> HistoryError {
        HistoryError::At {
            path: self.path.to_path_buf(),
            line,
            column,
            message,
        }
    }

    fn line(&mut self, no: u64, line: &[u8], terminated: bool) -> Result<(), HistoryError> {
        if line.trim_ascii().is_empty() {
            return Ok(());
        }
        if let Some(c) = comment_text(line) {
            if self.layout.is_none() {
                let c = c.trim_ascii();
                if !c.is_empty() {
                    self.before_comment = self.comment.take();
                    self.comment = Some(String::from_utf8_lossy(c).into_owned());
                }
            }
            return Ok(());
        }
        if self.layout.is_none() {
            match self.start(no, line) {
                Ok(true) => {}
                Ok(false) => return Ok(()),
                Err(e) if !terminated => {
                    self.incomplete = Some(no);
                    let _ = e;
                    return Ok(());
                }
                Err(e) => return Err(e),
            }
        }
        match self.row(no, line) {
            Ok(()) => Ok(()),
            Err(_) if !terminated => {
                self.incomplete = Some(no);
                Ok(())
            }
            Err(e) => Err(e),
        }
    }

    /// Looks at a line before the data: keeps a text row, or fixes the layout at the first
    /// data row (`Ok(true)`).
    fn start(&mut self, no: u64, line: &[u8]) -> Result<bool, HistoryError> {
        let sep = match (self.sep, self.opts.separator) {
            (Some(s), _) => s,
            (None, Separator::Auto) => self.detect(line),
            (None, s) => s,
        };
        self.sep = Some(sep);
        let fields: Vec<&[u8]> = match sep.byte() {
            Some(b) => split_delimited(line, b)
                .map_err(|at| {
                    self.at(
                        no,
                        char_column(line, at),
                        "a double quote opens a field that does not close on this line".into(),
                    )
                })?
                .into_iter()
                .map(|(a, b)| &line[a..b])
                .collect(),
            None => line
                .split(|c| is_space(*c) || *c == b'(' || *c == b')')
                .filter(|f| !f.is_empty())
                .collect(),
        };
        let comma = match self.opts.decimal {
            Decimal::Point => false,
            Decimal::Comma => true,
            Decimal::Auto => sep != Separator::Comma && fields.iter().any(|f| f.contains(&b',')),
        };
        let numeric = fields
            .iter()
            .all(|f| !matches!(parse_num(f, comma), Num::Bad))
            && fields
                .iter()
                .any(|f| matches!(parse_num(f, comma), Num::Value(_)));
        if !numeric {
            if self.text_rows.len() >= 2 {
                let (a, b) = self.text_rows_span();
                return Err(self.at(
                    no,
                    1,
                    format!(
                        "a third line of text before any row of numbers (lines {a} and {b} were \
                         taken for the header and a unit row); is the separator right? It was \
                         read as `{}`",
                        sep.name()
                    ),
                ));
            }
            self.text_rows.push((no, line.to_vec()));
            return Ok(false);
        }
        // The first data row: names from a header row, else from the last comment line.
        let mut names = Vec::new();
        let header_words: Option<Vec<String>> = match (self.text_rows.first(), sep.byte()) {
            (Some((_, h)), Some(b)) => Some(
                split_delimited(h, b)
                    .unwrap_or_default()
                    .into_iter()
                    .map(|(x, y)| unquote(&h[x..y]))
                    .collect(),
            ),
            (Some((_, h)), None) => Some(header_tokens(&String::from_utf8_lossy(h))),
            (None, Some(b)) => self.comment.as_ref().map(|c| {
                let bytes = c.as_bytes();
                split_delimited(bytes, b)
                    .unwrap_or_default()
                    .into_iter()
                    .map(|(x, y)| unquote(&bytes[x..y]))
                    .collect()
            }),
            (None, None) => self.comment.as_deref().map(|c| {
                let words = header_tokens(c);
                // The probe layout: `# Probe 0 1 2` then `# Time`; our names `probe_0`, ….
                match (
                    words.as_slice(),
                    self.before_comment.as_deref().map(header_tokens),
                ) {
                    ([time], Some(p)) if p.first().is_some_and(|w| w == "Probe") => {
                        std::iter::once(time.clone())
                            .chain(p[1..].iter().map(|i| format!("probe_{i}")))
                            .collect()
                    }
                    _ => words,
                }
            }),
        };
        let flat_count;
        match sep.byte() {
            Some(_) => {
                flat_count = fields.len();
                if let Some(w) = header_words {
                    if w.len() == flat_count {
                        names = w;
                    }
                }
            }
            None => {
                let tree = row_tree(line).map_err(|at| {
                    self.at(
                        no,
                        char_column(line, at),
                        "unbalanced parenthesis in the first row of numbers".into(),
                    )
                })?;
                flat_count = count_leaves(&tree);
                if let Some(w) = header_words {
                    if w.len() == tree.len() {
                        for (label, node) in w.iter().zip(&tree) {
                            flat_names(label, node, &mut names);
                        }
                    }
                }
            }
        }
        // A unit row: the text row after the header, when its fields line up.
        let mut units: Vec<String> = Vec::new();
        if let (Some((_, u)), Some(b)) = (self.text_rows.get(1), sep.byte()) {
            units = split_delimited(u, b)
                .unwrap_or_default()
                .into_iter()
                .map(|(x, y)| unquote(&u[x..y]))
                .collect();
        } else if let (Some((_, u)), None) = (self.text_rows.get(1), sep.byte()) {
            units = header_tokens(&String::from_utf8_lossy(u));
        }
        let resolve = |r: &ColumnRef, what: &str| -> Result<usize, HistoryError> {
            match r {
                ColumnRef::Position(0) => Err(HistoryError::File {
                    path: self.path.to_path_buf(),
                    message: format!("{what}: positions count from 1"),
                }),
                ColumnRef::Position(i) if *i <= flat_count => Ok(i - 1),
                ColumnRef::Position(i) => Err(self.at(
                    no,
                    1,
                    format!(
                        "{what}: the file has {flat_count} column(s) (read with separator `{}`), \
                         not {i}",
                        sep.name()
                    ),
                )),
                ColumnRef::Name(n) => {
                    let hits: Vec<usize> = names
                        .iter()
                        .enumerate()
                        .filter(|(_, h)| h.as_str() == n)
                        .map(|(i, _)| i)
                        .collect();
                    match hits.as_slice() {
                        [i] => Ok(*i),
                        [] => Err(self.missing_column(no, what, &names, sep, flat_count)),
                        _ => Err(HistoryError::File {
                            path: self.path.to_path_buf(),
                            message: format!(
                                "{what}: the header names `{n}` {} times; choose it by position",
                                hits.len()
                            ),
                        }),
                    }
                }
            }
        };
        let wanted = self
            .opts
            .columns
            .iter()
            .map(|r| resolve(r, &r.to_string()))
            .collect::<Result<Vec<usize>, _>>()?;
        self.units = wanted
            .iter()
            .map(|&k| {
                (units.len() == flat_count)
                    .then(|| units.get(k).filter(|u| !u.is_empty()).cloned())
                    .flatten()
            })
            .collect();
        self.columns = vec![Vec::new(); wanted.len()];
        self.first_data_line = no;
        self.layout = Some(Layout {
            sep,
            comma,
            names,
            need: wanted.iter().copied().max().unwrap_or(0),
            wanted,
        });
        Ok(true)
    }

    fn text_rows_span(&self) -> (u64, u64) {
        (
            self.text_rows.first().map_or(0, |r| r.0),
            self.text_rows.last().map_or(0, |r| r.0),
        )
    }

    fn missing_column(
        &self,
        no: u64,
        what: &str,
        names: &[String],
        sep: Separator,
        flat_count: usize,
    ) -> HistoryError {
        if names.is_empty() {
            let why = if self.text_rows.is_empty() && self.comment.is_none() {
                "the file has no header".to_string()
            } else {
                format!(
                    "the header does not line up with the {flat_count} value(s) of the first row \
                     of numbers (line {no})"
                )
            };
            return HistoryError::File {
                path: self.path.to_path_buf(),
                message: format!("{what}: {why}; choose the column by position"),
            };
        }
        let mut listed: Vec<String> = names.iter().take(24).map(|n| format!("`{n}`")).collect();
        if names.len() > 24 {
            listed.push(format!("… ({} in all)", names.len()));
        }
        let mut hint = String::new();
        if names.len() == 1 {
            let only = &names[0];
            for (c, s) in [(';', "semicolon"), (',', "comma"), ('\t', "tab")] {
                if only.contains(c) {
                    hint = format!(
                        "; the header is one column read with separator `{}` — is the separator \
                         `{s}`?",
                        sep.name()
                    );
                    break;
                }
            }
        }
        HistoryError::File {
            path: self.path.to_path_buf(),
            message: format!(
                "{what} is not in the header; it has {}{hint}",
                listed.join(", ")
            ),
        }
    }

    /// Detects the separator from the first line that is not a comment.
    fn detect(&self, line: &[u8]) -> Separator {
        if line.contains(&b'(') && !line.contains(&b';') && !line.contains(&b',') {
            Separator::Spaces
        } else if line.contains(&b';') {
            Separator::Semicolon
        } else if self.comment.is_some() && self.text_rows.is_empty() && !line.contains(&b',') {
            Separator::Spaces
        } else if line.contains(&b'\t') {
            Separator::Tab
        } else if line.contains(&b',') {
            Separator::Comma
        } else {
            Separator::Spaces
        }
    }

    fn row(&mut self, no: u64, line: &[u8]) -> Result<(), HistoryError> {
        let Some(l) = &self.layout else {
            return Ok(());
        };
        let (need, comma, l_sep) = (l.need, l.comma, l.sep);
        let mut ranges = std::mem::take(&mut self.ranges);
        ranges.clear();
        let found = match l.sep.byte() {
            Some(b) => {
                if line.contains(&b'"') {
                    match split_delimited(line, b) {
                        Ok(r) => ranges.extend(r.into_iter().take(need + 1)),
                        Err(at) => {
                            self.ranges = ranges;
                            return Err(self.at(
                                no,
                                char_column(line, at),
                                "a double quote opens a field that does not close on this line"
                                    .into(),
                            ));
                        }
                    }
                } else {
                    let mut a = 0;
                    for i in memchr::memchr_iter(b, line) {
                        ranges.push((a, i));
                        a = i + 1;
                        if ranges.len() > need {
                            break;
                        }
                    }
                    if ranges.len() <= need {
                        ranges.push((a, line.len()));
                    }
                }
                ranges.len()
            }
            None => {
                if let Some(at) = unbalanced(line) {
                    self.ranges = ranges;
                    return Err(self.at(
                        no,
                        char_column(line, at),
                        "unbalanced parenthesis".into(),
                    ));
                }
                let mut i = 0;
                while i < line.len() && ranges.len() <= need {
                    let c = line[i];
                    if is_space(c) || c == b'(' || c == b')' {
                        i += 1;
                        continue;
                    }
                    let a = i;
                    while i < line.len() {
                        let c = line[i];
                        if is_space(c) || c == b'(' || c == b')' {
                            break;
                        }
                        i += 1;
                    }
                    ranges.push((a, i));
                }
                ranges.len()
            }
        };
        if found <= need {
            self.ranges = ranges;
            let name = self.name_of(need);
            return Err(self.at(
                no,
                char_column(line, line.len()),
                format!(
                    "the row ends after {found} value(s); {name} is value {}",
                    need + 1
                ),
            ));
        }
        let mut row = std::mem::take(&mut self.row_values);
        row.clear();
        let mut missing = false;
        let mut bad = None;
        for &k in &l.wanted {
            let (a, b) = ranges[k];
            match parse_num(&line[a..b], comma) {
                Num::Value(v) => row.push(v),
                Num::Missing => missing = true,
                Num::Bad => {
                    bad = Some((a, b, k));
                    break;
                }
            }
        }
        self.ranges = ranges;
        if let Some((a, b, k)) = bad {
            self.row_values = row;
            let name = self.name_of(k);
            return Err(self.at(
                no,
                char_column(line, a),
                format!(
                    "{name}: `{}` is not a number{}",
                    shown(&line[a..b]),
                    if line[a..b].contains(&b',') && !comma && l_sep != Separator::Comma {
                        "; a decimal comma? set the decimal mark to comma"
                    } else {
                        ""
                    }
                ),
            ));
        }
        if missing {
            self.skipped.push(no);
        } else {
            if self.columns.first().map_or(0, Vec::len) >= MAX_SAMPLES {
                self.row_values = row;
                return Err(self.at(
                    no,
                    1,
                    format!(
                        "more than {MAX_SAMPLES} samples; write the monitor less often or cut \
                         the file"
                    ),
                ));
            }
            for (c, v) in self.columns.iter_mut().zip(&row) {
                c.push(*v);
            }
        }
        self.row_values = row;
        Ok(())
    }

    fn name_of(&self, k: usize) -> String {
        match self.layout.as_ref().and_then(|l| l.names.get(k)) {
            Some(n) => format!("column `{n}`"),
            None => format!("column {}", k + 1),
        }
    }

    fn finish(self) -> Result<Table, HistoryError> {
        let Some(l) = &self.layout else {
            let message = if self.text_rows.is_empty() {
                "no row of numbers (the file is empty or all comments)".to_string()
            } else {
                let sep = self.sep.unwrap_or(Separator::Spaces);
                let mut hint = String::new();
                for (c, name) in [(b';', "semicolon"), (b',', "comma"), (b'\t', "tab")] {
                    if sep.byte() != Some(c) && self.text_rows.iter().any(|r| r.1.contains(&c)) {
                        hint = format!("; is the separator `{name}`?");
                        break;
                    }
                }
                format!(
                    "no row of numbers after the header (fields read with separator `{}`){hint}",
                    sep.name()
                )
            };
            return Err(HistoryError::File {
                path: self.path.to_path_buf(),
                message,
            });
        };
        let names: Vec<String> = l
            .wanted
            .iter()
            .map(|&k| match l.names.get(k) {
                Some(n) => n.clone(),
                None => format!("column {}", k + 1),
            })
            .collect();
        let mut warnings = Vec::new();
        if !self.skipped.is_empty() {
            let shown: Vec<String> = self.skipped.iter().take(8).map(|l| l.to_string()).collect();
            let more = if self.skipped.len() > 8 { ", …" } else { "" };
            warnings.push(Warning::new(
                "samples_skipped",
                format!(
                    "{}: {} row(s) with a missing or non-finite value skipped (line {}{more})",
                    self.path.display(),
                    self.skipped.len(),
                    shown.join(", ")
                ),
            ));
        }
        if let Some(no) = self.incomplete {
            warnings.push(Warning::new(
                "last_row_incomplete",
                format!(
                    "{}: the last line ({no}) has no line end and does not parse; taken for a \
                     row being written and left out",
                    self.path.display()
                ),
            ));
        }
        if self.columns.first().is_none_or(Vec::is_empty) {
            let which: Vec<String> = names.iter().map(|n| format!("`{n}`")).collect();
            return Err(HistoryError::File {
                path: self.path.to_path_buf(),
                message: format!("no row holds a finite value in {}", which.join(" and ")),
            });
        }
        let _ = self.first_data_line;
        Ok(Table {
            path: self.path.to_path_buf(),
            names,
            units: self.units,
            columns: self.columns,
            header: l.names.clone(),
            separator: l.sep,
            decimal_comma: l.comma,
            skipped_lines: self.skipped,
            warnings,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn read(text: &str, opts: &ReadOptions) -> Result<Series, HistoryError> {
        read_history_from(text.as_bytes(), Path::new("h.dat"), opts)
    }

    fn by_name(n: &str) -> ReadOptions {
        ReadOptions::column(ColumnRef::Name(n.into()))
    }

    // Expected values: the numbers written in the text itself (exact decimal parsing).
    #[test]
    fn names_of_vector_groups() {
        let tree = row_tree(b"0.1\t((1 2 3) (4 5 6) (7 8 9)) ((1 2 3) (4 5 6) (7 8 9))").unwrap();
        let words =
            header_tokens("Time forces(pressure viscous porous) moment(pressure viscous porous)");
        assert_eq!(words.len(), tree.len());
        let mut names = Vec::new();
        for (w, n) in words.iter().zip(&tree) {
            flat_names(w, n, &mut names);
        }
        assert_eq!(names.len(), 19);
        assert_eq!(names[1], "forces_pressure_x");
        assert_eq!(names[6], "forces_viscous_z");
        assert_eq!(names[18], "moment_porous_z");
    }

    #[test]
    fn solver_header_names_components() {
        let text = "# Force\n# CofR : (0 0 0)\n#\n# Time\t(total_x total_y total_z)\t(pressure_x pressure_y pressure_z)\n1\t(1.5 2 3)\t(4 5 6)\n2\t(1.25 2 3)\t(4 5 6.5)\n";
        let mut o = by_name("pressure_z");
        o.abscissa = Some(ColumnRef::Name("Time".into()));
        let s = read(text, &o).unwrap();
        assert_eq!(s.values, vec![6.0, 6.5]);
        assert_eq!(s.abscissa, Some(vec![1.0, 2.0]));
        assert_eq!(s.separator, Separator::Spaces);
        let s = read(text, &by_name("total_x")).unwrap();
        assert_eq!(s.values, vec![1.5, 1.25]);
    }

    #[test]
    fn semicolon_decimal_comma_and_unit_row() {
        let text = "Iteration;\"Efficiency [%]\";Head\n[-];[%];[m]\n1;85,5;12,25\n2;86,25;12,5\n";
        let s = read(text, &by_name("Efficiency [%]")).unwrap();
        assert_eq!(s.values, vec![85.5, 86.25]);
        assert!(s.decimal_comma);
        assert_eq!(s.unit.as_deref(), Some("[%]"));
        assert_eq!(s.separator, Separator::Semicolon);
    }

    #[test]
    fn several_columns_in_one_pass() {
        // Expected: the numbers written in the text; a row missing any column is left out of
        // all, so the columns stay row-aligned.
        let text = "# Time sigma eta\n1 0.3 0.9\n2 0.3 nan\n3 0.25 0.88\n";
        let o = TableOptions {
            columns: vec![
                ColumnRef::Name("sigma".into()),
                ColumnRef::Name("eta".into()),
                ColumnRef::Position(1),
            ],
            separator: Separator::Auto,
            decimal: Decimal::Auto,
        };
        let t = read_table_from(text.as_bytes(), Path::new("h.dat"), &o).unwrap();
        assert_eq!(t.names, ["sigma", "eta", "Time"]);
        assert_eq!(
            t.columns,
            [vec![0.3, 0.25], vec![0.9, 0.88], vec![1.0, 3.0]]
        );
        assert_eq!(t.skipped_lines, [3]);
    }

    #[test]
    fn missing_values_are_skipped_with_their_lines() {
        let text = "it,v\n1,1.5\n2,nan\n3,\n4,N/A\n5,2.5\n";
        let s = read(text, &by_name("v")).unwrap();
        assert_eq!(s.values, vec![1.5, 2.5]);
        assert_eq!(s.skipped_lines, vec![3, 4, 5]);
        assert_eq!(s.warnings[0].code, "samples_skipped");
    }

    #[test]
    fn text_in_a_value_names_line_and_column() {
        let text = "it,v\n1,1.5\n2,  abc\n";
        let e = read(text, &by_name("v")).unwrap_err();
        assert_eq!((e.line(), e.column()), (Some(3), Some(3)), "{e}");
        assert!(e.to_string().contains("abc"), "{e}");
    }

    #[test]
    fn an_incomplete_last_line_is_dropped() {
        let text = "# Time Cd\n1 0.5\n2 0.25\n3 0.1e";
        let s = read(text, &by_name("Cd")).unwrap();
        assert_eq!(s.values, vec![0.5, 0.25]);
        assert_eq!(s.warnings[0].code, "last_row_incomplete");
    }

    #[test]
    fn wrong_separator_gets_a_hint() {
        let text = "a;b;c\n1;2;3\n";
        let mut o = by_name("b");
        o.separator = Separator::Comma;
        let e = read(text, &o).unwrap_err().to_string();
        assert!(e.contains("semicolon"), "{e}");
    }

    /// A reader that hands out one byte at a time.
    struct Trickle<'a>(&'a [u8]);

    impl Read for Trickle<'_> {
        fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
            match (self.0.split_first(), buf.first_mut()) {
                (Some((b, rest)), Some(d)) => {
                    *d = *b;
                    self.0 = rest;
                    Ok(1)
                }
                _ => Ok(0),
            }
        }
    }

    #[test]
    fn byte_order_mark_and_tiny_reads() {
        let text = "\u{feff}v;w\n1,5;2\n2,5;3\n";
        let o = by_name("v");
        let a = read_history_from(text.as_bytes(), Path::new("h.csv"), &o).unwrap();
        let b = read_history_from(Trickle(text.as_bytes()), Path::new("h.csv"), &o).unwrap();
        assert_eq!(a.values, [1.5, 2.5]);
        assert_eq!(a, b);
    }

    #[test]
    fn lines_split_across_blocks() {
        // Longer than one block, and one line longer than a block.
        let mut text = String::from("# Time v\n");
        for i in 0..200_000 {
            text.push_str(&format!("{i} {}.5\n", i % 7));
        }
        let s = read(&text, &by_name("v")).unwrap();
        assert_eq!(s.values.len(), 200_000);
        assert!((s.values[199_999] - (199_999 % 7) as f64 - 0.5).abs() == 0.0);
        let long = format!(
            "# Time v {}\n1 2 {}\n",
            "w ".repeat(600_000),
            "0 ".repeat(600_000)
        );
        let s = read(&long, &by_name("v")).unwrap();
        assert_eq!(s.values, vec![2.0]);
    }
}
