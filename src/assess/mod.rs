//! From a checked [`Study`] to one [`Assessment`]: the orchestration of the estimators.
//!
//! The serde form of [`Assessment`] *is* the JSON result contract (docs/study-file.md and the
//! design notes): field names here are fixed.

use crate::estimate::least_squares::{self, LeastSquares, LsSettings};
use crate::estimate::rules::{self, RuleEstimate, RuleInputs};
use crate::estimate::three_grid::{self, ThreeGrid, ThreeGridSettings};
use crate::estimate::Convergence;
use crate::grid::Mesh;
use crate::sink::Outputs;
use crate::study::raw::EstimatorChoice;
use crate::study::{IterativeSource, Quantity, Study};
use crate::warning::Warning;
use crate::Error;
use serde::Serialize;

pub mod compare;
pub mod duty;
mod govern;
pub mod partial;
pub mod sweep;

pub use govern::{
    govern, govern_two_mesh, not_demonstrated, standard_divisor, GoverningEstimate, Role, Rule,
    DEMONSTRATED_MAX_RATIO, DEMONSTRATED_MIN_ORDER, DIVISOR_EXPANDED, DIVISOR_GCI,
};

/// The warning code of a quantity whose convergence the data do not demonstrate.
pub const WARN_NOT_DEMONSTRATED: &str = "convergence_not_demonstrated";

/// The caution carried by every report.
pub const CAUTION: &str =
    "Numerical (discretisation) uncertainty is not model-test acceptance and \
says nothing about modelling error. Cavitation erosion and vibration can destroy runners and \
impellers, and a machine sized on an optimistic number can fail: defer to the applicable test \
codes, local regulations and licensed engineering judgment.";

/// The caution of a study outside hydraulic machinery (`domain: general`).
pub const CAUTION_GENERAL: &str =
    "Numerical (discretisation) uncertainty is not validation and says nothing about modelling \
error: a small uncertainty shows that the meshes agree, not that the model is right. Where the \
results size or certify anything, defer to the applicable codes and standards, local \
regulations and licensed engineering judgment.";

/// The caution a study's outputs carry, worded for its field.
pub fn caution_for(domain: crate::study::raw::Domain) -> &'static str {
    match domain {
        crate::study::raw::Domain::HydraulicMachinery => CAUTION,
        crate::study::raw::Domain::General => CAUTION_GENERAL,
    }
}

/// The result of assessing one study.
#[derive(Debug, Clone, Serialize)]
pub struct Assessment {
    /// Result format number.
    pub format: u32,
    /// Study title.
    pub title: String,
    /// The study file.
    pub study: String,
    /// Meshes finest first.
    pub meshes: Vec<Mesh>,
    /// Whether the meshes' sizes `h` are absolute (from `size` or `extent`) or relative to
    /// the finest mesh (from cell counts alone).
    pub size_basis: crate::grid::SizeBasis,
    /// The spatial dimension the sizes were formed with (the study's `dimension`, 3 when it
    /// gives none).
    pub dimension: u32,
    /// Scalar quantities.
    pub quantities: Vec<QuantityResult>,
    /// Sweeps (curves per mesh).
    pub sweeps: Vec<sweep::SweepResult>,
    /// Duty curves: sweeps at several flows against the flow (absent when the study has none).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub duty_curves: Vec<duty::DutyCurveResult>,
    /// Comparisons with measurements (ASME V&V 20).
    pub comparisons: Vec<compare::ComparisonResult>,
    /// Pointwise field summaries.
    pub fields: Vec<crate::field::FieldSummary>,
    /// Warnings, each with a stable code.
    pub warnings: Vec<Warning>,
    /// The caution every report carries.
    pub caution: String,
    /// Every file the study made meshbound read, the study file first.
    pub files_read: Vec<String>,
    /// Every file the study made meshbound write (per-point field results).
    pub files_written: Vec<String>,
}

/// The three-mesh estimate with the names of the meshes it used.
#[derive(Debug, Clone, Serialize)]
pub struct ThreeGridResult {
    /// Names of the three meshes, finest first.
    pub meshes: Vec<String>,
    /// The estimate.
    #[serde(flatten)]
    pub estimate: ThreeGrid,
}

/// Which estimate governed a quantity's uncertainty.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Method {
    /// The three-mesh GCI.
    ThreeGrid,
    /// Half the range of an oscillation.
    OscillationRange,
    /// The least-squares procedure.
    LeastSquares,
    /// Roache's two-mesh GCI (two meshes only; the formal order assumed, Fs = 3).
    TwoMesh,
}

/// The uncertainty statement of a quantity: value ± absolute.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Uncertainty {
    /// The estimate that governed.
    pub method: Method,
    /// The finest mesh's value.
    pub value: f64,
    /// Absolute uncertainty U: the discretisation uncertainty, combined by root-sum-square
    /// with the finest mesh's iterative uncertainty where the study gives one.
    pub absolute: f64,
    /// The discretisation part U_G (equal to `absolute` without an iterative part).
    pub discretisation: f64,
    /// The iterative part U_I of the finest mesh (`None` when the study gives none).
    pub iterative: Option<f64>,
    /// The standard uncertainty u_num (ASME V&V 20): √((U_G/divisor)² + (U_I/√3)²), the
    /// divisor of the governing method (see `assess::govern::standard_divisor`).
    pub standard: f64,
    /// The divisor of U_G in `standard`.
    pub divisor: f64,
    /// U / |value| (`None` when the value is zero).
    pub relative: Option<f64>,
    /// value − U.
    pub lower: f64,
    /// value + U.
    pub upper: f64,
}

impl Assessment {
    /// Name of the sweep variable of sweep `name` (`x` when no sweep has that name), the
    /// abscissa of its comparison with measurements.
    pub fn sweep_x(&self, name: &str) -> &str {
        self.sweeps
            .iter()
            .find(|s| s.name == name)
            .map_or("x", |s| s.x.as_str())
    }
}

impl Uncertainty {
    /// Builds the statement from a value and an absolute uncertainty with no iterative part,
    /// the standard uncertainty being U/`divisor`.
    pub fn new(method: Method, value: f64, absolute: f64, divisor: f64) -> Self {
        Uncertainty {
            method,
            value,
            absolute,
            discretisation: absolute,
            iterative: None,
            standard: absolute / divisor,
            divisor,
            relative: if value != 0.0 {
                Some(absolute / value.abs())
            } else {
                None
            },
            lower: value - absolute,
            upper: value + absolute,
        }
    }
}

/// One quantity's results.
#[derive(Debug, Clone, Serialize)]
pub struct QuantityResult {
    /// Name.
    pub name: String,
    /// The role this result plays (a quantity, a sweep's breakdown or reference, …).
    pub role: Role,
    /// Unit.
    pub unit: Option<String>,
    /// Values finest first.
    pub values: Vec<f64>,
    /// Names of the meshes the values lie on, finest first (the study's meshes for a quantity,
    /// the sweep's meshes for a sweep's result).
    pub meshes: Vec<String>,
    /// Convergence class that the governing estimate found.
    pub convergence: Option<Convergence>,
    /// Three-mesh estimate on the three finest meshes.
    pub three_grid: Option<ThreeGridResult>,
    /// Least-squares estimate (four or more meshes).
    pub least_squares: Option<LeastSquares>,
    /// The uncertainty statement (`None` when divergent).
    pub uncertainty: Option<Uncertainty>,
    /// The governing estimate chosen by [`govern`] (`None` when there is no estimate).
    pub governing: Option<GoverningEstimate>,
    /// Every published rule on the same meshes, side by side (the three-mesh rules of
    /// [`crate::estimate::rules`] with three or more meshes, the two-mesh GCI with two).
    pub rules: Vec<RuleEstimate>,
    /// Each mesh's reduced monitor history, when the values came from histories (finest
    /// first; left out of the JSON otherwise).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub histories: Vec<MeshHistory>,
    /// Why the result could not be computed (present only then; docs/method.md §6).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub not_computed: Option<partial::NotComputed>,
}

/// One mesh's monitor history, reduced.
#[derive(Debug, Clone, Serialize)]
pub struct MeshHistory {
    /// The mesh.
    pub mesh: String,
    /// The file read.
    pub file: String,
    /// The reduction: value, steady part, statistical and iterative figures, warnings.
    #[serde(flatten)]
    pub result: crate::history::HistoryResult,
    /// The iterative uncertainty U_I this history gives the mesh (see
    /// `study::history_input::iterative_of`).
    pub iterative_uncertainty: Option<f64>,
    /// The samples thinned for drawing (not in the JSON).
    #[serde(skip)]
    pub trace: Vec<(f64, f64)>,
    /// The abscissa's name (not in the JSON).
    #[serde(skip)]
    pub abscissa: Option<String>,
}

/// Estimates one quantity over the meshes (finest first): the three-mesh estimate on the three
/// finest meshes, and the least-squares estimate over all meshes from four on. [`govern`]
/// decides with `estimator` which governs the uncertainty.
#[allow(clippy::too_many_arguments)]
pub fn quantity(
    name: &str,
    role: Role,
    unit: Option<&str>,
    meshes: &[Mesh],
    values: &[f64],
    settings: &ThreeGridSettings,
    estimator: EstimatorChoice,
    warnings: &mut Vec<Warning>,
) -> QuantityResult {
    let n = meshes.len().min(values.len());
    let mut out = QuantityResult {
        name: name.to_string(),
        role,
        unit: unit.map(str::to_string),
        values: values.to_vec(),
        meshes: meshes[..n].iter().map(|m| m.name.clone()).collect(),
        convergence: None,
        three_grid: None,
        least_squares: None,
        uncertainty: None,
        governing: None,
        rules: Vec::new(),
        histories: Vec::new(),
        not_computed: None,
    };
    if n == 2 {
        two_meshes(&mut out, meshes, values, settings, warnings);
        return out;
    }
    if n < 3 {
        warnings
            .push(Warning::new("too_few_meshes", "fewer than two meshes: no estimate").about(name));
        return out;
    }
    let h = [meshes[0].size, meshes[1].size, meshes[2].size];
    let phi = [values[0], values[1], values[2]];
    match three_grid::estimate(h, phi, settings) {
        Ok(mut tg) => {
            warnings.extend(tg.warnings.drain(..).map(|w| w.about(name)));
            out.three_grid = Some(ThreeGridResult {
                meshes: meshes[..3].iter().map(|m| m.name.clone()).collect(),
                estimate: tg,
            });
        }
        Err(e) => warnings.push(Warning::new("estimate_failed", e.to_string()).about(name)),
    }
    if n >= 4 {
        if let Some(w) = triplet_orders(meshes, values, settings) {
            warnings.push(w.about(name));
        }
        let hs: Vec<f64> = meshes[..n].iter().map(|m| m.size).collect();
        let ls_settings = LsSettings {
            formal_order: settings.formal_order,
            ..LsSettings::default()
        };
        match least_squares::estimate(&out.meshes, &hs, &values[..n], &ls_settings) {
            Ok(mut ls) => {
                warnings.extend(ls.warnings.drain(..).map(|w| w.about(name)));
                let ls_u = ls.per_mesh.first().map(|m| m.uncertainty);
                let tg_u = out.three_grid.as_ref().and_then(|t| t.estimate.uncertainty);
                if let (Some(a), Some(b)) = (ls_u, tg_u) {
                    let (lo, hi) = (a.min(b), a.max(b));
                    if hi > 2.0 * lo {
                        warnings.push(
                            Warning::new(
                                "estimates_disagree",
                                format!(
                                    "the least-squares uncertainty ({a:.3e}) and the three-mesh uncertainty ({b:.3e}) differ by more than a factor of two: the finest meshes are probably not in the asymptotic range"
                                ),
                            )
                            .about(name),
                        );
                    }
                }
                out.least_squares = Some(ls);
            }
            Err(e) => warnings
                .push(Warning::new("estimate_failed", format!("least squares: {e}")).about(name)),
        }
    }
    if let Some(tg) = &out.three_grid {
        if let Ok(inputs) =
            RuleInputs::from_estimate(h, phi, settings.formal_order, tg.estimate.clone())
        {
            out.rules = rules::all(&inputs).to_vec();
        }
    }
    let chosen = out.rules.iter().find(|r| r.rule == settings.rule);
    out.governing = govern(
        out.three_grid.as_ref().map(|t| &t.estimate),
        out.least_squares.as_ref(),
        estimator,
        chosen,
    );
    if let (Some(r), Some(g)) = (chosen, &out.governing) {
        if g.method != Method::LeastSquares {
            // The rule's own warnings (the three-mesh estimate's are already listed).
            let own = r.warnings.iter().filter(|w| {
                !out.three_grid
                    .as_ref()
                    .is_some_and(|t| t.estimate.warnings.iter().any(|x| x.code == w.code))
                    && !warnings
                        .iter()
                        .any(|x| x.code == w.code && x.subject.as_deref() == Some(name))
            });
            warnings.extend(own.cloned().map(|w| w.about(name)).collect::<Vec<_>>());
        }
    }
    finish(&mut out, values, warnings);
    out
}

/// Fills the class and the uncertainty statement from the governing record, and warns where
/// convergence is not demonstrated.
fn finish(out: &mut QuantityResult, values: &[f64], warnings: &mut Vec<Warning>) {
    if let Some(g) = &out.governing {
        if let Some(why) = &g.not_demonstrated_because {
            warnings.push(Warning::new(WARN_NOT_DEMONSTRATED, why.clone()).about(&out.name));
        }
        out.convergence = Some(g.convergence);
        out.uncertainty = g
            .absolute
            .map(|u| Uncertainty::new(g.method, values[0], u, g.divisor));
    }
}

/// Two meshes: Roache's two-mesh GCI with the formal order and Fs = 3, labelled as such.
fn two_meshes(
    out: &mut QuantityResult,
    meshes: &[Mesh],
    values: &[f64],
    settings: &ThreeGridSettings,
    warnings: &mut Vec<Warning>,
) {
    let h = [meshes[0].size, meshes[1].size];
    let phi = [values[0], values[1]];
    match rules::two_mesh_gci(h, phi, settings.formal_order) {
        Ok(r) => {
            warnings.extend(r.warnings.iter().cloned().map(|w| w.about(&out.name)));
            out.governing = Some(govern_two_mesh(&r, h, phi));
            out.rules = vec![r];
        }
        Err(e) => warnings.push(Warning::new("estimate_failed", e.to_string()).about(&out.name)),
    }
    finish(out, values, warnings);
}

/// Relative difference |p123 − p234| / p123 of the observed orders of the finest triplet and
/// the next one beyond which they are warned as disagreeing (`triplet_orders_differ`): in the
/// asymptotic range every triplet gives the same order (method notes §12). The 10 % tolerance
/// is common practice, no source.
pub const TRIPLET_ORDER_TOLERANCE: f64 = 0.1;

/// Compares the observed orders of the three finest meshes and of the next three (meshes 2–4),
/// when both exist; a warning when they differ by more than [`TRIPLET_ORDER_TOLERANCE`].
fn triplet_orders(
    meshes: &[Mesh],
    values: &[f64],
    settings: &ThreeGridSettings,
) -> Option<Warning> {
    let order = |i: usize| {
        let h = [
            meshes.get(i)?.size,
            meshes.get(i + 1)?.size,
            meshes.get(i + 2)?.size,
        ];
        let phi = [*values.get(i)?, *values.get(i + 1)?, *values.get(i + 2)?];
        three_grid::estimate(h, phi, settings).ok()?.observed_order
    };
    let (fine, next) = (order(0)?, order(1)?);
    let diff = (fine - next).abs() / fine;
    (diff > TRIPLET_ORDER_TOLERANCE).then(|| {
        Warning::new(
            "triplet_orders_differ",
            format!(
                "the observed order of the three finest meshes ({fine:.3}) and of the next three \
                 ({next:.3}) differ by {:.0} %: the meshes are probably not in the asymptotic range",
                100.0 * diff
            ),
        )
    })
}

/// An iterative uncertainty above this share of a mesh difference is not small beside it
/// (warning `iterative_not_small`; common practice, no source).
pub const ITERATIVE_SMALL: f64 = 0.1;

/// The usual y+ range of wall functions (common practice, no source).
pub const WALL_FUNCTION_Y_PLUS: (f64, f64) = (30.0, 300.0);

/// Study health checks beyond the estimators: y+ moving across the wall-function range,
/// iterative uncertainty not small beside the mesh differences, cell counts that do not follow
/// the sizes given.
pub fn health_warnings(study: &Study) -> Vec<Warning> {
    let mut w = Vec::new();
    let (lo, hi) = WALL_FUNCTION_Y_PLUS;
    let given: Vec<(&str, f64)> = study
        .meshes
        .iter()
        .zip(&study.y_plus)
        .filter_map(|(m, y)| y.map(|y| (m.name.as_str(), y)))
        .collect();
    let inside = given.iter().filter(|(_, y)| (lo..=hi).contains(y)).count();
    if inside > 0 && inside < given.len() {
        let list: Vec<String> = given.iter().map(|(n, y)| format!("{n}: {y}")).collect();
        w.push(Warning::new(
            "y_plus_crosses_wall_function_range",
            format!(
                "mean y+ moves across the wall-function range {lo}–{hi} during refinement ({}): the wall treatment changes between meshes, so the differences are not only discretisation error (common practice, no source)",
                list.join(", ")
            ),
        ));
    }
    for q in &study.quantities {
        if q.values.len() < 2 {
            continue;
        }
        if q.iterative_source == IterativeSource::MeshesUnitsDiffer {
            w.push(
                Warning::new(
                    "iterative_unit_unknown",
                    "the meshes give one iterative uncertainty for every quantity, but the \
                     quantities' units differ, so it is not used here: give `iterative` per \
                     mesh under the quantity, in its unit",
                )
                .about(&q.name),
            );
        }
        // Each mesh's iterative uncertainty against the smallest difference it takes part in
        // (ε21 for the finest mesh, the smaller of its two neighbours' for the others).
        let diffs: Vec<f64> = q.values.windows(2).map(|p| (p[1] - p[0]).abs()).collect();
        for (i, (m, it)) in study.meshes.iter().zip(&q.iterative).enumerate() {
            let Some(it) = it else { continue };
            let e = [i.checked_sub(1).and_then(|j| diffs.get(j)), diffs.get(i)]
                .into_iter()
                .flatten()
                .copied()
                .fold(f64::INFINITY, f64::min);
            if e.is_finite() && *it > ITERATIVE_SMALL * e {
                w.push(
                    Warning::new(
                        "iterative_not_small",
                        format!(
                            "the iterative uncertainty of mesh `{}` ({it:e}) is more than a tenth of the mesh difference it enters ({e:e}): the mesh differences may be iterative noise (common practice, no source)",
                            m.name
                        ),
                    )
                    .about(&q.name),
                );
                break;
            }
        }
    }
    if let Some(implied) = &study.sizes_from_cells {
        let h1 = study.meshes[0].size;
        for (m, s) in study.meshes.iter().zip(implied) {
            let given = m.size / h1;
            if (given - s).abs() > 0.05 * s {
                w.push(Warning::new(
                    "cells_do_not_follow_sizes",
                    format!(
                        "mesh `{}`: the cell counts imply h/h1 = {s:.4} but the sizes give {given:.4} (more than 5 % apart): check `cells` and `size`",
                        m.name
                    ),
                ));
            }
        }
    }
    w
}

/// Warnings about the mesh family itself.
pub fn mesh_warnings(meshes: &[Mesh]) -> Vec<Warning> {
    let mut w = Vec::new();
    for m in meshes {
        if let Some(r) = m.ratio {
            if r < 1.3 {
                w.push(Warning::new(
                    "ratio_below_1_3",
                    format!(
                        "mesh `{}`: refinement ratio {r:.3} to the next finer mesh is below 1.3 (Celik et al. 2008 recommend more than 1.3)",
                        m.name
                    ),
                ));
            }
        }
    }
    if meshes.len() >= 3 {
        if let (Some(r21), Some(r32)) = (meshes[1].ratio, meshes[2].ratio) {
            if (r21 - r32).abs() > 0.1 * r21.min(r32) {
                w.push(Warning::new(
                    "ratios_differ",
                    format!("refinement ratios r21 = {r21:.3} and r32 = {r32:.3} differ by more than 10 %"),
                ));
            }
        }
    }
    w
}

/// Assesses a whole study. Fails only on study-wide faults (for example a probe file that
/// does not match); the error names the file and key or line. A local problem — one mesh of a
/// sweep without breakdown, one measured point outside the meshes' common range, a band or
/// comparison that cannot be formed, a quantity whose estimate fails — is a warning on that
/// result, which says it was not computed ([`partial`]); the rest is still assessed.
///
/// Files the study asks to write (the per-point files of fields) go into the sinks that
/// `outputs` hands out; [`crate::sink::Skip`] writes none. Only those handed a sink are listed
/// in `files_written`.
pub fn run(study: &Study, outputs: &dyn Outputs) -> Result<Assessment, Error> {
    let mut warnings = mesh_warnings(&study.meshes);
    warnings.extend(health_warnings(study));
    warnings.extend(study.warnings.iter().cloned());
    let settings = ThreeGridSettings {
        safety_factor: study.settings.safety_factor,
        order_max: study.settings.order_max,
        formal_order: study.formal_order,
        rule: study.settings.rule,
    };
    let quantities = study
        .quantities
        .iter()
        .map(|q: &Quantity| {
            let mut r = quantity(
                &q.name,
                Role::Quantity,
                q.unit.as_deref(),
                &study.meshes,
                &q.values,
                &settings,
                study.settings.estimator,
                &mut warnings,
            );
            if let (Some(u), Some(u_i)) = (&r.uncertainty, q.iterative.first().copied().flatten()) {
                r.uncertainty = Some(govern::with_iterative(u, u_i));
            }
            for (m, h) in study.meshes.iter().zip(&q.histories) {
                warnings.extend(h.result.warnings.iter().map(|w| {
                    Warning::new(&w.code, format!("mesh `{}`: {}", m.name, w.message))
                        .about(&q.name)
                }));
                r.histories.push(MeshHistory {
                    mesh: m.name.clone(),
                    file: h.file.display().to_string(),
                    result: h.result.clone(),
                    iterative_uncertainty: crate::study::history_input::iterative_of(&h.result),
                    trace: h.trace.clone(),
                    abscissa: h.abscissa.clone(),
                });
            }
            partial::mark_failed(&mut r, &warnings);
            r
        })
        .collect::<Vec<_>>();
    let comparisons = compare::run(study, &quantities, &settings, &mut warnings);
    if comparisons.iter().any(|c| c.comparison.normalised) {
        warnings.push(Warning::new(
            "comparison_normalised",
            "a comparison with measurements divides each data set by its own peak (common practice, no source): it compares shapes, not levels",
        ));
    }
    let mut sweeps = Vec::new();
    for s in &study.sweeps {
        sweeps.push(sweep::assess_sweep(
            s,
            &study.meshes,
            &settings,
            study.settings.estimator,
            &study.path,
            &mut warnings,
        )?);
    }
    let duty_curves = duty::assemble(
        &study.duty_curves,
        &study.sweeps,
        &sweeps,
        &crate::compare::CompareSettings {
            divisor: study.settings.validation_divisor,
            coverage: study.settings.coverage_factor,
            u_input: 0.0,
            u_input_relative: 0.0,
            normalise: false,
        },
        &mut warnings,
    );
    let mut fields = Vec::new();
    let mut written = Vec::new();
    for (spec, idx) in &study.fields {
        let h: Vec<f64> = idx.iter().map(|&i| study.meshes[i].size).collect();
        let sink = match &spec.write {
            Some(target) => outputs.open(target).map_err(|source| Error::Output {
                what: format!("field `{}`: cannot write", spec.name),
                path: target.clone(),
                source,
            })?,
            None => None,
        };
        let summary = crate::field::assess_any(spec, &h, &settings, sink).map_err(|e| match e {
            crate::field::FieldError::Write { path, source } => Error::Output {
                what: format!("field `{}`: cannot write", spec.name),
                path,
                source,
            },
            e => Error::Study(crate::study::StudyError {
                file: study.path.clone(),
                key: format!("fields.{}", spec.name),
                line: None,
                column: None,
                message: e.to_string(),
            }),
        })?;
        if let Some(w) = &summary.written {
            written.push(w.clone());
        }
        warnings.extend(summary.warnings());
        fields.push(summary);
    }
    Ok(Assessment {
        format: 1,
        title: study.title.clone(),
        study: study.path.display().to_string(),
        meshes: study.meshes.clone(),
        size_basis: study.size_basis,
        dimension: study.dimension,
        quantities,
        sweeps,
        duty_curves,
        comparisons,
        fields,
        warnings,
        caution: caution_for(study.domain).to_string(),
        files_read: study
            .files_read
            .iter()
            .map(|p| p.display().to_string())
            .collect(),
        files_written: written,
    })
}
