//! Exporters: each formats the one [`Assessment`] into bytes. No exporter computes a number
//! that the assessment does not hold, and none does I/O.

pub mod bundle;
pub mod csv;
pub mod duty;
pub mod field_line;
pub mod format;
pub mod html;
pub mod json;
pub mod latex;
pub mod markdown;
pub mod markup;
pub mod paragraph;
pub mod plot;
pub mod raster;
pub mod table;

use crate::assess::Assessment;

/// A formatter of assessments.
pub trait Exporter {
    /// Formats one assessment.
    fn export(&self, assessment: &Assessment) -> Vec<u8>;
}

/// The output formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// Tables for people (default).
    Table,
    /// The JSON result (the contract).
    Json,
    /// One CSV file: a row per quantity, then a row per band point (docs/exports.md).
    Csv,
    /// Markdown with GitHub tables.
    Markdown,
    /// A LaTeX fragment: booktabs tables one column of a two-column page wide, numbers and
    /// symbols in math mode.
    Latex,
}

impl Format {
    /// The exporter for this format.
    pub fn exporter(self) -> Box<dyn Exporter> {
        match self {
            Format::Table => Box::new(table::Table),
            Format::Json => Box::new(json::Json),
            Format::Csv => Box::new(csv::Csv),
            Format::Markdown => Box::new(markdown::Markdown),
            Format::Latex => Box::new(latex::Latex),
        }
    }
}
