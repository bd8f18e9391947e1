//! `meshbound report STUDY --out DIR`: the whole report as a folder — `report.md` with the
//! figures linked, one SVG file per figure with its PNG and PDF beside (`--svg-only` leaves
//! those out), and `report.html` with the figures inline.
//!
//! The folder appears whole or not at all: everything is written into a temporary folder
//! beside DIR (hidden, same parent, so the last step is a rename on one file system, named
//! `.DIR.meshbound-…`), which is then renamed to DIR. An existing DIR is refused unless
//! `--replace` is given; then the two folders are swapped in one step where the system offers
//! it (Linux `renameat2` with `RENAME_EXCHANGE`: DIR always names a whole report, the old or
//! the new one) and the old one deleted; elsewhere the old folder is renamed aside
//! (`.DIR.meshbound-old-…`), the new one renamed in, and only then the old one deleted (it is
//! put back when the new one cannot be renamed in).
//!
//! On SIGINT, SIGTERM or SIGHUP the handler ([`super::interrupt`]) waits for a file being
//! written or a rename in progress, deletes the temporary folder and ends the process: DIR is
//! then absent (or the old one, untouched) or whole. SIGKILL cannot be handled: the temporary
//! folder may then stay beside DIR, hidden and recognisable by its name, but DIR itself is
//! still absent, old or whole.

use super::Failure;
use std::io::Write;
use std::path::{Path, PathBuf};

/// Options of `report`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The study file (YAML).
    pub study: PathBuf,
    /// The folder to create (it must not exist, unless --replace is given).
    #[arg(long, short = 'o', value_name = "DIR")]
    pub out: PathBuf,
    /// Replace DIR when it exists (the old folder is deleted only once the new one is in place).
    #[arg(long)]
    pub replace: bool,
    /// Write each figure as SVG only, without the PNG and PDF beside it (rendering them is the
    /// slow part of a report with hundreds of figures).
    #[arg(long)]
    pub svg_only: bool,
    /// Folders the study may read and write besides its own.
    #[command(flatten)]
    pub reach: crate::reach::Reach,
}

fn output(what: &str, path: &Path, e: std::io::Error) -> Failure {
    Failure::Output(format!("{what} {}: {e}", path.display()))
}

fn write_file(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let mut f = std::fs::File::create(path)?;
    f.write_all(bytes)?;
    f.sync_all()
}

fn exists_refusal(dir: &Path) -> Failure {
    Failure::Input(format!(
        "{} exists: give --replace to replace it, or choose another --out",
        dir.display()
    ))
}

/// A name beside `dir` that nothing has yet, to move an old folder to.
fn aside(parent: &Path, name: &str) -> Result<PathBuf, Failure> {
    let pid = std::process::id();
    for k in 0..1000 {
        let p = parent.join(format!(".{name}.meshbound-old-{pid}-{k}"));
        match std::fs::symlink_metadata(&p) {
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(p),
            Err(e) => return Err(output("cannot look at", &p, e)),
            Ok(_) => continue,
        }
    }
    Err(Failure::Output(format!(
        "no free name beside {} to move the old report to",
        parent.join(name).display()
    )))
}

/// Writes `files` as the folder `dir`, whole or not at all (see the module notes). Returns the
/// path of an old folder that was replaced but could not be deleted, if any.
pub fn install(
    files: &[(String, Vec<u8>)],
    dir: &Path,
    replace: bool,
) -> Result<Option<PathBuf>, Failure> {
    let name = match dir.file_name() {
        Some(n) => n.to_string_lossy().into_owned(),
        None => {
            return Err(Failure::Input(format!(
                "--out {}: give the path of a folder to create (with a name, not `.` or `..`)",
                dir.display()
            )))
        }
    };
    let parent = match dir.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let exists = match std::fs::symlink_metadata(dir) {
        Ok(m) => {
            if !replace {
                return Err(exists_refusal(dir));
            }
            if !m.is_dir() {
                return Err(Failure::Input(format!(
                    "{} exists and is not a folder: it is not replaced",
                    dir.display()
                )));
            }
            true
        }
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => false,
        Err(e) => return Err(output("cannot look at", dir, e)),
    };
    // Dropping `tmp` on any early return deletes it with everything written so far; it is
    // registered for deletion on SIGINT, SIGTERM and SIGHUP before it exists (crate::output).
    let tmp = crate::output::Pending::create_tree(parent, &format!(".{name}.meshbound-"))
        .map_err(|e| output("cannot create a temporary folder in", parent, e))?;
    if exists {
        // The replacement keeps the old folder's mode.
        if let Ok(m) = std::fs::metadata(dir) {
            std::fs::set_permissions(tmp.path(), m.permissions())
                .map_err(|e| output("cannot set the mode of", tmp.path(), e))?;
        }
    }
    for (file, bytes) in files {
        let p = tmp.path().join(file);
        let _hold = crate::output::hold();
        write_file(&p, bytes).map_err(|e| output("cannot write", &p, e))?;
    }
    // From here to the end the interruption handler waits: the renames are never cut halfway.
    let hold = crate::output::hold();
    if !exists {
        if let Err(e) = std::fs::rename(tmp.path(), dir) {
            drop(hold);
            // Another command made DIR meanwhile (it was absent when looked at): the same
            // refusal as when it existed beforehand.
            if std::fs::symlink_metadata(dir).is_ok() {
                return Err(exists_refusal(dir));
            }
            return Err(output("cannot create", dir, e));
        }
        drop(hold);
        tmp.keep();
        return Ok(None);
    }
    // Where the system can, swap the two folders in one step: DIR always names a whole report.
    if exchange(tmp.path(), dir).is_ok() {
        // The temporary path now holds the old report.
        let old = tmp.path().to_path_buf();
        let gone = std::fs::remove_dir_all(&old);
        drop(hold);
        return Ok(match gone {
            Ok(()) => {
                drop(tmp);
                None
            }
            Err(_) => {
                tmp.keep();
                Some(old)
            }
        });
    }
    let old = aside(parent, &name)?;
    std::fs::rename(dir, &old).map_err(|e| output("cannot move aside", dir, e))?;
    if let Err(e) = std::fs::rename(tmp.path(), dir) {
        // Put the old report back; the new one is deleted with `tmp`.
        let back = std::fs::rename(&old, dir);
        drop(hold);
        return Err(Failure::Output(match back {
            Ok(()) => format!(
                "cannot create {}: {e}; the old report is kept",
                dir.display()
            ),
            Err(b) => format!(
                "cannot create {}: {e}; the old report is in {} (moving it back failed: {b})",
                dir.display(),
                old.display()
            ),
        }));
    }
    drop(hold);
    tmp.keep();
    Ok(match std::fs::remove_dir_all(&old) {
        Ok(()) => None,
        Err(_) => Some(old),
    })
}

/// Swaps two paths in one step (Linux `renameat2` with `RENAME_EXCHANGE`); an error where the
/// system or the file system does not offer it.
fn exchange(a: &Path, b: &Path) -> std::io::Result<()> {
    #[cfg(target_os = "linux")]
    {
        use rustix::fs::{renameat_with, RenameFlags, CWD};
        renameat_with(CWD, a, CWD, b, RenameFlags::EXCHANGE).map_err(std::io::Error::from)
    }
    #[cfg(not(target_os = "linux"))]
    {
        let _ = (a, b);
        Err(std::io::Error::from(std::io::ErrorKind::Unsupported))
    }
}

/// Runs `report`.
pub fn run(args: Args) -> Result<(), Failure> {
    let study = super::assess::load(&args.study, &args.reach)?;
    if args.replace {
        refuse_replacing_inputs(&args.out, &study)?;
    }
    let (a, outputs) = super::assess::assess_study(&study)?;
    let files = meshbound::report::bundle::files_with(&a, !args.svg_only);
    if let Some(old) = install(&files, &args.out, args.replace)? {
        eprintln!(
            "warning: the replaced report was moved to {} and could not be deleted",
            old.display()
        );
    }
    super::assess::publish(outputs)?;
    // The report is the folder, in place by now: this line only tells of it, so a closed or
    // full standard output does not turn a written report into a failure.
    let _ = crate::output::write_stdout(
        format!("wrote {} files to {}\n", files.len(), args.out.display()).as_bytes(),
    );
    Ok(())
}

/// Refuses `--replace` of a folder that holds a file the study reads or writes (the study
/// itself, its data, a per-point file): replacing it would delete them. Exit 2.
fn refuse_replacing_inputs(dir: &Path, study: &meshbound::study::Study) -> Result<(), Failure> {
    let Ok(dir) = std::fs::canonicalize(dir) else {
        return Ok(());
    };
    let files = std::iter::once(&study.path)
        .chain(&study.files_read)
        .chain(&study.files_written);
    for f in files {
        let inside = std::fs::canonicalize(f)
            .ok()
            .or_else(|| {
                let parent = f.parent().filter(|p| !p.as_os_str().is_empty())?;
                std::fs::canonicalize(parent).ok()
            })
            .is_some_and(|c| c.starts_with(&dir));
        if inside {
            return Err(Failure::Input(format!(
                "--out {}: the folder holds {}, which the study {} uses; it is not replaced",
                dir.display(),
                f.display(),
                study.path.display()
            )));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_failed_write_leaves_nothing_behind() {
        let parent = tempfile::tempdir().unwrap();
        let dir = parent.path().join("out");
        // The second file cannot be written (its folder does not exist inside the temporary
        // folder): the first is already written by then.
        let files = vec![
            ("a.svg".to_string(), b"<svg/>".to_vec()),
            ("missing/b.svg".to_string(), b"<svg/>".to_vec()),
        ];
        assert!(matches!(
            install(&files, &dir, false),
            Err(Failure::Output(_))
        ));
        assert_eq!(std::fs::read_dir(parent.path()).unwrap().count(), 0);
        // Replacing: the old folder stays as it was.
        std::fs::create_dir(&dir).unwrap();
        std::fs::write(dir.join("old.md"), "old").unwrap();
        assert!(matches!(
            install(&files, &dir, true),
            Err(Failure::Output(_))
        ));
        let left: Vec<_> = std::fs::read_dir(parent.path()).unwrap().collect();
        assert_eq!(left.len(), 1);
        assert_eq!(std::fs::read_to_string(dir.join("old.md")).unwrap(), "old");
        // And a good set replaces it whole.
        let good = vec![("a.svg".to_string(), b"<svg/>".to_vec())];
        assert_eq!(install(&good, &dir, true).unwrap(), None);
        assert!(!dir.join("old.md").exists());
        assert!(dir.join("a.svg").exists());
        assert_eq!(std::fs::read_dir(parent.path()).unwrap().count(), 1);
        assert!(matches!(
            install(&good, &dir, false),
            Err(Failure::Input(_))
        ));
        assert!(matches!(
            install(&good, Path::new("."), true),
            Err(Failure::Input(_))
        ));
    }
}
