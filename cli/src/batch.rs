//! Many studies per call: expanding directories, running studies in parallel with the output
//! order following the input order, and a progress bar on a terminal only.

use super::Failure;
use rayon::prelude::*;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

/// Expands the inputs: files stay as given; directories are searched recursively for
/// `*.yaml` and `*.yml` files, sorted by path. A directory without studies is an error.
pub fn expand(inputs: &[PathBuf]) -> Result<Vec<PathBuf>, Failure> {
    let mut out = Vec::new();
    for p in inputs {
        if p.is_dir() {
            let mut found = Vec::new();
            walk(p, &mut found).map_err(|e| {
                Failure::Input(format!("{}: cannot read the directory: {e}", p.display()))
            })?;
            found.sort();
            if found.is_empty() {
                return Err(Failure::Input(format!(
                    "{}: the directory holds no *.yaml or *.yml study",
                    p.display()
                )));
            }
            out.extend(found);
        } else {
            out.push(p.clone());
        }
    }
    Ok(out)
}

fn walk(dir: &Path, out: &mut Vec<PathBuf>) -> std::io::Result<()> {
    for e in std::fs::read_dir(dir)? {
        let e = e?;
        let p = e.path();
        let ft = e.file_type()?;
        if ft.is_dir() {
            walk(&p, out)?;
        } else if ft.is_file()
            && matches!(p.extension().and_then(|x| x.to_str()), Some("yaml" | "yml"))
        {
            out.push(p);
        }
    }
    Ok(())
}

/// Runs `f` on every study (a path, or a study already read) in parallel; results come back
/// in input order, each error typed ([`Failure`], so its kind gives the exit status). A
/// progress bar is drawn on standard error when it is a terminal and there is more than one
/// study.
pub fn run_all<I: Send, T: Send>(
    paths: Vec<I>,
    f: impl Fn(I) -> Result<T, Failure> + Sync,
) -> Vec<Result<T, Failure>> {
    let bar = if paths.len() > 1 && std::io::stderr().is_terminal() {
        let b = indicatif::ProgressBar::new(paths.len() as u64);
        if let Ok(style) =
            indicatif::ProgressStyle::with_template("{bar:32} {pos}/{len} studies {msg}")
        {
            b.set_style(style);
        }
        Some(b)
    } else {
        None
    };
    let out: Vec<Result<T, Failure>> = paths
        .into_par_iter()
        .map(|p| {
            let r = f(p);
            if let Some(b) = &bar {
                b.inc(1);
            }
            r
        })
        .collect();
    if let Some(b) = bar {
        b.finish_and_clear();
    }
    out
}
