//! A field's results along a sampled line, and its comparison with reference data at points.
//!
//! Both carry the per-point results (held at the targets: the finest mesh's points or a probe
//! set) onto other points with [`crate::transfer`] — the same second-order reconstruction that
//! carries the coarser meshes' solutions (docs/method.md §14) — in 2-D when every z is one
//! value, else in 3-D. A sample or reference point outside the targets' cloud gets no value
//! and is reported, never extrapolated.

use crate::compare::{self, CompareSettings, Comparison, Measured, Simulated};
use crate::transfer::{Source, TransferOptions, Transferred};
use serde::Serialize;

/// A line to sample a field column along (the study's `fields.<name>.line`).
#[derive(Debug, Clone, PartialEq)]
pub struct LineSpec {
    /// The column sampled.
    pub column: String,
    /// Start point (x, y, z).
    pub from: [f64; 3],
    /// End point (x, y, z).
    pub to: [f64; 3],
    /// Number of samples from `from` to `to`, both included (at least 2).
    pub samples: usize,
}

/// One sample of a line.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LineSample {
    /// Distance from the start of the line.
    pub s: f64,
    /// The finest mesh's value, carried to the sample.
    pub value: Option<f64>,
    /// The extrapolated value, carried to the sample.
    pub extrapolated: Option<f64>,
    /// The uncertainty U, carried to the sample.
    pub uncertainty: Option<f64>,
}

/// A column's results along a line (part of the JSON result).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LineProfile {
    /// The column.
    pub column: String,
    /// Start point.
    pub from: [f64; 3],
    /// End point.
    pub to: [f64; 3],
    /// The samples, from the start.
    pub samples: Vec<LineSample>,
    /// Samples outside the field's points (no value).
    pub outside: usize,
}

/// A reference point of a field: where, the value, its standard uncertainty.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReferencePoint {
    /// Position (x, y, z).
    pub at: [f64; 3],
    /// Reference value D.
    pub value: f64,
    /// Standard uncertainty u_D, absolute.
    pub u: f64,
}

/// The comparison of a field column with reference data at points (part of the JSON result).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FieldComparison {
    /// The column compared.
    pub column: String,
    /// Whether the reference data are a published benchmark solution (else measurements).
    pub benchmark: bool,
    /// The comparison (ASME V&V 20) at the reference points inside the field; `x` of each
    /// point is its index among the reference points, from 0.
    pub comparison: Option<Comparison>,
    /// Indices of the reference points outside the field's points (not compared).
    pub outside: Vec<usize>,
}

/// Carries `values` (one per target; NaN where none) onto `places`, using only the targets
/// with a finite value. `None` per place where it is outside or no target has a value.
fn carry(targets: &[[f64; 3]], values: &[f64], places: &[[f64; 3]]) -> Vec<Option<f64>> {
    let mut pts = Vec::new();
    let mut vals = Vec::new();
    for (p, &v) in targets.iter().zip(values) {
        if v.is_finite() {
            pts.push(*p);
            vals.push(v);
        }
    }
    if pts.is_empty() {
        return vec![None; places.len()];
    }
    let z0 = pts[0][2];
    let flat = pts
        .iter()
        .chain(places)
        .all(|p| p[2].to_bits() == z0.to_bits());
    let out: Result<Vec<Transferred>, _> = if flat {
        let src: Vec<[f64; 2]> = pts.iter().map(|p| [p[0], p[1]]).collect();
        let dst: Vec<[f64; 2]> = places.iter().map(|p| [p[0], p[1]]).collect();
        Source::new(src, vals).and_then(|s| s.transfer(&dst, &TransferOptions::for_dimension(2)))
    } else {
        Source::new(pts, vals).and_then(|s| s.transfer(places, &TransferOptions::for_dimension(3)))
    };
    match out {
        Ok(t) => t.into_iter().map(|t| t.value).collect(),
        Err(_) => vec![None; places.len()],
    }
}

/// Samples a column's results along a line. `value`, `extrapolated`, `uncertainty` hold one
/// figure per target (NaN where none). Refuses non-finite end points or fewer than 2 samples.
pub fn sample_line(
    spec: &LineSpec,
    targets: &[[f64; 3]],
    value: &[f64],
    extrapolated: &[f64],
    uncertainty: &[f64],
) -> Result<LineProfile, String> {
    if spec.samples < 2 {
        return Err(format!(
            "a line needs at least 2 samples (got {})",
            spec.samples
        ));
    }
    if spec.from.iter().chain(&spec.to).any(|c| !c.is_finite()) {
        return Err("the line's end points must be finite".into());
    }
    let n = spec.samples;
    let length = (0..3)
        .map(|a| (spec.to[a] - spec.from[a]).powi(2))
        .sum::<f64>()
        .sqrt();
    let places: Vec<[f64; 3]> = (0..n)
        .map(|i| {
            let t = i as f64 / (n - 1) as f64;
            [0, 1, 2].map(|a| spec.from[a] + t * (spec.to[a] - spec.from[a]))
        })
        .collect();
    let v = carry(targets, value, &places);
    let e = carry(targets, extrapolated, &places);
    let u = carry(targets, uncertainty, &places);
    let samples: Vec<LineSample> = (0..n)
        .map(|i| LineSample {
            s: length * i as f64 / (n - 1) as f64,
            value: v[i],
            extrapolated: e[i],
            // An uncertainty is a magnitude: a reconstruction that dips below 0 is 0.
            uncertainty: u[i].map(|x| x.max(0.0)),
        })
        .collect();
    let outside = samples.iter().filter(|s| s.value.is_none()).count();
    Ok(LineProfile {
        column: spec.column.clone(),
        from: spec.from,
        to: spec.to,
        samples,
        outside,
    })
}

/// Compares a column with reference data at points (ASME V&V 20): S is the finest mesh's
/// value carried to the point, U the stated uncertainty carried there, u_num = U / `divisor`.
#[allow(clippy::too_many_arguments)]
pub fn compare_at_points(
    column: &str,
    benchmark: bool,
    targets: &[[f64; 3]],
    value: &[f64],
    uncertainty: &[f64],
    refs: &[ReferencePoint],
    divisor: f64,
    settings: &CompareSettings,
) -> FieldComparison {
    let places: Vec<[f64; 3]> = refs.iter().map(|r| r.at).collect();
    let v = carry(targets, value, &places);
    let u = carry(targets, uncertainty, &places);
    let mut sim = Vec::new();
    let mut meas = Vec::new();
    let mut outside = Vec::new();
    for (i, r) in refs.iter().enumerate() {
        let Some(s) = v[i] else {
            outside.push(i);
            continue;
        };
        let un = u[i].map(|x| x.max(0.0));
        sim.push(Simulated {
            x: i as f64,
            value: s,
            uncertainty: un,
            standard: un.map(|x| x / divisor),
        });
        meas.push(Measured {
            x: i as f64,
            value: r.value,
            u: r.u,
        });
    }
    let peak = sim
        .iter()
        .map(|s| s.value)
        .fold(f64::NEG_INFINITY, f64::max);
    let comparison = if sim.is_empty() {
        None
    } else {
        compare::compare(&sim, &meas, peak, settings).ok()
    };
    FieldComparison {
        column: column.to_string(),
        benchmark,
        comparison,
        outside,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A linear field on a grid: the linear reconstruction reproduces it exactly (a linear
    /// least-squares fit is exact on linear data; analytic).
    fn grid() -> (Vec<[f64; 3]>, Vec<f64>, Vec<f64>) {
        let mut pts = Vec::new();
        let mut v = Vec::new();
        let mut u = Vec::new();
        for i in 0..41 {
            for j in 0..41 {
                let (x, y) = (i as f64 / 40.0, j as f64 / 40.0);
                pts.push([x, y, 0.0]);
                v.push(2.0 + 3.0 * x - y);
                u.push(0.1 + 0.05 * x);
            }
        }
        (pts, v, u)
    }

    #[test]
    fn a_linear_field_is_sampled_exactly_along_a_line() {
        let (pts, v, u) = grid();
        let spec = LineSpec {
            column: "p".into(),
            from: [0.1, 0.2, 0.0],
            to: [0.9, 0.7, 0.0],
            samples: 11,
        };
        let prof = sample_line(&spec, &pts, &v, &v, &u).unwrap();
        assert_eq!(prof.samples.len(), 11);
        assert_eq!(prof.outside, 0);
        let len = (0.8f64 * 0.8 + 0.5 * 0.5).sqrt();
        for (i, s) in prof.samples.iter().enumerate() {
            let t = i as f64 / 10.0;
            let (x, y) = (0.1 + 0.8 * t, 0.2 + 0.5 * t);
            approx::assert_relative_eq!(s.s, len * t, max_relative = 1e-12);
            approx::assert_abs_diff_eq!(s.value.unwrap(), 2.0 + 3.0 * x - y, epsilon = 1e-10);
            approx::assert_abs_diff_eq!(s.uncertainty.unwrap(), 0.1 + 0.05 * x, epsilon = 1e-10);
        }
    }

    #[test]
    fn samples_past_the_field_are_outside_not_extrapolated() {
        let (pts, v, u) = grid();
        let spec = LineSpec {
            column: "p".into(),
            from: [0.5, 0.5, 0.0],
            to: [3.0, 0.5, 0.0],
            samples: 26,
        };
        let prof = sample_line(&spec, &pts, &v, &v, &u).unwrap();
        assert!(prof.outside >= 18, "{}", prof.outside);
        assert!(prof.samples[0].value.is_some());
        assert!(prof.samples[25].value.is_none());
        let bad = LineSpec { samples: 1, ..spec };
        assert!(sample_line(&bad, &pts, &v, &v, &u).is_err());
    }

    #[test]
    fn comparison_at_points_follows_vv20() {
        // E = S − D, u_val = √(u_num² + u_D²) (ASME V&V 20-2009) on a linear field, where S is
        // exact at any interior point.
        let (pts, v, u) = grid();
        let refs = [
            ReferencePoint {
                at: [0.25, 0.5, 0.0],
                value: 2.2,
                u: 0.05,
            },
            ReferencePoint {
                at: [0.75, 0.25, 0.0],
                value: 4.0,
                u: 0.05,
            },
            ReferencePoint {
                at: [5.0, 5.0, 0.0],
                value: 1.0,
                u: 0.05,
            },
        ];
        let settings = CompareSettings {
            divisor: None,
            coverage: 2.0,
            u_input: 0.0,
            u_input_relative: 0.0,
            normalise: false,
        };
        let c = compare_at_points("p", false, &pts, &v, &u, &refs, 2.0, &settings);
        assert_eq!(c.outside, vec![2]);
        let cmp = c.comparison.unwrap();
        assert_eq!(cmp.points.len(), 2);
        let s0 = 2.0 + 0.75 - 0.5;
        approx::assert_abs_diff_eq!(cmp.points[0].error, s0 - 2.2, epsilon = 1e-10);
        let un = (0.1 + 0.05 * 0.25) / 2.0;
        approx::assert_abs_diff_eq!(
            cmp.points[0].u_val.unwrap(),
            (un * un + 0.05f64 * 0.05).sqrt(),
            epsilon = 1e-10
        );
    }
}
