//! SVG figures drawn with plotters' SVG backend (no fonts are loaded: the backend writes
//! `<text>` elements and the viewer sets them).
//!
//! Every figure is first described as a [`Scene`] of plain data — lines, markers, bands and
//! error bars in data coordinates, each in a named layer — and then drawn. Each layer is drawn
//! into its own SVG buffer with the same chart geometry and the results are stacked into one
//! document, each layer in a `<g>` group (`class="mesh"` with `data-mesh="…"` for a mesh), so
//! that the parts of a figure can be found, styled or hidden in the SVG.
//!
//! Meshes are told apart by marker shape, fill and dash pattern as well as colour, so the
//! figures stay readable printed in grey. Non-finite figures are skipped; no `NaN` reaches the
//! SVG. The curves drawn (the Richardson line, the least-squares fit, the band) are figures the
//! assessment holds, evaluated only to be drawn.

use super::format::{governing_label, governing_order, num, sig};
use super::table::{breakdown_rule, statement, symbol};
use crate::assess::sweep::{BreakdownResult, CurveResult, SweepResult};
use crate::assess::{Assessment, Method, QuantityResult, Role};
use crate::grid::Mesh;
use plotters::coord::ranged1d::{DefaultFormatting, KeyPointHint, Ranged};
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// A measured point to show beside the computed curves, with its uncertainty in y
/// (absolute; zero or non-finite draws no bar).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeasuredPoint {
    /// Abscissa.
    pub x: f64,
    /// Measured value.
    pub y: f64,
    /// Absolute uncertainty of the measured value.
    pub u: f64,
}

/// Figure width in pixels.
pub const WIDTH: u32 = 880;
/// Figure height in pixels.
pub const HEIGHT: u32 = 540;
/// Width of the legend column at the right.
const LEGEND: u32 = 260;
/// Height of the title block above the chart.
const TOP: u32 = 78;
/// Font family of every text.
const FONT: &str = "sans-serif";

/// Marker shapes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Marker {
    /// Filled circle.
    Disc,
    /// Open triangle.
    Triangle,
    /// Filled square.
    Square,
    /// Open diamond.
    Diamond,
    /// Diagonal cross.
    Cross,
    /// Open circle.
    Ring,
    /// Open circle with an upright cross (the extrapolated value).
    Target,
    /// Upright cross, bold (measured points).
    Plus,
}

/// Line pattern.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Dash {
    /// Unbroken.
    Solid,
    /// Dashes of the given length and gap, in pixels.
    Dashed(u32, u32),
}

/// Stroke of a line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pen {
    /// Colour.
    pub colour: RGBColor,
    /// Width in pixels.
    pub width: u32,
    /// Pattern.
    pub dash: Dash,
}

/// What is drawn, in data coordinates.
#[derive(Debug, Clone, PartialEq)]
pub enum Item {
    /// A polyline.
    Line(Vec<(f64, f64)>, Pen),
    /// Markers of one shape, colour and size (pixels).
    Markers(Vec<(f64, f64)>, Marker, RGBColor, i32),
    /// A shaded band between an upper and a lower curve (same abscissae).
    Band(Vec<(f64, f64)>, Vec<(f64, f64)>, RGBAColor),
    /// A vertical error bar at x from `lo` to `hi`.
    BarY(f64, f64, f64, RGBColor),
    /// A horizontal error bar at y from `lo` to `hi`.
    BarX(f64, f64, f64, RGBColor),
}

/// A group of items, written as one `<g>` element.
#[derive(Debug, Clone, PartialEq)]
pub struct Layer {
    /// The group's class (`mesh`, `band`, `fit`, …).
    pub class: &'static str,
    /// The mesh this layer belongs to, if any (`data-mesh`).
    pub mesh: Option<String>,
    /// What it draws.
    pub items: Vec<Item>,
}

/// The sample drawn beside a legend label.
#[derive(Debug, Clone, PartialEq)]
pub enum Sample {
    /// A line, with a marker on it.
    Line(Pen, Option<(Marker, RGBColor, i32)>),
    /// A marker.
    Marker(Marker, RGBColor, i32),
    /// A filled swatch.
    Swatch(RGBAColor),
    /// A vertical error bar.
    BarY(RGBColor),
    /// A horizontal error bar.
    BarX(RGBColor),
}

/// A figure as plain data.
#[derive(Debug, Clone, PartialEq)]
pub struct Scene {
    /// Title line.
    pub title: String,
    /// Lines under the title.
    pub subtitle: Vec<String>,
    /// Abscissa label.
    pub x_desc: String,
    /// Ordinate label.
    pub y_desc: String,
    /// Values the axes must include besides the items (for example x = 0).
    pub include_x: Vec<f64>,
    /// Layers, drawn in order.
    pub layers: Vec<Layer>,
    /// Legend entries.
    pub legend: Vec<(String, Sample)>,
    /// Sentences under the legend.
    pub notes: Vec<String>,
}

// Our palette: dark enough to print, distinct in hue, and backed by marker and dash.
const INK: RGBColor = RGBColor(0x1A, 0x1A, 0x1A);
const GREY_TEXT: RGBColor = RGBColor(0x44, 0x44, 0x44);
const GRID_LIGHT: RGBColor = RGBColor(0xEC, 0xEC, 0xEC);
const GRID_BOLD: RGBColor = RGBColor(0xD4, 0xD4, 0xD4);
const FIT: RGBColor = RGBColor(0x4A, 0x4A, 0x4A);
const BAND: RGBAColor = RGBAColor(0x8F, 0xA9, 0xBF, 0.45);
const MESH_COLOURS: [RGBColor; 6] = [
    RGBColor(0x1F, 0x3B, 0x57), // slate
    RGBColor(0xB4, 0x53, 0x2A), // rust
    RGBColor(0x3E, 0x7D, 0x4F), // moss
    RGBColor(0x6D, 0x4C, 0x8F), // plum
    RGBColor(0x8C, 0x7A, 0x2B), // ochre
    RGBColor(0x2F, 0x7F, 0x8C), // teal
];
const MESH_MARKERS: [Marker; 6] = [
    Marker::Disc,
    Marker::Triangle,
    Marker::Square,
    Marker::Diamond,
    Marker::Cross,
    Marker::Ring,
];
const MESH_DASHES: [Dash; 6] = [
    Dash::Solid,
    Dash::Dashed(10, 5),
    Dash::Dashed(3, 4),
    Dash::Dashed(16, 5),
    Dash::Dashed(7, 3),
    Dash::Dashed(2, 7),
];

/// Colour, marker and line of the `i`-th mesh, finest first.
pub fn mesh_style(i: usize) -> (RGBColor, Marker, Pen) {
    let k = i % MESH_COLOURS.len();
    let colour = MESH_COLOURS[k];
    (
        colour,
        MESH_MARKERS[k],
        Pen {
            colour,
            width: 2,
            dash: MESH_DASHES[k],
        },
    )
}

fn finite(p: &(f64, f64)) -> bool {
    p.0.is_finite() && p.1.is_finite()
}

/// `name (symbol)` when the trade has a symbol for the name, else the name.
fn axis_name(name: &str) -> String {
    let s = symbol(name);
    if s == name {
        name.to_string()
    } else {
        format!("{name} ({s})")
    }
}

fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines = Vec::new();
    let mut line = String::new();
    for word in text.split_whitespace() {
        if !line.is_empty() && line.chars().count() + 1 + word.chars().count() > width {
            lines.push(std::mem::take(&mut line));
        }
        if !line.is_empty() {
            line.push(' ');
        }
        line.push_str(word);
    }
    if !line.is_empty() {
        lines.push(line);
    }
    lines
}

fn escape_xml(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

// ---------------------------------------------------------------------------------------------
// Drawing a scene.

type Chart<'a, 'b> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<Coord, Coord>>;

/// A linear f64 axis with the tick and light grid values we choose (labels are formatted by
/// [`tick`], so the default formatting is never used).
struct Coord {
    inner: RangedCoordf64,
    ticks: Vec<f64>,
    light: Vec<f64>,
}

impl Ranged for Coord {
    type ValueType = f64;
    type FormatOption = DefaultFormatting;

    fn map(&self, value: &f64, limit: (i32, i32)) -> i32 {
        self.inner.map(value, limit)
    }

    fn key_points<Hint: KeyPointHint>(&self, hint: Hint) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            self.light.clone()
        } else {
            self.ticks.clone()
        }
    }

    fn range(&self) -> std::ops::Range<f64> {
        self.inner.range()
    }
}

/// At most this many tick labels on the y axis.
const TICKS: usize = 8;
/// At most this many tick labels on the x axis (it is the longer).
const TICKS_X: usize = 10;
/// Room beyond the outermost ticks, as a share of their span.
const MARGIN: f64 = 0.03;

/// An axis: its range, the values of its tick labels and of its light grid lines.
#[derive(Debug, Clone, PartialEq)]
struct Axis {
    lo: f64,
    hi: f64,
    ticks: Vec<f64>,
    light: Vec<f64>,
}

impl Axis {
    fn coord(&self) -> Coord {
        Coord {
            inner: (self.lo..self.hi).into(),
            ticks: self.ticks.clone(),
            light: self.light.clone(),
        }
    }
}

/// Round ticks over a range: a step of 1, 2 or 5 × 10^k giving at most `max` ticks, from the
/// last tick at or below `lo` to the first at or above `hi`, so that the outermost tick labels
/// enclose every value drawn. The axis runs a little (`MARGIN` of the ticks' span) beyond the
/// outermost ticks, so that markers on them are not cut by the frame.
fn axis((lo, hi): (f64, f64), max: usize) -> Option<Axis> {
    if !(lo.is_finite() && hi.is_finite() && hi > lo) || max < 2 {
        return None;
    }
    let raw = (hi - lo) / (max - 1) as f64;
    let mag0 = 10f64.powf(raw.log10().floor());
    for mag in [mag0, 10.0 * mag0, 100.0 * mag0] {
        for (m, sub) in [(1.0, 5), (2.0, 4), (5.0, 5)] {
            let step = m * mag;
            let (k0, k1) = ((lo / step).floor(), (hi / step).ceil());
            if !(step > 0.0 && k0.is_finite() && k1.is_finite()) || k1 - k0 + 1.0 > max as f64 {
                continue;
            }
            let ticks: Vec<f64> = (0..=(k1 - k0) as usize)
                .map(|i| (k0 + i as f64) * step)
                .collect();
            let light = (0..(k1 - k0) as usize)
                .flat_map(|i| (1..sub).map(move |j| (k0 + i as f64 + j as f64 / sub as f64) * step))
                .collect();
            let margin = MARGIN * (k1 - k0) * step;
            let (a, b) = (k0 * step - margin, k1 * step + margin);
            return (a.is_finite() && b.is_finite() && b > a).then_some(Axis {
                lo: a,
                hi: b,
                ticks,
                light,
            });
        }
    }
    None
}

/// Round ticks inside a fixed range: the axis spans exactly `lo..hi` (a zoomed window), with
/// a step of 1, 2 or 5 × 10^k giving 3 to `max` ticks inside it.
fn axis_within((lo, hi): (f64, f64), max: usize) -> Option<Axis> {
    if !(lo.is_finite() && hi.is_finite() && hi > lo) || max < 3 {
        return None;
    }
    let raw = (hi - lo) / (max - 1) as f64;
    let mag0 = 10f64.powf(raw.log10().floor() - 1.0);
    let mut best: Option<(Vec<f64>, f64, usize)> = None;
    for mag in [mag0, 10.0 * mag0, 100.0 * mag0] {
        for (m, sub) in [(1.0, 5), (2.0, 4), (5.0, 5)] {
            let step = m * mag;
            let (k0, k1) = ((lo / step).ceil(), (hi / step).floor());
            if !(step > 0.0 && k0.is_finite() && k1.is_finite()) {
                continue;
            }
            let n = k1 - k0 + 1.0;
            if n > max as f64 || n < 3.0 {
                continue;
            }
            if best.is_none() {
                let ticks = (0..n as usize).map(|i| (k0 + i as f64) * step).collect();
                best = Some((ticks, step, sub));
            }
        }
    }
    let (ticks, step, sub) = best?;
    let fine = step / sub as f64;
    let (j0, j1) = ((lo / fine).ceil(), (hi / fine).floor());
    let light = if (j1 - j0) < 200.0 {
        (0..=(j1 - j0) as usize)
            .map(|i| (j0 + i as f64) * fine)
            .collect()
    } else {
        Vec::new()
    };
    Some(Axis {
        lo,
        hi,
        ticks,
        light,
    })
}

fn err<E: std::fmt::Display>(e: E) -> String {
    e.to_string()
}

/// The range of `values`, widened only when it is a single value: never empty or degenerate.
/// [`axis`] extends it to round ticks.
fn range(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    let (lo, hi) = values
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
            (lo.min(v), hi.max(v))
        });
    if !(lo.is_finite() && hi.is_finite()) {
        return None;
    }
    let span = hi - lo;
    let pad = if span > 0.0 {
        0.0
    } else if lo != 0.0 {
        0.05 * lo.abs()
    } else {
        1.0
    };
    let (a, b) = (lo - pad, hi + pad);
    (a.is_finite() && b.is_finite() && b > a).then_some((a, b))
}

fn scene_ranges(s: &Scene) -> Option<((f64, f64), (f64, f64))> {
    let mut xs = s.include_x.clone();
    let mut ys = Vec::new();
    for l in &s.layers {
        for it in &l.items {
            match it {
                Item::Line(p, _) | Item::Markers(p, ..) => {
                    for q in p.iter().filter(|q| finite(q)) {
                        xs.push(q.0);
                        ys.push(q.1);
                    }
                }
                Item::Band(u, w, _) => {
                    for q in u.iter().chain(w).filter(|q| finite(q)) {
                        xs.push(q.0);
                        ys.push(q.1);
                    }
                }
                Item::BarY(x, lo, hi, _) => {
                    xs.push(*x);
                    ys.extend([*lo, *hi]);
                }
                Item::BarX(y, lo, hi, _) => {
                    ys.push(*y);
                    xs.extend([*lo, *hi]);
                }
            }
        }
    }
    Some((range(xs.into_iter())?, range(ys.into_iter())?))
}

fn closed(pts: Vec<(i32, i32)>) -> Vec<(i32, i32)> {
    let mut v = pts.clone();
    if let Some(first) = pts.first() {
        v.push(*first);
    }
    v
}

/// Builds a marker centred on `at` (any coordinate system) and evaluates `$body` with it bound
/// to `$e`; each shape is its own element type, so the body is expanded once per shape.
macro_rules! with_marker {
    ($at:expr, $m:expr, $colour:expr, $s:expr, |$e:ident| $body:expr) => {{
        let (at, colour, s): (_, RGBColor, i32) = ($at, $colour, $s);
        let open = colour.stroke_width(2);
        let base = EmptyElement::at(at);
        match $m {
            Marker::Disc => {
                let $e = base + Circle::new((0, 0), s, colour.filled());
                $body
            }
            Marker::Ring => {
                let $e = base + Circle::new((0, 0), s, open);
                $body
            }
            Marker::Square => {
                let $e = base + Rectangle::new([(-s + 1, -s + 1), (s - 1, s - 1)], colour.filled());
                $body
            }
            Marker::Triangle => {
                let h = s + 1;
                let $e =
                    base + PathElement::new(closed(vec![(0, -h), (h, h - 1), (-h, h - 1)]), open);
                $body
            }
            Marker::Diamond => {
                let h = s + 1;
                let $e =
                    base + PathElement::new(closed(vec![(0, -h), (h, 0), (0, h), (-h, 0)]), open);
                $body
            }
            Marker::Cross => {
                let $e = base
                    + PathElement::new(vec![(-s, -s), (s, s)], open)
                    + PathElement::new(vec![(-s, s), (s, -s)], open);
                $body
            }
            Marker::Plus => {
                let bold = colour.stroke_width(3);
                let $e = base
                    + PathElement::new(vec![(-s, 0), (s, 0)], bold)
                    + PathElement::new(vec![(0, -s), (0, s)], bold);
                $body
            }
            Marker::Target => {
                let r = s + 2;
                let thin = colour.stroke_width(1);
                let $e = base
                    + Circle::new((0, 0), r, open)
                    + PathElement::new(vec![(-r - 3, 0), (r + 3, 0)], thin)
                    + PathElement::new(vec![(0, -r - 3), (0, r + 3)], thin);
                $body
            }
        }
    }};
}

fn draw_item(chart: &mut Chart<'_, '_>, item: &Item) -> Result<(), String> {
    match item {
        Item::Line(pts, pen) => {
            let pts: Vec<(f64, f64)> = pts.iter().copied().filter(finite).collect();
            if pts.len() < 2 {
                return Ok(());
            }
            let style = pen.colour.stroke_width(pen.width);
            match pen.dash {
                Dash::Solid => chart
                    .draw_series(LineSeries::new(pts, style))
                    .map(|_| ())
                    .map_err(err),
                Dash::Dashed(d, g) => chart
                    .draw_series(DashedLineSeries::new(pts, d, g, style))
                    .map(|_| ())
                    .map_err(err),
            }
        }
        Item::Markers(pts, m, c, s) => {
            for p in pts.iter().copied().filter(finite) {
                with_marker!(p, *m, *c, *s, |e| chart
                    .draw_series(std::iter::once(e))
                    .map_err(err)?);
            }
            Ok(())
        }
        Item::Band(upper, lower, fill) => {
            let mut poly: Vec<(f64, f64)> = upper.iter().copied().filter(finite).collect();
            poly.extend(lower.iter().rev().copied().filter(finite));
            if poly.len() < 3 {
                return Ok(());
            }
            chart
                .draw_series(std::iter::once(Polygon::new(poly, fill.filled())))
                .map(|_| ())
                .map_err(err)
        }
        Item::BarY(x, lo, hi, c) => {
            if !(x.is_finite() && lo.is_finite() && hi.is_finite()) {
                return Ok(());
            }
            let st = c.stroke_width(2);
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(*x, *lo), (*x, *hi)],
                    st,
                )))
                .map_err(err)?;
            chart
                .draw_series([*lo, *hi].into_iter().map(|y| {
                    EmptyElement::at((*x, y)) + PathElement::new(vec![(-7, 0), (7, 0)], st)
                }))
                .map(|_| ())
                .map_err(err)
        }
        Item::BarX(y, lo, hi, c) => {
            if !(y.is_finite() && lo.is_finite() && hi.is_finite()) {
                return Ok(());
            }
            let st = c.stroke_width(2);
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(*lo, *y), (*hi, *y)],
                    st,
                )))
                .map_err(err)?;
            chart
                .draw_series([*lo, *hi].into_iter().map(|x| {
                    EmptyElement::at((x, *y)) + PathElement::new(vec![(0, -7), (0, 7)], st)
                }))
                .map(|_| ())
                .map_err(err)
        }
    }
}

fn draw_sample(
    area: &DrawingArea<SVGBackend<'_>, Shift>,
    y: i32,
    sample: &Sample,
) -> Result<(), String> {
    let (x0, x1, xm) = (10, 46, 28);
    match sample {
        Sample::Line(pen, marker) => {
            let st = pen.colour.stroke_width(pen.width);
            match pen.dash {
                Dash::Solid => area
                    .draw(&PathElement::new(vec![(x0, y), (x1, y)], st))
                    .map_err(err)?,
                Dash::Dashed(d, g) => area
                    .draw(&DashedPathElement::new(vec![(x0, y), (x1, y)], d, g, st))
                    .map_err(err)?,
            }
            if let Some((m, c, s)) = marker {
                with_marker!((xm, y), *m, *c, *s, |e| area.draw(&e).map_err(err)?);
            }
            Ok(())
        }
        Sample::Marker(m, c, s) => {
            with_marker!((xm, y), *m, *c, *s, |e| area.draw(&e).map_err(err)?);
            Ok(())
        }
        Sample::Swatch(c) => area
            .draw(&Rectangle::new([(x0, y - 7), (x1, y + 7)], c.filled()))
            .map_err(err),
        Sample::BarY(c) => {
            let st = c.stroke_width(2);
            area.draw(&PathElement::new(vec![(xm, y - 9), (xm, y + 9)], st))
                .map_err(err)?;
            for yy in [y - 9, y + 9] {
                area.draw(&PathElement::new(vec![(xm - 6, yy), (xm + 6, yy)], st))
                    .map_err(err)?;
            }
            Ok(())
        }
        Sample::BarX(c) => {
            let st = c.stroke_width(2);
            area.draw(&PathElement::new(vec![(x0 + 2, y), (x1 - 2, y)], st))
                .map_err(err)?;
            for xx in [x0 + 2, x1 - 2] {
                area.draw(&PathElement::new(vec![(xx, y - 6), (xx, y + 6)], st))
                    .map_err(err)?;
            }
            Ok(())
        }
    }
}

fn draw_legend(
    area: &DrawingArea<SVGBackend<'_>, Shift>,
    s: &Scene,
    layout: &Layout,
) -> Result<(), String> {
    let label = TextStyle::from((FONT, 14).into_font())
        .color(&INK)
        .pos(Pos::new(HPos::Left, VPos::Center));
    let note = TextStyle::from((FONT, 12).into_font())
        .color(&GREY_TEXT)
        .pos(Pos::new(HPos::Left, VPos::Center));
    let mut y = layout.top as i32 + 8;
    for (text, sample) in &s.legend {
        draw_sample(area, y, sample)?;
        for (k, line) in wrap(text, 27).iter().enumerate() {
            if k > 0 {
                y += 16;
            }
            area.draw(&Text::new(line.clone(), (54, y), label.clone()))
                .map_err(err)?;
        }
        y += 26;
    }
    y += 6;
    for n in &s.notes {
        for line in wrap(n, 36) {
            area.draw(&Text::new(line, (10, y), note.clone()))
                .map_err(err)?;
            y += 15;
        }
        y += 6;
    }
    Ok(())
}

/// A tick label: rounded to ten significant digits, then shown as briefly as it reads.
fn tick(v: f64, zero: f64) -> String {
    if v.abs() <= zero {
        return "0".into();
    }
    let r: f64 = format!("{v:.9e}").parse().unwrap_or(v);
    num(r, 6)
}

#[derive(Clone, Copy)]
enum Part {
    Frame,
    Layer(usize),
    Legend,
}

/// The sizes of a figure (or of one panel of it), in pixels.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Layout {
    /// Width.
    pub width: u32,
    /// Height.
    pub height: u32,
    /// Width of the legend column at the right.
    pub legend: u32,
    /// Height of the title block above the chart.
    pub top: u32,
}

/// The layout of every one-panel figure: [`WIDTH`] × [`HEIGHT`].
pub const STANDARD: Layout = Layout {
    width: WIDTH,
    height: HEIGHT,
    legend: LEGEND,
    top: TOP,
};

/// The plotting area of a drawn chart, in pixels of its panel: left, top, right, bottom.
pub type PlotArea = (i32, i32, i32, i32);

/// Draws one part of a scene into its own SVG document; with it, the chart's plotting area.
fn draw_part(
    s: &Scene,
    x: &Axis,
    y: &Axis,
    part: Part,
    layout: &Layout,
) -> Result<(String, PlotArea), String> {
    let mut buf = String::new();
    let area;
    {
        let root =
            SVGBackend::with_string(&mut buf, (layout.width, layout.height)).into_drawing_area();
        let (plot, legend) = root.split_horizontally(layout.width.saturating_sub(layout.legend));
        let mut chart = ChartBuilder::on(&plot)
            .margin_top(layout.top)
            .margin_left(14)
            .margin_right(18)
            .margin_bottom(12)
            .x_label_area_size(54)
            .y_label_area_size(86)
            .build_cartesian_2d(x.coord(), y.coord())
            .map_err(err)?;
        let (px, py) = chart.plotting_area().get_pixel_range();
        area = (px.start, py.start, px.end, py.end);
        match part {
            Part::Frame => {
                root.fill(&WHITE).map_err(err)?;
                let title = TextStyle::from((FONT, 20).into_font().style(FontStyle::Bold))
                    .color(&INK)
                    .pos(Pos::new(HPos::Left, VPos::Top));
                root.draw(&Text::new(s.title.clone(), (16, 12), title))
                    .map_err(err)?;
                let sub = TextStyle::from((FONT, 13).into_font())
                    .color(&GREY_TEXT)
                    .pos(Pos::new(HPos::Left, VPos::Top));
                for (i, line) in s.subtitle.iter().enumerate() {
                    root.draw(&Text::new(
                        line.clone(),
                        (16, 38 + 17 * i as i32),
                        sub.clone(),
                    ))
                    .map_err(err)?;
                }
                let (zx, zy) = ((x.hi - x.lo) * 1e-9, (y.hi - y.lo) * 1e-9);
                let fx = move |v: &f64| tick(*v, zx);
                let fy = move |v: &f64| tick(*v, zy);
                chart
                    .configure_mesh()
                    .x_desc(s.x_desc.clone())
                    .y_desc(s.y_desc.clone())
                    .light_line_style(GRID_LIGHT)
                    .bold_line_style(GRID_BOLD)
                    .axis_style(INK)
                    .label_style((FONT, 14))
                    .axis_desc_style((FONT, 14))
                    .x_label_formatter(&fx)
                    .y_label_formatter(&fy)
                    .draw()
                    .map_err(err)?;
            }
            Part::Layer(i) => {
                if let Some(l) = s.layers.get(i) {
                    for it in &l.items {
                        draw_item(&mut chart, it)?;
                    }
                }
            }
            Part::Legend => draw_legend(&legend, s, layout)?,
        }
        root.present().map_err(err)?;
    }
    Ok((buf, area))
}

/// Splits plotters' SVG document into its opening `<svg …>` tag and its content.
fn split_svg(doc: &str) -> Option<(&str, &str)> {
    let start = doc.find("<svg")?;
    let open_end = start + doc[start..].find('>')? + 1;
    let close = doc.rfind("</svg>")?;
    (close >= open_end).then(|| (&doc[start..open_end], doc[open_end..close].trim_start()))
}

/// The drawn content of a scene: the groups (frame, layers, legend) without the enclosing
/// `<svg>` element, and the plotting area in pixels of the panel.
struct Drawn {
    body: String,
    area: PlotArea,
}

/// Draws a scene's groups with the given layout. With `view`, the axes span exactly that
/// window (x range, y range; round ticks inside it) and the scene must hold only what lies in
/// it (plotters presses points outside onto the frame; [`clip_polyline`] and [`inside`] cut
/// them away; the page carrying the SVG allows no `url(…)`, so no clip path is used); without
/// it the axes enclose every item on round ticks.
fn draw_scene(s: &Scene, layout: &Layout, view: Option<((f64, f64), (f64, f64))>) -> Option<Drawn> {
    let (x, y) = match view {
        Some((x, y)) => (axis_within(x, TICKS_X)?, axis_within(y, TICKS)?),
        None => {
            let (x, y) = scene_ranges(s)?;
            (axis(x, TICKS_X)?, axis(y, TICKS)?)
        }
    };
    let (frame, area) = draw_part(s, &x, &y, Part::Frame, layout).ok()?;
    let (_, inner) = split_svg(&frame)?;
    let mut out = String::new();
    out.push_str(&format!("<g class=\"frame\">\n{inner}</g>\n"));
    for (i, l) in s.layers.iter().enumerate() {
        let (doc, _) = draw_part(s, &x, &y, Part::Layer(i), layout).ok()?;
        let (_, inner) = split_svg(&doc)?;
        let mesh = l.mesh.as_deref().map_or(String::new(), |m| {
            format!(" data-mesh=\"{}\"", escape_xml(m))
        });
        out.push_str(&format!("<g class=\"{}\"{mesh}>\n{inner}</g>\n", l.class));
    }
    let (doc, _) = draw_part(s, &x, &y, Part::Legend, layout).ok()?;
    let (_, inner) = split_svg(&doc)?;
    out.push_str(&format!("<g class=\"legend\">\n{inner}</g>\n"));
    Some(Drawn { body: out, area })
}

fn svg_open(width: u32, height: u32) -> String {
    format!(
        "<svg width=\"{width}\" height=\"{height}\" viewBox=\"0 0 {width} {height}\" xmlns=\"http://www.w3.org/2000/svg\">"
    )
}

fn svg_head(s: &Scene) -> String {
    let mut out = format!("\n<title>{}</title>\n", escape_xml(&s.title));
    if !s.subtitle.is_empty() {
        out.push_str(&format!(
            "<desc>{}</desc>\n",
            escape_xml(&s.subtitle.join("; "))
        ));
    }
    out
}

/// Draws a scene as one SVG document, or `None` when there is nothing finite to draw.
pub fn render(s: &Scene) -> Option<String> {
    let drawn = draw_scene(s, &STANDARD, None)?;
    Some(format!(
        "{}{}{}</svg>\n",
        svg_open(WIDTH, HEIGHT),
        svg_head(s),
        drawn.body
    ))
}

/// A panel of a figure of several panels stacked from the top.
pub struct Panel<'a> {
    /// What it draws.
    pub scene: &'a Scene,
    /// Its sizes (all panels of a figure share the width).
    pub layout: Layout,
    /// The window it shows (x range, y range), or `None` for every item on round ticks.
    pub view: Option<((f64, f64), (f64, f64))>,
    /// Its name (`data-panel`).
    pub name: &'static str,
}

/// Draws panels stacked from the top into one SVG document, each in a
/// `<g class="panel" data-panel="…" data-plot="left top right bottom">` group (the plotting
/// area in the figure's pixels), the title and description those of the first panel. `None`
/// when a panel has nothing finite to draw.
pub fn render_panels(panels: &[Panel<'_>]) -> Option<String> {
    let first = panels.first()?;
    let width = first.layout.width;
    let height: u32 = panels.iter().map(|p| p.layout.height).sum();
    let mut out = format!("{}{}", svg_open(width, height), svg_head(first.scene));
    let mut top = 0u32;
    for p in panels {
        let drawn = draw_scene(p.scene, &p.layout, p.view)?;
        let (l, t, r, b) = drawn.area;
        let shift = top as i32;
        let transform = if top == 0 {
            String::new()
        } else {
            format!(" transform=\"translate(0,{top})\"")
        };
        out.push_str(&format!(
            "<g class=\"panel\" data-panel=\"{}\" data-plot=\"{l} {} {r} {}\"{transform}>\n{}</g>\n",
            p.name,
            t + shift,
            b + shift,
            drawn.body
        ));
        top += p.layout.height;
    }
    out.push_str("</svg>\n");
    Some(out)
}

// ---------------------------------------------------------------------------------------------
// Convergence plot.

/// The meshes of a quantity, aligned with its values (finest first), as the result holds them.
fn quantity_meshes<'a>(a: &'a Assessment, q: &QuantityResult) -> Option<Vec<&'a Mesh>> {
    q.meshes
        .iter()
        .map(|n| a.meshes.iter().find(|m| &m.name == n))
        .collect()
}

/// The axis label of a sweep's breakdown or reference estimate (its "unit" is the abscissa's
/// name, not a unit); `None` for any other quantity.
fn quantity_label(a: &Assessment, q: &QuantityResult) -> Option<String> {
    match &q.role {
        Role::Breakdown { sweep, response } => {
            // The abscissa breakdown was read against (the sweep's x, or NPSH), with its unit.
            let s = a.sweeps.iter().find(|s| &s.name == sweep)?;
            let x = s
                .breakdown
                .iter()
                .find(|b| b.x_estimate.name == q.name)
                .map_or(s.x.as_str(), |b| b.abscissa.as_str());
            Some(format!("breakdown {} of {response}", sweep_label(s, x)))
        }
        Role::Reference { response, .. } => Some(format!("reference {}", axis_name(response))),
        _ => None,
    }
}

/// A fitted curve to draw, with the extrapolated value it reaches at h = 0.
struct FitCurve {
    curve: Vec<(f64, f64)>,
    label: String,
    ext: f64,
    name: &'static str,
}

/// The scene of [`convergence_plot`].
pub fn convergence_scene(a: &Assessment, q: &QuantityResult) -> Option<Scene> {
    let meshes = quantity_meshes(a, q)?;
    let h1 = meshes.first()?.size;
    if !(h1.is_finite() && h1 > 0.0) {
        return None;
    }
    let u = q.uncertainty.as_ref();
    let governing = q.governing.as_ref().filter(|_| u.is_some());
    let ls_governs = governing.map(|g| g.method) == Some(Method::LeastSquares);
    let estimate = match q.governing.as_ref().map(|g| g.method) {
        Some(Method::LeastSquares) => "least-squares estimate",
        _ => "three-mesh estimate",
    };
    // The abscissa's order: with the least-squares fit governing, the order of the selected
    // fit (so that a first- or second-order fit draws straight); else the observed order.
    let selected = q
        .least_squares
        .as_ref()
        .filter(|_| ls_governs)
        .and_then(|ls| ls.selected_fit());
    let order = match selected {
        Some(f) => f.order,
        None => governing_order(q),
    };
    let (p, p_note) = match (order, selected) {
        (Some(p), Some(f)) if p.is_finite() && p > 0.0 => (
            p,
            format!(
                "p = {}, the order of the selected least-squares fit ({})",
                sig(p, 4),
                f.kind.label()
            ),
        ),
        (Some(p), None) if p.is_finite() && p > 0.0 => (
            p,
            format!("p = {}, the observed order of the {estimate}", sig(p, 4)),
        ),
        _ => (
            2.0,
            "p = 2, the formal order assumed (no single positive order)".to_string(),
        ),
    };
    let pts: Vec<(usize, &Mesh, (f64, f64))> = meshes
        .iter()
        .zip(&q.values)
        .enumerate()
        .map(|(i, (m, v))| (i, *m, ((m.size / h1).powf(p), *v)))
        .filter(|(_, _, pt)| finite(pt))
        .collect();
    if pts.is_empty() {
        return None;
    }
    let x_max = pts.iter().fold(0.0_f64, |m, (_, _, pt)| m.max(pt.0));
    let unit = q
        .unit
        .as_deref()
        .map_or(String::new(), |u| format!(" [{u}]"));
    let mut layers = Vec::new();
    let mut legend = Vec::new();
    let mut notes = Vec::new();

    // The fitted curve and the extrapolated value, drawn from the figures the estimate holds.
    let mut fit: Option<FitCurve> = None;
    if ls_governs {
        if let Some((ls, f)) = q
            .least_squares
            .as_ref()
            .and_then(|ls| ls.selected_fit().map(|f| (ls, f)))
        {
            let n = 64;
            let curve: Vec<(f64, f64)> = (0..=n)
                .map(|k| {
                    let x = x_max * k as f64 / n as f64;
                    (x, f.value_at(h1 * x.powf(1.0 / p)))
                })
                .filter(finite)
                .collect();
            let label = format!(
                "least-squares fit ({}, {})",
                ls.selected.kind.label(),
                if ls.selected.weighted {
                    "weighted"
                } else {
                    "unweighted"
                }
            );
            fit = Some(FitCurve {
                curve,
                label,
                ext: f.phi0,
                name: "φ0",
            });
        }
    } else if governing.map(|g| g.method) == Some(Method::ThreeGrid) {
        if let (Some(tg), Some(phi1)) = (&q.three_grid, q.values.first()) {
            if let (Some(ext), Some(_)) = (tg.estimate.extrapolated, tg.estimate.observed_order) {
                // φ(h) = φ_ext + (φ1 − φ_ext)(h/h1)^p: a straight line against (h/h1)^p.
                let line = vec![(0.0, ext), (x_max, ext + (phi1 - ext) * x_max)];
                fit = Some(FitCurve {
                    curve: line,
                    label: "Richardson line".into(),
                    ext,
                    name: "φ_ext",
                });
            }
        }
    }
    match &fit {
        Some(FitCurve {
            curve,
            label,
            ext,
            name,
        }) if ext.is_finite() => {
            let pen = Pen {
                colour: FIT,
                width: 2,
                dash: Dash::Dashed(12, 6),
            };
            layers.push(Layer {
                class: "fit",
                mesh: None,
                items: vec![Item::Line(curve.clone(), pen)],
            });
            legend.push((label.clone(), Sample::Line(pen, None)));
            layers.push(Layer {
                class: "extrapolated",
                mesh: None,
                items: vec![Item::Markers(vec![(0.0, *ext)], Marker::Target, INK, 5)],
            });
            legend.push((
                format!("{name} at h = 0: {}", sig(*ext, 7)),
                Sample::Marker(Marker::Target, INK, 5),
            ));
        }
        _ => notes.push(match q.convergence {
            Some(crate::estimate::Convergence::Oscillatory) => {
                "Oscillatory: U is half the range of the values; no curve is fitted.".to_string()
            }
            Some(crate::estimate::Convergence::Divergent) | None => {
                "No fitted curve: no discretisation uncertainty can be claimed.".to_string()
            }
            Some(_) => "No fitted curve.".to_string(),
        }),
    }
    for (i, m, pt) in &pts {
        let (colour, marker, _) = mesh_style(*i);
        layers.push(Layer {
            class: "mesh",
            mesh: Some(m.name.clone()),
            items: vec![Item::Markers(vec![*pt], marker, colour, 5)],
        });
        legend.push((
            format!("{} (h = {})", m.name, num(m.size, 4)),
            Sample::Marker(marker, colour, 5),
        ));
    }
    if let Some(u) = u.filter(|u| u.absolute > 0.0 && u.absolute.is_finite()) {
        let finest = pts.first().map(|(_, m, _)| m.name.as_str()).unwrap_or("");
        layers.push(Layer {
            class: "uncertainty",
            mesh: None,
            items: vec![Item::BarY(1.0, u.lower, u.upper, INK)],
        });
        legend.push((
            format!("{finest} ± U ({})", governing_label(q)),
            Sample::BarY(INK),
        ));
    }
    Some(Scene {
        title: format!("{}: value against mesh size", q.name),
        subtitle: vec![
            statement(q),
            format!("abscissa (h/h1)^p with {p_note}; h1 is the finest mesh"),
        ],
        x_desc: "(h/h1)^p, relative to the finest mesh".into(),
        y_desc: quantity_label(a, q).unwrap_or_else(|| format!("{}{unit}", q.name)),
        include_x: vec![0.0, 1.0],
        layers,
        legend,
        notes,
    })
}

/// The convergence plot of a quantity: each mesh's value against (h/h1)^p (p the governing
/// observed order, or the formal order 2 when there is none — the figure says which), the
/// fitted curve down to h = 0 with the extrapolated value there, and the finest mesh's value
/// ± U. `None` when the quantity has no finite value to show or its meshes are unknown.
pub fn convergence_plot(a: &Assessment, q: &QuantityResult) -> Option<String> {
    render(&convergence_scene(a, q)?)
}

// ---------------------------------------------------------------------------------------------
// Sweep plot.

/// The scene of [`response_plot`].
pub fn response_scene(
    a: &Assessment,
    s: &SweepResult,
    response: &str,
    measured: &[MeasuredPoint],
) -> Option<Scene> {
    let r = s.responses.iter().position(|x| x == response)?;
    let mesh_index = |name: &str| s.meshes.iter().position(|m| m == name).unwrap_or(0);
    let mut layers = Vec::new();
    let mut legend = Vec::new();
    let mut notes = Vec::new();
    let finest = s.meshes.first().map_or("finest mesh", String::as_str);

    if let Some(band) = s.band.as_ref().filter(|b| b.response == response) {
        // One shaded polygon per run of points that have both bounds.
        let mut items = Vec::new();
        let (mut up, mut lo) = (Vec::new(), Vec::new());
        for p in &band.points {
            match (p.lower, p.upper) {
                (Some(l), Some(u)) if finite(&(p.x, l)) && u.is_finite() => {
                    lo.push((p.x, l));
                    up.push((p.x, u));
                }
                _ => {
                    if up.len() >= 2 {
                        items.push(Item::Band(
                            std::mem::take(&mut up),
                            std::mem::take(&mut lo),
                            BAND,
                        ));
                    }
                    up.clear();
                    lo.clear();
                }
            }
        }
        if up.len() >= 2 {
            items.push(Item::Band(up, lo, BAND));
        }
        if !items.is_empty() {
            layers.push(Layer {
                class: "band",
                mesh: s.meshes.first().cloned(),
                items,
            });
            legend.push((format!("{finest} ± U (band)"), Sample::Swatch(BAND)));
        }
    }
    let mut any = false;
    let mut mesh_layers = Vec::new();
    for (i, c) in s.curves.iter().enumerate() {
        let Some(ys) = c.responses.get(r) else {
            continue;
        };
        let pts: Vec<(f64, f64)> =
            c.x.iter()
                .copied()
                .zip(ys.iter().copied())
                .filter(finite)
                .collect();
        if pts.is_empty() {
            continue;
        }
        any = true;
        let (colour, marker, pen) = mesh_style(i);
        mesh_layers.push(Layer {
            class: "mesh",
            mesh: Some(c.mesh.clone()),
            items: vec![
                Item::Line(pts.clone(), pen),
                Item::Markers(pts, marker, colour, 3),
            ],
        });
        let cells = a
            .meshes
            .iter()
            .find(|m| m.name == c.mesh)
            .and_then(|m| m.cells)
            .map_or(String::new(), |n| format!(" ({} cells)", num(n, 8)));
        legend.push((
            format!("{}{cells}", c.mesh),
            Sample::Line(pen, Some((marker, colour, 3))),
        ));
    }
    if !any {
        return None;
    }
    // Coarsest first, so that the finest mesh is drawn on top.
    layers.extend(mesh_layers.into_iter().rev());

    let mut breakdown_legend = false;
    // A breakdown read against another abscissa (NPSH) has no place on this axis.
    for b in s
        .breakdown
        .iter()
        .filter(|b| b.response == response && b.abscissa == s.x)
    {
        for m in &b.per_mesh {
            let (colour, marker, _) = mesh_style(mesh_index(&m.mesh));
            layers.push(Layer {
                class: "breakdown",
                mesh: Some(m.mesh.clone()),
                items: vec![Item::Markers(vec![(m.x, m.threshold)], marker, colour, 7)],
            });
        }
        if !breakdown_legend {
            legend.push((
                "breakdown of each mesh (large markers)".into(),
                Sample::Marker(Marker::Ring, GREY_TEXT, 7),
            ));
            breakdown_legend = true;
        }
        if let (Some(u), Some(m)) = (b.x_estimate.uncertainty.as_ref(), b.per_mesh.first()) {
            layers.push(Layer {
                class: "breakdown-uncertainty",
                mesh: Some(m.mesh.clone()),
                items: vec![Item::BarX(m.threshold, u.lower, u.upper, INK)],
            });
        }
        notes.push(format!(
            "Breakdown: {}. Breakdown {}: {}.",
            breakdown_rule(b, &s.x),
            symbol(&b.abscissa),
            statement(&b.x_estimate)
        ));
    }
    if layers.iter().any(|l| l.class == "breakdown-uncertainty") {
        legend.push((format!("breakdown of {finest} ± U"), Sample::BarX(INK)));
    }
    let measured: Vec<&MeasuredPoint> = measured.iter().filter(|p| finite(&(p.x, p.y))).collect();
    if !measured.is_empty() {
        let mut items = vec![Item::Markers(
            measured.iter().map(|p| (p.x, p.y)).collect(),
            Marker::Plus,
            INK,
            6,
        )];
        for p in measured.iter().filter(|p| p.u.is_finite() && p.u > 0.0) {
            items.push(Item::BarY(p.x, p.y - p.u, p.y + p.u, INK));
        }
        layers.push(Layer {
            class: "measured",
            mesh: None,
            items,
        });
        legend.push(("measured ± u".into(), Sample::Marker(Marker::Plus, INK, 6)));
    }
    let band_note = s
        .band
        .as_ref()
        .filter(|b| b.response == response)
        .map_or(String::new(), |b| {
            format!("; band of {finest} at {} points", b.points.len())
        });
    Some(Scene {
        title: format!("{}: {} along {}", s.name, response, s.x),
        subtitle: vec![format!(
            "meshes {}; {} interpolation{band_note}",
            s.meshes.join(", "),
            s.interpolation.label()
        )],
        x_desc: axis_name(&s.x),
        y_desc: axis_name(response),
        include_x: Vec::new(),
        layers,
        legend,
        notes,
    })
}

/// A sweep's curves of one response: every mesh's curve, the finest mesh's band when the band
/// is on this response, every mesh's breakdown of this response with the finest mesh's
/// breakdown ± U, and `measured` points with their uncertainty (may be empty). `None` when the
/// sweep has no such response or no finite point of it.
pub fn response_plot(
    a: &Assessment,
    s: &SweepResult,
    response: &str,
    measured: &[MeasuredPoint],
) -> Option<String> {
    render(&response_scene(a, s, response, measured)?)
}

/// The sweep plot: [`response_plot`] of the band's response, or of the first response when
/// the sweep has no band.
pub fn sweep_plot(a: &Assessment, s: &SweepResult, measured: &[MeasuredPoint]) -> Option<String> {
    let response = s
        .band
        .as_ref()
        .map(|b| b.response.as_str())
        .or(s.responses.first().map(String::as_str))?;
    response_plot(a, s, response, measured)
}

// ---------------------------------------------------------------------------------------------
// Breakdown figure.

/// Height of the whole-sweep panel under the zoomed one.
pub const WHOLE_HEIGHT: u32 = 330;
/// The layout of the whole-sweep panel.
const WHOLE: Layout = Layout {
    width: WIDTH,
    height: WHOLE_HEIGHT,
    legend: LEGEND,
    top: 44,
};
const THRESHOLD_DASH: Dash = Dash::Dashed(9, 5);
const REFERENCE_DASH: Dash = Dash::Dashed(2, 4);
const WINDOW_EDGE: RGBColor = RGBColor(0x70, 0x70, 0x70);
const INTERVAL: RGBAColor = RGBAColor(0x8F, 0xA9, 0xBF, 0.40);
/// Points at which a curve's interpolant is drawn across the window shown.
const CURVE_SAMPLES: usize = 240;

/// The caution under every breakdown figure.
pub const BREAKDOWN_CAUTION: &str = "Numerical uncertainty of a computed breakdown only: it is \
not a model-test acceptance of cavitation performance. NPSH margins and cavitation limits \
follow the applicable test codes, local regulations and licensed engineering judgment.";

/// The unit of a sweep column where the assessment knows it: NPSH is in metres (the study's
/// contract), and so is the head of a sweep derived from raw monitors (SI by contract).
fn sweep_unit(s: &SweepResult, name: &str) -> Option<&'static str> {
    match name {
        "npsh" => Some("m"),
        "head" if s.mode.is_some() => Some("m"),
        _ => None,
    }
}

/// An axis label of a sweep column: `NPSH [m]`, `head (H) [m]`, `sigma (σ)`.
fn sweep_label(s: &SweepResult, name: &str) -> String {
    let base = if name == "npsh" {
        "NPSH".to_string()
    } else {
        axis_name(name)
    };
    match sweep_unit(s, name) {
        Some(u) => format!("{base} [{u}]"),
        None => base,
    }
}

/// One curve's points of response `ri` against the abscissa breakdown `b` is read against
/// (the sweep's x, or each point's NPSH), in increasing abscissa.
fn breakdown_points(
    s: &SweepResult,
    c: &CurveResult,
    ri: usize,
    b: &BreakdownResult,
) -> Vec<(f64, f64)> {
    let ys = match c.responses.get(ri) {
        Some(y) => y,
        None => return Vec::new(),
    };
    let npsh_response = s
        .responses
        .iter()
        .position(|r| r == "npsh")
        .and_then(|i| c.responses.get(i));
    let derived: Option<Vec<f64>> = c
        .derived
        .as_ref()
        .map(|d| d.iter().map(|p| p.npsh).collect());
    let xs: &[f64] = if b.abscissa == s.x {
        &c.x
    } else if let Some(n) = c.npsh.as_ref() {
        n
    } else if let Some(n) = npsh_response {
        n
    } else if let Some(n) = derived.as_ref() {
        n
    } else {
        return Vec::new();
    };
    if xs.len() != ys.len() {
        return Vec::new();
    }
    let mut pts: Vec<(f64, f64)> = xs
        .iter()
        .copied()
        .zip(ys.iter().copied())
        .filter(finite)
        .collect();
    pts.sort_by(|p, q| p.0.total_cmp(&q.0));
    pts.dedup_by(|p, q| p.0.total_cmp(&q.0).is_eq());
    pts
}

/// The sweep's interpolant through `pts`, sampled across `lo..hi` (within the points' range),
/// to draw the curve breakdown was read on; the points themselves when it cannot be formed.
fn drawn_curve(
    pts: &[(f64, f64)],
    kind: crate::sweep::Interpolation,
    lo: f64,
    hi: f64,
) -> Vec<(f64, f64)> {
    let (xs, ys): (Vec<f64>, Vec<f64>) = pts.iter().copied().unzip();
    let Ok(f) = crate::sweep::Interpolant::new(&xs, &ys, kind) else {
        return pts.to_vec();
    };
    let (a, b) = f.x_range();
    let (lo, hi) = (lo.max(a), hi.min(b));
    if hi.is_nan() || lo.is_nan() || hi <= lo {
        return Vec::new();
    }
    let mut x: Vec<f64> = (0..=CURVE_SAMPLES)
        .map(|k| lo + (hi - lo) * k as f64 / CURVE_SAMPLES as f64)
        .collect();
    // The knots inside the window, so that the line passes through every point.
    x.extend(xs.iter().copied().filter(|v| *v > lo && *v < hi));
    x.sort_by(f64::total_cmp);
    x.iter()
        .zip(f.eval_sorted(&x))
        .filter_map(|(x, y)| y.map(|y| (*x, y)))
        .filter(finite)
        .collect()
}

/// A breakdown figure as plain data: the zoomed panel, the whole-sweep panel, and the window
/// (x range, y range) the zoomed panel shows.
#[derive(Debug, Clone, PartialEq)]
pub struct BreakdownScenes {
    /// The region around breakdown.
    pub zoom: Scene,
    /// The whole sweep, the zoomed window outlined.
    pub whole: Scene,
    /// The zoomed window: x range, y range.
    pub window: ((f64, f64), (f64, f64)),
}

/// The window around breakdown: in x, every mesh's breakdown and the sweep points either
/// side of it, the stated interval and the extrapolated value, with a margin; in y, the curves
/// inside that x range, kept within the breakdown region (lowest threshold to highest
/// reference, Δ apart) widened by 0.6 Δ below and 0.3 Δ above, so that the region fills more
/// than half the height (1 / 1.9 at the least).
fn breakdown_window(
    b: &BreakdownResult,
    curves: &[Vec<(f64, f64)>],
) -> Option<((f64, f64), (f64, f64))> {
    let mut xs: Vec<f64> = Vec::new();
    for m in &b.per_mesh {
        xs.extend([m.x, m.bracket[0], m.bracket[1]]);
    }
    if let Some(u) = &b.x_estimate.uncertainty {
        xs.extend([u.lower, u.upper]);
    }
    if let Some(e) = b.x_estimate.governing.as_ref().and_then(|g| g.extrapolated) {
        xs.push(e);
    }
    let (lo, hi) = range(xs.into_iter())?;
    let full = range(curves.iter().flatten().map(|p| p.0));
    let pad = 0.12 * (hi - lo);
    let (mut x0, mut x1) = (lo - pad, hi + pad);
    if let Some((f0, f1)) = full {
        let least = 0.05 * (f1 - f0);
        if x1 - x0 < least {
            let mid = 0.5 * (x0 + x1);
            (x0, x1) = (mid - 0.5 * least, mid + 0.5 * least);
        }
    }
    let thr = range(b.per_mesh.iter().map(|m| m.threshold))?;
    let refs = range(b.per_mesh.iter().map(|m| m.reference))?;
    let (r0, r1) = (thr.0.min(refs.0), refs.1.max(thr.1));
    let mut delta = r1 - r0;
    if !(delta.is_finite() && delta > 0.0) {
        delta = if r1 != 0.0 { 0.01 * r1.abs() } else { 1.0 };
    }
    let inside = curves
        .iter()
        .flatten()
        .filter(|p| p.0 >= x0 && p.0 <= x1)
        .map(|p| p.1);
    let (c0, c1) = range(inside).unwrap_or((r0, r1));
    let y0 = c0.min(r0 - 0.15 * delta).max(r0 - 0.6 * delta);
    let y1 = c1.max(r1 + 0.15 * delta).min(r1 + 0.3 * delta);
    let ok = [x0, x1, y0, y1].iter().all(|v| v.is_finite()) && x1 > x0 && y1 > y0;
    ok.then_some(((x0, x1), (y0, y1)))
}

/// The parts of a polyline inside a window (x range, y range), each segment cut where it
/// leaves the window (Liang & Barsky 1984): drawing geometry only, so that a zoomed panel
/// shows no line running along its edge where plotters would press points outside onto it.
fn clip_polyline(
    pts: &[(f64, f64)],
    (x0, x1): (f64, f64),
    (y0, y1): (f64, f64),
) -> Vec<Vec<(f64, f64)>> {
    let mut runs: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut run: Vec<(f64, f64)> = Vec::new();
    for w in pts.windows(2) {
        let ((ax, ay), (bx, by)) = (w[0], w[1]);
        let (dx, dy) = (bx - ax, by - ay);
        let (mut t0, mut t1) = (0.0_f64, 1.0_f64);
        let mut keep = true;
        for (p, q) in [(-dx, ax - x0), (dx, x1 - ax), (-dy, ay - y0), (dy, y1 - ay)] {
            if p == 0.0 {
                if q < 0.0 {
                    keep = false;
                }
            } else {
                let r = q / p;
                if p < 0.0 {
                    t0 = t0.max(r);
                } else {
                    t1 = t1.min(r);
                }
            }
        }
        if !keep || t0 > t1 || !(t0.is_finite() && t1.is_finite()) {
            if run.len() >= 2 {
                runs.push(std::mem::take(&mut run));
            }
            run.clear();
            continue;
        }
        // The ends exactly where the segment is not cut, so that runs join.
        let a = if t0 == 0.0 {
            (ax, ay)
        } else {
            (ax + t0 * dx, ay + t0 * dy)
        };
        let b = if t1.total_cmp(&1.0).is_eq() {
            (bx, by)
        } else {
            (ax + t1 * dx, ay + t1 * dy)
        };
        if run.last() != Some(&a) {
            if run.len() >= 2 {
                runs.push(std::mem::take(&mut run));
            }
            run.clear();
            run.push(a);
        }
        run.push(b);
        if t1 < 1.0 {
            if run.len() >= 2 {
                runs.push(std::mem::take(&mut run));
            }
            run.clear();
        }
    }
    if run.len() >= 2 {
        runs.push(run);
    }
    runs
}

/// The points inside a window.
fn inside(pts: &[(f64, f64)], (x0, x1): (f64, f64), (y0, y1): (f64, f64)) -> Vec<(f64, f64)> {
    pts.iter()
        .copied()
        .filter(|p| p.0 >= x0 && p.0 <= x1 && p.1 >= y0 && p.1 <= y1)
        .collect()
}

fn hline(y: f64, (x0, x1): (f64, f64), pen: Pen) -> Item {
    Item::Line(vec![(x0, y), (x1, y)], pen)
}

/// A mesh's index in the sweep, its curve, and its points against the breakdown's abscissa.
type MeshCurve<'a> = (usize, &'a CurveResult, Vec<(f64, f64)>);

/// The scenes of [`breakdown_plot`]; `None` when no mesh has a breakdown of this definition
/// or no curve can be drawn against its abscissa.
pub fn breakdown_scenes(
    a: &Assessment,
    s: &SweepResult,
    b: &BreakdownResult,
    measured: &[MeasuredPoint],
) -> Option<BreakdownScenes> {
    let ri = s.responses.iter().position(|x| *x == b.response)?;
    let finest = b.per_mesh.first()?;
    let mesh_index = |name: &str| s.meshes.iter().position(|m| m == name).unwrap_or(0);
    let curves: Vec<MeshCurve<'_>> = s
        .curves
        .iter()
        .enumerate()
        .map(|(i, c)| (i, c, breakdown_points(s, c, ri, b)))
        .filter(|(_, _, p)| !p.is_empty())
        .collect();
    if curves.is_empty() {
        return None;
    }
    let pts: Vec<Vec<(f64, f64)>> = curves.iter().map(|(_, _, p)| p.clone()).collect();
    let ((x0, x1), (y0, y1)) = breakdown_window(b, &pts)?;
    let full_x = range(pts.iter().flatten().map(|p| p.0))?;
    let sym = if b.abscissa == "npsh" {
        "NPSH".to_string()
    } else {
        symbol(&b.abscissa).to_string()
    };
    let x_unit = sweep_unit(s, &b.abscissa).map_or(String::new(), |u| format!(" {u}"));
    let u = b.x_estimate.uncertainty.as_ref();
    let extrapolated = b
        .x_estimate
        .governing
        .as_ref()
        .and_then(|g| g.extrapolated)
        .filter(|e| e.is_finite());

    let mut zoom_layers = Vec::new();
    let mut whole_layers = Vec::new();
    let mut legend = Vec::new();
    // The stated interval (finest mesh's breakdown ± U), shaded across the window.
    if let Some(u) = u.filter(|u| u.absolute > 0.0 && u.absolute.is_finite()) {
        zoom_layers.push(Layer {
            class: "breakdown-interval",
            mesh: Some(finest.mesh.clone()),
            items: vec![Item::Band(
                vec![(u.lower, y1), (u.upper, y1)],
                vec![(u.lower, y0), (u.upper, y0)],
                INTERVAL,
            )],
        });
        legend.push((
            format!("{} ± U: {}{x_unit}", finest.mesh, statement_interval(u)),
            Sample::Swatch(INTERVAL),
        ));
    }
    // Reference and threshold of every mesh.
    let mut references = Vec::new();
    for m in &b.per_mesh {
        let (colour, _, _) = mesh_style(mesh_index(&m.mesh));
        let thin = Pen {
            colour,
            width: 1,
            dash: REFERENCE_DASH,
        };
        let bold = Pen {
            colour,
            width: 2,
            dash: THRESHOLD_DASH,
        };
        references.push(Layer {
            class: "reference-level",
            mesh: Some(m.mesh.clone()),
            items: vec![hline(m.reference, (x0, x1), thin)],
        });
        zoom_layers.push(Layer {
            class: "threshold",
            mesh: Some(m.mesh.clone()),
            items: vec![hline(m.threshold, (x0, x1), bold)],
        });
        whole_layers.push(Layer {
            class: "threshold",
            mesh: Some(m.mesh.clone()),
            items: vec![hline(m.threshold, full_x, bold)],
        });
    }
    zoom_layers.extend(references);
    let drop = if b.relative {
        format!("{} below", super::format::percent(b.drop))
    } else {
        format!("{} below", num(b.drop, 6))
    };
    legend.push((
        format!("threshold of each mesh, {drop} its reference (dashed)"),
        Sample::Line(
            Pen {
                colour: GREY_TEXT,
                width: 2,
                dash: THRESHOLD_DASH,
            },
            None,
        ),
    ));
    legend.push((
        "reference of each mesh (dotted)".into(),
        Sample::Line(
            Pen {
                colour: GREY_TEXT,
                width: 1,
                dash: REFERENCE_DASH,
            },
            None,
        ),
    ));
    // The curves, coarsest first so that the finest is drawn on top.
    let mut mesh_zoom = Vec::new();
    let mut mesh_whole = Vec::new();
    for (i, c, p) in &curves {
        let (colour, marker, pen) = mesh_style(*i);
        let thin = Pen { width: 2, ..pen };
        let mut items: Vec<Item> =
            clip_polyline(&drawn_curve(p, s.interpolation, x0, x1), (x0, x1), (y0, y1))
                .into_iter()
                .map(|run| Item::Line(run, thin))
                .collect();
        items.push(Item::Markers(
            inside(p, (x0, x1), (y0, y1)),
            marker,
            colour,
            4,
        ));
        mesh_zoom.push(Layer {
            class: "mesh",
            mesh: Some(c.mesh.clone()),
            items,
        });
        mesh_whole.push(Layer {
            class: "mesh",
            mesh: Some(c.mesh.clone()),
            items: vec![
                Item::Line(drawn_curve(p, s.interpolation, full_x.0, full_x.1), thin),
                Item::Markers(p.clone(), marker, colour, 3),
            ],
        });
        let cells = a
            .meshes
            .iter()
            .find(|m| m.name == c.mesh)
            .and_then(|m| m.cells)
            .map_or(String::new(), |n| format!(" ({} cells)", num(n, 8)));
        legend.insert(
            legend.len().min(mesh_zoom.len() - 1),
            (
                format!("{}{cells}", c.mesh),
                Sample::Line(thin, Some((marker, colour, 4))),
            ),
        );
    }
    zoom_layers.extend(mesh_zoom.into_iter().rev());
    whole_layers.extend(mesh_whole.into_iter().rev());
    // Measured points (against the sweep's own abscissa only).
    let measured: Vec<&MeasuredPoint> = measured
        .iter()
        .filter(|p| finite(&(p.x, p.y)) && b.abscissa == s.x)
        .collect();
    if !measured.is_empty() {
        let mut items = vec![Item::Markers(
            measured.iter().map(|p| (p.x, p.y)).collect(),
            Marker::Plus,
            INK,
            6,
        )];
        for p in measured.iter().filter(|p| p.u.is_finite() && p.u > 0.0) {
            items.push(Item::BarY(p.x, p.y - p.u, p.y + p.u, INK));
        }
        // In the zoomed panel only the points inside it, with their bars when whole inside.
        let within = |x: f64, y: f64| x >= x0 && x <= x1 && y >= y0 && y <= y1;
        let mut zoomed = vec![Item::Markers(
            measured
                .iter()
                .map(|p| (p.x, p.y))
                .filter(|(x, y)| within(*x, *y))
                .collect(),
            Marker::Plus,
            INK,
            6,
        )];
        for p in measured
            .iter()
            .filter(|p| p.u.is_finite() && p.u > 0.0)
            .filter(|p| within(p.x, p.y - p.u) && within(p.x, p.y + p.u))
        {
            zoomed.push(Item::BarY(p.x, p.y - p.u, p.y + p.u, INK));
        }
        zoom_layers.push(Layer {
            class: "measured",
            mesh: None,
            items: zoomed,
        });
        whole_layers.push(Layer {
            class: "measured",
            mesh: None,
            items,
        });
        legend.push(("measured ± u".into(), Sample::Marker(Marker::Plus, INK, 6)));
    }
    // The extrapolated breakdown.
    if let Some(e) = extrapolated {
        zoom_layers.push(Layer {
            class: "extrapolated",
            mesh: None,
            items: vec![Item::Line(
                vec![(e, y0), (e, y1)],
                Pen {
                    colour: INK,
                    width: 2,
                    dash: Dash::Dashed(12, 6),
                },
            )],
        });
        legend.push((
            format!("extrapolated breakdown: {}{x_unit}", num(e, 6)),
            Sample::Line(
                Pen {
                    colour: INK,
                    width: 2,
                    dash: Dash::Dashed(12, 6),
                },
                None,
            ),
        ));
    }
    // Every mesh's breakdown, the finest one's ± U as a horizontal bar.
    for m in &b.per_mesh {
        let (colour, marker, _) = mesh_style(mesh_index(&m.mesh));
        zoom_layers.push(Layer {
            class: "breakdown",
            mesh: Some(m.mesh.clone()),
            items: vec![Item::Markers(vec![(m.x, m.threshold)], marker, colour, 8)],
        });
        whole_layers.push(Layer {
            class: "breakdown",
            mesh: Some(m.mesh.clone()),
            items: vec![Item::Markers(vec![(m.x, m.threshold)], marker, colour, 6)],
        });
    }
    legend.push((
        "breakdown of each mesh (large markers)".into(),
        Sample::Marker(Marker::Ring, GREY_TEXT, 8),
    ));
    if let Some(u) = u.filter(|u| u.absolute > 0.0 && u.absolute.is_finite()) {
        zoom_layers.push(Layer {
            class: "breakdown-uncertainty",
            mesh: Some(finest.mesh.clone()),
            items: vec![Item::BarX(finest.threshold, u.lower, u.upper, INK)],
        });
        legend.push((
            format!(
                "breakdown of {} ± U ({})",
                finest.mesh,
                governing_label(&b.x_estimate)
            ),
            Sample::BarX(INK),
        ));
    }
    // The zoomed window, outlined on the whole sweep.
    whole_layers.push(Layer {
        class: "zoom-window",
        mesh: None,
        items: vec![Item::Line(
            vec![(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)],
            Pen {
                colour: WINDOW_EDGE,
                width: 2,
                dash: Dash::Solid,
            },
        )],
    });
    let mut notes = Vec::new();
    for m in &b.per_mesh_not_computed {
        notes.push(format!("No breakdown on mesh {}: {}.", m.mesh, m.reason));
    }
    for m in b.per_mesh.iter().filter(|m| !m.confirmed) {
        notes.push(format!(
            "Mesh {}: unconfirmed (the sweep ends before the persistence rule is met).",
            m.mesh
        ));
    }
    let against = if b.abscissa == s.x {
        String::new()
    } else {
        format!(" against {sym}")
    };
    // The trade's name of a 3 % head drop read against NPSH (IEC 60193 / ISO 9906; from memory).
    let npsh3 =
        b.abscissa == "npsh" && b.response == "head" && b.relative && (b.drop - 0.03).abs() < 1e-12;
    let zoom = Scene {
        title: format!(
            "{}: {}breakdown of {}{against}, {}",
            s.name,
            if npsh3 { "NPSH3, " } else { "" },
            b.response,
            if b.relative {
                format!("{} drop", super::format::percent(b.drop))
            } else {
                format!("drop of {}", num(b.drop, 6))
            }
        ),
        subtitle: vec![
            format!(
                "Breakdown {sym}{}: {}",
                sweep_unit(s, &b.abscissa).map_or(String::new(), |u| format!(" [{u}]")),
                statement(&b.x_estimate)
            ),
            format!(
                "{}; zoomed on the breakdown region, the whole sweep below",
                breakdown_rule(b, &s.x)
            ),
        ],
        x_desc: sweep_label(s, &b.abscissa),
        y_desc: sweep_label(s, &b.response),
        include_x: Vec::new(),
        layers: zoom_layers,
        legend,
        notes,
    };
    let whole = Scene {
        title: format!("Whole sweep of {}{against}", b.response),
        subtitle: Vec::new(),
        x_desc: sweep_label(s, &b.abscissa),
        y_desc: sweep_label(s, &b.response),
        include_x: Vec::new(),
        layers: whole_layers,
        legend: Vec::new(),
        notes: vec![
            "The grey box is the window drawn above.".to_string(),
            BREAKDOWN_CAUTION.to_string(),
        ],
    };
    Some(BreakdownScenes {
        zoom,
        whole,
        window: ((x0, x1), (y0, y1)),
    })
}

/// `lower … upper` of a stated interval.
fn statement_interval(u: &crate::assess::Uncertainty) -> String {
    format!("{} to {}", sig(u.lower, 5), sig(u.upper, 5))
}

/// The breakdown figure of one breakdown definition of a sweep: above, the region around
/// breakdown zoomed so that it fills most of the height — every mesh's curve (its
/// interpolant and its points), threshold (dashed) and reference (dotted), every mesh's
/// breakdown point, the finest mesh's breakdown ± U as a bar and a shaded interval, the
/// extrapolated breakdown, measured points; below, the whole sweep with that window outlined.
/// `None` when no mesh has a breakdown of this definition.
pub fn breakdown_plot(
    a: &Assessment,
    s: &SweepResult,
    b: &BreakdownResult,
    measured: &[MeasuredPoint],
) -> Option<String> {
    let sc = breakdown_scenes(a, s, b, measured)?;
    render_panels(&[
        Panel {
            scene: &sc.zoom,
            layout: STANDARD,
            view: Some(sc.window),
            name: "zoom",
        },
        Panel {
            scene: &sc.whole,
            layout: WHOLE,
            view: None,
            name: "whole",
        },
    ])
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::markup::fixture;

    /// Checks that tags nest and close (a small XML-ish reader: enough for plotters' output).
    fn balanced(svg: &str) -> Result<(), String> {
        let mut stack: Vec<String> = Vec::new();
        let mut rest = svg;
        while let Some(i) = rest.find('<') {
            let j = rest[i..].find('>').ok_or("unclosed tag")? + i;
            let tag = &rest[i + 1..j];
            rest = &rest[j + 1..];
            if let Some(name) = tag.strip_prefix('/') {
                let open = stack.pop().ok_or(format!("stray </{name}>"))?;
                if open != name.trim() {
                    return Err(format!("<{open}> closed by </{name}>"));
                }
            } else if !tag.ends_with('/') && !tag.starts_with('?') && !tag.starts_with('!') {
                let name = tag.split_whitespace().next().unwrap_or("").to_string();
                stack.push(name);
            }
        }
        if stack.is_empty() {
            Ok(())
        } else {
            Err(format!("unclosed {stack:?}"))
        }
    }

    fn check_svg(svg: &str) {
        assert!(svg.starts_with("<svg"), "{}", &svg[..svg.len().min(80)]);
        balanced(svg).unwrap();
        assert!(svg.trim_end().ends_with("</svg>"));
        let words: Vec<&str> = svg
            .split(|c: char| !c.is_ascii_alphanumeric())
            .filter(|w| matches!(*w, "NaN" | "nan" | "inf" | "infinite" | "Infinity"))
            .collect();
        assert!(words.is_empty(), "non-finite numbers in the SVG: {words:?}");
        assert!(!svg.contains("not a number"));
    }

    #[test]
    fn convergence_plot_of_a_three_mesh_quantity() {
        let a = fixture::assess(fixture::DEMO);
        let q = &a.quantities[0];
        let svg = convergence_plot(&a, q).expect("a plot");
        check_svg(&svg);
        assert!(svg.contains("(h/h1)^p, relative to the finest mesh"));
        assert!(svg.contains("efficiency [-]"));
        assert_eq!(svg.matches("<g class=\"mesh\"").count(), 3);
        for m in ["M_fine", "M_mid", "M_coarse"] {
            assert!(svg.contains(&format!("data-mesh=\"{m}\"")), "{m}");
        }
        assert!(svg.contains("<g class=\"fit\">"));
        assert!(svg.contains("<g class=\"uncertainty\">"));
        assert!(svg.contains("Richardson line"));
        assert!(svg.contains("the observed order of the three-mesh estimate"));
    }

    #[test]
    fn divergent_quantity_gives_a_plot_without_a_fit() {
        let a = fixture::assess(fixture::DEMO);
        let q = a.quantities.iter().find(|q| q.name == "torque").unwrap();
        let svg = convergence_plot(&a, q).expect("points are still shown");
        check_svg(&svg);
        assert!(!svg.contains("class=\"fit\""));
        assert!(!svg.contains("class=\"uncertainty\""));
        assert!(svg.contains("formal order assumed"));
        assert_eq!(svg.matches("<g class=\"mesh\"").count(), 3);
    }

    #[test]
    fn least_squares_fit_is_drawn_from_the_selected_fit() {
        let a = fixture::assess(fixture::FIVE);
        let q = &a.quantities[0];
        let scene = convergence_scene(&a, q).expect("scene");
        let fit = scene
            .layers
            .iter()
            .find(|l| l.class == "fit")
            .expect("a fit layer");
        let ls = q.least_squares.as_ref().unwrap();
        let f = ls.selected_fit().unwrap();
        // The curve starts at φ0 of the selected fit (h = 0) and passes through the fit's
        // value at the finest mesh, x = 1 (the assessment's own figures).
        let Item::Line(pts, _) = &fit.items[0] else {
            panic!("a line")
        };
        approx::assert_relative_eq!(pts[0].1, f.phi0, max_relative = 1e-12);
        assert!(scene
            .legend
            .iter()
            .any(|(l, _)| l.starts_with("least-squares fit")));
        let svg = render(&scene).unwrap();
        check_svg(&svg);
        assert_eq!(svg.matches("<g class=\"mesh\"").count(), 5);
    }

    #[test]
    fn quantity_without_values_gives_none() {
        let a = fixture::assess(fixture::DEMO);
        let mut q = a.quantities[0].clone();
        q.values = vec![f64::NAN, f64::NAN, f64::NAN];
        assert!(convergence_plot(&a, &q).is_none());
        // One missing value: that mesh is left out, the others are drawn, no NaN is written.
        q.values = vec![0.912, f64::NAN, 0.893];
        let svg = convergence_plot(&a, &q).expect("two points remain");
        check_svg(&svg);
        assert_eq!(svg.matches("<g class=\"mesh\"").count(), 2);
        assert!(!svg.contains("data-mesh=\"M_mid\""));
        q.values.clear();
        assert!(convergence_plot(&a, &q).is_none());
    }

    #[test]
    fn sweep_plot_has_curves_band_breakdowns_and_measurements() {
        let a = fixture::assess(fixture::DEMO);
        let s = &a.sweeps[0];
        let svg = sweep_plot(&a, s, &[]).expect("a plot");
        check_svg(&svg);
        assert!(svg.contains("sigma (σ)"));
        assert!(svg.contains("efficiency (η)"));
        assert_eq!(svg.matches("<g class=\"mesh\"").count(), 3);
        assert_eq!(svg.matches("<g class=\"breakdown\"").count(), 3);
        assert!(svg.contains("<g class=\"band\""));
        assert!(svg.contains("<g class=\"breakdown-uncertainty\""));
        assert!(!svg.contains("class=\"measured\""));
        let measured = [
            MeasuredPoint {
                x: 0.3,
                y: 0.9,
                u: 0.004,
            },
            MeasuredPoint {
                x: f64::NAN,
                y: 0.9,
                u: 0.004,
            },
        ];
        let svg = sweep_plot(&a, s, &measured).unwrap();
        check_svg(&svg);
        assert!(svg.contains("<g class=\"measured\">"));
        assert!(response_plot(&a, s, "no such response", &[]).is_none());
    }

    #[test]
    fn ranges_never_degenerate() {
        assert_eq!(range([2.0, 2.0].into_iter()), Some((1.9, 2.1)));
        assert_eq!(range([0.0].into_iter()), Some((-1.0, 1.0)));
        assert_eq!(range([f64::NAN].into_iter()), None);
        assert_eq!(range(std::iter::empty()), None);
    }

    #[test]
    fn ticks_enclose_the_range_and_are_round() {
        let a = axis((0.124, 0.4), TICKS).unwrap();
        let labels: Vec<String> = a.ticks.iter().map(|t| tick(*t, 1e-12)).collect();
        assert_eq!(labels, ["0.1", "0.15", "0.2", "0.25", "0.3", "0.35", "0.4"]);
        approx::assert_relative_eq!(a.lo, 0.1 - 0.03 * 0.3, max_relative = 1e-12);
        approx::assert_relative_eq!(a.hi, 0.4 + 0.03 * 0.3, max_relative = 1e-12);
        let a = axis((0.0, 3.0), TICKS).unwrap();
        assert_eq!(a.ticks.len(), 7, "steps of 0.5 from 0 to 3");
        let a = axis((0.8205, 0.9152), TICKS).unwrap();
        assert!(a.ticks[0] <= 0.8205 && a.ticks[a.ticks.len() - 1] >= 0.9152);
        assert!(a.ticks.len() <= TICKS && a.ticks.len() >= 3);
        let labels: Vec<String> = a.ticks.iter().map(|t| tick(*t, 1e-12)).collect();
        assert_eq!(labels, ["0.82", "0.84", "0.86", "0.88", "0.9", "0.92"]);
        let a = axis((-1.0, 1e300), TICKS).unwrap();
        assert!(a.ticks.len() <= TICKS);
        assert!(axis((1.0, 1.0), TICKS).is_none());
        assert!(axis((f64::NAN, 1.0), TICKS).is_none());
    }

    #[test]
    fn breakdown_figure_zooms_on_the_breakdown_region() {
        let a = fixture::assess(fixture::DEMO);
        let s = &a.sweeps[0];
        let b = &s.breakdown[0];
        let sc = breakdown_scenes(&a, s, b, &[]).expect("scenes");
        let ((x0, x1), (y0, y1)) = sc.window;
        // Every mesh's breakdown and threshold inside the window.
        for m in &b.per_mesh {
            assert!(m.x > x0 && m.x < x1, "{} at {}", m.mesh, m.x);
            assert!(m.threshold > y0 && m.threshold < y1);
        }
        // Lowest threshold to highest reference: at least 1 / 1.9 of the height.
        let lo = b
            .per_mesh
            .iter()
            .map(|m| m.threshold)
            .fold(f64::INFINITY, f64::min);
        let hi = b
            .per_mesh
            .iter()
            .map(|m| m.reference)
            .fold(f64::NEG_INFINITY, f64::max);
        assert!((hi - lo) / (y1 - y0) >= 1.0 / 1.9 - 1e-12);
        let count = |sc: &Scene, class: &str| sc.layers.iter().filter(|l| l.class == class).count();
        assert_eq!(count(&sc.zoom, "threshold"), 3);
        assert_eq!(count(&sc.zoom, "reference-level"), 3);
        assert_eq!(count(&sc.zoom, "breakdown"), 3);
        assert_eq!(count(&sc.zoom, "breakdown-uncertainty"), 1);
        assert_eq!(count(&sc.whole, "zoom-window"), 1);
        let svg = breakdown_plot(&a, s, b, &[]).expect("a figure");
        check_svg(&svg);
        assert!(svg.starts_with(&format!(
            "<svg width=\"{WIDTH}\" height=\"{}\"",
            HEIGHT + WHOLE_HEIGHT
        )));
        assert_eq!(svg.matches("<g class=\"panel\"").count(), 2);
        assert!(!svg.contains("url("), "nothing a page would fetch");
    }

    #[test]
    fn polylines_are_cut_at_the_window() {
        // A line from inside to outside and back: two runs, cut exactly at y = 1 (analytic).
        let pts = [(0.0, 0.0), (1.0, 2.0), (2.0, 0.0)];
        let runs = clip_polyline(&pts, (0.0, 2.0), (-1.0, 1.0));
        assert_eq!(
            runs,
            vec![vec![(0.0, 0.0), (0.5, 1.0)], vec![(1.5, 1.0), (2.0, 0.0)]]
        );
        // Wholly inside: unchanged, one run; wholly outside: nothing.
        assert_eq!(
            clip_polyline(&pts, (-1.0, 3.0), (-1.0, 3.0)),
            vec![pts.to_vec()]
        );
        assert!(clip_polyline(&pts, (5.0, 6.0), (-1.0, 3.0)).is_empty());
        assert_eq!(inside(&pts, (0.5, 2.0), (-1.0, 1.0)), vec![(2.0, 0.0)]);
    }

    #[test]
    fn fixed_axes_keep_their_range_and_put_round_ticks_inside() {
        let a = axis_within((0.8912, 0.9134), TICKS).unwrap();
        assert_eq!((a.lo, a.hi), (0.8912, 0.9134));
        assert!(a.ticks.len() >= 3 && a.ticks.len() <= TICKS);
        assert!(a.ticks.iter().all(|t| *t >= a.lo && *t <= a.hi));
        let labels: Vec<String> = a.ticks.iter().map(|t| tick(*t, 1e-12)).collect();
        assert_eq!(labels, ["0.895", "0.9", "0.905", "0.91"]);
        assert!(axis_within((1.0, 1.0), TICKS).is_none());
        assert!(axis_within((f64::NAN, 1.0), TICKS).is_none());
    }

    #[test]
    fn tick_labels_are_short() {
        assert_eq!(tick(0.30000000000000004, 1e-12), "0.3");
        assert_eq!(tick(1e-17, 1e-12), "0");
        assert_eq!(tick(0.905, 1e-12), "0.905");
    }
}
