//! Duty curves: sweeps recorded at several flows, assembled into curves against the flow
//! (NPSH3(Q), σ(Q) at a chosen drop; H(Q), η(Q) from the non-cavitating reference).
//!
//! The study names, per curve, the flow of each operating point and the sweep recorded there.
//! The series of the curve are the breakdown criteria of the first point's sweep; every other
//! point's sweep must define the same criteria (same response, drop, basis and abscissa), so
//! that each series compares like with like.

use super::num::{Finite, Positive};
use super::sweep::{Abscissa, Sweep};
use super::StudyError;
use crate::sweep::DropRule;
use indexmap::IndexMap;
use serde::Deserialize;

/// A duty curve as written.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawDutyCurve {
    /// The operating points: each flow and the sweep recorded at it (at least two; any order).
    pub points: Vec<RawDutyPoint>,
    /// The unit of the flow, shown on axes and in tables (default `m³/s`).
    #[serde(default)]
    pub flow_unit: Option<String>,
    /// Measured curves to show and compare with, by series (`breakdown.<response>` for the
    /// breakdown abscissa of the criterion on that response, `reference.<response>` for the
    /// response's non-cavitating value).
    #[serde(default)]
    pub measured: IndexMap<String, RawMeasuredCurve>,
}

/// One operating point of a duty curve.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawDutyPoint {
    /// The flow of the operating point, in `flow_unit`.
    pub flow: Finite,
    /// The sweep recorded at this flow (a key of `sweeps`).
    pub sweep: String,
}

/// A measured curve against the flow.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawMeasuredCurve {
    /// Standard uncertainty of every measured value, absolute, unless a point gives its own.
    #[serde(default)]
    pub u: Option<Positive>,
    /// The measured points.
    pub points: Vec<RawMeasuredPoint>,
}

/// One measured point of a duty curve.
#[derive(Debug, Deserialize, schemars::JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawMeasuredPoint {
    /// Flow.
    pub flow: Finite,
    /// Measured value.
    pub value: Finite,
    /// Standard uncertainty, absolute (default: the curve's `u`, else 0).
    #[serde(default)]
    pub u: Option<Positive>,
}

/// What a series of a duty curve holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SeriesKind {
    /// The breakdown abscissa of a criterion (NPSH or the sweep's x, e.g. σ).
    Breakdown,
    /// The non-cavitating reference value of the criterion's response (e.g. H or η).
    Reference,
}

/// One series of a duty curve: which criterion of each sweep it reads.
#[derive(Debug, Clone, PartialEq)]
pub struct DutySeries {
    /// Breakdown abscissa or reference value.
    pub kind: SeriesKind,
    /// The criterion's response.
    pub response: String,
    /// Per operating point (same order as [`DutyCurve::flows`]): the index of the criterion in
    /// that sweep's `breakdown`.
    pub criterion: Vec<usize>,
    /// Measured points (flow, value, standard uncertainty), by flow.
    pub measured: Vec<(f64, f64, f64)>,
}

impl DutySeries {
    /// The series' key (`breakdown.head`, `reference.efficiency`).
    pub fn key(&self) -> String {
        match self.kind {
            SeriesKind::Breakdown => format!("breakdown.{}", self.response),
            SeriesKind::Reference => format!("reference.{}", self.response),
        }
    }
}

/// A checked duty curve.
#[derive(Debug, Clone, PartialEq)]
pub struct DutyCurve {
    /// Name (the key under `duty_curves`).
    pub name: String,
    /// Unit of the flow.
    pub flow_unit: String,
    /// Flows, ascending.
    pub flows: Vec<f64>,
    /// Per flow, the index of its sweep in the study's sweeps.
    pub sweeps: Vec<usize>,
    /// The series: for each breakdown criterion, its abscissa, then its reference value.
    pub series: Vec<DutySeries>,
}

/// Equal within 1e-9 relative: the same number written twice (or a flow given twice).
fn close(x: f64, y: f64) -> bool {
    (x - y).abs() <= 1e-9 * x.abs().max(y.abs())
}

fn same_criterion(a: &super::sweep::BreakdownSpec, b: &super::sweep::BreakdownSpec) -> bool {
    let drop_eq = match (a.drop, b.drop) {
        (DropRule::Relative(x), DropRule::Relative(y))
        | (DropRule::Absolute(x), DropRule::Absolute(y)) => close(x, y),
        _ => false,
    };
    a.response == b.response && drop_eq && a.abscissa == b.abscissa
}

fn criterion_words(b: &super::sweep::BreakdownSpec) -> String {
    let drop = match b.drop {
        DropRule::Relative(f) => format!("{} % drop", crate::report::format::sig(f * 100.0, 3)),
        DropRule::Absolute(a) => format!("a drop of {}", crate::report::format::sig(a, 3)),
    };
    let on = match b.abscissa {
        Abscissa::X => "x",
        Abscissa::Npsh => "npsh",
    };
    format!("{} at {drop} (read against {on})", b.response)
}

/// Checks the duty curves against the study's sweeps.
pub fn check(
    raw: &IndexMap<String, RawDutyCurve>,
    sweeps: &[Sweep],
    at: &super::At,
) -> Result<Vec<DutyCurve>, StudyError> {
    let mut out = Vec::new();
    for (name, c) in raw {
        let key = format!("duty_curves.{name}");
        if c.points.len() < 2 {
            return Err(at.err(
                format!("{key}.points"),
                format!(
                    "gives {} operating point(s); a curve against the flow needs at least two",
                    c.points.len()
                ),
            ));
        }
        let mut pts: Vec<(f64, usize, usize)> = Vec::with_capacity(c.points.len());
        for (i, p) in c.points.iter().enumerate() {
            let si = sweeps
                .iter()
                .position(|s| s.name == p.sweep)
                .ok_or_else(|| {
                    at.err(
                        format!("{key}.points[{i}].sweep"),
                        format!(
                            "`{}` is not a sweep of the study (known: {})",
                            p.sweep,
                            sweeps
                                .iter()
                                .map(|s| s.name.as_str())
                                .collect::<Vec<_>>()
                                .join(", ")
                        ),
                    )
                })?;
            if let Some((_, _, j)) = pts.iter().find(|(_, s, _)| *s == si) {
                return Err(at.err(
                    format!("{key}.points[{i}].sweep"),
                    format!(
                        "the sweep `{}` is already the sweep of points[{j}]",
                        p.sweep
                    ),
                ));
            }
            if let Some((_, _, j)) = pts.iter().find(|(f, _, _)| close(*f, p.flow.0)) {
                return Err(at.err(
                    format!("{key}.points[{i}].flow"),
                    format!("the flow {} is already the flow of points[{j}]", p.flow.0),
                ));
            }
            pts.push((p.flow.0, si, i));
        }
        // The criteria come from the first point as written (the order the engineer chose).
        let first = &sweeps[pts[0].1];
        if first.breakdown.is_empty() {
            return Err(at.err(
                format!("{key}.points[0].sweep"),
                format!(
                    "the sweep `{}` defines no breakdown criterion: a duty curve assembles breakdown \
                     criteria and their reference values",
                    first.name
                ),
            ));
        }
        pts.sort_by(|a, b| a.0.total_cmp(&b.0));
        let mut series = Vec::new();
        for b in &first.breakdown {
            let mut criterion = Vec::with_capacity(pts.len());
            for &(_, si, i) in &pts {
                let s = &sweeps[si];
                let ci = s
                    .breakdown
                    .iter()
                    .position(|o| same_criterion(o, b))
                    .ok_or_else(|| {
                        at.err(
                            format!("{key}.points[{i}].sweep"),
                            format!(
                                "the sweep `{}` has no breakdown criterion on {}, which the sweep \
                                 `{}` of points[0] defines: every point of a duty curve needs the \
                                 same criteria",
                                s.name,
                                criterion_words(b),
                                first.name
                            ),
                        )
                    })?;
                criterion.push(ci);
            }
            for kind in [SeriesKind::Breakdown, SeriesKind::Reference] {
                series.push(DutySeries {
                    kind,
                    response: b.response.clone(),
                    criterion: criterion.clone(),
                    measured: Vec::new(),
                });
            }
        }
        for (mkey, m) in &c.measured {
            let Some(s) = series.iter_mut().find(|s| &s.key() == mkey) else {
                return Err(at.err(
                    format!("{key}.measured.{mkey}"),
                    format!(
                        "names no series of the curve (known: {})",
                        series
                            .iter()
                            .map(|s| s.key())
                            .collect::<Vec<_>>()
                            .join(", ")
                    ),
                ));
            };
            if m.points.is_empty() {
                return Err(at.err(
                    format!("{key}.measured.{mkey}.points"),
                    "lists no point".into(),
                ));
            }
            let u0 = m.u.map_or(0.0, |u| u.0);
            let mut v: Vec<(f64, f64, f64)> = m
                .points
                .iter()
                .map(|p| (p.flow.0, p.value.0, p.u.map_or(u0, |u| u.0)))
                .collect();
            v.sort_by(|a, b| a.0.total_cmp(&b.0));
            s.measured = v;
        }
        out.push(DutyCurve {
            name: name.clone(),
            flow_unit: c.flow_unit.clone().unwrap_or_else(|| "m³/s".into()),
            flows: pts.iter().map(|p| p.0).collect(),
            sweeps: pts.iter().map(|p| p.1).collect(),
            series,
        });
    }
    Ok(out)
}
