//! The command line: clap definitions, one small module per subcommand, exit statuses.
//!
//! Exit statuses: 0 done; 1 an acceptance limit was not met; 2 the input or the command line is
//! wrong (nothing is written); 3 an output could not be written.
//!
//! A thin shell over the `meshbound` library: arguments, one module per subcommand, atomic
//! output files, interrupt handling and the mapping from error kind to exit status.

mod assess;
mod batch;
mod draft;
mod gate;
mod interrupt;
mod manual;
mod output;
mod plan;
mod point_file;
mod reach;
mod report;
mod schema;
mod water;

use clap::{Parser, Subcommand};

/// How a command failed, and so which exit status it gives.
#[derive(Debug)]
pub enum Failure {
    /// A limit was not met (exit 1); the report is already printed.
    Limits,
    /// Bad input or command line (exit 2).
    Input(String),
    /// An output could not be written (exit 3).
    Output(String),
}

impl Failure {
    /// The exit status.
    pub fn status(&self) -> i32 {
        match self {
            Failure::Limits => 1,
            Failure::Input(_) => 2,
            Failure::Output(_) => 3,
        }
    }
}

impl std::fmt::Display for Failure {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Failure::Limits => f.write_str("an acceptance limit was not met"),
            Failure::Input(m) | Failure::Output(m) => f.write_str(m),
        }
    }
}

impl From<meshbound::Error> for Failure {
    fn from(e: meshbound::Error) -> Self {
        match e.kind() {
            meshbound::ErrorKind::Input => Failure::Input(e.to_string()),
            meshbound::ErrorKind::Output => Failure::Output(e.to_string()),
        }
    }
}

/// meshbound: numerical-uncertainty statements from mesh-refinement studies.
#[derive(Debug, Parser)]
#[command(name = "meshbound", version, about, long_about = None)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Estimate the discretisation uncertainty of every quantity of a study.
    Assess(assess::Args),
    /// Check the acceptance limits of studies: exit 0 all hold, 1 one fails, 2 bad input.
    Gate(gate::Args),
    /// Plan meshes: a family from one mesh, or the mesh a target uncertainty needs.
    Plan(plan::Args),
    /// Print the JSON Schema of the study file (for YAML editors).
    Schema(schema::Args),
    /// Write a commented study file to begin from (never overwrites).
    Draft(draft::Args),
    /// Print shell completions.
    Completions(manual::CompletionArgs),
    /// Print the man page (roff).
    Manual(manual::ManualArgs),
    /// Water properties (IAPWS-IF97) and the pressure that gives a target Thoma number.
    Water(water::Args),
    /// Write the whole report into a new folder: Markdown, HTML and one SVG per figure.
    Report(report::Args),
}

/// Runs the parsed command line.
pub fn run(cli: Cli) -> Result<(), Failure> {
    interrupt::install();
    match cli.command {
        Command::Assess(a) => assess::run(a),
        Command::Water(a) => water::run(a),
        Command::Plan(a) => plan::run(a),
        Command::Gate(a) => gate::run(a),
        Command::Schema(a) => schema::run(a),
        Command::Draft(a) => draft::run(a),
        Command::Completions(a) => manual::completions(a),
        Command::Manual(a) => manual::manual(a),
        Command::Report(a) => report::run(a),
    }
}

fn main() {
    output::guard_std_streams();
    let cli = Cli::parse();
    if let Err(failure) = run(cli) {
        match &failure {
            Failure::Input(m) | Failure::Output(m) => {
                eprintln!("error: {m}");
            }
            Failure::Limits => {}
        }
        std::process::exit(failure.status());
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn clap_definition_is_consistent() {
        use clap::CommandFactory;
        super::Cli::command().debug_assert();
    }
}
