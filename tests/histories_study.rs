//! Quantities read straight from monitor histories, through the real binary.

mod common;

use approx::assert_relative_eq;
use common::*;
use serde_json::Value;

const DEMO: &str = "studies/pump-turbine-histories.yaml";

fn f(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

#[test]
fn the_demo_design_point_is_read_from_its_histories() {
    let v = json(&["assess", DEMO, "--format", "json"]);
    let q = &v["quantities"][0];
    let h = q["histories"].as_array().expect("histories");
    assert_eq!(h.len(), 3);
    // The histories are manufactured (studies/histories/make_histories.py): a start-up decaying
    // as e^(−i/150) plus AR(1) noise (φ = 0.8) around the known means 0.9093, 0.9071, 0.9033.
    // The reduced value must find each mean within its stated 95 % statistical uncertainty
    // (three times it, to keep the check about the method, not the draw).
    for (hist, truth) in h.iter().zip([0.9093, 0.9071, 0.9033]) {
        assert_eq!(hist["status"], "steady", "{hist}");
        let u = f(&hist["statistical"]["expanded"]);
        assert!(
            (f(&hist["value"]) - truth).abs() <= 3.0 * u,
            "{} vs {truth} ± {u}",
            hist["value"]
        );
        // The steady part starts after the start-up: e^(−i/150) is below the noise's size
        // (about 3e-5 of 0.05) only from i ≈ 1100 on; MSER-5 must not start much before.
        assert!(f(&hist["steady"]["start_at"]) > 700.0, "{hist}");
        assert_eq!(q["values"][0], h[0]["value"]);
    }
    // The finest mesh's U_I joins U by root-sum-square (ASME V&V 20, from memory).
    let u = &q["uncertainty"];
    let u_i = f(&h[0]["iterative_uncertainty"]);
    assert_relative_eq!(f(&u["iterative"]), u_i);
    assert_relative_eq!(
        f(&u["absolute"]),
        f(&u["discretisation"]).hypot(u_i),
        max_relative = 1e-12
    );
    let read: Vec<&str> = v["files_read"]
        .as_array()
        .expect("files read")
        .iter()
        .filter_map(Value::as_str)
        .collect();
    assert!(read
        .iter()
        .any(|p| p.ends_with("L3/postProcessing/efficiencyMonitor/0/volFieldValue.dat")));
}

#[test]
fn the_report_draws_every_history() {
    let w = Workdir::new();
    let out = w.path().join("rep");
    let o = run(&["report", DEMO, "--out", out.to_str().expect("a UTF-8 path")]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    for mesh in ["L1", "L2", "L3"] {
        let svg = std::fs::read_to_string(out.join(format!("history-efficiency-{mesh}.svg")))
            .expect("a history figure");
        assert!(
            svg.starts_with("<svg") || svg.starts_with("<?xml"),
            "{mesh}"
        );
    }
    let md = std::fs::read_to_string(out.join("report.md")).expect("report.md");
    assert!(md.contains("Monitor histories"));
}

const STUDY: &str = "format: 1
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 2.0}
  - {name: C, size: 4.0}
quantities:
  cd:
    history:
      column: Cd
      files: {A: a.dat, B: b.dat, C: c.dat}
";

/// A steady force-coefficient history converging to `value` (a manufactured exponential
/// approach, no noise) in the solver function-object layout.
fn history(value: f64) -> String {
    let mut s = String::from("# Force coefficients\n# Time\tCd\tCl\n");
    for i in 1..=400 {
        let v = value + 0.1 * (-(i as f64) / 20.0).exp();
        s.push_str(&format!("{i}\t{v:.12}\t0.01\n"));
    }
    s
}

#[test]
fn a_converged_history_reduces_to_its_limit() {
    // Cd = 1 + 0.1 h² on h = 1, 2, 4 (analytic), each history approaching it as
    // 0.1 e^(−i/20): by i = 400 the start-up is 2e-10 of the value. A steady run's value is
    // its last sample (`reduce: last`); the mean of the steady part would keep a trace of the
    // start-up (4e-7 here), which its U_I (the final window's drift) covers.
    let w = Workdir::new();
    w.write(
        "s.yaml",
        &STUDY.replace("      column: Cd", "      column: Cd\n      reduce: last"),
    );
    for (name, h) in [("a.dat", 1.0), ("b.dat", 2.0), ("c.dat", 4.0)] {
        w.write(name, &history(1.0 + 0.1 * h * h));
    }
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: Value = serde_json::from_slice(&o.stdout).expect("JSON");
    let q = &v["quantities"][0];
    for (got, want) in q["values"]
        .as_array()
        .expect("values")
        .iter()
        .zip([1.1, 1.4, 2.6])
    {
        assert_relative_eq!(f(got), want, max_relative = 1e-8);
    }
    assert_relative_eq!(f(&q["governing"]["order"]), 2.0, max_relative = 1e-6);
}

#[test]
fn bad_histories_are_refused_with_the_file_and_the_key() {
    let w = Workdir::new();
    for (name, h) in [("a.dat", 1.0), ("b.dat", 2.0), ("c.dat", 4.0)] {
        w.write(name, &history(1.0 + 0.1 * h * h));
    }
    let cases = [
        (STUDY.replace("column: Cd", "column: Cx"), "Cx"),
        (
            STUDY.replace("C: c.dat}", "}"),
            "quantities.cd.history.files: has no file for the mesh `C`",
        ),
        (
            STUDY.replace(
                "    history:",
                "    values: {A: 1, B: 2, C: 3}\n    history:",
            ),
            "gives both `values` and `history`",
        ),
        (
            STUDY.replace("c.dat}", "../outside.dat}"),
            "quantities.cd.history.files.C",
        ),
    ];
    for (text, expect) in cases {
        w.write("s.yaml", &text);
        let o = run_in(w.path(), &["assess", "s.yaml", "--output", "out.json"]);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{expect}\n{}", show(&o));
        assert!(err.contains(expect), "expected `{expect}` in\n{err}");
        assert!(!w.path().join("out.json").exists());
    }
}

#[test]
fn the_demo_sweep_is_split_into_its_points_from_one_history_per_mesh() {
    // The sweep histories are manufactured around the values of the CSV demo sweep
    // (studies/sweeps/L*.csv, by studies/histories/make_histories.py): every point's mean must
    // land on its CSV value within three times the U_I the history states for it, and the
    // operating points must be the CSV's σ exactly.
    let hist = json(&["assess", DEMO, "--format", "json"]);
    let csv = json(&[
        "assess",
        "studies/pump-turbine-cavitation.yaml",
        "--format",
        "json",
    ]);
    let (hs, cs) = (&hist["sweeps"][0], &csv["sweeps"][0]);
    for (hc, cc) in hs["curves"]
        .as_array()
        .expect("curves")
        .iter()
        .zip(cs["curves"].as_array().expect("curves"))
    {
        assert_eq!(hc["x"], cc["x"], "{}", hc["mesh"]);
        let noise = hc["noise"][0].as_array().expect("noise of efficiency");
        for ((v, c), n) in hc["responses"][0]
            .as_array()
            .expect("values")
            .iter()
            .zip(cc["responses"][0].as_array().expect("values"))
            .zip(noise)
        {
            let n = f(n);
            assert!(n > 0.0);
            assert!((f(v) - f(c)).abs() <= 3.0 * n, "{v} vs {c} ± {n}");
        }
    }
    // Every band point carries the finest history's U_I, included in U by root-sum-square.
    for p in hs["band"]["points"].as_array().expect("band points") {
        let (u, n) = (f(&p["absolute"]), f(&p["iterative"]));
        assert!(u >= n, "{p}");
    }
}

#[test]
fn a_sweep_history_needs_its_reading_and_names_short_points() {
    let w = Workdir::new();
    // Four operating points of 40 rows each plus one of 3 rows (manufactured, constant values
    // per point: the reduced values are those constants exactly).
    let monitor = |offset: f64| {
        let mut s = String::from("# Iteration sigma eta\n");
        let mut it = 0;
        for (sigma, eta) in [(0.4, 0.9), (0.3, 0.9), (0.2, 0.89), (0.1, 0.8), (0.05, 0.7)] {
            let rows = if sigma == 0.05 { 3 } else { 40 };
            for _ in 0..rows {
                it += 1;
                s.push_str(&format!("{it} {sigma} {}\n", eta + offset));
            }
        }
        s
    };
    for (name, off) in [("a.dat", 0.0), ("b.dat", 0.002), ("c.dat", 0.006)] {
        w.write(name, &monitor(off));
    }
    let study = "format: 1
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 2.0}
  - {name: C, size: 4.0}
sweeps:
  cav:
    x: sigma
    responses: [eta]
    history_reading: {abscissa: Iteration, reduce: last}
    data:
      A: {history: a.dat}
      B: {history: b.dat}
      C: {history: c.dat}
";
    let v = assess_json(&w, study);
    let c = &v["sweeps"][0]["curves"][0];
    assert_eq!(c["x"], serde_json::json!([0.1, 0.2, 0.3, 0.4]));
    assert_eq!(c["responses"][0], serde_json::json!([0.8, 0.89, 0.9, 0.9]));
    assert!(warning_codes(&v).contains(&"history_point_too_short"));
    // Without `history_reading` the study is refused at the data key.
    w.write(
        "s.yaml",
        &study.replace(
            "    history_reading: {abscissa: Iteration, reduce: last}\n",
            "",
        ),
    );
    let o = run_in(w.path(), &["assess", "s.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("history_reading"));
}

fn assess_json(w: &Workdir, text: &str) -> Value {
    w.write("s.yaml", text);
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    serde_json::from_slice(&o.stdout).expect("JSON")
}

#[test]
fn one_history_per_operating_point_reads_the_same_curve() {
    // The same manufactured monitor (constant values per point) written once as one file and
    // once as one file per operating point: the curves must be equal.
    let w = Workdir::new();
    let points = [(0.4, 0.9), (0.3, 0.9), (0.2, 0.89), (0.1, 0.8)];
    let rows = |sigma: f64, eta: f64, from: usize| -> String {
        (0..20)
            .map(|k| format!("{} {sigma} {eta}\n", from + k))
            .collect()
    };
    let mut whole = String::from("# Iteration sigma eta\n");
    for (k, (sigma, eta)) in points.iter().enumerate() {
        whole.push_str(&rows(*sigma, *eta, 1 + 20 * k));
        w.write(
            &format!("p{k}.dat"),
            &format!("# Iteration sigma eta\n{}", rows(*sigma, *eta, 1)),
        );
    }
    w.write("whole.dat", &whole);
    let study = |data: &str| {
        format!(
            "format: 1
meshes:
  - {{name: A, size: 1.0}}
  - {{name: B, size: 2.0}}
  - {{name: C, size: 4.0}}
sweeps:
  cav:
    x: sigma
    responses: [eta]
    history_reading: {{abscissa: Iteration, reduce: last}}
    data:
      A: {data}
      B: {data}
      C: {data}
"
        )
    };
    let one = assess_json(&w, &study("{history: whole.dat}"));
    let many = assess_json(&w, &study("{histories: [p0.dat, p1.dat, p2.dat, p3.dat]}"));
    assert_eq!(
        one["sweeps"][0]["curves"][0]["responses"],
        many["sweeps"][0]["curves"][0]["responses"]
    );
    assert_eq!(
        many["sweeps"][0]["curves"][0]["x"],
        serde_json::json!([0.1, 0.2, 0.3, 0.4])
    );
}
