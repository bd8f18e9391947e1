//! Time of a transfer between meshes (src/transfer/): N scattered source points in the unit
//! square or cube sampling sin(πx)cos(πy) + x² (× exp(z/2) in 3-D), transferred onto N other
//! scattered points. Prints the time to index the source, the time of the transfer, the status
//! counts, the RMS actual error and the share of points whose stated error bounds the actual
//! one, for error factors 1, 2 and 3 (the stated error is proportional to the factor).
//!
//! cargo run --release --example transfer_bench -- 1000000 3
//! (arguments: number of points, dimension 2 or 3; defaults 1000000 and 3)

use std::f64::consts::PI;
use std::time::Instant;

use meshbound::transfer::{PointStatus, Source, StatusCounts, TransferOptions};

struct Rng(u64);

impl Rng {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        (z >> 11) as f64 / (1u64 << 53) as f64
    }
}

fn field<const D: usize>(p: &[f64; D]) -> f64 {
    let z = if D > 2 { (0.5 * p[2]).exp() } else { 1.0 };
    (PI * p[0]).sin() * (PI * p[1]).cos() * z + p[0] * p[0]
}

fn bench<const D: usize>(n: usize) {
    let mut rng = Rng(2026);
    let points: Vec<[f64; D]> = (0..n)
        .map(|_| std::array::from_fn(|_| rng.next()))
        .collect();
    let targets: Vec<[f64; D]> = (0..n)
        .map(|_| std::array::from_fn(|_| rng.next()))
        .collect();
    let values = points.iter().map(field).collect();
    let t0 = Instant::now();
    let source = match Source::new(points, values) {
        Ok(s) => s,
        Err(e) => {
            eprintln!("{e}");
            return;
        }
    };
    let index = t0.elapsed().as_secs_f64();
    let options = TransferOptions::for_dimension(D);
    let t1 = Instant::now();
    let results = match source.transfer(&targets, &options) {
        Ok(r) => r,
        Err(e) => {
            eprintln!("{e}");
            return;
        }
    };
    let transfer = t1.elapsed().as_secs_f64();
    println!(
        "{D}-D, {n} source points onto {n} targets, k = {}, {} threads: index {index:.3} s, transfer {transfer:.3} s",
        options.neighbours,
        rayon::current_num_threads()
    );
    println!("{:?}", StatusCounts::of(&results));
    let interior: Vec<(f64, f64)> = results
        .iter()
        .zip(&targets)
        .filter(|(r, _)| r.status == PointStatus::Interior)
        .filter_map(|(r, t)| Some(((r.value? - field(t)).abs(), r.error?)))
        .collect();
    let rms = (interior.iter().map(|(a, _)| a * a).sum::<f64>() / interior.len() as f64).sqrt();
    println!("interior RMS actual error {rms:.3e}");
    for factor in [1.0, 2.0, 3.0] {
        let hits = interior
            .iter()
            .filter(|(a, e)| *a <= e * factor / options.error_factor)
            .count();
        println!(
            "error factor {factor}: stated error bounds the actual one at {:.4} of interior points",
            hits as f64 / interior.len() as f64
        );
    }
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let n = args
        .first()
        .and_then(|a| a.parse().ok())
        .unwrap_or(1_000_000usize);
    match args.get(1).map(String::as_str) {
        Some("2") => bench::<2>(n),
        _ => bench::<3>(n),
    }
}
