//! The coverage study of the least-squares estimate (docs/method.md §5, a project method): the
//! case generator, the tallies and the tables. Owned by `examples/ls_coverage.rs` and included
//! by `tests/least_squares_reference.rs`, which runs it at a small size.
//!
//! Manufactured data on four to six meshes (the count uniform in {4, 5, 6}), h1 uniform in
//! [0.05, 0.5], each refinement ratio h_{i+1}/h_i uniform in [1.2, 2] independently, φ0 = 1,
//! coefficients uniform in [−1, 1]:
//!
//! * `power`: φ0 + α h^p with p uniform in [0.5, 4] (formal order 2);
//! * `(1,2)`: φ0 + a h + b h² (formal order 1);
//! * `(2,3)`: φ0 + a h² + b h³ (formal order 2).
//!
//! Only monotonically converging cases are kept: every difference between successive meshes
//! has the same sign and is smaller than the next coarser one. Each case is estimated twice,
//! with the published rules alone (`LsSettings::published()`) and with the order-2 floor
//! (`LsSettings::default()`). A result covers a case when |φ1 − φ0| ≤ U of the finest mesh; a
//! result with no U (the estimate fails, or the class is divergent) covers nothing.

#[path = "../support/sampling.rs"]
pub mod sampling;
pub use sampling::SplitMix64;
use sampling::{median, ratio};

use meshbound::estimate::least_squares::{estimate, LeastSquares, LsSettings};
use meshbound::estimate::Convergence;

/// The families of manufactured data.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Family {
    /// φ0 + α h^p, p uniform in [0.5, 4].
    Power,
    /// φ0 + a h^p1 + b h^p2.
    TwoTerm(f64, f64),
}

impl Family {
    /// The three families of the study, in table order.
    pub const ALL: [Family; 3] = [
        Family::Power,
        Family::TwoTerm(1.0, 2.0),
        Family::TwoTerm(2.0, 3.0),
    ];

    /// The formal order the study of this family would state.
    pub fn formal_order(self) -> f64 {
        match self {
            Family::Power => 2.0,
            Family::TwoTerm(p1, _) => p1,
        }
    }

    /// The label in the tables.
    pub fn label(self) -> String {
        match self {
            Family::Power => "power".to_string(),
            Family::TwoTerm(p1, p2) => format!("({p1:.0},{p2:.0})"),
        }
    }
}

/// The two rule sets compared.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Rules {
    /// The published rules (Eça & Hoekstra 2014 as written from memory), no floor.
    Published,
    /// The published rules with the order-2 floor for p ≥ 2 (the default).
    Guarded,
}

impl Rules {
    /// Both, in table order.
    pub const ALL: [Rules; 2] = [Rules::Published, Rules::Guarded];

    /// The label in the tables.
    pub fn label(self) -> &'static str {
        match self {
            Rules::Published => "published",
            Rules::Guarded => "guarded",
        }
    }

    fn settings(self, formal_order: f64) -> LsSettings {
        match self {
            Rules::Published => LsSettings::published(),
            Rules::Guarded => LsSettings {
                formal_order,
                ..LsSettings::default()
            },
        }
    }
}

/// One kept case, finest mesh first.
#[derive(Debug, Clone)]
pub struct Case {
    pub h: Vec<f64>,
    pub phi: Vec<f64>,
    pub phi0: f64,
}

/// Whether the values converge monotonically: all successive differences nonzero, of one
/// sign, and each smaller in magnitude than the next coarser one.
pub fn converges_monotonically(phi: &[f64]) -> bool {
    let d: Vec<f64> = phi.windows(2).map(|w| w[1] - w[0]).collect();
    d.iter().all(|x| *x != 0.0)
        && d.windows(2)
            .all(|w| w[0].signum() == w[1].signum() && w[0].abs() < w[1].abs())
}

/// Draws cases of a family until one converges monotonically.
pub fn draw(rng: &mut SplitMix64, family: Family) -> Case {
    loop {
        let n = 4 + (rng.uniform(0.0, 3.0) as usize).min(2);
        let mut h = vec![rng.uniform(0.05, 0.5)];
        for _ in 1..n {
            let r = rng.uniform(1.2, 2.0);
            let last = h[h.len() - 1];
            h.push(last * r);
        }
        let a = rng.uniform(-1.0, 1.0);
        let b = rng.uniform(-1.0, 1.0);
        let p = rng.uniform(0.5, 4.0);
        let phi0 = 1.0;
        let phi: Vec<f64> = h
            .iter()
            .map(|&x| match family {
                Family::Power => phi0 + a * x.powf(p),
                Family::TwoTerm(p1, p2) => phi0 + a * x.powf(p1) + b * x.powf(p2),
            })
            .collect();
        if converges_monotonically(&phi) {
            return Case { h, phi, phi0 };
        }
    }
}

/// The tallies of one rule set on one family.
#[derive(Debug, Clone, Default)]
pub struct Tally {
    pub cases: usize,
    pub covered: usize,
    /// Cases with no U (the estimate failed or the class is divergent).
    pub no_u: usize,
    /// Cases whose result carries no warning.
    pub quiet: usize,
    /// Misses among the quiet cases.
    pub quiet_misses: usize,
    /// Cases where the order-2 floor set U of the finest mesh.
    pub floor_set_u: usize,
    /// Where the floor set U: U/|φ1 − φ0| of the published rules and of the floor.
    pub floored: Vec<(f64, f64)>,
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
    /// Quiet misses as a share of all cases.
    pub fn quiet_miss_share_of_all(&self) -> f64 {
        ratio(self.quiet_misses, self.cases)
    }
    /// Share of the cases where the floor set U.
    pub fn floor_share(&self) -> f64 {
        ratio(self.floor_set_u, self.cases)
    }
    /// Median effectivity (NaN when there is none).
    pub fn median_effectivity(&self) -> f64 {
        median(self.effectivity.clone())
    }

    /// Median and largest U/|φ1 − φ0| where the floor set U: (published median, guarded
    /// median, guarded largest); NaN when the floor never set U.
    pub fn floored_effectivity(&self) -> (f64, f64, f64) {
        let before: Vec<f64> = self.floored.iter().map(|f| f.0).collect();
        let after: Vec<f64> = self.floored.iter().map(|f| f.1).collect();
        let largest = after.iter().copied().fold(f64::NAN, f64::max);
        (median(before), median(after), largest)
    }

    fn add(&mut self, result: Option<&LeastSquares>, error: f64) {
        self.cases += 1;
        let u = result
            .filter(|r| r.convergence != Convergence::Divergent)
            .and_then(|r| r.per_mesh.first())
            .map(|m| m.uncertainty);
        let covered = u.is_some_and(|u| error <= u);
        self.covered += usize::from(covered);
        self.no_u += usize::from(u.is_none());
        if result.is_some_and(|r| r.warnings.is_empty()) {
            self.quiet += 1;
            self.quiet_misses += usize::from(!covered);
        }
        self.floor_set_u += usize::from(result.is_some_and(LeastSquares::floor_governs));
        if let (Some(g), Some(u)) = (result.and_then(|r| r.guard.as_ref()), u) {
            if g.governs && error > 0.0 {
                self.floored
                    .push((g.published_uncertainty / error, u / error));
            }
        }
        if let Some(u) = u {
            if error > 0.0 {
                self.effectivity.push(u / error);
            }
        }
    }
}

/// Ranges of the fitted free order for the breakdown table.
pub const ORDER_RANGES: [&str; 4] = ["p < 0.5", "0.5 <= p < 2", "p >= 2", "no order"];

fn order_range(r: Option<&LeastSquares>) -> usize {
    match r.and_then(|r| r.order) {
        Some(p) if p < 0.5 => 0,
        Some(p) if p < 2.0 => 1,
        Some(_) => 2,
        None => 3,
    }
}

/// One row of the main table: a family, a rule set and its tally.
#[derive(Debug, Clone)]
pub struct Row {
    pub family: Family,
    pub rules: Rules,
    pub tally: Tally,
}

/// The tallies of one family split by the fitted free order (of the published run; the floor
/// does not change the order): `[range][rules]`.
#[derive(Debug, Clone)]
pub struct Breakdown {
    pub family: Family,
    pub by_order: Vec<[Tally; 2]>,
}

/// The whole result.
#[derive(Debug, Clone)]
pub struct Study {
    pub cases: usize,
    pub seed: u64,
    /// Family-major, rule sets in the order of [`Rules::ALL`].
    pub rows: Vec<Row>,
    pub breakdown: Vec<Breakdown>,
}

/// Runs the study: `cases` kept cases per family from `seed`.
pub fn run(cases: usize, seed: u64) -> Study {
    let names: Vec<String> = (1..=6).map(|i| format!("M{i}")).collect();
    let mut rows = Vec::new();
    let mut breakdown = Vec::new();
    for (k, family) in Family::ALL.into_iter().enumerate() {
        let mut rng = SplitMix64::new(seed.wrapping_add(k as u64));
        let mut tallies: [Tally; 2] = Default::default();
        let mut by_order: Vec<[Tally; 2]> =
            ORDER_RANGES.iter().map(|_| Default::default()).collect();
        for _ in 0..cases {
            let case = draw(&mut rng, family);
            let error = (case.phi[0] - case.phi0).abs();
            let n = case.h.len();
            let results: Vec<Option<LeastSquares>> = Rules::ALL
                .iter()
                .map(|r| {
                    estimate(
                        &names[..n],
                        &case.h,
                        &case.phi,
                        &r.settings(family.formal_order()),
                    )
                    .ok()
                })
                .collect();
            let range = order_range(results[0].as_ref());
            for (i, res) in results.iter().enumerate() {
                tallies[i].add(res.as_ref(), error);
                by_order[range][i].add(res.as_ref(), error);
            }
        }
        for (rules, tally) in Rules::ALL.into_iter().zip(tallies) {
            rows.push(Row {
                family,
                rules,
                tally,
            });
        }
        breakdown.push(Breakdown { family, by_order });
    }
    Study {
        cases,
        seed,
        rows,
        breakdown,
    }
}

fn share(x: f64) -> String {
    if x.is_nan() {
        "-".to_string()
    } else {
        format!("{x:.3}")
    }
}

/// The plain tables of the result: the main table, then the breakdown by fitted order.
pub fn table(s: &Study) -> String {
    let mut out = format!(
        "cases per family: {}, seed: {}; 4-6 meshes, ratios per step uniform in [1.2, 2], \
         h1 uniform in [0.05, 0.5]\n",
        s.cases, s.seed
    );
    out.push_str(
        "family  rules        cases  coverage   no U  quiet miss/quiet  quiet miss/all  median U/|e|  floor set U\n",
    );
    for r in &s.rows {
        let t = &r.tally;
        out.push_str(&format!(
            "{:<6}  {:<9}  {:>7}  {:>8}  {:>5}  {:>16}  {:>14}  {:>12.2}  {:>11}\n",
            r.family.label(),
            r.rules.label(),
            t.cases,
            share(t.coverage()),
            share(t.no_u_share()),
            share(t.quiet_miss_share()),
            share(t.quiet_miss_share_of_all()),
            t.median_effectivity(),
            share(t.floor_share()),
        ));
    }
    out.push_str(
        "\nwhere the floor set U: cases, median U/|e| published -> guarded, largest guarded U/|e|\n",
    );
    for r in s.rows.iter().filter(|r| r.rules == Rules::Guarded) {
        let (before, after, largest) = r.tally.floored_effectivity();
        out.push_str(&format!(
            "{:<6}  {:>7}  {:>6.2} -> {:>6.2}  {:>8.2}\n",
            r.family.label(),
            r.tally.floored.len(),
            before,
            after,
            largest
        ));
    }
    out.push_str("\nby fitted free order: cases, coverage published / guarded, median U/|e| published / guarded\n");
    out.push_str(
        "family  free order      cases  coverage pub  coverage grd  median pub  median grd\n",
    );
    for b in &s.breakdown {
        for (label, [p, g]) in ORDER_RANGES.iter().zip(&b.by_order) {
            if p.cases == 0 {
                continue;
            }
            out.push_str(&format!(
                "{:<6}  {:<12}  {:>7}  {:>12}  {:>12}  {:>10.2}  {:>10.2}\n",
                b.family.label(),
                label,
                p.cases,
                share(p.coverage()),
                share(g.coverage()),
                p.median_effectivity(),
                g.median_effectivity(),
            ));
        }
    }
    out
}
