//! Partial results through the real binary (docs/method.md §6, "Partial results"): a local
//! problem — one mesh of a sweep without breakdown, measured points or band abscissae outside
//! the range common to all meshes, a band or comparison that cannot be formed, a quantity whose
//! estimate fails — is a warning with a stable code and subject, the result says it was not
//! computed, and every other result equals the figures of the same study without the faulty
//! part (exit 0). `gate` fails every limit on an uncomputed target and says why; every report
//! says "not computed". Study-wide faults still exit 2.
//!
//! Sources: every study here is manufactured data (invented curves and values, no check value
//! taken from them except where stated); the check values are (a) the figures of the same
//! study without the faulty part, computed by the same binary — the claim under test is that
//! the fault does not change them — and (b) analytic facts of the data: plateau means, which
//! abscissae lie outside the meshes' common range, and the overflow of a difference of two
//! doubles of opposite sign near 1.7e308 (IEEE 754 binary64: the largest finite double is about
//! 1.797e308, so 1.7e308 − (−1.7e308) overflows).

mod common;

use common::*;
use serde_json::Value;

/// The study, with `{HEAD_BREAKDOWN}`, `{BAND_AT}`, `{POINTS}`, `{QUANTITIES}` to fill.
/// Mesh A's head stays within 1.7 % of its plateau (60) down to σ = 0.1, the sweep's lowest σ,
/// so a 3 % drop is never reached there; meshes B and C drop by more than 3 %.
const TEMPLATE: &str = "format: 1
title: partial results
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.5}
  - {name: C, size: 2.25}
quantities:
  torque:
    unit: N
    values: {A: 10.1, B: 10.225, C: 10.50625}
{QUANTITIES}sweeps:
  cav:
    x: sigma
    responses: [efficiency, head]
    interpolation: linear
    data:
      A: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.90, 0.90, 0.898, 0.88, 0.80], head: [60, 60, 59.9, 59.6, {A_HEAD_END}]}
      B: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.89, 0.89, 0.886, 0.86, 0.76], head: [59.5, 59.5, 59.3, 58.2, 53]}
      C: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.87, 0.87, 0.858, 0.83, 0.70], head: [59, 59, 58.8, 57, 50]}
    breakdown:
      - {response: efficiency, drop: 1%, reference: plateau, plateau_from: 0.3}
{HEAD_BREAKDOWN}    band: {response: efficiency, at: {BAND_AT}}
reference_data:
  cav:
    response: efficiency
    u_measured: 0.5%
    points:
{POINTS}acceptance:
  - {target: cav.breakdown.efficiency, max_relative: 50%}
{LIMITS}";

const HEAD: &str = "      - {response: head, drop: 3%, reference: plateau, plateau_from: 0.3}\n";
const POINTS: &str = "      - {x: 0.3, value: 0.895}\n      - {x: 0.25, value: 0.88}\n";
/// One measured point at σ = 0.05, below the lowest σ of every mesh (0.1): outside the range.
const POINTS_ONE_OUTSIDE: &str =
    "      - {x: 0.3, value: 0.895}\n      - {x: 0.05, value: 0.7}\n      - {x: 0.25, value: 0.88}\n";
const POINTS_ALL_OUTSIDE: &str = "      - {x: 0.05, value: 0.7}\n      - {x: 0.6, value: 0.9}\n";
/// Differences of two doubles near ±1.7e308 overflow (IEEE 754 binary64).
const OVERFLOWING: &str =
    "  huge:\n    unit: N\n    values: {A: 1.7e308, B: -1.7e308, C: 1.7e308}\n";

struct Parts<'a> {
    head: &'a str,
    a_head_end: &'a str,
    band_at: &'a str,
    points: &'a str,
    quantities: &'a str,
    limits: &'a str,
}

const CLEAN: Parts<'static> = Parts {
    head: "",
    a_head_end: "59.0",
    band_at: "[0.2, 0.3]",
    points: POINTS,
    quantities: "",
    limits: "",
};

fn study(p: &Parts) -> String {
    TEMPLATE
        .replace("{HEAD_BREAKDOWN}", p.head)
        .replace("{A_HEAD_END}", p.a_head_end)
        .replace("{BAND_AT}", p.band_at)
        .replace("{POINTS}", p.points)
        .replace("{QUANTITIES}", p.quantities)
        .replace("{LIMITS}", p.limits)
}

/// Assesses a study; exit 0 is required.
fn assess(text: &str) -> Value {
    let w = Workdir::new();
    w.write("s.yaml", text);
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    serde_json::from_slice(&o.stdout).unwrap()
}

/// The warnings with `code`, as (subject, message).
fn warned<'a>(v: &'a Value, code: &str) -> Vec<(&'a str, &'a str)> {
    v["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|w| w["code"] == code)
        .map(|w| {
            (
                w["subject"].as_str().unwrap_or_default(),
                w["message"].as_str().unwrap(),
            )
        })
        .collect()
}

fn quantity<'a>(v: &'a Value, name: &str) -> &'a Value {
    v["quantities"]
        .as_array()
        .unwrap()
        .iter()
        .find(|q| q["name"] == name)
        .unwrap_or_else(|| panic!("no quantity {name}"))
}

#[test]
fn a_mesh_without_breakdown_is_not_estimated_and_the_rest_is_unchanged() {
    let faulty = assess(&study(&Parts {
        head: HEAD,
        ..CLEAN
    }));
    let clean = assess(&study(&CLEAN));
    // Every other result equals the study without the head breakdown.
    assert_eq!(faulty["quantities"], clean["quantities"]);
    assert_eq!(
        faulty["sweeps"][0]["breakdown"][0],
        clean["sweeps"][0]["breakdown"][0]
    );
    assert_eq!(faulty["sweeps"][0]["band"], clean["sweeps"][0]["band"]);
    assert_eq!(faulty["comparisons"], clean["comparisons"]);

    let b = &faulty["sweeps"][0]["breakdown"][1];
    assert_eq!(b["response"], "head");
    let x = &b["x_estimate"];
    assert_eq!(x["name"], "cav.breakdown.head");
    assert!(
        x["uncertainty"].is_null() && x["governing"].is_null(),
        "{x}"
    );
    assert_eq!(x["not_computed"]["code"], "breakdown_not_computed");
    assert!(
        x["not_computed"]["reason"]
            .as_str()
            .unwrap()
            .contains("no breakdown on mesh A"),
        "{x}"
    );
    // Mesh A is listed with its reference (the plateau mean of 60 and 60: analytic); B and C
    // keep their breakdowns.
    let meshes: Vec<&str> = b["per_mesh"]
        .as_array()
        .unwrap()
        .iter()
        .map(|m| m["mesh"].as_str().unwrap())
        .collect();
    assert_eq!(meshes, ["B", "C"]);
    let nc = &b["per_mesh_not_computed"];
    assert_eq!(nc.as_array().unwrap().len(), 1);
    assert_eq!(nc[0]["mesh"], "A");
    assert_eq!(nc[0]["code"], "breakdown_not_computed");
    assert_eq!(nc[0]["reference"], 60.0);
    // The reference is formed on every mesh, so it is still estimated: plateau means over
    // σ ≥ 0.3 (analytic: (60 + 60)/2, (59.5 + 59.5)/2, (59 + 59)/2).
    let r = &b["reference_estimate"];
    assert!(r.get("not_computed").is_none(), "{r}");
    assert_eq!(r["values"], serde_json::json!([60.0, 59.5, 59.0]));
    // The warning: code, subject, the mesh and the sweep's lowest σ (0.1).
    let w = warned(&faulty, "breakdown_not_computed");
    assert_eq!(w.len(), 1, "{w:?}");
    assert_eq!(w[0].0, "cav.breakdown.head");
    assert!(
        w[0].1.contains("mesh `A`") && w[0].1.contains("0.1"),
        "{}",
        w[0].1
    );
    assert!(warned(&clean, "breakdown_not_computed").is_empty());

    // B's and C's breakdowns equal those of the same study where A's head does drop by 3 %
    // (its last point 58.0 < 0.97·60 = 58.2): A's fault changes nothing on the other meshes.
    let reached = assess(&study(&Parts {
        head: HEAD,
        a_head_end: "58.0",
        ..CLEAN
    }));
    let rb = &reached["sweeps"][0]["breakdown"][1];
    assert!(rb["x_estimate"].get("not_computed").is_none());
    assert_eq!(rb["per_mesh"][1], b["per_mesh"][0]);
    assert_eq!(rb["per_mesh"][2], b["per_mesh"][1]);
    assert!(rb.get("per_mesh_not_computed").is_none());
}

#[test]
fn a_measured_point_outside_the_range_is_skipped_and_named() {
    let faulty = assess(&study(&Parts {
        points: POINTS_ONE_OUTSIDE,
        ..CLEAN
    }));
    let clean = assess(&study(&CLEAN));
    let (f, c) = (&faulty["comparisons"][0], &clean["comparisons"][0]);
    for k in [
        "points",
        "summary",
        "point_warnings",
        "mean_order",
        "median_order",
        "order_points",
    ] {
        assert_eq!(f[k], c[k], "{k}");
    }
    assert_eq!(f["points_outside_range"], serde_json::json!([0.05]));
    assert!(c.get("points_outside_range").is_none());
    assert!(f.get("not_computed").is_none());
    let w = warned(&faulty, "comparison_points_outside_range");
    assert_eq!(w.len(), 1);
    assert_eq!(w[0].0, "cav");
    assert!(w[0].1.contains("sigma = 0.05"), "{}", w[0].1);
    assert_eq!(faulty["quantities"], clean["quantities"]);
    assert_eq!(faulty["sweeps"], clean["sweeps"]);
}

#[test]
fn a_comparison_with_no_point_in_range_is_not_computed() {
    let faulty = assess(&study(&Parts {
        points: POINTS_ALL_OUTSIDE,
        ..CLEAN
    }));
    let clean = assess(&study(&CLEAN));
    let c = &faulty["comparisons"][0];
    assert_eq!(c["not_computed"]["code"], "comparison_not_computed");
    assert_eq!(c["points"], serde_json::json!([]));
    assert_eq!(c["summary"]["points"], 0);
    // σ = 0.05 and 0.6 lie outside 0.1–0.4, the range of every mesh (the study above).
    assert_eq!(c["points_outside_range"], serde_json::json!([0.05, 0.6]));
    assert_eq!(warned(&faulty, "comparison_not_computed")[0].0, "cav");
    assert_eq!(faulty["quantities"], clean["quantities"]);
    assert_eq!(faulty["sweeps"], clean["sweeps"]);
}

#[test]
fn band_abscissae_outside_the_range_are_skipped_or_the_band_is_not_computed() {
    let clean = assess(&study(&CLEAN));
    // σ = 0.05 lies below every mesh's lowest σ (0.1).
    let one = assess(&study(&Parts {
        band_at: "[0.05, 0.2, 0.3]",
        ..CLEAN
    }));
    let (b1, bc) = (&one["sweeps"][0]["band"], &clean["sweeps"][0]["band"]);
    for k in ["points", "summary", "point_warnings"] {
        assert_eq!(b1[k], bc[k], "{k}");
    }
    assert_eq!(b1["points_outside_range"], serde_json::json!([0.05]));
    let w = warned(&one, "band_points_outside_range");
    assert_eq!(w.len(), 1);
    assert_eq!(w[0].0, "cav.band.efficiency");
    assert!(w[0].1.contains("0.05"), "{}", w[0].1);

    let none = assess(&study(&Parts {
        band_at: "[0.05]",
        ..CLEAN
    }));
    let b = &none["sweeps"][0]["band"];
    assert_eq!(b["not_computed"]["code"], "band_not_computed");
    assert_eq!(b["points"], serde_json::json!([]));
    assert_eq!(b["summary"]["points"], 0);
    assert_eq!(
        warned(&none, "band_not_computed")[0].0,
        "cav.band.efficiency"
    );
    assert_eq!(none["quantities"], clean["quantities"]);
    assert_eq!(none["comparisons"], clean["comparisons"]);
    assert_eq!(
        none["sweeps"][0]["breakdown"],
        clean["sweeps"][0]["breakdown"]
    );
}

#[test]
fn a_quantity_whose_estimate_fails_is_not_computed_and_the_others_stay() {
    let faulty = assess(&study(&Parts {
        quantities: OVERFLOWING,
        ..CLEAN
    }));
    let clean = assess(&study(&CLEAN));
    let q = quantity(&faulty, "huge");
    assert!(q["uncertainty"].is_null());
    assert_eq!(q["not_computed"]["code"], "estimate_failed");
    assert!(warned(&faulty, "estimate_failed")
        .iter()
        .any(|(s, _)| *s == "huge"));
    assert_eq!(quantity(&faulty, "torque"), quantity(&clean, "torque"));
    assert!(quantity(&clean, "torque").get("not_computed").is_none());
    assert_eq!(faulty["sweeps"], clean["sweeps"]);
    assert_eq!(faulty["comparisons"], clean["comparisons"]);
}

#[test]
fn gate_fails_every_limit_on_an_uncomputed_target_and_says_why() {
    let w = Workdir::new();
    w.write(
        "s.yaml",
        &study(&Parts {
            head: HEAD,
            quantities: OVERFLOWING,
            limits: "  - {target: cav.breakdown.head, max_absolute: 0.01, require: monotonic}\n  - {target: huge, max_relative: 1%}\n",
            ..CLEAN
        }),
    );
    let o = run_in(w.path(), &["gate", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(1), "{}", show(&o));
    let v: Value = serde_json::from_slice(&o.stdout).unwrap();
    let checks = v["checks"].as_array().unwrap();
    let of = |t: &str| -> Vec<&Value> { checks.iter().filter(|c| c["target"] == t).collect() };
    // The computed breakdown passes its (wide) limit: the fault elsewhere does not fail it.
    assert!(of("cav.breakdown.efficiency")
        .iter()
        .all(|c| c["passed"] == true));
    let head = of("cav.breakdown.head");
    assert_eq!(head.len(), 2, "max_absolute and require");
    for c in head {
        assert_eq!(c["passed"], false);
        assert!(c["value"].is_null());
        let note = c["note"].as_str().unwrap();
        assert!(
            note.contains("not computed: no breakdown on mesh A")
                && note.contains("breakdown_not_computed"),
            "{note}"
        );
    }
    let huge = of("huge");
    assert_eq!(huge.len(), 1);
    assert_eq!(huge[0]["passed"], false);
    assert!(huge[0]["note"]
        .as_str()
        .unwrap()
        .contains("not computed: the estimate failed"));
    // The table names the target too.
    let o = run_in(w.path(), &["gate", "s.yaml"]);
    assert_eq!(o.status.code(), Some(1));
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(
        out.lines().any(|l| l.contains("FAIL")
            && l.contains("cav.breakdown.head")
            && l.contains("not computed")),
        "{out}"
    );
}

#[test]
fn every_report_says_not_computed_where_the_figure_would_be() {
    let w = Workdir::new();
    w.write(
        "s.yaml",
        &study(&Parts {
            head: HEAD,
            band_at: "[0.05]",
            points: POINTS_ALL_OUTSIDE,
            ..CLEAN
        }),
    );
    let reason = "not computed: no breakdown on mesh A";
    for format in ["table", "markdown", "latex", "csv"] {
        let o = run_in(w.path(), &["assess", "s.yaml", "-f", format]);
        assert_eq!(o.status.code(), Some(0), "{format}: {}", show(&o));
        let out = String::from_utf8_lossy(&o.stdout);
        assert!(out.contains(reason), "{format}: {out}");
        assert!(out.contains("not computed: no band abscissa"), "{format}");
        assert!(out.contains("not computed: no measured point"), "{format}");
    }
    // CSV: the breakdown row carries the reason in `method` and the code in `warning`, its
    // figures empty; the band and the comparison have a `not_computed` row each.
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "csv"]);
    let text = String::from_utf8_lossy(&o.stdout).into_owned();
    let mut r = csv::Reader::from_reader(text.as_bytes());
    let head = r.headers().unwrap().clone();
    let col = |n: &str| head.iter().position(|h| h == n).unwrap();
    let rows: Vec<csv::StringRecord> = r.records().map(Result::unwrap).collect();
    let b = rows
        .iter()
        .find(|r| &r[col("name")] == "cav.breakdown.head")
        .expect("breakdown row");
    assert!(b[col("method")].starts_with(reason), "{b:?}");
    assert_eq!(&b[col("warning")], "breakdown_not_computed");
    assert_eq!(&b[col("absolute")], "");
    let kinds: Vec<(&str, &str)> = rows
        .iter()
        .filter(|r| &r[col("record")] == "not_computed")
        .map(|r| (&r[col("sweep")], &r[col("warning")]))
        .collect();
    assert_eq!(
        kinds,
        [
            ("cav", "band_not_computed"),
            ("cav", "comparison_not_computed")
        ]
    );
    // HTML and the drafted paragraph (in the report folder).
    let o = run_in(w.path(), &["report", "s.yaml", "-o", "rep"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let html = std::fs::read_to_string(w.path().join("rep/report.html")).unwrap();
    assert!(html.contains(reason), "html");
    let md = std::fs::read_to_string(w.path().join("rep/report.md")).unwrap();
    let statement = md
        .split("Drafted uncertainty statement")
        .nth(1)
        .expect("the drafted statement");
    assert!(
        statement.contains("the breakdown for a 3.00 % drop of head")
            && statement.contains("is not computed: no breakdown on mesh A"),
        "{statement}"
    );
    assert!(
        statement.contains("the band of efficiency is not computed"),
        "{statement}"
    );
}

#[test]
fn study_wide_faults_still_exit_2_with_nothing_written() {
    let base = study(&Parts {
        head: HEAD,
        ..CLEAN
    });
    for (from, to, expect) in [
        // The breakdown definition is the study's, the same for every mesh.
        ("drop: 3%", "drop: 140%", "sweeps.cav.breakdown[1].drop"),
        ("    band:", "    bands:", "unknown field `bands`"),
        ("      C: {sigma", "      D: {sigma", "sweeps.cav.data.D"),
        (
            "  - {name: B, size: 1.5}\n  - {name: C, size: 2.25}\n",
            "",
            "at least two",
        ),
    ] {
        assert!(base.contains(from), "{from}");
        let w = Workdir::new();
        w.write("s.yaml", &base.replacen(from, to, 1));
        let o = run_in(w.path(), &["assess", "s.yaml", "-o", "out.json"]);
        assert_eq!(o.status.code(), Some(2), "{to}: {}", show(&o));
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.contains(expect), "expected `{expect}` in {err}");
        assert_eq!(w.files(), ["s.yaml"], "nothing written");
    }
}

/// A mesh whose sweep starts below the plateau start (C from σ = 0.35, the plateau from
/// σ = 0.38) has neither a reference nor a breakdown: both are not computed, and `gate` fails
/// limits on both. Manufactured data; which points lie on the plateau is read off the study.
#[test]
fn a_mesh_without_a_plateau_point_has_neither_reference_nor_breakdown() {
    let text = "format: 1
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.5}
  - {name: C, size: 2.25}
quantities:
  torque: {unit: N, values: {A: 10.1, B: 10.225, C: 10.50625}}
sweeps:
  cav:
    x: sigma
    responses: [efficiency]
    interpolation: linear
    data:
      A: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.90, 0.90, 0.898, 0.88, 0.80]}
      B: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.89, 0.89, 0.886, 0.86, 0.76]}
      C: {sigma: [0.35, 0.3, 0.2, 0.15, 0.1], efficiency: [0.87, 0.87, 0.858, 0.83, 0.70]}
    breakdown:
      - {response: efficiency, drop: 1%, reference: plateau, plateau_from: 0.38}
acceptance:
  - {target: cav.reference.efficiency, max_relative: 50%}
  - {target: torque, max_relative: 50%}
";
    let v = assess(text);
    let b = &v["sweeps"][0]["breakdown"][0];
    assert_eq!(b["per_mesh_not_computed"][0]["mesh"], "C");
    assert!(b["per_mesh_not_computed"][0]["reference"].is_null());
    assert_eq!(
        b["x_estimate"]["not_computed"]["code"],
        "breakdown_not_computed"
    );
    let r = &b["reference_estimate"];
    assert_eq!(r["not_computed"]["code"], "reference_not_computed");
    assert!(
        r["not_computed"]["reason"]
            .as_str()
            .unwrap()
            .contains("no reference on mesh C (no sweep point on the plateau)"),
        "{r}"
    );
    assert_eq!(
        warned(&v, "reference_not_computed")[0].0,
        "cav.reference.efficiency"
    );
    let w = Workdir::new();
    w.write("s.yaml", text);
    let o = run_in(w.path(), &["gate", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(1), "{}", show(&o));
    let g: Value = serde_json::from_slice(&o.stdout).unwrap();
    for c in g["checks"].as_array().unwrap() {
        let uncomputed = c["target"] == "cav.reference.efficiency";
        assert_eq!(c["passed"], !uncomputed, "{c}");
        if uncomputed {
            assert!(c["note"].as_str().unwrap().contains("not computed"), "{c}");
        }
    }
}

/// A comparison normalised by its peaks cannot be formed when the measured peak is zero (a
/// division by zero, analytic): it is not computed, and the rest is unchanged.
#[test]
fn a_normalised_comparison_with_a_zero_peak_is_not_computed() {
    let zero = "      - {x: 0.3, value: 0.0, u: 0.001}\n      - {x: 0.25, value: 0.0, u: 0.001}\n    normalise: true\n";
    let faulty = assess(&study(&Parts {
        points: zero,
        ..CLEAN
    }));
    let clean = assess(&study(&CLEAN));
    let c = &faulty["comparisons"][0];
    assert_eq!(c["not_computed"]["code"], "comparison_not_computed");
    assert!(
        c["not_computed"]["reason"]
            .as_str()
            .unwrap()
            .contains("nonzero peaks"),
        "{c}"
    );
    assert_eq!(c["points"], serde_json::json!([]));
    assert_eq!(faulty["quantities"], clean["quantities"]);
    assert_eq!(faulty["sweeps"], clean["sweeps"]);
}

mod property {
    use super::*;
    use proptest::prelude::*;
    use std::path::Path;

    fn assess_lib(text: &str) -> Value {
        let study = meshbound::study::parse(text, Path::new("s.yaml")).expect("parses");
        let a = meshbound::assess::run(&study, &meshbound::sink::Skip).expect("assesses");
        serde_json::to_value(&a).unwrap()
    }

    fn points(xs: &[f64]) -> String {
        xs.iter()
            .map(|x| format!("      - {{x: {x}, value: 0.88}}\n"))
            .collect()
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(64))]

        /// Manufactured measured abscissae anywhere in [0, 0.6] (the meshes share 0.1–0.4):
        /// the comparison of all of them equals the comparison of those inside the range, and
        /// names exactly those outside (the range is read off the study; no other source needed).
        #[test]
        fn points_outside_the_range_never_change_the_others(
            xs in proptest::collection::btree_set(0u32..=60, 1..8)
        ) {
            let xs: Vec<f64> = xs.iter().map(|&i| f64::from(i) / 100.0).collect();
            let (inside, outside): (Vec<f64>, Vec<f64>) =
                xs.iter().partition(|x| (0.1..=0.4).contains(*x));
            let all = assess_lib(&study(&Parts { points: &points(&xs), ..CLEAN }));
            let c = &all["comparisons"][0];
            let listed: Vec<f64> = c
                .get("points_outside_range")
                .map_or(Vec::new(), |v| serde_json::from_value(v.clone()).unwrap());
            prop_assert_eq!(&listed, &outside);
            prop_assert_eq!(
                warned(&all, "comparison_points_outside_range").len(),
                usize::from(!outside.is_empty())
            );
            if inside.is_empty() {
                prop_assert_eq!(&c["not_computed"]["code"], "comparison_not_computed");
            } else {
                let only = assess_lib(&study(&Parts { points: &points(&inside), ..CLEAN }));
                let o = &only["comparisons"][0];
                prop_assert_eq!(&c["points"], &o["points"]);
                prop_assert_eq!(&c["summary"], &o["summary"]);
                prop_assert_eq!(&c["point_warnings"], &o["point_warnings"]);
            }
            prop_assert!(!all["sweeps"][0]["breakdown"][0]["x_estimate"]["uncertainty"].is_null());
        }
    }
}
