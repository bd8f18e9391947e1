//! One order for every point of a field or profile: the options practitioners use when the
//! point-by-point observed orders scatter.
//!
//! * [`AverageOrder`]: the mean of the points' observed orders (the "average apparent order"
//!   of Celik et al. 2008 for profiles; Phillips & Roy 2014). Only points that demonstrate
//!   convergence count: class `monotonic` with an observed order. Oscillatory points (their
//!   order describes the decay of an oscillation, not a rate of convergence), divergent points,
//!   points that do not change and points whose differences lie within the noise floor (they
//!   carry no order) are left out and counted as skipped. A mergeable accumulator, so that
//!   threads each sum their share.
//! * [`norm_order`]: the order of the norms of the difference fields (Stern et al. 2001:
//!   `p = ln(‖ε32‖/‖ε21‖)/ln r` with the L2 or L∞ norm of `ε_ij = φ_i − φ_j` over the points),
//!   for unequal ratios the exact three-mesh relation
//!   `‖ε32‖/‖ε21‖ = (h3^p − h2^p)/(h2^p − h1^p)`, and with four meshes or more a least-squares
//!   fit of `d_i = C (h_{i+1}^p − h_i^p)` to the norms `d_i` of the successive differences, in
//!   logarithms (the norms span decades), which for three meshes has zero residual and gives
//!   the exact relation. [`DifferenceNorms`] accumulates the norms (sum of squares and largest
//!   magnitude per pair of successive meshes), mergeable between threads.
//!
//! Nothing here reads files or prints.

use crate::estimate::least_squares::{DEFAULT_ORDER_MAX, EXCLUDED_ORDER_HALF_WIDTH};
use crate::estimate::point::{PointBasis, PointResult};
use crate::estimate::{Convergence, EstimateError};

/// The mean observed order over the points that demonstrate convergence (module
/// documentation).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct AverageOrder {
    sum: f64,
    count: u64,
    skipped: u64,
}

impl AverageOrder {
    /// An empty accumulator.
    pub fn new() -> Self {
        AverageOrder::default()
    }

    /// Whether a point's order counts: class `monotonic`, a finite order, not stated from the
    /// noise floor.
    pub fn counts(r: &PointResult) -> bool {
        r.convergence == Convergence::Monotonic
            && r.order.is_some_and(f64::is_finite)
            && r.basis != Some(PointBasis::NoiseFloor)
    }

    /// Adds one point.
    pub fn add(&mut self, r: &PointResult) {
        match r.order {
            Some(p) if AverageOrder::counts(r) => {
                self.sum += p;
                self.count += 1;
            }
            _ => self.skipped += 1,
        }
    }

    /// Adds another accumulator's points.
    pub fn merge(&mut self, other: &AverageOrder) {
        self.sum += other.sum;
        self.count += other.count;
        self.skipped += other.skipped;
    }

    /// Points counted.
    pub fn count(&self) -> u64 {
        self.count
    }

    /// Points left out.
    pub fn skipped(&self) -> u64 {
        self.skipped
    }

    /// The mean order, `None` when no point counted.
    pub fn mean(&self) -> Option<f64> {
        (self.count > 0).then(|| self.sum / self.count as f64)
    }
}

/// The average order of a set of point results (see [`AverageOrder`]).
pub fn average_order<'a>(results: impl IntoIterator<Item = &'a PointResult>) -> AverageOrder {
    let mut acc = AverageOrder::new();
    for r in results {
        acc.add(r);
    }
    acc
}

/// Which norm of a difference field.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NormKind {
    /// Root mean square over the points (the L2 norm divided by √N; the ratio of two norms
    /// over the same points is the same).
    L2,
    /// Largest magnitude.
    LInf,
}

/// The norms of the differences between successive meshes over many points, accumulated
/// point by point (pair i is `φ_{i+1} − φ_i`, finest pair first).
#[derive(Debug, Clone, PartialEq)]
pub struct DifferenceNorms {
    sum_sq: Vec<f64>,
    max_abs: Vec<f64>,
    count: u64,
    skipped: u64,
}

impl DifferenceNorms {
    /// An empty accumulator for `meshes` meshes.
    pub fn new(meshes: usize) -> Self {
        let k = meshes.saturating_sub(1);
        DifferenceNorms {
            sum_sq: vec![0.0; k],
            max_abs: vec![0.0; k],
            count: 0,
            skipped: 0,
        }
    }

    /// Adds one point's values (finest first). A point with the wrong number of values or a
    /// value that is not finite is skipped (counted).
    pub fn add(&mut self, phi: &[f64]) {
        if phi.len() != self.sum_sq.len() + 1 || phi.iter().any(|v| !v.is_finite()) {
            self.skipped += 1;
            return;
        }
        for (i, w) in phi.windows(2).enumerate() {
            let d = w[1] - w[0];
            self.sum_sq[i] += d * d;
            self.max_abs[i] = self.max_abs[i].max(d.abs());
        }
        self.count += 1;
    }

    /// Adds another accumulator's points (same number of meshes; otherwise its points count
    /// as skipped).
    pub fn merge(&mut self, other: &DifferenceNorms) {
        if other.sum_sq.len() != self.sum_sq.len() {
            self.skipped += other.count + other.skipped;
            return;
        }
        for i in 0..self.sum_sq.len() {
            self.sum_sq[i] += other.sum_sq[i];
            self.max_abs[i] = self.max_abs[i].max(other.max_abs[i]);
        }
        self.count += other.count;
        self.skipped += other.skipped;
    }

    /// Points added.
    pub fn count(&self) -> u64 {
        self.count
    }

    /// Points skipped.
    pub fn skipped(&self) -> u64 {
        self.skipped
    }

    /// The norm of each pair's difference field, finest pair first (empty before any point).
    pub fn norms(&self, kind: NormKind) -> Vec<f64> {
        if self.count == 0 {
            return Vec::new();
        }
        match kind {
            NormKind::L2 => self
                .sum_sq
                .iter()
                .map(|s| (s / self.count as f64).sqrt())
                .collect(),
            NormKind::LInf => self.max_abs.clone(),
        }
    }
}

/// The order of the difference norms.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NormOrder {
    /// The order p.
    pub order: f64,
    /// Whether it lies on the upper end of the searched range ([`DEFAULT_ORDER_MAX`]).
    pub at_bound: bool,
    /// Root mean square of the fit's residuals in `ln d_i` (0 with three meshes).
    pub misfit: f64,
}

/// Samples of the order scan.
const NORM_SAMPLES: usize = 800;

/// The order of the norms `norms[i] = ‖φ_{i+1} − φ_i‖` over sizes `h` (finest first, three or
/// more, strictly increasing; one norm fewer than sizes, all finite and > 0), searched on
/// `[EXCLUDED_ORDER_HALF_WIDTH, DEFAULT_ORDER_MAX]` = [0.05, 8] (module documentation).
/// [`EstimateError::NoOrder`] when the best order is the lower end: the norms do not shrink
/// with refinement as a positive order says.
pub fn norm_order(h: &[f64], norms: &[f64]) -> Result<NormOrder, EstimateError> {
    let n = h.len();
    let bad = |m: String| Err(EstimateError::InvalidInput(m));
    if n < 3 {
        return bad(format!(
            "a norm-based order needs three meshes or more, got {n}"
        ));
    }
    if norms.len() + 1 != n {
        return bad(format!(
            "{n} sizes need {} difference norms, got {}",
            n - 1,
            norms.len()
        ));
    }
    if h.iter().any(|v| !(v.is_finite() && *v > 0.0)) || h.windows(2).any(|w| w[1] <= w[0]) {
        return bad(
            "sizes must be finite, > 0 and increase from the finest to the coarsest mesh".into(),
        );
    }
    if let Some(d) = norms.iter().find(|d| !(d.is_finite() && **d > 0.0)) {
        return bad(format!(
            "difference norms must be finite and > 0 (got {d}); a zero norm means two meshes \
             agree everywhere"
        ));
    }
    let k = n - 1;
    let z: Vec<f64> = norms.iter().map(|d| d.ln()).collect();
    let lx: Vec<f64> = h[..k].iter().map(|v| (v / h[0]).ln()).collect();
    let lr: Vec<f64> = h.windows(2).map(|w| (w[1] / w[0]).ln()).collect();
    // e_i(p) = z_i − g_i(p), g_i = ln(x_{i+1}^p − x_i^p) = p ln x_i + ln(expm1(p ln r_i))
    let resid = |p: f64| -> Vec<f64> {
        let e: Vec<f64> = (0..k)
            .map(|i| z[i] - p * lx[i] - (p * lr[i]).exp_m1().ln())
            .collect();
        let m = e.iter().sum::<f64>() / k as f64;
        e.iter().map(|v| v - m).collect()
    };
    let cost = |p: f64| resid(p).iter().map(|v| v * v).sum::<f64>();
    // dJ/dp = −2 Σ (e_i − ē)(g'_i − mean g'), g'_i = ln x_i + ln r_i / (−expm1(−p ln r_i))
    let slope = |p: f64| -> f64 {
        let e = resid(p);
        let g: Vec<f64> = (0..k)
            .map(|i| lx[i] + lr[i] / -(-p * lr[i]).exp_m1())
            .collect();
        let mg = g.iter().sum::<f64>() / k as f64;
        -2.0 * e.iter().zip(&g).map(|(a, b)| a * (b - mg)).sum::<f64>()
    };
    let (lo, hi) = (EXCLUDED_ORDER_HALF_WIDTH, DEFAULT_ORDER_MAX);
    let grid: Vec<f64> = (0..NORM_SAMPLES)
        .map(|j| lo + (hi - lo) * j as f64 / (NORM_SAMPLES - 1) as f64)
        .collect();
    let mut best = 0usize;
    let mut best_cost = f64::INFINITY;
    for (j, &p) in grid.iter().enumerate() {
        let c = cost(p);
        if c < best_cost {
            best_cost = c;
            best = j;
        }
    }
    if !best_cost.is_finite() {
        return Err(EstimateError::NoOrder(
            "the difference norms give no finite fit".into(),
        ));
    }
    let (mut a, mut b) = (
        grid[best.saturating_sub(1)],
        grid[(best + 1).min(NORM_SAMPLES - 1)],
    );
    let p = if slope(a) < 0.0 && slope(b) > 0.0 {
        for _ in 0..200 {
            let m = 0.5 * (a + b);
            if m <= a || m >= b {
                break;
            }
            if slope(m) < 0.0 {
                a = m;
            } else {
                b = m;
            }
        }
        0.5 * (a + b)
    } else if best == 0 {
        lo
    } else if best + 1 == NORM_SAMPLES {
        hi
    } else {
        grid[best]
    };
    if p <= lo {
        return Err(EstimateError::NoOrder(format!(
            "the difference norms do not shrink with refinement as an order of at least {lo} \
             says"
        )));
    }
    let misfit = (cost(p) / k as f64).sqrt();
    Ok(NormOrder {
        order: p,
        at_bound: p >= hi,
        misfit,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::estimate::point::{PointEstimator, PointSettings};

    /// Stern et al. (2001) with equal ratios: p = ln(‖ε32‖/‖ε21‖)/ln r. Manufactured fields
    /// φ(x, h) = f(x) + g(x) h^1.7 over points x: every difference field is g(x)(h_j^p − h_i^p),
    /// so any norm gives the ratio r^1.7 and the order 1.7 (analytic).
    #[test]
    fn norm_order_of_manufactured_fields() {
        let h = [0.01, 0.02, 0.04];
        let mut acc = DifferenceNorms::new(3);
        let mut other = DifferenceNorms::new(3);
        for k in 0..1000 {
            let x = k as f64 / 999.0;
            let g = (3.0 * x).sin() + 0.2;
            let phi: Vec<f64> = h.iter().map(|hh: &f64| x * x + g * hh.powf(1.7)).collect();
            if k % 2 == 0 {
                acc.add(&phi);
            } else {
                other.add(&phi);
            }
        }
        acc.merge(&other);
        assert_eq!(acc.count(), 1000);
        for kind in [NormKind::L2, NormKind::LInf] {
            let o = norm_order(&h, &acc.norms(kind)).unwrap();
            assert!((o.order - 1.7).abs() < 1e-9, "{kind:?}: {}", o.order);
            assert!(!o.at_bound);
        }
        // the closed form with the norms themselves (Stern et al. 2001)
        let d = acc.norms(NormKind::L2);
        let closed = (d[1] / d[0]).ln() / 2f64.ln();
        assert!((norm_order(&h, &d).unwrap().order - closed).abs() < 1e-9);
    }

    /// Unequal ratios and more meshes: the exact relation (h3^p − h2^p)/(h2^p − h1^p) and
    /// the least-squares fit recover the manufactured order (analytic).
    #[test]
    fn norm_order_with_unequal_ratios_and_five_meshes() {
        let h: [f64; 5] = [1.0, 1.3, 2.0, 2.5, 4.0];
        let p = 2.3;
        let norms: Vec<f64> = h
            .windows(2)
            .map(|w| 0.7 * (w[1].powf(p) - w[0].powf(p)))
            .collect();
        let o = norm_order(&h, &norms).unwrap();
        assert!((o.order - p).abs() < 1e-9);
        assert!(o.misfit < 1e-9);
        let o3 = norm_order(&h[..3], &norms[..2]).unwrap();
        assert!((o3.order - p).abs() < 1e-9);
        // norms that grow with refinement have no positive order
        assert!(norm_order(&[1.0, 2.0, 4.0], &[2.0, 1.0]).is_err());
        assert!(norm_order(&[1.0, 2.0, 4.0], &[0.0, 1.0]).is_err());
        assert!(norm_order(&[1.0, 2.0], &[1.0]).is_err());
    }

    /// The average order counts the monotonic points only (the choice documented in the
    /// module): manufactured points with orders 1, 2 and 3 on three meshes (analytic), one
    /// oscillatory point and one that does not change.
    #[test]
    fn average_order_counts_monotonic_points() {
        let h = [1.0, 2.0, 4.0];
        let est = PointEstimator::new(&h, &PointSettings::default()).unwrap();
        let mut results = Vec::new();
        for p in [1.0, 2.0, 3.0] {
            let phi = h.map(|x: f64| 5.0 + 0.1 * x.powf(p));
            results.push(est.estimate(&phi));
        }
        results.push(est.estimate(&[1.0, 1.1, 1.05]));
        results.push(est.estimate(&[1.0, 1.0, 1.0]));
        let avg = average_order(&results);
        assert_eq!(avg.count(), 3);
        assert_eq!(avg.skipped(), 2);
        assert!((avg.mean().unwrap() - 2.0).abs() < 1e-9);
        let mut a = AverageOrder::new();
        a.add(&results[0]);
        let mut b = AverageOrder::new();
        b.add(&results[1]);
        b.add(&results[3]);
        a.merge(&b);
        assert_eq!((a.count(), a.skipped()), (2, 1));
        assert!((a.mean().unwrap() - 1.5).abs() < 1e-9);
        assert_eq!(AverageOrder::new().mean(), None);
    }
}
