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
