//! CSV export: one file, one header row, a `record` column telling the two kinds of row apart.
//!
//! Rows, in this order:
//! 1. one `quantity` row per scalar quantity, then per sweep and per breakdown the breakdown
//!    abscissa (`<sweep>.breakdown.<response>`) and the reference (`<sweep>.reference.<response>`);
//! 2. one `band_point` row per point of every sweep's band, increasing abscissa, then one
//!    `comparison_point` row per compared point of every comparison (in the study's order);
//! 3. the aggregated warnings of the points of a result, one row per code: `band_warning`
//!    (per sweep's band), `comparison_warning` (per comparison along a sweep), `field_warning`
//!    (per field column), in that order;
//! 4. one `not_computed` row per band or comparison that could not be formed (`sweep`: the
//!    sweep or comparison, `name`: the response, `method`: `not computed: <reason>`, `warning`:
//!    the code), bands first;
//! 5. one `file_read` row per file the study made meshbound read (the study file first, then
//!    sweep CSVs, probe files and measured points, paths as given), then one `file_written`
//!    row per file it made meshbound write: the path is in `name`, every other cell is empty.
//!
//! Columns (empty where a figure does not exist or does not apply; numbers at full precision,
//! the shortest text that reads back to the same double; relative measures are fractions):
//!
//! | column | `quantity` row | `band_point` row |
//! |---|---|---|
//! | `record` | `quantity` | `band_point` |
//!
//! (A `file_read` or `file_written` row holds only `record` and `name`, the path.)
//!
//! | `sweep` | sweep name for breakdown and reference rows | sweep name |
//! | `name` | quantity name | band response |
//! | `unit` | quantity unit | – |
//! | `x` | – | abscissa |
//! | `value` | finest mesh's value | finest mesh's interpolated value |
//! | `absolute` | U | U |
//! | `relative` | U/\|value\| | – (not held; absolute/\|value\|) |
//! | `lower`, `upper` | value ∓ U | value ∓ U |
//! | `convergence` | class | class |
//! | `method` | `three_grid`, `oscillation_range` or `least_squares`; `not computed: <reason>` for a result that could not be computed | – |
//! | `observed_order` | order of the governing estimate | order of the governing estimate |
//! | `extrapolated` | extrapolated value of the governing estimate | same |
//! | `three_grid_order`, `three_grid_extrapolated`, `three_grid_uncertainty` | three-mesh p, φ_ext21, U | – |
//! | `gci_fine`, `gci_coarse`, `convergence_ratio`, `asymptotic_ratio` | three-mesh figures | – |
//! | `least_squares_order`, `least_squares_extrapolated`, `least_squares_uncertainty` | free order, φ0 of the selected fit, U of the finest mesh | – |
//! | `least_squares_fit`, `least_squares_weighted` | selected fit (`free`, `first`, `second`, `first_second`), `true`/`false` | – |
//! | `meshes` | mesh names finest first, `;`-separated | the sweep's meshes |
//! | `mesh_values` | values finest first, `;`-separated | – |
//! | `warning` | the code of `not_computed`, when the result could not be computed | the codes of the point's warnings, `;`-separated |
//! | `warning_points`, `warning_at` | – | – |
//!
//! A `comparison_point` row holds `sweep` (the comparison), `name` (the response, or the
//! quantity), `x` (the abscissa; empty for a scalar quantity), `value` (the simulation S) and
//! the last seven columns: `reference_value` (D), `comparison_error` (E = S − D), `u_num`,
//! `u_input`, `u_reference` (u_D), `u_val` (standard uncertainties) and `agreement` (`yes`:
//! \|E\| ≤ k·u_val; `by_u_num`: yes, but only because of u_num, warning
//! `comparison_carried_by_u_num`; `no`; `undecided`: no quotable u_num). Those columns are empty
//! on every other row.
//!
//! A `band_warning`, `comparison_warning` or `field_warning` row holds `sweep` (the sweep, for a
//! band or comparison), `name` (the band's or comparison's response, or `<field>.<column>`),
//! `warning` (one code), `warning_points` (how many points raised it) and `warning_at` (the
//! first abscissae or probe ids, `;`-separated; `warning_points` minus their number were not
//! listed); every other cell is empty.
//!
//! Text cells (names, units, mesh lists, paths, labels) that begin with `=`, `+`, `-`, `@`, tab
//! or carriage return get a leading `'` and are quoted, so that a spreadsheet shows them as text
//! ([`text`]); numeric cells are never changed.
//!
//! The same table is in `docs/exports.md`.

use super::format::full;
use super::Exporter;
use crate::assess::sweep::{BandPoint, SweepResult};
use crate::assess::{Assessment, Method, QuantityResult};
use crate::point_warnings::PointWarning;

/// CSV exporter.
pub struct Csv;

/// The header row, in column order.
pub const COLUMNS: [&str; 26] = [
    "record",
    "sweep",
    "name",
    "unit",
    "x",
    "value",
    "absolute",
    "relative",
    "lower",
    "upper",
    "convergence",
    "method",
    "observed_order",
    "extrapolated",
    "three_grid_order",
    "three_grid_extrapolated",
    "three_grid_uncertainty",
    "gci_fine",
    "gci_coarse",
    "convergence_ratio",
    "asymptotic_ratio",
    "least_squares_order",
    "least_squares_extrapolated",
    "least_squares_uncertainty",
    "least_squares_fit",
    "least_squares_weighted",
];

const MESHES: &str = "meshes";
const MESH_VALUES: &str = "mesh_values";
/// The columns after `meshes` and `mesh_values`: the point warnings.
pub const WARNING_COLUMNS: [&str; 3] = ["warning", "warning_points", "warning_at"];
/// The last columns: the figures of a `comparison_point` row (ASME V&V 20; docs/method.md §8).
pub const COMPARISON_COLUMNS: [&str; 7] = [
    "reference_value",
    "comparison_error",
    "u_num",
    "u_input",
    "u_reference",
    "u_val",
    "agreement",
];
/// Where the comparison columns begin.
const CMP: usize = COLUMNS.len() + 2 + WARNING_COLUMNS.len();
/// Cells per row.
const WIDTH: usize = CMP + COMPARISON_COLUMNS.len();

fn o(v: Option<f64>) -> String {
    v.map_or(String::new(), full)
}

fn method(m: Method) -> &'static str {
    match m {
        Method::ThreeGrid => "three_grid",
        Method::OscillationRange => "oscillation_range",
        Method::LeastSquares => "least_squares",
        Method::TwoMesh => "two_mesh",
    }
}

/// The first characters that make a spreadsheet read a cell as a formula (or, for tab and
/// carriage return, that some spreadsheets strip before reading one).
pub const FORMULA_STARTS: [char; 6] = ['=', '+', '-', '@', '\t', '\r'];

/// A text cell (a name, unit, path or label from the study) made safe for spreadsheets: when it
/// begins with one of [`FORMULA_STARTS`] it gets a leading `'` (and the writer quotes it), so
/// that a spreadsheet shows it as text instead of running it as a formula. Numbers never go
/// through here: `-0.5` written by meshbound stays a number. A lone `-` (the usual unit of a
/// dimensionless quantity) is left as it is: with nothing after it, it cannot form a formula.
pub fn text(s: &str) -> String {
    if s != "-" && s.starts_with(FORMULA_STARTS) {
        format!("'{s}")
    } else {
        s.to_string()
    }
}

fn quantity_row(q: &QuantityResult) -> Vec<String> {
    let u = q.uncertainty.as_ref();
    let g = q.governing.as_ref();
    let tg = q.three_grid.as_ref().map(|t| &t.estimate);
    let ls = q.least_squares.as_ref();
    let mut row = vec![
        "quantity".into(),
        text(q.role.sweep().unwrap_or_default()),
        text(&q.name),
        text(q.unit.as_deref().unwrap_or_default()),
        String::new(),
        o(u.map(|u| u.value).or(q.values.first().copied())),
        o(u.map(|u| u.absolute)),
        o(u.and_then(|u| u.relative)),
        o(u.map(|u| u.lower)),
        o(u.map(|u| u.upper)),
        q.convergence.map_or("", |c| c.label()).into(),
        match &q.not_computed {
            Some(nc) => text(&nc.text()),
            None => u.map_or("", |u| method(u.method)).into(),
        },
        o(g.and_then(|g| g.order)),
        o(g.and_then(|g| g.extrapolated)),
        o(tg.and_then(|e| e.observed_order)),
        o(tg.and_then(|e| e.extrapolated)),
        o(tg.and_then(|e| e.uncertainty)),
        o(tg.and_then(|e| e.gci_fine)),
        o(tg.and_then(|e| e.gci_coarse)),
        o(tg.and_then(|e| e.convergence_ratio)),
        o(tg.and_then(|e| e.asymptotic_ratio)),
        o(ls.and_then(|l| l.order)),
        o(ls.and_then(|l| l.selected_fit()).map(|f| f.phi0)),
        o(ls.and_then(|l| l.per_mesh.first()).map(|m| m.uncertainty)),
        ls.map_or("", |l| l.selected.kind.label()).into(),
        ls.map_or(String::new(), |l| l.selected.weighted.to_string()),
        text(&q.meshes.join(";")),
        q.values
            .iter()
            .map(|v| full(*v))
            .collect::<Vec<_>>()
            .join(";"),
        q.not_computed
            .as_ref()
            .map_or(String::new(), |nc| text(&nc.code)),
        String::new(),
        String::new(),
    ];
    row.resize(WIDTH, String::new());
    row
}

/// A `not_computed` row: a band or comparison that could not be formed.
fn not_computed_row(
    sweep: &str,
    name: &str,
    nc: &crate::assess::partial::NotComputed,
) -> Vec<String> {
    let mut row = vec![String::new(); WIDTH];
    row[0] = "not_computed".into();
    row[1] = text(sweep);
    row[2] = text(name);
    row[11] = text(&nc.text());
    row[COLUMNS.len() + 2] = text(&nc.code);
    row
}

fn band_row(s: &SweepResult, response: &str, p: &BandPoint) -> Vec<String> {
    let mut row = vec![String::new(); WIDTH];
    row[0] = "band_point".into();
    row[1] = text(&s.name);
    row[2] = text(response);
    row[4] = full(p.x);
    row[5] = full(p.value);
    row[6] = o(p.absolute);
    row[8] = o(p.lower);
    row[9] = o(p.upper);
    row[10] = p.convergence.map_or("", |c| c.label()).into();
    row[12] = o(p.order);
    row[13] = o(p.extrapolated);
    row[COLUMNS.len()] = text(&s.meshes.join(";"));
    row[COLUMNS.len() + 2] = text(&p.warnings.join(";"));
    row
}

/// One row per compared point (`record` `comparison_point`): `sweep` the comparison, `name`
/// the response (or the quantity), `x` the abscissa (empty for a scalar quantity), `value` the
/// simulation S, then the comparison columns.
fn comparison_rows(c: &crate::assess::compare::ComparisonResult) -> Vec<Vec<String>> {
    c.comparison
        .points
        .iter()
        .map(|p| {
            let mut row = vec![String::new(); WIDTH];
            row[0] = "comparison_point".into();
            row[1] = text(&c.name);
            row[2] = text(c.response.as_deref().unwrap_or(&c.name));
            if c.kind == "sweep" {
                row[4] = full(p.x);
            }
            row[5] = full(p.simulation);
            row[CMP] = full(p.measured);
            row[CMP + 1] = full(p.error);
            row[CMP + 2] = o(p.u_num);
            row[CMP + 3] = full(p.u_input);
            row[CMP + 4] = full(p.u_measured);
            row[CMP + 5] = o(p.u_val);
            row[CMP + 6] = match p.within {
                None => "undecided",
                Some(false) => "no",
                Some(true) if c.carried_by_u_num.contains(&p.x) => "by_u_num",
                Some(true) => "yes",
            }
            .into();
            row
        })
        .collect()
}

/// One row of aggregated point warnings (`record` `band_warning`, `comparison_warning` or
/// `field_warning`).
fn warning_row<T>(
    record: &str,
    sweep: &str,
    name: &str,
    w: &PointWarning<T>,
    place: impl Fn(&T) -> String,
) -> Vec<String> {
    let mut row = vec![String::new(); WIDTH];
    row[0] = record.into();
    row[1] = text(sweep);
    row[2] = text(name);
    row[COLUMNS.len() + 2] = text(&w.code);
    row[COLUMNS.len() + 3] = w.points.to_string();
    row[COLUMNS.len() + 4] = text(&w.at.iter().map(place).collect::<Vec<_>>().join(";"));
    row
}

/// Every row of the export, header first, text cells already made safe by [`text`].
pub fn rows(a: &Assessment) -> Vec<Vec<String>> {
    let mut out = vec![COLUMNS
        .iter()
        .chain(&[MESHES, MESH_VALUES])
        .chain(&WARNING_COLUMNS)
        .chain(&COMPARISON_COLUMNS)
        .map(|c| c.to_string())
        .collect::<Vec<_>>()];
    for q in &a.quantities {
        out.push(quantity_row(q));
    }
    for s in &a.sweeps {
        for b in &s.breakdown {
            out.push(quantity_row(&b.x_estimate));
            out.push(quantity_row(&b.reference_estimate));
        }
    }
    for s in &a.sweeps {
        if let Some(band) = &s.band {
            for p in &band.points {
                out.push(band_row(s, &band.response, p));
            }
        }
    }
    for c in &a.comparisons {
        out.extend(comparison_rows(c));
    }
    for s in &a.sweeps {
        if let Some(band) = &s.band {
            for w in &band.point_warnings {
                out.push(warning_row(
                    "band_warning",
                    &s.name,
                    &band.response,
                    w,
                    |x| full(*x),
                ));
            }
        }
    }
    for s in &a.sweeps {
        if let Some((band, nc)) = s
            .band
            .as_ref()
            .and_then(|b| b.not_computed.as_ref().map(|nc| (b, nc)))
        {
            out.push(not_computed_row(&s.name, &band.response, nc));
        }
    }
    for c in &a.comparisons {
        if let Some(nc) = &c.not_computed {
            out.push(not_computed_row(
                &c.name,
                c.response.as_deref().unwrap_or_default(),
                nc,
            ));
        }
    }
    for c in &a.comparisons {
        for w in &c.point_warnings {
            let response = c.response.as_deref().unwrap_or_default();
            out.push(warning_row(
                "comparison_warning",
                &c.name,
                response,
                w,
                |x| full(*x),
            ));
        }
    }
    for f in &a.fields {
        for c in &f.columns {
            let name = format!("{}.{}", f.name, c.name);
            for w in &c.point_warnings {
                out.push(warning_row("field_warning", "", &name, w, String::clone));
            }
        }
    }
    let files = |kind: &str, paths: &[String], out: &mut Vec<Vec<String>>| {
        for path in paths {
            let mut row = vec![String::new(); WIDTH];
            row[0] = kind.into();
            row[2] = text(path);
            out.push(row);
        }
    };
    files("file_read", &a.files_read, &mut out);
    files("file_written", &a.files_written, &mut out);
    out
}

/// One cell as CSV (RFC 4180): quoted, with quotes doubled, when it holds a comma, a quote or a
/// line break, and always when it begins with `'` (a cell neutralised by [`text`]).
fn field(cell: &str, out: &mut String) {
    if cell.starts_with('\'') || cell.contains([',', '"', '\n', '\r']) {
        out.push('"');
        out.push_str(&cell.replace('"', "\"\""));
        out.push('"');
    } else {
        out.push_str(cell);
    }
}

impl Exporter for Csv {
    fn export(&self, a: &Assessment) -> Vec<u8> {
        let mut out = String::new();
        for r in rows(a) {
            for (i, cell) in r.iter().enumerate() {
                if i > 0 {
                    out.push(',');
                }
                field(cell, &mut out);
            }
            out.push('\n');
        }
        out.into_bytes()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::json::Json;
    use crate::report::markup::fixture;
    use approx::assert_relative_eq;

    fn parse(bytes: &[u8]) -> (csv::StringRecord, Vec<csv::StringRecord>) {
        let mut r = csv::Reader::from_reader(bytes);
        let head = r.headers().expect("header row").clone();
        let rows = r.records().collect::<Result<Vec<_>, _>>().expect("rows");
        (head, rows)
    }

    #[test]
    fn rows_have_the_columns_of_the_header_and_both_record_kinds() {
        let a = fixture::assess(fixture::DEMO);
        let (head, rows) = parse(&Csv.export(&a));
        assert_eq!(
            head.len(),
            COLUMNS.len() + 2 + WARNING_COLUMNS.len() + COMPARISON_COLUMNS.len()
        );
        assert_eq!(&head[0], "record");
        assert_eq!(&head[COLUMNS.len() + 1], "mesh_values");
        assert_eq!(&head[CMP - 1], "warning_at");
        assert_eq!(&head[head.len() - 1], "agreement");
        for r in &rows {
            assert_eq!(r.len(), head.len());
        }
        let quantities: Vec<&str> = rows
            .iter()
            .filter(|r| &r[0] == "quantity")
            .map(|r| r.get(2).unwrap_or(""))
            .collect();
        assert_eq!(
            quantities,
            [
                "efficiency",
                "torque",
                "cav.breakdown.efficiency",
                "cav.reference.efficiency"
            ]
        );
        let band = a.sweeps[0].band.as_ref().expect("band");
        let points = rows.iter().filter(|r| &r[0] == "band_point").count();
        assert_eq!(points, band.points.len());
        let read: Vec<&str> = rows
            .iter()
            .filter(|r| &r[0] == "file_read")
            .map(|r| r.get(2).unwrap_or(""))
            .collect();
        assert_eq!(read, ["demo.yaml"]);
        // The band's points raise warnings (the demo's orders), aggregated in one row per code.
        let warned = rows.iter().filter(|r| &r[0] == "band_warning").count();
        assert_eq!(warned, band.point_warnings.len());
        assert!(warned > 0);
        assert_eq!(rows.len(), quantities.len() + points + warned + read.len());
    }

    #[test]
    fn figures_equal_the_json_figures() {
        let a = fixture::assess(fixture::DEMO);
        let json: serde_json::Value =
            serde_json::from_slice(&Json.export(&a)).expect("the JSON exporter gives JSON");
        let (head, rows) = parse(&Csv.export(&a));
        let col = |name: &str| head.iter().position(|h| h == name).expect(name);
        let eff = rows.iter().find(|r| &r[2] == "efficiency").expect("row");
        let num = |r: &csv::StringRecord, c: &str| -> f64 { r[col(c)].parse().expect(c) };
        let u = &json["quantities"][0]["uncertainty"];
        // Full precision: the CSV text reads back to the very double of the JSON.
        assert_relative_eq!(
            num(eff, "absolute"),
            u["absolute"].as_f64().expect("U"),
            max_relative = 0.0,
            epsilon = 0.0
        );
        assert_relative_eq!(
            num(eff, "gci_fine"),
            json["quantities"][0]["three_grid"]["gci_fine"]
                .as_f64()
                .expect("gci"),
            max_relative = 0.0,
            epsilon = 0.0
        );
        assert_eq!(&eff[col("method")], "three_grid");
        assert_eq!(&eff[col("meshes")], "M_fine;M_mid;M_coarse");
        let b = rows
            .iter()
            .find(|r| &r[2] == "cav.breakdown.efficiency")
            .expect("breakdown row");
        assert_relative_eq!(
            num(b, "value"),
            json["sweeps"][0]["breakdown"][0]["x_estimate"]["uncertainty"]["value"]
                .as_f64()
                .expect("x_b"),
            max_relative = 0.0,
            epsilon = 0.0
        );
        let p = rows
            .iter()
            .find(|r| &r[0] == "band_point")
            .expect("band row");
        let jp = &json["sweeps"][0]["band"]["points"][0];
        assert_relative_eq!(
            num(p, "x"),
            jp["x"].as_f64().expect("x"),
            max_relative = 0.0,
            epsilon = 0.0
        );
        assert_eq!(&p[col("relative")], "");
    }

    #[test]
    fn missing_figures_are_empty_cells() {
        let a = fixture::assess(fixture::DEMO);
        let (head, rows) = parse(&Csv.export(&a));
        let col = |name: &str| head.iter().position(|h| h == name).expect(name);
        let torque = rows.iter().find(|r| &r[2] == "torque").expect("row");
        // divergent (R = 2 > 1, Stern et al. 2001 classes): no uncertainty, no order
        for c in [
            "absolute",
            "relative",
            "lower",
            "upper",
            "method",
            "observed_order",
        ] {
            assert_eq!(&torque[col(c)], "", "{c}");
        }
        assert_eq!(&torque[col("convergence")], "divergent");
        assert_eq!(&torque[col("value")], "101");
        let text = String::from_utf8(Csv.export(&a)).expect("UTF-8");
        assert!(!text.contains("NaN") && !text.contains("inf"));
    }

    /// Manufactured: φ = −0.4 − 0.1 h² on h = 1, 2, 4 gives −0.5, −0.8, −2.0; r = 2 and p = 2
    /// exactly, φ_ext21 = −0.4, U = Fs |ε21| / (r^p − 1) = 1.25 · 0.3 / 3 = 0.125 (Celik et al.
    /// 2008, eqs. 3–7 in absolute form), so value − U = −0.625. The names are hostile on
    /// purpose: a formula, a unit that a spreadsheet would take for a number, a mesh name
    /// beginning with `@`.
    const HOSTILE: &str = r#"format: 1
title: hostile names
meshes:
  - {name: "@m1", size: 1.0}
  - {name: m2, size: 2.0}
  - {name: m3, size: 4.0}
quantities:
  '=HYPERLINK("x")':
    unit: "+1"
    values: {"@m1": -0.5, m2: -0.8, m3: -2.0}
"#;

    #[test]
    fn formula_text_is_neutralised_and_numbers_stay_numbers() {
        let a = fixture::assess(HOSTILE);
        let bytes = Csv.export(&a);
        let text = String::from_utf8(bytes.clone()).expect("UTF-8");
        // Exact text of the hostile cells: a leading quote, and the cell quoted.
        assert!(
            text.contains("\nquantity,,\"'=HYPERLINK(\"\"x\"\")\",\"'+1\",,-0.5,"),
            "{text}"
        );
        assert!(
            text.contains(",\"'@m1;m2;m3\",-0.5;-0.8;-2,,,,,,,,,,\n"),
            "{text}"
        );
        let (head, rows) = parse(&bytes);
        let col = |name: &str| head.iter().position(|h| h == name).expect(name);
        let q = rows.iter().find(|r| &r[0] == "quantity").expect("row");
        assert_eq!(&q[col("name")], "'=HYPERLINK(\"x\")");
        assert_eq!(&q[col("unit")], "'+1");
        assert_eq!(&q[col("meshes")], "'@m1;m2;m3");
        // Negative figures written by meshbound stay numbers (manufactured values above).
        assert_eq!(&q[col("value")], "-0.5");
        assert_eq!(&q[col("mesh_values")], "-0.5;-0.8;-2");
        let num = |c: &str| -> f64 { q[col(c)].parse().expect(c) };
        // φ = −0.4 − 0.1 h² (analytic): p = 2 = p_f on r = 2, δ_RE = 0.3/3 = 0.1: the default
        // correction factor (Stern et al. 2001, from memory) is 1.1 at C = 1, U = 0.11.
        assert_relative_eq!(num("absolute"), 0.11, max_relative = 1e-12);
        assert_relative_eq!(num("lower"), -0.61, max_relative = 1e-12);
        assert_relative_eq!(num("extrapolated"), -0.4, max_relative = 1e-12);
        assert_relative_eq!(num("observed_order"), 2.0, max_relative = 1e-12);
        // No cell of the file begins with a formula character unless it is a number.
        for r in &rows {
            for cell in r.iter() {
                if cell.starts_with(FORMULA_STARTS) && cell != "-" {
                    assert!(cell.split(';').all(|v| v.parse::<f64>().is_ok()), "{cell}");
                }
            }
        }
        // The JSON keeps the names as written.
        assert_eq!(a.quantities[0].name, "=HYPERLINK(\"x\")");
    }

    #[test]
    fn text_cells_beginning_with_a_formula_character_get_a_quote() {
        for (raw, safe) in [
            ("=1+1", "'=1+1"),
            ("+1", "'+1"),
            ("-x", "'-x"),
            ("@SUM(A1)", "'@SUM(A1)"),
            ("\t=1", "'\t=1"),
            ("\r=1", "'\r=1"),
            ("-", "-"),
            ("efficiency", "efficiency"),
            ("a=b", "a=b"),
            ("", ""),
        ] {
            assert_eq!(text(raw), safe, "{raw:?}");
        }
        let mut out = String::new();
        field("'+1", &mut out);
        field("a,b", &mut out);
        field("plain", &mut out);
        assert_eq!(out, "\"'+1\"\"a,b\"plain");
    }

    #[test]
    fn sweep_results_carry_their_role_and_meshes() {
        let a = fixture::assess(fixture::DEMO);
        let s = &a.sweeps[0];
        let b = &s.breakdown[0];
        let (sweep, response) = (s.name.clone(), b.response.clone());
        assert_eq!(
            b.x_estimate.role,
            crate::assess::Role::Breakdown {
                sweep: sweep.clone(),
                response: response.clone()
            }
        );
        assert_eq!(
            b.reference_estimate.role,
            crate::assess::Role::Reference { sweep, response }
        );
        assert_eq!(b.x_estimate.meshes, s.meshes);
        assert_eq!(a.quantities[0].role, crate::assess::Role::Quantity);
        let names: Vec<String> = a.meshes.iter().map(|m| m.name.clone()).collect();
        assert_eq!(a.quantities[0].meshes, names);
        let (head, rows) = parse(&Csv.export(&a));
        let col = |name: &str| head.iter().position(|h| h == name).expect(name);
        let row = rows
            .iter()
            .find(|r| r[col("name")] == b.x_estimate.name)
            .expect("breakdown row");
        assert_eq!(&row[col("sweep")], s.name.as_str());
        assert_eq!(&row[col("meshes")], s.meshes.join(";").as_str());
    }
}
