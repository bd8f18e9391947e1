//! The meshbound command: a thin shell over the library.

use clap::Parser;

fn main() {
    let cli = meshbound::cli::Cli::parse();
    if let Err(failure) = meshbound::cli::run(cli) {
        match &failure {
            meshbound::cli::Failure::Input(m) | meshbound::cli::Failure::Output(m) => {
                eprintln!("error: {m}");
            }
            meshbound::cli::Failure::Limits => {}
        }
        std::process::exit(failure.status());
    }
}
