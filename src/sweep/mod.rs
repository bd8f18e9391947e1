//! Sweep numerics: curves of one response over one swept quantity, per mesh.
//!
//! A sweep is a set of points `(x, y)`: on each mesh, for example, a cavitation sweep of
//! decreasing Thoma number σ at fixed duty with the efficiency or head as the response. This
//! module holds the pure numerics for such curves; it reads no files and prints nothing.
//!
//! - [`interp`]: an [`Interpolant`] through the points, either the monotone piecewise-cubic
//!   Hermite interpolant of Fritsch & Carlson (1980, SIAM J. Numer. Anal. 17, 238–246) with
//!   the same derivative choice as `scipy.interpolate.PchipInterpolator`, or piecewise-linear.
//! - [`breakdown`]: [`find_breakdown_with`] reads the x at which the response first falls a
//!   set amount below its non-cavitating reference and stays below it for a set number of
//!   points or span of x ([`Persistence`]), scanning from high x downward; dips that come
//!   back are passed over and reported.
//! - [`overlap`] and [`common_abscissae`]: the common x values at which every mesh's curve can
//!   be compared (each mesh's σ values differ, because σ depends on that mesh's head).
//!
//! Points may be given in any order; the interpolant sorts them by x. Inputs that are not
//! finite, duplicated x values and too few points are refused with an error naming the
//! offending index and value; no function here panics on any input.

pub mod breakdown;
pub mod interp;

pub use breakdown::{
    find_breakdown, find_breakdown_with, Breakdown, BreakdownError, Dip, DropRule, Persistence,
    ReferenceKind,
};
pub use interp::{Interpolant, Interpolation};

/// Why a set of sweep points cannot be interpolated.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SweepError {
    /// The x and y lists differ in length.
    #[error(
        "the sweep has {x_len} x values but {y_len} response values; each point needs one of each"
    )]
    LengthMismatch {
        /// Number of x values given.
        x_len: usize,
        /// Number of response values given.
        y_len: usize,
    },
    /// Fewer than two points were given.
    #[error("a sweep curve needs at least 2 points, got {count}")]
    TooFewPoints {
        /// Number of points given.
        count: usize,
    },
    /// A value is NaN or infinite.
    #[error("the {axis} value at index {index} (counting from 0) is not a finite number: {value}")]
    NonFinite {
        /// `"x"` or `"y"`.
        axis: &'static str,
        /// Index in the list as given.
        index: usize,
        /// The offending value.
        value: f64,
    },
    /// Two points share one x value.
    #[error("x = {value} occurs twice (indices {first} and {second}, counting from 0); each x may occur only once")]
    DuplicateX {
        /// The lower of the two indices, in the list as given.
        first: usize,
        /// The higher of the two indices, in the list as given.
        second: usize,
        /// The shared x value.
        value: f64,
    },
    /// The interpolant's coefficients overflow (points extremely close in x with large
    /// differences in y).
    #[error("the curve between x = {lo} and x = {hi} cannot be represented in floating point (its slope overflows)")]
    NotRepresentable {
        /// Lower x of the interval.
        lo: f64,
        /// Upper x of the interval.
        hi: f64,
    },
}

/// The overlap `(lo, hi)` of all the given x ranges, or `None` when there is none.
///
/// Each range may be given as `(low, high)` or `(high, low)`. An empty list, a range with a
/// non-finite end, or ranges that share no x value give `None`. Ranges that touch in a single
/// point overlap in that point (`lo == hi`).
pub fn overlap(ranges: &[(f64, f64)]) -> Option<(f64, f64)> {
    let mut lo = f64::NEG_INFINITY;
    let mut hi = f64::INFINITY;
    if ranges.is_empty() {
        return None;
    }
    for &(a, b) in ranges {
        if !a.is_finite() || !b.is_finite() {
            return None;
        }
        lo = lo.max(a.min(b));
        hi = hi.min(a.max(b));
    }
    if lo <= hi {
        Some((lo, hi))
    } else {
        None
    }
}

/// The x values of the finest mesh that lie inside the overlap of all `ranges`, ascending and
/// without repeats.
///
/// These are the common abscissae at which every mesh's interpolant can be evaluated for a
/// pointwise comparison across meshes. The result is empty when the ranges do not overlap
/// (see [`overlap`]) or no finest-mesh x lies inside the overlap; non-finite entries of
/// `fine_x` are skipped.
pub fn common_abscissae(ranges: &[(f64, f64)], fine_x: &[f64]) -> Vec<f64> {
    let Some((lo, hi)) = overlap(ranges) else {
        return Vec::new();
    };
    let mut xs: Vec<f64> = fine_x
        .iter()
        .copied()
        .filter(|&v| v >= lo && v <= hi)
        // Adding +0.0 turns -0.0 into +0.0, so that `total_cmp` sees one zero.
        .map(|v| v + 0.0)
        .collect();
    xs.sort_by(f64::total_cmp);
    xs.dedup_by(|a, b| a.total_cmp(b).is_eq());
    xs
}

/// Formats a number for messages: six significant digits, trailing zeros removed.
pub(crate) fn fmt_num(v: f64) -> String {
    if !v.is_finite() {
        return format!("{v}");
    }
    if v == 0.0 {
        return "0".to_string();
    }
    let exp = v.abs().log10().floor();
    if (-5.0..7.0).contains(&exp) {
        // exp lies in -5..=6 here, so the cast is exact and the decimals stay small.
        let decimals = (5.0 - exp).max(0.0) as usize;
        trim_zeros(format!("{v:.decimals$}"))
    } else {
        let s = format!("{v:.5e}");
        match s.split_once('e') {
            Some((mantissa, e)) => format!("{}e{e}", trim_zeros(mantissa.to_string())),
            None => s,
        }
    }
}

fn trim_zeros(s: String) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    // Source for the overlap checks: set intersection of closed intervals (analytic).
    #[test]
    fn overlap_of_intervals() {
        let o = overlap(&[(0.1, 0.5), (0.2, 0.6), (0.45, 0.15)]);
        let Some((lo, hi)) = o else {
            panic!("expected an overlap, got {o:?}");
        };
        assert_relative_eq!(lo, 0.2, max_relative = 1e-15);
        assert_relative_eq!(hi, 0.45, max_relative = 1e-15);
        assert_eq!(overlap(&[(0.1, 0.2), (0.3, 0.4)]), None);
        assert_eq!(overlap(&[]), None);
        assert_eq!(overlap(&[(0.1, f64::NAN)]), None);
        assert_eq!(overlap(&[(0.1, 0.2), (0.2, 0.3)]), Some((0.2, 0.2)));
    }

    // Source: definition of the common abscissae (finest-mesh x inside the overlap), analytic.
    #[test]
    fn common_abscissae_pick_fine_points_inside_overlap() {
        let fine = [0.5, 0.1, 0.3, 0.2, 0.45, 0.4, f64::NAN, 0.3];
        let xs = common_abscissae(&[(0.12, 0.5), (0.2, 0.48)], &fine);
        assert_eq!(xs.len(), 4);
        for (got, want) in xs.iter().zip([0.2, 0.3, 0.4, 0.45]) {
            assert_relative_eq!(*got, want, max_relative = 1e-15);
        }
        assert!(common_abscissae(&[(0.1, 0.2), (0.3, 0.4)], &fine).is_empty());
        assert!(common_abscissae(&[(0.21, 0.29)], &fine).is_empty());
    }

    // Source: the formatting rule of this module (six significant digits), by hand.
    #[test]
    fn message_numbers() {
        assert_eq!(fmt_num(0.12), "0.12");
        assert_eq!(fmt_num(0.900009), "0.900009");
        assert_eq!(fmt_num(0.0031999999999999806), "0.0032");
        assert_eq!(fmt_num(-61.25), "-61.25");
        assert_eq!(fmt_num(0.0), "0");
        assert_eq!(fmt_num(1.5e-9), "1.5e-9");
        assert_eq!(fmt_num(2.5e12), "2.5e12");
        assert_eq!(fmt_num(1234567.0), "1234567");
    }
}
