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
    let (cases, seed) = study::sampling::cases_and_seed("coverage");
    let rows = study::run(cases, seed);
    println!("cases per family: {cases}, seed: {seed}");
    print!("{}", study::table(&rows));
}
