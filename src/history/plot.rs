//! The figure of one monitor history: the samples, the detected steady part shaded, the mean of
//! the steady part and its band mean ± U (the expanded statistical uncertainty). A [`Scene`] of
//! plain data drawn by the report's SVG renderer ([`crate::report::plot::render`]); nothing here
//! computes a figure the [`HistoryResult`] does not hold.
//!
//! Long histories are thinned for drawing: the samples are cut into at most [`MAX_BUCKETS`]
//! runs and each run is drawn by its first, smallest, largest and last sample, so the envelope
//! of the signal is kept.

use super::{HistoryResult, Status};
use crate::report::format::{num, sig, with_uncertainty};
use crate::report::plot::{render, Dash, Item, Layer, Pen, Sample, Scene};
use plotters::style::{RGBAColor, RGBColor};

/// At most this many runs of samples are drawn (four points each).
pub const MAX_BUCKETS: usize = 1500;

const SIGNAL: RGBColor = RGBColor(0x1F, 0x3B, 0x57);
const MEAN: RGBColor = RGBColor(0xB4, 0x53, 0x2A);
const STEADY: RGBAColor = RGBAColor(0xD8, 0xD2, 0xC0, 0.40);
const BAND: RGBAColor = RGBAColor(0xB4, 0x53, 0x2A, 0.30);

/// The points drawn for a history: every sample when there are few, otherwise the first,
/// smallest, largest and last sample of each run (in the order they occur).
pub fn thinned(x: &[f64], y: &[f64]) -> Vec<(f64, f64)> {
    let n = x.len().min(y.len());
    if n <= 4 * MAX_BUCKETS {
        return x.iter().copied().zip(y.iter().copied()).take(n).collect();
    }
    let mut out = Vec::with_capacity(4 * MAX_BUCKETS);
    for b in 0..MAX_BUCKETS {
        let (a, e) = (b * n / MAX_BUCKETS, ((b + 1) * n / MAX_BUCKETS).min(n));
        if a >= e {
            continue;
        }
        let (mut lo, mut hi) = (a, a);
        for i in a..e {
            if y[i] < y[lo] {
                lo = i;
            }
            if y[i] > y[hi] {
                hi = i;
            }
        }
        let mut idx = [a, lo, hi, e - 1];
        idx.sort_unstable();
        let mut last = usize::MAX;
        for i in idx {
            if i != last {
                out.push((x[i], y[i]));
                last = i;
            }
        }
    }
    out
}

/// The scene of [`history_plot`]: `values` the samples, `x` their abscissa (the sample index
/// when `None`) named `x_name`, `r` their reduction. `None` when nothing finite can be drawn.
pub fn history_scene(
    values: &[f64],
    x: Option<&[f64]>,
    x_name: Option<&str>,
    r: &HistoryResult,
) -> Option<Scene> {
    let n = values.len();
    if n == 0 || x.is_some_and(|x| x.len() != n) {
        return None;
    }
    let xs: Vec<f64> = match x {
        Some(x) => x.to_vec(),
        None => (0..n).map(|i| i as f64).collect(),
    };
    let pts: Vec<(f64, f64)> = thinned(&xs, values)
        .into_iter()
        .filter(|p| p.0.is_finite() && p.1.is_finite())
        .collect();
    if pts.is_empty() {
        return None;
    }
    let (lo, hi) = pts
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
            (a.min(p.1), b.max(p.1))
        });
    let start = r.steady.start_index.min(n - 1);
    let (x0, x1) = (xs[start], xs[n - 1]);
    let unit = r.unit.as_deref().map_or(String::new(), |u| format!(" {u}"));
    let mut layers = Vec::new();
    let mut legend = Vec::new();
    let mut notes = Vec::new();
    let mut subtitle = Vec::new();

    if r.status != Status::TooShort && x1 > x0 {
        layers.push(Layer {
            class: "steady",
            mesh: None,
            items: vec![Item::Band(
                vec![(x0, hi), (x1, hi)],
                vec![(x0, lo), (x1, lo)],
                STEADY,
            )],
        });
        legend.push((
            format!("steady part (from {})", num(x0, 6)),
            Sample::Swatch(STEADY),
        ));
    }
    if let Some(s) = &r.statistical {
        let (m, u) = (r.mean, s.expanded);
        if u > 0.0 && x1 > x0 {
            layers.push(Layer {
                class: "uncertainty",
                mesh: None,
                items: vec![Item::Band(
                    vec![(x0, m + u), (x1, m + u)],
                    vec![(x0, m - u), (x1, m - u)],
                    BAND,
                )],
            });
            legend.push((
                format!("mean ± U ({:.0} %)", 100.0 * s.coverage),
                Sample::Swatch(BAND),
            ));
        }
        let (v, uu) = with_uncertainty(m, u);
        subtitle.push(format!(
            "mean {v} ± {uu}{unit} ({:.0} %, batch means, {} batches)",
            100.0 * s.coverage,
            s.batches
        ));
    }
    let signal = Pen {
        colour: SIGNAL,
        width: 1,
        dash: Dash::Solid,
    };
    layers.push(Layer {
        class: "history",
        mesh: None,
        items: vec![Item::Line(pts, signal)],
    });
    legend.push((r.column.clone(), Sample::Line(signal, None)));
    if x1 > x0 {
        let pen = Pen {
            colour: MEAN,
            width: 2,
            dash: Dash::Dashed(8, 4),
        };
        layers.push(Layer {
            class: "mean",
            mesh: None,
            items: vec![Item::Line(vec![(x0, r.mean), (x1, r.mean)], pen)],
        });
        legend.push(("mean of the steady part".into(), Sample::Line(pen, None)));
    }
    let at = match (x, x_name) {
        (Some(_), Some(name)) => format!(" ({name} {})", num(x0, 6)),
        (Some(_), None) => format!(" (at {})", num(x0, 6)),
        _ => String::new(),
    };
    subtitle.push(format!(
        "{n} samples; steady part: {} samples from index {}{at}",
        r.steady.samples, r.steady.start_index
    ));
    match r.status {
        Status::Steady => {}
        Status::TooShort => {
            notes.push("Too short to judge: no statistical uncertainty is stated.".to_string())
        }
        Status::NoSteadyPart => notes.push(
            "No steady part found in the first half: no statistical uncertainty is stated."
                .to_string(),
        ),
    }
    if let Some(i) = &r.iterative {
        notes.push(format!(
            "Final window of {} samples: half range {}, drift {}{unit} ({} governs).",
            i.window_samples,
            sig(i.half_range, 3),
            sig(i.drift, 3),
            i.governs.replace('_', " ")
        ));
    }
    notes.push(
        "Statistical and iterative uncertainty are not model-test acceptance; defer to the \
         applicable test codes and licensed engineering judgment."
            .to_string(),
    );
    Some(Scene {
        title: format!("History of {}", r.column),
        subtitle,
        x_desc: x_name.unwrap_or("sample index").to_string(),
        y_desc: format!("{}{unit}", r.column),
        include_x: Vec::new(),
        layers,
        legend,
        notes,
    })
}

/// The history figure as one SVG document (see [`history_scene`]); `x_name` labels the
/// abscissa (for example `Time` or `iteration`).
pub fn history_plot(
    values: &[f64],
    x: Option<&[f64]>,
    x_name: Option<&str>,
    r: &HistoryResult,
) -> Option<String> {
    render(&history_scene(values, x, x_name, r)?)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::history::{analyse_values, HistorySettings};

    #[test]
    fn thinning_keeps_the_envelope() {
        // Analytic: the extremes of every run survive thinning.
        let n = 100_000;
        let x: Vec<f64> = (0..n).map(|i| i as f64).collect();
        let y: Vec<f64> = (0..n).map(|i| ((i * 37) % 101) as f64).collect();
        let t = thinned(&x, &y);
        assert!(t.len() <= 4 * MAX_BUCKETS);
        let max = t.iter().map(|p| p.1).fold(f64::NEG_INFINITY, f64::max);
        let min = t.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
        assert_eq!((max, min), (100.0, 0.0));
        assert!(t.windows(2).all(|w| w[1].0 > w[0].0));
    }

    #[test]
    fn the_figure_has_its_parts() {
        let mut v = vec![5.0; 30];
        v.extend((0..600).map(|i| 1.0 + 0.1 * ((i * 17 % 23) as f64 - 11.0) / 11.0));
        let r = analyse_values(&v, None, &HistorySettings::default()).unwrap();
        let svg = history_plot(&v, None, Some("iteration"), &r).unwrap();
        let doc = roxmltree::Document::parse(&svg).unwrap();
        let classes: Vec<&str> = doc
            .descendants()
            .filter_map(|n| n.attribute("class"))
            .collect();
        for c in [
            "frame",
            "steady",
            "uncertainty",
            "history",
            "mean",
            "legend",
        ] {
            assert!(classes.contains(&c), "{c} missing: {classes:?}");
        }
        assert!(!svg.contains("NaN"));
        assert!(svg.contains("iteration"));
    }
}
