//! Least-squares estimate for four or more meshes (Eça & Hoekstra 2014, "A procedure for the
//! estimation of the numerical uncertainty of CFD calculations based on grid refinement
//! studies", J. Comput. Phys. 262, 104–130).
//!
//! The rules implemented here are written from memory of that paper (project method notes §4):
//!
//! * Four candidate fits over all meshes, each unweighted and weighted with
//!   `w_i = (1/h_i) / Σ_j (1/h_j)`: free order `φ0 + α h^p`, first order `φ0 + α1 h`, second
//!   order `φ0 + α2 h²`, first-and-second order `φ0 + α1 h + α2 h²`.
//! * Standard deviation `σ = sqrt(Σ r² / (n − n_par))`, weighted
//!   `σ = sqrt(n Σ w r² / (n − n_par))`; `n_par` is 3 for the free and the first-and-second
//!   fits, 2 for the others. Of the weighted and unweighted version of each fit the one with the
//!   smaller `σ` is kept.
//! * Data range `Δφ = (max φ − min φ) / (n − 1)`.
//! * With the kept free order `p`: `0.5 ≤ p < 2` uses the free fit, `p ≥ 2` the smaller-σ of the
//!   second and first-and-second fits, `p < 0.5` the smallest-σ of the first, second and
//!   first-and-second fits. The error estimate is `ε_i = fit(h_i) − φ0` of the selected fit.
//! * Safety factor `Fs = 1.25` when `0.5 ≤ p < 2.1` and `σ < Δφ`, otherwise `Fs = 3`.
//! * `σ < Δφ`: `U_i = Fs |ε_i| + σ + |φ_i − fit(h_i)|`;
//!   `σ ≥ Δφ`: `U_i = 3 (σ/Δφ) (|ε_i| + σ + |φ_i − fit(h_i)|)`.
//!
//! # The order-2 floor (a project rule, docs/method.md §5)
//!
//! On exact power laws with `2 < p < 2.7` the rules above give U below the true error (the
//! first-and-second-order fit bends through the finest value and under-states its error). When
//! the kept free order is `p ≥ 2` and [`LsSettings::guard`] is on (the default), every mesh's U
//! is raised to at least the Richardson error estimate of that mesh and its coarser neighbour
//! with the order fixed at 2 and the procedure's own `Fs`:
//! `U_i ≥ Fs |φ_{i+1} − φ_i| / (r² − 1)` with `r = h_{i+1}/h_i`, and on the coarsest mesh
//! `U_n ≥ Fs r² |φ_n − φ_{n−1}| / (r² − 1)` with `r = h_n/h_{n−1}`. For any error that behaves as
//! `α h^q` with `q ≥ 2` these bound the true error even with `Fs = 1`, because
//! `r^q − 1 ≥ r² − 1`. The result records the published U of the finest mesh and the floor
//! ([`OrderTwoFloor`]); when the floor sets U the warning [`WARN_ORDER_TWO_FLOOR`] says so.
//!
//! # Numerics (project choices)
//!
//! * Sizes are scaled by the finest size (`x = h / h_1 ≥ 1`) and values are shifted by the
//!   finest value and scaled by their largest deviation from it, so every fit works on numbers
//!   of order one whatever the units. Results are converted back before they are reported.
//! * Every linear least-squares problem is solved without normal equations: three columns by
//!   Householder QR of the (square-root-weighted) design matrix, two columns (a constant and
//!   one more) by regression on centred data, which is the same orthogonalisation done by
//!   hand.
//! * The free order is searched on the bounded range of [`LsSettings`], with the band
//!   `|p| < 0.05` left out: there `h^p` can hardly be told from the constant column and the fit
//!   degenerates (φ0 and α grow without bound). The range is sampled every 0.1 or finer, the
//!   lowest local minima of the samples are refined by argmin's Brent minimiser, and the best
//!   one is polished by a few Gauss–Newton steps on `p` with `(φ0, α)` re-solved exactly at
//!   each step (variable projection). When the minimum lies on an end of a searched interval
//!   this is reported (`order_at_bound`).
//!
//! Nothing here reads files or prints.
//!
//! ```
//! use meshbound::estimate::least_squares::{estimate, LsSettings};
//! let names: Vec<String> = ["L1", "L2", "L3", "L4"].iter().map(|s| s.to_string()).collect();
//! let h = [1.0, 1.3, 1.8, 2.4];
//! // manufactured: φ = 2 + 0.01 h^1.5
//! let phi: Vec<f64> = h.iter().map(|x: &f64| 2.0 + 0.01 * x.powf(1.5)).collect();
//! let ls = estimate(&names, &h, &phi, &LsSettings::default()).map_err(|e| e.to_string())?;
//! assert!((ls.order.unwrap_or(0.0) - 1.5).abs() < 1e-6);
//! # Ok::<(), String>(())
//! ```

use argmin::core::{CostFunction, Error as ArgminError, Executor};
use argmin::solver::brent::BrentOpt;
use serde::Serialize;

use super::{Convergence, EstimateError};
use crate::warning::Warning;

/// Default lower end of the searched free-order range (a project choice: negative orders
/// describe divergence; −4 covers any divergence worth describing by a power law).
pub const DEFAULT_ORDER_MIN: f64 = -4.0;
/// Default upper end of the searched free-order range (a project choice: orders above 8 are
/// far outside the asymptotic range of any practical scheme).
pub const DEFAULT_ORDER_MAX: f64 = 8.0;
/// Half-width of the band of orders around zero that the search leaves out: there `h^p` is
/// nearly collinear with the constant column (a project choice).
pub const EXCLUDED_ORDER_HALF_WIDTH: f64 = 0.05;

/// Warning code: the free-order minimum lies on an end of the searched range.
pub const WARN_ORDER_AT_BOUND: &str = "ls_order_at_bound";
/// Warning code: the standard deviation of the selected fit is not below the data range.
pub const WARN_SCATTER_EXCEEDS_RANGE: &str = "ls_scatter_exceeds_range";
/// Warning code: the successive differences alternate in sign over all meshes.
pub const WARN_OSCILLATING: &str = "ls_oscillating";
/// Warning code: the successive differences change sign somewhere, but do not alternate.
pub const WARN_NONMONOTONIC: &str = "ls_nonmonotonic";
/// Warning code: the fitted free order is negative, the values diverge with refinement.
pub const WARN_DIVERGENT: &str = "ls_divergent";
/// Warning code: the fitted free order is below 0.5, the fixed-order fits govern.
pub const WARN_LOW_ORDER: &str = "ls_low_order";
/// Warning code: the order-2 floor (a project rule for free orders `p ≥ 2`) set the
/// uncertainty of the finest mesh above the published rules' figure.
pub const WARN_ORDER_TWO_FLOOR: &str = "ls_order_two_floor";
/// Warning code: the formal-order floor (a project rule for formal orders below 2) set the
/// uncertainty of the finest mesh above the published rules' figure.
pub const WARN_FORMAL_ORDER_FLOOR: &str = "ls_formal_order_floor";

/// The order-2 floor applies from this free order on (a project rule: the published rules
/// switch to the second-order fits there, docs/method.md §5).
pub const FLOOR_FROM_ORDER: f64 = 2.0;
/// The order the floor assumes: the formal order the procedure's fixed-order fits stand for.
pub const FLOOR_ORDER: f64 = 2.0;
/// With a formal order below 2, the floor (at the formal order) applies from this free order
/// on: every order the procedure accepts as converging (a project rule, docs/method.md §5).
pub const FORMAL_FLOOR_FROM_ORDER: f64 = 0.5;

/// Settings of the least-squares estimate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LsSettings {
    /// Lower end of the searched free order (may be negative: divergence).
    pub order_min: f64,
    /// Upper end of the searched free order.
    pub order_max: f64,
    /// Whether the order-2 floor applies to free orders `p ≥ 2` (a project rule, see the
    /// module documentation). Off gives the published rules alone.
    pub guard: bool,
    /// The formal order of the discretisation. Below 2 the floor assumes it instead of 2 and
    /// applies from p ≥ [`FORMAL_FLOOR_FROM_ORDER`] (the formal-order floor, a project rule).
    pub formal_order: f64,
}

impl Default for LsSettings {
    /// The range `[DEFAULT_ORDER_MIN, DEFAULT_ORDER_MAX]` = `[−4, 8]`, always without the band
    /// `|p| < EXCLUDED_ORDER_HALF_WIDTH`, and the order-2 floor on.
    fn default() -> Self {
        LsSettings {
            order_min: DEFAULT_ORDER_MIN,
            order_max: DEFAULT_ORDER_MAX,
            guard: true,
            formal_order: FLOOR_ORDER,
        }
    }
}

impl LsSettings {
    /// The default settings without the order-2 floor: the published rules alone.
    pub fn published() -> Self {
        LsSettings {
            guard: false,
            ..LsSettings::default()
        }
    }
}

/// The name of a guard rule (part of the JSON contract).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum GuardRule {
    /// U at least the two-mesh Richardson estimate with order 2 and the procedure's `Fs`.
    OrderTwoFloor,
    /// U at least the two-mesh Richardson estimate with the formal order (below 2) and the
    /// procedure's `Fs`.
    FormalOrderFloor,
}

impl GuardRule {
    /// The snake_case label used in every output.
    pub fn label(self) -> &'static str {
        match self {
            GuardRule::OrderTwoFloor => "order_two_floor",
            GuardRule::FormalOrderFloor => "formal_order_floor",
        }
    }
}

/// What the order-2 floor did, on the finest mesh (part of the JSON contract).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OrderTwoFloor {
    /// The rule (`order_two_floor`).
    pub rule: GuardRule,
    /// The order the floor assumes ([`FLOOR_ORDER`] = 2).
    pub order: f64,
    /// Its factor of safety: the procedure's `Fs` of this result.
    pub safety_factor: f64,
    /// The floor on the finest mesh, `Fs |φ2 − φ1| / (r21² − 1)`.
    pub floor: f64,
    /// U of the finest mesh by the published rules alone.
    pub published_uncertainty: f64,
    /// Whether the floor set U of the finest mesh (it exceeds the published figure).
    pub governs: bool,
}

/// The form of a candidate fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FitKind {
    /// `φ0 + α h^p` with the order `p` fitted.
    Free,
    /// `φ0 + α1 h`.
    First,
    /// `φ0 + α2 h²`.
    Second,
    /// `φ0 + α1 h + α2 h²`.
    FirstSecond,
}

impl FitKind {
    /// The snake_case label used in every output.
    pub fn label(self) -> &'static str {
        match self {
            FitKind::Free => "free",
            FitKind::First => "first",
            FitKind::Second => "second",
            FitKind::FirstSecond => "first_second",
        }
    }

    /// Number of fitted parameters (`n_par` in σ).
    pub fn parameter_count(self) -> usize {
        match self {
            FitKind::Free | FitKind::FirstSecond => 3,
            FitKind::First | FitKind::Second => 2,
        }
    }

    const ALL: [FitKind; 4] = [
        FitKind::Free,
        FitKind::First,
        FitKind::Second,
        FitKind::FirstSecond,
    ];
}

/// One candidate fit, in the units of the inputs.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Fit {
    /// Form of the fit.
    pub kind: FitKind,
    /// Whether the residuals were weighted by `w_i = (1/h_i)/Σ(1/h_j)`.
    pub weighted: bool,
    /// Fitted value at zero cell size.
    pub phi0: f64,
    /// `[α]` for free, first and second order; `[α1, α2]` for first-and-second order.
    pub coefficients: Vec<f64>,
    /// Fitted `p` for the free fit, 1 for first, 2 for second, `None` for first-and-second
    /// (and for a free fit of values that do not change).
    pub order: Option<f64>,
    /// Standard deviation σ of the fit (weighted form for a weighted fit).
    pub std_dev: f64,
}

impl Fit {
    /// Value of the fit at cell size `h`.
    pub fn value_at(&self, h: f64) -> f64 {
        self.phi0 + self.error_at(h)
    }

    /// Error estimate `fit(h) − φ0` of the fit at cell size `h`.
    pub fn error_at(&self, h: f64) -> f64 {
        let c = |i: usize| self.coefficients.get(i).copied().unwrap_or(0.0);
        match self.kind {
            FitKind::Free => c(0) * h.powf(self.order.unwrap_or(0.0)),
            FitKind::First => c(0) * h,
            FitKind::Second => c(0) * h * h,
            FitKind::FirstSecond => c(0) * h + c(1) * h * h,
        }
    }
}

/// Which fit governs the error estimate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct FitChoice {
    /// Form of the selected fit.
    pub kind: FitKind,
    /// Whether it is the weighted version.
    pub weighted: bool,
}

/// Fit value and uncertainty on one mesh.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeshUncertainty {
    /// Mesh name.
    pub mesh: String,
    /// Value of the selected fit at this mesh's size.
    pub fit: f64,
    /// Absolute numerical uncertainty `U(φ_i)`.
    pub uncertainty: f64,
}

/// Result of the least-squares estimate (part of the JSON contract).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LeastSquares {
    /// The eight fits: free, first, second, first-and-second, each unweighted then weighted.
    pub fits: Vec<Fit>,
    /// The fit that governs the error estimate.
    pub selected: FitChoice,
    /// Free order `p` of the kept (smaller-σ) free fit; `None` when the values do not change.
    pub order: Option<f64>,
    /// Data range `Δφ = (max φ − min φ)/(n − 1)`.
    pub data_range: f64,
    /// Error estimate `|ε|` on the finest mesh (absolute).
    pub error_estimate: f64,
    /// Safety factor `Fs` (1.25 or 3).
    pub safety_factor: f64,
    /// Fit value and uncertainty per mesh, finest first.
    pub per_mesh: Vec<MeshUncertainty>,
    /// Convergence class.
    pub convergence: Convergence,
    /// A short sentence saying what decided the class.
    pub convergence_basis: String,
    /// Whether the free-order minimum lies on an end of the searched range.
    pub order_at_bound: bool,
    /// The order-2 floor when it applied (free order `p ≥ 2`, guard on); `None` otherwise.
    /// `per_mesh[].uncertainty` already holds the floored figures.
    pub guard: Option<OrderTwoFloor>,
    /// Warnings for the caller to move into the top-level list (not serialised here).
    #[serde(skip)]
    pub warnings: Vec<Warning>,
}

impl LeastSquares {
    /// The fit named by [`LeastSquares::selected`].
    pub fn selected_fit(&self) -> Option<&Fit> {
        self.fits
            .iter()
            .find(|f| f.kind == self.selected.kind && f.weighted == self.selected.weighted)
    }

    /// Whether the order-2 floor set U of the finest mesh.
    pub fn floor_governs(&self) -> bool {
        self.guard.as_ref().is_some_and(|g| g.governs)
    }

    /// The order behind U of the finest mesh: 2 when the order-2 floor set it, else the order
    /// of the selected fit (the free order `p` for the free fit, 1 or 2 for the fixed-order
    /// fits, `None` for the first-and-second-order fit, which has two).
    pub fn governing_order(&self) -> Option<f64> {
        match &self.guard {
            Some(g) if g.governs => Some(g.order),
            _ => self.selected_fit().and_then(|f| f.order),
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Internal numerics, in normalised units: x = h/h1, y = (φ − φ_ref)/scale.

/// Relative size of an R diagonal below which a column counts as dependent on the others.
const RANK_TOL: f64 = 1e-12;
/// Spacing of the free-order samples before refinement.
const SAMPLE_STEP: f64 = 0.1;
/// Fewest samples on one searched interval.
const MIN_SAMPLES: usize = 17;
/// Most samples on one searched interval.
const MAX_SAMPLES: usize = 400;
/// How many sampled local minima are refined by Brent.
const REFINED_MINIMA: usize = 3;
/// Relative distance from an interval end within which the minimum counts as on the bound.
const BOUND_TOL: f64 = 1e-6;

#[derive(Debug, Clone, Copy)]
enum Model {
    Free(f64),
    First,
    Second,
    FirstSecond,
}

impl Model {
    fn columns(self) -> usize {
        match self {
            Model::FirstSecond => 3,
            _ => 2,
        }
    }

    fn row(self, x: f64) -> [f64; 3] {
        match self {
            Model::Free(p) => [1.0, x.powf(p), 0.0],
            Model::First => [1.0, x, 0.0],
            Model::Second => [1.0, x * x, 0.0],
            Model::FirstSecond => [1.0, x, x * x],
        }
    }

    /// The model of a fixed-order kind (`None` for the free order).
    fn fixed(kind: FitKind) -> Option<Model> {
        match kind {
            FitKind::Free => None,
            FitKind::First => Some(Model::First),
            FitKind::Second => Some(Model::Second),
            FitKind::FirstSecond => Some(Model::FirstSecond),
        }
    }
}

struct Prepared {
    x: Vec<f64>,
    y: Vec<f64>,
    /// Normalised weights (sum 1).
    w: Vec<f64>,
    h1: f64,
    phi_ref: f64,
    scale: f64,
}

impl Prepared {
    fn n(&self) -> usize {
        self.x.len()
    }

    /// Multiplier of row i: sqrt(w_i) when weighted, 1 otherwise.
    fn row_factor(&self, i: usize, weighted: bool) -> f64 {
        if weighted {
            self.w.get(i).copied().unwrap_or(0.0).sqrt()
        } else {
            1.0
        }
    }
}

#[derive(Debug, Clone, Copy)]
struct Solved {
    model: Model,
    /// Coefficients of the columns of `model.row`.
    coef: [f64; 3],
    /// Σ r² (unweighted) or Σ w r² (weighted), normalised units.
    rss: f64,
}

impl Solved {
    fn value(&self, x: f64) -> f64 {
        let r = self.model.row(x);
        self.coef[0] * r[0] + self.coef[1] * r[1] + self.coef[2] * r[2]
    }

    fn error(&self, x: f64) -> f64 {
        self.value(x) - self.coef[0]
    }
}

/// Least-squares solution of `a c ≈ b` for `k ≤ 3` columns by Householder QR.
/// `None` when a column is (numerically) dependent on the previous ones or a number is not
/// finite.
fn qr_solve(rows: &[[f64; 3]], k: usize, rhs: &[f64]) -> Option<[f64; 3]> {
    let n = rows.len();
    if k == 0 || k > 3 || n < k || rhs.len() != n {
        return None;
    }
    let mut a: Vec<[f64; 3]> = rows.to_vec();
    let mut b: Vec<f64> = rhs.to_vec();
    let mut col_norm = [0.0_f64; 3];
    for (j, cn) in col_norm.iter_mut().enumerate().take(k) {
        *cn = a.iter().map(|r| r[j] * r[j]).sum::<f64>().sqrt();
        if !cn.is_finite() || *cn <= 0.0 {
            return None;
        }
    }
    let mut v = vec![0.0_f64; n];
    for j in 0..k {
        let norm = a[j..].iter().map(|r| r[j] * r[j]).sum::<f64>().sqrt();
        if !norm.is_finite() || norm <= RANK_TOL * col_norm[j] {
            return None;
        }
        let alpha = if a[j][j] > 0.0 { -norm } else { norm };
        for i in j..n {
            v[i] = a[i][j];
        }
        v[j] -= alpha;
        let vnorm2: f64 = v[j..n].iter().map(|t| t * t).sum();
        if vnorm2 > 0.0 {
            for c in j..k {
                let dot: f64 = a[j..].iter().zip(&v[j..]).map(|(r, vi)| vi * r[c]).sum();
                let f = 2.0 * dot / vnorm2;
                for (r, vi) in a[j..].iter_mut().zip(&v[j..]) {
                    r[c] -= f * vi;
                }
            }
            let dot: f64 = b[j..].iter().zip(&v[j..]).map(|(bi, vi)| vi * bi).sum();
            let f = 2.0 * dot / vnorm2;
            for (bi, vi) in b[j..].iter_mut().zip(&v[j..]) {
                *bi -= f * vi;
            }
        }
    }
    let mut c = [0.0_f64; 3];
    for j in (0..k).rev() {
        let mut s = b[j];
        for m in (j + 1)..k {
            s -= a[j][m] * c[m];
        }
        let d = a[j][j];
        if d.abs() <= RANK_TOL * col_norm[j] {
            return None;
        }
        c[j] = s / d;
    }
    if c.iter().all(|t| t.is_finite()) {
        Some(c)
    } else {
        None
    }
}

/// Exact (weighted) linear least-squares fit of `model` to the prepared data.
fn solve_linear(prep: &Prepared, model: Model, weighted: bool) -> Option<Solved> {
    let k = model.columns();
    if k == 2 {
        return solve_two_columns(prep, model, weighted);
    }
    let n = prep.n();
    let mut rows = Vec::with_capacity(n);
    let mut rhs = Vec::with_capacity(n);
    for i in 0..n {
        let f = prep.row_factor(i, weighted);
        let r = model.row(prep.x[i]);
        rows.push([f * r[0], f * r[1], f * r[2]]);
        rhs.push(f * prep.y[i]);
    }
    let coef = qr_solve(&rows, k, &rhs)?;
    let mut solved = Solved {
        model,
        coef,
        rss: 0.0,
    };
    solved.rss = rss_of(prep, &solved, weighted);
    if solved.rss.is_finite() {
        Some(solved)
    } else {
        None
    }
}

/// Fit with a constant and one more column: (weighted) regression on centred data. Centring
/// removes the constant column from the other one exactly, which is the Gram–Schmidt (QR)
/// step for two columns; no matrix is built, which keeps the free-order search cheap.
fn solve_two_columns(prep: &Prepared, model: Model, weighted: bool) -> Option<Solved> {
    // (weight, column value, y) per mesh
    let pts: Vec<(f64, f64, f64)> = prep
        .x
        .iter()
        .zip(&prep.y)
        .zip(&prep.w)
        .map(|((&x, &y), &w)| (if weighted { w } else { 1.0 }, model.row(x)[1], y))
        .collect();
    let (mut sw, mut sc, mut sy) = (0.0_f64, 0.0_f64, 0.0_f64);
    for &(w, c, y) in &pts {
        sw += w;
        sc += w * c;
        sy += w * y;
    }
    if !(sw.is_finite() && sw > 0.0) {
        return None;
    }
    let (mc, my) = (sc / sw, sy / sw);
    let (mut scc, mut scy, mut norm2) = (0.0_f64, 0.0_f64, 0.0_f64);
    for &(w, c, y) in &pts {
        let dc = c - mc;
        scc += w * dc * dc;
        scy += w * dc * (y - my);
        norm2 += w * c * c;
    }
    // the centred column must not vanish against the column itself (rank test as in QR)
    if !(scc.is_finite() && norm2.is_finite() && scc > RANK_TOL * RANK_TOL * norm2) {
        return None;
    }
    let b = scy / scc;
    let a = my - b * mc;
    let rss: f64 = pts
        .iter()
        .map(|&(w, c, y)| {
            let r = y - a - b * c;
            w * r * r
        })
        .sum();
    (a.is_finite() && b.is_finite() && rss.is_finite()).then_some(Solved {
        model,
        coef: [a, b, 0.0],
        rss,
    })
}

/// (Weighted) residual sum of squares of the constant fit: an upper bound of the RSS of every
/// fit with a constant column.
fn constant_rss(prep: &Prepared, weighted: bool) -> Option<f64> {
    let n = prep.n();
    let rows: Vec<[f64; 3]> = (0..n)
        .map(|i| [prep.row_factor(i, weighted), 0.0, 0.0])
        .collect();
    let rhs: Vec<f64> = (0..n)
        .map(|i| prep.row_factor(i, weighted) * prep.y[i])
        .collect();
    let coef = qr_solve(&rows, 1, &rhs)?;
    let rss = (0..n)
        .map(|i| {
            let r = prep.y[i] - coef[0];
            let wt = if weighted { prep.w[i] } else { 1.0 };
            wt * r * r
        })
        .sum::<f64>();
    rss.is_finite().then_some(rss)
}

fn rss_of(prep: &Prepared, s: &Solved, weighted: bool) -> f64 {
    (0..prep.n())
        .map(|i| {
            let r = prep.y[i] - s.value(prep.x[i]);
            let wt = if weighted { prep.w[i] } else { 1.0 };
            wt * r * r
        })
        .sum()
}

/// σ in normalised units from the (weighted) residual sum of squares: `sqrt(Σ r²/(n − n_par))`,
/// weighted `sqrt(n Σ w r²/(n − n_par))` (rule from memory of Eça & Hoekstra 2014, method
/// notes §4). `n − n_par ≥ 1` always holds since `n ≥ 4` and `n_par ≤ 3`.
fn sigma_of(rss: f64, n: usize, n_par: usize, weighted: bool) -> f64 {
    let dof = n.saturating_sub(n_par).max(1) as f64;
    let s2 = if weighted {
        n as f64 * rss / dof
    } else {
        rss / dof
    };
    s2.max(0.0).sqrt()
}

/// Residual sum of squares of the free-order fit as a function of `p`, for argmin.
struct FreeCost<'a> {
    prep: &'a Prepared,
    weighted: bool,
    /// Returned where the fit cannot be solved: the RSS of the constant fit, which bounds the
    /// RSS of every fit that has a constant column.
    penalty: f64,
}

impl FreeCost<'_> {
    fn eval(&self, p: f64) -> f64 {
        match solve_linear(self.prep, Model::Free(p), self.weighted) {
            Some(s) if s.rss.is_finite() => s.rss,
            _ => self.penalty,
        }
    }
}

impl CostFunction for FreeCost<'_> {
    type Param = f64;
    type Output = f64;

    fn cost(&self, p: &f64) -> Result<f64, ArgminError> {
        Ok(self.eval(*p))
    }
}

/// Where the free-order minimum lies when it is on an end of a searched interval.
#[derive(Debug, Clone, Copy, PartialEq)]
enum BoundHit {
    /// On `order_min` or `order_max` of the settings.
    Setting(f64),
    /// On an edge of the excluded band around zero.
    ExcludedBand(f64),
}

struct FreeFit {
    solved: Solved,
    bound: Option<BoundHit>,
}

/// Brent minimisation of the cost on `[a, b]`; `None` when argmin fails.
fn brent_min(cost: &FreeCost<'_>, a: f64, b: f64) -> Option<(f64, f64)> {
    if b.partial_cmp(&a) != Some(std::cmp::Ordering::Greater) {
        return None;
    }
    let problem = FreeCost {
        prep: cost.prep,
        weighted: cost.weighted,
        penalty: cost.penalty,
    };
    let solver = BrentOpt::new(a, b).set_tolerance(f64::EPSILON.sqrt(), 1e-9);
    let res = Executor::new(problem, solver)
        .configure(|state| state.max_iters(200))
        .timer(false)
        .run()
        .ok()?;
    let state = res.state();
    let p = state.best_param?;
    let c = state.best_cost;
    if p.is_finite() && c.is_finite() {
        Some((p, c))
    } else {
        None
    }
}

/// Gauss–Newton steps on `p` with `(φ0, α)` re-solved at each trial (variable projection),
/// kept inside `[lo, hi]`. Returns the improved fit (or the start when nothing improves).
///
/// At `(φ0, α)` optimal for `p` the residual is orthogonal to the linear columns, so the
/// Gauss–Newton step in `p` vanishes exactly where the derivative of the residual sum of
/// squares does: the iteration finds the stationary point from the gradient, more precisely
/// than comparisons of function values can (those resolve `p` only to about the square root
/// of the rounding level when the minimum is flat). A step is therefore kept when it does not
/// make the sum of squares worse beyond rounding; a step that does is halved.
fn polish(prep: &Prepared, weighted: bool, lo: f64, hi: f64, start: Solved) -> Solved {
    let mut cur = start;
    for _ in 0..40 {
        let p = match cur.model {
            Model::Free(p) => p,
            _ => return cur,
        };
        let b = cur.coef[1];
        if b.is_nan() || b.abs() <= 0.0 {
            return cur;
        }
        let n = prep.n();
        let mut rows = Vec::with_capacity(n);
        let mut rhs = Vec::with_capacity(n);
        for i in 0..n {
            let f = prep.row_factor(i, weighted);
            let x = prep.x[i];
            let xp = x.powf(p);
            rows.push([f, f * xp, f * b * xp * x.ln()]);
            rhs.push(f * (prep.y[i] - cur.value(x)));
        }
        let Some(delta) = qr_solve(&rows, 3, &rhs) else {
            return cur;
        };
        let mut dp = delta[2];
        if !dp.is_finite() {
            return cur;
        }
        let limit = cur.rss * (1.0 + 1e-10) + f64::MIN_POSITIVE;
        let mut step = None;
        for _ in 0..30 {
            let pn = (p + dp).clamp(lo, hi);
            if (pn - p).abs() <= 1e-15 * (1.0 + p.abs()) {
                break;
            }
            if let Some(s) = solve_linear(prep, Model::Free(pn), weighted) {
                if s.rss <= limit {
                    step = Some((s, (pn - p).abs()));
                    break;
                }
            }
            dp *= 0.5;
        }
        let Some((s, taken)) = step else {
            return cur;
        };
        cur = s;
        if taken <= 1e-14 * (1.0 + p.abs()) {
            return cur;
        }
    }
    cur
}

/// Free-order fit: bounded search of `p` over the intervals.
fn fit_free(
    prep: &Prepared,
    weighted: bool,
    intervals: &[(f64, f64)],
    settings: &LsSettings,
) -> Option<FreeFit> {
    let penalty = constant_rss(prep, weighted)?;
    let cost = FreeCost {
        prep,
        weighted,
        penalty,
    };
    let mut best: Option<(Solved, f64, f64, f64)> = None; // (fit, p, lo, hi)
    for &(lo, hi) in intervals {
        let m = (((hi - lo) / SAMPLE_STEP).ceil() as usize + 1).clamp(MIN_SAMPLES, MAX_SAMPLES);
        let grid: Vec<f64> = (0..m)
            .map(|k| lo + (hi - lo) * (k as f64) / ((m - 1) as f64))
            .collect();
        let vals: Vec<f64> = grid.iter().map(|&p| cost.eval(p)).collect();
        // local minima of the samples, lowest first
        let mut minima: Vec<usize> = (0..m)
            .filter(|&k| {
                let left = k == 0 || vals[k] <= vals[k - 1];
                let right = k + 1 == m || vals[k] <= vals[k + 1];
                left && right
            })
            .collect();
        minima.sort_by(|&a, &b| vals[a].total_cmp(&vals[b]));
        minima.truncate(REFINED_MINIMA);
        for k in minima {
            let a = grid[k.saturating_sub(1)];
            let b = grid[(k + 1).min(m - 1)];
            let mut cand_p = grid[k];
            if let Some((p, c)) = brent_min(&cost, a, b) {
                if c < vals[k] {
                    cand_p = p.clamp(lo, hi);
                }
            }
            let Some(start) = solve_linear(prep, Model::Free(cand_p), weighted) else {
                continue;
            };
            let s = polish(prep, weighted, lo, hi, start);
            let p = match s.model {
                Model::Free(p) => p,
                _ => cand_p,
            };
            let better = match &best {
                None => true,
                Some((b, _, _, _)) => s.rss < b.rss,
            };
            if better {
                best = Some((s, p, lo, hi));
            }
        }
    }
    let (solved, p, lo, hi) = best?;
    let near = |edge: f64| (p - edge).abs() <= BOUND_TOL * edge.abs().max(1.0);
    let classify = |edge: f64| {
        let is_setting = (edge - settings.order_min).abs() <= f64::EPSILON * edge.abs().max(1.0)
            || (edge - settings.order_max).abs() <= f64::EPSILON * edge.abs().max(1.0);
        if is_setting {
            BoundHit::Setting(edge)
        } else {
            BoundHit::ExcludedBand(edge)
        }
    };
    let bound = if near(lo) {
        Some(classify(lo))
    } else if near(hi) {
        Some(classify(hi))
    } else {
        None
    };
    Some(FreeFit { solved, bound })
}

/// One computed fit before conversion, with its σ in input units.
struct Candidate {
    kind: FitKind,
    weighted: bool,
    solved: Solved,
    sigma: f64,
    bound: Option<BoundHit>,
}

impl Candidate {
    fn to_fit(&self, prep: &Prepared) -> Fit {
        let s = prep.scale;
        let h1 = prep.h1;
        let c = self.solved.coef;
        let (coefficients, order) = match self.solved.model {
            Model::Free(p) => (vec![s * c[1] / h1.powf(p)], Some(p)),
            Model::First => (vec![s * c[1] / h1], Some(1.0)),
            Model::Second => (vec![s * c[1] / (h1 * h1)], Some(2.0)),
            Model::FirstSecond => (vec![s * c[1] / h1, s * c[2] / (h1 * h1)], None),
        };
        Fit {
            kind: self.kind,
            weighted: self.weighted,
            phi0: prep.phi_ref + s * c[0],
            coefficients,
            order,
            std_dev: self.sigma,
        }
    }
}

fn validate(
    names: &[String],
    h: &[f64],
    phi: &[f64],
    settings: &LsSettings,
) -> Result<(), EstimateError> {
    let bad = |m: String| Err(EstimateError::InvalidInput(m));
    let n = h.len();
    if names.len() != n || phi.len() != n {
        return bad(format!(
            "least-squares estimate: {} mesh names, {} sizes and {} values; the three lists \
             must have the same length",
            names.len(),
            n,
            phi.len()
        ));
    }
    if n < 4 {
        return bad(format!(
            "least-squares estimate: needs at least 4 meshes, got {n}"
        ));
    }
    for (i, (&hi, &pi)) in h.iter().zip(phi).enumerate() {
        let name = &names[i];
        if !hi.is_finite() || hi <= 0.0 {
            return bad(format!(
                "least-squares estimate: size of mesh '{name}' is {hi}; sizes must be finite \
                 and > 0"
            ));
        }
        if !pi.is_finite() {
            return bad(format!(
                "least-squares estimate: value on mesh '{name}' is {pi}; values must be finite"
            ));
        }
    }
    for i in 1..n {
        if h[i] <= h[i - 1] {
            return bad(format!(
                "least-squares estimate: sizes must be distinct and run finest first \
                 (ascending); mesh '{}' has h = {} after mesh '{}' with h = {}",
                names[i],
                h[i],
                names[i - 1],
                h[i - 1]
            ));
        }
    }
    let (lo, hi) = (settings.order_min, settings.order_max);
    if !lo.is_finite() || !hi.is_finite() || lo >= hi {
        return bad(format!(
            "least-squares estimate: the order range [{lo}, {hi}] must be finite with \
             order_min < order_max"
        ));
    }
    Ok(())
}

/// Searched intervals: the settings' range without the band `|p| < EXCLUDED_ORDER_HALF_WIDTH`.
pub(crate) fn intervals_of(settings: &LsSettings) -> Result<Vec<(f64, f64)>, EstimateError> {
    let g = EXCLUDED_ORDER_HALF_WIDTH;
    let (lo, hi) = (settings.order_min, settings.order_max);
    let mut out = Vec::with_capacity(2);
    if lo < -g {
        let b = hi.min(-g);
        if b - lo > 1e-9 {
            out.push((lo, b));
        }
    }
    if hi > g {
        let a = lo.max(g);
        if hi - a > 1e-9 {
            out.push((a, hi));
        }
    }
    if out.is_empty() {
        return Err(EstimateError::InvalidInput(format!(
            "least-squares estimate: the order range [{lo}, {hi}] lies inside the excluded \
             band |p| < {g}, where h^p cannot be told from a constant"
        )));
    }
    Ok(out)
}

/// Kind of the successive differences.
struct SignPattern {
    alternating: bool,
    any_change: bool,
}

fn sign_pattern(phi: &[f64]) -> SignPattern {
    let signs: Vec<i8> = phi
        .windows(2)
        .map(|w| {
            let d = w[1] - w[0];
            if d > 0.0 {
                1
            } else if d < 0.0 {
                -1
            } else {
                0
            }
        })
        .collect();
    let alternating = !signs.is_empty()
        && signs
            .windows(2)
            .all(|s| s[0] != 0 && s[1] != 0 && s[0] != s[1]);
    let nonzero: Vec<i8> = signs.iter().copied().filter(|&s| s != 0).collect();
    let any_change = nonzero.windows(2).any(|s| s[0] != s[1]);
    SignPattern {
        alternating,
        any_change,
    }
}

fn invalid_numbers() -> EstimateError {
    EstimateError::InvalidInput(
        "least-squares estimate: the fits produced numbers that are not finite; the sizes or \
         values span too many orders of magnitude"
            .to_string(),
    )
}

/// Result for values that do not change between meshes: every fit is the constant, U = 0.
fn no_change(names: &[String], phi: &[f64], data_range: f64) -> LeastSquares {
    let v = phi.first().copied().unwrap_or(0.0);
    let mut fits = Vec::with_capacity(8);
    for kind in FitKind::ALL {
        for weighted in [false, true] {
            let (coefficients, order) = match kind {
                FitKind::Free => (vec![0.0], None),
                FitKind::First => (vec![0.0], Some(1.0)),
                FitKind::Second => (vec![0.0], Some(2.0)),
                FitKind::FirstSecond => (vec![0.0, 0.0], None),
            };
            fits.push(Fit {
                kind,
                weighted,
                phi0: v,
                coefficients,
                order,
                std_dev: 0.0,
            });
        }
    }
    LeastSquares {
        fits,
        selected: FitChoice {
            kind: FitKind::Free,
            weighted: false,
        },
        order: None,
        data_range,
        error_estimate: 0.0,
        safety_factor: 3.0,
        per_mesh: names
            .iter()
            .map(|m| MeshUncertainty {
                mesh: m.clone(),
                fit: v,
                uncertainty: 0.0,
            })
            .collect(),
        convergence: Convergence::NoChange,
        convergence_basis: "all values are equal (to rounding): no change between meshes"
            .to_string(),
        order_at_bound: false,
        guard: None,
        warnings: Vec::new(),
    }
}

/// Least-squares estimate over four or more meshes (Eça & Hoekstra 2014, rules from memory;
/// see the module documentation).
///
/// `names`, `h` and `phi` run finest first: `h` strictly ascending, all finite, `h > 0`,
/// at least four meshes. Returns [`EstimateError::InvalidInput`] when a precondition fails
/// and [`EstimateError::NoOrder`] when no free-order fit could be solved.
pub fn estimate(
    names: &[String],
    h: &[f64],
    phi: &[f64],
    settings: &LsSettings,
) -> Result<LeastSquares, EstimateError> {
    validate(names, h, phi, settings)?;
    let intervals = intervals_of(settings)?;
    let n = h.len();

    let max = phi.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let min = phi.iter().copied().fold(f64::INFINITY, f64::min);
    let magnitude = phi.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
    let range = max - min;
    if !range.is_finite() {
        return Err(invalid_numbers());
    }
    // Δφ = (max − min)/(n − 1) (rule from memory of Eça & Hoekstra 2014, method notes §4)
    let data_range = range / (n - 1) as f64;
    if range <= 4.0 * f64::EPSILON * magnitude {
        return Ok(no_change(names, phi, data_range));
    }

    // Normalise: x = h/h1 ≥ 1, y = (φ − φ1)/scale with scale = max |φ − φ1| > 0.
    let h1 = h[0];
    let phi_ref = phi[0];
    let scale = phi.iter().fold(0.0_f64, |m, v| m.max((v - phi_ref).abs()));
    if !(scale.is_finite() && scale > 0.0) {
        return Err(invalid_numbers());
    }
    // weights w_i = (1/h_i)/Σ(1/h_j) (rule from memory of Eça & Hoekstra 2014, method notes §4)
    let inv_sum: f64 = h.iter().map(|v| 1.0 / v).sum();
    let prep = Prepared {
        x: h.iter().map(|v| v / h1).collect(),
        y: phi.iter().map(|v| (v - phi_ref) / scale).collect(),
        w: h.iter().map(|v| (1.0 / v) / inv_sum).collect(),
        h1,
        phi_ref,
        scale,
    };
    if prep
        .x
        .iter()
        .chain(&prep.y)
        .chain(&prep.w)
        .any(|v| !v.is_finite())
    {
        return Err(invalid_numbers());
    }

    // The eight fits.
    let mut cands: Vec<Candidate> = Vec::with_capacity(8);
    for kind in FitKind::ALL {
        for weighted in [false, true] {
            let (solved, bound) = if kind == FitKind::Free {
                let f = fit_free(&prep, weighted, &intervals, settings).ok_or_else(|| {
                    EstimateError::NoOrder(
                        "least-squares estimate: the free-order fit could not be solved in \
                         the searched range"
                            .to_string(),
                    )
                })?;
                (f.solved, f.bound)
            } else {
                let s = Model::fixed(kind)
                    .and_then(|m| solve_linear(&prep, m, weighted))
                    .ok_or_else(|| {
                        EstimateError::InvalidInput(format!(
                            "least-squares estimate: the {} fit could not be solved; the sizes \
                         are too close together",
                            kind.label()
                        ))
                    })?;
                (s, None)
            };
            let sigma = scale * sigma_of(solved.rss, n, kind.parameter_count(), weighted);
            cands.push(Candidate {
                kind,
                weighted,
                solved,
                sigma,
                bound,
            });
        }
    }

    // Keep the smaller-σ version of each kind (rule from memory of Eça & Hoekstra 2014;
    // unweighted on a tie is a project choice).
    let kept = |kind: FitKind| -> Option<&Candidate> {
        let u = cands.iter().find(|c| c.kind == kind && !c.weighted)?;
        let w = cands.iter().find(|c| c.kind == kind && c.weighted)?;
        Some(if w.sigma < u.sigma { w } else { u })
    };
    let missing = || EstimateError::NoOrder("least-squares estimate: a fit is missing".into());
    let free = kept(FitKind::Free).ok_or_else(missing)?;
    let first = kept(FitKind::First).ok_or_else(missing)?;
    let second = kept(FitKind::Second).ok_or_else(missing)?;
    let first_second = kept(FitKind::FirstSecond).ok_or_else(missing)?;
    let p = match free.solved.model {
        Model::Free(p) => p,
        _ => return Err(missing()),
    };

    // Selection by the free order (from memory of Eça & Hoekstra 2014).
    let smallest = |list: &[&'_ Candidate]| -> Option<usize> {
        let mut best: Option<usize> = None;
        for (i, c) in list.iter().enumerate() {
            match best {
                None => best = Some(i),
                Some(b) if c.sigma < list[b].sigma => best = Some(i),
                _ => {}
            }
        }
        best
    };
    let sel: &Candidate = if (0.5..2.0).contains(&p) {
        free
    } else if p >= 2.0 {
        let l = [second, first_second];
        l[smallest(&l).ok_or_else(missing)?]
    } else {
        let l = [first, second, first_second];
        l[smallest(&l).ok_or_else(missing)?]
    };

    let sigma = sel.sigma;
    let scatter_high = sigma >= data_range;
    // Fs = 1.25 when 0.5 ≤ p < 2.1 and σ < Δφ, else 3; U per mesh below (rules from memory of
    // Eça & Hoekstra 2014, method notes §4). Note the selection switches at p = 2, Fs at 2.1.
    let safety_factor = if (0.5..2.1).contains(&p) && !scatter_high {
        1.25
    } else {
        3.0
    };
    let mut per_mesh = Vec::with_capacity(n);
    for ((name, &x), &y) in names.iter().zip(&prep.x).zip(&prep.y) {
        let eps = (scale * sel.solved.error(x)).abs();
        let fit_value = phi_ref + scale * sel.solved.value(x);
        let resid = (scale * (y - sel.solved.value(x))).abs();
        let u = if scatter_high {
            3.0 * (sigma / data_range) * (eps + sigma + resid)
        } else {
            safety_factor * eps + sigma + resid
        };
        per_mesh.push(MeshUncertainty {
            mesh: name.clone(),
            fit: fit_value,
            uncertainty: u,
        });
    }
    let error_estimate = (scale * sel.solved.error(prep.x[0])).abs();

    // The order-2 floor for p ≥ 2, or the formal-order floor for p ≥ 0.5 when the formal order
    // is below 2 (project rules, docs/method.md §5).
    let (floor_order, floor_from, floor_rule) = if settings.formal_order < FLOOR_ORDER {
        (
            settings.formal_order,
            FORMAL_FLOOR_FROM_ORDER,
            GuardRule::FormalOrderFloor,
        )
    } else {
        (FLOOR_ORDER, FLOOR_FROM_ORDER, GuardRule::OrderTwoFloor)
    };
    let guard = if settings.guard && p >= floor_from {
        let floors = order_floors(&prep, safety_factor, floor_order);
        let published_uncertainty = per_mesh.first().map_or(0.0, |m| m.uncertainty);
        for (m, &f) in per_mesh.iter_mut().zip(&floors) {
            m.uncertainty = m.uncertainty.max(f);
        }
        let floor = floors.first().copied().unwrap_or(0.0);
        Some(OrderTwoFloor {
            rule: floor_rule,
            order: floor_order,
            safety_factor,
            floor,
            published_uncertainty,
            governs: floor > published_uncertainty,
        })
    } else {
        None
    };

    // Convergence class.
    let pattern = sign_pattern(phi);
    let mut warnings = Vec::new();
    let (convergence, convergence_basis) = if pattern.alternating {
        warnings.push(Warning::new(
            WARN_OSCILLATING,
            format!(
                "the differences between successive meshes alternate in sign over all {n} \
                 meshes: the convergence is oscillatory"
            ),
        ));
        (
            Convergence::Oscillatory,
            format!(
                "the signs of the differences between successive meshes alternate over all \
                 {n} meshes"
            ),
        )
    } else if p > 0.0 {
        let extra = if pattern.any_change {
            " (the differences change sign between some meshes)"
        } else {
            ""
        };
        (
            Convergence::Monotonic,
            format!("the fitted free order p = {p:.4} is positive{extra}"),
        )
    } else {
        (
            Convergence::Divergent,
            format!(
                "the fitted free order p = {p:.4} is negative: the differences grow with \
                 refinement"
            ),
        )
    };
    if pattern.any_change && !pattern.alternating {
        warnings.push(Warning::new(
            WARN_NONMONOTONIC,
            "the differences between successive meshes change sign between some meshes but \
             do not alternate: the class was decided by the fitted order",
        ));
    }
    if convergence == Convergence::Divergent {
        warnings.push(Warning::new(
            WARN_DIVERGENT,
            format!(
                "the fitted free order p = {p:.4} is negative: the values diverge with \
                 refinement and no numerical uncertainty can be claimed"
            ),
        ));
    }
    if p > 0.0 && p < 0.5 {
        warnings.push(Warning::new(
            WARN_LOW_ORDER,
            format!(
                "the fitted free order p = {p:.4} is below 0.5: the error estimate uses the \
                 {} fit and the safety factor is 3",
                sel.kind.label()
            ),
        ));
    }
    if let Some(hit) = free.bound {
        let msg = match hit {
            BoundHit::Setting(b) => format!(
                "the free-order fit has its minimum on the end p = {b} of the searched range \
                 [{}, {}]: the best order may lie outside it",
                settings.order_min, settings.order_max
            ),
            BoundHit::ExcludedBand(b) => format!(
                "the free-order fit has its minimum at p = {b}, the edge of the band \
                 |p| < {EXCLUDED_ORDER_HALF_WIDTH} left out of the search (there h^p cannot be \
                 told from a constant)"
            ),
        };
        warnings.push(Warning::new(WARN_ORDER_AT_BOUND, msg));
    }
    if scatter_high {
        warnings.push(Warning::new(
            WARN_SCATTER_EXCEEDS_RANGE,
            format!(
                "the standard deviation of the {} fit ({sigma:.4e}) is not below the data \
                 range ({data_range:.4e}): the scatter dominates and the uncertainty is \
                 inflated by 3 σ/Δφ",
                sel.kind.label()
            ),
        ));
    }

    if let Some(g) = guard.as_ref().filter(|g| g.governs) {
        let code = match g.rule {
            GuardRule::OrderTwoFloor => WARN_ORDER_TWO_FLOOR,
            GuardRule::FormalOrderFloor => WARN_FORMAL_ORDER_FLOOR,
        };
        warnings.push(Warning::new(
            code,
            format!(
                "the fitted free order p = {p:.4} is at least {floor_from}: the \
                 uncertainty of the finest mesh was raised from {:.4e} (published rules, {} fit) \
                 to {:.4e}, the Richardson estimate of the two finest meshes with order {} and \
                 Fs = {} (the {}, a project rule)",
                g.published_uncertainty,
                sel.kind.label(),
                g.floor,
                g.order,
                g.safety_factor,
                g.rule.label().replace('_', " ")
            ),
        ));
    }

    let fits: Vec<Fit> = cands.iter().map(|c| c.to_fit(&prep)).collect();
    let result = LeastSquares {
        fits,
        selected: FitChoice {
            kind: sel.kind,
            weighted: sel.weighted,
        },
        order: Some(p),
        data_range,
        error_estimate,
        safety_factor,
        per_mesh,
        convergence,
        convergence_basis,
        order_at_bound: free.bound.is_some(),
        guard,
        warnings,
    };
    if all_finite(&result) {
        Ok(result)
    } else {
        Err(invalid_numbers())
    }
}

/// The order-2 floor of every mesh, in input units: `Fs |φ_{i+1} − φ_i| / (r² − 1)` with
/// `r = h_{i+1}/h_i`, and on the coarsest mesh `Fs r² |φ_n − φ_{n−1}| / (r² − 1)` with
/// `r = h_n/h_{n−1}`. For an error `α h^q` with `q ≥ 2` the first is at least `Fs` times the
/// error of the finer mesh of the pair, the second `Fs` times that of the coarser one, since
/// `r^q − 1 ≥ r² − 1` and `r^q/(r^q − 1) ≤ r²/(r² − 1)` (analytic). `r² − 1` is formed as
/// `(r − 1)(r + 1)` to keep its digits when r is close to 1.
///
/// With another order q (the formal-order floor) the same holds for errors `α h^q'` with
/// `q' ≥ q`: `r^q − 1` is formed as `expm1(q ln r)`.
fn order_floors(prep: &Prepared, fs: f64, q: f64) -> Vec<f64> {
    let n = prep.n();
    let pair = |i: usize| -> (f64, f64) {
        let r = prep.x[i + 1] / prep.x[i];
        let diff = prep.scale * (prep.y[i + 1] - prep.y[i]).abs();
        #[allow(clippy::float_cmp)] // exactly the order-2 form, kept bit for bit
        let den = if q == FLOOR_ORDER {
            (r - 1.0) * (r + 1.0)
        } else {
            (q * r.ln()).exp_m1()
        };
        (r.powf(q), diff / den)
    };
    (0..n)
        .map(|i| {
            if i + 1 < n {
                fs * pair(i).1
            } else {
                let (rq, d) = pair(i - 1);
                fs * rq * d
            }
        })
        .collect()
}

fn all_finite(r: &LeastSquares) -> bool {
    let fits_ok = r.fits.iter().all(|f| {
        f.phi0.is_finite()
            && f.std_dev.is_finite()
            && f.coefficients.iter().all(|c| c.is_finite())
            && f.order.is_none_or(f64::is_finite)
    });
    let mesh_ok = r
        .per_mesh
        .iter()
        .all(|m| m.fit.is_finite() && m.uncertainty.is_finite());
    let guard_ok = r.guard.as_ref().is_none_or(|g| {
        g.floor.is_finite() && g.published_uncertainty.is_finite() && g.safety_factor.is_finite()
    });
    fits_ok
        && mesh_ok
        && guard_ok
        && r.order.is_none_or(f64::is_finite)
        && r.data_range.is_finite()
        && r.error_estimate.is_finite()
        && r.safety_factor.is_finite()
}

#[cfg(test)]
mod tests;
