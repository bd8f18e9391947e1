//! Sweeps end to end: analytic breakdowns, the band against the scalar estimator, the JSON
//! contract, and every bad sweep input (exit 2 with the key path or the CSV line).

mod common;

use approx::assert_relative_eq;
use common::*;
use meshbound::estimate::rules::{self, Rule, RuleInputs};
use meshbound::estimate::three_grid::{self, ThreeGridSettings};
use meshbound::sweep::{find_breakdown, DropRule, Interpolation, ReferenceKind};

/// Analytic efficiency curve η(σ) = η0 (1 − exp(−(σ − σc)/w)) (manufactured): its 1 % drop
/// below η0 is at σ* = σc + w ln 100 exactly.
fn eta(s: f64, eta0: f64, sc: f64, w: f64) -> f64 {
    eta0 * (1.0 - (-(s - sc) / w).exp())
}

#[test]
fn analytic_breakdown_dense_and_sparse() {
    let (eta0, sc, w) = (0.91, 0.12, 0.01);
    let exact = sc + w * 100f64.ln();
    // Dense sampling: 400 points from 0.4 down to σc + 0.002.
    let xs: Vec<f64> = (0..400)
        .map(|i| 0.4 - (0.4 - sc - 0.002) * i as f64 / 399.0)
        .collect();
    let ys: Vec<f64> = xs.iter().map(|&s| eta(s, eta0, sc, w)).collect();
    for kind in [Interpolation::Pchip, Interpolation::Linear] {
        let b = find_breakdown(
            &xs,
            &ys,
            &ReferenceKind::Value(eta0),
            &DropRule::Relative(0.01),
            kind,
        )
        .unwrap();
        assert_relative_eq!(b.x, exact, max_relative = 1e-4);
    }
    // Sparse sampling: the crossing must still be bracketed by the neighbouring points.
    let xs: Vec<f64> = vec![0.4, 0.3, 0.24, 0.2, 0.18, 0.16, 0.15, 0.14, 0.13];
    let ys: Vec<f64> = xs.iter().map(|&s| eta(s, eta0, sc, w)).collect();
    let b = find_breakdown(
        &xs,
        &ys,
        &ReferenceKind::Value(eta0),
        &DropRule::Relative(0.01),
        Interpolation::Pchip,
    )
    .unwrap();
    assert!(
        b.bracket.0 <= exact && exact <= b.bracket.1,
        "{:?} vs {exact}",
        b.bracket
    );
    assert!(b.bracket.0 <= b.x && b.x <= b.bracket.1);
}

#[test]
fn hump_before_breakdown_uses_the_first_crossing_below_the_reference() {
    // Manufactured: a plateau of 0.9, a hump to 0.905 (above the reference), then a linear fall;
    // with linear interpolation the 1 % crossing (0.891) lies exactly on the falling segment
    // between (0.2, 0.9) and (0.1, 0.8): x = 0.2 − (0.9 − 0.891)/1.0 = 0.191 (analytic).
    let xs = [0.5, 0.4, 0.3, 0.25, 0.2, 0.1];
    let ys = [0.9, 0.9, 0.905, 0.903, 0.9, 0.8];
    let b = find_breakdown(
        &xs,
        &ys,
        &ReferenceKind::Plateau { from: 0.4 },
        &DropRule::Relative(0.01),
        Interpolation::Linear,
    )
    .unwrap();
    assert_relative_eq!(b.x, 0.191, max_relative = 1e-10);
}

const SWEEP_STUDY: &str = "format: 1
title: sweep test
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.5}
  - {name: C, size: 2.25}
sweeps:
  cav:
    x: sigma
    responses: [efficiency]
    interpolation: linear
    data:
      A: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.90, 0.90, 0.898, 0.88, 0.80]}
      B: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.89, 0.89, 0.886, 0.86, 0.76]}
      C: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.87, 0.87, 0.858, 0.83, 0.70]}
    breakdown:
      - {response: efficiency, drop: 1%, reference: plateau, plateau_from: 0.3}
    band: {response: efficiency, at: fine}
";

#[test]
fn sweep_json_follows_the_contract_and_the_band_reproduces_the_scalar_estimator() {
    let w = Workdir::new();
    w.write("s.yaml", SWEEP_STUDY);
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let s = &v["sweeps"][0];
    for k in ["name", "x", "interpolation", "breakdown", "band"] {
        assert!(s.get(k).is_some(), "sweep key {k}");
    }
    assert_eq!(s["interpolation"], "linear");
    let b = &s["breakdown"][0];
    for k in [
        "response",
        "drop",
        "relative",
        "per_mesh",
        "x_estimate",
        "reference_estimate",
    ] {
        assert!(b.get(k).is_some(), "breakdown key {k}");
    }
    assert_eq!(b["relative"], true);
    assert_relative_eq!(b["drop"].as_f64().unwrap(), 0.01, max_relative = 1e-15);
    for k in ["three_grid", "least_squares", "uncertainty"] {
        assert!(b["x_estimate"].get(k).is_some() && b["reference_estimate"].get(k).is_some());
    }
    let pm = b["per_mesh"].as_array().unwrap();
    assert_eq!(pm[0]["mesh"], "A");
    // Linear interpolation, analytic crossing on mesh A: reference 0.9, threshold 0.891,
    // between (0.2, 0.898) and (0.15, 0.88): x = 0.15 + 0.05 (0.891 − 0.88)/(0.898 − 0.88).
    assert_relative_eq!(
        pm[0]["x"].as_f64().unwrap(),
        0.15 + 0.05 * 0.011 / 0.018,
        max_relative = 1e-10
    );
    assert_relative_eq!(
        pm[0]["reference"].as_f64().unwrap(),
        0.9,
        max_relative = 1e-12
    );
    // The breakdown estimate equals the scalar estimator on the per-mesh breakdown values.
    let bx: Vec<f64> = pm.iter().map(|m| m["x"].as_f64().unwrap()).collect();
    let direct = three_grid::estimate(
        [1.0, 1.5, 2.25],
        [bx[0], bx[1], bx[2]],
        &ThreeGridSettings::default(),
    )
    .unwrap();
    let got = &b["x_estimate"]["three_grid"];
    assert_eq!(got["convergence"], direct.convergence.label());
    assert_relative_eq!(
        got["observed_order"].as_f64().unwrap(),
        direct.observed_order.unwrap(),
        max_relative = 1e-12
    );
    // The band at the (shared) sweep points reproduces the scalar estimator point by point.
    let band = &s["band"];
    let pts = band["points"].as_array().unwrap();
    assert_eq!(pts.len(), 5);
    let data = [
        [0.80, 0.76, 0.70],
        [0.88, 0.86, 0.83],
        [0.898, 0.886, 0.858],
        [0.90, 0.89, 0.87],
        [0.90, 0.89, 0.87],
    ];
    for (p, phi) in pts.iter().zip(data) {
        for k in [
            "x",
            "value",
            "extrapolated",
            "absolute",
            "lower",
            "upper",
            "convergence",
        ] {
            assert!(p.get(k).is_some(), "band point key {k}");
        }
        let d = three_grid::estimate([1.0, 1.5, 2.25], phi, &ThreeGridSettings::default()).unwrap();
        assert_eq!(p["convergence"], d.convergence.label());
        assert_relative_eq!(p["value"].as_f64().unwrap(), phi[0], max_relative = 1e-12);
        // U by the default rule on the same three values (the scalar rules of
        // meshbound::estimate::rules, checked against an independent Python implementation).
        let inputs = RuleInputs::from_estimate([1.0, 1.5, 2.25], phi, 2.0, d.clone()).unwrap();
        assert_relative_eq!(
            p["absolute"].as_f64().unwrap(),
            rules::apply(Rule::DEFAULT, &inputs).uncertainty.unwrap(),
            max_relative = 1e-12
        );
        assert_relative_eq!(
            p["extrapolated"].as_f64().unwrap(),
            d.extrapolated.unwrap(),
            max_relative = 1e-12
        );
    }
    for k in ["classes", "mean_relative", "max_relative", "mean_order"] {
        assert!(band["summary"].get(k).is_some(), "band summary key {k}");
    }
    assert_eq!(
        band["summary"]["classes"]["monotonic"].as_u64().unwrap()
            + band["summary"]["classes"]["oscillatory"].as_u64().unwrap()
            + band["summary"]["classes"]["divergent"].as_u64().unwrap()
            + band["summary"]["classes"]["no_change"].as_u64().unwrap(),
        5
    );
    // The human output shows the breakdown statement.
    let o = run_in(w.path(), &["assess", "s.yaml"]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("σ_b = "), "{text}");
    assert!(text.contains("band of efficiency along sigma"), "{text}");
}

#[test]
fn example_cavitation_study_prints_breakdown_and_band() {
    let o = run(&["assess", "studies/pump-turbine-cavitation.yaml"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        text.contains("σ_b = ") && text.contains("band of efficiency"),
        "{text}"
    );
    let v = json(&[
        "assess",
        "studies/pump-turbine-cavitation.yaml",
        "-f",
        "json",
    ]);
    let files: Vec<&str> = v["files_read"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f.as_str().unwrap())
        .collect();
    assert_eq!(
        files.len(),
        4,
        "the study and its three CSV files: {files:?}"
    );
    // The breakdown lies inside every sweep.
    for b in v["sweeps"][0]["breakdown"].as_array().unwrap() {
        for m in b["per_mesh"].as_array().unwrap() {
            let x = m["x"].as_f64().unwrap();
            assert!(x > 0.1 && x < 0.4, "{x}");
        }
    }
}

/// (what, replace, by, expected message part)
const BAD: &[(&str, &str, &str, &str)] = &[
    ("unequal lengths", "efficiency: [0.90, 0.90, 0.898, 0.88, 0.80]", "efficiency: [0.90, 0.90, 0.898, 0.88]", "sweeps.cav.data.A: column `efficiency` has 4 points but `sigma` has 5"),
    ("nan point", "efficiency: [0.89, 0.89,", "efficiency: [.nan, 0.89,", "sweeps.cav.data.B.efficiency[0]: expected a finite number, found .nan"),
    ("duplicate x", "C: {sigma: [0.4, 0.3,", "C: {sigma: [0.4, 0.4,", "sweeps.cav.data.C: `sigma` = 0.4 appears twice"),
    ("too few points", "A: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.90, 0.90, 0.898, 0.88, 0.80]}", "A: {sigma: [0.4, 0.3, 0.2], efficiency: [0.90, 0.90, 0.898]}", "sweeps.cav.data.A: has 3 points; at least 4 are needed per mesh"),
    ("no overlap", "C: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1]", "C: {sigma: [1.4, 1.3, 1.2, 1.15, 1.1]", "sweeps.cav.data: the meshes' `sigma` ranges do not overlap"),
    ("unknown mesh", "    C: {", "    D: {", "sweeps.cav.data.D: names the mesh `D`, which is not in `meshes`"),
    ("missing column", "responses: [efficiency]", "responses: [efficiency, head]", "sweeps.cav.data.A: has no column `head`"),
    ("unknown response", "{response: efficiency, drop: 1%", "{response: power, drop: 1%", "sweeps.cav.breakdown[0].response: `power` is not one of the sweep's responses"),
    ("bad drop", "drop: 1%", "drop: 140%", "a relative drop must be below 1"),
    ("text drop", "drop: 1%", "drop: lots", "sweeps.cav.breakdown[0].drop"),
    ("plateau without start", ", plateau_from: 0.3}", "}", "sweeps.cav.breakdown[0].plateau_from: `reference: plateau` needs `plateau_from`"),
    ("bad interpolation", "interpolation: linear", "interpolation: spline", "sweeps.cav.interpolation: unknown variant `spline`"),
    ("unknown sweep key", "interpolation: linear", "interpolate: linear", "unknown field `interpolate`"),
    ("two meshes", "      C: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.87, 0.87, 0.858, 0.83, 0.70]}\n", "", "sweeps.cav.data: gives data for 2 meshes; at least three are needed"),
];

#[test]
fn bad_sweep_input_exits_2_with_the_key_path() {
    for (what, from, to, expect) in BAD {
        assert!(SWEEP_STUDY.contains(from), "{what}: base lacks `{from}`");
        let w = Workdir::new();
        w.write("s.yaml", &SWEEP_STUDY.replacen(from, to, 1));
        let o = run_in(w.path(), &["assess", "s.yaml", "-o", "out.json"]);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{what}\n{}", show(&o));
        assert!(
            err.contains(expect),
            "{what}: expected `{expect}` in\n{err}"
        );
        assert_eq!(w.files(), ["s.yaml"], "{what}: nothing may be written");
    }
}

/// A curve that never drops is a local problem (docs/method.md §6, partial results): exit 0,
/// and the warning on every mesh names the lowest x reached and says to extend the sweep.
/// (Before partial results this refused the study with exit 2; tests/partial.rs has the rest.)
#[test]
fn never_dropping_curve_names_the_lowest_x_and_the_largest_drop() {
    let w = Workdir::new();
    w.write("s.yaml", &SWEEP_STUDY.replacen("drop: 1%", "drop: 50%", 1));
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let msgs: Vec<&str> = v["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|w| w["code"] == "breakdown_not_computed")
        .map(|w| w["message"].as_str().unwrap())
        .collect();
    assert_eq!(msgs.len(), 3, "one per mesh: {msgs:?}");
    for m in msgs {
        // The sweep's lowest σ is 0.1 (the study above).
        assert!(m.contains("0.1") && m.contains("extend"), "{m}");
    }
}

#[test]
fn csv_errors_name_the_file_and_line() {
    let w = Workdir::new();
    w.write(
        "a.csv",
        "sigma,efficiency\n0.4,0.9\n0.3,0.9\n0.2,oops\n0.1,0.8\n",
    );
    w.write(
        "b.csv",
        "sigma,efficiency\n0.4,0.9\n0.3,0.9\n0.2,0.89\n0.1,0.8\n",
    );
    w.write("c.csv", "sigma,eff\n0.4,0.9\n0.3,0.9\n0.2,0.89\n0.1,0.8\n");
    let study = "format: 1\nmeshes:\n  - {name: A, size: 1}\n  - {name: B, size: 2}\n  - {name: C, size: 4}\nsweeps:\n  cav:\n    x: sigma\n    responses: [efficiency]\n    data:\n      A: {file: a.csv}\n      B: {file: b.csv}\n      C: {file: c.csv}\n";
    w.write("s.yaml", study);
    let o = run_in(w.path(), &["assess", "s.yaml"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(
        err.contains("a.csv:4:5: column `efficiency`: `oops` is not a number"),
        "{err}"
    );
    w.write(
        "a.csv",
        "sigma,efficiency\n0.4,0.9\n0.3,0.9\n0.2,0.89\n0.1,0.8\n",
    );
    let o = run_in(w.path(), &["assess", "s.yaml"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("c.csv:1: has no column `efficiency`"), "{err}");
    std::fs::remove_file(w.path().join("c.csv")).unwrap();
    let o = run_in(w.path(), &["assess", "s.yaml"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        err.contains("sweeps.cav.data.C.file: cannot read the CSV file"),
        "{err}"
    );
}
