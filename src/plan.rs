//! Planning meshes (method notes §9): a family of meshes from one mesh, and the size and cell
//! count a target uncertainty needs.
//!
//! - Cells of a family with ratio r in d dimensions: N_coarser = N_finer / r^d.
//! - With observed order p and uncertainty U1 at h1, a mesh of size h gives about
//!   U(h) = U1 (h/h1)^p, so a target U* needs h = h1 (U*/U1)^(1/p) and N = N1 (h1/h)^d.

use crate::assess::{Assessment, Method};
use crate::estimate::Convergence;
use serde::Serialize;

/// One planned mesh.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlannedMesh {
    /// Cell count, rounded to the nearest integer.
    pub cells: u64,
    /// Size relative to the given mesh (given = 1.0).
    pub size: f64,
    /// Refinement ratio to the previous mesh of the list (`None` for the given mesh).
    pub ratio: Option<f64>,
}

/// A planned family.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Family {
    /// The meshes, the given mesh first.
    pub meshes: Vec<PlannedMesh>,
}

/// Why a plan cannot be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum PlanError {
    /// A parameter is out of range.
    #[error("{0}")]
    Invalid(String),
}

/// A family of `levels` further meshes from a mesh of `cells` cells, with refinement ratio
/// `ratio` in `dimension` dimensions, coarser (default) or finer.
pub fn family(
    cells: f64,
    ratio: f64,
    levels: u32,
    dimension: u32,
    finer: bool,
) -> Result<Family, PlanError> {
    if !(cells.is_finite() && cells >= 1.0) {
        return Err(PlanError::Invalid(format!(
            "--cells must be a finite number ≥ 1, found {cells}"
        )));
    }
    if !(ratio.is_finite() && ratio > 1.0) {
        return Err(PlanError::Invalid(format!(
            "--ratio must be a finite number > 1 (a refinement ratio is h_coarse/h_fine), found {ratio}"
        )));
    }
    if !(1..=3).contains(&dimension) {
        return Err(PlanError::Invalid(format!(
            "--dimension must be 1, 2 or 3, found {dimension}"
        )));
    }
    if levels == 0 || levels > 20 {
        return Err(PlanError::Invalid(format!(
            "--levels must be between 1 and 20, found {levels}"
        )));
    }
    let d = f64::from(dimension);
    let mut meshes = vec![PlannedMesh {
        cells: cells.round() as u64,
        size: 1.0,
        ratio: None,
    }];
    for k in 1..=levels {
        let k = f64::from(k);
        let (size, n) = if finer {
            (ratio.powf(-k), cells * ratio.powf(d * k))
        } else {
            (ratio.powf(k), cells / ratio.powf(d * k))
        };
        if !(n.is_finite() && n < 1e15) {
            return Err(PlanError::Invalid(format!(
                "level {k} would need {n:e} cells"
            )));
        }
        if n < 1.0 {
            return Err(PlanError::Invalid(format!(
                "level {k} would have fewer than one cell ({n:.3}): use fewer levels or a smaller ratio"
            )));
        }
        meshes.push(PlannedMesh {
            cells: n.round() as u64,
            size,
            ratio: Some(ratio),
        });
    }
    Ok(Family { meshes })
}

/// A target uncertainty: relative (a fraction of the finest value) or absolute.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Target {
    /// A fraction of |φ1|.
    Relative(f64),
    /// In the quantity's unit.
    Absolute(f64),
}

/// The mesh a target needs, for one quantity.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TargetPlan {
    /// Quantity name.
    pub quantity: String,
    /// Target absolute uncertainty.
    pub target_absolute: f64,
    /// Target relative uncertainty (`None` when the value is zero).
    pub target_relative: Option<f64>,
    /// Current absolute uncertainty of the finest mesh.
    pub current_absolute: f64,
    /// Observed order used.
    pub order: f64,
    /// Estimate whose order and uncertainty were used.
    pub method: Method,
    /// Size needed, in the study's size units (relative to the finest mesh when only cells
    /// were given).
    pub size: f64,
    /// Size needed over the finest mesh's size.
    pub size_ratio: f64,
    /// Cells needed (when the finest mesh gives a cell count).
    pub cells: Option<f64>,
    /// Whether the finest mesh already meets the target.
    pub already_met: bool,
}

/// Plans the mesh that meets `target` for the quantity `name` of an assessment.
pub fn for_target(
    a: &Assessment,
    name: &str,
    target: Target,
    dimension: u32,
) -> Result<TargetPlan, PlanError> {
    let q = a
        .quantities
        .iter()
        .find(|q| q.name == name)
        .ok_or_else(|| {
            PlanError::Invalid(format!(
                "the study has no quantity `{name}` (it has: {})",
                a.quantities
                    .iter()
                    .map(|q| q.name.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            ))
        })?;
    match q.convergence {
        Some(Convergence::Divergent) => {
            return Err(PlanError::Invalid(format!(
                "`{name}` diverges with refinement: no order exists to plan with; look for the cause (iterative convergence, mesh quality, a changing flow feature) first"
            )))
        }
        Some(Convergence::Oscillatory) => {
            return Err(PlanError::Invalid(format!(
                "`{name}` oscillates between meshes: its observed order does not describe how the error falls, so no mesh size can be planned from it"
            )))
        }
        Some(Convergence::NoChange) => {
            return Err(PlanError::Invalid(format!("`{name}` does not change between meshes: nothing to plan")))
        }
        Some(Convergence::Undetermined) => {
            return Err(PlanError::Invalid(format!(
                "`{name}` is estimated from two meshes: no order has been observed, so a planned size would rest on the assumed formal order alone; add a third mesh first (a family of meshes can be planned from the finest one's cell count)"
            )))
        }
        _ => {}
    }
    if q.governing.as_ref().is_some_and(|g| !g.demonstrated) {
        return Err(PlanError::Invalid(format!(
            "`{name}`: convergence is not demonstrated by these meshes (see the convergence_not_demonstrated warning): its order does not describe how the error falls, so no mesh can be planned from it; look for the cause (a changing flow feature, iterative convergence, mesh quality) or refine further first"
        )));
    }
    let u = q
        .uncertainty
        .as_ref()
        .ok_or_else(|| PlanError::Invalid(format!("`{name}` has no uncertainty estimate")))?;
    let order = q.governing.as_ref().and_then(|g| g.order).ok_or_else(|| {
        PlanError::Invalid(format!("`{name}` has no observed order to plan with"))
    })?;
    if order <= 0.0 {
        return Err(PlanError::Invalid(format!(
            "`{name}` has a non-positive order {order}"
        )));
    }
    let target_abs = match target {
        Target::Absolute(t) => t,
        Target::Relative(f) => f * u.value.abs(),
    };
    if !(target_abs.is_finite() && target_abs > 0.0) {
        return Err(PlanError::Invalid(format!(
            "the target for `{name}` must be > 0 (a relative target of a zero value is zero: give an absolute one)"
        )));
    }
    let finest = &a.meshes[0];
    let already_met = u.absolute <= target_abs;
    let size_ratio = (target_abs / u.absolute).powf(1.0 / order);
    let size = finest.size * size_ratio;
    let cells = finest
        .cells
        .map(|n| n * size_ratio.powf(-f64::from(dimension)));
    Ok(TargetPlan {
        quantity: name.to_string(),
        target_absolute: target_abs,
        target_relative: (u.value != 0.0).then(|| target_abs / u.value.abs()),
        current_absolute: u.absolute,
        order,
        method: u.method,
        size,
        size_ratio,
        cells,
        already_met,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn family_by_hand() {
        // Method notes §9: N_coarser = N_finer / r^d. 1e6 cells, r = 1.3, 3-D:
        // 1e6/1.3³ = 455166.1 → 455166; 1e6/1.3⁶ = 207176.3 → 207176 (hand calculation).
        let f = family(1e6, 1.3, 2, 3, false).unwrap();
        assert_eq!(f.meshes.len(), 3);
        assert_eq!(f.meshes[0].cells, 1_000_000);
        assert!(f.meshes[0].ratio.is_none());
        assert_eq!(f.meshes[1].cells, 455_166);
        assert_eq!(f.meshes[2].cells, 207_176);
        assert_relative_eq!(f.meshes[2].size, 1.69, max_relative = 1e-12);
        // Finer, 2-D, r = 2: 1000 → 4000 → 16000.
        let f = family(1000.0, 2.0, 2, 2, true).unwrap();
        assert_eq!(f.meshes[2].cells, 16_000);
        assert_relative_eq!(f.meshes[2].size, 0.25, max_relative = 1e-12);
    }

    #[test]
    fn family_refuses_bad_ratios() {
        assert!(family(1e6, 1.0, 2, 3, false).is_err());
        assert!(family(1e6, 0.8, 2, 3, false).is_err());
        assert!(family(1e6, f64::NAN, 2, 3, false).is_err());
        assert!(family(10.0, 3.0, 5, 3, false).is_err());
    }
}
