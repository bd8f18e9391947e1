//! The weighted least-squares fits of one target point: linear (value and gradient) and full
//! quadratic, both centred on the target, on coordinates scaled by the neighbourhood's reach.

use super::{PointStatus, Transferred};

/// The most unknowns of any fit (the quadratic fit in 3-D).
const MAX_UNKNOWNS: usize = 10;

/// A pivot smaller than this share of the largest diagonal entry of the normal matrix means
/// the neighbours do not determine the fit (coincident, collinear or coplanar points).
const SINGULAR: f64 = 1e-10;

/// Weight of a neighbour at distance `r` from the target, with `reach` the distance of the
/// farthest neighbour: 1/(r/reach + 1/4)², between 0.64 (the farthest) and 16 (the target).
pub(super) fn weight(r: f64, reach: f64) -> f64 {
    let s = r / reach + 0.25;
    1.0 / (s * s)
}

/// Fits at `target` from `neighbours` (point, value, distance), nearest first.
pub(super) fn reconstruct<'a, const D: usize>(
    target: &[f64; D],
    neighbours: impl Iterator<Item = (&'a [f64; D], f64, f64)>,
    reach: f64,
    nearest_value: f64,
    error_factor: f64,
) -> Transferred {
    let quad_n = super::quadratic_unknowns(D);
    let lin_n = 1 + D;
    // Basis rows (quadratic basis; the linear fit uses its first 1 + D entries), weights and
    // values relative to the nearest point's value.
    let mut rows: Vec<([f64; MAX_UNKNOWNS], f64, f64)> = Vec::with_capacity(32);
    let mut spread: f64 = 0.0;
    for (p, v, r) in neighbours {
        let mut u = [0.0; D];
        for a in 0..D {
            u[a] = (p[a] - target[a]) / reach;
        }
        let mut b = [0.0; MAX_UNKNOWNS];
        b[0] = 1.0;
        b[1..=D].copy_from_slice(&u);
        let mut j = 1 + D;
        for a in 0..D {
            for c in a..D {
                b[j] = u[a] * u[c];
                j += 1;
            }
        }
        let dv = v - nearest_value;
        spread = spread.max(dv.abs());
        rows.push((b, weight(r, reach), dv));
    }
    let degenerate = Transferred {
        value: Some(nearest_value),
        error: Some(spread),
        status: PointStatus::Degenerate,
    };
    let Some(linear) = solve_weighted(&rows, lin_n) else {
        return degenerate;
    };
    let value = nearest_value + linear[0];
    if !value.is_finite() {
        return degenerate;
    }
    if let Some(quadratic) = solve_weighted(&rows, quad_n) {
        let difference = (linear[0] - quadratic[0]).abs() * error_factor;
        if difference.is_finite() {
            return Transferred {
                value: Some(value),
                error: Some(difference),
                status: PointStatus::Interior,
            };
        }
    }
    // The linear fit's largest residual at the neighbours.
    let residual = rows
        .iter()
        .map(|(b, _, dv)| {
            let fitted: f64 = (0..lin_n).map(|j| b[j] * linear[j]).sum();
            (dv - fitted).abs()
        })
        .fold(0.0, f64::max);
    Transferred {
        value: Some(value),
        error: Some(residual),
        status: PointStatus::LinearOnly,
    }
}

/// Solves the weighted least-squares problem on the first `n` basis functions of `rows`
/// (basis, weight, value) through the normal equations with partial pivoting. `None` where
/// there are fewer rows than unknowns or the normal matrix is (numerically) singular.
// Index loops read as the textbook elimination.
#[allow(clippy::needless_range_loop)]
fn solve_weighted(
    rows: &[([f64; MAX_UNKNOWNS], f64, f64)],
    n: usize,
) -> Option<[f64; MAX_UNKNOWNS]> {
    if n == 0 || n > MAX_UNKNOWNS || rows.len() < n {
        return None;
    }
    let mut m = [[0.0f64; MAX_UNKNOWNS + 1]; MAX_UNKNOWNS];
    for (b, w, v) in rows {
        for i in 0..n {
            let wb = w * b[i];
            for j in i..n {
                m[i][j] += wb * b[j];
            }
            m[i][n] += wb * v;
        }
    }
    for i in 0..n {
        for j in 0..i {
            m[i][j] = m[j][i];
        }
    }
    let scale = (0..n).map(|i| m[i][i].abs()).fold(0.0, f64::max);
    if !(scale > 0.0 && scale.is_finite()) {
        return None;
    }
    for col in 0..n {
        let pivot_row = (col..n).max_by(|&a, &b| m[a][col].abs().total_cmp(&m[b][col].abs()))?;
        if m[pivot_row][col].abs() <= SINGULAR * scale {
            return None;
        }
        m.swap(col, pivot_row);
        for r in col + 1..n {
            let f = m[r][col] / m[col][col];
            if f != 0.0 {
                for c in col..=n {
                    m[r][c] -= f * m[col][c];
                }
            }
        }
    }
    let mut x = [0.0; MAX_UNKNOWNS];
    for i in (0..n).rev() {
        let mut s = m[i][n];
        for j in i + 1..n {
            s -= m[i][j] * x[j];
        }
        x[i] = s / m[i][i];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn weights_stay_in_their_documented_range() {
        // Analytic: 1/(0 + 1/4)² = 16 at the target, 1/(1 + 1/4)² = 0.64 at the reach.
        assert!((weight(0.0, 2.0) - 16.0).abs() < 1e-12);
        assert!((weight(2.0, 2.0) - 0.64).abs() < 1e-12);
    }

    #[test]
    fn plane_through_three_points_is_solved_exactly() {
        // Analytic: v = 1 + 2u − 3w through (0,0), (1,0), (0,1).
        let row = |u: f64, w: f64| {
            let mut b = [0.0; MAX_UNKNOWNS];
            b[0] = 1.0;
            b[1] = u;
            b[2] = w;
            (b, 1.0, 1.0 + 2.0 * u - 3.0 * w)
        };
        let x = solve_weighted(&[row(0.0, 0.0), row(1.0, 0.0), row(0.0, 1.0)], 3).unwrap();
        assert!(
            (x[0] - 1.0).abs() < 1e-14 && (x[1] - 2.0).abs() < 1e-14 && (x[2] + 3.0).abs() < 1e-14
        );
    }

    #[test]
    fn collinear_points_have_no_plane() {
        // Analytic: three points on the line w = u do not determine a plane.
        let row = |u: f64| {
            let mut b = [0.0; MAX_UNKNOWNS];
            b[0] = 1.0;
            b[1] = u;
            b[2] = u;
            (b, 1.0, u)
        };
        assert!(solve_weighted(&[row(0.0), row(0.5), row(1.0)], 3).is_none());
        assert!(solve_weighted(&[row(0.0)], 3).is_none());
    }
}
