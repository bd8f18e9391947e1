//! Comparison with measurements (ASME V&V 20-2009) through the real binary.

mod common;

use approx::assert_relative_eq;
use common::*;

const STUDY: &str = "format: 1
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.5}
  - {name: C, size: 2.25}
quantities:
  eff: {values: {A: 0.9093, B: 0.9071, C: 0.9033}}
sweeps:
  cav:
    x: sigma
    responses: [efficiency]
    interpolation: linear
    data:
      A: {sigma: [0.1, 0.2, 0.3, 0.4], efficiency: [0.80, 0.88, 0.90, 0.90]}
      B: {sigma: [0.1, 0.2, 0.3, 0.4], efficiency: [0.78, 0.87, 0.89, 0.89]}
      C: {sigma: [0.1, 0.2, 0.3, 0.4], efficiency: [0.74, 0.85, 0.87, 0.87]}
reference_data:
  eff: {value: 0.9050, u_measured: 0.0020}
  cav:
    u_measured: 0.5%
    u_input: 0.001
    points:
      - {x: 0.3, value: 0.895}
      - {x: 0.25, value: 0.88, u: 0.003}
settings: {validation_divisor: 1.15, coverage_factor: 2, uncertainty_rule: celik_gci}
";

#[test]
fn comparison_worked_by_hand() {
    let w = Workdir::new();
    w.write("s.yaml", STUDY);
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let c = v["comparisons"].as_array().unwrap();
    assert_eq!(c.len(), 2);
    for x in c {
        for k in ["name", "normalised", "points", "summary"] {
            assert!(x.get(k).is_some(), "comparison key {k}");
        }
        for p in x["points"].as_array().unwrap() {
            for k in [
                "x",
                "simulation",
                "measured",
                "error",
                "u_num",
                "u_input",
                "u_measured",
                "u_val",
                "within",
            ] {
                assert!(p.get(k).is_some(), "point key {k}");
            }
        }
    }
    // Quantity `eff` (hand calculation after ASME V&V 20-2009): sizes 1, 1.5, 2.25 and values
    // 0.9093, 0.9071, 0.9033: ε21 = −0.0022, ε32 = −0.0038, r = 1.5 both, so
    // p = ln(0.0038/0.0022)/ln 1.5 and U = 1.25·0.0022/(1.5^p − 1) = 1.25·0.0022/(0.0038/0.0022 − 1)
    // = 0.00275/0.727272… = 0.0037812500 (Celik et al. 2008 GCI, absolute).
    // u_num = U/1.15 = 0.0032880435; u_val = sqrt(u_num² + 0 + 0.002²) = sqrt(1.081124e-5 + 4e-6)
    // = 0.0038485355…; E = 0.9093 − 0.9050 = 0.0043 → |E| ≤ 2 u_val = 0.0076971 → within.
    let q = &c[0]["points"][0];
    let u = 1.25 * 0.0022 / (0.0038 / 0.0022 - 1.0);
    assert_relative_eq!(u, 0.00378125, max_relative = 1e-12);
    assert_relative_eq!(q["u_num"].as_f64().unwrap(), u / 1.15, max_relative = 1e-12);
    assert_relative_eq!(q["error"].as_f64().unwrap(), 0.0043, max_relative = 1e-12);
    let uval = ((u / 1.15f64).powi(2) + 0.002f64.powi(2)).sqrt();
    assert_relative_eq!(q["u_val"].as_f64().unwrap(), uval, max_relative = 1e-12);
    assert_eq!(q["within"], true);
    // Sweep point at σ = 0.3 (a sweep knot, so no interpolation): S = 0.90, D = 0.895,
    // u_D = 0.5 % of 0.895 = 0.004475, u_input = 0.001, and the pointwise three-mesh U from
    // 0.90, 0.89, 0.87: ε21 = −0.01, ε32 = −0.02, r = 1.5: U = 1.25·0.01/(2 − 1) = 0.0125.
    let s = &c[1]["points"][0];
    assert_relative_eq!(s["x"].as_f64().unwrap(), 0.3, max_relative = 1e-15);
    assert_relative_eq!(s["error"].as_f64().unwrap(), 0.005, max_relative = 1e-12);
    assert_relative_eq!(
        s["u_measured"].as_f64().unwrap(),
        0.004475,
        max_relative = 1e-12
    );
    assert_relative_eq!(
        s["u_num"].as_f64().unwrap(),
        0.0125 / 1.15,
        max_relative = 1e-12
    );
    let uval = ((0.0125f64 / 1.15).powi(2) + 0.001f64.powi(2) + 0.004475f64.powi(2)).sqrt();
    assert_relative_eq!(s["u_val"].as_f64().unwrap(), uval, max_relative = 1e-12);
    // Linear interpolation at σ = 0.25 (half-way between knots, analytic): S = 0.89.
    assert_relative_eq!(
        c[1]["points"][1]["simulation"].as_f64().unwrap(),
        0.89,
        max_relative = 1e-12
    );
    assert_relative_eq!(
        c[1]["points"][1]["u_measured"].as_f64().unwrap(),
        0.003,
        max_relative = 1e-12
    );
    assert_eq!(c[1]["normalised"], false);
}

#[test]
fn normalised_comparison_says_so() {
    let w = Workdir::new();
    w.write(
        "s.yaml",
        &STUDY.replace(
            "    u_input: 0.001\n",
            "    u_input: 0.001\n    normalise: true\n",
        ),
    );
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["comparisons"][1]["normalised"], true);
    // Peaks: simulation 0.90 (finest curve), measured 0.895: S/0.90 = 1, D/0.895 = 1.
    assert_relative_eq!(
        v["comparisons"][1]["points"][0]["error"].as_f64().unwrap(),
        0.0,
        epsilon = 1e-15
    );
    let codes = warning_codes(&v);
    assert!(codes.contains(&"comparison_normalised"));
    let o = run_in(w.path(), &["assess", "s.yaml"]);
    assert!(String::from_utf8_lossy(&o.stdout).contains("divided by its own peak"));
}

#[test]
fn bad_reference_data_exits_2() {
    let cases = [
        (
            "  eff: {value: 0.9050, u_measured: 0.0020}",
            "  eta: {value: 0.9050, u_measured: 0.0020}",
            "reference_data.eta: `eta` names neither a quantity nor a sweep",
        ),
        (
            "    u_measured: 0.5%\n",
            "",
            "reference_data.cav.points[0]: has no uncertainty",
        ),
        (
            "u_measured: 0.5%",
            "u_measured: -0.5",
            "reference_data.cav.u_measured: expected an uncertainty ≥ 0",
        ),
        (
            "{x: 0.3, value: 0.895}",
            "{x: 0.3, value: .nan}",
            "reference_data.cav.points[0].value: expected a finite number",
        ),
    ];
    for (from, to, expect) in cases {
        assert!(STUDY.contains(from), "{from}");
        let w = Workdir::new();
        w.write("s.yaml", &STUDY.replacen(from, to, 1));
        let o = run_in(w.path(), &["assess", "s.yaml"]);
        assert_eq!(o.status.code(), Some(2), "{to}\n{}", show(&o));
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.contains(expect), "expected `{expect}` in {err}");
    }
}
