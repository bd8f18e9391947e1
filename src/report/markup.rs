//! The report content shared by the markup formats (Markdown, LaTeX, HTML).
//!
//! [`document`] lays out one assessment as a sequence of headings, paragraphs, tables and
//! lists — the same content for every format — and a [`Markup`] implementation renders each
//! block in its own syntax. Cells say what they hold ([`Cell::Num`], [`Cell::Percent`], …) so
//! that each format can typeset numbers its own way (`\num{…}` in LaTeX). Every number shown
//! is a figure the assessment holds, rounded for display by [`super::format`].

use super::format::{
    class_label, condensed, governing_extrapolated, governing_label, governing_order, num, orders,
    percent, places, point_class_label, points_of, sig, with_uncertainty,
};
use super::table::{breakdown_rule, statement, symbol};
use crate::assess::sweep::{BandResult, BreakdownResult, SweepResult};
use crate::assess::{Assessment, Method, QuantityResult};
use crate::point_warnings::PointWarning;

/// How wide the tables may be.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Layout {
    /// Every column (Markdown, HTML: the page scrolls or wraps).
    Wide,
    /// Tables narrow enough for one column of a two-column paper (LaTeX): fewer columns,
    /// long tables turned into rows, the classes and methods left to the text above them.
    Column,
}

/// Rows of the condensed band table (about this many, always with the last point).
pub const BAND_ROWS: usize = 16;

/// A piece of running text.
#[derive(Debug, Clone, PartialEq)]
pub enum Span {
    /// Plain text (escaped by the format).
    Text(String),
    /// An identifier, set in a code font (warning codes, file names).
    Code(String),
    /// Emphasised text.
    Strong(String),
}

/// Splits text on backticks: the parts between backticks become [`Span::Code`].
/// Warning messages name meshes and keys this way.
pub fn spans(text: &str) -> Vec<Span> {
    text.split('`')
        .enumerate()
        .filter(|(_, s)| !s.is_empty())
        .map(|(i, s)| {
            if i % 2 == 1 {
                Span::Code(s.to_string())
            } else {
                Span::Text(s.to_string())
            }
        })
        .collect()
}

/// One table cell.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// Text.
    Text(String),
    /// A number already rounded for display (as produced by [`super::format`]).
    Num(String),
    /// A fraction shown as a percentage.
    Percent(f64),
    /// A figure that does not exist.
    Missing,
}

impl Cell {
    /// Text cell.
    pub fn text(s: impl Into<String>) -> Self {
        Cell::Text(s.into())
    }
    /// Number cell, or [`Cell::Missing`] for `None`.
    pub fn num(v: Option<String>) -> Self {
        v.map_or(Cell::Missing, Cell::Num)
    }
    /// Percentage cell, or [`Cell::Missing`] for `None`.
    pub fn percent(v: Option<f64>) -> Self {
        v.map_or(Cell::Missing, Cell::Percent)
    }
}

/// Column alignment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    /// Text columns.
    Left,
    /// Number columns.
    Right,
}

/// A table: a caption, headed columns and rows of cells.
#[derive(Debug, Clone, PartialEq)]
pub struct TableBlock {
    /// What the table shows.
    pub caption: String,
    /// Column headings.
    pub headers: Vec<String>,
    /// Alignment per column.
    pub align: Vec<Align>,
    /// Rows; each has one cell per column.
    pub rows: Vec<Vec<Cell>>,
}

impl TableBlock {
    fn new(caption: impl Into<String>, columns: &[(&str, Align)]) -> Self {
        TableBlock {
            caption: caption.into(),
            headers: columns.iter().map(|(h, _)| h.to_string()).collect(),
            align: columns.iter().map(|(_, a)| *a).collect(),
            rows: Vec::new(),
        }
    }
}

/// One block of the report.
#[derive(Debug, Clone, PartialEq)]
pub enum Block {
    /// A heading, level 1 (title) to 3.
    Heading(u8, String),
    /// A paragraph of running text.
    Paragraph(Vec<Span>),
    /// A table.
    Table(TableBlock),
    /// A bulleted list.
    List(Vec<Vec<Span>>),
    /// The caution, set apart.
    Caution(String),
    /// The drafted uncertainty statement, set apart as text to copy.
    Statement(String),
    /// A figure (HTML sets the SVG inline, Markdown links the file; LaTeX leaves it out).
    Figure(Figure),
}

/// A figure of the report.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    /// What the figure shows.
    pub title: String,
    /// The SVG text (from [`super::plot`]).
    pub svg: String,
    /// The file the SVG is written to, relative to the report, when it is written to one.
    pub file: Option<String>,
}

impl Figure {
    /// A figure held only as SVG text (no file).
    pub fn inline(title: impl Into<String>, svg: impl Into<String>) -> Self {
        Figure {
            title: title.into(),
            svg: svg.into(),
            file: None,
        }
    }
}

/// A markup syntax: renders each block. Implementations escape the text they are given.
pub trait Markup {
    /// Text before the first block.
    fn begin(&self, _title: &str) -> String {
        String::new()
    }
    /// Text after the last block.
    fn end(&self) -> String {
        String::new()
    }
    /// A heading.
    fn heading(&self, level: u8, text: &str) -> String;
    /// A paragraph.
    fn paragraph(&self, spans: &[Span]) -> String;
    /// A table.
    fn table(&self, t: &TableBlock) -> String;
    /// A bulleted list.
    fn list(&self, items: &[Vec<Span>]) -> String;
    /// The caution.
    fn caution(&self, text: &str) -> String;
    /// The drafted statement; by default a paragraph.
    fn statement(&self, text: &str) -> String {
        self.paragraph(&[Span::Text(text.to_string())])
    }
    /// A figure; formats that can neither embed nor link it leave it out.
    fn figure(&self, _figure: &Figure) -> String {
        String::new()
    }
}

/// Renders blocks with a markup.
pub fn render<M: Markup + ?Sized>(m: &M, title: &str, blocks: &[Block]) -> String {
    let mut out = m.begin(title);
    for b in blocks {
        out.push_str(&match b {
            Block::Heading(l, t) => m.heading(*l, t),
            Block::Paragraph(s) => m.paragraph(s),
            Block::Table(t) => m.table(t),
            Block::List(items) => m.list(items),
            Block::Caution(t) => m.caution(t),
            Block::Statement(t) => m.statement(t),
            Block::Figure(f) => m.figure(f),
        });
    }
    out.push_str(&m.end());
    out
}

fn text(s: impl Into<String>) -> Span {
    Span::Text(s.into())
}

/// Value and U of a statement, the value rounded to the last digit shown of U.
fn value_and_u(q: &QuantityResult) -> (Cell, Cell) {
    if let Some(nc) = &q.not_computed {
        return (Cell::Missing, Cell::text(nc.text()));
    }
    match &q.uncertainty {
        Some(u) => {
            let (v, a) = with_uncertainty(u.value, u.absolute);
            (Cell::Num(v), Cell::Num(a))
        }
        None => (
            Cell::num(q.values.first().map(|v| num(*v, 8))),
            Cell::Missing,
        ),
    }
}

fn class(q: &QuantityResult) -> Cell {
    Cell::text(class_label(q))
}

fn method(q: &QuantityResult) -> Cell {
    q.uncertainty
        .as_ref()
        .map_or(Cell::text("none"), |_| Cell::text(governing_label(q)))
}

fn meshes_table(a: &Assessment) -> TableBlock {
    let caption = match a.size_basis {
        crate::grid::SizeBasis::Relative => format!(
            "Meshes, finest first; h relative to the finest mesh: the {} of the finest mesh's cell count over the mesh's (dimension {})",
            match a.dimension {
                1 => "ratio".to_string(),
                2 => "square root".to_string(),
                3 => "cube root".to_string(),
                d => format!("root of order {d}"),
            },
            a.dimension
        ),
        crate::grid::SizeBasis::Absolute => format!(
            "Meshes, finest first; h the representative size as given (absolute; dimension {})",
            a.dimension
        ),
    };
    let mut t = TableBlock::new(
        caption,
        &[
            ("mesh", Align::Left),
            ("cells", Align::Right),
            ("h", Align::Right),
            ("ratio to finer", Align::Right),
        ],
    );
    for m in &a.meshes {
        t.rows.push(vec![
            Cell::text(&m.name),
            Cell::num(m.cells.map(|c| num(c, 8))),
            Cell::Num(num(m.size, 5)),
            Cell::num(m.ratio.map(|r| sig(r, 4))),
        ]);
    }
    t
}

/// The results table of a column: quantity with its unit, value, U, relative U, the governing
/// order and extrapolated value (the class and method are in the list above it).
fn results_table_column(a: &Assessment) -> TableBlock {
    let mut t = TableBlock::new(
        "Uncertainty of each quantity on the finest mesh (class and method in the list above; p and the extrapolated value of the governing estimate)",
        &[
            ("quantity", Align::Left),
            ("value", Align::Right),
            ("U", Align::Right),
            ("relative U", Align::Right),
            ("p", Align::Right),
            ("extrapolated", Align::Right),
        ],
    );
    for q in &a.quantities {
        let (v, u) = value_and_u(q);
        t.rows.push(vec![
            Cell::text(with_unit(&q.name, q.unit.as_deref())),
            v,
            u,
            Cell::percent(q.uncertainty.as_ref().and_then(|u| u.relative)),
            Cell::num(governing_order(q).map(|p| sig(p, 4))),
            Cell::num(governing_extrapolated(q).map(|x| sig(x, 6))),
        ]);
    }
    t
}

/// A name with its unit in brackets: `head [m]`; no brackets for a dimensionless quantity.
pub fn with_unit(name: &str, unit: Option<&str>) -> String {
    match unit.map(str::trim) {
        None | Some("" | "-" | "1") => name.to_string(),
        Some(u) => format!("{name} [{u}]"),
    }
}

fn results_table(a: &Assessment) -> TableBlock {
    let mut t = TableBlock::new(
        "Uncertainty of each quantity on the finest mesh",
        &[
            ("quantity", Align::Left),
            ("unit", Align::Left),
            ("value", Align::Right),
            ("U", Align::Right),
            ("relative U", Align::Right),
            ("class", Align::Left),
            ("method", Align::Left),
            ("observed order", Align::Right),
            ("extrapolated", Align::Right),
        ],
    );
    for q in &a.quantities {
        let (v, u) = value_and_u(q);
        t.rows.push(vec![
            Cell::text(&q.name),
            q.unit.as_deref().map_or(Cell::Missing, Cell::text),
            v,
            u,
            Cell::percent(q.uncertainty.as_ref().and_then(|u| u.relative)),
            class(q),
            method(q),
            Cell::num(governing_order(q).map(|p| sig(p, 4))),
            Cell::num(governing_extrapolated(q).map(|x| sig(x, 7))),
        ]);
    }
    t
}

/// Every published rule's U per quantity, the governing one marked; `None` when no quantity
/// has the rules (fewer than two meshes).
fn rules_table(a: &Assessment) -> Option<TableBlock> {
    use crate::estimate::rules::Rule;
    let rules: Vec<Rule> = Rule::ALL
        .into_iter()
        .filter(|r| {
            a.quantities
                .iter()
                .any(|q| q.rules.iter().any(|x| x.rule == *r))
        })
        .collect();
    if rules.is_empty() {
        return None;
    }
    let mut columns: Vec<(&str, Align)> = vec![("quantity", Align::Left)];
    columns.extend(rules.iter().map(|r| (r.label(), Align::Right)));
    let mut t = TableBlock::new(
        "U of the finest mesh by every published rule (* governs; docs/method.md §12)",
        &columns,
    );
    for q in a.quantities.iter().filter(|q| !q.rules.is_empty()) {
        let governs = q
            .governing
            .as_ref()
            .filter(|g| g.method != Method::LeastSquares)
            .and_then(|g| g.three_mesh_rule);
        let mut row = vec![Cell::text(&q.name)];
        for r in &rules {
            let u = q
                .rules
                .iter()
                .find(|x| x.rule == *r)
                .and_then(|x| x.uncertainty);
            row.push(Cell::num(u.map(|u| {
                let mark = if governs == Some(*r) { " *" } else { "" };
                format!("{}{mark}", sig(u, 3))
            })));
        }
        t.rows.push(row);
    }
    Some(t)
}

/// Every published rule's U per quantity as rows (quantity, rule, U; * marks the one that
/// governs), for a column.
fn rules_table_column(a: &Assessment) -> Option<TableBlock> {
    let mut t = TableBlock::new(
        "U of the finest mesh by every published rule (* governs; docs/method.md §12)",
        &[
            ("quantity", Align::Left),
            ("rule", Align::Left),
            ("U", Align::Right),
        ],
    );
    for q in a.quantities.iter().filter(|q| !q.rules.is_empty()) {
        let governs = q
            .governing
            .as_ref()
            .filter(|g| g.method != Method::LeastSquares)
            .and_then(|g| g.three_mesh_rule);
        for (i, r) in q.rules.iter().enumerate() {
            let mark = if governs == Some(r.rule) { " *" } else { "" };
            t.rows.push(vec![
                Cell::text(if i == 0 { q.name.as_str() } else { "" }),
                Cell::text(r.rule.title()),
                Cell::num(r.uncertainty.map(|u| format!("{}{mark}", sig(u, 3)))),
            ]);
        }
    }
    (!t.rows.is_empty()).then_some(t)
}

/// The monitor histories the quantities' values came from, per mesh; `None` when none did.
fn histories_table(a: &Assessment, layout: Layout) -> Option<TableBlock> {
    if a.quantities.iter().all(|q| q.histories.is_empty()) {
        return None;
    }
    if layout == Layout::Column {
        let mut t = TableBlock::new(
            "Monitor histories: value of each mesh and the iterative uncertainty U_I its history gives (steady part and drift in the Markdown and HTML reports)",
            &[
                ("quantity, mesh", Align::Left),
                ("samples", Align::Right),
                ("value", Align::Right),
                ("U_I", Align::Right),
            ],
        );
        for q in &a.quantities {
            for h in &q.histories {
                t.rows.push(vec![
                    Cell::text(format!("{}, {}", q.name, h.mesh)),
                    Cell::num(Some(h.result.samples.to_string())),
                    Cell::num(Some(num(h.result.value, 8))),
                    Cell::num(h.iterative_uncertainty.map(|u| sig(u, 3))),
                ]);
            }
        }
        return Some(t);
    }
    let mut t = TableBlock::new(
        "Monitor histories: value of each mesh, start of the steady part, and the iterative uncertainty U_I the history gives (docs/method.md, monitor histories)",
        &[
            ("quantity", Align::Left),
            ("mesh", Align::Left),
            ("samples", Align::Right),
            ("steady from", Align::Right),
            ("value", Align::Right),
            ("U stat. (95 %)", Align::Right),
            ("drift", Align::Right),
            ("U_I", Align::Right),
        ],
    );
    for q in &a.quantities {
        for h in &q.histories {
            let r = &h.result;
            t.rows.push(vec![
                Cell::text(&q.name),
                Cell::text(&h.mesh),
                Cell::num(Some(r.samples.to_string())),
                Cell::num(Some(
                    r.steady
                        .start_at
                        .map_or_else(|| r.steady.start_index.to_string(), |x| num(x, 8)),
                )),
                Cell::num(Some(num(r.value, 8))),
                Cell::num(r.statistical.as_ref().map(|s| sig(s.expanded, 3))),
                Cell::num(r.iterative.as_ref().map(|i| sig(i.drift, 3))),
                Cell::num(h.iterative_uncertainty.map(|u| sig(u, 3))),
            ]);
        }
    }
    Some(t)
}

/// The two estimates side by side, for quantities with a least-squares estimate.
fn both_estimates_table(a: &Assessment) -> Option<TableBlock> {
    let mut t = TableBlock::new(
        "Three-mesh and least-squares estimates side by side (U of the finest mesh)",
        &[
            ("quantity", Align::Left),
            ("three-mesh order", Align::Right),
            ("three-mesh extrapolated", Align::Right),
            ("three-mesh U", Align::Right),
            ("least-squares order", Align::Right),
            ("least-squares extrapolated", Align::Right),
            ("least-squares U", Align::Right),
            ("selected fit", Align::Left),
            ("governs", Align::Left),
        ],
    );
    for q in &a.quantities {
        let Some(ls) = &q.least_squares else { continue };
        let tg = q.three_grid.as_ref().map(|t| &t.estimate);
        let governs = match q
            .governing
            .as_ref()
            .filter(|g| g.absolute.is_some())
            .map(|g| g.method)
        {
            Some(Method::LeastSquares) => "least squares",
            Some(Method::ThreeGrid | Method::OscillationRange) => "three-mesh",
            Some(Method::TwoMesh) => "two-mesh",
            None => "neither",
        };
        t.rows.push(vec![
            Cell::text(&q.name),
            Cell::num(tg.and_then(|e| e.observed_order).map(|p| sig(p, 4))),
            Cell::num(tg.and_then(|e| e.extrapolated).map(|x| sig(x, 7))),
            Cell::num(tg.and_then(|e| e.uncertainty).map(|u| sig(u, 4))),
            Cell::num(ls.order.map(|p| sig(p, 4))),
            Cell::num(ls.selected_fit().map(|f| sig(f.phi0, 7))),
            Cell::num(ls.per_mesh.first().map(|m| sig(m.uncertainty, 4))),
            Cell::text(format!(
                "{}, {}",
                ls.selected.kind.label(),
                if ls.selected.weighted {
                    "weighted"
                } else {
                    "unweighted"
                }
            )),
            Cell::text(governs),
        ]);
    }
    (!t.rows.is_empty()).then_some(t)
}

/// The two estimates as rows (quantity, estimate, p, extrapolated, U; * marks the one that
/// governs), for a column.
fn both_estimates_column(a: &Assessment) -> Option<TableBlock> {
    let mut t = TableBlock::new(
        "Three-mesh and least-squares estimates (U of the finest mesh; * governs)",
        &[
            ("quantity", Align::Left),
            ("estimate", Align::Left),
            ("p", Align::Right),
            ("extrapolated", Align::Right),
            ("U", Align::Right),
        ],
    );
    for q in &a.quantities {
        let Some(ls) = &q.least_squares else { continue };
        let tg = q.three_grid.as_ref().map(|t| &t.estimate);
        let governs = q
            .governing
            .as_ref()
            .filter(|g| g.absolute.is_some())
            .map(|g| g.method);
        let mark = |yes: bool| if yes { " *" } else { "" };
        t.rows.push(vec![
            Cell::text(&q.name),
            Cell::text("three-mesh"),
            Cell::num(tg.and_then(|e| e.observed_order).map(|p| sig(p, 4))),
            Cell::num(tg.and_then(|e| e.extrapolated).map(|x| sig(x, 7))),
            Cell::num(tg.and_then(|e| e.uncertainty).map(|u| {
                format!(
                    "{}{}",
                    sig(u, 4),
                    mark(matches!(
                        governs,
                        Some(Method::ThreeGrid | Method::OscillationRange)
                    ))
                )
            })),
        ]);
        t.rows.push(vec![
            Cell::text(""),
            Cell::text(format!(
                "least squares, {} {}",
                if ls.selected.weighted {
                    "weighted"
                } else {
                    "unweighted"
                },
                ls.selected.kind.label()
            )),
            Cell::num(ls.order.map(|p| sig(p, 4))),
            Cell::num(ls.selected_fit().map(|f| sig(f.phi0, 7))),
            Cell::num(ls.per_mesh.first().map(|m| {
                format!(
                    "{}{}",
                    sig(m.uncertainty, 4),
                    mark(governs == Some(Method::LeastSquares))
                )
            })),
        ]);
    }
    (!t.rows.is_empty()).then_some(t)
}

/// The breakdown summary of a column: criterion, breakdown abscissa and U, reference and U
/// (relative U and class in the list above).
fn breakdown_summary_column(s: &SweepResult) -> TableBlock {
    let mut t = TableBlock::new(
        format!(
            "Breakdown of sweep {}: the finest mesh's {} and reference, with their uncertainty (classes in the list above)",
            s.name, s.x
        ),
        &[
            ("criterion", Align::Left),
            ("breakdown", Align::Right),
            ("U", Align::Right),
            ("reference", Align::Right),
            ("U of reference", Align::Right),
        ],
    );
    for (i, b) in s.breakdown.iter().enumerate() {
        let (x, ux) = value_and_u(&b.x_estimate);
        let (r, ur) = value_and_u(&b.reference_estimate);
        t.rows.push(vec![
            Cell::text(format!(
                "({}) {}",
                i + 1,
                super::table::subscript_b(symbol(&b.abscissa))
            )),
            x,
            ux,
            r,
            ur,
        ]);
    }
    t
}

fn breakdown_summary(s: &SweepResult) -> TableBlock {
    let xs = if s.breakdown.iter().all(|b| b.abscissa == s.x) {
        format!("breakdown {}", s.x)
    } else {
        "breakdown".to_string()
    };
    let mut t = TableBlock::new(
        format!(
            "Breakdown of sweep {}: the finest mesh's {} and reference, with their uncertainty",
            s.name, s.x
        ),
        &[
            ("criterion", Align::Left),
            (&xs, Align::Right),
            ("U", Align::Right),
            ("relative U", Align::Right),
            ("class", Align::Left),
            ("reference", Align::Right),
            ("U of reference", Align::Right),
            ("class of reference", Align::Left),
        ],
    );
    for b in &s.breakdown {
        let (x, ux) = value_and_u(&b.x_estimate);
        let (r, ur) = value_and_u(&b.reference_estimate);
        t.rows.push(vec![
            Cell::text(breakdown_rule(b, &s.x)),
            x,
            ux,
            Cell::percent(b.x_estimate.uncertainty.as_ref().and_then(|u| u.relative)),
            class(&b.x_estimate),
            r,
            ur,
            class(&b.reference_estimate),
        ]);
    }
    t
}

fn breakdown_per_mesh(s: &SweepResult, b: &BreakdownResult) -> TableBlock {
    let xs = format!("breakdown {}", b.abscissa);
    let mut t = TableBlock::new(
        format!("Breakdown per mesh: {}", breakdown_rule(b, &s.x)),
        &[
            ("mesh", Align::Left),
            ("reference", Align::Right),
            ("threshold", Align::Right),
            (&xs, Align::Right),
        ],
    );
    for row in super::table::per_mesh_rows(s, b) {
        t.rows.push(match row {
            Ok(m) => vec![
                Cell::text(&m.mesh),
                Cell::Num(sig(m.reference, 6)),
                Cell::Num(sig(m.threshold, 6)),
                Cell::Num(sig(m.x, 5)),
            ],
            Err(m) => vec![
                Cell::text(&m.mesh),
                Cell::num(m.reference.map(|r| sig(r, 6))),
                Cell::Missing,
                Cell::text(format!("not computed: {}", m.reason)),
            ],
        });
    }
    t
}

/// The aggregated warnings of the points of a band, comparison or field column as a table:
/// one row per code, with how many points raised it and where (`show` words one place);
/// `None` when the points raised none.
fn point_warnings_table<T>(
    caption: String,
    list: &[PointWarning<T>],
    total: u64,
    label: &str,
    show: impl Fn(&T) -> String,
) -> Option<Block> {
    if list.is_empty() {
        return None;
    }
    let mut t = TableBlock::new(
        caption,
        &[
            ("warning", Align::Left),
            ("points", Align::Right),
            (label, Align::Left),
        ],
    );
    for w in list {
        t.rows.push(vec![
            Cell::text(&w.code),
            Cell::text(points_of(w, total)),
            Cell::text(places(w, &show)),
        ]);
    }
    Some(Block::Table(t))
}

fn band_blocks(s: &SweepResult, band: &BandResult, layout: Layout, out: &mut Vec<Block>) {
    let sm = &band.summary;
    out.push(Block::Heading(
        3,
        format!("Band of {} along {}", band.response, s.x),
    ));
    if let Some(nc) = &band.not_computed {
        out.push(Block::Paragraph(vec![text(format!("{}.", nc.text()))]));
        return;
    }
    if !band.points_outside_range.is_empty() {
        out.push(Block::Paragraph(vec![text(format!(
            "Band abscissae outside the range common to all meshes, not computed there: {} = {}.",
            s.x,
            band.points_outside_range
                .iter()
                .map(|x| num(*x, 6))
                .collect::<Vec<_>>()
                .join(", ")
        ))]));
    }
    let largest_at = sm
        .max_relative_at
        .map_or(String::new(), |x| format!(" at {} = {}", s.x, num(x, 6)));
    out.push(Block::Paragraph(vec![text(format!(
        "{} points, {} interpolation: {} monotonic, {} oscillatory, {} divergent{}; mean relative U {}, largest {}{largest_at}; observed order {} (orders on a search bound, not found or not demonstrated left out).",
        sm.points,
        band.interpolation.label(),
        percent(sm.share_monotonic),
        percent(sm.share_oscillatory),
        percent(sm.share_divergent),
        // classes by the ratio of differences; convergence itself is shown only where the
        // point demonstrates it
        band.point_warnings
            .iter()
            .find(|w| w.code == crate::point_warnings::NOT_DEMONSTRATED)
            .map_or(String::new(), |w| format!(
                " (convergence not demonstrated at {} of them)",
                points_of(w, sm.points as u64)
            )),
        sm.mean_relative.map_or("–".into(), percent),
        sm.max_relative.map_or("–".into(), percent),
        orders(sm.mean_order, sm.median_order, sm.order_points as u64),
    ))]));
    if let (Some(v), false) = (sm.variation, sm.wider_than_variation.is_empty()) {
        out.push(Block::Paragraph(vec![
            Span::Strong("The band is wider than the curve".into()),
            text(format!(
                " at {} of {} points: there U exceeds the variation of {} along the band ({}), so the band cannot tell the curve's shape apart and the figures above support no conclusion about it (warning ",
                sm.wider_than_variation.len(),
                sm.points,
                band.response,
                sig(v, 3),
            )),
            Span::Code(crate::warning::BAND_WIDER_THAN_VARIATION.into()),
            text(")."),
        ]));
    }
    let (rows, step) = condensed(band.points.len(), BAND_ROWS);
    let caption = if step > 1 {
        format!(
            "Band of {} on the finest mesh, every {} point of {} (all are in the JSON and CSV outputs)",
            band.response,
            super::format::ordinal(step),
            band.points.len()
        )
    } else {
        format!("Band of {} on the finest mesh", band.response)
    };
    let columns: &[(&str, Align)] = match layout {
        Layout::Wide => &[
            (s.x.as_str(), Align::Right),
            ("value", Align::Right),
            ("U", Align::Right),
            ("lower", Align::Right),
            ("upper", Align::Right),
            ("class", Align::Left),
        ],
        Layout::Column => &[
            (s.x.as_str(), Align::Right),
            ("value", Align::Right),
            ("U", Align::Right),
            ("class", Align::Left),
        ],
    };
    let mut t = TableBlock::new(caption, columns);
    for i in rows {
        let Some(p) = band.points.get(i) else {
            continue;
        };
        if layout == Layout::Column {
            t.rows.push(vec![
                Cell::Num(num(p.x, 6)),
                Cell::Num(sig(p.value, 6)),
                Cell::num(p.absolute.map(|u| sig(u, 3))),
                Cell::text(point_class_label(p)),
            ]);
            continue;
        }
        t.rows.push(vec![
            Cell::Num(num(p.x, 6)),
            Cell::Num(sig(p.value, 6)),
            Cell::num(p.absolute.map(|u| sig(u, 3))),
            Cell::num(p.lower.map(|v| sig(v, 6))),
            Cell::num(p.upper.map(|v| sig(v, 6))),
            Cell::text(point_class_label(p)),
        ]);
    }
    out.push(Block::Table(t));
    out.extend(point_warnings_table(
        format!("Warnings at the points of the band of {}", band.response),
        &band.point_warnings,
        band.points.len() as u64,
        &format!("at {}", s.x),
        |x| num(*x, 6),
    ));
}

fn comparison_blocks(
    a: &Assessment,
    c: &crate::assess::compare::ComparisonResult,
    layout: Layout,
    out: &mut Vec<Block>,
) {
    let cm = &c.comparison;
    let x = a.sweep_x(&c.name);
    out.push(Block::Heading(
        3,
        format!("{}: {}", c.origin.heading(), c.name),
    ));
    if let Some(nc) = &c.not_computed {
        out.push(Block::Paragraph(vec![text(format!("{}.", nc.text()))]));
        return;
    }
    if !c.points_outside_range.is_empty() {
        out.push(Block::Paragraph(vec![text(format!(
            "{} outside the range common to all meshes, not computed there: {x} = {}.",
            points_word(c.origin, true),
            c.points_outside_range
                .iter()
                .map(|v| num(*v, 6))
                .collect::<Vec<_>>()
                .join(", ")
        ))]));
    }
    out.push(Block::Paragraph(vec![text(format!(
        "ASME V&V 20: E = S − D, u_val = sqrt(u_num² + u_input² + u_D²), {}, k = {}. {} of {} points have |E| ≤ k·u_val; largest |E| {}; mean E {}.{}",
        super::format::u_num_phrase(cm.divisor),
        num(cm.coverage_factor, 4),
        cm.summary.within,
        cm.summary.points,
        sig(cm.summary.max_abs_error, 3),
        sig(cm.summary.mean_error, 3),
        if cm.normalised {
            " Each data set is divided by its own peak: this compares shapes, not levels."
        } else {
            ""
        }
    ))]));
    if !c.carried_by_u_num.is_empty() {
        out.push(Block::Paragraph(vec![
            Span::Strong("Agreement carried by u_num".into()),
            text(format!(
                " at {} of {} points: |E| exceeds k·√(u_input² + u_D²) there, so the points agree only because of the numerical uncertainty, and the agreement supports no conclusion until that uncertainty is reduced (warning ",
                c.carried_by_u_num.len(),
                cm.summary.points,
            )),
            Span::Code(crate::warning::COMPARISON_CARRIED_BY_U_NUM.into()),
            text(")."),
        ]));
    }
    if c.kind == "sweep" {
        out.push(Block::Paragraph(vec![text(format!(
            "Observed order of the pointwise estimates at the {}: {} (orders on a search bound, not found or not demonstrated left out).",
            points_word(c.origin, false),
            orders(c.mean_order, c.median_order, c.order_points as u64)
        ))]));
    }
    let warned = point_warnings_table(
        format!(
            "Warnings at the {} of {}",
            points_word(c.origin, false),
            c.name
        ),
        &c.point_warnings,
        cm.points.len() as u64,
        &format!("at {x}"),
        |v| num(*v, 6),
    );
    let mut t = TableBlock::new(
        format!(
            "Comparison of {}{} with {}",
            c.name,
            c.response
                .as_ref()
                .map_or(String::new(), |r| format!(" ({r})")),
            data_phrase(c.origin)
        ),
        &[
            (x, Align::Right),
            ("S", Align::Right),
            ("D", Align::Right),
            ("E", Align::Right),
            ("u_num", Align::Right),
            ("u_D", Align::Right),
            ("u_val", Align::Right),
            ("|E| ≤ k u_val", Align::Left),
        ],
    );
    let verdict = |p: &crate::compare::ComparedPoint| {
        Cell::text(match p.within {
            None => "undecided",
            Some(false) => "no",
            Some(true) if c.carried_by_u_num.contains(&p.x) => "yes, by u_num",
            Some(true) => "yes",
        })
    };
    if layout == Layout::Column {
        let sweep = c.kind == "sweep";
        let mut cols: Vec<(&str, Align)> = Vec::new();
        if sweep {
            cols.push((x, Align::Right));
        }
        cols.extend([
            ("E", Align::Right),
            ("u_num", Align::Right),
            ("u_D", Align::Right),
            ("u_val", Align::Right),
            ("|E| ≤ k u_val", Align::Left),
        ]);
        t = TableBlock::new(
            format!(
                "{} (E = S − D; S and D in the Markdown, HTML and CSV outputs)",
                t.caption
            ),
            &cols,
        );
        for p in &cm.points {
            let mut row = Vec::new();
            if sweep {
                row.push(Cell::Num(num(p.x, 6)));
            }
            row.extend([
                Cell::Num(sig(p.error, 3)),
                Cell::num(p.u_num.map(|u| sig(u, 3))),
                Cell::Num(sig(p.u_measured, 3)),
                Cell::num(p.u_val.map(|u| sig(u, 3))),
                verdict(p),
            ]);
            t.rows.push(row);
        }
        out.push(Block::Table(t));
        out.extend(warned);
        return;
    }
    for p in &cm.points {
        t.rows.push(vec![
            if c.kind == "sweep" {
                Cell::Num(num(p.x, 6))
            } else {
                Cell::Missing
            },
            Cell::Num(sig(p.simulation, 6)),
            Cell::Num(sig(p.measured, 6)),
            Cell::Num(sig(p.error, 3)),
            Cell::num(p.u_num.map(|u| sig(u, 3))),
            Cell::Num(sig(p.u_measured, 3)),
            Cell::num(p.u_val.map(|u| sig(u, 3))),
            verdict(p),
        ]);
    }
    out.push(Block::Table(t));
    out.extend(warned);
}

/// The points of a comparison's data: "measured points" or "reference points" (capitalised
/// at the start of a sentence).
fn points_word(o: crate::study::reference::Origin, capital: bool) -> &'static str {
    match (o, capital) {
        (crate::study::reference::Origin::Measurement, false) => "measured points",
        (crate::study::reference::Origin::Measurement, true) => "Measured points",
        (crate::study::reference::Origin::Benchmark, false) => "reference points",
        (crate::study::reference::Origin::Benchmark, true) => "Reference points",
    }
}

/// What a comparison's data are, after "with": measurements or a published reference
/// solution.
fn data_phrase(o: crate::study::reference::Origin) -> &'static str {
    match o {
        crate::study::reference::Origin::Measurement => "measurements",
        crate::study::reference::Origin::Benchmark => "the published benchmark solution",
    }
}

/// Some columns of a table, its caption extended by `what`.
fn columns_of(t: &TableBlock, keep: &[usize], what: &str) -> TableBlock {
    TableBlock {
        caption: format!("{}: {what}", t.caption),
        headers: keep
            .iter()
            .filter_map(|&i| t.headers.get(i).cloned())
            .collect(),
        align: keep
            .iter()
            .filter_map(|&i| t.align.get(i).copied())
            .collect(),
        rows: t
            .rows
            .iter()
            .map(|r| keep.iter().filter_map(|&i| r.get(i).cloned()).collect())
            .collect(),
    }
}

fn field_blocks(f: &crate::field::FieldSummary, layout: Layout, out: &mut Vec<Block>) {
    out.push(Block::Heading(2, format!("Field {}", f.name)));
    let mut t = TableBlock::new(
        format!(
            "Pointwise estimate over {} {}{}",
            f.points,
            super::field_line::place_word(f),
            f.written
                .as_ref()
                .map_or(String::new(), |w| format!("; per-point results in {w}"))
        ),
        &[
            ("column", Align::Left),
            ("monotonic", Align::Right),
            ("oscillatory", Align::Right),
            ("divergent", Align::Right),
            ("no change", Align::Right),
            ("mean order", Align::Right),
            ("median order", Align::Right),
            ("mean U/|φ|", Align::Right),
            ("largest U/|φ|", Align::Right),
        ],
    );
    for c in &f.columns {
        t.rows.push(vec![
            Cell::text(&c.name),
            Cell::Num(c.classes.monotonic.to_string()),
            Cell::Num(c.classes.oscillatory.to_string()),
            Cell::Num(c.classes.divergent.to_string()),
            Cell::Num(c.classes.no_change.to_string()),
            Cell::num(c.mean_order.map(|v| sig(v, 3))),
            Cell::num(c.median_order.map(|v| sig(v, 3))),
            Cell::percent(c.mean_relative),
            Cell::percent(c.max_relative),
        ]);
    }
    match layout {
        Layout::Wide => out.push(Block::Table(t)),
        Layout::Column => {
            out.push(Block::Table(columns_of(
                &t,
                &[0, 1, 2, 3, 4],
                "probes per convergence class",
            )));
            out.push(Block::Table(columns_of(
                &t,
                &[0, 5, 6, 7, 8],
                "orders and relative U",
            )));
        }
    }
    out.push(Block::Paragraph(vec![text(
        "Mean and median orders are over the probes whose convergence is demonstrated (orders on a search bound, not found or not demonstrated left out).",
    )]));
    let extra = super::field_line::extra_lines(f);
    if !extra.is_empty() {
        out.push(Block::List(
            extra.into_iter().map(|l| vec![text(l)]).collect(),
        ));
    }
    for c in &f.columns {
        out.extend(point_warnings_table(
            format!("Warnings at the probes of {}.{}", f.name, c.name),
            &c.point_warnings,
            f.points,
            "at probes",
            String::clone,
        ));
    }
}

fn sweep_blocks(s: &SweepResult, layout: Layout, out: &mut Vec<Block>) {
    out.push(Block::Heading(2, format!("Sweep {}", s.name)));
    let mode = s.mode.map_or(String::new(), |m| {
        format!(", derived from raw monitors in {} mode", m.label())
    });
    out.push(Block::Paragraph(vec![text(format!(
        "{} along {}, {} interpolation, meshes {}; range common to all meshes {} to {}{mode}.",
        s.responses.join(", "),
        s.x,
        s.interpolation.label(),
        s.meshes.join(", "),
        num(s.overlap[0], 6),
        num(s.overlap[1], 6),
    ))]));
    if !s.breakdown.is_empty() {
        out.push(Block::Heading(3, format!("Breakdown of {}", s.name)));
        let mut items = Vec::new();
        for (i, b) in s.breakdown.iter().enumerate() {
            let n = match layout {
                Layout::Wide => String::new(),
                Layout::Column => format!("({}) ", i + 1),
            };
            items.push(vec![
                Span::Strong(format!("{n}{}", breakdown_rule(b, &s.x))),
                text(format!(
                    ": {} = {}; reference {} = {}",
                    super::table::subscript_b(symbol(&b.abscissa)),
                    statement(&b.x_estimate),
                    symbol(&b.response),
                    statement(&b.reference_estimate)
                )),
            ]);
        }
        out.push(Block::List(items));
        out.push(Block::Table(match layout {
            Layout::Wide => breakdown_summary(s),
            Layout::Column => breakdown_summary_column(s),
        }));
        for b in &s.breakdown {
            out.push(Block::Table(breakdown_per_mesh(s, b)));
        }
    }
    if let Some(band) = &s.band {
        band_blocks(s, band, layout, out);
    }
}

/// Heading of the drafted uncertainty statement.
pub const STATEMENT_HEADING: &str = "Drafted uncertainty statement";

/// What the drafted statement is, said before it.
pub const STATEMENT_NOTE: &str = "A draft to adapt for a report or a paper. It states only the \
figures above; add what the study file does not hold: the solver and its discretisation schemes, \
the iterative convergence, the turbulence model and any other physical model (cavitation, \
multiphase, combustion) the results depend on.";

/// The report of one assessment as blocks: meshes, results, estimates side by side, sweeps
/// (breakdown and band), figures, warnings, the drafted uncertainty statement
/// ([`super::paragraph::uncertainty_paragraph`]) and, last, the caution.
pub fn document(a: &Assessment, figures: &[Figure]) -> Vec<Block> {
    document_with(a, figures, Layout::Wide)
}

/// [`document`] with the tables laid out for `layout`.
pub fn document_with(a: &Assessment, figures: &[Figure], layout: Layout) -> Vec<Block> {
    let mut out = vec![
        Block::Heading(1, a.title.clone()),
        Block::Paragraph(vec![text("Study file: "), Span::Code(a.study.clone())]),
    ];
    // Every file the study made meshbound read or write, so that a study from someone else
    // cannot read files unnoticed.
    for (label, paths) in [
        ("Files read: ", a.files_read.get(1..).unwrap_or_default()),
        ("Files written: ", &a.files_written[..]),
    ] {
        if !paths.is_empty() {
            let mut spans = vec![text(label)];
            for (i, p) in paths.iter().enumerate() {
                if i > 0 {
                    spans.push(text(", "));
                }
                spans.push(Span::Code(p.clone()));
            }
            out.push(Block::Paragraph(spans));
        }
    }
    out.push(Block::Heading(2, "Meshes".into()));
    out.push(Block::Table(meshes_table(a)));
    if !a.quantities.is_empty() {
        out.push(Block::Heading(2, "Results".into()));
        let items = a
            .quantities
            .iter()
            .map(|q| {
                let unit = q
                    .unit
                    .as_deref()
                    .map_or(String::new(), |u| format!(" [{u}]"));
                vec![
                    Span::Strong(format!("{}{unit}", q.name)),
                    text(format!(": {}", statement(q))),
                ]
            })
            .collect();
        out.push(Block::List(items));
        let column = layout == Layout::Column;
        out.push(Block::Table(if column {
            results_table_column(a)
        } else {
            results_table(a)
        }));
        if let Some(t) = if column {
            rules_table_column(a)
        } else {
            rules_table(a)
        } {
            out.push(Block::Table(t));
        }
        if let Some(t) = histories_table(a, layout) {
            out.push(Block::Table(t));
        }
        if let Some(t) = if column {
            both_estimates_column(a)
        } else {
            both_estimates_table(a)
        } {
            out.push(Block::Table(t));
        }
    }
    for s in &a.sweeps {
        sweep_blocks(s, layout, &mut out);
    }
    out.extend(super::duty::blocks(&a.duty_curves));
    if !a.comparisons.is_empty() {
        let origins: Vec<_> = a.comparisons.iter().map(|c| c.origin).collect();
        let heading = if origins.iter().all(|o| *o == origins[0]) {
            origins[0].heading()
        } else {
            "Comparisons with measurements and published benchmark solutions"
        };
        out.push(Block::Heading(2, heading.into()));
        for c in &a.comparisons {
            comparison_blocks(a, c, layout, &mut out);
        }
    }
    for f in &a.fields {
        field_blocks(f, layout, &mut out);
    }
    if !figures.is_empty() {
        out.push(Block::Heading(2, "Figures".into()));
        for f in figures {
            out.push(Block::Figure(f.clone()));
        }
    }
    out.push(Block::Heading(2, "Warnings".into()));
    if a.warnings.is_empty() {
        out.push(Block::Paragraph(vec![text("None.")]));
    } else {
        out.push(Block::List(
            a.warnings
                .iter()
                .map(|w| {
                    let mut s = vec![Span::Code(w.code.clone()), text(": ")];
                    s.extend(spans(&w.message));
                    s
                })
                .collect(),
        ));
    }
    out.push(Block::Heading(2, STATEMENT_HEADING.into()));
    out.push(Block::Paragraph(vec![text(STATEMENT_NOTE)]));
    out.push(Block::Statement(super::paragraph::uncertainty_paragraph(a)));
    out.push(Block::Caution(a.caution.clone()));
    out
}

#[cfg(test)]
pub(crate) mod fixture {
    //! Demo studies for the exporters' tests (invented numbers: format tests only, no check
    //! values come from them).

    use crate::assess::Assessment;
    use std::path::Path;

    /// Three meshes, a scalar quantity, a divergent one, and a sweep with a breakdown and a
    /// band (invented demo data).
    pub const DEMO: &str = "format: 1
title: Demo runner & draft tube_test (invented) 100%
dimension: 3
meshes:
  - {name: M_fine, cells: 2.0e6}
  - {name: M_mid, cells: 8.0e5}
  - {name: M_coarse, cells: 3.0e5}
quantities:
  efficiency:
    unit: \"-\"
    values: {M_fine: 0.912, M_mid: 0.905, M_coarse: 0.893}
  torque:
    unit: N m
    values: {M_fine: 101.0, M_mid: 103.0, M_coarse: 104.0}
sweeps:
  cav:
    x: sigma
    responses: [efficiency]
    interpolation: linear
    data:
      M_fine: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.90, 0.90, 0.898, 0.88, 0.80]}
      M_mid: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.89, 0.89, 0.886, 0.86, 0.76]}
      M_coarse: {sigma: [0.4, 0.3, 0.2, 0.15, 0.1], efficiency: [0.87, 0.87, 0.858, 0.83, 0.70]}
    breakdown:
      - {response: efficiency, drop: 1%, reference: plateau, plateau_from: 0.3}
    band: {response: efficiency, at: fine}
";

    /// Five meshes, so that the least-squares estimate governs (invented demo data).
    pub const FIVE: &str = "format: 1
title: five meshes (invented)
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.3}
  - {name: C, size: 1.69}
  - {name: D, size: 2.2}
  - {name: E, size: 2.86}
quantities:
  head:
    unit: m
    values: {A: 24.31, B: 24.27, C: 24.12, D: 24.05, E: 23.71}
";

    /// Runs the real pipeline on a study text.
    pub fn assess(text: &str) -> Assessment {
        let study = crate::study::parse(text, Path::new("demo.yaml")).expect("demo study parses");
        crate::assess::run(&study, &crate::sink::Skip).expect("demo study assesses")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn backticks_become_code() {
        assert_eq!(
            spans("mesh `L2`: ratio"),
            vec![
                Span::Text("mesh ".into()),
                Span::Code("L2".into()),
                Span::Text(": ratio".into())
            ]
        );
        assert_eq!(spans(""), vec![]);
    }

    #[test]
    fn document_has_every_part_and_rows_match_columns() {
        let a = fixture::assess(fixture::DEMO);
        let blocks = document(&a, &[]);
        let headings: Vec<&str> = blocks
            .iter()
            .filter_map(|b| match b {
                Block::Heading(_, t) => Some(t.as_str()),
                _ => None,
            })
            .collect();
        for h in [
            "Meshes",
            "Results",
            "Sweep cav",
            "Warnings",
            STATEMENT_HEADING,
        ] {
            assert!(headings.contains(&h), "{h} in {headings:?}");
        }
        assert!(headings.iter().any(|h| h.starts_with("Band of efficiency")));
        let tables: Vec<&TableBlock> = blocks
            .iter()
            .filter_map(|b| match b {
                Block::Table(t) => Some(t),
                _ => None,
            })
            .collect();
        // meshes, results, the published rules, breakdown summary, one per-mesh breakdown
        // table, band, the band's point warnings
        assert_eq!(tables.len(), 7);
        for t in &tables {
            assert_eq!(t.headers.len(), t.align.len());
            for r in &t.rows {
                assert_eq!(r.len(), t.headers.len(), "{}", t.caption);
            }
        }
        assert_eq!(tables[0].rows.len(), a.meshes.len());
        assert_eq!(tables[1].rows.len(), a.quantities.len());
        assert!(matches!(blocks.last(), Some(Block::Caution(c)) if c == &a.caution));
        // The drafted statement comes right before the caution.
        let n = blocks.len();
        assert_eq!(
            blocks[n - 2],
            Block::Statement(crate::report::paragraph::uncertainty_paragraph(&a))
        );
        assert_eq!(blocks[n - 4], Block::Heading(2, STATEMENT_HEADING.into()));
    }

    /// A mesh without breakdown keeps its place (finest first) in the per-mesh table, with the
    /// reason where the breakdown would be; the summary says "not computed" in the U cell.
    /// Demo data (invented): the last point of the finest curve raised above the 1 % threshold.
    #[test]
    fn a_mesh_without_breakdown_is_shown_in_its_place() {
        let text = fixture::DEMO.replace(
            "efficiency: [0.90, 0.90, 0.898, 0.88, 0.80]",
            "efficiency: [0.90, 0.90, 0.898, 0.895, 0.894]",
        );
        let a = fixture::assess(&text);
        let s = &a.sweeps[0];
        let t = breakdown_per_mesh(s, &s.breakdown[0]);
        let meshes: Vec<&Cell> = t.rows.iter().map(|r| &r[0]).collect();
        assert_eq!(
            meshes,
            [
                &Cell::text("M_fine"),
                &Cell::text("M_mid"),
                &Cell::text("M_coarse")
            ]
        );
        assert!(
            matches!(&t.rows[0][3], Cell::Text(x) if x.starts_with("not computed: the response stays above")),
            "{:?}",
            t.rows[0]
        );
        let summary = breakdown_summary(s);
        assert!(
            matches!(&summary.rows[0][2], Cell::Text(x) if x.starts_with("not computed: no breakdown on mesh M_fine")),
            "{:?}",
            summary.rows[0]
        );
        assert_eq!(summary.rows[0][4], Cell::text("not computed"));
    }

    #[test]
    fn divergent_quantity_has_no_uncertainty_cells() {
        let a = fixture::assess(fixture::DEMO);
        let t = results_table(&a);
        let torque = t
            .rows
            .iter()
            .find(|r| r[0] == Cell::text("torque"))
            .expect("torque row");
        // 101, 103, 104: differences −2 then −1 grow with refinement, R = 2 (divergent, by
        // the classes of Stern et al. 2001).
        assert_eq!(torque[3], Cell::Missing);
        assert_eq!(torque[5], Cell::text("divergent"));
        assert_eq!(torque[6], Cell::text("none"));
    }

    #[test]
    fn least_squares_gets_the_side_by_side_table() {
        let a = fixture::assess(fixture::FIVE);
        let t = both_estimates_table(&a).expect("five meshes give a least-squares estimate");
        assert_eq!(t.rows.len(), 1);
        assert!(both_estimates_table(&fixture::assess(fixture::DEMO)).is_none());
    }

    #[test]
    fn figures_are_blocks_only_when_given() {
        let a = fixture::assess(fixture::DEMO);
        let n = |f: &[Figure]| {
            document(&a, f)
                .iter()
                .filter(|b| matches!(b, Block::Figure(..)))
                .count()
        };
        assert_eq!(n(&[]), 0);
        assert_eq!(n(&[Figure::inline("t", "<svg></svg>")]), 1);
    }
}
