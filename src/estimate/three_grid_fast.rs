//! The three-mesh estimate specialised to fixed mesh sizes, for the many points of a field.
//!
//! The refinement ratios are the same at every point, so the observed order depends on the one
//! number ε32/ε21. With equal ratios it is `p = ln|ε32/ε21| / ln r` exactly. With unequal
//! ratios the exact three-point fit of φ0 + α h^p gives
//! `ε32/ε21 = r21^p (r32^p − s)/(r21^p − s)`, whose logarithm `Y(p)` increases strictly with p
//! for both signs s; [`FastThreeGrid`] tabulates the inverse `p(Y)` once per field (4096
//! cells), reads p from the table by cubic Hermite interpolation, and adds one Newton step, kept
//! inside the cell, in the cells where the interpolant alone could be off by more than about
//! 1e-13 relative (checked at every cell's middle when the table is built). The extrapolated
//! value and the GCI use `r21^p − 1 = expm1(p ln r21)`, free of cancellation.
//!
//! The decisions the general solver makes at the ends of its search range, and the rare
//! oscillatory cases where its absolute-value form has a second root close to the first, are
//! reproduced by evaluating its residual the same way, and go to
//! [`three_grid::observed_order`] where in doubt. A property test checks the fast path against
//! [`three_grid::estimate`].

use crate::estimate::three_grid::{
    self, Governing, ThreeGridSettings, ROUNDOFF_ULPS, SCAN_LO, SCAN_STEPS,
};
use crate::estimate::{Convergence, EstimateError};

/// Intervals of the inverse-order table.
const TABLE_INTERVALS: usize = 4096;

/// The three-mesh estimate at one point, as [`three_grid::estimate`] gives it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PointEstimate {
    /// Convergence class.
    pub convergence: Convergence,
    /// Observed order, when it exists.
    pub observed_order: Option<f64>,
    /// Richardson-extrapolated value, when it exists.
    pub extrapolated: Option<f64>,
    /// Absolute fine-mesh uncertainty by the settings' rule (`None` when divergent or when
    /// the rule gives none).
    pub uncertainty: Option<f64>,
    /// The Celik et al. (2008) GCI's U, as [`three_grid::estimate`] gives it (the same as
    /// `uncertainty` when that rule governs).
    pub gci_uncertainty: Option<f64>,
    /// What governed the uncertainty (`None` when divergent).
    pub governing: Option<Governing>,
}

/// The three-mesh estimate specialised to fixed mesh sizes, for many points: the same
/// classes, orders, extrapolated values and uncertainties as [`three_grid::estimate`], without
/// a general root search per point.
#[derive(Debug, Clone)]
pub struct FastThreeGrid {
    r21: f64,
    r32: f64,
    fs: f64,
    /// ln r32 / ln r21: the monotonic/divergent threshold of ε32/ε21.
    threshold: f64,
    /// r21^pf − 1 and r32^pf − 1 for the formal-order fallback.
    fallback_den: [f64; 2],
    solver: OrderSolver,
    /// The published rule that states U (`settings.rule`).
    rule: crate::estimate::rules::Rule,
    formal_order: f64,
}

impl FastThreeGrid {
    /// Prepares the estimate for sizes `h` (finest first) and `settings`.
    pub fn new(h: [f64; 3], settings: &ThreeGridSettings) -> Result<Self, EstimateError> {
        if h.iter().any(|v| !v.is_finite()) {
            return Err(EstimateError::InvalidInput("sizes must be finite".into()));
        }
        if !(h[0] > 0.0 && h[1] > h[0] && h[2] > h[1]) {
            return Err(EstimateError::InvalidInput(
                "sizes must be > 0 and increase from the finest to the coarsest mesh".into(),
            ));
        }
        if !(settings.order_max.is_finite() && settings.order_max > 0.0) {
            return Err(EstimateError::InvalidInput(format!(
                "the order cap must be finite and > 0 (got {})",
                settings.order_max
            )));
        }
        if !(settings.safety_factor.is_finite() && settings.safety_factor > 0.0) {
            return Err(EstimateError::InvalidInput(format!(
                "the safety factor must be finite and > 0 (got {})",
                settings.safety_factor
            )));
        }
        if !settings.formal_order.is_finite() || settings.formal_order <= 0.0 {
            return Err(EstimateError::InvalidInput(format!(
                "the formal order must be finite and > 0 (got {})",
                settings.formal_order
            )));
        }
        // The same operations as `three_grid::estimate`, so that every figure matches bit for bit
        // where the formulas are the same.
        let r21 = h[1] / h[0];
        let r32 = h[2] / h[1];
        let pf = settings.formal_order;
        Ok(FastThreeGrid {
            r21,
            r32,
            fs: settings.safety_factor,
            threshold: r32.ln() / r21.ln(),
            fallback_den: [r21.powf(pf) - 1.0, r32.powf(pf) - 1.0],
            solver: OrderSolver::new(r21, r32, settings.order_max),
            rule: settings.rule,
            formal_order: pf,
        })
    }

    /// Refinement ratios [r21, r32].
    pub fn ratios(&self) -> [f64; 2] {
        [self.r21, self.r32]
    }

    /// Upper end of the order range (the histogram range of the summary).
    pub fn order_cap(&self) -> f64 {
        self.solver.hi_cap
    }

    /// The estimate at one point; `phi` finest first, finite. The uncertainty is the one the
    /// settings' published rule states (the Celik GCI by the same operations as
    /// [`three_grid::estimate`]; any other rule by [`crate::estimate::rules::core`]).
    pub fn estimate(&self, phi: [f64; 3]) -> PointEstimate {
        use crate::estimate::rules::{self, Branch, Rule};
        let mut out = self.estimate_gci(phi);
        out.gci_uncertainty = out.uncertainty;
        if self.rule == Rule::CelikGci {
            return out;
        }
        let (e21, e32) = (phi[1] - phi[0], phi[2] - phi[1]);
        let scale = phi.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        let tiny = ROUNDOFF_ULPS * f64::EPSILON * scale;
        let clear = |e: f64| if e.abs() <= tiny { 0.0 } else { e };
        let half_range = 0.5
            * (phi.iter().fold(f64::NEG_INFINITY, |m, v| m.max(*v))
                - phi.iter().fold(f64::INFINITY, |m, v| m.min(*v)));
        let core = rules::Core {
            convergence: out.convergence,
            order: out.observed_order,
            ratios: [self.r21, self.r32],
            differences: [clear(e21), clear(e32)],
            formal_order: self.formal_order,
            half_range,
            celik_fs: self.fs,
        };
        let (u, _, _, branch) = rules::core(self.rule, &core);
        out.uncertainty = u;
        out.governing = match branch {
            Branch::Divergent | Branch::NotApplicable => None,
            Branch::NoChange => Some(Governing::NoChange),
            Branch::OscillationRange => Some(Governing::OscillationRange),
            Branch::FormalOrderFallback => Some(Governing::FormalOrder),
            // A factor of safety on the Richardson estimate: counted with the GCI.
            _ => Some(Governing::Gci),
        };
        out
    }

    /// The estimate at one point with a GIVEN order `p` (a global order for every point of a
    /// field, e.g. the average observed order, Celik et al. 2008): the class is the point's
    /// own (as [`FastThreeGrid::estimate`] gives it); where it is monotonic or oscillatory
    /// and the finest pair differs, the extrapolated value is Richardson's with order p and U
    /// is the settings' rule applied with p in place of the observed order
    /// ([`crate::estimate::rules::core`]). Where nothing changes, the values diverge, or the
    /// finest pair is equal (no Richardson step exists), the result is
    /// [`FastThreeGrid::estimate`]'s. A `p` that is not finite and > 0 gives the point's class
    /// and nothing else.
    pub fn estimate_at_order(&self, phi: [f64; 3], p: f64) -> PointEstimate {
        use crate::estimate::rules::{self, Branch, Rule};
        let own = self.estimate(phi);
        if !(p.is_finite() && p > 0.0) {
            return PointEstimate {
                convergence: own.convergence,
                observed_order: None,
                extrapolated: None,
                uncertainty: None,
                gci_uncertainty: None,
                governing: None,
            };
        }
        let scale = phi.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        let tiny = ROUNDOFF_ULPS * f64::EPSILON * scale;
        let clear = |e: f64| if e.abs() <= tiny { 0.0 } else { e };
        let (e21, e32) = (clear(phi[1] - phi[0]), clear(phi[2] - phi[1]));
        if !matches!(
            own.convergence,
            Convergence::Monotonic | Convergence::Oscillatory
        ) || e21 == 0.0
        {
            return own;
        }
        let d = r_pow_minus_one(self.solver.a * p);
        let half_range = 0.5
            * (phi.iter().fold(f64::NEG_INFINITY, |m, v| m.max(*v))
                - phi.iter().fold(f64::INFINITY, |m, v| m.min(*v)));
        let core = rules::Core {
            convergence: own.convergence,
            order: Some(p),
            ratios: [self.r21, self.r32],
            differences: [e21, e32],
            formal_order: self.formal_order,
            half_range,
            celik_fs: self.fs,
        };
        let (u, _, _, branch) = rules::core(self.rule, &core);
        let (u_gci, _, _, _) = rules::core(Rule::CelikGci, &core);
        let governing = match branch {
            Branch::Divergent | Branch::NotApplicable => None,
            Branch::NoChange => Some(Governing::NoChange),
            Branch::OscillationRange => Some(Governing::OscillationRange),
            Branch::FormalOrderFallback => Some(Governing::FormalOrder),
            _ => Some(Governing::Gci),
        };
        PointEstimate {
            convergence: own.convergence,
            observed_order: Some(p),
            extrapolated: Some(phi[0] - e21 / d),
            uncertainty: u,
            gci_uncertainty: u_gci,
            governing,
        }
    }

    /// The Celik et al. (2008) estimate at one point.
    fn estimate_gci(&self, phi: [f64; 3]) -> PointEstimate {
        let scale = phi.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        let tiny = ROUNDOFF_ULPS * f64::EPSILON * scale;
        let mut e21 = phi[1] - phi[0];
        let mut e32 = phi[2] - phi[1];
        if e21 != 0.0 && e21.abs() <= tiny {
            e21 = 0.0;
        }
        if e32 != 0.0 && e32.abs() <= tiny {
            e32 = 0.0;
        }
        let mut out = PointEstimate {
            convergence: Convergence::Divergent,
            observed_order: None,
            extrapolated: None,
            uncertainty: None,
            gci_uncertainty: None,
            governing: None,
        };
        if e21 == 0.0 && e32 == 0.0 {
            out.convergence = Convergence::NoChange;
            out.extrapolated = Some(phi[0]);
            out.uncertainty = Some(0.0);
            out.governing = Some(Governing::NoChange);
            return out;
        }
        if e32 == 0.0 {
            return out;
        }
        let r = e21 / e32;
        out.convergence = if r >= 0.0 {
            if r < 1.0 || 1.0 / r > self.threshold {
                Convergence::Monotonic
            } else {
                Convergence::Divergent
            }
        } else if r > -1.0 {
            Convergence::Oscillatory
        } else {
            Convergence::Divergent
        };
        if out.convergence == Convergence::Divergent {
            return out;
        }
        let order = if e21 == 0.0 {
            None
        } else {
            self.solver.solve(e32 / e21)
        };
        match order {
            Some(p) => {
                // r21^p − 1 without cancellation; φ_ext = φ1 + (φ1 − φ2)/(r21^p − 1) is the
                // published (r21^p φ1 − φ2)/(r21^p − 1) rearranged.
                let d = r_pow_minus_one(self.solver.a * p);
                out.observed_order = Some(p);
                out.extrapolated = Some(phi[0] - e21 / d);
                let u_gci = self.fs * e21.abs() / d;
                let half_range = 0.5
                    * (phi.iter().fold(f64::NEG_INFINITY, |m, v| m.max(*v))
                        - phi.iter().fold(f64::INFINITY, |m, v| m.min(*v)));
                if out.convergence == Convergence::Oscillatory && half_range > u_gci {
                    out.uncertainty = Some(half_range);
                    out.governing = Some(Governing::OscillationRange);
                } else {
                    out.uncertainty = Some(u_gci);
                    out.governing = Some(Governing::Gci);
                }
            }
            None => {
                let u =
                    3.0 * (e21.abs() / self.fallback_den[0]).max(e32.abs() / self.fallback_den[1]);
                out.uncertainty = Some(u);
                out.governing = Some(Governing::FormalOrder);
            }
        }
        out
    }
}

/// `e^x − 1` for `x = p ln r21 > 0`, as the general estimator's `r21^p − 1`: `exp(x) − 1` for
/// x > 0.1, where the subtraction is exact and the result is within 6 ulp, the slower `expm1`
/// below, where `exp(x) − 1` would lose digits.
#[inline]
fn r_pow_minus_one(x: f64) -> f64 {
    if x > 0.1 {
        x.exp() - 1.0
    } else {
        x.exp_m1()
    }
}

/// ln of the exact fit's difference ratio, `Y(p) = ln(r21^p (r32^p − s)/(r21^p − s))`, and its
/// derivative, in forms that neither overflow nor cancel: with a = ln r21, b = ln r32,
/// s = +1: `Y = b p + ln(1 − e^(−b p)) − ln(1 − e^(−a p))`,
/// s = −1: `Y = b p + ln(1 + e^(−b p)) − ln(1 + e^(−a p))`.
fn y_of_p(a: f64, b: f64, same_sign: bool, p: f64) -> (f64, f64) {
    if same_sign {
        let ea = (-a * p).exp_m1();
        let eb = (-b * p).exp_m1();
        let y = b * p + (-eb).ln() - (-ea).ln();
        let dy = b + b * (1.0 + eb) / (-eb) - a * (1.0 + ea) / (-ea);
        (y, dy)
    } else {
        let ea = (-a * p).exp();
        let eb = (-b * p).exp();
        let y = b * p + eb.ln_1p() - ea.ln_1p();
        let dy = b - b * eb / (1.0 + eb) + a * ea / (1.0 + ea);
        (y, dy)
    }
}

/// Solves `Y(p) = y` for p in `[lo, hi]` (Y increasing, `Y(lo) ≤ y ≤ Y(hi)`) by Newton steps
/// kept inside a shrinking bracket, bisecting when a step leaves it.
fn solve_bracketed(a: f64, b: f64, same_sign: bool, y: f64, lo: f64, hi: f64, start: f64) -> f64 {
    let (mut l, mut h) = (lo, hi);
    let mut p = start.clamp(lo, hi);
    for _ in 0..200 {
        let (yp, dy) = y_of_p(a, b, same_sign, p);
        let f = yp - y;
        if f == 0.0 {
            return p;
        }
        if f < 0.0 {
            l = p;
        } else {
            h = p;
        }
        let mut next = p - f / dy;
        if !(next.is_finite() && next > l && next < h) {
            next = 0.5 * (l + h);
        }
        if (next - p).abs() <= 4.0 * f64::EPSILON * p.abs() || h - l <= 4.0 * f64::EPSILON * h {
            return next;
        }
        p = next;
    }
    p
}

/// The inverse `p(Y)` on a uniform grid of Y, with slopes for cubic Hermite interpolation.
#[derive(Debug, Clone)]
struct InverseTable {
    same_sign: bool,
    y0: f64,
    y1: f64,
    inv_dy: f64,
    /// p at each node.
    p: Vec<f64>,
    /// dy · dp/dY at each node.
    m: Vec<f64>,
    /// Cells where the interpolant alone is not accurate enough and a Newton step follows.
    polish: Vec<bool>,
}

impl InverseTable {
    fn new(a: f64, b: f64, same_sign: bool, lo: f64, hi: f64) -> Self {
        let y0 = y_of_p(a, b, same_sign, lo).0;
        let y1 = y_of_p(a, b, same_sign, hi).0;
        let n = TABLE_INTERVALS;
        let dy = (y1 - y0) / n as f64;
        let mut p = Vec::with_capacity(n + 1);
        let mut m = Vec::with_capacity(n + 1);
        let mut prev = lo;
        for j in 0..=n {
            let pj = if j == 0 {
                lo
            } else if j == n {
                hi
            } else {
                solve_bracketed(a, b, same_sign, y0 + dy * j as f64, prev, hi, prev)
            };
            let d = y_of_p(a, b, same_sign, pj).1;
            p.push(pj);
            m.push(dy / d);
            prev = pj;
        }
        // The cubic Hermite error peaks near the middle of a cell: where it exceeds about
        // 1e-13 relative (with a margin of 2), the cell gets a Newton step.
        let polish = (0..n)
            .map(|j| {
                let mid = 0.5 * (p[j] + p[j + 1]) + 0.125 * (m[j] - m[j + 1]);
                let exact = solve_bracketed(
                    a,
                    b,
                    same_sign,
                    y0 + dy * (j as f64 + 0.5),
                    p[j],
                    p[j + 1],
                    mid,
                );
                let err = 2.0 * (mid - exact).abs();
                // A NaN error (never expected) also asks for the Newton step.
                err.is_nan() || err > 2e-14 + 1e-13 * exact
            })
            .collect();
        InverseTable {
            same_sign,
            y0,
            y1,
            inv_dy: 1.0 / dy,
            p,
            m,
            polish,
        }
    }

    /// p with `Y(p) = y`, for y in (about) `[y0, y1]`.
    fn invert(&self, a: f64, b: f64, y: f64) -> f64 {
        let n = self.p.len() - 1;
        let t = ((y - self.y0) * self.inv_dy).clamp(0.0, n as f64);
        let j = (t as usize).min(n - 1);
        let u = t - j as f64;
        let (p0, p1, m0, m1) = (self.p[j], self.p[j + 1], self.m[j], self.m[j + 1]);
        let u2 = u * u;
        let u3 = u2 * u;
        let start = (2.0 * u3 - 3.0 * u2 + 1.0) * p0
            + (u3 - 2.0 * u2 + u) * m0
            + (-2.0 * u3 + 3.0 * u2) * p1
            + (u3 - u2) * m1;
        let start = start.clamp(p0, p1);
        if !self.polish[j] {
            return start;
        }
        let (yp, dy) = y_of_p(a, b, self.same_sign, start);
        let next = start - (yp - y) / dy;
        if next.is_finite() {
            next.clamp(p0, p1)
        } else {
            start
        }
    }
}

/// The observed-order solver specialised to fixed ratios. It returns the root that
/// `three_grid::observed_order` returns (or `None` where that finds none).
#[derive(Debug, Clone)]
struct OrderSolver {
    r21: f64,
    r32: f64,
    order_max: f64,
    a: f64,
    b: f64,
    lo: f64,
    /// Upper end of the scan, `max(order_max, 2 lo)`.
    hi_cap: f64,
    /// The scan's last grid point, computed as the scan computes it.
    hi_grid: f64,
    lo_a: f64,
    hi_a: f64,
    /// The general solver's q(p) at lo and hi_grid, for s = +1 and s = −1.
    q_lo: [f64; 2],
    q_hi: [f64; 2],
    /// Inverse tables for s = +1 and s = −1 (`None` for equal ratios).
    tables: Option<[InverseTable; 2]>,
}

impl OrderSolver {
    fn new(r21: f64, r32: f64, order_max: f64) -> Self {
        let lo = SCAN_LO;
        let hi = order_max.max(lo * 2.0);
        let hi_grid = lo + (hi - lo) * (SCAN_STEPS as f64) / (SCAN_STEPS as f64);
        let equal = (r21 - r32).abs() <= 1e-14 * r21;
        // q(p) exactly as the general solver computes it.
        let q = |p: f64, s: f64| {
            if equal {
                0.0
            } else {
                ((r21.powf(p) - s) / (r32.powf(p) - s)).ln()
            }
        };
        let a = r21.ln();
        let b = r32.ln();
        let tables = if equal {
            None
        } else {
            Some([
                InverseTable::new(a, b, true, lo, hi_grid),
                InverseTable::new(a, b, false, lo, hi_grid),
            ])
        };
        OrderSolver {
            r21,
            r32,
            order_max,
            a,
            b,
            lo,
            hi_cap: hi,
            hi_grid,
            lo_a: lo * a,
            hi_a: hi_grid * a,
            q_lo: [q(lo, 1.0), q(lo, -1.0)],
            q_hi: [q(hi_grid, 1.0), q(hi_grid, -1.0)],
            tables,
        }
    }

    /// The general solver, for the rare cases the fast path leaves to it.
    fn general(&self, e_ratio: f64) -> Option<f64> {
        three_grid::observed_order(self.r21, self.r32, e_ratio, self.order_max).ok()
    }

    /// The general solver's residual at a scan point, for s = −1.
    fn residual_osc(&self, p: f64, y: f64) -> f64 {
        let q = ((self.r21.powf(p) + 1.0) / (self.r32.powf(p) + 1.0)).ln();
        p * self.a - (y + q).abs()
    }

    /// Observed order for ε32/ε21 = `e_ratio`.
    fn solve(&self, e_ratio: f64) -> Option<f64> {
        if !(e_ratio.is_finite() && e_ratio != 0.0) {
            return None;
        }
        let y = e_ratio.abs().ln();
        if e_ratio > 0.0 {
            // Same sign: the residual increases with p, so a root lies in the scan range exactly
            // when the residual is ≤ 0 at its lower end and ≥ 0 at its upper end.
            let f_lo = self.lo_a - (y + self.q_lo[0]);
            let f_hi = self.hi_a - (y + self.q_hi[0]);
            if !(f_lo.is_finite() && f_hi.is_finite()) {
                return self.general(e_ratio);
            }
            if f_lo == 0.0 {
                return Some(self.lo);
            }
            if f_lo > 0.0 || f_hi < 0.0 {
                return None;
            }
            match &self.tables {
                None => Some((y / self.a).clamp(self.lo, self.hi_grid)),
                Some(t) => Some(t[0].invert(self.a, self.b, y)),
            }
        } else {
            // Opposite signs: the residual p a − |ln|e| + q(p)| is below zero at the lower end
            // whenever |e| > 1 (the oscillatory class); other cases go to the general solver.
            let f_lo = self.lo_a - (y + self.q_lo[1]).abs();
            if !(f_lo.is_finite() && f_lo < 0.0 && y > 0.0) {
                return self.general(e_ratio);
            }
            let t = match &self.tables {
                None => {
                    let f_hi = self.hi_a - y.abs();
                    return if f_hi < 0.0 {
                        None
                    } else {
                        Some((y / self.a).clamp(self.lo, self.hi_grid))
                    };
                }
                Some(t) => &t[1],
            };
            if self.b <= self.a {
                // q ≥ 0 and the residual increases: one root, found when f(hi) ≥ 0.
                let f_hi = self.hi_a - (y + self.q_hi[1]).abs();
                if !f_hi.is_finite() {
                    return self.general(e_ratio);
                }
                return if f_hi < 0.0 {
                    None
                } else {
                    Some(t.invert(self.a, self.b, y))
                };
            }
            // r32 > r21: q decreases, and beyond the true root p* the absolute value can make a
            // second root. The scan finds p* unless both lie in one scan cell.
            if y > t.y1 {
                return None;
            }
            let p = t.invert(self.a, self.b, y);
            let step = (self.hi_cap - self.lo) / SCAN_STEPS as f64;
            // |q'| < b − a/2, so ln|e| + q stays positive over the cell after p* when
            // p* a > (b − a/2)·step, and then the residual is positive at the cell's end.
            if p * self.a > (self.b - 0.5 * self.a) * step * (1.0 + 1e-9) {
                return Some(p);
            }
            let k = (((p - self.lo) / step).floor() as usize + 1).min(SCAN_STEPS);
            let end = self.lo + (self.hi_cap - self.lo) * (k as f64) / (SCAN_STEPS as f64);
            if end >= p && self.residual_osc(end, y) > 0.0 {
                Some(p)
            } else {
                self.general(e_ratio)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::estimate::rules::{self, Branch, Rule, RuleInputs};
    use proptest::prelude::*;

    /// Compares the fast estimate with the general one at one point.
    fn same_as_general(fast: &FastThreeGrid, h: [f64; 3], phi: [f64; 3]) -> Result<(), String> {
        same_as_general_with(fast, h, phi, &ThreeGridSettings::default())
    }

    fn same_as_general_with(
        fast: &FastThreeGrid,
        h: [f64; 3],
        phi: [f64; 3],
        settings: &ThreeGridSettings,
    ) -> Result<(), String> {
        let mut g = three_grid::estimate(h, phi, settings).map_err(|e| e.to_string())?;
        if settings.rule != Rule::CelikGci {
            // The rule's U and what fixed it, by the scalar rules (checked against an
            // independent Python implementation in tests/rules_reference.rs).
            let inputs = RuleInputs::from_estimate(h, phi, settings.formal_order, g.clone())
                .map_err(|e| e.to_string())?;
            let r = rules::apply(settings.rule, &inputs);
            g.uncertainty = r.uncertainty;
            g.governing = match r.branch {
                Branch::Divergent | Branch::NotApplicable => None,
                Branch::NoChange => Some(Governing::NoChange),
                Branch::OscillationRange => Some(Governing::OscillationRange),
                Branch::FormalOrderFallback => Some(Governing::FormalOrder),
                _ => Some(Governing::Gci),
            };
        }
        let f = fast.estimate(phi);
        let close = |a: Option<f64>, b: Option<f64>, rel: f64, abs: f64| match (a, b) {
            (Some(x), Some(y)) => (x - y).abs() <= rel * x.abs().max(y.abs()) + abs,
            (None, None) => true,
            _ => false,
        };
        let ctx = || format!("h {h:?} phi {phi:?}: fast {f:?} general {g:?}");
        if f.convergence != g.convergence || f.governing != g.governing {
            return Err(ctx());
        }
        if !close(f.observed_order, g.observed_order, 1e-9, 1e-11) {
            return Err(format!("order: {}", ctx()));
        }
        // ext = φ1 + (φ1 − φ2)/(r21^p − 1): an order error δp moves it by about
        // |ε21| δp ln r21 r21^p/(r21^p − 1)², so the tolerance scales with the correction.
        let corr = g.uncertainty.unwrap_or(0.0);
        if !close(f.extrapolated, g.extrapolated, 1e-9, 1e-8 * corr) {
            return Err(format!("extrapolated: {}", ctx()));
        }
        if !close(f.uncertainty, g.uncertainty, 1e-8, 0.0) {
            return Err(format!("uncertainty: {}", ctx()));
        }
        Ok(())
    }

    fn diff() -> impl Strategy<Value = f64> {
        prop_oneof![
            (-3.0f64..3.0).prop_map(|e| 10f64.powf(e)),
            (-3.0f64..3.0).prop_map(|e| -(10f64.powf(e))),
            Just(0.0),
        ]
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 400, ..ProptestConfig::default() })]
        // Source of the check: the project's general three-mesh estimator
        // (`three_grid::estimate`, itself checked against Celik et al. 2008 Table 1): the fast
        // path must give the same class, order, extrapolated value and uncertainty.
        #[test]
        fn fast_path_equals_general_estimate(
            r21 in 1.05f64..3.0,
            r32 in prop_oneof![1.05f64..3.0, Just(0.0)],
            h1 in 1e-3f64..10.0,
            phi1 in -10.0f64..10.0,
            d21 in diff(),
            d32 in diff(),
            more in proptest::collection::vec((diff(), diff()), 8),
            order_max in prop_oneof![Just(20.0), 0.5f64..30.0],
            safety_factor in prop_oneof![Just(1.25), Just(3.0)],
            formal_order in prop_oneof![Just(2.0), Just(1.0)],
            rule in prop_oneof![
                Just(Rule::CelikGci),
                Just(Rule::RoacheFs3),
                Just(Rule::XingStern),
                Just(Rule::SternCorrection)
            ],
        ) {
            let r32 = if r32 == 0.0 { r21 } else { r32 };
            let h = [h1, h1 * r21, h1 * r21 * r32];
            let settings = ThreeGridSettings { safety_factor, order_max, formal_order, rule };
            let fast = FastThreeGrid::new(h, &settings).unwrap();
            for (a, b) in std::iter::once((d21, d32)).chain(more) {
                let phi = [phi1, phi1 + a * 0.01, phi1 + a * 0.01 + b * 0.01];
                same_as_general_with(&fast, h, phi, &settings).map_err(TestCaseError::fail)?;
            }
        }

        // Manufactured data φ = φ0 + α h^p (analytic): the fast path recovers p and φ0.
        #[test]
        fn fast_path_recovers_manufactured_order(
            p in 0.3f64..6.0,
            r21 in 1.1f64..3.0,
            r32 in 1.1f64..3.0,
            alpha in prop_oneof![-2.0f64..-0.01, 0.01f64..2.0],
            phi0 in -10.0f64..10.0,
        ) {
            let h = [1.0, r21, r21 * r32];
            let phi = h.map(|hi| phi0 + alpha * hi.powf(p));
            prop_assume!((phi[1] - phi[0]).abs() > 1e-9 * phi0.abs().max(1.0));
            let e = FastThreeGrid::new(h, &ThreeGridSettings::default()).unwrap().estimate(phi);
            prop_assert_eq!(e.convergence, Convergence::Monotonic);
            let po = e.observed_order.unwrap();
            prop_assert!((po - p).abs() <= 1e-8 * p, "p {} vs {}", po, p);
            let tol = 1e-9 * phi.iter().fold(phi0.abs(), |m, v| m.max(v.abs()));
            prop_assert!((e.extrapolated.unwrap() - phi0).abs() <= tol);
        }
    }

    #[test]
    fn fast_path_edge_cases_match_general() {
        // Same source as the property test; hand-picked corners: orders near the cap and near
        // zero, R close to −1 with r32 > r21² (where the absolute-value form of the order
        // equation has a second root), tiny and round-off differences.
        let cases: &[[f64; 3]] = &[
            [1.0, 2.0, 4.0],
            [1.0, 1.2, 3.0],
            [1.0, 1.1, 1.21],
            [1.0, 3.0, 4.0],
        ];
        for &h in cases {
            let fast = FastThreeGrid::new(h, &ThreeGridSettings::default()).unwrap();
            let mut phis = vec![];
            for k in 0..200 {
                let t = k as f64 / 200.0;
                let rr = -1.0 + 10f64.powf(-8.0 * t); // R from −1 + 1e-8 to 0
                phis.push([1.0, 1.0 + 0.01 * rr, 1.0 + 0.01 * rr + 0.01]);
                let rm = 10f64.powf(-12.0 * t); // small R > 0: high orders
                phis.push([1.0, 1.0 + 1e-3 * rm, 1.0 + 1e-3 * rm + 1e-3]);
                let near = 0.3 + 1.5 * t; // around the divergence threshold
                phis.push([0.0, 0.1, 0.1 + 0.1 * near]);
            }
            phis.push([0.3, 0.3 + 1e-17, 0.3 - 1e-17]);
            phis.push([1.0, 1.0, 1.1]);
            phis.push([0.0, 1e-300, 2e-300]);
            for phi in phis {
                if let Err(e) = same_as_general(&fast, h, phi) {
                    panic!("{e}");
                }
            }
        }
    }
}
