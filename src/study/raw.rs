//! The study file as written: serde types that mirror the YAML, with unknown keys refused.

use super::num::{Finite, Positive};
use indexmap::IndexMap;
use serde::de::{self, Deserializer};
use serde::Deserialize;

/// The top level of a study file (format 1).
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawStudy {
    /// Format number; only 1 exists.
    pub format: FormatNumber,
    /// Title of the study.
    #[serde(default)]
    pub title: Option<String>,
    /// Spatial dimension, 1–3.
    #[serde(default)]
    pub dimension: Option<Dimension>,
    /// Formal order of the discretisation.
    #[serde(default)]
    pub formal_order: Option<Positive>,
    /// The field of the study, which words the caution every output carries (default
    /// `hydraulic_machinery`).
    #[serde(default)]
    pub domain: Option<Domain>,
    /// The meshes, any order.
    pub meshes: Vec<RawMesh>,
    /// Scalar quantities by name.
    #[serde(default)]
    pub quantities: IndexMap<String, RawQuantity>,
    /// Sweeps (curves per mesh) by name.
    #[serde(default)]
    pub sweeps: IndexMap<String, super::sweep::RawSweep>,
    /// Duty curves: sweeps recorded at several flows, assembled against the flow.
    #[serde(default)]
    pub duty_curves: IndexMap<String, super::duty::RawDutyCurve>,
    /// Settings of the estimators.
    #[serde(default)]
    pub settings: RawSettings,
    /// Acceptance limits that `gate` checks.
    #[serde(default)]
    pub acceptance: Vec<RawAcceptance>,
    /// Measurements to compare with, named like the sweep or quantity.
    #[serde(default)]
    pub reference_data: IndexMap<String, super::reference::RawReference>,
    /// Pointwise fields: probe files per mesh.
    #[serde(default)]
    pub fields: IndexMap<String, RawField>,
}

/// The field of a study.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Domain {
    /// Pumps, turbines, pump-turbines and their cavitation (the caution speaks of machines).
    #[default]
    HydraulicMachinery,
    /// Any other flow (a benchmark, a generic study): a caution without machines.
    General,
}

/// A pointwise field as written (contract).
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawField {
    /// Name of the id column (default: the first column).
    #[serde(default)]
    pub id: Option<String>,
    /// Quantities to estimate at every probe.
    pub columns: Vec<String>,
    /// Per mesh: a CSV file of probes (every file holds the same probes in the same order),
    /// or a VTK file (`.vtu` or `.vtk`) of the mesh and its solution, relative to the study
    /// file. With VTK files, `columns` names arrays (`p`, `U_x`, `U_0`).
    pub data: IndexMap<String, String>,
    /// Per-point results file, relative to the study file: CSV, or `.vtu` for VTK data.
    #[serde(default)]
    pub write: Option<String>,
    /// With VTK data: a CSV of probe points (`x`, `y`, optional `z` and `id`) to estimate at,
    /// instead of the finest mesh's points.
    #[serde(default)]
    pub probe_points: Option<String>,
    /// The separator of the probe files (default: detected).
    #[serde(default)]
    pub separator: Option<crate::tabular::Separator>,
    /// The decimal mark of the probe files (default: detected).
    #[serde(default)]
    pub decimal: Option<crate::tabular::Decimal>,
    /// Where each of `columns` is read from, and its scale.
    #[serde(default)]
    pub mapping: IndexMap<String, RawColumn>,
    /// Which order the per-point estimates use: `per_point` (default), `average`, `norm_l2`,
    /// `norm_max`.
    #[serde(default)]
    pub order: Option<RawOrderBasis>,
    /// Absolute noise floor: differences between meshes no larger than this count as
    /// round-off (default 0: off).
    #[serde(default)]
    pub noise_floor: Option<super::num::Finite>,
    /// A line to sample the results along (VTK data): `{column, from, to, samples}`.
    #[serde(default)]
    pub line: Option<RawFieldLine>,
    /// Reference data at points, compared after ASME V&V 20 (VTK data).
    #[serde(default)]
    pub reference: Option<RawFieldReference>,
}

/// Which order a field's per-point estimates use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum RawOrderBasis {
    /// Each point's own observed order.
    PerPoint,
    /// The mean observed order of the monotonically converging points, at every point.
    Average,
    /// The order of the L2 norms of the differences between meshes, at every point.
    NormL2,
    /// The order of the L∞ norms of the differences between meshes, at every point.
    NormMax,
}

/// A line to sample a field's results along.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawFieldLine {
    /// The column (one of `columns`; default the first).
    #[serde(default)]
    pub column: Option<String>,
    /// Start point `[x, y]` or `[x, y, z]`.
    pub from: Vec<super::num::Finite>,
    /// End point `[x, y]` or `[x, y, z]`.
    pub to: Vec<super::num::Finite>,
    /// Number of samples, both ends included (default 200, at least 2, at most 100000).
    #[serde(default)]
    pub samples: Option<usize>,
}

/// Reference data of a field at points.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawFieldReference {
    /// The column compared (one of `columns`; default the first).
    #[serde(default)]
    pub column: Option<String>,
    /// `measurement` (default) or `benchmark` (a published reference solution).
    #[serde(default)]
    pub origin: Option<super::reference::Origin>,
    /// Standard uncertainty of every reference value, absolute, unless a point gives its own.
    #[serde(default)]
    pub u: Option<super::num::Finite>,
    /// The points.
    pub points: Vec<RawFieldPoint>,
}

/// One reference point of a field.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawFieldPoint {
    /// x.
    pub x: super::num::Finite,
    /// y.
    pub y: super::num::Finite,
    /// z (default 0).
    #[serde(default)]
    pub z: Option<super::num::Finite>,
    /// Reference value.
    pub value: super::num::Finite,
    /// Standard uncertainty, absolute (default the reference's `u`, else 0).
    #[serde(default)]
    pub u: Option<super::num::Finite>,
}

impl RawField {
    /// The estimate options of a field: global order, noise floor, line, reference points.
    pub fn estimate(
        &self,
        key: &str,
        at: &super::At,
        meshes_data: bool,
        divisor: Option<f64>,
        coverage: f64,
    ) -> Result<crate::field::FieldEstimate, super::StudyError> {
        use crate::field::{profile, FieldEstimate, FieldReference, OrderBasis};
        let column = |given: &Option<String>, k: &str| -> Result<String, super::StudyError> {
            match given {
                None => Ok(self.columns.first().cloned().unwrap_or_default()),
                Some(c) if self.columns.contains(c) => Ok(c.clone()),
                Some(c) => Err(at.err(
                    format!("{key}.{k}.column"),
                    format!(
                        "`{c}` is not one of the field's columns ({})",
                        self.columns.join(", ")
                    ),
                )),
            }
        };
        let point = |v: &[super::num::Finite], k: &str| -> Result<[f64; 3], super::StudyError> {
            match v {
                [x, y] => Ok([x.0, y.0, 0.0]),
                [x, y, z] => Ok([x.0, y.0, z.0]),
                _ => Err(at.err(
                    format!("{key}.{k}"),
                    format!(
                        "gives {} coordinates; expected [x, y] or [x, y, z]",
                        v.len()
                    ),
                )),
            }
        };
        let noise_floor = self.noise_floor.map_or(0.0, |v| v.0);
        if noise_floor < 0.0 {
            return Err(at.err(
                format!("{key}.noise_floor"),
                format!("is {noise_floor}; expected a number ≥ 0"),
            ));
        }
        for (given, k) in [
            (self.line.is_some(), "line"),
            (self.reference.is_some(), "reference"),
        ] {
            if given && !meshes_data {
                return Err(at.err(
                    format!("{key}.{k}"),
                    "needs the points' coordinates: VTK files in `data` (probe files have none)"
                        .into(),
                ));
            }
        }
        let line = match &self.line {
            None => None,
            Some(l) => {
                let samples = l.samples.unwrap_or(200);
                if !(2..=100_000).contains(&samples) {
                    return Err(at.err(
                        format!("{key}.line.samples"),
                        format!("is {samples}; expected 2 to 100000"),
                    ));
                }
                Some(profile::LineSpec {
                    column: column(&l.column, "line")?,
                    from: point(&l.from, "line.from")?,
                    to: point(&l.to, "line.to")?,
                    samples,
                })
            }
        };
        let reference = match &self.reference {
            None => None,
            Some(r) => {
                if r.points.is_empty() {
                    return Err(at.err(format!("{key}.reference.points"), "lists no point".into()));
                }
                let u0 = r.u.map_or(0.0, |u| u.0);
                let mut points = Vec::with_capacity(r.points.len());
                for (i, p) in r.points.iter().enumerate() {
                    let u = p.u.map_or(u0, |u| u.0);
                    if u < 0.0 {
                        return Err(at.err(
                            format!("{key}.reference.points[{i}].u"),
                            format!("is {u}; expected a standard uncertainty ≥ 0"),
                        ));
                    }
                    points.push(profile::ReferencePoint {
                        at: [p.x.0, p.y.0, p.z.map_or(0.0, |z| z.0)],
                        value: p.value.0,
                        u,
                    });
                }
                if u0 < 0.0 {
                    return Err(at.err(
                        format!("{key}.reference.u"),
                        format!("is {u0}; expected a standard uncertainty ≥ 0"),
                    ));
                }
                Some(FieldReference {
                    column: column(&r.column, "reference")?,
                    benchmark: r.origin == Some(super::reference::Origin::Benchmark),
                    points,
                    divisor: divisor.unwrap_or(2.0),
                    coverage,
                })
            }
        };
        Ok(FieldEstimate {
            order: match self.order {
                None | Some(RawOrderBasis::PerPoint) => OrderBasis::PerPoint,
                Some(RawOrderBasis::Average) => OrderBasis::Average,
                Some(RawOrderBasis::NormL2) => OrderBasis::NormL2,
                Some(RawOrderBasis::NormMax) => OrderBasis::NormMax,
            },
            noise_floor,
            line,
            reference,
        })
    }

    /// How its probe files are read; refuses a `mapping` key that is not one of `columns`.
    pub fn reading(
        &self,
        key: &str,
        at: &super::At,
    ) -> Result<crate::field::FieldReading, super::StudyError> {
        for m in self.mapping.keys() {
            if !self.columns.contains(m) {
                return Err(at.err(
                    format!("{key}.mapping.{m}"),
                    format!(
                        "`{m}` is not one of the field's `columns` ({})",
                        self.columns.join(", ")
                    ),
                ));
            }
        }
        Ok(crate::field::FieldReading {
            options: crate::tabular::Options {
                separator: self.separator,
                decimal: self.decimal,
            },
            columns: self
                .columns
                .iter()
                .map(|c| match self.mapping.get(c) {
                    Some(m) => (m.column.clone(), m.scale),
                    None => (None, None),
                })
                .collect(),
        })
    }
}

/// Where a column is read from in a tabular file: a header name, a position counted from 1,
/// or `{column, scale}`.
#[derive(Debug, Clone, PartialEq)]
pub struct RawColumn {
    /// The column in the file (`None`: the name the study uses).
    pub column: Option<crate::tabular::ColumnRef>,
    /// Factor applied to every value read (default 1, or 0.01 for a column in `%`).
    pub scale: Option<f64>,
}

impl<'de> Deserialize<'de> for RawColumn {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        use crate::tabular::ColumnRef;
        struct V;
        fn index<E: de::Error>(v: u64) -> Result<ColumnRef, E> {
            if (1..=1_000_000).contains(&v) {
                Ok(ColumnRef::Index(v as usize))
            } else {
                Err(E::custom(format!(
                    "expected a column position counted from 1, found {v}"
                )))
            }
        }
        impl<'de> de::Visitor<'de> for V {
            type Value = RawColumn;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a column name, a column position counted from 1, or `{column: name, scale: factor}`")
            }
            fn visit_str<E: de::Error>(self, s: &str) -> Result<RawColumn, E> {
                if s.trim().is_empty() {
                    return Err(E::custom("the column name is empty"));
                }
                Ok(RawColumn {
                    column: Some(ColumnRef::Name(s.to_string())),
                    scale: None,
                })
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<RawColumn, E> {
                Ok(RawColumn {
                    column: Some(index(v)?),
                    scale: None,
                })
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<RawColumn, E> {
                self.visit_u64(u64::try_from(v).unwrap_or(0))
            }
            fn visit_map<A: de::MapAccess<'de>>(self, mut map: A) -> Result<RawColumn, A::Error> {
                let mut out = RawColumn {
                    column: None,
                    scale: None,
                };
                while let Some(key) = map.next_key::<String>()? {
                    match key.as_str() {
                        "column" if out.column.is_none() => {
                            out.column =
                                Some(map.next_value::<RawColumn>()?.column.ok_or_else(|| {
                                    de::Error::custom("expected a column name or position")
                                })?)
                        }
                        "scale" if out.scale.is_none() => {
                            let v = map.next_value::<Finite>()?.0;
                            if v == 0.0 {
                                return Err(de::Error::custom(
                                    "a scale of 0 would erase every value: give the factor that turns the file's values into the study's unit",
                                ));
                            }
                            out.scale = Some(v);
                        }
                        "column" | "scale" => {
                            return Err(de::Error::custom(format!("`{key}` is given twice")))
                        }
                        other => {
                            return Err(de::Error::custom(format!(
                                "unknown key `{other}`: expected `column` or `scale`"
                            )))
                        }
                    }
                }
                Ok(out)
            }
        }
        d.deserialize_any(V)
    }
}

impl schemars::JsonSchema for RawColumn {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "ColumnSource".into()
    }
    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({
            "description": "where a column is read from: a header name, a position counted from 1, or {column, scale}",
            "anyOf": [
                {"type": "string", "minLength": 1},
                {"type": "integer", "minimum": 1},
                {"type": "object", "additionalProperties": false, "properties": {
                    "column": {"anyOf": [{"type": "string", "minLength": 1}, {"type": "integer", "minimum": 1}]},
                    "scale": {"type": "number", "not": {"const": 0}}
                }}
            ]
        })
    }
}

/// One acceptance limit as written.
#[derive(Debug, Clone, PartialEq, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawAcceptance {
    /// A quantity, `<sweep>.breakdown.<response>`, `<sweep>.reference.<response>` or
    /// `<field>.<column>`.
    pub target: String,
    /// Largest relative uncertainty allowed (a fraction or `0.5%`).
    #[serde(default)]
    pub max_relative: Option<super::num::NonNegativeOrPercent>,
    /// Largest absolute uncertainty allowed, in the target's unit.
    #[serde(default)]
    pub max_absolute: Option<super::num::NonNegativeOrPercent>,
    /// Required convergence class.
    #[serde(default)]
    pub require: Option<crate::estimate::Convergence>,
    /// Fewest meshes the estimate must rest on.
    #[serde(default)]
    pub min_meshes: Option<u32>,
}

/// The study format number.
#[derive(Debug, Clone, Copy)]
pub struct FormatNumber(pub u32);

impl schemars::JsonSchema for FormatNumber {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "FormatNumber".into()
    }
    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({"const": 1, "description": "study format; only 1 exists"})
    }
}

impl schemars::JsonSchema for Dimension {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "Dimension".into()
    }
    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({"type": "integer", "enum": [1, 2, 3]})
    }
}

impl<'de> Deserialize<'de> for FormatNumber {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = i64::deserialize(d)?;
        match v {
            1 => Ok(FormatNumber(1)),
            n if n > 1 => Err(de::Error::custom(format!(
                "format {n} is newer than this meshbound understands (it reads format 1): update meshbound"
            ))),
            n => Err(de::Error::custom(format!("format {n} does not exist: write `format: 1`"))),
        }
    }
}

/// Spatial dimension.
#[derive(Debug, Clone, Copy)]
pub struct Dimension(pub u32);

impl<'de> Deserialize<'de> for Dimension {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = i64::deserialize(d)?;
        if (1..=3).contains(&v) {
            Ok(Dimension(v as u32))
        } else {
            Err(de::Error::custom(format!(
                "expected the dimension 1, 2 or 3, found {v}"
            )))
        }
    }
}

/// One mesh.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawMesh {
    /// Unique, non-empty name.
    pub name: String,
    /// Cell count (≥ 1).
    #[serde(default)]
    pub cells: Option<super::num::CellCount>,
    /// Representative size h.
    #[serde(default)]
    pub size: Option<Positive>,
    /// Domain volume (3-D) or area (2-D).
    #[serde(default)]
    pub extent: Option<Positive>,
    /// Mean wall y+ (informative).
    #[serde(default)]
    pub y_plus: Option<Positive>,
    /// Iterative uncertainty of this mesh's results, absolute (informative).
    #[serde(default)]
    pub iterative: Option<Finite>,
}

/// One scalar quantity.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawQuantity {
    /// Free-text unit.
    #[serde(default)]
    pub unit: Option<String>,
    /// One sentence saying what the quantity is.
    #[serde(default)]
    pub description: Option<String>,
    /// One value per mesh name (or give `history`).
    #[serde(default)]
    pub values: Option<IndexMap<String, Finite>>,
    /// Iterative uncertainty per mesh name, absolute, in the quantity's unit (optional; a
    /// mesh left out has none).
    #[serde(default)]
    pub iterative: Option<IndexMap<String, Finite>>,
    /// The values read from each mesh's monitor history instead of `values`.
    #[serde(default)]
    pub history: Option<RawHistory>,
}

/// A column of a history file: its name in the header, or its 1-based position.
#[derive(Debug, Clone, PartialEq, Eq, Deserialize, schemars::JsonSchema)]
#[serde(untagged)]
pub enum HistoryColumn {
    /// 1-based position.
    Position(usize),
    /// Name in the header.
    Name(String),
}

impl HistoryColumn {
    /// The reader's column reference.
    pub fn to_ref(&self) -> crate::history::read::ColumnRef {
        match self {
            HistoryColumn::Position(i) => crate::history::read::ColumnRef::Position(*i),
            HistoryColumn::Name(n) => crate::history::read::ColumnRef::Name(n.clone()),
        }
    }
}

/// Which figure of a history is the value.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum RawReduction {
    /// The mean of the statistically steady part (default).
    Mean,
    /// The last sample.
    Last,
    /// The smallest sample of the steady part.
    Min,
    /// The largest sample of the steady part.
    Max,
}

/// Per-mesh monitor histories of a quantity.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawHistory {
    /// One history file per mesh name, relative to the study file.
    pub files: IndexMap<String, String>,
    /// The monitored column.
    pub column: HistoryColumn,
    /// The iteration or time column, if any.
    #[serde(default)]
    pub abscissa: Option<HistoryColumn>,
    /// A column subtracted from `column` sample by sample before the reduction (for example
    /// the rear probe's pressure from the front one's, for a pressure difference).
    #[serde(default)]
    pub minus: Option<HistoryColumn>,
    /// Which figure is the value (default `mean`).
    #[serde(default)]
    pub reduce: Option<RawReduction>,
    /// Batches of the batch-means estimate (default 20).
    #[serde(default)]
    pub batches: Option<usize>,
    /// The share of the history that is its final window (default 0.1).
    #[serde(default)]
    pub final_share: Option<f64>,
}

/// Which estimator decides a quantity's uncertainty.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum EstimatorChoice {
    /// Least squares from four meshes on, three-mesh below.
    #[default]
    Auto,
    /// Always the three-mesh estimate (three finest meshes).
    ThreeGrid,
    /// Always the least-squares estimate (needs four meshes).
    LeastSquares,
}

/// Settings of the estimators.
#[derive(Debug, Default, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawSettings {
    /// Safety factor of the three-mesh GCI (default 1.25).
    #[serde(default)]
    pub safety_factor: Option<Positive>,
    /// Upper end of the observed-order search (default 20, at most 100).
    #[serde(default)]
    pub order_max: Option<super::num::OrderMax>,
    /// Which estimator governs.
    #[serde(default)]
    pub estimator: Option<EstimatorChoice>,
    /// Gravity for machine quantities, m/s² (default standard gravity 9.80665).
    #[serde(default)]
    pub gravity: Option<Positive>,
    /// u_num = U / divisor in comparisons with measurements for every method (default: each
    /// method's own divisor, see docs/method.md §8).
    #[serde(default)]
    pub validation_divisor: Option<Positive>,
    /// Coverage factor k of the validation interval E ± k u_val (default 2).
    #[serde(default)]
    pub coverage_factor: Option<Positive>,
    /// The published rule that states U from three meshes (default `stern_correction`).
    #[serde(default)]
    pub uncertainty_rule: Option<RuleChoice>,
}

/// The published three-mesh rules a study may choose to govern (docs/method.md §12).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum RuleChoice {
    /// Celik et al. (2008) GCI, Fs = 1.25 with the observed order.
    CelikGci,
    /// Roache (1998) / Oberkampf & Roy (2010): Fs = 3 off the formal order.
    RoacheFs3,
    /// Xing & Stern (2010) factor of safety.
    XingStern,
    /// Stern et al. (2001) correction factor (the default).
    SternCorrection,
}

impl RuleChoice {
    /// The estimator's rule.
    pub fn rule(self) -> crate::estimate::rules::Rule {
        use crate::estimate::rules::Rule;
        match self {
            RuleChoice::CelikGci => Rule::CelikGci,
            RuleChoice::RoacheFs3 => Rule::RoacheFs3,
            RuleChoice::XingStern => Rule::XingStern,
            RuleChoice::SternCorrection => Rule::SternCorrection,
        }
    }
}
