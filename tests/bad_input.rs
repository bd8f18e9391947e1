//! Every class of bad input: exit status 2, a message naming the file and the key path, no
//! panic, and no output file.

mod common;

use common::*;

const GOOD: &str = "format: 1
title: bad-input base
dimension: 3
meshes:
  - name: L1
    cells: 3.4e6
  - name: L2
    cells: 1.45e6
  - name: L3
    cells: 6.2e5
quantities:
  efficiency:
    values: {L1: 0.9093, L2: 0.9071, L3: 0.9033}
";

/// (what is broken, replace this, by this, expected stderr text)
const CASES: &[(&str, &str, &str, &str)] = &[
    (
        "future format",
        "format: 1",
        "format: 7",
        "s.yaml:1:1: format: format 7 is newer than this meshbound understands",
    ),
    (
        "format zero",
        "format: 1",
        "format: 0",
        "format: format 0 does not exist",
    ),
    (
        "missing format",
        "format: 1\n",
        "",
        "missing field `format`",
    ),
    (
        "duplicate mesh",
        "name: L2",
        "name: L1",
        "s.yaml:7:5: meshes[1].name: the mesh name `L1` is used twice",
    ),
    (
        "empty mesh name",
        "name: L2",
        "name: ''",
        "meshes[1].name: the mesh name is empty",
    ),
    (
        "negative cells",
        "cells: 1.45e6",
        "cells: -1.45e6",
        "s.yaml:8:5: meshes[1].cells: expected a cell count ≥ 1 (a mesh has at least one cell), found -1450000",
    ),
    (
        "zero cells",
        "cells: 1.45e6",
        "cells: 0",
        "meshes[1].cells: expected a cell count ≥ 1 (a mesh has at least one cell), found 0",
    ),
    (
        "infinite cells",
        "cells: 1.45e6",
        "cells: .inf",
        "meshes[1].cells: expected a cell count ≥ 1 (a mesh has at least one cell), found .inf",
    ),
    (
        "nan size",
        "cells: 1.45e6",
        "size: .nan",
        "meshes[1].size: expected a finite number > 0, found .nan",
    ),
    (
        "text cells",
        "cells: 1.45e6",
        "cells: many",
        "meshes[1].cells: expected a number, found the text `many`",
    ),
    (
        "nan value",
        "L2: 0.9071",
        "L2: .nan",
        "quantities.efficiency.values.L2: expected a finite number, found .nan",
    ),
    (
        "inf value",
        "L2: 0.9071",
        "L2: -.inf",
        "quantities.efficiency.values.L2: expected a finite number, found -.inf",
    ),
    (
        "missing value",
        ", L3: 0.9033",
        "",
        "quantities.efficiency.values: has no value for the mesh `L3`",
    ),
    (
        "unknown mesh",
        "L3: 0.9033",
        "L3: 0.9033, L9: 0.9",
        "quantities.efficiency.values.L9: names the mesh `L9`, which is not in `meshes`",
    ),
    (
        "one mesh",
        "  - name: L2\n    cells: 1.45e6\n  - name: L3\n    cells: 6.2e5\n",
        "",
        "meshes: the study has 1 mesh; at least two are needed (three for an observed order)",
    ),
    (
        "same size",
        "cells: 6.2e5",
        "cells: 1.45e6",
        "have the same representative size",
    ),
    (
        "unknown key",
        "dimension: 3",
        "dimensions: 3",
        "unknown field `dimensions`",
    ),
    (
        "unknown mesh key",
        "cells: 6.2e5",
        "cels: 6.2e5",
        "s.yaml:10:5: meshes[2].cels: unknown field `cels`",
    ),
    (
        "unknown setting",
        "quantities:",
        "settings: {safety: 2}\nquantities:",
        "settings.safety: unknown field `safety`",
    ),
    (
        "bad safety factor",
        "quantities:",
        "settings: {safety_factor: -1}\nquantities:",
        "settings.safety_factor: expected a finite number > 0, found -1",
    ),
    (
        "bad dimension",
        "dimension: 3",
        "dimension: 4",
        "dimension: expected the dimension 1, 2 or 3, found 4",
    ),
    (
        "no cells nor size",
        "    cells: 6.2e5\n",
        "",
        "meshes[2]: mesh `L3` gives neither `cells` nor `size`",
    ),
    (
        "mixed sizes",
        "cells: 6.2e5",
        "size: 0.002",
        "give every mesh the same kind",
    ),
    ("not yaml", "meshes:", "meshes: [", "s.yaml"),
    (
        "cells below one",
        "cells: 1.45e6",
        "cells: 0.5",
        "s.yaml:8:5: meshes[1].cells: expected a cell count ≥ 1 (a mesh has at least one cell), found 0.5",
    ),
    (
        "order_max too large",
        "quantities:",
        "settings: {order_max: 1e8}\nquantities:",
        "s.yaml:11:12: settings.order_max: expected a finite number > 0 and at most 100 (the observed-order search scans (0, order_max]",
    ),
    (
        "quantity defined twice",
        "    values: {L1: 0.9093, L2: 0.9071, L3: 0.9033}\n",
        "    values: {L1: 0.9093, L2: 0.9071, L3: 0.9033}\n  efficiency:\n    values: {L1: 1, L2: 1, L3: 1}\n",
        "s.yaml:14:3: quantities.efficiency: defined twice (lines 12 and 14)",
    ),
    (
        "mesh twice in one values map",
        "L3: 0.9033}",
        "L3: 0.9033, L1: 0.9}",
        "s.yaml:13:50: quantities.efficiency.values.L1: defined twice (line 13, columns 14 and 50)",
    ),
    (
        "key twice in a mesh",
        "    cells: 6.2e5\n",
        "    cells: 6.2e5\n    \"cells\": 6.3e5\n",
        "s.yaml:11:5: meshes[2].cells: defined twice (lines 10 and 11)",
    ),
    (
        "byte-order mark before the first key",
        "format: 1",
        "\u{feff}format: 7",
        "s.yaml:1:1: format: format 7 is newer",
    ),
    (
        "bad estimator",
        "quantities:",
        "settings: {estimator: magic}\nquantities:",
        "settings.estimator: unknown variant `magic`",
    ),
];

#[test]
fn every_bad_input_exits_2_with_the_key_path_and_writes_nothing() {
    for (what, from, to, expect) in CASES {
        assert!(GOOD.contains(from), "{what}: the base study lacks `{from}`");
        let w = Workdir::new();
        w.write("s.yaml", &GOOD.replacen(from, to, 1));
        let o = run_in(
            w.path(),
            &[
                "assess", "s.yaml", "--format", "json", "--output", "out.json",
            ],
        );
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{what}\n{}", show(&o));
        assert!(
            err.starts_with("error: s.yaml"),
            "{what}: the message must name the file\n{err}"
        );
        assert!(
            err.contains(expect),
            "{what}: expected `{expect}` in\n{err}"
        );
        assert!(!err.contains("panicked"), "{what}: {err}");
        assert!(
            o.stdout.is_empty(),
            "{what}: nothing may be printed on stdout"
        );
        assert_eq!(w.files(), ["s.yaml"], "{what}: no output may be written");
    }
}

#[test]
fn missing_file_and_directory_exit_2() {
    let w = Workdir::new();
    let o = run_in(w.path(), &["assess", "nope.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("nope.yaml: cannot read the study file"));
    let o = run_in(w.path(), &["assess", "."]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
}

#[test]
fn bad_command_line_exits_2() {
    let o = run(&[
        "assess",
        "studies/celik-2008-table1.yaml",
        "--format",
        "pdf",
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
}

#[test]
fn unwritable_output_exits_3_and_leaves_nothing() {
    let w = Workdir::new();
    let study = common::root().join("studies/celik-2008-table1.yaml");
    let target = w.path().join("no/such/dir/r.json");
    let o = run_in(
        w.path(),
        &[
            "assess",
            study.to_str().unwrap(),
            "-o",
            target.to_str().unwrap(),
        ],
    );
    assert_eq!(o.status.code(), Some(3), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("cannot write"));
    assert!(w.files().is_empty());
}

#[test]
fn hostile_inputs_are_refused_quickly() {
    let w = Workdir::new();
    // A hundred thousand nested flow collections.
    w.write(
        "deep.yaml",
        &format!(
            "format: 1\nmeshes: {}{}\n",
            "[".repeat(100_000),
            "]".repeat(100_000)
        ),
    );
    let t = std::time::Instant::now();
    let o = run_in(w.path(), &["assess", "deep.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("nested more than 64 deep"));
    eprintln!("deep nesting refused in {:?}", t.elapsed());
    // A file larger than the study limit.
    let big = format!("format: 1\n# {}\n", "x".repeat(17 * 1024 * 1024));
    w.write("big.yaml", &big);
    let o = run_in(w.path(), &["assess", "big.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("larger than"));
    // An alias-expansion bomb (billion laughs).
    let mut s = String::from("format: 1\nmeshes:\n  - name: a\n    cells: 1\nsweeps:\n  s:\n    x: sigma\n    responses: &r0 [a, a, a, a, a, a, a, a, a, a]\n");
    s.push_str("    data: {}\n");
    for i in 1..9 {
        s.push_str(&format!(
            "x{i}: &r{i} [{}]\n",
            vec![format!("*r{}", i - 1); 10].join(", ")
        ));
    }
    w.write("bomb.yaml", &s);
    let o = run_in(w.path(), &["assess", "bomb.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(
        String::from_utf8_lossy(&o.stderr).contains("aliases (`*name`) expand the document"),
        "{}",
        show(&o)
    );
    // Not UTF-8.
    std::fs::write(w.path().join("bin.yaml"), [0xff, 0xfe, 0x00, 0x41]).unwrap();
    let o = run_in(w.path(), &["assess", "bin.yaml"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr).contains("not UTF-8"));
}

#[test]
fn full_output_location_exits_3_and_leaves_nothing() {
    // A tiny tmpfs stands in for a full disk; it needs the right to mount (root in CI).
    let w = Workdir::new();
    let mnt = w.path().join("tiny");
    std::fs::create_dir(&mnt).unwrap();
    let mounted = std::process::Command::new("mount")
        .args(["-t", "tmpfs", "-o", "size=8k", "tmpfs"])
        .arg(&mnt)
        .status()
        .is_ok_and(|s| s.success());
    if !mounted {
        eprintln!("skipped: cannot mount a tmpfs here (not root?)");
        return;
    }
    let study = common::root().join("studies/axial-pump-five-meshes.yaml");
    let target = mnt.join("out.json");
    let o = run_in(
        w.path(),
        &[
            "assess",
            study.to_str().unwrap(),
            "-f",
            "json",
            "-o",
            target.to_str().unwrap(),
        ],
    );
    let listing: Vec<_> = std::fs::read_dir(&mnt)
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    let _ = std::process::Command::new("umount").arg(&mnt).status();
    assert_eq!(o.status.code(), Some(3), "{}", show(&o));
    assert!(
        String::from_utf8_lossy(&o.stderr).contains("No space left"),
        "{}",
        show(&o)
    );
    assert!(
        listing.is_empty(),
        "nothing may be left on the full disk: {listing:?}"
    );
}
