//! `meshbound assess STUDY…`: estimate every quantity of one or many studies (files or
//! directories searched for `*.yaml`/`*.yml`) and print or write the result. A broken study is
//! reported and the others still run; the exit status is then 2.

use super::{batch, Failure};
use crate::output::same_file;
use crate::output::write_atomic;
use crate::point_file::FileOutputs;
use crate::reach::Reach;
use meshbound::assess::Assessment;
use meshbound::report::Format;
use meshbound::study::Study;
use std::path::{Path, PathBuf};

/// Output formats of `assess`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum AssessFormat {
    /// Tables for people (default).
    Table,
    /// The JSON result (the contract): one object for one study, an array for several.
    Json,
    /// One JSON result object per line, one line per study (a broken study gives
    /// `{"study": …, "error": …}`).
    Jsonl,
    /// CSV rows (columns in docs/exports.md).
    Csv,
    /// Markdown tables.
    Markdown,
    /// LaTeX tables that fit one column of a two-column page (booktabs, tabularx).
    Latex,
}

impl AssessFormat {
    fn exporter(self) -> Option<Format> {
        match self {
            AssessFormat::Table => Some(Format::Table),
            AssessFormat::Json | AssessFormat::Jsonl => None,
            AssessFormat::Csv => Some(Format::Csv),
            AssessFormat::Markdown => Some(Format::Markdown),
            AssessFormat::Latex => Some(Format::Latex),
        }
    }
}

/// Options of `assess`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Study files (YAML) or directories holding them.
    #[arg(required = true, num_args = 1..)]
    pub studies: Vec<PathBuf>,
    /// Output format.
    #[arg(long, short = 'f', value_enum, default_value_t = AssessFormat::Table)]
    pub format: AssessFormat,
    /// Write to this file (atomically) instead of standard output; `-` is standard output.
    #[arg(long, short = 'o', default_value = "-")]
    pub output: PathBuf,
    /// Folders the study may read and write besides its own.
    #[command(flatten)]
    pub reach: crate::reach::Reach,
}

/// Reads and checks one study, letting it reach the folders of `--reach` besides its own.
pub fn load(path: &Path, reach: &Reach) -> Result<Study, Failure> {
    reach.check()?;
    meshbound::study::load_with(path, &reach.options())
        .map_err(|e| Failure::from(meshbound::Error::from(e)))
}

/// Refuses an output path (`-o`) that names a file one of `studies` reads (the study itself,
/// under any spelling or link) or a per-point file it writes: exit 2, before anything is
/// written. Standard output (`-`) names no file.
pub fn refuse_overwriting_inputs<'a>(
    output: &Path,
    studies: impl IntoIterator<Item = &'a Study>,
) -> Result<(), Failure> {
    if output.as_os_str() == "-" {
        return Ok(());
    }
    for study in studies {
        let read = std::iter::once(&study.path).chain(&study.files_read);
        for f in read {
            if same_file(output, f) {
                return Err(Failure::Input(format!(
                    "-o {}: that is {} read by the study {}; choose another output",
                    output.display(),
                    f.display(),
                    study.path.display()
                )));
            }
        }
        for f in &study.files_written {
            if same_file(output, f) {
                return Err(Failure::Input(format!(
                    "-o {}: the study {} writes its per-point file {} there; choose another output",
                    output.display(),
                    study.path.display(),
                    f.display()
                )));
            }
        }
    }
    Ok(())
}

/// Assesses one checked study. The per-point files it asks for are written into temporaries,
/// published by the caller once its own output is written.
pub fn assess_study(study: &Study) -> Result<(Assessment, FileOutputs), Failure> {
    let outputs = FileOutputs::new();
    let a = meshbound::assess::run(study, &outputs)?;
    Ok((a, outputs))
}

/// Publishes the per-point files of a finished run.
pub fn publish(outputs: FileOutputs) -> Result<(), Failure> {
    outputs
        .publish()
        .map_err(|(p, e)| Failure::Output(format!("cannot write {}: {e}", p.display())))
}

fn export(a: &Assessment, format: AssessFormat) -> Vec<u8> {
    match format.exporter() {
        Some(f) => f.exporter().export(a),
        None => meshbound::report::json::Json.export_one(a, format == AssessFormat::Jsonl),
    }
}

/// Runs `assess`.
pub fn run(args: Args) -> Result<(), Failure> {
    let paths = batch::expand(&args.studies)?;
    if let [path] = paths.as_slice() {
        // One study: its output or its error, nothing partial.
        let study = load(path, &args.reach)?;
        refuse_overwriting_inputs(&args.output, [&study])?;
        let (a, outputs) = assess_study(&study)?;
        write_atomic(&args.output, &export(&a, args.format))
            .map_err(|e| Failure::Output(e.to_string()))?;
        return publish(outputs);
    }
    let studies = batch::run_all(paths.clone(), |p| load(&p, &args.reach));
    refuse_overwriting_inputs(&args.output, studies.iter().flatten())?;
    let results = batch::run_all(studies, |s| s.and_then(|s| assess_study(&s)));
    let broken = results.iter().filter(|r| r.is_err()).count();
    let mut bytes = Vec::new();
    let mut oks = Vec::new();
    for (p, r) in paths.iter().zip(&results) {
        match r {
            Ok((a, _)) => match args.format {
                AssessFormat::Jsonl => {
                    bytes.extend(meshbound::report::json::Json.export_one(a, true))
                }
                AssessFormat::Json => oks.push(a),
                f => {
                    if !bytes.is_empty() {
                        bytes.extend_from_slice(b"\n");
                    }
                    bytes.extend(export(a, f));
                }
            },
            Err(e) => {
                eprintln!("error: {e}");
                if args.format == AssessFormat::Jsonl {
                    let line = serde_json::json!({"study": p.display().to_string(), "error": e.to_string()});
                    bytes.extend(line.to_string().into_bytes());
                    bytes.push(b'\n');
                }
            }
        }
    }
    if args.format == AssessFormat::Json {
        bytes = serde_json::to_vec_pretty(&oks).map_err(|e| Failure::Output(e.to_string()))?;
        bytes.push(b'\n');
    }
    write_atomic(&args.output, &bytes).map_err(|e| Failure::Output(e.to_string()))?;
    let output_fault = results.iter().any(|r| matches!(r, Err(Failure::Output(_))));
    for (_, outputs) in results.into_iter().flatten() {
        publish(outputs)?;
    }
    if broken > 0 {
        let message = format!("{broken} of {} studies could not be assessed", paths.len());
        // The same status as the fault would give for one study: 3 when an output failed.
        if output_fault {
            return Err(Failure::Output(message));
        }
        return Err(Failure::Input(message));
    }
    Ok(())
}
