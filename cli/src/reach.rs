//! `--reach DIR`: the folders a study may read from and write into besides its own.
//!
//! A study reads and writes only inside its own folder (docs/study-file.md, "Confinement"), so
//! that running `gate` or `assess` on a study from someone else cannot read or overwrite files
//! elsewhere. A user who keeps shared data outside names those folders here, once each.

use crate::Failure;
use std::path::PathBuf;

/// The option, shared by every subcommand that reads a study.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct Reach {
    /// Let the study read from and write into DIR (and below) as well as its own folder;
    /// repeat for several folders.
    #[arg(long = "reach", value_name = "DIR")]
    pub dirs: Vec<PathBuf>,
}

impl Reach {
    /// The library's load options for these folders.
    pub fn options(&self) -> meshbound::study::LoadOptions {
        meshbound::study::LoadOptions {
            allowed: self.dirs.clone(),
        }
    }

    /// Checks that every folder named exists (a typo would otherwise allow nothing, silently).
    pub fn check(&self) -> Result<(), Failure> {
        for d in &self.dirs {
            if !d.is_dir() {
                return Err(Failure::Input(format!(
                    "--reach {}: no such folder",
                    d.display()
                )));
            }
        }
        Ok(())
    }
}
