//! Summaries: per-column accumulators over chunks, the column and field summaries (a
//! contract: their serde form) and the warnings they carry.

use crate::assess::{DEMONSTRATED_MAX_RATIO, DEMONSTRATED_MIN_ORDER};
use crate::estimate::point::PointResult;
use crate::estimate::three_grid::{
    Governing, ThreeGridSettings, FORMAL_ORDER_TOLERANCE, ROUNDOFF_ULPS, SCAN_LO,
};
use crate::estimate::three_grid_fast::PointEstimate;
use crate::estimate::Convergence;
use crate::point_warnings::{self, PointWarning, LISTED, NOT_DEMONSTRATED, ORDER_AT_BOUND};
use crate::warning::Warning;
use serde::Serialize;

/// The per-point codes of a field, in the order of [`point_warnings::rank`]: the codes the
/// scalar three-mesh estimate raises at a point ([`crate::estimate::three_grid::estimate`]),
/// `convergence_not_demonstrated` by the rule of [`crate::assess::not_demonstrated`], and
/// [`ORDER_AT_BOUND`].
pub const FIELD_CODES: [&str; 11] = [
    NOT_DEMONSTRATED,
    ORDER_AT_BOUND,
    "divergent",
    "order_not_found",
    "order_low",
    "order_high",
    "order_far_from_formal",
    "oscillatory",
    "no_change",
    "round_off",
    "value_near_zero",
];
const C_ND: usize = 0;
const C_BOUND: usize = 1;
const C_DIV: usize = 2;
const C_NOT_FOUND: usize = 3;
const C_LOW: usize = 4;
const C_HIGH: usize = 5;
const C_FAR: usize = 6;
const C_OSC: usize = 7;
const C_NO_CHANGE: usize = 8;
const C_ROUND_OFF: usize = 9;
const C_NEAR_ZERO: usize = 10;

/// The settings the per-point checks of a field need (the same limits as the scalar estimate).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PointChecks {
    /// The order cap of the search (`settings.order_max`).
    pub order_max: f64,
    /// The formal order.
    pub formal_order: f64,
}

impl PointChecks {
    /// The checks for these settings.
    pub fn new(settings: &ThreeGridSettings) -> Self {
        PointChecks {
            order_max: settings.order_max,
            formal_order: settings.formal_order,
        }
    }

    /// Bit `1 << k` set for each code `FIELD_CODES[k]` the scalar estimate would raise at a
    /// point with values `phi` (finest first) and fast estimate `e`. The same tests as the
    /// scalar path, written out without loops: this runs at every probe.
    #[inline]
    pub fn codes(&self, e: &PointEstimate, phi: [f64; 3]) -> u16 {
        // Round-off exactly as the estimators decide it.
        let (mut bits, e21, e32) = round_off(phi[0], phi[1], phi[2]);
        match e.convergence {
            Convergence::NoChange => return bits | 1 << C_NO_CHANGE,
            Convergence::Divergent => bits |= 1 << C_DIV,
            // The scalar estimate says `oscillatory` when it found an order (its message
            // compares the GCI with the half range); without one it says `order_not_found`.
            Convergence::Oscillatory if e.observed_order.is_some() => bits |= 1 << C_OSC,
            Convergence::Oscillatory | Convergence::Monotonic | Convergence::Undetermined => {}
        }
        // assess::not_demonstrated on a three-mesh estimate: R = ε21/ε32 above the limit, an
        // order on an end of its search, or an order below the limit.
        let mut nd = e32 != 0.0 && e21 / e32 > DEMONSTRATED_MAX_RATIO;
        match e.observed_order {
            Some(p) => {
                if p >= self.order_max * (1.0 - 1e-9) || p <= SCAN_LO * (1.0 + 1e-9) {
                    bits |= 1 << C_BOUND;
                    nd = true;
                }
                bits |= self.order_bits(p);
                if p < DEMONSTRATED_MIN_ORDER {
                    nd = true;
                }
            }
            None if e.convergence != Convergence::Divergent => {
                bits |= 1 << C_NOT_FOUND;
                // Shrinking differences no power law with p > 0 fits (assess::not_demonstrated).
                if e21 != 0.0 && e32 != 0.0 && e21 / e32 > 0.0 {
                    nd = true;
                }
            }
            None => {}
        }
        if nd {
            bits |= 1 << C_ND;
        }
        // The scalar estimate decides `value_near_zero` with its own (Celik GCI) U.
        if let Some(u) = e.gci_uncertainty {
            if phi[0].abs() < e21.abs().max(u) {
                bits |= 1 << C_NEAR_ZERO;
            }
        }
        bits
    }
}

/// The round-off bit of a point's three finest values, and its differences ε21, ε32 with
/// round-off set to 0 (exactly as the estimators decide it).
#[inline]
fn round_off(p0: f64, p1: f64, p2: f64) -> (u16, f64, f64) {
    let scale = p0.abs().max(p1.abs()).max(p2.abs());
    let tiny = ROUNDOFF_ULPS * f64::EPSILON * scale;
    let d21 = p1 - p0;
    let d32 = p2 - p1;
    let round21 = d21 != 0.0 && d21.abs() <= tiny;
    let round32 = d32 != 0.0 && d32.abs() <= tiny;
    let bits: u16 = if round21 || round32 {
        1 << C_ROUND_OFF
    } else {
        0
    };
    let e21 = if round21 { 0.0 } else { d21 };
    let e32 = if round32 { 0.0 } else { d32 };
    (bits, e21, e32)
}

impl PointChecks {
    /// The bits of the order checks on an observed order `p`: `order_low`, `order_high`,
    /// `order_far_from_formal`.
    #[inline]
    fn order_bits(&self, p: f64) -> u16 {
        let pf = self.formal_order;
        if p < 0.5 {
            1 << C_LOW
        } else if p > pf + 1.0 {
            1 << C_HIGH
        } else if ((p - pf) / pf).abs() > FORMAL_ORDER_TOLERANCE {
            1 << C_FAR
        } else {
            0
        }
    }
}

impl PointChecks {
    /// Bit `1 << k` set for each code `FIELD_CODES[k]` at a point estimated with four meshes
    /// or more (`phi` finest first, `r` the [`PointEstimator`](crate::estimate::point::PointEstimator)'s
    /// result): round-off, `no_change`, `divergent` and `oscillatory` as in [`PointChecks::codes`]
    /// (round-off and R on the three finest meshes); `order_not_found` when the free order of
    /// least squares is not found; the order checks on that free order;
    /// `convergence_not_demonstrated` by the rule of
    /// [`crate::assess::not_demonstrated`] for least squares (R of the three finest meshes
    /// above the limit, no free order, or an order below the limit; the per-point result does
    /// not say whether the order sits on an end of its search, so that rule is not applied);
    /// `value_near_zero` when |φ1| is below the finest difference or U.
    pub fn codes_many(&self, r: &PointResult, phi: &[f64]) -> u16 {
        let (p0, p1, p2) = match phi {
            [a, b, c, ..] => (*a, *b, *c),
            _ => return 0,
        };
        let (mut bits, e21, e32) = round_off(p0, p1, p2);
        match r.convergence {
            Convergence::NoChange => return bits | 1 << C_NO_CHANGE,
            Convergence::Divergent => bits |= 1 << C_DIV,
            Convergence::Oscillatory => bits |= 1 << C_OSC,
            Convergence::Monotonic | Convergence::Undetermined => {}
        }
        let mut nd = e32 != 0.0 && e21 / e32 > DEMONSTRATED_MAX_RATIO;
        match r.order {
            Some(p) => {
                bits |= self.order_bits(p);
                if p < DEMONSTRATED_MIN_ORDER {
                    nd = true;
                }
            }
            None if r.convergence != Convergence::Divergent => {
                bits |= 1 << C_NOT_FOUND;
                nd = true;
            }
            None => {}
        }
        if nd {
            bits |= 1 << C_ND;
        }
        if let Some(u) = r.uncertainty {
            if p0.abs() < e21.abs().max(u) {
                bits |= 1 << C_NEAR_ZERO;
            }
        }
        bits
    }
}

/// The median of `n` values held in rank order by `at_rank` (0-based): the middle value, or
/// the mean of the two middle ones; `None` without values or where it is not finite.
pub(super) fn median_by_rank(n: u64, at_rank: impl Fn(u64) -> Option<f64>) -> Option<f64> {
    if n == 0 {
        return None;
    }
    match (at_rank((n - 1) / 2), at_rank(n / 2)) {
        (Some(a), Some(b)) => Some(0.5 * (a + b)).filter(|v| v.is_finite()),
        _ => None,
    }
}

/// The point warnings of a column from the count of each [`FIELD_CODES`] code and the first
/// ids listed for it (`listed(k)` for code k; codes no point raised are left out).
pub(super) fn point_warnings_of(
    counts: &[u64],
    listed: impl Fn(usize) -> Vec<String>,
) -> Vec<PointWarning<String>> {
    FIELD_CODES
        .iter()
        .enumerate()
        .filter(|(k, _)| counts.get(*k).is_some_and(|n| *n > 0))
        .map(|(k, code)| {
            let at = listed(k);
            PointWarning {
                code: code.to_string(),
                points: counts[k],
                more: counts[k] - at.len() as u64,
                at,
            }
        })
        .collect()
}

/// One point's figures as the summary takes them (any estimator).
#[derive(Debug, Clone, Copy)]
pub(super) struct Figures {
    pub(super) convergence: Convergence,
    pub(super) order: Option<f64>,
    pub(super) uncertainty: Option<f64>,
    /// The uncertainty fell back on the formal order (three-mesh estimate).
    pub(super) formal: bool,
    /// Half the oscillation's range governed (three-mesh estimate).
    pub(super) oscillation_range: bool,
    /// Bits of [`FIELD_CODES`].
    pub(super) codes: u16,
}

/// The share of the domain in each convergence class, weighted by the finest mesh's area or
/// volume around each point (fractions summing to 1; see docs/method.md §16).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct ClassShares {
    /// Monotonic convergence.
    pub monotonic: f64,
    /// Oscillatory convergence.
    pub oscillatory: f64,
    /// Divergence.
    pub divergent: f64,
    /// No change between meshes.
    pub no_change: f64,
    /// No estimate (a point outside a coarser mesh, or a value marked missing).
    pub none: f64,
}

/// The transfer between meshes in one column of a field on meshes (contract: the serde form).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TransferFigures {
    /// The largest stated transfer error over every point and coarser mesh.
    pub max_error: Option<f64>,
    /// Points whose stated transfer error exceeds [`TRANSFER_SHARE`] × U (the warning
    /// `field_transfer_error_large`).
    pub large_error_points: u64,
    /// Points outside some coarser mesh (no estimate there; class `none`).
    pub outside_points: u64,
    /// The ids of the first points with a large transfer error.
    #[serde(skip)]
    pub large_at: Vec<String>,
    /// The ids of the first points outside.
    #[serde(skip)]
    pub outside_at: Vec<String>,
}

/// A transfer error counts as not small at a point when it exceeds this share of the
/// discretisation uncertainty U there (common practice, no source: the transfer should not
/// add more than about a fifth to U; docs/method.md §16).
pub const TRANSFER_SHARE: f64 = 0.2;

/// How a field on meshes was set up (contract: the serde form; absent for probe files read
/// in lockstep).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FieldSetup {
    /// Meshes used at every point (finest first).
    pub meshes: u64,
    /// `meshes` for VTK files, `probe_files` for CSV probe files.
    pub data: &'static str,
    /// Where the estimate is made: `finest_points`, `finest_cells` or `probe_points`.
    pub targets: &'static str,
    /// 2 or 3: the dimension of the transfer (absent for probe files).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dimension: Option<u8>,
    /// What weighs the class shares: `length`, `area`, `volume` or `equal`.
    pub weighted_by: &'static str,
}

/// Bins of the order histogram behind the median (over `(0, order_max]`).
pub(crate) const ORDER_BINS: usize = 20_000;

/// Counts of the convergence classes over the points of one column.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
pub struct ClassCounts {
    /// Monotonic convergence.
    pub monotonic: u64,
    /// Oscillatory convergence.
    pub oscillatory: u64,
    /// Divergence (no uncertainty).
    pub divergent: u64,
    /// No change between meshes.
    pub no_change: u64,
    /// No estimate: a value marked missing (empty, `-`, `nan`, `n/a`) on one of the meshes.
    /// Left out of the JSON when 0.
    #[serde(skip_serializing_if = "is_zero")]
    pub none: u64,
}

impl ClassCounts {
    /// Counts one point of class `c` (three meshes or more always give a class:
    /// `Undetermined` is not counted).
    pub(super) fn add(&mut self, c: Convergence) {
        match c {
            Convergence::Monotonic => self.monotonic += 1,
            Convergence::Oscillatory => self.oscillatory += 1,
            Convergence::Divergent => self.divergent += 1,
            Convergence::NoChange => self.no_change += 1,
            Convergence::Undetermined => {}
        }
    }
}

fn is_zero(n: &u64) -> bool {
    *n == 0
}

/// The global order of a field column (part of the JSON result).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GlobalOrderUsed {
    /// How it was formed: `average`, `norm_l2`, `norm_max`.
    pub basis: crate::field::OrderBasis,
    /// The order put in at every point (`null` when none could be formed: the points then
    /// kept their own orders).
    pub order: Option<f64>,
    /// The points it was formed from.
    pub from_points: u64,
}

/// The noise floor of a field column and the points it touched (part of the JSON result).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoiseFloorFigures {
    /// The floor, absolute.
    pub floor: f64,
    /// Points whose values all lie within it (class `no_change`, U = the floor).
    pub within: u64,
    /// Points with some difference within it.
    pub partly_within: u64,
}

/// Summary of one column of a field (contract: the serde form).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ColumnSummary {
    /// Column name.
    pub name: String,
    /// Points per convergence class.
    pub classes: ClassCounts,
    /// Mean observed order over the points whose convergence is demonstrated (orders on an
    /// end of the search, not found, or of points that do not demonstrate convergence are
    /// left out).
    pub mean_order: Option<f64>,
    /// Median observed order over the same points, within one histogram bin
    /// (`order_max / ORDER_BINS`).
    pub median_order: Option<f64>,
    /// Number of points whose order enters the mean and the median.
    pub order_points: u64,
    /// Mean of `U/|φ1|` over points with an uncertainty and φ1 ≠ 0 (fraction).
    pub mean_relative: Option<f64>,
    /// Largest `U/|φ1|` over the same points (fraction).
    pub max_relative: Option<f64>,
    /// Points whose uncertainty overflows: `U` or `U/|φ1|` is too large to be represented (near
    /// the largest doubles). They are left out of the relative figures above and count as
    /// failures: every acceptance limit on the column fails while any exist.
    pub overflowed: u64,
    /// Points whose uncertainty fell back on the formal order with Fs = 3 (no observed order).
    #[serde(skip)]
    pub formal_order_points: u64,
    /// Points where half the range of the oscillation governed the uncertainty.
    #[serde(skip)]
    pub oscillation_range_points: u64,
    /// The points' warnings per code ([`FIELD_CODES`]): how many points raised it and the ids
    /// of the first ones, in the order of the probe files.
    pub point_warnings: Vec<PointWarning<String>>,
    /// The ids of the first probes with a value marked missing (class `none`).
    #[serde(skip)]
    pub missing_at: Vec<String>,
    /// The share of the domain in each class (fields on meshes and fields read in memory).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub class_shares: Option<ClassShares>,
    /// The transfer between meshes (fields on meshes only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub transfer: Option<TransferFigures>,
    /// The one order every point used, when the field asks for a global order.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub global_order: Option<GlobalOrderUsed>,
    /// The noise floor and the points it touched, when the field sets one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub noise_floor: Option<NoiseFloorFigures>,
}

impl ColumnSummary {
    /// Points whose convergence is not demonstrated (`convergence_not_demonstrated`).
    pub fn not_demonstrated(&self) -> u64 {
        self.point_warnings
            .iter()
            .find(|w| w.code == NOT_DEMONSTRATED)
            .map_or(0, |w| w.points)
    }
}

/// Summary of a field (contract: the serde form).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FieldSummary {
    /// Field name.
    pub name: String,
    /// Number of probes.
    pub points: u64,
    /// The per-point file written, if any.
    pub written: Option<String>,
    /// One summary per column, in the order of the spec.
    pub columns: Vec<ColumnSummary>,
    /// How a field held in memory was set up (absent for three probe files streamed).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub setup: Option<FieldSetup>,
    /// A column's results along a sampled line, when the field asks for one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub line: Option<crate::field::profile::LineProfile>,
    /// The comparison with reference data at points, when the field gives some.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub comparison: Option<crate::field::profile::FieldComparison>,
}

impl FieldSummary {
    /// Warnings a report should carry for this field, each attached to the field's name.
    pub fn warnings(&self) -> Vec<Warning> {
        let mut out = Vec::new();
        for c in &self.columns {
            if c.classes.divergent > 0 {
                out.push(
                    Warning::new(
                        "field_points_divergent",
                        format!(
                            "column `{}`: {} of {} points diverge, so no discretisation uncertainty can be claimed there",
                            c.name, c.classes.divergent, self.points
                        ),
                    )
                    .about(&self.name),
                );
            }
            if c.overflowed > 0 {
                out.push(
                    Warning::new(
                        "field_points_overflowed",
                        format!(
                            "column `{}`: {} of {} points have an uncertainty too large to represent (overflow near the largest doubles); they are left out of the relative figures and fail every acceptance limit on this column",
                            c.name, c.overflowed, self.points
                        ),
                    )
                    .about(&self.name),
                );
            }
            if c.formal_order_points > 0 {
                out.push(
                    Warning::new(
                        "field_points_formal_order",
                        format!(
                            "column `{}`: {} points have no observed order; their uncertainty uses the formal order with safety factor 3",
                            c.name, c.formal_order_points
                        ),
                    )
                    .about(&self.name),
                );
            }
            let outside = c.transfer.as_ref().map_or(0, |t| t.outside_points);
            if let Some(t) = &c.transfer {
                if t.outside_points > 0 {
                    let more = t.outside_points - t.outside_at.len() as u64;
                    out.push(
                        Warning::new(
                            "field_points_outside",
                            format!(
                                "column `{}`: {} of {} points lie outside a coarser mesh ({}{}); nothing is extrapolated there: they have no estimate (class `none`, no figures in the per-point file) and are left out of every figure",
                                c.name,
                                t.outside_points,
                                self.points,
                                t.outside_at.join(", "),
                                if more > 0 { format!(" and {more} more") } else { String::new() }
                            ),
                        )
                        .about(&self.name),
                    );
                }
                if t.large_error_points > 0 {
                    let more = t.large_error_points - t.large_at.len() as u64;
                    out.push(
                        Warning::new(
                            "field_transfer_error_large",
                            format!(
                                "column `{}`: at {} of {} points the stated error of carrying a coarser solution onto them exceeds {} × U ({}{}); the uncertainty there may leave out an interpolation error of comparable size",
                                c.name,
                                t.large_error_points,
                                self.points,
                                TRANSFER_SHARE,
                                t.large_at.join(", "),
                                if more > 0 { format!(" and {more} more") } else { String::new() }
                            ),
                        )
                        .about(&self.name),
                    );
                }
            }
            if c.classes.none > outside {
                let missing = c.classes.none - outside;
                let more = missing.saturating_sub(c.missing_at.len() as u64);
                out.push(
                    Warning::new(
                        "field_points_missing",
                        format!(
                            "column `{}`: {} of {} probes have a value marked missing (empty, `-`, `nan`, `n/a`) on one of the meshes ({}{}); they have no estimate (class `none`, empty cells in the per-point file) and are left out of every figure",
                            c.name,
                            missing,
                            self.points,
                            c.missing_at.join(", "),
                            if more > 0 { format!(" and {more} more") } else { String::new() }
                        ),
                    )
                    .about(&self.name),
                );
            }
            let what = match &self.setup {
                Some(FieldSetup { data: "meshes", .. }) => "points ",
                _ => "probes ",
            };
            let place = |id: &String| id.clone();
            if let Some(nd) = c.point_warnings.iter().find(|w| w.code == NOT_DEMONSTRATED) {
                out.push(
                    Warning::new(
                        "field_points_not_demonstrated",
                        format!(
                            "column `{}`: {}: the uncertainty there is not quotable, their orders are left out of the mean and median order, and every acceptance limit on this column fails",
                            c.name,
                            point_warnings::describe(nd, self.points, what, place)
                        ),
                    )
                    .about(&self.name),
                );
            }
            let rest: Vec<String> = c
                .point_warnings
                .iter()
                .filter(|w| w.code != NOT_DEMONSTRATED)
                .map(|w| point_warnings::describe(w, self.points, what, place))
                .collect();
            if !rest.is_empty() {
                out.push(
                    Warning::new(
                        "field_point_warnings",
                        format!(
                            "column `{}`: field points carry warnings: {}",
                            c.name,
                            rest.join("; ")
                        ),
                    )
                    .about(&self.name),
                );
            }
        }
        out
    }
}

/// A probe id as listed in `point_warnings`: trimmed, at most 40 characters (longer ids are
/// cut and end in `…`, as in the field's error messages), control characters shown as `�`. An
/// id can be as long as a record (1 MiB): only its first bytes are read, so that a hostile file
/// cannot make the summary hold large ids.
pub(super) fn listed_id(id: &[u8]) -> String {
    let head = &id[..id.len().min(256)];
    super::parse::shown(String::from_utf8_lossy(head).trim().as_bytes())
        .chars()
        .map(|c| if c.is_control() { '\u{fffd}' } else { c })
        .collect()
}

#[derive(Debug, Clone, Default)]
pub(super) struct ColumnAcc {
    pub(super) classes: ClassCounts,
    pub(super) order_n: u64,
    pub(super) order_sum: f64,
    /// Count and sum of the orders in each histogram bin (the field's accumulator only).
    pub(super) hist_n: Vec<u64>,
    pub(super) hist_sum: Vec<f64>,
    /// Orders of a chunk, not yet binned.
    pub(super) orders: Vec<f64>,
    pub(super) rel_n: u64,
    pub(super) rel_sum: f64,
    pub(super) rel_max: f64,
    pub(super) formal: u64,
    /// Points whose `U` or `U/|φ1|` overflows.
    pub(super) overflowed: u64,
    pub(super) osc_range: u64,
    /// Points per code of [`FIELD_CODES`], and the ids of the first ones.
    pub(super) code_n: [u64; FIELD_CODES.len()],
    pub(super) code_at: [Vec<String>; FIELD_CODES.len()],
    /// The ids of the first points with a value marked missing.
    pub(super) missing_at: Vec<String>,
}

impl ColumnAcc {
    /// Adds one point. Its order is kept in `orders` until [`ColumnAcc::merge`] bins it, so that
    /// a chunk's accumulator stays small (no histogram per chunk).
    pub(super) fn add(
        &mut self,
        e: &PointEstimate,
        phi: [f64; 3],
        id: &[u8],
        checks: &PointChecks,
    ) {
        let codes = checks.codes(e, phi);
        self.add_figures(
            Figures {
                convergence: e.convergence,
                order: e.observed_order,
                uncertainty: e.uncertainty,
                formal: e.governing == Some(Governing::FormalOrder),
                oscillation_range: e.governing == Some(Governing::OscillationRange),
                codes,
            },
            phi[0],
            id,
        );
    }

    /// Adds one point's figures (any estimator), `phi1` the finest mesh's value.
    pub(super) fn add_figures(&mut self, f: Figures, phi1: f64, id: &[u8]) {
        self.classes.add(f.convergence);
        if f.formal {
            self.formal += 1;
        }
        if f.oscillation_range {
            self.osc_range += 1;
        }
        let codes = f.codes;
        let mut rest = codes;
        while rest != 0 {
            let k = rest.trailing_zeros() as usize;
            rest &= rest - 1;
            self.code_n[k] += 1;
            if self.code_at[k].len() < LISTED {
                self.code_at[k].push(listed_id(id));
            }
        }
        // Orders on a bound, not found or not demonstrated are left out of mean and median.
        if let Some(p) = f.order.filter(|_| codes & (1 << C_ND) == 0) {
            self.order_n += 1;
            self.order_sum += p;
            self.orders.push(p);
        }
        if let Some(u) = f.uncertainty {
            if !u.is_finite() {
                self.overflowed += 1;
            } else if phi1 != 0.0 {
                let rel = u / phi1.abs();
                if rel.is_finite() {
                    self.rel_n += 1;
                    self.rel_sum += rel;
                    self.rel_max = self.rel_max.max(rel);
                } else {
                    self.overflowed += 1;
                }
            }
        }
    }

    /// Adds a point with a value marked missing on some mesh: class `none`, no figure.
    pub(super) fn add_missing(&mut self, id: &[u8]) {
        self.classes.none += 1;
        if self.missing_at.len() < LISTED {
            self.missing_at.push(listed_id(id));
        }
    }

    /// Adds a chunk's figures and bins its orders (`bin_scale` bins per unit of order).
    pub(super) fn merge(&mut self, o: &ColumnAcc, bin_scale: f64) {
        self.classes.monotonic += o.classes.monotonic;
        self.classes.oscillatory += o.classes.oscillatory;
        self.classes.divergent += o.classes.divergent;
        self.classes.no_change += o.classes.no_change;
        self.classes.none += o.classes.none;
        let room = LISTED.saturating_sub(self.missing_at.len());
        self.missing_at
            .extend(o.missing_at.iter().take(room).cloned());
        self.order_n += o.order_n;
        self.order_sum += o.order_sum;
        if !o.orders.is_empty() && self.hist_n.is_empty() {
            self.hist_n = vec![0; ORDER_BINS];
            self.hist_sum = vec![0.0; ORDER_BINS];
        }
        for &p in &o.orders {
            let k = ((p * bin_scale) as usize).min(ORDER_BINS - 1);
            self.hist_n[k] += 1;
            self.hist_sum[k] += p;
        }
        self.rel_n += o.rel_n;
        self.rel_sum += o.rel_sum;
        self.rel_max = self.rel_max.max(o.rel_max);
        self.formal += o.formal;
        self.overflowed += o.overflowed;
        self.osc_range += o.osc_range;
        for k in 0..FIELD_CODES.len() {
            self.code_n[k] += o.code_n[k];
            let room = LISTED.saturating_sub(self.code_at[k].len());
            self.code_at[k].extend(o.code_at[k].iter().take(room).cloned());
        }
    }

    /// Mean of the values in the bin holding 0-based rank `rank`.
    pub(super) fn value_at_rank(&self, rank: u64) -> Option<f64> {
        let mut seen = 0u64;
        for (n, s) in self.hist_n.iter().zip(&self.hist_sum) {
            seen += n;
            if *n > 0 && seen > rank {
                return Some(s / *n as f64);
            }
        }
        None
    }

    pub(super) fn finish(&self, name: &str) -> ColumnSummary {
        let finite = |v: f64| if v.is_finite() { Some(v) } else { None };
        let median = median_by_rank(self.order_n, |r| self.value_at_rank(r));
        ColumnSummary {
            name: name.to_string(),
            classes: self.classes,
            mean_order: if self.order_n > 0 {
                finite(self.order_sum / self.order_n as f64)
            } else {
                None
            },
            median_order: median,
            mean_relative: if self.rel_n > 0 {
                finite(self.rel_sum / self.rel_n as f64)
            } else {
                None
            },
            max_relative: if self.rel_n > 0 {
                finite(self.rel_max)
            } else {
                None
            },
            order_points: self.order_n,
            overflowed: self.overflowed,
            formal_order_points: self.formal,
            oscillation_range_points: self.osc_range,
            point_warnings: point_warnings_of(&self.code_n, |k| self.code_at[k].clone()),
            missing_at: self.missing_at.clone(),
            class_shares: None,
            transfer: None,
            global_order: None,
            noise_floor: None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::estimate::three_grid::{self, ThreeGridSettings};
    use crate::estimate::three_grid_fast::FastThreeGrid;
    use crate::field::write::push_opt;

    const H: [f64; 3] = [1.0, 1.5, 1.5 * 1.3];

    fn checks() -> PointChecks {
        PointChecks::new(&ThreeGridSettings::default())
    }

    /// The codes the scalar path gives at one point: the three-mesh estimate's warnings, the
    /// search-bound flag, and `assess::govern`'s not-demonstrated rule (what
    /// `assess::quantity` does with three meshes).
    fn scalar_codes(h: [f64; 3], phi: [f64; 3], settings: &ThreeGridSettings) -> Vec<String> {
        let tg = three_grid::estimate(h, phi, settings).expect("an estimate");
        let mut codes: Vec<String> = tg.warnings.iter().map(|w| w.code.clone()).collect();
        if tg.order_at_bound {
            codes.push(ORDER_AT_BOUND.into());
        }
        let g = crate::assess::govern(
            Some(&tg),
            None,
            crate::study::raw::EstimatorChoice::Auto,
            None,
        )
        .expect("governs");
        if g.not_demonstrated_because.is_some() {
            codes.push(NOT_DEMONSTRATED.into());
        }
        codes.sort();
        codes.dedup();
        codes
    }

    fn field_codes(fast: &FastThreeGrid, checks: &PointChecks, phi: [f64; 3]) -> Vec<String> {
        let bits = checks.codes(&fast.estimate(phi), phi);
        let mut codes: Vec<String> = FIELD_CODES
            .iter()
            .enumerate()
            .filter(|(k, _)| bits & (1 << k) != 0)
            .map(|(_, c)| c.to_string())
            .collect();
        codes.sort();
        codes
    }

    #[test]
    fn codes_of_four_meshes_follow_the_least_squares_result() {
        // Manufactured values (analytic): growing differences diverge; equal values do not
        // change; φ = 1 + 0.5 h² on h = 1, 1.5, 2.25, 3.375 converges at order 2 with no
        // warning (least squares recovers it exactly, Eça & Hoekstra 2014).
        use crate::estimate::point::{PointEstimator, PointSettings};
        let h = [1.0, 1.5, 2.25, 3.375];
        let est = PointEstimator::new(&h, &PointSettings::default()).unwrap();
        let c = checks();
        let names = |bits: u16| -> Vec<&str> {
            FIELD_CODES
                .iter()
                .enumerate()
                .filter(|(k, _)| bits & (1 << k) != 0)
                .map(|(_, s)| *s)
                .collect()
        };
        let good: Vec<f64> = h.iter().map(|x| 1.0 + 0.5 * x * x).collect();
        assert!(names(c.codes_many(&est.estimate(&good), &good)).is_empty());
        let flat = [2.0; 4];
        assert_eq!(
            names(c.codes_many(&est.estimate(&flat), &flat)),
            vec!["no_change"]
        );
        let growing = [1.0, 1.1, 1.15, 1.17];
        let r = est.estimate(&growing);
        assert_eq!(r.convergence, Convergence::Divergent);
        assert!(names(c.codes_many(&r, &growing)).contains(&"divergent"));
    }

    fn diff() -> impl proptest::strategy::Strategy<Value = f64> {
        use proptest::prelude::*;
        prop_oneof![
            (-3.0f64..3.0).prop_map(|e| 10f64.powf(e)),
            (-3.0f64..3.0).prop_map(|e| -(10f64.powf(e))),
            Just(0.0),
            Just(1e-17),
        ]
    }

    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig { cases: 300, ..Default::default() })]
        // Source of the check: the project's scalar path (`three_grid::estimate`, checked
        // against Celik et al. 2008 Table 1, and `assess::govern`): a field point raises
        // exactly the codes a scalar quantity with the same three values raises.
        #[test]
        fn field_point_codes_equal_the_scalar_codes(
            r21 in 1.1f64..3.0,
            r32 in proptest::prop_oneof![1.1f64..3.0, proptest::strategy::Just(0.0)],
            phi1 in -10.0f64..10.0,
            d21 in diff(),
            d32 in diff(),
            order_max in proptest::prop_oneof![proptest::strategy::Just(20.0), 2.0f64..8.0],
            formal_order in proptest::prop_oneof![proptest::strategy::Just(2.0), proptest::strategy::Just(1.0)],
        ) {
            let r32 = if r32 == 0.0 { r21 } else { r32 };
            let h = [1.0, r21, r21 * r32];
            let settings = ThreeGridSettings { safety_factor: 1.25, order_max, formal_order, ..ThreeGridSettings::default() };
            let fast = FastThreeGrid::new(h, &settings).unwrap();
            let checks = PointChecks::new(&settings);
            let phi = [phi1, phi1 + d21, phi1 + d21 + d32];
            proptest::prop_assert_eq!(
                field_codes(&fast, &checks, phi),
                scalar_codes(h, phi, &settings),
                "h {:?} phi {:?}", h, phi
            );
        }
    }

    #[test]
    fn known_bad_probes_are_named_and_left_out_of_the_orders() {
        // Manufactured field on h = 1, 2, 4 (ratio 2, analytic orders): probes g0..g5 follow
        // φ = 1 + 0.01 h² exactly (p = 2, demonstrated); b0..b2 have constant differences
        // (R = 1: convergence not demonstrated, and divergent by the class rule since R ≥ 1);
        // s0..s6 follow φ = 1 + h^0.3 (p = 0.3 < 0.5: order_low, not demonstrated).
        let h = [1.0, 2.0, 4.0];
        let settings = ThreeGridSettings::default();
        let fast = FastThreeGrid::new(h, &settings).unwrap();
        let checks = PointChecks::new(&settings);
        let good = h.map(|x| 1.0 + 0.01 * x * x);
        let step = [1.0, 1.1, 1.2];
        let slow = h.map(|x| 1.0 + x.powf(0.3));
        let mut acc = ColumnAcc::default();
        let mut part = ColumnAcc::default();
        let probes: Vec<(String, [f64; 3])> = (0..6)
            .map(|i| (format!("g{i}"), good))
            .chain((0..3).map(|i| (format!("b{i}"), step)))
            .chain((0..7).map(|i| (format!("s{i}"), slow)))
            .collect();
        for (k, (id, phi)) in probes.iter().enumerate() {
            part.add(&fast.estimate(*phi), *phi, id.as_bytes(), &checks);
            if k % 5 == 4 {
                acc.merge(&part, ORDER_BINS as f64 / fast.order_cap());
                part = ColumnAcc::default();
            }
        }
        acc.merge(&part, ORDER_BINS as f64 / fast.order_cap());
        let c = acc.finish("cp");
        let nd = c
            .point_warnings
            .iter()
            .find(|w| w.code == NOT_DEMONSTRATED)
            .expect("not demonstrated listed");
        assert_eq!(nd.points, 10);
        assert_eq!(nd.at, ["b0", "b1", "b2", "s0", "s1"]);
        assert_eq!(nd.more, 5);
        assert_eq!(c.not_demonstrated(), 10);
        let low = c
            .point_warnings
            .iter()
            .find(|w| w.code == "order_low")
            .unwrap();
        assert_eq!((low.points, low.at[0].as_str()), (7, "s0"));
        // Only the six good probes enter the orders: mean and median exactly 2 (analytic; the
        // median's histogram bin holds equal values, so it is exact).
        assert_eq!(c.order_points, 6);
        assert!(
            (c.mean_order.unwrap() - 2.0).abs() < 1e-12,
            "{:?}",
            c.mean_order
        );
        assert!(
            (c.median_order.unwrap() - 2.0).abs() < 1e-12,
            "{:?}",
            c.median_order
        );
        let s = FieldSummary {
            name: "runner".into(),
            points: probes.len() as u64,
            written: None,
            columns: vec![c],
            setup: None,
            line: None,
            comparison: None,
        };
        let w = s.warnings();
        let nd = w
            .iter()
            .find(|w| w.code == "field_points_not_demonstrated")
            .expect("a study-level line");
        assert!(
            nd.message
                .contains("10 of 16 points (probes b0, b1, b2, s0, s1 … and 5 more)"),
            "{}",
            nd.message
        );
        assert!(w.iter().any(|w| w.code == "field_point_warnings"
            && w.message.contains("order_low at 7 of 16 points")));
    }

    #[test]
    fn listed_ids_are_short_and_printable() {
        assert_eq!(listed_id(b"  p17 "), "p17");
        let long = vec![b'a'; 1 << 20];
        let l = listed_id(&long);
        assert_eq!(l.chars().count(), 41);
        assert!(l.ends_with('…'));
        assert_eq!(listed_id(b"a\nb\x1b"), "a\u{fffd}b\u{fffd}");
    }

    #[test]
    fn overflowing_figures_leave_empty_cells() {
        // ε32 overflows to −inf: class monotonic (R = 0), no order, and the formal-order
        // fallback is infinite (same as three_grid::estimate); the file gets an empty cell.
        let phi = [1.7e308, 1.7e308, -1.7e308];
        let fast = FastThreeGrid::new(H, &ThreeGridSettings::default()).unwrap();
        let e = fast.estimate(phi);
        // The scalar estimator refuses overflowing differences; the field leaves the cells
        // empty instead of writing an infinity.
        assert!(three_grid::estimate(H, phi, &ThreeGridSettings::default()).is_err());
        assert!(e.uncertainty.is_none_or(f64::is_infinite));
        let mut b = Vec::new();
        push_opt(&mut b, e.uncertainty);
        assert!(b.is_empty());
        let mut part = ColumnAcc::default();
        part.add(&e, phi, b"a", &checks());
        let mut acc = ColumnAcc::default();
        acc.merge(&part, 1.0);
        let c = acc.finish("cp");
        assert_eq!(c.mean_relative, None);
        assert!(serde_json::to_string(&c)
            .unwrap()
            .contains("\"max_relative\":null"));
        // The point is not silently dropped: it is counted, and a warning names it.
        assert_eq!(c.overflowed, 1);
        assert!(serde_json::to_string(&c)
            .unwrap()
            .contains("\"overflowed\":1"));
    }

    #[test]
    fn overflowing_points_are_counted_and_warned() {
        // Source of the check: the IEEE 754 double range (largest finite value about 1.8e308).
        // Point a: ε32 = −3.4e308 overflows and the formal-order band U is infinite. Point b: U
        // is finite (about 1e300) but U/|φ1| with φ1 = 1e-300 exceeds the range. Point c is an
        // ordinary no-change point (U = 0, relative 0).
        let fast = FastThreeGrid::new(H, &ThreeGridSettings::default()).unwrap();
        let points = [
            [1.7e308, 1.7e308, -1.7e308],
            [1e-300, 1e300, 2e300],
            [2.0, 2.0, 2.0],
        ];
        let b = fast.estimate(points[1]);
        let ub = b.uncertainty.unwrap();
        assert!(ub.is_finite() && !(ub / 1e-300).is_finite(), "{b:?}");
        let mut part = ColumnAcc::default();
        for phi in points {
            part.add(&fast.estimate(phi), phi, b"a", &checks());
        }
        let mut acc = ColumnAcc::default();
        acc.merge(&part, 1.0);
        let c = acc.finish("cp");
        assert_eq!(c.overflowed, 2);
        // The relative figures hold only the representable point c.
        assert_eq!(c.max_relative, Some(0.0));
        let s = FieldSummary {
            name: "runner".into(),
            points: 3,
            written: None,
            columns: vec![c],
            setup: None,
            line: None,
            comparison: None,
        };
        let w = s.warnings();
        let o = w
            .iter()
            .find(|w| w.code == "field_points_overflowed")
            .unwrap();
        assert!(o.message.contains("2 of 3 points"), "{}", o.message);
        // A column without overflow gets no such warning.
        let mut fine = ColumnAcc::default();
        fine.add(&fast.estimate([2.0, 2.0, 2.0]), [2.0; 3], b"a", &checks());
        let s = FieldSummary {
            columns: vec![fine.finish("cp")],
            ..s
        };
        assert!(s
            .warnings()
            .iter()
            .all(|w| w.code != "field_points_overflowed"));
    }
}
