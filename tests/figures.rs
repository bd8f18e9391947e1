//! The figures of `meshbound report` through the real binary: the breakdown figures of every
//! breakdown definition of the demo sweeps (read as XML: the zoomed panel, the threshold and
//! breakdown markers of every mesh, the stated interval), and every figure as PNG (decoded with
//! the `png` crate from the registry, its size checked) and PDF (one page of the figure's
//! size), the same bytes on every run.

mod common;

use common::*;
use std::collections::BTreeSet;

/// The demo studies with sweeps: breakdown read against σ (efficiency, 1 % drop; head, 3 %
/// drop) and against NPSH derived from raw monitors.
const STUDIES: [&str; 2] = [
    "studies/pump-turbine-cavitation.yaml",
    "studies/pump-turbine-raw-sweep.yaml",
];

fn nums(text: &str) -> Vec<f64> {
    text.split(|c: char| !(c.is_ascii_digit() || c == '.' || c == '-' || c == 'e'))
        .filter_map(|t| t.parse().ok())
        .collect()
}

/// Every point an element draws through (polyline and polygon points, line ends, circle
/// centres, rectangle corners, path coordinates), in the element's own pixels.
fn points(n: roxmltree::Node) -> Vec<(f64, f64)> {
    let a = |k: &str| n.attribute(k).and_then(|v| v.parse::<f64>().ok());
    let pairs = |v: Vec<f64>| -> Vec<(f64, f64)> {
        v.chunks(2)
            .filter(|c| c.len() == 2)
            .map(|c| (c[0], c[1]))
            .collect()
    };
    match n.tag_name().name() {
        "polyline" | "polygon" => pairs(nums(n.attribute("points").unwrap_or(""))),
        "path" => pairs(nums(n.attribute("d").unwrap_or(""))),
        "line" => match (a("x1"), a("y1"), a("x2"), a("y2")) {
            (Some(x1), Some(y1), Some(x2), Some(y2)) => vec![(x1, y1), (x2, y2)],
            _ => Vec::new(),
        },
        "circle" => match (a("cx"), a("cy")) {
            (Some(x), Some(y)) => vec![(x, y)],
            _ => Vec::new(),
        },
        "rect" => match (a("x"), a("y"), a("width"), a("height")) {
            (Some(x), Some(y), Some(w), Some(h)) => vec![(x, y), (x + w, y + h)],
            _ => Vec::new(),
        },
        _ => Vec::new(),
    }
}

fn group_points(g: roxmltree::Node) -> Vec<(f64, f64)> {
    g.descendants().flat_map(points).collect()
}

/// Groups of one class in a node, by mesh.
fn groups<'a, 'i>(
    panel: roxmltree::Node<'a, 'i>,
    class: &str,
) -> Vec<(Option<String>, roxmltree::Node<'a, 'i>)> {
    panel
        .descendants()
        .filter(|n| n.has_tag_name("g") && n.attribute("class") == Some(class))
        .map(|n| (n.attribute("data-mesh").map(str::to_string), n))
        .collect()
}

fn bbox(p: &[(f64, f64)]) -> (f64, f64, f64, f64) {
    p.iter().fold(
        (
            f64::INFINITY,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NEG_INFINITY,
        ),
        |(a, b, c, d), q| (a.min(q.0), b.min(q.1), c.max(q.0), d.max(q.1)),
    )
}

fn panel<'a, 'i>(doc: &'a roxmltree::Document<'i>, name: &str) -> roxmltree::Node<'a, 'i> {
    doc.descendants()
        .find(|n| n.attribute("class") == Some("panel") && n.attribute("data-panel") == Some(name))
        .unwrap_or_else(|| panic!("a panel `{name}`"))
}

/// The breakdown figures' files of an assessment, with their breakdown in the JSON result.
fn breakdowns(v: &serde_json::Value) -> Vec<(String, serde_json::Value, serde_json::Value)> {
    let mut out = Vec::new();
    for s in v["sweeps"].as_array().unwrap() {
        for b in s["breakdown"].as_array().unwrap() {
            if b["per_mesh"].as_array().unwrap().is_empty() {
                continue;
            }
            let against = if b["abscissa"] == s["x"] {
                String::new()
            } else {
                format!("-{}", b["abscissa"].as_str().unwrap())
            };
            let file = format!(
                "breakdown-{}-{}{against}.svg",
                s["name"].as_str().unwrap(),
                b["response"].as_str().unwrap()
            );
            out.push((file, s.clone(), b.clone()));
        }
    }
    out
}

#[test]
fn every_breakdown_has_a_zoomed_figure_with_thresholds_and_markers() {
    let mut seen = 0;
    for study in STUDIES {
        let (_w, out) = report_of(study);
        let v = json(&["assess", study, "--format", "json"]);
        let list = breakdowns(&v);
        assert!(list.len() >= 2, "{study}: two criteria at least");
        for (file, _s, b) in list {
            seen += 1;
            let text = read(&out.join(&file));
            let doc = roxmltree::Document::parse(&text).unwrap_or_else(|e| panic!("{file}: {e}"));
            let zoom = panel(&doc, "zoom");
            let plot = nums(zoom.attribute("data-plot").expect("data-plot"));
            let (top, bottom) = (plot[1], plot[3]);
            let (left, right) = (plot[0], plot[2]);
            let height = bottom - top;
            assert!(height > 200.0, "{file}: a plot area of {height} px");
            let per_mesh = b["per_mesh"].as_array().unwrap();
            let want: BTreeSet<String> = per_mesh
                .iter()
                .map(|m| m["mesh"].as_str().unwrap().to_string())
                .collect();

            // A threshold line and a reference line per mesh, horizontal.
            let level = |class: &str| -> Vec<(String, f64)> {
                groups(zoom, class)
                    .into_iter()
                    .map(|(m, g)| {
                        let p = group_points(g);
                        let (_, y0, _, y1) = bbox(&p);
                        assert!((y1 - y0).abs() < 1.5, "{file}: {class} is horizontal");
                        (m.expect("data-mesh"), 0.5 * (y0 + y1))
                    })
                    .collect()
            };
            let thresholds = level("threshold");
            let references = level("reference-level");
            let names =
                |l: &[(String, f64)]| l.iter().map(|x| x.0.clone()).collect::<BTreeSet<_>>();
            assert_eq!(
                names(&thresholds),
                want,
                "{file}: a threshold line per mesh"
            );
            assert_eq!(
                names(&references),
                want,
                "{file}: a reference line per mesh"
            );

            // The breakdown region (highest reference to lowest threshold) fills at least half
            // the plot height (the readability the figure is for; common practice, no source).
            let region = thresholds
                .iter()
                .map(|t| t.1)
                .fold(f64::NEG_INFINITY, f64::max)
                - references.iter().map(|t| t.1).fold(f64::INFINITY, f64::min);
            assert!(
                region >= 0.5 * height,
                "{file}: the breakdown region spans {region:.1} of {height:.1} px"
            );

            // A breakdown marker per mesh, inside the plot area, on its threshold line, and in
            // the order of the breakdown values of the assessment.
            let markers: Vec<(String, (f64, f64))> = groups(zoom, "breakdown")
                .into_iter()
                .map(|(m, g)| {
                    let (x0, y0, x1, y1) = bbox(&group_points(g));
                    (m.expect("data-mesh"), (0.5 * (x0 + x1), 0.5 * (y0 + y1)))
                })
                .collect();
            assert_eq!(
                markers.iter().map(|m| m.0.clone()).collect::<BTreeSet<_>>(),
                want,
                "{file}: a breakdown marker per mesh"
            );
            for (m, (x, y)) in &markers {
                assert!(
                    *x > left && *x < right && *y > top && *y < bottom,
                    "{file}: {m} at ({x}, {y})"
                );
                let t = thresholds.iter().find(|t| &t.0 == m).unwrap().1;
                assert!((y - t).abs() < 2.0, "{file}: {m}'s marker on its threshold");
            }
            for i in 0..per_mesh.len() {
                for j in 0..per_mesh.len() {
                    let (xi, xj) = (
                        per_mesh[i]["x"].as_f64().unwrap(),
                        per_mesh[j]["x"].as_f64().unwrap(),
                    );
                    let px = |k: usize| {
                        markers
                            .iter()
                            .find(|m| m.0 == per_mesh[k]["mesh"].as_str().unwrap())
                            .unwrap()
                            .1
                             .0
                    };
                    if xi < xj - 1e-9 * xj.abs().max(1.0) {
                        assert!(
                            px(i) <= px(j) + 0.5,
                            "{file}: markers in the order of the breakdown values"
                        );
                    }
                }
            }

            // The finest mesh's breakdown ± U: a horizontal bar, and the interval shaded.
            if b["x_estimate"]["uncertainty"].is_object() {
                let bar = groups(zoom, "breakdown-uncertainty");
                assert_eq!(bar.len(), 1, "{file}: one ± U bar");
                assert_eq!(
                    groups(zoom, "breakdown-interval").len(),
                    1,
                    "{file}: the interval"
                );
            }
            // The whole sweep under it, with the window outlined.
            let whole = panel(&doc, "whole");
            assert_eq!(groups(whole, "zoom-window").len(), 1, "{file}");
            assert_eq!(
                groups(whole, "mesh").len(),
                v["sweeps"][0]["meshes"].as_array().unwrap().len(),
                "{file}: every mesh's whole curve"
            );
            // Axis labels carry no `_b` suffix; an NPSH axis says its unit.
            assert!(!text.contains("_b"), "{file}");
            if b["abscissa"] == "npsh" {
                assert!(text.contains("NPSH [m]"), "{file}");
            }
            // The caution, as the text lines of the figure read one after the other.
            let words: String = doc
                .descendants()
                .filter(|n| n.has_tag_name("text"))
                .filter_map(|n| n.text())
                .flat_map(str::split_whitespace)
                .collect::<Vec<_>>()
                .join(" ");
            assert!(
                words.contains("not a model-test acceptance")
                    && words.contains("licensed engineering judgment"),
                "{file}: the caution"
            );
        }
    }
    assert!(seen >= 4, "{seen} breakdown figures");
}

/// The `/Type /Page` objects of a PDF (not `/Pages`).
fn pages(pdf: &[u8]) -> usize {
    let text = String::from_utf8_lossy(pdf);
    text.match_indices("/Type /Page")
        .filter(|(i, m)| !text[i + m.len()..].starts_with('s'))
        .count()
}

fn png_size(bytes: &[u8]) -> (u32, u32) {
    let decoder = png::Decoder::new(std::io::Cursor::new(bytes));
    let mut reader = decoder.read_info().expect("a PNG");
    let mut buf = vec![0; reader.output_buffer_size().unwrap()];
    let info = reader.next_frame(&mut buf).expect("a decodable frame");
    (info.width, info.height)
}

#[test]
fn every_figure_is_also_a_png_and_a_pdf_of_its_size_the_same_on_every_run() {
    let (_w, out) = report_of(STUDIES[0]);
    let (_w2, again) = report_of(STUDIES[0]);
    let mut svgs = 0;
    for e in std::fs::read_dir(&out).unwrap() {
        let name = e.unwrap().file_name().to_string_lossy().into_owned();
        let Some(stem) = name.strip_suffix(".svg") else {
            continue;
        };
        svgs += 1;
        let text = read(&out.join(&name));
        let doc = roxmltree::Document::parse(&text).unwrap();
        let size = |k: &str| {
            doc.root_element()
                .attribute(k)
                .unwrap()
                .parse::<u32>()
                .unwrap()
        };
        let (w, h) = (size("width"), size("height"));

        let png = std::fs::read(out.join(format!("{stem}.png"))).expect("a PNG beside the SVG");
        // Twice the SVG's pixels (the stated scale of the PNG figures).
        assert_eq!(png_size(&png), (2 * w, 2 * h), "{stem}.png");
        let pdf = std::fs::read(out.join(format!("{stem}.pdf"))).expect("a PDF beside the SVG");
        assert!(pdf.starts_with(b"%PDF-"), "{stem}.pdf");
        assert_eq!(pages(&pdf), 1, "{stem}.pdf: one page");
        let media = format!("/MediaBox [0 0 {w} {h}]");
        assert!(
            String::from_utf8_lossy(&pdf).contains(&media),
            "{stem}.pdf: {media}"
        );

        let f = format!("{stem}.png");
        assert!(
            std::fs::read(out.join(&f)).unwrap() == std::fs::read(again.join(&f)).unwrap(),
            "{f}: the same bytes on every run"
        );
        // The PDF: the same bytes but for the order of the font entries of the page's
        // resources, which svg2pdf keeps in a hash map: the same lines, the same length.
        let f = format!("{stem}.pdf");
        let (p, q) = (
            std::fs::read(out.join(&f)).unwrap(),
            std::fs::read(again.join(&f)).unwrap(),
        );
        let lines = |b: &[u8]| {
            let mut v: Vec<Vec<u8>> = b.split(|c| *c == b'\n').map(<[u8]>::to_vec).collect();
            v.sort();
            v
        };
        assert_eq!(p.len(), q.len(), "{f}");
        assert!(lines(&p) == lines(&q), "{f}: the same content on every run");
    }
    assert!(svgs >= 6, "{svgs} figures");
}

#[test]
fn svg_only_leaves_out_the_png_and_pdf() {
    let w = Workdir::new();
    let out = w.path().join("out");
    let o = run(&[
        "report",
        root().join(STUDIES[0]).to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--svg-only",
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let names: Vec<String> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(names
        .iter()
        .any(|n| n.starts_with("breakdown-") && n.ends_with(".svg")));
    assert!(
        !names
            .iter()
            .any(|n| n.ends_with(".png") || n.ends_with(".pdf")),
        "{names:?}"
    );
}
