//! Interpolation between the points of one sweep.
//!
//! Two kinds are offered:
//!
//! - [`Interpolation::Pchip`] (the default): the monotone piecewise-cubic Hermite interpolant
//!   of Fritsch & Carlson (1980), "Monotone piecewise cubic interpolation", SIAM J. Numer.
//!   Anal. 17, 238–246. The derivative at each knot is chosen exactly as
//!   `scipy.interpolate.PchipInterpolator` chooses it, so results agree with scipy to rounding:
//!   - interior knot: zero where the neighbouring secant slopes differ in sign or either is
//!     zero, else their weighted harmonic mean
//!     `(w1 + w2) / (w1 / m_left + w2 / m_right)` with `w1 = 2 h_right + h_left` and
//!     `w2 = h_right + 2 h_left`;
//!   - end knot: the one-sided three-point estimate
//!     `((2 h0 + h1) m0 − h0 m1) / (h0 + h1)`, set to zero when its sign differs from `m0`,
//!     and limited to `3 m0` when `m0` and `m1` differ in sign and it exceeds `3 |m0|`;
//!   - two points only: the straight line.
//!
//!   With these derivatives every cubic piece is monotone between its two knots and never
//!   leaves the range of its two knot values, whatever the data (the derivatives lie inside
//!   the Fritsch–Carlson monotonicity region). Monotone data therefore give a monotone curve.
//! - [`Interpolation::Linear`]: straight lines between neighbouring points.
//!
//! Evaluation outside `[x_min, x_max]` gives `None`: a sweep curve is never extrapolated.

use serde::{Deserialize, Serialize};

use super::SweepError;

/// How to interpolate between sweep points.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize, schemars::JsonSchema,
)]
#[serde(rename_all = "snake_case")]
pub enum Interpolation {
    /// Monotone piecewise-cubic Hermite interpolation (Fritsch & Carlson 1980).
    #[default]
    Pchip,
    /// Piecewise-linear interpolation.
    Linear,
}

impl Interpolation {
    /// The snake_case label used in every output (`pchip` or `linear`).
    pub fn label(self) -> &'static str {
        match self {
            Interpolation::Pchip => "pchip",
            Interpolation::Linear => "linear",
        }
    }
}

/// A curve through sweep points, evaluable anywhere inside the range of its x values.
///
/// Each interval `[x_k, x_{k+1}]` holds one polynomial in `s = x − x_k`, stored as in
/// scipy's piecewise-polynomial form: `c0 s³ + c1 s² + c2 s + c3`.
#[derive(Debug, Clone, PartialEq)]
pub struct Interpolant {
    kind: Interpolation,
    /// Knot x values, strictly ascending, at least two.
    x: Vec<f64>,
    /// Knot y values, in the order of `x`.
    y: Vec<f64>,
    /// One `[c0, c1, c2, c3]` per interval (`x.len() − 1` of them).
    pieces: Vec<[f64; 4]>,
}

impl Interpolant {
    /// Builds the interpolant through the points `(x[i], y[i])`, given in any order.
    ///
    /// # Errors
    /// [`SweepError`] when the lists differ in length, hold fewer than two points, hold a NaN
    /// or infinite value, repeat an x value, or describe a curve whose slope overflows.
    pub fn new(x: &[f64], y: &[f64], kind: Interpolation) -> Result<Interpolant, SweepError> {
        if x.len() != y.len() {
            return Err(SweepError::LengthMismatch {
                x_len: x.len(),
                y_len: y.len(),
            });
        }
        if x.len() < 2 {
            return Err(SweepError::TooFewPoints { count: x.len() });
        }
        for (axis, values) in [("x", x), ("y", y)] {
            if let Some((index, &value)) = values.iter().enumerate().find(|(_, v)| !v.is_finite()) {
                return Err(SweepError::NonFinite { axis, index, value });
            }
        }
        let mut order: Vec<usize> = (0..x.len()).collect();
        // Stable sort, so that equal x values keep their given order for the message.
        order.sort_by(|&a, &b| x[a].total_cmp(&x[b]));
        for pair in order.windows(2) {
            let (a, b) = (pair[0], pair[1]);
            // All values are finite here; `<=` also catches -0.0 next to 0.0, which
            // `total_cmp` keeps apart.
            if x[b] <= x[a] {
                return Err(SweepError::DuplicateX {
                    first: a.min(b),
                    second: a.max(b),
                    value: x[a],
                });
            }
        }
        let xs: Vec<f64> = order.iter().map(|&i| x[i]).collect();
        let ys: Vec<f64> = order.iter().map(|&i| y[i]).collect();
        let pieces = match kind {
            Interpolation::Pchip => hermite_pieces(&xs, &ys, &pchip_derivatives(&xs, &ys)),
            Interpolation::Linear => linear_pieces(&xs, &ys),
        };
        for (k, c) in pieces.iter().enumerate() {
            if c.iter().any(|v| !v.is_finite()) {
                return Err(SweepError::NotRepresentable {
                    lo: xs[k],
                    hi: xs[k + 1],
                });
            }
        }
        Ok(Interpolant {
            kind,
            x: xs,
            y: ys,
            pieces,
        })
    }

    /// The kind of interpolation.
    pub fn kind(&self) -> Interpolation {
        self.kind
    }

    /// The smallest and largest x of the points.
    pub fn x_range(&self) -> (f64, f64) {
        // `new` guarantees at least two knots; the fallbacks only keep this panic-free.
        let lo = self.x.first().copied().unwrap_or(f64::NAN);
        let hi = self.x.last().copied().unwrap_or(f64::NAN);
        (lo, hi)
    }

    /// The knot x values, ascending.
    pub fn knots_x(&self) -> &[f64] {
        &self.x
    }

    /// The knot y values, in the order of [`Interpolant::knots_x`].
    pub fn knots_y(&self) -> &[f64] {
        &self.y
    }

    /// The number of points the curve passes through (at least two).
    pub fn knot_count(&self) -> usize {
        self.x.len()
    }

    /// The curve's value at `x`, or `None` when `x` lies outside `[x_min, x_max]` or is NaN.
    ///
    /// Finds the interval by binary search. At a knot the value is that knot's y.
    pub fn eval(&self, x: f64) -> Option<f64> {
        let k = self.locate(x)?;
        self.value_in(k, x)
    }

    /// The curve's slope dy/dx at `x`, or `None` outside `[x_min, x_max]`.
    ///
    /// At an interior knot this is the slope of the piece to the right (for PCHIP the two
    /// pieces share the knot's derivative; for linear interpolation they differ).
    pub fn derivative(&self, x: f64) -> Option<f64> {
        let k = self.locate(x)?;
        let c = self.pieces.get(k)?;
        let s = x - self.x.get(k)?;
        // Summed from the low order up, in the order scipy's `PPoly` uses.
        let d = c[2] + c[1] * s * 2.0 + c[0] * (s * s) * 3.0;
        d.is_finite().then_some(d)
    }

    /// Evaluates the curve at each of `xs` (any order) by binary search; see [`Interpolant::eval`].
    pub fn eval_many(&self, xs: &[f64]) -> Vec<Option<f64>> {
        xs.iter().map(|&x| self.eval(x)).collect()
    }

    /// Evaluates the curve at each of `xs`, walking the intervals forward.
    ///
    /// Meant for ascending queries (for example a band evaluated on a fine grid): the
    /// interval search then costs O(knots + queries) in all. Any order still gives correct
    /// results — a query below the current interval falls back to a binary search.
    pub fn eval_sorted(&self, xs: &[f64]) -> Vec<Option<f64>> {
        let mut out = Vec::with_capacity(xs.len());
        let (lo, hi) = self.x_range();
        let last = self.pieces.len().saturating_sub(1);
        let mut k = 0usize;
        for &q in xs {
            if !(q >= lo && q <= hi) {
                out.push(None);
                continue;
            }
            if q < self.x[k] {
                match self.locate(q) {
                    Some(j) => k = j,
                    None => {
                        out.push(None);
                        continue;
                    }
                }
            } else {
                while k < last && q >= self.x[k + 1] {
                    k += 1;
                }
            }
            out.push(self.value_in(k, q));
        }
        out
    }

    /// Index of the interval holding `x`: the last knot `<= x`, capped at the last interval.
    fn locate(&self, x: f64) -> Option<usize> {
        let (lo, hi) = self.x_range();
        if !(x >= lo && x <= hi) {
            return None;
        }
        let below_or_at = self.x.partition_point(|&k| k <= x);
        Some(
            below_or_at
                .saturating_sub(1)
                .min(self.pieces.len().saturating_sub(1)),
        )
    }

    /// Value of interval `k`'s polynomial at `x`; `None` if `k` is out of range or the value
    /// is not finite.
    pub(crate) fn value_in(&self, k: usize, x: f64) -> Option<f64> {
        let c = self.pieces.get(k)?;
        let s = x - self.x.get(k)?;
        // Power sum from the low order up, in the order scipy's `PPoly` evaluates it, so
        // that rounding matches too where the cubic terms nearly cancel.
        let s2 = s * s;
        let v = c[3] + c[2] * s + c[1] * s2 + c[0] * (s2 * s);
        v.is_finite().then_some(v)
    }
}

/// Sign as scipy's `np.sign` gives it for finite numbers: -1, 0 or 1.
fn sign(v: f64) -> i8 {
    if v > 0.0 {
        1
    } else if v < 0.0 {
        -1
    } else {
        0
    }
}

/// Knot derivatives of the PCHIP interpolant, with scipy's choices (see the module docs).
/// `x` is strictly ascending and `x.len() == y.len() >= 2`.
fn pchip_derivatives(x: &[f64], y: &[f64]) -> Vec<f64> {
    let n = x.len();
    let h: Vec<f64> = x.windows(2).map(|w| w[1] - w[0]).collect();
    let m: Vec<f64> = y
        .windows(2)
        .zip(&h)
        .map(|(w, &hk)| (w[1] - w[0]) / hk)
        .collect();
    if n == 2 {
        return vec![m[0], m[0]];
    }
    let mut d = vec![0.0; n];
    for k in 1..n - 1 {
        let (ml, mr) = (m[k - 1], m[k]);
        let (hl, hr) = (h[k - 1], h[k]);
        let (sl, sr) = (sign(ml), sign(mr));
        d[k] = if sl != sr || sl == 0 || sr == 0 {
            0.0
        } else {
            let w1 = 2.0 * hr + hl;
            let w2 = hr + 2.0 * hl;
            let whmean = (w1 / ml + w2 / mr) / (w1 + w2);
            1.0 / whmean
        };
    }
    d[0] = end_derivative(h[0], h[1], m[0], m[1]);
    d[n - 1] = end_derivative(h[n - 2], h[n - 3], m[n - 2], m[n - 3]);
    d
}

/// One-sided three-point end derivative with shape limiting (Moler, "Numerical Computing
/// with MATLAB", §3.6, as used by scipy).
fn end_derivative(h0: f64, h1: f64, m0: f64, m1: f64) -> f64 {
    let d = ((2.0 * h0 + h1) * m0 - h0 * m1) / (h0 + h1);
    if sign(d) != sign(m0) {
        0.0
    } else if sign(m0) != sign(m1) && d.abs() > 3.0 * m0.abs() {
        3.0 * m0
    } else {
        d
    }
}

/// Cubic Hermite pieces from knot values and derivatives (scipy's `CubicHermiteSpline` form).
fn hermite_pieces(x: &[f64], y: &[f64], d: &[f64]) -> Vec<[f64; 4]> {
    (0..x.len() - 1)
        .map(|k| {
            let dx = x[k + 1] - x[k];
            let slope = (y[k + 1] - y[k]) / dx;
            let t = (d[k] + d[k + 1] - 2.0 * slope) / dx;
            [t / dx, (slope - d[k]) / dx - t, d[k], y[k]]
        })
        .collect()
}

/// Straight-line pieces.
fn linear_pieces(x: &[f64], y: &[f64]) -> Vec<[f64; 4]> {
    (0..x.len() - 1)
        .map(|k| {
            let slope = (y[k + 1] - y[k]) / (x[k + 1] - x[k]);
            [0.0, 0.0, slope, y[k]]
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;

    fn build(x: &[f64], y: &[f64], kind: Interpolation) -> Interpolant {
        match Interpolant::new(x, y, kind) {
            Ok(p) => p,
            Err(e) => panic!("interpolant refused valid data: {e}"),
        }
    }

    fn value(p: &Interpolant, x: f64) -> f64 {
        match p.eval(x) {
            Some(v) => v,
            None => panic!("no value at x = {x}"),
        }
    }

    // Source for the refusals below: the input contract of this module (no silent repair).
    #[test]
    fn refuses_bad_points_with_index_and_value() {
        let e = Interpolant::new(&[0.1, 0.2], &[1.0], Interpolation::Pchip);
        assert_eq!(
            e.map_err(|e| e.to_string()),
            Err(
                "the sweep has 2 x values but 1 response values; each point needs one of each"
                    .to_string()
            )
        );
        let e = Interpolant::new(&[0.1], &[1.0], Interpolation::Linear);
        assert_eq!(
            e.map_err(|e| e.to_string()),
            Err("a sweep curve needs at least 2 points, got 1".to_string())
        );
        let e = Interpolant::new(
            &[0.1, 0.2, 0.3],
            &[1.0, f64::NAN, 2.0],
            Interpolation::Pchip,
        );
        assert_eq!(
            e.map_err(|e| e.to_string()),
            Err("the y value at index 1 (counting from 0) is not a finite number: NaN".to_string())
        );
        let e = Interpolant::new(&[0.1, f64::INFINITY], &[1.0, 2.0], Interpolation::Pchip);
        assert_eq!(
            e.map_err(|e| e.to_string()),
            Err("the x value at index 1 (counting from 0) is not a finite number: inf".to_string())
        );
        let e = Interpolant::new(
            &[0.4, 0.3, 0.2, 0.3],
            &[1.0, 2.0, 3.0, 4.0],
            Interpolation::Pchip,
        );
        assert_eq!(
            e.map_err(|e| e.to_string()),
            Err("x = 0.3 occurs twice (indices 1 and 3, counting from 0); each x may occur only once"
                .to_string())
        );
        let e = Interpolant::new(&[-0.0, 0.0], &[1.0, 2.0], Interpolation::Linear);
        assert!(matches!(
            e,
            Err(SweepError::DuplicateX {
                first: 0,
                second: 1,
                ..
            })
        ));
        let e = Interpolant::new(&[0.0, 1e-300], &[-1e300, 1e300], Interpolation::Pchip);
        assert!(matches!(e, Err(SweepError::NotRepresentable { .. })));
    }

    // Source: serde contract of the sweep settings (snake_case labels, default pchip).
    #[test]
    fn interpolation_labels() -> Result<(), serde_json::Error> {
        assert_eq!(Interpolation::default(), Interpolation::Pchip);
        assert_eq!(serde_json::to_string(&Interpolation::Pchip)?, "\"pchip\"");
        assert_eq!(
            serde_json::from_str::<Interpolation>("\"linear\"")?,
            Interpolation::Linear
        );
        assert_eq!(Interpolation::Linear.label(), "linear");
        Ok(())
    }

    // Source: Fritsch & Carlson (1980) — for data on a straight line all secant slopes are
    // equal, so every knot derivative equals that slope and each cubic is the line itself
    // (analytic).
    #[test]
    fn pchip_reproduces_a_line() {
        let x = [0.45, 0.1, 0.3, 0.12, 0.21, 0.5, 0.37];
        let y: Vec<f64> = x.iter().map(|v| 2.5 - 3.75 * v).collect();
        for kind in [Interpolation::Pchip, Interpolation::Linear] {
            let p = build(&x, &y, kind);
            for i in 0..=400 {
                let q = 0.1 + 0.4 * f64::from(i) / 400.0;
                assert_relative_eq!(value(&p, q), 2.5 - 3.75 * q, epsilon = 1e-14);
            }
            assert_relative_eq!(
                p.derivative(0.33).unwrap_or(f64::NAN),
                -3.75,
                epsilon = 1e-12
            );
        }
    }

    // Source: definition of piecewise-linear interpolation (analytic): the midpoint of an
    // interval takes the mean of its two knot values.
    #[test]
    fn linear_midpoints() {
        let p = build(&[0.1, 0.2, 0.4], &[0.90, 0.80, 0.86], Interpolation::Linear);
        assert_relative_eq!(value(&p, 0.15), 0.85, max_relative = 1e-14);
        assert_relative_eq!(value(&p, 0.3), 0.83, max_relative = 1e-14);
        assert_relative_eq!(value(&p, 0.35), 0.845, max_relative = 1e-14);
    }

    // Source: the end-point rule (one-sided three-point estimate with shape limiting) as in
    // Moler, "Numerical Computing with MATLAB" §3.6 and scipy's PchipInterpolator, worked by
    // hand. Data (0,0),(1,1),(2,-4): m0 = 1, m1 = -5, the raw estimate (3·1 + 5)/2 = 4 exceeds
    // 3|m0| with m0, m1 of opposite sign, so d0 = 3; the interior slope change gives d1 = 0;
    // at the right end (3·(-5) − 1)/2 = −8 keeps the sign of m1 and |−8| < 15, so d2 = −8.
    // Data (0,0),(1,1),(2,7): (3·1 − 6)/2 = −1.5 has the wrong sign, so d0 = 0.
    #[test]
    fn end_derivative_limiting_by_hand() {
        let p = build(&[0.0, 1.0, 2.0], &[0.0, 1.0, -4.0], Interpolation::Pchip);
        let d = |p: &Interpolant, x: f64| p.derivative(x).unwrap_or(f64::NAN);
        assert_relative_eq!(d(&p, 0.0), 3.0, epsilon = 1e-15);
        assert_relative_eq!(d(&p, 1.0), 0.0, epsilon = 1e-15);
        assert_relative_eq!(d(&p, 2.0), -8.0, epsilon = 1e-13);
        let p = build(&[0.0, 1.0, 2.0], &[0.0, 1.0, 7.0], Interpolation::Pchip);
        assert_relative_eq!(d(&p, 0.0), 0.0, epsilon = 1e-15);
        // Two points: the straight line (scipy's two-point case).
        let p = build(&[1.0, 3.0], &[2.0, 1.0], Interpolation::Pchip);
        assert_relative_eq!(value(&p, 2.5), 1.25, max_relative = 1e-15);
    }

    // Source: the evaluation contract of this module (no extrapolation, knots reproduced).
    #[test]
    fn no_values_outside_the_points_and_knots_hit() {
        let x = [0.5, 0.1, 0.3, 0.2];
        let y = [0.91, 0.70, 0.905, 0.86];
        let p = build(&x, &y, Interpolation::Pchip);
        assert_eq!(p.x_range(), (0.1, 0.5));
        assert_eq!(p.knot_count(), 4);
        assert_eq!(p.eval(0.0999999), None);
        assert_eq!(p.eval(0.5000001), None);
        assert_eq!(p.eval(f64::NAN), None);
        assert_eq!(p.derivative(f64::INFINITY), None);
        for (xi, yi) in x.iter().zip(y) {
            assert_relative_eq!(value(&p, *xi), yi, max_relative = 1e-15);
        }
        assert_eq!(p.knots_x(), &[0.1, 0.2, 0.3, 0.5]);
        assert_eq!(p.knots_y(), &[0.70, 0.86, 0.905, 0.91]);
    }

    // Source: the walking search must give what the binary search gives (same polynomials).
    #[test]
    fn sorted_walk_matches_binary_search() {
        let x = [0.05, 0.1, 0.13, 0.2, 0.26, 0.3, 0.45];
        let y = [0.2, 0.75, 0.88, 0.91, 0.915, 0.912, 0.912];
        let p = build(&x, &y, Interpolation::Pchip);
        let mut qs: Vec<f64> = (0..=500)
            .map(|i| 0.0 + 0.5 * f64::from(i) / 500.0)
            .collect();
        qs.extend_from_slice(&[0.3, 0.1, f64::NAN, 0.45, 0.05, 0.2]);
        assert_eq!(p.eval_sorted(&qs), p.eval_many(&qs));
    }

    /// Strictly ascending x (uneven steps) and monotone y (with flat steps), either direction.
    fn monotone_data() -> impl Strategy<Value = (Vec<f64>, Vec<f64>)> {
        (2usize..12)
            .prop_flat_map(|n| {
                (
                    proptest::collection::vec(0.01f64..1.0, n),
                    proptest::collection::vec(prop_oneof![Just(0.0), 0.0f64..2.0], n),
                    any::<bool>(),
                )
            })
            .prop_map(|(dx, dy, rising)| {
                let mut x = Vec::with_capacity(dx.len());
                let mut y = Vec::with_capacity(dx.len());
                let (mut xa, mut ya) = (0.0, 1.0);
                for (a, b) in dx.iter().zip(&dy) {
                    xa += a;
                    ya += if rising { *b } else { -*b };
                    x.push(xa);
                    y.push(ya);
                }
                (x, y)
            })
    }

    /// Values of `p` on a grid of `per` points inside each interval, knots included.
    fn dense(p: &Interpolant, per: usize) -> Vec<(usize, f64)> {
        let mut out = Vec::new();
        for (k, w) in p.knots_x().windows(2).enumerate() {
            for i in 0..=per {
                let q = w[0] + (w[1] - w[0]) * (i as f64) / (per as f64);
                out.push((k, value(p, q.min(w[1]))));
            }
        }
        out
    }

    proptest! {
        // Source: Fritsch & Carlson (1980), monotonicity theorem — with knot derivatives of
        // the secant's sign and at most three times its size the cubic piece is monotone; so
        // monotone data give a monotone interpolant that never overshoots its knot values.
        #[test]
        fn pchip_keeps_monotone_data_monotone((x, y) in monotone_data()) {
            let p = build(&x, &y, Interpolation::Pchip);
            let rising = y.last() >= y.first();
            let vals = dense(&p, 25);
            let tol = 1e-12;
            for w in vals.windows(2) {
                if rising {
                    prop_assert!(w[1].1 >= w[0].1 - tol, "falls: {:?}", w);
                } else {
                    prop_assert!(w[1].1 <= w[0].1 + tol, "rises: {:?}", w);
                }
            }
            for (k, v) in vals {
                let (a, b) = (y[k], y[k + 1]);
                prop_assert!(v >= a.min(b) - tol && v <= a.max(b) + tol,
                    "overshoot in interval {}: {} outside [{}, {}]", k, v, a, b);
            }
        }

        // Source: same theorem, applied piece by piece to data of any shape (scipy's
        // derivative choice keeps every knot derivative in the monotonicity region); the
        // breakdown search relies on this.
        #[test]
        fn pchip_pieces_stay_between_their_knots(
            y in proptest::collection::vec(-5.0f64..5.0, 3..10),
            dx in proptest::collection::vec(0.01f64..1.0, 10),
        ) {
            let mut x = Vec::with_capacity(y.len());
            let mut acc = 0.0;
            for step in dx.iter().take(y.len()) {
                acc += step;
                x.push(acc);
            }
            let p = build(&x, &y, Interpolation::Pchip);
            for (k, v) in dense(&p, 30) {
                let (a, b) = (y[k], y[k + 1]);
                let tol = 1e-12 * (1.0 + a.abs().max(b.abs()));
                prop_assert!(v >= a.min(b) - tol && v <= a.max(b) + tol,
                    "interval {}: {} outside [{}, {}]", k, v, a, b);
            }
        }

        // Source: walking and binary search evaluate the same polynomials, in any query order.
        #[test]
        fn eval_sorted_agrees_with_eval(
            (x, y) in monotone_data(),
            qs in proptest::collection::vec(-1.0f64..13.0, 0..60),
            sort in any::<bool>(),
        ) {
            let mut qs = qs;
            if sort {
                qs.sort_by(f64::total_cmp);
            }
            let p = build(&x, &y, Interpolation::Pchip);
            prop_assert_eq!(p.eval_sorted(&qs), p.eval_many(&qs));
        }
    }

    // Performance note (measured, not asserted): 1e6 ascending queries on a 25-point sweep.
    // Run with `cargo test --release --lib sweep::interp -- --ignored --nocapture`.
    #[test]
    #[ignore = "timing measurement, not a check"]
    fn eval_speed_one_million_sorted_queries() {
        let x: Vec<f64> = (0..25).map(|i| 0.05 + 0.02 * f64::from(i)).collect();
        let y: Vec<f64> = x
            .iter()
            .map(|s| 0.91 - 0.3 * (-30.0 * (s - 0.05)).exp())
            .collect();
        let p = build(&x, &y, Interpolation::Pchip);
        let n = 1_000_000;
        let qs: Vec<f64> = (0..n)
            .map(|i| 0.05 + 0.48 * (i as f64) / ((n - 1) as f64))
            .collect();
        // Best of five runs of each, to damp the noise of a shared machine.
        let (mut t_walk, mut t_search) = (std::time::Duration::MAX, std::time::Duration::MAX);
        let (mut walked, mut searched) = (Vec::new(), Vec::new());
        for _ in 0..5 {
            let start = std::time::Instant::now();
            walked = p.eval_sorted(&qs);
            t_walk = t_walk.min(start.elapsed());
            let start = std::time::Instant::now();
            searched = p.eval_many(&qs);
            t_search = t_search.min(start.elapsed());
        }
        let sum: f64 = walked.iter().flatten().sum();
        assert_eq!(walked, searched);
        println!(
            "1e6 sorted queries, 25 knots, best of 5: eval_sorted {:?}, eval_many {:?} (checksum {sum})",
            t_walk, t_search
        );
    }
}
