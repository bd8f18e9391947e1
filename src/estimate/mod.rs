//! The estimators: pure functions from sizes and values to plain result structs.
//!
//! Nothing here reads files or prints. Inputs are always ordered finest mesh first.

pub mod global_order;
pub mod least_squares;
pub mod ls_fast;
pub mod point;
pub mod rules;
pub mod three_grid;
pub mod three_grid_fast;

use serde::{Deserialize, Serialize};

/// Convergence class of a quantity over a set of meshes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Convergence {
    /// Differences shrink with refinement and keep their sign.
    Monotonic,
    /// Differences shrink but alternate in sign.
    Oscillatory,
    /// Differences grow with refinement (monotonic or oscillatory divergence).
    Divergent,
    /// The values do not change between meshes.
    NoChange,
    /// Two meshes give one difference: no class can be observed (the two-mesh GCI assumes
    /// monotonic convergence at the formal order).
    Undetermined,
}

impl Convergence {
    /// The snake_case label used in every output.
    pub fn label(self) -> &'static str {
        match self {
            Convergence::Monotonic => "monotonic",
            Convergence::Oscillatory => "oscillatory",
            Convergence::Divergent => "divergent",
            Convergence::NoChange => "no_change",
            Convergence::Undetermined => "undetermined",
        }
    }
}

/// Why an estimator could not produce a result.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum EstimateError {
    /// The inputs break a precondition (lengths, finiteness, ordering, counts).
    #[error("{0}")]
    InvalidInput(String),
    /// No observed order exists in the searched range.
    #[error("no observed order: {0}")]
    NoOrder(String),
}
