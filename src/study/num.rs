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
/// Largest `settings.order_max` accepted. The observed-order search scans (0, order_max];
/// discretisations have formal orders of a few units, and a bound far above that only spreads
/// the search over orders no scheme reaches (at 1e8 it broke the search).
pub const MAX_ORDER_MAX: f64 = 100.0;

checked!(
    /// A cell count: a finite number ≥ 1.
    CellCount, false, |v: f64| v.is_finite() && v >= 1.0,
    "a cell count ≥ 1 (a mesh has at least one cell)",
    serde_json::json!({"type": "number", "minimum": 1, "description": "a cell count ≥ 1"})
);
checked!(
    /// The upper end of the observed-order search: a finite number in (0, [`MAX_ORDER_MAX`]].
    OrderMax, false, |v: f64| v.is_finite() && v > 0.0 && v <= MAX_ORDER_MAX,
    "a finite number > 0 and at most 100 (the observed-order search scans (0, order_max]; formal orders are a few units, so a larger bound only spreads the search over orders no scheme reaches)",
    serde_json::json!({"type": "number", "exclusiveMinimum": 0, "maximum": 100, "description": "upper end of the observed-order search, at most 100"})
);

#[cfg(test)]
mod tests {
    use super::*;

    fn read<T: serde::de::DeserializeOwned>(text: &str) -> Result<T, String> {
        serde_yaml::from_str(text).map_err(|e| e.to_string())
    }

    #[test]
    fn cell_counts_below_one_are_refused() {
        assert_eq!(read::<CellCount>("1").unwrap(), CellCount(1.0));
        assert_eq!(read::<CellCount>("3.4e6").unwrap(), CellCount(3.4e6));
        for bad in ["0.5", "0", "-3", ".inf", ".nan"] {
            let e = read::<CellCount>(bad).unwrap_err();
            assert!(e.contains("a cell count ≥ 1"), "{bad}: {e}");
        }
    }

    #[test]
    fn order_max_is_bounded() {
        assert_eq!(read::<OrderMax>("100").unwrap(), OrderMax(100.0));
        assert_eq!(read::<OrderMax>("20").unwrap(), OrderMax(20.0));
        for bad in ["100.5", "1e8", "0", "-1", ".inf"] {
            let e = read::<OrderMax>(bad).unwrap_err();
            assert!(e.contains("at most 100"), "{bad}: {e}");
            assert!(e.contains("(0, order_max]"), "{bad}: {e}");
        }
    }
}
