//! XML unstructured grids (`.vtu`).

use roxmltree::{Document, Node};

use super::bytes::{
    base64_decode, decode_indices, decode_values, floats_to_indices, Layout, Scalar,
};
use super::{Array, Fault, Location, Mesh};

/// The appended section cut out of the text: its encoding and bytes (after the `_`).
struct Appended<'a> {
    raw: bool,
    data: &'a [u8],
}

pub(crate) fn read(bytes: &[u8]) -> Result<Mesh, Fault> {
    // Raw appended data are not text: cut them out before the XML parser sees the file.
    let (text_bytes, appended) = split_appended(bytes)?;
    let text = std::str::from_utf8(&text_bytes).map_err(|e| {
        Fault::at(
            format!("byte {}", e.valid_up_to()),
            "not UTF-8 text (neither a legacy VTK file nor XML)",
        )
    })?;
    let doc = Document::parse(text).map_err(|e| {
        let p = e.pos();
        Fault::at(
            format!("line {} column {}", p.row, p.col),
            format!("not well-formed XML: {e}"),
        )
    })?;
    let root = doc.root_element();
    let place = |n: Node| {
        let p = doc.text_pos_at(n.range().start);
        format!(
            "<{}> at line {} column {}",
            n.tag_name().name(),
            p.row,
            p.col
        )
    };
    if root.tag_name().name() != "VTKFile" {
        return Err(Fault::at(place(root), "expected a <VTKFile> root element"));
    }
    match root.attribute("type") {
        Some("UnstructuredGrid") => {}
        other => {
            return Err(Fault::at(
                place(root),
                format!(
                    "type {:?}: only UnstructuredGrid (.vtu) files are read",
                    other.unwrap_or("(none)")
                ),
            ))
        }
    }
    let big_endian = match root.attribute("byte_order") {
        None | Some("LittleEndian") => false,
        Some("BigEndian") => true,
        Some(o) => return Err(Fault::at(place(root), format!("unknown byte_order {o:?}"))),
    };
    let header_u64 = match root.attribute("header_type") {
        None | Some("UInt32") => false,
        Some("UInt64") => true,
        Some(o) => return Err(Fault::at(place(root), format!("unknown header_type {o:?}"))),
    };
    let zlib = match root.attribute("compressor") {
        None | Some("") => false,
        Some("vtkZLibDataCompressor") => true,
        Some(o) => {
            return Err(Fault::at(
                place(root),
                format!("compressor {o:?} is not read (only vtkZLibDataCompressor)"),
            ))
        }
    };
    let layout = Layout {
        header_u64,
        big_endian,
        zlib,
    };
    let grid = child(root, "UnstructuredGrid")
        .ok_or_else(|| Fault::at(place(root), "no <UnstructuredGrid> element"))?;
    let pieces: Vec<Node> = grid
        .children()
        .filter(|n| n.has_tag_name("Piece"))
        .collect();
    let piece = match pieces.as_slice() {
        [p] => *p,
        [] => return Err(Fault::at(place(grid), "no <Piece> element")),
        [_, p2, ..] => {
            return Err(Fault::at(
                place(*p2),
                format!("{} pieces; only files of one piece are read", pieces.len()),
            ))
        }
    };
    let count = |attr: &str| -> Result<usize, Fault> {
        let v = piece
            .attribute(attr)
            .ok_or_else(|| Fault::at(place(piece), format!("no {attr} attribute")))?;
        v.trim().parse().map_err(|_| {
            Fault::at(
                place(piece),
                format!("{attr}={v:?} is not a non-negative integer"),
            )
        })
    };
    let n_points = count("NumberOfPoints")?;
    let n_cells = count("NumberOfCells")?;
    let reader = ArrayReader {
        layout,
        appended: appended.as_ref(),
    };
    let mut mesh = Mesh::default();

    let points = child(piece, "Points")
        .and_then(|p| child(p, "DataArray"))
        .ok_or_else(|| Fault::at(place(piece), "no <Points><DataArray>"))?;
    let (_, comps, values) = reader
        .values(points, n_points)
        .map_err(|f| f.within(place(points)))?;
    if comps != 3 {
        return Err(Fault::at(
            place(points),
            format!("points have {comps} components, 3 expected"),
        ));
    }
    mesh.points = values.chunks_exact(3).map(|c| [c[0], c[1], c[2]]).collect();

    let cells = child(piece, "Cells").ok_or_else(|| Fault::at(place(piece), "no <Cells>"))?;
    let named = |name: &str| {
        cells
            .children()
            .find(|n| n.has_tag_name("DataArray") && n.attribute("Name") == Some(name))
            .ok_or_else(|| Fault::at(place(cells), format!("no DataArray named \"{name}\"")))
    };
    let offsets = named("offsets")?;
    mesh.offsets = reader
        .indices(offsets, n_cells)
        .map_err(|f| f.within(place(offsets)))?;
    let types = named("types")?;
    let t = reader
        .indices(types, n_cells)
        .map_err(|f| f.within(place(types)))?;
    mesh.types = t
        .iter()
        .enumerate()
        .map(|(i, &v)| {
            u8::try_from(v).map_err(|_| {
                Fault::at(
                    place(types),
                    format!("cell {i}: type {v} is not a VTK cell type"),
                )
            })
        })
        .collect::<Result<_, _>>()?;
    let conn = named("connectivity")?;
    let n_conn = mesh.offsets.last().copied().unwrap_or(0);
    let n_conn = usize::try_from(n_conn)
        .map_err(|_| Fault::at(place(offsets), format!("offset {n_conn} too large")))?;
    mesh.connectivity = reader
        .indices(conn, n_conn)
        .map_err(|f| f.within(place(conn)))?;

    for (tag, location, n) in [
        ("PointData", Location::Point, n_points),
        ("CellData", Location::Cell, n_cells),
    ] {
        let Some(section) = child(piece, tag) else {
            continue;
        };
        for da in section.children().filter(|n| n.has_tag_name("DataArray")) {
            let name = da
                .attribute("Name")
                .ok_or_else(|| Fault::at(place(da), "a DataArray without a Name"))?;
            let (_, components, values) = reader.values(da, n).map_err(|f| f.within(place(da)))?;
            mesh.arrays.push(Array {
                name: name.to_string(),
                location,
                components,
                values,
            });
        }
    }
    Ok(mesh)
}

fn child<'a, 'i>(n: Node<'a, 'i>, tag: &str) -> Option<Node<'a, 'i>> {
    n.children().find(|c| c.has_tag_name(tag))
}

/// Finds `<AppendedData …>_…</AppendedData>`; returns the file without the bytes between `_`
/// and the closing tag, and those bytes.
fn split_appended(bytes: &[u8]) -> Result<(Vec<u8>, Option<Appended<'_>>), Fault> {
    let Some(open) = find(bytes, b"<AppendedData") else {
        return Ok((bytes.to_vec(), None));
    };
    let tag_end = open
        + bytes[open..]
            .iter()
            .position(|&b| b == b'>')
            .ok_or_else(|| Fault::at(format!("byte {open}"), "<AppendedData> tag never closes"))?;
    let tag = String::from_utf8_lossy(&bytes[open..tag_end]);
    let raw = if tag.contains("encoding=\"raw\"") || tag.contains("encoding='raw'") {
        true
    } else if tag.contains("encoding=\"base64\"") || tag.contains("encoding='base64'") {
        false
    } else {
        return Err(Fault::at(
            format!("byte {open}"),
            "<AppendedData> needs encoding=\"raw\" or encoding=\"base64\"",
        ));
    };
    let underscore = tag_end
        + 1
        + bytes[tag_end + 1..]
            .iter()
            .position(|&b| b == b'_')
            .ok_or_else(|| {
                Fault::at(
                    format!("byte {tag_end}"),
                    "appended data without the '_' mark",
                )
            })?;
    let close = rfind(bytes, b"</AppendedData>")
        .filter(|&c| c > underscore)
        .ok_or_else(|| Fault::at(format!("byte {open}"), "no </AppendedData> after the data"))?;
    let mut text = bytes[..=underscore].to_vec();
    text.extend_from_slice(&bytes[close..]);
    let mut data = &bytes[underscore + 1..close];
    if raw {
        // The writer may put a newline before the closing tag; raw offsets count from the
        // byte after '_' and the arrays' own headers say where each ends, so trailing
        // whitespace is harmless and left in.
    } else {
        while let [rest @ .., last] = data {
            if last.is_ascii_whitespace() {
                data = rest;
            } else {
                break;
            }
        }
    }
    Ok((text, Some(Appended { raw, data })))
}

fn find(hay: &[u8], needle: &[u8]) -> Option<usize> {
    hay.windows(needle.len()).position(|w| w == needle)
}

fn rfind(hay: &[u8], needle: &[u8]) -> Option<usize> {
    hay.windows(needle.len()).rposition(|w| w == needle)
}

struct ArrayReader<'a> {
    layout: Layout,
    appended: Option<&'a Appended<'a>>,
}

impl ArrayReader<'_> {
    fn scalar(da: Node) -> Result<Scalar, Fault> {
        let t = da
            .attribute("type")
            .ok_or_else(|| Fault::new("no type attribute"))?;
        Scalar::from_xml(t).ok_or_else(|| {
            Fault::new(format!(
                "type {t:?} is not a VTK scalar type (Float32, Float64, Int8 … UInt64)"
            ))
        })
    }

    fn components(da: Node) -> Result<usize, Fault> {
        match da.attribute("NumberOfComponents") {
            None => Ok(1),
            Some(v) => match v.trim().parse::<usize>() {
                Ok(n) if n >= 1 => Ok(n),
                _ => Err(Fault::new(format!(
                    "NumberOfComponents={v:?} is not a positive integer"
                ))),
            },
        }
    }

    /// The raw little/big-endian bytes of a binary or appended array.
    fn binary(&self, da: Node) -> Result<Vec<u8>, Fault> {
        match da.attribute("format") {
            Some("binary") => {
                let text = da.text().unwrap_or("");
                let decoded = base64_decode(text.as_bytes())?;
                Ok(self.layout.payload(&decoded)?.0)
            }
            Some("appended") => {
                let app = self
                    .appended
                    .ok_or_else(|| Fault::new("format=\"appended\" but no <AppendedData>"))?;
                let off = da.attribute("offset").unwrap_or("0");
                let off: usize = off
                    .trim()
                    .parse()
                    .map_err(|_| Fault::new(format!("offset={off:?} is not an integer")))?;
                let rest = app.data.get(off..).ok_or_else(|| {
                    Fault::new(format!(
                        "offset {off} is past the {} bytes of appended data",
                        app.data.len()
                    ))
                })?;
                if app.raw {
                    let (data, _) = self
                        .layout
                        .payload(rest)
                        .map_err(|f| f.within(format!("appended byte {off}")))?;
                    Ok(data)
                } else {
                    // Base64 appended data: decode from the offset to the end of the array's
                    // own segments. Decoding everything up to the next array is simplest: the
                    // payload stops where its header says.
                    let decoded = base64_decode(rest)
                        .map_err(|f| f.within(format!("appended character {off}")))?;
                    Ok(self.layout.payload(&decoded)?.0)
                }
            }
            other => Err(Fault::new(format!(
                "format {:?}: expected ascii, binary or appended",
                other.unwrap_or("(none)")
            ))),
        }
    }

    fn values(&self, da: Node, tuples: usize) -> Result<(Scalar, usize, Vec<f64>), Fault> {
        let ty = Self::scalar(da)?;
        let comps = Self::components(da)?;
        let count = tuples
            .checked_mul(comps)
            .ok_or_else(|| Fault::new("the array size overflows"))?;
        let values = if da.attribute("format") == Some("ascii") {
            let v = ascii_numbers(da.text().unwrap_or(""), count, ty)?;
            if !ty.is_float() {
                floats_to_indices(&v)?;
            }
            v
        } else {
            let raw = self.binary(da)?;
            let v = decode_values(&raw, ty, count, self.layout.big_endian)?;
            if raw.len() != count * ty.size() {
                return Err(Fault::new(format!(
                    "{} bytes of data where {count} values need {}",
                    raw.len(),
                    count * ty.size()
                )));
            }
            v
        };
        Ok((ty, comps, values))
    }

    fn indices(&self, da: Node, count: usize) -> Result<Vec<u64>, Fault> {
        let ty = Self::scalar(da)?;
        if da.attribute("format") == Some("ascii") {
            let v = ascii_numbers(da.text().unwrap_or(""), count, ty)?;
            return floats_to_indices(&v);
        }
        let raw = self.binary(da)?;
        if Some(raw.len()) != count.checked_mul(ty.size()) {
            return Err(Fault::new(format!(
                "{} bytes of data where {count} values of {} bytes are expected",
                raw.len(),
                ty.size()
            )));
        }
        decode_indices(&raw, ty, count, self.layout.big_endian)
    }
}

/// ASCII numbers; a `Float32` array's text is rounded to the nearest `f32` (as a reader that
/// stores the declared type would), everything else parsed as `f64`.
fn ascii_numbers(text: &str, count: usize, ty: Scalar) -> Result<Vec<f64>, Fault> {
    let mut out = Vec::with_capacity(count.min(1 << 20));
    for (i, tok) in text.split_ascii_whitespace().enumerate() {
        if i >= count {
            return Err(Fault::new(format!("more than the {count} values expected")));
        }
        let v = super::bytes::parse_number(tok, ty)
            .ok_or_else(|| Fault::new(format!("value {i} ({tok:?}) is not a number")))?;
        out.push(v);
    }
    if out.len() != count {
        return Err(Fault::new(format!(
            "{} values where {count} are expected",
            out.len()
        )));
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use base64::engine::general_purpose::STANDARD;
    use base64::Engine;

    /// A one-triangle grid whose arrays are given as (attributes, body) and an optional
    /// appended section; the values are manufactured (points of a unit right triangle).
    fn grid(arrays: [String; 4], head: &str, appended: &str) -> String {
        format!(
            "<?xml version=\"1.0\"?>\n<VTKFile type=\"UnstructuredGrid\" {head}>\
             <UnstructuredGrid><Piece NumberOfPoints=\"3\" NumberOfCells=\"1\">\
             <Points>{}</Points><Cells>{}{}{}</Cells></Piece></UnstructuredGrid>{appended}\
             </VTKFile>",
            arrays[0], arrays[1], arrays[2], arrays[3]
        )
    }

    fn f64s_be(v: &[f64]) -> Vec<u8> {
        v.iter().flat_map(|x| x.to_be_bytes()).collect()
    }

    const POINTS: [f64; 9] = [0.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0, 0.0];

    /// Appended base64 data: each array's UInt32 header and data encoded separately, offsets
    /// counted in characters (as VTK writes them).
    #[test]
    fn appended_base64_arrays_are_read() {
        let blobs: [(Vec<u8>, &str, &str, u32); 4] = [
            (
                POINTS.iter().flat_map(|x| x.to_le_bytes()).collect(),
                "Float64",
                "Points",
                3,
            ),
            (
                [0i32, 1, 2].iter().flat_map(|x| x.to_le_bytes()).collect(),
                "Int32",
                "connectivity",
                1,
            ),
            (3i32.to_le_bytes().to_vec(), "Int32", "offsets", 1),
            (vec![5u8], "UInt8", "types", 1),
        ];
        let mut section = String::new();
        let mut arrays: Vec<String> = Vec::new();
        for (bytes, ty, name, comps) in &blobs {
            arrays.push(format!(
                "<DataArray type=\"{ty}\" Name=\"{name}\" NumberOfComponents=\"{comps}\" \
                 format=\"appended\" offset=\"{}\"/>",
                section.len()
            ));
            section.push_str(&STANDARD.encode((bytes.len() as u32).to_le_bytes()));
            section.push_str(&STANDARD.encode(bytes));
        }
        let appended = format!("<AppendedData encoding=\"base64\">\n _{section}\n</AppendedData>");
        let arrays: [String; 4] = arrays.try_into().unwrap();
        let text = grid(arrays, "byte_order=\"LittleEndian\"", &appended);
        let m = super::super::read_bytes(text.as_bytes(), "a.vtu").unwrap();
        assert_eq!(
            m.points[1].map(f64::to_bits),
            [1.0, 0.0, 0.0].map(f64::to_bits)
        );
        assert_eq!(m.connectivity, vec![0, 1, 2]);
        assert_eq!((m.offsets.clone(), m.types.clone()), (vec![3], vec![5]));
    }

    /// Big-endian inline binary with a UInt64 header.
    #[test]
    fn big_endian_inline_binary_is_read() {
        let enc = |bytes: Vec<u8>| {
            let mut b = (bytes.len() as u64).to_be_bytes().to_vec();
            b.extend(bytes);
            STANDARD.encode(b)
        };
        let da = |ty: &str, name: &str, comps: u32, body: String| {
            format!(
                "<DataArray type=\"{ty}\" Name=\"{name}\" NumberOfComponents=\"{comps}\" \
                 format=\"binary\">{body}</DataArray>"
            )
        };
        let arrays = [
            da("Float64", "Points", 3, enc(f64s_be(&POINTS))),
            da(
                "Int64",
                "connectivity",
                1,
                enc([0i64, 2, 1].iter().flat_map(|x| x.to_be_bytes()).collect()),
            ),
            da("Int64", "offsets", 1, enc(3i64.to_be_bytes().to_vec())),
            da("UInt8", "types", 1, enc(vec![5])),
        ];
        let text = grid(
            arrays,
            "byte_order=\"BigEndian\" header_type=\"UInt64\"",
            "",
        );
        let m = super::super::read_bytes(text.as_bytes(), "b.vtu").unwrap();
        assert_eq!(
            m.points[2].map(f64::to_bits),
            [0.0, 1.0, 0.0].map(f64::to_bits)
        );
        assert_eq!(m.connectivity, vec![0, 2, 1]);
    }
}
