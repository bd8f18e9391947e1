//! `meshbound gate STUDY…`: check the `acceptance` limits of each study. Exit 0 when every
//! limit holds, 1 when any fails, 2 when a study is broken (the others are still checked).

use super::{batch, Failure};
use crate::output::write_atomic;
use meshbound::gate::Check;
use serde::Serialize;
use std::path::PathBuf;

/// Output formats of `gate`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum GateFormat {
    /// Lines for people.
    Table,
    /// `{"passed", "checks": [...]}` (the contract), with `errors` for broken studies.
    Json,
}

/// Options of `gate`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Study files (YAML) or directories holding them.
    #[arg(required = true, num_args = 1..)]
    pub studies: Vec<PathBuf>,
    /// Output format.
    #[arg(long, short = 'f', value_enum, default_value_t = GateFormat::Table)]
    pub format: GateFormat,
    /// Write to this file (atomically) instead of standard output.
    #[arg(long, short = 'o', default_value = "-")]
    pub output: PathBuf,
    /// Folders the study may read and write besides its own.
    #[command(flatten)]
    pub reach: crate::reach::Reach,
}

/// A broken study in the gate report.
#[derive(Debug, Serialize)]
pub struct GateError {
    /// The study file.
    pub study: String,
    /// What is wrong.
    pub message: String,
}

/// The gate report (its JSON is a contract).
#[derive(Debug, Serialize)]
pub struct GateReport {
    /// Whether every limit of every study held (false when a study is broken).
    pub passed: bool,
    /// Every check, in input order.
    pub checks: Vec<Check>,
    /// Broken studies.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub errors: Vec<GateError>,
    /// Studies without any acceptance limit.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub without_limits: Vec<String>,
    /// Per study that was checked, every file it made meshbound read (the study file first)
    /// and write, as in the assessment's `files_read` and `files_written`.
    pub files: Vec<StudyFiles>,
}

/// The files one study made meshbound read and write.
#[derive(Debug, Serialize)]
pub struct StudyFiles {
    /// The study file.
    pub study: String,
    /// Files read, the study file first.
    pub read: Vec<String>,
    /// Files written: always none, `gate` writes no per-point file.
    pub written: Vec<String>,
    /// Per-point files the study asks for, not written by `gate` (`assess` writes them).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub not_written: Vec<String>,
}

fn gate_one(study: meshbound::study::Study) -> Result<(Vec<Check>, StudyFiles), Failure> {
    // Per-point files are never written by `gate` (sink::Skip): it only checks limits.
    let a = meshbound::assess::run(&study, &meshbound::sink::Skip)?;
    let checks = meshbound::gate::check(&a, &study.acceptance)
        .map_err(|e| Failure::Input(format!("{}: {e}", study.path.display())))?;
    Ok((
        checks,
        StudyFiles {
            study: study.path.display().to_string(),
            read: a.files_read,
            written: a.files_written,
            not_written: study
                .files_written
                .iter()
                .map(|p| p.display().to_string())
                .collect(),
        },
    ))
}

/// Runs `gate`.
pub fn run(args: Args) -> Result<(), Failure> {
    let paths = batch::expand(&args.studies)?;
    let studies = batch::run_all(paths.clone(), |p| super::assess::load(&p, &args.reach));
    super::assess::refuse_overwriting_inputs(&args.output, studies.iter().flatten())?;
    let results = batch::run_all(studies, |s| s.and_then(gate_one));
    let mut output_fault = false;
    let mut report = GateReport {
        passed: true,
        checks: Vec::new(),
        errors: Vec::new(),
        without_limits: Vec::new(),
        files: Vec::new(),
    };
    for (p, r) in paths.iter().zip(results) {
        match r {
            Ok((checks, files)) => {
                if checks.is_empty() {
                    report.without_limits.push(p.display().to_string());
                }
                report.checks.extend(checks);
                report.files.push(files);
            }
            Err(e) => {
                output_fault |= matches!(e, Failure::Output(_));
                report.errors.push(GateError {
                    study: p.display().to_string(),
                    message: e.to_string(),
                })
            }
        }
    }
    let failed = report.checks.iter().filter(|c| !c.passed).count();
    report.passed = failed == 0 && report.errors.is_empty();
    let bytes = match args.format {
        GateFormat::Json => {
            let mut v =
                serde_json::to_vec_pretty(&report).map_err(|e| Failure::Output(e.to_string()))?;
            v.push(b'\n');
            v
        }
        GateFormat::Table => {
            let mut s = String::new();
            let mut last = "";
            for c in &report.checks {
                if c.study != last {
                    s.push_str(&format!("{}\n", c.study));
                    last = &c.study;
                }
                let value = match &c.value {
                    serde_json::Value::Null => "none".to_string(),
                    serde_json::Value::String(x) => x.clone(),
                    serde_json::Value::Number(n) => n
                        .as_f64()
                        .map_or_else(|| n.to_string(), |x| meshbound::report::format::sig(x, 5)),
                    v => v.to_string(),
                };
                s.push_str(&format!(
                    "  {:<6} {} {} — found {}{}\n",
                    if c.passed { "pass" } else { "FAIL" },
                    c.target,
                    c.limit,
                    value,
                    c.note.as_ref().map_or(String::new(), |n| format!(" ({n})"))
                ));
            }
            for w in &report.without_limits {
                s.push_str(&format!("{w}\n  no acceptance limits\n"));
            }
            for e in &report.errors {
                s.push_str(&format!("broken: {}\n", e.message));
            }
            for f in &report.files {
                if f.read.len() > 1 {
                    s.push_str(&format!("{} read {}\n", f.study, f.read[1..].join(", ")));
                }
                if !f.written.is_empty() {
                    s.push_str(&format!("{} wrote {}\n", f.study, f.written.join(", ")));
                }
                if !f.not_written.is_empty() {
                    s.push_str(&format!(
                        "{}: nothing written (gate writes no per-point file; assess would write {})\n",
                        f.study,
                        f.not_written.join(", ")
                    ));
                }
            }
            s.push_str(&format!(
                "{}: {} checks, {} failed, {} broken studies\n",
                if report.passed {
                    "passed"
                } else {
                    "not passed"
                },
                report.checks.len(),
                failed,
                report.errors.len()
            ));
            s.into_bytes()
        }
    };
    write_atomic(&args.output, &bytes).map_err(|e| Failure::Output(e.to_string()))?;
    if !report.errors.is_empty() {
        for e in &report.errors {
            eprintln!("error: {}", e.message);
        }
        let message = format!(
            "{} of {} studies are broken",
            report.errors.len(),
            paths.len()
        );
        // The same status as the fault would give alone: 3 when an output failed.
        return Err(if output_fault {
            Failure::Output(message)
        } else {
            Failure::Input(message)
        });
    }
    if failed > 0 {
        return Err(Failure::Limits);
    }
    Ok(())
}
