//! Warnings with stable codes, shared by every layer.

use serde::Serialize;

/// One warning: a stable snake_case `code` for programs and a sentence for people.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Warning {
    /// Stable snake_case identifier (part of the JSON contract).
    pub code: String,
    /// A sentence for people.
    pub message: String,
    /// What the warning is about (a quantity, sweep or field name), when it concerns one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub subject: Option<String>,
}

impl Warning {
    /// Builds a warning from a code and a message.
    pub fn new(code: &str, message: impl Into<String>) -> Self {
        Warning {
            code: code.to_string(),
            message: message.into(),
            subject: None,
        }
    }

    /// The same warning, attached to a subject (a quantity, sweep or field name).
    pub fn about(mut self, subject: &str) -> Self {
        if self.subject.is_none() {
            self.message = format!("{subject}: {}", self.message);
            self.subject = Some(subject.to_string());
        }
        self
    }
}
