//! Times the reduction of a long monitor history.
//!
//! ```text
//! cargo run --release --example history_bench -- generate N FILE
//! cargo run --release --example history_bench -- mean FILE     (read Cd, its plain mean)
//! cargo run --release --example history_bench -- full FILE     (read Cd and Time, the whole analysis)
//! cargo run --release --example history_bench -- plot FILE SVG    (the history figure of Cd)
//! cargo run --release --example history_bench -- parts FILE    (each statistic of Cd timed alone, on its steady part)
//! ```
//!
//! `generate` writes N rows (default 1 000 000) of six columns in the solver's force-coefficient
//! layout (`#` header block, `# Time Cm Cd Cl Cl(f) Cl(r)`, tab-separated rows): an invented
//! start-up decaying over 2 000 samples plus AR(1) noise (φ = 0.9). `mean` reads the `Cd`
//! column and prints its plain mean (what `examples/history_peer.py` computes with pandas and
//! polars on the same file); `full` reads `Cd` with the `Time` abscissa and runs
//! `history::analyse` (steady part, batch means, autocorrelation time, final window). Each
//! prints the figures and the time spent inside the process; time the whole process from
//! outside (`/usr/bin/time -v`) to compare with the Python peers.

use meshbound::history::{analyse, read_history, stats, ColumnRef, HistorySettings, ReadOptions};
use std::io::Write;
use std::path::Path;
use std::time::Instant;

/// splitmix64: a small deterministic generator, enough for benchmark noise.
fn mix(state: &mut u64) -> f64 {
    *state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^= z >> 31;
    ((z >> 11) as f64 + 0.5) / (1u64 << 53) as f64
}

fn generate(n: usize, path: &Path) -> std::io::Result<()> {
    let mut out = std::io::BufWriter::new(std::fs::File::create(path)?);
    writeln!(
        out,
        "# Force coefficients (synthetic benchmark history, invented numbers)"
    )?;
    writeln!(out, "# magUInf     : 12.5")?;
    writeln!(out, "#")?;
    writeln!(out, "# Time\tCm\tCd\tCl\tCl(f)\tCl(r)")?;
    let mut s = 2026u64;
    let mut e = 0.0f64;
    for i in 0..n {
        // Box–Muller from two uniforms.
        let g = (-2.0 * mix(&mut s).ln()).sqrt() * (std::f64::consts::TAU * mix(&mut s)).cos();
        e = 0.9 * e + 0.004 * g;
        let start = (-(i as f64) / 2000.0).exp();
        let cd = 0.8125 + 0.4 * start + e;
        let cl = -0.045 + 0.01 * start + 0.5 * e;
        let cm = 0.0125 + 0.1 * e;
        writeln!(
            out,
            "{}\t{cm:.8e}\t{cd:.8e}\t{cl:.8e}\t{:.8e}\t{:.8e}",
            i + 1,
            cl / 2.0 + cm,
            cl / 2.0 - cm
        )?;
    }
    out.flush()
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let fail = |m: &str| -> ! {
        eprintln!("history_bench: {m}");
        std::process::exit(2)
    };
    match args
        .iter()
        .map(String::as_str)
        .collect::<Vec<_>>()
        .as_slice()
    {
        ["generate", n, file] => {
            let n: usize = n.parse().unwrap_or_else(|_| fail("N must be a count"));
            generate(n, Path::new(file)).unwrap_or_else(|e| fail(&e.to_string()));
        }
        [mode @ ("mean" | "full"), file] => {
            let t = Instant::now();
            let mut o = ReadOptions::column(ColumnRef::Name("Cd".into()));
            if *mode == "full" {
                o.abscissa = Some(ColumnRef::Name("Time".into()));
            }
            let s = read_history(Path::new(file), &o).unwrap_or_else(|e| fail(&e.to_string()));
            let read = t.elapsed();
            if *mode == "mean" {
                let m = s.values.iter().sum::<f64>() / s.values.len() as f64;
                println!(
                    "rows {} mean {m:.10e} read {:.3} s",
                    s.values.len(),
                    read.as_secs_f64()
                );
            } else {
                let r = analyse(&s, &HistorySettings::default())
                    .unwrap_or_else(|e| fail(&e.to_string()));
                let u = r.statistical.as_ref().map_or(f64::NAN, |s| s.expanded);
                println!(
                    "rows {} mean {:.10e} U95 {u:.3e} steady from {} read {:.3} s total {:.3} s",
                    r.samples,
                    r.mean,
                    r.steady.start_index,
                    read.as_secs_f64(),
                    t.elapsed().as_secs_f64()
                );
            }
        }
        ["plot", file, svg] => {
            let mut o = ReadOptions::column(ColumnRef::Name("Cd".into()));
            o.abscissa = Some(ColumnRef::Name("Time".into()));
            let s = read_history(Path::new(file), &o).unwrap_or_else(|e| fail(&e.to_string()));
            let r = analyse(&s, &HistorySettings::default()).unwrap_or_else(|e| fail(&e.to_string()));
            let doc = meshbound::history::plot::history_plot(
                &s.values,
                s.abscissa.as_deref(),
                s.abscissa_name.as_deref(),
                &r,
            )
            .unwrap_or_else(|| fail("nothing to draw"));
            std::fs::write(svg, doc).unwrap_or_else(|e| fail(&e.to_string()));
        }
        ["parts", file] => {
            let o = ReadOptions::column(ColumnRef::Name("Cd".into()));
            let s = read_history(Path::new(file), &o).unwrap_or_else(|e| fail(&e.to_string()));
            let t = Instant::now();
            let cut = stats::mser(&s.values, 5);
            let t1 = t.elapsed().as_secs_f64();
            // The rest on the steady part, as the analysis does.
            let v = &s.values[cut.map_or(0, |c| c.start)..];
            let b = stats::batch_means(v, 20);
            let t2 = t.elapsed().as_secs_f64();
            let a = stats::autocorrelation_time(v, stats::SOKAL_C);
            let t3 = t.elapsed().as_secs_f64();
            let w = stats::final_window(v, None, v.len() / 10);
            let t4 = t.elapsed().as_secs_f64();
            println!(
                "mser {t1:.3} s, batch means {:.3} s, autocorrelation time {:.3} s, final window {:.3} s",
                t2 - t1,
                t3 - t2,
                t4 - t3
            );
            println!("{cut:?}\n{b:?}\n{a:?}\n{w:?}");
        }
        _ => fail("usage: history_bench generate N FILE | mean FILE | full FILE | plot FILE SVG | parts FILE"),
    }
}
