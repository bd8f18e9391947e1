//! Sweep interpolation and breakdown against scipy.
//!
//! Source of every check value here: `tests/reference/pchip_scipy.json`, written by
//! `tests/reference/pchip_scipy.py` with `scipy.interpolate.PchipInterpolator` (values and
//! first derivatives), `numpy.interp` (piecewise-linear) and scipy's `PPoly.solve` (PCHIP
//! threshold crossings), on manufactured data sets; the file records the scipy version.
//! Agreement is required to 1e-12 (relative or absolute) for values and derivatives, and to
//! 1e-11 relative for crossing x (the bisection stops at 1e-12 relative width).
//!
//! The file holds data and results as round-trip decimal strings, parsed here with Rust's
//! correctly rounded `str::parse::<f64>`, so every double arrives exactly as scipy had it.

use std::path::PathBuf;

use approx::relative_eq;
use meshbound::sweep::{find_breakdown, DropRule, Interpolant, Interpolation, ReferenceKind};
use serde::Deserialize;

#[derive(Deserialize)]
struct Reference {
    scipy_version: String,
    cases: Vec<Case>,
    breakdowns: Vec<BreakdownCase>,
}

/// A double written as a decimal string.
#[derive(Deserialize, Clone, Copy)]
#[serde(try_from = "String")]
struct Exact(f64);

impl TryFrom<String> for Exact {
    type Error = std::num::ParseFloatError;
    fn try_from(s: String) -> Result<Self, Self::Error> {
        s.parse().map(Exact)
    }
}

fn plain(v: &[Exact]) -> Vec<f64> {
    v.iter().map(|e| e.0).collect()
}

#[derive(Deserialize)]
struct Case {
    name: String,
    x: Vec<Exact>,
    y: Vec<Exact>,
    queries: Vec<Exact>,
    pchip: Vec<Exact>,
    pchip_derivative: Vec<Exact>,
    linear: Vec<Exact>,
}

#[derive(Deserialize)]
struct BreakdownCase {
    case: String,
    reference: RefRule,
    drop: DropJson,
    reference_value: Exact,
    threshold: Exact,
    x: Exact,
    bracket: (Exact, Exact),
}

#[derive(Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
enum RefRule {
    Plateau { from: f64 },
    Highest,
    Value { value: f64 },
}

#[derive(Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
enum DropJson {
    Relative { amount: f64 },
    Absolute { amount: f64 },
}

fn load() -> Reference {
    // CI may point at a freshly regenerated file (see .ci/references).
    let path = std::env::var_os("MESHBOUND_PCHIP_REFERENCE")
        .map(PathBuf::from)
        .unwrap_or_else(|| {
            PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/reference/pchip_scipy.json")
        });
    let text = match std::fs::read_to_string(&path) {
        Ok(t) => t,
        Err(e) => panic!(
            "reference file {} is missing ({e}); run `python3 tests/reference/pchip_scipy.py`",
            path.display()
        ),
    };
    match serde_json::from_str(&text) {
        Ok(r) => r,
        Err(e) => panic!("reference file {} is malformed: {e}", path.display()),
    }
}

/// Largest deviation seen, absolute and relative.
#[derive(Default)]
struct Worst {
    abs: f64,
    rel: f64,
}

impl Worst {
    fn check(&mut self, what: &str, got: Option<f64>, want: f64) {
        let Some(got) = got else {
            panic!("{what}: no value, scipy gives {want}");
        };
        let abs = (got - want).abs();
        self.abs = self.abs.max(abs);
        if want.abs() > 0.0 {
            self.rel = self.rel.max(abs / want.abs());
        }
        assert!(
            relative_eq!(got, want, epsilon = 1e-12, max_relative = 1e-12),
            "{what}: got {got:e}, scipy {want:e}"
        );
    }
}

#[test]
fn pchip_and_linear_match_scipy() {
    let r = load();
    assert!(!r.scipy_version.is_empty());
    assert!(r.cases.len() >= 8, "too few reference data sets");
    let (mut val, mut der, mut lin) = (Worst::default(), Worst::default(), Worst::default());
    let mut n = 0usize;
    for c in &r.cases {
        let (x, y, queries) = (plain(&c.x), plain(&c.y), plain(&c.queries));
        let (pchip, slope, linear) = (
            plain(&c.pchip),
            plain(&c.pchip_derivative),
            plain(&c.linear),
        );
        let p = match Interpolant::new(&x, &y, Interpolation::Pchip) {
            Ok(p) => p,
            Err(e) => panic!("{}: {e}", c.name),
        };
        let l = match Interpolant::new(&x, &y, Interpolation::Linear) {
            Ok(p) => p,
            Err(e) => panic!("{}: {e}", c.name),
        };
        let mut sorted: Vec<(f64, f64)> = queries.iter().copied().zip(pchip.clone()).collect();
        sorted.sort_by(|a, b| a.0.total_cmp(&b.0));
        let qs: Vec<f64> = sorted.iter().map(|s| s.0).collect();
        let walked = p.eval_sorted(&qs);
        for (i, &q) in queries.iter().enumerate() {
            let at = format!("{} at x = {q}", c.name);
            val.check(&format!("pchip {at}"), p.eval(q), pchip[i]);
            der.check(&format!("pchip slope {at}"), p.derivative(q), slope[i]);
            lin.check(&format!("linear {at}"), l.eval(q), linear[i]);
            n += 1;
        }
        for (w, s) in walked.iter().zip(&sorted) {
            val.check(
                &format!("pchip (sorted walk) {} at x = {}", c.name, s.0),
                *w,
                s.1,
            );
        }
    }
    println!(
        "scipy {}: {n} points; largest deviation pchip value {:.2e} abs / {:.2e} rel, \
         derivative {:.2e} abs / {:.2e} rel, linear {:.2e} abs / {:.2e} rel",
        r.scipy_version, val.abs, val.rel, der.abs, der.rel, lin.abs, lin.rel
    );
}

#[test]
fn breakdown_matches_scipy_roots() {
    let r = load();
    assert!(!r.breakdowns.is_empty());
    let mut worst = 0.0f64;
    for b in &r.breakdowns {
        let Some(c) = r.cases.iter().find(|c| c.name == b.case) else {
            panic!("breakdown refers to unknown case {}", b.case);
        };
        let reference = match b.reference {
            RefRule::Plateau { from } => ReferenceKind::Plateau { from },
            RefRule::Highest => ReferenceKind::Highest,
            RefRule::Value { value } => ReferenceKind::Value(value),
        };
        let drop = match b.drop {
            DropJson::Relative { amount } => DropRule::Relative(amount),
            DropJson::Absolute { amount } => DropRule::Absolute(amount),
        };
        let (x, y) = (plain(&c.x), plain(&c.y));
        let (want_ref, want_thr, want_x) = (b.reference_value.0, b.threshold.0, b.x.0);
        let got = match find_breakdown(&x, &y, &reference, &drop, Interpolation::Pchip) {
            Ok(g) => g,
            Err(e) => panic!("{}: {e}", b.case),
        };
        assert!(
            relative_eq!(got.reference, want_ref, max_relative = 1e-14),
            "{}: reference {} vs {}",
            b.case,
            got.reference,
            want_ref
        );
        assert!(
            relative_eq!(got.threshold, want_thr, max_relative = 1e-14),
            "{}: threshold {} vs {}",
            b.case,
            got.threshold,
            want_thr
        );
        assert_eq!(
            got.bracket,
            (b.bracket.0 .0, b.bracket.1 .0),
            "{}: crossing interval",
            b.case
        );
        worst = worst.max((got.x - want_x).abs() / want_x.abs());
        assert!(
            relative_eq!(got.x, want_x, max_relative = 1e-11),
            "{}: breakdown x {:e} vs scipy {:e}",
            b.case,
            got.x,
            want_x
        );
    }
    println!("breakdown x: largest relative deviation from scipy {worst:.2e}");
}
