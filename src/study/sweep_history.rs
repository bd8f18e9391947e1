//! A sweep read from one monitor history per mesh: the solver ran the operating points one
//! after the other, and a column of the history (for example `sigma`) holds the operating
//! point of every iteration. The history is split into points — runs of rows with the same
//! operating-point value — and every response of every point is reduced like a quantity's
//! history ([`crate::history`]): its value is the mean of the point's statistically steady part
//! (or the reduction asked for), and its U_I the noise it carries
//! ([`super::history_input::iterative_of`]), so that breakdown and bands see the noise of every
//! point.
//!
//! The columns are joined on the history's iteration or time column, which a sweep history
//! must name: a sample missing from one column (an empty field, `nan`) then drops that row
//! from every column instead of shifting one against the others.

use super::history_input::iterative_of;
use crate::history::read::{read_history, ColumnRef, ReadOptions, Series};
use crate::history::{analyse_values, HistoryError, HistoryResult, HistorySettings};
use crate::warning::Warning;
use std::path::Path;

/// The fewest rows an operating point must hold to be reduced.
pub const MIN_POINT_SAMPLES: usize = 10;

/// One operating point of a sweep history.
#[derive(Debug, Clone, PartialEq)]
pub struct HistoryPoint {
    /// The operating-point value (the sweep's abscissa).
    pub x: f64,
    /// The iteration or time of its first row.
    pub from: f64,
    /// Rows in it.
    pub samples: usize,
    /// Per response: the reduction.
    pub results: Vec<HistoryResult>,
}

/// A sweep read from a history: points in file order.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepHistory {
    /// Operating-point values.
    pub x: Vec<f64>,
    /// Per response, its value at every point.
    pub responses: Vec<Vec<f64>>,
    /// Per response, its U_I at every point.
    pub noise: Vec<Vec<Option<f64>>>,
    /// The points with their reductions.
    pub points: Vec<HistoryPoint>,
    /// Reader warnings and the points left out (`history_point_too_short`).
    pub warnings: Vec<Warning>,
}

fn column(path: &Path, c: &ColumnRef, abscissa: &ColumnRef) -> Result<Series, HistoryError> {
    let mut opts = ReadOptions::column(c.clone());
    opts.abscissa = Some(abscissa.clone());
    read_history(path, &opts)
}

/// Keeps the samples of `s` whose abscissa is in `keep` (both increasing), in order.
fn on(s: &Series, keep: &[f64]) -> Vec<f64> {
    let x = s.abscissa.as_deref().unwrap_or(&[]);
    let mut out = Vec::with_capacity(keep.len());
    let mut j = 0;
    for (xi, v) in x.iter().zip(&s.values) {
        while j < keep.len() && keep[j] < *xi {
            j += 1;
        }
        if j < keep.len() && keep[j].total_cmp(xi).is_eq() {
            out.push(*v);
            j += 1;
        }
    }
    out
}

/// The abscissae every series has (each series' abscissa increasing).
fn common(series: &[Series]) -> Vec<f64> {
    let mut keep: Vec<f64> = series
        .first()
        .and_then(|s| s.abscissa.clone())
        .unwrap_or_default();
    for s in &series[1..] {
        let x = s.abscissa.as_deref().unwrap_or(&[]);
        let mut next = Vec::with_capacity(keep.len());
        let (mut i, mut j) = (0, 0);
        while i < keep.len() && j < x.len() {
            match keep[i].total_cmp(&x[j]) {
                std::cmp::Ordering::Less => i += 1,
                std::cmp::Ordering::Greater => j += 1,
                std::cmp::Ordering::Equal => {
                    next.push(keep[i]);
                    i += 1;
                    j += 1;
                }
            }
        }
        keep = next;
    }
    keep
}

/// Reads the sweep history in `path`: the operating point from column `point`, the responses
/// from `responses`, joined on `abscissa`; each point reduced with `settings`.
pub fn read(
    path: &Path,
    point: &ColumnRef,
    abscissa: &ColumnRef,
    responses: &[ColumnRef],
    settings: &HistorySettings,
) -> Result<SweepHistory, HistoryError> {
    let mut series = vec![column(path, point, abscissa)?];
    for r in responses {
        series.push(column(path, r, abscissa)?);
    }
    let mut warnings: Vec<Warning> = Vec::new();
    for s in &series {
        for w in &s.warnings {
            if !warnings
                .iter()
                .any(|x| x.code == w.code && x.message == w.message)
            {
                warnings.push(w.clone());
            }
        }
    }
    if let Some(s) = series.iter().find(|s| {
        s.abscissa
            .as_deref()
            .is_some_and(|x| x.windows(2).any(|w| w[1] <= w[0]))
    }) {
        return Err(HistoryError::File {
            path: path.to_path_buf(),
            message: format!(
                "the column `{}` does not increase from row to row: a sweep history is joined on its iteration or time column, which must",
                s.abscissa_name.as_deref().unwrap_or("abscissa")
            ),
        });
    }
    let keep = common(&series);
    let columns: Vec<Vec<f64>> = series.iter().map(|s| on(s, &keep)).collect();
    let ops = &columns[0];
    let mut out = SweepHistory {
        x: Vec::new(),
        responses: vec![Vec::new(); responses.len()],
        noise: vec![Vec::new(); responses.len()],
        points: Vec::new(),
        warnings,
    };
    let mut start = 0;
    while start < ops.len() {
        let mut end = start + 1;
        while end < ops.len() && ops[end].total_cmp(&ops[start]).is_eq() {
            end += 1;
        }
        let (x, from, n) = (ops[start], keep[start], end - start);
        if n < MIN_POINT_SAMPLES {
            out.warnings.push(Warning::new(
                "history_point_too_short",
                format!(
                    "{}: the operating point {x} from {from} holds {n} rows, fewer than \
                     {MIN_POINT_SAMPLES}: left out",
                    path.display()
                ),
            ));
            start = end;
            continue;
        }
        let mut results = Vec::with_capacity(responses.len());
        for (k, col) in columns[1..].iter().enumerate() {
            let mut r = analyse_values(&col[start..end], Some(&keep[start..end]), settings)?;
            r.column = series[k + 1].column.clone();
            super::history_input::keep_relevant_warnings(&mut r);
            out.responses[k].push(r.value);
            out.noise[k].push(iterative_of(&r));
            results.push(r);
        }
        out.x.push(x);
        out.points.push(HistoryPoint {
            x,
            from,
            samples: n,
            results,
        });
        start = end;
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn a_stepped_history_splits_into_its_points() {
        // Manufactured: three operating points of 50 rows each; the response relaxes to
        // 1, 2, 3 with e^(−k/3) from the previous level (analytic limits), one `nan` row.
        let dir = tempfile::tempdir().expect("a temporary folder");
        let path = dir.path().join("monitor.dat");
        let mut text = String::from("# Iteration sigma eta\n");
        let mut it = 0;
        let mut prev = 0.0_f64;
        for (sigma, level) in [(0.4, 1.0), (0.3, 2.0), (0.2, 3.0)] {
            for k in 0..50 {
                it += 1;
                let v = level + (prev - level) * (-(k as f64) / 3.0).exp();
                if it == 60 {
                    text.push_str(&format!("{it} {sigma} nan\n"));
                } else {
                    text.push_str(&format!("{it} {sigma} {v}\n"));
                }
            }
            prev = level;
        }
        // A point too short to reduce.
        for _ in 0..3 {
            it += 1;
            text.push_str(&format!("{it} 0.1 4\n"));
        }
        std::fs::write(&path, text).expect("written");
        let name = |s: &str| ColumnRef::Name(s.into());
        let settings = HistorySettings {
            reduction: crate::history::Reduction::Last,
            ..HistorySettings::default()
        };
        let s = read(
            &path,
            &name("sigma"),
            &name("Iteration"),
            &[name("eta")],
            &settings,
        )
        .expect("read");
        assert_eq!(s.x, vec![0.4, 0.3, 0.2]);
        for (v, want) in s.responses[0].iter().zip([1.0, 2.0, 3.0]) {
            assert_relative_eq!(*v, want, max_relative = 1e-6);
        }
        assert_eq!(
            s.points[1].samples, 49,
            "the nan row is dropped from the point"
        );
        assert!(s
            .warnings
            .iter()
            .any(|w| w.code == "history_point_too_short"));
        assert!(s.warnings.iter().any(|w| w.code == "samples_skipped"));
        assert!(s.noise[0].iter().all(Option::is_some));
    }
}
