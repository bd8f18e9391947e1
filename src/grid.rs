//! Representative cell sizes and refinement ratios (Celik et al. 2008, eq. 1).
//!
//! A mesh's representative size is, in order of precedence:
//! 1. the `size` given in the study (absolute h);
//! 2. `(extent / cells)^(1/d)` when the domain extent (volume in 3-D, area in 2-D) is given;
//! 3. relative to the finest mesh, `(N_1 / N_i)^(1/d)`, when only cell counts are given
//!    (valid when every mesh covers the same domain; only ratios matter then).
//!
//! Absolute and relative sizes cannot be mixed in one study.

use serde::Serialize;

/// What the study says about one mesh's size.
#[derive(Debug, Clone, PartialEq)]
pub struct MeshSpec {
    /// Mesh name, unique in the study.
    pub name: String,
    /// Cell count, if given.
    pub cells: Option<f64>,
    /// Representative cell size h, if given (absolute).
    pub size: Option<f64>,
    /// Domain volume (3-D) or area (2-D), if given.
    pub extent: Option<f64>,
}

/// One mesh with its representative size, ready for the estimators.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Mesh {
    /// Mesh name.
    pub name: String,
    /// Cell count, when given.
    #[serde(serialize_with = "serialize_cells")]
    pub cells: Option<f64>,
    /// Representative size h (relative to the finest = 1.0 when only cell counts are given).
    pub size: f64,
    /// h of this mesh over h of the next finer mesh; `None` for the finest.
    pub ratio: Option<f64>,
}

fn serialize_cells<S: serde::Serializer>(cells: &Option<f64>, s: S) -> Result<S::Ok, S::Error> {
    match cells {
        Some(c) if c.fract() == 0.0 && *c >= 0.0 && *c < 9.007_199_254_740_992e15 => {
            s.serialize_u64(*c as u64)
        }
        Some(c) => s.serialize_f64(*c),
        None => s.serialize_none(),
    }
}

/// How the sizes were obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SizeBasis {
    /// Absolute sizes (from `size` or `extent`).
    Absolute,
    /// Relative sizes from cell counts alone, finest = 1.0.
    Relative,
}

/// Why sizes could not be formed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum GridError {
    /// A mesh gives neither `size` nor `cells`.
    #[error("mesh `{0}` gives neither `cells` nor `size`: one of them is needed for its representative size")]
    NoSize(String),
    /// Some meshes give absolute sizes and others only cell counts.
    #[error("meshes {absolute} give an absolute size (`size` or `extent`) but {relative} give only `cells`: give every mesh the same kind")]
    Mixed {
        /// Names with absolute sizes.
        absolute: String,
        /// Names with relative sizes.
        relative: String,
    },
    /// Two meshes have the same representative size.
    #[error("meshes `{0}` and `{1}` have the same representative size h = {2}: a refinement study needs distinct sizes")]
    SameSize(String, String, f64),
    /// A computed size is not a finite positive number.
    #[error("mesh `{0}`: the representative size is not a finite number > 0")]
    BadSize(String),
}

/// Computes sizes for every mesh and returns them sorted finest first, with ratios,
/// and the index each mesh had in the input.
pub fn sizes(
    specs: &[MeshSpec],
    dimension: u32,
) -> Result<(Vec<Mesh>, Vec<usize>, SizeBasis), GridError> {
    let d = f64::from(dimension.max(1));
    let absolute: Vec<&MeshSpec> = specs
        .iter()
        .filter(|m| m.size.is_some() || (m.extent.is_some() && m.cells.is_some()))
        .collect();
    let basis = if absolute.is_empty() {
        SizeBasis::Relative
    } else if absolute.len() == specs.len() {
        SizeBasis::Absolute
    } else {
        let names = |abs: bool| {
            specs
                .iter()
                .filter(|m| (m.size.is_some() || (m.extent.is_some() && m.cells.is_some())) == abs)
                .map(|m| format!("`{}`", m.name))
                .collect::<Vec<_>>()
                .join(", ")
        };
        return Err(GridError::Mixed {
            absolute: names(true),
            relative: names(false),
        });
    };
    let finest_cells = specs
        .iter()
        .filter_map(|m| m.cells)
        .fold(f64::NEG_INFINITY, f64::max);
    let mut raw: Vec<(usize, f64)> = Vec::with_capacity(specs.len());
    for (i, m) in specs.iter().enumerate() {
        let h = match (basis, m.size, m.extent, m.cells) {
            (SizeBasis::Absolute, Some(h), _, _) => h,
            (SizeBasis::Absolute, None, Some(v), Some(n)) => (v / n).powf(1.0 / d),
            (SizeBasis::Relative, _, _, Some(n)) => (finest_cells / n).powf(1.0 / d),
            _ => return Err(GridError::NoSize(m.name.clone())),
        };
        if !(h.is_finite() && h > 0.0) {
            return Err(GridError::BadSize(m.name.clone()));
        }
        raw.push((i, h));
    }
    raw.sort_by(|a, b| a.1.total_cmp(&b.1));
    for w in raw.windows(2) {
        // Sizes equal to within round-off are the same mesh size.
        if (w[1].1 - w[0].1).abs() <= 1e-12 * w[1].1 {
            return Err(GridError::SameSize(
                specs[w[0].0].name.clone(),
                specs[w[1].0].name.clone(),
                w[0].1,
            ));
        }
    }
    let mut out = Vec::with_capacity(raw.len());
    let mut prev: Option<f64> = None;
    for &(i, h) in &raw {
        out.push(Mesh {
            name: specs[i].name.clone(),
            cells: specs[i].cells,
            size: h,
            ratio: prev.map(|p| h / p),
        });
        prev = Some(h);
    }
    Ok((out, raw.iter().map(|r| r.0).collect(), basis))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn spec(name: &str, cells: Option<f64>, size: Option<f64>) -> MeshSpec {
        MeshSpec {
            name: name.into(),
            cells,
            size,
            extent: None,
        }
    }

    #[test]
    fn relative_sizes_from_cells_sorted_finest_first() {
        // Celik et al. (2008) Table 1 cell counts, 2-D: r21 = (18000/8000)^(1/2) = 1.5,
        // r32 = (8000/4500)^(1/2) = 1.3333 (analytic).
        let specs = [
            spec("c", Some(4500.0), None),
            spec("a", Some(18000.0), None),
            spec("b", Some(8000.0), None),
        ];
        let (m, order, basis) = sizes(&specs, 2).unwrap();
        assert_eq!(basis, SizeBasis::Relative);
        assert_eq!(order, vec![1, 2, 0]);
        assert_eq!(m[0].name, "a");
        assert_relative_eq!(m[0].size, 1.0, max_relative = 1e-15);
        assert_relative_eq!(m[1].ratio.unwrap(), 1.5, max_relative = 1e-14);
        assert_relative_eq!(m[2].ratio.unwrap(), 4.0 / 3.0, max_relative = 1e-14);
        assert!(m[0].ratio.is_none());
    }

    #[test]
    fn extent_gives_absolute_size() {
        // h = (V/N)^(1/3): V = 8, N = 1000 -> h = 0.2 (analytic)
        let specs = [
            MeshSpec {
                name: "a".into(),
                cells: Some(1000.0),
                size: None,
                extent: Some(8.0),
            },
            MeshSpec {
                name: "b".into(),
                cells: Some(125.0),
                size: None,
                extent: Some(8.0),
            },
        ];
        let (m, _, basis) = sizes(&specs, 3).unwrap();
        assert_eq!(basis, SizeBasis::Absolute);
        assert_relative_eq!(m[0].size, 0.2, max_relative = 1e-14);
        assert_relative_eq!(m[1].size, 0.4, max_relative = 1e-14);
    }

    #[test]
    fn size_overrides_cells_and_mixing_is_refused() {
        let ok = [spec("a", Some(10.0), Some(0.1)), spec("b", None, Some(0.2))];
        let (m, _, _) = sizes(&ok, 3).unwrap();
        assert_relative_eq!(m[1].ratio.unwrap(), 2.0, max_relative = 1e-15);
        let mixed = [spec("a", Some(10.0), Some(0.1)), spec("b", Some(5.0), None)];
        assert!(matches!(sizes(&mixed, 3), Err(GridError::Mixed { .. })));
    }

    #[test]
    fn equal_sizes_are_refused() {
        let specs = [spec("a", Some(100.0), None), spec("b", Some(100.0), None)];
        let err = sizes(&specs, 3).unwrap_err();
        assert!(matches!(err, GridError::SameSize(..)), "{err}");
    }
}
