//! Pointwise fields through the real binary: the JSON summary and per-point CSV contracts,
//! probe-file errors, and gate limits on a field column.

mod common;

use approx::assert_relative_eq;
use common::*;

fn write_probes(w: &Workdir, n: usize, p: f64) {
    // Manufactured per probe (analytic): φ = φ0 + α h^p with h = 1, 2, 4, so every probe has
    // observed order p and extrapolated value φ0 exactly.
    for (mesh, h) in [("a", 1.0f64), ("b", 2.0), ("c", 4.0)] {
        let mut s = String::from("probe,q\n");
        for i in 0..n {
            let phi0 = 1.0 + i as f64 * 0.01;
            let alpha = 0.001 * (1.0 + (i % 7) as f64);
            s.push_str(&format!("id{i},{}\n", phi0 + alpha * h.powf(p)));
        }
        w.write(&format!("{mesh}.csv"), &s);
    }
}

const STUDY: &str = "format: 1
meshes:
  - {name: a, size: 1}
  - {name: b, size: 2}
  - {name: c, size: 4}
fields:
  f:
    id: probe
    columns: [q]
    data: {a: a.csv, b: b.csv, c: c.csv}
    write: out/points.csv
acceptance:
  - {target: f.q, max_relative: 5%, require: monotonic}
";

#[test]
fn field_summary_and_per_point_file_follow_the_contract() {
    let w = Workdir::new();
    write_probes(&w, 100, 2.0);
    w.write("s.yaml", STUDY);
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let f = &v["fields"][0];
    for k in ["name", "points", "written", "columns"] {
        assert!(f.get(k).is_some(), "field key {k}");
    }
    assert_eq!(f["points"], 100);
    let c = &f["columns"][0];
    for k in [
        "name",
        "classes",
        "mean_order",
        "median_order",
        "mean_relative",
        "max_relative",
    ] {
        assert!(c.get(k).is_some(), "column key {k}");
    }
    for k in ["monotonic", "oscillatory", "divergent", "no_change"] {
        assert!(c["classes"].get(k).is_some(), "class key {k}");
    }
    assert_eq!(c["classes"]["monotonic"], 100);
    assert_relative_eq!(c["mean_order"].as_f64().unwrap(), 2.0, max_relative = 1e-9);
    assert_relative_eq!(c["median_order"].as_f64().unwrap(), 2.0, epsilon = 1e-3);
    let text = std::fs::read_to_string(w.path().join("out/points.csv")).unwrap();
    let mut lines = text.lines();
    assert_eq!(
        lines.next().unwrap(),
        "id,q,q_extrapolated,q_order,q_class,q_uncertainty"
    );
    let first: Vec<&str> = lines.next().unwrap().split(',').collect();
    assert_eq!(first[0], "id0");
    assert_relative_eq!(first[2].parse::<f64>().unwrap(), 1.0, max_relative = 1e-12);
    assert_relative_eq!(first[3].parse::<f64>().unwrap(), 2.0, max_relative = 1e-9);
    assert_eq!(first[4], "monotonic");
    // δ_RE = |ε21|/(2² − 1) with ε21 = 0.001·(4 − 1), p = p_f = 2 exactly, so the default
    // rule's factor is 1.1 (Stern et al. 2001 correction factor at C = 1, from memory).
    assert_relative_eq!(
        first[5].parse::<f64>().unwrap(),
        1.1 * 0.003 / 3.0,
        max_relative = 1e-12
    );
    assert_eq!(text.lines().count(), 101);
    let files: Vec<&str> = v["files_written"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_str().unwrap())
        .collect();
    assert_eq!(files.len(), 1);
    // gate on the field column.
    let o = run_in(w.path(), &["gate", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
}

#[test]
fn mismatched_probe_files_are_refused_with_file_and_line() {
    let w = Workdir::new();
    write_probes(&w, 10, 2.0);
    w.write("s.yaml", STUDY);
    let b = std::fs::read_to_string(w.path().join("b.csv"))
        .unwrap()
        .replace("id4,", "id44,");
    w.write("b.csv", &b);
    let o = run_in(w.path(), &["assess", "s.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("b.csv") && err.contains("line 6"), "{err}");
    assert!(
        !w.path().join("out/points.csv").exists(),
        "no partial per-point file"
    );
    // A missing row.
    write_probes(&w, 10, 2.0);
    let c = std::fs::read_to_string(w.path().join("c.csv")).unwrap();
    let c: String = c.lines().take(9).map(|l| format!("{l}\n")).collect();
    w.write("c.csv", &c);
    let o = run_in(w.path(), &["assess", "s.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("c.csv"));
    // An unknown mesh and a missing column.
    write_probes(&w, 10, 2.0);
    w.write("s2.yaml", &STUDY.replace("c: c.csv}", "d: c.csv}"));
    let o = run_in(w.path(), &["assess", "s2.yaml"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("fields.f.data.d: names the mesh `d`"));
    w.write("s3.yaml", &STUDY.replace("columns: [q]", "columns: [r]"));
    let o = run_in(w.path(), &["assess", "s3.yaml"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("no column `r`"));
}

#[test]
fn field_gate_fails_when_the_largest_relative_uncertainty_is_too_large() {
    let w = Workdir::new();
    write_probes(&w, 20, 2.0);
    // Every probe has U = 1.25·3α/3 = 1.25α ≥ 0.00125 (α ≥ 0.001) over φ1 < 1.2: above 0.1 %.
    w.write(
        "s.yaml",
        &STUDY.replace("max_relative: 5%", "max_relative: 0.1%"),
    );
    let o = run_in(w.path(), &["gate", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(1), "{}", show(&o));
}

#[test]
fn field_gate_fails_when_a_point_overflows() {
    // Source of the check: the IEEE 754 double range (largest finite value about 1.8e308).
    // Probe `huge` has φ = 1.7e308, 1.7e308, −1.7e308: ε32 overflows, so its uncertainty
    // cannot be represented. It used to be left out of the summary, and the 5 % limit passed
    // on the other (manufactured, well-converged) probes; now it counts as a failure.
    let w = Workdir::new();
    write_probes(&w, 20, 2.0);
    for (mesh, v) in [("a", "1.7e308"), ("b", "1.7e308"), ("c", "-1.7e308")] {
        let path = w.path().join(format!("{mesh}.csv"));
        let mut s = std::fs::read_to_string(&path).unwrap();
        s.push_str(&format!("huge,{v}\n"));
        w.write(&format!("{mesh}.csv"), &s);
    }
    w.write("s.yaml", STUDY);
    let o = run_in(w.path(), &["assess", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["fields"][0]["points"], 21);
    assert_eq!(v["fields"][0]["columns"][0]["overflowed"], 1);
    assert!(
        warning_codes(&v).contains(&"field_points_overflowed"),
        "{}",
        show(&o)
    );
    let o = run_in(w.path(), &["gate", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(1), "{}", show(&o));
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(
        out.contains("1 of 21 points have an uncertainty too large to represent"),
        "{out}"
    );
    // Without the probe, the same limits pass.
    write_probes(&w, 20, 2.0);
    let o = run_in(w.path(), &["gate", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
}

/// Runs the binary, killing it when it has not ended after a generous time, so that a
/// regression that blocks fails the test instead of hanging the suite.
#[cfg(target_os = "linux")]
fn run_or_kill(cwd: &std::path::Path, args: &[&str]) -> Option<std::process::Output> {
    use std::process::{Command, Stdio};
    let mut child = Command::new(env!("CARGO_BIN_EXE_meshbound"))
        .args(args)
        .current_dir(cwd)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the meshbound binary runs");
    for _ in 0..1200 {
        if child.try_wait().expect("waiting works").is_some() {
            return Some(child.wait_with_output().expect("output is read"));
        }
        std::thread::sleep(std::time::Duration::from_millis(100));
    }
    let _ = child.kill();
    let _ = child.wait();
    None
}

#[cfg(target_os = "linux")]
#[test]
fn a_fifo_as_probe_file_is_refused_instead_of_blocking() {
    let w = Workdir::new();
    write_probes(&w, 5, 2.0);
    w.write("s.yaml", STUDY);
    let fifo = w.path().join("b.csv");
    std::fs::remove_file(&fifo).unwrap();
    let c = std::ffi::CString::new(fifo.as_os_str().as_encoded_bytes()).unwrap();
    // SAFETY: `c` is a valid NUL-terminated path.
    assert_eq!(unsafe { libc::mkfifo(c.as_ptr(), 0o600) }, 0);
    let o = run_or_kill(w.path(), &["assess", "s.yaml"])
        .expect("meshbound blocked on a FIFO given as a probe file");
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("b.csv") && err.contains("FIFO"), "{err}");
    assert!(!w.path().join("out/points.csv").exists());
}
