//! `report --out DIR` interrupted part-way, through the real binary: SIGINT, SIGTERM and
//! SIGKILL sent while the report's files are being written (the hidden temporary folder beside
//! DIR exists) and at several moments of the run. DIR must then be absent or whole (with
//! `--replace`: the old folder untouched, or the new one whole), never half-written; SIGINT and
//! SIGTERM must leave no temporary folder; SIGKILL may leave one, hidden beside DIR and named
//! `.DIR.meshbound-…`. The study has many quantities (one figure each), so that writing the
//! folder takes a moment (invented demo numbers: a format test, no check values).
#![cfg(unix)]

mod common;

use common::*;
use std::collections::BTreeMap;
use std::os::unix::process::ExitStatusExt;
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

/// A study of `n` quantities on three meshes.
fn study(n: usize) -> String {
    let mut s = String::from(
        "format: 1\ntitle: interrupted report (format test)\nmeshes:\n  - {name: L1, size: 1}\n  - {name: L2, size: 1.5}\n  - {name: L3, size: 2.25}\nquantities:\n",
    );
    for i in 0..n {
        let c = 0.01 * (1 + i % 17) as f64;
        let v: Vec<f64> = [1.0f64, 1.5, 2.25]
            .iter()
            .map(|h| 1.0 + c * h * h)
            .collect();
        s.push_str(&format!(
            "  q{i}: {{values: {{L1: {}, L2: {}, L3: {}}}}}\n",
            v[0], v[1], v[2]
        ));
    }
    s
}

/// Every file of a folder, name and bytes.
fn contents(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| {
            let e = e.unwrap();
            (
                e.file_name().to_string_lossy().into_owned(),
                std::fs::read(e.path()).unwrap(),
            )
        })
        .collect()
}

/// The old report that `--replace` runs start from.
fn old_report() -> BTreeMap<String, Vec<u8>> {
    [("old.md".to_string(), b"the old report".to_vec())].into()
}

/// Names in the work folder other than the study and the reference report.
fn others(w: &Workdir) -> Vec<String> {
    w.files()
        .into_iter()
        .filter(|n| n != "s.yaml" && n != "ref")
        .collect()
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum When {
    /// As soon as the temporary folder is seen.
    Writing,
    /// After this long.
    After(Duration),
}

/// Runs `report s.yaml --out rep` (with `--replace` over an old report when `replace`), sends
/// `signal` at `when`, and checks what is left. Returns whether the signal ended the run.
fn interrupt(
    w: &Workdir,
    whole: &BTreeMap<String, Vec<u8>>,
    signal: &str,
    when: When,
    replace: bool,
) -> bool {
    let rep = w.path().join("rep");
    let _ = std::fs::remove_dir_all(&rep);
    if replace {
        std::fs::create_dir(&rep).unwrap();
        for (n, b) in old_report() {
            std::fs::write(rep.join(n), b).unwrap();
        }
    }
    let mut args = vec!["report", "s.yaml", "--out", "rep", "--svg-only"];
    if replace {
        args.push("--replace");
    }
    let mut child = Command::new(env!("CARGO_BIN_EXE_meshbound"))
        .args(&args)
        .current_dir(w.path())
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let start = Instant::now();
    let deadline = start + Duration::from_secs(120);
    loop {
        if child.try_wait().unwrap().is_some() {
            break;
        }
        let due = match when {
            When::Writing => others(w)
                .iter()
                .any(|n| n.starts_with(".rep.meshbound-") && !n.contains("-old-")),
            When::After(d) => start.elapsed() >= d,
        };
        if due {
            let pid = child.id().to_string();
            let sent = Command::new("kill")
                .args(["-s", signal, &pid])
                .status()
                .unwrap();
            assert!(sent.success(), "kill -s {signal} {pid}");
            break;
        }
        assert!(Instant::now() < deadline, "the report took too long");
        std::thread::sleep(Duration::from_micros(200));
    }
    let o = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    let what = format!("{signal} {when:?} replace={replace}: {:?}\n{err}", o.status);
    let interrupted = o.status.code().is_none();
    if !interrupted {
        assert_eq!(o.status.code(), Some(0), "{what}");
    }
    // DIR: absent or whole; with --replace the old one untouched or the new one whole.
    let state = if rep.exists() {
        Some(contents(&rep))
    } else {
        None
    };
    match (&state, replace) {
        (None, false) => assert!(interrupted, "{what}: finished without a report"),
        (None, true) => panic!("{what}: the old report is gone and no new one is in place"),
        (Some(c), false) => assert!(c == whole, "{what}: a half-written report"),
        (Some(c), true) => assert!(
            c == whole || *c == old_report(),
            "{what}: neither the old nor the whole new report ({} files)",
            c.len()
        ),
    }
    // Leftovers beside DIR.
    let left: Vec<String> = others(w).into_iter().filter(|n| n != "rep").collect();
    if signal == "KILL" {
        for n in &left {
            assert!(
                n.starts_with(".rep.meshbound-") && w.path().join(n).is_dir(),
                "{what}: `{n}` left beside the report"
            );
        }
    } else {
        assert!(left.is_empty(), "{what}: left behind: {left:?}");
        if interrupted {
            let name = format!("SIG{signal}");
            assert_eq!(
                o.status.signal().map(|s| s.to_string()),
                Some(number(signal)),
                "{what}"
            );
            // Once the temporary folder exists the handler is installed and says so (a signal
            // at the very start may come before it is).
            if when == When::Writing {
                assert!(err.contains(&format!("interrupted ({name})")), "{what}");
            }
        }
    }
    for n in &left {
        let _ = std::fs::remove_dir_all(w.path().join(n));
    }
    interrupted
}

/// The signal's number (as `kill -l` gives it).
fn number(signal: &str) -> String {
    let o = Command::new("kill").args(["-l", signal]).output().unwrap();
    let n = String::from_utf8_lossy(&o.stdout).trim().to_string();
    if n.is_empty() {
        match signal {
            "INT" => "2",
            "TERM" => "15",
            _ => "9",
        }
        .to_string()
    } else {
        n
    }
}

#[test]
fn an_interrupted_report_leaves_no_half_written_folder() {
    let w = Workdir::new();
    w.write("s.yaml", &study(300));
    // The whole report, for comparison, and how long a run takes.
    let t = Instant::now();
    // SVG only: the writing, not the rendering, is what the signals must meet.
    let o = run_in(
        w.path(),
        &["report", "s.yaml", "--out", "ref", "--svg-only"],
    );
    let took = t.elapsed();
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let whole = contents(&w.path().join("ref"));
    assert_eq!(whole.len(), 302, "report.md, report.html and 300 figures");
    for signal in ["INT", "TERM", "KILL"] {
        for replace in [false, true] {
            // While the files are being written: it must happen at least once in a few tries
            // (the run may finish between seeing the folder and the signal).
            let hits = (0..5)
                .filter(|_| interrupt(&w, &whole, signal, When::Writing, replace))
                .count();
            assert!(hits > 0, "{signal}: never interrupted while writing");
            eprintln!("{signal} replace={replace}: interrupted while writing in {hits} of 5 runs");
            // And at moments spread over a run.
            for k in 0..4 {
                interrupt(&w, &whole, signal, When::After(took * k / 4), replace);
            }
        }
    }
}

#[test]
fn an_existing_folder_is_refused_without_replace() {
    let w = Workdir::new();
    w.write("s.yaml", &study(3));
    std::fs::create_dir(w.path().join("rep")).unwrap();
    std::fs::write(w.path().join("rep/old.md"), "the old report").unwrap();
    let o = run_in(w.path(), &["report", "s.yaml", "--out", "rep"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("rep exists: give --replace"));
    assert_eq!(contents(&w.path().join("rep")), old_report());
    assert_eq!(w.files(), ["rep", "s.yaml"]);
    // With --replace: the new report whole, the old one gone, nothing beside.
    let o = run_in(w.path(), &["report", "s.yaml", "--out", "rep", "--replace"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert!(w.path().join("rep/report.html").exists());
    assert!(!w.path().join("rep/old.md").exists());
    assert_eq!(w.files(), ["rep", "s.yaml"]);
}

/// Names in a folder.
fn names(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .map(|d| {
            d.map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
                .collect()
        })
        .unwrap_or_default();
    v.sort();
    v
}

#[test]
fn an_interrupted_field_run_leaves_no_temporary_file() {
    // Three probe files of 200 000 points (invented smooth values, a format test), so that
    // the per-point file is being written for a moment.
    let w = Workdir::new();
    let n = 200_000;
    for (m, h) in [1.0f64, 1.5, 2.25].iter().enumerate() {
        let mut s = String::from("probe,cp\n");
        for i in 0..n {
            let x = i as f64 / n as f64;
            s.push_str(&format!("{i},{}\n", 1.0 + x + 0.01 * (1.0 + x) * h * h));
        }
        w.write(&format!("m{m}.csv"), &s);
    }
    w.write(
        "s.yaml",
        "format: 1\ntitle: interrupted field (format test)\nmeshes:\n  - {name: L1, size: 1}\n  - {name: L2, size: 1.5}\n  - {name: L3, size: 2.25}\nfields:\n  cp_probes:\n    id: probe\n    columns: [cp]\n    data: {L1: m0.csv, L2: m1.csv, L3: m2.csv}\n    write: out/points.csv\n",
    );
    let out = w.path().join("out");
    let mut interrupted = 0;
    for signal in ["INT", "TERM", "INT", "TERM", "INT", "TERM"] {
        let _ = std::fs::remove_dir_all(&out);
        // meshbound creates no folder for a study: the per-point file's folder must exist.
        std::fs::create_dir(&out).unwrap();
        let mut child = Command::new(env!("CARGO_BIN_EXE_meshbound"))
            .args(["assess", "s.yaml"])
            .current_dir(w.path())
            .stdout(Stdio::null())
            .stderr(Stdio::piped())
            .spawn()
            .unwrap();
        let deadline = Instant::now() + Duration::from_secs(120);
        loop {
            if child.try_wait().unwrap().is_some() {
                break;
            }
            if names(&out).iter().any(|n| n.ends_with(".part")) {
                let pid = child.id().to_string();
                let sent = Command::new("kill")
                    .args(["-s", signal, &pid])
                    .status()
                    .unwrap();
                assert!(sent.success());
                break;
            }
            assert!(Instant::now() < deadline, "the field run took too long");
            std::thread::sleep(Duration::from_micros(200));
        }
        let o = child.wait_with_output().unwrap();
        let left = names(&out);
        if o.status.code().is_none() {
            interrupted += 1;
            // Killed by the signal: no temporary file and no per-point file.
            assert!(left.is_empty(), "{signal}: left behind {left:?}");
        } else {
            // Finished before the signal: the whole per-point file and nothing else.
            assert_eq!(o.status.code(), Some(0), "{}", show(&o));
            assert_eq!(left, ["points.csv"], "{signal}");
            let text = std::fs::read_to_string(out.join("points.csv")).unwrap();
            assert_eq!(text.lines().count(), n + 1);
        }
    }
    assert!(interrupted > 0, "never interrupted while writing");
}

/// Where a temporary appears for each kind of output, and the command that makes it.
#[derive(Debug, Clone, Copy)]
enum Made {
    /// `-o FILE`: `.meshbound-….part` beside it.
    OutputFile,
    /// A per-point file: `.meshbound-….part` in the folder `out` (already there).
    PointFile,
    /// The folder `out` made for a per-point file.
    PointFolder,
    /// `report --out rep`: the folder `.rep.meshbound-…` beside it.
    ReportFolder,
}

/// With the test hook `MESHBOUND_TEST_PAUSE_MS` the binary pauses right after creating each
/// temporary: the signal is sent exactly there, where a temporary created before it was
/// registered would be left behind. Each run must end by the signal, say so, and leave nothing.
fn signal_right_after_creation(signal: &str, made: Made, runs: usize) {
    let w = Workdir::new();
    for (m, h) in [1.0f64, 1.5, 2.25].iter().enumerate() {
        let mut s = String::from("probe,cp\n");
        for i in 0..5 {
            s.push_str(&format!("{i},{}\n", 1.0 + i as f64 + 0.01 * h * h));
        }
        w.write(&format!("m{m}.csv"), &s);
    }
    let yaml = match made {
        Made::PointFile | Made::PointFolder => "format: 1\ntitle: paused (format test)\nmeshes:\n  - {name: L1, size: 1}\n  - {name: L2, size: 1.5}\n  - {name: L3, size: 2.25}\nfields:\n  cp_probes:\n    id: probe\n    columns: [cp]\n    data: {L1: m0.csv, L2: m1.csv, L3: m2.csv}\n    write: out/points.csv\n".to_string(),
        _ => study(3),
    };
    w.write("s.yaml", &yaml);
    if let Made::PointFile = made {
        std::fs::create_dir(w.path().join("out")).unwrap();
    }
    let before = w.files();
    let args: &[&str] = match made {
        Made::OutputFile => &["assess", "s.yaml", "-o", "r.txt"],
        Made::PointFile | Made::PointFolder => &["assess", "s.yaml"],
        Made::ReportFolder => &["report", "s.yaml", "--out", "rep"],
    };
    for run in 0..runs {
        let mut child = Command::new(env!("CARGO_BIN_EXE_meshbound"))
            .args(args)
            .env("MESHBOUND_TEST_PAUSE_MS", "20000")
            .current_dir(w.path())
            .stdout(Stdio::null())
            .stderr(Stdio::piped())
            .spawn()
            .unwrap();
        let deadline = Instant::now() + Duration::from_secs(60);
        loop {
            let seen = match made {
                Made::OutputFile => w.files().iter().any(|n| n.ends_with(".part")),
                Made::PointFile => names(&w.path().join("out"))
                    .iter()
                    .any(|n| n.ends_with(".part")),
                Made::PointFolder => w.path().join("out").exists(),
                Made::ReportFolder => w.files().iter().any(|n| n.starts_with(".rep.meshbound-")),
            };
            if seen {
                break;
            }
            assert!(
                child.try_wait().unwrap().is_none(),
                "{made:?} run {run}: ended before its temporary was seen"
            );
            assert!(Instant::now() < deadline, "{made:?}: no temporary appeared");
            std::thread::sleep(Duration::from_micros(200));
        }
        let pid = child.id().to_string();
        assert!(Command::new("kill")
            .args(["-s", signal, &pid])
            .status()
            .unwrap()
            .success());
        let o = child.wait_with_output().unwrap();
        let what = format!("{signal} {made:?} run {run}: {:?}", o.status);
        assert_eq!(
            o.status.signal().map(|s| s.to_string()),
            Some(number(signal)),
            "{what}"
        );
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(
            err.contains(&format!("interrupted (SIG{signal}); ")),
            "{what}: {err}"
        );
        assert_eq!(w.files(), before, "{what}: left behind");
        assert_eq!(names(&w.path().join("out")), Vec::<String>::new(), "{what}");
    }
}

#[test]
fn a_signal_right_after_a_temporary_is_made_leaves_nothing() {
    for signal in ["INT", "TERM"] {
        for made in [
            Made::OutputFile,
            Made::PointFile,
            Made::PointFolder,
            Made::ReportFolder,
        ] {
            signal_right_after_creation(signal, made, 20);
        }
    }
}
