//! The one place that decides which estimate governs a quantity's uncertainty, and the facts a
//! result carries about itself (its meshes and its role), so that no exporter decides again or
//! rebuilds them from names.
//!
//! The rule (docs/method.md): the least-squares estimate of Eça & Hoekstra (2014) governs when
//! it exists (four or more meshes) and the study does not ask for the three-mesh estimate;
//! otherwise the three-mesh estimate governs, and the published rule the study chooses
//! (`settings.uncertainty_rule`, default the Stern et al. 2001 correction factor; see
//! [`crate::estimate::rules`]) states U from it; with two meshes Roache's two-mesh GCI (formal
//! order, Fs = 3) does. This is also where the standard uncertainty u = U/divisor of each
//! method is decided (ASME V&V 20 for the GCI; see [`standard_divisor`]).

use super::{Method, Uncertainty};
use crate::estimate::least_squares::{FitChoice, LeastSquares};
use crate::estimate::rules::{self, Branch, RuleEstimate};
use crate::estimate::three_grid::{Governing, ThreeGrid};
use crate::estimate::Convergence;
use crate::study::raw::EstimatorChoice;
use serde::Serialize;

/// What fixed the uncertainty inside the governing estimate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Rule {
    /// The fine-mesh GCI with the observed order (Celik et al. 2008).
    Gci,
    /// Half the range of an oscillation (Stern et al. 2001).
    OscillationRange,
    /// The formal order with Fs = 3, no observed order being found (Roache 1998).
    FormalOrder,
    /// Nothing changed between the meshes: U = 0.
    NoChange,
    /// The selected least-squares fit (Eça & Hoekstra 2014).
    LeastSquares,
    /// A published factor of safety on the Richardson estimate: the rule named in
    /// `three_mesh_rule` (Roache's Fs = 3 off the formal order, Xing & Stern, Stern et al.).
    FactorOfSafety,
    /// Two meshes: Roache's two-mesh GCI with the formal order and Fs = 3.
    TwoMesh,
}

/// The governing estimate of a quantity, as decided by [`govern`]: every exporter reads this
/// record instead of choosing between the three-mesh and least-squares figures itself.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GoverningEstimate {
    /// The estimate that governs (the same word as `uncertainty.method`).
    pub method: Method,
    /// What fixed U inside it (`None` when it diverges and no U exists).
    pub rule: Option<Rule>,
    /// Its convergence class.
    pub convergence: Convergence,
    /// The selected least-squares fit, when the least-squares estimate governs.
    pub fit: Option<FitChoice>,
    /// Its observed order: the three-mesh p, or the least-squares free order (`None` where it
    /// does not exist, e.g. when the formal order was assumed).
    pub order: Option<f64>,
    /// Its extrapolated value: the three-mesh φ_ext21, or φ0 of the selected least-squares fit.
    pub extrapolated: Option<f64>,
    /// Its absolute uncertainty U of the finest mesh (`None` when divergent).
    pub absolute: Option<f64>,
    /// Whether the data demonstrate convergence (see [`not_demonstrated`]): `false` when the
    /// quantity diverges or a `convergence_not_demonstrated` rule holds. A quantity whose
    /// convergence is not demonstrated is never called monotonic, fails every acceptance
    /// limit and cannot be planned for.
    pub demonstrated: bool,
    /// Why convergence is not demonstrated (the warning's sentence; not serialised).
    #[serde(skip)]
    pub not_demonstrated_because: Option<String>,
    /// The published rule that stated U when a three-mesh or two-mesh estimate governs
    /// (`None` under least squares).
    pub three_mesh_rule: Option<rules::Rule>,
    /// The branch of that rule that applied.
    pub branch: Option<Branch>,
    /// The factor of safety the governing rule applied (`None` when it applied none).
    pub safety_factor: Option<f64>,
    /// The order the governing rule put in r21^p − 1 (the formal order where it assumed it).
    pub order_used: Option<f64>,
    /// The divisor that turns U into a standard uncertainty u = U/divisor (u_num of ASME
    /// V&V 20), decided by [`standard_divisor`] or set by the study.
    pub divisor: f64,
    /// Where the divisor comes from (for reports).
    #[serde(skip)]
    pub divisor_basis: &'static str,
}

/// ASME V&V 20-2009 (from memory): u_num = GCI/1.15 for the GCI with Fs = 1.25.
pub const DIVISOR_GCI: f64 = 1.15;
/// An expanded uncertainty at about 95 % turned into a standard one with k = 2 (JCGM 100:2008
/// GUM §6.3.3 for a normal distribution; ITTC 7.5-03-01-01 states U at 95 %; from memory):
/// the project's choice for every factor-of-safety rule other than the Fs = 1.25 GCI, and for
/// least squares (Eça & Hoekstra 2014 aim at 95 % coverage).
pub const DIVISOR_EXPANDED: f64 = 2.0;

/// The divisor of a bound: half the range of an oscillation read as the half-width of a
/// rectangular distribution, u = a/√3 (JCGM 100:2008 GUM §4.3.7, from memory).
pub fn divisor_bound() -> f64 {
    3.0_f64.sqrt()
}

/// The standard-uncertainty divisor of a governing estimate and where it comes from: 1.15 for
/// the GCI with Fs = 1.25 (ASME V&V 20), √3 for half the range of an oscillation (a bound),
/// 2 for every other rule (an expanded uncertainty at about 95 %), 1 where U = 0.
pub fn standard_divisor(
    method: Method,
    rule: Option<Rule>,
    safety_factor: Option<f64>,
) -> (f64, &'static str) {
    match (method, rule) {
        (_, Some(Rule::NoChange)) | (_, None) => (1.0, "no uncertainty to convert"),
        (Method::OscillationRange, _) | (_, Some(Rule::OscillationRange)) => (
            divisor_bound(),
            "half range as a rectangular bound, u = U/√3 (GUM 4.3.7, from memory)",
        ),
        (_, Some(Rule::Gci)) if safety_factor == Some(rules::FS_OBSERVED) => (
            DIVISOR_GCI,
            "GCI with Fs = 1.25, u = U/1.15 (ASME V&V 20, from memory)",
        ),
        _ => (
            DIVISOR_EXPANDED,
            "expanded uncertainty at about 95 %, u = U/2 (GUM k = 2, from memory)",
        ),
    }
}

/// Below this observed order convergence is not demonstrated (the `order_low` limit of the
/// method notes §3; common practice, no source).
pub const DEMONSTRATED_MIN_ORDER: f64 = 0.5;

/// A convergence ratio R = ε21/ε32 above this is "close to 1": the differences barely shrink
/// (R = 0.9 needs some 22 refinements to shrink them tenfold), so no extrapolation is
/// supported. Common practice, no source.
pub const DEMONSTRATED_MAX_RATIO: f64 = 0.9;

/// Why the governing estimate does not demonstrate convergence, or `None` when it does (or
/// when the values do not change). The rules, any one of which suffices: the governing
/// observed order is below [`DEMONSTRATED_MIN_ORDER`]; it sits on an end of its search (the
/// three-mesh `order_max` or scan's lower end, the least-squares bounds or excluded band); the
/// least-squares order is not found; the three-mesh convergence ratio R exceeds
/// [`DEMONSTRATED_MAX_RATIO`]; the three-mesh differences shrink (R > 0) but no order p > 0
/// fits them. A divergent quantity is not demonstrated either, but has its
/// own warning (`divergent`), so it gets a reason only when one of these rules holds.
pub fn not_demonstrated(
    three_grid: Option<&ThreeGrid>,
    least_squares: Option<&LeastSquares>,
    method: Method,
    convergence: Convergence,
    order: Option<f64>,
) -> Option<String> {
    if convergence == Convergence::NoChange {
        return None;
    }
    let mut why = Vec::new();
    if let Some(r) = three_grid.and_then(|t| t.convergence_ratio) {
        if r > DEMONSTRATED_MAX_RATIO {
            why.push(format!(
                "the convergence ratio R = ε21/ε32 = {r:.4} of the three finest meshes is above \
                 {DEMONSTRATED_MAX_RATIO}: the differences do not shrink"
            ));
        }
    }
    if method == Method::LeastSquares {
        match least_squares {
            Some(ls) if ls.order.is_none() => {
                why.push("the least-squares free order is not found".to_string())
            }
            Some(ls) if ls.order_at_bound => {
                why.push("the least-squares free order sits on an end of its search".to_string())
            }
            _ => {}
        }
    } else if three_grid.is_some_and(|t| t.order_at_bound) {
        why.push("the observed order sits on an end of its search".to_string());
    } else if three_grid
        .is_some_and(|t| t.observed_order.is_none() && t.convergence_ratio.is_some_and(|r| r > 0.0))
    {
        // The differences shrink, but too slowly for any power law with p > 0 (unequal
        // ratios, docs/method.md §3).
        why.push(
            "the differences shrink, but no power law φ0 + α·h^p with p > 0 passes through the \
             three values"
                .to_string(),
        );
    }
    if let Some(p) = order.filter(|p| *p < DEMONSTRATED_MIN_ORDER) {
        why.push(format!(
            "the observed order p = {p:.3} is below {DEMONSTRATED_MIN_ORDER}"
        ));
    }
    if why.is_empty() {
        None
    } else {
        Some(format!(
            "convergence not demonstrated: {}; no extrapolation is supported, so the uncertainty \
             is not quotable, every acceptance limit on it fails and no mesh can be planned from it",
            why.join("; ")
        ))
    }
}

/// Decides which estimate governs: the least-squares estimate when it exists and `estimator`
/// is not [`EstimatorChoice::ThreeGrid`], else the three-mesh estimate, with U stated by
/// `rule` (the study's published rule on the same three meshes; the Celik et al. 2008 GCI of
/// `three_grid` itself when `None`); `None` when neither exists. A divergent estimate still
/// governs (its class is the quantity's class) but gives no U.
pub fn govern(
    three_grid: Option<&ThreeGrid>,
    least_squares: Option<&LeastSquares>,
    estimator: EstimatorChoice,
    rule: Option<&RuleEstimate>,
) -> Option<GoverningEstimate> {
    if let Some(ls) = least_squares.filter(|_| estimator != EstimatorChoice::ThreeGrid) {
        let absolute = if ls.convergence == Convergence::Divergent {
            None
        } else {
            ls.per_mesh.first().map(|m| m.uncertainty)
        };
        let why = not_demonstrated(
            three_grid,
            Some(ls),
            Method::LeastSquares,
            ls.convergence,
            ls.order,
        );
        let rule = absolute.map(|_| Rule::LeastSquares);
        let (divisor, divisor_basis) =
            standard_divisor(Method::LeastSquares, rule, Some(ls.safety_factor));
        return Some(GoverningEstimate {
            method: Method::LeastSquares,
            rule,
            convergence: ls.convergence,
            fit: Some(ls.selected),
            order: ls.order,
            extrapolated: ls.selected_fit().map(|f| f.phi0),
            absolute,
            demonstrated: why.is_none() && ls.convergence != Convergence::Divergent,
            not_demonstrated_because: why,
            three_mesh_rule: None,
            branch: None,
            safety_factor: Some(ls.safety_factor),
            order_used: ls.order,
            divisor,
            divisor_basis,
        });
    }
    let tg = three_grid?;
    let celik = tg.governing.map(|g| match g {
        Governing::Gci => Rule::Gci,
        Governing::OscillationRange => Rule::OscillationRange,
        Governing::FormalOrder => Rule::FormalOrder,
        Governing::NoChange => Rule::NoChange,
    });
    let (rule, absolute, named, branch, fs, order_used) = match rule {
        Some(r) => (
            rule_of(r.branch),
            r.uncertainty,
            Some(r.rule),
            Some(r.branch),
            r.safety_factor,
            r.order,
        ),
        None => (
            celik,
            tg.uncertainty,
            Some(rules::Rule::CelikGci),
            None,
            (celik == Some(Rule::Gci) || celik == Some(Rule::FormalOrder)).then(|| {
                if celik == Some(Rule::Gci) {
                    tg.safety_factor
                } else {
                    rules::FS_ASSUMED
                }
            }),
            tg.observed_order,
        ),
    };
    let method = if rule == Some(Rule::OscillationRange) {
        Method::OscillationRange
    } else {
        Method::ThreeGrid
    };
    let why = not_demonstrated(Some(tg), None, method, tg.convergence, tg.observed_order);
    let (divisor, divisor_basis) = standard_divisor(method, absolute.and(rule), fs);
    Some(GoverningEstimate {
        method,
        rule: absolute.and(rule),
        demonstrated: why.is_none() && tg.convergence != Convergence::Divergent,
        not_demonstrated_because: why,
        convergence: tg.convergence,
        fit: None,
        order: tg.observed_order,
        extrapolated: tg.extrapolated,
        absolute,
        three_mesh_rule: named,
        branch,
        safety_factor: fs,
        order_used,
        divisor,
        divisor_basis,
    })
}

/// The statement with the finest mesh's iterative uncertainty U_I (absolute, in the
/// quantity's unit) combined by root-sum-square: U = √(U_G² + U_I²) (ASME V&V 20-2009;
/// ITTC 7.5-03-01-01, U_SN² = U_I² + U_G² + …, from memory), and the standard uncertainty
/// u_num = √(u_G² + (U_I/√3)²), U_I being read as the half-width of the iterative scatter, a
/// rectangular bound (GUM §4.3.7, from memory; a project decision).
pub fn with_iterative(u: &Uncertainty, u_i: f64) -> Uncertainty {
    let u_i = u_i.abs();
    let absolute = u.discretisation.hypot(u_i);
    let standard = (u.discretisation / u.divisor).hypot(u_i / divisor_bound());
    Uncertainty {
        method: u.method,
        value: u.value,
        absolute,
        discretisation: u.discretisation,
        iterative: Some(u_i),
        standard,
        divisor: u.divisor,
        relative: (u.value != 0.0).then(|| absolute / u.value.abs()),
        lower: u.value - absolute,
        upper: u.value + absolute,
    }
}

/// What fixed U, from the branch of a published rule.
fn rule_of(branch: Branch) -> Option<Rule> {
    match branch {
        Branch::Gci => Some(Rule::Gci),
        Branch::OscillationRange => Some(Rule::OscillationRange),
        Branch::FormalOrderFallback => Some(Rule::FormalOrder),
        Branch::NoChange => Some(Rule::NoChange),
        Branch::Divergent | Branch::NotApplicable => None,
        Branch::TwoMesh => Some(Rule::TwoMesh),
        Branch::NearFormal
        | Branch::FarFromFormal
        | Branch::OrderAtOrBelowFormal
        | Branch::OrderAboveFormal
        | Branch::SmallCorrection
        | Branch::LargeCorrection => Some(Rule::FactorOfSafety),
    }
}

/// The governing estimate of a two-mesh quantity: Roache's two-mesh GCI (formal order,
/// Fs = 3). No class or order can be observed from two values, so the class is
/// `undetermined`; the U is quotable but labelled (`Method::TwoMesh`), and the warning
/// `order_assumed` says that the formal order was assumed. The extrapolated value is
/// Richardson's two-mesh φ1 + (φ1 − φ2)/(r21^{p_f} − 1).
pub fn govern_two_mesh(two_mesh: &RuleEstimate, h: [f64; 2], phi: [f64; 2]) -> GoverningEstimate {
    // A difference within the round-off of the values is no change (as for three meshes).
    let tiny =
        crate::estimate::three_grid::ROUNDOFF_ULPS * f64::EPSILON * phi[0].abs().max(phi[1].abs());
    let change = (phi[1] - phi[0]).abs() > tiny;
    let rule = if change {
        two_mesh.uncertainty.map(|_| Rule::TwoMesh)
    } else {
        Some(Rule::NoChange)
    };
    let (divisor, divisor_basis) = standard_divisor(Method::TwoMesh, rule, two_mesh.safety_factor);
    let absolute = if change {
        two_mesh.uncertainty
    } else {
        Some(0.0)
    };
    GoverningEstimate {
        method: Method::TwoMesh,
        rule,
        convergence: if change {
            Convergence::Undetermined
        } else {
            Convergence::NoChange
        },
        fit: None,
        order: None,
        extrapolated: two_mesh.order.and_then(|pf| {
            let d = (h[1] / h[0]).powf(pf) - 1.0;
            let ext = phi[0] + (phi[0] - phi[1]) / d;
            (d > 0.0 && ext.is_finite()).then_some(ext)
        }),
        absolute,
        demonstrated: true,
        not_demonstrated_because: None,
        three_mesh_rule: Some(rules::Rule::TwoMeshGci),
        branch: Some(two_mesh.branch),
        safety_factor: two_mesh.safety_factor,
        order_used: two_mesh.order,
        divisor,
        divisor_basis,
    }
}

/// The role a result plays in the assessment.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Role {
    /// A scalar quantity of the study.
    Quantity,
    /// A sweep's breakdown abscissa, estimated over the sweep's meshes.
    Breakdown {
        /// The sweep.
        sweep: String,
        /// The response that breaks down.
        response: String,
    },
    /// A sweep's non-cavitating reference of a response, estimated over the sweep's meshes.
    Reference {
        /// The sweep.
        sweep: String,
        /// The response.
        response: String,
    },
    /// One point of a sweep's uncertainty band (kept in the band point, not in the JSON).
    BandPoint {
        /// The sweep.
        sweep: String,
        /// The band's response.
        response: String,
        /// The abscissa.
        x: f64,
    },
    /// The simulation at one measured point of a comparison (not in the JSON).
    ComparisonPoint {
        /// The comparison.
        comparison: String,
        /// The abscissa (0 for a scalar quantity).
        x: f64,
    },
}

impl Role {
    /// The sweep a breakdown, reference or band point belongs to.
    pub fn sweep(&self) -> Option<&str> {
        match self {
            Role::Breakdown { sweep, .. }
            | Role::Reference { sweep, .. }
            | Role::BandPoint { sweep, .. } => Some(sweep),
            Role::Quantity | Role::ComparisonPoint { .. } => None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::estimate::least_squares::{self, LsSettings};
    use crate::estimate::three_grid::{self, ThreeGridSettings};
    use approx::assert_relative_eq;

    fn tg(h: [f64; 3], phi: [f64; 3]) -> ThreeGrid {
        three_grid::estimate(h, phi, &ThreeGridSettings::default()).expect("an estimate")
    }

    /// Celik et al. (2008) Table 1, first column: 2-D, N = 18000, 8000, 4500, so
    /// h = √(N1/N) relative to the finest mesh.
    fn celik() -> ThreeGrid {
        tg(
            [
                1.0,
                (18000.0_f64 / 8000.0).sqrt(),
                (18000.0_f64 / 4500.0).sqrt(),
            ],
            [6.063, 5.972, 5.863],
        )
    }

    #[test]
    fn the_gci_governs_the_celik_case() {
        // Celik et al. (2008) Table 1, first column (values from memory of the table, confirmed
        // by the equations in the three-mesh tests): p = 1.534, φ_ext21 = 6.1685,
        // GCI_fine21 = 2.175 %, so U = 0.02175 · 6.063 ≈ 0.1319.
        let t = celik();
        for choice in [
            EstimatorChoice::Auto,
            EstimatorChoice::ThreeGrid,
            EstimatorChoice::LeastSquares,
        ] {
            // With three meshes there is no least-squares estimate, whatever the choice.
            let g = govern(Some(&t), None, choice, None).expect("governs");
            assert_eq!(g.method, Method::ThreeGrid);
            assert_eq!(g.rule, Some(Rule::Gci));
            assert_eq!(g.convergence, Convergence::Monotonic);
            assert_eq!(g.fit, None);
            assert_relative_eq!(g.order.expect("p"), 1.534, epsilon = 5e-4);
            assert_relative_eq!(g.extrapolated.expect("ext"), 6.1685, epsilon = 5e-5);
            assert_relative_eq!(g.absolute.expect("U") / 6.063, 0.02175, epsilon = 5e-5);
        }
    }

    #[test]
    fn the_half_range_governs_an_oscillation() {
        // Manufactured: φ = 1.0, 0.99, 1.02 on h = 1, 1.5, 2.25: R = −1/3, oscillatory
        // (Stern et al. 2001 classes); p = ln 3 / ln 1.5 (analytic, r21 = r32), GCI form
        // 1.25 · 0.01 / (3 − 1) = 0.00625 below the half range ½(1.02 − 0.99) = 0.015.
        let t = tg([1.0, 1.5, 2.25], [1.0, 0.99, 1.02]);
        let g = govern(Some(&t), None, EstimatorChoice::Auto, None).expect("governs");
        assert_eq!(g.method, Method::OscillationRange);
        assert_eq!(g.rule, Some(Rule::OscillationRange));
        assert_eq!(g.convergence, Convergence::Oscillatory);
        assert_relative_eq!(g.absolute.expect("U"), 0.015, max_relative = 1e-12);
        assert_relative_eq!(
            g.order.expect("p"),
            3.0_f64.ln() / 1.5_f64.ln(),
            max_relative = 1e-10
        );
    }

    #[test]
    fn the_formal_order_governs_when_no_order_exists() {
        // Manufactured: φ = 1.0, 1.0, 1.1 on h = 1, 1.5, 2.25: ε21 = 0, so no observed order;
        // Roache's fallback U = 3 · max(|ε21|/(r21² − 1), |ε32|/(r32² − 1))
        // = 3 · 0.1 / (1.5² − 1) = 0.24 (formula, formal order 2).
        let t = tg([1.0, 1.5, 2.25], [1.0, 1.0, 1.1]);
        let g = govern(Some(&t), None, EstimatorChoice::Auto, None).expect("governs");
        assert_eq!(g.method, Method::ThreeGrid);
        assert_eq!(g.rule, Some(Rule::FormalOrder));
        assert_eq!(g.order, None);
        assert_eq!(g.extrapolated, None);
        assert_relative_eq!(g.absolute.expect("U"), 0.24, max_relative = 1e-12);
    }

    #[test]
    fn a_divergent_three_mesh_estimate_gives_no_u() {
        // R = 0.02/0.01 = 2 > 1: monotonic divergence (Stern et al. 2001 classes).
        let t = tg([1.0, 1.5, 2.25], [1.0, 1.02, 1.03]);
        let g = govern(Some(&t), None, EstimatorChoice::Auto, None).expect("governs");
        assert_eq!(g.convergence, Convergence::Divergent);
        assert_eq!((g.rule, g.absolute, g.order), (None, None, None));
        assert!(govern(None, None, EstimatorChoice::Auto, None).is_none());
    }

    #[test]
    fn convergence_is_demonstrated_by_an_exact_second_order_law() {
        // Manufactured φ = 1 + 0.1 h², r = 2 (analytic p = 2, R = 1/4).
        let t = tg([1.0, 2.0, 4.0], [1.1, 1.4, 2.6]);
        let g = govern(Some(&t), None, EstimatorChoice::Auto, None).expect("governs");
        assert!(g.demonstrated);
        assert_eq!(g.not_demonstrated_because, None);
        // The Celik et al. (2008) Table 1 case (p = 1.53) too.
        assert!(
            govern(Some(&celik()), None, EstimatorChoice::Auto, None)
                .expect("governs")
                .demonstrated
        );
    }

    #[test]
    fn a_low_order_does_not_demonstrate_convergence() {
        // Manufactured φ = 1 + h^0.3, r = 2 (analytic p = 0.3 < 0.5, R = 2^−0.3 ≈ 0.81; the
        // 0.5 limit is common practice, no source).
        let h = [1.0, 2.0, 4.0];
        let t = tg(h, h.map(|x| 1.0 + x.powf(0.3)));
        let g = govern(Some(&t), None, EstimatorChoice::Auto, None).expect("governs");
        assert_eq!(g.convergence, Convergence::Monotonic);
        assert!(!g.demonstrated);
        let why = g.not_demonstrated_because.expect("a reason");
        assert!(why.contains("below 0.5") && !why.contains("ratio"), "{why}");
    }

    #[test]
    fn a_ratio_near_one_does_not_demonstrate_convergence() {
        // Manufactured φ = 1 + h^0.1 with the order known to be good enough otherwise:
        // R = 2^−0.1 ≈ 0.933 > 0.9 (the 0.9 limit is common practice, no source).
        let h = [1.0, 2.0, 4.0];
        let t = tg(h, h.map(|x| 1.0 + x.powf(0.1)));
        let why = not_demonstrated(Some(&t), None, Method::ThreeGrid, t.convergence, Some(1.0))
            .expect("a reason");
        assert!(why.contains("R = ε21/ε32 = 0.9330"), "{why}");
        // Constant differences: R = 1 exactly (analytic), divergent and not demonstrated.
        let t = tg(h, [0.434, 0.374, 0.314]);
        let g = govern(Some(&t), None, EstimatorChoice::Auto, None).expect("governs");
        assert!(!g.demonstrated && g.not_demonstrated_because.is_some());
    }

    #[test]
    fn shrinking_differences_no_power_law_fits_do_not_demonstrate_convergence() {
        // r21 = 1.3, r32 = 2, ε32/ε21 = 2 < ln 2/ln 1.3 = 2.64 (analytic): no p > 0 fits, the
        // class is monotonic (0 < R < 1, Stern et al. 2001) and U falls back on the formal
        // order with Fs = 3 (Roache 1998), but convergence is not demonstrated.
        let t = tg([1.0, 1.3, 2.6], [1.0, 1.01, 1.03]);
        assert_eq!(t.convergence, Convergence::Monotonic);
        let g = govern(Some(&t), None, EstimatorChoice::Auto, None).expect("governs");
        assert_eq!(g.rule, Some(Rule::FormalOrder));
        assert!(!g.demonstrated);
        let why = g.not_demonstrated_because.expect("a reason");
        assert!(why.contains("no power law"), "{why}");
    }

    #[test]
    fn least_squares_governs_with_four_or_more_meshes() {
        // Manufactured: φ = 2 + 0.01 h^1.5 on five meshes, r = 1.3: the free fit recovers
        // φ0 = 2 and p = 1.5 (analytic; Eça & Hoekstra 2014 for the procedure).
        let h: Vec<f64> = (0..5).map(|i| 1.3_f64.powi(i)).collect();
        let phi: Vec<f64> = h.iter().map(|x| 2.0 + 0.01 * x.powf(1.5)).collect();
        let names: Vec<String> = (1..=5).map(|i| format!("G{i}")).collect();
        let ls =
            least_squares::estimate(&names, &h, &phi, &LsSettings::default()).expect("an estimate");
        let t = tg([h[0], h[1], h[2]], [phi[0], phi[1], phi[2]]);
        for choice in [EstimatorChoice::Auto, EstimatorChoice::LeastSquares] {
            let g = govern(Some(&t), Some(&ls), choice, None).expect("governs");
            assert_eq!(g.method, Method::LeastSquares);
            assert_eq!(g.rule, Some(Rule::LeastSquares));
            assert_eq!(g.convergence, Convergence::Monotonic);
            assert_eq!(g.fit, Some(ls.selected));
            assert_relative_eq!(g.order.expect("p"), 1.5, epsilon = 1e-6);
            assert_relative_eq!(g.extrapolated.expect("φ0"), 2.0, epsilon = 1e-8);
            assert_eq!(g.absolute, ls.per_mesh.first().map(|m| m.uncertainty));
        }
        // The study can ask for the three-mesh estimate: it then governs (same manufactured
        // data, p = 1.5 exactly on three meshes too).
        let g = govern(Some(&t), Some(&ls), EstimatorChoice::ThreeGrid, None).expect("governs");
        assert_eq!(g.method, Method::ThreeGrid);
        assert_eq!(g.rule, Some(Rule::Gci));
        assert_relative_eq!(g.order.expect("p"), 1.5, epsilon = 1e-8);
        assert_relative_eq!(g.extrapolated.expect("ext"), 2.0, epsilon = 1e-10);
    }
}
