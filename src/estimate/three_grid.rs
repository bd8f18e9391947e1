//! Three-mesh estimate: observed order, Richardson extrapolation and the Grid Convergence
//! Index, after Celik, Ghia, Roache, Freitas, Coleman & Raad (2008), "Procedure for Estimation
//! and Reporting of Uncertainty Due to Discretization in CFD Applications", J. Fluids Eng.
//! 130(7) 078001, with the convergence classes of Stern, Wilson, Coleman & Paterson (2001),
//! J. Fluids Eng. 123, 793–802, and the asymptotic-range indicator of Roache (1998).
//!
//! Meshes are numbered from the finest: 1 = finest, 2, 3 = coarsest.
//! ε21 = φ2 − φ1, ε32 = φ3 − φ2, R = ε21/ε32.
//!
//! The observed order p solves
//! `p ln r21 = |ln|ε32/ε21| + q(p)|`, `q(p) = ln((r21^p − s)/(r32^p − s))`, `s = sign(ε32/ε21)`.
//! The published text iterates this as a fixed point; here it is solved as a bracketed root
//! with argmin's Brent root finder inside `(0, order_max]`, so that no iteration can wander
//! or fail to stop.

use super::{Convergence, EstimateError};
use crate::warning::Warning;
use argmin::core::{CostFunction, Executor, State};
use argmin::solver::brent::BrentRoot;
use serde::Serialize;

/// Settings of the three-mesh estimate.
#[derive(Debug, Clone, PartialEq)]
pub struct ThreeGridSettings {
    /// Safety factor Fs applied to the GCI (Roache: 1.25 with three meshes).
    pub safety_factor: f64,
    /// Upper end of the order search; no root below it means no order.
    pub order_max: f64,
    /// Formal order of the discretisation (for warnings and the fallback).
    pub formal_order: f64,
    /// The published rule that states U when a three-mesh estimate governs
    /// ([`super::rules`]). [`estimate`] itself always computes the Celik et al. (2008) GCI
    /// with `safety_factor`; `assess::govern` reads this to choose.
    pub rule: super::rules::Rule,
}

impl Default for ThreeGridSettings {
    fn default() -> Self {
        ThreeGridSettings {
            safety_factor: 1.25,
            order_max: 20.0,
            formal_order: 2.0,
            rule: super::rules::Rule::DEFAULT,
        }
    }
}

/// Which bound governs the uncertainty.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Governing {
    /// The fine-mesh GCI.
    Gci,
    /// Half the range of the oscillation (Stern et al. 2001).
    OscillationRange,
    /// The formal order with Fs = 3 because no observed order was found.
    FormalOrder,
    /// Nothing changed between meshes: zero uncertainty.
    NoChange,
}

/// Result of the three-mesh estimate. Relative measures are fractions.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ThreeGrid {
    /// Convergence class.
    pub convergence: Convergence,
    /// R = ε21/ε32 (`None` when ε32 = 0).
    pub convergence_ratio: Option<f64>,
    /// Observed order p (`None` when it does not exist).
    pub observed_order: Option<f64>,
    /// φ_ext21 = (r21^p φ1 − φ2)/(r21^p − 1).
    pub extrapolated: Option<f64>,
    /// e_a21 = |(φ1 − φ2)/φ1|.
    pub approx_rel_error: Option<f64>,
    /// e_ext21 = |(φ_ext21 − φ1)/φ_ext21|.
    pub extrap_rel_error: Option<f64>,
    /// GCI_fine21 = Fs e_a21 / (r21^p − 1).
    pub gci_fine: Option<f64>,
    /// GCI32 = Fs e_a32 / (r32^p − 1).
    pub gci_coarse: Option<f64>,
    /// GCI32 / (r21^p GCI21) (Roache 1998), kept for compatibility. It is not a test of the
    /// asymptotic range: with p solved from the same three meshes it equals φ1/φ2 exactly
    /// (the relative GCIs are normalised by different values), so no warning is drawn from it.
    pub asymptotic_ratio: Option<f64>,
    /// Safety factor used.
    pub safety_factor: f64,
    /// Refinement ratios [r21, r32].
    pub ratios: [f64; 2],
    /// Half range of the three values, ½(φmax − φmin).
    pub oscillation_half_range: f64,
    /// Absolute fine-mesh uncertainty (`None` when divergent).
    pub uncertainty: Option<f64>,
    /// What governed the uncertainty (`None` when divergent).
    pub governing: Option<Governing>,
    /// Whether the observed order sits on an end of the search (`order_max`, or the scan's
    /// lower end): the true order may lie outside it. Read by `assess::govern`.
    #[serde(skip)]
    pub order_at_bound: bool,
    /// Warnings raised by this estimate (moved to the top-level list by the caller).
    #[serde(skip)]
    pub warnings: Vec<Warning>,
}

/// The residual of the observed-order equation, `p ln r21 − |ln|ε32/ε21| + q(p)|`
/// (without the absolute value for same-sign differences, see [`OrderEquation::residual`]).
struct OrderEquation {
    ln_ratio: f64,
    r21: f64,
    r32: f64,
    s: f64,
}

impl OrderEquation {
    fn q(&self, p: f64) -> f64 {
        if (self.r21 - self.r32).abs() <= 1e-14 * self.r21 {
            return 0.0;
        }
        ((self.r21.powf(p) - self.s) / (self.r32.powf(p) - self.s)).ln()
    }
    fn residual(&self, p: f64) -> f64 {
        if self.s > 0.0 {
            // Same-sign differences: the exact three-point fit of φ0 + α h^p gives
            // p ln r21 = ln(ε32/ε21) + q(p) without the absolute value; keeping the absolute
            // value of the published form would give divergent data a spurious positive order.
            p * self.r21.ln() - (self.ln_ratio + self.q(p))
        } else {
            p * self.r21.ln() - (self.ln_ratio + self.q(p)).abs()
        }
    }
}

impl CostFunction for OrderEquation {
    type Param = f64;
    type Output = f64;
    fn cost(&self, p: &f64) -> Result<f64, argmin::core::Error> {
        Ok(self.residual(*p))
    }
}

/// Solves the observed-order equation for ratios r21, r32 and ε32/ε21 = `e_ratio`.
/// Returns the smallest root in `(0, order_max]`.
pub fn observed_order(
    r21: f64,
    r32: f64,
    e_ratio: f64,
    order_max: f64,
) -> Result<f64, EstimateError> {
    if !(r21 > 1.0 && r32 > 1.0 && r21.is_finite() && r32.is_finite()) {
        return Err(EstimateError::InvalidInput(format!(
            "refinement ratios must be finite and > 1 (r21 = {r21}, r32 = {r32})"
        )));
    }
    if !(e_ratio.is_finite() && e_ratio != 0.0) {
        return Err(EstimateError::NoOrder(
            "the ratio of mesh differences is zero or not finite".into(),
        ));
    }
    let eq = OrderEquation {
        ln_ratio: e_ratio.abs().ln(),
        r21,
        r32,
        s: e_ratio.signum(),
    };
    // Scan for the first sign change, then refine it with Brent's method.
    const STEPS: usize = SCAN_STEPS;
    let lo = SCAN_LO;
    let hi = order_max.max(lo * 2.0);
    let mut a = lo;
    let mut fa = eq.residual(a);
    for k in 1..=STEPS {
        let b = lo + (hi - lo) * (k as f64) / (STEPS as f64);
        let fb = eq.residual(b);
        if !(fa.is_finite() && fb.is_finite()) {
            a = b;
            fa = fb;
            continue;
        }
        if fa == 0.0 {
            return Ok(a);
        }
        if fa.signum() != fb.signum() {
            let solver = BrentRoot::new(a, b, 1e-14);
            let res = Executor::new(eq, solver)
                .configure(|s| s.max_iters(200))
                .run()
                .map_err(|e| EstimateError::NoOrder(format!("root finder failed: {e}")))?;
            let p = *res.state().get_best_param().unwrap_or(&b);
            return if p.is_finite() {
                Ok(p)
            } else {
                Err(EstimateError::NoOrder(
                    "root finder gave no finite order".into(),
                ))
            };
        }
        a = b;
        fa = fb;
    }
    Err(EstimateError::NoOrder(format!(
        "no observed order in (0, {order_max}]"
    )))
}

/// Relative distance |p − p_f|/p_f beyond which the observed order is warned as far from the
/// formal order (`order_far_from_formal`; common practice, no source).
pub const FORMAL_ORDER_TOLERANCE: f64 = 0.1;

/// The order search: its lower end and the number of scan steps up to the order cap (shared
/// with the streamed field estimate, which reproduces the scan's decisions).
pub(crate) const SCAN_LO: f64 = 1e-6;
pub(crate) const SCAN_STEPS: usize = 400;

/// Differences at or below this many ulps of the values' magnitude are round-off, not change
/// (shared with the streamed field estimate).
pub(crate) const ROUNDOFF_ULPS: f64 = 16.0;

/// Runs the three-mesh estimate. `h` and `phi` are finest first.
pub fn estimate(
    h: [f64; 3],
    phi: [f64; 3],
    settings: &ThreeGridSettings,
) -> Result<ThreeGrid, EstimateError> {
    if h.iter().chain(phi.iter()).any(|v| !v.is_finite()) {
        return Err(EstimateError::InvalidInput(
            "sizes and values must be finite".into(),
        ));
    }
    if !(h[0] > 0.0 && h[1] > h[0] && h[2] > h[1]) {
        return Err(EstimateError::InvalidInput(
            "sizes must be > 0 and increase from the finest to the coarsest mesh".into(),
        ));
    }
    let fs = settings.safety_factor;
    let r21 = h[1] / h[0];
    let r32 = h[2] / h[1];
    let scale = phi.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
    let tiny = ROUNDOFF_ULPS * f64::EPSILON * scale;
    let mut e21 = phi[1] - phi[0];
    let mut e32 = phi[2] - phi[1];
    if !(e21.is_finite() && e32.is_finite()) {
        return Err(EstimateError::InvalidInput(
            "the differences between meshes overflow the floating-point range (values near ±1.8e308 of opposite signs): rescale the quantity".into(),
        ));
    }
    if !(r21.is_finite() && r32.is_finite()) {
        return Err(EstimateError::InvalidInput(
            "the refinement ratios overflow the floating-point range: check the sizes".into(),
        ));
    }
    let mut warnings = Vec::new();
    let roundoff21 = e21 != 0.0 && e21.abs() <= tiny;
    let roundoff32 = e32 != 0.0 && e32.abs() <= tiny;
    if roundoff21 || roundoff32 {
        warnings.push(Warning::new(
            "round_off",
            "a difference between meshes is below the round-off of the values and is treated as zero",
        ));
        if roundoff21 {
            e21 = 0.0;
        }
        if roundoff32 {
            e32 = 0.0;
        }
    }
    let half_range = 0.5
        * (phi.iter().fold(f64::NEG_INFINITY, |m, v| m.max(*v))
            - phi.iter().fold(f64::INFINITY, |m, v| m.min(*v)));
    let mut out = ThreeGrid {
        convergence: Convergence::NoChange,
        convergence_ratio: None,
        observed_order: None,
        extrapolated: None,
        approx_rel_error: None,
        extrap_rel_error: None,
        gci_fine: None,
        gci_coarse: None,
        asymptotic_ratio: None,
        safety_factor: fs,
        ratios: [r21, r32],
        oscillation_half_range: half_range,
        uncertainty: None,
        governing: None,
        order_at_bound: false,
        warnings,
    };
    let rel = |num: f64, den: f64| {
        if den != 0.0 {
            Some((num / den).abs())
        } else {
            None
        }
    };

    if e21 == 0.0 && e32 == 0.0 {
        out.convergence = Convergence::NoChange;
        out.extrapolated = Some(phi[0]);
        out.approx_rel_error = rel(0.0, phi[0]);
        out.extrap_rel_error = rel(0.0, phi[0]);
        out.gci_fine = rel(0.0, phi[0]);
        out.gci_coarse = rel(0.0, phi[1]);
        out.uncertainty = Some(0.0);
        out.governing = Some(Governing::NoChange);
        out.warnings.push(Warning::new(
            "no_change",
            "the three meshes give the same value: zero discretisation uncertainty is reported, \
             but check that the quantity responds to the mesh at all",
        ));
        return Ok(out);
    }
    out.approx_rel_error = rel(e21, phi[0]);
    if e32 == 0.0 {
        // ε21 ≠ 0 but ε32 = 0: differences grow with refinement.
        out.convergence = Convergence::Divergent;
        out.warnings.push(Warning::new(
            "divergent",
            "the two coarser meshes agree but the finest differs: the differences grow with refinement, \
             so no discretisation uncertainty can be claimed",
        ));
        return Ok(out);
    }
    let r = e21 / e32;
    out.convergence_ratio = Some(r);
    out.convergence = if r >= 0.0 {
        // Same sign. With equal ratios this is Stern et al.'s 0 < R < 1; with unequal ratios
        // the test is whether an exact fit φ0 + α h^p with p > 0 exists, which holds when
        // ε32/ε21 > ln r32 / ln r21 (the limit of the fit's difference ratio as p → 0).
        // Differences that shrink (0 ≤ R < 1) converge by Stern et al.'s classes even when
        // no power law with p > 0 passes through the three values: the order search then
        // finds no root, the formal-order fallback gives U, and `assess::govern` says that
        // convergence is not demonstrated.
        if r < 1.0 || 1.0 / r > r32.ln() / r21.ln() {
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
        let kind = if r > 0.0 { "monotonic" } else { "oscillatory" };
        out.warnings.push(Warning::new(
            "divergent",
            format!(
                "{kind} divergence (R = {r:.4}): the differences grow with refinement, so no \
                 discretisation uncertainty can be claimed"
            ),
        ));
        return Ok(out);
    }

    let order = if e21 == 0.0 {
        Err(EstimateError::NoOrder(
            "the two finest meshes give the same value".into(),
        ))
    } else {
        observed_order(r21, r32, e32 / e21, settings.order_max)
    };
    match order {
        Ok(p) => {
            let r21p = r21.powf(p);
            let r32p = r32.powf(p);
            let ext = (r21p * phi[0] - phi[1]) / (r21p - 1.0);
            out.observed_order = Some(p);
            out.order_at_bound =
                p >= settings.order_max * (1.0 - 1e-9) || p <= SCAN_LO * (1.0 + 1e-9);
            out.extrapolated = Some(ext);
            out.extrap_rel_error = rel(ext - phi[0], ext);
            let gci21 = out.approx_rel_error.map(|e| fs * e / (r21p - 1.0));
            let gci32 = rel(e32, phi[1]).map(|e| fs * e / (r32p - 1.0));
            out.gci_fine = gci21;
            out.gci_coarse = gci32;
            out.asymptotic_ratio = match (gci21, gci32) {
                (Some(a), Some(b)) if a > 0.0 => Some(b / (r21p * a)),
                _ => None,
            };
            // Absolute form, valid even when φ1 = 0: U = Fs |ε21| / (r21^p − 1).
            let u_gci = fs * e21.abs() / (r21p - 1.0);
            if out.convergence == Convergence::Oscillatory && half_range > u_gci {
                out.uncertainty = Some(half_range);
                out.governing = Some(Governing::OscillationRange);
            } else {
                out.uncertainty = Some(u_gci);
                out.governing = Some(Governing::Gci);
            }
            if out.convergence == Convergence::Oscillatory {
                let which = if out.governing == Some(Governing::OscillationRange) {
                    "the half range of the oscillation governs"
                } else {
                    "the GCI governs"
                };
                out.warnings.push(Warning::new(
                    "oscillatory",
                    format!(
                        "oscillatory convergence (R = {r:.4}): both the GCI and half the range of the \
                         three values were computed; {which}"
                    ),
                ));
            }
            if p < 0.5 {
                out.warnings.push(Warning::new(
                    "order_low",
                    format!("observed order {p:.3} is below 0.5: the meshes are probably outside the asymptotic range"),
                ));
            } else if p > settings.formal_order + 1.0 {
                out.warnings.push(Warning::new(
                    "order_high",
                    format!(
                        "observed order {p:.3} exceeds the formal order {} by more than 1: the meshes are probably outside the asymptotic range",
                        settings.formal_order
                    ),
                ));
            } else if ((p - settings.formal_order) / settings.formal_order).abs()
                > FORMAL_ORDER_TOLERANCE
            {
                // Oberkampf & Roy (2010), from memory: in the asymptotic range the observed
                // order approaches the formal order. The 10 % tolerance is common practice, no
                // source. (The ratio GCI32/(r21^p GCI21) is no test: with p solved from the
                // same three meshes it equals φ1/φ2 exactly; see `asymptotic_ratio`.)
                out.warnings.push(Warning::new(
                    "order_far_from_formal",
                    format!(
                        "observed order {p:.3} differs from the formal order {} by more than 10 %: the meshes are probably not in the asymptotic range",
                        settings.formal_order
                    ),
                ));
            }
        }
        Err(why) => {
            // No observed order: fall back on the formal order with Fs = 3 (Roache's factor
            // for an assumed order), taking the larger of the two pair estimates.
            let pf = settings.formal_order;
            let u = 3.0 * (e21.abs() / (r21.powf(pf) - 1.0)).max(e32.abs() / (r32.powf(pf) - 1.0));
            out.uncertainty = Some(u);
            out.governing = Some(Governing::FormalOrder);
            out.warnings.push(Warning::new(
                "order_not_found",
                format!(
                    "{why}; the uncertainty uses the formal order {pf} with safety factor 3 on the larger of the two mesh-pair differences"
                ),
            ));
        }
    }
    if let Some(u) = out.uncertainty {
        if phi[0].abs() < e21.abs().max(u) {
            out.warnings.push(Warning::new(
                "value_near_zero",
                "the finest value is small beside the mesh differences: relative measures are not meaningful, use the absolute uncertainty",
            ));
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;

    fn celik_sizes() -> [f64; 3] {
        // Celik et al. (2008) Table 1, first column: 2-D, N = 18000, 8000, 4500.
        [
            1.0,
            (18000.0_f64 / 8000.0).sqrt(),
            (18000.0_f64 / 4500.0).sqrt(),
        ]
    }

    #[test]
    fn celik_2008_table_1_first_column() {
        // Source: Celik et al. (2008) Table 1, first column (values from memory of the table):
        // p = 1.53, φ_ext21 = 6.1685, e_a21 = 1.5 %, e_ext21 = 1.7 %, GCI_fine21 = 2.2 %.
        // The method notes confirm the equations give p = 1.5340, φ_ext = 6.16850,
        // GCI21 = 2.175 %, GCI32 = 4.11 %.
        let r = estimate(
            celik_sizes(),
            [6.063, 5.972, 5.863],
            &ThreeGridSettings::default(),
        )
        .unwrap();
        assert_eq!(r.convergence, Convergence::Monotonic);
        assert_relative_eq!(r.observed_order.unwrap(), 1.534, epsilon = 5e-4);
        assert_relative_eq!(r.extrapolated.unwrap(), 6.1685, epsilon = 5e-5);
        assert_relative_eq!(r.approx_rel_error.unwrap(), 0.015, epsilon = 5e-4);
        assert_relative_eq!(r.extrap_rel_error.unwrap(), 0.017, epsilon = 5e-4);
        assert_relative_eq!(r.gci_fine.unwrap(), 0.02175, epsilon = 5e-5);
        assert_relative_eq!(r.gci_coarse.unwrap(), 0.0411, epsilon = 5e-4);
        assert_eq!(r.governing, Some(Governing::Gci));
    }

    #[test]
    fn oscillatory_case_reports_both_bounds() {
        // Manufactured: R = ε21/ε32 = (−0.01)/(0.03) = −1/3, oscillatory convergence
        // (Stern et al. 2001 classes). Half range = ½(1.03 − 0.99)... computed below.
        let phi = [1.0, 0.99, 1.02];
        let r = estimate([1.0, 1.5, 2.25], phi, &ThreeGridSettings::default()).unwrap();
        assert_eq!(r.convergence, Convergence::Oscillatory);
        assert_relative_eq!(
            r.convergence_ratio.unwrap(),
            -1.0 / 3.0,
            max_relative = 1e-12
        );
        assert_relative_eq!(r.oscillation_half_range, 0.015, max_relative = 1e-12);
        // With r21 = r32 = 1.5, q = 0, p = ln 3 / ln 1.5 (analytic), GCI abs = 1.25·0.01/(3 − 1).
        let p = 3.0_f64.ln() / 1.5_f64.ln();
        assert_relative_eq!(r.observed_order.unwrap(), p, max_relative = 1e-10);
        assert_relative_eq!(r.uncertainty.unwrap(), 0.015, max_relative = 1e-12);
        assert_eq!(r.governing, Some(Governing::OscillationRange));
        assert!(r.warnings.iter().any(|w| w.code == "oscillatory"));
    }

    #[test]
    fn divergent_case_has_no_uncertainty() {
        // R = 0.02/0.01 = 2 > 1: monotonic divergence (Stern et al. 2001).
        let r = estimate(
            [1.0, 1.5, 2.25],
            [1.0, 1.02, 1.03],
            &ThreeGridSettings::default(),
        )
        .unwrap();
        assert_eq!(r.convergence, Convergence::Divergent);
        assert!(r.uncertainty.is_none() && r.observed_order.is_none() && r.gci_fine.is_none());
        // R < −1: oscillatory divergence
        let r = estimate(
            [1.0, 1.5, 2.25],
            [1.0, 1.03, 1.01],
            &ThreeGridSettings::default(),
        )
        .unwrap();
        assert_eq!(r.convergence, Convergence::Divergent);
    }

    #[test]
    fn no_change_gives_zero_with_warning() {
        let r = estimate(
            [1.0, 1.5, 2.25],
            [2.5, 2.5, 2.5],
            &ThreeGridSettings::default(),
        )
        .unwrap();
        assert_eq!(r.convergence, Convergence::NoChange);
        assert_eq!(r.uncertainty, Some(0.0));
        assert!(r.warnings.iter().any(|w| w.code == "no_change"));
    }

    #[test]
    fn roundoff_differences_are_no_change() {
        let v = 0.3_f64;
        let r = estimate(
            [1.0, 1.5, 2.25],
            [v, v + 1e-17, v - 1e-17],
            &ThreeGridSettings::default(),
        )
        .unwrap();
        assert_eq!(r.convergence, Convergence::NoChange);
    }

    #[test]
    fn safety_factor_setting_is_used() {
        let s = ThreeGridSettings {
            safety_factor: 3.0,
            ..Default::default()
        };
        let a = estimate(celik_sizes(), [6.063, 5.972, 5.863], &s).unwrap();
        let b = estimate(
            celik_sizes(),
            [6.063, 5.972, 5.863],
            &ThreeGridSettings::default(),
        )
        .unwrap();
        assert_relative_eq!(
            a.gci_fine.unwrap() / b.gci_fine.unwrap(),
            3.0 / 1.25,
            max_relative = 1e-12
        );
    }

    #[test]
    fn identical_fine_pair_falls_back_on_formal_order() {
        let r = estimate(
            [1.0, 1.5, 2.25],
            [1.0, 1.0, 1.1],
            &ThreeGridSettings::default(),
        )
        .unwrap();
        assert_eq!(r.convergence, Convergence::Monotonic);
        assert_eq!(r.governing, Some(Governing::FormalOrder));
        // 3 · 0.1/(1.5² − 1) = 0.24 (formula)
        assert_relative_eq!(r.uncertainty.unwrap(), 0.24, max_relative = 1e-12);
    }

    #[test]
    fn extreme_numbers_give_finite_results_or_a_refusal() {
        let s = ThreeGridSettings::default();
        let h = [1.0, 2.0, 4.0];
        // Scale invariance (analytic): φ = c (1 + h²/100) has p = 2 for any scale c.
        for c in [1e-300, 1e300, -1e300, 1e-305] {
            let phi = h.map(|x| c * (1.0 + x * x / 100.0));
            let r = estimate(h, phi, &s).unwrap();
            assert_relative_eq!(r.observed_order.unwrap(), 2.0, max_relative = 1e-9);
            assert!(r.uncertainty.unwrap().is_finite());
        }
        // Subnormal differences: 5e-324 steps are below round-off of the values → no change.
        let r = estimate(h, [1e-300, 1e-300 + 5e-324, 1e-300 + 1e-323], &s).unwrap();
        assert_eq!(r.convergence, Convergence::NoChange);
        // Pure subnormals still give a finite answer or a refusal, never NaN.
        if let Ok(r) = estimate(h, [5e-324, 1e-323, 2e-323], &s) {
            assert!(r.uncertainty.is_none_or(|u| u.is_finite()));
        }
        // Overflowing differences are refused.
        assert!(estimate(h, [1e308, -1e308, 1e308], &s).is_err());
        // A zero crossing: relative measures flagged.
        let r = estimate(h, [0.001, -0.002, 0.011], &s).unwrap();
        assert!(
            r.warnings.iter().any(|w| w.code == "value_near_zero"),
            "{:?}",
            r.warnings
        );
        // Huge and tiny sizes.
        let r = estimate([1e-200, 2e-200, 4e-200], [1.0, 1.04, 1.2], &s).unwrap();
        assert!(r.observed_order.unwrap().is_finite());
        assert!(estimate([1e300, 1e308, f64::MAX], [1.0, 1.04, 1.2], &s)
            .is_ok_and(|r| r.uncertainty.is_none_or(|u| u.is_finite())));
    }

    #[test]
    fn an_exact_second_order_law_is_not_warned() {
        // Manufactured φ = 1 + 0.1 h², r = 2 (analytic: p = 2 exactly). The old ratio
        // GCI32/(r21^p GCI21) equals φ1/φ2 here (method notes §12), not 1, and is no test:
        // nothing about the asymptotic range may be warned.
        let h = [1.0, 2.0, 4.0];
        let phi = h.map(|x| 1.0 + 0.1 * x * x);
        let r = estimate(h, phi, &ThreeGridSettings::default()).unwrap();
        assert_relative_eq!(r.observed_order.unwrap(), 2.0, max_relative = 1e-10);
        assert_relative_eq!(
            r.asymptotic_ratio.unwrap(),
            phi[0] / phi[1],
            max_relative = 1e-12
        );
        assert!(r.warnings.is_empty(), "{:?}", r.warnings);
        assert!(!r.order_at_bound);
    }

    #[test]
    fn an_order_far_from_the_formal_one_is_warned() {
        // Manufactured φ = 1 + 0.1 h^1.5, r = 2 (analytic p = 1.5): |1.5 − 2|/2 = 0.25 > 0.1
        // (Oberkampf & Roy 2010, from memory; the 10 % is common practice, no source).
        let h = [1.0, 2.0, 4.0];
        let r = estimate(
            h,
            h.map(|x| 1.0 + 0.1 * x.powf(1.5)),
            &ThreeGridSettings::default(),
        )
        .unwrap();
        let codes: Vec<&str> = r.warnings.iter().map(|w| w.code.as_str()).collect();
        assert_eq!(codes, ["order_far_from_formal"]);
        // p = 1.9: within 10 % of 2, no warning (analytic).
        let r = estimate(
            h,
            h.map(|x| 1.0 + 0.1 * x.powf(1.9)),
            &ThreeGridSettings::default(),
        )
        .unwrap();
        assert!(r.warnings.is_empty(), "{:?}", r.warnings);
    }

    #[test]
    fn a_low_manufactured_order_is_warned() {
        // Manufactured φ = 1 + h^0.3, r = 2 (analytic p = 0.3 < 0.5; the 0.5 limit is common
        // practice, no source).
        let h = [1.0, 2.0, 4.0];
        let r = estimate(
            h,
            h.map(|x| 1.0 + x.powf(0.3)),
            &ThreeGridSettings::default(),
        )
        .unwrap();
        assert_relative_eq!(r.observed_order.unwrap(), 0.3, max_relative = 1e-9);
        assert!(r.warnings.iter().any(|w| w.code == "order_low"));
    }

    #[test]
    fn an_order_on_the_search_cap_is_flagged() {
        // Manufactured φ = 1 + 1e-3 h^5 with order_max = 5 (analytic p = 5, the cap itself).
        let s = ThreeGridSettings {
            order_max: 5.0,
            ..Default::default()
        };
        let h = [1.0, 2.0, 4.0];
        let r = estimate(h, h.map(|x| 1.0 + 1e-3 * x.powi(5)), &s).unwrap();
        assert!(r.order_at_bound, "{:?}", r.observed_order);
    }

    proptest! {
        // Manufactured data φ = φ0 + α h^p (analytic): the estimator must recover p and the
        // extrapolated value φ0, and the GCI must equal its formula.
        #[test]
        fn recovers_manufactured_order(
            p in 0.5f64..4.0,
            r21 in 1.1f64..3.0,
            r32 in 1.1f64..3.0,
            alpha in prop_oneof![-2.0f64..-0.01, 0.01f64..2.0],
            phi0 in -10.0f64..10.0,
            h1 in 0.02f64..1.0,
        ) {
            let h = [h1, h1 * r21, h1 * r21 * r32];
            let phi = h.map(|hi| phi0 + alpha * hi.powf(p));
            // Skip cases whose differences drown in round-off of the values.
            prop_assume!((phi[1] - phi[0]).abs() > 1e-6 * phi0.abs().max(1.0));
            let r = estimate(h, phi, &ThreeGridSettings::default()).unwrap();
            prop_assert_eq!(r.convergence, Convergence::Monotonic);
            let po = r.observed_order.unwrap();
            prop_assert!((po - p).abs() <= 1e-8 * p, "p {} vs {}", po, p);
            let ext = r.extrapolated.unwrap();
            let tol = 1e-10 * phi0.abs().max(phi.iter().fold(0.0f64, |m, v| m.max(v.abs())));
            prop_assert!((ext - phi0).abs() <= tol.max(1e-13), "ext {} vs {}", ext, phi0);
            if phi[0] != 0.0 {
                let expect = 1.25 * ((phi[0] - phi[1]) / phi[0]).abs() / (r21.powf(po) - 1.0);
                let g = r.gci_fine.unwrap();
                prop_assert!((g - expect).abs() <= 1e-12 * expect.max(1e-300));
            }
        }

        // Any finite input gives a result or a clean error, never a panic or NaN result.
        #[test]
        fn never_panics(a in -1e300f64..1e300, b in -1e300f64..1e300, c in -1e300f64..1e300) {
            if let Ok(r) = estimate([1.0, 1.3, 1.69], [a, b, c], &ThreeGridSettings::default()) {
                if let Some(u) = r.uncertainty { prop_assert!(u.is_finite() || u.is_infinite()); }
            }
        }
    }
}
