//! Duty curves through the binary: sweeps at several flows assembled against the flow.
//! The demo study `studies/pump-duty-curves.yaml` holds invented data (no check value comes
//! from it): what is checked is that each duty point is its own sweep's result (identity of
//! the assembly), the ASME V&V 20 definitions (E = S − D, u_val = √(u_num² + u_D²)), the
//! golden JSON of the curve, and the refusals of bad input.

mod common;
use common::{json, root, run_in, show, warning_codes, Workdir};

const STUDY: &str = "studies/pump-duty-curves.yaml";

fn assess() -> serde_json::Value {
    json(&["assess", STUDY, "--format", "json"])
}

#[test]
fn every_duty_point_is_its_sweeps_own_result() {
    let v = assess();
    let curve = &v["duty_curves"][0];
    let sweeps = v["sweeps"].as_array().unwrap();
    let series = curve["series"].as_array().unwrap();
    // Two criteria (head 3 %, efficiency 1 %), each as breakdown abscissa and reference.
    assert_eq!(series.len(), 4);
    let mut checked = 0;
    for s in series {
        let kind = s["kind"].as_str().unwrap();
        let response = s["response"].as_str().unwrap();
        for p in s["points"].as_array().unwrap() {
            let sweep = sweeps
                .iter()
                .find(|w| w["name"] == p["sweep"])
                .expect("the point's sweep is in the result");
            let b = sweep["breakdown"]
                .as_array()
                .unwrap()
                .iter()
                .find(|b| b["response"] == response)
                .unwrap();
            let q = match kind {
                "breakdown" => &b["x_estimate"],
                "reference" => &b["reference_estimate"],
                other => panic!("unknown kind {other}"),
            };
            // Identity of the assembly: the very numbers of the sweep's estimate.
            assert_eq!(p["value"], q["values"][0], "{p}");
            assert_eq!(p["absolute"], q["uncertainty"]["absolute"], "{p}");
            assert_eq!(p["lower"], q["uncertainty"]["lower"], "{p}");
            assert_eq!(p["upper"], q["uncertainty"]["upper"], "{p}");
            assert_eq!(p["extrapolated"], q["governing"]["extrapolated"], "{p}");
            checked += 1;
        }
    }
    assert_eq!(checked, 12);
    // Flows ascend and each names its sweep.
    assert_eq!(curve["flows"], serde_json::json!([0.085, 0.1, 0.115]));
    assert_eq!(curve["sweeps"], serde_json::json!(["q085", "q100", "q115"]));
    // NPSH3 is read against NPSH, in metres.
    assert_eq!(series[0]["key"], "breakdown.head");
    assert_eq!(series[0]["quantity"], "npsh");
    assert_eq!(series[0]["unit"], "m");
}

#[test]
fn comparison_with_measured_points_follows_vv20() {
    // ASME V&V 20-2009: E = S − D; u_val = √(u_num² + u_input² + u_D²) with u_num = U / divisor
    // (the study sets the divisor 1.15) and u_D the measured standard uncertainty.
    let v = assess();
    let series = v["duty_curves"][0]["series"].as_array().unwrap();
    let npsh = &series[0];
    let cmp = &npsh["comparison"];
    let pts = cmp["points"].as_array().unwrap();
    assert_eq!(pts.len(), 3);
    for (c, p) in pts.iter().zip(npsh["points"].as_array().unwrap()) {
        let s = c["simulation"].as_f64().unwrap();
        let d = c["measured"].as_f64().unwrap();
        assert_eq!(s, p["value"].as_f64().unwrap());
        approx::assert_relative_eq!(c["error"].as_f64().unwrap(), s - d, max_relative = 1e-12);
        let u_num = p["absolute"].as_f64().unwrap() / 1.15;
        let u_d = 0.08; // the study's measured u
        approx::assert_relative_eq!(
            c["u_val"].as_f64().unwrap(),
            (u_num * u_num + u_d * u_d).sqrt(),
            max_relative = 1e-12
        );
    }
    // Series without measured points have no comparison.
    assert!(series[2]["comparison"].is_null());
}

#[test]
fn duty_curve_json_matches_the_golden_file() {
    // The duty-curve part of the JSON is a contract: pin it. Regenerate with MESHBOUND_BLESS=1.
    let v = assess();
    let text = serde_json::to_string_pretty(&v["duty_curves"]).unwrap() + "\n";
    let golden = root().join("tests/golden/pump-duty-curves.json");
    if std::env::var_os("MESHBOUND_BLESS").is_some() {
        std::fs::write(&golden, &text).unwrap();
    }
    let want = std::fs::read_to_string(&golden).expect("golden file exists");
    assert_eq!(text, want);
}

#[test]
fn report_has_a_figure_and_a_table_per_series() {
    let w = Workdir::new();
    let out = w.path().join("rep");
    let o = run_in(&root(), &["report", STUDY, "--out", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    for key in [
        "breakdown.head",
        "reference.head",
        "breakdown.efficiency",
        "reference.efficiency",
    ] {
        let f = out.join(format!("duty-suction-{key}.svg"));
        let svg = std::fs::read_to_string(&f).unwrap_or_else(|e| panic!("{}: {e}", f.display()));
        assert!(svg.contains("class=\"band\""), "{key}: no band");
    }
    let md = std::fs::read_to_string(out.join("report.md")).unwrap();
    assert!(md.contains("## Duty curves"));
    assert!(md.contains("NPSH3 (3 % drop of head) \\[m\\]"), "{md}");
}

fn copy_demo(w: &Workdir) -> String {
    let dir = w.path().join("duty");
    std::fs::create_dir_all(&dir).unwrap();
    for e in std::fs::read_dir(root().join("studies/duty")).unwrap() {
        let e = e.unwrap();
        std::fs::copy(e.path(), dir.join(e.file_name())).unwrap();
    }
    std::fs::read_to_string(root().join(STUDY)).unwrap()
}

fn refused(w: &Workdir, text: &str, key: &str) -> String {
    let p = w.write("study.yaml", text);
    let o = run_in(w.path(), &["assess", p.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    let err = String::from_utf8_lossy(&o.stderr).into_owned();
    assert!(err.contains(key), "no key {key} in: {err}");
    assert!(err.contains("study.yaml"), "no file in: {err}");
    err
}

#[test]
fn bad_duty_curves_are_refused_with_the_key_and_line() {
    let w = Workdir::new();
    let base = copy_demo(&w);
    // An unknown sweep.
    let t = base.replace("{flow: 0.100, sweep: q100}", "{flow: 0.100, sweep: q999}");
    let e = refused(&w, &t, "duty_curves.suction.points[1].sweep");
    assert!(e.contains("q999"), "{e}");
    // The same flow twice.
    let t = base.replace("{flow: 0.100, sweep: q100}", "{flow: 0.085, sweep: q100}");
    refused(&w, &t, "duty_curves.suction.points[1].flow");
    // A series the curve does not have.
    let t = base.replace("reference.head: {", "reference.torque: {");
    refused(&w, &t, "duty_curves.suction.measured.reference.torque");
    // A sweep whose criteria differ from the first point's.
    let t = base.replace(
        "    breakdown: *criteria\n  q115:",
        "    breakdown:\n      - {response: head, drop: 3%, reference: plateau, plateau_from: 5.0, abscissa: npsh}\n  q115:",
    );
    let e = refused(&w, &t, "duty_curves.suction.points[1].sweep");
    assert!(e.contains("efficiency"), "{e}");
}

#[test]
fn a_single_point_is_no_curve() {
    let w = Workdir::new();
    let base = copy_demo(&w);
    let t = base
        .replace("      - {flow: 0.100, sweep: q100}\n", "")
        .replace("      - {flow: 0.115, sweep: q115}\n", "");
    let e = refused(&w, &t, "duty_curves.suction.points");
    assert!(e.contains("at least two"), "{e}");
}

#[test]
fn undemonstrated_points_are_warned_about() {
    // A sweep whose meshes diverge at one flow: swap the coarse and fine files so that the
    // differences grow with refinement there.
    let w = Workdir::new();
    let base = copy_demo(&w);
    let t = base.replace(
        "M1: {file: duty/q100_M1.csv}, M2: {file: duty/q100_M2.csv}, M3: {file: duty/q100_M3.csv}",
        "M1: {file: duty/q100_M3.csv}, M2: {file: duty/q100_M2.csv}, M3: {file: duty/q100_M1.csv}",
    );
    let p = w.write("study.yaml", &t);
    let o = run_in(
        w.path(),
        &["assess", p.to_str().unwrap(), "--format", "json"],
    );
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert!(
        warning_codes(&v).contains(&"duty_points_not_demonstrated"),
        "{:?}",
        warning_codes(&v)
    );
    let pts = v["duty_curves"][0]["series"][1]["points"]
        .as_array()
        .unwrap();
    assert_eq!(pts[1]["demonstrated"], false);
}
