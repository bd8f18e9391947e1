//! Comparisons with measurements: the simulation value and its discretisation uncertainty at
//! every measured point, then the V&V 20 comparison of [`crate::compare`].

use super::partial::{NotComputed, COMPARISON_NOT_COMPUTED, COMPARISON_POINTS_OUTSIDE_RANGE};
use super::sweep::{band_point_warnings, point_codes};
use super::{quantity, QuantityResult, Role};
use crate::compare::{compare, CompareSettings, CompareSummary, Comparison, Measured, Simulated};
use crate::estimate::three_grid::ThreeGridSettings;
use crate::point_warnings::{self, PointWarning, Tally};
use crate::study::reference::{AbsOrPercent, Reference, ReferenceTarget};
use crate::study::Study;
use crate::sweep::{fmt_num, Interpolant};
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
    /// `measurement` or `benchmark` (a published reference solution).
    pub origin: crate::study::reference::Origin,
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
    /// Measured abscissae outside the range common to all meshes, skipped (present only when
    /// there are some; the other points are compared).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub points_outside_range: Vec<f64>,
    /// The abscissae of the points that agree with the reference only because of the
    /// numerical uncertainty: |E| ≤ k·u_val, but |E| > k·√(u_input² + u_D²) (warning
    /// `comparison_carried_by_u_num`; docs/method.md, "Uncertainty too wide to conclude").
    /// For a scalar quantity the abscissa is 0. Present only when there are some.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub carried_by_u_num: Vec<f64>,
    /// Why the comparison could not be made (present only then; `points` is empty).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub not_computed: Option<NotComputed>,
}

/// A comparison with no points: the settings it would have used and zero counts.
fn empty(cs: &CompareSettings) -> Comparison {
    Comparison {
        normalised: cs.normalise,
        simulation_peak: None,
        measured_peak: None,
        coverage_factor: cs.coverage,
        divisor: cs.divisor,
        points: Vec::new(),
        summary: CompareSummary {
            points: 0,
            within: 0,
            undecided: 0,
            max_abs_error: 0.0,
            max_abs_error_at: 0.0,
            mean_error: 0.0,
        },
    }
}

/// A comparison that could not be made: warned about (`comparison_not_computed`, subject the
/// comparison) and recorded on the result.
fn not_computed(
    r: &Reference,
    kind: &'static str,
    response: Option<String>,
    cs: &CompareSettings,
    reason: String,
    skipped: Vec<f64>,
    warnings: &mut Vec<Warning>,
) -> ComparisonResult {
    warnings.push(Warning::new(COMPARISON_NOT_COMPUTED, reason.clone()).about(&r.name));
    ComparisonResult {
        name: r.name.clone(),
        origin: r.origin,
        kind,
        response,
        comparison: empty(cs),
        point_warnings: Vec::new(),
        mean_order: None,
        median_order: None,
        order_points: 0,
        points_outside_range: skipped,
        carried_by_u_num: Vec::new(),
        not_computed: Some(NotComputed::new(COMPARISON_NOT_COMPUTED, reason)),
    }
}

/// The uncertainty of a simulated value when it can be quoted: none where convergence is not
/// demonstrated, so that the V&V 20 verdict there is undecided instead of resting on a U the
/// data do not support.
fn quotable(q: &QuantityResult) -> Option<&crate::assess::Uncertainty> {
    q.uncertainty
        .as_ref()
        .filter(|_| q.governing.as_ref().is_some_and(|g| g.demonstrated))
}

/// Runs every comparison of a study. `quantities` are the assessed quantities, in study order.
/// The warnings of the pointwise estimates go into each comparison's `point_warnings`, and a
/// summary line per comparison into `warnings` (`comparison_points_not_demonstrated`,
/// `comparison_point_warnings`). A measured point outside the range common to all meshes is
/// skipped with a warning (`comparison_points_outside_range`); a comparison that cannot be made
/// at all is recorded as not computed (`comparison_not_computed`). Nothing here refuses the
/// study.
pub fn run(
    study: &Study,
    quantities: &[QuantityResult],
    settings: &ThreeGridSettings,
    warnings: &mut Vec<Warning>,
) -> Vec<ComparisonResult> {
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
                match compare(&sim, &meas, s, &cs) {
                    Ok(c) => out.push(ComparisonResult {
                        carried_by_u_num: carried(&c, None, &r.name, warnings),
                        name: r.name.clone(),
                        origin: r.origin,
                        kind: "quantity",
                        response: None,
                        comparison: c,
                        point_warnings: Vec::new(),
                        mean_order: None,
                        median_order: None,
                        order_points: 0,
                        points_outside_range: Vec::new(),
                        not_computed: None,
                    }),
                    Err(e) => out.push(not_computed(
                        r,
                        "quantity",
                        None,
                        &cs,
                        e,
                        Vec::new(),
                        warnings,
                    )),
                }
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
                let response = Some(sw.responses[ri].clone());
                let interps: Vec<Interpolant> = match sw
                    .curves
                    .iter()
                    .map(|c| {
                        Interpolant::new(&c.x, &c.responses[ri], kind)
                            .map_err(|e| format!("mesh {}: {e}", c.mesh))
                    })
                    .collect::<Result<_, _>>()
                {
                    Ok(i) => i,
                    Err(e) => {
                        out.push(not_computed(
                            r,
                            "sweep",
                            response,
                            &cs,
                            format!("the curves cannot be interpolated ({e})"),
                            Vec::new(),
                            warnings,
                        ));
                        continue;
                    }
                };
                let mut sim = Vec::with_capacity(meas.len());
                let mut kept = Vec::with_capacity(meas.len());
                let mut skipped = Vec::new();
                let mut tally = Tally::default();
                let mut orders = Vec::new();
                for m in &meas {
                    let values: Option<Vec<f64>> = interps.iter().map(|f| f.eval(m.x)).collect();
                    let Some(values) = values else {
                        skipped.push(m.x);
                        continue;
                    };
                    kept.push(*m);
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
                if !skipped.is_empty() {
                    let (lo, hi) = common_range(sw);
                    warnings.push(
                        Warning::new(
                            COMPARISON_POINTS_OUTSIDE_RANGE,
                            format!(
                                "the measured point{} at {} = {} lie{} outside the range common to all meshes, {} to {}: the simulation cannot be compared there, so {} skipped; the other points are compared",
                                if skipped.len() == 1 { "" } else { "s" },
                                sw.x,
                                skipped.iter().map(|x| fmt_num(*x)).collect::<Vec<_>>().join(", "),
                                if skipped.len() == 1 { "s" } else { "" },
                                fmt_num(lo),
                                fmt_num(hi),
                                if skipped.len() == 1 { "it is" } else { "they are" },
                            ),
                        )
                        .about(&r.name),
                    );
                }
                if kept.is_empty() {
                    out.push(not_computed(
                        r,
                        "sweep",
                        response,
                        &cs,
                        "no measured point lies inside the range common to all meshes".into(),
                        skipped,
                        warnings,
                    ));
                    continue;
                }
                let c = match compare(&sim, &kept, peak, &cs) {
                    Ok(c) => c,
                    Err(e) => {
                        out.push(not_computed(
                            r, "sweep", response, &cs, e, skipped, warnings,
                        ));
                        continue;
                    }
                };
                let point_warnings = tally.finish();
                warnings.extend(band_point_warnings(
                    &point_warnings,
                    kept.len(),
                    &sw.x,
                    &r.name,
                    "comparison",
                ));
                out.push(ComparisonResult {
                    carried_by_u_num: carried(&c, Some(&sw.x), &r.name, warnings),
                    name: r.name.clone(),
                    origin: r.origin,
                    kind: "sweep",
                    response,
                    comparison: c,
                    point_warnings,
                    mean_order: point_warnings::mean(&orders),
                    order_points: orders.len(),
                    median_order: point_warnings::median(orders),
                    points_outside_range: skipped,
                    not_computed: None,
                });
            }
        }
    }
    out
}

/// The points of a comparison whose agreement rests on the numerical uncertainty: judged
/// within k·u_val, yet |E| > k·√(u_input² + u_D²), so that without u_num they would not agree.
/// Warns once per comparison (`comparison_carried_by_u_num`, about `subject`); `x` names the
/// abscissa of a sweep (`None` for a scalar quantity).
fn carried(
    c: &Comparison,
    x: Option<&str>,
    subject: &str,
    warnings: &mut Vec<Warning>,
) -> Vec<f64> {
    let k = c.coverage_factor;
    let pts: Vec<&crate::compare::ComparedPoint> = c
        .points
        .iter()
        .filter(|p| {
            p.within == Some(true)
                && p.u_num.is_some_and(|u| u > 0.0)
                && p.error.abs() > k * p.u_input.hypot(p.u_measured)
        })
        .collect();
    if pts.is_empty() {
        return Vec::new();
    }
    let xs: Vec<f64> = pts.iter().map(|p| p.x).collect();
    let largest = pts.iter().filter_map(|p| p.u_num).fold(0.0_f64, f64::max);
    let at = x.map_or(String::new(), |x| {
        format!(" ({x} = {})", super::sweep::first_places(&xs))
    });
    warnings.push(
        Warning::new(
            crate::warning::COMPARISON_CARRIED_BY_U_NUM,
            format!(
                "{} of {} point{} agree{} with the reference only because of the numerical uncertainty{at}: |E| exceeds k·√(u_input² + u_D²) there, and u_num (up to {}) makes up the difference; the agreement supports no conclusion until the discretisation uncertainty is reduced",
                xs.len(),
                c.points.len(),
                if c.points.len() == 1 { "" } else { "s" },
                if xs.len() == 1 { "s" } else { "" },
                fmt_num(largest),
            ),
        )
        .about(subject),
    );
    xs
}

/// The abscissa range common to all meshes of a sweep (for messages).
fn common_range(sw: &crate::study::sweep::Sweep) -> (f64, f64) {
    let ranges: Vec<(f64, f64)> = sw
        .curves
        .iter()
        .map(|c| (c.x[0], c.x[c.x.len() - 1]))
        .collect();
    crate::sweep::overlap(&ranges).unwrap_or((f64::NAN, f64::NAN))
}

#[cfg(test)]
mod tests {
    use crate::report::markup::fixture;

    /// drag = 10 + 0.1 h² on h = 1, 2, 4 (analytic manufactured data: order 2, δ_RE = 0.1),
    /// compared with D = 10.0, so E = S − D = 0.1 exactly; k = 2 (the default).
    fn study(u_d: f64) -> String {
        format!(
            "format: 1
title: manufactured comparison
meshes:
  - {{name: h1, size: 1.0}}
  - {{name: h2, size: 2.0}}
  - {{name: h4, size: 4.0}}
quantities:
  drag:
    values: {{h1: 10.1, h2: 10.4, h4: 11.6}}
reference_data:
  drag: {{value: 10.0, u_measured: {u_d}}}
"
        )
    }

    #[test]
    fn an_agreement_that_rests_on_u_num_is_flagged() {
        // u_D = 0.01: k·u_D = 0.02 < |E| = 0.1, so only u_num can make the point agree.
        let a = fixture::assess(&study(0.01));
        let c = &a.comparisons[0];
        let p = &c.comparison.points[0];
        assert!((p.error - 0.1).abs() < 1e-12);
        assert_eq!(p.within, Some(true), "{p:?}");
        assert_eq!(c.carried_by_u_num, [0.0]);
        assert!(a
            .warnings
            .iter()
            .any(|w| w.code == crate::warning::COMPARISON_CARRIED_BY_U_NUM));
        let checks = crate::gate::check(&a, &[]).expect("no limits");
        assert!(checks.iter().any(|c| !c.passed && c.target == "drag"));
        // u_D = 0.06: k·u_D = 0.12 ≥ |E| = 0.1, the reference's own uncertainty covers E.
        let a = fixture::assess(&study(0.06));
        let c = &a.comparisons[0];
        assert_eq!(c.comparison.points[0].within, Some(true));
        assert!(c.carried_by_u_num.is_empty());
        assert!(crate::gate::check(&a, &[]).expect("no limits").is_empty());
    }
}
