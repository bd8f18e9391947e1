//! Comparison with measurements after ASME V&V 20-2009 ("Standard for Verification and
//! Validation in Computational Fluid Dynamics and Heat Transfer"): comparison error
//! E = S − D, validation standard uncertainty u_val = sqrt(u_num² + u_input² + u_D²), and the
//! interval E ± k·u_val in which the model error lies (k = 2 for about 95 % under a normal
//! assumption). u_num is the simulation's standard numerical uncertainty, which the caller
//! derives from U with the divisor of the method that governed it (1.15 for a GCI with
//! Fs = 1.25, from memory of V&V 20; see `assess::govern::standard_divisor`).
//!
//! Pure: plain numbers in, plain results out.

use serde::Serialize;

/// One simulated point to compare: x, the simulation value S, U and its standard uncertainty
/// u_num (absolute, `None` when divergent).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Simulated {
    /// Abscissa (0 for a scalar quantity).
    pub x: f64,
    /// Simulation value S (finest mesh).
    pub value: f64,
    /// Numerical uncertainty U, absolute.
    pub uncertainty: Option<f64>,
    /// Its standard uncertainty u_num, absolute.
    pub standard: Option<f64>,
}

/// One measured point: x, D and its standard uncertainty u_D (absolute).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Measured {
    /// Abscissa (0 for a scalar quantity).
    pub x: f64,
    /// Measured value D.
    pub value: f64,
    /// Standard uncertainty u_D, absolute.
    pub u: f64,
}

/// Settings of a comparison.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CompareSettings {
    /// A divisor the study sets for every point (u_num = U/divisor), overriding each point's
    /// own standard uncertainty; `None` keeps those.
    pub divisor: Option<f64>,
    /// Coverage factor k.
    pub coverage: f64,
    /// Input-parameter standard uncertainty, absolute.
    pub u_input: f64,
    /// Input-parameter standard uncertainty as a fraction of |S|, added per point.
    pub u_input_relative: f64,
    /// Divide each data set by its own peak before comparing.
    pub normalise: bool,
}

/// One compared point (the JSON is a contract).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ComparedPoint {
    /// Abscissa.
    pub x: f64,
    /// S (normalised when the comparison is).
    pub simulation: f64,
    /// D (normalised when the comparison is).
    pub measured: f64,
    /// E = S − D.
    pub error: f64,
    /// u_num, the standard numerical uncertainty (`None` when no uncertainty can be claimed).
    pub u_num: Option<f64>,
    /// u_input.
    pub u_input: f64,
    /// u_D.
    pub u_measured: f64,
    /// u_val = sqrt(u_num² + u_input² + u_D²).
    pub u_val: Option<f64>,
    /// |E| ≤ k·u_val.
    pub within: Option<bool>,
}

/// Summary of a comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompareSummary {
    /// Number of points.
    pub points: usize,
    /// Points with |E| ≤ k·u_val.
    pub within: usize,
    /// Points where u_val does not exist (divergent simulation there).
    pub undecided: usize,
    /// Largest |E|.
    pub max_abs_error: f64,
    /// Abscissa of the largest |E|.
    pub max_abs_error_at: f64,
    /// Mean of E (a systematic offset shows here).
    pub mean_error: f64,
}

/// A comparison result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Comparison {
    /// Whether both data sets were divided by their own peak.
    pub normalised: bool,
    /// Simulation peak used for normalisation.
    pub simulation_peak: Option<f64>,
    /// Measurement peak used for normalisation.
    pub measured_peak: Option<f64>,
    /// Coverage factor k.
    pub coverage_factor: f64,
    /// The divisor of U the study set for every point (`null`: each point's governing method
    /// decided its own, docs/method.md §8).
    pub divisor: Option<f64>,
    /// The points.
    pub points: Vec<ComparedPoint>,
    /// Summary.
    pub summary: CompareSummary,
}

/// Compares simulated and measured points pairwise (same length, same order). `sim_peak` is
/// the simulation's own peak for normalisation (the largest value of its whole curve).
pub fn compare(
    sim: &[Simulated],
    meas: &[Measured],
    sim_peak: f64,
    s: &CompareSettings,
) -> Result<Comparison, String> {
    if sim.len() != meas.len() || sim.is_empty() {
        return Err("the simulated and measured points do not pair up".into());
    }
    let meas_peak = meas
        .iter()
        .map(|m| m.value)
        .fold(f64::NEG_INFINITY, f64::max);
    let (fs, fd) = if s.normalise {
        if !(sim_peak.is_finite() && sim_peak != 0.0 && meas_peak.is_finite() && meas_peak != 0.0) {
            return Err("normalisation by the peak needs nonzero peaks".into());
        }
        (1.0 / sim_peak, 1.0 / meas_peak)
    } else {
        (1.0, 1.0)
    };
    let mut points = Vec::with_capacity(sim.len());
    for (a, b) in sim.iter().zip(meas) {
        let sv = a.value * fs;
        let dv = b.value * fd;
        let e = sv - dv;
        let u_num = match s.divisor {
            Some(d) => a.uncertainty.map(|u| u * fs / d),
            None => a.standard.map(|u| u * fs),
        };
        let u_d = b.u * fd;
        let u_in = (s.u_input + s.u_input_relative * a.value.abs()) * fs;
        let u_val = u_num.map(|un| (un * un + u_in * u_in + u_d * u_d).sqrt());
        points.push(ComparedPoint {
            x: b.x,
            simulation: sv,
            measured: dv,
            error: e,
            u_num,
            u_input: u_in,
            u_measured: u_d,
            u_val,
            within: u_val.map(|uv| e.abs() <= s.coverage * uv),
        });
    }
    let (mut max_e, mut max_at) = (0.0_f64, points[0].x);
    for p in &points {
        if p.error.abs() > max_e {
            max_e = p.error.abs();
            max_at = p.x;
        }
    }
    let summary = CompareSummary {
        points: points.len(),
        within: points.iter().filter(|p| p.within == Some(true)).count(),
        undecided: points.iter().filter(|p| p.within.is_none()).count(),
        max_abs_error: max_e,
        max_abs_error_at: max_at,
        mean_error: points.iter().map(|p| p.error).sum::<f64>() / points.len() as f64,
    };
    Ok(Comparison {
        normalised: s.normalise,
        simulation_peak: s.normalise.then_some(sim_peak),
        measured_peak: s.normalise.then_some(meas_peak),
        coverage_factor: s.coverage,
        divisor: s.divisor,
        points,
        summary,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn hand_worked_point() {
        // Worked by hand (ASME V&V 20-2009 definitions): S = 0.9093, U = 0.00375, divisor 1.15
        // → u_num = 0.00375/1.15 = 0.003260869565217; D = 0.9050, u_D = 0.0020,
        // u_input = 0.0010; u_val = sqrt(0.003260869565217² + 0.001² + 0.002²)
        // = sqrt(1.0633270321361e-5 + 1e-6 + 4e-6) = sqrt(1.5633270321361e-5)
        // = 0.003953893058918; E = 0.9093 − 0.9050 = 0.0043; k u_val = 0.007907786 → within.
        let c = compare(
            &[Simulated {
                x: 0.3,
                value: 0.9093,
                uncertainty: Some(0.00375),
                standard: Some(0.00375 / 1.15),
            }],
            &[Measured {
                x: 0.3,
                value: 0.9050,
                u: 0.0020,
            }],
            0.9093,
            &CompareSettings {
                divisor: None,
                coverage: 2.0,
                u_input: 0.001,
                u_input_relative: 0.0,
                normalise: false,
            },
        )
        .unwrap();
        let p = &c.points[0];
        assert_relative_eq!(p.error, 0.0043, max_relative = 1e-12);
        assert_relative_eq!(p.u_num.unwrap(), 0.00375 / 1.15, max_relative = 1e-12);
        let uval = ((0.00375f64 / 1.15).powi(2) + 1e-6 + 4e-6).sqrt();
        assert_relative_eq!(p.u_val.unwrap(), uval, max_relative = 1e-12);
        assert_relative_eq!(p.u_val.unwrap(), 0.003953893058918, max_relative = 1e-12);
        assert_relative_eq!(p.u_num.unwrap(), 0.003260869565217, max_relative = 1e-12);
        assert_eq!(p.within, Some(true));
        assert_eq!(c.summary.within, 1);
    }

    #[test]
    fn normalised_and_divergent() {
        // Normalised by own peaks (common practice, no source): S/1.0, D/0.8.
        let c = compare(
            &[
                Simulated {
                    x: 1.0,
                    value: 1.0,
                    uncertainty: Some(0.01),
                    standard: None,
                },
                Simulated {
                    x: 2.0,
                    value: 0.5,
                    uncertainty: None,
                    standard: None,
                },
            ],
            &[
                Measured {
                    x: 1.0,
                    value: 0.8,
                    u: 0.008,
                },
                Measured {
                    x: 2.0,
                    value: 0.4,
                    u: 0.004,
                },
            ],
            1.0,
            &CompareSettings {
                divisor: Some(1.15),
                coverage: 2.0,
                u_input: 0.0,
                u_input_relative: 0.0,
                normalise: true,
            },
        )
        .unwrap();
        assert!(c.normalised);
        assert_relative_eq!(c.points[0].measured, 1.0, max_relative = 1e-15);
        assert_relative_eq!(c.points[0].u_measured, 0.01, max_relative = 1e-12);
        assert_relative_eq!(c.points[1].error, 0.0, epsilon = 1e-15);
        assert_eq!(c.points[1].within, None);
        assert_eq!(c.summary.undecided, 1);
    }
}
