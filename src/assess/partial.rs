//! Partial results: a local problem (one mesh of a sweep without breakdown, one measured point
//! outside the meshes' common range, a band or comparison that cannot be formed, a quantity
//! whose estimate fails) is recorded on the result it concerns and warned about, and the rest
//! of the study is still assessed (docs/method.md §6, "Partial results").
//!
//! A result that could not be computed keeps its place in the [`super::Assessment`] with no
//! figure and a [`NotComputed`]: the stable warning code and a short reason. The exporters
//! only format it (`not computed: <reason>`); `gate` fails every limit on it.

use super::{QuantityResult, Role};
use crate::warning::Warning;
use serde::Serialize;

/// Breakdown not computed on a mesh, and so not estimated over the meshes.
pub const BREAKDOWN_NOT_COMPUTED: &str = "breakdown_not_computed";
/// The breakdown's reference not formed on a mesh, and so not estimated over the meshes.
pub const REFERENCE_NOT_COMPUTED: &str = "reference_not_computed";
/// A band that cannot be formed at all.
pub const BAND_NOT_COMPUTED: &str = "band_not_computed";
/// Band abscissae outside the range common to all meshes, skipped.
pub const BAND_POINTS_OUTSIDE_RANGE: &str = "band_points_outside_range";
/// A comparison with measurements that cannot be made at all.
pub const COMPARISON_NOT_COMPUTED: &str = "comparison_not_computed";
/// Measured points outside the range common to all meshes, skipped.
pub const COMPARISON_POINTS_OUTSIDE_RANGE: &str = "comparison_points_outside_range";
/// A quantity whose estimate failed (the code the estimators already raise).
pub const ESTIMATE_FAILED: &str = "estimate_failed";

/// Why a result could not be computed: the code of the warning that says so, and a short
/// reason for people (the warning's message has the details).
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct NotComputed {
    /// Stable snake_case code, the same as the warning's.
    pub code: String,
    /// A short reason, shown as `not computed: <reason>`.
    pub reason: String,
}

impl NotComputed {
    /// Builds the record from a code and a reason.
    pub fn new(code: &str, reason: impl Into<String>) -> Self {
        NotComputed {
            code: code.to_string(),
            reason: reason.into(),
        }
    }

    /// The words the reports show where the figure would be.
    pub fn text(&self) -> String {
        format!("not computed: {}", self.reason)
    }
}

/// One mesh on which a per-mesh figure (a breakdown) could not be read.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeshNotComputed {
    /// Mesh name.
    pub mesh: String,
    /// Stable snake_case code (the warning's).
    pub code: String,
    /// Why, in full.
    pub reason: String,
    /// The reference of the response on this mesh when it could be formed.
    pub reference: Option<f64>,
}

/// A quantity-like result with no estimate: no values, no figures, the reason recorded.
pub fn quantity_not_computed(
    name: &str,
    role: Role,
    unit: Option<&str>,
    why: NotComputed,
) -> QuantityResult {
    QuantityResult {
        name: name.to_string(),
        role,
        unit: unit.map(str::to_string),
        values: Vec::new(),
        meshes: Vec::new(),
        convergence: None,
        three_grid: None,
        least_squares: None,
        uncertainty: None,
        governing: None,
        rules: Vec::new(),
        histories: Vec::new(),
        not_computed: Some(why),
    }
}

/// Marks a quantity whose every estimate failed (no governing estimate, an `estimate_failed`
/// warning about it among `warnings`) as not computed, with the failure as its reason.
pub fn mark_failed(q: &mut QuantityResult, warnings: &[Warning]) {
    if q.governing.is_some() || q.not_computed.is_some() {
        return;
    }
    let failed = warnings
        .iter()
        .rev()
        .find(|w| w.code == ESTIMATE_FAILED && w.subject.as_deref() == Some(q.name.as_str()));
    if let Some(w) = failed {
        let prefix = format!("{}: ", q.name);
        let reason = w.message.strip_prefix(&prefix).unwrap_or(&w.message);
        q.not_computed = Some(NotComputed::new(
            ESTIMATE_FAILED,
            format!("the estimate failed ({reason})"),
        ));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_failed_estimate_is_marked_with_its_reason_and_others_are_left_alone() {
        let mut q = quantity_not_computed("a", Role::Quantity, None, NotComputed::new("x", "y"));
        q.not_computed = None;
        let w = vec![
            Warning::new(ESTIMATE_FAILED, "values overflow").about("a"),
            Warning::new(ESTIMATE_FAILED, "other").about("b"),
        ];
        mark_failed(&mut q, &w);
        let nc = q.not_computed.as_ref().expect("marked");
        assert_eq!(nc.code, ESTIMATE_FAILED);
        assert_eq!(
            nc.text(),
            "not computed: the estimate failed (values overflow)"
        );
        // No warning about it: nothing to mark.
        let mut q2 = q.clone();
        q2.name = "c".into();
        q2.not_computed = None;
        mark_failed(&mut q2, &w);
        assert!(q2.not_computed.is_none());
    }
}
