//! The library's one error type for whole runs: [`Error::kind`] says whether the input was
//! at fault (a study, a file it names, the data in them) or an output could not be written
//! into a sink the caller handed over. The command line maps the kind to its exit status.

use crate::study::StudyError;
use std::path::PathBuf;

/// Whose fault an error is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ErrorKind {
    /// The study, a file it names, or the data in them (the command line's exit status 2).
    Input,
    /// An output could not be written (the command line's exit status 3).
    Output,
}

/// Why a study could not be read or assessed.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// The study or a file it names is unusable; names the file, key path, line and column.
    #[error(transparent)]
    Study(#[from] StudyError),
    /// An output the study asks for could not be written.
    #[error("{what} {}: {source}", path.display())]
    Output {
        /// What was being written, e.g. "field `wall`: cannot write".
        what: String,
        /// The target path.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
}

impl Error {
    /// Input or output.
    pub fn kind(&self) -> ErrorKind {
        match self {
            Error::Study(_) => ErrorKind::Input,
            Error::Output { .. } => ErrorKind::Output,
        }
    }
}
