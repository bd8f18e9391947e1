//! Tabular text as solvers and spreadsheets write it: the separator and the decimal mark,
//! `#` comment lines, a units row under the header, units in header names, cells marked
//! missing, and columns found by name (with or without their unit) or by position.
//!
//! A small pure layer: it reads text it is handed and answers questions about it; it opens no
//! file and decides nothing about what a reader does with a missing cell. The study's readers
//! (sweep CSV files, measured points, probe files) and any other reader of tables call it:
//!
//! ```
//! use meshbound::tabular::{self, ColumnRef, Options};
//! let text = "# rig 3, run 12\nsigma;Efficiency [%]\n[-];%\n0,40;91,2\n0,30;nan\n";
//! let table = tabular::Table::open(text, &Options::default()).unwrap();
//! assert_eq!(table.format.separator, tabular::Separator::Semicolon);
//! assert_eq!(table.format.decimal, tabular::Decimal::Comma);
//! let eff = table.find(&ColumnRef::Name("efficiency".into())).unwrap();
//! assert_eq!(table.unit(eff), Some("%"));
//! let rows: Vec<_> = table.records().collect();
//! assert_eq!(rows[0].line, 4);
//! assert_eq!(table.number(rows[0].get(eff)), Ok(Some(91.2)));
//! assert_eq!(table.number(rows[1].get(eff)), Ok(None)); // `nan`: missing
//! ```
//!
//! **The rules** (docs/study-file.md, "Tabular files"; the CSV grammar is RFC 4180's, the
//! rest are project rules):
//! - a record ends at a line feed (or CR LF, or a lone carriage return) outside double quotes;
//!   a field may be quoted (`"a;b"`, `""` is one quote); blank lines are skipped;
//! - a line whose first byte is `#` is a comment, wherever it stands;
//! - the first record that is not a comment is the header;
//! - the separator, when not set, is the one of comma, semicolon, tab and whitespace (runs of
//!   blanks) that splits the header and the first five records after it into the same number
//!   of fields, at least two; of several, the one giving the most fields, then in that order;
//!   with none, the one giving the header the most fields (comma when all give one);
//! - the decimal mark, when not set, is the point, except with a separator other than the
//!   comma when a sampled cell reads as a number with a decimal comma (`0,42`) and none with a
//!   decimal point (semicolon-separated files with decimal commas are what spreadsheets in many
//!   European locales export; common practice, no source);
//! - the record after the header is a units row when none of its cells (of the columns that
//!   matter, [`Table::units_row_if`]) reads as a number and one of them is neither empty nor
//!   `nan` nor `n/a`; its cells are the columns' units. A unit may also stand in a header name
//!   as a last `[...]` or `(...)` (`Efficiency [%]`);
//! - a cell is missing when, trimmed, it is empty, `-`, `nan` or `n/a` (any case).

use std::borrow::Cow;

/// What separates the fields of a record.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Separator {
    /// `,`
    Comma,
    /// `;`
    Semicolon,
    /// A tab.
    Tab,
    /// Runs of blanks (spaces and tabs); leading and trailing blanks are no fields, and blanks
    /// inside parentheses separate nothing (`(1 2 3)` is one field).
    Whitespace,
}

impl Separator {
    /// The separating byte; `None` for runs of blanks.
    pub fn byte(self) -> Option<u8> {
        match self {
            Separator::Comma => Some(b','),
            Separator::Semicolon => Some(b';'),
            Separator::Tab => Some(b'\t'),
            Separator::Whitespace => None,
        }
    }

    /// The key value that sets it (`separator: semicolon`).
    pub fn name(self) -> &'static str {
        match self {
            Separator::Comma => "comma",
            Separator::Semicolon => "semicolon",
            Separator::Tab => "tab",
            Separator::Whitespace => "whitespace",
        }
    }

    const ALL: [Separator; 4] = [
        Separator::Comma,
        Separator::Semicolon,
        Separator::Tab,
        Separator::Whitespace,
    ];
}

/// The decimal mark of numbers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Decimal {
    /// `0.42`
    Point,
    /// `0,42`
    Comma,
}

/// How a table is written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Format {
    /// The separator.
    pub separator: Separator,
    /// The decimal mark.
    pub decimal: Decimal,
}

/// What a caller sets; `None` is detected from the text.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Options {
    /// The separator.
    pub separator: Option<Separator>,
    /// The decimal mark.
    pub decimal: Option<Decimal>,
}

/// A column as a study names it: by its header name, or by its position counted from 1.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ColumnRef {
    /// A header name; found as written, or as the name before a unit in brackets.
    Name(String),
    /// A position, counted from 1.
    Index(usize),
}

impl std::fmt::Display for ColumnRef {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ColumnRef::Name(n) => write!(f, "`{n}`"),
            ColumnRef::Index(i) => write!(f, "number {i}"),
        }
    }
}

/// Why a cell is not a number.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BadNumber {
    /// It does not read as a number.
    NotANumber,
    /// It reads as an infinity (or a NaN written otherwise than the missing marks).
    NotFinite,
}

/// Whether a trimmed cell marks a missing value: empty, `-`, `nan` or `n/a` (any case).
pub fn is_missing(cell: &str) -> bool {
    let t = cell.trim();
    t.is_empty() || t == "-" || t.eq_ignore_ascii_case("nan") || t.eq_ignore_ascii_case("n/a")
}

/// Reads a cell as a number with the given decimal mark: `Ok(None)` when it is marked missing.
/// With a decimal comma, a cell holding a point is refused (a point there would be a
/// thousands mark or a mistake; neither is guessed).
pub fn number(cell: &str, decimal: Decimal) -> Result<Option<f64>, BadNumber> {
    let t = cell.trim();
    if is_missing(t) {
        return Ok(None);
    }
    let text: Cow<str> = match decimal {
        Decimal::Point => Cow::Borrowed(t),
        Decimal::Comma => {
            if t.contains('.') || t.matches(',').count() > 1 {
                return Err(BadNumber::NotANumber);
            }
            Cow::Owned(t.replace(',', "."))
        }
    };
    match text.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(Some(v)),
        Ok(_) => Err(BadNumber::NotFinite),
        Err(_) => Err(BadNumber::NotANumber),
    }
}

/// The unit a header name carries as its last `[...]` or `(...)`, trimmed (`Efficiency [%]`
/// → `%`), and the name before it, trimmed.
pub fn split_unit(name: &str) -> (&str, Option<&str>) {
    let t = name.trim();
    for (open, close) in [('[', ']'), ('(', ')')] {
        if let Some(inner) = t.strip_suffix(close) {
            if let Some(i) = inner.rfind(open) {
                let unit = inner[i + open.len_utf8()..].trim();
                let before = inner[..i].trim();
                if !before.is_empty() {
                    return (before, Some(unit));
                }
            }
        }
    }
    (t, None)
}

/// A unit as written in a units row (`[m]`, `(-)`, `%`, `Pa`): brackets removed, trimmed;
/// `None` when empty.
pub fn clean_unit(cell: &str) -> Option<&str> {
    let t = cell.trim();
    let t = t
        .strip_prefix('[')
        .and_then(|s| s.strip_suffix(']'))
        .or_else(|| t.strip_prefix('(').and_then(|s| s.strip_suffix(')')))
        .unwrap_or(t)
        .trim();
    (!t.is_empty()).then_some(t)
}

/// The factor that turns a value in `unit` into a fraction: 0.01 for `%` (per cent: hundredths,
/// by definition); `None` for any other unit.
pub fn percent_factor(unit: &str) -> Option<f64> {
    matches!(unit.trim(), "%" | "percent").then_some(0.01)
}

/// The factor that turns a pressure in `unit` into pascals (`Pa`, `hPa`, `kPa`, `MPa`, `mbar`,
/// `bar`: the SI prefixes and 1 bar = 10⁵ Pa by definition); `None` for any other unit.
pub fn pascal_factor(unit: &str) -> Option<f64> {
    match unit.trim() {
        "Pa" => Some(1.0),
        "hPa" | "mbar" => Some(100.0),
        "kPa" => Some(1e3),
        "bar" => Some(1e5),
        "MPa" => Some(1e6),
        _ => None,
    }
}

/// One field of a record.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Field<'a> {
    /// The text between the separators (quotes still in, blanks not trimmed).
    raw: &'a str,
    /// 1-based character column of the field's first character that is not a blank.
    pub column: usize,
}

impl<'a> Field<'a> {
    /// The field's text: trimmed, and unquoted where it is quoted (`""` read as one quote).
    pub fn text(&self) -> Cow<'a, str> {
        let t = self.raw.trim();
        match t.strip_prefix('"').and_then(|s| s.strip_suffix('"')) {
            Some(inner) if inner.contains("\"\"") => Cow::Owned(inner.replace("\"\"", "\"")),
            Some(inner) => Cow::Borrowed(inner),
            None => Cow::Borrowed(t),
        }
    }
}

/// One record: its 1-based line and its fields.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Record<'a> {
    /// Line of the record's first character.
    pub line: usize,
    /// Its fields.
    pub fields: Vec<Field<'a>>,
}

impl<'a> Record<'a> {
    /// Field `i` (0-based) or, past the end, an empty field at the record's end.
    pub fn get(&self, i: usize) -> Field<'a> {
        self.fields.get(i).copied().unwrap_or(Field {
            raw: "",
            column: self
                .fields
                .last()
                .map_or(1, |f| f.column + f.raw.chars().count()),
        })
    }
}

/// Splits one record's text (line ends inside quotes kept) into fields.
pub fn split(record: &str, sep: Separator) -> Vec<Field<'_>> {
    let mut out = Vec::new();
    let bytes = record.as_bytes();
    let mut quoted = false;
    let mut start = 0;
    let col_of = |a: usize| -> usize {
        let lead = record[a..]
            .char_indices()
            .find(|(_, c)| *c != ' ' && *c != '\t')
            .map_or(record.len() - a, |(i, _)| i);
        let at = a + lead;
        // Characters since the last line end (a quoted field may span lines).
        let from = record[..at].rfind('\n').map_or(0, |i| i + 1);
        record[from..at].chars().count() + 1
    };
    match sep.byte() {
        Some(s) => {
            for (i, &b) in bytes.iter().enumerate() {
                if b == b'"' {
                    quoted = !quoted;
                } else if b == s && !quoted {
                    out.push(Field {
                        raw: &record[start..i],
                        column: col_of(start),
                    });
                    start = i + 1;
                }
            }
            out.push(Field {
                raw: &record[start..],
                column: col_of(start),
            });
        }
        None => {
            let mut in_field = false;
            // Blanks inside parentheses separate nothing: `(1 2 3)` is one field (a vector as
            // solvers' function objects write it).
            let mut depth = 0usize;
            for (i, &b) in bytes.iter().enumerate() {
                let blank = (b == b' ' || b == b'\t') && !quoted && depth == 0;
                match b {
                    b'"' => quoted = !quoted,
                    b'(' if !quoted => depth += 1,
                    b')' if !quoted => depth = depth.saturating_sub(1),
                    _ => {}
                }
                if blank && in_field {
                    out.push(Field {
                        raw: &record[start..i],
                        column: col_of(start),
                    });
                    in_field = false;
                } else if !blank && !in_field {
                    start = i;
                    in_field = true;
                }
            }
            if in_field {
                out.push(Field {
                    raw: &record[start..],
                    column: col_of(start),
                });
            }
        }
    }
    out
}

/// The records of a text (comments and blank lines skipped), as `(line, text)`; a carriage
/// return before a line feed is no part of the text.
#[derive(Debug, Clone)]
pub struct Lines<'a> {
    text: &'a str,
    pos: usize,
    line: usize,
}

impl<'a> Lines<'a> {
    /// The records of `text` from its start (a byte-order mark skipped).
    pub fn new(text: &'a str) -> Self {
        let pos = if text.starts_with('\u{feff}') { 3 } else { 0 };
        Lines { text, pos, line: 1 }
    }
}

impl Lines<'_> {
    /// Byte offset of the next record (or comment) in the text.
    pub fn offset(&self) -> usize {
        self.pos
    }

    /// Line of the next byte.
    pub fn line(&self) -> usize {
        self.line
    }
}

impl<'a> Iterator for Lines<'a> {
    type Item = (usize, &'a str);
    fn next(&mut self) -> Option<(usize, &'a str)> {
        let bytes = self.text.as_bytes();
        loop {
            if self.pos >= bytes.len() {
                return None;
            }
            let start = self.pos;
            let line = self.line;
            let comment = bytes[start] == b'#';
            let mut quoted = false;
            let mut i = start;
            let mut end = bytes.len();
            let mut next = bytes.len();
            while i < bytes.len() {
                match bytes[i] {
                    b'"' if !comment => quoted = !quoted,
                    b'\n' if !quoted => {
                        end = i;
                        next = i + 1;
                        break;
                    }
                    b'\r' if !quoted => {
                        end = i;
                        next = if bytes.get(i + 1) == Some(&b'\n') {
                            i + 2
                        } else {
                            i + 1
                        };
                        break;
                    }
                    _ => {}
                }
                i += 1;
            }
            // Lines counted as line feeds (and lone carriage returns) passed.
            let passed = &bytes[start..next];
            self.line += passed.iter().filter(|&&b| b == b'\n').count()
                + passed
                    .windows(2)
                    .filter(|w| w[0] == b'\r' && w[1] != b'\n')
                    .count()
                + usize::from(passed.last() == Some(&b'\r'));
            self.pos = next;
            let text = &self.text[start..end];
            if comment || text.trim().is_empty() {
                continue;
            }
            return Some((line, text));
        }
    }
}

/// The column names a solver writes as a comment above its data (`# Time  Cd  Cl`): the last
/// comment line before the first record, `#` and blanks removed, split at runs of blanks
/// (parentheses group, as in [`split`]); with its line. `None` when no comment line stands
/// before the first record or the last one holds nothing. Whether the first record is a header
/// of its own or data is the caller's to decide.
pub fn header_from_comment(text: &str) -> Option<(usize, Vec<String>)> {
    let first = Lines::new(text).next().map(|(l, _)| l);
    let mut last: Option<(usize, &str)> = None;
    for (i, line) in text.lines().enumerate() {
        if first.is_some_and(|f| i + 1 >= f) {
            break;
        }
        let t = line.trim_start_matches('\u{feff}');
        if let Some(c) = t.strip_prefix('#') {
            last = Some((i + 1, c));
        }
    }
    let (line, c) = last?;
    let names: Vec<String> = split(c.trim(), Separator::Whitespace)
        .iter()
        .map(|f| f.text().into_owned())
        .collect();
    (!names.is_empty()).then_some((line, names))
}

/// Records of the sample the detector looks at after the header.
pub const SAMPLE_RECORDS: usize = 5;

/// Detects the format of a text (see the module notes), honouring what `opts` sets.
pub fn detect(text: &str, opts: &Options) -> Format {
    let sample: Vec<&str> = Lines::new(text)
        .take(1 + SAMPLE_RECORDS)
        .map(|(_, t)| t)
        .collect();
    let separator = opts.separator.unwrap_or_else(|| {
        let counts =
            |s: Separator| -> Vec<usize> { sample.iter().map(|r| split(r, s).len()).collect() };
        let mut best: Option<(usize, Separator)> = None;
        for s in Separator::ALL {
            let c = counts(s);
            let head = c.first().copied().unwrap_or(0);
            if head >= 2 && c.iter().all(|&n| n == head) && best.is_none_or(|(n, _)| head > n) {
                best = Some((head, s));
            }
        }
        best.map(|(_, s)| s).unwrap_or_else(|| {
            let mut pick = (1, Separator::Comma);
            for s in Separator::ALL {
                let head = counts(s).first().copied().unwrap_or(0);
                if head > pick.0 {
                    pick = (head, s);
                }
            }
            pick.1
        })
    });
    let decimal = opts.decimal.unwrap_or_else(|| {
        if separator == Separator::Comma {
            return Decimal::Point;
        }
        let cells: Vec<String> = sample
            .iter()
            .skip(1)
            .flat_map(|r| {
                split(r, separator)
                    .into_iter()
                    .map(|f| f.text().into_owned())
            })
            .collect();
        let comma = cells
            .iter()
            .any(|c| c.contains(',') && number(c, Decimal::Comma).is_ok_and(|v| v.is_some()));
        let point = cells
            .iter()
            .any(|c| c.contains('.') && number(c, Decimal::Point).is_ok_and(|v| v.is_some()));
        if comma && !point {
            Decimal::Comma
        } else {
            Decimal::Point
        }
    });
    Format { separator, decimal }
}

/// A hint when the header split into one field that holds another separator: the separator
/// looks wrong. `None` when nothing suggests it.
pub fn separator_hint(header: &[String], used: Separator) -> Option<String> {
    let [only] = header else { return None };
    let found = Separator::ALL
        .into_iter()
        .filter(|&s| s != used)
        .find(|&s| match s {
            Separator::Whitespace => false,
            s => s.byte().is_some_and(|b| only.as_bytes().contains(&b)),
        })?;
    let sign = match found {
        Separator::Comma => "`,`",
        Separator::Semicolon => "`;`",
        Separator::Tab => "a tab",
        Separator::Whitespace => "blanks",
    };
    Some(format!(
        "only one column was found with the {} separator and the header holds {sign}: the file looks {}-separated; set `separator: {}`",
        used.name(),
        found.name(),
        found.name()
    ))
}

/// The column a study names in a header: a position; or a header name as written; or, when
/// no header name is that, the one header name whose part before a unit in brackets is it
/// (ASCII case ignored). `None` when there is none, or more than one.
pub fn find(header: &[String], col: &ColumnRef) -> Option<usize> {
    match col {
        ColumnRef::Index(i) => (*i >= 1 && *i <= header.len()).then(|| i - 1),
        ColumnRef::Name(n) => {
            let mut exact = (0..header.len()).filter(|&i| header[i] == *n);
            match (exact.next(), exact.next()) {
                (Some(i), None) => return Some(i),
                (Some(_), Some(_)) => return None,
                _ => {}
            }
            let mut loose = (0..header.len())
                .filter(|&i| split_unit(&header[i]).0.eq_ignore_ascii_case(n.trim()));
            match (loose.next(), loose.next()) {
                (Some(i), None) => Some(i),
                _ => None,
            }
        }
    }
}

/// How many header names answer to a name, as [`find`] reads it: more than one is an
/// ambiguity for the caller to refuse.
pub fn matches(header: &[String], name: &str) -> usize {
    let exact = header.iter().filter(|h| *h == name).count();
    if exact > 0 {
        return exact;
    }
    header
        .iter()
        .filter(|h| split_unit(h).0.eq_ignore_ascii_case(name.trim()))
        .count()
}

/// Whether the cells of a candidate units row make it one: none reads as a number and one
/// holds a unit (not empty, `nan` or `n/a`).
pub fn is_units_row<'c>(cells: impl IntoIterator<Item = &'c str>, decimal: Decimal) -> bool {
    let mut any_unit = false;
    for c in cells {
        if !matches!(number(c, decimal), Ok(None) | Err(BadNumber::NotANumber)) {
            return false;
        }
        let t = c.trim();
        if !(t.is_empty() || t.eq_ignore_ascii_case("nan") || t.eq_ignore_ascii_case("n/a")) {
            any_unit = true;
        }
    }
    any_unit
}

/// Why a table could not be opened.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum OpenError {
    /// No header: the text holds only comments and blank lines.
    NoHeader,
}

/// A table: its format, header (line, names, units) and the records after it.
#[derive(Debug, Clone)]
pub struct Table<'a> {
    /// The format used.
    pub format: Format,
    /// The header's line.
    pub header_line: usize,
    /// Header names, trimmed and unquoted.
    pub header: Vec<String>,
    /// Units per column from a units row (`None` where a cell is empty), and its line.
    pub units_row: Option<(usize, Vec<Option<String>>)>,
    rest: Lines<'a>,
}

impl<'a> Table<'a> {
    /// Opens a table: detects the format (what `opts` does not set) and reads the header. A
    /// units row is not looked for yet (see [`Table::units_row_if`]).
    pub fn open(text: &'a str, opts: &Options) -> Result<Self, OpenError> {
        let format = detect(text, opts);
        let mut rest = Lines::new(text);
        let (header_line, head) = rest.next().ok_or(OpenError::NoHeader)?;
        let header = split(head, format.separator)
            .iter()
            .map(|f| f.text().into_owned())
            .collect();
        let mut t = Table {
            format,
            header_line,
            header,
            units_row: None,
            rest,
        };
        t.units_row_if(|_| true);
        Ok(t)
    }

    /// Takes the record after the header as a units row when, of the columns for which
    /// `matters` holds, none reads as a number and one holds a unit (not empty, `nan` or
    /// `n/a`). Called again with other columns, it first puts back a units row it took.
    pub fn units_row_if(&mut self, wanted: impl Fn(usize) -> bool) {
        if self.units_row.is_some() {
            // Read the header again.
            let mut lines = Lines::new(self.rest.text);
            lines.next();
            self.rest = lines;
            self.units_row = None;
        }
        let mut peek = self.rest.clone();
        let Some((line, text)) = peek.next() else {
            return;
        };
        let fields = split(text, self.format.separator);
        let cells: Vec<String> = fields.iter().map(|f| f.text().into_owned()).collect();
        let any_unit = is_units_row(
            cells
                .iter()
                .enumerate()
                .filter(|(i, _)| wanted(*i))
                .map(|(_, c)| c.as_str()),
            self.format.decimal,
        );
        if any_unit {
            self.units_row = Some((
                line,
                cells
                    .iter()
                    .map(|c| clean_unit(c).map(str::to_string))
                    .collect(),
            ));
            self.rest = peek;
        }
    }

    /// The column a study names (see [`find`]).
    pub fn find(&self, col: &ColumnRef) -> Option<usize> {
        find(&self.header, col)
    }

    /// How many header names answer to a name (see [`matches()`]).
    pub fn matches(&self, name: &str) -> usize {
        matches(&self.header, name)
    }

    /// The unit of column `i`: the units row's, else the one in its header name.
    pub fn unit(&self, i: usize) -> Option<&str> {
        let row = self
            .units_row
            .as_ref()
            .and_then(|(_, u)| u.get(i))
            .and_then(|x| x.as_deref());
        row.or_else(|| self.header.get(i).and_then(|h| split_unit(h).1))
    }

    /// The records after the header (and units row), comments and blank lines skipped.
    pub fn records(&self) -> impl Iterator<Item = Record<'a>> + 'a {
        let sep = self.format.separator;
        self.rest.clone().map(move |(line, text)| Record {
            line,
            fields: split(text, sep),
        })
    }

    /// A field read as a number in the table's decimal mark (`Ok(None)`: marked missing).
    pub fn number(&self, f: Field) -> Result<Option<f64>, BadNumber> {
        number(&f.text(), self.format.decimal)
    }

    /// The hint when the separator looks wrong (see [`separator_hint`]).
    pub fn hint(&self) -> Option<String> {
        separator_hint(&self.header, self.format.separator)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn fmt(text: &str) -> Format {
        detect(text, &Options::default())
    }

    // Source: RFC 4180 (fields separated by commas, records by line ends, `""` a quote
    // inside a quoted field) for the comma case; the other separators and the decimal comma
    // are the rules in docs/study-file.md (semicolons with decimal commas: common practice, no
    // source).
    #[test]
    fn separators_and_decimal_marks_are_detected() {
        let f = |s, d| Format {
            separator: s,
            decimal: d,
        };
        assert_eq!(fmt("x,y\n1.5,2\n"), f(Separator::Comma, Decimal::Point));
        assert_eq!(fmt("x;y\n1,5;2\n"), f(Separator::Semicolon, Decimal::Comma));
        assert_eq!(fmt("x;y\n1.5;2\n"), f(Separator::Semicolon, Decimal::Point));
        assert_eq!(fmt("x\ty\n1,5\t2\n"), f(Separator::Tab, Decimal::Comma));
        assert_eq!(
            fmt("x   y\n  1.5  2\n"),
            f(Separator::Whitespace, Decimal::Point)
        );
        // Blanks after commas: still commas.
        assert_eq!(fmt("x, y\n1, 2\n"), f(Separator::Comma, Decimal::Point));
        // Comments and a units row do not disturb it.
        assert_eq!(
            fmt("# a, b; c\nx;y\n[m];[-]\n1,5;2\n"),
            f(Separator::Semicolon, Decimal::Comma)
        );
        // One column: comma.
        assert_eq!(fmt("x\n1\n"), f(Separator::Comma, Decimal::Point));
        // What is set is kept.
        let o = Options {
            separator: Some(Separator::Comma),
            decimal: None,
        };
        assert_eq!(detect("x;y\n1;2\n", &o).separator, Separator::Comma);
    }

    #[test]
    fn cells_read_as_numbers_or_missing() {
        assert_eq!(number(" 0.25 ", Decimal::Point), Ok(Some(0.25)));
        assert_eq!(number("0,25", Decimal::Comma), Ok(Some(0.25)));
        assert_eq!(number("-1,5e3", Decimal::Comma), Ok(Some(-1500.0)));
        assert_eq!(
            number("1.000,5", Decimal::Comma),
            Err(BadNumber::NotANumber)
        );
        assert_eq!(number("0,25", Decimal::Point), Err(BadNumber::NotANumber));
        assert_eq!(number("inf", Decimal::Point), Err(BadNumber::NotFinite));
        for m in ["", " ", "-", "nan", "NaN", "NAN", "n/a", "N/A"] {
            assert_eq!(number(m, Decimal::Point), Ok(None), "{m:?}");
        }
        assert_eq!(number("x", Decimal::Point), Err(BadNumber::NotANumber));
    }

    #[test]
    fn units_are_read_from_rows_and_names() {
        assert_eq!(split_unit("Efficiency [%]"), ("Efficiency", Some("%")));
        assert_eq!(split_unit("head (m)"), ("head", Some("m")));
        assert_eq!(split_unit("sigma"), ("sigma", None));
        assert_eq!(split_unit("[m]"), ("[m]", None));
        assert_eq!(clean_unit(" [m] "), Some("m"));
        assert_eq!(clean_unit("(-)"), Some("-"));
        assert_eq!(clean_unit("Pa"), Some("Pa"));
        assert_eq!(clean_unit(""), None);
        assert_eq!(percent_factor("%"), Some(0.01));
        assert_eq!(percent_factor("m"), None);
        assert_eq!(pascal_factor("kPa"), Some(1000.0));
        assert_eq!(pascal_factor("bar"), Some(1e5));

        let t = Table::open("x,eta [%],p\n[-],,kPa\n1,90,100\n", &Options::default()).unwrap();
        assert_eq!(t.units_row.as_ref().map(|u| u.0), Some(2));
        assert_eq!(t.unit(0), Some("-"));
        assert_eq!(t.unit(1), Some("%"));
        assert_eq!(t.unit(2), Some("kPa"));
        assert_eq!(t.find(&ColumnRef::Name("eta".into())), Some(1));
        assert_eq!(t.find(&ColumnRef::Name("ETA".into())), Some(1));
        assert_eq!(t.find(&ColumnRef::Index(3)), Some(2));
        assert_eq!(t.find(&ColumnRef::Index(4)), None);
        let r: Vec<_> = t.records().collect();
        assert_eq!(r.len(), 1);
        assert_eq!(r[0].line, 3);
        // A row of numbers is no units row; neither is a row of missing marks only.
        let t = Table::open("x,y\n1,2\n", &Options::default()).unwrap();
        assert!(t.units_row.is_none());
        let t = Table::open("x,y\nnan,\n", &Options::default()).unwrap();
        assert!(t.units_row.is_none());
        let t = Table::open("x,y\ninf,m\n", &Options::default()).unwrap();
        assert!(t.units_row.is_none());
        // A text id column does not make a data row a units row when only values matter.
        let mut t = Table::open("id,cp\np1,nan\n", &Options::default()).unwrap();
        assert!(t.units_row.is_some());
        t.units_row_if(|i| i == 1);
        assert!(t.units_row.is_none());
        assert_eq!(t.records().count(), 1);
    }

    #[test]
    fn records_have_their_lines_and_columns() {
        let text = "\u{feff}# c\r\nx;\"a;b\"\r\n\r\n 1,5 ; \"q\"\"r\"\n# mid\n2;\"s\nt\"\n3;4";
        let t = Table::open(text, &Options::default()).unwrap();
        assert_eq!(t.header, ["x", "a;b"]);
        assert_eq!(t.header_line, 2);
        let r: Vec<_> = t.records().collect();
        assert_eq!(r.iter().map(|r| r.line).collect::<Vec<_>>(), [4, 6, 8]);
        assert_eq!(r[0].fields[0].column, 2);
        assert_eq!(r[0].fields[1].column, 8);
        assert_eq!(r[0].get(1).text(), "q\"r");
        assert_eq!(r[1].get(1).text(), "s\nt");
        assert_eq!(t.number(r[0].get(0)), Ok(Some(1.5)));
        // Past the end: an empty field, read as missing.
        assert_eq!(t.number(r[2].get(5)), Ok(None));
    }

    #[test]
    fn solver_function_object_files_read_with_their_comment_header() {
        // A force monitor as solvers' function objects write it (sample written for the test):
        // a comment header, whitespace columns, parenthesised vectors.
        let text = "# Force coefficients\n# Time    \tCd   \tCl\t(x y z)\n0.1\t0.52\t-0.01\t(1 2 3)\n0.2\t0.50\t0.02\t(1.5 2 3)\n";
        let (line, names) = header_from_comment(text).unwrap();
        assert_eq!(line, 2);
        assert_eq!(names, ["Time", "Cd", "Cl", "(x y z)"]);
        let recs: Vec<_> = Lines::new(text).collect();
        assert_eq!(recs.len(), 2);
        let f = split(recs[1].1, Separator::Whitespace);
        assert_eq!(f.len(), 4);
        assert_eq!(f[3].text(), "(1.5 2 3)");
        assert_eq!(number(&f[1].text(), Decimal::Point), Ok(Some(0.5)));
        assert_eq!(detect(text, &Options::default()).separator, Separator::Tab);
        // No comment above the data, or an empty one: none. (Whether the first record is a
        // header of its own or data is the caller's to decide.)
        assert_eq!(header_from_comment("1 2\n"), None);
        assert_eq!(header_from_comment("#  \n1 2\n"), None);
        assert_eq!(header_from_comment("# t p\n\n1 2\n").map(|h| h.0), Some(1));
    }

    #[test]
    fn a_wrong_separator_gets_a_hint() {
        let o = Options {
            separator: Some(Separator::Comma),
            decimal: None,
        };
        let t = Table::open("x;y\n1;2\n", &o).unwrap();
        let h = t.hint().unwrap();
        assert!(
            h.contains("`;`") && h.contains("separator: semicolon"),
            "{h}"
        );
        let t = Table::open("x\n1\n", &Options::default()).unwrap();
        assert_eq!(t.hint(), None);
        assert_eq!(
            Table::open("# only\n\n", &Options::default()).unwrap_err(),
            OpenError::NoHeader
        );
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 3000, ..ProptestConfig::default() })]
        // No external value: the detector and the reader never panic on any bytes, and every
        // record they give lies on a line of the text.
        #[test]
        fn never_panics_on_random_bytes(bytes in proptest::collection::vec(any::<u8>(), 0..300)) {
            let text = String::from_utf8_lossy(&bytes);
            let lines = text.matches('\n').count() + text.matches('\r').count() + 1;
            let _ = detect(&text, &Options::default());
            if let Ok(mut t) = Table::open(&text, &Options::default()) {
                t.units_row_if(|i| i % 2 == 1);
                let _ = t.hint();
                for r in t.records() {
                    prop_assert!(r.line >= 1 && r.line <= lines);
                    for i in 0..r.fields.len() + 1 {
                        let _ = t.number(r.get(i));
                    }
                }
                for i in 0..t.header.len() + 1 {
                    let _ = t.unit(i);
                }
            }
        }

        #[test]
        fn never_panics_on_separator_soup(parts in proptest::collection::vec(
            prop_oneof![Just(","), Just(";"), Just("\t"), Just(" "), Just("\""), Just("\n"),
                        Just("\r"), Just("#"), Just("1,5"), Just("x"), Just("[%]"), Just("nan"),
                        Just("é"), Just("\u{feff}")], 0..60)) {
            let text = parts.concat();
            for s in Separator::ALL {
                let o = Options { separator: Some(s), decimal: None };
                if let Ok(t) = Table::open(&text, &o) {
                    for r in t.records() { let _ = r.get(3).text(); }
                }
            }
        }
    }
}
