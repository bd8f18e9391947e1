//! `meshbound schema`: the JSON Schema of the study file, for YAML editors (completion and
//! checking as you type). See docs/study-file.md for how to use it.

use super::Failure;
use crate::output::write_atomic;
use std::path::PathBuf;

/// Options of `schema`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Write to this file instead of standard output.
    #[arg(long, short = 'o', default_value = "-")]
    pub output: PathBuf,
}

/// Runs `schema`.
pub fn run(a: Args) -> Result<(), Failure> {
    write_atomic(&a.output, meshbound::study::schema_text().as_bytes())
        .map_err(|e| Failure::Output(e.to_string()))
}
