//! The LaTeX fragment of every example study, compiled in a two-column page
//! (`\documentclass[twocolumn]{article}`): the log must hold no overfull box, and every table,
//! set alone in a box, must be no wider than `\columnwidth`. The widths are measured by TeX
//! itself (`\wd` of each table's box, written to the log with `\typeout`) and printed.
//! Skipped, with a note, where no `pdflatex` is installed (CI installs it: `.ci/run`).

mod common;

use common::{example_studies, run, show, Workdir};
use std::process::{Command, Stdio};

fn pdflatex() -> bool {
    Command::new("pdflatex")
        .arg("--version")
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .status()
        .is_ok_and(|s| s.success())
}

/// Every `tabular` or `tabularx` environment of a fragment, whole.
fn tables(fragment: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut rest = fragment;
    while let Some(i) = rest.find("\\begin{tabular") {
        let env = if rest[i..].starts_with("\\begin{tabularx}") {
            "\\end{tabularx}"
        } else {
            "\\end{tabular}"
        };
        let Some(j) = rest[i..].find(env) else { break };
        out.push(rest[i..i + j + env.len()].to_string());
        rest = &rest[i + j + env.len()..];
    }
    out
}

/// Points from a TeX dimension as `\the` writes it (`229.5pt`).
fn pt(s: &str) -> f64 {
    s.trim()
        .trim_end_matches("pt")
        .parse()
        .expect("a TeX dimension")
}

/// The two-column test document: the fragment as it would sit in a paper, then every table
/// alone in a box whose width goes to the log.
fn document(fragment: &str) -> String {
    let mut doc = String::from(
        "\\documentclass[twocolumn]{article}\n\\usepackage[T1]{fontenc}\n\\usepackage{booktabs,array,tabularx}\n\\begin{document}\n\\typeout{MBCOLUMN \\the\\columnwidth}\n\\input{fragment}\n\\clearpage\n",
    );
    for (i, t) in tables(fragment).iter().enumerate() {
        doc.push_str(&format!(
            "\\setbox0=\\hbox{{\\footnotesize\\setlength{{\\tabcolsep}}{{3pt}}{t}}}\\typeout{{MBTABLE {i} \\the\\wd0}}\n"
        ));
        // The same table with its text columns unwrapped (`l`): the width it would take
        // without tabularx, for the figures printed (not checked).
        let plain = t
            .replace("\\begin{tabularx}{\\columnwidth}", "\\begin{tabular}")
            .replace("\\end{tabularx}", "\\end{tabular}")
            .replace(">{\\raggedright\\arraybackslash\\hspace{0pt}}X", "l");
        doc.push_str(&format!(
            "\\setbox0=\\hbox{{\\footnotesize\\setlength{{\\tabcolsep}}{{3pt}}{plain}}}\\typeout{{MBUNWRAPPED {i} \\the\\wd0}}\n"
        ));
    }
    doc.push_str("\\end{document}\n");
    doc
}

#[test]
fn latex_tables_of_every_example_study_fit_one_column_of_a_two_column_page() {
    if !pdflatex() {
        println!("skipped: no pdflatex on PATH (CI installs texlive-latex-base and texlive-latex-recommended)");
        return;
    }
    let studies = example_studies();
    let mut widest = (0.0_f64, String::new());
    for study in studies {
        let o = run(&["assess", study.to_str().unwrap(), "--format", "latex"]);
        assert_eq!(o.status.code(), Some(0), "{}", show(&o));
        let fragment = String::from_utf8(o.stdout).unwrap();
        let w = Workdir::new();
        w.write("fragment.tex", &fragment);
        w.write("doc.tex", &document(&fragment));
        let o = Command::new("pdflatex")
            .args(["-interaction=nonstopmode", "-halt-on-error", "doc.tex"])
            .current_dir(w.path())
            .stdin(Stdio::null())
            .output()
            .expect("pdflatex runs");
        let log = std::fs::read_to_string(w.path().join("doc.log")).unwrap_or_default();
        let name = study.file_name().unwrap().to_string_lossy().to_string();
        assert!(o.status.success(), "pdflatex failed on {name}\n{log}");
        // No box of the page overflows: tables, paragraphs, lists (the amount is in the log).
        let overfull: Vec<&str> = log
            .lines()
            .filter(|l| l.contains("Overfull \\hbox"))
            .collect();
        assert!(overfull.is_empty(), "{name}: {overfull:#?}");
        assert!(!log.contains("X Columns too narrow"), "{name}: {log}");
        let column = log
            .lines()
            .find_map(|l| l.strip_prefix("MBCOLUMN "))
            .map(pt)
            .expect("the column width in the log");
        let widths: Vec<f64> = log
            .lines()
            .filter_map(|l| l.strip_prefix("MBTABLE "))
            .map(|l| pt(l.split_once(' ').expect("index and width").1))
            .collect();
        assert_eq!(widths.len(), tables(&fragment).len(), "{name}");
        let max = widths.iter().copied().fold(0.0, f64::max);
        // The widest table with its text unwrapped, for the figures printed.
        let unwrapped = log
            .lines()
            .filter_map(|l| l.strip_prefix("MBUNWRAPPED "))
            .map(|l| pt(l.split_once(' ').expect("index and width").1))
            .fold(0.0, f64::max);
        println!(
            "{name}: {} tables, widest {max:.1} pt (unwrapped {unwrapped:.1} pt) of \\columnwidth {column:.1} pt",
            widths.len()
        );
        for (i, wd) in widths.iter().enumerate() {
            assert!(
                *wd <= column + 0.01,
                "{name}: table {i} is {wd} pt wide, the column {column} pt"
            );
        }
        if max > widest.0 {
            widest = (max, name);
        }
        assert!(w.path().join("doc.pdf").exists());
    }
    println!("widest table: {:.1} pt ({})", widest.0, widest.1);
}
