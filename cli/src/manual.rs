//! `meshbound completions SHELL` and `meshbound manual`: shell completions and a man page,
//! generated from the same clap definition as the command line itself.

use super::{Cli, Failure};
use clap::CommandFactory;
use std::path::PathBuf;

/// Options of `completions`.
#[derive(Debug, clap::Args)]
pub struct CompletionArgs {
    /// The shell.
    #[arg(value_enum)]
    pub shell: clap_complete::Shell,
}

/// Options of `manual`.
#[derive(Debug, clap::Args)]
pub struct ManualArgs {
    /// Write the man page (roff) to this file instead of standard output.
    #[arg(long, short = 'o', default_value = "-")]
    pub output: PathBuf,
}

/// Prints completions.
pub fn completions(a: CompletionArgs) -> Result<(), Failure> {
    let mut cmd = Cli::command();
    let mut out = Vec::new();
    clap_complete::generate(a.shell, &mut cmd, "meshbound", &mut out);
    crate::output::write_atomic(std::path::Path::new("-"), &out)
        .map_err(|e| Failure::Output(e.to_string()))
}

/// Writes the man page.
pub fn manual(a: ManualArgs) -> Result<(), Failure> {
    let cmd = Cli::command();
    let mut out = Vec::new();
    clap_mangen::Man::new(cmd)
        .render(&mut out)
        .map_err(|e| Failure::Output(e.to_string()))?;
    crate::output::write_atomic(&a.output, &out).map_err(|e| Failure::Output(e.to_string()))
}
