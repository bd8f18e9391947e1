//! Transfer of a coarser mesh's solution onto other points (the finest mesh's points or a
//! probe set), with an estimate of the transfer error at every target point.
//!
//! The source is a scattered set of points with one value each (2-D or 3-D, no connectivity).
//! At each target point the `k` nearest source points (a k-d tree, the `kiddo` crate) carry a
//! weighted linear least-squares fit (value and gradient, centred on the target); its value at
//! the target is the transferred value, second-order accurate for smooth fields. A weighted
//! quadratic fit to the same points gives a third-order value; the difference of the two is the
//! leading term of the linear fit's error, and [`TransferOptions::error_factor`] times it is
//! the stated transfer error. Targets away from the source's points are reported as
//! [`PointStatus::Outside`] with no value (never extrapolated); neighbourhoods on which no
//! linear fit exists (coincident or collinear points, too few points) give
//! [`PointStatus::Degenerate`] with the nearest point's value and the spread of the
//! neighbours' values as the error. docs/method.md, "Transfer between meshes", gives the
//! method, the numbers and their sources.
//!
//! The work is parallel over target points (rayon); every point is computed on its own, so the
//! output does not depend on the number of threads.

mod fit;

use std::num::NonZero;

use kiddo::{ImmutableKdTree, SquaredEuclidean};
use rayon::prelude::*;
use serde::Serialize;

/// Settings of a transfer. [`TransferOptions::for_dimension`] gives the documented defaults.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TransferOptions {
    /// Number of nearest source points in each fit (at least the quadratic fit's unknowns:
    /// 6 in 2-D, 10 in 3-D; default twice that, 12 and 20).
    pub neighbours: usize,
    /// A target farther than this multiple of the local source spacing (the largest
    /// nearest-neighbour distance among its neighbours) from its nearest source point is
    /// outside (default 3).
    pub gap_factor: f64,
    /// A target beyond the bounding box of its neighbours by more than this multiple of the
    /// local source spacing, along any axis, is outside (default 1).
    pub beyond_factor: f64,
    /// The stated transfer error is this multiple of |linear − quadratic| (default 3; the
    /// share of interior points it bounds is measured in docs/method.md).
    pub error_factor: f64,
}

impl TransferOptions {
    /// The defaults for points of dimension `d` (2 or 3).
    pub fn for_dimension(d: usize) -> Self {
        let quadratic = quadratic_unknowns(d);
        Self {
            neighbours: 2 * quadratic,
            gap_factor: 3.0,
            beyond_factor: 1.0,
            error_factor: 3.0,
        }
    }
}

/// Unknowns of the full quadratic fit in `d` dimensions: 1 + d + d(d+1)/2.
pub const fn quadratic_unknowns(d: usize) -> usize {
    1 + d + d * (d + 1) / 2
}

/// What became of one target point.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PointStatus {
    /// Inside the source's points: linear least squares, error from the quadratic fit.
    Interior,
    /// Inside, but no quadratic fit exists on the neighbours (too few or degenerate for it):
    /// linear value, error from the fit's largest residual (first-order, conservative).
    LinearOnly,
    /// No linear fit exists on the neighbours (coincident or collinear points, fewer points
    /// than unknowns): the nearest point's value, error the spread of the neighbours' values.
    Degenerate,
    /// Farther from the source than the documented limits: no value.
    Outside,
}

/// The transferred value at one target point.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Transferred {
    /// The transferred value; `None` where the point is outside.
    pub value: Option<f64>,
    /// The estimated transfer error (a magnitude, same unit as the values); `None` outside.
    pub error: Option<f64>,
    /// How the value was obtained.
    pub status: PointStatus,
}

/// Errors in the inputs of a transfer (the whole transfer is refused).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum TransferError {
    /// No source points.
    #[error("the source has no points")]
    EmptySource,
    /// Points and values differ in number.
    #[error("the source has {points} points but {values} values; expected one value per point")]
    LengthMismatch {
        /// Number of source points.
        points: usize,
        /// Number of source values.
        values: usize,
    },
    /// A source coordinate is NaN or infinite.
    #[error("source point {index} has a coordinate that is not a finite number")]
    SourceCoordinate {
        /// Index of the point (from 0).
        index: usize,
    },
    /// A source value is NaN or infinite.
    #[error("source value {index} is not a finite number")]
    SourceValue {
        /// Index of the value (from 0).
        index: usize,
    },
    /// A target coordinate is NaN or infinite.
    #[error("target point {index} has a coordinate that is not a finite number")]
    TargetCoordinate {
        /// Index of the target (from 0).
        index: usize,
    },
    /// Zero neighbours asked for.
    #[error("the number of neighbours is {0}; expected at least 1")]
    Neighbours(usize),
    /// A factor of the options is not a positive finite number.
    #[error("{name} is {value}; expected a positive finite number")]
    Factor {
        /// The option's name.
        name: &'static str,
        /// Its value.
        value: f64,
    },
}

/// A coarser mesh's points and values, indexed for transfers onto any number of target sets.
pub struct Source<const D: usize> {
    points: Vec<[f64; D]>,
    values: Vec<f64>,
    /// Per source point, the distance to its nearest distinct source point.
    spacing: Vec<f64>,
    tree: ImmutableKdTree<f64, D>,
}

impl<const D: usize> std::fmt::Debug for Source<D> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Source")
            .field("points", &self.points.len())
            .finish()
    }
}

/// How many neighbours are asked for when the spacing of a source point is measured (the
/// first at a positive distance counts; coincident copies beyond this are treated as one).
const SPACING_PROBE: usize = 8;

impl<const D: usize> Source<D> {
    /// Indexes the source. Refuses an empty source, mismatched lengths and non-finite numbers.
    pub fn new(points: Vec<[f64; D]>, values: Vec<f64>) -> Result<Self, TransferError> {
        if points.is_empty() {
            return Err(TransferError::EmptySource);
        }
        if points.len() != values.len() {
            return Err(TransferError::LengthMismatch {
                points: points.len(),
                values: values.len(),
            });
        }
        if let Some(index) = points.iter().position(|p| p.iter().any(|c| !c.is_finite())) {
            return Err(TransferError::SourceCoordinate { index });
        }
        if let Some(index) = values.iter().position(|v| !v.is_finite()) {
            return Err(TransferError::SourceValue { index });
        }
        let tree: ImmutableKdTree<f64, D> = ImmutableKdTree::new_from_slice(&points);
        // Fallback spacing where a point has no distinct neighbour among the probed ones: the
        // bounding box's diagonal over n^(1/D) (the mean spacing of a uniform cloud).
        let fallback = fallback_spacing(&points);
        let probe =
            NonZero::new(SPACING_PROBE.min(points.len()).max(1)).unwrap_or(NonZero::<usize>::MIN);
        let spacing = points
            .par_iter()
            .map(|p| {
                tree.nearest_n::<SquaredEuclidean>(p, probe)
                    .iter()
                    .map(|n| n.distance)
                    .find(|d| *d > 0.0)
                    .map_or(fallback, f64::sqrt)
            })
            .collect();
        Ok(Self {
            points,
            values,
            spacing,
            tree,
        })
    }

    /// Number of source points.
    pub fn len(&self) -> usize {
        self.points.len()
    }

    /// Always false: an empty source is refused by [`Source::new`].
    pub fn is_empty(&self) -> bool {
        self.points.is_empty()
    }

    /// The distance from source point `i` to its nearest distinct source point.
    pub fn spacing(&self, i: usize) -> Option<f64> {
        self.spacing.get(i).copied()
    }

    /// Transfers the source's values onto `targets`, one result per target in order.
    pub fn transfer(
        &self,
        targets: &[[f64; D]],
        options: &TransferOptions,
    ) -> Result<Vec<Transferred>, TransferError> {
        check_options(options)?;
        if let Some(index) = targets
            .iter()
            .position(|p| p.iter().any(|c| !c.is_finite()))
        {
            return Err(TransferError::TargetCoordinate { index });
        }
        let k = options.neighbours.min(self.points.len());
        let k = NonZero::new(k).ok_or(TransferError::Neighbours(options.neighbours))?;
        Ok(targets
            .par_iter()
            .map(|t| self.one(t, k, options))
            .collect())
    }

    fn one(&self, target: &[f64; D], k: NonZero<usize>, options: &TransferOptions) -> Transferred {
        let found = self.tree.nearest_n::<SquaredEuclidean>(target, k);
        let outside = Transferred {
            value: None,
            error: None,
            status: PointStatus::Outside,
        };
        let Some(first) = found.first() else {
            return outside;
        };
        let nearest = first.item as usize;
        // The local spacing: the largest nearest-neighbour spacing among the neighbours
        // (robust to one pair of close points beside a target).
        let spacing = found
            .iter()
            .map(|n| self.spacing[n.item as usize])
            .fold(0.0, f64::max);
        let d1 = first.distance.sqrt();
        if d1 > options.gap_factor * spacing {
            return outside;
        }
        // Beyond the neighbours' bounding box along some axis.
        let margin = options.beyond_factor * spacing;
        for (axis, &t) in target.iter().enumerate() {
            let (lo, hi) = found
                .iter()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), n| {
                    let c = self.points[n.item as usize][axis];
                    (lo.min(c), hi.max(c))
                });
            if t < lo - margin || t > hi + margin {
                return outside;
            }
        }
        let reach = found.last().map_or(0.0, |n| n.distance.sqrt());
        let reach = if reach > 0.0 { reach } else { spacing };
        fit::reconstruct::<D>(
            target,
            found.iter().map(|n| {
                let i = n.item as usize;
                (&self.points[i], self.values[i], n.distance.sqrt())
            }),
            reach,
            self.values[nearest],
            options.error_factor,
        )
    }
}

fn check_options(options: &TransferOptions) -> Result<(), TransferError> {
    if options.neighbours == 0 {
        return Err(TransferError::Neighbours(0));
    }
    for (name, value) in [
        ("gap_factor", options.gap_factor),
        ("beyond_factor", options.beyond_factor),
        ("error_factor", options.error_factor),
    ] {
        if !(value.is_finite() && value > 0.0) {
            return Err(TransferError::Factor { name, value });
        }
    }
    Ok(())
}

fn fallback_spacing<const D: usize>(points: &[[f64; D]]) -> f64 {
    let mut lo = [f64::INFINITY; D];
    let mut hi = [f64::NEG_INFINITY; D];
    for p in points {
        for a in 0..D {
            lo[a] = lo[a].min(p[a]);
            hi[a] = hi[a].max(p[a]);
        }
    }
    let diagonal = (0..D).map(|a| (hi[a] - lo[a]).powi(2)).sum::<f64>().sqrt();
    let s = diagonal / (points.len() as f64).powf(1.0 / D as f64);
    if s > 0.0 && s.is_finite() {
        s
    } else {
        // All points coincide: only the point itself is inside.
        f64::MIN_POSITIVE
    }
}

/// Convenience: index `points` and transfer onto `targets` with the defaults for `D`.
pub fn transfer<const D: usize>(
    points: Vec<[f64; D]>,
    values: Vec<f64>,
    targets: &[[f64; D]],
) -> Result<Vec<Transferred>, TransferError> {
    Source::new(points, values)?.transfer(targets, &TransferOptions::for_dimension(D))
}

/// Counts of each status among transferred points.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize)]
pub struct StatusCounts {
    /// [`PointStatus::Interior`] points.
    pub interior: usize,
    /// [`PointStatus::LinearOnly`] points.
    pub linear_only: usize,
    /// [`PointStatus::Degenerate`] points.
    pub degenerate: usize,
    /// [`PointStatus::Outside`] points.
    pub outside: usize,
}

impl StatusCounts {
    /// Counts the statuses of `results`.
    pub fn of(results: &[Transferred]) -> Self {
        let mut c = Self::default();
        for r in results {
            match r.status {
                PointStatus::Interior => c.interior += 1,
                PointStatus::LinearOnly => c.linear_only += 1,
                PointStatus::Degenerate => c.degenerate += 1,
                PointStatus::Outside => c.outside += 1,
            }
        }
        c
    }
}
