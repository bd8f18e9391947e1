//! The estimate at one point of a field, with every mesh the field has: the three-mesh estimate
//! ([`FastThreeGrid`]) with three meshes, least squares (Eça & Hoekstra 2014) with four or more.
//!
//! A [`PointEstimator`] is prepared once per field (the sizes are the same at every point) and
//! then called for millions of points from many threads.
//!
//! With four or more meshes the estimate is [`FastLeastSquares`]: the general estimator
//! ([`least_squares::estimate`]) specialised to fixed sizes, the same class, free order,
//! extrapolated value and finest-mesh U (a property test holds them together), about two
//! orders of magnitude faster; the rare points where its search is in doubt go to the general
//! estimator.
//!
//! Beside the point's own observed order, the estimate can be stated with one GIVEN order at
//! every point ([`PointEstimator::at_order`]), the global order of a field computed by
//! [`crate::estimate::global_order`] (the average observed order, or the order of the norms of
//! the difference fields).
//!
//! # The noise floor (a project rule, docs/method.md §15)
//!
//! With [`PointSettings::noise_floor`] = f > 0, differences between meshes no larger than f
//! count as round-off (iterative or arithmetic), and:
//!
//! * all values within f of each other (max − min ≤ f): class `no_change`, U = f (the
//!   round-off level, not zero), no order, the finest value as the extrapolated one, basis
//!   [`PointBasis::NoiseFloor`];
//! * some difference between successive meshes within f, the others not: an observed order
//!   from a ratio involving round-off cannot be trusted. A divergent class stays divergent
//!   (no U); otherwise the class is kept, the order and extrapolated value are dropped and
//!   U = max(f, half the range of all values, the estimate's own U), basis
//!   [`PointBasis::NoiseFloor`]; the flag [`PointFlags::partly_within_noise_floor`] says so.

use crate::estimate::least_squares::{self, LsSettings};
use crate::estimate::ls_fast::{FastLeastSquares, FixedOrderLs, LsFlags};
use crate::estimate::three_grid::{Governing, ThreeGridSettings};
use crate::estimate::three_grid_fast::{FastThreeGrid, PointEstimate};
use crate::estimate::{Convergence, EstimateError};

/// Settings of the per-point estimate.
#[derive(Debug, Clone, PartialEq)]
pub struct PointSettings {
    /// The three-mesh settings (rule, safety factor, order cap, formal order).
    pub three: ThreeGridSettings,
    /// The least-squares settings (four or more meshes).
    pub least_squares: LsSettings,
    /// Absolute noise floor: differences between meshes no larger than this count as
    /// round-off (0 = off).
    pub noise_floor: f64,
}

impl Default for PointSettings {
    fn default() -> Self {
        PointSettings {
            three: ThreeGridSettings::default(),
            least_squares: LsSettings::default(),
            noise_floor: 0.0,
        }
    }
}

/// What stated the uncertainty at a point.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PointBasis {
    /// The three-mesh estimate, and which bound in it.
    ThreeMesh(Governing),
    /// The least-squares estimate.
    LeastSquares,
    /// Every difference lay within the noise floor.
    NoiseFloor,
}

/// The estimate at one point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PointResult {
    /// Convergence class.
    pub convergence: Convergence,
    /// Observed order (the free order of least squares), when it exists.
    pub order: Option<f64>,
    /// Extrapolated value, when it exists.
    pub extrapolated: Option<f64>,
    /// Absolute uncertainty of the finest mesh's value, when one can be stated.
    pub uncertainty: Option<f64>,
    /// What stated it (`None` when no uncertainty).
    pub basis: Option<PointBasis>,
}

/// Warning code: every value of the point lies within the noise floor of the others.
pub const WARN_WITHIN_NOISE_FLOOR: &str = "point_within_noise_floor";
/// Warning code: some difference between successive meshes lies within the noise floor, the
/// others do not; U was stated from the floor and the range of the values.
pub const WARN_PARTLY_WITHIN_NOISE_FLOOR: &str = "point_partly_within_noise_floor";

/// What the estimate at a point says beyond its figures: the conditions behind the warning
/// codes of the least-squares estimate and of the noise floor.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct PointFlags {
    /// Least squares: the free-order minimum lies on an end of the searched range
    /// ([`least_squares::WARN_ORDER_AT_BOUND`]).
    pub order_at_bound: bool,
    /// Least squares: σ of the selected fit is not below the data range
    /// ([`least_squares::WARN_SCATTER_EXCEEDS_RANGE`]).
    pub scatter_exceeds_range: bool,
    /// Least squares: the differences change sign but do not alternate
    /// ([`least_squares::WARN_NONMONOTONIC`]).
    pub nonmonotonic: bool,
    /// Least squares: the free order is below 0.5 ([`least_squares::WARN_LOW_ORDER`]).
    pub low_order: bool,
    /// Least squares: an order floor set U ([`least_squares::WARN_ORDER_TWO_FLOOR`] or
    /// [`least_squares::WARN_FORMAL_ORDER_FLOOR`]).
    pub floor_governs: bool,
    /// The floor that set U is the formal-order floor (formal order below 2).
    pub formal_order_floor: bool,
    /// Every value lies within the noise floor ([`WARN_WITHIN_NOISE_FLOOR`]).
    pub within_noise_floor: bool,
    /// Some difference lies within the noise floor ([`WARN_PARTLY_WITHIN_NOISE_FLOOR`]).
    pub partly_within_noise_floor: bool,
    /// The fast least-squares search was in doubt and the general estimator decided (not a
    /// warning: counted by the benchmark).
    pub general_path: bool,
}

impl PointFlags {
    /// The stable warning codes these flags stand for.
    pub fn codes(&self) -> Vec<&'static str> {
        let floor_code = match (self.floor_governs, self.formal_order_floor) {
            (false, _) => None,
            (true, false) => Some(least_squares::WARN_ORDER_TWO_FLOOR),
            (true, true) => Some(least_squares::WARN_FORMAL_ORDER_FLOOR),
        };
        [
            (self.order_at_bound, least_squares::WARN_ORDER_AT_BOUND),
            (
                self.scatter_exceeds_range,
                least_squares::WARN_SCATTER_EXCEEDS_RANGE,
            ),
            (self.nonmonotonic, least_squares::WARN_NONMONOTONIC),
            (self.low_order, least_squares::WARN_LOW_ORDER),
            (self.within_noise_floor, WARN_WITHIN_NOISE_FLOOR),
            (
                self.partly_within_noise_floor,
                WARN_PARTLY_WITHIN_NOISE_FLOOR,
            ),
        ]
        .into_iter()
        .filter_map(|(on, code)| on.then_some(code))
        .chain(floor_code)
        .collect()
    }

    fn from_ls(f: LsFlags) -> Self {
        PointFlags {
            order_at_bound: f.order_at_bound,
            scatter_exceeds_range: f.scatter_exceeds_range,
            nonmonotonic: f.nonmonotonic,
            low_order: f.low_order,
            floor_governs: f.floor_governs,
            ..PointFlags::default()
        }
    }
}

/// The per-point estimate prepared for fixed mesh sizes.
#[derive(Debug, Clone)]
pub struct PointEstimator {
    h: Vec<f64>,
    names: Vec<String>,
    settings: PointSettings,
    three: Option<FastThreeGrid>,
    /// The fast least-squares path (four or more meshes, sizes it can prepare).
    fast: Option<FastLeastSquares>,
}

/// The estimate with one given order at every point, prepared by [`PointEstimator::at_order`].
#[derive(Debug, Clone)]
pub struct AtOrder<'a> {
    base: &'a PointEstimator,
    p: f64,
    /// The fixed-order fit (four or more meshes).
    fit: Option<FixedOrderLs>,
}

fn none_result(convergence: Convergence) -> PointResult {
    PointResult {
        convergence,
        order: None,
        extrapolated: None,
        uncertainty: None,
        basis: None,
    }
}

fn from_three(e: PointEstimate) -> PointResult {
    PointResult {
        convergence: e.convergence,
        order: e.observed_order,
        extrapolated: e.extrapolated,
        uncertainty: e.uncertainty,
        basis: e.governing.map(PointBasis::ThreeMesh),
    }
}

impl PointEstimator {
    /// Prepares the estimate for sizes `h` (finest first, at least three, strictly
    /// increasing).
    pub fn new(h: &[f64], settings: &PointSettings) -> Result<Self, EstimateError> {
        if h.len() < 3 {
            return Err(EstimateError::InvalidInput(
                "a per-point estimate needs three meshes or more".into(),
            ));
        }
        if !(settings.noise_floor.is_finite() && settings.noise_floor >= 0.0) {
            return Err(EstimateError::InvalidInput(format!(
                "the noise floor must be finite and ≥ 0 (got {})",
                settings.noise_floor
            )));
        }
        let three = if h.len() == 3 {
            Some(FastThreeGrid::new([h[0], h[1], h[2]], &settings.three)?)
        } else {
            None
        };
        let fast = if h.len() >= 4 {
            FastLeastSquares::new(h, &settings.least_squares)?
        } else {
            None
        };
        Ok(PointEstimator {
            h: h.to_vec(),
            names: (1..=h.len()).map(|i| format!("m{i}")).collect(),
            settings: settings.clone(),
            three,
            fast,
        })
    }

    /// Number of meshes.
    pub fn meshes(&self) -> usize {
        self.h.len()
    }

    /// The estimate at one point; `phi` finest first, one value per mesh, finite.
    pub fn estimate(&self, phi: &[f64]) -> PointResult {
        self.estimate_flagged(phi).0
    }

    /// The estimate at one point with the conditions behind its warnings.
    pub fn estimate_flagged(&self, phi: &[f64]) -> (PointResult, PointFlags) {
        if phi.len() != self.h.len() || phi.iter().any(|v| !v.is_finite()) {
            return (none_result(Convergence::Divergent), PointFlags::default());
        }
        if let Some(r) = self.within_floor(phi) {
            return r;
        }
        let own = self.own_estimate(phi);
        self.partly_within_floor(phi, own)
    }

    /// The estimate without the noise floor.
    fn own_estimate(&self, phi: &[f64]) -> (PointResult, PointFlags) {
        let (r, mut flags) = self.own_unmarked(phi);
        flags.formal_order_floor =
            flags.floor_governs && self.settings.least_squares.formal_order < 2.0;
        (r, flags)
    }

    fn own_unmarked(&self, phi: &[f64]) -> (PointResult, PointFlags) {
        if let Some(t) = &self.three {
            return (
                from_three(t.estimate([phi[0], phi[1], phi[2]])),
                PointFlags::default(),
            );
        }
        if let Some(ls) = self.fast.as_ref().and_then(|f| f.estimate(phi)) {
            return (
                PointResult {
                    convergence: ls.convergence,
                    order: ls.order,
                    extrapolated: Some(ls.extrapolated),
                    uncertainty: Some(ls.uncertainty),
                    basis: Some(PointBasis::LeastSquares),
                },
                PointFlags::from_ls(ls.flags),
            );
        }
        let (r, mut flags) = self.general(phi);
        flags.general_path = true;
        (r, flags)
    }

    /// The general least-squares estimator at one point.
    fn general(&self, phi: &[f64]) -> (PointResult, PointFlags) {
        match least_squares::estimate(&self.names, &self.h, phi, &self.settings.least_squares) {
            Ok(ls) => {
                let has = |code: &str| ls.warnings.iter().any(|w| w.code == code);
                let flags = PointFlags {
                    order_at_bound: ls.order_at_bound,
                    scatter_exceeds_range: has(least_squares::WARN_SCATTER_EXCEEDS_RANGE),
                    nonmonotonic: has(least_squares::WARN_NONMONOTONIC),
                    low_order: has(least_squares::WARN_LOW_ORDER),
                    floor_governs: ls.floor_governs(),
                    ..PointFlags::default()
                };
                (
                    PointResult {
                        convergence: ls.convergence,
                        order: ls.order,
                        extrapolated: ls.selected_fit().map(|f| f.phi0),
                        uncertainty: ls.per_mesh.first().map(|m| m.uncertainty),
                        basis: Some(PointBasis::LeastSquares),
                    },
                    flags,
                )
            }
            Err(_) => (none_result(Convergence::Divergent), PointFlags::default()),
        }
    }

    /// The point when every value lies within the noise floor.
    fn within_floor(&self, phi: &[f64]) -> Option<(PointResult, PointFlags)> {
        let f = self.settings.noise_floor;
        if f <= 0.0 {
            return None;
        }
        let (lo, hi) = min_max(phi);
        (hi - lo <= f).then(|| {
            (
                PointResult {
                    convergence: Convergence::NoChange,
                    order: None,
                    extrapolated: Some(phi[0]),
                    uncertainty: Some(f),
                    basis: Some(PointBasis::NoiseFloor),
                },
                PointFlags {
                    within_noise_floor: true,
                    ..PointFlags::default()
                },
            )
        })
    }

    /// The point when some difference lies within the noise floor (module documentation).
    fn partly_within_floor(
        &self,
        phi: &[f64],
        own: (PointResult, PointFlags),
    ) -> (PointResult, PointFlags) {
        let f = self.settings.noise_floor;
        if f <= 0.0 || !phi.windows(2).any(|w| (w[1] - w[0]).abs() <= f) {
            return own;
        }
        let (r, mut flags) = own;
        flags.partly_within_noise_floor = true;
        if matches!(
            r.convergence,
            Convergence::Divergent | Convergence::NoChange
        ) {
            return (r, flags);
        }
        let (lo, hi) = min_max(phi);
        let u = f.max(0.5 * (hi - lo)).max(r.uncertainty.unwrap_or(0.0));
        (
            PointResult {
                convergence: r.convergence,
                order: None,
                extrapolated: None,
                uncertainty: Some(u),
                basis: Some(PointBasis::NoiseFloor),
            },
            flags,
        )
    }

    /// Prepares the estimate with the order `p` at every point (a global order, see
    /// [`crate::estimate::global_order`]); `p` must be finite and > 0.
    pub fn at_order(&self, p: f64) -> Result<AtOrder<'_>, EstimateError> {
        if !(p.is_finite() && p > 0.0) {
            return Err(EstimateError::InvalidInput(format!(
                "the global order must be finite and > 0 (got {p})"
            )));
        }
        let fit = if self.h.len() >= 4 {
            Some(FixedOrderLs::new(&self.h, p, &self.settings.least_squares)?)
        } else {
            None
        };
        Ok(AtOrder { base: self, p, fit })
    }

    /// The estimate at one point with the given order `p` (see [`AtOrder::estimate`]). For
    /// many points prepare once with [`PointEstimator::at_order`]; here an invalid `p` gives
    /// the point's class and no figures.
    pub fn estimate_at_order(&self, phi: &[f64], p: f64) -> PointResult {
        match self.at_order(p) {
            Ok(a) => a.estimate(phi),
            Err(_) => {
                let own = self.estimate(phi);
                none_result(own.convergence)
            }
        }
    }
}

impl AtOrder<'_> {
    /// The order.
    pub fn order(&self) -> f64 {
        self.p
    }

    /// The estimate at one point with the prepared order.
    pub fn estimate(&self, phi: &[f64]) -> PointResult {
        self.estimate_flagged(phi).0
    }

    /// The estimate at one point with the prepared order, and its flags.
    ///
    /// The class is the point's own ([`PointEstimator::estimate`]); the noise floor applies
    /// as there. Three meshes: [`FastThreeGrid::estimate_at_order`] (Richardson with order p,
    /// U by the settings' rule). Four or more: the fit `φ0 + α h^p` ([`FixedOrderLs`]).
    /// Points that do not change or diverge keep their own result.
    pub fn estimate_flagged(&self, phi: &[f64]) -> (PointResult, PointFlags) {
        let base = self.base;
        if phi.len() != base.h.len() || phi.iter().any(|v| !v.is_finite()) {
            return (none_result(Convergence::Divergent), PointFlags::default());
        }
        if let Some(r) = base.within_floor(phi) {
            return r;
        }
        let (own, own_flags) = base.own_estimate(phi);
        let stated = if !matches!(
            own.convergence,
            Convergence::Monotonic | Convergence::Oscillatory
        ) {
            (own, own_flags)
        } else if let Some(t) = &base.three {
            (
                from_three(t.estimate_at_order([phi[0], phi[1], phi[2]], self.p)),
                PointFlags::default(),
            )
        } else {
            match self.fit.as_ref().and_then(|f| f.estimate(phi)) {
                Some(e) => (
                    PointResult {
                        convergence: own.convergence,
                        order: Some(self.p),
                        extrapolated: Some(e.extrapolated),
                        uncertainty: Some(e.uncertainty),
                        basis: Some(PointBasis::LeastSquares),
                    },
                    PointFlags {
                        scatter_exceeds_range: e.scatter_exceeds_range,
                        floor_governs: e.floor_governs,
                        formal_order_floor: e.floor_governs
                            && base.settings.least_squares.formal_order < 2.0,
                        nonmonotonic: own_flags.nonmonotonic,
                        ..PointFlags::default()
                    },
                ),
                None => (none_result(own.convergence), own_flags),
            }
        };
        base.partly_within_floor(phi, stated)
    }
}

fn min_max(phi: &[f64]) -> (f64, f64) {
    phi.iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &v| {
            (lo.min(v), hi.max(v))
        })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Manufactured φ = 1 + 0.5 h² on four meshes: least squares recovers the order and φ0
    /// (analytic data).
    #[test]
    fn four_meshes_recover_manufactured_order() {
        let h = [1.0, 1.5, 2.25, 3.375];
        let phi: Vec<f64> = h.iter().map(|x| 1.0 + 0.5 * x * x).collect();
        let est = PointEstimator::new(&h, &PointSettings::default()).unwrap();
        let r = est.estimate(&phi);
        assert_eq!(r.convergence, Convergence::Monotonic);
        assert!((r.order.unwrap() - 2.0).abs() < 1e-6);
        assert!((r.extrapolated.unwrap() - 1.0).abs() < 1e-8);
    }

    /// Noise floor, all values within it (a project rule, docs/method.md §15; the values are
    /// round-off-sized changes around 1, analytic): class no_change, U = the floor, not zero.
    #[test]
    fn all_values_within_the_noise_floor() {
        let h = [1.0, 1.5, 2.25, 3.375];
        let settings = PointSettings {
            noise_floor: 1e-6,
            ..PointSettings::default()
        };
        let est = PointEstimator::new(&h, &settings).unwrap();
        let (r, f) = est.estimate_flagged(&[1.0, 1.0 + 3e-7, 1.0 - 2e-7, 1.0 + 6e-7]);
        assert_eq!(r.convergence, Convergence::NoChange);
        assert_eq!(r.uncertainty, Some(1e-6));
        assert_eq!(r.basis, Some(PointBasis::NoiseFloor));
        assert_eq!(r.order, None);
        assert!(f.within_noise_floor);
        assert_eq!(f.codes(), vec![WARN_WITHIN_NOISE_FLOOR]);
        // the same values without the floor: an estimate with some order, not the floor
        let plain = PointEstimator::new(&h, &PointSettings::default()).unwrap();
        assert_ne!(
            plain
                .estimate(&[1.0, 1.0 + 3e-7, 1.0 - 2e-7, 1.0 + 6e-7])
                .basis,
            Some(PointBasis::NoiseFloor)
        );
    }

    /// Noise floor, the finest pair within it and the rest not (project rule): U covers the
    /// floor and half the range of all values; no order is claimed. Manufactured
    /// φ = 1 + 0.5 h⁴ on three meshes, with the finest difference made round-off-sized.
    #[test]
    fn finest_pair_within_the_noise_floor() {
        let h = [1.0, 2.0, 4.0];
        let settings = PointSettings {
            noise_floor: 1e-3,
            ..PointSettings::default()
        };
        let est = PointEstimator::new(&h, &settings).unwrap();
        let phi = [1.5, 1.5 + 5e-4, 1.5 + 0.5 * 255.0];
        let (r, f) = est.estimate_flagged(&phi);
        assert!(f.partly_within_noise_floor);
        assert_eq!(r.basis, Some(PointBasis::NoiseFloor));
        assert_eq!(r.order, None);
        let half_range = 0.5 * (phi[2] - phi[0]);
        assert!(r.uncertainty.unwrap() >= half_range);
        // divergent data keep the divergent class and no U
        let (d, fd) = est.estimate_flagged(&[1.0, 1.5, 1.5 + 5e-4]);
        assert_eq!(d.convergence, Convergence::Divergent);
        assert_eq!(d.uncertainty, None);
        assert!(fd.partly_within_noise_floor);
    }

    /// A negative or non-finite floor is refused.
    #[test]
    fn bad_noise_floor_is_refused() {
        for f in [-1.0, f64::NAN, f64::INFINITY] {
            let s = PointSettings {
                noise_floor: f,
                ..PointSettings::default()
            };
            assert!(PointEstimator::new(&[1.0, 2.0, 4.0], &s).is_err());
        }
    }

    /// Three meshes at a given order: Richardson with that order (Celik et al. 2008 eq. for
    /// φ_ext and the GCI with Fs = 1.25). Manufactured φ = 2 − 0.3 h² with r = 2 at the
    /// manufactured order p = 2: φ_ext = 2 exactly, U = 1.25 |ε21|/(r² − 1) (analytic).
    #[test]
    fn three_meshes_at_a_given_order() {
        let h = [1.0, 2.0, 4.0];
        let settings = PointSettings {
            three: ThreeGridSettings {
                rule: crate::estimate::rules::Rule::CelikGci,
                ..ThreeGridSettings::default()
            },
            ..PointSettings::default()
        };
        let est = PointEstimator::new(&h, &settings).unwrap();
        let phi = [2.0 - 0.3, 2.0 - 1.2, 2.0 - 4.8];
        let r = est.estimate_at_order(&phi, 2.0);
        assert_eq!(r.convergence, Convergence::Monotonic);
        assert_eq!(r.order, Some(2.0));
        assert!((r.extrapolated.unwrap() - 2.0).abs() < 1e-14);
        assert!((r.uncertainty.unwrap() - 1.25 * 0.9 / 3.0).abs() < 1e-14);
        // at order 1 the same data give φ_ext = φ1 + (φ1 − φ2)/(2 − 1) (Richardson, analytic)
        let r1 = est.estimate_at_order(&phi, 1.0);
        assert!((r1.extrapolated.unwrap() - (1.7 + 0.9)).abs() < 1e-14);
        // an invalid order gives the class and nothing else
        let bad = est.estimate_at_order(&phi, -1.0);
        assert_eq!(bad.convergence, Convergence::Monotonic);
        assert_eq!(bad.uncertainty, None);
        assert!(est.at_order(f64::NAN).is_err());
    }

    /// Four meshes or more at a given order: the fit φ0 + α h^p recovers φ0 of manufactured
    /// data φ = 1 + 0.5 h^1.5 exactly, and U is the stated form (analytic).
    #[test]
    fn four_meshes_at_a_given_order() {
        let h = [1.0, 1.4, 2.0, 2.8, 4.0];
        let phi: Vec<f64> = h.iter().map(|x: &f64| 1.0 + 0.5 * x.powf(1.5)).collect();
        let est = PointEstimator::new(&h, &PointSettings::default()).unwrap();
        let at = est.at_order(1.5).unwrap();
        let r = at.estimate(&phi);
        assert_eq!(r.convergence, Convergence::Monotonic);
        assert_eq!(r.order, Some(1.5));
        assert!((r.extrapolated.unwrap() - 1.0).abs() < 1e-12);
        // σ = 0, residual 0, Fs = 1.25: U = 1.25 · 0.5
        assert!((r.uncertainty.unwrap() - 0.625).abs() < 1e-12);
        // at a wrong order the fit leaves residuals and U grows
        let wrong = at.base.at_order(1.0).unwrap().estimate(&phi);
        assert!(wrong.uncertainty.unwrap() > 0.625);
    }

    /// The per-point estimate with four or more meshes equals the general least-squares
    /// estimator (source: `least_squares::estimate`; the property test in ls_fast.rs covers
    /// random data) on the worked five-mesh set of the timing example and divergent data.
    #[test]
    fn per_point_equals_general_estimator() {
        let h = [1.0, 1.3, 1.7, 2.2, 2.9];
        let est = PointEstimator::new(&h, &PointSettings::default()).unwrap();
        for phi in [
            [0.9059958, 0.9037413, 0.9001442, 0.8946823, 0.8855637],
            [1.0, 1.2, 1.3, 1.35, 1.37],
            [1.0, 1.1, 0.95, 1.2, 0.9],
        ] {
            let (r, flags) = est.estimate_flagged(&phi);
            let (g, _) = est.general(&phi);
            assert_eq!(r.convergence, g.convergence, "{phi:?}");
            let close = |a: Option<f64>, b: Option<f64>| match (a, b) {
                (Some(x), Some(y)) => (x - y).abs() <= 1e-9 * x.abs().max(y.abs()).max(1e-3),
                (None, None) => true,
                _ => false,
            };
            assert!(close(r.order, g.order), "{phi:?}: {r:?} {g:?} {flags:?}");
            assert!(close(r.extrapolated, g.extrapolated), "{phi:?}");
            assert!(close(r.uncertainty, g.uncertainty), "{phi:?}");
        }
    }
}
