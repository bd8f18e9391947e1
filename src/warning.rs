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

/// A band whose U exceeds, at some points, the variation of the response along the band (the
/// largest minus the smallest finest-mesh value over the band points): there the band cannot
/// tell the curve's shape apart, so its summary supports no conclusion (docs/method.md,
/// "Uncertainty too wide to conclude"). `gate` fails a study that carries it.
pub const BAND_WIDER_THAN_VARIATION: &str = "band_wider_than_variation";

/// A comparison some of whose points agree with the reference only because of the numerical
/// uncertainty: |E| ≤ k·u_val holds, but |E| > k·√(u_input² + u_D²), so the verdict rests on
/// u_num (docs/method.md, "Uncertainty too wide to conclude"). `gate` fails a study that
/// carries it.
pub const COMPARISON_CARRIED_BY_U_NUM: &str = "comparison_carried_by_u_num";

/// The warning codes that mark a stated uncertainty too wide to support a conclusion; `gate`
/// fails every study that carries one of them.
pub const UNSUPPORTED_CONCLUSION: [&str; 2] =
    [BAND_WIDER_THAN_VARIATION, COMPARISON_CARRIED_BY_U_NUM];
