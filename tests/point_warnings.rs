//! Point warnings through the real binary: the warnings of band, comparison and field points are
//! aggregated per code into their result (count and first places), the mean and median orders
//! leave out orders on a search bound, not found or not demonstrated, and every output shows
//! them.

mod common;

use common::*;
use meshbound::assess::govern;
use meshbound::estimate::three_grid::{self, ThreeGridSettings};
use meshbound::study::raw::EstimatorChoice;
use meshbound::sweep::{Interpolant, Interpolation};
use serde_json::Value;
use std::collections::BTreeMap;

const DEMO: &str = "studies/pump-turbine-cavitation.yaml";

/// The codes the scalar three-mesh path raises for three values: the estimate's warnings, the
/// search-bound flag (`order_at_bound`) and `assess::govern`'s not-demonstrated rule.
fn scalar_codes(h: [f64; 3], phi: [f64; 3]) -> Vec<String> {
    let settings = ThreeGridSettings::default();
    let tg = three_grid::estimate(h, phi, &settings).expect("an estimate");
    let mut codes: Vec<String> = tg.warnings.iter().map(|w| w.code.clone()).collect();
    if tg.order_at_bound {
        codes.push("order_at_bound".into());
    }
    let g = govern(Some(&tg), None, EstimatorChoice::Auto, None).expect("governs");
    if g.not_demonstrated_because.is_some() {
        codes.push("convergence_not_demonstrated".into());
    }
    codes.sort();
    codes.dedup();
    codes
}

/// The aggregated list of a result as code → (points, listed places, more).
fn aggregated(list: &Value) -> BTreeMap<String, (u64, Vec<f64>, u64)> {
    list.as_array()
        .expect("a list")
        .iter()
        .map(|w| {
            (
                w["code"].as_str().unwrap().to_string(),
                (
                    w["points"].as_u64().unwrap(),
                    w["at"]
                        .as_array()
                        .unwrap()
                        .iter()
                        .map(|x| x.as_f64().unwrap())
                        .collect(),
                    w["more"].as_u64().unwrap(),
                ),
            )
        })
        .collect()
}

/// Aggregates per-point code lists the way the contract says: count, the first five places,
/// the rest counted.
fn expected(points: &[(f64, Vec<String>)]) -> BTreeMap<String, (u64, Vec<f64>, u64)> {
    let mut out: BTreeMap<String, (u64, Vec<f64>, u64)> = BTreeMap::new();
    for (x, codes) in points {
        for c in codes {
            let e = out.entry(c.clone()).or_default();
            e.0 += 1;
            if e.1.len() < 5 {
                e.1.push(*x);
            } else {
                e.2 += 1;
            }
        }
    }
    out
}

fn f(v: &Value) -> f64 {
    v.as_f64().expect("a number")
}

/// The demo's meshes interpolated at `x` with the library's PCHIP (checked against scipy's
/// PchipInterpolator in tests/pchip_reference.rs), finest first.
fn demo_values(v: &Value, x: f64) -> [f64; 3] {
    let curves = v["sweeps"][0]["curves"].as_array().unwrap();
    let mut out = [0.0; 3];
    for (k, c) in curves.iter().enumerate() {
        let xs: Vec<f64> = c["x"].as_array().unwrap().iter().map(f).collect();
        let ys: Vec<f64> = c["responses"][0]
            .as_array()
            .unwrap()
            .iter()
            .map(f)
            .collect();
        out[k] = Interpolant::new(&xs, &ys, Interpolation::Pchip)
            .unwrap()
            .eval(x)
            .unwrap();
    }
    out
}

#[test]
fn demo_band_and_comparison_carry_the_pointwise_warnings() {
    // Source of the check: the demo's own data (invented numbers, no check values of their
    // own), run point by point through the scalar three-mesh estimate of the library (checked
    // against Celik et al. 2008 Table 1) after the library's PCHIP (checked against scipy):
    // the binary's aggregated warnings must be exactly those codes, counts and places.
    let v = json(&["assess", "-f", "json", DEMO]);
    let h: Vec<f64> = v["meshes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|m| f(&m["size"]))
        .collect();
    let h = [h[0], h[1], h[2]];
    let band = &v["sweeps"][0]["band"];
    let mut per_point = Vec::new();
    let mut orders = Vec::new();
    for p in band["points"].as_array().unwrap() {
        let x = f(&p["x"]);
        let codes = scalar_codes(h, demo_values(&v, x));
        let got: Vec<String> = p["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| c.as_str().unwrap().to_string())
            .collect();
        let mut sorted = got.clone();
        sorted.sort();
        assert_eq!(sorted, codes, "band point at sigma = {x}");
        assert_eq!(
            p["demonstrated"],
            !codes.contains(&"convergence_not_demonstrated".into())
        );
        if p["demonstrated"] == true {
            orders.push(f(&p["order"]));
        }
        per_point.push((x, codes));
    }
    assert_eq!(aggregated(&band["point_warnings"]), expected(&per_point));
    // What that computation gives on the demo: the observed order exceeds the formal order 2
    // by more than 1 at the seven lowest σ (p = 3.1–5.2) and by more than 10 % at the next
    // three; no point loses its demonstration, so all 13 orders enter mean and median.
    let agg = aggregated(&band["point_warnings"]);
    assert_eq!(
        agg["order_high"],
        (7, vec![0.144, 0.15, 0.156, 0.162, 0.168], 2)
    );
    assert_eq!(agg["order_far_from_formal"], (3, vec![0.2, 0.22, 0.25], 0));
    assert_eq!(agg.len(), 2, "{agg:?}");
    let sm = &band["summary"];
    assert_eq!(sm["order_points"], orders.len());
    let mean = orders.iter().sum::<f64>() / orders.len() as f64;
    orders.sort_by(f64::total_cmp);
    assert!((f(&sm["mean_order"]) - mean).abs() < 1e-12);
    assert_eq!(f(&sm["median_order"]), orders[orders.len() / 2]);
    // The comparison along the sweep: the same pointwise estimate at the measured σ.
    let c = v["comparisons"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["kind"] == "sweep")
        .unwrap();
    let per_point: Vec<(f64, Vec<String>)> = c["points"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| {
            let x = f(&p["x"]);
            (x, scalar_codes(h, demo_values(&v, x)))
        })
        .collect();
    assert_eq!(aggregated(&c["point_warnings"]), expected(&per_point));
    // What that gives at the measured σ (in the order of the measured points).
    let agg = aggregated(&c["point_warnings"]);
    assert_eq!(agg["order_high"], (3, vec![0.18, 0.17, 0.16], 0));
    assert_eq!(agg["order_far_from_formal"], (1, vec![0.2], 0));
    assert_eq!(c["order_points"], 7);
    // A scalar comparison has no points of its own to aggregate.
    let q = v["comparisons"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["kind"] == "quantity")
        .unwrap();
    assert_eq!(q["point_warnings"], serde_json::json!([]));
    assert_eq!(q["mean_order"], Value::Null);
    // Summary lines in the study's warning list, about the band and the comparison.
    let line = |code: &str, subject: &str| {
        v["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .find(|w| w["code"] == code && w["subject"] == subject)
            .unwrap_or_else(|| panic!("{code} about {subject}: {:?}", warning_codes(&v)))["message"]
            .as_str()
            .unwrap()
            .to_string()
    };
    let m = line("band_point_warnings", "cavitation.band.efficiency");
    assert!(
        m.contains(
            "order_high at 7 of 13 points (sigma = 0.144, 0.15, 0.156, 0.162, 0.168 … and 2 more)"
        ),
        "{m}"
    );
    line("comparison_point_warnings", "cavitation");
}

/// Four meshes of ratio 2, a band on x = 0.1 … 1.0 and measured points. At most x the response
/// follows φ = 1 + 0.01 h² (analytic order 2, which the least-squares free fit recovers); at
/// x = 0.3, 0.6, 0.7 it rises by a constant step per mesh (constant differences: the free
/// order lands on the edge of the band left out of the search, the values diverge); at x = 0.9
/// it follows φ = 1 + 1e-11 h^12 (analytic order 12, beyond the search's upper end 8).
fn manufactured_band() -> String {
    let xs: Vec<f64> = (1..=10).map(|i| i as f64 / 10.0).collect();
    let hs = [1.0_f64, 2.0, 4.0, 8.0];
    let mut data = String::new();
    for (k, h) in hs.iter().enumerate() {
        let ys: Vec<String> = xs
            .iter()
            .map(|x| {
                let y = if [0.3, 0.6, 0.7].contains(x) {
                    1.0 + 0.06 * k as f64
                } else if *x == 0.9 {
                    1.0 + 1e-11 * h.powi(12)
                } else {
                    1.0 + 0.01 * h * h
                };
                format!("{y:?}")
            })
            .collect();
        let xl: Vec<String> = xs.iter().map(|x| format!("{x:?}")).collect();
        data.push_str(&format!(
            "      M{}: {{x: [{}], y: [{}]}}\n",
            k + 1,
            xl.join(", "),
            ys.join(", ")
        ));
    }
    format!(
        "format: 1
title: Manufactured band with bound orders
dimension: 2
formal_order: 2
meshes:
  - {{name: M1, size: 1}}
  - {{name: M2, size: 2}}
  - {{name: M3, size: 4}}
  - {{name: M4, size: 8}}
sweeps:
  s:
    x: x
    responses: [y]
    interpolation: linear
    data:
{data}    band: {{response: y, at: fine}}
reference_data:
  s:
    response: y
    u_measured: 0.01
    points:
      - {{x: 0.3, value: 1.0}}
      - {{x: 0.5, value: 1.0}}
      - {{x: 0.9, value: 1.0}}
"
    )
}

#[test]
fn bound_orders_in_a_manufactured_band_are_named_and_left_out_of_the_mean() {
    let w = Workdir::new();
    let path = w.write("band.yaml", &manufactured_band());
    let path = path.to_str().unwrap();
    let v = json(&["assess", "-f", "json", path]);
    let band = &v["sweeps"][0]["band"];
    let agg = aggregated(&band["point_warnings"]);
    // Exactly the manufactured points (see `manufactured_band`).
    assert_eq!(
        agg["convergence_not_demonstrated"],
        (4, vec![0.3, 0.6, 0.7, 0.9], 0)
    );
    assert_eq!(agg["ls_order_at_bound"], (4, vec![0.3, 0.6, 0.7, 0.9], 0));
    assert_eq!(agg["divergent"], (3, vec![0.3, 0.6, 0.7], 0));
    // The bound orders are in the points, but not in mean and median: only the six points
    // of the exact order-2 law count, so both are 2 (analytic).
    let pts = band["points"].as_array().unwrap();
    assert!((f(&pts[8]["order"]) - 8.0).abs() < 1e-9, "{}", pts[8]);
    assert_eq!(pts[8]["convergence"], "monotonic");
    assert_eq!(pts[8]["demonstrated"], false);
    let sm = &band["summary"];
    assert_eq!(sm["order_points"], 6);
    assert!((f(&sm["mean_order"]) - 2.0).abs() < 1e-9, "{sm}");
    assert!((f(&sm["median_order"]) - 2.0).abs() < 1e-9, "{sm}");
    // The study's list says so, about the band.
    let nd = v["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|w| w["code"] == "band_points_not_demonstrated")
        .expect("a summary line");
    assert_eq!(nd["subject"], "s.band.y");
    assert!(
        nd["message"]
            .as_str()
            .unwrap()
            .contains("at 4 of 10 points (x = 0.3, 0.6, 0.7, 0.9)"),
        "{nd}"
    );
    // The comparison at x = 0.3, 0.5, 0.9: the same pointwise estimates.
    let c = &v["comparisons"][0];
    let agg = aggregated(&c["point_warnings"]);
    assert_eq!(agg["convergence_not_demonstrated"], (2, vec![0.3, 0.9], 0));
    assert_eq!(c["order_points"], 1);
    assert!((f(&c["mean_order"]) - 2.0).abs() < 1e-9, "{c}");
    assert!(warning_codes(&v).contains(&"comparison_points_not_demonstrated"));

    // Every human and tabular output shows them.
    let out = |format: &str| {
        let o = run(&["assess", "-f", format, path]);
        assert_eq!(o.status.code(), Some(0), "{}", show(&o));
        String::from_utf8(o.stdout).unwrap()
    };
    let table = out("table");
    let row = table
        .lines()
        .find(|l| l.trim_start().starts_with("convergence_not_demonstrated"))
        .unwrap_or_else(|| panic!("{table}"));
    assert!(
        row.contains("4 of 10") && row.contains("0.3, 0.6, 0.7, 0.9"),
        "{row}"
    );
    let at_09 = table
        .lines()
        .find(|l| l.trim_start().starts_with("0.9 "))
        .unwrap_or_else(|| panic!("{table}"));
    assert!(at_09.contains("convergence not demonstrated"), "{at_09}");
    assert!(
        table.contains("mean 2.00, median 2.00 over 6 points"),
        "{table}"
    );
    let md = out("markdown");
    assert!(
        md.contains("| convergence\\_not\\_demonstrated | 4 of 10 | 0.3, 0.6, 0.7, 0.9 |"),
        "{md}"
    );
    assert!(
        md.contains("Convergence is not demonstrated at 4 of 10 of the band points"),
        "{md}"
    );
    let tex = out("latex");
    assert!(tex.contains("0.3, 0.6, 0.7, 0.9"), "{tex}");
    let csv_text = out("csv");
    let mut r = csv::Reader::from_reader(csv_text.as_bytes());
    let head = r.headers().unwrap().clone();
    let col = |n: &str| head.iter().position(|h| h == n).unwrap();
    let rows: Vec<csv::StringRecord> = r.records().map(|x| x.unwrap()).collect();
    let nd = rows
        .iter()
        .find(|r| &r[0] == "band_warning" && &r[col("warning")] == "convergence_not_demonstrated")
        .expect("a band_warning row");
    assert_eq!(&nd[col("sweep")], "s");
    assert_eq!(&nd[col("warning_points")], "4");
    assert_eq!(&nd[col("warning_at")], "0.3;0.6;0.7;0.9");
    let p09 = rows
        .iter()
        .find(|r| &r[0] == "band_point" && &r[col("x")] == "0.9")
        .unwrap();
    assert!(p09[col("warning")].contains("ls_order_at_bound"), "{p09:?}");
    assert!(rows
        .iter()
        .any(|r| &r[0] == "comparison_warning" && &r[col("warning_at")] == "0.3;0.9"));
}

#[test]
fn three_mesh_orders_on_the_search_end_list_the_first_five_and_count_the_rest() {
    // Three meshes of ratio 2 and the order search capped at 2 (`settings.order_max`). At
    // x = 2, 3, 5, 7, 11, 12 the response is φ = 1 + 0.01 h² (analytic order 2: exactly on
    // the end of the search); elsewhere φ = 1 + 0.01 h^1.5 (analytic order 1.5, R = 2^−1.5).
    let xs: Vec<f64> = (1..=12).map(f64::from).collect();
    let bound = [2.0, 3.0, 5.0, 7.0, 11.0, 12.0];
    let mut data = String::new();
    for (k, h) in [1.0_f64, 2.0, 4.0].iter().enumerate() {
        let ys: Vec<String> = xs
            .iter()
            .map(|x| {
                let p = if bound.contains(x) { 2.0 } else { 1.5 };
                format!("{:?}", 1.0 + 0.01 * h.powf(p))
            })
            .collect();
        let xl: Vec<String> = xs.iter().map(|x| format!("{x:?}")).collect();
        data.push_str(&format!(
            "      M{}: {{x: [{}], y: [{}]}}\n",
            k + 1,
            xl.join(", "),
            ys.join(", ")
        ));
    }
    let study = format!(
        "format: 1
title: Manufactured band, orders on the search end
dimension: 2
formal_order: 2
meshes:
  - {{name: M1, size: 1}}
  - {{name: M2, size: 2}}
  - {{name: M3, size: 4}}
settings: {{order_max: 2}}
sweeps:
  s:
    x: x
    responses: [y]
    interpolation: linear
    data:
{data}    band: {{response: y, at: fine}}
"
    );
    let w = Workdir::new();
    let path = w.write("bound.yaml", &study);
    let v = json(&["assess", "-f", "json", path.to_str().unwrap()]);
    let band = &v["sweeps"][0]["band"];
    let agg = aggregated(&band["point_warnings"]);
    let first_five = vec![2.0, 3.0, 5.0, 7.0, 11.0];
    assert_eq!(agg["order_at_bound"], (6, first_five.clone(), 1));
    assert_eq!(agg["convergence_not_demonstrated"], (6, first_five, 1));
    // Order 1.5 is 25 % from the formal order 2 (analytic): warned, still demonstrated.
    assert_eq!(agg["order_far_from_formal"].0, 6);
    let sm = &band["summary"];
    assert_eq!(sm["order_points"], 6);
    assert!((f(&sm["mean_order"]) - 1.5).abs() < 1e-9, "{sm}");
    assert!((f(&sm["median_order"]) - 1.5).abs() < 1e-9, "{sm}");
    let o = run(&["assess", path.to_str().unwrap()]);
    let table = String::from_utf8_lossy(&o.stdout);
    assert!(table.contains("2, 3, 5, 7, 11 … and 1 more"), "{table}");
}

/// Probe files for three meshes of ratio 2 (h = 1, 2, 4), columns `u` and `v`. Column `u`:
/// probes g* follow φ = 2 + 0.05 h² (analytic order 2); probes c* rise by a constant step per
/// mesh (R = 1: divergent, convergence not demonstrated); probes s* follow φ = 2 + 0.05 h^0.3
/// (analytic order 0.3 < 0.5: `order_low`, not demonstrated). Column `v` is the order-2 law at
/// every probe.
fn probe_files(w: &Workdir) {
    let ids: Vec<String> = (0..8)
        .map(|i| format!("g{i}"))
        .chain(["c0", "c1"].map(String::from))
        .chain((0..6).map(|i| format!("s{i}")))
        .chain((8..12).map(|i| format!("g{i}")))
        .collect();
    for (k, h) in [1.0_f64, 2.0, 4.0].iter().enumerate() {
        let mut text = String::from("id,u,v\n");
        for id in &ids {
            let u = match id.as_bytes()[0] {
                b'g' => 2.0 + 0.05 * h * h,
                b'c' => 2.0 + 0.1 * k as f64,
                _ => 2.0 + 0.05 * h.powf(0.3),
            };
            let v = 2.0 + 0.05 * h * h;
            text.push_str(&format!("{id},{u:?},{v:?}\n"));
        }
        w.write(&format!("probes/m{}.csv", k + 1), &text);
    }
}

#[test]
fn field_probes_with_known_bad_points_are_named_and_fail_the_limits_on_their_column() {
    let w = Workdir::new();
    probe_files(&w);
    let path = w.write(
        "field.yaml",
        "format: 1
title: Manufactured field with known bad probes
dimension: 2
formal_order: 2
meshes:
  - {name: M1, size: 1}
  - {name: M2, size: 2}
  - {name: M3, size: 4}
fields:
  f:
    columns: [u, v]
    data: {M1: probes/m1.csv, M2: probes/m2.csv, M3: probes/m3.csv}
acceptance:
  - {target: f.u, max_relative: 0.5}
  - {target: f.v, max_relative: 0.5}
",
    );
    let path = path.to_str().unwrap();
    let v = json(&["assess", "-f", "json", path]);
    let cols = v["fields"][0]["columns"].as_array().unwrap();
    let pw = |c: &Value, code: &str| -> (u64, Vec<String>, u64) {
        let e = c["point_warnings"]
            .as_array()
            .unwrap()
            .iter()
            .find(|w| w["code"] == code)
            .unwrap_or_else(|| panic!("{code} in {c}"));
        (
            e["points"].as_u64().unwrap(),
            e["at"]
                .as_array()
                .unwrap()
                .iter()
                .map(|s| s.as_str().unwrap().to_string())
                .collect(),
            e["more"].as_u64().unwrap(),
        )
    };
    let u = &cols[0];
    let s = |v: &[&str]| v.iter().map(|x| x.to_string()).collect::<Vec<_>>();
    // The manufactured bad probes, in file order: c0, c1, then s0 … s5.
    assert_eq!(
        pw(u, "convergence_not_demonstrated"),
        (8, s(&["c0", "c1", "s0", "s1", "s2"]), 3)
    );
    assert_eq!(pw(u, "divergent"), (2, s(&["c0", "c1"]), 0));
    assert_eq!(
        pw(u, "order_low"),
        (6, s(&["s0", "s1", "s2", "s3", "s4"]), 1)
    );
    // Mean and median over the twelve order-2 probes only: exactly 2 (analytic).
    assert_eq!(u["order_points"], 12);
    assert!((f(&u["mean_order"]) - 2.0).abs() < 1e-9, "{u}");
    assert!((f(&u["median_order"]) - 2.0).abs() < 1e-9, "{u}");
    // The clean column carries no point warnings.
    assert_eq!(cols[1]["point_warnings"], serde_json::json!([]));
    assert_eq!(cols[1]["order_points"], 20);
    assert!(warning_codes(&v).contains(&"field_points_not_demonstrated"));
    // The gate: every limit on `u` fails and says why; `v` passes.
    let o = run(&["gate", "--format", "json", path]);
    assert_eq!(o.status.code(), Some(1), "{}", show(&o));
    let g: Value =
        serde_json::from_slice(&o.stdout).unwrap_or_else(|e| panic!("{e}: {}", show(&o)));
    assert_eq!(g["passed"], false);
    let checks = g["checks"].as_array().unwrap_or_else(|| panic!("{g}"));
    let check = |t: &str| {
        checks
            .iter()
            .find(|c| c["target"] == t)
            .unwrap_or_else(|| panic!("{t} in {g}"))
            .clone()
    };
    assert_eq!(check("f.u")["passed"], false);
    assert!(
        check("f.u")["note"]
            .as_str()
            .unwrap()
            .contains("convergence not demonstrated at 8 of 20 points"),
        "{g}"
    );
    assert_eq!(check("f.v")["passed"], true);
    // The table shows the probes.
    let o = run(&["assess", path]);
    let table = String::from_utf8_lossy(&o.stdout);
    assert!(table.contains("c0, c1, s0, s1, s2 … and 3 more"), "{table}");
}
