//! Quantities read from monitor histories (`quantities.<name>.history`): each mesh's file
//! reduced by [`crate::history`] to a value and the uncertainty the history itself carries,
//! which becomes that mesh's iterative uncertainty U_I (docs/method.md, "Monitor histories").
//!
//! U_I of one mesh (a project decision, documented): for the mean of the steady part, the
//! expanded statistical uncertainty of the mean (95 %) combined by root-sum-square with the
//! drift of the final window (a mean of a drifting history is biased by up to that much); for
//! the last sample, a minimum or a maximum, the larger of the final window's half range (Stern
//! et al. 2001, U_I = ½(S_U − S_L), from memory) and its drift. Where the history is too short
//! for a statistical uncertainty, the final window's figure stands in and the history's
//! warning says so.

use super::raw::{RawHistory, RawReduction};
use super::reach::Reach;
use super::{At, StudyError};
use crate::grid::Mesh;
use crate::history::read::ReadOptions;
use crate::history::{self, HistoryError, HistoryResult, HistorySettings, Reduction, Status};
use std::path::{Path, PathBuf};

/// A history's samples thinned for drawing (abscissa, value), and the abscissa's name.
pub type Trace = (Vec<(f64, f64)>, Option<String>);

/// What the histories of one quantity give, per mesh (in the order of the study's meshes).
#[derive(Debug, Clone, PartialEq)]
pub struct QuantityHistories {
    /// The reduced value of each mesh.
    pub values: Vec<f64>,
    /// U_I of each mesh.
    pub iterative: Vec<Option<f64>>,
    /// Each mesh's reduction.
    pub results: Vec<HistoryResult>,
    /// The files read, in mesh order.
    pub files: Vec<PathBuf>,
    /// Each mesh's samples thinned for drawing, and the abscissa's name.
    pub traces: Vec<Trace>,
}

/// Warnings of a history about the mean of its steady part: they do not concern a value that
/// is the last sample, a minimum or a maximum.
pub const MEAN_WARNINGS: [&str; 5] = [
    "steady_part_not_found",
    "history_too_short",
    "batch_means_correlated",
    "correlation_window_not_found",
    "statistical_estimates_disagree",
];

/// Leaves out of `r.warnings` those about the mean when the value is not the mean.
pub fn keep_relevant_warnings(r: &mut HistoryResult) {
    if r.reduction != Reduction::Mean {
        r.warnings
            .retain(|w| !MEAN_WARNINGS.contains(&w.code.as_str()));
    }
}

/// U_I of one reduced history (see the module documentation).
pub fn iterative_of(r: &HistoryResult) -> Option<f64> {
    let window = r.iterative.as_ref();
    match (r.reduction, r.status, &r.statistical) {
        (Reduction::Mean, Status::Steady, Some(s)) => {
            let drift = window.map_or(0.0, |w| w.drift);
            Some(s.expanded.hypot(drift))
        }
        _ => window.map(|w| w.value),
    }
}

fn reduction(r: Option<RawReduction>) -> Reduction {
    match r {
        None | Some(RawReduction::Mean) => Reduction::Mean,
        Some(RawReduction::Last) => Reduction::Last,
        Some(RawReduction::Min) => Reduction::Min,
        Some(RawReduction::Max) => Reduction::Max,
    }
}

/// A history error as a study error: the history file with its line and column where the
/// reader knows them, the study's key otherwise.
pub fn error_of(e: HistoryError, key: &str, at: &At<'_>) -> StudyError {
    match e.path() {
        Some(path) => StudyError {
            file: path.to_path_buf(),
            key: key.to_string(),
            line: e.line().and_then(|l| usize::try_from(l).ok()),
            column: e.column().and_then(|c| usize::try_from(c).ok()),
            message: match &e {
                HistoryError::At { message, .. } | HistoryError::File { message, .. } => {
                    message.clone()
                }
                other => other.to_string(),
            },
        },
        None => at.err(key, e.to_string()),
    }
}

/// Reads and reduces the history of every mesh of quantity `qname`. Every mesh needs a file;
/// no other names are allowed; each file must lie where the study may read.
pub fn read(
    qname: &str,
    h: &RawHistory,
    meshes: &[Mesh],
    study: &Path,
    reach: &Reach,
    at: &At<'_>,
) -> Result<QuantityHistories, StudyError> {
    let key = format!("quantities.{qname}.history");
    for name in h.files.keys() {
        if !meshes.iter().any(|m| &m.name == name) {
            return Err(at.err(
                format!("{key}.files.{name}"),
                format!("names the mesh `{name}`, which is not in `meshes`"),
            ));
        }
    }
    let mut settings = HistorySettings {
        reduction: reduction(h.reduce),
        ..HistorySettings::default()
    };
    if let Some(b) = h.batches {
        settings.batches = b;
    }
    if let Some(f) = h.final_share {
        settings.final_share = f;
    }
    let mut read = ReadOptions::column(h.column.to_ref());
    read.abscissa = h.abscissa.as_ref().map(|c| c.to_ref());
    let base = study.parent().unwrap_or(Path::new(""));
    let mut out = QuantityHistories {
        values: Vec::with_capacity(meshes.len()),
        iterative: Vec::with_capacity(meshes.len()),
        results: Vec::with_capacity(meshes.len()),
        files: Vec::with_capacity(meshes.len()),
        traces: Vec::with_capacity(meshes.len()),
    };
    for m in meshes {
        let mkey = format!("{key}.files.{}", m.name);
        let given = h.files.get(&m.name).ok_or_else(|| {
            at.err(
                format!("{key}.files"),
                format!(
                    "has no file for the mesh `{}`: give one history per mesh",
                    m.name
                ),
            )
        })?;
        let file = base.join(given);
        reach.read(given, &file).map_err(|msg| at.err(&mkey, msg))?;
        let series = match &h.minus {
            None => {
                history::read::read_history(&file, &read).map_err(|e| error_of(e, &mkey, at))?
            }
            Some(minus) => history::read::read_difference(&file, &read, &minus.to_ref())
                .map_err(|e| error_of(e, &mkey, at))?,
        };
        let mut r = history::analyse(&series, &settings).map_err(|e| error_of(e, &mkey, at))?;
        keep_relevant_warnings(&mut r);
        let index: Vec<f64>;
        let x = match &series.abscissa {
            Some(x) => x.as_slice(),
            None => {
                index = (1..=series.values.len()).map(|i| i as f64).collect();
                &index
            }
        };
        out.traces.push((
            history::plot::thinned(x, &series.values),
            series.abscissa_name.clone(),
        ));
        if !r.value.is_finite() {
            return Err(at.err(
                mkey,
                "the history reduces to a value that is not finite".into(),
            ));
        }
        out.values.push(r.value);
        out.iterative.push(iterative_of(&r));
        out.results.push(r);
        out.files.push(file);
    }
    Ok(out)
}
