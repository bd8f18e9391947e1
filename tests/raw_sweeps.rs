//! Raw solver monitors through `assess`, and the `water` calculator, through the real binary.

mod common;

use approx::assert_relative_eq;
use common::*;
use meshbound::water;

#[test]
fn derived_sigma_equals_the_hand_formula() {
    let v = json(&[
        "assess",
        "studies/pump-turbine-raw-sweep.yaml",
        "-f",
        "json",
    ]);
    let curve = &v["sweeps"][0]["curves"][0];
    assert_eq!(curve["mesh"], "L1");
    // Row 1 of studies/sweeps/raw-L1.csv (σ = 0.40, the largest): pump mode, inlet = low side.
    let (p_in, p_out, q, m, n, t) = (242835.3, 844075.6, 0.105, 552.485, 1200.0, 20.0);
    // Hand formulas (method notes §6, §8): ρ at (t, p_in) from IAPWS-IF97 region 1, p_v from
    // region 4 (both verified against IAPWS R7-97(2012) tables in the water module's tests),
    // H = (p_out − p_in)/(ρ g), η = ρ g Q H/(M ω), NPSH = (p_in − p_v)/(ρ g), σ = NPSH/H.
    let g = 9.80665;
    let rho = water::density_celsius(t, p_in).unwrap();
    let pv = water::saturation_pressure_celsius(t).unwrap();
    let h = (p_out - p_in) / (rho * g);
    let omega = 2.0 * std::f64::consts::PI * n / 60.0;
    let eta = rho * g * q * h / (m * omega);
    let npsh = (p_in - pv) / (rho * g);
    let sigma = npsh / h;
    let x = curve["x"].as_array().unwrap();
    let last = x.len() - 1; // curves run by increasing x: the largest σ is last
    let d = &curve["derived"][last];
    assert_relative_eq!(d["sigma"].as_f64().unwrap(), sigma, max_relative = 1e-12);
    assert_relative_eq!(x[last].as_f64().unwrap(), sigma, max_relative = 1e-12);
    assert_relative_eq!(d["head"].as_f64().unwrap(), h, max_relative = 1e-12);
    assert_relative_eq!(d["efficiency"].as_f64().unwrap(), eta, max_relative = 1e-12);
    assert_relative_eq!(d["npsh"].as_f64().unwrap(), npsh, max_relative = 1e-12);
}

#[test]
fn raw_sweep_gives_the_breakdown_of_the_sigma_eta_form() {
    // The raw CSVs were written from the same invented curves as the σ/η CSVs; the derived σ
    // and η differ from them only by the density used (≈ 1e-4), so breakdown must agree to
    // well within the interpolation error of the sweep spacing.
    let raw = json(&[
        "assess",
        "studies/pump-turbine-raw-sweep.yaml",
        "-f",
        "json",
    ]);
    let plain = json(&[
        "assess",
        "studies/pump-turbine-cavitation.yaml",
        "-f",
        "json",
    ]);
    let a = raw["sweeps"][0]["breakdown"][0]["per_mesh"]
        .as_array()
        .unwrap();
    let b = plain["sweeps"][0]["breakdown"][0]["per_mesh"]
        .as_array()
        .unwrap();
    for (x, y) in a.iter().zip(b) {
        assert_relative_eq!(
            x["x"].as_f64().unwrap(),
            y["x"].as_f64().unwrap(),
            max_relative = 2e-3
        );
    }
    // The raw demo reads NPSH3 (3 % head drop) against the derived NPSH; the plain demo reads
    // the same drop against σ. At the crossing the head equals the threshold, so
    // NPSH3 = σ3 · H_threshold (σ = NPSH/H, definition), to within the interpolation error.
    let a = raw["sweeps"][0]["breakdown"][1]["per_mesh"]
        .as_array()
        .unwrap();
    let b = plain["sweeps"][0]["breakdown"][1]["per_mesh"]
        .as_array()
        .unwrap();
    assert_eq!(raw["sweeps"][0]["breakdown"][1]["abscissa"], "npsh");
    for (x, y) in a.iter().zip(b) {
        assert_relative_eq!(
            x["x"].as_f64().unwrap(),
            y["x"].as_f64().unwrap() * y["threshold"].as_f64().unwrap(),
            max_relative = 2e-3
        );
    }
}

const RAW: &str = "format: 1
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.5}
  - {name: C, size: 2.25}
sweeps:
  cav:
    mode: turbine
    x: sigma
    responses: [efficiency]
    data:
      A: {inlet_total_pressure: [900000, 900000, 900000, 900000], outlet_total_pressure: [160000, 120000, 90000, 60000], flow: [0.2, 0.2, 0.2, 0.2], torque: [1100, 1100, 1090, 1000], speed: [1000, 1000, 1000, 1000], temperature: [20, 20, 20, 20]}
      B: {inlet_total_pressure: [900000, 900000, 900000, 900000], outlet_total_pressure: [160000, 120000, 90000, 60000], flow: [0.2, 0.2, 0.2, 0.2], torque: [1095, 1095, 1083, 990], speed: [1000, 1000, 1000, 1000], temperature: [20, 20, 20, 20]}
      C: {inlet_total_pressure: [900000, 900000, 900000, 900000], outlet_total_pressure: [160000, 120000, 90000, 60000], flow: [0.2, 0.2, 0.2, 0.2], torque: [1085, 1085, 1070, 975], speed: [1000, 1000, 1000, 1000], temperature: [20, 20, 20, 20]}
";

#[test]
fn raw_sweep_refuses_impossible_monitors() {
    let w = Workdir::new();
    w.write("ok.yaml", RAW);
    let o = run_in(w.path(), &["assess", "ok.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let cases = [
        (
            "temperature: [20, 20, 20, 20]}",
            "temperature: [20, 20, 400, 20]}",
            "point 3 (counting from 1)",
        ),
        (
            "outlet_total_pressure: [160000,",
            "outlet_total_pressure: [-160000,",
            "sweeps.cav.data.A: point 1",
        ),
        ("torque: [1100,", "torque: [0,", "torque"),
        (
            "flow: [0.2, 0.2, 0.2, 0.2], torque: [1095",
            "flow: [0.2, 0.2, 0.2], torque: [1095",
            "has 3 points",
        ),
        (
            "speed: [1000, 1000, 1000, 1000], temperature: [20, 20, 20, 20]}\n      C",
            "temperature: [20, 20, 20, 20]}\n      C",
            "has no column `speed`",
        ),
        (
            "responses: [efficiency]",
            "responses: [efficiency]\n    bogus: 1",
            "unknown field `bogus`",
        ),
    ];
    for (from, to, expect) in cases {
        assert!(RAW.contains(from), "base lacks {from}");
        w.write("bad.yaml", &RAW.replacen(from, to, 1));
        let o = run_in(w.path(), &["assess", "bad.yaml"]);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{to}\n{}", show(&o));
        assert!(err.contains(expect), "expected `{expect}` in {err}");
    }
}

#[test]
fn water_calculator() {
    // p_s(20 °C) = 2339.2 Pa and ρ(20 °C, 1 atm) = 998.21 kg/m³: tabulated properties of
    // water (from memory; IAPWS-IF97 reproduces them).
    let o = run(&["water", "--temperature", "20", "--format", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_relative_eq!(
        v["vapour_pressure"].as_f64().unwrap(),
        2339.2,
        max_relative = 1e-4
    );
    assert_relative_eq!(v["density"].as_f64().unwrap(), 998.21, max_relative = 1e-5);
    // Target σ: p = σ H ρ g + p_v (method notes §6, solved for the pressure).
    let o = run(&[
        "water", "-t", "20", "--sigma", "0.15", "--head", "61.4", "-f", "json",
    ]);
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let p = v["target"]["low_side_total_pressure"].as_f64().unwrap();
    let rho = water::density_celsius(20.0, p).unwrap();
    let pv = water::saturation_pressure_celsius(20.0).unwrap();
    assert_relative_eq!(
        (p - pv) / (rho * 9.80665 * 61.4),
        0.15,
        max_relative = 1e-10
    );
    // Outside IAPWS-IF97: exit 2 with the range.
    let o = run(&["water", "-t", "400"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("outside the valid range"));
    let o = run(&["water", "-t", "20", "--sigma", "0.1"]);
    assert_eq!(o.status.code(), Some(2), "--sigma needs --head");
}
