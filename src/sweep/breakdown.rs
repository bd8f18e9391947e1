//! Breakdown: the x at which a response first falls a set amount below its reference.
//!
//! Read from a sweep of decreasing x (for a cavitation sweep, decreasing Thoma number σ at
//! fixed duty): the *reference* is the response without cavitation, the *threshold* lies a
//! set *drop* below it, and breakdown is the first crossing of the threshold met when the
//! curve is scanned from the highest x downward. Trade practice (no published source) is a 1 %
//! drop in efficiency for turbine and pump-turbine models; pump acceptance practice uses a
//! 3 % drop in head (NPSH3, as in pump acceptance-test standards such as ISO 9906; from
//! memory).
//!
//! Efficiency can rise a little before it breaks down (a hump). The first crossing *below
//! the threshold* defines breakdown, never the maximum: points above the reference are simply
//! passed over.
//!
//! **Drops are falls.** The response is taken to fall at breakdown, and a drop must be
//! positive. A response that rises at breakdown (a loss, a vapour volume) is not read
//! directly: negate the response (and a [`ReferenceKind::Value`]) before calling, and the
//! breakdown x is the same. Negative drops are refused rather than reinterpreted, so that a
//! sign slip in an input cannot turn into a plausible-looking σ.
//!
//! **Persistence.** A crossing counts only when the response stays below the threshold: the
//! run of consecutive points below it, from the first one down, must hold at least
//! [`Persistence::points`] points and cover an x span of at least [`Persistence::span`]
//! (defaults: 2 points, no span; common practice, no source). A run that comes back to or
//! above the threshold before that is a *dip*: it is passed over and reported in
//! [`Breakdown::ignored_dips`], and the scan goes on below it. A run that reaches the lowest
//! x of the sweep before it is long enough is taken (nothing shows a recovery), with
//! [`Breakdown::confirmed`] `false`, for the caller to warn.
//!
//! The crossing x is solved on the interpolant, inside the interval between the last point
//! at or above the threshold and the first point below it, by bisection to 1e-12 relative
//! (or until the interval is two neighbouring floating-point numbers). Each PCHIP piece is
//! monotone between its knots (see [`super::interp`]), and so is each linear piece, so the
//! curve cannot dip below the threshold inside an earlier interval whose two knots are at or
//! above it: the first crossing of the data is the first crossing of the curve.

use serde::{Deserialize, Serialize};

use super::interp::{Interpolant, Interpolation};
use super::{fmt_num, SweepError};

/// How far below the reference the threshold lies.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DropRule {
    /// A fraction of the reference, `0 < f < 1` (0.01 for a 1 % drop); the reference must be
    /// positive.
    Relative(f64),
    /// An amount in the response's unit, `> 0`.
    Absolute(f64),
}

/// What the response is compared with: its non-cavitating value.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ReferenceKind {
    /// The mean response over the points with `x >= from` (the plateau at high x).
    Plateau {
        /// Lowest x that belongs to the plateau.
        from: f64,
    },
    /// The response at the highest x of the sweep.
    Highest,
    /// A given value.
    Value(f64),
}

/// How long the response must stay below the threshold for a crossing to be breakdown.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Persistence {
    /// Consecutive points below the threshold, the first one included (at least 1; 1 takes
    /// the first point below, as without a persistence rule).
    pub points: usize,
    /// Span of x those points must cover, from the first point below to the last one of the
    /// run (0: no span asked).
    pub span: f64,
}

impl Default for Persistence {
    /// Two points, no span (common practice, no source).
    fn default() -> Self {
        Persistence {
            points: 2,
            span: 0.0,
        }
    }
}

/// Points that fell below the threshold and came back before the persistence rule was met.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Dip {
    /// The x values of the points below the threshold, highest first.
    pub x: Vec<f64>,
    /// The lowest response among them.
    pub lowest: f64,
}

/// Where the response broke down.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Breakdown {
    /// The breakdown x: where the curve crosses the threshold.
    pub x: f64,
    /// The reference response.
    pub reference: f64,
    /// The threshold the response fell below.
    pub threshold: f64,
    /// Number of points averaged for a plateau reference; `None` for the other kinds.
    pub points_in_plateau: Option<usize>,
    /// The two neighbouring sweep x values that bracket the crossing: `(below, at_or_above)`
    /// — the first point below the threshold and the last one at or above it.
    pub bracket: (f64, f64),
    /// Points below the threshold in the run that set breakdown (from the first one down).
    pub points_below: usize,
    /// `false` when the run reached the lowest x of the sweep before it met the persistence
    /// rule: breakdown is taken there, unconfirmed.
    pub confirmed: bool,
    /// Dips above the breakdown that came back above the threshold (highest x first).
    pub ignored_dips: Vec<Dip>,
}

/// Why no breakdown could be read.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum BreakdownError {
    /// The points cannot be interpolated.
    #[error(transparent)]
    Sweep(#[from] SweepError),
    /// The drop is not a positive finite amount (or a relative drop is not below 1).
    #[error("{0}")]
    InvalidDrop(String),
    /// The reference cannot be formed or used.
    #[error("{0}")]
    InvalidReference(String),
    /// The persistence rule is not a count ≥ 1 and a finite span ≥ 0.
    #[error("{0}")]
    InvalidPersistence(String),
    /// The response falls below the threshold only in dips that come back.
    #[error("{}", dips_text(.dips, *.threshold, .persistence))]
    OnlyDips {
        /// The dips, highest x first.
        dips: Vec<Dip>,
        /// The threshold.
        threshold: f64,
        /// The rule they did not meet.
        persistence: Persistence,
        /// The reference.
        reference: f64,
    },
    /// No point lies on the plateau.
    #[error("no sweep point lies on the plateau x >= {}: the highest x is {}; lower the plateau start or extend the sweep to higher x", fmt_num(*.from), fmt_num(*.highest_x))]
    NoPlateauPoints {
        /// The plateau start asked for.
        from: f64,
        /// The highest x of the sweep.
        highest_x: f64,
    },
    /// The point at the highest x is already below the threshold.
    #[error("the point at the highest x ({}) is already below the threshold: {} < {} (reference {}); the sweep starts inside breakdown or the reference is too high; start the sweep at higher x or check the reference", fmt_num(*.x), fmt_num(*.y), fmt_num(*.threshold), fmt_num(*.reference))]
    StartsBelowThreshold {
        /// The highest x of the sweep.
        x: f64,
        /// The response there.
        y: f64,
        /// The threshold.
        threshold: f64,
        /// The reference.
        reference: f64,
    },
    /// The response never falls below the threshold.
    #[error("{}", no_crossing_text(*.lowest_x, *.largest_drop, *.reference, *.threshold))]
    NoCrossing {
        /// The lowest x the sweep reached.
        lowest_x: f64,
        /// The largest drop seen, `reference − min(response)`, in the response's unit
        /// (negative when every point lies above the reference).
        largest_drop: f64,
        /// The reference.
        reference: f64,
        /// The threshold.
        threshold: f64,
    },
}

impl BreakdownError {
    /// Whether the fault lies in one curve's data (the breakdown of that mesh cannot be read,
    /// a local problem) rather than in the breakdown definition itself (the drop or the
    /// persistence rule, the same for every mesh: a fault of the study).
    pub fn is_local(&self) -> bool {
        !matches!(
            self,
            BreakdownError::InvalidDrop(_) | BreakdownError::InvalidPersistence(_)
        )
    }

    /// The reference the curve gave before breakdown failed, when it was formed.
    pub fn reference(&self) -> Option<f64> {
        match self {
            BreakdownError::OnlyDips { reference, .. }
            | BreakdownError::StartsBelowThreshold { reference, .. }
            | BreakdownError::NoCrossing { reference, .. } => Some(*reference),
            _ => None,
        }
    }

    /// Why, in a few words (the full message says how to fix it).
    pub fn short(&self) -> String {
        match self {
            BreakdownError::NoCrossing { lowest_x, .. } => format!(
                "the response stays above the threshold down to the sweep's lowest x, {}",
                fmt_num(*lowest_x)
            ),
            BreakdownError::OnlyDips { .. } => {
                "the response falls below the threshold only in dips that come back".to_string()
            }
            BreakdownError::StartsBelowThreshold { .. } => {
                "the sweep starts below the threshold".to_string()
            }
            BreakdownError::NoPlateauPoints { .. } => "no sweep point on the plateau".to_string(),
            e => e.to_string(),
        }
    }
}

/// `x = 0.16 (1 point)` or `x = 0.16 to 0.15 (2 points)` for each dip.
pub fn dip_list(dips: &[Dip]) -> String {
    dips.iter()
        .map(|d| {
            let first = d.x.first().copied().unwrap_or(f64::NAN);
            let last = d.x.last().copied().unwrap_or(f64::NAN);
            if d.x.len() == 1 {
                format!("x = {} (1 point)", fmt_num(first))
            } else {
                format!(
                    "x = {} to {} ({} points)",
                    fmt_num(first),
                    fmt_num(last),
                    d.x.len()
                )
            }
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// The rule in words: `2 consecutive points` or `2 consecutive points over an x span of 0.01`.
pub fn persistence_text(p: &Persistence) -> String {
    let pts = if p.points == 1 {
        "1 point".to_string()
    } else {
        format!("{} consecutive points", p.points)
    };
    if p.span > 0.0 {
        format!("{pts} over an x span of at least {}", fmt_num(p.span))
    } else {
        pts
    }
}

fn dips_text(dips: &[Dip], threshold: f64, p: &Persistence) -> String {
    format!(
        "no breakdown: the response falls below the threshold {} only in dips that come back above it ({}); breakdown needs {} below the threshold; extend the sweep to lower x or check those points",
        fmt_num(threshold),
        dip_list(dips),
        persistence_text(p)
    )
}

fn no_crossing_text(lowest_x: f64, largest_drop: f64, reference: f64, threshold: f64) -> String {
    let seen = if largest_drop > 0.0 {
        let fraction = if reference.abs() > 0.0 {
            format!(
                "{} % of the reference, ",
                fmt_num(100.0 * largest_drop / reference.abs())
            )
        } else {
            String::new()
        };
        format!(
            "the largest drop seen is {fraction}{} absolute",
            fmt_num(largest_drop)
        )
    } else {
        "the response never falls below the reference".to_string()
    };
    format!(
        "no breakdown: the response stays at or above the threshold {} (reference {}) down to the lowest x reached, {}; {seen}; extend the sweep to lower x",
        fmt_num(threshold),
        fmt_num(reference),
        fmt_num(lowest_x)
    )
}

/// Reads the breakdown x of the sweep `(x[i], y[i])` (points in any order) with the default
/// [`Persistence`] (two consecutive points below the threshold); see [`find_breakdown_with`].
///
/// # Errors
/// As [`find_breakdown_with`].
pub fn find_breakdown(
    x: &[f64],
    y: &[f64],
    reference: &ReferenceKind,
    drop: &DropRule,
    kind: Interpolation,
) -> Result<Breakdown, BreakdownError> {
    find_breakdown_with(x, y, reference, drop, kind, &Persistence::default())
}

/// Reads the breakdown x of the sweep `(x[i], y[i])` (points in any order).
///
/// Forms the reference, puts the threshold `drop` below it (`reference·(1 − f)` for a
/// relative drop, `reference − d` for an absolute one), scans the points from the highest x
/// downward, and solves for the x at which the `kind` interpolant meets the threshold in the
/// interval of the first point that lies strictly below it and starts a run that meets
/// `persist` (dips that come back are passed over).
///
/// # Errors
/// [`BreakdownError`] when the points cannot be interpolated, the drop or reference is
/// invalid, no point lies on the plateau, the highest-x point is already below the threshold,
/// or the response never falls below the threshold ([`BreakdownError::NoCrossing`], whose
/// message gives the lowest x reached and the largest drop seen), or falls below it only
/// in dips that come back ([`BreakdownError::OnlyDips`]).
pub fn find_breakdown_with(
    x: &[f64],
    y: &[f64],
    reference: &ReferenceKind,
    drop: &DropRule,
    kind: Interpolation,
    persist: &Persistence,
) -> Result<Breakdown, BreakdownError> {
    if persist.points == 0 || !(persist.span.is_finite() && persist.span >= 0.0) {
        return Err(BreakdownError::InvalidPersistence(format!(
            "the persistence rule needs at least 1 point and a finite span of 0 or more, got {} points and a span of {}",
            persist.points, persist.span
        )));
    }
    let curve = Interpolant::new(x, y, kind)?;
    let xs = curve.knots_x();
    let ys = curve.knots_y();
    let (lowest_x, highest_x) = curve.x_range();
    let top_y = ys.last().copied().unwrap_or(f64::NAN);

    let (reference, points_in_plateau) = match *reference {
        ReferenceKind::Plateau { from } => {
            if !from.is_finite() {
                return Err(BreakdownError::InvalidReference(format!(
                    "the plateau start must be a finite number, got {from}"
                )));
            }
            let on: Vec<f64> = xs
                .iter()
                .zip(ys)
                .filter(|(xi, _)| **xi >= from)
                .map(|(_, yi)| *yi)
                .collect();
            if on.is_empty() {
                return Err(BreakdownError::NoPlateauPoints { from, highest_x });
            }
            let mean = on.iter().sum::<f64>() / on.len() as f64;
            (mean, Some(on.len()))
        }
        ReferenceKind::Highest => (top_y, None),
        ReferenceKind::Value(v) => (v, None),
    };
    if !reference.is_finite() {
        return Err(BreakdownError::InvalidReference(format!(
            "the reference is not a finite number: {reference}"
        )));
    }

    let threshold = match *drop {
        DropRule::Relative(f) => {
            if !(f.is_finite() && f > 0.0 && f < 1.0) {
                return Err(BreakdownError::InvalidDrop(format!(
                    "a relative drop must lie strictly between 0 and 1 (0.01 for 1 %), got {f}; \
                     drops are falls of the response: for a response that rises, negate it"
                )));
            }
            if reference <= 0.0 {
                return Err(BreakdownError::InvalidReference(format!(
                    "a relative drop needs a positive reference, got {}; give the drop as an absolute amount",
                    fmt_num(reference)
                )));
            }
            reference * (1.0 - f)
        }
        DropRule::Absolute(d) => {
            if !(d.is_finite() && d > 0.0) {
                return Err(BreakdownError::InvalidDrop(format!(
                    "an absolute drop must be a positive finite amount, got {d}; \
                     drops are falls of the response: for a response that rises, negate it"
                )));
            }
            reference - d
        }
    };
    if !threshold.is_finite() {
        return Err(BreakdownError::InvalidReference(format!(
            "the threshold {} below the reference {} is not a finite number",
            match *drop {
                DropRule::Relative(f) => format!("{} %", fmt_num(100.0 * f)),
                DropRule::Absolute(d) => fmt_num(d),
            },
            fmt_num(reference)
        )));
    }

    if top_y < threshold {
        return Err(BreakdownError::StartsBelowThreshold {
            x: highest_x,
            y: top_y,
            threshold,
            reference,
        });
    }

    // Scan from the highest x downward for the first run of points below the threshold that
    // meets the persistence rule; shorter runs that come back are dips.
    let mut dips = Vec::new();
    let mut top = ys.len();
    let (below, run_end, confirmed) = loop {
        let Some(below) = (0..top).rev().find(|&i| ys[i] < threshold) else {
            if !dips.is_empty() {
                return Err(BreakdownError::OnlyDips {
                    dips,
                    threshold,
                    persistence: *persist,
                    reference,
                });
            }
            let lowest_y = ys.iter().copied().fold(f64::INFINITY, f64::min);
            return Err(BreakdownError::NoCrossing {
                lowest_x,
                largest_drop: reference - lowest_y,
                reference,
                threshold,
            });
        };
        // The run: `end..=below`, every point below the threshold.
        let mut end = below;
        while end > 0 && ys[end - 1] < threshold {
            end -= 1;
        }
        let count = below - end + 1;
        let span = xs[below] - xs[end];
        if count >= persist.points && span >= persist.span {
            break (below, end, true);
        }
        if end == 0 {
            break (below, end, false);
        }
        dips.push(Dip {
            x: (end..=below).rev().map(|i| xs[i]).collect(),
            lowest: ys[end..=below]
                .iter()
                .copied()
                .fold(f64::INFINITY, f64::min),
        });
        top = end;
    };
    // `below` is not the last index (the top point is at or above the threshold), so the
    // interval `below` reaches the point above it.
    let (a, b) = match (xs.get(below), xs.get(below + 1)) {
        (Some(&a), Some(&b)) => (a, b),
        _ => {
            return Err(BreakdownError::InvalidReference(
                "internal: the crossing interval is missing".to_string(),
            ))
        }
    };
    let x_cross = bisect(&curve, below, a, b, threshold);
    Ok(Breakdown {
        x: x_cross,
        reference,
        threshold,
        points_in_plateau,
        bracket: (a, b),
        points_below: below - run_end + 1,
        confirmed,
        ignored_dips: dips,
    })
}

/// Bisection on interval `k = [a, b]` of `curve`, where the value at `a` lies below `target`
/// and the value at `b` at or above it. Stops at 1e-12 relative width or when the bracket is
/// two neighbouring floats; returns the bracket's midpoint (always inside `[a, b]`).
fn bisect(curve: &Interpolant, k: usize, a: f64, b: f64, target: f64) -> f64 {
    let (mut lo, mut hi) = (a, b);
    for _ in 0..4096 {
        if hi - lo <= 1e-12 * lo.abs().max(hi.abs()) {
            break;
        }
        let mid = lo + 0.5 * (hi - lo);
        if mid <= lo || mid >= hi {
            break;
        }
        match curve.value_in(k, mid) {
            Some(v) if v < target => lo = mid,
            _ => hi = mid,
        }
    }
    lo + 0.5 * (hi - lo)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn ok(r: Result<Breakdown, BreakdownError>) -> Breakdown {
        match r {
            Ok(b) => b,
            Err(e) => panic!("expected a breakdown, got: {e}"),
        }
    }

    fn err_text(r: Result<Breakdown, BreakdownError>) -> String {
        match r {
            Ok(b) => panic!("expected an error, got {b:?}"),
            Err(e) => e.to_string(),
        }
    }

    // Source: analytic — linear interpolation of piecewise-linear data; reference 0.9 at the
    // highest x, 1 % drop → threshold 0.891, crossing between (0.2, 0.88) and (0.3, 0.895) at
    // x = 0.2 + 0.1·(0.891 − 0.88)/(0.895 − 0.88) = 0.2 + 0.22/3 = 0.27333…
    #[test]
    fn linear_crossing_is_exact() {
        let x = [0.5, 0.4, 0.3, 0.2, 0.1];
        let y = [0.9, 0.9, 0.895, 0.88, 0.80];
        let b = ok(find_breakdown(
            &x,
            &y,
            &ReferenceKind::Highest,
            &DropRule::Relative(0.01),
            Interpolation::Linear,
        ));
        assert_relative_eq!(b.reference, 0.9, max_relative = 1e-15);
        assert_relative_eq!(b.threshold, 0.891, max_relative = 1e-15);
        assert_relative_eq!(b.x, 0.2 + 0.22 / 3.0, max_relative = 1e-12);
        assert_eq!(b.points_in_plateau, None);
        assert_eq!(b.bracket, (0.2, 0.3));
    }

    // Source: analytic — where three neighbouring secant slopes are equal, the PCHIP knot
    // derivatives on the middle interval equal that slope (weighted harmonic mean of equal
    // values), so the piece is the straight line. Here y = 0.9 − 2·(0.25 − x) on
    // 0.1 ≤ x ≤ 0.25; reference 0.9 given, absolute drop 0.15 → threshold 0.75, reached at
    // x = 0.25 − 0.075 = 0.175 inside [0.15, 0.2].
    #[test]
    fn pchip_crossing_on_a_straight_stretch() {
        let x = [0.1, 0.15, 0.2, 0.25, 0.35, 0.5];
        let y = [0.6, 0.7, 0.8, 0.9, 0.9, 0.9];
        let b = ok(find_breakdown(
            &x,
            &y,
            &ReferenceKind::Value(0.9),
            &DropRule::Absolute(0.15),
            Interpolation::Pchip,
        ));
        assert_relative_eq!(b.threshold, 0.75, max_relative = 1e-15);
        assert_relative_eq!(b.x, 0.175, max_relative = 1e-12);
        assert_eq!(b.bracket, (0.15, 0.2));
    }

    // Source: trade fact (method notes §6) — efficiency may rise before it breaks down; the
    // first crossing below the threshold, not the maximum, defines breakdown. Analytic with
    // linear interpolation: plateau x ≥ 0.4 averages 0.90 (3 points); 1 % drop → 0.891; the
    // hump (0.905 at 0.25) lies above the reference and is passed over; the crossing between
    // (0.15, 0.87) and (0.2, 0.898) is at 0.15 + 0.05·(0.891 − 0.87)/(0.898 − 0.87) = 0.1875.
    #[test]
    fn hump_above_reference_is_passed_over() {
        let x = [0.6, 0.5, 0.4, 0.3, 0.25, 0.2, 0.15, 0.1];
        let y = [0.899, 0.901, 0.900, 0.903, 0.905, 0.898, 0.87, 0.80];
        let b = ok(find_breakdown(
            &x,
            &y,
            &ReferenceKind::Plateau { from: 0.4 },
            &DropRule::Relative(0.01),
            Interpolation::Linear,
        ));
        assert_relative_eq!(b.reference, 0.9, max_relative = 1e-14);
        assert_eq!(b.points_in_plateau, Some(3));
        assert_relative_eq!(b.x, 0.1875, max_relative = 1e-12);
        // The same data with PCHIP cross in the same interval.
        let p = ok(find_breakdown(
            &x,
            &y,
            &ReferenceKind::Plateau { from: 0.4 },
            &DropRule::Relative(0.01),
            Interpolation::Pchip,
        ));
        assert_eq!(p.bracket, (0.15, 0.2));
        let curve = Interpolant::new(&x, &y, Interpolation::Pchip)
            .map_err(|e| e.to_string())
            .and_then(|c| c.eval(p.x).ok_or_else(|| "no value".to_string()));
        assert_relative_eq!(curve.unwrap_or(f64::NAN), p.threshold, epsilon = 1e-12);
    }

    // Source: analytic — a knot exactly at the threshold is not below it; the crossing lies in
    // the interval beneath it, at the knot itself for linear data meeting it there:
    // (0.2, 0.891) is on the threshold, (0.1, 0.80) below → crossing at x = 0.2.
    #[test]
    fn knot_on_the_threshold_is_not_below() {
        let x = [0.1, 0.2, 0.3];
        let y = [0.80, 0.891, 0.9];
        let b = ok(find_breakdown(
            &x,
            &y,
            &ReferenceKind::Value(0.9),
            &DropRule::Absolute(0.009),
            Interpolation::Linear,
        ));
        assert_eq!(b.bracket, (0.1, 0.2));
        assert_relative_eq!(b.x, 0.2, max_relative = 1e-9);
    }

    // Source: the error contract of this module (message text asserted exactly).
    #[test]
    fn no_crossing_message() {
        let x = [0.12, 0.2, 0.3, 0.4];
        let y = [0.9068, 0.9085, 0.909, 0.91];
        let r = find_breakdown(
            &x,
            &y,
            &ReferenceKind::Highest,
            &DropRule::Relative(0.01),
            Interpolation::Pchip,
        );
        match &r {
            Err(BreakdownError::NoCrossing {
                lowest_x,
                largest_drop,
                ..
            }) => {
                assert_relative_eq!(*lowest_x, 0.12, max_relative = 1e-15);
                assert_relative_eq!(*largest_drop, 0.0032, max_relative = 1e-12);
            }
            other => panic!("expected NoCrossing, got {other:?}"),
        }
        assert_eq!(
            err_text(r),
            "no breakdown: the response stays at or above the threshold 0.9009 (reference 0.91) \
             down to the lowest x reached, 0.12; the largest drop seen is 0.351648 % of the \
             reference, 0.0032 absolute; extend the sweep to lower x"
        );
        let r = find_breakdown(
            &[0.1, 0.2],
            &[0.95, 0.93],
            &ReferenceKind::Value(0.92),
            &DropRule::Relative(0.01),
            Interpolation::Linear,
        );
        assert_eq!(
            err_text(r),
            "no breakdown: the response stays at or above the threshold 0.9108 (reference 0.92) \
             down to the lowest x reached, 0.1; the response never falls below the reference; \
             extend the sweep to lower x"
        );
    }

    // Source: the error contract of this module.
    #[test]
    fn first_point_below_threshold_is_refused() {
        let r = find_breakdown(
            &[0.1, 0.2, 0.3],
            &[0.8, 0.85, 0.88],
            &ReferenceKind::Value(0.9),
            &DropRule::Relative(0.01),
            Interpolation::Pchip,
        );
        assert!(matches!(
            r,
            Err(BreakdownError::StartsBelowThreshold { .. })
        ));
        assert_eq!(
            err_text(r),
            "the point at the highest x (0.3) is already below the threshold: 0.88 < 0.891 \
             (reference 0.9); the sweep starts inside breakdown or the reference is too high; \
             start the sweep at higher x or check the reference"
        );
    }

    // Source: the input contract of this module (drops are positive falls; no silent repair).
    #[test]
    fn bad_settings_are_refused() {
        let x = [0.1, 0.2, 0.3];
        let y = [0.8, 0.9, 0.9];
        let run =
            |r: ReferenceKind, d: DropRule| find_breakdown(&x, &y, &r, &d, Interpolation::Pchip);
        for d in [
            DropRule::Relative(0.0),
            DropRule::Relative(-0.01),
            DropRule::Relative(1.0),
            DropRule::Relative(f64::NAN),
            DropRule::Absolute(0.0),
            DropRule::Absolute(-0.5),
            DropRule::Absolute(f64::INFINITY),
        ] {
            let r = run(ReferenceKind::Highest, d);
            assert!(
                matches!(r, Err(BreakdownError::InvalidDrop(_))),
                "{d:?}: {r:?}"
            );
        }
        assert_eq!(
            err_text(run(ReferenceKind::Highest, DropRule::Relative(-0.01))),
            "a relative drop must lie strictly between 0 and 1 (0.01 for 1 %), got -0.01; \
             drops are falls of the response: for a response that rises, negate it"
        );
        assert_eq!(
            err_text(run(
                ReferenceKind::Plateau { from: 0.35 },
                DropRule::Relative(0.01)
            )),
            "no sweep point lies on the plateau x >= 0.35: the highest x is 0.3; lower the \
             plateau start or extend the sweep to higher x"
        );
        assert_eq!(
            err_text(run(ReferenceKind::Value(-0.9), DropRule::Relative(0.01))),
            "a relative drop needs a positive reference, got -0.9; give the drop as an absolute amount"
        );
        for r in [
            ReferenceKind::Value(f64::NAN),
            ReferenceKind::Plateau { from: f64::NAN },
        ] {
            assert!(matches!(
                run(r, DropRule::Absolute(0.01)),
                Err(BreakdownError::InvalidReference(_))
            ));
        }
        let r = find_breakdown(
            &[0.1, 0.1],
            &[0.8, 0.9],
            &ReferenceKind::Highest,
            &DropRule::Relative(0.01),
            Interpolation::Pchip,
        );
        assert!(matches!(
            r,
            Err(BreakdownError::Sweep(SweepError::DuplicateX { .. }))
        ));
    }

    // Source: analytic — the order in which points are given cannot change the curve.
    #[test]
    fn point_order_does_not_matter() {
        let x = [0.5, 0.4, 0.3, 0.25, 0.2, 0.15, 0.1];
        let y = [0.91, 0.91, 0.909, 0.905, 0.89, 0.85, 0.7];
        let xr = [0.2, 0.5, 0.1, 0.3, 0.15, 0.4, 0.25];
        let yr = [0.89, 0.91, 0.7, 0.909, 0.85, 0.91, 0.905];
        let s = ReferenceKind::Plateau { from: 0.4 };
        let a = ok(find_breakdown(
            &x,
            &y,
            &s,
            &DropRule::Relative(0.01),
            Interpolation::Pchip,
        ));
        let b = ok(find_breakdown(
            &xr,
            &yr,
            &s,
            &DropRule::Relative(0.01),
            Interpolation::Pchip,
        ));
        assert_eq!(a, b);
        assert_eq!(a.points_in_plateau, Some(2));
    }

    // Source: manufactured data, analytic crossing with linear interpolation. A plateau of
    // 0.9 and a straight fall y = 0.9 − 2·(0.2 − x) below x = 0.2; one noisy point at
    // x = 0.35 dips to 0.88 (below the 1 % threshold 0.891) and the curve comes back. The
    // persistence rule (2 points, the default) passes over the dip; breakdown is the crossing
    // of the fall: 0.9 − 2·(0.2 − x) = 0.891 → x = 0.2 − 0.0045 = 0.1955.
    #[test]
    fn one_noisy_dip_does_not_set_breakdown() {
        let x = [0.5, 0.4, 0.35, 0.3, 0.2, 0.15, 0.1];
        let y = [0.9, 0.9, 0.88, 0.9, 0.9, 0.8, 0.7];
        let b = ok(find_breakdown(
            &x,
            &y,
            &ReferenceKind::Value(0.9),
            &DropRule::Relative(0.01),
            Interpolation::Linear,
        ));
        assert_relative_eq!(b.x, 0.1955, max_relative = 1e-12);
        assert_eq!(b.bracket, (0.15, 0.2));
        assert!(b.confirmed);
        assert_eq!(b.points_below, 2);
        assert_eq!(
            b.ignored_dips,
            vec![Dip {
                x: vec![0.35],
                lowest: 0.88
            }]
        );
        // Without persistence (1 point) the dip sets breakdown, as before the rule: the
        // crossing between (0.35, 0.88) and (0.4, 0.9) at 0.35 + 0.05·0.011/0.02 = 0.3775.
        let one = Persistence {
            points: 1,
            span: 0.0,
        };
        let b1 = ok(find_breakdown_with(
            &x,
            &y,
            &ReferenceKind::Value(0.9),
            &DropRule::Relative(0.01),
            Interpolation::Linear,
            &one,
        ));
        assert_relative_eq!(b1.x, 0.3775, max_relative = 1e-12);
        assert!(b1.ignored_dips.is_empty());
        // Three points asked: the run at the end (0.15, 0.1) holds two, and the sweep ends
        // there: breakdown at the same crossing, unconfirmed.
        let three = Persistence {
            points: 3,
            span: 0.0,
        };
        let b3 = ok(find_breakdown_with(
            &x,
            &y,
            &ReferenceKind::Value(0.9),
            &DropRule::Relative(0.01),
            Interpolation::Linear,
            &three,
        ));
        assert_relative_eq!(b3.x, 0.1955, max_relative = 1e-12);
        assert!(!b3.confirmed);
        assert_eq!(b3.points_below, 2);
    }

    // Source: manufactured data (analytic run lengths and spans). A two-point dip at 0.36 and
    // 0.35 meets a 2-point rule but not a span of 0.02 (its span is 0.01); the final fall
    // (0.15, 0.1, 0.05) spans 0.1.
    #[test]
    fn span_rule_and_dips_only() {
        let x = [0.05, 0.1, 0.15, 0.2, 0.3, 0.35, 0.36, 0.4, 0.5];
        let y = [0.6, 0.7, 0.8, 0.9, 0.9, 0.885, 0.88, 0.9, 0.9];
        let rule = Persistence {
            points: 2,
            span: 0.02,
        };
        let b = ok(find_breakdown_with(
            &x,
            &y,
            &ReferenceKind::Value(0.9),
            &DropRule::Relative(0.01),
            Interpolation::Linear,
            &rule,
        ));
        assert_eq!(b.bracket, (0.15, 0.2));
        assert_eq!(b.ignored_dips.len(), 1);
        assert_eq!(b.ignored_dips[0].x, vec![0.36, 0.35]);
        assert_eq!(b.points_below, 3);
        // Without the final fall only the dip lies below: refused, the dip named.
        let r = find_breakdown_with(
            &x[3..],
            &y[3..],
            &ReferenceKind::Value(0.9),
            &DropRule::Relative(0.01),
            Interpolation::Linear,
            &rule,
        );
        assert!(matches!(r, Err(BreakdownError::OnlyDips { .. })), "{r:?}");
        assert_eq!(
            err_text(r),
            "no breakdown: the response falls below the threshold 0.891 only in dips that come \
             back above it (x = 0.36 to 0.35 (2 points)); breakdown needs 2 consecutive points \
             over an x span of at least 0.02 below the threshold; extend the sweep to lower x \
             or check those points"
        );
        // A rule of no points or a bad span is refused.
        for bad in [
            Persistence {
                points: 0,
                span: 0.0,
            },
            Persistence {
                points: 2,
                span: -0.1,
            },
            Persistence {
                points: 2,
                span: f64::NAN,
            },
        ] {
            assert!(matches!(
                find_breakdown_with(
                    &x,
                    &y,
                    &ReferenceKind::Highest,
                    &DropRule::Relative(0.01),
                    Interpolation::Linear,
                    &bad
                ),
                Err(BreakdownError::InvalidPersistence(_))
            ));
        }
    }

    /// Which faults are one curve's (local: that mesh's breakdown is not computed) and which
    /// are the definition's (the study's); the reference the curve gave survives the fault.
    /// Manufactured curves: the plateau mean of 0.9 and 0.9 is 0.9 (analytic).
    #[test]
    fn faults_say_whether_they_are_local_and_keep_the_reference() {
        let x = [0.4, 0.3, 0.2, 0.1];
        let flat = [0.9, 0.9, 0.899, 0.898];
        let plateau = ReferenceKind::Plateau { from: 0.3 };
        let e = find_breakdown(
            &x,
            &flat,
            &plateau,
            &DropRule::Relative(0.01),
            Interpolation::Linear,
        )
        .unwrap_err();
        assert!(matches!(e, BreakdownError::NoCrossing { .. }));
        assert!(e.is_local());
        assert_eq!(e.reference(), Some(0.9));
        assert!(e.short().contains("0.1"), "{}", e.short());
        // No point on the plateau: local, and no reference.
        let e = find_breakdown(
            &x,
            &flat,
            &ReferenceKind::Plateau { from: 0.5 },
            &DropRule::Relative(0.01),
            Interpolation::Linear,
        )
        .unwrap_err();
        assert!(e.is_local() && e.reference().is_none());
        // A dip that comes back only: local, the reference kept.
        let dip = [0.9, 0.9, 0.85, 0.9];
        let e = find_breakdown(
            &x,
            &dip,
            &plateau,
            &DropRule::Relative(0.01),
            Interpolation::Linear,
        )
        .unwrap_err();
        assert!(matches!(e, BreakdownError::OnlyDips { .. }), "{e:?}");
        assert_eq!(e.reference(), Some(0.9));
        // The drop is the definition's, the same for every mesh: not local.
        let e = find_breakdown(
            &x,
            &flat,
            &plateau,
            &DropRule::Relative(1.5),
            Interpolation::Linear,
        )
        .unwrap_err();
        assert!(!e.is_local());
    }
}
