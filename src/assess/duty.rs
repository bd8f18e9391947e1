//! Duty curves: the breakdown results and non-cavitating references of sweeps recorded at
//! several flows, assembled against the flow, each point with the uncertainty its sweep's
//! estimate stated, and compared with measured curves (ASME V&V 20) where given.
//!
//! Nothing is estimated again here: each point is the governing estimate of its sweep's
//! breakdown abscissa (`breakdown[].x_estimate`) or reference (`breakdown[].reference_estimate`),
//! so a duty curve's NPSH3 at a flow equals the sweep's own result there.

use super::partial::NotComputed;
use super::QuantityResult;
use crate::compare::{self, CompareSettings, Comparison, Measured, Simulated};
use crate::estimate::Convergence;
use crate::study::duty::{DutyCurve, SeriesKind};
use crate::warning::Warning;
use serde::Serialize;

/// One operating point of a series.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DutyPoint {
    /// Flow.
    pub flow: f64,
    /// The sweep recorded at this flow.
    pub sweep: String,
    /// The finest mesh's value.
    pub value: Option<f64>,
    /// The governing estimate's extrapolated value, when it exists.
    pub extrapolated: Option<f64>,
    /// The governing absolute uncertainty U of the finest mesh's value (`None`: none stated).
    pub absolute: Option<f64>,
    /// Its standard uncertainty u_num (U over the governing method's divisor).
    pub standard: Option<f64>,
    /// value − U.
    pub lower: Option<f64>,
    /// value + U.
    pub upper: Option<f64>,
    /// Convergence class of the governing estimate.
    pub convergence: Option<Convergence>,
    /// Whether the data demonstrate convergence at this point.
    pub demonstrated: bool,
    /// Why the point has no result, when it has none.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub not_computed: Option<NotComputed>,
}

/// One series of a duty curve (part of the JSON contract).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DutySeriesResult {
    /// `breakdown.<response>` or `reference.<response>`.
    pub key: String,
    /// The breakdown abscissa of a criterion, or the criterion response's reference value.
    pub kind: SeriesKind,
    /// The criterion's response.
    pub response: String,
    /// What the values are: the breakdown abscissa (`npsh` or the sweep's x) or the response.
    pub quantity: String,
    /// The criterion's drop (a fraction when `relative`).
    pub drop: f64,
    /// Whether the drop is relative to the reference.
    pub relative: bool,
    /// The unit of the values, when known.
    pub unit: Option<String>,
    /// The points, by flow.
    pub points: Vec<DutyPoint>,
    /// Measured points shown beside the curve: flow, value, standard uncertainty.
    pub measured: Vec<[f64; 3]>,
    /// The comparison with the measured points at the curve's flows (ASME V&V 20), when any
    /// measured point lies at a flow of the curve.
    pub comparison: Option<Comparison>,
}

/// A duty curve's result (part of the JSON contract).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DutyCurveResult {
    /// Name.
    pub name: String,
    /// Unit of the flow.
    pub flow_unit: String,
    /// Flows, ascending.
    pub flows: Vec<f64>,
    /// The sweep at each flow.
    pub sweeps: Vec<String>,
    /// The series: per breakdown criterion, its abscissa, then its reference.
    pub series: Vec<DutySeriesResult>,
}

fn point_of(flow: f64, sweep: &str, q: &QuantityResult) -> DutyPoint {
    let value = q.values.first().copied();
    let g = q.governing.as_ref();
    let absolute = q.uncertainty.as_ref().map(|u| u.absolute);
    DutyPoint {
        flow,
        sweep: sweep.to_string(),
        value,
        extrapolated: g.and_then(|g| g.extrapolated),
        absolute,
        standard: q.uncertainty.as_ref().map(|u| u.standard),
        lower: q.uncertainty.as_ref().map(|u| u.lower),
        upper: q.uncertainty.as_ref().map(|u| u.upper),
        convergence: g.map(|g| g.convergence).or(q.convergence),
        demonstrated: g.is_some_and(|g| g.demonstrated),
        not_computed: q.not_computed.clone(),
    }
}

/// Assembles the duty curves from the assessed sweeps (same order as the study's sweeps).
pub fn assemble(
    curves: &[DutyCurve],
    study_sweeps: &[crate::study::sweep::Sweep],
    sweeps: &[super::sweep::SweepResult],
    compare_settings: &CompareSettings,
    warnings: &mut Vec<Warning>,
) -> Vec<DutyCurveResult> {
    let mut out = Vec::with_capacity(curves.len());
    for c in curves {
        let mut series = Vec::with_capacity(c.series.len());
        for s in &c.series {
            let mut points = Vec::with_capacity(c.flows.len());
            let mut quantity = String::new();
            let mut unit = None;
            let mut drop = 0.0;
            let mut relative = true;
            for ((&flow, &si), &ci) in c.flows.iter().zip(&c.sweeps).zip(&s.criterion) {
                let Some(b) = sweeps.get(si).and_then(|sw| sw.breakdown.get(ci)) else {
                    continue;
                };
                let q = match s.kind {
                    SeriesKind::Breakdown => &b.x_estimate,
                    SeriesKind::Reference => &b.reference_estimate,
                };
                if quantity.is_empty() {
                    quantity = match s.kind {
                        SeriesKind::Breakdown => b.abscissa.clone(),
                        SeriesKind::Reference => b.response.clone(),
                    };
                    // NPSH is in metres; anything else in the unit its files gave.
                    unit = if quantity == "npsh" {
                        Some("m".to_string())
                    } else {
                        study_sweeps
                            .get(si)
                            .and_then(|sw| sw.units.get(&quantity).cloned())
                    };
                    drop = b.drop;
                    relative = b.relative;
                }
                points.push(point_of(flow, &sweeps[si].name, q));
            }
            let key = s.key();
            let undemonstrated: Vec<String> = points
                .iter()
                .filter(|p| !p.demonstrated)
                .map(|p| crate::report::format::num(p.flow, 6))
                .collect();
            if !undemonstrated.is_empty() {
                warnings.push(
                    Warning::new(
                        "duty_points_not_demonstrated",
                        format!(
                            "duty curve `{}`, {key}: convergence is not demonstrated at {} of {} \
                             flows ({}): the curve's band there is no defensible uncertainty",
                            c.name,
                            undemonstrated.len(),
                            points.len(),
                            undemonstrated.join(", ")
                        ),
                    )
                    .about(&c.name),
                );
            }
            let comparison = compare_series(
                &c.name,
                &key,
                &points,
                &s.measured,
                compare_settings,
                warnings,
            );
            series.push(DutySeriesResult {
                key,
                kind: s.kind,
                response: s.response.clone(),
                quantity,
                drop,
                relative,
                unit,
                points,
                measured: s.measured.iter().map(|m| [m.0, m.1, m.2]).collect(),
                comparison,
            });
        }
        out.push(DutyCurveResult {
            name: c.name.clone(),
            flow_unit: c.flow_unit.clone(),
            flows: c.flows.clone(),
            sweeps: c
                .sweeps
                .iter()
                .filter_map(|&i| sweeps.get(i))
                .map(|s| s.name.clone())
                .collect(),
            series,
        });
    }
    out
}

/// The V&V 20 comparison at the flows where a measured point lies on a flow of the curve
/// (relative difference of the flows below 1e-9). Measured points at other flows are only
/// shown; a point without an estimate is left out.
fn compare_series(
    curve: &str,
    key: &str,
    points: &[DutyPoint],
    measured: &[(f64, f64, f64)],
    settings: &CompareSettings,
    warnings: &mut Vec<Warning>,
) -> Option<Comparison> {
    let mut sim = Vec::new();
    let mut meas = Vec::new();
    for &(flow, value, u) in measured {
        let Some(p) = points
            .iter()
            .find(|p| (p.flow - flow).abs() <= 1e-9 * p.flow.abs().max(flow.abs()))
        else {
            continue;
        };
        let Some(v) = p.value else { continue };
        sim.push(Simulated {
            x: flow,
            value: v,
            uncertainty: p.absolute.filter(|_| p.demonstrated),
            standard: p.standard.filter(|_| p.demonstrated),
        });
        meas.push(Measured { x: flow, value, u });
    }
    if sim.is_empty() {
        if !measured.is_empty() {
            warnings.push(
                Warning::new(
                    "duty_measured_off_flows",
                    format!(
                        "duty curve `{curve}`, {key}: no measured point lies at a flow of the \
                         curve; the measured curve is shown, not compared"
                    ),
                )
                .about(curve),
            );
        }
        return None;
    }
    match compare::compare(&sim, &meas, 1.0, settings) {
        Ok(c) => Some(c),
        Err(e) => {
            warnings.push(
                Warning::new(
                    "duty_comparison_failed",
                    format!("duty curve `{curve}`, {key}: no comparison: {e}"),
                )
                .about(curve),
            );
            None
        }
    }
}
