//! The statistics of one history: where its steady part starts, the uncertainty of its mean
//! with the autocorrelation of the samples taken into account, and the scatter and drift of its
//! final window. Pure functions over finite samples; none prints or reads a file.

use rustfft::num_complex::Complex;
use rustfft::FftPlanner;
use statrs::distribution::{ContinuousCDF, StudentsT};

/// The truncation point of the marginal standard error rule.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Truncation {
    /// The first sample of the steady part (0-based).
    pub start: usize,
    /// The batch size used (5 for MSER-5).
    pub batch: usize,
    /// Number of whole batches in the series.
    pub batches: usize,
    /// The truncation sits on the last batch searched: the transient may last longer than the
    /// first half of the series, and no steady part was found.
    pub at_search_end: bool,
}

/// The marginal standard error rule (MSER; White 1997) on batch means of `batch` samples
/// (`batch = 5` is MSER-5, White, Cobb & Spratt 2000; both from memory). With batch means
/// Z_1…Z_k, the statistic for dropping the first d batches is
/// MSER(d) = Σ_{j>d} (Z_j − Z̄_d)² / (k − d)², Z̄_d the mean of the batches kept; the
/// truncation is the d that minimises it, searched over d ≤ k/2 (the first half of the series:
/// the statistic is noisy near the end, where few batches remain). Ties go to the smaller d.
/// `None` with fewer than two whole batches or non-finite samples.
pub fn mser(values: &[f64], batch: usize) -> Option<Truncation> {
    if batch == 0 || values.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let k = values.len() / batch;
    if k < 2 {
        return None;
    }
    let z: Vec<f64> = values
        .chunks_exact(batch)
        .map(|c| c.iter().sum::<f64>() / batch as f64)
        .collect();
    let d_max = k / 2;
    // Welford's running mean and sum of squares from the end: stable for any offset.
    let (mut mean, mut m2) = (0.0f64, 0.0f64);
    let mut stat = vec![f64::INFINITY; d_max + 1];
    for (count, d) in (0..k).rev().enumerate() {
        let n = (count + 1) as f64;
        let delta = z[d] - mean;
        mean += delta / n;
        m2 += delta * (z[d] - mean);
        if d <= d_max {
            stat[d] = m2.max(0.0) / (n * n);
        }
    }
    let mut best = 0;
    for d in 1..=d_max {
        if stat[d] < stat[best] {
            best = d;
        }
    }
    Some(Truncation {
        start: best * batch,
        batch,
        batches: k,
        at_search_end: best == d_max && d_max > 0,
    })
}

/// The non-overlapping batch-means estimate of the standard uncertainty of a mean.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BatchMeans {
    /// Number of batches.
    pub batches: usize,
    /// Samples per batch.
    pub batch_size: usize,
    /// Standard uncertainty of the mean: the standard deviation of the batch means over √b.
    pub standard: f64,
    /// Lag-1 autocorrelation of the batch means (near zero when the batches are long enough
    /// to be independent).
    pub lag1: f64,
}

/// Non-overlapping batch means (Schmeiser 1982, from memory): the samples are cut into `b`
/// batches of equal size m = ⌊n/b⌋ (the n − b·m samples at the start are left out of the
/// batches), and the standard uncertainty of the mean is s_Z/√b, s_Z the standard deviation of
/// the batch means. For batches much longer than the correlation time the batch means are
/// nearly independent and normal, so (mean − μ)/(s_Z/√b) follows Student's t with b − 1
/// degrees of freedom; Schmeiser recommends 10 to 30 batches. `None` with fewer than two
/// batches or fewer samples than batches.
pub fn batch_means(values: &[f64], b: usize) -> Option<BatchMeans> {
    if b < 2 || values.len() < b {
        return None;
    }
    let m = values.len() / b;
    let skip = values.len() - m * b;
    let z: Vec<f64> = values[skip..]
        .chunks_exact(m)
        .map(|c| c.iter().sum::<f64>() / m as f64)
        .collect();
    let zbar = z.iter().sum::<f64>() / b as f64;
    let ss: f64 = z.iter().map(|v| (v - zbar).powi(2)).sum();
    let var = ss / (b - 1) as f64;
    let lag1 = if ss > 0.0 {
        z.windows(2)
            .map(|w| (w[0] - zbar) * (w[1] - zbar))
            .sum::<f64>()
            / ss
    } else {
        0.0
    };
    let standard = (var / b as f64).sqrt();
    standard.is_finite().then_some(BatchMeans {
        batches: b,
        batch_size: m,
        standard,
        lag1,
    })
}

/// The integrated autocorrelation time and what follows from it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AutocorrelationTime {
    /// τ_int = ½ + Σ_{k=1}^{M} ρ_k, in samples (at least ½).
    pub tau: f64,
    /// The summation window M.
    pub window: usize,
    /// n/(2 τ_int).
    pub effective_samples: f64,
    /// Standard uncertainty of the mean, s/√n_eff.
    pub standard: f64,
    /// Whether a window M ≥ c·τ_int(M) was found below n/2; if not, τ_int is that of the largest
    /// window tried and the signal is correlated over much of its length.
    pub window_found: bool,
}

/// The window constant c of [`autocorrelation_time`].
pub const SOKAL_C: f64 = 5.0;

/// The integrated autocorrelation time with Sokal's automatic window (Sokal 1997, from
/// memory): ρ_k the sample autocorrelation (biased estimator, divided by n), τ_int(M) =
/// ½ + Σ_{k=1}^{M} ρ_k, and M the smallest window with M ≥ c·τ_int(M) (Sokal suggests c of
/// about 4 to 6 for signals whose correlation decays roughly exponentially; c = 5 here, common
/// practice, no source). The variance of the mean is 2 τ_int s²/n, so the effective sample size
/// is n/(2 τ_int). τ_int below ½ (an anticorrelated signal) is raised to ½: no credit is taken
/// for anticorrelation (a project decision). Lags are summed directly while the window is
/// short and the whole autocovariance is computed by FFT (O(n log n)) once it is not; above
/// [`MAX_DIRECT_LEN`] samples, on means of consecutive blocks (the variance of the mean is the
/// same; τ_int and the window are given back in samples). `None` with fewer than 4 samples,
/// non-finite samples or no variance.
pub fn autocorrelation_time(values: &[f64], c: f64) -> Option<AutocorrelationTime> {
    autocorrelation_time_with(values, c, DIRECT_WORK, MAX_DIRECT_LEN)
}

/// Samples above which [`autocorrelation_time`] works on means of consecutive blocks (bounding
/// the FFT's memory at about 64 MiB).
pub const MAX_DIRECT_LEN: usize = 1 << 21;

fn autocorrelation_time_with(
    values: &[f64],
    c: f64,
    direct_work: usize,
    max_len: usize,
) -> Option<AutocorrelationTime> {
    let n = values.len();
    if n < 4 || values.iter().any(|v| !v.is_finite()) {
        return None;
    }
    if n > max_len {
        // The mean of the block means is the mean of the samples (less a tail shorter than a
        // block), so its variance, and the effective sample size that gives it, can be taken
        // from the block means; τ_int and the window are given back in samples.
        let s = n.div_ceil(max_len);
        let blocks: Vec<f64> = values
            .chunks_exact(s)
            .map(|b| b.iter().sum::<f64>() / s as f64)
            .collect();
        let b = autocorrelation_time_with(&blocks, c, direct_work, usize::MAX)?;
        let mean = values.iter().sum::<f64>() / n as f64;
        let s2 = values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
        let tau = (n as f64 * b.standard * b.standard / (2.0 * s2)).max(0.5);
        let effective_samples = n as f64 / (2.0 * tau);
        let standard = (s2 / effective_samples).sqrt();
        return standard.is_finite().then_some(AutocorrelationTime {
            tau,
            window: b.window.saturating_mul(s),
            effective_samples,
            standard,
            window_found: b.window_found,
        });
    }
    let mean = values.iter().sum::<f64>() / n as f64;
    let x: Vec<f64> = values.iter().map(|v| v - mean).collect();
    let var0 = x.iter().map(|v| v * v).sum::<f64>() / n as f64;
    if var0.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
        return None;
    }
    let limit = n / 2;
    // Lags summed directly while that is cheap (short correlation, the usual case), the whole
    // autocovariance by FFT once the window grows past that.
    let direct = (direct_work / n).clamp(16, limit.max(16));
    let mut fft: Option<Vec<f64>> = None;
    let mut tau = 0.5;
    let mut window = 0;
    let mut found = false;
    for m in 1..limit {
        let cm = if m <= direct {
            x.iter().zip(&x[m..]).map(|(a, b)| a * b).sum::<f64>() / n as f64
        } else {
            if fft.is_none() {
                fft = autocorrelation(values);
            }
            fft.as_ref().and_then(|a| a.get(m)).copied()?
        };
        tau += cm / var0;
        window = m;
        if m as f64 >= c * tau {
            found = true;
            break;
        }
    }
    let tau = tau.max(0.5);
    let effective_samples = n as f64 / (2.0 * tau);
    let s2 = var0 * n as f64 / (n - 1) as f64;
    let standard = (s2 / effective_samples).sqrt();
    standard.is_finite().then_some(AutocorrelationTime {
        tau,
        window,
        effective_samples,
        standard,
        window_found: found,
    })
}

/// Multiply-adds spent on directly summed lags before [`autocorrelation_time`] turns to the FFT.
const DIRECT_WORK: usize = 1 << 26;

/// The autocovariance C_k = (1/n) Σ_{i} (x_i − x̄)(x_{i+k} − x̄), k = 0…n−1, by FFT with zero
/// padding (no wrap-around).
pub fn autocorrelation(values: &[f64]) -> Option<Vec<f64>> {
    let n = values.len();
    if n == 0 {
        return None;
    }
    let mean = values.iter().sum::<f64>() / n as f64;
    let size = (2 * n).next_power_of_two();
    let mut buf: Vec<Complex<f64>> = values
        .iter()
        .map(|v| Complex::new(v - mean, 0.0))
        .chain(std::iter::repeat(Complex::new(0.0, 0.0)))
        .take(size)
        .collect();
    let mut planner = FftPlanner::new();
    planner.plan_fft_forward(size).process(&mut buf);
    for z in buf.iter_mut() {
        *z = Complex::new(z.norm_sqr(), 0.0);
    }
    planner.plan_fft_inverse(size).process(&mut buf);
    let scale = 1.0 / (size as f64 * n as f64);
    Some(buf.iter().take(n).map(|z| z.re * scale).collect())
}

/// The two-sided quantile of Student's t: the coverage factor k with P(|T| ≤ k) = `coverage`
/// for `dof` degrees of freedom (statrs). `None` for dof = 0 or a coverage outside (0, 1).
pub fn t_factor(coverage: f64, dof: usize) -> Option<f64> {
    if dof == 0 || !(coverage > 0.0 && coverage < 1.0) {
        return None;
    }
    let t = StudentsT::new(0.0, 1.0, dof as f64).ok()?;
    let k = t.inverse_cdf(0.5 + coverage / 2.0);
    k.is_finite().then_some(k)
}

/// The scatter and drift of a final window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FinalWindow {
    /// First sample of the window (0-based).
    pub start: usize,
    /// Samples in the window.
    pub samples: usize,
    /// ½ (max − min) over the window (Stern et al. 2001, U_I = ½ (S_U − S_L); from memory).
    pub half_range: f64,
    /// Least-squares slope over the window, per unit of the abscissa (per sample without one).
    pub slope: f64,
    /// |slope| × the window's length in the abscissa: how far the value moved across it.
    pub drift: f64,
}

/// The half range and the drift of the last `samples` samples; `x` the abscissa (the sample
/// index without one). `None` with fewer than 3 samples in the window or non-finite data.
pub fn final_window(values: &[f64], x: Option<&[f64]>, samples: usize) -> Option<FinalWindow> {
    let n = values.len();
    let w = samples.min(n);
    if w < 3 || x.is_some_and(|x| x.len() != n) {
        return None;
    }
    let start = n - w;
    let v = &values[start..];
    let xs: Vec<f64> = match x {
        Some(x) => x[start..].to_vec(),
        None => (start..n).map(|i| i as f64).collect(),
    };
    let (lo, hi) = v
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &y| {
            (a.min(y), b.max(y))
        });
    let xm = xs.iter().sum::<f64>() / w as f64;
    let ym = v.iter().sum::<f64>() / w as f64;
    let sxx: f64 = xs.iter().map(|x| (x - xm).powi(2)).sum();
    let sxy: f64 = xs.iter().zip(v).map(|(x, y)| (x - xm) * (y - ym)).sum();
    let slope = if sxx > 0.0 { sxy / sxx } else { 0.0 };
    let span = xs[w - 1] - xs[0];
    let out = FinalWindow {
        start,
        samples: w,
        half_range: 0.5 * (hi - lo),
        slope,
        drift: (slope * span).abs(),
    };
    (out.half_range.is_finite() && out.drift.is_finite()).then_some(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn t_quantiles_match_scipy() {
        // scipy.stats.t.ppf(0.975, dof), scipy 1.17.1 (reference library).
        for (dof, k) in [
            (1, 12.706204736174694),
            (4, 2.7764451051977934),
            (19, 2.0930240544083087),
            (29, 2.045229642132703),
            (1000, 1.9623390808264083),
        ] {
            let ours = t_factor(0.95, dof).unwrap();
            assert!((ours - k).abs() < 1e-9 * k, "dof {dof}: {ours} vs {k}");
        }
        assert_eq!(t_factor(0.95, 0), None);
        assert_eq!(t_factor(1.0, 5), None);
    }

    #[test]
    fn autocovariance_by_fft_is_the_direct_sum() {
        // Analytic: the definition summed directly.
        let x: Vec<f64> = (0..37)
            .map(|i| ((i * 7919) % 31) as f64 * 0.1 - 1.0)
            .collect();
        let n = x.len();
        let m = x.iter().sum::<f64>() / n as f64;
        let acf = autocorrelation(&x).unwrap();
        for k in 0..n {
            let direct: f64 =
                (0..n - k).map(|i| (x[i] - m) * (x[i + k] - m)).sum::<f64>() / n as f64;
            assert!((acf[k] - direct).abs() < 1e-12, "lag {k}");
        }
    }

    #[test]
    fn direct_and_fft_lags_give_one_time() {
        // Analytic: both paths sum the same autocovariance; a slowly varying signal pushes the
        // window past the directly summed lags.
        let x: Vec<f64> = (0..5000)
            .map(|i| (i as f64 / 300.0).sin() + ((i * 7919) % 31) as f64 * 0.01)
            .collect();
        let direct = autocorrelation_time_with(&x, SOKAL_C, usize::MAX, usize::MAX).unwrap();
        let mixed = autocorrelation_time_with(&x, SOKAL_C, 16 * x.len(), usize::MAX).unwrap();
        assert!(direct.window > 16, "window {}", direct.window);
        assert_eq!(direct.window, mixed.window);
        assert!((direct.tau - mixed.tau).abs() < 1e-9 * direct.tau);
    }

    #[test]
    fn block_means_give_the_same_uncertainty() {
        // Manufactured AR(1) noise, φ = 0.9 (τ_int = 9.5 samples, analytic): the standard
        // uncertainty of the mean from means of 5-sample blocks agrees with the one from the
        // samples within 10 %, and both give τ_int within 15 % of 9.5.
        let mut state = 12345u64;
        let mut normal = || {
            let mut u = || {
                state = state
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                ((state >> 11) as f64 + 0.5) / (1u64 << 53) as f64
            };
            let (a, b) = (u(), u());
            (-2.0 * a.ln()).sqrt() * (std::f64::consts::TAU * b).cos()
        };
        let mut e = 0.0;
        let x: Vec<f64> = (0..100_000)
            .map(|_| {
                e = 0.9 * e + normal();
                e
            })
            .collect();
        let full = autocorrelation_time_with(&x, SOKAL_C, usize::MAX, usize::MAX).unwrap();
        let blocks = autocorrelation_time_with(&x, SOKAL_C, usize::MAX, 20_000).unwrap();
        assert!((blocks.standard / full.standard - 1.0).abs() < 0.1);
        for t in [full.tau, blocks.tau] {
            assert!((t / 9.5 - 1.0).abs() < 0.15, "τ_int {t}");
        }
    }

    #[test]
    fn mser_of_a_step_finds_the_step() {
        // Manufactured: 50 samples at 10, then 450 alternating 0 ± 1: the step ends at 50.
        let v: Vec<f64> = (0..500)
            .map(|i| {
                if i < 50 {
                    10.0
                } else if i % 2 == 0 {
                    1.0
                } else {
                    -1.0
                }
            })
            .collect();
        let t = mser(&v, 5).unwrap();
        assert_eq!(t.start, 50);
        assert!(!t.at_search_end);
        // A constant: nothing to cut.
        let t = mser(&[3.0; 100], 5).unwrap();
        assert_eq!(t.start, 0);
        assert!(!t.at_search_end);
        // A ramp: the tail's variance keeps falling, the cut lands on the end of the search.
        let ramp: Vec<f64> = (0..500).map(|i| i as f64).collect();
        assert!(mser(&ramp, 5).unwrap().at_search_end);
        assert_eq!(mser(&[1.0; 9], 5), None);
    }

    #[test]
    fn batch_means_of_independent_batches() {
        // Manufactured: batches of 10 with means 0, 1, 0, 1, …; the standard uncertainty is
        // the standard deviation of the 20 batch means over √20.
        let v: Vec<f64> = (0..200).map(|i| ((i / 10) % 2) as f64).collect();
        let b = batch_means(&v, 20).unwrap();
        let s = (20.0 * 0.25 / 19.0f64).sqrt();
        assert!((b.standard - s / 20f64.sqrt()).abs() < 1e-12);
        assert!(
            (b.lag1 + 0.95).abs() < 1e-12,
            "alternating batches: lag-1 = −19/20"
        );
    }

    #[test]
    fn final_window_of_a_line() {
        // Analytic: y = 2 + 0.5 x over x = 0..9: slope 0.5, drift 0.5·9, half range 0.5·9/2.
        let v: Vec<f64> = (0..10).map(|i| 2.0 + 0.5 * i as f64).collect();
        let w = final_window(&v, None, 10).unwrap();
        assert!((w.slope - 0.5).abs() < 1e-12);
        assert!((w.drift - 4.5).abs() < 1e-12);
        assert!((w.half_range - 2.25).abs() < 1e-12);
    }
}
