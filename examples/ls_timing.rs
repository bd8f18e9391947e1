//! Time per least-squares estimate, measured (never asserted).
//!
//! Run with `cargo run --release --example ls_timing`. The data are noisy manufactured values
//! (φ = 0.91 − 0.004 h^1.7 plus noise) on five and eight meshes.

use meshbound::estimate::least_squares::{estimate, LsSettings};
use std::hint::black_box;
use std::time::Instant;

fn time_case(label: &str, h: &[f64], phi: &[f64], reps: u32) {
    let names: Vec<String> = (1..=h.len()).map(|i| format!("M{i}")).collect();
    let settings = LsSettings::default();
    // warm-up
    for _ in 0..reps / 10 {
        let _ = black_box(estimate(&names, h, phi, &settings));
    }
    let start = Instant::now();
    for _ in 0..reps {
        let _ = black_box(estimate(
            black_box(&names),
            black_box(h),
            black_box(phi),
            &settings,
        ));
    }
    let us = start.elapsed().as_secs_f64() * 1e6 / f64::from(reps);
    println!("{label}: {us:.1} µs per estimate ({reps} repetitions)");
}

fn main() {
    time_case(
        "5 meshes",
        &[1.0, 1.3, 1.7, 2.2, 2.9],
        &[0.9059958, 0.9037413, 0.9001442, 0.8946823, 0.8855637],
        2000,
    );
    time_case(
        "8 meshes",
        &[1.0, 1.15, 1.35, 1.6, 1.9, 2.25, 2.7, 3.2],
        &[
            10.01392, 9.995512, 10.01913, 10.01353, 10.03872, 10.03051, 10.06031, 10.03222,
        ],
        2000,
    );
}
