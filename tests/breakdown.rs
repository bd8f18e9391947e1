//! Breakdown of cavitation sweeps through the real binary: the persistence rule (a dip that
//! comes back does not set breakdown), NPSH3 read against NPSH, folds of the abscissa refused,
//! values that mix percent and fractions refused, and the demo studies.

mod common;

use approx::assert_relative_eq;
use common::*;

fn codes_and_messages(v: &serde_json::Value) -> Vec<(String, String)> {
    v["warnings"]
        .as_array()
        .map(|a| {
            a.iter()
                .map(|w| {
                    (
                        w["code"].as_str().unwrap_or("").to_string(),
                        w["message"].as_str().unwrap_or("").to_string(),
                    )
                })
                .collect()
        })
        .unwrap_or_default()
}

fn assess_json(w: &Workdir, file: &str) -> serde_json::Value {
    let o = run_in(w.path(), &["assess", file, "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    serde_json::from_slice(&o.stdout).unwrap()
}

/// Manufactured sweeps (linear interpolation, so every crossing is analytic): a plateau, then
/// a straight fall of slope 2 below σ = 0.2. On mesh A one noisy point at σ = 0.35 (point 3)
/// dips below the 1 % threshold and the curve comes back. Mesh C is given by increasing σ (a
/// reversed order is not a fold).
fn dip_study(extra: &str) -> String {
    format!(
        "format: 1
title: dip
meshes:
  - {{name: A, size: 1.0}}
  - {{name: B, size: 1.5}}
  - {{name: C, size: 2.25}}
sweeps:
  cav:
    x: sigma
    responses: [efficiency]
    interpolation: linear
    data:
      A: {{sigma: [0.5, 0.4, 0.35, 0.3, 0.2, 0.15, 0.1], efficiency: [0.9, 0.9, 0.88, 0.9, 0.9, 0.8, 0.7]}}
      B: {{sigma: [0.5, 0.4, 0.35, 0.3, 0.2, 0.15, 0.1], efficiency: [0.89, 0.89, 0.89, 0.89, 0.89, 0.79, 0.69]}}
      C: {{sigma: [0.1, 0.15, 0.2, 0.3, 0.35, 0.4, 0.5], efficiency: [0.67, 0.77, 0.87, 0.87, 0.87, 0.87, 0.87]}}
    breakdown:
      - {{response: efficiency, drop: 1%, reference: highest{extra}}}
"
    )
}

#[test]
fn a_dip_that_comes_back_does_not_set_breakdown_and_is_named() {
    let w = Workdir::new();
    w.write("s.yaml", &dip_study(""));
    let v = assess_json(&w, "s.yaml");
    let b = &v["sweeps"][0]["breakdown"][0];
    assert_eq!(b["persistence"]["points"], 2);
    assert_eq!(b["abscissa"], "sigma");
    let pm = b["per_mesh"].as_array().unwrap();
    // Analytic (manufactured): reference R at the highest σ, threshold 0.99 R, reached on the
    // fall y = R − 2·(0.2 − σ) at σ = 0.2 − 0.01 R / 2.
    for (m, r) in pm.iter().zip([0.9, 0.89, 0.87]) {
        assert_relative_eq!(
            m["x"].as_f64().unwrap(),
            0.2 - 0.01 * r / 2.0,
            max_relative = 1e-10
        );
        assert_eq!(m["confirmed"], true);
    }
    assert_eq!(pm[0]["ignored_dips"], serde_json::json!([[0.35]]));
    assert_eq!(pm[1]["ignored_dips"], serde_json::json!([]));
    let dips: Vec<_> = codes_and_messages(&v)
        .into_iter()
        .filter(|(c, _)| c == "breakdown_dip_ignored")
        .collect();
    assert_eq!(dips.len(), 1, "{dips:?}");
    assert!(
        dips[0].1.contains("mesh `A`") && dips[0].1.contains("0.35 (point 3)"),
        "{dips:?}"
    );
    // With one point asked (no persistence) the dip sets breakdown on mesh A, between
    // (0.35, 0.88) and (0.4, 0.9): σ = 0.35 + 0.05 · 0.011 / 0.02 = 0.3775 (analytic).
    let w1 = Workdir::new();
    w1.write("s.yaml", &dip_study(", confirm_points: 1"));
    let v1 = assess_json(&w1, "s.yaml");
    let x1 = v1["sweeps"][0]["breakdown"][0]["per_mesh"][0]["x"]
        .as_f64()
        .unwrap();
    assert_relative_eq!(x1, 0.3775, max_relative = 1e-10);
    assert!(!warning_codes(&v1).contains(&"breakdown_dip_ignored"));
    // Four points asked: every mesh's fall holds two before the sweep ends, so breakdown is
    // taken there, unconfirmed, with a warning per mesh.
    let w4 = Workdir::new();
    w4.write("s.yaml", &dip_study(", confirm_points: 4"));
    let v4 = assess_json(&w4, "s.yaml");
    let n = warning_codes(&v4)
        .iter()
        .filter(|c| **c == "breakdown_unconfirmed")
        .count();
    assert_eq!(n, 3);
    // A count of 0 is refused at its key.
    let w0 = Workdir::new();
    w0.write("s.yaml", &dip_study(", confirm_points: 0"));
    let o = run_in(w0.path(), &["assess", "s.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("sweeps.cav.breakdown[0].confirm_points"));
}

/// Manufactured pump cavitation curves with head and NPSH known analytically:
/// H(N) = H0 (1 − exp(−(N − Nc)/w)), σ = N/H, on three meshes (H0, Nc differ a little).
/// NPSH3 is defined as the NPSH at a 3 % head drop (IEC 60193 / ISO 9906, from memory).
const NPSH_CASES: [(f64, f64); 3] = [(60.0, 2.0), (59.6, 2.02), (58.9, 2.06)];
const W: f64 = 0.5;

fn head(h0: f64, nc: f64, n: f64) -> f64 {
    h0 * (1.0 - (-(n - nc) / W).exp())
}

fn npsh_study(n_low: f64) -> String {
    let mut data = String::new();
    for (name, (h0, nc)) in ["A", "B", "C"].iter().zip(NPSH_CASES) {
        let ns: Vec<f64> = (0..300)
            .map(|i| 12.0 - (12.0 - n_low) * i as f64 / 299.0)
            .collect();
        let sig: Vec<String> = ns
            .iter()
            .map(|&n| format!("{}", n / head(h0, nc, n)))
            .collect();
        let hs: Vec<String> = ns.iter().map(|&n| format!("{}", head(h0, nc, n))).collect();
        data.push_str(&format!(
            "      {name}: {{sigma: [{}], head: [{}]}}\n",
            sig.join(", "),
            hs.join(", ")
        ));
    }
    format!(
        "format: 1
title: npsh3
meshes:
  - {{name: A, size: 1.0}}
  - {{name: B, size: 1.5}}
  - {{name: C, size: 2.25}}
sweeps:
  cav:
    x: sigma
    responses: [head]
    data:
{data}    breakdown:
      - {{response: head, drop: 3%, reference: highest}}
      - {{response: head, drop: 3%, reference: highest, abscissa: npsh}}
"
    )
}

#[test]
fn npsh3_is_read_against_npsh_and_agrees_with_the_analytic_value() {
    let w = Workdir::new();
    w.write("s.yaml", &npsh_study(3.2));
    let v = assess_json(&w, "s.yaml");
    let on_sigma = &v["sweeps"][0]["breakdown"][0];
    let on_npsh = &v["sweeps"][0]["breakdown"][1];
    assert_eq!(on_sigma["abscissa"], "sigma");
    assert_eq!(on_npsh["abscissa"], "npsh");
    assert_eq!(on_npsh["x_estimate"]["unit"], "m");
    for (k, (h0, nc)) in NPSH_CASES.into_iter().enumerate() {
        // Analytic: reference Href = H(12); H(N3) = 0.97 Href gives
        // N3 = Nc − w ln(1 − 0.97 Href/H0).
        let href = head(h0, nc, 12.0);
        let n3 = nc - W * (1.0 - 0.97 * href / h0).ln();
        let got_n3 = on_npsh["per_mesh"][k]["x"].as_f64().unwrap();
        assert_relative_eq!(got_n3, n3, max_relative = 1e-5);
        // The σ-based reading of the same curve: σ3 = N3 / H(N3) = N3 / (0.97 Href).
        let sigma3 = n3 / (0.97 * href);
        let got_sigma3 = on_sigma["per_mesh"][k]["x"].as_f64().unwrap();
        assert_relative_eq!(got_sigma3, sigma3, max_relative = 1e-5);
        // Turning σ3 into an NPSH with the non-cavitating head overstates NPSH3 by 1/0.97
        // (3.09 %): the σ-based reading carries the head (analytic).
        assert_relative_eq!(got_sigma3 * href / n3, 1.0 / 0.97, max_relative = 1e-5);
    }
}

#[test]
fn sigma_folding_back_at_deep_breakdown_is_refused_with_mesh_and_points() {
    // Down to N = 2.3 the head collapses faster than N falls, so σ = N/H turns and rises
    // again (analytic: dσ/dN < 0 where N > w (exp((N − Nc)/w) − 1)).
    let w = Workdir::new();
    w.write("s.yaml", &npsh_study(2.3));
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(o.stdout.is_empty());
    let e = String::from_utf8_lossy(&o.stderr);
    assert!(e.contains("s.yaml:"), "{e}");
    assert!(e.contains("sweeps.cav.data.A.sigma["), "{e}");
    assert!(e.contains("mesh `A`") && e.contains("not monotone"), "{e}");
    assert!(
        e.contains("rises again at points ") && e.contains("–300 ("),
        "{e}"
    );

    // From a CSV file: the file, the line and the column of the first point past the turn.
    let w = Workdir::new();
    let rows = "sigma,efficiency\n0.40,0.90\n0.30,0.90\n0.20,0.90\n0.15,0.85\n0.12,0.70\n0.13,0.55\n0.14,0.40\n";
    w.write("A.csv", &format!("# mesh A\n{rows}"));
    w.write(
        "B.csv",
        "sigma,efficiency\n0.40,0.89\n0.30,0.89\n0.20,0.89\n0.15,0.84\n0.12,0.70\n",
    );
    // Mesh C in increasing σ: a reversed order is accepted.
    w.write(
        "C.csv",
        "sigma,efficiency\n0.12,0.68\n0.15,0.83\n0.20,0.87\n0.30,0.87\n0.40,0.87\n",
    );
    w.write(
        "s.yaml",
        "format: 1
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.5}
  - {name: C, size: 2.25}
sweeps:
  cav:
    x: sigma
    responses: [efficiency]
    data:
      A: {file: A.csv}
      B: {file: B.csv}
      C: {file: C.csv}
    breakdown:
      - {response: efficiency, drop: 1%}
",
    );
    let o = run_in(w.path(), &["assess", "s.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    let e = String::from_utf8_lossy(&o.stderr);
    // Line 8 of A.csv (comment, header, then rows) holds σ = 0.13, the first past the turn.
    assert!(e.contains("A.csv:8:1: mesh `A`"), "{e}");
    assert!(e.contains("rises again at lines 8–9 (0.13, 0.14)"), "{e}");
    assert!(e.contains("sweeps.cav.data.A.file"), "{e}");
    // Without the fold the same study assesses (C given by increasing σ).
    w.write("A.csv", &format!("# mesh A\n{}", &rows[..rows.len() - 20]));
    let o = run_in(w.path(), &["assess", "s.yaml"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
}

#[test]
fn percent_among_fractions_is_refused_with_line_and_column() {
    // The case (manufactured): efficiency 0.83 on two meshes, 83.31 on one.
    let w = Workdir::new();
    w.write(
        "s.yaml",
        "format: 1
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.5}
  - {name: C, size: 2.25}
quantities:
  efficiency:
    unit: \"-\"
    values: {A: 0.8331, B: 0.83, C: 83.31}
",
    );
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(o.stdout.is_empty());
    let e = String::from_utf8_lossy(&o.stderr);
    // `C` is on line 9, column 34 (counted from the text above).
    assert!(
        e.contains("s.yaml:9:34: quantities.efficiency.values.C: the values mix percent and fractions: 83.31 (C) reads as percent"),
        "{e}"
    );
    // Heads in metres are never taken for percent (a unit that is not dimensionless).
    w.write(
        "h.yaml",
        "format: 1
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.5}
  - {name: C, size: 2.25}
quantities:
  head:
    unit: m
    values: {A: 0.8331, B: 0.83, C: 83.31}
",
    );
    let o = run_in(w.path(), &["assess", "h.yaml"]);
    assert_ne!(o.status.code(), Some(2), "{}", show(&o));

    // One sweep point in percent among fractions, in a CSV file: file, line and column.
    let w = Workdir::new();
    w.write(
        "A.csv",
        "sigma, efficiency\n0.40, 0.90\n0.30, 0.90\n0.20, 89.70\n0.15, 0.85\n0.12, 0.70\n",
    );
    w.write(
        "B.csv",
        "sigma,efficiency\n0.40,0.89\n0.30,0.89\n0.20,0.888\n0.15,0.84\n0.12,0.70\n",
    );
    w.write(
        "C.csv",
        "sigma,efficiency\n0.40,0.87\n0.30,0.87\n0.20,0.866\n0.15,0.83\n0.12,0.68\n",
    );
    w.write(
        "s.yaml",
        "format: 1
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.5}
  - {name: C, size: 2.25}
sweeps:
  cav:
    x: sigma
    responses: [efficiency]
    data:
      A: {file: A.csv}
      B: {file: B.csv}
      C: {file: C.csv}
",
    );
    let before = w.files();
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(o.stdout.is_empty());
    assert_eq!(w.files(), before, "nothing written");
    let e = String::from_utf8_lossy(&o.stderr);
    // Line 4, the field after ", " starts at column 7.
    assert!(e.contains("A.csv:4:7: mesh `A`: response `efficiency`: the values mix percent and fractions: 89.7 (A line 4) reads as percent"), "{e}");
    assert!(e.contains("sweeps.cav.data.A.file"), "{e}");
}

#[test]
fn demo_studies_still_assess() {
    let mut n = 0;
    for entry in std::fs::read_dir(root().join("studies")).unwrap() {
        let p = entry.unwrap().path();
        if p.extension().and_then(|e| e.to_str()) != Some("yaml") {
            continue;
        }
        let rel = format!("studies/{}", p.file_name().unwrap().to_string_lossy());
        let o = run(&["assess", &rel, "-f", "json"]);
        assert_eq!(o.status.code(), Some(0), "{rel}: {}", show(&o));
        n += 1;
    }
    assert!(n >= 7, "{n} demo studies");
    // The raw demo reads NPSH3 against NPSH (derived from the monitors).
    let v = json(&[
        "assess",
        "studies/pump-turbine-raw-sweep.yaml",
        "-f",
        "json",
    ]);
    let b = &v["sweeps"][0]["breakdown"][1];
    assert_eq!(b["response"], "head");
    assert_eq!(b["abscissa"], "npsh");
    assert_eq!(b["x_estimate"]["unit"], "m");
    // The text output labels it NPSH, not σ.
    let o = run(&["assess", "studies/pump-turbine-raw-sweep.yaml"]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        text.contains("3.00 % drop of head below the value at the highest NPSH, read against NPSH")
            && text.contains("NPSH_b = ")
            && text.contains("breakdown npsh"),
        "{text}"
    );
}

mod properties {
    use meshbound::study::scale::mixed_scale;
    use meshbound::sweep::{
        find_breakdown, find_breakdown_with, DropRule, Interpolation, Persistence, ReferenceKind,
    };
    use proptest::prelude::*;

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(200))]

        // Manufactured: a plateau at v0, then a linear fall; one plateau point (not the top)
        // dips below the 1 % threshold. The dip must not move breakdown (the curve without
        // it gives the same crossing) and must be reported with its x.
        #[test]
        fn one_dip_never_moves_breakdown(
            plateau in 4usize..15,
            fall in 2usize..7,
            v0 in 0.5f64..1.0,
            slope in 0.5f64..5.0,
            dip_at in 1usize..14,
            depth in 0.011f64..0.5,
        ) {
            // Neither the top point nor the plateau's last one (a dip there joins the fall).
            let dip = 1 + dip_at % (plateau - 2);
            // x from high to low: plateau points 1.0, 0.95, …; fall points below.
            let mut x = Vec::new();
            let mut y = Vec::new();
            for i in 0..plateau {
                x.push(1.0 - 0.05 * i as f64);
                y.push(v0);
            }
            let x_edge = x[plateau - 1];
            for j in 1..=fall {
                let xj = x_edge - 0.05 * j as f64;
                x.push(xj);
                y.push(v0 - slope * (x_edge - xj));
            }
            let clean = find_breakdown(&x, &y, &ReferenceKind::Value(v0), &DropRule::Relative(0.01), Interpolation::Linear).unwrap();
            let mut yd = y.clone();
            yd[dip] = v0 * (1.0 - depth);
            let r = find_breakdown_with(&x, &yd, &ReferenceKind::Value(v0), &DropRule::Relative(0.01), Interpolation::Linear, &Persistence::default()).unwrap();
            prop_assert_eq!(r.x, clean.x);
            prop_assert_eq!(r.ignored_dips.len(), 1);
            prop_assert_eq!(&r.ignored_dips[0].x, &vec![x[dip]]);
        }

        // Manufactured: efficiencies as fractions in [0.8, 0.95] on 3 to 12 meshes or points,
        // one typed in percent — always refused, and the odd value is the one in percent.
        #[test]
        fn one_percent_among_fractions_is_always_found(
            v in proptest::collection::vec(0.8f64..0.95, 3..12),
            k in 0usize..12,
        ) {
            let k = k % v.len();
            let mut w = v.clone();
            w[k] *= 100.0;
            let m = mixed_scale(&w, "efficiency", None);
            prop_assert!(m.is_some());
            prop_assert_eq!(m.unwrap().odd().to_vec(), vec![k]);
            prop_assert!(mixed_scale(&v, "efficiency", None).is_none());
        }

        // Manufactured: an NPSH or a head that falls geometrically across decades (steps
        // below a factor of 10) is never taken for a percent/fraction mix, with or without
        // a name that marks a fraction.
        #[test]
        fn curves_across_decades_pass(
            start in 1.5f64..100.0,
            step in 0.3f64..0.95,
            n in 4usize..60,
        ) {
            let v: Vec<f64> = (0..n).map(|i| start * step.powi(i as i32)).collect();
            prop_assert!(mixed_scale(&v, "npsh", None).is_none());
            prop_assert!(mixed_scale(&v, "vapour_fraction", Some("%")).is_none());
        }
    }
}
