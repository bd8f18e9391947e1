//! Reading and checking a study file.
//!
//! [`load`] reads the YAML once into the raw serde types of [`raw`], checks everything, and
//! returns a [`Study`]: meshes sorted finest first with sizes and ratios, quantities with their
//! values in the same order, and the settings with their defaults filled in. Every error is a
//! [`StudyError`] naming the file, the key path and, where known, the line and column.

pub mod csv_input;
pub mod duty;
pub mod history_input;
pub mod keys;
pub mod num;
pub mod raw;
pub mod reach;
pub mod reference;
pub mod scale;
pub mod sweep;
pub mod sweep_history;

use crate::grid::{self, GridError, Mesh, MeshSpec, SizeBasis};
use raw::{EstimatorChoice, RawStudy};
use std::collections::HashSet;
use std::fmt;
use std::path::{Path, PathBuf};

/// Largest study file read, in bytes (a study is a few kilobytes; this refuses accidents).
pub const MAX_STUDY_BYTES: u64 = 16 * 1024 * 1024;

/// A problem with a study file: where it is and what was expected.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct StudyError {
    /// The study file.
    pub file: PathBuf,
    /// Key path such as `meshes[2].cells` (empty for the whole file).
    pub key: String,
    /// 1-based line, when known.
    pub line: Option<usize>,
    /// 1-based column, when known.
    pub column: Option<usize>,
    /// What is wrong and what was expected.
    pub message: String,
}

impl fmt::Display for StudyError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file.display())?;
        match (self.line, self.column) {
            (Some(l), Some(c)) => write!(f, ":{l}:{c}")?,
            (Some(l), None) => write!(f, ":{l}")?,
            _ => {}
        }
        if self.key.is_empty() {
            write!(f, ": {}", self.message)
        } else {
            write!(f, ": {}: {}", self.key, self.message)
        }
    }
}

impl std::error::Error for StudyError {}

/// One scalar quantity, values finest first.
#[derive(Debug, Clone, PartialEq)]
pub struct Quantity {
    /// Name (the key in `quantities`).
    pub name: String,
    /// Free-text unit.
    pub unit: Option<String>,
    /// One value per mesh, in the order of [`Study::meshes`].
    pub values: Vec<f64>,
    /// Iterative uncertainty per mesh (same order), absolute, in the quantity's unit: the
    /// quantity's own `iterative` values, or the meshes' `iterative` where the quantity gives
    /// none and every quantity of the study shares one unit (else `None`, with a warning).
    pub iterative: Vec<Option<f64>>,
    /// Where `iterative` came from.
    pub iterative_source: IterativeSource,
    /// Each mesh's reduced monitor history, when the values came from histories (empty
    /// otherwise).
    pub histories: Vec<QuantityHistory>,
}

/// One mesh's monitor history of a quantity.
#[derive(Debug, Clone, PartialEq)]
pub struct QuantityHistory {
    /// The file read.
    pub file: PathBuf,
    /// Its reduction.
    pub result: crate::history::HistoryResult,
    /// Its samples thinned for drawing (abscissa, value).
    pub trace: Vec<(f64, f64)>,
    /// The abscissa's name, when the history has one.
    pub abscissa: Option<String>,
}

/// Where a quantity's iterative uncertainty came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum IterativeSource {
    /// Nowhere: no iterative uncertainty.
    None,
    /// The quantity's own `iterative` values.
    Quantity,
    /// The meshes' `iterative` values (one number per mesh for every quantity).
    Meshes,
    /// The meshes give values but the quantities' units differ, so they were not used.
    MeshesUnitsDiffer,
}

/// Estimator settings with defaults filled in.
#[derive(Debug, Clone, PartialEq)]
pub struct Settings {
    /// Safety factor for the three-mesh GCI.
    pub safety_factor: f64,
    /// Upper end of the observed-order search.
    pub order_max: f64,
    /// Which estimator governs.
    pub estimator: EstimatorChoice,
    /// Gravity for machine quantities, m/s².
    pub gravity: f64,
    /// Divisor of U for u_num in comparisons, when the study sets one for every method
    /// (`None`: each governing method's own, decided by `assess::govern`).
    pub validation_divisor: Option<f64>,
    /// The published rule that states U from three meshes.
    pub rule: crate::estimate::rules::Rule,
    /// Coverage factor k.
    pub coverage_factor: f64,
}

/// A checked study.
#[derive(Debug, Clone, PartialEq)]
pub struct Study {
    /// The file it came from.
    pub path: PathBuf,
    /// Title.
    pub title: String,
    /// Spatial dimension.
    pub dimension: u32,
    /// Formal order of the discretisation.
    pub formal_order: f64,
    /// The field of the study (words the caution).
    pub domain: raw::Domain,
    /// Meshes, finest first, with sizes and ratios.
    pub meshes: Vec<Mesh>,
    /// Whether sizes are absolute or relative to the finest mesh.
    pub size_basis: SizeBasis,
    /// Scalar quantities.
    pub quantities: Vec<Quantity>,
    /// Sweeps, curves finest first.
    pub sweeps: Vec<sweep::Sweep>,
    /// Settings.
    pub settings: Settings,
    /// Every file the study made meshbound read, the study file first.
    pub files_read: Vec<PathBuf>,
    /// Acceptance limits for `gate`.
    pub acceptance: Vec<raw::RawAcceptance>,
    /// Measurements to compare with.
    pub references: Vec<reference::Reference>,
    /// Duty curves: sweeps at several flows assembled against the flow.
    pub duty_curves: Vec<duty::DutyCurve>,
    /// Pointwise fields, with the indices of the meshes they cover (every mesh with a file,
    /// finest first).
    pub fields: Vec<(crate::field::FieldSpec, Vec<usize>)>,
    /// Files the study makes meshbound write (field per-point results).
    pub files_written: Vec<PathBuf>,
    /// Per mesh (same order as `meshes`): mean wall y+, when given.
    pub y_plus: Vec<Option<f64>>,
    /// Per mesh (same order as `meshes`): iterative uncertainty, absolute, when given.
    pub iterative: Vec<Option<f64>>,
    /// Sizes implied by the cell counts, relative to the finest mesh, when both `size` (or
    /// `extent`) and `cells` are given for every mesh.
    pub sizes_from_cells: Option<Vec<f64>>,
    /// Warnings raised while the files were read (points marked missing, skipped).
    pub warnings: Vec<crate::warning::Warning>,
}

/// What a study may reach besides its own folder.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct LoadOptions {
    /// Extra folders the study may read from and write into (the study's own folder is
    /// always allowed).
    pub allowed: Vec<PathBuf>,
}

/// Reads and checks a study file; the files it names must lie in its folder.
pub fn load(path: &Path) -> Result<Study, StudyError> {
    load_with(path, &LoadOptions::default())
}

/// Reads and checks a study file; the files it names must lie in its folder or in one of
/// `options.allowed`.
pub fn load_with(path: &Path, options: &LoadOptions) -> Result<Study, StudyError> {
    let whole = |message: String| StudyError {
        file: path.to_path_buf(),
        key: String::new(),
        line: None,
        column: None,
        message,
    };
    // Opened without blocking: a FIFO, a device or a folder is refused before any read.
    let file = crate::input::open_regular(path)
        .map_err(|e| whole(format!("cannot read the study file: {e}")))?;
    let meta = file
        .metadata()
        .map_err(|e| whole(format!("cannot read the study file: {e}")))?;
    if meta.len() > MAX_STUDY_BYTES {
        return Err(whole(format!(
            "the file has {} bytes; study files larger than {} bytes are refused (put large data in CSV files beside it)",
            meta.len(),
            MAX_STUDY_BYTES
        )));
    }
    // Read at most one byte past the limit: a device or a file that grows is refused too.
    let mut bytes = Vec::with_capacity(meta.len().min(MAX_STUDY_BYTES) as usize);
    {
        use std::io::Read;
        file.take(MAX_STUDY_BYTES + 1).read_to_end(&mut bytes)
    }
    .map_err(|e| whole(format!("cannot read the study file: {e}")))?;
    if bytes.len() as u64 > MAX_STUDY_BYTES {
        return Err(whole(format!(
            "more than {MAX_STUDY_BYTES} bytes were read; study files larger than {MAX_STUDY_BYTES} bytes are refused (put large data in CSV files beside it)"
        )));
    }
    let text = String::from_utf8(bytes).map_err(|e| {
        whole(format!(
            "the file is not UTF-8 text (invalid byte at offset {})",
            e.utf8_error().valid_up_to()
        ))
    })?;
    parse_with(&text, path, options)
}

/// Splits a serde_yaml message into key path and the rest.
fn split_yaml_message(msg: &str) -> (String, String) {
    // serde_yaml writes "path.to.key: message at line L column C".
    let msg = match msg.rfind(" at line ") {
        Some(i) => &msg[..i],
        None => msg,
    };
    if let Some((head, rest)) = msg.split_once(": ") {
        let looks_like_path = !head.is_empty()
            && !head.contains(' ')
            && head
                .chars()
                .all(|c| c.is_alphanumeric() || "_.[]-".contains(c));
        if looks_like_path {
            return (head.to_string(), rest.to_string());
        }
    }
    (String::new(), msg.to_string())
}

/// Deepest nesting of flow collections (`[` and `{`) accepted; a study needs a handful.
pub const MAX_NESTING: usize = 64;

/// Most YAML items (keys, values, list entries, collections) a study may hold, counted before
/// parsing from the separators of the text and again after expanding aliases. A study holds a
/// few thousand; large data belong in CSV files beside it. The bound keeps the YAML parser's
/// memory to a few hundred megabytes whatever a study file under [`MAX_STUDY_BYTES`] holds.
pub const MAX_ITEMS: usize = 1_000_000;

/// What [`check_shape`] found besides the refusals.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shape {
    /// Separators counted: `,`, `[`, `{`, line ends, and `-`, `?`, `:` followed by a space or
    /// a line end, outside quotes and comments. Every YAML item needs at least one, and each
    /// gives at most a few.
    pub separators: usize,
    /// Whether an alias (`*name`) appears outside quotes and comments.
    pub aliases: bool,
}

/// Refuses pathological shapes before the YAML parser sees them: flow collections nested more
/// than [`MAX_NESTING`] deep (a parser would spend a long time on a hundred thousand nested
/// brackets) and more than [`MAX_ITEMS`] separators (the parser keeps every item of a
/// document in memory at once). Quoted text and comments are skipped.
pub fn check_shape(text: &str, path: &Path) -> Result<Shape, StudyError> {
    let refuse = |line: usize, column: usize, message: String| StudyError {
        file: path.to_path_buf(),
        key: String::new(),
        line: Some(line),
        column: Some(column),
        message,
    };
    let too_many = |line: usize, column: usize| {
        refuse(line, column, format!(
        "the file holds more than {MAX_ITEMS} YAML items (keys, values, list entries); a study needs a few thousand, so this file is refused (put large data in CSV files beside it)"
    ))
    };
    let mut depth = 0usize;
    let mut shape = Shape {
        separators: 0,
        aliases: false,
    };
    for (li, line) in text.lines().enumerate() {
        let mut quote: Option<char> = None;
        let mut prev = ' ';
        let mut chars = line.chars().enumerate().peekable();
        // A line end separates items only after something other than blanks and a comment.
        let mut content = false;
        while let Some((ci, c)) = chars.next() {
            let next_blank = chars.peek().is_none_or(|&(_, n)| n == ' ' || n == '\t');
            match quote {
                Some(q) => {
                    if c == q {
                        quote = None;
                    }
                }
                None => match c {
                    '"' | '\''
                        if prev == ' '
                            || prev == '['
                            || prev == '{'
                            || prev == ','
                            || prev == ':' =>
                    {
                        quote = Some(c)
                    }
                    '#' if prev == ' ' || ci == 0 => break,
                    '[' | '{' => {
                        shape.separators += 1;
                        depth += 1;
                        if depth > MAX_NESTING {
                            return Err(refuse(li + 1, ci + 1, format!(
                                "collections are nested more than {MAX_NESTING} deep: a study file needs only a few levels, so this file is refused"
                            )));
                        }
                    }
                    ']' | '}' => depth = depth.saturating_sub(1),
                    ',' => shape.separators += 1,
                    '-' | '?' | ':' if next_blank => shape.separators += 1,
                    '*' if matches!(prev, ' ' | '[' | '{' | ',' | ':' | '-') => {
                        shape.aliases = true
                    }
                    _ => {}
                },
            }
            if shape.separators > MAX_ITEMS {
                return Err(too_many(li + 1, ci + 1));
            }
            content |= c != ' ' && c != '\t';
            prev = c;
        }
        if content {
            shape.separators += 1;
            if shape.separators > MAX_ITEMS {
                return Err(too_many(li + 1, line.chars().count() + 1));
            }
        }
    }
    Ok(shape)
}

/// The same refusal of deep nesting as [`check_shape`] (kept for callers of the earlier name).
pub fn check_nesting(text: &str, path: &Path) -> Result<(), StudyError> {
    check_shape(text, path).map(|_| ())
}

/// Counts the YAML items of a document with every alias expanded, without keeping any of
/// them, and fails once there are more than `limit`.
struct ItemCount<'a> {
    count: &'a std::cell::Cell<usize>,
    limit: usize,
}

/// The marker of [`ItemCount`]'s refusal in serde_yaml's message.
const EXPANSION_REFUSED: &str = "meshbound: too many items after expanding aliases";

impl ItemCount<'_> {
    fn bump<E: serde::de::Error>(&self) -> Result<(), E> {
        self.count.set(self.count.get() + 1);
        if self.count.get() > self.limit {
            Err(E::custom(EXPANSION_REFUSED))
        } else {
            Ok(())
        }
    }
    fn again(&self) -> Self {
        ItemCount {
            count: self.count,
            limit: self.limit,
        }
    }
}

impl<'de> serde::de::DeserializeSeed<'de> for ItemCount<'_> {
    type Value = ();
    fn deserialize<D: serde::Deserializer<'de>>(self, d: D) -> Result<(), D::Error> {
        d.deserialize_any(self)
    }
}

impl<'de> serde::de::Visitor<'de> for ItemCount<'_> {
    type Value = ();
    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        f.write_str("any YAML value")
    }
    fn visit_bool<E: serde::de::Error>(self, _: bool) -> Result<(), E> {
        self.bump()
    }
    fn visit_i64<E: serde::de::Error>(self, _: i64) -> Result<(), E> {
        self.bump()
    }
    fn visit_u64<E: serde::de::Error>(self, _: u64) -> Result<(), E> {
        self.bump()
    }
    fn visit_i128<E: serde::de::Error>(self, _: i128) -> Result<(), E> {
        self.bump()
    }
    fn visit_u128<E: serde::de::Error>(self, _: u128) -> Result<(), E> {
        self.bump()
    }
    fn visit_f64<E: serde::de::Error>(self, _: f64) -> Result<(), E> {
        self.bump()
    }
    fn visit_str<E: serde::de::Error>(self, _: &str) -> Result<(), E> {
        self.bump()
    }
    fn visit_bytes<E: serde::de::Error>(self, _: &[u8]) -> Result<(), E> {
        self.bump()
    }
    fn visit_unit<E: serde::de::Error>(self) -> Result<(), E> {
        self.bump()
    }
    fn visit_none<E: serde::de::Error>(self) -> Result<(), E> {
        self.bump()
    }
    fn visit_some<D: serde::Deserializer<'de>>(self, d: D) -> Result<(), D::Error> {
        d.deserialize_any(self)
    }
    fn visit_newtype_struct<D: serde::Deserializer<'de>>(self, d: D) -> Result<(), D::Error> {
        d.deserialize_any(self)
    }
    fn visit_seq<A: serde::de::SeqAccess<'de>>(self, mut seq: A) -> Result<(), A::Error> {
        self.bump()?;
        while seq.next_element_seed(self.again())?.is_some() {}
        Ok(())
    }
    fn visit_map<A: serde::de::MapAccess<'de>>(self, mut map: A) -> Result<(), A::Error> {
        self.bump()?;
        while map.next_key_seed(self.again())?.is_some() {
            map.next_value_seed(self.again())?;
        }
        Ok(())
    }
    fn visit_enum<A: serde::de::EnumAccess<'de>>(self, data: A) -> Result<(), A::Error> {
        // A tagged value (`!tag value`): the tag, then the value.
        use serde::de::VariantAccess;
        let ((), variant) = data.variant_seed(self.again())?;
        variant.newtype_variant_seed(self.again())
    }
}

/// Refuses a document whose aliases expand it beyond [`MAX_ITEMS`] items (an alias-expansion
/// bomb: a few lines that name a large anchored list many times). Other YAML errors are left
/// to the reading proper, which words them with the key path.
fn check_expansion(text: &str, path: &Path) -> Result<(), StudyError> {
    use serde::de::DeserializeSeed;
    let count = std::cell::Cell::new(0);
    let seed = ItemCount {
        count: &count,
        limit: MAX_ITEMS,
    };
    let Err(e) = seed.deserialize(serde_yaml::Deserializer::from_str(text)) else {
        return Ok(());
    };
    let message = e.to_string();
    if !message.contains(EXPANSION_REFUSED) && !message.contains("repetition limit exceeded") {
        return Ok(());
    }
    Err(StudyError {
        file: path.to_path_buf(),
        key: String::new(),
        line: e.location().map(|l| l.line()),
        column: e.location().map(|l| l.column()),
        message: format!(
            "aliases (`*name`) expand the document to more than {MAX_ITEMS} YAML items; a study needs a few thousand, so this file is refused (an alias-expansion bomb?)"
        ),
    })
}

/// Deserializes YAML text into `T`, turning any failure into a [`StudyError`] with the exact
/// key path (serde_path_to_error) and the position of that key (from the file's
/// [`keys::KeyIndex`]). A key given twice in one mapping is refused.
pub fn read_yaml<T: serde::de::DeserializeOwned>(text: &str, path: &Path) -> Result<T, StudyError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let index = build_index(text, path)?;
    read_yaml_indexed(text, path, &index)
}

/// Builds the key-path index of a study's text; a duplicate key is refused with both
/// positions. A text the YAML parser refuses gives an empty index (the reading proper words
/// that error).
pub fn build_index(text: &str, path: &Path) -> Result<keys::KeyIndex, StudyError> {
    match keys::KeyIndex::build(text) {
        Ok(ix) => Ok(ix),
        Err(keys::IndexError::Syntax) => Ok(keys::KeyIndex::default()),
        Err(keys::IndexError::Duplicate(d)) => Err(StudyError {
            file: path.to_path_buf(),
            key: d.path.clone(),
            line: Some(d.second.line),
            column: Some(d.second.column),
            message: d.message(),
        }),
    }
}

fn read_yaml_indexed<T: serde::de::DeserializeOwned>(
    text: &str,
    path: &Path,
    index: &keys::KeyIndex,
) -> Result<T, StudyError> {
    let de = serde_yaml::Deserializer::from_str(text);
    serde_path_to_error::deserialize::<_, T>(de).map_err(|e| {
        let key = e.path().to_string();
        let key = if key == "." { String::new() } else { key };
        let inner = e.into_inner();
        let (_, message) = split_yaml_message(&inner.to_string());
        let mut line = inner.location().map(|l| l.line());
        let mut column = inner.location().map(|l| l.column());
        // The key's own position when the file holds it; else serde_yaml's, else the
        // position of the longest part of the path the file holds.
        match index.find(&key) {
            Some((p, true)) => {
                line = Some(p.line);
                column = Some(p.column);
            }
            Some((p, false)) if line.is_none() => {
                line = Some(p.line);
                column = Some(p.column);
            }
            _ => {}
        }
        StudyError {
            file: path.to_path_buf(),
            key,
            line,
            column,
            message,
        }
    })
}

/// Errors at a key path, placed with the file's key index.
pub struct At<'a> {
    /// The study file.
    pub file: &'a Path,
    /// Its key index.
    pub index: &'a keys::KeyIndex,
}

impl At<'_> {
    /// An error at `key` (its position, or that of its longest prefix in the file).
    pub fn err(&self, key: impl Into<String>, message: String) -> StudyError {
        let key = key.into();
        let pos = self.index.pos(&key);
        StudyError {
            file: self.file.to_path_buf(),
            key,
            line: pos.map(|p| p.line),
            column: pos.map(|p| p.column),
            message,
        }
    }
}

/// Parses and checks the text of a study file; `path` is used in messages and to resolve
/// files the study names.
pub fn parse(text: &str, path: &Path) -> Result<Study, StudyError> {
    parse_with(text, path, &LoadOptions::default())
}

/// [`parse`] with the folders the study may reach besides its own.
pub fn parse_with(text: &str, path: &Path, options: &LoadOptions) -> Result<Study, StudyError> {
    // A byte-order mark is no part of the first key (and no column an editor shows).
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    if check_shape(text, path)?.aliases {
        check_expansion(text, path)?;
    }
    let index = build_index(text, path)?;
    let at = At {
        file: path,
        index: &index,
    };
    let err = |key: String, message: String| at.err(key, message);
    let raw: RawStudy = read_yaml_indexed(text, path, &index)?;
    let reach = reach::Reach::new(path, &options.allowed);
    let index_of = |name: &str| raw.meshes.iter().position(|m| m.name == name).unwrap_or(0);

    // Meshes: names, then sizes.
    let mut seen = HashSet::new();
    for (i, m) in raw.meshes.iter().enumerate() {
        if m.name.trim().is_empty() {
            return Err(err(
                format!("meshes[{i}].name"),
                "the mesh name is empty: give every mesh a unique, non-empty name".into(),
            ));
        }
        if !seen.insert(m.name.as_str()) {
            return Err(err(
                format!("meshes[{i}].name"),
                format!(
                    "the mesh name `{}` is used twice: mesh names must be unique",
                    m.name
                ),
            ));
        }
        if m.cells.is_none() && m.size.is_none() {
            return Err(err(
                format!("meshes[{i}]"),
                format!("mesh `{}` gives neither `cells` nor `size`: one is needed for its representative size", m.name),
            ));
        }
        if m.extent.is_some() && m.cells.is_none() {
            return Err(err(
                format!("meshes[{i}].extent"),
                format!("mesh `{}` gives `extent` without `cells`: h = (extent/cells)^(1/dimension) needs both", m.name),
            ));
        }
    }
    if raw.meshes.len() < 2 {
        return Err(err(
            "meshes".into(),
            format!(
                "the study has {} mesh{}; at least two are needed (three for an observed order)",
                raw.meshes.len(),
                if raw.meshes.len() == 1 { "" } else { "es" }
            ),
        ));
    }
    let dimension = raw.dimension.map_or(3, |d| d.0);
    let specs: Vec<MeshSpec> = raw
        .meshes
        .iter()
        .map(|m| MeshSpec {
            name: m.name.clone(),
            cells: m.cells.map(|c| c.0),
            size: m.size.map(|c| c.0),
            extent: m.extent.map(|c| c.0),
        })
        .collect();
    let (meshes, order, size_basis) = grid::sizes(&specs, dimension).map_err(|e| {
        let key = match &e {
            GridError::SameSize(_, b, _) => format!("meshes[{}]", index_of(b)),
            GridError::NoSize(n) | GridError::BadSize(n) => format!("meshes[{}]", index_of(n)),
            _ => "meshes".into(),
        };
        let mut e = err(key, e.to_string());
        e.key = "meshes".into();
        e
    })?;

    // Quantities: one finite value per mesh, no unknown mesh names.
    let mut quantities = Vec::new();
    let mut history_files: Vec<PathBuf> = Vec::new();
    for (qname, q) in &raw.quantities {
        let from_history = match (&q.values, &q.history) {
            (Some(_), Some(_)) => {
                return Err(err(
                    format!("quantities.{qname}.history"),
                    "gives both `values` and `history`: give one".into(),
                ))
            }
            (None, None) => {
                return Err(err(
                    format!("quantities.{qname}"),
                    "gives neither `values` nor `history`: give one value per mesh, or one \
                     monitor history per mesh"
                        .into(),
                ))
            }
            (None, Some(h)) => Some(history_input::read(qname, h, &meshes, path, &reach, &at)?),
            (Some(_), None) => None,
        };
        let empty = indexmap::IndexMap::new();
        let given_values = q.values.as_ref().unwrap_or(&empty);
        for name in given_values.keys() {
            if !seen.contains(name.as_str()) {
                let known: Vec<&str> = raw.meshes.iter().map(|m| m.name.as_str()).collect();
                return Err(err(
                    format!("quantities.{qname}.values.{name}"),
                    format!(
                        "names the mesh `{name}`, which is not in `meshes` (known: {})",
                        known.join(", ")
                    ),
                ));
            }
        }
        let mut values = Vec::with_capacity(meshes.len());
        for m in meshes.iter().filter(|_| from_history.is_none()) {
            match given_values.get(&m.name) {
                Some(v) => values.push(v.0),
                None => {
                    return Err(err(
                        format!("quantities.{qname}.values"),
                        format!(
                            "has no value for the mesh `{}`: give one value per mesh",
                            m.name
                        ),
                    ))
                }
            }
        }
        let mut iterative = vec![None; meshes.len()];
        let mut histories = Vec::new();
        if let Some(h) = from_history {
            values = h.values;
            iterative = h.iterative;
            histories = h
                .files
                .iter()
                .cloned()
                .zip(h.results)
                .zip(h.traces)
                .map(|((file, result), (trace, abscissa))| QuantityHistory {
                    file,
                    result,
                    trace,
                    abscissa,
                })
                .collect();
            history_files.extend(h.files);
        }
        if let Some(own) = &q.iterative {
            for name in own.keys() {
                if !seen.contains(name.as_str()) {
                    return Err(err(
                        format!("quantities.{qname}.iterative.{name}"),
                        format!("names the mesh `{name}`, which is not in `meshes`"),
                    ));
                }
            }
            for (slot, m) in iterative.iter_mut().zip(&meshes) {
                *slot = own.get(&m.name).map(|v| v.0.abs());
            }
        }
        let names: Vec<String> = meshes.iter().map(|m| m.name.clone()).collect();
        scale::check_quantity(qname, q.unit.as_deref(), &values, &names, &at)?;
        quantities.push(Quantity {
            name: qname.clone(),
            unit: q.unit.clone(),
            values,
            iterative_source: if q.iterative.is_some() || !histories.is_empty() {
                IterativeSource::Quantity
            } else {
                IterativeSource::None
            },
            iterative,
            histories,
        });
    }
    // The meshes' iterative values stand for every quantity without its own only when all
    // quantities share one unit: one number cannot be an uncertainty in two units.
    let mesh_iterative: Vec<Option<f64>> = order
        .iter()
        .map(|&i| raw.meshes[i].iterative.map(|v| v.0.abs()))
        .collect();
    if mesh_iterative.iter().any(Option::is_some) {
        let first_unit = quantities.first().map(|q| q.unit.clone());
        let one_unit = quantities
            .iter()
            .all(|q| Some(q.unit.clone()) == first_unit);
        for q in quantities
            .iter_mut()
            .filter(|q| q.iterative_source == IterativeSource::None)
        {
            if one_unit {
                q.iterative = mesh_iterative.clone();
                q.iterative_source = IterativeSource::Meshes;
            } else {
                q.iterative_source = IterativeSource::MeshesUnitsDiffer;
            }
        }
    }
    let sizes_from_cells = if size_basis == SizeBasis::Absolute
        && order
            .iter()
            .all(|&i| raw.meshes[i].cells.is_some() && raw.meshes[i].size.is_some())
    {
        let n1 = raw.meshes[order[0]].cells.map_or(1.0, |c| c.0);
        Some(
            order
                .iter()
                .map(|&i| {
                    (n1 / raw.meshes[i].cells.map_or(1.0, |c| c.0)).powf(1.0 / f64::from(dimension))
                })
                .collect::<Vec<f64>>(),
        )
    } else {
        None
    };
    for (i, a) in raw.acceptance.iter().enumerate() {
        if a.max_relative.is_none()
            && a.max_absolute.is_none()
            && a.require.is_none()
            && a.min_meshes.is_none()
        {
            return Err(err(
                format!("acceptance[{i}]"),
                format!("the limit for `{}` sets nothing: give max_relative, max_absolute, require or min_meshes", a.target),
            ));
        }
    }
    if raw.settings.estimator == Some(EstimatorChoice::LeastSquares) && meshes.len() < 4 {
        return Err(err(
            "settings.estimator".into(),
            format!(
                "`least_squares` needs at least four meshes; the study has {}: use `auto` or `three_grid`",
                meshes.len()
            ),
        ));
    }
    let gravity = raw
        .settings
        .gravity
        .map_or(crate::machine::STANDARD_GRAVITY, |g| g.0);
    let mut files_read = vec![path.to_path_buf()];
    for f in history_files {
        if !files_read.contains(&f) {
            files_read.push(f);
        }
    }
    let mut warnings = Vec::new();
    let mesh_names: Vec<String> = meshes.iter().map(|m| m.name.clone()).collect();
    let sweeps = sweep::check(
        &raw.sweeps,
        &mesh_names,
        gravity,
        &at,
        &reach,
        &mut files_read,
        &mut warnings,
    )?;
    let duty_curves = duty::check(&raw.duty_curves, &sweeps, &at)?;
    let mut fields = Vec::new();
    let mut files_written = Vec::new();
    for (fname, f) in &raw.fields {
        let key = format!("fields.{fname}");
        if f.columns.is_empty() {
            return Err(err(
                format!("{key}.columns"),
                "names no column: list the quantities to estimate at every probe".into(),
            ));
        }
        for m in f.data.keys() {
            if !mesh_names.contains(m) {
                return Err(err(
                    format!("{key}.data.{m}"),
                    format!(
                        "names the mesh `{m}`, which is not in `meshes` (known: {})",
                        mesh_names.join(", ")
                    ),
                ));
            }
        }
        let idx: Vec<usize> = (0..meshes.len())
            .filter(|&i| f.data.contains_key(&meshes[i].name))
            .collect();
        if idx.len() < 3 {
            return Err(err(
                format!("{key}.data"),
                format!(
                    "gives files for {} mesh(es); three or more are needed",
                    idx.len()
                ),
            ));
        }
        let vtk: Vec<bool> = idx
            .iter()
            .map(|&i| crate::field::is_vtk(Path::new(&f.data[&meshes[i].name])))
            .collect();
        let on_meshes = vtk.iter().all(|&v| v);
        if !on_meshes && vtk.iter().any(|&v| v) {
            let i = idx[vtk.iter().position(|&v| v).unwrap_or(0)];
            return Err(err(
                format!("{key}.data.{}", meshes[i].name),
                "is a VTK file (`.vtu`, `.vtk`) but other meshes give probe files: give every mesh the same kind of file".into(),
            ));
        }
        if on_meshes {
            for (given, what) in [
                (f.id.is_some(), "id"),
                (f.separator.is_some(), "separator"),
                (f.decimal.is_some(), "decimal"),
                (!f.mapping.is_empty(), "mapping"),
            ] {
                if given {
                    return Err(err(
                        format!("{key}.{what}"),
                        "is for probe files; with VTK files `columns` names the arrays".into(),
                    ));
                }
            }
        } else if f.probe_points.is_some() {
            return Err(err(
                format!("{key}.probe_points"),
                "is for VTK data: probe files already hold the probes".into(),
            ));
        }
        let base = path.parent().unwrap_or(Path::new(""));
        let mut files: Vec<PathBuf> = Vec::with_capacity(idx.len());
        for &i in &idx {
            let given = &f.data[&meshes[i].name];
            let file = base.join(given);
            reach
                .read(given, &file)
                .map_err(|m| err(format!("{key}.data.{}", meshes[i].name), m))?;
            files.push(file);
        }
        files_read.extend(files.iter().cloned());
        let probe_points = match &f.probe_points {
            Some(given) => {
                let file = base.join(given);
                reach
                    .read(given, &file)
                    .map_err(|m| err(format!("{key}.probe_points"), m))?;
                files_read.push(file.clone());
                Some(file)
            }
            None => None,
        };
        let write = f.write.as_ref().map(|w| base.join(w));
        if let (Some(w), Some(given)) = (&write, &f.write) {
            reach
                .write(given, w)
                .map_err(|m| err(format!("{key}.write"), m))?;
            if files.contains(w) || w == path || probe_points.as_ref() == Some(w) {
                return Err(err(
                    format!("{key}.write"),
                    "would overwrite an input file".into(),
                ));
            }
            if crate::field::is_vtu(w) && !on_meshes {
                return Err(err(
                    format!("{key}.write"),
                    "a `.vtu` output needs VTK data (`.vtu` or `.vtk` files in `data`); probe files have no mesh: write a `.csv`".into(),
                ));
            }
            files_written.push(w.clone());
        }
        fields.push((
            crate::field::FieldSpec {
                name: fname.clone(),
                id: f.id.clone(),
                columns: f.columns.clone(),
                files,
                write,
                reading: f.reading(&key, &at)?,
                probe_points,
                estimate: f.estimate(
                    &key,
                    &at,
                    on_meshes,
                    raw.settings.validation_divisor.map(|v| v.0),
                    raw.settings.coverage_factor.map_or(2.0, |v| v.0),
                )?,
            },
            idx,
        ));
    }
    let references = reference::check(
        &raw.reference_data,
        &quantities,
        &sweeps,
        &at,
        &reach,
        &mut files_read,
        &mut warnings,
    )?;
    let title = raw.title.clone().unwrap_or_else(|| {
        path.file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default()
    });
    Ok(Study {
        path: path.to_path_buf(),
        title,
        dimension,
        formal_order: raw.formal_order.map_or(2.0, |p| p.0),
        domain: raw.domain.unwrap_or_default(),
        meshes,
        size_basis,
        quantities,
        settings: Settings {
            safety_factor: raw.settings.safety_factor.map_or(1.25, |v| v.0),
            order_max: raw.settings.order_max.map_or(20.0, |v| v.0),
            estimator: raw.settings.estimator.unwrap_or_default(),
            gravity,
            validation_divisor: raw.settings.validation_divisor.map(|v| v.0),
            rule: raw
                .settings
                .uncertainty_rule
                .map_or(crate::estimate::rules::Rule::DEFAULT, |r| r.rule()),
            coverage_factor: raw.settings.coverage_factor.map_or(2.0, |v| v.0),
        },
        references,
        sweeps,
        duty_curves,
        fields,
        files_written,
        files_read,
        acceptance: raw.acceptance.clone(),
        y_plus: order
            .iter()
            .map(|&i| raw.meshes[i].y_plus.map(|v| v.0))
            .collect(),
        iterative: order
            .iter()
            .map(|&i| raw.meshes[i].iterative.map(|v| v.0.abs()))
            .collect(),
        sizes_from_cells,
        warnings,
    })
}

/// The JSON Schema of the study file as pretty JSON text with a final newline (for YAML
/// editors: completion and checking as you type; see docs/study-file.md).
pub fn schema_text() -> String {
    let mut schema = schemars::schema_for!(raw::RawStudy);
    schema.insert("title".into(), "meshbound study file (format 1)".into());
    let mut s = serde_json::to_string_pretty(&schema).unwrap_or_default();
    s.push('\n');
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    fn p(text: &str) -> Result<Study, StudyError> {
        parse(text, Path::new("s.yaml"))
    }

    const GOOD: &str = "format: 1\ntitle: t\ndimension: 2\nmeshes:\n  - {name: c, cells: 4500}\n  - {name: a, cells: 18000}\n  - {name: b, cells: 8000}\nquantities:\n  q:\n    values: {a: 6.063, b: 5.972, c: 5.863}\n";

    #[test]
    fn reads_and_sorts() {
        let s = p(GOOD).unwrap();
        let names: Vec<_> = s.meshes.iter().map(|m| m.name.as_str()).collect();
        assert_eq!(names, ["a", "b", "c"]);
        assert_eq!(s.quantities[0].values, vec![6.063, 5.972, 5.863]);
        assert_eq!(s.settings.estimator, EstimatorChoice::Auto);
    }

    #[test]
    fn bad_cells_names_key_and_line() {
        let t = GOOD.replace("cells: 8000", "cells: -8000");
        let e = p(&t).unwrap_err();
        assert_eq!(e.key, "meshes[2].cells");
        assert_eq!(e.line, Some(7));
        // Cell counts below 1 are refused with what a cell count is (a changed message:
        // before, any number > 0 passed).
        assert!(e.message.contains("a cell count ≥ 1"), "{e}");
        let e = p(&GOOD.replace("cells: 8000", "cells: 0.5")).unwrap_err();
        assert_eq!(e.key, "meshes[2].cells");
        assert!(e.message.contains("a mesh has at least one cell"), "{e}");
    }

    #[test]
    fn order_max_above_100_is_refused() {
        let t = format!("{GOOD}settings:\n  order_max: 1e8\n");
        let e = p(&t).unwrap_err();
        assert_eq!(e.key, "settings.order_max");
        assert_eq!((e.line, e.column), (Some(12), Some(3)));
        assert!(e.message.contains("at most 100"), "{e}");
        let ok = format!("{GOOD}settings:\n  order_max: 100\n");
        assert_eq!(
            p(&ok).unwrap().settings.order_max.to_bits(),
            100f64.to_bits()
        );
    }

    #[test]
    fn duplicate_keys_are_refused_at_every_level() {
        // (what, text, key path, line, column, lines named)
        let cases: &[(&str, String, &str, usize, usize, &str)] = &[
            (
                "a quantity defined twice",
                format!("{GOOD}  q:\n    values: {{a: 1, b: 2, c: 3}}\n"),
                "quantities.q",
                11,
                3,
                "lines 9 and 11",
            ),
            (
                "a mesh twice in one values map",
                GOOD.replace("c: 5.863}", "c: 5.863, a: 6.1}"),
                "quantities.q.values.a",
                10,
                44,
                "line 10, columns 14 and 44",
            ),
            (
                "a setting twice",
                format!("{GOOD}settings:\n  safety_factor: 1.25\n  'safety_factor': 3\n"),
                "settings.safety_factor",
                13,
                3,
                "lines 12 and 13",
            ),
            (
                "a top-level key twice",
                format!("{GOOD}title: u\n"),
                "title",
                11,
                1,
                "lines 2 and 11",
            ),
            (
                "a key of a mesh twice",
                GOOD.replace("{name: c, cells: 4500}", "{name: c, cells: 4500, cells: 9}"),
                "meshes[0].cells",
                5,
                28,
                "line 5, columns 15 and 28",
            ),
        ];
        for (what, text, key, line, column, lines) in cases {
            let e = p(text).unwrap_err();
            assert_eq!(e.key, *key, "{what}: {e}");
            assert_eq!(
                (e.line, e.column),
                (Some(*line), Some(*column)),
                "{what}: {e}"
            );
            assert!(e.message.contains("defined twice"), "{what}: {e}");
            assert!(e.message.contains(lines), "{what}: {e}");
        }
    }

    #[test]
    fn a_byte_order_mark_before_the_first_key_is_read() {
        let t = format!("\u{feff}{GOOD}");
        assert_eq!(p(&t).unwrap().quantities.len(), 1);
        // Positions stay those an editor shows.
        let t = format!("\u{feff}{}", GOOD.replace("format: 1", "format: 9"));
        let e = p(&t).unwrap_err();
        assert_eq!(
            (e.key.as_str(), e.line, e.column),
            ("format", Some(1), Some(1)),
            "{e}"
        );
        let t = format!("\u{feff}{}", GOOD.replace("cells: 8000", "cells: -1"));
        let e = p(&t).unwrap_err();
        assert_eq!((e.line, e.column), (Some(7), Some(15)), "{e}");
    }

    #[test]
    fn a_field_named_like_a_quantity_is_placed_at_the_field() {
        // Before the key index, `q:` was searched from the top and the quantity's line given.
        let t = format!("{GOOD}fields:\n  q:\n    columns: []\n    data: {{a: a.csv}}\n");
        let e = p(&t).unwrap_err();
        assert_eq!(e.key, "fields.q.columns");
        assert_eq!(e.line, Some(13), "{e}");
    }

    /// A study with `n` more quantities.
    fn many(n: usize) -> String {
        let mut t = GOOD.to_string();
        for i in 0..n {
            t.push_str(&format!(
                "  q{i}:\n    values: {{a: 6.063, b: 5.972, c: 5.863}}\n"
            ));
        }
        t
    }

    #[test]
    fn reading_is_linear_in_the_number_of_quantities() {
        // The work of the key index (events, key bytes, look-ups) is counted, not timed:
        // twice the quantities must cost about twice the work (a quadratic reader, four times).
        let work = |n: usize| {
            let t = many(n);
            let ix = keys::KeyIndex::build(&t).unwrap();
            for i in (0..n).step_by(100) {
                let _ = ix.pos(&format!("quantities.q{i}.values.c"));
            }
            ix.work()
        };
        let (w1, w2) = (work(5_000), work(10_000));
        let ratio = w2 as f64 / w1 as f64;
        assert!(
            (1.8..2.3).contains(&ratio),
            "work {w1} → {w2}, ratio {ratio}"
        );
        // The whole reader goes through 20 000 quantities and places an error in the last.
        let t = many(20_000).replace(
            "q19999:\n    values: {a: 6.063",
            "q19999:\n    values: {a: .nan",
        );
        let e = p(&t).unwrap_err();
        assert_eq!(e.key, "quantities.q19999.values.a");
        assert_eq!(e.line, Some(12 + 2 * 19_999), "{e}");
    }

    #[test]
    fn nan_value_refused() {
        let t = GOOD.replace("b: 5.972", "b: .nan");
        let e = p(&t).unwrap_err();
        assert_eq!(e.key, "quantities.q.values.b");
        assert!(e.message.contains("not a number"), "{e}");
    }

    #[test]
    fn unknown_key_refused() {
        let t = GOOD.replace("title: t", "titel: t");
        let e = p(&t).unwrap_err();
        assert!(e.message.contains("unknown field `titel`"), "{e}");
        assert_eq!(e.line, Some(2));
    }

    #[test]
    fn future_format_refused() {
        let e = p(&GOOD.replace("format: 1", "format: 2")).unwrap_err();
        assert_eq!(e.key, "format");
        assert!(e.message.contains("newer"), "{e}");
    }

    #[test]
    fn separators_and_aliases_are_counted_outside_quotes_and_comments() {
        let path = Path::new("s.yaml");
        let shape = check_shape("a: [1, 2, 3]\n# x, y, *z\nb: '*q, r'\n\n", path).unwrap();
        // `: `, `[`, two commas and the line end of line 1; `: ` and the line end of line 3.
        assert_eq!(shape.separators, 7);
        assert!(!shape.aliases);
        assert!(check_shape("a: &x 1\nb: *x\n", path).unwrap().aliases);
        let many = format!("a: [{}1]\n", "1,".repeat(MAX_ITEMS));
        let e = check_shape(&many, path).unwrap_err();
        assert_eq!(e.line, Some(1));
        assert!(e.message.contains("more than 1000000 YAML items"), "{e}");
    }

    #[test]
    fn alias_expansion_is_counted_without_keeping_it() {
        let path = Path::new("s.yaml");
        // 1 000 items named 2 000 times: two million after expansion.
        let mut bomb = format!("a: &l [{}]\n", vec!["0"; 1000].join(", "));
        for i in 0..2000 {
            bomb.push_str(&format!("b{i}: *l\n"));
        }
        let e = check_expansion(&bomb, path).unwrap_err();
        assert!(e.message.contains("alias-expansion bomb"), "{e}");
        assert_eq!(e.line, Some(1), "the repeated item is on line 1");
        // A few aliases pass, and YAML errors are left to the reading proper.
        assert!(check_expansion("a: &l [1, 2]\nb: *l\nc: !t {d: *l}\n", path).is_ok());
        assert!(check_expansion("a: *undefined\n", path).is_ok());
        assert!(check_expansion("a: [\n", path).is_ok());
    }
}
