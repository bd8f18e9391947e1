//! Lengths, areas and volumes of VTK cells, and the share of them each point of a mesh stands
//! for: the weights of a field's class shares (docs/method.md §16).
//!
//! Only the cells of the highest dimension present count (a volume mesh's boundary faces do
//! not add area to a volume). A cell's measure is split equally among the points it lists.
//! Measures: a line or poly-line, the sum of its segments; a polygon (triangle, quad, pixel,
//! polygon, strip), the magnitude of its vector area (exact for a plane polygon in any
//! orientation); a solid (tetrahedron, voxel, hexahedron, wedge, pyramid), the divergence
//! theorem over its faces, each face fanned into triangles from its first point and every
//! triangle closed into a tetrahedron with the cell's vertex mean (exact for plane faces).
//! Quadratic cells count by their corner points. Other cell types (polyhedra, higher-order
//! Lagrange cells) have measure 0 and carry no weight.

use crate::vtk::Mesh;

/// What the measures are.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// Lengths (line cells).
    Length,
    /// Areas (surface cells).
    Area,
    /// Volumes (solid cells).
    Volume,
}

impl Kind {
    /// The word used in the summary (`length`, `area`, `volume`).
    pub fn word(self) -> &'static str {
        match self {
            Kind::Length => "length",
            Kind::Area => "area",
            Kind::Volume => "volume",
        }
    }
}

/// Dimension of a VTK cell type and how many leading points are its corners (`None`: not
/// measured; the count 0 means every point listed).
fn shape(t: u8) -> Option<(u8, usize)> {
    Some(match t {
        3 | 4 => (1, 0),
        21 => (1, 2),
        5..=9 => (2, 0),
        22 => (2, 3),
        23 | 28 => (2, 4),
        10..=14 => (3, 0),
        24 => (3, 4),
        25 | 29 => (3, 8),
        26 => (3, 6),
        27 => (3, 5),
        _ => return None,
    })
}

/// The solid type a quadratic solid's corners form.
fn corner_type(t: u8) -> u8 {
    match t {
        21 => 3,
        22 => 5,
        23 | 28 => 9,
        24 => 10,
        25 | 29 => 12,
        26 => 13,
        27 => 14,
        t => t,
    }
}

fn sub(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

fn norm(a: [f64; 3]) -> f64 {
    dot(a, a).sqrt()
}

/// Vector area of a closed polygon (half the sum of the cross products of its edges' ends).
fn vector_area(p: &[[f64; 3]]) -> [f64; 3] {
    let mut s = [0.0; 3];
    let Some(&o) = p.first() else {
        return s;
    };
    for w in p.windows(2).skip(1) {
        let c = cross(sub(w[0], o), sub(w[1], o));
        s = [s[0] + c[0], s[1] + c[1], s[2] + c[2]];
    }
    [0.5 * s[0], 0.5 * s[1], 0.5 * s[2]]
}

const HEXA_FACES: [&[usize]; 6] = [
    &[0, 3, 2, 1],
    &[4, 5, 6, 7],
    &[0, 1, 5, 4],
    &[1, 2, 6, 5],
    &[2, 3, 7, 6],
    &[3, 0, 4, 7],
];
const WEDGE_FACES: [&[usize]; 5] = [
    &[0, 1, 2],
    &[3, 5, 4],
    &[0, 3, 4, 1],
    &[1, 4, 5, 2],
    &[2, 5, 3, 0],
];
const PYRAMID_FACES: [&[usize]; 5] = [
    &[0, 3, 2, 1],
    &[0, 1, 4],
    &[1, 2, 4],
    &[2, 3, 4],
    &[3, 0, 4],
];
const TETRA_FACES: [&[usize]; 4] = [&[0, 2, 1], &[0, 1, 3], &[1, 2, 3], &[0, 3, 2]];

/// Volume enclosed by faces (point indices into `p`), by the divergence theorem.
fn solid(p: &[[f64; 3]], faces: &[&[usize]]) -> f64 {
    let n = p.len() as f64;
    let c = p.iter().fold([0.0; 3], |s, q| {
        [s[0] + q[0] / n, s[1] + q[1] / n, s[2] + q[2] / n]
    });
    let mut v = 0.0;
    for f in faces {
        let Some(&a) = f.first() else { continue };
        for w in f.windows(2).skip(1) {
            let (Some(&pa), Some(&pb), Some(&pc)) = (p.get(a), p.get(w[0]), p.get(w[1])) else {
                return 0.0;
            };
            v += dot(sub(pa, c), cross(sub(pb, c), sub(pc, c)));
        }
    }
    (v / 6.0).abs()
}

/// The measure of one cell of type `t` with corner points `p` (in the cell's order).
fn cell_measure(t: u8, p: &[[f64; 3]]) -> f64 {
    match corner_type(t) {
        3 | 4 => p.windows(2).map(|w| norm(sub(w[1], w[0]))).sum(),
        5 | 7 | 9 => norm(vector_area(p)),
        8 if p.len() == 4 => norm(vector_area(&[p[0], p[1], p[3], p[2]])),
        6 => p.windows(3).map(|w| norm(vector_area(w))).sum(),
        10 if p.len() == 4 => solid(p, &TETRA_FACES),
        11 if p.len() == 8 => {
            let h = [p[0], p[1], p[3], p[2], p[4], p[5], p[7], p[6]];
            solid(&h, &HEXA_FACES)
        }
        12 if p.len() == 8 => solid(p, &HEXA_FACES),
        13 if p.len() == 6 => solid(p, &WEDGE_FACES),
        14 if p.len() == 5 => solid(p, &PYRAMID_FACES),
        _ => 0.0,
    }
}

/// The measure each cell of the highest dimension present stands for (other cells 0), and
/// its kind; `None` when the mesh has no cell with a length, area or volume.
pub fn cell_measures(mesh: &Mesh) -> Option<(Vec<f64>, Kind)> {
    let dim = mesh
        .types
        .iter()
        .filter_map(|&t| shape(t))
        .map(|s| s.0)
        .max()?;
    let mut start = 0usize;
    let mut out = Vec::with_capacity(mesh.offsets.len());
    let mut corners: Vec<[f64; 3]> = Vec::with_capacity(8);
    for (&t, &end) in mesh.types.iter().zip(&mesh.offsets) {
        let end = end as usize;
        let ids = mesh.connectivity.get(start..end).unwrap_or(&[]);
        start = end;
        let m = match shape(t) {
            Some((d, k)) if d == dim => {
                let ids = if k > 0 { &ids[..k.min(ids.len())] } else { ids };
                corners.clear();
                corners.extend(
                    ids.iter()
                        .filter_map(|&i| mesh.points.get(i as usize).copied()),
                );
                let m = cell_measure(t, &corners);
                if m.is_finite() {
                    m
                } else {
                    0.0
                }
            }
            _ => 0.0,
        };
        out.push(m);
    }
    let kind = match dim {
        1 => Kind::Length,
        2 => Kind::Area,
        _ => Kind::Volume,
    };
    Some((out, kind))
}

/// The share of the mesh each point stands for: every measured cell's measure split equally
/// among the points it lists (a point listed twice in one cell counts twice).
pub fn point_measures(mesh: &Mesh, cells: &[f64]) -> Vec<f64> {
    let mut w = vec![0.0; mesh.points.len()];
    let mut start = 0usize;
    for (&m, &end) in cells.iter().zip(&mesh.offsets) {
        let end = end as usize;
        let ids = mesh.connectivity.get(start..end).unwrap_or(&[]);
        start = end;
        if m > 0.0 && !ids.is_empty() {
            let share = m / ids.len() as f64;
            for &i in ids {
                if let Some(x) = w.get_mut(i as usize) {
                    *x += share;
                }
            }
        }
    }
    w
}

/// The vertex mean of every cell (the point where a cell's value is placed).
pub fn centroids(mesh: &Mesh) -> Vec<[f64; 3]> {
    let mut start = 0usize;
    mesh.offsets
        .iter()
        .map(|&end| {
            let end = end as usize;
            let ids = mesh.connectivity.get(start..end).unwrap_or(&[]);
            start = end;
            let mut s = [0.0; 3];
            for &i in ids {
                if let Some(p) = mesh.points.get(i as usize) {
                    s = [s[0] + p[0], s[1] + p[1], s[2] + p[2]];
                }
            }
            let n = ids.len().max(1) as f64;
            [s[0] / n, s[1] / n, s[2] / n]
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn mesh(points: Vec<[f64; 3]>, cells: &[(u8, &[u64])]) -> Mesh {
        let mut m = Mesh {
            points,
            ..Mesh::default()
        };
        for (t, ids) in cells {
            m.connectivity.extend_from_slice(ids);
            m.offsets.push(m.connectivity.len() as u64);
            m.types.push(*t);
        }
        m
    }

    fn cube() -> Vec<[f64; 3]> {
        vec![
            [0.0, 0.0, 0.0],
            [1.0, 0.0, 0.0],
            [1.0, 1.0, 0.0],
            [0.0, 1.0, 0.0],
            [0.0, 0.0, 1.0],
            [1.0, 0.0, 1.0],
            [1.0, 1.0, 1.0],
            [0.0, 1.0, 1.0],
        ]
    }

    #[test]
    fn unit_solids_have_their_analytic_volumes() {
        // Analytic: unit cube 1, corner tetrahedron 1/6, half-cube wedge 1/2, pyramid on the
        // unit square with height 1: 1/3; a voxel in raster order is the same cube.
        let m = mesh(
            cube(),
            &[
                (12, &[0, 1, 2, 3, 4, 5, 6, 7]),
                (10, &[0, 1, 3, 4]),
                (13, &[0, 1, 3, 4, 5, 7]),
                (11, &[0, 1, 3, 2, 4, 5, 7, 6]),
            ],
        );
        let (v, k) = cell_measures(&m).unwrap();
        assert_eq!(k, Kind::Volume);
        let want = [1.0, 1.0 / 6.0, 0.5, 1.0];
        for (a, b) in v.iter().zip(want) {
            assert!((a - b).abs() < 1e-14, "{a} vs {b}");
        }
        let mut p = cube()[..4].to_vec();
        p.push([0.5, 0.5, 1.0]);
        let m = mesh(p, &[(14, &[0, 1, 2, 3, 4])]);
        assert!((cell_measures(&m).unwrap().0[0] - 1.0 / 3.0).abs() < 1e-14);
    }

    #[test]
    fn a_sheared_hexahedron_keeps_base_times_height() {
        // Analytic (Cavalieri): shearing the top face by (0.3, 0.2) keeps the volume 1.
        let mut p = cube();
        for q in &mut p[4..] {
            q[0] += 0.3;
            q[1] += 0.2;
        }
        let m = mesh(p, &[(12, &[0, 1, 2, 3, 4, 5, 6, 7]), (9, &[0, 1, 2, 3])]);
        let (v, k) = cell_measures(&m).unwrap();
        assert_eq!(k, Kind::Volume);
        assert!((v[0] - 1.0).abs() < 1e-14);
        // The boundary face does not count beside the solid.
        assert!(v[1].abs() < f64::MIN_POSITIVE);
    }

    #[test]
    fn surface_areas_and_point_shares_add_up() {
        // Analytic: a unit square as two triangles in a tilted plane z = x (area √2), and the
        // point shares summing to the area.
        let p = vec![
            [0.0, 0.0, 0.0],
            [1.0, 0.0, 1.0],
            [1.0, 1.0, 1.0],
            [0.0, 1.0, 0.0],
        ];
        let m = mesh(p, &[(5, &[0, 1, 2]), (5, &[0, 2, 3]), (3, &[0, 1])]);
        let (v, k) = cell_measures(&m).unwrap();
        assert_eq!(k, Kind::Area);
        let total: f64 = v.iter().sum();
        assert!((total - 2f64.sqrt()).abs() < 1e-14);
        let w = point_measures(&m, &v);
        assert!((w.iter().sum::<f64>() - 2f64.sqrt()).abs() < 1e-14);
        // Points 0 and 2 are in both triangles: 2 × (√2/2)/3.
        assert!((w[0] - 2f64.sqrt() / 3.0).abs() < 1e-14);
        let c = centroids(&m);
        assert!((c[0][0] - 2.0 / 3.0).abs() < 1e-15 && (c[0][1] - 1.0 / 3.0).abs() < 1e-15);
    }

    #[test]
    fn no_measured_cell_gives_none() {
        let m = mesh(vec![[0.0; 3]], &[(1, &[0])]);
        assert!(cell_measures(&m).is_none());
        // Out-of-range indices are passed over, never a panic.
        let m = mesh(vec![[0.0; 3]], &[(5, &[0, 7, 9])]);
        assert_eq!(cell_measures(&m).unwrap().0, vec![0.0]);
    }
}
