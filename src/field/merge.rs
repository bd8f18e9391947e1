//! Mergeable summaries of a field column: the points of a field split into partitions (files,
//! dataframe partitions, machines) are each estimated and summarised on their own, and the
//! partial summaries merge into exactly the summary one pass over every point gives — the same
//! counts, the same order histogram and median, the same first ids, the same sums to the last
//! bit, whatever the split and whatever the order of the merges.
//!
//! [`FieldPoints`] is the per-point estimate of a field as the in-memory field driver makes it
//! (`field/mesh.rs`): three meshes by [`FastThreeGrid`], four or more (or a noise floor) by
//! [`PointEstimator`], with the point warnings of [`PointChecks`]. [`ColumnPartial`] is the
//! accumulator: `add` one point at its global position, `merge` another partial, `finish` into
//! a [`ColumnSummary`] (the same serde contract as the field summaries of an assessment).
//!
//! What makes the merge exact:
//! * counts are integers; the largest relative uncertainty is a maximum;
//! * the first ids of each warning are kept with their global positions, and a merge keeps the
//!   [`LISTED`] smallest positions, so they are the first in the order of the whole field;
//! * sums (orders, relative uncertainties, the weights of the class shares, the orders in each
//!   bin of the median's histogram) are held exactly as a sum of non-overlapping doubles
//!   (Shewchuk 1997, "Adaptive precision floating-point arithmetic and fast robust geometric
//!   predicates", Discrete Comput. Geom. 18, 305–363) and rounded once, correctly, at the end,
//!   as Python's `math.fsum` does; the rounded value depends on the exact sum only, not on the
//!   order of the additions. The addends are non-negative (relative uncertainties, weights) or
//!   bounded by the order search (orders), so an overflow happens only when the exact total
//!   overflows, and then in every order.
//!
//! The figures of this accumulator are exactly rounded; the streamed field driver sums in its
//! fixed chunk order, so its means may differ from these in the last bit.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use super::summary::{
    listed_id, median_by_rank, point_warnings_of, ClassCounts, ClassShares, ColumnSummary,
    NoiseFloorFigures, PointChecks, FIELD_CODES, ORDER_BINS,
};
use crate::estimate::point::{PointBasis, PointEstimator, PointSettings};
use crate::estimate::three_grid::Governing;
use crate::estimate::three_grid_fast::FastThreeGrid;
use crate::estimate::{Convergence, EstimateError};
use crate::point_warnings::LISTED;

/// The per-point warning codes of [`FieldPoint::codes`]: bit `k` stands for `POINT_CODES[k]`;
/// the first ones are [`FIELD_CODES`], then the two codes of the noise floor.
pub const POINT_CODES: [&str; 13] = [
    FIELD_CODES[0],
    FIELD_CODES[1],
    FIELD_CODES[2],
    FIELD_CODES[3],
    FIELD_CODES[4],
    FIELD_CODES[5],
    FIELD_CODES[6],
    FIELD_CODES[7],
    FIELD_CODES[8],
    FIELD_CODES[9],
    FIELD_CODES[10],
    crate::estimate::point::WARN_WITHIN_NOISE_FLOOR,
    crate::estimate::point::WARN_PARTLY_WITHIN_NOISE_FLOOR,
];
const C_ND: u16 = 1 << 0;
const C_WITHIN: u16 = 1 << 11;
const C_PARTLY: u16 = 1 << 12;

/// The class code of a point, as in the per-point files ([`super::CLASS_CODES`]): 0 none,
/// 1 monotonic, 2 oscillatory, 3 divergent, 4 no change.
pub fn class_code(c: Option<Convergence>) -> u8 {
    match c {
        Some(Convergence::Monotonic) => 1,
        Some(Convergence::Oscillatory) => 2,
        Some(Convergence::Divergent) => 3,
        Some(Convergence::NoChange) => 4,
        Some(Convergence::Undetermined) | None => 0,
    }
}

/// What stated U at a point, as a small code: 0 none, 1 the GCI, 2 half the oscillation's
/// range, 3 the formal order with Fs = 3, 4 no change, 5 least squares, 6 the noise floor.
pub fn basis_code(b: Option<PointBasis>) -> u8 {
    match b {
        None => 0,
        Some(PointBasis::ThreeMesh(Governing::Gci)) => 1,
        Some(PointBasis::ThreeMesh(Governing::OscillationRange)) => 2,
        Some(PointBasis::ThreeMesh(Governing::FormalOrder)) => 3,
        Some(PointBasis::ThreeMesh(Governing::NoChange)) => 4,
        Some(PointBasis::LeastSquares) => 5,
        Some(PointBasis::NoiseFloor) => 6,
    }
}

/// The estimate at one point of a field with its warning bits.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FieldPoint {
    /// Class; `None` when a value is missing (not finite) on some mesh.
    pub convergence: Option<Convergence>,
    /// Observed order (free order of least squares).
    pub order: Option<f64>,
    /// Extrapolated value.
    pub extrapolated: Option<f64>,
    /// Absolute uncertainty of the finest value.
    pub uncertainty: Option<f64>,
    /// What stated it.
    pub basis: Option<PointBasis>,
    /// Bits of [`POINT_CODES`].
    pub codes: u16,
}

impl FieldPoint {
    /// No estimate: a value missing on some mesh.
    pub const MISSING: FieldPoint = FieldPoint {
        convergence: None,
        order: None,
        extrapolated: None,
        uncertainty: None,
        basis: None,
        codes: 0,
    };
}

/// The per-point estimate of a field prepared for fixed sizes: the same estimate and warning
/// bits as the in-memory field driver.
#[derive(Debug, Clone)]
pub struct FieldPoints {
    three: Option<FastThreeGrid>,
    many: Option<PointEstimator>,
    checks: PointChecks,
    cap: f64,
    meshes: usize,
    key: Vec<u64>,
    /// The noise floor when the estimate applies one (0 otherwise).
    floor: f64,
}

impl FieldPoints {
    /// Prepares the estimate for sizes `h` (finest first, three or more, increasing).
    pub fn new(h: &[f64], settings: &PointSettings) -> Result<Self, EstimateError> {
        let pe = PointEstimator::new(h, settings)?;
        let custom = settings.noise_floor > 0.0;
        let (three, many, cap) = if h.len() > 3 {
            (None, Some(pe), settings.least_squares.order_max)
        } else {
            let fast = FastThreeGrid::new([h[0], h[1], h[2]], &settings.three)?;
            let cap = fast.order_cap();
            if custom {
                (None, Some(pe), cap)
            } else {
                (Some(fast), None, cap)
            }
        };
        if !(cap.is_finite() && cap > 0.0) {
            return Err(EstimateError::InvalidInput(format!(
                "the order cap must be finite and > 0 (got {cap})"
            )));
        }
        let t = &settings.three;
        let l = &settings.least_squares;
        let mut key: Vec<u64> = h.iter().map(|v| v.to_bits()).collect();
        key.extend(
            [
                t.safety_factor,
                t.order_max,
                t.formal_order,
                l.order_min,
                l.order_max,
                l.formal_order,
                settings.noise_floor,
            ]
            .map(f64::to_bits),
        );
        key.push(u64::from(l.guard));
        key.push(t.rule as u64);
        Ok(FieldPoints {
            three,
            many,
            checks: PointChecks::new(&settings.three),
            cap,
            meshes: h.len(),
            key,
            floor: settings.noise_floor,
        })
    }

    /// Number of meshes.
    pub fn meshes(&self) -> usize {
        self.meshes
    }

    /// The estimate at one point; `phi` finest first, one value per mesh. A non-finite value
    /// (a value marked missing) gives class `None` and no figure.
    pub fn estimate(&self, phi: &[f64]) -> FieldPoint {
        if phi.len() != self.meshes || phi.iter().any(|v| !v.is_finite()) {
            return FieldPoint::MISSING;
        }
        match (&self.three, &self.many) {
            (Some(fast), _) => {
                let phi3 = [phi[0], phi[1], phi[2]];
                let e = fast.estimate(phi3);
                FieldPoint {
                    convergence: Some(e.convergence),
                    order: e.observed_order,
                    extrapolated: e.extrapolated,
                    uncertainty: e.uncertainty,
                    basis: e.governing.map(PointBasis::ThreeMesh),
                    codes: self.checks.codes(&e, phi3),
                }
            }
            (None, Some(pe)) => {
                let (r, flags) = pe.estimate_flagged(phi);
                let mut codes = self.checks.codes_many(&r, phi);
                if flags.within_noise_floor {
                    codes |= C_WITHIN;
                }
                if flags.partly_within_noise_floor {
                    codes |= C_PARTLY;
                }
                FieldPoint {
                    convergence: Some(r.convergence),
                    order: r.order,
                    extrapolated: r.extrapolated,
                    uncertainty: r.uncertainty,
                    basis: r.basis,
                    codes,
                }
            }
            // `new` always prepares one of the two.
            (None, None) => FieldPoint::MISSING,
        }
    }

    /// An empty accumulator for a column estimated by this estimate.
    pub fn column(&self, name: &str) -> ColumnPartial {
        ColumnPartial {
            name: name.to_string(),
            key: self.key.clone(),
            bin_scale: ORDER_BINS as f64 / self.cap,
            floor: self.floor,
            ..ColumnPartial::empty()
        }
    }
}

/// An exact sum of doubles: non-overlapping partials (Shewchuk 1997), rounded once at the end.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ExactSum {
    partials: Vec<f64>,
    overflow: bool,
}

impl ExactSum {
    /// Adds `x` exactly (a non-finite `x`, or a partial that overflows, makes the sum overflow).
    pub fn add(&mut self, x: f64) {
        if self.overflow {
            return;
        }
        if !x.is_finite() {
            self.overflow = true;
            return;
        }
        let mut x = x;
        let mut i = 0;
        for j in 0..self.partials.len() {
            let mut y = self.partials[j];
            if x.abs() < y.abs() {
                std::mem::swap(&mut x, &mut y);
            }
            let hi = x + y;
            let lo = y - (hi - x);
            if lo != 0.0 {
                self.partials[i] = lo;
                i += 1;
            }
            x = hi;
        }
        if !x.is_finite() {
            self.overflow = true;
            self.partials.clear();
            return;
        }
        self.partials.truncate(i);
        self.partials.push(x);
    }

    /// Adds another exact sum.
    pub fn merge(&mut self, o: &ExactSum) {
        if o.overflow {
            self.overflow = true;
            self.partials.clear();
        }
        for &p in &o.partials {
            self.add(p);
        }
    }

    /// The exact sum correctly rounded to a double (round half to even), `None` when it
    /// overflowed. The final rounding follows Python's `math.fsum`.
    pub fn value(&self) -> Option<f64> {
        if self.overflow {
            return None;
        }
        let p = &self.partials;
        let mut n = p.len();
        if n == 0 {
            return Some(0.0);
        }
        n -= 1;
        let mut hi = p[n];
        let mut lo = 0.0;
        while n > 0 {
            let x = hi;
            n -= 1;
            let y = p[n];
            hi = x + y;
            let yr = hi - x;
            lo = y - yr;
            if lo != 0.0 {
                break;
            }
        }
        // Half-way case: the partials below decide the direction of the rounding.
        if n > 0 && ((lo < 0.0 && p[n - 1] < 0.0) || (lo > 0.0 && p[n - 1] > 0.0)) {
            let y = lo * 2.0;
            let x = hi + y;
            let yr = x - hi;
            // Exact by design: whether doubling the remainder rounds exactly.
            #[allow(clippy::float_cmp)]
            let exact = y == yr;
            if exact {
                hi = x;
            }
        }
        Some(hi)
    }
}

/// A listed place: the global position of a point and its id.
type Listed = (u64, String);

/// Keeps the [`LISTED`] smallest positions of `a` and `b` (each sorted), in order.
fn merge_listed(a: &mut Vec<Listed>, b: &[Listed]) {
    if b.is_empty() {
        return;
    }
    let mut all: Vec<Listed> = a.drain(..).chain(b.iter().cloned()).collect();
    all.sort_by_key(|(pos, _)| *pos);
    all.dedup_by_key(|(pos, _)| *pos);
    all.truncate(LISTED);
    *a = all;
}

fn push_listed(v: &mut Vec<Listed>, pos: u64, id: &mut dyn FnMut() -> String) {
    // Points arrive in any order within a partition; keep the smallest positions. The id is
    // made only for a point that is listed.
    if v.len() < LISTED || v.last().is_some_and(|(p, _)| pos < *p) {
        let at = v.partition_point(|(p, _)| *p < pos);
        if v.get(at).is_some_and(|(p, _)| *p == pos) {
            return;
        }
        v.insert(at, (pos, listed_id(id().as_bytes())));
        v.truncate(LISTED);
    }
}

/// Why two partial summaries cannot be merged.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[non_exhaustive]
pub enum MergeError {
    /// They were made with different sizes or settings, or for different columns.
    #[error("the partial summaries of `{0}` and `{1}` were made with different columns, mesh sizes or settings and cannot be merged")]
    Mismatch(String, String),
}

/// The summary of one column of a field over some of its points, mergeable with the
/// summaries of the other points (see the module documentation).
#[derive(Debug, Clone, PartialEq)]
pub struct ColumnPartial {
    name: String,
    key: Vec<u64>,
    bin_scale: f64,
    /// The noise floor (0: none).
    floor: f64,
    points: u64,
    classes: ClassCounts,
    order_n: u64,
    order_sum: ExactSum,
    /// Bin → (count, exact sum of its orders).
    hist: BTreeMap<usize, (u64, ExactSum)>,
    rel_n: u64,
    rel_sum: ExactSum,
    rel_max: f64,
    formal: u64,
    overflowed: u64,
    osc_range: u64,
    code_n: [u64; POINT_CODES.len()],
    code_at: [Vec<Listed>; POINT_CODES.len()],
    missing_at: Vec<Listed>,
    /// Weight per class: none, monotonic, oscillatory, divergent, no change.
    weight: [ExactSum; 5],
}

impl ColumnPartial {
    fn empty() -> Self {
        ColumnPartial {
            name: String::new(),
            key: Vec::new(),
            bin_scale: 1.0,
            floor: 0.0,
            points: 0,
            classes: ClassCounts::default(),
            order_n: 0,
            order_sum: ExactSum::default(),
            hist: BTreeMap::new(),
            rel_n: 0,
            rel_sum: ExactSum::default(),
            rel_max: 0.0,
            formal: 0,
            overflowed: 0,
            osc_range: 0,
            code_n: [0; POINT_CODES.len()],
            code_at: Default::default(),
            missing_at: Vec::new(),
            weight: Default::default(),
        }
    }

    /// Number of points added.
    pub fn points(&self) -> u64 {
        self.points
    }

    /// Adds the point at global position `pos` (its place in the whole field, 0-based) with
    /// id `id`, its finest value `phi1`, its estimate `p` and its weight (area, volume or 1;
    /// a weight that is not finite or negative counts as 0).
    pub fn add(&mut self, pos: u64, id: &str, phi1: f64, p: &FieldPoint, weight: f64) {
        self.add_with(pos, || id.to_string(), phi1, p, weight);
    }

    /// [`ColumnPartial::add`] with the id made on demand: `id` is called only when the point
    /// is listed among the first of a warning (so that millions of points need no id text).
    pub fn add_with(
        &mut self,
        pos: u64,
        mut id: impl FnMut() -> String,
        phi1: f64,
        p: &FieldPoint,
        weight: f64,
    ) {
        self.points += 1;
        let w = if weight.is_finite() && weight > 0.0 {
            weight
        } else {
            0.0
        };
        self.weight[class_code(p.convergence) as usize].add(w);
        let Some(convergence) = p.convergence else {
            self.classes.none += 1;
            push_listed(&mut self.missing_at, pos, &mut id);
            return;
        };
        self.classes.add(convergence);
        match p.basis {
            Some(PointBasis::ThreeMesh(Governing::FormalOrder)) => self.formal += 1,
            Some(PointBasis::ThreeMesh(Governing::OscillationRange)) => self.osc_range += 1,
            _ => {}
        }
        let mut rest = p.codes;
        while rest != 0 {
            let k = rest.trailing_zeros() as usize;
            rest &= rest - 1;
            if k < POINT_CODES.len() {
                self.code_n[k] += 1;
                push_listed(&mut self.code_at[k], pos, &mut id);
            }
        }
        if let Some(order) = p.order.filter(|_| p.codes & C_ND == 0) {
            self.order_n += 1;
            self.order_sum.add(order);
            let k = ((order * self.bin_scale) as usize).min(ORDER_BINS - 1);
            let bin = self.hist.entry(k).or_default();
            bin.0 += 1;
            bin.1.add(order);
        }
        if let Some(u) = p.uncertainty {
            if !u.is_finite() {
                self.overflowed += 1;
            } else if phi1 != 0.0 {
                let rel = u / phi1.abs();
                if rel.is_finite() {
                    self.rel_n += 1;
                    self.rel_sum.add(rel);
                    self.rel_max = self.rel_max.max(rel);
                } else {
                    self.overflowed += 1;
                }
            }
        }
    }

    /// Merges the summary of other points of the same column (made with the same sizes and
    /// settings). Associative and commutative: any split and any order give the same result.
    pub fn merge(&mut self, o: &ColumnPartial) -> Result<(), MergeError> {
        if self.name != o.name || self.key != o.key {
            return Err(MergeError::Mismatch(self.name.clone(), o.name.clone()));
        }
        self.points += o.points;
        self.classes.monotonic += o.classes.monotonic;
        self.classes.oscillatory += o.classes.oscillatory;
        self.classes.divergent += o.classes.divergent;
        self.classes.no_change += o.classes.no_change;
        self.classes.none += o.classes.none;
        self.order_n += o.order_n;
        self.order_sum.merge(&o.order_sum);
        for (k, (n, s)) in &o.hist {
            let bin = self.hist.entry(*k).or_default();
            bin.0 += n;
            bin.1.merge(s);
        }
        self.rel_n += o.rel_n;
        self.rel_sum.merge(&o.rel_sum);
        self.rel_max = self.rel_max.max(o.rel_max);
        self.formal += o.formal;
        self.overflowed += o.overflowed;
        self.osc_range += o.osc_range;
        for k in 0..POINT_CODES.len() {
            self.code_n[k] += o.code_n[k];
            merge_listed(&mut self.code_at[k], &o.code_at[k]);
        }
        merge_listed(&mut self.missing_at, &o.missing_at);
        for k in 0..5 {
            self.weight[k].merge(&o.weight[k]);
        }
        Ok(())
    }

    /// The exactly rounded mean of the orders in the histogram bin holding 0-based rank `rank`.
    fn value_at_rank(&self, rank: u64) -> Option<f64> {
        let mut seen = 0u64;
        for (n, s) in self.hist.values() {
            seen += n;
            if *n > 0 && seen > rank {
                return s.value().map(|s| s / *n as f64);
            }
        }
        None
    }

    /// The column's summary (the serde contract of [`ColumnSummary`]), with the class shares
    /// weighted by the points' weights and the noise-floor figures when the estimate has one.
    pub fn finish(&self) -> ColumnSummary {
        let finite = |v: f64| v.is_finite().then_some(v);
        let median = median_by_rank(self.order_n, |r| self.value_at_rank(r));
        let mean = |s: &ExactSum, n: u64| {
            if n == 0 {
                None
            } else {
                s.value().and_then(|s| finite(s / n as f64))
            }
        };
        let listed = |v: &Vec<Listed>| v.iter().map(|(_, id)| id.clone()).collect::<Vec<_>>();
        let mut total = ExactSum::default();
        for w in &self.weight {
            total.merge(w);
        }
        let class_shares = match total.value() {
            Some(t) if t > 0.0 => {
                let share = |k: usize| self.weight[k].value().map_or(0.0, |w| w / t);
                Some(ClassShares {
                    none: share(0),
                    monotonic: share(1),
                    oscillatory: share(2),
                    divergent: share(3),
                    no_change: share(4),
                })
            }
            _ => None,
        };
        ColumnSummary {
            name: self.name.clone(),
            classes: self.classes,
            mean_order: mean(&self.order_sum, self.order_n),
            median_order: median,
            order_points: self.order_n,
            mean_relative: mean(&self.rel_sum, self.rel_n),
            max_relative: if self.rel_n > 0 {
                finite(self.rel_max)
            } else {
                None
            },
            overflowed: self.overflowed,
            formal_order_points: self.formal,
            oscillation_range_points: self.osc_range,
            point_warnings: point_warnings_of(&self.code_n, |k| listed(&self.code_at[k])),
            missing_at: listed(&self.missing_at),
            class_shares,
            transfer: None,
            global_order: None,
            noise_floor: (self.floor > 0.0).then(|| NoiseFloorFigures {
                floor: self.floor,
                within: self.code_n[11],
                partly_within: self.code_n[12],
            }),
        }
    }

    /// Everything [`ColumnPartial::finish`] leaves out of the serde form, for comparisons:
    /// the summary's JSON with the ids of missing points and the counts of formal-order and
    /// oscillation-range points.
    pub fn finish_json(&self) -> serde_json::Value {
        let s = self.finish();
        #[derive(Serialize)]
        struct Whole<'a> {
            #[serde(flatten)]
            summary: &'a ColumnSummary,
            points: u64,
            formal_order_points: u64,
            oscillation_range_points: u64,
            missing_at: &'a [String],
        }
        serde_json::to_value(Whole {
            summary: &s,
            points: self.points,
            formal_order_points: s.formal_order_points,
            oscillation_range_points: s.oscillation_range_points,
            missing_at: &s.missing_at,
        })
        .unwrap_or(serde_json::Value::Null)
    }
}

/// An exact sum as stored: its partials as bits.
#[derive(Serialize, Deserialize)]
struct SumState {
    bits: Vec<u64>,
    overflow: bool,
}

impl From<&ExactSum> for SumState {
    fn from(s: &ExactSum) -> Self {
        SumState {
            bits: s.partials.iter().map(|v| v.to_bits()).collect(),
            overflow: s.overflow,
        }
    }
}

impl SumState {
    /// The partials as stored (a non-finite one marks the sum as overflowed).
    fn sum(&self) -> ExactSum {
        let partials: Vec<f64> = self.bits.iter().map(|b| f64::from_bits(*b)).collect();
        if self.overflow || partials.iter().any(|v| !v.is_finite()) {
            return ExactSum {
                partials: Vec::new(),
                overflow: true,
            };
        }
        ExactSum {
            partials,
            overflow: false,
        }
    }
}

/// The complete state of a [`ColumnPartial`], doubles as their bits (so that any text format
/// carries them exactly).
#[derive(Serialize, Deserialize)]
struct State {
    name: String,
    key: Vec<u64>,
    bin_scale: u64,
    floor: u64,
    points: u64,
    classes: [u64; 5],
    order_n: u64,
    order_sum: SumState,
    hist: Vec<(usize, u64, SumState)>,
    rel_n: u64,
    rel_sum: SumState,
    rel_max: u64,
    formal: u64,
    overflowed: u64,
    osc_range: u64,
    code_n: Vec<u64>,
    code_at: Vec<Vec<Listed>>,
    missing_at: Vec<Listed>,
    weight: Vec<SumState>,
}

impl ColumnPartial {
    /// The complete state as JSON text, to carry a partial summary between processes
    /// ([`ColumnPartial::from_state`] rebuilds it exactly).
    pub fn state(&self) -> String {
        let c = &self.classes;
        let s = State {
            name: self.name.clone(),
            key: self.key.clone(),
            bin_scale: self.bin_scale.to_bits(),
            floor: self.floor.to_bits(),
            points: self.points,
            classes: [c.monotonic, c.oscillatory, c.divergent, c.no_change, c.none],
            order_n: self.order_n,
            order_sum: (&self.order_sum).into(),
            hist: self
                .hist
                .iter()
                .map(|(k, (n, s))| (*k, *n, s.into()))
                .collect(),
            rel_n: self.rel_n,
            rel_sum: (&self.rel_sum).into(),
            rel_max: self.rel_max.to_bits(),
            formal: self.formal,
            overflowed: self.overflowed,
            osc_range: self.osc_range,
            code_n: self.code_n.to_vec(),
            code_at: self.code_at.to_vec(),
            missing_at: self.missing_at.clone(),
            weight: self.weight.iter().map(SumState::from).collect(),
        };
        serde_json::to_string(&s).unwrap_or_default()
    }

    /// Rebuilds a partial summary from [`ColumnPartial::state`]; refuses text that is not one.
    pub fn from_state(text: &str) -> Result<Self, String> {
        let s: State = serde_json::from_str(text).map_err(|e| e.to_string())?;
        let code_n: [u64; POINT_CODES.len()] = s
            .code_n
            .try_into()
            .map_err(|_| format!("{} code counts expected", POINT_CODES.len()))?;
        let code_at: [Vec<Listed>; POINT_CODES.len()] = s
            .code_at
            .try_into()
            .map_err(|_| format!("{} code lists expected", POINT_CODES.len()))?;
        let weight: [ExactSum; 5] = s
            .weight
            .iter()
            .map(SumState::sum)
            .collect::<Vec<_>>()
            .try_into()
            .map_err(|_| "5 class weights expected".to_string())?;
        let bin_scale = f64::from_bits(s.bin_scale);
        if !(bin_scale.is_finite() && bin_scale > 0.0) {
            return Err("the histogram scale must be finite and > 0".into());
        }
        let [monotonic, oscillatory, divergent, no_change, none] = s.classes;
        Ok(ColumnPartial {
            name: s.name,
            key: s.key,
            bin_scale,
            floor: f64::from_bits(s.floor),
            points: s.points,
            classes: ClassCounts {
                monotonic,
                oscillatory,
                divergent,
                no_change,
                none,
            },
            order_n: s.order_n,
            order_sum: s.order_sum.sum(),
            hist: s
                .hist
                .iter()
                .map(|(k, n, sum)| (*k, (*n, sum.sum())))
                .collect(),
            rel_n: s.rel_n,
            rel_sum: s.rel_sum.sum(),
            rel_max: f64::from_bits(s.rel_max),
            formal: s.formal,
            overflowed: s.overflowed,
            osc_range: s.osc_range,
            code_n,
            code_at,
            missing_at: s.missing_at,
            weight,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::point_warnings::NOT_DEMONSTRATED;
    use proptest::prelude::*;

    fn sum_exact(v: &[f64]) -> Option<f64> {
        let mut s = ExactSum::default();
        for x in v {
            s.add(*x);
        }
        s.value()
    }

    #[test]
    fn exact_sums_are_correctly_rounded() {
        // Analytic: 1e100 + 1 − 1e100 is exactly 1 (plain summation gives 0); 0.1 taken ten
        // times is 1.0000000000000000555 exactly, which rounds to 1.0 (plain summation gives
        // 0.9999999999999999); 2^53 + 1 + 2^-60 lies just above a half-way point and must
        // round up to 2^53 + 2 (round half to even alone would give 2^53).
        assert_eq!(sum_exact(&[1e100, 1.0, -1e100]), Some(1.0));
        assert_eq!(sum_exact(&[0.1; 10]), Some(1.0));
        let two53 = 9007199254740992.0;
        assert_eq!(sum_exact(&[two53, 1.0, 2f64.powi(-60)]), Some(two53 + 2.0));
        assert_eq!(sum_exact(&[two53, 1.0]), Some(two53));
        assert_eq!(sum_exact(&[]), Some(0.0));
        assert_eq!(sum_exact(&[f64::MAX, f64::MAX]), None);
        assert_eq!(sum_exact(&[1.0, f64::INFINITY]), None);
    }

    proptest! {
        // Source of the check: exact arithmetic (the sum of the same numbers in any order and
        // any grouping is one real number, rounded once).
        #[test]
        fn exact_sums_do_not_depend_on_order_or_grouping(
            v in proptest::collection::vec(
                prop_oneof![-1e20f64..1e20, -1.0f64..1.0, (-300i32..300).prop_map(|e| 2f64.powi(e))],
                0..60),
            cut in 0usize..60,
            seed in any::<u64>(),
        ) {
            let whole = sum_exact(&v);
            let cut = cut.min(v.len());
            let (mut a, mut b) = (ExactSum::default(), ExactSum::default());
            for x in &v[..cut] { a.add(*x); }
            for x in v[cut..].iter().rev() { b.add(*x); }
            b.merge(&a);
            prop_assert_eq!(b.value().map(f64::to_bits), whole.map(f64::to_bits));
            let mut shuffled = v.clone();
            let mut s = seed;
            for i in (1..shuffled.len()).rev() {
                s = s.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
                shuffled.swap(i, (s >> 33) as usize % (i + 1));
            }
            prop_assert_eq!(sum_exact(&shuffled).map(f64::to_bits), whole.map(f64::to_bits));
        }
    }

    /// Manufactured points: φ = φ0 + a h^p at each point with p, a from the point's index
    /// (exact power laws, analytic orders), mixed with diverging, oscillating, flat and
    /// missing points.
    fn manufactured(h: &[f64], n: usize, seed: u64) -> Vec<Vec<f64>> {
        let mut s = seed;
        let mut next = move || {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (s >> 11) as f64 / (1u64 << 53) as f64
        };
        (0..n)
            .map(|_| {
                let kind = next();
                let p = 0.3 + 3.0 * next();
                let a = next() - 0.5;
                let phi0 = 10.0 * (next() - 0.5);
                h.iter()
                    .enumerate()
                    .map(|(i, x)| {
                        if kind < 0.05 {
                            f64::NAN
                        } else if kind < 0.1 {
                            phi0
                        } else if kind < 0.2 {
                            phi0 + a * (1.0 + i as f64)
                        } else if kind < 0.3 {
                            phi0 + a * x.powf(p) * if i % 2 == 0 { 1.0 } else { -1.0 }
                        } else {
                            phi0 + a * x.powf(p)
                        }
                    })
                    .collect()
            })
            .collect()
    }

    fn one_pass(fp: &FieldPoints, pts: &[Vec<f64>], w: &[f64]) -> ColumnPartial {
        let mut c = fp.column("u");
        for (i, phi) in pts.iter().enumerate() {
            c.add(i as u64, &format!("p{i}"), phi[0], &fp.estimate(phi), w[i]);
        }
        c
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]
        // Source of the check: the definition of a mergeable summary (one pass over all points
        // is the reference); the data are manufactured power laws (analytic).
        #[test]
        fn any_split_merges_into_the_one_pass_summary(
            meshes in 3usize..6,
            n in 1usize..400,
            seed in any::<u64>(),
            cuts in proptest::collection::vec(0usize..400, 0..6),
            reverse in any::<bool>(),
            floor in prop_oneof![Just(0.0), Just(1e-3)],
        ) {
            let h: Vec<f64> = (0..meshes).map(|i| 1.4f64.powi(i as i32)).collect();
            let settings = PointSettings { noise_floor: floor, ..PointSettings::default() };
            let fp = FieldPoints::new(&h, &settings).unwrap();
            let pts = manufactured(&h, n, seed);
            let w: Vec<f64> = (0..n).map(|i| 0.5 + (i % 7) as f64 * 0.37).collect();
            let whole = one_pass(&fp, &pts, &w);
            let mut bounds: Vec<usize> = cuts.into_iter().map(|c| c.min(n)).collect();
            bounds.push(0);
            bounds.push(n);
            bounds.sort_unstable();
            let mut parts: Vec<ColumnPartial> = bounds
                .windows(2)
                .map(|b| {
                    let mut c = fp.column("u");
                    // Within a partition the points may come in any order.
                    for i in (b[0]..b[1]).rev() {
                        c.add(i as u64, &format!("p{i}"), pts[i][0], &fp.estimate(&pts[i]), w[i]);
                    }
                    c
                })
                .collect();
            if reverse {
                parts.reverse();
            }
            let mut merged = fp.column("u");
            for p in &parts {
                merged.merge(p).unwrap();
            }
            prop_assert_eq!(
                serde_json::to_string(&merged.finish_json()).unwrap(),
                serde_json::to_string(&whole.finish_json()).unwrap()
            );
            prop_assert_eq!(merged.finish(), whole.finish());
            // The state carries a partial summary exactly.
            prop_assert_eq!(&ColumnPartial::from_state(&merged.state()).unwrap(), &merged);
        }
    }

    #[test]
    fn first_ids_and_counts_follow_the_whole_field() {
        // Manufactured: points 0..20 on h = 1, 2, 4; even points follow φ = 1 + h² (order 2
        // exactly, analytic), odd points have equal differences (R = 1, not demonstrated).
        let h = [1.0, 2.0, 4.0];
        let fp = FieldPoints::new(&h, &PointSettings::default()).unwrap();
        let pts: Vec<Vec<f64>> = (0..20)
            .map(|i| {
                if i % 2 == 0 {
                    h.iter().map(|x| 1.0 + x * x).collect()
                } else {
                    vec![1.0, 2.0, 3.0]
                }
            })
            .collect();
        let w = vec![1.0; 20];
        let whole = one_pass(&fp, &pts, &w).finish();
        let nd = whole
            .point_warnings
            .iter()
            .find(|w| w.code == NOT_DEMONSTRATED)
            .unwrap();
        assert_eq!(nd.points, 10);
        assert_eq!(nd.at, ["p1", "p3", "p5", "p7", "p9"]);
        assert_eq!(whole.order_points, 10);
        assert_eq!(whole.mean_order, Some(2.0));
        assert_eq!(whole.median_order, Some(2.0));
        // Equal weights: each class's share is its count over the points.
        let shares = whole.class_shares.unwrap();
        assert_eq!(shares.monotonic.to_bits(), 0.5f64.to_bits());
        // Different settings refuse to merge.
        let other = FieldPoints::new(&[1.0, 2.0, 3.0], &PointSettings::default()).unwrap();
        assert!(fp.column("u").merge(&other.column("u")).is_err());
        assert!(fp.column("u").merge(&fp.column("v")).is_err());
    }

    #[test]
    fn missing_values_give_class_none_and_are_listed() {
        let fp = FieldPoints::new(&[1.0, 2.0, 4.0], &PointSettings::default()).unwrap();
        let mut c = fp.column("u");
        let missing = fp.estimate(&[1.0, f64::NAN, 2.0]);
        assert_eq!(missing.convergence, None);
        c.add(3, "q3", 1.0, &missing, 1.0);
        c.add(1, "q1", 1.0, &missing, 1.0);
        let s = c.finish();
        assert_eq!(s.classes.none, 2);
        assert_eq!(s.missing_at, ["q1", "q3"]);
    }
}
