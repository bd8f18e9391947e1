//! LaTeX report: the content of [`super::markup::document_with`] in the column layout, as a
//! fragment to paste into a paper. Tables are booktabs `tabular`s (`\toprule`, `\midrule`,
//! `\bottomrule`) inside `table` floats, narrow enough for one column of a two-column page;
//! a table with a text column is a `tabularx` of `\columnwidth` whose text columns wrap.
//! Numbers are set in math mode (`$1.50\times10^{-7}$`), symbols as math (`$U$`, `$r_{21}$`,
//! `$F_\mathrm{s}$`, `$\sigma_\mathrm{b}$`). The preamble needs `\usepackage{booktabs}`,
//! `\usepackage{array}` and `\usepackage{tabularx}` (said in the fragment's first line; all
//! three are in the base and recommended sets of TeX Live).

use super::format::sig;
use super::markup::{self, Align, Cell, Layout, Markup, Span, TableBlock};
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
        '√' => "\\surd",
        '∞' => "\\infty",
        _ => return None,
    })
}

/// Whether `s` is a plain number (digits, sign, point, exponent).
fn numeric(s: &str) -> bool {
    !s.is_empty() && s.parse::<f64>().is_ok_and(f64::is_finite)
}

/// A number already rounded for display, in math mode: `1.50e-7` → `$1.50\times10^{-7}$`,
/// `-0.5` → `$-0.5$`.
pub fn number(n: &str) -> String {
    match n.split_once(['e', 'E']) {
        Some((m, e)) => {
            let e = e.trim_start_matches('+');
            let e = match e.strip_prefix('-') {
                Some(d) => format!("-{}", d.trim_start_matches('0')),
                None => e.trim_start_matches('0').to_string(),
            };
            format!("${m}\\times10^{{{e}}}$")
        }
        None => format!("${n}$"),
    }
}

/// The math form of a symbol the reports write in plain text (`r21`, `Fs`, `U_I`, `σ_b`, …),
/// `None` for an ordinary word.
fn symbol_math(w: &str) -> Option<String> {
    let fixed = match w {
        "U" | "E" | "S" | "D" | "k" | "p" | "h" | "N" => return Some(format!("${w}$")),
        "Fs" => "$F_\\mathrm{s}$",
        "U_I" => "$U_\\mathrm{I}$",
        "u_num" => "$u_\\mathrm{num}$",
        "u_val" => "$u_\\mathrm{val}$",
        "u_D" => "$u_D$",
        "u_input" => "$u_\\mathrm{input}$",
        "|E|" => "$|E|$",
        "U/|φ|" => "$U/|\\varphi|$",
        _ => "",
    };
    if !fixed.is_empty() {
        return Some(fixed.to_string());
    }
    // refinement ratios: r21, r32, r11,10
    if let Some(d) = w.strip_prefix('r') {
        let ok = !d.is_empty()
            && d.chars().all(|c| c.is_ascii_digit() || c == ',')
            && d.starts_with(|c: char| c.is_ascii_digit())
            && d.ends_with(|c: char| c.is_ascii_digit())
            && (d.contains(',') || d.len() == 2);
        if ok {
            return Some(format!("$r_{{{d}}}$"));
        }
    }
    // a breakdown abscissa: σ_b, NPSH_b
    if let Some(base) = w.strip_suffix("_b") {
        let mut cs = base.chars();
        return match (cs.next(), cs.next()) {
            (Some(c), None) => math(c).map(|m| format!("${m}_\\mathrm{{b}}$")),
            _ if !base.is_empty() && base.chars().all(|c| c.is_ascii_alphanumeric()) => {
                Some(format!("$\\mathrm{{{base}}}_\\mathrm{{b}}$"))
            }
            _ => None,
        };
    }
    None
}

/// Running text with its symbols set as math: each space-separated word (without the
/// punctuation around it, and each part of a `·` product) that is a symbol of
/// `symbol_math` becomes math, everything else is escaped.
pub fn prose(text: &str) -> String {
    text.split(' ')
        .map(|word| {
            word.split('·')
                .map(|part| {
                    let start = part
                        .find(|c: char| !matches!(c, '(' | '['))
                        .unwrap_or(part.len());
                    let core_end = part
                        .rfind(|c: char| !matches!(c, ',' | '.' | ';' | ':' | ')' | ']'))
                        .map_or(start, |i| {
                            i + part[i..].chars().next().map_or(1, char::len_utf8)
                        });
                    let core_end = core_end.max(start);
                    let (pre, core, post) =
                        (&part[..start], &part[start..core_end], &part[core_end..]);
                    match symbol_math(core) {
                        Some(m) => format!("{}{m}{}", escape(pre), escape(post)),
                        // identifiers break after their underscores
                        None => escape(part).replace("\\_", "\\_\\allowbreak{}"),
                    }
                })
                .collect::<Vec<_>>()
                .join("\\ensuremath{\\cdot}")
        })
        .collect::<Vec<_>>()
        .join(" ")
}

/// A column heading: a symbol as math (`$U$`, `$p$`), the comparison's verdict as one
/// formula, other words as [`prose`].
fn header(h: &str) -> String {
    match h {
        "|E| ≤ k u_val" => "$|E|\\le k\\,u_\\mathrm{val}$".into(),
        "relative U" => "$U/|\\varphi_1|$".into(),
        "ratio to finer" => "$r$".into(),
        "extrapolated" => "$\\varphi_\\mathrm{ext}$".into(),
        "U of reference" => "$U$ of ref.".into(),
        "mean order" => "mean $p$".into(),
        "median order" => "median $p$".into(),
        "mean U/|φ|" => "mean $U/|\\varphi|$".into(),
        "largest U/|φ|" => "max.\\ $U/|\\varphi|$".into(),
        "oscillatory" => "oscill.".into(),
        "no change" => "none".into(),
        h => prose(h),
    }
}

/// Text set in a typewriter font; a long one (a path, beyond 24 characters) breakable after
/// `/`, `_`, `.` and `-` so that it does not run into the margin of a column.
fn code(t: &str) -> String {
    let mut out = String::from("\\texttt{");
    let long = t.chars().count() > 24;
    for c in t.chars() {
        out.push_str(&escape(&c.to_string()));
        if long && matches!(c, '/' | '_' | '.' | '-') {
            out.push_str("\\allowbreak{}");
        }
    }
    out.push('}');
    out
}

fn spans(s: &[Span]) -> String {
    s.iter()
        .map(|s| match s {
            Span::Text(t) => prose(t),
            Span::Code(t) => code(t),
            Span::Strong(t) => format!("\\textbf{{{}}}", prose(t)),
        })
        .collect()
}

fn cell(c: &Cell) -> String {
    match c {
        Cell::Text(t) => prose(t),
        Cell::Num(n) if numeric(n) => number(n),
        // a figure marked as the one that governs
        Cell::Num(n) if n.strip_suffix(" *").is_some_and(numeric) => {
            format!("{}\\rlap{{*}}", number(n.trim_end_matches(" *")))
        }
        Cell::Num(n) => prose(n),
        Cell::Percent(v) if v.is_finite() => format!("{}\\,\\%", number(&sig(v * 100.0, 3))),
        Cell::Percent(_) | Cell::Missing => "--".into(),
    }
}

impl Markup for Latex {
    fn begin(&self, _title: &str) -> String {
        "% meshbound report fragment. Preamble: \\usepackage{booktabs} \\usepackage{array} \\usepackage{tabularx}\n\n"
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
        // Text columns wrap in a tabularx of the column's width; a table of numbers alone
        // keeps its natural width.
        let wraps = t.align.contains(&Align::Left);
        let spec: String = t
            .align
            .iter()
            .map(|a| match (a, wraps) {
                (Align::Left, true) => ">{\\raggedright\\arraybackslash\\hspace{0pt}}X",
                (Align::Left, false) => "l",
                (Align::Right, _) => "r",
            })
            .collect();
        let mut out = String::from(
            "\\begin{table}[htbp]\n\\centering\n\\footnotesize\n\\setlength{\\tabcolsep}{3pt}\n",
        );
        out.push_str(&format!("\\caption{{{}}}\n", prose(&t.caption)));
        let (begin, end) = if wraps {
            (
                format!("\\begin{{tabularx}}{{\\columnwidth}}{{{spec}}}"),
                "\\end{tabularx}",
            )
        } else {
            (format!("\\begin{{tabular}}{{{spec}}}"), "\\end{tabular}")
        };
        out.push_str(&format!("{begin}\n\\toprule\n"));
        let heads: Vec<String> = t.headers.iter().map(|h| header(h)).collect();
        out.push_str(&format!("{} \\\\\n\\midrule\n", heads.join(" & ")));
        for r in &t.rows {
            let cells: Vec<String> = r.iter().map(cell).collect();
            out.push_str(&format!("{} \\\\\n", cells.join(" & ")));
        }
        out.push_str(&format!("\\bottomrule\n{end}\n\\end{{table}}\n\n"));
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
        markup::render(
            self,
            &a.title,
            &markup::document_with(a, &[], Layout::Column),
        )
        .into_bytes()
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
    fn numbers_and_symbols_are_math() {
        assert_eq!(cell(&Cell::Num("0.90930".into())), "$0.90930$");
        assert_eq!(cell(&Cell::Num("1.50e-7".into())), "$1.50\\times10^{-7}$");
        assert_eq!(cell(&Cell::Num("2.5e12".into())), "$2.5\\times10^{12}$");
        assert_eq!(cell(&Cell::Percent(0.004123)), "$0.412$\\,\\%");
        assert_eq!(cell(&Cell::Num("0.00334 *".into())), "$0.00334$\\rlap{*}");
        assert_eq!(cell(&Cell::Missing), "--");
        assert_eq!(cell(&Cell::Num("not a number".into())), "not a number");
        assert_eq!(
            prose("ratios r21 = 1.329 and r11,10 = 2, Fs = 1.25, σ_b = 0.164 (NPSH_b)."),
            "ratios $r_{21}$ = 1.329 and $r_{11,10}$ = 2, $F_\\mathrm{s}$ = 1.25, $\\sigma_\\mathrm{b}$ = 0.164 ($\\mathrm{NPSH}_\\mathrm{b}$)."
        );
        assert_eq!(
            prose("|E| ≤ k·u_val"),
            "$|E|$ \\ensuremath{\\leq} $k$\\ensuremath{\\cdot}$u_\\mathrm{val}$"
        );
        // ordinary words stay words: "run", "rate", "p2"
        assert_eq!(prose("run rate p2 r2"), "run rate p2 r2");
        assert_eq!(header("|E| ≤ k u_val"), "$|E|\\le k\\,u_\\mathrm{val}$");
        assert_eq!(header("U_I"), "$U_\\mathrm{I}$");
    }

    #[test]
    fn tables_have_booktabs_rules_and_balanced_environments() {
        let a = fixture::assess(fixture::DEMO);
        let text = String::from_utf8(Latex.export(&a)).unwrap();
        let count = |s: &str| text.matches(s).count();
        // meshes, results, the published rules, breakdown summary and per mesh, band, the
        // band's point warnings: each has a text column, so each is a tabularx
        assert_eq!(count("\\begin{tabularx}{\\columnwidth}"), 7);
        for rule in ["\\toprule", "\\midrule", "\\bottomrule", "\\end{tabularx}"] {
            assert_eq!(count(rule), 7, "{rule}");
        }
        assert_eq!(count("\\begin{"), count("\\end{"));
        assert!(!text.contains("\\num{") && !text.contains("siunitx"));
        assert!(text.contains("\\section*{Demo runner \\& draft tube\\_test (invented) 100\\%}"));
        assert!(
            text.contains("M\\_\\allowbreak{}fine & $2000000$ & $1$ & -- \\\\"),
            "{text}"
        );
        // every row of a table has as many cells as its column spec
        for block in text.split("\\begin{tabularx}{\\columnwidth}{").skip(1) {
            let spec = block[..block.find("}\n").unwrap_or(0)]
                .replace(">{\\raggedright\\arraybackslash\\hspace{0pt}}X", "X");
            let spec_len = spec.chars().count();
            let body = &block[..block.find("\\end{tabularx}").unwrap_or(block.len())];
            for line in body.lines().filter(|l| l.ends_with("\\\\")) {
                let cols = line.replace("\\&", "").matches('&').count() + 1;
                assert_eq!(cols, spec_len, "{line}");
            }
        }
        assert!(!text.contains("NaN") && !text.contains("inf "));
    }
}
