//! Coverage of the least-squares estimate on manufactured data, with the published rules alone
//! and with the order-2 floor (docs/method.md §5).
//!
//! ```text
//! cargo run --release --example ls_coverage -- [--cases N] [--seed S]
//! ```
//!
//! Defaults: 100 000 kept cases per family, seed 2026. For each family (exact power laws with
//! p in [0.5, 4]; φ0 + a h + b h²; φ0 + a h² + b h³) and each rule set it prints the coverage
//! (share of cases with |φ1 − φ0| ≤ U of the finest mesh), the share of cases with no U, the
//! share of misses among the cases whose result carries no warning ("quiet misses"), the median
//! effectivity U/|φ1 − φ0| and the share of cases where the floor set U; then the same split by
//! the fitted free order. Measured, not a test: the test suite runs the study at a small size
//! (`tests/least_squares_reference.rs`). Numerical uncertainty on manufactured data is not
//! model-test acceptance of a machine.

#[path = "ls_coverage/study.rs"]
mod study;

fn main() {
    let (cases, seed) = study::sampling::cases_and_seed("ls_coverage");
    let s = study::run(cases, seed);
    print!("{}", study::table(&s));
}
