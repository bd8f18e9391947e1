//! "Convergence not demonstrated" through the real binary: a quantity whose differences do not
//! shrink gets no quotable uncertainty, is never called monotonic, fails every acceptance limit
//! and cannot be planned for.

mod common;

use common::*;

/// Values on four meshes of ratio 2 (h = 1, 2, 4, 8).
/// `step`: rising by a constant 0.06 per refinement, like a lid's skin friction that does not
/// converge: constant differences give R = ε21/ε32 = 1 exactly (analytic).
/// `slow`: manufactured φ = 1 − 0.5 h^0.05 (analytic order 0.05, R = 2^−0.05 ≈ 0.966), a
/// quantity that still "converges monotonically" by its class alone.
fn study() -> String {
    let slow: Vec<String> = [1.0_f64, 2.0, 4.0, 8.0]
        .iter()
        .map(|h| format!("{:?}", 1.0 - 0.5 * h.powf(0.05)))
        .collect();
    format!(
        "format: 1
title: Lid-driven cavity, four meshes
dimension: 2
formal_order: 2
meshes:
  - {{name: M1, size: 1}}
  - {{name: M2, size: 2}}
  - {{name: M3, size: 4}}
  - {{name: M4, size: 8}}
quantities:
  step:
    unit: \"-\"
    values: {{M1: 0.434, M2: 0.374, M3: 0.314, M4: 0.254}}
  slow:
    unit: \"-\"
    values: {{M1: {}, M2: {}, M3: {}, M4: {}}}
acceptance:
  - {{target: step, max_relative: 0.5}}
  - {{target: slow, max_relative: 0.5}}
  - {{target: slow, min_meshes: 3}}
",
        slow[0], slow[1], slow[2], slow[3]
    )
}

#[test]
fn not_demonstrated_is_warned_and_recorded() {
    let w = Workdir::new();
    let path = w.write("lid.yaml", &study());
    let v = json(&["assess", "-f", "json", path.to_str().unwrap()]);
    for name in ["step", "slow"] {
        let has = v["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .any(|x| x["code"] == "convergence_not_demonstrated" && x["subject"] == name);
        assert!(has, "{name}: {:?}", warning_codes(&v));
    }
    for q in v["quantities"].as_array().unwrap() {
        assert_eq!(q["governing"]["demonstrated"], false, "{}", q["name"]);
    }
}

#[test]
fn not_demonstrated_wording_in_table_and_paragraph() {
    let w = Workdir::new();
    let path = w.write("lid.yaml", &study());
    let o = run(&["assess", path.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let table = String::from_utf8_lossy(&o.stdout);
    let headline = table
        .lines()
        .find(|l| l.trim_start().starts_with("0.5 ·"))
        .unwrap_or_else(|| panic!("no headline for slow:\n{table}"));
    assert!(
        headline.contains("convergence not demonstrated"),
        "{headline}"
    );
    assert!(!headline.contains("monotonic"), "{headline}");
    assert!(headline.contains("no quotable uncertainty"), "{headline}");
    let o = run(&["assess", "-f", "markdown", path.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let md = String::from_utf8_lossy(&o.stdout);
    assert!(md.contains("convergence is not demonstrated"), "{md}");
    assert!(md.contains("convergence not demonstrated"), "{md}");
    assert!(!md.contains("monotonic convergence"), "{md}");
}

#[test]
fn gate_fails_and_plan_refuses() {
    let w = Workdir::new();
    let path = w.write("lid.yaml", &study());
    let p = path.to_str().unwrap();
    let o = run(&["gate", p]);
    assert_eq!(o.status.code(), Some(1), "{}", show(&o));
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(!out.contains("PASS"), "{out}");
    assert!(out.contains("convergence not demonstrated"), "{out}");
    for target in ["step=1%", "slow=1%"] {
        let o = run(&["plan", p, "--target", target]);
        assert_eq!(o.status.code(), Some(2), "{target}: {}", show(&o));
    }
    let o = run(&["plan", p, "--target", "slow=1%"]);
    assert!(
        String::from_utf8_lossy(&o.stderr).contains("convergence is not demonstrated"),
        "{}",
        show(&o)
    );
}

#[test]
fn successive_triplets_are_compared() {
    // Manufactured: φ = 1 + 0.1 h² on h = 1, 2, 4 (1.1, 1.4, 2.6: p = 2 exactly, analytic) and
    // 5.0 on h = 8, off the law: the differences 0.3, 1.2, 2.4 give the next triplet p = 1
    // (analytic, r = 2), 50 % away from the finest triplet's 2 (the 10 % tolerance is common
    // practice, no source). The exact law on all four meshes (7.4 on h = 8) is not warned.
    let w = Workdir::new();
    for (coarsest, warned) in [("5.0", true), ("7.4", false)] {
        let text = format!(
            "format: 1
title: Manufactured second-order law
dimension: 2
formal_order: 2
meshes:
  - {{name: M1, size: 1}}
  - {{name: M2, size: 2}}
  - {{name: M3, size: 4}}
  - {{name: M4, size: 8}}
quantities:
  q:
    unit: \"-\"
    values: {{M1: 1.1, M2: 1.4, M3: 2.6, M4: {coarsest}}}
"
        );
        let path = w.write("law.yaml", &text);
        let v = json(&["assess", "-f", "json", path.to_str().unwrap()]);
        let codes = warning_codes(&v);
        assert_eq!(
            codes.contains(&"triplet_orders_differ"),
            warned,
            "{codes:?}"
        );
        assert!(!codes.contains(&"not_asymptotic"), "{codes:?}");
    }
}
