//! Monitor histories: from a solver's monitor file to one value with its uncertainty.
//!
//! [`read::read_history`] streams one column (and an optional iteration or time column) out of
//! a solver's function-object file or a spreadsheet export; [`analyse`] reduces it:
//!
//! - the **steady part** starts where the marginal standard error rule puts it (MSER-5, White
//!   1997; White, Cobb & Spratt 2000), searched over the first half of the history;
//! - the **value** is, by [`Reduction`], the mean of the steady part (default), the last
//!   sample, or the smallest or largest sample of the steady part;
//! - the **statistical uncertainty** of the mean is the batch-means estimate (Schmeiser 1982)
//!   with a Student t coverage factor for 95 %, cross-checked by the effective sample size from
//!   the integrated autocorrelation time with Sokal's automatic window (Sokal 1997);
//! - the **iterative uncertainty** of a steady run comes from the final window: its half range
//!   (Stern et al. 2001, U_I = ½ (S_U − S_L)) and its drift (the least-squares slope times the
//!   window's length); the larger governs.
//!
//! A history too short to judge, or whose transient does not end in its first half, gets no
//! statistical uncertainty, and its [`Status`] and warnings say why. The methods and their
//! sources are described in `docs/method.md` ("Monitor histories"). [`plot`] draws a history
//! with its steady part and mean ± U.

pub mod plot;
pub mod read;
pub mod stats;

pub use read::{read_history, ColumnRef, Decimal, ReadOptions, Separator, Series};

use crate::warning::Warning;
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

/// Why a history could not be read or reduced. Every variant names the file; those about a
/// place in it name the line and column (1-based).
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum HistoryError {
    /// The file could not be opened or read.
    #[error("{}: cannot read: {source}", path.display())]
    Io {
        /// The file.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// Something at a place in the file.
    #[error("{}, line {line}, column {column}: {message}", path.display())]
    At {
        /// The file.
        path: PathBuf,
        /// 1-based line.
        line: u64,
        /// 1-based character column.
        column: u64,
        /// What is wrong there.
        message: String,
    },
    /// Something about the file as a whole (a column not in the header, no data).
    #[error("{}: {message}", path.display())]
    File {
        /// The file.
        path: PathBuf,
        /// What is wrong.
        message: String,
    },
    /// Samples handed to [`analyse_values`] that cannot be reduced.
    #[error("{0}")]
    Samples(String),
}

impl HistoryError {
    /// The file, when the error concerns one.
    pub fn path(&self) -> Option<&Path> {
        match self {
            HistoryError::Io { path, .. }
            | HistoryError::At { path, .. }
            | HistoryError::File { path, .. } => Some(path),
            HistoryError::Samples(_) => None,
        }
    }

    /// The 1-based line, when the error is at one.
    pub fn line(&self) -> Option<u64> {
        match self {
            HistoryError::At { line, .. } => Some(*line),
            _ => None,
        }
    }

    /// The 1-based column, when the error is at one.
    pub fn column(&self) -> Option<u64> {
        match self {
            HistoryError::At { column, .. } => Some(*column),
            _ => None,
        }
    }
}

/// Which figure of the history is its value.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Reduction {
    /// The mean of the steady part.
    #[default]
    Mean,
    /// The last sample.
    Last,
    /// The smallest sample of the steady part.
    Min,
    /// The largest sample of the steady part.
    Max,
}

/// How a history is reduced.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct HistorySettings {
    /// Which figure is the value.
    pub reduction: Reduction,
    /// Number of batches of the batch-means estimate (10 to 30, Schmeiser 1982; default 20).
    pub batches: usize,
    /// The fewest samples in the steady part for a statistical uncertainty (default 100, at
    /// least 5 per batch).
    pub min_samples: usize,
    /// The share of the history (last samples) that is the final window of the iterative
    /// uncertainty (default 0.1).
    pub final_share: f64,
    /// The fewest samples in the final window (default 10; the whole history when shorter).
    pub final_min: usize,
}

impl Default for HistorySettings {
    fn default() -> Self {
        HistorySettings {
            reduction: Reduction::Mean,
            batches: DEFAULT_BATCHES,
            min_samples: MIN_SAMPLES,
            final_share: 0.1,
            final_min: 10,
        }
    }
}

/// Batches of the batch-means estimate unless set: within Schmeiser's (1982) 10 to 30.
pub const DEFAULT_BATCHES: usize = 20;
/// The fewest samples in the steady part for a statistical uncertainty unless set: 20 batches
/// of at least MSER-5's 5 samples (a project decision).
pub const MIN_SAMPLES: usize = 100;
/// The coverage of the expanded statistical uncertainty.
pub const COVERAGE: f64 = 0.95;
/// Lag-1 autocorrelation of the batch means above which the batches are called correlated:
/// about two standard errors (1/√20) of the lag-1 autocorrelation of 20 independent values
/// (common practice, no source).
pub const LAG1_LIMIT: f64 = 0.45;
/// Ratio of the two standard uncertainties of the mean (batch means, autocorrelation time)
/// above which they are said to disagree (common practice, no source).
pub const DISAGREE_RATIO: f64 = 2.0;

/// Whether the history supports a statistical uncertainty.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    /// A steady part was found and is long enough: the statistical uncertainty is stated.
    Steady,
    /// The steady part (or the history) holds fewer samples than the settings ask for.
    TooShort,
    /// The truncation landed on the end of its search: the transient may last beyond the first
    /// half of the history.
    NoSteadyPart,
}

/// Where the steady part starts.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SteadyPart {
    /// How it was found: `mser5`, or `none` when the history is too short to search.
    pub method: &'static str,
    /// Its first sample, counted from 0.
    pub start_index: usize,
    /// The abscissa (iteration or time) of its first sample, when the history has one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub start_at: Option<f64>,
    /// Samples in it.
    pub samples: usize,
}

/// The statistical uncertainty of the mean of the steady part.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Statistical {
    /// `batch_means`.
    pub method: &'static str,
    /// Standard uncertainty of the mean.
    pub standard: f64,
    /// Expanded uncertainty at `coverage`: `coverage_factor` × `standard`.
    pub expanded: f64,
    /// 0.95.
    pub coverage: f64,
    /// Student's t quantile for `degrees_of_freedom`.
    pub coverage_factor: f64,
    /// Batches − 1.
    pub degrees_of_freedom: usize,
    /// Number of batches.
    pub batches: usize,
    /// Samples per batch.
    pub batch_size: usize,
    /// Lag-1 autocorrelation of the batch means.
    pub batch_lag1: f64,
    /// The cross-check from the integrated autocorrelation time.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub cross_check: Option<CrossCheck>,
}

/// The standard uncertainty of the mean from the integrated autocorrelation time.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CrossCheck {
    /// `autocorrelation_time`.
    pub method: &'static str,
    /// Standard uncertainty of the mean, s/√n_eff.
    pub standard: f64,
    /// τ_int in samples.
    pub integrated_time: f64,
    /// The summation window, in samples.
    pub window: usize,
    /// n/(2 τ_int).
    pub effective_samples: f64,
}

/// The iterative uncertainty from the final window.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Iterative {
    /// First sample of the window, counted from 0.
    pub window_start: usize,
    /// Samples in the window.
    pub window_samples: usize,
    /// ½ (max − min) over the window.
    pub half_range: f64,
    /// |slope| × the window's length.
    pub drift: f64,
    /// Least-squares slope per unit of the abscissa (per sample without one).
    pub slope: f64,
    /// The larger of the two: `half_range` or `drift`.
    pub governs: &'static str,
    /// The iterative uncertainty U_I: the larger of the half range and the drift.
    pub value: f64,
}

/// One history reduced to a value with its uncertainty.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HistoryResult {
    /// The column's name.
    pub column: String,
    /// Its unit, from a unit row.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub unit: Option<String>,
    /// Which figure `value` is.
    pub reduction: Reduction,
    /// The value.
    pub value: f64,
    /// Whether a statistical uncertainty could be stated.
    pub status: Status,
    /// Samples in the history.
    pub samples: usize,
    /// Where the steady part starts.
    pub steady: SteadyPart,
    /// The mean of the steady part (the value of the `mean` reduction).
    pub mean: f64,
    /// The statistical uncertainty of `mean`; `null` when the status is not `steady`.
    pub statistical: Option<Statistical>,
    /// The iterative uncertainty from the final window; `null` with fewer than 3 samples.
    pub iterative: Option<Iterative>,
    /// Warnings with stable codes.
    pub warnings: Vec<Warning>,
}

/// Reads one column of the history in `path` and reduces it; the reader's warnings come first.
pub fn reduce_file(
    path: &Path,
    read: &ReadOptions,
    settings: &HistorySettings,
) -> Result<HistoryResult, HistoryError> {
    let series = read::read_history(path, read)?;
    analyse(&series, settings)
}

/// Reduces a series read by [`read::read_history`]; its warnings come first.
pub fn analyse(series: &Series, settings: &HistorySettings) -> Result<HistoryResult, HistoryError> {
    let mut r = analyse_values(&series.values, series.abscissa.as_deref(), settings)?;
    r.column = series.column.clone();
    r.unit = series.unit.clone();
    let mut w = series.warnings.clone();
    w.append(&mut r.warnings);
    r.warnings = w;
    Ok(r)
}

fn check_settings(s: &HistorySettings) -> Result<(), HistoryError> {
    if !(2..=1000).contains(&s.batches) {
        return Err(HistoryError::Samples(format!(
            "batches must be 2 to 1000, not {}",
            s.batches
        )));
    }
    if !(s.final_share > 0.0 && s.final_share <= 1.0) {
        return Err(HistoryError::Samples(format!(
            "the final window's share must be above 0 and at most 1, not {}",
            s.final_share
        )));
    }
    Ok(())
}

/// Reduces plain samples (`x` the abscissa, the same length, or `None`). Refuses an empty
/// series, non-finite samples and settings out of range.
pub fn analyse_values(
    values: &[f64],
    x: Option<&[f64]>,
    settings: &HistorySettings,
) -> Result<HistoryResult, HistoryError> {
    check_settings(settings)?;
    if values.is_empty() {
        return Err(HistoryError::Samples("no samples".into()));
    }
    if let Some(i) = values.iter().position(|v| !v.is_finite()) {
        return Err(HistoryError::Samples(format!("sample {i} is not finite")));
    }
    if let Some(x) = x {
        if x.len() != values.len() {
            return Err(HistoryError::Samples(format!(
                "{} abscissae for {} samples",
                x.len(),
                values.len()
            )));
        }
        if let Some(i) = x.iter().position(|v| !v.is_finite()) {
            return Err(HistoryError::Samples(format!("abscissa {i} is not finite")));
        }
    }
    let n = values.len();
    let mut warnings = Vec::new();
    let trunc = stats::mser(values, 5);
    let (start, method) = match trunc {
        Some(t) => (t.start, "mser5"),
        None => (0, "none"),
    };
    let steady = &values[start..];
    let m = steady.len();
    let mean = steady.iter().sum::<f64>() / m as f64;
    let mut status = Status::Steady;
    if trunc.is_some_and(|t| t.at_search_end) {
        status = Status::NoSteadyPart;
        warnings.push(Warning::new(
            "steady_part_not_found",
            format!(
                "the marginal standard error rule cuts the history at the end of its search \
                 (sample {start} of {n}): the start-up may last beyond the first half, or the \
                 value still drifts; no statistical uncertainty is stated — run longer"
            ),
        ));
    } else if m < settings.min_samples.max(settings.batches) {
        status = Status::TooShort;
        warnings.push(Warning::new(
            "history_too_short",
            format!(
                "{m} sample(s) in the steady part, fewer than the {} needed to judge the \
                 statistical uncertainty; none is stated — run longer or write the monitor more \
                 often",
                settings.min_samples.max(settings.batches)
            ),
        ));
    }
    let statistical = if status == Status::Steady {
        statistical(steady, settings, &mut warnings)
    } else {
        None
    };
    let w = ((n as f64 * settings.final_share).ceil() as usize).max(settings.final_min);
    let iterative = stats::final_window(values, x, w).map(|f| {
        let drift_governs = f.drift > f.half_range;
        Iterative {
            window_start: f.start,
            window_samples: f.samples,
            half_range: f.half_range,
            drift: f.drift,
            slope: f.slope,
            governs: if drift_governs { "drift" } else { "half_range" },
            value: f.drift.max(f.half_range),
        }
    });
    let value = match settings.reduction {
        Reduction::Mean => mean,
        Reduction::Last => values[n - 1],
        Reduction::Min => steady.iter().copied().fold(f64::INFINITY, f64::min),
        Reduction::Max => steady.iter().copied().fold(f64::NEG_INFINITY, f64::max),
    };
    Ok(HistoryResult {
        column: String::new(),
        unit: None,
        reduction: settings.reduction,
        value,
        status,
        samples: n,
        steady: SteadyPart {
            method,
            start_index: start,
            start_at: x.map(|x| x[start]),
            samples: m,
        },
        mean,
        statistical,
        iterative,
        warnings,
    })
}

fn statistical(
    steady: &[f64],
    settings: &HistorySettings,
    warnings: &mut Vec<Warning>,
) -> Option<Statistical> {
    let b = stats::batch_means(steady, settings.batches)?;
    let dof = b.batches - 1;
    let k = stats::t_factor(COVERAGE, dof)?;
    let cross = stats::autocorrelation_time(steady, stats::SOKAL_C);
    if b.lag1 > LAG1_LIMIT {
        warnings.push(Warning::new(
            "batch_means_correlated",
            format!(
                "the batch means are correlated (lag-1 autocorrelation {:.2} above {LAG1_LIMIT}): \
                 the batches of {} samples are not long beside the signal's correlation; the \
                 statistical uncertainty may be too small — run longer",
                b.lag1, b.batch_size
            ),
        ));
    }
    if let Some(c) = &cross {
        if !c.window_found {
            warnings.push(Warning::new(
                "correlation_window_not_found",
                format!(
                    "the samples stay correlated over half the steady part (integrated \
                     autocorrelation time {:.1} samples at a window of {}): the cross-check of \
                     the statistical uncertainty is unreliable — run longer",
                    c.tau, c.window
                ),
            ));
        }
        let (a, z) = (b.standard, c.standard);
        if a > 0.0 && z > 0.0 && (a / z > DISAGREE_RATIO || z / a > DISAGREE_RATIO) {
            warnings.push(Warning::new(
                "statistical_estimates_disagree",
                format!(
                    "the batch-means standard uncertainty ({a:.3e}) and the one from the \
                     autocorrelation time ({z:.3e}) differ by more than a factor of \
                     {DISAGREE_RATIO}: the signal's correlation is not resolved by this history"
                ),
            ));
        }
    }
    Some(Statistical {
        method: "batch_means",
        standard: b.standard,
        expanded: k * b.standard,
        coverage: COVERAGE,
        coverage_factor: k,
        degrees_of_freedom: dof,
        batches: b.batches,
        batch_size: b.batch_size,
        batch_lag1: b.lag1,
        cross_check: cross.map(|c| CrossCheck {
            method: "autocorrelation_time",
            standard: c.standard,
            integrated_time: c.tau,
            window: c.window,
            effective_samples: c.effective_samples,
        }),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_constant_history_has_no_uncertainty() {
        // Analytic: a constant's mean is itself, with no scatter and no drift.
        let r = analyse_values(&[0.75; 400], None, &HistorySettings::default()).unwrap();
        assert_eq!(r.status, Status::Steady);
        assert_eq!(r.steady.start_index, 0);
        assert!((r.value - 0.75).abs() == 0.0);
        let s = r.statistical.unwrap();
        assert!(s.standard == 0.0 && s.expanded == 0.0);
        let i = r.iterative.unwrap();
        assert!(i.value == 0.0);
    }

    #[test]
    fn a_ramp_has_no_steady_part() {
        // Analytic: a straight line never settles; its drift over the final window is the
        // slope times the window's length.
        let v: Vec<f64> = (0..1000).map(|i| 1.0 + 1e-3 * i as f64).collect();
        let r = analyse_values(&v, None, &HistorySettings::default()).unwrap();
        assert_eq!(r.status, Status::NoSteadyPart);
        assert!(r.statistical.is_none());
        assert!(r.warnings.iter().any(|w| w.code == "steady_part_not_found"));
        let i = r.iterative.unwrap();
        assert_eq!(i.governs, "drift");
        assert!((i.drift - 1e-3 * 99.0).abs() < 1e-12);
    }

    #[test]
    fn a_short_history_says_so() {
        let v: Vec<f64> = (0..40).map(|i| (i % 3) as f64).collect();
        let r = analyse_values(&v, None, &HistorySettings::default()).unwrap();
        assert_eq!(r.status, Status::TooShort);
        assert!(r.statistical.is_none());
        assert!(r.warnings.iter().any(|w| w.code == "history_too_short"));
        let r = analyse_values(&[1.0, 2.0], None, &HistorySettings::default()).unwrap();
        assert_eq!(r.status, Status::TooShort);
        assert_eq!(r.steady.method, "none");
        assert!(r.iterative.is_none());
    }

    #[test]
    fn reductions() {
        // Manufactured: a plateau of alternating 1, 3 after a start at 10.
        let mut v = vec![10.0; 20];
        v.extend((0..480).map(|i| if i % 2 == 0 { 1.0 } else { 3.0 }));
        let mut s = HistorySettings::default();
        let r = analyse_values(&v, None, &s).unwrap();
        assert_eq!(r.steady.start_index, 20);
        assert!((r.value - 2.0).abs() < 1e-12);
        s.reduction = Reduction::Last;
        assert!((analyse_values(&v, None, &s).unwrap().value - 3.0).abs() == 0.0);
        s.reduction = Reduction::Max;
        assert!((analyse_values(&v, None, &s).unwrap().value - 3.0).abs() == 0.0);
        s.reduction = Reduction::Min;
        assert!((analyse_values(&v, None, &s).unwrap().value - 1.0).abs() == 0.0);
    }

    #[test]
    fn bad_samples_are_refused() {
        let s = HistorySettings::default();
        assert!(analyse_values(&[], None, &s).is_err());
        assert!(analyse_values(&[1.0, f64::NAN], None, &s).is_err());
        assert!(analyse_values(&[1.0, 2.0], Some(&[1.0]), &s).is_err());
        let bad = HistorySettings {
            batches: 1,
            ..HistorySettings::default()
        };
        assert!(analyse_values(&[1.0; 10], None, &bad).is_err());
    }
}
