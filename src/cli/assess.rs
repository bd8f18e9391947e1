//! `meshbound assess STUDY`: estimate every quantity of a study and print or write the result.

use super::Failure;
use crate::output::write_atomic;
use crate::report::Format;
use std::path::PathBuf;

/// Options of `assess`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The study file (YAML).
    pub study: PathBuf,
    /// Output format.
    #[arg(long, short = 'f', value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Write to this file (atomically) instead of standard output; `-` is standard output.
    #[arg(long, short = 'o', default_value = "-")]
    pub output: PathBuf,
}

/// Runs `assess`.
pub fn run(args: Args) -> Result<(), Failure> {
    let study = crate::study::load(&args.study).map_err(|e| Failure::Input(e.to_string()))?;
    let assessment = crate::assess::run(&study).map_err(|e| Failure::Input(e.to_string()))?;
    let bytes = args.format.exporter().export(&assessment);
    write_atomic(&args.output, &bytes).map_err(|e| Failure::Output(e.to_string()))
}
