//! The JSON result: the serde form of the assessment, pretty-printed.

use super::Exporter;
use crate::assess::Assessment;

/// JSON exporter.
pub struct Json;

impl Exporter for Json {
    fn export(&self, a: &Assessment) -> Vec<u8> {
        // Serialising plain data with finite or null numbers cannot fail; fall back to an
        // error object rather than panic if it ever does.
        let mut out = serde_json::to_vec_pretty(a).unwrap_or_else(|e| {
            format!("{{\"error\": \"the result could not be serialised: {e}\"}}").into_bytes()
        });
        out.push(b'\n');
        out
    }
}
