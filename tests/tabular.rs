//! Tabular files as they come, through the real binary: separators, decimal commas, units
//! rows, percent columns, renamed columns, gauge pressures, cells marked missing, the hint for a
//! wrong separator and comment lines in probe files.
//!
//! Sources of the checks: the CSV grammar of RFC 4180 and the rules of docs/study-file.md
//! ("Tabular files"): the same numbers written with another separator or decimal mark must read
//! to the same doubles, so every variant is checked against the demo files it was written from
//! (studies/sweeps/*.csv, studies/probes/*.csv), read here by plain splitting at commas. Percent
//! is hundredths and 1 kPa = 1000 Pa by definition. That semicolon-separated files with decimal
//! commas are what spreadsheets in many European locales export is common practice, no source.

mod common;

use approx::assert_relative_eq;
use common::*;
use serde_json::Value;

/// The rows of a demo CSV file (comments skipped): header, then rows of text cells.
fn demo(path: &str) -> (Vec<String>, Vec<Vec<String>>) {
    let text = std::fs::read_to_string(root().join(path)).unwrap();
    let mut lines = text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty());
    let header = lines
        .next()
        .unwrap()
        .split(',')
        .map(str::to_string)
        .collect();
    let rows = lines
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect();
    (header, rows)
}

/// Writes `rows` with `sep`, decimal commas when `comma`.
fn write_rows(header: &[String], rows: &[Vec<String>], sep: &str, comma: bool) -> String {
    let mut out = format!("# written for a test\n{}\n", header.join(sep));
    for r in rows {
        let cells: Vec<String> = r
            .iter()
            .map(|c| {
                if comma {
                    c.replace('.', ",")
                } else {
                    c.clone()
                }
            })
            .collect();
        out.push_str(&cells.join(sep));
        out.push('\n');
    }
    out
}

const MESHES: &str = "meshes:\n  - {name: L1, cells: 3.4e6}\n  - {name: L2, cells: 1.45e6}\n  - {name: L3, cells: 6.2e5}\n";

/// A sweep study over files `s/L1.csv` … with extra sweep keys.
fn sweep_study(extra: &str) -> String {
    format!(
        "format: 1\ntitle: tabular test\n{MESHES}sweeps:\n  cav:\n    x: sigma\n    responses: [efficiency, head]\n    data:\n      L1: {{file: s/L1.csv}}\n      L2: {{file: s/L2.csv}}\n      L3: {{file: s/L3.csv}}\n    breakdown:\n      - {{response: efficiency, drop: 1%, reference: plateau, plateau_from: 0.29}}\n{extra}"
    )
}

/// Runs `assess` on a study written into a fresh folder with the given files.
fn assess(study: &str, files: &[(String, String)]) -> (Workdir, std::process::Output) {
    let w = Workdir::new();
    w.write("study.yaml", study);
    for (name, text) in files {
        w.write(name, text);
    }
    let o = run_in(w.path(), &["assess", "study.yaml", "-f", "json"]);
    (w, o)
}

fn ok_json(o: &std::process::Output) -> Value {
    assert_eq!(o.status.code(), Some(0), "{}", show(o));
    serde_json::from_slice(&o.stdout).unwrap()
}

/// The demo sweep files rewritten by `f` (mesh index, header, rows) → file text.
fn sweep_files(f: impl Fn(usize, &[String], &[Vec<String>]) -> String) -> Vec<(String, String)> {
    (1..=3)
        .map(|m| {
            let (h, r) = demo(&format!("studies/sweeps/L{m}.csv"));
            (format!("s/L{m}.csv"), f(m, &h, &r))
        })
        .collect()
}

/// The curves of the first sweep: per mesh, x and the responses.
fn curves(v: &Value) -> Vec<(Vec<f64>, Vec<Vec<f64>>)> {
    let nums = |a: &Value| -> Vec<f64> {
        a.as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect()
    };
    v["sweeps"][0]["curves"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            (
                nums(&c["x"]),
                c["responses"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .map(nums)
                    .collect(),
            )
        })
        .collect()
}

/// The curves the demo files hold, read here (x ascending as the JSON gives them).
fn demo_curves() -> Vec<(Vec<f64>, Vec<Vec<f64>>)> {
    (1..=3)
        .map(|m| {
            let (_, rows) = demo(&format!("studies/sweeps/L{m}.csv"));
            let mut rows: Vec<Vec<f64>> = rows
                .iter()
                .map(|r| r.iter().map(|c| c.trim().parse().unwrap()).collect())
                .collect();
            rows.sort_by(|a, b| a[0].total_cmp(&b[0]));
            (
                rows.iter().map(|r| r[0]).collect(),
                vec![
                    rows.iter().map(|r| r[1]).collect(),
                    rows.iter().map(|r| r[2]).collect(),
                ],
            )
        })
        .collect()
}

fn assert_same_curves(got: &[(Vec<f64>, Vec<Vec<f64>>)], want: &[(Vec<f64>, Vec<Vec<f64>>)]) {
    assert_eq!(got.len(), want.len());
    for (g, w) in got.iter().zip(want) {
        assert_eq!(g.0.len(), w.0.len());
        for (a, b) in g.0.iter().zip(&w.0) {
            assert_relative_eq!(*a, *b, max_relative = 1e-14);
        }
        for (ga, wa) in g.1.iter().zip(&w.1) {
            for (a, b) in ga.iter().zip(wa) {
                assert_relative_eq!(*a, *b, max_relative = 1e-14);
            }
        }
    }
}

#[test]
fn semicolons_with_decimal_commas_read_the_same_numbers() {
    let files = sweep_files(|_, h, r| write_rows(h, r, ";", true));
    let (_w, o) = assess(&sweep_study(""), &files);
    assert_same_curves(&curves(&ok_json(&o)), &demo_curves());
    // Set instead of detected: the same.
    let (_w, o) = assess(
        &sweep_study("    separator: semicolon\n    decimal: comma\n"),
        &files,
    );
    assert_same_curves(&curves(&ok_json(&o)), &demo_curves());
}

#[test]
fn tabs_and_blanks_separate_too() {
    let files = sweep_files(|_, h, r| write_rows(h, r, "\t", false));
    let (_w, o) = assess(&sweep_study(""), &files);
    assert_same_curves(&curves(&ok_json(&o)), &demo_curves());
    // Aligned columns as a solver writes them: runs of blanks, leading blanks.
    let files = sweep_files(|_, h, r| {
        let mut out = format!("  {:>10}  {:>12}  {:>10}\n", h[0], h[1], h[2]);
        for row in r {
            out.push_str(&format!(
                "  {:>10}  {:>12}  {:>10}\n",
                row[0], row[1], row[2]
            ));
        }
        out
    });
    let (_w, o) = assess(&sweep_study(""), &files);
    assert_same_curves(&curves(&ok_json(&o)), &demo_curves());
}

#[test]
fn a_units_row_is_skipped_and_a_percent_column_scaled() {
    // A units row under the header; efficiency in percent (the cell ×100), marked `%` there.
    let files = sweep_files(|_, h, r| {
        let rows: Vec<Vec<String>> = r
            .iter()
            .map(|row| {
                let pct: f64 = row[1].parse::<f64>().unwrap() * 100.0;
                vec![row[0].clone(), format!("{pct}"), row[2].clone()]
            })
            .collect();
        let text = write_rows(h, &rows, ",", false);
        let (first, rest) = text.split_once('\n').unwrap();
        let (head, body) = rest.split_once('\n').unwrap();
        format!("{first}\n{head}\n[-],%,[m]\n{body}")
    });
    let (w, o) = assess(&sweep_study(""), &files);
    let got = curves(&ok_json(&o));
    // The units are recorded as the files give them.
    let study = meshbound::study::load(&w.path().join("study.yaml")).unwrap();
    let units = &study.sweeps[0].units;
    assert_eq!(units.get("sigma").map(String::as_str), Some("-"));
    assert_eq!(units.get("efficiency").map(String::as_str), Some("%"));
    assert_eq!(units.get("head").map(String::as_str), Some("m"));
    // Percent is hundredths (definition): 90.93 % read as 0.9093, to the rounding of ×100/100.
    for (g, w) in got.iter().zip(demo_curves()) {
        for (a, b) in g.1[0].iter().zip(&w.1[0]) {
            assert_relative_eq!(*a, *b, max_relative = 1e-14);
        }
        assert_eq!(g.1[1], w.1[1]);
        assert_eq!(g.0, w.0);
    }
}

#[test]
fn renamed_columns_are_mapped_and_scaled() {
    // Our own header names; efficiency in percent named in the header, head in decimetres by
    // position (column 3) with a scale of 0.1.
    let files = sweep_files(|_, _, r| {
        let rows: Vec<Vec<String>> = r
            .iter()
            .map(|row| {
                let pct: f64 = row[1].parse::<f64>().unwrap() * 100.0;
                let dm: f64 = row[2].parse::<f64>().unwrap() * 10.0;
                vec![row[0].clone(), format!("{pct}"), format!("{dm}")]
            })
            .collect();
        let h = [
            "Thoma number".to_string(),
            "Efficiency [%]".into(),
            "H_dm".into(),
        ];
        write_rows(&h, &rows, ",", false)
    });
    let study = sweep_study(
        "    mapping:\n      sigma: Thoma number\n      efficiency: {column: \"Efficiency [%]\", scale: 0.01}\n      head: {column: 3, scale: 0.1}\n",
    );
    let (_w, o) = assess(&study, &files);
    let got = curves(&ok_json(&o));
    for (g, w) in got.iter().zip(demo_curves()) {
        assert_eq!(g.0, w.0);
        for k in 0..2 {
            for (a, b) in g.1[k].iter().zip(&w.1[k]) {
                assert_relative_eq!(*a, *b, max_relative = 1e-14);
            }
        }
    }
    // A mapping key that the sweep does not read is refused at its key.
    let (_w, o) = assess(&sweep_study("    mapping: {torque: T}\n"), &files);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("sweeps.cav.mapping.torque"));
}

#[test]
fn gauge_pressures_plus_the_ambient_read_as_absolute() {
    // The raw demo monitors with gauge pressures (absolute − 101325 Pa) in kPa (units row):
    // the derived head, efficiency, NPSH and σ must be those of the absolute files.
    let ambient = 101_325.0;
    let files: Vec<(String, String)> = (1..=3)
        .map(|m| {
            let (h, r) = demo(&format!("studies/sweeps/raw-L{m}.csv"));
            let rows: Vec<Vec<String>> = r
                .iter()
                .map(|row| {
                    let mut row = row.clone();
                    for k in [1, 2] {
                        let p: f64 = row[k].parse().unwrap();
                        row[k] = format!("{}", (p - ambient) / 1000.0);
                    }
                    row
                })
                .collect();
            let text = write_rows(&h, &rows, ";", true);
            let (first, rest) = text.split_once('\n').unwrap();
            let (head, body) = rest.split_once('\n').unwrap();
            (
                format!("s/raw-L{m}.csv"),
                format!("{first}\n{head}\n-;kPa;kPa;m3/s;N m;rpm;C\n{body}"),
            )
        })
        .collect();
    let study = format!(
        "format: 1\ntitle: gauge\n{MESHES}sweeps:\n  cav:\n    mode: pump\n    x: sigma\n    responses: [efficiency, head, npsh]\n    ambient_pressure: 101325\n    data:\n      L1: {{file: s/raw-L1.csv}}\n      L2: {{file: s/raw-L2.csv}}\n      L3: {{file: s/raw-L3.csv}}\n"
    );
    let (_w, o) = assess(&study, &files);
    let got = ok_json(&o);
    let want = json(&[
        "assess",
        "studies/pump-turbine-raw-sweep.yaml",
        "-f",
        "json",
    ]);
    let (g, w) = (curves(&got), curves(&want));
    assert_eq!(g.len(), 3);
    for (gc, wc) in g.iter().zip(&w) {
        for (a, b) in gc.0.iter().zip(&wc.0) {
            assert_relative_eq!(*a, *b, max_relative = 1e-9);
        }
        for k in 0..3 {
            for (a, b) in gc.1[k].iter().zip(&wc.1[k]) {
                assert_relative_eq!(*a, *b, max_relative = 1e-9);
            }
        }
    }
    // Without `mode` there are no pressures to offset: refused at the key.
    let (_w, o) = assess(&sweep_study("    ambient_pressure: 101325\n"), &[]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("sweeps.cav.ambient_pressure"));
}

#[test]
fn points_marked_missing_are_skipped_with_a_warning_naming_them() {
    // L2: line 5 has `nan` for efficiency, line 9 an empty head cell, line 11 `-` and `n/a`.
    let files = sweep_files(|m, h, r| {
        let mut rows = r.to_vec();
        if m == 2 {
            rows[2][1] = "nan".into();
            rows[6][2] = String::new();
            rows[8][1] = "-".into();
            rows[8][2] = "n/a".into();
        }
        write_rows(h, &rows, ",", false)
    });
    let (_w, o) = assess(&sweep_study(""), &files);
    let v = ok_json(&o);
    let n_demo = demo("studies/sweeps/L2.csv").1.len();
    let c = &v["sweeps"][0]["curves"][1];
    assert_eq!(c["mesh"], "L2");
    assert_eq!(c["points"].as_u64().unwrap() as usize, n_demo - 3);
    let w: Vec<&Value> = v["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|w| w["code"] == "missing_points_skipped")
        .collect();
    assert_eq!(w.len(), 1, "{v}");
    let m = w[0]["message"].as_str().unwrap();
    // Lines: a comment on line 1, the header on line 2, so data row k is on line k + 3.
    for part in [
        "L2.csv",
        "3 points",
        "line 5 (`efficiency` at column 8)",
        "line 9 (`head` at column 16)",
        "line 11 (`efficiency` at column 8, `head` at column 10)",
    ] {
        assert!(m.contains(part), "{part} not in {m}");
    }
    assert_eq!(w[0]["subject"], "cav");
}

#[test]
fn a_wrong_separator_is_refused_with_a_hint() {
    let files = sweep_files(|_, h, r| write_rows(h, r, ";", false));
    let (w, o) = assess(&sweep_study("    separator: comma\n"), &files);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    let err = String::from_utf8_lossy(&o.stderr);
    // The file and the header's line (after one comment line), and the hint.
    assert!(err.contains("L1.csv:2"), "{err}");
    assert!(err.contains("the header holds `;`"), "{err}");
    assert!(err.contains("separator: semicolon"), "{err}");
    assert!(o.stdout.is_empty());
    assert_eq!(w.files(), ["s", "study.yaml"]);
}

/// The demo probe files rewritten by `f`.
fn probe_files(f: impl Fn(usize, &[String], &[Vec<String>]) -> String) -> Vec<(String, String)> {
    (1..=3)
        .map(|m| {
            let (h, r) = demo(&format!("studies/probes/blade-L{m}.csv"));
            (format!("p/L{m}.csv"), f(m, &h, &r))
        })
        .collect()
}

fn field_study(extra: &str) -> String {
    format!(
        "format: 1\ntitle: probes\n{MESHES}fields:\n  blade:\n    id: probe\n    columns: [cp, wall_shear]\n    data: {{L1: p/L1.csv, L2: p/L2.csv, L3: p/L3.csv}}\n{extra}"
    )
}

#[test]
fn comments_in_probe_files_are_skipped() {
    let plain = probe_files(|_, h, r| write_rows(h, r, ",", false));
    let (_w, o) = assess(&field_study(""), &plain);
    let base = ok_json(&o);
    // Comment lines before the header and between rows (RFC 4180 has none; our rule: a line
    // starting with `#`), the same summary.
    let commented = probe_files(|_, h, r| {
        let mut out = format!("# probes on the suction side\n# x, y\n{}\n", h.join(","));
        for (i, row) in r.iter().enumerate() {
            if i % 100 == 7 {
                out.push_str("# a note, with commas, 1, 2 and a \"quote\n");
            }
            out.push_str(&row.join(","));
            out.push('\n');
        }
        out
    });
    let (_w, o) = assess(&field_study(""), &commented);
    let v = ok_json(&o);
    assert_eq!(v["fields"], base["fields"]);
    assert_eq!(v["fields"][0]["points"], 1500);
}

#[test]
fn probe_files_with_semicolons_units_and_a_missing_value() {
    let plain = probe_files(|_, h, r| write_rows(h, r, ",", false));
    let (_w, o) = assess(&field_study(""), &plain);
    let base = ok_json(&o);
    // Semicolons, decimal commas, a units row; the same numbers.
    let files = probe_files(|_, h, r| {
        let text = write_rows(h, r, ";", true);
        let (first, rest) = text.split_once('\n').unwrap();
        let (head, body) = rest.split_once('\n').unwrap();
        format!("{first}\n{head}\n[-];[m];[-];[Pa]\n{body}")
    });
    let (_w, o) = assess(&field_study(""), &files);
    let v = ok_json(&o);
    assert_eq!(v["fields"], base["fields"]);
    // One probe's cp marked missing on L3: class `none`, a warning naming it, the rest as
    // before (wall_shear untouched).
    let files = probe_files(|m, h, r| {
        let mut rows = r.to_vec();
        if m == 3 {
            rows[10][2] = "nan".into();
        }
        write_rows(h, &rows, "\t", false)
    });
    let (_w, o) = assess(&field_study(""), &files);
    let v = ok_json(&o);
    let cp = &v["fields"][0]["columns"][0];
    assert_eq!(cp["classes"]["none"], 1);
    let total: u64 = ["monotonic", "oscillatory", "divergent", "no_change", "none"]
        .iter()
        .map(|k| cp["classes"][k].as_u64().unwrap_or(0))
        .sum();
    assert_eq!(total, 1500);
    assert_eq!(
        v["fields"][0]["columns"][1],
        base["fields"][0]["columns"][1]
    );
    let w = v["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|w| w["code"] == "field_points_missing")
        .expect("a field_points_missing warning");
    let probe = &demo("studies/probes/blade-L1.csv").1[10][0];
    assert!(
        w["message"].as_str().unwrap().contains(probe.as_str()),
        "{w}"
    );
}

#[test]
fn measured_points_read_with_mapping_and_a_percent_u() {
    // Measured points with our own names, semicolons and decimal commas, u in % of the value
    // (relative, as `u: 0.3%` in the study), one point marked missing.
    let files = {
        let mut f = sweep_files(|_, h, r| write_rows(h, r, ",", false));
        f.push((
            "m.csv".into(),
            "sigma;eta;u\n[-];[-];%\n0,38;0,9051;0,25\n0,30;n/a;0,25\n0,24;0,9062;\n".into(),
        ));
        f
    };
    let study = sweep_study(
        "reference_data:\n  cav:\n    response: efficiency\n    file: m.csv\n    u_measured: 0.002\n    mapping: {x: sigma, value: eta}\n",
    );
    let (_w, o) = assess(&study, &files);
    let v = ok_json(&o);
    let pts = v["comparisons"][0]["points"].as_array().unwrap();
    assert_eq!(pts.len(), 2);
    assert_eq!(pts[0]["x"], 0.38);
    assert_eq!(pts[0]["measured"], 0.9051);
    // 0.25 % of 0.9051 (percent is hundredths).
    assert_relative_eq!(
        pts[0]["u_measured"].as_f64().unwrap(),
        0.0025 * 0.9051,
        max_relative = 1e-12
    );
    // An empty u cell: the point takes `u_measured`.
    assert_eq!(pts[1]["u_measured"], 0.002);
    assert!(warning_codes(&v).contains(&"missing_points_skipped"));
}

#[test]
fn a_wrong_separator_in_probe_files_is_refused_with_a_hint() {
    let files = probe_files(|_, h, r| write_rows(h, r, ";", false));
    let (w, o) = assess(&field_study("    separator: comma\n"), &files);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    let err = String::from_utf8_lossy(&o.stderr);
    // The file, the header's line (after one comment line) and the hint.
    assert!(err.contains("L1.csv, line 2: no column `probe`"), "{err}");
    assert!(err.contains("separator: semicolon"), "{err}");
    assert_eq!(w.files(), ["p", "study.yaml"]);
}
