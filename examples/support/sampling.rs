//! What the coverage studies share (examples/coverage and examples/ls_coverage, and the tests
//! that run them at a small size): a small deterministic generator, shares, medians and the
//! command line `[--cases N] [--seed S]`.

/// splitmix64 (Steele, Lea & Flood 2014): a tiny deterministic generator, enough for sampling.
pub struct SplitMix64(u64);

impl SplitMix64 {
    pub fn new(seed: u64) -> Self {
        SplitMix64(seed)
    }
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [lo, hi) from the top 53 bits.
    pub fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        let u = (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
        lo + (hi - lo) * u
    }
}

/// a/b, NaN when b = 0.
pub fn ratio(a: usize, b: usize) -> f64 {
    if b == 0 {
        f64::NAN
    } else {
        a as f64 / b as f64
    }
}

/// The median (NaN when there is none).
pub fn median(mut v: Vec<f64>) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

/// `[--cases N] [--seed S]` from the command line (defaults 100 000 and 2026); exits with
/// status 2 and a usage line naming `program` on anything else.
#[allow(dead_code)] // the tests that include the studies have no command line
pub fn cases_and_seed(program: &str) -> (usize, u64) {
    let mut cases: usize = 100_000;
    let mut seed: u64 = 2026;
    let mut args = std::env::args().skip(1);
    while let Some(a) = args.next() {
        let value = args.next();
        let parsed = match (a.as_str(), value.as_deref()) {
            ("--cases", Some(v)) => v.parse().map(|n| cases = n).is_ok(),
            ("--seed", Some(v)) => v.parse().map(|s| seed = s).is_ok(),
            _ => false,
        };
        if !parsed {
            eprintln!("usage: {program} [--cases N] [--seed S]");
            std::process::exit(2);
        }
    }
    (cases, seed)
}
