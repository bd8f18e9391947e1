//! Legacy `.vtk` files: unstructured grids and polydata, ASCII or binary (big-endian).

use super::bytes::{decode_indices, decode_values, floats_to_indices, Scalar};
use super::{Array, Fault, Location, Mesh};

/// A cursor over the file: words for keywords and ASCII data, exact byte runs for binary data.
struct Cursor<'a> {
    bytes: &'a [u8],
    pos: usize,
    binary: bool,
}

impl<'a> Cursor<'a> {
    fn at(&self) -> String {
        format!("byte {}", self.pos)
    }

    fn skip_space(&mut self) {
        while self.pos < self.bytes.len() && self.bytes[self.pos].is_ascii_whitespace() {
            self.pos += 1;
        }
    }

    /// The next whitespace-separated word, or `None` at the end of the file.
    fn word(&mut self) -> Option<&'a str> {
        self.skip_space();
        let start = self.pos;
        while self.pos < self.bytes.len() && !self.bytes[self.pos].is_ascii_whitespace() {
            self.pos += 1;
        }
        if start == self.pos {
            return None;
        }
        std::str::from_utf8(&self.bytes[start..self.pos]).ok()
    }

    fn need_word(&mut self, what: &str) -> Result<&'a str, Fault> {
        let at = self.at();
        self.word()
            .ok_or_else(|| Fault::at(at, format!("the file ends where {what} is expected")))
    }

    fn count(&mut self, what: &str) -> Result<usize, Fault> {
        let at = self.at();
        let w = self.need_word(what)?;
        w.parse()
            .map_err(|_| Fault::at(at, format!("{what}: {w:?} is not a non-negative integer")))
    }

    /// The rest of the current line (the header lines are lines).
    fn line(&mut self) -> &'a [u8] {
        let start = self.pos;
        while self.pos < self.bytes.len() && self.bytes[self.pos] != b'\n' {
            self.pos += 1;
        }
        let line = &self.bytes[start..self.pos];
        if self.pos < self.bytes.len() {
            self.pos += 1;
        }
        line
    }

    /// `count` numbers of type `ty`: words in an ASCII file; in a binary one, the bytes that
    /// start after the end of the keyword line.
    fn values(&mut self, ty: Scalar, count: usize) -> Result<Vec<f64>, Fault> {
        if self.binary {
            let raw = self.raw(ty, count)?;
            return decode_values(raw, ty, count, true);
        }
        let mut out = Vec::with_capacity(count.min(1 << 20));
        for i in 0..count {
            let at = self.at();
            let w = self.word().ok_or_else(|| {
                Fault::at(
                    at.clone(),
                    format!("the file ends after {i} of {count} values"),
                )
            })?;
            let v = super::bytes::parse_number(w, ty)
                .ok_or_else(|| Fault::at(at, format!("{w:?} is not a number")))?;
            out.push(v);
        }
        Ok(out)
    }

    fn indices(&mut self, ty: Scalar, count: usize) -> Result<Vec<u64>, Fault> {
        if self.binary {
            let at = self.at();
            let raw = self.raw(ty, count)?;
            return decode_indices(raw, ty, count, true).map_err(|f| f.within(at));
        }
        let at = self.at();
        let v = self.values(ty, count)?;
        floats_to_indices(&v).map_err(|f| f.within(at))
    }

    fn raw(&mut self, ty: Scalar, count: usize) -> Result<&'a [u8], Fault> {
        // Binary data begin on the line after the keyword line.
        while self.pos < self.bytes.len() && self.bytes[self.pos] != b'\n' {
            self.pos += 1;
        }
        self.pos = self.pos.saturating_add(1);
        let start = self.pos;
        let end = count
            .checked_mul(ty.size())
            .and_then(|n| start.checked_add(n))
            .filter(|&e| e <= self.bytes.len())
            .ok_or_else(|| {
                Fault::at(
                    format!("byte {start}"),
                    format!(
                        "{count} binary values of {} bytes run past the end of the file",
                        ty.size()
                    ),
                )
            })?;
        self.pos = end;
        Ok(&self.bytes[start..end])
    }

    fn scalar(&mut self) -> Result<Scalar, Fault> {
        let at = self.at();
        let w = self.need_word("a data type")?;
        Scalar::from_legacy(w).ok_or_else(|| {
            Fault::at(
                at,
                format!("{w:?} is not a legacy VTK data type (float, double, int, …)"),
            )
        })
    }
}

pub(crate) fn read(bytes: &[u8]) -> Result<Mesh, Fault> {
    let mut c = Cursor {
        bytes,
        pos: 0,
        binary: false,
    };
    c.skip_space();
    let _version = c.line();
    let _title = c.line();
    let at = c.at();
    let format = String::from_utf8_lossy(c.line())
        .trim()
        .to_ascii_uppercase();
    c.binary = match format.as_str() {
        "ASCII" => false,
        "BINARY" => true,
        other => {
            return Err(Fault::at(
                at,
                format!("third line {other:?}: expected ASCII or BINARY"),
            ))
        }
    };
    let at = c.at();
    let kw = c.need_word("DATASET")?;
    if !kw.eq_ignore_ascii_case("DATASET") {
        return Err(Fault::at(at, format!("{kw:?} where DATASET is expected")));
    }
    let at = c.at();
    let kind = c.need_word("the dataset type")?.to_ascii_uppercase();
    let poly = match kind.as_str() {
        "UNSTRUCTURED_GRID" => false,
        "POLYDATA" => true,
        other => {
            return Err(Fault::at(
                at,
                format!("DATASET {other}: only UNSTRUCTURED_GRID and POLYDATA are read"),
            ))
        }
    };
    let mut mesh = Mesh::default();
    // Polydata sections, each with its own cell type rule, appended in file order.
    let mut types_given: Option<Vec<u64>> = None;
    let mut location: Option<(Location, usize)> = None;
    while let Some(word) = {
        let at = c.at();
        c.word().map(|w| (at, w))
    } {
        let (at, word) = word;
        let key = word.to_ascii_uppercase();
        match key.as_str() {
            "POINTS" => {
                let n = c.count("the point count")?;
                let ty = c.scalar()?;
                let count = n
                    .checked_mul(3)
                    .ok_or_else(|| Fault::at(at.clone(), "point count overflows"))?;
                let v = c.values(ty, count)?;
                mesh.points = v.chunks_exact(3).map(|p| [p[0], p[1], p[2]]).collect();
            }
            "CELLS" | "VERTICES" | "LINES" | "POLYGONS" | "TRIANGLE_STRIPS" => {
                if !poly && key != "CELLS" || poly && key == "CELLS" {
                    return Err(Fault::at(at, format!("{key} in a {kind} dataset")));
                }
                let (conn, offsets) = read_cells(&mut c, &at)?;
                let base = mesh.connectivity.len() as u64;
                let mut start = 0u64;
                for &o in &offsets {
                    if poly {
                        let n = o.saturating_sub(start);
                        mesh.types.push(poly_type(&key, n));
                    }
                    mesh.offsets.push(base.saturating_add(o));
                    start = o;
                }
                mesh.connectivity.extend(conn);
            }
            "CELL_TYPES" => {
                let n = c.count("the cell type count")?;
                types_given = Some(
                    c.indices(Scalar::I32, n)
                        .map_err(|f| f.within(at.clone()))?,
                );
            }
            "POINT_DATA" | "CELL_DATA" => {
                let n = c.count("the tuple count")?;
                let loc = if key == "POINT_DATA" {
                    Location::Point
                } else {
                    Location::Cell
                };
                location = Some((loc, n));
            }
            "SCALARS"
            | "VECTORS"
            | "NORMALS"
            | "TENSORS"
            | "TEXTURE_COORDINATES"
            | "COLOR_SCALARS"
            | "FIELD" => {
                let (loc, n) = location.ok_or_else(|| {
                    Fault::at(at.clone(), format!("{key} before POINT_DATA or CELL_DATA"))
                })?;
                read_attribute(&mut c, &key, loc, n, &mut mesh.arrays)
                    .map_err(|f| f.within(format!("{key} at {at}")))?;
            }
            "LOOKUP_TABLE" => {
                // A colour table of its own: name, size, then size × 4 values.
                c.need_word("the table name")?;
                let n = c.count("the table size")?;
                let count = n
                    .checked_mul(4)
                    .ok_or_else(|| Fault::at(at.clone(), "table size overflows"))?;
                let ty = if c.binary { Scalar::U8 } else { Scalar::F64 };
                c.values(ty, count)?;
            }
            "METADATA" => skip_metadata(&mut c),
            _ => {
                return Err(Fault::at(
                    at,
                    format!("{word:?} is not a keyword of a legacy {kind} file"),
                ))
            }
        }
    }
    if !poly {
        let t = types_given.unwrap_or_default();
        if t.len() != mesh.offsets.len() {
            return Err(Fault::new(format!(
                "{} cells but {} CELL_TYPES",
                mesh.offsets.len(),
                t.len()
            )));
        }
        mesh.types = t
            .iter()
            .map(|&v| {
                u8::try_from(v)
                    .map_err(|_| Fault::new(format!("cell type {v} is not a VTK cell type")))
            })
            .collect::<Result<_, _>>()?;
    }
    Ok(mesh)
}

/// Cells in the 4.x layout (`n size`, then a count before each cell's indices) or the 5.x
/// layout (`n+1 m`, then `OFFSETS type` and `CONNECTIVITY type`). Returns the connectivity
/// and the end offsets.
fn read_cells(c: &mut Cursor, at: &str) -> Result<(Vec<u64>, Vec<u64>), Fault> {
    let n = c.count("the cell count")?;
    let size = c.count("the cell list size")?;
    let save = c.pos;
    if c.word().is_some_and(|w| w.eq_ignore_ascii_case("OFFSETS")) {
        let ty = c.scalar()?;
        let offsets = c.indices(ty, n)?;
        let at2 = c.at();
        let w = c.need_word("CONNECTIVITY")?;
        if !w.eq_ignore_ascii_case("CONNECTIVITY") {
            return Err(Fault::at(
                at2,
                format!("{w:?} where CONNECTIVITY is expected"),
            ));
        }
        let ty = c.scalar()?;
        let conn = c.indices(ty, size)?;
        if offsets.first().is_some_and(|&o| o != 0) {
            return Err(Fault::at(at, "OFFSETS must start at 0"));
        }
        return Ok((conn, offsets.into_iter().skip(1).collect()));
    }
    c.pos = save;
    let list = c.indices(Scalar::I32, size)?;
    let mut conn = Vec::with_capacity(list.len().saturating_sub(n));
    let mut offsets = Vec::with_capacity(n.min(list.len()));
    let mut i = 0usize;
    for k in 0..n {
        let Some(&m) = list.get(i) else {
            return Err(Fault::at(
                at,
                format!("the cell list of {size} numbers ends at cell {k} of {n}"),
            ));
        };
        let m = usize::try_from(m).unwrap_or(usize::MAX);
        let cell = i
            .checked_add(1)
            .and_then(|s| Some(s..s.checked_add(m)?))
            .and_then(|r| list.get(r))
            .ok_or_else(|| {
                Fault::at(
                    at,
                    format!("cell {k} of {m} points runs past the cell list"),
                )
            })?;
        conn.extend_from_slice(cell);
        offsets.push(conn.len() as u64);
        i += 1 + m;
    }
    if i != list.len() {
        return Err(Fault::at(
            at,
            format!(
                "the cell list holds {} numbers, its cells use {i}",
                list.len()
            ),
        ));
    }
    Ok((conn, offsets))
}

fn poly_type(section: &str, n: u64) -> u8 {
    match (section, n) {
        ("VERTICES", 1) => 1,
        ("VERTICES", _) => 2,
        ("LINES", 2) => 3,
        ("LINES", _) => 4,
        ("POLYGONS", 3) => 5,
        ("POLYGONS", _) => 7,
        _ => 6,
    }
}

fn read_attribute(
    c: &mut Cursor,
    key: &str,
    location: Location,
    n: usize,
    arrays: &mut Vec<Array>,
) -> Result<(), Fault> {
    let mut push = |name: &str, components: usize, values: Vec<f64>| {
        arrays.push(Array {
            name: name.to_string(),
            location,
            components,
            values,
        })
    };
    let tuples = |k: usize| {
        n.checked_mul(k)
            .ok_or_else(|| Fault::new("the array size overflows"))
    };
    match key {
        "SCALARS" => {
            let name = c.need_word("the array name")?;
            let ty = c.scalar()?;
            // An optional component count, then an optional LOOKUP_TABLE line.
            let rest = String::from_utf8_lossy(c.line()).trim().to_string();
            let comps = if rest.is_empty() {
                1
            } else {
                match rest.parse::<usize>() {
                    Ok(k) if (1..=4).contains(&k) => k,
                    _ => return Err(Fault::new(format!("{rest:?} is not a component count 1–4"))),
                }
            };
            let save = c.pos;
            if c.word()
                .is_some_and(|w| w.eq_ignore_ascii_case("LOOKUP_TABLE"))
            {
                c.need_word("the lookup table name")?;
            } else {
                c.pos = save;
                if c.binary {
                    // The data follow at once: step back so that `raw` skips no data line.
                    c.pos = save.saturating_sub(1);
                }
            }
            let v = c.values(ty, tuples(comps)?)?;
            push(name, comps, v);
        }
        "VECTORS" | "NORMALS" => {
            let name = c.need_word("the array name")?;
            let ty = c.scalar()?;
            let v = c.values(ty, tuples(3)?)?;
            push(name, 3, v);
        }
        "TENSORS" => {
            let name = c.need_word("the array name")?;
            let ty = c.scalar()?;
            let v = c.values(ty, tuples(9)?)?;
            push(name, 9, v);
        }
        "TEXTURE_COORDINATES" => {
            let name = c.need_word("the array name")?;
            let dim = c.count("the dimension")?;
            if !(1..=3).contains(&dim) {
                return Err(Fault::new(format!("dimension {dim}: 1, 2 or 3 expected")));
            }
            let ty = c.scalar()?;
            let v = c.values(ty, tuples(dim)?)?;
            push(name, dim, v);
        }
        "COLOR_SCALARS" => {
            let name = c.need_word("the array name")?;
            let k = c.count("the component count")?;
            if !(1..=4).contains(&k) {
                return Err(Fault::new(format!("{k} components: 1–4 expected")));
            }
            let ty = if c.binary { Scalar::U8 } else { Scalar::F64 };
            let mut v = c.values(ty, tuples(k)?)?;
            if c.binary {
                v.iter_mut().for_each(|x| *x /= 255.0);
            }
            push(name, k, v);
        }
        _ => {
            // FIELD name count, then per array: name components tuples type, data.
            c.need_word("the field name")?;
            let count = c.count("the field's array count")?;
            for _ in 0..count {
                let at = c.at();
                let name = c.need_word("an array name")?;
                let comps = c.count("the component count")?;
                let t = c.count("the tuple count")?;
                let ty = c.scalar()?;
                if comps == 0 {
                    return Err(Fault::at(at, format!("array {name:?} has 0 components")));
                }
                if t != n {
                    return Err(Fault::at(
                        at,
                        format!("array {name:?} has {t} tuples where {n} are expected"),
                    ));
                }
                let v = c.values(ty, tuples(comps)?)?;
                push(name, comps, v);
                let save = c.pos;
                if c.word() == Some("METADATA") {
                    skip_metadata(c);
                } else {
                    c.pos = save;
                }
            }
        }
    }
    let save = c.pos;
    if c.word() == Some("METADATA") {
        skip_metadata(c);
    } else {
        c.pos = save;
    }
    Ok(())
}

/// `METADATA` blocks end at the first empty line.
fn skip_metadata(c: &mut Cursor) {
    c.line();
    loop {
        if c.pos >= c.bytes.len() {
            return;
        }
        let line = c.line();
        if line.iter().all(|b| b.is_ascii_whitespace()) {
            return;
        }
    }
}

#[cfg(test)]
mod tests {
    /// Binary polydata: big-endian floats and the 4.x cell list (manufactured: one triangle
    /// and one line), plus a cell scalar without a lookup table line.
    #[test]
    fn binary_polydata_is_read() {
        let mut b =
            b"# vtk DataFile Version 3.0\nt\nBINARY\nDATASET POLYDATA\nPOINTS 3 float\n".to_vec();
        for x in [0.0f32, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 2.0, 0.0] {
            b.extend(x.to_be_bytes());
        }
        b.extend(b"\nPOLYGONS 1 4\n");
        for i in [3i32, 0, 1, 2] {
            b.extend(i.to_be_bytes());
        }
        b.extend(b"\nLINES 1 3\n");
        for i in [2i32, 0, 2] {
            b.extend(i.to_be_bytes());
        }
        b.extend(b"\nCELL_DATA 2\nSCALARS q double\n");
        for x in [1.5f64, -2.0] {
            b.extend(x.to_be_bytes());
        }
        b.extend(b"\n");
        let m = super::super::read_bytes(&b, "p.vtk").unwrap();
        assert_eq!(
            m.points[2].map(f64::to_bits),
            [0.0, 2.0, 0.0].map(f64::to_bits)
        );
        assert_eq!(m.connectivity, vec![0, 1, 2, 0, 2]);
        assert_eq!(m.offsets, vec![3, 5]);
        assert_eq!(m.types, vec![5, 3]);
        assert_eq!(m.values("q").unwrap().values, vec![1.5, -2.0]);
    }
}
