//! VTK files in and out: a mesh's points, cells and named arrays.
//!
//! Read ([`read_file`], [`read_bytes`]):
//! - XML unstructured grids (`.vtu`): `DataArray`s in `ascii`, inline `binary` (base64) and
//!   `appended` form (raw or base64), uncompressed or compressed with `vtkZLibDataCompressor`
//!   (the block header: block count, block size, last block size, compressed sizes), header
//!   type `UInt32` or `UInt64`, either byte order; the first `Piece` only.
//! - legacy `.vtk` files (`DATASET UNSTRUCTURED_GRID` or `POLYDATA`), ASCII or binary
//!   (big-endian), cells in the 4.x layout (`CELLS n size` with counts) or the 5.x layout
//!   (`OFFSETS` and `CONNECTIVITY`); `POINT_DATA`/`CELL_DATA` with `SCALARS`, `VECTORS`,
//!   `NORMALS`, `TENSORS`, `TEXTURE_COORDINATES`, `COLOR_SCALARS` and `FIELD` arrays;
//!   `METADATA` blocks are passed over.
//!
//! The format is recognised from the content (`# vtk DataFile` opens a legacy file), not from
//! the file name. The reader is our own (see DEVELOPERS.md for why): XML through `roxmltree`,
//! base64 through `base64`, zlib through `flate2`. Nothing panics on any input; an error names
//! the file and, where known, the element, line and column, or byte offset.
//!
//! Cells are kept as in the XML layout: `connectivity` (point indices), `offsets` (the end of
//! each cell in `connectivity`, one per cell, no leading zero) and `types` (VTK cell type
//! codes). Polydata cells get types: vertex 1 (poly-vertex 2), line 3 (poly-line 4), triangle
//! 5, polygon 7, triangle strip 6.
//!
//! Arrays hold `f64` values, tuple after tuple (`components` per tuple). An array is looked up
//! by [`Mesh::values`] with a selector of our own: the array's name (one component), or a
//! component as `name_x`, `name_y`, `name_z` (components 0, 1, 2) or `name_<index>` (e.g.
//! `U_0`); an array whose own name matches exactly wins over a component name.
//!
//! Write ([`write_vtu`]): an XML unstructured grid into any `std::io::Write` — appended raw or
//! inline base64, optionally zlib-compressed; points and arrays as `Float64`, connectivity and
//! offsets as `Int64`, types as `UInt8`, so that what is read back is equal bit for bit. The
//! bytes are streamed into the writer block by block (only compressed arrays are held, since
//! the header gives their sizes); [`write_vtu_with`] adds arrays to a mesh without copying it.
//! Writing atomically (a temporary and a rename) is the caller's job.

mod bytes;
mod legacy;
mod write;
mod xml;

use std::fmt;
use std::io::Read;
use std::path::Path;

pub use write::{write_vtu, write_vtu_with, Encoding, WriteOptions, BLOCK_SIZE};

/// Where an array's values sit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Location {
    /// One tuple per point.
    Point,
    /// One tuple per cell.
    Cell,
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Location::Point => "point",
            Location::Cell => "cell",
        })
    }
}

/// A named array of point or cell data.
#[derive(Debug, Clone, PartialEq)]
pub struct Array {
    /// The array's name as in the file.
    pub name: String,
    /// Point or cell data.
    pub location: Location,
    /// Components per tuple (1 for a scalar, 3 for a vector).
    pub components: usize,
    /// The values, tuple after tuple.
    pub values: Vec<f64>,
}

impl Array {
    /// Number of tuples.
    pub fn tuples(&self) -> usize {
        self.values.len().checked_div(self.components).unwrap_or(0)
    }

    /// One component of every tuple; `None` when the index is out of range.
    pub fn component(&self, index: usize) -> Option<Vec<f64>> {
        if index >= self.components {
            return None;
        }
        Some(
            self.values
                .chunks_exact(self.components)
                .map(|t| t[index])
                .collect(),
        )
    }
}

/// A mesh and its solution as read from (or to be written to) a VTK file.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Mesh {
    /// Point coordinates (x, y, z).
    pub points: Vec<[f64; 3]>,
    /// Point indices of every cell, cell after cell.
    pub connectivity: Vec<u64>,
    /// The end of each cell in `connectivity` (one per cell).
    pub offsets: Vec<u64>,
    /// The VTK cell type of each cell.
    pub types: Vec<u8>,
    /// Point and cell arrays, in file order.
    pub arrays: Vec<Array>,
}

/// A selector that matched: the values and where they sit.
#[derive(Debug, Clone, PartialEq)]
pub struct Selected {
    /// Point or cell data.
    pub location: Location,
    /// One value per point or cell.
    pub values: Vec<f64>,
}

impl Mesh {
    /// Number of cells.
    pub fn cell_count(&self) -> usize {
        self.offsets.len()
    }

    /// The array with this exact name (the first one, point data searched before cell data
    /// only in file order).
    pub fn array(&self, name: &str) -> Option<&Array> {
        self.arrays.iter().find(|a| a.name == name)
    }

    /// One value per point or cell for a selector: an array's name (a one-component array),
    /// `name_x`/`name_y`/`name_z`, or `name_<index>` for one component of a vector array.
    /// The error says what is there.
    pub fn values(&self, selector: &str) -> Result<Selected, String> {
        if let Some(a) = self.array(selector) {
            if a.components == 1 {
                return Ok(Selected {
                    location: a.location,
                    values: a.values.clone(),
                });
            }
            return Err(format!(
                "array \"{selector}\" has {} components; name one as \"{selector}_x\", \
                 \"{selector}_y\", \"{selector}_z\" or \"{selector}_<index>\"",
                a.components
            ));
        }
        if let Some((base, suffix)) = selector.rsplit_once('_') {
            let index = match suffix {
                "x" => Some(0),
                "y" => Some(1),
                "z" => Some(2),
                s if !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit()) => s.parse().ok(),
                _ => None,
            };
            if let (Some(index), Some(a)) = (index, self.array(base)) {
                return match a.component(index) {
                    Some(values) => Ok(Selected {
                        location: a.location,
                        values,
                    }),
                    None => Err(format!(
                        "array \"{base}\" has {} component(s); \"{selector}\" asks for \
                         component {index} (counted from 0)",
                        a.components
                    )),
                };
            }
        }
        let names: Vec<String> = self
            .arrays
            .iter()
            .map(|a| {
                format!(
                    "{} ({} data, {} component(s))",
                    a.name, a.location, a.components
                )
            })
            .collect();
        Err(format!(
            "no array \"{selector}\"; the file has: {}",
            if names.is_empty() {
                "no arrays".to_string()
            } else {
                names.join(", ")
            }
        ))
    }

    /// Checks the sizes and indices: one offset and one type per cell, offsets non-decreasing
    /// and ending at the connectivity's length, every index below the point count, every
    /// array's length its tuple count × components. The message names the first fault.
    pub fn check(&self) -> Result<(), String> {
        if self.offsets.len() != self.types.len() {
            return Err(format!(
                "{} cell offsets but {} cell types",
                self.offsets.len(),
                self.types.len()
            ));
        }
        let mut previous = 0u64;
        for (i, &o) in self.offsets.iter().enumerate() {
            if o < previous {
                return Err(format!(
                    "cell {i}: offset {o} is below the previous {previous}"
                ));
            }
            previous = o;
        }
        if previous != self.connectivity.len() as u64 {
            return Err(format!(
                "the last cell offset is {previous} but the connectivity holds {} indices",
                self.connectivity.len()
            ));
        }
        let n = self.points.len() as u64;
        if let Some((i, &p)) = self.connectivity.iter().enumerate().find(|(_, &p)| p >= n) {
            return Err(format!(
                "connectivity entry {i}: point index {p} but the mesh has {n} points"
            ));
        }
        self.arrays.iter().try_for_each(|a| self.check_array(a))
    }

    /// Checks that `a` has one tuple per point or per cell of this mesh.
    pub fn check_array(&self, a: &Array) -> Result<(), String> {
        let tuples = match a.location {
            Location::Point => self.points.len(),
            Location::Cell => self.offsets.len(),
        };
        if a.components == 0 || Some(a.values.len()) != tuples.checked_mul(a.components) {
            return Err(format!(
                "{} array \"{}\": {} values for {tuples} {}s of {} component(s)",
                a.location,
                a.name,
                a.values.len(),
                a.location,
                a.components
            ));
        }
        Ok(())
    }
}

/// A VTK file that could not be read: the file, where in it (element, line and column, or
/// byte offset) when known, and what was wrong.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct VtkError {
    /// The file as the caller named it.
    pub file: String,
    /// Where in the file, when known.
    pub at: Option<String>,
    /// What was wrong and what was expected.
    pub message: String,
}

impl fmt::Display for VtkError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match &self.at {
            Some(at) => write!(f, "{}: {}: {}", self.file, at, self.message),
            None => write!(f, "{}: {}", self.file, self.message),
        }
    }
}

impl std::error::Error for VtkError {}

/// Where an error sits, before the file name is attached.
#[derive(Debug)]
pub(crate) struct Fault {
    pub at: Option<String>,
    pub message: String,
}

impl Fault {
    pub(crate) fn new(message: impl Into<String>) -> Self {
        Fault {
            at: None,
            message: message.into(),
        }
    }
    pub(crate) fn at(at: impl Into<String>, message: impl Into<String>) -> Self {
        Fault {
            at: Some(at.into()),
            message: message.into(),
        }
    }
    /// Adds a place in front of the one already known (e.g. the array around a byte offset).
    pub(crate) fn within(mut self, outer: impl Into<String>) -> Self {
        let outer = outer.into();
        self.at = Some(match self.at {
            Some(inner) => format!("{outer}, {inner}"),
            None => outer,
        });
        self
    }
}

/// Reads a VTK file (XML `.vtu` or legacy `.vtk`, told apart by content). Opens only regular
/// files (see [`crate::input::open_regular`]).
pub fn read_file(path: &Path) -> Result<Mesh, VtkError> {
    let name = path.display().to_string();
    let io_err = |e: std::io::Error| VtkError {
        file: name.clone(),
        at: None,
        message: format!("cannot be read: {e}"),
    };
    let mut file = crate::input::open_regular(path).map_err(io_err)?;
    let mut bytes = Vec::new();
    file.read_to_end(&mut bytes).map_err(io_err)?;
    read_bytes(&bytes, &name)
}

/// Reads a VTK file's bytes; `name` is the file name used in errors.
pub fn read_bytes(bytes: &[u8], name: &str) -> Result<Mesh, VtkError> {
    let start = bytes
        .iter()
        .position(|b| !b.is_ascii_whitespace())
        .unwrap_or(bytes.len());
    let result = if bytes[start..].starts_with(b"# vtk DataFile") {
        legacy::read(bytes)
    } else {
        xml::read(bytes)
    };
    let mesh = result.map_err(|f| VtkError {
        file: name.to_string(),
        at: f.at,
        message: f.message,
    })?;
    mesh.check().map_err(|message| VtkError {
        file: name.to_string(),
        at: None,
        message,
    })?;
    Ok(mesh)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tiny() -> Mesh {
        Mesh {
            points: vec![[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0]],
            connectivity: vec![0, 1, 2],
            offsets: vec![3],
            types: vec![5],
            arrays: vec![
                Array {
                    name: "U".into(),
                    location: Location::Point,
                    components: 3,
                    values: (0..9).map(f64::from).collect(),
                },
                Array {
                    name: "p".into(),
                    location: Location::Cell,
                    components: 1,
                    values: vec![2.5],
                },
            ],
        }
    }

    #[test]
    fn selectors_pick_components_by_letter_and_index() {
        let m = tiny();
        assert_eq!(m.values("U_y").unwrap().values, vec![1.0, 4.0, 7.0]);
        assert_eq!(m.values("U_2").unwrap().values, vec![2.0, 5.0, 8.0]);
        let p = m.values("p").unwrap();
        assert_eq!(p.location, Location::Cell);
        assert!(m.values("U").unwrap_err().contains("3 components"));
        assert!(m.values("U_3").unwrap_err().contains("component 3"));
        assert!(m.values("q").unwrap_err().contains("p (cell data"));
    }

    #[test]
    fn check_names_the_first_fault() {
        let mut m = tiny();
        assert!(m.check().is_ok());
        m.connectivity[1] = 3;
        assert!(m.check().unwrap_err().contains("point index 3"));
        let mut m = tiny();
        m.arrays[1].values.push(1.0);
        assert!(m.check().unwrap_err().contains("\"p\""));
    }

    #[test]
    fn legacy_and_xml_are_told_apart_by_content() {
        let e = read_bytes(b"  not vtk", "x.vtu").unwrap_err();
        assert_eq!(e.file, "x.vtu");
        let e = read_bytes(b"# vtk DataFile Version 4.2\n", "y.vtk").unwrap_err();
        assert!(e.to_string().starts_with("y.vtk: "), "{e}");
    }
}
