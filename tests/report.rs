//! `meshbound report STUDY --out DIR` through the real binary: the files of the folder, the
//! links and inline figures of the pages, the SVG figures read as XML, the LaTeX fragment
//! compiled by a TeX engine and the HTML page drawn by a browser (where those are installed),
//! and the refusals (an existing folder, an unwritable place).

mod common;

use common::*;
use std::collections::BTreeSet;
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

const STUDY: &str = "studies/pump-turbine-cavitation.yaml";

fn names(dir: &Path) -> BTreeSet<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect()
}

/// The quantities of a JSON result that have an estimate, with the file their convergence
/// plot goes to: the scalar quantities, then per sweep its breakdown and reference estimates.
fn estimated(v: &serde_json::Value) -> Vec<(serde_json::Value, String)> {
    let has_estimate =
        |q: &serde_json::Value| !q["three_grid"].is_null() || !q["least_squares"].is_null();
    let mut out = Vec::new();
    let mut push = |q: &serde_json::Value| {
        if has_estimate(q) {
            let name = q["name"].as_str().unwrap();
            out.push((q.clone(), format!("convergence-{name}.svg")));
        }
    };
    for q in v["quantities"].as_array().unwrap() {
        push(q);
    }
    for s in v["sweeps"].as_array().unwrap() {
        for b in s["breakdown"].as_array().unwrap() {
            push(&b["x_estimate"]);
            push(&b["reference_estimate"]);
        }
    }
    out
}

/// The text between the first `<title>` and `</title>`, with the five HTML entities undone.
fn page_title(html: &str) -> String {
    let start = html.find("<title>").expect("a title") + "<title>".len();
    let end = start + html[start..].find("</title>").expect("a closed title");
    html[start..end]
        .replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&#39;", "'")
        .replace("&amp;", "&")
}

#[test]
fn report_writes_the_pages_and_one_svg_per_figure() {
    let (_w, out) = report_of(STUDY);
    let v = json(&["assess", STUDY, "--format", "json"]);
    let mut want: BTreeSet<String> = ["report.md", "report.html"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    for (_, file) in estimated(&v) {
        want.insert(file);
    }
    for s in v["sweeps"].as_array().unwrap() {
        want.insert(format!("sweep-{}.svg", s["name"].as_str().unwrap()));
        // A breakdown figure per breakdown definition read on some mesh (tests/figures.rs).
        for b in s["breakdown"].as_array().unwrap() {
            if !b["per_mesh"].as_array().unwrap().is_empty() {
                let against = if b["abscissa"] == s["x"] {
                    String::new()
                } else {
                    format!("-{}", b["abscissa"].as_str().unwrap())
                };
                want.insert(format!(
                    "breakdown-{}-{}{against}.svg",
                    s["name"].as_str().unwrap(),
                    b["response"].as_str().unwrap()
                ));
            }
        }
    }
    // Every figure also as PNG and PDF, same stem.
    let figures: Vec<String> = want
        .iter()
        .filter(|n| n.ends_with(".svg"))
        .cloned()
        .collect();
    for f in figures {
        let stem = f.strip_suffix(".svg").unwrap();
        want.insert(format!("{stem}.png"));
        want.insert(format!("{stem}.pdf"));
    }
    let got = names(&out);
    assert_eq!(got, want);
    // Nothing but the folder itself is left beside it (no temporary folder).
    assert_eq!(
        names(out.parent().unwrap()),
        BTreeSet::from(["out".to_string()])
    );

    let svgs: Vec<&String> = got.iter().filter(|n| n.ends_with(".svg")).collect();
    let md = read(&out.join("report.md"));
    let html = read(&out.join("report.html"));
    // Every SVG is linked from the Markdown report, and nothing else is linked as an image.
    let linked: BTreeSet<String> = md
        .match_indices("](")
        .filter(|(i, _)| {
            md[..*i]
                .rfind("![")
                .is_some_and(|j| !md[j..*i].contains('\n'))
        })
        .map(|(i, _)| {
            let rest = &md[i + 2..];
            rest[..rest.find(')').unwrap()].to_string()
        })
        .collect();
    assert_eq!(
        linked,
        svgs.iter().map(|s| s.to_string()).collect::<BTreeSet<_>>()
    );
    assert!(!md.contains("<svg"));
    // Every SVG is inline in the HTML page (the same drawing; the page drops the namespace
    // attribute of the opening tag, which inline SVG does not need).
    assert_eq!(html.matches("<svg").count(), svgs.len());
    for s in &svgs {
        let svg = read(&out.join(s));
        let body = &svg[svg.find('>').unwrap() + 1..];
        assert!(
            html.contains(body.trim_end()),
            "{s} is not inline in report.html"
        );
    }
    // The paragraph and the caution, in both pages.
    let study = meshbound::study::load(&root().join(STUDY)).unwrap();
    let a = meshbound::assess::run(&study, &meshbound::sink::Skip).unwrap();
    let paragraph = meshbound::report::paragraph::uncertainty_paragraph(&a);
    let plain = html.replace('\u{a0}', " ");
    assert!(plain.contains(&meshbound::report::html::escape(&paragraph)));
    assert!(html.contains("Drafted uncertainty statement"));
    assert!(md.contains(&meshbound::report::markdown::escape(&paragraph)));
    assert!(html.contains(&meshbound::report::html::escape(&a.caution)));
    assert!(md.contains("> **Caution.**"));
    // Self-contained: no script, nothing that a browser would fetch, no address at all.
    for banned in [
        "<script", "http://", "https://", "<link", "@import", " src=", "url(",
    ] {
        assert!(!html.contains(banned), "report.html contains {banned}");
    }
    assert_eq!(page_title(&html), v["title"].as_str().unwrap());
}

/// The numeric `<text>` labels of the SVG's frame with the given anchor (`end`: the y axis,
/// `middle`: the x axis).
fn ticks(doc: &roxmltree::Document, anchor: &str) -> Vec<f64> {
    let frame = doc
        .descendants()
        .find(|n| n.has_tag_name("g") && n.attribute("class") == Some("frame"))
        .expect("a frame group");
    frame
        .descendants()
        .filter(|n| n.has_tag_name("text") && n.attribute("text-anchor") == Some(anchor))
        .filter_map(|n| n.text().and_then(|t| t.trim().parse::<f64>().ok()))
        .collect()
}

fn extent(v: impl IntoIterator<Item = f64>) -> (f64, f64) {
    v.into_iter()
        .filter(|x| x.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
            (a.min(x), b.max(x))
        })
}

/// The data range lies within the range of the tick labels (labels are rounded for display, so
/// compare with a tolerance of a thousandth of the tick span).
fn covers(what: &str, ticks: &[f64], data: (f64, f64)) {
    assert!(ticks.len() >= 3, "{what}: ticks {ticks:?}");
    let (lo, hi) = extent(ticks.iter().copied());
    let tol = 1e-3 * (hi - lo);
    assert!(
        lo <= data.0 + tol && data.1 <= hi + tol,
        "{what}: data {data:?} outside the tick labels {lo}..{hi} ({ticks:?})"
    );
}

fn f(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .filter_map(serde_json::Value::as_f64)
        .collect()
}

fn mesh_groups(doc: &roxmltree::Document) -> BTreeSet<String> {
    doc.descendants()
        .filter(|n| n.has_tag_name("g") && n.attribute("class") == Some("mesh"))
        .map(|n| n.attribute("data-mesh").expect("data-mesh").to_string())
        .collect()
}

#[test]
fn svg_figures_are_xml_with_a_group_per_mesh_and_ticks_around_the_data() {
    let (_w, out) = report_of(STUDY);
    let v = json(&["assess", STUDY, "--format", "json"]);
    let meshes: Vec<(String, f64)> = v["meshes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|m| {
            (
                m["name"].as_str().unwrap().to_string(),
                m["size"].as_f64().unwrap(),
            )
        })
        .collect();
    let all: BTreeSet<String> = meshes.iter().map(|m| m.0.clone()).collect();

    for (q, file) in estimated(&v) {
        let text = read(&out.join(&file));
        let doc = roxmltree::Document::parse(&text).unwrap_or_else(|e| panic!("{file}: {e}"));
        assert_eq!(doc.root_element().tag_name().name(), "svg");
        assert_eq!(mesh_groups(&doc), all, "{file}");
        // y: the values, the extrapolated value and value ± U.
        let mut ys = f(&q["values"]);
        let u = &q["uncertainty"];
        ys.extend(
            [u["lower"].as_f64(), u["upper"].as_f64()]
                .into_iter()
                .flatten(),
        );
        let tg = &q["three_grid"];
        let three_grid_governs = u["method"].as_str() == Some("three_grid");
        if three_grid_governs {
            ys.extend(tg["extrapolated"].as_f64());
        }
        covers(&format!("{file} y"), &ticks(&doc, "end"), extent(ys));
        // x: (h/h1)^p with the governing three-mesh order, down to h = 0.
        if q["least_squares"].is_null() {
            let p = tg["observed_order"]
                .as_f64()
                .filter(|p| *p > 0.0)
                .unwrap_or(2.0);
            let h1 = meshes[0].1;
            let mut xs: Vec<f64> = meshes.iter().map(|m| (m.1 / h1).powf(p)).collect();
            xs.push(0.0);
            covers(&format!("{file} x"), &ticks(&doc, "middle"), extent(xs));
        }
    }

    for s in v["sweeps"].as_array().unwrap() {
        let file = format!("sweep-{}.svg", s["name"].as_str().unwrap());
        let text = read(&out.join(&file));
        let doc = roxmltree::Document::parse(&text).unwrap_or_else(|e| panic!("{file}: {e}"));
        let sweep_meshes: BTreeSet<String> = s["meshes"]
            .as_array()
            .unwrap()
            .iter()
            .map(|m| m.as_str().unwrap().to_string())
            .collect();
        assert_eq!(mesh_groups(&doc), sweep_meshes, "{file}");
        let band = doc
            .descendants()
            .find(|n| n.has_tag_name("g") && n.attribute("class") == Some("band"))
            .expect("a band group");
        assert!(
            band.descendants()
                .any(|n| n.has_tag_name("polygon") || n.has_tag_name("path")),
            "the band group draws a shape"
        );
        // The plotted response: the band's.
        let response = s["band"]["response"].as_str().unwrap();
        let r = s["responses"]
            .as_array()
            .unwrap()
            .iter()
            .position(|x| x.as_str() == Some(response))
            .unwrap();
        let (mut xs, mut ys) = (Vec::new(), Vec::new());
        for c in s["curves"].as_array().unwrap() {
            xs.extend(f(&c["x"]));
            ys.extend(f(&c["responses"][r]));
        }
        for p in s["band"]["points"].as_array().unwrap() {
            ys.extend(
                [p["lower"].as_f64(), p["upper"].as_f64()]
                    .into_iter()
                    .flatten(),
            );
        }
        covers(&format!("{file} x"), &ticks(&doc, "middle"), extent(xs));
        covers(&format!("{file} y"), &ticks(&doc, "end"), extent(ys));
    }
}

/// A TeX engine on PATH, if any.
fn tex_engine() -> Option<&'static str> {
    ["pdflatex", "lualatex"].into_iter().find(|e| {
        Command::new(e)
            .arg("--version")
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .status()
            .is_ok_and(|s| s.success())
    })
}

#[test]
fn latex_fragments_of_every_example_study_compile() {
    let Some(engine) = tex_engine() else {
        println!("skipped: no TeX engine (pdflatex or lualatex) on PATH");
        return;
    };
    let studies = example_studies();
    for study in studies {
        let o = run(&["assess", study.to_str().unwrap(), "--format", "latex"]);
        assert_eq!(o.status.code(), Some(0), "{}", show(&o));
        let fragment = String::from_utf8(o.stdout).unwrap();
        let w = Workdir::new();
        w.write(
            "doc.tex",
            &format!(
                "\\documentclass{{article}}\n\\usepackage[T1]{{fontenc}}\n\\usepackage{{booktabs,array,tabularx}}\n\\begin{{document}}\n{fragment}\n\\end{{document}}\n"
            ),
        );
        let o = Command::new(engine)
            .args(["-interaction=nonstopmode", "-halt-on-error", "doc.tex"])
            .current_dir(w.path())
            .stdin(Stdio::null())
            .output()
            .expect("the TeX engine runs");
        assert!(
            o.status.success(),
            "{engine} failed on the fragment of {}\n{}",
            study.display(),
            String::from_utf8_lossy(&o.stdout)
        );
        assert!(w.path().join("doc.pdf").exists());
    }
}

const CHROMIUM: &str = "/usr/bin/chromium";

/// Runs a command to its end or kills it after `limit`.
fn run_with_limit(cmd: &mut Command, limit: Duration) -> Option<std::process::ExitStatus> {
    let mut child = cmd
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .ok()?;
    let start = Instant::now();
    loop {
        if let Ok(Some(status)) = child.try_wait() {
            return Some(status);
        }
        if start.elapsed() > limit {
            let _ = child.kill();
            let _ = child.wait();
            return None;
        }
        std::thread::sleep(Duration::from_millis(100));
    }
}

#[test]
fn html_page_renders_in_a_headless_browser() {
    if !Path::new(CHROMIUM).exists() {
        println!("skipped: {CHROMIUM} is not installed");
        return;
    }
    let (w, out) = report_of(STUDY);
    let html = out.join("report.html");
    let shot = w.path().join("shot.png");
    let profile = tempfile::tempdir().unwrap();
    let status = run_with_limit(
        Command::new(CHROMIUM).args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            &format!("--user-data-dir={}", profile.path().display()),
            &format!("--screenshot={}", shot.display()),
            "--window-size=1200,1600",
            &format!("file://{}", html.display()),
        ]),
        Duration::from_secs(120),
    );
    assert!(
        status.is_some(),
        "chromium did not finish within two minutes"
    );
    assert!(shot.exists(), "no screenshot (chromium: {status:?})");
    if let Ok(dir) = std::env::var("MESHBOUND_KEEP_SCREENSHOT") {
        let _ = std::fs::copy(&shot, Path::new(&dir).join("report-screenshot.png"));
    }
    let decoder = png::Decoder::new(std::io::BufReader::new(std::fs::File::open(&shot).unwrap()));
    let mut reader = decoder.read_info().expect("a PNG");
    let mut buf = vec![0; reader.output_buffer_size().expect("a size")];
    let info = reader.next_frame(&mut buf).expect("a frame");
    assert_eq!((info.width, info.height), (1200, 1600));
    let bytes = &buf[..info.buffer_size()];
    let px = info.color_type.samples()
        * match info.bit_depth {
            png::BitDepth::Sixteen => 2,
            _ => 1,
        };
    let first = &bytes[..px];
    let differing = bytes.chunks(px).filter(|p| *p != first).count();
    let total = bytes.len() / px;
    // Not blank: text and rules cover more than a thousandth of the page.
    assert!(
        differing * 1000 > total,
        "the screenshot is blank: {differing} of {total} pixels differ from the first"
    );
    // The page title is the study title (checked on the HTML text: a screenshot shows no title).
    let v = json(&["assess", STUDY, "--format", "json"]);
    assert_eq!(page_title(&read(&html)), v["title"].as_str().unwrap());
}

#[test]
fn an_existing_folder_is_refused_without_replace_and_replaced_with_it() {
    let w = Workdir::new();
    let out = w.path().join("out");
    std::fs::create_dir(&out).unwrap();
    std::fs::write(out.join("mine.txt"), "keep me").unwrap();
    let study = root().join(STUDY);
    let args = |extra: &[&'static str]| {
        let mut a = vec![
            "report".to_string(),
            study.display().to_string(),
            "--out".to_string(),
            out.display().to_string(),
        ];
        a.extend(extra.iter().map(|s| s.to_string()));
        a
    };
    let o = run(&args(&[]).iter().map(String::as_str).collect::<Vec<_>>());
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert_eq!(
        String::from_utf8_lossy(&o.stderr),
        format!(
            "error: {} exists: give --replace to replace it, or choose another --out\n",
            out.display()
        )
    );
    assert_eq!(names(&out), BTreeSet::from(["mine.txt".to_string()]));
    assert_eq!(read(&out.join("mine.txt")), "keep me");
    assert_eq!(w.files(), ["out"]);

    let o = run(&args(&["--replace"])
        .iter()
        .map(String::as_str)
        .collect::<Vec<_>>());
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let got = names(&out);
    assert!(
        got.contains("report.html") && !got.contains("mine.txt"),
        "{got:?}"
    );
    assert_eq!(w.files(), ["out"], "the old folder is deleted");
}

#[test]
fn bad_input_writes_nothing() {
    let w = Workdir::new();
    let bad = w.write("bad.yaml", "format: 1\ntitle: broken\nmeshes: []\n");
    let o = run_in(w.path(), &["report", bad.to_str().unwrap(), "--out", "out"]);
    assert_eq!(o.status.code(), Some(2), "{}", show(&o));
    assert_eq!(w.files(), ["bad.yaml"]);
}

#[test]
fn an_unwritable_place_gives_exit_3_and_leaves_nothing() {
    let w = Workdir::new();
    let study = root().join(STUDY);
    // The parent is a regular file: no folder can be made in it, whoever runs the test.
    let file = w.write("plain-file", "x");
    let out = file.join("out");
    let o = run(&[
        "report",
        study.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(3), "{}", show(&o));
    assert!(String::from_utf8_lossy(&o.stderr)
        .starts_with(&format!("error: cannot look at {}: ", out.display())));
    assert_eq!(w.files(), ["plain-file"]);
    assert_eq!(read(&file), "x");

    // A parent without write permission: refused by the file system, unless the test runs with
    // the power to ignore permission bits (root), which is then said and checked no further.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let locked = w.path().join("locked");
        std::fs::create_dir(&locked).unwrap();
        std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o555)).unwrap();
        let probe = locked.join("probe");
        if std::fs::create_dir(&probe).is_ok() {
            let _ = std::fs::remove_dir(&probe);
            println!("skipped: permission bits do not stop this user (root): the read-only parent case is not checked");
        } else {
            let out = locked.join("out");
            let o = run(&[
                "report",
                study.to_str().unwrap(),
                "--out",
                out.to_str().unwrap(),
            ]);
            assert_eq!(o.status.code(), Some(3), "{}", show(&o));
            assert_eq!(names(&locked).len(), 0, "nothing is left in the parent");
        }
        std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o755)).unwrap();
    }
}
