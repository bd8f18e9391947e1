//! Markdown (GitHub tables) report: the content of [`super::markup::document`].

use super::format::percent;
use super::markup::{self, Align, Cell, Figure, Markup, Span, TableBlock};
use super::Exporter;
use crate::assess::Assessment;

/// Markdown exporter.
pub struct Markdown;

/// Escapes text for Markdown: characters that would start markup, and `|` (table cells).
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '\\' | '`' | '*' | '_' | '|' | '[' | ']' | '<' | '>' | '#' => {
                out.push('\\');
                out.push(c);
            }
            '\n' => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

/// A code span holding `s`, with a fence longer than any run of backticks in it.
fn code(s: &str) -> String {
    let longest = s.split(|c| c != '`').map(str::len).max().unwrap_or(0);
    let fence = "`".repeat(longest + 1);
    let pad = if s.starts_with('`') || s.ends_with('`') {
        " "
    } else {
        ""
    };
    // `|` must be escaped even inside a code span in a GitHub table.
    format!("{fence}{pad}{}{pad}{fence}", s.replace('|', "\\|"))
}

/// A link destination: as it is when it holds only file-name characters, else in angle
/// brackets (CommonMark), without the characters that would end it.
fn destination(file: &str) -> String {
    if file
        .chars()
        .all(|c| c.is_ascii_alphanumeric() || matches!(c, '.' | '-' | '_' | '/'))
    {
        file.to_string()
    } else {
        format!("<{}>", file.replace(['<', '>', '\n'], ""))
    }
}

fn spans(s: &[Span]) -> String {
    s.iter()
        .map(|s| match s {
            Span::Text(t) => escape(t),
            Span::Code(t) => code(t),
            Span::Strong(t) => format!("**{}**", escape(t)),
        })
        .collect()
}

fn cell(c: &Cell) -> String {
    match c {
        Cell::Text(t) => escape(t),
        Cell::Num(n) => escape(n),
        Cell::Percent(v) => percent(*v),
        Cell::Missing => "–".into(),
    }
}

impl Markup for Markdown {
    fn heading(&self, level: u8, text: &str) -> String {
        format!(
            "{} {}\n\n",
            "#".repeat(usize::from(level.clamp(1, 6))),
            escape(text)
        )
    }

    fn paragraph(&self, s: &[Span]) -> String {
        format!("{}\n\n", spans(s))
    }

    fn table(&self, t: &TableBlock) -> String {
        let mut out = format!("*{}*\n\n", escape(&t.caption));
        let row = |cells: Vec<String>| format!("| {} |\n", cells.join(" | "));
        out.push_str(&row(t.headers.iter().map(|h| escape(h)).collect()));
        out.push_str(&row(t
            .align
            .iter()
            .map(|a| match a {
                Align::Left => ":---".to_string(),
                Align::Right => "---:".to_string(),
            })
            .collect()));
        for r in &t.rows {
            out.push_str(&row(r.iter().map(cell).collect()));
        }
        out.push('\n');
        out
    }

    fn list(&self, items: &[Vec<Span>]) -> String {
        let mut out: String = items.iter().map(|i| format!("- {}\n", spans(i))).collect();
        out.push('\n');
        out
    }

    fn caution(&self, text: &str) -> String {
        format!("> **Caution.** {}\n", escape(text))
    }

    /// A figure written to a file is linked as an image; one without a file is left out.
    fn figure(&self, f: &Figure) -> String {
        match &f.file {
            Some(file) => format!(
                "![{}]({})\n\n*{}*\n\n",
                escape(&f.title),
                destination(file),
                escape(&f.title)
            ),
            None => String::new(),
        }
    }
}

/// The Markdown report with figures: those with a file are linked as images (the files are
/// written beside the report by the caller).
pub fn markdown_page(a: &Assessment, figures: &[Figure]) -> String {
    markup::render(&Markdown, &a.title, &markup::document(a, figures))
}

impl Exporter for Markdown {
    fn export(&self, a: &Assessment) -> Vec<u8> {
        markup::render(self, &a.title, &markup::document(a, &[])).into_bytes()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::markup::fixture;

    #[test]
    fn escapes_markup_characters() {
        assert_eq!(escape("a|b_c*d"), "a\\|b\\_c\\*d");
        assert_eq!(escape("plain 1.5 %"), "plain 1.5 %");
        assert_eq!(code("L1"), "`L1`");
        assert_eq!(code("a`b"), "``a`b``");
        assert_eq!(code("x|y"), "`x\\|y`");
    }

    #[test]
    fn tables_are_github_tables() {
        let a = fixture::assess(fixture::DEMO);
        let text = String::from_utf8(Markdown.export(&a)).unwrap();
        assert!(text.starts_with("# Demo runner & draft tube\\_test (invented) 100%\n"));
        // every table line has as many cells as its header line
        let lines: Vec<&str> = text.lines().collect();
        let mut tables = 0;
        for (i, l) in lines.iter().enumerate() {
            if l.starts_with("| :---") || l.starts_with("| ---:") {
                tables += 1;
                let cols = |s: &str| s.replace("\\|", "").matches('|').count();
                let want = cols(lines[i - 1]);
                assert_eq!(cols(l), want);
                for row in lines[i + 1..].iter().take_while(|r| r.starts_with('|')) {
                    assert_eq!(cols(row), want, "{row}");
                }
            }
        }
        // meshes, results, the published rules, breakdown summary and per mesh, band, the
        // band's point warnings
        assert_eq!(tables, 7);
        assert!(text.contains("| M\\_fine | 2000000 | 1 | – |"), "{text}");
        assert!(text.contains(&format!("> **Caution.** {}", escape(&a.caution))));
        assert!(!text.contains("NaN") && !text.contains("inf "));
        assert!(text.contains("\n## Drafted uncertainty statement\n"));
        assert!(!text.contains("!["), "no figures without files");
    }

    #[test]
    fn figures_with_files_are_linked() {
        let a = fixture::assess(fixture::DEMO);
        let mut f = Figure::inline("efficiency_plot", "<svg></svg>");
        assert!(!markdown_page(&a, &[f.clone()]).contains("!["));
        f.file = Some("convergence-efficiency.svg".into());
        let text = markdown_page(&a, &[f]);
        assert!(
            text.contains(
                "![efficiency\\_plot](convergence-efficiency.svg)\n\n*efficiency\\_plot*\n"
            ),
            "{text}"
        );
        assert!(!text.contains("<svg"));
        assert_eq!(destination("a b.svg"), "<a b.svg>");
    }
}
