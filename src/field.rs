//! Pointwise uncertainty over whole fields: the three-mesh estimate of
//! [`three_grid`](crate::estimate::three_grid) at every probe of a probe file, streamed and
//! parallel.
//!
//! Each of the three finest meshes gives one CSV file of probes (an id column and one column
//! per quantity). The files hold the same probes in the same order. [`assess_field`] reads the
//! three files in lockstep, in blocks, parses the blocks in parallel, estimates every point in
//! parallel chunks and writes the per-point results in the order of the input, so that memory
//! stays constant in the number of points.
//!
//! # Pipeline
//! One reader thread per file reads raw blocks of whole records (cut at the last line end
//! outside double quotes) a few blocks ahead. The calling thread gathers a round of blocks and
//! parses them in parallel (rayon) while the chunks lined up in the round before are estimated
//! and formatted in parallel; it then hands the formatted bytes in order to a writer thread and
//! lines the three files up row by row into the next chunks (shared blocks, no copying). Memory
//! is bounded by the read-ahead, two rounds of rows and the write-ahead.
//!
//! Blocks without double quotes go to a one-pass parser that reads the needed numbers in place
//! (`fast-float2`, the grammar of `str::parse::<f64>`) and takes only well-formed records; a
//! block with anything else (a blank line, a bad number, a wrong field count, a lone carriage
//! return) is read again by a splitter that words the errors, and blocks with quotes by the csv
//! crate. Numbers are written by Żmij (`zmij`), in the shortest form that reads back.
//!
//! # Writing
//! The writer writes into a temporary file beside the target, which is renamed into place only
//! when everything succeeded: on any error no file is left behind, and no reader ever sees a
//! half-written file. On Linux the bytes go to the disk directly (`O_DIRECT`, in aligned stages
//! of 2 MiB; the last partial stage through the page cache), which spares the processor the copy
//! of nearly a gigabyte into the page cache for ten million points; file systems without direct
//! I/O get ordinary writes. The file is not flushed (no fsync) before the rename: that flush of
//! the metadata and the last stage adds a wait on the disk for output that a rerun rebuilds. The
//! cost is durability, not atomicity: after a power loss or an operating-system crash within the
//! seconds after a run, the file may be missing or incomplete, so rerun the assessment after
//! such a crash.
//!
//! # Fast observed order
//! The refinement ratios are the same at every point, so the observed order depends on the one
//! number ε32/ε21. With equal ratios it is `p = ln|ε32/ε21| / ln r` exactly. With unequal
//! ratios the exact three-point fit of φ0 + α h^p gives
//! `ε32/ε21 = r21^p (r32^p − s)/(r21^p − s)`, whose logarithm `Y(p)` increases strictly with p
//! for both signs s; [`FastThreeGrid`] tabulates the inverse `p(Y)` once per field (4096
//! cells), reads p from the table by cubic Hermite interpolation, and adds one Newton step, kept
//! inside the cell, in the cells where the interpolant alone could be off by more than about
//! 1e-13 relative (checked at every cell's middle when the table is built). The extrapolated
//! value and the GCI use `r21^p − 1 = expm1(p ln r21)`, free of cancellation.
//!
//! The decisions the general solver makes at the ends of its search range, and the rare
//! oscillatory cases where its absolute-value form has a second root close to the first, are
//! reproduced by evaluating its residual the same way, and go to
//! [`three_grid::observed_order`] where in doubt. A property test checks the fast path against
//! [`three_grid::estimate`].
//!
//! # Per-point file (contract)
//! Header `id`, then for each column `c`: `c` (the finest mesh's value, as its file gives it),
//! `c_extrapolated`, `c_order`, `c_class`, `c_uncertainty` (absolute). Empty cells where a
//! figure does not exist (or overflows, near the largest doubles). Computed numbers are written in the shortest form that reads back to
//! the same double (plain notation from 1e-5 to 1e16, scientific notation outside). Ids are
//! written back trimmed, quoted where CSV needs it.
//!
//! # Summary (contract)
//! Per column: the count of each convergence class; the mean and median observed order over the
//! points that have one; the mean and largest relative uncertainty `U/|φ1|` over the points that
//! have an uncertainty and a nonzero finest value (divergent points and points with φ1 = 0 are
//! left out; no-change points count with 0). The median comes from a fixed histogram of
//! [`ORDER_BINS`] bins over `(0, order_max]`, each bin keeping its count and sum: the reported
//! median is the mean of the values in the bin holding the middle rank (the mean of two bins for
//! an even count), so it lies within one bin width (`order_max / ORDER_BINS`, 0.001 for the
//! default cap of 20) of the exact median, and is exact when the middle bin holds equal values.
//!
//! Numerical uncertainty is not model-test acceptance: defer to the applicable test codes and
//! licensed engineering judgment.

use crate::estimate::three_grid::{
    self, Governing, ThreeGridSettings, ROUNDOFF_ULPS, SCAN_LO, SCAN_STEPS,
};
use crate::estimate::{Convergence, EstimateError};
use crate::sink::PointSink;
use crate::warning::Warning;
use rayon::prelude::*;
use serde::Serialize;
use std::collections::VecDeque;
use std::fs::File;
use std::io::Read;
use std::path::{Path, PathBuf};
use std::sync::mpsc::{sync_channel, Receiver, SyncSender};
use std::sync::Arc;

/// Rows per parallel chunk by default.
pub const DEFAULT_CHUNK_ROWS: usize = 4_096;
/// Bytes per raw read block by default.
pub const DEFAULT_BLOCK_BYTES: usize = 256 << 10;
/// Bins of the order histogram behind the median (over `(0, order_max]`).
pub const ORDER_BINS: usize = 20_000;
/// Longest record accepted, in bytes (a longer one is almost surely an unbalanced quote).
pub const MAX_RECORD_BYTES: usize = 64 << 20;

/// Raw blocks each reader thread may hold ready.
const READ_AHEAD: usize = 8;
/// Formatted chunks the writer thread may hold ready.
const WRITE_AHEAD: usize = 16;
/// Intervals of the inverse-order table.
const TABLE_INTERVALS: usize = 4096;

/// One field of probes to assess: the plain form the study reader fills in.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldSpec {
    /// Name of the field (the key under `fields`).
    pub name: String,
    /// Name of the id column; `None` means the first column of each file.
    pub id: Option<String>,
    /// Quantities to estimate at every probe.
    pub columns: Vec<String>,
    /// The three finest meshes' probe files, finest first, paths already resolved.
    pub files: Vec<PathBuf>,
    /// Where to write the per-point results, if anywhere.
    pub write: Option<PathBuf>,
}

/// Tuning of the streaming (the defaults suit large fields; tests use small values).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FieldOptions {
    /// Rows per parallel chunk (at least 1).
    pub chunk_rows: usize,
    /// Bytes per raw read block (at least 1).
    pub block_bytes: usize,
}

impl Default for FieldOptions {
    fn default() -> Self {
        FieldOptions {
            chunk_rows: DEFAULT_CHUNK_ROWS,
            block_bytes: DEFAULT_BLOCK_BYTES,
        }
    }
}

/// Why a field could not be assessed. Data errors name the file, the 1-based line (the header
/// is line 1) and the column.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum FieldError {
    /// The field description or the mesh sizes are unusable.
    #[error("field `{field}`: {message}")]
    Spec {
        /// Field name.
        field: String,
        /// What is wrong.
        message: String,
    },
    /// A probe file could not be opened or read.
    #[error("cannot read {}: {source}", path.display())]
    Read {
        /// The file.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// A probe file has no header line.
    #[error("{}: the file is empty, a header line is needed", path.display())]
    Empty {
        /// The file.
        path: PathBuf,
    },
    /// The CSV text itself is broken.
    #[error("{}, line {line}: {message}", path.display())]
    Malformed {
        /// The file.
        path: PathBuf,
        /// Line.
        line: u64,
        /// What is wrong.
        message: String,
    },
    /// A column the field needs is not in the header.
    #[error("{}, line 1: no column `{column}` in the header", path.display())]
    MissingColumn {
        /// The file.
        path: PathBuf,
        /// The column.
        column: String,
    },
    /// A column the field needs appears twice in the header.
    #[error("{}, line 1: column `{column}` appears more than once in the header", path.display())]
    DuplicateColumn {
        /// The file.
        path: PathBuf,
        /// The column.
        column: String,
    },
    /// A row has fewer fields than the header.
    #[error(
        "{}, line {line}, column `{column}`: the row has {found} fields but the header has {expected}",
        path.display()
    )]
    ShortRow {
        /// The file.
        path: PathBuf,
        /// Line.
        line: u64,
        /// The first column the row lacks.
        column: String,
        /// Fields in the row.
        found: usize,
        /// Fields in the header.
        expected: usize,
    },
    /// A row has more fields than the header.
    #[error(
        "{}, line {line}: the row has {found} fields but the header has {expected} (extra fields after column `{column}`)",
        path.display()
    )]
    LongRow {
        /// The file.
        path: PathBuf,
        /// Line.
        line: u64,
        /// The header's last column.
        column: String,
        /// Fields in the row.
        found: usize,
        /// Fields in the header.
        expected: usize,
    },
    /// A value is not a number.
    #[error("{}, line {line}, column `{column}`: `{text}` is not a number", path.display())]
    NotANumber {
        /// The file.
        path: PathBuf,
        /// Line.
        line: u64,
        /// The column.
        column: String,
        /// The text found (shortened).
        text: String,
    },
    /// A value is infinite or not a number.
    #[error("{}, line {line}, column `{column}`: `{text}` is not a finite number", path.display())]
    NotFinite {
        /// The file.
        path: PathBuf,
        /// Line.
        line: u64,
        /// The column.
        column: String,
        /// The text found (shortened).
        text: String,
    },
    /// A probe id differs from the finest mesh's id in the same row.
    #[error("{0}")]
    IdMismatch(Box<IdMismatch>),
    /// One file has fewer data rows than another.
    #[error(
        "{}, line {line}: the file ends after {rows} data rows, but {} goes on at line {other_line}; every mesh must list the same probes",
        path.display(), other_path.display()
    )]
    RowCount {
        /// The shorter file.
        path: PathBuf,
        /// Its last line (the header line when it has no rows).
        line: u64,
        /// Data rows it has.
        rows: u64,
        /// A longer file.
        other_path: PathBuf,
        /// The first line there without a partner.
        other_line: u64,
    },
    /// The per-point file could not be written.
    #[error("cannot write {}: {source}", path.display())]
    Write {
        /// The target file.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
}

/// Where two probe files disagree on a probe id (see [`FieldError::IdMismatch`]).
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error(
    "{}, line {line}, column `{column}`: id `{found}` differs from id `{expected}` at line {expected_line} of {}; every mesh must list the same probes in the same order",
    path.display(), expected_path.display()
)]
pub struct IdMismatch {
    /// The file with the differing id.
    pub path: PathBuf,
    /// Its line.
    pub line: u64,
    /// The id column's name in that file.
    pub column: String,
    /// The id found (shortened).
    pub found: String,
    /// The finest mesh's id (shortened).
    pub expected: String,
    /// The finest mesh's file.
    pub expected_path: PathBuf,
    /// The line there.
    pub expected_line: u64,
}

/// Counts of the convergence classes over the points of one column.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
pub struct ClassCounts {
    /// Monotonic convergence.
    pub monotonic: u64,
    /// Oscillatory convergence.
    pub oscillatory: u64,
    /// Divergence (no uncertainty).
    pub divergent: u64,
    /// No change between meshes.
    pub no_change: u64,
}

/// Summary of one column of a field (contract: the serde form).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ColumnSummary {
    /// Column name.
    pub name: String,
    /// Points per convergence class.
    pub classes: ClassCounts,
    /// Mean observed order over the points that have one.
    pub mean_order: Option<f64>,
    /// Median observed order over the points that have one, within one histogram bin
    /// (`order_max / ORDER_BINS`).
    pub median_order: Option<f64>,
    /// Mean of `U/|φ1|` over points with an uncertainty and φ1 ≠ 0 (fraction).
    pub mean_relative: Option<f64>,
    /// Largest `U/|φ1|` over the same points (fraction).
    pub max_relative: Option<f64>,
    /// Points whose uncertainty fell back on the formal order with Fs = 3 (no observed order).
    #[serde(skip)]
    pub formal_order_points: u64,
    /// Points where half the range of the oscillation governed the uncertainty.
    #[serde(skip)]
    pub oscillation_range_points: u64,
}

/// Summary of a field (contract: the serde form).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FieldSummary {
    /// Field name.
    pub name: String,
    /// Number of probes.
    pub points: u64,
    /// The per-point file written, if any.
    pub written: Option<String>,
    /// One summary per column, in the order of the spec.
    pub columns: Vec<ColumnSummary>,
}

impl FieldSummary {
    /// Warnings a report should carry for this field, each attached to the field's name.
    pub fn warnings(&self) -> Vec<Warning> {
        let mut out = Vec::new();
        for c in &self.columns {
            if c.classes.divergent > 0 {
                out.push(
                    Warning::new(
                        "field_points_divergent",
                        format!(
                            "column `{}`: {} of {} points diverge, so no discretisation uncertainty can be claimed there",
                            c.name, c.classes.divergent, self.points
                        ),
                    )
                    .about(&self.name),
                );
            }
            if c.formal_order_points > 0 {
                out.push(
                    Warning::new(
                        "field_points_formal_order",
                        format!(
                            "column `{}`: {} points have no observed order; their uncertainty uses the formal order with safety factor 3",
                            c.name, c.formal_order_points
                        ),
                    )
                    .about(&self.name),
                );
            }
        }
        out
    }
}

/// The three-mesh estimate at one point, as [`three_grid::estimate`] gives it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PointEstimate {
    /// Convergence class.
    pub convergence: Convergence,
    /// Observed order, when it exists.
    pub observed_order: Option<f64>,
    /// Richardson-extrapolated value, when it exists.
    pub extrapolated: Option<f64>,
    /// Absolute fine-mesh uncertainty (`None` when divergent).
    pub uncertainty: Option<f64>,
    /// What governed the uncertainty (`None` when divergent).
    pub governing: Option<Governing>,
}

/// The three-mesh estimate specialised to fixed mesh sizes, for many points: the same
/// classes, orders, extrapolated values and uncertainties as [`three_grid::estimate`], without
/// a general root search per point.
#[derive(Debug, Clone)]
pub struct FastThreeGrid {
    r21: f64,
    r32: f64,
    fs: f64,
    /// ln r32 / ln r21: the monotonic/divergent threshold of ε32/ε21.
    threshold: f64,
    /// r21^pf − 1 and r32^pf − 1 for the formal-order fallback.
    fallback_den: [f64; 2],
    solver: OrderSolver,
}

impl FastThreeGrid {
    /// Prepares the estimate for sizes `h` (finest first) and `settings`.
    pub fn new(h: [f64; 3], settings: &ThreeGridSettings) -> Result<Self, EstimateError> {
        if h.iter().any(|v| !v.is_finite()) {
            return Err(EstimateError::InvalidInput("sizes must be finite".into()));
        }
        if !(h[0] > 0.0 && h[1] > h[0] && h[2] > h[1]) {
            return Err(EstimateError::InvalidInput(
                "sizes must be > 0 and increase from the finest to the coarsest mesh".into(),
            ));
        }
        if !(settings.order_max.is_finite() && settings.order_max > 0.0) {
            return Err(EstimateError::InvalidInput(format!(
                "the order cap must be finite and > 0 (got {})",
                settings.order_max
            )));
        }
        if !(settings.safety_factor.is_finite() && settings.safety_factor > 0.0) {
            return Err(EstimateError::InvalidInput(format!(
                "the safety factor must be finite and > 0 (got {})",
                settings.safety_factor
            )));
        }
        if !settings.formal_order.is_finite() || settings.formal_order <= 0.0 {
            return Err(EstimateError::InvalidInput(format!(
                "the formal order must be finite and > 0 (got {})",
                settings.formal_order
            )));
        }
        // The same operations as `three_grid::estimate`, so that every figure matches bit for bit
        // where the formulas are the same.
        let r21 = h[1] / h[0];
        let r32 = h[2] / h[1];
        let pf = settings.formal_order;
        Ok(FastThreeGrid {
            r21,
            r32,
            fs: settings.safety_factor,
            threshold: r32.ln() / r21.ln(),
            fallback_den: [r21.powf(pf) - 1.0, r32.powf(pf) - 1.0],
            solver: OrderSolver::new(r21, r32, settings.order_max),
        })
    }

    /// Refinement ratios [r21, r32].
    pub fn ratios(&self) -> [f64; 2] {
        [self.r21, self.r32]
    }

    /// Upper end of the order range (the histogram range of the summary).
    pub fn order_cap(&self) -> f64 {
        self.solver.hi_cap
    }

    /// The estimate at one point; `phi` finest first, finite.
    pub fn estimate(&self, phi: [f64; 3]) -> PointEstimate {
        let scale = phi.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        let tiny = ROUNDOFF_ULPS * f64::EPSILON * scale;
        let mut e21 = phi[1] - phi[0];
        let mut e32 = phi[2] - phi[1];
        if e21 != 0.0 && e21.abs() <= tiny {
            e21 = 0.0;
        }
        if e32 != 0.0 && e32.abs() <= tiny {
            e32 = 0.0;
        }
        let mut out = PointEstimate {
            convergence: Convergence::Divergent,
            observed_order: None,
            extrapolated: None,
            uncertainty: None,
            governing: None,
        };
        if e21 == 0.0 && e32 == 0.0 {
            out.convergence = Convergence::NoChange;
            out.extrapolated = Some(phi[0]);
            out.uncertainty = Some(0.0);
            out.governing = Some(Governing::NoChange);
            return out;
        }
        if e32 == 0.0 {
            return out;
        }
        let r = e21 / e32;
        out.convergence = if r >= 0.0 {
            if r == 0.0 || 1.0 / r > self.threshold {
                Convergence::Monotonic
            } else {
                Convergence::Divergent
            }
        } else if r > -1.0 {
            Convergence::Oscillatory
        } else {
            Convergence::Divergent
        };
        if out.convergence == Convergence::Divergent {
            return out;
        }
        let order = if e21 == 0.0 {
            None
        } else {
            self.solver.solve(e32 / e21)
        };
        match order {
            Some(p) => {
                // r21^p − 1 without cancellation; φ_ext = φ1 + (φ1 − φ2)/(r21^p − 1) is the
                // published (r21^p φ1 − φ2)/(r21^p − 1) rearranged.
                let d = r_pow_minus_one(self.solver.a * p);
                out.observed_order = Some(p);
                out.extrapolated = Some(phi[0] - e21 / d);
                let u_gci = self.fs * e21.abs() / d;
                let half_range = 0.5
                    * (phi.iter().fold(f64::NEG_INFINITY, |m, v| m.max(*v))
                        - phi.iter().fold(f64::INFINITY, |m, v| m.min(*v)));
                if out.convergence == Convergence::Oscillatory && half_range > u_gci {
                    out.uncertainty = Some(half_range);
                    out.governing = Some(Governing::OscillationRange);
                } else {
                    out.uncertainty = Some(u_gci);
                    out.governing = Some(Governing::Gci);
                }
            }
            None => {
                let u =
                    3.0 * (e21.abs() / self.fallback_den[0]).max(e32.abs() / self.fallback_den[1]);
                out.uncertainty = Some(u);
                out.governing = Some(Governing::FormalOrder);
            }
        }
        out
    }
}

/// `e^x − 1` for `x = p ln r21 > 0`, as the general estimator's `r21^p − 1`: `exp(x) − 1` for
/// x > 0.1, where the subtraction is exact and the result is within 6 ulp, the slower `expm1`
/// below, where `exp(x) − 1` would lose digits.
#[inline]
fn r_pow_minus_one(x: f64) -> f64 {
    if x > 0.1 {
        x.exp() - 1.0
    } else {
        x.exp_m1()
    }
}

/// ln of the exact fit's difference ratio, `Y(p) = ln(r21^p (r32^p − s)/(r21^p − s))`, and its
/// derivative, in forms that neither overflow nor cancel: with a = ln r21, b = ln r32,
/// s = +1: `Y = b p + ln(1 − e^(−b p)) − ln(1 − e^(−a p))`,
/// s = −1: `Y = b p + ln(1 + e^(−b p)) − ln(1 + e^(−a p))`.
fn y_of_p(a: f64, b: f64, same_sign: bool, p: f64) -> (f64, f64) {
    if same_sign {
        let ea = (-a * p).exp_m1();
        let eb = (-b * p).exp_m1();
        let y = b * p + (-eb).ln() - (-ea).ln();
        let dy = b + b * (1.0 + eb) / (-eb) - a * (1.0 + ea) / (-ea);
        (y, dy)
    } else {
        let ea = (-a * p).exp();
        let eb = (-b * p).exp();
        let y = b * p + eb.ln_1p() - ea.ln_1p();
        let dy = b - b * eb / (1.0 + eb) + a * ea / (1.0 + ea);
        (y, dy)
    }
}

/// Solves `Y(p) = y` for p in `[lo, hi]` (Y increasing, `Y(lo) ≤ y ≤ Y(hi)`) by Newton steps
/// kept inside a shrinking bracket, bisecting when a step leaves it.
fn solve_bracketed(a: f64, b: f64, same_sign: bool, y: f64, lo: f64, hi: f64, start: f64) -> f64 {
    let (mut l, mut h) = (lo, hi);
    let mut p = start.clamp(lo, hi);
    for _ in 0..200 {
        let (yp, dy) = y_of_p(a, b, same_sign, p);
        let f = yp - y;
        if f == 0.0 {
            return p;
        }
        if f < 0.0 {
            l = p;
        } else {
            h = p;
        }
        let mut next = p - f / dy;
        if !(next.is_finite() && next > l && next < h) {
            next = 0.5 * (l + h);
        }
        if (next - p).abs() <= 4.0 * f64::EPSILON * p.abs() || h - l <= 4.0 * f64::EPSILON * h {
            return next;
        }
        p = next;
    }
    p
}

/// The inverse `p(Y)` on a uniform grid of Y, with slopes for cubic Hermite interpolation.
#[derive(Debug, Clone)]
struct InverseTable {
    same_sign: bool,
    y0: f64,
    y1: f64,
    inv_dy: f64,
    /// p at each node.
    p: Vec<f64>,
    /// dy · dp/dY at each node.
    m: Vec<f64>,
    /// Cells where the interpolant alone is not accurate enough and a Newton step follows.
    polish: Vec<bool>,
}

impl InverseTable {
    fn new(a: f64, b: f64, same_sign: bool, lo: f64, hi: f64) -> Self {
        let y0 = y_of_p(a, b, same_sign, lo).0;
        let y1 = y_of_p(a, b, same_sign, hi).0;
        let n = TABLE_INTERVALS;
        let dy = (y1 - y0) / n as f64;
        let mut p = Vec::with_capacity(n + 1);
        let mut m = Vec::with_capacity(n + 1);
        let mut prev = lo;
        for j in 0..=n {
            let pj = if j == 0 {
                lo
            } else if j == n {
                hi
            } else {
                solve_bracketed(a, b, same_sign, y0 + dy * j as f64, prev, hi, prev)
            };
            let d = y_of_p(a, b, same_sign, pj).1;
            p.push(pj);
            m.push(dy / d);
            prev = pj;
        }
        // The cubic Hermite error peaks near the middle of a cell: where it exceeds about
        // 1e-13 relative (with a margin of 2), the cell gets a Newton step.
        let polish = (0..n)
            .map(|j| {
                let mid = 0.5 * (p[j] + p[j + 1]) + 0.125 * (m[j] - m[j + 1]);
                let exact = solve_bracketed(
                    a,
                    b,
                    same_sign,
                    y0 + dy * (j as f64 + 0.5),
                    p[j],
                    p[j + 1],
                    mid,
                );
                let err = 2.0 * (mid - exact).abs();
                // A NaN error (never expected) also asks for the Newton step.
                err.is_nan() || err > 2e-14 + 1e-13 * exact
            })
            .collect();
        InverseTable {
            same_sign,
            y0,
            y1,
            inv_dy: 1.0 / dy,
            p,
            m,
            polish,
        }
    }

    /// p with `Y(p) = y`, for y in (about) `[y0, y1]`.
    fn invert(&self, a: f64, b: f64, y: f64) -> f64 {
        let n = self.p.len() - 1;
        let t = ((y - self.y0) * self.inv_dy).clamp(0.0, n as f64);
        let j = (t as usize).min(n - 1);
        let u = t - j as f64;
        let (p0, p1, m0, m1) = (self.p[j], self.p[j + 1], self.m[j], self.m[j + 1]);
        let u2 = u * u;
        let u3 = u2 * u;
        let start = (2.0 * u3 - 3.0 * u2 + 1.0) * p0
            + (u3 - 2.0 * u2 + u) * m0
            + (-2.0 * u3 + 3.0 * u2) * p1
            + (u3 - u2) * m1;
        let start = start.clamp(p0, p1);
        if !self.polish[j] {
            return start;
        }
        let (yp, dy) = y_of_p(a, b, self.same_sign, start);
        let next = start - (yp - y) / dy;
        if next.is_finite() {
            next.clamp(p0, p1)
        } else {
            start
        }
    }
}

/// The observed-order solver specialised to fixed ratios. It returns the root that
/// `three_grid::observed_order` returns (or `None` where that finds none).
#[derive(Debug, Clone)]
struct OrderSolver {
    r21: f64,
    r32: f64,
    order_max: f64,
    a: f64,
    b: f64,
    lo: f64,
    /// Upper end of the scan, `max(order_max, 2 lo)`.
    hi_cap: f64,
    /// The scan's last grid point, computed as the scan computes it.
    hi_grid: f64,
    lo_a: f64,
    hi_a: f64,
    /// The general solver's q(p) at lo and hi_grid, for s = +1 and s = −1.
    q_lo: [f64; 2],
    q_hi: [f64; 2],
    /// Inverse tables for s = +1 and s = −1 (`None` for equal ratios).
    tables: Option<[InverseTable; 2]>,
}

impl OrderSolver {
    fn new(r21: f64, r32: f64, order_max: f64) -> Self {
        let lo = SCAN_LO;
        let hi = order_max.max(lo * 2.0);
        let hi_grid = lo + (hi - lo) * (SCAN_STEPS as f64) / (SCAN_STEPS as f64);
        let equal = (r21 - r32).abs() <= 1e-14 * r21;
        // q(p) exactly as the general solver computes it.
        let q = |p: f64, s: f64| {
            if equal {
                0.0
            } else {
                ((r21.powf(p) - s) / (r32.powf(p) - s)).ln()
            }
        };
        let a = r21.ln();
        let b = r32.ln();
        let tables = if equal {
            None
        } else {
            Some([
                InverseTable::new(a, b, true, lo, hi_grid),
                InverseTable::new(a, b, false, lo, hi_grid),
            ])
        };
        OrderSolver {
            r21,
            r32,
            order_max,
            a,
            b,
            lo,
            hi_cap: hi,
            hi_grid,
            lo_a: lo * a,
            hi_a: hi_grid * a,
            q_lo: [q(lo, 1.0), q(lo, -1.0)],
            q_hi: [q(hi_grid, 1.0), q(hi_grid, -1.0)],
            tables,
        }
    }

    /// The general solver, for the rare cases the fast path leaves to it.
    fn general(&self, e_ratio: f64) -> Option<f64> {
        three_grid::observed_order(self.r21, self.r32, e_ratio, self.order_max).ok()
    }

    /// The general solver's residual at a scan point, for s = −1.
    fn residual_osc(&self, p: f64, y: f64) -> f64 {
        let q = ((self.r21.powf(p) + 1.0) / (self.r32.powf(p) + 1.0)).ln();
        p * self.a - (y + q).abs()
    }

    /// Observed order for ε32/ε21 = `e_ratio`.
    fn solve(&self, e_ratio: f64) -> Option<f64> {
        if !(e_ratio.is_finite() && e_ratio != 0.0) {
            return None;
        }
        let y = e_ratio.abs().ln();
        if e_ratio > 0.0 {
            // Same sign: the residual increases with p, so a root lies in the scan range exactly
            // when the residual is ≤ 0 at its lower end and ≥ 0 at its upper end.
            let f_lo = self.lo_a - (y + self.q_lo[0]);
            let f_hi = self.hi_a - (y + self.q_hi[0]);
            if !(f_lo.is_finite() && f_hi.is_finite()) {
                return self.general(e_ratio);
            }
            if f_lo == 0.0 {
                return Some(self.lo);
            }
            if f_lo > 0.0 || f_hi < 0.0 {
                return None;
            }
            match &self.tables {
                None => Some((y / self.a).clamp(self.lo, self.hi_grid)),
                Some(t) => Some(t[0].invert(self.a, self.b, y)),
            }
        } else {
            // Opposite signs: the residual p a − |ln|e| + q(p)| is below zero at the lower end
            // whenever |e| > 1 (the oscillatory class); other cases go to the general solver.
            let f_lo = self.lo_a - (y + self.q_lo[1]).abs();
            if !(f_lo.is_finite() && f_lo < 0.0 && y > 0.0) {
                return self.general(e_ratio);
            }
            let t = match &self.tables {
                None => {
                    let f_hi = self.hi_a - y.abs();
                    return if f_hi < 0.0 {
                        None
                    } else {
                        Some((y / self.a).clamp(self.lo, self.hi_grid))
                    };
                }
                Some(t) => &t[1],
            };
            if self.b <= self.a {
                // q ≥ 0 and the residual increases: one root, found when f(hi) ≥ 0.
                let f_hi = self.hi_a - (y + self.q_hi[1]).abs();
                if !f_hi.is_finite() {
                    return self.general(e_ratio);
                }
                return if f_hi < 0.0 {
                    None
                } else {
                    Some(t.invert(self.a, self.b, y))
                };
            }
            // r32 > r21: q decreases, and beyond the true root p* the absolute value can make a
            // second root. The scan finds p* unless both lie in one scan cell.
            if y > t.y1 {
                return None;
            }
            let p = t.invert(self.a, self.b, y);
            let step = (self.hi_cap - self.lo) / SCAN_STEPS as f64;
            // |q'| < b − a/2, so ln|e| + q stays positive over the cell after p* when
            // p* a > (b − a/2)·step, and then the residual is positive at the cell's end.
            if p * self.a > (self.b - 0.5 * self.a) * step * (1.0 + 1e-9) {
                return Some(p);
            }
            let k = (((p - self.lo) / step).floor() as usize + 1).min(SCAN_STEPS);
            let end = self.lo + (self.hi_cap - self.lo) * (k as f64) / (SCAN_STEPS as f64);
            if end >= p && self.residual_osc(end, y) > 0.0 {
                Some(p)
            } else {
                self.general(e_ratio)
            }
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Reading

/// A block of whole records of one file.
struct RawBlock {
    bytes: Vec<u8>,
    /// Line of the block's first byte.
    first_line: u64,
    /// Line ends in the block (an upper bound of its records).
    newlines: usize,
    /// Whether the block holds a double quote (else the plain parser applies).
    quoted: bool,
}

/// Reads one file in blocks cut at record boundaries.
struct BlockReader {
    path: PathBuf,
    file: File,
    carry: Vec<u8>,
    next_line: u64,
    eof: bool,
    block_bytes: usize,
    first: Option<RawBlock>,
    /// Buffers of parsed blocks, handed back for reuse.
    pool: Arc<Pool>,
}

fn count_byte(bytes: &[u8], b: u8) -> usize {
    memchr::memchr_iter(b, bytes).count()
}

fn has_quote(bytes: &[u8]) -> bool {
    memchr::memchr(b'"', bytes).is_some()
}

/// Index of the last `\n` outside double quotes (the block starts outside quotes).
fn last_record_end(buf: &[u8]) -> Option<usize> {
    if !has_quote(buf) {
        return memchr::memrchr(b'\n', buf);
    }
    let mut quotes = count_byte(buf, b'"');
    for i in (0..buf.len()).rev() {
        match buf[i] {
            b'"' => quotes -= 1,
            b'\n' if quotes % 2 == 0 => return Some(i),
            _ => {}
        }
    }
    None
}

impl BlockReader {
    fn open(path: &Path, block_bytes: usize, pool: Arc<Pool>) -> Result<Self, FieldError> {
        let file = File::open(path).map_err(|source| FieldError::Read {
            path: path.to_path_buf(),
            source,
        })?;
        Ok(BlockReader {
            path: path.to_path_buf(),
            file,
            carry: Vec::new(),
            next_line: 1,
            eof: false,
            block_bytes: block_bytes.max(1),
            first: None,
            pool,
        })
    }

    fn fill(&mut self, buf: &mut Vec<u8>, want: usize) -> Result<(), FieldError> {
        if buf.len() >= want || self.eof {
            return Ok(());
        }
        let limit = (want - buf.len()) as u64;
        (&mut self.file)
            .take(limit)
            .read_to_end(buf)
            .map_err(|source| FieldError::Read {
                path: self.path.clone(),
                source,
            })?;
        if buf.len() < want {
            self.eof = true;
        }
        Ok(())
    }

    fn make_block(&mut self, bytes: Vec<u8>) -> RawBlock {
        let newlines = count_byte(&bytes, b'\n');
        let block = RawBlock {
            quoted: has_quote(&bytes),
            bytes,
            first_line: self.next_line,
            newlines,
        };
        self.next_line += newlines as u64;
        block
    }

    fn next_block(&mut self) -> Result<Option<RawBlock>, FieldError> {
        if let Some(b) = self.first.take() {
            return Ok(Some(b));
        }
        let mut buf = pooled(&self.pool, self.block_bytes.max(self.carry.len()) + 256);
        buf.append(&mut self.carry);
        let mut want = self.block_bytes.max(buf.len() + 1);
        loop {
            self.fill(&mut buf, want)?;
            if self.eof {
                if buf.is_empty() {
                    return Ok(None);
                }
                return Ok(Some(self.make_block(buf)));
            }
            if let Some(cut) = last_record_end(&buf) {
                self.carry = buf[cut + 1..].to_vec();
                buf.truncate(cut + 1);
                return Ok(Some(self.make_block(buf)));
            }
            if buf.len() >= MAX_RECORD_BYTES {
                return Err(FieldError::Malformed {
                    path: self.path.clone(),
                    line: self.next_line,
                    message: format!(
                        "a record longer than {} MiB: probably a double quote that is never closed",
                        MAX_RECORD_BYTES >> 20
                    ),
                });
            }
            want = buf.len().saturating_mul(2);
        }
    }

    /// Reads the header record; the rest of the first block is kept for `next_block`.
    fn read_header(&mut self) -> Result<Vec<String>, FieldError> {
        let Some(mut block) = self.next_block()? else {
            return Err(FieldError::Empty {
                path: self.path.clone(),
            });
        };
        if block.bytes.starts_with(b"\xEF\xBB\xBF") {
            block.bytes.drain(..3);
        }
        let mut rdr = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .from_reader(&block.bytes[..]);
        let mut rec = csv::ByteRecord::new();
        let got = rdr
            .read_byte_record(&mut rec)
            .map_err(|e| FieldError::Malformed {
                path: self.path.clone(),
                line: 1,
                message: e.to_string(),
            })?;
        if !got {
            return Err(FieldError::Empty {
                path: self.path.clone(),
            });
        }
        let header = rec
            .iter()
            .map(|f| String::from_utf8_lossy(f.trim_ascii()).into_owned())
            .collect();
        let after = rdr.position();
        let start = (after.byte() as usize).min(block.bytes.len());
        let rest = block.bytes[start..].to_vec();
        self.first = Some(RawBlock {
            newlines: count_byte(&rest, b'\n'),
            quoted: has_quote(&rest),
            first_line: after.line(),
            bytes: rest,
        });
        Ok(header)
    }
}

fn run_reader(mut reader: BlockReader, tx: SyncSender<Result<RawBlock, FieldError>>) {
    loop {
        match reader.next_block() {
            Ok(Some(b)) => {
                if tx.send(Ok(b)).is_err() {
                    return;
                }
            }
            Ok(None) => return,
            Err(e) => {
                let _ = tx.send(Err(e));
                return;
            }
        }
    }
}

/// Where the needed columns stand in one file.
struct Layout {
    path: PathBuf,
    header: Vec<String>,
    id_idx: usize,
    col_idx: Vec<usize>,
    /// Keep the values' text (the finest mesh's, written back as given).
    keep_text: bool,
    /// What each field of a record is, in header order (for the fast parser).
    roles: Vec<Role>,
}

/// What one field of a record is to the fast parser.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Role {
    /// Not needed.
    Skip,
    /// The probe id.
    Id,
    /// The value of needed column `c` (index into the spec's columns).
    Value(usize),
}

fn roles(fields: usize, id_idx: usize, col_idx: &[usize]) -> Vec<Role> {
    let mut r = vec![Role::Skip; fields];
    if let Some(x) = r.get_mut(id_idx) {
        *x = Role::Id;
    }
    for (c, &i) in col_idx.iter().enumerate() {
        if let Some(x) = r.get_mut(i) {
            *x = Role::Value(c);
        }
    }
    r
}

impl Layout {
    fn new(path: &Path, header: Vec<String>, spec: &FieldSpec) -> Result<Self, FieldError> {
        let find = |name: &str| -> Result<usize, FieldError> {
            let mut hits = header.iter().enumerate().filter(|(_, h)| *h == name);
            match (hits.next(), hits.next()) {
                (Some((i, _)), None) => Ok(i),
                (Some(_), Some(_)) => Err(FieldError::DuplicateColumn {
                    path: path.to_path_buf(),
                    column: name.to_string(),
                }),
                _ => Err(FieldError::MissingColumn {
                    path: path.to_path_buf(),
                    column: name.to_string(),
                }),
            }
        };
        let id_idx = match &spec.id {
            Some(name) => find(name)?,
            None => 0,
        };
        let col_idx = spec
            .columns
            .iter()
            .map(|c| {
                let i = find(c)?;
                if i == id_idx {
                    return Err(FieldError::Spec {
                        field: spec.name.clone(),
                        message: format!(
                            "column `{c}` is the id column of {}; list only quantities under `columns`",
                            path.display()
                        ),
                    });
                }
                Ok(i)
            })
            .collect::<Result<Vec<_>, _>>()?;
        Ok(Layout {
            path: path.to_path_buf(),
            roles: roles(header.len(), id_idx, &col_idx),
            header,
            id_idx,
            col_idx,
            keep_text: false,
        })
    }
}

/// Parsed rows of one file: ids, values (row-major, one per needed column) and lines.
#[derive(Debug, Default)]
struct Rows {
    ncols: usize,
    ids: Vec<u8>,
    id_end: Vec<usize>,
    /// The values' trimmed text, when the layout keeps it (row-major like `values`).
    texts: Vec<u8>,
    text_end: Vec<usize>,
    values: Vec<f64>,
    /// Line of each row; empty when row `i` stands on line `first_line + i` (no blank lines).
    lines: Vec<u64>,
    first_line: u64,
    /// Every id is plain (read by the one-pass parser: no quote, separator, line end or outer
    /// blank), so it is written back without the check for quoting.
    plain_ids: bool,
}

impl Rows {
    fn new(ncols: usize, rows: usize) -> Self {
        Rows {
            ncols,
            ids: Vec::with_capacity(rows * 8),
            id_end: Vec::with_capacity(rows),
            texts: Vec::new(),
            text_end: Vec::new(),
            values: Vec::with_capacity(rows * ncols),
            lines: Vec::new(),
            first_line: 0,
            plain_ids: false,
        }
    }

    fn len(&self) -> usize {
        self.id_end.len()
    }

    /// Line of row `i`.
    fn line(&self, i: usize) -> u64 {
        match self.lines.get(i) {
            Some(&l) => l,
            None => self.first_line + i as u64,
        }
    }

    /// Empties the rows for reuse, keeping the allocations.
    fn reset(&mut self, ncols: usize) {
        self.ncols = ncols;
        self.ids.clear();
        self.id_end.clear();
        self.texts.clear();
        self.text_end.clear();
        self.values.clear();
        self.lines.clear();
        self.first_line = 0;
        self.plain_ids = false;
    }

    fn id(&self, i: usize) -> &[u8] {
        let start = if i == 0 { 0 } else { self.id_end[i - 1] };
        &self.ids[start..self.id_end[i]]
    }

    fn value(&self, i: usize, c: usize) -> f64 {
        self.values[i * self.ncols + c]
    }

    /// The text of value `c` of row `i`, when kept.
    fn text(&self, i: usize, c: usize) -> Option<&[u8]> {
        let k = i * self.ncols + c;
        let end = *self.text_end.get(k)?;
        let start = if k == 0 { 0 } else { self.text_end[k - 1] };
        Some(&self.texts[start..end])
    }
}

/// Text for a message: lossy UTF-8, at most 40 characters.
fn shown(bytes: &[u8]) -> String {
    let s = String::from_utf8_lossy(bytes);
    if s.chars().count() > 40 {
        let mut t: String = s.chars().take(40).collect();
        t.push('…');
        t
    } else {
        s.into_owned()
    }
}

/// Checks one record's field count and appends its id and values; `field(i)` gives field i.
fn push_row<'b>(
    layout: &Layout,
    rows: &mut Rows,
    line: u64,
    count: usize,
    field: impl Fn(usize) -> &'b [u8],
) -> Result<(), FieldError> {
    let expected = layout.header.len();
    if count != expected {
        return Err(if count < expected {
            FieldError::ShortRow {
                path: layout.path.clone(),
                line,
                column: layout.header[count].clone(),
                found: count,
                expected,
            }
        } else {
            FieldError::LongRow {
                path: layout.path.clone(),
                line,
                column: layout.header[expected - 1].clone(),
                found: count,
                expected,
            }
        });
    }
    rows.ids
        .extend_from_slice(field(layout.id_idx).trim_ascii());
    rows.id_end.push(rows.ids.len());
    rows.lines.push(line);
    for &ci in &layout.col_idx {
        let text = field(ci).trim_ascii();
        // The same grammar as `str::parse::<f64>` (checked by a test), straight from the bytes.
        let v = fast_float2::parse::<f64, _>(text).ok();
        match v {
            Some(v) if v.is_finite() => {
                rows.values.push(v);
                if layout.keep_text {
                    rows.texts.extend_from_slice(text);
                    rows.text_end.push(rows.texts.len());
                }
            }
            Some(_) => {
                return Err(FieldError::NotFinite {
                    path: layout.path.clone(),
                    line,
                    column: layout.header[ci].clone(),
                    text: shown(text),
                })
            }
            None => {
                return Err(FieldError::NotANumber {
                    path: layout.path.clone(),
                    line,
                    column: layout.header[ci].clone(),
                    text: shown(text),
                })
            }
        }
    }
    Ok(())
}

/// Parses a block without double quotes by splitting at commas and line ends, which is what
/// CSV means for such text. Gives `None` when a lone carriage return (a record end to the CSV
/// reader) makes the general path the safer one.
// Kept out of line so that profiles show parsing and estimating apart.
#[inline(never)]
fn parse_plain(
    layout: &Layout,
    block: &RawBlock,
    mut rows: Rows,
) -> Result<Option<Rows>, FieldError> {
    let bytes = &block.bytes[..];
    let len = bytes.len();
    let mut fields: Vec<(usize, usize)> = Vec::with_capacity(layout.header.len() + 1);
    let mut line = block.first_line;
    let mut start = 0;
    // Every comma, line feed and carriage return, found by a vectorised search.
    let mut hits = memchr::memchr3_iter(b',', b'\n', b'\r', bytes);
    loop {
        let hit = hits.next();
        let (end, next) = match hit {
            None if start >= len && fields.is_empty() => break,
            None => (len, len),
            Some(i) => match bytes[i] {
                b',' => {
                    fields.push((start, i));
                    start = i + 1;
                    continue;
                }
                b'\n' => (i, i + 1),
                _ if i + 1 == len => (i, len),
                _ if bytes[i + 1] == b'\n' => {
                    hits.next(); // the line feed of the CRLF
                    (i, i + 2)
                }
                _ => return Ok(None),
            },
        };
        let this_line = line;
        line += 1;
        if !(end == start && fields.is_empty()) {
            // (a blank line is skipped, as the CSV reader skips it)
            fields.push((start, end));
            push_row(layout, &mut rows, this_line, fields.len(), |k| {
                let (a, b) = fields[k];
                &bytes[a..b]
            })?;
            fields.clear();
        }
        start = next;
        if hit.is_none() {
            break;
        }
    }
    Ok(Some(rows))
}

/// Field padding the fast parser skips: what `trim_ascii` trims inside a field of a record
/// without quotes (line feeds and carriage returns end the field there).
fn is_pad(c: u8) -> bool {
    c == b' ' || c == b'\t' || c == b'\x0C'
}

/// The fast parser for blocks without double quotes: one pass over each record that parses the
/// needed values in place (`parse_partial`) and walks the other fields byte by byte. It takes
/// only well-formed records (the right field count, finite numbers, LF or CRLF line ends, no
/// blank lines) and gives `false` at anything else, leaving the block to [`parse_plain`],
/// which reads the same records the same way and words the errors. `rows` is then stale.
// Kept out of line so that profiles show parsing and estimating apart.
#[inline(never)]
fn parse_fast(layout: &Layout, block: &RawBlock, rows: &mut Rows) -> bool {
    let bytes = &block.bytes[..];
    let len = bytes.len();
    let roles = &layout.roles[..];
    let nf = roles.len();
    let ncols = rows.ncols;
    // The needed values' text, by column, for the record at hand.
    let mut spans = [(0usize, 0usize); 8];
    // (A layout always has an id and a value field.)
    if ncols > spans.len() || nf < 2 {
        return false;
    }
    let mut pos = 0;
    // Row i stands on line first_line + i: no blank lines are taken here.
    rows.first_line = block.first_line;
    while pos < len {
        let base = rows.values.len();
        rows.values.resize(base + ncols, 0.0);
        let mut id = (pos, pos);
        let mut f = 0;
        loop {
            match roles[f] {
                Role::Value(c) => {
                    let mut a = pos;
                    while a < len && is_pad(bytes[a]) {
                        a += 1;
                    }
                    let Ok((v, n)) = fast_float2::parse_partial::<f64, _>(&bytes[a..]) else {
                        return false;
                    };
                    if !v.is_finite() {
                        return false;
                    }
                    rows.values[base + c] = v;
                    spans[c] = (a, a + n);
                    pos = a + n;
                    while pos < len && is_pad(bytes[pos]) {
                        pos += 1;
                    }
                }
                role => {
                    let a = pos;
                    while pos < len && !matches!(bytes[pos], b',' | b'\n' | b'\r') {
                        pos += 1;
                    }
                    if role == Role::Id {
                        let (mut s, mut e) = (a, pos);
                        while s < e && is_pad(bytes[s]) {
                            s += 1;
                        }
                        while e > s && is_pad(bytes[e - 1]) {
                            e -= 1;
                        }
                        id = (s, e);
                    }
                }
            }
            // `pos` stands on the field's end.
            let end_of_record = match bytes.get(pos) {
                None => true,
                Some(b',') => {
                    pos += 1;
                    false
                }
                Some(b'\n') => {
                    pos += 1;
                    true
                }
                Some(b'\r') if bytes.get(pos + 1) == Some(&b'\n') => {
                    pos += 2;
                    true
                }
                Some(b'\r') if pos + 1 == len => {
                    pos += 1;
                    true
                }
                _ => return false,
            };
            f += 1;
            if end_of_record {
                break;
            }
            if f == nf {
                return false; // too many fields
            }
        }
        if f != nf {
            return false; // too few fields, or a blank line
        }
        rows.ids.extend_from_slice(&bytes[id.0..id.1]);
        rows.id_end.push(rows.ids.len());
        if layout.keep_text {
            for &(a, b) in &spans[..ncols] {
                rows.texts.extend_from_slice(&bytes[a..b]);
                rows.text_end.push(rows.texts.len());
            }
        }
    }
    true
}

fn parse_block(layout: &Layout, block: &RawBlock, pool: &RowsPool) -> Result<Rows, FieldError> {
    let ncols = layout.col_idx.len();
    if !block.quoted {
        let mut rows = pooled_rows(pool, ncols, block.newlines + 1);
        if parse_fast(layout, block, &mut rows) {
            rows.plain_ids = true;
            return Ok(rows);
        }
        rows.reset(ncols);
        if let Some(rows) = parse_plain(layout, block, rows)? {
            return Ok(rows);
        }
    }
    let mut rows = pooled_rows(pool, ncols, block.newlines + 1);
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(&block.bytes[..]);
    let mut rec = csv::ByteRecord::new();
    loop {
        match rdr.read_byte_record(&mut rec) {
            Ok(true) => {}
            Ok(false) => break,
            Err(e) => {
                let line = e
                    .position()
                    .map_or(block.first_line, |p| block.first_line + p.line() - 1);
                return Err(FieldError::Malformed {
                    path: layout.path.clone(),
                    line,
                    message: e.to_string(),
                });
            }
        }
        // csv reports the position where it started, before any blank lines it skipped.
        let line = match rec.position() {
            Some(p) => {
                let from = (p.byte() as usize).min(block.bytes.len());
                let skipped = block.bytes[from..]
                    .iter()
                    .take_while(|&&c| c == b'\n' || c == b'\r')
                    .filter(|&&c| c == b'\n')
                    .count() as u64;
                block.first_line + p.line() - 1 + skipped
            }
            None => block.first_line,
        };
        push_row(layout, &mut rows, line, rec.len(), |k| {
            rec.get(k).unwrap_or_default()
        })?;
    }
    Ok(rows)
}

/// Parsed-row buffers handed back for reuse.
type RowsPool = std::sync::Mutex<Vec<Rows>>;

/// Row buffers kept for reuse at most (about two rounds of blocks).
const ROWS_POOL_MAX: usize = 6 * READ_AHEAD;

/// Rows for a block of about `hint` records, from the pool when it has some.
fn pooled_rows(pool: &RowsPool, ncols: usize, hint: usize) -> Rows {
    match pool.lock().ok().and_then(|mut p| p.pop()) {
        Some(mut r) => {
            r.reset(ncols);
            r
        }
        None => Rows::new(ncols, hint),
    }
}

/// Hands the blocks of finished chunks back to the pool where no one else holds them.
fn recycle(pool: &RowsPool, chunks: &mut Vec<[Vec<Segment>; 3]>) {
    let Ok(mut p) = pool.lock() else {
        chunks.clear();
        return;
    };
    for chunk in chunks.drain(..) {
        for segs in chunk {
            for (rows, _, _) in segs {
                if p.len() < ROWS_POOL_MAX {
                    if let Ok(r) = Arc::try_unwrap(rows) {
                        p.push(r);
                    }
                }
            }
        }
    }
}

/// Rows `start..end` of a parsed block, shared between the queue and the chunks.
type Segment = (Arc<Rows>, usize, usize);

/// Parsed rows of one file waiting to be lined up with the other files.
#[derive(Default)]
struct Queue {
    blocks: VecDeque<Arc<Rows>>,
    /// Rows of the front block already taken.
    front: usize,
    pending: usize,
    /// No more raw blocks will come.
    eof: bool,
    /// Line of the last row taken (the header line before any).
    last_line: u64,
}

impl Queue {
    fn push(&mut self, rows: Rows) {
        if rows.len() > 0 {
            self.pending += rows.len();
            self.blocks.push_back(Arc::new(rows));
        }
    }

    fn next_line(&self) -> Option<u64> {
        self.blocks.front().map(|b| b.line(self.front))
    }

    /// The next `n` rows (fewer when the queue runs short), without copying.
    fn take(&mut self, n: usize) -> Vec<Segment> {
        let mut segs = Vec::new();
        let mut left = n;
        while left > 0 {
            let Some(front) = self.blocks.front() else {
                break;
            };
            let k = left.min(front.len() - self.front);
            segs.push((Arc::clone(front), self.front, self.front + k));
            self.front += k;
            left -= k;
            if self.front == front.len() {
                self.blocks.pop_front();
                self.front = 0;
            }
        }
        self.pending -= n - left;
        if let Some((rows, _, end)) = segs.last() {
            self.last_line = rows.line(end - 1);
        }
        segs
    }
}

/// Walks the rows of a list of segments.
struct Cursor<'a> {
    segs: &'a [Segment],
    seg: usize,
    row: usize,
}

impl<'a> Cursor<'a> {
    fn new(segs: &'a [Segment]) -> Self {
        Cursor {
            segs,
            seg: 0,
            row: segs.first().map_or(0, |s| s.1),
        }
    }

    fn next_row(&mut self) -> Option<(&'a Rows, usize)> {
        loop {
            let s = self.segs.get(self.seg)?;
            if self.row < s.2 {
                self.row += 1;
                return Some((&s.0, self.row - 1));
            }
            self.seg += 1;
            self.row = self.segs.get(self.seg).map_or(0, |s| s.1);
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Summaries

#[derive(Debug, Clone, Default)]
struct ColumnAcc {
    classes: ClassCounts,
    order_n: u64,
    order_sum: f64,
    /// Count and sum of the orders in each histogram bin (the field's accumulator only).
    hist_n: Vec<u64>,
    hist_sum: Vec<f64>,
    /// Orders of a chunk, not yet binned.
    orders: Vec<f64>,
    rel_n: u64,
    rel_sum: f64,
    rel_max: f64,
    formal: u64,
    osc_range: u64,
}

impl ColumnAcc {
    /// Adds one point. Its order is kept in `orders` until [`ColumnAcc::merge`] bins it, so that
    /// a chunk's accumulator stays small (no histogram per chunk).
    fn add(&mut self, e: &PointEstimate, phi1: f64) {
        match e.convergence {
            Convergence::Monotonic => self.classes.monotonic += 1,
            Convergence::Oscillatory => self.classes.oscillatory += 1,
            Convergence::Divergent => self.classes.divergent += 1,
            Convergence::NoChange => self.classes.no_change += 1,
        }
        match e.governing {
            Some(Governing::FormalOrder) => self.formal += 1,
            Some(Governing::OscillationRange) => self.osc_range += 1,
            _ => {}
        }
        if let Some(p) = e.observed_order {
            self.order_n += 1;
            self.order_sum += p;
            self.orders.push(p);
        }
        if let Some(u) = e.uncertainty {
            if phi1 != 0.0 {
                let rel = u / phi1.abs();
                if rel.is_finite() {
                    self.rel_n += 1;
                    self.rel_sum += rel;
                    self.rel_max = self.rel_max.max(rel);
                }
            }
        }
    }

    /// Adds a chunk's figures and bins its orders (`bin_scale` bins per unit of order).
    fn merge(&mut self, o: &ColumnAcc, bin_scale: f64) {
        self.classes.monotonic += o.classes.monotonic;
        self.classes.oscillatory += o.classes.oscillatory;
        self.classes.divergent += o.classes.divergent;
        self.classes.no_change += o.classes.no_change;
        self.order_n += o.order_n;
        self.order_sum += o.order_sum;
        if !o.orders.is_empty() && self.hist_n.is_empty() {
            self.hist_n = vec![0; ORDER_BINS];
            self.hist_sum = vec![0.0; ORDER_BINS];
        }
        for &p in &o.orders {
            let k = ((p * bin_scale) as usize).min(ORDER_BINS - 1);
            self.hist_n[k] += 1;
            self.hist_sum[k] += p;
        }
        self.rel_n += o.rel_n;
        self.rel_sum += o.rel_sum;
        self.rel_max = self.rel_max.max(o.rel_max);
        self.formal += o.formal;
        self.osc_range += o.osc_range;
    }

    /// Mean of the values in the bin holding 0-based rank `rank`.
    fn value_at_rank(&self, rank: u64) -> Option<f64> {
        let mut seen = 0u64;
        for (n, s) in self.hist_n.iter().zip(&self.hist_sum) {
            seen += n;
            if *n > 0 && seen > rank {
                return Some(s / *n as f64);
            }
        }
        None
    }

    fn finish(&self, name: &str) -> ColumnSummary {
        let finite = |v: f64| if v.is_finite() { Some(v) } else { None };
        let median = if self.order_n == 0 {
            None
        } else {
            let lo = self.value_at_rank((self.order_n - 1) / 2);
            let hi = self.value_at_rank(self.order_n / 2);
            match (lo, hi) {
                (Some(a), Some(b)) => finite(0.5 * (a + b)),
                _ => None,
            }
        };
        ColumnSummary {
            name: name.to_string(),
            classes: self.classes,
            mean_order: if self.order_n > 0 {
                finite(self.order_sum / self.order_n as f64)
            } else {
                None
            },
            median_order: median,
            mean_relative: if self.rel_n > 0 {
                finite(self.rel_sum / self.rel_n as f64)
            } else {
                None
            },
            max_relative: if self.rel_n > 0 {
                finite(self.rel_max)
            } else {
                None
            },
            formal_order_points: self.formal,
            oscillation_range_points: self.osc_range,
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Writing

/// Appends a number in the shortest form that reads back to the same double (Żmij, `zmij`),
/// plain from 1e-5 to below 1e16 and scientific outside (`1e16`, `2.5e-7`: no `+` in the
/// exponent), without a trailing `.0`. `v` is finite (the callers see to it; other values give
/// unspecified text, never a panic).
fn push_num(buf: &mut Vec<u8>, v: f64) {
    let mut b = zmij::Buffer::new();
    let text = b.format_finite(v).as_bytes();
    let text = text.strip_suffix(b".0").unwrap_or(text);
    let plus = if v.abs() >= 1e15 {
        text.iter().position(|&c| c == b'+')
    } else {
        None
    };
    match plus {
        Some(i) => {
            buf.extend_from_slice(&text[..i]);
            buf.extend_from_slice(&text[i + 1..]);
        }
        None => buf.extend_from_slice(text),
    }
}

/// Appends a figure, or nothing (an empty cell) where it does not exist or is not finite
/// (an overflow near the largest doubles).
fn push_opt(buf: &mut Vec<u8>, v: Option<f64>) {
    if let Some(v) = v.filter(|v| v.is_finite()) {
        push_num(buf, v);
    }
}

/// Whether two ids are equal: a byte loop, cheaper than a `memcmp` call for ids of a few bytes.
#[inline]
fn same_id(a: &[u8], b: &[u8]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x == y)
}

/// Appends one CSV field, quoted when it needs to be.
fn push_field(buf: &mut Vec<u8>, text: &[u8]) {
    let needs = text
        .iter()
        .any(|&c| c == b',' || c == b'"' || c == b'\n' || c == b'\r')
        || text.first().is_some_and(|c| c.is_ascii_whitespace())
        || text.last().is_some_and(|c| c.is_ascii_whitespace());
    if needs {
        buf.push(b'"');
        for &c in text {
            if c == b'"' {
                buf.push(b'"');
            }
            buf.push(c);
        }
        buf.push(b'"');
    } else {
        buf.extend_from_slice(text);
    }
}

fn header_bytes(columns: &[String]) -> Vec<u8> {
    let mut buf = b"id".to_vec();
    for c in columns {
        for suffix in ["", "_extrapolated", "_order", "_class", "_uncertainty"] {
            buf.push(b',');
            push_field(&mut buf, format!("{c}{suffix}").as_bytes());
        }
    }
    buf.push(b'\n');
    buf
}

/// The most bytes the per-point rows of `segs` can take, so that the output buffer is never
/// grown (and copied) while a chunk is written: an id quoted with every byte doubled, and per
/// column the finest value's text or a number, three numbers (at most 24 bytes each), a
/// class label and the separators.
fn out_bound(segs: &[Segment], ncols: usize) -> usize {
    let mut bytes = 0;
    for (rows, a, b) in segs {
        if a < b {
            let span = |ends: &[usize], lo: usize, hi: usize| {
                let start = if lo == 0 { 0 } else { ends[lo - 1] };
                ends[hi - 1] - start
            };
            let rows_n = b - a;
            bytes += 2 * span(&rows.id_end, *a, *b) + 3 * rows_n;
            if rows.text_end.is_empty() {
                bytes += 24 * ncols * rows_n;
            } else {
                bytes += span(&rows.text_end, a * ncols, b * ncols);
            }
            bytes += (4 * 24 + 16) * ncols * rows_n;
        }
    }
    bytes
}

struct Computed {
    bytes: Vec<u8>,
    accs: Vec<ColumnAcc>,
}

// Kept out of line so that profiles show parsing and estimating apart.
#[inline(never)]
fn compute_chunk(
    fast: &FastThreeGrid,
    layouts: &[Layout],
    chunk: &[Vec<Segment>; 3],
    ncols: usize,
    write: Option<&Pool>,
) -> Result<Computed, FieldError> {
    let n: usize = chunk[0].iter().map(|s| s.2 - s.1).sum();
    let mut accs: Vec<ColumnAcc> = (0..ncols)
        .map(|_| ColumnAcc {
            orders: Vec::with_capacity(n),
            ..ColumnAcc::default()
        })
        .collect();
    let mut buf = match write {
        Some(pool) => pooled(pool, out_bound(&chunk[0], ncols)),
        None => Vec::new(),
    };
    let write = write.is_some();
    let mut cur = [
        Cursor::new(&chunk[0]),
        Cursor::new(&chunk[1]),
        Cursor::new(&chunk[2]),
    ];
    for _ in 0..n {
        let (Some((b0, i0)), Some((b1, i1)), Some((b2, i2))) =
            (cur[0].next_row(), cur[1].next_row(), cur[2].next_row())
        else {
            break;
        };
        let id = b0.id(i0);
        for (f, (b, i)) in [(1, (b1, i1)), (2, (b2, i2))] {
            if !same_id(b.id(i), id) {
                let l = &layouts[f];
                return Err(FieldError::IdMismatch(Box::new(IdMismatch {
                    path: l.path.clone(),
                    line: b.line(i),
                    column: l.header[l.id_idx].clone(),
                    found: shown(b.id(i)),
                    expected: shown(id),
                    expected_path: layouts[0].path.clone(),
                    expected_line: b0.line(i0),
                })));
            }
        }
        if write {
            if b0.plain_ids {
                buf.extend_from_slice(id);
            } else {
                push_field(&mut buf, id);
            }
        }
        for (c, acc) in accs.iter_mut().enumerate() {
            let phi = [b0.value(i0, c), b1.value(i1, c), b2.value(i2, c)];
            let e = fast.estimate(phi);
            acc.add(&e, phi[0]);
            if write {
                buf.push(b',');
                match b0.text(i0, c) {
                    Some(t) => buf.extend_from_slice(t),
                    None => push_num(&mut buf, phi[0]),
                }
                buf.push(b',');
                push_opt(&mut buf, e.extrapolated);
                buf.push(b',');
                push_opt(&mut buf, e.observed_order);
                buf.push(b',');
                buf.extend_from_slice(e.convergence.label().as_bytes());
                buf.push(b',');
                push_opt(&mut buf, e.uncertainty);
            }
        }
        if write {
            buf.push(b'\n');
        }
    }
    Ok(Computed { bytes: buf, accs })
}

/// Output buffers handed back by the writer for reuse (fresh large buffers cost page faults).
type Pool = std::sync::Mutex<Vec<Vec<u8>>>;

/// Raw read buffers kept for reuse at most (the read-ahead of three files and a round).
const RAW_POOL_MAX: usize = 3 * READ_AHEAD + 8;
/// Output buffers kept for reuse at most (the write-ahead and a round of chunks).
const OUT_POOL_MAX: usize = 2 * WRITE_AHEAD;

/// Hands a buffer back to a pool holding fewer than `max`.
fn give_back(pool: &Pool, buf: Vec<u8>, max: usize) {
    if let Ok(mut p) = pool.lock() {
        if p.len() < max {
            p.push(buf);
        }
    }
}

fn pooled(pool: &Pool, capacity: usize) -> Vec<u8> {
    let buf = pool.lock().ok().and_then(|mut p| p.pop());
    match buf {
        Some(mut b) => {
            b.clear();
            b.reserve(capacity);
            b
        }
        None => Vec::with_capacity(capacity),
    }
}

/// Writes what arrives, in order; the sink is handed back unfinished, for the caller to finish
/// only when the whole run succeeded.
fn run_writer(
    mut sink: Box<dyn PointSink>,
    rx: Receiver<Vec<u8>>,
    pool: &Pool,
) -> std::io::Result<Box<dyn PointSink>> {
    for bytes in rx {
        sink.write_all(&bytes)?;
        give_back(pool, bytes, OUT_POOL_MAX);
    }
    Ok(sink)
}

// ---------------------------------------------------------------------------------------------
// The driver

fn check_spec(spec: &FieldSpec, opts: &FieldOptions) -> Result<(), FieldError> {
    let bad = |message: String| FieldError::Spec {
        field: spec.name.clone(),
        message,
    };
    if spec.files.len() != 3 {
        return Err(bad(format!(
            "three probe files are needed (the three finest meshes), got {}",
            spec.files.len()
        )));
    }
    if spec.columns.is_empty() {
        return Err(bad("no columns to estimate".into()));
    }
    for (i, c) in spec.columns.iter().enumerate() {
        if c.is_empty() {
            return Err(bad("a column name is empty".into()));
        }
        if spec.columns[..i].contains(c) {
            return Err(bad(format!("column `{c}` is listed twice")));
        }
    }
    if spec.id.as_deref() == Some("") {
        return Err(bad("the id column name is empty".into()));
    }
    if let Some(w) = &spec.write {
        if spec.columns.iter().any(|c| c == "id") {
            return Err(bad(
                "a column named `id` would clash with the id column of the per-point file".into(),
            ));
        }
        if w.as_os_str().is_empty() || w.as_os_str() == "-" {
            return Err(bad(
                "the per-point results need a file path (standard output is not offered)".into(),
            ));
        }
    }
    if opts.chunk_rows == 0 || opts.block_bytes == 0 {
        return Err(bad("chunk and block sizes must be at least 1".into()));
    }
    Ok(())
}

/// Assesses a field with the default streaming options. See [`assess_field_with`].
pub fn assess_field(
    spec: &FieldSpec,
    h: [f64; 3],
    settings: &ThreeGridSettings,
    sink: Option<Box<dyn PointSink>>,
) -> Result<FieldSummary, FieldError> {
    assess_field_with(spec, h, settings, &FieldOptions::default(), sink)
}

/// Assesses a field: the three-mesh estimate at every probe of the three finest meshes' files
/// (`spec.files`, finest first, with sizes `h`), the per-point file written into `sink` when
/// one is given (in input order; see "Per-point file" in the module notes), and the summary
/// returned. `spec.write` names the file the sink stands for.
pub fn assess_field_with(
    spec: &FieldSpec,
    h: [f64; 3],
    settings: &ThreeGridSettings,
    opts: &FieldOptions,
    sink: Option<Box<dyn PointSink>>,
) -> Result<FieldSummary, FieldError> {
    check_spec(spec, opts)?;
    let fast = FastThreeGrid::new(h, settings).map_err(|e| FieldError::Spec {
        field: spec.name.clone(),
        message: e.to_string(),
    })?;
    let mut readers = Vec::with_capacity(3);
    let mut layouts = Vec::with_capacity(3);
    let raw_pool: Arc<Pool> = Arc::new(std::sync::Mutex::new(Vec::new()));
    for path in &spec.files {
        let mut r = BlockReader::open(path, opts.block_bytes, Arc::clone(&raw_pool))?;
        let header = r.read_header()?;
        let mut layout = Layout::new(path, header, spec)?;
        // The finest values are written back as given: the same numbers, no formatting cost.
        layout.keep_text = layouts.is_empty() && sink.is_some();
        layouts.push(layout);
        readers.push(r);
    }
    let writing = sink.is_some();
    let bin_scale = ORDER_BINS as f64 / fast.order_cap();
    let chunk_rows = opts.chunk_rows;
    // Rounds of eight chunks per thread: small tasks keep both cores busy to a round's end.
    let round_rows = chunk_rows.saturating_mul(8 * rayon::current_num_threads().max(1));

    let pool: Pool = std::sync::Mutex::new(Vec::new());
    let (result, written) = std::thread::scope(|scope| {
        let mut rxs = Vec::with_capacity(3);
        for r in readers {
            let (tx, rx) = sync_channel(READ_AHEAD);
            scope.spawn(move || run_reader(r, tx));
            rxs.push(rx);
        }
        let pool = &pool;
        let (wtx, writer) = match sink {
            Some(sink) => {
                let (tx, rx) = sync_channel::<Vec<u8>>(WRITE_AHEAD);
                (
                    Some(tx),
                    Some(scope.spawn(move || run_writer(sink, rx, pool))),
                )
            }
            None => (None, None),
        };
        let result = drive(
            &rxs,
            wtx.as_ref(),
            pool,
            &raw_pool,
            &layouts,
            &fast,
            spec,
            chunk_rows,
            round_rows,
            bin_scale,
        );
        drop(wtx);
        drop(rxs);
        let written = writer.map(|w| {
            w.join().unwrap_or_else(|_| {
                Err(std::io::Error::other(
                    "the writing thread stopped unexpectedly",
                ))
            })
        });
        (result, written)
    });

    let accs = match (result, written) {
        (Ok(accs), None) => accs,
        (Ok(accs), Some(Ok(sink))) => {
            sink.finish().map_err(|source| FieldError::Write {
                path: spec.write.clone().unwrap_or_default(),
                source,
            })?;
            accs
        }
        (_, Some(Err(source))) => {
            return Err(FieldError::Write {
                path: spec.write.clone().unwrap_or_default(),
                source,
            })
        }
        (Err(e), _) => return Err(e),
    };
    let points = accs.first().map_or(0, |a| {
        a.classes.monotonic + a.classes.oscillatory + a.classes.divergent + a.classes.no_change
    });
    Ok(FieldSummary {
        name: spec.name.clone(),
        points,
        written: if writing {
            spec.write.as_ref().map(|p| p.display().to_string())
        } else {
            None
        },
        columns: spec
            .columns
            .iter()
            .zip(&accs)
            .map(|(name, a)| a.finish(name))
            .collect(),
    })
}

/// The calling thread's loop: gather raw blocks, then parse them while the chunks lined up in
/// the previous round are estimated, hand the results over for writing in order, and line up
/// the next chunks.
#[allow(clippy::too_many_arguments)]
fn drive(
    rxs: &[Receiver<Result<RawBlock, FieldError>>],
    wtx: Option<&SyncSender<Vec<u8>>>,
    pool: &Pool,
    raw_pool: &Pool,
    layouts: &[Layout],
    fast: &FastThreeGrid,
    spec: &FieldSpec,
    chunk_rows: usize,
    round_rows: usize,
    bin_scale: f64,
) -> Result<Vec<ColumnAcc>, FieldError> {
    let ncols = spec.columns.len();
    let mut accs = vec![ColumnAcc::default(); ncols];
    // A send fails only when the writer stopped on an error, which the caller reports.
    let gone = || FieldError::Write {
        path: spec.write.clone().unwrap_or_default(),
        source: std::io::Error::other("the writing thread stopped"),
    };
    if let Some(tx) = wtx {
        tx.send(header_bytes(&spec.columns)).map_err(|_| gone())?;
    }
    let mut queues: [Queue; 3] = Default::default();
    for q in queues.iter_mut() {
        q.last_line = 1;
    }
    let mut taken: u64 = 0;
    let mut chunks: Vec<[Vec<Segment>; 3]> = Vec::new();
    let rows_pool: RowsPool = std::sync::Mutex::new(Vec::new());
    let write = wtx.map(|_| pool);
    loop {
        // Gather raw blocks until each file has about a round of rows.
        let mut raw: Vec<(usize, RawBlock)> = Vec::new();
        for (f, q) in queues.iter_mut().enumerate() {
            let mut est = q.pending;
            while est < round_rows && !q.eof {
                match rxs[f].recv() {
                    Ok(Ok(b)) => {
                        est += b.newlines.max(1);
                        raw.push((f, b));
                    }
                    Ok(Err(e)) => return Err(e),
                    Err(_) => q.eof = true,
                }
            }
        }
        let (parsed, computed) = rayon::join(
            || {
                raw.par_iter()
                    .map(|(f, b)| parse_block(&layouts[*f], b, &rows_pool))
                    .collect::<Vec<_>>()
            },
            || {
                chunks
                    .par_iter()
                    .map(|c| compute_chunk(fast, layouts, c, ncols, write))
                    .collect::<Vec<_>>()
            },
        );
        recycle(&rows_pool, &mut chunks);
        // Earlier rows first: the estimates, then the newly parsed blocks.
        for c in computed {
            let c = c?;
            for (acc, part) in accs.iter_mut().zip(&c.accs) {
                acc.merge(part, bin_scale);
            }
            if let Some(tx) = wtx {
                tx.send(c.bytes).map_err(|_| gone())?;
            }
        }
        for ((f, _), rows) in raw.iter().zip(parsed) {
            queues[*f].push(rows?);
        }
        for (_, b) in raw {
            give_back(raw_pool, b.bytes, RAW_POOL_MAX);
        }

        // Line the files up.
        let avail = queues.iter().map(|q| q.pending).min().unwrap_or(0);
        let any_eof = queues.iter().any(|q| q.eof);
        let take = if any_eof {
            avail
        } else {
            avail - avail % chunk_rows
        };
        if take == 0 {
            if !any_eof {
                continue;
            }
            let short = queues.iter().position(|q| q.eof && q.pending == 0);
            let long = queues.iter().position(|q| q.pending > 0);
            match (short, long) {
                (Some(s), Some(l)) => {
                    return Err(FieldError::RowCount {
                        path: layouts[s].path.clone(),
                        line: queues[s].last_line,
                        rows: taken,
                        other_path: layouts[l].path.clone(),
                        other_line: queues[l].next_line().unwrap_or(0),
                    })
                }
                (Some(_), None) if queues.iter().all(|q| q.eof) => break,
                _ => continue,
            }
        }
        let mut left = take;
        while left > 0 {
            let n = left.min(chunk_rows);
            let [a, b, c] = &mut queues;
            chunks.push([a.take(n), b.take(n), c.take(n)]);
            left -= n;
        }
        taken += take as u64;
    }
    Ok(accs)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;
    use std::fmt::Write as _;

    const H: [f64; 3] = [1.0, 1.5, 1.5 * 1.3];

    /// Writes one probe file per mesh; `rows[i]` holds (id, values on the three meshes).
    fn write_meshes(dir: &Path, header: &str, rows: &[(String, [f64; 3])]) -> Vec<PathBuf> {
        (0..3)
            .map(|m| {
                let mut s = format!("{header}\n");
                for (id, v) in rows {
                    let _ = writeln!(s, "{id},{}", v[m]);
                }
                let p = dir.join(format!("L{}.csv", m + 1));
                std::fs::write(&p, s).unwrap();
                p
            })
            .collect()
    }

    fn spec(files: Vec<PathBuf>, write: Option<PathBuf>) -> FieldSpec {
        FieldSpec {
            name: "blade".into(),
            id: None,
            columns: vec!["cp".into()],
            files,
            write,
        }
    }

    /// A test sink: a temporary beside the target, renamed onto it when finished (as the
    /// command line does), so a failed run leaves an older file untouched.
    struct FileSink {
        file: File,
        tmp: PathBuf,
        target: PathBuf,
    }

    impl PointSink for FileSink {
        fn write_all(&mut self, bytes: &[u8]) -> std::io::Result<()> {
            std::io::Write::write_all(&mut self.file, bytes)
        }
        fn finish(self: Box<Self>) -> std::io::Result<()> {
            std::fs::rename(&self.tmp, &self.target)
        }
    }

    impl Drop for FileSink {
        fn drop(&mut self) {
            // Unfinished (the run failed): nothing is left behind. After a rename, nothing is
            // at the temporary path any more.
            let _ = std::fs::remove_file(&self.tmp);
        }
    }

    fn sink_for(spec: &FieldSpec) -> Option<Box<dyn PointSink>> {
        sink_to(spec.write.clone())
    }

    fn sink_to(write: Option<PathBuf>) -> Option<Box<dyn PointSink>> {
        write.map(|target| {
            let tmp = target.with_extension("part");
            if let Some(dir) = target.parent() {
                std::fs::create_dir_all(dir).unwrap();
            }
            Box::new(FileSink {
                file: File::create(&tmp).unwrap(),
                tmp,
                target,
            }) as Box<dyn PointSink>
        })
    }

    fn small() -> FieldOptions {
        FieldOptions {
            chunk_rows: 3,
            block_bytes: 16,
        }
    }

    fn read_rows(path: &Path) -> Vec<Vec<String>> {
        let mut r = csv::ReaderBuilder::new()
            .has_headers(false)
            .from_path(path)
            .unwrap();
        r.records()
            .map(|x| x.unwrap().iter().map(str::to_string).collect())
            .collect()
    }

    /// φ0(x) and α(x) of the manufactured field: smooth analytic functions of the position.
    fn phi0(x: f64) -> f64 {
        1.0 + 0.5 * (3.0 * x).sin()
    }
    fn alpha(x: f64) -> f64 {
        0.2 + 0.1 * (2.0 * x).cos()
    }

    #[test]
    fn manufactured_field_recovers_order_and_limit() {
        // Source: manufactured data φ = φ0(x) + α(x) h^p (analytic); the exact three-point fit
        // returns p and φ0 at every point (Celik et al. 2008 eqs. for p and φ_ext).
        let dir = tempfile::tempdir().unwrap();
        let n = 200;
        let p_of = |x: f64| 1.0 + 1.5 * x; // order varies along the blade, 1 … 2.5
        let rows: Vec<_> = (0..n)
            .map(|i| {
                let x = i as f64 / n as f64;
                (
                    format!("P{i}"),
                    H.map(|h| phi0(x) + alpha(x) * h.powf(p_of(x))),
                )
            })
            .collect();
        let files = write_meshes(dir.path(), "probe,cp", &rows);
        let out = dir.path().join("out/sub/points.csv");
        let s = assess_field_with(
            &spec(files, Some(out.clone())),
            H,
            &ThreeGridSettings::default(),
            &small(),
            sink_to(Some(out.clone())),
        )
        .unwrap();
        assert_eq!(s.points, n as u64);
        assert_eq!(s.columns[0].classes.monotonic, n as u64);
        let table = read_rows(&out);
        assert_eq!(
            table[0],
            [
                "id",
                "cp",
                "cp_extrapolated",
                "cp_order",
                "cp_class",
                "cp_uncertainty"
            ]
        );
        assert_eq!(table.len(), n + 1);
        for (i, row) in table[1..].iter().enumerate() {
            let x = i as f64 / n as f64;
            assert_eq!(row[0], format!("P{i}"));
            let cp: f64 = row[1].parse().unwrap();
            assert_eq!(
                cp.to_bits(),
                rows[i].1[0].to_bits(),
                "round trip of the finest value"
            );
            assert_relative_eq!(row[2].parse::<f64>().unwrap(), phi0(x), max_relative = 1e-9);
            assert_relative_eq!(row[3].parse::<f64>().unwrap(), p_of(x), max_relative = 1e-8);
            assert_eq!(row[4], "monotonic");
            // U = Fs |ε21| / (r21^p − 1) (Celik et al. 2008, GCI in absolute form).
            let r21p = 1.5_f64.powf(p_of(x));
            let e21 = (rows[i].1[1] - rows[i].1[0]).abs();
            assert_relative_eq!(
                row[5].parse::<f64>().unwrap(),
                1.25 * e21 / (r21p - 1.0),
                max_relative = 1e-8
            );
        }
        // Mean of the orders 1 + 1.5 i/n over i < n is 1 + 1.5 (n − 1)/(2n) (arithmetic).
        let c = &s.columns[0];
        let mean = 1.0 + 1.5 * (n as f64 - 1.0) / (2.0 * n as f64);
        assert_relative_eq!(c.mean_order.unwrap(), mean, max_relative = 1e-9);
        // The median lies within one histogram bin (20/20000) of the exact median, here the
        // same value as the mean (orders evenly spaced).
        assert!((c.median_order.unwrap() - mean).abs() <= 1e-3);
        assert_eq!(
            s.written.as_deref(),
            Some(out.display().to_string().as_str())
        );
    }

    #[test]
    fn constant_order_gives_exact_median_and_relative_figures() {
        // Source: manufactured data with p = 2 everywhere (analytic): every bin of the order
        // histogram holding values holds the same value, so the median is exact.
        let dir = tempfile::tempdir().unwrap();
        let rows: Vec<_> = (0..50)
            .map(|i| {
                let x = i as f64 / 50.0;
                (format!("{i}"), H.map(|h| phi0(x) + alpha(x) * h * h))
            })
            .collect();
        let files = write_meshes(dir.path(), "id,cp", &rows);
        let s = assess_field(
            &spec(files, None),
            H,
            &ThreeGridSettings::default(),
            sink_to(None),
        )
        .unwrap();
        let c = &s.columns[0];
        assert_relative_eq!(c.median_order.unwrap(), 2.0, max_relative = 1e-10);
        assert_relative_eq!(c.mean_order.unwrap(), 2.0, max_relative = 1e-10);
        // Relative U/|φ1| with U = 1.25 α h1² (r21² − 1)/(r21² − 1) = 1.25 α (formula, h1 = 1).
        let rels: Vec<f64> = rows
            .iter()
            .enumerate()
            .map(|(i, r)| 1.25 * alpha(i as f64 / 50.0) / r.1[0].abs())
            .collect();
        let mean = rels.iter().sum::<f64>() / rels.len() as f64;
        let max = rels.iter().fold(0.0_f64, |m, v| m.max(*v));
        assert_relative_eq!(c.mean_relative.unwrap(), mean, max_relative = 1e-9);
        assert_relative_eq!(c.max_relative.unwrap(), max, max_relative = 1e-9);
        assert!(s.written.is_none());
        let json = serde_json::to_value(&s).unwrap();
        assert_eq!(json["written"], serde_json::Value::Null);
        assert_eq!(json["columns"][0]["classes"]["monotonic"], 50);
        assert!(json["columns"][0].get("formal_order_points").is_none());
    }

    #[test]
    fn divergent_points_have_empty_cells() {
        // Stern et al. (2001) classes: R = ε21/ε32 = 0.02/0.01 = 2 is monotonic divergence,
        // R = 0.03/(−0.02) = −1.5 oscillatory divergence; no order, no band.
        let dir = tempfile::tempdir().unwrap();
        let rows = vec![
            ("a".to_string(), [1.0, 1.02, 1.03]),
            ("b".to_string(), [1.0, 1.03, 1.01]),
            ("c".to_string(), [2.5, 2.5, 2.5]),
            ("d".to_string(), [1.0, 0.99, 1.02]),
        ];
        let files = write_meshes(dir.path(), "id,cp", &rows);
        let out = dir.path().join("p.csv");
        let s = assess_field_with(
            &spec(files, Some(out.clone())),
            [1.0, 1.5, 2.25],
            &ThreeGridSettings::default(),
            &small(),
            sink_to(Some(out.clone())),
        )
        .unwrap();
        let t = read_rows(&out);
        assert_eq!(t[1], ["a", "1", "", "", "divergent", ""]);
        assert_eq!(t[2], ["b", "1", "", "", "divergent", ""]);
        // No change: extrapolated = φ1, no order, zero uncertainty (three_grid rules).
        assert_eq!(t[3], ["c", "2.5", "2.5", "", "no_change", "0"]);
        // Oscillatory, R = −1/3, equal ratios: p = ln 3/ln 1.5 (analytic), half range 0.015
        // governs over the GCI 1.25·0.01/2 (as in the three_grid test of the same data).
        assert_eq!(t[4][4], "oscillatory");
        assert_relative_eq!(
            t[4][3].parse::<f64>().unwrap(),
            3.0_f64.ln() / 1.5_f64.ln(),
            max_relative = 1e-12
        );
        assert_relative_eq!(t[4][5].parse::<f64>().unwrap(), 0.015, max_relative = 1e-12);
        let c = &s.columns[0];
        assert_eq!(
            c.classes,
            ClassCounts {
                monotonic: 0,
                oscillatory: 1,
                divergent: 2,
                no_change: 1
            }
        );
        assert_eq!(c.oscillation_range_points, 1);
        assert_eq!(s.warnings()[0].code, "field_points_divergent");
        // Relative figures leave the divergent points out: (0 + 0.015/1)/2.
        assert_relative_eq!(c.mean_relative.unwrap(), 0.0075, max_relative = 1e-12);
    }

    #[test]
    fn order_is_kept_across_chunks_and_blocks() {
        // Checks the pipeline itself (no external value): tiny chunks and blocks must give the
        // same bytes as one chunk, and the ids in input order.
        let dir = tempfile::tempdir().unwrap();
        let rows: Vec<_> = (0..97)
            .map(|i| {
                let x = i as f64 * 0.37;
                (
                    format!("q{}", 1000 - i),
                    [
                        x.sin(),
                        x.sin() + 0.01 * x.cos(),
                        x.sin() + 0.013 * (1.7 * x).cos(),
                    ],
                )
            })
            .collect();
        let files = write_meshes(dir.path(), "id,cp", &rows);
        let a = dir.path().join("a.csv");
        let b = dir.path().join("b.csv");
        let set = ThreeGridSettings::default();
        assess_field_with(
            &spec(files.clone(), Some(a.clone())),
            H,
            &set,
            &small(),
            sink_to(Some(a.clone())),
        )
        .unwrap();
        let s2 = assess_field_with(
            &spec(files, Some(b.clone())),
            H,
            &set,
            &FieldOptions {
                chunk_rows: 1000,
                block_bytes: 1 << 16,
            },
            sink_to(Some(b.clone())),
        )
        .unwrap();
        let (ta, tb) = (std::fs::read(&a).unwrap(), std::fs::read(&b).unwrap());
        assert_eq!(ta, tb);
        let ids: Vec<String> = read_rows(&a)[1..].iter().map(|r| r[0].clone()).collect();
        let want: Vec<String> = rows.iter().map(|r| r.0.clone()).collect();
        assert_eq!(ids, want);
        assert_eq!(s2.points, 97);
    }

    #[test]
    fn quoted_ids_crlf_and_blank_lines() {
        // CSV quoting and line ends as RFC 4180 describes them; errors count physical lines.
        let dir = tempfile::tempdir().unwrap();
        let body = "\u{feff}probe,cp\r\n\"a,1\",1.0\r\n\r\n\"b\nc\",2.0\r\nd,3.0\r\n";
        let files: Vec<PathBuf> = (0..3)
            .map(|m| {
                let p = dir.path().join(format!("m{m}.csv"));
                let scaled = body
                    .replace("1.0", &format!("{}", 1.0 + 0.01 * m as f64))
                    .replace("2.0", &format!("{}", 2.0 + 0.01 * m as f64))
                    .replace("3.0", if m == 2 { "x3" } else { "3.0" });
                std::fs::write(&p, scaled).unwrap();
                p
            })
            .collect();
        let e = assess_field_with(
            &spec(files.clone(), None),
            H,
            &ThreeGridSettings::default(),
            &small(),
            sink_to(None),
        )
        .unwrap_err();
        assert_eq!(
            e.to_string(),
            format!(
                "{}, line 6, column `cp`: `x3` is not a number",
                files[2].display()
            )
        );
        std::fs::write(&files[2], body.replace("3.0", "3.1")).unwrap();
        let out = dir.path().join("o.csv");
        let s = assess_field_with(
            &spec(files, Some(out.clone())),
            H,
            &ThreeGridSettings::default(),
            &small(),
            sink_to(Some(out.clone())),
        )
        .unwrap();
        assert_eq!(s.points, 3);
        let t = read_rows(&out);
        assert_eq!(t[1][0], "a,1");
        assert_eq!(t[2][0], "b\nc");
        assert_eq!(t[3][0], "d");
    }

    fn three_files(dir: &Path, bodies: [&str; 3]) -> Vec<PathBuf> {
        bodies
            .iter()
            .enumerate()
            .map(|(m, b)| {
                let p = dir.join(format!("L{}.csv", m + 1));
                std::fs::write(&p, b).unwrap();
                p
            })
            .collect()
    }

    fn err(bodies: [&str; 3]) -> (String, Vec<PathBuf>) {
        let dir = tempfile::tempdir().unwrap();
        let files = three_files(dir.path(), bodies);
        let out = dir.path().join("out").join("p.csv");
        let e = assess_field_with(
            &spec(files.clone(), Some(out.clone())),
            H,
            &ThreeGridSettings::default(),
            &small(),
            sink_to(Some(out.clone())),
        )
        .unwrap_err();
        // The written file is complete or absent: here absent, and no temporary file is left.
        assert!(!out.exists());
        if let Ok(d) = std::fs::read_dir(dir.path().join("out")) {
            assert_eq!(d.count(), 0, "a temporary file was left behind");
        }
        (e.to_string(), files)
    }

    #[test]
    fn mismatched_id_names_file_and_line() {
        let ok = "id,cp\n1,1.0\n2,2.0\n3,3.0\n4,4.0\n";
        let (e, f) = err([ok, ok, "id,cp\n1,1.1\n2,2.1\n3,3.1\n5,4.1\n"]);
        assert_eq!(
            e,
            format!(
                "{}, line 5, column `id`: id `5` differs from id `4` at line 5 of {}; every mesh must list the same probes in the same order",
                f[2].display(),
                f[0].display()
            )
        );
    }

    #[test]
    fn row_count_mismatch_names_file_and_line() {
        let long = "id,cp\n1,1.0\n2,2.0\n3,3.0\n4,4.0\n5,5.0\n";
        let (e, f) = err([long, "id,cp\n1,1.0\n2,2.0\n3,3.0\n4,4.0\n", long]);
        assert_eq!(
            e,
            format!(
                "{}, line 5: the file ends after 4 data rows, but {} goes on at line 6; every mesh must list the same probes",
                f[1].display(),
                f[0].display()
            )
        );
        // A longer middle file is found as well.
        let short = "id,cp\n1,1.0\n";
        let (e, f) = err([short, "id,cp\n1,1.0\n2,2.0\n", short]);
        assert!(
            e.starts_with(&format!(
                "{}, line 2: the file ends after 1 data rows",
                f[0].display()
            )),
            "{e}"
        );
        assert!(
            e.contains(&format!("{} goes on at line 3", f[1].display())),
            "{e}"
        );
    }

    #[test]
    fn missing_column_and_bad_values_name_file_line_column() {
        let ok = "id,cp\n1,1.0\n2,2.0\n";
        let (e, f) = err([ok, "id,pressure\n1,1.0\n2,2.0\n", ok]);
        assert_eq!(
            e,
            format!("{}, line 1: no column `cp` in the header", f[1].display())
        );
        let (e, f) = err([ok, ok, "id,cp\n1,1.0\n2,abc\n"]);
        assert_eq!(
            e,
            format!(
                "{}, line 3, column `cp`: `abc` is not a number",
                f[2].display()
            )
        );
        let (e, f) = err(["id,cp\n1,inf\n2,2.0\n", ok, ok]);
        assert_eq!(
            e,
            format!(
                "{}, line 2, column `cp`: `inf` is not a finite number",
                f[0].display()
            )
        );
        let (e, f) = err([ok, "id,cp\n1,1.0\n2\n", ok]);
        assert_eq!(
            e,
            format!(
                "{}, line 3, column `cp`: the row has 1 fields but the header has 2",
                f[1].display()
            )
        );
        let (e, f) = err([ok, ok, ""]);
        assert_eq!(
            e,
            format!(
                "{}: the file is empty, a header line is needed",
                f[2].display()
            )
        );
        // An empty value is not a number either.
        let (e, _) = err([ok, "id,cp\n1,\n2,2.0\n", ok]);
        assert!(
            e.ends_with("line 2, column `cp`: `` is not a number"),
            "{e}"
        );
    }

    #[test]
    fn named_id_column_and_spec_errors() {
        let dir = tempfile::tempdir().unwrap();
        let b = "x,probe,cp\n0.1,a,1.0\n0.2,b,2.0\n";
        let files = three_files(dir.path(), [b, b, b]);
        let mut sp = spec(files, None);
        sp.id = Some("probe".into());
        let s = assess_field(&sp, H, &ThreeGridSettings::default(), sink_for(&sp)).unwrap();
        assert_eq!(s.columns[0].classes.no_change, 2);
        sp.columns = vec!["probe".into()];
        let e = assess_field(&sp, H, &ThreeGridSettings::default(), sink_for(&sp)).unwrap_err();
        assert!(e.to_string().contains("is the id column"), "{e}");
        sp.columns = vec!["cp".into(), "cp".into()];
        let e = assess_field(&sp, H, &ThreeGridSettings::default(), sink_for(&sp)).unwrap_err();
        assert_eq!(e.to_string(), "field `blade`: column `cp` is listed twice");
        sp.columns = vec!["id".into()];
        sp.write = Some(PathBuf::from("points.csv"));
        let e = assess_field(&sp, H, &ThreeGridSettings::default(), sink_for(&sp)).unwrap_err();
        assert_eq!(
            e.to_string(),
            "field `blade`: a column named `id` would clash with the id column of the per-point file"
        );
        sp.write = None;
        sp.columns = vec!["cp".into()];
        let e = assess_field(
            &sp,
            [1.0, 1.0, 2.0],
            &ThreeGridSettings::default(),
            sink_for(&sp),
        )
        .unwrap_err();
        assert_eq!(
            e.to_string(),
            "field `blade`: sizes must be > 0 and increase from the finest to the coarsest mesh"
        );
        sp.files.pop();
        let e = assess_field(&sp, H, &ThreeGridSettings::default(), sink_for(&sp)).unwrap_err();
        assert!(
            e.to_string().contains("three probe files are needed"),
            "{e}"
        );
    }

    #[test]
    fn written_file_replaces_the_old_one_whole() {
        // An earlier complete file stays untouched when a later run fails, and is replaced
        // whole when a run succeeds.
        let dir = tempfile::tempdir().unwrap();
        let ok = "id,cp\n1,1.0\n2,2.0\n";
        let files = three_files(dir.path(), [ok, ok, ok]);
        let out = dir.path().join("p.csv");
        std::fs::write(&out, "old\n").unwrap();
        std::fs::write(&files[2], "id,cp\n1,1.0\n2,nan\n").unwrap();
        let set = ThreeGridSettings::default();
        assert!(assess_field_with(
            &spec(files.clone(), Some(out.clone())),
            H,
            &set,
            &small(),
            sink_to(Some(out.clone()))
        )
        .is_err());
        assert_eq!(std::fs::read_to_string(&out).unwrap(), "old\n");
        std::fs::write(&files[2], ok).unwrap();
        assess_field_with(
            &spec(files, Some(out.clone())),
            H,
            &set,
            &small(),
            sink_to(Some(out.clone())),
        )
        .unwrap();
        let t = read_rows(&out);
        assert_eq!(t.len(), 3);
        // The finest value is written as its file gives it; computed figures in shortest form.
        assert_eq!(t[2], ["2", "2.0", "2", "", "no_change", "0"]);
        let leftovers = std::fs::read_dir(dir.path())
            .unwrap()
            .filter(|e| {
                e.as_ref()
                    .map(|e| e.file_name().to_string_lossy().ends_with(".part"))
                    .unwrap_or(false)
            })
            .count();
        assert_eq!(leftovers, 0);
    }

    #[test]
    fn header_only_files_give_an_empty_result() {
        let dir = tempfile::tempdir().unwrap();
        let files = three_files(dir.path(), ["id,cp\n", "id,cp", "id,cp\n"]);
        let out = dir.path().join("p.csv");
        let s = assess_field(
            &spec(files, Some(out.clone())),
            H,
            &ThreeGridSettings::default(),
            sink_to(Some(out.clone())),
        )
        .unwrap();
        assert_eq!(s.points, 0);
        assert_eq!(s.columns[0].mean_order, None);
        assert_eq!(s.columns[0].median_order, None);
        assert_eq!(
            std::fs::read_to_string(&out).unwrap(),
            "id,cp,cp_extrapolated,cp_order,cp_class,cp_uncertainty\n"
        );
    }

    #[test]
    fn plain_and_csv_parsers_agree() {
        // The quote-free splitter must read exactly what the csv crate reads (RFC 4180 text
        // without quotes), including CRLF, blank lines and a missing final line end.
        let layout = Layout {
            path: PathBuf::from("m.csv"),
            header: vec!["id".into(), "x".into(), "cp".into()],
            id_idx: 0,
            col_idx: vec![2],
            keep_text: false,
            roles: roles(3, 0, &[2]),
        };
        let text = b"a,0.1,1.5\r\n\nb , 2, -2e-3 \n\r\nc,3,4";
        let block = |quoted| RawBlock {
            bytes: text.to_vec(),
            first_line: 7,
            newlines: 4,
            quoted,
        };
        let pool = RowsPool::default();
        let plain = parse_plain(&layout, &block(false), Rows::new(1, 4))
            .unwrap()
            .unwrap();
        let general = parse_block(&layout, &block(true), &pool).unwrap();
        for r in [&plain, &general] {
            assert_eq!([r.line(0), r.line(1), r.line(2)], [7, 9, 11]);
            assert_eq!([r.id(0), r.id(1), r.id(2)], [&b"a"[..], b"b", b"c"]);
            assert_eq!(
                r.values.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
                [1.5f64, -2e-3, 4.0].map(f64::to_bits)
            );
        }
        // A lone carriage return ends a record for the csv reader: the plain path declines.
        let lone = RawBlock {
            bytes: b"a,1,2\rb,3,4\n".to_vec(),
            first_line: 2,
            newlines: 1,
            quoted: false,
        };
        assert!(parse_plain(&layout, &lone, Rows::new(1, 4))
            .unwrap()
            .is_none());
        assert_eq!(parse_block(&layout, &lone, &pool).unwrap().len(), 2);
        // Errors name the physical line in both paths.
        let bad = |quoted| RawBlock {
            bytes: b"a,1,2\n\nb,3\n".to_vec(),
            first_line: 2,
            newlines: 3,
            quoted,
        };
        for q in [false, true] {
            let e = parse_block(&layout, &bad(q), &pool)
                .unwrap_err()
                .to_string();
            assert_eq!(
                e,
                "m.csv, line 4, column `cp`: the row has 2 fields but the header has 3"
            );
        }
    }

    /// A layout over `fields` header fields with the id first and the needed columns at
    /// `cols` (header indices, in the spec's order).
    fn layout_of(fields: usize, cols: &[usize], keep_text: bool) -> Layout {
        Layout {
            path: PathBuf::from("m.csv"),
            header: (0..fields).map(|i| format!("c{i}")).collect(),
            id_idx: 0,
            col_idx: cols.to_vec(),
            keep_text,
            roles: roles(fields, 0, cols),
        }
    }

    /// One parsed row as plain data: id, line, the values' bits, the kept texts.
    type RowData = (Vec<u8>, u64, Vec<u64>, Vec<Vec<u8>>);

    fn rows_text(r: &Rows) -> Vec<RowData> {
        (0..r.len())
            .map(|i| {
                (
                    r.id(i).to_vec(),
                    r.line(i),
                    (0..r.ncols).map(|c| r.value(i, c).to_bits()).collect(),
                    (0..r.ncols)
                        .filter_map(|c| r.text(i, c).map(<[u8]>::to_vec))
                        .collect(),
                )
            })
            .collect()
    }

    #[test]
    fn fast_parser_takes_well_formed_blocks() {
        // Checks the parser itself (no external value): ordinary records, CRLF and LF, padding
        // and a missing final line end go through the fast path, with the splitter's result.
        let layout = layout_of(3, &[2, 1], true);
        let block = RawBlock {
            bytes: b"a,0.1,1.5\r\n b ,2 , -2e-3 \nc,3,4".to_vec(),
            first_line: 7,
            newlines: 2,
            quoted: false,
        };
        let mut fast = Rows::new(2, 4);
        assert!(parse_fast(&layout, &block, &mut fast));
        let plain = parse_plain(&layout, &block, Rows::new(2, 4))
            .unwrap()
            .unwrap();
        assert_eq!(rows_text(&fast), rows_text(&plain));
        assert_eq!(fast.id(1), b"b");
        assert_eq!(fast.text(1, 0), Some(&b"-2e-3"[..]));
        assert_eq!(fast.line(2), 9);
        // Anything unusual is left to the splitter.
        for odd in [
            &b"a,1,2\n\nb,3,4\n"[..],
            b"a,1,2\rb,3,4\n",
            b"a,1,x\n",
            b"a,1,nan\n",
            b"a,1\n",
            b"a,1,2,3\n",
            b"a,1,2e\n",
        ] {
            let b = RawBlock {
                bytes: odd.to_vec(),
                first_line: 2,
                newlines: 1,
                quoted: false,
            };
            assert!(
                !parse_fast(&layout, &b, &mut Rows::new(2, 4)),
                "{}",
                String::from_utf8_lossy(odd)
            );
        }
    }

    /// Blocks the fast parser took in `fast_parser_reads_what_the_splitter_reads`.
    static FAST_TAKEN: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);

    #[test]
    fn fast_parser_property_takes_many_blocks() {
        // Guards the property test below against passing vacuously: run it here too and
        // require that the fast path took a good share of the generated blocks.
        fast_parser_reads_what_the_splitter_reads();
        let taken = FAST_TAKEN.load(std::sync::atomic::Ordering::Relaxed);
        assert!(taken >= 200, "the fast parser took only {taken} blocks");
    }

    fn csv_text() -> impl Strategy<Value = Vec<u8>> {
        // Mostly well-formed records (so that the fast parser takes many blocks), with odd
        // pieces between them now and then.
        let id = prop_oneof![Just("a"), Just("id9"), Just(" b "), Just("\t7")];
        let num = || {
            prop_oneof![
                Just("1"),
                Just("0.25"),
                Just("-3e2"),
                Just("+.5"),
                Just("5."),
                Just("1E+3"),
                Just(" 4 "),
                Just("-0"),
                Just("12345678901234567890.5e-3"),
            ]
        };
        let end = prop_oneof![Just("\n"), Just("\r\n")];
        let record =
            (id, num(), num(), end).prop_map(|(i, x, y, e)| format!("{i},{x},{y}{e}").into_bytes());
        let odd = prop_oneof![
            Just(&b","[..]),
            Just(&b"\n"[..]),
            Just(&b"\r"[..]),
            Just(&b" "[..]),
            Just(&b"1"[..]),
            Just(&b"e"[..]),
            Just(&b"."[..]),
            Just(&b"+"[..]),
            Just(&b"inf"[..]),
            Just(&b"x"[..]),
        ]
        .prop_map(<[u8]>::to_vec);
        let piece = prop_oneof![12 => record, 1 => odd];
        proptest::collection::vec(piece, 0..30).prop_map(|v| v.concat())
    }

    fn number_text() -> impl Strategy<Value = String> {
        let piece = prop_oneof![
            Just("0"),
            Just("7"),
            Just("12345678901234567890"),
            Just("."),
            Just("e"),
            Just("E"),
            Just("+"),
            Just("-"),
            Just("inf"),
            Just("INFINITY"),
            Just("nan"),
            Just("NaN"),
            Just("ity"),
            Just("x"),
            Just("_"),
            Just("99999"),
        ];
        proptest::collection::vec(piece, 0..7).prop_map(|v| v.concat())
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 2000, ..ProptestConfig::default() })]
        // Source of the check: Rust's standard library `str::parse::<f64>` (correctly rounded,
        // its documented grammar): the values read from the probe files must be the same
        // doubles, and the same texts must be refused.
        #[test]
        fn number_grammar_is_that_of_std(text in number_text()) {
            let ours = fast_float2::parse::<f64, _>(text.as_bytes()).ok();
            let std = text.parse::<f64>().ok();
            match (ours, std) {
                (Some(a), Some(b)) => prop_assert!(
                    a.to_bits() == b.to_bits() || (a.is_nan() && b.is_nan()),
                    "{}: {} vs {}", text, a, b
                ),
                (None, None) => {}
                _ => prop_assert!(false, "{}: {:?} vs {:?}", text, ours, std),
            }
        }

        // Checks the parser itself against the splitter (no external value): whenever the
        // fast parser takes a block, it reads the same ids, values, texts and lines.
        #[test]
        fn fast_parser_reads_what_the_splitter_reads(text in csv_text(), keep in any::<bool>()) {
            let layout = layout_of(3, &[2, 1], keep);
            let block = RawBlock { bytes: text.clone(), first_line: 3, newlines: 0, quoted: false };
            let mut fast = Rows::new(2, 4);
            if parse_fast(&layout, &block, &mut fast) {
                FAST_TAKEN.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                let plain = parse_plain(&layout, &block, Rows::new(2, 4));
                let plain = match plain {
                    Ok(Some(r)) => r,
                    other => {
                        return Err(TestCaseError::fail(format!(
                            "{:?}: fast took it, the splitter gave {:?}",
                            String::from_utf8_lossy(&text),
                            other.map(|o| o.map(|r| r.len()))
                        )))
                    }
                };
                prop_assert_eq!(rows_text(&fast), rows_text(&plain));
            }
        }
    }

    #[test]
    fn overflowing_figures_leave_empty_cells() {
        // ε32 overflows to −inf: class monotonic (R = 0), no order, and the formal-order
        // fallback is infinite (same as three_grid::estimate); the file gets an empty cell.
        let phi = [1.7e308, 1.7e308, -1.7e308];
        let fast = FastThreeGrid::new(H, &ThreeGridSettings::default()).unwrap();
        let e = fast.estimate(phi);
        // The scalar estimator refuses overflowing differences; the field leaves the cells
        // empty instead of writing an infinity.
        assert!(three_grid::estimate(H, phi, &ThreeGridSettings::default()).is_err());
        assert!(e.uncertainty.is_none_or(f64::is_infinite));
        let mut b = Vec::new();
        push_opt(&mut b, e.uncertainty);
        assert!(b.is_empty());
        let mut part = ColumnAcc::default();
        part.add(&e, phi[0]);
        let mut acc = ColumnAcc::default();
        acc.merge(&part, 1.0);
        let c = acc.finish("cp");
        assert_eq!(c.mean_relative, None);
        assert!(serde_json::to_string(&c)
            .unwrap()
            .contains("\"max_relative\":null"));
    }

    #[test]
    fn numbers_are_written_shortest_and_round_trip() {
        for v in [
            0.1 + 0.2,
            1e-7,
            1.5e300,
            -2.5,
            0.0,
            123456.789,
            1e16,
            9.999e-6,
        ] {
            let mut b = Vec::new();
            push_num(&mut b, v);
            let s = String::from_utf8(b).unwrap();
            assert_eq!(s.parse::<f64>().unwrap().to_bits(), v.to_bits(), "{s}");
            assert!(s.len() <= 24, "{s}");
        }
        // The written forms (the per-point file's documented notation).
        for (v, text) in [
            (2.0, "2"),
            (-0.0, "-0"),
            (1e16, "1e16"),
            (-1.2345678901234568e17, "-1.2345678901234568e17"),
            (1.5e300, "1.5e300"),
            (1e-7, "1e-7"),
            (0.00001, "0.00001"),
            (1e15, "1000000000000000"),
            (5e-324, "5e-324"),
        ] {
            let mut b = Vec::new();
            push_num(&mut b, v);
            assert_eq!(String::from_utf8(b).unwrap(), text);
        }
    }

    /// Compares the fast estimate with the general one at one point.
    fn same_as_general(fast: &FastThreeGrid, h: [f64; 3], phi: [f64; 3]) -> Result<(), String> {
        same_as_general_with(fast, h, phi, &ThreeGridSettings::default())
    }

    fn same_as_general_with(
        fast: &FastThreeGrid,
        h: [f64; 3],
        phi: [f64; 3],
        settings: &ThreeGridSettings,
    ) -> Result<(), String> {
        let g = three_grid::estimate(h, phi, settings).map_err(|e| e.to_string())?;
        let f = fast.estimate(phi);
        let close = |a: Option<f64>, b: Option<f64>, rel: f64, abs: f64| match (a, b) {
            (Some(x), Some(y)) => (x - y).abs() <= rel * x.abs().max(y.abs()) + abs,
            (None, None) => true,
            _ => false,
        };
        let ctx = || format!("h {h:?} phi {phi:?}: fast {f:?} general {g:?}");
        if f.convergence != g.convergence || f.governing != g.governing {
            return Err(ctx());
        }
        if !close(f.observed_order, g.observed_order, 1e-9, 1e-11) {
            return Err(format!("order: {}", ctx()));
        }
        // ext = φ1 + (φ1 − φ2)/(r21^p − 1): an order error δp moves it by about
        // |ε21| δp ln r21 r21^p/(r21^p − 1)², so the tolerance scales with the correction.
        let corr = g.uncertainty.unwrap_or(0.0);
        if !close(f.extrapolated, g.extrapolated, 1e-9, 1e-8 * corr) {
            return Err(format!("extrapolated: {}", ctx()));
        }
        if !close(f.uncertainty, g.uncertainty, 1e-8, 0.0) {
            return Err(format!("uncertainty: {}", ctx()));
        }
        Ok(())
    }

    fn diff() -> impl Strategy<Value = f64> {
        prop_oneof![
            (-3.0f64..3.0).prop_map(|e| 10f64.powf(e)),
            (-3.0f64..3.0).prop_map(|e| -(10f64.powf(e))),
            Just(0.0),
        ]
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 400, ..ProptestConfig::default() })]
        // Source of the check: the project's general three-mesh estimator
        // (`three_grid::estimate`, itself checked against Celik et al. 2008 Table 1): the fast
        // path must give the same class, order, extrapolated value and uncertainty.
        #[test]
        fn fast_path_equals_general_estimate(
            r21 in 1.05f64..3.0,
            r32 in prop_oneof![1.05f64..3.0, Just(0.0)],
            h1 in 1e-3f64..10.0,
            phi1 in -10.0f64..10.0,
            d21 in diff(),
            d32 in diff(),
            more in proptest::collection::vec((diff(), diff()), 8),
            order_max in prop_oneof![Just(20.0), 0.5f64..30.0],
            safety_factor in prop_oneof![Just(1.25), Just(3.0)],
            formal_order in prop_oneof![Just(2.0), Just(1.0)],
        ) {
            let r32 = if r32 == 0.0 { r21 } else { r32 };
            let h = [h1, h1 * r21, h1 * r21 * r32];
            let settings = ThreeGridSettings { safety_factor, order_max, formal_order };
            let fast = FastThreeGrid::new(h, &settings).unwrap();
            for (a, b) in std::iter::once((d21, d32)).chain(more) {
                let phi = [phi1, phi1 + a * 0.01, phi1 + a * 0.01 + b * 0.01];
                same_as_general_with(&fast, h, phi, &settings).map_err(TestCaseError::fail)?;
            }
        }

        // Manufactured data φ = φ0 + α h^p (analytic): the fast path recovers p and φ0.
        #[test]
        fn fast_path_recovers_manufactured_order(
            p in 0.3f64..6.0,
            r21 in 1.1f64..3.0,
            r32 in 1.1f64..3.0,
            alpha in prop_oneof![-2.0f64..-0.01, 0.01f64..2.0],
            phi0 in -10.0f64..10.0,
        ) {
            let h = [1.0, r21, r21 * r32];
            let phi = h.map(|hi| phi0 + alpha * hi.powf(p));
            prop_assume!((phi[1] - phi[0]).abs() > 1e-9 * phi0.abs().max(1.0));
            let e = FastThreeGrid::new(h, &ThreeGridSettings::default()).unwrap().estimate(phi);
            prop_assert_eq!(e.convergence, Convergence::Monotonic);
            let po = e.observed_order.unwrap();
            prop_assert!((po - p).abs() <= 1e-8 * p, "p {} vs {}", po, p);
            let tol = 1e-9 * phi.iter().fold(phi0.abs(), |m, v| m.max(v.abs()));
            prop_assert!((e.extrapolated.unwrap() - phi0).abs() <= tol);
        }
    }

    #[test]
    fn fast_path_edge_cases_match_general() {
        // Same source as the property test; hand-picked corners: orders near the cap and near
        // zero, R close to −1 with r32 > r21² (where the absolute-value form of the order
        // equation has a second root), tiny and round-off differences.
        let cases: &[[f64; 3]] = &[
            [1.0, 2.0, 4.0],
            [1.0, 1.2, 3.0],
            [1.0, 1.1, 1.21],
            [1.0, 3.0, 4.0],
        ];
        for &h in cases {
            let fast = FastThreeGrid::new(h, &ThreeGridSettings::default()).unwrap();
            let mut phis = vec![];
            for k in 0..200 {
                let t = k as f64 / 200.0;
                let rr = -1.0 + 10f64.powf(-8.0 * t); // R from −1 + 1e-8 to 0
                phis.push([1.0, 1.0 + 0.01 * rr, 1.0 + 0.01 * rr + 0.01]);
                let rm = 10f64.powf(-12.0 * t); // small R > 0: high orders
                phis.push([1.0, 1.0 + 1e-3 * rm, 1.0 + 1e-3 * rm + 1e-3]);
                let near = 0.3 + 1.5 * t; // around the divergence threshold
                phis.push([0.0, 0.1, 0.1 + 0.1 * near]);
            }
            phis.push([0.3, 0.3 + 1e-17, 0.3 - 1e-17]);
            phis.push([1.0, 1.0, 1.1]);
            phis.push([0.0, 1e-300, 2e-300]);
            for phi in phis {
                if let Err(e) = same_as_general(&fast, h, phi) {
                    panic!("{e}");
                }
            }
        }
    }
}
