//! The Markdown, LaTeX and CSV exports of the demo cavitation study through the real binary,
//! pinned by golden files (regenerate with `MESHBOUND_BLESS=1`, then review the diff).

mod common;

use approx::assert_relative_eq;
use common::*;

/// Whether the text shows a non-finite number: a word `NaN`, `nan`, `inf` or `infinite`
/// (as Rust or our display helpers would print one), or "not a number".
fn non_finite(text: &str) -> bool {
    text.contains("not a number")
        || text
            .split(|c: char| !c.is_ascii_alphanumeric())
            .any(|w| matches!(w, "NaN" | "nan" | "inf" | "infinite" | "Infinity"))
}

const STUDY: &str = "studies/pump-turbine-cavitation.yaml";

/// Runs `assess STUDY --format FORMAT` and compares stdout with `tests/golden/NAME`.
fn golden(format: &str, name: &str) -> String {
    golden_of(STUDY, format, name)
}

/// [`golden`] for another study.
fn golden_of(study: &str, format: &str, name: &str) -> String {
    let o = run(&["assess", study, "--format", format]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let got = String::from_utf8(o.stdout.clone()).expect("UTF-8 output");
    let path = root().join("tests/golden").join(name);
    if std::env::var_os("MESHBOUND_BLESS").is_some() {
        std::fs::write(&path, &got).unwrap();
    }
    let want = std::fs::read_to_string(&path)
        .unwrap_or_else(|e| panic!("golden file {}: {e}", path.display()));
    assert!(
        got == want,
        "{format} output differs from {}; run with MESHBOUND_BLESS=1 to regenerate and review the diff\n--- got\n{got}",
        path.display()
    );
    got
}

#[test]
fn markdown_matches_the_golden_file() {
    let text = golden("markdown", "pump-turbine-cavitation.md");
    assert!(text.contains("> **Caution.**"));
}

#[test]
fn latex_matches_the_golden_file() {
    let text = golden("latex", "pump-turbine-cavitation.tex");
    assert_eq!(
        text.matches("\\begin{tabular").count(),
        text.matches("\\bottomrule").count()
    );
    assert!(!text.contains("siunitx") && !text.contains("\\num{"));
}

/// A published benchmark (Schäfer & Turek 2D-1, run by us: studies/cylinder-2d1.yaml) in a
/// study of `domain: general`: neutral headings, the general caution, nothing of machines.
#[test]
fn latex_of_a_benchmark_study_is_neutral_and_matches_its_golden_file() {
    let text = golden_of("studies/cylinder-2d1.yaml", "latex", "cylinder-2d1.tex");
    assert!(text.contains("Comparison with a published benchmark solution"));
    assert!(text.contains("with the published benchmark solution"));
    for word in [
        "measurement",
        "Measured",
        "runner",
        "impeller",
        "model-test",
    ] {
        assert!(!text.contains(word), "{word}");
    }
    assert!(text.contains("is not validation"));
}

#[test]
fn csv_matches_the_golden_file_and_the_json_figures() {
    let text = golden("csv", "pump-turbine-cavitation.csv");
    let mut r = csv::Reader::from_reader(text.as_bytes());
    let head = r.headers().unwrap().clone();
    let rows: Vec<csv::StringRecord> = r.records().map(|x| x.unwrap()).collect();
    for row in &rows {
        assert_eq!(row.len(), head.len());
    }
    let v = json(&["assess", STUDY, "--format", "json"]);
    let col = |n: &str| head.iter().position(|h| h == n).unwrap();
    // one quantity row per scalar quantity and two per breakdown; one row per band point
    let n_quantities = v["quantities"].as_array().unwrap().len()
        + 2 * v["sweeps"][0]["breakdown"].as_array().unwrap().len();
    let n_points = v["sweeps"][0]["band"]["points"].as_array().unwrap().len();
    assert_eq!(
        rows.iter().filter(|r| &r[0] == "quantity").count(),
        n_quantities
    );
    assert_eq!(
        rows.iter().filter(|r| &r[0] == "band_point").count(),
        n_points
    );
    let head_b = rows
        .iter()
        .find(|r| &r[col("name")] == "cavitation.breakdown.head")
        .unwrap();
    let want = v["sweeps"][0]["breakdown"][1]["x_estimate"]["uncertainty"]["absolute"]
        .as_f64()
        .unwrap();
    let got: f64 = head_b[col("absolute")].parse().unwrap();
    // Full precision: the very double of the JSON result.
    assert_relative_eq!(got, want, epsilon = 0.0, max_relative = 0.0);
    // One comparison_point row per compared point, with the JSON's figures and verdicts.
    let comparisons = v["comparisons"].as_array().unwrap();
    let points: Vec<&serde_json::Value> = comparisons
        .iter()
        .flat_map(|c| c["points"].as_array().unwrap())
        .collect();
    let cmp: Vec<&csv::StringRecord> = rows
        .iter()
        .filter(|r| &r[0] == "comparison_point")
        .collect();
    assert_eq!(cmp.len(), points.len());
    for (r, p) in cmp.iter().zip(&points) {
        for (c, k) in [
            ("value", "simulation"),
            ("reference_value", "measured"),
            ("comparison_error", "error"),
            ("u_val", "u_val"),
        ] {
            let got: f64 = r[col(c)].parse().unwrap();
            // serde_json reads decimals to within an ulp (its exact-roundtrip parser is a
            // feature this crate does not enable); the CSV holds the shortest exact text.
            assert_relative_eq!(got, p[k].as_f64().unwrap(), max_relative = 1e-15);
        }
    }
    let carried: usize = comparisons
        .iter()
        .map(|c| c["carried_by_u_num"].as_array().map_or(0, Vec::len))
        .sum();
    assert!(carried > 0, "the demo has points carried by u_num");
    assert_eq!(
        cmp.iter()
            .filter(|r| &r[col("agreement")] == "by_u_num")
            .count(),
        carried
    );
}

#[test]
fn every_example_study_exports_in_every_new_format() {
    for entry in std::fs::read_dir(root().join("studies")).unwrap() {
        let p = entry.unwrap().path();
        if p.extension().and_then(|e| e.to_str()) != Some("yaml") {
            continue;
        }
        let rel = format!("studies/{}", p.file_name().unwrap().to_string_lossy());
        for f in ["markdown", "latex", "csv"] {
            let o = run(&["assess", &rel, "--format", f]);
            assert_eq!(o.status.code(), Some(0), "{rel} {f}\n{}", show(&o));
            let text = String::from_utf8_lossy(&o.stdout);
            assert!(
                !non_finite(&text),
                "{rel} {f}: a non-finite number was printed"
            );
            if f != "csv" {
                assert!(
                    text.contains("Caution."),
                    "{rel} {f}: the caution is missing"
                );
            }
        }
    }
}
