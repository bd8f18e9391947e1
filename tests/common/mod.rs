//! Shared helpers for the integration tests: run the real binary in a fresh work directory
//! and show everything on failure.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The repository root (where `studies/` lives): these tests belong to the command-line crate
/// in `cli/`, one folder below.
pub fn root() -> PathBuf {
    let cli = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    cli.parent().map(Path::to_path_buf).unwrap_or(cli)
}

/// A temporary work directory that lives as long as the value.
pub struct Workdir {
    pub dir: tempfile::TempDir,
}

impl Workdir {
    pub fn new() -> Self {
        Workdir {
            dir: tempfile::tempdir().expect("temporary directory"),
        }
    }
    pub fn path(&self) -> &Path {
        self.dir.path()
    }
    pub fn write(&self, name: &str, text: &str) -> PathBuf {
        let p = self.dir.path().join(name);
        if let Some(parent) = p.parent() {
            std::fs::create_dir_all(parent).unwrap();
        }
        std::fs::write(&p, text).unwrap();
        p
    }
    /// Names of the files in the directory (sorted).
    pub fn files(&self) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(self.path())
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }
}

/// Runs the binary with `args` in `cwd`.
pub fn run_in(cwd: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_meshbound"))
        .args(args)
        .current_dir(cwd)
        .output()
        .expect("the meshbound binary runs")
}

/// Runs the binary from the crate root.
pub fn run(args: &[&str]) -> Output {
    run_in(&root(), args)
}

/// Describes an output for failure messages.
pub fn show(o: &Output) -> String {
    format!(
        "status: {:?}\n--- stdout\n{}\n--- stderr\n{}",
        o.status.code(),
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

/// Runs and parses JSON on stdout, asserting success.
pub fn json(args: &[&str]) -> serde_json::Value {
    let o = run(args);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    serde_json::from_slice(&o.stdout).unwrap_or_else(|e| panic!("not JSON: {e}\n{}", show(&o)))
}

/// The warning codes of a JSON result, in order.
pub fn warning_codes(v: &serde_json::Value) -> Vec<&str> {
    v["warnings"]
        .as_array()
        .map(|a| a.iter().filter_map(|w| w["code"].as_str()).collect())
        .unwrap_or_default()
}

/// The example studies (`studies/*.yaml`), sorted.
pub fn example_studies() -> Vec<PathBuf> {
    let mut studies: Vec<PathBuf> = std::fs::read_dir(root().join("studies"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().and_then(|e| e.to_str()) == Some("yaml"))
        .collect();
    studies.sort();
    assert!(!studies.is_empty());
    studies
}

/// Runs `report STUDY --out <workdir>/out` and returns the work directory and the folder.
pub fn report_of(study: &str) -> (Workdir, PathBuf) {
    let w = Workdir::new();
    let out = w.path().join("out");
    let study = root().join(study);
    let o = run(&[
        "report",
        study.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    (w, out)
}

/// A file's text, or a panic naming it.
pub fn read(p: &Path) -> String {
    std::fs::read_to_string(p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}
