//! Sweeps in the study file: curves per mesh (for example a cavitation sweep of decreasing σ
//! at fixed duty), given inline or as CSV files beside the study, optionally as raw solver
//! monitors from which head, efficiency, NPSH and σ are derived.

use super::num::{Finite, NonNegativeOrPercent};
use super::StudyError;
use crate::machine::{self, Mode, RawPoint};
use crate::sweep::{DropRule, Interpolation, ReferenceKind};
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
}

/// One mesh's sweep data: `file` or inline columns (`name: [numbers]`).
#[derive(Debug, Default)]
pub struct RawSweepData {
    /// CSV file, relative to the study file.
    pub file: Option<String>,
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
            "description": "`file: path.csv` (relative to the study file) or inline columns `name: [numbers]`",
            "properties": {"file": {"type": "string"}},
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
                    } else {
                        let col: Vec<Finite> = map.next_value()?;
                        out.columns
                            .insert(key, col.into_iter().map(|v| v.0).collect());
                    }
                }
                if out.file.is_some() && !out.columns.is_empty() {
                    return Err(de::Error::custom(
                        "give either `file` or inline columns, not both",
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
}

type Ctx<'a> = super::At<'a>;

/// Reads the needed numeric columns of a CSV file. Errors name the CSV file, its line and the
/// column.
fn read_csv(
    path: &Path,
    needed: &[String],
    key: &str,
    ctx: &Ctx,
) -> Result<IndexMap<String, Vec<f64>>, StudyError> {
    let data_err = |message: String| StudyError {
        file: path.to_path_buf(),
        key: String::new(),
        line: None,
        column: None,
        message: format!("{message} (named by {} at {key})", ctx.file.display()),
    };
    let mut rdr = super::csv_input::open(path).map_err(|e| match e {
        super::csv_input::OpenError::Io(e) => ctx.err(
            key.to_string(),
            format!("cannot read the CSV file {}: {e}", path.display()),
        ),
        super::csv_input::OpenError::Refused(m) => data_err(m),
    })?;
    let unreadable = |e: csv::Error| match super::csv_input::Overrun::of(&e) {
        Some(o) => StudyError {
            line: o.line(),
            ..data_err(o.to_string())
        },
        None => StudyError {
            line: e.position().map(|p| p.line() as usize),
            ..data_err(format!("unreadable CSV: {e}"))
        },
    };
    let headers = rdr
        .headers()
        .map_err(|e| match super::csv_input::Overrun::of(&e) {
            Some(_) => unreadable(e),
            None => data_err(format!("cannot read the header row: {e}")),
        })?
        .clone();
    let mut idx = Vec::with_capacity(needed.len());
    for n in needed {
        match headers.iter().position(|h| h == n) {
            Some(i) => idx.push(i),
            None => {
                return Err(StudyError {
                    line: Some(1),
                    ..data_err(format!(
                        "has no column `{n}` (the header row names: {})",
                        super::csv_input::header_names(&headers)
                    ))
                })
            }
        }
    }
    let mut cols: Vec<Vec<f64>> = vec![Vec::new(); needed.len()];
    let mut rec = csv::StringRecord::new();
    loop {
        let more = rdr.read_record(&mut rec).map_err(unreadable)?;
        if !more {
            break;
        }
        let line = rec.position().map(|p| p.line() as usize);
        if cols[0].len() >= MAX_POINTS {
            return Err(StudyError {
                line,
                ..data_err(format!(
                    "more than {MAX_POINTS} rows; a sweep is refused above that"
                ))
            });
        }
        for (k, &i) in idx.iter().enumerate() {
            let field = rec.get(i).unwrap_or("");
            let v: f64 = field.parse().map_err(|_| StudyError {
                line,
                ..data_err(format!(
                    "column `{}`: `{}` is not a number",
                    needed[k],
                    super::csv_input::field_text(field)
                ))
            })?;
            if !v.is_finite() {
                return Err(StudyError {
                    line,
                    ..data_err(format!(
                        "column `{}`: {} is not a finite number",
                        needed[k],
                        super::csv_input::field_text(field)
                    ))
                });
            }
            cols[k].push(v);
        }
    }
    Ok(needed.iter().cloned().zip(cols).collect())
}

/// Checks every sweep. `mesh_names` are the study's meshes, finest first.
pub fn check(
    raw: &IndexMap<String, RawSweep>,
    mesh_names: &[String],
    gravity: f64,
    ctx: &Ctx,
    reach: &super::reach::Reach,
    files_read: &mut Vec<PathBuf>,
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
        if s.mode.is_none() {
            // A derived name without a mode is an ordinary column.
        }
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
        let mut mesh_indices = Vec::new();
        let mut curves = Vec::new();
        for (mi, mname) in mesh_names.iter().enumerate() {
            let Some(d) = s.data.get(mname) else { continue };
            let key = at(&format!("data.{mname}"));
            let cols = if let Some(f) = &d.file {
                let p = base.join(f);
                reach
                    .read(f, &p)
                    .map_err(|m| ctx.err(format!("{key}.file"), m))?;
                let c = read_csv(&p, &wanted, &format!("{key}.file"), ctx)?;
                files_read.push(p);
                c
            } else {
                let mut c = IndexMap::new();
                for w in &wanted {
                    match d.columns.get(w) {
                        Some(v) => {
                            c.insert(w.clone(), v.clone());
                        }
                        None => {
                            return Err(ctx.err(key.clone(), format!(
                                "has no column `{w}`{}",
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
            curves.push(Curve {
                mesh: mname.clone(),
                x: order.iter().map(|&i| x[i]).collect(),
                responses: ys
                    .iter()
                    .map(|y| order.iter().map(|&i| y[i]).collect())
                    .collect(),
                derived: derived.map(|d| order.iter().map(|&i| d[i]).collect()),
            });
            mesh_indices.push(mi);
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
            breakdown.push(BreakdownSpec {
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
        });
    }
    Ok(out)
}
