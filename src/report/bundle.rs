//! The report folder's contents as (file name, bytes): `report.md` with the figures linked, one
//! SVG file per figure with a PNG and a PDF of it beside (same stem; [`super::raster`]), and
//! `report.html` with the figures inline. Only formatting: the command line decides where and
//! how the folder is written.

use super::markup::Figure;
use super::{html, markdown, plot, raster};
use crate::assess::Assessment;
use rayon::prelude::*;
use std::collections::HashSet;

/// The Markdown report's file name.
pub const MARKDOWN: &str = "report.md";
/// The HTML page's file name.
pub const HTML: &str = "report.html";

/// A file-name part made of `name`: ASCII letters, digits, `.`, `_` and `-` are kept, every
/// other run of characters becomes one `-`; never empty, never starting with a dot.
pub fn file_part(name: &str) -> String {
    let mut out = String::with_capacity(name.len());
    for c in name.chars() {
        if c.is_ascii_alphanumeric() || matches!(c, '.' | '_' | '-') {
            out.push(c);
        } else if !out.ends_with('-') {
            out.push('-');
        }
    }
    let trimmed = out.trim_matches(|c| c == '-' || c == '.');
    if trimmed.is_empty() {
        "unnamed".to_string()
    } else {
        trimmed.to_string()
    }
}

/// `stem.svg`, or `stem-2.svg`, `stem-3.svg`, … when that name is taken (compared without
/// case, for file systems that ignore it); the `.png` and `.pdf` of the same stem are taken
/// with it.
fn unique(stem: String, taken: &mut HashSet<String>) -> String {
    let mut k = 1;
    loop {
        let s = if k == 1 {
            stem.clone()
        } else {
            format!("{stem}-{k}")
        };
        let names = ["svg", "png", "pdf"].map(|e| format!("{s}.{e}").to_ascii_lowercase());
        if names.iter().all(|n| !taken.contains(n)) {
            taken.extend(names);
            return format!("{s}.svg");
        }
        k += 1;
    }
}

/// The figures of the report with their file names: a convergence plot per quantity with an
/// estimate (the scalar quantities, then each sweep's breakdown and reference estimates after
/// that sweep's plot), and one plot per sweep.
pub fn figures(a: &Assessment) -> Vec<Figure> {
    let mut taken: HashSet<String> = [MARKDOWN, HTML].iter().map(|s| s.to_string()).collect();
    let mut out = Vec::new();
    let convergence = |q: &crate::assess::QuantityResult,
                       title: String,
                       taken: &mut HashSet<String>,
                       out: &mut Vec<Figure>| {
        if q.three_grid.is_none() && q.least_squares.is_none() {
            return;
        }
        if let Some(svg) = plot::convergence_plot(a, q) {
            out.push(Figure {
                title,
                svg,
                file: Some(unique(format!("convergence-{}", file_part(&q.name)), taken)),
            });
        }
    };
    for q in &a.quantities {
        convergence(
            q,
            format!("Convergence of {}", q.name),
            &mut taken,
            &mut out,
        );
        for h in &q.histories {
            let (x, y): (Vec<f64>, Vec<f64>) = h.trace.iter().copied().unzip();
            if let Some(svg) =
                crate::history::plot::history_plot(&y, Some(&x), h.abscissa.as_deref(), &h.result)
            {
                out.push(Figure {
                    title: format!("Monitor history of {} on mesh {}", q.name, h.mesh),
                    svg,
                    file: Some(unique(
                        format!("history-{}-{}", file_part(&q.name), file_part(&h.mesh)),
                        &mut taken,
                    )),
                });
            }
        }
    }
    for s in &a.sweeps {
        let plotted = s.band.as_ref().map_or_else(
            || s.responses.first().cloned(),
            |b| Some(b.response.clone()),
        );
        let measured: Vec<plot::MeasuredPoint> = a
            .comparisons
            .iter()
            .filter(|c| c.name == s.name && !c.comparison.normalised && c.response == plotted)
            .flat_map(|c| {
                c.comparison.points.iter().map(|p| plot::MeasuredPoint {
                    x: p.x,
                    y: p.measured,
                    u: p.u_measured,
                })
            })
            .collect();
        if let Some(svg) = plot::sweep_plot(a, s, &measured) {
            out.push(Figure {
                title: format!("Sweep {} along {}", s.name, s.x),
                svg,
                file: Some(unique(format!("sweep-{}", file_part(&s.name)), &mut taken)),
            });
        }
        for b in &s.breakdown {
            let measured: Vec<plot::MeasuredPoint> = a
                .comparisons
                .iter()
                .filter(|c| {
                    c.name == s.name
                        && !c.comparison.normalised
                        && c.response.as_deref() == Some(b.response.as_str())
                })
                .flat_map(|c| {
                    c.comparison.points.iter().map(|p| plot::MeasuredPoint {
                        x: p.x,
                        y: p.measured,
                        u: p.u_measured,
                    })
                })
                .collect();
            if let Some(svg) = plot::breakdown_plot(a, s, b, &measured) {
                let against = if b.abscissa == s.x {
                    String::new()
                } else {
                    format!("-{}", file_part(&b.abscissa))
                };
                out.push(Figure {
                    title: format!(
                        "Breakdown of {} against {} (sweep {})",
                        b.response, b.abscissa, s.name
                    ),
                    svg,
                    file: Some(unique(
                        format!(
                            "breakdown-{}-{}{against}",
                            file_part(&s.name),
                            file_part(&b.response)
                        ),
                        &mut taken,
                    )),
                });
            }
        }
        for b in &s.breakdown {
            let title = format!(
                "Convergence of the breakdown {} of {} (sweep {})",
                b.abscissa, b.response, s.name
            );
            convergence(&b.x_estimate, title, &mut taken, &mut out);
            let title = format!(
                "Convergence of the reference {} (sweep {})",
                b.response, s.name
            );
            convergence(&b.reference_estimate, title, &mut taken, &mut out);
        }
    }
    for c in &a.duty_curves {
        for sr in &c.series {
            if let Some(svg) = super::duty::plot(c, sr) {
                out.push(Figure {
                    title: format!("Duty curve {}: {}", c.name, super::duty::series_label(sr)),
                    svg,
                    file: Some(unique(
                        format!("duty-{}-{}", file_part(&c.name), file_part(&sr.key)),
                        &mut taken,
                    )),
                });
            }
        }
    }
    for f in &a.fields {
        if let Some(svg) = f
            .line
            .as_ref()
            .and_then(|l| super::field_line::plot(&f.name, l))
        {
            out.push(Figure {
                title: format!("Field {}: along a line", f.name),
                svg,
                file: Some(unique(format!("line-{}", file_part(&f.name)), &mut taken)),
            });
        }
    }
    out
}

/// Every file of the report folder, name and bytes: `report.md`, each figure as SVG, PNG and
/// PDF, `report.html`. A figure that cannot be rasterised or converted (none of ours should
/// fail) keeps its SVG alone.
pub fn files(a: &Assessment) -> Vec<(String, Vec<u8>)> {
    files_with(a, true)
}

/// [`files`], with the PNG and PDF of each figure only when `raster` is `true` (rendering is
/// the slow part of a report with hundreds of figures).
pub fn files_with(a: &Assessment, raster: bool) -> Vec<(String, Vec<u8>)> {
    let figs = figures(a);
    let mut out = vec![(
        MARKDOWN.to_string(),
        markdown::markdown_page(a, &figs).into_bytes(),
    )];
    // Rasterising is the slow part: the figures are rendered in parallel, kept in order.
    let rendered: Vec<Vec<(String, Vec<u8>)>> = figs
        .par_iter()
        .map(|f| {
            let Some(name) = &f.file else {
                return Vec::new();
            };
            let mut v = vec![(name.clone(), f.svg.clone().into_bytes())];
            let stem = name.strip_suffix(".svg").unwrap_or(name);
            if !raster {
                return v;
            }
            if let Ok(png) = raster::png(&f.svg) {
                v.push((format!("{stem}.png"), png));
            }
            if let Ok(pdf) = raster::pdf(&f.svg) {
                v.push((format!("{stem}.pdf"), pdf));
            }
            v
        })
        .collect();
    out.extend(rendered.into_iter().flatten());
    out.push((HTML.to_string(), html::html_page(a, &figs).into_bytes()));
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::markup::fixture;

    #[test]
    fn file_parts_are_safe() {
        assert_eq!(file_part("efficiency"), "efficiency");
        assert_eq!(file_part("cav.breakdown.head"), "cav.breakdown.head");
        assert_eq!(file_part("../etc/passwd"), "etc-passwd");
        assert_eq!(file_part("η (total)"), "total");
        assert_eq!(file_part("σ"), "unnamed");
        assert_eq!(file_part("a  b//c"), "a-b-c");
        let mut taken = HashSet::new();
        assert_eq!(unique("x".into(), &mut taken), "x.svg");
        assert_eq!(unique("X".into(), &mut taken), "X-2.svg");
        assert_eq!(unique("x".into(), &mut taken), "x-3.svg");
    }

    #[test]
    fn every_figure_has_its_own_file_and_the_pages_carry_them() {
        let a = fixture::assess(fixture::DEMO);
        let files = files(&a);
        let names: Vec<&str> = files.iter().map(|(n, _)| n.as_str()).collect();
        let stems = [
            "convergence-efficiency",
            "convergence-torque",
            "sweep-cav",
            "breakdown-cav-efficiency",
            "convergence-cav.breakdown.efficiency",
            "convergence-cav.reference.efficiency",
        ];
        let mut want = vec!["report.md".to_string()];
        for s in stems {
            want.extend(["svg", "png", "pdf"].map(|e| format!("{s}.{e}")));
        }
        want.push("report.html".into());
        assert_eq!(names, want);
        let md = String::from_utf8(files[0].1.clone()).unwrap();
        let page = String::from_utf8(files[files.len() - 1].1.clone()).unwrap();
        for (n, bytes) in &files[1..files.len() - 1] {
            if n.ends_with(".png") {
                assert!(bytes.starts_with(b"\x89PNG"), "{n}");
                continue;
            }
            if n.ends_with(".pdf") {
                assert!(bytes.starts_with(b"%PDF-"), "{n}");
                continue;
            }
            assert!(md.contains(&format!("]({n})")), "{n} linked");
            let svg = String::from_utf8(bytes.clone()).unwrap();
            let body = &svg[svg.find('>').unwrap() + 1..];
            assert!(page.contains(body.trim_end()), "{n} inline");
        }
        assert!(!md.contains("<svg"));
    }

    #[test]
    fn a_taken_stem_moves_all_three_files() {
        let mut taken: HashSet<String> = ["fig.png".to_string()].into();
        assert_eq!(unique("fig".into(), &mut taken), "fig-2.svg");
        assert!(taken.contains("fig-2.pdf") && taken.contains("fig-2.png"));
    }
}
