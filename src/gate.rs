//! Acceptance limits against an assessment: plain verdicts, no printing.
//!
//! A limit names a target — a quantity, `<sweep>.breakdown.<response>`,
//! `<sweep>.reference.<response>` — and any of `max_relative`, `max_absolute`, `require` (a
//! convergence class) and `min_meshes`. Each becomes one check. A divergent target has no
//! uncertainty and so fails every uncertainty limit. A field column with points whose
//! uncertainty overflows (see `ColumnSummary::overflowed`) fails every limit set on it, and so
//! does a column with points whose convergence is not demonstrated (the
//! `convergence_not_demonstrated` entry of `ColumnSummary::point_warnings`): their U is not
//! quotable, so no figure over the column can be vouched for. A target that could not be
//! computed (a breakdown a mesh does not reach, a quantity whose estimate failed: its
//! `not_computed`) fails every limit set on it, with the reason in the note. A study whose
//! band or comparison carries a warning of [`crate::warning::UNSUPPORTED_CONCLUSION`] fails
//! one more check per such warning, whatever its limits ([`unsupported`]).

use crate::assess::{Assessment, QuantityResult};
use crate::study::raw::RawAcceptance;
use serde::Serialize;

/// One checked limit (the JSON of `gate --format json` is a contract).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    /// The study file.
    pub study: String,
    /// The target as written.
    pub target: String,
    /// The limit in words, e.g. `max_relative 0.005`.
    pub limit: String,
    /// The figure compared (a number, a class, or `null` when it does not exist).
    pub value: serde_json::Value,
    /// Whether the limit holds.
    pub passed: bool,
    /// Why a check failed without a figure, when it did.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// What a target resolves to.
pub enum Resolved<'a> {
    /// A scalar-like estimate.
    Quantity(&'a QuantityResult),
    /// A field column, by its summary figures.
    Field {
        /// Largest relative uncertainty over the points.
        max_relative: Option<f64>,
        /// Largest absolute uncertainty over the points, when known.
        max_absolute: Option<f64>,
        /// Points per class, and the total.
        classes: [(crate::estimate::Convergence, usize); 4],
        /// Number of points.
        points: usize,
        /// Points whose uncertainty overflows (each limit on the column fails while any exist).
        overflowed: usize,
        /// Points whose convergence is not demonstrated (each limit on the column fails while
        /// any exist).
        not_demonstrated: usize,
    },
}

/// Finds a target in an assessment.
pub fn resolve<'a>(a: &'a Assessment, target: &str) -> Option<Resolved<'a>> {
    if let Some(q) = a.quantities.iter().find(|q| q.name == target) {
        return Some(Resolved::Quantity(q));
    }
    let parts: Vec<&str> = target.splitn(3, '.').collect();
    if parts.len() == 3 {
        if let Some(s) = a.sweeps.iter().find(|s| s.name == parts[0]) {
            let b = s.breakdown.iter().find(|b| b.response == parts[2])?;
            return match parts[1] {
                "breakdown" => Some(Resolved::Quantity(&b.x_estimate)),
                "reference" => Some(Resolved::Quantity(&b.reference_estimate)),
                _ => None,
            };
        }
    }
    resolve_field(a, target)
}

fn resolve_field<'a>(a: &'a Assessment, target: &str) -> Option<Resolved<'a>> {
    use crate::estimate::Convergence as C;
    let (field, column) = target.split_once('.')?;
    let f = a.fields.iter().find(|f| f.name == field)?;
    let c = f.columns.iter().find(|c| c.name == column)?;
    Some(Resolved::Field {
        max_relative: c.max_relative,
        max_absolute: None,
        classes: [
            (C::Monotonic, c.classes.monotonic as usize),
            (C::Oscillatory, c.classes.oscillatory as usize),
            (C::Divergent, c.classes.divergent as usize),
            (C::NoChange, c.classes.no_change as usize),
        ],
        points: f.points as usize,
        overflowed: c.overflowed as usize,
        not_demonstrated: c.not_demonstrated() as usize,
    })
}

/// The targets an assessment offers, for messages.
pub fn known_targets(a: &Assessment) -> Vec<String> {
    let mut v: Vec<String> = a.quantities.iter().map(|q| q.name.clone()).collect();
    for s in &a.sweeps {
        for b in &s.breakdown {
            v.push(format!("{}.breakdown.{}", s.name, b.response));
            v.push(format!("{}.reference.{}", s.name, b.response));
        }
    }
    for f in &a.fields {
        for c in &f.columns {
            v.push(format!("{}.{}", f.name, c.name));
        }
    }
    v
}

fn num(v: Option<f64>) -> serde_json::Value {
    v.map_or(serde_json::Value::Null, |x| serde_json::json!(x))
}

/// Checks every limit. An unknown target is an error naming the known ones.
pub fn check(a: &Assessment, limits: &[RawAcceptance]) -> Result<Vec<Check>, String> {
    let mut out = Vec::new();
    for (i, l) in limits.iter().enumerate() {
        let r = resolve(a, &l.target).ok_or_else(|| {
            format!(
                "acceptance[{i}].target: `{}` is not a quantity, breakdown or reference of the study (known: {})",
                l.target,
                known_targets(a).join(", ")
            )
        })?;
        let mk =
            |limit: String, value: serde_json::Value, passed: bool, note: Option<String>| Check {
                study: a.study.clone(),
                target: l.target.clone(),
                limit,
                value,
                passed,
                note,
            };
        match r {
            // A target that could not be computed (assess::partial): every limit on it fails,
            // with the reason.
            Resolved::Quantity(q) if q.not_computed.is_some() => {
                let note = q
                    .not_computed
                    .as_ref()
                    .map(|n| format!("{} (see the {} warning)", n.text(), n.code));
                let limits = [
                    l.max_relative.map(|m| format!("max_relative {}", m.0)),
                    l.max_absolute.map(|m| format!("max_absolute {}", m.0)),
                    l.require.map(|c| format!("require {}", c.label())),
                    l.min_meshes.map(|n| format!("min_meshes {n}")),
                ];
                for limit in limits.into_iter().flatten() {
                    out.push(mk(limit, serde_json::Value::Null, false, note.clone()));
                }
            }
            Resolved::Quantity(q) => {
                // Convergence not demonstrated (assess::govern): every limit fails with it.
                let undemonstrated = q.governing.as_ref().is_some_and(|g| !g.demonstrated)
                    && q.convergence != Some(crate::estimate::Convergence::Divergent);
                let nd_note = || {
                    Some(
                        "convergence not demonstrated: no uncertainty can be quoted (see the \
                         convergence_not_demonstrated warning)"
                            .to_string(),
                    )
                };
                let no_u = || {
                    Some(match q.convergence {
                        Some(crate::estimate::Convergence::Divergent) => {
                            "divergent: no uncertainty can be claimed".to_string()
                        }
                        _ => "no uncertainty estimate".to_string(),
                    })
                };
                // Why a limit on U fails where it does: no demonstrated convergence, or no U.
                let u_note = |has_u: bool| {
                    if undemonstrated {
                        nd_note()
                    } else if !has_u {
                        no_u()
                    } else {
                        None
                    }
                };
                if let Some(m) = l.max_relative {
                    let v = q.uncertainty.as_ref().and_then(|u| u.relative);
                    out.push(mk(
                        format!("max_relative {}", m.0),
                        num(v),
                        !undemonstrated && v.is_some_and(|v| v <= m.0),
                        u_note(v.is_some()),
                    ));
                }
                if let Some(m) = l.max_absolute {
                    let v = q.uncertainty.as_ref().map(|u| u.absolute);
                    out.push(mk(
                        format!("max_absolute {}", m.0),
                        num(v),
                        !undemonstrated && v.is_some_and(|v| v <= m.0),
                        u_note(v.is_some()),
                    ));
                }
                if let Some(c) = l.require {
                    let got = q.convergence;
                    out.push(mk(
                        format!("require {}", c.label()),
                        got.map_or(serde_json::Value::Null, |g| serde_json::json!(g.label())),
                        !undemonstrated && got == Some(c),
                        if undemonstrated { nd_note() } else { None },
                    ));
                }
                if let Some(n) = l.min_meshes {
                    let used = q
                        .least_squares
                        .as_ref()
                        .map_or_else(|| q.values.len().min(3), |ls| ls.per_mesh.len());
                    out.push(mk(
                        format!("min_meshes {n}"),
                        serde_json::json!(used),
                        !undemonstrated && used >= n as usize,
                        if undemonstrated { nd_note() } else { None },
                    ));
                }
            }
            Resolved::Field {
                max_relative,
                max_absolute,
                classes,
                points,
                overflowed,
                not_demonstrated,
            } => {
                // Points whose uncertainty overflows, or whose convergence is not demonstrated,
                // are failures, not points to leave out: every limit on the column fails while
                // any exist, and says why.
                let clear = overflowed == 0 && not_demonstrated == 0;
                let overflow_note = || {
                    let mut why = Vec::new();
                    if overflowed > 0 {
                        why.push(format!(
                            "{overflowed} of {points} points have an uncertainty too large to represent (overflow); they count as failures"
                        ));
                    }
                    if not_demonstrated > 0 {
                        why.push(format!(
                            "convergence not demonstrated at {not_demonstrated} of {points} points: their uncertainty is not quotable (see the field_points_not_demonstrated warning)"
                        ));
                    }
                    (!why.is_empty()).then(|| why.join("; "))
                };
                if let Some(m) = l.max_relative {
                    out.push(mk(
                        format!("max_relative {}", m.0),
                        num(max_relative),
                        clear && max_relative.is_some_and(|v| v <= m.0),
                        overflow_note(),
                    ));
                }
                if let Some(m) = l.max_absolute {
                    out.push(mk(
                        format!("max_absolute {}", m.0),
                        num(max_absolute),
                        clear && max_absolute.is_some_and(|v| v <= m.0),
                        overflow_note(),
                    ));
                }
                if let Some(c) = l.require {
                    let n = classes.iter().find(|(k, _)| *k == c).map_or(0, |x| x.1);
                    out.push(mk(
                        format!("require {} at every point", c.label()),
                        serde_json::json!(format!("{n} of {points} points {}", c.label())),
                        clear && n == points,
                        overflow_note(),
                    ));
                }
                if let Some(n) = l.min_meshes {
                    out.push(mk(
                        format!("min_meshes {n}"),
                        serde_json::json!(3),
                        clear && 3 >= n as usize,
                        overflow_note(),
                    ));
                }
            }
        }
    }
    out.extend(unsupported(a));
    Ok(out)
}

/// One failing check per warning whose code marks a stated uncertainty too wide to support a
/// conclusion ([`crate::warning::UNSUPPORTED_CONCLUSION`]: a band wider than the response's
/// own variation, a comparison that agrees only through u_num). These fail whatever limits the
/// study sets, because no limit can vouch for a figure the data do not support.
pub fn unsupported(a: &Assessment) -> Vec<Check> {
    a.warnings
        .iter()
        .filter(|w| crate::warning::UNSUPPORTED_CONCLUSION.contains(&w.code.as_str()))
        .map(|w| Check {
            study: a.study.clone(),
            target: w.subject.clone().unwrap_or_default(),
            limit: "uncertainty narrow enough to conclude".into(),
            value: serde_json::json!(w.code),
            passed: false,
            note: Some(w.message.clone()),
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::markup::fixture;

    /// A target that was not computed fails every limit on it, with the reason; a computed
    /// target beside it is checked as usual. Demo data (invented): only the verdicts are
    /// checked, no figure.
    #[test]
    fn an_uncomputed_target_fails_every_limit_with_the_reason() {
        // The demo curves fall by at most 20 %: a 50 % drop is reached on no mesh.
        let text = fixture::DEMO.replace("drop: 1%", "drop: 50%");
        let a = fixture::assess(&text);
        assert!(a.sweeps[0].breakdown[0].x_estimate.not_computed.is_some());
        let limits: Vec<RawAcceptance> = serde_yaml::from_str(
            "- {target: cav.breakdown.efficiency, max_relative: 0.5, max_absolute: 1, require: monotonic, min_meshes: 3}\n- {target: efficiency, max_relative: 0.5}\n",
        )
        .unwrap();
        let checks = check(&a, &limits).unwrap();
        let on_b: Vec<&Check> = checks
            .iter()
            .filter(|c| c.target == "cav.breakdown.efficiency")
            .collect();
        assert_eq!(on_b.len(), 4);
        for c in on_b {
            assert!(!c.passed && c.value.is_null());
            let note = c.note.as_deref().unwrap();
            assert!(
                note.starts_with("not computed: no breakdown on mesh M_fine")
                    && note.contains("breakdown_not_computed"),
                "{note}"
            );
        }
        assert!(checks.iter().any(|c| c.target == "efficiency" && c.passed));
    }
}
