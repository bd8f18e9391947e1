//! End-to-end tests of `meshbound assess` through the real binary.

mod common;

use approx::assert_relative_eq;
use common::*;

#[test]
fn celik_2008_table_1_through_the_binary() {
    // Source: Celik et al. (2008), J. Fluids Eng. 130(7) 078001, Table 1, first column
    // (values from memory of the table): p = 1.53, φ_ext21 = 6.1685, e_a21 = 1.5 %,
    // e_ext21 = 1.7 %, GCI_fine21 = 2.2 %. Checked here to the printed digits.
    let v = json(&[
        "assess",
        "studies/celik-2008-table1.yaml",
        "--format",
        "json",
    ]);
    let tg = &v["quantities"][0]["three_grid"];
    let round = |x: f64, d: i32| (x * 10f64.powi(d)).round() / 10f64.powi(d);
    assert_relative_eq!(
        round(tg["observed_order"].as_f64().unwrap(), 2),
        1.53,
        epsilon = 1e-12
    );
    assert_relative_eq!(
        round(tg["extrapolated"].as_f64().unwrap(), 4),
        6.1685,
        epsilon = 1e-12
    );
    assert_relative_eq!(
        round(tg["approx_rel_error"].as_f64().unwrap() * 100.0, 1),
        1.5,
        epsilon = 1e-12
    );
    assert_relative_eq!(
        round(tg["extrap_rel_error"].as_f64().unwrap() * 100.0, 1),
        1.7,
        epsilon = 1e-12
    );
    assert_relative_eq!(
        round(tg["gci_fine"].as_f64().unwrap() * 100.0, 1),
        2.2,
        epsilon = 1e-12
    );
    assert_eq!(tg["convergence"], "monotonic");
    assert_eq!(tg["meshes"], serde_json::json!(["N1", "N2", "N3"]));
    let u = &v["quantities"][0]["uncertainty"];
    assert_eq!(u["method"], "three_grid");
    // Absolute U = GCI_fine · |φ1| (Celik et al. 2008; method notes §2).
    assert_relative_eq!(
        u["absolute"].as_f64().unwrap(),
        tg["gci_fine"].as_f64().unwrap() * 6.063,
        max_relative = 1e-12
    );
}

#[test]
fn every_example_study_runs_in_both_formats() {
    let mut n = 0;
    for entry in std::fs::read_dir(root().join("studies")).unwrap() {
        let p = entry.unwrap().path();
        if p.extension().and_then(|e| e.to_str()) != Some("yaml") {
            continue;
        }
        n += 1;
        let rel = format!("studies/{}", p.file_name().unwrap().to_string_lossy());
        let o = run(&["assess", &rel]);
        assert_eq!(o.status.code(), Some(0), "{rel}\n{}", show(&o));
        let text = String::from_utf8_lossy(&o.stdout);
        assert!(text.contains("caution:"), "{rel}: the caution is missing");
        assert!(
            !text.contains("NaN") && !text.contains("inf "),
            "{rel}: {text}"
        );
        let v = json(&["assess", &rel, "--format", "json"]);
        assert_eq!(v["format"], 1);
    }
    assert!(n >= 2, "expected at least two example studies, found {n}");
}

#[test]
fn json_result_matches_the_golden_file() {
    // The JSON result is a contract: pin it. Regenerate with MESHBOUND_BLESS=1.
    let o = run(&[
        "assess",
        "studies/pump-turbine-pump-mode.yaml",
        "--format",
        "json",
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let golden = root().join("tests/golden/pump-turbine-pump-mode.json");
    if std::env::var_os("MESHBOUND_BLESS").is_some() {
        std::fs::write(&golden, &o.stdout).unwrap();
    }
    let want = std::fs::read_to_string(&golden).expect("golden file exists");
    assert_eq!(String::from_utf8_lossy(&o.stdout), want);
}

#[test]
fn contract_keys_are_present() {
    let v = json(&[
        "assess",
        "studies/pump-turbine-pump-mode.yaml",
        "--format",
        "json",
    ]);
    for k in [
        "format",
        "title",
        "meshes",
        "quantities",
        "sweeps",
        "warnings",
    ] {
        assert!(v.get(k).is_some(), "missing top-level key {k}");
    }
    let m = &v["meshes"][1];
    for k in ["name", "cells", "size", "ratio"] {
        assert!(m.get(k).is_some(), "missing mesh key {k}");
    }
    assert!(v["meshes"][0]["ratio"].is_null());
    assert_relative_eq!(
        v["meshes"][0]["size"].as_f64().unwrap(),
        1.0,
        epsilon = 1e-15
    );
    assert_eq!(v["meshes"][0]["cells"], 3400000);
    let q = &v["quantities"][0];
    for k in [
        "name",
        "unit",
        "values",
        "three_grid",
        "least_squares",
        "uncertainty",
    ] {
        assert!(q.get(k).is_some(), "missing quantity key {k}");
    }
    for k in [
        "meshes",
        "convergence",
        "convergence_ratio",
        "observed_order",
        "extrapolated",
        "approx_rel_error",
        "extrap_rel_error",
        "gci_fine",
        "gci_coarse",
        "asymptotic_ratio",
        "safety_factor",
    ] {
        assert!(
            q["three_grid"].get(k).is_some(),
            "missing three_grid key {k}"
        );
    }
    for k in ["method", "value", "absolute", "relative", "lower", "upper"] {
        assert!(
            q["uncertainty"].get(k).is_some(),
            "missing uncertainty key {k}"
        );
    }
    for w in v["warnings"].as_array().unwrap() {
        let code = w["code"].as_str().unwrap();
        assert!(
            code.chars()
                .all(|c| c.is_ascii_lowercase() || c == '_' || c.is_ascii_digit()),
            "{code}"
        );
        assert!(!w["message"].as_str().unwrap().is_empty());
    }
}

#[test]
fn output_file_is_written_and_meshes_sorted_whatever_the_file_order() {
    let w = Workdir::new();
    let study = w.write(
        "s.yaml",
        "format: 1\ndimension: 2\nmeshes:\n  - {name: c, cells: 4500}\n  - {name: a, cells: 18000}\n  - {name: b, cells: 8000}\nquantities:\n  q: {values: {a: 6.063, b: 5.972, c: 5.863}}\n",
    );
    let out = w.path().join("r.json");
    let o = run(&[
        "assess",
        study.to_str().unwrap(),
        "-f",
        "json",
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert!(o.stdout.is_empty());
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&out).unwrap()).unwrap();
    let names: Vec<&str> = v["meshes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|m| m["name"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["a", "b", "c"]);
    assert_eq!(
        w.files(),
        ["r.json", "s.yaml"],
        "no temporary file may be left behind"
    );
}

#[test]
fn oscillatory_divergent_and_no_change_cases() {
    let w = Workdir::new();
    let study = w.write(
        "s.yaml",
        "format: 1\nmeshes:\n  - {name: a, size: 1.0}\n  - {name: b, size: 1.5}\n  - {name: c, size: 2.25}\nquantities:\n  osc: {values: {a: 1.0, b: 0.99, c: 1.02}}\n  div: {values: {a: 1.0, b: 1.02, c: 1.03}}\n  flat: {values: {a: 2.5, b: 2.5, c: 2.5}}\n",
    );
    let o = run(&["assess", study.to_str().unwrap(), "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let q = |i: usize| &v["quantities"][i];
    // Oscillatory: R = −1/3 (Stern et al. 2001 classes); half range 0.015 beats the GCI
    // 1.25·0.01/(3 − 1) = 0.00625 (hand calculation), so the half range governs.
    assert_eq!(q(0)["three_grid"]["convergence"], "oscillatory");
    assert_eq!(q(0)["uncertainty"]["method"], "oscillation_range");
    assert_relative_eq!(
        q(0)["uncertainty"]["absolute"].as_f64().unwrap(),
        0.015,
        max_relative = 1e-12
    );
    // Divergent: R = 2 > 1, no uncertainty, no order.
    assert_eq!(q(1)["three_grid"]["convergence"], "divergent");
    assert!(q(1)["uncertainty"].is_null());
    assert!(q(1)["three_grid"]["observed_order"].is_null());
    // No change: zero uncertainty and a warning.
    assert_eq!(q(2)["three_grid"]["convergence"], "no_change");
    assert_eq!(q(2)["uncertainty"]["absolute"], 0.0);
    let codes = warning_codes(&v);
    assert!(
        codes.contains(&"no_change")
            && codes.contains(&"divergent")
            && codes.contains(&"oscillatory"),
        "{codes:?}"
    );
}

#[test]
fn five_mesh_study_shows_both_estimates_and_least_squares_governs() {
    let v = json(&[
        "assess",
        "studies/axial-pump-five-meshes.yaml",
        "--format",
        "json",
    ]);
    let q = &v["quantities"][0];
    let ls = &q["least_squares"];
    for k in [
        "fits",
        "selected",
        "order",
        "data_range",
        "error_estimate",
        "safety_factor",
        "per_mesh",
    ] {
        assert!(ls.get(k).is_some(), "missing least_squares key {k}");
    }
    assert_eq!(ls["fits"].as_array().unwrap().len(), 8);
    for f in ls["fits"].as_array().unwrap() {
        for k in [
            "kind",
            "weighted",
            "phi0",
            "coefficients",
            "order",
            "std_dev",
        ] {
            assert!(f.get(k).is_some(), "missing fit key {k}");
        }
    }
    let per_mesh = ls["per_mesh"].as_array().unwrap();
    assert_eq!(per_mesh.len(), 5);
    assert_eq!(per_mesh[0]["mesh"], "G1");
    assert_eq!(q["uncertainty"]["method"], "least_squares");
    assert_eq!(q["uncertainty"]["absolute"], per_mesh[0]["uncertainty"]);
    assert_eq!(
        q["three_grid"]["meshes"],
        serde_json::json!(["G1", "G2", "G3"])
    );
    let o = run(&["assess", "studies/axial-pump-five-meshes.yaml"]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("least squares (5 meshes)"), "{text}");
    assert!(
        text.contains("differ by more than a factor of two"),
        "{text}"
    );
}

#[test]
fn estimator_setting_chooses_what_governs() {
    let w = Workdir::new();
    let base = std::fs::read_to_string(root().join("studies/axial-pump-five-meshes.yaml")).unwrap();
    w.write(
        "tg.yaml",
        &base.replace("estimator: auto", "estimator: three_grid"),
    );
    let o = run_in(w.path(), &["assess", "tg.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["quantities"][0]["uncertainty"]["method"], "three_grid");
    assert!(
        v["quantities"][0]["least_squares"].is_object(),
        "least squares is still shown"
    );
    // least_squares with three meshes is refused.
    let three = std::fs::read_to_string(root().join("studies/hydrofoil-lift.yaml")).unwrap();
    w.write(
        "ls3.yaml",
        &format!("{three}settings: {{estimator: least_squares}}\n"),
    );
    let o = run_in(w.path(), &["assess", "ls3.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr)
        .contains("settings.estimator: `least_squares` needs at least four meshes"));
}

#[test]
fn study_health_checks() {
    let w = Workdir::new();
    w.write(
        "h.yaml",
        "format: 1\nmeshes:\n  - {name: a, cells: 8000, size: 0.05, y_plus: 22, iterative: 0.0004}\n  - {name: b, cells: 1000, size: 0.1, y_plus: 45}\n  - {name: c, cells: 125, size: 0.3, y_plus: 90}\nquantities:\n  q: {values: {a: 1.0, b: 1.002, c: 1.01}}\n",
    );
    let o = run_in(w.path(), &["assess", "h.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let codes = warning_codes(&v);
    // y+ 22 lies below the 30–300 wall-function range, 45 and 90 inside (common practice).
    assert!(
        codes.contains(&"y_plus_crosses_wall_function_range"),
        "{codes:?}"
    );
    // iterative 4e-4 > |ε21|/10 = 2e-4.
    assert!(codes.contains(&"iterative_not_small"), "{codes:?}");
    // cells 8000 → 125 in 3-D imply h ratio 4, the sizes give 6.
    assert!(codes.contains(&"cells_do_not_follow_sizes"), "{codes:?}");
    // r32 = 3 vs r21 = 2: non-constant ratio.
    assert!(codes.contains(&"ratios_differ"), "{codes:?}");
    // The example study raises none of the health warnings.
    let v = json(&[
        "assess",
        "studies/pump-turbine-pump-mode.yaml",
        "-f",
        "json",
    ]);
    let codes = warning_codes(&v);
    assert!(
        !codes.contains(&"y_plus_crosses_wall_function_range"),
        "{codes:?}"
    );
}
