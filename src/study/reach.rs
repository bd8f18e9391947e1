//! Confinement: the files a study names (sweep and measurement CSVs, probe files, per-point
//! results) must lie inside the study file's folder, or inside a folder the caller allows
//! ([`super::LoadOptions::allowed`]). A path is checked twice: lexically, after resolving it
//! against the study's folder and removing `.` and `..`; and canonically, after following
//! symbolic links (the file itself for a read, the existing folder of the target for a write),
//! so that neither `../secret.csv` nor a link pointing out passes.

use std::path::{Component, Path, PathBuf};

/// The folders a study may reach.
#[derive(Debug, Clone)]
pub struct Reach {
    /// The study's folder as shown in messages (canonical when it exists).
    shown: PathBuf,
    /// Allowed folders, lexically normalised absolute paths.
    lexical: Vec<PathBuf>,
    /// Allowed folders, canonical (symbolic links followed).
    canonical: Vec<PathBuf>,
}

/// The hint every refusal ends with.
const HINT: &str = "allow it on the command line with --reach DIR";

/// `path` made absolute against the current folder, with `.` and `..` removed lexically.
pub fn normalise(path: &Path) -> PathBuf {
    let abs = std::path::absolute(path).unwrap_or_else(|_| path.to_path_buf());
    let mut out = PathBuf::new();
    for c in abs.components() {
        match c {
            Component::CurDir => {}
            Component::ParentDir => {
                out.pop();
            }
            other => out.push(other.as_os_str()),
        }
    }
    out
}

fn folder_of(study: &Path) -> PathBuf {
    match study.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

impl Reach {
    /// The study's folder and the extra folders allowed.
    pub fn new(study: &Path, allowed: &[PathBuf]) -> Reach {
        let base = folder_of(study);
        let mut reach = Reach {
            shown: std::fs::canonicalize(&base).unwrap_or_else(|_| normalise(&base)),
            lexical: Vec::new(),
            canonical: Vec::new(),
        };
        for dir in std::iter::once(&base).chain(allowed) {
            let lexical = normalise(dir);
            reach
                .canonical
                .push(std::fs::canonicalize(dir).unwrap_or_else(|_| lexical.clone()));
            reach.lexical.push(lexical);
        }
        reach
    }

    fn inside(roots: &[PathBuf], p: &Path) -> bool {
        roots.iter().any(|r| p.starts_with(r))
    }

    fn outside(&self, given: &str, through: Option<&Path>) -> String {
        match through {
            Some(c) => format!(
                "{given} leads (through a symbolic link) to {}, outside the study's folder {}; {HINT}",
                c.display(),
                self.shown.display()
            ),
            None => format!(
                "{given} lies outside the study's folder {}; {HINT}",
                self.shown.display()
            ),
        }
    }

    /// Checks a file the study makes meshbound read (`given` as written in the study,
    /// `resolved` joined to the study's folder). A file that does not exist passes here; the
    /// reader says it is missing.
    pub fn read(&self, given: &str, resolved: &Path) -> Result<(), String> {
        if !Self::inside(&self.lexical, &normalise(resolved)) {
            return Err(self.outside(given, None));
        }
        match std::fs::canonicalize(resolved) {
            Ok(c) if !Self::inside(&self.canonical, &c) => Err(self.outside(given, Some(&c))),
            _ => Ok(()),
        }
    }

    /// Checks a file the study makes meshbound write: it must lie inside the allowed folders,
    /// and so must its nearest existing folder once symbolic links are followed (the command
    /// line creates the missing folders below it, and removes them again when the run fails),
    /// and the target of an existing symbolic link in its place.
    pub fn write(&self, given: &str, resolved: &Path) -> Result<(), String> {
        let lexical = normalise(resolved);
        if !Self::inside(&self.lexical, &lexical) {
            return Err(self.outside(given, None));
        }
        let Some(name) = resolved.file_name() else {
            return Err(format!("{given} names a folder, not a file to write"));
        };
        // The nearest existing ancestor of the file's folder, and the part below it.
        // Walked on the path as given, so that the system's own resolution of symbolic links
        // and `..` counts for the part that exists.
        let mut existing = folder_of(resolved);
        let mut below: Vec<std::ffi::OsString> = vec![name.to_os_string()];
        while existing.symlink_metadata().is_err() {
            match (existing.file_name(), existing.parent()) {
                (Some(n), Some(p)) => {
                    below.push(n.to_os_string());
                    existing = if p.as_os_str().is_empty() {
                        PathBuf::from(".")
                    } else {
                        p.to_path_buf()
                    };
                }
                _ => break,
            }
        }
        if !existing.is_dir() {
            return Err(format!(
                "{given} cannot be written: {} is not a folder",
                existing.display()
            ));
        }
        let mut canonical = match std::fs::canonicalize(&existing) {
            Ok(c) => c,
            Err(e) => return Err(format!("cannot resolve the folder of {given}: {e}")),
        };
        for part in below.iter().rev() {
            canonical.push(part);
        }
        // The missing part holds no links: its `..` can be resolved by hand.
        let canonical = normalise(&canonical);
        if !Self::inside(&self.canonical, &canonical) {
            return Err(self.outside(given, Some(&canonical)));
        }
        if resolved
            .symlink_metadata()
            .is_ok_and(|m| m.file_type().is_symlink())
        {
            match std::fs::canonicalize(resolved) {
                Ok(c) if !Self::inside(&self.canonical, &c) => {
                    return Err(self.outside(given, Some(&c)))
                }
                Ok(_) => {}
                Err(_) => {
                    return Err(format!(
                    "{given} is a symbolic link that leads nowhere: remove it or name another file"
                ))
                }
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lexical_normalisation_removes_dots() {
        assert_eq!(
            normalise(Path::new("/a/b/../c/./d")),
            PathBuf::from("/a/c/d")
        );
        assert_eq!(normalise(Path::new("/../x")), PathBuf::from("/x"));
    }

    #[test]
    fn reads_stay_inside() {
        let d = tempfile::tempdir().unwrap();
        let study = d.path().join("in/s.yaml");
        std::fs::create_dir(d.path().join("in")).unwrap();
        std::fs::write(d.path().join("secret.csv"), "x\n").unwrap();
        std::fs::write(d.path().join("in/ok.csv"), "x\n").unwrap();
        let r = Reach::new(&study, &[]);
        let base = d.path().join("in");
        assert!(r.read("ok.csv", &base.join("ok.csv")).is_ok());
        let e = r
            .read("../secret.csv", &base.join("../secret.csv"))
            .unwrap_err();
        assert!(
            e.contains("../secret.csv lies outside the study's folder"),
            "{e}"
        );
        assert!(
            e.ends_with("allow it on the command line with --reach DIR"),
            "{e}"
        );
        // An absolute path out.
        assert!(r.read("/etc/passwd", Path::new("/etc/passwd")).is_err());
        // `..` that comes back in is fine.
        assert!(r.read("../in/ok.csv", &base.join("../in/ok.csv")).is_ok());
        // Allowed folders.
        let r2 = Reach::new(&study, &[d.path().to_path_buf()]);
        assert!(r2
            .read("../secret.csv", &base.join("../secret.csv"))
            .is_ok());
    }

    #[cfg(unix)]
    #[test]
    fn a_symbolic_link_out_is_caught() {
        let d = tempfile::tempdir().unwrap();
        std::fs::create_dir(d.path().join("in")).unwrap();
        std::fs::write(d.path().join("secret.csv"), "x\n").unwrap();
        std::os::unix::fs::symlink(d.path().join("secret.csv"), d.path().join("in/l.csv")).unwrap();
        std::os::unix::fs::symlink(d.path(), d.path().join("in/up")).unwrap();
        let base = d.path().join("in");
        let r = Reach::new(&base.join("s.yaml"), &[]);
        let e = r.read("l.csv", &base.join("l.csv")).unwrap_err();
        assert!(e.contains("through a symbolic link"), "{e}");
        // Writes through a linked folder, and onto a link that points out.
        let e = r.write("up/out.csv", &base.join("up/out.csv")).unwrap_err();
        assert!(e.contains("outside the study's folder"), "{e}");
        let e = r.write("l.csv", &base.join("l.csv")).unwrap_err();
        assert!(e.contains("through a symbolic link"), "{e}");
    }

    #[test]
    fn writes_stay_inside_through_missing_folders() {
        let d = tempfile::tempdir().unwrap();
        let r = Reach::new(&d.path().join("s.yaml"), &[]);
        assert!(r.write("out.csv", &d.path().join("out.csv")).is_ok());
        // Missing folders are made by the command line, inside.
        assert!(r
            .write("no/deeper/out.csv", &d.path().join("no/deeper/out.csv"))
            .is_ok());
        assert!(r
            .write("no/../../out.csv", &d.path().join("no/../../out.csv"))
            .is_err());
        // A file where a folder should be.
        std::fs::write(d.path().join("f"), "x").unwrap();
        let e = r
            .write("f/out.csv", &d.path().join("f/out.csv"))
            .unwrap_err();
        assert!(e.contains("is not a folder"), "{e}");
        assert!(r.write("../out.csv", &d.path().join("../out.csv")).is_err());
        assert!(r.write("/tmp/out.csv", Path::new("/tmp/out.csv")).is_err());
    }
}
