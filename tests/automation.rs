//! gate, batch runs and plan through the real binary.

mod common;

use approx::assert_relative_eq;
use common::*;

const STUDY: &str = "format: 1
title: gate test
dimension: 2
meshes:
  - {name: N1, cells: 18000}
  - {name: N2, cells: 8000}
  - {name: N3, cells: 4500}
quantities:
  phi:
    values: {N1: 6.063, N2: 5.972, N3: 5.863}
  wobble:
    values: {N1: 1.0, N2: 1.02, N3: 1.03}
acceptance:
  - {target: phi, max_relative: 3%, require: monotonic, min_meshes: 3}
";

#[test]
fn gate_exit_codes_and_json() {
    let w = Workdir::new();
    // Passing: GCI_fine of the Celik et al. (2008) Table 1 case is 2.2 % < 3 %.
    w.write("pass.yaml", STUDY);
    let o = run_in(w.path(), &["gate", "pass.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["passed"], true);
    let checks = v["checks"].as_array().unwrap();
    assert_eq!(checks.len(), 3);
    for c in checks {
        for k in ["study", "target", "limit", "value", "passed"] {
            assert!(c.get(k).is_some(), "check key {k}");
        }
    }
    // Failing: 2 % < 2.2 %.
    w.write(
        "fail.yaml",
        &STUDY.replace("max_relative: 3%", "max_relative: 2%"),
    );
    let o = run_in(w.path(), &["gate", "fail.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(1), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["passed"], false);
    assert_eq!(v["checks"][0]["passed"], false);
    // A divergent target fails every uncertainty limit.
    w.write(
        "div.yaml",
        &STUDY.replace("{target: phi,", "{target: wobble,"),
    );
    let o = run_in(w.path(), &["gate", "div.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(1), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert!(v["checks"][0]["value"].is_null());
    assert_eq!(v["checks"][1]["value"], "divergent");
    // Broken: exit 2, the rest still checked.
    w.write("broken.yaml", &STUDY.replace("cells: 8000", "cells: -1"));
    let o = run_in(
        w.path(),
        &["gate", "pass.yaml", "broken.yaml", "-f", "json"],
    );
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["passed"], false);
    assert_eq!(v["checks"].as_array().unwrap().len(), 3);
    assert!(v["errors"][0]["message"]
        .as_str()
        .unwrap()
        .contains("meshes[1].cells"));
    // Unknown target: exit 2 naming the known ones.
    w.write(
        "unknown.yaml",
        &STUDY.replace("{target: phi,", "{target: phy,"),
    );
    let o = run_in(w.path(), &["gate", "unknown.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("`phy` is not a quantity"));
    // The example study passes every limit it sets, but its band is wider than the curve
    // near breakdown and three measured points agree only through u_num (docs/method.md §8,
    // "Uncertainty too wide to conclude"): gate fails those two, whatever the limits.
    let o = run(&["gate", "studies/pump-turbine-cavitation.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(1), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let failed: Vec<&str> = v["checks"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|c| c["passed"] == false)
        .map(|c| c["value"].as_str().unwrap_or_default())
        .collect();
    assert_eq!(
        failed,
        ["comparison_carried_by_u_num", "band_wider_than_variation"],
        "{}",
        show(&o)
    );
    // A directory is searched (the example study fails there too).
    let o = run(&["gate", "studies"]);
    assert_eq!(o.status.code(), Some(1), "{}", show(&o));
}

#[test]
fn batch_of_1000_studies_keeps_order_and_reports_the_broken_one() {
    let w = Workdir::new();
    let dir = w.path().join("batch");
    std::fs::create_dir(&dir).unwrap();
    // Manufactured: φ = 1 + c h² on h = 1, 2, 4 (exact order 2, φ_ext = 1; analytic).
    for i in 0..1000 {
        let c = 0.001 * (i + 1) as f64;
        let text = if i == 617 {
            "format: 1\nmeshes: []\n".to_string()
        } else {
            format!(
                "format: 1\ntitle: s{i:04}\nmeshes:\n  - {{name: a, size: 1}}\n  - {{name: b, size: 2}}\n  - {{name: c, size: 4}}\nquantities:\n  q: {{values: {{a: {}, b: {}, c: {}}}}}\n",
                1.0 + c,
                1.0 + 4.0 * c,
                1.0 + 16.0 * c
            )
        };
        std::fs::write(dir.join(format!("s{i:04}.yaml")), text).unwrap();
    }
    let start = std::time::Instant::now();
    let o = run_in(w.path(), &["assess", "batch", "-f", "jsonl"]);
    eprintln!("1000-study batch: {:?}", start.elapsed());
    assert_eq!(o.status.code(), Some(2), "one broken study gives exit 2");
    let text = String::from_utf8_lossy(&o.stdout);
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), 1000);
    for (i, l) in lines.iter().enumerate() {
        let v: serde_json::Value = serde_json::from_str(l).unwrap();
        if i == 617 {
            assert!(v["error"].as_str().unwrap().contains("s0617.yaml"), "{l}");
            continue;
        }
        assert_eq!(v["title"], format!("s{i:04}"));
        let tg = &v["quantities"][0]["three_grid"];
        assert_relative_eq!(
            tg["observed_order"].as_f64().unwrap(),
            2.0,
            max_relative = 1e-9
        );
        assert_relative_eq!(
            tg["extrapolated"].as_f64().unwrap(),
            1.0,
            max_relative = 1e-12
        );
    }
    assert!(String::from_utf8_lossy(&o.stderr).contains("1 of 1000 studies could not be assessed"));
}

#[test]
fn plan_matches_hand_calculations() {
    // Method notes §9: N_coarser = N_finer / r^d; 2.4e6 cells, r = 1.3, 3-D:
    // 2.4e6/2.197 = 1092399 (hand: 2400000/2.197 = 1092398.7); /1.3⁶ = 497223 (hand).
    let v = json(&[
        "plan", "--cells", "2.4e6", "--ratio", "1.3", "--levels", "2", "--format", "json",
    ]);
    let m = v["meshes"].as_array().unwrap();
    assert_eq!(m.len(), 3);
    assert_eq!(m[0]["cells"], 2_400_000);
    assert!(m[0]["ratio"].is_null());
    assert_eq!(m[1]["cells"], 1_092_399);
    assert_eq!(m[2]["cells"], 497_223);
    assert_relative_eq!(m[1]["ratio"].as_f64().unwrap(), 1.3, max_relative = 1e-15);
    // Finer, 2-D, r = 2 (hand: 1000·4 = 4000).
    let v = json(&[
        "plan",
        "--cells",
        "1000",
        "--ratio",
        "2",
        "--levels",
        "1",
        "--dimension",
        "2",
        "--finer",
        "-f",
        "json",
    ]);
    assert_eq!(v["meshes"][1]["cells"], 4000);
    assert_relative_eq!(
        v["meshes"][1]["size"].as_f64().unwrap(),
        0.5,
        max_relative = 1e-15
    );
    let o = run(&["plan", "--cells", "1000", "--ratio", "0.9"]);
    assert_eq!(o.status.code(), Some(2));
    // Target: h = h1 (U*/U1)^(1/p), N = N1 (h1/h)^d (method notes §9), from the Celik case.
    let a = json(&["assess", "studies/celik-2008-table1.yaml", "-f", "json"]);
    let tg = &a["quantities"][0]["three_grid"];
    let (p, gci) = (
        tg["observed_order"].as_f64().unwrap(),
        tg["gci_fine"].as_f64().unwrap(),
    );
    let v = json(&[
        "plan",
        "studies/celik-2008-table1.yaml",
        "--target",
        "phi=1%",
        "-f",
        "json",
    ]);
    let t = &v["targets"][0];
    let ratio = (0.01 / gci).powf(1.0 / p);
    assert_relative_eq!(
        t["size_ratio"].as_f64().unwrap(),
        ratio,
        max_relative = 1e-10
    );
    assert_relative_eq!(
        t["cells"].as_f64().unwrap(),
        18000.0 * ratio.powi(-2),
        max_relative = 1e-10
    );
    // Divergent and oscillatory quantities are refused with a reason.
    let w = Workdir::new();
    w.write("s.yaml", STUDY);
    let o = run_in(w.path(), &["plan", "s.yaml", "--target", "wobble=1%"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("diverges"));
    let o = run(&[
        "plan",
        "studies/pump-turbine-pump-mode.yaml",
        "--target",
        "shaft_torque=0.1%",
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("oscillates"));
}

#[test]
fn draft_writes_a_study_that_runs_and_never_overwrites() {
    let w = Workdir::new();
    let o = run_in(w.path(), &["draft", "new.yaml"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let o = run_in(w.path(), &["assess", "new.yaml", "-f", "json"]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "the starter study runs as it is\n{}",
        show(&o)
    );
    let o = run_in(w.path(), &["gate", "new.yaml"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    std::fs::write(w.path().join("new.yaml"), "mine").unwrap();
    let o = run_in(w.path(), &["draft", "new.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert_eq!(
        std::fs::read_to_string(w.path().join("new.yaml")).unwrap(),
        "mine"
    );
}

#[test]
fn completions_and_manual_come_from_the_command_line_definition() {
    let o = run(&["completions", "bash"]);
    assert_eq!(o.status.code(), Some(0));
    let text = String::from_utf8_lossy(&o.stdout);
    for sub in ["assess", "gate", "plan", "schema", "draft", "water"] {
        assert!(text.contains(sub), "completion lacks {sub}");
    }
    let o = run(&["manual"]);
    assert_eq!(o.status.code(), Some(0));
    assert!(String::from_utf8_lossy(&o.stdout).contains(".TH meshbound 1"));
}
