//! The compiled half of the `meshbound` Python package (`meshbound._meshbound`): thin calls
//! into the library crate. The Python half (`python/meshbound/`) turns what these return into
//! result objects, pandas tables and exceptions; nothing here computes a figure the library
//! does not.
//!
//! Structured results travel as JSON text (the library's serde forms; doubles are written in
//! their shortest round-trip form, so Python reads back the same bits). Per-point results
//! travel as numpy arrays. Errors are raised as the exception classes of
//! `meshbound._errors`, with the file, key path, line and column the library names.

use meshbound::estimate::least_squares::{self, LsSettings};
use meshbound::estimate::point::PointSettings;
use meshbound::estimate::rules::{self, Rule, RuleInputs};
use meshbound::estimate::three_grid::{self, ThreeGridSettings};
use meshbound::estimate::EstimateError;
use meshbound::field::merge::{self, ColumnPartial, FieldPoint, FieldPoints};
use meshbound::history::{self, HistorySettings, Reduction};
use numpy::{IntoPyArray, PyArray1, PyReadonlyArray1, PyReadonlyArray2};
use pyo3::prelude::*;
use pyo3::types::PyDict;
use rayon::prelude::*;
use serde::Serialize;
use std::path::PathBuf;

/// Raises `meshbound._errors.<class>(message, **attributes)`.
fn raise(py: Python<'_>, class: &str, message: String, attrs: &[(&str, Py<PyAny>)]) -> PyErr {
    let made = (|| -> PyResult<PyErr> {
        let module = py.import("meshbound._errors")?;
        let cls = module.getattr(class)?;
        let kwargs = PyDict::new(py);
        for (k, v) in attrs {
            kwargs.set_item(*k, v)?;
        }
        let value = cls.call((message.clone(),), Some(&kwargs))?;
        Ok(PyErr::from_value(value))
    })();
    made.unwrap_or_else(|e| e)
}

fn estimate_error(py: Python<'_>, e: EstimateError) -> PyErr {
    raise(py, "EstimateInputError", e.to_string(), &[])
}

fn input_error(py: Python<'_>, message: String) -> PyErr {
    raise(py, "EstimateInputError", message, &[])
}

fn to_json<T: Serialize>(py: Python<'_>, v: &T) -> PyResult<String> {
    serde_json::to_string(v).map_err(|e| input_error(py, format!("result not serialisable: {e}")))
}

fn rule_of(py: Python<'_>, label: &str) -> PyResult<Rule> {
    match Rule::from_label(label) {
        Some(r) if Rule::THREE_MESH.contains(&r) => Ok(r),
        _ => Err(input_error(
            py,
            format!(
                "rule `{label}` is not a three-mesh rule; expected one of {}",
                Rule::THREE_MESH.map(Rule::label).join(", ")
            ),
        )),
    }
}

fn three_settings(
    py: Python<'_>,
    formal_order: f64,
    rule: &str,
    order_max: f64,
) -> PyResult<ThreeGridSettings> {
    if !(formal_order.is_finite() && formal_order > 0.0) {
        return Err(input_error(
            py,
            format!("formal_order must be finite and > 0 (got {formal_order})"),
        ));
    }
    if !(order_max.is_finite() && order_max > 0.0) {
        return Err(input_error(
            py,
            format!("order_max must be finite and > 0 (got {order_max})"),
        ));
    }
    Ok(ThreeGridSettings {
        formal_order,
        order_max,
        rule: rule_of(py, rule)?,
        ..ThreeGridSettings::default()
    })
}

fn warnings_json(w: &[meshbound::warning::Warning]) -> Vec<(String, String)> {
    w.iter()
        .map(|w| (w.code.clone(), w.message.clone()))
        .collect()
}

/// `{"estimate": …, "warnings": [[code, message], …]}`, the form the Python side reads.
fn estimate_json<T: Serialize>(
    py: Python<'_>,
    estimate: &T,
    warnings: &[meshbound::warning::Warning],
) -> PyResult<String> {
    #[derive(Serialize)]
    struct Out<'a, T> {
        estimate: &'a T,
        warnings: Vec<(String, String)>,
    }
    to_json(
        py,
        &Out {
            estimate,
            warnings: warnings_json(warnings),
        },
    )
}

/// The three-mesh estimate (Celik et al. 2008) and every published rule on the same meshes.
#[pyfunction]
#[pyo3(signature = (h, phi, formal_order, rule, order_max))]
fn three_mesh(
    py: Python<'_>,
    h: [f64; 3],
    phi: [f64; 3],
    formal_order: f64,
    rule: &str,
    order_max: f64,
) -> PyResult<String> {
    let settings = three_settings(py, formal_order, rule, order_max)?;
    let tg = three_grid::estimate(h, phi, &settings).map_err(|e| estimate_error(py, e))?;
    let inputs = RuleInputs::from_estimate(h, phi, formal_order, tg.clone())
        .map_err(|e| estimate_error(py, e))?;
    let all = rules::all(&inputs);
    let chosen = rules::apply(settings.rule, &inputs);
    #[derive(Serialize)]
    struct Out<'a> {
        estimate: &'a three_grid::ThreeGrid,
        order_at_bound: bool,
        warnings: Vec<(String, String)>,
        rule: &'static str,
        uncertainty: Option<f64>,
        rules: Vec<(&'a rules::RuleEstimate, Vec<(String, String)>)>,
    }
    to_json(
        py,
        &Out {
            estimate: &tg,
            order_at_bound: tg.order_at_bound,
            warnings: warnings_json(&tg.warnings),
            rule: settings.rule.label(),
            uncertainty: chosen.uncertainty,
            rules: all
                .iter()
                .map(|r| (r, warnings_json(&r.warnings)))
                .collect(),
        },
    )
}

/// Roache's (1998) two-mesh GCI.
#[pyfunction]
#[pyo3(signature = (h, phi, formal_order))]
fn two_mesh_gci(py: Python<'_>, h: [f64; 2], phi: [f64; 2], formal_order: f64) -> PyResult<String> {
    let r = rules::two_mesh_gci(h, phi, formal_order).map_err(|e| estimate_error(py, e))?;
    estimate_json(py, &r, &r.warnings)
}

/// U and U/|φ1| per point.
type TwoArrays<'py> = (Bound<'py, PyArray1<f64>>, Bound<'py, PyArray1<f64>>);

/// Roache's (1998) two-mesh GCI at every row of `phi` (`n × 2`, finest first), in parallel
/// with the GIL released: U and U/|φ1| per row (NaN where a value is missing or the GCI does
/// not apply, as the scalar call states `None`). The sizes and the formal order are checked
/// once, as the scalar call checks them.
#[pyfunction]
#[pyo3(signature = (h, phi, formal_order))]
fn two_mesh_gci_points<'py>(
    py: Python<'py>,
    h: [f64; 2],
    phi: PyReadonlyArray2<'py, f64>,
    formal_order: f64,
) -> PyResult<TwoArrays<'py>> {
    rules::two_mesh_gci(h, [0.0, 0.0], formal_order).map_err(|e| estimate_error(py, e))?;
    let values = rows(py, &phi, 2)?;
    let (u, relative): (Vec<f64>, Vec<f64>) = py.detach(|| {
        values
            .par_chunks(2)
            .map(|row| {
                let (u, r) = rules::two_mesh_figures(h, [row[0], row[1]], formal_order);
                (nan(u), nan(r))
            })
            .unzip()
    });
    Ok((u.into_pyarray(py), relative.into_pyarray(py)))
}

fn ls_settings(
    py: Python<'_>,
    formal_order: f64,
    guard: bool,
    order_min: f64,
    order_max: f64,
) -> PyResult<LsSettings> {
    if !(formal_order.is_finite() && formal_order > 0.0) {
        return Err(input_error(
            py,
            format!("formal_order must be finite and > 0 (got {formal_order})"),
        ));
    }
    Ok(LsSettings {
        order_min,
        order_max,
        guard,
        formal_order,
    })
}

/// The least-squares estimate (Eça & Hoekstra 2014) over four or more meshes.
#[pyfunction]
#[pyo3(signature = (h, phi, names, formal_order, guard, order_min, order_max))]
#[allow(clippy::too_many_arguments)]
fn least_squares_estimate(
    py: Python<'_>,
    h: Vec<f64>,
    phi: Vec<f64>,
    names: Option<Vec<String>>,
    formal_order: f64,
    guard: bool,
    order_min: f64,
    order_max: f64,
) -> PyResult<String> {
    let settings = ls_settings(py, formal_order, guard, order_min, order_max)?;
    let names = names.unwrap_or_else(|| (1..=h.len()).map(|i| format!("m{i}")).collect());
    let r = py
        .detach(|| least_squares::estimate(&names, &h, &phi, &settings))
        .map_err(|e| estimate_error(py, e))?;
    estimate_json(py, &r, &r.warnings)
}

/// The settings of the per-point estimate.
#[pyclass(module = "meshbound._meshbound", frozen)]
#[derive(Clone)]
struct PointSetup {
    h: Vec<f64>,
    settings: PointSettings,
}

#[pymethods]
impl PointSetup {
    #[new]
    #[pyo3(signature = (h, formal_order, rule, order_max, noise_floor, guard, ls_order_min, ls_order_max))]
    #[allow(clippy::too_many_arguments)]
    fn new(
        py: Python<'_>,
        h: Vec<f64>,
        formal_order: f64,
        rule: &str,
        order_max: f64,
        noise_floor: f64,
        guard: bool,
        ls_order_min: f64,
        ls_order_max: f64,
    ) -> PyResult<Self> {
        let settings = PointSettings {
            three: three_settings(py, formal_order, rule, order_max)?,
            least_squares: ls_settings(py, formal_order, guard, ls_order_min, ls_order_max)?,
            noise_floor,
        };
        // Checked once here, so that every later call can prepare it without failing.
        FieldPoints::new(&h, &settings).map_err(|e| estimate_error(py, e))?;
        Ok(PointSetup { h, settings })
    }

    /// The sizes, finest first.
    #[getter]
    fn h(&self) -> Vec<f64> {
        self.h.clone()
    }

    fn __reduce__(&self, py: Python<'_>) -> PyResult<(Py<PyAny>, Py<PyAny>)> {
        let s = &self.settings;
        let cls = py.get_type::<PointSetup>().into_any().unbind();
        let args = (
            self.h.clone(),
            s.three.formal_order,
            s.three.rule.label(),
            s.three.order_max,
            s.noise_floor,
            s.least_squares.guard,
            s.least_squares.order_min,
            s.least_squares.order_max,
        )
            .into_pyobject(py)?
            .into_any()
            .unbind();
        Ok((cls, args))
    }
}

impl PointSetup {
    fn prepared(&self, py: Python<'_>) -> PyResult<FieldPoints> {
        FieldPoints::new(&self.h, &self.settings).map_err(|e| estimate_error(py, e))
    }
}

/// The values as one row-major slice of `n × meshes` (borrowed when the array is
/// C-contiguous, as the Python half makes it).
fn rows<'a>(
    py: Python<'_>,
    phi: &'a PyReadonlyArray2<'_, f64>,
    meshes: usize,
) -> PyResult<std::borrow::Cow<'a, [f64]>> {
    let a = phi.as_array();
    if a.ncols() != meshes {
        return Err(input_error(
            py,
            format!(
                "phi has {} columns, one per mesh was expected ({meshes} sizes)",
                a.ncols()
            ),
        ));
    }
    // Only a row-major (C-order) view is read as it lies; any other layout is copied in
    // logical order.
    Ok(match a.to_slice() {
        Some(s) => std::borrow::Cow::Borrowed(s),
        None => std::borrow::Cow::Owned(a.iter().copied().collect()),
    })
}

fn estimate_all(fp: &FieldPoints, phi: &[f64]) -> Vec<FieldPoint> {
    let m = fp.meshes();
    phi.par_chunks(m)
        .with_min_len(2048)
        .map(|row| fp.estimate(row))
        .collect()
}

fn nan(v: Option<f64>) -> f64 {
    v.unwrap_or(f64::NAN)
}

type PointArrays<'py> = (
    Bound<'py, PyArray1<u8>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<u8>>,
    Bound<'py, PyArray1<u16>>,
);

/// The per-point estimate at every row of `phi` (`n × meshes`, finest first), in parallel
/// with the GIL released: class, order, extrapolated value, U, basis and warning bits.
#[pyfunction]
fn estimate_points<'py>(
    py: Python<'py>,
    setup: &PointSetup,
    phi: PyReadonlyArray2<'py, f64>,
) -> PyResult<PointArrays<'py>> {
    let fp = setup.prepared(py)?;
    let values = rows(py, &phi, fp.meshes())?;
    let (class, order, extrapolated, uncertainty, basis, codes) = py.detach(|| {
        let pts = estimate_all(&fp, &values);
        let n = pts.len();
        let mut out = (
            Vec::with_capacity(n),
            Vec::with_capacity(n),
            Vec::with_capacity(n),
            Vec::with_capacity(n),
            Vec::with_capacity(n),
            Vec::with_capacity(n),
        );
        for p in &pts {
            out.0.push(merge::class_code(p.convergence));
            out.1.push(nan(p.order));
            out.2.push(nan(p.extrapolated));
            out.3.push(nan(p.uncertainty));
            out.4.push(merge::basis_code(p.basis));
            out.5.push(p.codes);
        }
        out
    });
    Ok((
        class.into_pyarray(py),
        order.into_pyarray(py),
        extrapolated.into_pyarray(py),
        uncertainty.into_pyarray(py),
        basis.into_pyarray(py),
        codes.into_pyarray(py),
    ))
}

/// One point's figures: class code, order, extrapolated value, U, basis code, warning bits.
type OnePoint = (u8, Option<f64>, Option<f64>, Option<f64>, u8, u16);

/// The per-point estimate at one point (the same call the vectorised one makes per row).
#[pyfunction]
fn estimate_point(py: Python<'_>, setup: &PointSetup, phi: Vec<f64>) -> PyResult<OnePoint> {
    let fp = setup.prepared(py)?;
    if phi.len() != fp.meshes() {
        return Err(input_error(
            py,
            format!("{} values for {} meshes", phi.len(), fp.meshes()),
        ));
    }
    let p = fp.estimate(&phi);
    Ok((
        merge::class_code(p.convergence),
        p.order,
        p.extrapolated,
        p.uncertainty,
        merge::basis_code(p.basis),
        p.codes,
    ))
}

/// A mergeable summary of one field column.
#[pyclass(module = "meshbound._meshbound")]
#[derive(Clone)]
struct ColumnSummaryPart {
    inner: ColumnPartial,
}

#[pymethods]
impl ColumnSummaryPart {
    /// The summary merged with `other` (neither is changed).
    fn merged(&self, py: Python<'_>, other: &ColumnSummaryPart) -> PyResult<ColumnSummaryPart> {
        let mut inner = self.inner.clone();
        inner
            .merge(&other.inner)
            .map_err(|e| raise(py, "MergeError", e.to_string(), &[]))?;
        Ok(ColumnSummaryPart { inner })
    }

    /// The summary as JSON (the field column summary's contract plus the counts it leaves out).
    fn to_json(&self) -> String {
        self.inner.finish_json().to_string()
    }

    /// Number of points summarised.
    #[getter]
    fn points(&self) -> u64 {
        self.inner.points()
    }

    /// The complete state, for pickling (doubles as their bits).
    fn state(&self) -> String {
        self.inner.state()
    }

    /// Rebuilds a summary from [`ColumnSummaryPart::state`].
    #[staticmethod]
    fn from_state(py: Python<'_>, state: &str) -> PyResult<ColumnSummaryPart> {
        ColumnPartial::from_state(state)
            .map(|inner| ColumnSummaryPart { inner })
            .map_err(|e| input_error(py, format!("not a summary state: {e}")))
    }

    /// Equal summaries: the same figures, ids and counts (the exact sums may be held as
    /// different partials of the same value).
    fn __eq__(&self, other: &ColumnSummaryPart) -> bool {
        self.inner.finish_json() == other.inner.finish_json()
    }
}

/// Estimates every row of `phi` and summarises the column: rows are the points at global
/// positions `offset`, `offset + 1`, …, with ids `ids` (default: the position) and weights
/// (default 1).
#[pyfunction]
#[pyo3(signature = (setup, phi, name, offset, ids, weights))]
fn summarise_points(
    py: Python<'_>,
    setup: &PointSetup,
    phi: PyReadonlyArray2<'_, f64>,
    name: &str,
    offset: u64,
    ids: Option<Vec<String>>,
    weights: Option<PyReadonlyArray1<'_, f64>>,
) -> PyResult<ColumnSummaryPart> {
    let fp = setup.prepared(py)?;
    let values = rows(py, &phi, fp.meshes())?;
    let n = values.len() / fp.meshes().max(1);
    if ids.as_ref().is_some_and(|v| v.len() != n) {
        return Err(input_error(
            py,
            format!("{} ids for {n} points", ids.map_or(0, |v| v.len())),
        ));
    }
    let weights: Option<Vec<f64>> = weights.map(|w| w.as_array().iter().copied().collect());
    if let Some(w) = &weights {
        if w.len() != n {
            return Err(input_error(
                py,
                format!("{} weights for {n} points", w.len()),
            ));
        }
        if let Some(i) = w.iter().position(|v| !(v.is_finite() && *v >= 0.0)) {
            return Err(input_error(
                py,
                format!("weight {i} must be finite and ≥ 0 (got {})", w[i]),
            ));
        }
    }
    let name = name.to_string();
    let inner = py.detach(|| {
        let pts = estimate_all(&fp, &values);
        let chunk = 16_384;
        pts.par_chunks(chunk)
            .enumerate()
            .map(|(c, part)| {
                let mut acc = fp.column(&name);
                for (j, p) in part.iter().enumerate() {
                    let i = c * chunk + j;
                    let pos = offset + i as u64;
                    let id = || match &ids {
                        Some(v) => v[i].clone(),
                        None => pos.to_string(),
                    };
                    let w = weights.as_ref().map_or(1.0, |w| w[i]);
                    acc.add_with(pos, id, values[i * fp.meshes()], p, w);
                }
                acc
            })
            .reduce(
                || fp.column(&name),
                |mut a, b| {
                    // Same estimate and name on both sides: the merge cannot refuse.
                    let _ = a.merge(&b);
                    a
                },
            )
    });
    Ok(ColumnSummaryPart { inner })
}

/// The reduction of a monitor history: steady part (MSER-5), mean, statistical and iterative
/// uncertainty.
#[pyfunction]
#[pyo3(signature = (values, x, reduction, batches, min_samples, final_share, final_min))]
#[allow(clippy::too_many_arguments)]
fn reduce_history(
    py: Python<'_>,
    values: PyReadonlyArray1<'_, f64>,
    x: Option<PyReadonlyArray1<'_, f64>>,
    reduction: &str,
    batches: usize,
    min_samples: usize,
    final_share: f64,
    final_min: usize,
) -> PyResult<String> {
    let reduction = match reduction {
        "mean" => Reduction::Mean,
        "last" => Reduction::Last,
        "min" => Reduction::Min,
        "max" => Reduction::Max,
        other => {
            return Err(input_error(
                py,
                format!("reduction `{other}`: expected mean, last, min or max"),
            ))
        }
    };
    let settings = HistorySettings {
        reduction,
        batches,
        min_samples,
        final_share,
        final_min,
    };
    let values: Vec<f64> = values.as_array().iter().copied().collect();
    let x: Option<Vec<f64>> = x.map(|x| x.as_array().iter().copied().collect());
    let r = py
        .detach(|| history::analyse_values(&values, x.as_deref(), &settings))
        .map_err(|e| raise(py, "HistoryError", e.to_string(), &[]))?;
    #[derive(Serialize)]
    struct Out<'a> {
        result: &'a history::HistoryResult,
    }
    to_json(py, &Out { result: &r })
}

/// Loads and assesses a study file; per-point files it asks for are not written.
#[pyfunction]
#[pyo3(signature = (path, reach))]
fn assess(py: Python<'_>, path: PathBuf, reach: Vec<PathBuf>) -> PyResult<String> {
    let options = meshbound::study::LoadOptions { allowed: reach };
    let out = py.detach(|| {
        let study = meshbound::study::load_with(&path, &options).map_err(meshbound::Error::from)?;
        meshbound::assess::run(&study, &meshbound::sink::Skip)
    });
    match out {
        Ok(a) => to_json(py, &a),
        Err(meshbound::Error::Study(e)) => {
            let attrs: Vec<(&str, Py<PyAny>)> = vec![
                (
                    "file",
                    e.file
                        .display()
                        .to_string()
                        .into_pyobject(py)?
                        .into_any()
                        .unbind(),
                ),
                (
                    "key_path",
                    e.key.clone().into_pyobject(py)?.into_any().unbind(),
                ),
                ("line", e.line.into_pyobject(py)?.into_any().unbind()),
                ("column", e.column.into_pyobject(py)?.into_any().unbind()),
                (
                    "reason",
                    e.message.clone().into_pyobject(py)?.into_any().unbind(),
                ),
            ];
            Err(raise(py, "StudyError", e.to_string(), &attrs))
        }
        Err(e) => Err(raise(py, "OutputError", e.to_string(), &[])),
    }
}

#[pymodule]
fn _meshbound(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(three_mesh, m)?)?;
    m.add_function(wrap_pyfunction!(two_mesh_gci, m)?)?;
    m.add_function(wrap_pyfunction!(two_mesh_gci_points, m)?)?;
    m.add_function(wrap_pyfunction!(least_squares_estimate, m)?)?;
    m.add_function(wrap_pyfunction!(estimate_points, m)?)?;
    m.add_function(wrap_pyfunction!(estimate_point, m)?)?;
    m.add_function(wrap_pyfunction!(summarise_points, m)?)?;
    m.add_function(wrap_pyfunction!(reduce_history, m)?)?;
    m.add_function(wrap_pyfunction!(assess, m)?)?;
    m.add_class::<PointSetup>()?;
    m.add_class::<ColumnSummaryPart>()?;
    m.add("POINT_CODES", merge::POINT_CODES.to_vec())?;
    m.add("RULES", Rule::ALL.map(|r| (r.label(), r.title())).to_vec())?;
    m.add("DEFAULT_RULE", Rule::DEFAULT.label())?;
    m.add("VERSION", env!("CARGO_PKG_VERSION"))?;
    Ok(())
}
