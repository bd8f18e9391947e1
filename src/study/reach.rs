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

    /// Checks a file the study makes meshbound write: its folder must exist (meshbound
    /// creates no folder for a study) and lie inside the allowed folders, and so must the
    /// target of an existing symbolic link in its place.
    pub fn write(&self, given: &str, resolved: &Path) -> Result<(), String> {
        let lexical = normalise(resolved);
        if !Self::inside(&self.lexical, &lexical) {
            return Err(self.outside(given, None));
        }
        let Some(name) = resolved.file_name() else {
            return Err(format!("{given} names a folder, not a file to write"));
        };
        let folder = folder_of(resolved);
        if !folder.is_dir() {
            return Err(format!(
                "the folder {} of {given} does not exist; meshbound creates no folders for a study: create it first",
                folder.display()
            ));
        }
        let canonical = match std::fs::canonicalize(&folder) {
            Ok(c) => c.join(name),
            Err(e) => return Err(format!("cannot resolve the folder of {given}: {e}")),
        };
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
    fn writes_need_an_existing_folder_inside() {
        let d = tempfile::tempdir().unwrap();
        let r = Reach::new(&d.path().join("s.yaml"), &[]);
        assert!(r.write("out.csv", &d.path().join("out.csv")).is_ok());
        let e = r
            .write("no/out.csv", &d.path().join("no/out.csv"))
            .unwrap_err();
        assert!(
            e.contains("does not exist") && e.contains("create it first"),
            "{e}"
        );
        assert!(r.write("../out.csv", &d.path().join("../out.csv")).is_err());
        assert!(r.write("/tmp/out.csv", Path::new("/tmp/out.csv")).is_err());
    }
}
