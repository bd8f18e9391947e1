"""Reference VTK files and the values meshio reads from them, for meshbound's VTK reader.

Builds one small manufactured mesh (a mixed grid of triangles and quadrilaterals on a
slightly warped plate, with analytic fields: p = x^2 + 2y - z/3 as float64, the vector
U = (y, -x, x*y) as float64, k = 1/(1 + x + y) as float32 on the points; per cell a float64
area-like number and an int32 tag) and writes it with meshio in every variant the reader
handles: XML .vtu ASCII, binary (base64), binary zlib-compressed; legacy .vtk 4.2 and 5.1,
ASCII and binary. A legacy POLYDATA file is written as text here (meshio 5 neither writes nor
reads POLYDATA; the Rust test checks it against the literal text below) and a
.vtu written by meshbound's own writer (tests/data/vtk/written_by_meshbound.vtu, made by
`MESHBOUND_BLESS=1 cargo test --test vtk`) is read too, so that meshio checks the writer.

Each file is then read back with meshio.read and what meshio sees is stored in
vtk_meshio.json beside this script: points, cells (connectivity, end offsets, VTK types), and
every point and cell array, each number as a string holding Python's shortest round-trip repr
(float32 values widened to float64 exactly).

Run from the crate root:  python3 tests/reference/vtk_meshio.py
"""

import json
import pathlib
import platform

import meshio
import numpy as np

ROOT = pathlib.Path(__file__).resolve().parent
DATA = ROOT.parent / "data" / "vtk"

VTK_TYPE = {"vertex": 1, "line": 3, "triangle": 5, "polygon": 7, "quad": 9}


def manufactured():
    xs = np.linspace(0.0, 1.0, 4)
    ys = np.linspace(0.0, 0.6, 3)
    pts = []
    for j, y in enumerate(ys):
        for i, x in enumerate(xs):
            pts.append([x, y, 0.05 * np.sin(3.0 * x) * y])
    pts = np.array(pts, dtype=np.float64)
    nx = len(xs)
    tris, quads = [], []
    for j in range(len(ys) - 1):
        for i in range(nx - 1):
            a, b = j * nx + i, j * nx + i + 1
            c, d = (j + 1) * nx + i + 1, (j + 1) * nx + i
            if (i + j) % 2 == 0:
                quads.append([a, b, c, d])
            else:
                tris.append([a, b, c])
                tris.append([a, c, d])
    x, y, z = pts[:, 0], pts[:, 1], pts[:, 2]
    point_data = {
        "p": x * x + 2.0 * y - z / 3.0,
        "U": np.stack([y, -x, x * y], axis=1),
        "k": (1.0 / (1.0 + x + y)).astype(np.float32),
    }
    cells = [("triangle", np.array(tris)), ("quad", np.array(quads))]
    area = [np.arange(len(tris)) * 0.125 + 0.1, np.arange(len(quads)) * 0.25 + 0.3]
    tag = [np.arange(len(tris), dtype=np.int32) + 10, np.arange(len(quads), dtype=np.int32) + 20]
    return meshio.Mesh(pts, cells, point_data=point_data, cell_data={"area": area, "tag": tag})


POLYDATA = """# vtk DataFile Version 4.2
polydata made by vtk_meshio.py
ASCII
DATASET POLYDATA
POINTS 5 double
0 0 0 1 0 0 1 1 0 0 1 0 0.5 1.5 0
POLYGONS 2 9
4 0 1 2 3
3 3 2 4
POINT_DATA 5
SCALARS h double 1
LOOKUP_TABLE default
0.5 1.25 2 -0.75 3.5
CELL_DATA 2
VECTORS w double
1 2 3 -4 5.5 6
"""


def exact(values):
    return [repr(float(v)) for v in np.asarray(values).ravel()]


def describe(path):
    m = meshio.read(path)
    conn, offsets, types = [], [], []
    for block in m.cells:
        for cell in block.data:
            conn.extend(int(i) for i in cell)
            offsets.append(len(conn))
            types.append(VTK_TYPE[block.type] if block.type != "polygon" or len(cell) != 3 else 5)
    arrays = []
    for name, v in m.point_data.items():
        v = np.asarray(v)
        arrays.append({"name": name, "location": "point",
                       "components": 1 if v.ndim == 1 else int(v.shape[1]),
                       "values": exact(v)})
    for name, blocks in m.cell_data.items():
        v = np.concatenate([np.asarray(b) for b in blocks])
        arrays.append({"name": name, "location": "cell",
                       "components": 1 if v.ndim == 1 else int(v.shape[1]),
                       "values": exact(v)})
    return {"file": path.name, "points": exact(m.points), "point_count": int(len(m.points)),
            "connectivity": conn, "offsets": offsets, "types": types, "arrays": arrays}


def main():
    DATA.mkdir(parents=True, exist_ok=True)
    mesh = manufactured()
    meshio.vtu.write(DATA / "ascii.vtu", mesh, binary=False)
    meshio.vtu.write(DATA / "base64.vtu", mesh, binary=True, compression=None)
    meshio.vtu.write(DATA / "base64_zlib.vtu", mesh, binary=True, compression="zlib")
    for version in ("4.2", "5.1"):
        tag = version.replace(".", "")
        meshio.vtk.write(DATA / f"legacy{tag}_ascii.vtk", mesh, binary=False, fmt_version=version)
        meshio.vtk.write(DATA / f"legacy{tag}_binary.vtk", mesh, binary=True, fmt_version=version)
    (DATA / "polydata_ascii.vtk").write_text(POLYDATA)
    names = ["ascii.vtu", "base64.vtu", "base64_zlib.vtu", "legacy42_ascii.vtk",
             "legacy42_binary.vtk", "legacy51_ascii.vtk", "legacy51_binary.vtk"]
    ours = DATA / "written_by_meshbound.vtu"
    if ours.exists():
        names.append(ours.name)
    out = {"meshio_version": meshio.__version__, "numpy_version": np.__version__,
           "python_version": platform.python_version(),
           "files": [describe(DATA / n) for n in names]}
    (ROOT / "vtk_meshio.json").write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main()
