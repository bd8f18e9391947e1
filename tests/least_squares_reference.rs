//! The eight least-squares fits compared with scipy.
//!
//! Source of the check values: `tests/reference/least_squares_scipy.json`, written by
//! `tests/reference/least_squares_scipy.py` with scipy.optimize.least_squares (PyPI package
//! scipy; its version is recorded in the JSON) on noisy manufactured data. The fits are those
//! of Eça & Hoekstra 2014 (J. Comput. Phys. 262, 104–130) as written in the project's method
//! notes §4 — the rules are from memory of the paper. The test fails when the JSON is missing.
//!
//! Also: the least-squares coverage study (`examples/ls_coverage.rs`, docs/method.md §5) at a
//! small size.

use meshbound::estimate::least_squares::{
    estimate, LsSettings, DEFAULT_ORDER_MAX, DEFAULT_ORDER_MIN, EXCLUDED_ORDER_HALF_WIDTH,
};
use serde_json::Value;

#[path = "../examples/ls_coverage/study.rs"]
mod ls_study;

/// Relative tolerance of the comparison (the brief: 1e-6 relative).
const REL_TOL: f64 = 1e-6;

fn num(v: &Value, what: &str) -> f64 {
    match v.as_f64() {
        Some(x) => x,
        None => panic!("{what}: expected a number, got {v}"),
    }
}

/// Relative deviation with an absolute floor for values near zero.
fn deviation(ours: f64, reference: f64, floor: f64) -> f64 {
    (ours - reference).abs() / reference.abs().max(floor)
}

#[test]
fn fits_agree_with_scipy() {
    // CI may point at a freshly regenerated file (see .ci/references).
    let path = std::env::var("MESHBOUND_LSQ_REFERENCE").unwrap_or_else(|_| {
        concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/reference/least_squares_scipy.json"
        )
        .to_string()
    });
    let text = match std::fs::read_to_string(&path) {
        Ok(t) => t,
        Err(e) => panic!(
            "reference file {path} is missing ({e}); run tests/reference/least_squares_scipy.py"
        ),
    };
    let doc: Value = match serde_json::from_str(&text) {
        Ok(v) => v,
        Err(e) => panic!("reference file {path} is not JSON: {e}"),
    };
    // the reference was computed on the same searched order range as the default settings
    let range = &doc["order_range"];
    let settings = LsSettings::default();
    assert!((num(&range[0], "order_range[0]") - DEFAULT_ORDER_MIN).abs() <= 0.0);
    assert!((num(&range[1], "order_range[1]") - DEFAULT_ORDER_MAX).abs() <= 0.0);
    assert!((num(&doc["excluded_band"], "excluded_band") - EXCLUDED_ORDER_HALF_WIDTH).abs() <= 0.0);

    let cases = doc["cases"].as_array().cloned().unwrap_or_default();
    assert!(cases.len() >= 5, "too few reference cases");
    let mut worst = (0.0_f64, String::new());
    let mut compared = 0usize;
    for case in &cases {
        let name = case["name"].as_str().unwrap_or("?").to_string();
        let h: Vec<f64> = case["h"]
            .as_array()
            .into_iter()
            .flatten()
            .map(|v| num(v, "h"))
            .collect();
        let phi: Vec<f64> = case["phi"]
            .as_array()
            .into_iter()
            .flatten()
            .map(|v| num(v, "phi"))
            .collect();
        let names: Vec<String> = (1..=h.len()).map(|i| format!("M{i}")).collect();
        let result = match estimate(&names, &h, &phi, &settings) {
            Ok(r) => r,
            Err(e) => panic!("{name}: estimate failed: {e}"),
        };
        // compare the serialised form: it is the contract other programs read
        let ours = match serde_json::to_value(&result) {
            Ok(v) => v,
            Err(e) => panic!("{name}: serialisation failed: {e}"),
        };
        let scale = phi.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        let h_max = h.iter().copied().fold(0.0_f64, f64::max);
        let refs = case["fits"].as_array().cloned().unwrap_or_default();
        assert_eq!(refs.len(), 8, "{name}: eight reference fits expected");
        for rf in &refs {
            let kind = rf["kind"].as_str().unwrap_or("?");
            let weighted = rf["weighted"].as_bool().unwrap_or(false);
            let label = format!(
                "{name}/{kind}/{}",
                if weighted { "weighted" } else { "unweighted" }
            );
            let of = ours["fits"]
                .as_array()
                .into_iter()
                .flatten()
                .find(|f| f["kind"] == kind && f["weighted"] == weighted);
            let Some(of) = of else {
                panic!("{label}: fit missing in our result")
            };
            let mut check = |what: &str, a: f64, b: f64, floor: f64| {
                let d = deviation(a, b, floor);
                assert!(
                    d <= REL_TOL,
                    "{label} {what}: ours {a:.15e}, scipy {b:.15e}, relative deviation {d:.3e}"
                );
                if d > worst.0 {
                    worst = (d, format!("{label} {what}"));
                }
                compared += 1;
            };
            // floors: values whose size is 1e-9 of the data's magnitude count as near zero
            let floor_phi = 1e-9 * scale;
            check(
                "phi0",
                num(&of["phi0"], "phi0"),
                num(&rf["phi0"], "phi0"),
                floor_phi,
            );
            check(
                "std_dev",
                num(&of["std_dev"], "std_dev"),
                num(&rf["std_dev"], "std_dev"),
                floor_phi,
            );
            match (rf["order"].as_f64(), of["order"].as_f64()) {
                (Some(b), Some(a)) => check("order", a, b, 1e-9),
                (None, None) => {}
                (b, a) => panic!("{label} order: ours {a:?}, scipy {b:?}"),
            }
            let rc: Vec<f64> = rf["coefficients"]
                .as_array()
                .into_iter()
                .flatten()
                .map(|v| num(v, "coefficient"))
                .collect();
            let oc: Vec<f64> = of["coefficients"]
                .as_array()
                .into_iter()
                .flatten()
                .map(|v| num(v, "coefficient"))
                .collect();
            assert_eq!(rc.len(), oc.len(), "{label}: coefficient count");
            let powers: Vec<f64> = match kind {
                "free" => vec![rf["order"].as_f64().unwrap_or(1.0)],
                "first" => vec![1.0],
                "second" => vec![2.0],
                _ => vec![1.0, 2.0],
            };
            for (k, (a, b)) in oc.iter().zip(&rc).enumerate() {
                // a coefficient whose term changes φ by 1e-9 of its magnitude on the coarsest
                // mesh counts as near zero
                let floor = floor_phi / h_max.powf(powers[k]);
                check(&format!("coefficient {k}"), *a, *b, floor);
            }
        }
    }
    println!(
        "scipy {} reference: {compared} numbers compared, largest relative deviation {:.3e} ({})",
        doc["scipy_version"].as_str().unwrap_or("?"),
        worst.0,
        worst.1
    );
    assert!(compared >= 5 * 8 * 4);
}

#[test]
fn ls_coverage_study_small_run() {
    // docs/method.md §5 at a small size: the shape of the result and the properties that hold
    // by construction. Checks: the floor only raises U (so coverage never drops and the
    // published run never reports a floor); on exact power laws the guarded rules cover every
    // case with a U (analytic: for p ≥ 2 the floor bounds the error of the finest mesh since
    // r^p − 1 ≥ r² − 1, and for 0.5 ≤ p < 2 the free fit is exact and Fs = 1.25 ≥ 1). The
    // figures themselves are measured, not check values.
    use ls_study::{Family, Rules, ORDER_RANGES};
    let n = 300;
    let s = ls_study::run(n, 7);
    assert_eq!(s.rows.len(), Family::ALL.len() * Rules::ALL.len());
    assert_eq!(s.breakdown.len(), Family::ALL.len());
    let find = |family: Family, rules: Rules| {
        s.rows
            .iter()
            .find(|r| r.family == family && r.rules == rules)
            .map(|r| r.tally.clone())
            .unwrap_or_default()
    };
    for r in &s.rows {
        let t = &r.tally;
        assert_eq!(t.cases, n);
        assert!(t.covered + t.no_u <= n && t.quiet_misses <= t.quiet && t.quiet <= n);
        assert!((0.0..=1.0).contains(&t.coverage()));
        assert!(t.median_effectivity() > 0.0);
        match r.rules {
            Rules::Published => assert_eq!(t.floor_set_u, 0),
            Rules::Guarded => {
                let p = find(r.family, Rules::Published);
                assert!(t.covered >= p.covered, "{}", r.family.label());
                assert_eq!(t.no_u, p.no_u);
            }
        }
    }
    for b in &s.breakdown {
        assert_eq!(b.by_order.len(), ORDER_RANGES.len());
        let total: usize = b.by_order.iter().map(|[p, _]| p.cases).sum();
        assert_eq!(total, n);
        // the floor acts only from p = 2 on where the formal order is 2, and from p = 0.5 on
        // (the formal-order floor) where it is 1
        let from = if b.family.formal_order() < 2.0 { 1 } else { 2 };
        for [_, g] in &b.by_order[..from] {
            assert_eq!(g.floor_set_u, 0);
        }
    }
    let power = find(Family::Power, Rules::Guarded);
    assert_eq!(
        power.covered + power.no_u,
        n,
        "exact power laws are all covered"
    );
    assert!(power.floor_set_u > 0);
    // every kept case converges monotonically
    let mut rng = ls_study::SplitMix64::new(11);
    for family in Family::ALL {
        let c = ls_study::draw(&mut rng, family);
        assert!((4..=6).contains(&c.h.len()));
        assert!(c.h.windows(2).all(|w| (1.2..2.0).contains(&(w[1] / w[0]))));
        assert!(ls_study::converges_monotonically(&c.phi));
    }
    assert!(!ls_study::converges_monotonically(&[1.0, 1.1, 1.05, 1.2]));
    // the table has a header line, a column line, one line per row, and the breakdown
    let text = ls_study::table(&s);
    assert!(text.starts_with("cases per family: 300, seed: 7;"));
    assert!(text.lines().count() >= 2 + s.rows.len() + 2);
    // same seed, same numbers (the study is deterministic)
    let again = ls_study::run(n, 7);
    assert_eq!(ls_study::table(&again), text);
}
