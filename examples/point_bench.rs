//! Per-point estimates of a field with four or more meshes: the general least-squares
//! estimator against the per-point path (`PointEstimator`), measured (never asserted).
//!
//! ```sh
//! cargo run --release --example point_bench -- [POINTS] [MESHES] [GENERAL_POINTS]
//! ```
//!
//! POINTS (default 1 000 000) manufactured points on MESHES (4–6, default 5) meshes with
//! ratios 1.3: `φ = φ0 + α h^p` with p, α, φ0 varying from point to point and noise of up to a
//! tenth of the point's range on half of the points, arbitrary values (no structure) on a
//! twentieth. The general estimator runs on the first GENERAL_POINTS (default 20 000) points
//! only; the per-point path on all of them, on one thread and then with rayon. Also prints
//! how the two agree on those points (same figures to 1e-9, handed over to the general
//! estimator, or a flat minimum where the orders differ) and the load average.

use meshbound::estimate::least_squares::{self, LsSettings};
use meshbound::estimate::point::{PointEstimator, PointSettings};
use rayon::prelude::*;
use std::hint::black_box;
use std::time::Instant;

struct Rng(u64);

impl Rng {
    fn next(&mut self) -> f64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

fn load() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .map(|s| s.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
        .unwrap_or_else(|_| "unknown".into())
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let arg = |i: usize, d: usize| args.get(i).and_then(|s| s.parse().ok()).unwrap_or(d);
    let points = arg(1, 1_000_000);
    let meshes = arg(2, 5).clamp(4, 6);
    let general_points = arg(3, 20_000).min(points);
    let h: Vec<f64> = (0..meshes).map(|i| 1.3f64.powi(i as i32)).collect();
    let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
    let mut values = Vec::with_capacity(points * meshes);
    for k in 0..points {
        if k % 20 == 19 {
            for _ in 0..meshes {
                values.push(rng.next() - 0.5);
            }
            continue;
        }
        let p = 0.5 + 3.5 * rng.next();
        let alpha = (rng.next() - 0.5) * 0.2;
        let phi0 = 10.0 * (rng.next() - 0.5);
        let noise = if k % 2 == 0 { 0.1 * rng.next() } else { 0.0 };
        let spread = alpha.abs() * (h[meshes - 1].powf(p) - 1.0);
        for &x in &h {
            values.push(phi0 + alpha * x.powf(p) + noise * spread * (rng.next() - 0.5));
        }
    }
    println!(
        "{points} points on {meshes} meshes (h = {h:?}); load average before: {}",
        load()
    );

    let settings = LsSettings::default();
    let names: Vec<String> = (1..=meshes).map(|i| format!("m{i}")).collect();
    let est = match PointEstimator::new(&h, &PointSettings::default()) {
        Ok(e) => e,
        Err(e) => {
            eprintln!("{e}");
            return;
        }
    };

    // The general estimator, one thread.
    let sub = &values[..general_points * meshes];
    let t = Instant::now();
    for phi in sub.chunks_exact(meshes) {
        let _ = black_box(least_squares::estimate(
            &names,
            &h,
            black_box(phi),
            &settings,
        ));
    }
    let general_ns = t.elapsed().as_secs_f64() * 1e9 / general_points as f64;
    println!(
        "general least squares, 1 thread: {:.0} ns per point ({:.0} points/s, {general_points} points)",
        general_ns,
        1e9 / general_ns
    );

    // The per-point path, one thread.
    let t = Instant::now();
    let mut monotonic = 0usize;
    for phi in values.chunks_exact(meshes) {
        let r = est.estimate(black_box(phi));
        if r.convergence == meshbound::estimate::Convergence::Monotonic {
            monotonic += 1;
        }
    }
    let fast_ns = t.elapsed().as_secs_f64() * 1e9 / points as f64;
    println!(
        "per-point path, 1 thread: {:.0} ns per point ({:.2e} points/s; {monotonic} monotonic); {:.0}× the general estimator",
        fast_ns,
        1e9 / fast_ns,
        general_ns / fast_ns
    );

    // The per-point path, rayon over every point.
    let threads = rayon::current_num_threads();
    let t = Instant::now();
    let sum: f64 = values
        .par_chunks_exact(meshes)
        .map(|phi| est.estimate(phi).uncertainty.unwrap_or(0.0))
        .sum();
    let par_s = t.elapsed().as_secs_f64();
    black_box(sum);
    println!(
        "per-point path, rayon ({threads} threads): {:.3} s for {points} points, {:.0} ns per point wall, {:.2e} points/s",
        par_s,
        par_s * 1e9 / points as f64,
        points as f64 / par_s
    );

    // Agreement on the general estimator's points.
    let (mut same, mut handed, mut flat, mut worst) = (0usize, 0usize, 0usize, 0.0_f64);
    for phi in sub.chunks_exact(meshes) {
        let (r, flags) = est.estimate_flagged(phi);
        if flags.general_path {
            handed += 1;
            continue;
        }
        let Ok(g) = least_squares::estimate(&names, &h, phi, &settings) else {
            continue;
        };
        let gu = g.per_mesh[0].uncertainty;
        let (lo, hi) = phi
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                (a.min(v), b.max(v))
            });
        let size = (hi - lo).max(gu);
        let du = (r.uncertainty.unwrap_or(f64::NAN) - gu).abs() / size;
        let (pf, pg) = (r.order.unwrap_or(f64::NAN), g.order.unwrap_or(f64::NAN));
        let dp = (pf - pg).abs();
        if r.convergence == g.convergence && du <= 1e-9 && dp <= 1e-9 * pg.abs().max(1.0) {
            same += 1;
        } else {
            flat += 1;
            worst = worst.max(du);
        }
    }
    println!(
        "agreement on {general_points} points: {same} same to 1e-9, {handed} handed to the general estimator, {flat} otherwise (largest |ΔU|/size {worst:.1e})"
    );
    println!("load average after: {}", load());
}
