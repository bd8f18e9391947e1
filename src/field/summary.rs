//! Summaries: per-column accumulators over chunks, the column and field summaries (a
//! contract: their serde form) and the warnings they carry.

use crate::estimate::three_grid::Governing;
use crate::estimate::three_grid_fast::PointEstimate;
use crate::estimate::Convergence;
use crate::warning::Warning;
use serde::Serialize;

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
}

/// Summary of one column of a field (contract: the serde form).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ColumnSummary {
    /// Column name.
    pub name: String,
    /// Points per convergence class.
    pub classes: ClassCounts,
    /// Mean observed order over the points that have one.
    pub mean_order: Option<f64>,
    /// Median observed order over the points that have one, within one histogram bin
    /// (`order_max / ORDER_BINS`).
    pub median_order: Option<f64>,
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
        }
        out
    }
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
}

impl ColumnAcc {
    /// Adds one point. Its order is kept in `orders` until [`ColumnAcc::merge`] bins it, so that
    /// a chunk's accumulator stays small (no histogram per chunk).
    pub(super) fn add(&mut self, e: &PointEstimate, phi1: f64) {
        match e.convergence {
            Convergence::Monotonic => self.classes.monotonic += 1,
            Convergence::Oscillatory => self.classes.oscillatory += 1,
            Convergence::Divergent => self.classes.divergent += 1,
            Convergence::NoChange => self.classes.no_change += 1,
            // Three meshes always give a class.
            Convergence::Undetermined => {}
        }
        match e.governing {
            Some(Governing::FormalOrder) => self.formal += 1,
            Some(Governing::OscillationRange) => self.osc_range += 1,
            _ => {}
        }
        if let Some(p) = e.observed_order {
            self.order_n += 1;
            self.order_sum += p;
            self.orders.push(p);
        }
        if let Some(u) = e.uncertainty {
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

    /// Adds a chunk's figures and bins its orders (`bin_scale` bins per unit of order).
    pub(super) fn merge(&mut self, o: &ColumnAcc, bin_scale: f64) {
        self.classes.monotonic += o.classes.monotonic;
        self.classes.oscillatory += o.classes.oscillatory;
        self.classes.divergent += o.classes.divergent;
        self.classes.no_change += o.classes.no_change;
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
        let median = if self.order_n == 0 {
            None
        } else {
            let lo = self.value_at_rank((self.order_n - 1) / 2);
            let hi = self.value_at_rank(self.order_n / 2);
            match (lo, hi) {
                (Some(a), Some(b)) => finite(0.5 * (a + b)),
                _ => None,
            }
        };
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
            overflowed: self.overflowed,
            formal_order_points: self.formal,
            oscillation_range_points: self.osc_range,
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
        part.add(&e, phi[0]);
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
            part.add(&fast.estimate(phi), phi[0]);
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
        };
        let w = s.warnings();
        let o = w
            .iter()
            .find(|w| w.code == "field_points_overflowed")
            .unwrap();
        assert!(o.message.contains("2 of 3 points"), "{}", o.message);
        // A column without overflow gets no such warning.
        let mut fine = ColumnAcc::default();
        fine.add(&fast.estimate([2.0, 2.0, 2.0]), 2.0);
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
