//! Coverage of the stated statistical uncertainty of a history's mean on synthetic histories of
//! known mean: an exponential start-up plus stationary AR(1) noise, several scenarios, a fixed
//! seed.
//!
//! ```text
//! cargo run --release --example history_coverage -- [--runs 200] [--seed 2026]
//! ```
//!
//! Each scenario is a history of n samples x_t = 1 + A e^{−t/τ} + e_t with
//! e_t = φ e_{t−1} + σ √(1 − φ²) η_t (σ = 0.05, η standard normal). Printed per scenario: the
//! share of runs whose interval mean ± U (95 %) holds the true mean 1, the same share for the
//! interval that treats the samples as independent (1.96 s/√m), the share of runs that state
//! no uncertainty, the median of the stated standard uncertainty over the analytic standard
//! deviation of the mean of an AR(1) process, and the median start of the steady part in time
//! constants. The figures are in docs/method.md ("Monitor histories").

use meshbound::history::{analyse_values, HistorySettings};

struct Rng(u64);

impl Rng {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

/// Analytic standard deviation of the mean of m samples of a stationary AR(1) process.
fn ar1_mean_sd(m: usize, phi: f64, sigma: f64) -> f64 {
    let mf = m as f64;
    let f = (1.0 + phi) / (1.0 - phi)
        - 2.0 * phi * (1.0 - phi.powi(m as i32)) / (mf * (1.0 - phi).powi(2));
    (sigma * sigma / mf * f).sqrt()
}

fn main() {
    let mut runs = 200usize;
    let mut seed = 2026u64;
    let args: Vec<String> = std::env::args().skip(1).collect();
    for pair in args.chunks(2) {
        match (
            pair[0].as_str(),
            pair.get(1).and_then(|v| v.parse::<u64>().ok()),
        ) {
            ("--runs", Some(v)) => runs = v as usize,
            ("--seed", Some(v)) => seed = v,
            _ => {
                eprintln!("usage: history_coverage [--runs N] [--seed S]");
                std::process::exit(2);
            }
        }
    }
    let sigma = 0.05;
    println!("runs per scenario: {runs}, seed: {seed}; true mean 1, σ = {sigma}");
    println!(
        "{:>7} {:>5} {:>6} {:>5}  {:>8} {:>11} {:>6} {:>9} {:>10}",
        "n", "A/σ", "τ", "φ", "covered", "independent", "no U", "u/u_AR1", "start/τ"
    );
    for (n, jump, tau, phi) in [
        (10_000, 0.5, 100.0, 0.9),
        (4_000, 0.5, 100.0, 0.9),
        (20_000, 0.5, 100.0, 0.9),
        (10_000, 2.0, 100.0, 0.9),
        (10_000, 0.5, 100.0, 0.5),
        (10_000, 0.5, 100.0, 0.0),
        (10_000, 0.5, 100.0, 0.97),
        (2_000, 0.5, 20.0, 0.8),
        (100_000, 0.5, 1000.0, 0.95),
    ] {
        let mut rng = Rng(seed);
        let (mut covered, mut naive, mut none) = (0usize, 0usize, 0usize);
        let mut ratio = Vec::new();
        let mut starts = Vec::new();
        for _ in 0..runs {
            let k = sigma * f64::sqrt(1.0 - phi * phi);
            let mut e = sigma * rng.normal();
            let v: Vec<f64> = (0..n)
                .map(|t| {
                    if t > 0 {
                        e = phi * e + k * rng.normal();
                    }
                    1.0 + jump * (-(t as f64) / tau).exp() + e
                })
                .collect();
            let Ok(r) = analyse_values(&v, None, &HistorySettings::default()) else {
                none += 1;
                continue;
            };
            starts.push(r.steady.start_index as f64 / tau);
            let Some(s) = &r.statistical else {
                none += 1;
                continue;
            };
            if (r.mean - 1.0).abs() <= s.expanded {
                covered += 1;
            }
            let m = r.steady.samples as f64;
            let sd = (v[r.steady.start_index..]
                .iter()
                .map(|x| (x - r.mean).powi(2))
                .sum::<f64>()
                / (m - 1.0))
                .sqrt();
            if (r.mean - 1.0).abs() <= 1.96 * sd / m.sqrt() {
                naive += 1;
            }
            ratio.push(s.standard / ar1_mean_sd(r.steady.samples, phi, sigma));
        }
        ratio.sort_by(f64::total_cmp);
        starts.sort_by(f64::total_cmp);
        let med = |v: &[f64]| v.get(v.len() / 2).copied().unwrap_or(f64::NAN);
        let share = |c: usize| c as f64 / runs as f64;
        println!(
            "{n:>7} {:>5.0} {tau:>6.0} {phi:>5.2}  {:>8.3} {:>11.3} {:>6.3} {:>9.3} {:>10.2}",
            jump / sigma,
            share(covered),
            share(naive),
            share(none),
            med(&ratio),
            med(&starts)
        );
    }
}
