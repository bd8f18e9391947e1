//! Hostile input against the real binary: inputs built to exhaust memory or time (an endless
//! CSV line, an unbalanced quote, a file above the size limit, a device that never ends, an
//! alias-expansion bomb, a study of a million items) are refused quickly with exit status 2, a
//! message naming the file (and the line where there is one), nothing on standard output and no
//! output file; the refusals run under a cap on the address space, so a reader that kept the
//! whole input would fail the test instead of passing slowly. The limits are meshbound's own
//! (common practice, no source): 1 MiB per CSV record, 256 MiB per CSV file, 16 MiB per study
//! file, 1 000 000 YAML items.

mod common;

use common::*;
use std::io::Write;
use std::path::Path;
use std::process::{Command, Output};
use std::time::{Duration, Instant};

/// Address space allowed to a refused run, in KiB: far below what keeping the hostile inputs
/// would take (each is at least 200 MiB of data or expands to gigabytes), several times what
/// a normal run needs (under 100 MiB, measured with the field study of `studies/`).
const CAP_KIB: u64 = 384 * 1024;

/// Time allowed to a refusal (the debug binary on a shared machine; the release binary takes
/// well under a second for each).
const QUICK: Duration = Duration::from_secs(30);

/// Runs the binary in `cwd` under the address-space cap (`ulimit -v` of the POSIX shell).
fn run_capped(cwd: &Path, args: &[&str]) -> (Output, Duration) {
    let t = Instant::now();
    let o = Command::new("sh")
        .arg("-c")
        .arg(format!("ulimit -v {CAP_KIB} && exec \"$0\" \"$@\""))
        .arg(env!("CARGO_BIN_EXE_meshbound"))
        .args(args)
        .current_dir(cwd)
        .output()
        .expect("sh runs");
    (o, t.elapsed())
}

/// The common checks of a refusal: exit 2, quick, no panic, nothing on stdout, the message
/// holding every one of `expect`, and the work folder holding only `inputs`.
fn refused(w: &Workdir, args: &[&str], expect: &[&str], inputs: &[&str]) -> String {
    let mut args = args.to_vec();
    args.extend(["--format", "json", "--output", "out.json"]);
    let (o, took) = run_capped(w.path(), &args);
    let err = String::from_utf8_lossy(&o.stderr).into_owned();
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(!err.contains("panicked"), "{err}");
    assert!(o.stdout.is_empty(), "{}", show(&o));
    for e in expect {
        assert!(err.contains(e), "expected `{e}` in\n{err}");
    }
    assert!(took < QUICK, "refused only after {took:?}");
    let mut want: Vec<String> = inputs.iter().map(|s| s.to_string()).collect();
    want.sort();
    assert_eq!(w.files(), want, "no output may be written");
    eprintln!("refused in {took:?}: {}", err.trim_end());
    err
}

/// A sweep over three meshes, each from a CSV file `a.csv`, `b.csv`, `c.csv`.
const SWEEP_STUDY: &str = "format: 1
meshes:
  - {name: A, size: 1}
  - {name: B, size: 2}
  - {name: C, size: 4}
sweeps:
  cav:
    x: sigma
    responses: [efficiency]
    data:
      A: {file: a.csv}
      B: {file: b.csv}
      C: {file: c.csv}
";

const GOOD_CSV: &str = "sigma,efficiency\n0.4,0.9\n0.3,0.9\n0.2,0.89\n0.1,0.8\n";

fn sweep_workdir() -> Workdir {
    let w = Workdir::new();
    w.write("s.yaml", SWEEP_STUDY);
    w.write("b.csv", GOOD_CSV);
    w.write("c.csv", GOOD_CSV);
    w
}

/// Writes `head`, then `fill` repeated to `fill_bytes`, then `tail`, without holding it all.
fn write_big(path: &Path, head: &str, fill: &[u8], fill_bytes: usize, tail: &str) {
    let mut f = std::io::BufWriter::new(std::fs::File::create(path).unwrap());
    f.write_all(head.as_bytes()).unwrap();
    let block: Vec<u8> = fill.iter().copied().cycle().take(1 << 20).collect();
    let mut left = fill_bytes;
    while left > 0 {
        let n = left.min(block.len());
        f.write_all(&block[..n]).unwrap();
        left -= n;
    }
    f.write_all(tail.as_bytes()).unwrap();
    f.flush().unwrap();
}

#[test]
fn a_huge_csv_line_is_refused_with_the_file_and_line() {
    let w = sweep_workdir();
    // 200 MiB on line 3, inside the 256 MiB file limit.
    write_big(
        &w.path().join("a.csv"),
        "sigma,efficiency\n0.4,0.9\n0.3,",
        b"9",
        200 << 20,
        "\n0.2,0.89\n0.1,0.8\n",
    );
    refused(
        &w,
        &["assess", "s.yaml"],
        &[
            "error: a.csv:3: the line is longer than 1048576 bytes (1 MiB)",
            "(named by s.yaml at sweeps.cav.data.A.file)",
        ],
        &["a.csv", "b.csv", "c.csv", "s.yaml"],
    );
}

#[test]
fn a_huge_header_line_is_refused_too() {
    let w = sweep_workdir();
    write_big(
        &w.path().join("a.csv"),
        "sigma,",
        b"x",
        2 << 20,
        "\n0.4,0.9\n",
    );
    refused(
        &w,
        &["assess", "s.yaml"],
        &["error: a.csv:1: the line is longer than 1048576 bytes"],
        &["a.csv", "b.csv", "c.csv", "s.yaml"],
    );
}

#[test]
fn an_unbalanced_quote_is_refused_after_a_mebibyte() {
    let w = sweep_workdir();
    // A quote opened on line 3 and never closed: every later line would join one record.
    write_big(
        &w.path().join("a.csv"),
        "sigma,efficiency\n0.4,0.9\n\"0.3,0.9\n",
        b"0.2,0.89\n",
        200 << 20,
        "",
    );
    let err = refused(
        &w,
        &["assess", "s.yaml"],
        &[
            "error: a.csv:3: the record starting on this line runs over",
            "(an unbalanced double quote?)",
        ],
        &["a.csv", "b.csv", "c.csv", "s.yaml"],
    );
    // 1 MiB of 9-byte lines: about 116 509 lines, said as such.
    assert!(err.contains("runs over 116"), "{err}");
}

#[test]
fn a_huge_line_in_measured_points_is_refused() {
    let w = Workdir::new();
    for f in ["a.csv", "b.csv", "c.csv"] {
        w.write(f, GOOD_CSV);
    }
    w.write(
        "s.yaml",
        &format!(
            "{SWEEP_STUDY}reference_data:\n  cav:\n    u_measured: 0.002\n    file: measured.csv\n"
        ),
    );
    write_big(
        &w.path().join("measured.csv"),
        "x,value\n0.3,0.9\n0.2,",
        b"8",
        200 << 20,
        "\n",
    );
    refused(
        &w,
        &["assess", "s.yaml"],
        &[
            "error: measured.csv:3: the line is longer than 1048576 bytes",
            "(named by s.yaml at reference_data.cav.file)",
        ],
        &["a.csv", "b.csv", "c.csv", "measured.csv", "s.yaml"],
    );
    // And the same file within bounds is read (the check is not a refusal of everything).
    w.write("measured.csv", "x,value\n0.3,0.9\n0.2,0.88\n");
    let o = run_in(w.path(), &["assess", "s.yaml", "--format", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
}

#[test]
fn csv_files_above_the_size_limit_are_refused_before_reading() {
    let w = sweep_workdir();
    // A sparse file of 300 MiB: no disk space used, and nothing of it may be read.
    let f = std::fs::File::create(w.path().join("a.csv")).unwrap();
    f.set_len(300 << 20).unwrap();
    drop(f);
    refused(
        &w,
        &["assess", "s.yaml"],
        &["error: a.csv: the file has 314572800 bytes; CSV files above 256 MiB are refused"],
        &["a.csv", "b.csv", "c.csv", "s.yaml"],
    );
    // The same for measured points.
    w.write("a.csv", GOOD_CSV);
    std::fs::rename(w.path().join("b.csv"), w.path().join("m.csv")).unwrap();
    w.write("b.csv", GOOD_CSV);
    std::fs::OpenOptions::new()
        .write(true)
        .open(w.path().join("m.csv"))
        .unwrap()
        .set_len(300 << 20)
        .unwrap();
    w.write(
        "s.yaml",
        &format!("{SWEEP_STUDY}reference_data:\n  cav:\n    u_measured: 0.002\n    file: m.csv\n"),
    );
    refused(
        &w,
        &["assess", "s.yaml"],
        &["error: m.csv: the file has 314572800 bytes; CSV files above 256 MiB are refused"],
        &["a.csv", "b.csv", "c.csv", "m.csv", "s.yaml"],
    );
}

#[test]
fn endless_devices_are_refused_with_bounded_memory() {
    if !Path::new("/dev/zero").exists() {
        eprintln!("skipped: no /dev/zero here");
        return;
    }
    // As a sweep file: outside the study's folder, and not a regular file (changed: devices
    // used to be read up to the bounds; now none is opened for reading).
    let w = sweep_workdir();
    w.write("s.yaml", &SWEEP_STUDY.replace("a.csv", "/dev/zero"));
    refused(
        &w,
        &["assess", "s.yaml"],
        &["error: s.yaml:11:11: sweeps.cav.data.A.file: /dev/zero lies outside the study's folder"],
        &["b.csv", "c.csv", "s.yaml"],
    );
    let allowed = meshbound::study::LoadOptions {
        allowed: vec!["/dev".into()],
    };
    let e = meshbound::study::load_with(&w.path().join("s.yaml"), &allowed).unwrap_err();
    assert!(
        e.to_string()
            .contains("/dev/zero: is a character device, not a regular file (named by"),
        "{e}"
    );
    // As the study file itself.
    let w = Workdir::new();
    refused(
        &w,
        &["assess", "/dev/zero"],
        &["error: /dev/zero: cannot read the study file: is a character device, not a regular file"],
        &[],
    );
}

#[test]
fn an_alias_expansion_bomb_is_refused_quickly_with_bounded_memory() {
    // One anchored list of 20 000 numbers named by 50 000 columns: about 1 MiB of text that
    // would expand to 10^9 numbers (8 GB) if every alias were kept.
    let w = Workdir::new();
    let mut s = String::from(
        "format: 1\nmeshes:\n  - {name: A, size: 1}\n  - {name: B, size: 2}\n  - {name: C, size: 4}\nsweeps:\n  s:\n    x: sigma\n    responses: [eff]\n    data:\n      A:\n        sigma: &big [",
    );
    s.push_str(&vec!["0.5"; 20_000].join(", "));
    s.push_str("]\n");
    for i in 0..50_000 {
        s.push_str(&format!("        c{i}: *big\n"));
    }
    w.write("bomb.yaml", &s);
    refused(
        &w,
        &["assess", "bomb.yaml"],
        &[
            "error: bomb.yaml:12:",
            "aliases (`*name`) expand the document to more than 1000000 YAML items",
        ],
        &["bomb.yaml"],
    );
    // The classic form: ten levels of ten aliases each, under a key that takes anything.
    let mut s =
        String::from("format: 1\ntitle: &l0 [lol, lol, lol, lol, lol, lol, lol, lol, lol, lol]\n");
    for i in 1..10 {
        s.push_str(&format!(
            "l{i}: &l{i} [{}]\n",
            vec![format!("*l{}", i - 1); 10].join(", ")
        ));
    }
    w.write("bomb.yaml", &s);
    refused(
        &w,
        &["assess", "bomb.yaml"],
        &["aliases (`*name`) expand the document to more than 1000000 YAML items"],
        &["bomb.yaml"],
    );
}

#[test]
fn aliases_in_moderation_are_read() {
    // Anchors and aliases are YAML: a study may share values between quantities.
    let w = Workdir::new();
    w.write(
        "s.yaml",
        "format: 1
meshes:
  - {name: L1, size: 1}
  - {name: L2, size: 2}
  - {name: L3, size: 4}
quantities:
  head:
    values: &v {L1: 61.42, L2: 61.37, L3: 61.2}
  head_copy:
    values: *v
",
    );
    let o = run_in(w.path(), &["assess", "s.yaml", "--format", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["quantities"].as_array().unwrap().len(), 2);
}

#[test]
fn a_million_items_are_refused_before_parsing() {
    let w = Workdir::new();
    // Just under the 16 MiB study limit, two bytes per item: over eight million items, which
    // the YAML parser would hold at about 130 bytes each (over 1 GB).
    let n = (16 << 20) / 2 - 16;
    write_big(
        &w.path().join("flat.yaml"),
        "format: 1\nmeshes: [",
        b"1,",
        2 * n,
        "1]\n",
    );
    refused(
        &w,
        &["assess", "flat.yaml"],
        &["error: flat.yaml:2:", "more than 1000000 YAML items"],
        &["flat.yaml"],
    );
    // The same in block style (one item per line).
    let n = (16 << 20) / 4 - 16;
    write_big(
        &w.path().join("flat.yaml"),
        "format: 1\nmeshes:\n",
        b"- 1\n",
        4 * n,
        "",
    );
    refused(
        &w,
        &["assess", "flat.yaml"],
        &["more than 1000000 YAML items"],
        &["flat.yaml"],
    );
}

/// A study in `case/` reading sweep CSVs, probe files and measured points, and writing the
/// per-point results of its field.
fn reading_study() -> Workdir {
    let w = Workdir::new();
    w.write(
        "case/s.yaml",
        "format: 1
title: files read (format test)
meshes:
  - {name: A, size: 1}
  - {name: B, size: 2}
  - {name: C, size: 4}
sweeps:
  cav:
    x: sigma
    responses: [efficiency]
    data:
      A: {file: sweeps/a.csv}
      B: {file: sweeps/b.csv}
      C: {file: sweeps/c.csv}
reference_data:
  cav:
    u_measured: 0.002
    file: measured/m.csv
fields:
  blade:
    columns: [cp]
    data: {A: probes/p1.csv, B: probes/p2.csv, C: probes/p3.csv}
    write: out/points.csv
",
    );
    for f in ["a", "b", "c"] {
        w.write(&format!("case/sweeps/{f}.csv"), GOOD_CSV);
    }
    w.write("case/measured/m.csv", "x,value\n0.3,0.9\n0.2,0.88\n");
    for (f, v) in [("p1", 1.0), ("p2", 1.1), ("p3", 1.3)] {
        w.write(
            &format!("case/probes/{f}.csv"),
            &format!("id,cp\nq1,{v}\nq2,{}\n", 2.0 * v),
        );
    }
    w
}

const READ: [&str; 8] = [
    "case/s.yaml",
    "case/sweeps/a.csv",
    "case/sweeps/b.csv",
    "case/sweeps/c.csv",
    "case/probes/p1.csv",
    "case/probes/p2.csv",
    "case/probes/p3.csv",
    "case/measured/m.csv",
];
const WRITTEN: &str = "case/out/points.csv";

#[test]
fn every_output_names_the_files_the_study_read() {
    let w = reading_study();
    let text_of = |format: &str| {
        let o = run_in(w.path(), &["assess", "case/s.yaml", "--format", format]);
        assert_eq!(o.status.code(), Some(0), "{format}\n{}", show(&o));
        String::from_utf8(o.stdout).unwrap()
    };
    // JSON: the lists themselves, in the order read.
    let v: serde_json::Value = serde_json::from_str(&text_of("json")).unwrap();
    let read: Vec<&str> = v["files_read"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f.as_str().unwrap())
        .collect();
    let mut want = READ.to_vec();
    want.sort();
    let mut got = read.clone();
    got.sort();
    assert_eq!(got, want);
    assert_eq!(read[0], "case/s.yaml", "the study file comes first");
    assert_eq!(v["files_written"][0], WRITTEN);
    // CSV: one `file_read` row per file, the path in `name`; one `file_written` row.
    let csv_text = text_of("csv");
    let mut r = csv::Reader::from_reader(csv_text.as_bytes());
    let name = r
        .headers()
        .unwrap()
        .iter()
        .position(|h| h == "name")
        .unwrap();
    let rows: Vec<csv::StringRecord> = r.records().map(|x| x.unwrap()).collect();
    let of_kind = |kind: &str| -> Vec<String> {
        rows.iter()
            .filter(|r| &r[0] == kind)
            .map(|r| r[name].to_string())
            .collect()
    };
    assert_eq!(of_kind("file_read"), read);
    assert_eq!(of_kind("file_written"), [WRITTEN]);
    // The gate report: per study, in both formats.
    let o = run_in(w.path(), &["gate", "case/s.yaml", "-f", "json"]);
    let g: serde_json::Value =
        serde_json::from_slice(&o.stdout).unwrap_or_else(|_| panic!("{}", show(&o)));
    assert_eq!(g["files"][0]["study"], "case/s.yaml");
    assert_eq!(g["files"][0]["read"], serde_json::json!(read));
    // `gate` only checks: it writes no per-point file, and says so.
    assert_eq!(g["files"][0]["written"], serde_json::json!([]));
    let o = run_in(w.path(), &["gate", "case/s.yaml"]);
    let gate_table = String::from_utf8(o.stdout).unwrap();
    assert!(
        gate_table.contains(&format!("case/s.yaml read {}", read[1..].join(", "))),
        "{gate_table}"
    );
    assert!(!gate_table.contains("wrote"), "{gate_table}");
    // The human formats: every path as given, and the file written.
    let (_, folder) = {
        let out = w.path().join("rep");
        let o = run_in(w.path(), &["report", "case/s.yaml", "--out", "rep"]);
        assert_eq!(o.status.code(), Some(0), "{}", show(&o));
        ((), out)
    };
    for (what, text) in [
        ("table", text_of("table")),
        ("markdown", text_of("markdown")),
        ("latex", text_of("latex")),
        (
            "report.md",
            std::fs::read_to_string(folder.join("report.md")).unwrap(),
        ),
        (
            "report.html",
            std::fs::read_to_string(folder.join("report.html")).unwrap(),
        ),
    ] {
        for f in READ.iter().chain([&WRITTEN]) {
            assert!(text.contains(f), "{what} does not name {f}\n{text}");
        }
        let at = |needle: &str| {
            text.find(needle)
                .unwrap_or_else(|| panic!("{what}: {needle}"))
        };
        // Named near the top, before the first result.
        assert!(at("case/measured/m.csv") < at("efficiency"), "{what}");
    }
}

/// The study of the `sweep_csv` fuzz target (its mesh A reads `a.csv`).
const FUZZ_SWEEP_STUDY: &str = "format: 1
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.5}
  - {name: C, size: 2.25}
sweeps:
  s:
    x: sigma
    responses: [efficiency]
    data:
      A: {file: a.csv}
      B: {sigma: [0.1, 0.2, 0.3, 0.4], efficiency: [0.8, 0.88, 0.9, 0.9]}
      C: {sigma: [0.1, 0.2, 0.3, 0.4], efficiency: [0.78, 0.87, 0.89, 0.89]}
    breakdown:
      - {response: efficiency, drop: 1%, reference: highest}
    band: {response: efficiency}
";

/// Runs `f` on another thread and fails if it takes longer than `limit` (a hang) or panics.
fn within<T: Send + 'static>(
    what: &str,
    limit: Duration,
    f: impl FnOnce() -> T + Send + 'static,
) -> T {
    let (tx, rx) = std::sync::mpsc::channel();
    std::thread::spawn(move || {
        let _ = tx.send(f());
    });
    match rx.recv_timeout(limit) {
        Ok(v) => v,
        Err(std::sync::mpsc::RecvTimeoutError::Timeout) => {
            panic!("{what}: still running after {limit:?}")
        }
        Err(_) => panic!("{what}: panicked"),
    }
}

/// The inputs the fuzz targets reported (`fuzz/fuzz_targets/`, kept in `tests/fuzz_inputs/`),
/// run the way each target runs them: each must end, quickly, with a result or an error.
/// (All five were timeouts that did not happen again when run alone: see the fuzzing notes.)
#[test]
fn inputs_found_by_fuzzing_end_quickly() {
    let dir = root().join("tests/fuzz_inputs");
    let inputs = |target: &str| -> Vec<(String, Vec<u8>)> {
        let mut v: Vec<(String, Vec<u8>)> = std::fs::read_dir(dir.join(target))
            .unwrap()
            .map(|e| {
                let p = e.unwrap().path();
                (p.display().to_string(), std::fs::read(&p).unwrap())
            })
            .collect();
        v.sort();
        v
    };
    let limit = Duration::from_secs(30);
    let mut ran = 0;
    // study_reader: the bytes as a study, assessed and exported.
    for (name, data) in inputs("study_reader") {
        within(&name, limit, move || {
            if let Ok(text) = std::str::from_utf8(&data) {
                if let Ok(study) = meshbound::study::parse(text, Path::new("fuzz.yaml")) {
                    if let Ok(a) = meshbound::assess::run(&study, &meshbound::sink::Skip) {
                        use meshbound::report::Exporter;
                        let _ = meshbound::report::json::Json.export(&a);
                        let _ = meshbound::report::table::Table.export(&a);
                    }
                }
            }
        });
        ran += 1;
    }
    // sweep_csv: the bytes as the finest mesh's sweep CSV, in the target's study.
    for (name, data) in inputs("sweep_csv") {
        within(&name, limit, move || {
            let w = Workdir::new();
            std::fs::write(w.path().join("a.csv"), &data).unwrap();
            if let Ok(s) = meshbound::study::parse(FUZZ_SWEEP_STUDY, &w.path().join("s.yaml")) {
                let _ = meshbound::assess::run(&s, &meshbound::sink::Skip);
            }
        });
        ran += 1;
    }
    // field_reader: a configuration byte, then three probe files split at 0xFF bytes (a
    // missing one repeats the one before), tiny chunks and blocks, without and with the
    // per-point file.
    for (name, data) in inputs("field_reader") {
        within(&name, limit, move || {
            use meshbound::estimate::three_grid::ThreeGridSettings;
            use meshbound::field::{assess_field_with, FieldOptions, FieldSpec};
            let Some((&config, rest)) = data.split_first() else {
                return;
            };
            let mut parts: Vec<&[u8]> = rest.splitn(3, |&b| b == 0xFF).collect();
            while parts.len() < 3 {
                parts.push(parts[parts.len() - 1]);
            }
            let w = Workdir::new();
            let files: Vec<std::path::PathBuf> = parts
                .iter()
                .enumerate()
                .map(|(i, t)| {
                    let p = w.path().join(format!("L{}.csv", i + 1));
                    std::fs::write(&p, t).unwrap();
                    p
                })
                .collect();
            let first = parts[0].split(|&b| b == b'\n').next().unwrap_or(&[]);
            let first = String::from_utf8_lossy(first);
            let header_id = first.split(',').next().unwrap_or("").trim().to_string();
            let mut columns: Vec<String> = Vec::new();
            for c in first.split(',').skip(1).map(|s| s.trim().trim_matches('"')) {
                if !c.is_empty() && c != "id" && c != header_id && !columns.iter().any(|x| x == c) {
                    columns.push(c.to_string());
                }
                if columns.len() == 4 {
                    break;
                }
            }
            if columns.is_empty() {
                columns.push("q".into());
            }
            let id = (config & 0x80 != 0 && !header_id.is_empty()).then_some(header_id);
            let opts = FieldOptions {
                chunk_rows: 1 + usize::from(config & 0x07),
                block_bytes: 1 + 7 * usize::from((config >> 3) & 0x0F),
            };
            let mut spec = FieldSpec {
                name: "fuzz".into(),
                id,
                columns,
                files,
                write: None,
                reading: Default::default(),
                probe_points: None,
                estimate: Default::default(),
            };
            let h = [1.0, 1.3, 1.69];
            let s = ThreeGridSettings::default();
            let a = assess_field_with(&spec, h, &s, &opts, None).is_ok();
            spec.write = Some(w.path().join("points.csv"));
            let sink = meshbound::sink::DirectFile::create(&w.path().join("points.csv")).unwrap();
            let b = assess_field_with(&spec, h, &s, &opts, Some(Box::new(sink))).is_ok();
            assert_eq!(a, b, "writing the per-point file changed the outcome");
        });
        ran += 1;
    }
    assert_eq!(ran, 5, "the kept inputs");
}

/// Makes a FIFO at `path` (the `mkfifo` command of POSIX) and starts a writer that opens it
/// and closes it at once, so that a reader that blocked on it would see an empty file and
/// fail the test on its message instead of hanging it. A reader that refuses the FIFO never
/// meets the writer, which then waits until the test process ends.
fn fifo(path: &Path) {
    let made = Command::new("mkfifo").arg(path).status().unwrap();
    assert!(made.success(), "mkfifo {}", path.display());
    let p = path.to_path_buf();
    std::thread::spawn(move || {
        let _ = std::fs::OpenOptions::new().write(true).open(p);
    });
}

#[test]
fn inputs_that_are_not_regular_files_are_refused() {
    // A FIFO as the study.
    let w = Workdir::new();
    fifo(&w.path().join("pipe.yaml"));
    refused(
        &w,
        &["assess", "pipe.yaml"],
        &["error: pipe.yaml: cannot read the study file: is a FIFO (named pipe), not a regular file"],
        &["pipe.yaml"],
    );
    // A FIFO as a sweep CSV: the CSV file, the study and the key are named.
    let w = sweep_workdir();
    fifo(&w.path().join("a.csv"));
    refused(
        &w,
        &["assess", "s.yaml"],
        &[
            "a.csv",
            "is a FIFO (named pipe), not a regular file",
            "named by s.yaml at sweeps.cav.data.A.file",
        ],
        &["a.csv", "b.csv", "c.csv", "s.yaml"],
    );
    // A folder as a sweep CSV.
    let w = sweep_workdir();
    std::fs::create_dir(w.path().join("a.csv")).unwrap();
    refused(
        &w,
        &["assess", "s.yaml"],
        &[
            "a.csv",
            "is a folder, not a regular file",
            "sweeps.cav.data.A.file",
        ],
        &["a.csv", "b.csv", "c.csv", "s.yaml"],
    );
    // A device as the study.
    let w = Workdir::new();
    refused(
        &w,
        &["assess", "/dev/null"],
        &["/dev/null: cannot read the study file: is a character device, not a regular file"],
        &[],
    );
}

#[test]
fn csv_messages_do_not_echo_other_files() {
    // A study can name any file as a CSV: the missing-column message shows only header names
    // that look like column names, and never the raw first line.
    let w = sweep_workdir();
    w.write(
        "a.csv",
        "root:$6$Zx9Qm2e$kq1vB0s:19000:0:99999:7:::\nbin:x:2:2:bin:/bin:/usr/sbin/nologin\n",
    );
    let err = refused(
        &w,
        &["assess", "s.yaml"],
        &[
            "a.csv:1",
            "has no column `sigma` (the header row names: no name that looks like a column name)",
        ],
        &["a.csv", "b.csv", "c.csv", "s.yaml"],
    );
    assert!(!err.contains("root") && !err.contains("$6$"), "{err}");
    // A long header and a long field are cut.
    let long = "x".repeat(100_000);
    w.write("a.csv", &format!("{long},y\n1,2\n"));
    let err = refused(
        &w,
        &["assess", "s.yaml"],
        &["has no column `sigma`"],
        &["a.csv", "b.csv", "c.csv", "s.yaml"],
    );
    assert!(err.len() < 1000, "{} bytes of message", err.len());
    w.write(
        "a.csv",
        &format!("sigma,efficiency\n0.4,0.9\n0.3,{long}\n0.2,0.89\n0.1,0.8\n"),
    );
    let err = refused(
        &w,
        &["assess", "s.yaml"],
        &["a.csv:3", "column `efficiency`", "is not a number"],
        &["a.csv", "b.csv", "c.csv", "s.yaml"],
    );
    assert!(err.len() < 1000, "{} bytes of message", err.len());
}

/// A sweep study in `case/` with `A`'s data from `a_file` and a field writing `write`.
fn confined_study(a_file: &str, write: &str) -> Workdir {
    let w = Workdir::new();
    w.write(
        "case/s.yaml",
        &format!(
            "format: 1
meshes:
  - {{name: A, size: 1}}
  - {{name: B, size: 2}}
  - {{name: C, size: 4}}
sweeps:
  cav:
    x: sigma
    responses: [efficiency]
    data:
      A: {{file: {a_file}}}
      B: {{file: b.csv}}
      C: {{file: c.csv}}
fields:
  blade:
    columns: [cp]
    data: {{A: p1.csv, B: p2.csv, C: p3.csv}}
    write: {write}
"
        ),
    );
    for f in ["a", "b", "c"] {
        w.write(&format!("case/{f}.csv"), GOOD_CSV);
    }
    for (f, v) in [("p1", 1.0), ("p2", 1.1), ("p3", 1.3)] {
        w.write(
            &format!("case/{f}.csv"),
            &format!("id,cp\nq1,{v}\nq2,{}\n", 2.0 * v),
        );
    }
    w.write("secret.csv", GOOD_CSV);
    w
}

#[test]
fn a_study_reads_and_writes_only_inside_its_folder() {
    let inputs = ["case", "secret.csv"];
    // Inside: passes, and writes its per-point file.
    let w = confined_study("a.csv", "points.csv");
    let o = run_in(w.path(), &["assess", "case/s.yaml", "-f", "json"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert!(w.path().join("case/points.csv").exists());
    // `..` out of the folder.
    let w = confined_study("../secret.csv", "points.csv");
    refused(
        &w,
        &["assess", "case/s.yaml"],
        &[
            "error: case/s.yaml:11:11: sweeps.cav.data.A.file: ../secret.csv lies outside the study's folder",
            "; allow it on the command line with --reach DIR",
        ],
        &inputs,
    );
    // An absolute path out.
    let secret = w.path().join("secret.csv");
    let w = confined_study(secret.to_str().unwrap(), "points.csv");
    refused(
        &w,
        &["assess", "case/s.yaml"],
        &["sweeps.cav.data.A.file", "lies outside the study's folder"],
        &inputs,
    );
    // A symbolic link inside that points out.
    let w = confined_study("l.csv", "points.csv");
    std::os::unix::fs::symlink(w.path().join("secret.csv"), w.path().join("case/l.csv")).unwrap();
    refused(
        &w,
        &["assess", "case/s.yaml"],
        &[
            "sweeps.cav.data.A.file: l.csv leads (through a symbolic link) to",
            "outside the study's folder",
        ],
        &inputs,
    );
    // Writing out of the folder, also through a folder that does not exist.
    let w = confined_study("a.csv", "../points.csv");
    refused(
        &w,
        &["assess", "case/s.yaml"],
        &["case/s.yaml:18:5: fields.blade.write: ../points.csv lies outside the study's folder"],
        &inputs,
    );
    let w = confined_study("a.csv", "nowhere/../../points.csv");
    refused(
        &w,
        &["assess", "case/s.yaml"],
        &["fields.blade.write: nowhere/../../points.csv lies outside the study's folder"],
        &inputs,
    );
    assert!(!w.path().join("case/nowhere").exists());
    // A missing folder inside is made for the per-point file.
    let w = confined_study("a.csv", "nowhere/points.csv");
    let o = run_in(w.path(), &["assess", "case/s.yaml"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    assert!(w.path().join("case/nowhere/points.csv").is_file());
    // The library lets the caller allow more.
    let w = confined_study("../secret.csv", "points.csv");
    let study = w.path().join("case/s.yaml");
    assert!(meshbound::study::load(&study).is_err());
    let options = meshbound::study::LoadOptions {
        allowed: vec![w.path().to_path_buf()],
    };
    let s = meshbound::study::load_with(&study, &options).unwrap();
    assert!(s.files_read.iter().any(|p| p.ends_with("secret.csv")));
}

#[test]
fn the_user_lets_a_study_reach_further_with_an_option() {
    // Refused without the option (see the test above), read with `--reach` naming the folder
    // that holds the file; the per-point file may go there too.
    let w = confined_study("../secret.csv", "../points.csv");
    for cmd in ["assess", "gate", "report"] {
        let mut args = vec![cmd, "case/s.yaml", "--reach", "."];
        if cmd == "report" {
            args.extend(["--out", "case/rep"]);
        }
        let o = run_in(w.path(), &args);
        assert_eq!(o.status.code(), Some(0), "{cmd}: {}", show(&o));
    }
    assert!(w.path().join("points.csv").is_file());
    // The folder must exist: a typo allows nothing, loudly.
    let o = run_in(w.path(), &["assess", "case/s.yaml", "--reach", "nowhere"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--reach nowhere: no such folder"));
    // A folder beside the one allowed stays out of reach.
    let w = confined_study("../secret.csv", "points.csv");
    std::fs::create_dir(w.path().join("other")).unwrap();
    let o = run_in(w.path(), &["assess", "case/s.yaml", "--reach", "other"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("lies outside the study's folder"));
}
