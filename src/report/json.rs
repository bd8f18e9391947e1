//! The JSON result: the serde form of the assessment, pretty-printed.

use super::Exporter;
use crate::assess::Assessment;

/// JSON exporter.
pub struct Json;

impl Json {
    /// One assessment, pretty (`compact = false`) or on one line (`compact = true`, for JSON
    /// lines), with a final newline.
    pub fn export_one(&self, a: &Assessment, compact: bool) -> Vec<u8> {
        // Serialising plain data with finite or null numbers cannot fail; fall back to an
        // error object rather than panic if it ever does.
        let r = if compact {
            serde_json::to_vec(a)
        } else {
            serde_json::to_vec_pretty(a)
        };
        let mut out = r.unwrap_or_else(|e| {
            format!("{{\"error\": \"the result could not be serialised: {e}\"}}").into_bytes()
        });
        out.push(b'\n');
        out
    }
}

impl Exporter for Json {
    fn export(&self, a: &Assessment) -> Vec<u8> {
        self.export_one(a, false)
    }
}
