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

/// The schema as pretty JSON text, with a final newline.
pub fn schema_text() -> String {
    let mut schema = schemars::schema_for!(crate::study::raw::RawStudy);
    schema.insert("title".into(), "meshbound study file (format 1)".into());
    let mut s = serde_json::to_string_pretty(&schema).unwrap_or_default();
    s.push('\n');
    s
}

/// Runs `schema`.
pub fn run(a: Args) -> Result<(), Failure> {
    write_atomic(&a.output, schema_text().as_bytes()).map_err(|e| Failure::Output(e.to_string()))
}
