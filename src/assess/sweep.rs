//! Sweeps: the breakdown x and the reference of every mesh, each estimated like a scalar
//! quantity, and the uncertainty band along a response curve at common abscissae.

use super::partial::{
    quantity_not_computed, MeshNotComputed, NotComputed, BAND_NOT_COMPUTED,
    BAND_POINTS_OUTSIDE_RANGE, BREAKDOWN_NOT_COMPUTED, REFERENCE_NOT_COMPUTED,
};
use super::{quantity, QuantityResult, Role};
use crate::estimate::three_grid::ThreeGridSettings;
use crate::estimate::Convergence;
use crate::grid::Mesh;
use crate::machine::{DerivedPoint, Mode};
use crate::point_warnings::{self, PointWarning, Tally, NOT_DEMONSTRATED, ORDER_AT_BOUND};
use crate::study::raw::EstimatorChoice;
use crate::study::sweep::{Abscissa, BandAt, Curve, Sweep};
use crate::study::StudyError;
use crate::sweep::{
    self, find_breakdown_with, DropRule, Interpolant, Interpolation, Persistence, ReferenceKind,
};
use crate::warning::Warning;
use serde::Serialize;
use std::path::Path;

/// One mesh's curve as reported.
#[derive(Debug, Clone, Serialize)]
pub struct CurveResult {
    /// Mesh name.
    pub mesh: String,
    /// Number of points.
    pub points: usize,
    /// Abscissa range [lowest, highest].
    pub x_range: [f64; 2],
    /// Abscissa values, increasing.
    pub x: Vec<f64>,
    /// Response values, one list per response, aligned with `x`.
    pub responses: Vec<Vec<f64>>,
    /// Derived machine quantities per point (raw sweeps only), aligned with `x`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub derived: Option<Vec<DerivedPoint>>,
    /// Per response, each point's U_I when the curve was read from a monitor history (the
    /// statistical uncertainty of the point's mean with its drift), aligned with `x`.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub noise: Vec<Vec<Option<f64>>>,
    /// The NPSH of every point, m, aligned with `x`, when a breakdown is read against NPSH
    /// (derived from raw monitors, an `npsh` column, or σ·H): the abscissa its curve is drawn
    /// against.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub npsh: Option<Vec<f64>>,
}

/// One mesh's breakdown.
#[derive(Debug, Clone, Serialize)]
pub struct MeshBreakdown {
    /// Mesh name.
    pub mesh: String,
    /// Breakdown abscissa.
    pub x: f64,
    /// Non-cavitating reference of the response.
    pub reference: f64,
    /// Threshold the response fell below.
    pub threshold: f64,
    /// Sweep points either side of the crossing [below, at or above].
    pub bracket: [f64; 2],
    /// Points averaged for a plateau reference.
    pub points_in_plateau: Option<usize>,
    /// Consecutive points below the threshold from the crossing down.
    pub points_below: usize,
    /// `false` when the sweep ended before the persistence rule was met (breakdown taken at
    /// the crossing, unconfirmed).
    pub confirmed: bool,
    /// Abscissae of the points that dipped below the threshold above breakdown and came back
    /// (one list per dip, highest first); they did not set breakdown.
    pub ignored_dips: Vec<Vec<f64>>,
}

/// A breakdown definition and its results.
#[derive(Debug, Clone, Serialize)]
pub struct BreakdownResult {
    /// The response.
    pub response: String,
    /// The drop: a fraction of the reference when `relative`, else in the response's unit.
    pub drop: f64,
    /// Whether the drop is relative to the reference.
    pub relative: bool,
    /// The reference rule.
    pub reference_rule: ReferenceKind,
    /// What breakdown is read against: the sweep's abscissa name, or `npsh`.
    pub abscissa: String,
    /// The persistence rule: `points` consecutive points below the threshold over an
    /// abscissa span of at least `span`.
    pub persistence: Persistence,
    /// Per mesh, finest first (the meshes on which breakdown was read).
    pub per_mesh: Vec<MeshBreakdown>,
    /// The meshes on which breakdown could not be read, finest first, and why (present only
    /// when there are some; the breakdown is then not estimated over the meshes).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub per_mesh_not_computed: Vec<MeshNotComputed>,
    /// The breakdown abscissa as a quantity over the meshes (name `<sweep>.breakdown.<response>`).
    pub x_estimate: QuantityResult,
    /// The reference as a quantity over the meshes (name `<sweep>.reference.<response>`).
    pub reference_estimate: QuantityResult,
}

/// One point of an uncertainty band.
#[derive(Debug, Clone, Serialize)]
pub struct BandPoint {
    /// Abscissa.
    pub x: f64,
    /// Finest mesh's interpolated value.
    pub value: f64,
    /// Extrapolated value (`None` when it does not exist).
    pub extrapolated: Option<f64>,
    /// Observed order of the governing estimate.
    pub order: Option<f64>,
    /// Absolute uncertainty (`None` when divergent).
    pub absolute: Option<f64>,
    /// value − U.
    pub lower: Option<f64>,
    /// value + U.
    pub upper: Option<f64>,
    /// Convergence class.
    pub convergence: Option<Convergence>,
    /// Whether the data demonstrate convergence at this point (the governing record's
    /// `demonstrated`: `false` when it diverges, when there is no estimate, or when a
    /// `convergence_not_demonstrated` rule holds; then U is not quotable).
    pub demonstrated: bool,
    /// Codes of the warnings the point's estimate raised, each once, in the order of
    /// [`crate::point_warnings::rank`] (the band's `point_warnings` aggregates them).
    pub warnings: Vec<String>,
    /// The finest mesh's U_I at this abscissa, when its curve was read from a monitor
    /// history (linear between its points); `absolute` includes it by root-sum-square.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub iterative: Option<f64>,
}

/// The U_I of response `ri` of a curve read from a monitor history at abscissa `x`: the
/// point's own where `x` is one, else linear between the two points around it; `None` for
/// curves without noise or outside them.
pub fn noise_at(c: &crate::study::sweep::Curve, ri: usize, x: f64) -> Option<f64> {
    let n = c.noise.get(ri)?;
    let i = c.x.iter().position(|xi| *xi >= x)?;
    if c.x[i].total_cmp(&x).is_eq() {
        return n.get(i).copied().flatten();
    }
    let j = i.checked_sub(1)?;
    let (a, b) = (n.get(j).copied().flatten()?, n.get(i).copied().flatten()?);
    let t = (x - c.x[j]) / (c.x[i] - c.x[j]);
    Some(a + t * (b - a))
}

/// The U_I of a breakdown abscissa on a curve read from a monitor history: the response's
/// noise where it crosses the threshold, over the curve's slope there, |U_I / (dR/dx)|
/// (first-order propagation; the slope from the two points around the crossing).
fn breakdown_noise(c: &crate::study::sweep::Curve, ri: usize, x: f64) -> Option<f64> {
    let y = c.responses.get(ri)?;
    let i = c.x.iter().position(|xi| *xi >= x)?;
    let j = if i == 0 { 1 } else { i - 1 };
    let (a, b) = (j.min(i), j.max(i));
    let slope = (y.get(b)? - y.get(a)?) / (c.x.get(b)? - c.x.get(a)?);
    let noise = noise_at(c, ri, x)?;
    let d = (noise / slope).abs();
    (d.is_finite() && slope != 0.0).then_some(d)
}

/// Counts and shares of the convergence classes along a band.
#[derive(Debug, Clone, Default, Serialize)]
pub struct ClassCounts {
    /// Monotonic points.
    pub monotonic: usize,
    /// Oscillatory points.
    pub oscillatory: usize,
    /// Divergent points.
    pub divergent: usize,
    /// Points without change.
    pub no_change: usize,
    /// Points without an estimate.
    pub none: usize,
}

/// Summary of a band.
#[derive(Debug, Clone, Serialize)]
pub struct BandSummary {
    /// Number of points.
    pub points: usize,
    /// Points per class.
    pub classes: ClassCounts,
    /// Share of monotonic points, 0–1.
    pub share_monotonic: f64,
    /// Share of oscillatory points.
    pub share_oscillatory: f64,
    /// Share of divergent points.
    pub share_divergent: f64,
    /// Mean of U/|value| over points with an uncertainty and a nonzero value.
    pub mean_relative: Option<f64>,
    /// Largest U/|value|.
    pub max_relative: Option<f64>,
    /// Abscissa of the largest relative uncertainty.
    pub max_relative_at: Option<f64>,
    /// Average observed order (Celik et al. 2008 report the average order along a profile)
    /// over the points whose convergence is demonstrated: orders on an end of their search,
    /// orders not found and orders of points that do not demonstrate convergence are left out,
    /// so that orders stuck on a bound cannot inflate it.
    pub mean_order: Option<f64>,
    /// Median observed order over the same points.
    pub median_order: Option<f64>,
    /// Number of points whose order enters the mean and the median.
    pub order_points: usize,
    /// The variation of the response along the band: the largest minus the smallest
    /// finest-mesh value over the band points (`None` without points).
    pub variation: Option<f64>,
    /// The abscissae of the points whose U exceeds [`Self::variation`]: there the band cannot
    /// tell the curve's shape apart (warning `band_wider_than_variation`; docs/method.md,
    /// "Uncertainty too wide to conclude").
    pub wider_than_variation: Vec<f64>,
}

/// The abscissae of the band points whose U exceeds the variation of the response along the
/// band (largest minus smallest value of the finest mesh). A band without variation (every
/// value equal) has none: its shape is flat, and U is judged by the quantity limits alone.
pub fn wider_than_variation(points: &[BandPoint]) -> (Option<f64>, Vec<f64>) {
    let (lo, hi) = points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), p| {
            (l.min(p.value), h.max(p.value))
        });
    if points.is_empty() {
        return (None, Vec::new());
    }
    let variation = hi - lo;
    let wide = if variation > 0.0 {
        points
            .iter()
            .filter(|p| p.absolute.is_some_and(|u| u > variation))
            .map(|p| p.x)
            .collect()
    } else {
        Vec::new()
    };
    (Some(variation), wide)
}

/// The band along one response.
#[derive(Debug, Clone, Serialize)]
pub struct BandResult {
    /// The response.
    pub response: String,
    /// Interpolation used to bring every mesh to the common abscissae.
    pub interpolation: Interpolation,
    /// `fine` or `values`.
    pub at: &'static str,
    /// The points, increasing x.
    pub points: Vec<BandPoint>,
    /// Summary.
    pub summary: BandSummary,
    /// The points' warnings per code: how many points raised it and the first abscissae.
    pub point_warnings: Vec<PointWarning<f64>>,
    /// Abscissae asked for (`at`) outside the range common to all meshes, skipped (present
    /// only when there are some).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub points_outside_range: Vec<f64>,
    /// Why the band could not be formed (present only then; `points` is empty).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub not_computed: Option<NotComputed>,
}

/// A sweep's results.
#[derive(Debug, Clone, Serialize)]
pub struct SweepResult {
    /// Sweep name.
    pub name: String,
    /// Abscissa name.
    pub x: String,
    /// Response names.
    pub responses: Vec<String>,
    /// Interpolation used for breakdowns.
    pub interpolation: Interpolation,
    /// Machine mode of a raw sweep.
    pub mode: Option<Mode>,
    /// Meshes covered, finest first.
    pub meshes: Vec<String>,
    /// Common abscissa range of all meshes [lowest, highest].
    pub overlap: [f64; 2],
    /// Curves, finest first.
    pub curves: Vec<CurveResult>,
    /// Breakdowns.
    pub breakdown: Vec<BreakdownResult>,
    /// Band.
    pub band: Option<BandResult>,
}

/// What a mesh without breakdown means for the estimate over the meshes (docs/method.md §6).
const NOT_ESTIMATED: &str = "the breakdown is not estimated over the meshes: a mesh without \
breakdown in the swept range gives a bound, not a value, and an estimate from the other meshes \
would hide it; extend that mesh's sweep";

fn input_error(file: &Path, key: String, message: String) -> StudyError {
    StudyError {
        file: file.to_path_buf(),
        key,
        line: None,
        column: None,
        message,
    }
}

/// Assesses one sweep over its meshes (`meshes` are the study's meshes, finest first).
pub fn assess_sweep(
    s: &Sweep,
    meshes: &[Mesh],
    settings: &ThreeGridSettings,
    estimator: EstimatorChoice,
    file: &Path,
    warnings: &mut Vec<Warning>,
) -> Result<SweepResult, StudyError> {
    let sub: Vec<Mesh> = s.mesh_indices.iter().map(|&i| meshes[i].clone()).collect();
    let ranges: Vec<(f64, f64)> = s
        .curves
        .iter()
        .map(|c| (c.x[0], c.x[c.x.len() - 1]))
        .collect();
    let (lo, hi) = sweep::overlap(&ranges).ok_or_else(|| {
        input_error(
            file,
            format!("sweeps.{}.data", s.name),
            "the meshes' ranges do not overlap".into(),
        )
    })?;
    let mut breakdown = Vec::new();
    for (bi, b) in s.breakdown.iter().enumerate() {
        let key = format!("sweeps.{}.breakdown[{bi}]", s.name);
        let mut per_mesh = Vec::new();
        let abscissa = match b.abscissa {
            Abscissa::X => s.x.as_str(),
            Abscissa::Npsh => "npsh",
        };
        let subject = format!("{}.breakdown.{}", s.name, b.response);
        let rsubject = format!("{}.reference.{}", s.name, b.response);
        let mut failed: Vec<MeshNotComputed> = Vec::new();
        // Per curve: the reference when it was formed, for the reference's estimate.
        let mut refs: Vec<Option<f64>> = Vec::with_capacity(s.curves.len());
        for c in &s.curves {
            let y = &c.responses[b.response_index];
            let xs = match (b.abscissa, &c.npsh) {
                (Abscissa::X, _) => &c.x,
                (Abscissa::Npsh, Some(n)) => n,
                (Abscissa::Npsh, None) => {
                    let reason = "no NPSH was read for this mesh".to_string();
                    warnings.push(
                        Warning::new(
                            BREAKDOWN_NOT_COMPUTED,
                            format!("mesh `{}`: {reason}; {NOT_ESTIMATED}", c.mesh),
                        )
                        .about(&subject),
                    );
                    failed.push(MeshNotComputed {
                        mesh: c.mesh.clone(),
                        code: BREAKDOWN_NOT_COMPUTED.to_string(),
                        reason,
                        reference: None,
                    });
                    refs.push(None);
                    continue;
                }
            };
            let r = match find_breakdown_with(
                xs,
                y,
                &b.reference,
                &b.drop,
                s.interpolation,
                &b.persistence,
            ) {
                Ok(r) => r,
                Err(e) if e.is_local() => {
                    warnings.push(
                        Warning::new(
                            BREAKDOWN_NOT_COMPUTED,
                            format!(
                                "mesh `{}`, response `{}` against `{abscissa}`: {e}; {NOT_ESTIMATED}",
                                c.mesh, b.response
                            ),
                        )
                        .about(&subject),
                    );
                    failed.push(MeshNotComputed {
                        mesh: c.mesh.clone(),
                        code: BREAKDOWN_NOT_COMPUTED.to_string(),
                        reason: e.short(),
                        reference: e.reference(),
                    });
                    refs.push(e.reference());
                    continue;
                }
                Err(e) => {
                    return Err(input_error(
                        file,
                        key.clone(),
                        format!(
                            "mesh `{}`, response `{}` against `{abscissa}`: {e}",
                            c.mesh, b.response
                        ),
                    ))
                }
            };
            breakdown_warnings(c, xs, abscissa, &b.persistence, &r, &subject, warnings);
            refs.push(Some(r.reference));
            per_mesh.push(MeshBreakdown {
                mesh: c.mesh.clone(),
                x: r.x,
                reference: r.reference,
                threshold: r.threshold,
                bracket: [r.bracket.0, r.bracket.1],
                points_in_plateau: r.points_in_plateau,
                points_below: r.points_below,
                confirmed: r.confirmed,
                ignored_dips: r.ignored_dips.iter().map(|d| d.x.clone()).collect(),
            });
        }
        let role_b = Role::Breakdown {
            sweep: s.name.clone(),
            response: b.response.clone(),
        };
        let role_r = Role::Reference {
            sweep: s.name.clone(),
            response: b.response.clone(),
        };
        let unit = match b.abscissa {
            Abscissa::X => s.x.as_str(),
            Abscissa::Npsh => "m",
        };
        let x_estimate = if failed.is_empty() {
            let bx: Vec<f64> = per_mesh.iter().map(|m| m.x).collect();
            let mut q = quantity(
                &subject,
                role_b,
                Some(unit),
                &sub,
                &bx,
                settings,
                estimator,
                warnings,
            );
            // The finest curve's noise moves its crossing (read against x only: NPSH is
            // derived per point).
            let noise = match b.abscissa {
                Abscissa::X => s
                    .curves
                    .first()
                    .and_then(|c| breakdown_noise(c, b.response_index, bx[0])),
                Abscissa::Npsh => None,
            };
            if let (Some(u), Some(n)) = (&q.uncertainty, noise) {
                q.uncertainty = Some(super::govern::with_iterative(u, n));
            }
            q
        } else {
            quantity_not_computed(
                &subject,
                role_b,
                Some(unit),
                NotComputed::new(
                    BREAKDOWN_NOT_COMPUTED,
                    failed
                        .iter()
                        .map(|f| format!("no breakdown on mesh {} ({})", f.mesh, f.reason))
                        .collect::<Vec<_>>()
                        .join("; "),
                ),
            )
        };
        let reference_estimate = match refs.iter().copied().collect::<Option<Vec<f64>>>() {
            Some(values) => quantity(
                &rsubject, role_r, None, &sub, &values, settings, estimator, warnings,
            ),
            None => {
                // Every curve without a reference failed, and is listed in `failed`.
                let reason = failed
                    .iter()
                    .filter(|f| f.reference.is_none())
                    .map(|f| format!("no reference on mesh {} ({})", f.mesh, f.reason))
                    .collect::<Vec<_>>()
                    .join("; ");
                warnings.push(
                    Warning::new(
                        REFERENCE_NOT_COMPUTED,
                        format!("{reason}: the reference is not estimated over the meshes (see {BREAKDOWN_NOT_COMPUTED})"),
                    )
                    .about(&rsubject),
                );
                quantity_not_computed(
                    &rsubject,
                    role_r,
                    None,
                    NotComputed::new(REFERENCE_NOT_COMPUTED, reason),
                )
            }
        };
        let (mut x_estimate, mut reference_estimate) = (x_estimate, reference_estimate);
        super::partial::mark_failed(&mut x_estimate, warnings);
        super::partial::mark_failed(&mut reference_estimate, warnings);
        breakdown.push(BreakdownResult {
            response: b.response.clone(),
            drop: match b.drop {
                DropRule::Relative(v) | DropRule::Absolute(v) => v,
            },
            relative: matches!(b.drop, DropRule::Relative(_)),
            reference_rule: b.reference,
            abscissa: abscissa.to_string(),
            persistence: b.persistence,
            per_mesh,
            per_mesh_not_computed: failed,
            x_estimate,
            reference_estimate,
        });
    }
    let band = s
        .band
        .as_ref()
        .map(|b| band(s, b, &sub, (lo, hi), settings, estimator, warnings));
    Ok(SweepResult {
        name: s.name.clone(),
        x: s.x.clone(),
        responses: s.responses.clone(),
        interpolation: s.interpolation,
        mode: s.mode,
        meshes: sub.iter().map(|m| m.name.clone()).collect(),
        overlap: [lo, hi],
        curves: s
            .curves
            .iter()
            .map(|c| CurveResult {
                mesh: c.mesh.clone(),
                points: c.x.len(),
                x_range: [c.x[0], c.x[c.x.len() - 1]],
                x: c.x.clone(),
                responses: c.responses.clone(),
                derived: c.derived.clone(),
                noise: c.noise.clone(),
                npsh: c.npsh.clone(),
            })
            .collect(),
        breakdown,
        band,
    })
}

/// The point names (`line 12`, `point 3`) of the abscissae `at` on curve `c` read against
/// `xs` (the curve's x or NPSH, aligned with its labels).
fn point_names(c: &Curve, xs: &[f64], at: &[f64]) -> String {
    at.iter()
        .map(|v| {
            let label = xs
                .iter()
                .position(|x| x.total_cmp(v).is_eq())
                .and_then(|i| c.labels.get(i))
                .map_or(String::new(), |l| format!(" ({l})"));
            format!("{}{label}", sweep::fmt_num(*v))
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// Warnings about one mesh's breakdown: dips passed over, a breakdown the sweep's end left
/// unconfirmed.
fn breakdown_warnings(
    c: &Curve,
    xs: &[f64],
    abscissa: &str,
    rule: &Persistence,
    r: &sweep::Breakdown,
    subject: &str,
    warnings: &mut Vec<Warning>,
) {
    for d in &r.ignored_dips {
        warnings.push(
            Warning::new(
                "breakdown_dip_ignored",
                format!(
                    "mesh `{}`: the response fell below the threshold {} at `{abscissa}` = {} and came back above it; not taken as breakdown (the rule asks {} below the threshold)",
                    c.mesh,
                    sweep::fmt_num(r.threshold),
                    point_names(c, xs, &d.x),
                    sweep::breakdown::persistence_text(rule),
                ),
            )
            .about(subject),
        );
    }
    if !r.confirmed {
        warnings.push(
            Warning::new(
                "breakdown_unconfirmed",
                format!(
                    "mesh `{}`: only {} point{} below the threshold before the sweep ends (crossing at `{abscissa}` = {}); the rule asks {} below it, so breakdown is taken there unconfirmed: extend the sweep to lower `{abscissa}`",
                    c.mesh,
                    r.points_below,
                    if r.points_below == 1 { "" } else { "s" },
                    sweep::fmt_num(r.x),
                    sweep::breakdown::persistence_text(rule),
                ),
            )
            .about(subject),
        );
    }
}

/// A band with no points, recording why it could not be formed.
fn band_not_computed(
    b: &crate::study::sweep::BandSpec,
    subject: &str,
    reason: String,
    skipped: Vec<f64>,
    warnings: &mut Vec<Warning>,
) -> BandResult {
    warnings.push(Warning::new(BAND_NOT_COMPUTED, reason.clone()).about(subject));
    BandResult {
        response: b.response.clone(),
        interpolation: b.interpolation,
        at: match b.at {
            BandAt::Fine => "fine",
            BandAt::Values(_) => "values",
        },
        points: Vec::new(),
        summary: BandSummary {
            points: 0,
            classes: ClassCounts::default(),
            share_monotonic: 0.0,
            share_oscillatory: 0.0,
            share_divergent: 0.0,
            mean_relative: None,
            max_relative: None,
            max_relative_at: None,
            mean_order: None,
            median_order: None,
            order_points: 0,
            variation: None,
            wider_than_variation: Vec::new(),
        },
        point_warnings: Vec::new(),
        points_outside_range: skipped,
        not_computed: Some(NotComputed::new(BAND_NOT_COMPUTED, reason)),
    }
}

fn band(
    s: &Sweep,
    b: &crate::study::sweep::BandSpec,
    sub: &[Mesh],
    (lo, hi): (f64, f64),
    settings: &ThreeGridSettings,
    estimator: EstimatorChoice,
    warnings: &mut Vec<Warning>,
) -> BandResult {
    let subject = format!("{}.band.{}", s.name, b.response);
    let interps: Vec<Interpolant> = match s
        .curves
        .iter()
        .map(|c| {
            Interpolant::new(&c.x, &c.responses[b.response_index], b.interpolation)
                .map_err(|e| format!("mesh {}: {e}", c.mesh))
        })
        .collect::<Result<_, _>>()
    {
        Ok(i) => i,
        Err(e) => {
            return band_not_computed(
                b,
                &subject,
                format!("the curves cannot be interpolated ({e})"),
                Vec::new(),
                warnings,
            )
        }
    };
    let mut skipped = Vec::new();
    let xs: Vec<f64> = match &b.at {
        BandAt::Fine => {
            let ranges: Vec<(f64, f64)> = s
                .curves
                .iter()
                .map(|c| (c.x[0], c.x[c.x.len() - 1]))
                .collect();
            sweep::common_abscissae(&ranges, &s.curves[0].x)
        }
        BandAt::Values(v) => {
            let mut v = v.clone();
            v.sort_by(f64::total_cmp);
            v.dedup();
            let (inside, outside): (Vec<f64>, Vec<f64>) =
                v.into_iter().partition(|x| *x >= lo && *x <= hi);
            skipped = outside;
            inside
        }
    };
    if !skipped.is_empty() {
        warnings.push(
            Warning::new(
                BAND_POINTS_OUTSIDE_RANGE,
                format!(
                    "{} = {} lie{} outside the range common to all meshes, {} to {}: skipped, the other band points are estimated",
                    s.x,
                    skipped.iter().map(|x| sweep::fmt_num(*x)).collect::<Vec<_>>().join(", "),
                    if skipped.len() == 1 { "s" } else { "" },
                    sweep::fmt_num(lo),
                    sweep::fmt_num(hi)
                ),
            )
            .about(&subject),
        );
    }
    let mut points = Vec::with_capacity(xs.len());
    let mut classes = ClassCounts::default();
    let mut rel_sum = 0.0;
    let mut rel_n = 0usize;
    let mut max_rel: Option<(f64, f64)> = None;
    let mut orders = Vec::new();
    let mut tally = Tally::default();
    for &x in &xs {
        let values: Option<Vec<f64>> = interps.iter().map(|f| f.eval(x)).collect();
        let Some(values) = values else { continue };
        let mut point_warnings = Vec::new();
        let q = quantity(
            "",
            Role::BandPoint {
                sweep: s.name.clone(),
                response: b.response.clone(),
                x,
            },
            None,
            sub,
            &values,
            settings,
            estimator,
            &mut point_warnings,
        );
        let mut q = q;
        let noise = s
            .curves
            .first()
            .and_then(|c| noise_at(c, b.response_index, x));
        if let (Some(u), Some(n)) = (&q.uncertainty, noise) {
            q.uncertainty = Some(super::govern::with_iterative(u, n));
        }
        let codes = point_codes(&q, &point_warnings);
        tally.point(codes.iter().map(String::as_str), x);
        let g = q.governing.as_ref();
        let demonstrated = g.is_some_and(|g| g.demonstrated);
        let (extrapolated, order) = (g.and_then(|g| g.extrapolated), g.and_then(|g| g.order));
        match q.convergence {
            Some(Convergence::Monotonic) => classes.monotonic += 1,
            Some(Convergence::Oscillatory) => classes.oscillatory += 1,
            Some(Convergence::Divergent) => classes.divergent += 1,
            Some(Convergence::NoChange) => classes.no_change += 1,
            Some(Convergence::Undetermined) | None => classes.none += 1,
        }
        // Orders on a bound, not found or not demonstrated are left out of mean and median.
        if let Some(p) = order.filter(|_| demonstrated) {
            orders.push(p);
        }
        let u = q.uncertainty.as_ref().map(|u| u.absolute);
        if let (Some(u), true) = (u, values[0] != 0.0) {
            let r = u / values[0].abs();
            rel_sum += r;
            rel_n += 1;
            if max_rel.is_none_or(|(m, _)| r > m) {
                max_rel = Some((r, x));
            }
        }
        points.push(BandPoint {
            x,
            value: values[0],
            extrapolated,
            order,
            absolute: u,
            lower: u.map(|u| values[0] - u),
            upper: u.map(|u| values[0] + u),
            convergence: q.convergence,
            demonstrated,
            warnings: codes,
            iterative: noise,
        });
    }
    if points.is_empty() {
        return band_not_computed(
            b,
            &subject,
            format!(
                "no band abscissa inside the range common to all meshes, {} to {}",
                sweep::fmt_num(lo),
                sweep::fmt_num(hi)
            ),
            skipped,
            warnings,
        );
    }
    let n = points.len() as f64;
    if classes.divergent > 0 {
        warnings.push(
            Warning::new(
                "band_divergent_points",
                format!(
                    "{} of {} band points diverge: no uncertainty is given there",
                    classes.divergent,
                    points.len()
                ),
            )
            .about(&format!("{}.band.{}", s.name, b.response)),
        );
    }
    let point_warnings = tally.finish();
    warnings.extend(band_point_warnings(
        &point_warnings,
        points.len(),
        &s.x,
        &format!("{}.band.{}", s.name, b.response),
        "band",
    ));
    let (variation, wide) = wider_than_variation(&points);
    if let (Some(v), false) = (variation, wide.is_empty()) {
        warnings.push(
            Warning::new(
                crate::warning::BAND_WIDER_THAN_VARIATION,
                format!(
                    "U exceeds the variation of {} along the band ({}, the largest minus the smallest value of the finest mesh) at {} of {} points ({} = {}): the band cannot tell the curve's shape apart there, and its summary supports no conclusion about it",
                    b.response,
                    sweep::fmt_num(v),
                    wide.len(),
                    points.len(),
                    s.x,
                    first_places(&wide)
                ),
            )
            .about(&subject),
        );
    }
    BandResult {
        response: b.response.clone(),
        interpolation: b.interpolation,
        at: match b.at {
            BandAt::Fine => "fine",
            BandAt::Values(_) => "values",
        },
        summary: BandSummary {
            points: points.len(),
            share_monotonic: classes.monotonic as f64 / n,
            share_oscillatory: classes.oscillatory as f64 / n,
            share_divergent: classes.divergent as f64 / n,
            classes,
            mean_relative: (rel_n > 0).then(|| rel_sum / rel_n as f64),
            max_relative: max_rel.map(|m| m.0),
            max_relative_at: max_rel.map(|m| m.1),
            mean_order: point_warnings::mean(&orders),
            order_points: orders.len(),
            median_order: point_warnings::median(orders),
            variation,
            wider_than_variation: wide,
        },
        points,
        point_warnings,
        points_outside_range: skipped,
        not_computed: None,
    }
}

/// The first five abscissae of a list, then "… and N more".
pub(crate) fn first_places(xs: &[f64]) -> String {
    let shown: Vec<String> = xs.iter().take(5).map(|x| sweep::fmt_num(*x)).collect();
    match xs.len().saturating_sub(5) {
        0 => shown.join(", "),
        more => format!("{} … and {more} more", shown.join(", ")),
    }
}

/// The codes of the warnings one point's estimate raised, each once, ordered by
/// [`point_warnings::rank`], with [`ORDER_AT_BOUND`] when the three-mesh order sits on an end
/// of its search (that estimate has no warning of its own for it).
pub(crate) fn point_codes(q: &QuantityResult, raised: &[Warning]) -> Vec<String> {
    let mut codes: Vec<String> = Vec::new();
    let at_bound = q
        .three_grid
        .as_ref()
        .is_some_and(|t| t.estimate.order_at_bound);
    for c in raised
        .iter()
        .map(|w| w.code.as_str())
        .chain(at_bound.then_some(ORDER_AT_BOUND))
    {
        if !codes.iter().any(|k| k == c) {
            codes.push(c.to_string());
        }
    }
    codes.sort_by(|a, b| (point_warnings::rank(a), a).cmp(&(point_warnings::rank(b), b)));
    codes
}

/// The study-level lines for the point warnings of a band or a comparison (`kind` `band` or
/// `comparison`): `<kind>_points_not_demonstrated` when convergence is not demonstrated at
/// some points, and `<kind>_point_warnings` summing up every other code, each about `subject`.
pub(crate) fn band_point_warnings(
    list: &[PointWarning<f64>],
    total: usize,
    x: &str,
    subject: &str,
    kind: &str,
) -> Vec<Warning> {
    let total = total as u64;
    let what = format!("{x} = ");
    let place = |v: &f64| format!("{v}");
    let mut out = Vec::new();
    if let Some(nd) = list.iter().find(|w| w.code == NOT_DEMONSTRATED) {
        out.push(
            Warning::new(
                &format!("{kind}_points_not_demonstrated"),
                format!(
                    "{}: the uncertainty there is not quotable, and their orders are left out of the mean and median order",
                    point_warnings::describe(nd, total, &what, place)
                ),
            )
            .about(subject),
        );
    }
    let rest: Vec<String> = list
        .iter()
        .filter(|w| w.code != NOT_DEMONSTRATED)
        .map(|w| point_warnings::describe(w, total, &what, place))
        .collect();
    if !rest.is_empty() {
        out.push(
            Warning::new(
                &format!("{kind}_point_warnings"),
                format!("{kind} points carry warnings: {}", rest.join("; ")),
            )
            .about(subject),
        );
    }
    out
}

#[cfg(test)]
mod tests {
    use crate::report::markup::fixture;

    /// Manufactured band (analytic): on h = 1, 2, 4 every mesh gives φ = 1 + 0.1 x + c h², so
    /// the finest curve varies by 0.1 over x ∈ [0, 1] (to round-off), and at every point the
    /// differences are 3c and 12c: order 2 exactly, δ_RE = c, and U of the order of c.
    fn band_study(c: f64) -> String {
        let curve = |h: f64| {
            let y: Vec<String> = [0.0, 0.25, 0.5, 1.0]
                .iter()
                .map(|x| format!("{}", 1.0 + 0.1 * x + c * h * h))
                .collect();
            format!("{{x: [0, 0.25, 0.5, 1], phi: [{}]}}", y.join(", "))
        };
        format!(
            "format: 1
title: manufactured band
meshes:
  - {{name: h1, size: 1.0}}
  - {{name: h2, size: 2.0}}
  - {{name: h4, size: 4.0}}
sweeps:
  s:
    x: x
    responses: [phi]
    interpolation: linear
    data:
      h1: {}
      h2: {}
      h4: {}
    band: {{response: phi, at: fine}}
",
            curve(1.0),
            curve(2.0),
            curve(4.0)
        )
    }

    #[test]
    fn a_band_wider_than_its_curve_is_flagged_and_a_narrow_one_is_not() {
        // c = 1: δ_RE = 1 at every point, ten times the variation 0.1 (analytic)
        let a = fixture::assess(&band_study(1.0));
        let band = a.sweeps[0].band.as_ref().expect("a band");
        let v = band.summary.variation.expect("a variation");
        assert!((v - 0.1).abs() < 1e-9, "{v}");
        assert!(band
            .points
            .iter()
            .all(|p| p.absolute.is_some_and(|u| u >= 1.0)));
        assert_eq!(band.summary.wider_than_variation, [0.0, 0.25, 0.5, 1.0]);
        assert!(a
            .warnings
            .iter()
            .any(|w| w.code == crate::warning::BAND_WIDER_THAN_VARIATION
                && w.subject.as_deref() == Some("s.band.phi")));
        // gate fails it whatever the limits
        let checks = crate::gate::check(&a, &[]).expect("no limits to resolve");
        assert_eq!(checks.len(), 1);
        assert!(!checks[0].passed);
        assert_eq!(checks[0].target, "s.band.phi");
        // c = 0.001: δ_RE = 0.001, U a few thousandths, well inside 0.1 (analytic)
        let a = fixture::assess(&band_study(0.001));
        let band = a.sweeps[0].band.as_ref().expect("a band");
        assert!(band
            .points
            .iter()
            .all(|p| p.absolute.is_some_and(|u| u < 0.01)));
        assert!(band.summary.wider_than_variation.is_empty());
        assert!(a
            .warnings
            .iter()
            .all(|w| w.code != crate::warning::BAND_WIDER_THAN_VARIATION));
        assert!(crate::gate::check(&a, &[]).expect("no limits").is_empty());
    }

    #[test]
    fn a_flat_band_has_no_points_wider_than_its_variation() {
        use super::{wider_than_variation, BandPoint};
        let p = |x: f64| BandPoint {
            x,
            value: 2.0,
            extrapolated: None,
            order: None,
            absolute: Some(0.5),
            lower: None,
            upper: None,
            convergence: None,
            demonstrated: true,
            warnings: Vec::new(),
            iterative: None,
        };
        assert_eq!(
            wider_than_variation(&[p(0.0), p(1.0)]),
            (Some(0.0), Vec::new())
        );
        assert_eq!(wider_than_variation(&[]), (None, Vec::new()));
    }
}
