"""Manufactured fields on meshes that share no points, and what scipy and meshio say of them,
for meshbound's fields on VTK files (docs/method.md §16).

Part 1 (`generate`, the default): four jittered triangulations of the unit square (Delaunay
triangulations from scipy.spatial of a grid with n = 32, 24, 18, 13 cells a side, interior
points moved by up to 0.3 of a cell at random, numpy's generator with seed 2026), each holding
the manufactured solution

    phi(x, y; h) = sin(x) cos(y) + 30 (1 + x y) h^2,    h = 1/n,

as point data `p` (the factor 30 keeps the differences between meshes well above the
transfer error, which is also of order h^2: docs/method.md §16), and the vector U = (phi, -phi, 0) as point data `U`. Meshes 1, 2 and 4 are
written as .vtu (meshio's default: base64, zlib) and mesh 3 as legacy .vtk (binary, meshio's
5.1 layout). The exact values at the finest mesh's points of every coarser mesh's solution,
and scipy.interpolate.LinearNDInterpolator (piecewise linear on the Delaunay triangulation of
the coarser mesh's points) at the same points, go into fields_vtk.json, with each coarser
mesh's longest triangle edge H (for the analytic bound on linear interpolation:
|f - I f| <= M2 H^2 / 2, M2 the largest second directional derivative; here M2 <= 1 + 60 h^2).

Part 2 (run again after `MESHBOUND_BLESS=1 cargo test --test fields_vtk`): meshio reads the
.vtu that meshbound wrote (tests/data/fields_vtk/written_by_meshbound.vtu) and its arrays are
stored in the same JSON under "meshio_read" (every number as Python's shortest repr).

Run from the crate root:  python3 tests/reference/fields_vtk.py
"""

import json
import pathlib
import platform

import meshio
import numpy as np
import scipy
from scipy.interpolate import LinearNDInterpolator
from scipy.spatial import Delaunay

ROOT = pathlib.Path(__file__).resolve().parent
DATA = ROOT.parent / "data" / "fields_vtk"
OUT = ROOT / "fields_vtk.json"
NS = [32, 24, 18, 13]


def phi(x, y, h):
    return np.sin(x) * np.cos(y) + 30.0 * (1.0 + x * y) * h * h


def mesh(n, rng):
    g = np.linspace(0.0, 1.0, n + 1)
    x, y = np.meshgrid(g, g)
    x = x.ravel()
    y = y.ravel()
    inner = (x > 0) & (x < 1) & (y > 0) & (y < 1)
    d = 0.3 / n
    x[inner] += rng.uniform(-d, d, inner.sum())
    y[inner] += rng.uniform(-d, d, inner.sum())
    pts = np.column_stack([x, y, np.zeros_like(x)])
    tri = Delaunay(pts[:, :2]).simplices
    return pts, tri


def longest_edge(pts, tri):
    e = 0.0
    for a, b in [(0, 1), (1, 2), (2, 0)]:
        d = np.linalg.norm(pts[tri[:, a], :2] - pts[tri[:, b], :2], axis=1)
        e = max(e, float(d.max()))
    return e


def r(v):
    return repr(float(v))


def generate():
    DATA.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(2026)
    meshes = [mesh(n, rng) for n in NS]
    for k, ((pts, tri), n) in enumerate(zip(meshes, NS)):
        h = 1.0 / n
        p = phi(pts[:, 0], pts[:, 1], h)
        u = np.column_stack([p, -p, np.zeros_like(p)])
        name = DATA / (f"L{k + 1}.vtk" if k == 2 else f"L{k + 1}.vtu")
        m = meshio.Mesh(pts, [("triangle", tri)], point_data={"p": p, "U": u})
        if k == 2:
            meshio.write(name, m, binary=True)
        else:
            meshio.write(name, m)
    fine = meshes[0][0]
    coarser = []
    for (pts, tri), n in zip(meshes[1:], NS[1:]):
        h = 1.0 / n
        interp = LinearNDInterpolator(pts[:, :2], phi(pts[:, 0], pts[:, 1], h))
        at = interp(fine[:, 0], fine[:, 1])
        coarser.append(
            {
                "n": n,
                "h": r(h),
                "longest_edge": r(longest_edge(pts, tri)),
                "exact": [r(v) for v in phi(fine[:, 0], fine[:, 1], h)],
                "scipy_linear": [r(v) if np.isfinite(v) else None for v in at],
            }
        )
    return {
        "generator": "tests/reference/fields_vtk.py",
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "meshio": meshio.__version__,
        "sizes": [r(1.0 / n) for n in NS],
        "finest_points": len(fine),
        "coarser": coarser,
    }


def read_back(doc):
    f = DATA / "written_by_meshbound.vtu"
    if not f.exists():
        doc.pop("meshio_read", None)
        return doc
    m = meshio.read(f)
    doc["meshio_read"] = {
        "points": len(m.points),
        "cells": {b.type: len(b.data) for b in m.cells},
        "point_data": {
            k: [r(x) for x in np.asarray(v, dtype=np.float64).ravel()]
            for k, v in sorted(m.point_data.items())
        },
    }
    return doc


if __name__ == "__main__":
    doc = generate()
    if OUT.exists():
        old = json.loads(OUT.read_text())
        if "meshio_read" in old:
            doc["meshio_read"] = old["meshio_read"]
    doc = read_back(doc)
    OUT.write_text(json.dumps(doc, indent=1) + "\n")
    print(f"wrote {OUT}")
