//! One self-contained HTML page: the content of [`super::markup::document`] with the figures
//! inline, styles inline, no scripts and nothing fetched from elsewhere. Prints to PDF from
//! any browser.

use super::format::percent;
use super::markup::{self, Align, Cell, Figure, Markup, Span, TableBlock};
use crate::assess::Assessment;

/// Escapes text for HTML.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

const STYLE: &str = "body{font-family:Georgia,'Times New Roman',serif;color:#1a1a1a;max-width:60rem;margin:2rem auto;padding:0 1rem;line-height:1.45}
h1{font-size:1.6rem;border-bottom:3px double #1f3b57;padding-bottom:.3rem}
h2{font-size:1.25rem;margin-top:2rem;color:#1f3b57}
h3{font-size:1.05rem}
table{border-collapse:collapse;margin:.4rem 0 1.4rem;font-size:.9rem}
figure.table{margin:.4rem 0 1.4rem;overflow-x:auto}
figure.table figcaption{padding-bottom:.3rem}
figure.table table{margin:0}
th,td{padding:.2rem .6rem}
thead th{border-top:2px solid #1a1a1a;border-bottom:1px solid #1a1a1a}
tbody tr:last-child td{border-bottom:2px solid #1a1a1a}
td.num,th.num{text-align:right;font-variant-numeric:tabular-nums}
code{font-family:'Courier New',monospace;font-size:.9em}
figure{margin:1rem 0 2rem;page-break-inside:avoid}
figure svg{max-width:100%;height:auto}
figcaption{font-style:italic}
.statement{border-left:4px solid #1f3b57;background:#f3f6f9;padding:.6rem 1rem;margin:1rem 0}
.caution{border:2px solid #b4532a;padding:.6rem 1rem;margin:1rem 0}
@media print{body{margin:0;max-width:none}h2{page-break-after:avoid}table{page-break-inside:avoid}}";

/// The namespace attribute of a standalone SVG file, not needed inline.
pub const SVG_NAMESPACE: &str = " xmlns=\"http://www.w3.org/2000/svg\"";

/// HTML markup.
struct Html;

fn spans(s: &[Span]) -> String {
    s.iter()
        .map(|s| match s {
            Span::Text(t) => escape(t),
            Span::Code(t) => format!("<code>{}</code>", escape(t)),
            Span::Strong(t) => format!("<strong>{}</strong>", escape(t)),
        })
        .collect()
}

fn cell(c: &Cell) -> String {
    match c {
        Cell::Text(t) | Cell::Num(t) => escape(t),
        Cell::Percent(v) => escape(&percent(*v)),
        Cell::Missing => "–".into(),
    }
}

impl Markup for Html {
    fn begin(&self, title: &str) -> String {
        format!(
            "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>{}</title>\n<style>\n{STYLE}\n</style>\n</head>\n<body>\n",
            escape(title)
        )
    }

    fn end(&self) -> String {
        "</body>\n</html>\n".into()
    }

    fn heading(&self, level: u8, text: &str) -> String {
        let l = level.clamp(1, 6);
        format!("<h{l}>{}</h{l}>\n", escape(text))
    }

    fn paragraph(&self, s: &[Span]) -> String {
        format!("<p>{}</p>\n", spans(s))
    }

    fn table(&self, t: &TableBlock) -> String {
        let class = |a: Option<&Align>| match a {
            Some(Align::Right) => " class=\"num\"",
            _ => "",
        };
        // The caption is the figure's, not the table's own: a `<caption>` is no wider than its
        // table, which breaks a long caption of a narrow table into many short lines.
        let mut out = format!(
            "<figure class=\"table\">\n<figcaption>{}</figcaption>\n<table>\n<thead><tr>",
            escape(&t.caption)
        );
        for (i, h) in t.headers.iter().enumerate() {
            out.push_str(&format!("<th{}>{}</th>", class(t.align.get(i)), escape(h)));
        }
        out.push_str("</tr></thead>\n<tbody>\n");
        for r in &t.rows {
            out.push_str("<tr>");
            for (i, c) in r.iter().enumerate() {
                out.push_str(&format!("<td{}>{}</td>", class(t.align.get(i)), cell(c)));
            }
            out.push_str("</tr>\n");
        }
        out.push_str("</tbody>\n</table>\n</figure>\n");
        out
    }

    fn list(&self, items: &[Vec<Span>]) -> String {
        let mut out = String::from("<ul>\n");
        for i in items {
            out.push_str(&format!("<li>{}</li>\n", spans(i)));
        }
        out.push_str("</ul>\n");
        out
    }

    fn caution(&self, text: &str) -> String {
        format!(
            "<p class=\"caution\"><strong>Caution.</strong> {}</p>\n",
            escape(text)
        )
    }

    fn statement(&self, text: &str) -> String {
        // A figure and its uncertainty, and a number and its percent sign, stay on one line.
        let text = escape(text)
            .replace(" ± ", "\u{a0}±\u{a0}")
            .replace(" %", "\u{a0}%");
        format!("<p class=\"statement\">{text}</p>\n")
    }

    fn figure(&self, f: &Figure) -> String {
        // The SVG is our own plot output; a leading XML declaration is not allowed inline, and
        // inline SVG needs no namespace declaration: it is dropped so that the page names no
        // address at all.
        let body = match f.svg.find("<svg") {
            Some(i) => &f.svg[i..],
            None => return String::new(),
        };
        let body = body.replacen(SVG_NAMESPACE, "", 1);
        format!(
            "<figure>\n{}\n<figcaption>{}</figcaption>\n</figure>\n",
            body.trim_end(),
            escape(&f.title)
        )
    }
}

/// The whole report as one self-contained HTML page: meshes, every result table, the given
/// plots (title, SVG text from [`super::plot`]) inline, warnings and the caution.
pub fn html_page(a: &Assessment, figures: &[Figure]) -> String {
    markup::render(&Html, &a.title, &markup::document(a, figures))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::markup::fixture;
    use crate::report::plot;

    #[test]
    fn page_is_self_contained_with_inline_figures() {
        let a = fixture::assess(fixture::DEMO);
        let svg = plot::convergence_plot(&a, &a.quantities[0]).expect("plot");
        assert!(
            svg.contains(SVG_NAMESPACE),
            "the file form keeps its namespace"
        );
        let page = html_page(&a, &[Figure::inline("efficiency", svg)]);
        assert!(page.starts_with("<!DOCTYPE html>"));
        assert!(page.trim_end().ends_with("</html>"));
        assert_eq!(page.matches("<figure>").count(), 1);
        assert_eq!(page.matches("<svg").count(), 1);
        for banned in [
            "<script",
            "<link",
            "http://fonts",
            "https://",
            "http://",
            "@import",
            " src=",
        ] {
            assert!(!page.contains(banned), "{banned}");
        }
        // meshes, results, the published rules, breakdown summary and per mesh, band, the
        // band's point warnings
        assert_eq!(page.matches("<table>").count(), 7);
        assert!(page.contains(&escape(&a.caution)));
        assert!(page.contains("<title>Demo runner &amp; draft tube_test (invented) 100%</title>"));
    }

    #[test]
    fn figures_without_svg_are_left_out() {
        assert_eq!(Html.figure(&Figure::inline("x", "not an svg")), "");
    }
}
