//! LaTeX report: the content of [`super::markup::document`] as a fragment to paste into a
//! paper. Tables are `tabular`s with booktabs rules (`\toprule`, `\midrule`, `\bottomrule`)
//! inside `table` floats; numbers are set with siunitx's `\num{…}`. The preamble needs
//! `\usepackage{booktabs}` and `\usepackage{siunitx}` (said in the fragment's first lines).

use super::format::sig;
use super::markup::{self, Align, Cell, Markup, Span, TableBlock};
use super::Exporter;
use crate::assess::Assessment;

/// LaTeX exporter.
pub struct Latex;

/// Escapes text for LaTeX: the ten special characters, brackets (braced), and the Greek
/// letters and signs the reports use, set as math.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        match c {
            '\\' => out.push_str("\\textbackslash{}"),
            '&' | '%' | '$' | '#' | '_' | '{' | '}' => {
                out.push('\\');
                out.push(c);
            }
            '~' => out.push_str("\\textasciitilde{}"),
            '^' => out.push_str("\\textasciicircum{}"),
            '<' => out.push_str("\\textless{}"),
            '>' => out.push_str("\\textgreater{}"),
            '|' => out.push_str("\\textbar{}"),
            // Braced so that no `[` is ever read as an optional argument (of `\item`, `\\`).
            '[' => out.push_str("{[}"),
            ']' => out.push_str("{]}"),
            '–' => out.push_str("--"),
            '—' => out.push_str("---"),
            '§' => out.push_str("\\S{}"),
            '\n' => out.push(' '),
            c => match math(c) {
                Some(m) => {
                    out.push_str("\\ensuremath{");
                    out.push_str(m);
                    out.push('}');
                }
                None => out.push(c),
            },
        }
    }
    out
}

/// The math command of a non-ASCII symbol the reports use.
fn math(c: char) -> Option<&'static str> {
    Some(match c {
        'σ' => "\\sigma",
        'ρ' => "\\rho",
        'π' => "\\pi",
        'ω' => "\\omega",
        'γ' => "\\gamma",
        'κ' => "\\kappa",
        'τ' => "\\tau",
        'θ' => "\\theta",
        'β' => "\\beta",
        'Σ' => "\\Sigma",
        '°' => "^{\\circ}",
        '³' => "^{3}",
        '½' => "\\frac{1}{2}",
        '∓' => "\\mp",
        '≠' => "\\neq",
        '∈' => "\\in",
        '←' => "\\leftarrow",
        '…' => "\\ldots",
        'η' => "\\eta",
        'φ' => "\\varphi",
        'ε' => "\\varepsilon",
        'Δ' => "\\Delta",
        'α' => "\\alpha",
        'μ' | 'µ' => "\\mu",
        '±' => "\\pm",
        '≥' => "\\geq",
        '≤' => "\\leq",
        '≈' => "\\approx",
        '·' => "\\cdot",
        '×' => "\\times",
        '−' => "-",
        '→' => "\\to",
        '²' => "^{2}",
        _ => return None,
    })
}

/// Whether siunitx can read `s` as a number (digits, sign, point, exponent).
fn numeric(s: &str) -> bool {
    !s.is_empty() && s.parse::<f64>().is_ok_and(f64::is_finite)
}

fn spans(s: &[Span]) -> String {
    s.iter()
        .map(|s| match s {
            Span::Text(t) => escape(t),
            Span::Code(t) => format!("\\texttt{{{}}}", escape(t)),
            Span::Strong(t) => format!("\\textbf{{{}}}", escape(t)),
        })
        .collect()
}

fn cell(c: &Cell) -> String {
    match c {
        Cell::Text(t) => escape(t),
        Cell::Num(n) if numeric(n) => format!("\\num{{{n}}}"),
        Cell::Num(n) => escape(n),
        Cell::Percent(v) if v.is_finite() => format!("\\num{{{}}}\\,\\%", sig(v * 100.0, 3)),
        Cell::Percent(_) | Cell::Missing => "--".into(),
    }
}

impl Markup for Latex {
    fn begin(&self, _title: &str) -> String {
        "% meshbound report fragment. Preamble: \\usepackage{booktabs} \\usepackage{siunitx}\n\n"
            .into()
    }

    fn heading(&self, level: u8, text: &str) -> String {
        let cmd = match level {
            0 | 1 => "section",
            2 => "subsection",
            _ => "subsubsection",
        };
        format!("\\{cmd}*{{{}}}\n\n", escape(text))
    }

    fn paragraph(&self, s: &[Span]) -> String {
        format!("{}\n\n", spans(s))
    }

    fn table(&self, t: &TableBlock) -> String {
        let spec: String = t
            .align
            .iter()
            .map(|a| match a {
                Align::Left => 'l',
                Align::Right => 'r',
            })
            .collect();
        let mut out = String::from("\\begin{table}[htbp]\n\\centering\n\\small\n");
        out.push_str(&format!("\\caption{{{}}}\n", escape(&t.caption)));
        out.push_str(&format!("\\begin{{tabular}}{{{spec}}}\n\\toprule\n"));
        let heads: Vec<String> = t.headers.iter().map(|h| escape(h)).collect();
        out.push_str(&format!("{} \\\\\n\\midrule\n", heads.join(" & ")));
        for r in &t.rows {
            let cells: Vec<String> = r.iter().map(cell).collect();
            out.push_str(&format!("{} \\\\\n", cells.join(" & ")));
        }
        out.push_str("\\bottomrule\n\\end{tabular}\n\\end{table}\n\n");
        out
    }

    fn list(&self, items: &[Vec<Span>]) -> String {
        let mut out = String::from("\\begin{itemize}\n");
        for i in items {
            out.push_str(&format!("\\item {}\n", spans(i)));
        }
        out.push_str("\\end{itemize}\n\n");
        out
    }

    fn caution(&self, text: &str) -> String {
        format!(
            "\\begin{{quote}}\n\\textbf{{Caution.}} {}\n\\end{{quote}}\n",
            escape(text)
        )
    }
}

impl Exporter for Latex {
    fn export(&self, a: &Assessment) -> Vec<u8> {
        markup::render(self, &a.title, &markup::document(a, &[])).into_bytes()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::markup::fixture;

    #[test]
    fn escapes_specials_and_symbols() {
        assert_eq!(
            escape("a_b & 5% #1 {x} $ ~ ^ \\"),
            "a\\_b \\& 5\\% \\#1 \\{x\\} \\$ \\textasciitilde{} \\textasciicircum{} \\textbackslash{}"
        );
        assert_eq!(
            escape("σ ≥ 0.29"),
            "\\ensuremath{\\sigma} \\ensuremath{\\geq} 0.29"
        );
        assert_eq!(escape("–"), "--");
        assert_eq!(escape("[-]"), "{[}-{]}");
    }

    #[test]
    fn numbers_go_through_siunitx() {
        assert_eq!(cell(&Cell::Num("0.90930".into())), "\\num{0.90930}");
        assert_eq!(cell(&Cell::Num("1.50e-7".into())), "\\num{1.50e-7}");
        assert_eq!(cell(&Cell::Percent(0.004123)), "\\num{0.412}\\,\\%");
        assert_eq!(cell(&Cell::Missing), "--");
        assert_eq!(cell(&Cell::Num("not a number".into())), "not a number");
    }

    #[test]
    fn tables_have_booktabs_rules_and_balanced_environments() {
        let a = fixture::assess(fixture::DEMO);
        let text = String::from_utf8(Latex.export(&a)).unwrap();
        let count = |s: &str| text.matches(s).count();
        // meshes, results, the published rules, breakdown summary and per mesh, band, the
        // band's point warnings
        assert_eq!(count("\\begin{tabular}"), 7);
        for rule in ["\\toprule", "\\midrule", "\\bottomrule", "\\end{tabular}"] {
            assert_eq!(count(rule), 7, "{rule}");
        }
        assert_eq!(count("\\begin{"), count("\\end{"));
        assert!(text.contains("\\section*{Demo runner \\& draft tube\\_test (invented) 100\\%}"));
        assert!(
            text.contains("M\\_fine & \\num{2000000} & \\num{1} & -- \\\\"),
            "{text}"
        );
        // every row of a tabular has as many cells as its column spec
        for block in text.split("\\begin{tabular}{").skip(1) {
            let spec_len = block.find('}').unwrap_or(0);
            let body = &block[..block.find("\\end{tabular}").unwrap_or(block.len())];
            for line in body.lines().filter(|l| l.ends_with("\\\\")) {
                let cols = line.replace("\\&", "").matches('&').count() + 1;
                assert_eq!(cols, spec_len, "{line}");
            }
        }
        assert!(!text.contains("NaN") && !text.contains("inf "));
    }
}
