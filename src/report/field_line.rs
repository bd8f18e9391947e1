//! The figure of a field column along a sampled line: the finest mesh's value with the band
//! value ± U, and the extrapolated value. Only drawing: the samples are the assessment's.

use super::plot::{mesh_style, Item, Layer, Marker, Sample, Scene};
use crate::field::profile::LineProfile;

fn point_words(p: &[f64; 3]) -> String {
    format!(
        "({}, {}, {})",
        super::format::num(p[0], 6),
        super::format::num(p[1], 6),
        super::format::num(p[2], 6)
    )
}

/// The scene of a line profile (`None` when no sample has a value).
pub fn scene(field: &str, prof: &LineProfile) -> Option<Scene> {
    let vals: Vec<(f64, f64)> = prof
        .samples
        .iter()
        .filter_map(|s| s.value.map(|v| (s.s, v)))
        .collect();
    if vals.is_empty() {
        return None;
    }
    let (_, _, pen) = mesh_style(0);
    let band_colour = plotters::style::RGBAColor(0x8F, 0xA9, 0xBF, 0.45);
    let banded: Vec<(f64, f64, f64)> = prof
        .samples
        .iter()
        .filter_map(|s| Some((s.s, s.value?, s.uncertainty?)))
        .collect();
    let mut layers = Vec::new();
    if banded.len() >= 2 {
        layers.push(Layer {
            class: "band",
            mesh: None,
            items: vec![Item::Band(
                banded.iter().map(|&(s, v, u)| (s, v + u)).collect(),
                banded.iter().map(|&(s, v, u)| (s, v - u)).collect(),
                band_colour,
            )],
        });
    }
    layers.push(Layer {
        class: "mesh",
        mesh: None,
        items: vec![Item::Line(vals, pen)],
    });
    let ink = plotters::style::RGBColor(0x1A, 0x1A, 0x1A);
    let ext: Vec<(f64, f64)> = prof
        .samples
        .iter()
        .filter_map(|s| s.extrapolated.map(|e| (s.s, e)))
        .collect();
    // Every few samples, so that the markers stay apart.
    let step = (ext.len() / 25).max(1);
    let ext: Vec<(f64, f64)> = ext.into_iter().step_by(step).collect();
    let mut legend = vec![("finest mesh".to_string(), Sample::Line(pen, None))];
    if banded.len() >= 2 {
        legend.push(("value ± U".into(), Sample::Swatch(band_colour)));
    }
    if !ext.is_empty() {
        layers.push(Layer {
            class: "extrapolated",
            mesh: None,
            items: vec![Item::Markers(ext, Marker::Ring, ink, 3)],
        });
        legend.push(("extrapolated".into(), Sample::Marker(Marker::Ring, ink, 3)));
    }
    let mut notes = Vec::new();
    if prof.outside > 0 {
        notes.push(format!(
            "{} of {} samples lie outside the field's points: left out, not extrapolated.",
            prof.outside,
            prof.samples.len()
        ));
    }
    Some(Scene {
        title: format!("{} along a line (field {field})", prof.column),
        subtitle: vec![format!(
            "from {} to {}, {} samples",
            point_words(&prof.from),
            point_words(&prof.to),
            prof.samples.len()
        )],
        x_desc: "distance along the line".into(),
        y_desc: prof.column.clone(),
        include_x: Vec::new(),
        layers,
        legend,
        notes,
    })
}

/// The SVG of [`scene`].
pub fn plot(field: &str, prof: &LineProfile) -> Option<String> {
    super::plot::render(&scene(field, prof)?)
}

/// Sentences on a field's options and its shares, transfer and comparison, for every format:
/// one line each (empty when the field has none of them).
pub fn extra_lines(f: &crate::field::FieldSummary) -> Vec<String> {
    use super::format::{num, percent, sig};
    let mut out = Vec::new();
    if let Some(s) = &f.setup {
        out.push(format!(
            "{} meshes, {}, estimated at {}; transfer in {}-D; shares weighted by {}.",
            s.meshes,
            if s.data == "meshes" {
                "VTK meshes".to_string()
            } else {
                s.data.replace('_', " ")
            },
            s.targets.replace('_', " "),
            s.dimension.map_or("–".to_string(), |d| d.to_string()),
            s.weighted_by
        ));
    }
    for c in &f.columns {
        if let Some(sh) = &c.class_shares {
            out.push(format!(
                "{}: share of the domain monotonic {}, oscillatory {}, divergent {}, no change {}, no estimate {}.",
                c.name,
                percent(sh.monotonic),
                percent(sh.oscillatory),
                percent(sh.divergent),
                percent(sh.no_change),
                percent(sh.none)
            ));
        }
        if let Some(t) = &c.transfer {
            out.push(format!(
                "{}: largest stated transfer error {}; {} points with a transfer error above 0.2 × U; {} points outside a coarser mesh.",
                c.name,
                t.max_error.map_or("–".to_string(), |e| sig(e, 3)),
                t.large_error_points,
                t.outside_points
            ));
        }
        if let Some(g) = &c.global_order {
            out.push(match g.order {
                Some(p) => format!(
                    "{}: one order at every point, p = {} ({:?} over {} points).",
                    c.name,
                    sig(p, 4),
                    g.basis,
                    g.from_points
                ),
                None => format!(
                    "{}: no global order could be formed ({:?}); the points keep their own.",
                    c.name, g.basis
                ),
            });
        }
        if let Some(n) = &c.noise_floor {
            out.push(format!(
                "{}: noise floor {}: {} points within it (U = the floor), {} partly.",
                c.name,
                num(n.floor, 6),
                n.within,
                n.partly_within
            ));
        }
    }
    if let Some(l) = &f.line {
        out.push(format!(
            "{} sampled along a line at {} points ({} outside the field); see the figure.",
            l.column,
            l.samples.len(),
            l.outside
        ));
    }
    if let Some(c) = &f.comparison {
        let what = if c.benchmark {
            "the published benchmark solution"
        } else {
            "measurements"
        };
        match &c.comparison {
            Some(cmp) => out.push(format!(
                "{} compared with {what} at {} points (ASME V&V 20): {} within k·u_val, largest |E| {}; {} points outside the field.",
                c.column,
                cmp.summary.points,
                cmp.summary.within,
                sig(cmp.summary.max_abs_error, 3),
                c.outside.len()
            )),
            None => out.push(format!(
                "{} not compared with {what}: every reference point lies outside the field.",
                c.column
            )),
        }
    }
    out
}

/// What a field's targets are called: `points` for the points of a mesh, `probes` for probe
/// files and probe sets.
pub fn place_word(f: &crate::field::FieldSummary) -> &'static str {
    match &f.setup {
        Some(s) if s.data == "meshes" && s.targets != "probe_points" => "points",
        _ => "probes",
    }
}
