//! Where outputs go, through the real binary: only regular files are replaced, a full device
//! or a closed standard output is an error (exit 3), `-o` never replaces an input (exit 2),
//! file modes follow the umask or the replaced file, the same fault gives the same status from
//! every command, concurrent reports into one folder, and a failing run writes nothing.
//! The studies are format tests with manufactured data (φ = φ0 + α h², analytic): no check
//! values here.
#![cfg(unix)]

mod common;

use common::*;
use std::os::unix::fs::{FileTypeExt, MetadataExt, PermissionsExt};
use std::path::Path;
use std::process::{Command, Output, Stdio};

const BIN: &str = env!("CARGO_BIN_EXE_meshbound");

/// A study of two quantities on three meshes.
const SCALAR: &str = "format: 1
title: outputs (format test)
meshes:
  - {name: a, size: 1}
  - {name: b, size: 2}
  - {name: c, size: 4}
quantities:
  head: {values: {a: 1.01, b: 1.04, c: 1.16}}
  torque: {values: {a: 2.02, b: 2.08, c: 2.32}}
";

/// Probe files a.csv, b.csv, c.csv of `n` probes (φ = φ0 + α h², analytic).
fn write_probes(w: &Workdir, n: usize) {
    for (mesh, h) in [("a", 1.0f64), ("b", 2.0), ("c", 4.0)] {
        let mut s = String::from("probe,q\n");
        for i in 0..n {
            s.push_str(&format!(
                "id{i},{}\n",
                1.0 + 0.01 * i as f64 + 0.001 * h * h
            ));
        }
        w.write(&format!("{mesh}.csv"), &s);
    }
}

/// A study with one field writing its per-point file to `write`.
fn field_study(write: &str) -> String {
    format!(
        "format: 1
title: outputs (format test)
meshes:
  - {{name: a, size: 1}}
  - {{name: b, size: 2}}
  - {{name: c, size: 4}}
fields:
  f:
    id: probe
    columns: [q]
    data: {{a: a.csv, b: b.csv, c: c.csv}}
    write: {write}
"
    )
}

/// Runs the binary under `sh` with a umask and a shell redirection (`redir`, e.g. `1>&-`).
fn sh(cwd: &Path, umask: &str, redir: &str, args: &[&str]) -> Output {
    Command::new("sh")
        .arg("-c")
        .arg(format!("umask {umask}; exec \"$0\" \"$@\" {redir}"))
        .arg(BIN)
        .args(args)
        .current_dir(cwd)
        .output()
        .unwrap()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// Every name under `dir`, recursively, relative to it (sorted).
fn tree(dir: &Path) -> Vec<String> {
    fn walk(base: &Path, d: &Path, out: &mut Vec<String>) {
        for e in std::fs::read_dir(d).unwrap() {
            let e = e.unwrap();
            let p = e.path();
            out.push(p.strip_prefix(base).unwrap().display().to_string());
            if e.file_type().unwrap().is_dir() {
                walk(base, &p, out);
            }
        }
    }
    let mut v = Vec::new();
    walk(dir, dir, &mut v);
    v.sort();
    v
}

fn mode(p: &Path) -> u32 {
    std::fs::metadata(p).unwrap().permissions().mode() & 0o7777
}

#[test]
fn only_regular_files_are_replaced() {
    let w = Workdir::new();
    w.write("s.yaml", SCALAR);
    // A FIFO (no reader: opening it for writing would block forever).
    let fifo = w.path().join("pipe");
    assert!(Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .unwrap()
        .success());
    // A link to the null device: without the check the rename would replace the link with a
    // file; following it, the target is a device and is refused. (A test never names
    // /dev/null itself: run as root, a regression would replace the system's.)
    std::os::unix::fs::symlink("/dev/null", w.path().join("null")).unwrap();
    std::fs::create_dir(w.path().join("folder")).unwrap();
    for (target, what) in [
        ("pipe", "a FIFO"),
        ("null", "a character device"),
        ("folder", "a folder"),
    ] {
        let before = tree(w.path());
        let o = run_in(w.path(), &["assess", "s.yaml", "-o", target]);
        assert_eq!(o.status.code(), Some(3), "{target}: {}", show(&o));
        let err = stderr(&o);
        assert!(err.contains(target) && err.contains(what), "{err}");
        assert_eq!(tree(w.path()), before, "{target}: something changed");
    }
    assert!(std::fs::symlink_metadata(&fifo)
        .unwrap()
        .file_type()
        .is_fifo());
    assert!(std::fs::symlink_metadata(w.path().join("null"))
        .unwrap()
        .is_symlink());
    assert!(std::fs::metadata("/dev/null")
        .unwrap()
        .file_type()
        .is_char_device());
    // The same for a per-point file: an output fault, exit 3, nothing written.
    write_probes(&w, 5);
    w.write("f.yaml", &field_study("pipe"));
    let before = tree(w.path());
    let o = run_in(w.path(), &["assess", "f.yaml"]);
    assert_eq!(o.status.code(), Some(3), "{}", show(&o));
    assert_eq!(tree(w.path()), before);
}

#[test]
fn a_full_device_or_a_closed_standard_output_is_an_error() {
    let w = Workdir::new();
    w.write("s.yaml", SCALAR);
    // /dev/full: every write fails with "no space left on device" (its documented purpose).
    for extra in [&[][..], &["-o", "-"][..]] {
        let full = std::fs::OpenOptions::new()
            .write(true)
            .open("/dev/full")
            .unwrap();
        let o = Command::new(BIN)
            .args(["assess", "s.yaml", "-f", "json"])
            .args(extra)
            .current_dir(w.path())
            .stdout(Stdio::from(full))
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(3), "{extra:?}: {}", show(&o));
        assert!(stderr(&o).contains("standard output"), "{}", show(&o));
    }
    // Standard output closed: the result would be lost.
    let o = sh(w.path(), "022", "1>&-", &["assess", "s.yaml"]);
    assert_eq!(o.status.code(), Some(3), "{}", show(&o));
    assert!(
        stderr(&o).contains("standard output is closed"),
        "{}",
        show(&o)
    );
    assert_eq!(w.files(), ["s.yaml"]);
    // A standard output sent to /dev/null by the shell is not closed.
    let o = sh(w.path(), "022", ">/dev/null", &["assess", "s.yaml"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    // ... but not needed with -o FILE.
    let o = sh(
        w.path(),
        "022",
        "1>&-",
        &["assess", "s.yaml", "-o", "r.txt"],
    );
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert!(w.path().join("r.txt").exists());
    let o = sh(
        w.path(),
        "022",
        "1>&-",
        &["report", "s.yaml", "--out", "rep"],
    );
    // `report`'s result is the folder; its line on standard output only tells of it.
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert!(w.path().join("rep/report.html").exists());
    // A reader that went away (`| head -1`) is a quiet exit 0 (common practice for
    // command-line tools, no source).
    let mut child = Command::new(BIN)
        .args(["assess", "s.yaml", "-f", "json"])
        .current_dir(w.path())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    let o = child.wait_with_output().unwrap();
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert_eq!(stderr(&o), "");
}

#[test]
fn output_naming_an_input_is_refused() {
    let w = Workdir::new();
    std::fs::create_dir(w.path().join("d")).unwrap();
    let sub = w.path().join("d");
    write_probes(&w, 5);
    for m in ["a", "b", "c"] {
        std::fs::rename(
            w.path().join(format!("{m}.csv")),
            sub.join(format!("{m}.csv")),
        )
        .unwrap();
    }
    let study = format!(
        "{}{}",
        field_study("out/p.csv"),
        "quantities:\n  head: {values: {a: 1.01, b: 1.04, c: 1.16}}\n"
    );
    std::fs::write(sub.join("s.yaml"), &study).unwrap();
    std::os::unix::fs::symlink("s.yaml", sub.join("link.yaml")).unwrap();
    std::fs::hard_link(sub.join("s.yaml"), sub.join("hard.yaml")).unwrap();
    std::fs::create_dir(w.path().join("e")).unwrap();
    std::fs::create_dir(sub.join("out")).unwrap();
    std::fs::write(sub.join("out/p.csv"), "old per-point file\n").unwrap();
    let before: Vec<(String, Vec<u8>)> = tree(w.path())
        .into_iter()
        .filter_map(|n| std::fs::read(w.path().join(&n)).ok().map(|b| (n, b)))
        .collect();
    let cases: &[(&str, &[&str])] = &[
        ("d", &["assess", "s.yaml", "-o", "s.yaml"]),
        ("d", &["assess", "s.yaml", "-o", "./s.yaml"]),
        ("e", &["assess", "../d/s.yaml", "-o", "../d/s.yaml"]),
        ("e", &["assess", "../d/s.yaml", "-o", "../e/../d/s.yaml"]),
        ("d", &["assess", "s.yaml", "-o", "link.yaml"]),
        ("d", &["assess", "s.yaml", "-o", "hard.yaml"]),
        ("d", &["assess", "link.yaml", "-o", "s.yaml"]),
        ("d", &["assess", "s.yaml", "-o", "b.csv"]),
        ("d", &["assess", "s.yaml", "-o", "out/p.csv"]),
        ("d", &["assess", "s.yaml", "-o", "out/../out/p.csv"]),
        ("e", &["assess", "../d", "-o", "../d/c.csv"]),
        ("d", &["gate", "s.yaml", "-o", "a.csv"]),
        ("e", &["gate", "../d", "-o", "../d/hard.yaml"]),
        (
            "d",
            &["plan", "s.yaml", "--target", "head=1%", "-o", "./s.yaml"],
        ),
    ];
    for (cwd, args) in cases {
        let o = run_in(&w.path().join(cwd), args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", show(&o));
        assert!(
            stderr(&o).contains("choose another output"),
            "{args:?}: {}",
            show(&o)
        );
        let now: Vec<(String, Vec<u8>)> = tree(w.path())
            .into_iter()
            .filter_map(|n| std::fs::read(w.path().join(&n)).ok().map(|b| (n, b)))
            .collect();
        assert!(now == before, "{args:?}: something was written or changed");
    }
    // `report --replace` of the study's own folder would delete it: refused, exit 2.
    let o = run_in(w.path(), &["report", "d/s.yaml", "--out", "d", "--replace"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(sub.join("s.yaml").exists());
    // A file that is not an input is fine.
    let o = run_in(&sub, &["assess", "s.yaml", "-o", "result.txt"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
}

#[test]
fn modes_follow_the_umask_or_the_replaced_file() {
    let w = Workdir::new();
    write_probes(&w, 5);
    w.write("s.yaml", &field_study("out/p.csv"));
    let o = sh(w.path(), "022", "", &["assess", "s.yaml", "-o", "r.txt"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    // 0666 & !022 and 0777 & !022 (POSIX open(2) and mkdir(2) apply the umask).
    assert_eq!(mode(&w.path().join("r.txt")), 0o644);
    assert_eq!(mode(&w.path().join("out/p.csv")), 0o644);
    assert_eq!(mode(&w.path().join("out")), 0o755);
    // A replaced file keeps its mode, whatever the umask.
    std::fs::set_permissions(
        w.path().join("r.txt"),
        std::fs::Permissions::from_mode(0o640),
    )
    .unwrap();
    std::fs::set_permissions(
        w.path().join("out/p.csv"),
        std::fs::Permissions::from_mode(0o604),
    )
    .unwrap();
    let o = sh(w.path(), "077", "", &["assess", "s.yaml", "-o", "r.txt"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert_eq!(mode(&w.path().join("r.txt")), 0o640);
    assert_eq!(mode(&w.path().join("out/p.csv")), 0o604);
    // New files under umask 077 and 002.
    let o = sh(w.path(), "077", "", &["assess", "s.yaml", "-o", "r2.txt"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert_eq!(mode(&w.path().join("r2.txt")), 0o600);
    let o = sh(w.path(), "002", "", &["gate", "s.yaml", "-o", "g.txt"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert_eq!(mode(&w.path().join("g.txt")), 0o664);
    // Report folders and their files.
    let o = sh(w.path(), "022", "", &["report", "s.yaml", "--out", "rep"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert_eq!(mode(&w.path().join("rep")), 0o755);
    assert_eq!(mode(&w.path().join("rep/report.md")), 0o644);
    std::fs::set_permissions(w.path().join("rep"), std::fs::Permissions::from_mode(0o750)).unwrap();
    let o = sh(
        w.path(),
        "022",
        "",
        &["report", "s.yaml", "--out", "rep", "--replace"],
    );
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert_eq!(mode(&w.path().join("rep")), 0o750);
    // Nothing else left beside them.
    assert_eq!(
        w.files(),
        ["a.csv", "b.csv", "c.csv", "g.txt", "out", "r.txt", "r2.txt", "rep", "s.yaml"]
    );
}

#[test]
fn an_unwritable_per_point_file_gives_3_from_every_command() {
    let w = Workdir::new();
    write_probes(&w, 5);
    // The per-point file's path is a folder: it cannot be written (whoever runs the test,
    // root included).
    std::fs::create_dir_all(w.path().join("d/taken")).unwrap();
    for m in ["a", "b", "c"] {
        std::fs::copy(
            w.path().join(format!("{m}.csv")),
            w.path().join(format!("d/{m}.csv")),
        )
        .unwrap();
    }
    std::fs::write(w.path().join("d/s.yaml"), field_study("taken")).unwrap();
    std::fs::write(w.path().join("d/t.yaml"), SCALAR).unwrap();
    let before = tree(w.path());
    for args in [
        &["assess", "d/s.yaml"][..],
        &["assess", "d"][..],
        &["assess", "d", "-f", "jsonl"][..],
        &["report", "d/s.yaml", "--out", "rep"][..],
    ] {
        let o = run_in(w.path(), args);
        assert_eq!(o.status.code(), Some(3), "{args:?}: {}", show(&o));
        assert!(stderr(&o).contains("taken"), "{args:?}: {}", show(&o));
        assert_eq!(tree(w.path()), before, "{args:?}");
    }
    // `gate` writes no per-point file, so it does not meet that fault.
    let o = run_in(w.path(), &["gate", "d"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    // A broken study is 2 from each of them.
    std::fs::write(w.path().join("d/t.yaml"), "format: 1\nmeshes: 3\n").unwrap();
    std::fs::write(w.path().join("d/s.yaml"), field_study("fine.csv")).unwrap();
    for args in [
        &["assess", "d/t.yaml"][..],
        &["assess", "d"][..],
        &["report", "d/t.yaml", "--out", "rep"][..],
        &["gate", "d"][..],
    ] {
        let o = run_in(w.path(), args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", show(&o));
    }
}

#[test]
fn concurrent_reports_into_one_new_folder_refuse_as_if_it_existed() {
    let w = Workdir::new();
    w.write("s.yaml", SCALAR);
    for round in 0..3 {
        let _ = std::fs::remove_dir_all(w.path().join("rep"));
        let children: Vec<_> = (0..6)
            .map(|_| {
                Command::new(BIN)
                    .args(["report", "s.yaml", "--out", "rep"])
                    .current_dir(w.path())
                    .stdout(Stdio::null())
                    .stderr(Stdio::piped())
                    .spawn()
                    .unwrap()
            })
            .collect();
        let outs: Vec<Output> = children
            .into_iter()
            .map(|c| c.wait_with_output().unwrap())
            .collect();
        let won = outs.iter().filter(|o| o.status.code() == Some(0)).count();
        assert_eq!(won, 1, "round {round}: one report is made");
        for o in outs.iter().filter(|o| o.status.code() != Some(0)) {
            assert_eq!(o.status.code(), Some(2), "round {round}: {}", show(o));
            assert!(
                stderr(o).contains("rep exists: give --replace"),
                "{}",
                show(o)
            );
        }
        assert_eq!(w.files(), ["rep", "s.yaml"], "round {round}");
        assert!(w.path().join("rep/report.html").exists());
    }
}

#[test]
fn a_failing_run_writes_nothing() {
    let w = Workdir::new();
    write_probes(&w, 5);
    // A first field writes into a new folder two levels down; a second field is refused
    // (its probe file names a probe the others lack) after the first was written.
    let mut d = std::fs::read_to_string(w.path().join("c.csv")).unwrap();
    d = d.replace("id3,", "id33,");
    w.write("d.csv", &d);
    let study = format!(
        "{}  g:\n    id: probe\n    columns: [q]\n    data: {{a: a.csv, b: b.csv, c: d.csv}}\n    write: out/g.csv\n",
        field_study("out/sub/f.csv")
    );
    w.write("s.yaml", &study);
    let before = tree(w.path());
    for args in [
        &["assess", "s.yaml"][..],
        &["assess", "s.yaml", "-o", "r.json", "-f", "json"][..],
        &["report", "s.yaml", "--out", "rep"][..],
    ] {
        let o = run_in(w.path(), args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", show(&o));
        assert!(stderr(&o).contains("d.csv"), "{}", show(&o));
        assert_eq!(tree(w.path()), before, "{args:?}: left behind");
    }
}

#[test]
fn gate_says_it_wrote_nothing() {
    let w = Workdir::new();
    write_probes(&w, 5);
    w.write("s.yaml", &field_study("out/p.csv"));
    let o = run_in(w.path(), &["gate", "s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["files"][0]["written"], serde_json::json!([]));
    let not = v["files"][0]["not_written"][0].as_str().unwrap();
    assert!(not.ends_with("out/p.csv"), "{not}");
    let o = run_in(w.path(), &["gate", "s.yaml"]);
    let table = String::from_utf8_lossy(&o.stdout);
    assert!(table.contains("nothing written"), "{table}");
    // Its -o output is written whole, beside nothing else.
    let o = run_in(w.path(), &["gate", "s.yaml", "-o", "g.json", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let g: serde_json::Value =
        serde_json::from_slice(&std::fs::read(w.path().join("g.json")).unwrap()).unwrap();
    assert_eq!(g["passed"], true);
    assert_eq!(w.files(), ["a.csv", "b.csv", "c.csv", "g.json", "s.yaml"]);
    assert_eq!(
        std::fs::metadata(w.path().join("g.json")).unwrap().nlink(),
        1
    );
}
