//! The VTK reader and writer (`meshbound::vtk`).
//!
//! Source of the check values: `tests/reference/vtk_meshio.json`, written by
//! `tests/reference/vtk_meshio.py`, which writes a manufactured mesh with analytic fields in
//! every VTK variant with meshio (a general-purpose reference library; its version is in the
//! JSON) and records what `meshio.read` gets back from each file, numbers as round-trip
//! decimal strings. Agreement is required bit for bit. The legacy polydata file is checked
//! against its own literal text (in the script; meshio 5 does not read polydata). The round
//! trip and the hostile-input properties use manufactured data.

use std::path::{Path, PathBuf};

use meshbound::vtk::{self, Array, Encoding, Location, Mesh, WriteOptions};
use proptest::prelude::*;
use serde::Deserialize;

#[derive(Deserialize)]
struct Reference {
    meshio_version: String,
    files: Vec<FileRef>,
}

#[derive(Deserialize)]
struct FileRef {
    file: String,
    points: Vec<String>,
    point_count: usize,
    connectivity: Vec<u64>,
    offsets: Vec<u64>,
    types: Vec<u8>,
    arrays: Vec<ArrayRef>,
}

#[derive(Deserialize)]
struct ArrayRef {
    name: String,
    location: String,
    components: usize,
    values: Vec<String>,
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn data(name: &str) -> PathBuf {
    root().join("tests/data/vtk").join(name)
}

fn reference() -> Reference {
    let text = std::fs::read_to_string(root().join("tests/reference/vtk_meshio.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn exact(v: &[String]) -> Vec<u64> {
    v.iter()
        .map(|s| s.parse::<f64>().unwrap().to_bits())
        .collect()
}

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

fn check_against(r: &FileRef, mesh: &Mesh) {
    let f = &r.file;
    assert_eq!(mesh.points.len(), r.point_count, "{f}: point count");
    let pts: Vec<f64> = mesh.points.iter().flatten().copied().collect();
    assert_eq!(bits(&pts), exact(&r.points), "{f}: points");
    assert_eq!(mesh.connectivity, r.connectivity, "{f}: connectivity");
    assert_eq!(mesh.offsets, r.offsets, "{f}: offsets");
    assert_eq!(mesh.types, r.types, "{f}: types");
    for a in &r.arrays {
        let ours = mesh
            .array(&a.name)
            .unwrap_or_else(|| panic!("{f}: no array {}", a.name));
        let loc = match ours.location {
            Location::Point => "point",
            Location::Cell => "cell",
        };
        assert_eq!(loc, a.location, "{f}: {} location", a.name);
        assert_eq!(ours.components, a.components, "{f}: {} components", a.name);
        assert_eq!(
            bits(&ours.values),
            exact(&a.values),
            "{f}: {} values",
            a.name
        );
    }
    assert_eq!(mesh.arrays.len(), r.arrays.len(), "{f}: array count");
}

/// Every variant meshio wrote (XML ASCII, base64, base64 + zlib; legacy 4.2 and 5.1, ASCII
/// and binary) gives what meshio reads from it, bit for bit (source: meshio, see the module
/// doc).
#[test]
fn every_meshio_variant_reads_as_meshio_reads_it() {
    let r = reference();
    assert!(!r.meshio_version.is_empty());
    let mut seen = 0;
    for f in &r.files {
        let mesh = vtk::read_file(&data(&f.file)).unwrap_or_else(|e| panic!("{e}"));
        check_against(f, &mesh);
        seen += 1;
    }
    // The seven variants meshio wrote plus the file our writer made.
    assert_eq!(seen, 8);
}

/// Vector components by letter and index (our own naming): U = (y, −x, x·y) in the
/// manufactured mesh of the script (analytic data).
#[test]
fn vector_components_by_name() {
    let mesh = vtk::read_file(&data("base64_zlib.vtu")).unwrap();
    let ux = mesh.values("U_x").unwrap().values;
    let uy = mesh.values("U_1").unwrap().values;
    let uz = mesh.values("U_z").unwrap().values;
    for (i, p) in mesh.points.iter().enumerate() {
        assert_eq!(ux[i].to_bits(), p[1].to_bits());
        assert_eq!(uy[i].to_bits(), (-p[0]).to_bits());
        assert_eq!(uz[i].to_bits(), (p[0] * p[1]).to_bits());
    }
    assert_eq!(mesh.values("area").unwrap().location, Location::Cell);
}

/// The polydata file against its own text (tests/reference/vtk_meshio.py, `POLYDATA`).
#[test]
fn legacy_polydata_reads_as_written() {
    let mesh = vtk::read_file(&data("polydata_ascii.vtk")).unwrap();
    assert_eq!(mesh.points.len(), 5);
    assert_eq!(mesh.points[4], [0.5, 1.5, 0.0]);
    assert_eq!(mesh.connectivity, vec![0, 1, 2, 3, 3, 2, 4]);
    assert_eq!(mesh.offsets, vec![4, 7]);
    assert_eq!(mesh.types, vec![7, 5]);
    assert_eq!(
        mesh.values("h").unwrap().values,
        vec![0.5, 1.25, 2.0, -0.75, 3.5]
    );
    let w = mesh.array("w").unwrap();
    assert_eq!((w.location, w.components), (Location::Cell, 3));
    assert_eq!(w.values, vec![1.0, 2.0, 3.0, -4.0, 5.5, 6.0]);
}

const ALL_OPTIONS: [WriteOptions; 4] = [
    WriteOptions {
        encoding: Encoding::AppendedRaw,
        compress: false,
    },
    WriteOptions {
        encoding: Encoding::AppendedRaw,
        compress: true,
    },
    WriteOptions {
        encoding: Encoding::Base64,
        compress: false,
    },
    WriteOptions {
        encoding: Encoding::Base64,
        compress: true,
    },
];

/// The file meshio reads in the script: our writer's appended raw, zlib form of the
/// manufactured mesh. `MESHBOUND_BLESS=1` rewrites it (then rerun the script); otherwise the
/// committed bytes must be what the writer produces now, so meshio's reading of them still
/// checks this writer.
#[test]
fn the_file_meshio_reads_is_what_the_writer_writes() {
    let source = vtk::read_file(&data("base64.vtu")).unwrap();
    let mut out = Vec::new();
    let options = WriteOptions {
        encoding: Encoding::AppendedRaw,
        compress: true,
    };
    vtk::write_vtu(&mut out, &source, options).unwrap();
    let path = data("written_by_meshbound.vtu");
    if std::env::var_os("MESHBOUND_BLESS").is_some() {
        std::fs::write(&path, &out).unwrap();
    }
    let committed = std::fs::read(&path).unwrap();
    assert!(
        committed == out,
        "the writer's output changed; bless and rerun the script"
    );
    let r = reference();
    let f = r
        .files
        .iter()
        .find(|f| f.file == "written_by_meshbound.vtu")
        .expect("meshio's reading of our file is in the JSON");
    check_against(f, &vtk::read_bytes(&out, "written").unwrap());
}

fn arb_mesh() -> impl Strategy<Value = Mesh> {
    (1usize..20, 0usize..12).prop_flat_map(|(np, nc)| {
        let cell = (1usize..5)
            .prop_flat_map(move |k| (proptest::collection::vec(0..np as u64, k), any::<u8>()));
        (
            proptest::collection::vec(any::<[f64; 3]>(), np),
            proptest::collection::vec(cell, nc),
            proptest::collection::vec(any::<f64>(), np * 2),
            proptest::collection::vec(any::<f64>(), nc),
            "[A-Za-z][A-Za-z0-9_<&\" ]{0,8}",
        )
            .prop_map(|(points, cells, pv, cv, name)| {
                let mut m = Mesh {
                    points,
                    ..Mesh::default()
                };
                for (c, t) in cells {
                    m.connectivity.extend(c);
                    m.offsets.push(m.connectivity.len() as u64);
                    m.types.push(t);
                }
                m.arrays.push(Array {
                    name: name.clone(),
                    location: Location::Point,
                    components: 2,
                    values: pv,
                });
                m.arrays.push(Array {
                    name: format!("{name}_c"),
                    location: Location::Cell,
                    components: 1,
                    values: cv,
                });
                m
            })
    })
}

fn same_bits(a: &Mesh, b: &Mesh) -> bool {
    let pa: Vec<f64> = a.points.iter().flatten().copied().collect();
    let pb: Vec<f64> = b.points.iter().flatten().copied().collect();
    bits(&pa) == bits(&pb)
        && a.connectivity == b.connectivity
        && a.offsets == b.offsets
        && a.types == b.types
        && a.arrays.len() == b.arrays.len()
        && a.arrays.iter().zip(&b.arrays).all(|(x, y)| {
            x.name == y.name
                && x.location == y.location
                && x.components == y.components
                && bits(&x.values) == bits(&y.values)
        })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    /// Write → read gives the mesh back bit for bit (NaN payloads and infinities too), in
    /// every encoding (manufactured data).
    #[test]
    fn round_trip_is_bit_for_bit(mesh in arb_mesh()) {
        for options in ALL_OPTIONS {
            let mut out = Vec::new();
            vtk::write_vtu(&mut out, &mesh, options).unwrap();
            let back = vtk::read_bytes(&out, "round-trip.vtu").unwrap();
            prop_assert!(same_bits(&mesh, &back), "{:?}", options);
        }
    }

    /// Random bytes, with or without a VTK opening, end in an error or a mesh, never a panic.
    #[test]
    fn random_bytes_never_panic(
        head in prop_oneof![
            Just(&b""[..]),
            Just(&b"# vtk DataFile Version 4.2\nt\nBINARY\nDATASET UNSTRUCTURED_GRID\n"[..]),
            Just(&b"# vtk DataFile Version 5.1\nt\nASCII\nDATASET POLYDATA\nPOINTS 2 float\n"[..]),
            Just(&b"<VTKFile type=\"UnstructuredGrid\"><UnstructuredGrid><Piece "[..]),
        ],
        tail in proptest::collection::vec(any::<u8>(), 0..400),
    ) {
        let mut b = head.to_vec();
        b.extend(tail);
        let _ = vtk::read_bytes(&b, "random");
    }

    /// Every reference file with bytes changed, cut short or duplicated reads without a
    /// panic; an error names the file.
    #[test]
    fn mutated_files_never_panic(
        which in 0usize..9,
        edits in proptest::collection::vec((any::<prop::sample::Index>(), any::<u8>(), 0u8..4), 1..6),
    ) {
        let names = ["ascii.vtu", "base64.vtu", "base64_zlib.vtu", "legacy42_ascii.vtk",
            "legacy42_binary.vtk", "legacy51_ascii.vtk", "legacy51_binary.vtk",
            "polydata_ascii.vtk", "written_by_meshbound.vtu"];
        let mut b = std::fs::read(data(names[which])).unwrap();
        for (at, byte, kind) in edits {
            if b.is_empty() { break; }
            let i = at.index(b.len());
            match kind {
                0 => b[i] = byte,
                1 => b.truncate(i),
                2 => { b.remove(i); }
                _ => { let s = b[i..].to_vec(); b.extend(s); }
            }
        }
        if let Err(e) = vtk::read_bytes(&b, names[which]) {
            prop_assert_eq!(e.file.as_str(), names[which]);
        }
    }
}

/// Errors name the file and the place (element with line and column, or byte offset).
#[test]
fn errors_name_the_file_and_the_place() {
    let mut b = std::fs::read(data("legacy42_binary.vtk")).unwrap();
    b.truncate(b.len() - 20);
    let e = vtk::read_bytes(&b, "cut.vtk").unwrap_err().to_string();
    assert!(e.starts_with("cut.vtk: ") && e.contains("byte "), "{e}");

    let text = std::fs::read_to_string(data("ascii.vtu")).unwrap();
    let bad = text.replacen(
        "NumberOfComponents=\"3\"",
        "NumberOfComponents=\"three\"",
        1,
    );
    let e = vtk::read_bytes(bad.as_bytes(), "bad.vtu")
        .unwrap_err()
        .to_string();
    assert!(
        e.starts_with("bad.vtu: <DataArray> at line ") && e.contains("three"),
        "{e}"
    );

    let e = vtk::read_file(Path::new("/nonexistent/x.vtu")).unwrap_err();
    assert_eq!(e.file, "/nonexistent/x.vtu");
}

/// A mesh that fails its own checks is refused by the writer, nothing written.
#[test]
fn writer_refuses_inconsistent_meshes() {
    let mesh = Mesh {
        points: vec![[0.0; 3]],
        connectivity: vec![1],
        offsets: vec![1],
        types: vec![1],
        arrays: vec![],
    };
    let mut out = Vec::new();
    assert!(vtk::write_vtu(&mut out, &mesh, WriteOptions::default()).is_err());
    assert!(out.is_empty());
}
