//! Checked numbers for the study file. Each type refuses bad values while the YAML is read,
//! so the error carries the key path and the line and column of the offending value.

use serde::de::{self, Deserializer};
use serde::{Deserialize, Serialize};
use std::fmt;

/// Reads a number written plainly or as a percentage string (`"1%"` → 0.01).
fn number_or_percent<'de, D: Deserializer<'de>>(
    d: D,
    allow_percent: bool,
) -> Result<f64, D::Error> {
    struct V(bool);
    impl de::Visitor<'_> for V {
        type Value = f64;
        fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
            if self.0 {
                f.write_str("a number or a percentage such as `1%`")
            } else {
                f.write_str("a number")
            }
        }
        fn visit_f64<E: de::Error>(self, v: f64) -> Result<f64, E> {
            Ok(v)
        }
        fn visit_i64<E: de::Error>(self, v: i64) -> Result<f64, E> {
            Ok(v as f64)
        }
        fn visit_u64<E: de::Error>(self, v: u64) -> Result<f64, E> {
            Ok(v as f64)
        }
        fn visit_str<E: de::Error>(self, s: &str) -> Result<f64, E> {
            let t = s.trim();
            if self.0 {
                if let Some(num) = t.strip_suffix('%') {
                    return num
                        .trim()
                        .parse::<f64>()
                        .map(|v| v / 100.0)
                        .map_err(|_| E::custom(format!("`{s}` is not a percentage such as `1%`")));
                }
            }
            Err(E::custom(format!(
                "expected {}, found the text `{s}`",
                if self.0 {
                    "a number or a percentage such as `1%`"
                } else {
                    "a number"
                }
            )))
        }
    }
    d.deserialize_any(V(allow_percent))
}

macro_rules! checked {
    ($(#[$m:meta])* $name:ident, $percent:expr, $ok:expr, $what:expr, $schema:expr) => {
        $(#[$m])*
        #[derive(Debug, Clone, Copy, PartialEq, PartialOrd, Serialize)]
        #[serde(transparent)]
        pub struct $name(pub f64);

        impl<'de> Deserialize<'de> for $name {
            fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
                let v = number_or_percent(d, $percent)?;
                let ok: fn(f64) -> bool = $ok;
                if ok(v) {
                    Ok($name(v))
                } else {
                    Err(de::Error::custom(format!("expected {}, found {}", $what, show(v))))
                }
            }
        }

        impl schemars::JsonSchema for $name {
            fn schema_name() -> std::borrow::Cow<'static, str> {
                stringify!($name).into()
            }
            fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
                let v: serde_json::Value = $schema;
                schemars::Schema::try_from(v).unwrap_or_default()
            }
        }
    };
}

fn percent_schema(number: serde_json::Value) -> serde_json::Value {
    serde_json::json!({
        "anyOf": [number, {"type": "string", "pattern": "^\\s*[-+]?[0-9]*\\.?[0-9]+([eE][-+]?[0-9]+)?\\s*%\\s*$"}]
    })
}

/// Shows a number the way a user would recognise it in the file.
pub(crate) fn show(v: f64) -> String {
    if v.is_nan() {
        ".nan (not a number)".into()
    } else if v.is_infinite() {
        if v > 0.0 {
            ".inf (infinity)".into()
        } else {
            "-.inf (minus infinity)".into()
        }
    } else {
        format!("{v}")
    }
}

checked!(
    /// A finite number.
    Finite, false, |v: f64| v.is_finite(), "a finite number",
    serde_json::json!({"type": "number", "description": "a finite number"})
);
checked!(
    /// A finite number > 0.
    Positive, false, |v: f64| v.is_finite() && v > 0.0, "a finite number > 0",
    serde_json::json!({"type": "number", "exclusiveMinimum": 0, "description": "a finite number > 0"})
);
checked!(
    /// A finite number ≥ 0, plain or as a percentage.
    NonNegativeOrPercent, true, |v: f64| v.is_finite() && v >= 0.0, "a finite number ≥ 0",
    percent_schema(serde_json::json!({"type": "number", "minimum": 0}))
);
checked!(
    /// A fraction in (0, 1), plain or as a percentage (`1%`).
    Fraction, true, |v: f64| v.is_finite() && v > 0.0 && v < 1.0, "a fraction between 0 and 1 (or a percentage such as `1%`)",
    percent_schema(serde_json::json!({"type": "number", "exclusiveMinimum": 0, "exclusiveMaximum": 1}))
);
