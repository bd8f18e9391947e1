//! Measurements to compare with (`reference_data`), named like the sweep or the quantity they
//! compare with.

use super::num::Finite;
use super::StudyError;
use indexmap::IndexMap;
use serde::de::{self, Deserializer};
use serde::Deserialize;
use std::path::{Path, PathBuf};

/// An uncertainty written absolute (`0.002`) or relative to the value (`0.3%`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AbsOrPercent {
    /// In the unit of the value.
    Absolute(f64),
    /// A fraction of |value|.
    Relative(f64),
}

impl AbsOrPercent {
    /// The absolute uncertainty for a value.
    pub fn of(self, value: f64) -> f64 {
        match self {
            AbsOrPercent::Absolute(u) => u,
            AbsOrPercent::Relative(f) => f * value.abs(),
        }
    }
}

impl<'de> Deserialize<'de> for AbsOrPercent {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl de::Visitor<'_> for V {
            type Value = AbsOrPercent;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("an absolute uncertainty ≥ 0 or a percentage such as `0.5%`")
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<AbsOrPercent, E> {
                if v.is_finite() && v >= 0.0 {
                    Ok(AbsOrPercent::Absolute(v))
                } else {
                    Err(E::custom(format!(
                        "expected an uncertainty ≥ 0, found {}",
                        super::num::show(v)
                    )))
                }
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<AbsOrPercent, E> {
                self.visit_f64(v as f64)
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<AbsOrPercent, E> {
                self.visit_f64(v as f64)
            }
            fn visit_str<E: de::Error>(self, s: &str) -> Result<AbsOrPercent, E> {
                match s.trim().strip_suffix('%').map(|n| n.trim().parse::<f64>()) {
                    Some(Ok(p)) if p.is_finite() && p >= 0.0 => {
                        Ok(AbsOrPercent::Relative(p / 100.0))
                    }
                    _ => Err(E::custom(format!(
                        "expected a number or a percentage such as `0.5%`, found `{s}`"
                    ))),
                }
            }
        }
        d.deserialize_any(V)
    }
}

impl schemars::JsonSchema for AbsOrPercent {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "AbsoluteOrPercent".into()
    }
    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({"anyOf": [{"type": "number", "minimum": 0}, {"type": "string", "pattern": "%\\s*$"}]})
    }
}

/// One measured point as written.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawMeasuredPoint {
    /// Abscissa.
    pub x: Finite,
    /// Measured value D.
    pub value: Finite,
    /// Standard uncertainty u_D of this point (overrides `u_measured`).
    #[serde(default)]
    pub u: Option<AbsOrPercent>,
}

/// Measurements as written.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawReference {
    /// The sweep response compared (a sweep target; default the band's or the first response).
    #[serde(default)]
    pub response: Option<String>,
    /// Standard uncertainty u_D of every point, absolute or `%` of the value.
    #[serde(default)]
    pub u_measured: Option<AbsOrPercent>,
    /// Standard uncertainty from the simulation's inputs, absolute or `%` of the value.
    #[serde(default)]
    pub u_input: Option<AbsOrPercent>,
    /// Divide each data set by its own peak before comparing (common practice, no source).
    #[serde(default)]
    pub normalise: bool,
    /// Measured points of a sweep.
    #[serde(default)]
    pub points: Vec<RawMeasuredPoint>,
    /// Or a CSV file with columns `x`, `value` and optionally `u` (relative to the study).
    #[serde(default)]
    pub file: Option<String>,
    /// The measured value of a scalar quantity.
    #[serde(default)]
    pub value: Option<Finite>,
    /// The separator of `file` (default: detected).
    #[serde(default)]
    pub separator: Option<crate::tabular::Separator>,
    /// The decimal mark of `file` (default: detected).
    #[serde(default)]
    pub decimal: Option<crate::tabular::Decimal>,
    /// Where `x`, `value` and `u` are read from in `file`, and their scales.
    #[serde(default)]
    pub mapping: IndexMap<String, super::raw::RawColumn>,
    /// Where the reference data come from: `measurement` (default) or `benchmark` (a
    /// published reference solution); outputs word the comparison after it.
    #[serde(default)]
    pub origin: Origin,
}

/// Where reference data come from.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, serde::Serialize, schemars::JsonSchema,
)]
#[serde(rename_all = "snake_case")]
pub enum Origin {
    /// Measurements (a test rig, a model test).
    #[default]
    Measurement,
    /// A published reference solution (a benchmark), not a measurement.
    Benchmark,
}

impl Origin {
    /// The heading of a comparison with such data.
    pub fn heading(self) -> &'static str {
        match self {
            Origin::Measurement => "Comparison with measurements",
            Origin::Benchmark => "Comparison with a published benchmark solution",
        }
    }
}

/// What a reference compares with.
#[derive(Debug, Clone, PartialEq)]
pub enum ReferenceTarget {
    /// A scalar quantity (index into the study's quantities).
    Quantity(usize),
    /// A sweep response (sweep index, response index).
    Sweep(usize, usize),
}

/// Checked measurements.
#[derive(Debug, Clone, PartialEq)]
pub struct Reference {
    /// Name (the key; the sweep or quantity compared with).
    pub name: String,
    /// What it compares with.
    pub target: ReferenceTarget,
    /// Points (x, D, u_D absolute); x = 0 for a quantity.
    pub points: Vec<(f64, f64, f64)>,
    /// Input uncertainty (absolute or relative to the simulated value).
    pub u_input: Option<AbsOrPercent>,
    /// Normalise by own peaks.
    pub normalise: bool,
    /// Measurements or a published benchmark solution.
    pub origin: Origin,
}

/// Measured points read from a file: (x, D, u), u absolute or relative, `None` where the file
/// gives none; and the rows skipped for missing cells (line, columns).
type FilePoints = (
    Vec<(f64, f64, Option<AbsOrPercent>)>,
    Vec<(usize, Vec<String>)>,
);

fn read_points_csv(
    path: &Path,
    key: &str,
    study: &Path,
    r: &RawReference,
) -> Result<FilePoints, StudyError> {
    use crate::tabular::{BadNumber, ColumnRef, Table};
    let e = |line: Option<usize>, m: String| StudyError {
        file: path.to_path_buf(),
        key: String::new(),
        line,
        column: None,
        message: format!("{m} (named by {} at {key})", study.display()),
    };
    let text = super::csv_input::read_text(path).map_err(|er| match er {
        super::csv_input::ReadError::Io(er) => e(None, format!("cannot read the CSV file: {er}")),
        super::csv_input::ReadError::Refused(m) => e(None, m),
        super::csv_input::ReadError::Overrun(o) => e(o.line(), o.to_string()),
    })?;
    let options = crate::tabular::Options {
        separator: r.separator,
        decimal: r.decimal,
    };
    let mut table = Table::open(&text, &options).map_err(|_| {
        e(
            None,
            "holds no header row (only comments or blank lines)".into(),
        )
    })?;
    let hl = Some(table.header_line);
    let source = |n: &str| {
        r.mapping
            .get(n)
            .and_then(|m| m.column.clone())
            .unwrap_or_else(|| ColumnRef::Name(n.to_string()))
    };
    let find = |n: &str| -> Result<Option<usize>, StudyError> {
        let col = source(n);
        if let ColumnRef::Name(name) = &col {
            if table.matches(name) > 1 {
                return Err(e(
                    hl,
                    format!("more than one column answers to `{name}`: name the column exactly under `mapping`"),
                ));
            }
        }
        Ok(table.find(&col))
    };
    let (xi, vi) = match (find("x")?, find("value")?) {
        (Some(a), Some(b)) => (a, b),
        _ => {
            let hint = table.hint().map(|h| format!("; {h}")).unwrap_or_default();
            return Err(e(
                hl,
                format!(
                    "needs the columns {} and {} (and optionally {}); the header row names: {}{hint}",
                    source("x"),
                    source("value"),
                    source("u"),
                    super::csv_input::header_names(table.header.iter().map(String::as_str))
                ),
            ));
        }
    };
    let ui = find("u")?;
    if ui.is_none() && r.mapping.get("u").is_some_and(|m| m.column.is_some()) {
        return Err(e(hl, format!("has no column {} (for `u`)", source("u"))));
    }
    table.units_row_if(|i| i == xi || i == vi || Some(i) == ui);
    let factor = |n: &str, i: usize| {
        r.mapping
            .get(n)
            .and_then(|m| m.scale)
            .or_else(|| table.unit(i).and_then(crate::tabular::percent_factor))
            .unwrap_or(1.0)
    };
    let (fx, fv) = (factor("x", xi), factor("value", vi));
    // A `u` column in `%` is relative to the value, as `u: 0.3%` is.
    let u_relative = ui.is_some_and(|i| {
        r.mapping.get("u").and_then(|m| m.scale).is_none()
            && table
                .unit(i)
                .and_then(crate::tabular::percent_factor)
                .is_some()
    });
    let fu = ui.map_or(1.0, |i| factor("u", i));
    let mut out = Vec::new();
    let mut missing = Vec::new();
    for rec in table.records() {
        let line = Some(rec.line);
        let mut gaps = Vec::new();
        let mut num = |i: usize, name: &str, f: f64| -> Result<Option<f64>, StudyError> {
            let field = rec.get(i);
            let bad = |what: &str| StudyError {
                column: Some(field.column),
                ..e(
                    line,
                    format!(
                        "column `{name}`: `{}` is not {what}",
                        super::csv_input::field_text(&field.text())
                    ),
                )
            };
            match table.number(field) {
                Ok(Some(v)) if (v * f).is_finite() => Ok(Some(v * f)),
                Ok(Some(_)) | Err(BadNumber::NotFinite) => Err(bad("a finite number")),
                Err(BadNumber::NotANumber) => Err(bad("a finite number")),
                Ok(None) => {
                    gaps.push(format!("`{name}` at column {}", field.column));
                    Ok(None)
                }
            }
        };
        let x = num(xi, "x", fx)?;
        let v = num(vi, "value", fv)?;
        // An empty `u` cell: the point has no own u (`u_measured` applies).
        let u = match ui {
            Some(i) if !crate::tabular::is_missing(&rec.get(i).text()) => num(i, "u", fu)?,
            _ => None,
        };
        if let Some(bad) = u.filter(|u| *u < 0.0) {
            return Err(e(
                line,
                format!("column `u`: {bad} is negative; an uncertainty is ≥ 0"),
            ));
        }
        match (x, v) {
            (Some(x), Some(v)) => out.push((
                x,
                v,
                u.map(|u| {
                    if u_relative {
                        AbsOrPercent::Relative(u)
                    } else {
                        AbsOrPercent::Absolute(u)
                    }
                }),
            )),
            _ => missing.push((rec.line, gaps)),
        }
        if out.len() > 1_000_000 {
            return Err(e(
                line,
                "more than 1000000 measured points are refused".into(),
            ));
        }
    }
    Ok((out, missing))
}

/// Checks the measurements against the study's quantities and sweeps.
pub fn check(
    raw: &IndexMap<String, RawReference>,
    quantities: &[super::Quantity],
    sweeps: &[super::sweep::Sweep],
    at: &super::At,
    reach: &super::reach::Reach,
    files_read: &mut Vec<PathBuf>,
    warnings: &mut Vec<crate::warning::Warning>,
) -> Result<Vec<Reference>, StudyError> {
    let file = at.file;
    let err = |key: String, message: String| at.err(key, message);
    let base = file.parent().unwrap_or(Path::new(""));
    let mut out = Vec::new();
    for (name, r) in raw {
        let key = format!("reference_data.{name}");
        let target = if let Some(qi) = quantities.iter().position(|q| &q.name == name) {
            ReferenceTarget::Quantity(qi)
        } else if let Some(si) = sweeps.iter().position(|s| &s.name == name) {
            let s = &sweeps[si];
            let resp = r
                .response
                .clone()
                .or_else(|| s.band.as_ref().map(|b| b.response.clone()))
                .unwrap_or_else(|| s.responses[0].clone());
            let ri = s.responses.iter().position(|x| *x == resp).ok_or_else(|| {
                err(
                    format!("{key}.response"),
                    format!(
                        "`{resp}` is not one of the sweep's responses ({})",
                        s.responses.join(", ")
                    ),
                )
            })?;
            ReferenceTarget::Sweep(si, ri)
        } else {
            return Err(err(
                key,
                format!("`{name}` names neither a quantity nor a sweep of the study"),
            ));
        };
        for m in r.mapping.keys() {
            if !["x", "value", "u"].contains(&m.as_str()) {
                return Err(err(
                    format!("{key}.mapping.{m}"),
                    format!("`{m}` is not a column of measured points (`x`, `value`, `u`)"),
                ));
            }
        }
        if r.file.is_none()
            && (!r.mapping.is_empty() || r.separator.is_some() || r.decimal.is_some())
        {
            return Err(err(
                key.clone(),
                "`mapping`, `separator` and `decimal` apply to a `file`, and none is given".into(),
            ));
        }
        let mut pts: Vec<(f64, f64, Option<AbsOrPercent>)> = Vec::new();
        match &target {
            ReferenceTarget::Quantity(_) => {
                let v = r.value.ok_or_else(|| {
                    err(
                        format!("{key}.value"),
                        "a quantity's measurement needs `value`".into(),
                    )
                })?;
                if !r.points.is_empty() || r.file.is_some() {
                    return Err(err(
                        key.clone(),
                        "a quantity takes one `value`, not `points` or `file`".into(),
                    ));
                }
                pts.push((0.0, v.0, None));
            }
            ReferenceTarget::Sweep(..) => {
                if r.value.is_some() {
                    return Err(err(
                        format!("{key}.value"),
                        "a sweep's measurements are `points` or a `file`, not one `value`".into(),
                    ));
                }
                for p in &r.points {
                    pts.push((p.x.0, p.value.0, p.u));
                }
                if let Some(f) = &r.file {
                    let p = base.join(f);
                    reach
                        .read(f, &p)
                        .map_err(|m| err(format!("{key}.file"), m))?;
                    let (read, missing) = read_points_csv(&p, &format!("{key}.file"), file, r)?;
                    if !missing.is_empty() {
                        let mut named: Vec<String> = missing
                            .iter()
                            .take(8)
                            .map(|(l, c)| format!("line {l} ({})", c.join(", ")))
                            .collect();
                        if missing.len() > 8 {
                            named.push(format!("and {} more", missing.len() - 8));
                        }
                        warnings.push(
                            crate::warning::Warning::new(
                                "missing_points_skipped",
                                format!(
                                    "{}: {} measured point{} with a cell marked missing (empty, `-`, `nan`, `n/a`) skipped: {}",
                                    p.display(),
                                    missing.len(),
                                    if missing.len() == 1 { "" } else { "s" },
                                    named.join("; ")
                                ),
                            )
                            .about(name),
                        );
                    }
                    pts.extend(read);
                    files_read.push(p);
                }
                if pts.is_empty() {
                    return Err(err(key.clone(), "gives no measured points".into()));
                }
            }
        }
        let mut points = Vec::new();
        for (i, (x, v, u)) in pts.into_iter().enumerate() {
            let u = u.or(r.u_measured).ok_or_else(|| {
                err(
                    format!("{key}.points[{i}]"),
                    "has no uncertainty: give `u` or `u_measured` (standard uncertainty u_D)"
                        .into(),
                )
            })?;
            points.push((x, v, u.of(v)));
        }
        out.push(Reference {
            name: name.clone(),
            target,
            points,
            u_input: r.u_input,
            normalise: r.normalise,
            origin: r.origin,
        });
    }
    Ok(out)
}
