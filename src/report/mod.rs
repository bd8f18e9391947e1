//! Exporters: each formats the one [`Assessment`] into bytes. No exporter computes a number
//! that the assessment does not hold, and none does I/O.

pub mod format;
pub mod json;
pub mod table;

use crate::assess::Assessment;

/// A formatter of assessments.
pub trait Exporter {
    /// Formats one assessment.
    fn export(&self, assessment: &Assessment) -> Vec<u8>;
}

/// The output formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Tables for people (default).
    Table,
    /// The JSON result (the contract).
    Json,
}

impl Format {
    /// The exporter for this format.
    pub fn exporter(self) -> Box<dyn Exporter> {
        match self {
            Format::Table => Box::new(table::Table),
            Format::Json => Box::new(json::Json),
        }
    }
}
