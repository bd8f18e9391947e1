//! Coverage of the three-mesh uncertainty rules on manufactured data (method notes §11).
//!
//! ```text
//! cargo run --release --example coverage -- [--cases N] [--seed S]
//! ```
//!
//! For each family φ(h) = φ0 + a·h^{p1} + b·h^{p2} and each rule of
//! `meshbound::estimate::rules` it prints the coverage (share of cases with |φ1 − φ0| ≤ U),
//! the share of cases where the rule gave no U, the share of misses among the cases whose
//! result carries no warning ("quiet misses"), and the median effectivity U/|φ1 − φ0|.
//! Numerical uncertainty on manufactured data is not model-test acceptance of a machine.

#[path = "coverage/study.rs"]
mod study;

fn main() {
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
            eprintln!("usage: coverage [--cases N] [--seed S]");
            std::process::exit(2);
        }
    }
    let rows = study::run(cases, seed);
    println!("cases per family: {cases}, seed: {seed}");
    print!("{}", study::table(&rows));
}
