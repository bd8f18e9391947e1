//! The published three-mesh uncertainty rules side by side, as pure functions over the same
//! inputs: sizes `h` finest first (or the refinement ratios), values φ1, φ2, φ3, the formal
//! order p_f, and the observed order p that [`three_grid::estimate`] finds.
//!
//! Notation (Celik et al. 2008): ε21 = φ2 − φ1, r21 = h2/h1, and the Richardson estimate of the
//! fine-mesh error δ_RE = ε21/(r21^p − 1). Every rule returns a [`RuleEstimate`]: the absolute
//! uncertainty U, the factor of safety and order it used, the [`Branch`] that applied, and
//! warnings with stable codes. Nothing here decides which rule governs a study; that stays in
//! `assess::govern`. This module changes no existing output: it is groundwork for comparing
//! the rules (see the coverage study, `examples/coverage.rs`).
//!
//! The rules, with their sources (all but the first written from memory of the publications,
//! as recorded in the project's method notes §10 and §13):
//!
//! - [`celik_gci`]: Celik, Ghia, Roache, Freitas, Coleman & Raad (2008), J. Fluids Eng. 130(7)
//!   078001: U = 1.25·|ε21|/(r21^p − 1) with the observed order; exactly what
//!   [`three_grid::estimate`] reports (oscillation range and formal-order fallback included).
//! - [`roache_fs3`]: Roache (1998), "Verification and Validation in Computational Science and
//!   Engineering", as written by Oberkampf & Roy (2010), "Verification and Validation in
//!   Scientific Computing", §8.6 (from memory): if |p − p_f|/p_f ≤ 0.1, U = 1.25·|ε21|/(r21^{p_f}
//!   − 1); otherwise U = 3·|ε21|/(r21^{p*} − 1) with p* = min(max(0.5, p), p_f).
//! - [`xing_stern`]: Xing & Stern (2010), J. Fluids Eng. 132, 061403 (from memory): P = p/p_f,
//!   U = [FS1·P + FS0·(1 − P)]·|δ_RE| for 0 < P ≤ 1, U = [FS1·P + FS2·(P − 1)]·|δ_RE| for
//!   1 < P < 2, FS0 = 2.45, FS1 = 1.6, FS2 = 14.8; no U for P ≥ 2.
//! - [`stern_correction`]: Stern, Wilson, Coleman & Paterson (2001), J. Fluids Eng. 123,
//!   793–802 (from memory): C = (r21^p − 1)/(r21^{p_f} − 1), U = [9.6(1 − C)² + 1.1]·|δ_RE| when
//!   |1 − C| < 0.125, otherwise U = [2|1 − C| + 1]·|δ_RE|.
//! - [`two_mesh_gci`]: Roache (1998), two meshes and the formal order (from memory):
//!   U = 3·|ε21|/(r21^{p_f} − 1). It uses only the two finest meshes and never governs when
//!   three exist.
//!
//! The last four rules are written for monotonic convergence. On oscillatory data they apply
//! their formula with the order the three-mesh estimate found (with s = −1), and the
//! `oscillatory` warning of that estimate stays on the result. On divergent data no rule gives
//! a U; when nothing changes between the meshes every rule gives U = 0.
//!
//! Numerical uncertainty is not model-test acceptance: for hydraulic machines defer to the
//! applicable model-test codes and to licensed engineering judgment.

use super::three_grid::{self, Governing, ThreeGrid, ThreeGridSettings};
use super::{Convergence, EstimateError};
use crate::warning::Warning;
use serde::Serialize;

/// Factor of safety of the GCI with an observed order (Roache 1998; Celik et al. 2008).
pub const FS_OBSERVED: f64 = 1.25;
/// Factor of safety when the order is assumed or unreliable (Roache 1998).
pub const FS_ASSUMED: f64 = 3.0;
/// Roache / Oberkampf & Roy: the relative band |p − p_f|/p_f within which p counts as formal.
pub const ROACHE_ORDER_BAND: f64 = 0.1;
/// Roache / Oberkampf & Roy: the lowest order the Fs = 3 branch uses.
pub const ROACHE_ORDER_FLOOR: f64 = 0.5;
/// Xing & Stern (2010) FS0 (from memory).
pub const XS_FS0: f64 = 2.45;
/// Xing & Stern (2010) FS1 (from memory).
pub const XS_FS1: f64 = 1.6;
/// Xing & Stern (2010) FS2 (from memory).
pub const XS_FS2: f64 = 14.8;
/// Stern et al. (2001): the half-width of the band |1 − C| with the quadratic factor.
pub const STERN_BAND: f64 = 0.125;

/// The rules of this module.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Rule {
    /// Celik et al. (2008) GCI, Fs = 1.25 with the observed order.
    CelikGci,
    /// Roache (1998) / Oberkampf & Roy (2010 §8.6): Fs = 1.25 near the formal order, else 3.
    RoacheFs3,
    /// Xing & Stern (2010) factor of safety.
    XingStern,
    /// Stern et al. (2001) correction factor.
    SternCorrection,
    /// Roache (1998) two-mesh GCI: Fs = 3 with the formal order.
    TwoMeshGci,
}

impl Rule {
    /// Every rule, in the order tables list them.
    pub const ALL: [Rule; 5] = [
        Rule::CelikGci,
        Rule::RoacheFs3,
        Rule::XingStern,
        Rule::SternCorrection,
        Rule::TwoMeshGci,
    ];

    /// The rule that governs a three-mesh study unless the study chooses another
    /// (`settings.uncertainty_rule`): the Stern et al. (2001) correction factor, the one rule
    /// of this module whose coverage on the project's manufactured two-term data reaches 95 %
    /// in both families with a median U/|error| below 4 and no quiet miss (docs/method.md §12).
    pub const DEFAULT: Rule = Rule::SternCorrection;

    /// The rules a three-mesh study may choose to govern (the two-mesh GCI governs only
    /// two-mesh studies).
    pub const THREE_MESH: [Rule; 4] = [
        Rule::CelikGci,
        Rule::RoacheFs3,
        Rule::XingStern,
        Rule::SternCorrection,
    ];

    /// The rule named by its label.
    pub fn from_label(label: &str) -> Option<Rule> {
        Rule::ALL.into_iter().find(|r| r.label() == label)
    }

    /// A short name for people (tables, paragraphs).
    pub fn title(self) -> &'static str {
        match self {
            Rule::CelikGci => "GCI (Celik et al. 2008)",
            Rule::RoacheFs3 => "GCI with Fs = 3 off the formal order (Roache 1998)",
            Rule::XingStern => "factor of safety (Xing & Stern 2010)",
            Rule::SternCorrection => "correction factor (Stern et al. 2001)",
            Rule::TwoMeshGci => "two-mesh GCI with the formal order (Roache 1998)",
        }
    }

    /// The snake_case label used in every output.
    pub fn label(self) -> &'static str {
        match self {
            Rule::CelikGci => "celik_gci",
            Rule::RoacheFs3 => "roache_fs3",
            Rule::XingStern => "xing_stern",
            Rule::SternCorrection => "stern_correction",
            Rule::TwoMeshGci => "two_mesh_gci",
        }
    }
}

/// Which branch of a rule applied.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Branch {
    /// Celik: the GCI with the observed order.
    Gci,
    /// Celik: half the range of an oscillation governed (Stern et al. 2001).
    OscillationRange,
    /// No observed order: Fs = 3 with the formal order on the larger pair difference.
    FormalOrderFallback,
    /// Nothing changed between the meshes: U = 0.
    NoChange,
    /// The differences grow with refinement: no U.
    Divergent,
    /// Roache: |p − p_f|/p_f ≤ 0.1, Fs = 1.25 with the formal order.
    NearFormal,
    /// Roache: otherwise, Fs = 3 with min(max(0.5, p), p_f).
    FarFromFormal,
    /// Xing & Stern: 0 < P ≤ 1.
    OrderAtOrBelowFormal,
    /// Xing & Stern: 1 < P < 2.
    OrderAboveFormal,
    /// The rule gives no U for these data (Xing & Stern P ≥ 2, or no observed order).
    NotApplicable,
    /// Stern et al.: |1 − C| < 0.125, the quadratic factor.
    SmallCorrection,
    /// Stern et al.: |1 − C| ≥ 0.125, the linear factor.
    LargeCorrection,
    /// Two meshes: Fs = 3 with the formal order.
    TwoMesh,
}

impl Branch {
    /// The snake_case label used in every output.
    pub fn label(self) -> &'static str {
        match self {
            Branch::Gci => "gci",
            Branch::OscillationRange => "oscillation_range",
            Branch::FormalOrderFallback => "formal_order_fallback",
            Branch::NoChange => "no_change",
            Branch::Divergent => "divergent",
            Branch::NearFormal => "near_formal",
            Branch::FarFromFormal => "far_from_formal",
            Branch::OrderAtOrBelowFormal => "order_at_or_below_formal",
            Branch::OrderAboveFormal => "order_above_formal",
            Branch::NotApplicable => "not_applicable",
            Branch::SmallCorrection => "small_correction",
            Branch::LargeCorrection => "large_correction",
            Branch::TwoMesh => "two_mesh",
        }
    }
}

/// One rule's result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RuleEstimate {
    /// The rule.
    pub rule: Rule,
    /// Absolute fine-mesh uncertainty U (`None` when the rule gives none).
    pub uncertainty: Option<f64>,
    /// U/|φ1| (`None` without U or when φ1 = 0).
    pub relative: Option<f64>,
    /// The factor of safety the rule applied (`None` when it applied none).
    pub safety_factor: Option<f64>,
    /// The order the rule used in r21^order − 1 (`None` when it used none).
    pub order: Option<f64>,
    /// The branch that applied.
    pub branch: Branch,
    /// Warnings: those of the three-mesh estimate and the rule's own (not serialised: the
    /// assessment lists warnings once, at the study level).
    #[serde(skip)]
    pub warnings: Vec<Warning>,
}

/// Warning code: the rule gives no U for these data.
pub const CODE_NOT_APPLICABLE: &str = "rule_not_applicable";
/// Warning code: Roache's rule found the observed order more than 10 % from the formal order.
pub const CODE_FAR_FROM_FORMAL: &str = "order_far_from_formal";
/// Warning code: the two-mesh GCI assumed the formal order (no order can be observed).
pub const CODE_ORDER_ASSUMED: &str = "order_assumed";
/// Warning code: the uncertainty overflowed the floating-point range and was dropped.
pub const CODE_NOT_FINITE: &str = "uncertainty_not_finite";

/// The shared inputs of the three-mesh rules: the meshes, the formal order and the three-mesh
/// estimate (observed order, convergence class, warnings) computed once.
#[derive(Debug, Clone, PartialEq)]
pub struct RuleInputs {
    /// Sizes, finest first.
    pub h: [f64; 3],
    /// Values, finest first.
    pub phi: [f64; 3],
    /// Formal order p_f of the discretisation.
    pub formal_order: f64,
    /// The three-mesh estimate with Fs = 1.25 and this formal order.
    pub three_grid: ThreeGrid,
}

impl RuleInputs {
    /// Runs [`three_grid::estimate`] once for the rules. Refuses non-finite or unordered
    /// sizes, non-finite values and a formal order that is not finite and positive.
    pub fn new(h: [f64; 3], phi: [f64; 3], formal_order: f64) -> Result<Self, EstimateError> {
        check_formal_order(formal_order)?;
        let settings = ThreeGridSettings {
            safety_factor: FS_OBSERVED,
            formal_order,
            ..ThreeGridSettings::default()
        };
        let three_grid = three_grid::estimate(h, phi, &settings)?;
        Ok(RuleInputs {
            h,
            phi,
            formal_order,
            three_grid,
        })
    }

    /// The inputs from a three-mesh estimate already made on `h` and `phi` (its safety
    /// factor is the Celik rule's). The caller vouches that `three_grid` was computed from
    /// these sizes and values with this formal order.
    pub fn from_estimate(
        h: [f64; 3],
        phi: [f64; 3],
        formal_order: f64,
        three_grid: ThreeGrid,
    ) -> Result<Self, EstimateError> {
        check_formal_order(formal_order)?;
        Ok(RuleInputs {
            h,
            phi,
            formal_order,
            three_grid,
        })
    }

    /// The same from refinement ratios r21, r32 (h1 = 1).
    pub fn from_ratios(
        r21: f64,
        r32: f64,
        phi: [f64; 3],
        formal_order: f64,
    ) -> Result<Self, EstimateError> {
        Self::new([1.0, r21, r21 * r32], phi, formal_order)
    }

    fn r21(&self) -> f64 {
        self.three_grid.ratios[0]
    }
    fn e21(&self) -> f64 {
        self.phi[1] - self.phi[0]
    }
}

fn check_formal_order(pf: f64) -> Result<(), EstimateError> {
    if pf.is_finite() && pf > 0.0 {
        Ok(())
    } else {
        Err(EstimateError::InvalidInput(format!(
            "the formal order must be finite and > 0 (got {pf})"
        )))
    }
}

/// δ_RE = ε21/(r21^p − 1), the Richardson estimate of the fine-mesh error (up to its sign
/// convention). `None` when r21 ≤ 1, p ≤ 0 or anything is not finite.
pub fn richardson_delta(e21: f64, r21: f64, p: f64) -> Option<f64> {
    let den = r21.powf(p) - 1.0;
    let d = e21 / den;
    (e21.is_finite() && r21 > 1.0 && p > 0.0 && den > 0.0 && d.is_finite()).then_some(d)
}

/// Roache / Oberkampf & Roy (from memory): the factor of safety, the order and the branch for
/// an observed order `p` and formal order `pf`.
pub fn roache_choice(p: f64, pf: f64) -> (f64, f64, Branch) {
    if ((p - pf) / pf).abs() <= ROACHE_ORDER_BAND {
        (FS_OBSERVED, pf, Branch::NearFormal)
    } else {
        (
            FS_ASSUMED,
            p.max(ROACHE_ORDER_FLOOR).min(pf),
            Branch::FarFromFormal,
        )
    }
}

/// Xing & Stern (2010) factor of safety for P = p/p_f (from memory): `None` outside 0 < P < 2.
pub fn xing_stern_factor(ratio: f64) -> Option<(f64, Branch)> {
    if !(ratio > 0.0 && ratio < 2.0) {
        return None;
    }
    Some(if ratio <= 1.0 {
        (
            XS_FS1 * ratio + XS_FS0 * (1.0 - ratio),
            Branch::OrderAtOrBelowFormal,
        )
    } else {
        (
            XS_FS1 * ratio + XS_FS2 * (ratio - 1.0),
            Branch::OrderAboveFormal,
        )
    })
}

/// Stern et al. (2001) factor for the correction factor C (from memory).
pub fn stern_factor(c: f64) -> (f64, Branch) {
    let d = (1.0 - c).abs();
    if d < STERN_BAND {
        (9.6 * (1.0 - c) * (1.0 - c) + 1.1, Branch::SmallCorrection)
    } else {
        (2.0 * d + 1.0, Branch::LargeCorrection)
    }
}

fn result(
    rule: Rule,
    phi1: f64,
    u: Option<f64>,
    fs: Option<f64>,
    order: Option<f64>,
    branch: Branch,
    mut warnings: Vec<Warning>,
) -> RuleEstimate {
    let u = match u {
        Some(v) if !v.is_finite() => {
            warnings.push(Warning::new(
                CODE_NOT_FINITE,
                "the uncertainty overflows the floating-point range: rescale the quantity",
            ));
            None
        }
        other => other,
    };
    let relative = relative_of(u, phi1);
    RuleEstimate {
        rule,
        uncertainty: u,
        relative,
        safety_factor: fs,
        order,
        branch,
        warnings,
    }
}

/// Celik et al. (2008) GCI with Fs = 1.25 and the observed order: a thin wrapper, so the
/// numbers are those of [`three_grid::estimate`] (U = 1.25·|ε21|/(r21^p − 1), or half the
/// oscillation range, or Fs = 3 with the formal order when no order exists).
pub fn celik_gci(inputs: &RuleInputs) -> RuleEstimate {
    let tg = &inputs.three_grid;
    let (fs, order, branch) = match tg.governing {
        Some(Governing::Gci) => (Some(tg.safety_factor), tg.observed_order, Branch::Gci),
        Some(Governing::OscillationRange) => (None, tg.observed_order, Branch::OscillationRange),
        Some(Governing::FormalOrder) => (
            Some(FS_ASSUMED),
            Some(inputs.formal_order),
            Branch::FormalOrderFallback,
        ),
        Some(Governing::NoChange) => (None, None, Branch::NoChange),
        None => (None, None, Branch::Divergent),
    };
    result(
        Rule::CelikGci,
        inputs.phi[0],
        tg.uncertainty,
        fs,
        order,
        branch,
        tg.warnings.clone(),
    )
}

/// What the rules do before their own formula: no change, divergence, or the observed order.
enum Start {
    Done(Option<f64>, Branch),
    NoOrder,
    Order(f64),
}

fn start(inputs: &RuleInputs) -> Start {
    let tg = &inputs.three_grid;
    match tg.convergence {
        Convergence::NoChange => Start::Done(Some(0.0), Branch::NoChange),
        Convergence::Divergent => Start::Done(None, Branch::Divergent),
        _ => match tg.observed_order {
            Some(p) => Start::Order(p),
            None => Start::NoOrder,
        },
    }
}

/// The result where the class settles U without an order (no change: 0; divergent: none),
/// with the three-mesh estimate's warnings.
fn settled(rule: Rule, inputs: &RuleInputs, u: Option<f64>, branch: Branch) -> RuleEstimate {
    let warnings = inputs.three_grid.warnings.clone();
    result(rule, inputs.phi[0], u, None, None, branch, warnings)
}

/// Roache's fallback without an observed order (Roache 1998, from memory): the formal order
/// with Fs = 3 on the larger of the two mesh-pair differences, as the three-mesh estimate does.
fn formal_order_fallback(rule: Rule, inputs: &RuleInputs) -> RuleEstimate {
    let pf = inputs.formal_order;
    let [r21, r32] = inputs.three_grid.ratios;
    let e32 = inputs.phi[2] - inputs.phi[1];
    let u = FS_ASSUMED
        * (inputs.e21().abs() / (r21.powf(pf) - 1.0)).max(e32.abs() / (r32.powf(pf) - 1.0));
    result(
        rule,
        inputs.phi[0],
        Some(u),
        Some(FS_ASSUMED),
        Some(pf),
        Branch::FormalOrderFallback,
        inputs.three_grid.warnings.clone(),
    )
}

fn not_applicable(rule: Rule, inputs: &RuleInputs, why: &str) -> RuleEstimate {
    let mut w = inputs.three_grid.warnings.clone();
    w.push(Warning::new(
        CODE_NOT_APPLICABLE,
        format!("{}: not applicable, {why}", rule.label()),
    ));
    result(
        rule,
        inputs.phi[0],
        None,
        None,
        None,
        Branch::NotApplicable,
        w,
    )
}

/// Roache (1998) / Oberkampf & Roy (2010 §8.6), from memory: if |p − p_f|/p_f ≤ 0.1,
/// U = 1.25·|ε21|/(r21^{p_f} − 1); otherwise U = 3·|ε21|/(r21^{p*} − 1) with
/// p* = min(max(0.5, p), p_f) and the warning `order_far_from_formal`. Without an observed
/// order it reverts to p_f with Fs = 3 (Roache 2011, discussion of Xing & Stern), on the larger
/// of the two mesh-pair differences as the three-mesh estimate does.
pub fn roache_fs3(inputs: &RuleInputs) -> RuleEstimate {
    let rule = Rule::RoacheFs3;
    let phi1 = inputs.phi[0];
    let mut w = inputs.three_grid.warnings.clone();
    match start(inputs) {
        Start::Done(u, b) => result(rule, phi1, u, None, None, b, w),
        Start::NoOrder => formal_order_fallback(rule, inputs),
        Start::Order(p) => {
            let (fs, order, branch) = roache_choice(p, inputs.formal_order);
            if branch == Branch::FarFromFormal {
                w.push(Warning::new(
                    CODE_FAR_FROM_FORMAL,
                    format!(
                        "observed order {p:.3} differs from the formal order {} by more than 10 %: \
                         safety factor 3 with order {order:.3}",
                        inputs.formal_order
                    ),
                ));
            }
            let u = richardson_delta(inputs.e21(), inputs.r21(), order).map(|d| fs * d.abs());
            result(rule, phi1, u, Some(fs), Some(order), branch, w)
        }
    }
}

/// Xing & Stern (2010) factor of safety, from memory: P = p/p_f, δ_RE = ε21/(r21^p − 1),
/// U = [1.6·P + 2.45·(1 − P)]·|δ_RE| for 0 < P ≤ 1, U = [1.6·P + 14.8·(P − 1)]·|δ_RE| for
/// 1 < P < 2. For P ≥ 2 or without an observed order the rule gives no U (warning
/// `rule_not_applicable`).
pub fn xing_stern(inputs: &RuleInputs) -> RuleEstimate {
    let rule = Rule::XingStern;
    let phi1 = inputs.phi[0];
    match start(inputs) {
        Start::Done(u, b) => settled(rule, inputs, u, b),
        Start::NoOrder => not_applicable(rule, inputs, "no observed order"),
        Start::Order(p) => {
            let ratio = p / inputs.formal_order;
            match xing_stern_factor(ratio) {
                None => not_applicable(
                    rule,
                    inputs,
                    &format!("P = p/p_f = {ratio:.3} is 2 or more"),
                ),
                Some((fs, branch)) => {
                    let u = richardson_delta(inputs.e21(), inputs.r21(), p).map(|d| fs * d.abs());
                    result(
                        rule,
                        phi1,
                        u,
                        Some(fs),
                        Some(p),
                        branch,
                        inputs.three_grid.warnings.clone(),
                    )
                }
            }
        }
    }
}

/// Stern et al. (2001) correction factor, from memory: C = (r21^p − 1)/(r21^{p_f} − 1),
/// δ_RE = ε21/(r21^p − 1), U = [9.6(1 − C)² + 1.1]·|δ_RE| when |1 − C| < 0.125, otherwise
/// U = [2|1 − C| + 1]·|δ_RE|. On oscillatory data Stern et al. bound the error by half the
/// range of the oscillation: the larger of that and the formula governs (branch
/// `oscillation_range` when the half range does), as in the three-mesh estimate. Without an
/// observed order: Roache's fallback (the formal order with Fs = 3 on the larger pair
/// difference), so that the rule gives a U wherever the differences shrink.
pub fn stern_correction(inputs: &RuleInputs) -> RuleEstimate {
    let rule = Rule::SternCorrection;
    let phi1 = inputs.phi[0];
    match start(inputs) {
        Start::Done(u, b) => settled(rule, inputs, u, b),
        Start::NoOrder => formal_order_fallback(rule, inputs),
        Start::Order(p) => {
            let r21 = inputs.r21();
            let c = (r21.powf(p) - 1.0) / (r21.powf(inputs.formal_order) - 1.0);
            let (fs, mut branch) = stern_factor(c);
            let mut u = richardson_delta(inputs.e21(), r21, p).map(|d| fs * d.abs());
            let half = inputs.three_grid.oscillation_half_range;
            if inputs.three_grid.convergence == Convergence::Oscillatory
                && u.is_none_or(|u| half > u)
            {
                u = Some(half);
                branch = Branch::OscillationRange;
            }
            result(
                rule,
                phi1,
                u,
                Some(fs),
                Some(p),
                branch,
                inputs.three_grid.warnings.clone(),
            )
        }
    }
}

/// Roache (1998) two-mesh GCI, from memory: U = 3·|ε21|/(r21^{p_f} − 1) with the formal order
/// and only the two finest meshes (relative: U/|φ1|). A two-mesh figure: it never governs when
/// three meshes exist.
pub fn two_mesh_gci(
    h: [f64; 2],
    phi: [f64; 2],
    formal_order: f64,
) -> Result<RuleEstimate, EstimateError> {
    check_formal_order(formal_order)?;
    if h.iter().chain(phi.iter()).any(|v| !v.is_finite()) {
        return Err(EstimateError::InvalidInput(
            "sizes and values must be finite".into(),
        ));
    }
    if !(h[0] > 0.0 && h[1] > h[0]) {
        return Err(EstimateError::InvalidInput(
            "sizes must be > 0 and increase from the finer to the coarser mesh".into(),
        ));
    }
    let u = two_mesh_u(h, phi, formal_order);
    let mut w = vec![Warning::new(
        CODE_ORDER_ASSUMED,
        format!(
            "two meshes: no order or convergence class can be observed; the two-mesh GCI \
             assumes the formal order {formal_order} with safety factor 3 (Roache 1998); a third \
             mesh would show whether the meshes are in the asymptotic range"
        ),
    )];
    if u.is_none() {
        w.push(Warning::new(
            CODE_NOT_APPLICABLE,
            "two_mesh_gci: not applicable, the mesh difference or refinement ratio is out of the floating-point range",
        ));
    }
    Ok(result(
        Rule::TwoMeshGci,
        phi[0],
        u,
        Some(FS_ASSUMED),
        Some(formal_order),
        Branch::TwoMesh,
        w,
    ))
}

fn two_mesh_u(h: [f64; 2], phi: [f64; 2], formal_order: f64) -> Option<f64> {
    richardson_delta(phi[1] - phi[0], h[1] / h[0], formal_order).map(|d| FS_ASSUMED * d.abs())
}

/// U/|φ1| as every rule states it: `None` where φ1 = 0 or the ratio is not finite.
fn relative_of(u: Option<f64>, phi1: f64) -> Option<f64> {
    u.and_then(|v| {
        let r = v / phi1.abs();
        (phi1 != 0.0 && r.is_finite()).then_some(r)
    })
}

/// U and U/|φ1| of [`two_mesh_gci`] without its checks or warnings, for many points whose
/// sizes and formal order were checked once: `None` wherever the full call states `None`.
pub fn two_mesh_figures(
    h: [f64; 2],
    phi: [f64; 2],
    formal_order: f64,
) -> (Option<f64>, Option<f64>) {
    let u = two_mesh_u(h, phi, formal_order).filter(|u| u.is_finite());
    (u, relative_of(u, phi[0]))
}

/// The two-mesh GCI on the two finest of the three meshes.
pub fn two_mesh_of(inputs: &RuleInputs) -> RuleEstimate {
    let h = [inputs.h[0], inputs.h[1]];
    let phi = [inputs.phi[0], inputs.phi[1]];
    match two_mesh_gci(h, phi, inputs.formal_order) {
        Ok(r) => r,
        // RuleInputs::new already checked the same preconditions.
        Err(_) => not_applicable(Rule::TwoMeshGci, inputs, "the inputs were refused"),
    }
}

/// What a three-mesh rule needs, in plain numbers: for the per-point path of fields, which
/// must not build a [`RuleInputs`] (and its warnings) at every one of millions of points.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Core {
    /// The three-mesh class.
    pub convergence: Convergence,
    /// The observed order, when one was found.
    pub order: Option<f64>,
    /// r21 and r32.
    pub ratios: [f64; 2],
    /// ε21 and ε32 (after round-off is cleared).
    pub differences: [f64; 2],
    /// The formal order p_f.
    pub formal_order: f64,
    /// Half the range of the three values.
    pub half_range: f64,
    /// The Celik GCI's safety factor (`settings.safety_factor`).
    pub celik_fs: f64,
}

/// A rule's U, factor, order and branch from [`Core`] numbers: the same figures as [`apply`]
/// on the same data (a property test holds them together), without the warnings.
pub fn core(rule: Rule, c: &Core) -> (Option<f64>, Option<f64>, Option<f64>, Branch) {
    let [r21, r32] = c.ratios;
    let [e21, e32] = c.differences;
    let pf = c.formal_order;
    if rule == Rule::TwoMeshGci {
        let u = richardson_delta(e21, r21, pf).map(|d| FS_ASSUMED * d.abs());
        return (u, Some(FS_ASSUMED), Some(pf), Branch::TwoMesh);
    }
    match c.convergence {
        Convergence::NoChange => return (Some(0.0), None, None, Branch::NoChange),
        Convergence::Divergent => return (None, None, None, Branch::Divergent),
        _ => {}
    }
    let Some(p) = c.order else {
        if rule == Rule::XingStern {
            return (None, None, None, Branch::NotApplicable);
        }
        let u =
            FS_ASSUMED * (e21.abs() / (r21.powf(pf) - 1.0)).max(e32.abs() / (r32.powf(pf) - 1.0));
        return (
            Some(u),
            Some(FS_ASSUMED),
            Some(pf),
            Branch::FormalOrderFallback,
        );
    };
    let oscillatory = c.convergence == Convergence::Oscillatory;
    match rule {
        Rule::CelikGci => {
            let u = c.celik_fs * e21.abs() / (r21.powf(p) - 1.0);
            if oscillatory && c.half_range > u {
                (Some(c.half_range), None, Some(p), Branch::OscillationRange)
            } else {
                (Some(u), Some(c.celik_fs), Some(p), Branch::Gci)
            }
        }
        Rule::RoacheFs3 => {
            let (fs, order, branch) = roache_choice(p, pf);
            let u = richardson_delta(e21, r21, order).map(|d| fs * d.abs());
            (u, Some(fs), Some(order), branch)
        }
        Rule::XingStern => match xing_stern_factor(p / pf) {
            None => (None, None, None, Branch::NotApplicable),
            Some((fs, branch)) => {
                let u = richardson_delta(e21, r21, p).map(|d| fs * d.abs());
                (u, Some(fs), Some(p), branch)
            }
        },
        Rule::SternCorrection => {
            let cf = (r21.powf(p) - 1.0) / (r21.powf(pf) - 1.0);
            let (fs, branch) = stern_factor(cf);
            let u = richardson_delta(e21, r21, p).map(|d| fs * d.abs());
            if oscillatory && u.is_none_or(|u| c.half_range > u) {
                (
                    Some(c.half_range),
                    Some(fs),
                    Some(p),
                    Branch::OscillationRange,
                )
            } else {
                (u, Some(fs), Some(p), branch)
            }
        }
        // Answered before the class is read.
        Rule::TwoMeshGci => (None, None, None, Branch::NotApplicable),
    }
}

/// One rule on prepared inputs.
pub fn apply(rule: Rule, inputs: &RuleInputs) -> RuleEstimate {
    match rule {
        Rule::CelikGci => celik_gci(inputs),
        Rule::RoacheFs3 => roache_fs3(inputs),
        Rule::XingStern => xing_stern(inputs),
        Rule::SternCorrection => stern_correction(inputs),
        Rule::TwoMeshGci => two_mesh_of(inputs),
    }
}

/// Every rule, in the order of [`Rule::ALL`].
pub fn all(inputs: &RuleInputs) -> [RuleEstimate; 5] {
    Rule::ALL.map(|r| apply(r, inputs))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;

    proptest! {
        /// The per-point core gives exactly what the rules give, for every rule, on random
        /// three-mesh data of every class (a consistency property, no external source).
        #[test]
        fn core_equals_apply(
            h1 in 0.01f64..1.0,
            r21 in 1.05f64..3.0,
            r32 in 1.05f64..3.0,
            d21 in -1.0f64..1.0,
            d32 in -1.0f64..1.0,
            pf in prop_oneof![Just(1.0), Just(2.0), Just(1.5)],
        ) {
            let h = [h1, h1 * r21, h1 * r21 * r32];
            let phi = [1.0, 1.0 + d21, 1.0 + d21 + d32];
            let inputs = RuleInputs::new(h, phi, pf).unwrap();
            let tg = &inputs.three_grid;
            let c = Core {
                convergence: tg.convergence,
                order: tg.observed_order,
                ratios: tg.ratios,
                differences: [phi[1] - phi[0], phi[2] - phi[1]],
                formal_order: pf,
                half_range: tg.oscillation_half_range,
                celik_fs: tg.safety_factor,
            };
            for rule in Rule::ALL {
                let r = apply(rule, &inputs);
                let (u, fs, order, branch) = core(rule, &c);
                prop_assert_eq!(branch, r.branch, "{:?}", rule);
                prop_assert_eq!(fs, r.safety_factor, "{:?}", rule);
                prop_assert_eq!(order, r.order, "{:?}", rule);
                match (u, r.uncertainty) {
                    (Some(a), Some(b)) => prop_assert!((a - b).abs() <= 1e-13 * b.abs(), "{:?}: {} vs {}", rule, a, b),
                    (a, b) => prop_assert_eq!(a, b, "{:?}", rule),
                }
            }
        }
    }

    /// Manufactured data φ = φ0 + α h^p (analytic): the exact fine-mesh error is α h1^p, and
    /// δ_RE = ε21/(r21^p − 1) = α h1^p exactly when p is the data's order.
    fn power_law(
        h1: f64,
        r21: f64,
        r32: f64,
        phi0: f64,
        alpha: f64,
        p: f64,
    ) -> ([f64; 3], [f64; 3]) {
        let h = [h1, h1 * r21, h1 * r21 * r32];
        (h, h.map(|x| phi0 + alpha * x.powf(p)))
    }

    fn has(r: &RuleEstimate, code: &str) -> bool {
        r.warnings.iter().any(|w| w.code == code)
    }

    #[test]
    fn exact_power_law_at_the_formal_order() {
        // Manufactured (analytic): p = p_f = 2, so P = 1 and C = 1. |δ_RE| = |α| h1^2.
        // Expected factors from the formulas: Celik 1.25 (Celik et al. 2008); Roache near-formal
        // 1.25 with p_f (Roache 1998 / Oberkampf & Roy 2010 §8.6, from memory); Xing & Stern
        // FS1·1 + FS0·0 = 1.6 (Xing & Stern 2010, from memory); Stern et al. 9.6·0 + 1.1 = 1.1
        // (Stern et al. 2001, from memory); two-mesh 3 with p_f (Roache 1998, from memory).
        let (alpha, h1) = (0.3, 0.1);
        let (h, phi) = power_law(h1, 1.5, 1.7, 1.0, alpha, 2.0);
        let inp = RuleInputs::new(h, phi, 2.0).unwrap();
        let delta = alpha * h1 * h1;
        let all = all(&inp);
        let expect = [
            (1.25, Branch::Gci),
            (1.25, Branch::NearFormal),
            (1.6, Branch::OrderAtOrBelowFormal),
            (1.1, Branch::SmallCorrection),
            (3.0, Branch::TwoMesh),
        ];
        for (r, (fs, branch)) in all.iter().zip(expect) {
            assert_eq!(r.branch, branch, "{:?}", r.rule);
            assert_relative_eq!(r.uncertainty.unwrap(), fs * delta, max_relative = 1e-9);
            assert_relative_eq!(r.safety_factor.unwrap(), fs, max_relative = 1e-9);
            assert_relative_eq!(r.order.unwrap(), 2.0, max_relative = 1e-9);
            assert_relative_eq!(
                r.relative.unwrap(),
                fs * delta / phi[0],
                max_relative = 1e-9
            );
        }
    }

    #[test]
    fn celik_is_the_three_grid_estimate() {
        // Identity with the crate's estimator, on Celik et al. (2008) Table 1 first column
        // (φ = 6.063, 5.972, 5.863; N = 18000, 8000, 4500 in 2-D), on oscillatory, no-change,
        // divergent and no-order data.
        let celik_h = [
            1.0,
            (18000.0f64 / 8000.0).sqrt(),
            (18000.0f64 / 4500.0).sqrt(),
        ];
        let cases = [
            (celik_h, [6.063, 5.972, 5.863]),
            ([1.0, 1.5, 2.25], [1.0, 0.99, 1.02]),
            ([1.0, 1.5, 2.25], [2.5, 2.5, 2.5]),
            ([1.0, 1.5, 2.25], [1.0, 1.02, 1.03]),
            ([1.0, 1.5, 2.25], [1.0, 1.0, 1.1]),
        ];
        for (h, phi) in cases {
            let tg = three_grid::estimate(h, phi, &ThreeGridSettings::default()).unwrap();
            let r = celik_gci(&RuleInputs::new(h, phi, 2.0).unwrap());
            assert_eq!(r.uncertainty, tg.uncertainty);
            assert_eq!(r.warnings, tg.warnings);
        }
        // Celik et al. (2008) Table 1: GCI_fine21 = 2.2 % (from memory; 2.175 % by the equations).
        let r = celik_gci(&RuleInputs::new(celik_h, [6.063, 5.972, 5.863], 2.0).unwrap());
        assert_relative_eq!(r.relative.unwrap(), 0.02175, epsilon = 5e-5);
    }

    #[test]
    fn roache_branches() {
        // Roache (1998) / Oberkampf & Roy (2010 §8.6), from memory. Manufactured power laws
        // with r21 = r32 = 2, p_f = 2, so δ_RE with order q is ε21/(2^q − 1).
        let pf = 2.0;
        for (p, fs, order, branch) in [
            (2.1, 1.25, 2.0, Branch::NearFormal),   // |p − p_f|/p_f = 0.05
            (1.9, 1.25, 2.0, Branch::NearFormal),   // 0.05
            (2.5, 3.0, 2.0, Branch::FarFromFormal), // 0.25, min(p, p_f) = p_f
            (1.5, 3.0, 1.5, Branch::FarFromFormal), // 0.25, p itself
            (0.3, 3.0, 0.5, Branch::FarFromFormal), // floor 0.5
        ] {
            let (h, phi) = power_law(0.1, 2.0, 2.0, 1.0, -0.7, p);
            let r = roache_fs3(&RuleInputs::new(h, phi, pf).unwrap());
            let e21 = phi[1] - phi[0];
            assert_eq!(r.branch, branch, "p = {p}");
            assert_eq!(r.safety_factor, Some(fs));
            assert_relative_eq!(r.order.unwrap(), order, max_relative = 1e-9);
            let expect = fs * e21.abs() / (2f64.powf(order) - 1.0);
            assert_relative_eq!(r.uncertainty.unwrap(), expect, max_relative = 1e-9);
            assert_eq!(
                has(&r, CODE_FAR_FROM_FORMAL),
                branch == Branch::FarFromFormal
            );
        }
        // The band edge itself (the formula's ≤).
        assert_eq!(roache_choice(2.2, 2.0).2, Branch::FarFromFormal); // 0.1 + round-off
        assert_eq!(roache_choice(2.19999, 2.0).2, Branch::NearFormal);
        assert_eq!(roache_choice(2.20001, 2.0).2, Branch::FarFromFormal);
    }

    #[test]
    fn xing_stern_branches() {
        // Xing & Stern (2010), from memory: FS0 = 2.45, FS1 = 1.6, FS2 = 14.8.
        let below = xing_stern_factor(1.0 - 1e-9).unwrap();
        let above = xing_stern_factor(1.0 + 1e-9).unwrap();
        assert_eq!(below.1, Branch::OrderAtOrBelowFormal);
        assert_eq!(above.1, Branch::OrderAboveFormal);
        // "FS is a smooth linear function of P and has no jumps": both sides near 1.6.
        assert_relative_eq!(below.0, 1.6, max_relative = 1e-8);
        assert_relative_eq!(above.0, 1.6, max_relative = 1e-7);
        assert_eq!(
            xing_stern_factor(1.0),
            Some((1.6, Branch::OrderAtOrBelowFormal))
        );
        assert!(xing_stern_factor(2.0).is_none() && xing_stern_factor(0.0).is_none());
        assert!(xing_stern_factor(f64::NAN).is_none());
        // Manufactured power laws, p_f = 2: δ_RE = α h1^p exactly.
        let (alpha, h1) = (0.5, 0.2);
        for (p, fs, branch) in [
            (1.9, 1.6 * 0.95 + 2.45 * 0.05, Branch::OrderAtOrBelowFormal),
            (1.0, 1.6 * 0.5 + 2.45 * 0.5, Branch::OrderAtOrBelowFormal),
            (2.1, 1.6 * 1.05 + 14.8 * 0.05, Branch::OrderAboveFormal),
            (3.9, 1.6 * 1.95 + 14.8 * 0.95, Branch::OrderAboveFormal),
        ] {
            let (h, phi) = power_law(h1, 1.4, 1.6, 2.0, alpha, p);
            let r = xing_stern(&RuleInputs::new(h, phi, 2.0).unwrap());
            assert_eq!(r.branch, branch, "p = {p}");
            assert_relative_eq!(r.safety_factor.unwrap(), fs, max_relative = 1e-8);
            assert_relative_eq!(
                r.uncertainty.unwrap(),
                fs * alpha * h1.powf(p),
                max_relative = 1e-8
            );
        }
        // P ≥ 2: not applicable, with its code.
        let (h, phi) = power_law(h1, 1.4, 1.6, 2.0, alpha, 4.2);
        let r = xing_stern(&RuleInputs::new(h, phi, 2.0).unwrap());
        assert_eq!(r.branch, Branch::NotApplicable);
        assert!(r.uncertainty.is_none() && has(&r, CODE_NOT_APPLICABLE));
    }

    #[test]
    fn stern_branches() {
        // Stern et al. (2001), from memory. The band edge |1 − C| = 0.125: both factors give
        // 9.6·0.015625 + 1.1 = 1.25 = 2·0.125 + 1 (no jump).
        for c in [0.875, 1.125] {
            let inside = stern_factor(if c < 1.0 { c + 1e-9 } else { c - 1e-9 });
            let outside = stern_factor(if c < 1.0 { c - 1e-9 } else { c + 1e-9 });
            assert_eq!(inside.1, Branch::SmallCorrection);
            assert_eq!(outside.1, Branch::LargeCorrection);
            assert_relative_eq!(inside.0, 1.25, max_relative = 1e-7);
            assert_relative_eq!(outside.0, 1.25, max_relative = 1e-7);
        }
        assert_eq!(stern_factor(1.0), (1.1, Branch::SmallCorrection));
        // Manufactured power laws with r21 = 2, p_f = 2: p = log2(1 + 3C) gives the chosen C.
        let (alpha, h1) = (-0.4, 0.25);
        for (c, fs, branch) in [
            (0.88, 9.6 * 0.12 * 0.12 + 1.1, Branch::SmallCorrection),
            (0.87, 2.0 * 0.13 + 1.0, Branch::LargeCorrection),
            (1.12, 9.6 * 0.12 * 0.12 + 1.1, Branch::SmallCorrection),
            (1.13, 2.0 * 0.13 + 1.0, Branch::LargeCorrection),
            (2.0, 2.0 * 1.0 + 1.0, Branch::LargeCorrection),
        ] {
            let p = (1.0f64 + 3.0 * c).log2();
            let (h, phi) = power_law(h1, 2.0, 1.5, 1.0, alpha, p);
            let r = stern_correction(&RuleInputs::new(h, phi, 2.0).unwrap());
            assert_eq!(r.branch, branch, "C = {c}");
            assert_relative_eq!(r.safety_factor.unwrap(), fs, max_relative = 1e-8);
            assert_relative_eq!(
                r.uncertainty.unwrap(),
                fs * alpha.abs() * h1.powf(p),
                max_relative = 1e-8
            );
        }
    }

    #[test]
    fn two_mesh_textbook_example() {
        // Richardson example computed by hand: formal order 2, r = 2, φ1 = 1.0, φ2 = 1.04:
        // ε21 = 0.04, U = 3·0.04/(2² − 1) = 0.04, relative 0.04/1.0 (Roache 1998, from memory).
        let r = two_mesh_gci([1.0, 2.0], [1.0, 1.04], 2.0).unwrap();
        assert_relative_eq!(r.uncertainty.unwrap(), 0.04, max_relative = 1e-12);
        assert_relative_eq!(r.relative.unwrap(), 0.04, max_relative = 1e-12);
        assert_eq!((r.rule, r.branch), (Rule::TwoMeshGci, Branch::TwoMesh));
        assert_eq!((r.safety_factor, r.order), (Some(3.0), Some(2.0)));
        // φ1 = 0: the absolute U stays, the relative one is dropped.
        let r = two_mesh_gci([1.0, 2.0], [0.0, 0.04], 2.0).unwrap();
        assert!(r.relative.is_none() && r.uncertainty.is_some());
        assert!(two_mesh_gci([2.0, 1.0], [1.0, 1.04], 2.0).is_err());
        assert!(two_mesh_gci([1.0, 2.0], [f64::NAN, 1.04], 2.0).is_err());
        assert!(two_mesh_gci([1.0, 2.0], [1.0, 1.04], 0.0).is_err());
    }

    #[test]
    fn degenerate_inputs() {
        // Refusals, not panics.
        assert!(RuleInputs::new([1.0, 2.0, 4.0], [1.0, f64::INFINITY, 1.0], 2.0).is_err());
        assert!(RuleInputs::new([1.0, 1.0, 4.0], [1.0, 1.1, 1.2], 2.0).is_err());
        assert!(RuleInputs::new([1.0, 2.0, 4.0], [1.0, 1.1, 1.2], f64::NAN).is_err());
        assert!(RuleInputs::new([1.0, 2.0, 4.0], [1.0, 1.1, 1.2], -1.0).is_err());
        assert!(RuleInputs::from_ratios(0.5, 2.0, [1.0, 1.1, 1.2], 2.0).is_err());
        // No change: U = 0 for the three-mesh rules.
        let inp = RuleInputs::new([1.0, 2.0, 4.0], [3.0, 3.0, 3.0], 2.0).unwrap();
        for r in &all(&inp)[..4] {
            assert_eq!((r.uncertainty, r.branch), (Some(0.0), Branch::NoChange));
        }
        // Divergent (R = 2, Stern et al. 2001 classes): no U from any three-mesh rule.
        let inp = RuleInputs::new([1.0, 1.5, 2.25], [1.0, 1.02, 1.03], 2.0).unwrap();
        for r in &all(&inp)[..4] {
            assert_eq!((r.uncertainty, r.branch), (None, Branch::Divergent));
        }
        // No observed order (φ1 = φ2): Roache reverts to p_f with Fs = 3 like the crate's
        // fallback, 3·0.1/(1.5² − 1) = 0.24 (formula), and so does the Stern et al. rule
        // here (a project decision, docs/method.md §12); Xing & Stern give none.
        let inp = RuleInputs::new([1.0, 1.5, 2.25], [1.0, 1.0, 1.1], 2.0).unwrap();
        let [c, ro, xs, st, _] = all(&inp);
        assert_relative_eq!(ro.uncertainty.unwrap(), 0.24, max_relative = 1e-12);
        assert_eq!(ro.uncertainty, c.uncertainty);
        assert_eq!(st.uncertainty, c.uncertainty);
        assert_eq!(ro.branch, Branch::FormalOrderFallback);
        assert_eq!(st.branch, Branch::FormalOrderFallback);
        assert!(xs.uncertainty.is_none() && has(&xs, CODE_NOT_APPLICABLE));
        // Shrinking differences no power law with p > 0 fits (r21 = 1.3, r32 = 2,
        // ε32/ε21 = 2 < ln 2/ln 1.3 = 2.64): monotonic with no order, every rule but Xing &
        // Stern on the fallback 3·max(0.01/(1.3² − 1), 0.02/(2² − 1)) (formula).
        let inp = RuleInputs::new([1.0, 1.3, 2.6], [1.0, 1.01, 1.03], 2.0).unwrap();
        assert_eq!(inp.three_grid.convergence, Convergence::Monotonic);
        assert_eq!(inp.three_grid.observed_order, None);
        let fb = 3.0 * (0.01_f64 / (1.3 * 1.3 - 1.0)).max(0.02 / 3.0);
        let [c, ro, xs, st, _] = all(&inp);
        for r in [c, ro, st] {
            assert_relative_eq!(r.uncertainty.unwrap(), fb, max_relative = 1e-9);
        }
        assert!(xs.uncertainty.is_none());
        // Overflowing differences: refused by the three-mesh estimate.
        assert!(RuleInputs::new([1.0, 2.0, 4.0], [1e308, -1e308, 1e308], 2.0).is_err());
        // Labels are distinct (they are output keys).
        let mut labels: Vec<_> = Rule::ALL.iter().map(|r| r.label()).collect();
        labels.dedup();
        assert_eq!(labels.len(), 5);
    }

    proptest! {
        // Any finite input gives a refusal or results whose U is finite and ≥ 0: never a panic,
        // never NaN or infinity.
        #[test]
        fn never_panics_nor_returns_non_finite(
            h1 in prop_oneof![1e-300f64..1e-290, 1e-6f64..1e3, 1e290f64..1e300],
            r21 in 1.0f64..10.0,
            r32 in 1.0f64..10.0,
            a in -1e300f64..1e300, b in -1e300f64..1e300, c in -1e300f64..1e300,
            small in prop::array::uniform3(-2.0f64..2.0),
            pick in 0u8..2,
            pf in prop_oneof![1e-3f64..0.5, 0.5f64..4.0, 4.0f64..50.0],
        ) {
            let phi = if pick == 0 { [a, b, c] } else { small };
            let h = [h1, h1 * r21, h1 * r21 * r32];
            if let Ok(inp) = RuleInputs::new(h, phi, pf) {
                for r in all(&inp) {
                    if let Some(u) = r.uncertainty {
                        prop_assert!(u.is_finite() && u >= 0.0, "{:?}", r);
                    }
                    if let Some(x) = r.relative { prop_assert!(x.is_finite() && x >= 0.0); }
                    if let Some(x) = r.safety_factor { prop_assert!(x.is_finite() && x > 0.0); }
                }
            }
            if let Ok(r) = two_mesh_gci([h1, h1 * r21], [phi[0], phi[1]], pf) {
                prop_assert!(r.uncertainty.is_none_or(|u| u.is_finite() && u >= 0.0));
            }
        }
    }
}
