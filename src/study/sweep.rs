//! Sweeps in the study file: curves per mesh (for example a cavitation sweep of decreasing σ
//! at fixed duty), given inline or as CSV files beside the study, optionally as raw solver
//! monitors from which head, efficiency, NPSH and σ are derived.

use super::num::{Finite, NonNegativeOrPercent};
use super::StudyError;
use crate::machine::{self, Mode, RawPoint};
use crate::sweep::{DropRule, Interpolation, Persistence, ReferenceKind};
use indexmap::IndexMap;
use serde::de::{self, Deserializer, MapAccess, SeqAccess, Visitor};
use serde::Deserialize;
use std::fmt;
use std::path::{Path, PathBuf};

/// Raw columns a sweep with `mode` gives per point (contract names, SI units).
pub const RAW_COLUMNS: [&str; 6] = [
    "inlet_total_pressure",
    "outlet_total_pressure",
    "flow",
    "torque",
    "speed",
    "temperature",
];

/// Columns derived from the raw columns.
pub const DERIVED_COLUMNS: [&str; 4] = ["head", "efficiency", "npsh", "sigma"];

/// Fewest points a sweep must have on each mesh.
pub const MIN_POINTS: usize = 4;

/// Most points read for one sweep on one mesh (a refusal, not a truncation).
pub const MAX_POINTS: usize = 1_000_000;

/// One sweep as written.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawSweep {
    /// Name of the abscissa column (for example `sigma`).
    pub x: String,
    /// Response columns.
    pub responses: Vec<String>,
    /// Interpolation between points.
    #[serde(default)]
    pub interpolation: Option<Interpolation>,
    /// Machine mode; when given, the data are raw monitors and head, efficiency, NPSH and σ
    /// are derived.
    #[serde(default)]
    pub mode: Option<Mode>,
    /// Per mesh: a CSV file or inline columns.
    pub data: IndexMap<String, RawSweepData>,
    /// Breakdown definitions.
    #[serde(default)]
    pub breakdown: Vec<RawBreakdown>,
    /// Uncertainty band along a response curve.
    #[serde(default)]
    pub band: Option<RawBand>,
    /// The separator of the CSV files (default: detected).
    #[serde(default)]
    pub separator: Option<crate::tabular::Separator>,
    /// The decimal mark of the CSV files (default: detected).
    #[serde(default)]
    pub decimal: Option<crate::tabular::Decimal>,
    /// Where each column the sweep reads comes from, and its scale.
    #[serde(default)]
    pub mapping: IndexMap<String, super::raw::RawColumn>,
    /// With `mode`: the pressure columns are gauge pressures, and this absolute pressure (Pa)
    /// is added to each.
    #[serde(default)]
    pub ambient_pressure: Option<super::num::Positive>,
    /// How the meshes' `history` files are read: the iteration or time column they are joined
    /// on, and the reduction of every operating point.
    #[serde(default)]
    pub history_reading: Option<RawSweepHistory>,
}

/// How a sweep's monitor histories are read.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawSweepHistory {
    /// The iteration or time column (required: the columns are joined on it).
    pub abscissa: super::raw::HistoryColumn,
    /// Which figure of each point is its value (default `mean` of the steady part).
    #[serde(default)]
    pub reduce: Option<super::raw::RawReduction>,
    /// Batches of the batch-means estimate (default 20).
    #[serde(default)]
    pub batches: Option<usize>,
    /// The share of each point that is its final window (default 0.1).
    #[serde(default)]
    pub final_share: Option<f64>,
}

/// One mesh's sweep data: `file`, `history` or inline columns (`name: [numbers]`).
#[derive(Debug, Default)]
pub struct RawSweepData {
    /// CSV file, relative to the study file.
    pub file: Option<String>,
    /// A monitor history holding every operating point one after the other, relative to the
    /// study file (read with the sweep's `history_reading`).
    pub history: Option<String>,
    /// Or one monitor history per operating point (each holding its point's rows; several
    /// points per file are split as for `history`).
    pub histories: Vec<String>,
    /// Inline columns.
    pub columns: IndexMap<String, Vec<f64>>,
}

impl schemars::JsonSchema for RawSweepData {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "SweepData".into()
    }
    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({
            "type": "object",
            "description": "`file: path.csv` or `history: monitor file` (relative to the study file), or inline columns `name: [numbers]`",
            "properties": {"file": {"type": "string"}, "history": {"type": "string"}, "histories": {"type": "array", "items": {"type": "string"}}},
            "additionalProperties": {"type": "array", "items": {"type": "number"}}
        })
    }
}

impl schemars::JsonSchema for ReferenceChoice {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "BreakdownReference".into()
    }
    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({"anyOf": [{"enum": ["plateau", "highest"]}, {"type": "number"}]})
    }
}

impl schemars::JsonSchema for BandAt {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "BandAt".into()
    }
    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({"anyOf": [{"const": "fine"}, {"type": "array", "items": {"type": "number"}, "minItems": 1}]})
    }
}

impl<'de> Deserialize<'de> for RawSweepData {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = RawSweepData;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a map with `file: path.csv` or columns such as `sigma: [0.4, 0.3, …]`")
            }
            fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<RawSweepData, A::Error> {
                let mut out = RawSweepData::default();
                while let Some(key) = map.next_key::<String>()? {
                    if key == "file" {
                        out.file = Some(map.next_value::<String>()?);
                    } else if key == "history" {
                        out.history = Some(map.next_value::<String>()?);
                    } else if key == "histories" {
                        out.histories = map.next_value::<Vec<String>>()?;
                    } else {
                        let col: Vec<Finite> = map.next_value()?;
                        out.columns
                            .insert(key, col.into_iter().map(|v| v.0).collect());
                    }
                }
                let given = usize::from(out.file.is_some())
                    + usize::from(out.history.is_some())
                    + usize::from(!out.histories.is_empty())
                    + usize::from(!out.columns.is_empty());
                if given > 1 {
                    return Err(de::Error::custom(
                        "give one of `file`, `history`, `histories` or inline columns",
                    ));
                }
                Ok(out)
            }
        }
        d.deserialize_map(V)
    }
}

/// Whether a drop is a fraction of the reference or in the response's unit.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, serde::Serialize, schemars::JsonSchema,
)]
#[serde(rename_all = "snake_case")]
pub enum DropBasis {
    /// A fraction of the reference (default): threshold = reference · (1 − drop).
    #[default]
    Relative,
    /// In the response's unit: threshold = reference − drop.
    Absolute,
}

/// The non-cavitating reference of a breakdown.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ReferenceChoice {
    /// Mean of the response for x ≥ `plateau_from`.
    Plateau,
    /// The response at the largest x.
    Highest,
    /// A given value.
    Value(f64),
}

impl<'de> Deserialize<'de> for ReferenceChoice {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl Visitor<'_> for V {
            type Value = ReferenceChoice;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("`plateau`, `highest` or a number")
            }
            fn visit_str<E: de::Error>(self, s: &str) -> Result<ReferenceChoice, E> {
                match s {
                    "plateau" => Ok(ReferenceChoice::Plateau),
                    "highest" => Ok(ReferenceChoice::Highest),
                    _ => Err(E::custom(format!(
                        "expected `plateau`, `highest` or a number, found `{s}`"
                    ))),
                }
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<ReferenceChoice, E> {
                if v.is_finite() {
                    Ok(ReferenceChoice::Value(v))
                } else {
                    Err(E::custom("the reference value must be a finite number"))
                }
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<ReferenceChoice, E> {
                Ok(ReferenceChoice::Value(v as f64))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<ReferenceChoice, E> {
                Ok(ReferenceChoice::Value(v as f64))
            }
        }
        d.deserialize_any(V)
    }
}

/// What a breakdown is read against.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, serde::Serialize, schemars::JsonSchema,
)]
#[serde(rename_all = "snake_case")]
pub enum Abscissa {
    /// The sweep's abscissa `x` (default).
    #[default]
    X,
    /// The NPSH of every point, m: from the raw monitors (`mode`), from an `npsh` response, or
    /// σ·H from `x: sigma` and a `head` response. NPSH3 (a 3 % head drop) is defined on it.
    Npsh,
}

/// One breakdown definition as written.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawBreakdown {
    /// The response whose drop defines breakdown.
    pub response: String,
    /// The drop (`1%` or 0.01 relative; a number in the response's unit when absolute).
    pub drop: NonNegativeOrPercent,
    /// Relative (default) or absolute drop.
    #[serde(default)]
    pub drop_basis: Option<DropBasis>,
    /// The non-cavitating reference (default `plateau` when `plateau_from` is given, else
    /// `highest`).
    #[serde(default)]
    pub reference: Option<ReferenceChoice>,
    /// Lower end of the plateau, for `reference: plateau`.
    #[serde(default)]
    pub plateau_from: Option<Finite>,
    /// Consecutive points that must lie below the threshold for a crossing to be breakdown
    /// (default 2; 1 takes the first point below).
    #[serde(default)]
    pub confirm_points: Option<u32>,
    /// Span of the abscissa those points must cover (default 0: none).
    #[serde(default)]
    pub confirm_span: Option<Finite>,
    /// What breakdown is read against: `x` (default) or `npsh`.
    #[serde(default)]
    pub abscissa: Option<Abscissa>,
}

/// Where the band is evaluated.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum BandAt {
    /// The finest mesh's x values inside the overlap of all meshes.
    Fine,
    /// Given x values.
    Values(Vec<f64>),
}

impl<'de> Deserialize<'de> for BandAt {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = BandAt;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("`fine` or a list of numbers")
            }
            fn visit_str<E: de::Error>(self, s: &str) -> Result<BandAt, E> {
                if s == "fine" {
                    Ok(BandAt::Fine)
                } else {
                    Err(E::custom(format!(
                        "expected `fine` or a list of numbers, found `{s}`"
                    )))
                }
            }
            fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<BandAt, A::Error> {
                let mut v = Vec::new();
                while let Some(x) = seq.next_element::<Finite>()? {
                    v.push(x.0);
                }
                if v.is_empty() {
                    return Err(de::Error::custom("the list of band abscissae is empty"));
                }
                Ok(BandAt::Values(v))
            }
        }
        d.deserialize_any(V)
    }
}

/// The band definition as written.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawBand {
    /// The response.
    pub response: String,
    /// Where to evaluate (default `fine`).
    #[serde(default)]
    pub at: Option<BandAt>,
    /// Interpolation for the band (default: the sweep's).
    #[serde(default)]
    pub interpolation: Option<Interpolation>,
}

/// One mesh's curve, sorted by increasing x.
#[derive(Debug, Clone, PartialEq)]
pub struct Curve {
    /// Mesh name.
    pub mesh: String,
    /// Abscissa values, strictly increasing.
    pub x: Vec<f64>,
    /// Response columns (same order as [`Sweep::responses`]), aligned with `x`.
    pub responses: Vec<Vec<f64>>,
    /// Derived columns when the sweep gives raw monitors (head, efficiency, npsh, sigma and
    /// the vapour pressure and density used), aligned with `x`.
    pub derived: Option<Vec<machine::DerivedPoint>>,
    /// NPSH of every point \[m\], aligned with `x`, when a breakdown is read against it.
    pub npsh: Option<Vec<f64>>,
    /// Where each point was given (`line 12 of sweeps/L1.csv`, `point 3`), aligned with `x`.
    pub labels: Vec<String>,
    /// Per response, the U_I of every point when the curve was read from a monitor history
    /// (aligned with `x`); empty otherwise.
    pub noise: Vec<Vec<Option<f64>>>,
}

/// A checked breakdown definition.
#[derive(Debug, Clone, PartialEq)]
pub struct BreakdownSpec {
    /// Response name.
    pub response: String,
    /// Index of the response in [`Sweep::responses`].
    pub response_index: usize,
    /// The drop and whether it is relative or absolute.
    pub drop: DropRule,
    /// The non-cavitating reference.
    pub reference: ReferenceKind,
    /// How long the response must stay below the threshold.
    pub persistence: Persistence,
    /// What breakdown is read against.
    pub abscissa: Abscissa,
}

/// A checked band definition.
#[derive(Debug, Clone, PartialEq)]
pub struct BandSpec {
    /// Response name.
    pub response: String,
    /// Index of the response in [`Sweep::responses`].
    pub response_index: usize,
    /// Where to evaluate.
    pub at: BandAt,
    /// Interpolation.
    pub interpolation: Interpolation,
}

/// A checked sweep: curves of the meshes it covers, finest first.
#[derive(Debug, Clone, PartialEq)]
pub struct Sweep {
    /// Name.
    pub name: String,
    /// Abscissa name.
    pub x: String,
    /// Response names.
    pub responses: Vec<String>,
    /// Interpolation.
    pub interpolation: Interpolation,
    /// Machine mode when derived from raw monitors.
    pub mode: Option<Mode>,
    /// Indices into the study's meshes (finest first) of the meshes this sweep covers.
    pub mesh_indices: Vec<usize>,
    /// One curve per covered mesh, finest first.
    pub curves: Vec<Curve>,
    /// Breakdown definitions.
    pub breakdown: Vec<BreakdownSpec>,
    /// Band definition.
    pub band: Option<BandSpec>,
    /// Units of the columns read, as the CSV files give them (units row or header name; the
    /// first file that gives one), by the study's column name. Values in `%` were read as
    /// fractions and pressures converted to Pa.
    pub units: IndexMap<String, String>,
}

type Ctx<'a> = super::At<'a>;

/// The needed columns of a CSV file, with the line of every row and the field number of every
/// column (0-based, as in the header row).
struct CsvColumns {
    cols: IndexMap<String, Vec<f64>>,
    lines: Vec<usize>,
    fields: Vec<usize>,
    format: crate::tabular::Format,
    /// Rows skipped for cells marked missing: line, and the columns (name, character column).
    missing: Vec<(usize, Vec<(String, usize)>)>,
    /// The unit of each needed column, where the file gives one (units row or header name).
    units: Vec<Option<String>>,
}

/// How the columns of a sweep's files are read.
struct Reading<'a> {
    options: crate::tabular::Options,
    mapping: &'a IndexMap<String, super::raw::RawColumn>,
    /// With `mode`: the ambient pressure added to gauge pressures, Pa.
    ambient: Option<f64>,
    /// The pressure columns (raw monitors, in Pa).
    pressures: &'a [&'a str],
}

impl Reading<'_> {
    fn column(&self, name: &str) -> crate::tabular::ColumnRef {
        self.mapping
            .get(name)
            .and_then(|m| m.column.clone())
            .unwrap_or_else(|| crate::tabular::ColumnRef::Name(name.to_string()))
    }
}

/// Turns a [`super::csv_input::ReadError`] into the study's error for a file named at `key`.
fn read_error(e: super::csv_input::ReadError, path: &Path, key: &str, ctx: &Ctx) -> StudyError {
    let data_err = |line: Option<usize>, message: String| StudyError {
        file: path.to_path_buf(),
        key: String::new(),
        line,
        column: None,
        message: format!("{message} (named by {} at {key})", ctx.file.display()),
    };
    match e {
        super::csv_input::ReadError::Io(e) => ctx.err(
            key.to_string(),
            format!("cannot read the CSV file {}: {e}", path.display()),
        ),
        super::csv_input::ReadError::Refused(m) => data_err(None, m),
        super::csv_input::ReadError::Overrun(o) => data_err(o.line(), o.to_string()),
    }
}

/// Reads the needed numeric columns of a CSV file. Errors name the CSV file, its line and the
/// column; rows with a cell marked missing are skipped and listed.
fn read_csv(
    path: &Path,
    needed: &[String],
    reading: &Reading,
    key: &str,
    ctx: &Ctx,
) -> Result<CsvColumns, StudyError> {
    use crate::tabular::{BadNumber, Table};
    let data_err = |message: String| StudyError {
        file: path.to_path_buf(),
        key: String::new(),
        line: None,
        column: None,
        message: format!("{message} (named by {} at {key})", ctx.file.display()),
    };
    let text = super::csv_input::read_text(path).map_err(|e| read_error(e, path, key, ctx))?;
    let mut table = Table::open(&text, &reading.options)
        .map_err(|_| data_err("holds no header row (only comments or blank lines)".into()))?;
    let header_line = Some(table.header_line);
    let mut idx = Vec::with_capacity(needed.len());
    for n in needed {
        let col = reading.column(n);
        if let crate::tabular::ColumnRef::Name(name) = &col {
            if table.matches(name) > 1 {
                return Err(StudyError {
                    line: header_line,
                    ..data_err(format!(
                        "more than one column answers to `{name}` (the header row names: {}): name the column exactly under `mapping`",
                        super::csv_input::header_names(table.header.iter().map(String::as_str))
                    ))
                });
            }
        }
        match table.find(&col) {
            Some(i) => idx.push(i),
            None => {
                let hint = table.hint().map(|h| format!("; {h}")).unwrap_or_default();
                return Err(StudyError {
                    line: header_line,
                    ..data_err(format!(
                        "has no column {col}{} (the header row names: {}){hint}",
                        if matches!(col, crate::tabular::ColumnRef::Name(ref c) if c == n) {
                            String::new()
                        } else {
                            format!(" (for `{n}`)")
                        },
                        super::csv_input::header_names(table.header.iter().map(String::as_str))
                    ))
                });
            }
        }
    }
    table.units_row_if(|i| idx.contains(&i));
    // The factor and offset of every needed column.
    let mut factor = Vec::with_capacity(needed.len());
    let mut offset = Vec::with_capacity(needed.len());
    for (k, n) in needed.iter().enumerate() {
        let unit = table.unit(idx[k]);
        let pressure = reading.pressures.contains(&n.as_str());
        let f = match reading.mapping.get(n).and_then(|m| m.scale) {
            Some(f) => f,
            None if pressure => match unit {
                None => 1.0,
                Some(u) => crate::tabular::pascal_factor(u).ok_or_else(|| StudyError {
                    line: table.units_row.as_ref().map(|r| r.0).or(header_line),
                    ..data_err(format!(
                        "column `{n}` is in `{}`, which is not a pressure unit read here (Pa, hPa, kPa, MPa, mbar, bar): give `scale` under `mapping.{n}`",
                        super::csv_input::field_text(u)
                    ))
                })?,
            },
            None => unit.and_then(crate::tabular::percent_factor).unwrap_or(1.0),
        };
        factor.push(f);
        offset.push(if pressure {
            reading.ambient.unwrap_or(0.0)
        } else {
            0.0
        });
    }
    let mut cols: Vec<Vec<f64>> = vec![Vec::new(); needed.len()];
    let mut lines = Vec::new();
    let mut missing = Vec::new();
    let mut row = vec![0.0; needed.len()];
    for rec in table.records() {
        let line = Some(rec.line);
        let mut gaps = Vec::new();
        for (k, &i) in idx.iter().enumerate() {
            let field = rec.get(i);
            let at = |m: String| StudyError {
                line,
                column: Some(field.column),
                ..data_err(m)
            };
            match table.number(field) {
                Ok(Some(v)) => {
                    let v = v * factor[k] + offset[k];
                    if !v.is_finite() {
                        return Err(at(format!(
                            "column `{}`: {} scaled by {} is not a finite number",
                            needed[k],
                            super::csv_input::field_text(&field.text()),
                            factor[k]
                        )));
                    }
                    row[k] = v;
                }
                Ok(None) => gaps.push((needed[k].clone(), field.column)),
                Err(BadNumber::NotANumber) => {
                    return Err(at(format!(
                        "column `{}`: `{}` is not a number{}",
                        needed[k],
                        super::csv_input::field_text(&field.text()),
                        match table.format.decimal {
                            crate::tabular::Decimal::Comma => " (the file is read with decimal commas; set `decimal: point` if it uses points)",
                            crate::tabular::Decimal::Point if field.text().contains(',') => " (a decimal comma? set `decimal: comma`)",
                            _ => "",
                        }
                    )))
                }
                Err(BadNumber::NotFinite) => {
                    return Err(at(format!(
                        "column `{}`: {} is not a finite number",
                        needed[k],
                        super::csv_input::field_text(&field.text())
                    )))
                }
            }
        }
        if !gaps.is_empty() {
            missing.push((rec.line, gaps));
            continue;
        }
        if cols[0].len() >= MAX_POINTS {
            return Err(StudyError {
                line,
                ..data_err(format!(
                    "more than {MAX_POINTS} rows; a sweep is refused above that"
                ))
            });
        }
        lines.push(rec.line);
        for (c, v) in cols.iter_mut().zip(&row) {
            c.push(*v);
        }
    }
    Ok(CsvColumns {
        cols: needed.iter().cloned().zip(cols).collect(),
        lines,
        units: idx
            .iter()
            .map(|&i| table.unit(i).map(str::to_string))
            .collect(),
        fields: idx,
        format: table.format,
        missing,
    })
}

/// The 1-based character column at which field `field` (0-based) starts on line `line` of a
/// CSV file, read again only to place an error; `None` when the line cannot be read or has
/// fewer fields.
fn csv_column(
    path: &Path,
    format: crate::tabular::Format,
    line: usize,
    field: usize,
) -> Option<usize> {
    let text = super::csv_input::read_text(path).ok()?;
    let (_, rec) = crate::tabular::Lines::new(&text).find(|(l, _)| *l == line)?;
    crate::tabular::split(rec, format.separator)
        .get(field)
        .map(|f| f.column)
}

/// The rows of one file skipped for missing cells, as a warning's words: `line 7 (`eta`,
/// column 12), …` (at most eight rows named).
fn missing_list(missing: &[(usize, Vec<(String, usize)>)]) -> String {
    let mut parts: Vec<String> = missing
        .iter()
        .take(8)
        .map(|(line, cols)| {
            let c: Vec<String> = cols
                .iter()
                .map(|(n, col)| format!("`{n}` at column {col}"))
                .collect();
            format!("line {line} ({})", c.join(", "))
        })
        .collect();
    if missing.len() > 8 {
        parts.push(format!("and {} more", missing.len() - 8));
    }
    parts.join("; ")
}

/// A sweep's CSV file, its row lines, the field number of each column and the file's format.
type CsvSource = (
    PathBuf,
    Vec<usize>,
    IndexMap<String, usize>,
    crate::tabular::Format,
);

/// Where one point of a mesh's data was given, for messages.
struct Source<'a> {
    /// The mesh.
    mesh: &'a str,
    /// `sweeps.<name>.data.<mesh>`.
    key: String,
    /// The CSV file, its row lines, the field number of each column and the file's format;
    /// `None` for inline data.
    csv: Option<CsvSource>,
}

impl Source<'_> {
    /// `line 12` of a CSV file, `point 3` of inline data (rows counted from 1).
    fn label(&self, row: usize) -> String {
        match &self.csv {
            Some((_, lines, _, _)) => format!("line {}", lines.get(row).copied().unwrap_or(0)),
            None => format!("point {}", row + 1),
        }
    }

    /// An error at one row (0-based, as recorded) of column `column` (`None`: a derived
    /// column, placed at the row only).
    fn err(&self, ctx: &Ctx, row: usize, column: Option<&str>, message: String) -> StudyError {
        match &self.csv {
            Some((path, lines, fields, format)) => {
                let line = lines.get(row).copied();
                let col = match (line, column.and_then(|c| fields.get(c))) {
                    (Some(l), Some(&f)) => csv_column(path, *format, l, f),
                    _ => None,
                };
                StudyError {
                    file: path.clone(),
                    key: String::new(),
                    line,
                    column: col,
                    message: format!(
                        "mesh `{}`: {message} (named by {} at {}.file)",
                        self.mesh,
                        ctx.file.display(),
                        self.key
                    ),
                }
            }
            None => {
                let key = match column {
                    Some(c) => format!("{}.{c}[{row}]", self.key),
                    None => self.key.clone(),
                };
                ctx.err(key, format!("mesh `{}`: {message}", self.mesh))
            }
        }
    }
}

/// Checks that `v` (one mesh's abscissa, as recorded) runs one way, strictly increasing or
/// strictly decreasing. Returns the 0-based index of the turning point and the rows after it
/// that run back, when it does not.
pub fn fold(v: &[f64]) -> Option<(usize, Vec<usize>)> {
    let step = |i: usize| v[i + 1].total_cmp(&v[i]);
    if v.len() < 3 {
        return None;
    }
    let dir = step(0);
    let turn = (1..v.len() - 1).find(|&i| step(i) != dir)?;
    let back = step(turn);
    let mut rows = vec![turn + 1];
    let mut i = turn + 1;
    while i + 1 < v.len() && step(i) == back {
        rows.push(i + 1);
        i += 1;
    }
    Some((turn, rows))
}

/// `lines 20–22`, `point 5` or `points 3, 7–9` (at most eight runs named): `rows` are 0-based
/// row indices, ascending.
fn row_list(src: &Source, rows: &[usize]) -> String {
    let number = |r: usize| match &src.csv {
        Some((_, lines, _, _)) => lines.get(r).copied().unwrap_or(0),
        None => r + 1,
    };
    let mut runs: Vec<(usize, usize)> = Vec::new();
    for &r in rows {
        match runs.last_mut() {
            Some((_, last)) if *last + 1 == r => *last = r,
            _ => runs.push((r, r)),
        }
    }
    let kind = match (&src.csv, rows.len()) {
        (Some(_), 1) => "line",
        (Some(_), _) => "lines",
        (None, 1) => "point",
        (None, _) => "points",
    };
    let mut parts: Vec<String> = runs
        .iter()
        .take(8)
        .map(|&(a, b)| {
            if a == b {
                number(a).to_string()
            } else {
                format!("{}–{}", number(a), number(b))
            }
        })
        .collect();
    if runs.len() > 8 {
        parts.push(format!("{} more", runs.len() - 8));
    }
    format!("{kind} {}", parts.join(", "))
}

/// Refuses an abscissa that is not monotone along the sweep as recorded.
fn refuse_fold(
    src: &Source,
    ctx: &Ctx,
    name: &str,
    column: Option<&str>,
    v: &[f64],
) -> Result<(), StudyError> {
    let Some((turn, rows)) = fold(v) else {
        return Ok(());
    };
    let first = rows.first().copied().unwrap_or(turn);
    let (went, back) = if v[1] > v[0] {
        ("rises", "falls")
    } else {
        ("falls", "rises")
    };
    Err(src.err(
        ctx,
        first,
        column,
        format!(
            "`{name}` is not monotone along the sweep as recorded: it {went} from {} ({}) to {} ({}) and {back} again at {} ({}); a sweep that folds back (σ turning at deep breakdown) cannot be read as one curve of `{name}` and is not re-sorted: end the sweep at the turn, or sweep against an abscissa that keeps running one way (`x: npsh`, recorded or derived from raw monitors)",
            crate::sweep::fmt_num(v[0]),
            src.label(0),
            crate::sweep::fmt_num(v[turn]),
            src.label(turn),
            row_list(src, &rows),
            {
                let mut shown: Vec<String> = rows
                    .iter()
                    .take(4)
                    .map(|&r| crate::sweep::fmt_num(v[r]))
                    .collect();
                if rows.len() > 4 {
                    shown.push(format!("… {}", crate::sweep::fmt_num(v[rows[rows.len() - 1]])));
                }
                shown.join(", ")
            },
        ),
    ))
}

/// Checks every sweep. `mesh_names` are the study's meshes, finest first.
pub fn check(
    raw: &IndexMap<String, RawSweep>,
    mesh_names: &[String],
    gravity: f64,
    ctx: &Ctx,
    reach: &super::reach::Reach,
    files_read: &mut Vec<PathBuf>,
    warnings: &mut Vec<crate::warning::Warning>,
) -> Result<Vec<Sweep>, StudyError> {
    let base = ctx.file.parent().unwrap_or(Path::new(""));
    let mut out = Vec::new();
    for (name, s) in raw {
        let at = |k: &str| format!("sweeps.{name}.{k}");
        if s.responses.is_empty() {
            return Err(ctx.err(
                at("responses"),
                "lists no response: name at least one column".into(),
            ));
        }
        for (i, r) in s.responses.iter().enumerate() {
            if r == &s.x {
                return Err(ctx.err(
                    format!("sweeps.{name}.responses[{i}]"),
                    format!("`{r}` is the abscissa `x`, not a response"),
                ));
            }
            if s.responses[..i].contains(r) {
                return Err(ctx.err(
                    format!("sweeps.{name}.responses[{i}]"),
                    format!("`{r}` is listed twice"),
                ));
            }
        }
        // Which columns each mesh must give.
        let mut wanted: Vec<String> = Vec::new();
        if s.mode.is_some() {
            wanted.extend(RAW_COLUMNS.iter().map(|c| c.to_string()));
        }
        for c in std::iter::once(&s.x).chain(&s.responses) {
            let derived = s.mode.is_some() && DERIVED_COLUMNS.contains(&c.as_str());
            if !derived && !wanted.contains(c) {
                wanted.push(c.clone());
            }
        }
        for m in s.mapping.keys() {
            if !wanted.contains(m) {
                return Err(ctx.err(
                    at(&format!("mapping.{m}")),
                    format!(
                        "`{m}` is not a column this sweep reads (it reads: {})",
                        wanted.join(", ")
                    ),
                ));
            }
        }
        if s.ambient_pressure.is_some() && s.mode.is_none() {
            return Err(ctx.err(
                at("ambient_pressure"),
                "applies to the raw pressure columns of a sweep with `mode`; this sweep has none"
                    .into(),
            ));
        }
        let pressures = ["inlet_total_pressure", "outlet_total_pressure"];
        let reading = Reading {
            options: crate::tabular::Options {
                separator: s.separator,
                decimal: s.decimal,
            },
            mapping: &s.mapping,
            ambient: s.ambient_pressure.map(|p| p.0),
            pressures: if s.mode.is_some() { &pressures } else { &[] },
        };
        for m in s.data.keys() {
            if !mesh_names.contains(m) {
                return Err(ctx.err(
                    at(&format!("data.{m}")),
                    format!(
                        "names the mesh `{m}`, which is not in `meshes` (known: {})",
                        mesh_names.join(", ")
                    ),
                ));
            }
        }
        // Where the NPSH comes from when a breakdown is read against it.
        let npsh_from_sigma_head = match s
            .breakdown
            .iter()
            .position(|b| b.abscissa == Some(Abscissa::Npsh))
        {
            None => None,
            Some(_)
                if s.mode.is_some() || s.x == "npsh" || s.responses.iter().any(|r| r == "npsh") =>
            {
                Some(false)
            }
            Some(_) if s.x == "sigma" && s.responses.iter().any(|r| r == "head") => Some(true),
            Some(i) => {
                return Err(ctx.err(
                    format!("sweeps.{name}.breakdown[{i}].abscissa"),
                    "`npsh` needs the NPSH of every point: give raw monitors (`mode`), list `npsh` among the responses, or sweep `x: sigma` with `head` among the responses (NPSH = σ·H)".into(),
                ))
            }
        };
        let derived_name = |c: &str| s.mode.is_some() && DERIVED_COLUMNS.contains(&c);
        let mut mesh_indices = Vec::new();
        let mut curves = Vec::new();
        let mut recorded: Vec<(Source, Vec<Vec<f64>>)> = Vec::new();
        let mut units: IndexMap<String, String> = IndexMap::new();
        for (mi, mname) in mesh_names.iter().enumerate() {
            let Some(d) = s.data.get(mname) else { continue };
            let key = at(&format!("data.{mname}"));
            let mut src = Source {
                mesh: mname,
                key: key.clone(),
                csv: None,
            };
            let mut noise: Vec<Vec<Option<f64>>> = Vec::new();
            let cols = if let Some(f) = &d.file {
                let p = base.join(f);
                reach
                    .read(f, &p)
                    .map_err(|m| ctx.err(format!("{key}.file"), m))?;
                let c = read_csv(&p, &wanted, &reading, &format!("{key}.file"), ctx)?;
                if !c.missing.is_empty() {
                    warnings.push(
                        crate::warning::Warning::new(
                            "missing_points_skipped",
                            format!(
                                "mesh `{mname}`, {}: {} point{} with a cell marked missing (empty, `-`, `nan`, `n/a`) skipped: {}",
                                p.display(),
                                c.missing.len(),
                                if c.missing.len() == 1 { "" } else { "s" },
                                missing_list(&c.missing)
                            ),
                        )
                        .about(name),
                    );
                }
                files_read.push(p.clone());
                for (w, u) in wanted.iter().zip(&c.units) {
                    if let (Some(u), false) = (u, units.contains_key(w)) {
                        units.insert(w.clone(), u.clone());
                    }
                }
                let fields = wanted.iter().cloned().zip(c.fields).collect();
                src.csv = Some((p, c.lines, fields, c.format));
                c.cols
            } else if d.history.is_some() || !d.histories.is_empty() {
                let (files, hkey): (Vec<&String>, String) = match &d.history {
                    Some(h) => (vec![h], format!("{key}.history")),
                    None => (d.histories.iter().collect(), format!("{key}.histories")),
                };
                let hr = s.history_reading.as_ref().ok_or_else(|| {
                    ctx.err(
                        hkey.clone(),
                        format!("a sweep read from histories needs `sweeps.{name}.history_reading` with the iteration or time column (`abscissa`)"),
                    )
                })?;
                if s.mode.is_some() {
                    return Err(ctx.err(
                        hkey.clone(),
                        "raw monitors (`mode`) are read from CSV files or inline columns, not from histories".into(),
                    ));
                }
                let settings = crate::history::HistorySettings {
                    reduction: match hr.reduce {
                        None | Some(super::raw::RawReduction::Mean) => {
                            crate::history::Reduction::Mean
                        }
                        Some(super::raw::RawReduction::Last) => crate::history::Reduction::Last,
                        Some(super::raw::RawReduction::Min) => crate::history::Reduction::Min,
                        Some(super::raw::RawReduction::Max) => crate::history::Reduction::Max,
                    },
                    batches: hr.batches.unwrap_or(crate::history::DEFAULT_BATCHES),
                    final_share: hr.final_share.unwrap_or(0.1),
                    ..crate::history::HistorySettings::default()
                };
                let name_of = |w: &str| match reading.column(w) {
                    crate::tabular::ColumnRef::Name(n) => crate::history::read::ColumnRef::Name(n),
                    crate::tabular::ColumnRef::Index(i) => {
                        crate::history::read::ColumnRef::Position(i)
                    }
                };
                let responses: Vec<crate::history::read::ColumnRef> =
                    s.responses.iter().map(|r| name_of(r)).collect();
                let mut xs = Vec::new();
                let mut ys: Vec<Vec<f64>> = vec![Vec::new(); s.responses.len()];
                noise = vec![Vec::new(); s.responses.len()];
                for (k, hf) in files.iter().enumerate() {
                    let fkey = if d.history.is_some() {
                        hkey.clone()
                    } else {
                        format!("{hkey}[{k}]")
                    };
                    let p = base.join(hf);
                    reach.read(hf, &p).map_err(|m| ctx.err(fkey.clone(), m))?;
                    let sh = super::sweep_history::read(
                        &p,
                        &name_of(&s.x),
                        &hr.abscissa.to_ref(),
                        &responses,
                        &settings,
                    )
                    .map_err(|e| super::history_input::error_of(e, &fkey, ctx))?;
                    for w in &sh.warnings {
                        warnings.push(
                            crate::warning::Warning::new(
                                &w.code,
                                format!("mesh `{mname}`: {}", w.message),
                            )
                            .about(name),
                        );
                    }
                    files_read.push(p.clone());
                    xs.extend(sh.x.iter().copied());
                    for (r, v) in sh.responses.iter().enumerate() {
                        ys[r].extend(v.iter().copied());
                        noise[r].extend(sh.noise[r].iter().copied());
                    }
                }
                let mut c = IndexMap::new();
                c.insert(s.x.clone(), xs);
                for (r, v) in s.responses.iter().zip(ys) {
                    c.insert(r.clone(), v);
                }
                c
            } else {
                let mut c = IndexMap::new();
                for w in &wanted {
                    let from = match reading.column(w) {
                        crate::tabular::ColumnRef::Name(n) => n,
                        crate::tabular::ColumnRef::Index(_) => {
                            return Err(ctx.err(
                                at(&format!("mapping.{w}")),
                                "a column position applies to CSV files; inline data name their columns".into(),
                            ))
                        }
                    };
                    match d.columns.get(&from) {
                        Some(v) => {
                            let f = reading.mapping.get(w).and_then(|m| m.scale).unwrap_or(1.0);
                            let o = if reading.pressures.contains(&w.as_str()) {
                                reading.ambient.unwrap_or(0.0)
                            } else {
                                0.0
                            };
                            c.insert(w.clone(), v.iter().map(|x| x * f + o).collect());
                        }
                        None => {
                            return Err(ctx.err(key.clone(), format!(
                                "has no column `{from}`{}",
                                if s.mode.is_some() && RAW_COLUMNS.contains(&w.as_str()) { " (a sweep with `mode` gives the raw columns inlet_total_pressure, outlet_total_pressure, flow, torque, speed, temperature)" } else { "" }
                            )))
                        }
                    }
                }
                if s.mode.is_some() {
                    for dc in DERIVED_COLUMNS {
                        if d.columns.contains_key(dc) {
                            return Err(ctx.err(format!("{key}.{dc}"), format!("`{dc}` is derived from the raw columns when `mode` is given: remove it or remove `mode`")));
                        }
                    }
                }
                c
            };
            let n = cols.values().next().map_or(0, Vec::len);
            for (cname, v) in &cols {
                if v.len() != n {
                    return Err(ctx.err(key.clone(), format!("column `{cname}` has {} points but `{}` has {n}: every column needs one value per point", v.len(), cols.keys().next().map_or("", |s| s.as_str()))));
                }
            }
            if n < MIN_POINTS {
                return Err(ctx.err(
                    key.clone(),
                    format!("has {n} points; at least {MIN_POINTS} are needed per mesh"),
                ));
            }
            // Derive machine quantities from raw monitors.
            let derived = match s.mode {
                Some(mode) => {
                    let mut dv = Vec::with_capacity(n);
                    for i in 0..n {
                        let p = RawPoint {
                            inlet_total_pressure: cols["inlet_total_pressure"][i],
                            outlet_total_pressure: cols["outlet_total_pressure"][i],
                            flow: cols["flow"][i],
                            torque: cols["torque"][i],
                            speed: cols["speed"][i],
                            temperature: cols["temperature"][i],
                        };
                        dv.push(machine::derive_point(&p, mode, gravity).map_err(|e| {
                            ctx.err(
                                key.clone(),
                                format!("point {} (counting from 1): {e}", i + 1),
                            )
                        })?);
                    }
                    Some(dv)
                }
                None => None,
            };
            let column = |c: &str| -> Vec<f64> {
                match (&derived, c) {
                    (Some(d), "head") => d.iter().map(|p| p.head).collect(),
                    (Some(d), "efficiency") => d.iter().map(|p| p.efficiency).collect(),
                    (Some(d), "npsh") => d.iter().map(|p| p.npsh).collect(),
                    (Some(d), "sigma") => d.iter().map(|p| p.sigma).collect(),
                    _ => cols.get(c).cloned().unwrap_or_default(),
                }
            };
            let x = column(&s.x);
            let ys: Vec<Vec<f64>> = s.responses.iter().map(|r| column(r)).collect();
            // Sort by x, refuse duplicates.
            let mut order: Vec<usize> = (0..n).collect();
            order.sort_by(|&a, &b| x[a].total_cmp(&x[b]));
            for w in order.windows(2) {
                if x[w[0]].total_cmp(&x[w[1]]).is_eq() {
                    return Err(ctx.err(key.clone(), format!(
                        "`{}` = {} appears twice (points {} and {}, counting from 1): the abscissa must be strictly monotone",
                        s.x, x[w[0]], w[0].min(w[1]) + 1, w[0].max(w[1]) + 1
                    )));
                }
            }
            // The abscissa must run one way as recorded (reversed is fine): a fold is refused,
            // never re-sorted.
            let x_column = (!derived_name(&s.x)).then_some(s.x.as_str());
            refuse_fold(&src, ctx, &s.x, x_column, &x)?;
            let npsh = match npsh_from_sigma_head {
                None => None,
                Some(product) => {
                    let v: Vec<f64> = if product {
                        let h = column("head");
                        x.iter().zip(&h).map(|(sigma, h)| sigma * h).collect()
                    } else {
                        column("npsh")
                    };
                    if let Some(bad) = v.iter().position(|n| !n.is_finite()) {
                        return Err(src.err(
                            ctx,
                            bad,
                            None,
                            "the NPSH σ·H of this point is not a finite number".into(),
                        ));
                    }
                    let col = (!product && !derived_name("npsh")).then_some("npsh");
                    refuse_fold(&src, ctx, "npsh", col, &v)?;
                    Some(v)
                }
            };
            curves.push(Curve {
                mesh: mname.clone(),
                x: order.iter().map(|&i| x[i]).collect(),
                responses: ys
                    .iter()
                    .map(|y| order.iter().map(|&i| y[i]).collect())
                    .collect(),
                derived: derived.map(|d| order.iter().map(|&i| d[i]).collect()),
                npsh: npsh.map(|v| order.iter().map(|&i| v[i]).collect()),
                labels: order.iter().map(|&i| src.label(i)).collect(),
                noise: noise
                    .iter()
                    .map(|v| order.iter().map(|&i| v.get(i).copied().flatten()).collect())
                    .collect(),
            });
            recorded.push((src, ys));
            mesh_indices.push(mi);
        }
        // A response whose values mix percent and fractions is refused at the first odd value
        // (derived responses are computed, never typed).
        for (ri, r) in s.responses.iter().enumerate() {
            if derived_name(r) {
                continue;
            }
            let mut values = Vec::new();
            let mut at_row = Vec::new();
            let mut labels = Vec::new();
            for (k, (src, ys)) in recorded.iter().enumerate() {
                for (row, v) in ys[ri].iter().enumerate() {
                    values.push(*v);
                    at_row.push((k, row));
                    labels.push(format!("{} {}", src.mesh, src.label(row)));
                }
            }
            if let Some(mix) = super::scale::mixed_scale(&values, r, None) {
                let first = mix.odd().first().copied().unwrap_or(0);
                let (k, row) = at_row[first];
                let message = format!(
                    "response `{r}`: {}",
                    super::scale::describe(&mix, &values, &labels)
                );
                return Err(recorded[k].0.err(ctx, row, Some(r), message));
            }
        }
        if curves.len() < 3 {
            return Err(ctx.err(
                at("data"),
                format!(
                    "gives data for {} mesh{}; at least three are needed for an observed order",
                    curves.len(),
                    if curves.len() == 1 { "" } else { "es" }
                ),
            ));
        }
        let lo = curves
            .iter()
            .map(|c| c.x[0])
            .fold(f64::NEG_INFINITY, f64::max);
        let hi = curves
            .iter()
            .map(|c| c.x[c.x.len() - 1])
            .fold(f64::INFINITY, f64::min);
        if lo >= hi {
            return Err(ctx.err(at("data"), format!(
                "the meshes' `{}` ranges do not overlap (the common range would be {lo} to {hi}): sweep every mesh over a common range",
                s.x
            )));
        }
        let response_index = |r: &str, k: String| {
            s.responses.iter().position(|x| x == r).ok_or_else(|| {
                ctx.err(
                    k,
                    format!(
                        "`{r}` is not one of the sweep's responses ({})",
                        s.responses.join(", ")
                    ),
                )
            })
        };
        let mut breakdown = Vec::new();
        for (i, b) in s.breakdown.iter().enumerate() {
            let k = format!("sweeps.{name}.breakdown[{i}]");
            let ri = response_index(&b.response, format!("{k}.response"))?;
            let basis = b.drop_basis.unwrap_or_default();
            if basis == DropBasis::Relative && b.drop.0 >= 1.0 {
                return Err(ctx.err(
                    format!("{k}.drop"),
                    format!(
                        "a relative drop must be below 1 (100 %), found {}",
                        b.drop.0
                    ),
                ));
            }
            if b.drop.0 <= 0.0 {
                return Err(ctx.err(format!("{k}.drop"), "the drop must be > 0".into()));
            }
            let reference = b.reference.unwrap_or(if b.plateau_from.is_some() {
                ReferenceChoice::Plateau
            } else {
                ReferenceChoice::Highest
            });
            if reference == ReferenceChoice::Plateau && b.plateau_from.is_none() {
                return Err(ctx.err(
                    format!("{k}.plateau_from"),
                    "`reference: plateau` needs `plateau_from`, the lowest x of the plateau".into(),
                ));
            }
            let points = b.confirm_points.unwrap_or(2);
            if points == 0 {
                return Err(ctx.err(
                    format!("{k}.confirm_points"),
                    "expected a count of 1 or more (1 takes the first point below the threshold)"
                        .into(),
                ));
            }
            let span = b.confirm_span.map_or(0.0, |v| v.0);
            if span < 0.0 {
                return Err(ctx.err(
                    format!("{k}.confirm_span"),
                    format!("expected a span of 0 or more in the abscissa's unit, found {span}"),
                ));
            }
            breakdown.push(BreakdownSpec {
                persistence: Persistence {
                    points: points as usize,
                    span,
                },
                abscissa: b.abscissa.unwrap_or_default(),
                response: b.response.clone(),
                response_index: ri,
                drop: match basis {
                    DropBasis::Relative => DropRule::Relative(b.drop.0),
                    DropBasis::Absolute => DropRule::Absolute(b.drop.0),
                },
                reference: match reference {
                    ReferenceChoice::Plateau => ReferenceKind::Plateau {
                        from: b.plateau_from.map_or(f64::NAN, |v| v.0),
                    },
                    ReferenceChoice::Highest => ReferenceKind::Highest,
                    ReferenceChoice::Value(v) => ReferenceKind::Value(v),
                },
            });
        }
        let interpolation = s.interpolation.unwrap_or_default();
        let band = match &s.band {
            Some(b) => Some(BandSpec {
                response: b.response.clone(),
                response_index: response_index(
                    &b.response,
                    format!("sweeps.{name}.band.response"),
                )?,
                at: b.at.clone().unwrap_or(BandAt::Fine),
                interpolation: b.interpolation.unwrap_or(interpolation),
            }),
            None => None,
        };
        out.push(Sweep {
            name: name.clone(),
            x: s.x.clone(),
            responses: s.responses.clone(),
            interpolation,
            mode: s.mode,
            mesh_indices,
            curves,
            breakdown,
            band,
            units,
        });
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::fold;

    // Source: the definition of a monotone sequence (analytic): strictly falling or rising runs
    // pass, a reversed order passes, a turn is found with the rows that run back.
    #[test]
    fn folds_are_found_with_their_rows() {
        assert_eq!(fold(&[0.4, 0.3, 0.2, 0.15, 0.124]), None);
        assert_eq!(fold(&[0.124, 0.15, 0.2, 0.3, 0.4]), None);
        assert_eq!(fold(&[0.4, 0.3]), None);
        // σ falls to 0.124 (index 4) and rises again at indices 5 and 6.
        assert_eq!(
            fold(&[0.4, 0.3, 0.2, 0.15, 0.124, 0.126, 0.129]),
            Some((4, vec![5, 6]))
        );
        // A turn followed by a second turn: only the run back is named.
        assert_eq!(fold(&[0.4, 0.3, 0.35, 0.1]), Some((1, vec![2])));
        // A shuffled order is a fold too (the order as recorded must run one way).
        assert_eq!(fold(&[0.2, 0.5, 0.1, 0.3]), Some((1, vec![2])));
    }
}
