//! Fields held in memory: solutions on meshes that share no points (VTK files), and probe
//! files of four meshes or more.
//!
//! # Meshes (docs/method.md §16)
//! Each mesh's VTK file is read whole ([`crate::vtk::read_file`]); a column names an array by
//! the selectors of [`crate::vtk::Mesh::values`] (`p`, `U_x`, `U_0`). Point data sit at the
//! points; cell data sit at each cell's vertex mean (the mean of the points the cell lists,
//! [`measure::centroids`]). The targets are the finest mesh's points (or its cell centres when
//! its columns are cell data), or the probe set the study names. Every coarser mesh's values
//! (with a probe set, every mesh's) are carried onto the targets by [`crate::transfer`]: in
//! 2-D when the source's and the targets' z are all one value, else in 3-D, with the
//! documented defaults of [`TransferOptions::for_dimension`]. A target outside a mesh gets no
//! estimate (class `none`; warning `field_points_outside`); the largest stated transfer
//! error over the meshes is kept per target, and a target where it exceeds
//! [`TRANSFER_SHARE`] × U is counted (warning `field_transfer_error_large`).
//!
//! The estimate at each target is the [`PointEstimator`] with every mesh: with three meshes
//! the three-mesh estimate ([`FastThreeGrid`], the same figures and point warnings as the
//! streamed probe files), with four or more least squares. The class shares weigh each target
//! by the finest mesh's length, area or volume around it ([`measure`]); with a probe set every
//! probe weighs the same.
//!
//! # Outputs
//! A `write` path ending in `.vtu`: the finest mesh (points and cells kept; its own arrays
//! left out) or, with a probe set, the probes as vertex cells, with arrays per column `c` at
//! the targets' location: `c` (the finest mesh's value), `c_extrapolated`, `c_order`,
//! `c_class` ([`CLASS_CODES`]), `c_uncertainty`, `c_relative_uncertainty` (U/|φ1|),
//! `c_transfer_error`; NaN where a figure does not exist. Any other path: the per-point CSV of
//! the probe pipeline (ids: the point index from 0, or the probe's id), with
//! `c_transfer_error` after `c_uncertainty` for fields on meshes only.

use std::path::Path;

use rayon::prelude::*;

use super::measure;
use super::summary::{
    ClassShares, ColumnAcc, FieldSetup, Figures, PointChecks, TransferFigures, ORDER_BINS,
    TRANSFER_SHARE,
};
use super::write::{push_field, push_opt};
use super::{FieldError, FieldSpec, FieldSummary};
use crate::estimate::least_squares::LsSettings;
use crate::estimate::point::{PointEstimator, PointSettings};
use crate::estimate::three_grid::{Governing, ThreeGridSettings};
use crate::estimate::three_grid_fast::FastThreeGrid;
use crate::estimate::Convergence;
use crate::point_warnings::LISTED;
use crate::sink::PointSink;
use crate::transfer::{PointStatus, Source, TransferOptions};
use crate::vtk::{self, Location, Mesh};

/// The `c_class` codes of the `.vtu` output: the class and its number.
pub const CLASS_CODES: [(&str, f64); 5] = [
    ("none", 0.0),
    ("monotonic", 1.0),
    ("oscillatory", 2.0),
    ("divergent", 3.0),
    ("no_change", 4.0),
];

/// Targets per parallel task.
const CHUNK: usize = 4_096;

/// Whether a file is a VTK file, by its name (`.vtu` or `.vtk`, any case).
pub fn is_vtk(path: &Path) -> bool {
    path.extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| e.eq_ignore_ascii_case("vtu") || e.eq_ignore_ascii_case("vtk"))
}

/// Whether a path names a `.vtu` output.
pub fn is_vtu(path: &Path) -> bool {
    path.extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| e.eq_ignore_ascii_case("vtu"))
}

fn class_code(c: Option<Convergence>) -> f64 {
    match c {
        Some(Convergence::Monotonic) => 1.0,
        Some(Convergence::Oscillatory) => 2.0,
        Some(Convergence::Divergent) => 3.0,
        Some(Convergence::NoChange) => 4.0,
        Some(Convergence::Undetermined) | None => 0.0,
    }
}

/// One column's values at every target on every mesh, ready to estimate.
struct ColumnValues {
    /// `meshes` values per target, finest first; NaN where marked missing or outside.
    values: Vec<f64>,
    /// Per target, the largest stated transfer error (fields on meshes; NaN where none).
    transfer_error: Option<Vec<f64>>,
    /// Per target: outside some mesh (fields on meshes; empty otherwise).
    outside: Vec<bool>,
}

/// The ids of the targets.
enum Ids {
    /// The index from 0.
    Index,
    /// Given ids (probe files, probe sets).
    Given(Vec<String>),
}

impl Ids {
    fn get(&self, i: usize) -> std::borrow::Cow<'_, str> {
        match self {
            Ids::Index => std::borrow::Cow::Owned(i.to_string()),
            Ids::Given(v) => std::borrow::Cow::Borrowed(v.get(i).map_or("", String::as_str)),
        }
    }
}

/// Everything estimated at the targets, with what the output needs.
struct Prepared {
    targets: usize,
    ids: Ids,
    columns: Vec<ColumnValues>,
    /// Per target (empty: equal weights).
    weights: Vec<f64>,
    setup: FieldSetup,
    /// The mesh a `.vtu` output is written on (no arrays), and the arrays' location.
    out_mesh: Option<(Mesh, Location)>,
    /// The targets' coordinates (fields on meshes; empty for probe files).
    coords: Vec<[f64; 3]>,
}

/// One target's figures in one column (NaN where a figure does not exist).
#[derive(Debug, Clone, Copy)]
struct PointOut {
    phi1: f64,
    extrapolated: f64,
    order: f64,
    class: Option<Convergence>,
    uncertainty: f64,
    transfer_error: f64,
}

fn nan_if_none(v: Option<f64>) -> f64 {
    v.filter(|x| x.is_finite()).unwrap_or(f64::NAN)
}

fn opt(v: f64) -> Option<f64> {
    v.is_finite().then_some(v)
}

fn mesh_error(path: &Path, message: impl Into<String>) -> FieldError {
    FieldError::Mesh {
        path: path.to_path_buf(),
        message: message.into(),
    }
}

fn read_mesh(path: &Path) -> Result<Mesh, FieldError> {
    vtk::read_file(path).map_err(|e| {
        mesh_error(
            path,
            match e.at {
                Some(at) => format!("{at}: {}", e.message),
                None => e.message,
            },
        )
    })
}

/// Coordinates of a selection: the points, or the cells' vertex means.
fn places(mesh: &Mesh, location: Location) -> Vec<[f64; 3]> {
    match location {
        Location::Point => mesh.points.clone(),
        Location::Cell => measure::centroids(mesh),
    }
}

fn single_z(points: &[[f64; 3]]) -> Option<f64> {
    let z = points.first()?[2];
    // Exactly one value (a plane mesh written with z = 0 or one constant), not nearly one.
    #[allow(clippy::float_cmp)]
    let same = points.iter().all(|p| p[2] == z);
    same.then_some(z)
}

/// Carries `values` at `from` onto `to`: 2-D when every z is one value, else 3-D. Returns the
/// results and the dimension used.
fn carry(
    from: &[[f64; 3]],
    values: Vec<f64>,
    to: &[[f64; 3]],
) -> Result<(Vec<crate::transfer::Transferred>, u8), crate::transfer::TransferError> {
    let flat = match (single_z(from), single_z(to)) {
        #[allow(clippy::float_cmp)] // one plane exactly
        (Some(a), Some(b)) => a == b,
        _ => false,
    };
    if flat {
        let src: Vec<[f64; 2]> = from.iter().map(|p| [p[0], p[1]]).collect();
        let dst: Vec<[f64; 2]> = to.iter().map(|p| [p[0], p[1]]).collect();
        let s = Source::new(src, values)?;
        Ok((s.transfer(&dst, &TransferOptions::for_dimension(2))?, 2))
    } else {
        let s = Source::new(from.to_vec(), values)?;
        Ok((s.transfer(to, &TransferOptions::for_dimension(3))?, 3))
    }
}

/// Reads a probe set: columns `x`, `y`, optionally `z` and `id` (else the row's index from 0).
fn read_probe_points(path: &Path) -> Result<(Vec<String>, Vec<[f64; 3]>), FieldError> {
    use crate::tabular::{ColumnRef, Options, Table};
    let text = read_text(path)?;
    let table = Table::open(&text, &Options::default()).map_err(|_| FieldError::Empty {
        path: path.to_path_buf(),
    })?;
    let line = table.header_line as u64;
    let find = |n: &str| table.find(&ColumnRef::Name(n.into()));
    let need = |n: &str| {
        find(n).ok_or_else(|| FieldError::MissingColumn {
            path: path.to_path_buf(),
            line,
            column: n.into(),
            hint: table.hint().map(|h| format!("; {h}")).unwrap_or_default(),
        })
    };
    let (xi, yi) = (need("x")?, need("y")?);
    let zi = find("z");
    let idi = find("id");
    let mut ids = Vec::new();
    let mut points = Vec::new();
    for r in table.records() {
        let mut p = [0.0; 3];
        for (a, col) in [(0, Some(xi)), (1, Some(yi)), (2, zi)] {
            let Some(col) = col else { continue };
            p[a] = number(&table, &r, col, path)?.ok_or_else(|| FieldError::NotANumber {
                path: path.to_path_buf(),
                line: r.line as u64,
                column: table.header[col].clone(),
                text: "(missing)".into(),
            })?;
        }
        ids.push(match idi {
            Some(i) => r.get(i).text().trim().to_string(),
            None => points.len().to_string(),
        });
        points.push(p);
    }
    Ok((ids, points))
}

fn read_text(path: &Path) -> Result<String, FieldError> {
    use std::io::Read;
    let read_err = |source| FieldError::Read {
        path: path.to_path_buf(),
        source,
    };
    let mut f = crate::input::open_regular(path).map_err(read_err)?;
    let mut bytes = Vec::new();
    f.read_to_end(&mut bytes).map_err(read_err)?;
    let text = String::from_utf8(bytes).map_err(|e| FieldError::Malformed {
        path: path.to_path_buf(),
        line: 1 + e.as_bytes()[..e.utf8_error().valid_up_to()]
            .iter()
            .filter(|&&b| b == b'\n')
            .count() as u64,
        message: "the text is not UTF-8".into(),
    })?;
    Ok(match text.strip_prefix('\u{feff}') {
        Some(t) => t.to_string(),
        None => text,
    })
}

/// A number in column `col` of record `r`; `Ok(None)` when marked missing.
fn number(
    table: &crate::tabular::Table,
    r: &crate::tabular::Record,
    col: usize,
    path: &Path,
) -> Result<Option<f64>, FieldError> {
    let f = r.get(col);
    if col >= r.fields.len() {
        return Err(FieldError::ShortRow {
            path: path.to_path_buf(),
            line: r.line as u64,
            column: table.header[col].clone(),
            found: r.fields.len(),
            expected: table.header.len(),
        });
    }
    let shorten = |t: &str| t.chars().take(40).collect::<String>();
    match table.number(f) {
        Ok(Some(v)) if v.is_finite() => Ok(Some(v)),
        Ok(Some(_)) => Err(FieldError::NotFinite {
            path: path.to_path_buf(),
            line: r.line as u64,
            column: table.header[col].clone(),
            text: shorten(&f.text()),
        }),
        Ok(None) => Ok(None),
        Err(_) => Err(FieldError::NotANumber {
            path: path.to_path_buf(),
            line: r.line as u64,
            column: table.header[col].clone(),
            text: shorten(&f.text()),
        }),
    }
}

/// Reads the meshes of a field on meshes and carries their values onto the targets.
fn prepare_meshes(spec: &FieldSpec) -> Result<Prepared, FieldError> {
    let m = spec.files.len();
    let finest_path = &spec.files[0];
    let finest = read_mesh(finest_path)?;
    let select = |mesh: &Mesh, path: &Path, c: &str| {
        mesh.values(c)
            .map_err(|e| mesh_error(path, format!("column `{c}`: {e}")))
    };
    let mut location = None;
    for c in &spec.columns {
        let s = select(&finest, finest_path, c)?;
        match location {
            None => location = Some(s.location),
            Some(l) if l != s.location => {
                return Err(mesh_error(
                    finest_path,
                    format!(
                        "column `{c}` is {} data but `{}` is {l} data; on the finest mesh every column must sit at the same place",
                        s.location, spec.columns[0]
                    ),
                ))
            }
            Some(_) => {}
        }
    }
    let location = location.unwrap_or(Location::Point);
    let (ids, targets, probes) = match &spec.probe_points {
        Some(p) => {
            let (ids, pts) = read_probe_points(p)?;
            (Ids::Given(ids), pts, true)
        }
        None => (Ids::Index, places(&finest, location), false),
    };
    // Targets with a coordinate that is not a number are refused at their own file (the
    // transfer would otherwise name the coarser file it was carrying).
    if let Some(i) = targets
        .iter()
        .position(|t| t.iter().any(|v| !v.is_finite()))
    {
        let (file, what) = match &spec.probe_points {
            Some(p) => (p.as_path(), "probe point"),
            None if location == Location::Cell => (finest_path.as_path(), "cell centre"),
            None => (finest_path.as_path(), "point"),
        };
        return Err(mesh_error(
            file,
            format!("{what} {i} has a coordinate that is not a finite number"),
        ));
    }
    let n = targets.len();
    let mut columns: Vec<ColumnValues> = spec
        .columns
        .iter()
        .map(|_| ColumnValues {
            values: vec![f64::NAN; n * m],
            transfer_error: Some(vec![f64::NAN; n]),
            outside: vec![false; n],
        })
        .collect();
    let mut dimension = 0u8;
    let mut finest_mesh = Some(finest);
    for (k, path) in spec.files.iter().enumerate() {
        let mesh = match (k, finest_mesh.take()) {
            (0, Some(f)) => f,
            (_, kept) => {
                finest_mesh = kept;
                read_mesh(path)?
            }
        };
        for (c, name) in spec.columns.iter().enumerate() {
            let sel = select(&mesh, path, name)?;
            let col = &mut columns[c];
            if k == 0 && !probes {
                for (i, v) in sel.values.iter().enumerate().take(n) {
                    col.values[i * m] = if v.is_finite() { *v } else { f64::NAN };
                }
                continue;
            }
            let from = places(&mesh, sel.location);
            let (moved, d) = carry(&from, sel.values, &targets)
                .map_err(|e| mesh_error(path, format!("column `{name}`: {e}")))?;
            dimension = dimension.max(d);
            let te = col.transfer_error.get_or_insert_with(Vec::new);
            for (i, t) in moved.iter().enumerate() {
                match (t.status, t.value) {
                    (PointStatus::Outside, _) | (_, None) => col.outside[i] = true,
                    (_, Some(v)) => {
                        col.values[i * m + k] = v;
                        if let Some(e) = t.error.filter(|e| e.is_finite()) {
                            // NaN (no error yet) is replaced.
                            te[i] = if te[i].is_nan() { e } else { te[i].max(e) };
                        }
                    }
                }
            }
        }
        if k == 0 {
            // Only the points and cells are kept (for the weights and the `.vtu` output).
            let mut mesh = mesh;
            mesh.arrays = Vec::new();
            finest_mesh = Some(mesh);
        }
    }
    let finest = finest_mesh.unwrap_or_default();
    let (weights, weighted_by) = if probes {
        (Vec::new(), "equal")
    } else {
        match measure::cell_measures(&finest) {
            Some((cells, kind)) => match location {
                Location::Point => (measure::point_measures(&finest, &cells), kind.word()),
                Location::Cell => (cells, kind.word()),
            },
            None => (Vec::new(), "equal"),
        }
    };
    let weighted_by = if !weights.is_empty() && weights.iter().sum::<f64>() > 0.0 {
        weighted_by
    } else {
        "equal"
    };
    let coords = targets.clone();
    let out_mesh = if probes {
        Mesh {
            points: targets.clone(),
            connectivity: (0..n as u64).collect(),
            offsets: (1..=n as u64).collect(),
            types: vec![1; n],
            arrays: Vec::new(),
        }
    } else {
        Mesh {
            arrays: Vec::new(),
            ..finest
        }
    };
    Ok(Prepared {
        targets: n,
        ids,
        columns,
        weights: if weighted_by == "equal" {
            Vec::new()
        } else {
            weights
        },
        setup: FieldSetup {
            meshes: m as u64,
            data: "meshes",
            targets: match (probes, location) {
                (true, _) => "probe_points",
                (false, Location::Point) => "finest_points",
                (false, Location::Cell) => "finest_cells",
            },
            dimension: Some(dimension.max(2)),
            weighted_by,
        },
        out_mesh: Some((out_mesh, if probes { Location::Point } else { location })),
        coords,
    })
}

/// Reads the probe files of four meshes or more into memory (the same probes in the same
/// order on every mesh).
fn prepare_probe_files(spec: &FieldSpec) -> Result<Prepared, FieldError> {
    use crate::tabular::{ColumnRef, Options, Table};
    let m = spec.files.len();
    let mut ids: Vec<String> = Vec::new();
    let mut lines: Vec<u64> = Vec::new();
    let mut columns: Vec<ColumnValues> = spec
        .columns
        .iter()
        .map(|_| ColumnValues {
            values: Vec::new(),
            transfer_error: None,
            outside: Vec::new(),
        })
        .collect();
    let reading_opts = Options {
        separator: spec.reading.options.separator,
        decimal: spec.reading.options.decimal,
    };
    for (k, path) in spec.files.iter().enumerate() {
        let text = read_text(path)?;
        let mut table = Table::open(&text, &reading_opts).map_err(|_| FieldError::Empty {
            path: path.to_path_buf(),
        })?;
        let line = table.header_line as u64;
        let find = |table: &Table, col: &ColumnRef| -> Result<usize, FieldError> {
            if let ColumnRef::Name(n) = col {
                if table.matches(n) > 1 {
                    return Err(FieldError::DuplicateColumn {
                        path: path.to_path_buf(),
                        line,
                        column: n.clone(),
                    });
                }
            }
            table.find(col).ok_or_else(|| FieldError::MissingColumn {
                path: path.to_path_buf(),
                line,
                column: match col {
                    ColumnRef::Name(n) => n.clone(),
                    ColumnRef::Index(i) => format!("number {i}"),
                },
                hint: table.hint().map(|h| format!("; {h}")).unwrap_or_default(),
            })
        };
        let id_idx = match &spec.id {
            Some(name) => find(&table, &ColumnRef::Name(name.clone()))?,
            None => 0,
        };
        let mut col_idx = Vec::with_capacity(spec.columns.len());
        let mut scales = Vec::with_capacity(spec.columns.len());
        for (c, name) in spec.columns.iter().enumerate() {
            let (col, scale) = spec.reading.columns.get(c).cloned().unwrap_or((None, None));
            let i = find(
                &table,
                &col.unwrap_or_else(|| ColumnRef::Name(name.clone())),
            )?;
            if i == id_idx {
                return Err(FieldError::Spec {
                    field: spec.name.clone(),
                    message: format!(
                        "column `{name}` is the id column of {}; list only quantities under `columns`",
                        path.display()
                    ),
                });
            }
            col_idx.push(i);
            scales.push(scale);
        }
        let wanted = col_idx.clone();
        table.units_row_if(|i| wanted.contains(&i));
        let factors: Vec<f64> = col_idx
            .iter()
            .zip(&scales)
            .map(|(&i, s)| {
                s.unwrap_or_else(|| {
                    table
                        .unit(i)
                        .and_then(crate::tabular::percent_factor)
                        .unwrap_or(1.0)
                })
            })
            .collect();
        let mut row = 0usize;
        for r in table.records() {
            let id = r.get(id_idx).text().trim().to_string();
            if k == 0 {
                ids.push(id);
                lines.push(r.line as u64);
                for c in columns.iter_mut() {
                    c.values.extend(std::iter::repeat_n(f64::NAN, m));
                }
            } else {
                match ids.get(row) {
                    None => {
                        return Err(FieldError::RowCount {
                            path: spec.files[0].clone(),
                            line: lines.last().copied().unwrap_or(line),
                            rows: ids.len() as u64,
                            other_path: path.clone(),
                            other_line: r.line as u64,
                        })
                    }
                    Some(want) if *want != id => {
                        return Err(FieldError::IdMismatch(Box::new(super::IdMismatch {
                            path: path.clone(),
                            line: r.line as u64,
                            column: table.header.get(id_idx).cloned().unwrap_or_default(),
                            found: id.chars().take(40).collect(),
                            expected: want.chars().take(40).collect(),
                            expected_path: spec.files[0].clone(),
                            expected_line: lines[row],
                        })))
                    }
                    Some(_) => {}
                }
            }
            for (c, &i) in col_idx.iter().enumerate() {
                if let Some(v) = number(&table, &r, i, path)? {
                    let v = v * factors[c];
                    columns[c].values[row * m + k] = if v.is_finite() { v } else { f64::NAN };
                }
            }
            if r.fields.len() > table.header.len() {
                return Err(FieldError::LongRow {
                    path: path.clone(),
                    line: r.line as u64,
                    column: table.header.last().cloned().unwrap_or_default(),
                    found: r.fields.len(),
                    expected: table.header.len(),
                });
            }
            row += 1;
        }
        if k > 0 && row < ids.len() {
            return Err(FieldError::RowCount {
                path: path.clone(),
                line: line + row as u64,
                rows: row as u64,
                other_path: spec.files[0].clone(),
                other_line: lines[row],
            });
        }
    }
    Ok(Prepared {
        targets: ids.len(),
        ids: Ids::Given(ids),
        columns,
        weights: Vec::new(),
        setup: FieldSetup {
            meshes: m as u64,
            data: "probe_files",
            targets: "probes",
            dimension: None,
            weighted_by: "equal",
        },
        out_mesh: None,
        coords: Vec::new(),
    })
}

/// The estimator of a field: three meshes or more.
enum Estimator<'a> {
    Three(FastThreeGrid),
    Many(&'a PointEstimator),
    Fixed(crate::estimate::point::AtOrder<'a>),
}

impl Estimator<'_> {
    /// The estimate with every mesh and its flags (the three-mesh path has no flags).
    fn flagged(
        &self,
        phi: &[f64],
    ) -> (
        crate::estimate::point::PointResult,
        crate::estimate::point::PointFlags,
    ) {
        match self {
            Estimator::Many(pe) => pe.estimate_flagged(phi),
            Estimator::Fixed(at) => at.estimate_flagged(phi),
            Estimator::Three(fast) => {
                let e = fast.estimate([phi[0], phi[1], phi[2]]);
                (
                    crate::estimate::point::PointResult {
                        convergence: e.convergence,
                        order: e.observed_order,
                        extrapolated: e.extrapolated,
                        uncertainty: e.uncertainty,
                        basis: None,
                    },
                    Default::default(),
                )
            }
        }
    }
}

/// The one order of a column by `basis` over the points that have every value (`None` when
/// none can be formed), and how many points it came from.
fn global_order(
    basis: super::OrderBasis,
    col: &ColumnValues,
    targets: usize,
    m: usize,
    h: &[f64],
    pe: &PointEstimator,
) -> (Option<f64>, u64) {
    use crate::estimate::global_order::{AverageOrder, DifferenceNorms, NormKind};
    let usable = |i: &usize| {
        !col.outside.get(*i).copied().unwrap_or(false)
            && col.values[i * m..(i + 1) * m].iter().all(|v| v.is_finite())
    };
    match basis {
        super::OrderBasis::PerPoint => (None, 0),
        super::OrderBasis::Average => {
            let acc = (0..targets)
                .into_par_iter()
                .filter(usable)
                .fold(AverageOrder::new, |mut a, i| {
                    a.add(&pe.estimate(&col.values[i * m..(i + 1) * m]));
                    a
                })
                .reduce(AverageOrder::new, |mut a, b| {
                    a.merge(&b);
                    a
                });
            (acc.mean(), acc.count())
        }
        super::OrderBasis::NormL2 | super::OrderBasis::NormMax => {
            let acc = (0..targets)
                .into_par_iter()
                .filter(usable)
                .fold(
                    || DifferenceNorms::new(m),
                    |mut a, i| {
                        a.add(&col.values[i * m..(i + 1) * m]);
                        a
                    },
                )
                .reduce(
                    || DifferenceNorms::new(m),
                    |mut a, b| {
                        a.merge(&b);
                        a
                    },
                );
            let kind = if basis == super::OrderBasis::NormL2 {
                NormKind::L2
            } else {
                NormKind::LInf
            };
            let order = crate::estimate::global_order::norm_order(h, &acc.norms(kind))
                .ok()
                .map(|o| o.order);
            (order, acc.count())
        }
    }
}

/// Accumulated over a chunk of targets in one column.
#[derive(Default, Clone)]
struct Extra {
    /// Weight per class: none, monotonic, oscillatory, divergent, no_change.
    weight: [f64; 5],
    /// The largest stated transfer error met (`None` before the first).
    max_error: Option<f64>,
    large: u64,
    large_at: Vec<String>,
    outside: u64,
    outside_at: Vec<String>,
    within_floor: u64,
    partly_within_floor: u64,
}

impl Extra {
    fn merge(&mut self, o: &Extra) {
        for k in 0..5 {
            self.weight[k] += o.weight[k];
        }
        self.max_error = match (self.max_error, o.max_error) {
            (Some(a), Some(b)) => Some(a.max(b)),
            (a, b) => a.or(b),
        };
        self.large += o.large;
        self.outside += o.outside;
        self.within_floor += o.within_floor;
        self.partly_within_floor += o.partly_within_floor;
        let room = LISTED.saturating_sub(self.large_at.len());
        self.large_at.extend(o.large_at.iter().take(room).cloned());
        let room = LISTED.saturating_sub(self.outside_at.len());
        self.outside_at
            .extend(o.outside_at.iter().take(room).cloned());
    }
}

fn estimate_chunk(
    p: &Prepared,
    col: &ColumnValues,
    range: std::ops::Range<usize>,
    m: usize,
    est: &Estimator<'_>,
    checks: &PointChecks,
) -> (ColumnAcc, Extra, Vec<PointOut>) {
    let mut acc = ColumnAcc::default();
    let mut extra = Extra::default();
    let mut outs = Vec::with_capacity(range.len());
    for i in range {
        let phi = &col.values[i * m..(i + 1) * m];
        let id = p.ids.get(i);
        let w = if p.weights.is_empty() {
            1.0
        } else {
            p.weights[i]
        };
        let te = col.transfer_error.as_ref().map_or(f64::NAN, |t| t[i]);
        let mut out = PointOut {
            phi1: phi[0],
            extrapolated: f64::NAN,
            order: f64::NAN,
            class: None,
            uncertainty: f64::NAN,
            transfer_error: f64::NAN,
        };
        if col.outside.get(i).copied().unwrap_or(false) {
            acc.classes.none += 1;
            extra.weight[0] += w;
            extra.outside += 1;
            if extra.outside_at.len() < LISTED {
                extra.outside_at.push(id.into_owned());
            }
            outs.push(out);
            continue;
        }
        if phi.iter().any(|v| !v.is_finite()) {
            acc.add_missing(id.as_bytes());
            extra.weight[0] += w;
            outs.push(out);
            continue;
        }
        let f = match est {
            Estimator::Three(fast) => {
                let phi3 = [phi[0], phi[1], phi[2]];
                let e = fast.estimate(phi3);
                Figures {
                    convergence: e.convergence,
                    order: e.observed_order,
                    uncertainty: e.uncertainty,
                    formal: e.governing == Some(Governing::FormalOrder),
                    oscillation_range: e.governing == Some(Governing::OscillationRange),
                    codes: checks.codes(&e, phi3),
                }
                .with_extrapolated(e.extrapolated, &mut out)
            }
            Estimator::Many(_) | Estimator::Fixed(_) => {
                let (r, flags) = est.flagged(phi);
                extra.within_floor += u64::from(flags.within_noise_floor);
                extra.partly_within_floor += u64::from(flags.partly_within_noise_floor);
                Figures {
                    convergence: r.convergence,
                    order: r.order,
                    uncertainty: r.uncertainty,
                    formal: false,
                    oscillation_range: false,
                    codes: checks.codes_many(&r, phi),
                }
                .with_extrapolated(r.extrapolated, &mut out)
            }
        };
        acc.add_figures(f, phi[0], id.as_bytes());
        out.order = nan_if_none(f.order);
        out.class = Some(f.convergence);
        out.uncertainty = nan_if_none(f.uncertainty);
        out.transfer_error = te;
        extra.weight[class_code(Some(f.convergence)) as usize] += w;
        if te.is_finite() {
            extra.max_error = Some(extra.max_error.map_or(te, |m| m.max(te)));
            if let Some(u) = f.uncertainty.filter(|u| u.is_finite()) {
                if te > TRANSFER_SHARE * u {
                    extra.large += 1;
                    if extra.large_at.len() < LISTED {
                        extra.large_at.push(id.into_owned());
                    }
                }
            }
        }
        outs.push(out);
    }
    (acc, extra, outs)
}

impl Figures {
    fn with_extrapolated(self, e: Option<f64>, out: &mut PointOut) -> Self {
        out.extrapolated = nan_if_none(e);
        self
    }
}

/// Estimates every column at every target: the summaries and the per-point figures.
fn estimate(
    spec: &FieldSpec,
    p: &Prepared,
    h: &[f64],
    settings: &ThreeGridSettings,
) -> Result<(Vec<super::ColumnSummary>, Vec<Vec<PointOut>>), FieldError> {
    let spec_err = |message: String| FieldError::Spec {
        field: spec.name.clone(),
        message,
    };
    let m = h.len();
    let opts = &spec.estimate;
    let custom = opts.order != super::OrderBasis::PerPoint || opts.noise_floor > 0.0;
    let ps = PointSettings {
        three: settings.clone(),
        least_squares: LsSettings {
            formal_order: settings.formal_order,
            ..LsSettings::default()
        },
        noise_floor: opts.noise_floor,
    };
    let pe = if m > 3 || custom {
        Some(PointEstimator::new(h, &ps).map_err(|e| spec_err(e.to_string()))?)
    } else {
        None
    };
    let (base, cap) = match &pe {
        Some(pe) if m > 3 => (Estimator::Many(pe), ps.least_squares.order_max),
        _ => {
            let fast = FastThreeGrid::new([h[0], h[1], h[2]], settings)
                .map_err(|e| spec_err(e.to_string()))?;
            let cap = fast.order_cap();
            match &pe {
                Some(pe) => (Estimator::Many(pe), cap),
                None => (Estimator::Three(fast), cap),
            }
        }
    };
    let checks = PointChecks::new(settings);
    let bin_scale = ORDER_BINS as f64 / cap;
    let mut summaries = Vec::with_capacity(spec.columns.len());
    let mut points = Vec::with_capacity(spec.columns.len());
    for (name, col) in spec.columns.iter().zip(&p.columns) {
        let ranges: Vec<_> = (0..p.targets)
            .step_by(CHUNK)
            .map(|s| s..(s + CHUNK).min(p.targets))
            .collect();
        // A global order: formed over the column first, then put in at every point.
        let mut used = None;
        let fixed = match &pe {
            Some(pe) if opts.order != super::OrderBasis::PerPoint => {
                let (order, from) = global_order(opts.order, col, p.targets, m, h, pe);
                used = Some(super::summary::GlobalOrderUsed {
                    basis: opts.order,
                    order,
                    from_points: from,
                });
                order
                    .and_then(|o| pe.at_order(o).ok())
                    .map(Estimator::Fixed)
            }
            _ => None,
        };
        let est = fixed.as_ref().unwrap_or(&base);
        let parts: Vec<_> = ranges
            .into_par_iter()
            .map(|r| estimate_chunk(p, col, r, m, est, &checks))
            .collect();
        let mut acc = ColumnAcc::default();
        let mut extra = Extra::default();
        let mut outs = Vec::with_capacity(p.targets);
        for (a, e, o) in parts {
            acc.merge(&a, bin_scale);
            extra.merge(&e);
            outs.extend(o);
        }
        let mut s = acc.finish(name);
        s.global_order = used;
        if opts.noise_floor > 0.0 {
            s.noise_floor = Some(super::summary::NoiseFloorFigures {
                floor: opts.noise_floor,
                within: extra.within_floor,
                partly_within: extra.partly_within_floor,
            });
        }
        if p.setup.data == "meshes" {
            let total: f64 = extra.weight.iter().sum();
            if total > 0.0 {
                let w = |k: usize| extra.weight[k] / total;
                s.class_shares = Some(ClassShares {
                    none: w(0),
                    monotonic: w(1),
                    oscillatory: w(2),
                    divergent: w(3),
                    no_change: w(4),
                });
            }
            s.transfer = Some(TransferFigures {
                max_error: extra.max_error,
                large_error_points: extra.large,
                outside_points: extra.outside,
                large_at: extra.large_at,
                outside_at: extra.outside_at,
            });
        }
        summaries.push(s);
        points.push(outs);
    }
    Ok((summaries, points))
}

/// Writes the per-point CSV of a field into `sink`, a megabyte at a time.
fn write_csv(
    sink: &mut dyn crate::sink::PointSink,
    spec: &FieldSpec,
    p: &Prepared,
    points: &[Vec<PointOut>],
) -> std::io::Result<()> {
    const STAGE: usize = 1 << 20;
    let transfer = p.setup.data == "meshes";
    let mut buf = Vec::with_capacity(STAGE + 4096);
    buf.extend_from_slice(b"id");
    for c in &spec.columns {
        for suffix in [
            "",
            "_extrapolated",
            "_order",
            "_class",
            "_uncertainty",
            "_transfer_error",
        ] {
            if suffix == "_transfer_error" && !transfer {
                continue;
            }
            buf.push(b',');
            push_field(&mut buf, format!("{c}{suffix}").as_bytes());
        }
    }
    buf.push(b'\n');
    for i in 0..p.targets {
        push_field(&mut buf, p.ids.get(i).as_bytes());
        for col in points {
            let o = &col[i];
            buf.push(b',');
            push_opt(&mut buf, opt(o.phi1));
            buf.push(b',');
            push_opt(&mut buf, opt(o.extrapolated));
            buf.push(b',');
            push_opt(&mut buf, opt(o.order));
            buf.push(b',');
            buf.extend_from_slice(o.class.map_or("none", |c| c.label()).as_bytes());
            buf.push(b',');
            push_opt(&mut buf, opt(o.uncertainty));
            if transfer {
                buf.push(b',');
                push_opt(&mut buf, opt(o.transfer_error));
            }
        }
        buf.push(b'\n');
        if buf.len() >= STAGE {
            sink.write_all(&buf)?;
            buf.clear();
        }
    }
    sink.write_all(&buf)
}

/// Writes the `.vtu` of a field's results on the output mesh into `out`: the mesh as read
/// (never copied) with the result arrays of every column.
fn write_vtu_to(
    out: impl std::io::Write,
    spec: &FieldSpec,
    mesh: &Mesh,
    location: Location,
    points: &[Vec<PointOut>],
) -> std::io::Result<()> {
    let mut arrays = Vec::with_capacity(7 * spec.columns.len());
    for (c, col) in spec.columns.iter().zip(points) {
        let values: [(&str, Vec<f64>); 7] = [
            ("", col.iter().map(|o| o.phi1).collect()),
            (
                "_extrapolated",
                col.iter().map(|o| o.extrapolated).collect(),
            ),
            ("_order", col.iter().map(|o| o.order).collect()),
            ("_class", col.iter().map(|o| class_code(o.class)).collect()),
            ("_uncertainty", col.iter().map(|o| o.uncertainty).collect()),
            (
                "_relative_uncertainty",
                col.iter()
                    .map(|o| {
                        let r = o.uncertainty / o.phi1.abs();
                        if r.is_finite() {
                            r
                        } else {
                            f64::NAN
                        }
                    })
                    .collect(),
            ),
            (
                "_transfer_error",
                col.iter().map(|o| o.transfer_error).collect(),
            ),
        ];
        for (suffix, values) in values {
            arrays.push(vtk::Array {
                name: format!("{c}{suffix}"),
                location,
                components: 1,
                values,
            });
        }
    }
    vtk::write_vtu_with(out, mesh, &arrays, vtk::WriteOptions::default())
}

/// Assesses a field held in memory: VTK files on every mesh (`spec.files`, finest first, sizes
/// `h`), or probe files of four meshes or more. See the module notes.
pub(crate) fn assess_in_memory(
    spec: &FieldSpec,
    h: &[f64],
    settings: &ThreeGridSettings,
    sink: Option<Box<dyn PointSink>>,
) -> Result<FieldSummary, FieldError> {
    let spec_err = |message: String| FieldError::Spec {
        field: spec.name.clone(),
        message,
    };
    if spec.files.len() != h.len() || h.len() < 3 {
        return Err(spec_err(format!(
            "three meshes or more are needed, with one file each (got {} files for {} sizes)",
            spec.files.len(),
            h.len()
        )));
    }
    if spec.columns.is_empty() {
        return Err(spec_err("no columns to estimate".into()));
    }
    for (i, c) in spec.columns.iter().enumerate() {
        if c.is_empty() {
            return Err(spec_err("a column name is empty".into()));
        }
        if spec.columns[..i].contains(c) {
            return Err(spec_err(format!("column `{c}` is listed twice")));
        }
    }
    let meshes = spec.files.iter().all(|f| is_vtk(f));
    let p = if meshes {
        prepare_meshes(spec)?
    } else {
        prepare_probe_files(spec)?
    };
    let (columns, points) = estimate(spec, &p, h, settings)?;
    let write_err = |source| FieldError::Write {
        path: spec.write.clone().unwrap_or_default(),
        source,
    };
    let written = match (sink, &spec.write) {
        (Some(mut sink), Some(target)) => {
            match (&p.out_mesh, is_vtu(target)) {
                (Some((mesh, loc)), true) => {
                    // streamed: the file's bytes are never all in memory
                    let mut w = std::io::BufWriter::with_capacity(
                        1 << 18,
                        crate::sink::SinkWriter(&mut *sink),
                    );
                    write_vtu_to(&mut w, spec, mesh, *loc, &points).map_err(write_err)?;
                    std::io::Write::flush(&mut w).map_err(write_err)?;
                }
                (None, true) => {
                    return Err(spec_err(
                        "a `.vtu` output needs VTK data (probe files have no mesh)".into(),
                    ))
                }
                _ => write_csv(&mut *sink, spec, &p, &points).map_err(write_err)?,
            }
            sink.finish().map_err(write_err)?;
            Some(target.display().to_string())
        }
        _ => None,
    };
    // The line and the reference points read the per-point figures at the targets.
    let figures = |column: &str| {
        let c = spec.columns.iter().position(|x| x == column)?;
        let pts = points.get(c)?;
        Some((
            pts.iter().map(|o| o.phi1).collect::<Vec<_>>(),
            pts.iter().map(|o| o.extrapolated).collect::<Vec<_>>(),
            pts.iter().map(|o| o.uncertainty).collect::<Vec<_>>(),
        ))
    };
    let line = match (&spec.estimate.line, p.coords.is_empty()) {
        (Some(l), false) => match figures(&l.column) {
            Some((v, e, u)) => {
                Some(super::profile::sample_line(l, &p.coords, &v, &e, &u).map_err(spec_err)?)
            }
            None => None,
        },
        _ => None,
    };
    let comparison = match (&spec.estimate.reference, p.coords.is_empty()) {
        (Some(r), false) => figures(&r.column).map(|(v, _, u)| {
            super::profile::compare_at_points(
                &r.column,
                r.benchmark,
                &p.coords,
                &v,
                &u,
                &r.points,
                r.divisor,
                &crate::compare::CompareSettings {
                    divisor: None,
                    coverage: r.coverage,
                    u_input: 0.0,
                    u_input_relative: 0.0,
                    normalise: false,
                },
            )
        }),
        _ => None,
    };
    Ok(FieldSummary {
        name: spec.name.clone(),
        points: p.targets as u64,
        written,
        columns,
        setup: Some(p.setup),
        line,
        comparison,
    })
}

/// The number written for a figure in the CSV (shared with the tests).
#[cfg(test)]
fn shortest(v: f64) -> String {
    let mut b = Vec::new();
    super::write::push_num(&mut b, v);
    String::from_utf8(b).unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::vtk::Array;
    use std::path::PathBuf;

    /// A structured triangulation of the unit square with `n` cells a side, points jittered
    /// by a deterministic sequence (interior points only) so that meshes share no points.
    fn square(n: usize, jitter: f64, seed: u64) -> Mesh {
        let mut s = seed;
        let mut next = move || {
            // xorshift64*: deterministic, no crate needed in a test
            s ^= s >> 12;
            s ^= s << 25;
            s ^= s >> 27;
            (s.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        let h = 1.0 / n as f64;
        let mut points = Vec::new();
        for j in 0..=n {
            for i in 0..=n {
                let (mut x, mut y) = (i as f64 * h, j as f64 * h);
                if i > 0 && i < n {
                    x += jitter * h * next();
                }
                if j > 0 && j < n {
                    y += jitter * h * next();
                }
                points.push([x, y, 0.0]);
            }
        }
        let mut m = Mesh {
            points,
            ..Mesh::default()
        };
        let id = |i: usize, j: usize| (j * (n + 1) + i) as u64;
        for j in 0..n {
            for i in 0..n {
                for tri in [
                    [id(i, j), id(i + 1, j), id(i + 1, j + 1)],
                    [id(i, j), id(i + 1, j + 1), id(i, j + 1)],
                ] {
                    m.connectivity.extend_from_slice(&tri);
                    m.offsets.push(m.connectivity.len() as u64);
                    m.types.push(5);
                }
            }
        }
        m
    }

    /// Manufactured φ(x, y; h) = sin(x) cos(y) + (1 + x y) h^2 (analytic data).
    fn phi(p: [f64; 3], h: f64) -> f64 {
        p[0].sin() * p[1].cos() + (1.0 + p[0] * p[1]) * h * h
    }

    fn write_meshes(dir: &Path, ns: &[usize], sizes: &[f64]) -> Vec<PathBuf> {
        write_meshes_with(dir, ns, sizes, phi)
    }

    fn write_meshes_with(
        dir: &Path,
        ns: &[usize],
        sizes: &[f64],
        phi: impl Fn([f64; 3], f64) -> f64,
    ) -> Vec<PathBuf> {
        ns.iter()
            .zip(sizes)
            .enumerate()
            .map(|(k, (&n, &h))| {
                let mut m = square(n, 0.3, 7 + k as u64);
                let v: Vec<f64> = m.points.iter().map(|&p| phi(p, h)).collect();
                m.arrays.push(Array {
                    name: "p".into(),
                    location: Location::Point,
                    components: 1,
                    values: v,
                });
                let path = dir.join(format!("m{k}.vtu"));
                let mut f = Vec::new();
                vtk::write_vtu(&mut f, &m, vtk::WriteOptions::default()).unwrap();
                std::fs::write(&path, f).unwrap();
                path
            })
            .collect()
    }

    fn spec(files: Vec<PathBuf>, write: Option<PathBuf>) -> FieldSpec {
        FieldSpec {
            name: "section".into(),
            id: None,
            columns: vec!["p".into()],
            files,
            write,
            reading: Default::default(),
            probe_points: None,
            estimate: Default::default(),
        }
    }

    #[test]
    fn manufactured_order_two_is_recovered_at_interior_points() {
        // Manufactured data: φ = f + α h² on three non-matching triangulations; the observed
        // order at interior points should be 2 up to the transfer error (tolerance: the median
        // within 0.15 — a project choice for these mesh sizes, shrinking as they refine).
        let dir = tempfile::tempdir().unwrap();
        let sizes = [0.1, 0.15, 0.225];
        let files = write_meshes(dir.path(), &[40, 27, 18], &sizes);
        let s = assess_in_memory(&spec(files, None), &sizes, &Default::default(), None).unwrap();
        let c = &s.columns[0];
        assert_eq!(s.points, 41 * 41);
        let med = c.median_order.unwrap();
        assert!((med - 2.0).abs() < 0.15, "median order {med}");
        let shares = c.class_shares.unwrap();
        let total = shares.monotonic
            + shares.oscillatory
            + shares.divergent
            + shares.no_change
            + shares.none;
        assert!((total - 1.0).abs() < 1e-12);
        assert!(shares.monotonic > 0.8, "{shares:?}");
        assert_eq!(s.setup.as_ref().unwrap().weighted_by, "area");
        assert_eq!(s.setup.as_ref().unwrap().dimension, Some(2));
    }

    #[test]
    fn order_error_shrinks_as_the_meshes_refine() {
        // Manufactured data of order 1 (analytic): φ = sin x cos y + (1 + x y) h on three
        // non-matching triangulations at three resolutions with the same ratios. The transfer
        // error falls as h² (second-order reconstruction) and the differences as h, so the
        // departure of the median order from 1 must fall as the meshes refine. (With data of
        // order 2 both fall as h² and the share stays: docs/method.md §16.)
        let sets: [[usize; 3]; 3] = [[12, 8, 5], [24, 16, 11], [48, 32, 21]];
        let mut errs = Vec::new();
        for ns in sets {
            let dir = tempfile::tempdir().unwrap();
            let sizes: Vec<f64> = ns.iter().map(|&n| 1.0 / n as f64).collect();
            let files = write_meshes_with(dir.path(), &ns, &sizes, |p, h| {
                p[0].sin() * p[1].cos() + (1.0 + p[0] * p[1]) * h
            });
            let s =
                assess_in_memory(&spec(files, None), &sizes, &Default::default(), None).unwrap();
            errs.push((s.columns[0].median_order.unwrap() - 1.0).abs());
        }
        eprintln!("median order errors {errs:?}");
        assert!(errs[2] < errs[1] && errs[1] < errs[0], "{errs:?}");
        assert!(errs[2] < 0.05, "{errs:?}");
    }

    #[test]
    fn transfer_error_comparable_to_u_is_warned() {
        // Manufactured data of order 2 with h the meshes' own spacing (analytic): the
        // second-order transfer error is of the size of the differences between meshes, so
        // the rule of docs/method.md §16 (transfer error > 0.2 U) must flag points.
        let dir = tempfile::tempdir().unwrap();
        let ns = [24, 16, 11];
        let sizes: Vec<f64> = ns.iter().map(|&n| 1.0 / n as f64).collect();
        let files = write_meshes(dir.path(), &ns, &sizes);
        let s = assess_in_memory(&spec(files, None), &sizes, &Default::default(), None).unwrap();
        let t = s.columns[0].transfer.as_ref().unwrap();
        assert!(t.large_error_points > 0, "{t:?}");
        let w = s.warnings();
        let large = w
            .iter()
            .find(|w| w.code == "field_transfer_error_large")
            .expect("warned");
        assert!(large.message.contains("0.2 × U"), "{}", large.message);
    }

    #[test]
    fn cell_data_sit_at_cell_centres_and_weigh_by_cell_area() {
        // Manufactured order 2 (analytic) as cell data at the cells' vertex means; h in the
        // data much larger than the spacing, so the transfer error is small beside the
        // differences: the median order within 0.1 of 2 (a project choice).
        let dir = tempfile::tempdir().unwrap();
        let sizes = [0.1, 0.15, 0.225];
        let files: Vec<PathBuf> = [40, 27, 18]
            .iter()
            .zip(sizes)
            .enumerate()
            .map(|(k, (&n, h))| {
                let mut m = square(n, 0.3, 11 + k as u64);
                let v: Vec<f64> = measure::centroids(&m).iter().map(|&c| phi(c, h)).collect();
                m.arrays.push(Array {
                    name: "p".into(),
                    location: Location::Cell,
                    components: 1,
                    values: v,
                });
                let path = dir.path().join(format!("c{k}.vtu"));
                let mut f = Vec::new();
                vtk::write_vtu(&mut f, &m, vtk::WriteOptions::default()).unwrap();
                std::fs::write(&path, f).unwrap();
                path
            })
            .collect();
        let out = dir.path().join("o.vtu");
        let mem = crate::sink::InMemory::new();
        use crate::sink::Outputs;
        let sink = mem.open(&out).unwrap();
        let s =
            assess_in_memory(&spec(files, Some(out)), &sizes, &Default::default(), sink).unwrap();
        let setup = s.setup.as_ref().unwrap();
        assert_eq!(setup.targets, "finest_cells");
        assert_eq!(setup.weighted_by, "area");
        assert_eq!(s.points, 2 * 40 * 40);
        let med = s.columns[0].median_order.unwrap();
        assert!((med - 2.0).abs() < 0.1, "median order {med}");
        let back = vtk::read_bytes(&mem.files()[0].1, "o.vtu").unwrap();
        assert_eq!(back.array("p_class").unwrap().location, Location::Cell);
        assert_eq!(back.cell_count(), 2 * 40 * 40);
    }

    #[test]
    fn four_meshes_use_least_squares_with_every_mesh() {
        // Manufactured data on four meshes: least squares at every point (setup says 4).
        let dir = tempfile::tempdir().unwrap();
        let sizes = [0.1, 0.13, 0.169, 0.2197];
        let files = write_meshes(dir.path(), &[40, 31, 24, 18], &sizes);
        let out = dir.path().join("o.csv");
        let mem = crate::sink::InMemory::new();
        use crate::sink::Outputs;
        let sink = mem.open(&out).unwrap();
        let s =
            assess_in_memory(&spec(files, Some(out)), &sizes, &Default::default(), sink).unwrap();
        assert_eq!(s.setup.as_ref().unwrap().meshes, 4);
        let med = s.columns[0].median_order.unwrap();
        assert!((med - 2.0).abs() < 0.3, "median order {med}");
        let bytes = &mem.files()[0].1;
        let text = String::from_utf8_lossy(bytes);
        assert!(text
            .starts_with("id,p,p_extrapolated,p_order,p_class,p_uncertainty,p_transfer_error\n0,"));
        // The finest value at point 0 (the origin) is written as the manufactured value.
        let first: Vec<&str> = text.lines().nth(1).unwrap().split(',').collect();
        assert_eq!(first[1], shortest(phi([0.0; 3], 0.1)));
    }

    #[test]
    fn a_per_point_file_of_several_megabytes_comes_whole_and_in_order() {
        // The CSV goes out a megabyte at a time: 22 801 rows (over 2 MB) must arrive once
        // each, in point order, under one header (the pipeline itself, no external value).
        let dir = tempfile::tempdir().unwrap();
        let sizes = [0.1, 0.13, 0.169];
        let files = write_meshes(dir.path(), &[150, 116, 90], &sizes);
        let out = dir.path().join("o.csv");
        let mem = crate::sink::InMemory::new();
        use crate::sink::Outputs;
        let sink = mem.open(&out).unwrap();
        assess_in_memory(&spec(files, Some(out)), &sizes, &Default::default(), sink).unwrap();
        let bytes = &mem.files()[0].1;
        assert!(bytes.len() > 2 << 20, "{} bytes", bytes.len());
        let text = std::str::from_utf8(bytes).unwrap();
        let mut lines = text.lines();
        assert!(lines.next().unwrap().starts_with("id,p,"));
        let mut n = 0;
        for (i, l) in lines.enumerate() {
            assert_eq!(l.split(',').next(), Some(i.to_string().as_str()), "row {i}");
            assert_eq!(l.split(',').count(), 7, "row {i}");
            n += 1;
        }
        assert_eq!(n, 151 * 151); // a 150 × 150 grid of cells
    }

    #[test]
    fn missing_array_names_the_file() {
        let dir = tempfile::tempdir().unwrap();
        let sizes = [0.1, 0.15, 0.225];
        let files = write_meshes(dir.path(), &[10, 7, 5], &sizes);
        let mut sp = spec(files.clone(), None);
        sp.columns = vec!["q".into()];
        let e = assess_in_memory(&sp, &sizes, &Default::default(), None).unwrap_err();
        let t = e.to_string();
        assert!(t.starts_with(&files[0].display().to_string()), "{t}");
        assert!(t.contains("column `q`: no array \"q\""), "{t}");
        std::fs::write(&files[2], "not a mesh").unwrap();
        let e = assess_in_memory(
            &spec(files.clone(), None),
            &sizes,
            &Default::default(),
            None,
        )
        .unwrap_err();
        assert!(
            e.to_string().starts_with(&files[2].display().to_string()),
            "{e}"
        );
    }
}
