//! # meshbound
//!
//! Numerical-uncertainty statements from mesh-refinement studies: Richardson extrapolation,
//! the observed order, the Grid Convergence Index, least-squares estimates for four or more
//! meshes, cavitation breakdown along sweeps, and pointwise estimates over whole fields.
//!
//! The library reads the files a study names, computes, and formats; it writes only into
//! sinks the caller hands it ([`sink`]) and never decides about files, signals, temporaries or
//! exit statuses — the `meshbound` command line does.
//!
//! The pipeline: [`study::load`] reads and checks a study file into a [`Study`];
//! [`assess::run`] runs the estimators and returns one [`Assessment`] (its serde form is the
//! JSON contract); [`report`] formats it (no exporter computes). Errors are one [`Error`] whose
//! [`Error::kind`] says whether the input or an output was at fault.
//!
//! Below that: [`grid`] turns cell counts into representative sizes, [`estimate`] holds the
//! pure estimators, [`sweep`] the interpolation and breakdown detection along a curve,
//! [`compare`] the ASME V&V 20 comparison, [`water`] and [`machine`] IAPWS-IF97 properties and
//! hydraulic machine quantities, [`field`] the streamed per-point estimate, [`history`] monitor
//! histories reduced to a value with its statistical and iterative uncertainty, [`gate`] and
//! [`plan`] acceptance limits and mesh planning, [`vtk`] VTK files read and written.
//!
//! # Example
//!
//! The first column of Table 1 of Celik et al. (2008), J. Fluids Eng. 130(7) 078001, which
//! prints an observed order of 1.53 and a fine-mesh GCI of 2.2 %:
//!
//! ```
//! use meshbound::report::{Exporter, Format};
//!
//! let path = concat!(env!("CARGO_MANIFEST_DIR"), "/studies/celik-2008-table1.yaml");
//! let study = meshbound::study::load(path.as_ref())?;
//! // No file is written: the study asks for none, and `Skip` would skip any.
//! let assessment = meshbound::assess::run(&study, &meshbound::sink::Skip)?;
//! let phi = &assessment.quantities[0];
//! let three = phi.three_grid.as_ref().expect("three meshes");
//! let p = three.estimate.observed_order.expect("an observed order");
//! assert!((p - 1.53).abs() < 0.005);
//! let markdown = Format::Markdown.exporter().export(&assessment);
//! assert!(String::from_utf8(markdown)?.contains("phi"));
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
// One module may use unsafe code: the study reader's key index walks the events of the libyaml
// port that serde_yaml itself uses (src/study/keys.rs), so positions and duplicate keys are
// found by the very parser that reads the study.
#![deny(unsafe_code)]
#![warn(missing_docs)]
#![deny(clippy::float_cmp)]

pub mod assess;
pub mod compare;
pub mod error;
pub mod estimate;
pub mod field;
pub mod gate;
pub mod grid;
pub mod history;
pub mod input;
pub mod machine;
pub mod plan;
pub mod point_warnings;
pub mod report;
pub mod sink;
pub mod study;
pub mod sweep;
pub mod tabular;
pub mod transfer;
pub mod vtk;
pub mod warning;
pub mod water;

pub use assess::Assessment;
pub use error::{Error, ErrorKind};
pub use study::Study;
