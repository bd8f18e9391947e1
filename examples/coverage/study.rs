//! The coverage study of the three-mesh rules (method notes §11, a project method): the case
//! generator, the tallies and the table. Owned by `examples/coverage.rs` and included by
//! `tests/rules_reference.rs`, which runs it at a small size.
//!
//! Manufactured three-mesh data φ(h) = φ0 + a·h^{p1} + b·h^{p2} with (p1, p2) = (1, 2) and
//! (2, 3), formal order p1, ratios r21, r32 uniform in [1.3, 2], a, b uniform in [−1, 1], h1
//! uniform in [0.05, 0.5], φ0 = 1; only monotonically converging cases (0 < R < 1, Stern et al.
//! 2001) are kept. A rule covers a case when |φ1 − φ0| ≤ U; a rule that gives no U does not
//! cover it (and always carries a warning saying why).

#[path = "../support/sampling.rs"]
pub mod sampling;
pub use sampling::SplitMix64;
use sampling::{median, ratio};

use meshbound::estimate::rules::{self, Rule, RuleInputs};

/// The families (p1, p2); p1 is the formal order.
pub const FAMILIES: [(f64, f64); 2] = [(1.0, 2.0), (2.0, 3.0)];

/// One kept case.
#[derive(Debug, Clone, Copy)]
pub struct Case {
    pub h: [f64; 3],
    pub phi: [f64; 3],
    pub phi0: f64,
}

/// Draws cases until one converges monotonically (0 < R < 1).
pub fn draw(rng: &mut SplitMix64, family: (f64, f64)) -> Case {
    loop {
        let h1 = rng.uniform(0.05, 0.5);
        let r21 = rng.uniform(1.3, 2.0);
        let r32 = rng.uniform(1.3, 2.0);
        let a = rng.uniform(-1.0, 1.0);
        let b = rng.uniform(-1.0, 1.0);
        let phi0 = 1.0;
        let h = [h1, h1 * r21, h1 * r21 * r32];
        let phi = h.map(|x| phi0 + a * x.powf(family.0) + b * x.powf(family.1));
        let (e21, e32) = (phi[1] - phi[0], phi[2] - phi[1]);
        if e32 != 0.0 {
            let r = e21 / e32;
            if r > 0.0 && r < 1.0 {
                return Case { h, phi, phi0 };
            }
        }
    }
}

/// The tallies of one rule on one family.
#[derive(Debug, Clone, Default)]
pub struct Tally {
    pub cases: usize,
    pub covered: usize,
    /// Cases where the rule gave no U.
    pub no_u: usize,
    /// Cases whose result carries no warning.
    pub quiet: usize,
    /// Misses among the quiet cases.
    pub quiet_misses: usize,
    /// U/|φ1 − φ0| where both exist and the error is not zero.
    pub effectivity: Vec<f64>,
}

impl Tally {
    pub fn coverage(&self) -> f64 {
        ratio(self.covered, self.cases)
    }
    pub fn no_u_share(&self) -> f64 {
        ratio(self.no_u, self.cases)
    }
    /// Share of misses among the cases with no warning (NaN when no case is quiet).
    pub fn quiet_miss_share(&self) -> f64 {
        ratio(self.quiet_misses, self.quiet)
    }
    /// Median effectivity (NaN when there is none).
    pub fn median_effectivity(&self) -> f64 {
        median(self.effectivity.clone())
    }
}

/// One row of the result: a family, a rule and its tally.
#[derive(Debug, Clone)]
pub struct Row {
    pub family: (f64, f64),
    pub rule: Rule,
    pub tally: Tally,
}

/// Runs the study: `cases` kept cases per family from `seed`. Rows are family-major, rules in
/// the order of [`Rule::ALL`].
pub fn run(cases: usize, seed: u64) -> Vec<Row> {
    let mut rows = Vec::new();
    for (k, family) in FAMILIES.into_iter().enumerate() {
        let mut rng = SplitMix64::new(seed.wrapping_add(k as u64));
        let mut tallies: Vec<Tally> = Rule::ALL.iter().map(|_| Tally::default()).collect();
        for _ in 0..cases {
            let case = draw(&mut rng, family);
            let error = (case.phi[0] - case.phi0).abs();
            let results = match RuleInputs::new(case.h, case.phi, family.0) {
                Ok(inputs) => Some(rules::all(&inputs)),
                Err(_) => None,
            };
            for (i, t) in tallies.iter_mut().enumerate() {
                t.cases += 1;
                let (u, quiet) = match &results {
                    Some(rs) => (rs[i].uncertainty, rs[i].warnings.is_empty()),
                    None => (None, false),
                };
                let covered = u.is_some_and(|u| error <= u);
                t.covered += usize::from(covered);
                t.no_u += usize::from(u.is_none());
                if quiet {
                    t.quiet += 1;
                    t.quiet_misses += usize::from(!covered);
                }
                if let Some(u) = u {
                    if error > 0.0 {
                        t.effectivity.push(u / error);
                    }
                }
            }
        }
        for (rule, tally) in Rule::ALL.into_iter().zip(tallies) {
            rows.push(Row {
                family,
                rule,
                tally,
            });
        }
    }
    rows
}

/// The plain table of the result.
pub fn table(rows: &[Row]) -> String {
    let mut out = String::from(
        "family (p1,p2)  rule                cases    coverage  no U   quiet misses (n)  median U/|e|\n",
    );
    for r in rows {
        let t = &r.tally;
        out.push_str(&format!(
            "({:.0},{:.0})           {:<18}  {:>7}  {:>8.3}  {:>5.3}  {:>16}  {:>12.2}\n",
            r.family.0,
            r.family.1,
            if r.rule == Rule::DEFAULT {
                format!("{} *", r.rule.label())
            } else {
                r.rule.label().to_string()
            },
            t.cases,
            t.coverage(),
            t.no_u_share(),
            if t.quiet == 0 {
                "- (0)".to_string()
            } else {
                format!("{:.3} ({})", t.quiet_miss_share(), t.quiet_misses)
            },
            t.median_effectivity(),
        ));
    }
    out.push_str("* the default governing rule (settings.uncertainty_rule)\n");
    out
}
