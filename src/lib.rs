//! # meshbound
//!
//! Numerical-uncertainty statements from mesh-refinement studies.
//!
//! The library is layered: [`grid`] turns cell counts into representative sizes,
//! [`estimate`] holds the pure estimators (three-mesh Richardson/GCI and the
//! least-squares procedure), [`study`] reads and checks a study file, [`assess`]
//! runs the estimators over a checked study and returns one [`assess::Assessment`],
//! and [`report`] formats that assessment (no exporter computes).
#![warn(missing_docs)]
#![deny(clippy::float_cmp)]

pub mod assess;
pub mod compare;
pub mod error;
pub mod estimate;
pub mod field;
pub mod gate;
pub mod grid;
pub mod input;
pub mod machine;
pub mod plan;
pub mod report;
pub mod sink;
pub mod study;
pub mod sweep;
pub mod warning;
pub mod water;

pub use error::{Error, ErrorKind};
