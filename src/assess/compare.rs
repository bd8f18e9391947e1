//! Comparisons with measurements: the simulation value and its discretisation uncertainty at
//! every measured point, then the V&V 20 comparison of [`crate::compare`].

use super::sweep::{band_point_warnings, point_codes};
use super::{quantity, QuantityResult, Role};
use crate::compare::{compare, CompareSettings, Comparison, Measured, Simulated};
use crate::estimate::three_grid::ThreeGridSettings;
use crate::point_warnings::{self, PointWarning, Tally};
use crate::study::reference::{AbsOrPercent, Reference, ReferenceTarget};
use crate::study::{Study, StudyError};
use crate::sweep::Interpolant;
use crate::warning::Warning;
use serde::Serialize;

/// One comparison with its name and what it compares.
#[derive(Debug, Clone, Serialize)]
pub struct ComparisonResult {
    /// Name (the sweep or quantity compared with).
    pub name: String,
    /// `quantity` or `sweep`.
    pub kind: &'static str,
    /// The response compared, for a sweep.
    pub response: Option<String>,
    /// The comparison.
    #[serde(flatten)]
    pub comparison: Comparison,
    /// For a sweep: the warnings of the pointwise estimates at the measured points, per code,
    /// with how many points raised it and the first abscissae (empty for a scalar quantity,
    /// whose own warnings are in the study's list).
    pub point_warnings: Vec<PointWarning<f64>>,
    /// For a sweep: the mean observed order of the pointwise estimates over the points whose
    /// convergence is demonstrated (orders on a bound, not found or not demonstrated are left
    /// out); `None` for a scalar quantity or when no point qualifies.
    pub mean_order: Option<f64>,
    /// The median observed order over the same points.
    pub median_order: Option<f64>,
    /// Number of points whose order enters the mean and the median (0 for a scalar quantity).
    pub order_points: usize,
}

/// The uncertainty of a simulated value when it can be quoted: none where convergence is not
/// demonstrated, so that the V&V 20 verdict there is undecided instead of resting on a U the
/// data do not support.
fn quotable(q: &QuantityResult) -> Option<&crate::assess::Uncertainty> {
    q.uncertainty
        .as_ref()
        .filter(|_| q.governing.as_ref().is_some_and(|g| g.demonstrated))
}

fn fail(study: &Study, r: &Reference, message: String) -> StudyError {
    StudyError {
        file: study.path.clone(),
        key: format!("reference_data.{}", r.name),
        line: None,
        column: None,
        message,
    }
}

/// Runs every comparison of a study. `quantities` are the assessed quantities, in study order.
/// The warnings of the pointwise estimates go into each comparison's `point_warnings`, and a
/// summary line per comparison into `warnings` (`comparison_points_not_demonstrated`,
/// `comparison_point_warnings`).
pub fn run(
    study: &Study,
    quantities: &[QuantityResult],
    settings: &ThreeGridSettings,
    warnings: &mut Vec<Warning>,
) -> Result<Vec<ComparisonResult>, StudyError> {
    let mut out = Vec::new();
    for r in &study.references {
        let (u_abs, u_rel) = match r.u_input {
            Some(AbsOrPercent::Absolute(u)) => (u, 0.0),
            Some(AbsOrPercent::Relative(f)) => (0.0, f),
            None => (0.0, 0.0),
        };
        let cs = CompareSettings {
            divisor: study.settings.validation_divisor,
            coverage: study.settings.coverage_factor,
            u_input: u_abs,
            u_input_relative: u_rel,
            normalise: r.normalise,
        };
        let meas: Vec<Measured> = r
            .points
            .iter()
            .map(|&(x, value, u)| Measured { x, value, u })
            .collect();
        match r.target {
            ReferenceTarget::Quantity(qi) => {
                let q = &quantities[qi];
                let s = q.values[0];
                let sim = [Simulated {
                    x: 0.0,
                    value: s,
                    uncertainty: quotable(q).map(|u| u.absolute),
                    standard: quotable(q).map(|u| u.standard),
                }];
                let c = compare(&sim, &meas, s, &cs).map_err(|e| fail(study, r, e))?;
                out.push(ComparisonResult {
                    name: r.name.clone(),
                    kind: "quantity",
                    response: None,
                    comparison: c,
                    point_warnings: Vec::new(),
                    mean_order: None,
                    median_order: None,
                    order_points: 0,
                });
            }
            ReferenceTarget::Sweep(si, ri) => {
                let sw = &study.sweeps[si];
                let meshes: Vec<_> = sw
                    .mesh_indices
                    .iter()
                    .map(|&i| study.meshes[i].clone())
                    .collect();
                let kind = sw
                    .band
                    .as_ref()
                    .map_or(sw.interpolation, |b| b.interpolation);
                let interps: Vec<Interpolant> = sw
                    .curves
                    .iter()
                    .map(|c| Interpolant::new(&c.x, &c.responses[ri], kind))
                    .collect::<Result<_, _>>()
                    .map_err(|e| fail(study, r, e.to_string()))?;
                let mut sim = Vec::with_capacity(meas.len());
                let mut tally = Tally::default();
                let mut orders = Vec::new();
                for m in &meas {
                    let values: Option<Vec<f64>> = interps.iter().map(|f| f.eval(m.x)).collect();
                    let values = values.ok_or_else(|| {
                        fail(
                            study,
                            r,
                            format!(
                                "the measured point at {} = {} lies outside the range common to all meshes: the simulation cannot be compared there",
                                sw.x, m.x
                            ),
                        )
                    })?;
                    let mut raised = Vec::new();
                    let q = quantity(
                        "",
                        Role::ComparisonPoint {
                            comparison: r.name.clone(),
                            x: m.x,
                        },
                        None,
                        &meshes,
                        &values,
                        settings,
                        study.settings.estimator,
                        &mut raised,
                    );
                    let codes = point_codes(&q, &raised);
                    tally.point(codes.iter().map(String::as_str), m.x);
                    if let Some(g) = q.governing.as_ref().filter(|g| g.demonstrated) {
                        orders.extend(g.order);
                    }
                    sim.push(Simulated {
                        x: m.x,
                        value: values[0],
                        uncertainty: quotable(&q).map(|u| u.absolute),
                        standard: quotable(&q).map(|u| u.standard),
                    });
                }
                let peak = sw.curves[0].responses[ri]
                    .iter()
                    .copied()
                    .fold(f64::NEG_INFINITY, f64::max);
                let c = compare(&sim, &meas, peak, &cs).map_err(|e| fail(study, r, e))?;
                let point_warnings = tally.finish();
                warnings.extend(band_point_warnings(
                    &point_warnings,
                    meas.len(),
                    &sw.x,
                    &r.name,
                    "comparison",
                ));
                out.push(ComparisonResult {
                    name: r.name.clone(),
                    kind: "sweep",
                    response: Some(sw.responses[ri].clone()),
                    comparison: c,
                    point_warnings,
                    mean_order: point_warnings::mean(&orders),
                    order_points: orders.len(),
                    median_order: point_warnings::median(orders),
                });
            }
        }
    }
    Ok(out)
}
