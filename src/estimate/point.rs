//! The estimate at one point of a field, with every mesh the field has: the three-mesh estimate
//! ([`FastThreeGrid`]) with three meshes, least squares (Eça & Hoekstra 2014) with four or more.
//!
//! A [`PointEstimator`] is prepared once per field (the sizes are the same at every point) and
//! then called for millions of points from many threads.
//!
//! Interface first: the least-squares path here still calls
//! [`least_squares::estimate`](crate::estimate::least_squares::estimate) per point; a fast path
//! replaces it behind the same interface.

use crate::estimate::least_squares::{self, LsSettings};
use crate::estimate::three_grid::{Governing, ThreeGridSettings};
use crate::estimate::three_grid_fast::FastThreeGrid;
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

/// The per-point estimate prepared for fixed mesh sizes.
#[derive(Debug, Clone)]
pub struct PointEstimator {
    h: Vec<f64>,
    names: Vec<String>,
    settings: PointSettings,
    three: Option<FastThreeGrid>,
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
        Ok(PointEstimator {
            h: h.to_vec(),
            names: (1..=h.len()).map(|i| format!("m{i}")).collect(),
            settings: settings.clone(),
            three,
        })
    }

    /// Number of meshes.
    pub fn meshes(&self) -> usize {
        self.h.len()
    }

    /// The estimate at one point; `phi` finest first, one value per mesh, finite.
    pub fn estimate(&self, phi: &[f64]) -> PointResult {
        if let Some(t) = &self.three {
            let e = t.estimate([phi[0], phi[1], phi[2]]);
            return PointResult {
                convergence: e.convergence,
                order: e.observed_order,
                extrapolated: e.extrapolated,
                uncertainty: e.uncertainty,
                basis: e.governing.map(PointBasis::ThreeMesh),
            };
        }
        match least_squares::estimate(&self.names, &self.h, phi, &self.settings.least_squares) {
            Ok(ls) => PointResult {
                convergence: ls.convergence,
                order: ls.order,
                extrapolated: ls.selected_fit().map(|f| f.phi0),
                uncertainty: ls.per_mesh.first().map(|m| m.uncertainty),
                basis: Some(PointBasis::LeastSquares),
            },
            Err(_) => PointResult {
                convergence: Convergence::Divergent,
                order: None,
                extrapolated: None,
                uncertainty: None,
                basis: None,
            },
        }
    }
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
}
