//! Times the streamed field assessment on a synthetic field.
//!
//! ```text
//! cargo run --release --example field_bench -- N [--keep DIR] [--mode MODE]
//!     [--chunk-rows ROWS] [--block-bytes BYTES]
//! cargo run --release --example field_bench -- N DIR MODE      (the older positional form)
//! ```
//!
//! Writes three probe files `mesh1.csv` … `mesh3.csv` (finest first, sizes 1, 1.3, 1.625) of
//! `N` points (default 1 000 000) into a temporary directory, or into `DIR` with `--keep`, kept
//! afterwards and reused by later runs with the same `N`. MODE:
//! - `all` (default) times
//!   1. `assess_field` without a per-point file (reading, parsing and estimating),
//!   2. `assess_field` with the per-point file (everything, including the atomic write),
//!   3. the estimate alone over values held in memory (fast path, all threads), and the general
//!      `three_grid::estimate` on a sample, for the speed-up of the fast path;
//! - `read` and `full` run step 1 or step 2 alone (for `/usr/bin/time` and `perf`);
//! - `generate` only writes the files (`benches/compare.sh` uses it).
//!
//! `--chunk-rows` and `--block-bytes` set the streaming options (`FieldOptions`).
//!
//! Peak memory (VmHWM) is read after steps 1 and 2, before step 3 allocates its arrays.
//!
//! The field is manufactured: `cp = φ0(x, y) + α(x, y) h^2` on a unit square of probes, with
//! round-off-free plateaus where α = 0 (no change) and noise over part of the square, so that
//! every convergence class occurs. The scenario and numbers are invented for the benchmark.

use meshbound::estimate::three_grid::{self, ThreeGridSettings};
use meshbound::field::{assess_field_with, FastThreeGrid, FieldOptions, FieldSpec};
use rayon::prelude::*;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Instant;

/// Sizes of the three meshes, finest first (unequal ratios 1.3 and 1.25).
const H: [f64; 3] = [1.0, 1.3, 1.3 * 1.25];

/// splitmix64: a small deterministic generator, enough for benchmark noise.
fn mix(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

fn unit(i: u64, mesh: u64) -> f64 {
    (mix(i.wrapping_mul(4).wrapping_add(mesh)) >> 11) as f64 / (1u64 << 53) as f64 - 0.5
}

/// The value at probe `i` of `n` on mesh `m`.
fn value(i: u64, n: u64, m: usize) -> f64 {
    let side = (n as f64).sqrt().ceil().max(1.0) as u64;
    let x = (i % side) as f64 / side as f64;
    let y = (i / side) as f64 / side as f64;
    let phi0 = -1.2 + 2.0 * (std::f64::consts::PI * x).sin() * (1.0 - 0.6 * y);
    // A plateau without mesh dependence (no change) in one corner.
    let alpha = if x < 0.05 && y < 0.2 {
        0.0
    } else {
        0.02 * (1.0 + x * y)
    };
    // Noise over the band 0.6 < y < 0.8, comparable to the mesh differences.
    let noise = if (0.6..0.8).contains(&y) { 0.03 } else { 0.0 };
    phi0 + alpha * H[m] * H[m] + noise * unit(i, m as u64)
}

fn generate(dir: &Path, n: u64) -> std::io::Result<Vec<PathBuf>> {
    (0..3)
        .map(|m| {
            let path = dir.join(format!("mesh{}.csv", m + 1));
            let mut w = std::io::BufWriter::with_capacity(1 << 20, std::fs::File::create(&path)?);
            writeln!(w, "probe,cp")?;
            for i in 0..n {
                writeln!(w, "{i},{}", value(i, n, m))?;
            }
            w.flush()?;
            Ok(path)
        })
        .collect()
}

/// CPU seconds of this process so far (user + system, all threads; 100 ticks per second).
fn cpu_s() -> f64 {
    std::fs::read_to_string("/proc/self/stat")
        .ok()
        .and_then(|st| {
            let rest = st
                .rsplit_once(')')?
                .1
                .split_whitespace()
                .collect::<Vec<_>>();
            let u: f64 = rest.get(11)?.parse().ok()?;
            let s: f64 = rest.get(12)?.parse().ok()?;
            Some((u + s) / 100.0)
        })
        .unwrap_or(f64::NAN)
}

fn peak_mib() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kib: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib / 1024.0)
}

/// Command-line options (see the module documentation).
struct Args {
    n: u64,
    keep: Option<PathBuf>,
    mode: String,
    opts: FieldOptions,
}

fn parse_args() -> Result<Args, String> {
    let mut args = Args {
        n: 1_000_000,
        keep: None,
        mode: "all".into(),
        opts: FieldOptions::default(),
    };
    let mut positional = Vec::new();
    let mut it = std::env::args().skip(1);
    while let Some(a) = it.next() {
        let mut value = |name: &str| it.next().ok_or(format!("{name} needs a value"));
        match a.as_str() {
            "--keep" => args.keep = Some(PathBuf::from(value("--keep")?)),
            "--mode" => args.mode = value("--mode")?,
            "--chunk-rows" => {
                args.opts.chunk_rows = value("--chunk-rows")?
                    .parse()
                    .map_err(|e| format!("--chunk-rows: {e}"))?
            }
            "--block-bytes" => {
                args.opts.block_bytes = value("--block-bytes")?
                    .parse()
                    .map_err(|e| format!("--block-bytes: {e}"))?
            }
            _ if a.starts_with("--") => return Err(format!("unknown option {a}")),
            _ => positional.push(a),
        }
    }
    let mut pos = positional.into_iter();
    if let Some(n) = pos.next() {
        args.n = n.parse::<f64>().map_err(|e| format!("N: {e}"))? as u64;
    }
    // The older positional form `N DIR MODE` still works.
    if let Some(d) = pos.next() {
        args.keep = Some(PathBuf::from(d));
    }
    if let Some(m) = pos.next() {
        args.mode = m;
    }
    if !["all", "read", "full", "generate"].contains(&args.mode.as_str()) {
        return Err(format!(
            "unknown mode {} (all, read, full or generate)",
            args.mode
        ));
    }
    Ok(args)
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let Args {
        n,
        keep,
        mode,
        opts,
    } = parse_args()?;
    let tmp = tempfile::tempdir()?;
    let dir = keep.clone().unwrap_or_else(|| tmp.path().to_path_buf());
    std::fs::create_dir_all(&dir)?;
    println!(
        "field_bench: {n} points per mesh, {} threads, files in {}",
        rayon::current_num_threads(),
        dir.display()
    );

    let t = Instant::now();
    let existing: Vec<PathBuf> = (1..=3).map(|m| dir.join(format!("mesh{m}.csv"))).collect();
    let stamp = dir.join("points.txt");
    let files = if keep.is_some()
        && std::fs::read_to_string(&stamp).ok().as_deref() == Some(n.to_string().as_str())
    {
        existing
    } else {
        let f = generate(&dir, n)?;
        std::fs::write(&stamp, n.to_string())?;
        f
    };
    let bytes: u64 = files
        .iter()
        .map(|f| std::fs::metadata(f).map(|m| m.len()).unwrap_or(0))
        .sum();
    println!(
        "generate       {:8.3} s  ({:.0} MB of probe files)",
        t.elapsed().as_secs_f64(),
        bytes as f64 / 1e6
    );
    if mode == "generate" {
        return Ok(());
    }
    let settings = ThreeGridSettings::default();
    let mut spec = FieldSpec {
        name: "bench".into(),
        id: Some("probe".into()),
        columns: vec!["cp".into()],
        files,
        write: None,
        reading: Default::default(),
        probe_points: None,
        estimate: Default::default(),
    };

    if mode == "full" {
        let out = dir.join("out").join("points.csv");
        std::fs::create_dir_all(dir.join("out"))?;
        spec.write = Some(out.clone());
        let (t, c) = (Instant::now(), cpu_s());
        let sink = meshbound::sink::DirectFile::create(&out)?;
        assess_field_with(&spec, H, &settings, &opts, Some(Box::new(sink)))?;
        let wall = t.elapsed().as_secs_f64();
        println!(
            "full (written) {wall:8.3} s  {:6.2} M points/s  (cpu {:.2} s, peak {:.0} MiB)",
            n as f64 / wall / 1e6,
            cpu_s() - c,
            peak_mib().unwrap_or(f64::NAN)
        );
        return Ok(());
    }
    let (t, c) = (Instant::now(), cpu_s());
    let s = assess_field_with(&spec, H, &settings, &opts, None)?;
    let read_only = t.elapsed().as_secs_f64();
    if mode == "read" {
        println!(
            "read+estimate  {read_only:8.3} s  {:6.2} M points/s  (cpu {:.2} s, peak {:.0} MiB)",
            n as f64 / read_only / 1e6,
            cpu_s() - c,
            peak_mib().unwrap_or(f64::NAN)
        );
        return Ok(());
    }
    println!(
        "read+estimate  {read_only:8.3} s  {:6.2} M points/s  (cpu {:.2} s)",
        n as f64 / read_only / 1e6,
        cpu_s() - c
    );
    let out = dir.join("out").join("points.csv");
    std::fs::create_dir_all(dir.join("out"))?;
    spec.write = Some(out.clone());
    let (t, c) = (Instant::now(), cpu_s());
    let sink = meshbound::sink::DirectFile::create(&out)?;
    let s2 = assess_field_with(&spec, H, &settings, &opts, Some(Box::new(sink)))?;
    let full = t.elapsed().as_secs_f64();
    let full_cpu = cpu_s() - c;
    let out_mb = std::fs::metadata(&out).map(|m| m.len()).unwrap_or(0) as f64 / 1e6;
    println!(
        "full (written) {full:8.3} s  {:6.2} M points/s  (cpu {full_cpu:.2} s, {out_mb:.0} MB written)",
        n as f64 / full / 1e6
    );
    if let Some(p) = peak_mib() {
        println!("peak memory    {p:8.1} MiB (VmHWM after both runs)");
    }
    assert_eq!(s.columns, s2.columns);
    println!("summary        {}", serde_json::to_string(&s2)?);

    // Estimation alone, on values in memory.
    let phi: Vec<[f64; 3]> = (0..n)
        .into_par_iter()
        .map(|i| [value(i, n, 0), value(i, n, 1), value(i, n, 2)])
        .collect();
    let fast = FastThreeGrid::new(H, &settings)?;
    let t = Instant::now();
    let sum: f64 = phi
        .par_iter()
        .map(|p| fast.estimate(*p).uncertainty.unwrap_or(0.0))
        .sum();
    let est = t.elapsed().as_secs_f64();
    println!(
        "estimate only  {est:8.3} s  {:6.2} M points/s (fast path, checksum {sum:.6e})",
        n as f64 / est / 1e6
    );
    let sample = phi.len().min(200_000);
    let t = Instant::now();
    let fast_sum: f64 = phi[..sample]
        .iter()
        .map(|p| fast.estimate(*p).uncertainty.unwrap_or(0.0))
        .sum();
    let fast_one = t.elapsed().as_secs_f64() / sample as f64;
    let t = Instant::now();
    let general_sum: f64 = phi[..sample]
        .iter()
        .map(|p| {
            three_grid::estimate(H, *p, &settings)
                .ok()
                .and_then(|r| r.uncertainty)
                .unwrap_or(0.0)
        })
        .sum();
    let general_one = t.elapsed().as_secs_f64() / sample as f64;
    println!(
        "per point, one thread: fast {:.0} ns, general {:.0} ns (x{:.0}); sums agree to {:.1e}",
        fast_one * 1e9,
        general_one * 1e9,
        general_one / fast_one,
        ((fast_sum - general_sum) / general_sum).abs()
    );
    println!(
        "parsing and lining up (estimate) ≈ {:.3} s of the read+estimate run",
        (read_only - est).max(0.0)
    );
    Ok(())
}
