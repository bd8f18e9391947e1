//! Field options through the real binary: one global order for every point (the average
//! order, Celik et al. 2008; the norm-based order, Stern et al. 2001), the noise floor, the
//! results along a sampled line and the comparison with reference data at points.
//!
//! Data: tests/data/fields_vtk/L1–L4 (see tests/fields_vtk.rs): four jittered triangulations
//! of the unit square holding the manufactured solution
//! φ(x, y; h) = sin x cos y + 30 (1 + x y) h², h = 1/n (n = 32, 24, 18, 13), so the order is 2
//! at every point and the limit is sin x cos y (analytic).

mod common;

use common::*;

const SIZES: [f64; 4] = [1.0 / 32.0, 1.0 / 24.0, 1.0 / 18.0, 1.0 / 13.0];

fn workdir() -> Workdir {
    let w = Workdir::new();
    let data = root().join("tests/data/fields_vtk");
    for f in ["L1.vtu", "L2.vtu", "L3.vtk", "L4.vtu"] {
        std::fs::copy(data.join(f), w.path().join(f)).unwrap();
    }
    w
}

fn study(meshes: usize, extra: &str) -> String {
    let names = ["L1", "L2", "L3", "L4"];
    let files = ["L1.vtu", "L2.vtu", "L3.vtk", "L4.vtu"];
    let mut s = String::from(
        "format: 1\ntitle: Manufactured section field\ndimension: 2\ndomain: general\nmeshes:\n",
    );
    for (n, h) in names.iter().zip(SIZES).take(meshes) {
        s.push_str(&format!("  - {{name: {n}, size: {h}}}\n"));
    }
    let data: Vec<String> = names
        .iter()
        .zip(files)
        .take(meshes)
        .map(|(n, f)| format!("{n}: {f}"))
        .collect();
    s.push_str(&format!(
        "fields:\n  section:\n    columns: [p]\n    data: {{{}}}\n{extra}",
        data.join(", ")
    ));
    s
}

fn assess(w: &Workdir, text: &str) -> serde_json::Value {
    let p = w.write("study.yaml", text);
    let o = run_in(
        w.path(),
        &["assess", p.to_str().unwrap(), "--format", "json"],
    );
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    serde_json::from_slice(&o.stdout).unwrap()
}

fn column(v: &serde_json::Value) -> &serde_json::Value {
    &v["fields"][0]["columns"][0]
}

#[test]
fn a_global_order_recovers_the_manufactured_order() {
    // Order 2 everywhere (analytic); the transfer adds an error of order h² too, so the
    // recovered order is within 0.3 of 2 (the tolerance of tests/fields_vtk.rs, docs/method.md
    // §16), and every point then uses it.
    let w = workdir();
    for (meshes, basis) in [
        (3, "average"),
        (3, "norm_l2"),
        (3, "norm_max"),
        (4, "average"),
        (4, "norm_l2"),
    ] {
        let v = assess(&w, &study(meshes, &format!("    order: {basis}\n")));
        let g = &column(&v)["global_order"];
        assert_eq!(g["basis"], basis, "{v}");
        let p = g["order"].as_f64().unwrap_or(f64::NAN);
        assert!((p - 2.0).abs() < 0.3, "{meshes} meshes, {basis}: order {p}");
        assert!(g["from_points"].as_u64().unwrap() > 500, "{g}");
    }
    // Without the key the summary has none.
    let v = assess(&w, &study(3, ""));
    assert!(column(&v).get("global_order").is_none());
}

#[test]
fn a_noise_floor_above_every_difference_makes_every_point_round_off() {
    // The differences between meshes are at most 30 (1 + 1) (1/13)² ≈ 0.36 plus the transfer
    // error: a floor of 10 holds every value of every point (analytic bound), so every point
    // is no_change with U = the floor.
    let w = workdir();
    let v = assess(&w, &study(4, "    noise_floor: 10\n"));
    let c = column(&v);
    let nf = &c["noise_floor"];
    assert_eq!(nf["floor"], 10.0);
    let points = v["fields"][0]["points"].as_u64().unwrap();
    let none = c["classes"]["none"].as_u64().unwrap_or(0);
    assert_eq!(nf["within"].as_u64().unwrap() + none, points, "{c}");
    assert_eq!(c["classes"]["no_change"].as_u64().unwrap() + none, points);
    // A floor of 0 is off: no figures.
    let v = assess(&w, &study(4, "    noise_floor: 0\n"));
    assert!(column(&v).get("noise_floor").is_none());
}

#[test]
fn the_line_follows_the_manufactured_solution() {
    // Along y = 0.5 the finest mesh's value is sin x cos 0.5 + 30 (1 + x/2)/32² (analytic),
    // carried to the samples with the second-order transfer (error well below 1e-2 here).
    let w = workdir();
    let v = assess(
        &w,
        &study(
            3,
            "    line: {from: [0.1, 0.5], to: [0.9, 0.5], samples: 41}\n    write: out.vtu\n",
        ),
    );
    let line = &v["fields"][0]["line"];
    let samples = line["samples"].as_array().unwrap();
    assert_eq!(samples.len(), 41);
    assert_eq!(line["outside"], 0);
    for s in samples {
        let x = 0.1 + s["s"].as_f64().unwrap();
        let want = x.sin() * 0.5f64.cos() + 30.0 * (1.0 + 0.5 * x) / (32.0 * 32.0);
        let got = s["value"].as_f64().unwrap();
        assert!((got - want).abs() < 1e-2, "x {x}: {got} vs {want}");
        assert!(s["uncertainty"].as_f64().unwrap() >= 0.0);
    }
    // The report draws it.
    let out = w.path().join("rep");
    let p = w.path().join("study.yaml");
    let o = run_in(
        w.path(),
        &[
            "report",
            p.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            "--svg-only",
        ],
    );
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let svg = std::fs::read_to_string(out.join("line-section.svg")).unwrap();
    assert!(svg.contains("class=\"band\""));
}

#[test]
fn reference_points_are_compared_after_vv20() {
    // Reference values: the manufactured limit sin x cos y (analytic), as a benchmark solution.
    // E = S − D (ASME V&V 20-2009); a point past the field is reported, not compared.
    let w = workdir();
    let pts = [(0.3, 0.4), (0.6, 0.7), (0.5, 0.5), (3.0, 3.0)];
    let mut refs =
        String::from("    reference:\n      origin: benchmark\n      u: 0.001\n      points:\n");
    for (x, y) in pts {
        let d: f64 = f64::sin(x) * f64::cos(y);
        refs.push_str(&format!("        - {{x: {x}, y: {y}, value: {d}}}\n"));
    }
    let v = assess(&w, &study(3, &refs));
    let c = &v["fields"][0]["comparison"];
    assert_eq!(c["benchmark"], true);
    assert_eq!(c["outside"], serde_json::json!([3]));
    let cmp = c["comparison"]["points"].as_array().unwrap();
    assert_eq!(cmp.len(), 3);
    for (p, (x, y)) in cmp.iter().zip(pts) {
        let s = p["simulation"].as_f64().unwrap();
        let d = p["measured"].as_f64().unwrap();
        approx::assert_relative_eq!(p["error"].as_f64().unwrap(), s - d, max_relative = 1e-12);
        // S carries the finest mesh's discretisation error 30 (1 + x y)/32² (analytic).
        let e = 30.0 * (1.0 + x * y) / (32.0 * 32.0);
        assert!((s - d - e).abs() < 1e-2, "({x}, {y}): E {} vs {e}", s - d);
    }
}

#[test]
fn line_and_reference_need_coordinates() {
    // Probe files carry no coordinates: the keys are refused with their key path.
    let w = Workdir::new();
    for m in ["L1", "L2", "L3"] {
        w.write(&format!("{m}.csv"), "id,p\na,1.0\nb,2.0\n");
    }
    let text = "format: 1\nmeshes:\n  - {name: L1, size: 1}\n  - {name: L2, size: 2}\n  - {name: L3, size: 4}\nfields:\n  f:\n    columns: [p]\n    data: {L1: L1.csv, L2: L2.csv, L3: L3.csv}\n    line: {from: [0, 0], to: [1, 1]}\n";
    let p = w.write("study.yaml", text);
    let o = run_in(w.path(), &["assess", p.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("fields.f.line"), "{err}");
    // A line with one sample is refused too.
    let w = workdir();
    let p = w.write(
        "study.yaml",
        &study(3, "    line: {from: [0, 0], to: [1, 1], samples: 1}\n"),
    );
    let o = run_in(w.path(), &["assess", p.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("fields.section.line.samples"));
}
