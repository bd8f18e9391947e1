//! Duty curves in every format: the table blocks of the markup formats, the text block of the
//! terminal table, and the figure of each series against the flow. Only formatting: every
//! number is one the assessment holds.

use super::format::{num, percent, with_uncertainty, NOT_COMPUTED, NOT_DEMONSTRATED};
use super::markup::{Align, Block, Cell, Span, TableBlock};
use super::plot::{mesh_style, Item, Layer, Marker, MeasuredPoint, Sample, Scene};
use super::table::symbol;
use crate::assess::duty::{DutyCurveResult, DutyPoint, DutySeriesResult};
use crate::study::duty::SeriesKind;

/// The series in words, with its unit: "NPSH3 (3 % drop of head) \[m\]",
/// "σ at a 1 % drop of efficiency", "head without cavitation \[m\]".
pub fn series_label(s: &DutySeriesResult) -> String {
    let unit = s
        .unit
        .as_deref()
        .filter(|u| !u.is_empty() && *u != "-")
        .map_or(String::new(), |u| format!(" [{u}]"));
    match s.kind {
        SeriesKind::Breakdown => {
            let drop = if s.relative {
                percent(s.drop)
            } else {
                num(s.drop, 6)
            };
            // NPSH3 is the trade's name for the NPSH at a 3 % head drop (ISO 9906, from memory).
            let npsh3 = s.quantity == "npsh"
                && s.relative
                && (s.drop - 0.03).abs() < 1e-12
                && s.response == "head";
            if npsh3 {
                format!("NPSH3 (3 % drop of head){unit}")
            } else {
                format!(
                    "{} at a {drop} drop of {}{unit}",
                    symbol(&s.quantity),
                    s.response
                )
            }
        }
        SeriesKind::Reference => format!("{} without cavitation{unit}", s.response),
    }
}

fn class_of(p: &DutyPoint) -> &'static str {
    if p.not_computed.is_some() {
        NOT_COMPUTED
    } else if !p.demonstrated && p.convergence != Some(crate::estimate::Convergence::Divergent) {
        NOT_DEMONSTRATED
    } else {
        p.convergence.map_or("no estimate", |c| c.label())
    }
}

fn value_cells(p: &DutyPoint) -> (Cell, Cell) {
    match (p.value, p.absolute) {
        (Some(v), Some(u)) => {
            let (v, u) = with_uncertainty(v, u);
            (Cell::Num(v), Cell::Num(u))
        }
        (Some(v), None) => (Cell::Num(num(v, 6)), Cell::Missing),
        _ => (Cell::Missing, Cell::Missing),
    }
}

/// The table of one duty curve: one row per series and flow (five columns, so that it fits a
/// column of a two-column page).
pub fn curve_table(c: &DutyCurveResult) -> TableBlock {
    let flow = format!("Q [{}]", c.flow_unit);
    let mut t = TableBlock {
        caption: format!(
            "Duty curve {}: each point is the governing estimate of the sweep at that flow; U is \
             the expanded uncertainty of the finest mesh's value",
            c.name
        ),
        headers: vec![
            "quantity".into(),
            flow,
            "value".into(),
            "U".into(),
            "class".into(),
        ],
        align: vec![
            Align::Left,
            Align::Right,
            Align::Right,
            Align::Right,
            Align::Left,
        ],
        rows: Vec::new(),
    };
    for s in &c.series {
        let label = series_label(s);
        for (i, p) in s.points.iter().enumerate() {
            let (v, u) = value_cells(p);
            t.rows.push(vec![
                Cell::Text(if i == 0 { label.clone() } else { String::new() }),
                Cell::Num(num(p.flow, 6)),
                v,
                u,
                Cell::Text(class_of(p).into()),
            ]);
        }
    }
    t
}

/// The comparison table of a series with measured points at its flows.
pub fn comparison_table(c: &DutyCurveResult, s: &DutySeriesResult) -> Option<TableBlock> {
    let cmp = s.comparison.as_ref()?;
    let mut t = TableBlock {
        caption: format!(
            "Duty curve {}, {}: simulation S against measured D at the flows of the curve \
             (ASME V&V 20: E = S − D, u_val from u_num, u_D)",
            c.name,
            series_label(s)
        ),
        headers: vec![
            format!("Q [{}]", c.flow_unit),
            "S".into(),
            "D".into(),
            "E".into(),
            "u_val".into(),
        ],
        align: vec![Align::Right; 5],
        rows: Vec::new(),
    };
    for p in &cmp.points {
        t.rows.push(vec![
            Cell::Num(num(p.x, 6)),
            Cell::Num(num(p.simulation, 6)),
            Cell::Num(num(p.measured, 6)),
            Cell::Num(num(p.error, 4)),
            p.u_val.map_or(Cell::Missing, |u| Cell::Num(num(u, 3))),
        ]);
    }
    Some(t)
}

/// The markup blocks of every duty curve (nothing when there is none).
pub fn blocks(curves: &[DutyCurveResult]) -> Vec<Block> {
    let mut out = Vec::new();
    if curves.is_empty() {
        return out;
    }
    out.push(Block::Heading(2, "Duty curves".into()));
    for c in curves {
        out.push(Block::Heading(3, format!("Duty curve {}", c.name)));
        out.push(Block::Paragraph(vec![Span::Text(format!(
            "Sweeps at {} flows ({}); each value is the result of the sweep at that flow, with \
             the uncertainty its own estimate states.",
            c.flows.len(),
            c.sweeps.join(", ")
        ))]));
        out.push(Block::Table(curve_table(c)));
        for s in &c.series {
            if let Some(t) = comparison_table(c, s) {
                out.push(Block::Table(t));
            }
        }
    }
    out
}

/// The terminal text of every duty curve.
pub fn text(curves: &[DutyCurveResult], out: &mut String) {
    use comfy_table::{presets, CellAlignment, ContentArrangement, Table};
    for c in curves {
        out.push_str(&format!(
            "\nduty curve {} — {} flows, sweeps {}\n",
            c.name,
            c.flows.len(),
            c.sweeps.join(", ")
        ));
        for s in &c.series {
            out.push_str(&format!("  {}\n", series_label(s)));
            let mut t = Table::new();
            t.load_preset(presets::NOTHING)
                .set_content_arrangement(ContentArrangement::Disabled)
                .set_header(vec![
                    format!("Q [{}]", c.flow_unit),
                    "value".into(),
                    "U".into(),
                    "class".into(),
                ]);
            for i in 0..3 {
                if let Some(col) = t.column_mut(i) {
                    col.set_cell_alignment(CellAlignment::Right);
                }
            }
            for p in &s.points {
                let (v, u) = match (p.value, p.absolute) {
                    (Some(v), Some(u)) => with_uncertainty(v, u),
                    (Some(v), None) => (num(v, 6), "–".into()),
                    _ => ("–".into(), "–".into()),
                };
                t.add_row(vec![num(p.flow, 6), v, u, class_of(p).into()]);
            }
            for line in t.to_string().lines() {
                out.push_str("  ");
                out.push_str(line.trim_end());
                out.push('\n');
            }
            if let Some(cmp) = &s.comparison {
                out.push_str(&format!(
                    "  against measured (ASME V&V 20): {} of {} points with |E| ≤ k·u_val\n",
                    cmp.summary.within, cmp.summary.points
                ));
                for p in &cmp.points {
                    out.push_str(&format!(
                        "    Q {}: S {}, D {}, E {}, u_val {}\n",
                        num(p.x, 6),
                        num(p.simulation, 6),
                        num(p.measured, 6),
                        num(p.error, 4),
                        p.u_val.map_or("–".to_string(), |u| num(u, 3))
                    ));
                }
            }
        }
    }
}

/// The figure of one series against the flow: the finest mesh's values joined by a line, the
/// band value ± U shaded with a bar at each flow, the extrapolated values, measured points.
pub fn scene(c: &DutyCurveResult, s: &DutySeriesResult) -> Option<Scene> {
    let pts: Vec<&DutyPoint> = s.points.iter().filter(|p| p.value.is_some()).collect();
    if pts.is_empty() {
        return None;
    }
    let (colour, marker, pen) = mesh_style(0);
    let mut layers = Vec::new();
    let banded: Vec<&&DutyPoint> = pts
        .iter()
        .filter(|p| p.lower.is_some() && p.upper.is_some())
        .collect();
    let band_colour = plotters::style::RGBAColor(0x8F, 0xA9, 0xBF, 0.45);
    if banded.len() >= 2 {
        layers.push(Layer {
            class: "band",
            mesh: None,
            items: vec![Item::Band(
                banded
                    .iter()
                    .map(|p| (p.flow, p.upper.unwrap_or(0.0)))
                    .collect(),
                banded
                    .iter()
                    .map(|p| (p.flow, p.lower.unwrap_or(0.0)))
                    .collect(),
                band_colour,
            )],
        });
    }
    let mut bars = Vec::new();
    for p in &banded {
        if let (Some(lo), Some(hi)) = (p.lower, p.upper) {
            bars.push(Item::BarY(p.flow, lo, hi, colour));
        }
    }
    let line: Vec<(f64, f64)> = pts
        .iter()
        .map(|p| (p.flow, p.value.unwrap_or(0.0)))
        .collect();
    let mut items = vec![
        Item::Line(line.clone(), pen),
        Item::Markers(line, marker, colour, 5),
    ];
    items.extend(bars);
    layers.push(Layer {
        class: "mesh",
        mesh: None,
        items,
    });
    let ext: Vec<(f64, f64)> = pts
        .iter()
        .filter_map(|p| p.extrapolated.map(|e| (p.flow, e)))
        .collect();
    let ink = plotters::style::RGBColor(0x1A, 0x1A, 0x1A);
    if !ext.is_empty() {
        layers.push(Layer {
            class: "extrapolated",
            mesh: None,
            items: vec![Item::Markers(ext.clone(), Marker::Target, ink, 6)],
        });
    }
    let measured: Vec<MeasuredPoint> = s
        .measured
        .iter()
        .map(|m| MeasuredPoint {
            x: m[0],
            y: m[1],
            u: m[2],
        })
        .collect();
    let meas_colour = plotters::style::RGBColor(0xB4, 0x53, 0x2A);
    if !measured.is_empty() {
        let mut items = vec![Item::Markers(
            measured.iter().map(|m| (m.x, m.y)).collect(),
            Marker::Plus,
            meas_colour,
            6,
        )];
        for m in &measured {
            if m.u > 0.0 && m.u.is_finite() {
                items.push(Item::BarY(m.x, m.y - m.u, m.y + m.u, meas_colour));
            }
        }
        layers.push(Layer {
            class: "measured",
            mesh: None,
            items,
        });
    }
    let mut legend = vec![(
        "finest mesh".to_string(),
        Sample::Line(pen, Some((marker, colour, 5))),
    )];
    if banded.len() >= 2 {
        legend.push(("value ± U".into(), Sample::Swatch(band_colour)));
    }
    if !ext.is_empty() {
        legend.push((
            "extrapolated".into(),
            Sample::Marker(Marker::Target, ink, 6),
        ));
    }
    if !measured.is_empty() {
        legend.push((
            "measured ± u".into(),
            Sample::Marker(Marker::Plus, meas_colour, 6),
        ));
    }
    let mut notes = vec![
        "Numerical uncertainty of computed values only: not a model-test acceptance of the \
         machine's performance. Duty limits follow the applicable test codes, local regulations \
         and licensed engineering judgment."
            .to_string(),
    ];
    let undemonstrated = s.points.iter().filter(|p| !p.demonstrated).count();
    if undemonstrated > 0 {
        notes.push(format!(
            "Convergence not demonstrated at {undemonstrated} of {} flows: no defensible band there.",
            s.points.len()
        ));
    }
    Some(Scene {
        title: format!("{} against the flow", series_label(s)),
        subtitle: vec![format!(
            "duty curve {}, sweeps {}",
            c.name,
            c.sweeps.join(", ")
        )],
        x_desc: format!("Q [{}]", c.flow_unit),
        y_desc: series_label(s),
        include_x: Vec::new(),
        layers,
        legend,
        notes,
    })
}

/// The SVG of [`scene`].
pub fn plot(c: &DutyCurveResult, s: &DutySeriesResult) -> Option<String> {
    super::plot::render(&scene(c, s)?)
}
